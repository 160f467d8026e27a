//! The cycle page with its links, and each link's page: verdict, batch, dryer and a faster
//! primary drying.

use askama::Template;
use axum::extract::State;
use axum::response::Response;

use super::{assess_all, caution, free_name, state_label, topic_label, LinkRow};
use crate::auth::Actor;
use crate::derive::{assess, Assessment};
use crate::domain::*;
use crate::web::extract::{Form, Path};
use crate::web::formulations::{into_field_errors, unprocessable};
use crate::web::{fmt, render, see_other};
use crate::{AppError, AppState};
use glasspoint_science::verdict::CycleVerdict;

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
    dryers: Vec<(i64, String)>,
    link_form: LinkFormView,
    default_edge_share: String,
    errors: FieldErrors,
    caution: &'static str,
    runs: Vec<crate::web::runs::RunRow>,
}

#[derive(Default)]
struct LinkFormView {
    formulation_id: String,
    container_id: String,
    fill_volume_ml: String,
    dryer_id: String,
    vial_count: String,
    edge_vial_share: String,
}

async fn detail_page(
    state: &AppState,
    id: i64,
    link_form: LinkFormView,
    errors: FieldErrors,
) -> Result<Response, AppError> {
    let c = state.store.get_cycle(id).await?;
    let links = assess_all(state, state.store.links_of_cycle(id).await?).await?;
    let runs = crate::web::runs::rows(
        state,
        crate::storage::RunFilter {
            cycle_id: Some(id),
            ..Default::default()
        },
    )
    .await?;
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
    let dryers = state
        .store
        .list_dryers()
        .await?
        .into_iter()
        .map(|d| {
            let label = if d.typical_values {
                format!("{} (typical values)", d.name)
            } else {
                d.name
            };
            (d.id, label)
        })
        .collect();
    Ok(render(DetailPage {
        program: program_lines(&c),
        c,
        links,
        formulations,
        containers,
        dryers,
        link_form,
        default_edge_share: number_text(glasspoint_science::batch::DEFAULT_EDGE_SHARE),
        errors,
        caution: caution(),
        runs,
    }))
}

pub(super) async fn detail(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    detail_page(&state, id, LinkFormView::default(), FieldErrors::default()).await
}

pub(super) async fn add_link(
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
                dryer_id: form.dryer_id,
                vial_count: form.vial_count,
                edge_vial_share: form.edge_vial_share,
            };
            detail_page(&state, id, view, errors)
                .await
                .map(unprocessable)
        }
    }
}

pub(super) async fn remove_link(
    State(state): State<AppState>,
    actor: Actor,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    state.store.delete_link(&actor, id, link).await?;
    Ok(see_other(&format!("/cycles/{id}")))
}

/// The link, checked to belong to the cycle in the path.
pub(super) async fn link_of(state: &AppState, id: i64, link: i64) -> Result<Assessment, AppError> {
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
    classes: Vec<super::load::ClassRow>,
    batch_facts: Vec<(String, String)>,
    dryer_facts: Option<Vec<(String, String)>>,
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

pub(super) async fn link_detail(
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
        classes: a
            .batch
            .as_ref()
            .map(super::load::class_rows)
            .unwrap_or_default(),
        batch_facts: a
            .batch
            .as_ref()
            .map(|b| super::load::batch_facts(&a, b))
            .unwrap_or_default(),
        dryer_facts: super::load::dryer_facts(&a),
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
/// safety share, linked to the same formulation, container, fill and load.
pub(super) async fn adopt_suggestion(
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
        .create_link(&actor, new_id, &LinkDraft::like(&a.link))
        .await?;
    Ok(see_other(&format!("/cycles/{new_id}")))
}
