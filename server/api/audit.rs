//! `GET /api/v1/audit`: the audit trail as JSON, filtered like the audit page.

use super::extract::Query;
use axum::extract::State;
use axum::routing::get;
use axum::{Json, Router};

use crate::error::ApiError;
use crate::storage::{AuditEvent, Page};
use crate::web::records::{audit_filter, AuditQuery};
use crate::AppState;

pub fn router() -> Router<AppState> {
    Router::new().route("/audit", get(list_audit))
}

/// Audit events, oldest first, 500 a page. Each names the user who caused it.
#[utoipa::path(get, path = "/api/v1/audit", params(AuditQuery),
    responses((status = 200, body = Page<AuditEvent>), (status = 401, body = super::ErrorBody),
              (status = 403, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn list_audit(
    State(state): State<AppState>,
    Query(q): Query<AuditQuery>,
) -> Result<Json<Page<AuditEvent>>, ApiError> {
    let filter = audit_filter(&q)?;
    let page = q.page.trim().parse().unwrap_or(1);
    Ok(Json(state.store.audit_events(&filter, page, 500).await?))
}
