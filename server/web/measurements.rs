//! Measurement pages: add and edit on a formulation, and the list across formulations.

use super::extract::{Form, Path, Query};
use crate::auth::Actor;
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::get;
use axum::Router;
use serde::Deserialize;

use super::formulations::{into_field_errors, unprocessable};
use super::{draft_and_version, options, render, see_other};
use crate::domain::*;
use crate::storage::Page;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/measurements", get(list))
        .route(
            "/formulations/{id}/measurements",
            axum::routing::post(create),
        )
        .route("/formulations/{id}/measurements/new", get(new_form))
        .route("/measurements/{id}", axum::routing::post(update))
        .route("/measurements/{id}/edit", get(edit_form))
}

#[derive(Template)]
#[template(path = "measurements/form.html")]
struct FormPage {
    heading: String,
    action: String,
    formulation_id: i64,
    formulation_code: String,
    formulation_name: String,
    form: MeasurementForm,
    errors: FieldErrors,
    kinds: Vec<(&'static str, &'static str)>,
    methods: Vec<(&'static str, &'static str)>,
}

fn today() -> time::Date {
    time::OffsetDateTime::now_utc().date()
}

async fn form_page(
    state: &AppState,
    formulation_id: i64,
    heading: &str,
    action: String,
    form: MeasurementForm,
    errors: FieldErrors,
) -> Result<Response, AppError> {
    let f = state.store.get_formulation(formulation_id).await?;
    Ok(render(FormPage {
        heading: heading.into(),
        action,
        formulation_id,
        formulation_code: f.code,
        formulation_name: f.name,
        form,
        errors,
        kinds: options(
            MeasurementKind::ALL,
            MeasurementKind::code,
            MeasurementKind::label,
        ),
        methods: options(
            MeasurementMethod::ALL,
            MeasurementMethod::code,
            MeasurementMethod::label,
        ),
    }))
}

async fn new_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let form = MeasurementForm {
        measured_on: fields::format_date(today()),
        replicate: "1".into(),
        review_state: "recorded".into(),
        ..Default::default()
    };
    form_page(
        &state,
        id,
        "Add a measurement",
        format!("/formulations/{id}/measurements"),
        form,
        FieldErrors::default(),
    )
    .await
}

async fn create(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<MeasurementForm>,
) -> Result<Response, AppError> {
    let result = match form.parse(today()) {
        Ok(draft) => state.store.create_measurement(&actor, id, &draft).await,
        Err(errors) => Err(AppError::Fields(errors)),
    };
    match result {
        Ok(_) => Ok(see_other(&format!("/formulations/{id}"))),
        Err(e) => {
            let errors = into_field_errors(e)?;
            form_page(
                &state,
                id,
                "Add a measurement",
                format!("/formulations/{id}/measurements"),
                form,
                errors,
            )
            .await
            .map(unprocessable)
        }
    }
}

async fn edit_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let m = state.store.get_measurement(id).await?;
    form_page(
        &state,
        m.formulation_id,
        "Edit a measurement",
        format!("/measurements/{id}"),
        MeasurementForm::from_measurement(&m),
        FieldErrors::default(),
    )
    .await
}

async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<MeasurementForm>,
) -> Result<Response, AppError> {
    let existing = state.store.get_measurement(id).await?;
    let result = async {
        let (draft, version) = draft_and_version(form.parse(today()), &form.version)?;
        state
            .store
            .update_measurement(&actor, id, version, &draft, &form.reason)
            .await
    }
    .await;
    match result {
        Ok(()) => Ok(see_other(&format!(
            "/formulations/{}",
            existing.formulation_id
        ))),
        Err(AppError::NotFound(what)) => Err(AppError::NotFound(what)),
        Err(e) => {
            let errors = into_field_errors(e)?;
            form_page(
                &state,
                existing.formulation_id,
                "Edit a measurement",
                format!("/measurements/{id}"),
                form,
                errors,
            )
            .await
            .map(unprocessable)
        }
    }
}

#[derive(Deserialize)]
struct ListQuery {
    #[serde(default)]
    page: String,
}

#[derive(Template)]
#[template(path = "measurements/list.html")]
struct ListPage {
    page: Page<Measurement>,
    rows: Vec<(Measurement, String)>,
}

async fn list(
    State(state): State<AppState>,
    Query(q): Query<ListQuery>,
) -> Result<Response, AppError> {
    let page_no = q.page.trim().parse().unwrap_or(1);
    let page = state.store.list_measurements(None, page_no, 50).await?;
    let codes = state.store.formulation_codes().await?;
    let rows = page
        .items
        .iter()
        .map(|m| {
            let code = codes
                .iter()
                .find(|(id, _)| *id == m.formulation_id)
                .map(|(_, c)| c.clone())
                .unwrap_or_default();
            (m.clone(), code)
        })
        .collect();
    Ok(render(ListPage { page, rows }))
}
