//! Sign-in sessions (stored in the database, so several app instances share them and a
//! restart loses none) and the slowing of repeated failed sign-ins.

use time::{Duration, OffsetDateTime};

use super::audit::{append_event, NewEvent};
use super::write::{commit, on_tx};
use super::{now, on_pool, Store};
use crate::auth::secrets::{random_hex, sha256_hex};
use crate::auth::Actor;
use crate::domain::Action;
use crate::error::AppError;

/// A live session: who, and the token its forms must carry.
#[derive(Debug, Clone)]
pub struct SessionInfo {
    pub actor: Actor,
    pub csrf_token: String,
}

/// How long sessions live.
#[derive(Debug, Clone, Copy)]
pub struct SessionLimits {
    /// Ends a session nobody used for this long.
    pub idle: Duration,
    /// Ends every session this long after sign-in, used or not.
    pub absolute: Duration,
}

/// Failed attempts allowed before each further attempt must wait (common practice, no
/// source).
const FREE_FAILURES: i64 = 3;
const MAX_WAIT_S: i64 = 300;

/// Seconds to wait after `failures` failed attempts: doubling from 1 s, at most 5 min.
pub fn wait_after(failures: i64) -> i64 {
    if failures < FREE_FAILURES {
        0
    } else {
        let exp = (failures - FREE_FAILURES).min(12) as u32;
        (1i64 << exp).min(MAX_WAIT_S)
    }
}

impl Store {
    /// Starts a new session for `actor` (always a new id) and records the sign-in.
    /// Returns the cookie value, which is stored only as its hash.
    pub async fn create_session(&self, actor: &Actor, address: &str) -> Result<String, AppError> {
        let user_id = actor
            .user_id
            .ok_or_else(|| AppError::Internal("a session needs a user".into()))?;
        let cookie = random_hex(32);
        let csrf = random_hex(32);
        let at = now();
        let mut tx = self.begin_locked().await?;
        on_tx!(&mut tx, c => {
            sqlx::query(
                "INSERT INTO sessions (id_hash, user_id, csrf_token, address, created_at, last_seen_at) \
                 VALUES ($1, $2, $3, $4, $5, $5)",
            )
            .bind(sha256_hex(&cookie))
            .bind(user_id)
            .bind(&csrf)
            .bind(address)
            .bind(at)
            .execute(&mut **c)
            .await?;
        });
        append_event(
            &mut tx,
            NewEvent::account(actor, Action::Login, Some(user_id), address),
        )
        .await?;
        commit(tx).await?;
        Ok(cookie)
    }

    /// The session a cookie names, if it is live and its account enabled; notes its use
    /// (at most once a minute, to keep reads from writing).
    pub async fn session(
        &self,
        cookie: &str,
        limits: SessionLimits,
    ) -> Result<Option<SessionInfo>, AppError> {
        let hash = sha256_hex(cookie);
        let row: Option<(i64, String, OffsetDateTime, OffsetDateTime)> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT s.user_id, s.csrf_token, s.created_at, s.last_seen_at FROM sessions s \
                 JOIN users u ON u.id = s.user_id WHERE s.id_hash = $1 AND u.disabled = FALSE",
            )
            .bind(&hash)
            .fetch_optional(pool)
            .await?
        });
        let Some((user_id, csrf_token, created, last_seen)) = row else {
            return Ok(None);
        };
        let at = now();
        if at - created > limits.absolute || at - last_seen > limits.idle {
            self.delete_session_row(&hash).await?;
            return Ok(None);
        }
        if at - last_seen > Duration::minutes(1) {
            on_pool!(self, pool => {
                sqlx::query("UPDATE sessions SET last_seen_at = $1 WHERE id_hash = $2")
                    .bind(at)
                    .bind(&hash)
                    .execute(pool)
                    .await?;
            });
        }
        let user = self.get_user(user_id).await?;
        Ok(Some(SessionInfo {
            actor: user.actor(true),
            csrf_token,
        }))
    }

    async fn delete_session_row(&self, hash: &str) -> Result<(), AppError> {
        on_pool!(self, pool => {
            sqlx::query("DELETE FROM sessions WHERE id_hash = $1").bind(hash).execute(pool).await?;
        });
        Ok(())
    }

    /// Ends a session and records the sign-out.
    pub async fn end_session(&self, cookie: &str, actor: &Actor) -> Result<(), AppError> {
        let mut tx = self.begin_locked().await?;
        on_tx!(&mut tx, c => {
            sqlx::query("DELETE FROM sessions WHERE id_hash = $1")
                .bind(sha256_hex(cookie))
                .execute(&mut **c)
                .await?;
        });
        append_event(
            &mut tx,
            NewEvent::account(actor, Action::Logout, actor.user_id, ""),
        )
        .await?;
        commit(tx).await
    }

    /// Seconds before another attempt on any of `keys` is heard (0: now).
    pub async fn sign_in_wait(&self, keys: &[String]) -> Result<i64, AppError> {
        let at = now();
        let mut wait = 0;
        for key in keys {
            let row: Option<(i64, OffsetDateTime)> = on_pool!(self, pool => {
                sqlx::query_as("SELECT failures, last_failure_at FROM login_throttle WHERE key = $1")
                    .bind(key)
                    .fetch_optional(pool)
                    .await?
            });
            if let Some((failures, last)) = row {
                let until = last + Duration::seconds(wait_after(failures));
                let left = (until - at).whole_seconds() + 1;
                if until > at {
                    wait = wait.max(left);
                }
            }
        }
        Ok(wait)
    }

    /// Counts a failed attempt against each key and records it in the audit trail under
    /// the name that was typed.
    pub async fn note_failed_sign_in(
        &self,
        keys: &[String],
        typed_name: &str,
        user_id: Option<i64>,
        address: &str,
    ) -> Result<(), AppError> {
        let at = now();
        let mut tx = self.begin_locked().await?;
        for key in keys {
            on_tx!(&mut tx, c => {
                sqlx::query(
                    "INSERT INTO login_throttle (key, failures, last_failure_at) VALUES ($1, 1, $2) \
                     ON CONFLICT (key) DO UPDATE SET failures = login_throttle.failures + 1, last_failure_at = excluded.last_failure_at",
                )
                .bind(key)
                .bind(at)
                .execute(&mut **c)
                .await?;
            });
        }
        let name: String = typed_name.chars().take(64).collect();
        let actor = Actor {
            user_id: None,
            username: name,
            full_name: String::new(),
            role: crate::domain::Role::Reader,
            can_write: false,
        };
        append_event(
            &mut tx,
            NewEvent::account(&actor, Action::LoginFailed, user_id, address),
        )
        .await?;
        commit(tx).await
    }

    pub async fn clear_failed_sign_ins(&self, keys: &[String]) -> Result<(), AppError> {
        for key in keys {
            on_pool!(self, pool => {
                sqlx::query("DELETE FROM login_throttle WHERE key = $1").bind(key).execute(pool).await?;
            });
        }
        Ok(())
    }
}
