//! DXF reader: model-space lines, arcs, circles and 2-D polylines as exact [`Segment`]s.
//!
//! The reader is our own streaming pass over the group-code pairs of the file (tokenizer in
//! `codes.rs`), for ASCII and binary DXF of any release (R2.6 to 2018 in the test corpus). It
//! reads:
//! - HEADER: `$INSUNITS` (the declared length unit), `$ACADVER` and `$DWGCODEPAGE` (how names
//!   are encoded, `text.rs`);
//! - TABLES: the LAYER table (name, frozen flag in group 70 bit 1, off as a negative colour in
//!   group 62), to leave out entities on hidden layers;
//! - ENTITIES: LINE, ARC, CIRCLE, LWPOLYLINE and 2-D POLYLINE (with VERTEX/SEQEND) in model
//!   space, turned into [`Piece`]s in drawing units (entity readers in `entities.rs`).
//!
//! Everything else is passed over by scanning pairs without parsing their values: the
//! CLASSES, BLOCKS, OBJECTS, THUMBNAILIMAGE and ACDSDATA sections, other tables, and entity
//! types that are not read (counted in [`Drawing::skipped`] by type, never an error). Blocks
//! and INSERTs, SPLINE and ELLIPSE are left for later and counted as such.
//!
//! Errors say where: a line number of an ASCII file, a byte offset of a binary one. A file
//! that is not group-code pairs from its first line is [`ImportErrorKind::NotDxf`]; a bad
//! code or a value that does not parse where the reader needs a number is
//! [`ImportErrorKind::Malformed`]; a file that ends before `0/EOF` is
//! [`ImportErrorKind::Truncated`]. Structural slips that lose nothing (a stray `ENDSEC`, a
//! section without `ENDSEC`, `$INSUNITS` under the wrong group code) are accepted with a note
//! in [`Drawing::notes`]. Anything after `0/EOF` is ignored.
//!
//! [`Segment`]: crate::geom::Segment

mod blocks;
mod census;
mod codes;
mod entities;
mod hatch;
mod text;

use std::collections::{HashMap, HashSet};

use super::{
    Drawing, ImportError, ImportErrorKind, LayerName, LayerState, LengthUnit, Piece, ReadOptions,
    SourceUnits,
};
use codes::{shown_text, Pair, Pairs, BINARY_SENTINEL};
use text::TextCoding;

/// Read a DXF file (ASCII or binary) held in memory.
///
/// Returns the model-space geometry with its layers and the declared units, or where and why
/// the file could not be read. Never panics on file content.
pub fn read(bytes: &[u8], opts: &ReadOptions) -> Result<Drawing, ImportError> {
    let pairs = Pairs::new(bytes)?;
    let mut reader = Reader {
        pairs,
        opts,
        drawing: Drawing::default(),
        layers: Layers::default(),
        skips: HashMap::new(),
        noted: HashSet::new(),
        vertices: Vec::new(),
        block: None,
        skipping_block: false,
        blocks: HashMap::new(),
        inserts: Vec::new(),
        block_layer: LayerName::from(""),
        census: HashMap::new(),
    };
    reader.drawing.file.binary = bytes.starts_with(BINARY_SENTINEL);
    // Capacity hint: about one piece per 192 bytes of a dense drawing, at most 4 Mi pieces.
    // Growing the vector by doubling instead cost a tenth of the reading time on large
    // files; untouched capacity of a large allocation stays virtual, and `finish` gives
    // most of an unused hint back.
    let hint = (bytes.len() / 192).min(1 << 22);
    reader.drawing.pieces.reserve(hint);
    reader.read_file()?;
    reader.expand_inserts()?;
    Ok(reader.finish())
}

/// State of one read.
pub(crate) struct Reader<'a, 'o> {
    pairs: Pairs<'a>,
    opts: &'o ReadOptions,
    drawing: Drawing,
    layers: Layers,
    /// Skipped entities by reason, merged into `drawing.skipped` at the end (saves a `String`
    /// per skipped entity).
    skips: HashMap<String, usize>,
    /// Kinds of notes already given, so a file with ten thousand alike cases gets one note.
    noted: HashSet<&'static str>,
    /// Scratch vertex list reused by the polyline readers.
    vertices: Vec<entities::Vertex>,
    /// The block definition being read, if any: entity readers put what they read there.
    block: Option<blocks::Block>,
    /// Inside a model- or paper-space block definition, whose entities are passed over.
    skipping_block: bool,
    /// Block definitions by upper-cased name.
    blocks: HashMap<Vec<u8>, blocks::Block>,
    /// Model-space INSERTs, expanded once the whole file is read.
    inserts: Vec<blocks::Insert>,
    /// Stand-in layer name for entities read inside a block (their own is kept as written).
    block_layer: LayerName,
    /// Entities by (layer, type) as written, with [`ReadOptions::census`] (`census.rs`).
    census: HashMap<(&'a [u8], &'a [u8]), usize>,
}

/// What to do with entities on a layer.
#[derive(Debug, Clone)]
enum Verdict {
    /// Read them; the layer's name as shown to the user.
    Keep(LayerName),
    /// Skip them for this reason.
    Skip(String),
}

/// The LAYER table and the verdict for each layer name met in the entities.
#[derive(Debug, Default)]
struct Layers {
    /// Hidden state by lower-case layer name (DXF layer names are case-insensitive).
    hidden: HashMap<String, bool>,
    /// Verdicts by the name's bytes as written in group 8, in the order first met.
    entries: Vec<LayerEntry>,
    /// `entries` by name, built once there are more than [`Layers::SCAN`] of them.
    index: HashMap<Vec<u8>, usize>,
    /// The entry found last (entities on one layer tend to come together).
    last: usize,
    /// How names are decoded (set from the header).
    coding: TextCoding,
}

#[derive(Debug)]
struct LayerEntry {
    name: Vec<u8>,
    verdict: Verdict,
    /// Entities left out under a `Skip` verdict, not yet counted in `Reader::skips`.
    skipped: usize,
}

impl Layers {
    /// Up to this many layer names are looked up by comparing them one by one, which is
    /// cheaper than hashing the name.
    const SCAN: usize = 8;

    fn add_layer(
        &mut self,
        name: String,
        frozen: bool,
        off: bool,
        skips: &mut HashMap<String, usize>,
    ) {
        self.hidden.insert(name.to_lowercase(), frozen || off);
        // A table after the entities (unusual) invalidates earlier verdicts.
        self.flush_skips(skips);
        self.entries.clear();
        self.index.clear();
    }

    /// Move the counts of skipped entities into `skips`.
    fn flush_skips(&mut self, skips: &mut HashMap<String, usize>) {
        for entry in &mut self.entries {
            if let (Verdict::Skip(reason), n @ 1..) = (&entry.verdict, entry.skipped) {
                *skips.entry(reason.clone()).or_insert(0) += n;
                entry.skipped = 0;
            }
        }
    }

    /// The index in `entries` of the verdict for the layer written as `name`.
    #[inline]
    fn verdict(&mut self, name: &[u8], opts: &ReadOptions) -> usize {
        if self.entries.get(self.last).is_some_and(|e| e.name == name) {
            return self.last;
        }
        let found = if self.entries.len() <= Self::SCAN {
            self.entries.iter().position(|e| e.name == name)
        } else {
            self.index.get(name).copied()
        };
        self.last = match found {
            Some(i) => i,
            None => self.add_verdict(name, opts),
        };
        self.last
    }

    #[cold]
    fn add_verdict(&mut self, name: &[u8], opts: &ReadOptions) -> usize {
        let shown = self.coding.decode(name);
        let hidden = self
            .hidden
            .get(&shown.to_lowercase())
            .copied()
            .unwrap_or(false);
        let verdict = if hidden && !opts.include_hidden_layers {
            Verdict::Skip(format!("layer off or frozen: {shown}"))
        } else if !opts.layer_selected(&shown) {
            Verdict::Skip(format!("layer not selected: {shown}"))
        } else {
            Verdict::Keep(LayerName::from(shown))
        };
        self.entries.push(LayerEntry {
            name: name.to_vec(),
            verdict,
            skipped: 0,
        });
        let i = self.entries.len() - 1;
        if self.entries.len() > Self::SCAN {
            if self.index.is_empty() {
                // The first time past the scan limit: index the entries so far.
                let named = self.entries.iter().enumerate();
                self.index = named.map(|(i, e)| (e.name.clone(), i)).collect();
            } else {
                self.index.insert(name.to_vec(), i);
            }
        }
        i
    }
}

/// Text outside the file's own names (section and entity type names): UTF-8 when it is
/// valid UTF-8, otherwise Windows-1252 (`text.rs`; layer names follow `$DWGCODEPAGE`).
pub(crate) fn decode_text(bytes: &[u8]) -> String {
    TextCoding::default().decode(bytes)
}

impl<'a> Reader<'a, '_> {
    /// The next pair inside `section`; the end of the input there means a truncated file.
    fn next_in(&mut self, section: &str) -> Result<Pair<'a>, ImportError> {
        self.advance_in(section)?;
        Ok(self.pairs.cur)
    }

    /// Move to the next pair inside `section` (in `self.pairs.cur`).
    #[inline(always)]
    fn advance_in(&mut self, section: &str) -> Result<(), ImportError> {
        if self.pairs.advance()? {
            Ok(())
        } else {
            Err(self.truncated_in(section))
        }
    }

    #[cold]
    fn truncated_in(&self, section: &str) -> ImportError {
        self.truncated(&format!("inside the {section} section"))
    }

    #[cold]
    fn truncated(&self, where_: &str) -> ImportError {
        let at = self.pairs.position();
        ImportError::new(
            Some(at),
            ImportErrorKind::Truncated(format!(
                "the file ends {where_} without 0/EOF; it may be cut short"
            )),
        )
    }

    /// Count a skipped entity.
    fn skip(&mut self, reason: &str) {
        match self.skips.get_mut(reason) {
            Some(n) => *n += 1,
            None => {
                self.skips.insert(reason.to_owned(), 1);
            }
        }
    }

    /// Add a note the first time something of `kind` happens.
    fn note_once(&mut self, kind: &'static str, message: impl FnOnce() -> String) {
        if self.noted.insert(kind) {
            self.drawing.notes.push(message());
        }
    }

    fn finish(mut self) -> Drawing {
        self.finish_text();
        if self.opts.census {
            self.finish_census();
        }
        self.layers.flush_skips(&mut self.skips);
        for (reason, n) in self.skips.drain() {
            *self.drawing.skipped.entry(reason).or_insert(0) += n;
        }
        let pieces = &mut self.drawing.pieces;
        if pieces.capacity() > 2 * pieces.len() + 1024 {
            pieces.shrink_to_fit(); // give back most of an unused capacity hint
        }
        self.drawing
    }

    /// The top level: sections until `0/EOF`.
    fn read_file(&mut self) -> Result<(), ImportError> {
        let mut sections = 0usize;
        loop {
            let Some(p) = self.pairs.next()? else {
                if sections == 0 {
                    return Err(ImportError::new(
                        Some(self.pairs.position()),
                        ImportErrorKind::NotDxf(
                            "group-code pairs but no SECTION and no 0/EOF".into(),
                        ),
                    ));
                }
                return Err(self.truncated("after the last section"));
            };
            if p.is(0, b"EOF") {
                return Ok(());
            }
            if p.is(0, b"SECTION") {
                sections += 1;
                self.read_section(&p)?;
                continue;
            }
            if p.code == 999 {
                continue; // comment
            }
            let at = p.location();
            self.note_once("stray pairs", || {
                format!("group codes outside any section were ignored (first at {at})")
            });
        }
    }

    fn read_section(&mut self, start: &Pair<'a>) -> Result<(), ImportError> {
        let name_pair = self.next_in("unnamed")?;
        if name_pair.code != 2 {
            // A section without its name: pass over it.
            let at = start.location();
            self.note_once("unnamed section", || {
                format!("a SECTION without a name (group 2) at {at} was skipped")
            });
            self.pairs.push_back(name_pair);
            return self.skip_section("unnamed");
        }
        match name_pair.text() {
            b"HEADER" => self.read_header(),
            b"TABLES" => self.read_tables(),
            b"ENTITIES" => self.read_entities(),
            b"BLOCKS" => self.read_blocks(),
            _ => {
                let name = decode_text(name_pair.text());
                self.skip_section(&name)
            }
        }
    }

    /// Handle a current pair `0/…` that ends a section: `true` when the section is over. A
    /// `SECTION` or `EOF` inside a section means its `ENDSEC` is missing: give it back and
    /// end here.
    fn section_end(&mut self, section: &str) -> bool {
        let p = &self.pairs.cur;
        if p.code != 0 {
            return false;
        }
        match p.text() {
            b"ENDSEC" => true,
            b"SECTION" | b"EOF" => {
                let at = p.location();
                let section = section.to_owned();
                self.note_once("missing ENDSEC", || {
                    format!("the {section} section has no 0/ENDSEC (next section at {at})")
                });
                self.pairs.replay();
                true
            }
            _ => false,
        }
    }

    /// Pass over the rest of a section without parsing values.
    fn skip_section(&mut self, section: &str) -> Result<(), ImportError> {
        loop {
            self.advance_in(section)?;
            if self.pairs.cur.code == 0 && self.section_end(section) {
                return Ok(());
            }
        }
    }

    /// HEADER: `$INSUNITS` (DXF reference, HEADER section variables: group 70, 0 = unitless).
    fn read_header(&mut self) -> Result<(), ImportError> {
        loop {
            self.advance_in("HEADER")?;
            if self.section_end("HEADER") {
                return Ok(());
            }
            if self.pairs.cur.code == 9 {
                let name = self.pairs.cur.text();
                if name == b"$ACADVER" || name == b"$DWGCODEPAGE" {
                    self.read_text_variable(name)?; // text.rs
                    continue;
                }
            }
            if !self.pairs.cur.is(9, b"$INSUNITS") {
                continue;
            }
            let at = self.pairs.cur.location();
            let v = self.next_in("HEADER")?;
            if v.code == 0 || v.code == 9 {
                self.note_once("insunits empty", || {
                    format!("$INSUNITS at {at} has no value; units left undeclared")
                });
                self.pairs.push_back(v);
                continue;
            }
            if v.code == 70 {
                self.set_units(v.int()?);
                continue;
            }
            // Tolerated: the right number under the wrong group code.
            let at = v.location();
            let code = v.code;
            match v.int() {
                Ok(units) => {
                    self.set_units(units);
                    self.note_once("insunits code", || {
                        format!("$INSUNITS at {at} is written with group code {code} instead of 70; its value {units} was used")
                    });
                }
                Err(_) => {
                    let text = shown_text(v.text());
                    self.note_once("insunits code", || {
                        format!("$INSUNITS at {at} has group code {code} and value '{text}', not a unit code; units left undeclared")
                    });
                }
            }
        }
    }

    fn set_units(&mut self, code: i64) {
        self.drawing.units = SourceUnits {
            code: Some(code),
            declared: LengthUnit::from_insunits(code),
        };
    }

    /// TABLES: the LAYER table; other tables are passed over.
    fn read_tables(&mut self) -> Result<(), ImportError> {
        // Inside a table: Some(is_layer_table).
        let mut table: Option<bool> = None;
        loop {
            self.advance_in("TABLES")?;
            if self.pairs.cur.code != 0 {
                continue;
            }
            if self.section_end("TABLES") {
                return Ok(());
            }
            match self.pairs.cur.text() {
                b"TABLE" => {
                    // Table header pairs up to the first entry; group 2 names the table.
                    let mut is_layer = false;
                    loop {
                        self.advance_in("TABLES")?;
                        let h = &self.pairs.cur;
                        if h.code == 0 {
                            self.pairs.replay();
                            break;
                        }
                        if h.code == 2 {
                            is_layer = h.text().eq_ignore_ascii_case(b"LAYER");
                        }
                    }
                    table = Some(is_layer);
                }
                b"ENDTAB" => table = None,
                b"LAYER" if table == Some(true) => self.read_layer()?,
                _ => {} // entries of other tables: their pairs are passed over
            }
        }
    }

    /// One LAYER table entry: name (2), flags (70, bit 1 = frozen), colour (62, negative =
    /// off) (DXF reference, TABLES section, LAYER).
    fn read_layer(&mut self) -> Result<(), ImportError> {
        let mut name: &[u8] = b"";
        let mut frozen = false;
        let mut off = false;
        loop {
            self.advance_in("TABLES")?;
            let p = &self.pairs.cur;
            match p.code {
                0 => {
                    self.pairs.replay();
                    break;
                }
                2 => name = p.text(),
                70 => frozen = p.int()? & 1 != 0,
                62 => off = p.int()? < 0,
                _ => {}
            }
        }
        let name = self.layers.coding.decode(name);
        if self.opts.census {
            self.drawing.file.layer_table.push(LayerState {
                name: name.clone(),
                off,
                frozen,
            });
        }
        self.layers.add_layer(name, frozen, off, &mut self.skips);
        Ok(())
    }

    /// Model-space pieces are pushed here, and added to the drawing's scale tally while
    /// their segments are in the cache.
    fn push_piece(&mut self, piece: Piece) {
        self.drawing
            .scale
            .add_read_piece(&piece.segments, piece.closed);
        self.drawing.pieces.push(piece);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::import::Location;

    fn dxf(entities: &str) -> String {
        format!("0\nSECTION\n2\nENTITIES\n{entities}0\nENDSEC\n0\nEOF\n")
    }

    #[test]
    fn empty_and_not_dxf() {
        let opts = ReadOptions::default();
        assert_eq!(read(b"", &opts).unwrap_err().kind, ImportErrorKind::Empty);
        let e = read(b"EXTENTS,1\n0.0,8.0\n", &opts).unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::NotDxf(_)), "{e}");
        assert_eq!(e.location, Some(Location::Line(1)));
        let e = read(b"999\njust a comment\n", &opts).unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::NotDxf(_)), "{e}");
    }

    #[test]
    fn header_units() {
        let opts = ReadOptions::default();
        let d = read(
            b"0\nSECTION\n2\nHEADER\n9\n$ACADVER\n1\nAC1015\n9\n$INSUNITS\n70\n4\n0\nENDSEC\n0\nEOF\n",
            &opts,
        )
        .unwrap();
        assert_eq!(d.units.code, Some(4));
        assert_eq!(d.units.declared, Some(LengthUnit::MM));
        assert!(d.notes.is_empty(), "{:?}", d.notes);

        // Wrong group code: tolerated with a note.
        let d = read(
            b"0\nSECTION\n2\nHEADER\n9\n$INSUNITS\n40\n1.0\n0\nENDSEC\n0\nEOF\n",
            &opts,
        )
        .unwrap();
        assert_eq!(d.units.code, Some(1));
        assert_eq!(d.units.declared, Some(LengthUnit::INCH));
        assert_eq!(d.notes.len(), 1, "{:?}", d.notes);

        let d = read(
            b"0\nSECTION\n2\nHEADER\n9\n$INSUNITS\n1\nmm\n0\nENDSEC\n0\nEOF\n",
            &opts,
        )
        .unwrap();
        assert_eq!(d.units, SourceUnits::default());
        assert_eq!(d.notes.len(), 1, "{:?}", d.notes);

        // A bad value under the right code is an error naming the line.
        let e = read(
            b"0\nSECTION\n2\nHEADER\n9\n$INSUNITS\n70\nmm\n0\nENDSEC\n0\nEOF\n",
            &opts,
        )
        .unwrap_err();
        assert_eq!(e.location, Some(Location::Line(8)));
    }

    #[test]
    fn stray_pairs_and_missing_endsec_are_noted() {
        let opts = ReadOptions::default();
        let text = "0\nENDSEC\n9\n$EXTMIN\n10\n0\n0\nSECTION\n2\nENTITIES\n0\nLINE\n10\n0\n20\n0\n11\n1\n21\n0\n0\nSECTION\n2\nOBJECTS\n0\nENDSEC\n0\nEOF\n";
        let d = read(text.as_bytes(), &opts).unwrap();
        assert_eq!(d.pieces.len(), 1);
        assert_eq!(d.notes.len(), 2, "{:?}", d.notes);
    }

    #[test]
    fn truncated_between_sections() {
        let opts = ReadOptions::default();
        let text = "0\nSECTION\n2\nENTITIES\n0\nENDSEC\n";
        let e = read(text.as_bytes(), &opts).unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::Truncated(_)), "{e}");
        assert_eq!(e.location, Some(Location::Line(6)));
        let e = read(dxf("0\nLINE\n").replace("0\nEOF\n", "").as_bytes(), &opts).unwrap_err();
        assert!(matches!(e.kind, ImportErrorKind::Truncated(_)), "{e}");
    }

    #[test]
    fn layer_names_decode() {
        assert_eq!(decode_text(b"Stahl"), "Stahl");
        assert_eq!(decode_text("Träger".as_bytes()), "Träger");
        assert_eq!(decode_text(b"Tr\xe4ger \x80"), "Träger €");
    }
}
