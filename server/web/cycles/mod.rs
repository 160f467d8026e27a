//! Candidate cycles: create, edit, copy, archive; link formulations; verdicts, charts,
//! design space and a suggested faster cycle for each link.
//!
//! `links` holds the cycle page and each link's page, `charts` the link's SVG charts and
//! `design_space` the shelf-temperature × pressure grid.

mod charts;
mod design_space;
mod links;
mod load;

use super::extract::{Form, Path, Query};
use crate::auth::Actor;
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;
use glasspoint_science::verdict::{CheckState, CheckTopic};
use serde::Deserialize;

use super::{draft_and_version, render, saved_or_form, see_other};
use crate::derive::{assess, Assessment};
use crate::domain::*;
use crate::{AppError, AppState};

use charts::{gauges_svg, layer_svg, rate_svg, temperatures_svg};
use design_space::{design_space_page, design_space_svg};
use links::{add_link, adopt_suggestion, detail, link_detail, remove_link};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/cycles", get(list).post(create))
        .route("/cycles/new", get(new_form))
        .route("/cycles/{id}", get(detail).post(update))
        .route("/cycles/{id}/edit", get(edit_form))
        .route("/cycles/{id}/copy", post(copy))
        .route("/cycles/{id}/archive", post(archive))
        .route("/cycles/{id}/restore", post(restore))
        .route("/cycles/{id}/links", post(add_link))
        .route("/cycles/{id}/links/{link}", get(link_detail))
        .route("/cycles/{id}/links/{link}/remove", post(remove_link))
        .route("/cycles/{id}/links/{link}/suggest", post(adopt_suggestion))
        .route(
            "/cycles/{id}/links/{link}/design-space",
            get(design_space_page),
        )
        .route(
            "/cycles/{id}/links/{link}/temperatures.svg",
            get(temperatures_svg),
        )
        .route("/cycles/{id}/links/{link}/layer.svg", get(layer_svg))
        .route("/cycles/{id}/links/{link}/rate.svg", get(rate_svg))
        .route("/cycles/{id}/links/{link}/gauges.svg", get(gauges_svg))
        .route(
            "/cycles/{id}/links/{link}/design-space.svg",
            get(design_space_svg),
        )
}

/// The caution every page with a verdict carries.
pub fn caution() -> &'static str {
    glasspoint_science::verdict::caution()
}

/// A verdict state as a page shows it: our words and a class.
pub fn state_label(s: CheckState) -> (&'static str, &'static str) {
    match s {
        CheckState::Ok => ("clear", "verdict-ok"),
        CheckState::Watch => ("watch", "verdict-watch"),
        CheckState::Fails => ("fails", "verdict-fails"),
    }
}

pub fn topic_label(t: CheckTopic) -> &'static str {
    match t {
        CheckTopic::ProductTemperature => "Product temperature",
        CheckTopic::PrimaryDryingTime => "Primary drying time",
        CheckTopic::Freezing => "Freezing",
        CheckTopic::Annealing => "Annealing",
        CheckTopic::SecondaryDrying => "Secondary drying",
        CheckTopic::Equipment => "Equipment",
        CheckTopic::Condenser => "Condenser",
    }
}

/// A link with its overall state, for lists.
pub struct LinkRow {
    pub link: CycleLink,
    pub state: &'static str,
    pub class: &'static str,
    pub summary: String,
}

pub fn link_row(a: &Assessment) -> LinkRow {
    let (state, class, summary) = match &a.verdict {
        Ok(v) => {
            let (s, c) = state_label(v.overall);
            let worst = v
                .checks
                .iter()
                .filter(|c| c.state == v.overall && v.overall != CheckState::Ok)
                .map(|c| topic_label(c.topic))
                .collect::<Vec<_>>()
                .join(", ");
            (s, c, worst)
        }
        Err(e) => ("not checked", "verdict-fails", e.clone()),
    };
    LinkRow {
        link: a.link.clone(),
        state,
        class,
        summary,
    }
}

/// Assessments of every link of a list, skipping none: a link that cannot be assessed
/// says why.
pub async fn assess_all(state: &AppState, links: Vec<CycleLink>) -> Result<Vec<LinkRow>, AppError> {
    let mut rows = Vec::with_capacity(links.len());
    for link in links {
        rows.push(link_row(
            &assess(&state.store, link, state.config.margin_c).await?,
        ));
    }
    Ok(rows)
}

// ------------------------------------------------------------------ list

#[derive(Template)]
#[template(path = "cycles/list.html")]
struct ListPage {
    cycles: Vec<(Cycle, Vec<LinkRow>)>,
    show_archived: bool,
    caution: &'static str,
}

#[derive(Deserialize, Default)]
struct ListQuery {
    #[serde(default)]
    archived: String,
}

async fn list(
    State(state): State<AppState>,
    Query(q): Query<ListQuery>,
) -> Result<Response, AppError> {
    let show_archived = !q.archived.is_empty();
    let mut cycles = Vec::new();
    for c in state.store.list_cycles(show_archived).await? {
        let links = state.store.links_of_cycle(c.id).await?;
        cycles.push((c, assess_all(&state, links).await?));
    }
    Ok(render(ListPage {
        cycles,
        show_archived,
        caution: caution(),
    }))
}

// ------------------------------------------------------------------ create / edit

#[derive(Template)]
#[template(path = "cycles/form.html")]
struct FormPage {
    heading: String,
    action: String,
    cancel: String,
    form: CycleForm,
    errors: FieldErrors,
    units: &'static [&'static str],
    hold_units: &'static [&'static str],
}

fn form_page(
    heading: String,
    action: String,
    cancel: String,
    form: CycleForm,
    errors: FieldErrors,
) -> Response {
    render(FormPage {
        heading,
        action,
        cancel,
        form,
        errors,
        units: PRESSURE_UNITS,
        hold_units: HOLD_UNITS,
    })
}

async fn new_form() -> Response {
    form_page(
        "New candidate cycle".into(),
        "/cycles".into(),
        "/cycles".into(),
        CycleForm::starting_point(),
        FieldErrors::default(),
    )
}

async fn create(
    State(state): State<AppState>,
    actor: Actor,
    Form(form): Form<CycleForm>,
) -> Result<Response, AppError> {
    let result = async { state.store.create_cycle(&actor, &form.parse()?).await }.await;
    saved_or_form(
        result,
        |id| format!("/cycles/{id}"),
        |errors| {
            form_page(
                "New candidate cycle".into(),
                "/cycles".into(),
                "/cycles".into(),
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
    let c = state.store.get_cycle(id).await?;
    Ok(form_page(
        format!("Edit {}", c.name),
        format!("/cycles/{id}"),
        format!("/cycles/{id}"),
        CycleForm::from_cycle(&c),
        FieldErrors::default(),
    ))
}

async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<CycleForm>,
) -> Result<Response, AppError> {
    let result = async {
        let (draft, version) = draft_and_version(form.parse(), &form.version)?;
        state.store.update_cycle(&actor, id, version, &draft).await
    }
    .await;
    saved_or_form(
        result,
        |()| format!("/cycles/{id}"),
        |errors| {
            form_page(
                "Edit cycle".into(),
                format!("/cycles/{id}"),
                format!("/cycles/{id}"),
                form,
                errors,
            )
        },
    )
}

/// A name not yet taken: "name (copy)", "name (copy 2)", …
pub(super) async fn free_name(state: &AppState, base: &str) -> Result<String, AppError> {
    let mut candidate = format!("{base} (copy)");
    let mut n = 2;
    while state.store.cycle_id_by_name(&candidate).await?.is_some() {
        candidate = format!("{base} (copy {n})");
        n += 1;
    }
    Ok(candidate)
}

async fn copy(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let c = state.store.get_cycle(id).await?;
    let draft = CycleDraft {
        name: free_name(&state, &c.name).await?,
        notes: format!("Copied from “{}”. {}", c.name, c.notes)
            .trim()
            .to_string(),
        program: c.program.clone(),
        sublimation_ceiling_kg_h_m2: c.sublimation_ceiling_kg_h_m2,
    };
    let new_id = state.store.create_cycle(&actor, &draft).await?;
    for l in state.store.links_of_cycle(id).await? {
        state
            .store
            .create_link(&actor, new_id, &LinkDraft::like(&l))
            .await?;
    }
    Ok(see_other(&format!("/cycles/{new_id}/edit")))
}

async fn archive(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    state
        .store
        .set_cycle_status(&actor, id, CycleStatus::Archived)
        .await?;
    Ok(see_other(&format!("/cycles/{id}")))
}

async fn restore(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    state
        .store
        .set_cycle_status(&actor, id, CycleStatus::Candidate)
        .await?;
    Ok(see_other(&format!("/cycles/{id}")))
}
