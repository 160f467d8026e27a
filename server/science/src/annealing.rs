//! Annealing advice for the freezing step.
//!
//! With a crystallizing component (mannitol, glycine): a hold above the Tg' of the amorphous
//! phase and above any crystallization exotherm, so the component crystallizes fully
//! before drying, and safely below its eutectic Te, so it does not melt. Without one: an
//! optional ice-ripening hold a few degrees above Tg' that coarsens the ice and lowers the
//! dry-layer resistance Rp. The offsets and typical values below are common practice
//! (from memory, no single source); each result says so.

use serde::{Deserialize, Serialize};

use crate::error::{finite, InputError};
use crate::limit::frozen_state_temp_c;

/// The window starts this far above Tg' (common practice, no source).
pub const ABOVE_TG_PRIME_C: f64 = 2.0;
/// Extra distance above a Tg' that is only estimated.
pub const ESTIMATE_EXTRA_C: f64 = 2.0;
/// The window ends this far below Te ("several degrees"; common practice, no source).
pub const BELOW_TE_C: f64 = 5.0;
/// Typical annealing temperatures for a crystallizing bulking agent such as mannitol,
/// °C (common practice, from memory).
pub const TYPICAL_BULKING_RANGE_C: (f64, f64) = (-20.0, -10.0);
/// Typical hold, h (common practice, from memory).
pub const TYPICAL_HOLD_H: [f64; 2] = [2.0, 4.0];
/// Ice-ripening window: up to this far above Tg' ...
pub const ICE_RIPENING_SPAN_C: f64 = 10.0;
/// ... and no warmer than this, to stay clear of ice-melt onset (common practice, no source).
pub const ICE_RIPENING_CEILING_C: f64 = -5.0;

const CAUTION: &str = "Advice to support qualified judgement; confirm the annealing step by \
    DSC or freeze-drying microscopy and by a trial cycle.";

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CrystallizingComponent {
    #[serde(default)]
    pub name: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub te_c: Option<f64>,
    /// Share of the solids, 0–1.
    pub solid_fraction: f64,
}

#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TgPrimeSource {
    #[default]
    Measured,
    Estimated,
}

/// `annealing-advice` topic input.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct AnnealingInput {
    pub crystallizing: Vec<CrystallizingComponent>,
    /// Tg' of the amorphous phase, °C.
    pub amorphous_tg_prime_c: Option<f64>,
    pub tg_prime_source: TgPrimeSource,
    pub crystallization_exotherm_onset_c: Option<f64>,
    /// Whether an amorphous phase is present; assumed when a Tg' is given.
    pub amorphous_present: Option<bool>,
    pub protein_present: bool,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Recommendation {
    Anneal,
    Optional,
    NotNeeded,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AnnealKind {
    CrystallizeBulkingAgent,
    IceRipening,
}

/// `annealing-advice` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AnnealingAdvice {
    pub recommend: Recommendation,
    pub kind: Option<AnnealKind>,
    pub window_low_c: Option<f64>,
    pub window_high_c: Option<f64>,
    /// True when the bounds cross: no temperature satisfies both.
    pub window_empty: bool,
    pub suggested_temp_c: Option<f64>,
    pub typical_hold_h: Option<[f64; 2]>,
    pub reasoning: Vec<String>,
    pub risks: Vec<String>,
    pub caution: String,
}

impl AnnealingAdvice {
    fn new(recommend: Recommendation, kind: Option<AnnealKind>) -> Self {
        Self {
            recommend,
            kind,
            window_low_c: None,
            window_high_c: None,
            window_empty: false,
            suggested_temp_c: None,
            typical_hold_h: None,
            reasoning: Vec::new(),
            risks: Vec::new(),
            caution: CAUTION.into(),
        }
    }

    /// Set the window and a suggested temperature inside it, preferring `preferred`.
    fn place(&mut self, low: f64, high: f64, preferred: (f64, f64)) {
        self.window_low_c = Some(low);
        self.window_high_c = Some(high);
        self.window_empty = low >= high;
        if self.window_empty {
            return;
        }
        let (a, b) = (preferred.0.max(low), preferred.1.min(high));
        let centre = if a <= b {
            (a + b) / 2.0
        } else {
            (low + high) / 2.0
        };
        // Half-degree steps are what a shelf program takes.
        self.suggested_temp_c = Some(((centre * 2.0).round() / 2.0).clamp(low, high));
        self.typical_hold_h = Some(TYPICAL_HOLD_H);
    }
}

struct Checked {
    tg_prime: Option<f64>,
    exotherm: Option<f64>,
    te_min: Option<(f64, String)>,
}

fn check(input: &AnnealingInput) -> Result<Checked, InputError> {
    let opt = |field: &str, v: Option<f64>| v.map(|t| frozen_state_temp_c(field, t)).transpose();
    let mut te_min: Option<(f64, String)> = None;
    for (i, c) in input.crystallizing.iter().enumerate() {
        let w = finite(
            &format!("crystallizing[{i}].solid_fraction"),
            c.solid_fraction,
        )?;
        if !(w > 0.0 && w <= 1.0) {
            return Err(InputError::new(
                format!("crystallizing[{i}].solid_fraction"),
                format!("must be above 0 and at most 1 (got {w})"),
            ));
        }
        if let Some(te) = opt(&format!("crystallizing[{i}].te_c"), c.te_c)? {
            if te_min.as_ref().is_none_or(|(t, _)| te < *t) {
                te_min = Some((te, c.name.clone()));
            }
        }
    }
    let total: f64 = input.crystallizing.iter().map(|c| c.solid_fraction).sum();
    if total > 1.0 + 1e-9 {
        return Err(InputError::new(
            "crystallizing",
            format!("the solid fractions add up to {total:.3}, more than 1"),
        ));
    }
    Ok(Checked {
        tg_prime: opt("amorphous_tg_prime_c", input.amorphous_tg_prime_c)?,
        exotherm: opt(
            "crystallization_exotherm_onset_c",
            input.crystallization_exotherm_onset_c,
        )?,
        te_min,
    })
}

/// Annealing advice (module docs for the rules and where the numbers come from).
pub fn annealing_advice(input: &AnnealingInput) -> Result<AnnealingAdvice, InputError> {
    let c = check(input)?;
    let estimated = input.tg_prime_source == TgPrimeSource::Estimated;
    let above_tg = ABOVE_TG_PRIME_C + if estimated { ESTIMATE_EXTRA_C } else { 0.0 };
    let mut advice = if input.crystallizing.is_empty() {
        ice_ripening(input, &c, above_tg)
    } else {
        crystallize(input, &c, above_tg)
    };
    if estimated && c.tg_prime.is_some() {
        advice.reasoning.push(format!(
            "Tg' is an estimate, so the window starts {ESTIMATE_EXTRA_C:.0} °C further above it."
        ));
    }
    if input.protein_present && advice.kind.is_some() {
        advice.risks.push(
            "The protein spends longer in the freeze-concentrate and at the ice interface, \
             where it may unfold or aggregate."
                .into(),
        );
    }
    Ok(advice)
}

fn crystallize(input: &AnnealingInput, c: &Checked, above_tg: f64) -> AnnealingAdvice {
    let mut a = AnnealingAdvice::new(
        Recommendation::Anneal,
        Some(AnnealKind::CrystallizeBulkingAgent),
    );
    let names: Vec<&str> = input
        .crystallizing
        .iter()
        .map(|c| match c.name.as_str() {
            "" => "the crystallizing component",
            name => name,
        })
        .collect();
    let share: f64 = input.crystallizing.iter().map(|c| c.solid_fraction).sum();
    a.reasoning.push(format!(
        "{} ({:.0} % of solids) should crystallize: a hold lets it crystallize fully during \
         freezing, so it supports the cake and does not crystallize later in drying or storage.",
        names.join(", "),
        share * 100.0
    ));
    let mut lows = Vec::new();
    if let Some(tg) = c.tg_prime {
        lows.push(tg + above_tg);
        a.reasoning.push(format!(
            "The amorphous phase has Tg' {tg:.1} °C: below it, molecules are too slow to crystallize."
        ));
    }
    if let Some(exo) = c.exotherm {
        lows.push(exo);
        a.reasoning.push(format!(
            "A crystallization exotherm begins at {exo:.1} °C on warming: holding above it lets \
             that crystallization finish before drying."
        ));
    }
    let low = lows.into_iter().reduce(f64::max).unwrap_or_else(|| {
        a.reasoning.push(format!(
            "No Tg' or exotherm was given; the window starts at {:.0} °C, the cold end of \
             typical annealing temperatures.",
            TYPICAL_BULKING_RANGE_C.0
        ));
        TYPICAL_BULKING_RANGE_C.0
    });
    let high = match &c.te_min {
        Some((te, name)) => {
            a.reasoning.push(format!(
                "The lowest eutectic is {te:.1} °C ({name}); the window stays {BELOW_TE_C:.0} °C below it."
            ));
            te - BELOW_TE_C
        }
        None => {
            a.reasoning.push(format!(
                "No Te was given; the window ends at {:.0} °C, the warm end of typical annealing \
                 temperatures.",
                TYPICAL_BULKING_RANGE_C.1
            ));
            TYPICAL_BULKING_RANGE_C.1
        }
    };
    a.place(low, high, TYPICAL_BULKING_RANGE_C);
    if a.window_empty {
        a.recommend = Recommendation::Optional;
        a.reasoning.push(format!(
            "No safe window: the lower bound {low:.1} °C is not below the upper bound \
             {high:.1} °C. Check the values, or consider slower freezing or a formulation change."
        ));
    } else if let Some(t) = a.suggested_temp_c {
        a.reasoning.push(format!(
            "Window {low:.1} to {high:.1} °C; suggested {t:.1} °C for {:.0}–{:.0} h. A bulking \
             agent such as mannitol is typically annealed at {:.0} to {:.0} °C (common practice, from memory).",
            TYPICAL_HOLD_H[0],
            TYPICAL_HOLD_H[1],
            TYPICAL_BULKING_RANGE_C.0,
            TYPICAL_BULKING_RANGE_C.1
        ));
    }
    a.risks.push(
        "Warming towards Te melts the crystalline phase; keep the hold well below it.".into(),
    );
    a.risks.push(
        "Crystallizing bulking agents can form hydrates or metastable forms (mannitol \
         hemihydrate is known) that release water in storage."
            .into(),
    );
    if input.protein_present {
        a.risks.push(
            "Crystallization removes the bulking agent from the amorphous phase around the \
             protein: keep enough amorphous stabilizer (e.g. sucrose, trehalose)."
                .into(),
        );
    }
    a.risks
        .push("The hold and its ramps lengthen the cycle.".into());
    a
}

fn ice_ripening(input: &AnnealingInput, c: &Checked, above_tg: f64) -> AnnealingAdvice {
    let amorphous = input.amorphous_present.unwrap_or(c.tg_prime.is_some());
    if !amorphous {
        let mut a = AnnealingAdvice::new(Recommendation::NotNeeded, None);
        a.reasoning.push(
            "No crystallizing component and no amorphous phase were given: there is nothing \
             for an annealing step to do."
                .into(),
        );
        return a;
    }
    let mut a = AnnealingAdvice::new(Recommendation::Optional, Some(AnnealKind::IceRipening));
    a.reasoning.push(
        "No component is expected to crystallize. An optional hold a few degrees above Tg' \
         lets small ice crystals ripen into larger ones: larger pores, a lower dry-layer \
         resistance Rp and faster primary drying."
            .into(),
    );
    match c.tg_prime {
        Some(tg) => {
            let (low, high) = (
                tg + above_tg,
                (tg + ICE_RIPENING_SPAN_C).min(ICE_RIPENING_CEILING_C),
            );
            a.place(low, high, (tg + above_tg + 3.0, tg + above_tg + 3.0));
            match a.suggested_temp_c {
                Some(t) => a.reasoning.push(format!(
                    "Tg' {tg:.1} °C: window {low:.1} to {high:.1} °C, suggested {t:.1} °C for \
                     {:.0}–{:.0} h (common practice, from memory).",
                    TYPICAL_HOLD_H[0], TYPICAL_HOLD_H[1]
                )),
                None => a.reasoning.push(format!(
                    "Tg' {tg:.1} °C leaves no room below {ICE_RIPENING_CEILING_C:.0} °C, where \
                     ice begins to melt: no ripening window."
                )),
            }
        }
        None => a
            .reasoning
            .push("Give the Tg' of the amorphous phase to place the window.".into()),
    }
    a.risks
        .push("Amorphous components may separate into phases of different Tg'.".into());
    a.risks
        .push("A component thought to stay amorphous may crystallize during the hold.".into());
    if let Some(exo) = c.exotherm {
        a.risks.push(format!(
            "A crystallization exotherm was seen from {exo:.1} °C: a hold above it will \
             crystallize that component."
        ));
    }
    a
}

/// `annealing-advice` topic.
pub fn calc_annealing_advice(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: AnnealingInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&annealing_advice(&req)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn advice(v: serde_json::Value) -> AnnealingAdvice {
        serde_json::from_value(calc_annealing_advice(v).unwrap()).unwrap()
    }

    fn within_window(a: &AnnealingAdvice) -> bool {
        match (a.window_low_c, a.suggested_temp_c, a.window_high_c) {
            (Some(lo), Some(t), Some(hi)) => lo <= t && t <= hi,
            _ => false,
        }
    }

    #[test]
    fn mannitol_with_sucrose_gets_a_window_between_tg_prime_and_te() {
        // Mannitol Te −1.0 to −1.5 °C; sucrose Tg' −32 °C (literature value, from memory).
        let a = advice(json!({
            "crystallizing": [{"name": "mannitol", "te_c": -1.5, "solid_fraction": 0.8}],
            "amorphous_tg_prime_c": -32.0, "protein_present": true
        }));
        assert_eq!(a.recommend, Recommendation::Anneal);
        assert_eq!(a.kind, Some(AnnealKind::CrystallizeBulkingAgent));
        assert_eq!(a.window_low_c, Some(-30.0));
        assert_eq!(a.window_high_c, Some(-6.5));
        // Inside the typical −20 to −10 °C for mannitol (common practice, from memory).
        assert_eq!(a.suggested_temp_c, Some(-15.0));
        assert_eq!(a.typical_hold_h, Some([2.0, 4.0]));
        assert!(a.risks.iter().any(|r| r.contains("stabilizer")));
        assert!(a.caution.contains("confirm"));
    }

    #[test]
    fn an_exotherm_above_tg_prime_raises_the_floor_of_the_window() {
        // Glycine Te −3.0 to −3.5 °C (literature value, from memory); exotherm onset invented.
        let a = advice(json!({
            "crystallizing": [{"name": "glycine", "te_c": -3.5, "solid_fraction": 0.5}],
            "amorphous_tg_prime_c": -38.0, "crystallization_exotherm_onset_c": -18.0
        }));
        assert_eq!(a.window_low_c, Some(-18.0));
        assert_eq!(a.window_high_c, Some(-8.5));
        assert!(within_window(&a));
    }

    #[test]
    fn crossing_bounds_are_reported_as_no_window() {
        let a = advice(json!({
            "crystallizing": [{"name": "salt", "te_c": -21.1, "solid_fraction": 0.1}],
            "amorphous_tg_prime_c": -24.0
        }));
        assert!(a.window_empty);
        assert_eq!(a.recommend, Recommendation::Optional);
        assert!(a.suggested_temp_c.is_none());
        assert!(a.reasoning.iter().any(|r| r.contains("No safe window")));
    }

    #[test]
    fn an_all_amorphous_formulation_gets_an_optional_ice_ripening_hold() {
        // Sucrose Tg' −32 °C (literature value, from memory).
        let a = advice(json!({"amorphous_tg_prime_c": -32.0, "protein_present": true}));
        assert_eq!(a.recommend, Recommendation::Optional);
        assert_eq!(a.kind, Some(AnnealKind::IceRipening));
        assert_eq!(a.suggested_temp_c, Some(-27.0));
        assert!(within_window(&a));
        assert!(a.reasoning.iter().any(|r| r.contains("Rp")));
        assert!(a.risks.iter().any(|r| r.contains("phases")));
        assert!(a.risks.iter().any(|r| r.contains("unfold")));
    }

    #[test]
    fn an_estimated_tg_prime_moves_the_window_up() {
        let a = advice(json!({"amorphous_tg_prime_c": -32.0, "tg_prime_source": "estimated"}));
        assert_eq!(a.window_low_c, Some(-28.0));
        assert!(a.reasoning.iter().any(|r| r.contains("estimate")));
    }

    #[test]
    fn nothing_to_anneal_for_is_not_needed() {
        let a = advice(json!({}));
        assert_eq!(a.recommend, Recommendation::NotNeeded);
        assert!(a.kind.is_none());
    }

    #[test]
    fn bad_annealing_inputs_are_refused_with_their_field_named() {
        let field = |v| calc_annealing_advice(v).unwrap_err().field;
        let comp = |w: f64, te: f64| json!({"crystallizing": [{"name": "m", "te_c": te, "solid_fraction": w}]});
        assert_eq!(field(comp(0.0, -1.5)), "crystallizing[0].solid_fraction");
        assert_eq!(field(comp(-0.5, -1.5)), "crystallizing[0].solid_fraction");
        assert_eq!(field(comp(1.5, -1.5)), "crystallizing[0].solid_fraction");
        assert_eq!(field(comp(0.5, 5.0)), "crystallizing[0].te_c");
        assert_eq!(field(comp(0.5, -300.0)), "crystallizing[0].te_c");
        assert_eq!(
            field(json!({"amorphous_tg_prime_c": 10.0})),
            "amorphous_tg_prime_c"
        );
        assert_eq!(
            field(json!({"tg_prime_source": "guessed"})),
            "tg_prime_source"
        );
        let two = json!({"crystallizing": [{"solid_fraction": 0.7}, {"solid_fraction": 0.7}]});
        assert_eq!(field(two), "crystallizing");
        let nan = AnnealingInput {
            crystallization_exotherm_onset_c: Some(f64::NAN),
            ..Default::default()
        };
        assert_eq!(
            annealing_advice(&nan).unwrap_err().field,
            "crystallization_exotherm_onset_c"
        );
    }
}
