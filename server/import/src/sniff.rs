//! Finding the layout of a delimited export from its first lines: the delimiter and
//! decimal mark that make the longest block of data rows (numbers, or for a run export
//! readings: numbers, times and gaps), the header (and units) row
//! just above that block, and the preamble above the header.

use crate::decode::Line;
use crate::number::parse_number;
use crate::timestamp::{parse_time_cell, TimeCell};
use crate::ImportError;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Delimiter {
    Comma,
    Tab,
    Semicolon,
    /// One or more spaces or tabs.
    Whitespace,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DecimalMark {
    Point,
    Comma,
}

/// What a data cell may hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cells {
    /// Every cell of a data row is a number (a DSC trace).
    Numbers,
    /// Numbers, date-times or elapsed times; an empty or unreadable cell is a missing
    /// reading (a run export, where a sensor may drop out).
    Readings,
}

/// One cell of a data row read under [`Cells::Readings`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Reading {
    Number(f64),
    Time(TimeCell),
    Empty,
    /// Text that is neither a number nor a time ("---", "ERR").
    Unreadable,
}

impl Reading {
    pub fn is_value(self) -> bool {
        matches!(self, Reading::Number(_) | Reading::Time(_))
    }
}

/// Every field of a line as a reading.
pub fn reading_row(line: &str, d: Delimiter, m: DecimalMark) -> Vec<Reading> {
    split(line, d)
        .iter()
        .map(|f| {
            if f.is_empty() {
                Reading::Empty
            } else if let Some(x) = parse_number(f, m) {
                Reading::Number(x)
            } else if let Some(t) = parse_time_cell(f) {
                Reading::Time(t)
            } else {
                Reading::Unreadable
            }
        })
        .collect()
}

/// The field count of a line that looks like data under `cells`, and how many of its
/// fields are readings. A row of readings needs one value (a time or a number): sensors
/// warming up may fill most of a row with "---", while headers and units rows hold none.
/// Which delimiter and decimal mark read the most values then decides between layouts;
/// numbers count no values, as the longest block alone decides their layout.
fn data_fields(line: &str, d: Delimiter, m: DecimalMark, cells: Cells) -> Option<(usize, usize)> {
    match cells {
        Cells::Numbers => numeric_row(line, d, m).map(|v| (v.len(), 0)),
        Cells::Readings => {
            let row = reading_row(line, d, m);
            let values = row.iter().filter(|r| r.is_value()).count();
            (values > 0).then_some((row.len(), values))
        }
    }
}

/// Tried in this order; the first of equally good layouts wins.
const LAYOUTS: [(Delimiter, DecimalMark); 7] = [
    (Delimiter::Tab, DecimalMark::Point),
    (Delimiter::Tab, DecimalMark::Comma),
    (Delimiter::Semicolon, DecimalMark::Point),
    (Delimiter::Semicolon, DecimalMark::Comma),
    (Delimiter::Comma, DecimalMark::Point),
    (Delimiter::Whitespace, DecimalMark::Point),
    (Delimiter::Whitespace, DecimalMark::Comma),
];

/// The layout found in the sniffed lines (indices into them).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Layout {
    pub delimiter: Delimiter,
    pub decimal: DecimalMark,
    pub columns: usize,
    /// First data line.
    pub data_start: usize,
    /// Header (column names) line, if any.
    pub header: Option<usize>,
    /// A units line under the header, if any.
    pub units: Option<usize>,
}

/// Splits a line into fields. Comma, tab and semicolon respect double quotes (a doubled
/// quote inside is a quote); whitespace splits on runs of spaces and tabs.
pub fn split(line: &str, d: Delimiter) -> Vec<String> {
    let sep = match d {
        Delimiter::Whitespace => return line.split_whitespace().map(str::to_string).collect(),
        Delimiter::Comma => ',',
        Delimiter::Tab => '\t',
        Delimiter::Semicolon => ';',
    };
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '"' if quoted && chars.peek() == Some(&'"') => {
                cur.push('"');
                chars.next();
            }
            '"' => quoted = !quoted,
            c if c == sep && !quoted => out.push(std::mem::take(&mut cur).trim().to_string()),
            c => cur.push(c),
        }
    }
    out.push(cur.trim().to_string());
    out
}

/// The numbers of a line when every field is one (trailing empty fields ignored).
pub fn numeric_row(line: &str, d: Delimiter, m: DecimalMark) -> Option<Vec<f64>> {
    // The common case, without quotes: no allocation per field.
    if !line.contains('"') {
        let mut out: Vec<f64> = Vec::with_capacity(8);
        let mut empty_tail = 0;
        let mut push = |f: &str| {
            if f.trim().is_empty() {
                empty_tail += 1;
                return Some(());
            }
            if empty_tail > 0 {
                return None;
            }
            out.push(parse_number(f, m)?);
            Some(())
        };
        match d {
            Delimiter::Whitespace => line.split_whitespace().try_for_each(&mut push)?,
            Delimiter::Comma => line.split(',').try_for_each(&mut push)?,
            Delimiter::Tab => line.split('\t').try_for_each(&mut push)?,
            Delimiter::Semicolon => line.split(';').try_for_each(&mut push)?,
        }
        return (!out.is_empty()).then_some(out);
    }
    let mut fields = split(line, d);
    while fields.len() > 1 && fields.last().is_some_and(|f| f.is_empty()) {
        fields.pop();
    }
    fields.iter().map(|f| parse_number(f, m)).collect()
}

/// Finds the layout of a table of numbers.
pub fn sniff(lines: &[Line], max_columns: usize) -> Result<Layout, ImportError> {
    sniff_with(lines, max_columns, Cells::Numbers)
}

/// Finds the layout, with data rows as `cells` says.
pub fn sniff_with(lines: &[Line], max_columns: usize, cells: Cells) -> Result<Layout, ImportError> {
    let mut best: Option<((usize, usize), Layout)> = None;
    for (d, m) in LAYOUTS {
        let Some(Block {
            start,
            rows: len,
            columns: cols,
            values,
        }) = longest_block(lines, d, m, cells)
        else {
            continue;
        };
        if cols < 2 || cols > max_columns {
            continue;
        }
        // Longer blocks win; among equally long ones, the one that reads more values.
        if best.as_ref().is_none_or(|(l, _)| (len, values) > *l) {
            best = Some((
                (len, values),
                Layout {
                    delimiter: d,
                    decimal: m,
                    columns: cols,
                    data_start: start,
                    header: None,
                    units: None,
                },
            ));
        }
    }
    let Some(((len, _), mut layout)) = best else {
        if cells == Cells::Readings {
            return Err(ImportError::new(
                "file",
                "has no rows of readings (numbers or times in two or more columns separated \
                 by commas, tabs, semicolons or spaces) in its first lines",
            ));
        }
        let single = LAYOUTS
            .iter()
            .any(|&(d, m)| longest_block(lines, d, m, cells).is_some_and(|b| b.columns == 1));
        let msg = if single {
            "has only one numeric column; a trace needs at least two (temperature and \
             heat flow)"
        } else {
            "has no rows of numbers separated by commas, tabs, semicolons or spaces in its \
             first lines"
        };
        return Err(ImportError::new("columns", msg));
    };
    if len < 2 && lines.len() > layout.data_start + 1 {
        // One numeric row followed by more text: not a table.
        return Err(too_few_rows(cells));
    }
    find_header(lines, &mut layout);
    Ok(layout)
}

/// The refusal of a table with fewer than two data rows.
pub fn too_few_rows(cells: Cells) -> ImportError {
    match cells {
        Cells::Numbers => ImportError::new(
            "rows",
            "only a single row of numbers was found; a trace needs at least two points",
        ),
        Cells::Readings => ImportError::new(
            "file",
            "has fewer than two rows of readings; a run needs at least two",
        ),
    }
}

/// A run of data rows with one field count.
#[derive(Debug, Clone, Copy)]
struct Block {
    start: usize,
    rows: usize,
    columns: usize,
    /// Readings in the block (0 for numbers).
    values: usize,
}

/// The longest run of data rows with one field count.
fn longest_block(lines: &[Line], d: Delimiter, m: DecimalMark, cells: Cells) -> Option<Block> {
    let mut best: Option<Block> = None;
    let mut cur: Option<Block> = None;
    for (i, (_, text)) in lines.iter().enumerate() {
        if text.trim().is_empty() {
            continue;
        }
        match data_fields(text, d, m, cells) {
            Some((len, values)) => match cur.as_mut() {
                Some(b) if b.columns == len => {
                    b.rows += 1;
                    b.values += values;
                }
                _ => {
                    cur = Some(Block {
                        start: i,
                        rows: 1,
                        columns: len,
                        values,
                    })
                }
            },
            None => cur = None,
        }
        if let Some(c) = cur {
            if best.is_none_or(|b| c.rows > b.rows) {
                best = Some(c);
            }
        }
    }
    best
}

fn find_header(lines: &[Line], layout: &mut Layout) {
    let above = |from: usize| (0..from).rev().find(|&i| !lines[i].1.trim().is_empty());
    let cells = |i: usize| header_cells(&lines[i].1, layout.delimiter, layout.columns);
    let Some(h) = above(layout.data_start) else {
        return;
    };
    let Some(row) = cells(h) else {
        return;
    };
    // A units row may also say how times are written ("hh:mm:ss").
    let all_units = row.iter().all(|c| {
        c.is_empty()
            || crate::columns::parse_unit(c).is_some()
            || crate::timestamp::is_format_hint(c)
    });
    if all_units && row.iter().any(|c| !c.is_empty()) {
        if let Some(n) = above(h).filter(|&n| cells(n).is_some()) {
            layout.header = Some(n);
            layout.units = Some(h);
            return;
        }
    }
    layout.header = Some(h);
}

/// A header line's cells when it has as many as the data (for whitespace-separated files,
/// names with spaces are tried split on tabs or runs of two or more spaces).
pub fn header_cells(line: &str, d: Delimiter, columns: usize) -> Option<Vec<String>> {
    let mut cells = split(line, d);
    while cells.len() > columns && cells.last().is_some_and(|c| c.is_empty()) {
        cells.pop();
    }
    if cells.len() != columns && d == Delimiter::Whitespace {
        cells = line
            .split('\t')
            .flat_map(|p| p.split("  "))
            .map(str::trim)
            .filter(|p| !p.is_empty())
            .map(str::to_string)
            .collect();
    }
    (cells.len() == columns).then_some(cells)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ls(text: &str) -> Vec<Line> {
        text.lines()
            .enumerate()
            .map(|(i, l)| (i + 1, l.to_string()))
            .collect()
    }

    #[test]
    fn each_delimiter_and_decimal_mark_is_recognised() {
        let cases = [
            ("T,HF\n1.5,2\n2.5,3\n", Delimiter::Comma, DecimalMark::Point),
            (
                "T;HF\n1,5;2\n2,5;3\n",
                Delimiter::Semicolon,
                DecimalMark::Comma,
            ),
            (
                "T\tHF\n1,5\t2\n2,5\t3\n",
                Delimiter::Tab,
                DecimalMark::Comma,
            ),
            (
                "T  HF\n1.5   2\n 2.5  3\n",
                Delimiter::Whitespace,
                DecimalMark::Point,
            ),
        ];
        for (text, d, m) in cases {
            let l = sniff(&ls(text), 64).unwrap();
            assert_eq!(
                (l.delimiter, l.decimal, l.data_start, l.header),
                (d, m, 1, Some(0)),
                "{text}"
            );
        }
    }

    #[test]
    fn a_units_row_under_the_names_is_recognised() {
        let l = sniff(
            &ls("Mass: 5 mg\n\nTemperature;Heat flow\n°C;mW\n1;2\n3;4"),
            64,
        )
        .unwrap();
        assert_eq!((l.header, l.units, l.data_start), (Some(2), Some(3), 4));
    }

    #[test]
    fn text_without_numbers_and_a_single_column_are_refused() {
        assert_eq!(sniff(&ls("hello\nworld"), 64).unwrap_err().field, "columns");
        assert!(sniff(&ls("1\n2\n3"), 64)
            .unwrap_err()
            .message
            .contains("one numeric column"));
    }
}
