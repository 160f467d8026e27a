//! Dryer pages: the list, one dryer with the source of each value, and the form.

use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::get;
use axum::Router;

use super::extract::{Form, Path};
use super::{draft_and_version, render, saved_or_form};
use crate::auth::Actor;
use crate::domain::*;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/dryers", get(list).post(create))
        .route("/dryers/new", get(new_form))
        .route("/dryers/{id}", get(detail).post(update))
        .route("/dryers/{id}/edit", get(edit_form))
}

/// Chamber pressures the list quotes the capability at, mTorr.
const LIST_PRESSURES: [f64; 2] = [100.0, 200.0];

#[derive(Template)]
#[template(path = "dryers/list.html")]
struct ListPage {
    /// Each dryer with its capability at [`LIST_PRESSURES`], kg/h.
    dryers: Vec<(Dryer, Vec<Option<f64>>)>,
    pressures: [f64; 2],
}

async fn list(State(state): State<AppState>) -> Result<Response, AppError> {
    let dryers = state
        .store
        .list_dryers()
        .await?
        .into_iter()
        .map(|d| {
            let at = LIST_PRESSURES
                .iter()
                .map(|p| d.capability_kg_h(*p))
                .collect();
            (d, at)
        })
        .collect();
    Ok(render(ListPage {
        dryers,
        pressures: LIST_PRESSURES,
    }))
}

#[derive(Template)]
#[template(path = "dryers/detail.html")]
struct DetailPage {
    d: Dryer,
    /// The export columns remembered from its runs: (header, what it holds).
    column_map: Vec<(String, String)>,
}

async fn detail(State(state): State<AppState>, Path(id): Path<i64>) -> Result<Response, AppError> {
    let d = state.store.get_dryer(id).await?;
    let column_map = state
        .store
        .dryer_column_map(id)
        .await?
        .into_iter()
        .map(|(header, role)| {
            let words = role
                .parse::<glasspoint_import::RunRole>()
                .map(|r| r.label().to_string())
                .unwrap_or(role);
            (header, words)
        })
        .collect();
    Ok(render(DetailPage { d, column_map }))
}

#[derive(Template)]
#[template(path = "dryers/form.html")]
struct FormPage {
    heading: String,
    action: String,
    cancel: String,
    form: DryerForm,
    errors: FieldErrors,
    max_points: usize,
}

fn form_page(
    heading: String,
    action: String,
    cancel: String,
    form: DryerForm,
    errors: FieldErrors,
) -> Response {
    render(FormPage {
        heading,
        action,
        cancel,
        form,
        errors,
        max_points: MAX_CAPABILITY_POINTS,
    })
}

async fn new_form() -> Response {
    form_page(
        "New dryer".into(),
        "/dryers".into(),
        "/dryers".into(),
        DryerForm::default(),
        FieldErrors::default(),
    )
}

async fn create(
    State(state): State<AppState>,
    actor: Actor,
    Form(form): Form<DryerForm>,
) -> Result<Response, AppError> {
    let result = async { state.store.create_dryer(&actor, &form.parse()?).await }.await;
    saved_or_form(
        result,
        |id| format!("/dryers/{id}"),
        |errors| {
            form_page(
                "New dryer".into(),
                "/dryers".into(),
                "/dryers".into(),
                form,
                errors,
            )
        },
    )
}

async fn edit_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let d = state.store.get_dryer(id).await?;
    Ok(form_page(
        format!("Edit {}", d.name),
        format!("/dryers/{id}"),
        format!("/dryers/{id}"),
        DryerForm::from_dryer(&d),
        FieldErrors::default(),
    ))
}

async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<DryerForm>,
) -> Result<Response, AppError> {
    let result = async {
        let (draft, version) = draft_and_version(form.parse(), &form.version)?;
        state.store.update_dryer(&actor, id, version, &draft).await
    }
    .await;
    saved_or_form(
        result,
        |()| format!("/dryers/{id}"),
        |errors| {
            form_page(
                "Edit dryer".into(),
                format!("/dryers/{id}"),
                format!("/dryers/{id}"),
                form,
                errors,
            )
        },
    )
}
