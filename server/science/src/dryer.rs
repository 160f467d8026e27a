//! A freeze-dryer as the checks see it: shelf area, the lowest chamber pressure it controls,
//! its condenser's ice capacity, its equipment capability (the highest sustainable
//! sublimation rate at each chamber pressure, set by choked flow in the duct or by the
//! condenser) and the edge heat factor of its load.
//!
//! Capability is given as measured points, pressure → max kg/h, and read linearly between
//! them. Below the lowest point it is taken in proportion to pressure (the choked-flow
//! ceiling rises about linearly with chamber pressure: Patel, Chaudhary & Pikal 2010, Chem.
//! Eng. Sci. 65:5716, from memory); above the highest point it is held at that point's
//! value, which errs on the side of flagging.

use serde::{Deserialize, Serialize};

use crate::error::{finite, positive, InputError};

/// Share of a shelf covered by round vials in hexagonal packing, π/(2√3).
pub const HEXAGONAL_PACKING: f64 = 0.906_899_682_117_108_9;

/// One measured point of the equipment capability.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CapabilityPoint {
    pub pressure_mtorr: f64,
    pub max_sublimation_kg_h: f64,
}

/// A freeze-dryer (input shape of the `cycle-check` topic).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Dryer {
    pub shelf_area_m2: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_pressure_mtorr: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub condenser_capacity_kg: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub capability: Option<Vec<CapabilityPoint>>,
    /// Edge vials' effective Kv over centre vials'; 1.0 (no edge effect) until measured.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub edge_heat_factor: Option<f64>,
}

/// Highest edge heat factor accepted (laboratory dryers run about 1.1–1.5: Rambhatla &
/// Pikal 2003, AAPS PharmSciTech 4(2):14, from memory).
pub const MAX_EDGE_HEAT_FACTOR: f64 = 3.0;

/// Check an edge heat factor: 1 to [`MAX_EDGE_HEAT_FACTOR`].
pub fn edge_heat_factor(field: &str, v: f64) -> Result<f64, InputError> {
    let f = finite(field, v)?;
    if (1.0..=MAX_EDGE_HEAT_FACTOR).contains(&f) {
        Ok(f)
    } else {
        Err(InputError::new(
            field,
            format!(
                "edge vials take at least as much heat as centre vials: give 1 to \
                 {MAX_EDGE_HEAT_FACTOR} (laboratory dryers about 1.1–1.5; got {f})"
            ),
        ))
    }
}

impl Dryer {
    /// Check every number, naming fields under `prefix` (e.g. `dryer.`).
    pub fn validate(&self, prefix: &str) -> Result<(), InputError> {
        let f = |name: &str| format!("{prefix}{name}");
        positive(&f("shelf_area_m2"), self.shelf_area_m2)?;
        if let Some(p) = self.min_pressure_mtorr {
            positive(&f("min_pressure_mtorr"), p)?;
        }
        if let Some(c) = self.condenser_capacity_kg {
            positive(&f("condenser_capacity_kg"), c)?;
        }
        if let Some(e) = self.edge_heat_factor {
            edge_heat_factor(&f("edge_heat_factor"), e)?;
        }
        if let Some(points) = &self.capability {
            if points.is_empty() {
                return Err(InputError::new(
                    f("capability"),
                    "give at least one measured point or leave it out",
                ));
            }
            let mut last = 0.0;
            for (i, p) in points.iter().enumerate() {
                let field = |n: &str| f(&format!("capability[{i}].{n}"));
                let pressure = positive(&field("pressure_mtorr"), p.pressure_mtorr)?;
                positive(&field("max_sublimation_kg_h"), p.max_sublimation_kg_h)?;
                if pressure <= last {
                    return Err(InputError::new(
                        field("pressure_mtorr"),
                        format!("points must rise in pressure (got {pressure} after {last})"),
                    ));
                }
                last = pressure;
            }
        }
        Ok(())
    }

    /// The highest sustainable sublimation rate at `pressure_mtorr`, kg/h, when a
    /// capability is known (module docs for the reading between and beyond points).
    pub fn capability_kg_h(&self, pressure_mtorr: f64) -> Option<f64> {
        let points = self.capability.as_deref()?;
        let first = points.first()?;
        let last = points.last()?;
        if pressure_mtorr <= first.pressure_mtorr {
            return Some(first.max_sublimation_kg_h * pressure_mtorr / first.pressure_mtorr);
        }
        if pressure_mtorr >= last.pressure_mtorr {
            return Some(last.max_sublimation_kg_h);
        }
        points.windows(2).find_map(|w| {
            let (a, b) = (w[0], w[1]);
            (pressure_mtorr <= b.pressure_mtorr).then(|| {
                let s = (pressure_mtorr - a.pressure_mtorr) / (b.pressure_mtorr - a.pressure_mtorr);
                a.max_sublimation_kg_h + s * (b.max_sublimation_kg_h - a.max_sublimation_kg_h)
            })
        })
    }

    /// Vials on fully loaded shelves: shelf area × π/(2√3) over the vial's outer bottom
    /// area (round vials in hexagonal packing).
    pub fn full_load_vials(&self, outer_area_cm2: f64) -> f64 {
        (self.shelf_area_m2 * 1e4 * HEXAGONAL_PACKING / outer_area_cm2).floor()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn dryer(points: &[(f64, f64)]) -> Dryer {
        Dryer {
            shelf_area_m2: 1.0,
            min_pressure_mtorr: None,
            condenser_capacity_kg: None,
            capability: Some(
                points
                    .iter()
                    .map(|&(p, m)| CapabilityPoint {
                        pressure_mtorr: p,
                        max_sublimation_kg_h: m,
                    })
                    .collect(),
            ),
            edge_heat_factor: None,
        }
    }

    #[test]
    fn capability_is_linear_between_points_proportional_below_and_flat_above() {
        // Hand calculation on made-up points (no source needed: the reading rule itself).
        let d = dryer(&[(50.0, 1.0), (150.0, 3.0)]);
        assert_relative_eq!(d.capability_kg_h(100.0).unwrap(), 2.0, max_relative = 1e-12);
        assert_relative_eq!(d.capability_kg_h(25.0).unwrap(), 0.5, max_relative = 1e-12);
        assert_relative_eq!(d.capability_kg_h(300.0).unwrap(), 3.0, max_relative = 1e-12);
        assert_relative_eq!(d.capability_kg_h(150.0).unwrap(), 3.0, max_relative = 1e-12);
    }

    #[test]
    fn hexagonal_packing_covers_pi_over_two_root_three_of_a_shelf() {
        // Geometry: circles in hexagonal packing cover π/(2√3) of the plane.
        assert_relative_eq!(
            HEXAGONAL_PACKING,
            std::f64::consts::PI / (2.0 * 3f64.sqrt()),
            max_relative = 1e-15
        );
        let d = dryer(&[(100.0, 1.0)]);
        assert_relative_eq!(
            d.full_load_vials(4.71),
            (1e4 * HEXAGONAL_PACKING / 4.71).floor()
        );
    }

    #[test]
    fn bad_dryers_are_refused_naming_the_field() {
        let mut d = dryer(&[(100.0, 1.0), (80.0, 2.0)]);
        assert_eq!(
            d.validate("dryer.").unwrap_err().field,
            "dryer.capability[1].pressure_mtorr"
        );
        d = dryer(&[(100.0, -1.0)]);
        assert_eq!(
            d.validate("dryer.").unwrap_err().field,
            "dryer.capability[0].max_sublimation_kg_h"
        );
        d = dryer(&[(100.0, 1.0)]);
        d.edge_heat_factor = Some(0.8);
        assert_eq!(
            d.validate("dryer.").unwrap_err().field,
            "dryer.edge_heat_factor"
        );
        d.edge_heat_factor = None;
        d.shelf_area_m2 = 0.0;
        assert_eq!(
            d.validate("dryer.").unwrap_err().field,
            "dryer.shelf_area_m2"
        );
    }
}
