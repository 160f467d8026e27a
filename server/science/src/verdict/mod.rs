//! Checks of a candidate freeze-drying cycle against what is known of a formulation, what
//! the batch model predicts for it ([`crate::batch`]) and what the dryer can deliver. Pure
//! functions: the caller supplies the facts (limits, Tg′, Te, annealing advice, dried-cake
//! Tg) and the load.
//!
//! Every check comes out `ok`, `watch` or `fails` with a reason; thresholds that are rules of
//! thumb name their source or say "common practice, no source".

mod equipment;
mod product;
mod steps;
mod topic;

use serde::{Deserialize, Serialize};

pub use topic::{calc_cycle_check, CycleCheckInput, CycleCheckOutput};

use crate::batch::{simulate_batch, BatchResult, BatchSpec, BatchStop};
use crate::dryer::Dryer;
use crate::drying::{
    chamber_pressure_pa, prepare, DryingBase, PrimaryDryingInput, Product, ShelfStep,
};
use crate::error::{finite, non_negative, positive, InputError};
use crate::limit::LimitKind;

/// Share of the slowest class's predicted primary drying time added before secondary drying
/// may start (common practice 10–20 %, no source).
pub const DEFAULT_SAFETY_FACTOR: f64 = 0.15;

const CAUTION: &str = "These checks support the qualified judgement of the people who \
    design and release the cycle; they rest on a model and rules of thumb and do not replace \
    experimental confirmation.";

/// The caution that goes with every verdict.
pub fn caution() -> &'static str {
    CAUTION
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FreezingStep {
    pub ramp_c_per_min: f64,
    pub hold_temp_c: f64,
    pub hold_min: f64,
}

/// Warm to `temp_c`, hold, and return to the freezing hold temperature.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AnnealingStep {
    pub temp_c: f64,
    pub hold_min: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub return_ramp_c_per_min: Option<f64>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PrimaryStep {
    pub ramp_c_per_min: f64,
    pub shelf_temp_c: f64,
    pub chamber_pressure_mtorr: f64,
    pub hold_min: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SecondaryStep {
    pub ramp_c_per_min: f64,
    pub shelf_temp_c: f64,
    pub pressure_mtorr: f64,
    pub hold_min: f64,
}

/// A candidate cycle. Primary drying starts from the freezing hold temperature (an
/// annealing step returns there first); its times count from the start of the primary ramp.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CycleProgram {
    pub freezing: FreezingStep,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub annealing: Option<AnnealingStep>,
    pub primary: PrimaryStep,
    pub secondary: SecondaryStep,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub condenser_temp_c: Option<f64>,
}

/// What is known of the formulation (from its derived limits and advice).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FormulationFacts {
    pub max_product_temp_c: Option<f64>,
    /// What the limit guards against: collapse (the front governs) or eutectic melting
    /// (the warmer of front and bottom governs).
    pub limit_kind: LimitKind,
    pub tg_prime_c: Option<f64>,
    /// The lowest eutectic temperature of the crystallizing components.
    pub te_c: Option<f64>,
    /// True when a crystallized bulking agent dominates the matrix (secondary ramp rule).
    pub crystalline: bool,
    pub anneal_advised: bool,
    pub anneal_window_c: Option<(f64, f64)>,
    /// Tg of the dried cake at the residual moisture it holds during secondary drying.
    pub dried_cake_tg_c: Option<f64>,
}

/// How a check came out, from best to worst.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CheckState {
    Ok,
    Watch,
    Fails,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CheckTopic {
    ProductTemperature,
    PrimaryDryingTime,
    Freezing,
    Annealing,
    SecondaryDrying,
    Condenser,
    Equipment,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Check {
    pub topic: CheckTopic,
    pub state: CheckState,
    pub message: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CycleVerdict {
    /// The worst state of all checks.
    pub overall: CheckState,
    pub checks: Vec<Check>,
    pub caution: String,
}

impl CycleVerdict {
    pub fn check(&self, topic: CheckTopic) -> Option<&Check> {
        self.checks.iter().find(|c| c.topic == topic)
    }
}

/// The load and the dryer it runs in.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Load {
    pub dryer: Option<Dryer>,
    pub vial_count: Option<f64>,
    pub edge_vial_share: Option<f64>,
    /// Coefficient of variation of centre vials' Kv ([`crate::batch::DEFAULT_KV_CV`]).
    pub kv_cv: Option<f64>,
}

impl Load {
    /// Check the load and turn it into the batch's classes.
    pub fn spec(&self) -> Result<BatchSpec, InputError> {
        if let Some(d) = &self.dryer {
            d.validate("dryer.")?;
        }
        BatchSpec::new(
            self.dryer.as_ref().and_then(|d| d.edge_heat_factor),
            self.edge_vial_share,
            self.kv_cv,
            self.vial_count,
        )
    }
}

/// Knobs of the checks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VerdictOptions {
    /// Share added to the slowest class's predicted primary drying time (default 15 %).
    pub safety_factor: f64,
    /// Equipment ceiling per vial, g/h, used when no dryer is given
    /// ([`crate::design_space::SublimationCeiling::per_vial_g_h`] converts one given per
    /// shelf area).
    pub sublimation_ceiling_g_h_per_vial: Option<f64>,
}

impl Default for VerdictOptions {
    fn default() -> Self {
        Self {
            safety_factor: DEFAULT_SAFETY_FACTOR,
            sublimation_ceiling_g_h_per_vial: None,
        }
    }
}

/// A cycle judged, with the batch simulation it rests on (absent when the model could not
/// dry one of the classes: then `stop` says which and why).
#[derive(Debug, Clone, PartialEq)]
pub struct CycleAssessment {
    pub verdict: CycleVerdict,
    pub batch: Option<BatchResult>,
    pub stop: Option<BatchStop>,
    /// Ice in one vial, g.
    pub ice_per_vial_g: f64,
}

pub(crate) fn check(topic: CheckTopic, state: CheckState, message: String) -> Check {
    Check {
        topic,
        state,
        message,
    }
}

fn temp_c(field: &str, v: f64) -> Result<f64, InputError> {
    let v = finite(field, v)?;
    if (-120.0..=120.0).contains(&v) {
        Ok(v)
    } else {
        Err(InputError::new(
            field,
            format!("must lie between −120 and 120 °C (got {v})"),
        ))
    }
}

/// Check every number of the cycle, naming the field (`primary.hold_min`, …).
pub fn validate_cycle(cycle: &CycleProgram) -> Result<(), InputError> {
    let f = &cycle.freezing;
    positive("freezing.ramp_c_per_min", f.ramp_c_per_min)?;
    temp_c("freezing.hold_temp_c", f.hold_temp_c)?;
    non_negative("freezing.hold_min", f.hold_min)?;
    if let Some(a) = &cycle.annealing {
        temp_c("annealing.temp_c", a.temp_c)?;
        non_negative("annealing.hold_min", a.hold_min)?;
        if let Some(r) = a.return_ramp_c_per_min {
            positive("annealing.return_ramp_c_per_min", r)?;
        }
    }
    let p = &cycle.primary;
    positive("primary.ramp_c_per_min", p.ramp_c_per_min)?;
    temp_c("primary.shelf_temp_c", p.shelf_temp_c)?;
    chamber_pressure_pa("primary.chamber_pressure_mtorr", p.chamber_pressure_mtorr)?;
    non_negative("primary.hold_min", p.hold_min)?;
    let s = &cycle.secondary;
    positive("secondary.ramp_c_per_min", s.ramp_c_per_min)?;
    temp_c("secondary.shelf_temp_c", s.shelf_temp_c)?;
    chamber_pressure_pa("secondary.pressure_mtorr", s.pressure_mtorr)?;
    non_negative("secondary.hold_min", s.hold_min)?;
    if let Some(t) = cycle.condenser_temp_c {
        temp_c("condenser_temp_c", t)?;
    }
    Ok(())
}

/// Check the formulation's facts, naming the field as in the `formulation` object.
pub fn validate_facts(facts: &FormulationFacts) -> Result<(), InputError> {
    for (field, v) in [
        ("max_product_temp_c", facts.max_product_temp_c),
        ("tg_prime_c", facts.tg_prime_c),
        ("te_c", facts.te_c),
        ("dried_cake_tg_c", facts.dried_cake_tg_c),
    ] {
        if let Some(v) = v {
            temp_c(field, v)?;
        }
    }
    if let Some((lo, hi)) = facts.anneal_window_c {
        temp_c("anneal_window_c[0]", lo)?;
        temp_c("anneal_window_c[1]", hi)?;
        if lo > hi {
            return Err(InputError::new(
                "anneal_window_c",
                format!("the low end lies above the high end ({lo} to {hi} °C)"),
            ));
        }
    }
    Ok(())
}

fn validate_options(options: &VerdictOptions) -> Result<f64, InputError> {
    let safety = non_negative("safety_factor", options.safety_factor)?;
    if safety > 1.0 {
        return Err(InputError::new(
            "safety_factor",
            format!("is a share of the drying time, at most 1 (got {safety})"),
        ));
    }
    if let Some(c) = options.sublimation_ceiling_g_h_per_vial {
        positive("sublimation_ceiling_g_h_per_vial", c)?;
    }
    Ok(safety)
}

/// The primary-drying simulation input for `cycle` with `base`: from the freezing hold
/// temperature, ramp to the primary shelf temperature and hold.
pub fn primary_drying_input(
    cycle: &CycleProgram,
    base: &DryingBase,
    max_product_temp_c: Option<f64>,
) -> PrimaryDryingInput {
    let p = &cycle.primary;
    PrimaryDryingInput::programmed(
        base,
        vec![ShelfStep {
            ramp_c_per_min: p.ramp_c_per_min,
            target_c: p.shelf_temp_c,
            hold_min: p.hold_min,
        }],
        Some(cycle.freezing.hold_temp_c),
        p.chamber_pressure_mtorr,
    )
    .with_limit(max_product_temp_c)
}

/// Simulate the batch through `cycle`'s primary drying and judge the whole cycle: product
/// temperature (warmest class), primary drying time (slowest class), freezing, annealing,
/// secondary drying, condenser and equipment. A cycle the model cannot dry fails its checks
/// rather than being refused; bad input is refused naming the field.
pub fn assess_cycle(
    cycle: &CycleProgram,
    facts: &FormulationFacts,
    base: &DryingBase,
    load: &Load,
    options: &VerdictOptions,
) -> Result<CycleAssessment, InputError> {
    validate_cycle(cycle)?;
    validate_facts(facts)?;
    let safety = validate_options(options)?;
    let spec = load.spec()?;
    let limit = facts.max_product_temp_c.filter(|t| *t <= 0.0);
    let input = primary_drying_input(cycle, base, limit);
    let (product, conditions) = prepare(&input)?;
    let (batch, stop) = match simulate_batch(&product, &conditions, &spec) {
        Ok(b) => (Some(b), None),
        Err(s) => (None, Some(s)),
    };
    let verdict = judge(
        cycle,
        facts,
        batch.as_ref().ok_or(stop.as_ref()),
        &product,
        load,
        &spec,
        options,
        safety,
    );
    Ok(CycleAssessment {
        verdict,
        batch,
        stop,
        ice_per_vial_g: product.ice_mass_g(),
    })
}

#[allow(clippy::too_many_arguments)]
fn judge(
    cycle: &CycleProgram,
    facts: &FormulationFacts,
    batch: Result<&BatchResult, Option<&BatchStop>>,
    product: &Product,
    load: &Load,
    spec: &BatchSpec,
    options: &VerdictOptions,
    safety: f64,
) -> CycleVerdict {
    let mut checks = Vec::with_capacity(7);
    match batch {
        Ok(b) => {
            checks.push(product::product_temperature(facts, b));
            checks.push(product::primary_time(cycle, b, safety));
        }
        Err(stop) => checks.extend(product::cannot_dry(stop)),
    }
    checks.push(steps::freezing(cycle, facts));
    checks.push(steps::annealing(cycle, facts));
    checks.push(steps::secondary(cycle, facts));
    checks.push(equipment::condenser(cycle));
    checks.push(equipment::equipment(
        cycle,
        batch.ok(),
        product,
        load,
        spec,
        options.sublimation_ceiling_g_h_per_vial,
    ));
    let overall = checks
        .iter()
        .map(|c| c.state)
        .max()
        .unwrap_or(CheckState::Ok);
    CycleVerdict {
        overall,
        checks,
        caution: CAUTION.to_string(),
    }
}

#[cfg(test)]
mod tests;
