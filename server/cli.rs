//! The `glasspoint` command line: serve, migrate, seed-demo, calc.

use std::io::Read;
use std::net::SocketAddr;
use std::process::ExitCode;
use std::sync::Arc;

use clap::{Parser, Subcommand};

use crate::config::{database_url_or_default, Config, DEFAULT_BIND};
use crate::{AppError, AppState, Store};

#[derive(Parser)]
#[command(
    name = "glasspoint",
    version,
    about = "A notebook for freeze-drying formulation and cycle development"
)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(clap::Args, Clone)]
struct DatabaseArg {
    /// Database URL (sqlite://file.db or postgres://…). Default: sqlite://glasspoint.db here.
    #[arg(long = "database", env = "DATABASE_URL")]
    database: Option<String>,
}

#[derive(Subcommand)]
enum Command {
    /// Serve the web app and API.
    Serve {
        /// Address to listen on (port 0 picks a free one).
        #[arg(long, env = "GLASSPOINT_BIND", default_value = DEFAULT_BIND)]
        bind: SocketAddr,
        #[command(flatten)]
        db: DatabaseArg,
        /// Load the demo scenario (records already present are left alone).
        #[arg(long)]
        demo: bool,
        /// The team's safety margin below the critical temperature, °C (0 to 20).
        #[arg(long, env = "GLASSPOINT_MARGIN_C", default_value_t = glasspoint_science::limit::DEFAULT_MARGIN_C)]
        margin_c: f64,
    },
    /// Apply pending database migrations (and install the shipped library on first run).
    Migrate {
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Load the demo scenario (idempotent).
    SeedDemo {
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Run a calculation: JSON in (standard input or --input), JSON out.
    Calc {
        /// ice-vapor-pressure, mixture-tg, cake-tg, cake-moisture-limit, product-limit,
        /// formulation-estimate, annealing-advice, gordon-taylor-fit, primary-drying,
        /// design-space, suggest-primary-drying, cycle-check
        topic: String,
        /// Read the input from this file instead of standard input.
        #[arg(long)]
        input: Option<std::path::PathBuf>,
        /// Needed only for formulation-estimate with a formulation_id.
        #[command(flatten)]
        db: DatabaseArg,
    },
}

pub async fn main() -> ExitCode {
    let cli = Cli::parse();
    init_tracing();
    match run(cli.command).await {
        Ok(code) => code,
        Err(e) => {
            eprintln!("glasspoint: {e}");
            match e {
                AppError::Input(_) | AppError::Fields(_) => ExitCode::from(2),
                _ => ExitCode::FAILURE,
            }
        }
    }
}

fn init_tracing() {
    let filter = tracing_subscriber::EnvFilter::try_from_default_env()
        .unwrap_or_else(|_| tracing_subscriber::EnvFilter::new("info,sqlx::postgres::notice=warn"));
    let _ = tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr)
        .try_init();
}

async fn open(db: DatabaseArg) -> Result<(Store, String), AppError> {
    let url = database_url_or_default(db.database);
    let store = Store::connect(&url).await?;
    store.migrate().await?;
    Ok((store, url))
}

async fn run(command: Command) -> Result<ExitCode, AppError> {
    match command {
        Command::Serve {
            bind,
            db,
            demo,
            margin_c,
        } => {
            if !(0.0..=glasspoint_science::limit::MAX_MARGIN_C).contains(&margin_c) {
                return Err(AppError::input(
                    "--margin-c",
                    format!(
                        "must lie between 0 and {} °C",
                        glasspoint_science::limit::MAX_MARGIN_C
                    ),
                ));
            }
            let given = db.database.is_some();
            let (store, url) = open(db).await?;
            if !given {
                let here = std::env::current_dir()
                    .map(|d| d.display().to_string())
                    .unwrap_or_default();
                eprintln!("glasspoint: using the SQLite database {url} in {here}");
            }
            if demo {
                let report = store.seed_demo().await?;
                eprintln!(
                    "glasspoint: demo scenario: {} formulations, {} measurements and {} cycles added",
                    report.formulations, report.measurements, report.cycles
                );
            }
            let mut config = Config::for_database(url);
            config.bind = bind;
            config.margin_c = margin_c;
            serve(store, config).await?;
            Ok(ExitCode::SUCCESS)
        }
        Command::Migrate { db } => {
            let (store, url) = open(db).await?;
            eprintln!("glasspoint: {url} is up to date ({})", store.backend_name());
            store.close().await;
            Ok(ExitCode::SUCCESS)
        }
        Command::SeedDemo { db } => {
            let (store, _) = open(db).await?;
            let r = store.seed_demo().await?;
            eprintln!(
                "glasspoint: demo scenario loaded: {} materials, {} formulations, {} measurements, {} cycles added",
                r.materials, r.formulations, r.measurements, r.cycles
            );
            store.close().await;
            Ok(ExitCode::SUCCESS)
        }
        Command::Calc { topic, input, db } => {
            let text = match &input {
                Some(path) => std::fs::read_to_string(path).map_err(|e| {
                    AppError::input("--input", format!("cannot read {}: {e}", path.display()))
                })?,
                None => {
                    let mut s = String::new();
                    std::io::stdin().read_to_string(&mut s).map_err(|e| {
                        AppError::input("input", format!("cannot read standard input: {e}"))
                    })?;
                    s
                }
            };
            let value: serde_json::Value = serde_json::from_str(&text)
                .map_err(|e| AppError::input("input", format!("not valid JSON: {e}")))?;
            let needs_store =
                topic == "formulation-estimate" && value.get("formulation_id").is_some();
            let store = if needs_store {
                Some(open(db).await?.0)
            } else {
                None
            };
            let out = crate::api::run_calc(store.as_ref(), &topic, value)
                .await
                .map_err(|e| match e {
                    AppError::NotFound(what) => {
                        AppError::input("topic", format!("{what} was not found"))
                    }
                    other => other,
                })?;
            println!("{}", serde_json::to_string_pretty(&out).unwrap_or_default());
            Ok(ExitCode::SUCCESS)
        }
    }
}

/// Serves until Ctrl-C, printing the address actually bound (useful with port 0).
pub async fn serve(store: Store, config: Config) -> Result<(), AppError> {
    let listener = tokio::net::TcpListener::bind(config.bind)
        .await
        .map_err(|e| AppError::input("bind", format!("cannot listen on {}: {e}", config.bind)))?;
    let addr = listener
        .local_addr()
        .map_err(|e| AppError::Internal(e.to_string()))?;
    eprintln!("glasspoint: listening on http://{addr}");
    let app = crate::router(AppState {
        store,
        config: Arc::new(config),
    });
    axum::serve(listener, app)
        .with_graceful_shutdown(async {
            let _ = tokio::signal::ctrl_c().await;
        })
        .await
        .map_err(|e| AppError::Internal(e.to_string()))
}
