//! What a column holds, read from its header: a unit (in brackets, after a slash or a
//! space, or in a units row) and a role from its name.

use serde::Serialize;

/// Units recognised in headers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Unit {
    Celsius,
    Kelvin,
    MilliWatt,
    Watt,
    MicroWatt,
    /// W/g, the same number as mW/mg.
    WattPerGram,
    /// mW/g.
    MilliWattPerGram,
    Second,
    Minute,
    Hour,
    MilliGram,
    Percent,
    MilliTorr,
    Torr,
    Pascal,
    MilliBar,
    MicroBar,
}

impl Unit {
    pub fn is_temperature(self) -> bool {
        matches!(self, Unit::Celsius | Unit::Kelvin)
    }
    pub fn is_heat_flow(self) -> bool {
        matches!(
            self,
            Unit::MilliWatt
                | Unit::Watt
                | Unit::MicroWatt
                | Unit::WattPerGram
                | Unit::MilliWattPerGram
        )
    }
    pub fn is_time(self) -> bool {
        matches!(self, Unit::Second | Unit::Minute | Unit::Hour)
    }
    pub fn is_pressure(self) -> bool {
        matches!(
            self,
            Unit::MilliTorr | Unit::Torr | Unit::Pascal | Unit::MilliBar | Unit::MicroBar
        )
    }
    /// A temperature in this unit to °C (`None` when it is not a temperature unit).
    pub fn to_celsius(self, v: f64) -> Option<f64> {
        match self {
            Unit::Celsius => Some(v),
            Unit::Kelvin => Some(v - 273.15),
            _ => None,
        }
    }
    /// Factor from this unit to hours (`None` when it is not a time unit).
    pub fn hours_per_unit(self) -> Option<f64> {
        match self {
            Unit::Second => Some(1.0 / 3600.0),
            Unit::Minute => Some(1.0 / 60.0),
            Unit::Hour => Some(1.0),
            _ => None,
        }
    }
    /// Factor from this unit to mTorr (`None` when it is not a pressure unit). 1 Torr =
    /// 101325/760 Pa, so 1 Pa = 7.50062 mTorr and 1 mbar = 100 Pa (SI definitions).
    pub fn millitorr_per_unit(self) -> Option<f64> {
        match self {
            Unit::MilliTorr => Some(1.0),
            Unit::Torr => Some(1000.0),
            Unit::Pascal => Some(7.50062),
            Unit::MilliBar => Some(750.062),
            Unit::MicroBar => Some(0.750062),
            _ => None,
        }
    }
    /// How the unit is written in messages.
    pub fn label(self) -> &'static str {
        match self {
            Unit::Celsius => "°C",
            Unit::Kelvin => "K",
            Unit::MilliWatt => "mW",
            Unit::Watt => "W",
            Unit::MicroWatt => "µW",
            Unit::WattPerGram => "W/g",
            Unit::MilliWattPerGram => "mW/g",
            Unit::Second => "s",
            Unit::Minute => "min",
            Unit::Hour => "h",
            Unit::MilliGram => "mg",
            Unit::Percent => "%",
            Unit::MilliTorr => "mTorr",
            Unit::Torr => "Torr",
            Unit::Pascal => "Pa",
            Unit::MilliBar => "mbar",
            Unit::MicroBar => "µbar",
        }
    }
}

/// A unit written on its own ("°C", "[mW]", "(W/g)", "min").
pub fn parse_unit(text: &str) -> Option<Unit> {
    let t = text
        .trim()
        .trim_start_matches(['(', '[', '{'])
        .trim_end_matches([')', ']', '}'])
        .trim()
        .replace(['µ', 'μ'], "u")
        .replace(' ', "")
        .to_lowercase();
    Some(match t.as_str() {
        "°c" | "℃" | "degc" | "deg.c" | "c" | "oc" | "celsius" => Unit::Celsius,
        "k" | "kelvin" => Unit::Kelvin,
        "mw" => Unit::MilliWatt,
        "w" => Unit::Watt,
        "uw" => Unit::MicroWatt,
        "w/g" | "mw/mg" | "w·g-1" | "wg^-1" | "wg-1" => Unit::WattPerGram,
        "mw/g" => Unit::MilliWattPerGram,
        "s" | "sec" | "seconds" => Unit::Second,
        "min" | "minutes" => Unit::Minute,
        "h" | "hr" | "hrs" | "hours" => Unit::Hour,
        "mg" => Unit::MilliGram,
        "%" => Unit::Percent,
        "mtorr" | "millitorr" => Unit::MilliTorr,
        "torr" => Unit::Torr,
        "pa" => Unit::Pascal,
        "mbar" => Unit::MilliBar,
        "ubar" => Unit::MicroBar,
        _ => return None,
    })
}

/// A unit inside a header cell: "Temperature (°C)", "Heat flow [mW]", "Time/min",
/// "Tr °C".
pub fn unit_in_header(cell: &str) -> Option<Unit> {
    let c = cell.trim();
    for (open, close) in [('(', ')'), ('[', ']'), ('{', '}')] {
        if let (Some(a), Some(b)) = (c.rfind(open), c.rfind(close)) {
            if a < b {
                if let Some(u) = parse_unit(&c[a + 1..b]) {
                    return Some(u);
                }
            }
        }
    }
    if let Some((_, u)) = c.split_once('/') {
        if let Some(u) = parse_unit(u) {
            return Some(u);
        }
    }
    if let Some(u) = c.rsplit(' ').next().and_then(parse_unit) {
        if c.contains(' ') {
            return Some(u);
        }
    }
    // A bare unit as the whole header (a units-only row) is handled by the caller.
    None
}

/// What a column is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    Time,
    /// Temperature measured at the sample.
    SampleTemperature,
    /// Any other temperature (program, reference, furnace, unnamed).
    Temperature,
    HeatFlow,
    ReversingHeatFlow,
    NonReversingHeatFlow,
    Other,
}

/// One column as the header describes it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ColumnInfo {
    pub name: String,
    pub unit: Option<Unit>,
    pub role: Role,
}

/// Reads a column's unit and role from its name and, when present, its units-row cell.
pub fn describe(name: &str, units_cell: Option<&str>) -> ColumnInfo {
    let unit = units_cell
        .and_then(parse_unit)
        .or_else(|| unit_in_header(name));
    let n = name.to_lowercase();
    let has = |w: &str| n.contains(w);
    let role = if has("non-rev") || has("nonrev") || has("non rev") {
        Role::NonReversingHeatFlow
    } else if has("rev") && (has("heat") || has("hf") || unit.is_some_and(Unit::is_heat_flow)) {
        Role::ReversingHeatFlow
    } else if has("heat flow")
        || has("heatflow")
        || has("heat-flow")
        || has("dsc")
        || n.split(|c: char| !c.is_alphanumeric()).any(|w| w == "hf")
        || unit.is_some_and(Unit::is_heat_flow)
    {
        Role::HeatFlow
    } else if has("time") || unit.is_some_and(Unit::is_time) {
        Role::Time
    } else if has("temp") || unit.is_some_and(Unit::is_temperature) {
        if has("sample") {
            Role::SampleTemperature
        } else {
            Role::Temperature
        }
    } else {
        Role::Other
    };
    ColumnInfo {
        name: name.trim().to_string(),
        unit,
        role,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_are_read_from_brackets_slashes_and_unit_rows() {
        assert_eq!(describe("Temperature (°C)", None).unit, Some(Unit::Celsius));
        assert_eq!(
            describe("Heat Flow [mW/mg]", None).unit,
            Some(Unit::WattPerGram)
        );
        assert_eq!(describe("Time/min", None).unit, Some(Unit::Minute));
        assert_eq!(describe("Ts", Some("K")).unit, Some(Unit::Kelvin));
        assert_eq!(
            describe("Sample temperature", None).role,
            Role::SampleTemperature
        );
        assert_eq!(
            describe("Rev Heat Flow (W/g)", None).role,
            Role::ReversingHeatFlow
        );
        assert_eq!(
            describe("Non-Rev Heat Flow", None).role,
            Role::NonReversingHeatFlow
        );
        assert_eq!(describe("Heat flow (µW)", None).unit, Some(Unit::MicroWatt));
    }

    #[test]
    fn pressure_units_are_read_and_converted_to_millitorr() {
        assert_eq!(describe("Pirani [mTorr]", None).unit, Some(Unit::MilliTorr));
        assert_eq!(describe("Chamber (µbar)", None).unit, Some(Unit::MicroBar));
        assert_eq!(describe("CM", Some("Pa")).unit, Some(Unit::Pascal));
        assert_eq!(describe("Vacuum/mbar", None).unit, Some(Unit::MilliBar));
        assert_eq!(describe("P Torr", None).unit, Some(Unit::Torr));
        // 1 Torr = 101325/760 Pa = 133.322 Pa (definition of the torr); the factors carry
        // six significant figures.
        let pa = Unit::Pascal.millitorr_per_unit().unwrap() * 101_325.0 / 760.0;
        assert!((pa - 1000.0).abs() < 1e-5 * 1000.0, "{pa}");
        let mbar = Unit::MilliBar.millitorr_per_unit().unwrap()
            / Unit::Pascal.millitorr_per_unit().unwrap();
        assert!((mbar - 100.0).abs() < 1e-9, "{mbar}");
    }
}
