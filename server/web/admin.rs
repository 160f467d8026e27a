//! Team administration: accounts, API tokens, team settings and the audit-trail check.

use super::extract::{Form, Path};
use askama::Template;
use axum::extract::State;
use axum::http::StatusCode;
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;
use serde::Deserialize;

use super::{render, render_status, see_other};
use crate::auth::secrets::{check_new_password, hash_password};
use crate::auth::Actor;
use crate::domain::{FieldErrors, Role, TokenScope};
use crate::storage::{ApiToken, AuditCheck, NewUser, TeamSettings, User};
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/admin/users", get(users).post(create_user))
        .route("/admin/users/{id}", post(update_user))
        .route("/admin/users/{id}/password", post(reset_password))
        .route("/admin/users/{id}/tokens", post(issue_token))
        .route("/admin/tokens/{id}/revoke", post(revoke_token))
        .route("/admin/settings", get(settings).post(save_settings))
        .route("/admin/audit-check", get(audit_check))
        // Account and settings forms are small.
        .layer(axum::extract::DefaultBodyLimit::max(16 * 1024))
}

#[derive(Deserialize, Default, Clone)]
struct NewUserForm {
    #[serde(default)]
    username: String,
    #[serde(default)]
    full_name: String,
    #[serde(default)]
    role: String,
    #[serde(default)]
    password: String,
}

#[derive(Template)]
#[template(path = "admin/users.html")]
struct UsersPage {
    users: Vec<User>,
    tokens: Vec<(ApiToken, String)>,
    roles: Vec<(&'static str, &'static str)>,
    form: NewUserForm,
    errors: FieldErrors,
    /// A token just issued: shown this once.
    new_token: Option<(String, String)>,
    notice: String,
}

async fn users_page(
    state: &AppState,
    form: NewUserForm,
    errors: FieldErrors,
    new_token: Option<(String, String)>,
    notice: String,
    status: StatusCode,
) -> Result<Response, AppError> {
    let users = state.store.list_users().await?;
    let tokens = state
        .store
        .list_tokens()
        .await?
        .into_iter()
        .map(|t| {
            let owner = users
                .iter()
                .find(|u| u.id == t.user_id)
                .map(|u| u.username.clone())
                .unwrap_or_default();
            (t, owner)
        })
        .collect();
    Ok(render_status(
        status,
        UsersPage {
            users,
            tokens,
            roles: super::options(Role::ALL, Role::code, Role::label),
            form: NewUserForm {
                password: String::new(),
                ..form
            },
            errors,
            new_token,
            notice,
        },
    ))
}

/// The accounts page with a one-line notice of what just happened (or did not).
async fn notice_page(
    state: &AppState,
    notice: String,
    status: StatusCode,
) -> Result<Response, AppError> {
    users_page(
        state,
        NewUserForm::default(),
        FieldErrors::default(),
        None,
        notice,
        status,
    )
    .await
}

async fn users(State(state): State<AppState>) -> Result<Response, AppError> {
    users_page(
        &state,
        NewUserForm {
            role: Role::Scientist.code().into(),
            ..Default::default()
        },
        FieldErrors::default(),
        None,
        String::new(),
        StatusCode::OK,
    )
    .await
}

async fn create_user(
    State(state): State<AppState>,
    actor: Actor,
    Form(form): Form<NewUserForm>,
) -> Result<Response, AppError> {
    let result = async {
        let role = Role::parse(&form.role)
            .ok_or_else(|| AppError::input("role", format!("must be one of: {}", Role::codes())))?;
        check_new_password(&form.password)?;
        state
            .store
            .create_user(
                &actor,
                &NewUser {
                    username: form.username.trim(),
                    full_name: &form.full_name,
                    role,
                    password_hash: &hash_password(&form.password)?,
                },
            )
            .await
    }
    .await;
    match result {
        Ok(_) => Ok(see_other("/admin/users")),
        Err(AppError::Input(e)) => {
            users_page(
                &state,
                form,
                e.into(),
                None,
                String::new(),
                StatusCode::UNPROCESSABLE_ENTITY,
            )
            .await
        }
        Err(other) => Err(other),
    }
}

#[derive(Deserialize)]
struct UserUpdate {
    #[serde(default)]
    full_name: String,
    #[serde(default)]
    role: String,
    #[serde(default)]
    version: String,
    /// "disable", "enable" or empty (change name and role).
    #[serde(default)]
    account: String,
}

async fn update_user(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<UserUpdate>,
) -> Result<Response, AppError> {
    let result = async {
        match form.account.as_str() {
            "disable" => {
                if actor.user_id == Some(id) {
                    return Err(AppError::input(
                        "account",
                        "you cannot disable your own account",
                    ));
                }
                state.store.set_disabled(&actor, id, true).await
            }
            "enable" => state.store.set_disabled(&actor, id, false).await,
            _ => {
                let role = Role::parse(&form.role).ok_or_else(|| {
                    AppError::input("role", format!("must be one of: {}", Role::codes()))
                })?;
                if actor.user_id == Some(id) && role != Role::Admin {
                    return Err(AppError::input(
                        "role",
                        "you cannot take the administrator role from yourself",
                    ));
                }
                let version = form.version.trim().parse().ok();
                state
                    .store
                    .update_user(&actor, id, version, &form.full_name, role)
                    .await
            }
        }
    }
    .await;
    match result {
        Ok(()) => Ok(see_other("/admin/users")),
        Err(AppError::Input(e)) => {
            let notice = format!("Account {id} was not changed: {}: {}", e.field, e.message);
            notice_page(&state, notice, StatusCode::UNPROCESSABLE_ENTITY).await
        }
        Err(AppError::Conflict(message)) => {
            notice_page(&state, message, StatusCode::CONFLICT).await
        }
        Err(other) => Err(other),
    }
}

#[derive(Deserialize)]
struct PasswordForm {
    #[serde(default)]
    password: String,
}

async fn reset_password(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<PasswordForm>,
) -> Result<Response, AppError> {
    let user = state.store.get_user(id).await?;
    if let Err(AppError::Input(e)) = check_new_password(&form.password) {
        let notice = format!(
            "The password of {} was not changed: {}",
            user.username, e.message
        );
        return notice_page(&state, notice, StatusCode::UNPROCESSABLE_ENTITY).await;
    }
    state
        .store
        .set_password(&actor, id, &hash_password(&form.password)?)
        .await?;
    let notice = format!(
        "The password of {} was changed; their sessions ended.",
        user.username
    );
    notice_page(&state, notice, StatusCode::OK).await
}

#[derive(Deserialize)]
struct TokenForm {
    #[serde(default)]
    scope: String,
    #[serde(default)]
    name: String,
}

async fn issue_token(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<TokenForm>,
) -> Result<Response, AppError> {
    let user = state.store.get_user(id).await?;
    let Some(scope) = TokenScope::parse(&form.scope) else {
        let notice = format!(
            "No token issued: scope must be one of: {}",
            TokenScope::codes()
        );
        return notice_page(&state, notice, StatusCode::UNPROCESSABLE_ENTITY).await;
    };
    match state
        .store
        .create_token(&actor, id, scope, &form.name)
        .await
    {
        Ok(token) => {
            users_page(
                &state,
                NewUserForm::default(),
                FieldErrors::default(),
                Some((user.username, token)),
                String::new(),
                StatusCode::OK,
            )
            .await
        }
        Err(AppError::Input(e)) => {
            let notice = format!("No token issued: {}: {}", e.field, e.message);
            notice_page(&state, notice, StatusCode::UNPROCESSABLE_ENTITY).await
        }
        Err(other) => Err(other),
    }
}

async fn revoke_token(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    state.store.revoke_token(&actor, id).await?;
    Ok(see_other("/admin/users"))
}

#[derive(Template)]
#[template(path = "admin/settings.html")]
struct SettingsPage {
    settings: TeamSettings,
    server_margin: f64,
    margin_input: String,
    errors: FieldErrors,
}

async fn settings(State(state): State<AppState>) -> Result<Response, AppError> {
    let settings = state.store.team_settings().await?;
    Ok(render(SettingsPage {
        margin_input: settings.margin_c.map(|m| m.to_string()).unwrap_or_default(),
        server_margin: state.config.margin_c,
        settings,
        errors: FieldErrors::default(),
    }))
}

#[derive(Deserialize)]
struct SettingsForm {
    #[serde(default)]
    margin_c: String,
    #[serde(default)]
    allow_unreviewed: String,
    #[serde(default)]
    version: String,
}

async fn save_settings(
    State(state): State<AppState>,
    actor: Actor,
    Form(form): Form<SettingsForm>,
) -> Result<Response, AppError> {
    let max = glasspoint_science::limit::MAX_MARGIN_C;
    let margin = match form.margin_c.trim() {
        "" => Ok(None),
        raw => match raw.parse::<f64>() {
            Ok(m) if (0.0..=max).contains(&m) => Ok(Some(m)),
            _ => Err(AppError::input(
                "margin_c",
                format!("a number of °C from 0 to {max}, or empty for the server's default"),
            )),
        },
    };
    let version = form.version.trim().parse().unwrap_or(0);
    let result = match margin {
        Ok(margin) => {
            state
                .store
                .update_team_settings(&actor, version, margin, form.allow_unreviewed == "on")
                .await
        }
        Err(e) => Err(e),
    };
    match result {
        Ok(()) => Ok(see_other("/admin/settings")),
        Err(e @ (AppError::Input(_) | AppError::Conflict(_))) => {
            let errors = super::formulations::into_field_errors(e)?;
            Ok(render_status(
                StatusCode::UNPROCESSABLE_ENTITY,
                SettingsPage {
                    settings: state.store.team_settings().await?,
                    server_margin: state.config.margin_c,
                    margin_input: form.margin_c,
                    errors,
                },
            ))
        }
        Err(other) => Err(other),
    }
}

#[derive(Template)]
#[template(path = "admin/audit_check.html")]
struct AuditCheckPage {
    check: AuditCheck,
}

async fn audit_check(State(state): State<AppState>) -> Result<Response, AppError> {
    let check = state.store.verify_audit().await?;
    let status = if check.intact {
        StatusCode::OK
    } else {
        StatusCode::CONFLICT
    };
    Ok(render_status(status, AuditCheckPage { check }))
}
