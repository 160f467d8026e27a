//! Review and approval: who may sign, what a signature binds to, and what a signed record
//! asks of the next change.

use axum::http::StatusCode;
use glasspoint::domain::{Entity, Role};
use serde_json::{json, Value};

use crate::audit_trail::{all_events, events_of};
use crate::form_html::post_form_in;
use crate::helpers::{TestApp, TestSession, TEST_PASSWORD};
use crate::on_both_backends;

/// A result recorded by `author`, with its formulation; returns (measurement id, JSON).
async fn recorded_result(app: &TestApp, author: &TestSession, code: &str) -> (i64, Value) {
    let as_author = app.client(Some(author));
    let f = as_author
        .post_json(
            "/api/v1/formulations",
            &json!({"code": code, "name": "review subject"}),
        )
        .await;
    assert_eq!(f.status, StatusCode::CREATED, "{}", f.body);
    let m = as_author
        .post_json(
            "/api/v1/measurements",
            &json!({
                "formulation_id": f.json()["id"], "kind": "tg_prime", "value_c": -32.5, "method": "dsc",
                "heating_rate_c_min": 10.0, "analyst": "R. Author", "measured_on": "2026-03-02", "replicate": 1
            }),
        )
        .await;
    assert_eq!(m.status, StatusCode::CREATED, "{}", m.body);
    let m = m.json();
    (m["id"].as_i64().unwrap(), m)
}

fn sign_fields<'a>(
    version: &'a str,
    meaning: &'a str,
    reason: &'a str,
    password: &'a str,
) -> Vec<(&'a str, &'a str)> {
    vec![
        ("version", version),
        ("meaning", meaning),
        ("reason", reason),
        ("password", password),
    ]
}

on_both_backends! {
    async fn only_a_reviewer_who_did_not_write_a_result_may_sign_it(app) {
        let scientist = app.user("rv-scientist", Role::Scientist).await;
        let reader = app.user("rv-reader", Role::Reader).await;
        let author = app.user("rv-author", Role::Reviewer).await;
        let (id, _) = recorded_result(&app, &author, "RV-1").await;
        let path = format!("/records/measurement/{id}/sign");
        let before = all_events(&app.store).await.len();

        for (who, session) in [("reader", &reader), ("scientist", &scientist)] {
            let r = app.client(Some(session)).post_form(&path, &sign_fields("1", "reviewed", "", TEST_PASSWORD)).await;
            assert_eq!(r.status, StatusCode::FORBIDDEN, "a {who} cannot sign");
            let page = app.client(Some(session)).get(&path).await;
            assert_eq!(page.status, StatusCode::FORBIDDEN, "a {who} is not shown the signing form");
        }
        let own = app.client(Some(&author)).post_form(&path, &sign_fields("1", "reviewed", "", TEST_PASSWORD)).await;
        assert_eq!(own.status, StatusCode::FORBIDDEN, "{}", own.body);
        assert!(own.body.contains("someone else must sign"), "{}", own.body);
        assert!(app.store.signatures_of(Entity::Measurement, id).await.unwrap().is_empty());
        assert_eq!(all_events(&app.store).await.len(), before, "refused signatures leave no event");
        let queue = app.client(Some(&author)).get("/review").await;
        assert_eq!(queue.status, StatusCode::OK);
        assert!(queue.body.contains("R. Author"), "the result waits in the queue");
    }
}

on_both_backends! {
    async fn a_wrong_password_signs_nothing(app) {
        let author = app.user("rv-author2", Role::Scientist).await;
        let reviewer = app.user("rv-reviewer2", Role::Reviewer).await;
        let (id, _) = recorded_result(&app, &author, "RV-2").await;
        let none = events_of(&app, async {
            let r = app.client(Some(&reviewer)).post_form(&format!("/records/measurement/{id}/sign"), &sign_fields("1", "reviewed", "", "not my password")).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
            assert!(r.body.contains("not your password"), "{}", r.body);
        }).await;
        assert!(none.is_empty());
        assert!(app.store.signatures_of(Entity::Measurement, id).await.unwrap().is_empty());
        let m = app.get(&format!("/api/v1/measurements/{id}")).await.json();
        assert_eq!(m["review_state"], "recorded");
    }
}

on_both_backends! {
    async fn a_reviewed_result_changes_only_with_a_reason_and_keeps_its_signed_version(app) {
        let author = app.user("rv-author3", Role::Scientist).await;
        let reviewer = app.user("rv-reviewer3", Role::Reviewer).await;
        let (id, m) = recorded_result(&app, &author, "RV-3").await;
        let signed = events_of(&app, async {
            let r = app.client(Some(&reviewer)).post_form(&format!("/records/measurement/{id}/sign"), &sign_fields("1", "reviewed", "checked the trace", TEST_PASSWORD)).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        assert_eq!(signed.len(), 1);
        assert_eq!((signed[0].action.as_str(), signed[0].username.as_str(), signed[0].version), ("sign", "rv-reviewer3", Some(1)));
        let now = app.get(&format!("/api/v1/measurements/{id}")).await.json();
        assert_eq!(now["review_state"], "reviewed");
        let version = now["version"].as_i64().unwrap();

        let mut edit = m.clone();
        edit["value_c"] = json!(-31.0);
        edit["version"] = json!(version);
        let as_author = app.client(Some(&author));
        let none = events_of(&app, async {
            let r = as_author.put_json(&format!("/api/v1/measurements/{id}"), &edit).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
            assert_eq!(r.json()["field"], "reason");
        }).await;
        assert!(none.is_empty());
        assert_eq!(app.get(&format!("/api/v1/measurements/{id}")).await.json()["value_c"], -32.5);
        // The edit form says the same.
        let page = as_author.get(&format!("/measurements/{id}/edit")).await;
        let mut form = post_form_in(&page.body);
        form.fields.retain(|(k, _)| k != "value_c");
        form.fields.push(("value_c".into(), "-31".into()));
        let r = as_author.post_form(&form.action, &form.pairs()).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(r.body.contains("needs a reason"), "{}", r.body);

        edit["reason"] = json!("re-integrated the onset");
        let r = as_author.put_json(&format!("/api/v1/measurements/{id}"), &edit).await;
        assert_eq!(r.status, StatusCode::OK, "{}", r.body);
        let changed = r.json();
        assert_eq!(changed["version"], version + 1);
        assert_eq!(changed["review_state"], "recorded", "the change needs a new review");

        let old = app.get(&format!("/records/measurement/{id}/versions/{version}")).await;
        assert_eq!(old.status, StatusCode::OK);
        assert!(old.body.contains("-32.5"), "the signed version stays readable: {}", old.body);
        let new = app.get(&format!("/records/measurement/{id}/versions/{}", version + 1)).await;
        assert!(new.body.contains("-31"));
        let history = app.get(&format!("/records/measurement/{id}/history")).await;
        assert_eq!(history.status, StatusCode::OK);
        assert!(history.body.contains(&format!("version {version}, an earlier version")), "{}", history.body);
        assert!(history.body.contains("re-integrated the onset"));
        let sigs = app.store.signatures_of(Entity::Measurement, id).await.unwrap();
        assert_eq!(sigs.len(), 1);
        assert_eq!(sigs[0].version, version);
    }
}

on_both_backends! {
    async fn rejecting_needs_a_reason(app) {
        let author = app.user("rv-author4", Role::Scientist).await;
        let reviewer = app.user("rv-reviewer4", Role::Reviewer).await;
        let (id, _) = recorded_result(&app, &author, "RV-4").await;
        let path = format!("/records/measurement/{id}/sign");
        let r = app.client(Some(&reviewer)).post_form(&path, &sign_fields("1", "rejected", "  ", TEST_PASSWORD)).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(r.body.contains("say why the record is rejected"), "{}", r.body);
        assert!(app.store.signatures_of(Entity::Measurement, id).await.unwrap().is_empty());
        let r = app.client(Some(&reviewer)).post_form(&path, &sign_fields("1", "rejected", "baseline drift", TEST_PASSWORD)).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert_eq!(app.get(&format!("/api/v1/measurements/{id}")).await.json()["review_state"], "rejected");
    }
}

on_both_backends! {
    async fn an_approved_formulation_goes_back_to_characterized_when_edited_with_a_reason(app) {
        let author = app.user("rv-author5", Role::Scientist).await;
        let reviewer = app.user("rv-reviewer5", Role::Reviewer).await;
        let as_author = app.client(Some(&author));
        let f = as_author.post_json("/api/v1/formulations", &json!({"code": "RV-5", "name": "to approve", "status": "characterized"})).await;
        assert_eq!(f.status, StatusCode::CREATED, "{}", f.body);
        let id = f.json()["id"].as_i64().unwrap();
        let r = app.client(Some(&reviewer)).post_form(&format!("/records/formulation/{id}/sign"), &sign_fields("1", "approved", "", TEST_PASSWORD)).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert_eq!(app.get(&format!("/api/v1/formulations/{id}")).await.json()["status"], "approved");

        let page = as_author.get(&format!("/formulations/{id}/edit")).await;
        assert_eq!(page.status, StatusCode::OK);
        let mut form = post_form_in(&page.body);
        assert_eq!(form.get("status"), Some("approved"));
        form.fields.retain(|(k, _)| k != "name" && k != "reason");
        form.fields.push(("name".into(), "renamed after approval".into()));
        let none = events_of(&app, async {
            let r = as_author.post_form(&form.action, &form.pairs()).await;
            assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
            assert!(r.body.contains("needs a reason"), "{}", r.body);
        }).await;
        assert!(none.is_empty());
        assert_eq!(app.get(&format!("/api/v1/formulations/{id}")).await.json()["status"], "approved");

        form.fields.push(("reason".into(), "the name was misspelt".into()));
        let r = as_author.post_form(&form.action, &form.pairs()).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        let after = app.get(&format!("/api/v1/formulations/{id}")).await.json();
        assert_eq!(after["status"], "characterized");
        assert_eq!(after["name"], "renamed after approval");
        // A scientist cannot approve it again by the API either.
        let r = as_author.put_json(&format!("/api/v1/formulations/{id}"), &json!({"code": "RV-5", "name": "x", "status": "approved", "version": after["version"]})).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert_eq!(r.json()["field"], "status");
    }
}
