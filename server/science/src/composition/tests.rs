use super::*;
use approx::assert_relative_eq;
use serde_json::json;

fn part(
    name: &str,
    mg_ml: f64,
    behaviour: FreezingBehaviour,
    tg: Option<f64>,
) -> FormulationComponent {
    FormulationComponent {
        name: name.into(),
        material_id: None,
        concentration_mg_ml: mg_ml,
        behaviour,
        tg_prime_c: tg,
        k: None,
        delta_cp_j_gk: None,
    }
}

fn estimate_with(
    components: Vec<FormulationComponent>,
    method: MixtureMethod,
    max_missing_share: f64,
) -> Result<FormulationEstimate, InputError> {
    formulation_estimate(&FormulationEstimateInput {
        components,
        method,
        max_missing_share,
    })
}

fn estimate(components: Vec<FormulationComponent>) -> FormulationEstimate {
    estimate_with(components, MixtureMethod::Fox, DEFAULT_MAX_MISSING_SHARE).unwrap()
}

use FreezingBehaviour::{Amorphous, Crystallizes, MayCrystallize};

#[test]
fn a_single_excipient_reproduces_its_own_tg_prime() {
    // Sucrose Tg' −32 °C (literature value, from memory).
    let r = estimate(vec![part("sucrose", 50.0, Amorphous, Some(-32.0))]);
    assert_eq!(r.status, EstimateStatus::Estimated);
    assert_relative_eq!(r.estimate_tg_prime_c.unwrap(), -32.0, max_relative = 1e-12);
    assert_relative_eq!(r.solids_mg_ml, 50.0);
}

#[test]
fn sucrose_with_trehalose_lies_between_their_tg_primes() {
    // Tg' sucrose −32 °C, trehalose −29.5 °C (literature value, from memory).
    let r = estimate(vec![
        part("sucrose", 30.0, Amorphous, Some(-32.0)),
        part("trehalose", 20.0, Amorphous, Some(-29.5)),
    ]);
    let t = r.estimate_tg_prime_c.unwrap();
    assert!(t > -32.0 && t < -29.5, "{t}");
    assert_relative_eq!(r.included[1].amorphous_fraction, 0.4, max_relative = 1e-12);
}

#[test]
fn a_crystallizing_bulking_agent_is_left_out_and_reported() {
    // Mannitol crystallizes (literature); sucrose Tg' −32 °C.
    let r = estimate(vec![
        part("mannitol", 40.0, Crystallizes, Some(-33.0)),
        part("sucrose", 10.0, Amorphous, Some(-32.0)),
    ]);
    assert_eq!(r.status, EstimateStatus::Estimated);
    assert_relative_eq!(r.estimate_tg_prime_c.unwrap(), -32.0, max_relative = 1e-12);
    assert_relative_eq!(
        r.excluded_crystallizing[0].solid_fraction,
        0.8,
        max_relative = 1e-12
    );
    assert_relative_eq!(r.included[0].solid_fraction, 0.2, max_relative = 1e-12);
    assert_relative_eq!(r.included[0].amorphous_fraction, 1.0, max_relative = 1e-12);
}

#[test]
fn a_component_that_may_crystallize_is_counted_and_flagged() {
    // Glycine amorphous Tg' ≈ −37 to −40 °C; sucrose −32 °C (literature value, from memory).
    let r = estimate(vec![
        part("sucrose", 40.0, Amorphous, Some(-32.0)),
        part("glycine", 10.0, MayCrystallize, Some(-38.0)),
    ]);
    assert_eq!(r.status, EstimateStatus::Flagged);
    assert!(r.estimate_tg_prime_c.unwrap() < -32.0);
    assert_relative_eq!(
        r.estimate_if_crystallized_c.unwrap(),
        -32.0,
        max_relative = 1e-12
    );
    assert!(r.reasoning.iter().any(|l| l.contains("may crystallize")));
}

#[test]
fn a_small_missing_share_flags_the_estimate() {
    let r = estimate(vec![
        part("sucrose", 50.0, Amorphous, Some(-32.0)),
        part("polysorbate 80", 0.2, Amorphous, None),
    ]);
    assert_eq!(r.status, EstimateStatus::Flagged);
    assert_eq!(r.missing[0].lacks, "tg_prime_c");
    assert_relative_eq!(r.estimate_tg_prime_c.unwrap(), -32.0, max_relative = 1e-12);
}

#[test]
fn a_large_missing_share_refuses_the_estimate() {
    let r = estimate(vec![
        part("sucrose", 50.0, Amorphous, Some(-32.0)),
        part("unknown polymer", 10.0, Amorphous, None),
    ]);
    assert_eq!(r.status, EstimateStatus::Refused);
    assert!(r.estimate_tg_prime_c.is_none());
    assert!(r.reasoning.iter().any(|l| l.contains("more than")));
}

#[test]
fn an_all_crystalline_formulation_has_no_tg_prime_estimate() {
    let r = estimate(vec![part("mannitol", 50.0, Crystallizes, None)]);
    assert_eq!(r.status, EstimateStatus::Refused);
    assert!(r.reasoning.iter().any(|l| l.contains("eutectic")));
}

#[test]
fn gordon_taylor_needs_k_on_every_component_whatever_the_order() {
    let mut trehalose = part("trehalose", 25.0, Amorphous, Some(-29.5));
    trehalose.k = Some(1.0);
    let mut sucrose = part("sucrose", 25.0, Amorphous, Some(-32.0));
    sucrose.k = Some(1.0);
    let gt = MixtureMethod::GordonTaylor;
    let r = estimate_with(vec![sucrose.clone(), trehalose.clone()], gt, 0.0).unwrap();
    // Equal weights and fractions: the arithmetic mean (hand calculation).
    assert_relative_eq!(r.estimate_tg_prime_c.unwrap(), -30.75, max_relative = 1e-12);
    assert!(r.reasoning.iter().any(|l| l.contains("k = 1")));
    // Without k the first listed is not silently the reference: it is left out.
    sucrose.k = None;
    let r = estimate_with(vec![sucrose, trehalose], gt, 0.6).unwrap();
    assert_eq!(r.missing[0].name, "sucrose");
    assert_eq!(r.missing[0].lacks, "k");
    assert_eq!(r.status, EstimateStatus::Flagged);
}

#[test]
fn a_minority_salt_without_a_tg_prime_flags_the_estimate_as_maybe_too_warm() {
    // The case: sucrose 50 mg/mL (Tg' −32 °C, from memory) with NaCl 9 mg/mL,
    // which the library marks as crystallizing and gives no Tg'.
    let r = estimate(vec![
        part("sucrose", 50.0, Amorphous, Some(-32.0)),
        part("sodium chloride", 9.0, Crystallizes, None),
    ]);
    assert_eq!(r.status, EstimateStatus::Flagged);
    assert!(r.may_be_too_warm);
    assert_relative_eq!(r.estimate_tg_prime_c.unwrap(), -32.0, max_relative = 1e-12);
    assert_eq!(r.estimate_if_left_amorphous_c, None);
    assert!(r.reasoning.iter().any(|l| l.contains("may be too warm")));
}

#[test]
fn a_minority_crystallizer_with_a_tg_prime_is_shown_both_ways_and_the_lower_is_given() {
    // Glycine amorphous Tg' ≈ −37 to −40 °C, sucrose −32 °C (from memory); glycine here
    // marked as crystallizing, 20 % of the solids.
    let r = estimate(vec![
        part("sucrose", 40.0, Amorphous, Some(-32.0)),
        part("glycine", 10.0, Crystallizes, Some(-38.0)),
    ]);
    assert_eq!(r.status, EstimateStatus::Flagged);
    let crystallized = r.estimate_with_minority_crystallized_c.unwrap();
    let amorphous = r.estimate_if_left_amorphous_c.unwrap();
    assert_relative_eq!(crystallized, -32.0, max_relative = 1e-12);
    assert!(amorphous < -32.0 && amorphous > -38.0, "{amorphous}");
    assert_relative_eq!(
        r.estimate_tg_prime_c.unwrap(),
        amorphous,
        max_relative = 1e-12
    );
    assert!(!r.may_be_too_warm);
}

#[test]
fn bad_compositions_are_refused_with_their_field_named() {
    let c = |conc: f64, tg: f64| json!({"concentration_mg_ml": conc, "behaviour": "amorphous", "tg_prime_c": tg});
    let mut bad_k = c(10.0, -32.0);
    bad_k["k"] = json!(0.0);
    let one = |c| json!({ "components": [c] });
    let cases = [
        (json!({"components": []}), "components"),
        (one(c(0.0, -32.0)), "components[0].concentration_mg_ml"),
        (
            json!({"components": [c(1.0, -32.0), c(-1.0, -32.0)]}),
            "components[1].concentration_mg_ml",
        ),
        (one(c(10.0, 62.0)), "components[0].tg_prime_c"),
        (one(c(10.0, -300.0)), "components[0].tg_prime_c"),
        (
            one(json!({"concentration_mg_ml": 1.0, "behaviour": "melts"})),
            "components[0].behaviour",
        ),
        (one(bad_k), "components[0].k"),
        (
            json!({"components": [c(1.0, -32.0)], "max_missing_share": 1.5}),
            "max_missing_share",
        ),
    ];
    for (input, field) in cases {
        assert_eq!(calc_formulation_estimate(input).unwrap_err().field, field);
    }
    // JSON cannot carry NaN or infinity: the typed function is checked directly.
    let typed = |conc: f64, tg: f64| {
        let components = vec![part("s", conc, Amorphous, Some(tg))];
        estimate_with(components, MixtureMethod::Fox, 0.1)
            .unwrap_err()
            .field
    };
    assert_eq!(typed(f64::NAN, -32.0), "components[0].concentration_mg_ml");
    assert_eq!(typed(1.0, f64::INFINITY), "components[0].tg_prime_c");
}

#[test]
fn the_json_topic_defaults_to_fox_and_a_ten_percent_missing_share() {
    let out = calc_formulation_estimate(json!({"components": [
        {"name": "sucrose", "material_id": 7, "concentration_mg_ml": 50.0, "behaviour": "amorphous", "tg_prime_c": -32.0},
        {"name": "polysorbate 80", "concentration_mg_ml": 5.0, "behaviour": "amorphous"}
    ]}))
    .unwrap();
    assert_eq!(out["method"], "fox");
    assert_eq!(out["status"], "flagged");
    assert_eq!(out["included"][0]["material_id"], 7);
}
