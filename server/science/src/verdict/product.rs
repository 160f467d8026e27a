//! Product temperature (warmest vial class) and primary drying time (slowest class).

use super::{check, Check, CheckState, CheckTopic, CycleProgram, FormulationFacts};
use crate::batch::{BatchResult, BatchStop, ClassResult, VialClass};
use crate::drying::DryingStop;
use crate::limit::LimitKind;

/// A peak closer than this below the limit is worth a look, °C (common practice, no source).
pub const NEAR_LIMIT_C: f64 = 1.0;

/// The product temperature a limit of `kind` is compared with, for one class: the front for
/// collapse (the dried layer forms there), the warmer of front and bottom for eutectic
/// melting (the warmest ice melts first; the bottom is never colder than the front while
/// ice remains).
pub fn governing_temp_c(kind: LimitKind, c: &ClassResult) -> f64 {
    match kind {
        LimitKind::Collapse => c.peak_front_temp_c,
        LimitKind::Eutectic => c.peak_front_temp_c.max(c.peak_bottom_temp_c),
    }
}

fn percent(share: f64) -> String {
    format!("{:.0} %", 100.0 * share)
}

pub(super) fn product_temperature(facts: &FormulationFacts, b: &BatchResult) -> Check {
    let topic = CheckTopic::ProductTemperature;
    let kind = facts.limit_kind;
    let Some(warmest) = b.warmest_by(|c| governing_temp_c(kind, c)) else {
        return check(
            topic,
            CheckState::Watch,
            "No vial class was simulated.".into(),
        );
    };
    let peak = governing_temp_c(kind, warmest);
    let (what, beside) = match kind {
        LimitKind::Collapse => (
            "front",
            format!(" (bottom {:.1} °C)", warmest.peak_bottom_temp_c),
        ),
        LimitKind::Eutectic => ("warmest ice", String::new()),
    };
    let who = warmest.class.label();
    let Some(limit) = facts.max_product_temp_c else {
        return check(
            topic,
            CheckState::Watch,
            format!(
                "No maximum product temperature is known for this formulation, so the peak \
                 {what} temperature of the {who}, {peak:.1} °C{beside}, cannot be judged."
            ),
        );
    };
    let basis = match kind {
        LimitKind::Collapse => {
            "a collapse limit is held at the sublimation front, where the dried layer forms"
        }
        LimitKind::Eutectic => {
            "a eutectic limit is held at the warmest ice, the vial bottom, where melting \
             would begin"
        }
    };
    let above: Vec<&ClassResult> = b
        .classes
        .iter()
        .filter(|c| governing_temp_c(kind, c) > limit)
        .collect();
    if !above.is_empty() {
        let share: f64 = above.iter().map(|c| c.share).sum();
        let only_edge = above.iter().all(|c| c.class == VialClass::Edge);
        let timing = match (kind, warmest.summary.limit_first_exceeded_h) {
            (LimitKind::Collapse, Some(first)) => format!(
                " It first rises above the limit at {first:.1} h of primary drying and stays \
                 above it for {:.1} h in all.",
                warmest.summary.limit_exceeded_h.unwrap_or(0.0)
            ),
            _ => String::new(),
        };
        let whom = if only_edge {
            format!(
                "Only the edge vials ({} of the load) exceed it: their extra heat from walls \
                 and door takes them over while the centre vials stay below; they may collapse \
                 or melt back and be rejected.",
                percent(share)
            )
        } else {
            format!(
                "Vials making up {} of the load exceed it: the cake may collapse or melt back.",
                percent(share)
            )
        };
        return check(
            topic,
            CheckState::Fails,
            format!(
                "The {who} peak at {peak:.1} °C at the {what}{beside}, {:.1} °C above the limit \
                 of {limit:.1} °C ({basis}). {whom}{timing}",
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
                "The {who}, the warmest of the load, peak at {peak:.1} °C at the {what}{beside}, \
                 only {margin:.1} °C below the limit of {limit:.1} °C ({basis}); under \
                 {NEAR_LIMIT_C:.0} °C leaves little room for a Kv or Rp a little off (common \
                 practice, no source)."
            ),
        );
    }
    check(
        topic,
        CheckState::Ok,
        format!(
            "The {who}, the warmest of the load, peak at {peak:.1} °C at the {what}{beside}, \
             {margin:.1} °C below the limit of {limit:.1} °C ({basis})."
        ),
    )
}

pub(super) fn primary_time(cycle: &CycleProgram, b: &BatchResult, safety: f64) -> Check {
    let topic = CheckTopic::PrimaryDryingTime;
    let p = &cycle.primary;
    let ramp_h = (p.shelf_temp_c - cycle.freezing.hold_temp_c).abs() / p.ramp_c_per_min / 60.0;
    let programmed = ramp_h + p.hold_min / 60.0;
    let Some(slowest) = b.slowest() else {
        return check(
            topic,
            CheckState::Watch,
            "No vial class was simulated.".into(),
        );
    };
    let predicted = slowest.drying_time_h;
    let who = slowest.class.label();
    let needed = predicted * (1.0 + safety);
    let pct = 100.0 * safety;
    let spread = format!(
        "the first vials run out of ice at {:.1} h, the {who} last at {predicted:.1} h",
        b.first_dry_h
    );
    if predicted > programmed {
        return check(
            topic,
            CheckState::Fails,
            format!(
                "Ice would be left when the secondary ramp starts: {spread}, and the program \
                 gives {programmed:.1} h (ramp included); plan at least {needed:.1} h ({pct:.0} % \
                 margin)."
            ),
        );
    }
    let margin = 100.0 * (programmed / predicted - 1.0);
    if programmed < needed {
        return check(
            topic,
            CheckState::Watch,
            format!(
                "The program gives {programmed:.1} h; {spread}: a {margin:.0} % margin, less than \
                 the {pct:.0} % that covers a Kv or Rp a little off (common practice 10–20 %, no \
                 source); plan {needed:.1} h."
            ),
        );
    }
    check(
        topic,
        CheckState::Ok,
        format!("The program gives {programmed:.1} h; {spread}: a {margin:.0} % margin."),
    )
}

/// The checks when the model could not dry one of the classes.
pub(super) fn cannot_dry(stop: Option<&BatchStop>) -> Vec<Check> {
    let Some(stop) = stop else {
        return vec![check(
            CheckTopic::PrimaryDryingTime,
            CheckState::Fails,
            "The model cannot dry this cycle's primary step.".into(),
        )];
    };
    let who = stop.class.label();
    let temperature = match &stop.stop {
        DryingStop::IceWouldMelt { .. } => check(
            CheckTopic::ProductTemperature,
            CheckState::Fails,
            format!("The ice of the {who} would melt: {}.", stop.stop),
        ),
        _ => check(
            CheckTopic::ProductTemperature,
            CheckState::Watch,
            format!("The product temperature cannot be judged: the model cannot dry the {who}."),
        ),
    };
    vec![
        temperature,
        check(
            CheckTopic::PrimaryDryingTime,
            CheckState::Fails,
            format!(
                "The model cannot dry this cycle's primary step for the {who}: {}.",
                stop.stop
            ),
        ),
    ]
}
