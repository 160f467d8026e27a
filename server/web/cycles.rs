//! Candidate cycles: create, edit, copy, archive; link formulations; verdicts, charts,
//! design space and a suggested faster cycle for each link.

use super::extract::{Form, Path, Query};
use crate::auth::Actor;
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;
use glasspoint_science::design_space::{design_space, BoundaryState, CellState, DesignSpaceInput};
use glasspoint_science::verdict::{CheckState, CheckTopic, CycleVerdict};
use serde::Deserialize;

use super::formulations::{into_field_errors, unprocessable};
use super::{draft_and_version, fmt, render, saved_or_form, see_other, svg};
use crate::charts::{
    render_heatmap, render_line_chart, HeatmapChart, LineChart, RefLine, Series, SeriesStyle,
};
use crate::derive::{assess, Assessment};
use crate::domain::*;
use crate::{AppError, AppState};

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
async fn free_name(state: &AppState, base: &str) -> Result<String, AppError> {
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
            .create_link(
                &actor,
                new_id,
                &LinkDraft {
                    formulation_id: l.formulation_id,
                    container_id: l.container_id,
                    fill_volume_ml: l.fill_volume_ml,
                },
            )
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

// ------------------------------------------------------------------ detail and links

/// The program as lines of text for the detail page.
pub fn program_lines(c: &Cycle) -> Vec<(String, String)> {
    let p = &c.program;
    let h = |min: f64| format!("{} h", fmt::trim(min / 60.0));
    let mut rows = vec![(
        "Freezing".to_string(),
        format!(
            "at {} °C/min to {} °C, hold {}",
            fmt::trim(p.freezing.ramp_c_per_min),
            fmt::num1(p.freezing.hold_temp_c),
            h(p.freezing.hold_min)
        ),
    )];
    if let Some(a) = p.annealing {
        rows.push((
            "Annealing".into(),
            format!(
                "warm to {} °C, hold {}, return to {} °C{}",
                fmt::num1(a.temp_c),
                h(a.hold_min),
                fmt::num1(p.freezing.hold_temp_c),
                a.return_ramp_c_per_min
                    .map(|r| format!(" at {} °C/min", fmt::trim(r)))
                    .unwrap_or_default()
            ),
        ));
    }
    rows.push((
        "Primary drying".into(),
        format!(
            "at {} °C/min to {} °C, {} mTorr ({} Pa), hold {}",
            fmt::trim(p.primary.ramp_c_per_min),
            fmt::num1(p.primary.shelf_temp_c),
            fmt::trim(p.primary.chamber_pressure_mtorr),
            fmt::num2(glasspoint_science::units::mtorr_to_pa(
                p.primary.chamber_pressure_mtorr
            )),
            h(p.primary.hold_min)
        ),
    ));
    rows.push((
        "Secondary drying".into(),
        format!(
            "at {} °C/min to {} °C, {} mTorr, hold {}",
            fmt::trim(p.secondary.ramp_c_per_min),
            fmt::num1(p.secondary.shelf_temp_c),
            fmt::trim(p.secondary.pressure_mtorr),
            h(p.secondary.hold_min)
        ),
    ));
    if let Some(t) = p.condenser_temp_c {
        rows.push(("Condenser".into(), format!("{} °C", fmt::num1(t))));
    }
    if let Some(c) = c.sublimation_ceiling_kg_h_m2 {
        rows.push((
            "Equipment ceiling".into(),
            format!("{} kg/(h·m²) of shelf", fmt::trim(c)),
        ));
    }
    rows
}

#[derive(Template)]
#[template(path = "cycles/detail.html")]
struct DetailPage {
    c: Cycle,
    program: Vec<(String, String)>,
    links: Vec<LinkRow>,
    formulations: Vec<(i64, String)>,
    containers: Vec<(i64, String)>,
    link_form: LinkFormView,
    errors: FieldErrors,
    caution: &'static str,
}

#[derive(Default)]
struct LinkFormView {
    formulation_id: String,
    container_id: String,
    fill_volume_ml: String,
}

async fn detail_page(
    state: &AppState,
    id: i64,
    link_form: LinkFormView,
    errors: FieldErrors,
) -> Result<Response, AppError> {
    let c = state.store.get_cycle(id).await?;
    let links = assess_all(state, state.store.links_of_cycle(id).await?).await?;
    let formulations = state
        .store
        .search_formulations(&Default::default(), Default::default(), 1, 200)
        .await?
        .items
        .into_iter()
        .map(|f| (f.id, format!("{} — {}", f.code, f.name)))
        .collect();
    let containers = state
        .store
        .list_containers()
        .await?
        .into_iter()
        .map(|c| (c.id, c.name))
        .collect();
    Ok(render(DetailPage {
        program: program_lines(&c),
        c,
        links,
        formulations,
        containers,
        link_form,
        errors,
        caution: caution(),
    }))
}

async fn detail(State(state): State<AppState>, Path(id): Path<i64>) -> Result<Response, AppError> {
    detail_page(&state, id, LinkFormView::default(), FieldErrors::default()).await
}

async fn add_link(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<LinkForm>,
) -> Result<Response, AppError> {
    // A blank fill takes the formulation's own target fill.
    let mut form = form;
    if form.fill_volume_ml.trim().is_empty() {
        if let Ok(fid) = form.formulation_id.trim().parse::<i64>() {
            if let Ok(f) = state.store.get_formulation(fid).await {
                if let Some(v) = f.fill_volume_ml {
                    form.fill_volume_ml = v.to_string();
                }
            }
        }
    }
    let result = match form.parse() {
        Ok(d) => state.store.create_link(&actor, id, &d).await,
        Err(e) => Err(AppError::Fields(e)),
    };
    match result {
        Ok(_) => Ok(see_other(&format!("/cycles/{id}"))),
        Err(AppError::NotFound(w)) => Err(AppError::NotFound(w)),
        Err(e) => {
            let errors = into_field_errors(e)?;
            let view = LinkFormView {
                formulation_id: form.formulation_id,
                container_id: form.container_id,
                fill_volume_ml: form.fill_volume_ml,
            };
            detail_page(&state, id, view, errors)
                .await
                .map(unprocessable)
        }
    }
}

async fn remove_link(
    State(state): State<AppState>,
    actor: Actor,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    state.store.delete_link(&actor, id, link).await?;
    Ok(see_other(&format!("/cycles/{id}")))
}

/// The link, checked to belong to the cycle in the path.
async fn link_of(state: &AppState, id: i64, link: i64) -> Result<Assessment, AppError> {
    let l = state.store.get_link(link).await?;
    if l.cycle_id != id {
        return Err(AppError::NotFound(format!("Cycle link {link}")));
    }
    assess(&state.store, l, state.config.margin_c).await
}

struct CheckView {
    topic: &'static str,
    state: &'static str,
    class: &'static str,
    message: String,
}

fn check_views(v: &CycleVerdict) -> Vec<CheckView> {
    v.checks
        .iter()
        .map(|c| {
            let (state, class) = state_label(c.state);
            CheckView {
                topic: topic_label(c.topic),
                state,
                class,
                message: c.message.clone(),
            }
        })
        .collect()
}

#[derive(Template)]
#[template(path = "cycles/link.html")]
struct LinkPage {
    a: Assessment,
    overall: &'static str,
    overall_class: &'static str,
    checks: Vec<CheckView>,
    verdict_error: String,
    facts: Vec<(String, String)>,
    suggestion: Vec<String>,
    suggestion_ok: bool,
    guided_ok: bool,
    caution: &'static str,
    gauge_caution: &'static str,
}

fn simulation_facts(a: &Assessment) -> Vec<(String, String)> {
    let mut rows = vec![
        (
            "Formulation".to_string(),
            format!("{} — {}", a.formulation.code, a.formulation.name),
        ),
        (
            "Container and fill".into(),
            format!(
                "{}, {} mL",
                a.container.name,
                fmt::trim(a.link.fill_volume_ml)
            ),
        ),
        (
            "Solids".into(),
            format!(
                "{} mg/mL ({} of the solution mass)",
                fmt::num1(a.formulation.solids_mg_ml),
                fmt::percent(
                    a.formulation
                        .solids_mass_fraction(crate::derive::SOLUTION_DENSITY_G_ML)
                )
            ),
        ),
        (
            "Dry-layer resistance".into(),
            format!(
                "R0 {}, A1 {}, A2 {} — {}{}",
                fmt::trim(a.resistance.resistance.r0_cm2_torr_h_g),
                fmt::trim(a.resistance.resistance.a1_cm_torr_h_g),
                fmt::trim(a.resistance.resistance.a2_per_cm),
                if a.resistance.measured {
                    "measured: "
                } else {
                    "stated default: "
                },
                a.resistance.source
            ),
        ),
        (
            "Maximum product temperature".into(),
            a.derived
                .max_product_temp_c()
                .map(|t| format!("{} °C", fmt::num1(t)))
                .unwrap_or_else(|| "not derived yet".into()),
        ),
    ];
    if let Some(s) = &a.simulation {
        rows.push((
            "Kv at the chamber pressure".into(),
            format!("{} W/(m²·K)", fmt::num1(s.kv_w_m2k)),
        ));
        rows.push((
            "Ice height".into(),
            format!(
                "{} cm ({} g)",
                fmt::num2(s.ice_height_cm),
                fmt::num2(s.ice_mass_g)
            ),
        ));
        rows.push((
            "Predicted primary drying".into(),
            format!("{} h", fmt::num1(s.summary.drying_time_h)),
        ));
        rows.push((
            "Peak front temperature".into(),
            format!(
                "{} °C at {} h",
                fmt::num1(s.summary.peak_front_temp_c),
                fmt::num1(s.summary.peak_front_time_h)
            ),
        ));
        rows.push((
            "Peak bottom temperature".into(),
            format!("{} °C", fmt::num1(s.summary.peak_bottom_temp_c)),
        ));
        rows.push((
            "Initial sublimation rate".into(),
            format!(
                "{} g/h per vial",
                fmt::num2(s.summary.initial_sublimation_rate_g_h)
            ),
        ));
        if let Some(h) = s.summary.limit_exceeded_h.filter(|h| *h > 0.0) {
            rows.push((
                "Above the limit".into(),
                format!(
                    "{} h in all, first at {} h",
                    fmt::num1(h),
                    fmt::opt1(s.summary.limit_first_exceeded_h)
                ),
            ));
        }
        for n in &s.notes {
            rows.push(("Note".into(), n.clone()));
        }
    }
    rows
}

fn suggestion_for(a: &Assessment) -> Result<glasspoint_science::suggest::Suggestion, String> {
    a.suggestion()
}

async fn link_detail(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let (overall, overall_class, checks, verdict_error) = match &a.verdict {
        Ok(v) => {
            let (s, c) = state_label(v.overall);
            (s, c, check_views(v), String::new())
        }
        Err(e) => ("not checked", "verdict-fails", Vec::new(), e.clone()),
    };
    let found = suggestion_for(&a);
    let guided_ok = found
        .as_ref()
        .is_ok_and(|s| s.at_tang_pikal_pressure.is_some());
    let (suggestion, suggestion_ok) = match found {
        Ok(s) => {
            let mut lines = vec![format!(
                "Fastest in range: shelf {} °C at {} mTorr, primary drying about {} h with the front peaking at {} °C.",
                fmt::num1(s.shelf_temp_c),
                fmt::trim((s.chamber_pressure_mtorr).round()),
                fmt::num1(s.drying_time_h),
                fmt::num1(s.peak_front_temp_c)
            )];
            if let Some(g) = &s.at_tang_pikal_pressure {
                lines.push(format!(
                    "At the guided pressure of {} mTorr (Tang & Pikal 2004): shelf {} °C, about {} h.",
                    fmt::trim(g.chamber_pressure_mtorr.round()),
                    fmt::num1(g.shelf_temp_c),
                    fmt::num1(g.drying_time_h)
                ));
            }
            if let Some(sim) = &a.simulation {
                let saved = sim.summary.drying_time_h - s.drying_time_h;
                if saved > 0.05 {
                    lines.push(format!(
                        "That is {} h shorter than this cycle's predicted {} h.",
                        fmt::num1(saved),
                        fmt::num1(sim.summary.drying_time_h)
                    ));
                }
            }
            lines.extend(s.reasoning.iter().cloned());
            (lines, true)
        }
        Err(e) => (vec![e], false),
    };
    Ok(render(LinkPage {
        overall,
        overall_class,
        checks,
        verdict_error,
        facts: simulation_facts(&a),
        suggestion,
        suggestion_ok,
        guided_ok,
        a,
        caution: caution(),
        gauge_caution: glasspoint_science::gauge::caution(),
    }))
}

/// Offers the suggestion as a new candidate cycle: this cycle with the suggested primary
/// shelf temperature and pressure, and a primary hold of the predicted time plus the
/// safety share, linked to the same formulation, container and fill.
async fn adopt_suggestion(
    State(state): State<AppState>,
    actor: Actor,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let s = suggestion_for(&a).map_err(|e| AppError::input("suggestion", e))?;
    let mut program = a.cycle.program.clone();
    program.primary.shelf_temp_c = (s.shelf_temp_c * 2.0).floor() / 2.0;
    program.primary.chamber_pressure_mtorr = s.chamber_pressure_mtorr.round();
    let hold_h =
        (s.drying_time_h * (1.0 + glasspoint_science::verdict::DEFAULT_SAFETY_FACTOR)).ceil();
    program.primary.hold_min = hold_h * 60.0;
    let draft = CycleDraft {
        name: free_name(&state, &format!("{} faster for {}", a.cycle.name, a.formulation.code)).await?,
        notes: format!(
            "Suggested from “{}” for {}: the most aggressive primary drying the model finds within the limit. Confirm experimentally.",
            a.cycle.name, a.formulation.code
        ),
        program,
        sublimation_ceiling_kg_h_m2: a.cycle.sublimation_ceiling_kg_h_m2,
    };
    let new_id = state.store.create_cycle(&actor, &draft).await?;
    state
        .store
        .create_link(
            &actor,
            new_id,
            &LinkDraft {
                formulation_id: a.formulation.id,
                container_id: a.container.id,
                fill_volume_ml: a.link.fill_volume_ml,
            },
        )
        .await?;
    Ok(see_other(&format!("/cycles/{new_id}")))
}

// ------------------------------------------------------------------ charts

fn series_of(
    a: &Assessment,
    pick: fn(&glasspoint_science::drying::SeriesPoint) -> f64,
) -> Vec<(f64, f64)> {
    a.simulation
        .as_ref()
        .map(|s| s.series.iter().map(|p| (p.time_h, pick(p))).collect())
        .unwrap_or_default()
}

async fn temperatures_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let mut hlines = Vec::new();
    if let Some(t) = a.derived.max_product_temp_c() {
        hlines.push(RefLine {
            label: format!("limit {} °C", fmt::num1(t)),
            value: t,
            color: Some(5),
        });
    }
    let chart = LineChart {
        title: format!(
            "{} on {}: temperatures in primary drying",
            a.formulation.code, a.cycle.name
        ),
        x_label: "time (h)".into(),
        y_label: "temperature (°C)".into(),
        series: vec![
            Series {
                name: "shelf".into(),
                points: series_of(&a, |p| p.shelf_temp_c),
                style: SeriesStyle::DashedLine,
                color: Some(0),
            },
            Series {
                name: "sublimation front".into(),
                points: series_of(&a, |p| p.front_temp_c),
                style: SeriesStyle::Line,
                color: Some(1),
            },
            Series {
                name: "vial bottom".into(),
                points: series_of(&a, |p| p.bottom_temp_c),
                style: SeriesStyle::Line,
                color: Some(2),
            },
        ],
        hlines,
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

async fn layer_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let chart = LineChart {
        title: format!("{}: dried-layer thickness", a.formulation.code),
        x_label: "time (h)".into(),
        y_label: "dried layer (cm)".into(),
        series: vec![Series {
            name: "dried layer".into(),
            points: series_of(&a, |p| p.dried_layer_cm),
            style: SeriesStyle::Line,
            color: Some(3),
        }],
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

async fn rate_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let chart = LineChart {
        title: format!("{}: sublimation rate per vial", a.formulation.code),
        x_label: "time (h)".into(),
        y_label: "sublimation rate (g/h)".into(),
        series: vec![Series {
            name: "sublimation rate".into(),
            points: series_of(&a, |p| p.sublimation_rate_g_h),
            style: SeriesStyle::Line,
            color: Some(4),
        }],
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

/// What a Pirani gauge would read beside the capacitance manometer, and where the two
/// meet: the usual sign that primary drying has ended.
async fn gauges_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let (trace, end) = a.gauge_trace()?;
    let chart = LineChart {
        title: format!(
            "{}: pressure gauges in primary drying (estimated)",
            a.formulation.code
        ),
        x_label: "time (h)".into(),
        y_label: "reading (mTorr)".into(),
        series: vec![
            Series {
                name: "capacitance manometer".into(),
                points: trace
                    .iter()
                    .map(|p| (p.time_h, p.manometer_mtorr))
                    .collect(),
                style: SeriesStyle::Line,
                color: Some(0),
            },
            Series {
                name: "Pirani (nitrogen calibration)".into(),
                points: trace.iter().map(|p| (p.time_h, p.pirani_mtorr)).collect(),
                style: SeriesStyle::Line,
                color: Some(1),
            },
        ],
        vlines: end
            .map(|t| {
                vec![RefLine {
                    label: format!("readings meet: {} h", fmt::num1(t)),
                    value: t,
                    color: Some(2),
                }]
            })
            .unwrap_or_default(),
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

// ------------------------------------------------------------------ design space

#[derive(Deserialize, Default)]
struct GridQuery {
    #[serde(default)]
    shelf_from: String,
    #[serde(default)]
    shelf_to: String,
    #[serde(default)]
    pressure_from: String,
    #[serde(default)]
    pressure_to: String,
    #[serde(default)]
    steps: String,
}

/// The grid the user asked for, or the default −40…+20 °C × 50…300 mTorr in 25 steps.
struct Grid {
    shelf: (f64, f64),
    pressure: (f64, f64),
    steps: usize,
}

impl GridQuery {
    fn parse(&self) -> Result<Grid, FieldErrors> {
        let mut e = FieldErrors::default();
        let mut num = |field: &str, raw: &str, default: f64| {
            crate::domain::fields::optional_number(&mut e, field, raw).unwrap_or(default)
        };
        let shelf = (
            num("shelf_from", &self.shelf_from, -40.0),
            num("shelf_to", &self.shelf_to, 20.0),
        );
        let pressure = (
            num("pressure_from", &self.pressure_from, 50.0),
            num("pressure_to", &self.pressure_to, 300.0),
        );
        let steps = num("steps", &self.steps, 25.0);
        if shelf.0 >= shelf.1 {
            e.add("shelf_to", "must be above the lowest shelf temperature");
        }
        if !(-80.0..=80.0).contains(&shelf.0) || !(-80.0..=80.0).contains(&shelf.1) {
            e.add(
                "shelf_from",
                "shelf temperatures must lie between −80 and 80 °C",
            );
        }
        if pressure.0 >= pressure.1 {
            e.add("pressure_to", "must be above the lowest pressure");
        }
        if pressure.0 <= 0.0 || pressure.1 > 2000.0 {
            e.add(
                "pressure_from",
                "pressures must lie between 0 and 2000 mTorr",
            );
        }
        if !(2.0..=60.0).contains(&steps) || steps.fract() != 0.0 {
            e.add("steps", "must be a whole number from 2 to 60");
        }
        e.into_result(Grid {
            shelf,
            pressure,
            steps: steps as usize,
        })
    }
}

fn spaced(range: (f64, f64), n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| range.0 + (range.1 - range.0) * i as f64 / (n - 1) as f64)
        .collect()
}

fn run_grid(
    a: &Assessment,
    grid: &Grid,
) -> Result<glasspoint_science::design_space::DesignSpace, AppError> {
    let limit = a.derived.max_product_temp_c().ok_or_else(|| {
        AppError::input(
            "max_product_temp_c",
            "no maximum product temperature is derived for this formulation yet",
        )
    })?;
    Ok(design_space(&DesignSpaceInput {
        base: a.base.clone(),
        shelf_temps_c: spaced(grid.shelf, grid.steps),
        pressures_mtorr: spaced(grid.pressure, grid.steps),
        max_product_temp_c: limit,
        start_shelf_temp_c: None,
        ramp_c_per_min: None,
        sublimation_ceiling_kg_h_m2: a.cycle.sublimation_ceiling_kg_h_m2,
        sublimation_ceiling_g_h_per_vial: None,
    })?)
}

#[derive(Template)]
#[template(path = "cycles/design_space.html")]
struct DesignSpacePage {
    a: Assessment,
    q_shelf_from: String,
    q_shelf_to: String,
    q_pressure_from: String,
    q_pressure_to: String,
    q_steps: String,
    errors: FieldErrors,
    svg_query: String,
    boundary: Vec<(String, String, String)>,
    caution: &'static str,
}

async fn design_space_page(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
    Query(q): Query<GridQuery>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let (errors, boundary) = match q.parse() {
        Ok(grid) => match run_grid(&a, &grid) {
            Ok(space) => (FieldErrors::default(), boundary_rows(&space)),
            Err(e) => (into_field_errors(e)?, Vec::new()),
        },
        Err(e) => (e, Vec::new()),
    };
    let svg_query = serde_urlencoded::to_string([
        ("shelf_from", &q.shelf_from),
        ("shelf_to", &q.shelf_to),
        ("pressure_from", &q.pressure_from),
        ("pressure_to", &q.pressure_to),
        ("steps", &q.steps),
    ])
    .unwrap_or_default();
    Ok(render(DesignSpacePage {
        q_shelf_from: q.shelf_from,
        q_shelf_to: q.shelf_to,
        q_pressure_from: q.pressure_from,
        q_pressure_to: q.pressure_to,
        q_steps: q.steps,
        errors,
        svg_query,
        boundary,
        a,
        caution: caution(),
    }))
}

fn boundary_rows(
    space: &glasspoint_science::design_space::DesignSpace,
) -> Vec<(String, String, String)> {
    space
        .boundary
        .iter()
        .map(|b| {
            let what = match b.state {
                BoundaryState::Crosses => "peak reaches the limit here",
                BoundaryState::BelowLimitAcrossRange => {
                    "within the limit across the whole shelf range"
                }
                BoundaryState::AboveLimitAcrossRange => "above the limit across the shelf range",
                BoundaryState::NoSublimation => "nothing sublimes in this shelf range",
                BoundaryState::SublimesOnlyAboveLimit => {
                    "ice sublimes only with the front above the limit"
                }
            };
            (
                fmt::trim(b.chamber_pressure_mtorr.round()),
                b.shelf_temp_c
                    .map(|t| format!("{} °C", fmt::num1(t)))
                    .unwrap_or_else(|| "—".into()),
                format!(
                    "{what}{}",
                    b.drying_time_h
                        .map(|h| format!("; {} h", fmt::num1(h)))
                        .unwrap_or_default()
                ),
            )
        })
        .collect()
}

async fn design_space_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
    Query(q): Query<GridQuery>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let grid = q.parse().map_err(AppError::Fields)?;
    let space = run_grid(&a, &grid)?;
    let shelves = spaced(grid.shelf, grid.steps);
    let pressures = spaced(grid.pressure, grid.steps);
    // Cells run pressure by pressure: row-major in pressure (y), then shelf (x).
    let values = space
        .cells
        .iter()
        .map(|c| {
            if c.state == CellState::Dries {
                c.peak_front_temp_c
            } else {
                None
            }
        })
        .collect();
    let ok_mask = space
        .cells
        .iter()
        .map(|c| c.within_limit && c.above_sublimation_ceiling != Some(true))
        .collect();
    let boundary = space
        .boundary
        .iter()
        .filter(|b| b.state == BoundaryState::Crosses)
        .filter_map(|b| b.shelf_temp_c.map(|t| (t, b.chamber_pressure_mtorr)))
        .collect();
    let p = &a.cycle.program.primary;
    let chart = HeatmapChart {
        title: format!(
            "{} in {}: design space",
            a.formulation.code, a.container.name
        ),
        x_label: "shelf temperature (°C)".into(),
        y_label: "chamber pressure (mTorr)".into(),
        x_values: shelves,
        y_values: pressures,
        values,
        value_label: "peak front temperature (°C)".into(),
        boundary,
        boundary_label: format!("peak = limit {} °C", fmt::num1(space.max_product_temp_c)),
        marker: Some((
            p.shelf_temp_c,
            p.chamber_pressure_mtorr,
            a.cycle.name.clone(),
        )),
        ok_mask,
        mask_label: "above the limit".into(),
        ..HeatmapChart::default()
    };
    Ok(svg(render_heatmap(&chart)))
}
