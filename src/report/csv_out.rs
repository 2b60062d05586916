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
pub fn write_csv<W: Write>(out: W, rows: &[Row], fmt: &CsvFormat) -> std::io::Result<()> {
    let mut w = csv::WriterBuilder::new()
        .delimiter(fmt.delimiter)
        .terminator(csv::Terminator::CRLF)
        .from_writer(out);
    w.write_record(header(fmt.unit))?;
    let mut rec: Vec<String> = Vec::new();
    for row in rows {
        rec.clear();
        let o = &row.outcome;
        rec.push(row.file.clone());
        rec.push(o.profile.to_string());
        rec.push(if o.result.is_ok() { "ok" } else { "error" }.to_string());
        rec.push(match &o.result {
            Ok(_) => o.message.clone(),
            Err(e) if o.message.is_empty() => e.clone(),
            Err(e) => format!("{e}; {}", o.message),
        });
        rec.push(o.layer.clone());
        rec.push(o.drawing_units.clone());
        match numeric_values(o, fmt.unit, fmt.density_kg_m3) {
            Some(vals) => rec.extend(vals.iter().map(|v| format_number(*v, fmt.decimal_comma))),
            None => rec.extend(std::iter::repeat_n(String::new(), super::NUMERIC.len())),
        }
        w.write_record(&rec)?;
    }
    w.flush()?;
    Ok(())
}

/// A number with 12 significant digits, plain decimal between 1e-5 and 1e15 and scientific
/// (`1.5E+20`) outside, trailing zeros trimmed; empty for NaN or infinity.
pub fn format_number(v: f64, decimal_comma: bool) -> String {
    if !v.is_finite() {
        return String::new();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let exp = v.abs().log10().floor() as i32;
    let s = if (-5..15).contains(&exp) {
        let decimals = (11 - exp).max(0) as usize;
        let s = format!("{:.*}", decimals, v);
        trim_zeros(&s)
    } else {
        let s = format!("{:.11E}", v);
        let (mant, e) = s.split_once('E').unwrap_or((&s, "0"));
        let e: i32 = e.parse().unwrap_or(0);
        format!(
            "{}E{}{:02}",
            trim_zeros(mant),
            if e < 0 { '-' } else { '+' },
            e.abs()
        )
    };
    let s = if s == "-0" { "0".to_string() } else { s };
    if decimal_comma {
        s.replace('.', ",")
    } else {
        s
    }
}

fn trim_zeros(s: &str) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s.to_string()
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
