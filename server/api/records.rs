//! Record endpoints: list, get, create, update for formulations, materials, measurements
//! containers and dryers.

use super::extract::{Path, Query};
use crate::auth::Actor;
use axum::extract::State;
use axum::http::StatusCode;
use axum::routing::get;
use axum::{Json, Router};
use serde::Deserialize;

use super::input::*;
use super::ApiJson;
use crate::domain::*;
use crate::error::ApiError;
use crate::storage::{FormulationSummary, Page};
use crate::web::FormulationListQuery;
use crate::{AppError, AppState};

type ApiResult<T> = Result<T, ApiError>;

pub fn router() -> Router<AppState> {
    Router::new()
        .route(
            "/formulations",
            get(list_formulations).post(create_formulation),
        )
        .route(
            "/formulations/{id}",
            get(get_formulation).put(update_formulation),
        )
        .route("/materials", get(list_materials).post(create_material))
        .route("/materials/{id}", get(get_material).put(update_material))
        .route(
            "/measurements",
            get(list_measurements).post(create_measurement),
        )
        .route(
            "/measurements/{id}",
            get(get_measurement).put(update_measurement),
        )
        .route("/containers", get(list_containers).post(create_container))
        .route("/containers/{id}", get(get_container).put(update_container))
        .route("/dryers", get(list_dryers).post(create_dryer))
        .route("/dryers/{id}", get(get_dryer).put(update_dryer))
}

/// Renames the fields of a validation error to their JSON spelling.
fn renamed(e: AppError, rename: impl Fn(&str) -> String) -> AppError {
    match e {
        AppError::Fields(all) => {
            let mut out = FieldErrors::default();
            for (f, m) in all.iter() {
                out.add(rename(f), m.clone());
            }
            AppError::Fields(out)
        }
        AppError::Input(one) => AppError::input(rename(&one.field), one.message),
        other => other,
    }
}

fn required_version(v: Option<i64>) -> Result<i64, AppError> {
    v.ok_or_else(|| {
        AppError::input(
            "version",
            "is required on update: send the version you read",
        )
    })
}

/// A list that is not paged in storage, wrapped in the same shape as paged ones.
fn whole<T>(items: Vec<T>) -> Page<T> {
    let total = items.len() as i64;
    Page {
        items,
        page: 1,
        per_page: total.max(1),
        total,
        pages: 1,
    }
}

#[derive(Deserialize)]
pub struct Paging {
    pub page: Option<i64>,
    pub per_page: Option<i64>,
    pub formulation_id: Option<i64>,
}

// ------------------------------------------------------------------ formulations

#[utoipa::path(get, path = "/api/v1/formulations",
    params(("q" = Option<String>, Query, description = "code, name or material"),
           ("project" = Option<String>, Query), ("status" = Option<String>, Query),
           ("has_tg_prime" = Option<String>, Query), ("has_collapse" = Option<String>, Query),
           ("sort" = Option<String>, Query, description = "code | name | project | status | updated"),
           ("page" = Option<i64>, Query), ("per_page" = Option<i64>, Query)),
    responses((status = 200, description = "One page of formulations: {items, page, per_page, total, pages}")))]
pub async fn list_formulations(
    State(state): State<AppState>,
    Query(q): Query<FormulationListQuery>,
    Query(paging): Query<Paging>,
) -> ApiResult<Json<Page<FormulationSummary>>> {
    let page = state
        .store
        .search_formulations(
            &q.filter(),
            q.sort(),
            q.page(),
            paging.per_page.unwrap_or(50),
        )
        .await?;
    Ok(Json(page))
}

#[utoipa::path(get, path = "/api/v1/formulations/{id}",
    params(("id" = i64, Path, description = "record id")),
    responses((status = 200, body = Formulation), (status = 404, body = super::ErrorBody)))]
pub async fn get_formulation(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> ApiResult<Json<Formulation>> {
    Ok(Json(state.store.get_formulation(id).await?))
}

#[utoipa::path(post, path = "/api/v1/formulations", request_body = FormulationInput,
    responses((status = 201, body = Formulation), (status = 422, body = super::ErrorBody)))]
pub async fn create_formulation(
    State(state): State<AppState>,
    actor: Actor,
    ApiJson(input): ApiJson<FormulationInput>,
) -> ApiResult<(StatusCode, Json<Formulation>)> {
    let created = async {
        let draft = input.to_form().parse()?;
        let id = state.store.create_formulation(&actor, &draft).await?;
        state.store.get_formulation(id).await
    }
    .await
    .map_err(|e| renamed(e, formulation_field))?;
    Ok((StatusCode::CREATED, Json(created)))
}

#[utoipa::path(put, path = "/api/v1/formulations/{id}",
    params(("id" = i64, Path, description = "record id")), request_body = FormulationInput,
    responses((status = 200, body = Formulation), (status = 404, body = super::ErrorBody),
              (status = 409, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn update_formulation(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<FormulationInput>,
) -> ApiResult<Json<Formulation>> {
    let updated = async {
        let draft = input.to_form().parse()?;
        let version = required_version(input.version)?;
        state
            .store
            .update_formulation(&actor, id, version, &draft, &input.reason)
            .await?;
        state.store.get_formulation(id).await
    }
    .await
    .map_err(|e| renamed(e, formulation_field))?;
    Ok(Json(updated))
}

// ------------------------------------------------------------------ materials

#[utoipa::path(get, path = "/api/v1/materials", responses((status = 200, description = "{items, page, per_page, total, pages}")))]
pub async fn list_materials(State(state): State<AppState>) -> ApiResult<Json<Page<Material>>> {
    Ok(Json(whole(state.store.list_materials().await?)))
}

#[utoipa::path(get, path = "/api/v1/materials/{id}",
    params(("id" = i64, Path, description = "record id")),
    responses((status = 200, body = Material), (status = 404, body = super::ErrorBody)))]
pub async fn get_material(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> ApiResult<Json<Material>> {
    Ok(Json(state.store.get_material(id).await?))
}

#[utoipa::path(post, path = "/api/v1/materials", request_body = MaterialInput,
    responses((status = 201, body = Material), (status = 422, body = super::ErrorBody)))]
pub async fn create_material(
    State(state): State<AppState>,
    actor: Actor,
    ApiJson(input): ApiJson<MaterialInput>,
) -> ApiResult<(StatusCode, Json<Material>)> {
    let form = input.to_form().map_err(AppError::Input)?;
    let created = async {
        let draft = form.parse()?;
        let id = state.store.create_material(&actor, &draft).await?;
        state.store.get_material(id).await
    }
    .await
    .map_err(|e| renamed(e, |f| input.field(f)))?;
    Ok((StatusCode::CREATED, Json(created)))
}

#[utoipa::path(put, path = "/api/v1/materials/{id}",
    params(("id" = i64, Path, description = "record id")), request_body = MaterialInput,
    responses((status = 200, body = Material), (status = 404, body = super::ErrorBody),
              (status = 409, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn update_material(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<MaterialInput>,
) -> ApiResult<Json<Material>> {
    let form = input.to_form().map_err(AppError::Input)?;
    let updated = async {
        let draft = form.parse()?;
        let version = required_version(input.version)?;
        state
            .store
            .update_material(&actor, id, version, &draft)
            .await?;
        state.store.get_material(id).await
    }
    .await
    .map_err(|e| renamed(e, |f| input.field(f)))?;
    Ok(Json(updated))
}

// ------------------------------------------------------------------ measurements

fn today() -> time::Date {
    time::OffsetDateTime::now_utc().date()
}

#[utoipa::path(get, path = "/api/v1/measurements",
    params(("formulation_id" = Option<i64>, Query), ("page" = Option<i64>, Query), ("per_page" = Option<i64>, Query)),
    responses((status = 200, description = "{items, page, per_page, total, pages}, newest first")))]
pub async fn list_measurements(
    State(state): State<AppState>,
    Query(paging): Query<Paging>,
) -> ApiResult<Json<Page<Measurement>>> {
    Ok(Json(
        state
            .store
            .list_measurements(
                paging.formulation_id,
                paging.page.unwrap_or(1),
                paging.per_page.unwrap_or(100),
            )
            .await?,
    ))
}

#[utoipa::path(get, path = "/api/v1/measurements/{id}",
    params(("id" = i64, Path, description = "record id")),
    responses((status = 200, body = Measurement), (status = 404, body = super::ErrorBody)))]
pub async fn get_measurement(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> ApiResult<Json<Measurement>> {
    Ok(Json(state.store.get_measurement(id).await?))
}

#[utoipa::path(post, path = "/api/v1/measurements", request_body = MeasurementInput,
    responses((status = 201, body = Measurement), (status = 422, body = super::ErrorBody)))]
pub async fn create_measurement(
    State(state): State<AppState>,
    actor: Actor,
    ApiJson(input): ApiJson<MeasurementInput>,
) -> ApiResult<(StatusCode, Json<Measurement>)> {
    let formulation_id = input
        .formulation_id
        .ok_or_else(|| AppError::input("formulation_id", "is required"))?;
    let draft = input.to_form().parse(today())?;
    let id = match state
        .store
        .create_measurement(&actor, formulation_id, &draft)
        .await
    {
        Err(AppError::NotFound(_)) => {
            return Err(AppError::input(
                "formulation_id",
                format!("no formulation has id {formulation_id}"),
            )
            .into())
        }
        other => other?,
    };
    Ok((
        StatusCode::CREATED,
        Json(state.store.get_measurement(id).await?),
    ))
}

#[utoipa::path(put, path = "/api/v1/measurements/{id}",
    params(("id" = i64, Path, description = "record id")), request_body = MeasurementInput,
    responses((status = 200, body = Measurement), (status = 404, body = super::ErrorBody),
              (status = 409, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn update_measurement(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<MeasurementInput>,
) -> ApiResult<Json<Measurement>> {
    let draft = input.to_form().parse(today())?;
    let version = required_version(input.version)?;
    state
        .store
        .update_measurement(&actor, id, version, &draft, &input.reason)
        .await?;
    Ok(Json(state.store.get_measurement(id).await?))
}

// ------------------------------------------------------------------ containers

#[utoipa::path(get, path = "/api/v1/containers", responses((status = 200, description = "{items, page, per_page, total, pages}")))]
pub async fn list_containers(State(state): State<AppState>) -> ApiResult<Json<Page<Container>>> {
    Ok(Json(whole(state.store.list_containers().await?)))
}

#[utoipa::path(get, path = "/api/v1/containers/{id}",
    params(("id" = i64, Path, description = "record id")),
    responses((status = 200, body = Container), (status = 404, body = super::ErrorBody)))]
pub async fn get_container(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> ApiResult<Json<Container>> {
    Ok(Json(state.store.get_container(id).await?))
}

#[utoipa::path(post, path = "/api/v1/containers", request_body = ContainerInput,
    responses((status = 201, body = Container), (status = 422, body = super::ErrorBody)))]
pub async fn create_container(
    State(state): State<AppState>,
    actor: Actor,
    ApiJson(input): ApiJson<ContainerInput>,
) -> ApiResult<(StatusCode, Json<Container>)> {
    let draft = input.to_form().parse()?;
    let id = state.store.create_container(&actor, &draft).await?;
    Ok((
        StatusCode::CREATED,
        Json(state.store.get_container(id).await?),
    ))
}

#[utoipa::path(put, path = "/api/v1/containers/{id}",
    params(("id" = i64, Path, description = "record id")), request_body = ContainerInput,
    responses((status = 200, body = Container), (status = 404, body = super::ErrorBody),
              (status = 409, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn update_container(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<ContainerInput>,
) -> ApiResult<Json<Container>> {
    let draft = input.to_form().parse()?;
    let version = required_version(input.version)?;
    state
        .store
        .update_container(&actor, id, version, &draft)
        .await?;
    Ok(Json(state.store.get_container(id).await?))
}

// ------------------------------------------------------------------ dryers

#[utoipa::path(get, path = "/api/v1/dryers", responses((status = 200, description = "{items, page, per_page, total, pages}")))]
pub async fn list_dryers(State(state): State<AppState>) -> ApiResult<Json<Page<Dryer>>> {
    Ok(Json(whole(state.store.list_dryers().await?)))
}

#[utoipa::path(get, path = "/api/v1/dryers/{id}",
    params(("id" = i64, Path, description = "record id")),
    responses((status = 200, body = Dryer), (status = 404, body = super::ErrorBody)))]
pub async fn get_dryer(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> ApiResult<Json<Dryer>> {
    Ok(Json(state.store.get_dryer(id).await?))
}

#[utoipa::path(post, path = "/api/v1/dryers", request_body = DryerInput,
    responses((status = 201, body = Dryer), (status = 422, body = super::ErrorBody)))]
pub async fn create_dryer(
    State(state): State<AppState>,
    actor: Actor,
    ApiJson(input): ApiJson<DryerInput>,
) -> ApiResult<(StatusCode, Json<Dryer>)> {
    let draft = input.to_form().parse()?;
    let id = state.store.create_dryer(&actor, &draft).await?;
    Ok((StatusCode::CREATED, Json(state.store.get_dryer(id).await?)))
}

#[utoipa::path(put, path = "/api/v1/dryers/{id}",
    params(("id" = i64, Path, description = "record id")), request_body = DryerInput,
    responses((status = 200, body = Dryer), (status = 404, body = super::ErrorBody),
              (status = 409, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn update_dryer(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    ApiJson(input): ApiJson<DryerInput>,
) -> ApiResult<Json<Dryer>> {
    let draft = input.to_form().parse()?;
    let version = required_version(input.version)?;
    state
        .store
        .update_dryer(&actor, id, version, &draft)
        .await?;
    Ok(Json(state.store.get_dryer(id).await?))
}
