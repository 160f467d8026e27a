//! DSC analysis of one heating or cooling segment of a heat-flow trace.
//!
//! - Smoothing and derivative: Savitzky–Golay local quadratic fits on the actual
//!   (possibly uneven) temperature grid, no resampling ([`smooth`]); traces longer than
//!   [`trace::MAX_ANALYSIS_POINTS`] are first reduced by averaging runs of points.
//! - Glass transition: ASTM E1356 / ISO 11357-2 ([`glass::glass_transition`]).
//! - Endotherm or exotherm: ASTM E794 / ISO 11357-3 ([`peak::peak`]).
//! - Suggested windows when the analyst gave none ([`suggest::suggest_windows`]).
//!
//! Sign convention: the caller says which way exotherms point ([`Exo`], default up);
//! inside, the signal is turned so that the endothermic direction is positive.
//! Temperatures are °C; heat flow stays in its own unit ([`HeatFlowUnit`]) until the
//! per-gram results, which need the heating rate (and the sample mass for mW).

pub mod glass;
pub mod peak;
pub mod smooth;
pub mod suggest;
pub mod topic;
pub mod trace;

pub use glass::{glass_transition, GlassTransition};
pub use peak::{peak, Peak, PeakKind};
pub use suggest::{suggest_windows, SuggestedWindows};
pub use topic::{analyse, calc_dsc_analysis, DscAnalysisInput, DscAnalysisOutput};
pub use trace::{Exo, HeatFlowUnit, Trace};

use crate::error::{positive, InputError};

/// Factor turning a step height into ΔCp in J/(g·K), or a peak area (heat-flow unit × K)
/// into J/g: 1/(mass·rate) for mW (mW/(mg·K/s) = J/(g·K)), 1/rate for W/g. The heating
/// rate is taken by magnitude, so a cooling rate may be given either way.
pub fn per_gram_factor(
    unit: HeatFlowUnit,
    sample_mass_mg: Option<f64>,
    heating_rate_c_min: Option<f64>,
) -> Result<Option<f64>, InputError> {
    let Some(rate) = heating_rate_c_min else {
        return Ok(None);
    };
    let rate_k_s = positive("heating_rate_c_min", rate.abs())? / 60.0;
    let mass = sample_mass_mg
        .map(|m| positive("sample_mass_mg", m))
        .transpose()?;
    Ok(match (unit, mass) {
        (HeatFlowUnit::WattPerGram, _) => Some(1.0 / rate_k_s),
        (HeatFlowUnit::MilliWatt, Some(m)) => Some(1.0 / (m * rate_k_s)),
        (HeatFlowUnit::MilliWatt, None) => None,
    })
}
