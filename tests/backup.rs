//! Backups: a consistent copy of a SQLite database taken while the app writes.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::Store;
use serde_json::{json, Value};
use tower::ServiceExt;

use crate::helpers::TestApp;
use crate::on_both_backends;

fn formulation(code: &str, sucrose: i64) -> Request<Body> {
    let body = json!({
        "code": code, "name": format!("Backup {code} ☃"), "notes": "line 1\nline 2",
        "components": [{"material_id": sucrose, "concentration": 66.6667, "unit": "mg/mL"}]
    });
    Request::post("/api/v1/formulations")
        .header(header::CONTENT_TYPE, "application/json")
        .body(Body::from(body.to_string()))
        .unwrap()
}

async fn all_formulations(store: &Store) -> Vec<Value> {
    let page = store
        .search_formulations(&Default::default(), Default::default(), 1, 1000)
        .await
        .unwrap();
    let mut all = Vec::new();
    for summary in page.items {
        let f = store.get_formulation(summary.id).await.unwrap();
        all.push(serde_json::to_value(f).unwrap());
    }
    all
}

#[tokio::test]
async fn a_backup_taken_while_the_app_writes_holds_the_same_records() {
    let app = TestApp::sqlite().await;
    let sucrose = app.material_id("Sucrose").await;
    for i in 0..5 {
        let r = app
            .request(formulation(&format!("BEFORE-{i}"), sucrose))
            .await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
    }
    let router = app.router.clone();
    let admin = app.admin.clone();
    let writer = tokio::spawn(async move {
        for i in 0..40 {
            let mut req = formulation(&format!("DURING-{i}"), sucrose);
            let headers = req.headers_mut();
            headers.insert(
                "cookie",
                format!("gp_session={}", admin.cookie).parse().unwrap(),
            );
            headers.insert("x-csrf-token", admin.csrf.parse().unwrap());
            let r = router.clone().oneshot(req).await.unwrap();
            assert_eq!(r.status(), StatusCode::CREATED);
        }
    });
    tokio::time::sleep(std::time::Duration::from_millis(20)).await;
    let dir = tempfile::tempdir().unwrap();
    let dest = dir.path().join("copy.db");
    let report = app
        .store
        .backup_to(&dest)
        .await
        .expect("backup while writing");
    assert!(report.bytes > 0);
    writer.await.unwrap();

    let copy = Store::connect(&format!("sqlite://{}", dest.display()))
        .await
        .unwrap();
    let copied = all_formulations(&copy).await;
    let live = all_formulations(&app.store).await;
    for i in 0..5 {
        assert!(
            copied.iter().any(|f| f["code"] == format!("BEFORE-{i}")),
            "BEFORE-{i} is in the copy"
        );
    }
    assert!(copied.len() >= 5 && copied.len() <= live.len());
    for f in &copied {
        let same = live
            .iter()
            .find(|l| l["id"] == f["id"])
            .expect("every copied record is a live one");
        assert_eq!(
            f, same,
            "the copy holds each record whole, components included"
        );
    }
    assert_eq!(
        copy.list_materials().await.unwrap().len(),
        app.store.list_materials().await.unwrap().len()
    );
    copy.close().await;
    app.cleanup().await;
}

on_both_backends! {
    async fn a_backup_never_overwrites_a_file_and_postgres_is_pointed_to_pg_dump(app) {
        let dir = tempfile::tempdir().unwrap();
        let dest = dir.path().join("existing.db");
        std::fs::write(&dest, b"keep me").unwrap();
        let err = app.store.backup_to(&dest).await.unwrap_err();
        let message = err.public_message();
        match app.store.backend_name() {
            "SQLite" => assert!(message.contains("already exists"), "{message}"),
            _ => assert!(message.contains("pg_dump") && message.contains("pg_restore"), "{message}"),
        }
        assert_eq!(std::fs::read(&dest).unwrap(), b"keep me", "the file is untouched");
    }
}
