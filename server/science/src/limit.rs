//! The maximum allowable product temperature in primary drying: the governing critical
//! temperature of the frozen formulation minus a safety margin.
//!
//! Order of preference: measured collapse onset; else measured Tg' (conservative, since
//! collapse of dilute sugar systems usually lies 1–3 °C above it — from memory); else a
//! Tg' estimated from composition, flagged, with a wider margin. A eutectic Te governs when
//! the matrix is crystalline and nothing amorphous is known, or whenever it gives the lower
//! limit (melting of that phase would come before collapse). For a
//! crystalline matrix with a higher Te, the Te-governed limit is offered as an alternative.
//! Margins: 2–5 °C below collapse is common practice (Tang & Pikal 2004, Pharm. Res.
//! 21:191); the defaults below are the team's.

use serde::{Deserialize, Serialize};

use crate::error::{celsius_to_kelvin_checked, non_negative, InputError};

/// Team default margin below a measured critical temperature, °C.
pub const DEFAULT_MARGIN_C: f64 = 2.0;
/// Default margin below an estimated Tg', °C (common practice, no source).
pub const DEFAULT_ESTIMATE_MARGIN_C: f64 = 5.0;
/// Largest margin accepted; more suggests a typo or a unit mix-up.
pub const MAX_MARGIN_C: f64 = 20.0;

const CAUTION: &str = "A derived limit to support qualified judgement; it does not replace \
    experimental confirmation of the cycle.";
const EUTECTIC_CAUTION: &str = "Drying above Tg' and up to Te relies on the crystallized \
    phase holding the cake together; any amorphous part (stabilizer, protein, uncrystallized \
    bulking agent) is above its Tg' and may collapse locally, and a stabilizer may lose its \
    protective effect. Confirm by freeze-drying microscopy and cake inspection.";

/// A temperature of the frozen state (Tg', Tc, Te), which cannot lie above 0 °C.
pub(crate) fn frozen_state_temp_c(field: &str, temp_c: f64) -> Result<f64, InputError> {
    celsius_to_kelvin_checked(field, temp_c)?;
    if temp_c > 0.0 {
        return Err(InputError::new(
            field,
            format!("a frozen-state temperature lies below 0 °C (got {temp_c} °C)"),
        ));
    }
    Ok(temp_c)
}

/// A margin: non-negative and at most [`MAX_MARGIN_C`].
pub(crate) fn margin_c(field: &str, value: f64) -> Result<f64, InputError> {
    let m = non_negative(field, value)?;
    if m > MAX_MARGIN_C {
        return Err(InputError::new(
            field,
            format!("a margin above {MAX_MARGIN_C} °C is not sensible (got {m} °C)"),
        ));
    }
    Ok(m)
}

/// What the critical temperature was taken from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitBasis {
    CollapseOnset,
    TgPrime,
    TgPrimeEstimate,
    Eutectic,
}

/// What a limit guards against, which decides the product temperature it is compared with:
/// collapse of the amorphous phase begins at the sublimation front, so the front governs;
/// eutectic melting begins in the warmest ice, at the vial bottom, so the warmer of front and
/// bottom governs.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitKind {
    #[default]
    Collapse,
    Eutectic,
}

impl LimitBasis {
    /// Whether a limit on this basis guards against collapse or eutectic melting.
    pub fn kind(self) -> LimitKind {
        match self {
            Self::Eutectic => LimitKind::Eutectic,
            _ => LimitKind::Collapse,
        }
    }
}

/// `product-limit` topic input. All temperatures in °C.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ProductLimitInput {
    pub collapse_onset_c: Option<f64>,
    pub tg_prime_c: Option<f64>,
    pub tg_prime_estimate_c: Option<f64>,
    /// The lowest Te of every component expected to crystallize, whatever its share of the
    /// solids: a minority salt that crystallizes melts at its Te all the same.
    pub eutectic_c: Option<f64>,
    /// Margin below a measured critical temperature; 2 °C when omitted.
    pub margin_c: Option<f64>,
    /// Margin below an estimated Tg'; 5 °C when omitted, never less than `margin_c`.
    pub estimate_margin_c: Option<f64>,
    /// True when a crystallized solute forms the matrix (e.g. mannitol, glycine).
    pub crystalline_matrix: bool,
}

/// The Te-governed limit offered beside an amorphous one for a crystalline matrix.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AlternativeLimit {
    pub basis: LimitBasis,
    pub critical_temp_c: f64,
    pub margin_c: f64,
    pub max_product_temp_c: f64,
    pub caution: String,
}

/// `product-limit` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProductLimit {
    pub critical_temp_c: f64,
    pub basis: LimitBasis,
    pub margin_c: f64,
    pub max_product_temp_c: f64,
    /// True when the limit rests on an estimate rather than a measurement.
    pub flagged: bool,
    pub reasoning: Vec<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub alternative: Option<AlternativeLimit>,
    pub caution: String,
}

/// The maximum allowable product temperature and its chain of reasoning (module docs for
/// the order and the published rule of thumb). The result is never above the critical
/// temperature. Refuses an input with nothing to base a limit on, naming `collapse_onset_c`.
pub fn product_limit(input: &ProductLimitInput) -> Result<ProductLimit, InputError> {
    let checked =
        |field: &str, v: Option<f64>| v.map(|t| frozen_state_temp_c(field, t)).transpose();
    let collapse = checked("collapse_onset_c", input.collapse_onset_c)?;
    let tg_prime = checked("tg_prime_c", input.tg_prime_c)?;
    let estimate = checked("tg_prime_estimate_c", input.tg_prime_estimate_c)?;
    let eutectic = checked("eutectic_c", input.eutectic_c)?;
    let margin = match input.margin_c {
        Some(m) => margin_c("margin_c", m)?,
        None => DEFAULT_MARGIN_C,
    };
    let estimate_margin = match input.estimate_margin_c {
        Some(m) => margin_c("estimate_margin_c", m)?,
        None => DEFAULT_ESTIMATE_MARGIN_C,
    }
    .max(margin);

    let mut reasoning = Vec::new();
    let amorphous = if let Some(tc) = collapse {
        reasoning.push(format!(
            "A measured collapse onset of {tc:.1} °C is the most direct critical temperature."
        ));
        match tg_prime {
            Some(tg) if tg > tc => reasoning.push(format!(
                "Tg' was measured at {tg:.1} °C, above the collapse onset: unusual, so check \
                 both measurements."
            )),
            Some(tg) => reasoning.push(format!(
                "Tg' was measured at {tg:.1} °C, {:.1} °C below the collapse onset.",
                tc - tg
            )),
            None => {}
        }
        Some((LimitBasis::CollapseOnset, tc, margin))
    } else if let Some(tg) = tg_prime {
        reasoning.push(format!(
            "No collapse temperature was measured; the measured Tg' of {tg:.1} °C is used. \
             It is conservative: in dilute sugar systems collapse usually begins 1–3 °C \
             above Tg' (far more with high protein content)."
        ));
        Some((LimitBasis::TgPrime, tg, margin))
    } else if let Some(est) = estimate {
        reasoning.push(format!(
            "Nothing measured is available; the Tg' estimated from composition, {est:.1} °C, \
             is used with a wider margin of {estimate_margin:.1} °C because estimates can be \
             off by several degrees. Measure Tg' or the collapse onset before relying on it."
        ));
        Some((LimitBasis::TgPrimeEstimate, est, estimate_margin))
    } else {
        None
    };

    let (basis, critical, used_margin, alternative) = match (amorphous, eutectic) {
        (None, None) => {
            return Err(InputError::new(
                "collapse_onset_c",
                "give at least one of collapse_onset_c, tg_prime_c, tg_prime_estimate_c or \
                 eutectic_c",
            ))
        }
        (None, Some(_)) if !input.crystalline_matrix => {
            return Err(InputError::new(
                "crystalline_matrix",
                "only a eutectic temperature was given: set crystalline_matrix to true if a \
                 crystallized solute forms the matrix, or give Tg' or a collapse onset",
            ))
        }
        (None, Some(te)) => {
            reasoning.push(format!(
                "The matrix is crystalline and no amorphous critical temperature was given, \
                 so the eutectic melting at {te:.1} °C governs."
            ));
            (LimitBasis::Eutectic, te, margin, None)
        }
        (Some((basis, t, m)), Some(te)) if te - margin < t - m => {
            reasoning.push(format!(
                "The eutectic at {te:.1} °C gives the lower limit ({:.1} °C against {:.1} °C): \
                 the crystallized phase would melt before the amorphous phase collapses, so \
                 the eutectic governs.",
                te - margin,
                t - m
            ));
            if basis == LimitBasis::TgPrimeEstimate {
                reasoning.push(
                    "The amorphous side rests on an estimate; measure Tg' to confirm which \
                     governs."
                        .into(),
                );
            }
            (LimitBasis::Eutectic, te, margin, None)
        }
        (Some((basis, t, m)), Some(te)) if input.crystalline_matrix => {
            let alt_max = te - margin;
            reasoning.push(format!(
                "The matrix is crystalline with a eutectic at {te:.1} °C: drying up to \
                 {alt_max:.1} °C is offered as an alternative, with its caution about the \
                 amorphous part."
            ));
            let alt = AlternativeLimit {
                basis: LimitBasis::Eutectic,
                critical_temp_c: te,
                margin_c: margin,
                max_product_temp_c: alt_max,
                caution: EUTECTIC_CAUTION.into(),
            };
            (basis, t, m, Some(alt))
        }
        (Some((basis, t, m)), Some(te)) => {
            reasoning.push(format!(
                "A eutectic at {te:.1} °C was given but the matrix is not marked crystalline, \
                 so it does not raise the limit."
            ));
            (basis, t, m, None)
        }
        (Some((basis, t, m)), None) => (basis, t, m, None),
    };

    let max_product = critical - used_margin;
    reasoning.push(format!(
        "Maximum product temperature = {critical:.1} °C − {used_margin:.1} °C margin = \
         {max_product:.1} °C."
    ));
    if used_margin < DEFAULT_MARGIN_C {
        reasoning.push(
            "A margin under 2 °C is usually accepted only when primary drying is long, \
             where each degree warmer saves much time."
                .into(),
        );
    }
    let caution = if basis == LimitBasis::Eutectic && amorphous.is_none() {
        format!("{CAUTION} {EUTECTIC_CAUTION}")
    } else {
        CAUTION.to_string()
    };
    Ok(ProductLimit {
        critical_temp_c: critical,
        basis,
        margin_c: used_margin,
        max_product_temp_c: max_product,
        flagged: matches!(amorphous, Some((LimitBasis::TgPrimeEstimate, _, _))),
        reasoning,
        alternative,
        caution,
    })
}

/// `product-limit` topic.
pub fn calc_product_limit(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: ProductLimitInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&product_limit(&req)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;
    use serde_json::json;

    fn limit(v: serde_json::Value) -> ProductLimit {
        serde_json::from_value(calc_product_limit(v).unwrap()).unwrap()
    }

    #[test]
    fn a_measured_collapse_onset_governs_over_tg_prime() {
        // Sucrose: Tg' −32 °C, Tc ≈ −32 (Pikal & Shah 1990, from memory).
        let r = limit(json!({"collapse_onset_c": -31.0, "tg_prime_c": -32.0}));
        assert_eq!(r.basis, LimitBasis::CollapseOnset);
        assert_relative_eq!(r.max_product_temp_c, -33.0, max_relative = 1e-12);
        assert!(!r.flagged);
        assert!(r.caution.contains("experimental confirmation"));
    }

    #[test]
    fn measured_tg_prime_governs_when_no_collapse_was_measured() {
        // Trehalose Tg' −29.5 °C (literature value, from memory); team margin 2 °C.
        let r = limit(json!({"tg_prime_c": -29.5, "tg_prime_estimate_c": -20.0}));
        assert_eq!(r.basis, LimitBasis::TgPrime);
        assert_relative_eq!(r.max_product_temp_c, -31.5, max_relative = 1e-12);
    }

    #[test]
    fn an_estimate_is_flagged_and_gets_the_wider_margin() {
        let r = limit(json!({"tg_prime_estimate_c": -31.0, "margin_c": 3.0}));
        assert_eq!(r.basis, LimitBasis::TgPrimeEstimate);
        assert!(r.flagged);
        // Estimate margin 5 °C by default (common practice, no source).
        assert_relative_eq!(r.margin_c, 5.0);
        let r =
            limit(json!({"tg_prime_estimate_c": -31.0, "margin_c": 3.0, "estimate_margin_c": 1.0}));
        assert_relative_eq!(r.margin_c, 3.0);
    }

    #[test]
    fn a_crystalline_matrix_offers_the_eutectic_as_an_alternative() {
        // Mannitol: amorphous Tg' −32 to −35 °C, Te −1.0 to −1.5 °C (literature value, from memory).
        let r = limit(json!({"tg_prime_c": -33.0, "eutectic_c": -1.5, "crystalline_matrix": true}));
        assert_eq!(r.basis, LimitBasis::TgPrime);
        let alt = r.alternative.unwrap();
        assert_eq!(alt.basis, LimitBasis::Eutectic);
        assert_relative_eq!(alt.max_product_temp_c, -3.5, max_relative = 1e-12);
        assert!(alt.caution.contains("amorphous"));
    }

    #[test]
    fn the_eutectic_governs_a_crystalline_matrix_with_nothing_amorphous_known() {
        // Glycine Te −3.0 to −3.5 °C (literature value, from memory).
        let r = limit(json!({"eutectic_c": -3.5, "crystalline_matrix": true}));
        assert_eq!(r.basis, LimitBasis::Eutectic);
        assert_relative_eq!(r.max_product_temp_c, -5.5, max_relative = 1e-12);
        assert!(r.caution.contains("amorphous"));
    }

    #[test]
    fn a_eutectic_below_the_amorphous_limit_governs() {
        // NaCl Te −21.1 °C (Drebushchak et al. 2017); a dextran-like Tg' of −11 °C (from memory).
        let r = limit(json!({"tg_prime_c": -11.0, "eutectic_c": -21.1}));
        assert_eq!(r.basis, LimitBasis::Eutectic);
        assert_relative_eq!(r.max_product_temp_c, -23.1, max_relative = 1e-12);
    }

    #[test]
    fn a_minority_salt_s_eutectic_governs_below_a_measured_collapse_onset() {
        // The case: collapse onset −18 °C measured, NaCl Te −21.1 °C (Drebushchak et
        // al. 2017), a minority of the solids, not a crystalline matrix; margin 2 °C.
        let r = limit(json!({"collapse_onset_c": -18.0, "eutectic_c": -21.1, "margin_c": 2.0}));
        assert_eq!(r.basis, LimitBasis::Eutectic);
        assert_eq!(r.basis.kind(), LimitKind::Eutectic);
        assert_relative_eq!(r.max_product_temp_c, -23.1, max_relative = 1e-12);
        assert_eq!(LimitBasis::CollapseOnset.kind(), LimitKind::Collapse);
    }

    #[test]
    fn nothing_to_go_on_is_refused_naming_the_input() {
        assert_eq!(
            calc_product_limit(json!({})).unwrap_err().field,
            "collapse_onset_c"
        );
        assert_eq!(
            calc_product_limit(json!({"eutectic_c": -3.0}))
                .unwrap_err()
                .field,
            "crystalline_matrix"
        );
    }

    #[test]
    fn bad_margins_and_temperatures_are_refused() {
        let field = |v| calc_product_limit(v).unwrap_err().field;
        assert_eq!(
            field(json!({"tg_prime_c": -30.0, "margin_c": -1.0})),
            "margin_c"
        );
        assert_eq!(
            field(json!({"tg_prime_c": -30.0, "margin_c": 25.0})),
            "margin_c"
        );
        assert_eq!(
            field(json!({"tg_prime_estimate_c": -30.0, "estimate_margin_c": -2.0})),
            "estimate_margin_c"
        );
        assert_eq!(field(json!({"tg_prime_c": 62.0})), "tg_prime_c");
        assert_eq!(
            field(json!({"collapse_onset_c": -300.0})),
            "collapse_onset_c"
        );
        assert_eq!(field(json!({"tg_prime_c": -30.0, "margin": 3.0})), "margin");
        let nan = ProductLimitInput {
            tg_prime_c: Some(f64::NAN),
            ..Default::default()
        };
        assert_eq!(product_limit(&nan).unwrap_err().field, "tg_prime_c");
    }

    proptest! {
        #[test]
        fn the_limit_is_never_above_the_critical_temperature(
            tc in prop::option::of(-60.0f64..0.0), tg in prop::option::of(-60.0f64..0.0),
            est in prop::option::of(-60.0f64..0.0), te in prop::option::of(-30.0f64..0.0),
            margin in prop::option::of(0.0f64..20.0), crystalline in any::<bool>(),
        ) {
            let input = ProductLimitInput {
                collapse_onset_c: tc, tg_prime_c: tg, tg_prime_estimate_c: est, eutectic_c: te,
                margin_c: margin, estimate_margin_c: None, crystalline_matrix: crystalline,
            };
            if let Ok(r) = product_limit(&input) {
                prop_assert!(r.max_product_temp_c <= r.critical_temp_c);
                let lowest = [tc, tg, est, te].iter().flatten().cloned().fold(f64::INFINITY, f64::min);
                prop_assert!(r.critical_temp_c >= lowest);
                if let Some(alt) = r.alternative {
                    prop_assert!(alt.max_product_temp_c <= alt.critical_temp_c);
                }
            }
        }
    }
}
