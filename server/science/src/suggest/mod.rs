//! A starting point for primary drying: the shelf temperature and chamber pressure that dry
//! the batch's slowest vials soonest while its warmest vials stay at or below the product's
//! limit and the dryer can carry the load, found by searching the model.
//!
//! The pressure follows a stated rule rather than the edge of the range: no lower than the
//! chamber-pressure guidance of Tang & Pikal (2004), Pc ≈ 0.29·10^(0.019·Tp) Torr for the
//! limit Tp, nor than the dryer's lowest controllable pressure; at or above it, the pressure
//! that dries fastest within the dryer's capability. Lower pressures dry a little faster in
//! the model at the same product temperature, but heat vials less evenly across the shelf
//! and leave less margin to choked flow, which a few vial classes and a stated capability
//! only partly capture (common practice, no source). The fastest pressure of the whole
//! range is reported beside the suggestion.

use serde::{Deserialize, Serialize};

use crate::batch::{simulate_batch, BatchSpec};
use crate::design_space::{parallel_map, shelf_temp_c, Approach, BoundaryState, Explorer};
use crate::dryer::Dryer;
use crate::drying::{chamber_pressure_pa, product_limit_k, run, DryingBase, Product};
use crate::error::InputError;
use crate::limit::LimitKind;
use crate::units::{c_to_k, k_to_c};

/// Shelf temperatures searched unless given, °C (common practice, no source).
pub const DEFAULT_SHELF_RANGE_C: [f64; 2] = [-40.0, 40.0];
/// Chamber pressures searched unless given, mTorr (common practice, no source).
pub const DEFAULT_PRESSURE_RANGE_MTORR: [f64; 2] = [30.0, 300.0];
/// Pressures tried across the range.
const COARSE_PRESSURES: usize = 24;
/// How far Kv and Rp are taken off for the sensitivity figures.
pub const SENSITIVITY_SHARE: f64 = 0.10;

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
    /// Collapse (the front is held at the limit, default) or eutectic (the bottom).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit_kind: Option<LimitKind>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shelf_range_c: Option<[f64; 2]>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pressure_range_mtorr: Option<[f64; 2]>,
    /// With `ramp_c_per_min`: the shelf ramps from here (e.g. the freezing temperature).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start_shelf_temp_c: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ramp_c_per_min: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dryer: Option<Dryer>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub vial_count: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub edge_vial_share: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub kv_cv: Option<f64>,
}

/// A shelf temperature and pressure with what the model predicts for the batch there.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OperatingPoint {
    pub shelf_temp_c: f64,
    pub chamber_pressure_mtorr: f64,
    /// The slowest class's drying time, h.
    pub drying_time_h: f64,
    /// The warmest class's peaks.
    pub peak_front_temp_c: f64,
    pub peak_bottom_temp_c: f64,
    /// The warmest class's highest rate per vial, g/h.
    pub peak_sublimation_rate_g_h: f64,
    /// Nominal Kv at this pressure.
    pub kv_w_m2k: f64,
    /// The load's highest total rate, when the vial count is known (or a dryer is given).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub batch_peak_sublimation_kg_h: Option<f64>,
    /// True when the dryer's capability, not the limit, set the shelf temperature.
    pub capability_bound: bool,
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
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub batch_peak_sublimation_kg_h: Option<f64>,
    pub limit_kind: LimitKind,
    /// How far the warmest class's governing peak rises if Kv is 10 % higher, °C.
    pub peak_rise_if_kv_10_percent_high_c: f64,
    /// …and if the dried layer resists 10 % more, °C.
    pub peak_rise_if_rp_10_percent_high_c: f64,
    pub tang_pikal_pressure_mtorr: f64,
    /// The hottest safe shelf temperature at the Tang & Pikal pressure (brought into the
    /// searched range and above the dryer's lowest pressure).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at_tang_pikal_pressure: Option<OperatingPoint>,
    /// The pressure of the whole range that dries fastest, for comparison.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fastest_in_range: Option<OperatingPoint>,
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

/// The searched model: the warmest and slowest classes, the whole batch for its rate.
struct Search {
    warm: Explorer,
    slow: Product,
    nominal: Product,
    spec: BatchSpec,
    dryer: Option<Dryer>,
    /// Vials for the load's rate: given, or the dryer's shelves taken as full.
    vial_count: Option<f64>,
    shelf: [f64; 2],
}

/// The load's highest total rate at `shelf_c` and `pressure`, kg/h.
fn batch_rate(s: &Search, shelf_c: f64, pressure: f64) -> Option<f64> {
    let n = s.vial_count?;
    let c = s.warm.conditions(shelf_c, pressure).for_product(&s.nominal);
    let b = simulate_batch(&s.nominal, &c, &s.spec).ok()?;
    Some(n * b.peak_mean_rate_g_h / 1000.0)
}

/// The hottest shelf temperature at `pressure` keeping the warmest class at or below the
/// limit and the load within the dryer's capability (unrounded), and whether the capability
/// set it.
fn hottest_shelf(s: &Search, pressure: f64) -> Option<(f64, bool)> {
    let b = s.warm.boundary(pressure, s.shelf[0], s.shelf[1]);
    let hottest = match b.state {
        BoundaryState::Crosses | BoundaryState::BelowLimitAcrossRange => b.shelf_temp_c?,
        _ => return None,
    };
    let cap = s.dryer.as_ref().and_then(|d| d.capability_kg_h(pressure));
    let (Some(cap), Some(rate)) = (cap, batch_rate(s, hottest, pressure)) else {
        return Some((hottest, false));
    };
    if rate <= cap {
        return Some((hottest, false));
    }
    let lo = s
        .warm
        .conditions(hottest, pressure)
        .equilibrium_temp_c()
        .max(s.shelf[0])
        + 0.05;
    if lo >= hottest || batch_rate(s, lo, pressure).is_none_or(|r| r > cap) {
        return None;
    }
    let excess = |t: f64| batch_rate(s, t, pressure).map_or(f64::NAN, |r| r - cap);
    let root = crate::roots::brent(excess, lo, hottest, 5e-3).ok()?;
    Some((root.x - 5e-3, true))
}

/// The slowest class's drying time at the hottest allowed shelf: what is minimized.
fn time_at(s: &Search, pressure: f64) -> f64 {
    let Some((shelf, _)) = hottest_shelf(s, pressure) else {
        return f64::INFINITY;
    };
    let c = s.warm.conditions(shelf, pressure).for_product(&s.slow);
    run(&s.slow, &c).map_or(f64::INFINITY, |r| r.drying_time_h)
}

/// The full figures at `pressure`, the shelf rounded down to 0.1 °C.
fn point_at(s: &Search, pressure: f64) -> Option<OperatingPoint> {
    let (hottest, bound) = hottest_shelf(s, pressure)?;
    let mut shelf_c = ((hottest * 10.0 + 1e-9).floor() / 10.0).max(s.shelf[0]);
    for _ in 0..5 {
        let warm = s.warm.run(shelf_c, pressure).ok()?;
        let cap_ok = match (
            s.dryer.as_ref().and_then(|d| d.capability_kg_h(pressure)),
            batch_rate(s, shelf_c, pressure),
        ) {
            (Some(cap), Some(rate)) => rate <= cap,
            _ => true,
        };
        if c_to_k(s.warm.peak_c(&warm)) <= s.warm.limit_k + 1e-9 && cap_ok {
            let c = s.warm.conditions(shelf_c, pressure);
            let slow = run(&s.slow, &c.for_product(&s.slow)).ok()?;
            return Some(OperatingPoint {
                shelf_temp_c: shelf_c,
                chamber_pressure_mtorr: pressure,
                drying_time_h: slow.drying_time_h,
                peak_front_temp_c: warm.peak_front_temp_c,
                peak_bottom_temp_c: warm.peak_bottom_temp_c,
                peak_sublimation_rate_g_h: warm.peak_sublimation_rate_g_h,
                kv_w_m2k: c.for_product(&s.nominal).kv_w_m2k(),
                batch_peak_sublimation_kg_h: batch_rate(s, shelf_c, pressure),
                capability_bound: bound,
            });
        }
        shelf_c -= 0.1;
    }
    None
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

/// How far the warmest class's governing peak rises at `p` with Kv × 1.1 and Rp × 1.1, °C.
fn sensitivity(s: &Search, p: &OperatingPoint) -> (f64, f64) {
    let peak = |kv: f64, rp: f64| {
        let product = s.warm.product.with_factors(kv, rp);
        let c = s
            .warm
            .conditions(p.shelf_temp_c, p.chamber_pressure_mtorr)
            .for_product(&product);
        run(&product, &c).map_or(f64::NAN, |r| s.warm.peak_c(&r))
    };
    let base = peak(1.0, 1.0);
    (
        peak(1.0 + SENSITIVITY_SHARE, 1.0) - base,
        peak(1.0, 1.0 + SENSITIVITY_SHARE) - base,
    )
}

/// Search the model for the batch's primary drying by the rule in the module docs. When no
/// setting in range keeps the warmest vials at the limit, the error names
/// `max_product_temp_c`.
pub fn suggest(input: &SuggestInput) -> Result<Suggestion, InputError> {
    let nominal = Product::new(&input.base).map_err(|e| e.within("base."))?;
    let limit_k = product_limit_k("max_product_temp_c", input.max_product_temp_c)?;
    let shelf = range(
        "shelf_range_c",
        input.shelf_range_c,
        DEFAULT_SHELF_RANGE_C,
        shelf_temp_c,
    )?;
    let mut pressure = range(
        "pressure_range_mtorr",
        input.pressure_range_mtorr,
        DEFAULT_PRESSURE_RANGE_MTORR,
        |f, v| chamber_pressure_pa(f, v).map(|_| v),
    )?;
    if let Some(d) = &input.dryer {
        d.validate("dryer.")?;
        if let Some(min) = d.min_pressure_mtorr {
            if min >= pressure[1] {
                return Err(InputError::new(
                    "pressure_range_mtorr",
                    format!("the dryer controls only from {min} mTorr, above the whole range"),
                ));
            }
            pressure[0] = pressure[0].max(min);
        }
    }
    let spec = BatchSpec::new(
        input.dryer.as_ref().and_then(|d| d.edge_heat_factor),
        input.edge_vial_share,
        input.kv_cv,
        input.vial_count,
    )?;
    let approach = Approach::from_fields(input.start_shelf_temp_c, input.ramp_c_per_min)?;
    let kind = input.limit_kind.unwrap_or_default();
    let vial_count = spec.vial_count.or_else(|| {
        input
            .dryer
            .as_ref()
            .map(|d| d.full_load_vials(nominal.outer_area_cm2()))
    });
    let search = Search {
        warm: Explorer {
            product: nominal.with_factors(spec.warmest_kv_factor(), 1.0),
            approach,
            limit_k,
            use_bottom: kind == LimitKind::Eutectic,
        },
        slow: nominal.with_factors(spec.slowest_kv_factor(), 1.0),
        nominal,
        spec,
        dryer: input.dryer.clone(),
        vial_count,
        shelf,
    };
    let limit_c = k_to_c(limit_k);
    let tang_pikal_mtorr = tang_pikal_pressure_torr(limit_c) * 1000.0;
    let guided = round_within(tang_pikal_mtorr, pressure);

    let ratio = (pressure[1] / pressure[0]).powf(1.0 / (COARSE_PRESSURES - 1) as f64);
    let mut candidates: Vec<f64> = (0..COARSE_PRESSURES)
        .map(|i| (pressure[0] * ratio.powi(i as i32)).min(pressure[1]))
        .collect();
    candidates.push(guided);
    candidates.sort_by(f64::total_cmp);
    candidates.dedup();
    let times = parallel_map(&candidates, |&p| time_at(&search, p));
    let fastest_of = |keep: &dyn Fn(f64) -> bool| {
        candidates
            .iter()
            .zip(&times)
            .filter(|(p, t)| keep(**p) && t.is_finite())
            .min_by(|a, b| a.1.total_cmp(b.1))
            .map(|(p, _)| *p)
    };
    // The rule: at or above the guidance, the fastest; else the highest feasible below.
    let chosen = fastest_of(&|p| p >= guided - 1e-9).or_else(|| {
        candidates
            .iter()
            .zip(&times)
            .filter(|(_, t)| t.is_finite())
            .map(|(p, _)| *p)
            .fold(None, |acc: Option<f64>, p| {
                Some(acc.map_or(p, |a| a.max(p)))
            })
    });
    let Some(chosen) = chosen else {
        let coldest_front = search
            .warm
            .conditions(shelf[0], pressure[0])
            .equilibrium_temp_c();
        return Err(InputError::new(
            "max_product_temp_c",
            format!(
                "no shelf temperature from {} to {} °C at {} to {} mTorr keeps the warmest \
                 vials at or below {limit_c:.1} °C (at {} mTorr ice sublimes only with its \
                 front above {coldest_front:.1} °C); check the limit, the ranges and the \
                 resistance",
                shelf[0], shelf[1], pressure[0], pressure[1], pressure[0]
            ),
        ));
    };
    let best = point_at(&search, round_within(chosen, pressure))
        .or_else(|| point_at(&search, chosen))
        .ok_or_else(|| {
            InputError::new(
                "max_product_temp_c",
                "no set point in range keeps the warmest vials at the limit",
            )
        })?;
    let fastest = fastest_of(&|_| true).and_then(|p| point_at(&search, p));
    let at_tang_pikal = point_at(&search, guided);
    let (kv_rise, rp_rise) = sensitivity(&search, &best);
    let reasoning = reasons::reasons(&reasons::Facts {
        best: &best,
        limit_c,
        kind,
        spec: &search.spec,
        shelf,
        pressure,
        tang_pikal_mtorr,
        at_tang_pikal: at_tang_pikal.as_ref(),
        fastest: fastest.as_ref(),
        kv_rise,
        rp_rise,
        has_capability: search
            .dryer
            .as_ref()
            .is_some_and(|d| d.capability.is_some()),
    });
    Ok(Suggestion {
        shelf_temp_c: best.shelf_temp_c,
        chamber_pressure_mtorr: best.chamber_pressure_mtorr,
        drying_time_h: best.drying_time_h,
        peak_front_temp_c: best.peak_front_temp_c,
        peak_bottom_temp_c: best.peak_bottom_temp_c,
        peak_sublimation_rate_g_h: best.peak_sublimation_rate_g_h,
        kv_w_m2k: best.kv_w_m2k,
        batch_peak_sublimation_kg_h: best.batch_peak_sublimation_kg_h,
        limit_kind: kind,
        peak_rise_if_kv_10_percent_high_c: kv_rise,
        peak_rise_if_rp_10_percent_high_c: rp_rise,
        tang_pikal_pressure_mtorr: tang_pikal_mtorr,
        at_tang_pikal_pressure: at_tang_pikal,
        fastest_in_range: fastest,
        shelf_range_c: shelf,
        pressure_range_mtorr: pressure,
        reasoning,
        caution: CAUTION.to_string(),
    })
}

mod reasons;

/// `suggest-primary-drying` topic.
pub fn calc_suggest_primary_drying(
    input: serde_json::Value,
) -> Result<serde_json::Value, InputError> {
    let input: SuggestInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&suggest(&input)?)
}

#[cfg(test)]
mod tests;
