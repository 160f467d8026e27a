//! The `dsc-analysis` calculation topic.

use serde::{Deserialize, Serialize};

use super::glass::{glass_transition, GlassTransition};
use super::peak::{peak, Peak};
use super::per_gram_factor;
use super::suggest::suggest_windows;
use super::trace::{Exo, HeatFlowUnit, Trace};
use crate::error::InputError;

/// `dsc-analysis` input: one heating or cooling segment.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DscAnalysisInput {
    pub temperature_c: Vec<f64>,
    pub heat_flow: Vec<f64>,
    /// Window of the glass transition; suggested when omitted.
    #[serde(default)]
    pub glass_transition_window_c: Option<[f64; 2]>,
    /// Windows of peaks; suggested when omitted (an empty list asks for none).
    #[serde(default)]
    pub peak_windows_c: Option<Vec<[f64; 2]>>,
    #[serde(default)]
    pub exo: Exo,
    #[serde(default)]
    pub sample_mass_mg: Option<f64>,
    /// Heating (or cooling) rate, °C/min, by magnitude.
    #[serde(default)]
    pub heating_rate_c_min: Option<f64>,
    #[serde(default)]
    pub heat_flow_unit: HeatFlowUnit,
    /// Savitzky–Golay half-width in points; chosen from the trace's length when omitted.
    #[serde(default)]
    pub smoothing_points: Option<usize>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GlassTransitionResult {
    #[serde(flatten)]
    pub transition: GlassTransition,
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub delta_cp_j_gk: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PeakResult {
    #[serde(flatten)]
    pub peak: Peak,
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub area_j_g: Option<f64>,
}

/// The windows the results were computed in, and whether they were suggested.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WindowsUsed {
    pub glass_transition_c: Option<[f64; 2]>,
    pub peak_windows_c: Vec<[f64; 2]>,
    pub glass_transition_suggested: bool,
    pub peaks_suggested: bool,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DscAnalysisOutput {
    pub glass_transition: Option<GlassTransitionResult>,
    pub peaks: Vec<PeakResult>,
    pub windows: WindowsUsed,
    pub exo: Exo,
    pub heat_flow_unit: HeatFlowUnit,
    /// Points analysed (after any reduction of a long trace) and the smoothing used.
    pub points_analysed: usize,
    pub smoothing_points: usize,
    pub notes: Vec<String>,
}

/// Analyses one segment: the glass transition and peaks in the given windows, or in
/// suggested ones. A given window that cannot be analysed is an error naming it; a
/// suggested one that cannot is left out with a note.
pub fn analyse(input: &DscAnalysisInput) -> Result<DscAnalysisOutput, InputError> {
    let trace = Trace::new(
        &input.temperature_c,
        &input.heat_flow,
        input.exo,
        input.smoothing_points,
    )?;
    let factor = per_gram_factor(
        input.heat_flow_unit,
        input.sample_mass_mg,
        input.heating_rate_c_min,
    )?;
    let mut notes = Vec::new();
    if factor.is_none() {
        notes.push(
            "ΔCp and areas in J/g need the heating rate (and, for heat flow in mW, the \
             sample mass)"
                .to_string(),
        );
    }
    let needs_suggestion =
        input.glass_transition_window_c.is_none() || input.peak_windows_c.is_none();
    let suggested = if needs_suggestion {
        suggest_windows(&trace)
    } else {
        Default::default()
    };

    let field = "glass_transition_window_c";
    let (gt_window, gt_suggested) = match input.glass_transition_window_c {
        Some(w) => (Some(w), false),
        None => (suggested.glass_transition_c, true),
    };
    let glass = match gt_window {
        Some(w) => match glass_transition(&trace, w, field) {
            Ok(g) => Some(g),
            Err(e) if !gt_suggested => return Err(e),
            Err(e) => {
                notes.push(format!("suggested glass-transition window: {}", e.message));
                None
            }
        },
        None => {
            notes.push("no glass transition found to suggest a window for".to_string());
            None
        }
    };
    let glass_transition = glass.map(|g| GlassTransitionResult {
        delta_cp_j_gk: factor.map(|f| g.step * f),
        transition: g,
    });

    let (peak_windows, peaks_suggested) = match &input.peak_windows_c {
        Some(w) => (w.clone(), false),
        None => (suggested.peaks_c.clone(), true),
    };
    let mut peaks = Vec::new();
    let mut used = Vec::new();
    for (i, &w) in peak_windows.iter().enumerate() {
        match peak(&trace, w, &format!("peak_windows_c[{i}]")) {
            Ok(p) => {
                used.push(w);
                peaks.push(PeakResult {
                    area_j_g: factor.map(|f| p.area * f),
                    peak: p,
                });
            }
            Err(e) if !peaks_suggested => return Err(e),
            Err(e) => notes.push(format!("suggested peak window {w:?}: {}", e.message)),
        }
    }
    let smoothing_points = input
        .smoothing_points
        .unwrap_or_else(|| super::smooth::auto_half_width(trace.len()));
    Ok(DscAnalysisOutput {
        glass_transition,
        peaks,
        windows: WindowsUsed {
            glass_transition_c: gt_window,
            peak_windows_c: used,
            glass_transition_suggested: gt_suggested,
            peaks_suggested,
        },
        exo: input.exo,
        heat_flow_unit: input.heat_flow_unit,
        points_analysed: trace.len(),
        smoothing_points,
        notes,
    })
}

/// `dsc-analysis` topic: JSON in, JSON out.
pub fn calc_dsc_analysis(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let input: DscAnalysisInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&analyse(&input)?)
}
