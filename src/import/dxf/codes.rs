//! Group-code pairs: the tokenizer under the DXF reader.
//!
//! A DXF file is a flat sequence of (group code, value) pairs. [`Pairs`] walks that sequence
//! over the file's bytes without copying: every [`Pair`] borrows its value from the input, and
//! numbers in ASCII files are parsed only when the caller asks for them ([`Pair::real`],
//! [`Pair::int`]), so pairs the reader does not need cost one line split each.
//!
//! Speed: the usual ASCII pair (a three-character code line and a short value line) is read
//! from one 32-byte window with word-at-a-time byte tests ([`Pairs::pair_fast`]); anything
//! else takes the general path. Numbers go the same way: the usual short decimal is read a
//! word at a time and converted with the Eisel–Lemire method ([`parse_f64_in`]).
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
    /// without its NUL terminator. The text is `rest[..len]`, where `rest` runs on to the end
    /// of the file, so that [`parse_f64_in`] can read numbers a word at a time.
    Text { rest: &'a [u8], len: usize },
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
            // Both makers of `Text` (`text_value`, `Pairs::pair_fast`) keep len <= rest.len().
            Value::Text { rest, len } => &rest[..len],
            Value::Bytes(t) => t,
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
            Value::Text { rest, len } => {
                parse_f64_in(rest, len).ok_or_else(|| self.bad_value("a number"))
            }
            Value::Bytes(_) => Err(self.bad_value("a number")),
        }
    }

    /// The value as an integer. ASCII values written as an integral decimal (`1.0`) are
    /// accepted, as some writers put them that way; `1.5` is not.
    pub fn int(&self) -> Result<i64, ImportError> {
        match self.value {
            Value::Int(v) => Ok(v),
            Value::Real(v) => integral(v).ok_or_else(|| self.bad_value("an integer")),
            Value::Text { rest, len } => parse_i64(self.text())
                .or_else(|| parse_f64_in(rest, len).and_then(integral))
                .ok_or_else(|| self.bad_value("an integer")),
            Value::Bytes(_) => Err(self.bad_value("an integer")),
        }
    }

    #[cold]
    fn bad_value(&self, expected: &str) -> ImportError {
        let shown = match self.value {
            Value::Text { .. } => format!("'{}'", shown_text(self.text())),
            Value::Real(v) => format!("{v}"),
            Value::Int(v) => format!("{v}"),
            Value::Bytes(b) => format!("{} bytes of binary data", b.len()),
        };
        let hint = match self.value {
            Value::Text { .. } if self.text().contains(&b',') => " (decimal comma?)",
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
#[derive(Clone)]
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
                value: text_value(b"", 0, 0),
                at: 0,
                value_at: 0,
                binary: false,
            },
            replay: false,
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

    /// Bytes not read yet.
    pub fn bytes_left(&self) -> usize {
        self.buf.len().saturating_sub(self.pos)
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

    /// The next line (without its line ending) as a range of `buf`, `None` at the end of
    /// the input.
    #[inline(always)]
    fn take_line(&mut self) -> Option<std::ops::Range<usize>> {
        let start = self.pos;
        let rest = self.buf.get(start..)?;
        if rest.is_empty() {
            return None;
        }
        let len = line_end(rest); // at most rest.len()
        let ending = match rest.get(len..len + 2) {
            Some(b"\r\n") => 2,
            _ if len < rest.len() => 1,
            _ => 0,
        };
        self.pos = start + len + ending;
        self.line += 1;
        Some(start..start + len)
    }

    #[inline(always)]
    fn next_ascii(&mut self) -> Result<bool, ImportError> {
        if self.pair_fast().is_some() {
            return Ok(true);
        }
        self.next_ascii_general()
    }

    /// Any pair: the code line (fast or slow path), then the value line. Kept out of line,
    /// so that the entity readers, which inline [`Pairs::advance`], stay small.
    #[inline(never)]
    fn next_ascii_general(&mut self) -> Result<bool, ImportError> {
        let code = match self.code_line_fast() {
            Some(code) => code,
            None => match self.code_line_slow()? {
                Some(code) => code,
                None => return Ok(false),
            },
        };
        let at = self.line;
        let Some(line) = self.take_line() else {
            return Err(self.missing_value(code, at));
        };
        let (start, len) = trimmed(self.buf, line);
        self.cur = Pair {
            code,
            value: text_value(self.buf, start, len),
            at,
            value_at: at + 1,
            binary: false,
        };
        Ok(true)
    }

    /// The usual pair, read from one window of 32 bytes: a code line of three characters
    /// (the right-aligned `  0`, ` 10`, `100` of nearly every writer) and a value line of at
    /// most 23 characters without spaces, each ending in LF or CR LF. `None` (nothing
    /// consumed) for anything else, which the general path reads.
    ///
    /// The value line ends at its first byte below 33, found eight bytes at a time as in
    /// [`line_end`]; that byte must be the line end. The line then holds no blank at all,
    /// so trimming leaves it as it is.
    #[inline(always)]
    fn pair_fast(&mut self) -> Option<()> {
        let pos = self.pos;
        let rest = self.buf.get(pos..)?;
        let window: &[u8; 32] = rest.first_chunk()?;
        let value_start = match window[3] {
            b'\n' => 4,
            b'\r' if window[4] == b'\n' => 5,
            _ => return None,
        };
        let code = code3(window[0], window[1], window[2])?;
        // The value line: its first byte below 33 (a space or a control character) in the
        // next three words, which must be its line end.
        let word = |i: usize| u64::from_le_bytes(array(&window[i..i + 8]));
        let below_33 = |w: u64| w.wrapping_sub(bytes(33)) & !w & bytes(0x80);
        let mut len = 0;
        let mut ends = below_33(word(value_start));
        while ends == 0 {
            len += 8;
            if len == 24 {
                return None;
            }
            ends = below_33(word(value_start + len));
        }
        len += (ends.trailing_zeros() / 8) as usize;
        let end = value_start + len; // at most 5 + 23, so end + 1 < 32
        let after = match (window[end], window[end + 1]) {
            (b'\n', _) => 1,
            (b'\r', b'\n') => 2,
            _ => return None,
        };
        let at = self.line + 1;
        self.line += 2;
        self.pos = pos + end + after;
        self.cur = Pair {
            code,
            // value_start + len = end < 32 <= rest.len()
            value: Value::Text {
                rest: &rest[value_start..],
                len,
            },
            at,
            value_at: at + 1,
            binary: false,
        };
        Some(())
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
        let Some(line) = self.take_line() else {
            return Ok(None);
        };
        let at = self.line;
        let code_text = trim(self.buf.get(line).unwrap_or_default());
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
                // The first pair's code is on line 1 (a byte-order mark is no line).
                let kind = if at == 1 {
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
                (text_value(rest, 0, n), n + 1)
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
/// Eight bytes at a time: a word w has a byte below 14 (CR + 1) exactly when
/// (w − 0x0E0E…0E) & !w & 0x8080…80 is non-zero, and the lowest byte so marked is the first
/// such byte ("determine if a word has a byte less than n", Sean Eron Anderson, Bit
/// Twiddling Hacks; common practice). That byte is nearly always the line end; a tab or
/// another control character before it continues the search after it.
#[inline(always)]
fn line_end(s: &[u8]) -> usize {
    let mut i = 0;
    while let Some(w) = word_at(s, i) {
        let low = w.wrapping_sub(bytes(14)) & !w & bytes(0x80);
        if low != 0 {
            let k = (low.trailing_zeros() / 8) as usize;
            if let b'\n' | b'\r' = (w >> (8 * k)) as u8 {
                return i + k;
            }
            i += k + 1;
        } else {
            i += 8;
        }
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

/// [`trim`] of `buf[line]`, as its start and length in `buf`.
#[inline(always)]
fn trimmed(buf: &[u8], line: std::ops::Range<usize>) -> (usize, usize) {
    let (mut start, mut end) = (line.start, line.end);
    while start < end && buf.get(start).is_some_and(u8::is_ascii_whitespace) {
        start += 1;
    }
    while end > start && buf.get(end - 1).is_some_and(u8::is_ascii_whitespace) {
        end -= 1;
    }
    (start, end - start)
}

/// The text `buf[start..start + len]` as a [`Value::Text`]. Positions outside `buf` give a
/// shorter or empty text (callers pass positions inside `buf`).
#[inline(always)]
fn text_value(buf: &[u8], start: usize, len: usize) -> Value<'_> {
    let rest = buf.get(start..).unwrap_or_default();
    let len = len.min(rest.len());
    Value::Text { rest, len }
}

/// A right-aligned code line of three characters (`  0`, ` 10`, `100`): leading spaces,
/// then digits. Spaces and digits both read as their low four bits (a space as 0).
#[inline(always)]
fn code3(c0: u8, c1: u8, c2: u8) -> Option<i32> {
    let digit = |c: u8| c.is_ascii_digit();
    let valid = digit(c2) && (digit(c1) || (c1 == b' ' && c0 == b' ')) && (digit(c0) || c0 == b' ');
    let v = |c: u8| i32::from(c & 0x0F);
    valid.then(|| v(c0) * 100 + v(c1) * 10 + v(c2))
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

/// A decimal number as the standard library reads it (`1`, `-2.5`, `.5`, `1e300`, `inf`,
/// `NaN`), correctly rounded, from the text `rest[..len]`. The byte after the text (if any)
/// must be no part of a number: a blank, a line end or a NUL, as after every
/// [`Value::Text`]; the fast paths read on into `rest` a word at a time and still stop where
/// the text ends.
///
/// Three ways, each giving what `str::parse` gives, bit for bit:
/// - [`short_decimal`]: the usual `[-]digits[.digits]` of CAD output, up to 19 digits;
/// - [`scan_f64`]: other texts of up to 19 significant digits, exponents included;
/// - `str::parse` for the rest (longer mantissas, exponents beyond [`eisel_lemire`]'s table,
///   `inf`, `NaN`, and text that is no number at all).
///
/// Kept out of line: [`Pair::real`] is inlined wherever the entity readers read a number,
/// and one shared copy of the parser keeps those loops small.
#[inline(never)]
fn parse_f64_in(rest: &[u8], len: usize) -> Option<f64> {
    match short_decimal(rest, len) {
        Some(v) => Some(v),
        None => parse_f64_general(rest, len),
    }
}

/// [`parse_f64_in`] for the texts that are not short decimals, kept apart so that the short
/// path stays lean.
#[cold]
#[inline(never)]
fn parse_f64_general(rest: &[u8], len: usize) -> Option<f64> {
    match scan_f64(rest) {
        Some((v, n)) if n == len => Some(v),
        _ => std::str::from_utf8(rest.get(..len)?).ok()?.parse().ok(),
    }
}

/// The usual short decimal `rest[..len]`: an optional minus sign, then up to 19 digits
/// with at most 7 before an optional point (an integer has at most 7 digits); `None` for
/// anything else, and when `rest` has fewer than 32 bytes.
///
/// The text after the sign is taken as three little-endian words. The point is found with a
/// byte test ([`eq_flags`]) and squeezed out by shifting the bytes after it down by one,
/// which leaves the digits as one run; every byte of that run is checked at once
/// ([`non_digit_flags`]). The first 16 digits, padded with zeros to 16, convert as two words
/// ([`eight_digit_value`]); the padding is taken back from the decimal exponent, so that no
/// branch depends on the number's length. Digits 17 to 19 are added as a third,
/// right-aligned word. An integer is read as if its point stood after its last digit.
#[inline(always)]
fn short_decimal(rest: &[u8], len: usize) -> Option<f64> {
    let window: &[u8; 32] = rest.first_chunk()?;
    let neg = window[0] == b'-';
    let start = usize::from(neg);
    let body = len.wrapping_sub(start); // the text after the sign
    if body.wrapping_sub(1) >= 24 {
        return None; // empty or too long (also when len < start)
    }
    let word = |i: usize| u64::from_le_bytes(array(&window[i..i + 8]));
    let (a, b, c) = (word(start), word(start + 8), word(start + 16));
    // The point, if it is in the first word and inside the text.
    let dot_at = (eq_flags(a, b'.').trailing_zeros() / 8) as usize; // 8: none in `a`
    let has_dot = dot_at < body;
    let point = if has_dot { dot_at } else { body };
    let n_digits = body - usize::from(has_dot);
    if point > 7 || n_digits == 0 || n_digits > 19 {
        return None;
    }
    let n_frac = n_digits - point;
    // Squeeze the point out: bytes from `point` on move down by one.
    let below = (1u64 << (8 * point)) - 1; // point <= 7
    let a = (a & below) | ((a >> 8) & !below) | (b << 56);
    let (b, c) = ((b >> 8) | (c << 56), c >> 8);
    // Digits 0..=9 in each byte; the masks keep the first n_digits bytes of the run.
    let (ta, tb, tc) = (a ^ bytes(b'0'), b ^ bytes(b'0'), c ^ bytes(b'0'));
    let low = |k: usize| LOW_BYTES[k.min(8)];
    let (ma, mb, mc) = (
        low(n_digits),
        low(n_digits.saturating_sub(8)),
        low(n_digits.saturating_sub(16)),
    );
    if (non_digit_flags(ta) & ma) | (non_digit_flags(tb) & mb) | (non_digit_flags(tc) & mc) != 0 {
        return None;
    }
    // The first 16 digits, padded with zeros; then digits 17 to 19, right-aligned (a shift
    // by 64 only comes with no such digits, where the masked word is 0 and `% 64` keeps the
    // shift in range).
    let head = eight_digit_value(ta & ma) * 100_000_000 + eight_digit_value(tb & mb);
    let n_tail = n_digits.saturating_sub(16); // 0..=3
    let tail = eight_digit_value((tc & mc) << (8 * (8 - n_tail) as u32 % 64));
    let mant = head * TAIL_SCALE[n_tail] + tail; // < 10^19: no overflow
    let pad = 16usize.saturating_sub(n_digits);
    let v = decimal_to_f64(mant, -((n_frac + pad) as i32))?;
    // The sign bit set without a branch (v >= 0; signs are as likely as not).
    Some(f64::from_bits(v.to_bits() | u64::from(neg) << 63))
}

/// What the first 16 digits are multiplied by to make room for 0 to 3 more (a `static`, read
/// where it lies: a constant array indexed at run time was written to the stack on every
/// call).
static TAIL_SCALE: [u64; 4] = [1, 10, 100, 1000];

/// The low k bytes of a word, k = 0..=8.
const LOW_BYTES: [u64; 9] = {
    let mut t = [0u64; 9];
    let mut k = 1;
    while k <= 8 {
        t[k] = u64::MAX >> (64 - 8 * k);
        k += 1;
    }
    t
};

/// The decimal number at the start of `s` and the length of its text, for the general
/// forms: an optional sign, digits with an optional point, an optional exponent. `None` when
/// `s` does not start that way or the number is beyond [`eisel_lemire`]; `str::parse` then
/// decides, so every value returned here must equal what `str::parse` gives for the same
/// text, bit for bit.
pub(crate) fn scan_f64(s: &[u8]) -> Option<(f64, usize)> {
    let (neg, digits_start) = match s.first() {
        Some(b'-') => (true, 1),
        Some(b'+') => (false, 1),
        _ => (false, 0),
    };
    // Up to 19 significant digits fit a u64 (10^19 < 2^64); more go to `str::parse`, so the
    // wrapping arithmetic of `digit_run` never wraps in a result that is used.
    let mut mant: u64 = 0;
    let mut i = digit_run(s, digits_start, &mut mant);
    let mut n_digits = i - digits_start;
    let mut exp: i32 = 0;
    if s.get(i) == Some(&b'.') {
        let frac_start = i + 1;
        i = digit_run(s, frac_start, &mut mant);
        let n_frac = i - frac_start;
        n_digits += n_frac;
        exp = -(n_frac as i32); // n_frac <= n_digits <= 40 when it is used
    }
    if n_digits == 0 {
        return None;
    }
    if n_digits > 19 && (n_digits > 40 || significant_digits(&s[digits_start..i]) > 19) {
        return None;
    }
    if let Some(b'e' | b'E') = s.get(i) {
        let (eneg, mut j) = match s.get(i + 1) {
            Some(b'-') => (true, i + 2),
            Some(b'+') => (false, i + 2),
            _ => (false, i + 1),
        };
        let start = j;
        let mut e: i32 = 0;
        while let Some(&b) = s.get(j) {
            let d = b.wrapping_sub(b'0');
            if d > 9 || e > 10_000 {
                break; // a longer exponent stops the scan before its digits end
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
    let v = decimal_to_f64(mant, exp)?;
    Some((if neg { -v } else { v }, i))
}

/// Append the decimal digits of `s` from `i` on to `mant` (wrapping: callers reject more than
/// 19 digits), eight at a time while whole words are digits; returns the index after the
/// last digit.
fn digit_run(s: &[u8], mut i: usize, mant: &mut u64) -> usize {
    while let Some(w) = word_at(s, i) {
        let t = w ^ bytes(b'0');
        if non_digit_flags(t) != 0 {
            break;
        }
        *mant = mant
            .wrapping_mul(100_000_000)
            .wrapping_add(eight_digit_value(t));
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

/// Digits of a run of digits with at most one point, not counting its leading zeros.
#[cold]
fn significant_digits(s: &[u8]) -> usize {
    let leading = s
        .iter()
        .take_while(|&&b| b == b'0' || b == b'.')
        .filter(|&&b| b == b'0')
        .count();
    s.iter().filter(|b| b.is_ascii_digit()).count() - leading
}

/// m·10^e correctly rounded, or `None` outside the range of [`eisel_lemire`].
///
/// Every m goes through the same method. The classic shortcut for m ≤ 2^53 and |e| ≤ 22
/// (one exact multiplication or division; Clinger, "How to Read Floating Point Numbers
/// Accurately", PLDI 1990) was measured slower here: drawings mix 16- and 17-digit numbers,
/// so the branch between the two ways goes either way at random. Zero is selected at the
/// end rather than branched to, for the same reason ("0.0" is common, e.g. most z values).
#[inline(always)]
fn decimal_to_f64(m: u64, e: i32) -> Option<f64> {
    let v = eisel_lemire(m.max(1), e)?;
    Some(if m == 0 { 0.0 } else { v })
}

/// m·10^q correctly rounded to the nearest double (ties to even), for 0 < m < 2^64 and q in
/// `POW5_MIN..=POW5_MAX`; `None` outside that range.
///
/// The Eisel–Lemire method (D. Lemire, "Number Parsing at a Gigabyte per Second", Software:
/// Practice and Experience 51 (2021), arXiv:2101.11408; the method is M. Eisel's): with m
/// shifted so that its top bit is set, the high 128 bits of m·T, where T is the top 128 bits
/// of 5^q ([`POW5_128`]), hold 10^q·m scaled by a power of two with enough correct bits to
/// round to 53 bits. A second 64×64-bit product refines the result only when the bits below
/// the rounding position are all ones. Exact halfway cases can only arise for −4 ≤ q ≤ 23,
/// where they are detected and rounded to even.
///
/// The paper's one undecidable case (a low product word of all ones after the refinement)
/// cannot round wrongly for −27 ≤ q ≤ 55 (the paper, sections 8 and 9.1; from memory), which
/// is why the table stops there. All results in that range are normal doubles:
/// 10^-27 ≤ m·10^q < 2^64·10^55. The tests check the method against `str::parse` on random
/// and on halfway inputs.
#[inline]
fn eisel_lemire(m: u64, q: i32) -> Option<f64> {
    const EXPLICIT_BITS: i32 = 52;
    let index = usize::try_from(q - POW5_MIN).ok()?;
    let t = *POW5_128.get(index)?;
    let (t_hi, t_lo) = ((t >> 64) as u64, t as u64);
    let lz = m.leading_zeros();
    let w = m << lz;
    // The high 128 bits of w·T: w·t_hi, plus the carry of w·t_lo when it can matter.
    let first = u128::from(w) * u128::from(t_hi);
    let (mut hi, mut lo) = ((first >> 64) as u64, first as u64);
    const BELOW_ROUNDING: u64 = u64::MAX >> (EXPLICIT_BITS + 3);
    if hi & BELOW_ROUNDING == BELOW_ROUNDING {
        let second_hi = ((u128::from(w) * u128::from(t_lo)) >> 64) as u64;
        lo = lo.wrapping_add(second_hi);
        if second_hi > lo {
            hi += 1;
        }
    }
    // hi has its top bit at 63 or 62: keep 54 bits (53 and a rounding bit).
    let upper_bit = (hi >> 63) as i32;
    let shift = upper_bit + 64 - EXPLICIT_BITS - 3;
    let mut mantissa = hi >> shift;
    // floor(q·log2(10)) as (q·217706) >> 16, exact over the table's range (the paper;
    // `tests::log2_of_powers_of_ten` checks it).
    let log2_pow10 = (q * (152_170 + 65_536)) >> 16;
    let mut biased_exp = log2_pow10 + 63 + upper_bit - lz as i32 + 1023;
    if lo <= 1 && (-4..=23).contains(&q) && mantissa & 3 == 1 && (mantissa << shift) == hi {
        mantissa &= !1; // exactly halfway and already even: do not round up
    }
    mantissa += mantissa & 1;
    mantissa >>= 1;
    if mantissa >= 2 << EXPLICIT_BITS {
        // Rounding carried into a new bit.
        mantissa = 1 << EXPLICIT_BITS;
        biased_exp += 1;
    }
    if !(1..0x7FF).contains(&biased_exp) {
        return None; // not reached for q in the table (see above); kept as a guard
    }
    let bits = (mantissa & !(1 << EXPLICIT_BITS)) | (biased_exp as u64) << EXPLICIT_BITS;
    Some(f64::from_bits(bits))
}

/// Range of decimal exponents covered by [`POW5_128`].
const POW5_MIN: i32 = -27;
const POW5_MAX: i32 = 55;

/// 5^q for `POW5_MIN <= q <= POW5_MAX`, as the 128-bit numbers the Eisel–Lemire method
/// multiplies by (Lemire 2021 and the table script published with it; from memory):
/// - q ≥ 0: 5^q shifted left until bit 127 is set (exact, as 5^55 < 2^128);
/// - q < 0: ⌊2^b / 5^−q⌋ + 1 with b = z + 127, where 2^z is the least power of two not
///   below 5^−q, so that the value has its top bit at 127 and errs upwards.
///
/// Computed at compile time by long division, one bit at a time.
const POW5_128: [u128; (POW5_MAX - POW5_MIN + 1) as usize] = {
    let mut table = [0u128; (POW5_MAX - POW5_MIN + 1) as usize];
    let mut q = POW5_MIN;
    while q <= POW5_MAX {
        let mut p: u128 = 1; // 5^|q|, below 2^128 for |q| <= 55
        let mut k = 0;
        while k < q.unsigned_abs() {
            p *= 5;
            k += 1;
        }
        table[(q - POW5_MIN) as usize] = if q >= 0 {
            p << p.leading_zeros()
        } else {
            // z with 2^(z-1) < p <= 2^z; p = 5^-q is no power of two, so p < 2^z.
            let z = 128 - p.leading_zeros();
            // Bits of ⌊2^(z+127) / p⌋ from the top: 2^(z+127) is a 1 and z+127 zeros.
            let mut rem: u128 = 0;
            let mut quot: u128 = 0;
            let mut bit = z + 127 + 1;
            while bit > 0 {
                bit -= 1;
                rem = (rem << 1) | (bit == z + 127) as u128; // rem < p < 2^64: no overflow
                quot <<= 1; // the quotient is below 2^128: no bit is lost
                if rem >= p {
                    rem -= p;
                    quot |= 1;
                }
            }
            quot + 1
        };
        q += 1;
    }
    table
};

/// The value of eight digits 0..=9, one per byte, the most significant in the lowest byte.
///
/// Three multiplications combine pairs, then quadruples, then both halves (D. Lemire,
/// "Number Parsing at a Gigabyte per Second", Software: Practice and Experience 51 (2021),
/// section 5; common practice since).
#[inline(always)]
fn eight_digit_value(t: u64) -> u64 {
    // Even bytes hold two-digit numbers 10·d(k) + d(k+1).
    let v = t.wrapping_mul(10).wrapping_add(t >> 8);
    let v1 = (v & 0x0000_00FF_0000_00FF).wrapping_mul(100 + (1_000_000 << 32));
    let v2 = ((v >> 16) & 0x0000_00FF_0000_00FF).wrapping_mul(1 + (10_000 << 32));
    u64::from((v1.wrapping_add(v2) >> 32) as u32)
}

/// The eight bytes of `s` at `i` as a little-endian word (the first byte lowest), if there
/// are eight.
#[inline(always)]
fn word_at(s: &[u8], i: usize) -> Option<u64> {
    Some(u64::from_le_bytes(array(s.get(i..i.checked_add(8)?)?)))
}

/// The byte `b` in every byte of a word.
const fn bytes(b: u8) -> u64 {
    0x0101_0101_0101_0101 * b as u64
}

/// Word-at-a-time byte tests: each sets the high bit of exactly those bytes that pass (no
/// carry crosses a byte, as the low seven bits are added separately; "SIMD within a
/// register", common practice).
///
/// Bytes of `x` that are not zero.
#[inline(always)]
fn nonzero_flags(x: u64) -> u64 {
    const LOW7: u64 = bytes(0x7F);
    (((x & LOW7) + LOW7) | x) & bytes(0x80)
}

/// Bytes of `t` (a word XOR `'0'` in every byte) that are not digits, i.e. not 0..=9.
#[inline(always)]
fn non_digit_flags(t: u64) -> u64 {
    // (t & 0x7F) + 0x76 reaches 0x80 exactly when the low seven bits are 10 or more.
    (((t & bytes(0x7F)) + bytes(0x76)) | t) & bytes(0x80)
}

/// Bytes of `w` that equal `b`.
#[inline(always)]
fn eq_flags(w: u64, b: u8) -> u64 {
    nonzero_flags(w ^ bytes(b)) ^ bytes(0x80)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_rng::xorshift;

    /// The parser on a text as a whole file (general paths only, as no word can be read past
    /// its end) and as a value line followed by more of a file (the short path where it
    /// applies); both must agree.
    fn parse_f64(s: &[u8]) -> Option<f64> {
        let alone = parse_f64_in(s, s.len());
        let mut file = s.to_vec();
        file.extend_from_slice(b"\n  0\nLINE\n  5\n1F\n100\nAcDbEntity\n  8\n0\n");
        let in_file = parse_f64_in(&file, s.len());
        assert_eq!(alone.map(f64::to_bits), in_file.map(f64::to_bits), "{s:?}");
        alone
    }

    /// A value as the tests compare it: text without the rest of the file after it.
    #[derive(Debug, Clone, Copy, PartialEq)]
    enum Shown<'a> {
        Text(&'a [u8]),
        Real(f64),
        Int(i64),
        Bytes(&'a [u8]),
    }

    fn shown<'a>(p: &Pair<'a>) -> Shown<'a> {
        match p.value {
            Value::Text { .. } => Shown::Text(p.text()),
            Value::Real(v) => Shown::Real(v),
            Value::Int(v) => Shown::Int(v),
            Value::Bytes(b) => Shown::Bytes(b),
        }
    }

    fn all(bytes: &[u8]) -> Vec<(i32, Shown<'_>, u64)> {
        let mut p = Pairs::new(bytes).expect("starts");
        let mut out = vec![];
        while let Some(pair) = p.next().expect("reads") {
            out.push((pair.code, shown(&pair), pair.at));
        }
        out
    }

    #[test]
    fn line_endings_and_padding() {
        let want = vec![
            (0, Shown::Text(b"SECTION"), 1),
            (2, Shown::Text(b"ENTITIES"), 3),
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
        assert_eq!(got[0], (1, Shown::Text(b""), 1));
        assert_eq!(got[1], (0, Shown::Text(b"EOF"), 3));
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
        let word = |t: &[u8]| u64::from_le_bytes(array(t)) ^ bytes(b'0');
        assert_eq!(eight_digit_value(word(b"12345678")), 12_345_678);
        assert_eq!(eight_digit_value(word(b"00000009")), 9);
        assert_eq!(eight_digit_value(word(b"99999999")), 99_999_999);
        for n in (0..100_000_000u64).step_by(9_973) {
            assert_eq!(eight_digit_value(word(format!("{n:08}").as_bytes())), n);
        }
        // Whole words while they are all digits, then single bytes.
        for (text, from, end, value) in [
            (&b"1234567890123x"[..], 0, 13, 1_234_567_890_123u64),
            (b"x12", 1, 3, 12),
            (b"12345678.5", 0, 8, 12_345_678),
            (b"/2345678", 0, 0, 0),
            (b"123:5678", 0, 3, 123),
            (b"", 0, 0, 0),
        ] {
            let mut mant = 0;
            assert_eq!(digit_run(text, from, &mut mant), end, "{text:?}");
            assert_eq!(mant, value, "{text:?}");
        }
    }

    #[test]
    fn byte_flags() {
        // Every byte value in every position, against the plain byte tests.
        for b in 0..=255u8 {
            for k in 0..8 {
                let w = bytes(b'5') & !(0xFF << (8 * k)) | u64::from(b) << (8 * k);
                let flag = 0x80u64 << (8 * k);
                assert_eq!(eq_flags(w, b'\r') & flag != 0, b == b'\r', "{b}");
                assert_eq!(nonzero_flags(w) & flag != 0, b != 0, "{b}");
                let t = w ^ bytes(b'0');
                assert_eq!(non_digit_flags(t) & flag != 0, !b.is_ascii_digit(), "{b}");
                // The other bytes ('5') are digits, not zero and not CR.
                assert_eq!(non_digit_flags(t) & !flag, 0);
                assert_eq!(eq_flags(w, b'\r') & !flag, 0);
            }
        }
        assert_eq!(line_end(b"0123456789ABCDEF\r\n"), 16);
        assert_eq!(line_end(b"0123\t56789ABCDEF\r\n"), 16);
        assert_eq!(line_end(b"01234567\n"), 8);
        assert_eq!(line_end(b"0123"), 4);
    }

    #[test]
    fn numbers_random_round_trip() {
        // Shortest round-trip text of random doubles must read back bit for bit.
        let mut next = xorshift(0x9e37_79b9_7f4a_7c15);
        for _ in 0..20_000 {
            let v = f64::from_bits(next());
            if !v.is_finite() {
                continue;
            }
            for s in [
                format!("{v}"),
                format!("{v:e}"),
                format!("{:.6}", v / 1e300),
            ] {
                same_as_std(&s);
            }
        }
    }

    #[test]
    fn numbers_with_17_to_19_digits() {
        // The general path against the standard library's correctly rounded parser, on
        // random mantissas of 16 to 19 digits with the point anywhere and exponents up to ±15.
        let mut next = xorshift(0x2545_f491_4f6c_dd1d);
        for _ in 0..100_000 {
            let n_digits = 16 + (next() % 4) as usize;
            let digits: String = (0..n_digits)
                .map(|_| char::from(b'0' + (next() % 10) as u8))
                .collect();
            let point = (next() % (n_digits as u64 + 1)) as usize;
            let e = (next() % 31) as i32 - 15;
            same_as_std(&format!("{}.{}e{e}", &digits[..point], &digits[point..]));
        }
        // Halfway cases: 2^53 + 1 and 2^54 + 2 lie midway between two doubles (ties to even).
        for s in [
            "9007199254740993",
            "18014398509481986",
            "9007199254740993e-5",
            "1.8014398509481986e3",
        ] {
            same_as_std(s);
        }
    }

    fn same_as_std(s: &str) {
        let want: f64 = s.parse().unwrap();
        assert_eq!(
            parse_f64(s.as_bytes()).map(f64::to_bits),
            Some(want.to_bits()),
            "{s}"
        );
    }

    #[test]
    fn numbers_eisel_lemire() {
        // The standard library's correctly rounded parser is the reference.
        let mut next = xorshift(0x5851_f42d_4c95_7f2d);
        for _ in 0..200_000 {
            // Mantissas of any length up to 19 digits, exponents across the table and a
            // little beyond it (those go to `str::parse`).
            let m = next() >> (next() % 64);
            let m = if m >= 10_000_000_000_000_000_000 {
                m / 10
            } else {
                m
            };
            let q = (next() % 95) as i32 - 35;
            same_as_std(&format!("{m}e{q}"));
            same_as_std(&format!("-{m}e{q}"));
        }
        // Exactly halfway between two doubles (ties to even) and one unit on either side:
        // h·2^k with h odd and 54 bits long, written as an integer, then with the decimal
        // point moved into the digits (same value, q from −4 to 0).
        for _ in 0..20_000 {
            let h = (1u64 << 53) | next() >> 11 | 1;
            for k in 0..=9 {
                let n = h << k;
                for d in [n - 1, n, n + 1] {
                    let digits = d.to_string();
                    same_as_std(&digits);
                    for point in 1..=4 {
                        let (a, b) = digits.split_at(digits.len() - point);
                        same_as_std(&format!("{a}.{b}e{point}"));
                    }
                }
            }
            // h·2^-1 and h·2^-2: decimals ending in 5 and 25 (q = −1, −2).
            for (j, five) in [(1, 5u64), (2, 25)] {
                let scaled = u128::from(h) * u128::from(five); // h·5^j = h·2^-j·10^j
                let digits = scaled.to_string();
                if digits.len() <= 19 {
                    let (a, b) = digits.split_at(digits.len() - j);
                    same_as_std(&format!("{a}.{b}"));
                }
            }
        }
        // Leading zeros do not count towards the 19 digits.
        for s in [
            "0.0043306690206590163",
            "-0.00000000000000000000012345678901234567",
            "000000000000000000001234567890123456789",
            "0.000000000000000000000000000000000000001",
        ] {
            same_as_std(s);
        }
    }

    #[test]
    fn short_decimals() {
        // The word-at-a-time path, against the standard library's correctly rounded parser:
        // texts of the usual form followed by a line end and more bytes, as in a file.
        let mut next = xorshift(0x9e37_79b9_7f4a_7c15 ^ 0xdead_beef);
        let digit = |r: u64| char::from(b'0' + (r % 10) as u8);
        for _ in 0..300_000 {
            let n_int = (next() % 8) as usize; // 0..=7
            let n_frac = (next() % 20) as usize;
            let with_point = n_frac > 0 || next().is_multiple_of(4);
            let mut text = String::new();
            if next().is_multiple_of(2) {
                text.push('-');
            }
            for _ in 0..n_int {
                text.push(digit(next()));
            }
            if with_point {
                text.push('.');
                for _ in 0..n_frac {
                    text.push(digit(next()));
                }
            }
            let n_digits = n_int + if with_point { n_frac } else { 0 };
            let mut file = text.clone().into_bytes();
            file.extend_from_slice(b"\n 20\n0.0\n  0\nLINE\n  5\n1F\n100\nAcDbEntity\n");
            let got = parse_f64_in(&file, text.len());
            let want: Option<f64> = text.parse().ok();
            assert_eq!(got.map(f64::to_bits), want.map(f64::to_bits), "{text}");
            // The usual forms take the short path.
            if (1..=19).contains(&n_digits) {
                let short = short_decimal(&file, text.len());
                assert_eq!(short.map(f64::to_bits), want.map(f64::to_bits), "{text}");
            }
        }
        // Shortest round-trip output of random doubles of drawing-like magnitudes.
        for _ in 0..200_000 {
            let v =
                (next() >> 11) as f64 / (1u64 << 53) as f64 * 10f64.powi((next() % 12) as i32 - 5);
            for text in [format!("{v}"), format!("{:.6}", -v)] {
                let mut file = text.clone().into_bytes();
                file.extend_from_slice(b"\r\n 20\r\n1.5\r\n  0\r\nEOF\r\n");
                let want: f64 = text.parse().unwrap();
                let got = parse_f64_in(&file, text.len());
                assert_eq!(got.map(f64::to_bits), Some(want.to_bits()), "{text}");
            }
        }
        // Not the usual form, or not a number: the general path decides.
        for text in [
            "", "-", ".", "-.", "1.2.3", "1e5", "12345678", "+1", "1,5", " 1", "0x1",
        ] {
            let mut file = text.as_bytes().to_vec();
            file.extend_from_slice(&[b'\n'; 40]);
            assert_eq!(short_decimal(&file, text.len()), None, "{text}");
            let want: Option<f64> = text.parse().ok();
            assert_eq!(parse_f64_in(&file, text.len()), want, "{text}");
        }
    }

    #[test]
    fn powers_of_five_table() {
        // q >= 0: 5^q itself, shifted to the top.
        for q in 0..=POW5_MAX {
            let p = 5u128.pow(q as u32);
            let t = POW5_128[(q - POW5_MIN) as usize];
            assert_eq!(t.leading_zeros(), 0, "5^{q}");
            assert_eq!(t >> p.leading_zeros(), p, "5^{q}");
        }
        // q < 0: T = ⌊2^b / p⌋ + 1, i.e. (T − 1)·p <= 2^b < T·p, with T's top bit at 127.
        // Products as 192-bit numbers (high u64, low u128).
        let mul = |t: u128, p: u64| {
            let lo = (t as u64 as u128) * u128::from(p);
            let hi = (t >> 64) * u128::from(p) + (lo >> 64);
            ((hi >> 64) as u64, (hi << 64) | (lo as u64 as u128))
        };
        for q in POW5_MIN..0 {
            let p = 5u64.pow(q.unsigned_abs());
            let t = POW5_128[(q - POW5_MIN) as usize];
            assert_eq!(t.leading_zeros(), 0, "5^{q}");
            let b = 64 - (p - 1).leading_zeros() + 127; // z + 127, 2^z the least power >= p
            let two_b = (1u64 << (b - 128), 0u128);
            assert!(mul(t - 1, p) <= two_b && two_b < mul(t, p), "5^{q}");
        }
        // 5^-1 = 0.8 = 0.CCCC… in hex (from the definition above; the paper's table agrees,
        // from memory).
        assert_eq!(
            POW5_128[(-1 - POW5_MIN) as usize],
            0xCCCC_CCCC_CCCC_CCCC_CCCC_CCCC_CCCC_CCCD
        );
    }

    #[test]
    fn log2_of_powers_of_ten() {
        // floor(q·log2 10): q·log2 10 is irrational for q != 0 and lies more than 1e-3 from
        // the nearest integer over this range, so the double product floors correctly.
        for q in POW5_MIN..=POW5_MAX {
            let want = (f64::from(q) * std::f64::consts::LOG2_10).floor() as i32;
            assert_eq!((q * (152_170 + 65_536)) >> 16, want, "q = {q}");
        }
    }

    #[test]
    fn usual_pairs_read_whole() {
        // The fast path (three-character codes, short values) and the general path agree:
        // the same pairs with and without room for the 32-byte window after them.
        let text = b"  0\nLINE\n  8\r\nPROFILE\r\n 10\n2625.0578157515506\n 20\n\n100\n-0.0433066902065901630\n1071\n7\n  0\nEOF\n";
        let want = vec![
            (0, Shown::Text(b"LINE"), 1),
            (8, Shown::Text(b"PROFILE"), 3),
            (10, Shown::Text(b"2625.0578157515506"), 5),
            (20, Shown::Text(b""), 7),
            (100, Shown::Text(b"-0.0433066902065901630"), 9),
            (1071, Shown::Text(b"7"), 11),
            (0, Shown::Text(b"EOF"), 13),
        ];
        assert_eq!(all(text), want);
        let mut padded = text.to_vec();
        padded.extend_from_slice(&[b'\n'; 40]);
        assert_eq!(all(&padded), want);
        // Blanks around values, tabs, lone CRs and long values leave the fast path; the
        // general path reads them.
        let mut text = b"  1\n  x \n  1\n\ty\n  1\rz\r  1\n".to_vec();
        text.extend_from_slice(&[b'w'; 30]);
        text.extend_from_slice(&[b'\n'; 40]);
        let got = all(&text);
        assert_eq!(got[0], (1, Shown::Text(b"x"), 1));
        assert_eq!(got[1], (1, Shown::Text(b"y"), 3));
        assert_eq!(got[2], (1, Shown::Text(b"z"), 5));
        assert_eq!(got[3], (1, Shown::Text(&[b'w'; 30]), 7));
    }

    #[test]
    fn int_values() {
        let pair = |t: &'static [u8]| Pair {
            code: 70,
            value: text_value(t, 0, t.len()),
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
                (0, Shown::Text(b"SECTION")),
                (10, Shown::Real(1.5)),
                (70, Shown::Int(-2)),
                (290, Shown::Int(1)),
                (310, Shown::Bytes(&[1, 2])),
                (90, Shown::Int(7)),
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
                (0, Shown::Text(b"SECTION")),
                (40, Shown::Real(2.0)),
                (1071, Shown::Int(123_456)),
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
