//! The JSON API, in-process against the real router and database.

use axum::http::StatusCode;
use serde_json::json;

use crate::on_both_backends;

on_both_backends! {
    async fn a_formulation_round_trips_through_the_api(app) {
        let sucrose = app.material_id("Sucrose").await;
        let created = app.post_json("/api/v1/formulations", &json!({
            "code": "API-1", "name": "API sucrose", "project": "Platform",
            "components": [{"material_id": sucrose, "concentration": 5, "unit": "% w/v"}],
            "fill_volume_ml": 2.0, "tags": ["api", "test"]
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let f = created.json();
        assert_eq!(f["code"], "API-1");
        assert_eq!(f["components"][0]["concentration_mg_ml"], 50.0);
        assert_eq!(f["solids_mg_ml"], 50.0);
        let id = f["id"].as_i64().unwrap();

        let got = app.get(&format!("/api/v1/formulations/{id}")).await.json();
        assert_eq!(got["name"], "API sucrose");
        assert_eq!(got["tags"], json!(["api", "test"]));

        let list = app.get("/api/v1/formulations?q=api").await.json();
        assert_eq!(list["total"], 1);
        assert_eq!(list["items"][0]["code"], "API-1");

        let updated = app.put_json(&format!("/api/v1/formulations/{id}"), &json!({
            "code": "API-1", "name": "renamed", "version": got["version"],
            "components": [{"material_id": sucrose, "concentration": 40, "unit": "mg/mL"}]
        })).await;
        assert_eq!(updated.status, StatusCode::OK, "{}", updated.body);
        assert_eq!(updated.json()["name"], "renamed");

        let stale = app.put_json(&format!("/api/v1/formulations/{id}"), &json!({
            "code": "API-1", "name": "late", "version": got["version"], "components": []
        })).await;
        assert_eq!(stale.status, StatusCode::CONFLICT);
        assert_eq!(stale.json()["field"], "version");
    }
}

on_both_backends! {
    async fn bad_formulation_input_answers_422_naming_the_field(app) {
        let sucrose = app.material_id("Sucrose").await;
        let cases = [
            (json!({"code": "X-1", "name": "x", "components": [{"material_id": sucrose, "concentration": -1, "unit": "mg/mL"}]}), "components[0].concentration"),
            (json!({"code": "X-1", "name": "x", "components": [{"material_id": 424242, "concentration": 1, "unit": "mg/mL"}]}), "components[0].material_id"),
            (json!({"code": "X-1", "name": "x", "components": [{"material_id": sucrose, "concentration": 1, "unit": "g/L"}]}), "components[0].unit"),
            (json!({"name": "x", "components": []}), "code"),
            (json!({"code": "X-1", "name": "x", "ph": 15}), "ph"),
            (json!({"code": "X-1", "name": "x", "components": [{"material_id": sucrose, "concentration": "lots", "unit": "mg/mL"}]}), "components[0].concentration"),
        ];
        for (body, field) in cases {
            let r = app.post_json("/api/v1/formulations", &body).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{body}");
            let e = r.json();
            assert_eq!(e["field"], field, "{body} → {e}");
            assert!(e["error"].as_str().is_some_and(|s| !s.is_empty()));
        }
        let ok = app.post_json("/api/v1/formulations", &json!({"code": "X-1", "name": "x"})).await;
        assert_eq!(ok.status, StatusCode::CREATED);
        let dup = app.post_json("/api/v1/formulations", &json!({"code": "x-1", "name": "y"})).await;
        assert_eq!(dup.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(dup.json()["field"], "code");
        let not_json = app.request(
            axum::http::Request::post("/api/v1/formulations")
                .header("content-type", "application/json")
                .body(axum::body::Body::from("{not json"))
                .unwrap(),
        ).await;
        assert_eq!(not_json.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(not_json.json()["field"], "body");
    }
}

on_both_backends! {
    async fn measurements_materials_and_containers_through_the_api(app) {
        let f = app.post_json("/api/v1/formulations", &json!({"code": "MEAS-1", "name": "x"})).await.json();
        let fid = f["id"].as_i64().unwrap();
        let m = app.post_json("/api/v1/measurements", &json!({
            "formulation_id": fid, "kind": "tc_onset", "value_c": -30.5, "method": "fdm",
            "heating_rate_c_min": 1.0, "analyst": "T. Ferro", "measured_on": "2026-10-02", "replicate": 1
        })).await;
        assert_eq!(m.status, StatusCode::CREATED, "{}", m.body);
        let m = m.json();
        assert_eq!(m["measured_on"], "2026-10-02");
        assert_eq!(m["kind"], "tc_onset");
        let list = app.get(&format!("/api/v1/measurements?formulation_id={fid}")).await.json();
        assert_eq!(list["total"], 1);
        let bad = app.post_json("/api/v1/measurements", &json!({
            "formulation_id": fid, "kind": "cake_tg", "value_c": 60, "method": "dsc", "analyst": "T. Ferro", "measured_on": "2026-10-02"
        })).await;
        assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(bad.json()["field"], "residual_moisture_pct");
        let updated = app.put_json(&format!("/api/v1/measurements/{}", m["id"]), &json!({
            "kind": "tc_onset", "value_c": -30.1, "method": "fdm", "analyst": "T. Ferro",
            "measured_on": "2026-10-02", "version": m["version"], "review_state": "reviewed"
        })).await;
        assert_eq!(updated.status, StatusCode::OK, "{}", updated.body);
        assert_eq!(updated.json()["review_state"], "recorded", "only a reviewer's signature marks a result reviewed");

        let mat = app.post_json("/api/v1/materials", &json!({
            "name": "Test polyol", "role": "bulking_agent", "freezing_behaviour": "crystallizes",
            "properties": [{"kind": "te_c", "value": -2.0, "citation": "in-house DSC"}, {"kind": "tg_prime_c", "value": -40, "citation": ""}]
        })).await;
        assert_eq!(mat.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(mat.json()["field"], "properties[1].citation");
        let materials = app.get("/api/v1/materials").await.json();
        assert!(materials["items"].as_array().unwrap().len() >= 15);

        let vial = app.post_json("/api/v1/containers", &json!({
            "name": "20R tubing", "kind": "tubing", "nominal_ml": 26, "inner_area_cm2": 5.7, "outer_area_cm2": 6.6,
            "kc_cal_s_cm2_k": 2.6e-4, "kp_cal_s_cm2_k_torr": 1.8e-3, "kd_per_torr": 1.5, "kv_source": "own gravimetric run"
        })).await;
        assert_eq!(vial.status, StatusCode::CREATED, "{}", vial.body);
        let cid = vial.json()["id"].as_i64().unwrap();
        assert_eq!(app.get(&format!("/api/v1/containers/{cid}")).await.json()["name"], "20R tubing");
    }
}

#[tokio::test]
async fn unknown_ids_answer_404_json_and_the_openapi_document_lists_the_routes() {
    let app = crate::helpers::TestApp::sqlite().await;
    let r = app.get("/api/v1/formulations/9999").await;
    assert_eq!(r.status, StatusCode::NOT_FOUND);
    assert!(r.json()["error"].as_str().unwrap().contains("not found"));
    let doc = app.get("/api/v1/openapi.json").await.json();
    for path in [
        "/api/v1/formulations",
        "/api/v1/formulations/{id}",
        "/api/v1/materials",
        "/api/v1/measurements",
        "/api/v1/containers",
        "/api/v1/calc/{topic}",
    ] {
        assert!(doc["paths"].get(path).is_some(), "{path} is documented");
    }
    app.cleanup().await;
}

on_both_backends! {
    async fn cycles_are_created_linked_and_judged_through_the_api(app) {
        app.load_demo().await;
        let program = json!({
            "freezing": {"ramp_c_per_min": 1.0, "hold_temp_c": -45.0, "hold_min": 120.0},
            "primary": {"ramp_c_per_min": 0.5, "shelf_temp_c": -28.0, "chamber_pressure_mtorr": 80.0, "hold_min": 3000.0},
            "secondary": {"ramp_c_per_min": 0.1, "shelf_temp_c": 40.0, "pressure_mtorr": 80.0, "hold_min": 360.0},
            "condenser_temp_c": -70.0
        });
        let created = app.post_json("/api/v1/cycles", &json!({"name": "API cycle", "program": program})).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["cycle"]["id"].as_i64().unwrap();

        let mut bad = program.clone();
        bad["primary"]["ramp_c_per_min"] = json!(0.0);
        let r = app.post_json("/api/v1/cycles", &json!({"name": "Bad", "program": bad})).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(r.json()["field"], "program.primary.ramp_c_per_min");
        let r = app.post_json("/api/v1/cycles", &json!({"name": "Bad", "program": {"freezing": {}}})).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(r.json()["field"].as_str().unwrap().starts_with("program.freezing"), "{}", r.body);

        let fid = app.store.formulation_id_by_code("LV-002").await.unwrap().unwrap();
        let vial = app.store.list_containers().await.unwrap()[0].id;
        let linked = app.post_json(&format!("/api/v1/cycles/{id}/links"), &json!({"formulation_id": fid, "container_id": vial})).await;
        assert_eq!(linked.status, StatusCode::CREATED, "{}", linked.body);
        let detail = linked.json();
        let link = &detail["links"][0];
        assert!(link["verdict"]["overall"].is_string(), "{detail}");
        assert!(link["verdict"]["caution"].as_str().unwrap().contains("experimental confirmation"));
        assert!(link["predicted_drying_time_h"].as_f64().unwrap() > 0.0);
        let unknown = app.post_json(&format!("/api/v1/cycles/{id}/links"), &json!({"formulation_id": 99999, "container_id": vial})).await;
        assert_eq!(unknown.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(unknown.json()["field"], "formulation_id");

        let version = detail["cycle"]["version"].clone();
        let renamed = app.put_json(&format!("/api/v1/cycles/{id}"), &json!({"name": "API cycle 2", "program": program, "version": version})).await;
        assert_eq!(renamed.status, StatusCode::OK, "{}", renamed.body);
        let stale = app.put_json(&format!("/api/v1/cycles/{id}"), &json!({"name": "late", "program": program, "version": version})).await;
        assert_eq!(stale.status, StatusCode::CONFLICT);
        let list = app.get("/api/v1/cycles").await.json();
        assert!(list["items"].as_array().unwrap().iter().any(|c| c["name"] == "API cycle 2"));
    }
}
