//! DSC traces end to end: upload (multipart, with the CSRF token as its first part, and
//! raw through the API), the trace page's analysis, saving values as measurements linked
//! to the trace, the original bytes back, refusals that store nothing, and the audit trail.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};

use crate::audit_trail::all_events;
use crate::helpers::{multipart_body, Reply, TestApp, TestSession};
use crate::on_both_backends;

/// Exact synthetic fixture (references.md, DSC): f(T) = a + bT + (Δ/2)[1 + tanh((T − Tm)/w)]
/// has its midpoint and inflection at Tm and tangent onset/end at Tm ∓ w for any baseline
/// slope b.
const TM_C: f64 = -32.5;
const W_C: f64 = 1.5;

/// A frozen solution's heating run from −60 to 10 °C in `steps` steps, drawn endotherm up
/// (exotherm down): the tanh step and, far above it, an ice-melt endotherm near −2 °C
/// (as in the science crate's suggested-window test), which adds nothing near Tm.
/// Latin-1 encoded (the degree sign is byte 0xB0), comma separated, with a preamble; about
/// 25 bytes a row.
fn tanh_trace(steps: usize) -> Vec<u8> {
    let (a, b, delta) = (-1.2, 0.004, 0.35);
    let mut text: Vec<u8> = Vec::new();
    text.extend_from_slice(b"Sample mass: 5.2 mg\r\nHeating rate: 10 \xb0C/min\r\n");
    text.extend_from_slice(b"Temperature (\xb0C),Heat flow (mW)\r\n");
    for i in 0..=steps {
        let t = -60.0 + 70.0 * i as f64 / steps as f64;
        let melt = 4.0 * (-(t + 2.0).powi(2) / 8.0).exp();
        let f = a + b * t + delta / 2.0 * (1.0 + ((t - TM_C) / W_C).tanh()) + melt;
        text.extend_from_slice(format!("{t:.4},{f:.6}\r\n").as_bytes());
    }
    text
}

/// A multipart body: the CSRF token first (when given), then the typed fields, then the
/// file.
fn multipart(csrf: Option<&str>, fields: &[(&str, &str)], file_name: &str, file: &[u8]) -> Vec<u8> {
    multipart_body(csrf, fields, Some((file_name, file)))
}

/// Sends a multipart upload as a browser does: the session cookie, no CSRF header (the
/// token travels in the body, or not at all).
async fn upload(app: &TestApp, session: &TestSession, formulation: i64, body: Vec<u8>) -> Reply {
    app.post_multipart(
        session,
        &format!("/formulations/{formulation}/traces"),
        body,
    )
    .await
}

async fn new_formulation(app: &TestApp, code: &str) -> i64 {
    let r = app
        .post_form("/formulations", &[("code", code), ("name", "trace test")])
        .await;
    assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
    r.location
        .unwrap()
        .rsplit('/')
        .next()
        .unwrap()
        .parse()
        .unwrap()
}

/// The number in the table cell with this id.
fn cell(html: &str, id: &str) -> f64 {
    let at = html
        .find(&format!("id=\"{id}\">"))
        .unwrap_or_else(|| panic!("no {id} in page"));
    let rest = &html[at + id.len() + 6..];
    let end = rest.find('<').unwrap();
    rest[..end].trim().replace('−', "-").parse().unwrap()
}

fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    hex::encode(Sha256::digest(bytes))
}

on_both_backends! {
    async fn an_uploaded_trace_is_analysed_saved_as_measurements_and_returned_byte_for_byte(app) {
        let fid = new_formulation(&app, "TR-1").await;
        let page = app.get(&format!("/formulations/{fid}")).await;
        assert!(page.body.contains(&format!("href=\"/formulations/{fid}/traces/new\"")), "the formulation page offers an upload");
        let form = app.get(&format!("/formulations/{fid}/traces/new")).await;
        assert_eq!(form.status, StatusCode::OK);
        assert!(form.body.contains("enctype=\"multipart/form-data\""));
        // 20 001 rows, about 500 kB: above the app's general body limit of 256 kB.
        let file = tanh_trace(20_000);
        assert!(file.len() > glasspoint::config::DEFAULT_BODY_LIMIT);
        let session = app.admin.clone();
        let body = multipart(Some(&session.csrf), &[("sample_mass_mg", "5.2"), ("heating_rate_c_min", "10"), ("exo", "down"), ("notes", "tanh fixture")], "run 1 (°C).csv", &file);
        let r = upload(&app, &session, fid, body).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        let location = r.location.unwrap();
        let tid: i64 = location.strip_prefix("/traces/").unwrap().parse().unwrap();

        let page = app.get(&location).await;
        assert_eq!(page.status, StatusCode::OK, "{}", page.body);
        let midpoint = cell(&page.body, "tg-midpoint");
        assert!((midpoint - TM_C).abs() < 0.2, "midpoint {midpoint} °C, expected {TM_C}");
        let onset = cell(&page.body, "tg-onset");
        assert!((onset - (TM_C - W_C)).abs() < 0.3, "onset {onset} °C");
        assert!(page.body.contains("support the judgement of qualified people"));
        let chart = app.get(&format!("/traces/{tid}/chart.svg")).await;
        assert_eq!(chart.status, StatusCode::OK);
        assert!(chart.body.contains("<svg") && chart.body.contains("Tg midpoint"), "the chart labels what was found");

        // A window typed on the page re-analyses; one the wrong way round is named.
        let again = app.get(&format!("/traces/{tid}?gt_lo=-45&gt_hi=-20")).await;
        assert_eq!(again.status, StatusCode::OK);
        assert!((cell(&again.body, "tg-midpoint") - TM_C).abs() < 0.2);
        let bad = app.get(&format!("/traces/{tid}?gt_lo=-20&gt_hi=-45")).await;
        assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(bad.body.contains("gt_hi"));

        // Save the midpoint as Tg′.
        let before = all_events(&app.store).await.len();
        let saved = app.post_form(&format!("/traces/{tid}/measurements"), &[("tg_prime_from", "midpoint"), ("peak0", "ice_melt_onset"), ("method", "dsc"), ("analyst", "A. Analyst"), ("replicate", "1"), ("gt_lo", ""), ("gt_hi", "")]).await;
        assert_eq!(saved.status, StatusCode::SEE_OTHER, "{}", saved.body);
        let ms = app.store.measurements_of(fid).await.unwrap();
        assert_eq!(ms.len(), 2);
        let melt = ms.iter().find(|m| m.kind.code() == "ice_melt_onset").expect("the melt onset saved");
        assert_eq!(melt.trace_id, Some(tid));
        assert!(melt.value_c > -10.0 && melt.value_c < -2.0, "melt onset {}", melt.value_c);
        let m = ms.iter().find(|m| m.kind.code() == "tg_prime").expect("Tg′ saved");
        assert_eq!(m.trace_id, Some(tid));
        assert_eq!(m.kind.code(), "tg_prime");
        assert!((m.value_c - TM_C).abs() < 0.2);
        assert_eq!(m.heating_rate_c_min, Some(10.0));
        assert_eq!(m.sample_mass_mg, Some(5.2));
        let events = all_events(&app.store).await;
        let created: Vec<_> = events[before..].iter().filter(|e| e.entity == "measurement" && e.action == "create").collect();
        assert_eq!(created.len(), 2);
        assert!(created.iter().all(|e| e.after_json.as_deref().unwrap().contains(&format!("\"trace_id\":{tid}"))));
        let page = app.get(&format!("/formulations/{fid}")).await;
        assert!(page.body.contains(&format!("href=\"/traces/{tid}\"")), "the measurement links to its trace");

        // The trace's own audit event keeps the hash, not the bytes.
        let trace_events: Vec<_> = events.iter().filter(|e| e.entity == "trace" && e.entity_id == Some(tid)).collect();
        assert_eq!(trace_events.len(), 1);
        let after = trace_events[0].after_json.as_deref().unwrap();
        assert!(after.contains(&sha256_hex(&file)));
        assert!(!after.contains("original_bytes") && !after.contains("heat_flow_json"));

        // The original, byte for byte, with its name.
        let (status, headers, bytes) = app.get_bytes(&format!("/traces/{tid}/original")).await;
        assert_eq!(status, StatusCode::OK);
        assert_eq!(bytes, file);
        let meta = app.store.get_trace(tid).await.unwrap();
        assert_eq!(meta.content_sha256, sha256_hex(&bytes));
        assert_eq!(meta.byte_count as usize, file.len());
        let disposition = headers.get(header::CONTENT_DISPOSITION).unwrap().to_str().unwrap();
        assert!(disposition.contains("filename*=UTF-8''run%201%20%28%C2%B0C%29.csv"), "{disposition}");
        let (status, _, api_bytes) = app.get_bytes(&format!("/api/v1/traces/{tid}/original")).await;
        assert_eq!(status, StatusCode::OK);
        assert_eq!(api_bytes, file);

        // The API: metadata and analysis.
        let j = app.get(&format!("/api/v1/traces/{tid}")).await.json();
        let mid = j["analysis"]["glass_transition"]["midpoint_c"].as_f64().unwrap();
        assert!((mid - TM_C).abs() < 0.2);
        assert_eq!(j["trace"]["content_sha256"], sha256_hex(&file));
        assert!(j["caution"].as_str().unwrap().contains("qualified"));
        let doc = app.get("/api/v1/openapi.json").await.json();
        for path in ["/api/v1/formulations/{id}/traces", "/api/v1/traces/{id}", "/api/v1/traces/{id}/original"] {
            assert!(doc["paths"].get(path).is_some(), "{path} is documented");
        }
        // The trace's history is the audit trail's page for it.
        let history = app.get(&format!("/records/trace/{tid}/history")).await;
        assert_eq!(history.status, StatusCode::OK, "{}", history.body);
        let version = app.get(&format!("/records/trace/{tid}/versions/1")).await;
        assert_eq!(version.status, StatusCode::OK, "{}", version.body);
        assert!(version.body.contains(&sha256_hex(&file)), "the version page shows the hash");
    }
}

on_both_backends! {
    async fn the_api_takes_a_raw_body_with_its_conditions_in_the_query(app) {
        let fid = new_formulation(&app, "TR-API").await;
        let file = tanh_trace(2_000);
        let req = Request::post(format!("/api/v1/formulations/{fid}/traces?file_name=api.csv&sample_mass_mg=4&heating_rate_c_min=5&exo=down"))
            .header(header::CONTENT_TYPE, "application/octet-stream")
            .body(Body::from(file.clone()))
            .unwrap();
        let r = app.client(Some(&app.admin)).request(req).await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
        let j = r.json();
        assert_eq!(j["trace"]["file_name"], "api.csv");
        assert_eq!(j["trace"]["heating_rate_c_min"], 5.0);
        let mid = j["analysis"]["glass_transition"]["midpoint_c"].as_f64().unwrap();
        assert!((mid - TM_C).abs() < 0.2);
        let bad = Request::post(format!("/api/v1/formulations/{fid}/traces?file_name=x.csv&sample_mass_mg=-1"))
            .header(header::CONTENT_TYPE, "application/octet-stream")
            .body(Body::from(file))
            .unwrap();
        let r = app.client(Some(&app.admin)).request(bad).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(r.json()["field"], "sample_mass_mg");
    }
}

on_both_backends! {
    async fn a_file_that_cannot_be_read_is_refused_naming_the_field_and_stores_nothing(app) {
        let fid = new_formulation(&app, "TR-BAD").await;
        let session = app.admin.clone();
        let mut garbage: Vec<u8> = (0..4000u32).map(|i| (i.wrapping_mul(2_654_435_761) >> 13) as u8).collect();
        garbage[10] = 0;
        let cases: Vec<(&str, Vec<u8>)> = vec![
            ("no numeric column", b"name,comment\nalpha,beta\ngamma,delta\n".to_vec()),
            ("binary garbage", garbage),
            ("one point", b"Temperature (C),Heat flow (mW)\n-40.0,1.25\n".to_vec()),
            ("empty", Vec::new()),
        ];
        for (what, file) in cases {
            let traces = app.store.count_traces().await.unwrap();
            let events = all_events(&app.store).await.len();
            let body = multipart(Some(&session.csrf), &[("sample_mass_mg", "5.5"), ("notes", "kept notes")], "bad.csv", &file);
            let r = upload(&app, &session, fid, body).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{what}: {}", r.body);
            assert!(r.body.contains("file"), "{what}: the message names the file field");
            assert!(r.body.contains("kept notes") && r.body.contains("value=\"5.5\""), "{what}: typed fields are kept");
            assert_eq!(app.store.count_traces().await.unwrap(), traces, "{what}: nothing stored");
            assert_eq!(all_events(&app.store).await.len(), events, "{what}: no audit event");

            let req = Request::post(format!("/api/v1/formulations/{fid}/traces?file_name=bad.csv"))
                .header(header::CONTENT_TYPE, "application/octet-stream")
                .body(Body::from(file))
                .unwrap();
            let r = app.client(Some(&app.admin)).request(req).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{what} (API): {}", r.body);
            assert!(r.json()["field"].as_str().unwrap().starts_with("file"), "{what} (API): {}", r.body);
            assert_eq!(app.store.count_traces().await.unwrap(), traces, "{what} (API): nothing stored");
        }
    }
}

on_both_backends! {
    async fn a_multipart_upload_needs_its_sessions_csrf_token(app) {
        let fid = new_formulation(&app, "TR-CSRF").await;
        let session = app.admin.clone();
        let file = tanh_trace(500);
        for (what, token) in [("no token", None), ("a wrong token", Some("not-the-token"))] {
            let r = upload(&app, &session, fid, multipart(token, &[], "t.csv", &file)).await;
            assert_eq!(r.status, StatusCode::FORBIDDEN, "{what}: {}", r.body);
            assert_eq!(app.store.count_traces().await.unwrap(), 0, "{what}");
        }
        // A reader may not upload even with the right token.
        let reader = app.user("trace-reader", glasspoint::domain::Role::Reader).await;
        let r = upload(&app, &reader, fid, multipart(Some(&reader.csrf), &[], "t.csv", &file)).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN);
        let r = upload(&app, &session, fid, multipart(Some(&session.csrf), &[], "t.csv", &file)).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert_eq!(app.store.count_traces().await.unwrap(), 1);
    }
}

on_both_backends! {
    async fn ambiguous_columns_show_a_preview_and_the_analysts_choice_is_used(app) {
        let fid = new_formulation(&app, "TR-AMB").await;
        let session = app.admin.clone();
        let mut file = String::from("Program temperature (°C),Reference temperature (°C),Heat flow (mW)\n");
        for i in 0..400 {
            let t = -60.0 + 0.1 * i as f64;
            file.push_str(&format!("{t:.2},{:.2},{:.5}\n", t + 0.5, 0.002 * t));
        }
        let body = multipart(Some(&session.csrf), &[("heating_rate_c_min", "2"), ("notes", "two sensors")], "amb.csv", file.as_bytes());
        let r = upload(&app, &session, fid, body).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
        assert!(r.body.contains("Reference temperature") && r.body.contains("name=\"temperature_column\""), "a preview and a choice");
        assert!(r.body.contains("two sensors") && r.body.contains("value=\"2\""), "typed fields are kept");
        assert_eq!(app.store.count_traces().await.unwrap(), 0, "nothing stored until chosen");
        let body = multipart(Some(&session.csrf), &[("temperature_column", "1"), ("heat_flow_column", "2")], "amb.csv", file.as_bytes());
        let r = upload(&app, &session, fid, body).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        let tid: i64 = r.location.unwrap().rsplit('/').next().unwrap().parse().unwrap();
        let data = app.store.trace_data(tid).await.unwrap();
        assert!((data.temperature_c[0] - (-59.5)).abs() < 1e-9, "the chosen column is the temperature");
    }
}

#[tokio::test]
async fn an_upload_over_its_limit_is_refused_with_that_limit_named() {
    let app = TestApp::sqlite().await;
    let fid = new_formulation(&app, "TR-BIG").await;
    let limit = glasspoint::domain::traces::MAX_TRACE_BYTES;
    let req = Request::post(format!(
        "/api/v1/formulations/{fid}/traces?file_name=big.csv"
    ))
    .header(header::CONTENT_TYPE, "application/octet-stream")
    .header(header::CONTENT_LENGTH, (limit + 1).to_string())
    .body(Body::from(vec![b'1'; limit + 1]))
    .unwrap();
    let r = app.client(Some(&app.admin)).request(req).await;
    assert_eq!(r.status, StatusCode::PAYLOAD_TOO_LARGE);
    assert!(
        r.json()["error"]
            .as_str()
            .unwrap()
            .contains(&limit.to_string()),
        "{}",
        r.body
    );
    // Elsewhere the general limit still holds.
    let r = app
        .post_json(
            "/api/v1/formulations",
            &serde_json::json!({"code": "x".repeat(300_000)}),
        )
        .await;
    assert_eq!(r.status, StatusCode::PAYLOAD_TOO_LARGE);
    assert_eq!(app.store.count_traces().await.unwrap(), 0);
    app.cleanup().await;
}

#[tokio::test]
async fn a_trace_longer_than_a_chart_series_is_drawn_as_its_envelope() {
    let app = TestApp::sqlite().await;
    let fid = new_formulation(&app, "TR-LONG").await;
    // 250 001 rows: more than one chart series may carry (200 000).
    let draft = glasspoint::domain::traces::TraceForm {
        exo: "down".into(),
        ..Default::default()
    }
    .parse(tanh_trace(250_000))
    .unwrap();
    let tid = app
        .store
        .create_trace(&glasspoint::auth::Actor::system(), fid, &draft)
        .await
        .unwrap();
    let chart = app.get(&format!("/traces/{tid}/chart.svg")).await;
    assert_eq!(chart.status, StatusCode::OK, "{}", chart.body);
    assert!(chart.body.contains("<svg") && chart.body.contains("Tg midpoint"));
    app.cleanup().await;
}
