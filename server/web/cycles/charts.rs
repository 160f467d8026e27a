//! The link's charts as SVG: temperatures, dried layer, sublimation rate, gauges.

use axum::extract::State;
use axum::response::Response;

use super::links::link_of;
use crate::charts::{render_line_chart, LineChart, RefLine, Series, SeriesStyle};
use crate::derive::Assessment;
use crate::web::extract::Path;
use crate::web::{fmt, svg};
use crate::{AppError, AppState};

// ------------------------------------------------------------------ charts

fn series_of(
    a: &Assessment,
    pick: fn(&glasspoint_science::drying::SeriesPoint) -> f64,
) -> Vec<(f64, f64)> {
    a.simulation
        .as_ref()
        .map(|s| s.series.iter().map(|p| (p.time_h, pick(p))).collect())
        .unwrap_or_default()
}

pub(super) async fn temperatures_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let mut hlines = Vec::new();
    if let Some(t) = a.derived.max_product_temp_c() {
        hlines.push(RefLine {
            label: format!("limit {} °C", fmt::num1(t)),
            value: t,
            color: Some(5),
        });
    }
    let chart = LineChart {
        title: format!(
            "{} on {}: temperatures in primary drying",
            a.formulation.code, a.cycle.name
        ),
        x_label: "time (h)".into(),
        y_label: "temperature (°C)".into(),
        series: vec![
            Series {
                name: "shelf".into(),
                points: series_of(&a, |p| p.shelf_temp_c),
                style: SeriesStyle::DashedLine,
                color: Some(0),
            },
            Series {
                name: "sublimation front".into(),
                points: series_of(&a, |p| p.front_temp_c),
                style: SeriesStyle::Line,
                color: Some(1),
            },
            Series {
                name: "vial bottom".into(),
                points: series_of(&a, |p| p.bottom_temp_c),
                style: SeriesStyle::Line,
                color: Some(2),
            },
        ],
        hlines,
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

pub(super) async fn layer_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let chart = LineChart {
        title: format!("{}: dried-layer thickness", a.formulation.code),
        x_label: "time (h)".into(),
        y_label: "dried layer (cm)".into(),
        series: vec![Series {
            name: "dried layer".into(),
            points: series_of(&a, |p| p.dried_layer_cm),
            style: SeriesStyle::Line,
            color: Some(3),
        }],
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

pub(super) async fn rate_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let chart = LineChart {
        title: format!("{}: sublimation rate per vial", a.formulation.code),
        x_label: "time (h)".into(),
        y_label: "sublimation rate (g/h)".into(),
        series: vec![Series {
            name: "sublimation rate".into(),
            points: series_of(&a, |p| p.sublimation_rate_g_h),
            style: SeriesStyle::Line,
            color: Some(4),
        }],
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

/// What a Pirani gauge would read beside the capacitance manometer, and where the two
/// meet: the usual sign that primary drying has ended.
pub(super) async fn gauges_svg(
    State(state): State<AppState>,
    Path((id, link)): Path<(i64, i64)>,
) -> Result<Response, AppError> {
    let a = link_of(&state, id, link).await?;
    let (trace, end) = a.gauge_trace()?;
    let chart = LineChart {
        title: format!(
            "{}: pressure gauges in primary drying (estimated)",
            a.formulation.code
        ),
        x_label: "time (h)".into(),
        y_label: "reading (mTorr)".into(),
        series: vec![
            Series {
                name: "capacitance manometer".into(),
                points: trace
                    .iter()
                    .map(|p| (p.time_h, p.manometer_mtorr))
                    .collect(),
                style: SeriesStyle::Line,
                color: Some(0),
            },
            Series {
                name: "Pirani (nitrogen calibration)".into(),
                points: trace.iter().map(|p| (p.time_h, p.pirani_mtorr)).collect(),
                style: SeriesStyle::Line,
                color: Some(1),
            },
        ],
        vlines: end
            .map(|t| {
                vec![RefLine {
                    label: format!("readings meet: {} h", fmt::num1(t)),
                    value: t,
                    color: Some(2),
                }]
            })
            .unwrap_or_default(),
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}
