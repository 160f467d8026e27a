//! Glass transition of an amorphous mixture from its components: Fox, Gordon–Taylor and
//! Couchman–Karasz. All three are weighted means of the components' Tg (in kelvin), which
//! is why the mixture always lies between its components.

use serde::{Deserialize, Serialize};

use crate::error::{celsius_to_kelvin_checked, positive, InputError};
use crate::units::k_to_c;

/// Fraction sums closer to 1 than this count as already normalised.
const SUM_TOLERANCE: f64 = 1e-6;
/// Most steps a binary sweep computes (a chart needs far fewer).
pub const MAX_SWEEP_STEPS: usize = 1000;

/// Which mixing equation to use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum MixtureMethod {
    /// Fox (1956), Bull. Am. Phys. Soc. 1:123: 1/Tg = Σ wᵢ/Tgᵢ (K).
    #[default]
    Fox,
    /// Gordon & Taylor (1952), J. Appl. Chem. 2:493, multicomponent form
    /// Tg = Σ kᵢwᵢTgᵢ / Σ kᵢwᵢ; k is relative to a reference component with k = 1, which is
    /// the one component given without k (at most one may be), and is named in the result.
    GordonTaylor,
    /// Couchman & Karasz (1978), Macromolecules 11:117, log form
    /// ln Tg = Σ wᵢΔCpᵢ ln Tgᵢ / Σ wᵢΔCpᵢ.
    CouchmanKarasz,
}

impl MixtureMethod {
    /// The equation and its published source, for results and pages.
    pub fn equation(self) -> &'static str {
        match self {
            MixtureMethod::Fox => "Fox (1956): 1/Tg = Σ wᵢ/Tgᵢ",
            MixtureMethod::GordonTaylor => {
                "Gordon & Taylor (1952): Tg = Σ kᵢwᵢTgᵢ / Σ kᵢwᵢ (reference component k = 1)"
            }
            MixtureMethod::CouchmanKarasz => {
                "Couchman & Karasz (1978): ln Tg = Σ wᵢΔCpᵢ ln Tgᵢ / Σ wᵢΔCpᵢ"
            }
        }
    }
}

/// One component of a mixture as the `mixture-tg` topic takes it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MixtureComponent {
    #[serde(default)]
    pub name: String,
    /// Mass fraction (any positive amounts; normalised when they do not sum to 1).
    pub mass_fraction: f64,
    pub tg_c: f64,
    /// Gordon–Taylor constant relative to the reference component (the one given without
    /// k, or with k = 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub k: Option<f64>,
    /// Heat-capacity step at Tg, J/(g·K), for Couchman–Karasz.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub delta_cp_j_gk: Option<f64>,
}

/// `mixture-tg` topic input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MixtureTgInput {
    #[serde(default)]
    pub method: MixtureMethod,
    pub components: Vec<MixtureComponent>,
}

/// A component's share as used in the equation, after normalisation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct UsedFraction {
    pub name: String,
    pub mass_fraction: f64,
    /// What the method multiplies the fraction by: 1 (Fox), k, or ΔCp.
    pub weight: f64,
}

/// `mixture-tg` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MixtureTgResult {
    pub tg_c: f64,
    pub tg_k: f64,
    pub method: MixtureMethod,
    pub equation: String,
    /// True when the given fractions did not sum to 1 and were rescaled.
    pub normalised: bool,
    pub fraction_sum: f64,
    pub fractions: Vec<UsedFraction>,
    /// Gordon–Taylor: the component whose k is 1, which the other k values are relative to
    /// (absent for the other methods, or when no component has k = 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<String>,
}

/// A component reduced to what the equations need.
#[derive(Debug, Clone, Copy)]
struct Term {
    w: f64,
    tg_k: f64,
    weight: f64,
}

fn checked_term(
    method: MixtureMethod,
    index: usize,
    c: &MixtureComponent,
    fraction: Option<f64>,
) -> Result<Term, InputError> {
    let field = |name: &str| format!("components[{index}].{name}");
    let w = match fraction {
        Some(w) => w,
        None => positive(&field("mass_fraction"), c.mass_fraction)?,
    };
    let tg_k = celsius_to_kelvin_checked(&field("tg_c"), c.tg_c)?;
    let weight = match method {
        MixtureMethod::Fox => 1.0,
        MixtureMethod::GordonTaylor => match c.k {
            Some(k) => positive(&field("k"), k)?,
            // The reference; `gordon_taylor_reference` allows only one.
            None => 1.0,
        },
        MixtureMethod::CouchmanKarasz => match c.delta_cp_j_gk {
            Some(cp) => positive(&field("delta_cp_j_gk"), cp)?,
            None => {
                return Err(InputError::new(
                    field("delta_cp_j_gk"),
                    "Couchman–Karasz needs the heat-capacity step ΔCp of every component",
                ))
            }
        },
    };
    Ok(Term { w, tg_k, weight })
}

/// The weighted mean each method stands for; fractions need not sum to 1.
fn combine(method: MixtureMethod, terms: &[Term]) -> f64 {
    match method {
        MixtureMethod::Fox => {
            let w: f64 = terms.iter().map(|t| t.w).sum();
            w / terms.iter().map(|t| t.w / t.tg_k).sum::<f64>()
        }
        MixtureMethod::GordonTaylor => {
            let kw: f64 = terms.iter().map(|t| t.weight * t.w).sum();
            terms.iter().map(|t| t.weight * t.w * t.tg_k).sum::<f64>() / kw
        }
        MixtureMethod::CouchmanKarasz => {
            let cw: f64 = terms.iter().map(|t| t.weight * t.w).sum();
            (terms
                .iter()
                .map(|t| t.weight * t.w * t.tg_k.ln())
                .sum::<f64>()
                / cw)
                .exp()
        }
    }
}

/// The Gordon–Taylor reference of `components`: the one given without k, else the first
/// with k = 1. A second component without k is refused: the reference must be explicit.
fn gordon_taylor_reference(components: &[&MixtureComponent]) -> Result<Option<usize>, InputError> {
    let mut without = components.iter().enumerate().filter(|(_, c)| c.k.is_none());
    let first = without.next().map(|(i, _)| i);
    if let (Some(r), Some((i, _))) = (first, without.next()) {
        let name = |i: usize| {
            let n = &components[i].name;
            if n.is_empty() {
                format!("components[{i}]")
            } else {
                n.clone()
            }
        };
        return Err(InputError::new(
            format!("components[{i}].k"),
            format!(
                "Gordon–Taylor takes k relative to one reference component (k = 1); {} has no \
                 k and is the reference, so give k for {} too",
                name(r),
                name(i)
            ),
        ));
    }
    let unit = || {
        components
            .iter()
            .position(|c| c.k.is_some_and(|k| (k - 1.0).abs() < 1e-12))
    };
    Ok(first.or_else(unit))
}

/// Glass transition of a mixture by `method` (see [`MixtureMethod`] for the equations and
/// their sources). Fractions must be positive; when they do not sum to 1 they are
/// normalised and the result says so. Gordon–Taylor needs `k` on every component but one,
/// the reference (k = 1), which the result names; Couchman–Karasz needs `delta_cp_j_gk` on
/// all.
///
/// ```
/// use glasspoint_science::mixture::{mixture_tg, MixtureComponent, MixtureMethod};
/// let part = |tg_c| MixtureComponent {
///     name: String::new(), mass_fraction: 0.5, tg_c, k: None, delta_cp_j_gk: None,
/// };
/// let r = mixture_tg(MixtureMethod::Fox, &[part(99.85), part(104.85)]).unwrap();
/// assert!((r.tg_k - 375.48).abs() < 0.01);
/// ```
pub fn mixture_tg(
    method: MixtureMethod,
    components: &[MixtureComponent],
) -> Result<MixtureTgResult, InputError> {
    if components.is_empty() {
        return Err(InputError::new("components", "give at least one component"));
    }
    let terms = components
        .iter()
        .enumerate()
        .map(|(i, c)| checked_term(method, i, c, None))
        .collect::<Result<Vec<_>, _>>()?;
    let reference = match method {
        MixtureMethod::GordonTaylor => {
            let all: Vec<&MixtureComponent> = components.iter().collect();
            gordon_taylor_reference(&all)?.map(|i| {
                let n = &components[i].name;
                if n.is_empty() {
                    format!("components[{i}]")
                } else {
                    n.clone()
                }
            })
        }
        _ => None,
    };
    let fraction_sum: f64 = terms.iter().map(|t| t.w).sum();
    if !fraction_sum.is_finite() {
        return Err(InputError::new(
            "components",
            "the mass fractions are too large to add",
        ));
    }
    let tg_k = combine(method, &terms);
    let fractions = components
        .iter()
        .zip(&terms)
        .map(|(c, t)| UsedFraction {
            name: c.name.clone(),
            mass_fraction: t.w / fraction_sum,
            weight: t.weight,
        })
        .collect();
    Ok(MixtureTgResult {
        tg_c: k_to_c(tg_k),
        tg_k,
        method,
        equation: method.equation().to_string(),
        normalised: (fraction_sum - 1.0).abs() > SUM_TOLERANCE,
        fraction_sum,
        fractions,
        reference,
    })
}

/// Binary Gordon–Taylor, Tg = (w₁Tg₁ + k·w₂Tg₂)/(w₁ + k·w₂) with w₁ = 1 − w₂ and k on the
/// second component (Gordon & Taylor 1952). Unchecked; any one temperature unit.
pub fn gordon_taylor_binary(w2: f64, tg1: f64, tg2: f64, k: f64) -> f64 {
    let w1 = 1.0 - w2;
    (w1 * tg1 + k * w2 * tg2) / (w1 + k * w2)
}

/// Binary Fox, 1/Tg = w₁/Tg₁ + w₂/Tg₂ (Fox 1956). Unchecked; temperatures in kelvin.
pub fn fox_binary_k(w2: f64, tg1_k: f64, tg2_k: f64) -> f64 {
    1.0 / ((1.0 - w2) / tg1_k + w2 / tg2_k)
}

/// Tg of a binary mixture of `a` and `b` over the mass fraction of `b` from 0 to 1 in
/// `steps` equal steps, for a chart: `(w_b, tg_c)` pairs. The components' own
/// `mass_fraction` values are ignored; `b` is `components[1]` in error fields.
pub fn binary_sweep(
    method: MixtureMethod,
    a: &MixtureComponent,
    b: &MixtureComponent,
    steps: usize,
) -> Result<Vec<(f64, f64)>, InputError> {
    if steps == 0 || steps > MAX_SWEEP_STEPS {
        return Err(InputError::new(
            "steps",
            format!("must be between 1 and {MAX_SWEEP_STEPS} (got {steps})"),
        ));
    }
    if method == MixtureMethod::GordonTaylor {
        gordon_taylor_reference(&[a, b])?;
    }
    let ta = checked_term(method, 0, a, Some(1.0))?;
    let tb = checked_term(method, 1, b, Some(0.0))?;
    Ok((0..=steps)
        .map(|i| {
            let w_b = i as f64 / steps as f64;
            let terms = [Term { w: 1.0 - w_b, ..ta }, Term { w: w_b, ..tb }];
            (w_b, k_to_c(combine(method, &terms)))
        })
        .collect())
}

/// `mixture-tg` topic.
pub fn calc_mixture_tg(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: MixtureTgInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&mixture_tg(req.method, &req.components)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::c_to_k;
    use approx::assert_relative_eq;
    use proptest::prelude::*;
    use serde_json::json;

    fn part(name: &str, w: f64, tg_c: f64) -> MixtureComponent {
        MixtureComponent {
            name: name.into(),
            mass_fraction: w,
            tg_c,
            k: None,
            delta_cp_j_gk: None,
        }
    }

    #[test]
    fn fox_of_a_50_50_blend_of_373_and_378_k_is_375_48_k() {
        // Source: Fox (1956), Bull. Am. Phys. Soc. 1:123; the crate polysim-core asserts 375.4 ± 0.2 K.
        let r = mixture_tg(
            MixtureMethod::Fox,
            &[part("a", 0.5, k_to_c(373.0)), part("b", 0.5, k_to_c(378.0))],
        )
        .unwrap();
        assert_relative_eq!(r.tg_k, 375.48, max_relative = 2e-5);
        assert!(!r.normalised);
    }

    #[test]
    fn gordon_taylor_sucrose_water_with_k_4_7_matches_a_hand_computation() {
        // Roos (1993), Carbohydr. Res. 238:39: sucrose Tg 62 °C, k = 4.7 (from memory);
        // water 136 K (Johari et al. 1987). Hand computation at 5 % water:
        // (0.95·335.15 + 4.7·0.05·136)/(0.95 + 4.7·0.05) = 350.3525/1.185 = 295.6561 K.
        let mut water = part("water", 0.05, k_to_c(136.0));
        water.k = Some(4.7);
        let r = mixture_tg(
            MixtureMethod::GordonTaylor,
            &[part("sucrose", 0.95, 62.0), water],
        )
        .unwrap();
        assert_relative_eq!(r.tg_k, 295.6561, max_relative = 1e-6);
        assert_relative_eq!(
            gordon_taylor_binary(0.05, 335.15, 136.0, 4.7),
            r.tg_k,
            max_relative = 1e-12
        );
    }

    #[test]
    fn couchman_karasz_matches_a_hand_calculation() {
        // Hand calculation from the published equation (Couchman & Karasz 1978), no traced
        // worked value: sucrose 335.15 K with ΔCp 0.60, water 136 K with ΔCp 1.94 J/(g·K)
        // (literature value, from memory), 10 % water:
        // ln Tg = (0.9·0.60·ln 335.15 + 0.1·1.94·ln 136)/(0.54 + 0.194) → Tg = 264.06 K.
        let mut sucrose = part("sucrose", 0.9, 62.0);
        sucrose.delta_cp_j_gk = Some(0.60);
        let mut water = part("water", 0.1, k_to_c(136.0));
        water.delta_cp_j_gk = Some(1.94);
        let r = mixture_tg(MixtureMethod::CouchmanKarasz, &[sucrose, water]).unwrap();
        let expected = ((0.54 * 335.15_f64.ln() + 0.194 * 136.0_f64.ln()) / (0.54 + 0.194)).exp();
        assert_relative_eq!(r.tg_k, expected, max_relative = 1e-12);
        assert_relative_eq!(r.tg_k, 264.06, max_relative = 1e-4);
    }

    #[test]
    fn a_sucrose_trehalose_mixture_lies_between_its_components() {
        // Tg' sucrose −32 °C, trehalose −29.5 °C (literature value, from memory).
        let r = mixture_tg(
            MixtureMethod::Fox,
            &[part("sucrose", 1.0, -32.0), part("trehalose", 1.0, -29.5)],
        )
        .unwrap();
        assert!(r.tg_c > -32.0 && r.tg_c < -29.5);
        assert!(r.normalised);
        assert_relative_eq!(r.fractions[0].mass_fraction, 0.5, max_relative = 1e-12);
    }

    #[test]
    fn a_single_component_reproduces_its_own_tg_by_every_method() {
        for method in [
            MixtureMethod::Fox,
            MixtureMethod::GordonTaylor,
            MixtureMethod::CouchmanKarasz,
        ] {
            let mut c = part("trehalose", 0.3, -29.5);
            c.delta_cp_j_gk = Some(0.5);
            let r = mixture_tg(method, &[c]).unwrap();
            assert_relative_eq!(r.tg_c, -29.5, max_relative = 1e-12);
        }
    }

    #[test]
    fn a_binary_sweep_runs_from_one_component_to_the_other() {
        let mut b = part("b", 0.0, 100.0);
        b.k = Some(0.5);
        let curve =
            binary_sweep(MixtureMethod::GordonTaylor, &part("a", 0.0, 0.0), &b, 10).unwrap();
        assert_eq!(curve.len(), 11);
        assert_relative_eq!(curve[0].1, 0.0, epsilon = 1e-9);
        assert_relative_eq!(curve[10].1, 100.0, max_relative = 1e-12);
        assert!(binary_sweep(MixtureMethod::Fox, &b, &b, 0).is_err());
    }

    fn refusal(input: serde_json::Value) -> String {
        calc_mixture_tg(input).unwrap_err().field
    }

    #[test]
    fn every_bad_input_is_refused_with_its_field_named() {
        let ok = json!({"name": "a", "mass_fraction": 0.5, "tg_c": -30.0, "k": 1.0, "delta_cp_j_gk": 0.5});
        let with = |key: &str, v: serde_json::Value| {
            let mut c = ok.clone();
            c[key] = v;
            c
        };
        let fox = |c: serde_json::Value| json!({"method": "fox", "components": [ok.clone(), c]});
        assert_eq!(refusal(json!({"components": []})), "components");
        assert_eq!(
            refusal(fox(with("mass_fraction", json!(0.0)))),
            "components[1].mass_fraction"
        );
        assert_eq!(
            refusal(fox(with("mass_fraction", json!(-0.2)))),
            "components[1].mass_fraction"
        );
        assert_eq!(
            refusal(fox(with("tg_c", json!(-300.0)))),
            "components[1].tg_c"
        );
        assert_eq!(
            refusal(fox(with("tg_c", json!("warm")))),
            "components[1].tg_c"
        );
        let gt = |c| json!({"method": "gordon-taylor", "components": [ok.clone(), c]});
        assert_eq!(refusal(gt(with("k", json!(0.0)))), "components[1].k");
        assert_eq!(refusal(gt(with("k", json!(-1.0)))), "components[1].k");
        // Only one component may go without k: it is the reference.
        let no_k = with("k", json!(null));
        assert_eq!(
            refusal(json!({"method": "gordon-taylor", "components": [no_k.clone(), no_k]})),
            "components[1].k"
        );
        let ck = |c| json!({"method": "couchman-karasz", "components": [ok.clone(), c]});
        assert_eq!(
            refusal(ck(with("delta_cp_j_gk", json!(0.0)))),
            "components[1].delta_cp_j_gk"
        );
        assert_eq!(
            refusal(ck(with("delta_cp_j_gk", json!(null)))),
            "components[1].delta_cp_j_gk"
        );
        assert_eq!(
            refusal(json!({"method": "guess", "components": [ok]})),
            "method"
        );
    }

    #[test]
    fn the_gordon_taylor_reference_is_named_not_taken_from_the_list_order() {
        // The reference is the component without k, wherever it is listed (k = 4.7 for
        // water against sucrose, Roos 1993, from memory; water Tg 136 K, Johari et al. 1987).
        let mut water = part("water", 0.05, k_to_c(136.0));
        water.k = Some(4.7);
        let sucrose = part("sucrose", 0.95, 62.0);
        let a = mixture_tg(
            MixtureMethod::GordonTaylor,
            &[water.clone(), sucrose.clone()],
        )
        .unwrap();
        let b = mixture_tg(MixtureMethod::GordonTaylor, &[sucrose, water]).unwrap();
        assert_eq!(a.reference.as_deref(), Some("sucrose"));
        assert_relative_eq!(a.tg_k, b.tg_k, max_relative = 1e-12);
        assert_relative_eq!(a.tg_k, 295.6561, max_relative = 1e-6);
        assert!(a.equation.contains("reference component"));
        let fox = mixture_tg(MixtureMethod::Fox, &[part("a", 1.0, -30.0)]).unwrap();
        assert_eq!(fox.reference, None);
    }

    #[test]
    fn nan_and_infinity_are_refused() {
        // JSON cannot carry NaN, so the typed function is checked directly.
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            let err = mixture_tg(MixtureMethod::Fox, &[part("a", bad, -30.0)]).unwrap_err();
            assert_eq!(err.field, "components[0].mass_fraction");
            let err = mixture_tg(MixtureMethod::Fox, &[part("a", 1.0, bad)]).unwrap_err();
            assert_eq!(err.field, "components[0].tg_c");
            let mut c = part("a", 1.0, -30.0);
            c.k = Some(bad);
            let err = mixture_tg(MixtureMethod::GordonTaylor, &[c]).unwrap_err();
            assert_eq!(err.field, "components[0].k");
        }
    }

    #[test]
    fn the_json_result_names_the_method_and_both_temperature_units() {
        let out = calc_mixture_tg(json!({"method": "fox", "components": [
            {"name": "a", "mass_fraction": 1.0, "tg_c": -30.0}]}))
        .unwrap();
        assert_eq!(out["method"], "fox");
        assert_relative_eq!(
            out["tg_k"].as_f64().unwrap(),
            c_to_k(-30.0),
            max_relative = 1e-12
        );
    }

    proptest! {
        #[test]
        fn a_mixture_tg_lies_between_its_components_tgs(
            tgs in prop::collection::vec(-150.0f64..200.0, 1..6),
            ws in prop::collection::vec(0.01f64..10.0, 6),
            ks in prop::collection::vec(0.05f64..20.0, 6),
            method in prop::sample::select(vec![
                MixtureMethod::Fox, MixtureMethod::GordonTaylor, MixtureMethod::CouchmanKarasz]),
        ) {
            let comps: Vec<_> = tgs.iter().enumerate().map(|(i, &tg)| MixtureComponent {
                name: String::new(), mass_fraction: ws[i], tg_c: tg,
                k: Some(ks[i]), delta_cp_j_gk: Some(ks[i]),
            }).collect();
            let r = mixture_tg(method, &comps).unwrap();
            let lo = tgs.iter().cloned().fold(f64::INFINITY, f64::min);
            let hi = tgs.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            prop_assert!(r.tg_c >= lo - 1e-9 && r.tg_c <= hi + 1e-9);
        }

        #[test]
        fn a_binary_tg_moves_monotonically_towards_the_added_component(
            tg_a in -150.0f64..200.0, tg_b in -150.0f64..200.0, k in 0.05f64..20.0,
            method in prop::sample::select(vec![
                MixtureMethod::Fox, MixtureMethod::GordonTaylor, MixtureMethod::CouchmanKarasz]),
        ) {
            let a = part("a", 0.0, tg_a);
            let mut b = part("b", 0.0, tg_b);
            b.k = Some(k);
            b.delta_cp_j_gk = Some(k);
            let mut a2 = a.clone();
            a2.delta_cp_j_gk = Some(1.0);
            let curve = binary_sweep(method, &a2, &b, 50).unwrap();
            let sign = (tg_b - tg_a).signum();
            for pair in curve.windows(2) {
                prop_assert!(sign * (pair[1].1 - pair[0].1) >= -1e-9);
            }
        }
    }
}
