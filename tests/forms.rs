//! Saving an edit form unchanged never alters the record: every edit form shows exactly
//! what is stored and posts it back exactly, however awkward the values.

use axum::http::StatusCode;
use serde_json::{json, Value};

use crate::form_html::post_form_in;
use crate::helpers::TestApp;
use crate::on_both_backends;

/// Long notes with line breaks, markup-like text and characters from several scripts.
fn awkward_notes() -> String {
    let mut notes = String::from(
        "First line — ü, ß, 日本語, ☃, <b>not bold</b> & \"quoted\" 'single'\n\tindented line\n\n",
    );
    while notes.chars().count() < 7000 {
        notes.push_str("Lorem ipsum 0.0125 °C/min, 66.6667 mTorr; ");
    }
    notes.trim().to_string()
}

/// The record without what a save is expected to change.
fn without_bookkeeping(mut v: Value) -> Value {
    if let Some(o) = v.as_object_mut() {
        o.remove("version");
        o.remove("updated_at");
    }
    v
}

/// Opens `edit`, posts its form back exactly as a browser would, and expects a redirect.
async fn save_unchanged(app: &TestApp, edit: &str) {
    let page = app.get(edit).await;
    assert_eq!(page.status, StatusCode::OK, "{edit}: {}", page.body);
    let form = post_form_in(&page.body);
    let saved = app.post_form(&form.action, &form.pairs()).await;
    assert_eq!(
        saved.status,
        StatusCode::SEE_OTHER,
        "saving {edit} unchanged is accepted: {}",
        saved.body
    );
}

async fn api_get(app: &TestApp, path: &str) -> Value {
    let r = app.get(path).await;
    assert_eq!(r.status, StatusCode::OK, "{path}: {}", r.body);
    r.json()
}

async fn assert_unchanged_by_its_form(app: &TestApp, api: &str, edit: &str) {
    let before = api_get(app, api).await;
    save_unchanged(app, edit).await;
    let after = api_get(app, api).await;
    assert_eq!(
        without_bookkeeping(after),
        without_bookkeeping(before),
        "{edit}"
    );
}

on_both_backends! {
    async fn a_formulation_with_thirty_components_survives_its_edit_form_unchanged(app) {
        let mut components = Vec::new();
        let concentrations = [0.0125, 66.6667, 1.0, 0.1 + 0.2, 1e-7, 2.5];
        for i in 0..30 {
            let m = app.post_json("/api/v1/materials", &json!({
                "name": format!("Excipient {i} — é ☃"), "role": "other", "freezing_behaviour": "amorphous"
            })).await;
            assert_eq!(m.status, StatusCode::CREATED, "{}", m.body);
            let concentration = concentrations[i % concentrations.len()];
            components.push(json!({
                "material_id": m.json()["id"],
                "concentration": concentration,
                "unit": if i % 2 == 1 && concentration < 5.0 { "% w/v" } else { "mg/mL" },
            }));
        }
        let container = app.store.list_containers().await.unwrap().remove(0).id;
        let created = app.post_json("/api/v1/formulations", &json!({
            "code": "RT-30", "name": "Thirty components “quoted” <b>", "project": "Round trip ü",
            "status": "characterized", "ph": 6.0125, "fill_volume_ml": 0.1 + 0.2,
            "container_id": container, "notes": awkward_notes(),
            "tags": ["a&b", "ünï", "x<y"], "components": components,
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["id"].as_i64().unwrap();
        assert_eq!(created.json()["components"].as_array().unwrap().len(), 30);

        let page = app.get(&format!("/formulations/{id}/edit")).await;
        let form = post_form_in(&page.body);
        assert_eq!(form.get("c29_concentration"), Some("2.5"), "row 30 is shown");
        assert_eq!(form.get("c0_concentration"), Some("0.0125"));
        assert_eq!(form.get("c1_concentration"), Some("66.6667"));
        assert_eq!(form.get("c3_concentration"), Some("0.30000000000000004"));
        assert!(form.get("c30_material").is_some(), "blank rows follow to add more");

        assert_unchanged_by_its_form(&app, &format!("/api/v1/formulations/{id}"), &format!("/formulations/{id}/edit")).await;
        let after = api_get(&app, &format!("/api/v1/formulations/{id}")).await;
        assert_eq!(after["components"].as_array().unwrap().len(), 30);
        assert_eq!(after["notes"], awkward_notes());
    }
}

on_both_backends! {
    async fn more_components_than_the_limit_are_refused_by_form_and_api_alike(app) {
        let limit = glasspoint::domain::limits::MAX_COMPONENTS;
        let mut fields: Vec<(String, String)> = vec![("code".into(), "RT-MAX".into()), ("name".into(), "too many".into())];
        let mut components = Vec::new();
        for i in 0..=limit {
            let m = app.post_json("/api/v1/materials", &json!({
                "name": format!("M{i}"), "role": "other", "freezing_behaviour": "amorphous"
            })).await.json();
            fields.push((format!("c{i}_material"), m["id"].to_string()));
            fields.push((format!("c{i}_concentration"), "1".into()));
            components.push(json!({"material_id": m["id"], "concentration": 1, "unit": "mg/mL"}));
        }
        let api = app.post_json("/api/v1/formulations", &json!({"code": "RT-MAX", "name": "too many", "components": components})).await;
        assert_eq!(api.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", api.body);
        assert_eq!(api.json()["field"], "components");
        let pairs: Vec<(&str, &str)> = fields.iter().map(|(k, v)| (k.as_str(), v.as_str())).collect();
        let page = app.post_form("/formulations", &pairs).await;
        assert_eq!(page.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(page.body.contains(&format!("at most {limit} components")), "the message is shown");
        let form = post_form_in(&page.body);
        assert_eq!(form.get(&format!("c{limit}_concentration")), Some("1"), "no typed row is dropped");
    }
}

on_both_backends! {
    async fn a_measurement_survives_its_edit_form_unchanged(app) {
        let f = app.post_json("/api/v1/formulations", &json!({"code": "RT-M", "name": "m"})).await.json();
        let created = app.post_json("/api/v1/measurements", &json!({
            "formulation_id": f["id"], "kind": "cake_tg", "value_c": 66.6667,
            "residual_moisture_pct": 1.0125, "method": "mdsc", "heating_rate_c_min": 0.0125,
            "sample_mass_mg": 0.1 + 0.2, "pan": "Tzero hermetic ⌀5", "instrument": "DSC “2”",
            "analyst": "Zoë O'Brien", "measured_on": "2024-02-29", "replicate": 7,
            "notes": awkward_notes(), "review_state": "reviewed"
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["id"].as_i64().unwrap();
        assert_unchanged_by_its_form(&app, &format!("/api/v1/measurements/{id}"), &format!("/measurements/{id}/edit")).await;
    }
}

on_both_backends! {
    async fn a_material_with_in_house_properties_survives_its_edit_form_unchanged(app) {
        let created = app.post_json("/api/v1/materials", &json!({
            "name": "Trehalose “lot 7” ☃", "role": "lyoprotectant", "freezing_behaviour": "may_crystallize",
            "notes": awkward_notes(),
            "properties": [
                {"kind": "tg_prime_c", "value": -29.0125, "convention": "midpoint", "source_kind": "in_house",
                 "citation": "Our DSC runs <3 & 4>", "measurement_ids": [3, 5]},
                {"kind": "gt_k_water", "value": 0.1 + 0.2, "citation": "A paper, 2001, p. 66.6667"},
                {"kind": "molar_mass_g_mol", "value": 342.2965, "citation": "Tables"}
            ]
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["id"].as_i64().unwrap();
        assert_eq!(created.json()["properties"][0]["measurement_ids"], json!([3, 5]));
        assert_unchanged_by_its_form(&app, &format!("/api/v1/materials/{id}"), &format!("/materials/{id}/edit")).await;
    }
}

on_both_backends! {
    async fn a_container_survives_its_edit_form_unchanged(app) {
        let created = app.post_json("/api/v1/containers", &json!({
            "name": "10R tubing “odd” ⌀24", "kind": "tubing", "nominal_ml": 0.1 + 0.2,
            "inner_area_cm2": std::f64::consts::PI * 1.1 * 1.1, "outer_area_cm2": 4.0125,
            "kc_cal_s_cm2_k": 0.000123456789, "kp_cal_s_cm2_k_torr": 0.0125, "kd_per_torr": 66.6667,
            "kv_source": "Gravimetric test <run 3> & fit", "typical_values": false,
            "notes": awkward_notes()
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["id"].as_i64().unwrap();
        assert_unchanged_by_its_form(&app, &format!("/api/v1/containers/{id}"), &format!("/containers/{id}/edit")).await;
    }
}

on_both_backends! {
    async fn a_dryer_with_awkward_values_survives_its_edit_form_unchanged(app) {
        let created = app.post_json("/api/v1/dryers", &json!({
            "name": "Pilot “B” ⌀ <duct>", "shelf_area_m2": 0.1 + 0.2,
            "shelf_area_source": "Drawing <rev 3> & tape", "min_pressure_mtorr": 66.6667,
            "min_pressure_source": "control test", "condenser_capacity_kg": std::f64::consts::PI,
            "condenser_source": "rated",
            "capability": [{"pressure_mtorr": 33.3333, "max_sublimation_kg_h": 0.1 + 0.2},
                           {"pressure_mtorr": 100.0, "max_sublimation_kg_h": 1.0 / 3.0},
                           {"pressure_mtorr": 250.5, "max_sublimation_kg_h": 2.0125}],
            "capability_source": "ice-slab test, 2 runs", "edge_heat_factor": 1.234567891,
            "edge_heat_source": "gravimetric Kv", "typical_values": true, "notes": awkward_notes()
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["id"].as_i64().unwrap();
        assert_unchanged_by_its_form(&app, &format!("/api/v1/dryers/{id}"), &format!("/dryers/{id}/edit")).await;
        // …and so does one without the optional values.
        let bare = app.post_json("/api/v1/dryers", &json!({
            "name": "Bare", "shelf_area_m2": 1.0, "shelf_area_source": "measured"
        })).await;
        assert_eq!(bare.status, StatusCode::CREATED, "{}", bare.body);
        let id = bare.json()["id"].as_i64().unwrap();
        assert_unchanged_by_its_form(&app, &format!("/api/v1/dryers/{id}"), &format!("/dryers/{id}/edit")).await;
        let history = app.store.history(glasspoint::domain::Entity::Dryer, id).await.unwrap();
        assert_eq!(history.len(), 1, "saving unchanged writes no event");
    }
}

fn awkward_program(hold_min: f64) -> Value {
    json!({
        "freezing": {"ramp_c_per_min": 0.0125, "hold_temp_c": -45.5, "hold_min": hold_min},
        "annealing": {"temp_c": -20.0125, "hold_min": 121.0, "return_ramp_c_per_min": 0.3},
        "primary": {"ramp_c_per_min": 0.1 + 0.2, "shelf_temp_c": -25.0, "chamber_pressure_mtorr": 66.6667, "hold_min": 2400.0},
        "secondary": {"ramp_c_per_min": 0.0125, "shelf_temp_c": 40.0, "pressure_mtorr": 100.0, "hold_min": 361.0},
        "condenser_temp_c": -70.0125
    })
}

on_both_backends! {
    async fn a_cycle_with_minute_holds_and_odd_pressures_survives_its_edit_form_unchanged(app) {
        let created = app.post_json("/api/v1/cycles", &json!({
            "name": "Odd cycle ☃ <1>", "notes": awkward_notes(),
            "program": awkward_program(1.0), "sublimation_ceiling_kg_h_m2": 0.0125
        })).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["cycle"]["id"].as_i64().unwrap();
        let api = format!("/api/v1/cycles/{id}");
        let before = api_get(&app, &api).await["cycle"].clone();
        let page = app.get(&format!("/cycles/{id}/edit")).await;
        let form = post_form_in(&page.body);
        assert_eq!(form.get("primary_chamber_pressure"), Some("66.6667"));
        assert_eq!(form.get("freezing_ramp_c_per_min"), Some("0.0125"));
        save_unchanged(&app, &format!("/cycles/{id}/edit")).await;
        let after = api_get(&app, &api).await["cycle"].clone();
        assert_eq!(without_bookkeeping(after), without_bookkeeping(before));
    }
}

on_both_backends! {
    async fn a_cycle_whose_holds_are_whole_hours_is_shown_in_hours_and_survives_unchanged(app) {
        let mut program = awkward_program(120.0);
        program["annealing"]["hold_min"] = json!(90.0);
        program["secondary"]["hold_min"] = json!(360.0);
        let created = app.post_json("/api/v1/cycles", &json!({"name": "Hours", "program": program})).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let id = created.json()["cycle"]["id"].as_i64().unwrap();
        let page = app.get(&format!("/cycles/{id}/edit")).await;
        let form = post_form_in(&page.body);
        assert_eq!(form.get("hold_unit"), Some("h"));
        assert_eq!(form.get("annealing_hold_h"), Some("1.5"));
        let api = format!("/api/v1/cycles/{id}");
        let before = api_get(&app, &api).await["cycle"].clone();
        save_unchanged(&app, &format!("/cycles/{id}/edit")).await;
        let after = api_get(&app, &api).await["cycle"].clone();
        assert_eq!(without_bookkeeping(after), without_bookkeeping(before));
    }
}

on_both_backends! {
    async fn a_measured_dry_layer_resistance_survives_its_form_unchanged(app) {
        let f = app.post_json("/api/v1/formulations", &json!({"code": "RT-R", "name": "r"})).await.json();
        let id = f["id"].as_i64().unwrap();
        let r = glasspoint_science::drying::Resistance {
            r0_cm2_torr_h_g: 0.0125,
            a1_cm_torr_h_g: 66.6667,
            a2_per_cm: 0.1 + 0.2,
        };
        app.store.set_resistance(&glasspoint::auth::Actor::system(), id, &r, "Run 12 “fast” <manometric> ü", None).await.unwrap();
        let read = |app: &TestApp| {
            let store = app.store.clone();
            async move {
                let f = store.get_formulation(id).await.unwrap();
                let r = glasspoint::derive::resistance_of(&store, &f).await.unwrap();
                without_bookkeeping(serde_json::to_value(r).unwrap())
            }
        };
        let before = read(&app).await;
        save_unchanged(&app, &format!("/formulations/{id}/resistance")).await;
        assert_eq!(read(&app).await, before);
    }
}

on_both_backends! {
    async fn notes_typed_with_browser_line_breaks_are_stored_with_plain_ones(app) {
        let r = app.post_form("/formulations", &[("code", "RT-NL"), ("name", "n"), ("notes", "one\r\ntwo\r\n")]).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        let id = app.store.formulation_id_by_code("RT-NL").await.unwrap().unwrap();
        assert_eq!(app.store.get_formulation(id).await.unwrap().notes, "one\ntwo");
    }
}

on_both_backends! {
    async fn a_line_break_in_a_one_line_field_is_refused_naming_the_field(app) {
        let r = app.post_json("/api/v1/containers", &json!({
            "name": "two\nlines", "kind": "tubing", "nominal_ml": 6, "inner_area_cm2": 3.8, "outer_area_cm2": 4.1,
            "kc_cal_s_cm2_k": 0.0003, "kp_cal_s_cm2_k_torr": 0.02, "kd_per_torr": 0.5, "kv_source": "x"
        })).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(r.json()["field"], "name");
    }
}

/// (API path, JSON body, form path, other form fields, one typed value the page keeps)
type NotesCase<'a> = (&'a str, Value, String, Vec<(&'a str, &'a str)>, &'a str);

/// The field error printed right after the `notes` text area, if any.
fn error_after_notes(html: &str) -> Option<String> {
    let at = html.find("name=\"notes\"")?;
    let close = html[at..].find("</textarea>")? + at;
    let rest = &html[close..];
    let label_end = rest.find("</label>")?;
    let after = rest[label_end..]
        .trim_start_matches("</label>")
        .trim_start();
    let p = after.strip_prefix("<p class=\"field-error\">")?;
    Some(p[..p.find("</p>")?].to_string())
}

on_both_backends! {
    async fn over_long_notes_are_refused_alike_by_the_api_and_every_form(app) {
        let limit = glasspoint::domain::limits::NOTES_CHARS;
        let long = "é".repeat(limit + 1);
        let f = app.post_json("/api/v1/formulations", &json!({"code": "NOTES-1", "name": "n"})).await.json();
        let fid = f["id"].to_string();
        let sucrose = app.material_id("Sucrose").await.to_string();
        let program = awkward_program(60.0);
        let cases: Vec<NotesCase> = vec![
            ("/api/v1/formulations", json!({"code": "NOTES-2", "name": "typed name", "notes": long}),
             "/formulations".into(), vec![("code", "NOTES-2"), ("name", "typed name"), ("c0_material", &sucrose), ("c0_concentration", "50")], "typed name"),
            ("/api/v1/measurements", json!({"formulation_id": f["id"], "kind": "tg_prime", "value_c": -32, "method": "dsc", "analyst": "typed analyst", "measured_on": "2024-01-02", "notes": long}),
             format!("/formulations/{fid}/measurements"), vec![("kind", "tg_prime"), ("value_c", "-32"), ("method", "dsc"), ("analyst", "typed analyst"), ("measured_on", "2024-01-02")], "typed analyst"),
            ("/api/v1/materials", json!({"name": "typed material", "role": "other", "freezing_behaviour": "amorphous", "notes": long}),
             "/materials".into(), vec![("name", "typed material"), ("role", "other"), ("freezing_behaviour", "amorphous")], "typed material"),
            ("/api/v1/containers", json!({"name": "typed vial", "kind": "tubing", "nominal_ml": 6, "inner_area_cm2": 3.8, "outer_area_cm2": 4.1, "kc_cal_s_cm2_k": 0.0003, "kp_cal_s_cm2_k_torr": 0.02, "kd_per_torr": 0.5, "kv_source": "x", "notes": long}),
             "/containers".into(), vec![("name", "typed vial"), ("kind", "tubing"), ("nominal_ml", "6"), ("inner_area_cm2", "3.8"), ("outer_area_cm2", "4.1"), ("kc_cal_s_cm2_k", "0.0003"), ("kp_cal_s_cm2_k_torr", "0.02"), ("kd_per_torr", "0.5"), ("kv_source", "x")], "typed vial"),
            ("/api/v1/dryers", json!({"name": "typed dryer", "shelf_area_m2": 0.5, "shelf_area_source": "x", "notes": long}),
             "/dryers".into(), vec![("name", "typed dryer"), ("shelf_area_m2", "0.5"), ("shelf_area_source", "x")], "typed dryer"),
            ("/api/v1/cycles", json!({"name": "typed cycle", "program": program, "notes": long}),
             "/cycles".into(), vec![("name", "typed cycle"), ("freezing_ramp_c_per_min", "1"), ("freezing_hold_temp_c", "-45"), ("freezing_hold_h", "2"), ("primary_ramp_c_per_min", "0.5"), ("primary_shelf_temp_c", "-25"), ("primary_chamber_pressure", "100"), ("primary_hold_h", "40"), ("secondary_ramp_c_per_min", "0.1"), ("secondary_shelf_temp_c", "40"), ("secondary_pressure", "100"), ("secondary_hold_h", "6")], "typed cycle"),
        ];
        for (api, body, page, mut fields, typed) in cases {
            let r = app.post_json(api, &body).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{api}: {}", r.body);
            let e = r.json();
            assert_eq!(e["field"], "notes", "{api}");
            let message = e["error"].as_str().unwrap().to_string();
            assert!(message.contains(&format!("at most {limit} characters")), "{api}: {message}");

            fields.push(("notes", &long));
            let r = app.post_form(&page, &fields).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{page}");
            assert_eq!(error_after_notes(&r.body).as_deref(), Some(message.as_str()), "{page}: the same message beside the notes");
            let form = post_form_in(&r.body);
            assert!(form.fields.iter().any(|(_, v)| v == typed), "{page} keeps {typed}");
            assert_eq!(form.get("notes").map(|n| n.chars().count()), Some(limit + 1), "{page} keeps the notes");
        }
    }
}

on_both_backends! {
    async fn a_run_with_its_entries_survives_its_edit_form_unchanged(app) {
        app.load_demo().await;
        glasspoint::runs::demo::seed_runs(&app.store).await.unwrap();
        let runs = api_get(&app, "/api/v1/runs").await;
        for run in runs.as_array().unwrap() {
            let id = run["id"].as_i64().unwrap();
            let api = format!("/api/v1/runs/{id}");
            let before = api_get(&app, &api).await["run"].clone();
            // The run form is multipart (it carries the data export); sent without a file
            // it keeps the recorded data.
            let page = app.get(&format!("/runs/{id}/edit")).await;
            assert_eq!(page.status, StatusCode::OK, "{}", page.body);
            let form = post_form_in(&page.body);
            let body = crate::helpers::multipart_body(None, &form.pairs(), None);
            let saved = app.post_multipart(&app.admin, &form.action, body).await;
            assert_eq!(saved.status, StatusCode::SEE_OTHER, "run {id}: {}", saved.body);
            let after = api_get(&app, &api).await["run"].clone();
            assert_eq!(without_bookkeeping(after), without_bookkeeping(before), "run {id}");
        }
    }
}
