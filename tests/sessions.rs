//! Sessions: stored in the database (so restarts and several instances share them), ended
//! by sign-out and by time, carried in a guarded cookie; failed sign-ins are slowed.

use std::net::SocketAddr;

use axum::body::Body;
use axum::extract::ConnectInfo;
use axum::http::{header, Request, StatusCode};
use glasspoint::domain::Role;
use glasspoint::{AppState, Config, Store};
use time::OffsetDateTime;
use tower::ServiceExt;

use crate::helpers::{Reply, TEST_PASSWORD};
use crate::on_both_backends;

fn login_request(
    username: &str,
    password: &str,
    from: &str,
    cookie: Option<&str>,
) -> Request<Body> {
    let body = serde_urlencoded::to_string([
        ("username", username),
        ("password", password),
        ("next", "/materials"),
    ])
    .unwrap();
    let mut b =
        Request::post("/login").header(header::CONTENT_TYPE, "application/x-www-form-urlencoded");
    if let Some(c) = cookie {
        b = b.header(header::COOKIE, format!("gp_session={c}"));
    }
    let mut req = b.body(Body::from(body)).unwrap();
    let addr: SocketAddr = format!("{from}:40000").parse().unwrap();
    req.extensions_mut().insert(ConnectInfo(addr));
    req
}

async fn send(router: &axum::Router, req: Request<Body>) -> Reply {
    Reply::read(router.clone().oneshot(req).await.unwrap()).await
}

fn set_cookie(r: &Reply) -> String {
    r.headers
        .get(header::SET_COOKIE)
        .expect("a cookie is set")
        .to_str()
        .unwrap()
        .to_string()
}

fn cookie_value(set_cookie: &str) -> String {
    set_cookie
        .split(';')
        .next()
        .and_then(|kv| kv.trim().strip_prefix("gp_session="))
        .unwrap()
        .to_string()
}

/// Signs in through the form; returns the cookie value.
async fn log_in(router: &axum::Router, username: &str, from: &str) -> String {
    let r = send(router, login_request(username, TEST_PASSWORD, from, None)).await;
    assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
    assert_eq!(r.location.as_deref(), Some("/materials"));
    cookie_value(&set_cookie(&r))
}

fn get_with(path: &str, cookie: &str) -> Request<Body> {
    Request::get(path)
        .header(header::COOKIE, format!("gp_session={cookie}"))
        .body(Body::empty())
        .unwrap()
}

async fn works(router: &axum::Router, cookie: &str) -> bool {
    let r = send(router, get_with("/materials", cookie)).await;
    match r.status {
        StatusCode::OK => true,
        StatusCode::SEE_OTHER => {
            assert!(r.location.unwrap().starts_with("/login?next="));
            false
        }
        other => panic!("unexpected {other}: {}", r.body),
    }
}

fn second_instance(store: &Store) -> axum::Router {
    glasspoint::router(AppState::new(store.clone(), Config::for_database("test")))
}

/// Another instance of the app over the same database, with its configuration changed.
fn configured(store: &Store, change: impl FnOnce(&mut Config)) -> axum::Router {
    let mut config = Config::for_database("test");
    change(&mut config);
    glasspoint::router(AppState::new(store.clone(), config))
}

async fn csrf_of(store: &Store, cookie: &str) -> String {
    store
        .session(cookie, Config::for_database("test").session_limits())
        .await
        .unwrap()
        .unwrap()
        .csrf_token
}

on_both_backends! {
    async fn a_session_survives_a_restart_and_is_shared_by_two_instances_until_sign_out(app) {
        app.user("ses-a", Role::Reader).await;
        let cookie = log_in(&app.router, "ses-a", "10.1.0.1").await;
        assert!(works(&app.router, &cookie).await);
        // A second instance: its own connection pool to the same database.
        let own_pool = Store::connect(&app.url).await.unwrap();
        let other = second_instance(&own_pool);
        assert!(works(&other, &cookie).await, "the other instance knows the session");
        let csrf = csrf_of(&app.store, &cookie).await;
        let out = send(&other, Request::post("/logout")
            .header(header::COOKIE, format!("gp_session={cookie}"))
            .header("x-csrf-token", csrf)
            .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
            .body(Body::empty()).unwrap()).await;
        assert_eq!(out.status, StatusCode::SEE_OTHER, "{}", out.body);
        assert!(set_cookie(&out).contains("Max-Age=0"), "the browser is told to forget the cookie");
        assert!(!works(&other, &cookie).await, "signed out here");
        assert!(!works(&app.router, &cookie).await, "and on the first instance too");
        own_pool.close().await;
    }
}

#[tokio::test]
async fn a_sqlite_session_survives_closing_and_reopening_the_database() {
    let dir = tempfile::tempdir().unwrap();
    let url = format!("sqlite://{}", dir.path().join("restart.db").display());
    let store = Store::connect(&url).await.unwrap();
    store.migrate().await.unwrap();
    crate::helpers::sign_in(&store, "ses-restart", Role::Reader).await;
    let cookie = log_in(&second_instance(&store), "ses-restart", "10.1.0.2").await;
    store.close().await;
    let reopened = Store::connect(&url).await.unwrap();
    assert!(works(&second_instance(&reopened), &cookie).await);
    reopened.close().await;
}

/// Moves a session's clock back by `idle_min` (last use) and `age_h` (sign-in).
async fn age_session(store: &Store, user_id: i64, idle_min: i64, age_h: i64) {
    let now = OffsetDateTime::now_utc();
    let last = now - time::Duration::minutes(idle_min);
    let created = now - time::Duration::hours(age_h);
    let sql = "UPDATE sessions SET last_seen_at = $1, created_at = $2 WHERE user_id = $3";
    let n = match store {
        Store::Sqlite(pool) => sqlx::query(sql)
            .bind(last)
            .bind(created)
            .bind(user_id)
            .execute(pool)
            .await
            .unwrap()
            .rows_affected(),
        Store::Postgres(pool) => sqlx::query(sql)
            .bind(last)
            .bind(created)
            .bind(user_id)
            .execute(pool)
            .await
            .unwrap()
            .rows_affected(),
    };
    assert!(n >= 1);
}

on_both_backends! {
    async fn an_idle_or_too_old_session_is_refused(app) {
        let idle = app.user("ses-idle", Role::Reader).await;
        let old = app.user("ses-old", Role::Reader).await;
        let fresh = app.user("ses-fresh", Role::Reader).await;
        assert!(works(&app.router, &idle.cookie).await);
        let limits = Config::for_database("test");
        age_session(&app.store, idle.user_id, limits.session_idle_min + 1, 1).await;
        age_session(&app.store, old.user_id, 5, limits.session_absolute_h + 1).await;
        age_session(&app.store, fresh.user_id, limits.session_idle_min - 5, 1).await;
        assert!(!works(&app.router, &idle.cookie).await, "idle past the limit");
        assert!(!works(&app.router, &old.cookie).await, "older than the absolute limit");
        assert!(works(&app.router, &fresh.cookie).await, "used recently enough");
        let api = app.raw(Request::get("/api/v1/materials").header(header::COOKIE, format!("gp_session={}", idle.cookie)).body(Body::empty()).unwrap()).await;
        assert_eq!(api.status, StatusCode::UNAUTHORIZED);
    }
}

on_both_backends! {
    async fn a_shorter_idle_limit_in_the_configuration_ends_sessions_sooner(app) {
        let s = app.user("ses-short", Role::Reader).await;
        age_session(&app.store, s.user_id, 10, 1).await;
        assert!(works(&app.router, &s.cookie).await, "10 minutes idle is fine by default");
        let s2 = app.user("ses-short2", Role::Reader).await;
        age_session(&app.store, s2.user_id, 10, 1).await;
        let strict = configured(&app.store, |c| c.session_idle_min = 5);
        assert!(!works(&strict, &s2.cookie).await, "but not with a 5-minute limit");
    }
}

on_both_backends! {
    async fn the_session_cookie_is_http_only_lax_and_secure_when_configured_and_new_at_each_sign_in(app) {
        app.user("ses-cookie", Role::Reader).await;
        let r = send(&app.router, login_request("ses-cookie", TEST_PASSWORD, "10.2.0.1", None)).await;
        let cookie = set_cookie(&r);
        assert!(cookie.starts_with("gp_session="));
        assert!(cookie.contains("; HttpOnly"), "{cookie}");
        assert!(cookie.contains("; SameSite=Lax"), "{cookie}");
        assert!(cookie.contains("; Path=/"), "{cookie}");
        assert!(!cookie.contains("Secure"), "not over plain HTTP: {cookie}");
        let first = cookie_value(&cookie);
        // Signing in again from the same browser: a new id, and the old one ends.
        let r = send(&app.router, login_request("ses-cookie", TEST_PASSWORD, "10.2.0.1", Some(&first))).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER);
        let second = cookie_value(&set_cookie(&r));
        assert_ne!(first, second);
        assert!(!works(&app.router, &first).await, "the session id before sign-in no longer works");
        assert!(works(&app.router, &second).await);
        let tls = configured(&app.store, |c| c.secure_cookies = true);
        let r = send(&tls, login_request("ses-cookie", TEST_PASSWORD, "10.2.0.1", None)).await;
        let cookie = set_cookie(&r);
        assert!(cookie.contains("; Secure"), "{cookie}");
        assert!(cookie.contains("; HttpOnly") && cookie.contains("; SameSite=Lax"));
    }
}

on_both_backends! {
    async fn failed_sign_ins_are_slowed_per_account(app) {
        app.user("ses-victim", Role::Reader).await;
        for i in 1..=3 {
            let r = send(&app.router, login_request("ses-victim", "wrong password", &format!("10.3.0.{i}"), None)).await;
            assert_eq!(r.status, StatusCode::UNAUTHORIZED);
        }
        // From a fresh address, with the right password: still made to wait.
        let r = send(&app.router, login_request("ses-victim", TEST_PASSWORD, "10.3.0.9", None)).await;
        assert_eq!(r.status, StatusCode::TOO_MANY_REQUESTS, "{}", r.body);
        assert!(r.body.contains("Too many refused sign-ins"));
        assert!(r.headers.get(header::SET_COOKIE).is_none(), "no session is made");
        // Another account from the same addresses is not held up.
        app.user("ses-bystander", Role::Reader).await;
        log_in(&app.router, "ses-bystander", "10.3.0.1").await;
    }
}

on_both_backends! {
    async fn failed_sign_ins_are_slowed_per_address(app) {
        app.user("ses-target", Role::Reader).await;
        for name in ["nobody-1", "nobody-2", "nobody-3"] {
            let r = send(&app.router, login_request(name, "guess", "10.4.0.1", None)).await;
            assert_eq!(r.status, StatusCode::UNAUTHORIZED);
        }
        let r = send(&app.router, login_request("ses-target", TEST_PASSWORD, "10.4.0.1", None)).await;
        assert_eq!(r.status, StatusCode::TOO_MANY_REQUESTS, "{}", r.body);
        log_in(&app.router, "ses-target", "10.4.0.2").await;
    }
}

on_both_backends! {
    async fn a_refused_sign_in_does_not_say_whether_the_account_exists(app) {
        app.user("ses-real", Role::Reader).await;
        let known = send(&app.router, login_request("ses-real", "wrong password", "10.5.0.1", None)).await;
        let unknown = send(&app.router, login_request("ses-fake", "wrong password", "10.5.0.2", None)).await;
        assert_eq!(known.status, StatusCode::UNAUTHORIZED);
        assert_eq!(unknown.status, known.status);
        assert_eq!(
            known.body.replace("ses-real", "NAME"),
            unknown.body.replace("ses-fake", "NAME"),
            "the same page either way"
        );
        assert!(known.body.contains("The account name or the password is not right"));
    }
}
