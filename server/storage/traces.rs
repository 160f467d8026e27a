//! DSC trace queries: the original bytes, the parsed arrays, and the measurements read
//! off a trace.

use sqlx::FromRow;
use time::OffsetDateTime;

use super::write::{on_tx, Target};
use super::{now, on_pool, Store};
use crate::auth::Actor;
use crate::domain::traces::{StoredSegment, TraceData, TraceDraft, TraceMeta};
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct TraceRow {
    id: i64,
    formulation_id: i64,
    file_name: String,
    content_sha256: String,
    byte_count: i64,
    heat_flow_unit: String,
    import_notes: String,
    sample_mass_mg: Option<f64>,
    heating_rate_c_min: Option<f64>,
    exo: String,
    notes: String,
    version: i64,
    created_at: OffsetDateTime,
}

const SELECT: &str = "SELECT id, formulation_id, file_name, content_sha256, byte_count, heat_flow_unit, \
     import_notes, sample_mass_mg, heating_rate_c_min, exo, notes, version, created_at FROM dsc_traces";

fn to_meta(r: TraceRow) -> TraceMeta {
    TraceMeta {
        id: r.id,
        formulation_id: r.formulation_id,
        file_name: r.file_name,
        content_sha256: r.content_sha256,
        byte_count: r.byte_count,
        heat_flow_unit: r.heat_flow_unit,
        sample_mass_mg: r.sample_mass_mg,
        heating_rate_c_min: r.heating_rate_c_min,
        exo: r.exo,
        notes: r.notes,
        import_notes: r
            .import_notes
            .lines()
            .filter(|l| !l.is_empty())
            .map(str::to_string)
            .collect(),
        version: r.version,
        created_at: r.created_at,
    }
}

fn json_text<T: serde::Serialize>(v: &T) -> Result<String, AppError> {
    serde_json::to_string(v).map_err(|e| AppError::Internal(format!("trace arrays as JSON: {e}")))
}

fn from_json<T: serde::de::DeserializeOwned>(text: &str, what: &str) -> Result<T, AppError> {
    serde_json::from_str(text).map_err(|e| AppError::Internal(format!("stored trace {what}: {e}")))
}

impl Store {
    /// Stores an uploaded trace (its bytes, their hash and the arrays read from them) on a
    /// formulation, through the write path.
    pub async fn create_trace(
        &self,
        actor: &Actor,
        formulation_id: i64,
        d: &TraceDraft,
    ) -> Result<i64, AppError> {
        let at = now();
        // JSON numbers cannot be NaN: the reader only hands back finite values, and a
        // non-finite one would be refused here rather than stored as null.
        let temperature = json_text(&d.data.temperature_c)?;
        let heat_flow = json_text(&d.data.heat_flow)?;
        let segments = json_text(&d.data.segments)?;
        let exo = match d.exo {
            glasspoint_science::dsc::Exo::Up => "up",
            glasspoint_science::dsc::Exo::Down => "down",
        };
        let byte_count =
            i64::try_from(d.bytes.len()).map_err(|_| AppError::input("file", "is too large"))?;
        let mut w = self
            .begin_write(actor, Target::create(Entity::Trace), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            let (n,): (i64,) = sqlx::query_as("SELECT COUNT(*) FROM formulations WHERE id = $1")
                .bind(formulation_id)
                .fetch_one(&mut **c)
                .await?;
            if n == 0 {
                return Err(AppError::NotFound(format!("Formulation {formulation_id}")));
            }
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO dsc_traces (formulation_id, file_name, original_bytes, content_sha256, byte_count, \
                 temperature_c_json, heat_flow_json, heat_flow_unit, segments, import_notes, sample_mass_mg, \
                 heating_rate_c_min, exo, notes, version, created_at, updated_at) \
                 VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, 1, $15, $15) RETURNING id",
            )
            .bind(formulation_id)
            .bind(&d.file_name)
            .bind(d.bytes.as_slice())
            .bind(&d.content_sha256)
            .bind(byte_count)
            .bind(&temperature)
            .bind(&heat_flow)
            .bind(d.heat_flow_unit)
            .bind(&segments)
            .bind(d.import_notes.join("\n"))
            .bind(d.sample_mass_mg)
            .bind(d.heating_rate_c_min)
            .bind(exo)
            .bind(&d.notes)
            .bind(at)
            .fetch_one(&mut **c)
            .await?;
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    pub async fn get_trace(&self, id: i64) -> Result<TraceMeta, AppError> {
        let row: Option<TraceRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT} WHERE id = $1"))
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        Ok(to_meta(row.ok_or_else(|| {
            AppError::NotFound(format!("DSC trace {id}"))
        })?))
    }

    /// A formulation's traces, newest first.
    pub async fn traces_of(&self, formulation_id: i64) -> Result<Vec<TraceMeta>, AppError> {
        let rows: Vec<TraceRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT} WHERE formulation_id = $1 ORDER BY id DESC"))
                .bind(formulation_id)
                .fetch_all(pool)
                .await?
        });
        Ok(rows.into_iter().map(to_meta).collect())
    }

    /// How many traces are stored (for checks that a refused upload stored nothing).
    pub async fn count_traces(&self) -> Result<i64, AppError> {
        let (n,): (i64,) = on_pool!(self, pool => {
            sqlx::query_as("SELECT COUNT(*) FROM dsc_traces").fetch_one(pool).await?
        });
        Ok(n)
    }

    /// The parsed arrays of a trace.
    pub async fn trace_data(&self, id: i64) -> Result<TraceData, AppError> {
        let row: Option<(String, String, String)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT temperature_c_json, heat_flow_json, segments FROM dsc_traces WHERE id = $1")
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        let (t, h, s) = row.ok_or_else(|| AppError::NotFound(format!("DSC trace {id}")))?;
        let data = TraceData {
            temperature_c: from_json(&t, "temperatures")?,
            heat_flow: from_json(&h, "heat flow")?,
            segments: from_json::<Vec<StoredSegment>>(&s, "segments")?,
        };
        if data.temperature_c.len() != data.heat_flow.len() {
            return Err(AppError::Internal(format!(
                "stored trace {id}: arrays differ in length"
            )));
        }
        Ok(data)
    }

    /// The file as uploaded: its name and bytes.
    pub async fn trace_original(&self, id: i64) -> Result<(String, Vec<u8>), AppError> {
        let row: Option<(String, Vec<u8>)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT file_name, original_bytes FROM dsc_traces WHERE id = $1")
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        row.ok_or_else(|| AppError::NotFound(format!("DSC trace {id}")))
    }
}
