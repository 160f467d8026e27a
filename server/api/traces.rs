//! DSC trace endpoints: upload (raw body with the name and conditions in the query, or
//! multipart like the page), the trace with its analysis, and the original bytes.

use axum::extract::{DefaultBodyLimit, Request, State};
use axum::http::{header, StatusCode};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::{Json, Router};

use super::extract::{Path, Query};
use crate::auth::Actor;
use crate::domain::traces::*;
use crate::error::ApiError;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route(
            "/formulations/{id}/traces",
            post(upload_trace).layer(DefaultBodyLimit::max(MAX_TRACE_BYTES)),
        )
        .route("/traces/{id}", get(get_trace))
        .route("/traces/{id}/original", get(get_original))
}

/// A trace and its analysis (in the windows asked for, else suggested ones).
#[derive(serde::Serialize)]
pub struct TraceDetail {
    pub trace: TraceMeta,
    /// The segment analysed (0-based) and what was found; `null` with
    /// `analysis_error` when the windows asked for cannot be analysed.
    pub segment: Option<usize>,
    pub analysis: Option<glasspoint_science::dsc::DscAnalysisOutput>,
    pub analysis_error: Option<crate::domain::FieldError>,
    pub caution: &'static str,
}

async fn detail(state: &AppState, id: i64, q: &WindowQuery) -> Result<TraceDetail, AppError> {
    let trace = state.store.get_trace(id).await?;
    let windows = q.parse()?;
    let data = state.store.trace_data(id).await?;
    let (segment, analysis, analysis_error) = match analyse_trace(&trace, &data, &windows) {
        Ok((s, out)) => (Some(s), Some(out), None),
        Err(e) => (None, None, Some(e)),
    };
    Ok(TraceDetail {
        trace,
        segment,
        analysis,
        analysis_error,
        caution: crate::web::traces::CAUTION,
    })
}

#[utoipa::path(post, path = "/api/v1/formulations/{id}/traces",
    params(("id" = i64, Path, description = "formulation id"),
        ("file_name" = Option<String>, Query, description = "the file's name (raw body)"),
        ("sample_mass_mg" = Option<f64>, Query, description = "sample mass, mg (raw body)"),
        ("heating_rate_c_min" = Option<f64>, Query, description = "heating rate, °C/min (raw body)"),
        ("exo" = Option<String>, Query, description = "up or down (raw body)"),
        ("temperature_column" = Option<usize>, Query, description = "0-based column, when ambiguous"),
        ("heat_flow_column" = Option<usize>, Query, description = "0-based column, when ambiguous")),
    request_body(content = String, description = "the delimited text export as is (or multipart/form-data with a `file` part and the same fields)", content_type = "application/octet-stream"),
    responses((status = 201, description = "the stored trace and its analysis", body = Object),
        (status = 422, body = super::ErrorBody)))]
pub async fn upload_trace(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Query(query): Query<TraceForm>,
    req: Request,
) -> Result<Response, ApiError> {
    state.store.get_formulation(id).await?;
    let multipart = req
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .is_some_and(|v| {
            v.trim_start()
                .to_ascii_lowercase()
                .starts_with("multipart/form-data")
        });
    let (form, bytes) = if multipart {
        crate::web::traces::read_multipart(req).await?
    } else {
        let bytes = crate::web::extract::body_bytes(req, &state).await?;
        (query, bytes.to_vec())
    };
    let draft = match form.parse(bytes) {
        Ok(d) => d,
        Err(UploadRefusal::Fields(e)) => return Err(AppError::Fields(e).into()),
        Err(UploadRefusal::Ambiguous(p)) => {
            let what: Vec<String> = p
                .ambiguities
                .iter()
                .map(|(purpose, candidates, chosen, reason)| {
                    format!("{purpose}: columns {candidates:?} (guess {chosen}; {reason})")
                })
                .collect();
            return Err(AppError::input(
                "temperature_column",
                format!(
                    "several columns could serve: {}; give temperature_column and heat_flow_column (0-based) and send it again (nothing was stored)",
                    what.join("; ")
                ),
            )
            .into());
        }
    };
    let trace_id = state.store.create_trace(&actor, id, &draft).await?;
    let body = detail(&state, trace_id, &WindowQuery::default()).await?;
    Ok((StatusCode::CREATED, Json(body)).into_response())
}

#[utoipa::path(get, path = "/api/v1/traces/{id}",
    params(("id" = i64, Path, description = "trace id"),
        ("gt_lo" = Option<f64>, Query, description = "glass-transition window, °C"),
        ("gt_hi" = Option<f64>, Query, description = "glass-transition window, °C"),
        ("p0_lo" = Option<f64>, Query, description = "first peak window, °C (p1…p3 likewise)"),
        ("p0_hi" = Option<f64>, Query, description = "first peak window, °C")),
    responses((status = 200, description = "the trace's metadata and analysis", body = Object),
        (status = 404, body = super::ErrorBody)))]
pub async fn get_trace(
    State(state): State<AppState>,
    Path(id): Path<i64>,
    Query(q): Query<WindowQuery>,
) -> Result<Json<TraceDetail>, ApiError> {
    Ok(Json(detail(&state, id, &q).await?))
}

#[utoipa::path(get, path = "/api/v1/traces/{id}/original",
    params(("id" = i64, Path, description = "trace id")),
    responses((status = 200, description = "the file as uploaded, byte for byte", content_type = "application/octet-stream"),
        (status = 404, body = super::ErrorBody)))]
pub async fn get_original(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, ApiError> {
    Ok(crate::web::traces::original_response(&state, id).await?)
}
