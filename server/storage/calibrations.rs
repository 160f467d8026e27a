//! What the team adopted from its runs into containers, dryers and formulations, and the
//! model's error against each run as its basis improves.
//!
//! An adoption is one audited change of the target record (its reason and author in the
//! trail) plus a row naming the runs, the fit and the person who adopted it, written in
//! the same transaction.

use time::OffsetDateTime;

use super::write::{on_tx, Target};
use super::{now, on_pool, Store};
use crate::auth::Actor;
use crate::domain::runs::CalibrationKind;
use crate::domain::{Entity, Role};
use crate::error::AppError;
use glasspoint_science::drying::Resistance;

/// One adoption as stored.
#[derive(Debug, Clone, serde::Serialize, utoipa::ToSchema)]
pub struct Calibration {
    pub id: i64,
    pub kind: CalibrationKind,
    pub entity: Entity,
    pub entity_id: i64,
    pub run_ids: Vec<i64>,
    /// The fit as adopted (coefficients, residuals, points).
    #[schema(value_type = Object)]
    pub result: serde_json::Value,
    pub reason: String,
    pub full_name: String,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub adopted_at: OffsetDateTime,
}

/// What is adopted, and from which runs.
pub struct Adoption<'a> {
    pub run_ids: &'a [i64],
    pub result: serde_json::Value,
    /// Where the values came from, as the target record's source text shows it.
    pub source: String,
    pub reason: &'a str,
    /// The version of the target record the adopter saw.
    pub expected_version: i64,
}

/// The model rerun against a run on one basis (the Kv and Rp it used), and its error.
#[derive(Debug, Clone, PartialEq, serde::Serialize, utoipa::ToSchema)]
pub struct ModelCheck {
    /// In words: which Kv and Rp the model used.
    pub basis: String,
    /// Identifies the basis (record ids and versions), so one basis is kept once.
    pub basis_key: String,
    pub predicted_end_h: Option<f64>,
    pub measured_end_h: Option<f64>,
    /// Predicted minus measured end of primary drying, h.
    pub end_error_h: Option<f64>,
    /// Root-mean-square difference of the probes from the predicted bottom temperature, °C.
    pub probe_rmse_c: Option<f64>,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub checked_at: OffsetDateTime,
}

type CalibrationRow = (
    i64,
    String,
    String,
    i64,
    String,
    String,
    String,
    String,
    OffsetDateTime,
);

type CheckRow = (
    String,
    String,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    OffsetDateTime,
);

fn stored(what: &str, e: impl std::fmt::Display) -> AppError {
    AppError::Internal(format!("stored calibration {what}: {e}"))
}

fn to_calibration(r: CalibrationRow) -> Result<Calibration, AppError> {
    Ok(Calibration {
        id: r.0,
        kind: CalibrationKind::parse(&r.1).ok_or_else(|| stored("kind", &r.1))?,
        entity: Entity::parse(&r.2).ok_or_else(|| stored("entity", &r.2))?,
        entity_id: r.3,
        run_ids: serde_json::from_str(&r.4).map_err(|e| stored("runs", e))?,
        result: serde_json::from_str(&r.5).map_err(|e| stored("result", e))?,
        reason: r.6,
        full_name: r.7,
        adopted_at: r.8,
    })
}

impl Store {
    /// Adopts fitted Kv coefficients into a container: its values become the team's own.
    pub async fn adopt_kv(
        &self,
        actor: &Actor,
        container_id: i64,
        kc: f64,
        kp: f64,
        kd: f64,
        a: &Adoption<'_>,
    ) -> Result<i64, AppError> {
        let sql = "UPDATE containers SET kc_cal_s_cm2_k = $1, kp_cal_s_cm2_k_torr = $2, \
                   kd_per_torr = $3, kv_source = $4, typical_values = FALSE WHERE id = $5";
        let mut w = self
            .begin_adoption(actor, Entity::Container, container_id, a)
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query(sql)
                .bind(kc).bind(kp).bind(kd).bind(&a.source).bind(container_id)
                .execute(&mut **c)
                .await?;
        });
        let id = insert_calibration(&mut w, actor, CalibrationKind::Kv, container_id, a).await?;
        w.finish(container_id).await?;
        Ok(id)
    }

    /// Adopts a measured edge heat factor into a dryer.
    pub async fn adopt_edge_factor(
        &self,
        actor: &Actor,
        dryer_id: i64,
        factor: f64,
        a: &Adoption<'_>,
    ) -> Result<i64, AppError> {
        glasspoint_science::dryer::edge_heat_factor("edge_heat_factor", factor)
            .map_err(|e| AppError::input(e.field, e.message))?;
        let mut w = self
            .begin_adoption(actor, Entity::Dryer, dryer_id, a)
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE dryers SET edge_heat_factor = $1, edge_heat_source = $2 WHERE id = $3")
                .bind(factor).bind(&a.source).bind(dryer_id)
                .execute(&mut **c)
                .await?;
        });
        let id =
            insert_calibration(&mut w, actor, CalibrationKind::EdgeFactor, dryer_id, a).await?;
        w.finish(dryer_id).await?;
        Ok(id)
    }

    /// Adopts a fitted dry-layer resistance as the formulation's measured one.
    pub async fn adopt_resistance(
        &self,
        actor: &Actor,
        formulation_id: i64,
        r: &Resistance,
        a: &Adoption<'_>,
    ) -> Result<i64, AppError> {
        let at = now();
        let mut w = self
            .begin_adoption(actor, Entity::Formulation, formulation_id, a)
            .await?;
        on_tx!(&mut w.tx, c => {
            let (n,): (i64,) = sqlx::query_as("SELECT COUNT(*) FROM dry_layer_resistance WHERE formulation_id = $1")
                .bind(formulation_id)
                .fetch_one(&mut **c)
                .await?;
            let sql = if n > 0 {
                "UPDATE dry_layer_resistance SET r0_cm2_torr_h_g = $2, a1_cm_torr_h_g = $3, a2_per_cm = $4, \
                 source = $5, version = version + 1, updated_at = $6 WHERE formulation_id = $1"
            } else {
                "INSERT INTO dry_layer_resistance (formulation_id, r0_cm2_torr_h_g, a1_cm_torr_h_g, a2_per_cm, \
                 source, version, updated_at) VALUES ($1, $2, $3, $4, $5, 1, $6)"
            };
            sqlx::query(sql)
                .bind(formulation_id).bind(r.r0_cm2_torr_h_g).bind(r.a1_cm_torr_h_g).bind(r.a2_per_cm)
                .bind(&a.source).bind(at)
                .execute(&mut **c)
                .await?;
        });
        let id = insert_calibration(
            &mut w,
            actor,
            CalibrationKind::Resistance,
            formulation_id,
            a,
        )
        .await?;
        w.finish(formulation_id).await?;
        Ok(id)
    }

    /// Opens the audited change of an adoption's target: a reviewer's act, with a reason,
    /// against the version the adopter saw.
    async fn begin_adoption(
        &self,
        actor: &Actor,
        entity: Entity,
        id: i64,
        a: &Adoption<'_>,
    ) -> Result<super::write::Write, AppError> {
        actor.require(Role::Reviewer)?;
        if actor.user_id.is_none() {
            return Err(AppError::Forbidden(
                "adopting a calibration needs a person's account".into(),
            ));
        }
        let reason = a.reason.trim();
        if reason.is_empty() {
            return Err(AppError::input(
                "reason",
                "say why these values replace the current ones",
            ));
        }
        if reason.chars().count() > 2000 {
            return Err(AppError::input("reason", "at most 2000 characters"));
        }
        if a.run_ids.is_empty() {
            return Err(AppError::input(
                "runs",
                "an adoption names the runs it came from",
            ));
        }
        let target = Target::update(entity, id, Some(a.expected_version));
        self.begin_write(actor, target, reason).await
    }

    /// A record's adoptions, newest first.
    pub async fn calibrations_of(
        &self,
        entity: Entity,
        id: i64,
    ) -> Result<Vec<Calibration>, AppError> {
        let rows: Vec<CalibrationRow> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT id, kind, entity, entity_id, run_ids, result_json, reason, full_name, adopted_at \
                 FROM calibrations WHERE entity = $1 AND entity_id = $2 ORDER BY id DESC",
            )
            .bind(entity.code())
            .bind(id)
            .fetch_all(pool)
            .await?
        });
        rows.into_iter().map(to_calibration).collect()
    }

    /// Keeps the model's error against a run on a basis not seen before (derived data:
    /// recomputed from audited records, so it carries no audit event of its own).
    pub async fn record_model_check(&self, run_id: i64, m: &ModelCheck) -> Result<(), AppError> {
        on_pool!(self, pool => {
            sqlx::query(
                "INSERT INTO run_model_checks (run_id, basis, basis_key, predicted_end_h, measured_end_h, \
                 end_error_h, probe_rmse_c, checked_at) VALUES ($1, $2, $3, $4, $5, $6, $7, $8) \
                 ON CONFLICT (run_id, basis_key) DO NOTHING",
            )
            .bind(run_id)
            .bind(&m.basis)
            .bind(&m.basis_key)
            .bind(m.predicted_end_h)
            .bind(m.measured_end_h)
            .bind(m.end_error_h)
            .bind(m.probe_rmse_c)
            .bind(m.checked_at)
            .execute(pool)
            .await?;
        });
        Ok(())
    }

    /// A run's model checks, oldest first.
    pub async fn model_checks_of(&self, run_id: i64) -> Result<Vec<ModelCheck>, AppError> {
        let rows: Vec<CheckRow> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT basis, basis_key, predicted_end_h, measured_end_h, end_error_h, probe_rmse_c, checked_at \
                 FROM run_model_checks WHERE run_id = $1 ORDER BY id",
            )
            .bind(run_id)
            .fetch_all(pool)
            .await?
        });
        Ok(rows
            .into_iter()
            .map(|r| ModelCheck {
                basis: r.0,
                basis_key: r.1,
                predicted_end_h: r.2,
                measured_end_h: r.3,
                end_error_h: r.4,
                probe_rmse_c: r.5,
                checked_at: r.6,
            })
            .collect())
    }
}

async fn insert_calibration(
    w: &mut super::write::Write,
    actor: &Actor,
    kind: CalibrationKind,
    entity_id: i64,
    a: &Adoption<'_>,
) -> Result<i64, AppError> {
    let user = actor
        .user_id
        .ok_or_else(|| AppError::Forbidden("adoption needs a person's account".into()))?;
    let entity = match kind {
        CalibrationKind::Kv => Entity::Container,
        CalibrationKind::EdgeFactor => Entity::Dryer,
        CalibrationKind::Resistance => Entity::Formulation,
    };
    let runs = serde_json::to_string(a.run_ids)
        .map_err(|e| AppError::Internal(format!("calibration runs: {e}")))?;
    let at = now();
    let id = on_tx!(&mut w.tx, c => {
        let (id,): (i64,) = sqlx::query_as(
            "INSERT INTO calibrations (kind, entity, entity_id, run_ids, result_json, reason, user_id, full_name, adopted_at) \
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9) RETURNING id",
        )
        .bind(kind.code())
        .bind(entity.code())
        .bind(entity_id)
        .bind(&runs)
        .bind(a.result.to_string())
        .bind(a.reason.trim())
        .bind(user)
        .bind(&actor.full_name)
        .bind(at)
        .fetch_one(&mut **c)
        .await?;
        id
    });
    Ok(id)
}
