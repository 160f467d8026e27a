//! Formulation pages: list with search and filters, detail, create, edit, archive.

use super::extract::{Form, Path, Query};
use crate::auth::Actor;
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;
use serde::Deserialize;

use super::{draft_and_version, options, render, see_other};
use crate::domain::*;
use crate::storage::{FormulationFilter, FormulationSort, FormulationSummary, Page};
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/formulations", get(list).post(create))
        .route("/formulations/new", get(new_form))
        .route("/formulations/compare", get(compare))
        .route("/formulations/{id}", get(detail).post(update))
        .route("/formulations/{id}/edit", get(edit_form))
        .route("/formulations/{id}/archive", post(archive))
        .route("/formulations/{id}/restore", post(restore))
        .route(
            "/formulations/{id}/resistance",
            get(resistance_form).post(save_resistance),
        )
        .route("/formulations/{id}/limit-basis", post(set_limit_basis))
}

pub const PER_PAGE: i64 = 25;

#[derive(Debug, Default, Deserialize)]
pub struct ListQuery {
    #[serde(default)]
    pub q: String,
    #[serde(default)]
    pub project: String,
    #[serde(default)]
    pub status: String,
    #[serde(default)]
    pub has_tg_prime: String,
    #[serde(default)]
    pub has_collapse: String,
    #[serde(default)]
    pub sort: String,
    #[serde(default)]
    pub page: String,
}

impl ListQuery {
    /// The filter this query asks for; unknown values fall back to "no filter".
    pub fn filter(&self) -> FormulationFilter {
        FormulationFilter {
            query: self.q.trim().chars().take(100).collect(),
            project: self.project.trim().to_string(),
            status: FormulationStatus::parse(&self.status),
            has_tg_prime: !self.has_tg_prime.is_empty(),
            has_collapse: !self.has_collapse.is_empty(),
        }
    }

    pub fn sort(&self) -> FormulationSort {
        FormulationSort::parse(&self.sort).unwrap_or_default()
    }

    pub fn page(&self) -> i64 {
        self.page.trim().parse().unwrap_or(1).max(1)
    }

    fn link_to(&self, page: i64) -> String {
        let pairs = [
            ("q", self.q.as_str()),
            ("project", self.project.as_str()),
            ("status", self.status.as_str()),
            ("has_tg_prime", self.has_tg_prime.as_str()),
            ("has_collapse", self.has_collapse.as_str()),
            ("sort", self.sort.as_str()),
        ];
        let mut query: Vec<(&str, String)> = pairs
            .iter()
            .filter(|(_, v)| !v.is_empty())
            .map(|(k, v)| (*k, v.to_string()))
            .collect();
        query.push(("page", page.to_string()));
        format!(
            "/formulations?{}",
            serde_urlencoded::to_string(&query).unwrap_or_default()
        )
    }
}

#[derive(Template)]
#[template(path = "formulations/list.html")]
struct ListPage {
    page: Page<FormulationSummary>,
    q: String,
    project: String,
    status: String,
    sort: String,
    has_tg_prime: bool,
    has_collapse: bool,
    projects: Vec<String>,
    statuses: Vec<(&'static str, &'static str)>,
    sorts: Vec<(&'static str, &'static str)>,
    prev_link: String,
    next_link: String,
}

async fn list(
    State(state): State<AppState>,
    Query(q): Query<ListQuery>,
) -> Result<Response, AppError> {
    let filter = q.filter();
    let sort = q.sort();
    let page = state
        .store
        .search_formulations(&filter, sort, q.page(), PER_PAGE)
        .await?;
    let projects = state.store.list_projects().await?;
    Ok(render(ListPage {
        prev_link: q.link_to(page.page - 1),
        next_link: q.link_to(page.page + 1),
        page,
        q: filter.query.clone(),
        project: filter.project.clone(),
        status: filter
            .status
            .map(|s| s.code().to_string())
            .unwrap_or_default(),
        sort: sort.code().to_string(),
        has_tg_prime: filter.has_tg_prime,
        has_collapse: filter.has_collapse,
        projects,
        statuses: options(
            FormulationStatus::ALL,
            FormulationStatus::code,
            FormulationStatus::label,
        ),
        sorts: FormulationSort::ALL
            .iter()
            .map(|(_, c, l)| (*c, *l))
            .collect(),
    }))
}

/// A composition row as the form shows it, with its errors.
pub struct RowView {
    pub material_id: String,
    pub concentration: String,
    pub unit: String,
    pub material_error: String,
    pub concentration_error: String,
    pub unit_error: String,
}

#[derive(Template)]
#[template(path = "formulations/form.html")]
struct FormPage {
    heading: String,
    action: String,
    cancel: String,
    form: FormulationForm,
    rows: Vec<RowView>,
    errors: FieldErrors,
    statuses: Vec<(&'static str, &'static str)>,
    units: Vec<&'static str>,
    materials: Vec<(String, String)>,
    containers: Vec<(String, String)>,
    max_components: usize,
}

async fn form_page(
    state: &AppState,
    heading: String,
    action: String,
    cancel: String,
    form: FormulationForm,
    errors: FieldErrors,
) -> Result<Response, AppError> {
    let materials = state
        .store
        .list_materials()
        .await?
        .into_iter()
        .map(|m| (m.id.to_string(), m.name))
        .collect();
    let containers = state
        .store
        .list_containers()
        .await?
        .into_iter()
        .map(|c| (c.id.to_string(), c.name))
        .collect();
    // Filled rows are numbered from 0 (see `compact`), so errors line up by index.
    let mut rows: Vec<RowView> = form
        .components
        .iter()
        .filter(|r| !r.is_blank())
        .enumerate()
        .map(|(i, r)| row_view(r, i, &errors))
        .collect();
    // Every stored or typed row, plus blank rows to add more up to the limit.
    let wanted = (rows.len() + 3).min(MAX_COMPONENTS).max(rows.len());
    while rows.len() < wanted {
        rows.push(row_view(&ComponentRow::default(), usize::MAX, &errors));
    }
    let status = FormulationStatus::ALL
        .iter()
        .filter(|s| **s != FormulationStatus::Archived || form.status == "archived")
        .map(|s| (s.code(), s.label()))
        .collect();
    Ok(render(FormPage {
        heading,
        action,
        cancel,
        form,
        rows,
        errors,
        statuses: status,
        units: ConcentrationUnit::ALL.iter().map(|u| u.code()).collect(),
        materials,
        containers,
        max_components: MAX_COMPONENTS,
    }))
}

fn row_view(r: &ComponentRow, index: usize, errors: &FieldErrors) -> RowView {
    let err = |suffix: &str| errors.msg(&format!("c{index}_{suffix}")).to_string();
    RowView {
        material_id: r.material_id.clone(),
        concentration: r.concentration.clone(),
        unit: r.unit.clone(),
        material_error: err("material"),
        concentration_error: err("concentration"),
        unit_error: err("unit"),
    }
}

/// Renumbers the non-blank rows from 0 so that the re-rendered form, which posts rows by
/// position, keeps each error next to its own row.
fn compact(form: &mut FormulationForm, errors: &mut FieldErrors) {
    let mut renamed = FieldErrors::default();
    let mut next = 0;
    let mut map = Vec::new();
    for (i, row) in form.components.iter().enumerate() {
        if !row.is_blank() {
            map.push((i, next));
            next += 1;
        }
    }
    for (field, message) in errors.iter() {
        let moved = map.iter().find_map(|(from, to)| {
            field
                .strip_prefix(&format!("c{from}_"))
                .map(|rest| format!("c{to}_{rest}"))
        });
        renamed.add(moved.unwrap_or_else(|| field.clone()), message.clone());
    }
    form.components.retain(|r| !r.is_blank());
    *errors = renamed;
}

async fn new_form(State(state): State<AppState>) -> Result<Response, AppError> {
    let form = FormulationForm {
        status: "draft".into(),
        ..Default::default()
    };
    form_page(
        &state,
        "New formulation".into(),
        "/formulations".into(),
        "/formulations".into(),
        form,
        FieldErrors::default(),
    )
    .await
}

async fn create(
    State(state): State<AppState>,
    actor: Actor,
    Form(pairs): Form<Vec<(String, String)>>,
) -> Result<Response, AppError> {
    let mut form = FormulationForm::from_pairs(&pairs);
    let result = match form.parse() {
        Ok(draft) => state.store.create_formulation(&actor, &draft).await,
        Err(errors) => Err(AppError::Fields(errors)),
    };
    match result {
        Ok(id) => Ok(see_other(&format!("/formulations/{id}"))),
        Err(e) => {
            let mut errors = into_field_errors(e)?;
            compact(&mut form, &mut errors);
            form_page(
                &state,
                "New formulation".into(),
                "/formulations".into(),
                "/formulations".into(),
                form,
                errors,
            )
            .await
            .map(unprocessable)
        }
    }
}

/// Field errors re-render the form; anything else is a real failure.
pub fn into_field_errors(e: AppError) -> Result<FieldErrors, AppError> {
    match e {
        AppError::Fields(errors) => Ok(errors),
        AppError::Input(one) => Ok(one.into()),
        AppError::Conflict(message) => Ok(FieldError::new("version", message).into()),
        other => Err(other),
    }
}

/// A re-rendered form answers 422 so scripts and tests can tell it from a success.
pub fn unprocessable(mut r: Response) -> Response {
    *r.status_mut() = axum::http::StatusCode::UNPROCESSABLE_ENTITY;
    r
}

/// One result a derived limit may rest on, with its review.
pub struct BasisRow {
    pub m: Measurement,
    pub used: bool,
    /// "Reviewed by … at … UTC", "not yet reviewed", or why it is left out.
    pub review: String,
}

/// Which results the derived values rest on, and whether each is reviewed.
fn rests_on(
    all: &[Measurement],
    used: &[Measurement],
    signatures: &[crate::storage::Signature],
    allow_unreviewed: bool,
) -> Vec<BasisRow> {
    all.iter()
        .filter(|m| m.kind != MeasurementKind::CakeTg)
        .map(|m| {
            let used_here = used.iter().any(|u| u.id == m.id);
            let signed = signatures
                .iter()
                .find(|s| s.entity_id == m.id && s.version <= m.version);
            let review = match (m.review_state, signed) {
                (ReviewState::Reviewed, Some(s)) => {
                    format!("reviewed by {} at {} UTC", s.full_name, s.signed_at_utc())
                }
                (ReviewState::Reviewed, None) => "reviewed".to_string(),
                (ReviewState::Rejected, Some(s)) => {
                    format!("rejected by {} ({}): left out", s.full_name, s.reason)
                }
                (ReviewState::Rejected, None) => "rejected: left out".to_string(),
                (ReviewState::Recorded, _) if allow_unreviewed => {
                    "not yet reviewed (the team allows it)".to_string()
                }
                (ReviewState::Recorded, _) => {
                    "not yet reviewed: left out by the team's setting".to_string()
                }
            };
            BasisRow {
                m: m.clone(),
                used: used_here,
                review,
            }
        })
        .collect()
}

#[derive(Template)]
#[template(path = "formulations/detail.html")]
struct DetailPage {
    signatures: Vec<super::records::SignatureView>,
    rests_on: Vec<BasisRow>,
    f: Formulation,
    cycles: Vec<super::cycles::LinkRow>,
    resistance: DryLayerResistance,
    d: super::derived_view::DerivedView,
    margin_input: String,
    margin_error: String,
    team_margin: String,
    updated: String,
    summaries: Vec<ReplicateSummary>,
    groups: Vec<(MeasurementKind, Vec<Measurement>)>,
    traces: Vec<crate::domain::traces::TraceMeta>,
    runs: Vec<super::runs::RunRow>,
}

#[derive(Debug, Default, Deserialize)]
struct DetailQuery {
    #[serde(default)]
    margin_c: String,
}

/// The safety margin asked for on the page, or the team default with a message.
fn margin_from(raw: &str, default: f64) -> (f64, String) {
    let text = raw.trim();
    if text.is_empty() {
        return (default, String::new());
    }
    match text.replace(',', ".").parse::<f64>() {
        Ok(v) if (0.0..=glasspoint_science::limit::MAX_MARGIN_C).contains(&v) => (v, String::new()),
        Ok(_) => (
            default,
            format!(
                "margin_c: must lie between 0 and {} °C; the team default of {default} °C is shown",
                glasspoint_science::limit::MAX_MARGIN_C
            ),
        ),
        Err(_) => (
            default,
            format!(
                "margin_c: “{text}” is not a number; the team default of {default} °C is shown"
            ),
        ),
    }
}

async fn detail(
    State(state): State<AppState>,
    Path(id): Path<i64>,
    Query(q): Query<DetailQuery>,
) -> Result<Response, AppError> {
    let f = state.store.get_formulation(id).await?;
    let measurements = state.store.measurements_of(id).await?;
    let materials = state.store.list_materials().await?;
    let basis = crate::derive::team_basis(&state.store, state.config.margin_c).await?;
    let (margin_c, margin_error) = margin_from(&q.margin_c, basis.margin_c);
    let used = basis.usable(&measurements);
    let derived = crate::derive::derive(&f, &used, &materials, margin_c);
    let signatures = super::records::signature_views(&state, Entity::Formulation, id).await?;
    let reviewers = state.store.signatures_of_kind(Entity::Measurement).await?;
    let rests_on = rests_on(&measurements, &used, &reviewers, basis.allow_unreviewed);
    let cycles =
        super::cycles::assess_all(&state, state.store.links_of_formulation(id).await?).await?;
    let resistance = crate::derive::resistance_of(&state.store, &f).await?;
    let summaries = summarise(&measurements);
    let traces = state.store.traces_of(id).await?;
    let runs = super::runs::rows(
        &state,
        crate::storage::RunFilter {
            formulation_id: Some(id),
            ..Default::default()
        },
    )
    .await?;
    let groups = MeasurementKind::ALL
        .iter()
        .map(|k| {
            (
                *k,
                measurements
                    .iter()
                    .filter(|m| m.kind == *k)
                    .cloned()
                    .collect::<Vec<_>>(),
            )
        })
        .filter(|(_, ms)| !ms.is_empty())
        .collect();
    let updated = f
        .updated_at
        .format(&time::macros::format_description!(
            "[year]-[month]-[day] [hour]:[minute] UTC"
        ))
        .unwrap_or_default();
    Ok(render(DetailPage {
        d: super::derived_view::view(&derived),
        margin_input: if q.margin_c.trim().is_empty() || !margin_error.is_empty() {
            crate::web::fmt::trim(margin_c)
        } else {
            q.margin_c.trim().to_string()
        },
        margin_error,
        team_margin: crate::web::fmt::trim(basis.margin_c),
        signatures,
        rests_on,
        cycles,
        resistance,
        f,
        updated,
        summaries,
        groups,
        traces,
        runs,
    }))
}

async fn edit_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let f = state.store.get_formulation(id).await?;
    form_page(
        &state,
        format!("Edit {}", f.code),
        format!("/formulations/{id}"),
        format!("/formulations/{id}"),
        FormulationForm::from_formulation(&f),
        FieldErrors::default(),
    )
    .await
}

async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(pairs): Form<Vec<(String, String)>>,
) -> Result<Response, AppError> {
    let mut form = FormulationForm::from_pairs(&pairs);
    let result = async {
        let (draft, version) = draft_and_version(form.parse(), &form.version)?;
        state
            .store
            .update_formulation(&actor, id, version, &draft, &form.reason)
            .await
    }
    .await;
    match result {
        Ok(()) => Ok(see_other(&format!("/formulations/{id}"))),
        Err(AppError::NotFound(what)) => Err(AppError::NotFound(what)),
        Err(e) => {
            let mut errors = into_field_errors(e)?;
            compact(&mut form, &mut errors);
            form_page(
                &state,
                "Edit formulation".into(),
                format!("/formulations/{id}"),
                format!("/formulations/{id}"),
                form,
                errors,
            )
            .await
            .map(unprocessable)
        }
    }
}

async fn archive(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    state
        .store
        .set_formulation_status(&actor, id, FormulationStatus::Archived)
        .await?;
    Ok(see_other(&format!("/formulations/{id}")))
}

async fn restore(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    state
        .store
        .set_formulation_status(&actor, id, FormulationStatus::Draft)
        .await?;
    Ok(see_other(&format!("/formulations/{id}")))
}

// ------------------------------------------------------------------ dry-layer resistance

#[derive(Template)]
#[template(path = "formulations/resistance.html")]
struct ResistancePage {
    f: Formulation,
    current: DryLayerResistance,
    form: ResistanceForm,
    errors: FieldErrors,
}

async fn resistance_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let f = state.store.get_formulation(id).await?;
    let current = crate::derive::resistance_of(&state.store, &f).await?;
    let form = if current.measured {
        ResistanceForm::from_resistance(&current)
    } else {
        ResistanceForm::default()
    };
    Ok(render(ResistancePage {
        f,
        current,
        form,
        errors: FieldErrors::default(),
    }))
}

async fn save_resistance(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<ResistanceForm>,
) -> Result<Response, AppError> {
    let f = state.store.get_formulation(id).await?;
    let version = form.version.trim().parse::<i64>().ok();
    let result = match form.parse() {
        Ok((r, source)) => {
            state
                .store
                .set_resistance(&actor, id, &r, &source, version)
                .await
        }
        Err(e) => Err(AppError::Fields(e)),
    };
    match result {
        Ok(()) => Ok(see_other(&format!("/formulations/{id}"))),
        Err(e) => {
            let errors = into_field_errors(e)?;
            let current = crate::derive::resistance_of(&state.store, &f).await?;
            Ok(unprocessable(render(ResistancePage {
                f,
                current,
                form,
                errors,
            })))
        }
    }
}

#[derive(Deserialize)]
struct LimitBasisForm {
    #[serde(default)]
    basis: String,
}

/// Chooses which limit the cycle checks use for a crystalline matrix.
async fn set_limit_basis(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<LimitBasisForm>,
) -> Result<Response, AppError> {
    let crystalline = match form.basis.as_str() {
        "crystalline" => true,
        "amorphous" => false,
        other => {
            return Err(AppError::input(
                "basis",
                format!("“{other}” is not one of: amorphous, crystalline"),
            ))
        }
    };
    state.store.set_limit_basis(&actor, id, crystalline).await?;
    Ok(see_other(&format!("/formulations/{id}")))
}

// ------------------------------------------------------------------ compare

/// Most formulations one comparison shows side by side.
pub const MAX_COMPARED: usize = 8;

pub struct CompareColumn {
    pub id: i64,
    pub code: String,
}

#[derive(Template)]
#[template(path = "formulations/compare.html")]
struct ComparePage {
    columns: Vec<CompareColumn>,
    rows: Vec<(String, Vec<String>)>,
    message: String,
}

/// Formulations side by side: composition, measured results, estimate, limit and advice.
async fn compare(
    State(state): State<AppState>,
    axum::extract::RawQuery(query): axum::extract::RawQuery,
) -> Result<Response, AppError> {
    let pairs: Vec<(String, String)> =
        serde_urlencoded::from_str(query.as_deref().unwrap_or("")).unwrap_or_default();
    let mut ids: Vec<i64> = Vec::new();
    for (_, v) in pairs.iter().filter(|(k, _)| k == "id") {
        if let Ok(id) = v.trim().parse::<i64>() {
            if !ids.contains(&id) {
                ids.push(id);
            }
        }
    }
    let mut message = String::new();
    if ids.len() < 2 {
        message = "id: tick at least two formulations to compare".into();
    }
    if ids.len() > MAX_COMPARED {
        message = format!(
            "id: at most {MAX_COMPARED} formulations at once; the first {MAX_COMPARED} are shown"
        );
        ids.truncate(MAX_COMPARED);
    }
    let materials = state.store.list_materials().await?;
    let mut columns = Vec::new();
    let mut cells: Vec<Vec<String>> = Vec::new();
    for id in &ids {
        let f = match state.store.get_formulation(*id).await {
            Ok(f) => f,
            Err(AppError::NotFound(_)) => {
                message = format!("id: formulation {id} does not exist and is left out");
                continue;
            }
            Err(e) => return Err(e),
        };
        let basis = crate::derive::team_basis(&state.store, state.config.margin_c).await?;
        let ms = basis.usable(&state.store.measurements_of(*id).await?);
        let d = crate::derive::derive(&f, &ms, &materials, basis.margin_c);
        let v = super::derived_view::view(&d);
        let summary = |kind: MeasurementKind| {
            let values: Vec<f64> = ms
                .iter()
                .filter(|m| m.kind == kind)
                .map(|m| m.value_c)
                .collect();
            match values.len() {
                0 => "—".to_string(),
                n => format!(
                    "{} °C (n = {n})",
                    crate::web::fmt::num1(values.iter().sum::<f64>() / n as f64)
                ),
            }
        };
        cells.push(vec![
            f.name.clone(),
            f.status.label().to_string(),
            f.components
                .iter()
                .map(|c| {
                    format!(
                        "{} {}",
                        c.material_name,
                        crate::web::fmt::percent(c.solid_fraction)
                    )
                })
                .collect::<Vec<_>>()
                .join(", "),
            format!("{} mg/mL", crate::web::fmt::num1(f.solids_mg_ml)),
            summary(MeasurementKind::TgPrime),
            summary(MeasurementKind::CollapseOnset),
            summary(MeasurementKind::Te),
            v.estimate_value.clone(),
            if v.has_limit {
                format!("{} ({})", v.limit_value, v.basis)
            } else {
                "—".into()
            },
            v.anneal_headline.clone(),
        ]);
        columns.push(CompareColumn {
            id: f.id,
            code: f.code,
        });
    }
    let labels = [
        "Name",
        "Status",
        "Solids (share)",
        "Solids content",
        "Measured Tg′",
        "Measured collapse onset",
        "Measured Te",
        "Tg′ estimate",
        "Maximum product temperature",
        "Annealing",
    ];
    let rows = labels
        .iter()
        .enumerate()
        .map(|(i, l)| (l.to_string(), cells.iter().map(|c| c[i].clone()).collect()))
        .collect();
    Ok(render(ComparePage {
        columns,
        rows,
        message,
    }))
}
