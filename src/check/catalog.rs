//! Reading catalog tables: delimited text (CSV and its cousins) and `.xlsx` workbooks.
//!
//! A catalog is a header row and data rows. Delimited text may use `,`, `;`, tab or `|`
//! (the one found most often in the header line, outside quotes, unless given), a decimal
//! point or a decimal comma (decided from the numbers when not given), UTF-8 with or without
//! a byte-order mark. Numbers may carry thousands separators: with a decimal point, `,`
//! (inside quotes), spaces and apostrophes; with a decimal comma, `.`, spaces and
//! apostrophes.

use std::path::Path;

/// One cell as read.
#[derive(Debug, Clone, PartialEq)]
pub enum CatalogCell {
    Empty,
    Text(String),
    Number(f64),
}

impl CatalogCell {
    /// The cell as text (numbers in shortest form).
    pub fn text(&self) -> String {
        match self {
            CatalogCell::Empty => String::new(),
            CatalogCell::Text(s) => s.clone(),
            CatalogCell::Number(v) => format!("{v}"),
        }
    }
}

/// A data row and where it is in the source: the line of a text file or the row of a sheet
/// (1-based, counting the header).
#[derive(Debug, Clone, PartialEq)]
pub struct CatalogRow {
    pub line: usize,
    pub cells: Vec<CatalogCell>,
}

/// A catalog as read.
#[derive(Debug, Clone, PartialEq)]
pub struct CatalogTable {
    pub header: Vec<String>,
    pub rows: Vec<CatalogRow>,
    /// How the text was read (for the run record and messages), e.g. `delimiter ';',
    /// decimal comma`.
    pub dialect: String,
}

/// How to read delimited text; `None` means decide from the text.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TextOptions {
    pub delimiter: Option<u8>,
    pub decimal_comma: Option<bool>,
}

/// Read a catalog file: `.xlsx` by its extension (or its zip signature), anything else as
/// delimited text.
pub fn read_catalog(path: &Path, opts: TextOptions) -> Result<CatalogTable, String> {
    let bytes = std::fs::read(path).map_err(|e| format!("cannot read {}: {e}", path.display()))?;
    let is_xlsx = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("xlsx"))
        || bytes.starts_with(b"PK\x03\x04");
    if is_xlsx {
        read_xlsx(path)
    } else {
        read_text(&bytes, opts)
    }
}

/// The first worksheet of an `.xlsx` workbook: numbers as numbers, the rest as text.
fn read_xlsx(path: &Path) -> Result<CatalogTable, String> {
    use calamine::{open_workbook, Data, Reader, Xlsx};
    let mut book: Xlsx<_> =
        open_workbook(path).map_err(|e| format!("cannot read {} as .xlsx: {e}", path.display()))?;
    let Some(sheet) = book.sheet_names().first().cloned() else {
        return Err(format!("{} has no worksheet", path.display()));
    };
    let range = book
        .worksheet_range(&sheet)
        .map_err(|e| format!("cannot read sheet {sheet:?} of {}: {e}", path.display()))?;
    let first_row = range.start().map_or(0, |(r, _)| r as usize);
    let mut rows = range.rows();
    let header: Vec<String> = rows
        .next()
        .ok_or_else(|| format!("sheet {sheet:?} of {} is empty", path.display()))?
        .iter()
        .map(|c| c.to_string().trim().to_string())
        .collect();
    let mut out = Vec::new();
    for (k, row) in rows.enumerate() {
        let cells: Vec<CatalogCell> = row
            .iter()
            .map(|c| match c {
                Data::Empty => CatalogCell::Empty,
                Data::Float(v) => CatalogCell::Number(*v),
                Data::Int(v) => CatalogCell::Number(*v as f64),
                Data::String(s) => {
                    let s = s.trim();
                    if s.is_empty() {
                        CatalogCell::Empty
                    } else {
                        CatalogCell::Text(s.to_string())
                    }
                }
                other => CatalogCell::Text(other.to_string()),
            })
            .collect();
        if cells.iter().all(|c| *c == CatalogCell::Empty) {
            continue;
        }
        out.push(CatalogRow {
            // 1-based sheet row: the header is row first_row + 1.
            line: first_row + k + 2,
            cells,
        });
    }
    Ok(CatalogTable {
        header,
        rows: out,
        dialect: format!("xlsx, sheet {sheet:?}"),
    })
}

/// Delimited text.
pub fn read_text(bytes: &[u8], opts: TextOptions) -> Result<CatalogTable, String> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let text = std::str::from_utf8(bytes).map_err(|e| {
        format!(
            "the catalog is not UTF-8 text (byte {}); save it as UTF-8",
            e.valid_up_to()
        )
    })?;
    let first_line = text.lines().find(|l| !l.trim().is_empty()).unwrap_or("");
    let delimiter = opts
        .delimiter
        .unwrap_or_else(|| guess_delimiter(first_line));
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut records = Vec::new();
    let mut record = csv::StringRecord::new();
    let bytes = text.as_bytes();
    let (mut line, mut counted_to) = (1usize, 0usize);
    loop {
        // The record starts at the reader's byte position past any line breaks; its line is
        // one more than the line feeds before it (counted incrementally).
        let mut start = reader.position().byte() as usize;
        while start < bytes.len() && matches!(bytes[start], b'\r' | b'\n') {
            start += 1;
        }
        let start = start.max(counted_to);
        line += bytes[counted_to..start]
            .iter()
            .filter(|&&b| b == b'\n')
            .count();
        counted_to = start;
        let more = reader
            .read_record(&mut record)
            .map_err(|e| format!("cannot read the catalog as text: {e}"))?;
        if !more {
            break;
        }
        let fields: Vec<String> = record.iter().map(|f| f.trim().to_string()).collect();
        if fields.iter().all(|f| f.is_empty()) {
            continue;
        }
        records.push((line, fields));
    }
    let mut records = records.into_iter();
    let (_, header) = records
        .next()
        .ok_or_else(|| "the catalog is empty".to_string())?;
    let records: Vec<(usize, Vec<String>)> = records.collect();
    let decimal_comma = opts.decimal_comma.unwrap_or_else(|| {
        delimiter != b','
            && records
                .iter()
                .flat_map(|(_, f)| f.iter())
                .any(|f| looks_like_decimal_comma(f))
    });
    let rows = records
        .into_iter()
        .map(|(line, fields)| CatalogRow {
            line,
            cells: fields
                .into_iter()
                .map(|f| {
                    if f.is_empty() {
                        CatalogCell::Empty
                    } else if let Some(v) = parse_number(&f, decimal_comma) {
                        CatalogCell::Number(v)
                    } else {
                        CatalogCell::Text(f)
                    }
                })
                .collect(),
        })
        .collect();
    Ok(CatalogTable {
        header,
        rows,
        dialect: format!(
            "delimiter {}, decimal {}",
            match delimiter {
                b'\t' => "tab".to_string(),
                d => format!("'{}'", d as char),
            },
            if decimal_comma { "comma" } else { "point" }
        ),
    })
}

/// The delimiter found most often in `line` outside quotes (`,` on a tie or when none is).
fn guess_delimiter(line: &str) -> u8 {
    let mut counts = [0usize; 4];
    let candidates = [b',', b';', b'\t', b'|'];
    let mut quoted = false;
    for b in line.bytes() {
        if b == b'"' {
            quoted = !quoted;
        } else if !quoted {
            if let Some(k) = candidates.iter().position(|&c| c == b) {
                counts[k] += 1;
            }
        }
    }
    let mut best = 0;
    for k in 1..4 {
        if counts[k] > counts[best] {
            best = k;
        }
    }
    candidates[best]
}

/// A field such as `12,5` or `-0,004` or `1.234,5`: digits with one comma followed by digits.
fn looks_like_decimal_comma(f: &str) -> bool {
    let f = f.trim_start_matches(['-', '+']);
    let Some((int, frac)) = f.split_once(',') else {
        return false;
    };
    let int_ok = !int.is_empty() && int.bytes().all(|b| b.is_ascii_digit() || b == b'.');
    let frac = frac.split(['e', 'E']).next().unwrap_or("");
    int_ok && !frac.is_empty() && frac.bytes().all(|b| b.is_ascii_digit())
}

/// A number written with a decimal point (or, with `decimal_comma`, a decimal comma), with
/// optional thousands separators (see the module doc) and exponent; `None` if it is not one.
pub fn parse_number(field: &str, decimal_comma: bool) -> Option<f64> {
    let mut s = String::with_capacity(field.len());
    for c in field.trim().chars() {
        match c {
            ' ' | '\u{a0}' | '\u{202f}' | '\u{2009}' | '\'' => {}
            ',' if !decimal_comma => {}
            '.' if decimal_comma => {}
            ',' => s.push('.'),
            '\u{2212}' => s.push('-'),
            c => s.push(c),
        }
    }
    let valid = !s.is_empty()
        && s.bytes()
            .all(|b| b.is_ascii_digit() || matches!(b, b'.' | b'-' | b'+' | b'e' | b'E'))
        && s.bytes().any(|b| b.is_ascii_digit());
    if !valid {
        return None;
    }
    s.parse::<f64>().ok().filter(|v| v.is_finite())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_in_both_conventions() {
        assert_eq!(parse_number("12.5", false), Some(12.5));
        assert_eq!(parse_number("1,234.5", false), Some(1234.5));
        assert_eq!(parse_number("1 234.5", false), Some(1234.5));
        assert_eq!(parse_number("-3.2e4", false), Some(-32000.0));
        assert_eq!(parse_number("12,5", true), Some(12.5));
        assert_eq!(parse_number("1.234,5", true), Some(1234.5));
        assert_eq!(parse_number("1'234,5", true), Some(1234.5));
        assert_eq!(parse_number("\u{2212}0,25", true), Some(-0.25));
        assert_eq!(parse_number("abc", false), None);
        assert_eq!(parse_number("IPE 300", false), None);
        assert_eq!(parse_number("-", false), None);
        assert_eq!(parse_number("inf", false), None);
    }

    #[test]
    fn delimiters_bom_and_decimal_comma_are_recognised() {
        let t = read_text(
            "\u{feff}drawing;area_mm2;ixx_mm4\r\na.dxf;12,5;1.234,5\r\n".as_bytes(),
            TextOptions::default(),
        )
        .expect("read");
        assert_eq!(t.header, ["drawing", "area_mm2", "ixx_mm4"]);
        assert_eq!(t.rows[0].cells[1], CatalogCell::Number(12.5));
        assert_eq!(t.rows[0].cells[2], CatalogCell::Number(1234.5));
        assert_eq!(t.rows[0].line, 2);
        assert!(t.dialect.contains("comma"), "{}", t.dialect);
        let t = read_text(
            b"drawing\tarea_mm2\na.dxf\t12.5\n\nb.dxf\t3\n",
            TextOptions::default(),
        )
        .expect("read");
        assert_eq!(t.rows.len(), 2);
        assert_eq!(t.rows[1].line, 4);
        assert_eq!(t.rows[0].cells[1], CatalogCell::Number(12.5));
        let t = read_text(
            b"drawing,area_mm2\n\"a, b.dxf\",\"1,234.5\"\n",
            TextOptions::default(),
        )
        .expect("read");
        assert_eq!(t.rows[0].cells[0], CatalogCell::Text("a, b.dxf".into()));
        assert_eq!(t.rows[0].cells[1], CatalogCell::Number(1234.5));
        assert!(read_text(b"\xff\xfe", TextOptions::default()).is_err());
    }
}
