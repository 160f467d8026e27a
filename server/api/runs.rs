//! Run endpoints: the list, recording a run (multipart, like the page: the run's fields
//! and the dryer's export as `file`), replacing its data, the run with its reading, and
//! the original export.

use axum::extract::{DefaultBodyLimit, Request, State};
use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::{Json, Router};
use glasspoint_science::runs::{
    Excursion, KvFit, Phase, PressureEndPoint, ProbeArrival, RpFit, RpResult, SecondaryKinetics,
};

use super::extract::{Path, Query};
use crate::auth::Actor;
use crate::domain::runs::*;
use crate::error::ApiError;
use crate::runs::{kv_series, load_context, rp_of_run, rp_series, secondary, GravimetricRow};
use crate::storage::{ModelCheck, RunFilter};
use crate::web::runs::form::{form_of, read_export as read_with_map, typed_map};
use crate::web::upload::{read_upload, Upload};
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    // The same limit the app-wide layer allows these routes (`web::upload_limit`).
    let upload =
        DefaultBodyLimit::max(crate::web::upload_limit("/runs").unwrap_or(MAX_RUN_FILE_BYTES));
    Router::new()
        .route("/runs", get(list_runs).post(create_run).layer(upload))
        .route("/runs/{id}", get(get_run).put(update_run).layer(upload))
        .route("/runs/{id}/data", post(replace_data).layer(upload))
        .route("/runs/{id}/original", get(get_original))
}

#[derive(serde::Deserialize, Default, utoipa::IntoParams)]
#[serde(default)]
pub struct RunQuery {
    pub cycle_id: Option<i64>,
    pub formulation_id: Option<i64>,
    pub container_id: Option<i64>,
    /// "development" or "gravimetric".
    pub kind: Option<String>,
}

#[utoipa::path(get, path = "/api/v1/runs", params(RunQuery),
    responses((status = 200, description = "runs, newest first", body = Vec<Run>),
        (status = 422, body = super::ErrorBody)))]
pub async fn list_runs(
    State(state): State<AppState>,
    Query(q): Query<RunQuery>,
) -> Result<Json<Vec<Run>>, ApiError> {
    let kind = match q.kind.as_deref().map(str::trim).filter(|k| !k.is_empty()) {
        Some(k) => Some(RunKind::parse(k).ok_or_else(|| {
            AppError::input("kind", format!("“{k}” is not one of: {}", RunKind::codes()))
        })?),
        None => None,
    };
    let filter = RunFilter {
        cycle_id: q.cycle_id,
        formulation_id: q.formulation_id,
        container_id: q.container_id,
        kind,
    };
    Ok(Json(state.store.list_runs(filter).await?))
}

/// One location's gravimetric Kv in a run.
#[derive(serde::Serialize)]
pub struct GravimetricView {
    pub location: VialLocation,
    pub vials: usize,
    pub mean_loss_g: f64,
    pub probes: String,
    pub kv_w_m2k: Option<f64>,
    pub kv_cal_s_cm2_k: Option<f64>,
    pub problem: Option<String>,
}

impl From<&GravimetricRow> for GravimetricView {
    fn from(g: &GravimetricRow) -> Self {
        GravimetricView {
            location: g.location,
            vials: g.vials,
            mean_loss_g: g.mean_loss_g,
            probes: g.probes.clone(),
            kv_w_m2k: g.kv.as_ref().ok().map(|k| k.kv_w_m2k),
            kv_cal_s_cm2_k: g.kv.as_ref().ok().map(|k| k.kv_cal_s_cm2_k),
            problem: g.kv.as_ref().err().cloned(),
        }
    }
}

/// A run and everything read from it.
#[derive(serde::Serialize)]
pub struct RunReport {
    pub run: Run,
    pub chamber_pressure_mtorr: f64,
    pub phases: Vec<Phase>,
    pub end_point: Option<PressureEndPoint>,
    pub end_point_problem: Option<String>,
    pub probe_arrivals: Vec<ProbeArrival>,
    pub measured_end_h: Option<f64>,
    pub measured_end_basis: Option<String>,
    pub max_product_temp_c: Option<f64>,
    pub excursions: Vec<Excursion>,
    pub prediction: Option<crate::runs::PredictionSummary>,
    pub prediction_problem: Option<String>,
    /// The model's error against this run, one row per basis it was checked on.
    pub model_checks: Vec<ModelCheck>,
    pub gravimetric: Vec<GravimetricView>,
    /// Kv over pressure across the container's gravimetric tests.
    pub kv_fit: Option<KvFit>,
    pub edge_heat_factor: Option<f64>,
    pub resistance: Option<RpResult>,
    pub resistance_problem: Option<String>,
    /// Rp of the probed formulation fitted over every cycle run probing it.
    pub resistance_across_runs: Option<RpFit>,
    pub resistance_runs: Vec<i64>,
    pub secondary_drying: Option<SecondaryKinetics>,
    pub secondary_drying_problem: Option<String>,
    pub caution: &'static str,
}

fn split<T>(r: Option<Result<T, String>>) -> (Option<T>, Option<String>) {
    match r {
        Some(Ok(v)) => (Some(v), None),
        Some(Err(e)) => (None, Some(e)),
        None => (None, None),
    }
}

async fn report(state: &AppState, id: i64) -> Result<RunReport, AppError> {
    let ctx = load_context(&state.store, id, state.config.margin_c).await?;
    let reading = ctx.reading.as_ref();
    let measured_end = reading.and_then(|r| r.measured_end.clone());
    if let Some(Ok(p)) = &ctx.prediction {
        let check = p.model_check(measured_end.as_ref().map(|m| m.end_h));
        state.store.record_model_check(id, &check).await?;
    }
    let (prediction, prediction_problem) = split(
        ctx.prediction
            .as_ref()
            .map(|r| r.as_ref().map(|p| p.summary()).map_err(Clone::clone)),
    );
    let (end_point, end_point_problem) = split(reading.and_then(|r| r.end_point.clone()));
    let kv = if ctx.run.kind == RunKind::Gravimetric {
        Some(kv_series(&state.store, &ctx.container, ctx.run.dryer_id).await?)
    } else {
        None
    };
    let gravimetric = kv
        .as_ref()
        .and_then(|k| k.rows.iter().find(|r| r.run_id == id))
        .map(|r| r.rows.iter().map(GravimetricView::from).collect())
        .unwrap_or_default();
    let kv_fit = kv.as_ref().and_then(|k| k.fit.clone()).and_then(Result::ok);
    let edge_heat_factor = kv
        .as_ref()
        .and_then(|k| k.edge_factor.clone())
        .and_then(Result::ok);
    let (resistance, resistance_problem) = split(if ctx.run.kind == RunKind::Development {
        rp_of_run(&ctx)
    } else {
        None
    });
    let across = match (&ctx.run.kind, &ctx.formulation) {
        (RunKind::Development, Some(f)) => {
            Some(rp_series(&state.store, f.id, state.config.margin_c).await?)
        }
        _ => None,
    };
    let (secondary_drying, secondary_drying_problem) = split(secondary(
        &ctx.run.moisture,
        None,
        Some(ctx.cycle.program.secondary.shelf_temp_c),
    ));
    Ok(RunReport {
        chamber_pressure_mtorr: ctx.pressure_mtorr,
        phases: reading.map(|r| r.phases.clone()).unwrap_or_default(),
        end_point,
        end_point_problem,
        probe_arrivals: reading.map(|r| r.arrivals.clone()).unwrap_or_default(),
        measured_end_h: measured_end.as_ref().map(|m| m.end_h),
        measured_end_basis: measured_end.map(|m| m.basis),
        max_product_temp_c: reading.and_then(|r| r.limit_c),
        excursions: reading.map(|r| r.excursions.clone()).unwrap_or_default(),
        prediction,
        prediction_problem,
        model_checks: state.store.model_checks_of(id).await?,
        gravimetric,
        kv_fit,
        edge_heat_factor,
        resistance,
        resistance_problem,
        resistance_across_runs: across
            .as_ref()
            .and_then(|a| a.fit.clone())
            .and_then(Result::ok),
        resistance_runs: across.map(|a| a.run_ids()).unwrap_or_default(),
        secondary_drying,
        secondary_drying_problem,
        caution: crate::runs::CAUTION,
        run: ctx.run,
    })
}

#[utoipa::path(get, path = "/api/v1/runs/{id}",
    params(("id" = i64, Path, description = "run id")),
    responses((status = 200, description = "the run, its reading, the prediction against it and what it yields", body = Object),
        (status = 404, body = super::ErrorBody)))]
pub async fn get_run(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Json<RunReport>, ApiError> {
    Ok(Json(report(&state, id).await?))
}

/// The export read with the columns given (`map_header`/`map_role` pairs), else the
/// dryer's remembered ones, else guessed; a 422 naming `mapping` lists the columns when
/// they must be chosen.
async fn read_export(
    state: &AppState,
    up: Upload,
    dryer_id: Option<i64>,
) -> Result<Result<Option<(RecordedData, Vec<(String, String)>)>, Response>, AppError> {
    if up.bytes.is_empty() {
        return Ok(Ok(None));
    }
    let typed = typed_map(&up);
    let read = read_with_map(state, &up.file_name, up.bytes, &typed, dryer_id).await?;
    match read {
        Ok(ReadOutcome::Ready { data, mapping }) => Ok(Ok(Some((data, mapping)))),
        Ok(ReadOutcome::NeedsMapping(req)) => {
            let body = serde_json::json!({
                "error": "choose what each column holds: send map_header and map_role for every column",
                "field": "mapping",
                "columns": req.columns.iter().map(|c| serde_json::json!({
                    "header": c.header, "unit": c.unit.map(|u| u.label()), "suggested": c.suggested.to_string(),
                })).collect::<Vec<_>>(),
                "reasons": req.reasons,
                "preview": req.preview,
            });
            Ok(Err(
                (StatusCode::UNPROCESSABLE_ENTITY, Json(body)).into_response()
            ))
        }
        Err(errors) => Err(AppError::Fields(errors)),
    }
}

#[utoipa::path(post, path = "/api/v1/runs",
    request_body(content = String, description = "multipart/form-data with the run form's fields (name, kind, cycle_id, dryer_id, run_on, container_id, vial_count, fill_volume_ml, formulation_ids (repeated), probed_formulation_id, chamber_pressure_mtorr, test_start_h, test_end_h, cake_appearance, cake_notes, notes, moisture, weights) and optionally the dryer's export as `file` with map_header/map_role pairs", content_type = "multipart/form-data"),
    responses((status = 201, description = "the run recorded, with its reading", body = Object),
        (status = 422, body = super::ErrorBody)))]
pub async fn create_run(
    State(state): State<AppState>,
    actor: Actor,
    req: Request,
) -> Result<Response, ApiError> {
    let up = read_upload(req).await?;
    let draft = form_of(&up).parse().map_err(AppError::Fields)?;
    let read = match read_export(&state, up, draft.dryer_id).await? {
        Ok(r) => r,
        Err(response) => return Ok(response),
    };
    let id = state
        .store
        .create_run(&actor, &draft, read.as_ref().map(|r| &r.0))
        .await?;
    if let (Some(dryer), Some((_, map))) = (draft.dryer_id, &read) {
        state.store.remember_column_map(&actor, dryer, map).await?;
    }
    Ok((StatusCode::CREATED, Json(report(&state, id).await?)).into_response())
}

#[utoipa::path(put, path = "/api/v1/runs/{id}",
    params(("id" = i64, Path, description = "run id")),
    request_body(content = String, description = "multipart/form-data with every field of the run form (as for POST /api/v1/runs), `version` (the run's version seen), `reason` (needed once the run is reviewed) and optionally a new export as `file`: one change", content_type = "multipart/form-data"),
    responses((status = 200, description = "the run as changed, with its reading", body = Object),
        (status = 409, body = super::ErrorBody),
        (status = 422, body = super::ErrorBody)))]
pub async fn update_run(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    req: Request,
) -> Result<Response, ApiError> {
    state.store.get_run(id).await?;
    let up = read_upload(req).await?;
    let form = form_of(&up);
    let version: i64 = form
        .version
        .trim()
        .parse()
        .map_err(|_| AppError::input("version", "give the run's version you saw"))?;
    let draft = form.parse().map_err(AppError::Fields)?;
    let read = match read_export(&state, up, draft.dryer_id).await? {
        Ok(r) => r,
        Err(response) => return Ok(response),
    };
    state
        .store
        .update_run(
            &actor,
            id,
            version,
            &draft,
            read.as_ref().map(|r| &r.0),
            &form.reason,
        )
        .await?;
    if let (Some(dryer), Some((_, map))) = (draft.dryer_id, &read) {
        state.store.remember_column_map(&actor, dryer, map).await?;
    }
    Ok(Json(report(&state, id).await?).into_response())
}

#[utoipa::path(post, path = "/api/v1/runs/{id}/data",
    params(("id" = i64, Path, description = "run id")),
    request_body(content = String, description = "multipart/form-data: `file` (the dryer's export), `version` (the run's version seen), `reason` (needed once the run is reviewed), optional map_header/map_role pairs", content_type = "multipart/form-data"),
    responses((status = 200, description = "the run with its new data read", body = Object),
        (status = 409, body = super::ErrorBody),
        (status = 422, body = super::ErrorBody)))]
pub async fn replace_data(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    req: Request,
) -> Result<Response, ApiError> {
    let run = state.store.get_run(id).await?;
    let up = read_upload(req).await?;
    let version: i64 = up
        .text("version")
        .trim()
        .parse()
        .map_err(|_| AppError::input("version", "give the run's version you saw"))?;
    let reason = up.text("reason");
    if up.bytes.is_empty() {
        return Err(AppError::input("file", "send the dryer's export as the `file` part").into());
    }
    let (data, map) = match read_export(&state, up, run.dryer_id).await? {
        Ok(Some(r)) => r,
        Ok(None) => return Err(AppError::input("file", "the file is empty").into()),
        Err(response) => return Ok(response),
    };
    state
        .store
        .set_run_data(&actor, id, version, &data, &reason)
        .await?;
    if let Some(dryer) = run.dryer_id {
        state.store.remember_column_map(&actor, dryer, &map).await?;
    }
    Ok(Json(report(&state, id).await?).into_response())
}

#[utoipa::path(get, path = "/api/v1/runs/{id}/original",
    params(("id" = i64, Path, description = "run id")),
    responses((status = 200, description = "the export as uploaded, byte for byte", content_type = "application/octet-stream"),
        (status = 404, body = super::ErrorBody)))]
pub async fn get_original(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, ApiError> {
    let (name, bytes) = state.store.run_original(id).await?;
    Ok(crate::web::upload::attachment(&name, bytes))
}
