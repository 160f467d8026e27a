//! Freeze-dryers: shelf area, lowest controllable pressure, condenser capacity, equipment
//! capability and edge heat factor, each with where it came from.

use glasspoint_science::dryer::{
    edge_heat_factor, CapabilityPoint, Dryer as ScienceDryer, MAX_EDGE_HEAT_FACTOR,
};
use utoipa::ToSchema;

use super::fields::*;

/// Most capability points one dryer holds.
pub const MAX_CAPABILITY_POINTS: usize = 40;
/// Largest shelf area accepted, m² (production dryers reach a few tens of m²).
pub const MAX_SHELF_AREA_M2: f64 = 200.0;
/// Highest chamber pressure a capability point or lowest pressure may name, mTorr.
pub const MAX_PRESSURE_MTORR: f64 = 2000.0;
/// Largest condenser capacity accepted, kg of ice.
pub const MAX_CONDENSER_KG: f64 = 5000.0;
/// Largest sublimation rate a capability point may name, kg/h.
pub const MAX_SUBLIMATION_KG_H: f64 = 500.0;

/// One measured point of the capability curve as stored.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize, ToSchema)]
pub struct DryerPoint {
    pub pressure_mtorr: f64,
    /// The highest sublimation rate the dryer sustains at this chamber pressure, kg/h.
    pub max_sublimation_kg_h: f64,
}

/// A freeze-dryer as stored.
#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Dryer {
    pub id: i64,
    pub name: String,
    pub shelf_area_m2: f64,
    pub shelf_area_source: String,
    /// Lowest chamber pressure the dryer controls, mTorr.
    pub min_pressure_mtorr: Option<f64>,
    pub min_pressure_source: String,
    /// Ice the condenser holds, kg.
    pub condenser_capacity_kg: Option<f64>,
    pub condenser_source: String,
    /// Chamber pressure → highest sustainable sublimation rate, rising in pressure; read
    /// linearly between points.
    pub capability: Vec<DryerPoint>,
    pub capability_source: String,
    /// Edge vials' effective Kv over centre vials' (1.0 until measured).
    pub edge_heat_factor: f64,
    pub edge_heat_source: String,
    /// Invented or typical values, to be replaced by the team's own measurements.
    pub typical_values: bool,
    pub notes: String,
    pub version: i64,
}

impl Dryer {
    /// The dryer as the science crate's checks read it.
    pub fn science(&self) -> ScienceDryer {
        ScienceDryer {
            shelf_area_m2: self.shelf_area_m2,
            min_pressure_mtorr: self.min_pressure_mtorr,
            condenser_capacity_kg: self.condenser_capacity_kg,
            capability: (!self.capability.is_empty()).then(|| {
                self.capability
                    .iter()
                    .map(|p| CapabilityPoint {
                        pressure_mtorr: p.pressure_mtorr,
                        max_sublimation_kg_h: p.max_sublimation_kg_h,
                    })
                    .collect()
            }),
            edge_heat_factor: Some(self.edge_heat_factor),
        }
    }

    /// The highest sustainable sublimation rate at a chamber pressure, kg/h.
    pub fn capability_kg_h(&self, pressure_mtorr: f64) -> Option<f64> {
        self.science().capability_kg_h(pressure_mtorr)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct DryerDraft {
    pub name: String,
    pub shelf_area_m2: f64,
    pub shelf_area_source: String,
    pub min_pressure_mtorr: Option<f64>,
    pub min_pressure_source: String,
    pub condenser_capacity_kg: Option<f64>,
    pub condenser_source: String,
    pub capability: Vec<DryerPoint>,
    pub capability_source: String,
    pub edge_heat_factor: f64,
    pub edge_heat_source: String,
    pub typical_values: bool,
    pub notes: String,
}

/// The dryer form as typed. The capability is one point per line: the chamber pressure in
/// mTorr and the highest sublimation rate in kg/h, separated by a space, tab or semicolon.
#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
#[serde(default)]
pub struct DryerForm {
    pub name: String,
    pub shelf_area_m2: String,
    pub shelf_area_source: String,
    pub min_pressure_mtorr: String,
    pub min_pressure_source: String,
    pub condenser_capacity_kg: String,
    pub condenser_source: String,
    pub capability: String,
    pub capability_source: String,
    pub edge_heat_factor: String,
    pub edge_heat_source: String,
    pub typical_values: String,
    pub notes: String,
    pub version: String,
}

/// The capability as the form's text shows it: one `pressure rate` pair per line.
pub fn capability_text(points: &[DryerPoint]) -> String {
    points
        .iter()
        .map(|p| {
            format!(
                "{} {}",
                number_text(p.pressure_mtorr),
                number_text(p.max_sublimation_kg_h)
            )
        })
        .collect::<Vec<_>>()
        .join("\n")
}

/// Reads the capability text, one point per line; the message names the point.
fn parse_capability(errors: &mut FieldErrors, raw: &str) -> Vec<DryerPoint> {
    let field = "capability";
    let mut points = Vec::new();
    let lines: Vec<&str> = raw
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .collect();
    if lines.len() > MAX_CAPABILITY_POINTS {
        errors.add(
            field,
            format!(
                "give at most {MAX_CAPABILITY_POINTS} points (this has {})",
                lines.len()
            ),
        );
        return points;
    }
    let mut last = 0.0;
    for (i, line) in lines.iter().enumerate() {
        let n = i + 1;
        let parts: Vec<&str> = line
            .split(|c: char| c.is_whitespace() || c == ';')
            .filter(|s| !s.is_empty())
            .collect();
        let [p, r] = parts.as_slice() else {
            errors.add(
                field,
                format!(
                    "point {n} (“{line}”): write the chamber pressure in mTorr and the highest \
                     sublimation rate in kg/h, e.g. “100 1.5”"
                ),
            );
            return points;
        };
        let read = |text: &str| {
            text.replace(',', ".")
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
        };
        let (Some(p), Some(r)) = (read(p), read(r)) else {
            errors.add(
                field,
                format!("point {n} (“{line}”): both values must be numbers"),
            );
            return points;
        };
        if p <= 0.0 || p > MAX_PRESSURE_MTORR {
            errors.add(
                field,
                format!(
                    "point {n}: the pressure must be above 0 and at most {MAX_PRESSURE_MTORR} \
                     mTorr (got {p})"
                ),
            );
            return points;
        }
        if r <= 0.0 || r > MAX_SUBLIMATION_KG_H {
            errors.add(
                field,
                format!(
                    "point {n}: the sublimation rate must be above 0 and at most \
                     {MAX_SUBLIMATION_KG_H} kg/h (got {r})"
                ),
            );
            return points;
        }
        if p <= last {
            errors.add(
                field,
                format!("point {n}: points must rise in pressure (got {p} after {last} mTorr)"),
            );
            return points;
        }
        last = p;
        points.push(DryerPoint {
            pressure_mtorr: p,
            max_sublimation_kg_h: r,
        });
    }
    points
}

/// A source is needed for every value given.
fn source_for(errors: &mut FieldErrors, field: &str, raw: &str, value_given: bool) -> String {
    if value_given {
        required_text(errors, field, raw, limits::SOURCE_CHARS)
    } else {
        optional_text(errors, field, raw, limits::SOURCE_CHARS)
    }
}

impl DryerForm {
    pub fn from_dryer(d: &Dryer) -> Self {
        DryerForm {
            name: d.name.clone(),
            shelf_area_m2: number_text(d.shelf_area_m2),
            shelf_area_source: d.shelf_area_source.clone(),
            min_pressure_mtorr: d.min_pressure_mtorr.map(number_text).unwrap_or_default(),
            min_pressure_source: d.min_pressure_source.clone(),
            condenser_capacity_kg: d.condenser_capacity_kg.map(number_text).unwrap_or_default(),
            condenser_source: d.condenser_source.clone(),
            capability: capability_text(&d.capability),
            capability_source: d.capability_source.clone(),
            edge_heat_factor: number_text(d.edge_heat_factor),
            edge_heat_source: d.edge_heat_source.clone(),
            typical_values: if d.typical_values {
                "on".into()
            } else {
                String::new()
            },
            notes: d.notes.clone(),
            version: d.version.to_string(),
        }
    }

    pub fn parse(&self) -> Result<DryerDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let name = required_text(&mut e, "name", &self.name, limits::NAME_CHARS);
        let area = required_number(&mut e, "shelf_area_m2", &self.shelf_area_m2);
        check_positive(&mut e, "shelf_area_m2", area, MAX_SHELF_AREA_M2, "m²");
        let area_source = source_for(&mut e, "shelf_area_source", &self.shelf_area_source, true);
        let min_p = optional_number(&mut e, "min_pressure_mtorr", &self.min_pressure_mtorr);
        check_positive(
            &mut e,
            "min_pressure_mtorr",
            min_p,
            MAX_PRESSURE_MTORR,
            "mTorr",
        );
        let min_p_source = source_for(
            &mut e,
            "min_pressure_source",
            &self.min_pressure_source,
            min_p.is_some(),
        );
        let condenser =
            optional_number(&mut e, "condenser_capacity_kg", &self.condenser_capacity_kg);
        check_positive(
            &mut e,
            "condenser_capacity_kg",
            condenser,
            MAX_CONDENSER_KG,
            "kg",
        );
        let condenser_source = source_for(
            &mut e,
            "condenser_source",
            &self.condenser_source,
            condenser.is_some(),
        );
        let capability = parse_capability(&mut e, &self.capability);
        let capability_source = source_for(
            &mut e,
            "capability_source",
            &self.capability_source,
            !capability.is_empty(),
        );
        // A blank edge heat factor is the stated default: no edge effect until measured.
        let edge = if self.edge_heat_factor.trim().is_empty() {
            Some(1.0)
        } else {
            optional_number(&mut e, "edge_heat_factor", &self.edge_heat_factor)
        };
        if let Some(f) = edge {
            if let Err(err) = edge_heat_factor("edge_heat_factor", f) {
                e.add("edge_heat_factor", err.message);
            }
        }
        let edge_source =
            if self.edge_heat_factor.trim().is_empty() && self.edge_heat_source.trim().is_empty() {
                "Default 1.0: no edge effect assumed until the team measures it.".to_string()
            } else {
                source_for(&mut e, "edge_heat_source", &self.edge_heat_source, true)
            };
        let notes = notes_text(&mut e, "notes", &self.notes);
        let typical = matches!(self.typical_values.trim(), "on" | "true" | "1" | "yes");
        e.into_result(DryerDraft {
            name,
            shelf_area_m2: area.unwrap_or_default(),
            shelf_area_source: area_source,
            min_pressure_mtorr: min_p,
            min_pressure_source: min_p_source,
            condenser_capacity_kg: condenser,
            condenser_source,
            capability,
            capability_source,
            edge_heat_factor: edge.unwrap_or(1.0),
            edge_heat_source: edge_source,
            typical_values: typical,
            notes,
        })
    }
}

/// The highest edge heat factor accepted, for the form's hint.
pub const EDGE_HEAT_FACTOR_MAX: f64 = MAX_EDGE_HEAT_FACTOR;

#[cfg(test)]
mod tests {
    use super::*;

    fn form() -> DryerForm {
        DryerForm {
            name: "Shelf dryer 1".into(),
            shelf_area_m2: "0.5".into(),
            shelf_area_source: "manufacturer's sheet".into(),
            capability: "50 0.4\n100 0.9\n200 1.6".into(),
            capability_source: "our choked-flow test".into(),
            ..Default::default()
        }
    }

    #[test]
    fn a_blank_edge_factor_is_the_stated_default_of_one() {
        let d = form().parse().unwrap();
        assert!((d.edge_heat_factor - 1.0).abs() < 1e-12);
        assert!(d.edge_heat_source.contains("Default 1.0"));
        assert_eq!(d.capability.len(), 3);
    }

    #[test]
    fn capability_points_that_fall_in_pressure_are_refused_naming_the_point() {
        let mut f = form();
        f.capability = "100 1\n80 2".into();
        let e = f.parse().unwrap_err();
        assert!(e.msg("capability").contains("point 2"), "{e:?}");
    }

    #[test]
    fn a_value_without_its_source_is_refused() {
        let mut f = form();
        f.condenser_capacity_kg = "20".into();
        let e = f.parse().unwrap_err();
        assert!(e.has("condenser_source"));
    }

    #[test]
    fn the_form_text_reads_back_as_the_same_points() {
        let d = form().parse().unwrap();
        let again = parse_capability(&mut FieldErrors::default(), &capability_text(&d.capability));
        assert_eq!(again, d.capability);
    }
}
