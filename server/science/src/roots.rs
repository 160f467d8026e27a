//! Bracketed root finding and minimisation. Roots: Brent's method (inverse quadratic interpolation and secant steps,
//! falling back to bisection), after Brent (1973), *Algorithms for Minimization without
//! Derivatives*, ch. 4. A root is always kept inside a sign-changing bracket, so the
//! method cannot wander off, and it converges superlinearly on smooth functions.

/// Why a root could not be found, with the values that show it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RootError {
    #[error("no sign change between x = {lo} (f = {f_lo}) and x = {hi} (f = {f_hi})")]
    NoBracket {
        lo: f64,
        hi: f64,
        f_lo: f64,
        f_hi: f64,
    },
    #[error("the function is not finite at x = {x} (f = {fx})")]
    NotFinite { x: f64, fx: f64 },
    #[error("no convergence after {iterations} iterations (bracket [{lo}, {hi}])")]
    NoConvergence { iterations: u32, lo: f64, hi: f64 },
}

/// A root `x` (within the requested tolerance), its function value and the work it took.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Root {
    pub x: f64,
    pub fx: f64,
    pub iterations: u32,
}

const MAX_ITERATIONS: u32 = 200;

/// A root of `f` between `lo` and `hi` (which must bracket a sign change), located to within
/// `x_tol` (absolute, in units of x).
///
/// ```
/// let root = glasspoint_science::roots::brent(|x| x * x - 2.0, 0.0, 2.0, 1e-12).unwrap();
/// assert!((root.x - 2f64.sqrt()).abs() < 1e-10);
/// ```
pub fn brent(
    mut f: impl FnMut(f64) -> f64,
    lo: f64,
    hi: f64,
    x_tol: f64,
) -> Result<Root, RootError> {
    let eval = |f: &mut dyn FnMut(f64) -> f64, x: f64| {
        let fx = f(x);
        if fx.is_finite() {
            Ok(fx)
        } else {
            Err(RootError::NotFinite { x, fx })
        }
    };
    let (mut a, mut b) = (lo, hi);
    let (mut fa, mut fb) = (eval(&mut f, a)?, eval(&mut f, b)?);
    if (fa > 0.0) == (fb > 0.0) && fa != 0.0 && fb != 0.0 {
        return Err(RootError::NoBracket {
            lo,
            hi,
            f_lo: fa,
            f_hi: fb,
        });
    }
    // `c` is the previous iterate on the other side of the root from `b`.
    let (mut c, mut fc) = (b, fb);
    let (mut d, mut e) = (b - a, b - a);
    for iterations in 0..MAX_ITERATIONS {
        if (fb > 0.0) == (fc > 0.0) {
            (c, fc) = (a, fa);
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            (a, fa) = (b, fb);
            (b, fb) = (c, fc);
            (c, fc) = (a, fa);
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * x_tol;
        let half = 0.5 * (c - b);
        if half.abs() <= tol || fb == 0.0 {
            return Ok(Root {
                x: b,
                fx: fb,
                iterations,
            });
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q) = if a.to_bits() == c.to_bits() {
                (2.0 * half * s, 1.0 - s) // secant
            } else {
                let (qa, r) = (fa / fc, fb / fc); // inverse quadratic interpolation
                (
                    s * (2.0 * half * qa * (qa - r) - (b - a) * (r - 1.0)),
                    (qa - 1.0) * (r - 1.0) * (s - 1.0),
                )
            };
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * half * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = half;
                e = d;
            }
        } else {
            d = half;
            e = d;
        }
        (a, fa) = (b, fb);
        b += if d.abs() > tol { d } else { tol.copysign(half) };
        fb = eval(&mut f, b)?;
    }
    Err(RootError::NoConvergence {
        iterations: MAX_ITERATIONS,
        lo: b.min(c),
        hi: b.max(c),
    })
}

/// A root of a monotone `f` between `lo` and `hi` by Newton's method kept inside the
/// bracket (a step that would leave it bisects instead), starting from `guess`. `f` returns
/// the value and the derivative; `decreasing` says which way it runs, so the ends need not
/// be evaluated unless the iteration never sees both signs. Far cheaper than [`brent`] from
/// a good guess.
pub fn newton_in_bracket(
    mut f: impl FnMut(f64) -> (f64, f64),
    lo: f64,
    hi: f64,
    guess: f64,
    decreasing: bool,
    x_tol: f64,
) -> Result<Root, RootError> {
    let (mut a, mut b) = (lo, hi); // the root lies right of `a` and left of `b`
    let (mut seen_left, mut seen_right) = (false, false);
    let mut x = guess.clamp(lo, hi);
    for iterations in 1..=MAX_ITERATIONS {
        let (fx, dfx) = f(x);
        if !fx.is_finite() || !dfx.is_finite() {
            return Err(RootError::NotFinite { x, fx });
        }
        if fx == 0.0 {
            return Ok(Root { x, fx, iterations });
        }
        if (fx > 0.0) == decreasing {
            (a, seen_left) = (x, true);
        } else {
            (b, seen_right) = (x, true);
        }
        let newton = x - fx / dfx;
        let next = if dfx != 0.0 && newton > a && newton < b {
            newton
        } else {
            0.5 * (a + b)
        };
        if (next - x).abs() <= x_tol || b - a <= x_tol {
            // Converged; confirm a sign change if only one side of the root was visited.
            let unchecked_end = match (seen_left, seen_right) {
                (true, true) => None,
                (true, false) => Some((hi, true)),
                _ => Some((lo, false)),
            };
            if let Some((end, is_hi)) = unchecked_end {
                let (f_end, _) = f(end);
                if (f_end > 0.0) == (fx > 0.0) && f_end != 0.0 {
                    let (f_lo, f_hi) = if is_hi { (fx, f_end) } else { (f_end, fx) };
                    return Err(RootError::NoBracket { lo, hi, f_lo, f_hi });
                }
            }
            return Ok(Root {
                x: next,
                fx,
                iterations,
            });
        }
        x = next;
    }
    Err(RootError::NoConvergence {
        iterations: MAX_ITERATIONS,
        lo: a,
        hi: b,
    })
}

/// Steps of [`golden_section_min`] at the most (the bracket shrinks by 0.618 each step, so
/// far fewer are needed for any bracket of finite numbers).
const GOLDEN_ITERATIONS: usize = 200;

/// The minimum of a unimodal `f` on `[a, b]` by golden-section search (Kiefer 1953; any
/// numerical-methods text). The ends are compared too: the minimum may sit on one.
pub fn golden_section_min(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..GOLDEN_ITERATIONS {
        if (b - a).abs() <= 1e-15 * (a.abs() + b.abs()).max(f64::MIN_POSITIVE) {
            break;
        }
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - r * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + r * (b - a);
            fd = f(d);
        }
    }
    let mid = 0.5 * (a + b);
    [a, mid, b]
        .into_iter()
        .min_by(|x, y| f(*x).total_cmp(&f(*y)))
        .unwrap_or(mid)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn the_square_root_of_two_is_found_to_the_tolerance() {
        let root = brent(|x| x * x - 2.0, 0.0, 2.0, 1e-13).unwrap();
        assert_relative_eq!(root.x, std::f64::consts::SQRT_2, max_relative = 1e-12);
    }

    #[test]
    fn a_cubic_with_a_reversed_bracket_is_solved() {
        // x³ − 2x − 5 = 0, the classic test equation; root 2.0945514815423265.
        let root = brent(|x| x.powi(3) - 2.0 * x - 5.0, 3.0, 2.0, 1e-14).unwrap();
        assert_relative_eq!(root.x, 2.094_551_481_542_326_5, max_relative = 1e-12);
        assert!(root.iterations < 12, "took {} iterations", root.iterations);
    }

    #[test]
    fn a_root_at_an_end_of_the_bracket_is_returned() {
        let root = brent(|x| x - 1.0, 1.0, 4.0, 1e-12).unwrap();
        assert_relative_eq!(root.x, 1.0);
    }

    #[test]
    fn a_steep_exponential_converges_quickly() {
        let root = brent(|x: f64| (20.0 * x).exp() - 1e5, -1.0, 3.0, 1e-12).unwrap();
        assert_relative_eq!(root.x, 1e5f64.ln() / 20.0, max_relative = 1e-10);
        assert!(root.iterations < 40, "took {} iterations", root.iterations);
    }

    #[test]
    fn a_bracket_without_a_sign_change_is_refused_with_its_values() {
        let err = brent(|x| x * x + 1.0, -1.0, 2.0, 1e-9).unwrap_err();
        assert_eq!(
            err,
            RootError::NoBracket {
                lo: -1.0,
                hi: 2.0,
                f_lo: 2.0,
                f_hi: 5.0
            }
        );
    }

    #[test]
    fn a_non_finite_value_is_reported_where_it_occurs() {
        let err = brent(|x: f64| x.ln(), -1.0, 2.0, 1e-9).unwrap_err();
        assert!(matches!(err, RootError::NotFinite { x, .. } if x < 0.0));
    }
    #[test]
    fn newton_in_a_bracket_finds_the_root_of_a_steep_exponential_from_either_side() {
        let f = |x: f64| (1e5 - (20.0 * x).exp(), -20.0 * (20.0 * x).exp());
        let expected = 1e5f64.ln() / 20.0;
        for guess in [-1.0, 0.2, 0.6, 3.0] {
            let root = newton_in_bracket(f, -1.0, 3.0, guess, true, 1e-12).unwrap();
            assert_relative_eq!(root.x, expected, max_relative = 1e-10);
            assert!(
                root.iterations < 60,
                "took {} from {guess}",
                root.iterations
            );
        }
    }

    #[test]
    fn newton_in_a_bracket_converges_in_a_few_steps_from_a_near_guess() {
        let root =
            newton_in_bracket(|x| (x * x - 2.0, 2.0 * x), 0.0, 2.0, 1.4, false, 1e-12).unwrap();
        assert_relative_eq!(root.x, std::f64::consts::SQRT_2, max_relative = 1e-12);
        assert!(root.iterations <= 5, "took {}", root.iterations);
    }

    #[test]
    fn newton_in_a_bracket_without_a_root_is_refused() {
        let err = newton_in_bracket(|x| (x * x + 1.0, 2.0 * x), 0.0, 2.0, 1.0, false, 1e-9);
        assert!(matches!(err, Err(RootError::NoBracket { .. })), "{err:?}");
    }

    #[test]
    fn golden_section_finds_a_parabola_minimum_and_a_minimum_on_an_end() {
        // Analytic (common practice, no source): (x − 0.3)² on [0, 1] has its minimum at 0.3;
        // x on [2, 5] at its left end.
        let x = super::golden_section_min(|x| (x - 0.3) * (x - 0.3), 0.0, 1.0);
        assert!((x - 0.3).abs() < 1e-7, "{x}");
        let e = super::golden_section_min(|x| x, 2.0, 5.0);
        assert!((e - 2.0).abs() < 1e-9, "{e}");
    }
}
