//! Reading delimited text exports: DSC traces and freeze-dryer run data. Generic text
//! only (no instrument's own file format).
//!
//! The pipeline, streaming with bounded memory:
//! 1. [`decode`]: bytes to lines — UTF-8 with or without a BOM, UTF-16 LE/BE with a BOM,
//!    Latin-1 (windows-1252) when the start is not UTF-8; size and line-length limits.
//! 2. [`sniff`]: from the first lines, the delimiter (comma, tab, semicolon or
//!    whitespace), the decimal mark (point or comma), where the numbers start, the header
//!    row (and a units row under it) and the `key: value` preamble above it.
//! 3. [`table`]: every data row into numeric columns ([`Table`]), up to a row limit. A
//!    trace's cells are all numbers; a run export's may also be date-times or elapsed
//!    times ([`timestamp`], read as hours since the first row) or missing (NaN).
//! 4. [`columns`]: units and roles from the header (temperature °C or K; heat flow mW,
//!    W/g, mW/mg; time s, min or h; pressure mTorr, Torr, Pa, mbar, µbar); [`dsc`] picks a
//!    trace's columns, reporting ambiguity; [`run`] places a run's columns by a stored
//!    mapping or by header words, or asks for a mapping.
//! 5. [`segments`]: heating, cooling and isothermal segments of a trace.
//!
//! Every refusal is an [`ImportError`] naming what is wrong; nothing panics on input.
#![deny(clippy::float_cmp)]

pub mod columns;
pub mod decode;
pub mod dsc;
pub mod number;
pub mod run;
pub mod segments;
pub mod sniff;
pub mod table;
pub mod timestamp;

use std::fmt;

pub use columns::{ColumnInfo, Role, Unit};
pub use dsc::{read_dsc, Ambiguity, ColumnChoice, DscColumns, DscImport, HeatFlowUnit};
pub use run::{
    read_run, suggest_role, ColumnMapping, MappingRequest, ProbeSite, RunColumn, RunImport,
    RunProbe, RunRead, RunRole,
};
pub use segments::{split_segments, Segment, SegmentKind};
pub use sniff::{Cells, DecimalMark, Delimiter};
pub use table::{read_table, read_table_with, CellKind, Table};

/// What cannot be read and why. `field` names the part (`file`, `encoding`, `columns`,
/// `line 12`, `temperature_column`, …); `message` says what to do.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ImportError {
    pub field: String,
    pub message: String,
}

impl ImportError {
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            field: field.into(),
            message: message.into(),
        }
    }
}

impl fmt::Display for ImportError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.field, self.message)
    }
}

impl std::error::Error for ImportError {}

/// Limits that keep memory and time bounded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    /// Largest file, bytes.
    pub max_bytes: u64,
    /// Most data rows.
    pub max_rows: usize,
    /// Longest line, bytes.
    pub max_line_bytes: usize,
    /// Most columns.
    pub max_columns: usize,
}

impl Default for Limits {
    fn default() -> Self {
        Self {
            max_bytes: 256 * 1024 * 1024,
            max_rows: 1_000_000,
            max_line_bytes: 64 * 1024,
            max_columns: 64,
        }
    }
}
