//! Candidate cycles through the API: list, get with each link's verdict, create, update,
//! and link a formulation.

use super::extract::Path;
use crate::auth::Actor;
use axum::extract::State;
use axum::http::StatusCode;
use axum::routing::{get, post};
use axum::{Json, Router};
use glasspoint_science::verdict::{validate_cycle, CycleProgram, CycleVerdict};
use serde::{Deserialize, Serialize};
use utoipa::ToSchema;

use super::ApiJson;
use crate::domain::*;
use crate::error::ApiError;
use crate::storage::Page;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/cycles", get(list_cycles).post(create_cycle))
        .route("/cycles/{id}", get(get_cycle).put(update_cycle))
        .route("/cycles/{id}/links", post(create_link))
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct CycleInput {
    pub name: String,
    #[serde(default)]
    pub notes: String,
    /// {freezing, annealing?, primary, secondary, condenser_temp_c?}, holds in minutes.
    #[schema(value_type = Object)]
    pub program: CycleProgram,
    pub sublimation_ceiling_kg_h_m2: Option<f64>,
    /// Required on update: the version you read.
    pub version: Option<i64>,
}

impl CycleInput {
    /// The same checks as the cycle form: shared limits on name and notes, the ceiling,
    /// then the program itself.
    fn draft(&self) -> Result<CycleDraft, AppError> {
        let mut e = FieldErrors::default();
        let (name, notes) = check_cycle_fields(
            &mut e,
            &self.name,
            &self.notes,
            self.sublimation_ceiling_kg_h_m2,
        );
        if e.is_empty() {
            if let Err(err) = validate_cycle(&self.program) {
                e.add(format!("program.{}", err.field), err.message);
            }
        }
        let draft = e.into_result(CycleDraft {
            name,
            notes,
            program: self.program.clone(),
            sublimation_ceiling_kg_h_m2: self.sublimation_ceiling_kg_h_m2,
        })?;
        Ok(draft)
    }
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct LinkInput {
    pub formulation_id: i64,
    pub container_id: i64,
    /// Defaults to the formulation's own target fill.
    pub fill_volume_ml: Option<f64>,
    /// The dryer the load runs in; without one the equipment is not checked.
    pub dryer_id: Option<i64>,
    /// Vials in the load; without it a named dryer's shelves are taken as full.
    pub vial_count: Option<i64>,
    /// Share of the load in edge positions, 0 to below 1 (default 0.10).
    pub edge_vial_share: Option<f64>,
}

/// One class of vials of the load through primary drying.
#[derive(Debug, Serialize, ToSchema)]
pub struct ClassView {
    /// centre | centre_low_kv | centre_high_kv | edge
    pub class: String,
    pub label: String,
    /// Share of the load.
    pub share: f64,
    /// Kv over the vial type's nominal Kv.
    pub kv_factor: f64,
    pub peak_front_temp_c: f64,
    pub peak_bottom_temp_c: f64,
    pub drying_time_h: f64,
    /// Highest sublimation rate of one vial of the class, g/h.
    pub peak_sublimation_rate_g_h: f64,
}

/// The load through primary drying: its vial classes and when they run out of ice.
#[derive(Debug, Serialize, ToSchema)]
pub struct BatchView {
    pub classes: Vec<ClassView>,
    /// When the first vials (the fastest class) are dry, h.
    pub first_dry_h: f64,
    /// When the last vials (the slowest class) are dry, h.
    pub last_dry_h: f64,
    pub vial_count: Option<f64>,
    /// Highest total sublimation rate of the load, kg/h (with a vial count).
    pub peak_sublimation_kg_h: Option<f64>,
    /// Highest sublimation rate of one average vial, g/h.
    pub peak_mean_rate_g_h: f64,
}

impl BatchView {
    fn of(b: &glasspoint_science::batch::BatchResult) -> Self {
        BatchView {
            classes: b
                .classes
                .iter()
                .map(|c| ClassView {
                    class: serde_json::to_value(c.class)
                        .ok()
                        .and_then(|v| v.as_str().map(str::to_string))
                        .unwrap_or_default(),
                    label: c.class.label().to_string(),
                    share: c.share,
                    kv_factor: c.kv_factor,
                    peak_front_temp_c: c.peak_front_temp_c,
                    peak_bottom_temp_c: c.peak_bottom_temp_c,
                    drying_time_h: c.drying_time_h,
                    peak_sublimation_rate_g_h: c.peak_sublimation_rate_g_h,
                })
                .collect(),
            first_dry_h: b.first_dry_h,
            last_dry_h: b.last_dry_h,
            vial_count: b.vial_count,
            peak_sublimation_kg_h: b.peak_sublimation_kg_h,
            peak_mean_rate_g_h: b.peak_mean_rate_g_h,
        }
    }
}

/// One link with what the model and the checks say of it.
#[derive(Debug, Serialize, ToSchema)]
pub struct LinkVerdict {
    pub link: CycleLink,
    pub max_product_temp_c: Option<f64>,
    /// When the last vials of the load are dry (the slowest class), h.
    pub predicted_drying_time_h: Option<f64>,
    /// The warmest class's peak front temperature, °C.
    pub peak_front_temp_c: Option<f64>,
    /// The load's vial classes, first and last dry, peak total sublimation rate.
    pub batch: Option<BatchView>,
    #[schema(value_type = Object)]
    pub verdict: Option<CycleVerdict>,
    /// Why there is no verdict, when there is none.
    pub verdict_error: Option<String>,
}

#[derive(Debug, Serialize, ToSchema)]
pub struct CycleDetail {
    pub cycle: Cycle,
    pub links: Vec<LinkVerdict>,
}

#[utoipa::path(get, path = "/api/v1/cycles", responses((status = 200, description = "{items, page, per_page, total, pages}; archived cycles included")))]
pub async fn list_cycles(State(state): State<AppState>) -> Result<Json<Page<Cycle>>, ApiError> {
    let items = state.store.list_cycles(true).await?;
    let total = items.len() as i64;
    Ok(Json(Page {
        items,
        page: 1,
        per_page: total.max(1),
        total,
        pages: 1,
    }))
}

#[utoipa::path(get, path = "/api/v1/cycles/{id}",
    params(("id" = i64, Path, description = "record id")),
    responses((status = 200, body = CycleDetail), (status = 404, body = super::ErrorBody)))]
pub async fn get_cycle(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Json<CycleDetail>, ApiError> {
    let cycle = state.store.get_cycle(id).await?;
    let mut links = Vec::new();
    for link in state.store.links_of_cycle(id).await? {
        let a = crate::derive::assess(&state.store, link, state.config.margin_c).await?;
        let (verdict, verdict_error) = match a.verdict {
            Ok(v) => (Some(v), None),
            Err(e) => (None, Some(e)),
        };
        links.push(LinkVerdict {
            max_product_temp_c: a.derived.max_product_temp_c(),
            predicted_drying_time_h: a.batch.as_ref().map(|b| b.last_dry_h),
            peak_front_temp_c: a.batch.as_ref().map(|b| {
                b.classes
                    .iter()
                    .map(|c| c.peak_front_temp_c)
                    .fold(f64::NEG_INFINITY, f64::max)
            }),
            batch: a.batch.as_ref().map(BatchView::of),
            link: a.link,
            verdict,
            verdict_error,
        });
    }
    Ok(Json(CycleDetail { cycle, links }))
}

#[utoipa::path(post, path = "/api/v1/cycles", request_body = CycleInput,
    responses((status = 201, body = CycleDetail), (status = 422, body = super::ErrorBody)))]
pub async fn create_cycle(
    State(state): State<AppState>,
    actor: Actor,
    ApiJson(input): ApiJson<CycleInput>,
) -> Result<(StatusCode, Json<CycleDetail>), ApiError> {
    let id = state.store.create_cycle(&actor, &input.draft()?).await?;
    let detail = get_cycle(State(state), Path(id)).await?;
    Ok((StatusCode::CREATED, detail))
}

#[utoipa::path(put, path = "/api/v1/cycles/{id}",
    params(("id" = i64, Path, description = "record id")), request_body = CycleInput,
    responses((status = 200, body = CycleDetail), (status = 404, body = super::ErrorBody),
              (status = 409, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn update_cycle(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<CycleInput>,
) -> Result<Json<CycleDetail>, ApiError> {
    let draft = input.draft()?;
    let version = input.version.ok_or_else(|| {
        AppError::input(
            "version",
            "is required on update: send the version you read",
        )
    })?;
    state
        .store
        .update_cycle(&actor, id, version, &draft)
        .await?;
    get_cycle(State(state), Path(id)).await
}

#[utoipa::path(post, path = "/api/v1/cycles/{id}/links",
    params(("id" = i64, Path, description = "record id")), request_body = LinkInput,
    responses((status = 201, body = CycleDetail), (status = 404, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn create_link(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<LinkInput>,
) -> Result<(StatusCode, Json<CycleDetail>), ApiError> {
    let fill = match input.fill_volume_ml {
        Some(v) => v,
        None => match state.store.get_formulation(input.formulation_id).await {
            Ok(f) => f.fill_volume_ml.ok_or_else(|| {
                AppError::input(
                    "fill_volume_ml",
                    "is required: the formulation has no target fill",
                )
            })?,
            Err(AppError::NotFound(_)) => {
                return Err(AppError::input("formulation_id", "unknown formulation").into())
            }
            Err(e) => return Err(e.into()),
        },
    };
    let form = LinkForm {
        formulation_id: input.formulation_id.to_string(),
        container_id: input.container_id.to_string(),
        fill_volume_ml: number_text(fill),
        dryer_id: input.dryer_id.map(|v| v.to_string()).unwrap_or_default(),
        vial_count: input.vial_count.map(|v| v.to_string()).unwrap_or_default(),
        edge_vial_share: input.edge_vial_share.map(number_text).unwrap_or_default(),
    };
    state.store.create_link(&actor, id, &form.parse()?).await?;
    let detail = get_cycle(State(state), Path(id)).await?;
    Ok((StatusCode::CREATED, detail))
}
