//! The `glasspoint` command line: serve, migrate, backup, seed-demo, user, dryer, audit,
//! calc.

use std::io::Read;
use std::net::SocketAddr;
use std::process::ExitCode;

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
    #[arg(long = "database", env = "DATABASE_URL", global = true)]
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
        /// Mark the session cookie Secure: set this when the app is reached over HTTPS.
        #[arg(long, env = "GLASSPOINT_SECURE_COOKIES")]
        secure_cookies: bool,
        /// Minutes after which an unused session ends.
        #[arg(long, env = "GLASSPOINT_SESSION_IDLE_MIN", default_value_t = crate::config::DEFAULT_SESSION_IDLE_MIN)]
        session_idle_min: i64,
        /// Hours after which every session ends.
        #[arg(long, env = "GLASSPOINT_SESSION_HOURS", default_value_t = crate::config::DEFAULT_SESSION_ABSOLUTE_H)]
        session_hours: i64,
        /// The team's safety margin below the critical temperature, °C (0 to 20).
        #[arg(long, env = "GLASSPOINT_MARGIN_C", default_value_t = glasspoint_science::limit::DEFAULT_MARGIN_C)]
        margin_c: f64,
        /// Another host name the server answers to, besides localhost, 127.0.0.1, [::1]
        /// and the bind address (repeatable; the variable takes a comma-separated list).
        #[arg(
            long = "allowed-host",
            env = "GLASSPOINT_ALLOWED_HOSTS",
            value_delimiter = ','
        )]
        allowed_hosts: Vec<String>,
    },
    /// Apply pending database migrations (and install the shipped library on first run).
    Migrate {
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Copy a SQLite database, consistently and while the app runs, into a new FILE
    /// (never overwritten). PostgreSQL: use pg_dump; this command says how.
    Backup {
        /// The new file to write, e.g. glasspoint-2026-11-30.db.
        file: std::path::PathBuf,
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Load the demo scenario (idempotent).
    SeedDemo {
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Manage accounts and API tokens.
    User {
        #[command(subcommand)]
        action: crate::cli_users::UserCommand,
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Show the dryers cycle links may name.
    Dryer {
        #[command(subcommand)]
        action: DryerCommand,
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Check the audit trail.
    Audit {
        #[command(subcommand)]
        action: AuditCommand,
        #[command(flatten)]
        db: DatabaseArg,
    },
    /// Run a calculation: JSON in (standard input or --input), JSON out.
    Calc {
        /// ice-vapor-pressure, mixture-tg, cake-tg, cake-moisture-limit, product-limit,
        /// formulation-estimate, annealing-advice, gordon-taylor-fit, primary-drying,
        /// design-space, suggest-primary-drying, cycle-check, dsc-analysis,
        /// kv-from-gravimetric, kv-fit, rp-from-product-temperature,
        /// secondary-drying-kinetics, end-of-primary-drying
        topic: String,
        /// Read the input from this file instead of standard input.
        #[arg(long)]
        input: Option<std::path::PathBuf>,
        /// Needed only for formulation-estimate with a formulation_id.
        #[command(flatten)]
        db: DatabaseArg,
    },
}

#[derive(Subcommand)]
enum DryerCommand {
    /// List the dryers: shelf area, lowest pressure, condenser, capability points and edge
    /// heat factor (typical, invented values are marked).
    List,
}

#[derive(Subcommand)]
enum AuditCommand {
    /// Report whether the trail was altered, deleted from or reordered outside the app
    /// (exit status 0 when intact, 1 when not), naming the first bad event.
    Verify,
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
            secure_cookies,
            session_idle_min,
            session_hours,
            allowed_hosts,
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
                let runs = crate::runs::demo::seed_runs(&store).await?;
                eprintln!(
                    "glasspoint: demo scenario: {} formulations, {} measurements, {} cycles and {runs} runs added",
                    report.formulations, report.measurements, report.cycles
                );
                print_demo_users(&report);
            }
            let mut config = Config::for_database(url);
            config.bind = bind;
            config.margin_c = margin_c;
            config.secure_cookies = secure_cookies;
            config.session_idle_min = session_idle_min.clamp(1, 7 * 24 * 60);
            config.session_absolute_h = session_hours.clamp(1, 24 * 30);
            config.allowed_hosts = crate::config::allowed_hosts_for(bind, &allowed_hosts);
            if let Some(warning) = config.bind_warning() {
                eprintln!("{warning}");
            }
            serve(store, config).await?;
            Ok(ExitCode::SUCCESS)
        }
        Command::Backup { file, db } => {
            let url = database_url_or_default(db.database);
            let report = crate::storage::backup::backup(&url, &file).await?;
            eprintln!(
                "glasspoint: backed up {url} to {} ({} bytes); open it with --database sqlite://{}",
                report.file.display(),
                report.bytes,
                report.file.display()
            );
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
            let runs = crate::runs::demo::seed_runs(&store).await?;
            eprintln!(
                "glasspoint: demo scenario loaded: {} materials, {} formulations, {} measurements, {} cycles and {runs} runs added",
                r.materials, r.formulations, r.measurements, r.cycles
            );
            print_demo_users(&r);
            store.close().await;
            Ok(ExitCode::SUCCESS)
        }
        Command::User { action, db } => {
            let (store, _) = open(db).await?;
            let code = crate::cli_users::run_user(&store, action).await;
            store.close().await;
            code
        }
        Command::Dryer { action, db } => {
            let (store, _) = open(db).await?;
            let result = match action {
                DryerCommand::List => store.list_dryers().await,
            };
            store.close().await;
            for d in result? {
                println!("{}", dryer_line(&d));
            }
            Ok(ExitCode::SUCCESS)
        }
        Command::Audit { action, db } => {
            let (store, _) = open(db).await?;
            let code = match action {
                AuditCommand::Verify => crate::cli_users::run_audit_verify(&store).await,
            };
            store.close().await;
            code
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

/// One dryer as `glasspoint dryer list` prints it.
fn dryer_line(d: &crate::domain::Dryer) -> String {
    let opt = |v: Option<f64>, unit: &str| match v {
        Some(v) => format!("{v} {unit}"),
        None => "not given".to_string(),
    };
    let capability = if d.capability.is_empty() {
        "not given".to_string()
    } else {
        d.capability
            .iter()
            .map(|p| {
                format!(
                    "{} mTorr → {} kg/h",
                    p.pressure_mtorr, p.max_sublimation_kg_h
                )
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    format!(
        "{id}\t{name}{typical}\tshelf {area} m²; lowest pressure {min}; condenser {cond}; \
         capability {capability}; edge heat factor {edge}",
        id = d.id,
        name = d.name,
        typical = if d.typical_values {
            " (typical values: replace with your own)"
        } else {
            ""
        },
        area = d.shelf_area_m2,
        min = opt(d.min_pressure_mtorr, "mTorr"),
        cond = opt(d.condenser_capacity_kg, "kg"),
        edge = d.edge_heat_factor,
    )
}

/// The demo accounts' one-time passwords: printed here and stored nowhere but as hashes.
fn print_demo_users(report: &crate::storage::demo::DemoReport) {
    if !report.new_users.is_empty() {
        eprintln!(
            "glasspoint: demo accounts (sign in at /login; the passwords are shown this once):"
        );
        for (name, role, password) in &report.new_users {
            eprintln!("    {name:<10} {:<10} password: {password}", role.code());
        }
    }
    if !report.existing_users.is_empty() {
        eprintln!(
            "glasspoint: demo accounts {} exist already; their passwords were shown when they were made (reset one with `glasspoint user passwd NAME`)",
            report.existing_users.join(", ")
        );
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
    let app = crate::router(AppState::new(store, config));
    axum::serve(
        listener,
        app.into_make_service_with_connect_info::<SocketAddr>(),
    )
    .with_graceful_shutdown(async {
        let _ = tokio::signal::ctrl_c().await;
    })
    .await
    .map_err(|e| AppError::Internal(e.to_string()))
}
