//! What a column of a run export is for, and the role its header words suggest.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use crate::columns::Unit;
use crate::ImportError;

/// Where a product probe sits in the load.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ProbeSite {
    Centre,
    Edge,
    Front,
    Back,
}

impl ProbeSite {
    pub const ALL: [ProbeSite; 4] = [
        ProbeSite::Centre,
        ProbeSite::Edge,
        ProbeSite::Front,
        ProbeSite::Back,
    ];

    /// The stored key: "centre", "edge", "front", "back".
    pub fn key(self) -> &'static str {
        match self {
            ProbeSite::Centre => "centre",
            ProbeSite::Edge => "edge",
            ProbeSite::Front => "front",
            ProbeSite::Back => "back",
        }
    }

    /// How the site is written for people.
    pub fn label(self) -> &'static str {
        match self {
            ProbeSite::Centre => "Centre",
            ProbeSite::Edge => "Edge",
            ProbeSite::Front => "Front",
            ProbeSite::Back => "Back",
        }
    }
}

/// What a column holds. Written (Display, FromStr, serde) as "time", "shelf",
/// "probe:centre", "probe:edge", "probe:front", "probe:back", "manometer", "pirani",
/// "condenser" or "ignore".
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum RunRole {
    Time,
    /// Shelf (heat-transfer fluid) temperature.
    Shelf,
    /// Product temperature from a probe at a site.
    Probe(ProbeSite),
    /// Chamber pressure from a capacitance manometer.
    Manometer,
    /// Chamber pressure from a Pirani (thermal conductivity) gauge.
    Pirani,
    /// Condenser temperature.
    Condenser,
    Ignore,
}

impl RunRole {
    /// Every role, in the order a choice lists them.
    pub const ALL: [RunRole; 10] = [
        RunRole::Time,
        RunRole::Shelf,
        RunRole::Probe(ProbeSite::Centre),
        RunRole::Probe(ProbeSite::Edge),
        RunRole::Probe(ProbeSite::Front),
        RunRole::Probe(ProbeSite::Back),
        RunRole::Manometer,
        RunRole::Pirani,
        RunRole::Condenser,
        RunRole::Ignore,
    ];

    /// How the role is written for people.
    pub fn label(self) -> &'static str {
        match self {
            RunRole::Time => "Time",
            RunRole::Shelf => "Shelf temperature",
            RunRole::Probe(ProbeSite::Centre) => "Product probe, centre",
            RunRole::Probe(ProbeSite::Edge) => "Product probe, edge",
            RunRole::Probe(ProbeSite::Front) => "Product probe, front",
            RunRole::Probe(ProbeSite::Back) => "Product probe, back",
            RunRole::Manometer => "Chamber pressure, capacitance manometer",
            RunRole::Pirani => "Chamber pressure, Pirani gauge",
            RunRole::Condenser => "Condenser temperature",
            RunRole::Ignore => "Ignore",
        }
    }

    /// What kind of quantity the column must hold.
    pub(crate) fn quantity(self) -> Option<Quantity> {
        match self {
            RunRole::Time => Some(Quantity::Time),
            RunRole::Shelf | RunRole::Probe(_) | RunRole::Condenser => Some(Quantity::Temperature),
            RunRole::Manometer | RunRole::Pirani => Some(Quantity::Pressure),
            RunRole::Ignore => None,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Quantity {
    Time,
    Temperature,
    Pressure,
}

impl Quantity {
    pub(crate) fn admits(self, unit: Unit) -> bool {
        match self {
            Quantity::Time => unit.is_time(),
            Quantity::Temperature => unit.is_temperature(),
            Quantity::Pressure => unit.is_pressure(),
        }
    }
}

impl fmt::Display for RunRole {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RunRole::Time => f.write_str("time"),
            RunRole::Shelf => f.write_str("shelf"),
            RunRole::Probe(site) => write!(f, "probe:{}", site.key()),
            RunRole::Manometer => f.write_str("manometer"),
            RunRole::Pirani => f.write_str("pirani"),
            RunRole::Condenser => f.write_str("condenser"),
            RunRole::Ignore => f.write_str("ignore"),
        }
    }
}

impl FromStr for RunRole {
    type Err = ImportError;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        RunRole::ALL
            .into_iter()
            .find(|r| r.to_string() == s.trim())
            .ok_or_else(|| {
                let known: Vec<String> = RunRole::ALL.iter().map(ToString::to_string).collect();
                ImportError::new(
                    "mapping",
                    format!(
                        "“{}” is not a column role; use one of {}",
                        s.chars().take(40).collect::<String>(),
                        known.join(", ")
                    ),
                )
            })
    }
}

impl Serialize for RunRole {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

impl<'de> Deserialize<'de> for RunRole {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let text = String::deserialize(d)?;
        text.parse()
            .map_err(|e: ImportError| serde::de::Error::custom(e.message))
    }
}

/// The role a header suggests (English words, any case), checked against its unit.
pub fn suggest_role(header: &str, unit: Option<Unit>) -> RunRole {
    suggest(header, unit).0
}

/// The suggested role and, when the suggestion rests on an assumption, a note saying so.
pub(crate) fn suggest(header: &str, unit: Option<Unit>) -> (RunRole, Option<String>) {
    let lower = header.to_lowercase();
    // Words without trailing digits, so "TC3" and "Probe12" read as "tc" and "probe".
    let words: Vec<&str> = lower
        .split(|c: char| !c.is_alphanumeric())
        .map(|w| w.trim_end_matches(|c: char| c.is_ascii_digit()))
        .filter(|w| !w.is_empty())
        .collect();
    let has = |options: &[&str]| words.iter().any(|w| options.contains(w));
    let (role, note) = if has(&["condenser"]) {
        (RunRole::Condenser, None)
    } else if has(&["pirani"]) || has(&["thermal"]) && has(&["conductivity"]) {
        (RunRole::Pirani, None)
    } else if has(&["capacitance", "cm", "manometer"]) {
        (RunRole::Manometer, None)
    } else if has(&["shelf", "shelves", "inlet", "fluid"]) {
        (RunRole::Shelf, None)
    } else if has(&["product", "probe", "tc", "thermocouple"]) {
        let site = if has(&["centre", "center"]) {
            Some(ProbeSite::Centre)
        } else if has(&["edge"]) {
            Some(ProbeSite::Edge)
        } else if has(&["front"]) {
            Some(ProbeSite::Front)
        } else if has(&["back", "rear"]) {
            Some(ProbeSite::Back)
        } else {
            None
        };
        match site {
            Some(site) => (RunRole::Probe(site), None),
            None => (
                RunRole::Probe(ProbeSite::Centre),
                Some(format!(
                    "“{header}” names no probe position; taken as a centre probe"
                )),
            ),
        }
    } else if has(&["time", "elapsed", "date", "datetime", "timestamp"])
        || unit.is_some_and(Unit::is_time)
    {
        (RunRole::Time, None)
    } else if has(&["pressure", "vacuum"]) || unit.is_some_and(Unit::is_pressure) {
        (
            RunRole::Manometer,
            Some(format!(
                "“{header}” names no gauge type; taken as the capacitance manometer"
            )),
        )
    } else {
        (RunRole::Ignore, None)
    };
    match (role.quantity(), unit) {
        (Some(q), Some(u)) if !q.admits(u) => (
            RunRole::Ignore,
            Some(format!(
                "“{header}” reads like {} but is in {}; left out",
                role.label().to_lowercase(),
                u.label()
            )),
        ),
        _ => (role, note),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn roles_round_trip_through_their_stored_text() {
        for role in RunRole::ALL {
            assert_eq!(role.to_string().parse::<RunRole>(), Ok(role));
        }
        assert_eq!(
            RunRole::Probe(ProbeSite::Back).to_string(),
            "probe:back".to_string()
        );
        assert_eq!(
            "probe:middle".parse::<RunRole>().unwrap_err().field,
            "mapping"
        );
    }

    #[test]
    fn header_words_suggest_roles_in_any_case() {
        let cases = [
            ("Elapsed time (h)", Some(Unit::Hour), RunRole::Time),
            ("Date/Time", None, RunRole::Time),
            ("Shelf inlet (°C)", Some(Unit::Celsius), RunRole::Shelf),
            ("FLUID", None, RunRole::Shelf),
            ("TC3 edge", None, RunRole::Probe(ProbeSite::Edge)),
            ("Product center", None, RunRole::Probe(ProbeSite::Centre)),
            (
                "Probe rear [K]",
                Some(Unit::Kelvin),
                RunRole::Probe(ProbeSite::Back),
            ),
            ("thermocouple front", None, RunRole::Probe(ProbeSite::Front)),
            ("CM [mTorr]", Some(Unit::MilliTorr), RunRole::Manometer),
            ("Capacitance gauge", None, RunRole::Manometer),
            ("Pirani [mTorr]", Some(Unit::MilliTorr), RunRole::Pirani),
            ("Thermal conductivity gauge", None, RunRole::Pirani),
            ("Condenser (°C)", Some(Unit::Celsius), RunRole::Condenser),
            ("Heater power", None, RunRole::Ignore),
        ];
        for (header, unit, role) in cases {
            assert_eq!(suggest_role(header, unit), role, "{header}");
        }
    }

    #[test]
    fn assumptions_are_noted_and_a_contradicting_unit_is_left_out() {
        let (role, note) = suggest("Product 1", None);
        assert_eq!(role, RunRole::Probe(ProbeSite::Centre));
        assert!(note.is_some_and(|n| n.contains("no probe position")));
        let (role, note) = suggest("Chamber pressure (Pa)", Some(Unit::Pascal));
        assert_eq!(role, RunRole::Manometer);
        assert!(note.is_some_and(|n| n.contains("no gauge type")));
        let (role, note) = suggest("Shelf (mbar)", Some(Unit::MilliBar));
        assert_eq!(role, RunRole::Ignore);
        assert!(note.is_some_and(|n| n.contains("mbar")));
    }
}
