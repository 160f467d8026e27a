//! The audit trail: append-only, hash-chained events written in the same transaction as
//! the change they record, and the check that finds a trail altered outside the app.

use serde_json::Value;
use sqlx::FromRow;

use super::write::{on_tx, Tx};
use super::{on_pool, Store};
use crate::auth::Actor;
use crate::domain::{Action, Entity};
use crate::error::AppError;

/// The `prev_hash` of the first event.
pub const GENESIS_HASH: &str = "0000000000000000000000000000000000000000000000000000000000000000";

/// An event about to be appended.
pub(crate) struct NewEvent<'a> {
    pub actor: &'a Actor,
    pub action: Action,
    pub entity: Entity,
    pub entity_id: Option<i64>,
    pub version: Option<i64>,
    pub before: Option<String>,
    pub after: Option<String>,
    pub reason: &'a str,
}

impl<'a> NewEvent<'a> {
    /// An event about an account that changes no record's content (sign-in, sign-out,
    /// tokens).
    pub fn account(
        actor: &'a Actor,
        action: Action,
        user_id: Option<i64>,
        reason: &'a str,
    ) -> Self {
        NewEvent {
            actor,
            action,
            entity: Entity::User,
            entity_id: user_id,
            version: None,
            before: None,
            after: None,
            reason,
        }
    }
}

/// One stored event.
#[derive(Debug, Clone, FromRow, serde::Serialize, utoipa::ToSchema)]
pub struct AuditEvent {
    pub id: i64,
    pub seq: i64,
    /// UTC, RFC 3339.
    pub at: String,
    pub user_id: Option<i64>,
    pub username: String,
    pub action: String,
    pub entity: String,
    pub entity_id: Option<i64>,
    pub version: Option<i64>,
    /// The record's content before the change (JSON text), when there was one.
    pub before_json: Option<String>,
    /// The record's content after the change (JSON text).
    pub after_json: Option<String>,
    pub reason: String,
    #[serde(skip)]
    pub prev_hash: String,
    #[serde(skip)]
    pub hash: String,
}

impl AuditEvent {
    pub fn action_label(&self) -> &'static str {
        Action::parse(&self.action)
            .map(Action::label)
            .unwrap_or("Unknown")
    }

    pub fn changed_fields(&self) -> Vec<String> {
        changed_fields(self.before_json.as_deref(), self.after_json.as_deref())
    }
}

/// RFC 3339 in UTC with microseconds: the one spelling of time in the trail.
pub fn format_time(t: time::OffsetDateTime) -> String {
    t.to_offset(time::UtcOffset::UTC)
        .format(&time::format_description::well_known::Rfc3339)
        .unwrap_or_default()
}

/// Top-level keys whose values differ between two snapshots (the version aside).
pub fn changed_fields(before: Option<&str>, after: Option<&str>) -> Vec<String> {
    let parse = |s: Option<&str>| -> serde_json::Map<String, Value> {
        s.and_then(|s| serde_json::from_str::<Value>(s).ok())
            .and_then(|v| v.as_object().cloned())
            .unwrap_or_default()
    };
    let (b, a) = (parse(before), parse(after));
    let mut keys: Vec<&String> = b.keys().chain(a.keys()).collect();
    keys.sort();
    keys.dedup();
    keys.into_iter()
        .filter(|k| k.as_str() != "version" && b.get(*k) != a.get(*k))
        .cloned()
        .collect()
}

#[allow(clippy::too_many_arguments)]
fn event_hash(
    prev_hash: &str,
    seq: i64,
    at: &str,
    user_id: Option<i64>,
    username: &str,
    action: &str,
    entity: &str,
    entity_id: Option<i64>,
    version: Option<i64>,
    before: Option<&str>,
    after: Option<&str>,
    reason: &str,
) -> String {
    let canonical = serde_json::json!([
        prev_hash, seq, at, user_id, username, action, entity, entity_id, version, before, after,
        reason
    ]);
    crate::auth::secrets::sha256_hex(&canonical.to_string())
}

fn stored_hash(e: &AuditEvent) -> String {
    event_hash(
        &e.prev_hash,
        e.seq,
        &e.at,
        e.user_id,
        &e.username,
        &e.action,
        &e.entity,
        e.entity_id,
        e.version,
        e.before_json.as_deref(),
        e.after_json.as_deref(),
        &e.reason,
    )
}

/// Appends one event inside `tx`, chained to the newest one. The caller holds the write
/// lock (see `Store::begin_locked`), so the chain has one writer at a time.
pub(crate) async fn append_event(tx: &mut Tx, e: NewEvent<'_>) -> Result<(), AppError> {
    let head: Option<(i64, String)> = on_tx!(tx, c => {
        sqlx::query_as("SELECT seq, hash FROM audit_head WHERE id = 1")
            .fetch_optional(&mut **c)
            .await?
    });
    let (prev_seq, prev_hash) = head.unwrap_or((0, GENESIS_HASH.to_string()));
    let seq = prev_seq + 1;
    let at = format_time(super::now());
    let hash = event_hash(
        &prev_hash,
        seq,
        &at,
        e.actor.user_id,
        &e.actor.username,
        e.action.code(),
        e.entity.code(),
        e.entity_id,
        e.version,
        e.before.as_deref(),
        e.after.as_deref(),
        e.reason,
    );
    on_tx!(tx, c => {
        sqlx::query(
            "INSERT INTO audit_events (seq, at, user_id, username, action, entity, entity_id, version, \
             before_json, after_json, reason, prev_hash, hash) \
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13)",
        )
        .bind(seq)
        .bind(&at)
        .bind(e.actor.user_id)
        .bind(&e.actor.username)
        .bind(e.action.code())
        .bind(e.entity.code())
        .bind(e.entity_id)
        .bind(e.version)
        .bind(&e.before)
        .bind(&e.after)
        .bind(e.reason)
        .bind(&prev_hash)
        .bind(&hash)
        .execute(&mut **c)
        .await?;
        sqlx::query(
            "INSERT INTO audit_head (id, seq, hash) VALUES (1, $1, $2) \
             ON CONFLICT (id) DO UPDATE SET seq = excluded.seq, hash = excluded.hash",
        )
        .bind(seq)
        .bind(&hash)
        .execute(&mut **c)
        .await?;
    });
    Ok(())
}

/// What the audit list is narrowed to.
#[derive(Debug, Clone, Default)]
pub struct AuditFilter {
    pub entity: Option<Entity>,
    pub entity_id: Option<i64>,
    pub username: String,
    pub action: Option<Action>,
    /// Inclusive UTC dates, `YYYY-MM-DD`.
    pub from: Option<time::Date>,
    pub to: Option<time::Date>,
}

const SELECT_EVENT: &str =
    "SELECT id, seq, at, user_id, username, action, entity, entity_id, version, before_json, \
     after_json, reason, prev_hash, hash FROM audit_events";

const WHERE_AUDIT: &str = "WHERE ($1 = '' OR entity = $1) AND ($2 = 0 OR entity_id = $2) \
     AND ($3 = '' OR lower(username) = lower($3)) AND ($4 = '' OR action = $4) \
     AND ($5 = '' OR at >= $5) AND ($6 = '' OR at < $6)";

impl Store {
    /// Events matching `filter`, oldest first, one page at a time.
    pub async fn audit_events(
        &self,
        filter: &AuditFilter,
        page: i64,
        per_page: i64,
    ) -> Result<super::Page<AuditEvent>, AppError> {
        let per_page = per_page.clamp(1, 100_000);
        let entity = filter.entity.map(|e| e.code()).unwrap_or("");
        let action = filter.action.map(|a| a.code()).unwrap_or("");
        let from = filter.from.map(|d| d.to_string()).unwrap_or_default();
        let to = filter
            .to
            .and_then(|d| d.next_day())
            .map(|d| d.to_string())
            .unwrap_or_default();
        let id = filter.entity_id.unwrap_or(0);
        let count_sql = format!("SELECT COUNT(*) FROM audit_events {WHERE_AUDIT}");
        let list_sql = format!("{SELECT_EVENT} {WHERE_AUDIT} ORDER BY seq LIMIT $7 OFFSET $8");
        let (total, items) = on_pool!(self, pool => {
            let (total,): (i64,) = sqlx::query_as(&count_sql)
                .bind(entity).bind(id).bind(&filter.username).bind(action).bind(&from).bind(&to)
                .fetch_one(pool)
                .await?;
            let pages = ((total + per_page - 1) / per_page).max(1);
            let page = page.clamp(1, pages);
            let items: Vec<AuditEvent> = sqlx::query_as(&list_sql)
                .bind(entity).bind(id).bind(&filter.username).bind(action).bind(&from).bind(&to)
                .bind(per_page)
                .bind((page - 1) * per_page)
                .fetch_all(pool)
                .await?;
            (total, items)
        });
        let pages = ((total + per_page - 1) / per_page).max(1);
        Ok(super::Page {
            items,
            page: page.clamp(1, pages),
            per_page,
            total,
            pages,
        })
    }

    /// Every event of one record, oldest first.
    pub async fn history(&self, entity: Entity, id: i64) -> Result<Vec<AuditEvent>, AppError> {
        let filter = AuditFilter {
            entity: Some(entity),
            entity_id: Some(id),
            ..Default::default()
        };
        Ok(self.audit_events(&filter, 1, 100_000).await?.items)
    }

    /// The record's content at `version`, from the event that made it.
    pub async fn version_of(
        &self,
        entity: Entity,
        id: i64,
        version: i64,
    ) -> Result<AuditEvent, AppError> {
        self.history(entity, id)
            .await?
            .into_iter()
            .rev()
            .find(|e| e.version == Some(version) && e.after_json.is_some())
            .ok_or_else(|| {
                AppError::NotFound(format!("Version {version} of {} {id}", entity.label()))
            })
    }

    /// The ids of everyone who wrote a version of the record (its authors).
    pub async fn authors_of(&self, entity: Entity, id: i64) -> Result<Vec<i64>, AppError> {
        let rows: Vec<(Option<i64>,)> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT DISTINCT user_id FROM audit_events WHERE entity = $1 AND entity_id = $2 \
                 AND action IN ('create', 'update')",
            )
            .bind(entity.code())
            .bind(id)
            .fetch_all(pool)
            .await?
        });
        Ok(rows.into_iter().filter_map(|r| r.0).collect())
    }

    /// Walks the whole trail: numbering, chain and each event's own hash, then the head.
    pub async fn verify_audit(&self) -> Result<AuditCheck, AppError> {
        let mut expected_seq = 1;
        let mut prev_hash = GENESIS_HASH.to_string();
        let batch = 2_000;
        loop {
            let sql = format!("{SELECT_EVENT} WHERE seq >= $1 ORDER BY seq, id LIMIT $2");
            let events: Vec<AuditEvent> = on_pool!(self, pool => {
                sqlx::query_as(&sql).bind(expected_seq).bind(batch).fetch_all(pool).await?
            });
            let n = events.len() as i64;
            for e in events {
                let problem = if e.seq != expected_seq {
                    Some(format!(
                        "event {} carries position {} where {expected_seq} was expected: events were deleted or reordered",
                        e.id, e.seq
                    ))
                } else if e.prev_hash != prev_hash {
                    Some(format!(
                        "event {} (position {}) does not follow the event before it: the chain is broken",
                        e.id, e.seq
                    ))
                } else if stored_hash(&e) != e.hash {
                    Some(format!(
                        "event {} (position {}) was altered after it was written",
                        e.id, e.seq
                    ))
                } else {
                    None
                };
                if let Some(problem) = problem {
                    return Ok(AuditCheck {
                        intact: false,
                        events: expected_seq - 1,
                        first_bad_event: Some(e.id),
                        message: problem,
                    });
                }
                prev_hash = e.hash;
                expected_seq += 1;
            }
            if n < batch {
                break;
            }
        }
        let count = expected_seq - 1;
        let head: Option<(i64, String)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT seq, hash FROM audit_head WHERE id = 1")
                .fetch_optional(pool)
                .await?
        });
        let (head_seq, head_hash) = head.unwrap_or((0, GENESIS_HASH.to_string()));
        if head_seq != count || head_hash != prev_hash {
            return Ok(AuditCheck {
                intact: false,
                events: count,
                first_bad_event: None,
                message: format!(
                    "the trail ends at position {count} but its head records position {head_seq}: events were removed from the end, or the head was altered"
                ),
            });
        }
        Ok(AuditCheck {
            intact: true,
            events: count,
            first_bad_event: None,
            message: format!("{count} events checked: the trail is intact"),
        })
    }
}

/// The result of `verify_audit`.
#[derive(Debug, Clone, serde::Serialize)]
pub struct AuditCheck {
    pub intact: bool,
    /// Events that passed before the first problem (all of them when intact).
    pub events: i64,
    pub first_bad_event: Option<i64>,
    pub message: String,
}
