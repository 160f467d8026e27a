//! Savitzky–Golay smoothing and derivative on a non-uniform temperature grid.
//!
//! Savitzky & Golay (1964), Anal. Chem. 36:1627: each point is replaced by the value of a
//! least-squares polynomial fitted to its neighbours, and the derivative is that
//! polynomial's slope. On a uniform grid this is the familiar convolution; here the fit is
//! done on the actual temperatures of each window (local polynomial fits, no resampling),
//! so uneven sampling needs no interpolation. The polynomial is quadratic: for a window
//! symmetric about the point its value equals the cubic fit's, so a symmetric peak or an
//! odd step keeps its position (smoothing does not shift transitions); only its height and
//! sharpness are slightly reduced: the slope by f'''·h²/(10·f') on a uniform window of ±h
//! (a Taylor expansion of the least-squares slope; h²/(5w²) at the middle of a tanh step
//! of width w). Near the ends of the trace the window is shifted inwards and keeps its size.

/// Smoothed values and their derivative d/dT at every point of `t`.
#[derive(Debug, Clone, PartialEq)]
pub struct Smoothed {
    pub value: Vec<f64>,
    pub slope: Vec<f64>,
}

/// Savitzky–Golay quadratic fits over `2·half_width + 1` points (fewer only when the trace
/// is shorter). `t` must be strictly increasing and as long as `y`; callers validate.
/// `half_width == 0` returns the data unchanged with a three-point local slope.
pub fn savitzky_golay(t: &[f64], y: &[f64], half_width: usize) -> Smoothed {
    let n = t.len().min(y.len());
    let mut value = Vec::with_capacity(n);
    let mut slope = Vec::with_capacity(n);
    if n < 3 {
        value.extend_from_slice(&y[..n]);
        slope.resize(n, 0.0);
        return Smoothed { value, slope };
    }
    let m = half_width.max(1).min((n - 1) / 2);
    for i in 0..n {
        let lo = i.saturating_sub(m).min(n - 1 - 2 * m);
        let hi = lo + 2 * m;
        let (v, s) = local_quadratic(&t[lo..=hi], &y[lo..=hi], t[i]);
        value.push(if half_width == 0 { y[i] } else { v });
        slope.push(s);
    }
    Smoothed { value, slope }
}

/// Value and slope at `x0` of the least-squares quadratic through the points.
fn local_quadratic(t: &[f64], y: &[f64], x0: f64) -> (f64, f64) {
    let h = t
        .iter()
        .map(|&x| (x - x0).abs())
        .fold(0.0_f64, f64::max)
        .max(f64::MIN_POSITIVE);
    let (mut s0, mut s1, mut s2, mut s3, mut s4) = (0.0, 0.0, 0.0, 0.0, 0.0);
    let (mut r0, mut r1, mut r2) = (0.0, 0.0, 0.0);
    for (&x, &v) in t.iter().zip(y) {
        let u = (x - x0) / h;
        let u2 = u * u;
        s0 += 1.0;
        s1 += u;
        s2 += u2;
        s3 += u2 * u;
        s4 += u2 * u2;
        r0 += v;
        r1 += u * v;
        r2 += u2 * v;
    }
    // Cramer's rule on the 3 × 3 normal equations.
    let det = s0 * (s2 * s4 - s3 * s3) - s1 * (s1 * s4 - s3 * s2) + s2 * (s1 * s3 - s2 * s2);
    if det.abs() <= 1e-12 * s0 * s2 * s4 {
        // Degenerate spacing: fall back to a straight line.
        let dl = s0 * s2 - s1 * s1;
        if dl.abs() <= f64::EPSILON * s0 * s2 {
            return (r0 / s0, 0.0);
        }
        let b = (s0 * r1 - s1 * r0) / dl;
        return ((r0 - b * s1) / s0, b / h);
    }
    let c0 = (r0 * (s2 * s4 - s3 * s3) - s1 * (r1 * s4 - s3 * r2) + s2 * (r1 * s3 - s2 * r2)) / det;
    let c1 = (s0 * (r1 * s4 - r2 * s3) - r0 * (s1 * s4 - s3 * s2) + s2 * (s1 * r2 - r1 * s2)) / det;
    (c0, c1 / h)
}

/// The half-width (points each side) used when the caller gives none: about 0.4 % of the
/// trace's points, at least 2 and at most 25 (common practice, no source: enough to tame
/// instrument noise, small against the width of a transition).
pub fn auto_half_width(points: usize) -> usize {
    (points / 250).clamp(2, 25)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn a_quadratic_is_reproduced_with_its_slope_on_an_uneven_grid() {
        // Exact for any polynomial of degree ≤ 2 (least squares reproduces it).
        let t: Vec<f64> = (0..40)
            .map(|i| f64::from(i) + 0.3 * f64::from(i % 3))
            .collect();
        let y: Vec<f64> = t.iter().map(|x| 2.0 - 0.5 * x + 0.03 * x * x).collect();
        let s = savitzky_golay(&t, &y, 4);
        for (i, &x) in t.iter().enumerate() {
            assert_relative_eq!(s.value[i], y[i], epsilon = 1e-9);
            assert_relative_eq!(s.slope[i], -0.5 + 0.06 * x, epsilon = 1e-9);
        }
    }

    #[test]
    fn a_symmetric_peak_keeps_its_position() {
        // Symmetry argument (Savitzky & Golay 1964): the fit at the centre of a symmetric
        // window has a zero slope at the peak of a symmetric feature.
        let t: Vec<f64> = (-50..=50).map(|i| f64::from(i) * 0.1).collect();
        let y: Vec<f64> = t.iter().map(|x| (-x * x / 0.5).exp()).collect();
        let s = savitzky_golay(&t, &y, 5);
        assert_relative_eq!(s.slope[50], 0.0, epsilon = 1e-12);
        let max = (0..t.len())
            .max_by(|&a, &b| s.value[a].total_cmp(&s.value[b]))
            .unwrap_or(0);
        assert_eq!(max, 50);
    }
}
