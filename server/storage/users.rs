//! Accounts and API tokens. Every change goes through the write path with its audit event;
//! secrets are stored only as hashes.

use sqlx::FromRow;
use time::OffsetDateTime;

use super::audit::{append_event, NewEvent};
use super::write::{commit, on_tx, Target};
use super::{decode, now, on_constraint, on_pool, Store};
use crate::auth::secrets::{new_api_token, sha256_hex};
use crate::auth::Actor;
use crate::domain::{Action, Entity, Role, TokenScope};
use crate::error::AppError;

/// An account as shown to administrators (never its password hash).
#[derive(Debug, Clone, serde::Serialize)]
pub struct User {
    pub id: i64,
    pub username: String,
    pub full_name: String,
    pub role: Role,
    pub disabled: bool,
    pub version: i64,
    pub created_at: OffsetDateTime,
}

#[derive(FromRow)]
struct UserRow {
    id: i64,
    username: String,
    full_name: String,
    role: String,
    disabled: bool,
    version: i64,
    created_at: OffsetDateTime,
    password_hash: String,
}

fn to_user(r: UserRow) -> Result<(User, String), AppError> {
    Ok((
        User {
            role: decode(Role::parse(&r.role), "role", &r.role)?,
            id: r.id,
            username: r.username,
            full_name: r.full_name,
            disabled: r.disabled,
            version: r.version,
            created_at: r.created_at,
        },
        r.password_hash,
    ))
}

impl User {
    pub fn actor(&self, can_write: bool) -> Actor {
        Actor {
            user_id: Some(self.id),
            username: self.username.clone(),
            full_name: self.full_name.clone(),
            role: self.role,
            can_write,
        }
    }
}

/// A new account, already checked.
pub struct NewUser<'a> {
    pub username: &'a str,
    pub full_name: &'a str,
    pub role: Role,
    pub password_hash: &'a str,
}

/// An API token as listed (the token itself is shown once, at issue, and never stored).
#[derive(Debug, Clone, FromRow, serde::Serialize)]
pub struct ApiToken {
    pub id: i64,
    pub user_id: i64,
    pub name: String,
    pub scope: String,
    pub created_at: OffsetDateTime,
    pub last_used_at: Option<OffsetDateTime>,
    pub revoked_at: Option<OffsetDateTime>,
}

impl ApiToken {
    pub fn issued_utc(&self) -> String {
        super::audit::format_time(self.created_at)
    }

    pub fn last_used_utc(&self) -> String {
        self.last_used_at
            .map(super::audit::format_time)
            .unwrap_or_else(|| "never".into())
    }
}

const SELECT_USER: &str =
    "SELECT id, username, full_name, role, disabled, version, created_at, password_hash FROM users";

/// Account names: letters, digits and `._-`, 2 to 64 characters.
pub fn check_username(name: &str) -> Result<(), AppError> {
    let ok = (2..=64).contains(&name.chars().count())
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '.' | '_' | '-'));
    if ok {
        Ok(())
    } else {
        Err(AppError::input(
            "username",
            "use 2 to 64 letters, digits, dots, dashes or underscores",
        ))
    }
}

pub fn check_full_name(name: &str) -> Result<(), AppError> {
    let n = name.trim().chars().count();
    if n == 0 || n > 200 {
        return Err(AppError::input(
            "full_name",
            "give the person's full name (at most 200 characters); it appears on signatures",
        ));
    }
    Ok(())
}

impl Store {
    pub async fn user_count(&self) -> Result<i64, AppError> {
        let (n,): (i64,) = on_pool!(self, pool => {
            sqlx::query_as("SELECT COUNT(*) FROM users").fetch_one(pool).await?
        });
        Ok(n)
    }

    pub async fn list_users(&self) -> Result<Vec<User>, AppError> {
        let rows: Vec<UserRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT_USER} ORDER BY lower(username)")).fetch_all(pool).await?
        });
        rows.into_iter().map(|r| to_user(r).map(|u| u.0)).collect()
    }

    pub async fn get_user(&self, id: i64) -> Result<User, AppError> {
        let row: Option<UserRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT_USER} WHERE id = $1")).bind(id).fetch_optional(pool).await?
        });
        Ok(to_user(row.ok_or_else(|| AppError::NotFound(format!("User {id}")))?)?.0)
    }

    /// The account and its password hash, by name (any case).
    pub async fn user_by_name(&self, username: &str) -> Result<Option<(User, String)>, AppError> {
        let row: Option<UserRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT_USER} WHERE lower(username) = lower($1)"))
                .bind(username)
                .fetch_optional(pool)
                .await?
        });
        row.map(to_user).transpose()
    }

    pub async fn create_user(&self, actor: &Actor, u: &NewUser<'_>) -> Result<i64, AppError> {
        check_username(u.username)?;
        check_full_name(u.full_name)?;
        let at = now();
        let mut w = self
            .begin_write(actor, Target::create(Entity::User), "")
            .await?;
        let id: i64 = on_tx!(&mut w.tx, c => {
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO users (username, full_name, role, password_hash, disabled, version, created_at, updated_at) \
                 VALUES ($1, $2, $3, $4, FALSE, 1, $5, $5) RETURNING id",
            )
            .bind(u.username)
            .bind(u.full_name.trim())
            .bind(u.role.code())
            .bind(u.password_hash)
            .bind(at)
            .fetch_one(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "username", "another account already uses this name"))?;
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    /// Changes an account's full name and role.
    pub async fn update_user(
        &self,
        actor: &Actor,
        id: i64,
        version: Option<i64>,
        full_name: &str,
        role: Role,
    ) -> Result<(), AppError> {
        check_full_name(full_name)?;
        let mut w = self
            .begin_write(actor, Target::update(Entity::User, id, version), "")
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE users SET full_name = $1, role = $2 WHERE id = $3")
                .bind(full_name.trim())
                .bind(role.code())
                .bind(id)
                .execute(&mut **c)
                .await?;
        });
        w.finish(id).await?;
        Ok(())
    }

    pub async fn set_password(
        &self,
        actor: &Actor,
        id: i64,
        password_hash: &str,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(
                actor,
                Target::with(Entity::User, id, Action::PasswordChange),
                "",
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE users SET password_hash = $1 WHERE id = $2")
                .bind(password_hash)
                .bind(id)
                .execute(&mut **c)
                .await?;
            // A new password ends the account's sessions.
            sqlx::query("DELETE FROM sessions WHERE user_id = $1").bind(id).execute(&mut **c).await?;
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Disables (or re-enables) an account; disabling ends its sessions and tokens.
    pub async fn set_disabled(
        &self,
        actor: &Actor,
        id: i64,
        disabled: bool,
    ) -> Result<(), AppError> {
        let action = if disabled {
            Action::Disable
        } else {
            Action::Enable
        };
        let mut w = self
            .begin_write(actor, Target::with(Entity::User, id, action), "")
            .await?;
        let at = now();
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE users SET disabled = $1 WHERE id = $2")
                .bind(disabled)
                .bind(id)
                .execute(&mut **c)
                .await?;
            if disabled {
                sqlx::query("DELETE FROM sessions WHERE user_id = $1").bind(id).execute(&mut **c).await?;
                sqlx::query("UPDATE api_tokens SET revoked_at = $1 WHERE user_id = $2 AND revoked_at IS NULL")
                    .bind(at)
                    .bind(id)
                    .execute(&mut **c)
                    .await?;
            }
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Issues a token for `user_id`; the returned text is the only copy there will be.
    pub async fn create_token(
        &self,
        actor: &Actor,
        user_id: i64,
        scope: TokenScope,
        name: &str,
    ) -> Result<String, AppError> {
        actor.may_write()?;
        let user = self.get_user(user_id).await?;
        if user.disabled {
            return Err(AppError::input("user", "this account is disabled"));
        }
        let name = name.trim();
        if name.chars().count() > 100 {
            return Err(AppError::input("name", "at most 100 characters"));
        }
        let token = new_api_token();
        let at = now();
        let mut tx = self.begin_locked().await?;
        let id: i64 = on_tx!(&mut tx, c => {
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO api_tokens (user_id, name, scope, token_hash, created_at) VALUES ($1, $2, $3, $4, $5) RETURNING id",
            )
            .bind(user_id)
            .bind(name)
            .bind(scope.code())
            .bind(sha256_hex(&token))
            .bind(at)
            .fetch_one(&mut **c)
            .await?;
            id
        });
        let after =
            serde_json::json!({"token_id": id, "name": name, "scope": scope.code()}).to_string();
        append_event(
            &mut tx,
            NewEvent {
                after: Some(after),
                ..NewEvent::account(actor, Action::TokenCreate, Some(user_id), "")
            },
        )
        .await?;
        commit(tx).await?;
        Ok(token)
    }

    pub async fn revoke_token(&self, actor: &Actor, token_id: i64) -> Result<(), AppError> {
        actor.may_write()?;
        let at = now();
        let mut tx = self.begin_locked().await?;
        let row: Option<(i64, String, String)> = on_tx!(&mut tx, c => {
            sqlx::query_as("SELECT user_id, name, scope FROM api_tokens WHERE id = $1 AND revoked_at IS NULL")
                .bind(token_id)
                .fetch_optional(&mut **c)
                .await?
        });
        let (user_id, name, scope) =
            row.ok_or_else(|| AppError::NotFound(format!("Active API token {token_id}")))?;
        on_tx!(&mut tx, c => {
            sqlx::query("UPDATE api_tokens SET revoked_at = $1 WHERE id = $2")
                .bind(at)
                .bind(token_id)
                .execute(&mut **c)
                .await?;
        });
        let before =
            serde_json::json!({"token_id": token_id, "name": name, "scope": scope}).to_string();
        append_event(
            &mut tx,
            NewEvent {
                before: Some(before),
                ..NewEvent::account(actor, Action::TokenRevoke, Some(user_id), "")
            },
        )
        .await?;
        commit(tx).await
    }

    pub async fn list_tokens(&self) -> Result<Vec<ApiToken>, AppError> {
        Ok(on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT id, user_id, name, scope, created_at, last_used_at, revoked_at FROM api_tokens ORDER BY id",
            )
            .fetch_all(pool)
            .await?
        }))
    }

    /// The user a token stands for, if it is known, active and its account enabled;
    /// notes its use at most once a minute.
    pub async fn token_actor(&self, token: &str) -> Result<Option<Actor>, AppError> {
        let hash = sha256_hex(token);
        let row: Option<(i64, String, Option<OffsetDateTime>, i64)> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT t.id, t.scope, t.last_used_at, t.user_id FROM api_tokens t JOIN users u ON u.id = t.user_id \
                 WHERE t.token_hash = $1 AND t.revoked_at IS NULL AND u.disabled = FALSE",
            )
            .bind(&hash)
            .fetch_optional(pool)
            .await?
        });
        let Some((token_id, scope, last_used, user_id)) = row else {
            return Ok(None);
        };
        let at = now();
        if last_used.is_none_or(|t| at - t > time::Duration::minutes(1)) {
            on_pool!(self, pool => {
                sqlx::query("UPDATE api_tokens SET last_used_at = $1 WHERE id = $2")
                    .bind(at)
                    .bind(token_id)
                    .execute(pool)
                    .await?;
            });
        }
        let user = self.get_user(user_id).await?;
        Ok(Some(user.actor(scope == TokenScope::Write.code())))
    }
}
