//! An endotherm or exotherm in a window: ASTM E794 / ISO 11357-3.
//!
//! The baseline is the straight line between the smoothed curve at the two window limits,
//! so the window should start and end on baseline. The peak is the largest deflection from
//! that baseline; the extrapolated onset is where the tangent at the steepest point of the
//! leading edge meets the baseline, the extrapolated end the same on the trailing edge;
//! the area is the integral of the (unsmoothed) deflection over temperature.

use serde::{Deserialize, Serialize};

use super::trace::{interp, vertex, Trace};
use crate::error::InputError;

/// Which way the peak points, in thermodynamic terms.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum PeakKind {
    Endotherm,
    Exotherm,
}

/// The characteristic temperatures and area of one peak.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Peak {
    pub onset_c: f64,
    pub peak_c: f64,
    pub end_c: f64,
    /// Area between the curve and the baseline over temperature, in heat-flow unit × K,
    /// always positive (the kind says which way).
    pub area: f64,
    pub kind: PeakKind,
}

/// Peak in `window_c` (°C) by ASTM E794 / ISO 11357-3: extrapolated onset from the
/// leading-edge tangent at its steepest point against the linear baseline, peak
/// temperature at the largest deflection, extrapolated end likewise on the trailing edge,
/// and the area against the baseline. On a cooling segment the leading edge is the
/// high-temperature side. `field` names the window in errors.
pub fn peak(trace: &Trace, window_c: [f64; 2], field: &str) -> Result<Peak, InputError> {
    let (a, b) = trace.window(field, window_c)?;
    let t = &trace.temp_c;
    let (t0, t1) = (t[a], t[b]);
    let (y0, y1) = (trace.smooth[a], trace.smooth[b]);
    let base_slope = (y1 - y0) / (t1 - t0);
    let base = |x: f64| y0 + base_slope * (x - t0);
    let dev = |j: usize| trace.smooth[j] - base(t[j]);
    let (mut hi_j, mut lo_j) = (a, a);
    for j in a..=b {
        if dev(j) > dev(hi_j) {
            hi_j = j;
        }
        if dev(j) < dev(lo_j) {
            lo_j = j;
        }
    }
    let (kind, sign, p) = if dev(hi_j) >= -dev(lo_j) {
        (PeakKind::Endotherm, 1.0, hi_j)
    } else {
        (PeakKind::Exotherm, -1.0, lo_j)
    };
    if sign * dev(p) <= 0.0 {
        return Err(InputError::new(
            field,
            "the curve does not leave the baseline in this window",
        ));
    }
    if p == a || p == b {
        return Err(InputError::new(
            field,
            "the largest deflection lies at the window's edge: widen the window to hold the \
             whole peak",
        ));
    }
    let e: Vec<f64> = (a..=b).map(|j| sign * dev(j)).collect();
    let ts = &t[a..=b];
    let peak_c = vertex(ts, &e, p - a);
    // Slope of the deflection, positive on the rising side of the peak.
    let de: Vec<f64> = (a..=b)
        .map(|j| sign * (trace.slope[j] - base_slope))
        .collect();
    let rising = tangent_point(ts, &e, &de, 0, p - a, true);
    let falling = tangent_point(ts, &e, &de, p - a, b - a, false);
    let (lead, trail) = if trace.cooling {
        (falling, rising)
    } else {
        (rising, falling)
    };
    let edge =
        |what: &str| InputError::new(field, format!("the peak has no {what} edge in this window"));
    let onset_c = lead.ok_or_else(|| edge("leading"))?;
    let end_c = trail.ok_or_else(|| edge("trailing"))?;
    let mut area = 0.0;
    for j in a..b {
        let d0 = trace.endo[j] - base(t[j]);
        let d1 = trace.endo[j + 1] - base(t[j + 1]);
        area += 0.5 * (d0 + d1) * (t[j + 1] - t[j]);
    }
    Ok(Peak {
        onset_c,
        peak_c,
        end_c,
        area: sign * area,
        kind,
    })
}

/// Where the tangent at the steepest point of one edge (indices `from..=to` of the
/// window) meets the baseline (deflection zero). `rising` picks the largest positive slope,
/// otherwise the most negative.
fn tangent_point(
    t: &[f64],
    e: &[f64],
    de: &[f64],
    from: usize,
    to: usize,
    rising: bool,
) -> Option<f64> {
    let sgn = if rising { 1.0 } else { -1.0 };
    let i = (from..=to).max_by(|&x, &y| (sgn * de[x]).total_cmp(&(sgn * de[y])))?;
    if sgn * de[i] <= 0.0 {
        return None;
    }
    let neg: Vec<f64> = de.iter().map(|v| sgn * v).collect();
    let ti = if i > from && i < to {
        vertex(t, &neg, i)
    } else {
        t[i]
    };
    let ei = interp(t, e, ti);
    let gi = interp(t, de, ti);
    if sgn * gi <= 0.0 {
        return None;
    }
    let x = ti - ei / gi;
    x.is_finite().then_some(x)
}
