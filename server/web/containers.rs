//! Container (vial) pages.

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
        .route("/containers", get(list).post(create))
        .route("/containers/new", get(new_form))
        .route("/containers/{id}", axum::routing::post(update))
        .route("/containers/{id}/edit", get(edit_form))
}

/// Kv at a chamber pressure, W/(m²·K), for the list.
pub fn kv_w_m2k(c: &Container, pressure_mtorr: f64) -> f64 {
    let p_torr = pressure_mtorr / 1000.0;
    let kv = c.kc_cal_s_cm2_k + c.kp_cal_s_cm2_k_torr * p_torr / (1.0 + c.kd_per_torr * p_torr);
    glasspoint_science::units::cal_s_cm2_k_to_w_m2_k(kv)
}

#[derive(Template)]
#[template(path = "containers/list.html")]
struct ListPage {
    containers: Vec<(Container, f64)>,
}

async fn list(State(state): State<AppState>) -> Result<Response, AppError> {
    let containers = state
        .store
        .list_containers()
        .await?
        .into_iter()
        .map(|c| {
            let kv = kv_w_m2k(&c, 100.0);
            (c, kv)
        })
        .collect();
    Ok(render(ListPage { containers }))
}

#[derive(Template)]
#[template(path = "containers/form.html")]
struct FormPage {
    heading: String,
    action: String,
    form: ContainerForm,
    errors: FieldErrors,
    kinds: Vec<(&'static str, &'static str)>,
}

fn form_page(
    heading: String,
    action: String,
    form: ContainerForm,
    errors: FieldErrors,
) -> Response {
    render(FormPage {
        heading,
        action,
        form,
        errors,
        kinds: options(
            ContainerKind::ALL,
            ContainerKind::code,
            ContainerKind::label,
        ),
    })
}

async fn new_form() -> Response {
    form_page(
        "New container".into(),
        "/containers".into(),
        ContainerForm {
            kind: "tubing".into(),
            ..Default::default()
        },
        FieldErrors::default(),
    )
}

async fn create(
    State(state): State<AppState>,
    actor: Actor,
    Form(form): Form<ContainerForm>,
) -> Result<Response, AppError> {
    let result = async { state.store.create_container(&actor, &form.parse()?).await }.await;
    saved_or_form(
        result,
        |_| "/containers".into(),
        |errors| form_page("New container".into(), "/containers".into(), form, errors),
    )
}

async fn edit_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let c = state.store.get_container(id).await?;
    Ok(form_page(
        format!("Edit {}", c.name),
        format!("/containers/{id}"),
        ContainerForm::from_container(&c),
        FieldErrors::default(),
    ))
}

async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<ContainerForm>,
) -> Result<Response, AppError> {
    let result = async {
        let (draft, version) = draft_and_version(form.parse(), &form.version)?;
        state
            .store
            .update_container(&actor, id, version, &draft)
            .await
    }
    .await;
    saved_or_form(
        result,
        |()| "/containers".into(),
        |errors| {
            form_page(
                "Edit container".into(),
                format!("/containers/{id}"),
                form,
                errors,
            )
        },
    )
}
