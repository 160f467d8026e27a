//! A record's history: every event, its signatures, any version, and two versions side by
//! side.

use crate::web::extract::{Path, Query};
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use serde::Deserialize;

use super::{entity, flatten, may_see};
use crate::auth::Actor;
use crate::domain::Entity;
use crate::storage::write::signed_content_hash;
use crate::storage::{AuditEvent, Signature};
use crate::web::render;
use crate::{AppError, AppState};

pub struct SignatureView {
    pub s: Signature,
    /// Whether the content it signed is what the record says now.
    pub holds: bool,
}

#[derive(Template)]
#[template(path = "records/history.html")]
struct HistoryPage {
    entity: Entity,
    id: i64,
    record_page: String,
    events: Vec<AuditEvent>,
    versions: Vec<i64>,
    signatures: Vec<SignatureView>,
}

/// Signatures of a record, each marked as holding for the current content or not.
pub async fn signature_views(
    state: &AppState,
    entity: Entity,
    id: i64,
) -> Result<Vec<SignatureView>, AppError> {
    let signatures = state.store.signatures_of(entity, id).await?;
    if signatures.is_empty() {
        return Ok(Vec::new());
    }
    let history = state.store.history(entity, id).await?;
    let current = history
        .iter()
        .rev()
        .find_map(|e| e.after_json.as_deref())
        .and_then(|s| serde_json::from_str::<serde_json::Value>(s).ok())
        .and_then(|v| v.as_object().cloned())
        .map(|m| signed_content_hash(&m))
        .unwrap_or_default();
    Ok(signatures
        .into_iter()
        .map(|s| SignatureView {
            holds: s.content_hash == current,
            s,
        })
        .collect())
}

pub async fn page(
    State(state): State<AppState>,
    actor: Actor,
    Path((kind, id)): Path<(String, i64)>,
) -> Result<Response, AppError> {
    let entity = entity(&kind)?;
    may_see(&actor, entity)?;
    let events = state.store.history(entity, id).await?;
    if events.is_empty() {
        return Err(AppError::NotFound(format!("{} {id}", entity.label())));
    }
    let mut versions: Vec<i64> = events
        .iter()
        .filter(|e| e.after_json.is_some())
        .filter_map(|e| e.version)
        .collect();
    versions.dedup();
    Ok(render(HistoryPage {
        record_page: entity.page(id),
        signatures: signature_views(&state, entity, id).await?,
        entity,
        id,
        events,
        versions,
    }))
}

#[derive(Template)]
#[template(path = "records/version.html")]
struct VersionPage {
    entity: Entity,
    id: i64,
    event: AuditEvent,
    fields: Vec<(String, String)>,
}

pub async fn version(
    State(state): State<AppState>,
    actor: Actor,
    Path((kind, id, version)): Path<(String, i64, i64)>,
) -> Result<Response, AppError> {
    let entity = entity(&kind)?;
    may_see(&actor, entity)?;
    let event = state.store.version_of(entity, id, version).await?;
    Ok(render(VersionPage {
        fields: flatten(event.after_json.as_deref()),
        entity,
        id,
        event,
    }))
}

#[derive(Deserialize)]
pub struct Pair {
    #[serde(default)]
    a: String,
    #[serde(default)]
    b: String,
}

pub struct DiffRow {
    pub field: String,
    pub left: String,
    pub right: String,
    pub changed: bool,
}

#[derive(Template)]
#[template(path = "records/diff.html")]
struct DiffPage {
    entity: Entity,
    id: i64,
    left: AuditEvent,
    right: AuditEvent,
    rows: Vec<DiffRow>,
}

fn version_number(raw: &str, field: &str) -> Result<i64, AppError> {
    raw.trim()
        .parse()
        .map_err(|_| AppError::input(field, "choose a version number"))
}

pub async fn diff(
    State(state): State<AppState>,
    actor: Actor,
    Path((kind, id)): Path<(String, i64)>,
    Query(q): Query<Pair>,
) -> Result<Response, AppError> {
    let entity = entity(&kind)?;
    may_see(&actor, entity)?;
    let (a, b) = (version_number(&q.a, "a")?, version_number(&q.b, "b")?);
    let left = state.store.version_of(entity, id, a.min(b)).await?;
    let right = state.store.version_of(entity, id, a.max(b)).await?;
    let l = flatten(left.after_json.as_deref());
    let r = flatten(right.after_json.as_deref());
    let mut fields: Vec<String> = l.iter().map(|(k, _)| k.clone()).collect();
    for (k, _) in &r {
        if !fields.contains(k) {
            fields.push(k.clone());
        }
    }
    let find = |side: &[(String, String)], k: &str| {
        side.iter()
            .find(|(key, _)| key == k)
            .map(|(_, v)| v.clone())
            .unwrap_or_else(|| "—".into())
    };
    let rows = fields
        .into_iter()
        .map(|field| {
            let (left, right) = (find(&l, &field), find(&r, &field));
            DiffRow {
                changed: left != right,
                field,
                left,
                right,
            }
        })
        .collect();
    Ok(render(DiffPage {
        entity,
        id,
        left,
        right,
        rows,
    }))
}
