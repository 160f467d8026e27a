//! The design space of a link: shelf temperature × chamber pressure.

use askama::Template;
use axum::extract::State;
use axum::response::Response;
use glasspoint_science::design_space::{design_space, BoundaryState, CellState, DesignSpaceInput};
use serde::Deserialize;

use super::caution;
use super::links::link_of;
use crate::charts::{render_heatmap, HeatmapChart};
use crate::derive::Assessment;
use crate::domain::FieldErrors;
use crate::web::extract::{Path, Query};
use crate::web::formulations::into_field_errors;
use crate::web::{fmt, render, svg};
use crate::{AppError, AppState};

// ------------------------------------------------------------------ design space

#[derive(Deserialize, Default)]
pub(super) struct GridQuery {
    #[serde(default)]
    shelf_from: String,
    #[serde(default)]
    shelf_to: String,
    #[serde(default)]
    pressure_from: String,
    #[serde(default)]
    pressure_to: String,
    #[serde(default)]
    steps: String,
}

/// The grid the user asked for, or the default −40…+20 °C × 50…300 mTorr in 25 steps.
struct Grid {
    shelf: (f64, f64),
    pressure: (f64, f64),
    steps: usize,
}

impl GridQuery {
    fn parse(&self) -> Result<Grid, FieldErrors> {
        let mut e = FieldErrors::default();
        let mut num = |field: &str, raw: &str, default: f64| {
            crate::domain::fields::optional_number(&mut e, field, raw).unwrap_or(default)
        };
        let shelf = (
            num("shelf_from", &self.shelf_from, -40.0),
            num("shelf_to", &self.shelf_to, 20.0),
        );
        let pressure = (
            num("pressure_from", &self.pressure_from, 50.0),
            num("pressure_to", &self.pressure_to, 300.0),
        );
        let steps = num("steps", &self.steps, 25.0);
        if shelf.0 >= shelf.1 {
            e.add("shelf_to", "must be above the lowest shelf temperature");
        }
        if !(-80.0..=80.0).contains(&shelf.0) || !(-80.0..=80.0).contains(&shelf.1) {
            e.add(
                "shelf_from",
                "shelf temperatures must lie between −80 and 80 °C",
            );
        }
        if pressure.0 >= pressure.1 {
            e.add("pressure_to", "must be above the lowest pressure");
        }
        if pressure.0 <= 0.0 || pressure.1 > 2000.0 {
            e.add(
                "pressure_from",
                "pressures must lie between 0 and 2000 mTorr",
            );
        }
        if !(2.0..=60.0).contains(&steps) || steps.fract() != 0.0 {
            e.add("steps", "must be a whole number from 2 to 60");
        }
        e.into_result(Grid {
            shelf,
            pressure,
            steps: steps as usize,
        })
    }
}

fn spaced(range: (f64, f64), n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| range.0 + (range.1 - range.0) * i as f64 / (n - 1) as f64)
        .collect()
}

fn run_grid(
    a: &Assessment,
    grid: &Grid,
) -> Result<glasspoint_science::design_space::DesignSpace, AppError> {
    let limit = a.derived.max_product_temp_c().ok_or_else(|| {
        AppError::input(
            "max_product_temp_c",
            "no maximum product temperature is derived for this formulation yet",
        )
    })?;
    Ok(design_space(&DesignSpaceInput {
        base: a.base.clone(),
        shelf_temps_c: spaced(grid.shelf, grid.steps),
        pressures_mtorr: spaced(grid.pressure, grid.steps),
        max_product_temp_c: limit,
        start_shelf_temp_c: None,
        ramp_c_per_min: None,
        sublimation_ceiling_kg_h_m2: a.cycle.sublimation_ceiling_kg_h_m2,
        sublimation_ceiling_g_h_per_vial: None,
    })?)
}

#[derive(Template)]
#[template(path = "cycles/design_space.html")]
struct DesignSpacePage {
    a: Assessment,
    q_shelf_from: String,
    q_shelf_to: String,
    q_pressure_from: String,
    q_pressure_to: String,
    q_steps: String,
    errors: FieldErrors,
    svg_query: String,
    boundary: Vec<(String, String, String)>,
    caution: &'static str,
}

pub(super) async fn design_space_page(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
    Query(q): Query<GridQuery>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let (errors, boundary) = match q.parse() {
        Ok(grid) => match run_grid(&a, &grid) {
            Ok(space) => (FieldErrors::default(), boundary_rows(&space)),
            Err(e) => (into_field_errors(e)?, Vec::new()),
        },
        Err(e) => (e, Vec::new()),
    };
    let svg_query = serde_urlencoded::to_string([
        ("shelf_from", &q.shelf_from),
        ("shelf_to", &q.shelf_to),
        ("pressure_from", &q.pressure_from),
        ("pressure_to", &q.pressure_to),
        ("steps", &q.steps),
    ])
    .unwrap_or_default();
    Ok(render(DesignSpacePage {
        q_shelf_from: q.shelf_from,
        q_shelf_to: q.shelf_to,
        q_pressure_from: q.pressure_from,
        q_pressure_to: q.pressure_to,
        q_steps: q.steps,
        errors,
        svg_query,
        boundary,
        a,
        caution: caution(),
    }))
}

fn boundary_rows(
    space: &glasspoint_science::design_space::DesignSpace,
) -> Vec<(String, String, String)> {
    space
        .boundary
        .iter()
        .map(|b| {
            let what = match b.state {
                BoundaryState::Crosses => "peak reaches the limit here",
                BoundaryState::BelowLimitAcrossRange => {
                    "within the limit across the whole shelf range"
                }
                BoundaryState::AboveLimitAcrossRange => "above the limit across the shelf range",
                BoundaryState::NoSublimation => "nothing sublimes in this shelf range",
                BoundaryState::SublimesOnlyAboveLimit => {
                    "ice sublimes only with the front above the limit"
                }
            };
            (
                fmt::trim(b.chamber_pressure_mtorr.round()),
                b.shelf_temp_c
                    .map(|t| format!("{} °C", fmt::num1(t)))
                    .unwrap_or_else(|| "—".into()),
                format!(
                    "{what}{}",
                    b.drying_time_h
                        .map(|h| format!("; {} h", fmt::num1(h)))
                        .unwrap_or_default()
                ),
            )
        })
        .collect()
}

pub(super) async fn design_space_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
    Query(q): Query<GridQuery>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let grid = q.parse().map_err(AppError::Fields)?;
    let space = run_grid(&a, &grid)?;
    let shelves = spaced(grid.shelf, grid.steps);
    let pressures = spaced(grid.pressure, grid.steps);
    // Cells run pressure by pressure: row-major in pressure (y), then shelf (x).
    let values = space
        .cells
        .iter()
        .map(|c| {
            if c.state == CellState::Dries {
                c.peak_front_temp_c
            } else {
                None
            }
        })
        .collect();
    let ok_mask = space
        .cells
        .iter()
        .map(|c| c.within_limit && c.above_sublimation_ceiling != Some(true))
        .collect();
    let boundary = space
        .boundary
        .iter()
        .filter(|b| b.state == BoundaryState::Crosses)
        .filter_map(|b| b.shelf_temp_c.map(|t| (t, b.chamber_pressure_mtorr)))
        .collect();
    let p = &a.cycle.program.primary;
    let chart = HeatmapChart {
        title: format!(
            "{} in {}: design space",
            a.formulation.code, a.container.name
        ),
        x_label: "shelf temperature (°C)".into(),
        y_label: "chamber pressure (mTorr)".into(),
        x_values: shelves,
        y_values: pressures,
        values,
        value_label: "peak front temperature (°C)".into(),
        boundary,
        boundary_label: format!("peak = limit {} °C", fmt::num1(space.max_product_temp_c)),
        marker: Some((
            p.shelf_temp_c,
            p.chamber_pressure_mtorr,
            a.cycle.name.clone(),
        )),
        ok_mask,
        mask_label: "above the limit".into(),
        ..HeatmapChart::default()
    };
    Ok(svg(render_heatmap(&chart)))
}
