//! Materials library pages.

use super::extract::{Form, Path};
use crate::auth::Actor;
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::get;
use axum::Router;

use super::{draft_and_version, options, render, saved_or_form};
use crate::domain::*;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/materials", get(list).post(create))
        .route("/materials/new", get(new_form))
        .route("/materials/{id}", get(detail).post(update))
        .route("/materials/{id}/edit", get(edit_form))
}

#[derive(Template)]
#[template(path = "materials/list.html")]
struct ListPage {
    materials: Vec<Material>,
}

async fn list(State(state): State<AppState>) -> Result<Response, AppError> {
    Ok(render(ListPage {
        materials: state.store.list_materials().await?,
    }))
}

#[derive(Template)]
#[template(path = "materials/detail.html")]
struct DetailPage {
    m: Material,
}

async fn detail(State(state): State<AppState>, Path(id): Path<i64>) -> Result<Response, AppError> {
    Ok(render(DetailPage {
        m: state.store.get_material(id).await?,
    }))
}

/// One property row of the form.
struct PropertyView {
    code: &'static str,
    label: &'static str,
    has_convention: bool,
    value: String,
    convention: String,
    citation: String,
    source_kind: String,
    measurements: String,
    value_error: String,
    citation_error: String,
}

#[derive(Template)]
#[template(path = "materials/form.html")]
struct FormPage {
    heading: String,
    action: String,
    cancel: String,
    form: MaterialForm,
    props: Vec<PropertyView>,
    errors: FieldErrors,
    roles: Vec<(&'static str, &'static str)>,
    behaviours: Vec<(&'static str, &'static str)>,
}

fn form_page(
    heading: String,
    action: String,
    cancel: String,
    form: MaterialForm,
    errors: FieldErrors,
) -> Response {
    let props = PropertyKind::ALL
        .iter()
        .map(|k| {
            let p = form.property(*k);
            let code = k.code();
            PropertyView {
                code,
                label: k.label(),
                has_convention: k.has_convention(),
                value: p.value,
                convention: p.convention,
                citation: p.citation,
                source_kind: p.source_kind,
                measurements: p.measurements,
                value_error: errors.msg(&format!("{code}_value")).to_string(),
                citation_error: [
                    errors.msg(&format!("{code}_citation")),
                    errors.msg(&format!("{code}_convention")),
                    errors.msg(&format!("{code}_source")),
                    errors.msg(&format!("{code}_measurements")),
                ]
                .iter()
                .filter(|m| !m.is_empty())
                .copied()
                .collect::<Vec<_>>()
                .join("; "),
            }
        })
        .collect();
    render(FormPage {
        heading,
        action,
        cancel,
        form,
        props,
        errors,
        roles: options(MaterialRole::ALL, MaterialRole::code, MaterialRole::label),
        behaviours: options(
            FreezingBehaviour::ALL,
            FreezingBehaviour::code,
            FreezingBehaviour::label,
        ),
    })
}

async fn new_form() -> Response {
    form_page(
        "New material".into(),
        "/materials".into(),
        "/materials".into(),
        MaterialForm::from_pairs(&[]),
        FieldErrors::default(),
    )
}

async fn create(
    State(state): State<AppState>,
    actor: Actor,
    Form(pairs): Form<Vec<(String, String)>>,
) -> Result<Response, AppError> {
    let form = MaterialForm::from_pairs(&pairs);
    let result = async { state.store.create_material(&actor, &form.parse()?).await }.await;
    saved_or_form(
        result,
        |id| format!("/materials/{id}"),
        |errors| {
            form_page(
                "New material".into(),
                "/materials".into(),
                "/materials".into(),
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
    let m = state.store.get_material(id).await?;
    Ok(form_page(
        format!("Edit {}", m.name),
        format!("/materials/{id}"),
        format!("/materials/{id}"),
        MaterialForm::from_material(&m),
        FieldErrors::default(),
    ))
}

async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(pairs): Form<Vec<(String, String)>>,
) -> Result<Response, AppError> {
    let form = MaterialForm::from_pairs(&pairs);
    let result = async {
        let (draft, version) = draft_and_version(form.parse(), &form.version)?;
        state
            .store
            .update_material(&actor, id, version, &draft)
            .await
    }
    .await;
    saved_or_form(
        result,
        |()| format!("/materials/{id}"),
        |errors| {
            form_page(
                "Edit material".into(),
                format!("/materials/{id}"),
                format!("/materials/{id}"),
                form,
                errors,
            )
        },
    )
}
