//! What runs yield for the model: Kv of each gravimetric test (centre and edge vials),
//! the fit of Kv over pressure across a container's tests, the dryer's edge factor, and
//! the dried-layer resistance from a run's product temperature.

use glasspoint_science::runs::{
    edge_factor, fit_kv, fit_rp, kv_from_gravimetric, rp_from_product_temperature,
    GravimetricInput, GravimetricKv, KvFit, KvPoint, ProbePosition, RpFit, RpInput, RpPoint,
    RpResult, RunSeries,
};

use super::context::RunContext;
use super::{read, science_series};
use crate::domain::runs::{RunKind, VialLocation};
use crate::domain::Container;
use crate::error::AppError;
use crate::storage::{RunFilter, Store};

/// One location's gravimetric Kv in one run.
#[derive(Debug, Clone)]
pub struct GravimetricRow {
    pub location: VialLocation,
    pub vials: usize,
    pub mean_loss_g: f64,
    /// Which probes gave the bottom temperature.
    pub probes: String,
    pub kv: Result<GravimetricKv, String>,
}

/// One gravimetric run of a container's series.
#[derive(Debug, Clone)]
pub struct KvSeriesRow {
    pub run_id: i64,
    pub run_name: String,
    pub dryer_id: Option<i64>,
    pub pressure_mtorr: f64,
    pub rows: Vec<GravimetricRow>,
}

impl KvSeriesRow {
    pub fn kv(&self, location: VialLocation) -> Option<f64> {
        self.rows
            .iter()
            .find(|r| r.location == location)
            .and_then(|r| r.kv.as_ref().ok())
            .map(|k| k.kv_w_m2k)
    }
}

/// A container's gravimetric tests and what they fit to.
pub struct KvSeries {
    pub rows: Vec<KvSeriesRow>,
    pub fit: Option<Result<KvFit, String>>,
    /// Edge vials' Kv over centre vials' at the pressures both were weighed, for
    /// `dryer_id`'s tests.
    pub edge_factor: Option<Result<f64, String>>,
    pub dryer_id: Option<i64>,
}

impl KvSeries {
    pub fn run_ids(&self) -> Vec<i64> {
        self.rows.iter().map(|r| r.run_id).collect()
    }
}

fn words(e: glasspoint_science::InputError) -> String {
    format!("{}: {}", e.field, e.message)
}

/// The median of the finite values of `v` between `from` and `until` hours.
fn median_in(time_h: &[f64], v: &[f64], from: f64, until: f64) -> Option<f64> {
    let mut xs: Vec<f64> = time_h
        .iter()
        .zip(v)
        .filter(|(t, x)| **t >= from && **t <= until && x.is_finite())
        .map(|(_, x)| *x)
        .collect();
    if xs.is_empty() {
        return None;
    }
    xs.sort_by(f64::total_cmp);
    Some(xs[xs.len() / 2])
}

/// The mean of the finite readings of the probes at `positions`, point by point.
fn mean_probe(series: &RunSeries, positions: &[ProbePosition]) -> (Vec<f64>, Vec<String>) {
    let probes: Vec<_> = series
        .probes
        .iter()
        .filter(|p| positions.contains(&p.position))
        .collect();
    let names = probes.iter().map(|p| p.label.clone()).collect();
    let mean = (0..series.time_h.len())
        .map(|i| {
            let vals: Vec<f64> = probes
                .iter()
                .filter_map(|p| p.temp_c.get(i).copied())
                .filter(|v| v.is_finite())
                .collect();
            if vals.is_empty() {
                f64::NAN
            } else {
                vals.iter().sum::<f64>() / vals.len() as f64
            }
        })
        .collect();
    (mean, names)
}

/// Gravimetric Kv of one run, per vial location, and the pressure it was measured at.
pub fn gravimetric(
    run: &crate::domain::runs::Run,
    series: &RunSeries,
    container: &Container,
    cycle_pressure_mtorr: f64,
) -> (f64, Vec<GravimetricRow>) {
    let reading = read(series, None);
    let start = run.test_start_h.or(reading.primary_start_h).unwrap_or(0.0);
    let end = run
        .test_end_h
        .or_else(|| series.time_h.last().copied())
        .unwrap_or(0.0);
    let pressure = series
        .manometer_mtorr
        .as_deref()
        .and_then(|m| median_in(&series.time_h, m, start, end))
        .or(run.chamber_pressure_mtorr)
        .unwrap_or(cycle_pressure_mtorr);
    let mut rows = Vec::new();
    for location in [VialLocation::Centre, VialLocation::Edge] {
        let losses: Vec<f64> = run
            .weights
            .iter()
            .filter(|w| w.location == location)
            .map(|w| w.loss_g())
            .collect();
        if losses.is_empty() {
            continue;
        }
        let mean_loss = losses.iter().sum::<f64>() / losses.len() as f64;
        let wanted: &[ProbePosition] = match location {
            VialLocation::Centre => &[ProbePosition::Centre],
            VialLocation::Edge => &[
                ProbePosition::Edge,
                ProbePosition::Front,
                ProbePosition::Back,
            ],
        };
        let (bottom, names) = mean_probe(series, wanted);
        let kv = if names.is_empty() {
            Err(format!(
                "no product probe stood in a {} vial, so its bottom temperature is unknown",
                location.code()
            ))
        } else {
            let pick: Vec<usize> = (0..series.time_h.len())
                .filter(|&i| {
                    let t = series.time_h[i];
                    t >= start
                        && t <= end
                        && bottom[i].is_finite()
                        && series.shelf_c.get(i).is_some_and(|s| s.is_finite())
                })
                .collect();
            let input = GravimetricInput {
                time_h: pick.iter().map(|&i| series.time_h[i]).collect(),
                shelf_temp_c: pick.iter().map(|&i| series.shelf_c[i]).collect(),
                bottom_temp_c: pick.iter().map(|&i| bottom[i]).collect(),
                mass_loss_g: mean_loss,
                outer_area_cm2: container.outer_area_cm2,
                sublimation_enthalpy_j_g: None,
            };
            kv_from_gravimetric(&input).map_err(words)
        };
        rows.push(GravimetricRow {
            location,
            vials: losses.len(),
            mean_loss_g: mean_loss,
            probes: names.join(", "),
            kv,
        });
    }
    (pressure, rows)
}

/// Every gravimetric test of a container, and the Kv fit over pressure; the edge factor
/// from the tests run in `dryer_id`.
pub async fn kv_series(
    store: &Store,
    container: &Container,
    dryer_id: Option<i64>,
) -> Result<KvSeries, AppError> {
    let runs = store
        .list_runs(RunFilter {
            container_id: Some(container.id),
            kind: Some(RunKind::Gravimetric),
            ..Default::default()
        })
        .await?;
    let mut rows = Vec::new();
    // A rejected test is left out, as rejected results are everywhere.
    for run in runs
        .into_iter()
        .filter(|r| r.review_state != crate::domain::ReviewState::Rejected)
    {
        let Some(stored) = store.run_series(run.id).await? else {
            continue;
        };
        if run.weights.is_empty() {
            continue;
        }
        let cycle = store.get_cycle(run.cycle_id).await?;
        let series = science_series(&stored);
        let (pressure, grav) = gravimetric(
            &run,
            &series,
            container,
            cycle.program.primary.chamber_pressure_mtorr,
        );
        rows.push(KvSeriesRow {
            run_id: run.id,
            run_name: run.name.clone(),
            dryer_id: run.dryer_id,
            pressure_mtorr: pressure,
            rows: grav,
        });
    }
    rows.sort_by(|a, b| a.pressure_mtorr.total_cmp(&b.pressure_mtorr));
    let points = |loc: VialLocation, only_dryer: Option<i64>| -> Vec<KvPoint> {
        rows.iter()
            .filter(|r| only_dryer.is_none() || r.dryer_id == only_dryer)
            .filter_map(|r| {
                r.kv(loc).map(|kv| KvPoint {
                    pressure_mtorr: r.pressure_mtorr,
                    kv_w_m2k: kv,
                })
            })
            .collect()
    };
    let centre = points(VialLocation::Centre, None);
    let fit = (!centre.is_empty()).then(|| fit_kv(&centre).map_err(words));
    let edge_factor = dryer_id.and_then(|d| {
        let (c, e) = (
            points(VialLocation::Centre, Some(d)),
            points(VialLocation::Edge, Some(d)),
        );
        (!c.is_empty() && !e.is_empty()).then(|| edge_factor(&c, &e).map_err(words))
    });
    Ok(KvSeries {
        rows,
        fit,
        edge_factor,
        dryer_id,
    })
}

/// The dried-layer resistance of a formulation from every cycle run probing it (each run's
/// points with its own container's Kv, fill and pressure), fitted together.
pub struct RpSeries {
    /// Each run with its own reading: (run id, name, points or why none).
    pub runs: Vec<(i64, String, Result<RpResult, String>)>,
    pub fit: Option<Result<RpFit, String>>,
}

impl RpSeries {
    /// The runs whose points the fit rests on.
    pub fn run_ids(&self) -> Vec<i64> {
        self.runs
            .iter()
            .filter(|(_, _, r)| r.is_ok())
            .map(|(id, _, _)| *id)
            .collect()
    }

    pub fn point_count(&self) -> usize {
        self.runs
            .iter()
            .filter_map(|(_, _, r)| r.as_ref().ok())
            .map(|r| r.points.len())
            .sum()
    }
}

pub async fn rp_series(
    store: &Store,
    formulation_id: i64,
    margin_c: f64,
) -> Result<RpSeries, AppError> {
    let runs = store
        .list_runs(RunFilter {
            formulation_id: Some(formulation_id),
            kind: Some(RunKind::Development),
            ..Default::default()
        })
        .await?;
    let mut out = Vec::new();
    for run in runs.into_iter().filter(|r| {
        r.has_data()
            && r.probed_formulation_id == Some(formulation_id)
            && r.review_state != crate::domain::ReviewState::Rejected
    }) {
        let ctx = super::context::load_reading(store, run.id, margin_c).await?;
        if let Some(rp) = rp_of_run(&ctx) {
            out.push((run.id, run.name, rp));
        }
    }
    let points: Vec<RpPoint> = out
        .iter()
        .filter_map(|(_, _, r)| r.as_ref().ok())
        .flat_map(|r| r.points.iter().copied())
        .collect();
    let fit = (!points.is_empty()).then(|| fit_rp(&points).map_err(words));
    Ok(RpSeries { runs: out, fit })
}

/// The dried-layer resistance from a run's centre probes during primary drying, with the
/// container's current Kv.
pub fn rp_of_run(ctx: &RunContext) -> Option<Result<RpResult, String>> {
    let (series, reading, base) = (
        ctx.series.as_ref()?,
        ctx.reading.as_ref()?,
        ctx.base.as_ref()?,
    );
    let (bottom, names) = mean_probe(series, &[ProbePosition::Centre]);
    if names.is_empty() {
        return Some(Err(
            "no product probe stood in a centre vial, so Rp cannot be read from this run".into(),
        ));
    }
    let Some(start) = reading.primary_start_h else {
        return Some(Err("no primary drying was found in the record".into()));
    };
    // Up to the first centre probe reaching the shelf: after that its vial has no ice.
    let until = reading
        .arrivals
        .iter()
        .filter(|a| a.position == ProbePosition::Centre)
        .filter_map(|a| a.time_h)
        .fold(f64::INFINITY, f64::min)
        .min(
            reading
                .measured_end
                .as_ref()
                .map_or(f64::INFINITY, |m| m.end_h),
        );
    let pick: Vec<usize> = (0..series.time_h.len())
        .filter(|&i| {
            let t = series.time_h[i];
            t >= start
                && t <= until
                && bottom[i].is_finite()
                && series.shelf_c.get(i).is_some_and(|s| s.is_finite())
        })
        .collect();
    let input = RpInput {
        time_h: pick.iter().map(|&i| series.time_h[i] - start).collect(),
        shelf_temp_c: pick.iter().map(|&i| series.shelf_c[i]).collect(),
        bottom_temp_c: pick.iter().map(|&i| bottom[i]).collect(),
        chamber_pressure_mtorr: ctx.pressure_mtorr,
        fill_volume_ml: base.fill_volume_ml,
        solids_mass_fraction: base.solids_mass_fraction,
        vial: base.vial,
        solution_density_g_ml: base.solution_density_g_ml,
        unfrozen_water_g_per_g_solids: base.unfrozen_water_g_per_g_solids,
    };
    Some(rp_from_product_temperature(&input).map_err(words))
}
