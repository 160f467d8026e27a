//! A DSC trace from a delimited export: which columns are temperature, heat flow, time,
//! sample temperature and reversing heat flow; units converted (°C, mW or W/g, s); sample
//! mass and heating rate from the preamble; segments.

use std::io::Read;

use crate::columns::{Role, Unit};
use crate::number::parse_number;
use crate::segments::{split_segments, Segment};
use crate::sniff::DecimalMark;
use crate::table::{read_table, Table};
use crate::{ImportError, Limits};

/// The heat-flow unit after conversion.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HeatFlowUnit {
    /// mW (W and µW are converted).
    MilliWatt,
    /// W/g, the same number as mW/mg (mW/g is converted).
    WattPerGram,
}

/// Columns the analyst picked (0-based); `None` lets the reader choose.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct ColumnChoice {
    pub temperature: Option<usize>,
    pub heat_flow: Option<usize>,
    pub time: Option<usize>,
}

/// Several columns could serve one purpose: the page shows them and lets the analyst
/// choose.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Ambiguity {
    /// "temperature", "heat_flow" or "time".
    pub purpose: &'static str,
    pub candidates: Vec<usize>,
    pub chosen: usize,
    pub reason: String,
}

/// The columns used (0-based).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DscColumns {
    pub temperature: usize,
    pub heat_flow: usize,
    pub time: Option<usize>,
    pub sample_temperature: Option<usize>,
    pub reversing_heat_flow: Option<usize>,
    pub ambiguities: Vec<Ambiguity>,
}

/// A DSC export read and converted.
#[derive(Debug, Clone, PartialEq)]
pub struct DscImport {
    pub table: Table,
    pub columns: DscColumns,
    pub temperature_c: Vec<f64>,
    pub heat_flow: Vec<f64>,
    pub heat_flow_unit: HeatFlowUnit,
    pub time_s: Option<Vec<f64>>,
    pub reversing_heat_flow: Option<Vec<f64>>,
    pub sample_mass_mg: Option<f64>,
    pub heating_rate_c_min: Option<f64>,
    pub segments: Vec<Segment>,
    /// Assumptions made (a unit not stated, columns guessed by position).
    pub notes: Vec<String>,
}

impl DscImport {
    /// Temperature and heat flow of one heating or cooling segment, monotonic in
    /// temperature, ready for analysis.
    pub fn segment_trace(&self, index: usize) -> Result<(Vec<f64>, Vec<f64>), ImportError> {
        let seg = self.segments.get(index).ok_or_else(|| {
            ImportError::new(
                "segment",
                format!("there is no segment {index} (of {})", self.segments.len()),
            )
        })?;
        let rows = seg.monotonic_rows(&self.temperature_c)?;
        Ok((
            rows.iter().map(|&r| self.temperature_c[r]).collect(),
            rows.iter().map(|&r| self.heat_flow[r]).collect(),
        ))
    }
}

/// Reads a DSC trace from a delimited text export.
pub fn read_dsc<R: Read>(
    reader: R,
    limits: Limits,
    choice: ColumnChoice,
) -> Result<DscImport, ImportError> {
    let table = read_table(reader, limits)?;
    let mut notes = Vec::new();
    let columns = pick_columns(&table, choice, &mut notes)?;
    let unit_of = |c: usize| table.columns[c].unit;
    let temperature_c: Vec<f64> = match unit_of(columns.temperature) {
        Some(Unit::Kelvin) => table.data[columns.temperature]
            .iter()
            .map(|k| k - 273.15)
            .collect(),
        Some(Unit::Celsius) => table.data[columns.temperature].clone(),
        _ => {
            notes.push("temperature unit not stated; read as °C".into());
            table.data[columns.temperature].clone()
        }
    };
    let (heat_flow, heat_flow_unit) = convert_heat_flow(
        &table.data[columns.heat_flow],
        unit_of(columns.heat_flow),
        &mut notes,
    );
    let reversing_heat_flow = columns
        .reversing_heat_flow
        .map(|c| convert_heat_flow(&table.data[c], unit_of(c), &mut Vec::new()).0);
    let time_s = columns.time.map(|c| {
        let f = match unit_of(c) {
            Some(Unit::Minute) => 60.0,
            Some(Unit::Hour) => 3600.0,
            Some(Unit::Second) => 1.0,
            _ => {
                notes.push("time unit not stated; read as minutes".into());
                60.0
            }
        };
        table.data[c].iter().map(|v| v * f).collect::<Vec<f64>>()
    });
    let segments = split_segments(&temperature_c, time_s.as_deref())?;
    let sample_mass_mg = preamble_value(&table, &["mass", "weight", "sample size"], mass_mg);
    let heating_rate_c_min = preamble_value(&table, &["rate"], rate_c_min);
    Ok(DscImport {
        columns,
        temperature_c,
        heat_flow,
        heat_flow_unit,
        time_s,
        reversing_heat_flow,
        sample_mass_mg,
        heating_rate_c_min,
        segments,
        notes,
        table,
    })
}

fn convert_heat_flow(
    v: &[f64],
    unit: Option<Unit>,
    notes: &mut Vec<String>,
) -> (Vec<f64>, HeatFlowUnit) {
    let (f, u) = match unit {
        Some(Unit::Watt) => (1000.0, HeatFlowUnit::MilliWatt),
        Some(Unit::MicroWatt) => (1e-3, HeatFlowUnit::MilliWatt),
        Some(Unit::WattPerGram) => (1.0, HeatFlowUnit::WattPerGram),
        Some(Unit::MilliWattPerGram) => (1e-3, HeatFlowUnit::WattPerGram),
        Some(Unit::MilliWatt) => (1.0, HeatFlowUnit::MilliWatt),
        _ => {
            notes.push("heat-flow unit not stated; read as mW".into());
            (1.0, HeatFlowUnit::MilliWatt)
        }
    };
    (v.iter().map(|x| x * f).collect(), u)
}

fn pick_columns(
    table: &Table,
    choice: ColumnChoice,
    notes: &mut Vec<String>,
) -> Result<DscColumns, ImportError> {
    let n = table.columns.len();
    for (name, c) in [
        ("temperature_column", choice.temperature),
        ("heat_flow_column", choice.heat_flow),
        ("time_column", choice.time),
    ] {
        if let Some(c) = c.filter(|&c| c >= n) {
            return Err(ImportError::new(
                name,
                format!("column {} does not exist; the file has {n}", c + 1),
            ));
        }
    }
    let with = |roles: &[Role]| -> Vec<usize> {
        (0..n)
            .filter(|&i| roles.contains(&table.columns[i].role))
            .collect()
    };
    let sample_t = with(&[Role::SampleTemperature]);
    let temps = with(&[Role::SampleTemperature, Role::Temperature]);
    let flows = with(&[Role::HeatFlow]);
    let times = with(&[Role::Time]);
    let reversing = with(&[Role::ReversingHeatFlow]).first().copied();
    let mut ambiguities = Vec::new();
    let mut pick = |purpose: &'static str,
                    given: Option<usize>,
                    cands: &[usize],
                    prefer: Option<usize>|
     -> Option<usize> {
        if let Some(c) = given {
            return Some(c);
        }
        let chosen = prefer.or(cands.first().copied())?;
        if cands.len() > 1 {
            ambiguities.push(Ambiguity {
                purpose,
                candidates: cands.to_vec(),
                chosen,
                reason: format!("{} columns could be the {purpose}", cands.len()),
            });
        }
        Some(chosen)
    };
    let named = !temps.is_empty() && !flows.is_empty();
    let (temperature, heat_flow, time) =
        if named || choice.temperature.is_some() && choice.heat_flow.is_some() {
            let prefer_t = (sample_t.len() == 1).then(|| sample_t[0]);
            let prefer_hf = flows
                .iter()
                .copied()
                .find(|&c| table.columns[c].name.to_lowercase().contains("total"));
            let t = pick("temperature", choice.temperature, &temps, prefer_t);
            let hf = pick("heat_flow", choice.heat_flow, &flows, prefer_hf);
            let time = pick("time", choice.time, &times, None);
            match (t, hf) {
                (Some(t), Some(hf)) => (t, hf, time),
                _ => {
                    return Err(ImportError::new(
                        "columns",
                        "no temperature or no heat-flow column could be identified; choose them",
                    ))
                }
            }
        } else {
            // No usable header: by position (time, temperature, heat flow) or (temperature, heat flow).
            let (t, hf, time) = if n >= 3 && looks_like_time(&table.data[0]) {
                (1, 2, Some(0))
            } else {
                (0, 1, None)
            };
            let t = choice.temperature.unwrap_or(t);
            let hf = choice.heat_flow.unwrap_or(hf);
            let time = choice.time.or(time);
            notes.push("columns not named in a header; chosen by position".into());
            ambiguities.push(Ambiguity {
                purpose: "temperature",
                candidates: (0..n).collect(),
                chosen: t,
                reason: "no header names the columns".into(),
            });
            ambiguities.push(Ambiguity {
                purpose: "heat_flow",
                candidates: (0..n).collect(),
                chosen: hf,
                reason: "no header names the columns".into(),
            });
            (t, hf, time)
        };
    if temperature == heat_flow {
        return Err(ImportError::new(
            "heat_flow_column",
            "must differ from the temperature column",
        ));
    }
    Ok(DscColumns {
        temperature,
        heat_flow,
        time,
        sample_temperature: sample_t.first().copied(),
        reversing_heat_flow: reversing.filter(|&r| r != heat_flow),
        ambiguities,
    })
}

/// Starts near zero and never decreases.
fn looks_like_time(v: &[f64]) -> bool {
    v.first().is_some_and(|&f| (0.0..=1.0).contains(&f)) && v.windows(2).all(|w| w[1] >= w[0])
}

/// The first preamble value whose key contains one of `keys`, converted by `read`.
fn preamble_value(
    table: &Table,
    keys: &[&str],
    read: fn(&str, DecimalMark) -> Option<f64>,
) -> Option<f64> {
    table.preamble.iter().find_map(|(k, v)| {
        let k = k.to_lowercase();
        keys.iter()
            .any(|w| k.contains(w))
            .then(|| read(v, table.decimal))
            .flatten()
    })
}

/// The leading number of a value and the rest of it (its unit).
fn number_and_unit(v: &str, mark: DecimalMark) -> Option<(f64, String)> {
    let v = v.trim();
    let end = v
        .find(|c: char| !(c.is_ascii_digit() || matches!(c, '.' | ',' | '-' | '+' | 'e' | 'E')))
        .unwrap_or(v.len());
    let x =
        parse_number(&v[..end], mark).or_else(|| parse_number(&v[..end], DecimalMark::Point))?;
    Some((x, v[end..].trim().to_lowercase().replace(' ', "")))
}

fn mass_mg(v: &str, mark: DecimalMark) -> Option<f64> {
    let (x, u) = number_and_unit(v, mark)?;
    let f = match u.as_str() {
        "" | "mg" => 1.0,
        "g" => 1000.0,
        "µg" | "ug" => 1e-3,
        _ => return None,
    };
    (x > 0.0).then_some(x * f)
}

fn rate_c_min(v: &str, mark: DecimalMark) -> Option<f64> {
    let (x, u) = number_and_unit(v, mark)?;
    let f = match u.as_str() {
        "" | "k/min" | "°c/min" | "c/min" | "℃/min" => 1.0,
        "k/s" | "°c/s" => 60.0,
        "k/h" | "°c/h" => 1.0 / 60.0,
        _ => return None,
    };
    (x != 0.0).then_some(x.abs() * f)
}
