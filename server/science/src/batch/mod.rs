//! The batch: a load is not one vial. Each class of vial is run through the one-vial model
//! of [`crate::drying`] with its own heat transfer coefficient, and the classes are combined
//! by their share of the load.
//!
//! - **Edge vials** take extra heat from the walls and door (the edge effect): their Kv is
//!   the vial type's Kv × the dryer's edge heat factor (1.0, no effect, until the team
//!   measures it; laboratory dryers run about 1.1–1.5: Rambhatla & Pikal 2003, AAPS
//!   PharmSciTech 4(2):14, from memory). They run warmer and finish first.
//! - **Centre vials** spread around the nominal Kv with a coefficient of variation the team
//!   sets ([`DEFAULT_KV_CV`] when not given: common practice, no source). The spread is
//!   represented by three classes at Kv·(1 − √3·cv), Kv and Kv·(1 + √3·cv) holding 1/6, 2/3
//!   and 1/6 of the centre vials: the three-point Gauss–Hermite rule, which keeps the mean
//!   and the variance of a normal spread exactly; the outer classes stand near its 4th and
//!   96th percentiles. The low-Kv class finishes last.
//!
//! Checks take the warmest class for temperature and the slowest for time. The batch's
//! sublimation rate is the vial count × the share-weighted sum of the classes' rates; each
//! class's rate is read linearly between the model's moments and drops to zero when its
//! ice is gone.

mod rate;

use serde::{Deserialize, Serialize};

pub use rate::BatchRatePoint;

use crate::dryer::edge_heat_factor;
use crate::drying::{
    downsample, run_recording, Conditions, DryingStop, DryingSummary, Product, Resolution,
    SeriesPoint, MAX_SERIES_POINTS,
};
use crate::error::{finite, positive, InputError};

/// Coefficient of variation of centre vials' Kv when the team has not set one (common
/// practice, no source).
pub const DEFAULT_KV_CV: f64 = 0.05;
/// Largest coefficient of variation accepted: beyond it the low class's Kv would approach
/// zero.
pub const MAX_KV_CV: f64 = 0.3;
/// Share of the load in edge positions when not given (common practice, no source; it
/// grows as the load shrinks).
pub const DEFAULT_EDGE_SHARE: f64 = 0.10;

/// √3: the outer nodes of the three-point Gauss–Hermite rule, in standard deviations.
const GAUSS_HERMITE_NODE: f64 = 1.732_050_807_568_877_2;

/// A class of vials of the batch.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum VialClass {
    /// Centre vials at the nominal Kv.
    Centre,
    /// Centre vials at the low end of the Kv spread: the slowest.
    CentreLowKv,
    /// Centre vials at the high end of the Kv spread.
    CentreHighKv,
    /// Vials at the edge of the load, Kv × the edge heat factor.
    Edge,
}

impl VialClass {
    pub fn label(self) -> &'static str {
        match self {
            Self::Centre => "centre vials",
            Self::CentreLowKv => "centre vials at the low end of the Kv spread",
            Self::CentreHighKv => "centre vials at the high end of the Kv spread",
            Self::Edge => "edge vials",
        }
    }
}

/// How the load is made up, checked.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BatchSpec {
    pub edge_heat_factor: f64,
    pub edge_share: f64,
    pub kv_cv: f64,
    /// Vials in the load, when known.
    pub vial_count: Option<f64>,
}

impl Default for BatchSpec {
    fn default() -> Self {
        Self {
            edge_heat_factor: 1.0,
            edge_share: DEFAULT_EDGE_SHARE,
            kv_cv: DEFAULT_KV_CV,
            vial_count: None,
        }
    }
}

/// One class of the load: its share and Kv over the nominal.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClassSpec {
    pub class: VialClass,
    pub share: f64,
    pub kv_factor: f64,
}

impl BatchSpec {
    /// Check the load's numbers (fields named as in the `cycle-check` input); absent ones
    /// take the stated defaults.
    pub fn new(
        edge_heat: Option<f64>,
        edge_share: Option<f64>,
        kv_cv: Option<f64>,
        vial_count: Option<f64>,
    ) -> Result<Self, InputError> {
        let edge_heat_factor = match edge_heat {
            Some(f) => edge_heat_factor("dryer.edge_heat_factor", f)?,
            None => 1.0,
        };
        let edge_share = share("edge_vial_share", edge_share.unwrap_or(DEFAULT_EDGE_SHARE))?;
        let kv_cv = finite("kv_cv", kv_cv.unwrap_or(DEFAULT_KV_CV))?;
        if !(0.0..=MAX_KV_CV).contains(&kv_cv) {
            return Err(InputError::new(
                "kv_cv",
                format!("give a coefficient of variation from 0 to {MAX_KV_CV} (got {kv_cv})"),
            ));
        }
        let vial_count = vial_count.map(|n| positive("vial_count", n)).transpose()?;
        Ok(Self {
            edge_heat_factor,
            edge_share,
            kv_cv,
            vial_count,
        })
    }

    /// The classes with a share of the load (module docs for the rule).
    pub fn classes(&self) -> Vec<ClassSpec> {
        let centre = 1.0 - self.edge_share;
        let spread = GAUSS_HERMITE_NODE * self.kv_cv;
        let mut out = Vec::with_capacity(4);
        if spread > 0.0 {
            out.push(ClassSpec {
                class: VialClass::CentreLowKv,
                share: centre / 6.0,
                kv_factor: 1.0 - spread,
            });
            out.push(ClassSpec {
                class: VialClass::Centre,
                share: centre * 2.0 / 3.0,
                kv_factor: 1.0,
            });
            out.push(ClassSpec {
                class: VialClass::CentreHighKv,
                share: centre / 6.0,
                kv_factor: 1.0 + spread,
            });
        } else {
            out.push(ClassSpec {
                class: VialClass::Centre,
                share: centre,
                kv_factor: 1.0,
            });
        }
        if self.edge_share > 0.0 {
            out.push(ClassSpec {
                class: VialClass::Edge,
                share: self.edge_share,
                kv_factor: self.edge_heat_factor,
            });
        }
        out.retain(|c| c.share > 0.0);
        out
    }

    /// The largest Kv factor of the load: its warmest vials.
    pub fn warmest_kv_factor(&self) -> f64 {
        self.classes()
            .iter()
            .map(|c| c.kv_factor)
            .fold(f64::NEG_INFINITY, f64::max)
    }

    /// The smallest Kv factor of the load: its slowest vials.
    pub fn slowest_kv_factor(&self) -> f64 {
        self.classes()
            .iter()
            .map(|c| c.kv_factor)
            .fold(f64::INFINITY, f64::min)
    }
}

fn share(field: &str, v: f64) -> Result<f64, InputError> {
    let s = finite(field, v)?;
    if (0.0..1.0).contains(&s) {
        Ok(s)
    } else {
        Err(InputError::new(
            field,
            format!("is a share of the load, from 0 to below 1 (got {s})"),
        ))
    }
}

/// One class of vials through primary drying.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ClassResult {
    pub class: VialClass,
    pub share: f64,
    /// This class's Kv over the vial type's nominal Kv.
    pub kv_factor: f64,
    pub peak_front_temp_c: f64,
    pub peak_bottom_temp_c: f64,
    pub drying_time_h: f64,
    /// Highest sublimation rate of one vial of this class, g/h.
    pub peak_sublimation_rate_g_h: f64,
    /// The class's full summary (limit crossings, onset…).
    #[serde(skip)]
    pub summary: DryingSummary,
    /// At most [`MAX_SERIES_POINTS`] moments, for charts.
    #[serde(skip)]
    pub series: Vec<SeriesPoint>,
}

/// The batch through primary drying.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BatchResult {
    pub classes: Vec<ClassResult>,
    /// When the first vials (the fastest class) run out of ice, h.
    pub first_dry_h: f64,
    /// When the last vials (the slowest class) run out of ice, h.
    pub last_dry_h: f64,
    /// Highest share-weighted sublimation rate of one average vial, g/h.
    pub peak_mean_rate_g_h: f64,
    pub vial_count: Option<f64>,
    /// Highest total sublimation rate of the load, kg/h, when the vial count is known.
    pub peak_sublimation_kg_h: Option<f64>,
    /// The load's rate over time, one average vial, g/h (steps down as classes finish).
    #[serde(skip)]
    pub rate: Vec<BatchRatePoint>,
}

impl BatchResult {
    /// The class that runs warmest by `temp` (front or bottom peak).
    pub fn warmest_by(&self, temp: impl Fn(&ClassResult) -> f64) -> Option<&ClassResult> {
        self.classes
            .iter()
            .max_by(|a, b| temp(a).total_cmp(&temp(b)))
    }

    /// The class that finishes last.
    pub fn slowest(&self) -> Option<&ClassResult> {
        self.classes
            .iter()
            .max_by(|a, b| a.drying_time_h.total_cmp(&b.drying_time_h))
    }

    pub fn class(&self, class: VialClass) -> Option<&ClassResult> {
        self.classes.iter().find(|c| c.class == class)
    }
}

/// A class the model could not dry, and why.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{} : {stop}", class.label())]
pub struct BatchStop {
    pub class: VialClass,
    pub stop: DryingStop,
}

/// Run every class of `spec` through `conditions` (its shelf plan, pressure and limit),
/// each with the product's Kv × the class's factor.
pub fn simulate_batch(
    product: &Product,
    conditions: &Conditions,
    spec: &BatchSpec,
) -> Result<BatchResult, BatchStop> {
    let mut classes = Vec::with_capacity(4);
    for c in spec.classes() {
        let vial = product.with_factors(c.kv_factor, 1.0);
        let here = conditions.for_product(&vial);
        let (summary, points) =
            run_recording(&vial, &here, Resolution::for_series()).map_err(|stop| BatchStop {
                class: c.class,
                stop,
            })?;
        classes.push((c, summary, points));
    }
    let rate = rate::combine(
        &classes
            .iter()
            .map(|(c, _, points)| (c.share, points.as_slice()))
            .collect::<Vec<_>>(),
    );
    let peak_mean = rate.iter().map(|p| p.mean_rate_g_h).fold(0.0, f64::max);
    let results: Vec<ClassResult> = classes
        .into_iter()
        .map(|(c, summary, points)| ClassResult {
            class: c.class,
            share: c.share,
            kv_factor: c.kv_factor,
            peak_front_temp_c: summary.peak_front_temp_c,
            peak_bottom_temp_c: summary.peak_bottom_temp_c,
            drying_time_h: summary.drying_time_h,
            peak_sublimation_rate_g_h: summary.peak_sublimation_rate_g_h,
            series: downsample(&points, MAX_SERIES_POINTS).copied().collect(),
            summary,
        })
        .collect();
    let times = results.iter().map(|c| c.drying_time_h);
    let first = times.clone().fold(f64::INFINITY, f64::min);
    let last = times.fold(f64::NEG_INFINITY, f64::max);
    Ok(BatchResult {
        classes: results,
        first_dry_h: first,
        last_dry_h: last,
        peak_mean_rate_g_h: peak_mean,
        vial_count: spec.vial_count,
        peak_sublimation_kg_h: spec.vial_count.map(|n| n * peak_mean / 1000.0),
        rate,
    })
}

#[cfg(test)]
mod tests;
