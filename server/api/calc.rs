//! `POST /api/v1/calc/TOPIC`: the science, one JSON shape shared with `glasspoint calc`.

use super::extract::Path;
use axum::extract::State;
use axum::routing::post;
use axum::{Json, Router};
use serde_json::Value;

use super::ApiJson;
use crate::error::ApiError;
use crate::{AppError, AppState, Store};

pub fn router() -> Router<AppState> {
    Router::new().route("/calc/{topic}", post(calc))
}

/// Runs a calculation topic; `formulation-estimate` with a `formulation_id` reads the
/// formulation's composition from the store first.
pub async fn run_calc(store: Option<&Store>, topic: &str, input: Value) -> Result<Value, AppError> {
    let input = match (topic, store, input.get("formulation_id")) {
        ("formulation-estimate", Some(store), Some(id)) => {
            let id = id
                .as_i64()
                .ok_or_else(|| AppError::input("formulation_id", "must be a whole number"))?;
            crate::derive::inline_composition(store, id, &input).await?
        }
        _ => input,
    };
    glasspoint_science::calc::run(topic, input).map_err(|e| match e {
        glasspoint_science::calc::CalcError::UnknownTopic(t) => AppError::NotFound(format!(
            "Calculation topic “{t}” (known: {})",
            glasspoint_science::calc::TOPICS.join(", ")
        )),
        glasspoint_science::calc::CalcError::Input(e) => e.into(),
    })
}

#[utoipa::path(post, path = "/api/v1/calc/{topic}",
    params(("topic" = String, Path, description = "ice-vapor-pressure | mixture-tg | cake-tg | cake-moisture-limit | product-limit | formulation-estimate | annealing-advice | gordon-taylor-fit | primary-drying | design-space | suggest-primary-drying | cycle-check | dsc-analysis | kv-from-gravimetric | kv-fit | rp-from-product-temperature | secondary-drying-kinetics | end-of-primary-drying")),
    request_body = Object,
    responses((status = 200, description = "The topic's result"), (status = 404, body = super::ErrorBody), (status = 422, body = super::ErrorBody)))]
pub async fn calc(
    State(state): State<AppState>,
    Path(topic): Path<String>,
    ApiJson(input): ApiJson<Value>,
) -> Result<Json<Value>, ApiError> {
    Ok(Json(run_calc(Some(&state.store), &topic, input).await?))
}
