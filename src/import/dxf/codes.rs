//! Group-code pairs: the tokenizer under the DXF reader.
//!
//! A DXF file is a flat sequence of (group code, value) pairs. [`Pairs`] walks that sequence
//! over the file's bytes without copying: every [`Pair`] borrows its value from the input, and
//! numbers in ASCII files are parsed only when the caller asks for them ([`Pair::real`],
//! [`Pair::int`]), so pairs the reader does not need cost one line split each.
//!
//! Two encodings (DXF reference, "ASCII DXF Files" and "Binary DXF Files"; from memory):
//! - ASCII: a code line holding an integer, then a value line. Lines end in LF, CRLF or a lone
//!   CR; blanks around codes and values are ignored (old writers right-align codes, "  0").
//! - Binary: the 22-byte sentinel `AutoCAD Binary DXF\r\n\x1a\0`, then pairs with
//!   little-endian values whose type follows from the group code (table in [`binary_kind`]).
//!   Release 12 writes 1-byte group codes (255 escapes a following 2-byte code); later
//!   releases write 2-byte codes. The width is detected on the first pair, which is
//!   `0/SECTION` (or a `999` comment) in every writer's output: with 2-byte codes the two
//!   bytes after the sentinel are `00 00` (or `E7 03`), with 1-byte codes they are `00 'S'`
//!   (or `FF E7`).

use crate::import::{ImportError, ImportErrorKind, Location};

/// The binary DXF sentinel (DXF reference, "Binary DXF Files"; from memory).
pub(crate) const BINARY_SENTINEL: &[u8] = b"AutoCAD Binary DXF\r\n\x1a\0";

/// A value as read from the file.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Value<'a> {
    /// ASCII files: the value line without surrounding blanks. Binary files: a string value
    /// without its NUL terminator.
    Text(&'a [u8]),
    /// A double (binary files).
    Real(f64),
    /// An integer or boolean (binary files).
    Int(i64),
    /// A binary chunk (binary files, groups 310–319 and 1004).
    Bytes(&'a [u8]),
}

/// One (group code, value) pair and where it sits in the file.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Pair<'a> {
    pub code: i32,
    pub value: Value<'a>,
    /// 1-based line of the code (ASCII) or 0-based byte offset of the code (binary).
    pub at: u64,
    /// Line or byte offset of the value.
    pub value_at: u64,
    pub binary: bool,
}

impl<'a> Pair<'a> {
    /// Where the pair's group code sits.
    pub fn location(&self) -> Location {
        if self.binary {
            Location::Byte(self.at)
        } else {
            Location::Line(self.at)
        }
    }

    /// Where the pair's value sits.
    pub fn value_location(&self) -> Location {
        if self.binary {
            Location::Byte(self.value_at)
        } else {
            Location::Line(self.value_at)
        }
    }

    /// The value as text; numbers of binary files give an empty slice (the reader only asks
    /// for text where the DXF reference puts strings: groups 0–9 and 100–109).
    pub fn text(&self) -> &'a [u8] {
        match self.value {
            Value::Text(t) | Value::Bytes(t) => t,
            Value::Real(_) | Value::Int(_) => b"",
        }
    }

    /// Whether this is the pair `0/name`, e.g. `0/ENDSEC`.
    pub fn is(&self, code: i32, name: &[u8]) -> bool {
        self.code == code && self.text() == name
    }

    /// The value as a double.
    #[inline(always)]
    pub fn real(&self) -> Result<f64, ImportError> {
        match self.value {
            Value::Real(v) => Ok(v),
            Value::Int(v) => Ok(v as f64),
            Value::Text(t) => parse_f64(t).ok_or_else(|| self.bad_value("a number")),
            Value::Bytes(_) => Err(self.bad_value("a number")),
        }
    }

    /// The value as an integer. ASCII values written as an integral decimal (`1.0`) are
    /// accepted, as some writers put them that way; `1.5` is not.
    pub fn int(&self) -> Result<i64, ImportError> {
        match self.value {
            Value::Int(v) => Ok(v),
            Value::Real(v) => integral(v).ok_or_else(|| self.bad_value("an integer")),
            Value::Text(t) => parse_i64(t)
                .or_else(|| parse_f64(t).and_then(integral))
                .ok_or_else(|| self.bad_value("an integer")),
            Value::Bytes(_) => Err(self.bad_value("an integer")),
        }
    }

    #[cold]
    fn bad_value(&self, expected: &str) -> ImportError {
        let shown = match self.value {
            Value::Text(t) => format!("'{}'", shown_text(t)),
            Value::Real(v) => format!("{v}"),
            Value::Int(v) => format!("{v}"),
            Value::Bytes(b) => format!("{} bytes of binary data", b.len()),
        };
        let hint = match self.value {
            Value::Text(t) if t.contains(&b',') => " (decimal comma?)",
            _ => "",
        };
        ImportError::new(
            Some(self.value_location()),
            ImportErrorKind::Malformed(format!(
                "group code {} needs {expected}, found {shown}{hint}",
                self.code
            )),
        )
    }
}

/// Text of a value for messages: lossy UTF-8, cut to 60 characters.
pub(crate) fn shown_text(t: &[u8]) -> String {
    let s = String::from_utf8_lossy(t);
    let mut out: String = s.chars().take(60).collect();
    if s.chars().count() > 60 {
        out.push('…');
    }
    out
}

fn integral(v: f64) -> Option<i64> {
    // i64::MAX as f64 rounds up to 2^63, so the upper bound is exclusive.
    (v.fract() == 0.0 && (-9.2e18..=9.2e18).contains(&v)).then_some(v as i64)
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Mode {
    Ascii,
    /// Binary, 1-byte group codes (255 escapes a 2-byte code): Release 12 and older.
    Binary1,
    /// Binary, 2-byte little-endian group codes: Release 13 and later.
    Binary2,
}

/// Streaming reader of group-code pairs over a file held in memory.
pub(crate) struct Pairs<'a> {
    buf: &'a [u8],
    pos: usize,
    /// ASCII: lines consumed so far (the last line read has this 1-based number).
    line: u64,
    mode: Mode,
    /// The current pair, once [`Pairs::advance`] has returned `true`.
    pub cur: Pair<'a>,
    /// Deliver the current pair once more (one pair of look-ahead).
    replay: bool,
    /// Pairs started so far (the one being read included).
    pairs_read: u64,
}

impl<'a> Pairs<'a> {
    /// Start reading `bytes`. An empty (or all-blank) file is [`ImportErrorKind::Empty`].
    pub fn new(bytes: &'a [u8]) -> Result<Pairs<'a>, ImportError> {
        if bytes.iter().all(|&b| is_blank(b)) {
            return Err(ImportError::new(None, ImportErrorKind::Empty));
        }
        let mut pairs = Pairs {
            buf: bytes,
            pos: 0,
            line: 0,
            mode: Mode::Ascii,
            cur: Pair {
                code: -1,
                value: Value::Text(b""),
                at: 0,
                value_at: 0,
                binary: false,
            },
            replay: false,
            pairs_read: 0,
        };
        if let Some(rest) = bytes.strip_prefix(BINARY_SENTINEL) {
            pairs.pos = BINARY_SENTINEL.len();
            // The first pair is 0/SECTION or a 999 comment: as 2-byte codes `00 00` or
            // `E7 03`; as 1-byte codes `00 'S'` or `FF E7 03`.
            pairs.mode = match rest {
                [0, 0, ..] | [0xE7, 0x03, ..] => Mode::Binary2,
                _ => Mode::Binary1,
            };
        } else if bytes.starts_with(b"AutoCAD Binary DXF") {
            return Err(ImportError::new(
                Some(Location::Byte(18)),
                ImportErrorKind::Malformed(
                    "damaged binary DXF sentinel (expected CR LF SUB NUL after the title)".into(),
                ),
            ));
        } else if let Some(rest) = bytes.strip_prefix(b"\xEF\xBB\xBF") {
            // A UTF-8 byte-order mark before the first code line.
            pairs.buf = rest;
        }
        Ok(pairs)
    }

    /// Where reading stopped: the last line read, or the current byte offset.
    pub fn position(&self) -> Location {
        match self.mode {
            Mode::Ascii => Location::Line(self.line),
            Mode::Binary1 | Mode::Binary2 => Location::Byte(self.pos as u64),
        }
    }

    /// Give the current pair back: the next [`Pairs::advance`] (or [`Pairs::next`]) delivers
    /// it again.
    #[inline]
    pub fn replay(&mut self) {
        debug_assert!(!self.replay, "only one pair of look-ahead");
        self.replay = true;
    }

    /// Give back `pair`, which must be the current pair (see [`Pairs::replay`]).
    pub fn push_back(&mut self, pair: Pair<'a>) {
        debug_assert_eq!(
            pair.at, self.cur.at,
            "only the current pair can be given back"
        );
        self.replay();
    }

    /// Move to the next pair, kept in [`Pairs::cur`]; `false` at the end of the input.
    ///
    /// The pair is written in place rather than returned: a freshly written pair copied
    /// through a returned `Result<Option<Pair>>` stalled on store forwarding, which cost a
    /// third of the reader's time.
    #[inline(always)]
    pub fn advance(&mut self) -> Result<bool, ImportError> {
        if self.replay {
            self.replay = false;
            return Ok(true);
        }
        self.pairs_read += 1;
        match self.mode {
            Mode::Ascii => self.next_ascii(),
            Mode::Binary1 | Mode::Binary2 => self.next_binary(),
        }
    }

    /// The next pair as a value, `None` at the end of the input (for code off the hot path).
    #[inline]
    #[allow(clippy::should_implement_trait)] // fallible, so not an `Iterator`
    pub fn next(&mut self) -> Result<Option<Pair<'a>>, ImportError> {
        Ok(if self.advance()? {
            Some(self.cur)
        } else {
            None
        })
    }

    /// The next line (without its line ending), `None` at the end of the input.
    #[inline]
    fn take_line(&mut self) -> Option<&'a [u8]> {
        let buf = self.buf;
        let start = self.pos;
        let rest = buf.get(start..)?;
        if rest.is_empty() {
            return None;
        }
        let len = line_end(rest);
        let line = &rest[..len]; // line_end returns at most rest.len()
        let ending = match rest.get(len..len + 2) {
            Some(b"\r\n") => 2,
            _ if len < rest.len() => 1,
            _ => 0,
        };
        self.pos = start + len + ending;
        self.line += 1;
        Some(line)
    }

    #[inline(always)]
    fn next_ascii(&mut self) -> Result<bool, ImportError> {
        let code = match self.code_line_fast() {
            Some(code) => code,
            None => match self.code_line_slow()? {
                Some(code) => code,
                None => return Ok(false),
            },
        };
        let at = self.line;
        let Some(value) = self.take_line() else {
            return Err(self.missing_value(code, at));
        };
        self.cur = Pair {
            code,
            value: Value::Text(trim(value)),
            at,
            value_at: at + 1,
            binary: false,
        };
        Ok(true)
    }

    /// The usual code line, parsed while it is scanned: blanks, up to 9 digits, blanks, a
    /// line end. `None` (nothing consumed) for anything else, which the slow path decides.
    #[inline(always)]
    fn code_line_fast(&mut self) -> Option<i32> {
        let buf = self.buf;
        let mut i = self.pos;
        while buf.get(i) == Some(&b' ') {
            i += 1;
        }
        let digits = i;
        let mut code: i32 = 0;
        while let Some(&b) = buf.get(i) {
            let d = b.wrapping_sub(b'0');
            if d > 9 {
                break;
            }
            code = code.wrapping_mul(10).wrapping_add(i32::from(d));
            i += 1;
        }
        if i == digits || i - digits > 9 {
            return None;
        }
        while buf.get(i) == Some(&b' ') {
            i += 1;
        }
        i += match (buf.get(i), buf.get(i + 1)) {
            (Some(b'\n'), _) => 1,
            (Some(b'\r'), Some(b'\n')) => 2,
            (Some(b'\r'), _) => 1,
            _ => return None,
        };
        self.pos = i;
        self.line += 1;
        Some(code)
    }

    /// Any other code line: signs, tabs, a last line without a line end, blank lines at the
    /// end of the file, and the errors. `Ok(None)` at the end of the input.
    #[cold]
    fn code_line_slow(&mut self) -> Result<Option<i32>, ImportError> {
        let Some(raw) = self.take_line() else {
            return Ok(None);
        };
        let at = self.line;
        let code_text = trim(raw);
        if code_text.is_empty() {
            // A blank line (or a DOS end-of-file mark) with nothing but blanks after it ends
            // the input; anywhere else a group code is missing.
            if self
                .buf
                .get(self.pos..)
                .is_none_or(|r| r.iter().all(|&b| is_blank(b)))
            {
                self.pos = self.buf.len();
                return Ok(None);
            }
            return Err(ImportError::new(
                Some(Location::Line(at)),
                ImportErrorKind::Malformed("expected a group code, found an empty line".into()),
            ));
        }
        match parse_code(code_text) {
            Some(code) => Ok(Some(code)),
            None => {
                let msg = format!(
                    "expected a group code (an integer), found '{}'",
                    shown_text(code_text)
                );
                let kind = if self.pairs_read == 1 {
                    ImportErrorKind::NotDxf(msg)
                } else {
                    ImportErrorKind::Malformed(msg)
                };
                Err(ImportError::new(Some(Location::Line(at)), kind))
            }
        }
    }

    #[cold]
    fn missing_value(&self, code: i32, at: u64) -> ImportError {
        ImportError::new(
            Some(Location::Line(at)),
            ImportErrorKind::Truncated(format!(
                "the file ends after group code {code}, before its value"
            )),
        )
    }

    fn next_binary(&mut self) -> Result<bool, ImportError> {
        let at = self.pos;
        let Some(&first) = self.buf.get(at) else {
            return Ok(false);
        };
        let (code, code_len) = match self.mode {
            Mode::Binary1 if first != 255 => (i32::from(first), 1),
            Mode::Binary1 => (i32::from(self.u16_at(at + 1, 255)?), 3),
            _ => (i32::from(self.u16_at(at, -1)?), 2),
        };
        let value_at = at + code_len;
        let truncated = |what: &str| {
            ImportError::new(
                Some(Location::Byte(value_at as u64)),
                ImportErrorKind::Truncated(format!(
                    "the file ends inside the {what} value of group code {code}"
                )),
            )
        };
        let fixed = |n: usize| -> Result<&'a [u8], ImportError> {
            self.buf
                .get(value_at..value_at + n)
                .ok_or_else(|| truncated("binary"))
        };
        let (value, len) = match binary_kind(code) {
            Kind::Str => {
                let rest = self.buf.get(value_at..).unwrap_or(&[]);
                let Some(n) = rest.iter().position(|&b| b == 0) else {
                    return Err(truncated("string (no terminating NUL)"));
                };
                (Value::Text(&rest[..n]), n + 1)
            }
            Kind::Real => (Value::Real(f64::from_le_bytes(array(fixed(8)?))), 8),
            Kind::I16 => (Value::Int(i16::from_le_bytes(array(fixed(2)?)).into()), 2),
            Kind::I32 => (Value::Int(i32::from_le_bytes(array(fixed(4)?)).into()), 4),
            Kind::I64 => (Value::Int(i64::from_le_bytes(array(fixed(8)?))), 8),
            Kind::Bool => (Value::Int(fixed(1)?[0].into()), 1), // fixed(1) has one byte
            Kind::Chunk => {
                let n = usize::from(fixed(1)?[0]); // fixed(1) has one byte
                let data = self
                    .buf
                    .get(value_at + 1..value_at + 1 + n)
                    .ok_or_else(|| truncated("binary chunk"))?;
                (Value::Bytes(data), n + 1)
            }
        };
        self.pos = value_at + len;
        self.cur = Pair {
            code,
            value,
            at: at as u64,
            value_at: value_at as u64,
            binary: true,
        };
        Ok(true)
    }

    fn u16_at(&self, at: usize, after: i32) -> Result<u16, ImportError> {
        match self.buf.get(at..at + 2) {
            Some(b) => Ok(u16::from_le_bytes(array(b))),
            None => Err(ImportError::new(
                Some(Location::Byte(at as u64)),
                ImportErrorKind::Truncated(if after == 255 {
                    "the file ends inside an escaped 2-byte group code".to_owned()
                } else {
                    "the file ends inside a group code".to_owned()
                }),
            )),
        }
    }
}

/// Index of the first LF or CR in `s`, or `s.len()` when there is none.
///
/// Eight bytes at a time while no byte of the word is below 14 (CR + 1): a word w has such a
/// byte exactly when (w − 0x0E0E…0E) & !w & 0x8080…80 is non-zero ("determine if a word has a
/// byte less than n", Sean Eron Anderson, Bit Twiddling Hacks; common practice). Tabs also
/// stop the word scan; the byte scan after it decides.
#[inline]
fn line_end(s: &[u8]) -> usize {
    const ONES: u64 = 0x0101_0101_0101_0101;
    const HIGH: u64 = 0x8080_8080_8080_8080;
    let mut i = 0;
    while let Some(chunk) = s.get(i..i + 8) {
        let w = u64::from_le_bytes(array(chunk));
        if w.wrapping_sub(ONES * 14) & !w & HIGH != 0 {
            break;
        }
        i += 8;
    }
    while let Some(&b) = s.get(i) {
        if b == b'\n' || b == b'\r' {
            return i;
        }
        i += 1;
    }
    s.len()
}

/// Copy a slice of known length into an array (the callers slice exactly `N` bytes).
fn array<const N: usize>(b: &[u8]) -> [u8; N] {
    let mut a = [0u8; N];
    a.copy_from_slice(&b[..N]);
    a
}

/// How a value is stored in a binary file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Kind {
    Str,
    Real,
    I16,
    I32,
    I64,
    Bool,
    Chunk,
}

/// The storage of a group code's value in binary DXF, by code range (DXF reference, "Group
/// Code Value Types"; binary chunks carry a 1-byte length, booleans one byte, per "Binary DXF
/// Files"; from memory). Codes the table leaves out are read as strings (common practice).
pub(crate) fn binary_kind(code: i32) -> Kind {
    match code {
        0..=9 => Kind::Str,
        10..=59 => Kind::Real,
        60..=79 => Kind::I16,
        90..=99 => Kind::I32,
        100..=109 => Kind::Str,
        110..=149 => Kind::Real,
        160..=169 => Kind::I64,
        170..=179 => Kind::I16,
        210..=239 => Kind::Real,
        270..=289 => Kind::I16,
        290..=299 => Kind::Bool,
        300..=309 => Kind::Str,
        310..=319 => Kind::Chunk,
        320..=369 => Kind::Str,
        370..=389 => Kind::I16,
        390..=399 => Kind::Str,
        400..=409 => Kind::I16,
        410..=419 => Kind::Str,
        420..=429 => Kind::I32,
        430..=439 => Kind::Str,
        440..=459 => Kind::I32,
        460..=469 => Kind::Real,
        470..=481 => Kind::Str,
        999 => Kind::Str,
        1000..=1003 => Kind::Str,
        1004 => Kind::Chunk,
        1005..=1009 => Kind::Str,
        1010..=1059 => Kind::Real,
        1060..=1070 => Kind::I16,
        1071 => Kind::I32,
        _ => Kind::Str,
    }
}

/// Blank for the purpose of ending a file: ASCII white space, NUL and the DOS end-of-file
/// mark (Ctrl-Z), which old writers append.
fn is_blank(b: u8) -> bool {
    b.is_ascii_whitespace() || b == 0 || b == 0x1a
}

/// The slice without leading and trailing spaces, tabs and other ASCII white space.
#[inline]
pub(crate) fn trim(s: &[u8]) -> &[u8] {
    s.trim_ascii()
}

/// A group code: an optional minus sign and up to 9 digits.
#[inline]
fn parse_code(s: &[u8]) -> Option<i32> {
    let (neg, digits) = match s {
        [b'-', rest @ ..] => (true, rest),
        _ => (false, s),
    };
    if digits.is_empty() || digits.len() > 9 {
        return None;
    }
    let mut v: i32 = 0;
    for &b in digits {
        let d = b.wrapping_sub(b'0');
        if d > 9 {
            return None;
        }
        v = v * 10 + i32::from(d); // at most 9 digits: no overflow
    }
    Some(if neg { -v } else { v })
}

/// A decimal integer with an optional sign; `None` on overflow or other characters.
pub(crate) fn parse_i64(s: &[u8]) -> Option<i64> {
    let (neg, digits) = match s {
        [b'-', rest @ ..] => (true, rest),
        [b'+', rest @ ..] => (false, rest),
        _ => (false, s),
    };
    if digits.is_empty() {
        return None;
    }
    let mut v: i64 = 0;
    for &b in digits {
        let d = b.wrapping_sub(b'0');
        if d > 9 {
            return None;
        }
        v = v.checked_mul(10)?.checked_sub(i64::from(d))?; // accumulate negatively: i64::MIN fits
    }
    if neg {
        Some(v)
    } else {
        v.checked_neg()
    }
}

/// Append the decimal digits of `s` from `i` on to `mant` (wrapping: callers reject more than
/// 19 digits); returns the index after the last digit.
#[inline]
fn digit_run(s: &[u8], mut i: usize, mant: &mut u64) -> usize {
    while let Some(v) = eight_digits(s, i) {
        *mant = mant.wrapping_mul(100_000_000).wrapping_add(v);
        i += 8;
    }
    while let Some(&b) = s.get(i) {
        let d = b.wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        *mant = mant.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    i
}

/// The value of the eight bytes at `i` when all are decimal digits.
///
/// The digit test and the three multiplications that combine 8 digits in a 64-bit word are
/// from D. Lemire, "Number Parsing at a Gigabyte per Second", Software: Practice and
/// Experience 51 (2021), section 5 (common practice since).
#[inline]
fn eight_digits(s: &[u8], i: usize) -> Option<u64> {
    const HIGH_NIBBLES: u64 = 0xF0F0_F0F0_F0F0_F0F0;
    let v = u64::from_le_bytes(array(s.get(i..i + 8)?));
    let all_digits =
        (v & HIGH_NIBBLES) | ((v.wrapping_add(0x0606_0606_0606_0606) & HIGH_NIBBLES) >> 4);
    if all_digits != 0x3333_3333_3333_3333 {
        return None;
    }
    // Each byte now 0..=9, the first character in the lowest byte.
    let v = v.wrapping_sub(0x3030_3030_3030_3030);
    // Even bytes hold two-digit numbers 10·d(k) + d(k+1).
    let v = v.wrapping_mul(10).wrapping_add(v >> 8);
    let v1 = (v & 0x0000_00FF_0000_00FF).wrapping_mul(100 + (1_000_000 << 32));
    let v2 = ((v >> 16) & 0x0000_00FF_0000_00FF).wrapping_mul(1 + (10_000 << 32));
    Some(u64::from((v1.wrapping_add(v2) >> 32) as u32))
}

/// Powers of ten that are exact doubles (10^22 is the largest, as 5^22 < 2^53).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// A decimal number as the standard library reads it (`1`, `-2.5`, `.5`, `1e300`, `inf`,
/// `NaN`), correctly rounded.
///
/// Fast path: when the digits form an integer m ≤ 2^53 and the decimal exponent e satisfies
/// |e| ≤ 22, both m and 10^|e| are exact doubles, so one multiplication or division gives the
/// correctly rounded result (Clinger, "How to Read Floating Point Numbers Accurately", PLDI
/// 1990, the "fast path"). That covers nearly every number CAD programs write; anything else
/// goes to `str::parse`.
#[inline(always)]
pub(crate) fn parse_f64(s: &[u8]) -> Option<f64> {
    fast_f64(s).or_else(|| std::str::from_utf8(s).ok()?.parse().ok())
}

#[inline(always)]
fn fast_f64(s: &[u8]) -> Option<f64> {
    let (neg, s) = match s {
        [b'-', rest @ ..] => (true, rest),
        [b'+', rest @ ..] => (false, rest),
        _ => (false, s),
    };
    // Up to 19 digits fit a u64 (10^19 < 2^64); more go to the slow path, so the wrapping
    // arithmetic below never wraps in a result that is used.
    let mut mant: u64 = 0;
    let mut i = digit_run(s, 0, &mut mant);
    let mut n_digits = i;
    let mut exp: i32 = 0;
    if s.get(i) == Some(&b'.') {
        let frac_start = i + 1;
        i = digit_run(s, frac_start, &mut mant);
        let n_frac = i - frac_start;
        n_digits += n_frac;
        exp = -(n_frac.min(1000) as i32);
    }
    if n_digits == 0 || n_digits > 19 {
        return None;
    }
    if let Some(b'e' | b'E') = s.get(i) {
        i += 1;
        let (eneg, mut j) = match s.get(i) {
            Some(b'-') => (true, i + 1),
            Some(b'+') => (false, i + 1),
            _ => (false, i),
        };
        let start = j;
        let mut e: i32 = 0;
        while let Some(&b) = s.get(j) {
            let d = b.wrapping_sub(b'0');
            if d > 9 || e > 10_000 {
                break;
            }
            e = e * 10 + i32::from(d);
            j += 1;
        }
        if j == start {
            return None;
        }
        exp += if eneg { -e } else { e };
        i = j;
    }
    if i != s.len() {
        return None;
    }
    let v = if mant <= 1u64 << 53 {
        let m = mant as f64; // exact: mant <= 2^53
        match exp {
            0..=22 => m * POW10[exp as usize],
            -22..=-1 => m / POW10[(-exp) as usize],
            _ if mant == 0 => 0.0,
            _ => return None,
        }
    } else if (-22..=22).contains(&exp) {
        wide_f64(mant, exp)
    } else {
        return None;
    };
    Some(if neg { -v } else { v })
}

/// m·10^e correctly rounded, for 2^53 < m < 2^64 and |e| <= 22 (17 to 19 significant digits,
/// as shortest round-trip output often has).
///
/// 10^e = 5^e·2^e with 5^22 < 2^52, so the work is exact integer arithmetic on u128 and one
/// rounding: for e >= 0 the product m·5^e (< 2^116) is rounded by the u128 → f64 conversion;
/// for e < 0 the quotient q = ⌊m·2^64 / 5^k⌋ has at least 65 bits, so its lowest bit lies
/// below the rounding position and can carry the "remainder non-zero" sticky bit before the
/// conversion rounds (round-to-nearest-even with guard and sticky bits; common practice). The
/// power-of-two scaling after it is exact, as the result stays a normal double.
#[inline]
fn wide_f64(m: u64, e: i32) -> f64 {
    let pow2 = |n: i32| f64::from_bits(((1023 + n) as u64) << 52); // 2^n, n in -86..=22
    if e >= 0 {
        let p = u128::from(m) * u128::from(POW5[e as usize]);
        p as f64 * pow2(e)
    } else {
        let k = (-e) as usize;
        let n = u128::from(m) << 64;
        let d = u128::from(POW5[k]);
        let q = (n / d) | u128::from(n % d != 0);
        q as f64 * pow2(-64 - k as i32)
    }
}

/// 5^0 ..= 5^22.
const POW5: [u64; 23] = {
    let mut t = [1u64; 23];
    let mut i = 1;
    while i < 23 {
        t[i] = t[i - 1] * 5;
        i += 1;
    }
    t
};

#[cfg(test)]
mod tests {
    use super::*;

    fn all(bytes: &[u8]) -> Vec<(i32, Value<'_>, u64)> {
        let mut p = Pairs::new(bytes).expect("starts");
        let mut out = vec![];
        while let Some(pair) = p.next().expect("reads") {
            out.push((pair.code, pair.value, pair.at));
        }
        out
    }

    #[test]
    fn line_endings_and_padding() {
        let want = vec![
            (0, Value::Text(b"SECTION"), 1),
            (2, Value::Text(b"ENTITIES"), 3),
        ];
        assert_eq!(all(b"0\nSECTION\n2\nENTITIES\n"), want);
        assert_eq!(all(b"  0\r\nSECTION\r\n  2\r\nENTITIES\r\n"), want);
        assert_eq!(all(b"0\rSECTION\r2\rENTITIES"), want);
        assert_eq!(all(b" 0 \n SECTION\t\n\t2\nENTITIES  \n\n\x1a\n"), want);
        // Mixed endings in one file.
        assert_eq!(all(b"0\r\nSECTION\n2\rENTITIES\r\n"), want);
    }

    #[test]
    fn empty_value_line_is_a_value() {
        let got = all(b"1\n\n0\nEOF\n");
        assert_eq!(got[0], (1, Value::Text(b""), 1));
        assert_eq!(got[1], (0, Value::Text(b"EOF"), 3));
    }

    #[test]
    fn code_errors() {
        let mut p = Pairs::new(b"hello\nworld\n").unwrap();
        let e = p.next().unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::NotDxf(_)), "{e}");
        assert_eq!(e.location, Some(Location::Line(1)));

        let mut p = Pairs::new(b"0\nSECTION\nx1\nfoo\n").unwrap();
        p.next().unwrap();
        let e = p.next().unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::Malformed(_)), "{e}");
        assert_eq!(e.location, Some(Location::Line(3)));

        let mut p = Pairs::new(b"0\nSECTION\n2\n").unwrap();
        p.next().unwrap();
        let e = p.next().unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::Truncated(_)), "{e}");

        let mut p = Pairs::new(b"0\nSECTION\n\n2\nX\n").unwrap();
        p.next().unwrap();
        let e = p.next().unwrap_err();
        assert_eq!(e.location, Some(Location::Line(3)));

        assert_eq!(
            Pairs::new(b"").err().map(|e| e.kind),
            Some(ImportErrorKind::Empty)
        );
        assert_eq!(
            Pairs::new(b" \r\n\n").err().map(|e| e.kind),
            Some(ImportErrorKind::Empty)
        );
    }

    #[test]
    fn numbers() {
        for s in [
            "0",
            "-0",
            "1",
            "-2.5",
            ".5",
            "5.",
            "+3",
            "1e300",
            "1E-5",
            "347.5909732684974",
            "0.30000000000000004",
            "123456789012345678901234567890",
            "1e-400",
            "-1.5e+22",
            "9007199254740993",
            "4.9e-324",
            "2.2250738585072014e-308",
            "0.000000",
            "inf",
            "-Infinity",
            "1e23",
            "123.456e-30",
        ] {
            let want: f64 = s.parse().unwrap();
            let got = parse_f64(s.as_bytes()).unwrap();
            assert!(
                got.to_bits() == want.to_bits(),
                "{s}: got {got:e}, want {want:e}"
            );
        }
        assert!(parse_f64(b"NaN").unwrap().is_nan());
        for s in [
            "", "-", ".", "1,5", "1.5.2", "e5", "1e", "1e+", "0x10", "1 2", "--1",
        ] {
            assert_eq!(parse_f64(s.as_bytes()), None, "{s}");
        }
        assert_eq!(parse_i64(b"-9223372036854775808"), Some(i64::MIN));
        assert_eq!(parse_i64(b"9223372036854775808"), None);
        assert_eq!(parse_i64(b"+17"), Some(17));
        assert_eq!(parse_code(b"1071"), Some(1071));
        assert_eq!(parse_code(b"-3"), Some(-3));
        assert_eq!(parse_code(b"1.0"), None);
        assert_eq!(parse_code(b"1234567890"), None);
    }

    #[test]
    fn eight_digit_words() {
        assert_eq!(eight_digits(b"12345678", 0), Some(12_345_678));
        assert_eq!(eight_digits(b"x00000009", 1), Some(9));
        assert_eq!(eight_digits(b"99999999", 0), Some(99_999_999));
        assert_eq!(eight_digits(b"1234567", 0), None);
        for bad in [
            b"1234567.",
            b"/2345678",
            b"123:5678",
            b"12 45678",
            b"\x001234567",
        ] {
            assert_eq!(eight_digits(bad, 0), None, "{bad:?}");
        }
        for n in (0..100_000_000u64).step_by(9_973) {
            assert_eq!(eight_digits(format!("{n:08}").as_bytes(), 0), Some(n));
        }
    }

    #[test]
    fn numbers_random_round_trip() {
        // Shortest round-trip text of random doubles must read back bit for bit.
        let mut x: u64 = 0x9e37_79b9_7f4a_7c15;
        for _ in 0..20_000 {
            // xorshift64 (Marsaglia 2003), a fixed seed: deterministic test data.
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let v = f64::from_bits(x);
            if !v.is_finite() {
                continue;
            }
            for s in [
                format!("{v}"),
                format!("{v:e}"),
                format!("{:.6}", v / 1e300),
            ] {
                let want: f64 = s.parse().unwrap();
                assert_eq!(
                    parse_f64(s.as_bytes()).map(f64::to_bits),
                    Some(want.to_bits()),
                    "{s}"
                );
            }
        }
    }

    #[test]
    fn numbers_with_17_to_19_digits() {
        // The u128 path against the standard library's correctly rounded parser, on random
        // mantissas of 16 to 19 digits with the point anywhere and exponents up to ±22.
        let mut x: u64 = 0x2545_f491_4f6c_dd1d;
        let mut next = || {
            // xorshift64 (Marsaglia 2003), fixed seed.
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for _ in 0..100_000 {
            let n_digits = 16 + (next() % 4) as usize;
            let digits: String = (0..n_digits)
                .map(|_| char::from(b'0' + (next() % 10) as u8))
                .collect();
            let point = (next() % (n_digits as u64 + 1)) as usize;
            let e = (next() % 31) as i32 - 15;
            let s = format!("{}.{}e{e}", &digits[..point], &digits[point..]);
            let want: f64 = s.parse().unwrap();
            assert_eq!(
                parse_f64(s.as_bytes()).map(f64::to_bits),
                Some(want.to_bits()),
                "{s}"
            );
        }
        // Halfway cases: 2^53 + 1 and 2^54 + 2 lie midway between two doubles (ties to even).
        for s in [
            "9007199254740993",
            "18014398509481986",
            "9007199254740993e-5",
            "1.8014398509481986e3",
        ] {
            let want: f64 = s.parse().unwrap();
            assert_eq!(
                parse_f64(s.as_bytes()).map(f64::to_bits),
                Some(want.to_bits()),
                "{s}"
            );
        }
    }

    #[test]
    fn int_values() {
        let pair = |t: &'static [u8]| Pair {
            code: 70,
            value: Value::Text(t),
            at: 5,
            value_at: 6,
            binary: false,
        };
        assert_eq!(pair(b"17").int(), Ok(17));
        assert_eq!(pair(b"1.0").int(), Ok(1));
        let e = pair(b"1.5").int().unwrap_err();
        assert_eq!(e.location, Some(Location::Line(6)));
        let e = pair(b"0,5").real().unwrap_err();
        let msg = e.to_string();
        assert!(
            msg.contains("group code 70") && msg.contains("'0,5'"),
            "{msg}"
        );
        assert!(msg.contains("decimal comma"), "{msg}");
    }

    #[test]
    fn binary_pairs() {
        // 2-byte codes: 0/SECTION, 10/1.5, 70/-2, 290/true, 310/[1,2], 90/7.
        let mut b = BINARY_SENTINEL.to_vec();
        b.extend_from_slice(&[0, 0]);
        b.extend_from_slice(b"SECTION\0");
        b.extend_from_slice(&10u16.to_le_bytes());
        b.extend_from_slice(&1.5f64.to_le_bytes());
        b.extend_from_slice(&70u16.to_le_bytes());
        b.extend_from_slice(&(-2i16).to_le_bytes());
        b.extend_from_slice(&290u16.to_le_bytes());
        b.push(1);
        b.extend_from_slice(&310u16.to_le_bytes());
        b.extend_from_slice(&[2, 1, 2]);
        b.extend_from_slice(&90u16.to_le_bytes());
        b.extend_from_slice(&7i32.to_le_bytes());
        let got = all(&b);
        assert_eq!(
            got.iter().map(|g| (g.0, g.1)).collect::<Vec<_>>(),
            vec![
                (0, Value::Text(b"SECTION")),
                (10, Value::Real(1.5)),
                (70, Value::Int(-2)),
                (290, Value::Int(1)),
                (310, Value::Bytes(&[1, 2])),
                (90, Value::Int(7)),
            ]
        );
        assert_eq!(got[0].2, 22);
        assert_eq!(got[1].2, 32);

        // Every cut of it is an error, never a panic.
        for n in BINARY_SENTINEL.len() + 1..b.len() {
            let mut p = Pairs::new(&b[..n]).unwrap();
            let mut res = Ok(());
            loop {
                match p.next() {
                    Ok(Some(_)) => {}
                    Ok(None) => break,
                    Err(e) => {
                        res = Err(e);
                        break;
                    }
                }
            }
            // Cuts on a pair boundary end cleanly; the others are truncated values.
            if let Err(e) = res {
                assert!(matches!(e.kind, ImportErrorKind::Truncated(_)), "{e}");
            }
        }
    }

    #[test]
    fn binary_one_byte_codes() {
        // R12 style: 1-byte codes, 255 escapes a 2-byte code (here 1071).
        let mut b = BINARY_SENTINEL.to_vec();
        b.push(0);
        b.extend_from_slice(b"SECTION\0");
        b.push(40);
        b.extend_from_slice(&2.0f64.to_le_bytes());
        b.push(255);
        b.extend_from_slice(&1071u16.to_le_bytes());
        b.extend_from_slice(&123_456i32.to_le_bytes());
        let got = all(&b);
        assert_eq!(
            got.iter().map(|g| (g.0, g.1)).collect::<Vec<_>>(),
            vec![
                (0, Value::Text(b"SECTION")),
                (40, Value::Real(2.0)),
                (1071, Value::Int(123_456)),
            ]
        );
    }

    #[test]
    fn binary_kinds_follow_the_reference_table() {
        // DXF reference, "Group Code Value Types" (spot checks, from the table's ranges).
        assert_eq!(binary_kind(8), Kind::Str);
        assert_eq!(binary_kind(38), Kind::Real);
        assert_eq!(binary_kind(62), Kind::I16);
        assert_eq!(binary_kind(90), Kind::I32);
        assert_eq!(binary_kind(100), Kind::Str);
        assert_eq!(binary_kind(105), Kind::Str);
        assert_eq!(binary_kind(142), Kind::Real);
        assert_eq!(binary_kind(160), Kind::I64);
        assert_eq!(binary_kind(230), Kind::Real);
        assert_eq!(binary_kind(281), Kind::I16);
        assert_eq!(binary_kind(290), Kind::Bool);
        assert_eq!(binary_kind(310), Kind::Chunk);
        assert_eq!(binary_kind(330), Kind::Str);
        assert_eq!(binary_kind(370), Kind::I16);
        assert_eq!(binary_kind(390), Kind::Str);
        assert_eq!(binary_kind(420), Kind::I32);
        assert_eq!(binary_kind(450), Kind::I32);
        assert_eq!(binary_kind(462), Kind::Real);
        assert_eq!(binary_kind(999), Kind::Str);
        assert_eq!(binary_kind(1004), Kind::Chunk);
        assert_eq!(binary_kind(1040), Kind::Real);
        assert_eq!(binary_kind(1070), Kind::I16);
        assert_eq!(binary_kind(1071), Kind::I32);
    }
}
