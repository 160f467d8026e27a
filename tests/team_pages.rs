//! Team-record pages as people use them: the first run, the demo team, the formulation
//! page's account of what its limits rest on, and the per-route body limits.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::domain::{Entity, Role};
use glasspoint::{AppState, Config, Store};
use tower::ServiceExt;

use crate::helpers::Reply;
use crate::on_both_backends;

#[tokio::test]
async fn a_database_without_accounts_explains_how_to_create_the_first_administrator() {
    let dir = tempfile::tempdir().unwrap();
    let store = Store::connect(&format!(
        "sqlite://{}",
        dir.path().join("fresh.db").display()
    ))
    .await
    .unwrap();
    store.migrate().await.unwrap();
    let router = glasspoint::router(AppState::new(store.clone(), Config::for_database("test")));
    let page = Reply::read(
        router
            .clone()
            .oneshot(Request::get("/formulations").body(Body::empty()).unwrap())
            .await
            .unwrap(),
    )
    .await;
    assert_eq!(page.status, StatusCode::SERVICE_UNAVAILABLE);
    assert!(
        page.body.contains("glasspoint user add NAME --role admin"),
        "{}",
        page.body
    );
    let write = Reply::read(
        router
            .clone()
            .oneshot(
                Request::post("/api/v1/formulations")
                    .header(header::CONTENT_TYPE, "application/json")
                    .body(Body::from("{}"))
                    .unwrap(),
            )
            .await
            .unwrap(),
    )
    .await;
    assert_eq!(
        write.status,
        StatusCode::SERVICE_UNAVAILABLE,
        "writes are refused"
    );
    assert!(write.json()["error"]
        .as_str()
        .unwrap()
        .contains("first administrator"));
    let health = Reply::read(
        router
            .oneshot(Request::get("/healthz").body(Body::empty()).unwrap())
            .await
            .unwrap(),
    )
    .await;
    assert_eq!(
        health.status,
        StatusCode::OK,
        "the health check still answers"
    );
    store.close().await;
}

on_both_backends! {
    async fn the_demo_team_has_three_roles_and_reviewed_results_with_history(app) {
        let report = app.store.seed_demo().await.unwrap();
        let roles: Vec<Role> = report.new_users.iter().map(|u| u.1).collect();
        assert_eq!(roles, vec![Role::Scientist, Role::Reviewer, Role::Admin]);
        assert!(report.new_users.iter().all(|u| u.2.len() >= 10), "one-time passwords are long enough");
        let signatures = app.store.signatures_of_kind(Entity::Measurement).await.unwrap();
        assert!(signatures.len() >= 40, "most demo results are reviewed: {}", signatures.len());
        assert!(signatures.iter().all(|s| s.full_name == "Tobias Okafor"), "by the demo reviewer, not their author");
        let approved = app.store.signatures_of_kind(Entity::Formulation).await.unwrap();
        assert!(!approved.is_empty(), "approved demo formulations carry the approval signature");
        let queue = app.get("/review").await;
        assert_eq!(queue.status, StatusCode::OK);
        assert!(queue.body.contains("Results not yet reviewed") && queue.body.contains("/sign\">Review</a>"), "some results wait for review");
        // The first formulation's first result was corrected after review: version 2 with
        // its reason, the signature staying with version 1.
        let first = app.store.formulation_id_by_code("LV-001").await.unwrap().unwrap();
        let m = app.store.measurements_of(first).await.unwrap().into_iter().find(|m| m.version == 2).expect("a corrected result");
        let history = app.get(&format!("/records/measurement/{}/history", m.id)).await.body;
        assert!(history.contains("Baseline re-integrated after the calibration check"), "the reason is in the history");
        assert!(history.contains("an earlier version: the record changed since"), "{history}");
    }
}

on_both_backends! {
    async fn the_formulation_page_says_which_results_its_limits_rest_on(app) {
        app.load_demo().await;
        let id = app.store.formulation_id_by_code("LV-001").await.unwrap().unwrap();
        let page = app.get(&format!("/formulations/{id}")).await.body;
        assert!(page.contains("Results the limits rest on"));
        assert!(page.contains("reviewed by Tobias Okafor at"), "reviewed results name their reviewer");
        assert!(page.contains("not yet reviewed (the team allows it)"), "the corrected result waits for review again");
        // The team may choose to rest limits on reviewed results only.
        let settings = app.store.team_settings().await.unwrap();
        let admin = app.store.get_user(app.admin.user_id).await.unwrap().actor(true);
        app.store.update_team_settings(&admin, settings.version, Some(3.0), false).await.unwrap();
        let page = app.get(&format!("/formulations/{id}")).await.body;
        assert!(page.contains("left out by the team&#39;s setting") || page.contains("left out by the team's setting"), "{page}");
        assert!(page.contains("cycle checks use the team margin of 3 °C"), "the team margin is used");
        assert!(page.contains("name=\"margin_c\" value=\"3\""), "and is the page's default");
    }
}

on_both_backends! {
    async fn sign_in_forms_take_small_bodies_only(app) {
        let big = "x".repeat(64 * 1024);
        let r = app.client(None).post_form("/login", &[("username", "admin"), ("password", &big)]).await;
        assert_eq!(r.status, StatusCode::PAYLOAD_TOO_LARGE, "{}", r.body);
    }
}

on_both_backends! {
    async fn signed_in_pages_are_not_kept_by_the_browser(app) {
        let page = app.get("/formulations").await;
        assert_eq!(page.headers.get("cache-control").and_then(|v| v.to_str().ok()), Some("no-store"));
        let login = app.client(None).get("/login").await;
        assert!(login.headers.get("cache-control").is_none(), "the public sign-in page may be cached");
    }
}
