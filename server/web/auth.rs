//! Who is asking, and may they: resolves the session cookie or API token, applies the
//! route table (`auth::access`), checks each form's CSRF token, and makes the signed-in
//! person available to handlers (`Actor`) and to templates (`page_user`, `csrf_token`).

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Instant;

use axum::body::{Body, Bytes};
use axum::extract::{MatchedPath, Request, State};
use axum::http::{header, HeaderMap, Method, StatusCode};
use axum::middleware::Next;
use axum::response::{IntoResponse, Redirect, Response};

use super::errors::is_api;
use crate::auth::access::{rule_for, Access};
use crate::auth::secrets::{same_secret, TOKEN_PREFIX};
use crate::auth::Actor;
use crate::domain::Role;
use crate::error::{ApiError, AppError};
use crate::AppState;

pub const SESSION_COOKIE: &str = "gp_session";
/// The form field and header that carry a session's CSRF token.
pub const CSRF_FIELD: &str = "csrf_token";
pub const CSRF_HEADER: &str = "x-csrf-token";

/// What pages may know of the request: who is signed in and their form token.
#[derive(Debug, Clone, Default)]
pub struct PageContext {
    pub user: Option<Actor>,
    pub csrf: String,
}

tokio::task_local! {
    static PAGE: PageContext;
}

/// The CSRF token every state-changing form carries (empty outside a session).
pub fn csrf_token() -> String {
    PAGE.try_with(|c| c.csrf.clone()).unwrap_or_default()
}

/// The signed-in person's name and role, for the page header.
pub fn page_user() -> Option<Actor> {
    PAGE.try_with(|c| c.user.clone()).ok().flatten()
}

/// Whether the signed-in person may do what needs `role` (a role code); pages use this
/// only to hide what the server would refuse anyway.
pub fn can(role: &str) -> bool {
    let least = Role::parse(role).unwrap_or(Role::Admin);
    page_user().is_some_and(|u| u.effective_role().at_least(least))
}

/// Once an account exists the app leaves its first-run mode for good (accounts are
/// disabled, never deleted).
#[derive(Debug, Default, Clone)]
pub struct FirstRun(Arc<AtomicBool>);

impl FirstRun {
    async fn has_users(&self, state: &AppState) -> Result<bool, AppError> {
        if self.0.load(Ordering::Relaxed) {
            return Ok(true);
        }
        let any = state.store.user_count().await? > 0;
        if any {
            self.0.store(true, Ordering::Relaxed);
        }
        Ok(any)
    }
}

/// An error in the form the caller reads: JSON for the API, a page otherwise.
fn refuse(api: bool, e: AppError) -> Response {
    if api {
        ApiError(e).into_response()
    } else {
        e.into_response()
    }
}

pub fn cookie_value(headers: &HeaderMap, name: &str) -> Option<String> {
    headers
        .get_all(header::COOKIE)
        .iter()
        .filter_map(|v| v.to_str().ok())
        .flat_map(|v| v.split(';'))
        .filter_map(|pair| pair.trim().split_once('='))
        .find(|(k, _)| *k == name)
        .map(|(_, v)| v.to_string())
}

fn bearer(headers: &HeaderMap) -> Option<String> {
    headers
        .get(header::AUTHORIZATION)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.strip_prefix("Bearer "))
        .map(|t| t.trim().to_string())
}

/// How a request proved who it is.
enum Identity {
    Anonymous,
    Session(Actor, String),
    Token(Actor),
}

async fn identify(state: &AppState, headers: &HeaderMap) -> Result<Identity, AppError> {
    if let Some(token) = bearer(headers) {
        if !token.starts_with(TOKEN_PREFIX) {
            return Err(AppError::Unauthorized);
        }
        return match state.store.token_actor(&token).await? {
            Some(actor) => Ok(Identity::Token(actor)),
            None => Err(AppError::Unauthorized),
        };
    }
    if let Some(cookie) = cookie_value(headers, SESSION_COOKIE) {
        if let Some(s) = state
            .store
            .session(&cookie, state.config.session_limits())
            .await?
        {
            return Ok(Identity::Session(s.actor, s.csrf_token));
        }
    }
    Ok(Identity::Anonymous)
}

fn unsafe_method(m: &Method) -> bool {
    !matches!(*m, Method::GET | Method::HEAD | Method::OPTIONS)
}

/// Checks a session request's CSRF token: the `x-csrf-token` header when sent; else the
/// `csrf_token` field of a urlencoded form, or the `csrf_token` part of a multipart form
/// (the upload forms put that hidden field first; the token is never taken from the query
/// string, where it would reach logs and history). Hands back the request with its body
/// intact.
async fn check_csrf(req: Request, expected: &str, body_limit: usize) -> Result<Request, AppError> {
    let refused = || {
        AppError::Forbidden(
            "the form's security token is missing or out of date; go back, reload the page and send it again".into(),
        )
    };
    if let Some(sent) = req.headers().get(CSRF_HEADER).and_then(|v| v.to_str().ok()) {
        return if same_secret(sent, expected) {
            Ok(req)
        } else {
            Err(refused())
        };
    }
    let content_type = req
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("")
        .to_string();
    let media = content_type
        .split(';')
        .next()
        .unwrap_or("")
        .trim()
        .to_ascii_lowercase();
    let multipart = media == "multipart/form-data";
    if media != "application/x-www-form-urlencoded" && !multipart {
        return Err(refused());
    }
    let limit = super::body_limit_for(req.uri().path(), body_limit);
    let (parts, body) = req.into_parts();
    let bytes: Bytes = axum::body::to_bytes(body, limit)
        .await
        .map_err(|_| AppError::input("body", "the request body is too large"))?;
    let sent = if multipart {
        multipart_token(&content_type, bytes.clone()).await
    } else {
        form_urlencoded::parse(&bytes)
            .find(|(k, _)| k == CSRF_FIELD)
            .map(|(_, v)| v.into_owned())
    };
    match sent {
        Some(sent) if same_secret(&sent, expected) => {
            Ok(Request::from_parts(parts, Body::from(bytes)))
        }
        _ => Err(refused()),
    }
}

/// The `csrf_token` part of a multipart body, if any (a body that is not valid multipart
/// has none).
async fn multipart_token(content_type: &str, bytes: Bytes) -> Option<String> {
    use axum::extract::FromRequest;
    let req = Request::builder()
        .header(header::CONTENT_TYPE, content_type)
        .body(Body::from(bytes))
        .ok()?;
    let mut form = axum::extract::Multipart::from_request(req, &())
        .await
        .ok()?;
    while let Ok(Some(field)) = form.next_field().await {
        if field.name() == Some(CSRF_FIELD) {
            return field.text().await.ok();
        }
    }
    None
}

/// The access layer, run for every matched route.
pub async fn authorize(State(state): State<AppState>, req: Request, next: Next) -> Response {
    let started = Instant::now();
    let method = req.method().clone();
    let matched = req
        .extensions()
        .get::<MatchedPath>()
        .map(|m| m.as_str().to_string())
        .unwrap_or_default();
    let path = req.uri().path().to_string();
    let api = is_api(&path);
    let Some(access) = rule_for(method.as_str(), &matched) else {
        let allowed = crate::auth::access::methods_for(&matched);
        if !allowed.is_empty() {
            // A method the route does not take: answered here, so no handler runs
            // without its rule.
            let mut r = StatusCode::METHOD_NOT_ALLOWED.into_response();
            if let Ok(v) = allowed.join(", ").parse() {
                r.headers_mut().insert(header::ALLOW, v);
            }
            return r;
        }
        tracing::error!(%method, route = %matched, "route has no access rule: refused");
        return refuse(
            api,
            AppError::Forbidden("this route has no access rule".into()),
        );
    };
    let first_run = state.first_run.clone();
    match first_run.has_users(&state).await {
        Ok(true) => {}
        Ok(false) if access == Access::Public && !path.starts_with("/login") => {}
        Ok(false) => return first_run_answer(api),
        Err(e) => return refuse(api, e),
    }
    let identity = match identify(&state, req.headers()).await {
        Ok(i) => i,
        Err(e) => return refuse(api, e),
    };
    let (actor, csrf, by_session) = match identity {
        Identity::Anonymous => (None, String::new(), false),
        Identity::Session(a, csrf) => (Some(a), csrf, true),
        Identity::Token(a) => (Some(a), String::new(), false),
    };
    let mut req = req;
    if let Access::Least(least) = access {
        let Some(actor) = &actor else {
            if api {
                return refuse(true, AppError::Unauthorized);
            }
            let back = req
                .uri()
                .path_and_query()
                .map(|p| p.as_str().to_string())
                .unwrap_or_else(|| "/".into());
            let to = format!(
                "/login?next={}",
                form_urlencoded::byte_serialize(back.as_bytes()).collect::<String>()
            );
            return Redirect::to(&to).into_response();
        };
        if !actor.effective_role().at_least(least) {
            let why = if actor.can_write {
                format!(
                    "this needs the {} role or higher; yours is {}",
                    least.label().to_lowercase(),
                    actor.role.label().to_lowercase()
                )
            } else {
                "this API token may only read".to_string()
            };
            return refuse(api, AppError::Forbidden(why));
        }
        if by_session && unsafe_method(&method) {
            req = match check_csrf(req, &csrf, state.config.body_limit_bytes).await {
                Ok(r) => r,
                Err(e) => return refuse(api, e),
            };
        }
    }
    if let Some(actor) = &actor {
        req.extensions_mut().insert(actor.clone());
    }
    let user_id = actor.as_ref().and_then(|a| a.user_id);
    let signed_in = actor.is_some();
    let context = PageContext { user: actor, csrf };
    let mut response = PAGE.scope(context, next.run(req)).await;
    // What a signed-in person saw stays out of the browser's cache, so Back after
    // signing out asks the server again (and lands on the sign-in page).
    if signed_in && !response.headers().contains_key(header::CACHE_CONTROL) {
        response.headers_mut().insert(
            header::CACHE_CONTROL,
            axum::http::HeaderValue::from_static("no-store"),
        );
    }
    tracing::info!(
        user_id,
        %method,
        route = %matched,
        status = response.status().as_u16(),
        ms = started.elapsed().as_millis() as u64,
        "request"
    );
    response
}

fn first_run_answer(api: bool) -> Response {
    let message = "No account exists yet. Create the first administrator on the server with \
                   `glasspoint user add NAME --role admin` (add --database URL if the app uses one), \
                   then sign in. Until then nothing can be read or changed.";
    if api {
        let body = serde_json::json!({ "error": message, "field": null });
        return (StatusCode::SERVICE_UNAVAILABLE, axum::Json(body)).into_response();
    }
    super::render_status(
        StatusCode::SERVICE_UNAVAILABLE,
        super::sign_in::FirstRunPage { message },
    )
}
