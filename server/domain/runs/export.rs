//! A run's recorded data: the dryer's export read through the shared import, and the
//! series as stored.

use super::super::fields::*;
use super::MAX_RUN_FILE_BYTES;

/// One probe's readings as stored; `None` where the logger recorded nothing.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StoredProbe {
    pub label: String,
    /// "centre", "edge", "front" or "back".
    pub position: String,
    pub temp_c: Vec<Option<f64>>,
}

/// The series read from a run's export, as stored (JSON text).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StoredSeries {
    pub time_h: Vec<f64>,
    pub shelf_c: Vec<Option<f64>>,
    pub probes: Vec<StoredProbe>,
    #[serde(default)]
    pub manometer_mtorr: Option<Vec<Option<f64>>>,
    #[serde(default)]
    pub pirani_mtorr: Option<Vec<Option<f64>>>,
    #[serde(default)]
    pub condenser_c: Option<Vec<Option<f64>>>,
}

/// A recorded-data export read and ready to store.
#[derive(Debug, Clone)]
pub struct RecordedData {
    pub file_name: String,
    pub bytes: Vec<u8>,
    pub content_sha256: String,
    pub series: StoredSeries,
    pub import_notes: Vec<String>,
}

fn finite_or_none(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

fn column(values: &[f64]) -> Vec<Option<f64>> {
    values.iter().copied().map(finite_or_none).collect()
}

impl StoredSeries {
    /// The series an import read (missing readings are NaN there, `None` here).
    pub fn from_import(r: &glasspoint_import::RunImport) -> Self {
        StoredSeries {
            time_h: r.time_h.clone(),
            shelf_c: column(&r.shelf_c),
            probes: r
                .probes
                .iter()
                .map(|p| StoredProbe {
                    label: p.header.clone(),
                    position: p.site.key().to_string(),
                    temp_c: column(&p.temp_c),
                })
                .collect(),
            manometer_mtorr: r.manometer_mtorr.as_deref().map(column),
            pirani_mtorr: r.pirani_mtorr.as_deref().map(column),
            condenser_c: r.condenser_c.as_deref().map(column),
        }
    }
}

/// What reading an export gave: the data to store with the column map applied, or the
/// columns to map first.
pub enum ReadOutcome {
    Ready {
        data: RecordedData,
        /// (header, role code), to remember for the dryer.
        mapping: Vec<(String, String)>,
    },
    NeedsMapping(glasspoint_import::MappingRequest),
}

/// Reads a dryer's data export. `mapping` (header, role code) comes from the form's
/// column choices or the dryer's remembered map; without one the columns are guessed
/// from their headers. What cannot be read is refused naming the field.
pub fn read_recorded(
    file_name: &str,
    bytes: Vec<u8>,
    mapping: &[(String, String)],
) -> Result<ReadOutcome, FieldErrors> {
    use glasspoint_import::{read_run, ColumnMapping, Limits, RunRead, RunRole};
    if bytes.is_empty() {
        return Err(
            FieldError::new("file", "choose the dryer's data export (the file is empty)").into(),
        );
    }
    let name = file_name.trim();
    let mut e = FieldErrors::default();
    let name = optional_text(&mut e, "file", name, limits::LONG_NAME_CHARS);
    if !e.is_empty() {
        return Err(e);
    }
    let mut columns = Vec::new();
    for (header, role) in mapping {
        let Ok(role) = role.parse::<RunRole>() else {
            return Err(FieldError::new(
                "mapping",
                format!("“{role}” is not a column role (column “{header}”)"),
            )
            .into());
        };
        columns.push(ColumnMapping {
            header: header.clone(),
            role,
        });
    }
    let limits = Limits {
        max_bytes: MAX_RUN_FILE_BYTES as u64,
        ..Limits::default()
    };
    let given = (!columns.is_empty()).then_some(columns.as_slice());
    match read_run(bytes.as_slice(), limits, given) {
        Ok(RunRead::Ready(r)) => {
            use sha2::{Digest, Sha256};
            let content_sha256 = hex::encode(Sha256::digest(&bytes));
            let mapping = r
                .mapping
                .iter()
                .map(|m| (m.header.clone(), m.role.to_string()))
                .collect();
            let mut import_notes = vec![format!("Read as {}.", r.encoding)];
            import_notes.extend(r.notes.iter().cloned());
            Ok(ReadOutcome::Ready {
                data: RecordedData {
                    file_name: if name.is_empty() {
                        "run-data.txt".into()
                    } else {
                        name
                    },
                    content_sha256,
                    series: StoredSeries::from_import(&r),
                    import_notes,
                    bytes,
                },
                mapping,
            })
        }
        Ok(RunRead::NeedsMapping(req)) => Ok(ReadOutcome::NeedsMapping(req)),
        Err(err) => Err(FieldError::new(
            if err.field == "file" || err.field == "mapping" {
                err.field.clone()
            } else {
                format!("file ({})", err.field)
            },
            err.message,
        )
        .into()),
    }
}

/// Reads an export with a dryer's remembered column map. An export whose columns the map
/// does not name is read as if none were remembered (guessed from its headers, or the
/// columns asked for): a dryer's export may change, and a map remembered from an older
/// layout must not refuse every newer file.
pub fn read_with_remembered_map(
    file_name: &str,
    bytes: Vec<u8>,
    remembered: &[(String, String)],
) -> Result<ReadOutcome, FieldErrors> {
    if remembered.is_empty() {
        return read_recorded(file_name, bytes, &[]);
    }
    match read_recorded(file_name, bytes.clone(), remembered) {
        Err(e) if e.has("mapping") => {
            let mut outcome = read_recorded(file_name, bytes, &[])?;
            if let ReadOutcome::Ready { data, .. } = &mut outcome {
                data.import_notes.push(
                    "The dryer's remembered column map does not fit this export; its columns \
                     were chosen from their headers."
                        .into(),
                );
            }
            Ok(outcome)
        }
        other => other,
    }
}
