//! Run queries: the run row, its load and manual entries (child tables, part of the
//! record's audited content), the recorded data (original bytes and the series read from
//! them), and a dryer's remembered export columns.

use sqlx::FromRow;
use time::{Date, OffsetDateTime};

use super::write::{on_tx, Target};
use super::{now, on_pool, Store};
use crate::auth::Actor;
use crate::domain::fields::format_date;
use crate::domain::runs::*;
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct RunRow {
    id: i64,
    name: String,
    kind: String,
    cycle_id: i64,
    dryer_id: Option<i64>,
    run_on: String,
    container_id: i64,
    vial_count: Option<i64>,
    fill_volume_ml: f64,
    probed_formulation_id: Option<i64>,
    chamber_pressure_mtorr: Option<f64>,
    test_start_h: Option<f64>,
    test_end_h: Option<f64>,
    cake_appearance: String,
    cake_notes: String,
    notes: String,
    review_state: String,
    file_name: String,
    content_sha256: String,
    byte_count: i64,
    import_notes: String,
    version: i64,
    created_at: OffsetDateTime,
}

const SELECT: &str =
    "SELECT id, name, kind, cycle_id, dryer_id, run_on, container_id, vial_count, \
     fill_volume_ml, probed_formulation_id, chamber_pressure_mtorr, test_start_h, test_end_h, \
     cake_appearance, cake_notes, notes, review_state, file_name, content_sha256, byte_count, \
     import_notes, version, created_at FROM runs";

/// Which runs a list shows.
#[derive(Debug, Clone, Copy, Default)]
pub struct RunFilter {
    pub cycle_id: Option<i64>,
    pub formulation_id: Option<i64>,
    pub container_id: Option<i64>,
    pub kind: Option<RunKind>,
}

fn stored(what: &str, e: impl std::fmt::Display) -> AppError {
    AppError::Internal(format!("stored run {what}: {e}"))
}

fn to_run(r: RunRow) -> Result<Run, AppError> {
    let format = time::macros::format_description!("[year]-[month]-[day]");
    Ok(Run {
        id: r.id,
        name: r.name,
        kind: RunKind::parse(&r.kind).ok_or_else(|| stored("kind", &r.kind))?,
        cycle_id: r.cycle_id,
        dryer_id: r.dryer_id,
        run_on: Date::parse(&r.run_on, &format).map_err(|e| stored("date", e))?,
        container_id: r.container_id,
        vial_count: r.vial_count,
        fill_volume_ml: r.fill_volume_ml,
        formulation_ids: Vec::new(),
        probed_formulation_id: r.probed_formulation_id,
        chamber_pressure_mtorr: r.chamber_pressure_mtorr,
        test_start_h: r.test_start_h,
        test_end_h: r.test_end_h,
        cake_appearance: CakeAppearance::parse(&r.cake_appearance)
            .ok_or_else(|| stored("cake appearance", &r.cake_appearance))?,
        cake_notes: r.cake_notes,
        notes: r.notes,
        review_state: ReviewState::parse(&r.review_state)
            .ok_or_else(|| stored("review state", &r.review_state))?,
        moisture: Vec::new(),
        weights: Vec::new(),
        file_name: r.file_name,
        content_sha256: r.content_sha256,
        byte_count: r.byte_count,
        import_notes: r
            .import_notes
            .lines()
            .filter(|l| !l.is_empty())
            .map(str::to_string)
            .collect(),
        version: r.version,
        created_at: r.created_at,
    })
}

/// Writes a run's load and manual entries, replacing what it had.
macro_rules! write_children {
    ($c:expr, $id:expr, $d:expr) => {{
        for table in [
            "run_formulations",
            "run_moisture_samples",
            "run_vial_weights",
        ] {
            sqlx::query(&format!("DELETE FROM {table} WHERE run_id = $1"))
                .bind($id)
                .execute(&mut **$c)
                .await?;
        }
        for f in &$d.formulation_ids {
            sqlx::query("INSERT INTO run_formulations (run_id, formulation_id) VALUES ($1, $2)")
                .bind($id)
                .bind(*f)
                .execute(&mut **$c)
                .await?;
        }
        for (i, m) in $d.moisture.iter().enumerate() {
            sqlx::query(
                "INSERT INTO run_moisture_samples (run_id, position, time_h, shelf_temp_c, \
                 water_percent, method) VALUES ($1, $2, $3, $4, $5, $6)",
            )
            .bind($id)
            .bind(i as i64)
            .bind(m.time_h)
            .bind(m.shelf_temp_c)
            .bind(m.water_percent)
            .bind(&m.method)
            .execute(&mut **$c)
            .await?;
        }
        for (i, w) in $d.weights.iter().enumerate() {
            sqlx::query(
                "INSERT INTO run_vial_weights (run_id, position, location, before_g, after_g) \
                 VALUES ($1, $2, $3, $4, $5)",
            )
            .bind($id)
            .bind(i as i64)
            .bind(w.location.code())
            .bind(w.before_g)
            .bind(w.after_g)
            .execute(&mut **$c)
            .await?;
        }
    }};
}

/// Writes a run's recorded data: the export's bytes, their hash and the series read.
macro_rules! write_data {
    ($c:expr, $id:expr, $data:expr, $series:expr) => {{
        let byte_count = i64::try_from($data.bytes.len())
            .map_err(|_| AppError::input("file", "is too large"))?;
        sqlx::query(
            "UPDATE runs SET file_name = $1, original_bytes = $2, content_sha256 = $3, byte_count = $4, \
             series_json = $5, import_notes = $6 WHERE id = $7",
        )
        .bind(&$data.file_name)
        .bind($data.bytes.as_slice())
        .bind(&$data.content_sha256)
        .bind(byte_count)
        .bind($series)
        .bind($data.import_notes.join("\n"))
        .bind($id)
        .execute(&mut **$c)
        .await?;
    }};
}

/// Refuses a draft naming records that do not exist, naming the field.
macro_rules! check_references {
    ($c:expr, $d:expr) => {{
        let exists = |table: &'static str| format!("SELECT COUNT(*) FROM {table} WHERE id = $1");
        let mut refs: Vec<(&'static str, &'static str, i64)> = vec![
            ("cycles", "cycle_id", $d.cycle_id),
            ("containers", "container_id", $d.container_id),
        ];
        if let Some(id) = $d.dryer_id {
            refs.push(("dryers", "dryer_id", id));
        }
        for f in &$d.formulation_ids {
            refs.push(("formulations", "formulation_ids", *f));
        }
        for (table, field, id) in refs {
            let (n,): (i64,) = sqlx::query_as(&exists(table))
                .bind(id)
                .fetch_one(&mut **$c)
                .await?;
            if n == 0 {
                return Err(AppError::input(field, format!("no record {id} exists")));
            }
        }
    }};
}

fn json_text<T: serde::Serialize>(v: &T) -> Result<String, AppError> {
    serde_json::to_string(v).map_err(|e| AppError::Internal(format!("run series as JSON: {e}")))
}

impl Store {
    async fn fill_children(&self, runs: &mut [Run]) -> Result<(), AppError> {
        if runs.is_empty() {
            return Ok(());
        }
        let ids: Vec<String> = runs.iter().map(|r| r.id.to_string()).collect();
        let within = ids.join(",");
        // The ids are integers from the database, never user text.
        let forms: Vec<(i64, i64)> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "SELECT run_id, formulation_id FROM run_formulations WHERE run_id IN ({within}) ORDER BY formulation_id"
            ))
            .fetch_all(pool)
            .await?
        });
        let moisture: Vec<(i64, f64, f64, f64, String)> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "SELECT run_id, time_h, shelf_temp_c, water_percent, method FROM run_moisture_samples \
                 WHERE run_id IN ({within}) ORDER BY position"
            ))
            .fetch_all(pool)
            .await?
        });
        let weights: Vec<(i64, String, f64, f64)> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "SELECT run_id, location, before_g, after_g FROM run_vial_weights \
                 WHERE run_id IN ({within}) ORDER BY position"
            ))
            .fetch_all(pool)
            .await?
        });
        for run in runs.iter_mut() {
            run.formulation_ids = forms
                .iter()
                .filter(|(r, _)| *r == run.id)
                .map(|(_, f)| *f)
                .collect();
            run.moisture = moisture
                .iter()
                .filter(|m| m.0 == run.id)
                .map(|m| MoistureEntry {
                    time_h: m.1,
                    shelf_temp_c: m.2,
                    water_percent: m.3,
                    method: m.4.clone(),
                })
                .collect();
            run.weights = weights
                .iter()
                .filter(|w| w.0 == run.id)
                .map(|w| {
                    Ok(VialWeight {
                        location: VialLocation::parse(&w.1)
                            .ok_or_else(|| stored("vial location", &w.1))?,
                        before_g: w.2,
                        after_g: w.3,
                    })
                })
                .collect::<Result<_, AppError>>()?;
        }
        Ok(())
    }

    /// Runs, newest first.
    pub async fn list_runs(&self, f: RunFilter) -> Result<Vec<Run>, AppError> {
        let mut sql = format!("{SELECT} WHERE 1 = 1");
        let mut n = 0;
        let mut next = || {
            n += 1;
            n
        };
        if f.cycle_id.is_some() {
            sql += &format!(" AND cycle_id = ${}", next());
        }
        if f.container_id.is_some() {
            sql += &format!(" AND container_id = ${}", next());
        }
        if f.kind.is_some() {
            sql += &format!(" AND kind = ${}", next());
        }
        if f.formulation_id.is_some() {
            sql += &format!(
                " AND id IN (SELECT run_id FROM run_formulations WHERE formulation_id = ${})",
                next()
            );
        }
        sql += " ORDER BY run_on DESC, id DESC";
        let rows: Vec<RunRow> = on_pool!(self, pool => {
            let mut q = sqlx::query_as(&sql);
            if let Some(v) = f.cycle_id { q = q.bind(v); }
            if let Some(v) = f.container_id { q = q.bind(v); }
            if let Some(k) = f.kind { q = q.bind(k.code()); }
            if let Some(v) = f.formulation_id { q = q.bind(v); }
            q.fetch_all(pool).await?
        });
        let mut runs = rows
            .into_iter()
            .map(to_run)
            .collect::<Result<Vec<_>, _>>()?;
        self.fill_children(&mut runs).await?;
        Ok(runs)
    }

    pub async fn get_run(&self, id: i64) -> Result<Run, AppError> {
        let row: Option<RunRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT} WHERE id = $1"))
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        let row = row.ok_or_else(|| AppError::NotFound(format!("Run {id}")))?;
        let mut runs = vec![to_run(row)?];
        self.fill_children(&mut runs).await?;
        runs.pop()
            .ok_or_else(|| AppError::NotFound(format!("Run {id}")))
    }

    /// Records a run, with its recorded data when the export was given.
    pub async fn create_run(
        &self,
        actor: &Actor,
        d: &RunDraft,
        data: Option<&RecordedData>,
    ) -> Result<i64, AppError> {
        let at = now();
        let series = data.map(|r| json_text(&r.series)).transpose()?;
        let byte_count = data
            .map(|r| i64::try_from(r.bytes.len()))
            .transpose()
            .map_err(|_| AppError::input("file", "is too large"))?
            .unwrap_or(0);
        let mut w = self
            .begin_write(actor, Target::create(Entity::Run), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            check_references!(c, d);
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO runs (name, kind, cycle_id, dryer_id, run_on, container_id, vial_count, \
                 fill_volume_ml, probed_formulation_id, chamber_pressure_mtorr, test_start_h, test_end_h, \
                 cake_appearance, cake_notes, notes, review_state, file_name, original_bytes, content_sha256, \
                 byte_count, series_json, import_notes, version, created_at, updated_at) \
                 VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, 'recorded', $16, \
                 $17, $18, $19, $20, $21, 1, $22, $22) RETURNING id",
            )
            .bind(&d.name)
            .bind(d.kind.code())
            .bind(d.cycle_id)
            .bind(d.dryer_id)
            .bind(format_date(d.run_on))
            .bind(d.container_id)
            .bind(d.vial_count)
            .bind(d.fill_volume_ml)
            .bind(d.probed_formulation_id)
            .bind(d.chamber_pressure_mtorr)
            .bind(d.test_start_h)
            .bind(d.test_end_h)
            .bind(d.cake_appearance.code())
            .bind(&d.cake_notes)
            .bind(&d.notes)
            .bind(data.map(|r| r.file_name.as_str()).unwrap_or(""))
            .bind(data.map(|r| r.bytes.as_slice()))
            .bind(data.map(|r| r.content_sha256.as_str()).unwrap_or(""))
            .bind(byte_count)
            .bind(series.as_deref())
            .bind(data.map(|r| r.import_notes.join("\n")).unwrap_or_default())
            .bind(at)
            .fetch_one(&mut **c)
            .await?;
            write_children!(c, id, d);
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    /// Changes what a run says, and its recorded data when a new export is given, in one
    /// change (a reviewed run needs a reason).
    pub async fn update_run(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        d: &RunDraft,
        data: Option<&RecordedData>,
        reason: &str,
    ) -> Result<(), AppError> {
        let series = data.map(|r| json_text(&r.series)).transpose()?;
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Run, id, Some(version)),
                reason,
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            check_references!(c, d);
            sqlx::query(
                "UPDATE runs SET name = $1, kind = $2, cycle_id = $3, dryer_id = $4, run_on = $5, \
                 container_id = $6, vial_count = $7, fill_volume_ml = $8, probed_formulation_id = $9, \
                 chamber_pressure_mtorr = $10, test_start_h = $11, test_end_h = $12, cake_appearance = $13, \
                 cake_notes = $14, notes = $15 WHERE id = $16",
            )
            .bind(&d.name)
            .bind(d.kind.code())
            .bind(d.cycle_id)
            .bind(d.dryer_id)
            .bind(format_date(d.run_on))
            .bind(d.container_id)
            .bind(d.vial_count)
            .bind(d.fill_volume_ml)
            .bind(d.probed_formulation_id)
            .bind(d.chamber_pressure_mtorr)
            .bind(d.test_start_h)
            .bind(d.test_end_h)
            .bind(d.cake_appearance.code())
            .bind(&d.cake_notes)
            .bind(&d.notes)
            .bind(id)
            .execute(&mut **c)
            .await?;
            write_children!(c, id, d);
            if let (Some(data), Some(series)) = (data, &series) {
                write_data!(c, id, data, series);
            }
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Attaches (or replaces) a run's recorded data: a new version of the run.
    pub async fn set_run_data(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        data: &RecordedData,
        reason: &str,
    ) -> Result<(), AppError> {
        let series = json_text(&data.series)?;
        let byte_count =
            i64::try_from(data.bytes.len()).map_err(|_| AppError::input("file", "is too large"))?;
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Run, id, Some(version)),
                reason,
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query(
                "UPDATE runs SET file_name = $1, original_bytes = $2, content_sha256 = $3, byte_count = $4, \
                 series_json = $5, import_notes = $6 WHERE id = $7",
            )
            .bind(&data.file_name)
            .bind(data.bytes.as_slice())
            .bind(&data.content_sha256)
            .bind(byte_count)
            .bind(&series)
            .bind(data.import_notes.join("\n"))
            .bind(id)
            .execute(&mut **c)
            .await?;
        });
        w.finish(id).await?;
        Ok(())
    }

    /// The series read from a run's export, if it has one.
    pub async fn run_series(&self, id: i64) -> Result<Option<StoredSeries>, AppError> {
        let row: Option<(Option<String>,)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT series_json FROM runs WHERE id = $1")
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        let (text,) = row.ok_or_else(|| AppError::NotFound(format!("Run {id}")))?;
        text.map(|t| serde_json::from_str(&t).map_err(|e| stored("series", e)))
            .transpose()
    }

    /// The export as uploaded: its name and bytes.
    pub async fn run_original(&self, id: i64) -> Result<(String, Vec<u8>), AppError> {
        let row: Option<(String, Option<Vec<u8>>)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT file_name, original_bytes FROM runs WHERE id = $1")
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        match row {
            Some((name, Some(bytes))) => Ok((name, bytes)),
            Some((_, None)) => Err(AppError::NotFound(format!(
                "Recorded data of run {id} (none uploaded yet)"
            ))),
            None => Err(AppError::NotFound(format!("Run {id}"))),
        }
    }

    /// A dryer's remembered export columns: (header, role code), in file order.
    pub async fn dryer_column_map(&self, dryer_id: i64) -> Result<Vec<(String, String)>, AppError> {
        Ok(on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT header, role FROM dryer_column_maps WHERE dryer_id = $1 ORDER BY position",
            )
            .bind(dryer_id)
            .fetch_all(pool)
            .await?
        }))
    }

    /// Remembers how a dryer's export columns map to roles: a change of the dryer, in its
    /// history. Saving the same map again writes nothing.
    pub async fn remember_column_map(
        &self,
        actor: &Actor,
        dryer_id: i64,
        map: &[(String, String)],
    ) -> Result<(), AppError> {
        if self.dryer_column_map(dryer_id).await? == map {
            return Ok(());
        }
        let mut w = self
            .begin_write(actor, Target::update(Entity::Dryer, dryer_id, None), "")
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("DELETE FROM dryer_column_maps WHERE dryer_id = $1")
                .bind(dryer_id)
                .execute(&mut **c)
                .await?;
            for (i, (header, role)) in map.iter().enumerate() {
                sqlx::query(
                    "INSERT INTO dryer_column_maps (dryer_id, position, header, role) VALUES ($1, $2, $3, $4)",
                )
                .bind(dryer_id)
                .bind(i as i64)
                .bind(header)
                .bind(role)
                .execute(&mut **c)
                .await?;
            }
        });
        w.finish(dryer_id).await?;
        Ok(())
    }
}
