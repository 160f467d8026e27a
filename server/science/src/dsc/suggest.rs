//! Suggested analysis windows for a trace nobody has marked up yet: the largest peaks, and
//! the likely Tg′ step below the ice-melt endotherm. A heuristic starting point for the
//! analyst to adjust (common practice, no source); the analyses themselves follow the
//! standards.

use serde::{Deserialize, Serialize};

use super::trace::{Trace, MIN_WINDOW_POINTS};

/// Most peak windows suggested.
pub const MAX_SUGGESTED_PEAKS: usize = 3;
/// A peak smaller than this share of the largest one is not suggested.
const MIN_PEAK_SHARE: f64 = 0.1;
/// Signal-to-noise a suggested feature must exceed.
const MIN_SNR: f64 = 5.0;

/// Windows, °C, as `[lo, hi]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct SuggestedWindows {
    pub glass_transition_c: Option<[f64; 2]>,
    pub peaks_c: Vec<[f64; 2]>,
}

/// Suggests windows: up to three peaks, largest first, each grown from its extremum until
/// the curve flattens (slope below 3 % of the edge's steepest) plus a quarter of its width
/// each side; then the steepest endothermic step below the largest endotherm (the ice melt
/// in a frozen solution), in a window six times its half-width.
pub fn suggest_windows(trace: &Trace) -> SuggestedWindows {
    let n = trace.len();
    let t = &trace.temp_c;
    let line_slope = (trace.smooth[n - 1] - trace.smooth[0]) / (t[n - 1] - t[0]);
    let d: Vec<f64> = (0..n)
        .map(|j| trace.smooth[j] - trace.smooth[0] - line_slope * (t[j] - t[0]))
        .collect();
    let dd: Vec<f64> = trace.slope.iter().map(|s| s - line_slope).collect();
    let resid: Vec<f64> = trace
        .endo
        .iter()
        .zip(&trace.smooth)
        .map(|(a, b)| a - b)
        .collect();
    let noise = robust_sigma(&resid);

    let mut covered = vec![false; n];
    let mut found: Vec<(usize, usize, f64, f64)> = Vec::new(); // (l, r, height, sign)
    for _ in 0..20 {
        if found.len() >= MAX_SUGGESTED_PEAKS {
            break;
        }
        let Some(j) = (0..n)
            .filter(|&j| !covered[j])
            .max_by(|&x, &y| d[x].abs().total_cmp(&d[y].abs()))
        else {
            break;
        };
        let s = if d[j] >= 0.0 { 1.0 } else { -1.0 };
        let (l, r) = grow(&dd, j, s);
        covered[l..=r].iter_mut().for_each(|c| *c = true);
        if l == j || r == j {
            continue;
        }
        // A shoulder or tail of a peak already found is that peak again, not another one.
        if found.iter().any(|f| l <= f.1 && f.0 <= r) {
            continue;
        }
        let base = d[l] + (d[r] - d[l]) * (t[j] - t[l]) / (t[r] - t[l]);
        let height = s * (d[j] - base);
        let largest = found.first().map_or(0.0, |f| f.2);
        if height > MIN_SNR * noise && height >= MIN_PEAK_SHARE * largest && r - l >= 4 {
            found.push((l, r, height, s));
        }
    }
    let mut peaks_c = Vec::new();
    let mut melt_lo = None;
    for &(l, r, _, s) in &found {
        let w = 0.25 * (t[r] - t[l]);
        let win = [(t[l] - w).max(t[0]), (t[r] + w).min(t[n - 1])];
        if s > 0.0 && melt_lo.is_none() {
            melt_lo = Some(win[0]);
        }
        if trace.window("", win).is_ok() {
            peaks_c.push(win);
        }
    }
    // Below the ice melt (the largest endotherm), without the rising foot of its leading
    // edge: walk back while the slope keeps falling.
    let mut region_end =
        melt_lo.map_or(n - 1, |lo| t.partition_point(|&x| x < lo).saturating_sub(1));
    if melt_lo.is_some() {
        while region_end > 0 && trace.slope[region_end - 1] < trace.slope[region_end] {
            region_end -= 1;
        }
    }
    let glass_transition_c = step_window(trace, region_end);
    SuggestedWindows {
        glass_transition_c,
        peaks_c,
    }
}

/// From the extremum `j` of sign `s`, walk out while the curve still falls away from it.
fn grow(dd: &[f64], j: usize, s: f64) -> (usize, usize) {
    let (mut l, mut steep) = (j, 0.0_f64);
    while l > 0 && s * dd[l - 1] > 0.03 * steep {
        l -= 1;
        steep = steep.max(s * dd[l]);
    }
    let (mut r, mut steep) = (j, 0.0_f64);
    while r + 1 < dd.len() && -s * dd[r + 1] > 0.03 * steep {
        r += 1;
        steep = steep.max(-s * dd[r]);
    }
    (l, r)
}

/// The steepest endothermic step in points `0..=end`, and a window around it.
fn step_window(trace: &Trace, end: usize) -> Option<[f64; 2]> {
    if end + 1 < 2 * MIN_WINDOW_POINTS {
        return None;
    }
    let t = &trace.temp_c;
    let slopes = &trace.slope[..=end];
    let mut sorted = slopes.to_vec();
    sorted.sort_by(f64::total_cmp);
    let median = sorted[sorted.len() / 2];
    let spread = robust_sigma(&slopes.iter().map(|s| s - median).collect::<Vec<_>>());
    let j = (0..=end).max_by(|&x, &y| slopes[x].total_cmp(&slopes[y]))?;
    let top = slopes[j] - median;
    if top <= MIN_SNR * spread || top <= 0.0 {
        return None;
    }
    let mut l = j;
    while l > 0 && slopes[l - 1] - median > 0.1 * top {
        l -= 1;
    }
    let mut r = j;
    while r < end && slopes[r + 1] - median > 0.1 * top {
        r += 1;
    }
    let half = (t[j] - t[l]).max(t[r] - t[j]).max(t[1] - t[0]);
    let win = [
        (t[j] - 3.0 * half).max(t[0]),
        (t[j] + 3.0 * half).min(t[end]),
    ];
    trace.window("", win).ok().map(|_| win)
}

/// 1.4826 × the median absolute deviation: the standard deviation of Gaussian noise,
/// robust to the features themselves (Rousseeuw & Croux 1993, from memory).
fn robust_sigma(v: &[f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    let mut a: Vec<f64> = v.iter().map(|x| x.abs()).collect();
    a.sort_by(f64::total_cmp);
    1.4826 * a[a.len() / 2]
}
