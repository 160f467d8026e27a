//! The one write path every record goes through: take the write lock, check the version
//! the user saw, make the change, bump the version, append the audit event, commit.
//!
//! ```text
//! let mut w = store.begin_write(actor, Target::update(Entity::Cycle, id, version), reason).await?;
//! on_tx!(&mut w.tx, c => { sqlx::query("UPDATE cycles …").execute(&mut **c).await?; });
//! w.finish(id).await?;
//! ```
//! A `Write` dropped before `finish` rolls back: no change without its event, and a failed
//! change leaves none.

use serde_json::{Map, Value};
use sqlx::{Column, Row, TypeInfo, ValueRef};

use super::audit::{append_event, NewEvent};
use super::{now, Store};
use crate::auth::Actor;
use crate::domain::{Action, Entity};
use crate::error::AppError;

/// An open write transaction on either backend.
pub(crate) enum Tx {
    Sqlite(sqlx::Transaction<'static, sqlx::Sqlite>),
    Postgres(sqlx::Transaction<'static, sqlx::Postgres>),
}

/// Runs `$body` with `$conn` bound to the transaction of either backend (use `&mut **$conn`
/// as the executor); the body is compiled once per backend.
macro_rules! on_tx {
    ($tx:expr, $conn:ident => $body:expr) => {
        match $tx {
            $crate::storage::write::Tx::Sqlite($conn) => $body,
            $crate::storage::write::Tx::Postgres($conn) => $body,
        }
    };
}
pub(crate) use on_tx;

/// An arbitrary, constant key for PostgreSQL's transaction-scoped advisory lock that
/// serialises writers, as SQLite's single writer lock does.
const PG_WRITE_LOCK: i64 = 0x6c79_6f70;

impl Store {
    /// Starts a transaction that holds the database's write lock from its first statement:
    /// `BEGIN IMMEDIATE` on SQLite (a deferred transaction that reads first fails with
    /// "database is locked" when another writer commits in between, and the busy timeout
    /// does not help), an advisory lock on PostgreSQL (so version checks, the audit chain
    /// and the change are one serial step).
    pub(crate) async fn begin_locked(&self) -> Result<Tx, AppError> {
        match self {
            Store::Sqlite(pool) => Ok(Tx::Sqlite(pool.begin_with("BEGIN IMMEDIATE").await?)),
            Store::Postgres(pool) => {
                let mut tx = pool.begin().await?;
                sqlx::query("SELECT pg_advisory_xact_lock($1)")
                    .bind(PG_WRITE_LOCK)
                    .execute(&mut *tx)
                    .await?;
                Ok(Tx::Postgres(tx))
            }
        }
    }

    /// Opens the write path for one change of one record.
    pub(crate) async fn begin_write(
        &self,
        actor: &Actor,
        target: Target,
        reason: &str,
    ) -> Result<Write, AppError> {
        actor.may_write()?;
        let mut tx = self.begin_locked().await?;
        let before =
            match target.id {
                Some(id) => Some(snapshot(&mut tx, target.entity, id).await?.ok_or_else(|| {
                    AppError::NotFound(format!("{} {id}", target.entity.label()))
                })?),
                None => None,
            };
        if let (Some(before), Some(expected), Some(id)) =
            (&before, target.expected_version, target.id)
        {
            if before.version != expected {
                let message = stale_message(&mut tx, target.entity, id, expected).await?;
                return Err(AppError::Conflict(message));
            }
        }
        let reason = reason.trim().to_string();
        let locked_as = match (&before, target.id) {
            (Some(before), Some(id)) if target.action.changes_content() => {
                locking_signature(&mut tx, target.entity, id, &before.signed_hash()).await?
            }
            _ => None,
        };
        Ok(Write {
            tx,
            actor: actor.clone(),
            entity: target.entity,
            action: target.action,
            reason,
            before,
            locked_as,
        })
    }
}

/// Which record a write touches, and how.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Target {
    pub entity: Entity,
    pub id: Option<i64>,
    /// The version the user saw; `None` skips the check (e.g. a signature names its own).
    pub expected_version: Option<i64>,
    pub action: Action,
}

impl Target {
    pub fn create(entity: Entity) -> Target {
        Target {
            entity,
            id: None,
            expected_version: None,
            action: Action::Create,
        }
    }

    pub fn update(entity: Entity, id: i64, expected_version: Option<i64>) -> Target {
        Target {
            entity,
            id: Some(id),
            expected_version,
            action: Action::Update,
        }
    }

    pub fn with(entity: Entity, id: i64, action: Action) -> Target {
        Target {
            entity,
            id: Some(id),
            expected_version: None,
            action,
        }
    }
}

/// One record's change in progress; `finish` commits it with its audit event.
pub(crate) struct Write {
    pub tx: Tx,
    actor: Actor,
    entity: Entity,
    action: Action,
    reason: String,
    before: Option<Snapshot>,
    /// The meaning of the signature on the current version, when there is one.
    locked_as: Option<String>,
}

impl Write {
    /// The record as it was when the write began.
    pub fn before(&self) -> Option<&Snapshot> {
        self.before.as_ref()
    }

    /// Bumps the version (for content changes), appends the audit event with the values
    /// before and after, and commits. Saving a record unchanged commits nothing and
    /// returns its current version.
    pub async fn finish(mut self, id: i64) -> Result<i64, AppError> {
        let at = now();
        let table = self.entity.table();
        if let (Some(before), Action::Update) = (&self.before, self.action) {
            let Some(changed) = snapshot(&mut self.tx, self.entity, id).await? else {
                return Err(AppError::Internal(
                    "the record vanished in its own write".into(),
                ));
            };
            if before.same_content(&changed) {
                return Ok(before.version);
            }
            // What a reviewer signed is unchanged (e.g. only the dry-layer resistance was
            // recorded): the signature still holds.
            let signed_unchanged = before.signed_hash() == changed.signed_hash();
            if let (false, Some(meaning), true) =
                (signed_unchanged, &self.locked_as, self.reason.is_empty())
            {
                return Err(AppError::input(
                    "reason",
                    format!(
                        "this record is {meaning}: a change makes a new version and needs a reason"
                    ),
                ));
            }
            // A signature applies to the content signed: changed content needs a new one.
            if !signed_unchanged {
                if let Some(sql) = self.entity.unsign_sql() {
                    on_tx!(&mut self.tx, c => {
                        sqlx::query(sql).bind(id).execute(&mut **c).await?;
                    });
                }
            }
        }
        if self.action.bumps_version() {
            let sql =
                format!("UPDATE {table} SET version = version + 1, updated_at = $1 WHERE id = $2");
            on_tx!(&mut self.tx, c => {
                sqlx::query(&sql).bind(at).bind(id).execute(&mut **c).await?;
            });
        }
        let after = snapshot(&mut self.tx, self.entity, id)
            .await?
            .ok_or_else(|| {
                AppError::Internal(format!(
                    "{} {id} vanished in its own write",
                    self.entity.label()
                ))
            })?;
        let version = after.version;
        append_event(
            &mut self.tx,
            NewEvent {
                actor: &self.actor,
                action: self.action,
                entity: self.entity,
                entity_id: Some(id),
                version: Some(version),
                before: self.before.as_ref().map(|s| s.json()),
                after: Some(after.json()),
                reason: &self.reason,
            },
        )
        .await?;
        commit(self.tx).await?;
        Ok(version)
    }
}

pub(crate) async fn commit(tx: Tx) -> Result<(), AppError> {
    match tx {
        Tx::Sqlite(tx) => tx.commit().await?,
        Tx::Postgres(tx) => tx.commit().await?,
    }
    Ok(())
}

/// A record's stored content as JSON: its row and its child rows, without bookkeeping
/// columns (timestamps) or secrets.
#[derive(Debug, Clone)]
pub struct Snapshot {
    pub version: i64,
    pub content: Map<String, Value>,
}

impl Snapshot {
    pub fn json(&self) -> String {
        Value::Object(self.content.clone()).to_string()
    }

    /// The hash a signature of this content carries.
    pub fn signed_hash(&self) -> String {
        signed_content_hash(&self.content)
    }

    /// Equal apart from the version number.
    pub fn same_content(&self, other: &Snapshot) -> bool {
        without(&self.content, &["version"]) == without(&other.content, &["version"])
    }
}

fn without(map: &Map<String, Value>, keys: &[&str]) -> Map<String, Value> {
    map.iter()
        .filter(|(k, _)| !keys.contains(&k.as_str()))
        .map(|(k, v)| (k.clone(), v.clone()))
        .collect()
}

/// Parts of a record that are not what a reviewer signs: the version number, the review
/// state that signing itself sets, and process data recorded beside a formulation.
const UNSIGNED_PARTS: &[&str] = &[
    "version",
    "review_state",
    "status",
    "dry_layer_resistance",
    "limit_basis",
];

/// The content a signature binds to, as SHA-256 hex.
pub fn signed_content_hash(content: &Map<String, Value>) -> String {
    use sha2::{Digest, Sha256};
    let bound = without(content, UNSIGNED_PARTS);
    hex::encode(Sha256::digest(Value::Object(bound).to_string().as_bytes()))
}

/// Columns never copied into the audit trail: bookkeeping, secrets, and the original bytes
/// and parsed arrays of a DSC trace or a run's recorded data (the trail keeps the bytes'
/// SHA-256, `content_sha256`, which identifies them; the arrays are read again from those
/// bytes).
const SKIPPED: &[&str] = &[
    "created_at",
    "updated_at",
    "password_hash",
    "original_bytes",
    "temperature_c_json",
    "heat_flow_json",
    "series_json",
];

pub(crate) async fn snapshot(
    tx: &mut Tx,
    entity: Entity,
    id: i64,
) -> Result<Option<Snapshot>, AppError> {
    let sql = format!("SELECT * FROM {} WHERE id = $1", entity.table());
    let row = on_tx!(tx, c => {
        match sqlx::query(&sql).bind(id).fetch_optional(&mut **c).await? {
            Some(row) => Some(row_json(&row, SKIPPED)?),
            None => None,
        }
    });
    let Some(mut content) = row else {
        return Ok(None);
    };
    for child in entity.children() {
        let sql = format!(
            "SELECT * FROM {} WHERE {} = $1 ORDER BY {}",
            child.table, child.parent_column, child.order_by
        );
        let mut skip = SKIPPED.to_vec();
        skip.push(child.parent_column);
        skip.extend_from_slice(child.skip);
        let rows = on_tx!(tx, c => {
            let rows = sqlx::query(&sql).bind(id).fetch_all(&mut **c).await?;
            rows.iter().map(|r| row_json(r, &skip).map(Value::Object)).collect::<Result<Vec<_>, AppError>>()?
        });
        content.insert(child.name.to_string(), Value::Array(rows));
    }
    let version = content.get("version").and_then(Value::as_i64).unwrap_or(1);
    Ok(Some(Snapshot { version, content }))
}

/// One row of either backend as a JSON object, typed by column so both give the same text.
fn row_json<R: AnyRow>(row: &R, skip: &[&str]) -> Result<Map<String, Value>, AppError> {
    let mut out = Map::new();
    for (i, name) in row.column_names().into_iter().enumerate() {
        if skip.contains(&name.as_str()) {
            continue;
        }
        out.insert(name, row.value(i)?);
    }
    Ok(out)
}

/// What `row_json` needs of a backend's row.
trait AnyRow: Row {
    fn column_names(&self) -> Vec<String> {
        self.columns()
            .iter()
            .map(|c| c.name().to_string())
            .collect()
    }

    fn value(&self, i: usize) -> Result<Value, AppError>;
}

fn number(v: f64) -> Value {
    serde_json::Number::from_f64(v)
        .map(Value::Number)
        .unwrap_or(Value::Null)
}

impl AnyRow for sqlx::sqlite::SqliteRow {
    fn value(&self, i: usize) -> Result<Value, AppError> {
        let raw = self.try_get_raw(i)?;
        if raw.is_null() {
            return Ok(Value::Null);
        }
        let storage = raw.type_info().name().to_string();
        if self.columns()[i].type_info().name() == "BOOLEAN" {
            return Ok(Value::Bool(self.try_get::<bool, _>(i)?));
        }
        Ok(match storage.as_str() {
            "INTEGER" => Value::from(self.try_get::<i64, _>(i)?),
            "REAL" => number(self.try_get::<f64, _>(i)?),
            _ => Value::String(self.try_get::<String, _>(i)?),
        })
    }
}

impl AnyRow for sqlx::postgres::PgRow {
    fn value(&self, i: usize) -> Result<Value, AppError> {
        if self.try_get_raw(i)?.is_null() {
            return Ok(Value::Null);
        }
        let kind = self.columns()[i].type_info().name().to_string();
        Ok(match kind.as_str() {
            "INT8" => Value::from(self.try_get::<i64, _>(i)?),
            "INT4" => Value::from(self.try_get::<i32, _>(i)?),
            "INT2" => Value::from(self.try_get::<i16, _>(i)?),
            "FLOAT8" => number(self.try_get::<f64, _>(i)?),
            "FLOAT4" => number(f64::from(self.try_get::<f32, _>(i)?)),
            "BOOL" => Value::Bool(self.try_get::<bool, _>(i)?),
            "DATE" => Value::String(crate::domain::fields::format_date(
                self.try_get::<time::Date, _>(i)?,
            )),
            "TIMESTAMPTZ" => Value::String(super::audit::format_time(
                self.try_get::<time::OffsetDateTime, _>(i)?,
            )),
            _ => Value::String(self.try_get::<String, _>(i)?),
        })
    }
}

/// The newest reviewed or approved signature of the record's current content, if any.
async fn locking_signature(
    tx: &mut Tx,
    entity: Entity,
    id: i64,
    content_hash: &str,
) -> Result<Option<String>, AppError> {
    let row: Option<(String,)> = on_tx!(tx, c => {
        sqlx::query_as(
            "SELECT meaning FROM signatures WHERE entity = $1 AND entity_id = $2 AND content_hash = $3 \
             AND meaning IN ('reviewed', 'approved') ORDER BY id DESC LIMIT 1",
        )
        .bind(entity.code())
        .bind(id)
        .bind(content_hash)
        .fetch_optional(&mut **c)
        .await?
    });
    Ok(row.map(|r| r.0))
}

/// Who changed the record, when, its content before and after, and the new version.
type LaterEvent = (String, String, Option<String>, Option<String>, Option<i64>);

/// Says what changed since `expected` and by whom, from the audit trail.
async fn stale_message(
    tx: &mut Tx,
    entity: Entity,
    id: i64,
    expected: i64,
) -> Result<String, AppError> {
    let rows: Vec<LaterEvent> = on_tx!(tx, c => {
        sqlx::query_as(
            "SELECT e.username, e.at, e.before_json, e.after_json, e.version FROM audit_events e \
             WHERE e.entity = $1 AND e.entity_id = $2 AND e.version > $3 ORDER BY e.seq",
        )
        .bind(entity.code())
        .bind(id)
        .bind(expected)
        .fetch_all(&mut **c)
        .await?
    });
    let label = entity.label();
    let Some(last) = rows.last() else {
        return Ok(format!(
            "{label} {id} was changed by someone else after you opened it. Your input is kept below: reload the record in another tab to compare, then save again."
        ));
    };
    let mut fields: Vec<String> = Vec::new();
    let mut who: Vec<String> = Vec::new();
    for (username, _, before, after, _) in &rows {
        if !who.contains(username) {
            who.push(username.clone());
        }
        for f in super::audit::changed_fields(before.as_deref(), after.as_deref()) {
            if !fields.contains(&f) {
                fields.push(f);
            }
        }
    }
    let version = last.4.unwrap_or(expected);
    let changed = if fields.is_empty() {
        String::new()
    } else {
        format!(" (changed: {})", fields.join(", "))
    };
    Ok(format!(
        "{label} {id} was changed by {} at {} UTC after you opened version {expected}; it is now version {version}{changed}. Your input is kept below: check their change, then save again.",
        who.join(", "),
        last.1
    ))
}
