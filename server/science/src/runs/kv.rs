//! The vial heat transfer coefficient Kv measured by a gravimetric test, and its pressure
//! dependence fitted to tests at several pressures.
//!
//! Gravimetric Kv (Pikal, Roy & Shah 1984, J. Pharm. Sci. 73:1224, from memory): vials of
//! ice are partly sublimed at a steady shelf temperature and chamber pressure, weighed
//! before and after, and Kv = ΔHs·Δm / (Av·∫(Ts − Tb) dt), with the integral over the test
//! taken here by the trapezoid rule over the points given.
//!
//! Pressure dependence (Pikal 1985, from memory): Kv = KC + KP·P/(1 + KD·P), P in Torr,
//! fitted by least squares with KD ≥ 0.

use serde::{Deserialize, Serialize};

use super::saturating;
use super::{check_finite, check_len, check_time_axis, trapezoid};
use crate::drying::DEFAULT_SUBLIMATION_ENTHALPY_J_G;
use crate::error::{finite, positive, InputError};
use crate::units::cal_s_cm2_k_to_w_m2_k;

/// W/(m²·K) in one cal/(s·cm²·K).
const W_M2K_PER_CAL: f64 = 41_840.0;

const GRAVIMETRIC_CAUTION: &str = "Kv from one gravimetric test, for the vials and the \
    position in the load that were weighed; it supports qualified judgement. Edge vials, \
    other pressures and other dryers differ, and a test with few probes or short duration \
    carries the scatter of its temperature readings.";

const FIT_CAUTION: &str = "A fit to the Kv values given; it supports qualified judgement and \
    says little outside the range of pressures tested.";

/// `kv-from-gravimetric` input: one test, the product-probe (vial bottom) temperatures of
/// the weighed vials and their mean mass loss.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GravimetricInput {
    pub time_h: Vec<f64>,
    pub shelf_temp_c: Vec<f64>,
    pub bottom_temp_c: Vec<f64>,
    /// Mass of ice sublimed from one vial, g.
    pub mass_loss_g: f64,
    /// Av, the vial's outer bottom area, cm².
    pub outer_area_cm2: f64,
    /// ΔHs, J/g; the model's constant (2838 J/g) when omitted.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_enthalpy_j_g: Option<f64>,
}

/// `kv-from-gravimetric` result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GravimetricKv {
    pub kv_w_m2k: f64,
    pub kv_cal_s_cm2_k: f64,
    /// ∫(Ts − Tb) dt, K·h.
    pub integral_k_h: f64,
    pub sublimation_enthalpy_j_g: f64,
    pub duration_h: f64,
    /// The time-averaged shelf-to-bottom difference, K.
    pub mean_difference_k: f64,
    pub caution: String,
}

/// Kv of one gravimetric test (module docs).
pub fn kv_from_gravimetric(input: &GravimetricInput) -> Result<GravimetricKv, InputError> {
    check_time_axis("time_h", &input.time_h, 2)?;
    let n = input.time_h.len();
    check_len("shelf_temp_c", &input.shelf_temp_c, n, "time_h")?;
    check_len("bottom_temp_c", &input.bottom_temp_c, n, "time_h")?;
    check_finite("shelf_temp_c", &input.shelf_temp_c)?;
    check_finite("bottom_temp_c", &input.bottom_temp_c)?;
    let mass_g = positive("mass_loss_g", input.mass_loss_g)?;
    let area_cm2 = positive("outer_area_cm2", input.outer_area_cm2)?;
    let enthalpy = sublimation_enthalpy(input.sublimation_enthalpy_j_g)?;
    let duration_h = input.time_h[n - 1] - input.time_h[0];
    if duration_h <= 0.0 {
        return Err(InputError::new(
            "time_h",
            "the test must last some time: the first and last times are equal",
        ));
    }
    let difference: Vec<f64> = input
        .shelf_temp_c
        .iter()
        .zip(&input.bottom_temp_c)
        .map(|(s, b)| s - b)
        .collect();
    let integral_k_h = trapezoid(&input.time_h, &difference);
    if integral_k_h <= 0.0 {
        return Err(InputError::new(
            "bottom_temp_c",
            format!(
                "the vial bottom must be colder than the shelf on average while ice sublimes \
                 (∫(Ts − Tb) dt = {integral_k_h:.3} K·h)"
            ),
        ));
    }
    // W/(m²·K) = J/g · g / (m² · K·s)
    let kv_w_m2k = enthalpy * mass_g / (area_cm2 * 1e-4 * integral_k_h * 3600.0);
    Ok(GravimetricKv {
        kv_w_m2k,
        kv_cal_s_cm2_k: kv_w_m2k / W_M2K_PER_CAL,
        integral_k_h,
        sublimation_enthalpy_j_g: enthalpy,
        duration_h,
        mean_difference_k: integral_k_h / duration_h,
        caution: GRAVIMETRIC_CAUTION.to_string(),
    })
}

fn sublimation_enthalpy(value: Option<f64>) -> Result<f64, InputError> {
    let field = "sublimation_enthalpy_j_g";
    let h = finite(field, value.unwrap_or(DEFAULT_SUBLIMATION_ENTHALPY_J_G))?;
    if (2000.0..=3500.0).contains(&h) {
        Ok(h)
    } else {
        Err(InputError::new(
            field,
            format!("the sublimation enthalpy of ice lies near 2840 J/g (got {h})"),
        ))
    }
}

/// One measured Kv at a chamber pressure.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct KvPoint {
    pub pressure_mtorr: f64,
    pub kv_w_m2k: f64,
}

/// Standard errors of the fitted coefficients, in their units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct KvStandardErrors {
    pub kc_cal_s_cm2_k: f64,
    pub kp_cal_s_cm2_k_torr: f64,
    pub kd_per_torr: f64,
}

/// `kv-fit` result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KvFit {
    pub kc_cal_s_cm2_k: f64,
    pub kp_cal_s_cm2_k_torr: f64,
    pub kd_per_torr: f64,
    /// Measured minus fitted, point by point.
    pub residuals_w_m2k: Vec<f64>,
    pub rms_w_m2k: f64,
    /// With more than three points (one degree of freedom at least).
    pub standard_errors: Option<KvStandardErrors>,
    /// The fitted Kv at 100 mTorr, W/(m²·K), for a quick comparison.
    pub kv_at_100_mtorr_w_m2k: f64,
    pub notes: Vec<String>,
    pub caution: String,
}

/// Fit Kv = KC + KP·P/(1 + KD·P) (module docs). Needs at least three distinct pressures.
pub fn fit_kv(points: &[KvPoint]) -> Result<KvFit, InputError> {
    let mut pressures_torr = Vec::with_capacity(points.len());
    let mut kv_cal = Vec::with_capacity(points.len());
    for (i, p) in points.iter().enumerate() {
        let pressure = positive(&format!("points[{i}].pressure_mtorr"), p.pressure_mtorr)?;
        let kv = positive(&format!("points[{i}].kv_w_m2k"), p.kv_w_m2k)?;
        pressures_torr.push(pressure / 1000.0);
        kv_cal.push(kv / W_M2K_PER_CAL);
    }
    let distinct = distinct_count(&pressures_torr);
    if distinct < 3 {
        return Err(InputError::new(
            "points",
            format!("KC, KP and KD need Kv at three or more different pressures (got {distinct})"),
        ));
    }
    let fit = saturating::fit(&pressures_torr, &kv_cal)
        .ok_or_else(|| InputError::new("points", "the pressures do not determine KC, KP and KD"))?;
    let mut notes = Vec::new();
    if fit.at_upper_bound {
        notes.push(
            "KD sits at the top of the range searched: Kv levels off within the pressures \
             tested and KD is not pinned by the data."
                .to_string(),
        );
    }
    if fit.c1 < 0.0 {
        notes.push(
            "KP came out negative: Kv falls with pressure in these points, which gas \
             conduction does not do; check the tests."
                .to_string(),
        );
    }
    let at_100 = fit.c0 + fit.c1 * 0.1 / (1.0 + fit.c2 * 0.1);
    Ok(KvFit {
        kc_cal_s_cm2_k: fit.c0,
        kp_cal_s_cm2_k_torr: fit.c1,
        kd_per_torr: fit.c2,
        residuals_w_m2k: fit.residuals.iter().map(|r| r * W_M2K_PER_CAL).collect(),
        rms_w_m2k: fit.rms * W_M2K_PER_CAL,
        standard_errors: fit.standard_errors.map(|[kc, kp, kd]| KvStandardErrors {
            kc_cal_s_cm2_k: kc,
            kp_cal_s_cm2_k_torr: kp,
            kd_per_torr: kd,
        }),
        kv_at_100_mtorr_w_m2k: cal_s_cm2_k_to_w_m2_k(at_100),
        notes,
        caution: FIT_CAUTION.to_string(),
    })
}

/// How many of `values` differ from each other by more than 10⁻⁹ relative.
pub(crate) fn distinct_count(values: &[f64]) -> usize {
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    sorted.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * a.abs().max(b.abs()));
    sorted.len()
}

/// Pressures count as shared when they differ by less than this share.
const SAME_PRESSURE_SHARE: f64 = 0.01;

/// Edge vials' Kv over centre vials': the mean of the ratios at the pressures both were
/// tested at (several tests at one pressure are averaged first).
pub fn edge_factor(centre: &[KvPoint], edge: &[KvPoint]) -> Result<f64, InputError> {
    let check = |field: &str, points: &[KvPoint]| -> Result<(), InputError> {
        if points.is_empty() {
            return Err(InputError::new(field, "needs at least one Kv point"));
        }
        for (i, p) in points.iter().enumerate() {
            positive(&format!("{field}[{i}].pressure_mtorr"), p.pressure_mtorr)?;
            positive(&format!("{field}[{i}].kv_w_m2k"), p.kv_w_m2k)?;
        }
        Ok(())
    };
    check("centre", centre)?;
    check("edge", edge)?;
    let mean_at = |points: &[KvPoint], p: f64| {
        let near: Vec<f64> = points
            .iter()
            .filter(|q| (q.pressure_mtorr - p).abs() <= SAME_PRESSURE_SHARE * p)
            .map(|q| q.kv_w_m2k)
            .collect();
        (!near.is_empty()).then(|| near.iter().sum::<f64>() / near.len() as f64)
    };
    let mut pressures: Vec<f64> = edge.iter().map(|p| p.pressure_mtorr).collect();
    pressures.sort_by(f64::total_cmp);
    pressures.dedup_by(|a, b| (*a - *b).abs() <= SAME_PRESSURE_SHARE * b.abs());
    let ratios: Vec<f64> = pressures
        .iter()
        .filter_map(|&p| Some(mean_at(edge, p)? / mean_at(centre, p)?))
        .collect();
    if ratios.is_empty() {
        return Err(InputError::new(
            "edge",
            "no edge test shares a chamber pressure (within 1 %) with a centre test",
        ));
    }
    Ok(ratios.iter().sum::<f64>() / ratios.len() as f64)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn a_constant_temperature_difference_gives_the_textbook_kv() {
        // Kv = ΔHs·Δm/(Av·Δt·ΔT) (Pikal, Roy & Shah 1984, from memory), by hand:
        // 2838 J/g × 1.5 g / (4.71e-4 m² × 36000 s × 12 K) = 20.92 W/(m²·K).
        let input = GravimetricInput {
            time_h: vec![0.0, 4.0, 10.0],
            shelf_temp_c: vec![-20.0; 3],
            bottom_temp_c: vec![-32.0; 3],
            mass_loss_g: 1.5,
            outer_area_cm2: 4.71,
            sublimation_enthalpy_j_g: None,
        };
        let kv = kv_from_gravimetric(&input).unwrap();
        assert_relative_eq!(
            kv.kv_w_m2k,
            2838.0 * 1.5 / (4.71e-4 * 36000.0 * 12.0),
            max_relative = 1e-12
        );
        assert_relative_eq!(kv.integral_k_h, 120.0, max_relative = 1e-12);
        assert_relative_eq!(
            kv.kv_cal_s_cm2_k * 41_840.0,
            kv.kv_w_m2k,
            max_relative = 1e-12
        );
    }

    #[test]
    fn a_bottom_warmer_than_the_shelf_is_refused() {
        let input = GravimetricInput {
            time_h: vec![0.0, 1.0],
            shelf_temp_c: vec![-30.0; 2],
            bottom_temp_c: vec![-20.0; 2],
            mass_loss_g: 1.0,
            outer_area_cm2: 4.0,
            sublimation_enthalpy_j_g: None,
        };
        assert_eq!(
            kv_from_gravimetric(&input).unwrap_err().field,
            "bottom_temp_c"
        );
    }

    #[test]
    fn two_pressures_cannot_give_three_coefficients() {
        let pts = [
            KvPoint {
                pressure_mtorr: 100.0,
                kv_w_m2k: 20.0,
            },
            KvPoint {
                pressure_mtorr: 100.0,
                kv_w_m2k: 20.5,
            },
            KvPoint {
                pressure_mtorr: 200.0,
                kv_w_m2k: 25.0,
            },
        ];
        assert_eq!(fit_kv(&pts).unwrap_err().field, "points");
    }

    #[test]
    fn the_edge_factor_is_the_mean_ratio_at_shared_pressures() {
        let c = [
            KvPoint {
                pressure_mtorr: 100.0,
                kv_w_m2k: 20.0,
            },
            KvPoint {
                pressure_mtorr: 200.0,
                kv_w_m2k: 25.0,
            },
        ];
        let e = [
            KvPoint {
                pressure_mtorr: 100.0,
                kv_w_m2k: 26.0,
            },
            KvPoint {
                pressure_mtorr: 200.0,
                kv_w_m2k: 30.0,
            },
            KvPoint {
                pressure_mtorr: 400.0,
                kv_w_m2k: 40.0,
            },
        ];
        assert_relative_eq!(
            edge_factor(&c, &e).unwrap(),
            (1.3 + 1.2) / 2.0,
            max_relative = 1e-12
        );
        assert_eq!(edge_factor(&c, &e[2..]).unwrap_err().field, "edge");
    }
}
