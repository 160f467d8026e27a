//! A delimited export read into numeric columns, streaming: only the first lines are held
//! as text (to find the layout); after that each line is parsed and dropped.
//!
//! Two kinds of table ([`Cells`]): a trace, where every data cell is a number, and a run
//! export, where a column may hold date-times or elapsed times (turned into hours since its
//! first reading) and a missing or unreadable cell is a missing reading (NaN).

use std::io::Read;

use crate::columns::{describe, ColumnInfo, Unit};
use crate::decode::{Line, LineReader};
use crate::sniff::{
    header_cells, numeric_row, reading_row, sniff_with, split, too_few_rows, Cells, DecimalMark,
    Delimiter, Reading,
};
use crate::timestamp::TimeCell;
use crate::{ImportError, Limits};

/// Lines read before deciding the layout.
pub const SNIFF_LINES: usize = 400;

/// Data rows kept as text for a preview.
pub const PREVIEW_ROWS: usize = 6;

/// How a column's values were written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CellKind {
    Number,
    /// Date and clock time; the column holds hours since its first reading.
    DateTime,
    /// Elapsed `H:MM[:SS]`; the column holds hours since its first reading.
    Elapsed,
}

/// A table of numbers with what its header says about each column.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    /// The text encoding as read.
    pub encoding: &'static str,
    pub delimiter: Delimiter,
    pub decimal: DecimalMark,
    /// `key: value` (or `key = value`, or two-field) lines above the header, in order.
    pub preamble: Vec<(String, String)>,
    pub columns: Vec<ColumnInfo>,
    /// The values, one vector per column, all of one length.
    pub data: Vec<Vec<f64>>,
    /// 1-based line number of the first data row, and of the header if there is one.
    pub first_data_line: usize,
    pub header_line: Option<usize>,
    /// How each column's values were written (all [`CellKind::Number`] for a trace).
    pub kinds: Vec<CellKind>,
    /// 1-based line number of each data row, for messages about a row.
    pub row_lines: Vec<usize>,
    /// The first data rows as text, cell by cell.
    pub preview: Vec<Vec<String>>,
}

impl Table {
    pub fn rows(&self) -> usize {
        self.data.first().map_or(0, Vec::len)
    }
}

/// Reads a delimited text export of numbers: encoding, layout, header, preamble and every
/// data row.
pub fn read_table<R: Read>(reader: R, limits: Limits) -> Result<Table, ImportError> {
    read_table_with(reader, limits, Cells::Numbers)
}

/// Reads a delimited text export whose data cells are as `cells` says.
pub fn read_table_with<R: Read>(
    reader: R,
    limits: Limits,
    cells: Cells,
) -> Result<Table, ImportError> {
    let mut lines = LineReader::new(reader, limits)?;
    let mut head: Vec<Line> = Vec::new();
    while head.len() < SNIFF_LINES {
        match lines.next_line()? {
            Some(l) => head.push(l),
            None => break,
        }
    }
    let layout = sniff_with(&head, limits.max_columns, cells)?;
    let (d, m, cols) = (layout.delimiter, layout.decimal, layout.columns);
    let names = layout
        .header
        .and_then(|h| header_cells(&head[h].1, d, cols))
        .unwrap_or_else(|| (1..=cols).map(|i| format!("column {i}")).collect());
    let units = layout.units.and_then(|u| header_cells(&head[u].1, d, cols));
    let mut columns: Vec<ColumnInfo> = names
        .iter()
        .enumerate()
        .map(|(i, n)| describe(n, units.as_ref().and_then(|u| u.get(i)).map(String::as_str)))
        .collect();
    let preamble_end = layout.header.unwrap_or(layout.data_start);
    let preamble = head[..preamble_end]
        .iter()
        .filter_map(|(_, l)| key_value(l, d))
        .collect();

    let mut data: Vec<Vec<f64>> = vec![Vec::new(); cols];
    let mut kinds: Vec<Option<CellKind>> = vec![None; cols];
    let mut row_lines: Vec<usize> = Vec::new();
    let mut preview: Vec<Vec<String>> = Vec::new();
    let mut footer: Option<(usize, String)> = None;
    let mut take = |no: usize, text: &str| -> Result<(), ImportError> {
        if text.trim().is_empty() {
            return Ok(());
        }
        let row = match cells {
            Cells::Numbers => number_row(text, d, m, cols),
            Cells::Readings => readings_row(text, d, m, cols, &mut kinds),
        };
        match row {
            Row::Blank => {}
            Row::Values(v) => {
                if let Some((at, bad)) = &footer {
                    return Err(ImportError::new(
                        format!("line {at}"),
                        format!(
                            "“{}” is not a row of {cols} {}, yet rows of them follow it",
                            clip(bad),
                            match cells {
                                Cells::Numbers => "numbers",
                                Cells::Readings => "readings",
                            }
                        ),
                    ));
                }
                if row_lines.len() >= limits.max_rows {
                    return Err(ImportError::new(
                        "rows",
                        format!("more than {} data rows; split the export", limits.max_rows),
                    ));
                }
                for (c, x) in data.iter_mut().zip(v) {
                    c.push(x);
                }
                row_lines.push(no);
                if preview.len() < PREVIEW_ROWS {
                    preview.push(split(text, d));
                }
            }
            Row::WrongWidth(n) if footer.is_none() => {
                return Err(ImportError::new(
                    format!("line {no}"),
                    format!("has {n} values; the data rows above have {cols}"),
                ));
            }
            Row::WrongWidth(_) | Row::NotData => {
                footer.get_or_insert((no, text.to_string()));
            }
        }
        Ok(())
    };
    for (no, text) in &head[layout.data_start..] {
        take(*no, text)?;
    }
    while let Some((no, text)) = lines.next_line()? {
        take(no, &text)?;
    }
    if row_lines.len() < 2 {
        return Err(too_few_rows(cells));
    }
    let kinds: Vec<CellKind> = kinds
        .into_iter()
        .map(|k| k.unwrap_or(CellKind::Number))
        .collect();
    for ((kind, values), info) in kinds.iter().zip(&mut data).zip(&mut columns) {
        if *kind != CellKind::Number {
            hours_since_first(values);
            info.unit = Some(Unit::Hour);
        }
    }
    Ok(Table {
        encoding: lines.encoding_name(),
        delimiter: d,
        decimal: m,
        preamble,
        columns,
        data,
        first_data_line: head[layout.data_start].0,
        header_line: layout.header.map(|h| head[h].0),
        kinds,
        row_lines,
        preview,
    })
}

/// A line as the data loop sees it.
enum Row {
    /// Nothing in it (only delimiters).
    Blank,
    Values(Vec<f64>),
    /// Values, but not as many as the table has columns.
    WrongWidth(usize),
    /// Not a data row (a footer, a note).
    NotData,
}

fn number_row(text: &str, d: Delimiter, m: DecimalMark, cols: usize) -> Row {
    match numeric_row(text, d, m) {
        Some(v) if v.len() == cols => Row::Values(v),
        Some(v) => Row::WrongWidth(v.len()),
        None => Row::NotData,
    }
}

/// A row of readings: missing and unreadable cells (and cells written unlike the first
/// reading of their column) are NaN; missing cells at the end of a short row are NaN too.
/// Times are kept in seconds until the whole column is read.
fn readings_row(
    text: &str,
    d: Delimiter,
    m: DecimalMark,
    cols: usize,
    kinds: &mut [Option<CellKind>],
) -> Row {
    let mut row = reading_row(text, d, m);
    if row.iter().all(|r| *r == Reading::Empty) {
        return Row::Blank;
    }
    if !row.iter().any(|r| r.is_value()) {
        return Row::NotData;
    }
    while row.len() > cols && row.last() == Some(&Reading::Empty) {
        row.pop();
    }
    if row.len() > cols {
        return Row::WrongWidth(row.len());
    }
    let values = (0..cols)
        .map(|c| {
            let cell = row.get(c).copied().unwrap_or(Reading::Empty);
            let (kind, x) = match cell {
                Reading::Number(x) => (CellKind::Number, x),
                Reading::Time(TimeCell::DateTime(s)) => (CellKind::DateTime, s),
                Reading::Time(TimeCell::Elapsed(s)) => (CellKind::Elapsed, s),
                Reading::Empty | Reading::Unreadable => return f64::NAN,
            };
            match kinds.get_mut(c).map(|slot| *slot.get_or_insert(kind)) {
                Some(first) if first == kind => x,
                _ => f64::NAN,
            }
        })
        .collect();
    Row::Values(values)
}

/// Seconds to hours since the column's first reading.
fn hours_since_first(values: &mut [f64]) {
    let Some(origin) = values.iter().copied().find(|x| !x.is_nan()) else {
        return;
    };
    for v in values {
        *v = (*v - origin) / 3600.0;
    }
}

fn clip(s: &str) -> String {
    let mut out: String = s.chars().take(60).collect();
    if out.len() < s.len() {
        out.push('…');
    }
    out
}

/// `key: value`, `key = value`, or a line of exactly two fields whose first is not a
/// number.
fn key_value(line: &str, d: Delimiter) -> Option<(String, String)> {
    for sep in [':', '='] {
        if let Some((k, v)) = line.split_once(sep) {
            let k = k.trim().trim_matches('"').trim();
            if !k.is_empty() && k.chars().any(char::is_alphabetic) {
                return Some((k.to_string(), v.trim().trim_matches('"').trim().to_string()));
            }
        }
    }
    let f = split(line, d);
    (f.len() == 2 && f[0].chars().any(char::is_alphabetic)).then(|| (f[0].clone(), f[1].clone()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_footer_ends_the_data_but_numbers_after_it_are_refused() {
        let t = read_table(&b"T,HF\n1,2\n3,4\nEnd of data\n"[..], Limits::default()).unwrap();
        assert_eq!(t.data, vec![vec![1.0, 3.0], vec![2.0, 4.0]]);
        let e = read_table(&b"T,HF\n1,2\n3,4\noops\n5,6\n"[..], Limits::default()).unwrap_err();
        assert_eq!(e.field, "line 4");
    }

    #[test]
    fn the_row_limit_is_enforced() {
        let limits = Limits {
            max_rows: 3,
            ..Limits::default()
        };
        let e = read_table(&b"1,2\n3,4\n5,6\n7,8\n"[..], limits).unwrap_err();
        assert_eq!(e.field, "rows");
    }

    #[test]
    fn preamble_pairs_are_kept() {
        let t = read_table(
            &b"Sample: A\nMass = 5,1 mg\nT;HF\n1;2\n3;4\n"[..],
            Limits::default(),
        )
        .unwrap();
        assert_eq!(t.preamble[1], ("Mass".to_string(), "5,1 mg".to_string()));
        assert_eq!(t.header_line, Some(3));
    }
}
