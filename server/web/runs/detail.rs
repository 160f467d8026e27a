//! The run page: the record, its traces on one time axis, the reading (phases, end point,
//! excursions), the prediction against it with the model's error as it improves, and the
//! calibrations the run yields, each with a button to adopt it.

use askama::Template;
use axum::extract::State;
use axum::response::Response;
use glasspoint_science::runs::{
    Excursion, Phase, PressureEndPoint, ProbeArrival, RpResult, SecondaryKinetics,
};

use super::super::extract::{Path, Query};
use super::super::records::{signature_views, SignatureView};
use super::super::render;
use crate::domain::runs::{Run, RunKind};
use crate::domain::{Entity, FieldErrors};
use crate::runs::{self, KvSeries, RunContext};
use crate::storage::{Calibration, ModelCheck};
use crate::{AppError, AppState};

/// The secondary-drying question the page answers.
#[derive(serde::Deserialize, Default, Clone)]
#[serde(default)]
pub struct PageQuery {
    /// Target residual water, % w/w (blank: from the storage calculation).
    pub target_percent: String,
    /// Shelf temperature of the hold, °C (blank: the cycle's secondary shelf).
    pub at_shelf_c: String,
}

/// One calibration the run offers to adopt.
pub struct Offer {
    /// "kv", "edge_factor" or "resistance".
    pub kind: &'static str,
    pub title: String,
    /// Where it goes.
    pub target: String,
    pub target_version: i64,
    pub values: String,
}

#[derive(Template)]
#[template(path = "runs/detail.html")]
pub struct DetailPage {
    pub run: Run,
    pub cycle_name: String,
    pub container_name: String,
    pub dryer_name: Option<String>,
    pub formulations: Vec<(i64, String)>,
    pub probed_code: Option<String>,
    pub pressure_mtorr: f64,
    pub caution: &'static str,
    pub signatures: Vec<SignatureView>,
    pub has_series: bool,
    pub rows: usize,
    pub phases: Vec<Phase>,
    pub end_point: Option<Result<PressureEndPoint, String>>,
    pub arrivals: Vec<ProbeArrival>,
    pub measured_end: Option<runs::MeasuredEnd>,
    pub limit_c: Option<f64>,
    pub excursions: Vec<Excursion>,
    pub reading_notes: Vec<String>,
    pub prediction: Option<Result<crate::runs::PredictionSummary, String>>,
    pub checks: Vec<ModelCheck>,
    pub kv: Option<KvSeries>,
    pub this_grav: Vec<crate::runs::GravimetricRow>,
    pub rp: Option<Result<RpResult, String>>,
    /// Rp of the probed formulation from every cycle run probing it.
    pub rp_all: Option<crate::runs::RpSeries>,
    pub secondary: Option<Result<SecondaryKinetics, String>>,
    pub query: PageQuery,
    pub target_words: String,
    pub offers: Vec<Offer>,
    pub calibrations: Vec<Calibration>,
    pub errors: FieldErrors,
    pub adopt_reason: String,
}

pub async fn page(
    State(state): State<AppState>,
    Path(id): Path<i64>,
    Query(query): Query<PageQuery>,
) -> Result<Response, AppError> {
    let page = build(&state, id, query, FieldErrors::default(), String::new()).await?;
    Ok(render(page))
}

/// The page, with any refusal of an adoption shown beside its form.
pub async fn build(
    state: &AppState,
    id: i64,
    query: PageQuery,
    errors: FieldErrors,
    adopt_reason: String,
) -> Result<DetailPage, AppError> {
    let ctx = runs::load_context(&state.store, id, state.config.margin_c).await?;
    let codes = state.store.formulation_codes().await?;
    let code_of = |f: i64| {
        codes
            .iter()
            .find(|(i, _)| *i == f)
            .map(|(_, c)| c.clone())
            .unwrap_or_else(|| f.to_string())
    };
    let prediction = match &ctx.prediction {
        Some(Ok(p)) => {
            let measured = ctx
                .reading
                .as_ref()
                .and_then(|r| r.measured_end.as_ref())
                .map(|m| m.end_h);
            state
                .store
                .record_model_check(id, &p.model_check(measured))
                .await?;
            Some(Ok(p.summary()))
        }
        Some(Err(e)) => Some(Err(e.clone())),
        None => None,
    };
    let checks = state.store.model_checks_of(id).await?;
    let kv = if ctx.run.kind == RunKind::Gravimetric {
        Some(runs::kv_series(&state.store, &ctx.container, ctx.run.dryer_id).await?)
    } else {
        None
    };
    let this_grav = kv
        .as_ref()
        .and_then(|k| k.rows.iter().find(|r| r.run_id == id))
        .map(|r| r.rows.clone())
        .unwrap_or_default();
    let (rp, rp_all) = match (&ctx.run.kind, &ctx.formulation) {
        (RunKind::Development, Some(f)) => (
            runs::rp_of_run(&ctx),
            Some(runs::rp_series(&state.store, f.id, state.config.margin_c).await?),
        ),
        _ => (None, None),
    };
    let (secondary, target_words) = secondary_of(state, &ctx, &query).await?;
    let offers = offers(&ctx, kv.as_ref(), rp_all.as_ref());
    let mut calibrations = state
        .store
        .calibrations_of(Entity::Container, ctx.container.id)
        .await?;
    if let Some(d) = &ctx.dryer {
        calibrations.extend(state.store.calibrations_of(Entity::Dryer, d.id).await?);
    }
    if let Some(f) = &ctx.formulation {
        calibrations.extend(
            state
                .store
                .calibrations_of(Entity::Formulation, f.id)
                .await?,
        );
    }
    calibrations.retain(|c| c.run_ids.contains(&id));
    let reading = ctx.reading.as_ref();
    Ok(DetailPage {
        cycle_name: ctx.cycle.name.clone(),
        container_name: ctx.container.name.clone(),
        dryer_name: ctx.dryer.as_ref().map(|d| d.name.clone()),
        formulations: ctx
            .run
            .formulation_ids
            .iter()
            .map(|f| (*f, code_of(*f)))
            .collect(),
        probed_code: ctx.formulation.as_ref().map(|f| f.code.clone()),
        pressure_mtorr: ctx.pressure_mtorr,
        caution: runs::CAUTION,
        signatures: signature_views(state, Entity::Run, id).await?,
        has_series: ctx.series.is_some(),
        rows: ctx.series.as_ref().map_or(0, |s| s.time_h.len()),
        phases: reading.map(|r| r.phases.clone()).unwrap_or_default(),
        end_point: reading.and_then(|r| r.end_point.clone()),
        arrivals: reading.map(|r| r.arrivals.clone()).unwrap_or_default(),
        measured_end: reading.and_then(|r| r.measured_end.clone()),
        limit_c: reading.and_then(|r| r.limit_c),
        excursions: reading.map(|r| r.excursions.clone()).unwrap_or_default(),
        reading_notes: reading.map(|r| r.notes.clone()).unwrap_or_default(),
        prediction,
        checks,
        kv,
        this_grav,
        rp,
        rp_all,
        secondary,
        query,
        target_words,
        offers,
        calibrations,
        errors,
        adopt_reason,
        run: ctx.run,
    })
}

/// Secondary-drying kinetics from the run's samples, with the hold to the target.
async fn secondary_of(
    state: &AppState,
    ctx: &RunContext,
    q: &PageQuery,
) -> Result<(Option<Result<SecondaryKinetics, String>>, String), AppError> {
    if ctx.run.moisture.is_empty() {
        return Ok((None, String::new()));
    }
    let typed = q
        .target_percent
        .trim()
        .replace(',', ".")
        .parse::<f64>()
        .ok();
    let at = q
        .at_shelf_c
        .trim()
        .replace(',', ".")
        .parse::<f64>()
        .ok()
        .or(Some(ctx.cycle.program.secondary.shelf_temp_c));
    let (target, words) = match (typed, &ctx.formulation) {
        (Some(t), _) => (Some(t / 100.0), format!("{t} % w/w as typed")),
        (None, Some(f)) => {
            let materials = state.store.list_materials().await?;
            match runs::moisture_target(f, &materials) {
                Ok((w, words)) => (Some(w), format!("From storage: {words}.")),
                Err(why) => (None, why),
            }
        }
        (None, None) => (
            None,
            "no formulation is probed, so no target follows from storage".into(),
        ),
    };
    Ok((runs::secondary(&ctx.run.moisture, target, at), words))
}

/// The calibrations this run can offer: Kv and the edge factor from a gravimetric series,
/// Rp from a cycle run's centre probes.
fn offers(
    ctx: &RunContext,
    kv: Option<&KvSeries>,
    rp: Option<&crate::runs::RpSeries>,
) -> Vec<Offer> {
    let mut out = Vec::new();
    if let Some(Ok(fit)) = kv.and_then(|k| k.fit.as_ref()) {
        out.push(Offer {
            kind: "kv",
            title: "Kv coefficients from the container's gravimetric tests".into(),
            target: format!("container {}", ctx.container.name),
            target_version: ctx.container.version,
            values: format!(
                "KC {:.3e} cal/(s·cm²·K), KP {:.3e} cal/(s·cm²·K·Torr), KD {:.3} 1/Torr",
                fit.kc_cal_s_cm2_k, fit.kp_cal_s_cm2_k_torr, fit.kd_per_torr
            ),
        });
    }
    if let (Some(Ok(f)), Some(d)) = (kv.and_then(|k| k.edge_factor.as_ref()), &ctx.dryer) {
        out.push(Offer {
            kind: "edge_factor",
            title: "Edge heat factor from the edge and centre vials weighed".into(),
            target: format!("dryer {}", d.name),
            target_version: d.version,
            values: format!("{f:.3}"),
        });
    }
    if let (Some((Some(Ok(fit)), n)), Some(f)) = (
        rp.map(|r| (r.fit.as_ref(), r.run_ids().len())),
        &ctx.formulation,
    ) {
        out.push(Offer {
            kind: "resistance",
            title: format!("Dry-layer resistance from the centre probes of {n} run(s)"),
            target: format!("formulation {}", f.code),
            target_version: f.version,
            values: format!(
                "R0 {:.3} cm²·Torr·h/g, A1 {:.3} cm·Torr·h/g, A2 {:.3} 1/cm",
                fit.r0_cm2_torr_h_g, fit.a1_cm_torr_h_g, fit.a2_per_cm
            ),
        });
    }
    out
}
