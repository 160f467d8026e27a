//! Script, attribute-breaking and SQL payloads typed into every text field come back
//! escaped on every page and chart that shows them, and are stored exactly as typed.

use axum::http::StatusCode;
use serde_json::json;

use crate::form_html::post_form_in;
use crate::helpers::TestApp;
use crate::on_both_backends;

const SCRIPT: &str = "<script>alert(1)</script>";
const ATTR: &str = "\"><img src=x onerror=alert(1)>";
const OR: &str = "' OR 1=1 --";
const DROP: &str = "Robert'); DROP TABLE formulations;--";

/// What must never appear in a response: the payloads' markup unescaped.
const RAW: &[&str] = &["<script>alert", "<img src=x", "onerror=alert(1)>"];
/// The payloads' markup as the page templates escape it (numeric character references).
const SCRIPT_ESCAPED: &str = "&#60;script&#62;alert(1)&#60;/script&#62;";
const IMG_ESCAPED: &str = "&#60;img src=x onerror=alert(1)&#62;";

fn all() -> String {
    format!("{SCRIPT} {ATTR} {OR} {DROP}")
}

fn assert_no_raw_payload(path: &str, body: &str) {
    for raw in RAW {
        assert!(!body.contains(raw), "{path} shows {raw:?} unescaped");
    }
}

async fn page(app: &TestApp, path: &str) -> String {
    let r = app.get(path).await;
    assert_eq!(r.status, StatusCode::OK, "{path}: {}", r.body);
    assert_no_raw_payload(path, &r.body);
    r.body
}

struct Made {
    formulation: i64,
    measurement: i64,
    material: i64,
    container: i64,
    cycle: i64,
    link: i64,
}

async fn records_full_of_payloads(app: &TestApp) -> Made {
    let sucrose = app.material_id("Sucrose").await;
    let container = app.post_json("/api/v1/containers", &json!({
        "name": format!("V {ATTR}"), "kind": "tubing", "nominal_ml": 10.0, "inner_area_cm2": 3.8,
        "outer_area_cm2": 4.5, "kc_cal_s_cm2_k": 2.6e-4, "kp_cal_s_cm2_k_torr": 1.8e-3, "kd_per_torr": 1.5,
        "kv_source": format!("K {SCRIPT}"), "notes": all()
    })).await;
    assert_eq!(container.status, StatusCode::CREATED, "{}", container.body);
    let container = container.json()["id"].as_i64().unwrap();
    let f = app.post_json("/api/v1/formulations", &json!({
        "code": "INJ-1", "name": format!("F {SCRIPT} {ATTR}"), "project": format!("{OR} {DROP}"),
        "notes": all(), "tags": [SCRIPT, ATTR, OR, DROP], "fill_volume_ml": 2.0, "container_id": container,
        "components": [{"material_id": sucrose, "concentration": 50, "unit": "mg/mL"}]
    })).await;
    assert_eq!(f.status, StatusCode::CREATED, "{}", f.body);
    let formulation = f.json()["id"].as_i64().unwrap();
    let m = app.post_json("/api/v1/measurements", &json!({
        "formulation_id": formulation, "kind": "tc_onset", "value_c": -31.0, "method": "fdm",
        "pan": ATTR, "instrument": SCRIPT, "analyst": DROP, "measured_on": "2026-01-05", "replicate": 1,
        "notes": all()
    })).await;
    assert_eq!(m.status, StatusCode::CREATED, "{}", m.body);
    let measurement = m.json()["id"].as_i64().unwrap();
    let mat = app.post_json("/api/v1/materials", &json!({
        "name": format!("M {SCRIPT}"), "role": "other", "freezing_behaviour": "amorphous", "notes": all(),
        "properties": [{"kind": "tg_prime_c", "value": -30.0, "citation": format!("{ATTR} {DROP}")}]
    })).await;
    assert_eq!(mat.status, StatusCode::CREATED, "{}", mat.body);
    let material = mat.json()["id"].as_i64().unwrap();
    let cycle = app.post_json("/api/v1/cycles", &json!({
        "name": format!("C {SCRIPT}"), "notes": all(),
        "program": {
            "freezing": {"ramp_c_per_min": 1.0, "hold_temp_c": -45.0, "hold_min": 120.0},
            "primary": {"ramp_c_per_min": 0.5, "shelf_temp_c": -25.0, "chamber_pressure_mtorr": 100.0, "hold_min": 2700.0},
            "secondary": {"ramp_c_per_min": 0.1, "shelf_temp_c": 40.0, "pressure_mtorr": 100.0, "hold_min": 360.0},
            "condenser_temp_c": -70.0
        }
    })).await;
    assert_eq!(cycle.status, StatusCode::CREATED, "{}", cycle.body);
    let cycle = cycle.json()["cycle"]["id"].as_i64().unwrap();
    let link = app
        .post_json(
            &format!("/api/v1/cycles/{cycle}/links"),
            &json!({"formulation_id": formulation, "container_id": container}),
        )
        .await;
    assert!(link.status.is_success(), "{}", link.body);
    let link = app.store.links_of_cycle(cycle).await.unwrap()[0].id;
    Made {
        formulation,
        measurement,
        material,
        container,
        cycle,
        link,
    }
}

on_both_backends! {
    async fn payloads_in_every_text_field_are_escaped_on_every_page_that_shows_them(app) {
        let m = records_full_of_payloads(&app).await;
        let (f, me, mat, c, cy, l) = (m.formulation, m.measurement, m.material, m.container, m.cycle, m.link);

        // Each page that shows a payload shows it escaped (and no page shows one raw).
        let drop_escaped = "Robert&#39;); DROP TABLE formulations;--";
        let mut missing = Vec::new();
        for (path, escaped) in [
            ("/formulations".to_string(), SCRIPT_ESCAPED),
            (format!("/formulations/{f}"), SCRIPT_ESCAPED),
            (format!("/formulations/{f}"), IMG_ESCAPED),
            (format!("/formulations/compare?id={f}"), SCRIPT_ESCAPED),
            ("/measurements".to_string(), drop_escaped),
            ("/materials".to_string(), SCRIPT_ESCAPED),
            (format!("/materials/{mat}"), SCRIPT_ESCAPED),
            (format!("/materials/{mat}"), IMG_ESCAPED),
            ("/containers".to_string(), IMG_ESCAPED),
            ("/cycles".to_string(), SCRIPT_ESCAPED),
            (format!("/cycles/{cy}"), SCRIPT_ESCAPED),
            (format!("/cycles/{cy}/links/{l}"), SCRIPT_ESCAPED),
            (format!("/records/formulation/{f}/history"), "History of"),
            (format!("/records/formulation/{f}/versions/1"), SCRIPT_ESCAPED),
            (format!("/records/measurement/{me}/versions/1"), IMG_ESCAPED),
            (format!("/records/container/{c}/versions/1"), IMG_ESCAPED),
            (format!("/records/cycle/{cy}/versions/1"), SCRIPT_ESCAPED),
            (format!("/records/material/{mat}/versions/1"), SCRIPT_ESCAPED),
            (format!("/records/formulation/{f}/sign"), SCRIPT_ESCAPED),
            ("/review".to_string(), drop_escaped),
        ] {
            let body = page(&app, &path).await;
            if !body.contains(escaped) {
                missing.push(format!("{path} lacks {escaped}: {}", around(&body, "alert")));
            }
        }
        assert!(missing.is_empty(), "{missing:#?}");
        let detail = page(&app, &format!("/formulations/{f}")).await;
        assert!(detail.contains("&#39; OR 1=1 --"), "the quote is escaped");
        assert!(detail.contains("DROP TABLE formulations;--"));

        // Edit forms carry every value intact inside their attributes and text areas.
        let edit = post_form_in(&page(&app, &format!("/formulations/{f}/edit")).await);
        assert_eq!(edit.get("name"), Some(format!("F {SCRIPT} {ATTR}").as_str()));
        assert_eq!(edit.get("project"), Some(format!("{OR} {DROP}").as_str()));
        assert_eq!(edit.get("notes"), Some(all().as_str()));
        let edit = post_form_in(&page(&app, &format!("/measurements/{me}/edit")).await);
        assert_eq!((edit.get("pan"), edit.get("instrument"), edit.get("analyst")), (Some(ATTR), Some(SCRIPT), Some(DROP)));
        assert_eq!(edit.get("notes"), Some(all().as_str()));
        let edit = post_form_in(&page(&app, &format!("/materials/{mat}/edit")).await);
        assert_eq!(edit.get("name"), Some(format!("M {SCRIPT}").as_str()));
        assert_eq!(edit.get("tg_prime_c_citation"), Some(format!("{ATTR} {DROP}").as_str()));
        let edit = post_form_in(&page(&app, &format!("/containers/{c}/edit")).await);
        assert_eq!(edit.get("name"), Some(format!("V {ATTR}").as_str()));
        assert_eq!(edit.get("kv_source"), Some(format!("K {SCRIPT}").as_str()));
        let edit = post_form_in(&page(&app, &format!("/cycles/{cy}/edit")).await);
        assert_eq!(edit.get("name"), Some(format!("C {SCRIPT}").as_str()));
        assert_eq!(edit.get("notes"), Some(all().as_str()));

        // Charts escape what they draw.
        for chart in ["temperatures.svg", "layer.svg", "rate.svg", "gauges.svg", "design-space.svg"] {
            let path = format!("/cycles/{cy}/links/{l}/{chart}");
            let r = app.get(&path).await;
            assert_eq!(r.status, StatusCode::OK, "{path}: {}", r.body);
            assert!(r.body.starts_with("<svg"), "{path}");
            assert_no_raw_payload(&path, &r.body);
        }
        let temps = app.get(&format!("/cycles/{cy}/links/{l}/temperatures.svg")).await.body;
        assert!(temps.contains("&lt;script&gt;"), "the cycle's name is in the title, escaped: {temps}");
        let design = app.get(&format!("/cycles/{cy}/links/{l}/design-space.svg")).await.body;
        assert!(design.contains("&quot;&gt;&lt;img"), "the container's name is in the title, escaped");
        page(&app, &format!("/cycles/{cy}/links/{l}/design-space")).await;

        // The audit trail page and its filter box.
        let audit = page(&app, &format!("/audit?user={}", urlencode(SCRIPT))).await;
        assert!(audit.contains(SCRIPT_ESCAPED), "the typed filter is shown escaped: {}", around(&audit, "alert"));
        page(&app, "/audit?entity=formulation").await;
    }
}

/// The text around the first `needle`, for failure messages.
fn around(body: &str, needle: &str) -> String {
    match body.find(needle) {
        Some(i) => body
            .chars()
            .skip(body[..i].chars().count().saturating_sub(80))
            .take(200)
            .collect(),
        None => format!("(no {needle:?} at all)"),
    }
}

fn urlencode(s: &str) -> String {
    form_urlencoded::byte_serialize(s.as_bytes()).collect()
}

on_both_backends! {
    async fn sql_metacharacters_are_stored_and_read_back_exactly_as_typed(app) {
        let m = records_full_of_payloads(&app).await;
        let f = app.get(&format!("/api/v1/formulations/{}", m.formulation)).await.json();
        assert_eq!(f["name"], format!("F {SCRIPT} {ATTR}"));
        assert_eq!(f["project"], format!("{OR} {DROP}"));
        assert_eq!(f["notes"], all());
        assert_eq!(f["tags"], json!([SCRIPT, ATTR, OR, DROP]));
        let me = app.get(&format!("/api/v1/measurements/{}", m.measurement)).await.json();
        assert_eq!((me["pan"].as_str(), me["instrument"].as_str(), me["analyst"].as_str()), (Some(ATTR), Some(SCRIPT), Some(DROP)));
        let mat = app.get(&format!("/api/v1/materials/{}", m.material)).await.json();
        assert_eq!(mat["name"], format!("M {SCRIPT}"));
        assert_eq!(mat["notes"], all());
        assert_eq!(mat["properties"][0]["citation"], format!("{ATTR} {DROP}"));
        let c = app.get(&format!("/api/v1/containers/{}", m.container)).await.json();
        assert_eq!((c["name"].as_str(), c["kv_source"].as_str()), (Some(format!("V {ATTR}").as_str()), Some(format!("K {SCRIPT}").as_str())));
        let cy = app.get(&format!("/api/v1/cycles/{}", m.cycle)).await.json();
        assert_eq!(cy["cycle"]["notes"], all());
        // Searching for the payloads finds the record and breaks nothing.
        for q in [OR, DROP, "%", "_", "\\"] {
            let r = app.get(&format!("/api/v1/formulations?q={}", urlencode(q))).await;
            assert_eq!(r.status, StatusCode::OK, "{q}: {}", r.body);
            let r = app.get(&format!("/formulations?q={}", urlencode(q))).await;
            assert_eq!(r.status, StatusCode::OK, "{q}");
        }
        let found = app.get(&format!("/api/v1/formulations?q={}", urlencode(SCRIPT))).await.json();
        assert_eq!(found["total"], 1);
        let all_formulations = app.get("/api/v1/formulations").await.json();
        assert_eq!(all_formulations["total"], 1, "the table is still there, with its one row");
        // A code that may not hold markup is refused, and the form shows it escaped.
        let r = app.post_form("/formulations", &[("code", ATTR), ("name", SCRIPT)]).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_no_raw_payload("the refused form", &r.body);
        assert_eq!(post_form_in(&r.body).get("code"), Some(ATTR));
    }
}
