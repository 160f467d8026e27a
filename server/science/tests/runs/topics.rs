//! The run topics' JSON through `calc::run`, and bad input naming its field.

use super::*;

fn field_of(topic: &str, input: Value) -> String {
    match calc::run(topic, input) {
        Err(CalcError::Input(e)) => e.field,
        other => panic!("expected an input error, got {other:?}"),
    }
}

#[test]
fn the_run_topics_are_registered() {
    for topic in [
        "kv-from-gravimetric",
        "kv-fit",
        "rp-from-product-temperature",
        "secondary-drying-kinetics",
        "end-of-primary-drying",
    ] {
        assert!(calc::TOPICS.contains(&topic), "{topic}");
    }
}

#[test]
fn kv_from_gravimetric_through_json() {
    // By hand: 2838 J/g × 1.5 g / (4.71 cm² × 10 h × 12 K) = 20.92 W/(m²·K).
    let input = json!({
        "time_h": [0.0, 5.0, 10.0],
        "shelf_temp_c": [-20.0, -20.0, -20.0],
        "bottom_temp_c": [-32.0, -32.0, -32.0],
        "mass_loss_g": 1.5,
        "outer_area_cm2": 4.71
    });
    let out = calc::run("kv-from-gravimetric", input.clone()).unwrap();
    assert_relative_eq!(
        out["kv_w_m2k"].as_f64().unwrap(),
        20.92,
        max_relative = 1e-3
    );
    assert!(out["kv_cal_s_cm2_k"].as_f64().unwrap() > 0.0);
    assert!(out["caution"].as_str().unwrap().len() > 20);
    let mut short = input.clone();
    short["bottom_temp_c"] = json!([-32.0, -32.0]);
    assert_eq!(field_of("kv-from-gravimetric", short), "bottom_temp_c");
    let mut negative = input.clone();
    negative["mass_loss_g"] = json!(-1.0);
    assert_eq!(field_of("kv-from-gravimetric", negative), "mass_loss_g");
    let mut unknown = input;
    unknown["fill_ml"] = json!(2.0);
    assert!(calc::run("kv-from-gravimetric", unknown).is_err());
}

#[test]
fn kv_fit_through_json() {
    let kv = |p: f64| 41_840.0 * (3.0e-4 + 1.5e-3 * p / (1.0 + p));
    let points: Vec<Value> = [0.05, 0.1, 0.2, 0.4]
        .iter()
        .map(|&p| json!({"pressure_mtorr": p * 1000.0, "kv_w_m2k": kv(p)}))
        .collect();
    let out = calc::run("kv-fit", json!({ "points": points })).unwrap();
    assert_relative_eq!(
        out["kc_cal_s_cm2_k"].as_f64().unwrap(),
        3.0e-4,
        max_relative = 1e-6
    );
    assert_relative_eq!(
        out["kp_cal_s_cm2_k_torr"].as_f64().unwrap(),
        1.5e-3,
        max_relative = 1e-6
    );
    assert_relative_eq!(
        out["kd_per_torr"].as_f64().unwrap(),
        1.0,
        max_relative = 1e-5
    );
    assert_eq!(out["residuals_w_m2k"].as_array().unwrap().len(), 4);
    assert!(out["caution"].is_string());
    assert_eq!(
        field_of("kv-fit", json!({"points": &points[..2]})),
        "points"
    );
    let mut bad = points.clone();
    bad[1]["kv_w_m2k"] = json!(-3.0);
    assert_eq!(
        field_of("kv-fit", json!({ "points": bad })),
        "points[1].kv_w_m2k"
    );
}

#[test]
fn rp_from_product_temperature_through_json() {
    let (_, input) = rp_run(
        Resistance {
            r0_cm2_torr_h_g: 1.4,
            a1_cm_torr_h_g: 16.0,
            a2_per_cm: 0.0,
        },
        0.0,
        5.0,
    );
    let value = serde_json::to_value(&input).unwrap();
    let out = calc::run("rp-from-product-temperature", value.clone()).unwrap();
    assert_relative_eq!(
        out["fit"]["r0_cm2_torr_h_g"].as_f64().unwrap(),
        1.4,
        max_relative = 1e-3
    );
    assert_relative_eq!(
        out["fit"]["a1_cm_torr_h_g"].as_f64().unwrap(),
        16.0,
        max_relative = 1e-3
    );
    let point = &out["points"][0];
    for key in ["time_h", "dried_layer_cm", "rp_cm2_torr_h_g"] {
        assert!(point[key].is_f64(), "{key}");
    }
    assert!(out["caution"].is_string());
    let mut bad = value.clone();
    bad["solids_mass_fraction"] = json!(1.5);
    assert_eq!(
        field_of("rp-from-product-temperature", bad),
        "solids_mass_fraction"
    );
    let mut bad = value.clone();
    bad["vial"]["outer_area_cm2"] = json!(0.0);
    assert_eq!(
        field_of("rp-from-product-temperature", bad),
        "vial.outer_area_cm2"
    );
    let mut bad = value;
    bad["shelf_temp_c"].as_array_mut().unwrap().pop();
    assert_eq!(field_of("rp-from-product-temperature", bad), "shelf_temp_c");
}

#[test]
fn secondary_drying_kinetics_through_json() {
    let samples = serde_json::to_value(moisture_samples(&desorption())).unwrap();
    let out = calc::run(
        "secondary-drying-kinetics",
        json!({"samples": samples, "target_water_fraction": 0.015}),
    )
    .unwrap();
    assert_relative_eq!(
        out["equilibrium_water_fraction"].as_f64().unwrap(),
        0.01,
        max_relative = 1e-6
    );
    assert_eq!(out["rates"].as_array().unwrap().len(), 3);
    assert!(out["activation_energy_kj_mol"].is_f64());
    assert!(out["hold_h"].is_f64());
    assert!(out["caution"].is_string());
    let mut bad = samples.clone();
    bad[0]["water_fraction"] = json!(4.0);
    assert_eq!(
        field_of("secondary-drying-kinetics", json!({ "samples": bad })),
        "samples[0].water_fraction"
    );
}

#[test]
fn end_of_primary_drying_through_json() {
    let input = json!({
        "time_h": [0.0, 1.0, 2.0, 3.0, 4.0, 5.0],
        "pirani_mtorr": [150.0, 150.0, null, 110.0, 100.0, 100.0],
        "manometer_mtorr": [100.0, 100.0, 100.0, 100.0, 100.0, 100.0]
    });
    let out = calc::run("end-of-primary-drying", input.clone()).unwrap();
    // By hand: the gap at 2 h is skipped, so the steepest fall is 150 → 110 mTorr from 1 h
    // to 3 h (−20 mTorr/h): it leaves the plateau at 1 h, crosses the half level 125 at
    // 2.25 h and would meet 100 mTorr at 3.5 h.
    assert_relative_eq!(out["onset_h"].as_f64().unwrap(), 1.0, max_relative = 1e-9);
    assert_relative_eq!(
        out["midpoint_h"].as_f64().unwrap(),
        2.25,
        max_relative = 1e-9
    );
    assert_relative_eq!(out["end_h"].as_f64().unwrap(), 3.5, max_relative = 1e-9);
    assert!(out["method"].is_string() && out["caution"].is_string());
    let mut flat = input.clone();
    flat["pirani_mtorr"] = json!([150.0, 150.0, 150.0, 150.0, 150.0, 150.0]);
    assert_eq!(field_of("end-of-primary-drying", flat), "pirani_mtorr");
    let mut short = input;
    short["manometer_mtorr"] = json!([100.0]);
    assert_eq!(field_of("end-of-primary-drying", short), "manometer_mtorr");
}
