//! A delimited export read into numeric columns, streaming: only the first lines are held
//! as text (to find the layout); after that each line is parsed and dropped.

use std::io::Read;

use crate::columns::{describe, ColumnInfo};
use crate::decode::{Line, LineReader};
use crate::sniff::{header_cells, numeric_row, sniff, split, DecimalMark, Delimiter};
use crate::{ImportError, Limits};

/// Lines read before deciding the layout.
pub const SNIFF_LINES: usize = 400;

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
}

impl Table {
    pub fn rows(&self) -> usize {
        self.data.first().map_or(0, Vec::len)
    }
}

/// Reads a delimited text export: encoding, layout, header, preamble and every data row.
pub fn read_table<R: Read>(reader: R, limits: Limits) -> Result<Table, ImportError> {
    let mut lines = LineReader::new(reader, limits)?;
    let mut head: Vec<Line> = Vec::new();
    while head.len() < SNIFF_LINES {
        match lines.next_line()? {
            Some(l) => head.push(l),
            None => break,
        }
    }
    let layout = sniff(&head, limits.max_columns)?;
    let (d, m, cols) = (layout.delimiter, layout.decimal, layout.columns);
    let names = layout
        .header
        .and_then(|h| header_cells(&head[h].1, d, cols))
        .unwrap_or_else(|| (1..=cols).map(|i| format!("column {i}")).collect());
    let units = layout.units.and_then(|u| header_cells(&head[u].1, d, cols));
    let columns = names
        .iter()
        .enumerate()
        .map(|(i, n)| describe(n, units.as_ref().map(|u| u[i].as_str())))
        .collect();
    let preamble_end = layout.header.unwrap_or(layout.data_start);
    let preamble = head[..preamble_end]
        .iter()
        .filter_map(|(_, l)| key_value(l, d))
        .collect();

    let mut data: Vec<Vec<f64>> = vec![Vec::new(); cols];
    let mut footer: Option<(usize, String)> = None;
    let mut take = |no: usize, text: &str| -> Result<(), ImportError> {
        if text.trim().is_empty() {
            return Ok(());
        }
        match numeric_row(text, d, m) {
            Some(v) if v.len() == cols => {
                if let Some((at, bad)) = &footer {
                    return Err(ImportError::new(
                        format!("line {at}"),
                        format!(
                            "“{}” is not a row of {cols} numbers, yet rows of numbers follow it",
                            clip(bad)
                        ),
                    ));
                }
                if data[0].len() >= limits.max_rows {
                    return Err(ImportError::new(
                        "rows",
                        format!("more than {} data rows; split the export", limits.max_rows),
                    ));
                }
                for (c, x) in data.iter_mut().zip(v) {
                    c.push(x);
                }
            }
            Some(v) if footer.is_none() => {
                return Err(ImportError::new(
                    format!("line {no}"),
                    format!("has {} values; the data rows above have {cols}", v.len()),
                ));
            }
            _ => {
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
    if data[0].len() < 2 {
        return Err(ImportError::new(
            "rows",
            "only a single row of numbers was found; a trace needs at least two points",
        ));
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
    })
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
