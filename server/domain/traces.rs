//! DSC traces: an uploaded file read into temperature and heat flow, with the conditions
//! of the run; and the values an analyst reads off a trace to record as measurements.
//!
//! Reading is `glasspoint_import::read_dsc`; what it cannot read is refused naming the
//! field (`file`, `encoding`, `temperature_column`…), and what is ambiguous (several
//! candidate columns) is handed back as a preview for the analyst to choose.

use glasspoint_import::{
    read_dsc, ColumnChoice, DscImport, HeatFlowUnit, Limits, Segment, SegmentKind,
};
use glasspoint_science::dsc::Exo;
use time::OffsetDateTime;

use super::fields::*;

/// Largest upload the trace routes accept, bytes (the rest of the app keeps its smaller
/// limit).
pub const MAX_TRACE_BYTES: usize = 64 * 1024 * 1024;

/// Longest file name kept.
pub const FILE_NAME_CHARS: usize = 200;

/// Rows of the file shown when the columns are ambiguous.
pub const PREVIEW_ROWS: usize = 6;

/// A trace as read back (without its bytes and arrays).
#[derive(Debug, Clone, serde::Serialize, utoipa::ToSchema)]
pub struct TraceMeta {
    pub id: i64,
    pub formulation_id: i64,
    pub file_name: String,
    /// SHA-256 of the original bytes, hex.
    pub content_sha256: String,
    pub byte_count: i64,
    /// "mW" or "W/g".
    pub heat_flow_unit: String,
    pub sample_mass_mg: Option<f64>,
    pub heating_rate_c_min: Option<f64>,
    /// "up" or "down": which way an exotherm points in the heat-flow column.
    pub exo: String,
    pub notes: String,
    /// What the reader assumed (a unit not stated, columns guessed).
    pub import_notes: Vec<String>,
    pub version: i64,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub created_at: OffsetDateTime,
}

impl TraceMeta {
    pub fn exo(&self) -> Exo {
        if self.exo == "down" {
            Exo::Down
        } else {
            Exo::Up
        }
    }

    pub fn science_unit(&self) -> glasspoint_science::dsc::HeatFlowUnit {
        if self.heat_flow_unit == "W/g" {
            glasspoint_science::dsc::HeatFlowUnit::WattPerGram
        } else {
            glasspoint_science::dsc::HeatFlowUnit::MilliWatt
        }
    }
}

/// One segment as stored (rows `start..end`).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StoredSegment {
    /// "heating", "cooling" or "isothermal".
    pub kind: String,
    pub start: usize,
    pub end: usize,
    pub start_c: f64,
    pub end_c: f64,
    pub rate_c_min: Option<f64>,
}

impl StoredSegment {
    fn from_segment(s: &Segment) -> Self {
        StoredSegment {
            kind: match s.kind {
                SegmentKind::Heating => "heating",
                SegmentKind::Cooling => "cooling",
                SegmentKind::Isothermal => "isothermal",
            }
            .into(),
            start: s.start,
            end: s.end,
            start_c: s.start_c,
            end_c: s.end_c,
            rate_c_min: s.rate_c_min,
        }
    }

    fn to_segment(&self) -> Segment {
        Segment {
            kind: match self.kind.as_str() {
                "heating" => SegmentKind::Heating,
                "cooling" => SegmentKind::Cooling,
                _ => SegmentKind::Isothermal,
            },
            start: self.start,
            end: self.end,
            start_c: self.start_c,
            end_c: self.end_c,
            rate_c_min: self.rate_c_min,
        }
    }
}

/// The parsed arrays of a trace.
#[derive(Debug, Clone, PartialEq)]
pub struct TraceData {
    pub temperature_c: Vec<f64>,
    pub heat_flow: Vec<f64>,
    pub segments: Vec<StoredSegment>,
}

impl TraceData {
    /// The segment analysed: the longest heating segment, else the longest cooling one;
    /// its index and its rows, monotonic in temperature.
    pub fn analysed_segment(&self) -> Result<(usize, Vec<f64>, Vec<f64>), FieldError> {
        pick_segment(&self.segments, &self.temperature_c).map(|(i, rows)| {
            (
                i,
                rows.iter().map(|&r| self.temperature_c[r]).collect(),
                rows.iter().map(|&r| self.heat_flow[r]).collect(),
            )
        })
    }
}

fn pick_segment(
    segments: &[StoredSegment],
    temperature_c: &[f64],
) -> Result<(usize, Vec<usize>), FieldError> {
    let longest = |kind: &str| {
        segments
            .iter()
            .enumerate()
            .filter(|(_, s)| s.kind == kind)
            .max_by_key(|(_, s)| s.end.saturating_sub(s.start))
    };
    let Some((i, seg)) = longest("heating").or_else(|| longest("cooling")) else {
        return Err(FieldError::new(
            "file",
            "has no heating or cooling segment: temperature does not move steadily",
        ));
    };
    let rows = seg
        .to_segment()
        .monotonic_rows(temperature_c)
        .map_err(|e| FieldError::new(e.field, e.message))?;
    let min = glasspoint_science::dsc::trace::MIN_TRACE_POINTS;
    if rows.len() < min {
        return Err(FieldError::new(
            "file",
            format!(
                "its {} segment has {} point(s); at least {min} are needed to analyse it",
                seg.kind,
                rows.len()
            ),
        ));
    }
    Ok((i, rows))
}

/// A trace ready to store: every check passed.
#[derive(Debug, Clone)]
pub struct TraceDraft {
    pub file_name: String,
    pub bytes: Vec<u8>,
    pub content_sha256: String,
    pub data: TraceData,
    pub heat_flow_unit: &'static str,
    pub import_notes: Vec<String>,
    pub sample_mass_mg: Option<f64>,
    pub heating_rate_c_min: Option<f64>,
    pub exo: Exo,
    pub notes: String,
}

/// The typed fields of the upload form (and the API's query), as sent.
#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
pub struct TraceForm {
    #[serde(default)]
    pub file_name: String,
    #[serde(default)]
    pub sample_mass_mg: String,
    #[serde(default)]
    pub heating_rate_c_min: String,
    #[serde(default)]
    pub exo: String,
    #[serde(default)]
    pub notes: String,
    #[serde(default)]
    pub temperature_column: String,
    #[serde(default)]
    pub heat_flow_column: String,
    #[serde(default)]
    pub time_column: String,
}

/// Several columns could be the temperature or the heat flow: the first rows, and the
/// candidates, for the analyst to choose.
#[derive(Debug, Clone, Default)]
pub struct ColumnPreview {
    pub columns: Vec<String>,
    pub rows: Vec<Vec<String>>,
    /// (purpose, candidate column indexes, the reader's guess, why it is ambiguous).
    pub ambiguities: Vec<(String, Vec<usize>, usize, String)>,
    /// The reader's guesses, preselected.
    pub guess_temperature: usize,
    pub guess_heat_flow: usize,
}

/// Why an upload was not stored.
#[derive(Debug)]
pub enum UploadRefusal {
    Fields(FieldErrors),
    Ambiguous(ColumnPreview),
}

impl From<FieldErrors> for UploadRefusal {
    fn from(e: FieldErrors) -> Self {
        UploadRefusal::Fields(e)
    }
}

fn one(field: &str, message: impl Into<String>) -> UploadRefusal {
    let mut e = FieldErrors::default();
    e.add(field, message);
    UploadRefusal::Fields(e)
}

fn column_index(e: &mut FieldErrors, field: &str, raw: &str) -> Option<usize> {
    let text = raw.trim();
    if text.is_empty() {
        return None;
    }
    match text.parse::<usize>() {
        Ok(v) if v < 10_000 => Some(v),
        _ => {
            e.add(field, format!("“{text}” is not a column of the file"));
            None
        }
    }
}

impl TraceForm {
    /// Reads `bytes` with the conditions typed beside them; nothing is stored unless this
    /// succeeds.
    pub fn parse(&self, bytes: Vec<u8>) -> Result<TraceDraft, UploadRefusal> {
        let mut e = FieldErrors::default();
        let file_name = clean_file_name(&self.file_name);
        if file_name.chars().count() > FILE_NAME_CHARS {
            e.add(
                "file",
                format!("its name must be at most {FILE_NAME_CHARS} characters"),
            );
        }
        let typed_mass = optional_number(&mut e, "sample_mass_mg", &self.sample_mass_mg);
        check_positive(&mut e, "sample_mass_mg", typed_mass, 1000.0, "mg");
        let typed_rate = optional_number(&mut e, "heating_rate_c_min", &self.heating_rate_c_min);
        check_positive(&mut e, "heating_rate_c_min", typed_rate, 500.0, "°C/min");
        let exo = match self.exo.trim() {
            "" | "up" => Exo::Up,
            "down" => Exo::Down,
            other => {
                e.add("exo", format!("“{other}” is not one of: up, down"));
                Exo::Up
            }
        };
        let notes = notes_text(&mut e, "notes", &self.notes);
        let choice = ColumnChoice {
            temperature: column_index(&mut e, "temperature_column", &self.temperature_column),
            heat_flow: column_index(&mut e, "heat_flow_column", &self.heat_flow_column),
            time: column_index(&mut e, "time_column", &self.time_column),
        };
        if bytes.is_empty() {
            e.add("file", "choose a file: none was sent, or it is empty");
        }
        if !e.is_empty() {
            return Err(e.into());
        }
        let chosen =
            choice.temperature.is_some() || choice.heat_flow.is_some() || choice.time.is_some();
        let import = read_dsc(bytes.as_slice(), Limits::default(), choice)
            .map_err(|err| one(&import_field(&err.field), err.message))?;
        if !chosen && !import.columns.ambiguities.is_empty() {
            return Err(UploadRefusal::Ambiguous(preview(&import)));
        }
        let segments: Vec<StoredSegment> = import
            .segments
            .iter()
            .map(StoredSegment::from_segment)
            .collect();
        pick_segment(&segments, &import.temperature_c)
            .map_err(|f| one(&import_field(&f.field), f.message))?;
        let content_sha256 = sha256_hex(&bytes);
        Ok(TraceDraft {
            file_name,
            content_sha256,
            heat_flow_unit: match import.heat_flow_unit {
                HeatFlowUnit::MilliWatt => "mW",
                HeatFlowUnit::WattPerGram => "W/g",
            },
            import_notes: import.notes.clone(),
            sample_mass_mg: typed_mass.or(import.sample_mass_mg),
            heating_rate_c_min: typed_rate.or(import.heating_rate_c_min),
            exo,
            notes,
            data: TraceData {
                temperature_c: import.temperature_c,
                heat_flow: import.heat_flow,
                segments,
            },
            bytes,
        })
    }
}

/// The reader names parts of the file ("encoding", "row 12", "segment"); a page shows
/// them against the file field unless they are one of the form's own fields.
fn import_field(field: &str) -> String {
    match field {
        "temperature_column" | "heat_flow_column" | "time_column" | "file" => field.to_string(),
        "" => "file".to_string(),
        other => format!("file ({other})"),
    }
}

fn preview(import: &DscImport) -> ColumnPreview {
    let t = &import.table;
    let rows = (0..t.rows().min(PREVIEW_ROWS))
        .map(|r| t.data.iter().map(|col| number_text(col[r])).collect())
        .collect();
    ColumnPreview {
        columns: t
            .columns
            .iter()
            .enumerate()
            .map(|(i, c)| {
                if c.name.trim().is_empty() {
                    format!("column {}", i + 1)
                } else {
                    c.name.clone()
                }
            })
            .collect(),
        rows,
        ambiguities: import
            .columns
            .ambiguities
            .iter()
            .map(|a| {
                (
                    a.purpose.to_string(),
                    a.candidates.clone(),
                    a.chosen,
                    a.reason.clone(),
                )
            })
            .collect(),
        guess_temperature: import.columns.temperature,
        guess_heat_flow: import.columns.heat_flow,
    }
}

/// The name a browser or client sent, without any folder part or control characters.
pub fn clean_file_name(raw: &str) -> String {
    let base = raw.rsplit(['/', '\\']).next().unwrap_or("");
    let name: String = base.chars().filter(|c| !c.is_control()).collect();
    let name = name.trim();
    if name.is_empty() {
        "trace.txt".to_string()
    } else {
        name.to_string()
    }
}

pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    hex::encode(Sha256::digest(bytes))
}

/// What an analyst saves from a trace: which kind each found value becomes.
#[derive(Debug, Clone, Default, serde::Deserialize)]
pub struct SaveFromTraceForm {
    /// "midpoint", "onset" or "" (none) for Tg′.
    #[serde(default)]
    pub tg_prime_from: String,
    /// Per peak i: "" (none), "ice_melt_onset", "te" or "cryst_exotherm_onset".
    #[serde(default)]
    pub peak0: String,
    #[serde(default)]
    pub peak1: String,
    #[serde(default)]
    pub peak2: String,
    #[serde(default)]
    pub peak3: String,
    #[serde(default)]
    pub peak4: String,
    #[serde(default)]
    pub peak5: String,
    /// "dsc" or "mdsc".
    #[serde(default)]
    pub method: String,
    #[serde(default)]
    pub replicate: String,
    #[serde(default)]
    pub analyst: String,
    #[serde(default)]
    pub measured_on: String,
    /// The windows the values were found in, carried from the page.
    #[serde(flatten)]
    pub windows: WindowQuery,
}

impl SaveFromTraceForm {
    pub fn peak_choice(&self, i: usize) -> &str {
        match i {
            0 => &self.peak0,
            1 => &self.peak1,
            2 => &self.peak2,
            3 => &self.peak3,
            4 => &self.peak4,
            5 => &self.peak5,
            _ => "",
        }
    }
}

/// Most peaks the save form offers.
pub const SAVE_PEAKS: usize = 6;

/// Most peak windows the trace page offers.
pub const PEAK_WINDOWS: usize = 4;

/// The analysis windows typed on the trace page (blank: suggested).
#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
pub struct WindowQuery {
    #[serde(default)]
    pub gt_lo: String,
    #[serde(default)]
    pub gt_hi: String,
    #[serde(default)]
    pub p0_lo: String,
    #[serde(default)]
    pub p0_hi: String,
    #[serde(default)]
    pub p1_lo: String,
    #[serde(default)]
    pub p1_hi: String,
    #[serde(default)]
    pub p2_lo: String,
    #[serde(default)]
    pub p2_hi: String,
    #[serde(default)]
    pub p3_lo: String,
    #[serde(default)]
    pub p3_hi: String,
}

/// Windows that passed their checks: `None` asks for suggested ones.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Windows {
    pub glass_transition_c: Option<[f64; 2]>,
    pub peaks_c: Option<Vec<[f64; 2]>>,
}

impl WindowQuery {
    pub fn peak(&self, i: usize) -> (&str, &str) {
        match i {
            0 => (&self.p0_lo, &self.p0_hi),
            1 => (&self.p1_lo, &self.p1_hi),
            2 => (&self.p2_lo, &self.p2_hi),
            3 => (&self.p3_lo, &self.p3_hi),
            _ => ("", ""),
        }
    }

    fn set_peak(&mut self, i: usize, lo: String, hi: String) {
        let (a, b) = match i {
            0 => (&mut self.p0_lo, &mut self.p0_hi),
            1 => (&mut self.p1_lo, &mut self.p1_hi),
            2 => (&mut self.p2_lo, &mut self.p2_hi),
            3 => (&mut self.p3_lo, &mut self.p3_hi),
            _ => return,
        };
        *a = lo;
        *b = hi;
    }

    /// The windows an analysis used, to show in the fields.
    pub fn from_used(gt: Option<[f64; 2]>, peaks: &[[f64; 2]]) -> WindowQuery {
        let mut q = WindowQuery::default();
        if let Some([lo, hi]) = gt {
            q.gt_lo = short(lo);
            q.gt_hi = short(hi);
        }
        for (i, [lo, hi]) in peaks.iter().take(PEAK_WINDOWS).enumerate() {
            q.set_peak(i, short(*lo), short(*hi));
        }
        q
    }

    pub fn parse(&self) -> Result<Windows, FieldErrors> {
        let mut e = FieldErrors::default();
        let pair = |e: &mut FieldErrors, lo_f: &str, lo: &str, hi_f: &str, hi: &str| {
            let a = optional_number(e, lo_f, lo);
            let b = optional_number(e, hi_f, hi);
            match (a, b) {
                (Some(a), Some(b)) if a < b => Some([a, b]),
                (Some(_), Some(_)) => {
                    e.add(hi_f, "must be above the window's lower end");
                    None
                }
                (Some(_), None) if hi.trim().is_empty() => {
                    e.add(hi_f, "give both ends of the window, or neither");
                    None
                }
                (None, Some(_)) if lo.trim().is_empty() => {
                    e.add(lo_f, "give both ends of the window, or neither");
                    None
                }
                _ => None,
            }
        };
        let glass_transition_c = pair(&mut e, "gt_lo", &self.gt_lo, "gt_hi", &self.gt_hi);
        let mut peaks = Vec::new();
        let mut any_peak = false;
        for i in 0..PEAK_WINDOWS {
            let (lo, hi) = self.peak(i);
            any_peak |= !lo.trim().is_empty() || !hi.trim().is_empty();
            if let Some(w) = pair(&mut e, &format!("p{i}_lo"), lo, &format!("p{i}_hi"), hi) {
                peaks.push(w);
            }
        }
        e.into_result(Windows {
            glass_transition_c,
            peaks_c: any_peak.then_some(peaks),
        })
    }
}

fn short(v: f64) -> String {
    number_text((v * 100.0).round() / 100.0)
}

/// Analyses the stored trace's heating (or cooling) segment in the given windows.
pub fn analyse_trace(
    meta: &TraceMeta,
    data: &TraceData,
    windows: &Windows,
) -> Result<(usize, glasspoint_science::dsc::DscAnalysisOutput), FieldError> {
    let (segment, temperature_c, heat_flow) = data.analysed_segment()?;
    let input = glasspoint_science::dsc::DscAnalysisInput {
        temperature_c,
        heat_flow,
        glass_transition_window_c: windows.glass_transition_c,
        peak_windows_c: windows.peaks_c.clone(),
        exo: meta.exo(),
        sample_mass_mg: meta.sample_mass_mg,
        heating_rate_c_min: meta.heating_rate_c_min,
        heat_flow_unit: meta.science_unit(),
        smoothing_points: None,
    };
    let out = glasspoint_science::dsc::analyse(&input).map_err(FieldError::from)?;
    Ok((segment, out))
}
