//! The JSON API under `/api/v1/`, described by `/api/v1/openapi.json`.

mod audit;
mod calc;
mod cycles;
pub mod extract;
mod input;
mod records;
mod runs;
mod traces;

use axum::extract::FromRequest;
use axum::routing::get;
use axum::{Json, Router};
use utoipa::OpenApi;

use crate::error::ApiError;
use crate::AppState;

pub use calc::run_calc;

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/openapi.json", get(|| async { Json(ApiDoc::openapi()) }))
        .merge(records::router())
        .merge(cycles::router())
        .merge(calc::router())
        .merge(audit::router())
        .merge(traces::router())
        .merge(runs::router())
        .fallback(|| async { ApiError(crate::AppError::NotFound("This API route".into())) })
}

#[derive(OpenApi)]
#[openapi(
    modifiers(&BearerTokens),
    security(("bearer" = [])),
    info(
        title = "Glasspoint API",
        description = "Formulations, materials, measurements, containers, dryers and calculations of a freeze-drying development notebook. Derived limits and verdicts support qualified judgement and do not replace experimental confirmation."
    ),
    paths(
        records::list_formulations,
        records::get_formulation,
        records::create_formulation,
        records::update_formulation,
        records::list_materials,
        records::get_material,
        records::create_material,
        records::update_material,
        records::list_measurements,
        records::get_measurement,
        records::create_measurement,
        records::update_measurement,
        records::list_containers,
        records::get_container,
        records::create_container,
        records::update_container,
        records::list_dryers,
        records::get_dryer,
        records::create_dryer,
        records::update_dryer,
        cycles::list_cycles,
        cycles::get_cycle,
        cycles::create_cycle,
        cycles::update_cycle,
        cycles::create_link,
        calc::calc,
        audit::list_audit,
        traces::upload_trace,
        traces::get_trace,
        traces::get_original,
        runs::list_runs,
        runs::get_run,
        runs::create_run,
        runs::update_run,
        runs::replace_data,
        runs::get_original,
    ),
    components(schemas(
        input::FormulationInput,
        input::ComponentInput,
        input::MaterialInput,
        input::PropertyInput,
        input::MeasurementInput,
        input::ContainerInput,
        input::DryerInput,
        ErrorBody,
        crate::storage::AuditEvent,
        cycles::CycleInput,
        cycles::LinkInput,
        cycles::LinkVerdict,
        cycles::CycleDetail,
        cycles::BatchView,
        cycles::ClassView,
        crate::domain::Cycle,
        crate::domain::CycleLink,
        crate::domain::Formulation,
        crate::domain::Component,
        crate::domain::Material,
        crate::domain::MaterialProperty,
        crate::domain::Measurement,
        crate::domain::Container,
        crate::domain::Dryer,
        crate::domain::DryerPoint,
        crate::domain::runs::Run,
        crate::domain::runs::MoistureEntry,
        crate::domain::runs::VialWeight,
        crate::domain::runs::RunKind,
        crate::domain::runs::CakeAppearance,
        crate::domain::runs::VialLocation,
        crate::domain::ReviewState,
    ))
)]
struct ApiDoc;

/// Declares the API's one way to authenticate: an API token as a bearer token.
struct BearerTokens;

impl utoipa::Modify for BearerTokens {
    fn modify(&self, openapi: &mut utoipa::openapi::OpenApi) {
        use utoipa::openapi::security::{HttpAuthScheme, HttpBuilder, SecurityScheme};
        let components = openapi.components.get_or_insert_with(Default::default);
        components.add_security_scheme(
            "bearer",
            SecurityScheme::Http(
                HttpBuilder::new()
                    .scheme(HttpAuthScheme::Bearer)
                    .description(Some(
                        "An API token from `glasspoint user token NAME --scope read|write` or the Team page",
                    ))
                    .build(),
            ),
        );
    }
}

/// Every API error: what is wrong and, where one is to blame, the field.
#[derive(serde::Serialize, utoipa::ToSchema)]
pub struct ErrorBody {
    pub error: String,
    pub field: Option<String>,
}

/// A JSON body whose every complaint (malformed JSON, a missing or mistyped field) answers
/// 422 with `{error, field}` naming the field.
pub struct ApiJson<T>(pub T);

impl<S, T> FromRequest<S> for ApiJson<T>
where
    S: Send + Sync,
    T: serde::de::DeserializeOwned,
{
    type Rejection = ApiError;

    async fn from_request(req: axum::extract::Request, state: &S) -> Result<Self, Self::Rejection> {
        let bytes = axum::body::Bytes::from_request(req, state)
            .await
            .map_err(|e| {
                let status = e.status();
                if status == axum::http::StatusCode::PAYLOAD_TOO_LARGE {
                    ApiError(crate::web::extract::too_large())
                } else {
                    ApiError(crate::AppError::input(
                        "body",
                        "the request body could not be read",
                    ))
                }
            })?;
        let value: serde_json::Value = serde_json::from_slice(&bytes).map_err(|e| {
            ApiError(crate::AppError::input(
                "body",
                format!("the body is not valid JSON: {e}"),
            ))
        })?;
        let parsed = glasspoint_science::calc::parse_input(value)?;
        Ok(ApiJson(parsed))
    }
}
