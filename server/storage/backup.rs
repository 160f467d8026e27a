//! Backups. A SQLite database is copied while the app keeps running with `VACUUM INTO`,
//! which writes a consistent snapshot (one read transaction) into a new file; WAL content
//! already committed is included. A PostgreSQL database is backed up with the server's
//! own tools (`pg_dump`/`pg_restore`), which this command points to.

use std::path::{Path, PathBuf};
use std::str::FromStr;
use std::time::Duration;

use axum::http::StatusCode;
use sqlx::sqlite::{SqliteConnectOptions, SqlitePool, SqlitePoolOptions};

use super::Store;
use crate::error::AppError;

/// What a finished backup wrote.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BackupReport {
    pub file: PathBuf,
    pub bytes: u64,
}

/// The advice for a PostgreSQL database, whose backups belong to the server's tools.
pub const POSTGRES_ADVICE: &str =
    "a PostgreSQL database is backed up with PostgreSQL's own tools: \
pg_dump --format=custom --file=glasspoint.dump \"$DATABASE_URL\" (while the app runs), \
and restored into an empty database with pg_restore --dbname=\"$DATABASE_URL\" glasspoint.dump";

/// Backs up the database at `url` into the new file `dest`, without creating the source
/// when it does not exist and never overwriting `dest`.
pub async fn backup(url: &str, dest: &Path) -> Result<BackupReport, AppError> {
    if url.starts_with("postgres://") || url.starts_with("postgresql://") {
        return Err(AppError::refused(
            StatusCode::BAD_REQUEST,
            Some("--database"),
            POSTGRES_ADVICE,
        ));
    }
    if !url.starts_with("sqlite:") {
        return Err(AppError::input(
            "--database",
            "the database URL must start with sqlite: or postgres://",
        ));
    }
    if url.contains(":memory:") || url.contains("mode=memory") {
        return Err(AppError::input(
            "--database",
            "an in-memory database lives only inside its process and cannot be backed up from outside",
        ));
    }
    refuse_existing(dest)?;
    let options = SqliteConnectOptions::from_str(url)?
        .create_if_missing(false)
        .busy_timeout(Duration::from_secs(5));
    let pool = SqlitePoolOptions::new()
        .max_connections(1)
        .connect_with(options)
        .await
        .map_err(|e| {
            AppError::input(
                "--database",
                format!("cannot open the SQLite database {url}: {e}"),
            )
        })?;
    let result = vacuum_into(&pool, dest).await;
    pool.close().await;
    result
}

impl Store {
    /// Writes a consistent copy of this SQLite database into the new file `dest` while the
    /// app may keep writing; refuses for PostgreSQL (see [`POSTGRES_ADVICE`]).
    pub async fn backup_to(&self, dest: &Path) -> Result<BackupReport, AppError> {
        match self {
            Store::Sqlite(pool) => {
                refuse_existing(dest)?;
                vacuum_into(pool, dest).await
            }
            Store::Postgres(_) => Err(AppError::refused(
                StatusCode::BAD_REQUEST,
                Some("--database"),
                POSTGRES_ADVICE,
            )),
        }
    }
}

fn refuse_existing(dest: &Path) -> Result<(), AppError> {
    if dest.exists() {
        return Err(AppError::input(
            "FILE",
            format!(
                "{} already exists; a backup never overwrites a file, so name a new one",
                dest.display()
            ),
        ));
    }
    Ok(())
}

async fn vacuum_into(pool: &SqlitePool, dest: &Path) -> Result<BackupReport, AppError> {
    let target = dest
        .to_str()
        .ok_or_else(|| AppError::input("FILE", "the backup file name must be valid UTF-8 text"))?;
    sqlx::query("VACUUM INTO $1")
        .bind(target)
        .execute(pool)
        .await
        .map_err(|e| {
            AppError::input(
                "FILE",
                format!("could not write the backup to {}: {e}", dest.display()),
            )
        })?;
    // The copy must read back whole before it is called a backup.
    let copy = SqlitePoolOptions::new()
        .max_connections(1)
        .connect_with(
            SqliteConnectOptions::new()
                .filename(dest)
                .create_if_missing(false)
                .read_only(true),
        )
        .await?;
    let (check,): (String,) = sqlx::query_as("PRAGMA quick_check")
        .fetch_one(&copy)
        .await?;
    copy.close().await;
    if check != "ok" {
        return Err(AppError::Internal(format!(
            "the backup {} failed its integrity check: {check}",
            dest.display()
        )));
    }
    let bytes = std::fs::metadata(dest).map(|m| m.len()).unwrap_or(0);
    Ok(BackupReport {
        file: dest.to_path_buf(),
        bytes,
    })
}
