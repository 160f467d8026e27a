//! The audit trail for reviewers and administrators: filter, page through, export as CSV.

use crate::web::extract::Query;
use askama::Template;
use axum::extract::State;
use axum::http::header;
use axum::response::{IntoResponse, Response};
use serde::Deserialize;

use crate::domain::{Action, Entity};
use crate::storage::{AuditEvent, AuditFilter, Page};
use crate::web::render;
use crate::{AppError, AppState};

#[derive(Debug, Default, Deserialize, serde::Serialize, Clone, utoipa::IntoParams)]
pub struct AuditQuery {
    #[serde(default)]
    pub entity: String,
    #[serde(default)]
    pub id: String,
    #[serde(default)]
    pub user: String,
    #[serde(default)]
    pub action: String,
    #[serde(default)]
    pub from: String,
    #[serde(default)]
    pub to: String,
    #[serde(default)]
    pub page: String,
}

fn date(raw: &str, field: &str) -> Result<Option<time::Date>, AppError> {
    let raw = raw.trim();
    if raw.is_empty() {
        return Ok(None);
    }
    let mut errors = crate::domain::FieldErrors::default();
    crate::domain::fields::parse_date(&mut errors, field, raw)
        .map(Some)
        .ok_or_else(|| AppError::input(field, "use a date like 2026-12-31"))
}

/// The filter a query asks for; a wrong value is refused naming its field.
pub fn audit_filter(q: &AuditQuery) -> Result<AuditFilter, AppError> {
    let entity = match q.entity.trim() {
        "" => None,
        code => Some(Entity::parse(code).ok_or_else(|| {
            AppError::input("entity", format!("must be one of: {}", Entity::codes()))
        })?),
    };
    let entity_id = match q.id.trim() {
        "" => None,
        raw => Some(
            raw.parse::<i64>()
                .map_err(|_| AppError::input("id", "must be a whole number"))?,
        ),
    };
    let action = match q.action.trim() {
        "" => None,
        code => Some(Action::parse(code).ok_or_else(|| {
            AppError::input("action", format!("must be one of: {}", Action::codes()))
        })?),
    };
    Ok(AuditFilter {
        entity,
        entity_id,
        username: q.user.trim().chars().take(100).collect(),
        action,
        from: date(&q.from, "from")?,
        to: date(&q.to, "to")?,
    })
}

#[derive(Template)]
#[template(path = "records/audit.html")]
struct AuditPage {
    q: AuditQuery,
    page: Page<AuditEvent>,
    entities: Vec<(&'static str, &'static str)>,
    actions: Vec<(&'static str, &'static str)>,
    query_string: String,
    error: String,
}

pub async fn page(
    State(state): State<AppState>,
    Query(q): Query<AuditQuery>,
) -> Result<Response, AppError> {
    let (filter, error) = match audit_filter(&q) {
        Ok(f) => (f, String::new()),
        Err(e) => (AuditFilter::default(), e.public_message()),
    };
    let page_no = q.page.trim().parse().unwrap_or(1);
    let page = state.store.audit_events(&filter, page_no, 100).await?;
    let query_string = serde_urlencoded::to_string(AuditQuery {
        page: String::new(),
        ..q.clone()
    })
    .unwrap_or_default();
    Ok(render(AuditPage {
        q,
        page,
        entities: crate::web::options(Entity::ALL, Entity::code, Entity::label),
        actions: crate::web::options(Action::ALL, Action::code, Action::label),
        query_string,
        error,
    }))
}

/// One CSV field, quoted when it needs to be; cells that a spreadsheet would run as a
/// formula are prefixed with an apostrophe.
fn csv_field(raw: &str) -> String {
    let guarded = if raw.starts_with(['=', '+', '-', '@']) {
        format!("'{raw}")
    } else {
        raw.to_string()
    };
    if guarded.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", guarded.replace('"', "\"\""))
    } else {
        guarded
    }
}

pub async fn csv(
    State(state): State<AppState>,
    Query(q): Query<AuditQuery>,
) -> Result<Response, AppError> {
    let filter = audit_filter(&q)?;
    let events = state.store.audit_events(&filter, 1, 100_000).await?.items;
    let mut out = String::from(
        "seq,at_utc,user_id,username,action,entity,entity_id,version,changed_fields,reason,before,after,hash\n",
    );
    for e in events {
        let row = [
            e.seq.to_string(),
            e.at.clone(),
            e.user_id.map(|v| v.to_string()).unwrap_or_default(),
            e.username.clone(),
            e.action.clone(),
            e.entity.clone(),
            e.entity_id.map(|v| v.to_string()).unwrap_or_default(),
            e.version.map(|v| v.to_string()).unwrap_or_default(),
            e.changed_fields().join(" "),
            e.reason.clone(),
            e.before_json.clone().unwrap_or_default(),
            e.after_json.clone().unwrap_or_default(),
            e.hash.clone(),
        ];
        out.push_str(
            &row.iter()
                .map(|f| csv_field(f))
                .collect::<Vec<_>>()
                .join(","),
        );
        out.push('\n');
    }
    Ok((
        [
            (header::CONTENT_TYPE, "text/csv; charset=utf-8"),
            (
                header::CONTENT_DISPOSITION,
                "attachment; filename=\"glasspoint-audit.csv\"",
            ),
        ],
        out,
    )
        .into_response())
}
