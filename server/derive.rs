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
        eutectic_c: if crystalline_matrix { te_c } else { None },
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
    }
}

// ---------------------------------------------------------------- cycles

use glasspoint_science::design_space::SublimationCeiling;
use glasspoint_science::drying::{DryingBase, PrimaryDryingResult, Resistance, Vial};
use glasspoint_science::verdict::{check_and_simulate, CycleVerdict, FormulationFacts};

/// Solution density taken for every formulation, g/mL (the model's default).
pub const SOLUTION_DENSITY_G_ML: f64 = 1.0;

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

/// The primary-drying model's view of a formulation in a container and fill.
pub fn drying_base(
    f: &Formulation,
    container: &Container,
    fill_volume_ml: f64,
    resistance: Resistance,
) -> DryingBase {
    DryingBase {
        fill_volume_ml,
        solids_mass_fraction: f.solids_mass_fraction(SOLUTION_DENSITY_G_ML),
        solution_density_g_ml: Some(SOLUTION_DENSITY_G_ML),
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
    FormulationFacts {
        max_product_temp_c: d.max_product_temp_c(),
        tg_prime_c: d.tg_prime_c(),
        te_c: d.te_c,
        crystalline: d.crystalline_matrix,
        anneal_advised: d.anneal_advised(),
        anneal_window_c: d.anneal_window_c(),
    }
}

/// One cycle × formulation link, assessed.
pub struct Assessment {
    pub link: CycleLink,
    pub cycle: Cycle,
    pub formulation: Formulation,
    pub container: Container,
    pub derived: Derived,
    pub resistance: DryLayerResistance,
    pub base: DryingBase,
    pub verdict: Result<CycleVerdict, String>,
    /// The primary-drying simulation of the cycle, when the model could run it.
    pub simulation: Option<PrimaryDryingResult>,
}

/// Assesses a link: derives the formulation's limit, simulates the cycle's primary drying
/// and runs every check.
pub async fn assess(store: &Store, link: CycleLink, margin_c: f64) -> Result<Assessment, AppError> {
    let cycle = store.get_cycle(link.cycle_id).await?;
    let formulation = store.get_formulation(link.formulation_id).await?;
    let container = store.get_container(link.container_id).await?;
    let measurements = store.measurements_of(formulation.id).await?;
    let materials = store.list_materials().await?;
    let derived = derive(&formulation, &measurements, &materials, margin_c);
    let resistance = resistance_of(store, &formulation).await?;
    let base = drying_base(
        &formulation,
        &container,
        link.fill_volume_ml,
        resistance.resistance,
    );
    let facts = facts(&derived);
    let ceiling = cycle
        .sublimation_ceiling_kg_h_m2
        .map(SublimationCeiling::PerShelfAreaKgHM2);
    let (verdict, simulation) =
        match check_and_simulate(&cycle.program, &facts, &base, ceiling, None) {
            Ok((v, sim)) => (Ok(v), sim),
            Err(e) => (Err(format!("{}: {}", e.field, e.message)), None),
        };
    Ok(Assessment {
        link,
        cycle,
        formulation,
        container,
        derived,
        resistance,
        base,
        verdict,
        simulation,
    })
}
