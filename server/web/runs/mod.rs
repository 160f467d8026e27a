//! Run pages: the list, recording and changing a run with its data export, the run read
//! against the prediction, and adopting what it yields into the model.

mod adopt;
mod chart;
mod detail;
pub mod form;

use askama::Template;
use axum::extract::{DefaultBodyLimit, State};
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;

use super::extract::{Path, Query};
use super::render;
use crate::domain::runs::{Run, RunKind, MAX_RUN_FILE_BYTES};
use crate::storage::RunFilter;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    // The same limit the app-wide layer allows these routes (`web::upload_limit`).
    let upload =
        DefaultBodyLimit::max(crate::web::upload_limit("/runs").unwrap_or(MAX_RUN_FILE_BYTES));
    Router::new()
        .route("/runs", get(list).post(form::create).layer(upload))
        .route("/runs/new", get(form::new_form))
        .route(
            "/runs/{id}",
            get(detail::page).post(form::update).layer(upload),
        )
        .route("/runs/{id}/edit", get(form::edit_form))
        .route("/runs/{id}/chart.svg", get(chart::temperatures))
        .route("/runs/{id}/pressures.svg", get(chart::pressures))
        .route("/runs/{id}/original", get(original))
        .route("/runs/{id}/adopt", post(adopt::adopt))
}

/// One row of the list.
pub struct RunRow {
    pub run: Run,
    pub cycle: String,
    pub formulations: String,
}

#[derive(Template)]
#[template(path = "runs/list.html")]
struct ListPage {
    runs: Vec<RunRow>,
}

#[derive(serde::Deserialize, Default)]
#[serde(default)]
struct ListQuery {
    cycle_id: Option<i64>,
    formulation_id: Option<i64>,
    kind: String,
}

/// Runs with the names a table shows.
pub async fn rows(state: &AppState, filter: RunFilter) -> Result<Vec<RunRow>, AppError> {
    let cycles = state.store.list_cycles(true).await?;
    let codes = state.store.formulation_codes().await?;
    Ok(state
        .store
        .list_runs(filter)
        .await?
        .into_iter()
        .map(|run| RunRow {
            cycle: cycles
                .iter()
                .find(|c| c.id == run.cycle_id)
                .map(|c| c.name.clone())
                .unwrap_or_default(),
            formulations: run
                .formulation_ids
                .iter()
                .filter_map(|id| codes.iter().find(|(i, _)| i == id).map(|(_, c)| c.clone()))
                .collect::<Vec<_>>()
                .join(", "),
            run,
        })
        .collect())
}

async fn list(
    State(state): State<AppState>,
    Query(q): Query<ListQuery>,
) -> Result<Response, AppError> {
    let filter = RunFilter {
        cycle_id: q.cycle_id,
        formulation_id: q.formulation_id,
        container_id: None,
        kind: RunKind::parse(&q.kind),
    };
    Ok(render(ListPage {
        runs: rows(&state, filter).await?,
    }))
}

async fn original(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let (name, bytes) = state.store.run_original(id).await?;
    Ok(super::upload::attachment(&name, bytes))
}
