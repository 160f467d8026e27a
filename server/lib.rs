//! Glasspoint: a web notebook for the critical temperatures of freeze-dried formulations and
//! the cycles designed around them.
//!
//! Layout: `domain` parses user input into valid records, `storage` holds every SQL
//! statement, `web` renders pages, `api` answers JSON, `charts` draws SVG, and the science
//! lives in the separate `glasspoint_science` crate.

pub mod api;
pub mod auth;
pub mod charts;
pub mod cli;
mod cli_users;
pub mod config;
pub mod derive;
pub mod domain;
pub mod error;
pub mod runs;
pub mod storage;
pub mod web;

use std::sync::Arc;

use axum::Router;

pub use config::Config;
pub use error::AppError;
pub use storage::Store;

/// The application state handed to every handler: cheap to clone.
#[derive(Clone)]
pub struct AppState {
    pub store: Store,
    pub config: Arc<Config>,
    /// Whether an account exists yet (cached once true).
    pub first_run: web::auth::FirstRun,
}

impl AppState {
    pub fn new(store: Store, config: Config) -> AppState {
        AppState {
            store,
            config: Arc::new(config),
            first_run: Default::default(),
        }
    }
}

/// The whole application: pages, API, static assets and middleware.
pub fn router(state: AppState) -> Router {
    web::middleware(
        Router::new()
            .merge(web::router())
            .nest("/api/v1", api::router())
            // Every matched route passes the access table; unmatched ones answer 404.
            .route_layer(axum::middleware::from_fn_with_state(
                state.clone(),
                web::auth::authorize,
            ))
            .with_state(state.clone()),
        &state.config,
    )
}
