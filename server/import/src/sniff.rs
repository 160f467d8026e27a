//! Finding the layout of a delimited export from its first lines: the delimiter and
//! decimal mark that make the longest block of numeric rows, the header (and units) row
//! just above that block, and the preamble above the header.

use crate::decode::Line;
use crate::number::parse_number;
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

/// Finds the layout. `eof` says whether the lines are the whole file.
pub fn sniff(lines: &[Line], max_columns: usize) -> Result<Layout, ImportError> {
    let mut best: Option<(usize, Layout)> = None;
    for (d, m) in LAYOUTS {
        let Some((start, len, cols)) = longest_block(lines, d, m) else {
            continue;
        };
        if cols < 2 || cols > max_columns {
            continue;
        }
        if best.as_ref().is_none_or(|(l, _)| len > *l) {
            best = Some((
                len,
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
    let Some((len, mut layout)) = best else {
        let single = LAYOUTS
            .iter()
            .any(|&(d, m)| longest_block(lines, d, m).is_some_and(|b| b.2 == 1));
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
        return Err(ImportError::new(
            "rows",
            "only a single row of numbers was found; a trace needs at least two points",
        ));
    }
    find_header(lines, &mut layout);
    Ok(layout)
}

/// (start, rows, columns) of the longest run of numeric rows with one field count.
fn longest_block(lines: &[Line], d: Delimiter, m: DecimalMark) -> Option<(usize, usize, usize)> {
    let mut best: Option<(usize, usize, usize)> = None;
    let mut cur: Option<(usize, usize, usize)> = None;
    for (i, (_, text)) in lines.iter().enumerate() {
        if text.trim().is_empty() {
            continue;
        }
        match numeric_row(text, d, m) {
            Some(v) => match cur {
                Some((s, n, c)) if c == v.len() => cur = Some((s, n + 1, c)),
                _ => cur = Some((i, 1, v.len())),
            },
            None => cur = None,
        }
        if let Some(c) = cur {
            if best.is_none_or(|b| c.1 > b.1) {
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
    let all_units = row
        .iter()
        .all(|c| c.is_empty() || crate::columns::parse_unit(c).is_some());
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
