use super::*;
use crate::batch::DEFAULT_KV_CV;
use crate::dryer::CapabilityPoint;
use crate::drying::tests::{merge, sucrose_5_percent};
use crate::drying::{simulate_summary, PrimaryDryingInput};
use approx::assert_relative_eq;
use serde_json::json;

fn asking(limit: f64) -> SuggestInput {
    SuggestInput {
        base: sucrose_5_percent(),
        max_product_temp_c: limit,
        limit_kind: None,
        shelf_range_c: None,
        pressure_range_mtorr: None,
        start_shelf_temp_c: None,
        ramp_c_per_min: None,
        dryer: None,
        vial_count: None,
        edge_vial_share: None,
        kv_cv: None,
    }
}

/// The 5 % sucrose product in a vial whose Kv is `factor` × the nominal.
fn scaled(factor: f64, shelf_c: f64, pc: f64) -> PrimaryDryingInput {
    let mut base = sucrose_5_percent();
    base.vial.kc_cal_s_cm2_k *= factor;
    base.vial.kp_cal_s_cm2_k_torr *= factor;
    PrimaryDryingInput::constant(&base, shelf_c, pc)
}

#[test]
fn the_tang_pikal_pressure_formula_is_reproduced() {
    // Tang & Pikal (2004), from memory: Pc = 0.29·10^(0.019·Tp) Torr.
    assert_relative_eq!(tang_pikal_pressure_torr(0.0), 0.29, max_relative = 1e-12);
    // −30 °C: 0.29 × 10^−0.57 = 0.0781 Torr; −20 °C: 0.29 × 10^−0.38 = 0.1209 Torr.
    assert_relative_eq!(
        tang_pikal_pressure_torr(-30.0),
        0.078_05,
        max_relative = 1e-3
    );
    assert_relative_eq!(
        tang_pikal_pressure_torr(-20.0),
        0.120_89,
        max_relative = 1e-3
    );
}

#[test]
fn the_warmest_vials_are_held_at_the_limit_and_no_warmer_shelf_would_keep_them() {
    // The warmest class by default: Kv × (1 + √3 × 5 %), the high centre class (three-point
    // Gauss–Hermite rule; the 5 % spread is common practice, no source).
    let limit = -32.0;
    let s = suggest(&asking(limit)).unwrap();
    let warmest = 1.0 + 3f64.sqrt() * DEFAULT_KV_CV;
    let at = |shelf: f64| {
        simulate_summary(&scaled(warmest, shelf, s.chamber_pressure_mtorr))
            .unwrap()
            .peak_front_temp_c
    };
    assert!(at(s.shelf_temp_c) <= limit + 1e-9);
    assert!(at(s.shelf_temp_c + 0.2) > limit);
    // The nominal vial runs cooler than the limit: room for the warmer vials.
    let nominal = simulate_summary(&scaled(1.0, s.shelf_temp_c, s.chamber_pressure_mtorr))
        .unwrap()
        .peak_front_temp_c;
    assert!(nominal < limit - 0.1, "{nominal} °C");
    // The drying time is the slowest class's, Kv × (1 − √3 × 5 %).
    let slowest = 1.0 - 3f64.sqrt() * DEFAULT_KV_CV;
    let t = simulate_summary(&scaled(slowest, s.shelf_temp_c, s.chamber_pressure_mtorr))
        .unwrap()
        .drying_time_h;
    assert_relative_eq!(s.drying_time_h, t, max_relative = 1e-9);
    assert!(s.caution.contains("experimental"));
}

#[test]
fn the_pressure_follows_the_stated_rule_not_the_edge_of_the_range() {
    // Tang & Pikal (2004), from memory: 290·10^(0.019 × −32) = 71 mTorr for −32 °C; the
    // rule takes no lower pressure, so not the 30 mTorr edge of the range.
    let s = suggest(&asking(-32.0)).unwrap();
    assert_relative_eq!(
        s.tang_pikal_pressure_mtorr,
        290.0 * 10f64.powf(0.019 * -32.0),
        max_relative = 1e-12
    );
    assert!(s.chamber_pressure_mtorr >= s.tang_pikal_pressure_mtorr.round() - 1e-9);
    assert!(s.chamber_pressure_mtorr > DEFAULT_PRESSURE_RANGE_MTORR[0] + 1.0);
    // The fastest of the range is reported beside it and is no slower.
    let fast = s.fastest_in_range.clone().unwrap();
    assert!(fast.drying_time_h <= s.drying_time_h * 1.0001);
    assert!(s.reasoning.iter().any(|r| r.contains("Tang & Pikal")));
}

#[test]
fn the_peak_rise_for_kv_or_rp_ten_percent_off_is_reported() {
    // A higher Kv or a higher Rp warms the product (Pikal 1985 model).
    let s = suggest(&asking(-30.0)).unwrap();
    assert!(s.peak_rise_if_kv_10_percent_high_c > 0.0);
    assert!(s.peak_rise_if_rp_10_percent_high_c > 0.0);
    assert!(s.peak_rise_if_kv_10_percent_high_c < 5.0);
    assert!(s.reasoning.iter().any(|r| r.contains("10 % higher")));
}

#[test]
fn a_eutectic_limit_is_held_at_the_bottom() {
    // The bottom is never colder than the front (conduction across the ice, Pikal 1985).
    let mut input = asking(-25.0);
    input.limit_kind = Some(LimitKind::Eutectic);
    let eutectic = suggest(&input).unwrap();
    assert!(eutectic.peak_bottom_temp_c <= -25.0 + 1e-9);
    let collapse = suggest(&asking(-25.0)).unwrap();
    assert!(eutectic.shelf_temp_c <= collapse.shelf_temp_c);
}

#[test]
fn the_dryer_sets_the_lowest_pressure_and_caps_the_load_rate() {
    // Capability rising with pressure (Patel, Chaudhary & Pikal 2010, from memory); the
    // numbers are made up to bind.
    let mut input = asking(-30.0);
    input.vial_count = Some(3000.0);
    let free = suggest(&input).unwrap();
    let rate = free.batch_peak_sublimation_kg_h.unwrap();
    input.dryer = Some(Dryer {
        shelf_area_m2: 2.0,
        min_pressure_mtorr: Some(90.0),
        condenser_capacity_kg: None,
        capability: Some(vec![CapabilityPoint {
            pressure_mtorr: 300.0,
            max_sublimation_kg_h: rate * 0.6 * 300.0 / free.chamber_pressure_mtorr,
        }]),
        edge_heat_factor: Some(1.2),
    });
    let s = suggest(&input).unwrap();
    assert!(s.chamber_pressure_mtorr >= 90.0);
    let cap = input
        .dryer
        .as_ref()
        .unwrap()
        .capability_kg_h(s.chamber_pressure_mtorr)
        .unwrap();
    assert!(s.batch_peak_sublimation_kg_h.unwrap() <= cap * (1.0 + 1e-6));
    assert!(s.pressure_range_mtorr[0] >= 90.0);
}

#[test]
fn a_narrow_shelf_range_caps_the_shelf_and_says_so() {
    let mut input = asking(-25.0);
    input.shelf_range_c = Some([-40.0, -20.0]);
    let s = suggest(&input).unwrap();
    assert_relative_eq!(s.shelf_temp_c, -20.0);
    assert!(s.reasoning.iter().any(|r| r.contains("top of its range")));
}

#[test]
fn a_limit_no_setting_can_keep_is_refused_naming_the_limit() {
    // At 30 mTorr ice sublimes only with its front above about −51 °C.
    let err = suggest(&asking(-55.0)).unwrap_err();
    assert_eq!(err.field, "max_product_temp_c");
    assert!(
        err.message.contains("no shelf temperature"),
        "{}",
        err.message
    );
}

#[test]
fn bad_inputs_are_refused_by_name() {
    let base = serde_json::to_value(asking(-30.0)).unwrap();
    let cases = [
        ("shelf_range_c", json!({"shelf_range_c": [10.0, -10.0]})),
        (
            "pressure_range_mtorr[0]",
            json!({"pressure_range_mtorr": [0.0, 100.0]}),
        ),
        (
            "base.resistance.r0_cm2_torr_h_g",
            json!({"base": {"resistance": {"r0_cm2_torr_h_g": -1.0}}}),
        ),
        ("kv_cv", json!({"kv_cv": 0.9})),
        (
            "dryer.shelf_area_m2",
            json!({"dryer": {"shelf_area_m2": 0.0}}),
        ),
    ];
    for (field, patch) in cases {
        let mut input = base.clone();
        merge(&mut input, &patch);
        let err = calc_suggest_primary_drying(input).unwrap_err();
        assert_eq!(err.field, field, "{patch}: {err}");
    }
}

#[test]
fn a_narrow_pressure_range_without_a_whole_mtorr_is_handled() {
    let mut input = asking(-30.0);
    input.pressure_range_mtorr = Some([80.2, 80.7]);
    let s = suggest(&input).unwrap();
    assert!(
        (80.2..=80.7).contains(&s.chamber_pressure_mtorr),
        "{}",
        s.chamber_pressure_mtorr
    );
}
