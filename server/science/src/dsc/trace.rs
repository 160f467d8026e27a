//! A validated heat-flow trace of one heating or cooling segment, put in the form the
//! analyses share: temperature ascending, signal positive in the endothermic direction,
//! smoothed with its derivative.

use serde::{Deserialize, Serialize};

use super::smooth::{auto_half_width, savitzky_golay};
use crate::error::InputError;

/// Fewest points a trace may have.
pub const MIN_TRACE_POINTS: usize = 10;
/// Fewest points inside an analysis window.
pub const MIN_WINDOW_POINTS: usize = 8;
/// Longest trace analysed point by point; longer traces are first reduced by averaging
/// runs of consecutive points (temperature and heat flow alike) down to about this many.
pub const MAX_ANALYSIS_POINTS: usize = 20_000;
/// Most points accepted at all.
pub const MAX_TRACE_POINTS: usize = 2_000_000;

/// Which way an exotherm is drawn in the heat-flow column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum Exo {
    /// Exothermic events point up (heat released by the sample counts positive).
    #[default]
    Up,
    /// Exothermic events point down (heat taken up by the sample counts positive).
    Down,
}

/// The unit of the heat-flow values, for ΔCp and areas in J/g.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum HeatFlowUnit {
    /// Milliwatt (needs the sample mass for per-gram results).
    #[default]
    #[serde(rename = "mW")]
    MilliWatt,
    /// Watt per gram, numerically the same as mW/mg.
    #[serde(rename = "W/g", alias = "mW/mg")]
    WattPerGram,
}

/// A trace ready for analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct Trace {
    /// Temperatures, °C, strictly ascending.
    pub temp_c: Vec<f64>,
    /// Heat flow with the endothermic direction positive, in the input's unit.
    pub endo: Vec<f64>,
    /// Smoothed `endo`.
    pub smooth: Vec<f64>,
    /// d(smoothed endo)/dT, per °C.
    pub slope: Vec<f64>,
    /// The input ran from high to low temperature (a cooling segment).
    pub cooling: bool,
    /// Points averaged into each analysed point (1 unless the trace was reduced).
    pub points_per_bin: usize,
}

impl Trace {
    /// Checks a segment and prepares it. `smoothing_points` is the Savitzky–Golay
    /// half-width in (analysed) points; `None` picks one from the trace's length.
    /// Errors name the field as spelled in the `dsc-analysis` input.
    pub fn new(
        temperature_c: &[f64],
        heat_flow: &[f64],
        exo: Exo,
        smoothing_points: Option<usize>,
    ) -> Result<Self, InputError> {
        let n = temperature_c.len();
        if heat_flow.len() != n {
            return Err(InputError::new(
                "heat_flow",
                format!(
                    "has {} values but temperature_c has {n}; they must pair up",
                    heat_flow.len()
                ),
            ));
        }
        if n < MIN_TRACE_POINTS {
            return Err(InputError::new(
                "temperature_c",
                format!("has {n} points; the analysis needs at least {MIN_TRACE_POINTS}"),
            ));
        }
        if n > MAX_TRACE_POINTS {
            return Err(InputError::new(
                "temperature_c",
                format!("has {n} points; at most {MAX_TRACE_POINTS} are analysed"),
            ));
        }
        for (name, values) in [("temperature_c", temperature_c), ("heat_flow", heat_flow)] {
            if let Some(i) = values.iter().position(|v| !v.is_finite()) {
                return Err(InputError::new(
                    format!("{name}[{i}]"),
                    format!("is {} — every value must be a finite number", values[i]),
                ));
            }
        }
        let cooling = temperature_c[n - 1] < temperature_c[0];
        for i in 1..n {
            let (a, b) = (temperature_c[i - 1], temperature_c[i]);
            let ok = if cooling { b < a } else { b > a };
            if !ok {
                let way = if cooling { "fall" } else { "rise" };
                return Err(InputError::new(
                    format!("temperature_c[{i}]"),
                    format!(
                        "is {b} °C after {a} °C: temperature must {way} throughout one \
                         segment (split heating, cooling and isothermal parts first)"
                    ),
                ));
            }
        }
        let sign = match exo {
            Exo::Up => -1.0,
            Exo::Down => 1.0,
        };
        let mut temp_c: Vec<f64> = temperature_c.to_vec();
        let mut endo: Vec<f64> = heat_flow.iter().map(|v| sign * v).collect();
        if cooling {
            temp_c.reverse();
            endo.reverse();
        }
        let points_per_bin = n.div_ceil(MAX_ANALYSIS_POINTS);
        if points_per_bin > 1 {
            temp_c = bin_means(&temp_c, points_per_bin);
            endo = bin_means(&endo, points_per_bin);
        }
        let half = smoothing_points.unwrap_or_else(|| auto_half_width(temp_c.len()));
        let s = savitzky_golay(&temp_c, &endo, half);
        Ok(Self {
            temp_c,
            endo,
            smooth: s.value,
            slope: s.slope,
            cooling,
            points_per_bin,
        })
    }

    pub fn len(&self) -> usize {
        self.temp_c.len()
    }

    pub fn is_empty(&self) -> bool {
        self.temp_c.is_empty()
    }

    /// Index range `[first, last]` of the points inside a window, checked: finite, in
    /// order, overlapping the data and holding enough points. `field` names the window.
    pub fn window(&self, field: &str, window_c: [f64; 2]) -> Result<(usize, usize), InputError> {
        let [lo, hi] = window_c;
        if !lo.is_finite() || !hi.is_finite() {
            return Err(InputError::new(
                field,
                "window limits must be finite numbers",
            ));
        }
        if lo >= hi {
            return Err(InputError::new(
                field,
                format!("[{lo}, {hi}]: the lower limit must be below the upper"),
            ));
        }
        let (t0, t1) = (self.temp_c[0], self.temp_c[self.len() - 1]);
        if hi < t0 || lo > t1 {
            return Err(InputError::new(
                field,
                format!("[{lo}, {hi}] °C lies outside the data ({t0:.3} to {t1:.3} °C)"),
            ));
        }
        let first = self.temp_c.partition_point(|&t| t < lo);
        let end = self.temp_c.partition_point(|&t| t <= hi);
        let count = end.saturating_sub(first);
        if count < MIN_WINDOW_POINTS {
            return Err(InputError::new(
                field,
                format!(
                    "[{lo}, {hi}] °C holds {count} points; at least {MIN_WINDOW_POINTS} are needed"
                ),
            ));
        }
        Ok((first, end - 1))
    }
}

/// Means of consecutive runs of `k` values (the last run may be shorter).
fn bin_means(v: &[f64], k: usize) -> Vec<f64> {
    v.chunks(k)
        .map(|c| c.iter().sum::<f64>() / c.len() as f64)
        .collect()
}

/// Linear interpolation of `y` at `x` (clamped to the ends).
pub fn interp(t: &[f64], y: &[f64], x: f64) -> f64 {
    let n = t.len();
    if n == 0 {
        return f64::NAN;
    }
    if x <= t[0] {
        return y[0];
    }
    if x >= t[n - 1] {
        return y[n - 1];
    }
    let j = t.partition_point(|&v| v <= x).clamp(1, n - 1);
    let (x0, x1) = (t[j - 1], t[j]);
    let f = (x - x0) / (x1 - x0);
    y[j - 1] + f * (y[j] - y[j - 1])
}

/// Sub-grid position of the extremum at `i` from the parabola through `i − 1, i, i + 1`
/// (uneven spacing allowed); `t[i]` at the ends or when the parabola is flat.
pub fn vertex(t: &[f64], y: &[f64], i: usize) -> f64 {
    if i == 0 || i + 1 >= t.len() {
        return t[i];
    }
    let (x0, x1, x2) = (t[i - 1], t[i], t[i + 1]);
    let (y0, y1, y2) = (y[i - 1], y[i], y[i + 1]);
    let d0 = (y1 - y0) / (x1 - x0);
    let d1 = (y2 - y1) / (x2 - x1);
    let a = (d1 - d0) / (x2 - x0);
    if a.abs() <= f64::EPSILON * (d0.abs() + d1.abs()) || !a.is_finite() {
        return x1;
    }
    // y' = d0 + a(2x − x0 − x1) = 0.
    let x = 0.5 * (x0 + x1 - d0 / a);
    x.clamp(x0, x2)
}

/// Least-squares straight line through the points: (intercept, slope) of y = a + b·t.
pub fn fit_line(t: &[f64], y: &[f64]) -> (f64, f64) {
    let n = t.len().min(y.len()) as f64;
    let mt = t.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let (mut sxx, mut sxy) = (0.0, 0.0);
    for (&x, &v) in t.iter().zip(y) {
        sxx += (x - mt) * (x - mt);
        sxy += (x - mt) * (v - my);
    }
    let b = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    (my - b * mt, b)
}
