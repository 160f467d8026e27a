//! Candidate cycles, their links to formulations, and dry-layer resistance.

use glasspoint_science::drying::Resistance;
use glasspoint_science::units::{mbar_to_pa, pa_to_mtorr};
use glasspoint_science::verdict::{
    validate_cycle, AnnealingStep, CycleProgram, FreezingStep, PrimaryStep, SecondaryStep,
};
use utoipa::ToSchema;

use super::enums::CycleStatus;
use super::fields::*;

/// A candidate cycle as stored.
#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Cycle {
    pub id: i64,
    pub name: String,
    pub status: CycleStatus,
    pub notes: String,
    #[schema(value_type = Object)]
    pub program: CycleProgram,
    /// Optional equipment limit on sublimation rate per shelf area, kg/(h·m²).
    pub sublimation_ceiling_kg_h_m2: Option<f64>,
    pub version: i64,
}

/// One formulation in one container and fill, run on a cycle.
#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct CycleLink {
    pub id: i64,
    pub cycle_id: i64,
    pub cycle_name: String,
    pub formulation_id: i64,
    pub formulation_code: String,
    pub container_id: i64,
    pub container_name: String,
    pub fill_volume_ml: f64,
    /// The dryer the load runs in, when named: then the equipment is checked.
    pub dryer_id: Option<i64>,
    pub dryer_name: Option<String>,
    /// Vials in the load (the shelves taken as full when not given).
    pub vial_count: Option<i64>,
    /// Share of the load in edge positions (the stated default when not given).
    pub edge_vial_share: Option<f64>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct CycleDraft {
    pub name: String,
    pub notes: String,
    pub program: CycleProgram,
    pub sublimation_ceiling_kg_h_m2: Option<f64>,
}

/// Pressure units a user may type in.
pub const PRESSURE_UNITS: &[&str] = &["mTorr", "Pa", "mbar"];

fn to_mtorr(value: f64, unit: &str) -> f64 {
    match unit {
        "Pa" => pa_to_mtorr(value),
        "mbar" => pa_to_mtorr(mbar_to_pa(value)),
        _ => value,
    }
}

/// Units a user may type hold times in.
pub const HOLD_UNITS: &[&str] = &["h", "min"];

/// Hold minutes as the form shows them in `unit`.
fn hold_text(min: f64, unit: &str) -> String {
    match unit {
        "min" => number_text(min),
        _ => number_text(min / 60.0),
    }
}

/// Whether `min` minutes shown in hours read back as exactly the same minutes.
fn hours_round_trip(min: f64) -> bool {
    number_text(min / 60.0)
        .parse::<f64>()
        .is_ok_and(|h| (h * 60.0).to_bits() == min.to_bits())
}

/// The checks every cycle passes, typed into the form or sent as JSON: the name, the
/// notes and the optional sublimation-rate ceiling. Returns the trimmed name and notes.
pub fn check_cycle_fields(
    e: &mut FieldErrors,
    name: &str,
    notes: &str,
    sublimation_ceiling_kg_h_m2: Option<f64>,
) -> (String, String) {
    let name = required_text(e, "name", name, limits::NAME_CHARS);
    let notes = notes_text(e, "notes", notes);
    check_positive(
        e,
        "sublimation_ceiling_kg_h_m2",
        sublimation_ceiling_kg_h_m2,
        100.0,
        "kg/(h·m²)",
    );
    (name, notes)
}

/// A cycle as typed. Holds are in `hold_unit` (hours unless a stored hold is only exact in
/// minutes), ramps in °C/min, pressures in `pressure_unit`.
#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
#[serde(default)]
pub struct CycleForm {
    pub name: String,
    pub notes: String,
    pub pressure_unit: String,
    /// "h" (the default) or "min"; the `*_hold_h` fields are in this unit.
    pub hold_unit: String,
    pub freezing_ramp_c_per_min: String,
    pub freezing_hold_temp_c: String,
    pub freezing_hold_h: String,
    pub annealing_temp_c: String,
    pub annealing_hold_h: String,
    pub annealing_return_ramp_c_per_min: String,
    pub primary_ramp_c_per_min: String,
    pub primary_shelf_temp_c: String,
    pub primary_chamber_pressure: String,
    pub primary_hold_h: String,
    pub secondary_ramp_c_per_min: String,
    pub secondary_shelf_temp_c: String,
    pub secondary_pressure: String,
    pub secondary_hold_h: String,
    pub condenser_temp_c: String,
    pub sublimation_ceiling_kg_h_m2: String,
    pub version: String,
}

impl CycleForm {
    /// A sensible starting point (common practice, no source): freeze to −40 °C for 2 h,
    /// primary drying at −25 °C and 100 mTorr, secondary at 40 °C.
    pub fn starting_point() -> Self {
        CycleForm {
            pressure_unit: "mTorr".into(),
            hold_unit: "h".into(),
            freezing_ramp_c_per_min: "1".into(),
            freezing_hold_temp_c: "-40".into(),
            freezing_hold_h: "2".into(),
            primary_ramp_c_per_min: "0.5".into(),
            primary_shelf_temp_c: "-25".into(),
            primary_chamber_pressure: "100".into(),
            primary_hold_h: "40".into(),
            secondary_ramp_c_per_min: "0.1".into(),
            secondary_shelf_temp_c: "40".into(),
            secondary_pressure: "100".into(),
            secondary_hold_h: "6".into(),
            ..Default::default()
        }
    }

    /// The form showing a stored cycle exactly: numbers in their shortest exact text,
    /// pressures in mTorr (the stored unit) and holds in hours when every hold reads back
    /// exactly, else in minutes.
    pub fn from_cycle(c: &Cycle) -> Self {
        let p = &c.program;
        let n = number_text;
        let holds = [
            Some(p.freezing.hold_min),
            p.annealing.map(|a| a.hold_min),
            Some(p.primary.hold_min),
            Some(p.secondary.hold_min),
        ];
        let unit = if holds.iter().flatten().all(|m| hours_round_trip(*m)) {
            "h"
        } else {
            "min"
        };
        let hours = |min: f64| hold_text(min, unit);
        CycleForm {
            name: c.name.clone(),
            notes: c.notes.clone(),
            pressure_unit: "mTorr".into(),
            hold_unit: unit.into(),
            freezing_ramp_c_per_min: n(p.freezing.ramp_c_per_min),
            freezing_hold_temp_c: n(p.freezing.hold_temp_c),
            freezing_hold_h: hours(p.freezing.hold_min),
            annealing_temp_c: p.annealing.map(|a| n(a.temp_c)).unwrap_or_default(),
            annealing_hold_h: p.annealing.map(|a| hours(a.hold_min)).unwrap_or_default(),
            annealing_return_ramp_c_per_min: p
                .annealing
                .and_then(|a| a.return_ramp_c_per_min)
                .map(n)
                .unwrap_or_default(),
            primary_ramp_c_per_min: n(p.primary.ramp_c_per_min),
            primary_shelf_temp_c: n(p.primary.shelf_temp_c),
            primary_chamber_pressure: n(p.primary.chamber_pressure_mtorr),
            primary_hold_h: hours(p.primary.hold_min),
            secondary_ramp_c_per_min: n(p.secondary.ramp_c_per_min),
            secondary_shelf_temp_c: n(p.secondary.shelf_temp_c),
            secondary_pressure: n(p.secondary.pressure_mtorr),
            secondary_hold_h: hours(p.secondary.hold_min),
            condenser_temp_c: p.condenser_temp_c.map(n).unwrap_or_default(),
            sublimation_ceiling_kg_h_m2: c.sublimation_ceiling_kg_h_m2.map(n).unwrap_or_default(),
            version: c.version.to_string(),
        }
    }

    pub fn parse(&self) -> Result<CycleDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let hold_factor = match self.hold_unit.trim() {
            "" | "h" => 60.0,
            "min" => 1.0,
            other => {
                e.add("hold_unit", format!("“{other}” is not one of: h, min"));
                60.0
            }
        };
        let unit = match self.pressure_unit.trim() {
            "" => "mTorr",
            u if PRESSURE_UNITS.contains(&u) => u,
            other => {
                e.add(
                    "pressure_unit",
                    format!("“{other}” is not one of: mTorr, Pa, mbar"),
                );
                "mTorr"
            }
        };
        let mut req =
            |field: &str, raw: &str| required_number(&mut e, field, raw).unwrap_or(f64::NAN);
        let freezing = FreezingStep {
            ramp_c_per_min: req("freezing_ramp_c_per_min", &self.freezing_ramp_c_per_min),
            hold_temp_c: req("freezing_hold_temp_c", &self.freezing_hold_temp_c),
            hold_min: req("freezing_hold_h", &self.freezing_hold_h) * hold_factor,
        };
        let primary = PrimaryStep {
            ramp_c_per_min: req("primary_ramp_c_per_min", &self.primary_ramp_c_per_min),
            shelf_temp_c: req("primary_shelf_temp_c", &self.primary_shelf_temp_c),
            chamber_pressure_mtorr: to_mtorr(
                req("primary_chamber_pressure", &self.primary_chamber_pressure),
                unit,
            ),
            hold_min: req("primary_hold_h", &self.primary_hold_h) * hold_factor,
        };
        let secondary = SecondaryStep {
            ramp_c_per_min: req("secondary_ramp_c_per_min", &self.secondary_ramp_c_per_min),
            shelf_temp_c: req("secondary_shelf_temp_c", &self.secondary_shelf_temp_c),
            pressure_mtorr: to_mtorr(req("secondary_pressure", &self.secondary_pressure), unit),
            hold_min: req("secondary_hold_h", &self.secondary_hold_h) * hold_factor,
        };
        let anneal_temp = optional_number(&mut e, "annealing_temp_c", &self.annealing_temp_c);
        let anneal_hold = optional_number(&mut e, "annealing_hold_h", &self.annealing_hold_h);
        let anneal_ramp = optional_number(
            &mut e,
            "annealing_return_ramp_c_per_min",
            &self.annealing_return_ramp_c_per_min,
        );
        let annealing = match (anneal_temp, anneal_hold) {
            (Some(temp_c), Some(h)) => Some(AnnealingStep {
                temp_c,
                hold_min: h * hold_factor,
                return_ramp_c_per_min: anneal_ramp,
            }),
            (None, None) => {
                if anneal_ramp.is_some() {
                    e.add(
                        "annealing_temp_c",
                        "an annealing step needs its temperature and hold time",
                    );
                }
                None
            }
            (None, Some(_)) => {
                e.add(
                    "annealing_temp_c",
                    "give the annealing temperature, or clear the hold time",
                );
                None
            }
            (Some(_), None) => {
                e.add(
                    "annealing_hold_h",
                    "give the annealing hold time, or clear the temperature",
                );
                None
            }
        };
        let condenser = optional_number(&mut e, "condenser_temp_c", &self.condenser_temp_c);
        let ceiling = optional_number(
            &mut e,
            "sublimation_ceiling_kg_h_m2",
            &self.sublimation_ceiling_kg_h_m2,
        );
        let (name, notes) = check_cycle_fields(&mut e, &self.name, &self.notes, ceiling);
        let program = CycleProgram {
            freezing,
            annealing,
            primary,
            secondary,
            condenser_temp_c: condenser,
        };
        if e.is_empty() {
            if let Err(err) = validate_cycle(&program) {
                e.add(form_field(&err.field), err.message);
            }
        }
        e.into_result(CycleDraft {
            name,
            notes,
            program,
            sublimation_ceiling_kg_h_m2: ceiling,
        })
    }
}

/// The science names fields `primary.hold_min`; the form calls it `primary_hold_h`.
fn form_field(science_field: &str) -> String {
    let f = science_field.replace('.', "_");
    let f = f.replace("_hold_min", "_hold_h");
    match f.as_str() {
        "primary_chamber_pressure_mtorr" => "primary_chamber_pressure".into(),
        "secondary_pressure_mtorr" => "secondary_pressure".into(),
        _ => f,
    }
}

/// Dry-layer resistance of a formulation and where it came from.
#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct DryLayerResistance {
    #[schema(value_type = Object)]
    pub resistance: Resistance,
    /// Measured (with its source) or a stated default for the solids content.
    pub measured: bool,
    pub source: String,
    pub version: i64,
}

#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
#[serde(default)]
pub struct ResistanceForm {
    pub r0_cm2_torr_h_g: String,
    pub a1_cm_torr_h_g: String,
    pub a2_per_cm: String,
    pub source: String,
    pub version: String,
}

impl ResistanceForm {
    /// The form showing a measured resistance exactly.
    pub fn from_resistance(r: &DryLayerResistance) -> Self {
        ResistanceForm {
            r0_cm2_torr_h_g: number_text(r.resistance.r0_cm2_torr_h_g),
            a1_cm_torr_h_g: number_text(r.resistance.a1_cm_torr_h_g),
            a2_per_cm: number_text(r.resistance.a2_per_cm),
            source: r.source.clone(),
            version: r.version.to_string(),
        }
    }

    pub fn parse(&self) -> Result<(Resistance, String), FieldErrors> {
        let mut e = FieldErrors::default();
        let r0 = required_number(&mut e, "r0_cm2_torr_h_g", &self.r0_cm2_torr_h_g);
        check_range(&mut e, "r0_cm2_torr_h_g", r0, 0.0, 100.0, "cm²·Torr·h/g");
        let a1 = required_number(&mut e, "a1_cm_torr_h_g", &self.a1_cm_torr_h_g);
        check_range(&mut e, "a1_cm_torr_h_g", a1, 0.0, 1000.0, "cm·Torr·h/g");
        let a2 = required_number(&mut e, "a2_per_cm", &self.a2_per_cm);
        check_range(&mut e, "a2_per_cm", a2, 0.0, 1000.0, "1/cm");
        if r0 == Some(0.0) && a1 == Some(0.0) && !e.has("r0_cm2_torr_h_g") {
            e.add(
                "r0_cm2_torr_h_g",
                "a dried layer with no resistance at all is not physical",
            );
        }
        let source = required_text(&mut e, "source", &self.source, limits::SOURCE_CHARS);
        e.into_result((
            Resistance {
                r0_cm2_torr_h_g: r0.unwrap_or_default(),
                a1_cm_torr_h_g: a1.unwrap_or_default(),
                a2_per_cm: a2.unwrap_or_default(),
            },
            source,
        ))
    }
}

/// A link as typed on the cycle page.
#[derive(Debug, Clone, Default, serde::Deserialize)]
#[serde(default)]
pub struct LinkForm {
    pub formulation_id: String,
    pub container_id: String,
    pub fill_volume_ml: String,
    pub dryer_id: String,
    pub vial_count: String,
    pub edge_vial_share: String,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinkDraft {
    pub formulation_id: i64,
    pub container_id: i64,
    pub fill_volume_ml: f64,
    pub dryer_id: Option<i64>,
    pub vial_count: Option<i64>,
    pub edge_vial_share: Option<f64>,
}

impl LinkDraft {
    /// The same formulation, container, fill and load as an existing link (for copies).
    pub fn like(l: &CycleLink) -> Self {
        LinkDraft {
            formulation_id: l.formulation_id,
            container_id: l.container_id,
            fill_volume_ml: l.fill_volume_ml,
            dryer_id: l.dryer_id,
            vial_count: l.vial_count,
            edge_vial_share: l.edge_vial_share,
        }
    }
}

/// Most vials a load may hold (a large production dryer holds some 10⁵).
pub const MAX_VIAL_COUNT: i64 = 1_000_000;

impl LinkForm {
    pub fn parse(&self) -> Result<LinkDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let f = optional_id(&mut e, "formulation_id", &self.formulation_id);
        if f.is_none() && !e.has("formulation_id") {
            e.add("formulation_id", "choose a formulation");
        }
        let c = optional_id(&mut e, "container_id", &self.container_id);
        if c.is_none() && !e.has("container_id") {
            e.add("container_id", "choose a container");
        }
        let fill = required_number(&mut e, "fill_volume_ml", &self.fill_volume_ml);
        check_positive(&mut e, "fill_volume_ml", fill, 500.0, "mL");
        let dryer = optional_id(&mut e, "dryer_id", &self.dryer_id);
        let count_text = self.vial_count.trim();
        let vial_count = if count_text.is_empty() {
            None
        } else {
            match count_text.parse::<i64>() {
                Ok(n) if (1..=MAX_VIAL_COUNT).contains(&n) => Some(n),
                Ok(_) => {
                    e.add(
                        "vial_count",
                        format!("give a whole number of vials from 1 to {MAX_VIAL_COUNT}"),
                    );
                    None
                }
                Err(_) => {
                    e.add(
                        "vial_count",
                        format!("“{count_text}” is not a whole number of vials"),
                    );
                    None
                }
            }
        };
        let share = optional_number(&mut e, "edge_vial_share", &self.edge_vial_share);
        if let Some(s) = share {
            if !(0.0..1.0).contains(&s) {
                e.add(
                    "edge_vial_share",
                    format!("is a share of the load, from 0 to below 1 (got {s}; 0.1 is one vial in ten)"),
                );
            }
        }
        e.into_result(LinkDraft {
            formulation_id: f.unwrap_or_default(),
            container_id: c.unwrap_or_default(),
            fill_volume_ml: fill.unwrap_or_default(),
            dryer_id: dryer,
            vial_count,
            edge_vial_share: share,
        })
    }
}
