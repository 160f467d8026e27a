//! A model prediction against what the run did: the end of primary drying and each probe's
//! temperature during it.

use serde::{Deserialize, Serialize};

use super::excursions::{compare_probe, ProbeComparison};
use super::series::{ProbePosition, RunSeries};
use crate::drying::SeriesPoint;

/// How far a prediction was from the run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PredictionError {
    /// When the model's ice is gone, in the run's time, h.
    pub predicted_end_h: f64,
    pub measured_end_h: f64,
    /// Predicted minus measured, h (positive: the model was slow).
    pub end_error_h: f64,
    /// Each probe against the predicted bottom temperature of its kind of vial.
    pub probes: Vec<ProbeComparison>,
}

/// Compare model recordings ([`crate::drying::run_recording`], time from the start of
/// primary drying) with `series`, whose primary drying started at `primary_start_h` and
/// ended at `measured_end_h` (from [`super::comparative_pressure`] or the phases).
///
/// Edge probes are compared with `edge` when given, every other probe with `centre`, over
/// primary drying up to the earlier of the two ends (after its vial's predicted end a
/// probe reads the shelf, which the model does not follow). `None` when `centre` is empty.
pub fn prediction_error(
    series: &RunSeries,
    primary_start_h: f64,
    measured_end_h: f64,
    centre: &[SeriesPoint],
    edge: Option<&[SeriesPoint]>,
) -> Option<PredictionError> {
    let centre_end = centre.last()?.time_h;
    let predicted_end_h = primary_start_h + centre_end;
    let run_times = |points: &[SeriesPoint]| -> (Vec<f64>, Vec<f64>) {
        points
            .iter()
            .map(|p| (primary_start_h + p.time_h, p.bottom_temp_c))
            .unzip()
    };
    let centre_series = run_times(centre);
    let edge_series = edge.filter(|e| !e.is_empty()).map(run_times);
    let probes = series
        .probes
        .iter()
        .filter_map(|probe| {
            let (times, temps) = match (probe.position, &edge_series) {
                (ProbePosition::Edge, Some(e)) => e,
                _ => &centre_series,
            };
            let vial_end = times.last().copied().unwrap_or(predicted_end_h);
            compare_probe(
                probe,
                &series.time_h,
                times,
                temps,
                primary_start_h,
                measured_end_h.min(vial_end),
            )
        })
        .collect();
    Some(PredictionError {
        predicted_end_h,
        measured_end_h,
        end_error_h: predicted_end_h - measured_end_h,
        probes,
    })
}
