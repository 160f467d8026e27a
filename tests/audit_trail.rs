//! The audit trail: each kind of change leaves exactly its events with the values before and
//! after, a failed change leaves none, and a trail altered in the database is found.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::domain::Role;
use glasspoint::storage::{AuditEvent, AuditFilter};
use glasspoint::Store;
use serde_json::{json, Value};

use crate::helpers::{TestApp, TEST_PASSWORD};
use crate::on_both_backends;

pub async fn all_events(store: &Store) -> Vec<AuditEvent> {
    store
        .audit_events(&AuditFilter::default(), 1, 100_000)
        .await
        .unwrap()
        .items
}

/// The events appended by `change`, checking that nothing else appeared.
pub async fn events_of<F: std::future::Future<Output = ()>>(
    app: &TestApp,
    change: F,
) -> Vec<AuditEvent> {
    let before = all_events(&app.store).await;
    change.await;
    let after = all_events(&app.store).await;
    let keys = |v: &[AuditEvent]| {
        v.iter()
            .map(|e| (e.seq, e.hash.clone()))
            .collect::<Vec<_>>()
    };
    assert_eq!(
        keys(&after[..before.len()]),
        keys(&before),
        "earlier events are untouched"
    );
    after[before.len()..].to_vec()
}

fn json_of(text: &Option<String>) -> Value {
    text.as_deref()
        .map(|t| serde_json::from_str(t).unwrap())
        .unwrap_or(Value::Null)
}

fn only(events: Vec<AuditEvent>, what: &str) -> AuditEvent {
    assert_eq!(
        events.len(),
        1,
        "{what} leaves exactly one event: {events:?}"
    );
    events.into_iter().next().unwrap()
}

/// Runs a statement as someone with direct database access.
pub async fn exec(store: &Store, sql: &str) -> Result<u64, sqlx::Error> {
    match store {
        Store::Sqlite(pool) => sqlx::query(sql)
            .execute(pool)
            .await
            .map(|r| r.rows_affected()),
        Store::Postgres(pool) => sqlx::query(sql)
            .execute(pool)
            .await
            .map(|r| r.rows_affected()),
    }
}

/// Drops the triggers that keep audit events append-only.
pub async fn drop_audit_triggers(store: &Store) {
    match store {
        Store::Sqlite(_) => {
            exec(store, "DROP TRIGGER audit_events_no_update")
                .await
                .unwrap();
            exec(store, "DROP TRIGGER audit_events_no_delete")
                .await
                .unwrap();
        }
        Store::Postgres(_) => {
            exec(store, "DROP TRIGGER audit_events_no_update ON audit_events")
                .await
                .unwrap();
        }
    }
}

on_both_backends! {
    async fn record_changes_leave_one_event_each_with_the_values_before_and_after(app) {
        let created = events_of(&app, async {
            let r = app.post_json("/api/v1/formulations", &json!({"code": "AUD-1", "name": "First name", "notes": "n1"})).await;
            assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
        }).await;
        let e = only(created, "a create");
        let id = e.entity_id.unwrap();
        assert_eq!((e.action.as_str(), e.entity.as_str(), e.version, e.username.as_str()), ("create", "formulation", Some(1), "admin"));
        assert_eq!(e.user_id, Some(app.admin.user_id));
        assert!(e.before_json.is_none());
        assert_eq!(json_of(&e.after_json)["name"], "First name");
        assert_eq!(json_of(&e.after_json)["code"], "AUD-1");

        let updated = events_of(&app, async {
            let r = app.put_json(&format!("/api/v1/formulations/{id}"), &json!({"code": "AUD-1", "name": "Second name", "notes": "n1", "version": 1})).await;
            assert_eq!(r.status, StatusCode::OK, "{}", r.body);
        }).await;
        let e = only(updated, "an update");
        assert_eq!((e.action.as_str(), e.entity_id, e.version, e.username.as_str()), ("update", Some(id), Some(2), "admin"));
        assert_eq!(json_of(&e.before_json)["name"], "First name");
        assert_eq!(json_of(&e.after_json)["name"], "Second name");
        assert_eq!(e.changed_fields(), vec!["name".to_string()]);

        let archived = events_of(&app, async {
            let r = app.post_form(&format!("/formulations/{id}/archive"), &[]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(archived, "an archive");
        assert_eq!((e.action.as_str(), e.version), ("archive", Some(3)));
        assert_eq!(json_of(&e.before_json)["status"], "draft");
        assert_eq!(json_of(&e.after_json)["status"], "archived");

        let restored = events_of(&app, async {
            let r = app.post_form(&format!("/formulations/{id}/restore"), &[]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(restored, "a restore");
        assert_eq!((e.action.as_str(), e.version), ("restore", Some(4)));
        assert_eq!(json_of(&e.before_json)["status"], "archived");
        assert_eq!(json_of(&e.after_json)["status"], "draft");

        // The API names the record's events and who made them.
        let api = app.get(&format!("/api/v1/audit?entity=formulation&id={id}")).await;
        assert_eq!(api.status, StatusCode::OK, "{}", api.body);
        let items = api.json()["items"].as_array().unwrap().clone();
        let actions: Vec<&str> = items.iter().map(|i| i["action"].as_str().unwrap()).collect();
        assert_eq!(actions, ["create", "update", "archive", "restore"]);
        assert!(items.iter().all(|i| i["username"] == "admin" && i["entity_id"] == id));
        assert_eq!(items[1]["version"], 2);
        assert!(items[1]["before_json"].as_str().unwrap().contains("First name"));
        assert!(items.iter().all(|i| i.get("hash").is_none()), "hashes stay inside");
    }
}

on_both_backends! {
    async fn a_refused_change_leaves_no_event_and_no_change(app) {
        let r = app.post_json("/api/v1/formulations", &json!({"code": "AUD-2", "name": "Kept"})).await;
        let id = r.json()["id"].as_i64().unwrap();
        app.post_json("/api/v1/formulations", &json!({"code": "AUD-3", "name": "Other"})).await;
        let before = app.get(&format!("/api/v1/formulations/{id}")).await.json();
        let none = events_of(&app, async {
            let invalid = app.put_json(&format!("/api/v1/formulations/{id}"), &json!({"code": "AUD-2", "name": "Changed", "ph": 15, "version": 1})).await;
            assert_eq!(invalid.status, StatusCode::UNPROCESSABLE_ENTITY);
            assert_eq!(invalid.json()["field"], "ph");
            let stale = app.put_json(&format!("/api/v1/formulations/{id}"), &json!({"code": "AUD-2", "name": "Changed", "version": 7})).await;
            assert_eq!(stale.status, StatusCode::CONFLICT);
            assert_eq!(stale.json()["field"], "version");
            let clash = app.put_json(&format!("/api/v1/formulations/{id}"), &json!({"code": "aud-3", "name": "Changed", "version": 1})).await;
            assert_eq!(clash.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", clash.body);
            assert_eq!(clash.json()["field"], "code");
            let dup = app.post_json("/api/v1/materials", &json!({"name": "Sucrose", "role": "other", "freezing_behaviour": "amorphous"})).await;
            assert_eq!(dup.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", dup.body);
            assert_eq!(dup.json()["field"], "name");
            let form = app.post_form("/materials", &[("name", ""), ("role", "other"), ("freezing_behaviour", "amorphous")]).await;
            assert_eq!(form.status, StatusCode::UNPROCESSABLE_ENTITY);
            let user = app.post_form("/admin/users", &[("username", "x"), ("full_name", "X"), ("role", "reader"), ("password", TEST_PASSWORD)]).await;
            assert_eq!(user.status, StatusCode::UNPROCESSABLE_ENTITY, "a one-letter name is refused");
            let settings = app.post_form("/admin/settings", &[("margin_c", "-4"), ("version", "0")]).await;
            assert_eq!(settings.status, StatusCode::UNPROCESSABLE_ENTITY);
        }).await;
        assert!(none.is_empty(), "refused changes leave no event: {none:?}");
        assert_eq!(app.get(&format!("/api/v1/formulations/{id}")).await.json(), before);
        assert!(app.store.user_by_name("x").await.unwrap().is_none());
    }
}

fn cookie_from(set_cookie: &str) -> String {
    set_cookie
        .split(';')
        .next()
        .and_then(|kv| kv.trim().strip_prefix("gp_session="))
        .unwrap()
        .to_string()
}

async fn post_login(app: &TestApp, username: &str, password: &str) -> crate::helpers::Reply {
    let body =
        serde_urlencoded::to_string([("username", username), ("password", password)]).unwrap();
    app.raw(
        Request::post("/login")
            .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
            .body(Body::from(body))
            .unwrap(),
    )
    .await
}

on_both_backends! {
    async fn sign_in_refusal_and_sign_out_are_each_recorded(app) {
        let user = app.user("aud-person", Role::Scientist).await;
        let failed = events_of(&app, async {
            let r = post_login(&app, "aud-person", "not the password").await;
            assert_eq!(r.status, StatusCode::UNAUTHORIZED);
        }).await;
        let e = only(failed, "a refused sign-in");
        assert_eq!((e.action.as_str(), e.entity.as_str(), e.entity_id, e.username.as_str()), ("login_failed", "user", Some(user.user_id), "aud-person"));
        assert_eq!(e.user_id, None, "nobody was signed in");

        let mut cookie = String::new();
        let login = events_of(&app, async {
            let r = post_login(&app, "aud-person", TEST_PASSWORD).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
            cookie = cookie_from(r.headers.get(header::SET_COOKIE).unwrap().to_str().unwrap());
        }).await;
        let e = only(login, "a sign-in");
        assert_eq!((e.action.as_str(), e.entity_id, e.user_id, e.username.as_str()), ("login", Some(user.user_id), Some(user.user_id), "aud-person"));

        let info = app.store.session(&cookie, glasspoint::Config::for_database("t").session_limits()).await.unwrap().unwrap();
        let session = crate::helpers::TestSession { user_id: user.user_id, username: user.username.clone(), cookie, csrf: info.csrf_token };
        let logout = events_of(&app, async {
            let r = app.client(Some(&session)).post_form("/logout", &[]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(logout, "a sign-out");
        assert_eq!((e.action.as_str(), e.entity_id, e.username.as_str()), ("logout", Some(user.user_id), "aud-person"));
    }
}

on_both_backends! {
    async fn account_token_and_settings_changes_are_each_recorded(app) {
        let added = events_of(&app, async {
            let r = app.post_form("/admin/users", &[("username", "aud-new"), ("full_name", "Ada New"), ("role", "scientist"), ("password", TEST_PASSWORD)]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(added, "adding an account");
        let uid = e.entity_id.unwrap();
        assert_eq!((e.action.as_str(), e.entity.as_str(), e.version, e.username.as_str()), ("create", "user", Some(1), "admin"));
        let after = json_of(&e.after_json);
        assert_eq!((after["username"].as_str(), after["role"].as_str()), (Some("aud-new"), Some("scientist")));
        assert!(after.get("password_hash").is_none() && !e.after_json.as_deref().unwrap().contains("argon2"), "no hash in the trail");

        let issued = events_of(&app, async {
            let r = app.post_form(&format!("/admin/users/{uid}/tokens"), &[("scope", "read"), ("name", "nightly export")]).await;
            assert_eq!(r.status, StatusCode::OK, "{}", r.body);
            assert!(r.body.contains("gpt_"), "the token is shown once");
        }).await;
        let e = only(issued, "issuing a token");
        assert_eq!((e.action.as_str(), e.entity_id, e.version), ("token_create", Some(uid), None));
        let token_id = json_of(&e.after_json)["token_id"].as_i64().unwrap();
        assert_eq!(json_of(&e.after_json)["name"], "nightly export");
        assert_eq!(json_of(&e.after_json)["scope"], "read");

        let revoked = events_of(&app, async {
            let r = app.post_form(&format!("/admin/tokens/{token_id}/revoke"), &[]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(revoked, "revoking a token");
        assert_eq!((e.action.as_str(), e.entity_id), ("token_revoke", Some(uid)));
        assert_eq!(json_of(&e.before_json)["token_id"], token_id);
        assert!(e.after_json.is_none());

        let changed = events_of(&app, async {
            let r = app.post_form(&format!("/admin/users/{uid}/password"), &[("password", "another long password")]).await;
            assert_eq!(r.status, StatusCode::OK, "{}", r.body);
        }).await;
        let e = only(changed, "a password change");
        assert_eq!((e.action.as_str(), e.entity_id, e.version), ("password_change", Some(uid), Some(2)));
        assert!(!e.before_json.as_deref().unwrap_or("").contains("argon2") && !e.after_json.as_deref().unwrap_or("").contains("argon2"));

        let disabled = events_of(&app, async {
            let r = app.post_form(&format!("/admin/users/{uid}"), &[("account", "disable")]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(disabled, "disabling an account");
        assert_eq!((e.action.as_str(), e.entity_id, e.version), ("disable", Some(uid), Some(3)));
        assert_eq!(json_of(&e.before_json)["disabled"], false);
        assert_eq!(json_of(&e.after_json)["disabled"], true);

        let first = events_of(&app, async {
            let v = app.store.team_settings().await.unwrap().version.to_string();
            let r = app.post_form("/admin/settings", &[("margin_c", "3"), ("version", &v)]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(first, "a settings change");
        assert_eq!(e.entity, "settings");
        assert_eq!(json_of(&e.after_json)["margin_c"], 3.0);
        let second = events_of(&app, async {
            let v = app.store.team_settings().await.unwrap().version.to_string();
            let r = app.post_form("/admin/settings", &[("margin_c", "4.5"), ("allow_unreviewed", "on"), ("version", &v)]).await;
            assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        }).await;
        let e = only(second, "a second settings change");
        assert_eq!((e.action.as_str(), e.entity.as_str(), e.username.as_str()), ("update", "settings", "admin"));
        assert_eq!(json_of(&e.before_json)["margin_c"], 3.0);
        assert_eq!(json_of(&e.after_json)["margin_c"], 4.5);
        assert!(app.store.verify_audit().await.unwrap().intact);
    }
}

/// A small trail of several events to tamper with; returns the events.
async fn some_history(app: &TestApp) -> Vec<AuditEvent> {
    for i in 0..4 {
        let r = app
            .post_json(
                "/api/v1/formulations",
                &json!({"code": format!("TAMP-{i}"), "name": format!("n{i}")}),
            )
            .await;
        assert_eq!(r.status, StatusCode::CREATED);
    }
    let check = app.store.verify_audit().await.unwrap();
    assert!(check.intact, "{}", check.message);
    let events = all_events(&app.store).await;
    assert!(events.len() >= 5);
    assert_eq!(check.events, events.len() as i64);
    events
}

on_both_backends! {
    async fn the_database_refuses_to_update_or_delete_audit_events(app) {
        let events = some_history(&app).await;
        let id = events[2].id;
        let update = exec(&app.store, &format!("UPDATE audit_events SET reason = 'forged' WHERE id = {id}")).await;
        assert!(update.is_err(), "the update trigger refuses");
        assert!(format!("{}", update.unwrap_err()).contains("append-only"));
        let delete = exec(&app.store, &format!("DELETE FROM audit_events WHERE id = {id}")).await;
        assert!(delete.is_err(), "the delete trigger refuses");
        assert_eq!(all_events(&app.store).await.len(), events.len());
        assert!(app.store.verify_audit().await.unwrap().intact);
    }
}

on_both_backends! {
    async fn an_edited_event_is_found_by_the_check(app) {
        let events = some_history(&app).await;
        drop_audit_triggers(&app.store).await;
        let victim = &events[3];
        let forged = victim.after_json.as_deref().unwrap().replace("\"n", "\"forged n");
        assert_ne!(forged, victim.after_json.as_deref().unwrap());
        let sql = format!("UPDATE audit_events SET after_json = '{}' WHERE id = {}", forged.replace('\'', "''"), victim.id);
        assert_eq!(exec(&app.store, &sql).await.unwrap(), 1);
        let check = app.store.verify_audit().await.unwrap();
        assert!(!check.intact);
        assert_eq!(check.first_bad_event, Some(victim.id), "{}", check.message);
        assert!(check.message.contains("altered"), "{}", check.message);
        let page = app.get("/admin/audit-check").await;
        assert_eq!(page.status, StatusCode::CONFLICT);
    }
}

on_both_backends! {
    async fn an_event_deleted_from_the_middle_is_found_by_the_check(app) {
        let events = some_history(&app).await;
        drop_audit_triggers(&app.store).await;
        let gone = &events[2];
        assert_eq!(exec(&app.store, &format!("DELETE FROM audit_events WHERE id = {}", gone.id)).await.unwrap(), 1);
        let check = app.store.verify_audit().await.unwrap();
        assert!(!check.intact);
        assert_eq!(check.first_bad_event, Some(events[3].id), "the event after the gap: {}", check.message);
        assert_eq!(check.events, 2);
    }
}

on_both_backends! {
    async fn the_last_event_deleted_is_found_by_the_check(app) {
        let events = some_history(&app).await;
        drop_audit_triggers(&app.store).await;
        let last = events.last().unwrap();
        assert_eq!(exec(&app.store, &format!("DELETE FROM audit_events WHERE id = {}", last.id)).await.unwrap(), 1);
        let check = app.store.verify_audit().await.unwrap();
        assert!(!check.intact, "{}", check.message);
        assert_eq!(check.first_bad_event, None, "no event is wrong, the end is missing");
        assert!(check.message.contains("removed from the end"), "{}", check.message);
    }
}

on_both_backends! {
    async fn two_events_with_their_contents_swapped_are_found_by_the_check(app) {
        let events = some_history(&app).await;
        drop_audit_triggers(&app.store).await;
        let (a, b) = (&events[events.len() - 3], &events[events.len() - 2]);
        let set = |target: &AuditEvent, from: &AuditEvent| {
            format!(
                "UPDATE audit_events SET entity_id = {}, after_json = '{}' WHERE id = {}",
                from.entity_id.unwrap(),
                from.after_json.as_deref().unwrap().replace('\'', "''"),
                target.id
            )
        };
        exec(&app.store, &set(a, b)).await.unwrap();
        exec(&app.store, &set(b, a)).await.unwrap();
        let check = app.store.verify_audit().await.unwrap();
        assert!(!check.intact);
        assert_eq!(check.first_bad_event, Some(a.id), "{}", check.message);
    }
}

fn binary() -> &'static str {
    env!("CARGO_BIN_EXE_glasspoint")
}

#[tokio::test]
async fn audit_verify_exits_0_for_an_intact_trail_and_1_after_a_hand_edit() {
    let dir = tempfile::tempdir().unwrap();
    let url = format!("sqlite://{}", dir.path().join("verify.db").display());
    let store = Store::connect(&url).await.unwrap();
    store.migrate().await.unwrap();
    crate::helpers::sign_in(&store, "verifier", Role::Admin).await;
    store.seed_demo().await.unwrap();
    let verify = || {
        std::process::Command::new(binary())
            .args(["audit", "verify", "--database", &url])
            .output()
            .unwrap()
    };
    let ok = verify();
    assert_eq!(
        ok.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&ok.stdout)
    );
    assert!(String::from_utf8_lossy(&ok.stdout).contains("intact"));
    drop_audit_triggers(&store).await;
    exec(
        &store,
        "UPDATE audit_events SET username = 'someone else' WHERE seq = 2",
    )
    .await
    .unwrap();
    store.close().await;
    let bad = verify();
    assert_eq!(
        bad.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&bad.stdout)
    );
    assert!(String::from_utf8_lossy(&bad.stdout).contains("ALTERED"));
}

/// Every `href="/…"` in a page.
fn links(body: &str) -> Vec<String> {
    body.split("href=\"")
        .skip(1)
        .filter_map(|rest| rest.split('"').next())
        .filter(|href| href.starts_with('/') && !href.starts_with("/static/"))
        .map(|href| href.replace("&amp;", "&").replace("&#38;", "&"))
        .collect()
}

on_both_backends! {
    async fn every_link_on_history_and_signing_pages_leads_somewhere(app) {
        let f = app.post_json("/api/v1/formulations", &json!({"code": "LINK-1", "name": "linked"})).await.json();
        let m = app.post_json("/api/v1/measurements", &json!({
            "formulation_id": f["id"], "kind": "tc_onset", "value_c": -30.0, "method": "fdm",
            "analyst": "L. Ink", "measured_on": "2026-02-02"
        })).await;
        assert_eq!(m.status, StatusCode::CREATED, "{}", m.body);
        let c = app.store.list_containers().await.unwrap()[0].id;
        let pages = [
            format!("/records/measurement/{}/history", m.json()["id"]),
            format!("/records/measurement/{}/sign", m.json()["id"]),
            format!("/records/formulation/{}/history", f["id"]),
            format!("/records/container/{c}/history"),
            "/audit".to_string(),
        ];
        for page in pages {
            let r = app.get(&page).await;
            assert_eq!(r.status, StatusCode::OK, "{page}: {}", r.body);
            for href in links(&r.body) {
                let target = app.get(&href).await;
                assert_ne!(target.status, StatusCode::NOT_FOUND, "{page} links to {href}, which is not found");
            }
        }
    }
}
