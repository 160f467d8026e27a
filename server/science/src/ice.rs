//! Ice: vapour pressure and latent heat of sublimation.

use crate::error::{celsius_to_kelvin_checked, InputError};
use crate::units::{c_to_k, k_to_c};

/// Lowest temperature at which Murphy & Koop (2005) eq. 7 is stated valid (T > 110 K).
pub const MIN_VALID_K: f64 = 110.0;
/// The triple point of water, 273.16 K: ice does not exist as a stable phase above it.
pub const TRIPLE_POINT_K: f64 = 273.16;

/// Vapour pressure of hexagonal ice in Pa at `temp_k` (unchecked; see [`vapour_pressure_pa`]).
///
/// Murphy, D. M. & Koop, T. (2005), *Review of the vapour pressures of ice and supercooled
/// water for atmospheric applications*, Q. J. R. Meteorol. Soc. 131:1539–1565, eq. 7:
/// ln(p/Pa) = 9.550426 − 5723.265/T + 3.53068·ln T − 0.00728332·T.
pub fn vapour_pressure_pa_unchecked(temp_k: f64) -> f64 {
    (9.550426 - 5723.265 / temp_k + 3.53068 * temp_k.ln() - 0.00728332 * temp_k).exp()
}

/// Vapour pressure of ice in Pa, refusing temperatures outside the equation's range
/// (110 K to the triple point, 273.16 K).
///
/// ```
/// let p = glasspoint_science::ice::vapour_pressure_pa(-30.0).unwrap();
/// assert!((p - 38.0).abs() < 0.5);
/// ```
pub fn vapour_pressure_pa(temp_c: f64) -> Result<f64, InputError> {
    let t = celsius_to_kelvin_checked("temperature_c", temp_c)?;
    if !(MIN_VALID_K..=TRIPLE_POINT_K + 1e-9).contains(&t) {
        return Err(InputError::new(
            "temperature_c",
            format!(
                "the ice vapour-pressure equation holds from {:.2} °C to {:.2} °C (got {temp_c} °C)",
                k_to_c(MIN_VALID_K),
                k_to_c(TRIPLE_POINT_K)
            ),
        ));
    }
    Ok(vapour_pressure_pa_unchecked(t))
}

/// Latent heat of sublimation of ice in J/mol, Murphy & Koop (2005) eq. 5 (T > 30 K):
/// ΔHs = 46782.5 + 35.8925·T − 0.07414·T² + 541.5·exp(−(T/123.75)²).
pub fn sublimation_enthalpy_j_mol(temp_k: f64) -> f64 {
    46782.5 + 35.8925 * temp_k - 0.07414 * temp_k * temp_k
        + 541.5 * (-(temp_k / 123.75).powi(2)).exp()
}

/// Molar mass of water, g/mol.
pub const WATER_MOLAR_MASS_G_MOL: f64 = 18.015_28;

/// Latent heat of sublimation in J/g at `temp_c`.
pub fn sublimation_enthalpy_j_g(temp_c: f64) -> f64 {
    sublimation_enthalpy_j_mol(c_to_k(temp_c)) / WATER_MOLAR_MASS_G_MOL
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// IAPWS R14-08(2011) sublimation-pressure equation (Wagner, Riethmann, Feistel &
    /// Harvey 2011, J. Phys. Chem. Ref. Data 40:043103), coded here from the release as an
    /// independent check: ln(p/pt) = θ⁻¹ Σ aᵢ θ^bᵢ, θ = T/Tt.
    fn iapws_2011_sublimation_pa(temp_k: f64) -> f64 {
        let a = [-0.212_144_006e2, 0.273_203_819e2, -0.610_598_130e1];
        let b = [0.333_333_333e-2, 0.120_666_667e1, 0.170_333_333e1];
        let theta = temp_k / 273.16;
        let sum: f64 = a.iter().zip(b).map(|(ai, bi)| ai * theta.powf(bi)).sum();
        611.657 * (sum / theta).exp()
    }

    #[test]
    fn vapour_pressure_agrees_with_iapws_2011_from_minus_80_to_0_c() {
        // Source: IAPWS R14-08(2011), which agrees with Murphy & Koop within 0.05 % from −60 to 0 °C.
        let mut t = -80.0;
        while t <= 0.0 {
            let mk = vapour_pressure_pa(t).unwrap();
            let iapws = iapws_2011_sublimation_pa(c_to_k(t));
            assert_relative_eq!(mk, iapws, max_relative = 1e-3);
            t += 1.0;
        }
    }

    #[test]
    fn vapour_pressure_at_the_triple_point_is_611_657_pa() {
        // Source: IAPWS R14-08(2011), p_t = 611.657 Pa at 273.16 K.
        let p = vapour_pressure_pa(k_to_c(TRIPLE_POINT_K)).unwrap();
        assert_relative_eq!(p, 611.657, max_relative = 1e-3);
    }

    #[test]
    fn sublimation_enthalpy_near_minus_30_c_is_about_2838_j_g() {
        // Source: Murphy & Koop (2005) eq. 5: about 2838 J/g near −30 °C.
        assert_relative_eq!(sublimation_enthalpy_j_g(-30.0), 2838.0, max_relative = 2e-3);
    }

    #[test]
    fn temperatures_outside_the_range_are_refused_with_the_field_named() {
        for bad in [5.0, -200.0, -300.0, f64::NAN, f64::INFINITY] {
            let err = vapour_pressure_pa(bad).unwrap_err();
            assert_eq!(err.field, "temperature_c");
        }
    }
}

/// `ice-vapor-pressure` topic input.
#[derive(Debug, serde::Deserialize)]
pub struct IceVaporPressureInput {
    pub temperature_c: f64,
}

/// `ice-vapor-pressure` topic result.
#[derive(Debug, serde::Serialize)]
pub struct IceVaporPressureOutput {
    pub temperature_c: f64,
    pub pressure_pa: f64,
    pub pressure_mtorr: f64,
    pub pressure_mbar: f64,
    pub method: &'static str,
}

pub fn calc_ice_vapor_pressure(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: IceVaporPressureInput = crate::calc::parse_input(input)?;
    let p = vapour_pressure_pa(req.temperature_c)?;
    crate::calc::to_output(&IceVaporPressureOutput {
        temperature_c: req.temperature_c,
        pressure_pa: p,
        pressure_mtorr: crate::units::pa_to_mtorr(p),
        pressure_mbar: crate::units::pa_to_mbar(p),
        method: "Murphy & Koop (2005) eq. 7",
    })
}
