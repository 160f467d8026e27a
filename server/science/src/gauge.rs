//! What a Pirani (thermal-conductivity) gauge shows beside a capacitance manometer during
//! primary drying, and the end of primary drying read from the two.
//!
//! A capacitance manometer measures the true total pressure whatever the gas. A Pirani
//! gauge measures how well the gas carries heat away from a hot wire and turns that into a
//! pressure with a calibration for one gas, here nitrogen. Water vapour carries heat better
//! than nitrogen, so while ice sublimes and water fills the chamber the Pirani reads above
//! the manometer; when the last ice goes and the gas is mostly nitrogen again, the two
//! converge. The moment they meet is a common way to call the end of primary drying.
//!
//! Assumptions of this model, each a simplification:
//!
//! - The Pirani reading is linear in the water mole fraction y, between the true pressure
//!   (pure nitrogen) and [`PIRANI_WATER_FACTOR`] × the true pressure (pure water vapour).
//!   Real gauges are not exactly linear in composition, and the factor drifts with
//!   pressure; within the tens to a few hundred mTorr of primary drying it is roughly
//!   constant (common practice, from memory).
//! - The manometer holds the set chamber pressure throughout (pressure control on the
//!   manometer, as is usual).
//! - The chamber gas is water vapour from the vials and nitrogen bled in to control the
//!   pressure, and its composition is the ratio of the two inflows in moles, as though
//!   both left the chamber alike (a stand-in for the real flows to condenser and pump).
//! - The nitrogen bleed is constant and sized so that y equals `water_fraction_at_peak`
//!   (0.95 by default) at the load's peak sublimation rate (an assumption; common practice,
//!   no source). The load's rate is that of one average vial of the batch
//!   ([`crate::batch`]); the vial count cancels.
//! - The load finishes class by class: as each class of vials runs out of ice the water
//!   share falls, so the Pirani falls from the first vials' end to the last's and meets
//!   the manometer when the slowest class is dry. Nothing is added after the model's end.
//! - Between the points of a trace the readings are taken as varying linearly (a chart's
//!   straight lines).

use serde::{Deserialize, Serialize};

use crate::batch::BatchResult;
use crate::error::{finite, positive, InputError};

/// Pirani reading in pure water vapour over the true pressure, for a gauge calibrated for
/// nitrogen (common practice, from memory: about 1.6).
pub const PIRANI_WATER_FACTOR: f64 = 1.6;

/// Water mole fraction in the chamber at the peak sublimation rate when none is given
/// (an assumption; common practice, no source).
pub const DEFAULT_WATER_FRACTION_AT_PEAK: f64 = 0.95;

/// Default agreement between the gauges, as a share of the manometer reading, taken as the
/// end of primary drying (common practice, no source).
pub const DEFAULT_TOLERANCE_SHARE: f64 = 0.02;

const CAUTION: &str = "An end of primary drying read from a model of the batch's vial \
    classes, to support qualified judgement; the real spread of a load is wider than a few \
    classes, and the end must be confirmed on the dryer.";

/// The caution that goes with every end-of-drying estimate.
pub fn caution() -> &'static str {
    CAUTION
}

/// One moment of the two gauges, mTorr.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PiraniPoint {
    pub time_h: f64,
    pub manometer_mtorr: f64,
    pub pirani_mtorr: f64,
}

/// What a nitrogen-calibrated Pirani gauge shows when the manometer reads
/// `manometer_mtorr` and water makes up `water_mole_fraction` of the gas:
/// P × (1 + (factor − 1)·y).
pub fn pirani_reading_mtorr(
    manometer_mtorr: f64,
    water_mole_fraction: f64,
) -> Result<f64, InputError> {
    let p = positive("manometer_mtorr", manometer_mtorr)?;
    let y = mole_fraction("water_mole_fraction", water_mole_fraction)?;
    Ok(reading(p, y))
}

/// The two gauges through the simulated primary drying of a batch at
/// `chamber_pressure_mtorr` (the pressure it was run at), one point per moment of the
/// load's rate, ending when the last class runs out of ice.
pub fn pirani_trace(
    batch: &BatchResult,
    chamber_pressure_mtorr: f64,
    water_fraction_at_peak: f64,
) -> Result<Vec<PiraniPoint>, InputError> {
    let p = positive("chamber_pressure_mtorr", chamber_pressure_mtorr)?;
    let y_peak = mole_fraction("water_fraction_at_peak", water_fraction_at_peak)?;
    if y_peak <= 0.0 {
        return Err(InputError::new(
            "water_fraction_at_peak",
            "must be greater than zero: water fills the chamber while ice sublimes",
        ));
    }
    let peak_rate = positive("peak_mean_rate_g_h", batch.peak_mean_rate_g_h)?;
    if batch.rate.is_empty() {
        return Err(InputError::new("rate", "has no points to follow"));
    }
    // The bleed in moles per hour, written as the grams of water with as many moles:
    // the molar mass of water then cancels from y.
    let bleed_g_h = peak_rate * (1.0 - y_peak) / y_peak;
    let mut trace = Vec::with_capacity(batch.rate.len());
    for (i, point) in batch.rate.iter().enumerate() {
        let field = format!("rate[{i}].mean_rate_g_h");
        let rate = finite(&field, point.mean_rate_g_h)?;
        if rate < 0.0 {
            return Err(InputError::new(
                field,
                format!("must not be negative (got {rate})"),
            ));
        }
        let y = if rate > 0.0 {
            rate / (rate + bleed_g_h)
        } else {
            0.0
        };
        trace.push(PiraniPoint {
            time_h: finite(&format!("rate[{i}].time_h"), point.time_h)?,
            manometer_mtorr: p,
            pirani_mtorr: reading(p, y),
        });
    }
    Ok(trace)
}

/// The first time after which the Pirani stays within `tolerance_share` of the manometer
/// to the end of `trace`, h; `None` when it has not settled by the last point. The crossing
/// is interpolated between the last point outside the tolerance and the next.
pub fn end_of_primary_drying_h(
    trace: &[PiraniPoint],
    tolerance_share: f64,
) -> Result<Option<f64>, InputError> {
    let tol = positive("tolerance_share", tolerance_share)?;
    if tol >= 1.0 {
        return Err(InputError::new(
            "tolerance_share",
            format!("is a share of the manometer reading, below 1 (got {tol})"),
        ));
    }
    let mut gaps = Vec::with_capacity(trace.len());
    for (i, point) in trace.iter().enumerate() {
        let p = positive(
            &format!("trace[{i}].manometer_mtorr"),
            point.manometer_mtorr,
        )?;
        let pirani = finite(&format!("trace[{i}].pirani_mtorr"), point.pirani_mtorr)?;
        finite(&format!("trace[{i}].time_h"), point.time_h)?;
        gaps.push((pirani - p).abs() / p);
    }
    let Some(first) = trace.first() else {
        return Ok(None);
    };
    let Some(last_outside) = gaps.iter().rposition(|&g| g > tol) else {
        return Ok(Some(first.time_h));
    };
    if last_outside + 1 == trace.len() {
        return Ok(None);
    }
    let (a, b) = (&trace[last_outside], &trace[last_outside + 1]);
    let (ga, gb) = (gaps[last_outside], gaps[last_outside + 1]);
    // ga > tol ≥ gb, so the gap falls across the tolerance in this interval.
    Ok(Some(
        a.time_h + (ga - tol) / (ga - gb) * (b.time_h - a.time_h),
    ))
}

fn reading(manometer_mtorr: f64, water_mole_fraction: f64) -> f64 {
    manometer_mtorr * (1.0 + (PIRANI_WATER_FACTOR - 1.0) * water_mole_fraction)
}

fn mole_fraction(field: &str, value: f64) -> Result<f64, InputError> {
    let y = finite(field, value)?;
    if (0.0..=1.0).contains(&y) {
        Ok(y)
    } else {
        Err(InputError::new(
            field,
            format!("is a mole fraction between 0 and 1 (got {y})"),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::batch::{simulate_batch, BatchSpec};
    use crate::drying::{prepare, DryingBase, PrimaryDryingInput, Resistance, Vial};
    use approx::assert_relative_eq;

    const PRESSURE_MTORR: f64 = 100.0;

    /// 5 % sucrose, 2 mL in a 6R tubing vial, −25 °C shelf at 100 mTorr. The vial and
    /// resistance figures are typical values (from memory), not from one source.
    // The inner area 3.14 cm² is a vial's measured figure that happens to be near π.
    #[allow(clippy::approx_constant)]
    fn sucrose_in_6r_vial() -> BatchResult {
        let base = DryingBase {
            fill_volume_ml: 2.0,
            solids_mass_fraction: 0.05,
            solution_density_g_ml: None,
            unfrozen_water_g_per_g_solids: None,
            vial: Vial {
                inner_area_cm2: 3.14,
                outer_area_cm2: 3.80,
                kc_cal_s_cm2_k: 2.6e-4,
                kp_cal_s_cm2_k_torr: 1.8e-3,
                kd_per_torr: 1.5,
            },
            resistance: Resistance {
                r0_cm2_torr_h_g: 1.4,
                a1_cm_torr_h_g: 16.0,
                a2_per_cm: 0.0,
            },
            ice_density_g_cm3: None,
            ice_conductivity_w_mk: None,
            sublimation_enthalpy_j_g: None,
        };
        let input = PrimaryDryingInput::constant(&base, -25.0, PRESSURE_MTORR);
        let (product, conditions) = prepare(&input).unwrap();
        // Edge factor 1.3 (lab dryers 1.1–1.5: Rambhatla & Pikal 2003, from memory) and the
        // default 5 % Kv spread (common practice, no source).
        let spec = BatchSpec::new(Some(1.3), Some(0.1), None, Some(500.0)).unwrap();
        simulate_batch(&product, &conditions, &spec).unwrap()
    }

    fn trace_of(result: &BatchResult) -> Vec<PiraniPoint> {
        pirani_trace(result, PRESSURE_MTORR, DEFAULT_WATER_FRACTION_AT_PEAK).unwrap()
    }

    fn point(time_h: f64, pirani_mtorr: f64) -> PiraniPoint {
        PiraniPoint {
            time_h,
            manometer_mtorr: 100.0,
            pirani_mtorr,
        }
    }

    #[test]
    fn in_pure_water_vapour_the_pirani_reads_1_6_times_the_true_pressure() {
        // Common practice, from memory: a nitrogen-calibrated Pirani reads about 1.6 × the
        // true pressure in water vapour.
        assert_relative_eq!(pirani_reading_mtorr(100.0, 1.0).unwrap(), 160.0);
        assert_relative_eq!(pirani_reading_mtorr(65.0, 1.0).unwrap(), 104.0);
    }

    #[test]
    fn in_pure_nitrogen_the_pirani_reads_the_true_pressure() {
        // By the gauge's nitrogen calibration (common practice, no source).
        assert_relative_eq!(pirani_reading_mtorr(100.0, 0.0).unwrap(), 100.0);
    }

    #[test]
    fn the_reading_rises_steadily_with_the_water_share() {
        let readings: Vec<f64> = (0..=100)
            .map(|i| pirani_reading_mtorr(100.0, f64::from(i) / 100.0).unwrap())
            .collect();
        assert!(readings.windows(2).all(|w| w[1] > w[0]));
    }

    #[test]
    fn the_pirani_reads_above_the_manometer_while_ice_sublimes() {
        // Common practice, no source: water vapour lifts the Pirani above the manometer.
        let batch = sucrose_in_6r_vial();
        let trace = trace_of(&batch);
        assert_eq!(trace.len(), batch.rate.len());
        for (p, r) in trace.iter().zip(&batch.rate) {
            assert_relative_eq!(p.manometer_mtorr, PRESSURE_MTORR);
            if r.mean_rate_g_h > 0.0 {
                assert!(p.pirani_mtorr > p.manometer_mtorr, "{p:?}");
            }
        }
    }

    #[test]
    fn at_the_peak_rate_the_water_share_is_the_one_stated() {
        // The bleed is sized for y = 0.95 at the load's peak rate (assumption, no source).
        let highest = trace_of(&sucrose_in_6r_vial())
            .iter()
            .map(|p| p.pirani_mtorr)
            .fold(f64::MIN, f64::max);
        assert_relative_eq!(
            highest,
            PRESSURE_MTORR * (1.0 + 0.6 * 0.95),
            max_relative = 1e-9
        );
    }

    #[test]
    fn the_pirani_falls_from_the_first_vials_end_to_the_last() {
        // Patel, Doen & Pikal (2010), from memory: the comparative-pressure signal falls
        // over a span (onset to offset) as the load finishes, not at one instant.
        let batch = sucrose_in_6r_vial();
        let trace = trace_of(&batch);
        let at = |t: f64| trace.iter().rfind(|p| p.time_h <= t).unwrap().pirani_mtorr;
        let (first, last) = (batch.first_dry_h, batch.last_dry_h);
        assert!(last > first);
        let mid = 0.5 * (first + last);
        assert!(
            at(mid) < at(first * 0.999),
            "falls after the first vials finish"
        );
        assert!(
            at(mid) > PRESSURE_MTORR * 1.02,
            "not yet met before the last vials"
        );
        let end = trace.last().unwrap();
        assert_relative_eq!(end.time_h, last);
        assert_relative_eq!(end.pirani_mtorr, end.manometer_mtorr);
    }

    #[test]
    fn the_readings_meet_when_the_slowest_class_runs_out_of_ice() {
        // The model's own end: the gauges agree once the slowest class is dry (the
        // comparative-pressure end point, Patel, Doen & Pikal 2010, from memory).
        let batch = sucrose_in_6r_vial();
        let end = end_of_primary_drying_h(&trace_of(&batch), DEFAULT_TOLERANCE_SHARE)
            .unwrap()
            .unwrap();
        let slowest = batch.slowest().unwrap().drying_time_h;
        assert_relative_eq!(end, slowest, max_relative = 1e-9);
        assert!(end > batch.first_dry_h * 1.01);
    }

    #[test]
    fn agreement_before_sublimation_starts_is_not_taken_as_the_end() {
        let trace = [
            point(0.0, 100.0),
            point(1.0, 150.0),
            point(2.0, 150.0),
            point(3.0, 100.0),
        ];
        // The 50 % gap falls to 2 % at 2 + 0.48 / 0.5 h.
        let end = end_of_primary_drying_h(&trace, 0.02).unwrap().unwrap();
        assert_relative_eq!(end, 2.96, max_relative = 1e-12);
    }

    #[test]
    fn a_trace_that_never_settles_has_no_end() {
        let trace = [point(0.0, 150.0), point(1.0, 140.0)];
        assert_eq!(end_of_primary_drying_h(&trace, 0.02).unwrap(), None);
        assert_eq!(end_of_primary_drying_h(&[], 0.02).unwrap(), None);
    }

    #[test]
    fn a_trace_within_tolerance_throughout_ends_at_its_start() {
        let trace = [point(0.5, 101.0), point(1.0, 100.0)];
        assert_eq!(end_of_primary_drying_h(&trace, 0.02).unwrap(), Some(0.5));
    }

    #[test]
    fn bad_inputs_are_refused_naming_the_field() {
        for (p, y, field) in [
            (0.0, 0.5, "manometer_mtorr"),
            (-10.0, 0.5, "manometer_mtorr"),
            (f64::NAN, 0.5, "manometer_mtorr"),
            (100.0, -0.1, "water_mole_fraction"),
            (100.0, 1.1, "water_mole_fraction"),
            (100.0, f64::INFINITY, "water_mole_fraction"),
        ] {
            assert_eq!(pirani_reading_mtorr(p, y).unwrap_err().field, field);
        }
        let result = sucrose_in_6r_vial();
        for (p, y, field) in [
            (0.0, 0.95, "chamber_pressure_mtorr"),
            (f64::NAN, 0.95, "chamber_pressure_mtorr"),
            (100.0, 0.0, "water_fraction_at_peak"),
            (100.0, 1.5, "water_fraction_at_peak"),
        ] {
            assert_eq!(pirani_trace(&result, p, y).unwrap_err().field, field);
        }
        let mut empty = result.clone();
        empty.rate.clear();
        assert_eq!(pirani_trace(&empty, 100.0, 0.95).unwrap_err().field, "rate");
        let trace = trace_of(&result);
        for tol in [0.0, -0.02, 1.0, f64::NAN] {
            assert_eq!(
                end_of_primary_drying_h(&trace, tol).unwrap_err().field,
                "tolerance_share"
            );
        }
        let bad = [
            point(0.0, 100.0),
            PiraniPoint {
                manometer_mtorr: 0.0,
                ..point(1.0, 100.0)
            },
        ];
        assert_eq!(
            end_of_primary_drying_h(&bad, 0.02).unwrap_err().field,
            "trace[1].manometer_mtorr"
        );
    }

    #[test]
    fn without_a_bleed_the_chamber_is_all_water_while_ice_sublimes() {
        let result = sucrose_in_6r_vial();
        let trace = pirani_trace(&result, PRESSURE_MTORR, 1.0).unwrap();
        for (p, r) in trace.iter().zip(&result.rate) {
            if r.mean_rate_g_h > 0.0 {
                assert_relative_eq!(p.pirani_mtorr, 160.0);
            }
        }
        assert!(caution().contains("confirmed"));
    }
}
