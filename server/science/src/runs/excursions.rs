//! Product temperatures above a limit, and probes against a model's prediction.

use serde::{Deserialize, Serialize};

use super::interpolate;
use super::series::{Probe, ProbePosition, RunSeries};

/// One stretch of a probe above the limit. Crossings are interpolated linearly between
/// readings; a stretch cut by the window starts or ends at the window's edge.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Excursion {
    pub probe: String,
    pub position: ProbePosition,
    pub start_h: f64,
    pub end_h: f64,
    pub peak_c: f64,
    pub peak_above_c: f64,
    pub duration_h: f64,
}

/// The readings of one probe within `[from_h, until_h]`, with values interpolated at the
/// window's edges where the probe reads on both sides; missing readings are skipped.
fn windowed(time_h: &[f64], temp_c: &[f64], from_h: f64, until_h: f64) -> Vec<(f64, f64)> {
    let valid: Vec<(f64, f64)> = time_h
        .iter()
        .zip(temp_c)
        .filter(|(t, v)| t.is_finite() && v.is_finite())
        .map(|(t, v)| (*t, *v))
        .collect();
    let (ts, vs): (Vec<f64>, Vec<f64>) = valid.iter().copied().unzip();
    let mut out = Vec::with_capacity(valid.len() + 2);
    if let Some(v) = interpolate(&ts, &vs, from_h) {
        out.push((from_h, v));
    }
    out.extend(valid.iter().filter(|(t, _)| *t > from_h && *t < until_h));
    if until_h > from_h {
        if let Some(v) = interpolate(&ts, &vs, until_h) {
            out.push((until_h, v));
        }
    }
    out
}

/// Every stretch in `[from_h, until_h]` where a probe reads above `limit_c`.
pub fn excursions(series: &RunSeries, limit_c: f64, from_h: f64, until_h: f64) -> Vec<Excursion> {
    let mut found = Vec::new();
    if !(limit_c.is_finite() && from_h.is_finite() && until_h.is_finite()) {
        return found;
    }
    for probe in &series.probes {
        let points = windowed(&series.time_h, &probe.temp_c, from_h, until_h);
        let mut open: Option<(f64, f64)> = None; // (start, peak)
        let mut close = |start: f64, end: f64, peak: f64| {
            found.push(Excursion {
                probe: probe.label.clone(),
                position: probe.position,
                start_h: start,
                end_h: end,
                peak_c: peak,
                peak_above_c: peak - limit_c,
                duration_h: end - start,
            })
        };
        for (i, &(t, v)) in points.iter().enumerate() {
            let above = v > limit_c;
            match (open, above) {
                (None, true) => {
                    let start = match i.checked_sub(1).map(|j| points[j]) {
                        Some((tp, vp)) => tp + (limit_c - vp) / (v - vp) * (t - tp),
                        None => t,
                    };
                    open = Some((start, v));
                }
                (Some((start, peak)), true) => open = Some((start, peak.max(v))),
                (Some((start, peak)), false) => {
                    let (tp, vp) = points[i - 1];
                    close(start, tp + (vp - limit_c) / (vp - v) * (t - tp), peak);
                    open = None;
                }
                (None, false) => {}
            }
        }
        if let (Some((start, peak)), Some(&(t_end, _))) = (open, points.last()) {
            close(start, t_end, peak);
        }
    }
    found
}

/// A probe against a prediction over a window: differences are measured minus predicted.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProbeComparison {
    pub probe: String,
    pub position: ProbePosition,
    pub points: usize,
    pub mean_diff_c: f64,
    pub rmse_c: f64,
    pub max_abs_diff_c: f64,
}

/// Compare a probe's readings in `[from_h, until_h]` with a prediction read linearly
/// between its points; `None` when no reading falls where the prediction is defined (or
/// the prediction's two series differ in length).
pub fn compare_probe(
    probe: &Probe,
    time_h: &[f64],
    predicted_time_h: &[f64],
    predicted_c: &[f64],
    from_h: f64,
    until_h: f64,
) -> Option<ProbeComparison> {
    if predicted_time_h.len() != predicted_c.len()
        || predicted_time_h
            .windows(2)
            .any(|w| w[1].is_nan() || w[1] < w[0])
    {
        return None;
    }
    let diffs: Vec<f64> = time_h
        .iter()
        .zip(&probe.temp_c)
        .filter(|(t, v)| **t >= from_h && **t <= until_h && v.is_finite())
        .filter_map(|(t, v)| Some(v - interpolate(predicted_time_h, predicted_c, *t)?))
        .collect();
    if diffs.is_empty() {
        return None;
    }
    let n = diffs.len() as f64;
    Some(ProbeComparison {
        probe: probe.label.clone(),
        position: probe.position,
        points: diffs.len(),
        mean_diff_c: diffs.iter().sum::<f64>() / n,
        rmse_c: (diffs.iter().map(|d| d * d).sum::<f64>() / n).sqrt(),
        max_abs_diff_c: diffs.iter().map(|d| d.abs()).fold(0.0, f64::max),
    })
}
