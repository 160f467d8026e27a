//! Tg' of a formulation estimated from its composition.
//!
//! The freeze-concentrated amorphous phase is taken to hold the components that stay
//! amorphous, in proportion to their share of the solids; its Tg' is the mixing equation
//! of [`crate::mixture`] (Fox 1956 by default) applied to each component's own Tg'. This
//! is an approximation: it ignores differences in the unfrozen water each component holds.
//!
//! - Components expected to crystallize are left out and reported. A crystallizer that is a
//!   minority of the solids beside an amorphous phase (below [`MINORITY_SHARE`]) is shown
//!   both ways: crystallized (left out) and left amorphous (counted, where its Tg′ is
//!   known), since salts and minor crystallizers often stay amorphous in a sugar matrix and
//!   pull Tg′ down. The lower, conservative estimate is the one given; without the value
//!   the estimate is flagged as possibly too warm. A measured Tg′ overrides either.
//! - Gordon–Taylor needs k on every component; the reference is the one with k = 1.
//! - Components that *may* crystallize are counted as amorphous — the state that lowers
//!   Tg' when crystallization is incomplete — and the estimate is flagged, with the value
//!   it would take if they did crystallize beside it.
//! - Components without the values the method needs are left out; if they make up more
//!   than `max_missing_share` of the solids the estimate is refused, otherwise flagged.

use serde::{Deserialize, Serialize};

use crate::error::{finite, positive, InputError};
use crate::limit::frozen_state_temp_c;
use crate::mixture::{mixture_tg, MixtureComponent, MixtureMethod};

/// A crystallizing component below this share of the solids, beside an amorphous phase, may
/// stay amorphous and is shown both ways (common practice, no source).
pub const MINORITY_SHARE: f64 = 0.5;

/// Default share of the solids that may lack values before the estimate is refused.
pub const DEFAULT_MAX_MISSING_SHARE: f64 = 0.10;

const CAUTION: &str = "An estimate to support qualified judgement; measure Tg' (DSC) or the \
    collapse onset (freeze-drying microscopy) before it sets a limit.";

/// How a component behaves on freezing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FreezingBehaviour {
    Amorphous,
    Crystallizes,
    MayCrystallize,
}

/// One component of a formulation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FormulationComponent {
    #[serde(default)]
    pub name: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub material_id: Option<i64>,
    pub concentration_mg_ml: f64,
    pub behaviour: FreezingBehaviour,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tg_prime_c: Option<f64>,
    /// Gordon–Taylor weight relative to the reference component, which has k = 1. Every
    /// component needs its k under Gordon–Taylor.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub k: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub delta_cp_j_gk: Option<f64>,
}

fn default_max_missing_share() -> f64 {
    DEFAULT_MAX_MISSING_SHARE
}

/// `formulation-estimate` topic input (inline composition).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FormulationEstimateInput {
    pub components: Vec<FormulationComponent>,
    #[serde(default)]
    pub method: MixtureMethod,
    /// Share of the solids (0–1) that may lack values; 0.10 when omitted.
    #[serde(default = "default_max_missing_share")]
    pub max_missing_share: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EstimateStatus {
    Estimated,
    Flagged,
    Refused,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IncludedComponent {
    pub name: String,
    pub material_id: Option<i64>,
    pub behaviour: FreezingBehaviour,
    pub solid_fraction: f64,
    /// Share of the amorphous solids used in the estimate.
    pub amorphous_fraction: f64,
    pub tg_prime_c: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ShareOfSolids {
    pub name: String,
    pub material_id: Option<i64>,
    pub solid_fraction: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MissingValue {
    pub name: String,
    pub material_id: Option<i64>,
    pub solid_fraction: f64,
    /// The input field the component lacks (`tg_prime_c`, `k` or `delta_cp_j_gk`).
    pub lacks: String,
}

/// `formulation-estimate` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FormulationEstimate {
    pub estimate_tg_prime_c: Option<f64>,
    pub status: EstimateStatus,
    pub method: MixtureMethod,
    pub solids_mg_ml: f64,
    pub included: Vec<IncludedComponent>,
    pub excluded_crystallizing: Vec<ShareOfSolids>,
    pub missing: Vec<MissingValue>,
    pub missing_share: f64,
    /// The estimate if the `may_crystallize` components did crystallize.
    pub estimate_if_crystallized_c: Option<f64>,
    /// Minority crystallizers shown both ways: the estimate with them left amorphous
    /// (those with a Tg′), beside the one with them crystallized.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub estimate_if_left_amorphous_c: Option<f64>,
    /// The estimate with minority crystallizers crystallized (left out).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub estimate_with_minority_crystallized_c: Option<f64>,
    /// True when a minority crystallizer has no Tg′, so the estimate with it left amorphous
    /// cannot be made and the given one may be too warm.
    #[serde(default)]
    pub may_be_too_warm: bool,
    pub reasoning: Vec<String>,
    pub caution: String,
}

fn name_of(c: &FormulationComponent, i: usize) -> String {
    if c.name.is_empty() {
        format!("component {}", i + 1)
    } else {
        c.name.clone()
    }
}

fn check_component(i: usize, c: &FormulationComponent) -> Result<(), InputError> {
    let field = |name: &str| format!("components[{i}].{name}");
    positive(&field("concentration_mg_ml"), c.concentration_mg_ml)?;
    if let Some(t) = c.tg_prime_c {
        frozen_state_temp_c(&field("tg_prime_c"), t)?;
    }
    if let Some(k) = c.k {
        positive(&field("k"), k)?;
    }
    if let Some(cp) = c.delta_cp_j_gk {
        positive(&field("delta_cp_j_gk"), cp)?;
    }
    Ok(())
}

/// The field a component lacks for `method`, if any. Gordon–Taylor needs k on every
/// component: no component is silently taken as the reference.
fn lacking(method: MixtureMethod, c: &FormulationComponent) -> Option<&'static str> {
    match (c.tg_prime_c, method) {
        (None, _) => Some("tg_prime_c"),
        (_, MixtureMethod::GordonTaylor) if c.k.is_none() => Some("k"),
        (_, MixtureMethod::CouchmanKarasz) if c.delta_cp_j_gk.is_none() => Some("delta_cp_j_gk"),
        _ => None,
    }
}

/// Mixture Tg' of the included components, weighted by their solid fractions.
fn mix(method: MixtureMethod, parts: &[(&FormulationComponent, f64)]) -> Result<f64, InputError> {
    let comps: Vec<MixtureComponent> = parts
        .iter()
        .map(|(c, w)| MixtureComponent {
            name: c.name.clone(),
            mass_fraction: *w,
            tg_c: c.tg_prime_c.unwrap_or(f64::NAN),
            k: c.k,
            delta_cp_j_gk: c.delta_cp_j_gk,
        })
        .collect();
    Ok(mixture_tg(method, &comps)?.tg_c)
}

/// The flag sentence for components that may crystallize, and the estimate without them.
fn if_crystallized(
    method: MixtureMethod,
    parts: &[(&FormulationComponent, f64)],
) -> Result<(String, Option<f64>), InputError> {
    let stays: Vec<_> = parts
        .iter()
        .filter(|(c, _)| c.behaviour == FreezingBehaviour::Amorphous)
        .cloned()
        .collect();
    let mut line = "Components that may crystallize are counted as amorphous, the case that \
                    depresses Tg' when crystallization is incomplete; the estimate is flagged."
        .to_string();
    if stays.is_empty() {
        return Ok((line, None));
    }
    let alt = mix(method, &stays)?;
    line.push_str(&format!(
        " If they crystallize fully, the estimate is {alt:.1} °C."
    ));
    Ok((line, Some(alt)))
}

fn names(list: &[&(&FormulationComponent, f64, String)]) -> String {
    list.iter()
        .map(|(_, _, n)| n.as_str())
        .collect::<Vec<_>>()
        .join(", ")
}

/// Estimated Tg' of a formulation from its composition (module docs for the rules).
/// Refusal for lack of data is a result (`status: refused`); invalid input is an error.
pub fn formulation_estimate(
    input: &FormulationEstimateInput,
) -> Result<FormulationEstimate, InputError> {
    let method = input.method;
    if input.components.is_empty() {
        return Err(InputError::new("components", "give at least one component"));
    }
    for (i, c) in input.components.iter().enumerate() {
        check_component(i, c)?;
    }
    let max_missing = finite("max_missing_share", input.max_missing_share)?;
    if !(0.0..=1.0).contains(&max_missing) {
        return Err(InputError::new(
            "max_missing_share",
            "must lie between 0 and 1",
        ));
    }
    let solids: f64 = input.components.iter().map(|c| c.concentration_mg_ml).sum();
    if !solids.is_finite() {
        return Err(InputError::new(
            "components",
            "the concentrations are too large to add",
        ));
    }
    let mut reasoning = vec![format!("The solids total {solids:.3} mg/mL.")];
    let (mut used, mut excluded, mut missing) = (Vec::new(), Vec::new(), Vec::new());
    let mut minority = Vec::new();
    let has_amorphous = input
        .components
        .iter()
        .any(|c| c.behaviour != FreezingBehaviour::Crystallizes);
    for (i, c) in input.components.iter().enumerate() {
        let share = c.concentration_mg_ml / solids;
        let name = name_of(c, i);
        if c.behaviour == FreezingBehaviour::Crystallizes {
            if has_amorphous && share < MINORITY_SHARE {
                reasoning.push(format!(
                    "{name} ({:.1} % of solids) is expected to crystallize, but as a minority \
                     beside an amorphous phase it may stay amorphous and pull Tg' down: the \
                     estimate is shown both ways.",
                    share * 100.0
                ));
                minority.push((c, share, name.clone()));
            } else {
                reasoning.push(format!(
                    "{name} ({:.1} % of solids) is expected to crystallize and is left out of \
                     the amorphous phase; its eutectic, not a Tg', describes it.",
                    share * 100.0
                ));
            }
            excluded.push(ShareOfSolids {
                name,
                material_id: c.material_id,
                solid_fraction: share,
            });
        } else if let Some(lacks) = lacking(method, c) {
            reasoning.push(format!(
                "{name} ({:.1} % of solids) has no {} value and is left out.",
                share * 100.0,
                match lacks {
                    "tg_prime_c" => "Tg'",
                    "k" => "Gordon–Taylor k",
                    _ => "ΔCp",
                }
            ));
            missing.push(MissingValue {
                name,
                material_id: c.material_id,
                solid_fraction: share,
                lacks: lacks.into(),
            });
        } else {
            used.push((c, share, name));
        }
    }
    let missing_share: f64 = missing.iter().map(|m| m.solid_fraction).sum();
    let amorphous_share: f64 = used.iter().map(|(_, s, _)| s).sum();
    let mut result = FormulationEstimate {
        estimate_tg_prime_c: None,
        status: EstimateStatus::Refused,
        method,
        solids_mg_ml: solids,
        included: used
            .iter()
            .map(|(c, share, name)| IncludedComponent {
                name: name.clone(),
                material_id: c.material_id,
                behaviour: c.behaviour,
                solid_fraction: *share,
                amorphous_fraction: share / amorphous_share,
                tg_prime_c: c.tg_prime_c.unwrap_or(f64::NAN),
            })
            .collect(),
        excluded_crystallizing: excluded,
        missing,
        missing_share,
        estimate_if_crystallized_c: None,
        estimate_if_left_amorphous_c: None,
        estimate_with_minority_crystallized_c: None,
        may_be_too_warm: false,
        reasoning,
        caution: CAUTION.into(),
    };
    if used.is_empty() {
        result.reasoning.push(if result.missing.is_empty() {
            "Every component is expected to crystallize: there is no amorphous phase to \
             estimate a Tg' for, and the eutectic of the crystallized phase governs."
                .into()
        } else {
            "No amorphous component has the values needed, so no estimate is given.".into()
        });
        return Ok(result);
    }
    if missing_share > max_missing {
        result.reasoning.push(format!(
            "Components without values make up {:.1} % of the solids, more than the {:.1} % \
             allowed, so no estimate is given.",
            missing_share * 100.0,
            max_missing * 100.0
        ));
        return Ok(result);
    }
    let parts: Vec<_> = used.iter().map(|(c, s, _)| (*c, *s)).collect();
    let estimate = mix(method, &parts)?;
    if method == MixtureMethod::GordonTaylor {
        let weights = used
            .iter()
            .map(|(c, _, name)| format!("{name} k = {}", c.k.unwrap_or(f64::NAN)))
            .collect::<Vec<_>>()
            .join(", ");
        result.reasoning.push(format!(
            "Gordon–Taylor weights ({weights}) are relative to the reference component, the \
             one with k = 1; every component carries its own k."
        ));
    }
    result.reasoning.push(format!(
        "{} over the Tg' of the {} amorphous component(s), weighted by their share of the \
         amorphous solids, gives {estimate:.1} °C.",
        method.equation(),
        parts.len()
    ));
    let mut flagged = missing_share > 0.0;
    if flagged {
        result.reasoning.push(format!(
            "The estimate is flagged: {:.1} % of the solids lack values (up to {:.1} % allowed).",
            missing_share * 100.0,
            max_missing * 100.0
        ));
    }
    if parts
        .iter()
        .any(|(c, _)| c.behaviour == FreezingBehaviour::MayCrystallize)
    {
        flagged = true;
        let (line, alt) = if_crystallized(method, &parts)?;
        result.reasoning.push(line);
        result.estimate_if_crystallized_c = alt;
    }
    let mut estimate = estimate;
    if !minority.is_empty() {
        flagged = true;
        let (with_values, without): (Vec<_>, Vec<_>) = minority
            .iter()
            .partition(|(c, _, _)| lacking(method, c).is_none());
        let crystallized = estimate;
        result.estimate_with_minority_crystallized_c = Some(crystallized);
        if !with_values.is_empty() {
            let mut all = parts.clone();
            all.extend(with_values.iter().map(|(c, s, _)| (*c, *s)));
            let amorphous = mix(method, &all)?;
            result.estimate_if_left_amorphous_c = Some(amorphous);
            estimate = crystallized.min(amorphous);
            result.reasoning.push(format!(
                "With {} crystallized the estimate is {crystallized:.1} °C; left amorphous, \
                 {amorphous:.1} °C. The lower, {estimate:.1} °C, is given: it holds whichever \
                 happens, until a measured Tg' says otherwise.",
                names(&with_values)
            ));
        }
        if !without.is_empty() {
            result.may_be_too_warm = true;
            result.reasoning.push(format!(
                "{} has no Tg' value, so the estimate with it left amorphous cannot be made: \
                 the estimate may be too warm. Measure Tg' of the formulation.",
                names(&without)
            ));
        }
    }
    result.estimate_tg_prime_c = Some(estimate);
    result.status = if flagged {
        EstimateStatus::Flagged
    } else {
        EstimateStatus::Estimated
    };
    result.reasoning.push(
        "Each component's own Tg' stands in for its end member, which ignores differences in \
         the unfrozen water each holds."
            .into(),
    );
    Ok(result)
}

/// `formulation-estimate` topic (inline composition; the app resolves `formulation_id`).
pub fn calc_formulation_estimate(
    input: serde_json::Value,
) -> Result<serde_json::Value, InputError> {
    let req: FormulationEstimateInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&formulation_estimate(&req)?)
}

#[cfg(test)]
mod tests;
