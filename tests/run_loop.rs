//! The loop closed on the demo's runs: a process engineer reads the development run
//! against the prediction, adopts the Kv of the gravimetric series and the Rp of the run,
//! and the next prediction for that formulation and vial comes closer to what the dryer
//! recorded.

use glasspoint::domain::Role;
use serde_json::Value;

use crate::helpers::{TestApp, TEST_PASSWORD};
use crate::on_both_backends;

async fn runs_of_kind(app: &TestApp, kind: &str) -> Vec<Value> {
    let r = app.get(&format!("/api/v1/runs?kind={kind}")).await;
    assert_eq!(r.status, 200, "{}", r.body);
    r.json().as_array().cloned().unwrap_or_default()
}

fn last_check(report: &Value) -> (f64, f64) {
    let checks = report["model_checks"].as_array().expect("model checks");
    let last = checks.last().expect("a model check");
    (
        last["end_error_h"].as_f64().expect("end error").abs(),
        last["probe_rmse_c"].as_f64().expect("probe rms"),
    )
}

on_both_backends! {
    async fn adopting_the_runs_calibrations_brings_the_prediction_closer(app) {
        app.load_demo().await;
        assert_eq!(glasspoint::runs::demo::seed_runs(&app.store).await.unwrap(), 4);
        // Seeding again adds nothing.
        assert_eq!(glasspoint::runs::demo::seed_runs(&app.store).await.unwrap(), 0);
        let gravimetric = runs_of_kind(&app, "gravimetric").await;
        assert_eq!(gravimetric.len(), 3);
        let development = runs_of_kind(&app, "development").await;
        let dev_id = development[0]["id"].as_i64().unwrap();
        let grav_id = gravimetric[0]["id"].as_i64().unwrap();

        let before = app.get(&format!("/api/v1/runs/{dev_id}")).await.json();
        assert_eq!(before["measured_end_basis"], "Pirani meets the manometer");
        let kinds: Vec<&str> = before["phases"].as_array().unwrap().iter().filter_map(|p| p["kind"].as_str()).collect();
        assert_eq!(kinds, ["freezing", "primary", "secondary"]);
        // The end read from the gauges falls inside primary drying, after the pump-down.
        let end = before["end_point"]["end_h"].as_f64().unwrap();
        let onset = before["end_point"]["onset_h"].as_f64().unwrap();
        assert!(onset < end && end > 10.0, "{}", before["end_point"]);
        // Edge vials finish first (the edge effect).
        let arrivals = before["probe_arrivals"].as_array().unwrap();
        let at = |pos: &str| arrivals.iter().filter(|a| a["position"] == pos).filter_map(|a| a["time_h"].as_f64()).fold(f64::NAN, f64::max);
        assert!(at("edge") < at("centre"), "{arrivals:?}");
        let (error_before, rms_before) = last_check(&before);
        assert!(error_before > 5.0, "typical values should miss by hours: {error_before}");

        // A reviewer adopts the Kv fit of the gravimetric series into the 6R vial…
        let reviewer = app.user("rev", Role::Reviewer).await;
        let client = app.client(Some(&reviewer));
        let at_100 = gravimetric.iter().find(|r| r["name"] == "Kv test at 100 mTorr").expect("the 100 mTorr test");
        let grav = app.get(&format!("/api/v1/runs/{}", at_100["id"])).await.json();
        assert_eq!(grav["gravimetric"][0]["location"], "centre");
        let kv = grav["gravimetric"][0]["kv_w_m2k"].as_f64().unwrap();
        // Tubing vials at about 100 mTorr: 15–25 W/(m²·K) (reported range, from memory).
        assert!((15.0..=25.0).contains(&kv), "{kv}");
        // Edge vials take more heat than centre vials (the edge effect).
        assert!(grav["gravimetric"][1]["kv_w_m2k"].as_f64().unwrap() > kv);
        assert!(grav["kv_fit"]["residuals_w_m2k"].as_array().unwrap().len() == 3);
        let container_id = grav["run"]["container_id"].as_i64().unwrap();
        let container = app.get(&format!("/api/v1/containers/{container_id}")).await.json();
        assert_eq!(container["typical_values"], true);
        let wrong = client
            .post_form(&format!("/runs/{grav_id}/adopt"), &[
                ("kind", "kv"),
                ("target_version", &container["version"].to_string()),
                ("reason", "Gravimetric series"),
                ("password", "not it"),
            ])
            .await;
        assert_eq!(wrong.status, 422);
        assert!(wrong.body.contains("password"), "{}", wrong.body);
        let adopted = client
            .post_form(&format!("/runs/{grav_id}/adopt"), &[
                ("kind", "kv"),
                ("target_version", &container["version"].to_string()),
                ("reason", "Gravimetric series of October"),
                ("password", TEST_PASSWORD),
            ])
            .await;
        assert_eq!(adopted.status, 303, "{}", adopted.body);
        let container = app.get(&format!("/api/v1/containers/{container_id}")).await.json();
        assert_eq!(container["typical_values"], false);
        assert!(container["kv_source"].as_str().unwrap().starts_with("In-house"));
        let history = app.get(&format!("/records/container/{container_id}/history")).await;
        assert!(history.body.contains("Gravimetric series of October"));

        // …and the Rp the development run yields into the trehalose reference.
        let formulation_id = before["run"]["probed_formulation_id"].as_i64().unwrap();
        let f = app.get(&format!("/api/v1/formulations/{formulation_id}")).await.json();
        let adopted = client
            .post_form(&format!("/runs/{dev_id}/adopt"), &[
                ("kind", "resistance"),
                ("target_version", &f["version"].to_string()),
                ("reason", "Rp from the platform run"),
                ("password", TEST_PASSWORD),
            ])
            .await;
        assert_eq!(adopted.status, 303, "{}", adopted.body);

        let after = app.get(&format!("/api/v1/runs/{dev_id}")).await.json();
        assert_eq!(after["resistance_runs"], serde_json::json!([dev_id]), "the fit names its runs");
        let history = app.get(&format!("/records/formulation/{formulation_id}/history")).await;
        assert!(history.body.contains("Rp from the platform run"));
        let (error_after, rms_after) = last_check(&after);
        assert!(error_after < error_before / 3.0, "{error_before} h → {error_after} h");
        assert!(rms_after < rms_before, "{rms_before} °C → {rms_after} °C");
        assert!(after["model_checks"].as_array().unwrap().len() >= 2);
        // The page shows the model's error basis by basis.
        let page = app.get(&format!("/runs/{dev_id}")).await;
        assert!(page.body.contains("basis by basis"));
        assert!(page.body.contains("typical values, version 1"));
        assert!(page.body.contains("Rp of LV-002 (measured)"));
    }
}
