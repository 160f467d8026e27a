//! Signing in and out, and the page a fresh installation shows before any account exists.

use super::extract::{Form, Query};
use askama::Template;
use axum::extract::{ConnectInfo, State};
use axum::http::{header, Extensions, HeaderMap, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::Router;
use serde::Deserialize;

use super::auth::{cookie_value, SESSION_COOKIE};
use super::{render_status, see_other};
use crate::auth::secrets::{verify_against_nothing, verify_password};
use crate::auth::Actor;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/login", get(form).post(sign_in))
        .route("/logout", post(sign_out))
        // A name and a password: nothing larger is ever needed here.
        .layer(axum::extract::DefaultBodyLimit::max(SIGN_IN_BODY_LIMIT))
}

/// Largest sign-in or sign-out request body, in bytes.
pub const SIGN_IN_BODY_LIMIT: usize = 16 * 1024;

#[derive(Template)]
#[template(path = "first_run.html")]
pub struct FirstRunPage {
    pub message: &'static str,
}

#[derive(Template)]
#[template(path = "sign_in.html")]
struct SignInPage {
    next: String,
    username: String,
    message: Option<String>,
}

#[derive(Deserialize, Default)]
struct Next {
    #[serde(default)]
    next: String,
}

/// Only a path on this site is followed after sign-in.
fn safe_next(next: &str) -> String {
    if next.starts_with('/') && !next.starts_with("//") && !next.starts_with("/\\") {
        next.to_string()
    } else {
        "/formulations".to_string()
    }
}

async fn form(Query(q): Query<Next>) -> Response {
    render_status(
        StatusCode::OK,
        SignInPage {
            next: safe_next(&q.next),
            username: String::new(),
            message: None,
        },
    )
}

#[derive(Deserialize)]
struct Credentials {
    #[serde(default)]
    username: String,
    #[serde(default)]
    password: String,
    #[serde(default)]
    next: String,
}

fn client_address(ext: &Extensions) -> String {
    ext.get::<ConnectInfo<std::net::SocketAddr>>()
        .map(|c| c.0.ip().to_string())
        .unwrap_or_else(|| "local".into())
}

fn session_cookie(state: &AppState, value: &str, max_age_s: i64) -> HeaderValue {
    let secure = if state.config.secure_cookies {
        "; Secure"
    } else {
        ""
    };
    HeaderValue::from_str(&format!(
        "{SESSION_COOKIE}={value}; Path=/; HttpOnly; SameSite=Lax; Max-Age={max_age_s}{secure}"
    ))
    .unwrap_or_else(|_| HeaderValue::from_static("gp_session=; Path=/; Max-Age=0"))
}

async fn sign_in(
    State(state): State<AppState>,
    ext: Extensions,
    headers: HeaderMap,
    Form(c): Form<Credentials>,
) -> Result<Response, AppError> {
    let address = client_address(&ext);
    let username = c.username.trim().to_string();
    let next = safe_next(&c.next);
    let keys = vec![
        format!("user:{}", username.to_lowercase()),
        format!("addr:{address}"),
    ];
    let again = |message: String, status: StatusCode| {
        render_status(
            status,
            SignInPage {
                next: next.clone(),
                username: username.clone(),
                message: Some(message),
            },
        )
    };
    let wait = state.store.sign_in_wait(&keys).await?;
    if wait > 0 {
        return Ok(again(
            format!("Too many refused sign-ins: wait {wait} s, then try again."),
            StatusCode::TOO_MANY_REQUESTS,
        ));
    }
    let found = state.store.user_by_name(&username).await?;
    let accepted = match &found {
        Some((user, hash)) => verify_password(hash, &c.password) && !user.disabled,
        None => {
            verify_against_nothing(&c.password);
            false
        }
    };
    let user_id = found.as_ref().map(|(u, _)| u.id);
    let Some((user, _)) = found.filter(|_| accepted) else {
        state
            .store
            .note_failed_sign_in(&keys, &username, user_id, &address)
            .await?;
        return Ok(again(
            "The account name or the password is not right, or the account is disabled.".into(),
            StatusCode::UNAUTHORIZED,
        ));
    };
    state.store.clear_failed_sign_ins(&keys).await?;
    // A new session id at every sign-in; any session the browser had ends.
    if let Some(old) = cookie_value(&headers, SESSION_COOKIE) {
        if let Some(s) = state
            .store
            .session(&old, state.config.session_limits())
            .await?
        {
            state.store.end_session(&old, &s.actor).await?;
        }
    }
    let cookie = state
        .store
        .create_session(&user.actor(true), &address)
        .await?;
    let mut response = see_other(&next);
    response.headers_mut().insert(
        header::SET_COOKIE,
        session_cookie(&state, &cookie, state.config.session_absolute_h * 3600),
    );
    Ok(response)
}

async fn sign_out(
    State(state): State<AppState>,
    actor: Actor,
    headers: HeaderMap,
) -> Result<Response, AppError> {
    if let Some(cookie) = cookie_value(&headers, SESSION_COOKIE) {
        state.store.end_session(&cookie, &actor).await?;
    }
    let mut response = see_other("/login");
    response
        .headers_mut()
        .insert(header::SET_COOKIE, session_cookie(&state, "", 0));
    Ok(response.into_response())
}
