//! Chaining loose segments into closed loops.
//!
//! Pieces that the file itself closes (circles, closed polylines) are loops as they are.
//! Open pieces are split into single segments, exact and reversed duplicates are dropped,
//! and segment ends that lie within `join_gap` of each other are merged into nodes through a
//! hash grid (no quadratic search). Then:
//! - a node where exactly two ends meet links two segments;
//! - a run of linked segments that comes back to its start is a loop;
//! - a run with two free ends is an open chain: a *broken loop* when its ends (or an end and
//!   another chain's end) are close compared with its length, stray geometry otherwise;
//! - a node where three or more ends meet is a branch, reported as an error.
//!
//! Ends merged into one node are moved onto the node's position, so that every chained loop
//! is exactly closed; Green's theorem then gives the same result about any origin.

use std::collections::HashMap;
use std::hash::{Hash, Hasher};

use super::scale::RunFacts;
use super::segment::{floor_i64, BBox, CurveSpan, Point, Segment};
use crate::import::{LayerName, Origin, Piece};

/// A closed loop of segments, each starting where the previous one ends.
#[derive(Debug, Clone, PartialEq)]
pub struct Loop {
    pub segments: Vec<Segment>,
    pub layer: LayerName,
    /// The entity the loop starts with (for messages).
    pub origin: Origin,
    /// The loop's place among the drawing's loops in the order the drawing lists them (by
    /// the entity it starts with; loops the file closes itself come first). Wherever order
    /// decides something (which of two equal outlines is kept, the order of holes, rows and
    /// messages), loops compare by it, so that a list of loops may be kept in whatever order
    /// suits memory: a large drawing's loops are listed as chaining found them, near
    /// neighbours in the drawing near each other in memory.
    pub seq: u32,
}

impl Loop {
    /// The box of the loop, with curve pieces boxed by their chords (within the flattening
    /// tolerance of the curve); see [`Loop::exact_bbox`].
    pub fn bbox(&self) -> BBox {
        self.segments
            .iter()
            .fold(BBox::EMPTY, |b, s| b.grow(&s.bbox()))
    }
    /// The exact box of the loop: curve pieces count with their curve's box from `curves`.
    pub fn exact_bbox(&self, curves: &[CurveSpan]) -> BBox {
        self.segments
            .iter()
            .fold(BBox::EMPTY, |b, s| b.grow(&exact_bbox(s, curves)))
    }
    /// Reverse the direction of travel.
    pub fn reverse(&mut self) {
        self.segments.reverse();
        for s in &mut self.segments {
            *s = s.reversed();
        }
    }
}

/// The exact box of a segment; a curve piece counts with its curve's box from `curves`.
pub(crate) fn exact_bbox(s: &Segment, curves: &[CurveSpan]) -> BBox {
    match s {
        Segment::Curve(c) => curves[c.span as usize].bbox,
        s => s.bbox(),
    }
}

/// The length of a segment; a curve piece counts with its curve's length from `curves`.
pub(crate) fn exact_length(s: &Segment, curves: &[CurveSpan]) -> f64 {
    match s {
        Segment::Curve(c) => curves[c.span as usize].length,
        s => s.length(),
    }
}

/// A problem found while building loops. Each carries the box of the geometry concerned, so
/// that profiles it overlaps can be flagged, and the layer of the entity it names.
#[derive(Debug, Clone, PartialEq)]
pub enum LoopProblem {
    /// A chain that nearly closes: its ends `gap_at` are `gap` apart.
    OpenChain {
        gap_at: (Point, Point),
        gap: f64,
        length: f64,
        bbox: BBox,
        origin: Origin,
        layer: LayerName,
    },
    /// `ends` segment ends meet at one point.
    Branch {
        at: Point,
        ends: usize,
        bbox: BBox,
        origin: Origin,
        layer: LayerName,
    },
    /// A loop crosses or touches itself.
    SelfIntersection {
        at: Point,
        bbox: BBox,
        origin: Origin,
        layer: LayerName,
    },
    /// Two loops cross each other.
    LoopsCross {
        at: Point,
        bbox: BBox,
        origin: Origin,
        layer: LayerName,
    },
    /// A loop encloses no area.
    ZeroArea {
        bbox: BBox,
        origin: Origin,
        layer: LayerName,
    },
    /// An open path of a drawing format whose paths must close (SVG), far from closing: its
    /// own error row, which does not stop the profiles its box overlaps (a centre line drawn
    /// across a section must not hide the section).
    OpenPath {
        ends: (Point, Point),
        length: f64,
        bbox: BBox,
        origin: Origin,
        layer: LayerName,
    },
}

impl LoopProblem {
    pub fn bbox(&self) -> BBox {
        match self {
            LoopProblem::OpenChain { bbox, .. }
            | LoopProblem::Branch { bbox, .. }
            | LoopProblem::SelfIntersection { bbox, .. }
            | LoopProblem::LoopsCross { bbox, .. }
            | LoopProblem::ZeroArea { bbox, .. }
            | LoopProblem::OpenPath { bbox, .. } => *bbox,
        }
    }

    /// The exact place of the problem: the box of the gap's two ends or of an open path's
    /// ends, the branch or crossing point; the whole box for a loop of no area.
    pub fn spot(&self) -> BBox {
        let of = |a: Point, b: Point| {
            let mut bb = BBox::EMPTY;
            bb.add_point(a);
            bb.add_point(b);
            bb
        };
        match self {
            LoopProblem::OpenChain { gap_at: (a, b), .. }
            | LoopProblem::OpenPath { ends: (a, b), .. } => of(*a, *b),
            LoopProblem::Branch { at, .. }
            | LoopProblem::SelfIntersection { at, .. }
            | LoopProblem::LoopsCross { at, .. } => of(*at, *at),
            LoopProblem::ZeroArea { bbox, .. } => *bbox,
        }
    }

    /// Whether the problem stops the profiles whose boxes it overlaps from being measured
    /// (it may hide a loop of theirs); an open path far from closing cannot.
    pub fn blocks_profiles(&self) -> bool {
        !matches!(self, LoopProblem::OpenPath { .. })
    }

    /// The open path far from closing that a stray chain is, for formats whose paths must
    /// close (see [`LoopProblem::OpenPath`]).
    pub fn open_path(stray: &StrayChain) -> LoopProblem {
        LoopProblem::OpenPath {
            ends: stray.ends,
            length: stray.length,
            bbox: stray.bbox,
            origin: stray.origin,
            layer: stray.layer.clone(),
        }
    }

    /// The layer of the entity the problem names.
    pub fn layer(&self) -> &str {
        match self {
            LoopProblem::OpenChain { layer, .. }
            | LoopProblem::Branch { layer, .. }
            | LoopProblem::SelfIntersection { layer, .. }
            | LoopProblem::LoopsCross { layer, .. }
            | LoopProblem::ZeroArea { layer, .. }
            | LoopProblem::OpenPath { layer, .. } => layer,
        }
    }

    /// A one-line description naming the place, with numbers in drawing units (mm).
    pub fn describe(&self) -> String {
        match self {
            LoopProblem::OpenChain {
                gap_at: (p, q),
                gap,
                origin,
                ..
            } => format!(
                "broken loop: chain starting with {origin} does not close, gap {} between ({}, {}) and ({}, {})",
                fmt_len(*gap),
                fmt_len(p.x),
                fmt_len(p.y),
                fmt_len(q.x),
                fmt_len(q.y)
            ),
            LoopProblem::Branch { at, ends, origin, .. } => format!(
                "branch: {ends} segment ends meet at ({}, {}) (near {origin})",
                fmt_len(at.x),
                fmt_len(at.y)
            ),
            LoopProblem::SelfIntersection { at, origin, .. } => format!(
                "self-intersecting loop (starting with {origin}) at ({}, {})",
                fmt_len(at.x),
                fmt_len(at.y)
            ),
            LoopProblem::LoopsCross { at, origin, .. } => format!(
                "loops cross each other at ({}, {}) (loop starting with {origin})",
                fmt_len(at.x),
                fmt_len(at.y)
            ),
            LoopProblem::ZeroArea { origin, .. } => {
                format!("loop starting with {origin} encloses no area")
            }
            LoopProblem::OpenPath {
                ends: (p, q),
                origin,
                ..
            } => format!(
                "open path: {origin} does not close, its ends ({}, {}) and ({}, {}) are {} apart (an outline must close)",
                fmt_len(p.x),
                fmt_len(p.y),
                fmt_len(q.x),
                fmt_len(q.y),
                fmt_len(p.dist(*q))
            ),
        }
    }
}

/// Format a length for a message: enough digits to find the place, no noise.
pub fn fmt_len(v: f64) -> String {
    let s = format!("{:.6}", v);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

/// What chaining produced.
#[derive(Debug, Default)]
pub struct Chained {
    /// Closed loops, numbered by `Loop::seq` in drawing order; a large drawing lists them in
    /// the order chaining found them.
    pub loops: Vec<Loop>,
    pub problems: Vec<LoopProblem>,
    /// Exact and reversed duplicate segments or closed pieces dropped.
    pub duplicates: usize,
    /// Open chains ignored as stray geometry (centre lines, construction lines).
    pub stray_chains: usize,
    /// Those chains, for `sectio explain`.
    pub strays: Vec<StrayChain>,
    /// Segments shorter than `join_gap` dropped.
    pub degenerate: usize,
}

/// An open chain far from closing, left out as stray geometry.
#[derive(Debug, Clone, PartialEq)]
pub struct StrayChain {
    pub ends: (Point, Point),
    pub length: f64,
    pub bbox: BBox,
    pub segments: usize,
    pub layer: LayerName,
    /// The entity the chain starts with.
    pub origin: Origin,
}

/// A broken loop is an open chain whose ends are closer than this fraction of its length.
pub const BROKEN_GAP_RATIO: f64 = 0.1;

/// Where a run came from: its piece, whose layer and origin (first entity) are read; its
/// segments have been taken out by then.
type Meta = Piece;

/// Build loops from pieces (coordinates in millimetres); `join_gap` as in the module doc.
pub fn chain(pieces: Vec<Piece>, join_gap: f64) -> Chained {
    chain_read(pieces, join_gap, &[])
}

/// [`chain`] with the [`RunFacts`] a reader noted of the pieces as it made them
/// ([`ScaleTally::runs`](super::ScaleTally), in the pieces' order): a piece none of whose
/// segments is short enough to drop goes on without its segments being read again here
/// (those of a large sheet are out of the cache by now). The loops are those [`chain`] makes.
/// The facts must be those of `pieces` as given, in millimetres and unchanged since the
/// reader noted them; debug builds check each one used.
pub fn chain_read(mut pieces: Vec<Piece>, join_gap: f64, runs: &[RunFacts]) -> Chained {
    let mut out = Chained::default();
    let q = join_gap.max(f64::MIN_POSITIVE);
    // Whole entities drawn twice (either way round) are dropped. A direction-free
    // fingerprint (segment count and box) finds candidates; the sorted segment keys confirm
    // them, so a fingerprint collision never drops a loop.
    // First run stored under each fingerprint; further runs with it follow through `next_same`.
    // (Grown as needed: single loose segments, most pieces of a sheet, never enter it.)
    let mut seen: FastMap<(usize, u64, bool), u32> = FastMap::default();
    let mut next_same: Vec<u32> = Vec::with_capacity(pieces.len());
    // (segments, closed, connected as `drop_tiny` says, piece)
    let mut store: Vec<(Vec<Segment>, bool, bool, usize)> = Vec::with_capacity(pieces.len());
    let sorted_keys = |segs: &[Segment]| {
        let mut k: Vec<SegKey> = segs.iter().map(|s| seg_key(s, q)).collect();
        k.sort_unstable();
        k
    };
    // The pieces stay where they are, as the runs' `Meta` (their segments taken out). Moving
    // each out of the list, and its layer and origin into a second one, stalled on a
    // store-to-load forward for every piece: 30 % of this function's own time on the heavy
    // set (`perf annotate`).
    let mut runs = runs.iter().peekable();
    for (pi, piece) in pieces.iter_mut().enumerate() {
        let facts = runs.next_if(|r| r.piece as usize == pi);
        // With every segment longer than the gap (NaN, for a segment not finite, is not),
        // `drop_tiny` would keep them all as they are.
        let (kept, connected, known_bbox) = match facts {
            Some(r) if r.shortest2 > join_gap * join_gap => {
                debug_assert_eq!(*r, RunFacts::of(r.piece, &piece.segments));
                (std::mem::take(&mut piece.segments), r.joined, Some(r.bbox))
            }
            _ => {
                let (kept, connected) = drop_tiny(
                    std::mem::take(&mut piece.segments),
                    join_gap,
                    &mut out.degenerate,
                );
                (kept, connected, None)
            }
        };
        if kept.is_empty() {
            continue;
        }
        // A single loose segment (a LINE or ARC entity, most of a sheet) goes straight on:
        // its twins are found in `link`, where they join the same two nodes.
        if !piece.closed && kept.len() == 1 {
            next_same.push(NONE);
            store.push((kept, false, connected, pi));
            continue;
        }
        // Fingerprint: the run's box, quantised like the keys; cheap, and equal for twins.
        let bb = known_bbox.unwrap_or_else(|| {
            kept.iter()
                .fold(BBox::EMPTY, |b, s| b.grow(&s.loose_bbox()))
        });
        let sum = {
            let mut h = FastHasher::default();
            seg_key(&Segment::line(bb.min, bb.max), q).hash(&mut h);
            h.finish()
        };
        let head = seen.entry((kept.len(), sum, piece.closed)).or_insert(NONE);
        if *head != NONE {
            let mine = sorted_keys(&kept);
            let mut k = *head;
            let mut twin = false;
            while k != NONE && !twin {
                twin = sorted_keys(&store[k as usize].0) == mine;
                k = next_same[k as usize];
            }
            if twin {
                out.duplicates += 1;
                continue;
            }
        }
        next_same.push(*head);
        *head = store.len() as u32;
        store.push((kept, piece.closed, connected, pi));
    }
    // Both sized at once (grown by doubling, the runs' vector alone was a megabyte of a
    // catalog sheet's fresh memory in thirteen steps).
    let n_closed = store.iter().filter(|(_, closed, _, _)| *closed).count();
    let mut open: Vec<(Vec<Segment>, usize)> = Vec::with_capacity(store.len() - n_closed);
    out.loops.reserve(n_closed);
    for (segs, closed, connected, pi) in store {
        if closed {
            let Piece { layer, origin, .. } = &pieces[pi];
            let seq = out.loops.len() as u32;
            out.loops
                .push(close_up(segs, connected, layer.clone(), *origin, seq));
        } else {
            open.push((segs, pi));
        }
    }
    link(open, &pieces, join_gap, &mut out);
    out
}

/// The segments without those shorter than `join_gap` (full circles excepted) and without
/// non-finite ones, in place. A short segment is left out only while the run stays within
/// `join_gap` of the last point kept (the end of the last kept segment, or the run's start),
/// so a stretch of many short segments is thinned to steps of about `join_gap` instead of
/// vanishing; the segment after a dropped one starts at that point, so the run stays
/// connected and moves by at most `join_gap`. Also says whether every segment kept starts
/// where the one before it ends (so that [`close_up`] need not visit them again).
///
/// A segment that stays where it is is not written back: a large drawing's pieces are out
/// of the cache, and rewriting every segment would only make them all dirty.
fn drop_tiny(
    mut segments: Vec<Segment>,
    join_gap: f64,
    dropped: &mut usize,
) -> (Vec<Segment>, bool) {
    let mut write = 0;
    let mut relink = false;
    let mut connected = true;
    // The run's start: the first finite segment's start.
    let mut start: Option<Point> = None;
    for read in 0..segments.len() {
        let s = segments[read];
        if !s.is_finite() {
            *dropped += 1;
            relink = true;
            continue;
        }
        let run_start = *start.get_or_insert(s.start());
        // The last point kept (the run's start until a segment is kept).
        let from = || {
            if write > 0 {
                segments[write - 1].end()
            } else {
                run_start
            }
        };
        let tiny = match &s {
            // A curve piece this short goes like a line; its curve's correction, below
            // the gap times the flattening tolerance, goes with it.
            Segment::Line { a, b } | Segment::Curve(super::segment::CurvePiece { a, b, .. }) => {
                let d = *b - *a;
                d.dot(d) <= join_gap * join_gap
            }
            Segment::Arc(arc) => !arc.is_full_circle() && arc.length() <= join_gap,
        };
        if tiny && s.end().dist(from()) <= join_gap {
            *dropped += 1;
            relink = true;
            continue;
        }
        let kept = if relink {
            snapped(s, from(), s.end())
        } else {
            s
        };
        if write > 0 {
            connected &= segments[write - 1].end() == kept.start();
        }
        if relink || write != read {
            segments[write] = kept;
        }
        write += 1;
        relink = false;
    }
    segments.truncate(write);
    (segments, connected)
}

/// Quantised, direction-free identity of a segment, for duplicate detection.
type SegKey = [(i64, i64); 3];

fn seg_key(s: &Segment, q: f64) -> SegKey {
    // Round half away from zero by a cast (one instruction; `f64::round` is a call).
    let round = |v: f64| (v + 0.5f64.copysign(v)) as i64;
    let cell = |p: Point| (round(p.x / q), round(p.y / q));
    let (a, b) = (cell(s.start()), cell(s.end()));
    let (a, b) = if a <= b { (a, b) } else { (b, a) };
    // Lines are told apart by their ends; arcs also by their midpoint (two arcs of one
    // circle between the same points, such as the halves of a circle, differ there) and the
    // size of their sweep. Both are direction-free and need no trigonometry: a
    // counter-clockwise arc lies to the right of its chord, so its midpoint is the centre plus
    // r times the chord's right normal (left for a clockwise one); reversing the arc turns
    // both the chord and the sweep round.
    let third = match s {
        Segment::Line { .. } => (0, 0),
        // The curve's own midpoint tells two curves through the same ends apart, and a
        // curve piece from a straight line.
        Segment::Curve(c) => {
            let m = cell(c.mid);
            (m.0, m.1 ^ 0x5a5a_5a5a)
        }
        Segment::Arc(arc) => {
            let d = arc.end - arc.start;
            let len = d.norm();
            let mid = if len > 0.0 {
                arc.center + Point::new(d.y, -d.x) * (arc.radius * arc.sweep.signum() / len)
            } else {
                arc.center
            };
            let m = cell(mid);
            (m.0, m.1 ^ round(arc.sweep.abs() * 1e9))
        }
    };
    [a, b, third]
}

/// A small, fast hasher for integer keys (the multiply-rotate scheme of Firefox's and
/// rustc's FxHash; common practice). Keys here come from geometry, not from an adversary
/// that could aim for collisions, and a collision only costs time.
#[derive(Default, Clone, Copy)]
pub(crate) struct FastHasher(u64);

impl std::hash::Hasher for FastHasher {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for chunk in bytes.chunks(8) {
            let mut buf = [0u8; 8];
            buf[..chunk.len()].copy_from_slice(chunk);
            self.write_u64(u64::from_le_bytes(buf));
        }
    }
    fn write_u64(&mut self, v: u64) {
        self.0 = (self.0.rotate_left(5) ^ v).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
    fn write_i64(&mut self, v: i64) {
        self.write_u64(v as u64);
    }
    fn write_usize(&mut self, v: usize) {
        self.write_u64(v as u64);
    }
}

pub(crate) type FastBuild = std::hash::BuildHasherDefault<FastHasher>;
pub(crate) type FastMap<K, V> = HashMap<K, V, FastBuild>;

/// Make a loop from segments that already form a closed run, bridging tiny gaps;
/// `connected`: whether each segment is known to start where the one before it ends.
fn close_up(
    segments: Vec<Segment>,
    connected: bool,
    layer: LayerName,
    origin: Origin,
    seq: u32,
) -> Loop {
    let connected = connected || segments.windows(2).all(|w| w[0].end() == w[1].start());
    let mut out = if connected {
        segments
    } else {
        let mut out: Vec<Segment> = Vec::with_capacity(segments.len() + 1);
        for s in segments {
            if let Some(prev) = out.last().map(Segment::end) {
                if prev != s.start() {
                    out.push(Segment::line(prev, s.start()));
                }
            }
            out.push(s);
        }
        out
    };
    // Close the run: a bridge of at most `join_gap` for chained loops, or the closing edge a
    // closed entity implies when its stored ends differ.
    if let (Some(first), Some(last)) = (out.first(), out.last()) {
        let (first, last) = (first.start(), last.end());
        if last != first {
            out.push(Segment::line(last, first));
        }
    }
    Loop {
        segments: out,
        layer,
        origin,
        seq,
    }
}

/// The segment with its ends moved onto the merged node positions (by at most `join_gap`),
/// so that consecutive segments share their end points exactly. An arc keeps its centre,
/// radius and sweep; its chord moves with the ends.
fn snapped(seg: Segment, start: Point, end: Point) -> Segment {
    match seg {
        Segment::Line { .. } => Segment::Line { a: start, b: end },
        Segment::Curve(c) => Segment::Curve(super::segment::CurvePiece {
            a: start,
            b: end,
            ..c
        }),
        Segment::Arc(mut arc) => {
            arc.start = start;
            arc.end = end;
            Segment::Arc(arc)
        }
    }
}

/// No node (also "no twin" in `chain`'s fingerprint lists).
const NONE: u32 = u32::MAX;

/// Merged run ends: the node of each end, and each node's position.
struct Nodes {
    of_end: Vec<u32>,
    pos: Vec<Point>,
}

/// Merge the points lying within `join_gap` of each other into nodes; `Nodes::of_end[i]` is
/// the node of `points[i]`, and a node sits at the first of its points in the order given.
///
/// Points are filed in grid cells sixteen gaps wide, sorted by cell (column, then row, then
/// the order given) and swept in that order: each takes the nearest node within `join_gap`
/// (the lowest-numbered of equals) among those already made in its own cell and, when it lies
/// within one gap of a cell border, in the cells across that border that come earlier;
/// otherwise it makes a node. So every node that could lie within the gap is looked at: one
/// of a later cell does not exist yet, and the points of that cell look back in their turn.
/// Sorting makes every later pass read memory in order, so the time per point stays flat from
/// a thousand points to millions; a hash grid visited in drawing order missed the cache on
/// nearly every lookup once a drawing outgrew it.
fn merge_ends(points: &[Point], join_gap: f64) -> Nodes {
    let n = points.len();
    let cell = (16.0 * join_gap).max(f64::MIN_POSITIVE);
    let inv_cell = 1.0 / cell;
    let margin = join_gap / cell;
    let gap2 = join_gap * join_gap;
    let cell_of = |p: &Point| (floor_i64(p.x * inv_cell), floor_i64(p.y * inv_cell));
    // (index of the point, its cell), in the order of the cells.
    let sorted = sorted_by_cell(&points.iter().map(cell_of).collect::<Vec<_>>());

    let mut of_end = vec![NONE; n];
    let mut pos: Vec<Point> = Vec::with_capacity(n);
    // Cells of the previous and of the current column: (row, first node, end of its nodes).
    let mut prev: Vec<(i64, u32, u32)> = Vec::new();
    let mut cur: Vec<(i64, u32, u32)> = Vec::new();
    let mut cur_col: Option<i64> = None;
    let mut i = 0;
    while i < n {
        let (cx, cy) = sorted[i].1;
        if cur_col != Some(cx) {
            std::mem::swap(&mut prev, &mut cur);
            if cur_col.is_none_or(|c| c.wrapping_add(1) != cx) {
                prev.clear();
            }
            cur.clear();
            cur_col = Some(cx);
        }
        let first = pos.len() as u32;
        // The cell below, when it was the last one filed in this column.
        let below = cur
            .last()
            .filter(|c| c.0 == cy.wrapping_sub(1))
            .map(|c| (c.1, c.2));
        // A cell of the previous column, by row.
        let left = |row: i64| {
            prev.binary_search_by_key(&row, |c| c.0)
                .ok()
                .map(|k| (prev[k].1, prev[k].2))
        };
        while i < n && sorted[i].1 == (cx, cy) {
            if let Some(&(ahead, _)) = sorted.get(i + AHEAD) {
                prefetch(&points[ahead as usize]);
                prefetch(&of_end[ahead as usize]);
            }
            let e = sorted[i].0;
            let p = points[e as usize];
            // Where in its cell the point lies (0..1 across, each way).
            let (rx, ry) = (p.x * inv_cell - cx as f64, p.y * inv_cell - cy as f64);
            // Most points meet one other exactly (two entities' shared vertex), usually the
            // one just filed: then that node is the nearest, at distance 0.
            if pos.len() as u32 > first && pos[pos.len() - 1] == p {
                of_end[e as usize] = pos.len() as u32 - 1;
                i += 1;
                continue;
            }
            let mut best: Option<(f64, u32)> = None;
            let mut look = |nodes: (u32, u32), pos: &[Point]| {
                for id in nodes.0..nodes.1 {
                    let v = pos[id as usize] - p;
                    let d2 = v.dot(v);
                    if d2 <= gap2 && best.is_none_or(|b| (d2, id) < b) {
                        best = Some((d2, id));
                    }
                }
            };
            look((first, pos.len() as u32), &pos);
            if ry < margin {
                if let Some(b) = below {
                    look(b, &pos);
                }
            }
            if rx < margin {
                let rows = [
                    (ry < margin, cy.wrapping_sub(1)),
                    (true, cy),
                    (ry > 1.0 - margin, cy.wrapping_add(1)),
                ];
                for (wanted, row) in rows {
                    if let Some(l) = left(row).filter(|_| wanted) {
                        look(l, &pos);
                    }
                }
            }
            of_end[e as usize] = match best {
                Some((_, id)) => id,
                None => {
                    pos.push(p);
                    pos.len() as u32 - 1
                }
            };
            i += 1;
        }
        cur.push((cy, first, pos.len() as u32));
    }
    // Each node moves to its first point in the order given (drawing order), so that the
    // result does not depend on the sorting: every point is written to its node, last to
    // first, so that the first one stays. (A test of whether the node was placed already
    // went either way at random: a wrong guess for one point in four or so.)
    for (k, (&id, &p)) in of_end.iter().zip(points).enumerate().rev() {
        if let Some(&ahead) = k.checked_sub(AHEAD).map(|a| &of_end[a]) {
            prefetch(&pos[ahead as usize]);
        }
        pos[id as usize] = p;
    }
    Nodes { of_end, pos }
}

/// The indices of `cells` with their cells, sorted by cell (column, then row), equal cells in
/// index order.
///
/// A stable least-significant-digit radix sort (common practice) of words holding a cell's
/// offset from the lowest column and row above the index: eight bytes an entry and linear
/// in the number of points, so the sweep in [`merge_ends`] stays linear too. A comparison
/// sort gives the same order for very few points, or when the offsets need more than 32 bits
/// (over 65 536 cells each way).
fn sorted_by_cell(cells: &[(i64, i64)]) -> Vec<(u32, (i64, i64))> {
    let n = cells.len();
    let (mut lo, mut hi) = ((i64::MAX, i64::MAX), (i64::MIN, i64::MIN));
    for &(cx, cy) in cells {
        lo = (lo.0.min(cx), lo.1.min(cy));
        hi = (hi.0.max(cx), hi.1.max(cy));
    }
    let bits = |lo: i64, hi: i64| 64 - (hi.wrapping_sub(lo) as u64).leading_zeros();
    let (bx, by) = (bits(lo.0, hi.0), bits(lo.1, hi.1));
    if n < 64 || bx + by > 32 {
        let mut order: Vec<(u32, (i64, i64))> = cells
            .iter()
            .enumerate()
            .map(|(i, &c)| (i as u32, c))
            .collect();
        order.sort_unstable_by_key(|&(i, c)| (c, i));
        return order;
    }
    let mut items: Vec<u64> = cells
        .iter()
        .enumerate()
        .map(|(i, &(cx, cy))| {
            let x = cx.wrapping_sub(lo.0) as u64;
            let y = cy.wrapping_sub(lo.1) as u64;
            ((x << by | y) << 32) | i as u64
        })
        .collect();
    let mut spare = vec![0u64; n];
    // As few passes as digits of at most 11 bits allow (a count table of up to 2048 entries
    // stays in the first-level cache), the counts of all of them taken in one read.
    let bits = bx + by;
    let passes = bits.div_ceil(11);
    let digit_bits = if passes == 0 {
        0
    } else {
        bits.div_ceil(passes)
    };
    let buckets = 1usize << digit_bits;
    let digit = |k: u64, pass: u32| ((k >> (32 + pass * digit_bits)) as usize) & (buckets - 1);
    let mut counts = vec![0usize; buckets * passes as usize];
    for &k in &items {
        for pass in 0..passes {
            counts[pass as usize * buckets + digit(k, pass)] += 1;
        }
    }
    for (pass, count) in counts.chunks_mut(buckets.max(1)).enumerate() {
        let mut at = 0;
        for c in count.iter_mut() {
            let here = *c;
            *c = at;
            at += here;
        }
        for &k in &items {
            let d = digit(k, pass as u32);
            spare[count[d]] = k;
            count[d] += 1;
        }
        std::mem::swap(&mut items, &mut spare);
    }
    // The cell back from the key: `by` bits of row above the index, the column above those.
    let row_mask = 1u64.checked_shl(by).map_or(u64::MAX, |b| b - 1);
    items
        .into_iter()
        .map(|k| {
            let key = k >> 32;
            let col = key.checked_shr(by).unwrap_or(0);
            let row = key & row_mask;
            (
                k as u32,
                (lo.0.wrapping_add(col as i64), lo.1.wrapping_add(row as i64)),
            )
        })
        .collect()
}

fn link(runs: Vec<(Vec<Segment>, usize)>, meta: &[Meta], join_gap: f64, out: &mut Chained) {
    if runs.is_empty() {
        return;
    }
    let points: Vec<Point> = runs
        .iter()
        .flat_map(|(r, _)| [r[0].start(), r[r.len() - 1].end()])
        .collect();
    let nodes = merge_ends(&points, join_gap);
    drop(points);
    let n_nodes = nodes.pos.len();
    // Runs are renumbered in the order of their start nodes, which follows the grid: the
    // walks below then step between neighbours in memory. `perm[k]` is the drawing-order
    // index of run k, `rank[r]` the new number of run r. Wherever a choice depends on order
    // (where a loop starts, which entity a message names), drawing order decides, as it did
    // before the renumbering, so results do not depend on it.
    let perm = counting_sort(runs.len(), n_nodes, |r| nodes.of_end[2 * r]);
    let mut rank = vec![0u32; runs.len()];
    for (k, &r) in perm.iter().enumerate() {
        rank[r as usize] = k as u32;
    }
    // ends[k] = (node at run k's start, node at its end)
    let ends: Vec<(u32, u32)> = perm
        .iter()
        .map(|&r| {
            (
                nodes.of_end[2 * r as usize],
                nodes.of_end[2 * r as usize + 1],
            )
        })
        .collect();
    // The runs' segments copied into one array in that order; their own vectors are freed
    // in drawing order, the order they were made in.
    let runs = {
        let sorted = Runs::gather(&runs, &perm);
        drop(runs);
        sorted
    };
    // Adjacency in compressed form: for each node, the runs touching it.
    let mut degree = vec![0u32; n_nodes + 1];
    for &(a, b) in &ends {
        degree[a as usize] += 1;
        degree[b as usize] += 1;
    }
    let mut offset = vec![0usize; n_nodes + 1];
    for i in 0..n_nodes {
        offset[i + 1] = offset[i] + degree[i] as usize;
    }
    let mut fill = offset.clone();
    let mut adj = vec![0u32; offset[n_nodes]];
    for (i, &(a, b)) in ends.iter().enumerate() {
        adj[fill[a as usize]] = i as u32;
        fill[a as usize] += 1;
        adj[fill[b as usize]] = i as u32;
        fill[b as usize] += 1;
    }
    drop(fill);
    let touching = |n: u32| &adj[offset[n as usize]..offset[n as usize + 1]];
    // Each node once, in the order of its first end in the drawing.
    let by_first_end = || {
        // Each end written at the next place, which moves on only for a node not seen
        // before (no branch on that: it goes either way at random). One place more than
        // nodes, for the ends after the last new one.
        let mut seen = vec![false; n_nodes];
        let mut order = vec![0u32; n_nodes + 1];
        let mut len = 0;
        for &n in &nodes.of_end {
            order[len] = n;
            len += usize::from(!std::mem::replace(&mut seen[n as usize], true));
        }
        order.truncate(len);
        order
    };

    // Single segments drawn twice, either way round: twins join the same two nodes and have
    // the same key. The later one in the drawing is dropped (and counted), then the rest is
    // linked afresh.
    let q = join_gap.max(f64::MIN_POSITIVE);
    let mut twin = vec![false; runs.len()];
    let mut twins = 0;
    for n in 0..n_nodes as u32 {
        let t = touching(n);
        // The node at the other end of run r.
        // (One of the two is n, so x ^ y ^ n is the other, or n for a run from n to n;
        // a test of which goes either way at random.)
        let other = |r: u32| {
            let (x, y) = ends[r as usize];
            x ^ y ^ n
        };
        for (k, &r1) in t.iter().enumerate() {
            for &r2 in &t[k + 1..] {
                // Most pairs at a node go on to different nodes: that is asked first.
                if other(r1) != other(r2) || r1 == r2 {
                    continue;
                }
                let (r1, r2) = if perm[r1 as usize] < perm[r2 as usize] {
                    (r1 as usize, r2 as usize)
                } else {
                    (r2 as usize, r1 as usize)
                };
                if twin[r1] || twin[r2] {
                    continue;
                }
                let (a, b) = (runs.run(r1), runs.run(r2));
                if a.len() == 1 && b.len() == 1 && seg_key(&a[0], q) == seg_key(&b[0], q) {
                    twin[r2] = true;
                    twins += 1;
                }
            }
        }
    }
    if twins > 0 {
        out.duplicates += twins;
        // Back in drawing order.
        let kept: Vec<(Vec<Segment>, usize)> = rank
            .iter()
            .map(|&k| k as usize)
            .filter(|&k| !twin[k])
            .map(|k| (runs.run(k).to_vec(), runs.piece[k] as usize))
            .collect();
        return link(kept, meta, join_gap, out);
    }
    let bbox_of = |r: &[Segment]| r.iter().fold(BBox::EMPTY, |b, s| b.union(&s.bbox()));
    let mut used = vec![false; runs.len()];
    let drawing_order = by_first_end();

    // Branches: every connected group holding a node of degree three or more is reported once,
    // naming the first entity at its first branch node.
    for &n in &drawing_order {
        if degree[n as usize] >= 3 && !touching(n).iter().all(|&r| used[r as usize]) {
            let mut bbox = BBox::EMPTY;
            let mut stack = vec![n];
            while let Some(m) = stack.pop() {
                for &r in touching(m) {
                    if !used[r as usize] {
                        used[r as usize] = true;
                        bbox = bbox.union(&bbox_of(runs.run(r as usize)));
                        let (a, b) = ends[r as usize];
                        stack.push(if a == m { b } else { a });
                    }
                }
            }
            let r0 = touching(n).iter().map(|&r| perm[r as usize]).min();
            let piece = runs.piece[rank[r0.unwrap_or(0) as usize] as usize] as usize;
            out.problems.push(LoopProblem::Branch {
                at: nodes.pos[n as usize],
                ends: degree[n as usize] as usize,
                bbox,
                origin: meta[piece].origin,
                layer: meta[piece].layer.clone(),
            });
        }
    }

    // Walk from node `start_node` along run `r0`, noting each run taken (`Step`); stops back
    // at the start (a loop), at a free end, or at a node that is not of degree two. Returns
    // whether it closed, and which step took the run that comes first in the drawing.
    // (`steps` keeps its room from walk to walk.)
    let mut steps: Vec<Step> = Vec::new();
    let walk =
        |start_node: u32, r0: u32, used: &mut [bool], steps: &mut Vec<Step>| -> (bool, usize) {
            steps.clear();
            let mut node = start_node;
            let mut r = r0;
            let mut earliest = (u32::MAX, 0);
            loop {
                used[r as usize] = true;
                let (a, b) = ends[r as usize];
                let forward = a == node;
                let next = if forward { b } else { a };
                if perm[r as usize] < earliest.0 {
                    earliest = (perm[r as usize], steps.len());
                }
                steps.push(Step {
                    run: r,
                    forward,
                    from: node,
                    to: next,
                });
                node = next;
                if node == start_node {
                    return (true, earliest.1);
                }
                if degree[node as usize] != 2 {
                    return (false, earliest.1);
                }
                match touching(node).iter().find(|&&t| !used[t as usize]) {
                    Some(&t) => r = t,
                    None => return (false, earliest.1),
                }
            }
        };
    // The segments of a walk's steps, from step `start` on, each run oriented head to tail
    // with its ends snapped onto the nodes: copied once, into a vector of exactly their
    // number. Forward, the steps follow on from `start` round to the one before it; `back`
    // takes them from `start` down to the first, then from the last down, each the other
    // way round (a loop walked against its first run's direction).
    let segments_of = |steps: &[Step], start: usize, back: bool| {
        let total = steps.iter().map(|s| runs.len_of(s.run as usize)).sum();
        let mut out: Vec<Segment> = Vec::with_capacity(total);
        let m = steps.len();
        for i in 0..m {
            let k = if back {
                if i <= start {
                    start - i
                } else {
                    start + m - i
                }
            } else if start + i < m {
                start + i
            } else {
                start + i - m
            };
            let Step {
                run,
                forward,
                from,
                to,
            } = steps[k];
            let (forward, from, to) = if back {
                (!forward, to, from)
            } else {
                (forward, from, to)
            };
            let run = runs.run(run as usize);
            let (from, to) = (nodes.pos[from as usize], nodes.pos[to as usize]);
            // Most runs are one loose LINE or ARC: snapped once, as it is put in.
            if let [one] = run {
                let one = if forward { *one } else { one.reversed() };
                out.push(snapped(one, from, to));
                continue;
            }
            let first = out.len();
            if forward {
                out.extend_from_slice(run);
            } else {
                out.extend(run.iter().rev().map(Segment::reversed));
            }
            out[first] = snapped(out[first], from, out[first].end());
            let last = out.len() - 1;
            out[last] = snapped(out[last], out[last].start(), to);
        }
        out
    };

    // Open chains start at free ends.
    let mut open: Vec<(Vec<Segment>, usize)> = Vec::new();
    for &n in &drawing_order {
        if degree[n as usize] == 1 {
            let r = touching(n)[0];
            if !used[r as usize] {
                walk(n, r, &mut used, &mut steps);
                let run = segments_of(&steps, 0, false);
                open.push((run, runs.piece[r as usize] as usize));
            }
        }
    }
    // What is left runs through nodes of degree two only: closed loops, each starting with its
    // first run in the drawing, going forward along it, numbered (`Loop::seq`) in the order of
    // those runs. A large drawing's loops are found in the order of the runs in memory (in
    // drawing order, each would start with a cache miss) and listed in that order, which the
    // crossing and nesting passes read them in; a small one's are found in drawing order,
    // where each walk starts right.
    const MEMORY_ORDER_FROM: usize = 4096;
    let memory_order = runs.len() >= MEMORY_ORDER_FROM;
    let mut found: Vec<(u32, Loop)> = Vec::new();
    for (step, &r) in rank.iter().enumerate() {
        let k = if memory_order { step } else { r as usize };
        if !used[k] {
            let (closed, e) = walk(ends[k].0, k as u32, &mut used, &mut steps);
            let first = steps[e].run as usize;
            let piece = runs.piece[first] as usize;
            let Piece { layer, origin, .. } = &meta[piece];
            if closed {
                // From the first run on: forward, or the whole loop the other way round.
                let run = segments_of(&steps, e, !steps[e].forward);
                found.push((perm[first], close_up(run, false, layer.clone(), *origin, 0)));
            } else {
                let run = segments_of(&steps, 0, false);
                open.push((run, piece));
            }
        }
    }
    // Numbered in the order of their first runs, after the loops already made.
    let base = out.loops.len() as u32;
    let mut by_first: Vec<u32> = (0..found.len() as u32).collect();
    by_first.sort_unstable_by_key(|&k| found[k as usize].0);
    for (place, &k) in by_first.iter().enumerate() {
        found[k as usize].1.seq = base + place as u32;
    }
    out.loops.extend(found.into_iter().map(|(_, l)| l));
    classify_open(open, meta, out);
}

/// One run taken by a walk in `link`: which, whether along its own direction, and the nodes
/// it goes from and to.
#[derive(Clone, Copy)]
struct Step {
    run: u32,
    forward: bool,
    from: u32,
    to: u32,
}

/// Runs of segments in one array: run k is `segs[start[k]..start[k + 1]]`, from piece
/// `piece[k]`.
struct Runs {
    segs: Vec<Segment>,
    start: Vec<u32>,
    piece: Vec<u32>,
}

/// How many items ahead the passes that read in an order unrelated to memory (a gather
/// through a permutation) ask for the memory they will need: enough to cover a miss to main
/// memory at a few nanoseconds per item.
const AHEAD: usize = 32;

/// Ask the processor to bring the memory at `p` into the cache, without waiting for it: a
/// pass that reads a large array in a scattered order then has many misses under way at once
/// instead of one (on a million-segment drawing this halves the gather of runs and cuts
/// merging ends by a third). A hint only: it never faults, whatever `p` is, and does
/// nothing on processors other than x86-64.
#[inline(always)]
fn prefetch<T>(p: *const T) {
    #[cfg(target_arch = "x86_64")]
    // SAFETY: a prefetch instruction reads no value and raises no fault for any address.
    unsafe {
        core::arch::x86_64::_mm_prefetch::<{ core::arch::x86_64::_MM_HINT_T0 }>(p as *const i8)
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = p;
}

impl Runs {
    /// The runs `runs[order[0]]`, `runs[order[1]]`, ... copied into one array.
    fn gather(runs: &[(Vec<Segment>, usize)], order: &[u32]) -> Runs {
        let total = runs.iter().map(|(r, _)| r.len()).sum();
        let mut sorted = Runs {
            segs: Vec::with_capacity(total),
            start: Vec::with_capacity(order.len() + 1),
            piece: Vec::with_capacity(order.len()),
        };
        sorted.start.push(0);
        for (k, &r) in order.iter().enumerate() {
            // Two steps ahead: a run's entry in the list, then (by the time it has come in)
            // the segments it points to.
            if let Some(&a) = order.get(k + AHEAD) {
                prefetch(&runs[a as usize]);
            }
            if let Some(&a) = order.get(k + AHEAD / 2) {
                prefetch(runs[a as usize].0.as_ptr());
            }
            let (segs, piece) = &runs[r as usize];
            // Most runs are one loose LINE or ARC: copied without a call to `memcpy`.
            if let [one] = &segs[..] {
                sorted.segs.push(*one);
            } else {
                sorted.segs.extend_from_slice(segs);
            }
            sorted.start.push(sorted.segs.len() as u32);
            sorted.piece.push(*piece as u32);
        }
        sorted
    }

    fn len(&self) -> usize {
        self.piece.len()
    }

    fn len_of(&self, k: usize) -> usize {
        (self.start[k + 1] - self.start[k]) as usize
    }

    fn run(&self, k: usize) -> &[Segment] {
        &self.segs[self.start[k] as usize..self.start[k + 1] as usize]
    }
}

/// The numbers 0..n sorted by `key` (below `keys`), equal keys in increasing order: a
/// counting sort, linear in n + keys.
pub(crate) fn counting_sort(n: usize, keys: usize, key: impl Fn(usize) -> u32) -> Vec<u32> {
    let mut start = vec![0u32; keys + 1];
    for i in 0..n {
        start[key(i) as usize + 1] += 1;
    }
    for k in 0..keys {
        start[k + 1] += start[k];
    }
    let mut order = vec![0u32; n];
    for i in 0..n {
        let k = key(i) as usize;
        order[start[k] as usize] = i as u32;
        start[k] += 1;
    }
    order
}

/// Decide which open chains are broken loops (errors) and which are stray geometry.
fn classify_open(open: Vec<(Vec<Segment>, usize)>, meta: &[Meta], out: &mut Chained) {
    struct Info {
        p: Point,
        q: Point,
        length: f64,
        bbox: BBox,
        piece: usize,
    }
    let infos: Vec<Info> = open
        .iter()
        .map(|(run, piece)| Info {
            p: run[0].start(),
            q: run[run.len() - 1].end(),
            length: run.iter().map(Segment::length).sum(),
            bbox: run.iter().fold(BBox::EMPTY, |b, s| b.union(&s.bbox())),
            piece: *piece,
        })
        .collect();
    let mut broken = vec![None; infos.len()];
    for (i, c) in infos.iter().enumerate() {
        let g = c.p.dist(c.q);
        if g < BROKEN_GAP_RATIO * c.length {
            broken[i] = Some((c.p, c.q, g));
        }
    }
    // Ends of two different chains close to each other (compared with the shorter chain)
    // also mean a loop broken in more than one place. Bounded: a sheet with thousands of
    // stray lines skips this check.
    if infos.len() <= 2000 {
        for i in 0..infos.len() {
            for j in i + 1..infos.len() {
                let (a, b) = (&infos[i], &infos[j]);
                let limit = BROKEN_GAP_RATIO * a.length.min(b.length);
                if !a.bbox.overlaps(&b.bbox, limit) {
                    continue;
                }
                for (x, y) in [(a.p, b.p), (a.p, b.q), (a.q, b.p), (a.q, b.q)] {
                    let g = x.dist(y);
                    if g < limit {
                        for k in [i, j] {
                            if broken[k].is_none_or(|(_, _, old)| g < old) {
                                broken[k] = Some((x, y, g));
                            }
                        }
                    }
                }
            }
        }
    }
    for ((info, b), (run, _)) in infos.iter().zip(broken).zip(&open) {
        match b {
            Some((p, q, gap)) => out.problems.push(LoopProblem::OpenChain {
                gap_at: (p, q),
                gap,
                length: info.length,
                bbox: info.bbox,
                origin: meta[info.piece].origin,
                layer: meta[info.piece].layer.clone(),
            }),
            None => {
                out.stray_chains += 1;
                out.strays.push(StrayChain {
                    ends: (info.p, info.q),
                    length: info.length,
                    bbox: info.bbox,
                    segments: run.len(),
                    layer: meta[info.piece].layer.clone(),
                    origin: meta[info.piece].origin,
                });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::import::{Location, Origin};
    use crate::test_rng::{uniform, xorshift};

    /// Clusters of points, each within a third of `gap` of its centre and the centres at
    /// least four gaps apart, many of them astride the grid's cell borders; shuffled.
    /// Returns the points and each point's cluster.
    fn clusters(n: usize, gap: f64, seed: u64) -> (Vec<Point>, Vec<usize>) {
        let mut u = uniform(seed);
        let cell = 16.0 * gap;
        let mut centres: Vec<Point> = Vec::new();
        while centres.len() < n {
            // On a lattice 5 gaps apart (so centres stay apart), some near cell borders.
            let (i, j) = ((u() * 400.0) as i64, (u() * 400.0) as i64);
            let mut c = Point::new(i as f64 * 5.0 * gap, j as f64 * 5.0 * gap);
            if u() < 0.3 {
                c.x = (c.x / cell).round() * cell + (u() - 0.5) * 0.5 * gap;
            }
            if u() < 0.3 {
                c.y = (c.y / cell).round() * cell + (u() - 0.5) * 0.5 * gap;
            }
            if centres.iter().all(|o| o.dist(c) > 4.0 * gap) {
                centres.push(c);
            }
        }
        let mut pts = Vec::new();
        let mut which = Vec::new();
        for (k, c) in centres.iter().enumerate() {
            for _ in 0..1 + (u() * 4.0) as usize {
                let (r, t) = (u() * gap / 3.0, u() * std::f64::consts::TAU);
                pts.push(Point::new(c.x + r * t.cos(), c.y + r * t.sin()));
                which.push(k);
            }
        }
        let mut next = xorshift(seed ^ 0x9e37);
        for i in (1..pts.len()).rev() {
            let j = (next() % (i as u64 + 1)) as usize;
            pts.swap(i, j);
            which.swap(i, j);
        }
        (pts, which)
    }

    #[test]
    fn ends_merge_exactly_when_a_search_of_all_pairs_says_so() {
        let gap = 0.05;
        // 600 clusters: enough points (over 512) for the radix sort, too.
        let (pts, which) = clusters(600, gap, 7);
        assert!(pts.len() > 1024);
        let nodes = merge_ends(&pts, gap);
        for i in 0..pts.len() {
            for j in 0..pts.len() {
                let same = nodes.of_end[i] == nodes.of_end[j];
                assert_eq!(same, which[i] == which[j], "points {i} and {j}");
                assert_eq!(same, pts[i].dist(pts[j]) <= gap, "points {i} and {j}");
            }
            // A node sits at the first of its points in the order given.
            let first = (0..pts.len()).find(|&k| which[k] == which[i]).unwrap();
            assert_eq!(nodes.pos[nodes.of_end[i] as usize], pts[first]);
        }
        // The same on few points (the comparison sort).
        let nodes = merge_ends(&pts[..300], gap);
        for i in 0..300 {
            for j in 0..300 {
                assert_eq!(nodes.of_end[i] == nodes.of_end[j], which[i] == which[j]);
            }
        }
    }

    /// `drop_tiny` says a run is connected exactly when each segment it keeps starts where
    /// the one before ends, for runs with tiny, non-finite and unjoined segments.
    #[test]
    fn dropping_tiny_segments_says_whether_the_run_is_connected() {
        let mut u = uniform(9);
        let gap = 0.01;
        let mut seen = [0usize; 2]; // runs not connected, connected
        for _ in 0..3000 {
            let n = 1 + (u() * 12.0) as usize;
            let mut p = Point::new(u(), u());
            let mut run = Vec::new();
            for _ in 0..n {
                // Long steps, tiny steps and, now and then, a jump or a non-finite end.
                let step = if u() < 0.3 { 0.3 * gap } else { 1.0 };
                let q = p + Point::polar(6.3 * u()) * step;
                let start = if u() < 0.1 {
                    p + Point::new(0.5, 0.0)
                } else {
                    p
                };
                let end = if u() < 0.03 {
                    Point::new(f64::NAN, 0.0)
                } else {
                    q
                };
                run.push(Segment::line(start, end));
                p = q;
            }
            let mut dropped = 0;
            let (kept, connected) = drop_tiny(run.clone(), gap, &mut dropped);
            let expected = kept.windows(2).all(|w| w[0].end() == w[1].start());
            assert_eq!(connected, expected, "{run:?}");
            seen[usize::from(connected)] += 1;
            // Every segment is either kept or counted as dropped.
            assert_eq!(kept.len() + dropped, run.len());
        }
        assert!(seen[0] > 300 && seen[1] > 300, "{seen:?}");
    }

    #[test]
    fn the_radix_sort_gives_the_order_of_a_comparison_sort() {
        for (seed, span) in [(1u64, 3i64), (2, 1000), (3, 60_000), (4, 1)] {
            let mut next = xorshift(seed);
            let cells: Vec<(i64, i64)> = (0..5000)
                .map(|_| {
                    let c = |v: u64| (v % span as u64) as i64 - span / 2 - 1_000_000_007;
                    (c(next()), c(next()))
                })
                .collect();
            let mut want: Vec<(u32, (i64, i64))> = (0..cells.len() as u32)
                .map(|i| (i, cells[i as usize]))
                .collect();
            want.sort_by_key(|&(i, c)| (c, i));
            assert_eq!(sorted_by_cell(&cells), want, "span {span}");
            assert_eq!(sorted_by_cell(&cells[..40]), {
                let mut w: Vec<(u32, (i64, i64))> =
                    (0..40).map(|i| (i, cells[i as usize])).collect();
                w.sort_by_key(|&(i, c)| (c, i));
                w
            });
        }
    }

    fn loose(segments: &[Segment]) -> Vec<Piece> {
        segments
            .iter()
            .enumerate()
            .map(|(i, s)| Piece {
                segments: vec![*s],
                closed: false,
                layer: "0".into(),
                origin: Origin {
                    entity: "LINE",
                    location: Location::Line(i as u64 + 1),
                    handle: None,
                    in_block: false,
                },
            })
            .collect()
    }

    #[test]
    fn a_loop_starts_with_its_first_entity_in_the_drawing_going_its_way() {
        // Squares side by side in a scrambled order, their edges listed in scrambled orders
        // and directions. Which edge is listed first changes from square to square, and it
        // runs one way round the square in some squares and the other way in others, so
        // that the walk that finds a loop meets its first edge at any of its four steps,
        // going either way. 40 squares are walked in drawing order, 1100 (4400 runs) in
        // memory order and then turned.
        let p = |x: f64, y: f64| Point::new(x, y);
        for squares in [40usize, 1100] {
            let mut edges = Vec::new();
            for k in 0..squares {
                let x = (k * 37 % squares) as f64 * 3.0;
                let c = [p(x, 0.0), p(x + 2.0, 0.0), p(x + 2.0, 2.0), p(x, 2.0)];
                // Edge j of the square, counter-clockwise, or turned round.
                let edge = |j: usize, turned: bool| {
                    let (a, b) = (c[j % 4], c[(j + 1) % 4]);
                    if turned {
                        Segment::line(b, a)
                    } else {
                        Segment::line(a, b)
                    }
                };
                let first = k % 4;
                edges.push(edge(first, k / 4 % 2 == 1));
                for (n, j) in [3, 1, 2].into_iter().enumerate() {
                    edges.push(edge(first + j, (k + n) % 3 == 0));
                }
            }
            let chained = chain(loose(&edges), 1e-6);
            assert_eq!(chained.loops.len(), squares);
            // Loops are numbered in the order of their first entities (a large drawing lists
            // them in memory order), each starting with it.
            let mut loops: Vec<&Loop> = chained.loops.iter().collect();
            loops.sort_by_key(|l| l.seq);
            for (k, l) in loops.into_iter().enumerate() {
                assert_eq!(l.seq, k as u32);
                assert_eq!(l.origin.location, Location::Line(4 * k as u64 + 1));
                assert_eq!(l.segments[0], edges[4 * k]);
                assert_eq!(l.segments.len(), 4);
                for w in 0..4 {
                    assert_eq!(l.segments[w].end(), l.segments[(w + 1) % 4].start());
                }
            }
        }
    }

    /// Chaining with the facts a reader notes of its pieces ([`chain_read`]) gives what
    /// chaining without them gives, whatever the pieces: closed and open runs of lines and
    /// arcs, some with tiny segments, small breaks between segments or a non-finite end,
    /// some drawn twice (either way round), and single loose segments; at gaps below,
    /// between and above the runs' segment lengths. The facts must also have been used.
    #[test]
    fn chaining_with_the_readers_run_facts_gives_what_chaining_without_them_gives() {
        use super::super::{Arc, ScaleTally};
        let mut u = uniform(31);
        let origin = |i: usize| Origin {
            entity: "LWPOLYLINE",
            location: Location::Line(i as u64 + 1),
            handle: None,
            in_block: false,
        };
        let mut used = [0usize; 3]; // runs passed over without `drop_tiny`, per gap
        for _ in 0..300 {
            let mut pieces: Vec<Piece> = Vec::new();
            for _ in 0..1 + (u() * 8.0) as usize {
                let centre = Point::new(10.0 * u(), 10.0 * u());
                let m = 3 + (u() * 10.0) as usize;
                let mut points: Vec<Point> = Vec::new();
                for k in 0..m {
                    let p = centre
                        + Point::polar(std::f64::consts::TAU * k as f64 / m as f64) * (1.0 + u());
                    points.push(p);
                    if u() < 0.1 {
                        // A tiny step, 0.01 long.
                        points.push(p + Point::polar(6.3 * u()) * 0.01);
                    }
                }
                let closed = u() < 0.7;
                let n = if closed {
                    points.len()
                } else {
                    points.len() - 1
                };
                let mut segments: Vec<Segment> = (0..n)
                    .map(|k| {
                        let (a, b) = (points[k], points[(k + 1) % points.len()]);
                        match Arc::from_bulge(a, b, 0.4 * (u() - 0.5)) {
                            Some(arc) if u() < 0.4 => Segment::Arc(arc),
                            _ => Segment::line(a, b),
                        }
                    })
                    .collect();
                if u() < 0.1 {
                    // A small break: one segment starts a little off its neighbour's end.
                    let k = (u() * n as f64) as usize;
                    segments[k] = Segment::line(
                        segments[k].start() + Point::new(0.004, 0.0),
                        segments[k].end(),
                    );
                }
                if u() < 0.03 {
                    let k = (u() * n as f64) as usize;
                    segments[k] = Segment::line(segments[k].start(), Point::new(f64::NAN, 1.0));
                }
                let i = pieces.len();
                let copy = u();
                pieces.push(Piece {
                    segments: segments.clone(),
                    closed,
                    layer: "0".into(),
                    origin: origin(i),
                });
                if copy < 0.15 {
                    // Drawn again, the same way or the other way round.
                    let again = if copy < 0.07 {
                        segments.clone()
                    } else {
                        segments.iter().rev().map(Segment::reversed).collect()
                    };
                    pieces.push(Piece {
                        segments: again,
                        closed,
                        layer: "0".into(),
                        origin: origin(i + 1),
                    });
                }
                if u() < 0.3 {
                    // A loose segment.
                    pieces.push(Piece {
                        segments: vec![segments[0]],
                        closed: false,
                        layer: "0".into(),
                        origin: origin(pieces.len()),
                    });
                }
            }
            let mut tally = ScaleTally::default();
            for p in &pieces {
                tally.add_read_piece(&p.segments, p.closed);
            }
            for (g, gap) in [1e-3, 0.02, 5.0].into_iter().enumerate() {
                used[g] += tally
                    .runs
                    .iter()
                    .filter(|r| r.shortest2 > gap * gap)
                    .count();
                let plain = chain(pieces.clone(), gap);
                let read = chain_read(pieces.clone(), gap, &tally.runs);
                assert_eq!(format!("{read:?}"), format!("{plain:?}"), "gap {gap}");
            }
        }
        // Most runs are passed over at the smallest gap, those without a tiny step at the
        // middle one, none at the largest.
        assert!(
            used[0] > 1000 && used[1] > 500 && used[1] < used[0],
            "{used:?}"
        );
        assert_eq!(used[2], 0);
    }
}
