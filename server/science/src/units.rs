//! Unit conversions, done once at the edges. Factors are exact definitions unless noted.

/// 0 °C in kelvin.
pub const ZERO_C_IN_K: f64 = 273.15;
/// 1 Torr in pascal (101 325 / 760, exact by definition).
pub const PA_PER_TORR: f64 = 101_325.0 / 760.0;
/// 1 mbar in pascal.
pub const PA_PER_MBAR: f64 = 100.0;
/// 1 thermochemical calorie in joule.
pub const J_PER_CAL: f64 = 4.184;

pub fn c_to_k(temp_c: f64) -> f64 {
    temp_c + ZERO_C_IN_K
}

pub fn k_to_c(temp_k: f64) -> f64 {
    temp_k - ZERO_C_IN_K
}

pub fn mtorr_to_pa(p_mtorr: f64) -> f64 {
    p_mtorr * PA_PER_TORR / 1000.0
}

pub fn pa_to_mtorr(p_pa: f64) -> f64 {
    p_pa / PA_PER_TORR * 1000.0
}

pub fn torr_to_pa(p_torr: f64) -> f64 {
    p_torr * PA_PER_TORR
}

pub fn pa_to_torr(p_pa: f64) -> f64 {
    p_pa / PA_PER_TORR
}

pub fn pa_to_mbar(p_pa: f64) -> f64 {
    p_pa / PA_PER_MBAR
}

pub fn mbar_to_pa(p_mbar: f64) -> f64 {
    p_mbar * PA_PER_MBAR
}

/// cal/(s·cm²·K) → W/(m²·K): 4.184 J/cal × 10⁴ cm²/m² = 41 840.
pub fn cal_s_cm2_k_to_w_m2_k(v: f64) -> f64 {
    v * J_PER_CAL * 1.0e4
}

/// Dry-layer resistance cm²·Torr·h/g → m/s (Pa·m²·s/kg, the SI form used inside):
/// 1 cm²·Torr·h/g = 1e-4 m² × 133.322 Pa × 3600 s / 1e-3 kg = 4.7996·10⁴.
pub fn cm2_torr_h_g_to_si(v: f64) -> f64 {
    v * 1.0e-4 * PA_PER_TORR * 3600.0 / 1.0e-3
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn kv_unit_factor_matches_the_published_conversion() {
        // literature: 1 cal/(s·cm²·K) = 41 840 W/(m²·K).
        assert_relative_eq!(cal_s_cm2_k_to_w_m2_k(1.0), 41_840.0, max_relative = 1e-12);
    }

    #[test]
    fn resistance_unit_factor_matches_the_published_conversion() {
        // literature: 1 cm²·Torr·h/g = 4.7996·10⁴ m/s.
        assert_relative_eq!(cm2_torr_h_g_to_si(1.0), 4.7996e4, max_relative = 1e-4);
    }

    #[test]
    fn pressure_conversions_round_trip() {
        assert_relative_eq!(pa_to_mtorr(mtorr_to_pa(100.0)), 100.0, max_relative = 1e-12);
        assert_relative_eq!(mtorr_to_pa(100.0), 13.332_236_8, max_relative = 1e-8);
    }
}
