//! Derived values of a formulation (computed, never typed): its composition as the science
//! crate reads it, the Tg′ estimate, the product limit, annealing advice, and the verdict of
//! each linked cycle.

use glasspoint_science::annealing::{
    annealing_advice, AnnealingAdvice, AnnealingInput, CrystallizingComponent, Recommendation,
    TgPrimeSource,
};
use glasspoint_science::composition::{
    formulation_estimate, FormulationComponent, FormulationEstimate, FormulationEstimateInput,
    FreezingBehaviour as ScienceBehaviour,
};
use glasspoint_science::limit::{product_limit, ProductLimit, ProductLimitInput};
use serde_json::Value;

use crate::domain::*;
use crate::{AppError, Store};

/// Crystallizing components at or above this share of the solids form the matrix
/// (common practice for a crystalline bulking agent, no source).
pub const CRYSTALLINE_MATRIX_SHARE: f64 = 0.5;

/// Crystallizing components below this share of the solids do not call for an anneal
/// (common practice, no source).
pub const MIN_CRYSTALLIZING_SHARE: f64 = 0.1;

fn behaviour(b: FreezingBehaviour) -> ScienceBehaviour {
    match b {
        FreezingBehaviour::Amorphous => ScienceBehaviour::Amorphous,
        FreezingBehaviour::Crystallizes => ScienceBehaviour::Crystallizes,
        FreezingBehaviour::MayCrystallize => ScienceBehaviour::MayCrystallize,
    }
}

/// The composition with the library's values, as the estimate reads it.
pub fn science_components(f: &Formulation, materials: &[Material]) -> Vec<FormulationComponent> {
    f.components
        .iter()
        .map(|c| {
            let m = materials.iter().find(|m| m.id == c.material_id);
            let value = |kind| m.and_then(|m| m.value(kind));
            FormulationComponent {
                name: c.material_name.clone(),
                material_id: Some(c.material_id),
                concentration_mg_ml: c.concentration_mg_ml,
                behaviour: behaviour(c.freezing_behaviour),
                tg_prime_c: value(PropertyKind::TgPrime),
                k: value(PropertyKind::TgPrimeBlendK),
                delta_cp_j_gk: value(PropertyKind::DeltaCp),
            }
        })
        .collect()
}

/// The `formulation-estimate` input for a stored formulation, keeping the caller's options
/// (method, share of missing values).
pub async fn inline_composition(
    store: &Store,
    formulation_id: i64,
    options: &Value,
) -> Result<Value, AppError> {
    let f = match store.get_formulation(formulation_id).await {
        Err(AppError::NotFound(_)) => {
            return Err(AppError::input(
                "formulation_id",
                format!("no formulation has id {formulation_id}"),
            ))
        }
        other => other?,
    };
    let materials = store.list_materials().await?;
    let components = serde_json::to_value(science_components(&f, &materials))
        .map_err(|e| AppError::Internal(e.to_string()))?;
    let mut input = options.clone();
    if let Some(obj) = input.as_object_mut() {
        obj.remove("formulation_id");
        obj.insert("components".into(), components);
    }
    Ok(input)
}

/// Everything derived for one formulation, each with its reasoning.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Derived {
    pub estimate: Option<FormulationEstimate>,
    /// Why there is no estimate, when there is none.
    pub estimate_note: Option<String>,
    pub measured_tg_prime_c: Option<f64>,
    pub measured_collapse_onset_c: Option<f64>,
    /// Measured Tg′ minus the estimate, once both exist.
    pub deviation_c: Option<f64>,
    pub te_c: Option<f64>,
    pub te_basis: Option<String>,
    pub crystalline_matrix: bool,
    pub crystalline_share: f64,
    pub margin_c: f64,
    pub limit: Option<ProductLimit>,
    pub limit_note: Option<String>,
    /// The team chose the Te-governed alternative for cycle checks (crystalline matrix).
    pub uses_crystalline_limit: bool,
    pub annealing: Option<AnnealingAdvice>,
    pub annealing_note: Option<String>,
    /// Measured dried-cake Tg at the lowest residual moisture recorded: the cake as it
    /// stands at the end of secondary drying.
    pub dried_cake_tg_c: Option<f64>,
}

impl Derived {
    /// The maximum allowable product temperature cycle checks use: the governing limit, or
    /// the Te-governed alternative when the team chose it for a crystalline matrix.
    pub fn max_product_temp_c(&self) -> Option<f64> {
        let l = self.limit.as_ref()?;
        match (&l.alternative, self.uses_crystalline_limit) {
            (Some(alt), true) => Some(alt.max_product_temp_c),
            _ => Some(l.max_product_temp_c),
        }
    }

    /// The Tg′ that the cycle checks compare against: measured, else estimated.
    pub fn tg_prime_c(&self) -> Option<f64> {
        self.measured_tg_prime_c
            .or_else(|| self.estimate.as_ref().and_then(|e| e.estimate_tg_prime_c))
    }

    pub fn anneal_advised(&self) -> bool {
        self.annealing
            .as_ref()
            .is_some_and(|a| a.recommend == Recommendation::Anneal)
    }

    pub fn anneal_window_c(&self) -> Option<(f64, f64)> {
        let a = self.annealing.as_ref()?;
        match (a.window_low_c, a.window_high_c, a.window_empty) {
            (Some(lo), Some(hi), false) => Some((lo, hi)),
            _ => None,
        }
    }
}

/// Derives the estimate, limit and advice of `f` from its measurements and the library.
pub fn derive(
    f: &Formulation,
    measurements: &[Measurement],
    materials: &[Material],
    margin_c: f64,
) -> Derived {
    let components = science_components(f, materials);
    let (estimate, estimate_note) = if components.is_empty() {
        (
            None,
            Some("No composition is recorded, so Tg′ cannot be estimated.".to_string()),
        )
    } else {
        match formulation_estimate(&FormulationEstimateInput {
            components,
            method: Default::default(),
            max_missing_share: glasspoint_science::composition::DEFAULT_MAX_MISSING_SHARE,
        }) {
            Ok(e) => (Some(e), None),
            Err(e) => (
                None,
                Some(format!("The estimate could not be made: {}.", e.message)),
            ),
        }
    };
    let estimate_value = estimate.as_ref().and_then(|e| e.estimate_tg_prime_c);
    let measured_tg_prime_c = mean_of(measurements, MeasurementKind::TgPrime);
    let measured_collapse_onset_c = mean_of(measurements, MeasurementKind::CollapseOnset);
    let deviation_c = measured_tg_prime_c.zip(estimate_value).map(|(m, e)| m - e);

    // Annealing to crystallize is about a phase that can carry the cake: a component that
    // crystallizes, or a bulking agent that may, with a real share of the solids. A buffer
    // salt at a few percent is not annealed for (common practice, no source).
    let crystallizing: Vec<&Component> = f
        .components
        .iter()
        .filter(|c| match c.freezing_behaviour {
            FreezingBehaviour::Amorphous => false,
            FreezingBehaviour::Crystallizes => c.solid_fraction >= MIN_CRYSTALLIZING_SHARE,
            FreezingBehaviour::MayCrystallize => {
                c.role == MaterialRole::BulkingAgent && c.solid_fraction >= MIN_CRYSTALLIZING_SHARE
            }
        })
        .collect();
    let crystalline_share: f64 = f
        .components
        .iter()
        .filter(|c| c.freezing_behaviour == FreezingBehaviour::Crystallizes)
        .map(|c| c.solid_fraction)
        .sum();
    let crystalline_matrix = crystalline_share >= CRYSTALLINE_MATRIX_SHARE;
    let library_te = crystallizing
        .iter()
        .filter_map(|c| {
            let m = materials.iter().find(|m| m.id == c.material_id)?;
            Some((m.value(PropertyKind::Te)?, c.material_name.clone()))
        })
        .min_by(|a, b| a.0.total_cmp(&b.0));
    // The limit takes the Te of every component expected to crystallize, whatever its
    // share: a minority salt that crystallizes melts at its Te all the same.
    let library_te = f
        .components
        .iter()
        .filter(|c| c.freezing_behaviour == FreezingBehaviour::Crystallizes)
        .filter_map(|c| {
            let m = materials.iter().find(|m| m.id == c.material_id)?;
            Some((m.value(PropertyKind::Te)?, c.material_name.clone()))
        })
        .chain(library_te)
        .min_by(|a, b| a.0.total_cmp(&b.0));
    let (te_c, te_basis) = match (mean_of(measurements, MeasurementKind::Te), library_te) {
        (Some(t), _) => (
            Some(t),
            Some("measured Te (mean of the replicates)".to_string()),
        ),
        (None, Some((t, name))) => (Some(t), Some(format!("library Te of {name}"))),
        (None, None) => (None, None),
    };

    let limit_input = ProductLimitInput {
        collapse_onset_c: measured_collapse_onset_c,
        tg_prime_c: measured_tg_prime_c,
        tg_prime_estimate_c: estimate_value,
        eutectic_c: te_c,
        margin_c: Some(margin_c),
        estimate_margin_c: None,
        crystalline_matrix,
    };
    let (limit, limit_note) = match product_limit(&limit_input) {
        Ok(l) => (Some(l), None),
        Err(_) if limit_input.collapse_onset_c.is_none()
            && limit_input.tg_prime_c.is_none()
            && limit_input.tg_prime_estimate_c.is_none() =>
        {
            (None, Some("No collapse temperature or Tg′ is measured and none could be estimated, so no product limit can be derived yet. Measure Tg′ by DSC or the collapse onset by freeze-drying microscopy.".to_string()))
        }
        Err(e) => (None, Some(format!("No limit: {}.", e.message))),
    };

    let annealing_input = AnnealingInput {
        crystallizing: crystallizing
            .iter()
            .map(|c| CrystallizingComponent {
                name: c.material_name.clone(),
                te_c: materials
                    .iter()
                    .find(|m| m.id == c.material_id)
                    .and_then(|m| m.value(PropertyKind::Te))
                    .or(if crystallizing.len() == 1 {
                        mean_of(measurements, MeasurementKind::Te)
                    } else {
                        None
                    }),
                solid_fraction: c.solid_fraction,
            })
            .collect(),
        amorphous_tg_prime_c: measured_tg_prime_c.or(estimate_value),
        tg_prime_source: if measured_tg_prime_c.is_some() {
            TgPrimeSource::Measured
        } else {
            TgPrimeSource::Estimated
        },
        crystallization_exotherm_onset_c: mean_of(
            measurements,
            MeasurementKind::CrystallizationExotherm,
        ),
        amorphous_present: Some(
            f.components
                .iter()
                .any(|c| c.freezing_behaviour != FreezingBehaviour::Crystallizes),
        ),
        protein_present: f.components.iter().any(|c| c.role == MaterialRole::Active),
    };
    let (annealing, annealing_note) = if f.components.is_empty() {
        (None, Some("No composition is recorded.".to_string()))
    } else {
        match annealing_advice(&annealing_input) {
            Ok(a) => (Some(a), None),
            Err(e) => (None, Some(format!("No advice: {}.", e.message))),
        }
    };

    Derived {
        estimate,
        estimate_note,
        measured_tg_prime_c,
        measured_collapse_onset_c,
        deviation_c,
        te_c,
        te_basis,
        crystalline_matrix,
        crystalline_share,
        margin_c,
        uses_crystalline_limit: f.use_crystalline_limit
            && limit.as_ref().is_some_and(|l| l.alternative.is_some()),
        limit,
        limit_note,
        annealing,
        annealing_note,
        dried_cake_tg_c: driest_cake_tg(measurements),
    }
}

/// The dried-cake Tg measured at the lowest residual moisture (mean of its replicates).
fn driest_cake_tg(measurements: &[Measurement]) -> Option<f64> {
    let cake: Vec<&Measurement> = measurements
        .iter()
        .filter(|m| m.kind == MeasurementKind::CakeTg)
        .collect();
    let driest = cake
        .iter()
        .filter_map(|m| m.residual_moisture_pct)
        .min_by(f64::total_cmp)?;
    let values: Vec<f64> = cake
        .iter()
        .filter(|m| m.residual_moisture_pct == Some(driest))
        .map(|m| m.value_c)
        .collect();
    Some(values.iter().sum::<f64>() / values.len() as f64)
}

// ---------------------------------------------------------------- cycles

use glasspoint_science::batch::BatchResult;
use glasspoint_science::design_space::SublimationCeiling;
use glasspoint_science::drying::{
    solution_density_g_ml, DryingBase, PrimaryDryingResult, Resistance, Vial,
};
use glasspoint_science::gauge::{
    end_of_primary_drying_h, pirani_trace, PiraniPoint, DEFAULT_TOLERANCE_SHARE,
    DEFAULT_WATER_FRACTION_AT_PEAK,
};
use glasspoint_science::limit::LimitKind;
use glasspoint_science::suggest::{suggest, SuggestInput, Suggestion};
use glasspoint_science::verdict::{
    assess_cycle, primary_drying_input, CycleVerdict, FormulationFacts, Load, VerdictOptions,
};

/// Solution density the pages quote solids fractions at, g/mL. The drying model itself
/// uses [`solution_density`], estimated from the composition.
pub const SOLUTION_DENSITY_G_ML: f64 = 1.0;

/// Density of a solid whose library entry has none, g/cm³: sugars and polyols lie near
/// 1.5–1.6 (sucrose 1.59, mannitol 1.52; from memory).
pub const DEFAULT_SOLID_DENSITY_G_CM3: f64 = 1.5;

/// Unfrozen water of the freeze-concentrate, g per g of amorphous solids, for a material
/// whose library entry has no Wg′: sucrose's 0.2–0.25 (Roos 1993; Ablett, Izzard &
/// Lillford 1992; from memory), the low end.
pub const UNFROZEN_WATER_G_PER_G_AMORPHOUS: f64 = 0.2;

/// The solution's density from its composition: each solute's partial specific volume
/// taken as 1 / its density (close for sugars: sucrose 0.63 mL/g against 1/1.59).
pub fn solution_density(f: &Formulation, materials: &[Material]) -> f64 {
    let excess: f64 = f
        .components
        .iter()
        .map(|c| {
            let rho = materials
                .iter()
                .find(|m| m.id == c.material_id)
                .and_then(|m| m.value(PropertyKind::Density))
                .filter(|r| *r > 0.0)
                .unwrap_or(DEFAULT_SOLID_DENSITY_G_CM3);
            solution_density_g_ml(c.concentration_mg_ml, 1.0 / rho) - 1.0
        })
        .sum();
    1.0 + excess
}

/// The team's rules for derived values: its safety margin, and which results count.
#[derive(Debug, Clone, Copy)]
pub struct TeamBasis {
    pub margin_c: f64,
    /// Whether results nobody has reviewed yet may be used.
    pub allow_unreviewed: bool,
}

impl TeamBasis {
    /// The results a derived limit may rest on: never a rejected one, and only reviewed
    /// ones when the team says so.
    pub fn usable(&self, measurements: &[Measurement]) -> Vec<Measurement> {
        measurements
            .iter()
            .filter(|m| match m.review_state {
                ReviewState::Rejected => false,
                ReviewState::Recorded => self.allow_unreviewed,
                ReviewState::Reviewed => true,
            })
            .cloned()
            .collect()
    }
}

/// The team's settings over the server's default margin.
pub async fn team_basis(store: &Store, server_margin_c: f64) -> Result<TeamBasis, AppError> {
    let settings = store.team_settings().await?;
    Ok(TeamBasis {
        margin_c: settings.margin_c.unwrap_or(server_margin_c),
        allow_unreviewed: settings.allow_unreviewed,
    })
}

/// Unfrozen water per g of all solids: each amorphous solid's share × its Wg′ from the
/// library (with its source there), else the stated default.
pub fn unfrozen_water(f: &Formulation, materials: &[Material]) -> f64 {
    f.components
        .iter()
        .filter(|c| c.freezing_behaviour != FreezingBehaviour::Crystallizes)
        .map(|c| {
            let wg = materials
                .iter()
                .find(|m| m.id == c.material_id)
                .and_then(|m| m.value(PropertyKind::UnfrozenWater))
                .unwrap_or(UNFROZEN_WATER_G_PER_G_AMORPHOUS);
            c.solid_fraction * wg
        })
        .sum()
}

/// A stated default dry-layer resistance for a solids content, used until the team
/// measures one: the often-quoted 5 % sucrose values (R0 ≈ 1.4 cm²·Torr·h/g,
/// A1 ≈ 16 cm·Torr·h/g, A2 ≈ 0; literature value, from memory), with A1 scaled in proportion
/// to the solids content (common practice, no source).
pub fn default_resistance(solids_mass_fraction: f64) -> DryLayerResistance {
    let scale = (solids_mass_fraction / 0.05).clamp(0.2, 6.0);
    let resistance = Resistance {
        r0_cm2_torr_h_g: 1.4,
        a1_cm_torr_h_g: 16.0 * scale,
        a2_per_cm: 0.0,
    };
    DryLayerResistance {
        resistance,
        measured: false,
        source: format!(
            "Default for {:.1} % solids: R0 1.4, A1 {:.1}, A2 0 — the often-quoted 5 % sucrose values (from memory) with A1 scaled to the solids content (common practice, no source). Replace with a measured Rp.",
            solids_mass_fraction * 100.0,
            resistance.a1_cm_torr_h_g
        ),
        version: 0,
    }
}

/// The formulation's resistance: measured if recorded, else the stated default.
pub async fn resistance_of(store: &Store, f: &Formulation) -> Result<DryLayerResistance, AppError> {
    Ok(match store.measured_resistance(f.id).await? {
        Some(r) => r,
        None => default_resistance(f.solids_mass_fraction(SOLUTION_DENSITY_G_ML)),
    })
}

/// The primary-drying model's view of a formulation in a container and fill: the solution
/// density from the composition and the water that never freezes.
pub fn drying_base(
    f: &Formulation,
    materials: &[Material],
    container: &Container,
    fill_volume_ml: f64,
    resistance: Resistance,
) -> DryingBase {
    let density = solution_density(f, materials);
    DryingBase {
        fill_volume_ml,
        solids_mass_fraction: f.solids_mass_fraction(density),
        solution_density_g_ml: Some(density),
        unfrozen_water_g_per_g_solids: Some(unfrozen_water(f, materials)),
        vial: Vial {
            inner_area_cm2: container.inner_area_cm2,
            outer_area_cm2: container.outer_area_cm2,
            kc_cal_s_cm2_k: container.kc_cal_s_cm2_k,
            kp_cal_s_cm2_k_torr: container.kp_cal_s_cm2_k_torr,
            kd_per_torr: container.kd_per_torr,
        },
        resistance,
        ice_density_g_cm3: None,
        ice_conductivity_w_mk: None,
        sublimation_enthalpy_j_g: None,
    }
}

/// What the verdict checks know of a formulation.
pub fn facts(d: &Derived) -> FormulationFacts {
    let eutectic_governs = d.uses_crystalline_limit
        || d.limit
            .as_ref()
            .is_some_and(|l| l.basis.kind() == LimitKind::Eutectic);
    FormulationFacts {
        max_product_temp_c: d.max_product_temp_c(),
        limit_kind: if eutectic_governs {
            LimitKind::Eutectic
        } else {
            LimitKind::Collapse
        },
        tg_prime_c: d.tg_prime_c(),
        te_c: d.te_c,
        crystalline: d.crystalline_matrix,
        anneal_advised: d.anneal_advised(),
        anneal_window_c: d.anneal_window_c(),
        dried_cake_tg_c: d.dried_cake_tg_c,
    }
}

/// One cycle × formulation link, assessed.
pub struct Assessment {
    pub link: CycleLink,
    pub cycle: Cycle,
    pub formulation: Formulation,
    pub container: Container,
    /// The dryer the link names, if any: then the equipment is checked against it.
    pub dryer: Option<Dryer>,
    pub derived: Derived,
    pub resistance: DryLayerResistance,
    pub base: DryingBase,
    pub verdict: Result<CycleVerdict, String>,
    /// The nominal centre vial's primary drying, for the single-vial charts.
    pub simulation: Option<PrimaryDryingResult>,
    /// The batch's vial classes through primary drying, when the model could dry them all.
    pub batch: Option<BatchResult>,
}

impl Assessment {
    /// The Pirani and manometer readings through the batch's primary drying, and when they
    /// meet (empty without a batch).
    pub fn gauge_trace(&self) -> Result<(Vec<PiraniPoint>, Option<f64>), AppError> {
        let Some(batch) = &self.batch else {
            return Ok((Vec::new(), None));
        };
        let pc = self.cycle.program.primary.chamber_pressure_mtorr;
        let trace = pirani_trace(batch, pc, DEFAULT_WATER_FRACTION_AT_PEAK)?;
        let end = end_of_primary_drying_h(&trace, DEFAULT_TOLERANCE_SHARE)?;
        Ok((trace, end))
    }

    /// The fastest primary drying the model finds within the limit for this link's batch.
    pub fn suggestion(&self) -> Result<Suggestion, String> {
        let limit = self.derived.max_product_temp_c().ok_or(
            "no maximum product temperature is derived yet, so no faster cycle can be searched for",
        )?;
        let facts = facts(&self.derived);
        let load = load_of(&self.link, self.dryer.as_ref());
        suggest(&SuggestInput {
            base: self.base.clone(),
            max_product_temp_c: limit,
            limit_kind: Some(facts.limit_kind),
            shelf_range_c: None,
            pressure_range_mtorr: None,
            start_shelf_temp_c: Some(self.cycle.program.freezing.hold_temp_c),
            ramp_c_per_min: Some(self.cycle.program.primary.ramp_c_per_min),
            dryer: load.dryer,
            vial_count: load.vial_count,
            edge_vial_share: load.edge_vial_share,
            kv_cv: load.kv_cv,
        })
        .map_err(|e| format!("{}: {}", e.field, e.message))
    }
}

/// The load of a link as the checks read it: its dryer, vial count and edge share.
pub fn load_of(link: &CycleLink, dryer: Option<&Dryer>) -> Load {
    Load {
        dryer: dryer.map(Dryer::science),
        vial_count: link.vial_count.map(|n| n as f64),
        edge_vial_share: link.edge_vial_share,
        kv_cv: None,
    }
}

/// Assesses a link: derives the formulation's limit, simulates the cycle's primary drying
/// for the batch and runs every check.
pub async fn assess(store: &Store, link: CycleLink, margin_c: f64) -> Result<Assessment, AppError> {
    let cycle = store.get_cycle(link.cycle_id).await?;
    let formulation = store.get_formulation(link.formulation_id).await?;
    let container = store.get_container(link.container_id).await?;
    let dryer = match link.dryer_id {
        Some(id) => Some(store.get_dryer(id).await?),
        None => None,
    };
    let basis = team_basis(store, margin_c).await?;
    let measurements = basis.usable(&store.measurements_of(formulation.id).await?);
    let materials = store.list_materials().await?;
    let derived = derive(&formulation, &measurements, &materials, basis.margin_c);
    let resistance = resistance_of(store, &formulation).await?;
    let base = drying_base(
        &formulation,
        &materials,
        &container,
        link.fill_volume_ml,
        resistance.resistance,
    );
    let facts = facts(&derived);
    let options = VerdictOptions {
        sublimation_ceiling_g_h_per_vial: cycle.sublimation_ceiling_kg_h_m2.map(|c| {
            SublimationCeiling::PerShelfAreaKgHM2(c).per_vial_g_h(container.outer_area_cm2)
        }),
        ..VerdictOptions::default()
    };
    let (verdict, batch) = match assess_cycle(
        &cycle.program,
        &facts,
        &base,
        &load_of(&link, dryer.as_ref()),
        &options,
    ) {
        Ok(a) => (Ok(a.verdict), a.batch),
        Err(e) => (Err(format!("{}: {}", e.field, e.message)), None),
    };
    let simulation = batch.as_ref().and_then(|_| {
        let input = primary_drying_input(&cycle.program, &base, facts.max_product_temp_c);
        glasspoint_science::drying::simulate(&input).ok()
    });
    Ok(Assessment {
        link,
        cycle,
        formulation,
        container,
        dryer,
        derived,
        resistance,
        base,
        verdict,
        simulation,
        batch,
    })
}
