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

use super::segment::{BBox, Point, Segment};
use crate::import::{Origin, Piece};

/// A closed loop of segments, each starting where the previous one ends.
#[derive(Debug, Clone, PartialEq)]
pub struct Loop {
    pub segments: Vec<Segment>,
    pub layer: String,
    /// The entity the loop starts with (for messages).
    pub origin: Origin,
}

impl Loop {
    pub fn bbox(&self) -> BBox {
        self.segments
            .iter()
            .fold(BBox::EMPTY, |b, s| b.union(&s.bbox()))
    }
    pub fn length(&self) -> f64 {
        self.segments.iter().map(Segment::length).sum()
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
/// that profiles it overlaps can be flagged.
#[derive(Debug, Clone, PartialEq)]
pub enum LoopProblem {
    /// A chain that nearly closes: its ends `gap_at` are `gap` apart.
    OpenChain {
        gap_at: (Point, Point),
        gap: f64,
        length: f64,
        bbox: BBox,
        origin: Origin,
    },
    /// `ends` segment ends meet at one point.
    Branch {
        at: Point,
        ends: usize,
        bbox: BBox,
        origin: Origin,
    },
    /// A loop crosses or touches itself.
    SelfIntersection {
        at: Point,
        bbox: BBox,
        origin: Origin,
    },
    /// Two loops cross each other.
    LoopsCross {
        at: Point,
        bbox: BBox,
        origin: Origin,
    },
    /// A loop encloses no area.
    ZeroArea { bbox: BBox, origin: Origin },
}

impl LoopProblem {
    pub fn bbox(&self) -> BBox {
        match self {
            LoopProblem::OpenChain { bbox, .. }
            | LoopProblem::Branch { bbox, .. }
            | LoopProblem::SelfIntersection { bbox, .. }
            | LoopProblem::LoopsCross { bbox, .. }
            | LoopProblem::ZeroArea { bbox, .. } => *bbox,
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
    /// Segments shorter than `join_gap` dropped.
    pub degenerate: usize,
}

/// A broken loop is an open chain whose ends are closer than this fraction of its length.
pub const BROKEN_GAP_RATIO: f64 = 0.1;

/// Build loops from pieces (coordinates in millimetres); `join_gap` as in the module doc.
pub fn chain(pieces: &[Piece], join_gap: f64) -> Chained {
    let mut out = Chained::default();
    let q = join_gap.max(f64::MIN_POSITIVE);

    // Closed pieces are loops already; drop duplicates among them.
    let mut closed_seen: HashMap<Vec<SegKey>, ()> = HashMap::new();
    // Open pieces become single segments; drop duplicates.
    let mut seg_seen: HashMap<SegKey, ()> = HashMap::new();
    let mut segs: Vec<(Segment, usize)> = Vec::new(); // (segment, piece index)
    for (pi, piece) in pieces.iter().enumerate() {
        let kept: Vec<Segment> = piece
            .segments
            .iter()
            .filter(|s| {
                if s.length() <= join_gap && !matches!(s, Segment::Arc(a) if a.is_full_circle()) {
                    out.degenerate += 1;
                    false
                } else {
                    true
                }
            })
            .copied()
            .collect();
        if kept.is_empty() {
            continue;
        }
        if piece.closed {
            let mut key: Vec<SegKey> = kept.iter().map(|s| seg_key(s, q)).collect();
            key.sort_unstable();
            if closed_seen.insert(key, ()).is_some() {
                out.duplicates += 1;
                continue;
            }
            out.loops
                .push(close_up(kept, piece.layer.clone(), piece.origin.clone()));
        } else {
            for s in kept {
                if seg_seen.insert(seg_key(&s, q), ()).is_some() {
                    out.duplicates += 1;
                } else {
                    segs.push((s, pi));
                }
            }
        }
    }
    link(&segs, pieces, join_gap, &mut out);
    out
}

/// Quantised, direction-free identity of a segment, for duplicate detection.
type SegKey = [(i64, i64); 3];

fn seg_key(s: &Segment, q: f64) -> SegKey {
    let cell = |p: Point| ((p.x / q).round() as i64, (p.y / q).round() as i64);
    let (a, b) = (cell(s.start()), cell(s.end()));
    let (a, b) = if a <= b { (a, b) } else { (b, a) };
    [a, b, cell(s.midpoint())]
}

/// Make a loop from segments that already form a closed run, bridging tiny gaps.
fn close_up(mut segments: Vec<Segment>, layer: String, origin: Origin) -> Loop {
    let mut out = Vec::with_capacity(segments.len() + 1);
    let first = segments[0].start();
    for s in segments.drain(..) {
        if let Some(prev) = out.last().map(Segment::end) {
            if prev != s.start() && prev.dist(s.start()) > 0.0 {
                out.push(Segment::line(prev, s.start()));
            }
        }
        out.push(s);
    }
    // Close the run: a bridge of at most `join_gap` for chained loops, or the closing edge a
    // closed entity implies when its stored ends differ.
    let last = out.last().map(Segment::end).unwrap_or(first);
    if last != first {
        out.push(Segment::line(last, first));
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
        Segment::Arc(mut arc) => {
            arc.start = start;
            arc.end = end;
            Segment::Arc(arc)
        }
    }
}

/// Grid of merged endpoint nodes.
struct Nodes {
    cell: f64,
    join_gap: f64,
    grid: HashMap<(i64, i64), Vec<u32>>,
    pos: Vec<Point>,
}

impl Nodes {
    fn id(&mut self, p: Point) -> u32 {
        let (cx, cy) = (
            (p.x / self.cell).floor() as i64,
            (p.y / self.cell).floor() as i64,
        );
        let mut best: Option<(f64, u32)> = None;
        for dx in -1..=1 {
            for dy in -1..=1 {
                if let Some(ids) = self.grid.get(&(cx + dx, cy + dy)) {
                    for &id in ids {
                        let d = self.pos[id as usize].dist(p);
                        if d <= self.join_gap && best.is_none_or(|(bd, _)| d < bd) {
                            best = Some((d, id));
                        }
                    }
                }
            }
        }
        if let Some((_, id)) = best {
            return id;
        }
        let id = self.pos.len() as u32;
        self.pos.push(p);
        self.grid.entry((cx, cy)).or_default().push(id);
        id
    }
}

fn link(segs: &[(Segment, usize)], pieces: &[Piece], join_gap: f64, out: &mut Chained) {
    if segs.is_empty() {
        return;
    }
    let mut nodes = Nodes {
        cell: join_gap.max(f64::MIN_POSITIVE),
        join_gap,
        grid: HashMap::with_capacity(segs.len() * 2),
        pos: Vec::with_capacity(segs.len() * 2),
    };
    // ends[i] = (node at start, node at end)
    let ends: Vec<(u32, u32)> = segs
        .iter()
        .map(|(s, _)| (nodes.id(s.start()), nodes.id(s.end())))
        .collect();
    let n_nodes = nodes.pos.len();
    // Adjacency in compressed form: for each node, the (segment, end) pairs touching it.
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
    let mut adj = vec![(0u32, false); offset[n_nodes]];
    for (i, &(a, b)) in ends.iter().enumerate() {
        adj[fill[a as usize]] = (i as u32, false);
        fill[a as usize] += 1;
        adj[fill[b as usize]] = (i as u32, true);
        fill[b as usize] += 1;
    }
    let touching = |n: u32| &adj[offset[n as usize]..offset[n as usize + 1]];
    let mut used = vec![false; segs.len()];

    // Branches: every component that holds a node of degree three or more is reported once.
    for n in 0..n_nodes as u32 {
        if degree[n as usize] >= 3 && !touching(n).iter().all(|&(s, _)| used[s as usize]) {
            let mut bbox = BBox::EMPTY;
            let mut stack = vec![n];
            let mut first_seg = None;
            while let Some(m) = stack.pop() {
                for &(s, _) in touching(m) {
                    if !used[s as usize] {
                        used[s as usize] = true;
                        first_seg.get_or_insert(s);
                        bbox = bbox.union(&segs[s as usize].0.bbox());
                        let (a, b) = ends[s as usize];
                        stack.push(if a == m { b } else { a });
                    }
                }
            }
            let s0 = first_seg.unwrap_or(0) as usize;
            out.problems.push(LoopProblem::Branch {
                at: nodes.pos[n as usize],
                ends: degree[n as usize] as usize,
                bbox,
                origin: pieces[segs[s0].1].origin.clone(),
            });
        }
    }

    // Walk a run from node `from` along segment `s`; returns oriented segments and the node
    // where the run stops (back at its start, at a free end, or at a used segment).
    let walk = |start_node: u32, s0: u32, used: &mut Vec<bool>| -> (Vec<Segment>, u32, bool) {
        let mut run = Vec::new();
        let mut node = start_node;
        let mut s = s0;
        loop {
            used[s as usize] = true;
            let (a, b) = ends[s as usize];
            let (seg, next) = if a == node {
                (segs[s as usize].0, b)
            } else {
                (segs[s as usize].0.reversed(), a)
            };
            run.push(snapped(
                seg,
                nodes.pos[node as usize],
                nodes.pos[next as usize],
            ));
            node = next;
            if node == start_node {
                return (run, node, true);
            }
            if degree[node as usize] != 2 {
                return (run, node, false);
            }
            match touching(node).iter().find(|&&(t, _)| !used[t as usize]) {
                Some(&(t, _)) => s = t,
                None => return (run, node, false),
            }
        }
    };

    // Open chains start at free ends.
    let mut open: Vec<(Vec<Segment>, usize)> = Vec::new();
    for n in 0..n_nodes as u32 {
        if degree[n as usize] == 1 {
            let (s, _) = touching(n)[0];
            if !used[s as usize] {
                let (run, _, _) = walk(n, s, &mut used);
                open.push((run, segs[s as usize].1));
            }
        }
    }
    // What is left runs through nodes of degree two only: closed loops.
    for s in 0..segs.len() {
        if !used[s] {
            let (run, _, closed) = walk(ends[s].0, s as u32, &mut used);
            let piece = &pieces[segs[s].1];
            if closed {
                out.loops
                    .push(close_up(run, piece.layer.clone(), piece.origin.clone()));
            } else {
                open.push((run, segs[s].1));
            }
        }
    }
    classify_open(open, pieces, out);
}

/// Decide which open chains are broken loops (errors) and which are stray geometry.
fn classify_open(open: Vec<(Vec<Segment>, usize)>, pieces: &[Piece], out: &mut Chained) {
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
    for (info, b) in infos.iter().zip(broken) {
        match b {
            Some((p, q, gap)) => out.problems.push(LoopProblem::OpenChain {
                gap_at: (p, q),
                gap,
                length: info.length,
                bbox: info.bbox,
                origin: pieces[info.piece].origin.clone(),
            }),
            None => out.stray_chains += 1,
        }
    }
}
