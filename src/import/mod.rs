//! Readers: turn a drawing file into a neutral [`Drawing`] of exact segments.
//!
//! Readers know nothing of section properties. They keep the drawing's own units and
//! coordinates (after block and coordinate-system transforms), and they lose nothing silently:
//! every entity is either turned into a [`Piece`] or counted in [`Drawing::skipped`].

pub mod dxf;
pub mod svg;
pub mod units;

use std::collections::BTreeMap;
use std::fmt;

use crate::geom::{CurveTable, ScaleTally, Segment};
pub use units::{LengthUnit, SourceUnits};

/// Where something sits in a file: a line number of an ASCII file or a byte offset of a
/// binary one (both 1-based lines, 0-based bytes, as editors and hex viewers show them).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Location {
    Line(u64),
    Byte(u64),
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Location::Line(n) => write!(f, "line {n}"),
            Location::Byte(n) => write!(f, "byte {n}"),
        }
    }
}

/// A layer name, shared by every piece on the layer (cheap to clone).
pub type LayerName = std::sync::Arc<str>;

/// A DXF entity handle (group 5): a hexadecimal number, shown as the file writes it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Handle(pub u64);

impl Handle {
    /// Parse the hexadecimal digits of group 5; `None` when they are not a handle.
    pub fn parse(text: &[u8]) -> Option<Handle> {
        let t = text.trim_ascii();
        if t.is_empty() || t.len() > 16 {
            return None;
        }
        let mut v = 0u64;
        for &b in t {
            let d = (b as char).to_digit(16)?;
            v = (v << 4) | d as u64;
        }
        Some(Handle(v))
    }
}

impl fmt::Display for Handle {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:X}", self.0)
    }
}

/// Which entity a piece came from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Origin {
    /// Entity type as written in the file, e.g. `LWPOLYLINE`.
    pub entity: &'static str,
    /// Where the entity starts in the file.
    pub location: Location,
    /// DXF handle (group 5), when the file has one.
    pub handle: Option<Handle>,
    /// Whether the entity is part of a block definition, placed by an INSERT.
    pub in_block: bool,
}

impl fmt::Display for Origin {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} at {}", self.entity, self.location)?;
        if let Some(h) = &self.handle {
            write!(f, " (handle {h})")?;
        }
        if self.in_block {
            write!(f, " in a block")?;
        }
        Ok(())
    }
}

/// A run of connected segments from one entity, in drawing units.
///
/// `closed` is set when the entity itself is closed (a circle, a polyline with its closed
/// flag); the closing edge is then already among `segments`. Open pieces are chained with
/// others by the geometry stage.
#[derive(Debug, Clone, PartialEq)]
pub struct Piece {
    pub segments: Vec<Segment>,
    pub closed: bool,
    pub layer: LayerName,
    pub origin: Origin,
}

/// What a reader produced from one file.
#[derive(Debug, Clone, Default)]
pub struct Drawing {
    pub units: SourceUnits,
    pub pieces: Vec<Piece>,
    /// Exact data of the curve pieces (ellipses, splines) among the pieces' segments: the
    /// span table indexed by [`CurvePiece::span`](crate::geom::CurvePiece), and the curves.
    pub curves: CurveTable,
    /// Entities not turned into pieces, by reason (e.g. `"TEXT"`, `"layer off: DIM"`).
    pub skipped: BTreeMap<String, usize>,
    /// Remarks for the user that are not errors.
    pub notes: Vec<String>,
    /// What the reader learnt about the file itself (format, release, code page; with
    /// [`ReadOptions::census`] also the LAYER table and entity counts).
    pub file: FileFacts,
    /// The DXF reader's tally of the pieces' extent and short segments, made as it added
    /// them (empty from other readers and for drawings built by hand); see [`ScaleTally`].
    pub scale: ScaleTally,
}

/// Facts about a drawing file beside its geometry, for `sectio explain`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FileFacts {
    /// An SVG file (else DXF).
    pub svg: bool,
    /// A binary DXF file (else ASCII).
    pub binary: bool,
    /// `$ACADVER` as written, e.g. `AC1015`.
    pub version: Option<String>,
    /// `$DWGCODEPAGE` as written, e.g. `ANSI_1252`.
    pub code_page: Option<String>,
    /// The encoding that text which is not UTF-8 was read with, e.g. `windows-1252`.
    pub text_encoding: &'static str,
    /// The LAYER table in file order (only with [`ReadOptions::census`]).
    pub layer_table: Vec<LayerState>,
    /// Model-space entities by (layer as written, entity type), whatever became of them
    /// (only with [`ReadOptions::census`]).
    pub entity_counts: BTreeMap<(String, String), usize>,
}

/// One entry of the LAYER table.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LayerState {
    pub name: String,
    pub off: bool,
    pub frozen: bool,
}

impl Drawing {
    pub fn skip(&mut self, reason: impl Into<String>) {
        *self.skipped.entry(reason.into()).or_insert(0) += 1;
    }
}

/// Reader settings that decide which entities count.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Only layers matching one of these globs (all layers when empty).
    pub layers: Vec<String>,
    /// Layers matching one of these globs are skipped.
    pub exclude_layers: Vec<String>,
    /// Also read entities on layers that are off or frozen.
    pub include_hidden_layers: bool,
    /// Take outlines from the boundary paths of HATCH entities too (skipped and counted
    /// otherwise).
    pub hatch_outlines: bool,
    /// Also keep the LAYER table and count model-space entities by layer and type, in
    /// [`Drawing::file`] (for `sectio explain`; off when measuring, which does not need them).
    pub census: bool,
    /// Millimetres per SVG user unit, overriding the page size and viewBox of SVG files.
    pub svg_mm_per_unit: Option<f64>,
}

impl ReadOptions {
    /// Whether entities on `layer` are wanted by the layer globs (case-insensitive, as DXF
    /// layer names are).
    pub fn layer_selected(&self, layer: &str) -> bool {
        (self.layers.is_empty() || self.layers.iter().any(|g| glob_match(g, layer)))
            && !self.exclude_layers.iter().any(|g| glob_match(g, layer))
    }
}

/// What went wrong reading a file.
#[derive(Debug, Clone, PartialEq)]
pub struct ImportError {
    pub location: Option<Location>,
    pub kind: ImportErrorKind,
}

#[derive(Debug, Clone, PartialEq)]
pub enum ImportErrorKind {
    /// The file has no bytes.
    Empty,
    /// The file is not a DXF file at all (neither group-code pairs nor the binary sentinel).
    NotDxf(String),
    /// The file ends before `0/EOF`.
    Truncated(String),
    /// A group code or value that cannot be read.
    Malformed(String),
    /// Something the reader does not support.
    Unsupported(String),
    /// An SVG file that is not well-formed XML, or whose root is not `<svg>`.
    MalformedSvg(String),
}

impl ImportError {
    pub fn new(location: Option<Location>, kind: ImportErrorKind) -> Self {
        ImportError { location, kind }
    }
}

impl fmt::Display for ImportError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.kind {
            ImportErrorKind::Empty => write!(f, "empty file")?,
            ImportErrorKind::NotDxf(m) => write!(f, "not a DXF file: {m}")?,
            ImportErrorKind::Truncated(m) => write!(f, "truncated file: {m}")?,
            ImportErrorKind::Malformed(m) => write!(f, "malformed DXF: {m}")?,
            ImportErrorKind::Unsupported(m) => write!(f, "unsupported: {m}")?,
            ImportErrorKind::MalformedSvg(m) => write!(f, "malformed SVG: {m}")?,
        }
        if let Some(loc) = self.location {
            write!(f, " (at {loc})")?;
        }
        Ok(())
    }
}

impl std::error::Error for ImportError {}

/// Case-insensitive glob match with `*` (any run) and `?` (any one character).
pub fn glob_match(pattern: &str, text: &str) -> bool {
    let p: Vec<char> = pattern.chars().flat_map(char::to_lowercase).collect();
    let t: Vec<char> = text.chars().flat_map(char::to_lowercase).collect();
    // Iterative matcher with one backtrack point for the last `*` (common practice).
    let (mut pi, mut ti) = (0, 0);
    let mut star: Option<(usize, usize)> = None;
    while ti < t.len() {
        if pi < p.len() && (p[pi] == '?' || p[pi] == t[ti]) {
            pi += 1;
            ti += 1;
        } else if pi < p.len() && p[pi] == '*' {
            star = Some((pi, ti));
            pi += 1;
        } else if let Some((sp, st)) = star {
            pi = sp + 1;
            ti = st + 1;
            star = Some((sp, st + 1));
        } else {
            return false;
        }
    }
    p[pi..].iter().all(|&c| c == '*')
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn globs() {
        assert!(glob_match("*", "anything"));
        assert!(glob_match("PROF*", "profile_1"));
        assert!(glob_match("a?c", "ABC"));
        assert!(!glob_match("a?c", "abbc"));
        assert!(glob_match("*dim*", "MY-DIMS"));
        assert!(!glob_match("dim", "dims"));
        assert!(glob_match("", ""));
        assert!(!glob_match("", "x"));
    }

    #[test]
    fn layer_selection() {
        let opts = ReadOptions {
            layers: vec!["prof*".into()],
            exclude_layers: vec!["*hidden".into()],
            include_hidden_layers: false,
            hatch_outlines: false,
            census: false,
            svg_mm_per_unit: None,
        };
        assert!(opts.layer_selected("PROFILE"));
        assert!(!opts.layer_selected("profile-hidden"));
        assert!(!opts.layer_selected("DIM"));
    }
}
