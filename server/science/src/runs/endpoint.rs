//! The end of primary drying read from the run.
//!
//! Comparative pressure (Patel, Doen & Pikal 2010, AAPS PharmSciTech 11:73, from memory):
//! a nitrogen-calibrated Pirani reads above the capacitance manometer while water vapour
//! fills the chamber ([`crate::gauge`]) and falls to it as the last ice goes. The fall is
//! read like a step in thermal analysis: the tangent at its steepest part meets the
//! Pirani's plateau before the fall (onset) and the manometer's level after it (end); the
//! midpoint is where the Pirani has made half of the fall.
//!
//! Probe arrival: a product probe rises to the shelf temperature when the ice around it is
//! gone (common practice, no source).

use serde::{Deserialize, Serialize};

use super::series::{ProbePosition, RunSeries};
use super::{check_len, check_time_axis};
use crate::error::{finite, InputError};

/// The Pirani must come down to within this share of the manometer for a fall to count
/// (common practice, no source).
pub const MEETS_MANOMETER_SHARE: f64 = 0.05;
/// The fall stretches as far either side of its steepest part as the Pirani keeps falling
/// at least this share of the steepest rate (common practice, no source).
const FALL_SLOPE_SHARE: f64 = 0.1;

const METHOD: &str = "comparative pressure: tangent at the steepest fall of the Pirani \
    against its plateau before and the manometer's level after; midpoint at half the fall";

const CAUTION: &str = "An end of primary drying read from the gauges; it supports qualified \
    judgement. The gauges see the whole load: the end is when most vials are dry, and the \
    last vials may dry later. Keep a margin before ramping to secondary drying.";

/// Onset, midpoint and end of the Pirani's fall to the manometer, h.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PressureEndPoint {
    pub onset_h: f64,
    pub midpoint_h: f64,
    pub end_h: f64,
    pub method: String,
    /// The Pirani's level before the fall and the manometer's after it, mTorr.
    pub pirani_plateau_mtorr: f64,
    pub manometer_level_mtorr: f64,
    pub caution: String,
}

fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let mid = values.len() / 2;
    Some(if values.len() % 2 == 1 {
        values[mid]
    } else {
        0.5 * (values[mid - 1] + values[mid])
    })
}

/// Onset, midpoint and end of primary drying from the Pirani against the manometer (module
/// docs). Rows where either gauge has no reading (NaN) are skipped, and so are the rows
/// before the manometer first reads a vacuum (the pump-down from atmosphere is not the
/// fall this reads).
pub fn comparative_pressure(
    time_h: &[f64],
    pirani_mtorr: &[f64],
    manometer_mtorr: &[f64],
) -> Result<PressureEndPoint, InputError> {
    check_time_axis("time_h", time_h, 3)?;
    check_len("pirani_mtorr", pirani_mtorr, time_h.len(), "time_h")?;
    check_len("manometer_mtorr", manometer_mtorr, time_h.len(), "time_h")?;
    let mut rows = Vec::with_capacity(time_h.len());
    for (i, ((&t, &pirani), &manometer)) in time_h
        .iter()
        .zip(pirani_mtorr)
        .zip(manometer_mtorr)
        .enumerate()
    {
        if pirani.is_nan() || manometer.is_nan() {
            continue;
        }
        let pirani = finite(&format!("pirani_mtorr[{i}]"), pirani)?;
        let manometer = finite(&format!("manometer_mtorr[{i}]"), manometer)?;
        if pirani <= 0.0 || manometer <= 0.0 {
            let field = if pirani <= 0.0 {
                "pirani_mtorr"
            } else {
                "manometer_mtorr"
            };
            return Err(InputError::new(
                format!("{field}[{i}]"),
                "a pressure reading must be greater than zero",
            ));
        }
        if rows.is_empty() && manometer >= super::phases::VACUUM_MTORR {
            continue;
        }
        rows.push((t, pirani, manometer));
    }
    if rows.len() < 3 {
        return Err(InputError::new(
            "pirani_mtorr",
            "needs at least three rows where both gauges have a reading",
        ));
    }
    let closest = rows
        .iter()
        .map(|(_, p, m)| (p - m) / m)
        .fold(f64::INFINITY, f64::min);
    if closest > MEETS_MANOMETER_SHARE {
        return Err(InputError::new(
            "pirani_mtorr",
            format!(
                "never comes down to within {:.0} % of the manometer (closest {:.0} % above): \
                 primary drying has not ended in this trace",
                MEETS_MANOMETER_SHARE * 100.0,
                closest * 100.0
            ),
        ));
    }
    // The steepest fall between consecutive rows.
    let slope = |i: usize| {
        let (a, b) = (rows[i], rows[i + 1]);
        let dt = b.0 - a.0;
        if dt > 0.0 {
            (b.1 - a.1) / dt
        } else {
            0.0
        }
    };
    let segments = rows.len() - 1;
    let steepest = (0..segments)
        .min_by(|&a, &b| slope(a).total_cmp(&slope(b)))
        .unwrap_or(0);
    let s = slope(steepest);
    if s >= 0.0 {
        return Err(InputError::new("pirani_mtorr", "never falls in this trace"));
    }
    let mut first = steepest;
    while first > 0 && slope(first - 1) <= FALL_SLOPE_SHARE * s {
        first -= 1;
    }
    let mut last = steepest;
    while last + 1 < segments && slope(last + 1) <= FALL_SLOPE_SHARE * s {
        last += 1;
    }
    // Plateau: the Pirani up to the fall's start; level: the manometer from its end on.
    let mut before: Vec<f64> = rows[..=first].iter().map(|r| r.1).collect();
    let mut after: Vec<f64> = rows[last + 1..].iter().map(|r| r.2).collect();
    let (Some(plateau), Some(level)) = (median(&mut before), median(&mut after)) else {
        return Err(InputError::new(
            "pirani_mtorr",
            "has no plateau before its fall",
        ));
    };
    if plateau <= level * (1.0 + MEETS_MANOMETER_SHARE) {
        return Err(InputError::new(
            "pirani_mtorr",
            format!(
                "shows no fall to the manometer: its level before the steepest fall \
                 ({plateau:.1} mTorr) is within {:.0} % of the manometer after it ({level:.1} mTorr)",
                MEETS_MANOMETER_SHARE * 100.0
            ),
        ));
    }
    let (t0, p0) = (rows[steepest].0, rows[steepest].1);
    let tangent_time = |p: f64| t0 + (p - p0) / s;
    let half = 0.5 * (plateau + level);
    let midpoint = (first..=last)
        .find_map(|i| {
            let (a, b) = (rows[i], rows[i + 1]);
            (a.1 >= half && b.1 < half && b.0 > a.0)
                .then(|| a.0 + (a.1 - half) / (a.1 - b.1) * (b.0 - a.0))
        })
        .unwrap_or_else(|| tangent_time(half));
    Ok(PressureEndPoint {
        onset_h: tangent_time(plateau),
        midpoint_h: midpoint,
        end_h: tangent_time(level),
        method: METHOD.to_string(),
        pirani_plateau_mtorr: plateau,
        manometer_level_mtorr: level,
        caution: CAUTION.to_string(),
    })
}

/// When a probe reached the shelf; `None` when it had not by the end of the series.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProbeArrival {
    pub label: String,
    pub position: ProbePosition,
    pub time_h: Option<f64>,
}

/// For each probe, the time after `after_h` from which it stays within `tolerance_c` below
/// the shelf (or above it) to its last reading, interpolated between the last reading
/// outside and the next. Missing readings are skipped; a probe whose last reading is still
/// outside has not arrived. During a shelf ramp a probe trails the shelf, so pass the series
/// up to the end of primary drying ([`RunSeries::between`]).
pub fn probe_arrivals(series: &RunSeries, after_h: f64, tolerance_c: f64) -> Vec<ProbeArrival> {
    series
        .probes
        .iter()
        .map(|probe| {
            let gaps: Vec<(f64, f64)> = series
                .time_h
                .iter()
                .zip(&series.shelf_c)
                .zip(&probe.temp_c)
                .filter(|((t, _), p)| **t >= after_h && p.is_finite())
                .map(|((t, s), p)| (*t, s - p))
                .collect();
            let time_h = arrival(&gaps, tolerance_c);
            ProbeArrival {
                label: probe.label.clone(),
                position: probe.position,
                time_h,
            }
        })
        .collect()
}

/// The first time after which every gap (shelf − probe) stays at or below `tolerance`.
fn arrival(gaps: &[(f64, f64)], tolerance: f64) -> Option<f64> {
    let (last_t, last_gap) = *gaps.last()?;
    if last_gap > tolerance {
        return None;
    }
    match gaps.iter().rposition(|&(_, g)| g > tolerance) {
        None => gaps.first().map(|g| g.0),
        Some(i) => {
            let ((ta, ga), (tb, gb)) = (gaps[i], *gaps.get(i + 1).unwrap_or(&(last_t, last_gap)));
            Some(ta + (ga - tolerance) / (ga - gb) * (tb - ta))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn a_probe_arrives_where_its_gap_crosses_the_tolerance() {
        // Gap 10, 6, 2, 1 K: crosses 4 K halfway between 1 h and 2 h.
        let gaps = [(0.0, 10.0), (1.0, 6.0), (2.0, 2.0), (3.0, 1.0)];
        assert_relative_eq!(arrival(&gaps, 4.0).unwrap(), 1.5, max_relative = 1e-12);
        assert_eq!(arrival(&gaps[..2], 4.0), None);
        assert_relative_eq!(arrival(&gaps[2..], 4.0).unwrap(), 2.0);
    }

    #[test]
    fn lengths_that_differ_name_the_gauge() {
        let err = comparative_pressure(&[0.0, 1.0, 2.0], &[150.0, 140.0, 100.0], &[100.0; 2])
            .unwrap_err();
        assert_eq!(err.field, "manometer_mtorr");
    }
}
