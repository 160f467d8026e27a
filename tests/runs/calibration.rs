//! Kv from a container's gravimetric tests, adopted into the container by a reviewer who
//! signs with their password.

use axum::http::StatusCode;
use glasspoint::domain::Role;
use glasspoint_science::runs::synthetic::synthesize_gravimetric_test;
use serde_json::Value;

use super::{base, refs, run_fields, run_id, set, Refs};
use crate::audit_trail::all_events;
use crate::helpers::{multipart_body, TestApp, TEST_PASSWORD};
use crate::on_both_backends;

/// Kv coefficients the gravimetric tests are made with: typical tubing-vial magnitudes
/// (from memory), unlike the shipped container's, so that adopting them shows.
const TEST_KV: (f64, f64, f64) = (3.0e-4, 1.5e-3, 1.0);
/// Edge vials' Kv over centre vials' in the made tests (invented).
const EDGE_FACTOR: f64 = 1.3;
const TEST_HOURS: f64 = 6.0;

/// Records a gravimetric test at `pressure_mtorr` of the container: a centre and an edge
/// vial weighed, a probe in each; returns the run's id.
async fn gravimetric_run(app: &TestApp, r: &Refs, pressure_mtorr: f64, seed: u64) -> i64 {
    let b = base(&r.container, TEST_KV);
    let (centre, centre_g) =
        synthesize_gravimetric_test(&b, -20.0, pressure_mtorr, TEST_HOURS, 1.0, 0.0, seed).unwrap();
    let (edge, edge_g) = synthesize_gravimetric_test(
        &b,
        -20.0,
        pressure_mtorr,
        TEST_HOURS,
        EDGE_FACTOR,
        0.0,
        seed,
    )
    .unwrap();
    let mut csv = String::from(
        "Time [h],Shelf inlet [°C],Product C1 centre [°C],Product E1 edge [°C],Capacitance manometer [mTorr]\n",
    );
    for i in 0..centre.time_h.len() {
        csv.push_str(&format!(
            "{:.6},{:.6},{:.6},{:.6},{:.6}\n",
            centre.time_h[i],
            centre.shelf_c[i],
            centre.probes[0].temp_c[i],
            edge.probes[0].temp_c[i],
            pressure_mtorr
        ));
    }
    let weights = format!(
        "centre 15.000000 {:.6}\nedge 15.000000 {:.6}",
        15.0 - centre_g,
        15.0 - edge_g
    );
    let name = format!("Kv test {pressure_mtorr} mTorr");
    let pressure = pressure_mtorr.to_string();
    let end = TEST_HOURS.to_string();
    let mut fields = run_fields(r, &name);
    set(&mut fields, "kind", "gravimetric");
    set(&mut fields, "dryer_id", &r.dryer);
    set(&mut fields, "chamber_pressure_mtorr", &pressure);
    set(&mut fields, "test_start_h", "0");
    set(&mut fields, "test_end_h", &end);
    set(&mut fields, "weights", &weights);
    set(&mut fields, "cake_appearance", "no_cake");
    set(&mut fields, "moisture", "");
    let session = app.admin.clone();
    let body = multipart_body(
        Some(&session.csrf),
        &fields,
        Some(("kv.csv", csv.as_bytes())),
    );
    let reply = app.post_multipart(&session, "/runs", body).await;
    assert_eq!(reply.status, StatusCode::SEE_OTHER, "{}", reply.body);
    run_id(&reply.location.unwrap())
}

fn adopt_fields<'a>(
    version: &'a str,
    reason: &'a str,
    password: &'a str,
) -> Vec<(&'a str, &'a str)> {
    vec![
        ("kind", "kv"),
        ("target_version", version),
        ("reason", reason),
        ("password", password),
    ]
}

on_both_backends! {
    async fn kv_from_three_gravimetric_tests_is_adopted_by_a_reviewer_with_their_password(app) {
        let r = refs(&app).await;
        let mut ids = Vec::new();
        for (i, p) in [60.0, 120.0, 250.0].into_iter().enumerate() {
            ids.push(gravimetric_run(&app, &r, p, i as u64 + 1).await);
        }
        let last = *ids.last().unwrap();
        let page = app.get(&format!("/runs/{last}")).await;
        assert_eq!(page.status, StatusCode::OK, "{}", page.body);
        assert!(page.body.contains("name=\"kind\" value=\"kv\""), "the page offers the Kv fit");
        assert!(page.body.contains("name=\"kind\" value=\"edge_factor\""), "and the edge factor");

        // The report: each test's Kv as the model made it, and the fit back to KC, KP, KD.
        let j = app.get(&format!("/api/v1/runs/{last}")).await.json();
        let fit = &j["kv_fit"];
        let close = |got: &Value, want: f64, what: &str| {
            let got = got.as_f64().unwrap_or_else(|| panic!("{what} missing: {j}"));
            assert!((got - want).abs() <= 0.02 * want.abs(), "{what}: {got}, made with {want}");
        };
        close(&fit["kc_cal_s_cm2_k"], TEST_KV.0, "KC");
        close(&fit["kp_cal_s_cm2_k_torr"], TEST_KV.1, "KP");
        close(&fit["kd_per_torr"], TEST_KV.2, "KD");
        close(&j["edge_heat_factor"], EDGE_FACTOR, "edge factor");

        let container = app.store.get_container(r.container.id).await.unwrap();
        assert!(container.typical_values);
        let version = container.version.to_string();
        let path = format!("/runs/{last}/adopt");
        let reviewer = app.user("kv-reviewer", Role::Reviewer).await;
        let scientist = app.user("kv-scientist", Role::Scientist).await;

        // A scientist may not adopt.
        let refused = app.client(Some(&scientist)).post_form(&path, &adopt_fields(&version, "fit", TEST_PASSWORD)).await;
        assert_eq!(refused.status, StatusCode::FORBIDDEN, "{}", refused.body);
        // A wrong password adopts nothing.
        let events = all_events(&app.store).await.len();
        let wrong = app.client(Some(&reviewer)).post_form(&path, &adopt_fields(&version, "three pressures", "not my password")).await;
        assert_eq!(wrong.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", wrong.body);
        assert!(wrong.body.contains("password") && wrong.body.contains("not your password"), "{}", wrong.body);
        assert!(wrong.body.contains("value=\"three pressures\""), "the reason is kept");
        let unchanged = app.store.get_container(r.container.id).await.unwrap();
        assert_eq!(unchanged.version, container.version);
        assert!(unchanged.typical_values);
        assert_eq!(all_events(&app.store).await.len(), events, "no audit event");

        // The right password adopts the fit.
        let reason = "Gravimetric tests at three pressures replace the typical values";
        let ok = app.client(Some(&reviewer)).post_form(&path, &adopt_fields(&version, reason, TEST_PASSWORD)).await;
        assert_eq!(ok.status, StatusCode::SEE_OTHER, "{}", ok.body);
        let adopted = app.store.get_container(r.container.id).await.unwrap();
        assert!(!adopted.typical_values, "the values are the team's own now");
        assert!(adopted.version > container.version);
        for (got, want, what) in [
            (adopted.kc_cal_s_cm2_k, TEST_KV.0, "KC"),
            (adopted.kp_cal_s_cm2_k_torr, TEST_KV.1, "KP"),
            (adopted.kd_per_torr, TEST_KV.2, "KD"),
        ] {
            assert!((got - want).abs() <= 0.02 * want, "{what} adopted {got}, made with {want}");
        }
        for id in &ids {
            assert!(adopted.kv_source.contains(&id.to_string()), "the source names run {id}: {}", adopted.kv_source);
        }
        let history = app.get(&format!("/records/container/{}/history", r.container.id)).await;
        assert_eq!(history.status, StatusCode::OK, "{}", history.body);
        assert!(history.body.contains(reason), "the container's history gives the reason");
        let events = all_events(&app.store).await;
        let change = events.iter().rev().find(|e| e.entity == "container" && e.entity_id == Some(r.container.id)).expect("an event on the container");
        assert_eq!(change.username, "kv-reviewer");
        assert_eq!(change.reason, reason);

        // A stale version is refused naming it.
        let stale = app.client(Some(&reviewer)).post_form(&path, &adopt_fields(&version, reason, TEST_PASSWORD)).await;
        assert_eq!(stale.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", stale.body);
        assert!(stale.body.contains("target_version"), "{}", stale.body);
    }
}
