//! CSV writer (RFC 4180 quoting) with spreadsheet-friendly number formats.

use std::io::Write;

use super::{header, numeric_values, Row};
use crate::import::LengthUnit;

/// How numbers and fields are written.
#[derive(Debug, Clone, Copy)]
pub struct CsvFormat {
    pub unit: LengthUnit,
    pub delimiter: u8,
    pub decimal_comma: bool,
    pub density_kg_m3: f64,
}

impl Default for CsvFormat {
    fn default() -> Self {
        CsvFormat {
            unit: LengthUnit::MM,
            delimiter: b',',
            decimal_comma: false,
            density_kg_m3: 2700.0,
        }
    }
}

/// Write the header and one record per row.
pub fn write_csv<W: Write>(mut out: W, rows: &[Row], fmt: &CsvFormat) -> std::io::Result<()> {
    out.write_all(&csv_header(fmt)?)?;
    out.write_all(&csv_records(rows, fmt)?)?;
    out.flush()
}

fn writer<W: Write>(out: W, fmt: &CsvFormat) -> csv::Writer<W> {
    csv::WriterBuilder::new()
        .delimiter(fmt.delimiter)
        .terminator(csv::Terminator::CRLF)
        .from_writer(out)
}

fn into_bytes(w: csv::Writer<Vec<u8>>) -> std::io::Result<Vec<u8>> {
    w.into_inner().map_err(|e| e.into_error())
}

/// The header record alone.
pub fn csv_header(fmt: &CsvFormat) -> std::io::Result<Vec<u8>> {
    let mut w = writer(Vec::new(), fmt);
    w.write_record(header(fmt.unit))?;
    into_bytes(w)
}

/// The records of `rows` without the header: the batch formats each file's rows on its
/// worker thread and the output joins them, header first.
pub fn csv_records(rows: &[Row], fmt: &CsvFormat) -> std::io::Result<Vec<u8>> {
    let mut w = writer(Vec::new(), fmt);
    // One buffer for the formatted numbers of a row, reused: no allocation per field.
    let mut num = String::new();
    for row in rows {
        let o = &row.outcome;
        w.write_field(&row.file)?;
        w.write_field(o.profile.to_string())?;
        w.write_field(if o.result.is_ok() { "ok" } else { "error" })?;
        match &o.result {
            Ok(_) => w.write_field(&o.message)?,
            Err(e) if o.message.is_empty() => w.write_field(e)?,
            Err(e) => w.write_field(format!("{e}; {}", o.message))?,
        }
        w.write_field(&o.layer)?;
        w.write_field(&o.drawing_units)?;
        match numeric_values(o, fmt.unit, fmt.density_kg_m3) {
            Some(vals) => {
                for v in vals {
                    num.clear();
                    push_number(&mut num, v, fmt.decimal_comma);
                    w.write_field(&num)?;
                }
            }
            None => {
                for _ in 0..super::NUMERIC.len() {
                    w.write_field("")?;
                }
            }
        }
        w.write_record(None::<&[u8]>)?;
    }
    into_bytes(w)
}

/// [`push_number`] into a new string.
pub fn format_number(v: f64, decimal_comma: bool) -> String {
    let mut s = String::new();
    push_number(&mut s, v, decimal_comma);
    s
}

/// Append a number with 12 significant digits, plain decimal between 1e-5 and 1e15 and
/// scientific (`1.5E+20`) outside, trailing zeros trimmed; nothing for NaN or infinity.
pub fn push_number(out: &mut String, v: f64, decimal_comma: bool) {
    use std::fmt::Write as _;
    if !v.is_finite() {
        return;
    }
    let start = out.len();
    if v == 0.0 {
        out.push('0');
        return;
    }
    let exp = v.abs().log10().floor() as i32;
    if (-5..15).contains(&exp) {
        let decimals = (11 - exp).max(0) as usize;
        // Writing into a String cannot fail.
        let _ = write!(out, "{v:.decimals$}");
        trim_zeros(out, start);
    } else {
        let _ = write!(out, "{v:.11E}");
        let e_at = start + out[start..].find('E').unwrap_or(out.len() - start);
        let e: i32 = out
            .get(e_at + 1..)
            .and_then(|t| t.parse().ok())
            .unwrap_or(0);
        out.truncate(e_at);
        trim_zeros(out, start);
        let _ = write!(out, "E{}{:02}", if e < 0 { '-' } else { '+' }, e.abs());
    }
    if &out[start..] == "-0" {
        out.truncate(start);
        out.push('0');
    }
    if decimal_comma {
        if let Some(p) = out[start..].find('.') {
            out.replace_range(start + p..start + p + 1, ",");
        }
    }
}

/// Drop trailing zeros after a decimal point (and the point itself if nothing follows) from
/// the number that starts at `start` in `s`.
fn trim_zeros(s: &mut String, start: usize) {
    if s[start..].contains('.') {
        let kept = s[start..].trim_end_matches('0').trim_end_matches('.').len();
        s.truncate(start + kept);
    }
}

#[cfg(test)]
mod tests {
    use super::format_number;

    #[test]
    fn numbers() {
        assert_eq!(format_number(1234.5, false), "1234.5");
        assert_eq!(format_number(1234.5, true), "1234,5");
        assert_eq!(format_number(0.1 + 0.2, false), "0.3");
        assert_eq!(format_number(std::f64::consts::PI, false), "3.14159265359");
        assert_eq!(
            format_number(-2.0 / 3.0 * 1e-3, false),
            "-0.000666666666667"
        );
        assert_eq!(format_number(1.5e20, false), "1.5E+20");
        assert_eq!(format_number(2.5e-9, false), "2.5E-09");
        assert_eq!(format_number(123456789012.34567, false), "123456789012");
        assert_eq!(format_number(f64::NAN, false), "");
        assert_eq!(format_number(-1e-300 * 0.0, false), "0");
    }
}
