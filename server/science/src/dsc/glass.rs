//! Glass transition in a window: ASTM E1356 / ISO 11357-2.
//!
//! Baselines before and after the step are straight lines fitted (least squares) to the
//! first and last fifth of the window's points, so the window should start and end on
//! baseline. The inflection is the extremum of the smoothed derivative; the tangent there
//! meets the two baselines at the extrapolated onset and end; the midpoint is where the
//! curve lies half-way between the baselines (half the step height); the step height is
//! the distance between the baselines at the midpoint.

use serde::{Deserialize, Serialize};

use super::trace::{fit_line, interp, vertex, Trace};
use crate::error::InputError;

/// The characteristic temperatures of one glass transition.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GlassTransition {
    pub onset_c: f64,
    pub midpoint_c: f64,
    pub inflection_c: f64,
    pub end_c: f64,
    /// Step height in the heat-flow unit, positive in the endothermic direction (the
    /// direction of a heat-capacity increase).
    pub step: f64,
}

/// A straight baseline y = a + b·T.
#[derive(Debug, Clone, Copy)]
struct Line {
    a: f64,
    b: f64,
}

impl Line {
    fn at(self, t: f64) -> f64 {
        self.a + self.b * t
    }

    /// Where the tangent through (t0, y0) with slope g meets this line.
    fn meets_tangent(self, t0: f64, y0: f64, g: f64) -> Option<f64> {
        let d = g - self.b;
        if d.abs() <= f64::EPSILON * (g.abs() + self.b.abs()) {
            return None;
        }
        let t = (y0 - g * t0 - self.a) / (self.b - g);
        t.is_finite().then_some(t)
    }
}

/// Glass transition in `window_c` (°C) by ASTM E1356 / ISO 11357-2: extrapolated onset
/// and end (the inflectional tangent against the extrapolated baselines), midpoint at half
/// the step height, inflection at the derivative extremum, and the step height.
/// `field` names the window in errors.
pub fn glass_transition(
    trace: &Trace,
    window_c: [f64; 2],
    field: &str,
) -> Result<GlassTransition, InputError> {
    let (a, b) = trace.window(field, window_c)?;
    let t = &trace.temp_c;
    let n = b - a + 1;
    let k = (n / 5).max(3);
    let pre = line(&t[a..a + k], &trace.endo[a..a + k]);
    let post = line(&t[b + 1 - k..=b], &trace.endo[b + 1 - k..=b]);
    let base_slope = 0.5 * (pre.b + post.b);
    let (lo, hi) = if b - k > a + k {
        (a + k, b - k)
    } else {
        (a + 1, b - 1)
    };
    let excess = |j: usize| trace.slope[j] - base_slope;
    let i = (lo..=hi)
        .max_by(|&x, &y| excess(x).total_cmp(&excess(y)))
        .unwrap_or(lo);
    if excess(i) <= 0.0 {
        return Err(InputError::new(
            field,
            "no step in the endothermic direction in this window (check the window and the \
             exotherm direction)",
        ));
    }
    let ti = refine_inflection(trace, i, lo, hi, base_slope);
    let si = interp(t, &trace.smooth, ti);
    let gi = interp(t, &trace.slope, ti);
    let no_tangent = || {
        InputError::new(
            field,
            "the inflectional tangent runs parallel to a baseline; widen the window",
        )
    };
    let onset = pre.meets_tangent(ti, si, gi).ok_or_else(no_tangent)?;
    let end = post.meets_tangent(ti, si, gi).ok_or_else(no_tangent)?;
    let midpoint = half_step(trace, a, b, i, pre, post).ok_or_else(|| {
        InputError::new(
            field,
            "the curve never reaches half the step height in this window",
        )
    })?;
    let step = post.at(midpoint) - pre.at(midpoint);
    if step <= 0.0 || !(onset < midpoint && midpoint < end) {
        return Err(InputError::new(
            field,
            "no clear step in this window: the baselines do not bracket a rise in the \
             endothermic direction (check the window and the exotherm direction)",
        ));
    }
    Ok(GlassTransition {
        onset_c: onset,
        midpoint_c: midpoint,
        inflection_c: ti,
        end_c: end,
        step,
    })
}

fn line(t: &[f64], y: &[f64]) -> Line {
    let (a, b) = fit_line(t, y);
    Line { a, b }
}

/// The derivative's extremum to better than the grid: a least-squares parabola through the
/// contiguous points around `i` whose excess slope is at least 70 % of the largest (this
/// averages out noise), else the three-point vertex.
fn refine_inflection(trace: &Trace, i: usize, lo: usize, hi: usize, base_slope: f64) -> f64 {
    let t = &trace.temp_c;
    let top = trace.slope[i] - base_slope;
    let inside = |j: usize| trace.slope[j] - base_slope >= 0.7 * top;
    let mut l = i;
    while l > lo && inside(l - 1) {
        l -= 1;
    }
    let mut r = i;
    while r < hi && inside(r + 1) {
        r += 1;
    }
    if r - l >= 4 {
        if let Some(x) = parabola_vertex(&t[l..=r], &trace.slope[l..=r]) {
            if x >= t[l] && x <= t[r] {
                return x;
            }
        }
    }
    vertex(t, &trace.slope, i)
}

/// Vertex of the least-squares parabola through the points, when it opens downwards.
fn parabola_vertex(t: &[f64], y: &[f64]) -> Option<f64> {
    let c = t[t.len() / 2];
    let h = (t[t.len() - 1] - t[0]).max(f64::MIN_POSITIVE);
    let (mut s, mut r) = ([0.0_f64; 5], [0.0_f64; 3]);
    for (&x, &v) in t.iter().zip(y) {
        let u = (x - c) / h;
        let mut p = 1.0;
        for (k, sk) in s.iter_mut().enumerate() {
            *sk += p;
            if k < 3 {
                r[k] += p * v;
            }
            p *= u;
        }
    }
    let m = [[s[0], s[1], s[2]], [s[1], s[2], s[3]], [s[2], s[3], s[4]]];
    let det = det3(m);
    if det.abs() <= 1e-14 * s[0] * s[2] * s[4] {
        return None;
    }
    let col = |k: usize| {
        let mut mk = m;
        for (row, rv) in mk.iter_mut().zip(r) {
            row[k] = rv;
        }
        det3(mk) / det
    };
    let (c1, c2) = (col(1), col(2));
    (c2 < 0.0).then(|| c + h * (-c1 / (2.0 * c2)))
}

fn det3(m: [[f64; 3]; 3]) -> f64 {
    m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
}

/// Temperature where the smoothed curve crosses the line half-way between the baselines,
/// the crossing nearest the inflection index `i`.
fn half_step(trace: &Trace, a: usize, b: usize, i: usize, pre: Line, post: Line) -> Option<f64> {
    let t = &trace.temp_c;
    let g = |j: usize| trace.smooth[j] - 0.5 * (pre.at(t[j]) + post.at(t[j]));
    let crossing = |j: usize| {
        let (g0, g1) = (g(j), g(j + 1));
        if g0 == 0.0 {
            return Some(t[j]);
        }
        if (g0 < 0.0) != (g1 < 0.0) || g1 == 0.0 {
            return Some(t[j] + (t[j + 1] - t[j]) * g0 / (g0 - g1));
        }
        None
    };
    for d in 0..(b - a) {
        if i + d < b {
            if let Some(x) = crossing(i + d) {
                return Some(x);
            }
        }
        if i > a + d {
            if let Some(x) = crossing(i - d - 1) {
                return Some(x);
            }
        }
    }
    None
}
