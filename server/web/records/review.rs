//! The review queue: results and formulations waiting for a second person.

use askama::Template;
use axum::extract::State;
use axum::response::Response;

use crate::auth::Actor;
use crate::domain::{Entity, FormulationStatus, Measurement, ReviewState};
use crate::web::render;
use crate::{AppError, AppState};

pub struct Waiting {
    pub entity: Entity,
    pub id: i64,
    pub title: String,
    pub detail: String,
    /// The reviewer wrote this record, so someone else must sign it.
    pub own: bool,
}

#[derive(Template)]
#[template(path = "records/review.html")]
struct ReviewPage {
    measurements: Vec<Waiting>,
    formulations: Vec<Waiting>,
    runs: Vec<Waiting>,
}

fn describe(m: &Measurement, code: &str) -> String {
    format!(
        "{code}: {} {} °C by {}, {} (replicate {})",
        m.kind.label(),
        m.value_c,
        m.method.label(),
        m.measured_on,
        m.replicate
    )
}

pub async fn queue(State(state): State<AppState>, actor: Actor) -> Result<Response, AppError> {
    let me = actor.user_id.unwrap_or(-1);
    let codes = state.store.formulation_codes().await?;
    let mut measurements = Vec::new();
    for m in state
        .store
        .list_measurements(None, 1, 500)
        .await?
        .items
        .into_iter()
        .filter(|m| m.review_state == ReviewState::Recorded)
    {
        let code = codes
            .iter()
            .find(|(id, _)| *id == m.formulation_id)
            .map(|(_, c)| c.as_str())
            .unwrap_or("");
        measurements.push(Waiting {
            entity: Entity::Measurement,
            id: m.id,
            title: describe(&m, code),
            detail: m.analyst.clone(),
            own: state
                .store
                .authors_of(Entity::Measurement, m.id)
                .await?
                .contains(&me),
        });
    }
    let mut formulations = Vec::new();
    let filter = crate::storage::FormulationFilter {
        status: Some(FormulationStatus::Characterized),
        ..Default::default()
    };
    let page = state
        .store
        .search_formulations(&filter, Default::default(), 1, 200)
        .await?;
    for f in page.items {
        formulations.push(Waiting {
            entity: Entity::Formulation,
            id: f.id,
            title: format!("{}: {}", f.code, f.name),
            detail: f.composition,
            own: state
                .store
                .authors_of(Entity::Formulation, f.id)
                .await?
                .contains(&me),
        });
    }
    let mut runs = Vec::new();
    for r in state
        .store
        .list_runs(crate::storage::RunFilter::default())
        .await?
        .into_iter()
        .filter(|r| r.review_state == ReviewState::Recorded)
    {
        runs.push(Waiting {
            entity: Entity::Run,
            id: r.id,
            title: r.name.clone(),
            detail: format!(
                "{}, {}",
                r.kind.label(),
                crate::domain::fields::format_date(r.run_on)
            ),
            own: state
                .store
                .authors_of(Entity::Run, r.id)
                .await?
                .contains(&me),
        });
    }
    Ok(render(ReviewPage {
        measurements,
        formulations,
        runs,
    }))
}
