//! The suggestion's reasoning, in words.

use super::{OperatingPoint, COARSE_PRESSURES, SENSITIVITY_SHARE};
use crate::batch::BatchSpec;
use crate::limit::LimitKind;

pub(super) struct Facts<'a> {
    pub best: &'a OperatingPoint,
    pub limit_c: f64,
    pub kind: LimitKind,
    pub spec: &'a BatchSpec,
    pub shelf: [f64; 2],
    pub pressure: [f64; 2],
    pub tang_pikal_mtorr: f64,
    pub at_tang_pikal: Option<&'a OperatingPoint>,
    pub fastest: Option<&'a OperatingPoint>,
    pub kv_rise: f64,
    pub rp_rise: f64,
    pub has_capability: bool,
}

pub(super) fn reasons(f: &Facts) -> Vec<String> {
    let best = f.best;
    let held = match f.kind {
        LimitKind::Collapse => "at the sublimation front, where the dried layer forms",
        LimitKind::Eutectic => "at the warmest ice, the vial bottom, where melting would begin",
    };
    let mut out = vec![
        format!(
            "The limit of {:.1} °C is held {held}, for the warmest vials of the load (Kv × \
             {:.2}: edge heat factor {:.2}, centre spread {:.0} %), and the drying time is that \
             of the slowest (Kv × {:.2}). Shelf temperatures from {} to {} °C and pressures \
             from {} to {} mTorr were searched at {COARSE_PRESSURES} pressures.",
            f.limit_c,
            f.spec.warmest_kv_factor(),
            f.spec.edge_heat_factor,
            100.0 * f.spec.kv_cv,
            f.spec.slowest_kv_factor(),
            f.shelf[0],
            f.shelf[1],
            f.pressure[0],
            f.pressure[1]
        ),
        format!(
            "Tang & Pikal (2004) suggest a chamber pressure of about 0.29·10^(0.019·Tp) Torr \
             for a target product temperature Tp: {:.0} mTorr for {:.1} °C. The pressure is \
             taken no lower than that (nor than the dryer's lowest), and at or above it the one \
             that dries fastest within the dryer's capability: lower pressures dry a little \
             faster in the model but heat vials less evenly and leave less margin to choked \
             flow (common practice, no source).",
            f.tang_pikal_mtorr, f.limit_c
        ),
        format!(
            "At {:.0} mTorr (Kv {:.1} W/(m²·K)) a shelf at {:.1} °C peaks the warmest vials at \
             {:.1} °C at the front (bottom {:.1} °C), and the slowest dry in {:.1} h.",
            best.chamber_pressure_mtorr,
            best.kv_w_m2k,
            best.shelf_temp_c,
            best.peak_front_temp_c,
            best.peak_bottom_temp_c,
            best.drying_time_h
        ),
        format!(
            "If Kv is {pct:.0} % higher than taken, the warmest vials peak {:.1} °C warmer; if \
             the dried layer resists {pct:.0} % more, {:.1} °C warmer. Keep that much room or \
             measure Kv and Rp.",
            f.kv_rise,
            f.rp_rise,
            pct = 100.0 * SENSITIVITY_SHARE
        ),
    ];
    if let Some(kg_h) = best.batch_peak_sublimation_kg_h {
        out.push(format!(
            "The load sublimes up to {kg_h:.2} kg/h{}.",
            if best.capability_bound {
                ": the dryer's capability, not the limit, sets the shelf temperature"
            } else if f.has_capability {
                ", within the dryer's capability"
            } else {
                ""
            }
        ));
    }
    if best.shelf_temp_c >= f.shelf[1] - 0.1 {
        out.push(format!(
            "The shelf reaches the top of its range ({} °C) before the product reaches its \
             limit; a wider range would dry faster.",
            f.shelf[1]
        ));
    }
    if let Some(fast) = f.fastest {
        if fast.drying_time_h < best.drying_time_h * 0.999 {
            out.push(format!(
                "The fastest pressure in range, {:.0} mTorr with the shelf at {:.1} °C, would \
                 dry in {:.1} h.",
                fast.chamber_pressure_mtorr, fast.shelf_temp_c, fast.drying_time_h
            ));
        }
    }
    if f.at_tang_pikal.is_none() {
        out.push("No shelf temperature in range is safe at the guided pressure.".to_string());
    }
    out
}
