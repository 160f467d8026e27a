//! Secondary drying kinetics from moisture samples (thief samples or sacrificed vials).
//!
//! Desorption taken as first order towards an equilibrium water content (Pikal, Shah, Roy &
//! Putman 1990, Int. J. Pharm. 60:203, from memory): dW/dt = −k(T)·(W − We). Samples are
//! grouped by shelf temperature (within [`SAME_TEMPERATURE_C`]); all groups share one We,
//! each has its own rate k and its own starting amplitude, so within a group
//! W = We + B·exp(−k·(t − t₀)). For a given We each group's ln(W − We) is a straight line in
//! time; We is chosen to minimise the squared misfit in W by a scan and a golden-section
//! search. With two or more temperatures the rates are fitted to Arrhenius,
//! k = A·exp(−Ea/(R·T)).

use serde::{Deserialize, Serialize};

use crate::error::{finite, InputError};
use crate::units::c_to_k;

/// Samples whose shelf temperatures differ by at most this belong to one group, °C.
pub const SAME_TEMPERATURE_C: f64 = 1.0;
/// The gas constant, J/(mol·K).
const GAS_CONSTANT: f64 = 8.314_462_618;
const SCAN_STEPS: usize = 400;

const CAUTION: &str = "First-order desorption fitted to the samples given; it supports \
    qualified judgement. Thief samples and the vials they stand for may differ, the \
    equilibrium water content itself shifts with temperature, and a hold time must be \
    confirmed by measured residual moisture.";

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MoistureSample {
    pub time_h: f64,
    pub shelf_temp_c: f64,
    /// Water per mass of cake, g/g (0.02 is 2 %).
    pub water_fraction: f64,
}

/// `secondary-drying-kinetics` input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SecondaryInput {
    pub samples: Vec<MoistureSample>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub target_water_fraction: Option<f64>,
    /// The shelf temperature of the hold asked about; the last sample's when omitted.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at_shelf_temp_c: Option<f64>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RateAtTemperature {
    pub shelf_temp_c: f64,
    pub rate_per_h: f64,
}

/// `secondary-drying-kinetics` result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SecondaryKinetics {
    pub equilibrium_water_fraction: f64,
    pub rates: Vec<RateAtTemperature>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub activation_energy_kj_mol: Option<f64>,
    /// Time at `at_shelf_temp_c` from the last sample's water content to the target, h.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub hold_h: Option<f64>,
    /// Root mean square of measured minus fitted water fraction.
    pub rms_water_fraction: f64,
    pub notes: Vec<String>,
    pub caution: String,
}

struct Group {
    temp_c: f64,
    /// Time of the group's first sample, h.
    start_h: f64,
    /// (time from the group's first sample, water fraction), by time.
    points: Vec<(f64, f64)>,
}

/// A group's straight line ln(W − We) = ln B − k·t, and its squared misfit in W.
fn group_fit(g: &Group, we: f64) -> Option<(f64, f64, f64)> {
    let n = g.points.len() as f64;
    let ys: Vec<f64> = g.points.iter().map(|(_, w)| (w - we).ln()).collect();
    if ys.iter().any(|y| !y.is_finite()) {
        return None;
    }
    let mt = g.points.iter().map(|p| p.0).sum::<f64>() / n;
    let my = ys.iter().sum::<f64>() / n;
    let stt: f64 = g.points.iter().map(|p| (p.0 - mt).powi(2)).sum();
    if stt <= 0.0 {
        return None;
    }
    let sty: f64 = g
        .points
        .iter()
        .zip(&ys)
        .map(|(p, y)| (p.0 - mt) * (y - my))
        .sum();
    let slope = sty / stt;
    let ln_b = my - slope * mt;
    let ss = g
        .points
        .iter()
        .map(|(t, w)| (w - we - (ln_b + slope * t).exp()).powi(2))
        .sum();
    Some((ln_b, -slope, ss))
}

fn total_ss(groups: &[Group], we: f64) -> f64 {
    groups
        .iter()
        .map(|g| group_fit(g, we).map_or(f64::INFINITY, |f| f.2))
        .sum()
}

/// First-order kinetics from moisture samples (module docs).
pub fn secondary_kinetics(input: &SecondaryInput) -> Result<SecondaryKinetics, InputError> {
    if input.samples.len() < 3 {
        return Err(InputError::new(
            "samples",
            format!(
                "a rate and an equilibrium water content need at least three samples (got {})",
                input.samples.len()
            ),
        ));
    }
    for (i, s) in input.samples.iter().enumerate() {
        let f = |name: &str| format!("samples[{i}].{name}");
        finite(&f("time_h"), s.time_h)?;
        shelf_temp(&f("shelf_temp_c"), s.shelf_temp_c)?;
        let w = finite(&f("water_fraction"), s.water_fraction)?;
        if !(0.0..1.0).contains(&w) {
            return Err(InputError::new(
                f("water_fraction"),
                format!("is a mass fraction from 0 to below 1 (got {w}); 2 % is 0.02"),
            ));
        }
    }
    let mut samples = input.samples.clone();
    samples.sort_by(|a, b| a.time_h.total_cmp(&b.time_h));
    let groups = group_by_temperature(&samples);
    let mut notes = Vec::new();
    let usable: Vec<Group> = groups
        .into_iter()
        .filter(|g| {
            let distinct_times = g.points.iter().any(|p| p.0 > 0.0);
            if !distinct_times {
                notes.push(format!(
                    "The sample(s) at {:.1} °C were left out: a rate needs two sampling times.",
                    g.temp_c
                ));
            }
            distinct_times
        })
        .collect();
    let count: usize = usable.iter().map(|g| g.points.len()).sum();
    if usable.is_empty() || count < usable.len() * 2 + 1 {
        return Err(InputError::new(
            "samples",
            "need one shelf temperature with at least three samples at different times, or \
             several temperatures with two or more each and one spare",
        ));
    }
    let w_min = usable
        .iter()
        .flat_map(|g| g.points.iter().map(|p| p.1))
        .fold(f64::INFINITY, f64::min);
    let we = best_equilibrium(&usable, w_min);
    let mut rates = Vec::with_capacity(usable.len());
    let mut ss = 0.0;
    for g in &usable {
        let (_, k, s) = group_fit(g, we).ok_or_else(|| {
            InputError::new("samples", "the samples do not fit a first-order fall")
        })?;
        ss += s;
        if k <= 0.0 {
            notes.push(format!(
                "At {:.1} °C the water content does not fall with time (rate {k:.3e} 1/h).",
                g.temp_c
            ));
        }
        rates.push(RateAtTemperature {
            shelf_temp_c: g.temp_c,
            rate_per_h: k,
        });
    }
    let rms = (ss / count as f64).sqrt();
    let arrhenius = arrhenius_fit(&rates);
    if let Some((ea, _)) = arrhenius {
        if ea <= 0.0 {
            notes.push(
                "The rates do not grow with temperature, so the activation energy is not \
                 physical; check the samples."
                    .to_string(),
            );
        }
    }
    let hold_h = match input.target_water_fraction {
        None => None,
        Some(target) => Some(hold_time(input, &samples, &rates, arrhenius, we, target)?),
    };
    Ok(SecondaryKinetics {
        equilibrium_water_fraction: we,
        rates,
        activation_energy_kj_mol: arrhenius.map(|(ea, _)| ea / 1000.0),
        hold_h,
        rms_water_fraction: rms,
        notes,
        caution: CAUTION.to_string(),
    })
}

fn shelf_temp(field: &str, v: f64) -> Result<f64, InputError> {
    let t = finite(field, v)?;
    if (-60.0..=150.0).contains(&t) {
        Ok(t)
    } else {
        Err(InputError::new(
            field,
            format!("a secondary-drying shelf temperature lies between −60 and 150 °C (got {t})"),
        ))
    }
}

/// Groups of samples (sorted by time) within [`SAME_TEMPERATURE_C`] of the group's first.
fn group_by_temperature(samples: &[MoistureSample]) -> Vec<Group> {
    let mut groups: Vec<Group> = Vec::new();
    for s in samples {
        match groups
            .iter_mut()
            .find(|g| (g.temp_c - s.shelf_temp_c).abs() <= SAME_TEMPERATURE_C)
        {
            Some(g) => g.points.push((s.time_h - g.start_h, s.water_fraction)),
            None => groups.push(Group {
                temp_c: s.shelf_temp_c,
                start_h: s.time_h,
                points: vec![(0.0, s.water_fraction)],
            }),
        }
    }
    groups
}

/// We in [0, w_min) minimising the misfit.
fn best_equilibrium(groups: &[Group], w_min: f64) -> f64 {
    let top = w_min * (1.0 - 1e-9);
    if top <= 0.0 {
        return 0.0;
    }
    let grid: Vec<f64> = (0..=SCAN_STEPS)
        .map(|i| top * i as f64 / SCAN_STEPS as f64)
        .collect();
    let best = grid
        .iter()
        .enumerate()
        .min_by(|a, b| total_ss(groups, *a.1).total_cmp(&total_ss(groups, *b.1)))
        .map_or(0, |(i, _)| i);
    crate::roots::golden_section_min(
        |x| total_ss(groups, x),
        grid[best.saturating_sub(1)],
        grid[(best + 1).min(SCAN_STEPS)],
    )
}

/// (Ea in J/mol, ln A) from rates at two or more temperatures, all positive.
fn arrhenius_fit(rates: &[RateAtTemperature]) -> Option<(f64, f64)> {
    if rates.len() < 2 || rates.iter().any(|r| r.rate_per_h <= 0.0) {
        return None;
    }
    let xs: Vec<f64> = rates.iter().map(|r| 1.0 / c_to_k(r.shelf_temp_c)).collect();
    let ys: Vec<f64> = rates.iter().map(|r| r.rate_per_h.ln()).collect();
    let n = xs.len() as f64;
    let (mx, my) = (xs.iter().sum::<f64>() / n, ys.iter().sum::<f64>() / n);
    let sxx: f64 = xs.iter().map(|x| (x - mx).powi(2)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let slope = sxy / sxx;
    Some((-slope * GAS_CONSTANT, my - slope * mx))
}

fn hold_time(
    input: &SecondaryInput,
    samples: &[MoistureSample],
    rates: &[RateAtTemperature],
    arrhenius: Option<(f64, f64)>,
    we: f64,
    target: f64,
) -> Result<f64, InputError> {
    let target_field = "target_water_fraction";
    let target = finite(target_field, target)?;
    if !(0.0..1.0).contains(&target) {
        return Err(InputError::new(
            target_field,
            format!("is a mass fraction from 0 to below 1 (got {target})"),
        ));
    }
    if target <= we {
        return Err(InputError::new(
            target_field,
            format!(
                "lies at or below the equilibrium water content {we:.4}: first-order \
                 desorption never gets there at these temperatures"
            ),
        ));
    }
    // Sorted and at least three long, checked by the caller.
    let Some(last) = samples.last() else {
        return Err(InputError::new("samples", "needs at least one sample"));
    };
    let temp_field = "at_shelf_temp_c";
    let temp = match input.at_shelf_temp_c {
        Some(t) => shelf_temp(temp_field, t)?,
        None => last.shelf_temp_c,
    };
    let measured = rates
        .iter()
        .find(|r| (r.shelf_temp_c - temp).abs() <= SAME_TEMPERATURE_C)
        .map(|r| r.rate_per_h);
    let k = match (measured, arrhenius) {
        (Some(k), _) => k,
        (None, Some((ea, ln_a))) => (ln_a - ea / (GAS_CONSTANT * c_to_k(temp))).exp(),
        (None, None) => {
            return Err(InputError::new(
                temp_field,
                format!(
                    "no rate is known at {temp} °C: sample at that temperature, or at two \
                     temperatures or more so that Arrhenius can carry the rate over"
                ),
            ))
        }
    };
    if k <= 0.0 {
        return Err(InputError::new(
            temp_field,
            format!("the water content does not fall at {temp} °C in these samples"),
        ));
    }
    let start = last.water_fraction;
    if start <= target {
        return Ok(0.0);
    }
    Ok(((start - we) / (target - we)).ln() / k)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(time_h: f64, shelf_temp_c: f64, water_fraction: f64) -> MoistureSample {
        MoistureSample {
            time_h,
            shelf_temp_c,
            water_fraction,
        }
    }

    #[test]
    fn two_samples_are_not_enough() {
        let input = SecondaryInput {
            samples: vec![sample(0.0, 25.0, 0.05), sample(1.0, 25.0, 0.03)],
            target_water_fraction: None,
            at_shelf_temp_c: None,
        };
        assert_eq!(secondary_kinetics(&input).unwrap_err().field, "samples");
    }

    #[test]
    fn a_water_fraction_in_percent_is_refused() {
        let input = SecondaryInput {
            samples: vec![
                sample(0.0, 25.0, 5.0),
                sample(1.0, 25.0, 0.03),
                sample(2.0, 25.0, 0.02),
            ],
            target_water_fraction: None,
            at_shelf_temp_c: None,
        };
        assert_eq!(
            secondary_kinetics(&input).unwrap_err().field,
            "samples[0].water_fraction"
        );
    }
}
