//! The `cycle-check` topic: its JSON shape and refusals.

use super::*;
use serde_json::json;

fn topic_input() -> serde_json::Value {
    json!({
        "cycle": {
            "freezing": {"ramp_c_per_min": 1.0, "hold_temp_c": -45.0, "hold_min": 120.0},
            "primary": {"ramp_c_per_min": 0.5, "shelf_temp_c": -35.0,
                        "chamber_pressure_mtorr": 60.0, "hold_min": 12000.0},
            "secondary": {"ramp_c_per_min": 0.1, "shelf_temp_c": 40.0,
                          "pressure_mtorr": 60.0, "hold_min": 360.0},
            "condenser_temp_c": -70.0
        },
        "formulation": {"max_product_temp_c": -34.0, "limit_kind": "collapse",
                        "tg_prime_c": -32.0},
        "fill_volume_ml": 4.0,
        "solids_mass_fraction": 0.05,
        "vial": {"inner_area_cm2": 3.8, "outer_area_cm2": 4.71, "kc_cal_s_cm2_k": 3.0e-4,
                 "kp_cal_s_cm2_k_torr": 1.5e-3, "kd_per_torr": 1.0},
        "resistance": {"r0_cm2_torr_h_g": 1.4, "a1_cm_torr_h_g": 16.0, "a2_per_cm": 0.0},
        "dryer": {"shelf_area_m2": 1.0, "min_pressure_mtorr": 20.0,
                  "condenser_capacity_kg": 20.0, "edge_heat_factor": 1.3,
                  "capability": [{"pressure_mtorr": 50.0, "max_sublimation_kg_h": 0.5},
                                 {"pressure_mtorr": 200.0, "max_sublimation_kg_h": 2.0}]},
        "vial_count": 500
    })
}

#[test]
fn the_cycle_check_topic_answers_with_the_documented_fields() {
    let out = calc_cycle_check(topic_input()).unwrap();
    assert_eq!(out["overall"], "ok", "{out:#}");
    let topics: Vec<&str> = out["checks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["topic"].as_str().unwrap())
        .collect();
    assert_eq!(
        topics,
        [
            "product_temperature",
            "primary_drying_time",
            "freezing",
            "annealing",
            "secondary_drying",
            "condenser",
            "equipment"
        ]
    );
    let vials = out["vials"].as_array().unwrap();
    assert_eq!(vials.len(), 4);
    for key in [
        "class",
        "share",
        "peak_front_temp_c",
        "peak_bottom_temp_c",
        "drying_time_h",
        "peak_sublimation_rate_g_h",
    ] {
        assert!(vials[0].get(key).is_some(), "vials lack {key}");
    }
    assert!(vials.iter().any(|v| v["class"] == "edge"));
    for key in ["first_dry_h", "last_dry_h", "peak_sublimation_kg_h"] {
        assert!(out["batch"].get(key).is_some(), "batch lacks {key}");
    }
    assert!(out["caution"]
        .as_str()
        .unwrap()
        .contains("experimental confirmation"));
    assert!(crate::calc::TOPICS.contains(&"cycle-check"));
}

#[test]
fn bad_cycle_check_inputs_are_refused_naming_the_field() {
    let cases = [
        (
            json!({"cycle": {"primary": {"hold_min": -5.0}}}),
            "cycle.primary.hold_min",
        ),
        (json!({"formulation": {"te_c": 500.0}}), "formulation.te_c"),
        (
            json!({"formulation": {"limit_kind": "melting"}}),
            "formulation.limit_kind",
        ),
        (
            json!({"dryer": {"shelf_area_m2": -1.0}}),
            "dryer.shelf_area_m2",
        ),
        (
            json!({"dryer": {"edge_heat_factor": 0.5}}),
            "dryer.edge_heat_factor",
        ),
        (json!({"vial_count": 0}), "vial_count"),
        (json!({"edge_vial_share": 1.5}), "edge_vial_share"),
        (json!({"fill_volume_ml": 0.0}), "fill_volume_ml"),
        (
            json!({"unfrozen_water_g_per_g_solids": 2.0}),
            "unfrozen_water_g_per_g_solids",
        ),
        (
            json!({"vial": {"kc_cal_s_cm2_k": -1.0}}),
            "vial.kc_cal_s_cm2_k",
        ),
    ];
    for (patch, field) in cases {
        let mut input = topic_input();
        crate::drying::tests::merge(&mut input, &patch);
        let err = calc_cycle_check(input).unwrap_err();
        assert_eq!(err.field, field, "{patch}: {err}");
    }
}
