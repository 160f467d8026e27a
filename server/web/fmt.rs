//! Number formatting for pages: one place, so every page shows values alike. Functions
//! take values or references alike, as templates pass both.

use std::borrow::Borrow;

pub fn num1(v: impl Borrow<f64>) -> String {
    let v = *v.borrow();
    if v.is_finite() {
        format!("{v:.1}").replace('-', "−")
    } else {
        "—".into()
    }
}

pub fn num2(v: impl Borrow<f64>) -> String {
    let v = *v.borrow();
    if v.is_finite() {
        format!("{v:.2}").replace('-', "−")
    } else {
        "—".into()
    }
}

pub fn opt1(v: impl Borrow<Option<f64>>) -> String {
    v.borrow().as_ref().map(num1).unwrap_or_else(|| "—".into())
}

pub fn opt2(v: impl Borrow<Option<f64>>) -> String {
    v.borrow().as_ref().map(num2).unwrap_or_else(|| "—".into())
}

/// A value as typed, without trailing zeros.
pub fn trim(v: impl Borrow<f64>) -> String {
    crate::storage::trim_number(*v.borrow()).replace('-', "−")
}

pub fn opt_plain(v: impl Borrow<Option<f64>>) -> String {
    v.borrow().as_ref().map(trim).unwrap_or_else(|| "—".into())
}

pub fn opt_unit(v: impl Borrow<Option<f64>>, unit: &str) -> String {
    v.borrow()
        .as_ref()
        .map(|v| format!("{} {unit}", trim(v)))
        .unwrap_or_else(|| "—".into())
}

pub fn percent(fraction: impl Borrow<f64>) -> String {
    format!("{:.1} %", fraction.borrow() * 100.0)
}

/// Scientific notation for small coefficients (2.6e-4 → "2.60×10⁻⁴" is hard to type; keep e).
pub fn sci(v: impl Borrow<f64>) -> String {
    format!("{:.2e}", v.borrow())
}

pub fn date(d: &time::Date) -> String {
    crate::domain::fields::format_date(*d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn negative_values_use_a_true_minus_sign() {
        assert_eq!(num1(-32.04), "−32.0");
    }

    #[test]
    fn missing_values_show_a_dash() {
        assert_eq!(opt1(None), "—");
    }
}
