//! The phases of a run found in its shelf temperature and chamber pressure.
//!
//! The thresholds are common practice, no source:
//!
//! - **Freezing** lasts until the vacuum is pulled: the first reading of the chamber
//!   pressure (manometer, else Pirani) below [`VACUUM_MTORR`]. Without a pressure series,
//!   freezing ends when the shelf leaves its coldest level for the last time (the last
//!   reading within [`NEAR_MINIMUM_C`] of its minimum), provided the shelf went below
//!   [`FROZEN_SHELF_C`].
//! - **Annealing** is a hold inside freezing: once the shelf has been at or below
//!   [`FROZEN_SHELF_C`], it rises at least [`ANNEAL_RISE_C`] above the coldest level before, holds below 0 °C for at least
//!   [`ANNEAL_MIN_HOLD_H`] within [`NEAR_MINIMUM_C`] of its warmest, and is cooled again
//!   before the vacuum. It runs from leaving the cold level to the start of the re-cool.
//! - **Primary drying** runs from the vacuum to `primary_end_h` when given, else to the
//!   start of the shelf's final ramp to its secondary hold (its warmest level after the
//!   vacuum, when that is at least [`SECONDARY_RISE_C`] above the shelf at the vacuum and
//!   above 0 °C).
//! - **Secondary drying** runs from there to the end of the series.

use serde::{Deserialize, Serialize};

use super::series::RunSeries;

/// The chamber counts as evacuated below this pressure, mTorr (1 Torr).
pub const VACUUM_MTORR: f64 = 1000.0;
/// A shelf this cold or colder has frozen the product, °C.
pub const FROZEN_SHELF_C: f64 = -30.0;
/// Readings within this of a level count as at that level, °C.
pub const NEAR_MINIMUM_C: f64 = 1.0;
/// An annealing hold sits at least this far above the freezing level, °C.
pub const ANNEAL_RISE_C: f64 = 10.0;
/// Shortest annealing hold, h.
pub const ANNEAL_MIN_HOLD_H: f64 = 0.5;
/// The secondary hold sits at least this far above the shelf at the start of primary, °C.
pub const SECONDARY_RISE_C: f64 = 10.0;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum PhaseKind {
    Freezing,
    Annealing,
    Primary,
    Secondary,
}

impl PhaseKind {
    pub fn label(self) -> &'static str {
        match self {
            Self::Freezing => "freezing",
            Self::Annealing => "annealing",
            Self::Primary => "primary drying",
            Self::Secondary => "secondary drying",
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Phase {
    pub kind: PhaseKind,
    pub start_h: f64,
    pub end_h: f64,
}

/// The phases of `series` in time order (module docs for the rules). A series that shows
/// no freezing (no vacuum, and a shelf never below [`FROZEN_SHELF_C`]) gives no phases;
/// an invalid series gives none either.
pub fn find_phases(series: &RunSeries, primary_end_h: Option<f64>) -> Vec<Phase> {
    if series.validate().is_err() {
        return Vec::new();
    }
    let t = &series.time_h;
    let shelf = &series.shelf_c;
    let n = t.len();
    let (start_h, end_h) = (t[0], t[n - 1]);
    let vacuum = match series.chamber_pressure_mtorr() {
        Some(p) => p.iter().position(|&v| v < VACUUM_MTORR),
        None => last_at_minimum(shelf),
    };
    let Some(vacuum) = vacuum else {
        return Vec::new();
    };
    let mut phases = Vec::with_capacity(5);
    let mut push = |kind, start: f64, end: f64| {
        if end > start {
            phases.push(Phase {
                kind,
                start_h: start,
                end_h: end,
            });
        }
    };
    let vacuum_h = t[vacuum];
    match annealing(t, &shelf[..=vacuum]) {
        Some((a, b)) => {
            push(PhaseKind::Freezing, start_h, a);
            push(PhaseKind::Annealing, a, b);
            push(PhaseKind::Freezing, b, vacuum_h);
        }
        None => push(PhaseKind::Freezing, start_h, vacuum_h),
    }
    let primary_end = match primary_end_h.filter(|h| h.is_finite()) {
        Some(h) => h.clamp(vacuum_h, end_h),
        None => final_ramp_start(t, shelf, vacuum).unwrap_or(end_h),
    };
    push(PhaseKind::Primary, vacuum_h, primary_end);
    push(PhaseKind::Secondary, primary_end, end_h);
    phases
}

/// The index of the last reading within [`NEAR_MINIMUM_C`] of the shelf's minimum, when
/// that minimum is at or below [`FROZEN_SHELF_C`] and the shelf leaves it afterwards.
fn last_at_minimum(shelf: &[f64]) -> Option<usize> {
    let min = shelf.iter().copied().fold(f64::INFINITY, f64::min);
    if min > FROZEN_SHELF_C {
        return None;
    }
    let last = shelf.iter().rposition(|&v| v <= min + NEAR_MINIMUM_C)?;
    (last + 1 < shelf.len()).then_some(last)
}

/// Time where the readings `(ta, va)`, `(tb, vb)` cross `level`, linearly.
fn crossing(ta: f64, va: f64, tb: f64, vb: f64, level: f64) -> f64 {
    if (vb - va).abs() > 0.0 {
        ta + (level - va) / (vb - va) * (tb - ta)
    } else {
        ta
    }
}

/// (start, end) of an annealing hold within the freezing part `shelf` (module docs).
fn annealing(t: &[f64], shelf: &[f64]) -> Option<(f64, f64)> {
    let mut cold = f64::INFINITY;
    let mut i = 0;
    while i < shelf.len() {
        cold = cold.min(shelf[i]);
        if cold > FROZEN_SHELF_C || shelf[i] < cold + ANNEAL_RISE_C {
            i += 1;
            continue;
        }
        // A warm stretch: from i while the shelf stays ANNEAL_RISE_C above the cold level.
        let stretch_end = (i..shelf.len()).find(|&j| shelf[j] < cold + ANNEAL_RISE_C)?;
        let warm = &shelf[i..stretch_end];
        let top = warm.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let at_top: Vec<usize> = (i..stretch_end)
            .filter(|&j| shelf[j] >= top - NEAR_MINIMUM_C)
            .collect();
        let (&first_top, &last_top) = (at_top.first()?, at_top.last()?);
        if top < 0.0 && t[last_top] - t[first_top] >= ANNEAL_MIN_HOLD_H {
            // Leaving the cold level: the crossing of its band after the last reading in it.
            let leave = (0..i).rev().find(|&j| shelf[j] <= cold + NEAR_MINIMUM_C)?;
            let start = ramp_corner(t, shelf, leave + 1, cold + NEAR_MINIMUM_C)?;
            // The re-cool: the crossing of the hold's band after its last reading in it.
            let end = ramp_corner(t, shelf, last_top + 1, top - NEAR_MINIMUM_C)?;
            return Some((start, end));
        }
        i = stretch_end;
    }
    None
}

/// Where a ramp that crosses `band` between readings `j − 1` and `j` began: the crossing,
/// moved back by the time the ramp takes to cross the [`NEAR_MINIMUM_C`] band (its rate
/// read on the next interval, well inside the ramp).
fn ramp_corner(t: &[f64], shelf: &[f64], j: usize, band: f64) -> Option<f64> {
    let (ta, tb) = (*t.get(j.checked_sub(1)?)?, *t.get(j)?);
    let (va, vb) = (*shelf.get(j - 1)?, *shelf.get(j)?);
    let crossed = crossing(ta, va, tb, vb, band);
    let rate = match (t.get(j + 1), shelf.get(j + 1)) {
        (Some(&tc), Some(&vc)) if tc > tb => (vc - vb) / (tc - tb),
        _ => (vb - va) / (tb - ta),
    };
    let same_way = (vb - va) * rate > 0.0;
    Some(if same_way && rate.is_finite() {
        crossed - NEAR_MINIMUM_C / rate.abs()
    } else {
        crossed
    })
}

/// The start of the shelf's last ramp to its warmest level after `vacuum` (module docs).
fn final_ramp_start(t: &[f64], shelf: &[f64], vacuum: usize) -> Option<f64> {
    let after = shelf.get(vacuum..)?;
    let top = after.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if top <= 0.0 || top < shelf[vacuum] + SECONDARY_RISE_C {
        return None;
    }
    let reach = vacuum + after.iter().position(|&v| v >= top - NEAR_MINIMUM_C)?;
    // Walk back down the ramp while the shelf keeps falling (going backwards).
    let mut j = reach;
    while j > vacuum && shelf[j - 1] < shelf[j] - 1e-9 {
        j -= 1;
    }
    if j <= vacuum {
        return None;
    }
    // The ramp began between reading j (still level) and j + 1: extrapolate its rate back.
    let corner = match (
        t.get(j + 1),
        t.get(j + 2),
        shelf.get(j + 1),
        shelf.get(j + 2),
    ) {
        (Some(&ta), Some(&tb), Some(&va), Some(&vb)) if tb > ta && vb > va => {
            (ta - (va - shelf[j]) * (tb - ta) / (vb - va)).clamp(t[j], ta)
        }
        _ => t[j],
    };
    Some(corner)
}
