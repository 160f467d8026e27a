//! Runs end to end: recording a run with its dryer's export through the page and the API,
//! the reading on the run page, the original bytes back, refusals that store nothing, the
//! column map and the dryer remembering it, a reviewed run asking for a reason, and
//! (in `calibration`) adopting gravimetric Kv into a container.
//!
//! The exports are made by the science crate's synthetic runs (invented numbers); the
//! checks on what the server reads back are round trips (common practice, no source).

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::domain::{Container, Role};
use glasspoint_science::drying::{DryingBase, Resistance, Vial};
use glasspoint_science::runs::synthetic::{synthesize_run, SyntheticRun, SyntheticRunSpec};
use glasspoint_science::runs::{ProbePosition, RunSeries};

use crate::audit_trail::all_events;
use crate::helpers::{
    multipart_body, Reply, TestApp, TestSession, MULTIPART_BOUNDARY, TEST_PASSWORD,
};
use crate::on_both_backends;

mod calibration;

/// The shipped container the tests load their vials in.
const CONTAINER: &str = "10R tubing vial";

/// What the runs are recorded against: ids of a demo cycle, the container, a dryer and a
/// demo formulation.
struct Refs {
    cycle: String,
    container: Container,
    container_id: String,
    dryer: String,
    formulation: String,
}

async fn refs(app: &TestApp) -> Refs {
    app.load_demo().await;
    let cycle = app.store.list_cycles(false).await.unwrap();
    let container = app
        .store
        .list_containers()
        .await
        .unwrap()
        .into_iter()
        .find(|c| c.name == CONTAINER)
        .expect("the shipped container");
    let dryers = app.store.list_dryers().await.unwrap();
    let formulations = app.store.formulation_codes().await.unwrap();
    Refs {
        cycle: cycle.first().expect("a demo cycle").id.to_string(),
        container_id: container.id.to_string(),
        container,
        dryer: dryers.first().expect("a shipped dryer").id.to_string(),
        formulation: formulations
            .first()
            .expect("a demo formulation")
            .0
            .to_string(),
    }
}

/// 4 mL of 5 % sucrose (R0 ≈ 1.4, A1 ≈ 16, A2 ≈ 0 cm²·Torr·h/g, references.md, from
/// memory) in `container`'s vial, with Kv coefficients `kv` (KC, KP, KD).
fn base(container: &Container, kv: (f64, f64, f64)) -> DryingBase {
    DryingBase {
        fill_volume_ml: 4.0,
        solids_mass_fraction: 0.05,
        solution_density_g_ml: None,
        unfrozen_water_g_per_g_solids: None,
        vial: Vial {
            inner_area_cm2: container.inner_area_cm2,
            outer_area_cm2: container.outer_area_cm2,
            kc_cal_s_cm2_k: kv.0,
            kp_cal_s_cm2_k_torr: kv.1,
            kd_per_torr: kv.2,
        },
        resistance: Resistance {
            r0_cm2_torr_h_g: 1.4,
            a1_cm_torr_h_g: 16.0,
            a2_per_cm: 0.0,
        },
        ice_density_g_cm3: None,
        ice_conductivity_w_mk: None,
        sublimation_enthalpy_j_g: None,
    }
}

fn position_word(p: ProbePosition) -> &'static str {
    match p {
        ProbePosition::Centre => "centre",
        ProbePosition::Edge => "edge",
        ProbePosition::Front => "front",
        ProbePosition::Back => "back",
    }
}

fn cell(v: Option<&f64>) -> String {
    v.map(|x| format!("{x:.6}")).unwrap_or_default()
}

/// The series as a dryer's export: comma separated, a header row with units in brackets.
/// `second_pirani` adds another Pirani-like column (a spare gauge reading 2 % high).
fn export_csv(s: &RunSeries, second_pirani: bool) -> String {
    let mut head = vec!["Time [h]".to_string(), "Shelf inlet [°C]".to_string()];
    for p in &s.probes {
        head.push(format!(
            "Product {} {} [°C]",
            p.label,
            position_word(p.position)
        ));
    }
    if s.manometer_mtorr.is_some() {
        head.push("Capacitance manometer [mTorr]".into());
    }
    if s.pirani_mtorr.is_some() {
        head.push("Pirani [mTorr]".into());
        if second_pirani {
            head.push("Pirani spare [mTorr]".into());
        }
    }
    if s.condenser_c.is_some() {
        head.push("Condenser [°C]".into());
    }
    let mut out = head.join(",");
    out.push('\n');
    for (i, t) in s.time_h.iter().enumerate() {
        let mut row = vec![format!("{t:.6}"), cell(s.shelf_c.get(i))];
        for p in &s.probes {
            row.push(cell(p.temp_c.get(i)));
        }
        if let Some(m) = &s.manometer_mtorr {
            row.push(cell(m.get(i)));
        }
        if let Some(p) = &s.pirani_mtorr {
            row.push(cell(p.get(i)));
            if second_pirani {
                row.push(cell(p.get(i).map(|v| v * 1.02).as_ref()));
            }
        }
        if let Some(c) = &s.condenser_c {
            row.push(cell(c.get(i)));
        }
        out.push_str(&row.join(","));
        out.push('\n');
    }
    out
}

/// A development run of the demo spec in the container, and its export.
fn development_run(r: &Refs) -> (SyntheticRun, Vec<u8>) {
    let kv = (
        r.container.kc_cal_s_cm2_k,
        r.container.kp_cal_s_cm2_k_torr,
        r.container.kd_per_torr,
    );
    let run = synthesize_run(&SyntheticRunSpec::demo(base(&r.container, kv))).unwrap();
    let csv = export_csv(&run.series, false).into_bytes();
    (run, csv)
}

/// The typed fields of a development run of `r`'s load.
fn run_fields<'a>(r: &'a Refs, name: &'a str) -> Vec<(&'a str, &'a str)> {
    vec![
        ("name", name),
        ("kind", "development"),
        ("cycle_id", &r.cycle),
        ("dryer_id", ""),
        ("run_on", "2026-11-03"),
        ("container_id", &r.container_id),
        ("vial_count", "120"),
        ("fill_volume_ml", "4"),
        ("formulation_ids", &r.formulation),
        ("probed_formulation_id", &r.formulation),
        ("cake_appearance", "intact"),
        ("notes", "first platform run"),
        ("moisture", "30; 40; 1.2; Karl Fischer"),
    ]
}

fn run_id(location: &str) -> i64 {
    location
        .strip_prefix("/runs/")
        .and_then(|s| s.parse().ok())
        .unwrap_or_else(|| panic!("not a run page: {location}"))
}

/// Posts a multipart body to the API as `session` (cookie and CSRF header).
async fn api_multipart(app: &TestApp, session: &TestSession, path: &str, body: Vec<u8>) -> Reply {
    api_multipart_as(app, session, "POST", path, body).await
}

/// Sends a multipart body to the API with `method` as `session`.
async fn api_multipart_as(
    app: &TestApp,
    session: &TestSession,
    method: &str,
    path: &str,
    body: Vec<u8>,
) -> Reply {
    let req = Request::builder()
        .method(method)
        .uri(path)
        .header(
            header::CONTENT_TYPE,
            format!("multipart/form-data; boundary={MULTIPART_BOUNDARY}"),
        )
        .body(Body::from(body))
        .unwrap();
    app.client(Some(session)).request(req).await
}

async fn api_run_count(app: &TestApp) -> usize {
    let list = app.get("/api/v1/runs").await;
    assert_eq!(list.status, StatusCode::OK, "{}", list.body);
    list.json().as_array().expect("a list").len()
}

fn set<'a>(fields: &mut Vec<(&'a str, &'a str)>, name: &'a str, value: &'a str) {
    fields.retain(|(k, _)| *k != name);
    fields.push((name, value));
}

on_both_backends! {
    async fn a_run_recorded_through_the_page_is_read_drawn_kept_byte_for_byte_and_audited(app) {
        let r = refs(&app).await;
        let form = app.get("/runs/new").await;
        assert_eq!(form.status, StatusCode::OK, "{}", form.body);
        assert!(form.body.contains("enctype=\"multipart/form-data\""), "the form uploads a file");

        let (truth, csv) = development_run(&r);
        let session = app.admin.clone();
        let fields = run_fields(&r, "Platform run 1");
        let body = multipart_body(Some(&session.csrf), &fields, Some(("run 1 (°C).csv", &csv)));
        let created = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(created.status, StatusCode::SEE_OTHER, "{}", created.body);
        let location = created.location.unwrap();
        let id = run_id(&location);

        let page = app.get(&location).await;
        assert_eq!(page.status, StatusCode::OK, "{}", page.body);
        assert!(page.body.contains("Platform run 1"));
        assert!(page.body.contains("<h2>Phases</h2>") && !page.body.contains("No phases could be told apart"), "phases are found");
        for phase in ["freezing", "primary drying", "secondary drying"] {
            assert!(page.body.contains(&format!("<td>{phase}</td>")), "the {phase} phase is listed");
        }
        assert!(page.body.contains("<h2>End of primary drying</h2>"));
        assert!(page.body.contains("From the Pirani against the capacitance manometer"), "the gauges give an end point");
        assert!(page.body.contains(&format!("<img class=\"chart\" src=\"/runs/{id}/chart.svg\"")));
        assert!(page.body.contains(&format!("<img class=\"chart\" src=\"/runs/{id}/pressures.svg\"")));
        assert!(page.body.contains("class=\"caution\""));
        for chart in ["chart.svg", "pressures.svg"] {
            let svg = app.get(&format!("/runs/{id}/{chart}")).await;
            assert_eq!(svg.status, StatusCode::OK, "{chart}: {}", svg.body);
            assert!(svg.body.contains("<svg"), "{chart}");
        }

        // The reading agrees with the run the model made: the Pirani meets the manometer
        // when the last vials are dry.
        let report = app.get(&format!("/api/v1/runs/{id}")).await;
        assert_eq!(report.status, StatusCode::OK, "{}", report.body);
        let j = report.json();
        let last_dry = truth.predicted_end_h.max(truth.edge_end_h);
        let measured = j["measured_end_h"].as_f64().expect("a measured end");
        // Within two sample intervals, as the science crate's own round trip.
        let interval_h = 2.0 / 60.0;
        assert!((measured - last_dry).abs() <= 2.0 * interval_h, "measured end {measured} h, the model's last vials dry at {last_dry} h");
        assert_eq!(j["measured_end_basis"], "Pirani meets the manometer");
        let primary = j["phases"].as_array().unwrap().iter().find(|p| p["kind"] == "primary").expect("a primary phase");
        let start = primary["start_h"].as_f64().unwrap();
        assert!((start - truth.vacuum_h).abs() < 0.5, "primary starts at {start} h, the vacuum at {} h", truth.vacuum_h);

        // The original, byte for byte, from the page and the API.
        for path in [format!("/runs/{id}/original"), format!("/api/v1/runs/{id}/original")] {
            let (status, headers, bytes) = app.get_bytes(&path).await;
            assert_eq!(status, StatusCode::OK, "{path}");
            assert_eq!(bytes, csv, "{path} returns the export unchanged");
            let disposition = headers.get(header::CONTENT_DISPOSITION).unwrap().to_str().unwrap();
            assert!(disposition.contains("run%201%20%28%C2%B0C%29.csv"), "{disposition}");
        }

        // The audit trail holds the creation, with the export's hash and not its bytes.
        let history = app.get(&format!("/records/run/{id}/history")).await;
        assert_eq!(history.status, StatusCode::OK, "{}", history.body);
        assert!(history.body.contains("Created"), "the history lists the creation");
        let events = all_events(&app.store).await;
        let created: Vec<_> = events.iter().filter(|e| e.entity == "run" && e.entity_id == Some(id)).collect();
        assert_eq!(created.len(), 1);
        assert_eq!(created[0].action, "create");
        let stored = app.store.get_run(id).await.unwrap();
        let after = created[0].after_json.as_deref().unwrap_or("");
        assert!(after.contains(&stored.content_sha256), "the event keeps the hash");
        assert!(!after.contains("original_bytes") && !after.contains("series_json"), "the event keeps no bytes");
    }
}

on_both_backends! {
    async fn a_bad_field_is_refused_naming_it_keeping_what_was_typed_and_storing_nothing(app) {
        let r = refs(&app).await;
        let (_, csv) = development_run(&r);
        let session = app.admin.clone();
        let cases: Vec<(&str, &str, &str, &str)> = vec![
            // (field, value, what the page must keep, part of the message)
            ("fill_volume_ml", "abc", "value=\"abc\"", ""),
            ("weights", "centre 13.0 13.5", "centre 13.0 13.5", "vial 1"),
            ("run_on", "2026-13-45", "value=\"2026-13-45\"", ""),
        ];
        for (field, value, kept, message) in cases {
            let runs = api_run_count(&app).await;
            let events = all_events(&app.store).await.len();
            let mut fields = run_fields(&r, "Kept name");
            set(&mut fields, field, value);
            let body = multipart_body(Some(&session.csrf), &fields, Some(("run.csv", &csv)));
            let reply = app.post_multipart(&session, "/runs", body).await;
            assert_eq!(reply.status, StatusCode::UNPROCESSABLE_ENTITY, "{field}: {}", reply.body);
            assert!(reply.body.contains(&format!("name=\"{field}\"")), "{field}: the form is shown again");
            let invalid = reply.body.find(&format!("name=\"{field}\"")).map(|at| &reply.body[at..]).unwrap_or("");
            let tag_end = invalid.find('>').unwrap_or(0);
            assert!(invalid[..tag_end].contains("aria-invalid=\"true\""), "{field} is marked: {}", &invalid[..tag_end]);
            assert!(reply.body.contains("class=\"field-error\""), "{field}: the reason is given");
            assert!(reply.body.contains(message), "{field}: the message says {message}");
            assert!(reply.body.contains(kept), "{field}: the typed value is kept");
            assert!(reply.body.contains("value=\"Kept name\"") && reply.body.contains("first platform run"), "{field}: the other entries are kept");
            assert_eq!(api_run_count(&app).await, runs, "{field}: no run stored");
            assert_eq!(all_events(&app.store).await.len(), events, "{field}: no audit event");

            // The API names the same field.
            let body = multipart_body(None, &fields, Some(("run.csv", &csv)));
            let api = api_multipart(&app, &session, "/api/v1/runs", body).await;
            assert_eq!(api.status, StatusCode::UNPROCESSABLE_ENTITY, "{field} (API): {}", api.body);
            assert_eq!(api.json()["field"], field, "{field} (API): {}", api.body);
            assert_eq!(api_run_count(&app).await, runs, "{field} (API): no run stored");
        }
    }
}

/// The column map for `export_csv(_, true)`: every column its role, the spare Pirani left
/// out.
fn full_map(s: &RunSeries) -> Vec<(String, String)> {
    let mut map = vec![
        ("Time [h]".to_string(), "time".to_string()),
        ("Shelf inlet [°C]".to_string(), "shelf".to_string()),
    ];
    for p in &s.probes {
        map.push((
            format!("Product {} {} [°C]", p.label, position_word(p.position)),
            format!("probe:{}", position_word(p.position)),
        ));
    }
    map.push(("Capacitance manometer [mTorr]".into(), "manometer".into()));
    map.push(("Pirani [mTorr]".into(), "pirani".into()));
    map.push(("Pirani spare [mTorr]".into(), "ignore".into()));
    map.push(("Condenser [°C]".into(), "condenser".into()));
    map
}

on_both_backends! {
    async fn two_pirani_columns_ask_for_the_column_map_which_the_dryer_then_remembers(app) {
        let r = refs(&app).await;
        let (truth, _) = development_run(&r);
        let csv = export_csv(&truth.series, true).into_bytes();
        let session = app.admin.clone();
        let mut fields = run_fields(&r, "Two gauges");
        set(&mut fields, "dryer_id", &r.dryer);

        // The page: 422 with a select for each column, nothing stored.
        let runs = api_run_count(&app).await;
        let body = multipart_body(Some(&session.csrf), &fields, Some(("gauges.csv", &csv)));
        let reply = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(reply.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", reply.body);
        assert!(reply.body.contains("name=\"map_role\""), "the column map is asked for");
        assert!(reply.body.contains("name=\"map_header\" value=\"Pirani spare [mTorr]\""), "{}", reply.body);
        assert!(reply.body.contains("Pirani spare"), "the page says which columns clash");
        assert!(reply.body.contains("value=\"Two gauges\""), "typed fields are kept");
        assert_eq!(api_run_count(&app).await, runs, "nothing stored until the map is chosen");

        // The API: 422 naming `mapping`, with the columns.
        let body = multipart_body(None, &fields, Some(("gauges.csv", &csv)));
        let api = api_multipart(&app, &session, "/api/v1/runs", body).await;
        assert_eq!(api.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", api.body);
        let j = api.json();
        assert_eq!(j["field"], "mapping");
        let headers: Vec<&str> = j["columns"].as_array().unwrap().iter().filter_map(|c| c["header"].as_str()).collect();
        assert!(headers.contains(&"Pirani [mTorr]") && headers.contains(&"Pirani spare [mTorr]"), "{headers:?}");
        assert_eq!(api_run_count(&app).await, runs, "nothing stored by the API either");

        // With the map chosen the run is stored, and read with the chosen Pirani.
        let map = full_map(&truth.series);
        let mut with_map = fields.clone();
        for (h, role) in &map {
            with_map.push(("map_header", h.as_str()));
            with_map.push(("map_role", role.as_str()));
        }
        let body = multipart_body(Some(&session.csrf), &with_map, Some(("gauges.csv", &csv)));
        let stored = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(stored.status, StatusCode::SEE_OTHER, "{}", stored.body);
        let id = run_id(&stored.location.unwrap());
        let series = app.store.run_series(id).await.unwrap().expect("the series is stored");
        let first_pirani = truth.series.pirani_mtorr.as_ref().unwrap();
        let read = series.pirani_mtorr.as_ref().expect("a Pirani is read");
        let last = read.len() - 1;
        assert!((read[last].unwrap() - first_pirani[last]).abs() < 1e-4, "the chosen Pirani, not the spare");
        assert_eq!(series.probes.len(), truth.series.probes.len());
        let dryer: i64 = r.dryer.parse().unwrap();
        assert_eq!(app.store.dryer_column_map(dryer).await.unwrap(), map, "the dryer remembers the map");
        let page = app.get(&format!("/dryers/{dryer}")).await;
        assert!(page.body.contains("Chamber pressure, Pirani gauge"), "the dryer page shows the remembered columns");
        let history = app.get(&format!("/records/dryer/{dryer}/history")).await;
        assert!(history.body.contains("column_map"), "remembering the map is a change of the dryer, in its history");

        // The next export with the same headers needs no map, on the page and the API.
        set(&mut fields, "name", "Two gauges again");
        let body = multipart_body(Some(&session.csrf), &fields, Some(("gauges-2.csv", &csv)));
        let again = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(again.status, StatusCode::SEE_OTHER, "{}", again.body);
        let body = multipart_body(None, &fields, Some(("gauges-3.csv", &csv)));
        let api = api_multipart(&app, &session, "/api/v1/runs", body).await;
        assert_eq!(api.status, StatusCode::CREATED, "{}", api.body);
        assert_eq!(api_run_count(&app).await, runs + 3);

        // An export of other columns from the same dryer is not held to the remembered map:
        // its columns are chosen from their headers, and that map is remembered instead.
        let plain = export_csv(&truth.series, false).into_bytes();
        set(&mut fields, "name", "One gauge");
        let body = multipart_body(Some(&session.csrf), &fields, Some(("plain.csv", &plain)));
        let read = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(read.status, StatusCode::SEE_OTHER, "{}", read.body);
        let id = run_id(&read.location.unwrap());
        assert!(app.store.run_series(id).await.unwrap().is_some_and(|s| s.pirani_mtorr.is_some()));
        let notes = app.store.get_run(id).await.unwrap().import_notes.join(" ");
        assert!(notes.contains("remembered column map does not fit"), "{notes}");
        let body = multipart_body(None, &fields, Some(("plain.csv", &plain)));
        let api = api_multipart(&app, &session, "/api/v1/runs", body).await;
        assert_eq!(api.status, StatusCode::CREATED, "{}", api.body);
        // A column the remembered map does not list is left out, and the run says so.
        let renamed = String::from_utf8(csv.clone()).unwrap().replace("Pirani spare", "Pirani backup");
        let body = multipart_body(Some(&session.csrf), &fields, Some(("renamed.csv", renamed.as_bytes())));
        let extra = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(extra.status, StatusCode::SEE_OTHER, "{}", extra.body);
        let id = run_id(&extra.location.unwrap());
        let notes = app.store.get_run(id).await.unwrap().import_notes.join(" ");
        assert!(notes.contains("“Pirani backup [mTorr]” is not in the mapping; ignored"), "{notes}");
        assert_eq!(api_run_count(&app).await, runs + 6);
    }
}

on_both_backends! {
    async fn the_api_records_a_run_reports_its_reading_and_refuses_readers_and_bad_filters(app) {
        let r = refs(&app).await;
        let (truth, csv) = development_run(&r);
        let session = app.admin.clone();
        let fields = run_fields(&r, "API run");
        let body = multipart_body(None, &fields, Some(("api.csv", &csv)));
        let created = api_multipart(&app, &session, "/api/v1/runs", body).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let j = created.json();
        let id = j["run"]["id"].as_i64().expect("the run's id");
        assert_eq!(j["run"]["name"], "API run");
        assert_eq!(j["run"]["byte_count"].as_u64(), Some(csv.len() as u64));

        let report = app.get(&format!("/api/v1/runs/{id}")).await;
        assert_eq!(report.status, StatusCode::OK, "{}", report.body);
        let j = report.json();
        assert!(j["measured_end_h"].as_f64().is_some_and(|h| h > truth.vacuum_h), "{}", j["measured_end_h"]);
        let phases = j["phases"].as_array().expect("phases");
        assert!(phases.len() >= 3, "freezing, primary and secondary: {phases:?}");
        assert!(j["caution"].as_str().is_some_and(|c| c.contains("qualified")), "{}", j["caution"]);
        assert_eq!(j["run"]["moisture"].as_array().map(Vec::len), Some(1));

        // Filters.
        let dev = app.get("/api/v1/runs?kind=development").await.json();
        assert!(dev.as_array().unwrap().iter().any(|x| x["id"] == id));
        let grav = app.get("/api/v1/runs?kind=gravimetric").await.json();
        assert!(!grav.as_array().unwrap().iter().any(|x| x["id"] == id));
        let bad = app.get("/api/v1/runs?kind=wet").await;
        assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", bad.body);
        assert_eq!(bad.json()["field"], "kind");

        // A reader may read but not record.
        let reader = app.user("run-reader", Role::Reader).await;
        assert_eq!(app.client(Some(&reader)).get(&format!("/api/v1/runs/{id}")).await.status, StatusCode::OK);
        let runs = api_run_count(&app).await;
        let body = multipart_body(None, &fields, Some(("api.csv", &csv)));
        let refused = api_multipart(&app, &reader, "/api/v1/runs", body).await;
        assert_eq!(refused.status, StatusCode::FORBIDDEN, "{}", refused.body);
        let body = multipart_body(Some(&reader.csrf), &fields, Some(("api.csv", &csv)));
        let refused = app.post_multipart(&reader, "/runs", body).await;
        assert_eq!(refused.status, StatusCode::FORBIDDEN, "{}", refused.body);
        assert_eq!(api_run_count(&app).await, runs, "the reader stored nothing");

        // A change through the API names the version it saw; a stale one is refused.
        let mut changed = fields.clone();
        set(&mut changed, "notes", "Door gasket replaced before this run.");
        set(&mut changed, "version", "1");
        let body = multipart_body(None, &changed, None);
        let put = api_multipart_as(&app, &session, "PUT", &format!("/api/v1/runs/{id}"), body).await;
        assert_eq!(put.status, StatusCode::OK, "{}", put.body);
        let j = put.json();
        assert_eq!(j["run"]["notes"], "Door gasket replaced before this run.");
        assert_eq!(j["run"]["version"], 2);
        assert_eq!(j["run"]["byte_count"].as_u64(), Some(csv.len() as u64), "the data is kept");
        let body = multipart_body(None, &changed, None);
        let stale = api_multipart_as(&app, &session, "PUT", &format!("/api/v1/runs/{id}"), body).await;
        assert_eq!(stale.status, StatusCode::CONFLICT, "{}", stale.body);
    }
}

on_both_backends! {
    async fn a_reviewed_run_changes_only_with_a_reason(app) {
        let r = refs(&app).await;
        let (_, csv) = development_run(&r);
        let session = app.admin.clone();
        let fields = run_fields(&r, "To be reviewed");
        let body = multipart_body(Some(&session.csrf), &fields, Some(("run.csv", &csv)));
        let created = app.post_multipart(&session, "/runs", body).await;
        assert_eq!(created.status, StatusCode::SEE_OTHER, "{}", created.body);
        let id = run_id(&created.location.unwrap());

        let reviewer = app.user("run-reviewer", Role::Reviewer).await;
        let signed = app.client(Some(&reviewer)).post_form(
            &format!("/records/run/{id}/sign"),
            &[("version", "1"), ("meaning", "reviewed"), ("reason", "checked the export"), ("password", TEST_PASSWORD)],
        ).await;
        assert_eq!(signed.status, StatusCode::SEE_OTHER, "{}", signed.body);
        let run = app.store.get_run(id).await.unwrap();
        assert_eq!(run.review_state.code(), "reviewed");
        let version = run.version.to_string();

        let edit = app.get(&format!("/runs/{id}/edit")).await;
        assert_eq!(edit.status, StatusCode::OK);
        assert!(edit.body.contains("name=\"reason\""), "the edit form asks for a reason");

        let mut change = run_fields(&r, "Renamed after review");
        change.push(("version", &version));
        let events = all_events(&app.store).await.len();
        let body = multipart_body(Some(&session.csrf), &change, None);
        let refused = app.post_multipart(&session, &format!("/runs/{id}"), body).await;
        assert_eq!(refused.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", refused.body);
        let marked = refused.body.find("name=\"reason\"").map(|at| &refused.body[at..]).unwrap_or("");
        assert!(marked[..marked.find('>').unwrap_or(0)].contains("aria-invalid=\"true\""), "the reason is marked: {}", refused.body);
        assert!(refused.body.contains("needs a reason"), "and the reason why is given");
        assert!(refused.body.contains("value=\"Renamed after review\""), "the typed change is kept");
        assert_eq!(app.store.get_run(id).await.unwrap().name, "To be reviewed");
        assert_eq!(all_events(&app.store).await.len(), events, "no audit event");

        change.push(("reason", "typo in the name"));
        let body = multipart_body(Some(&session.csrf), &change, None);
        let ok = app.post_multipart(&session, &format!("/runs/{id}"), body).await;
        assert_eq!(ok.status, StatusCode::SEE_OTHER, "{}", ok.body);
        let changed = app.store.get_run(id).await.unwrap();
        assert_eq!(changed.name, "Renamed after review");
        assert_eq!(changed.content_sha256, run.content_sha256, "the data stays without a new export");
        let last = all_events(&app.store).await.into_iter().rev().find(|e| e.entity == "run" && e.entity_id == Some(id)).unwrap();
        assert_eq!(last.reason, "typo in the name");
    }
}

on_both_backends! {
    async fn without_a_pirani_the_end_of_primary_drying_is_read_from_the_probes(app) {
        let r = refs(&app).await;
        let (truth, _) = development_run(&r);
        let mut series = truth.series.clone();
        series.pirani_mtorr = None;
        let csv = export_csv(&series, false).into_bytes();
        let session = app.admin.clone();
        let fields = run_fields(&r, "Probes only");
        let body = multipart_body(None, &fields, Some(("probes.csv", &csv)));
        let created = api_multipart(&app, &session, "/api/v1/runs", body).await;
        assert_eq!(created.status, StatusCode::CREATED, "{}", created.body);
        let j = created.json();
        assert!(j["end_point"].is_null(), "no gauge pair, no gauge end point");
        let basis = j["measured_end_basis"].as_str().unwrap_or("");
        assert!(basis.contains("product probe"), "{basis}");
        // The probes leave their vials' bottom temperature when the ice is gone and follow
        // the shelf with a lag of PROBE_LAG_H; the last reaches it well before the shelf
        // ramps to secondary drying.
        let measured = j["measured_end_h"].as_f64().expect("a measured end");
        let last_dry = truth.predicted_end_h.max(truth.edge_end_h);
        assert!(
            measured > last_dry && measured < last_dry + 1.0 && measured < truth.secondary_ramp_start_h,
            "measured end {measured} h; last vials dry at {last_dry} h, the secondary ramp starts at {} h",
            truth.secondary_ramp_start_h
        );
        for a in j["probe_arrivals"].as_array().unwrap() {
            let t = a["time_h"].as_f64().expect("every probe arrives");
            assert!(t < truth.secondary_ramp_start_h, "{a}");
        }
        let primary = j["phases"].as_array().unwrap().iter().find(|p| p["kind"] == "primary").expect("a primary phase");
        assert!((primary["end_h"].as_f64().unwrap() - measured).abs() < 1e-6, "primary drying ends at the measured end");
    }
}
