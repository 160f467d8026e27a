//! Checks of a candidate freeze-drying cycle against what is known of a formulation and
//! what the primary-drying model predicts for it. Pure functions: the caller supplies the
//! facts (limits, Tg', Te, annealing advice) and the simulated primary drying.
//!
//! Thresholds that are rules of thumb say so in their messages ("common practice").

use serde::{Deserialize, Serialize};

use crate::design_space::SublimationCeiling;
use crate::drying::{
    chamber_pressure_pa, simulate_checked, DryingBase, DryingError, DryingStop, PrimaryDryingInput,
    PrimaryDryingResult, ShelfStep,
};
use crate::error::{finite, non_negative, positive, InputError};
use crate::ice::vapour_pressure_pa_unchecked;
use crate::units::{c_to_k, pa_to_mtorr};

/// Share of the predicted primary drying time added before secondary drying may start
/// (common practice 10–20 %, no source).
pub const DEFAULT_SAFETY_FACTOR: f64 = 0.15;
/// Freezing holds at least this far below the lower of Tg' and Te, °C (common practice,
/// from memory).
const FREEZE_BELOW_CRITICAL_C: f64 = 5.0;
/// Freezing target when neither Tg' nor Te is known, °C (common practice, from memory).
const FREEZE_DEFAULT_C: f64 = -40.0;
/// Shortest freezing hold, min (common practice 1–2 h, from memory).
const MIN_FREEZE_HOLD_MIN: f64 = 60.0;
/// Shortest annealing hold, min (common practice, no source).
const MIN_ANNEAL_HOLD_MIN: f64 = 60.0;
/// Fastest secondary ramp, °C/min: amorphous 0.1–0.15, crystalline 0.3–0.4 (from memory).
const SECONDARY_RAMP_AMORPHOUS: f64 = 0.15;
const SECONDARY_RAMP_CRYSTALLINE: f64 = 0.4;
/// Condenser ice vapour pressure above this share of the chamber pressure is worth a look
/// (common practice, no source).
const CONDENSER_SHARE: f64 = 0.2;
/// A peak front temperature closer than this below the limit is worth a look, °C
/// (common practice, no source).
const NEAR_LIMIT_C: f64 = 1.0;

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
/// annealing step returns there first).
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
    pub tg_prime_c: Option<f64>,
    /// The lowest eutectic temperature of the crystallizing components.
    pub te_c: Option<f64>,
    /// True when a crystallized bulking agent dominates the matrix.
    pub crystalline: bool,
    pub anneal_advised: bool,
    pub anneal_window_c: Option<(f64, f64)>,
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
    SecondaryRamp,
    SublimationCapacity,
    Condenser,
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

/// Knobs of the checks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VerdictOptions {
    /// Share added to the predicted primary drying time (default 15 %).
    pub safety_factor: f64,
    /// Equipment ceiling per vial, g/h ([`SublimationCeiling::per_vial_g_h`] converts one
    /// given per shelf area).
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

fn check(topic: CheckTopic, state: CheckState, message: String) -> Check {
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

fn validate_facts(facts: &FormulationFacts) -> Result<(), InputError> {
    for (field, v) in [
        ("max_product_temp_c", facts.max_product_temp_c),
        ("tg_prime_c", facts.tg_prime_c),
        ("te_c", facts.te_c),
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

/// Simulate primary drying of `cycle` for `base` and judge the whole cycle. A cycle the
/// model cannot dry (nothing sublimes, the ice would melt) fails its primary-drying checks
/// rather than being refused; bad input is refused naming the field.
pub fn check_cycle(
    cycle: &CycleProgram,
    facts: &FormulationFacts,
    base: &DryingBase,
    ceiling: Option<SublimationCeiling>,
    safety_factor: Option<f64>,
) -> Result<CycleVerdict, InputError> {
    check_and_simulate(cycle, facts, base, ceiling, safety_factor).map(|(verdict, _)| verdict)
}

/// [`check_cycle`], also handing back the simulation it judged (absent when the model
/// could not dry the cycle), so a caller drawing charts need not simulate again.
pub fn check_and_simulate(
    cycle: &CycleProgram,
    facts: &FormulationFacts,
    base: &DryingBase,
    ceiling: Option<SublimationCeiling>,
    safety_factor: Option<f64>,
) -> Result<(CycleVerdict, Option<PrimaryDryingResult>), InputError> {
    validate_cycle(cycle)?;
    let options = VerdictOptions {
        safety_factor: safety_factor.unwrap_or(DEFAULT_SAFETY_FACTOR),
        sublimation_ceiling_g_h_per_vial: ceiling.map(|c| c.per_vial_g_h(base.vial.outer_area_cm2)),
    };
    let input = primary_drying_input(cycle, base, facts.max_product_temp_c);
    match simulate_checked(&input) {
        Ok(result) => judge(cycle, facts, Ok(&result), &options).map(|v| (v, Some(result))),
        Err(DryingError::Stop { stop, .. }) => {
            judge(cycle, facts, Err(&stop), &options).map(|v| (v, None))
        }
        Err(DryingError::Input(e)) => Err(e),
    }
}

/// Judge `cycle` against `facts` and the simulated primary drying `drying` (which should be
/// the simulation of this cycle's primary step, e.g. from [`primary_drying_input`]).
pub fn judge_cycle(
    cycle: &CycleProgram,
    facts: &FormulationFacts,
    drying: &PrimaryDryingResult,
    options: &VerdictOptions,
) -> Result<CycleVerdict, InputError> {
    judge(cycle, facts, Ok(drying), options)
}

fn judge(
    cycle: &CycleProgram,
    facts: &FormulationFacts,
    drying: Result<&PrimaryDryingResult, &DryingStop>,
    options: &VerdictOptions,
) -> Result<CycleVerdict, InputError> {
    validate_cycle(cycle)?;
    validate_facts(facts)?;
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
    let mut checks = Vec::new();
    match drying {
        Ok(result) => {
            checks.push(product_temperature(facts, result));
            checks.push(primary_time(cycle, result, safety));
            if let Some(ceiling) = options.sublimation_ceiling_g_h_per_vial {
                checks.push(capacity(result, ceiling));
            }
        }
        Err(stop) => {
            let message = format!("The model cannot dry this cycle's primary step: {stop}.");
            checks.push(check(
                CheckTopic::PrimaryDryingTime,
                CheckState::Fails,
                message,
            ));
        }
    }
    checks.push(freezing(cycle, facts));
    checks.push(annealing(cycle, facts));
    checks.push(secondary_ramp(cycle, facts));
    if let Some(c) = condenser(cycle) {
        checks.push(c);
    }
    let overall = checks
        .iter()
        .map(|c| c.state)
        .max()
        .unwrap_or(CheckState::Ok);
    Ok(CycleVerdict {
        overall,
        checks,
        caution: CAUTION.to_string(),
    })
}

fn product_temperature(facts: &FormulationFacts, r: &PrimaryDryingResult) -> Check {
    let topic = CheckTopic::ProductTemperature;
    let peak = r.summary.peak_front_temp_c;
    let Some(limit) = facts.max_product_temp_c else {
        return check(
            topic,
            CheckState::Watch,
            format!(
                "No maximum product temperature is known for this formulation, so the peak \
                 front temperature of {peak:.1} °C cannot be judged."
            ),
        );
    };
    if peak > limit {
        let s = &r.summary;
        let same_limit = s
            .max_product_temp_c
            .is_some_and(|l| (l - limit).abs() < 1e-9);
        let timing = match (same_limit, s.limit_first_exceeded_h, s.limit_exceeded_h) {
            (true, Some(first), Some(total)) => format!(
                ": first above it at {first:.1} h of primary drying and above it for {total:.1} h \
                 in all"
            ),
            _ => String::new(),
        };
        return check(
            topic,
            CheckState::Fails,
            format!(
                "The front peaks at {peak:.1} °C, {:.1} °C above the limit of {limit:.1} °C{timing}; \
                 the cake may collapse.",
                peak - limit
            ),
        );
    }
    let margin = limit - peak;
    if margin < NEAR_LIMIT_C {
        return check(
            topic,
            CheckState::Watch,
            format!(
                "The front peaks at {peak:.1} °C, only {margin:.1} °C below the limit of \
                 {limit:.1} °C; under {NEAR_LIMIT_C:.0} °C leaves little room for vial-to-vial \
                 differences (common practice, no source)."
            ),
        );
    }
    check(
        topic,
        CheckState::Ok,
        format!(
            "The front peaks at {peak:.1} °C, {margin:.1} °C below the limit of {limit:.1} °C."
        ),
    )
}

fn primary_time(cycle: &CycleProgram, r: &PrimaryDryingResult, safety: f64) -> Check {
    let topic = CheckTopic::PrimaryDryingTime;
    let p = &cycle.primary;
    let ramp_h = (p.shelf_temp_c - cycle.freezing.hold_temp_c).abs() / p.ramp_c_per_min / 60.0;
    let programmed = ramp_h + p.hold_min / 60.0;
    let predicted = r.summary.drying_time_h;
    let needed = predicted * (1.0 + safety);
    let pct = 100.0 * safety;
    if predicted > programmed {
        return check(
            topic,
            CheckState::Fails,
            format!(
                "Ice would be left when the secondary ramp starts: the model needs {predicted:.1} h \
                 of primary drying and the program gives {programmed:.1} h (ramp included); \
                 plan at least {needed:.1} h ({pct:.0} % margin)."
            ),
        );
    }
    let margin = 100.0 * (programmed / predicted - 1.0);
    if programmed < needed {
        return check(
            topic,
            CheckState::Watch,
            format!(
                "The program gives {programmed:.1} h for a predicted {predicted:.1} h: a \
                 {margin:.0} % margin, less than the {pct:.0} % that covers slower vials \
                 (common practice 10–20 %, no source); plan {needed:.1} h."
            ),
        );
    }
    check(
        topic,
        CheckState::Ok,
        format!(
            "The program gives {programmed:.1} h for a predicted {predicted:.1} h of primary \
             drying, a {margin:.0} % margin."
        ),
    )
}

fn capacity(r: &PrimaryDryingResult, ceiling_g_h: f64) -> Check {
    let topic = CheckTopic::SublimationCapacity;
    let peak = r.summary.peak_sublimation_rate_g_h;
    if peak > ceiling_g_h {
        check(
            topic,
            CheckState::Fails,
            format!(
                "Each vial sublimes up to {peak:.3} g/h, above the equipment's {ceiling_g_h:.3} g/h \
                 per vial: the chamber pressure would rise out of control (choked flow or an \
                 overloaded condenser)."
            ),
        )
    } else {
        check(
            topic,
            CheckState::Ok,
            format!(
                "Each vial sublimes up to {peak:.3} g/h, {:.0} % of the equipment's \
                 {ceiling_g_h:.3} g/h per vial.",
                100.0 * peak / ceiling_g_h
            ),
        )
    }
}

fn freezing(cycle: &CycleProgram, facts: &FormulationFacts) -> Check {
    let topic = CheckTopic::Freezing;
    let f = &cycle.freezing;
    let hold = f.hold_temp_c;
    let critical = match (facts.tg_prime_c, facts.te_c) {
        (Some(tg), Some(te)) if te < tg => Some(("Te", te)),
        (Some(tg), _) => Some(("Tg'", tg)),
        (None, Some(te)) => Some(("Te", te)),
        (None, None) => None,
    };
    let (mut state, mut message) = match critical {
        None if hold <= FREEZE_DEFAULT_C => (
            CheckState::Ok,
            format!(
                "Freezing holds at {hold:.1} °C; with neither Tg' nor Te known, freezing to \
                 {FREEZE_DEFAULT_C:.0} °C or below is common practice (from memory)."
            ),
        ),
        None => (
            CheckState::Watch,
            format!(
                "Freezing holds at {hold:.1} °C with neither Tg' nor Te known; common practice \
                 freezes to {FREEZE_DEFAULT_C:.0} °C or below (from memory)."
            ),
        ),
        Some((name, t)) if hold > t => (
            CheckState::Fails,
            format!(
                "Freezing holds at {hold:.1} °C, above {name} ({t:.1} °C): the product may not \
                 solidify completely."
            ),
        ),
        Some((name, t)) if hold > t - FREEZE_BELOW_CRITICAL_C => (
            CheckState::Watch,
            format!(
                "Freezing holds at {hold:.1} °C, only {:.1} °C below {name} ({t:.1} °C); common \
                 practice is at least {FREEZE_BELOW_CRITICAL_C:.0} °C below (from memory).",
                t - hold
            ),
        ),
        Some((name, t)) => (
            CheckState::Ok,
            format!(
                "Freezing holds at {hold:.1} °C, {:.1} °C below {name} ({t:.1} °C).",
                t - hold
            ),
        ),
    };
    if f.hold_min < MIN_FREEZE_HOLD_MIN {
        state = state.max(CheckState::Watch);
        message.push_str(&format!(
            " The hold of {:.0} min is short: common practice holds 1–2 h (from memory), longer \
             for large fills.",
            f.hold_min
        ));
    }
    check(topic, state, message)
}

fn annealing(cycle: &CycleProgram, facts: &FormulationFacts) -> Check {
    let topic = CheckTopic::Annealing;
    let window = facts
        .anneal_window_c
        .map(|(lo, hi)| format!(" ({lo:.1} to {hi:.1} °C)"))
        .unwrap_or_default();
    let Some(a) = &cycle.annealing else {
        return if facts.anneal_advised {
            check(
                topic,
                CheckState::Watch,
                format!(
                    "Annealing is advised for this formulation{window} but the cycle has none: a \
                     crystallizing component left partly amorphous may crystallize later, in \
                     drying or storage."
                ),
            )
        } else {
            check(
                topic,
                CheckState::Ok,
                "No annealing step, and none is advised.".to_string(),
            )
        };
    };
    let t = a.temp_c;
    if let Some(te) = facts.te_c.filter(|&te| t >= te) {
        return check(
            topic,
            CheckState::Fails,
            format!(
                "Annealing at {t:.1} °C is at or above Te ({te:.1} °C): the crystallized phase \
                 would melt."
            ),
        );
    }
    let (mut state, mut message) = if !facts.anneal_advised {
        (
            CheckState::Watch,
            format!(
                "Annealing at {t:.1} °C is not advised for this formulation: it can separate \
                 phases or stress a protein. It may still be chosen on purpose, to grow larger \
                 ice crystals and lower the dried-layer resistance."
            ),
        )
    } else {
        match facts.anneal_window_c {
            Some((lo, _)) if t < lo => (
                CheckState::Watch,
                format!(
                    "Annealing at {t:.1} °C lies below the advised window{window}: \
                     crystallization may stay incomplete."
                ),
            ),
            Some((_, hi)) if t > hi => (
                CheckState::Watch,
                format!(
                    "Annealing at {t:.1} °C lies above the advised window{window}, nearer to \
                     melting of the crystalline phase."
                ),
            ),
            _ => (
                CheckState::Ok,
                format!("Annealing at {t:.1} °C, as advised{window}."),
            ),
        }
    };
    if a.hold_min < MIN_ANNEAL_HOLD_MIN {
        state = state.max(CheckState::Watch);
        message.push_str(&format!(
            " The hold of {:.0} min is short: annealing holds commonly run for hours (common \
             practice, no source).",
            a.hold_min
        ));
    }
    check(topic, state, message)
}

fn secondary_ramp(cycle: &CycleProgram, facts: &FormulationFacts) -> Check {
    let topic = CheckTopic::SecondaryRamp;
    let ramp = cycle.secondary.ramp_c_per_min;
    let (kind, max) = if facts.crystalline {
        ("crystalline", SECONDARY_RAMP_CRYSTALLINE)
    } else {
        ("amorphous", SECONDARY_RAMP_AMORPHOUS)
    };
    if ramp > max {
        check(
            topic,
            CheckState::Watch,
            format!(
                "The secondary ramp of {ramp:.2} °C/min is faster than the {max:.2} °C/min \
                 common for {kind} products (0.1–0.15 amorphous, 0.3–0.4 crystalline, from \
                 memory): a still-moist amorphous cake may collapse."
            ),
        )
    } else {
        check(
            topic,
            CheckState::Ok,
            format!(
                "The secondary ramp of {ramp:.2} °C/min is within the {max:.2} °C/min common for \
                 {kind} products."
            ),
        )
    }
}

fn condenser(cycle: &CycleProgram) -> Option<Check> {
    let topic = CheckTopic::Condenser;
    let t = cycle.condenser_temp_c?;
    let pc_mtorr = cycle.primary.chamber_pressure_mtorr;
    if t >= 0.0 {
        return Some(check(
            topic,
            CheckState::Fails,
            format!("A condenser at {t:.1} °C cannot hold ice."),
        ));
    }
    let p_mtorr = pa_to_mtorr(vapour_pressure_pa_unchecked(c_to_k(t)));
    let share = p_mtorr / pc_mtorr;
    let said = format!(
        "Ice on the condenser at {t:.1} °C has a vapour pressure of {p_mtorr:.2} mTorr, {:.0} % of \
         the {pc_mtorr:.0} mTorr chamber pressure",
        100.0 * share
    );
    Some(if share >= 1.0 {
        check(
            topic,
            CheckState::Fails,
            format!("{said}: the condenser cannot draw vapour from the chamber."),
        )
    } else if share > CONDENSER_SHARE {
        check(
            topic,
            CheckState::Watch,
            format!(
                "{said}; above {:.0} % it slows vapour removal (common practice, no source).",
                100.0 * CONDENSER_SHARE
            ),
        )
    } else {
        check(topic, CheckState::Ok, format!("{said}."))
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::drying::simulate;
    use crate::drying::tests::sucrose_5_percent;
    use crate::ice::vapour_pressure_pa;
    use crate::units::mtorr_to_pa;

    /// A conservative cycle for 5 % sucrose (Tg' ≈ −32 °C, literature value from memory) with a
    /// limit of −34 °C; primary hold sized from the model with a wide margin.
    fn cycle(primary_shelf_c: f64, pc_mtorr: f64, primary_hold_min: f64) -> CycleProgram {
        CycleProgram {
            freezing: FreezingStep {
                ramp_c_per_min: 1.0,
                hold_temp_c: -45.0,
                hold_min: 120.0,
            },
            annealing: None,
            primary: PrimaryStep {
                ramp_c_per_min: 0.5,
                shelf_temp_c: primary_shelf_c,
                chamber_pressure_mtorr: pc_mtorr,
                hold_min: primary_hold_min,
            },
            secondary: SecondaryStep {
                ramp_c_per_min: 0.1,
                shelf_temp_c: 40.0,
                pressure_mtorr: pc_mtorr,
                hold_min: 360.0,
            },
            condenser_temp_c: Some(-70.0),
        }
    }

    fn sucrose_facts() -> FormulationFacts {
        FormulationFacts {
            max_product_temp_c: Some(-34.0),
            tg_prime_c: Some(-32.0),
            ..FormulationFacts::default()
        }
    }

    fn verdict(c: &CycleProgram, f: &FormulationFacts) -> CycleVerdict {
        check_cycle(c, f, &sucrose_5_percent(), None, None).unwrap()
    }

    fn state_of(v: &CycleVerdict, topic: CheckTopic) -> CheckState {
        v.checks
            .iter()
            .find(|c| c.topic == topic)
            .map(|c| c.state)
            .unwrap()
    }

    fn message_of(v: &CycleVerdict, topic: CheckTopic) -> String {
        v.checks
            .iter()
            .find(|c| c.topic == topic)
            .map(|c| c.message.clone())
            .unwrap()
    }

    #[test]
    fn a_conservative_cycle_passes_every_check() {
        let input = primary_drying_input(&cycle(-35.0, 60.0, 0.0), &sucrose_5_percent(), None);
        let predicted_h = simulate(&input).unwrap().summary.drying_time_h;
        let v = verdict(
            &cycle(-35.0, 60.0, predicted_h * 1.3 * 60.0),
            &sucrose_facts(),
        );
        assert_eq!(v.overall, CheckState::Ok, "{v:#?}");
        assert!(v
            .caution
            .contains("do not replace experimental confirmation"));
        assert_eq!(caution(), v.caution);
    }

    #[test]
    fn a_front_above_the_limit_fails_and_says_when_and_for_how_long() {
        let v = verdict(&cycle(-20.0, 100.0, 100.0 * 60.0), &sucrose_facts());
        assert_eq!(
            state_of(&v, CheckTopic::ProductTemperature),
            CheckState::Fails
        );
        let m = message_of(&v, CheckTopic::ProductTemperature);
        assert!(
            m.contains("first above it at") && m.contains("in all"),
            "{m}"
        );
        assert_eq!(v.overall, CheckState::Fails);
    }

    #[test]
    fn a_primary_hold_shorter_than_the_predicted_drying_fails_and_a_thin_margin_is_watched() {
        let c = cycle(-35.0, 60.0, 0.0);
        let input = primary_drying_input(&c, &sucrose_5_percent(), Some(-34.0));
        let predicted = simulate(&input).unwrap().summary.drying_time_h;
        let ramp_h = 10.0 / 0.5 / 60.0;
        let with_hold = |h: f64| cycle(-35.0, 60.0, (h - ramp_h) * 60.0);
        let short = verdict(&with_hold(predicted * 0.9), &sucrose_facts());
        assert_eq!(
            state_of(&short, CheckTopic::PrimaryDryingTime),
            CheckState::Fails
        );
        assert!(message_of(&short, CheckTopic::PrimaryDryingTime).contains("Ice would be left"));
        // 5 % margin: below the default 15 % (common practice 10–20 %, no source).
        let thin = verdict(&with_hold(predicted * 1.05), &sucrose_facts());
        assert_eq!(
            state_of(&thin, CheckTopic::PrimaryDryingTime),
            CheckState::Watch
        );
        let ample = verdict(&with_hold(predicted * 1.2), &sucrose_facts());
        assert_eq!(
            state_of(&ample, CheckTopic::PrimaryDryingTime),
            CheckState::Ok
        );
    }

    #[test]
    fn freezing_must_reach_5_c_below_tg_prime_and_hold_an_hour() {
        // Common practice, from memory: at least 5 °C below Tg'/Te, held 1–2 h.
        let facts = sucrose_facts();
        let with_freezing = |hold_temp_c: f64, hold_min: f64| {
            let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
            c.freezing.hold_temp_c = hold_temp_c;
            c.freezing.hold_min = hold_min;
            state_of(&verdict(&c, &facts), CheckTopic::Freezing)
        };
        assert_eq!(with_freezing(-45.0, 120.0), CheckState::Ok);
        assert_eq!(with_freezing(-34.0, 120.0), CheckState::Watch);
        assert_eq!(with_freezing(-30.0, 120.0), CheckState::Fails);
        assert_eq!(with_freezing(-45.0, 30.0), CheckState::Watch);
    }

    #[test]
    fn a_lower_te_governs_the_freezing_check() {
        let facts = FormulationFacts {
            te_c: Some(-21.5),
            tg_prime_c: Some(-15.0),
            ..sucrose_facts()
        };
        let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
        c.freezing.hold_temp_c = -18.0;
        let v = verdict(&c, &facts);
        assert_eq!(state_of(&v, CheckTopic::Freezing), CheckState::Fails);
        assert!(message_of(&v, CheckTopic::Freezing).contains("Te"));
    }

    #[test]
    fn annealing_is_judged_against_the_advice() {
        let advised = FormulationFacts {
            anneal_advised: true,
            anneal_window_c: Some((-25.0, -15.0)),
            te_c: Some(-1.5),
            crystalline: true,
            ..sucrose_facts()
        };
        let base = cycle(-35.0, 60.0, 140.0 * 60.0);
        let with_anneal = |temp_c: f64, hold_min: f64| {
            let mut c = base.clone();
            c.annealing = Some(AnnealingStep {
                temp_c,
                hold_min,
                return_ramp_c_per_min: None,
            });
            c
        };
        let state = |c: &CycleProgram, f: &FormulationFacts| {
            state_of(&verdict(c, f), CheckTopic::Annealing)
        };
        assert_eq!(state(&base, &advised), CheckState::Watch);
        assert_eq!(state(&with_anneal(-20.0, 180.0), &advised), CheckState::Ok);
        assert_eq!(
            state(&with_anneal(-30.0, 180.0), &advised),
            CheckState::Watch
        );
        assert_eq!(
            state(&with_anneal(-20.0, 20.0), &advised),
            CheckState::Watch
        );
        assert_eq!(
            state(&with_anneal(-1.0, 180.0), &advised),
            CheckState::Fails
        );
        assert_eq!(
            state(&with_anneal(-20.0, 180.0), &sucrose_facts()),
            CheckState::Watch
        );
        assert_eq!(state(&base, &sucrose_facts()), CheckState::Ok);
    }

    #[test]
    fn the_secondary_ramp_follows_common_practice_for_the_matrix() {
        // From memory: 0.1–0.15 °C/min amorphous, 0.3–0.4 °C/min crystalline.
        let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
        c.secondary.ramp_c_per_min = 0.3;
        assert_eq!(
            state_of(&verdict(&c, &sucrose_facts()), CheckTopic::SecondaryRamp),
            CheckState::Watch
        );
        let crystalline = FormulationFacts {
            crystalline: true,
            ..sucrose_facts()
        };
        assert_eq!(
            state_of(&verdict(&c, &crystalline), CheckTopic::SecondaryRamp),
            CheckState::Ok
        );
    }

    #[test]
    fn a_condenser_at_minus_65_to_minus_70_c_is_far_below_100_mtorr() {
        // Common practice, no source: such a condenser traps vapour easily at 100 mTorr.
        for t in [-65.0, -70.0] {
            let p = vapour_pressure_pa(t).unwrap();
            assert!(p < 0.05 * mtorr_to_pa(100.0), "{p} Pa at {t} °C");
            let mut c = cycle(-35.0, 100.0, 140.0 * 60.0);
            c.condenser_temp_c = Some(t);
            assert_eq!(
                state_of(&verdict(&c, &sucrose_facts()), CheckTopic::Condenser),
                CheckState::Ok
            );
        }
        let mut warm = cycle(-35.0, 60.0, 140.0 * 60.0);
        warm.condenser_temp_c = Some(-45.0); // ice there has about 54 mTorr
        assert_eq!(
            state_of(&verdict(&warm, &sucrose_facts()), CheckTopic::Condenser),
            CheckState::Watch
        );
        warm.condenser_temp_c = Some(-35.0);
        assert_eq!(
            state_of(&verdict(&warm, &sucrose_facts()), CheckTopic::Condenser),
            CheckState::Fails
        );
    }

    #[test]
    fn an_equipment_ceiling_below_the_peak_rate_fails() {
        let c = cycle(-35.0, 60.0, 140.0 * 60.0);
        let tight = check_cycle(
            &c,
            &sucrose_facts(),
            &sucrose_5_percent(),
            Some(SublimationCeiling::PerVialGH(0.01)),
            None,
        )
        .unwrap();
        assert_eq!(
            state_of(&tight, CheckTopic::SublimationCapacity),
            CheckState::Fails
        );
        let roomy = check_cycle(
            &c,
            &sucrose_facts(),
            &sucrose_5_percent(),
            Some(SublimationCeiling::PerShelfAreaKgHM2(2.0)),
            None,
        )
        .unwrap();
        assert_eq!(
            state_of(&roomy, CheckTopic::SublimationCapacity),
            CheckState::Ok
        );
    }

    #[test]
    fn a_primary_step_that_sublimes_nothing_fails_instead_of_being_refused() {
        let c = cycle(-42.0, 150.0, 140.0 * 60.0);
        let v = verdict(&c, &sucrose_facts());
        assert_eq!(v.overall, CheckState::Fails);
        assert!(message_of(&v, CheckTopic::PrimaryDryingTime).contains("nothing sublimes"));
    }

    #[test]
    fn without_a_known_limit_the_product_temperature_is_watched() {
        let v = verdict(
            &cycle(-35.0, 60.0, 140.0 * 60.0),
            &FormulationFacts::default(),
        );
        assert_eq!(
            state_of(&v, CheckTopic::ProductTemperature),
            CheckState::Watch
        );
    }

    #[test]
    fn bad_cycle_numbers_are_refused_by_name() {
        let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
        c.primary.hold_min = -1.0;
        let err = check_cycle(&c, &sucrose_facts(), &sucrose_5_percent(), None, None).unwrap_err();
        assert_eq!(err.field, "primary.hold_min");
        let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
        c.secondary.ramp_c_per_min = f64::NAN;
        let err = check_cycle(&c, &sucrose_facts(), &sucrose_5_percent(), None, None).unwrap_err();
        assert_eq!(err.field, "secondary.ramp_c_per_min");
        let facts = FormulationFacts {
            anneal_window_c: Some((-10.0, -20.0)),
            ..sucrose_facts()
        };
        let err = check_cycle(
            &cycle(-35.0, 60.0, 6000.0),
            &facts,
            &sucrose_5_percent(),
            None,
            None,
        )
        .unwrap_err();
        assert_eq!(err.field, "anneal_window_c");
    }
}
