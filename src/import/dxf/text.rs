//! Text of names (layers, entity types): UTF-8, or the code page the header names.
//!
//! Releases before R2007 (`$ACADVER` below `AC1021`) store text in the code page named by
//! `$DWGCODEPAGE` (`ANSI_1252`, `ANSI_1251`, `ANSI_932` and so on); R2007 and later store
//! UTF-8 (DXF reference, HEADER section variables; from memory). Files in the wild break both
//! rules: writers that claim an old release but write UTF-8, code pages in lower case or as
//! `dosNNN`, and no `$DWGCODEPAGE` at all. So the rules here are:
//!
//! 1. Pure ASCII is taken as it is (every supported code page agrees on it, and it is most
//!    names): no decoding at all.
//! 2. R2007 and later, or a single-byte code page: valid UTF-8 is UTF-8; anything else is
//!    decoded with the code page. Text in a single-byte code page is practically never valid
//!    UTF-8 (every byte above 0x7F would have to come in lead-and-continuation patterns such
//!    as `Ã©`), so a valid UTF-8 name in an old file means a writer that wrote UTF-8.
//! 3. Before R2007 with a double-byte code page (932 Shift-JIS, 936 GBK, 949 Korean, 950
//!    Big5): the code page first, because short names in these code pages are valid UTF-8
//!    often enough to matter (a two-character GBK name about one time in a hundred, by the
//!    byte ranges); UTF-8 only when the code page finds malformed bytes and UTF-8 does not.
//!
//! Without `$DWGCODEPAGE`, or with one that is not known here, the code page is Windows-1252
//! (the usual default of Western installations; common practice). `\U+XXXX` escapes are kept
//! as written.

use encoding_rs::Encoding;

use super::Reader;
use crate::import::ImportError;

/// How non-ASCII text of one file is decoded.
#[derive(Debug, Clone, Copy)]
pub(crate) struct TextCoding {
    /// Code page of text that is not UTF-8.
    code_page: &'static Encoding,
    /// `$ACADVER` is `AC1021` (R2007) or later: text is UTF-8 by the reference.
    utf8_release: bool,
    /// Some text was decoded with `code_page`.
    used: bool,
}

impl Default for TextCoding {
    fn default() -> Self {
        TextCoding {
            code_page: encoding_rs::WINDOWS_1252,
            utf8_release: false,
            used: false,
        }
    }
}

impl TextCoding {
    /// Decode `bytes` by the rules of the module doc.
    pub(crate) fn decode(&mut self, bytes: &[u8]) -> String {
        if bytes.is_ascii() {
            // Every byte is a character of its own (ASCII is valid UTF-8).
            return bytes.iter().map(|&b| char::from(b)).collect();
        }
        let utf8 = std::str::from_utf8(bytes).ok();
        if self.utf8_release || !is_double_byte(self.code_page) {
            if let Some(s) = utf8 {
                return s.to_owned();
            }
            self.used = true;
            return self
                .code_page
                .decode_without_bom_handling(bytes)
                .0
                .into_owned();
        }
        let (text, malformed) = self.code_page.decode_without_bom_handling(bytes);
        match (malformed, utf8) {
            (true, Some(s)) => s.to_owned(),
            _ => {
                self.used = true;
                text.into_owned()
            }
        }
    }

    pub(crate) fn set_code_page(&mut self, code_page: &'static Encoding) {
        self.code_page = code_page;
    }

    /// Take the release from `$ACADVER` (e.g. `AC1015`): `AC1021` and later are UTF-8.
    pub(crate) fn set_release(&mut self, acadver: &[u8]) {
        self.utf8_release = release_number(acadver).is_some_and(|n| n >= 1021);
    }
}

impl Reader<'_, '_> {
    /// The value of `$ACADVER` (group 1) or `$DWGCODEPAGE` (group 3), whose name pair is
    /// current; any group code but 0 and 9 is taken.
    pub(super) fn read_text_variable(&mut self, name: &[u8]) -> Result<(), ImportError> {
        let v = self.next_in("HEADER")?;
        if v.code == 0 || v.code == 9 {
            self.pairs.push_back(v);
            return Ok(());
        }
        let value = v.text().trim_ascii();
        let shown = String::from_utf8_lossy(value).into_owned();
        if name == b"$ACADVER" {
            self.layers.coding.set_release(value);
            self.drawing.file.version = Some(shown);
            return Ok(());
        }
        let coding = &mut self.layers.coding;
        if let Some(e) = code_page(value) {
            if coding.used && e != coding.code_page {
                // The header after names (unusual): names already read keep their decoding.
                let (at, before) = (v.location(), coding.code_page.name());
                self.note_once("late code page", || {
                    format!("$DWGCODEPAGE at {at} comes after names that were read as {before}; those names may be shown wrongly")
                });
            }
            self.layers.coding.set_code_page(e);
        }
        self.drawing.file.code_page = Some(shown);
        Ok(())
    }

    /// Record the encoding used, with a note when a code page was named but not known.
    pub(super) fn finish_text(&mut self) {
        let coding = self.layers.coding;
        self.drawing.file.text_encoding = coding.code_page.name();
        let unknown = self
            .drawing
            .file
            .code_page
            .as_deref()
            .filter(|n| code_page(n.as_bytes()).is_none());
        if let (Some(name), true) = (unknown, coding.used) {
            let note = format!("$DWGCODEPAGE {name} is not a code page sectio reads: names that are not UTF-8 were read as {}", coding.code_page.name());
            self.drawing.notes.push(note);
        }
    }
}

/// The number of an `ACnnnn` release name (`AC1015` → 1015); `None` for other forms (`AC2.10`).
fn release_number(acadver: &[u8]) -> Option<u32> {
    let digits = acadver.trim_ascii().strip_prefix(b"AC")?;
    std::str::from_utf8(digits).ok()?.parse().ok()
}

/// Code pages where one character may take two bytes.
fn is_double_byte(e: &'static Encoding) -> bool {
    [
        encoding_rs::SHIFT_JIS,
        encoding_rs::GBK,
        encoding_rs::GB18030,
        encoding_rs::EUC_KR,
        encoding_rs::BIG5,
        encoding_rs::EUC_JP,
    ]
    .contains(&e)
}

/// The encoding for a `$DWGCODEPAGE` value, in any case: `ANSI_nnnn` and `DOSnnn` with the
/// Windows code page numbers of the DXF reference's list (from memory), and otherwise any
/// single- or double-byte encoding label of the WHATWG Encoding Standard (`big5`, `gb2312`,
/// `iso8859-2`, `macintosh`, …). `None` for a name not known, and for UTF-16 (names in a DXF
/// file are never two bytes per ASCII character).
pub(crate) fn code_page(name: &[u8]) -> Option<&'static Encoding> {
    let name = name.trim_ascii().to_ascii_uppercase();
    let number = name
        .strip_prefix(b"ANSI_")
        .or_else(|| name.strip_prefix(b"DOS"))
        .and_then(|d| std::str::from_utf8(d).ok()?.parse::<u32>().ok());
    if let Some(n) = number {
        return match n {
            874 => Some(encoding_rs::WINDOWS_874),
            932 => Some(encoding_rs::SHIFT_JIS),
            936 => Some(encoding_rs::GBK),
            949 => Some(encoding_rs::EUC_KR), // the WHATWG EUC-KR is Windows code page 949
            950 => Some(encoding_rs::BIG5),
            866 => Some(encoding_rs::IBM866),
            1250 => Some(encoding_rs::WINDOWS_1250),
            1251 => Some(encoding_rs::WINDOWS_1251),
            1252 => Some(encoding_rs::WINDOWS_1252),
            1253 => Some(encoding_rs::WINDOWS_1253),
            1254 => Some(encoding_rs::WINDOWS_1254),
            1255 => Some(encoding_rs::WINDOWS_1255),
            1256 => Some(encoding_rs::WINDOWS_1256),
            1257 => Some(encoding_rs::WINDOWS_1257),
            1258 => Some(encoding_rs::WINDOWS_1258),
            // DOS 437, 850, 852 and the like have no WHATWG encoding.
            _ => None,
        };
    }
    match &name[..] {
        // Declared as plain ASCII (one catalog drawing of the corpus): any ASCII superset.
        b"ASCII" => return Some(encoding_rs::WINDOWS_1252),
        b"UTF8" | b"UTF-8" => return Some(encoding_rs::UTF_8),
        b"KSC5601" => return Some(encoding_rs::EUC_KR),
        _ => {}
    }
    Encoding::for_label_no_replacement(&name).filter(|e| {
        *e != encoding_rs::UTF_16LE && *e != encoding_rs::UTF_16BE && *e != encoding_rs::REPLACEMENT
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn code_page_names() {
        assert_eq!(code_page(b"ANSI_1252"), Some(encoding_rs::WINDOWS_1252));
        assert_eq!(code_page(b"ansi_1251"), Some(encoding_rs::WINDOWS_1251));
        assert_eq!(code_page(b"dos932"), Some(encoding_rs::SHIFT_JIS));
        assert_eq!(code_page(b"ANSI_936 "), Some(encoding_rs::GBK));
        assert_eq!(code_page(b"ANSI_949"), Some(encoding_rs::EUC_KR));
        assert_eq!(code_page(b"ANSI_950"), Some(encoding_rs::BIG5));
        assert_eq!(code_page(b"ANSI_874"), Some(encoding_rs::WINDOWS_874));
        assert_eq!(code_page(b"ANSI_1258"), Some(encoding_rs::WINDOWS_1258));
        assert_eq!(code_page(b"ASCII"), Some(encoding_rs::WINDOWS_1252));
        assert_eq!(code_page(b"big5"), Some(encoding_rs::BIG5));
        assert_eq!(code_page(b"ISO8859-2"), Some(encoding_rs::ISO_8859_2));
        assert_eq!(code_page(b"DOS437"), None);
        assert_eq!(code_page(b"ANSI_1200"), None);
        assert_eq!(code_page(b"UTF-16LE"), None);
        assert_eq!(code_page(b"nonsense"), None);
    }

    #[test]
    fn releases() {
        assert_eq!(release_number(b"AC1015"), Some(1015));
        assert_eq!(release_number(b" AC1032\r"), Some(1032));
        assert_eq!(release_number(b"AC2.10"), None);
        let mut c = TextCoding::default();
        c.set_release(b"AC1021");
        assert!(c.utf8_release);
        c.set_release(b"AC1018");
        assert!(!c.utf8_release);
    }

    #[test]
    fn decoding_rules() {
        // Byte values from the code page tables of the WHATWG Encoding Standard (via
        // encoding_rs, a general-purpose reference library): cp1251 "Слой" = D1 EB EE E9,
        // Shift-JIS "層" = 91 77.
        let mut c = TextCoding::default();
        assert_eq!(c.decode(b"PROFILE"), "PROFILE");
        assert_eq!(c.decode(b"Tr\xe4ger \x80"), "Träger €");
        assert_eq!(c.decode("Träger".as_bytes()), "Träger");
        c.set_code_page(encoding_rs::WINDOWS_1251);
        assert_eq!(c.decode(b"\xd1\xeb\xee\xe9"), "Слой");
        // Single-byte code page: valid UTF-8 stays UTF-8.
        assert_eq!(c.decode("Слой".as_bytes()), "Слой");
        c.set_code_page(encoding_rs::SHIFT_JIS);
        assert_eq!(c.decode(b"\x91\x77"), "層");
        // Double-byte code page before R2007: the code page wins where both read the bytes
        // (C4 A3 is valid UTF-8, "ģ", and two half-width katakana in Shift-JIS)...
        assert_eq!(c.decode(b"\xc4\xa3"), "ﾄ｣");
        // ... UTF-8 only where the code page finds malformed bytes ("あ" in UTF-8, E3 81 82,
        // ends with a lone lead byte in Shift-JIS).
        assert_eq!(c.decode("あ".as_bytes()), "あ");
        // From R2007 on, UTF-8 first.
        c.set_release(b"AC1024");
        assert_eq!(c.decode(b"\xc4\xa3"), "ģ");
        assert_eq!(c.decode(b"\x91\x77"), "層");
    }
}
