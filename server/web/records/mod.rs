//! The team-record pages: each record's history (with any two versions side by side),
//! electronic signatures, the review queue, and the audit trail with its CSV export.

mod audit;
mod history;
mod review;
mod signing;

use axum::routing::get;
use axum::Router;

use crate::domain::Entity;
use crate::{AppError, AppState};

pub use audit::{audit_filter, AuditQuery};
pub use history::{signature_views, SignatureView};
pub use signing::confirm_password;

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/records/{entity}/{id}/history", get(history::page))
        .route(
            "/records/{entity}/{id}/versions/{version}",
            get(history::version),
        )
        .route("/records/{entity}/{id}/diff", get(history::diff))
        .route(
            "/records/{entity}/{id}/sign",
            get(signing::form).post(signing::sign),
        )
        .route("/review", get(review::queue))
        .route("/audit", get(audit::page))
        .route("/audit.csv", get(audit::csv))
        // A signature form holds a meaning, a reason and a password.
        .layer(axum::extract::DefaultBodyLimit::max(16 * 1024))
}

/// The record kind named in a path, refused clearly when unknown.
fn entity(code: &str) -> Result<Entity, AppError> {
    Entity::parse(code).ok_or_else(|| AppError::NotFound(format!("A record kind called '{code}'")))
}

/// Account and settings histories show sign-ins and roles: reviewers and administrators
/// only.
fn may_see(actor: &crate::auth::Actor, entity: Entity) -> Result<(), AppError> {
    if matches!(entity, Entity::User | Entity::Settings) {
        actor.require(crate::domain::Role::Reviewer)?;
    }
    Ok(())
}

/// One line per field of a stored record, for reading and for diffs: scalars as text,
/// child rows one per line.
pub fn flatten(json: Option<&str>) -> Vec<(String, String)> {
    let Some(value) = json.and_then(|s| serde_json::from_str::<serde_json::Value>(s).ok()) else {
        return Vec::new();
    };
    let Some(map) = value.as_object() else {
        return vec![("value".into(), value.to_string())];
    };
    let mut out = Vec::new();
    for (key, v) in map {
        match v {
            serde_json::Value::Array(rows) if rows.is_empty() => {
                out.push((key.clone(), "—".into()))
            }
            serde_json::Value::Array(rows) => {
                for (i, row) in rows.iter().enumerate() {
                    out.push((format!("{key} {}", i + 1), scalar(row)));
                }
            }
            other => out.push((key.clone(), scalar(other))),
        }
    }
    out
}

fn scalar(v: &serde_json::Value) -> String {
    match v {
        serde_json::Value::Null => "—".into(),
        serde_json::Value::String(s) => s.clone(),
        serde_json::Value::Object(map) => map
            .iter()
            .map(|(k, v)| format!("{k}: {}", scalar(v)))
            .collect::<Vec<_>>()
            .join(", "),
        other => other.to_string(),
    }
}
