//! Electronic signatures (reviewed, approved, rejected), bound to the exact version signed,
//! and the team's settings.

use sqlx::FromRow;
use time::OffsetDateTime;

use super::write::{on_tx, signed_content_hash, Target};
use super::{decode, now, on_pool, Store};
use crate::auth::Actor;
use crate::domain::{Action, Entity, Role, SignatureMeaning};
use crate::error::AppError;

#[derive(Debug, Clone, serde::Serialize)]
pub struct Signature {
    pub id: i64,
    pub entity: Entity,
    pub entity_id: i64,
    /// The version that was signed; a later change does not carry the signature over.
    pub version: i64,
    /// SHA-256 of that version's content.
    pub content_hash: String,
    pub meaning: SignatureMeaning,
    pub reason: String,
    pub user_id: i64,
    pub full_name: String,
    pub signed_at: OffsetDateTime,
}

impl Signature {
    /// The signing time in UTC to the second, for pages.
    pub fn signed_at_utc(&self) -> String {
        self.signed_at
            .to_offset(time::UtcOffset::UTC)
            .format(&time::macros::format_description!(
                "[year]-[month]-[day] [hour]:[minute]:[second]"
            ))
            .unwrap_or_default()
    }
}

#[derive(FromRow)]
struct SignatureRow {
    id: i64,
    entity: String,
    entity_id: i64,
    version: i64,
    content_hash: String,
    meaning: String,
    reason: String,
    user_id: i64,
    full_name: String,
    signed_at: OffsetDateTime,
}

fn to_signature(r: SignatureRow) -> Result<Signature, AppError> {
    Ok(Signature {
        entity: decode(Entity::parse(&r.entity), "entity", &r.entity)?,
        meaning: decode(SignatureMeaning::parse(&r.meaning), "meaning", &r.meaning)?,
        id: r.id,
        entity_id: r.entity_id,
        version: r.version,
        content_hash: r.content_hash,
        reason: r.reason,
        user_id: r.user_id,
        full_name: r.full_name,
        signed_at: r.signed_at,
    })
}

/// What a signer asks for.
pub struct SignRequest<'a> {
    pub entity: Entity,
    pub id: i64,
    /// The version the signer looked at: signing a record that changed since is refused.
    pub version: i64,
    pub meaning: SignatureMeaning,
    pub reason: &'a str,
}

/// The team's settings; unset values fall back to the server's configuration.
#[derive(Debug, Clone, serde::Serialize)]
pub struct TeamSettings {
    pub margin_c: Option<f64>,
    /// Whether derived limits may rest on results nobody has reviewed yet.
    pub allow_unreviewed: bool,
    pub version: i64,
}

impl Default for TeamSettings {
    fn default() -> Self {
        TeamSettings {
            margin_c: None,
            allow_unreviewed: true,
            version: 0,
        }
    }
}

impl Store {
    /// Signs a record: the signer (already re-authenticated by password) must not be one
    /// of its authors; the signature binds to the hash of the version seen.
    pub async fn sign(&self, actor: &Actor, req: &SignRequest<'_>) -> Result<i64, AppError> {
        actor.require(Role::Reviewer)?;
        if !req.entity.signable() {
            return Err(AppError::input(
                "entity",
                "only formulations, measurements and runs are signed",
            ));
        }
        if req.meaning == SignatureMeaning::Approved && req.entity != Entity::Formulation {
            return Err(AppError::input(
                "meaning",
                "only formulations are approved; results are reviewed",
            ));
        }
        let reason = req.reason.trim();
        if req.meaning == SignatureMeaning::Rejected && reason.is_empty() {
            return Err(AppError::input("reason", "say why the record is rejected"));
        }
        if reason.chars().count() > 2000 {
            return Err(AppError::input("reason", "at most 2000 characters"));
        }
        let signer = actor
            .user_id
            .ok_or_else(|| AppError::Forbidden("signatures need a person's account".into()))?;
        if self.authors_of(req.entity, req.id).await?.contains(&signer) {
            return Err(AppError::Forbidden(
                "you recorded or changed this record, so someone else must sign it".into(),
            ));
        }
        let target = Target {
            entity: req.entity,
            id: Some(req.id),
            expected_version: Some(req.version),
            action: Action::Sign,
        };
        let mut w = self.begin_write(actor, target, reason).await?;
        let before = w
            .before()
            .ok_or_else(|| AppError::Internal("signing needs the record".into()))?;
        let hash = signed_content_hash(&before.content);
        let version = before.version;
        let at = now();
        let state_sql = match (req.entity, req.meaning) {
            (Entity::Measurement, SignatureMeaning::Rejected) => {
                Some("UPDATE measurements SET review_state = 'rejected' WHERE id = $1")
            }
            (Entity::Measurement, _) => {
                Some("UPDATE measurements SET review_state = 'reviewed' WHERE id = $1")
            }
            (Entity::Run, SignatureMeaning::Rejected) => {
                Some("UPDATE runs SET review_state = 'rejected' WHERE id = $1")
            }
            (Entity::Run, _) => Some("UPDATE runs SET review_state = 'reviewed' WHERE id = $1"),
            (Entity::Formulation, SignatureMeaning::Approved) => {
                Some("UPDATE formulations SET status = 'approved' WHERE id = $1")
            }
            _ => None,
        };
        let id = on_tx!(&mut w.tx, c => {
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO signatures (entity, entity_id, version, content_hash, meaning, reason, user_id, full_name, signed_at) \
                 VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9) RETURNING id",
            )
            .bind(req.entity.code())
            .bind(req.id)
            .bind(version)
            .bind(&hash)
            .bind(req.meaning.code())
            .bind(reason)
            .bind(signer)
            .bind(&actor.full_name)
            .bind(at)
            .fetch_one(&mut **c)
            .await?;
            if let Some(sql) = state_sql {
                sqlx::query(sql).bind(req.id).execute(&mut **c).await?;
            }
            id
        });
        w.finish(req.id).await?;
        Ok(id)
    }

    /// A record's signatures, newest first.
    pub async fn signatures_of(&self, entity: Entity, id: i64) -> Result<Vec<Signature>, AppError> {
        let rows: Vec<SignatureRow> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT id, entity, entity_id, version, content_hash, meaning, reason, user_id, full_name, signed_at \
                 FROM signatures WHERE entity = $1 AND entity_id = $2 ORDER BY id DESC",
            )
            .bind(entity.code())
            .bind(id)
            .fetch_all(pool)
            .await?
        });
        rows.into_iter().map(to_signature).collect()
    }

    /// Signatures of every record of a kind, newest first (for lists and derived limits).
    pub async fn signatures_of_kind(&self, entity: Entity) -> Result<Vec<Signature>, AppError> {
        let rows: Vec<SignatureRow> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT id, entity, entity_id, version, content_hash, meaning, reason, user_id, full_name, signed_at \
                 FROM signatures WHERE entity = $1 ORDER BY id DESC",
            )
            .bind(entity.code())
            .fetch_all(pool)
            .await?
        });
        rows.into_iter().map(to_signature).collect()
    }

    pub async fn team_settings(&self) -> Result<TeamSettings, AppError> {
        let row: Option<(Option<f64>, bool, i64)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT margin_c, allow_unreviewed, version FROM team_settings WHERE id = 1")
                .fetch_optional(pool)
                .await?
        });
        Ok(row
            .map(|(margin_c, allow_unreviewed, version)| TeamSettings {
                margin_c,
                allow_unreviewed,
                version,
            })
            .unwrap_or_default())
    }

    pub async fn update_team_settings(
        &self,
        actor: &Actor,
        version: i64,
        margin_c: Option<f64>,
        allow_unreviewed: bool,
    ) -> Result<(), AppError> {
        actor.require(Role::Admin)?;
        let exists = self.team_settings().await?.version > 0;
        let target = if exists {
            Target::update(Entity::Settings, 1, Some(version))
        } else {
            Target::create(Entity::Settings)
        };
        let at = now();
        let mut w = self.begin_write(actor, target, "").await?;
        on_tx!(&mut w.tx, c => {
            if exists {
                sqlx::query("UPDATE team_settings SET margin_c = $1, allow_unreviewed = $2 WHERE id = 1")
                    .bind(margin_c)
                    .bind(allow_unreviewed)
                    .execute(&mut **c)
                    .await?;
            } else {
                sqlx::query(
                    "INSERT INTO team_settings (id, margin_c, allow_unreviewed, version, created_at, updated_at) \
                     VALUES (1, $1, $2, 1, $3, $3)",
                )
                .bind(margin_c)
                .bind(allow_unreviewed)
                .bind(at)
                .execute(&mut **c)
                .await?;
            }
        });
        w.finish(1).await?;
        Ok(())
    }
}
