//! What a freeze-dryer recorded during a run, read back and fed into the model.
//!
//! - [`series`]: the run's time series (shelf, product probes, gauges, condenser).
//! - [`phases`]: freezing, annealing, primary and secondary drying found in the series.
//! - [`endpoint`]: the end of primary drying from the Pirani against the manometer, and
//!   when each product probe reaches the shelf.
//! - [`excursions`]: product temperatures above a limit, and probes against a prediction.
//! - [`kv`]: the vial heat transfer coefficient from gravimetric tests, and its pressure
//!   dependence fitted.
//! - [`rp`]: the dried-layer resistance from product temperature (the heat and mass
//!   balance of [`crate::drying`] turned around).
//! - [`secondary`]: first-order desorption kinetics from moisture samples.
//! - [`compare`]: a model prediction against what the run did.
//! - [`synthetic`]: runs made by the model, for tests and the demo.
//! - [`topic`]: the calculation topics built on these.

pub mod compare;
pub mod endpoint;
pub mod excursions;
pub mod kv;
pub mod phases;
pub mod rp;
mod saturating;
pub mod secondary;
pub mod series;
pub mod synthetic;
pub mod topic;

pub use compare::{prediction_error, PredictionError};
pub use endpoint::{comparative_pressure, probe_arrivals, PressureEndPoint, ProbeArrival};
pub use excursions::{compare_probe, excursions, Excursion, ProbeComparison};
pub use kv::{
    edge_factor, fit_kv, kv_from_gravimetric, GravimetricInput, GravimetricKv, KvFit, KvPoint,
    KvStandardErrors,
};
pub use phases::{find_phases, Phase, PhaseKind};
pub use rp::{
    fit_rp, rp_from_product_temperature, RpFit, RpInput, RpPoint, RpResult, RpStandardErrors,
};
pub use secondary::{
    secondary_kinetics, MoistureSample, RateAtTemperature, SecondaryInput, SecondaryKinetics,
};
pub use series::{nan_as_null, Probe, ProbePosition, RunSeries};
pub use synthetic::{
    moisture_samples, synthesize_gravimetric_test, synthesize_run, AnnealingSpec, DesorptionSpec,
    FreezingSpec, Noise, ProbeSpec, SyntheticRun, SyntheticRunSpec,
};

use crate::error::{finite, InputError};

/// Linear interpolation of `(xs, ys)` at `x`; `None` outside `xs` or where a neighbour is
/// NaN. `xs` is non-decreasing.
pub(crate) fn interpolate(xs: &[f64], ys: &[f64], x: f64) -> Option<f64> {
    let n = xs.len().min(ys.len());
    let (first, last) = (*xs.first()?, *xs.get(n.checked_sub(1)?)?);
    if !(first..=last).contains(&x) {
        return None;
    }
    let i = xs[..n].partition_point(|&t| t < x);
    if i == 0 {
        return ys.first().copied().filter(|y| !y.is_nan());
    }
    let (x0, x1, y0, y1) = (xs[i - 1], xs[i], ys[i - 1], ys[i]);
    if y0.is_nan() || y1.is_nan() {
        return None;
    }
    let dx = x1 - x0;
    if dx <= 0.0 {
        return Some(y1);
    }
    Some(y0 + (x - x0) / dx * (y1 - y0))
}

/// ∫ y dx by the trapezoid rule over the given points.
pub(crate) fn trapezoid(xs: &[f64], ys: &[f64]) -> f64 {
    xs.windows(2)
        .zip(ys.windows(2))
        .map(|(x, y)| 0.5 * (y[0] + y[1]) * (x[1] - x[0]))
        .sum()
}

/// Check a time axis: at least `min_len` finite, non-decreasing values.
pub(crate) fn check_time_axis(
    field: &str,
    time_h: &[f64],
    min_len: usize,
) -> Result<(), InputError> {
    if time_h.len() < min_len {
        return Err(InputError::new(
            field,
            format!("needs at least {min_len} points (got {})", time_h.len()),
        ));
    }
    for (i, &t) in time_h.iter().enumerate() {
        finite(&format!("{field}[{i}]"), t)?;
        if i > 0 && t < time_h[i - 1] {
            return Err(InputError::new(
                format!("{field}[{i}]"),
                format!(
                    "times must not go backwards ({t} h after {} h)",
                    time_h[i - 1]
                ),
            ));
        }
    }
    Ok(())
}

/// Check that `values` has `len` entries, naming `field`.
pub(crate) fn check_len(
    field: &str,
    values: &[f64],
    len: usize,
    axis: &str,
) -> Result<(), InputError> {
    if values.len() == len {
        Ok(())
    } else {
        Err(InputError::new(
            field,
            format!("has {} values but {axis} has {len}", values.len()),
        ))
    }
}

/// Check that every value is finite, naming the first that is not.
pub(crate) fn check_finite(field: &str, values: &[f64]) -> Result<(), InputError> {
    for (i, &v) in values.iter().enumerate() {
        finite(&format!("{field}[{i}]"), v)?;
    }
    Ok(())
}
