//! Freezing, annealing and secondary drying: rules of thumb on the programmed steps.

use super::{check, Check, CheckState, CheckTopic, CycleProgram, FormulationFacts};

/// Freezing holds at least this far below the lower of Tg′ and Te, °C (common practice,
/// from memory).
pub const FREEZE_BELOW_CRITICAL_C: f64 = 5.0;
/// Freezing target when neither Tg′ nor Te is known, °C (common practice, from memory).
pub const FREEZE_DEFAULT_C: f64 = -40.0;
/// Shortest freezing hold, min (common practice 1–2 h, from memory).
pub const MIN_FREEZE_HOLD_MIN: f64 = 60.0;
/// Shortest annealing hold, min (common practice, no source).
pub const MIN_ANNEAL_HOLD_MIN: f64 = 60.0;
/// Fastest secondary ramp, °C/min: amorphous 0.1–0.15, crystalline 0.3–0.4 (from memory).
pub const SECONDARY_RAMP_AMORPHOUS: f64 = 0.15;
pub const SECONDARY_RAMP_CRYSTALLINE: f64 = 0.4;
/// A secondary ramp more than this many times the common upper figure fails (common
/// practice, no source).
pub const SECONDARY_RAMP_FAIL_RATIO: f64 = 2.0;
/// Shortest secondary hold, min: holds of 3–6 h are common (from memory).
pub const MIN_SECONDARY_HOLD_MIN: f64 = 180.0;
/// Secondary shelf temperatures above this are worth a look, °C: holds at 40–50 °C are
/// common (from memory); hotter stresses many proteins.
pub const HOT_SECONDARY_SHELF_C: f64 = 60.0;
/// A secondary shelf closer than this below the dried cake's Tg is worth a look, °C (common
/// practice, no source).
pub const NEAR_CAKE_TG_C: f64 = 5.0;

pub(super) fn freezing(cycle: &CycleProgram, facts: &FormulationFacts) -> Check {
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

/// Annealing: against the advised window; with advice but no window, against Tg′ (the
/// amorphous phase must be mobile for a component to crystallize) and Te (the crystallized
/// phase must not melt). An anneal at or below Tg′ cannot ripen ice or crystallize
/// anything, since the freeze-concentrate is glassy there.
pub(super) fn annealing(cycle: &CycleProgram, facts: &FormulationFacts) -> Check {
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
    let glassy = facts.tg_prime_c.filter(|&tg| t <= tg);
    let (mut state, mut message) = match (facts.anneal_advised, facts.anneal_window_c, glassy) {
        (false, _, Some(tg)) => (
            CheckState::Watch,
            format!(
                "Annealing at {t:.1} °C is at or below Tg′ ({tg:.1} °C): the freeze-concentrate \
                 is glassy there, so ice crystals do not grow and nothing crystallizes; the step \
                 only adds time. None is advised for this formulation."
            ),
        ),
        (false, _, None) => (
            CheckState::Watch,
            format!(
                "Annealing at {t:.1} °C is not advised for this formulation: it can separate \
                 phases or stress a protein. Above Tg′ it may still be chosen on purpose, to \
                 grow larger ice crystals and lower the dried-layer resistance."
            ),
        ),
        (true, Some((lo, _)), _) if t < lo => (
            CheckState::Watch,
            format!(
                "Annealing at {t:.1} °C lies below the advised window{window}: crystallization \
                 may stay incomplete."
            ),
        ),
        (true, Some((_, hi)), _) if t > hi => (
            CheckState::Watch,
            format!(
                "Annealing at {t:.1} °C lies above the advised window{window}, nearer to \
                 melting of the crystalline phase."
            ),
        ),
        (true, Some(_), _) => (
            CheckState::Ok,
            format!("Annealing at {t:.1} °C, as advised{window}."),
        ),
        (true, None, Some(tg)) => (
            CheckState::Watch,
            format!(
                "Annealing at {t:.1} °C is at or below Tg′ ({tg:.1} °C): the freeze-concentrate \
                 is glassy there, so the component meant to crystallize cannot; anneal above \
                 Tg′ and below Te."
            ),
        ),
        (true, None, None) => match (facts.tg_prime_c, facts.te_c) {
            (Some(tg), Some(te)) => (
                CheckState::Ok,
                format!(
                    "Annealing at {t:.1} °C lies above Tg′ ({tg:.1} °C) and below Te \
                     ({te:.1} °C), where the advised crystallization can proceed; no window is \
                     derived to compare with."
                ),
            ),
            _ => (
                CheckState::Watch,
                format!(
                    "Annealing is advised but no window is derived, and Tg′ and Te are not both \
                     known, so annealing at {t:.1} °C cannot be judged."
                ),
            ),
        },
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

/// Secondary drying: a hold long enough, a ramp slow enough for the matrix, and a shelf
/// below the dried cake's Tg at the moisture it holds then.
pub(super) fn secondary(cycle: &CycleProgram, facts: &FormulationFacts) -> Check {
    let topic = CheckTopic::SecondaryDrying;
    let s = &cycle.secondary;
    let mut parts: Vec<(CheckState, String)> = Vec::with_capacity(4);
    let hold = s.hold_min;
    parts.push(if hold <= 0.0 {
        (
            CheckState::Fails,
            format!(
                "There is no secondary-drying hold at {:.1} °C: the bound water is barely \
                 removed (holds of 3–6 h are common, from memory).",
                s.shelf_temp_c
            ),
        )
    } else if hold < MIN_SECONDARY_HOLD_MIN {
        (
            CheckState::Watch,
            format!(
                "The secondary hold of {:.1} h is shorter than the 3–6 h common (from memory): \
                 confirm the residual moisture.",
                hold / 60.0
            ),
        )
    } else {
        (
            CheckState::Ok,
            format!("The secondary hold runs {:.1} h.", hold / 60.0),
        )
    });
    let ramp = s.ramp_c_per_min;
    let (kind, max) = if facts.crystalline {
        ("crystalline", SECONDARY_RAMP_CRYSTALLINE)
    } else {
        ("amorphous", SECONDARY_RAMP_AMORPHOUS)
    };
    let common = format!(
        "the {max:.2} °C/min common for {kind} products (0.1–0.15 amorphous, 0.3–0.4 \
         crystalline, from memory)"
    );
    parts.push(if ramp > SECONDARY_RAMP_FAIL_RATIO * max {
        (
            CheckState::Fails,
            format!(
                "The ramp of {ramp:.2} °C/min is more than {SECONDARY_RAMP_FAIL_RATIO:.0} × \
                 {common} (that factor: common practice, no source): a still-moist amorphous \
                 cake may collapse."
            ),
        )
    } else if ramp > max {
        (
            CheckState::Watch,
            format!("The ramp of {ramp:.2} °C/min is faster than {common}."),
        )
    } else {
        (
            CheckState::Ok,
            format!("The ramp of {ramp:.2} °C/min is within {common}."),
        )
    });
    let shelf = s.shelf_temp_c;
    if let Some(tg) = facts.dried_cake_tg_c {
        parts.push(if shelf >= tg {
            (
                CheckState::Fails,
                format!(
                    "The shelf at {shelf:.1} °C is at or above the dried cake's Tg ({tg:.1} °C at \
                     the moisture it holds then): the cake would soften and may collapse or \
                     shrink."
                ),
            )
        } else if shelf > tg - NEAR_CAKE_TG_C {
            (
                CheckState::Watch,
                format!(
                    "The shelf at {shelf:.1} °C is only {:.1} °C below the dried cake's Tg \
                     ({tg:.1} °C); under {NEAR_CAKE_TG_C:.0} °C is little room (common practice, \
                     no source).",
                    tg - shelf
                ),
            )
        } else {
            (
                CheckState::Ok,
                format!(
                    "The shelf at {shelf:.1} °C is {:.1} °C below the dried cake's Tg ({tg:.1} °C).",
                    tg - shelf
                ),
            )
        });
    } else if shelf > HOT_SECONDARY_SHELF_C {
        parts.push((
            CheckState::Watch,
            format!(
                "The shelf at {shelf:.1} °C is hotter than the 40–50 °C common (from memory), and \
                 the dried cake's Tg is not known to compare with."
            ),
        ));
    }
    let state = parts.iter().map(|p| p.0).max().unwrap_or(CheckState::Ok);
    let message = parts.into_iter().map(|p| p.1).collect::<Vec<_>>().join(" ");
    check(topic, state, message)
}
