//! A run's traces on one time axis: temperatures (shelf, probes by position, condenser,
//! the prediction and the limit) above, the two pressure gauges below, with the phases and
//! the end of primary drying marked on both.

use axum::extract::State;
use axum::response::Response;
use glasspoint_science::batch::VialClass;
use glasspoint_science::runs::{PhaseKind, ProbePosition, RunSeries};

use super::super::extract::Path;
use super::super::svg;
use crate::charts::{render_line_chart, LineChart, RefLine, Series, SeriesStyle};
use crate::runs::{load_context, RunContext};
use crate::{AppError, AppState};

/// The run's series, or 404 when it has no recorded data yet.
fn recorded(ctx: &RunContext) -> Result<&RunSeries, AppError> {
    ctx.series
        .as_ref()
        .ok_or_else(|| AppError::NotFound(format!("Recorded data of run {}", ctx.run.id)))
}

fn points(time_h: &[f64], v: &[f64]) -> Vec<(f64, f64)> {
    time_h.iter().copied().zip(v.iter().copied()).collect()
}

fn x_range(series: &RunSeries) -> Option<(f64, f64)> {
    match (series.time_h.first(), series.time_h.last()) {
        (Some(a), Some(b)) if b > a => Some((*a, *b)),
        _ => None,
    }
}

/// Phase starts and the end point, as vertical lines.
fn marks(ctx: &RunContext) -> Vec<RefLine> {
    let mut lines = Vec::new();
    if let Some(r) = &ctx.reading {
        for p in &r.phases {
            if p.kind != PhaseKind::Freezing {
                lines.push(RefLine {
                    label: format!("{} starts", p.kind.label()),
                    value: p.start_h,
                    color: None,
                });
            }
        }
        if let Some(m) = &r.measured_end {
            lines.push(RefLine {
                label: "end of primary drying (measured)".into(),
                value: m.end_h,
                color: Some(3),
            });
        }
    }
    if let Some(Ok(p)) = &ctx.prediction {
        lines.push(RefLine {
            label: "last vials dry (predicted)".into(),
            value: p.last_dry_h(),
            color: Some(4),
        });
    }
    lines
}

fn probe_color(position: ProbePosition) -> usize {
    match position {
        ProbePosition::Centre => 1,
        ProbePosition::Edge => 2,
        ProbePosition::Front => 5,
        ProbePosition::Back => 6,
    }
}

pub async fn temperatures(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let ctx = load_context(&state.store, id, state.config.margin_c).await?;
    let series = recorded(&ctx)?;
    let t = &series.time_h;
    let mut lines = vec![Series {
        name: "shelf".into(),
        points: points(t, &series.shelf_c),
        style: SeriesStyle::Line,
        color: Some(0),
    }];
    for p in &series.probes {
        lines.push(Series {
            name: format!("{} ({})", p.label, p.position.label().to_lowercase()),
            points: points(t, &p.temp_c),
            style: SeriesStyle::Line,
            color: Some(probe_color(p.position)),
        });
    }
    if let Some(c) = &series.condenser_c {
        lines.push(Series {
            name: "condenser".into(),
            points: points(t, c),
            style: SeriesStyle::Line,
            color: Some(7),
        });
    }
    if let Some(Ok(p)) = &ctx.prediction {
        for (class, color, name) in [
            (VialClass::Centre, 1, "predicted bottom, centre vials"),
            (VialClass::Edge, 2, "predicted bottom, edge vials"),
        ] {
            lines.push(Series {
                name: name.into(),
                points: p.bottom_series(class),
                style: SeriesStyle::DashedLine,
                color: Some(color),
            });
        }
    }
    if let Some(r) = &ctx.reading {
        let above: Vec<(f64, f64)> = r
            .excursions
            .iter()
            .map(|e| ((e.start_h + e.end_h) / 2.0, e.peak_c))
            .collect();
        if !above.is_empty() {
            lines.push(Series {
                name: "excursion peak".into(),
                points: above,
                style: SeriesStyle::Points,
                color: Some(3),
            });
        }
    }
    let hlines = ctx
        .reading
        .as_ref()
        .and_then(|r| r.limit_c)
        .map(|l| {
            vec![RefLine {
                label: format!("limit {l:.1} °C"),
                value: l,
                color: Some(3),
            }]
        })
        .unwrap_or_default();
    let chart = LineChart {
        title: format!("{}: temperatures", ctx.run.name),
        x_label: "Time since the record starts (h)".into(),
        y_label: "Temperature (°C)".into(),
        series: lines,
        hlines,
        vlines: marks(&ctx),
        x_range: x_range(series),
        width: 900,
        height: 440,
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

pub async fn pressures(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let ctx = load_context(&state.store, id, state.config.margin_c).await?;
    let series = recorded(&ctx)?;
    let t = &series.time_h;
    let mut lines = Vec::new();
    if let Some(m) = &series.manometer_mtorr {
        lines.push(Series {
            name: "capacitance manometer".into(),
            points: points(t, m),
            style: SeriesStyle::Line,
            color: Some(0),
        });
    }
    if let Some(p) = &series.pirani_mtorr {
        lines.push(Series {
            name: "Pirani".into(),
            points: points(t, p),
            style: SeriesStyle::Line,
            color: Some(4),
        });
    }
    let mut vlines = marks(&ctx);
    if let Some(Ok(e)) = ctx.reading.as_ref().and_then(|r| r.end_point.as_ref()) {
        vlines.push(RefLine {
            label: "Pirani fall: onset".into(),
            value: e.onset_h,
            color: Some(5),
        });
        vlines.push(RefLine {
            label: "midpoint".into(),
            value: e.midpoint_h,
            color: Some(5),
        });
    }
    // Pressures span vacuum to atmosphere: show the drying range, where the gauges part.
    let top = series
        .pirani_mtorr
        .iter()
        .chain(series.manometer_mtorr.iter())
        .flat_map(|v| {
            let primary = ctx
                .reading
                .as_ref()
                .and_then(|r| r.phase(PhaseKind::Primary))
                .map(|p| (p.start_h, p.end_h));
            v.iter()
                .zip(t)
                .filter(move |(_, x)| primary.is_none_or(|(a, b)| **x >= a && **x <= b))
                .map(|(y, _)| *y)
                .collect::<Vec<_>>()
        })
        .filter(|v| v.is_finite())
        .fold(0.0_f64, f64::max);
    let chart = LineChart {
        title: format!("{}: chamber pressure", ctx.run.name),
        x_label: "Time since the record starts (h)".into(),
        y_label: "Pressure (mTorr)".into(),
        series: lines,
        vlines,
        x_range: x_range(series),
        y_range: (top > 0.0).then_some((0.0, top * 1.3)),
        width: 900,
        height: 300,
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}
