//! Each calculation topic answers the same JSON through `POST /api/v1/calc/TOPIC` and
//! `glasspoint calc TOPIC`, and refuses bad input naming the field on both.

use axum::http::StatusCode;
use serde_json::{json, Value};

use crate::binary::calc as cli;
use crate::helpers::TestApp;

// The 6R inner area happens to lie near π; it is a measured area, not the constant.
#[allow(clippy::approx_constant)]
fn vial() -> Value {
    // The shipped "6R tubing vial" typical coefficients (vials.json).
    json!({"inner_area_cm2": 3.14, "outer_area_cm2": 3.80, "kc_cal_s_cm2_k": 2.6e-4,
           "kp_cal_s_cm2_k_torr": 1.8e-3, "kd_per_torr": 1.5})
}

fn base() -> Value {
    json!({"fill_volume_ml": 2.0, "solids_mass_fraction": 0.05, "vial": vial(),
           "resistance": {"r0_cm2_torr_h_g": 1.4, "a1_cm_torr_h_g": 16.0, "a2_per_cm": 0.0}})
}

fn cases() -> Vec<(&'static str, Value, &'static str, Value)> {
    let mut primary = base();
    primary["shelf_temp_c"] = json!(-25.0);
    primary["chamber_pressure_mtorr"] = json!(100.0);
    primary["max_product_temp_c"] = json!(-32.0);
    let mut primary_bad = primary.clone();
    primary_bad["vial"]["inner_area_cm2"] = json!(-1.0);
    vec![
        (
            "ice-vapor-pressure",
            json!({"temperature_c": -30.0}),
            "temperature_c",
            json!({"temperature_c": 5.0}),
        ),
        (
            "mixture-tg",
            json!({"method": "fox", "components": [
                {"name": "A", "mass_fraction": 0.5, "tg_c": 99.85},
                {"name": "B", "mass_fraction": 0.5, "tg_c": 104.85}]}),
            "components[1].mass_fraction",
            json!({"method": "fox", "components": [
                {"name": "A", "mass_fraction": 0.5, "tg_c": 99.85},
                {"name": "B", "mass_fraction": -0.5, "tg_c": 104.85}]}),
        ),
        (
            "cake-tg",
            json!({"solids_tg_c": 62.0, "k": 4.7, "water_fraction": 0.02}),
            "k",
            json!({"solids_tg_c": 62.0, "k": 0.0, "water_fraction": 0.02}),
        ),
        (
            "cake-moisture-limit",
            json!({"solids_tg_c": 62.0, "k": 4.7, "storage_temp_c": 25.0, "margin_c": 20.0}),
            "margin_c",
            json!({"solids_tg_c": 62.0, "k": 4.7, "storage_temp_c": 25.0}),
        ),
        (
            "product-limit",
            json!({"collapse_onset_c": -30.9, "tg_prime_c": -33.1}),
            "margin_c",
            json!({"tg_prime_c": -33.1, "margin_c": -1.0}),
        ),
        (
            "formulation-estimate",
            json!({"components": [{"name": "Sucrose", "concentration_mg_ml": 50.0, "behaviour": "amorphous", "tg_prime_c": -32.0}]}),
            "components[0].concentration_mg_ml",
            json!({"components": [{"name": "Sucrose", "concentration_mg_ml": 0.0, "behaviour": "amorphous", "tg_prime_c": -32.0}]}),
        ),
        (
            "annealing-advice",
            json!({"crystallizing": [{"name": "Mannitol", "te_c": -1.5, "solid_fraction": 0.8}], "amorphous_tg_prime_c": -34.0}),
            "crystallizing[0].solid_fraction",
            json!({"crystallizing": [{"name": "Mannitol", "te_c": -1.5, "solid_fraction": "most"}], "amorphous_tg_prime_c": -34.0}),
        ),
        (
            "gordon-taylor-fit",
            json!({"tg1_c": -33.0, "tg2_c": -30.0, "points": [{"w2": 0.25, "tg_c": -31.9}, {"w2": 0.5, "tg_c": -31.1}, {"w2": 0.75, "tg_c": -30.5}]}),
            "tg2_c",
            json!({"tg1_c": -33.0, "points": [{"w2": 0.5, "tg_c": -31.1}]}),
        ),
        (
            "primary-drying",
            primary,
            "vial.inner_area_cm2",
            primary_bad,
        ),
        (
            "design-space",
            json!({"base": base(), "shelf_temps_c": [-30.0, -20.0, -10.0], "pressures_mtorr": [60.0, 100.0, 150.0], "max_product_temp_c": -32.0}),
            "max_product_temp_c",
            json!({"base": base(), "shelf_temps_c": [-30.0], "pressures_mtorr": [100.0]}),
        ),
        (
            "suggest-primary-drying",
            json!({"base": base(), "max_product_temp_c": -32.0}),
            "max_product_temp_c",
            json!({"base": base(), "max_product_temp_c": f64::NAN.to_string()}),
        ),
        (
            "cycle-check",
            cycle_check(json!(60.0)),
            "cycle.primary.chamber_pressure_mtorr",
            cycle_check(json!(-5.0)),
        ),
    ]
}

/// A `cycle-check` input for 5 % sucrose with the primary pressure given.
fn cycle_check(pressure: Value) -> Value {
    let mut input = base();
    let obj = input.as_object_mut().unwrap();
    obj.insert("cycle".into(), json!({
        "freezing": {"ramp_c_per_min": 1.0, "hold_temp_c": -45.0, "hold_min": 120.0},
        "primary": {"ramp_c_per_min": 0.5, "shelf_temp_c": -30.0, "chamber_pressure_mtorr": pressure, "hold_min": 6000.0},
        "secondary": {"ramp_c_per_min": 0.1, "shelf_temp_c": 40.0, "pressure_mtorr": 60.0, "hold_min": 360.0},
        "condenser_temp_c": -70.0
    }));
    obj.insert(
        "formulation".into(),
        json!({"max_product_temp_c": -34.0, "limit_kind": "collapse", "tg_prime_c": -32.0}),
    );
    obj.insert(
        "dryer".into(),
        json!({"shelf_area_m2": 1.0, "edge_heat_factor": 1.2}),
    );
    obj.insert("vial_count".into(), json!(500));
    input
}

#[tokio::test]
async fn every_topic_answers_the_same_through_the_api_and_the_command_line() {
    let app = TestApp::sqlite().await;
    for (topic, good, field, bad) in cases() {
        let api = app.post_json(&format!("/api/v1/calc/{topic}"), &good).await;
        assert_eq!(api.status, StatusCode::OK, "{topic}: {}", api.body);
        let (code, out, err) = cli(topic, &good.to_string());
        assert_eq!(code, 0, "{topic}: {err}");
        let from_cli: Value = serde_json::from_str(&out).unwrap();
        assert_eq!(from_cli, api.json(), "{topic}: CLI and API agree");

        let api_bad = app.post_json(&format!("/api/v1/calc/{topic}"), &bad).await;
        assert_eq!(
            api_bad.status,
            StatusCode::UNPROCESSABLE_ENTITY,
            "{topic}: {}",
            api_bad.body
        );
        assert_eq!(api_bad.json()["field"], field, "{topic}: {}", api_bad.body);
        let (code, _, err) = cli(topic, &bad.to_string());
        assert_eq!(code, 2, "{topic}: exit status 2 on bad input");
        assert!(err.contains(field), "{topic}: stderr names {field}: {err}");
    }
    app.cleanup().await;
}

#[tokio::test]
async fn results_carry_published_values() {
    let app = TestApp::sqlite().await;
    // Fox (1956): a 50/50 blend of 373 K and 378 K gives 375.48 K (worked value; the
    // crate polysim-core asserts 375.4 ± 0.2 K).
    let r = app
        .post_json("/api/v1/calc/mixture-tg", &cases()[1].1)
        .await
        .json();
    assert!((r["tg_k"].as_f64().unwrap() - 375.48).abs() < 0.01, "{r}");
    // Murphy & Koop (2005) eq. 7 at −30 °C ≈ 38.0 Pa; IAPWS R14-08(2011) agrees within 0.1 %.
    let p = app
        .post_json(
            "/api/v1/calc/ice-vapor-pressure",
            &json!({"temperature_c": -30.0}),
        )
        .await
        .json();
    assert!(
        (p["pressure_pa"].as_f64().unwrap() - 38.0).abs() < 0.2,
        "{p}"
    );
    // Kv of a typical tubing vial at 100 mTorr lies in the 15–25 W/(m²·K) reported range
    // (literature value, from memory).
    let d = app
        .post_json("/api/v1/calc/primary-drying", &cases()[8].1)
        .await
        .json();
    let kv = d["kv_w_m2k"].as_f64().unwrap();
    assert!((15.0..=25.0).contains(&kv), "Kv {kv}");
    // Mass balance: the fill's ice is 2 mL × 1.0 g/mL × (1 − 0.05) = 1.9 g.
    assert!(
        (d["ice_mass_g"].as_f64().unwrap() - 1.9).abs() < 1e-9,
        "{d}"
    );
    let unknown = app
        .post_json("/api/v1/calc/no-such-topic", &json!({}))
        .await;
    assert_eq!(unknown.status, StatusCode::NOT_FOUND);
    app.cleanup().await;
}

crate::on_both_backends! {
    /// `formulation-estimate` with a `formulation_id` reads the composition from the store.
    async fn the_estimate_of_a_stored_formulation_uses_the_library(app) {
        app.load_demo().await;
        let id = app.store.formulation_id_by_code("LV-006").await.unwrap().unwrap();
        let r = app.post_json("/api/v1/calc/formulation-estimate", &json!({"formulation_id": id})).await;
        assert_eq!(r.status, StatusCode::OK, "{}", r.body);
        let e = r.json();
        // Mannitol crystallizes and is left out; sucrose alone gives its library Tg′.
        assert_eq!(e["excluded_crystallizing"][0]["name"], "Mannitol");
        let sucrose_tg = app.store.get_material(app.material_id("Sucrose").await).await.unwrap()
            .value(glasspoint::domain::PropertyKind::TgPrime).unwrap();
        assert!((e["estimate_tg_prime_c"].as_f64().unwrap() - sucrose_tg).abs() < 1e-9);
        let missing = app.post_json("/api/v1/calc/formulation-estimate", &json!({"formulation_id": 9999})).await;
        assert_eq!(missing.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(missing.json()["field"], "formulation_id");
    }
}
