//! Least squares for y = c0 + c1·x/(1 + c2·x) with c2 ≥ 0: the shape of both Kv(P) and
//! Rp(l). For a fixed c2 the model is linear in c0 and c1 and solved exactly; c2 is found
//! by a scan on a logarithmic grid scaled to the data (and c2 = 0) and refined by a
//! golden-section search between the best grid point's neighbours.

/// Grid of c2·x_max values scanned, 10⁻⁴ to 10⁴ (beyond, the curve is a straight line or a
/// step and c2 is not pinned by any data).
const SCAN_LOW: f64 = 1e-4;
const SCAN_HIGH: f64 = 1e4;
const SCAN_STEPS: usize = 400;

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SaturatingFit {
    pub c0: f64,
    pub c1: f64,
    pub c2: f64,
    /// Measured minus fitted, in the units of y.
    pub residuals: Vec<f64>,
    pub rms: f64,
    /// Standard errors of c0, c1, c2 with n − 3 degrees of freedom (more than 3 points).
    pub standard_errors: Option<[f64; 3]>,
    /// True when c2 lies at the top of the searched range: the data do not pin it.
    pub at_upper_bound: bool,
}

/// Linear least squares of y = c0 + c1·u for the transformed u; the sum of squares too.
fn linear(us: &[f64], ys: &[f64]) -> Option<(f64, f64, f64)> {
    let n = us.len() as f64;
    let mu = us.iter().sum::<f64>() / n;
    let my = ys.iter().sum::<f64>() / n;
    let suu: f64 = us.iter().map(|u| (u - mu) * (u - mu)).sum();
    let suy: f64 = us.iter().zip(ys).map(|(u, y)| (u - mu) * (y - my)).sum();
    if suu <= 0.0 || !suu.is_finite() {
        return None;
    }
    let c1 = suy / suu;
    let c0 = my - c1 * mu;
    let ss = us
        .iter()
        .zip(ys)
        .map(|(u, y)| (y - c0 - c1 * u).powi(2))
        .sum();
    Some((c0, c1, ss))
}

fn at_c2(xs: &[f64], ys: &[f64], c2: f64) -> Option<(f64, f64, f64)> {
    let us: Vec<f64> = xs.iter().map(|x| x / (1.0 + c2 * x)).collect();
    linear(&us, ys)
}

/// Fit `(xs, ys)`; `None` when fewer than three distinct x make the fit undetermined (the
/// caller checks that first and names its field).
pub(crate) fn fit(xs: &[f64], ys: &[f64]) -> Option<SaturatingFit> {
    let x_max = xs.iter().copied().fold(0.0, f64::max);
    if xs.len() < 3 || x_max <= 0.0 {
        return None;
    }
    let ss = |c2: f64| at_c2(xs, ys, c2).map_or(f64::INFINITY, |r| r.2);
    let mut grid = Vec::with_capacity(SCAN_STEPS + 2);
    grid.push(0.0);
    let ratio = (SCAN_HIGH / SCAN_LOW).ln() / SCAN_STEPS as f64;
    grid.extend((0..=SCAN_STEPS).map(|i| SCAN_LOW * (ratio * i as f64).exp() / x_max));
    let values: Vec<f64> = grid.iter().map(|&c| ss(c)).collect();
    let best = values
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(b.1))
        .map(|(i, _)| i)?;
    let lo = grid[best.saturating_sub(1)];
    let hi = grid[(best + 1).min(grid.len() - 1)];
    let c2 = crate::roots::golden_section_min(ss, lo, hi).min(grid[grid.len() - 1]);
    let (c0, c1, _) = at_c2(xs, ys, c2)?;
    let model = |x: f64| c0 + c1 * x / (1.0 + c2 * x);
    let residuals: Vec<f64> = xs.iter().zip(ys).map(|(&x, &y)| y - model(x)).collect();
    let sum_sq: f64 = residuals.iter().map(|r| r * r).sum();
    let n = xs.len();
    let rms = (sum_sq / n as f64).sqrt();
    let standard_errors = (n > 3)
        .then(|| {
            let jacobian: Vec<[f64; 3]> = xs
                .iter()
                .map(|&x| {
                    let d = 1.0 + c2 * x;
                    [1.0, x / d, -c1 * x * x / (d * d)]
                })
                .collect();
            let variance = sum_sq / (n - 3) as f64;
            covariance_diagonal(&jacobian).map(|d| d.map(|v| (variance * v).sqrt()))
        })
        .flatten();
    Some(SaturatingFit {
        c0,
        c1,
        c2,
        residuals,
        rms,
        standard_errors,
        at_upper_bound: best + 1 >= grid.len(),
    })
}

/// The diagonal of (JᵀJ)⁻¹ for a three-column Jacobian; `None` when JᵀJ is singular.
fn covariance_diagonal(jacobian: &[[f64; 3]]) -> Option<[f64; 3]> {
    let mut m = [[0.0; 3]; 3];
    for row in jacobian {
        for i in 0..3 {
            for j in 0..3 {
                m[i][j] += row[i] * row[j];
            }
        }
    }
    let cof = |i: usize, j: usize| {
        let (r0, r1) = ((i + 1) % 3, (i + 2) % 3);
        let (k0, k1) = ((j + 1) % 3, (j + 2) % 3);
        m[r0][k0] * m[r1][k1] - m[r0][k1] * m[r1][k0]
    };
    let det = m[0][0] * cof(0, 0) + m[0][1] * cof(0, 1) + m[0][2] * cof(0, 2);
    let scale = m[0][0] * m[1][1] * m[2][2];
    if !det.is_finite() || det.abs() <= 1e-14 * scale.abs().max(f64::MIN_POSITIVE) {
        return None;
    }
    let d = [cof(0, 0) / det, cof(1, 1) / det, cof(2, 2) / det];
    d.iter().all(|v| *v >= 0.0 && v.is_finite()).then_some(d)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn an_exact_saturating_curve_is_recovered() {
        // Analytic: data made from the model itself (common practice, no source).
        let xs = [0.05, 0.1, 0.15, 0.2, 0.3, 0.5];
        let ys: Vec<f64> = xs
            .iter()
            .map(|x| 2.0 + 10.0 * x / (1.0 + 3.0 * x))
            .collect();
        let f = fit(&xs, &ys).unwrap();
        assert_relative_eq!(f.c0, 2.0, max_relative = 1e-6);
        assert_relative_eq!(f.c1, 10.0, max_relative = 1e-6);
        assert_relative_eq!(f.c2, 3.0, max_relative = 1e-6);
        assert!(f.rms < 1e-9);
    }

    #[test]
    fn a_straight_line_gives_c2_zero() {
        let xs = [0.0, 0.5, 1.0, 1.5];
        let ys: Vec<f64> = xs.iter().map(|x| 1.4 + 16.0 * x).collect();
        let f = fit(&xs, &ys).unwrap();
        assert!(f.c2 < 1e-6, "c2 = {}", f.c2);
        assert_relative_eq!(f.c1, 16.0, max_relative = 1e-5);
    }
}
