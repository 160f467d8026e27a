//! A freeze-dryer run's data export (delimited text): time, shelf, product probes, chamber
//! pressure (capacitance manometer, Pirani) and condenser, converted to hours, °C and mTorr.
//!
//! Columns are taken from a mapping by header text (remembered per dryer) or, without one,
//! from the header words; when those do not settle every needed role, the caller gets the
//! columns, a preview and the reasons, and asks the analyst.
//!
//! Rules for what a file does not say (each one applied is recorded in `notes`):
//! - a temperature without a unit is °C; a pressure without a unit is mTorr;
//! - a numeric time without a unit is minutes (never guessed from the size of the values);
//! - a date-time or `H:MM[:SS]` time is hours since the column's first reading;
//! - a row without a time is left out; rows must not go back in time (equal times are
//!   kept: coarse clocks repeat them).

mod roles;

use std::collections::HashSet;
use std::io::Read;

use serde::{Deserialize, Serialize};

pub use roles::{suggest_role, ProbeSite, RunRole};

use crate::columns::Unit;
use crate::sniff::Cells;
use crate::table::{read_table_with, CellKind, Table};
use crate::{ImportError, Limits};
use roles::{suggest, Quantity};

/// Which column holds what, by header text, so a dryer's mapping applies to its later files.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ColumnMapping {
    pub header: String,
    pub role: RunRole,
}

/// A column of the file as offered for mapping.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RunColumn {
    /// 0-based position in the file.
    pub index: usize,
    /// The header text (made unique: a repeated name gets " #2", " #3"; a blank one
    /// "column N").
    pub header: String,
    pub unit: Option<Unit>,
    pub suggested: RunRole,
}

/// One product probe's temperatures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunProbe {
    pub header: String,
    pub site: ProbeSite,
    pub temp_c: Vec<f64>,
}

/// A run read and converted; every series has one value per row of `time_h` (NaN where
/// a reading is missing).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunImport {
    pub time_h: Vec<f64>,
    pub shelf_c: Vec<f64>,
    pub probes: Vec<RunProbe>,
    pub manometer_mtorr: Option<Vec<f64>>,
    pub pirani_mtorr: Option<Vec<f64>>,
    pub condenser_c: Option<Vec<f64>>,
    /// The mapping applied, every column of the file (to remember per dryer).
    pub mapping: Vec<ColumnMapping>,
    /// Assumptions made: units not stated, columns chosen from header words, rows left out.
    pub notes: Vec<String>,
    pub encoding: String,
    /// `key: value` lines above the header (dryer, batch, …), in order.
    pub preamble: Vec<(String, String)>,
}

/// The file's columns could not all be placed: the analyst chooses.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MappingRequest {
    pub columns: Vec<RunColumn>,
    /// The first data rows as text.
    pub preview: Vec<Vec<String>>,
    /// Why a choice is needed.
    pub reasons: Vec<String>,
    /// Assumptions behind the suggestions.
    pub notes: Vec<String>,
}

/// The outcome of reading a run export.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum RunRead {
    Ready(RunImport),
    NeedsMapping(MappingRequest),
}

/// Roles of which a run has at most one column.
const SINGLE_ROLES: [RunRole; 5] = [
    RunRole::Time,
    RunRole::Shelf,
    RunRole::Manometer,
    RunRole::Pirani,
    RunRole::Condenser,
];

/// Reads a run export. With `mapping`, columns are placed by header text and anything that
/// does not fit is an error; without, header words decide, or the answer asks for a mapping.
pub fn read_run<R: Read>(
    reader: R,
    limits: Limits,
    mapping: Option<&[ColumnMapping]>,
) -> Result<RunRead, ImportError> {
    let table = read_table_with(reader, limits, Cells::Readings)?;
    let headers = unique_headers(&table);
    let mut notes = Vec::new();
    let roles = match mapping {
        Some(given) => {
            let roles = apply_mapping(&headers, given, &mut notes)?;
            check_roles(&headers, &roles, &table)?;
            roles
        }
        None => {
            let mut columns = Vec::with_capacity(headers.len());
            for (index, header) in headers.iter().enumerate() {
                let unit = table.columns.get(index).and_then(|c| c.unit);
                let (suggested, note) = suggest(header, unit);
                notes.extend(note);
                columns.push(RunColumn {
                    index,
                    header: header.clone(),
                    unit,
                    suggested,
                });
            }
            let reasons = suggestion_problems(&mut columns, &table);
            if !reasons.is_empty() {
                return Ok(RunRead::NeedsMapping(MappingRequest {
                    columns,
                    preview: table.preview,
                    reasons,
                    notes,
                }));
            }
            notes.insert(
                0,
                "columns chosen from their header words; check the mapping".into(),
            );
            columns.iter().map(|c| c.suggested).collect()
        }
    };
    let field = |role: RunRole| -> &'static str {
        match (mapping.is_some(), role) {
            (true, _) => "mapping",
            (false, RunRole::Time) => "time_column",
            (false, RunRole::Shelf) => "shelf_column",
            (false, _) => "columns",
        }
    };
    let mut series = Vec::with_capacity(roles.len());
    for (c, &role) in roles.iter().enumerate() {
        series.push(convert(
            &table,
            c,
            &headers[c],
            role,
            field(role),
            &mut notes,
        )?);
    }
    assemble(&table, &headers, &roles, series, notes)
}

/// Header texts, unique and never blank, so a mapping can name each column.
fn unique_headers(table: &Table) -> Vec<String> {
    let mut seen: HashSet<String> = HashSet::new();
    table
        .columns
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let base = if c.name.trim().is_empty() {
                format!("column {}", i + 1)
            } else {
                c.name.trim().to_string()
            };
            let mut name = base.clone();
            let mut n = 1;
            while !seen.insert(name.clone()) {
                n += 1;
                name = format!("{base} #{n}");
            }
            name
        })
        .collect()
}

fn apply_mapping(
    headers: &[String],
    given: &[ColumnMapping],
    notes: &mut Vec<String>,
) -> Result<Vec<RunRole>, ImportError> {
    let mut listed = HashSet::new();
    for m in given {
        let h = m.header.trim();
        if !listed.insert(h) {
            return Err(ImportError::new(
                "mapping",
                format!("lists the column “{h}” twice"),
            ));
        }
        if !headers.iter().any(|x| x == h) {
            return Err(ImportError::new(
                "mapping",
                format!(
                    "names the column “{h}”, which this file does not have (its columns: {})",
                    quoted(headers.iter())
                ),
            ));
        }
    }
    Ok(headers
        .iter()
        .map(|h| match given.iter().find(|m| m.header.trim() == h) {
            Some(m) => m.role,
            None => {
                notes.push(format!("“{h}” is not in the mapping; ignored"));
                RunRole::Ignore
            }
        })
        .collect())
}

/// With a mapping: every needed role once, no role twice, no empty column used.
fn check_roles(headers: &[String], roles: &[RunRole], table: &Table) -> Result<(), ImportError> {
    for role in SINGLE_ROLES {
        let with: Vec<&String> = columns_with(roles, role).map(|c| &headers[c]).collect();
        if with.len() > 1 {
            return Err(ImportError::new(
                "mapping",
                format!(
                    "gives {} columns the role {role} ({}); a run has one",
                    with.len(),
                    quoted(with.into_iter())
                ),
            ));
        }
    }
    for (role, field) in [
        (RunRole::Time, "time_column"),
        (RunRole::Shelf, "shelf_column"),
    ] {
        if columns_with(roles, role).next().is_none() {
            return Err(ImportError::new(
                field,
                format!("the mapping gives no column the role {role}"),
            ));
        }
    }
    if !roles.iter().any(|r| is_process_reading(*r)) {
        return Err(ImportError::new(
            "columns",
            "the mapping has no product probe, manometer or Pirani column; a run needs one",
        ));
    }
    for (c, &role) in roles.iter().enumerate() {
        if role != RunRole::Ignore && is_empty(table, c) {
            return Err(ImportError::new(
                match role {
                    RunRole::Time => "time_column",
                    RunRole::Shelf => "shelf_column",
                    _ => "columns",
                },
                format!("“{}” has no readings; map it to ignore", headers[c]),
            ));
        }
    }
    Ok(())
}

/// Without a mapping: why the suggestions cannot be used as they stand. A suggested column
/// with no readings is set to ignore, with a reason.
fn suggestion_problems(columns: &mut [RunColumn], table: &Table) -> Vec<String> {
    let mut reasons = Vec::new();
    for col in columns.iter_mut() {
        if col.suggested != RunRole::Ignore && is_empty(table, col.index) {
            reasons.push(format!(
                "“{}” looks like {} but has no readings; it is set to ignore",
                col.header,
                col.suggested.label().to_lowercase()
            ));
            col.suggested = RunRole::Ignore;
        }
    }
    let roles: Vec<RunRole> = columns.iter().map(|c| c.suggested).collect();
    for role in SINGLE_ROLES {
        let with: Vec<&String> = columns_with(&roles, role)
            .map(|c| &columns[c].header)
            .collect();
        if with.len() > 1 {
            reasons.push(format!(
                "{} columns could be the {}: {}; choose one",
                with.len(),
                role.label().to_lowercase(),
                quoted(with.into_iter())
            ));
        }
    }
    for (role, words) in [
        (RunRole::Time, "“Time”, “Elapsed” or “Date”"),
        (RunRole::Shelf, "“Shelf”, “Inlet” or “Fluid”"),
    ] {
        if columns_with(&roles, role).next().is_none() {
            reasons.push(format!(
                "no header reads like the {} (such as {words}); choose its column",
                role.label().to_lowercase()
            ));
        }
    }
    if !roles.iter().any(|r| is_process_reading(*r)) {
        reasons.push(
            "no header reads like a product probe, manometer or Pirani gauge; choose at least \
             one"
            .into(),
        );
    }
    reasons
}

fn columns_with(roles: &[RunRole], role: RunRole) -> impl Iterator<Item = usize> + '_ {
    (0..roles.len()).filter(move |&c| roles[c] == role)
}

fn is_process_reading(role: RunRole) -> bool {
    matches!(
        role,
        RunRole::Probe(_) | RunRole::Manometer | RunRole::Pirani
    )
}

fn is_empty(table: &Table, c: usize) -> bool {
    table
        .data
        .get(c)
        .is_none_or(|v| v.iter().all(|x| x.is_nan()))
}

fn quoted<'a>(names: impl Iterator<Item = &'a String>) -> String {
    names
        .map(|n| format!("“{n}”"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Column `c` converted for its role (hours, °C or mTorr); empty for `Ignore`.
fn convert(
    table: &Table,
    c: usize,
    header: &str,
    role: RunRole,
    field: &str,
    notes: &mut Vec<String>,
) -> Result<Vec<f64>, ImportError> {
    let Some(quantity) = role.quantity() else {
        return Ok(Vec::new());
    };
    let values = table.data.get(c).map_or(&[][..], Vec::as_slice);
    let unit = table.columns.get(c).and_then(|col| col.unit);
    let unit = match unit {
        Some(u) if !quantity.admits(u) => {
            return Err(ImportError::new(
                field,
                format!(
                    "“{header}” is in {}, which cannot be the {}",
                    u.label(),
                    role.label().to_lowercase()
                ),
            ))
        }
        Some(u) => u,
        None => {
            let (assumed, what) = match quantity {
                Quantity::Time => (Unit::Minute, "minutes"),
                Quantity::Temperature => (Unit::Celsius, "°C"),
                Quantity::Pressure => (Unit::MilliTorr, "mTorr"),
            };
            notes.push(format!(
                "“{header}”: unit not stated; read as {what} (state it in the header, e.g. \
                 “{header} ({})”, if it is not)",
                assumed.label()
            ));
            assumed
        }
    };
    let to = |f: fn(Unit, f64) -> Option<f64>| {
        values
            .iter()
            .map(|&v| f(unit, v).unwrap_or(f64::NAN))
            .collect()
    };
    Ok(match quantity {
        Quantity::Time => to(|u, v| u.hours_per_unit().map(|k| v * k)),
        Quantity::Temperature => to(Unit::to_celsius),
        Quantity::Pressure => to(|u, v| u.millitorr_per_unit().map(|k| v * k)),
    })
}

/// The run from converted columns: rows without a time left out, time order checked.
fn assemble(
    table: &Table,
    headers: &[String],
    roles: &[RunRole],
    mut series: Vec<Vec<f64>>,
    mut notes: Vec<String>,
) -> Result<RunRead, ImportError> {
    let time_col = columns_with(roles, RunRole::Time)
        .next()
        .ok_or_else(|| ImportError::new("time_column", "no column holds the time"))?;
    let time = series.get(time_col).cloned().unwrap_or_default();
    let keep: Vec<usize> = (0..time.len()).filter(|&r| !time[r].is_nan()).collect();
    if keep.len() < time.len() {
        notes.push(format!(
            "{} rows without a time were left out",
            time.len() - keep.len()
        ));
    }
    if keep.len() < 2 {
        return Err(ImportError::new(
            "time_column",
            format!("“{}” has a time in fewer than two rows", headers[time_col]),
        ));
    }
    for pair in keep.windows(2) {
        let (a, b) = (pair[0], pair[1]);
        if time[b] < time[a] {
            let line = table.row_lines.get(b).copied().unwrap_or(0);
            return Err(ImportError::new(
                "time_column",
                format!(
                    "“{}” goes back in time at line {line} ({:.4} h after {:.4} h); the rows \
                     must be in time order",
                    headers[time_col], time[b], time[a]
                ),
            ));
        }
    }
    if table
        .kinds
        .get(time_col)
        .is_some_and(|k| *k != CellKind::Number)
    {
        notes.push(format!(
            "“{}”: times read as hours since the first row",
            headers[time_col]
        ));
    }
    let mut pick = |c: usize| -> Vec<f64> {
        let all = std::mem::take(&mut series[c]);
        keep.iter()
            .map(|&r| all.get(r).copied().unwrap_or(f64::NAN))
            .collect()
    };
    let time_h = pick(time_col);
    let mut shelf_c = Vec::new();
    let mut probes = Vec::new();
    let (mut manometer_mtorr, mut pirani_mtorr, mut condenser_c) = (None, None, None);
    for (c, &role) in roles.iter().enumerate() {
        match role {
            RunRole::Time | RunRole::Ignore => {}
            RunRole::Shelf => shelf_c = pick(c),
            RunRole::Probe(site) => probes.push(RunProbe {
                header: headers[c].clone(),
                site,
                temp_c: pick(c),
            }),
            RunRole::Manometer => manometer_mtorr = Some(pick(c)),
            RunRole::Pirani => pirani_mtorr = Some(pick(c)),
            RunRole::Condenser => condenser_c = Some(pick(c)),
        }
    }
    if shelf_c.is_empty() {
        return Err(ImportError::new(
            "shelf_column",
            "no column holds the shelf temperature",
        ));
    }
    Ok(RunRead::Ready(RunImport {
        time_h,
        shelf_c,
        probes,
        manometer_mtorr,
        pirani_mtorr,
        condenser_c,
        mapping: headers
            .iter()
            .zip(roles)
            .map(|(h, &role)| ColumnMapping {
                header: h.clone(),
                role,
            })
            .collect(),
        notes,
        encoding: table.encoding.to_string(),
        preamble: table.preamble.clone(),
    }))
}
