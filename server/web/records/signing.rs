//! Electronic signatures: the signer reads the exact version, states a meaning, and
//! enters their password again.

use crate::web::extract::{Form, Path};
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use serde::Deserialize;

use super::{entity, flatten};
use crate::auth::secrets::verify_password;
use crate::auth::Actor;
use crate::domain::{Entity, FieldError, FieldErrors, SignatureMeaning};
use crate::storage::SignRequest;
use crate::web::{render_status, see_other};
use crate::{AppError, AppState};

#[derive(Template)]
#[template(path = "records/sign.html")]
struct SignPage {
    entity: Entity,
    id: i64,
    version: i64,
    record_page: String,
    fields: Vec<(String, String)>,
    meanings: Vec<(&'static str, &'static str)>,
    form: SignForm,
    errors: FieldErrors,
}

#[derive(Deserialize, Default, Clone)]
pub struct SignForm {
    #[serde(default)]
    pub version: String,
    #[serde(default)]
    pub meaning: String,
    #[serde(default)]
    pub reason: String,
    #[serde(default)]
    pub password: String,
}

fn meanings(entity: Entity) -> Vec<(&'static str, &'static str)> {
    SignatureMeaning::ALL
        .iter()
        .filter(|m| entity == Entity::Formulation || **m != SignatureMeaning::Approved)
        .map(|m| (m.code(), m.label()))
        .collect()
}

async fn sign_page(
    state: &AppState,
    entity: Entity,
    id: i64,
    form: SignForm,
    errors: FieldErrors,
    status: axum::http::StatusCode,
) -> Result<Response, AppError> {
    if !entity.signable() {
        return Err(AppError::NotFound(format!(
            "Signing of a {}",
            entity.label().to_lowercase()
        )));
    }
    let history = state.store.history(entity, id).await?;
    let current = history
        .iter()
        .rev()
        .find(|e| e.after_json.is_some())
        .ok_or_else(|| AppError::NotFound(format!("{} {id}", entity.label())))?;
    let version = current.version.unwrap_or(1);
    let form = SignForm {
        version: if form.version.is_empty() {
            version.to_string()
        } else {
            form.version
        },
        password: String::new(),
        ..form
    };
    Ok(render_status(
        status,
        SignPage {
            entity,
            id,
            version,
            record_page: entity.page(id),
            fields: flatten(current.after_json.as_deref()),
            meanings: meanings(entity),
            form,
            errors,
        },
    ))
}

pub async fn form(
    State(state): State<AppState>,
    Path((kind, id)): Path<(String, i64)>,
) -> Result<Response, AppError> {
    let entity = entity(&kind)?;
    sign_page(
        &state,
        entity,
        id,
        SignForm::default(),
        FieldErrors::default(),
        axum::http::StatusCode::OK,
    )
    .await
}

/// Re-authentication for a signed act: `password` must be the signed-in person's own
/// (an enabled account); otherwise an error naming `password` that ends with `outcome`.
pub async fn confirm_password(
    state: &AppState,
    actor: &Actor,
    password: &str,
    outcome: &str,
) -> Result<(), AppError> {
    let stored = state.store.user_by_name(&actor.username).await?;
    let ok = stored
        .as_ref()
        .is_some_and(|(u, hash)| !u.disabled && verify_password(hash, password));
    if ok {
        Ok(())
    } else {
        Err(AppError::input(
            "password",
            format!("that is not your password; {outcome}"),
        ))
    }
}

pub async fn sign(
    State(state): State<AppState>,
    actor: Actor,
    Path((kind, id)): Path<(String, i64)>,
    Form(form): Form<SignForm>,
) -> Result<Response, AppError> {
    let entity = entity(&kind)?;
    let result = async {
        let meaning = SignatureMeaning::parse(&form.meaning)
            .ok_or_else(|| AppError::input("meaning", "choose what your signature means"))?;
        let version: i64 = form.version.trim().parse().map_err(|_| {
            AppError::input("version", "the form lost the version; reload the page")
        })?;
        // The signer proves it is them, now: the password again.
        confirm_password(&state, &actor, &form.password, "nothing was signed").await?;
        state
            .store
            .sign(
                &actor,
                &SignRequest {
                    entity,
                    id,
                    version,
                    meaning,
                    reason: &form.reason,
                },
            )
            .await
    }
    .await;
    match result {
        Ok(_) => Ok(see_other(&format!(
            "/records/{}/{id}/history",
            entity.code()
        ))),
        Err(AppError::Input(e)) => {
            sign_page(
                &state,
                entity,
                id,
                form,
                e.into(),
                axum::http::StatusCode::UNPROCESSABLE_ENTITY,
            )
            .await
        }
        Err(AppError::Conflict(message)) => {
            let errors: FieldErrors = FieldError::new("version", message).into();
            sign_page(
                &state,
                entity,
                id,
                SignForm {
                    version: String::new(),
                    ..form
                },
                errors,
                axum::http::StatusCode::CONFLICT,
            )
            .await
        }
        Err(other) => Err(other),
    }
}
