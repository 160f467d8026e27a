//! Measurement queries.

use sqlx::FromRow;
use time::{Date, OffsetDateTime};

use super::write::{on_tx, Target};
use super::{decode, now, on_pool, Store};
use crate::auth::Actor;
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct MeasurementRow {
    id: i64,
    formulation_id: i64,
    kind: String,
    value_c: f64,
    residual_moisture_pct: Option<f64>,
    method: String,
    heating_rate_c_min: Option<f64>,
    sample_mass_mg: Option<f64>,
    pan: String,
    instrument: String,
    analyst: String,
    measured_on: Date,
    replicate: i64,
    notes: String,
    review_state: String,
    version: i64,
    created_at: OffsetDateTime,
    trace_id: Option<i64>,
}

const SELECT: &str = "SELECT id, formulation_id, kind, value_c, residual_moisture_pct, method, heating_rate_c_min, \
     sample_mass_mg, pan, instrument, analyst, measured_on, replicate, notes, review_state, version, created_at, \
     trace_id FROM measurements";

fn to_measurement(r: MeasurementRow) -> Result<Measurement, AppError> {
    Ok(Measurement {
        id: r.id,
        formulation_id: r.formulation_id,
        kind: decode(MeasurementKind::parse(&r.kind), "measurement kind", &r.kind)?,
        value_c: r.value_c,
        residual_moisture_pct: r.residual_moisture_pct,
        method: decode(MeasurementMethod::parse(&r.method), "method", &r.method)?,
        heating_rate_c_min: r.heating_rate_c_min,
        sample_mass_mg: r.sample_mass_mg,
        pan: r.pan,
        instrument: r.instrument,
        analyst: r.analyst,
        measured_on: r.measured_on,
        replicate: r.replicate,
        notes: r.notes,
        review_state: decode(
            ReviewState::parse(&r.review_state),
            "review state",
            &r.review_state,
        )?,
        version: r.version,
        created_at: r.created_at,
        trace_id: r.trace_id,
    })
}

impl Store {
    /// A formulation's measurements, grouped by kind, then by date and replicate.
    pub async fn measurements_of(&self, formulation_id: i64) -> Result<Vec<Measurement>, AppError> {
        let rows: Vec<MeasurementRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "{SELECT} WHERE formulation_id = $1 ORDER BY kind, measured_on, replicate, id"
            ))
            .bind(formulation_id)
            .fetch_all(pool)
            .await?
        });
        rows.into_iter().map(to_measurement).collect()
    }

    /// Measurements across formulations, newest first, optionally of one formulation.
    pub async fn list_measurements(
        &self,
        formulation_id: Option<i64>,
        page: i64,
        per_page: i64,
    ) -> Result<super::Page<Measurement>, AppError> {
        let per_page = per_page.clamp(1, 500);
        let fid = formulation_id.unwrap_or(0);
        let (total,): (i64,) = on_pool!(self, pool => {
            sqlx::query_as("SELECT COUNT(*) FROM measurements WHERE ($1 = 0 OR formulation_id = $1)")
                .bind(fid)
                .fetch_one(pool)
                .await?
        });
        let pages = ((total + per_page - 1) / per_page).max(1);
        let page = page.clamp(1, pages);
        let rows: Vec<MeasurementRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "{SELECT} WHERE ($1 = 0 OR formulation_id = $1) ORDER BY measured_on DESC, id DESC LIMIT $2 OFFSET $3"
            ))
            .bind(fid)
            .bind(per_page)
            .bind((page - 1) * per_page)
            .fetch_all(pool)
            .await?
        });
        let items = rows
            .into_iter()
            .map(to_measurement)
            .collect::<Result<_, _>>()?;
        Ok(super::Page {
            items,
            page,
            per_page,
            total,
            pages,
        })
    }

    pub async fn get_measurement(&self, id: i64) -> Result<Measurement, AppError> {
        let row: Option<MeasurementRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT} WHERE id = $1"))
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        to_measurement(row.ok_or_else(|| AppError::NotFound(format!("Measurement {id}")))?)
    }

    /// Records a result. Its review state starts at "recorded": only a reviewer's
    /// signature moves it on.
    pub async fn create_measurement(
        &self,
        actor: &Actor,
        formulation_id: i64,
        d: &MeasurementDraft,
    ) -> Result<i64, AppError> {
        self.create_measurement_with_trace(actor, formulation_id, d, None)
            .await
    }

    /// Records a result read off a DSC trace of the same formulation (or, with `None`,
    /// without one).
    pub async fn create_measurement_with_trace(
        &self,
        actor: &Actor,
        formulation_id: i64,
        d: &MeasurementDraft,
        trace_id: Option<i64>,
    ) -> Result<i64, AppError> {
        let at = now();
        let mut w = self
            .begin_write(actor, Target::create(Entity::Measurement), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            let (n,): (i64,) = sqlx::query_as("SELECT COUNT(*) FROM formulations WHERE id = $1")
                .bind(formulation_id)
                .fetch_one(&mut **c)
                .await?;
            if n == 0 {
                return Err(AppError::NotFound(format!("Formulation {formulation_id}")));
            }
            if let Some(trace_id) = trace_id {
                let (n,): (i64,) = sqlx::query_as(
                    "SELECT COUNT(*) FROM dsc_traces WHERE id = $1 AND formulation_id = $2",
                )
                .bind(trace_id)
                .bind(formulation_id)
                .fetch_one(&mut **c)
                .await?;
                if n == 0 {
                    return Err(AppError::input(
                        "trace_id",
                        format!("DSC trace {trace_id} is not a trace of this formulation"),
                    ));
                }
            }
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO measurements (formulation_id, kind, value_c, residual_moisture_pct, method, heating_rate_c_min, \
                 sample_mass_mg, pan, instrument, analyst, measured_on, replicate, notes, review_state, version, created_at, updated_at, \
                 trace_id) \
                 VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, 'recorded', 1, $14, $14, $15) RETURNING id",
            )
            .bind(formulation_id)
            .bind(d.kind.code())
            .bind(d.value_c)
            .bind(d.residual_moisture_pct)
            .bind(d.method.code())
            .bind(d.heating_rate_c_min)
            .bind(d.sample_mass_mg)
            .bind(&d.pan)
            .bind(&d.instrument)
            .bind(&d.analyst)
            .bind(d.measured_on)
            .bind(d.replicate)
            .bind(&d.notes)
            .bind(at)
            .bind(trace_id)
            .fetch_one(&mut **c)
            .await?;
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    /// Saves an edit made on `version`; a reviewed result needs a `reason` and goes back to
    /// "recorded" (its signature stays with the earlier version).
    pub async fn update_measurement(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        d: &MeasurementDraft,
        reason: &str,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Measurement, id, Some(version)),
                reason,
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query(
                "UPDATE measurements SET kind = $1, value_c = $2, residual_moisture_pct = $3, method = $4, \
                 heating_rate_c_min = $5, sample_mass_mg = $6, pan = $7, instrument = $8, analyst = $9, measured_on = $10, \
                 replicate = $11, notes = $12 WHERE id = $13",
            )
            .bind(d.kind.code())
            .bind(d.value_c)
            .bind(d.residual_moisture_pct)
            .bind(d.method.code())
            .bind(d.heating_rate_c_min)
            .bind(d.sample_mass_mg)
            .bind(&d.pan)
            .bind(&d.instrument)
            .bind(&d.analyst)
            .bind(d.measured_on)
            .bind(d.replicate)
            .bind(&d.notes)
            .bind(id)
            .execute(&mut **c)
            .await?;
        });
        w.finish(id).await?;
        Ok(())
    }
}
