//! Primary drying of one vial: the quasi-steady heat and mass transfer model of Pikal
//! (Pikal 1985, J. Parenter. Sci. Technol. 39:115).
//!
//! At every moment the sublimation front sits at the temperature where the heat reaching
//! it from the shelf equals the heat carried away by sublimation:
//!
//! - heat in:     q = Av·Kv·(Ts − Tb), with Kv(Pc) = KC + KP·Pc/(1 + KD·Pc)
//! - across ice:  Tb − Tf = q·L_frozen/(Ap·k_ice)
//! - mass out:    ṁ = Ap·(P_ice(Tf) − Pc)/Rp, with Rp(l) = R0 + A1·l/(1 + A2·l)
//! - balance:     q = ΔHs·ṁ
//!
//! The frozen layer starts as the fill's ice spread over Ap; the dried layer grows by the
//! sublimed ice volume over Ap. The front temperature is found by a bracketed root solve
//! between the temperature where ice vapour pressure equals Pc and the shelf temperature.
//! Time is integrated by classic Runge–Kutta with steps sized to a fixed slice of the ice
//! height, never straddling a change of the shelf program, and the end is landed on
//! exactly by a root solve over the last step.
//!
//! The limit crossings tracked here are for the front temperature, where the dried layer
//! forms and collapse would begin; the bottom temperature (what a thermocouple in the vial
//! bottom reads, and where eutectic melting would begin) is reported beside it. The batch
//! of vials and the checks that choose between the two live in [`crate::batch`] and
//! [`crate::verdict`].
//!
//! The ice is the fill's water less the water that never freezes ([`ice_mass_g`]); with the
//! defaults (density 1 g/mL, no unfrozen water) it is the textbook fill × (1 − solids).

use serde::{Deserialize, Serialize};

use crate::error::{finite, non_negative, positive, InputError};
use crate::ice::{vapour_pressure_pa, vapour_pressure_pa_unchecked};
use crate::roots::{brent, newton_in_bracket, RootError};
use crate::units::{
    c_to_k, cal_s_cm2_k_to_w_m2_k, cm2_torr_h_g_to_si, k_to_c, mtorr_to_pa, pa_to_mtorr, pa_to_torr,
};

/// Default density of ice, g/cm³.
pub const DEFAULT_ICE_DENSITY_G_CM3: f64 = 0.917;
/// Default thermal conductivity of ice near −30 °C, W/(m·K) (≈ 2.4–2.6 at −30 to −40 °C,
/// from memory; 2.24 at 0 °C).
pub const DEFAULT_ICE_CONDUCTIVITY_W_MK: f64 = 2.45;
/// Default latent heat of sublimation of ice, J/g (Murphy & Koop 2005 eq. 5 near −30 °C).
pub const DEFAULT_SUBLIMATION_ENTHALPY_J_G: f64 = 2838.0;
/// Default density of the solution, g/mL.
pub const DEFAULT_SOLUTION_DENSITY_G_ML: f64 = 1.0;

/// Shelf temperatures accepted, °C.
const SHELF_RANGE_C: (f64, f64) = (-100.0, 100.0);
/// Highest chamber pressure accepted, mTorr (ice at 0 °C has 4 580 mTorr).
const MAX_PRESSURE_MTORR: f64 = 10_000.0;
/// A simulation that has not finished after this long is stopped, h.
pub const MAX_DRYING_TIME_H: f64 = 5_000.0;
/// Longest series handed out.
pub const MAX_SERIES_POINTS: usize = 200;
/// Bottom temperature at which the frozen product would begin to melt, K.
const MELTING_K: f64 = 273.15;

const MODEL: &str = "quasi-steady heat and mass transfer of one vial (Pikal 1985); \
    Kv(Pc) = KC + KP·Pc/(1 + KD·Pc); Rp(l) = R0 + A1·l/(1 + A2·l); ice vapour pressure \
    Murphy & Koop (2005) eq. 7";

// ---------------------------------------------------------------------------------------
// Input

/// One step of a shelf program: ramp to `target_c` at `ramp_c_per_min`, then hold.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ShelfStep {
    pub ramp_c_per_min: f64,
    pub target_c: f64,
    pub hold_min: f64,
}

/// A vial type: bottom areas and the pressure dependence of its heat transfer coefficient.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Vial {
    /// Ap, inner cross-section, cm².
    pub inner_area_cm2: f64,
    /// Av, outer bottom area, cm².
    pub outer_area_cm2: f64,
    /// KC, cal/(s·cm²·K).
    pub kc_cal_s_cm2_k: f64,
    /// KP, cal/(s·cm²·K·Torr).
    pub kp_cal_s_cm2_k_torr: f64,
    /// KD, 1/Torr.
    pub kd_per_torr: f64,
}

/// Dried-layer resistance Rp(l) = R0 + A1·l/(1 + A2·l), l in cm.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Resistance {
    pub r0_cm2_torr_h_g: f64,
    pub a1_cm_torr_h_g: f64,
    pub a2_per_cm: f64,
}

/// The product in its container, without shelf temperature and pressure: what stays the
/// same across a design space.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DryingBase {
    pub fill_volume_ml: f64,
    pub solids_mass_fraction: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub solution_density_g_ml: Option<f64>,
    /// Water that never freezes, g per g of solids (Wg′ of the freeze-concentrate times
    /// the amorphous share of the solids); 0 when omitted.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unfrozen_water_g_per_g_solids: Option<f64>,
    pub vial: Vial,
    pub resistance: Resistance,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ice_density_g_cm3: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ice_conductivity_w_mk: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_enthalpy_j_g: Option<f64>,
}

/// `primary-drying` topic input. Give either `shelf_temp_c` (held from the start) or a
/// `shelf_program`, which starts at `start_shelf_temp_c` or else at its first target.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PrimaryDryingInput {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shelf_temp_c: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shelf_program: Option<Vec<ShelfStep>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start_shelf_temp_c: Option<f64>,
    pub chamber_pressure_mtorr: f64,
    pub fill_volume_ml: f64,
    pub solids_mass_fraction: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub solution_density_g_ml: Option<f64>,
    /// Water that never freezes, g per g of solids (Wg′ of the freeze-concentrate times
    /// the amorphous share of the solids); 0 when omitted.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unfrozen_water_g_per_g_solids: Option<f64>,
    pub vial: Vial,
    pub resistance: Resistance,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ice_density_g_cm3: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ice_conductivity_w_mk: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_enthalpy_j_g: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_product_temp_c: Option<f64>,
}

impl PrimaryDryingInput {
    /// A constant shelf temperature and chamber pressure for `base`.
    pub fn constant(base: &DryingBase, shelf_temp_c: f64, chamber_pressure_mtorr: f64) -> Self {
        Self::from_base(base, Some(shelf_temp_c), None, None, chamber_pressure_mtorr)
    }

    /// A shelf program (starting at `start_shelf_temp_c`, or at its first target) for `base`.
    pub fn programmed(
        base: &DryingBase,
        program: Vec<ShelfStep>,
        start_shelf_temp_c: Option<f64>,
        chamber_pressure_mtorr: f64,
    ) -> Self {
        Self::from_base(
            base,
            None,
            Some(program),
            start_shelf_temp_c,
            chamber_pressure_mtorr,
        )
    }

    fn from_base(
        base: &DryingBase,
        shelf_temp_c: Option<f64>,
        shelf_program: Option<Vec<ShelfStep>>,
        start_shelf_temp_c: Option<f64>,
        chamber_pressure_mtorr: f64,
    ) -> Self {
        Self {
            shelf_temp_c,
            shelf_program,
            start_shelf_temp_c,
            chamber_pressure_mtorr,
            fill_volume_ml: base.fill_volume_ml,
            solids_mass_fraction: base.solids_mass_fraction,
            solution_density_g_ml: base.solution_density_g_ml,
            unfrozen_water_g_per_g_solids: base.unfrozen_water_g_per_g_solids,
            vial: base.vial,
            resistance: base.resistance,
            ice_density_g_cm3: base.ice_density_g_cm3,
            ice_conductivity_w_mk: base.ice_conductivity_w_mk,
            sublimation_enthalpy_j_g: base.sublimation_enthalpy_j_g,
            max_product_temp_c: None,
        }
    }

    /// The same input with a product temperature limit to check against.
    pub fn with_limit(mut self, max_product_temp_c: Option<f64>) -> Self {
        self.max_product_temp_c = max_product_temp_c;
        self
    }

    /// The product part of the input.
    pub fn base(&self) -> DryingBase {
        DryingBase {
            fill_volume_ml: self.fill_volume_ml,
            solids_mass_fraction: self.solids_mass_fraction,
            solution_density_g_ml: self.solution_density_g_ml,
            unfrozen_water_g_per_g_solids: self.unfrozen_water_g_per_g_solids,
            vial: self.vial,
            resistance: self.resistance,
            ice_density_g_cm3: self.ice_density_g_cm3,
            ice_conductivity_w_mk: self.ice_conductivity_w_mk,
            sublimation_enthalpy_j_g: self.sublimation_enthalpy_j_g,
        }
    }

    /// The field that names the shelf settings in errors.
    fn shelf_field(&self) -> &'static str {
        if self.shelf_program.is_some() {
            "shelf_program"
        } else {
            "shelf_temp_c"
        }
    }
}

// ---------------------------------------------------------------------------------------
// Output

/// One moment of primary drying.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SeriesPoint {
    pub time_h: f64,
    pub shelf_temp_c: f64,
    pub front_temp_c: f64,
    pub bottom_temp_c: f64,
    pub sublimation_rate_g_h: f64,
    pub dried_layer_cm: f64,
}

/// The figures of one simulation, without its time series (what a design-space cell needs).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DryingSummary {
    /// From the start of the shelf program to the last ice, h.
    pub drying_time_h: f64,
    pub peak_front_temp_c: f64,
    pub peak_front_time_h: f64,
    pub peak_bottom_temp_c: f64,
    /// Front and bottom temperature and rate once the shelf has reached the program's first
    /// target (at once for a constant shelf), or when sublimation starts if that is later.
    pub initial_front_temp_c: f64,
    pub initial_bottom_temp_c: f64,
    pub initial_sublimation_rate_g_h: f64,
    /// Highest sublimation rate of one vial, g/h.
    pub peak_sublimation_rate_g_h: f64,
    /// When sublimation starts (later than 0 when the shelf first has to warm up), h.
    pub sublimation_onset_h: f64,
    /// True when the shelf program ended with ice left; the model then keeps the last
    /// shelf temperature until the ice is gone.
    pub program_ended_before_drying: bool,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub program_end_h: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_product_temp_c: Option<f64>,
    /// Total time the front is above `max_product_temp_c`, h.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit_exceeded_h: Option<f64>,
    /// First moment the front rises above `max_product_temp_c`, h.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit_first_exceeded_h: Option<f64>,
}

/// `primary-drying` topic result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PrimaryDryingResult {
    #[serde(flatten)]
    pub summary: DryingSummary,
    pub kv_w_m2k: f64,
    /// Dried-layer resistance when the last ice goes, cm²·Torr·h/g.
    pub final_resistance_cm2_torr_h_g: f64,
    pub ice_height_cm: f64,
    pub ice_mass_g: f64,
    /// The front temperature at which ice vapour pressure equals the chamber pressure:
    /// nothing sublimes unless the shelf is warmer than this.
    pub equilibrium_front_temp_c: f64,
    pub series: Vec<SeriesPoint>,
    pub notes: Vec<String>,
    pub model: &'static str,
}

// ---------------------------------------------------------------------------------------
// Errors

/// Why the model could not dry the vial, with the values that show it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DryingStop {
    #[error(
        "nothing sublimes: at {chamber_pressure_mtorr:.0} mTorr ice must be warmer than \
         {equilibrium_temp_c:.1} °C to sublime, and the shelf is at {shelf_temp_c:.1} °C \
         {when}; raise the shelf temperature or lower the chamber pressure"
    )]
    NoSublimation {
        shelf_temp_c: f64,
        chamber_pressure_mtorr: f64,
        equilibrium_temp_c: f64,
        /// Share of the ice still in the vial, 0–1.
        ice_left: f64,
        when: String,
    },
    #[error(
        "the ice would melt: after {time_h:.2} h the vial bottom reaches {bottom_temp_c:.1} °C \
         with the shelf at {shelf_temp_c:.1} °C; lower the shelf temperature"
    )]
    IceWouldMelt {
        time_h: f64,
        shelf_temp_c: f64,
        bottom_temp_c: f64,
    },
    #[error(
        "drying would take longer than {max_h:.0} h ({ice_left_percent:.0} % of the ice is \
         left then); raise the shelf temperature or lower the chamber pressure"
    )]
    TooSlow { max_h: f64, ice_left_percent: f64 },
    #[error("the front temperature could not be solved: {0}")]
    Solver(#[from] RootError),
}

/// Bad input, or input the model cannot dry.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DryingError {
    #[error(transparent)]
    Input(#[from] InputError),
    #[error("{stop}")]
    Stop {
        stop: DryingStop,
        shelf_field: &'static str,
    },
}

impl From<DryingError> for InputError {
    fn from(e: DryingError) -> Self {
        match e {
            DryingError::Input(e) => e,
            DryingError::Stop { stop, shelf_field } => {
                let field = match stop {
                    DryingStop::NoSublimation { .. } => "chamber_pressure_mtorr",
                    _ => shelf_field,
                };
                InputError::new(field, stop.to_string())
            }
        }
    }
}

// ---------------------------------------------------------------------------------------
// The checked model

/// The product in its vial, checked and in SI.
#[derive(Debug, Clone)]
pub struct Product {
    ap_m2: f64,
    av_m2: f64,
    vial: Vial,
    resistance: Resistance,
    ice_height_m: f64,
    ice_mass_kg: f64,
    ice_density_kg_m3: f64,
    ice_conductivity: f64,
    enthalpy_j_kg: f64,
    /// Kv of this vial over the vial type's Kv (an edge vial, a vial of a spread).
    kv_factor: f64,
    /// Rp of this vial over the formulation's Rp.
    rp_factor: f64,
}

fn in_range(field: &str, value: f64, lo: f64, hi: f64, why: &str) -> Result<f64, InputError> {
    let v = finite(field, value)?;
    if (lo..=hi).contains(&v) {
        Ok(v)
    } else {
        Err(InputError::new(field, format!("{why} (got {v})")))
    }
}

impl Product {
    /// Check `base` field by field (errors name the field as spelled in the JSON).
    pub fn new(base: &DryingBase) -> Result<Self, InputError> {
        let fill_ml = positive("fill_volume_ml", base.fill_volume_ml)?;
        let solids = non_negative("solids_mass_fraction", base.solids_mass_fraction)?;
        if solids >= 1.0 {
            return Err(InputError::new(
                "solids_mass_fraction",
                format!("is a fraction of the solution mass, below 1 (got {solids})"),
            ));
        }
        let density = in_range(
            "solution_density_g_ml",
            base.solution_density_g_ml
                .unwrap_or(DEFAULT_SOLUTION_DENSITY_G_ML),
            0.8,
            1.6,
            "a solution density lies between 0.8 and 1.6 g/mL",
        )?;
        let v = &base.vial;
        let ap = positive("vial.inner_area_cm2", v.inner_area_cm2)?;
        let av = positive("vial.outer_area_cm2", v.outer_area_cm2)?;
        if ap > av {
            return Err(InputError::new(
                "vial.inner_area_cm2",
                format!("the inner area ({ap} cm²) cannot exceed the outer area ({av} cm²)"),
            ));
        }
        positive("vial.kc_cal_s_cm2_k", v.kc_cal_s_cm2_k)?;
        if v.kc_cal_s_cm2_k > 5e-3 {
            return Err(InputError::new(
                "vial.kc_cal_s_cm2_k",
                format!(
                    "is in cal/(s·cm²·K), typically a few 10⁻⁴; {} looks like another unit",
                    v.kc_cal_s_cm2_k
                ),
            ));
        }
        non_negative("vial.kp_cal_s_cm2_k_torr", v.kp_cal_s_cm2_k_torr)?;
        non_negative("vial.kd_per_torr", v.kd_per_torr)?;
        let r = &base.resistance;
        positive("resistance.r0_cm2_torr_h_g", r.r0_cm2_torr_h_g)?;
        non_negative("resistance.a1_cm_torr_h_g", r.a1_cm_torr_h_g)?;
        non_negative("resistance.a2_per_cm", r.a2_per_cm)?;
        let ice_density = in_range(
            "ice_density_g_cm3",
            base.ice_density_g_cm3.unwrap_or(DEFAULT_ICE_DENSITY_G_CM3),
            0.85,
            1.0,
            "the density of ice lies near 0.917 g/cm³",
        )?;
        let conductivity = in_range(
            "ice_conductivity_w_mk",
            base.ice_conductivity_w_mk
                .unwrap_or(DEFAULT_ICE_CONDUCTIVITY_W_MK),
            0.5,
            5.0,
            "the conductivity of ice lies near 2.2–2.6 W/(m·K)",
        )?;
        let enthalpy = in_range(
            "sublimation_enthalpy_j_g",
            base.sublimation_enthalpy_j_g
                .unwrap_or(DEFAULT_SUBLIMATION_ENTHALPY_J_G),
            2000.0,
            3500.0,
            "the sublimation enthalpy of ice lies near 2840 J/g",
        )?;
        let unfrozen = in_range(
            "unfrozen_water_g_per_g_solids",
            base.unfrozen_water_g_per_g_solids.unwrap_or(0.0),
            0.0,
            1.0,
            "the unfrozen water of a freeze-concentrate lies between 0 and 1 g per g of solids \
             (sucrose about 0.2–0.25)",
        )?;
        let ice_mass_g = ice_mass_g(fill_ml, density, solids, unfrozen);
        if ice_mass_g <= 0.0 {
            return Err(InputError::new(
                "unfrozen_water_g_per_g_solids",
                format!("leaves no water to freeze (got {unfrozen} g/g at {solids} solids)"),
            ));
        }
        let ice_height_cm = ice_mass_g / ice_density / ap;
        Ok(Self {
            ap_m2: ap * 1e-4,
            av_m2: av * 1e-4,
            vial: *v,
            resistance: *r,
            ice_height_m: ice_height_cm * 1e-2,
            ice_mass_kg: ice_mass_g * 1e-3,
            ice_density_kg_m3: ice_density * 1e3,
            ice_conductivity: conductivity,
            enthalpy_j_kg: enthalpy * 1e3,
            kv_factor: 1.0,
            rp_factor: 1.0,
        })
    }

    /// The same product in a vial whose Kv is `kv_factor` × and whose dried layer resists
    /// `rp_factor` × the nominal (factors checked by the caller: finite and positive).
    pub fn with_factors(&self, kv_factor: f64, rp_factor: f64) -> Self {
        Self {
            kv_factor: self.kv_factor * kv_factor,
            rp_factor: self.rp_factor * rp_factor,
            ..self.clone()
        }
    }

    /// Kv at chamber pressure `pc_pa`, W/(m²·K).
    pub fn kv_w_m2k(&self, pc_pa: f64) -> f64 {
        let pc_torr = pa_to_torr(pc_pa);
        let v = &self.vial;
        self.kv_factor
            * cal_s_cm2_k_to_w_m2_k(
                v.kc_cal_s_cm2_k
                    + v.kp_cal_s_cm2_k_torr * pc_torr / (1.0 + v.kd_per_torr * pc_torr),
            )
    }

    /// Rp for a dried layer `dried_m` thick, cm²·Torr·h/g.
    pub fn resistance_cgs(&self, dried_m: f64) -> f64 {
        let l_cm = dried_m * 100.0;
        let r = &self.resistance;
        self.rp_factor * (r.r0_cm2_torr_h_g + r.a1_cm_torr_h_g * l_cm / (1.0 + r.a2_per_cm * l_cm))
    }

    pub fn ice_height_cm(&self) -> f64 {
        self.ice_height_m * 100.0
    }

    pub fn ice_mass_g(&self) -> f64 {
        self.ice_mass_kg * 1e3
    }

    pub fn outer_area_cm2(&self) -> f64 {
        self.av_m2 * 1e4
    }

    /// Ap, the inner cross-section the ice fills, cm².
    pub fn inner_area_cm2(&self) -> f64 {
        self.ap_m2 * 1e4
    }

    pub fn ice_density_g_cm3(&self) -> f64 {
        self.ice_density_kg_m3 * 1e-3
    }

    pub fn ice_conductivity_w_mk(&self) -> f64 {
        self.ice_conductivity
    }

    pub fn sublimation_enthalpy_j_g(&self) -> f64 {
        self.enthalpy_j_kg * 1e-3
    }
}

/// Ice formed in one vial, g: the fill's water less the water that never freezes,
/// fill × ρ × (1 − ws) − Wg′ × fill × ρ × ws, for a fill in mL, a solution density ρ in g/mL,
/// a solids mass fraction ws and Wg′ in g of unfrozen water per g of solids (the water held
/// by the maximally freeze-concentrated solute; Roos 1993 for sucrose, about 0.2–0.25 g/g,
/// from memory). May be negative for impossible inputs; the caller checks.
pub fn ice_mass_g(fill_ml: f64, density_g_ml: f64, solids_fraction: f64, unfrozen: f64) -> f64 {
    let mass = fill_ml * density_g_ml;
    mass * (1.0 - solids_fraction) - unfrozen * mass * solids_fraction
}

/// Density of an aqueous solution holding `solids_mg_ml` of solute per mL of solution whose
/// partial specific volume is `partial_specific_volume_ml_g`, g/mL: each mL holds the solute
/// and 1 − c·v̄ mL of water (water's own partial volume taken as 1 mL/g), so
/// ρ = 1 + c·(1 − v̄). Sucrose has v̄ ≈ 0.63 mL/g, giving ≈ 1.055 g/mL at 150 mg/mL
/// (from memory).
pub fn solution_density_g_ml(solids_mg_ml: f64, partial_specific_volume_ml_g: f64) -> f64 {
    1.0 + solids_mg_ml / 1000.0 * (1.0 - partial_specific_volume_ml_g)
}

/// One ramp or hold of the shelf, in seconds and kelvin.
#[derive(Debug, Clone, Copy)]
struct Segment {
    start_s: f64,
    end_s: f64,
    start_k: f64,
    slope_k_s: f64,
}

impl Segment {
    fn temp_k(&self, t_s: f64) -> f64 {
        self.start_k + self.slope_k_s * (t_s - self.start_s)
    }
}

/// The shelf temperature over time. The last segment always holds for ever.
#[derive(Debug, Clone)]
pub struct ShelfPlan {
    segments: Vec<Segment>,
    program_end_s: Option<f64>,
    /// When the shelf first reaches the program's first target (the end of a first ramp).
    settled_s: f64,
}

impl ShelfPlan {
    /// The shelf held at `temp_c` from the start.
    pub fn constant(temp_c: f64) -> Self {
        Self {
            segments: vec![Segment {
                start_s: 0.0,
                end_s: f64::INFINITY,
                start_k: c_to_k(temp_c),
                slope_k_s: 0.0,
            }],
            program_end_s: None,
            settled_s: 0.0,
        }
    }

    /// From `start_c`, ramp to `target_c` at `ramp_c_per_min` and hold there for ever.
    pub fn ramp_then_hold(start_c: f64, ramp_c_per_min: f64, target_c: f64) -> Self {
        let step = ShelfStep {
            ramp_c_per_min,
            target_c,
            hold_min: f64::INFINITY,
        };
        Self::from_steps(start_c, &[step])
    }

    /// A program of ramps and holds starting at `start_c` (checked by the caller). After the
    /// last finite hold the shelf keeps its last temperature.
    fn from_steps(start_c: f64, steps: &[ShelfStep]) -> Self {
        let mut segments = Vec::with_capacity(2 * steps.len() + 1);
        let (mut t, mut temp_k) = (0.0, c_to_k(start_c));
        let mut settled_s = None;
        for step in steps {
            let target_k = c_to_k(step.target_c);
            let change = target_k - temp_k;
            if change.abs() > 1e-9 {
                let rate = step.ramp_c_per_min.abs() / 60.0;
                let duration = change.abs() / rate;
                segments.push(Segment {
                    start_s: t,
                    end_s: t + duration,
                    start_k: temp_k,
                    slope_k_s: rate.copysign(change),
                });
                t += duration;
            }
            settled_s.get_or_insert(t);
            temp_k = target_k;
            let hold_s = step.hold_min * 60.0;
            if hold_s > 0.0 {
                segments.push(Segment {
                    start_s: t,
                    end_s: t + hold_s,
                    start_k: temp_k,
                    slope_k_s: 0.0,
                });
                t += hold_s;
            }
        }
        let program_end_s = t.is_finite().then_some(t);
        if t.is_finite() {
            segments.push(Segment {
                start_s: t,
                end_s: f64::INFINITY,
                start_k: temp_k,
                slope_k_s: 0.0,
            });
        }
        Self {
            segments,
            program_end_s,
            settled_s: settled_s.unwrap_or(0.0),
        }
    }

    /// The warmest temperature the shelf reaches, K.
    fn max_k(&self) -> f64 {
        self.segments
            .iter()
            .map(|s| s.start_k.max(s.temp_k(s.end_s.min(1e12))))
            .fold(f64::NEG_INFINITY, f64::max)
    }
}

/// Check the shelf settings of `input` and turn them into a plan.
fn shelf_plan(input: &PrimaryDryingInput) -> Result<ShelfPlan, InputError> {
    let (lo, hi) = SHELF_RANGE_C;
    let shelf_temp = |field: &str, v: f64| {
        in_range(
            field,
            v,
            lo,
            hi,
            &format!("a shelf temperature lies between {lo} and {hi} °C"),
        )
    };
    match (&input.shelf_temp_c, &input.shelf_program) {
        (Some(_), Some(_)) => Err(InputError::new(
            "shelf_program",
            "give either shelf_temp_c or shelf_program, not both",
        )),
        (None, None) => Err(InputError::new(
            "shelf_temp_c",
            "a shelf temperature (shelf_temp_c) or a shelf_program is needed",
        )),
        (Some(temp), None) => {
            if input.start_shelf_temp_c.is_some() {
                return Err(InputError::new(
                    "start_shelf_temp_c",
                    "a starting shelf temperature needs a shelf_program with a ramp rate",
                ));
            }
            Ok(ShelfPlan::constant(shelf_temp("shelf_temp_c", *temp)?))
        }
        (None, Some(steps)) => {
            let Some(first) = steps.first() else {
                return Err(InputError::new("shelf_program", "needs at least one step"));
            };
            let start = match input.start_shelf_temp_c {
                Some(t) => shelf_temp("start_shelf_temp_c", t)?,
                None => first.target_c,
            };
            let mut current = start;
            for (i, step) in steps.iter().enumerate() {
                let field = |name: &str| format!("shelf_program[{i}].{name}");
                let target = shelf_temp(&field("target_c"), step.target_c)?;
                let ramp = non_negative(&field("ramp_c_per_min"), step.ramp_c_per_min)?;
                if ramp <= 0.0 && (target - current).abs() > 1e-9 {
                    return Err(InputError::new(
                        field("ramp_c_per_min"),
                        format!("must be greater than zero to go from {current} to {target} °C"),
                    ));
                }
                non_negative(&field("hold_min"), step.hold_min)?;
                current = target;
            }
            Ok(ShelfPlan::from_steps(start, steps))
        }
    }
}

/// Shelf plan and chamber pressure, with what follows from the pressure.
#[derive(Debug, Clone)]
pub struct Conditions {
    plan: ShelfPlan,
    pc_pa: f64,
    kv_w_m2k: f64,
    equilibrium_k: f64,
    limit_k: Option<f64>,
}

/// Check a chamber pressure in mTorr and return it in Pa.
pub fn chamber_pressure_pa(field: &str, p_mtorr: f64) -> Result<f64, InputError> {
    let p = positive(field, p_mtorr)?;
    if p < 1.0 {
        return Err(InputError::new(
            field,
            format!("primary drying runs above 1 mTorr (got {p} mTorr)"),
        ));
    }
    if p > MAX_PRESSURE_MTORR {
        return Err(InputError::new(
            field,
            format!("primary drying runs far below {MAX_PRESSURE_MTORR} mTorr (got {p} mTorr)"),
        ));
    }
    Ok(mtorr_to_pa(p))
}

/// Check a product temperature limit in °C and return it in K.
pub fn product_limit_k(field: &str, temp_c: f64) -> Result<f64, InputError> {
    in_range(
        field,
        temp_c,
        -100.0,
        0.0,
        "a product temperature limit lies below 0 °C",
    )
    .map(c_to_k)
}

/// The temperature at which ice has vapour pressure `p_pa`, K.
fn equilibrium_temp_k(p_pa: f64) -> Result<f64, RootError> {
    let ln_p = p_pa.ln();
    brent(
        |t| vapour_pressure_pa_unchecked(t).ln() - ln_p,
        100.0,
        400.0,
        1e-10,
    )
    .map(|r| r.x)
}

impl Conditions {
    /// `plan` at chamber pressure `pc_pa` (already checked), optionally with a limit in K.
    pub fn new(product: &Product, plan: ShelfPlan, pc_pa: f64, limit_k: Option<f64>) -> Self {
        Self {
            plan,
            pc_pa,
            kv_w_m2k: product.kv_w_m2k(pc_pa),
            // The bracket 100–400 K spans every pressure that `chamber_pressure_pa` accepts.
            equilibrium_k: equilibrium_temp_k(pc_pa).unwrap_or(f64::NAN),
            limit_k,
        }
    }

    pub fn kv_w_m2k(&self) -> f64 {
        self.kv_w_m2k
    }

    /// The same shelf plan, pressure and limit for another vial of the product.
    pub fn for_product(&self, product: &Product) -> Self {
        Self::new(product, self.plan.clone(), self.pc_pa, self.limit_k)
    }

    pub fn chamber_pressure_pa(&self) -> f64 {
        self.pc_pa
    }

    pub fn equilibrium_temp_c(&self) -> f64 {
        k_to_c(self.equilibrium_k)
    }
}

// ---------------------------------------------------------------------------------------
// The heat and mass balance at one moment

#[derive(Debug, Clone, Copy)]
struct Balance {
    front_k: f64,
    bottom_k: f64,
    rate_kg_s: f64,
}

/// d(ln P_ice)/dT of Murphy & Koop (2005) eq. 7 (the exponent of
/// [`vapour_pressure_pa_unchecked`]), 1/K.
fn vapour_pressure_log_slope(temp_k: f64) -> f64 {
    5723.265 / (temp_k * temp_k) + 3.53068 / temp_k - 0.00728332
}

/// Front and bottom temperature and sublimation rate with the shelf at `shelf_k` and a dried
/// layer `dried_m` thick; `guess_k` is a front temperature to start the solve from.
fn balance(
    p: &Product,
    c: &Conditions,
    shelf_k: f64,
    dried_m: f64,
    guess_k: f64,
) -> Result<Balance, RootError> {
    if shelf_k <= c.equilibrium_k + 1e-9 {
        // Nothing sublimes; with no heat flowing the product sits at the shelf temperature.
        return Ok(Balance {
            front_k: shelf_k,
            bottom_k: shelf_k,
            rate_kg_s: 0.0,
        });
    }
    let frozen_m = (p.ice_height_m - dried_m).max(0.0);
    let rp_si = cm2_torr_h_g_to_si(p.resistance_cgs(dried_m.min(p.ice_height_m)));
    let heat_conductance = p.av_m2 * c.kv_w_m2k;
    let ice_factor = 1.0 + heat_conductance * frozen_m / (p.ap_m2 * p.ice_conductivity);
    // Heat balance divided by Av·Kv, in kelvin: (Ts − Tf) − s·(P_ice(Tf) − Pc) = 0. It falls
    // with Tf: positive just below the equilibrium temperature, negative at the shelf.
    let s = p.enthalpy_j_kg * p.ap_m2 * ice_factor / (rp_si * heat_conductance);
    let residual = |tf: f64| {
        let vp = vapour_pressure_pa_unchecked(tf);
        (
            (shelf_k - tf) - s * (vp - c.pc_pa),
            -1.0 - s * vp * vapour_pressure_log_slope(tf),
        )
    };
    let front_k = newton_in_bracket(
        residual,
        c.equilibrium_k - 1e-3,
        shelf_k,
        guess_k,
        true,
        1e-6,
    )?
    .x;
    let rate = p.ap_m2 * (vapour_pressure_pa_unchecked(front_k) - c.pc_pa).max(0.0) / rp_si;
    let heat = p.enthalpy_j_kg * rate;
    Ok(Balance {
        front_k,
        bottom_k: front_k + heat * frozen_m / (p.ap_m2 * p.ice_conductivity),
        rate_kg_s: rate,
    })
}

// ---------------------------------------------------------------------------------------
// Time integration

/// Step control. The default (used for summaries) changes the drying time by about 10⁻⁶
/// when halved; [`Resolution::for_series`] gives more points to draw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Resolution {
    /// Number of slices of the ice height taken as steps.
    pub ice_steps: u32,
    /// Largest shelf temperature change within one step during a ramp, K.
    pub max_shelf_change_k: f64,
}

impl Default for Resolution {
    fn default() -> Self {
        Self {
            ice_steps: 16,
            max_shelf_change_k: 2.0,
        }
    }
}

impl Resolution {
    /// Finer steps for a series worth drawing.
    pub fn for_series() -> Self {
        Self {
            ice_steps: 60,
            max_shelf_change_k: 1.0,
        }
    }

    /// Steps half as long.
    pub fn halved(self) -> Self {
        Self {
            ice_steps: self.ice_steps * 2,
            max_shelf_change_k: self.max_shelf_change_k / 2.0,
        }
    }
}

/// One recorded moment, in SI.
#[derive(Debug, Clone, Copy)]
struct Moment {
    t_s: f64,
    shelf_k: f64,
    state: Balance,
    dried_m: f64,
}

/// Peaks, onset and limit crossings, gathered moment by moment.
struct Tracker {
    limit_k: Option<f64>,
    settled_s: f64,
    onset_s: Option<f64>,
    previous: Option<Moment>,
    initial: Option<Moment>,
    peak_front: Option<(f64, f64)>,
    peak_bottom_k: f64,
    peak_rate: f64,
    first_exceeded_s: Option<f64>,
    exceeded_s: f64,
}

impl Tracker {
    fn new(limit_k: Option<f64>, settled_s: f64) -> Self {
        Self {
            limit_k,
            settled_s,
            onset_s: None,
            previous: None,
            initial: None,
            peak_front: None,
            peak_bottom_k: f64::NEG_INFINITY,
            peak_rate: 0.0,
            first_exceeded_s: None,
            exceeded_s: 0.0,
        }
    }

    fn push(&mut self, m: Moment) {
        if m.state.rate_kg_s > 0.0 {
            self.onset_s.get_or_insert(m.t_s);
            if self.initial.is_none() && m.t_s >= self.settled_s {
                self.initial = Some(m);
            }
        }
        if self.peak_front.is_none_or(|(_, k)| m.state.front_k > k) {
            self.peak_front = Some((m.t_s, m.state.front_k));
        }
        self.peak_bottom_k = self.peak_bottom_k.max(m.state.bottom_k);
        self.peak_rate = self.peak_rate.max(m.state.rate_kg_s);
        if let Some(limit) = self.limit_k {
            let now = m.state.front_k - limit;
            match self.previous {
                None if now > 0.0 => self.first_exceeded_s = Some(m.t_s),
                None => {}
                Some(prev) => {
                    let before = prev.state.front_k - limit;
                    let dt = m.t_s - prev.t_s;
                    // Linear between moments: the share of the interval spent above.
                    let above = match (before > 0.0, now > 0.0) {
                        (true, true) => 1.0,
                        (false, false) => 0.0,
                        (false, true) => now / (now - before),
                        (true, false) => before / (before - now),
                    };
                    if now > 0.0 && self.first_exceeded_s.is_none() {
                        self.first_exceeded_s = Some(m.t_s - above * dt);
                    }
                    self.exceeded_s += above * dt;
                }
            }
        }
        self.previous = Some(m);
    }

    fn summary(&self, end_s: f64, plan: &ShelfPlan) -> DryingSummary {
        let h = |s: f64| s / 3600.0;
        let g_h = |kg_s: f64| kg_s * 3.6e6;
        // The run always pushes a sublimating moment before it finishes.
        let initial = self.initial.or(self.previous);
        let (i_front, i_bottom, i_rate) = initial.map_or((0.0, 0.0, 0.0), |m| {
            (m.state.front_k, m.state.bottom_k, m.state.rate_kg_s)
        });
        let (peak_t, peak_k) = self.peak_front.unwrap_or((0.0, i_front));
        let ended = plan.program_end_s.is_some_and(|t| t < end_s);
        DryingSummary {
            drying_time_h: h(end_s),
            peak_front_temp_c: k_to_c(peak_k),
            peak_front_time_h: h(peak_t),
            peak_bottom_temp_c: k_to_c(self.peak_bottom_k),
            initial_front_temp_c: k_to_c(i_front),
            initial_bottom_temp_c: k_to_c(i_bottom),
            initial_sublimation_rate_g_h: g_h(i_rate),
            peak_sublimation_rate_g_h: g_h(self.peak_rate),
            sublimation_onset_h: h(self.onset_s.unwrap_or(0.0)),
            program_ended_before_drying: ended,
            program_end_h: plan.program_end_s.map(h),
            max_product_temp_c: self.limit_k.map(k_to_c),
            limit_exceeded_h: self.limit_k.map(|_| h(self.exceeded_s)),
            limit_first_exceeded_h: self.first_exceeded_s.map(h),
        }
    }
}

/// Run the model to the last ice, calling `record` with every moment computed.
fn integrate(
    p: &Product,
    c: &Conditions,
    res: Resolution,
    mut record: impl FnMut(&Moment),
) -> Result<DryingSummary, DryingStop> {
    let height = p.ice_height_m;
    let ice_per_metre = p.ice_density_kg_m3 * p.ap_m2; // kg of ice per metre of layer
    let slice = height / f64::from(res.ice_steps.max(1));
    let max_s = MAX_DRYING_TIME_H * 3600.0;
    let mut tracker = Tracker::new(c.limit_k, c.plan.settled_s);
    let mut push = |m: Moment, tracker: &mut Tracker| -> Result<(), DryingStop> {
        if m.state.bottom_k >= MELTING_K {
            return Err(DryingStop::IceWouldMelt {
                time_h: m.t_s / 3600.0,
                shelf_temp_c: k_to_c(m.shelf_k),
                bottom_temp_c: k_to_c(m.state.bottom_k),
            });
        }
        record(&m);
        tracker.push(m);
        Ok(())
    };
    let (mut t, mut dried, mut seg_index) = (0.0_f64, 0.0_f64, 0_usize);
    let mut guess_k = c.plan.segments[0].start_k;
    // Bounded so that no input can spin for ever; the step rules need far fewer.
    for _ in 0..100_000 {
        while t >= c.plan.segments[seg_index].end_s {
            seg_index += 1;
        }
        let seg = c.plan.segments[seg_index];
        let shelf_k = seg.temp_k(t);
        let here = balance(p, c, shelf_k, dried, guess_k)?;
        guess_k = here.front_k;
        push(
            Moment {
                t_s: t,
                shelf_k,
                state: here,
                dried_m: dried,
            },
            &mut tracker,
        )?;
        if t > max_s {
            return Err(DryingStop::TooSlow {
                max_h: MAX_DRYING_TIME_H,
                ice_left_percent: 100.0 * (1.0 - dried / height),
            });
        }
        if here.rate_kg_s <= 0.0 {
            // Wait for the shelf: to the moment it passes the equilibrium temperature on an
            // upward ramp, else to the end of this segment.
            let warm_enough = c.equilibrium_k + 1e-6;
            t = if seg.slope_k_s > 0.0 && shelf_k < warm_enough {
                (seg.start_s + (warm_enough - seg.start_k) / seg.slope_k_s).min(seg.end_s)
            } else {
                seg.end_s
            };
            if t.is_infinite() {
                return Err(no_sublimation(c, shelf_k, dried / height, seg.start_s));
            }
            continue;
        }
        let mut dt = slice * ice_per_metre / here.rate_kg_s;
        if seg.slope_k_s.abs() > 0.0 {
            dt = dt.min(res.max_shelf_change_k / seg.slope_k_s.abs());
        }
        let to_segment_end = seg.end_s - t;
        let reaches_segment_end = dt >= to_segment_end;
        dt = dt.min(to_segment_end);
        let next = dried + dt * rk4_step(p, c, &seg, t, dried, dt, here)? / ice_per_metre;
        if next < height {
            // Land exactly on a change of program so that no sliver of a step follows.
            t = if reaches_segment_end {
                seg.end_s
            } else {
                t + dt
            };
            dried = next;
            continue;
        }
        // The last ice goes within this step: find when.
        let mut failure = None;
        let remaining = |h: f64| match rk4_step(p, c, &seg, t, dried, h, here) {
            Ok(rate) => dried + h * rate / ice_per_metre - height,
            Err(e) => {
                failure = Some(e);
                f64::NAN
            }
        };
        let root = brent(remaining, 0.0, dt, dt * 1e-8);
        if let Some(e) = failure {
            return Err(e.into());
        }
        let end = t + root?.x;
        if end > max_s {
            return Err(DryingStop::TooSlow {
                max_h: MAX_DRYING_TIME_H,
                ice_left_percent: 100.0 * (1.0 - dried / height),
            });
        }
        let shelf_k = seg.temp_k(end);
        let last = balance(p, c, shelf_k, height, guess_k)?;
        push(
            Moment {
                t_s: end,
                shelf_k,
                state: last,
                dried_m: height,
            },
            &mut tracker,
        )?;
        return Ok(tracker.summary(end, &c.plan));
    }
    Err(DryingStop::TooSlow {
        max_h: t / 3600.0,
        ice_left_percent: 100.0 * (1.0 - dried / height),
    })
}

/// The mean sublimation rate over a classic Runge–Kutta step of `h` seconds from
/// (`t`, `dried`), given the rate at its start.
fn rk4_step(
    p: &Product,
    c: &Conditions,
    seg: &Segment,
    t: f64,
    dried: f64,
    h: f64,
    k1: Balance,
) -> Result<f64, RootError> {
    let per_metre = p.ice_density_kg_m3 * p.ap_m2;
    let rate_at = |dt: f64, l: f64, guess: f64| balance(p, c, seg.temp_k(t + dt), l, guess);
    let b2 = rate_at(
        h / 2.0,
        dried + h / 2.0 * k1.rate_kg_s / per_metre,
        k1.front_k,
    )?;
    let b3 = rate_at(
        h / 2.0,
        dried + h / 2.0 * b2.rate_kg_s / per_metre,
        b2.front_k,
    )?;
    let b4 = rate_at(h, dried + h * b3.rate_kg_s / per_metre, b3.front_k)?;
    let (k1, k2, k3, k4) = (k1.rate_kg_s, b2.rate_kg_s, b3.rate_kg_s, b4.rate_kg_s);
    Ok((k1 + 2.0 * k2 + 2.0 * k3 + k4) / 6.0)
}

fn no_sublimation(c: &Conditions, shelf_k: f64, dried_share: f64, since_s: f64) -> DryingStop {
    let when = if dried_share <= 0.0 {
        "at its warmest".to_string()
    } else {
        format!(
            "from {:.2} h on, with {:.0} % of the ice left",
            since_s / 3600.0,
            100.0 * (1.0 - dried_share)
        )
    };
    DryingStop::NoSublimation {
        shelf_temp_c: k_to_c(shelf_k),
        chamber_pressure_mtorr: pa_to_mtorr(c.pc_pa),
        equilibrium_temp_c: k_to_c(c.equilibrium_k),
        ice_left: 1.0 - dried_share,
        when,
    }
}

/// The model's figures with every moment it computed (not thinned), for callers that
/// combine several vials.
pub fn run_recording(
    product: &Product,
    conditions: &Conditions,
    resolution: Resolution,
) -> Result<(DryingSummary, Vec<SeriesPoint>), DryingStop> {
    let max_k = conditions.plan.max_k();
    if vapour_pressure_pa_unchecked(max_k) <= conditions.pc_pa {
        return Err(no_sublimation(conditions, max_k, 0.0, 0.0));
    }
    let mut points = Vec::with_capacity(64);
    let summary = integrate(product, conditions, resolution, |m| {
        points.push(SeriesPoint {
            time_h: m.t_s / 3600.0,
            shelf_temp_c: k_to_c(m.shelf_k),
            front_temp_c: k_to_c(m.state.front_k),
            bottom_temp_c: k_to_c(m.state.bottom_k),
            sublimation_rate_g_h: m.state.rate_kg_s * 3.6e6,
            dried_layer_cm: m.dried_m * 100.0,
        })
    })?;
    Ok((summary, points))
}

/// The model's figures without a series: the cheap form for grids and searches.
pub fn run(product: &Product, conditions: &Conditions) -> Result<DryingSummary, DryingStop> {
    run_at(product, conditions, Resolution::default())
}

/// As [`run`], with the step control given.
pub fn run_at(
    product: &Product,
    conditions: &Conditions,
    resolution: Resolution,
) -> Result<DryingSummary, DryingStop> {
    if vapour_pressure_pa_unchecked(conditions.plan.max_k()) <= conditions.pc_pa {
        return Err(no_sublimation(
            conditions,
            conditions.plan.max_k(),
            0.0,
            0.0,
        ));
    }
    integrate(product, conditions, resolution, |_| {})
}

// ---------------------------------------------------------------------------------------
// Public entry points

/// Check `input` and build the model.
pub fn prepare(input: &PrimaryDryingInput) -> Result<(Product, Conditions), InputError> {
    let product = Product::new(&input.base())?;
    let plan = shelf_plan(input)?;
    let pc = chamber_pressure_pa("chamber_pressure_mtorr", input.chamber_pressure_mtorr)?;
    let limit = input
        .max_product_temp_c
        .map(|t| product_limit_k("max_product_temp_c", t))
        .transpose()?;
    let conditions = Conditions::new(&product, plan, pc, limit);
    Ok((product, conditions))
}

/// The figures of one simulation without its series.
pub fn simulate_summary(input: &PrimaryDryingInput) -> Result<DryingSummary, DryingError> {
    let (product, conditions) = prepare(input)?;
    run(&product, &conditions).map_err(|stop| DryingError::Stop {
        stop,
        shelf_field: input.shelf_field(),
    })
}

/// Simulate primary drying to the last ice, keeping the model's refusals typed.
pub fn simulate_checked(input: &PrimaryDryingInput) -> Result<PrimaryDryingResult, DryingError> {
    simulate_at(input, Resolution::for_series())
}

/// Simulate primary drying to the last ice. An input the model cannot dry (nothing
/// sublimes, the ice would melt) is refused naming the field to change.
pub fn simulate(input: &PrimaryDryingInput) -> Result<PrimaryDryingResult, InputError> {
    simulate_checked(input).map_err(InputError::from)
}

/// As [`simulate_checked`], with the step control given.
pub fn simulate_at(
    input: &PrimaryDryingInput,
    resolution: Resolution,
) -> Result<PrimaryDryingResult, DryingError> {
    let (product, conditions) = prepare(input)?;
    let stop = |stop| DryingError::Stop {
        stop,
        shelf_field: input.shelf_field(),
    };
    let max_k = conditions.plan.max_k();
    if vapour_pressure_pa_unchecked(max_k) <= conditions.pc_pa {
        return Err(stop(no_sublimation(&conditions, max_k, 0.0, 0.0)));
    }
    let mut moments = Vec::with_capacity(64);
    let summary =
        integrate(&product, &conditions, resolution, |m| moments.push(*m)).map_err(stop)?;
    let series = downsample(&moments, MAX_SERIES_POINTS)
        .map(|m| SeriesPoint {
            time_h: m.t_s / 3600.0,
            shelf_temp_c: k_to_c(m.shelf_k),
            front_temp_c: k_to_c(m.state.front_k),
            bottom_temp_c: k_to_c(m.state.bottom_k),
            sublimation_rate_g_h: m.state.rate_kg_s * 3.6e6,
            dried_layer_cm: m.dried_m * 100.0,
        })
        .collect();
    let notes = notes(&summary, &conditions, moments.last().map(|m| m.shelf_k));
    Ok(PrimaryDryingResult {
        kv_w_m2k: conditions.kv_w_m2k,
        final_resistance_cm2_torr_h_g: product.resistance_cgs(product.ice_height_m),
        ice_height_cm: product.ice_height_cm(),
        ice_mass_g: product.ice_mass_g(),
        equilibrium_front_temp_c: conditions.equilibrium_temp_c(),
        series,
        notes,
        model: MODEL,
        summary,
    })
}

/// At most `max` of `moments`, evenly spread, always keeping the first and the last.
pub(crate) fn downsample<T>(moments: &[T], max: usize) -> impl Iterator<Item = &T> {
    let stride = moments.len().div_ceil(max.saturating_sub(1).max(1)).max(1);
    let last = moments.len().saturating_sub(1);
    moments
        .iter()
        .enumerate()
        .filter(move |(i, _)| i % stride == 0 && last - i >= stride / 2 || *i == last)
        .map(|(_, m)| m)
}

fn notes(s: &DryingSummary, c: &Conditions, last_shelf_k: Option<f64>) -> Vec<String> {
    let mut notes = Vec::new();
    if s.sublimation_onset_h > 0.0 {
        notes.push(format!(
            "Sublimation starts at {:.2} h, when the shelf passes {:.1} °C, the temperature at \
             which ice vapour pressure equals the chamber pressure.",
            s.sublimation_onset_h,
            c.equilibrium_temp_c()
        ));
    }
    if let (true, Some(end), Some(shelf)) =
        (s.program_ended_before_drying, s.program_end_h, last_shelf_k)
    {
        notes.push(format!(
            "The shelf program ends at {end:.2} h with ice left; the model keeps the last shelf \
             temperature, {:.1} °C, until the ice is gone at {:.2} h.",
            k_to_c(shelf),
            s.drying_time_h
        ));
    }
    if let (Some(limit), Some(first), Some(total)) = (
        s.max_product_temp_c,
        s.limit_first_exceeded_h,
        s.limit_exceeded_h,
    ) {
        notes.push(format!(
            "The front rises above the limit of {limit:.1} °C at {first:.2} h and stays above it \
             for {total:.2} h in all, peaking at {:.1} °C.",
            s.peak_front_temp_c
        ));
    }
    notes
}

/// The ice vapour pressure at `temp_c` in mTorr, refusing temperatures outside the equation.
pub fn ice_vapour_pressure_mtorr(field: &str, temp_c: f64) -> Result<f64, InputError> {
    vapour_pressure_pa(temp_c)
        .map(pa_to_mtorr)
        .map_err(|e| InputError::new(field, e.message))
}

/// `primary-drying` topic.
pub fn calc_primary_drying(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let input: PrimaryDryingInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&simulate(&input)?)
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;
    use serde_json::json;

    /// A 10 mL tubing vial. Areas are typical of that size; KC, KP and KD are typical
    /// magnitudes for tubing vials (from memory, not one vial's published set).
    pub(crate) fn tubing_vial_10ml() -> Vial {
        Vial {
            inner_area_cm2: 3.80,
            outer_area_cm2: 4.71,
            kc_cal_s_cm2_k: 3.0e-4,
            kp_cal_s_cm2_k_torr: 1.5e-3,
            kd_per_torr: 1.0,
        }
    }

    /// 5 % sucrose, 4 mL in a 10 mL tubing vial; Rp for 5 % sucrose R0 ≈ 1.4, A1 ≈ 16,
    /// A2 ≈ 0 cm²·Torr·h/g (literature value, from memory).
    pub(crate) fn sucrose_5_percent() -> DryingBase {
        DryingBase {
            fill_volume_ml: 4.0,
            solids_mass_fraction: 0.05,
            solution_density_g_ml: None,
            unfrozen_water_g_per_g_solids: None,
            vial: tubing_vial_10ml(),
            resistance: Resistance {
                r0_cm2_torr_h_g: 1.4,
                a1_cm_torr_h_g: 16.0,
                a2_per_cm: 0.0,
            },
            ice_density_g_cm3: None,
            ice_conductivity_w_mk: None,
            sublimation_enthalpy_j_g: None,
        }
    }

    fn at(shelf_c: f64, pc_mtorr: f64) -> PrimaryDryingInput {
        PrimaryDryingInput::constant(&sucrose_5_percent(), shelf_c, pc_mtorr)
    }

    fn time_averaged_front_c(r: &PrimaryDryingResult) -> f64 {
        let s = &r.series;
        let area: f64 = s
            .windows(2)
            .map(|w| 0.5 * (w[0].front_temp_c + w[1].front_temp_c) * (w[1].time_h - w[0].time_h))
            .sum();
        area / r.summary.drying_time_h
    }

    #[test]
    fn kv_of_a_tubing_vial_at_100_mtorr_is_15_to_25_w_m2k() {
        // typical tubing vial Kv at 100 mTorr is 15–25 W/(m²·K) (from memory).
        let product = Product::new(&sucrose_5_percent()).unwrap();
        let kv = product.kv_w_m2k(mtorr_to_pa(100.0));
        assert!((15.0..=25.0).contains(&kv), "Kv = {kv}");
        // KC + KP·Pc/(1 + KD·Pc) by hand: 3.0e-4 + 1.5e-3·0.1/1.1 cal/(s·cm²·K) × 41 840.
        assert_relative_eq!(kv, (3.0e-4 + 1.5e-4 / 1.1) * 41_840.0, max_relative = 1e-9);
    }

    #[test]
    fn the_ice_height_follows_from_the_fill() {
        // 4 mL × 1.0 g/mL × 0.95 = 3.8 g ice; / 0.917 g/cm³ / 3.80 cm² = 1.0905 cm.
        let r = simulate(&at(-25.0, 100.0)).unwrap();
        assert_relative_eq!(r.ice_mass_g, 3.8, max_relative = 1e-12);
        assert_relative_eq!(r.ice_height_cm, 3.8 / 0.917 / 3.80, max_relative = 1e-12);
    }

    #[test]
    fn the_ice_is_the_water_less_what_never_freezes() {
        // Mass balance: fill mass = solids + unfrozen water + ice. Sucrose holds about
        // 0.2–0.25 g of unfrozen water per g (Roos 1993; Ablett, Izzard & Lillford 1992,
        // from memory): 0.2 used here. Density of 150 mg/mL sucrose from its partial
        // specific volume 0.63 mL/g (from memory): 1 + 0.150 × 0.37 = 1.0555 g/mL.
        let density = solution_density_g_ml(150.0, 0.63);
        assert_relative_eq!(density, 1.0555, max_relative = 1e-12);
        let fill_ml = 3.0;
        let solids = 0.150 / density;
        let ice = ice_mass_g(fill_ml, density, solids, 0.2);
        let solids_g = fill_ml * 0.150;
        assert_relative_eq!(
            ice + solids_g + 0.2 * solids_g,
            fill_ml * density,
            max_relative = 1e-12
        );
        let mut base = sucrose_5_percent();
        base.fill_volume_ml = fill_ml;
        base.solids_mass_fraction = solids;
        base.solution_density_g_ml = Some(density);
        base.unfrozen_water_g_per_g_solids = Some(0.2);
        let r = simulate(&PrimaryDryingInput::constant(&base, -25.0, 100.0)).unwrap();
        assert_relative_eq!(r.ice_mass_g, ice, max_relative = 1e-12);
        // The older reading (density 1, all water frozen) is off by more than 2 %.
        let naive = fill_ml * (1.0 - 0.150);
        assert!((naive - ice).abs() / ice > 0.02, "{naive} g vs {ice} g");
        base.unfrozen_water_g_per_g_solids = Some(5.0);
        let err = simulate(&PrimaryDryingInput::constant(&base, -25.0, 100.0)).unwrap_err();
        assert_eq!(err.field, "unfrozen_water_g_per_g_solids");
    }

    #[test]
    fn the_sublimed_ice_equals_the_fills_ice() {
        // Mass balance: the rate integrated over time is the fill's ice.
        let r = simulate(&at(-25.0, 100.0)).unwrap();
        let sublimed: f64 = r
            .series
            .windows(2)
            .map(|w| {
                0.5 * (w[0].sublimation_rate_g_h + w[1].sublimation_rate_g_h)
                    * (w[1].time_h - w[0].time_h)
            })
            .sum();
        assert_relative_eq!(sublimed, r.ice_mass_g, max_relative = 5e-3);
        let last = r.series.last().unwrap();
        assert_relative_eq!(last.dried_layer_cm, r.ice_height_cm, max_relative = 1e-12);
    }

    #[test]
    fn halving_the_steps_changes_the_drying_time_by_less_than_a_tenth_of_a_percent() {
        let ramped = PrimaryDryingInput::programmed(
            &sucrose_5_percent(),
            vec![
                ShelfStep {
                    ramp_c_per_min: 0.5,
                    target_c: -20.0,
                    hold_min: 600.0,
                },
                ShelfStep {
                    ramp_c_per_min: 0.2,
                    target_c: -10.0,
                    hold_min: 300.0,
                },
            ],
            Some(-45.0),
            80.0,
        );
        for input in [at(-25.0, 100.0), at(0.0, 200.0), ramped] {
            for resolution in [Resolution::default(), Resolution::for_series()] {
                let coarse = simulate_at(&input, resolution).unwrap();
                let fine = simulate_at(&input, resolution.halved()).unwrap();
                let (a, b) = (coarse.summary.drying_time_h, fine.summary.drying_time_h);
                assert!((a - b).abs() / b < 1e-3, "{a} h vs {b} h");
                let peak =
                    (coarse.summary.peak_front_temp_c - fine.summary.peak_front_temp_c).abs();
                assert!(peak < 0.05, "peak differs by {peak} °C");
            }
        }
    }

    #[test]
    fn five_percent_sucrose_at_minus_25_c_and_100_mtorr_dries_plausibly() {
        // Common practice, no source: a 5 % sucrose fill in a 10 mL tubing vial near
        // 100 mTorr with a −25 °C shelf runs with the product near −30 to −35 °C and takes
        // tens of hours.
        let r = simulate(&at(-25.0, 100.0)).unwrap();
        let mean = time_averaged_front_c(&r);
        assert!((-36.0..=-29.0).contains(&mean), "mean front {mean} °C");
        assert!(r.summary.peak_front_temp_c < -27.0);
        assert!(r.summary.initial_front_temp_c < r.summary.peak_front_temp_c);
        let hours = r.summary.drying_time_h;
        assert!((10.0..=100.0).contains(&hours), "{hours} h");
        assert!(r.series.len() <= MAX_SERIES_POINTS);
    }

    #[test]
    fn drying_time_changes_about_13_percent_per_degree_of_product_temperature() {
        // Pikal (1990), from memory: about 13 % per 1 °C of product temperature near
        // −30 °C; accepted band 9–20 % since the figure depends on pressure and resistance.
        let (cool, warm) = (
            simulate(&at(-26.0, 70.0)).unwrap(),
            simulate(&at(-24.0, 70.0)).unwrap(),
        );
        let d_temp = time_averaged_front_c(&warm) - time_averaged_front_c(&cool);
        let ratio = (cool.summary.drying_time_h / warm.summary.drying_time_h).ln();
        let per_degree = ratio / d_temp;
        let mean = 0.5 * (time_averaged_front_c(&warm) + time_averaged_front_c(&cool));
        assert!((-34.0..=-26.0).contains(&mean), "mean front {mean} °C");
        assert!(
            (0.09..=0.20).contains(&per_degree),
            "{:.1} % per °C",
            per_degree * 100.0
        );
    }

    #[test]
    fn nothing_sublimes_when_the_chamber_pressure_is_above_the_ice_vapour_pressure() {
        // Ice at −40 °C has 12.8 Pa = 96 mTorr (Murphy & Koop 2005 eq. 7).
        let err = simulate(&at(-40.0, 150.0)).unwrap_err();
        assert_eq!(err.field, "chamber_pressure_mtorr");
        assert!(err.message.contains("nothing sublimes"), "{}", err.message);
        let checked = simulate_checked(&at(-40.0, 150.0)).unwrap_err();
        assert!(matches!(
            checked,
            DryingError::Stop { stop: DryingStop::NoSublimation { ice_left, .. }, .. }
                if (ice_left - 1.0).abs() < 1e-12
        ));
        assert!(simulate(&at(-40.0, 80.0)).is_ok());
    }

    #[test]
    fn a_ramp_from_below_the_equilibrium_temperature_starts_sublimation_late() {
        let input = PrimaryDryingInput::programmed(
            &sucrose_5_percent(),
            vec![ShelfStep {
                ramp_c_per_min: 0.5,
                target_c: -20.0,
                hold_min: 6000.0,
            }],
            Some(-50.0),
            100.0,
        );
        let r = simulate(&input).unwrap();
        // Ice at −40 °C has 12.84 Pa, just under 100 mTorr = 13.33 Pa (Murphy & Koop 2005).
        let eq = r.equilibrium_front_temp_c;
        assert!((-40.0..-39.5).contains(&eq), "{eq} °C");
        assert_relative_eq!(
            vapour_pressure_pa(eq).unwrap(),
            mtorr_to_pa(100.0),
            max_relative = 1e-9
        );
        // The shelf passes it after (−50 − eq) / 0.5 °C/min.
        assert_relative_eq!(
            r.summary.sublimation_onset_h,
            (eq + 50.0) / 0.5 / 60.0,
            max_relative = 1e-6
        );
        assert!(!r.summary.program_ended_before_drying);
        assert!(r.notes.iter().any(|n| n.contains("Sublimation starts")));
    }

    #[test]
    fn a_program_that_ends_with_ice_left_keeps_its_last_shelf_temperature_and_says_so() {
        let short = PrimaryDryingInput::programmed(
            &sucrose_5_percent(),
            vec![ShelfStep {
                ramp_c_per_min: 1.0,
                target_c: -25.0,
                hold_min: 120.0,
            }],
            None,
            100.0,
        );
        let r = simulate(&short).unwrap();
        assert!(r.summary.program_ended_before_drying);
        assert_relative_eq!(r.summary.program_end_h.unwrap(), 2.0);
        let constant = simulate(&at(-25.0, 100.0)).unwrap();
        assert_relative_eq!(
            r.summary.drying_time_h,
            constant.summary.drying_time_h,
            max_relative = 1e-3
        );
        assert!(r.notes.iter().any(|n| n.contains("program ends")));
    }

    #[test]
    fn a_program_ending_too_cold_to_finish_is_refused() {
        let input = PrimaryDryingInput::programmed(
            &sucrose_5_percent(),
            vec![
                ShelfStep {
                    ramp_c_per_min: 1.0,
                    target_c: -20.0,
                    hold_min: 300.0,
                },
                ShelfStep {
                    ramp_c_per_min: 1.0,
                    target_c: -45.0,
                    hold_min: 60.0,
                },
            ],
            None,
            100.0,
        );
        let err = simulate_checked(&input).unwrap_err();
        assert!(
            matches!(&err, DryingError::Stop { stop: DryingStop::NoSublimation { ice_left, .. }, .. }
                if *ice_left > 0.0 && *ice_left < 1.0),
            "{err:?}"
        );
    }

    #[test]
    fn a_shelf_barely_above_the_equilibrium_temperature_is_refused_as_too_slow() {
        // At 100 mTorr ice sublimes above −39.67 °C; a −39.6 °C shelf sublimes almost nothing.
        let err = simulate_checked(&at(-39.6, 100.0)).unwrap_err();
        assert!(
            matches!(
                err,
                DryingError::Stop {
                    stop: DryingStop::TooSlow { .. },
                    ..
                }
            ),
            "{err:?}"
        );
    }

    #[test]
    fn the_vapour_pressure_slope_matches_the_ice_equation() {
        for t in [200.0, 230.0, 250.0, 270.0] {
            let h = 1e-4;
            let numeric = (vapour_pressure_pa_unchecked(t + h).ln()
                - vapour_pressure_pa_unchecked(t - h).ln())
                / (2.0 * h);
            assert_relative_eq!(vapour_pressure_log_slope(t), numeric, max_relative = 1e-7);
        }
    }

    #[test]
    fn a_long_program_is_drawn_with_at_most_200_points_ending_at_the_last_ice() {
        let steps = (0..60)
            .map(|i| ShelfStep {
                ramp_c_per_min: 0.1,
                target_c: if i % 2 == 0 { -20.0 } else { -30.0 },
                hold_min: 30.0,
            })
            .collect();
        let input = PrimaryDryingInput::programmed(&sucrose_5_percent(), steps, None, 100.0);
        let r = simulate(&input).unwrap();
        assert!(
            r.series.len() <= MAX_SERIES_POINTS && r.series.len() > 100,
            "{}",
            r.series.len()
        );
        let last = r.series.last().unwrap();
        assert_relative_eq!(last.time_h, r.summary.drying_time_h);
        assert!(r.series.windows(2).all(|w| w[1].time_h > w[0].time_h));
    }

    #[test]
    fn a_hot_shelf_that_would_melt_the_ice_is_refused() {
        let err = simulate(&at(60.0, 400.0)).unwrap_err();
        assert_eq!(err.field, "shelf_temp_c");
        assert!(err.message.contains("melt"), "{}", err.message);
    }

    #[test]
    fn the_limit_is_reported_when_and_how_long_it_is_exceeded() {
        let mut input = at(-25.0, 100.0);
        let unlimited = simulate(&input).unwrap();
        let limit = unlimited.summary.peak_front_temp_c - 1.0;
        input.max_product_temp_c = Some(limit);
        let r = simulate(&input).unwrap();
        let first = r.summary.limit_first_exceeded_h.unwrap();
        let total = r.summary.limit_exceeded_h.unwrap();
        assert!(first > 0.0 && first < r.summary.drying_time_h);
        // The front warms steadily on a constant shelf: above the limit from `first` to the end.
        assert_relative_eq!(first + total, r.summary.drying_time_h, max_relative = 1e-9);
        input.max_product_temp_c = Some(-5.0);
        let safe = simulate(&input).unwrap();
        assert_eq!(safe.summary.limit_first_exceeded_h, None);
        assert_eq!(safe.summary.limit_exceeded_h, Some(0.0));
    }

    #[test]
    fn the_bottom_is_warmer_than_the_front_until_the_ice_is_gone() {
        let r = simulate(&at(-25.0, 100.0)).unwrap();
        for p in &r.series[..r.series.len() - 1] {
            assert!(p.bottom_temp_c > p.front_temp_c);
        }
        let last = r.series.last().unwrap();
        assert_relative_eq!(last.bottom_temp_c, last.front_temp_c, epsilon = 1e-9);
    }

    #[test]
    fn the_json_topic_answers_with_the_documented_fields() {
        let out = calc_primary_drying(json!({
            "shelf_temp_c": -25.0,
            "chamber_pressure_mtorr": 100.0,
            "fill_volume_ml": 4.0,
            "solids_mass_fraction": 0.05,
            "vial": {"inner_area_cm2": 3.8, "outer_area_cm2": 4.71, "kc_cal_s_cm2_k": 3.0e-4,
                     "kp_cal_s_cm2_k_torr": 1.5e-3, "kd_per_torr": 1.0},
            "resistance": {"r0_cm2_torr_h_g": 1.4, "a1_cm_torr_h_g": 16.0, "a2_per_cm": 0.0},
            "max_product_temp_c": -32.0
        }))
        .unwrap();
        for key in [
            "drying_time_h",
            "peak_front_temp_c",
            "peak_bottom_temp_c",
            "initial_front_temp_c",
            "initial_sublimation_rate_g_h",
            "kv_w_m2k",
            "ice_height_cm",
            "series",
            "limit_exceeded_h",
            "limit_first_exceeded_h",
            "program_ended_before_drying",
        ] {
            assert!(out.get(key).is_some(), "missing {key}");
        }
        let point = &out["series"][0];
        for key in [
            "time_h",
            "shelf_temp_c",
            "front_temp_c",
            "bottom_temp_c",
            "sublimation_rate_g_h",
            "dried_layer_cm",
        ] {
            assert!(point.get(key).is_some(), "series point lacks {key}");
        }
    }

    #[test]
    fn bad_inputs_are_refused_naming_the_field() {
        let base = || serde_json::to_value(at(-25.0, 100.0)).unwrap();
        let cases: Vec<(&str, serde_json::Value)> = vec![
            (
                "vial.inner_area_cm2",
                json!({"vial": {"inner_area_cm2": -1.0}}),
            ),
            (
                "vial.inner_area_cm2",
                json!({"vial": {"inner_area_cm2": 9.0}}),
            ),
            (
                "vial.kc_cal_s_cm2_k",
                json!({"vial": {"kc_cal_s_cm2_k": 12.0}}),
            ),
            (
                "resistance.r0_cm2_torr_h_g",
                json!({"resistance": {"r0_cm2_torr_h_g": 0.0}}),
            ),
            (
                "resistance.a1_cm_torr_h_g",
                json!({"resistance": {"a1_cm_torr_h_g": -2.0}}),
            ),
            ("solids_mass_fraction", json!({"solids_mass_fraction": 1.0})),
            ("fill_volume_ml", json!({"fill_volume_ml": 0.0})),
            (
                "chamber_pressure_mtorr",
                json!({"chamber_pressure_mtorr": -5.0}),
            ),
            (
                "sublimation_enthalpy_j_g",
                json!({"sublimation_enthalpy_j_g": 51_000.0}),
            ),
            ("max_product_temp_c", json!({"max_product_temp_c": 12.0})),
            (
                "unfrozen_water_g_per_g_solids",
                json!({"unfrozen_water_g_per_g_solids": -0.1}),
            ),
            (
                "solution_density_g_ml",
                json!({"solution_density_g_ml": 2.5}),
            ),
            ("shelf_temp_c", json!({"shelf_temp_c": 500.0})),
            ("shelf_temp_c", json!({"shelf_temp_c": null})),
            (
                "shelf_program",
                json!({"shelf_program": [{"ramp_c_per_min": 1.0, "target_c": -20.0, "hold_min": 60.0}]}),
            ),
            (
                "shelf_program[1].ramp_c_per_min",
                json!({"shelf_temp_c": null, "shelf_program": [
                    {"ramp_c_per_min": 1.0, "target_c": -20.0, "hold_min": 60.0},
                    {"ramp_c_per_min": 0.0, "target_c": -10.0, "hold_min": 60.0}]}),
            ),
            (
                "shelf_program[0].hold_min",
                json!({"shelf_temp_c": null, "shelf_program": [
                    {"ramp_c_per_min": 1.0, "target_c": -20.0, "hold_min": -1.0}]}),
            ),
            (
                "vial.outer_area_cm2",
                json!({"vial": {"outer_area_cm2": "big"}}),
            ),
        ];
        for (field, patch) in cases {
            let mut input = base();
            merge(&mut input, &patch);
            let err = calc_primary_drying(input).unwrap_err();
            assert_eq!(err.field, field, "{patch}: {err}");
        }
    }

    /// Merge `patch` into `target`, object by object.
    pub(crate) fn merge(target: &mut serde_json::Value, patch: &serde_json::Value) {
        match (target, patch) {
            (serde_json::Value::Object(t), serde_json::Value::Object(p)) => {
                for (k, v) in p {
                    merge(t.entry(k.clone()).or_insert(serde_json::Value::Null), v);
                }
            }
            (t, p) => *t = p.clone(),
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(48))]

        #[test]
        fn a_warmer_shelf_dries_faster_and_warms_the_product(
            shelf in -35.0f64..-5.0, step in 0.5f64..5.0, pc in 50.0f64..200.0,
        ) {
            let cool = simulate_summary(&at(shelf, pc));
            let warm = simulate_summary(&at(shelf + step, pc));
            if let (Ok(cool), Ok(warm)) = (cool, warm) {
                prop_assert!(warm.drying_time_h < cool.drying_time_h);
                prop_assert!(warm.peak_front_temp_c > cool.peak_front_temp_c);
                prop_assert!(warm.initial_front_temp_c > cool.initial_front_temp_c);
            }
        }

        #[test]
        fn a_higher_resistance_warms_the_product_and_slows_drying(
            r0 in 0.5f64..5.0, a1 in 2.0f64..30.0, factor in 1.1f64..3.0, shelf in -30.0f64..0.0,
        ) {
            let mut low = at(shelf, 100.0);
            low.resistance = Resistance { r0_cm2_torr_h_g: r0, a1_cm_torr_h_g: a1, a2_per_cm: 0.0 };
            let mut high = low.clone();
            high.resistance.r0_cm2_torr_h_g *= factor;
            high.resistance.a1_cm_torr_h_g *= factor;
            let (low, high) = (simulate_summary(&low).unwrap(), simulate_summary(&high).unwrap());
            prop_assert!(high.peak_front_temp_c > low.peak_front_temp_c);
            prop_assert!(high.initial_front_temp_c > low.initial_front_temp_c);
            prop_assert!(high.drying_time_h > low.drying_time_h);
        }
    }
}
