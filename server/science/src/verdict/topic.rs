//! The `cycle-check` calculation topic: a cycle program and what is known of the
//! formulation, product, vial and dryer → every check, the vial classes and the batch.

use serde::{Deserialize, Serialize};

use super::{
    assess_cycle, caution, validate_cycle, validate_facts, Check, CheckState, CycleProgram,
    FormulationFacts, Load, VerdictOptions, DEFAULT_SAFETY_FACTOR,
};
use crate::batch::ClassResult;
use crate::dryer::Dryer;
use crate::drying::{DryingBase, Resistance, Vial};
use crate::error::InputError;

/// `cycle-check` topic input. The product fields are those of `primary-drying`, with the
/// same defaults.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CycleCheckInput {
    pub cycle: CycleProgram,
    pub formulation: FormulationFacts,
    pub fill_volume_ml: f64,
    pub solids_mass_fraction: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub solution_density_g_ml: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unfrozen_water_g_per_g_solids: Option<f64>,
    pub vial: Vial,
    pub resistance: Resistance,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ice_density_g_cm3: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ice_conductivity_w_mk: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_enthalpy_j_g: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dryer: Option<Dryer>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub vial_count: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub edge_vial_share: Option<f64>,
    /// Coefficient of variation of centre vials' Kv; 0.05 when omitted.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub kv_cv: Option<f64>,
    /// Share added to the slowest class's drying time; 0.15 when omitted.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub safety_factor: Option<f64>,
}

/// The batch's figures in the topic's answer.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BatchFigures {
    pub first_dry_h: f64,
    pub last_dry_h: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub peak_sublimation_kg_h: Option<f64>,
}

/// `cycle-check` topic result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CycleCheckOutput {
    pub overall: CheckState,
    pub checks: Vec<Check>,
    pub vials: Vec<ClassResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub batch: Option<BatchFigures>,
    pub caution: &'static str,
}

impl CycleCheckInput {
    pub fn base(&self) -> DryingBase {
        DryingBase {
            fill_volume_ml: self.fill_volume_ml,
            solids_mass_fraction: self.solids_mass_fraction,
            solution_density_g_ml: self.solution_density_g_ml,
            unfrozen_water_g_per_g_solids: self.unfrozen_water_g_per_g_solids,
            vial: self.vial,
            resistance: self.resistance,
            ice_density_g_cm3: self.ice_density_g_cm3,
            ice_conductivity_w_mk: self.ice_conductivity_w_mk,
            sublimation_enthalpy_j_g: self.sublimation_enthalpy_j_g,
        }
    }

    pub fn load(&self) -> Load {
        Load {
            dryer: self.dryer.clone(),
            vial_count: self.vial_count,
            edge_vial_share: self.edge_vial_share,
            kv_cv: self.kv_cv,
        }
    }
}

/// Judge a cycle for the batch (see [`super::assess_cycle`]).
pub fn cycle_check(input: &CycleCheckInput) -> Result<CycleCheckOutput, InputError> {
    validate_cycle(&input.cycle).map_err(|e| e.within("cycle."))?;
    validate_facts(&input.formulation).map_err(|e| e.within("formulation."))?;
    let options = VerdictOptions {
        safety_factor: input.safety_factor.unwrap_or(DEFAULT_SAFETY_FACTOR),
        sublimation_ceiling_g_h_per_vial: None,
    };
    let a = assess_cycle(
        &input.cycle,
        &input.formulation,
        &input.base(),
        &input.load(),
        &options,
    )?;
    Ok(CycleCheckOutput {
        overall: a.verdict.overall,
        checks: a.verdict.checks,
        batch: a.batch.as_ref().map(|b| BatchFigures {
            first_dry_h: b.first_dry_h,
            last_dry_h: b.last_dry_h,
            peak_sublimation_kg_h: b.peak_sublimation_kg_h,
        }),
        vials: a.batch.map(|b| b.classes).unwrap_or_default(),
        caution: caution(),
    })
}

/// `cycle-check` topic.
pub fn calc_cycle_check(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let input: CycleCheckInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&cycle_check(&input)?)
}
