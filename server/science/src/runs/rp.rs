//! The dried-layer resistance Rp read from product temperature: the heat and mass balance
//! of [`crate::drying`] (Pikal 1985) turned around, with the same constants.
//!
//! At each logged moment, with the vial's Kv at the chamber pressure:
//!
//! - heat in:        q = Av·Kv(Pc)·(Ts − Tb)
//! - sublimation:    ṁ = q/ΔHs
//! - ice sublimed:   the trapezoid integral of ṁ from the first point
//! - frozen layer:   L = (ice mass − sublimed)/(ρ_ice·Ap); dried layer l = sublimed/(ρ_ice·Ap)
//! - front:          Tf = Tb − q·L/(Ap·k_ice)
//! - resistance:     Rp = Ap·(P_ice(Tf) − Pc)/ṁ
//!
//! and Rp(l) = R0 + A1·l/(1 + A2·l), A2 ≥ 0, is fitted by least squares. The series should
//! start when primary drying starts (the vacuum is pulled): the ice sublimed is counted
//! from the first point.

use serde::{Deserialize, Serialize};

use super::saturating;
use super::{check_finite, check_len, check_time_axis, trapezoid};
use crate::drying::{chamber_pressure_pa, DryingBase, Product, Resistance, Vial};
use crate::error::{finite, InputError};
use crate::ice::vapour_pressure_pa_unchecked;
use crate::units::{c_to_k, cm2_torr_h_g_to_si};

/// Points before this share of the ice has sublimed are left out: the start transient,
/// when the product is still warming from the freezing step and the balance is not yet
/// steady (common practice, no source).
pub const START_SHARE: f64 = 0.03;
/// Points after this share of the ice has sublimed are left out: with the ice nearly gone
/// the probe no longer sits in ice (common practice, no source).
pub const END_SHARE: f64 = 0.90;
/// Points where the shelf is less than this above the vial bottom are left out: the heat
/// flow is then mostly reading noise (common practice, no source), K.
pub const MIN_DRIVING_K: f64 = 1.0;

const CAUTION: &str = "Rp read back from product temperature with an assumed Kv; it supports \
    qualified judgement. Any error in Kv, in the fill or in where the probe sits goes straight \
    into Rp, and a probed vial dries faster than its neighbours.";

/// `rp-from-product-temperature` input: one probed vial's bottom temperature through
/// primary drying at a steady chamber pressure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RpInput {
    pub time_h: Vec<f64>,
    pub shelf_temp_c: Vec<f64>,
    pub bottom_temp_c: Vec<f64>,
    pub chamber_pressure_mtorr: f64,
    pub fill_volume_ml: f64,
    pub solids_mass_fraction: f64,
    pub vial: Vial,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub solution_density_g_ml: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unfrozen_water_g_per_g_solids: Option<f64>,
}

/// Rp at one moment.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RpPoint {
    pub time_h: f64,
    pub dried_layer_cm: f64,
    pub rp_cm2_torr_h_g: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RpStandardErrors {
    pub r0_cm2_torr_h_g: f64,
    pub a1_cm_torr_h_g: f64,
    pub a2_per_cm: f64,
}

/// Rp(l) = R0 + A1·l/(1 + A2·l) fitted.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RpFit {
    pub r0_cm2_torr_h_g: f64,
    pub a1_cm_torr_h_g: f64,
    pub a2_per_cm: f64,
    pub residuals_cm2_torr_h_g: Vec<f64>,
    pub rms_cm2_torr_h_g: f64,
    pub standard_errors: Option<RpStandardErrors>,
    /// True when A2 sits at the top of the range searched: not pinned by the data.
    pub a2_at_search_bound: bool,
}

impl RpFit {
    /// The fit as the model's resistance.
    pub fn resistance(&self) -> Resistance {
        Resistance {
            r0_cm2_torr_h_g: self.r0_cm2_torr_h_g,
            a1_cm_torr_h_g: self.a1_cm_torr_h_g,
            a2_per_cm: self.a2_per_cm,
        }
    }
}

/// `rp-from-product-temperature` result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RpResult {
    pub points: Vec<RpPoint>,
    pub fit: RpFit,
    /// The Kv used, W/(m²·K).
    pub kv_w_m2k: f64,
    pub ice_mass_g: f64,
    /// Ice sublimed by the last point by the balance, as a share of the ice.
    pub sublimed_share: f64,
    /// How many points were left out, and why.
    pub notes: Vec<String>,
    pub caution: String,
}

/// Rp from product temperature and its fit (module docs).
pub fn rp_from_product_temperature(input: &RpInput) -> Result<RpResult, InputError> {
    check_time_axis("time_h", &input.time_h, 3)?;
    let n = input.time_h.len();
    check_len("shelf_temp_c", &input.shelf_temp_c, n, "time_h")?;
    check_len("bottom_temp_c", &input.bottom_temp_c, n, "time_h")?;
    check_finite("shelf_temp_c", &input.shelf_temp_c)?;
    check_finite("bottom_temp_c", &input.bottom_temp_c)?;
    let pc_pa = chamber_pressure_pa("chamber_pressure_mtorr", input.chamber_pressure_mtorr)?;
    let product = Product::new(&DryingBase {
        fill_volume_ml: input.fill_volume_ml,
        solids_mass_fraction: input.solids_mass_fraction,
        solution_density_g_ml: input.solution_density_g_ml,
        unfrozen_water_g_per_g_solids: input.unfrozen_water_g_per_g_solids,
        vial: input.vial,
        // Product checks a resistance too; the balance turned around never reads it.
        resistance: Resistance {
            r0_cm2_torr_h_g: 1.0,
            a1_cm_torr_h_g: 0.0,
            a2_per_cm: 0.0,
        },
        ice_density_g_cm3: None,
        ice_conductivity_w_mk: None,
        sublimation_enthalpy_j_g: None,
    })?;
    let kv = product.kv_w_m2k(pc_pa);
    let av_m2 = product.outer_area_cm2() * 1e-4;
    let ap_m2 = product.inner_area_cm2() * 1e-4;
    let enthalpy_j_kg = product.sublimation_enthalpy_j_g() * 1e3;
    let ice_kg = product.ice_mass_g() * 1e-3;
    let ice_per_metre = product.ice_density_g_cm3() * 1e3 * ap_m2;
    let k_ice = product.ice_conductivity_w_mk();
    let rp_unit = cm2_torr_h_g_to_si(1.0);

    let heat_w: Vec<f64> = input
        .shelf_temp_c
        .iter()
        .zip(&input.bottom_temp_c)
        .map(|(s, b)| av_m2 * kv * (s - b).max(0.0))
        .collect();
    let rate_kg_s: Vec<f64> = heat_w.iter().map(|q| q / enthalpy_j_kg).collect();
    let times_s: Vec<f64> = input.time_h.iter().map(|t| t * 3600.0).collect();

    let (mut early, mut late, mut small, mut no_sublimation) = (0, 0, 0, 0);
    let mut points = Vec::with_capacity(n);
    let mut sublimed_kg = 0.0;
    for i in 0..n {
        if i > 0 {
            sublimed_kg += trapezoid(&times_s[i - 1..=i], &rate_kg_s[i - 1..=i]);
        }
        let share = sublimed_kg / ice_kg;
        let driving_k = input.shelf_temp_c[i] - input.bottom_temp_c[i];
        if share < START_SHARE {
            early += 1;
            continue;
        }
        if share > END_SHARE {
            late += 1;
            continue;
        }
        if driving_k < MIN_DRIVING_K {
            small += 1;
            continue;
        }
        let frozen_m = (ice_kg - sublimed_kg) / ice_per_metre;
        let front_k = c_to_k(input.bottom_temp_c[i]) - heat_w[i] * frozen_m / (ap_m2 * k_ice);
        let excess_pa = vapour_pressure_pa_unchecked(front_k) - pc_pa;
        if excess_pa <= 0.0 || front_k <= 0.0 {
            no_sublimation += 1;
            continue;
        }
        points.push(RpPoint {
            time_h: input.time_h[i],
            dried_layer_cm: sublimed_kg / ice_per_metre * 100.0,
            rp_cm2_torr_h_g: ap_m2 * excess_pa / rate_kg_s[i] / rp_unit,
        });
    }
    let mut notes = Vec::new();
    let mut left_out = |count: usize, why: String| {
        if count > 0 {
            notes.push(format!("{count} point(s) left out: {why}."));
        }
    };
    left_out(
        early,
        format!(
            "less than {:.0} % of the ice sublimed (start transient)",
            START_SHARE * 100.0
        ),
    );
    left_out(
        late,
        format!(
            "more than {:.0} % of the ice sublimed (ice nearly gone)",
            END_SHARE * 100.0
        ),
    );
    left_out(
        small,
        format!("shelf less than {MIN_DRIVING_K} K above the vial bottom"),
    );
    left_out(
        no_sublimation,
        "the front would be too cold for ice to sublime at the chamber pressure".to_string(),
    );
    let sublimed_share = sublimed_kg / ice_kg;
    if sublimed_share > 1.0 {
        notes.push(format!(
            "By this Kv the ice would be gone before the last point ({:.0} % of it sublimed): \
             Kv, the fill or the end of the series may be off.",
            sublimed_share * 100.0
        ));
    }
    if points.len() < 3 {
        return Err(InputError::new(
            "bottom_temp_c",
            format!(
                "only {} point(s) give a meaningful heat and mass balance; three are needed \
                 to fit Rp ({})",
                points.len(),
                notes.join(" ")
            ),
        ));
    }
    let fit = fit_rp(&points)?;
    Ok(RpResult {
        points,
        fit,
        kv_w_m2k: kv,
        ice_mass_g: ice_kg * 1e3,
        sublimed_share,
        notes,
        caution: CAUTION.to_string(),
    })
}

/// Fit Rp(l) = R0 + A1·l/(1 + A2·l), A2 ≥ 0, by least squares. Needs three distinct l.
pub fn fit_rp(points: &[RpPoint]) -> Result<RpFit, InputError> {
    let mut ls = Vec::with_capacity(points.len());
    let mut rps = Vec::with_capacity(points.len());
    for (i, p) in points.iter().enumerate() {
        let l = finite(&format!("points[{i}].dried_layer_cm"), p.dried_layer_cm)?;
        if l < 0.0 {
            return Err(InputError::new(
                format!("points[{i}].dried_layer_cm"),
                format!("a layer thickness cannot be negative (got {l})"),
            ));
        }
        ls.push(l);
        rps.push(finite(
            &format!("points[{i}].rp_cm2_torr_h_g"),
            p.rp_cm2_torr_h_g,
        )?);
    }
    let distinct = super::kv::distinct_count(&ls);
    if distinct < 3 {
        return Err(InputError::new(
            "points",
            format!(
                "R0, A1 and A2 need Rp at three or more dried-layer thicknesses (got {distinct})"
            ),
        ));
    }
    let fit = saturating::fit(&ls, &rps)
        .ok_or_else(|| InputError::new("points", "the layers do not determine R0, A1 and A2"))?;
    Ok(RpFit {
        r0_cm2_torr_h_g: fit.c0,
        a1_cm_torr_h_g: fit.c1,
        a2_per_cm: fit.c2,
        residuals_cm2_torr_h_g: fit.residuals,
        rms_cm2_torr_h_g: fit.rms,
        standard_errors: fit.standard_errors.map(|[r0, a1, a2]| RpStandardErrors {
            r0_cm2_torr_h_g: r0,
            a1_cm_torr_h_g: a1,
            a2_per_cm: a2,
        }),
        a2_at_search_bound: fit.at_upper_bound,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_layers_cannot_give_three_coefficients() {
        let p = |l: f64| RpPoint {
            time_h: l,
            dried_layer_cm: l,
            rp_cm2_torr_h_g: 1.0 + l,
        };
        assert_eq!(
            fit_rp(&[p(0.1), p(0.1), p(0.2)]).unwrap_err().field,
            "points"
        );
        let mut bad = [p(0.1), p(0.2), p(0.3)];
        bad[1].dried_layer_cm = -0.2;
        assert_eq!(fit_rp(&bad).unwrap_err().field, "points[1].dried_layer_cm");
    }
}
