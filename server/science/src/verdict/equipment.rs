//! The condenser and the dryer: can the equipment carry what the batch asks of it?

use super::{check, Check, CheckState, CheckTopic, CycleProgram, Load};
use crate::batch::{BatchResult, BatchSpec};
use crate::drying::Product;
use crate::ice::vapour_pressure_pa_unchecked;
use crate::units::{c_to_k, pa_to_mtorr};

/// Condenser ice vapour pressure above this share of the lowest chamber pressure is worth a
/// look (common practice, no source).
pub const CONDENSER_WATCH_SHARE: f64 = 0.2;
/// …and at or above this share it fails: half the pressure difference that drives vapour to
/// the condenser is gone, well before the two pressures meet (common practice, no source).
pub const CONDENSER_FAIL_SHARE: f64 = 0.5;
/// Use of a capacity (sublimation rate, condenser ice) above this share is worth a look
/// (common practice, no source).
pub const CAPACITY_WATCH_SHARE: f64 = 0.8;

/// The condenser's ice vapour pressure (Murphy & Koop 2005, eq. 7) against the lowest
/// chamber pressure of primary and secondary drying.
pub(super) fn condenser(cycle: &CycleProgram) -> Check {
    let topic = CheckTopic::Condenser;
    let Some(t) = cycle.condenser_temp_c else {
        return check(
            topic,
            CheckState::Watch,
            "No condenser temperature is given, so the condenser was not checked.".into(),
        );
    };
    let (phase, lowest) = if cycle.secondary.pressure_mtorr < cycle.primary.chamber_pressure_mtorr {
        ("secondary", cycle.secondary.pressure_mtorr)
    } else {
        ("primary", cycle.primary.chamber_pressure_mtorr)
    };
    if t >= 0.0 {
        return check(
            topic,
            CheckState::Fails,
            format!("A condenser at {t:.1} °C cannot hold ice."),
        );
    }
    let p_mtorr = pa_to_mtorr(vapour_pressure_pa_unchecked(c_to_k(t)));
    let share = p_mtorr / lowest;
    let said = format!(
        "Ice on the condenser at {t:.1} °C has a vapour pressure of {p_mtorr:.1} mTorr (Murphy & \
         Koop 2005), {:.0} % of the lowest chamber pressure, {lowest:.0} mTorr in {phase} drying",
        100.0 * share
    );
    let rule = format!(
        "above {:.0} % it is worth a look and from {:.0} % it fails, well before the two meet \
         (common practice, no source)",
        100.0 * CONDENSER_WATCH_SHARE,
        100.0 * CONDENSER_FAIL_SHARE
    );
    if share >= CONDENSER_FAIL_SHARE {
        check(
            topic,
            CheckState::Fails,
            format!(
                "{said}: too little pressure difference is left to draw vapour from the chamber; \
                 {rule}."
            ),
        )
    } else if share > CONDENSER_WATCH_SHARE {
        check(
            topic,
            CheckState::Watch,
            format!("{said}: it slows vapour removal; {rule}."),
        )
    } else {
        check(topic, CheckState::Ok, format!("{said}."))
    }
}

fn against(what: &str, used: f64, capacity: f64, unit: &str, why: &str) -> (CheckState, String) {
    let share = used / capacity;
    if used > capacity {
        (
            CheckState::Fails,
            format!("{what} {used:.2} {unit}, above the dryer's {capacity:.2} {unit}: {why}."),
        )
    } else if share > CAPACITY_WATCH_SHARE {
        (
            CheckState::Watch,
            format!(
                "{what} {used:.2} {unit}, {:.0} % of the dryer's {capacity:.2} {unit}: above \
                 {:.0} % leaves little room (common practice, no source).",
                100.0 * share,
                100.0 * CAPACITY_WATCH_SHARE
            ),
        )
    } else {
        (
            CheckState::Ok,
            format!(
                "{what} {used:.2} {unit}, {:.0} % of the dryer's {capacity:.2} {unit}.",
                100.0 * share
            ),
        )
    }
}

/// The batch against the dryer: peak total sublimation rate against the capability at the
/// chamber pressure (choked flow: Patel, Chaudhary & Pikal 2010, from memory), set pressures
/// against the lowest controllable one, the load's ice against the condenser's capacity.
pub(super) fn equipment(
    cycle: &CycleProgram,
    batch: Option<&BatchResult>,
    product: &Product,
    load: &Load,
    spec: &BatchSpec,
    ceiling_g_h_per_vial: Option<f64>,
) -> Check {
    let topic = CheckTopic::Equipment;
    let pc = cycle.primary.chamber_pressure_mtorr;
    let Some(dryer) = &load.dryer else {
        let mut message = "No dryer is given, so the equipment (capability, lowest pressure, \
                           condenser capacity) was not checked."
            .to_string();
        let mut state = CheckState::Watch;
        if let (Some(ceiling), Some(b)) = (ceiling_g_h_per_vial, batch) {
            let (s, m) = against(
                "An average vial of the load sublimes up to",
                b.peak_mean_rate_g_h,
                ceiling,
                "g/h",
                "the chamber pressure would rise out of control (choked flow or an overloaded \
                 condenser)",
            );
            state = state.max(s);
            message = format!(
                "{} Against the given ceiling per vial: {m}",
                message.replace(" (capability, lowest pressure,", " (lowest pressure,")
            );
        }
        return check(topic, state, message);
    };
    let (count, counted) = match spec.vial_count {
        Some(n) => (n, format!("{n:.0} vials")),
        None => {
            let n = dryer.full_load_vials(product.outer_area_cm2());
            (
                n,
                format!(
                    "{n:.0} vials (no count given: the shelves taken as full, hexagonal packing)"
                ),
            )
        }
    };
    let mut parts: Vec<(CheckState, String)> = Vec::with_capacity(4);
    match (dryer.capability_kg_h(pc), batch) {
        (Some(cap), Some(b)) => parts.push(against(
            &format!("At {pc:.0} mTorr the load of {counted} sublimes up to"),
            count * b.peak_mean_rate_g_h / 1000.0,
            cap,
            "kg/h",
            "the dryer cannot carry the vapour (choked flow or condenser), so the chamber \
             pressure and the product temperature would rise",
        )),
        (Some(_), None) => parts.push((
            CheckState::Watch,
            "The sublimation rate could not be compared with the dryer's capability: the model \
             cannot dry this cycle."
                .into(),
        )),
        (None, _) => parts.push((
            CheckState::Watch,
            "The dryer's capability (sublimation rate against pressure) is not given, so the \
             load's sublimation rate was not checked."
                .into(),
        )),
    }
    if let Some(min) = dryer.min_pressure_mtorr {
        let lowest = pc.min(cycle.secondary.pressure_mtorr);
        parts.push(if lowest < min {
            (
                CheckState::Fails,
                format!(
                    "The cycle sets {lowest:.0} mTorr, below the {min:.0} mTorr the dryer can \
                     control."
                ),
            )
        } else {
            (
                CheckState::Ok,
                format!("The set pressures are within the dryer's control (from {min:.0} mTorr)."),
            )
        });
    }
    if let Some(capacity) = dryer.condenser_capacity_kg {
        parts.push(against(
            &format!("The load of {counted} holds"),
            count * product.ice_mass_g() / 1000.0,
            capacity,
            "kg of ice",
            "the condenser would fill before primary drying ends",
        ));
    }
    let state = parts.iter().map(|p| p.0).max().unwrap_or(CheckState::Ok);
    let message = parts.into_iter().map(|p| p.1).collect::<Vec<_>>().join(" ");
    check(topic, state, message)
}
