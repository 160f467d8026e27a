//! 32 writers at once through the API and the forms: no server error, no silently lost
//! edit, every acknowledged create kept, and one audit event per acknowledged change.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::auth::Actor;
use glasspoint::domain::TokenScope;
use serde_json::json;
use tower::ServiceExt;

use crate::audit_trail::all_events;
use crate::form_html::post_form_in;
use crate::helpers::Reply;
use crate::on_both_backends;

/// What one writer did and what it was told.
#[derive(Debug)]
enum Job {
    ApiCreate(String),
    FormCreate(String),
    SameRecordApi,
    SameRecordForm,
    OtherRecordForm(i64),
}

on_both_backends! {
    async fn thirty_two_concurrent_writers_lose_nothing_and_leave_a_complete_trail(app) {
        // Records to edit, each at version 1.
        let mut ids = Vec::new();
        for i in 0..6 {
            let r = app.post_json("/api/v1/formulations", &json!({"code": format!("CC-{i}"), "name": format!("start {i}")})).await;
            assert_eq!(r.status, StatusCode::CREATED);
            ids.push(r.json()["id"].as_i64().unwrap());
        }
        let (same_api, same_form) = (ids[0], ids[1]);
        let token = app.store.create_token(&Actor::system(), app.admin.user_id, TokenScope::Write, "load").await.unwrap();
        let form_of = |id: i64| {
            let app = &app;
            async move { post_form_in(&app.get(&format!("/formulations/{id}/edit")).await.body) }
        };
        let same_form_fields = form_of(same_form).await;
        let mut other_forms = Vec::new();
        for id in &ids[2..6] {
            other_forms.push((*id, form_of(*id).await));
        }
        let events_before = all_events(&app.store).await.len();

        let mut tasks = Vec::new();
        for n in 0..32usize {
            let router = app.router.clone();
            let cookie = format!("gp_session={}", app.admin.cookie);
            let csrf = app.admin.csrf.clone();
            let bearer = format!("Bearer {token}");
            let (job, req) = match n % 8 {
                0 | 1 => {
                    let code = format!("NEW-{n}");
                    let body = json!({"code": code, "name": format!("created by writer {n}")}).to_string();
                    let req = Request::post("/api/v1/formulations")
                        .header(header::CONTENT_TYPE, "application/json")
                        .header(header::AUTHORIZATION, bearer)
                        .body(Body::from(body)).unwrap();
                    (Job::ApiCreate(code), req)
                }
                2 | 3 => {
                    let name = format!("Material of writer {n}");
                    let body = serde_urlencoded::to_string([("name", name.as_str()), ("role", "other"), ("freezing_behaviour", "amorphous"), ("csrf_token", csrf.as_str())]).unwrap();
                    let req = Request::post("/materials")
                        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                        .header(header::COOKIE, cookie)
                        .body(Body::from(body)).unwrap();
                    (Job::FormCreate(name), req)
                }
                4 | 5 => {
                    let body = json!({"code": "CC-0", "name": format!("edited by writer {n}"), "version": 1}).to_string();
                    let req = Request::put(format!("/api/v1/formulations/{same_api}"))
                        .header(header::CONTENT_TYPE, "application/json")
                        .header(header::COOKIE, cookie)
                        .header("x-csrf-token", csrf)
                        .body(Body::from(body)).unwrap();
                    (Job::SameRecordApi, req)
                }
                6 => {
                    let mut fields = same_form_fields.fields.clone();
                    fields.retain(|(k, _)| k != "name");
                    fields.push(("name".into(), format!("form edit by writer {n}")));
                    let req = Request::post(same_form_fields.action.clone())
                        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                        .header(header::COOKIE, cookie)
                        .header("x-csrf-token", csrf)
                        .body(Body::from(serde_urlencoded::to_string(&fields).unwrap())).unwrap();
                    (Job::SameRecordForm, req)
                }
                _ => {
                    let (id, form) = &other_forms[n / 8];
                    let mut fields = form.fields.clone();
                    fields.retain(|(k, _)| k != "name");
                    fields.push(("name".into(), format!("own record of writer {n}")));
                    let req = Request::post(form.action.clone())
                        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                        .header(header::COOKIE, cookie)
                        .header("x-csrf-token", csrf)
                        .body(Body::from(serde_urlencoded::to_string(&fields).unwrap())).unwrap();
                    (Job::OtherRecordForm(*id), req)
                }
            };
            tasks.push(tokio::spawn(async move {
                let reply = Reply::read(router.oneshot(req).await.unwrap()).await;
                (job, reply)
            }));
        }
        let mut results = Vec::new();
        for t in tasks {
            results.push(t.await.unwrap());
        }

        let mut acknowledged = 0;
        let (mut same_api_ok, mut same_form_ok) = (0, 0);
        for (job, r) in &results {
            assert!(!r.status.is_server_error(), "{job:?}: {} {}", r.status, r.body);
            let ok = matches!(r.status, StatusCode::OK | StatusCode::CREATED | StatusCode::SEE_OTHER);
            match job {
                Job::ApiCreate(code) => {
                    assert_eq!(r.status, StatusCode::CREATED, "{job:?}: {}", r.body);
                    assert!(app.store.formulation_id_by_code(code).await.unwrap().is_some(), "{code} is kept");
                }
                Job::FormCreate(name) => {
                    assert_eq!(r.status, StatusCode::SEE_OTHER, "{job:?}: {}", r.body);
                    assert!(app.store.list_materials().await.unwrap().iter().any(|m| &m.name == name), "{name} is kept");
                }
                Job::SameRecordApi => {
                    if ok {
                        same_api_ok += 1;
                    } else {
                        assert_eq!(r.status, StatusCode::CONFLICT, "{}", r.body);
                        assert_eq!(r.json()["field"], "version");
                        assert!(r.json()["error"].as_str().unwrap().contains("changed by"), "{}", r.body);
                    }
                }
                Job::SameRecordForm => {
                    if ok {
                        same_form_ok += 1;
                    } else {
                        assert!(r.status == StatusCode::CONFLICT || r.status == StatusCode::UNPROCESSABLE_ENTITY, "{}: {}", r.status, r.body);
                        assert!(r.body.contains("changed by"), "the stale form says what happened: {}", r.body);
                        assert!(r.body.contains("form edit by writer"), "the typed input is kept");
                    }
                }
                Job::OtherRecordForm(id) => {
                    assert_eq!(r.status, StatusCode::SEE_OTHER, "{job:?}: {}", r.body);
                    assert_eq!(r.location.as_deref(), Some(format!("/formulations/{id}").as_str()));
                }
            }
            if ok {
                acknowledged += 1;
            }
        }
        assert_eq!(same_api_ok, 1, "exactly one of the stale API edits wins");
        assert_eq!(same_form_ok, 1, "exactly one of the stale form edits wins");
        let winner = app.get(&format!("/api/v1/formulations/{same_api}")).await.json();
        assert_eq!(winner["version"], 2);
        assert!(winner["name"].as_str().unwrap().starts_with("edited by writer"));
        for (id, _) in &other_forms {
            let f = app.get(&format!("/api/v1/formulations/{id}")).await.json();
            assert!(f["name"].as_str().unwrap().starts_with("own record of writer"), "{f}");
        }

        let events = all_events(&app.store).await;
        assert_eq!(events.len() - events_before, acknowledged, "one event per acknowledged change");
        let new = &events[events_before..];
        assert_eq!(new.iter().filter(|e| e.action == "create").count(), 16);
        assert_eq!(new.iter().filter(|e| e.action == "update").count(), acknowledged - 16);
        let check = app.store.verify_audit().await.unwrap();
        assert!(check.intact, "{}", check.message);
    }
}
