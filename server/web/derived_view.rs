//! Derived values laid out for the formulation page: strings and lists, so the template
//! only places them.

use glasspoint_science::annealing::{AnnealKind, Recommendation};
use glasspoint_science::composition::EstimateStatus;
use glasspoint_science::limit::LimitBasis;

use super::fmt::{num1, percent};
use crate::derive::Derived;

pub struct DerivedView {
    pub estimate_value: String,
    pub estimate_status: String,
    pub estimate_flagged: bool,
    pub estimate_parts: Vec<String>,
    pub estimate_reasoning: Vec<String>,
    pub measured_tg_prime: String,
    pub deviation: String,
    pub has_limit: bool,
    pub limit_value: String,
    pub critical: String,
    pub basis: String,
    pub margin: String,
    pub limit_flagged: bool,
    pub limit_reasoning: Vec<String>,
    pub alternative: String,
    pub alternative_caution: String,
    pub limit_note: String,
    pub has_alternative: bool,
    pub uses_alternative: bool,
    pub in_use: String,
    pub anneal_headline: String,
    pub anneal_class: &'static str,
    pub anneal_details: Vec<String>,
    pub anneal_reasoning: Vec<String>,
    pub anneal_risks: Vec<String>,
    pub caution: String,
}

fn c(v: f64) -> String {
    format!("{} °C", num1(v))
}

pub fn basis_label(b: LimitBasis) -> &'static str {
    match b {
        LimitBasis::CollapseOnset => "measured collapse onset",
        LimitBasis::TgPrime => "measured Tg′",
        LimitBasis::TgPrimeEstimate => "Tg′ estimated from the composition",
        LimitBasis::Eutectic => "eutectic melting (Te) of the crystalline phase",
    }
}

pub fn view(d: &Derived) -> DerivedView {
    let mut estimate_parts = Vec::new();
    let (estimate_value, estimate_status, estimate_flagged, estimate_reasoning) = match &d.estimate
    {
        Some(e) => {
            for i in &e.included {
                estimate_parts.push(format!(
                    "{}: {} of the solids, Tg′ {} (in the estimate)",
                    i.name,
                    percent(i.solid_fraction),
                    c(i.tg_prime_c)
                ));
            }
            for x in &e.excluded_crystallizing {
                estimate_parts.push(format!(
                    "{}: {} of the solids, expected to crystallize (left out)",
                    x.name,
                    percent(x.solid_fraction)
                ));
            }
            for m in &e.missing {
                estimate_parts.push(format!(
                    "{}: {} of the solids, no library value ({})",
                    m.name,
                    percent(m.solid_fraction),
                    m.lacks
                ));
            }
            let status = match e.status {
                EstimateStatus::Estimated => "Estimated",
                EstimateStatus::Flagged => "Estimated, with a flag",
                EstimateStatus::Refused => "Not estimated",
            };
            // A minority crystallizer without a Tg′ may leave the estimate too warm: say so
            // beside the value, not only in the reasoning.
            let status = if e.may_be_too_warm && e.status != EstimateStatus::Refused {
                format!(
                    "{status}; may be too warm: a component that may stay amorphous has no                      Tg′, so measure Tg′ of the formulation"
                )
            } else {
                status.to_string()
            };
            (
                e.estimate_tg_prime_c.map(c).unwrap_or_else(|| "—".into()),
                status,
                e.status == EstimateStatus::Flagged || e.may_be_too_warm,
                e.reasoning.clone(),
            )
        }
        None => (
            "—".into(),
            "Not estimated".into(),
            false,
            d.estimate_note.iter().cloned().collect(),
        ),
    };
    let deviation = d
        .deviation_c
        .map(|v| {
            format!(
                "{}{} °C (measured minus estimate)",
                if v > 0.0 { "+" } else { "" },
                num1(v)
            )
        })
        .unwrap_or_else(|| "—".into());

    let limit = d.limit.as_ref();
    let alt = limit.and_then(|l| l.alternative.as_ref());
    let dash = || "—".to_string();

    let (anneal_headline, anneal_class, anneal_details, anneal_reasoning, anneal_risks) = match &d
        .annealing
    {
        Some(a) => {
            let headline = match (a.recommend, a.kind) {
                (Recommendation::Anneal, Some(AnnealKind::CrystallizeBulkingAgent)) => {
                    "Anneal: crystallize the bulking agent"
                }
                (Recommendation::Anneal, _) => "Anneal",
                (Recommendation::Optional, Some(AnnealKind::IceRipening)) => {
                    "Optional: ice-ripening anneal"
                }
                (Recommendation::Optional, _) => "Optional",
                (Recommendation::NotNeeded, _) => "No annealing needed",
            };
            let class = match a.recommend {
                Recommendation::Anneal => "verdict-watch",
                Recommendation::Optional => "verdict-ok",
                Recommendation::NotNeeded => "verdict-ok",
            };
            let mut details = Vec::new();
            if a.window_empty {
                details
                    .push("No temperature satisfies every bound: see the reasoning.".to_string());
            } else if let (Some(lo), Some(hi)) = (a.window_low_c, a.window_high_c) {
                details.push(format!("Window: {} to {}", c(lo), c(hi)));
            }
            if let Some(t) = a.suggested_temp_c {
                details.push(format!("Suggested: {}", c(t)));
            }
            if let Some([lo, hi]) = a.typical_hold_h {
                details.push(format!("Typical hold: {} to {} h", num1(lo), num1(hi)));
            }
            (
                headline.to_string(),
                class,
                details,
                a.reasoning.clone(),
                a.risks.clone(),
            )
        }
        None => (
            "No advice".into(),
            "verdict-watch",
            d.annealing_note.iter().cloned().collect(),
            Vec::new(),
            Vec::new(),
        ),
    };

    DerivedView {
        estimate_value,
        estimate_status,
        estimate_flagged,
        estimate_parts,
        estimate_reasoning,
        measured_tg_prime: d.measured_tg_prime_c.map(c).unwrap_or_else(|| "not measured".into()),
        deviation,
        has_limit: limit.is_some(),
        limit_value: limit.map(|l| c(l.max_product_temp_c)).unwrap_or_else(dash),
        critical: limit.map(|l| c(l.critical_temp_c)).unwrap_or_else(dash),
        basis: limit.map(|l| basis_label(l.basis).to_string()).unwrap_or_default(),
        margin: limit.map(|l| format!("{} °C", num1(l.margin_c))).unwrap_or_default(),
        // No limit at all is as much a reason to look twice as a flagged one.
        limit_flagged: limit.is_none_or(|l| l.flagged),
        limit_reasoning: limit.map(|l| l.reasoning.clone()).unwrap_or_default(),
        alternative: alt
            .map(|a| {
                format!(
                    "Alternative: governed by {} at {}, margin {} °C → {}",
                    basis_label(a.basis),
                    c(a.critical_temp_c),
                    num1(a.margin_c),
                    c(a.max_product_temp_c)
                )
            })
            .unwrap_or_default(),
        alternative_caution: alt.map(|a| a.caution.clone()).unwrap_or_default(),
        limit_note: d.limit_note.clone().unwrap_or_default(),
        has_alternative: alt.is_some(),
        uses_alternative: d.uses_crystalline_limit,
        in_use: d.max_product_temp_c().map(c).unwrap_or_default(),
        anneal_headline,
        anneal_class,
        anneal_details,
        anneal_reasoning,
        anneal_risks,
        caution: "These derived values support the judgement of qualified people and the lab's quality system; they do not replace experimental confirmation.".into(),
    }
}
