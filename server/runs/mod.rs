//! A run read against what the team knows: its phases, the end of primary drying, probe
//! temperatures against the formulation's limit and the prediction, and what it yields
//! for the model (Kv, the edge factor, Rp, secondary-drying kinetics).
//!
//! Pure reading of stored records with the science crate; the pages, the API and the
//! demo all use it, so they show the same figures.

mod calibration;
mod context;
pub mod demo;

pub use calibration::{
    gravimetric, kv_series, rp_of_run, rp_series, GravimetricRow, KvSeries, KvSeriesRow, RpSeries,
};
pub use context::{load_context, load_reading, PredictionSummary, RunContext};

use glasspoint_science::runs::{
    comparative_pressure, excursions, find_phases, probe_arrivals, secondary_kinetics, Excursion,
    MoistureSample, Phase, PhaseKind, PressureEndPoint, ProbeArrival, ProbePosition, RunSeries,
    SecondaryInput, SecondaryKinetics,
};

use crate::domain::runs::StoredSeries;

/// Shown wherever a run's reading is.
pub const CAUTION: &str = "What is read from a run — its end point, excursions, Kv, Rp and \
    drying kinetics — supports the judgement of qualified people and the lab's quality \
    system; check the readings against the traces, and confirm adopted values on the dryer \
    before relying on them.";

/// A probe counts as having reached the shelf within this many °C (common practice, no
/// source).
pub const ARRIVAL_TOLERANCE_C: f64 = 2.0;

/// The stored series as the science crate reads it (a missing reading is NaN there).
pub fn science_series(s: &StoredSeries) -> RunSeries {
    let col = |v: &[Option<f64>]| v.iter().map(|x| x.unwrap_or(f64::NAN)).collect::<Vec<_>>();
    RunSeries {
        time_h: s.time_h.clone(),
        shelf_c: col(&s.shelf_c),
        probes: s
            .probes
            .iter()
            .map(|p| glasspoint_science::runs::Probe {
                label: p.label.clone(),
                position: position(&p.position),
                temp_c: col(&p.temp_c),
            })
            .collect(),
        manometer_mtorr: s.manometer_mtorr.as_deref().map(col),
        pirani_mtorr: s.pirani_mtorr.as_deref().map(col),
        condenser_c: s.condenser_c.as_deref().map(col),
    }
}

fn position(text: &str) -> ProbePosition {
    match text.to_ascii_lowercase().as_str() {
        "edge" => ProbePosition::Edge,
        "front" => ProbePosition::Front,
        "back" => ProbePosition::Back,
        _ => ProbePosition::Centre,
    }
}

/// The end of primary drying as measured, and what it was read from.
#[derive(Debug, Clone)]
pub struct MeasuredEnd {
    pub end_h: f64,
    pub basis: String,
}

/// What the recorded data say, before any prediction.
pub struct Reading {
    pub phases: Vec<Phase>,
    pub primary_start_h: Option<f64>,
    /// From the Pirani against the manometer, when both were recorded.
    pub end_point: Option<Result<PressureEndPoint, String>>,
    pub arrivals: Vec<ProbeArrival>,
    pub measured_end: Option<MeasuredEnd>,
    pub limit_c: Option<f64>,
    pub excursions: Vec<Excursion>,
    pub notes: Vec<String>,
}

impl Reading {
    pub fn phase(&self, kind: PhaseKind) -> Option<&Phase> {
        self.phases.iter().find(|p| p.kind == kind)
    }
}

/// Reads a run's series: phases, the end of primary drying from the gauges and the probes,
/// and every probe excursion above `limit_c` during primary drying.
pub fn read(series: &RunSeries, limit_c: Option<f64>) -> Reading {
    let mut notes = Vec::new();
    // The phases from the shelf and the vacuum alone first: the gauges' fall is read only
    // within primary drying, so the pump-down from atmosphere is not taken for it.
    let rough = find_phases(series, None);
    let rough_primary = rough.iter().find(|p| p.kind == PhaseKind::Primary);
    let primary_start_h = rough_primary.map(|p| p.start_h);
    let last_h = series.time_h.last().copied().unwrap_or(0.0);
    let window = match primary_start_h {
        Some(start) => series.between(start, last_h),
        None => series.clone(),
    };
    let end_point = match (&window.pirani_mtorr, &window.manometer_mtorr) {
        (Some(p), Some(m)) => Some(
            comparative_pressure(&window.time_h, p, m)
                .map_err(|e| format!("{}: {}", e.field, e.message)),
        ),
        _ => {
            notes.push(
                "The export has no Pirani and manometer pair, so the end of primary drying is \
                 read from the probes only."
                    .to_string(),
            );
            None
        }
    };
    let gauge_end = end_point
        .as_ref()
        .and_then(|r| r.as_ref().ok())
        .map(|e| e.end_h);
    // A probe is read against the shelf within primary drying only (up to the shelf's
    // ramp to secondary drying, on which it trails the shelf).
    let primary_until = rough_primary.map_or(last_h, |p| p.end_h);
    let arrivals = probe_arrivals(
        &series.between(primary_start_h.unwrap_or(0.0), primary_until),
        primary_start_h.unwrap_or(0.0),
        ARRIVAL_TOLERANCE_C,
    );
    let last_arrival = arrivals
        .iter()
        .filter_map(|a| a.time_h)
        .fold(None, |acc: Option<f64>, t| {
            Some(acc.map_or(t, |a| a.max(t)))
        });
    let measured_end = match (gauge_end, last_arrival) {
        (Some(end_h), _) => Some(MeasuredEnd {
            end_h,
            basis: "Pirani meets the manometer".into(),
        }),
        (None, Some(end_h)) => Some(MeasuredEnd {
            end_h,
            basis: format!("last product probe within {ARRIVAL_TOLERANCE_C} °C of the shelf"),
        }),
        (None, None) => None,
    };
    // The phases again, primary drying ending where it was measured to end.
    let phases = match &measured_end {
        Some(m) => find_phases(series, Some(m.end_h)),
        None => rough,
    };
    let primary = phases.iter().find(|p| p.kind == PhaseKind::Primary);
    let excursions = match (limit_c, primary) {
        (Some(limit), Some(primary)) => {
            notes.push(
                "Each probe is read against the limit while its vial holds ice: from the start of \
                 primary drying until the probe reaches the shelf."
                    .into(),
            );
            probe_excursions(series, &arrivals, limit, primary)
        }
        (None, _) => {
            notes.push(
                "The formulation has no maximum product temperature yet, so excursions are not \
                 read."
                    .into(),
            );
            Vec::new()
        }
        (Some(_), None) => {
            notes.push(
                "No primary drying was found in the record, so excursions are not read.".into(),
            );
            Vec::new()
        }
    };
    Reading {
        phases,
        primary_start_h,
        end_point,
        arrivals,
        measured_end,
        limit_c,
        excursions,
        notes,
    }
}

/// Excursions of each probe above `limit_c` while its vial holds ice.
fn probe_excursions(
    series: &RunSeries,
    arrivals: &[ProbeArrival],
    limit_c: f64,
    primary: &Phase,
) -> Vec<Excursion> {
    let mut out = Vec::new();
    for probe in &series.probes {
        let until = arrivals
            .iter()
            .find(|a| a.label == probe.label)
            .and_then(|a| a.time_h)
            .unwrap_or(primary.end_h)
            .min(primary.end_h);
        let one = RunSeries {
            probes: vec![probe.clone()],
            ..series.clone()
        };
        out.extend(excursions(&one, limit_c, primary.start_h, until));
    }
    out.sort_by(|a, b| a.start_h.total_cmp(&b.start_h));
    out
}

/// First-order secondary-drying kinetics from a run's moisture samples, with the hold to
/// `target` (a water fraction) at `at_shelf_c`.
pub fn secondary(
    samples: &[crate::domain::runs::MoistureEntry],
    target: Option<f64>,
    at_shelf_c: Option<f64>,
) -> Option<Result<SecondaryKinetics, String>> {
    if samples.is_empty() {
        return None;
    }
    let input = SecondaryInput {
        samples: samples
            .iter()
            .map(|m| MoistureSample {
                time_h: m.time_h,
                shelf_temp_c: m.shelf_temp_c,
                water_fraction: m.water_percent / 100.0,
            })
            .collect(),
        target_water_fraction: target,
        at_shelf_temp_c: at_shelf_c,
    };
    Some(secondary_kinetics(&input).map_err(|e| format!("{}: {}", e.field, e.message)))
}

/// Storage temperature the moisture target is worked out for, °C (room temperature;
/// common practice, no source).
pub const STORAGE_TEMP_C: f64 = 25.0;
/// How far the cake Tg should stay above storage, °C (Hancock, Shamblin & Zografi 1995,
/// from memory: at least 20 °C).
pub const STORAGE_MARGIN_C: f64 = 20.0;

/// The residual moisture a formulation's cake may hold: from the storage calculation
/// (cake Tg against moisture, Gordon–Taylor with water) for its largest amorphous
/// component whose library Tg and k are known. `None` with the reason when it cannot be
/// worked out.
pub fn moisture_target(
    f: &crate::domain::Formulation,
    materials: &[crate::domain::Material],
) -> Result<(f64, String), String> {
    use crate::domain::{FreezingBehaviour, PropertyKind};
    use glasspoint_science::cake::{cake_moisture_limit, CakeMoistureLimitInput};
    let main = f
        .components
        .iter()
        .filter(|c| c.freezing_behaviour != FreezingBehaviour::Crystallizes)
        .filter_map(|c| {
            let m = materials.iter().find(|m| m.id == c.material_id)?;
            Some((
                c,
                m.value(PropertyKind::Tg)?,
                m.value(PropertyKind::GordonTaylorK)?,
            ))
        })
        .max_by(|a, b| a.0.solid_fraction.total_cmp(&b.0.solid_fraction));
    let Some((c, tg, k)) = main else {
        return Err(
            "no amorphous component has a library Tg and Gordon–Taylor k, so no moisture \
             target follows from storage; type one"
                .into(),
        );
    };
    let limit = cake_moisture_limit(&CakeMoistureLimitInput {
        solids_tg_c: tg,
        k,
        storage_temp_c: STORAGE_TEMP_C,
        margin_c: STORAGE_MARGIN_C,
        water_tg_c: None,
    })
    .map_err(|e| format!("{}: {}", e.field, e.message))?;
    Ok((
        limit.max_water_fraction,
        format!(
            "{:.2} % w/w keeps the cake Tg of {} ({:.0} °C dry, k {}) {STORAGE_MARGIN_C:.0} °C \
             above storage at {STORAGE_TEMP_C:.0} °C",
            limit.max_water_percent, c.material_name, tg, k
        ),
    ))
}
