//! All SQL lives here. One portable SQL text per statement (`$1` placeholders work on both
//! SQLite and PostgreSQL), run on whichever pool the URL chose.

pub mod audit;
pub mod backup;
mod calibrations;
mod containers;
mod cycles;
pub mod demo;
mod dryers;
mod formulations;
mod library;
mod materials;
mod measurements;
mod runs;
mod sessions;
mod signatures;
mod traces;
mod users;
pub(crate) mod write;

use std::str::FromStr;
use std::time::Duration;

use sqlx::postgres::{PgPool, PgPoolOptions};
use sqlx::sqlite::{SqliteConnectOptions, SqliteJournalMode, SqlitePool, SqlitePoolOptions};

use crate::error::AppError;

pub use audit::{AuditCheck, AuditEvent, AuditFilter};
pub use calibrations::{Adoption, Calibration, ModelCheck};
pub use formulations::{trim_number, FormulationFilter, FormulationSort, FormulationSummary, Page};
pub use runs::RunFilter;
pub use sessions::{wait_after, SessionInfo, SessionLimits};
pub use signatures::{SignRequest, Signature, TeamSettings};
pub use users::{check_username, ApiToken, NewUser, User};
pub use write::Snapshot;

/// The database: a SQLite file or a PostgreSQL server, same schema and behaviour.
#[derive(Clone, Debug)]
pub enum Store {
    Sqlite(SqlitePool),
    Postgres(PgPool),
}

/// Runs `$body` with `$pool` bound to the concrete pool of either backend; the body is
/// compiled once per backend, so each query is checked against both drivers' types.
macro_rules! on_pool {
    ($store:expr, $pool:ident => $body:expr) => {
        match $store {
            $crate::storage::Store::Sqlite($pool) => $body,
            $crate::storage::Store::Postgres($pool) => $body,
        }
    };
}
pub(crate) use on_pool;

static SQLITE_MIGRATIONS: sqlx::migrate::Migrator = sqlx::migrate!("migrations/sqlite");
static POSTGRES_MIGRATIONS: sqlx::migrate::Migrator = sqlx::migrate!("migrations/postgres");

impl Store {
    /// Connects to `url` (`sqlite://file.db`, `sqlite::memory:`, `postgres://…`),
    /// creating a SQLite file when it does not exist.
    pub async fn connect(url: &str) -> Result<Store, AppError> {
        if url.starts_with("postgres://") || url.starts_with("postgresql://") {
            let pool = PgPoolOptions::new()
                .max_connections(10)
                .acquire_timeout(Duration::from_secs(10))
                .connect(url)
                .await?;
            Ok(Store::Postgres(pool))
        } else if url.starts_with("sqlite:") {
            let in_memory = url.contains(":memory:") || url.contains("mode=memory");
            let options = SqliteConnectOptions::from_str(url)?
                .create_if_missing(true)
                .foreign_keys(true)
                .busy_timeout(Duration::from_secs(5));
            let options = if in_memory {
                options
            } else {
                options.journal_mode(SqliteJournalMode::Wal)
            };
            // An in-memory database lives in one connection: never open a second.
            let max = if in_memory { 1 } else { 8 };
            let pool = SqlitePoolOptions::new()
                .max_connections(max)
                .connect_with(options)
                .await?;
            Ok(Store::Sqlite(pool))
        } else {
            Err(AppError::input(
                "database",
                "the database URL must start with sqlite: or postgres://",
            ))
        }
    }

    /// Applies pending migrations and ships the materials library and typical vials on
    /// first run.
    pub async fn migrate(&self) -> Result<(), AppError> {
        match self {
            Store::Sqlite(pool) => SQLITE_MIGRATIONS.run(pool).await?,
            // An application role without CREATE rights (see the README) can still start
            // once the owner has applied every migration.
            Store::Postgres(pool) if self.all_applied(&POSTGRES_MIGRATIONS).await => {}
            Store::Postgres(pool) => POSTGRES_MIGRATIONS.run(pool).await?,
        }
        library::install_if_missing(self).await
    }

    /// Whether every migration of `migrator` is recorded as applied (false when the
    /// bookkeeping table is missing or cannot be read).
    async fn all_applied(&self, migrator: &sqlx::migrate::Migrator) -> bool {
        let applied: Result<Vec<(i64,)>, sqlx::Error> = on_pool!(self, pool => {
            sqlx::query_as("SELECT version FROM _sqlx_migrations WHERE success")
                .fetch_all(pool)
                .await
        });
        match applied {
            Ok(rows) => migrator
                .iter()
                .all(|m| rows.iter().any(|(v,)| *v == m.version)),
            Err(_) => false,
        }
    }

    /// Whether the database answers.
    pub async fn ping(&self) -> Result<(), AppError> {
        on_pool!(self, pool => {
            sqlx::query("SELECT 1").execute(pool).await?;
        });
        Ok(())
    }

    pub fn backend_name(&self) -> &'static str {
        match self {
            Store::Sqlite(_) => "SQLite",
            Store::Postgres(_) => "PostgreSQL",
        }
    }

    pub async fn close(&self) {
        on_pool!(self, pool => pool.close().await)
    }
}

/// The current time, as stored in `created_at`/`updated_at`.
fn now() -> time::OffsetDateTime {
    let t = time::OffsetDateTime::now_utc();
    // Whole microseconds keep both backends' round trips identical.
    t.replace_nanosecond(t.nanosecond() / 1000 * 1000)
        .unwrap_or(t)
}

/// Turns a database complaint into a form error where the user can act on it.
fn on_constraint(err: sqlx::Error, unique_field: &str, unique_message: &str) -> AppError {
    if let sqlx::Error::Database(db) = &err {
        if db.is_unique_violation() {
            return AppError::input(unique_field, unique_message);
        }
        if db.is_foreign_key_violation() {
            return AppError::input(unique_field, "refers to a record that does not exist");
        }
    }
    AppError::Database(err)
}

/// A stored code that no longer parses is a programming error, not user input.
fn decode<T>(value: Option<T>, what: &str, code: &str) -> Result<T, AppError> {
    value.ok_or_else(|| AppError::Internal(format!("stored {what} '{code}' is not known")))
}
