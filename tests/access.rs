//! Who may use which route: every rule of `auth::access::RULES` tried against the real
//! router by anonymous visitors, each role and a read-only API token; the router's source
//! checked against the table; and the CSRF checks of signed-in form posts.

use std::collections::BTreeSet;
use std::path::Path;

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::auth::access::{Access, RULES};
use glasspoint::auth::Actor;
use glasspoint::domain::{Role, TokenScope};

use crate::helpers::{Reply, TestApp, TestSession};
use crate::on_both_backends;

/// Real ids of the demo's records (and a few made for the test) to put in route paths.
struct Ids {
    formulation: i64,
    measurement: i64,
    material: i64,
    container: i64,
    cycle: i64,
    link: i64,
    user: i64,
    token: i64,
    trace: i64,
}

async fn demo_ids(app: &TestApp, target_user: i64) -> Ids {
    app.load_demo().await;
    let store = &app.store;
    let formulation = store
        .formulation_id_by_code("LV-001")
        .await
        .unwrap()
        .unwrap();
    let measurement = store.list_measurements(None, 1, 10).await.unwrap().items[0].id;
    let material = app.material_id("Sucrose").await;
    let container = store.list_containers().await.unwrap()[0].id;
    let cycle = store
        .cycle_id_by_name("Larchvale platform A")
        .await
        .unwrap()
        .unwrap();
    let link = store.links_of_cycle(cycle).await.unwrap()[0].id;
    // A token of its own for the revoke route, so revoking it harms no other request.
    store
        .create_token(&Actor::system(), target_user, TokenScope::Read, "to revoke")
        .await
        .unwrap();
    let token = store.list_tokens().await.unwrap().last().unwrap().id;
    // A DSC trace of its own (the demo has none), so the trace routes answer real pages.
    let mut file = String::from("Temperature (°C),Heat flow (mW)\n");
    for i in 0..200 {
        file.push_str(&format!(
            "{},{}\n",
            -60.0 + 0.25 * f64::from(i),
            0.001 * f64::from(i)
        ));
    }
    let draft = glasspoint::domain::traces::TraceForm::default()
        .parse(file.into_bytes())
        .unwrap();
    let trace = store
        .create_trace(&Actor::system(), formulation, &draft)
        .await
        .unwrap();
    Ids {
        formulation,
        measurement,
        material,
        container,
        cycle,
        link,
        user: target_user,
        token,
        trace,
    }
}

/// The rule's path with every parameter replaced by a real value.
fn concrete(path: &str, ids: &Ids) -> String {
    let bare = path.strip_prefix("/api/v1").unwrap_or(path);
    let id = if bare.starts_with("/formulations/") || bare.starts_with("/records/") {
        ids.formulation
    } else if bare.starts_with("/measurements/") {
        ids.measurement
    } else if bare.starts_with("/materials/") {
        ids.material
    } else if bare.starts_with("/containers/") {
        ids.container
    } else if bare.starts_with("/cycles/") {
        ids.cycle
    } else if bare.starts_with("/admin/users/") {
        ids.user
    } else if bare.starts_with("/admin/tokens/") {
        ids.token
    } else if bare.starts_with("/traces/") {
        ids.trace
    } else {
        0
    };
    path.replace("{id}", &id.to_string())
        .replace("{link}", &ids.link.to_string())
        .replace("{entity}", "formulation")
        .replace("{version}", "1")
        .replace("{topic}", "ice-vapor-pressure")
        .replace("{*path}", "glasspoint.css")
}

/// Who sends a request in the table-driven test.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Caller {
    Anonymous,
    Role(Role),
    ReadToken,
}

fn request(method: &str, path: &str) -> axum::http::request::Builder {
    let b = Request::builder().method(method).uri(path);
    match method {
        "GET" => b,
        _ if path.starts_with("/api/") => b.header(header::CONTENT_TYPE, "application/json"),
        _ => b.header(header::CONTENT_TYPE, "application/x-www-form-urlencoded"),
    }
}

fn body_for(method: &str, path: &str) -> Body {
    match method {
        "GET" => Body::empty(),
        _ if path.starts_with("/api/") => Body::from("{}"),
        _ => Body::empty(),
    }
}

async fn send(
    app: &TestApp,
    caller: Caller,
    session: Option<&TestSession>,
    token: &str,
    method: &str,
    path: &str,
) -> Reply {
    let req = request(method, path);
    match caller {
        Caller::Anonymous => app.raw(req.body(body_for(method, path)).unwrap()).await,
        Caller::ReadToken => {
            let req = req
                .header(header::AUTHORIZATION, format!("Bearer {token}"))
                .body(body_for(method, path))
                .unwrap();
            app.raw(req).await
        }
        Caller::Role(_) => {
            app.client(session)
                .request(req.body(body_for(method, path)).unwrap())
                .await
        }
    }
}

fn is_login_redirect(r: &Reply, path: &str) -> bool {
    let Some(location) = &r.location else {
        return false;
    };
    let Some(query) = location.strip_prefix("/login?") else {
        return false;
    };
    let pairs: Vec<(String, String)> = serde_urlencoded::from_str(query).unwrap_or_default();
    r.status == StatusCode::SEE_OTHER && pairs.iter().any(|(k, v)| k == "next" && v == path)
}

on_both_backends! {
    async fn every_route_refuses_or_admits_every_role_as_its_rule_says(app) {
        let target = app.user("access-target", Role::Reader).await;
        let ids = demo_ids(&app, target.user_id).await;
        let reader = app.user("access-reader", Role::Reader).await;
        let scientist = app.user("access-scientist", Role::Scientist).await;
        let reviewer = app.user("access-reviewer", Role::Reviewer).await;
        let admin = app.admin.clone();
        let token = app
            .store
            .create_token(&Actor::system(), reviewer.user_id, TokenScope::Read, "reads")
            .await
            .unwrap();
        let callers = [
            Caller::Anonymous,
            Caller::Role(Role::Reader),
            Caller::Role(Role::Scientist),
            Caller::Role(Role::Reviewer),
            Caller::Role(Role::Admin),
            Caller::ReadToken,
        ];
        let mut checked = 0;
        for rule in RULES {
            let path = concrete(rule.path, &ids);
            let api = path.starts_with("/api/");
            for caller in callers {
                let session = match caller {
                    Caller::Role(Role::Reader) => Some(reader.clone()),
                    Caller::Role(Role::Scientist) => Some(scientist.clone()),
                    Caller::Role(Role::Reviewer) => Some(reviewer.clone()),
                    Caller::Role(Role::Admin) => Some(admin.clone()),
                    _ => None,
                };
                // Signing out ends the session it is sent with: use a fresh one.
                let session = match (&session, rule.path) {
                    (Some(s), "/logout") => {
                        let role = app.store.get_user(s.user_id).await.unwrap().role;
                        Some(app.user(&s.username, role).await)
                    }
                    _ => session,
                };
                let r = send(&app, caller, session.as_ref(), &token, rule.method, &path).await;
                let what = format!("{} {path} as {caller:?}: {} {}", rule.method, r.status, r.body.chars().take(300).collect::<String>());
                let role = match caller {
                    Caller::Anonymous => None,
                    Caller::Role(role) => Some(role),
                    Caller::ReadToken => Some(Role::Reader),
                };
                match (rule.access, role) {
                    (Access::Public, _) => {
                        assert_ne!(r.status, StatusCode::FORBIDDEN, "{what}");
                        assert!(!is_login_redirect(&r, &path), "{what}");
                        if rule.path != "/login" {
                            assert_ne!(r.status, StatusCode::UNAUTHORIZED, "{what}");
                        }
                    }
                    (Access::Least(_), None) if api => {
                        assert_eq!(r.status, StatusCode::UNAUTHORIZED, "{what}");
                        assert!(r.json()["error"].as_str().is_some_and(|e| !e.is_empty()), "{what}");
                    }
                    (Access::Least(_), None) => {
                        assert!(is_login_redirect(&r, &path), "anonymous is sent to sign in: {what}");
                    }
                    (Access::Least(least), Some(role)) if !role.at_least(least) => {
                        assert_eq!(r.status, StatusCode::FORBIDDEN, "{what}");
                        if api {
                            assert!(r.json()["error"].as_str().is_some_and(|e| !e.is_empty()), "{what}");
                        }
                    }
                    (Access::Least(_), Some(_)) => {
                        assert!(
                            r.status != StatusCode::UNAUTHORIZED && r.status != StatusCode::FORBIDDEN,
                            "admitted: {what}"
                        );
                        assert!(!is_login_redirect(&r, &path), "{what}");
                    }
                }
                checked += 1;
            }
        }
        assert_eq!(checked, RULES.len() * callers.len());
    }
}

/// Every `(METHOD, PATH)` the router's source declares: `.route("PATH", get(..).post(..))`
/// in `server/**/*.rs`, with `/api/v1` before the routes declared in `server/api`.
fn declared_routes() -> BTreeSet<(String, String)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("server");
    let mut files = Vec::new();
    collect_rs(&root, &mut files);
    let mut out = BTreeSet::new();
    for file in files {
        if file.starts_with(root.join("science")) {
            continue;
        }
        let prefix = if file.starts_with(root.join("api")) {
            "/api/v1"
        } else {
            ""
        };
        let text = std::fs::read_to_string(&file).unwrap();
        for (method, path) in routes_in(&text) {
            out.insert((method, format!("{prefix}{path}")));
        }
    }
    out
}

fn collect_rs(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            collect_rs(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

/// The routes declared in one source text.
fn routes_in(text: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut rest = text;
    while let Some(at) = rest.find(".route(") {
        rest = &rest[at + ".route(".len()..];
        let args = rest.trim_start();
        let Some(after_quote) = args.strip_prefix('"') else {
            continue;
        };
        let end = after_quote.find('"').expect("route path is closed");
        let path = &after_quote[..end];
        // The method router: the text up to the `)` closing `.route(`, methods at depth 0.
        let handlers = &after_quote[end + 1..];
        let mut depth = 0usize;
        let mut word = String::new();
        for ch in handlers.chars() {
            match ch {
                '(' => {
                    if depth == 0 {
                        let name = word.trim_start_matches('.');
                        if ["get", "post", "put", "delete", "patch"].contains(&name) {
                            out.push((name.to_uppercase(), path.to_string()));
                        }
                    }
                    depth += 1;
                    word.clear();
                }
                ')' if depth == 0 => break,
                ')' => {
                    depth -= 1;
                    word.clear();
                }
                c if depth == 0 && (c.is_alphanumeric() || c == '_' || c == '.') => word.push(c),
                _ => word.clear(),
            }
        }
    }
    out
}

#[test]
fn the_route_source_reader_finds_multi_line_routes_and_chained_methods() {
    let text = r#"Router::new()
        .route("/a/{id}", get(page).post(|| async { f(g(1)) }))
        .route(
            "/b",
            put(update),
        )"#;
    assert_eq!(
        routes_in(text),
        vec![
            ("GET".to_string(), "/a/{id}".to_string()),
            ("POST".to_string(), "/a/{id}".to_string()),
            ("PUT".to_string(), "/b".to_string()),
        ]
    );
}

#[test]
fn every_declared_route_has_an_access_rule_and_every_rule_a_route() {
    let declared = declared_routes();
    assert!(
        declared.len() > 50,
        "the reader found the router: {declared:?}"
    );
    let ruled: BTreeSet<(String, String)> = RULES
        .iter()
        .map(|r| (r.method.to_string(), r.path.to_string()))
        .collect();
    assert_eq!(ruled.len(), RULES.len(), "no rule is listed twice");
    let without_rule: Vec<_> = declared.difference(&ruled).collect();
    assert!(
        without_rule.is_empty(),
        "routes without an access rule: {without_rule:?}"
    );
    let without_route: Vec<_> = ruled.difference(&declared).collect();
    assert!(
        without_route.is_empty(),
        "rules for no route: {without_route:?}"
    );
}

// ---- CSRF ----

fn form_post(path: &str, cookie: &str) -> axum::http::request::Builder {
    Request::post(path)
        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
        .header(header::COOKIE, format!("gp_session={cookie}"))
}

fn material_form(name: &str, csrf: Option<&str>) -> String {
    let mut pairs = vec![
        ("name", name),
        ("role", "bulking_agent"),
        ("freezing_behaviour", "amorphous"),
    ];
    if let Some(token) = csrf {
        pairs.push(("csrf_token", token));
    }
    serde_urlencoded::to_string(pairs).unwrap()
}

async fn material_named(app: &TestApp, name: &str) -> bool {
    app.store
        .list_materials()
        .await
        .unwrap()
        .iter()
        .any(|m| m.name == name)
}

on_both_backends! {
    async fn a_form_post_needs_its_own_sessions_csrf_token(app) {
        let me = app.user("csrf-scientist", Role::Scientist).await;
        let other = app.user("csrf-other", Role::Scientist).await;
        assert_ne!(me.csrf, other.csrf);

        let body = material_form("No token", None);
        let r = app.raw(form_post("/materials", &me.cookie).body(Body::from(body)).unwrap()).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN, "{}", r.body);
        assert!(r.body.contains("security token"), "{}", r.body);
        assert!(!material_named(&app, "No token").await);

        let body = material_form("Other token", Some(&other.csrf));
        let r = app.raw(form_post("/materials", &me.cookie).body(Body::from(body)).unwrap()).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN, "{}", r.body);
        assert!(!material_named(&app, "Other token").await);

        let body = material_form("Wrong header", None);
        let r = app.raw(
            form_post("/materials", &me.cookie)
                .header("x-csrf-token", &other.csrf)
                .body(Body::from(body))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN, "a wrong header is not rescued by the form field");
        assert!(!material_named(&app, "Wrong header").await);

        let body = material_form("Right token", Some(&me.csrf));
        let r = app.raw(form_post("/materials", &me.cookie).body(Body::from(body)).unwrap()).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert!(material_named(&app, "Right token").await);

        let body = material_form("Right header", None);
        let r = app.raw(
            form_post("/materials", &me.cookie)
                .header("x-csrf-token", &me.csrf)
                .body(Body::from(body))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert!(material_named(&app, "Right header").await);

        // The API with a session cookie needs the header too.
        let r = app.raw(
            Request::post("/api/v1/materials")
                .header(header::CONTENT_TYPE, "application/json")
                .header(header::COOKIE, format!("gp_session={}", me.cookie))
                .body(Body::from(r#"{"name": "Cookie API", "role": "other", "freezing_behaviour": "amorphous"}"#))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN, "{}", r.body);
        assert!(r.json()["error"].as_str().is_some());
        assert!(!material_named(&app, "Cookie API").await);
    }
}

on_both_backends! {
    async fn a_cross_site_post_is_refused_even_with_the_right_token(app) {
        let me = app.user("csrf-cross", Role::Scientist).await;
        let body = material_form("Cross site", Some(&me.csrf));
        let r = app.raw(
            form_post("/materials", &me.cookie)
                .header("sec-fetch-site", "cross-site")
                .body(Body::from(body))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN, "{}", r.body);
        assert!(!material_named(&app, "Cross site").await);

        let body = material_form("Foreign origin", Some(&me.csrf));
        let r = app.raw(
            form_post("/materials", &me.cookie)
                .header(header::HOST, "localhost:8080")
                .header(header::ORIGIN, "https://evil.example")
                .body(Body::from(body))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::FORBIDDEN, "{}", r.body);
        assert!(!material_named(&app, "Foreign origin").await);

        let body = material_form("Same origin", Some(&me.csrf));
        let r = app.raw(
            form_post("/materials", &me.cookie)
                .header(header::HOST, "localhost:8080")
                .header(header::ORIGIN, "http://localhost:8080")
                .header("sec-fetch-site", "same-origin")
                .body(Body::from(body))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert!(material_named(&app, "Same origin").await);
    }
}

on_both_backends! {
    async fn a_bearer_token_request_needs_no_csrf_token(app) {
        let me = app.user("token-writer", Role::Scientist).await;
        let token = app
            .store
            .create_token(&Actor::system(), me.user_id, TokenScope::Write, "script")
            .await
            .unwrap();
        let r = app.raw(
            Request::post("/api/v1/materials")
                .header(header::CONTENT_TYPE, "application/json")
                .header(header::AUTHORIZATION, format!("Bearer {token}"))
                .body(Body::from(r#"{"name": "By token", "role": "other", "freezing_behaviour": "amorphous"}"#))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
        assert!(material_named(&app, "By token").await);
        // A form post with the token and no CSRF field is accepted as well.
        let body = material_form("Token form", None);
        let r = app.raw(
            Request::post("/materials")
                .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                .header(header::AUTHORIZATION, format!("Bearer {token}"))
                .body(Body::from(body))
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        assert!(material_named(&app, "Token form").await);
        // A made-up token is refused, not treated as anonymous.
        let r = app.raw(
            Request::get("/api/v1/materials")
                .header(header::AUTHORIZATION, "Bearer gpt_0000")
                .body(Body::empty())
                .unwrap(),
        ).await;
        assert_eq!(r.status, StatusCode::UNAUTHORIZED);
    }
}
