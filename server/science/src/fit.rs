//! Least-squares fit of the Gordon–Taylor k of a binary pair to the team's own measured
//! points, with the Fox prediction beside it for comparison.
//!
//! Model (Gordon & Taylor 1952, J. Appl. Chem. 2:493): Tg(w₂) = (w₁Tg₁ + k·w₂Tg₂)/(w₁ + k·w₂),
//! w₁ = 1 − w₂ on a solid basis, k on component 2, temperatures in K. The sum of squared
//! residuals is minimised over ln k on [10⁻³, 10³]: a coarse scan finds the basin, a
//! golden-section search refines it. The standard error of k comes from the Jacobian
//! ∂Tg/∂k = w₁w₂(Tg₂ − Tg₁)/(w₁ + k·w₂)² with n − 1 degrees of freedom. Fox (1956) is the
//! special case k = Tg₁/Tg₂.

use serde::{Deserialize, Serialize};

use crate::error::{celsius_to_kelvin_checked, finite, InputError};
use crate::mixture::{fox_binary_k, gordon_taylor_binary};
use crate::units::{c_to_k, k_to_c};

/// Range of k searched (k outside it is not a physical binary glass mixture).
pub const K_MIN: f64 = 1e-3;
pub const K_MAX: f64 = 1e3;
const SCAN_STEPS: usize = 240;

const CAUTION: &str = "A fit to the points given; it supports qualified judgement and says \
    nothing outside the range of compositions measured.";

/// One measured point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitPoint {
    /// Mass fraction of component 2 on a solid basis, 0–1.
    pub w2: f64,
    /// Measured Tg (or Tg'), °C.
    pub tg_c: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
}

/// `gordon-taylor-fit` topic input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GordonTaylorFitInput {
    pub tg1_c: f64,
    pub tg2_c: f64,
    pub points: Vec<FitPoint>,
}

/// One point against both models; residual = measured − model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitResidual {
    pub label: Option<String>,
    pub w2: f64,
    pub measured_tg_c: f64,
    pub fitted_tg_c: f64,
    pub residual_c: f64,
    pub fox_tg_c: f64,
    pub fox_residual_c: f64,
}

/// `gordon-taylor-fit` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GordonTaylorFit {
    pub k: f64,
    /// None with fewer than three points (no degree of freedom left for the scatter).
    pub k_standard_error: Option<f64>,
    pub degrees_of_freedom: usize,
    pub residuals: Vec<FitResidual>,
    pub rms_c: f64,
    pub fox_rms_c: f64,
    /// True when the best k lies at the edge of the searched range: the data do not pin it.
    pub at_search_bound: bool,
    pub reasoning: Vec<String>,
    pub caution: String,
}

struct Data {
    tg1_k: f64,
    tg2_k: f64,
    points: Vec<(f64, f64)>,
}

impl Data {
    fn sum_of_squares(&self, k: f64) -> f64 {
        self.points
            .iter()
            .map(|&(w2, tg)| (tg - gordon_taylor_binary(w2, self.tg1_k, self.tg2_k, k)).powi(2))
            .sum()
    }

    fn jacobian(&self, k: f64) -> impl Iterator<Item = f64> + '_ {
        self.points.iter().map(move |&(w2, _)| {
            let w1 = 1.0 - w2;
            w1 * w2 * (self.tg2_k - self.tg1_k) / (w1 + k * w2).powi(2)
        })
    }
}

fn checked(input: &GordonTaylorFitInput) -> Result<Data, InputError> {
    let tg1_k = celsius_to_kelvin_checked("tg1_c", input.tg1_c)?;
    let tg2_k = celsius_to_kelvin_checked("tg2_c", input.tg2_c)?;
    if (tg2_k - tg1_k).abs() < 1e-6 {
        return Err(InputError::new(
            "tg2_c",
            "the two pure components have the same Tg, so k has no effect and cannot be fitted",
        ));
    }
    if input.points.len() < 2 {
        return Err(InputError::new(
            "points",
            "give at least two measured points",
        ));
    }
    let mut points = Vec::with_capacity(input.points.len());
    for (i, p) in input.points.iter().enumerate() {
        let w2 = finite(&format!("points[{i}].w2"), p.w2)?;
        if !(0.0..=1.0).contains(&w2) {
            return Err(InputError::new(
                format!("points[{i}].w2"),
                format!("must lie between 0 and 1 (got {w2})"),
            ));
        }
        points.push((
            w2,
            celsius_to_kelvin_checked(&format!("points[{i}].tg_c"), p.tg_c)?,
        ));
    }
    if points.iter().all(|&(w2, _)| w2 <= 0.0 || w2 >= 1.0) {
        return Err(InputError::new(
            "points",
            "at least one point must be a true mixture (0 < w2 < 1); pure components do not inform k",
        ));
    }
    Ok(Data {
        tg1_k,
        tg2_k,
        points,
    })
}

/// Fit Gordon–Taylor k to measured points (module docs for the method). Needs at least two
/// points, one of them a true mixture; a standard error needs at least three.
pub fn fit_gordon_taylor(input: &GordonTaylorFitInput) -> Result<GordonTaylorFit, InputError> {
    let data = checked(input)?;
    let n = data.points.len();
    let objective = |u: f64| data.sum_of_squares(u.exp());
    let (lo, hi) = (K_MIN.ln(), K_MAX.ln());
    let grid = |i: usize| lo + (hi - lo) * i as f64 / SCAN_STEPS as f64;
    let best = (0..=SCAN_STEPS)
        .min_by(|&i, &j| objective(grid(i)).total_cmp(&objective(grid(j))))
        .unwrap_or(0);
    let u = crate::roots::golden_section_min(
        objective,
        grid(best.saturating_sub(1)),
        grid((best + 1).min(SCAN_STEPS)),
    );
    let k = u.exp().clamp(K_MIN, K_MAX);
    let at_search_bound = best == 0 || best == SCAN_STEPS;

    let sse = data.sum_of_squares(k);
    let jtj: f64 = data.jacobian(k).map(|j| j * j).sum();
    let dof = n - 1;
    let k_standard_error = (n >= 3 && jtj > 0.0).then(|| (sse / dof as f64 / jtj).sqrt());

    let residuals: Vec<FitResidual> = input
        .points
        .iter()
        .zip(&data.points)
        .map(|(p, &(w2, tg_k))| {
            let fitted = gordon_taylor_binary(w2, data.tg1_k, data.tg2_k, k);
            let fox = fox_binary_k(w2, data.tg1_k, data.tg2_k);
            FitResidual {
                label: p.label.clone(),
                w2,
                measured_tg_c: p.tg_c,
                fitted_tg_c: k_to_c(fitted),
                residual_c: tg_k - fitted,
                fox_tg_c: k_to_c(fox),
                fox_residual_c: tg_k - fox,
            }
        })
        .collect();
    let rms = |f: fn(&FitResidual) -> f64| {
        (residuals.iter().map(|r| f(r).powi(2)).sum::<f64>() / n as f64).sqrt()
    };
    let (rms_c, fox_rms_c) = (rms(|r| r.residual_c), rms(|r| r.fox_residual_c));

    let mut reasoning = vec![format!(
        "Least squares over {n} points gives k = {k:.4}, with an rms residual of {rms_c:.2} °C."
    )];
    match k_standard_error {
        Some(se) => reasoning.push(format!(
            "Standard error of k: {se:.4} ({dof} degrees of freedom)."
        )),
        None => reasoning.push(
            "A standard error needs at least three points; with two, k passes as close as it \
             can to both and the scatter cannot be judged."
                .into(),
        ),
    }
    reasoning.push(format!(
        "Fox (k = Tg₁/Tg₂ = {:.4}) leaves an rms residual of {fox_rms_c:.2} °C.",
        data.tg1_k / data.tg2_k
    ));
    if at_search_bound {
        reasoning.push(format!(
            "The best k lies at the edge of the range searched ({K_MIN} to {K_MAX}): the \
             points do not determine k; check them and the pure-component values."
        ));
    }
    Ok(GordonTaylorFit {
        k,
        k_standard_error,
        degrees_of_freedom: dof,
        residuals,
        rms_c,
        fox_rms_c,
        at_search_bound,
        reasoning,
        caution: CAUTION.into(),
    })
}

/// `gordon-taylor-fit` topic.
pub fn calc_gordon_taylor_fit(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: GordonTaylorFitInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&fit_gordon_taylor(&req)?)
}

/// Model Tg in °C at `w2` for a given k, for charts beside the fitted points.
pub fn gordon_taylor_curve_c(tg1_c: f64, tg2_c: f64, k: f64, w2: f64) -> f64 {
    k_to_c(gordon_taylor_binary(w2, c_to_k(tg1_c), c_to_k(tg2_c), k))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use serde_json::json;

    // Pure-component Tg' of sucrose −32 °C and dextran ≈ −10 °C (literature value, from memory).
    const TG1_C: f64 = -32.0;
    const TG2_C: f64 = -10.0;

    fn points_from(f: impl Fn(f64) -> f64, ws: &[f64]) -> Vec<FitPoint> {
        ws.iter()
            .map(|&w2| FitPoint {
                w2,
                tg_c: f(w2),
                label: None,
            })
            .collect()
    }

    fn fit(points: Vec<FitPoint>) -> GordonTaylorFit {
        fit_gordon_taylor(&GordonTaylorFitInput {
            tg1_c: TG1_C,
            tg2_c: TG2_C,
            points,
        })
        .unwrap()
    }

    #[test]
    fn exact_gordon_taylor_points_give_back_their_k() {
        let pts = points_from(
            |w| gordon_taylor_curve_c(TG1_C, TG2_C, 0.6, w),
            &[0.2, 0.5, 0.8],
        );
        let r = fit(pts);
        assert_relative_eq!(r.k, 0.6, max_relative = 1e-6);
        assert!(r.rms_c < 1e-6);
        assert!(r.k_standard_error.unwrap() < 1e-4);
        assert!(!r.at_search_bound);
    }

    #[test]
    fn fox_points_are_fitted_by_k_equal_to_the_ratio_of_tgs() {
        // Algebraic identity: Gordon–Taylor with k = Tg₁/Tg₂ (K) is the Fox equation.
        let fox = |w: f64| k_to_c(fox_binary_k(w, c_to_k(TG1_C), c_to_k(TG2_C)));
        let r = fit(points_from(fox, &[0.1, 0.3, 0.6, 0.9]));
        assert_relative_eq!(r.k, c_to_k(TG1_C) / c_to_k(TG2_C), max_relative = 1e-6);
        assert!(r.fox_rms_c < 1e-9);
    }

    #[test]
    fn noisy_points_meet_the_least_squares_condition() {
        // Hand-made scatter of ±0.4 °C around k = 1.5; at the optimum Σ rᵢ·∂Tgᵢ/∂k = 0.
        let noise = [0.4, -0.3, 0.2, -0.4, 0.1];
        let ws = [0.1, 0.3, 0.5, 0.7, 0.9];
        let pts: Vec<_> = ws
            .iter()
            .zip(noise)
            .map(|(&w2, e)| FitPoint {
                w2,
                tg_c: gordon_taylor_curve_c(TG1_C, TG2_C, 1.5, w2) + e,
                label: Some(format!("w{w2}")),
            })
            .collect();
        let r = fit(pts.clone());
        let data = checked(&GordonTaylorFitInput {
            tg1_c: TG1_C,
            tg2_c: TG2_C,
            points: pts,
        })
        .unwrap();
        let gradient: f64 = r
            .residuals
            .iter()
            .zip(data.jacobian(r.k))
            .map(|(res, j)| res.residual_c * j)
            .sum();
        assert!(gradient.abs() < 1e-6, "{gradient}");
        assert!((r.k - 1.5).abs() < 0.5);
        let se = r.k_standard_error.unwrap();
        assert!(se > 0.0 && se < 1.0);
        assert_eq!(r.degrees_of_freedom, 4);
        assert_eq!(r.residuals[0].label.as_deref(), Some("w0.1"));
    }

    #[test]
    fn two_points_give_k_but_no_standard_error() {
        let pts = points_from(|w| gordon_taylor_curve_c(TG1_C, TG2_C, 2.0, w), &[0.3, 0.7]);
        let r = fit(pts);
        assert_relative_eq!(r.k, 2.0, max_relative = 1e-6);
        assert!(r.k_standard_error.is_none());
        assert!(r.reasoning.iter().any(|l| l.contains("at least three")));
    }

    #[test]
    fn points_outside_the_pure_components_push_k_to_the_search_bound_without_panicking() {
        let r = fit(points_from(|_| -50.0, &[0.3, 0.5, 0.7]));
        assert!(r.at_search_bound);
        assert!(r.k.is_finite());
    }

    #[test]
    fn bad_fit_inputs_are_refused_with_their_field_named() {
        let field = |v| calc_gordon_taylor_fit(v).unwrap_err().field;
        let p = |w2: f64| json!({"w2": w2, "tg_c": -20.0});
        assert_eq!(
            field(json!({"tg1_c": -32.0, "tg2_c": -10.0, "points": [p(0.5)]})),
            "points"
        );
        assert_eq!(
            field(json!({"tg1_c": -32.0, "tg2_c": -10.0, "points": []})),
            "points"
        );
        assert_eq!(
            field(json!({"tg1_c": -32.0, "tg2_c": -10.0, "points": [p(0.5), p(1.5)]})),
            "points[1].w2"
        );
        assert_eq!(
            field(json!({"tg1_c": -32.0, "tg2_c": -10.0, "points": [p(-0.1), p(0.5)]})),
            "points[0].w2"
        );
        assert_eq!(
            field(json!({"tg1_c": -32.0, "tg2_c": -10.0, "points": [p(0.0), p(1.0)]})),
            "points"
        );
        assert_eq!(
            field(json!({"tg1_c": -32.0, "tg2_c": -32.0, "points": [p(0.2), p(0.5)]})),
            "tg2_c"
        );
        assert_eq!(
            field(json!({"tg1_c": -300.0, "tg2_c": -10.0, "points": [p(0.2), p(0.5)]})),
            "tg1_c"
        );
        assert_eq!(
            field(
                json!({"tg1_c": -32.0, "tg2_c": -10.0, "points": [p(0.2), {"w2": 0.5, "tg_c": -400.0}]})
            ),
            "points[1].tg_c"
        );
        let nan = GordonTaylorFitInput {
            tg1_c: TG1_C,
            tg2_c: TG2_C,
            points: vec![
                FitPoint {
                    w2: f64::NAN,
                    tg_c: -20.0,
                    label: None,
                },
                FitPoint {
                    w2: 0.5,
                    tg_c: -20.0,
                    label: None,
                },
            ],
        };
        assert_eq!(fit_gordon_taylor(&nan).unwrap_err().field, "points[0].w2");
    }
}
