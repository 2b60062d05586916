//! HATCH boundary paths: a pure parser over the group-code pairs of one HATCH entity.
//!
//! The caller collects the pairs after `0/HATCH` up to the next `0/…` pair, with every value as
//! text (binary files: numbers formatted as text), and calls [`parse_hatch`]. Nothing here
//! reads files or knows about layers; the result is the boundary data as written, in the
//! entity's object coordinate system (OCS).
//!
//! # Group codes (DXF reference, HATCH; from memory, checked against the real files below)
//!
//! Before the paths, in any order: 10/20/30 elevation point (x = y = 0, z = elevation),
//! 210/220/230 extrusion direction, 2 pattern name, 70 solid-fill flag, 71 associativity, then
//! 91 number of boundary paths. Other groups there (handle, owner, layer, subclass markers,
//! extension dictionaries) are passed over.
//!
//! Per path:
//! - 92 path type flags (bit 1 external, bit 2 polyline, bit 4 derived, bit 16 outermost, …);
//! - polyline path (bit 2 set): 72 has-bulge flag, 73 closed flag, 93 vertex count, then per
//!   vertex 10, 20 and, when has-bulge is set, 42;
//! - edge path: 93 edge count, then per edge 72 edge type and its data:
//!   - 1 line: 10/20 start, 11/21 end;
//!   - 2 circular arc: 10/20 centre, 40 radius, 50/51 start/end angle (degrees), 73 ccw flag;
//!   - 3 elliptic arc: 10/20 centre, 11/21 major-axis end relative to the centre, 40 minor to
//!     major ratio, 50/51 start/end parameter (degrees), 73 ccw flag;
//!   - 4 spline: 94 degree, 73 rational, 74 periodic, 95 knot count, 96 control point count,
//!     40 per knot, 10/20 per control point (then 42 weight when rational), 97 fit point
//!     count, 11/21 per fit point, 12/22 start tangent, 13/23 end tangent;
//! - 97 number of source boundary objects, then that many 330 handles.
//!
//! After the paths: 75 hatch style, 76 pattern type, 52/41/73/77 pattern angle, scale,
//! double flag, 78 pattern line count (each line 53, 43, 44, 45, 46, 79 dash count, 49 per
//! dash), 47 pixel size, 98 seed point count with 10/20 per seed, gradient groups 450–470,
//! and possibly XDATA (1001…). The parser stops after the last path and does not read this
//! tail, so its 10/20/73/… are never taken for path data.
//!
//! The same code means different things in different places (10/20: elevation, vertex,
//! centre, control point, seed point; 73: closed, ccw, rational, double; 97: fit count or
//! source count), so the pairs are read positionally with the counts, never by scanning for a
//! code.
//!
//! # Leniency, as found in writers' output
//! - Group 42 of a polyline vertex is read when present, whatever the has-bulge flag says;
//!   72 and 73 of a polyline path may be missing (no bulges, open).
//! - Spline edges: the 97 fit count, its fit points and the 12/22 and 13/23 tangents are each
//!   optional (R13/R14 files write none of them; R2010+ files write `97 0` when there are no
//!   fit points, as in `ac1024_hatch_mixed_edge_boundary.dxf`). A `97` after a spline that
//!   is not the last edge of its path is its fit count. After the last edge it could also be
//!   the path's source count; it is taken as the fit count when it is `97 n` (n > 0) followed
//!   by 11 (a fit point), or `97 0` followed by 12, 13 or another 97.
//! - Weights of a rational spline follow each control point; a block of 42s after all control
//!   points is accepted too. A spline has no weights or one per control point.
//! - The path's 97 is read when present; as many 330 handles as it announces must follow.
//!
//! # Clockwise edges (from the real files)
//! The 50/51 angles of an arc edge with ccw flag 0 are those of the mirrored (counter-
//! clockwise) arc: the edge starts at angle −50 and runs clockwise to −51. In
//! `ac1027_flange_drawing_with_dimensions.dxf` (over 300 clockwise arcs in 6 HATCHes) every
//! path closes under this reading (to about 1e-13; one path to 6.6e-7, a join of the drawing's
//! own), and every path with a clockwise arc has a gap of 0.005 to several drawing units when
//! the angles are taken as written (test `clockwise_arcs_store_mirrored_angles`). The parser
//! returns the angles as written; the caller applies the convention. No file in the corpus
//! has a clockwise elliptic edge; they are presumably alike (50/51 as parameters of the
//! mirrored ellipse), not checked.
//!
//! # Errors
//! Every error is a plain message naming the path and edge (1-based) and the group code that
//! was expected, e.g. `HATCH path 2, edge 3: expected group 40 (arc radius), found group 72`.
//! Counts that run past the pairs, or that disagree with what follows, non-numbers and
//! non-finite numbers are errors. Nothing panics on any input.

use std::fmt::Write as _;

/// Boundary data of one HATCH entity.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Hatch {
    /// Extrusion direction (210/220/230), default (0, 0, 1).
    pub normal: [f64; 3],
    /// Elevation: z of the elevation point (30).
    pub elevation: f64,
    pub paths: Vec<HatchPath>,
    /// Solid fill (70 = 1).
    pub solid: bool,
    /// Pattern name (2), decoded as UTF-8 with replacement characters.
    pub pattern: String,
}

/// One boundary path.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct HatchPath {
    /// Path type flags (92): bit 1 external, bit 2 polyline, bit 4 derived, bit 16 outermost.
    pub flags: i64,
    pub edges: HatchBoundary,
}

/// The geometry of a boundary path.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum HatchBoundary {
    /// Polyline path (92 bit 2): vertices (x, y, bulge) and the closed flag (73).
    Polyline {
        vertices: Vec<(f64, f64, f64)>,
        closed: bool,
    },
    /// Edge path: edges in boundary order.
    Edges(Vec<HatchEdge>),
}

/// One edge of an edge path, as written (see the module doc for clockwise angles).
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum HatchEdge {
    /// 72 = 1: 10/20 start, 11/21 end.
    Line { a: (f64, f64), b: (f64, f64) },
    /// 72 = 2: 10/20 centre, 40 radius, 50/51 angles in degrees, 73 ccw flag.
    Arc {
        center: (f64, f64),
        radius: f64,
        start_deg: f64,
        end_deg: f64,
        ccw: bool,
    },
    /// 72 = 3: 10/20 centre, 11/21 major-axis end relative to the centre, 40 minor/major
    /// ratio, 50/51 parameters in degrees, 73 ccw flag.
    Ellipse {
        center: (f64, f64),
        major: (f64, f64),
        ratio: f64,
        start_deg: f64,
        end_deg: f64,
        ccw: bool,
    },
    /// 72 = 4: see the module doc for the groups.
    Spline {
        degree: usize,
        rational: bool,
        periodic: bool,
        knots: Vec<f64>,
        ctrl: Vec<(f64, f64)>,
        /// Empty, or one per control point.
        weights: Vec<f64>,
        fit: Vec<(f64, f64)>,
        start_tangent: Option<(f64, f64)>,
        end_tangent: Option<(f64, f64)>,
    },
}

/// Parse the boundary paths of one HATCH from its pairs (code, value text).
///
/// `pairs` are the pairs after `0/HATCH` up to, not including, the next code-0 pair. Values
/// are text; blanks around them are ignored. See the module doc for the groups read and the
/// errors given. Never panics.
pub(crate) fn parse_hatch(pairs: &[(i32, &[u8])]) -> Result<Hatch, String> {
    let mut cur = Cursor {
        pairs,
        pos: 0,
        path: None,
        edge: None,
    };
    let mut hatch = Hatch {
        normal: [0.0, 0.0, 1.0],
        elevation: 0.0,
        paths: Vec::new(),
        solid: false,
        pattern: String::new(),
    };

    // Groups before the paths, up to 91.
    let n_paths = loop {
        let Some(&(code, value)) = cur.pairs.get(cur.pos) else {
            return Err(cur
                .err("expected group 91 (number of boundary paths), found the end of the entity"));
        };
        match code {
            30 => hatch.elevation = cur.real(30, "elevation")?,
            210 => hatch.normal[0] = cur.real(210, "extrusion x")?,
            220 => hatch.normal[1] = cur.real(220, "extrusion y")?,
            230 => hatch.normal[2] = cur.real(230, "extrusion z")?,
            2 => {
                hatch.pattern = String::from_utf8_lossy(value.trim_ascii()).into_owned();
                cur.pos += 1;
            }
            70 => hatch.solid = cur.int(70, "solid-fill flag")? == 1,
            91 => break cur.count(91, "number of boundary paths")?,
            _ => cur.pos += 1,
        }
    };

    for path_idx in 0..n_paths {
        cur.path = Some(path_idx);
        cur.edge = None;
        let flags = cur.int(92, "path type flags")?;
        let edges = if flags & 2 != 0 {
            polyline_path(&mut cur)?
        } else {
            edge_path(&mut cur)?
        };
        cur.edge = None;
        source_handles(&mut cur)?;
        hatch.paths.push(HatchPath { flags, edges });
    }

    // The tail (pattern, seeds, gradient, XDATA) never starts with path data; if it does,
    // group 91 announced fewer paths than the entity holds.
    cur.path = None;
    cur.edge = None;
    if let Some(code @ (92 | 93 | 72)) = cur.peek() {
        return Err(cur.err(&format!(
            "found group {code} (path data) after the {n_paths} path(s) announced in group 91"
        )));
    }
    Ok(hatch)
}

/// A polyline path after its 92: 72, 73, 93 and the vertices.
fn polyline_path(cur: &mut Cursor) -> Result<HatchBoundary, String> {
    // The has-bulge flag is checked for a number but not obeyed: 42 is read where present.
    if cur.peek() == Some(72) {
        cur.int(72, "has-bulge flag")?;
    }
    let closed = match cur.peek() {
        Some(73) => cur.int(73, "closed flag")? != 0,
        _ => false,
    };
    let n = cur.count(93, "number of polyline vertices")?;
    let mut vertices = Vec::with_capacity(n);
    for vertex_idx in 0..n {
        cur.edge = Some(vertex_idx);
        let (x, y) = cur.point(10, "vertex")?;
        let bulge = match cur.peek() {
            Some(42) => cur.real(42, "bulge")?,
            _ => 0.0,
        };
        vertices.push((x, y, bulge));
    }
    Ok(HatchBoundary::Polyline { vertices, closed })
}

/// An edge path after its 92: 93 and the edges.
fn edge_path(cur: &mut Cursor) -> Result<HatchBoundary, String> {
    let n = cur.count(93, "number of edges")?;
    let mut edges = Vec::with_capacity(n);
    for edge_idx in 0..n {
        cur.edge = Some(edge_idx);
        let last = edge_idx + 1 == n;
        let edge = match cur.int(72, "edge type")? {
            1 => HatchEdge::Line {
                a: cur.point(10, "line start")?,
                b: cur.point(11, "line end")?,
            },
            2 => HatchEdge::Arc {
                center: cur.point(10, "arc centre")?,
                radius: cur.real(40, "arc radius")?,
                start_deg: cur.real(50, "arc start angle")?,
                end_deg: cur.real(51, "arc end angle")?,
                ccw: cur.int(73, "arc ccw flag")? != 0,
            },
            3 => HatchEdge::Ellipse {
                center: cur.point(10, "ellipse centre")?,
                major: cur.point(11, "ellipse major axis")?,
                ratio: cur.real(40, "ellipse axis ratio")?,
                start_deg: cur.real(50, "ellipse start parameter")?,
                end_deg: cur.real(51, "ellipse end parameter")?,
                ccw: cur.int(73, "ellipse ccw flag")? != 0,
            },
            4 => spline_edge(cur, last)?,
            other => {
                return Err(cur.err_before(&format!(
                "edge type {other} in group 72 is not 1 (line), 2 (arc), 3 (ellipse) or 4 (spline)"
            )))
            }
        };
        edges.push(edge);
    }
    Ok(HatchBoundary::Edges(edges))
}

/// A spline edge after its `72 4`. `last`: the last edge of its path (see the module doc on
/// the two meanings of a following 97).
fn spline_edge(cur: &mut Cursor, last: bool) -> Result<HatchEdge, String> {
    let degree = cur.int(94, "spline degree")?;
    let degree = usize::try_from(degree)
        .ok()
        .filter(|&d| d >= 1)
        .ok_or_else(|| {
            cur.err_before(&format!(
                "spline degree {degree} in group 94 is not positive"
            ))
        })?;
    let rational = cur.int(73, "spline rational flag")? != 0;
    let periodic = cur.int(74, "spline periodic flag")? != 0;
    let n_knots = cur.count(95, "number of knots")?;
    let n_ctrl = cur.count(96, "number of control points")?;
    let mut knots = Vec::with_capacity(n_knots);
    for _ in 0..n_knots {
        knots.push(cur.real(40, "knot value")?);
    }
    let mut ctrl = Vec::with_capacity(n_ctrl);
    let mut weights = Vec::new();
    for _ in 0..n_ctrl {
        ctrl.push(cur.point(10, "control point")?);
        if cur.peek() == Some(42) {
            weights.push(cur.real(42, "control point weight")?);
        }
    }
    // Weights written as one block after the control points.
    while weights.len() < ctrl.len() && cur.peek() == Some(42) {
        weights.push(cur.real(42, "control point weight")?);
    }
    if !weights.is_empty() && weights.len() != ctrl.len() {
        return Err(cur.err(&format!(
            "{} weights (group 42) for {} control points",
            weights.len(),
            ctrl.len()
        )));
    }

    let mut fit = Vec::new();
    if cur.peek() == Some(97) && fit_count_follows(cur, last) {
        let n_fit = cur.count(97, "number of fit points")?;
        fit.reserve(n_fit);
        for _ in 0..n_fit {
            fit.push(cur.point(11, "fit point")?);
        }
    }
    let start_tangent = match cur.peek() {
        Some(12) => Some(cur.point(12, "start tangent")?),
        _ => None,
    };
    let end_tangent = match cur.peek() {
        Some(13) => Some(cur.point(13, "end tangent")?),
        _ => None,
    };
    Ok(HatchEdge::Spline {
        degree,
        rational,
        periodic,
        knots,
        ctrl,
        weights,
        fit,
        start_tangent,
        end_tangent,
    })
}

/// Whether the 97 at the cursor, right after a spline's control points, is the fit point
/// count rather than the path's source count (module doc).
fn fit_count_follows(cur: &Cursor, last: bool) -> bool {
    if !last {
        // A path's 97 comes only after its last edge.
        return true;
    }
    let after = cur.pairs.get(cur.pos + 1).map(|&(code, _)| code);
    let n = cur
        .pairs
        .get(cur.pos)
        .and_then(|&(_, value)| parse_int(value))
        .unwrap_or(0);
    match after {
        Some(11) => n > 0,
        Some(12 | 13 | 97) => n == 0,
        _ => false,
    }
}

/// The path's 97 source count and its 330 handles (the handles are not kept).
fn source_handles(cur: &mut Cursor) -> Result<(), String> {
    if cur.peek() != Some(97) {
        return Ok(());
    }
    let n = cur.count(97, "number of source boundary objects")?;
    for _ in 0..n {
        cur.expect(330, "source boundary handle")?;
    }
    Ok(())
}

/// A read position in the pairs, with the path and edge being read for messages.
struct Cursor<'p, 'v> {
    pairs: &'p [(i32, &'v [u8])],
    pos: usize,
    path: Option<usize>,
    /// Edge (or vertex) index within the path.
    edge: Option<usize>,
}

impl<'v> Cursor<'_, 'v> {
    fn peek(&self) -> Option<i32> {
        self.pairs.get(self.pos).map(|&(code, _)| code)
    }

    /// Take the next pair, which must have group `code`; its value text.
    fn expect(&mut self, code: i32, what: &str) -> Result<&'v [u8], String> {
        match self.pairs.get(self.pos) {
            Some(&(c, value)) if c == code => {
                self.pos += 1;
                Ok(value)
            }
            Some(&(c, _)) => {
                Err(self.err(&format!("expected group {code} ({what}), found group {c}")))
            }
            None => Err(self.err(&format!(
                "expected group {code} ({what}), found the end of the entity"
            ))),
        }
    }

    /// A finite number in group `code`.
    fn real(&mut self, code: i32, what: &str) -> Result<f64, String> {
        let value = self.expect(code, what)?;
        parse_real(value).ok_or_else(|| {
            self.err_before(&format!(
                "group {code} ({what}) holds '{}', not a finite number",
                shown(value)
            ))
        })
    }

    /// An integer in group `code` (an integral decimal such as `1.0` is accepted).
    fn int(&mut self, code: i32, what: &str) -> Result<i64, String> {
        let value = self.expect(code, what)?;
        parse_int(value).ok_or_else(|| {
            self.err_before(&format!(
                "group {code} ({what}) holds '{}', not an integer",
                shown(value)
            ))
        })
    }

    /// A count in group `code`: not negative, and not more than the pairs left (every counted
    /// item takes at least one pair), so a bad count cannot ask for a huge allocation.
    fn count(&mut self, code: i32, what: &str) -> Result<usize, String> {
        let n = self.int(code, what)?;
        let left = self.pairs.len() - self.pos.min(self.pairs.len());
        match usize::try_from(n) {
            Ok(n) if n <= left => Ok(n),
            _ => Err(self.err_before(&format!(
                "count {n} in group {code} ({what}) is negative or more than the {left} pairs left"
            ))),
        }
    }

    /// A point from groups `code` (x) and `code + 10` (y).
    fn point(&mut self, code: i32, what: &str) -> Result<(f64, f64), String> {
        let x = self.real(code, &format!("{what} x"))?;
        let y = self.real(code + 10, &format!("{what} y"))?;
        Ok((x, y))
    }

    /// A message with the path and edge being read, and the index of the pair at the cursor.
    fn err(&self, msg: &str) -> String {
        self.err_at(self.pos, msg)
    }

    /// As [`Cursor::err`], about the pair just taken.
    fn err_before(&self, msg: &str) -> String {
        self.err_at(self.pos.saturating_sub(1), msg)
    }

    fn err_at(&self, pos: usize, msg: &str) -> String {
        let mut out = String::from("HATCH");
        if let Some(p) = self.path {
            // Writing to a String cannot fail.
            let _ = write!(out, " path {}", p + 1);
            if let Some(e) = self.edge {
                let _ = write!(out, ", edge {}", e + 1);
            }
        }
        let _ = write!(out, ": {msg} (pair {} of the entity)", pos + 1);
        out
    }
}

/// A finite number written as text; blanks around it are ignored.
fn parse_real(value: &[u8]) -> Option<f64> {
    std::str::from_utf8(value.trim_ascii())
        .ok()?
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

/// An integer written as text, or an integral decimal (`1.0`) as some writers put them.
fn parse_int(value: &[u8]) -> Option<i64> {
    let text = std::str::from_utf8(value.trim_ascii()).ok()?;
    text.parse::<i64>().ok().or_else(|| {
        let v = text.parse::<f64>().ok()?;
        // Integral and well inside the i64 range, so the cast is exact.
        (v.fract() == 0.0 && v.abs() < 9.0e15).then_some(v as i64)
    })
}

/// A value for a message: at most 40 characters, control characters escaped.
fn shown(value: &[u8]) -> String {
    String::from_utf8_lossy(value)
        .chars()
        .take(40)
        .flat_map(char::escape_debug)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pairs from text with one `code value` per line (blank lines ignored).
    fn owned(text: &str) -> Vec<(i32, Vec<u8>)> {
        text.lines()
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .map(|l| {
                let (code, value) = l.split_once(' ').unwrap_or((l, ""));
                // Test input is written by hand; a bad code is a bug in the test.
                (
                    code.parse().expect("test pair code"),
                    value.as_bytes().to_vec(),
                )
            })
            .collect()
    }

    fn parse_owned(pairs: &[(i32, Vec<u8>)]) -> Result<Hatch, String> {
        let view: Vec<(i32, &[u8])> = pairs.iter().map(|(c, v)| (*c, v.as_slice())).collect();
        parse_hatch(&view)
    }

    fn parse(text: &str) -> Result<Hatch, String> {
        parse_owned(&owned(text))
    }

    /// Groups before the paths as a 2018 writer puts them (handle, owner, layer, markers).
    const HEAD: &str = "5 2A\n330 1F\n100 AcDbEntity\n8 0\n100 AcDbHatch\n\
        10 0.0\n20 0.0\n30 2.5\n210 0.0\n220 0.0\n230 1.0\n2 SOLID\n70 1\n71 0\n";

    /// A tail with pattern lines, seed points, gradient and XDATA: 10/20/73 here are not path
    /// data.
    const TAIL: &str = "75 1\n76 1\n52 0.0\n41 1.0\n77 0\n78 2\n\
        53 45.0\n43 0.0\n44 0.0\n45 -1.0\n46 1.0\n79 0\n\
        53 135.0\n43 0.0\n44 0.0\n45 -1.0\n46 1.0\n79 2\n49 0.5\n49 -0.25\n\
        47 0.02\n98 2\n10 1.0\n20 1.0\n10 5.0\n20 5.0\n\
        450 0\n451 0\n460 0.0\n461 0.0\n452 0\n462 0.0\n453 2\n463 0.0\n63 5\n421 255\n470 LINEAR\n\
        1001 ACAD\n1010 0.0\n1020 0.0\n1030 0.0\n";

    /// One edge path with a line, an arc, an elliptic arc and a rational spline with fit
    /// points and tangents, then two source handles. Hand-made; the edges join up.
    fn mixed_edges() -> String {
        let path = "91 1\n92 1\n93 4\n\
            72 1\n10 0.0\n20 0.0\n11 20.0\n21 0.0\n\
            72 2\n10 20.0\n20 10.0\n40 10.0\n50 270.0\n51 360.0\n73 1\n\
            72 3\n10 20.0\n20 20.0\n11 10.0\n21 0.0\n40 0.5\n50 0.0\n51 180.0\n73 0\n\
            72 4\n94 2\n73 1\n74 0\n95 6\n96 3\n40 0\n40 0\n40 0\n40 1\n40 1\n40 1\n\
            10 10.0\n20 20.0\n42 1.0\n10 0.0\n20 10.0\n42 0.5\n10 0.0\n20 0.0\n42 1.0\n\
            97 2\n11 10.0\n21 20.0\n11 0.0\n21 0.0\n12 -1.0\n22 0.0\n13 0.0\n23 -1.0\n\
            97 2\n330 3A\n330 3B\n";
        format!("{HEAD}{path}{TAIL}")
    }

    #[test]
    fn polyline_path_with_bulges() {
        // A closed slot outline: two straight sides, two half circles (bulge 1 = 180°).
        let text = format!(
            "{HEAD}91 1\n92 7\n72 1\n73 1\n93 4\n\
             10 0.0\n20 0.0\n42 0.0\n10 10.0\n20 0.0\n42 1.0\n\
             10 10.0\n20 4.0\n42 0.0\n10 0.0\n20 4.0\n42 1.0\n97 1\n330 2B\n{TAIL}"
        );
        let h = parse(&text).unwrap();
        assert_eq!(h.normal, [0.0, 0.0, 1.0]);
        assert_eq!(h.elevation, 2.5);
        assert!(h.solid);
        assert_eq!(h.pattern, "SOLID");
        assert_eq!(h.paths.len(), 1);
        assert_eq!(h.paths[0].flags, 7);
        assert_eq!(
            h.paths[0].edges,
            HatchBoundary::Polyline {
                vertices: vec![
                    (0.0, 0.0, 0.0),
                    (10.0, 0.0, 1.0),
                    (10.0, 4.0, 0.0),
                    (0.0, 4.0, 1.0)
                ],
                closed: true
            }
        );
    }

    #[test]
    fn polyline_path_without_bulge_groups() {
        let h = parse("91 1\n92 2\n72 0\n73 0\n93 2\n10 1\n20 2\n10 3\n20 4\n97 0\n").unwrap();
        assert_eq!(
            h.paths[0].edges,
            HatchBoundary::Polyline {
                vertices: vec![(1.0, 2.0, 0.0), (3.0, 4.0, 0.0)],
                closed: false
            }
        );
    }

    #[test]
    fn edge_path_line_arc_ellipse_spline() {
        let h = parse(&mixed_edges()).unwrap();
        assert_eq!(h.paths.len(), 1);
        let HatchBoundary::Edges(edges) = &h.paths[0].edges else {
            panic!("expected an edge path, got {:?}", h.paths[0].edges);
        };
        assert_eq!(
            edges[..3],
            [
                HatchEdge::Line {
                    a: (0.0, 0.0),
                    b: (20.0, 0.0)
                },
                HatchEdge::Arc {
                    center: (20.0, 10.0),
                    radius: 10.0,
                    start_deg: 270.0,
                    end_deg: 360.0,
                    ccw: true
                },
                HatchEdge::Ellipse {
                    center: (20.0, 20.0),
                    major: (10.0, 0.0),
                    ratio: 0.5,
                    start_deg: 0.0,
                    end_deg: 180.0,
                    ccw: false
                },
            ]
        );
        assert_eq!(
            edges[3],
            HatchEdge::Spline {
                degree: 2,
                rational: true,
                periodic: false,
                knots: vec![0.0, 0.0, 0.0, 1.0, 1.0, 1.0],
                ctrl: vec![(10.0, 20.0), (0.0, 10.0), (0.0, 0.0)],
                weights: vec![1.0, 0.5, 1.0],
                fit: vec![(10.0, 20.0), (0.0, 0.0)],
                start_tangent: Some((-1.0, 0.0)),
                end_tangent: Some((0.0, -1.0)),
            }
        );
        assert_eq!(edges.len(), 4);
    }

    #[test]
    fn two_paths_outer_and_inner() {
        // Outer square (92 = 1 external, edges) and an inner polyline island (92 = 2 + 16).
        let text = format!(
            "{HEAD}91 2\n92 1\n93 4\n\
             72 1\n10 0\n20 0\n11 10\n21 0\n72 1\n10 10\n20 0\n11 10\n21 10\n\
             72 1\n10 10\n20 10\n11 0\n21 10\n72 1\n10 0\n20 10\n11 0\n21 0\n97 0\n\
             92 18\n72 0\n73 1\n93 3\n10 2\n20 2\n10 4\n20 2\n10 3\n20 4\n97 1\n330 C1\n{TAIL}"
        );
        let h = parse(&text).unwrap();
        assert_eq!(h.paths.len(), 2);
        assert_eq!(h.paths[0].flags, 1);
        assert!(matches!(&h.paths[0].edges, HatchBoundary::Edges(e) if e.len() == 4));
        assert_eq!(h.paths[1].flags, 18);
        assert!(matches!(
            &h.paths[1].edges,
            HatchBoundary::Polyline { vertices, closed: true } if vertices.len() == 3
        ));
    }

    #[test]
    fn source_handles_are_passed_over() {
        let text = "91 2\n92 2\n93 1\n10 0\n20 0\n97 3\n330 A\n330 B\n330 C\n\
                    92 2\n93 1\n10 1\n20 1\n97 0\n75 0\n";
        let h = parse(text).unwrap();
        assert_eq!(h.paths.len(), 2);
        // Fewer handles than announced.
        let err = parse("91 1\n92 2\n93 1\n10 0\n20 0\n97 2\n330 A\n75 0\n").unwrap_err();
        assert!(err.contains("path 1") && err.contains("group 330"), "{err}");
    }

    #[test]
    fn pattern_tail_is_not_path_data() {
        // TAIL holds 78 pattern lines and 98 seed points with 10/20 after the last path.
        let h = parse(&mixed_edges()).unwrap();
        assert_eq!(h.paths.len(), 1);
        let h = parse(&format!("91 0\n{TAIL}")).unwrap();
        assert!(h.paths.is_empty());
    }

    #[test]
    fn spline_fit_count_or_source_count() {
        let spline = "72 4\n94 1\n73 0\n74 0\n95 4\n96 2\n40 0\n40 0\n40 1\n40 1\n\
                      10 0\n20 0\n10 1\n20 0\n";
        let fit_of = |h: &Hatch, i: usize| match &h.paths[0].edges {
            HatchBoundary::Edges(e) => match &e[i] {
                HatchEdge::Spline { fit, .. } => fit.len(),
                other => panic!("not a spline: {other:?}"),
            },
            other => panic!("not edges: {other:?}"),
        };
        // Last edge, `97 0` fit count then the path's `97 1`.
        let h = parse(&format!(
            "91 1\n92 0\n93 1\n{spline}97 0\n97 1\n330 A\n75 0\n"
        ))
        .unwrap();
        assert_eq!(fit_of(&h, 0), 0);
        // Last edge, no fit count (R13/R14): the 97 is the path's.
        let h = parse(&format!("91 1\n92 0\n93 1\n{spline}97 1\n330 A\n75 0\n")).unwrap();
        assert_eq!(fit_of(&h, 0), 0);
        // Last edge, no fit count and no handles.
        let h = parse(&format!("91 1\n92 0\n93 1\n{spline}97 0\n75 0\n")).unwrap();
        assert_eq!(fit_of(&h, 0), 0);
        // Last edge with fit points and no source count at all.
        let h = parse(&format!(
            "91 1\n92 0\n93 1\n{spline}97 1\n11 0\n21 0\n75 0\n"
        ))
        .unwrap();
        assert_eq!(fit_of(&h, 0), 1);
        // Not the last edge, no fit count: the next 72 follows the control points.
        let line = "72 1\n10 1\n20 0\n11 0\n21 0\n";
        let h = parse(&format!("91 1\n92 0\n93 2\n{spline}{line}97 0\n")).unwrap();
        assert_eq!(fit_of(&h, 0), 0);
        // Not the last edge, `97 0` fit count and tangents.
        let h = parse(&format!(
            "91 1\n92 0\n93 2\n{spline}97 0\n12 1\n22 0\n13 1\n23 0\n{line}97 0\n"
        ))
        .unwrap();
        assert_eq!(fit_of(&h, 0), 0);
    }

    #[test]
    fn weights_as_one_block() {
        let text = "91 1\n92 0\n93 1\n72 4\n94 1\n73 1\n74 0\n95 4\n96 2\n40 0\n40 0\n40 1\n40 1\n\
                    10 0\n20 0\n10 1\n20 0\n42 1\n42 2\n97 0\n97 0\n";
        let h = parse(text).unwrap();
        let HatchBoundary::Edges(e) = &h.paths[0].edges else {
            panic!("not edges")
        };
        assert!(matches!(&e[0], HatchEdge::Spline { weights, .. } if weights == &[1.0, 2.0]));
        // One weight for two control points.
        let err = parse(&text.replace("42 2\n", "")).unwrap_err();
        assert!(err.contains("1 weights") && err.contains("edge 1"), "{err}");
    }

    #[test]
    fn truncated_in_an_edge() {
        let text = mixed_edges();
        let cut = text.find("40 10.0").unwrap();
        let err = parse(&text[..cut]).unwrap_err();
        assert!(
            err.starts_with("HATCH path 1, edge 2: expected group 40 (arc radius), found the end"),
            "{err}"
        );
    }

    #[test]
    fn counts_that_disagree() {
        // 93 announces 3 edges, 2 follow: the path's 97 is met where edge 3's 72 should be.
        let two_lines = "72 1\n10 0\n20 0\n11 1\n21 0\n72 1\n10 1\n20 0\n11 0\n21 0\n";
        let err = parse(&format!("91 1\n92 0\n93 3\n{two_lines}97 0\n75 0\n")).unwrap_err();
        assert!(
            err.starts_with("HATCH path 1, edge 3: expected group 72 (edge type), found group 97"),
            "{err}"
        );
        // 91 announces 1 path, 2 follow.
        let err = parse("91 1\n92 2\n93 1\n10 0\n20 0\n97 0\n92 2\n93 1\n10 0\n20 0\n97 0\n75 0\n")
            .unwrap_err();
        assert!(
            err.contains("found group 92 (path data) after the 1 path(s)"),
            "{err}"
        );
        // 91 announces 2 paths, 1 follows.
        let err = parse("91 2\n92 2\n93 1\n10 0\n20 0\n97 0\n75 0\n").unwrap_err();
        assert!(err.starts_with("HATCH path 2: expected group 92"), "{err}");
        // Counts past the end, negative, or huge.
        for n in ["7", "-1", "99999999999999999", "1e300"] {
            let err = parse(&format!("91 1\n92 2\n93 {n}\n10 0\n20 0\n")).unwrap_err();
            assert!(err.contains("group 93"), "{n}: {err}");
        }
        // No 91 at all.
        assert!(parse("5 2A\n2 SOLID\n").unwrap_err().contains("group 91"));
        // Unknown edge type.
        let err = parse("91 1\n92 0\n93 1\n72 9\n").unwrap_err();
        assert!(err.contains("edge type 9"), "{err}");
    }

    #[test]
    fn bad_numbers() {
        for bad in [
            "1.2.3",
            "nan",
            "inf",
            "-infinity",
            "1e400",
            "",
            "1,5",
            "0x10",
        ] {
            let err = parse(&format!("91 1\n92 2\n93 1\n10 {bad}\n20 0\n")).unwrap_err();
            assert!(
                err.contains("group 10") && err.contains("not a finite number"),
                "{bad}: {err}"
            );
        }
        // Integers: an integral decimal is accepted, a fraction is not.
        assert!(parse("91 1.0\n92 2\n93 0\n").is_ok());
        let err = parse("91 1.5\n").unwrap_err();
        assert!(err.contains("not an integer"), "{err}");
        // Blanks around numbers are ignored (right-aligned writers).
        let h = parse("91  1 \n92 2\n93 1\n10   3.5\n20 -1 \n").unwrap();
        let want = HatchBoundary::Polyline {
            vertices: vec![(3.5, -1.0, 0.0)],
            closed: false,
        };
        assert_eq!(h.paths[0].edges, want);
    }

    #[test]
    fn no_panic_when_cut_or_perturbed_anywhere() {
        let valid = owned(&mixed_edges());
        let mut runs = 0;
        for i in 0..=valid.len() {
            let _ = parse_owned(&valid[..i]);
            let mut dropped = valid.clone();
            if i < dropped.len() {
                dropped.remove(i);
            }
            let _ = parse_owned(&dropped);
            for value in [
                "",
                "x",
                "-1",
                "0",
                "1",
                "2",
                "3",
                "4",
                "1e308",
                "nan",
                "99999999999999999999",
                "\u{0}\u{ff}",
            ] {
                let mut changed = valid.clone();
                if let Some(pair) = changed.get_mut(i) {
                    pair.1 = value.as_bytes().to_vec();
                }
                let _ = parse_owned(&changed);
                runs += 1;
            }
            for code in [10, 11, 40, 42, 72, 73, 92, 93, 97, 330] {
                let mut changed = valid.clone();
                if let Some(pair) = changed.get_mut(i) {
                    pair.0 = code;
                }
                let _ = parse_owned(&changed);
                let mut inserted = valid.clone();
                inserted.insert(i, (code, b"1".to_vec()));
                let _ = parse_owned(&inserted);
                runs += 2;
            }
        }
        assert!(runs > 1000);
    }

    // ---- Real files (corpus described in shared/corpus/real/MANIFEST.md) ----

    /// Every HATCH of an ASCII DXF file in the shared corpus, as parsed; `None` (with a note)
    /// when the corpus is not there.
    fn hatches_in(name: &str) -> Option<Vec<Result<Hatch, String>>> {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../shared/corpus/real/dxf")
            .join(name);
        let Ok(bytes) = std::fs::read(&path) else {
            eprintln!("skipped: {} not found", path.display());
            return None;
        };
        // A tiny splitter: lines in pairs, code then value.
        let lines: Vec<&[u8]> = bytes
            .split(|&b| b == b'\n')
            .map(<[u8]>::trim_ascii)
            .collect();
        let pairs: Vec<(i32, &[u8])> = lines
            .chunks_exact(2)
            .map_while(|p| Some((std::str::from_utf8(p[0]).ok()?.parse().ok()?, p[1])))
            .collect();
        let mut out = Vec::new();
        let mut i = 0;
        while i < pairs.len() {
            if pairs[i] == (0, b"HATCH".as_slice()) {
                let end = pairs[i + 1..]
                    .iter()
                    .position(|p| p.0 == 0)
                    .map_or(pairs.len(), |n| i + 1 + n);
                out.push(parse_hatch(&pairs[i + 1..end]));
                i = end;
            } else {
                i += 1;
            }
        }
        Some(out)
    }

    /// Start and end of an edge; clockwise arcs under the mirrored-angle reading (module doc).
    fn ends(edge: &HatchEdge) -> ((f64, f64), (f64, f64)) {
        let at = |c: (f64, f64), r: f64, deg: f64| {
            let t = deg.to_radians();
            (c.0 + r * t.cos(), c.1 + r * t.sin())
        };
        match *edge {
            HatchEdge::Line { a, b } => (a, b),
            HatchEdge::Arc {
                center,
                radius,
                start_deg,
                end_deg,
                ccw,
            } => {
                let s = if ccw { 1.0 } else { -1.0 };
                (
                    at(center, radius, s * start_deg),
                    at(center, radius, s * end_deg),
                )
            }
            HatchEdge::Ellipse {
                center,
                major,
                ratio,
                start_deg,
                end_deg,
                ccw,
            } => {
                let s = if ccw { 1.0 } else { -1.0 };
                let minor = (-major.1 * ratio, major.0 * ratio);
                let p = |deg: f64| {
                    let t = (s * deg).to_radians();
                    (
                        center.0 + major.0 * t.cos() + minor.0 * t.sin(),
                        center.1 + major.1 * t.cos() + minor.1 * t.sin(),
                    )
                };
                (p(start_deg), p(end_deg))
            }
            // Clamped knots (as in the files used here): the curve ends on the end control points.
            HatchEdge::Spline { ref ctrl, .. } => (
                ctrl.first().copied().unwrap_or_default(),
                ctrl.last().copied().unwrap_or_default(),
            ),
        }
    }

    /// Largest gap between the end of one edge and the start of the next, around the path.
    fn largest_gap(edges: &[HatchEdge]) -> f64 {
        (0..edges.len())
            .map(|i| {
                let (_, b) = ends(&edges[i]);
                let (a, _) = ends(&edges[(i + 1) % edges.len()]);
                (a.0 - b.0).hypot(a.1 - b.1)
            })
            .fold(0.0, f64::max)
    }

    #[test]
    fn real_mixed_edge_boundary() {
        let Some(hatches) = hatches_in("ac1024_hatch_mixed_edge_boundary.dxf") else {
            return;
        };
        // One HATCH (MANIFEST.md), one edge path of line, arc, line, elliptic arc, spline
        // (read from the file text).
        assert_eq!(hatches.len(), 1);
        let h = hatches[0].as_ref().unwrap();
        assert!(!h.solid);
        assert_eq!(h.pattern, "ESCHER");
        assert_eq!(h.normal, [0.0, 0.0, 1.0]);
        assert_eq!(h.paths.len(), 1);
        assert_eq!(h.paths[0].flags, 0);
        let HatchBoundary::Edges(edges) = &h.paths[0].edges else {
            panic!("expected an edge path");
        };
        let kinds: Vec<&str> = edges
            .iter()
            .map(|e| match e {
                HatchEdge::Line { .. } => "line",
                HatchEdge::Arc { ccw: true, .. } => "ccw arc",
                HatchEdge::Ellipse { ccw: true, .. } => "ccw ellipse",
                HatchEdge::Spline { .. } => "spline",
                _ => "other",
            })
            .collect();
        assert_eq!(kinds, ["line", "ccw arc", "line", "ccw ellipse", "spline"]);
        let HatchEdge::Spline {
            degree,
            rational,
            periodic,
            knots,
            ctrl,
            weights,
            fit,
            start_tangent,
            end_tangent,
        } = &edges[4]
        else {
            panic!("expected a spline, got {:?}", edges[4]);
        };
        assert_eq!((*degree, *rational, *periodic), (3, false, false));
        assert_eq!(
            (knots.len(), ctrl.len(), weights.len(), fit.len()),
            (12, 8, 0, 0)
        );
        assert_eq!((*start_tangent, *end_tangent), (None, None));
        // The edges join up (coordinates in the file are written to about 1e-15).
        assert!(largest_gap(edges) < 1e-9, "{}", largest_gap(edges));
    }

    #[test]
    fn real_polyline_boundaries() {
        let Some(hatches) = hatches_in("ac1032_hatches_with_polyline_boundaries.dxf") else {
            return;
        };
        // Ten solid HATCHes (MANIFEST.md); paths, flags and vertex counts read from the file.
        let expected: [&[(i64, usize)]; 10] = [
            &[(7, 4), (22, 4)],
            &[(7, 4)],
            &[(7, 4), (22, 4)],
            &[(7, 4), (22, 4), (6, 4)],
            &[(7, 4)],
            &[(7, 4), (22, 4), (6, 4), (6, 4)],
            &[(7, 5)],
            &[(7, 4), (22, 5)],
            &[(7, 5)],
            &[(7, 4), (22, 5)],
        ];
        assert_eq!(hatches.len(), 10);
        for (k, (h, want)) in hatches.iter().zip(expected).enumerate() {
            let h = h.as_ref().unwrap();
            assert!(h.solid && h.pattern == "SOLID", "hatch {k}");
            let got: Vec<(i64, usize)> = h
                .paths
                .iter()
                .map(|p| match &p.edges {
                    HatchBoundary::Polyline {
                        vertices,
                        closed: true,
                    } => (p.flags, vertices.len()),
                    other => panic!("hatch {k}: not a closed polyline path: {other:?}"),
                })
                .collect();
            assert_eq!(got, want, "hatch {k}");
            // Hatches 7 and 8 (1-based) carry bulges (72 = 1, group 42); the others none.
            let bulged = h.paths.iter().any(|p| match &p.edges {
                HatchBoundary::Polyline { vertices, .. } => vertices.iter().any(|v| v.2 != 0.0),
                HatchBoundary::Edges(_) => false,
            });
            assert_eq!(bulged, k == 6 || k == 7, "hatch {k}");
        }
    }

    #[test]
    fn clockwise_arcs_store_mirrored_angles() {
        let Some(hatches) = hatches_in("ac1027_flange_drawing_with_dimensions.dxf") else {
            return;
        };
        // Six HATCHes (MANIFEST.md: one in ENTITIES, five in blocks), all of edge paths with
        // lines and arcs, many clockwise (73 = 0).
        assert_eq!(hatches.len(), 6);
        let (mut n_paths, mut n_cw) = (0, 0);
        for h in &hatches {
            for p in &h.as_ref().unwrap().paths {
                let HatchBoundary::Edges(edges) = &p.edges else {
                    panic!("expected edge paths");
                };
                // Read as the mirrored arc's angles, every path closes. Coordinates are near
                // 100 and written to about 1e-13; one path has a join of its own that is off
                // by 6.6e-7 under either reading, hence 1e-5.
                let gap = largest_gap(edges);
                assert!(gap < 1e-5, "{gap}");
                let cw = edges
                    .iter()
                    .filter(|e| matches!(e, HatchEdge::Arc { ccw: false, .. }));
                if cw.count() == 0 {
                    continue;
                }
                n_paths += 1;
                n_cw += edges
                    .iter()
                    .filter(|e| matches!(e, HatchEdge::Arc { ccw: false, .. }))
                    .count();
                // Taken as written (a clockwise arc from 50 to 51), every such path has a gap.
                let literal: Vec<HatchEdge> = edges
                    .iter()
                    .map(|e| match *e {
                        HatchEdge::Arc {
                            center,
                            radius,
                            start_deg,
                            end_deg,
                            ccw: false,
                        } => HatchEdge::Arc {
                            center,
                            radius,
                            start_deg: -start_deg,
                            end_deg: -end_deg,
                            ccw: false,
                        },
                        ref other => other.clone(),
                    })
                    .collect();
                let gap = largest_gap(&literal);
                assert!(gap > 1e-3, "{gap}");
            }
        }
        assert!(
            n_paths >= 20 && n_cw > 300,
            "{n_paths} paths, {n_cw} clockwise arcs"
        );
    }
}
