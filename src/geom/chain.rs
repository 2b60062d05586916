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

use super::segment::{BBox, CurveSpan, Point, Segment};
use crate::import::{LayerName, Origin, Piece};

/// A closed loop of segments, each starting where the previous one ends.
#[derive(Debug, Clone, PartialEq)]
pub struct Loop {
    pub segments: Vec<Segment>,
    pub layer: LayerName,
    /// The entity the loop starts with (for messages).
    pub origin: Origin,
}

impl Loop {
    /// The box of the loop, with curve pieces boxed by their chords (within the flattening
    /// tolerance of the curve); see [`Loop::exact_bbox`].
    pub fn bbox(&self) -> BBox {
        self.segments
            .iter()
            .fold(BBox::EMPTY, |b, s| b.union(&s.bbox()))
    }
    /// The exact box of the loop: curve pieces count with their curve's box from `curves`.
    pub fn exact_bbox(&self, curves: &[CurveSpan]) -> BBox {
        self.segments.iter().fold(BBox::EMPTY, |b, s| match s {
            Segment::Curve(c) => b.union(&curves[c.span as usize].bbox),
            s => b.union(&s.bbox()),
        })
    }
    /// The length of the loop: curve pieces count with their curve's length from `curves`.
    pub fn length(&self, curves: &[CurveSpan]) -> f64 {
        self.segments
            .iter()
            .map(|s| match s {
                Segment::Curve(c) => curves[c.span as usize].length,
                s => s.length(),
            })
            .sum()
    }
    /// Reverse the direction of travel.
    pub fn reverse(&mut self) {
        self.segments.reverse();
        for s in &mut self.segments {
            *s = s.reversed();
        }
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

/// Where a run came from: its layer and first entity.
type Meta = (LayerName, Origin);

/// Build loops from pieces (coordinates in millimetres); `join_gap` as in the module doc.
pub fn chain(pieces: Vec<Piece>, join_gap: f64) -> Chained {
    let mut out = Chained::default();
    let q = join_gap.max(f64::MIN_POSITIVE);
    // Whole entities drawn twice (either way round) are dropped. A direction-free
    // fingerprint (segment count and box) finds candidates; the sorted segment keys confirm
    // them, so a fingerprint collision never drops a loop.
    // First run stored under each fingerprint; further runs with it follow through `next_same`.
    // (Grown as needed: single loose segments, most pieces of a sheet, never enter it.)
    let mut seen: FastMap<(usize, u64, bool), u32> = FastMap::default();
    let mut next_same: Vec<u32> = Vec::with_capacity(pieces.len());
    let mut meta: Vec<Meta> = Vec::with_capacity(pieces.len());
    let mut store: Vec<(Vec<Segment>, bool, usize)> = Vec::with_capacity(pieces.len());
    let sorted_keys = |segs: &[Segment]| {
        let mut k: Vec<SegKey> = segs.iter().map(|s| seg_key(s, q)).collect();
        k.sort_unstable();
        k
    };
    for piece in pieces {
        let pi = meta.len();
        meta.push((piece.layer, piece.origin));
        let kept = drop_tiny(piece.segments, join_gap, &mut out.degenerate);
        if kept.is_empty() {
            continue;
        }
        // A single loose segment (a LINE or ARC entity, most of a sheet) goes straight on:
        // its twins are found in `link`, where they join the same two nodes.
        if !piece.closed && kept.len() == 1 {
            next_same.push(NONE);
            store.push((kept, false, pi));
            continue;
        }
        // Fingerprint: the run's box, quantised like the keys; cheap, and equal for twins.
        let bb = kept
            .iter()
            .fold(BBox::EMPTY, |b, s| b.union(&s.loose_bbox()));
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
        store.push((kept, piece.closed, pi));
    }
    let mut open: Vec<(Vec<Segment>, usize)> = Vec::new();
    for (segs, closed, pi) in store {
        if closed {
            let (layer, origin) = &meta[pi];
            out.loops.push(close_up(segs, layer.clone(), *origin));
        } else {
            open.push((segs, pi));
        }
    }
    link(open, &meta, join_gap, &mut out);
    out
}

/// The segments without those shorter than `join_gap` (full circles excepted) and without
/// non-finite ones, in place. A short segment is left out only while the run stays within
/// `join_gap` of the last point kept (the end of the last kept segment, or the run's start),
/// so a stretch of many short segments is thinned to steps of about `join_gap` instead of
/// vanishing; the segment after a dropped one starts at that point, so the run stays
/// connected and moves by at most `join_gap`.
fn drop_tiny(mut segments: Vec<Segment>, join_gap: f64, dropped: &mut usize) -> Vec<Segment> {
    let mut write = 0;
    let mut relink = false;
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
        segments[write] = if relink {
            snapped(s, from(), s.end())
        } else {
            s
        };
        write += 1;
        relink = false;
    }
    segments.truncate(write);
    segments
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

/// Make a loop from segments that already form a closed run, bridging tiny gaps.
fn close_up(segments: Vec<Segment>, layer: LayerName, origin: Origin) -> Loop {
    let connected = segments.windows(2).all(|w| w[0].end() == w[1].start());
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

/// ⌊v⌋ as an integer by a cast and a correction (`f64::floor` is a library call on the
/// baseline x86-64 target).
fn floor_i64(v: f64) -> i64 {
    let t = v as i64;
    t.wrapping_sub(i64::from((t as f64) > v))
}

/// End of a cell's list of nodes.
const NONE: u32 = u32::MAX;

/// Grid of merged endpoint nodes.
struct Nodes {
    /// 1 / cell size (a multiplication is cheaper than a division).
    inv_cell: f64,
    /// join_gap / cell size: how near a cell's border a point must be to look next door.
    margin: f64,
    join_gap: f64,
    /// First node in each cell; further nodes of the cell follow through `next`.
    grid: CellTable,
    next: Vec<u32>,
    pos: Vec<Point>,
}

/// Grid cells to the first node in each: a hash table by open addressing with linear
/// probing (common practice), its size a power of two at least twice the number of cells it
/// may hold, so that probes stay short. Leaner than a general map for the lookups every
/// loose segment's two ends make (about a tenth of the chaining time on loose sheets).
struct CellTable {
    keys: Vec<(i64, i64)>,
    /// NONE marks an empty slot.
    heads: Vec<u32>,
    mask: usize,
}

impl CellTable {
    /// A table for at most `cells` cells.
    fn with_room(cells: usize) -> CellTable {
        let size = (2 * cells).next_power_of_two().max(16);
        CellTable {
            keys: vec![(0, 0); size],
            heads: vec![NONE; size],
            mask: size - 1,
        }
    }

    /// The slot where the search for `k` starts: the high bits of a multiplicative hash.
    fn start(&self, k: (i64, i64)) -> usize {
        let h = (k.0 as u64).wrapping_mul(0x9e37_79b9_7f4a_7c15)
            ^ (k.1 as u64).wrapping_mul(0xc2b2_ae3d_27d4_eb4f);
        (h >> 32) as usize & self.mask
    }

    /// The first node of cell `k`, or NONE.
    fn get(&self, k: (i64, i64)) -> u32 {
        let mut i = self.start(k);
        loop {
            let head = self.heads[i];
            if head == NONE || self.keys[i] == k {
                return head;
            }
            i = (i + 1) & self.mask;
        }
    }

    /// The slot holding cell `k`'s first node, claimed for `k` (holding NONE) if new.
    fn head_mut(&mut self, k: (i64, i64)) -> &mut u32 {
        let mut i = self.start(k);
        while self.heads[i] != NONE && self.keys[i] != k {
            i = (i + 1) & self.mask;
        }
        self.keys[i] = k;
        &mut self.heads[i]
    }
}

impl Nodes {
    /// The node within `join_gap` of `p` (the nearest, when several), or a new one.
    ///
    /// Cells are sixteen gaps wide, so only a point within one gap of its cell's border needs
    /// the neighbouring cells searched.
    fn id(&mut self, p: Point) -> u32 {
        // Drawings often list a chain's entities in order, each starting exactly where the
        // one before ends: then the newest node is the answer (at distance 0, none nearer).
        if let Some(&last) = self.pos.last() {
            if last == p {
                return self.pos.len() as u32 - 1;
            }
        }
        let (fx, fy) = (p.x * self.inv_cell, p.y * self.inv_cell);
        let (cx, cy) = (floor_i64(fx), floor_i64(fy));
        let margin = self.margin;
        let (rx, ry) = (fx - cx as f64, fy - cy as f64);
        let dxs: &[i64] = if rx < margin {
            &[0, -1]
        } else if rx > 1.0 - margin {
            &[0, 1]
        } else {
            &[0]
        };
        let dys: &[i64] = if ry < margin {
            &[0, -1]
        } else if ry > 1.0 - margin {
            &[0, 1]
        } else {
            &[0]
        };
        // Squared distances: the same order, and no square root to wait for.
        let gap2 = self.join_gap * self.join_gap;
        let mut best: Option<(f64, u32)> = None;
        for &dx in dxs {
            for &dy in dys {
                let mut id = self.grid.get((cx.wrapping_add(dx), cy.wrapping_add(dy)));
                while id != NONE {
                    let v = self.pos[id as usize] - p;
                    let d2 = v.dot(v);
                    if d2 <= gap2 && best.is_none_or(|(bd2, _)| d2 < bd2) {
                        best = Some((d2, id));
                    }
                    id = self.next[id as usize];
                }
            }
        }
        if let Some((_, id)) = best {
            return id;
        }
        let id = self.pos.len() as u32;
        self.pos.push(p);
        let head = self.grid.head_mut((cx, cy));
        self.next.push(*head);
        *head = id;
        id
    }
}

fn link(runs: Vec<(Vec<Segment>, usize)>, meta: &[Meta], join_gap: f64, out: &mut Chained) {
    if runs.is_empty() {
        return;
    }
    let runs = &runs[..];
    let cell = (16.0 * join_gap).max(f64::MIN_POSITIVE);
    let mut nodes = Nodes {
        inv_cell: 1.0 / cell,
        margin: join_gap / cell,
        join_gap,
        grid: CellTable::with_room(runs.len() * 2),
        next: Vec::with_capacity(runs.len() * 2),
        pos: Vec::with_capacity(runs.len() * 2),
    };
    // ends[i] = (node at the run's start, node at its end)
    let ends: Vec<(u32, u32)> = runs
        .iter()
        .map(|(r, _)| (nodes.id(r[0].start()), nodes.id(r[r.len() - 1].end())))
        .collect();
    let n_nodes = nodes.pos.len();
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
    let touching = |n: u32| &adj[offset[n as usize]..offset[n as usize + 1]];

    // Single segments drawn twice, either way round: twins join the same two nodes and have
    // the same key. Dropped (and counted), then the rest is linked afresh.
    let q = join_gap.max(f64::MIN_POSITIVE);
    let mut twin = vec![false; runs.len()];
    let mut twins = 0;
    for n in 0..n_nodes as u32 {
        let t = touching(n);
        for (k, &r1) in t.iter().enumerate() {
            for &r2 in &t[k + 1..] {
                let (r1, r2) = (r1.min(r2) as usize, r1.max(r2) as usize);
                let (a, b) = (&runs[r1].0, &runs[r2].0);
                if r1 == r2 || twin[r1] || twin[r2] || a.len() != 1 || b.len() != 1 {
                    continue;
                }
                let other = |r: usize| {
                    let (x, y) = ends[r];
                    if x == n {
                        y
                    } else {
                        x
                    }
                };
                if other(r1) == other(r2) && seg_key(&a[0], q) == seg_key(&b[0], q) {
                    twin[r2] = true;
                    twins += 1;
                }
            }
        }
    }
    if twins > 0 {
        out.duplicates += twins;
        let kept: Vec<(Vec<Segment>, usize)> = runs
            .iter()
            .zip(&twin)
            .filter(|(_, &t)| !t)
            .map(|(r, _)| r.clone())
            .collect();
        return link(kept, meta, join_gap, out);
    }
    let bbox_of = |r: &[Segment]| r.iter().fold(BBox::EMPTY, |b, s| b.union(&s.bbox()));
    let mut used = vec![false; runs.len()];

    // Branches: every connected group holding a node of degree three or more is reported once.
    for n in 0..n_nodes as u32 {
        if degree[n as usize] >= 3 && !touching(n).iter().all(|&r| used[r as usize]) {
            let mut bbox = BBox::EMPTY;
            let mut stack = vec![n];
            let mut first_run = None;
            while let Some(m) = stack.pop() {
                for &r in touching(m) {
                    if !used[r as usize] {
                        used[r as usize] = true;
                        first_run.get_or_insert(r);
                        bbox = bbox.union(&bbox_of(&runs[r as usize].0));
                        let (a, b) = ends[r as usize];
                        stack.push(if a == m { b } else { a });
                    }
                }
            }
            let r0 = first_run.unwrap_or(0) as usize;
            out.problems.push(LoopProblem::Branch {
                at: nodes.pos[n as usize],
                ends: degree[n as usize] as usize,
                bbox,
                origin: meta[runs[r0].1].1,
                layer: meta[runs[r0].1].0.clone(),
            });
        }
    }

    // Walk from node `start_node` along run `r0`, appending runs oriented head to tail with
    // their ends snapped onto the nodes; stops back at the start (a loop), at a free end, or
    // at a node that is not of degree two.
    let walk = |start_node: u32, r0: u32, used: &mut Vec<bool>| -> (Vec<Segment>, bool) {
        let mut out_segs: Vec<Segment> = Vec::new();
        let mut node = start_node;
        let mut r = r0;
        loop {
            used[r as usize] = true;
            let (a, b) = ends[r as usize];
            let run = &runs[r as usize].0;
            let first = out_segs.len();
            let next = if a == node {
                out_segs.extend_from_slice(run);
                b
            } else {
                out_segs.extend(run.iter().rev().map(Segment::reversed));
                a
            };
            let (from, to) = (nodes.pos[node as usize], nodes.pos[next as usize]);
            out_segs[first] = snapped(out_segs[first], from, out_segs[first].end());
            let last = out_segs.len() - 1;
            out_segs[last] = snapped(out_segs[last], out_segs[last].start(), to);
            node = next;
            if node == start_node {
                return (out_segs, true);
            }
            if degree[node as usize] != 2 {
                return (out_segs, false);
            }
            match touching(node).iter().find(|&&t| !used[t as usize]) {
                Some(&t) => r = t,
                None => return (out_segs, false),
            }
        }
    };

    // Open chains start at free ends.
    let mut open: Vec<(Vec<Segment>, usize)> = Vec::new();
    for n in 0..n_nodes as u32 {
        if degree[n as usize] == 1 {
            let r = touching(n)[0];
            if !used[r as usize] {
                let (run, _) = walk(n, r, &mut used);
                open.push((run, runs[r as usize].1));
            }
        }
    }
    // What is left runs through nodes of degree two only: closed loops.
    for r in 0..runs.len() {
        if !used[r] {
            let (run, closed) = walk(ends[r].0, r as u32, &mut used);
            let (layer, origin) = &meta[runs[r].1];
            if closed {
                out.loops.push(close_up(run, layer.clone(), *origin));
            } else {
                open.push((run, runs[r].1));
            }
        }
    }
    classify_open(open, meta, out);
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
                origin: meta[info.piece].1,
                layer: meta[info.piece].0.clone(),
            }),
            None => {
                out.stray_chains += 1;
                out.strays.push(StrayChain {
                    ends: (info.p, info.q),
                    length: info.length,
                    bbox: info.bbox,
                    segments: run.len(),
                    layer: meta[info.piece].0.clone(),
                    origin: meta[info.piece].1,
                });
            }
        }
    }
}
