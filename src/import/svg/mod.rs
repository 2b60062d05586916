//! SVG reader: paths and basic shapes as exact [`Segment`](crate::geom::Segment)s in
//! millimetres, y up.
//!
//! The reader walks the XML itself (`roxmltree`), with `svgtypes` for path data, transforms,
//! lengths and the viewBox, all in f64. It reads `<path>`, `<rect>` (rounded corners too),
//! `<circle>`, `<ellipse>`, `<line>`, `<polyline>` and `<polygon>`, through `<g>`, `<a>`,
//! `<switch>`, nested `<svg>` and `<use>` (of an element or a `<symbol>`), composing every
//! `transform` on the way. Circles, ellipses, rounded corners and `A` commands stay true arcs,
//! Béziers stay Béziers ([`shapes`]); nothing is flattened, so properties come out exact.
//!
//! What is drawn is usvg's verdict ([`drawn`]): usvg keeps coordinates in f32 and turns every
//! arc into cubics (about 3e-4 of the area of a small circle), so it cannot give the geometry,
//! but it resolves the full CSS cascade, `<switch>`, `display`, `visibility` and the paint of
//! every path it draws. The walk *places* every element it reaches (its exact pieces on the
//! page), usvg's paths are paired with them by their boxes on the page ([`pair`]), and
//! [`Reader::settle`] adds each element with the paint usvg gives it. Elements usvg does not
//! draw are left out (noted); paths usvg draws that the walk did not place are read from
//! usvg's outline (noted); a stroke usvg does not paint (`stroke-width: 0`, a CAD hairline) is
//! still an outline. Markers are annotation: usvg is told not to draw them. When usvg cannot
//! read a file, the walk's own reading of the styles decides ([`Reader::settle_alone`]):
//! - `display:none` hides an element and its children; `visibility` (hidden, collapse) is
//!   inherited and can be undone by a child; `<defs>`, `<symbol>`, `<clipPath>`, `<mask>`,
//!   `<marker>` and `<pattern>` are not drawn (a `<use>` draws a symbol or element);
//! - `fill`, `stroke` and `fill-rule` are inherited, read from the `style` attribute, then
//!   from `<style>` sheets (selectors `tag`, `.class`, `#id`, `*` and lists of them; others
//!   are ignored with a note), then from presentation attributes;
//! - a `<use>`d element inherits from the `<use>`, as the specification says.
//!
//! Outlines and holes: a filled element's closed subpaths follow its fill rule. Under
//! `evenodd` every subpath bounds the material, so they are simply nested by containment
//! like DXF loops. Under `nonzero` a subpath whose two sides are both filled (e.g. an inner
//! one running the same way as the outer one) bounds nothing and is dropped with a note; the
//! remaining ones nest by containment with the same result as the fill rule. Separate
//! elements and stroke-only outlines are nested by containment like DXF loops. Subpaths that
//! cross each other are left to the crossing check (an error row). Open subpaths (no `Z`)
//! are open pieces, chained with others within the gap as DXF lines are.
//!
//! Units: the root's `width`/`height` (mm, cm, in, pt, pc; px and bare numbers at 96 per
//! inch, CSS) with its `viewBox` give millimetres per user unit (fitted as
//! `preserveAspectRatio` says, by default centred). Without a physical size one user unit is taken as one px,
//! 25.4/96 mm, and the row says so; [`ReadOptions::svg_mm_per_unit`] sets the scale instead.
//! y is flipped about the page's height (or about 0 when that is unknown), so a shape at the
//! top of the page has the larger y.
//!
//! Text is skipped and counted, images are counted. Layers are the element's `id`, or else
//! the nearest group's `inkscape:label` or `id`.

mod drawn;
mod shapes;

use std::collections::HashMap;
use std::str::FromStr;

use roxmltree::{Document, Node};
use svgtypes::{Length, LengthUnit as SvgUnit, PointsParser, Transform, ViewBox};

use super::{
    Drawing, ImportError, ImportErrorKind, LayerName, LengthUnit, Location, Origin, Piece,
    ReadOptions, SourceUnits,
};
use crate::geom::curve::Affine;
use crate::geom::fill::filled_boundary;
use crate::geom::moments::loop_moments;
use crate::geom::predicates::winding_number;
use crate::geom::{BBox, Point, Segment};
use shapes::Subpath;

const SVG_NS: &str = "http://www.w3.org/2000/svg";
const XLINK_NS: &str = "http://www.w3.org/1999/xlink";
const INKSCAPE_NS: &str = "http://www.inkscape.org/namespaces/inkscape";

/// Millimetres per CSS px: 96 px per inch (CSS Values and Units, §6.2).
pub const MM_PER_PX: f64 = 25.4 / 96.0;

/// Deepest nesting of `<use>` followed (deeper ones, and cycles, are skipped with a note).
const MAX_USE_DEPTH: usize = 32;

/// Deepest nesting of elements read (`<g>` in `<g>`…, `<use>` targets included): the reader
/// walks the tree recursively, and a deeper file is an error, not a stack overflow. Drawings
/// from CAD and illustration programs nest a few levels, rarely more than twenty.
const MAX_ELEMENT_DEPTH: usize = 256;

/// Whether `bytes` look like XML (an SVG file) rather than DXF: the first character after an
/// optional UTF-8 byte-order mark and white space is `<`. A DXF file starts with a group
/// code (ASCII) or `AutoCAD Binary DXF`.
pub fn looks_like_svg(bytes: &[u8]) -> bool {
    let b = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    b.trim_ascii_start().first() == Some(&b'<')
}

/// Read an SVG file held in memory: every drawn outline as pieces in millimetres, y up.
/// Never panics on file content.
pub fn read(bytes: &[u8], opts: &ReadOptions) -> Result<Drawing, ImportError> {
    if bytes.trim_ascii().is_empty() {
        return Err(ImportError::new(None, ImportErrorKind::Empty));
    }
    let (text, encoding) = decode(bytes);
    let parse_opts = roxmltree::ParsingOptions {
        allow_dtd: true,
        ..Default::default()
    };
    let doc = Document::parse_with_options(&text, parse_opts).map_err(|e| {
        ImportError::new(
            Some(Location::Line(e.pos().row as u64)),
            ImportErrorKind::MalformedSvg(e.to_string()),
        )
    })?;
    let root = doc.root_element();
    if root.tag_name().name() != "svg" {
        return Err(ImportError::new(
            Some(Location::Line(1)),
            ImportErrorKind::MalformedSvg(format!(
                "the root element is <{}>, not <svg>",
                root.tag_name().name()
            )),
        ));
    }
    let mut reader = Reader {
        opts,
        drawing: Drawing::default(),
        lines: LineIndex::new(&text),
        ids: HashMap::new(),
        css: Vec::new(),
        css_ignored: false,
        use_stack: Vec::new(),
        placed: Vec::new(),
        local_extent: 0.0,
        root_view: root_view(root),
        depth: 0,
        too_deep: None,
    };
    reader.drawing.file.text_encoding = encoding;
    reader.drawing.file.svg = true;
    for n in doc.descendants().filter(Node::is_element) {
        if let Some(id) = n.attribute("id") {
            reader.ids.entry(id.to_string()).or_insert(n);
        }
        if n.tag_name().name() == "style" {
            let sheet: String = n.children().filter_map(|c| c.text()).collect();
            reader.read_style_sheet(&sheet);
        }
    }
    let page = reader.page_map(root);
    reader.drawing.units = SourceUnits {
        code: None,
        declared: Some(LengthUnit::MM),
    };
    let style = Style::default();
    let layer = LayerName::from("");
    reader.children(root, &Affine::IDENTITY, &page, &style, &layer, false);
    if let Some(line) = reader.too_deep {
        return Err(ImportError::new(
            Some(Location::Line(line)),
            ImportErrorKind::MalformedSvg(format!(
                "elements nested more than {MAX_ELEMENT_DEPTH} deep"
            )),
        ));
    }
    crate::time_limit::check("asking usvg what the SVG draws");
    let verdict = if reader.local_extent > drawn::MAX_LOCAL_EXTENT {
        Err(format!(
            "coordinates or radii up to {:.3e} user units: usvg would turn arcs into too many curves",
            reader.local_extent
        ))
    } else {
        drawn::drawn_paths(&doc, &page)
    };
    match verdict {
        Ok(drawn) => reader.settle(drawn, root),
        Err(why) => {
            reader.note(format!(
                "usvg could not read the file ({why}): what is drawn was decided by sectio's reader alone"
            ));
            reader.settle_alone();
        }
    }
    Ok(reader.drawing)
}

/// The file as text: UTF-8 when it is, else in the encoding its XML declaration names
/// (`encoding_rs` labels), else Windows-1252. Returns the name of the encoding used.
fn decode(bytes: &[u8]) -> (std::borrow::Cow<'_, str>, &'static str) {
    let body = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if let Ok(s) = std::str::from_utf8(body) {
        return (s.into(), "UTF-8");
    }
    let head = String::from_utf8_lossy(&body[..body.len().min(200)]).into_owned();
    let label = head
        .find("encoding=")
        .and_then(|i| {
            // The value in single or double quotes (XML 1.0, §4.3.3); the quote is ASCII, so
            // slicing past it stays on a character boundary.
            let rest = &head[i + 9..];
            let q = rest.chars().next().filter(|&c| c == '"' || c == '\'')?;
            let rest = &rest[1..];
            rest.find(q).map(|j| rest[..j].to_string())
        })
        .and_then(|l| encoding_rs::Encoding::for_label(l.as_bytes()))
        .unwrap_or(encoding_rs::WINDOWS_1252);
    let (text, _, _) = label.decode(body);
    (text.into_owned().into(), label.name())
}

/// Byte offsets of line starts, for 1-based line numbers of elements.
struct LineIndex(Vec<usize>);

impl LineIndex {
    fn new(text: &str) -> Self {
        let mut starts = vec![0];
        starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
        LineIndex(starts)
    }

    fn line(&self, pos: usize) -> u64 {
        self.0.partition_point(|&s| s <= pos) as u64
    }
}

/// A geometry element as the walk placed it: its pieces on the page (mm, y up), their box,
/// and what sectio's own reading of the styles says.
struct Placed {
    pieces: Vec<(Vec<Segment>, bool)>,
    bbox: BBox,
    style: Style,
    layer: LayerName,
    /// Whether `--layer` / `--exclude-layer` choose its layer.
    selected: bool,
    origin: Origin,
}

/// The inherited paint state of an element.
#[derive(Debug, Clone)]
struct Style {
    filled: bool,
    stroked: bool,
    evenodd: bool,
    visible: bool,
}

impl Default for Style {
    /// SVG initial values: fill black, stroke none, nonzero, visible (SVG 1.1 §11.2-11.4).
    fn default() -> Self {
        Style {
            filled: true,
            stroked: false,
            evenodd: false,
            visible: true,
        }
    }
}

/// One rule of a `<style>` sheet: the selectors (`tag`, `.class`, `#id`, `*`) and the
/// declarations.
struct CssRule {
    selectors: Vec<String>,
    decls: Vec<(String, String)>,
}

struct Reader<'a, 'input> {
    opts: &'a ReadOptions,
    drawing: Drawing,
    lines: LineIndex,
    ids: HashMap<String, Node<'a, 'input>>,
    css: Vec<CssRule>,
    /// Whether a style sheet had selectors the walk's own styles cannot match (only said when
    /// usvg, which matches them all, cannot read the file).
    css_ignored: bool,
    /// `<use>` elements being followed (to stop cycles).
    use_stack: Vec<roxmltree::NodeId>,
    /// The root's viewBox size (or its width and height in px without one): what 100 %
    /// means for a `<use>` of a symbol.
    root_view: Option<(f64, f64)>,
    /// The largest coordinate or radius of any element in its own user units.
    local_extent: f64,
    /// Elements placed by the walk, in document order (their pieces wait for usvg's verdict).
    placed: Vec<Placed>,
    /// Elements open in the walk, and the first element found deeper than
    /// [`MAX_ELEMENT_DEPTH`] (its line), which makes the file an error.
    depth: usize,
    too_deep: Option<u64>,
}

/// `name: value; …` pairs of a `style` attribute or a CSS block.
fn declarations(text: &str) -> impl Iterator<Item = (&str, &str)> {
    text.split(';').filter_map(|d| {
        let (k, v) = d.split_once(':')?;
        let v = v.trim().trim_end_matches("!important").trim();
        Some((k.trim(), v))
    })
}

/// A length in user units (px); `None` for units relative to fonts or the viewport.
fn user_length(len: Length) -> Option<f64> {
    let f = match len.unit {
        SvgUnit::None | SvgUnit::Px => 1.0,
        SvgUnit::In => 96.0,
        SvgUnit::Cm => 96.0 / 2.54,
        SvgUnit::Mm => 96.0 / 25.4,
        SvgUnit::Pt => 96.0 / 72.0,
        SvgUnit::Pc => 16.0,
        _ => return None,
    };
    Some(len.number * f).filter(|v| v.is_finite())
}

/// A physical length in millimetres, and whether it was given in px (or as a bare number).
fn physical_mm(len: Length) -> Option<(f64, bool)> {
    let (f, px) = match len.unit {
        SvgUnit::None | SvgUnit::Px => (MM_PER_PX, true),
        SvgUnit::In => (25.4, false),
        SvgUnit::Cm => (10.0, false),
        SvgUnit::Mm => (1.0, false),
        SvgUnit::Pt => (25.4 / 72.0, false),
        SvgUnit::Pc => (25.4 / 6.0, false),
        _ => return None,
    };
    let v = len.number * f;
    (v.is_finite() && v > 0.0).then_some((v, px))
}

/// The SVG matrix (a b c d e f: x' = a·x + c·y + e, y' = b·x + d·y + f) as an [`Affine`].
fn affine(t: Transform) -> Affine {
    Affine {
        m: [t.a, t.c, t.b, t.d],
        t: Point::new(t.e, t.f),
    }
}

impl<'a, 'input> Reader<'a, 'input> {
    fn note(&mut self, msg: String) {
        if !self.drawing.notes.contains(&msg) {
            self.drawing.notes.push(msg);
        }
    }

    fn read_style_sheet(&mut self, sheet: &str) {
        // Comments out, then `selectors { declarations }` blocks.
        let mut text = String::with_capacity(sheet.len());
        let mut rest = sheet;
        while let Some(i) = rest.find("/*") {
            text.push_str(&rest[..i]);
            rest = rest[i..].find("*/").map_or("", |j| &rest[i + j + 2..]);
        }
        text.push_str(rest);
        let mut ignored = false;
        for block in text.split('}') {
            let Some((sel, body)) = block.split_once('{') else {
                continue;
            };
            let mut selectors = Vec::new();
            for s in sel.split(',').map(str::trim).filter(|s| !s.is_empty()) {
                let simple = s
                    .chars()
                    .all(|c| c.is_alphanumeric() || "-_.#*".contains(c))
                    && s.chars().skip(1).all(|c| c != '.' && c != '#');
                if simple {
                    selectors.push(s.to_string());
                } else {
                    ignored = true;
                }
            }
            let decls = declarations(body)
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
            self.css.push(CssRule { selectors, decls });
        }
        self.css_ignored |= ignored;
    }

    /// A property's specified value: the `style` attribute, then the style sheets (the most
    /// specific matching selector, the later rule on a tie), then the presentation attribute.
    fn property(&self, n: Node, name: &str) -> Option<String> {
        if let Some(style) = n.attribute("style") {
            if let Some((_, v)) = declarations(style).filter(|(k, _)| *k == name).last() {
                return Some(v.to_string());
            }
        }
        if !self.css.is_empty() {
            let tag = n.tag_name().name();
            let id = n.attribute("id");
            let classes: Vec<&str> = n
                .attribute("class")
                .unwrap_or("")
                .split_whitespace()
                .collect();
            let mut best: Option<(u8, &str)> = None;
            for rule in &self.css {
                let Some((_, v)) = rule.decls.iter().rev().find(|(k, _)| k == name) else {
                    continue;
                };
                for s in &rule.selectors {
                    let spec = if let Some(c) = s.strip_prefix('.') {
                        classes.contains(&c).then_some(2)
                    } else if let Some(i) = s.strip_prefix('#') {
                        (id == Some(i)).then_some(3)
                    } else if s == "*" {
                        Some(0)
                    } else {
                        (s == tag).then_some(1)
                    };
                    if let Some(spec) = spec {
                        if best.is_none_or(|(b, _)| spec >= b) {
                            best = Some((spec, v));
                        }
                    }
                }
            }
            if let Some((_, v)) = best {
                return Some(v.to_string());
            }
        }
        n.attribute(name).map(str::to_string)
    }

    /// The style of `n` given its parent's, and whether it is displayed at all.
    fn style_of(&self, n: Node, parent: &Style) -> (Style, bool) {
        let mut s = parent.clone();
        if let Some(v) = self.property(n, "fill") {
            match v.as_str() {
                "inherit" => {}
                "none" => s.filled = false,
                _ => s.filled = true,
            }
        }
        if let Some(v) = self.property(n, "stroke") {
            match v.as_str() {
                "inherit" => {}
                "none" => s.stroked = false,
                _ => s.stroked = true,
            }
        }
        if let Some(v) = self.property(n, "fill-rule") {
            match v.as_str() {
                "evenodd" => s.evenodd = true,
                "nonzero" => s.evenodd = false,
                _ => {}
            }
        }
        if let Some(v) = self.property(n, "visibility") {
            match v.as_str() {
                "hidden" | "collapse" => s.visible = false,
                "visible" => s.visible = true,
                _ => {}
            }
        }
        let displayed = self.property(n, "display").as_deref() != Some("none");
        (s, displayed)
    }

    /// The map from root user units to millimetres, y up: the viewport fit, the root's own
    /// `transform`, then the flip about the page height.
    fn page_map(&mut self, root: Node) -> Affine {
        let (fit, page_w, page_h) = self.viewport_map(root);
        if let Some(t) = root.attribute("transform") {
            if Transform::from_str(t).is_err() {
                let line = self.lines.line(root.range().start);
                self.note(format!("transform at line {line} not read: ignored"));
            }
        }
        let own = drawn::root_own_transform(root, page_w, page_h, MM_PER_PX);
        let flip = Affine {
            m: [1.0, 0.0, 0.0, -1.0],
            t: Point::new(0.0, page_h),
        };
        fit.then(&own).then(&flip)
    }

    /// The map from root user units to the viewport in mm (y down), and the page width and
    /// height in mm (0 when unknown; the flip is about the height), with a note on any
    /// assumption.
    fn viewport_map(&mut self, root: Node) -> (Affine, f64, f64) {
        let len = |name: &str| root.attribute(name).and_then(|v| Length::from_str(v).ok());
        let (w, h) = (len("width"), len("height"));
        let view_box = root
            .attribute("viewBox")
            .and_then(|v| ViewBox::from_str(v).ok());
        let (wm, hm) = (w.and_then(physical_mm), h.and_then(physical_mm));
        if let Some(s) = self.opts.svg_mm_per_unit {
            self.note(format!("1 user unit = {s} mm (--svg-scale)"));
            let page = |vb_end: Option<f64>, physical: Option<(f64, bool)>| match (vb_end, physical)
            {
                (Some(end), _) => end * s,
                (None, Some((mm, _))) => mm,
                _ => 0.0,
            };
            let page_w = page(view_box.map(|vb| vb.x + vb.w), wm);
            let page_h = page(view_box.map(|vb| vb.y + vb.h), hm);
            return (Affine::scaling(s, s), page_w, page_h);
        }
        let px_note = "page size in px (or bare numbers), taken at 96 px per inch (CSS)";
        let assumed = "no physical page size: 1 user unit taken as 1 px = 25.4/96 mm \
                       (--svg-scale sets mm per user unit)";
        match view_box {
            Some(vb) => {
                let (sx, sy) = match (wm, hm) {
                    (Some((w, _)), Some((h, _))) => (w / vb.w, h / vb.h),
                    (Some((w, _)), None) => (w / vb.w, w / vb.w),
                    (None, Some((h, _))) => (h / vb.h, h / vb.h),
                    (None, None) => {
                        self.note(assumed.into());
                        (MM_PER_PX, MM_PER_PX)
                    }
                };
                if wm.is_some_and(|w| w.1) || hm.is_some_and(|h| h.1) {
                    self.note(px_note.into());
                }
                // The viewBox fitted into the viewport as preserveAspectRatio says (default
                // xMidYMid meet: uniform scale, centred; SVG 1.1 §7.8).
                let aspect = root
                    .attribute("preserveAspectRatio")
                    .and_then(|v| svgtypes::AspectRatio::from_str(v).ok())
                    .unwrap_or_default();
                let map = drawn::viewbox_fit(vb, aspect, vb.w * sx, vb.h * sy);
                (
                    map,
                    wm.map_or(vb.w * sx, |w| w.0),
                    hm.map_or(vb.h * sy, |h| h.0),
                )
            }
            None => {
                match (wm, hm) {
                    (None, None) => self.note(assumed.into()),
                    (Some((_, false)), _) | (_, Some((_, false))) => self.note(
                        "physical page size but no viewBox: user units are px, \
                         taken at 96 px per inch (CSS)"
                            .into(),
                    ),
                    _ => self.note(px_note.into()),
                }
                (
                    Affine::scaling(MM_PER_PX, MM_PER_PX),
                    wm.map_or(0.0, |w| w.0),
                    hm.map_or(0.0, |h| h.0),
                )
            }
        }
    }

    /// The `transform` attribute of `n` (identity when absent; a bad one is noted).
    fn local_transform(&mut self, n: Node) -> Affine {
        match n.attribute("transform") {
            None => Affine::IDENTITY,
            Some(t) => match Transform::from_str(t) {
                Ok(t) => affine(t),
                Err(e) => {
                    let line = self.lines.line(n.range().start);
                    self.note(format!("transform at line {line} not read ({e}): ignored"));
                    Affine::IDENTITY
                }
            },
        }
    }

    fn children(
        &mut self,
        n: Node<'a, 'input>,
        ctm: &Affine,
        page: &Affine,
        style: &Style,
        layer: &LayerName,
        in_use: bool,
    ) {
        if self.too_deep.is_some() {
            return;
        }
        if self.depth >= MAX_ELEMENT_DEPTH {
            self.too_deep = Some(self.lines.line(n.range().start));
            return;
        }
        self.depth += 1;
        for c in n.children().filter(Node::is_element) {
            crate::time_limit::check("reading the SVG elements");
            self.element(c, ctm, page, style, layer, in_use);
        }
        self.depth -= 1;
    }

    fn element(
        &mut self,
        n: Node<'a, 'input>,
        parent_ctm: &Affine,
        page: &Affine,
        parent_style: &Style,
        parent_layer: &LayerName,
        in_use: bool,
    ) {
        let ns = n.tag_name().namespace();
        if ns.is_some_and(|ns| ns != SVG_NS) {
            return;
        }
        let name = n.tag_name().name();
        let (style, displayed) = self.style_of(n, parent_style);
        if !displayed {
            if matches!(
                name,
                "path"
                    | "rect"
                    | "circle"
                    | "ellipse"
                    | "line"
                    | "polyline"
                    | "polygon"
                    | "g"
                    | "use"
            ) {
                self.drawing.skip("hidden (display:none)");
            }
            return;
        }
        match name {
            "g" | "a" | "switch" | "svg" => {
                let mut ctm = self.local_transform(n).then(parent_ctm);
                if name == "svg" {
                    let at = |k| {
                        n.attribute(k)
                            .and_then(|v| Length::from_str(v).ok())
                            .and_then(user_length)
                            .unwrap_or(0.0)
                    };
                    ctm = Affine::translation(Point::new(at("x"), at("y"))).then(&ctm);
                    // A viewBox fitted into the nested viewport (SVG 1.1 §7.7-7.8), when
                    // its width and height are absolute; otherwise (percentages, or absent:
                    // 100 %) the walk does not place the content and usvg's outlines of it
                    // are read instead (see `settle`).
                    let size = |k| {
                        n.attribute(k)
                            .and_then(|v| Length::from_str(v).ok())
                            .and_then(user_length)
                            .filter(|v| *v > 0.0)
                    };
                    let view_box = n
                        .attribute("viewBox")
                        .and_then(|v| ViewBox::from_str(v).ok())
                        .filter(|vb| vb.w > 0.0 && vb.h > 0.0);
                    if let (Some(vb), Some(w), Some(h)) = (view_box, size("width"), size("height"))
                    {
                        let aspect = n
                            .attribute("preserveAspectRatio")
                            .and_then(|v| svgtypes::AspectRatio::from_str(v).ok())
                            .unwrap_or_default();
                        ctm = drawn::viewbox_fit(vb, aspect, w, h).then(&ctm);
                    } else if n.attribute("viewBox").is_some() {
                        self.note(
                            "viewBox of a nested <svg> without an absolute width and height not fitted by sectio's reader".into(),
                        );
                    }
                }
                let layer = n
                    .attribute((INKSCAPE_NS, "label"))
                    .or_else(|| n.attribute("id"))
                    .map_or_else(|| parent_layer.clone(), LayerName::from);
                self.children(n, &ctm, page, &style, &layer, in_use);
            }
            "use" => self.use_element(n, parent_ctm, page, &style, parent_layer),
            "path" | "rect" | "circle" | "ellipse" | "line" | "polyline" | "polygon" => {
                let layer = n
                    .attribute("id")
                    .map_or_else(|| parent_layer.clone(), LayerName::from);
                // Every element the walk reaches is placed, even one that will be left out
                // (layer not chosen, hidden, unpainted): usvg's paths are paired with the
                // placed elements, and one of them must not be taken for something else.
                let selected = self.opts.layer_selected(&layer);
                let ctm = self.local_transform(n).then(parent_ctm);
                let subpaths = self.shape(n, name, selected);
                self.local_extent = subpaths
                    .iter()
                    .map(shapes::local_extent)
                    .fold(self.local_extent, f64::max);
                let map = ctm.then(page);
                let pieces: Vec<(Vec<Segment>, bool)> = subpaths
                    .iter()
                    .map(|s| (shapes::emit(s, &map, &mut self.drawing.curves), s.closed))
                    .filter(|(segs, _)| !segs.is_empty())
                    .collect();
                if pieces.is_empty() {
                    return;
                }
                let bbox = pieces
                    .iter()
                    .flat_map(|p| &p.0)
                    .fold(BBox::EMPTY, |b, s| b.union(&s.bbox()));
                let entity: &'static str = match name {
                    "path" => "path",
                    "rect" => "rect",
                    "circle" => "circle",
                    "ellipse" => "ellipse",
                    "line" => "line",
                    "polyline" => "polyline",
                    _ => "polygon",
                };
                let origin = Origin {
                    entity,
                    location: Location::Line(self.lines.line(n.range().start)),
                    handle: None,
                    in_block: in_use,
                };
                self.placed.push(Placed {
                    pieces,
                    bbox,
                    style,
                    layer,
                    selected,
                    origin,
                });
            }
            "text" => self.drawing.skip("text"),
            "image" => self.drawing.skip("image"),
            _ => {}
        }
    }

    /// `<use>`: the referenced element (or a symbol's children), moved by the use's
    /// `transform` and then by `x`, `y` (SVG 1.1 §5.6), styled as a child of the `<use>`.
    fn use_element(
        &mut self,
        n: Node<'a, 'input>,
        parent_ctm: &Affine,
        page: &Affine,
        style: &Style,
        parent_layer: &LayerName,
    ) {
        let href = n
            .attribute((XLINK_NS, "href"))
            .or_else(|| n.attribute("href"));
        let line = self.lines.line(n.range().start);
        let Some(target) = href
            .and_then(|h| h.trim().strip_prefix('#'))
            .and_then(|id| self.ids.get(id).copied())
        else {
            self.note(format!(
                "<use> at line {line} refers to no element of the file: skipped"
            ));
            return;
        };
        if self.use_stack.len() >= MAX_USE_DEPTH || self.use_stack.contains(&n.id()) {
            self.note(format!(
                "<use> at line {line} refers to itself or nests too deep: skipped"
            ));
            return;
        }
        let at = |k| {
            n.attribute(k)
                .and_then(|v| Length::from_str(v).ok())
                .and_then(user_length)
                .unwrap_or(0.0)
        };
        let ctm = Affine::translation(Point::new(at("x"), at("y")))
            .then(&self.local_transform(n))
            .then(parent_ctm);
        let layer = n
            .attribute("id")
            .map_or_else(|| parent_layer.clone(), LayerName::from);
        self.use_stack.push(n.id());
        if target.tag_name().name() == "symbol" {
            let (style, displayed) = self.style_of(target, style);
            let ctm = self.symbol_fit(n, target).then(&ctm);
            if displayed {
                self.children(target, &ctm, page, &style, &layer, true);
            }
        } else {
            self.element(target, &ctm, page, style, &layer, true);
        }
        self.use_stack.pop();
    }

    /// A symbol's `viewBox` fitted into the size of the `<use>` placing it (its `width` and
    /// `height`, 100 % by default, of the page's viewBox; SVG 1.1 §5.6 and §7.8, as usvg
    /// does); identity without a viewBox, or when the size is unknown (usvg's outline is
    /// then measured, see `settle`).
    fn symbol_fit(&self, use_node: Node, symbol: Node) -> Affine {
        let Some(vb) = symbol
            .attribute("viewBox")
            .and_then(|v| ViewBox::from_str(v).ok())
            .filter(|vb| vb.w > 0.0 && vb.h > 0.0)
        else {
            return Affine::IDENTITY;
        };
        let size = |k: &str, full: Option<f64>| match use_node
            .attribute(k)
            .and_then(|v| Length::from_str(v).ok())
        {
            Some(l) if l.unit == SvgUnit::Percent => full.map(|f| l.number / 100.0 * f),
            Some(l) => user_length(l),
            None => full,
        };
        let (vw, vh) = self
            .root_view
            .map_or((None, None), |(w, h)| (Some(w), Some(h)));
        match (size("width", vw), size("height", vh)) {
            (Some(w), Some(h)) if w > 0.0 && h > 0.0 => {
                let aspect = symbol
                    .attribute("preserveAspectRatio")
                    .and_then(|v| svgtypes::AspectRatio::from_str(v).ok())
                    .unwrap_or_default();
                drawn::viewbox_fit(vb, aspect, w, h)
            }
            _ => Affine::IDENTITY,
        }
    }

    /// A shape element's subpaths in its own user units; notes and counts of what is wrong
    /// with it only when `report` (the element's layer is chosen).
    fn shape(&mut self, n: Node, name: &str, report: bool) -> Vec<Subpath> {
        let line = self.lines.line(n.range().start);
        let num = |k: &str| -> Option<f64> {
            n.attribute(k)
                .and_then(|v| Length::from_str(v).ok())
                .and_then(user_length)
        };
        let num0 = |k: &str| num(k).unwrap_or(0.0);
        match name {
            "path" => {
                let (subs, err) = shapes::path_data(n.attribute("d").unwrap_or(""));
                if let (Some(e), true) = (err, report) {
                    self.note(format!(
                        "path data at line {line} ends in an error ({e}): read up to it"
                    ));
                }
                subs
            }
            "rect" => {
                let (w, h) = (num0("width"), num0("height"));
                if !(w > 0.0 && h > 0.0) {
                    if report {
                        self.drawing.skip("rect without area");
                    }
                    return Vec::new();
                }
                // Auto radii take the other one; both are clamped to half the sides
                // (SVG 1.1 §9.2).
                let (rx, ry) = match (num("rx").map(f64::abs), num("ry").map(f64::abs)) {
                    (None, None) => (0.0, 0.0),
                    (Some(r), None) | (None, Some(r)) => (r, r),
                    (Some(a), Some(b)) => (a, b),
                };
                let (rx, ry) = (rx.min(0.5 * w), ry.min(0.5 * h));
                vec![shapes::rect(num0("x"), num0("y"), w, h, rx, ry)]
            }
            "circle" | "ellipse" => {
                let c = Point::new(num0("cx"), num0("cy"));
                let (rx, ry) = if name == "circle" {
                    (num0("r"), num0("r"))
                } else {
                    match (num("rx"), num("ry")) {
                        (Some(a), None) | (None, Some(a)) => (a, a),
                        (a, b) => (a.unwrap_or(0.0), b.unwrap_or(0.0)),
                    }
                };
                if !(rx > 0.0 && ry > 0.0) {
                    if report {
                        self.drawing.skip(format!("{name} with zero radius"));
                    }
                    return Vec::new();
                }
                vec![shapes::ellipse(c, rx, ry)]
            }
            "line" => {
                let a = Point::new(num0("x1"), num0("y1"));
                let b = Point::new(num0("x2"), num0("y2"));
                vec![shapes::poly(&[a, b], false)]
            }
            _ => {
                let pts: Vec<Point> = PointsParser::from(n.attribute("points").unwrap_or(""))
                    .map(|(x, y)| Point::new(x, y))
                    .collect();
                vec![shapes::poly(&pts, name == "polygon")]
            }
        }
    }

    /// usvg's verdict on every placed element (see [`drawn`]): an element paired with a path
    /// usvg draws takes usvg's paint (filled or not, fill rule, stroked); one usvg does not
    /// draw is left out with a note; a path usvg draws that the walk did not place keeps
    /// usvg's outline, with a note. One exception by design: a stroke usvg does not paint
    /// (`stroke-width: 0`, a CAD program's hairline) is still an outline.
    fn settle(&mut self, drawn: Vec<drawn::Drawn>, root: Node) {
        let placed = std::mem::take(&mut self.placed);
        let partners = pair(&placed, &drawn);
        let mut used = vec![false; drawn.len()];
        let mut not_drawn: Vec<Origin> = Vec::new();
        let mut hairlines = 0;
        for (p, d) in placed.into_iter().zip(partners) {
            if let Some(d) = d {
                used[d] = true;
            }
            if !p.selected {
                self.drawing
                    .skip(format!("layer not selected: {}", p.layer));
                continue;
            }
            let style = match d.map(|d| &drawn[d]) {
                Some(d) if d.visible => Style {
                    filled: d.fill.is_some(),
                    stroked: d.stroked,
                    evenodd: d.fill.unwrap_or(p.style.evenodd),
                    visible: true,
                },
                Some(d) if d.fill.is_none() && !d.stroked && p.style.visible && p.style.stroked => {
                    hairlines += 1;
                    Style {
                        filled: false,
                        ..p.style
                    }
                }
                Some(d) if d.fill.is_none() && !d.stroked && p.style.visible => {
                    self.drawing.skip("neither filled nor stroked");
                    continue;
                }
                Some(_) => {
                    self.drawing.skip("hidden (visibility)");
                    continue;
                }
                None if !p.style.visible => {
                    self.drawing.skip("hidden (visibility)");
                    continue;
                }
                None if !p.style.filled && !p.style.stroked => {
                    self.drawing.skip("neither filled nor stroked");
                    continue;
                }
                None => {
                    self.drawing.skip("not drawn (usvg)");
                    not_drawn.push(p.origin);
                    continue;
                }
            };
            self.add_pieces(p.pieces, &style, p.layer, p.origin);
        }
        if hairlines > 0 {
            self.note(format!(
                "{hairlines} element{} stroked with a width usvg does not paint (e.g. stroke-width 0, a CAD hairline) read as outlines",
                if hairlines == 1 { "" } else { "s" }
            ));
        }
        if let Some(first) = not_drawn.first() {
            self.note(format!(
                "{} element{} not drawn by usvg (e.g. an unchosen <switch> branch, a style rule that hides it, or placed where usvg does not draw it), first {first}: left out",
                not_drawn.len(),
                if not_drawn.len() == 1 { "" } else { "s" }
            ));
        }
        let mut kept = 0;
        for (d, used) in drawn.iter().zip(used) {
            if used || !d.visible || d.subpaths.is_empty() {
                continue;
            }
            let layer = LayerName::from(d.id.as_str());
            if !self.opts.layer_selected(&layer) {
                self.drawing.skip(format!("layer not selected: {layer}"));
                continue;
            }
            let pieces: Vec<(Vec<Segment>, bool)> = d
                .subpaths
                .iter()
                .map(|s| (shapes::emit(s, &d.map, &mut self.drawing.curves), s.closed))
                .filter(|(segs, _)| !segs.is_empty())
                .collect();
            let element = self.ids.get(d.id.as_str()).copied().unwrap_or(root);
            let origin = Origin {
                entity: "path drawn by usvg",
                location: Location::Line(self.lines.line(element.range().start)),
                handle: None,
                in_block: false,
            };
            let style = Style {
                filled: d.fill.is_some(),
                stroked: d.stroked,
                evenodd: d.fill.unwrap_or(false),
                visible: true,
            };
            self.add_pieces(pieces, &style, layer, origin);
            kept += 1;
        }
        if kept > 0 {
            self.note(format!(
                "{kept} path{} drawn by usvg not placed by sectio's reader: read from usvg's outline (f32, arcs as cubics; not exact)",
                if kept == 1 { "" } else { "s" }
            ));
        }
    }

    /// Without usvg's verdict: sectio's own reading of the styles decides.
    fn settle_alone(&mut self) {
        if self.css_ignored {
            self.note("style sheet selectors other than tag, .class, #id and * ignored".into());
        }
        for p in std::mem::take(&mut self.placed) {
            if !p.selected {
                self.drawing
                    .skip(format!("layer not selected: {}", p.layer));
            } else if !p.style.visible {
                self.drawing.skip("hidden (visibility)");
            } else if !p.style.filled && !p.style.stroked {
                self.drawing.skip("neither filled nor stroked");
            } else {
                self.add_pieces(p.pieces, &p.style, p.layer, p.origin);
            }
        }
    }

    /// An element's pieces (on the page) into the drawing, as its paint says: for a filled
    /// element, subpaths that cross are replaced by the outline of what the fill rule fills,
    /// and under `nonzero` closed subpaths with fill on both sides are dropped (see the
    /// module doc).
    fn add_pieces(
        &mut self,
        mut pieces: Vec<(Vec<Segment>, bool)>,
        style: &Style,
        layer: LayerName,
        origin: Origin,
    ) {
        let n_closed = pieces.iter().filter(|p| p.1).count();
        // Filled subpaths that cross each other or themselves: the outline of what the fill
        // rule fills (`geom::fill`), not the subpaths themselves.
        let resolved = if style.filled && n_closed == pieces.len() {
            let subpaths: Vec<Vec<Segment>> = pieces.iter().map(|p| p.0.clone()).collect();
            filled_boundary(&subpaths, style.evenodd)
        } else {
            None
        };
        if let Some(loops) = resolved {
            let rule = if style.evenodd { "evenodd" } else { "nonzero" };
            self.note(format!(
                "a filled path whose subpaths cross was taken by its fill rule ({rule}): its outline is the boundary of what it fills"
            ));
            pieces = loops.into_iter().map(|l| (l, true)).collect();
        } else if style.filled && !style.evenodd && n_closed >= 2 {
            let dropped = self.nonzero_inner(&mut pieces);
            if dropped > 0 {
                self.note(format!(
                    "{dropped} subpath{} inside filled material under fill-rule nonzero (same direction as the one around) counted as material, not holes",
                    if dropped == 1 { "" } else { "s" }
                ));
            }
        }
        for (segments, closed) in pieces {
            self.drawing.pieces.push(Piece {
                segments,
                closed,
                layer: layer.clone(),
                origin,
            });
        }
    }

    /// Drop the closed subpaths that do not separate filled from unfilled under the nonzero
    /// rule: with w the winding number of the other closed subpaths at a point of this one,
    /// and w ± 1 just inside it (its own direction), the subpath bounds the fill only when
    /// exactly one of w and w ± 1 is zero (SVG 1.1 §11.3, fill-rule). Returns how many.
    fn nonzero_inner(&self, pieces: &mut Vec<(Vec<Segment>, bool)>) -> usize {
        let spans = &self.drawing.curves.spans;
        let closed: Vec<usize> = (0..pieces.len()).filter(|&i| pieces[i].1).collect();
        let boxes: Vec<BBox> = closed
            .iter()
            .map(|&i| {
                pieces[i]
                    .0
                    .iter()
                    .fold(BBox::EMPTY, |b, s| b.union(&s.bbox()))
            })
            .collect();
        let mut keep = vec![true; pieces.len()];
        for (k, &i) in closed.iter().enumerate() {
            let segs = &pieces[i].0;
            let probe = match &segs[0] {
                Segment::Line { a, b } => (*a + *b) * 0.5,
                Segment::Arc(arc) => arc.point_at(0.5),
                Segment::Curve(c) => c.mid,
            };
            let mut w = 0;
            for (m, &j) in closed.iter().enumerate() {
                if m != k && boxes[m].overlaps(&point_box(probe), 0.0) {
                    w += winding_number(&pieces[j].0, probe);
                }
            }
            let own = loop_moments(segs, probe, spans).a.signum() as i32;
            if (w != 0) == (w + own != 0) {
                keep[i] = false;
            }
        }
        let before = pieces.len();
        let mut idx = 0;
        pieces.retain(|_| {
            idx += 1;
            keep[idx - 1]
        });
        before - pieces.len()
    }
}

/// For each placed element, the path of usvg's tree that draws it, if any: the one whose box
/// on the page agrees on all four sides within 2e-3 of its size (usvg turns arcs into cubics,
/// about 3e-4 of the radius off, crates.md §2) plus 2e-6 of the drawing's extent and
/// distance from the origin (usvg's f32), the nearest when several do. Each path pairs with
/// one element at most; copies lying on each other pair in document order.
fn pair(placed: &[Placed], drawn: &[drawn::Drawn]) -> Vec<Option<usize>> {
    let reach = placed
        .iter()
        .map(|p| p.bbox)
        .chain(drawn.iter().map(|d| d.bbox))
        .filter(|b| !b.is_empty())
        .map(|b| {
            b.width()
                .max(b.height())
                .max(b.min.x.abs())
                .max(b.max.x.abs())
                .max(b.min.y.abs())
                .max(b.max.y.abs())
        })
        .fold(0.0, f64::max);
    let mut order: Vec<usize> = (0..placed.len()).collect();
    order.sort_by(|&a, &b| placed[a].bbox.min.x.total_cmp(&placed[b].bbox.min.x));
    let keys: Vec<f64> = order.iter().map(|&i| placed[i].bbox.min.x).collect();
    let mut partner = vec![None; placed.len()];
    for (k, d) in drawn.iter().enumerate() {
        let b = d.bbox;
        if b.is_empty() {
            continue;
        }
        let tol = 2e-3 * b.width().max(b.height()) + 2e-6 * reach;
        let lo = keys.partition_point(|&x| x < b.min.x - tol);
        let hi = keys.partition_point(|&x| x <= b.min.x + tol);
        let mut best: Option<(f64, usize)> = None;
        for &i in &order[lo..hi] {
            if partner[i].is_some() {
                continue;
            }
            let p = placed[i].bbox;
            let off = (p.min.x - b.min.x)
                .abs()
                .max((p.max.x - b.max.x).abs())
                .max((p.min.y - b.min.y).abs())
                .max((p.max.y - b.max.y).abs());
            if off <= tol && best.is_none_or(|(o, j)| off < o || (off == o && i < j)) {
                best = Some((off, i));
            }
        }
        if let Some((_, i)) = best {
            partner[i] = Some(k);
        }
    }
    partner
}

/// The root's viewBox size, else its width and height in px (user units), when known.
fn root_view(root: Node) -> Option<(f64, f64)> {
    if let Some(vb) = root
        .attribute("viewBox")
        .and_then(|v| ViewBox::from_str(v).ok())
        .filter(|vb| vb.w > 0.0 && vb.h > 0.0)
    {
        return Some((vb.w, vb.h));
    }
    let px = |k: &str| {
        root.attribute(k)
            .and_then(|v| Length::from_str(v).ok())
            .and_then(user_length)
            .filter(|v| *v > 0.0)
    };
    Some((px("width")?, px("height")?))
}

/// The box of one point.
fn point_box(p: Point) -> BBox {
    let mut b = BBox::EMPTY;
    b.add_point(p);
    b
}
