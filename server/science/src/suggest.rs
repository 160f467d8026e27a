//! A starting point for primary drying: the shelf temperature and chamber pressure that dry
//! fastest while the peak front temperature stays at or below the product's limit, found by
//! searching the model, with the chamber-pressure guidance of Tang & Pikal (2004) beside it.

use serde::{Deserialize, Serialize};

use crate::design_space::{parallel_map, shelf_temp_c, Approach, BoundaryState, Explorer};
use crate::drying::{chamber_pressure_pa, product_limit_k, DryingBase, Product};
use crate::error::InputError;
use crate::units::{c_to_k, k_to_c};

/// Shelf temperatures searched unless given, °C (common practice, no source).
pub const DEFAULT_SHELF_RANGE_C: [f64; 2] = [-40.0, 40.0];
/// Chamber pressures searched unless given, mTorr (common practice, no source).
pub const DEFAULT_PRESSURE_RANGE_MTORR: [f64; 2] = [30.0, 300.0];
/// Pressures tried across the range before refining around the best.
const COARSE_PRESSURES: usize = 24;

const CAUTION: &str = "A model-based starting point to support qualified judgement; it does \
    not replace experimental confirmation of the cycle (product temperature probes, a \
    pressure-rise or comparative-pressure test of the end of primary drying, cake inspection).";

/// Chamber pressure guidance of Tang & Pikal (2004), Pharm. Res. 21:191 (from memory):
/// Pc ≈ 0.29·10^(0.019·Tp) Torr for a target product temperature Tp in °C.
pub fn tang_pikal_pressure_torr(target_product_temp_c: f64) -> f64 {
    0.29 * 10f64.powf(0.019 * target_product_temp_c)
}

/// `suggest-primary-drying` topic input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SuggestInput {
    pub base: DryingBase,
    pub max_product_temp_c: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shelf_range_c: Option<[f64; 2]>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pressure_range_mtorr: Option<[f64; 2]>,
    /// With `ramp_c_per_min`: the shelf ramps from here (e.g. the freezing temperature).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start_shelf_temp_c: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ramp_c_per_min: Option<f64>,
}

/// A shelf temperature and pressure with what the model predicts for them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OperatingPoint {
    pub shelf_temp_c: f64,
    pub chamber_pressure_mtorr: f64,
    pub drying_time_h: f64,
    pub peak_front_temp_c: f64,
    pub peak_bottom_temp_c: f64,
    pub peak_sublimation_rate_g_h: f64,
    pub kv_w_m2k: f64,
}

/// `suggest-primary-drying` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Suggestion {
    pub shelf_temp_c: f64,
    pub chamber_pressure_mtorr: f64,
    pub drying_time_h: f64,
    pub peak_front_temp_c: f64,
    pub peak_bottom_temp_c: f64,
    pub peak_sublimation_rate_g_h: f64,
    pub kv_w_m2k: f64,
    pub tang_pikal_pressure_mtorr: f64,
    /// The hottest safe shelf temperature at the Tang & Pikal pressure (taken to the nearest
    /// end of the pressure range when it falls outside).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at_tang_pikal_pressure: Option<OperatingPoint>,
    pub shelf_range_c: [f64; 2],
    pub pressure_range_mtorr: [f64; 2],
    pub reasoning: Vec<String>,
    pub caution: String,
}

fn range(
    field: &str,
    given: Option<[f64; 2]>,
    default: [f64; 2],
    check: impl Fn(&str, f64) -> Result<f64, InputError>,
) -> Result<[f64; 2], InputError> {
    let [lo, hi] = given.unwrap_or(default);
    check(&format!("{field}[0]"), lo)?;
    check(&format!("{field}[1]"), hi)?;
    if lo >= hi {
        return Err(InputError::new(
            field,
            format!("the low end must lie below the high end (got {lo} to {hi})"),
        ));
    }
    Ok([lo, hi])
}

/// The hottest safe shelf temperature at `pressure`, rounded down to 0.1 °C, and the model's
/// figures there; `None` when no shelf temperature in range is safe.
fn best_at(explorer: &Explorer, pressure: f64, shelf: [f64; 2]) -> Option<OperatingPoint> {
    let b = explorer.boundary(pressure, shelf[0], shelf[1]);
    let hottest = match b.state {
        BoundaryState::Crosses | BoundaryState::BelowLimitAcrossRange => b.shelf_temp_c?,
        BoundaryState::AboveLimitAcrossRange
        | BoundaryState::NoSublimation
        | BoundaryState::SublimesOnlyAboveLimit => return None,
    };
    // A set point a user can type, on the safe side of the solved boundary.
    let mut shelf_c = ((hottest * 10.0 + 1e-9).floor() / 10.0).max(shelf[0]);
    for _ in 0..5 {
        let s = explorer.run(shelf_c, pressure).ok()?;
        if c_to_k(s.peak_front_temp_c) <= explorer.limit_k + 1e-9 {
            return Some(OperatingPoint {
                shelf_temp_c: shelf_c,
                chamber_pressure_mtorr: pressure,
                drying_time_h: s.drying_time_h,
                peak_front_temp_c: s.peak_front_temp_c,
                peak_bottom_temp_c: s.peak_bottom_temp_c,
                peak_sublimation_rate_g_h: s.peak_sublimation_rate_g_h,
                kv_w_m2k: explorer.conditions(shelf_c, pressure).kv_w_m2k(),
            });
        }
        shelf_c -= 0.1;
    }
    None
}

/// The hottest safe shelf temperature at `pressure` (unrounded) and its drying time: what
/// the pressure search minimizes.
fn time_at(explorer: &Explorer, pressure: f64, shelf: [f64; 2]) -> f64 {
    let b = explorer.boundary(pressure, shelf[0], shelf[1]);
    match (b.state, b.drying_time_h) {
        (BoundaryState::Crosses | BoundaryState::BelowLimitAcrossRange, Some(t)) => t,
        _ => f64::INFINITY,
    }
}

/// `p` to the nearest whole mTorr if that stays in `range`, else `p` brought into it.
fn round_within(p: f64, range: [f64; 2]) -> f64 {
    let r = p.round();
    if (range[0]..=range[1]).contains(&r) {
        r
    } else {
        p.clamp(range[0], range[1])
    }
}

/// Golden-section search for the pressure of shortest drying time between `lo` and `hi`
/// (on a log scale, where drying time varies more evenly).
fn refine(explorer: &Explorer, lo: f64, hi: f64, shelf: [f64; 2]) -> f64 {
    const INV_PHI: f64 = 0.618_033_988_749_894_8;
    let f = |log_p: f64| time_at(explorer, log_p.exp(), shelf);
    let (mut a, mut b) = (lo.ln(), hi.ln());
    let mut c = b - INV_PHI * (b - a);
    let mut d = a + INV_PHI * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    while b - a > 2e-3 {
        if fc <= fd {
            (b, d, fd) = (d, c, fc);
            c = b - INV_PHI * (b - a);
            fc = f(c);
        } else {
            (a, c, fc) = (c, d, fd);
            d = a + INV_PHI * (b - a);
            fd = f(d);
        }
    }
    (0.5 * (a + b)).exp()
}

/// Search the model for the fastest primary drying that keeps the peak front temperature at
/// or below the limit. When no setting in range does, the error names `max_product_temp_c`.
pub fn suggest(input: &SuggestInput) -> Result<Suggestion, InputError> {
    let product = Product::new(&input.base).map_err(|e| e.within("base."))?;
    let limit_k = product_limit_k("max_product_temp_c", input.max_product_temp_c)?;
    let shelf = range(
        "shelf_range_c",
        input.shelf_range_c,
        DEFAULT_SHELF_RANGE_C,
        shelf_temp_c,
    )?;
    let pressure = range(
        "pressure_range_mtorr",
        input.pressure_range_mtorr,
        DEFAULT_PRESSURE_RANGE_MTORR,
        |f, v| chamber_pressure_pa(f, v).map(|_| v),
    )?;
    let approach = Approach::from_fields(input.start_shelf_temp_c, input.ramp_c_per_min)?;
    let explorer = Explorer {
        product,
        approach,
        limit_k,
    };
    let limit_c = k_to_c(limit_k);

    let ratio = (pressure[1] / pressure[0]).powf(1.0 / (COARSE_PRESSURES - 1) as f64);
    let candidates: Vec<f64> = (0..COARSE_PRESSURES)
        .map(|i| (pressure[0] * ratio.powi(i as i32)).min(pressure[1]))
        .collect();
    let times = parallel_map(&candidates, |&p| time_at(&explorer, p, shelf));
    let (best_i, best_time) = times
        .iter()
        .copied()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .unwrap_or((0, f64::INFINITY));
    if !best_time.is_finite() {
        let coldest_front = explorer
            .conditions(shelf[0], pressure[0])
            .equilibrium_temp_c();
        return Err(InputError::new(
            "max_product_temp_c",
            format!(
                "no shelf temperature from {} to {} °C at {} to {} mTorr keeps the front at or \
                 below {limit_c:.1} °C (at {} mTorr ice sublimes only with its front above \
                 {coldest_front:.1} °C); check the limit, the ranges and the resistance",
                shelf[0], shelf[1], pressure[0], pressure[1], pressure[0]
            ),
        ));
    }
    let lo = candidates[best_i.saturating_sub(1)];
    let hi = candidates[(best_i + 1).min(candidates.len() - 1)];
    let refined = refine(&explorer, lo, hi, shelf);
    let rounded = round_within(refined, pressure);
    let best = [rounded, candidates[best_i]]
        .into_iter()
        .filter_map(|p| best_at(&explorer, p, shelf))
        .min_by(|a, b| a.drying_time_h.total_cmp(&b.drying_time_h))
        .ok_or_else(|| {
            InputError::new(
                "max_product_temp_c",
                "no set point in range keeps the front at the limit",
            )
        })?;

    let tang_pikal_mtorr = tang_pikal_pressure_torr(limit_c) * 1000.0;
    let tp_pressure = round_within(tang_pikal_mtorr, pressure);
    let at_tang_pikal = best_at(&explorer, tp_pressure, shelf);
    let reasoning = reasons(
        &best,
        limit_c,
        shelf,
        pressure,
        tang_pikal_mtorr,
        at_tang_pikal.as_ref(),
    );
    Ok(Suggestion {
        shelf_temp_c: best.shelf_temp_c,
        chamber_pressure_mtorr: best.chamber_pressure_mtorr,
        drying_time_h: best.drying_time_h,
        peak_front_temp_c: best.peak_front_temp_c,
        peak_bottom_temp_c: best.peak_bottom_temp_c,
        peak_sublimation_rate_g_h: best.peak_sublimation_rate_g_h,
        kv_w_m2k: best.kv_w_m2k,
        tang_pikal_pressure_mtorr: tang_pikal_mtorr,
        at_tang_pikal_pressure: at_tang_pikal,
        shelf_range_c: shelf,
        pressure_range_mtorr: pressure,
        reasoning,
        caution: CAUTION.to_string(),
    })
}

fn reasons(
    best: &OperatingPoint,
    limit_c: f64,
    shelf: [f64; 2],
    pressure: [f64; 2],
    tang_pikal_mtorr: f64,
    at_tang_pikal: Option<&OperatingPoint>,
) -> Vec<String> {
    let mut out = vec![
        format!(
            "The limit of {limit_c:.1} °C is held at the sublimation front, where the dried \
             layer forms; shelf temperatures from {} to {} °C and pressures from {} to {} mTorr \
             were searched.",
            shelf[0], shelf[1], pressure[0], pressure[1]
        ),
        format!(
            "At each of {COARSE_PRESSURES} pressures the hottest shelf temperature keeping the \
             peak front temperature at or below the limit was solved from the model, and the \
             pressure drying fastest refined."
        ),
        format!(
            "At {:.0} mTorr (Kv {:.1} W/(m²·K)) a shelf at {:.1} °C peaks the front at {:.1} °C \
             (bottom {:.1} °C) and dries in {:.1} h, subliming at most {:.3} g/h per vial.",
            best.chamber_pressure_mtorr,
            best.kv_w_m2k,
            best.shelf_temp_c,
            best.peak_front_temp_c,
            best.peak_bottom_temp_c,
            best.drying_time_h,
            best.peak_sublimation_rate_g_h
        ),
    ];
    if best.shelf_temp_c >= shelf[1] - 0.1 {
        out.push(format!(
            "The shelf reaches the top of its range ({} °C) before the product reaches its \
             limit; a wider range would dry faster.",
            shelf[1]
        ));
    }
    if best.chamber_pressure_mtorr <= pressure[0] + 0.5 {
        out.push(
            "The model favours the lowest pressure in range: at the same product temperature a \
             lower pressure drives sublimation harder. The single-vial model does not see that \
             heat transfer grows less even across the shelf at low pressure (edge vials gain \
             more by radiation) — common practice, no source."
                .to_string(),
        );
    }
    let tp = format!(
        "Tang & Pikal (2004) suggest a chamber pressure of about 0.29·10^(0.019·Tp) Torr for a \
         target product temperature Tp: {tang_pikal_mtorr:.0} mTorr for {limit_c:.1} °C."
    );
    out.push(match at_tang_pikal {
        Some(p) => format!(
            "{tp} At {:.0} mTorr the hottest safe shelf is {:.1} °C, drying in {:.1} h.",
            p.chamber_pressure_mtorr, p.shelf_temp_c, p.drying_time_h
        ),
        None => format!("{tp} No shelf temperature in range is safe at that pressure."),
    });
    out
}

/// `suggest-primary-drying` topic.
pub fn calc_suggest_primary_drying(
    input: serde_json::Value,
) -> Result<serde_json::Value, InputError> {
    let input: SuggestInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&suggest(&input)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::drying::tests::{merge, sucrose_5_percent};
    use crate::drying::{simulate_summary, PrimaryDryingInput};
    use approx::assert_relative_eq;
    use serde_json::json;

    fn asking(limit: f64) -> SuggestInput {
        SuggestInput {
            base: sucrose_5_percent(),
            max_product_temp_c: limit,
            shelf_range_c: None,
            pressure_range_mtorr: None,
            start_shelf_temp_c: None,
            ramp_c_per_min: None,
        }
    }

    #[test]
    fn the_tang_pikal_pressure_formula_is_reproduced() {
        // Tang & Pikal (2004), from memory: Pc = 0.29·10^(0.019·Tp) Torr.
        assert_relative_eq!(tang_pikal_pressure_torr(0.0), 0.29, max_relative = 1e-12);
        // −30 °C: 0.29 × 10^−0.57 = 0.0781 Torr; −20 °C: 0.29 × 10^−0.38 = 0.1209 Torr.
        assert_relative_eq!(
            tang_pikal_pressure_torr(-30.0),
            0.078_05,
            max_relative = 1e-3
        );
        assert_relative_eq!(
            tang_pikal_pressure_torr(-20.0),
            0.120_89,
            max_relative = 1e-3
        );
    }

    #[test]
    fn the_suggestion_keeps_the_front_at_the_limit_and_no_warmer_shelf_would() {
        let limit = -32.0;
        let s = suggest(&asking(limit)).unwrap();
        assert!(
            s.peak_front_temp_c <= limit + 1e-9,
            "{}",
            s.peak_front_temp_c
        );
        assert!(s.peak_front_temp_c > limit - 0.2, "{}", s.peak_front_temp_c);
        assert!((30.0..=300.0).contains(&s.chamber_pressure_mtorr));
        assert!((-40.0..=40.0).contains(&s.shelf_temp_c));
        let warmer = PrimaryDryingInput::constant(
            &sucrose_5_percent(),
            s.shelf_temp_c + 0.2,
            s.chamber_pressure_mtorr,
        );
        assert!(simulate_summary(&warmer).unwrap().peak_front_temp_c > limit);
        assert_relative_eq!(
            s.tang_pikal_pressure_mtorr,
            290.0 * 10f64.powf(0.019 * limit),
            max_relative = 1e-12
        );
        assert!(s.reasoning.iter().any(|r| r.contains("Tang & Pikal")));
        assert!(s.caution.contains("experimental"));
    }

    #[test]
    fn the_suggestion_dries_at_least_as_fast_as_any_pressure_on_a_coarse_sweep() {
        let limit = -30.0;
        let s = suggest(&asking(limit)).unwrap();
        let product = Product::new(&sucrose_5_percent()).unwrap();
        let explorer = Explorer {
            product,
            approach: Approach::Held,
            limit_k: c_to_k(limit),
        };
        for p in (30..=300).step_by(15) {
            if let Some(point) = best_at(&explorer, f64::from(p), DEFAULT_SHELF_RANGE_C) {
                assert!(
                    s.drying_time_h <= point.drying_time_h * 1.001,
                    "{} h at {} mTorr beats the suggestion's {} h",
                    point.drying_time_h,
                    p,
                    s.drying_time_h
                );
            }
        }
        let tp = s.at_tang_pikal_pressure.unwrap();
        assert!(tp.peak_front_temp_c <= limit + 1e-9);
        assert!(s.drying_time_h <= tp.drying_time_h * 1.001);
    }

    #[test]
    fn a_narrow_shelf_range_caps_the_shelf_and_says_so() {
        let mut input = asking(-25.0);
        input.shelf_range_c = Some([-40.0, -20.0]);
        let s = suggest(&input).unwrap();
        assert_relative_eq!(s.shelf_temp_c, -20.0);
        assert!(s.reasoning.iter().any(|r| r.contains("top of its range")));
    }

    #[test]
    fn a_limit_no_setting_can_keep_is_refused_naming_the_limit() {
        // At 30 mTorr ice sublimes only with its front above about −51 °C.
        let err = suggest(&asking(-55.0)).unwrap_err();
        assert_eq!(err.field, "max_product_temp_c");
        assert!(
            err.message.contains("no shelf temperature"),
            "{}",
            err.message
        );
    }

    #[test]
    fn bad_ranges_are_refused_by_name() {
        let base = serde_json::to_value(asking(-30.0)).unwrap();
        let cases = [
            ("shelf_range_c", json!({"shelf_range_c": [10.0, -10.0]})),
            (
                "pressure_range_mtorr[0]",
                json!({"pressure_range_mtorr": [0.0, 100.0]}),
            ),
            (
                "base.resistance.r0_cm2_torr_h_g",
                json!({"base": {"resistance": {"r0_cm2_torr_h_g": -1.0}}}),
            ),
        ];
        for (field, patch) in cases {
            let mut input = base.clone();
            merge(&mut input, &patch);
            let err = calc_suggest_primary_drying(input).unwrap_err();
            assert_eq!(err.field, field, "{patch}: {err}");
        }
    }

    #[test]
    fn a_narrow_pressure_range_without_a_whole_mtorr_is_handled() {
        let mut input = asking(-30.0);
        input.pressure_range_mtorr = Some([80.2, 80.7]);
        let s = suggest(&input).unwrap();
        assert!(
            (80.2..=80.7).contains(&s.chamber_pressure_mtorr),
            "{}",
            s.chamber_pressure_mtorr
        );
    }
}
