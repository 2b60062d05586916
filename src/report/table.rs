//! Finished tables and their writers for spreadsheets and scripts: JSON Lines and .xlsx.
//!
//! A [`Table`] is what a command's output is once computed: header names that carry their
//! units (`area_mm2`), cells that are text, numbers or empty, and rows flagged for
//! highlighting. [`measure_table`] builds the one `measure` writes; other commands build their
//! own. The CSV of `measure` does not go through here: it is formatted on the worker threads
//! ([`super::csv_records`]).
//!
//! Numbers stay numbers in both formats: JSON numbers (shortest text that reads back to the
//! same f64) and .xlsx number cells. NaN and infinity have no place in either (JSON has no
//! literal for them; rust_xlsxwriter would write the strings "NAN" and "INF"), so they
//! become `null` and empty cells.

use std::borrow::Cow;
use std::fmt::Write as _;
use std::time::{SystemTime, UNIX_EPOCH};

use rust_xlsxwriter::{Color, Format, Workbook, Worksheet};

use super::{header, numeric_values, CsvFormat, Row};

/// One cell of a finished table.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Text(String),
    /// A number; NaN and infinity are written as empty cells (`null` in JSON).
    Number(f64),
    Empty,
}

/// A finished table for the JSON Lines and .xlsx writers: header names carry their units
/// (e.g. `area_mm2`), `flagged[i]` marks row i for highlighting (error rows of `measure`,
/// failed comparisons of `check`).
///
/// Rows shorter than the header leave the rest empty; cells beyond the header are written
/// to .xlsx without a header and left out of JSON (which needs a key). A missing `flagged`
/// entry means not flagged.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Table {
    /// Worksheet name in .xlsx (made to fit Excel's rules there).
    pub name: String,
    pub header: Vec<String>,
    pub rows: Vec<Vec<Cell>>,
    pub flagged: Vec<bool>,
}

/// What a run was: (key, value) pairs such as tool version, command line, date (UTC), input
/// files. Keys may repeat (one `input` entry per file, say); order is kept.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunRecord {
    pub entries: Vec<(String, String)>,
}

impl RunRecord {
    /// Append one entry.
    pub fn push(&mut self, key: impl Into<String>, value: impl Into<String>) {
        self.entries.push((key.into(), value.into()));
    }
}

/// The table of `measure`: the same columns, in the same order, as the CSV header, and the
/// same values as its records before they are printed (numbers converted to the output unit
/// by [`numeric_values`]). Values the CSV leaves empty (error rows, tiers not computed, NaN)
/// are [`Cell::Empty`]; error rows are flagged.
pub fn measure_table(rows: &[Row], fmt: &CsvFormat) -> Table {
    let header = header(fmt.unit, fmt.tiers);
    let n_numeric = fmt.tiers.n_numeric();
    let mut cells = Vec::with_capacity(rows.len());
    let mut flagged = Vec::with_capacity(rows.len());
    for row in rows {
        let o = &row.outcome;
        let mut r = Vec::with_capacity(header.len());
        r.push(Cell::Text(row.file.clone()));
        r.push(Cell::Number(o.profile as f64));
        r.push(Cell::Text(
            if o.result.is_ok() { "ok" } else { "error" }.to_string(),
        ));
        // The message exactly as `csv_records` composes it.
        r.push(Cell::Text(match &o.result {
            Ok(_) => o.message.clone(),
            Err(e) if o.message.is_empty() => e.clone(),
            Err(e) => format!("{e}; {}", o.message),
        }));
        r.push(Cell::Text(o.layer.clone()));
        r.push(Cell::Text(o.drawing_units.clone()));
        match numeric_values(o, fmt.unit, fmt.density_kg_m3, fmt.tiers) {
            Some(vals) => r.extend(vals.into_iter().map(|v| {
                if v.is_finite() {
                    Cell::Number(v)
                } else {
                    Cell::Empty
                }
            })),
            None => r.extend(std::iter::repeat_n(Cell::Empty, n_numeric)),
        }
        cells.push(r);
        flagged.push(o.result.is_err());
    }
    Table {
        name: "profiles".to_string(),
        header,
        rows: cells,
        flagged,
    }
}

// ---------------------------------------------------------------------------------------
// JSON Lines

/// Write `table` as JSON Lines: one object per row, one line each (`\n`), keys the header
/// names in header order. Numbers are JSON numbers, the shortest text that reads back to
/// the same f64; empty cells and non-finite numbers are `null`; text is a JSON string.
pub fn write_jsonl(out: &mut dyn std::io::Write, table: &Table) -> std::io::Result<()> {
    // One buffer per line, reused.
    let mut line = String::new();
    for row in &table.rows {
        line.clear();
        line.push('{');
        for (k, key) in table.header.iter().enumerate() {
            if k > 0 {
                line.push(',');
            }
            push_json_string(&mut line, key);
            line.push(':');
            match row.get(k) {
                Some(Cell::Text(s)) => push_json_string(&mut line, s),
                Some(Cell::Number(v)) => push_json_number(&mut line, *v),
                Some(Cell::Empty) | None => line.push_str("null"),
            }
        }
        line.push_str("}\n");
        out.write_all(line.as_bytes())?;
    }
    out.flush()
}

/// Append `s` as a JSON string (RFC 8259 §7): quote and backslash escaped, control
/// characters as `\n`, `\t`, ... or `\u00XX`; everything else, non-ASCII included, as is
/// (JSON text is UTF-8). U+2028 and U+2029 are escaped too, so that a line is also valid
/// JavaScript.
pub fn push_json_string(out: &mut String, s: &str) {
    out.push('"');
    let mut plain_from = 0;
    for (i, c) in s.char_indices() {
        let escape: Option<&str> = match c {
            '"' => Some("\\\""),
            '\\' => Some("\\\\"),
            '\n' => Some("\\n"),
            '\r' => Some("\\r"),
            '\t' => Some("\\t"),
            '\u{8}' => Some("\\b"),
            '\u{c}' => Some("\\f"),
            _ => None,
        };
        let numeric = c < '\u{20}' || c == '\u{2028}' || c == '\u{2029}';
        if escape.is_none() && !numeric {
            continue;
        }
        out.push_str(&s[plain_from..i]);
        match escape {
            Some(e) => out.push_str(e),
            None => {
                let _ = write!(out, "\\u{:04x}", c as u32);
            }
        }
        plain_from = i + c.len_utf8();
    }
    out.push_str(&s[plain_from..]);
    out.push('"');
}

/// Append `v` as a JSON number: the shortest decimal that reads back to the same f64
/// (Rust's float formatting), plain between 1e-5 and 1e16 and with an exponent (`1.5e-7`,
/// `2e21`) outside; `null` for NaN and infinity, which JSON cannot express.
pub fn push_json_number(out: &mut String, v: f64) {
    if !v.is_finite() {
        out.push_str("null");
        return;
    }
    let a = v.abs();
    if a == 0.0 || (1e-5..1e16).contains(&a) {
        let _ = write!(out, "{v}");
    } else {
        let _ = write!(out, "{v:e}");
    }
}

// ---------------------------------------------------------------------------------------
// .xlsx

/// Why a workbook could not be made: which sheet, and rust_xlsxwriter's reason (a table
/// with more rows than a worksheet holds, 1 048 575 below the header, is the one to expect).
#[derive(Debug)]
pub struct XlsxError {
    /// The worksheet being written, or empty when assembling the file failed.
    pub sheet: String,
    pub source: rust_xlsxwriter::XlsxError,
}

impl std::fmt::Display for XlsxError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if self.sheet.is_empty() {
            write!(f, "cannot assemble the .xlsx workbook: {}", self.source)
        } else {
            write!(
                f,
                "cannot write worksheet {:?}: {}",
                self.sheet, self.source
            )
        }
    }
}

impl std::error::Error for XlsxError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        Some(&self.source)
    }
}

/// Fill of flagged rows: light red (Excel's "Bad" cell style), with its dark red bold text.
/// Printed in grey it is a light grey band with bold text, still apart from white rows.
const FLAG_FILL: u32 = 0xFFC7CE;
const FLAG_TEXT: u32 = 0x9C0006;

/// Name of the worksheet listing the run record.
const RUN_SHEET: &str = "run";

/// Column widths in characters: at least this, at most that (long messages wrap off the
/// screen rather than pushing the numbers away).
const MIN_WIDTH: usize = 6;
const MAX_WIDTH: usize = 60;

/// An .xlsx workbook in memory: one worksheet per table (in order), then the worksheet
/// "run" with the run record (key | value).
///
/// Each table's sheet has a bold, frozen header row; numbers are number cells (never text),
/// non-finite numbers and empty cells are left empty; flagged rows are filled light red
/// with bold dark red text across the table's width; columns are as wide as their content
/// (between 6 and 60 characters). Sheet names are made to fit Excel's rules
/// ([`sheet_names`]). Text longer than a cell holds (32 767 UTF-16 units) is cut, ending in
/// "…".
pub fn xlsx_bytes(tables: &[Table], run: &RunRecord) -> Result<Vec<u8>, XlsxError> {
    let mut workbook = Workbook::new();
    let bold = Format::new().set_bold();
    let flag = Format::new()
        .set_bold()
        .set_background_color(Color::RGB(FLAG_FILL))
        .set_font_color(Color::RGB(FLAG_TEXT));
    let mut wanted: Vec<&str> = tables.iter().map(|t| t.name.as_str()).collect();
    wanted.push(RUN_SHEET);
    let names = sheet_names(&wanted);
    for (table, name) in tables.iter().zip(&names) {
        let sheet = workbook.add_worksheet();
        write_table_sheet(sheet, name, table, &bold, &flag).map_err(|source| XlsxError {
            sheet: name.clone(),
            source,
        })?;
    }
    // `sheet_names` returns one name per wanted name, and the run sheet's is the last.
    let run_name = names.last().map_or(RUN_SHEET, String::as_str);
    let run_table = Table {
        name: run_name.to_string(),
        header: vec!["key".to_string(), "value".to_string()],
        rows: run
            .entries
            .iter()
            .map(|(k, v)| vec![Cell::Text(k.clone()), Cell::Text(v.clone())])
            .collect(),
        flagged: Vec::new(),
    };
    let sheet = workbook.add_worksheet();
    write_table_sheet(sheet, run_name, &run_table, &bold, &flag).map_err(|source| XlsxError {
        sheet: run_name.to_string(),
        source,
    })?;
    workbook.save_to_buffer().map_err(|source| XlsxError {
        sheet: String::new(),
        source,
    })
}

fn write_table_sheet(
    sheet: &mut Worksheet,
    name: &str,
    table: &Table,
    bold: &Format,
    flag: &Format,
) -> Result<(), rust_xlsxwriter::XlsxError> {
    sheet.set_name(name)?;
    let n_cols = table
        .rows
        .iter()
        .map(Vec::len)
        .chain([table.header.len()])
        .max()
        .unwrap_or(0);
    if n_cols > usize::from(u16::MAX) {
        return Err(rust_xlsxwriter::XlsxError::RowColumnLimitError);
    }
    let mut widths: Vec<usize> = vec![MIN_WIDTH; n_cols];
    for (c, h) in table.header.iter().enumerate() {
        sheet.write_string_with_format(0, c as u16, excel_text(h), bold)?;
        widths[c] = widths[c].max(display_width(h));
    }
    for (i, row) in table.rows.iter().enumerate() {
        // Below the header; rust_xlsxwriter refuses rows past Excel's limit.
        let Ok(r) = u32::try_from(i + 1) else {
            return Err(rust_xlsxwriter::XlsxError::RowColumnLimitError);
        };
        let flagged = table.flagged.get(i).copied().unwrap_or(false);
        let format = flagged.then_some(flag);
        for (c, width) in widths.iter_mut().enumerate() {
            let col = c as u16; // n_cols fits in u16, checked above
            match (row.get(c), format) {
                (Some(Cell::Text(s)), Some(f)) => {
                    sheet.write_string_with_format(r, col, excel_text(s), f)?;
                }
                (Some(Cell::Text(s)), None) => {
                    sheet.write_string(r, col, excel_text(s))?;
                }
                (Some(Cell::Number(v)), Some(f)) if v.is_finite() => {
                    sheet.write_number_with_format(r, col, *v, f)?;
                }
                (Some(Cell::Number(v)), None) if v.is_finite() => {
                    sheet.write_number(r, col, *v)?;
                }
                // Empty, non-finite, or past the row's end: only the fill of a flagged row.
                (_, Some(f)) => {
                    sheet.write_blank(r, col, f)?;
                }
                (_, None) => {}
            }
            let w = match row.get(c) {
                Some(Cell::Text(s)) => display_width(s),
                // Excel's General format shows at most 11 characters of a number.
                Some(Cell::Number(v)) if v.is_finite() => 11,
                _ => 0,
            };
            *width = (*width).max(w);
        }
    }
    for (c, w) in widths.iter().enumerate() {
        // A little room for the bold header and the cell margins.
        sheet.set_column_width(c as u16, (*w).min(MAX_WIDTH) as f64 + 1.5)?;
    }
    sheet.set_freeze_panes(1, 0)?;
    Ok(())
}

/// Characters of the longest line of `s`, a width in Excel's character units that is good
/// enough for Latin text.
fn display_width(s: &str) -> usize {
    s.lines().map(|l| l.chars().count()).max().unwrap_or(0)
}

/// Excel's limit for the text of one cell, in UTF-16 code units.
const MAX_CELL_TEXT: usize = 32_767;

/// `s`, cut to what one cell holds, ending in "…" when cut.
fn excel_text(s: &str) -> Cow<'_, str> {
    // A UTF-8 string has at least as many bytes as UTF-16 units.
    if s.len() <= MAX_CELL_TEXT {
        return Cow::Borrowed(s);
    }
    let mut units = 0;
    let mut end = 0;
    for (i, c) in s.char_indices() {
        units += c.len_utf16();
        if units > MAX_CELL_TEXT - 1 {
            break;
        }
        end = i + c.len_utf8();
    }
    if end == s.len() {
        return Cow::Borrowed(s);
    }
    Cow::Owned(format!("{}…", &s[..end]))
}

/// Worksheet names for `wanted`, one each and in order, that Excel accepts: the characters
/// `[ ] : * ? / \` and control characters become `_`, apostrophes at either end are dropped,
/// the name is cut to 31 UTF-16 units, an empty name becomes `Sheet<n>`, the reserved name
/// "History" gets a suffix, and a name equal to an earlier one (ignoring case) gets " (2)",
/// " (3)", ... within the 31 units.
pub fn sheet_names(wanted: &[&str]) -> Vec<String> {
    let mut taken: Vec<String> = Vec::with_capacity(wanted.len());
    let mut names = Vec::with_capacity(wanted.len());
    for (k, w) in wanted.iter().enumerate() {
        let cleaned: String = w
            .chars()
            .map(|c| {
                if matches!(c, '[' | ']' | ':' | '*' | '?' | '/' | '\\') || c.is_control() {
                    '_'
                } else {
                    c
                }
            })
            .collect();
        let mut base = cut_utf16(cleaned.trim_matches('\''), 31).to_string();
        base = base.trim_end_matches('\'').to_string();
        if base.is_empty() {
            base = format!("Sheet{}", k + 1);
        }
        if base.eq_ignore_ascii_case("history") {
            base.push_str(" (1)");
        }
        let mut name = base.clone();
        let mut n = 2;
        while taken
            .iter()
            .any(|t| t.to_lowercase() == name.to_lowercase())
        {
            let suffix = format!(" ({n})");
            let room = 31 - suffix.len();
            let stem = cut_utf16(&base, room).trim_end_matches('\'');
            name = format!("{stem}{suffix}");
            n += 1;
        }
        taken.push(name.clone());
        names.push(name);
    }
    names
}

/// The longest prefix of `s` with at most `max` UTF-16 units.
fn cut_utf16(s: &str, max: usize) -> &str {
    let mut units = 0;
    for (i, c) in s.char_indices() {
        units += c.len_utf16();
        if units > max {
            return &s[..i];
        }
    }
    s
}

// ---------------------------------------------------------------------------------------
// Date

/// `t` as a UTC date and time, ISO 8601 to the second: `2026-12-02T08:05:09Z`. Times before
/// 1970 are handled too.
pub fn utc_date_time(t: SystemTime) -> String {
    let secs: i64 = match t.duration_since(UNIX_EPOCH) {
        Ok(d) => i64::try_from(d.as_secs()).unwrap_or(i64::MAX),
        Err(e) => {
            // Before the epoch: round down to the whole second.
            let d = e.duration();
            let s = i64::try_from(d.as_secs()).unwrap_or(i64::MAX);
            -s - i64::from(d.subsec_nanos() > 0)
        }
    };
    format_utc(secs)
}

/// Seconds since 1970-01-01T00:00:00Z as `YYYY-MM-DDTHH:MM:SSZ` (proleptic Gregorian).
fn format_utc(secs: i64) -> String {
    let days = secs.div_euclid(86_400);
    let in_day = secs.rem_euclid(86_400);
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        in_day / 3600,
        in_day / 60 % 60,
        in_day % 60
    )
}

/// The proleptic Gregorian (year, month, day) of the day `z` days after 1970-01-01.
///
/// Counts in 400-year eras of 146 097 days starting on 0000-03-01, so that the leap day is
/// the last day of a year. Source: Howard Hinnant, "chrono-Compatible Low-Level Date
/// Algorithms", `civil_from_days`. Exact for |z| up to about 2^60 (no overflow in i64).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z.saturating_add(719_468); // days from 0000-03-01 to 1970-01-01
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // day of era, [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // day of year from March 1, [0, 365]
    let mp = (5 * doy + 2) / 153; // month from March, [0, 11]
    let d = doy - (153 * mp + 2) / 5 + 1; // [1, 31]
    let m = if mp < 10 { mp + 3 } else { mp - 9 }; // [1, 12]
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m as u32, d as u32)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn json(s: &str) -> String {
        let mut out = String::new();
        push_json_string(&mut out, s);
        out
    }

    #[test]
    fn json_strings_escape_quotes_backslashes_and_controls() {
        assert_eq!(json(""), r#""""#);
        assert_eq!(json("plain"), r#""plain""#);
        assert_eq!(json(r#"say "hi""#), r#""say \"hi\"""#);
        assert_eq!(json(r"C:\drawings\a.dxf"), r#""C:\\drawings\\a.dxf""#);
        assert_eq!(json("a\nb\r\tc"), r#""a\nb\r\tc""#);
        assert_eq!(json("\u{8}\u{c}"), r#""\b\f""#);
        assert_eq!(json("\u{0}\u{1f}\u{7f}"), "\"\\u0000\\u001f\u{7f}\"");
        assert_eq!(json("x\u{2028}y\u{2029}"), r#""x\u2028y\u2029""#);
        // Non-ASCII stays as UTF-8.
        assert_eq!(
            json("Ø50 × 3 – Größe 寸法 😀"),
            "\"Ø50 × 3 – Größe 寸法 😀\""
        );
        assert_eq!(json("é\"é"), "\"é\\\"é\"");
    }

    #[test]
    fn json_numbers_read_back_exactly() {
        let mut next = crate::test_rng::xorshift(0x9e37_79b9_7f4a_7c15);
        for _ in 0..20_000 {
            let v = f64::from_bits(next());
            let mut s = String::new();
            push_json_number(&mut s, v);
            if v.is_finite() {
                assert_eq!(s.parse::<f64>().ok(), Some(v), "{s}");
                assert!(!s.contains("inf") && !s.contains("NaN"), "{s}");
            } else {
                assert_eq!(s, "null");
            }
        }
        let text = |v: f64| {
            let mut s = String::new();
            push_json_number(&mut s, v);
            s
        };
        assert_eq!(text(0.1 + 0.2), "0.30000000000000004");
        assert_eq!(text(3.0), "3");
        assert_eq!(text(-0.0), "-0");
        assert_eq!(text(1.5e-7), "1.5e-7");
        assert_eq!(text(2e21), "2e21");
        assert_eq!(text(f64::NAN), "null");
        assert_eq!(text(f64::NEG_INFINITY), "null");
    }

    #[test]
    fn jsonl_lines_follow_the_header() {
        let table = Table {
            name: "t".into(),
            header: vec!["a_mm".into(), "b".into(), "c".into()],
            rows: vec![
                vec![
                    Cell::Number(1.5),
                    Cell::Text("x".into()),
                    Cell::Number(f64::NAN),
                ],
                vec![Cell::Empty],
            ],
            flagged: vec![false, true],
        };
        let mut out = Vec::new();
        write_jsonl(&mut out, &table).expect("writing to memory cannot fail");
        assert_eq!(
            String::from_utf8(out).expect("the writer writes UTF-8"),
            "{\"a_mm\":1.5,\"b\":\"x\",\"c\":null}\n{\"a_mm\":null,\"b\":null,\"c\":null}\n"
        );
    }

    #[test]
    fn utc_dates_of_known_days() {
        // Day numbers from GNU date: `date -u -d 2026-12-02 +%s` / 86400.
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(-1), (1969, 12, 31));
        assert_eq!(civil_from_days(11_016), (2000, 2, 29));
        assert_eq!(civil_from_days(20_789), (2026, 12, 2));
        assert_eq!(civil_from_days(-25_508), (1900, 3, 1));
        assert_eq!(civil_from_days(157_113), (2400, 2, 29));
        assert_eq!(
            format_utc(1_796_169_600 + 8 * 3600 + 5 * 60 + 9),
            "2026-12-02T08:05:09Z"
        );
        assert_eq!(format_utc(951_782_400 - 1), "2000-02-28T23:59:59Z");
        assert_eq!(format_utc(-1), "1969-12-31T23:59:59Z");
        let t = UNIX_EPOCH + std::time::Duration::from_secs(951_782_400);
        assert_eq!(utc_date_time(t), "2000-02-29T00:00:00Z");
        let before = UNIX_EPOCH - std::time::Duration::from_millis(500);
        assert_eq!(utc_date_time(before), "1969-12-31T23:59:59Z");
    }

    /// Walking day by day over 1600..2400, each date follows the one before by the
    /// Gregorian calendar's rules (month lengths, leap years every 4 years except centuries
    /// not divisible by 400).
    #[test]
    fn utc_dates_advance_one_day_at_a_time() {
        let leap = |y: i64| (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
        let month_days = |y: i64, m: u32| match m {
            2 if leap(y) => 29,
            2 => 28,
            4 | 6 | 9 | 11 => 30,
            _ => 31,
        };
        let mut prev = civil_from_days(-135_140); // 1600-01-01
        assert_eq!(prev, (1600, 1, 1));
        for z in -135_139..157_200 {
            let (y, m, d) = prev;
            let expected = if d < month_days(y, m) {
                (y, m, d + 1)
            } else if m < 12 {
                (y, m + 1, 1)
            } else {
                (y + 1, 1, 1)
            };
            let got = civil_from_days(z);
            assert_eq!(got, expected, "day {z}");
            prev = got;
        }
    }

    #[test]
    fn sheet_names_fit_excel() {
        let long = "a".repeat(40);
        let names = sheet_names(&[
            "results",
            "Results",
            "a/b:c[d]*?\\",
            "'quoted'",
            "",
            &long,
            &long,
            "History",
            "run",
        ]);
        assert_eq!(
            names,
            [
                "results",
                "Results (2)",
                "a_b_c_d____",
                "quoted",
                "Sheet5",
                &"a".repeat(31),
                &format!("{} (2)", "a".repeat(27)),
                "History (1)",
                "run",
            ]
        );
        // 31 UTF-16 units, not bytes: 20 two-unit emoji keep 15.
        let emoji = "😀".repeat(20);
        assert_eq!(sheet_names(&[&emoji])[0], "😀".repeat(15));
    }

    #[test]
    fn long_text_is_cut_to_a_cell() {
        let s = "é".repeat(40_000);
        let cut = excel_text(&s);
        assert_eq!(cut.encode_utf16().count(), MAX_CELL_TEXT);
        assert!(cut.ends_with('…'));
        let ok = "x".repeat(MAX_CELL_TEXT);
        assert!(matches!(excel_text(&ok), Cow::Borrowed(_)));
    }

    #[test]
    fn workbook_survives_odd_tables() {
        let tables = [
            Table::default(),
            Table {
                name: "t".into(),
                header: vec!["a".into()],
                rows: vec![
                    vec![Cell::Number(f64::INFINITY), Cell::Text("x".repeat(40_000))],
                    vec![],
                ],
                flagged: vec![true],
            },
        ];
        let bytes = xlsx_bytes(&tables, &RunRecord::default()).expect("a workbook");
        assert_eq!(&bytes[..2], b"PK");
    }
}
