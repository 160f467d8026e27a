//! The test app: the real router on a fresh database.

use std::sync::atomic::{AtomicU32, Ordering};
use std::sync::OnceLock;

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use axum::Router;
use glasspoint::auth::Actor;
use glasspoint::domain::Role;
use glasspoint::storage::NewUser;
use glasspoint::{AppState, Config, Store};
use http_body_util::BodyExt;
use tower::ServiceExt;

pub struct TestApp {
    pub router: Router,
    pub store: Store,
    /// The administrator every plain request is sent as.
    pub admin: TestSession,
    /// The database URL, for opening a second, independent connection pool.
    pub url: String,
    /// Keeps the SQLite file alive for the test's duration.
    _dir: Option<tempfile::TempDir>,
    /// PostgreSQL database to drop afterwards: (admin URL, name).
    pg: Option<(String, String)>,
}

pub struct Reply {
    pub status: StatusCode,
    pub location: Option<String>,
    pub headers: axum::http::HeaderMap,
    pub body: String,
}

impl Reply {
    /// The content type of the reply, without parameters ("" when absent).
    pub fn content_type(&self) -> &str {
        self.headers
            .get(header::CONTENT_TYPE)
            .and_then(|v| v.to_str().ok())
            .map(|v| v.split(';').next().unwrap_or("").trim())
            .unwrap_or("")
    }

    pub fn json(&self) -> serde_json::Value {
        serde_json::from_str(&self.body).unwrap_or_else(|e| panic!("not JSON ({e}): {}", self.body))
    }
}

static COUNTER: AtomicU32 = AtomicU32::new(0);

/// A signed-in person: the session cookie and the CSRF token its forms carry.
#[derive(Debug, Clone)]
pub struct TestSession {
    pub user_id: i64,
    pub username: String,
    pub cookie: String,
    pub csrf: String,
}

/// The password of every account the tests make.
pub const TEST_PASSWORD: &str = "a long test password";

fn test_password_hash() -> &'static str {
    static HASH: OnceLock<String> = OnceLock::new();
    HASH.get_or_init(|| glasspoint::auth::secrets::hash_password(TEST_PASSWORD).unwrap())
}

/// Creates (or finds) an account with `role` and signs it in.
pub async fn sign_in(store: &Store, username: &str, role: Role) -> TestSession {
    let user = match store.user_by_name(username).await.unwrap() {
        Some((u, _)) => u,
        None => {
            let id = store
                .create_user(
                    &Actor::system(),
                    &NewUser {
                        username,
                        full_name: &format!("{username} (test)"),
                        role,
                        password_hash: test_password_hash(),
                    },
                )
                .await
                .expect("create test user");
            store.get_user(id).await.unwrap()
        }
    };
    let cookie = store
        .create_session(&user.actor(true), "test")
        .await
        .expect("session");
    let info = store
        .session(&cookie, Config::for_database("test").session_limits())
        .await
        .unwrap()
        .expect("live session");
    TestSession {
        user_id: user.id,
        username: user.username,
        cookie,
        csrf: info.csrf_token,
    }
}

impl TestApp {
    async fn build(
        store: Store,
        url: String,
        dir: Option<tempfile::TempDir>,
        pg: Option<(String, String)>,
    ) -> TestApp {
        let admin = sign_in(&store, "admin", Role::Admin).await;
        Self::build_with(store, dir, pg, Config::for_database("test"), admin, url)
    }

    fn build_with(
        store: Store,
        dir: Option<tempfile::TempDir>,
        pg: Option<(String, String)>,
        config: Config,
        admin: TestSession,
        url: String,
    ) -> TestApp {
        let state = AppState::new(store.clone(), config);
        TestApp {
            router: glasspoint::router(state),
            store,
            admin,
            url,
            _dir: dir,
            pg,
        }
    }

    /// A client that sends requests as `session` (or as nobody).
    pub fn client<'a>(&'a self, session: Option<&'a TestSession>) -> Client<'a> {
        Client { app: self, session }
    }

    /// Signs in a (new) account with `role`.
    pub async fn user(&self, username: &str, role: Role) -> TestSession {
        sign_in(&self.store, username, role).await
    }

    /// A fresh, migrated SQLite file.
    pub async fn sqlite() -> TestApp {
        let dir = tempfile::tempdir().expect("temp dir");
        let url = format!("sqlite://{}", dir.path().join("test.db").display());
        let store = Store::connect(&url).await.expect("connect sqlite");
        store.migrate().await.expect("migrate sqlite");
        Self::build(store, url, Some(dir), None).await
    }

    /// The same app with a team safety margin other than the default.
    pub fn with_margin(self, margin_c: f64) -> TestApp {
        let mut config = Config::for_database("test");
        config.margin_c = margin_c;
        let TestApp {
            store,
            _dir,
            pg,
            admin,
            url,
            ..
        } = self;
        Self::build_with(store, _dir, pg, config, admin, url)
    }

    /// The same app with its configuration changed by `change`.
    pub fn with_config(self, change: impl FnOnce(&mut Config)) -> TestApp {
        let mut config = Config::for_database("test");
        change(&mut config);
        let TestApp {
            store,
            _dir,
            pg,
            admin,
            url,
            ..
        } = self;
        Self::build_with(store, _dir, pg, config, admin, url)
    }

    /// A fresh, migrated PostgreSQL database, when `TEST_DATABASE_URL` names a server.
    pub async fn postgres() -> Option<TestApp> {
        let admin = match std::env::var("TEST_DATABASE_URL") {
            Ok(url) if !url.trim().is_empty() => url,
            _ => {
                eprintln!("TEST_DATABASE_URL not set: PostgreSQL variant skipped");
                return None;
            }
        };
        let name = format!(
            "gp_t{}_{}_{}",
            std::process::id(),
            COUNTER.fetch_add(1, Ordering::SeqCst),
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|d| d.subsec_nanos())
                .unwrap_or(0)
        );
        let admin_pool = sqlx::PgPool::connect(&admin)
            .await
            .expect("connect to TEST_DATABASE_URL");
        sqlx::query(&format!("CREATE DATABASE {name}"))
            .execute(&admin_pool)
            .await
            .expect("create test database");
        admin_pool.close().await;
        let url = replace_database(&admin, &name);
        let store = Store::connect(&url).await.expect("connect postgres");
        store.migrate().await.expect("migrate postgres");
        Some(Self::build(store, url, None, Some((admin, name))).await)
    }

    pub async fn load_demo(&self) {
        self.store.seed_demo().await.expect("seed demo");
    }

    /// Sends `req` as the administrator.
    pub async fn request(&self, req: Request<Body>) -> Reply {
        self.client(Some(&self.admin)).request(req).await
    }

    /// Sends `req` exactly as given: no cookie, no token.
    pub async fn raw(&self, req: Request<Body>) -> Reply {
        let response = self
            .router
            .clone()
            .oneshot(req)
            .await
            .expect("router answers");
        Reply::read(response).await
    }

    pub async fn get(&self, path: &str) -> Reply {
        self.client(Some(&self.admin)).get(path).await
    }

    pub async fn post_form(&self, path: &str, fields: &[(&str, &str)]) -> Reply {
        self.client(Some(&self.admin)).post_form(path, fields).await
    }

    pub async fn send_json(&self, method: &str, path: &str, body: &serde_json::Value) -> Reply {
        self.client(Some(&self.admin))
            .send_json(method, path, body)
            .await
    }

    pub async fn post_json(&self, path: &str, body: &serde_json::Value) -> Reply {
        self.send_json("POST", path, body).await
    }

    pub async fn put_json(&self, path: &str, body: &serde_json::Value) -> Reply {
        self.send_json("PUT", path, body).await
    }

    /// The id of the shipped material `name`.
    pub async fn material_id(&self, name: &str) -> i64 {
        self.store
            .list_materials()
            .await
            .unwrap()
            .into_iter()
            .find(|m| m.name == name)
            .unwrap_or_else(|| panic!("material {name} is in the library"))
            .id
    }

    pub async fn cleanup(self) {
        let TestApp { store, pg, .. } = self;
        store.close().await;
        if let Some((admin, name)) = pg {
            if let Ok(pool) = sqlx::PgPool::connect(&admin).await {
                let _ = sqlx::query(&format!("DROP DATABASE IF EXISTS {name}"))
                    .execute(&pool)
                    .await;
                pool.close().await;
            }
        }
    }
}

/// Requests sent as one signed-in person (or anonymously).
pub struct Client<'a> {
    pub app: &'a TestApp,
    pub session: Option<&'a TestSession>,
}

impl Reply {
    pub async fn read(response: axum::response::Response) -> Reply {
        let status = response.status();
        let headers = response.headers().clone();
        let location = headers
            .get(header::LOCATION)
            .and_then(|v| v.to_str().ok())
            .map(str::to_string);
        let headers = response.headers().clone();
        let bytes = response
            .into_body()
            .collect()
            .await
            .expect("body")
            .to_bytes();
        Reply {
            status,
            location,
            headers,
            body: String::from_utf8_lossy(&bytes).into_owned(),
        }
    }
}

impl Client<'_> {
    /// Sends `req` with the session's cookie and CSRF header.
    pub async fn request(&self, mut req: Request<Body>) -> Reply {
        if let Some(s) = self.session {
            let h = req.headers_mut();
            h.insert(
                header::COOKIE,
                format!("gp_session={}", s.cookie).parse().unwrap(),
            );
            h.insert("x-csrf-token", s.csrf.parse().unwrap());
        }
        self.app.raw(req).await
    }

    pub async fn get(&self, path: &str) -> Reply {
        self.request(Request::get(path).body(Body::empty()).unwrap())
            .await
    }

    pub async fn post_form(&self, path: &str, fields: &[(&str, &str)]) -> Reply {
        let body = serde_urlencoded::to_string(fields).unwrap();
        self.request(
            Request::post(path)
                .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                .body(Body::from(body))
                .unwrap(),
        )
        .await
    }

    pub async fn send_json(&self, method: &str, path: &str, body: &serde_json::Value) -> Reply {
        self.request(
            Request::builder()
                .method(method)
                .uri(path)
                .header(header::CONTENT_TYPE, "application/json")
                .body(Body::from(body.to_string()))
                .unwrap(),
        )
        .await
    }

    pub async fn post_json(&self, path: &str, body: &serde_json::Value) -> Reply {
        self.send_json("POST", path, body).await
    }

    pub async fn put_json(&self, path: &str, body: &serde_json::Value) -> Reply {
        self.send_json("PUT", path, body).await
    }
}

fn replace_database(url: &str, name: &str) -> String {
    let (base, query) = match url.split_once('?') {
        Some((b, q)) => (b, format!("?{q}")),
        None => (url, String::new()),
    };
    let without_db = match base.rfind('/') {
        Some(i) if i > "postgres://".len() => &base[..i],
        _ => base,
    };
    format!("{without_db}/{name}{query}")
}

/// Runs a test body on SQLite, and again on PostgreSQL when `TEST_DATABASE_URL` is set.
#[macro_export]
macro_rules! on_both_backends {
    ($(#[$meta:meta])* async fn $name:ident($app:ident) $body:block) => {
        $(#[$meta])*
        mod $name {
            #[allow(unused_imports)]
            use super::*;

            async fn run($app: $crate::helpers::TestApp) -> $crate::helpers::TestApp {
                $body
                $app
            }

            #[tokio::test]
            async fn on_sqlite() {
                let app = $crate::helpers::TestApp::sqlite().await;
                run(app).await.cleanup().await;
            }

            #[tokio::test]
            async fn on_postgres() {
                if let Some(app) = $crate::helpers::TestApp::postgres().await {
                    run(app).await.cleanup().await;
                }
            }
        }
    };
}

/// The boundary of the multipart bodies the tests build.
pub const MULTIPART_BOUNDARY: &str = "glasspointTestBoundary7MA4YWxk";

/// A multipart body as a browser sends it: the CSRF token first (when given), then the
/// typed fields in order (repeat a name for repeated values), then the file (when given).
pub fn multipart_body(
    csrf: Option<&str>,
    fields: &[(&str, &str)],
    file: Option<(&str, &[u8])>,
) -> Vec<u8> {
    let mut body = Vec::new();
    let mut part = |name: &str, value: &str| {
        body.extend_from_slice(
            format!(
                "--{MULTIPART_BOUNDARY}\r\nContent-Disposition: form-data; name=\"{name}\"\r\n\r\n{value}\r\n"
            )
            .as_bytes(),
        );
    };
    if let Some(token) = csrf {
        part("csrf_token", token);
    }
    for (k, v) in fields {
        part(k, v);
    }
    if let Some((file_name, bytes)) = file {
        body.extend_from_slice(
            format!(
                "--{MULTIPART_BOUNDARY}\r\nContent-Disposition: form-data; name=\"file\"; filename=\"{file_name}\"\r\nContent-Type: text/csv\r\n\r\n"
            )
            .as_bytes(),
        );
        body.extend_from_slice(bytes);
        body.extend_from_slice(b"\r\n");
    }
    body.extend_from_slice(format!("--{MULTIPART_BOUNDARY}--\r\n").as_bytes());
    body
}

impl TestApp {
    /// Posts a multipart body as a browser does: `session`'s cookie, no CSRF header (the
    /// token travels in the body, or not at all).
    pub async fn post_multipart(&self, session: &TestSession, path: &str, body: Vec<u8>) -> Reply {
        let req = Request::post(path)
            .header(
                header::CONTENT_TYPE,
                format!("multipart/form-data; boundary={MULTIPART_BOUNDARY}"),
            )
            .header(header::COOKIE, format!("gp_session={}", session.cookie))
            .body(Body::from(body))
            .unwrap();
        self.raw(req).await
    }

    /// The bytes of a GET as the administrator, unchanged: (status, headers, body).
    pub async fn get_bytes(&self, path: &str) -> (StatusCode, axum::http::HeaderMap, Vec<u8>) {
        let req = Request::get(path)
            .header(header::COOKIE, format!("gp_session={}", self.admin.cookie))
            .body(Body::empty())
            .unwrap();
        let response = self
            .router
            .clone()
            .oneshot(req)
            .await
            .expect("router answers");
        let status = response.status();
        let headers = response.headers().clone();
        let bytes = response
            .into_body()
            .collect()
            .await
            .expect("body")
            .to_bytes()
            .to_vec();
        (status, headers, bytes)
    }
}
