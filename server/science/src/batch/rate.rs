//! The load's sublimation rate over time from its classes' rates.

use serde::{Deserialize, Serialize};

use crate::drying::{downsample, SeriesPoint};

/// Moments taken from each class before combining (thinned evenly, ends kept).
const POINTS_PER_CLASS: usize = 150;

/// One moment of the load, per average vial.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BatchRatePoint {
    pub time_h: f64,
    /// Share-weighted sublimation rate of one average vial, g/h.
    pub mean_rate_g_h: f64,
    /// Share of the load that still holds ice.
    pub share_with_ice: f64,
}

/// The rate of one class at `t`: linear between its moments, zero once its ice is gone
/// (at its last moment itself the class still counts: the step comes just after).
fn rate_at(points: &[SeriesPoint], t: f64) -> f64 {
    let (Some(first), Some(last)) = (points.first(), points.last()) else {
        return 0.0;
    };
    if t > last.time_h || t < first.time_h {
        return 0.0;
    }
    let i = points.partition_point(|p| p.time_h < t);
    if i == 0 {
        return first.sublimation_rate_g_h;
    }
    let (a, b) = (&points[i - 1], &points[i.min(points.len() - 1)]);
    let dt = b.time_h - a.time_h;
    if dt <= 0.0 {
        return b.sublimation_rate_g_h;
    }
    a.sublimation_rate_g_h + (t - a.time_h) / dt * (b.sublimation_rate_g_h - a.sublimation_rate_g_h)
}

/// Combine `(share, moments)` of each class: a point at every class's moment, and at each
/// class's end a second point at the same time without it (the step down).
pub(super) fn combine(classes: &[(f64, &[SeriesPoint])]) -> Vec<BatchRatePoint> {
    let thinned: Vec<(f64, Vec<SeriesPoint>)> = classes
        .iter()
        .map(|(share, points)| {
            (
                *share,
                downsample(points, POINTS_PER_CLASS).copied().collect(),
            )
        })
        .collect();
    let ends: Vec<f64> = thinned
        .iter()
        .map(|(_, p)| p.last().map_or(0.0, |p| p.time_h))
        .collect();
    let mut knots: Vec<f64> = thinned
        .iter()
        .flat_map(|(_, p)| p.iter().map(|p| p.time_h))
        .collect();
    knots.sort_by(f64::total_cmp);
    knots.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * b.abs().max(1.0));
    let total_share: f64 = thinned.iter().map(|(s, _)| s).sum();
    let mut out = Vec::with_capacity(knots.len() + classes.len());
    for t in knots {
        let mut rate = 0.0;
        let mut with_ice = 0.0;
        let mut finishing = false;
        for ((share, points), end) in thinned.iter().zip(&ends) {
            if t <= *end {
                rate += share * rate_at(points, t);
                with_ice += share;
            }
            finishing |= (t - end).abs() <= 1e-12 * end.abs().max(1.0);
        }
        out.push(BatchRatePoint {
            time_h: t,
            mean_rate_g_h: rate / total_share,
            share_with_ice: with_ice / total_share,
        });
        if finishing {
            let (mut after, mut left) = (0.0, 0.0);
            for ((share, points), end) in thinned.iter().zip(&ends) {
                if t < *end && (t - end).abs() > 1e-12 * end.abs().max(1.0) {
                    after += share * rate_at(points, t);
                    left += share;
                }
            }
            out.push(BatchRatePoint {
                time_h: t,
                mean_rate_g_h: after / total_share,
                share_with_ice: left / total_share,
            });
        }
    }
    out
}
