//! CSV writer (RFC 4180 quoting) with spreadsheet-friendly number formats.

use std::io::Write;

use super::{header, numeric_values, Row, Tiers};
use crate::geom::segment::floor_i64;
use crate::import::LengthUnit;

/// How numbers and fields are written.
#[derive(Debug, Clone, Copy)]
pub struct CsvFormat {
    pub unit: LengthUnit,
    pub delimiter: u8,
    pub decimal_comma: bool,
    pub density_kg_m3: f64,
    /// Optional column tiers.
    pub tiers: Tiers,
}

impl Default for CsvFormat {
    fn default() -> Self {
        CsvFormat {
            unit: LengthUnit::MM,
            delimiter: b',',
            decimal_comma: false,
            density_kg_m3: 2700.0,
            tiers: Tiers::default(),
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
    w.write_record(header(fmt.unit, fmt.tiers))?;
    into_bytes(w)
}

/// The records of `rows` without the header: the batch formats each file's rows on its
/// worker thread and the output joins them, header first.
pub fn csv_records(rows: &[Row], fmt: &CsvFormat) -> std::io::Result<Vec<u8>> {
    let mut w = writer(Vec::new(), fmt);
    // One buffer for the formatted numbers of a row, reused: no allocation per field.
    let mut num = Vec::new();
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
        match numeric_values(o, fmt.unit, fmt.density_kg_m3, fmt.tiers) {
            Some(vals) => {
                for v in vals {
                    num.clear();
                    push_number(&mut num, v, fmt.decimal_comma);
                    w.write_field(&num)?;
                }
            }
            None => {
                for _ in 0..fmt.tiers.n_numeric() {
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
    let mut s = Vec::new();
    push_number(&mut s, v, decimal_comma);
    // Only ASCII is written (digits, sign, point or comma, `E`).
    String::from_utf8(s).unwrap_or_default()
}

/// Append a number with 12 significant digits, plain decimal between 1e-5 and 1e15 and
/// scientific (`1.5E+20`) outside, trailing zeros trimmed; nothing for NaN or infinity.
/// Only ASCII is written (bytes, since the CSV writer takes bytes: no UTF-8 check).
pub fn push_number(out: &mut Vec<u8>, v: f64, decimal_comma: bool) {
    use std::io::Write as _;
    if !v.is_finite() {
        return;
    }
    let start = out.len();
    if v == 0.0 {
        out.push(b'0');
        return;
    }
    let exp = decimal_exponent(v.abs());
    if (-5..15).contains(&exp) {
        let decimals = (11 - exp).max(0) as usize;
        let point = if decimal_comma { b',' } else { b'.' };
        // |v| >= 1e-5 here, so at least 12 digits are written and `v` is not shown as 0.
        push_fixed(out, v, decimals, Trim::Zeros, point);
        return;
    }
    // Writing to a vector cannot fail.
    let _ = write!(out, "{v:.11E}");
    let e_at = start
        + out[start..]
            .iter()
            .position(|&b| b == b'E')
            .unwrap_or(out.len() - start);
    let e: i32 = std::str::from_utf8(&out[e_at + 1..])
        .ok()
        .and_then(|t| t.parse().ok())
        .unwrap_or(0);
    out.truncate(e_at);
    trim_zeros(out, start);
    let _ = write!(out, "E{}{:02}", if e < 0 { '-' } else { '+' }, e.abs());
    if decimal_comma {
        if let Some(p) = out[start..].iter().position(|&b| b == b'.') {
            out[start + p] = b',';
        }
    }
}

/// floor(log10(a)) for a finite a > 0, as far as it decides the text of [`push_number`].
///
/// Well inside the plain range the power of ten at or below `a` is looked up among the
/// doubles nearest to 10^-5 … 10^15 (a binary search; `log10` is a library call that cost
/// as much as writing the digits). The two can only differ for `a` within a few units in the
/// last place of a power of ten, where both decimal counts round `a` to that same power and
/// give the same text once trailing zeros are trimmed. Near the ends of the plain range,
/// where a different exponent would switch between plain and scientific text, and outside
/// it, the logarithm decides as before.
fn decimal_exponent(a: f64) -> i32 {
    /// The doubles nearest to 10^k for k = -5..=15.
    const POWERS: [f64; 21] = [
        1e-5, 1e-4, 1e-3, 1e-2, 1e-1, 1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
        1e12, 1e13, 1e14, 1e15,
    ];
    if (1.000_001e-5..0.999_999e15).contains(&a) {
        POWERS.partition_point(|&p| p <= a) as i32 - 6
    } else {
        // A finite a > 0 has a logarithm between −324 and 309.
        floor_i64(a.log10()) as i32
    }
}

/// 10^k for k = 0..=16, each exact in an f64.
const POW10: [f64; 17] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
];

/// Whether [`push_fixed`] keeps the zeros at the end of the decimals.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Trim {
    /// All `decimals` digits, as `format!` writes them.
    #[cfg(test)]
    Nothing,
    /// Zeros at the end of the decimals dropped, and the point when no decimal is left
    /// (what [`trim_zeros`] does to the text).
    Zeros,
}

/// Append `v` with `decimals` digits after the point (`decimals` <= 16, |v|·10^decimals below
/// 2^52), rounded from the exact binary value half to even: the same text as
/// `format!("{v:.decimals$}")` (with `point` for the point, and trimmed as `trim` says),
/// without the formatting machinery (a fifth of a run's CSV time otherwise).
///
/// |v|·10^decimals is taken exactly as the sum hi + lo of two doubles (Dekker's product,
/// 1971, with Veltkamp's split; no fused multiply-add needed), so the rounding to an integer
/// decides on the exact value.
fn push_fixed(out: &mut Vec<u8>, v: f64, decimals: usize, trim: Trim, point: u8) {
    let (a, p) = (v.abs(), POW10[decimals]);
    let hi = a * p;
    let split = |x: f64| {
        let c = 134_217_729.0 * x; // 2^27 + 1
        let h = c - (c - x);
        (h, x - h)
    };
    let ((ah, al), (ph, pl)) = (split(a), split(p));
    let lo = ((ah * ph - hi) + ah * pl + al * ph) + al * pl;
    // Round hi + lo to an integer: the part above the floor is exact, and so is its
    // difference from a half; adding lo then keeps the sign of the exact difference.
    // The floor by a cast (hi is below 2^52 and not negative; `f64::floor` is a library
    // call on the baseline x86-64 target).
    let whole = hi as u64;
    let f = whole as f64;
    let d = ((hi - f) - 0.5) + lo;
    let up = d > 0.0 || (d == 0.0 && whole % 2 == 1);
    let mut m = whole + u64::from(up);
    // Zeros at the end of the decimals go before the text is written: the number with
    // fewer decimals is the same.
    let mut decimals = decimals;
    if trim == Trim::Zeros {
        while decimals > 0 && m.is_multiple_of(10) {
            m /= 10;
            decimals -= 1;
        }
    }
    // The text, written from the right into a buffer: the `decimals` last digits of m, the
    // point, the digits before it (at least one), and the sign.
    let mut text = [0u8; 26];
    let mut at = text.len();
    let mut rest = m;
    for _ in 0..decimals {
        at -= 1;
        text[at] = b'0' + (rest % 10) as u8;
        rest /= 10;
    }
    if decimals > 0 {
        at -= 1;
        text[at] = point;
    }
    loop {
        at -= 1;
        text[at] = b'0' + (rest % 10) as u8;
        rest /= 10;
        if rest == 0 {
            break;
        }
    }
    if v.is_sign_negative() {
        at -= 1;
        text[at] = b'-';
    }
    out.extend_from_slice(&text[at..]);
}

/// Drop trailing zeros after a decimal point (and the point itself if nothing follows) from
/// the number that starts at `start` in `s`.
fn trim_zeros(s: &mut Vec<u8>, start: usize) {
    if s[start..].contains(&b'.') {
        while s.last() == Some(&b'0') {
            s.pop();
        }
        if s.last() == Some(&b'.') {
            s.pop();
        }
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
        // Ties round half to even, like the standard formatter.
        assert_eq!(format_number(100000000000.5, false), "100000000000");
        assert_eq!(format_number(100000000001.5, false), "100000000002");
        assert_eq!(format_number(0.5, false), "0.5");
        assert_eq!(format_number(-0.00001, false), "-0.00001");
        // Whole numbers lose the point; numbers that round up to one lose every decimal.
        assert_eq!(format_number(100.0, false), "100");
        assert_eq!(format_number(100.0, true), "100");
        assert_eq!(format_number(1e14, false), "100000000000000");
        assert_eq!(format_number(0.999_999_999_999_96, false), "1");
        assert_eq!(format_number(-9.999_999_999_999_6, true), "-10");
        assert_eq!(format_number(0.5, true), "0,5");
        // Scientific text: trimmed, with the comma where asked for.
        assert_eq!(format_number(1e20, false), "1E+20");
        assert_eq!(format_number(-1.5e20, true), "-1,5E+20");
        assert_eq!(format_number(2.5e-9, true), "2,5E-09");
        assert_eq!(
            format_number(1.234_567_890_123_4e-300, false),
            "1.23456789012E-300"
        );
    }

    /// The text as the formatter and the logarithm give it: the reference for
    /// [`super::push_number`] (which uses neither where it can).
    fn reference_number(v: f64) -> String {
        let exp = v.abs().log10().floor() as i32;
        if !(-5..15).contains(&exp) {
            return super::format_number(v, false); // scientific: the same code either way
        }
        let decimals = (11 - exp).max(0) as usize;
        trimmed(format!("{v:.decimals$}"))
    }

    /// `text` without the zeros at the end of its decimals, nor a point left last.
    fn trimmed(text: String) -> String {
        if !text.contains('.') {
            return text;
        }
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    }

    /// Numbers at, next to and between powers of ten, and random ones of every size, are
    /// written as the formatter and the logarithm would write them.
    #[test]
    fn numbers_match_the_formatter_near_powers_of_ten() {
        let mut values = Vec::new();
        for k in -8..=17 {
            let p = 10f64.powi(k);
            let (mut below, mut above) = (p, p);
            for _ in 0..4 {
                below = below.next_down();
                above = above.next_up();
                values.extend([below, above]);
            }
            values.extend([p, p * (1.0 - 1e-13), p * (1.0 + 1e-13), p * 0.5, p * 5.5]);
        }
        let mut next = crate::test_rng::xorshift(0x9e37_79b9_7f4a_7c15);
        for _ in 0..200_000 {
            let exp = (next() % 26) as i32 - 8;
            let m = 1.0 + (next() >> 11) as f64 / (1u64 << 53) as f64 * 9.0;
            values.push(m * 10f64.powi(exp));
        }
        for v in values {
            for v in [v, -v] {
                assert_eq!(format_number(v, false), reference_number(v), "{v:e}");
            }
        }
    }

    /// The fixed-point writer gives exactly the text of `format!("{v:.d$}")` for numbers of
    /// every size the plain branch takes, including ties and values next to them.
    #[test]
    fn fixed_point_digits_match_the_standard_formatter() {
        let mut next = crate::test_rng::xorshift(0x2545_f491_4f6c_dd1d);
        let mut checked = 0;
        for k in 0..400_000 {
            let bits = next();
            // Random mantissa and a decimal exponent of -5..15; every eighth a value at or
            // next to a tie (an odd multiple of a half unit in the last place kept).
            let exp = (bits % 20) as i32 - 5;
            let decimals = (11 - exp).max(0) as usize;
            let mut v = (1.0 + (next() >> 11) as f64 / (1u64 << 53) as f64) * 10f64.powi(exp);
            if k % 8 == 0 {
                let unit = 10f64.powi(-(decimals as i32));
                let tie = ((v / unit).floor() + 0.5) * unit;
                v = [tie, tie.next_up(), tie.next_down()][k / 8 % 3];
            }
            if bits & (1 << 40) != 0 {
                v = -v;
            }
            if v.abs() * 10f64.powi(decimals as i32) >= 4e15 {
                continue;
            }
            let mut ours = Vec::new();
            super::push_fixed(&mut ours, v, decimals, super::Trim::Nothing, b'.');
            let reference = format!("{v:.decimals$}");
            assert_eq!(ours, reference.as_bytes(), "{v:e} with {decimals} decimals");
            // Trimmed while written: the same as trimming the text afterwards, with either
            // point; and `trim_zeros` trims as the reference does.
            let trimmed = trimmed(reference.clone());
            let mut after = reference.clone().into_bytes();
            super::trim_zeros(&mut after, 0);
            assert_eq!(after, trimmed.as_bytes(), "{v:e}: trim_zeros");
            for point in [b'.', b','] {
                let mut ours = Vec::new();
                super::push_fixed(&mut ours, v, decimals, super::Trim::Zeros, point);
                let expected = trimmed.replace('.', &char::from(point).to_string());
                assert_eq!(
                    ours,
                    expected.as_bytes(),
                    "{v:e} with {decimals} decimals, trimmed"
                );
            }
            checked += 1;
        }
        assert!(checked > 390_000, "{checked}");
    }
}
