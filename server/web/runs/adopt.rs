//! Adopting what a run yields: the Kv fit into its container, the edge factor into its
//! dryer, the dried-layer resistance into its probed formulation. The adopter enters their
//! password again and gives a reason; the values are worked out again here, never taken
//! from the form.

use axum::extract::State;
use axum::response::Response;
use serde_json::json;

use super::super::extract::{Form, Path};
use super::super::formulations::unprocessable;
use super::super::{render, see_other};
use super::detail::{build, PageQuery};
use crate::auth::Actor;
use crate::domain::{FieldError, FieldErrors};
use crate::runs::{kv_series, load_context, rp_series};
use crate::storage::Adoption;
use crate::web::records::confirm_password;
use crate::{AppError, AppState};

#[derive(serde::Deserialize, Default)]
#[serde(default)]
pub struct AdoptForm {
    pub kind: String,
    pub target_version: String,
    pub reason: String,
    pub password: String,
}

pub async fn adopt(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<AdoptForm>,
) -> Result<Response, AppError> {
    let errors: FieldErrors = match adopt_one(&state, &actor, id, &form).await {
        Ok(()) => return Ok(see_other(&format!("/runs/{id}#model-error"))),
        Err(AppError::Input(e)) => e.into(),
        // Someone changed the target since the page was shown: say so beside the form.
        Err(AppError::Conflict(message)) => FieldError::new("target_version", message).into(),
        Err(other) => return Err(other),
    };
    let page = build(
        &state,
        id,
        PageQuery::default(),
        errors,
        form.reason.clone(),
    )
    .await?;
    Ok(unprocessable(render(page)))
}

/// Adopts one calibration the run offers, as `actor`.
pub async fn adopt_one(
    state: &AppState,
    actor: &Actor,
    id: i64,
    form: &AdoptForm,
) -> Result<(), AppError> {
    let expected_version: i64 = form.target_version.trim().parse().map_err(|_| {
        AppError::input(
            "target_version",
            "the form lost the version; reload the page",
        )
    })?;
    confirm_password(state, actor, &form.password, "nothing was adopted").await?;
    let ctx = load_context(&state.store, id, state.config.margin_c).await?;
    if ctx.run.review_state == crate::domain::ReviewState::Rejected {
        return Err(AppError::input(
            "kind",
            "this run was rejected in review, so nothing is adopted from it",
        ));
    }
    let unavailable =
        |what: &str| AppError::input("kind", format!("this run offers no {what} to adopt"));
    match form.kind.as_str() {
        "kv" => {
            let series = kv_series(&state.store, &ctx.container, ctx.run.dryer_id).await?;
            let Some(Ok(fit)) = &series.fit else {
                return Err(unavailable("Kv fit"));
            };
            let runs = series.run_ids();
            let adoption = Adoption {
                run_ids: &runs,
                result: json!({ "fit": fit, "points": series.rows.iter().map(|r| json!({
                    "run_id": r.run_id, "pressure_mtorr": r.pressure_mtorr,
                    "centre_kv_w_m2k": r.kv(crate::domain::runs::VialLocation::Centre),
                    "edge_kv_w_m2k": r.kv(crate::domain::runs::VialLocation::Edge),
                })).collect::<Vec<_>>() }),
                source: format!(
                    "In-house: gravimetric tests (runs {}), least-squares fit, rms residual {:.2} W/(m²·K).",
                    id_list(&runs),
                    fit.rms_w_m2k
                ),
                reason: &form.reason,
                expected_version,
            };
            state
                .store
                .adopt_kv(
                    actor,
                    ctx.container.id,
                    fit.kc_cal_s_cm2_k,
                    fit.kp_cal_s_cm2_k_torr,
                    fit.kd_per_torr,
                    &adoption,
                )
                .await?;
        }
        "edge_factor" => {
            let dryer = ctx
                .dryer
                .as_ref()
                .ok_or_else(|| unavailable("edge factor (no dryer is named)"))?;
            let series = kv_series(&state.store, &ctx.container, Some(dryer.id)).await?;
            let Some(Ok(factor)) = series.edge_factor else {
                return Err(unavailable("edge factor"));
            };
            let runs: Vec<i64> = series
                .rows
                .iter()
                .filter(|r| r.dryer_id == Some(dryer.id))
                .map(|r| r.run_id)
                .collect();
            let adoption = Adoption {
                run_ids: &runs,
                result: json!({ "edge_heat_factor": factor }),
                source: format!(
                    "In-house: edge and centre vials weighed in gravimetric tests (runs {}).",
                    id_list(&runs)
                ),
                reason: &form.reason,
                expected_version,
            };
            state
                .store
                .adopt_edge_factor(actor, dryer.id, factor, &adoption)
                .await?;
        }
        "resistance" => {
            let f = ctx
                .formulation
                .as_ref()
                .ok_or_else(|| unavailable("Rp (no probed formulation)"))?;
            let series = rp_series(&state.store, f.id, state.config.margin_c).await?;
            let Some(Ok(fit)) = &series.fit else {
                return Err(unavailable("Rp"));
            };
            let r = fit.resistance();
            let runs = series.run_ids();
            let adoption = Adoption {
                run_ids: &runs,
                result: json!({ "fit": fit, "runs": series.runs.iter().map(|(id, name, r)| json!({
                    "run_id": id, "name": name,
                    "points": r.as_ref().map(|r| r.points.len()).unwrap_or(0),
                    "problem": r.as_ref().err(),
                })).collect::<Vec<_>>() }),
                source: format!(
                    "Measured: product temperature of runs {} (centre probes), heat and mass balance \
                     turned around, fit over {} points, rms residual {:.3} cm²·Torr·h/g.",
                    id_list(&runs),
                    series.point_count(),
                    fit.rms_cm2_torr_h_g
                ),
                reason: &form.reason,
                expected_version,
            };
            state
                .store
                .adopt_resistance(actor, f.id, &r, &adoption)
                .await?;
        }
        other => {
            return Err(AppError::input(
                "kind",
                format!("“{other}” is not one of: kv, edge_factor, resistance"),
            ))
        }
    }
    Ok(())
}

fn id_list(ids: &[i64]) -> String {
    ids.iter()
        .map(i64::to_string)
        .collect::<Vec<_>>()
        .join(", ")
}
