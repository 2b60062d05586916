//! Checking loops for crossings and nesting them into profiles.
//!
//! A loop's depth is the number of loops around it: even depth is material, odd depth a hole.
//! A profile is a loop of even depth with the holes directly inside it; an island inside a
//! hole is a profile of its own.
//!
//! Both steps avoid all-pairs work: crossings are found by a sweep over segment boxes sorted
//! by x (a grid when many boxes share an x range), and containment is tested only against
//! loops whose box holds the candidate's box, found through a uniform grid.

use std::f64::consts::PI;

use super::chain::{exact_bbox, exact_length, Loop, LoopProblem};
use super::moments::{segment_moments, Moments};
use super::predicates::{intersections, Heights, SlabIndex};
use super::segment::{BBox, CurveSpan, Point, Segment};

/// An outer loop (counter-clockwise) and the holes directly inside it (clockwise).
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    pub outer: Loop,
    pub holes: Vec<Loop>,
    /// Bounding box of the outer loop (and so of the profile).
    pub bbox: BBox,
    /// Area integrals of the profile (outer loop less holes) about the centre of `bbox`.
    pub moments: Moments,
    /// Length of the outer loop.
    pub outer_length: f64,
    /// Length of the holes together.
    pub holes_length: f64,
    /// Number of loops around the outer loop (even); its holes lie one deeper.
    pub depth: usize,
}

impl Profile {
    pub fn bbox(&self) -> BBox {
        self.bbox
    }
}

/// Remove loops that cross themselves or each other, reporting each as a problem; the loops
/// kept come with what [`nest`] needs of each (see [`LoopsToNest`]), worked out in the same
/// visit of their segments. `curves` is the drawing's curve table (exact boxes and lengths of
/// curve pieces).
///
/// Points of one loop less than four tolerances apart along the loop (a shared vertex, a tiny
/// fillet) are not crossings; two different loops that only touch (at a segment end of
/// either, or tangentially) are allowed, since the regions they bound still do not overlap.
///
/// Candidate pairs come from `for_each_overlapping_pair` (a sweep over the segments' boxes,
/// or a uniform grid where the sweep would test too many), so the work grows with the number
/// of segments, not its square.
pub fn drop_crossing_loops(
    loops: Vec<Loop>,
    tol: f64,
    curves: &[CurveSpan],
    problems: &mut Vec<LoopProblem>,
) -> LoopsToNest {
    let (bad, facts, boxes) = crossings(&loops, tol, curves, PairSource::Boxes);
    let mut kept = LoopsToNest {
        loops: Vec::with_capacity(loops.len()),
        facts: Vec::with_capacity(loops.len()),
        boxes,
    };
    // Reported in drawing order (`Loop::seq`), whatever order the loops are listed in.
    let mut crossing: Vec<(u32, LoopProblem)> = Vec::new();
    for ((l, b), f) in loops.into_iter().zip(bad).zip(facts) {
        let problem = match b {
            None => {
                kept.loops.push(l);
                kept.facts.push(f);
                continue;
            }
            Some((at, true)) => LoopProblem::SelfIntersection {
                at,
                bbox: l.bbox(),
                origin: l.origin,
                layer: l.layer,
            },
            Some((at, false)) => LoopProblem::LoopsCross {
                at,
                bbox: l.bbox(),
                origin: l.origin,
                layer: l.layer,
            },
        };
        crossing.push((l.seq, problem));
    }
    push_in_drawing_order(problems, crossing);
    kept
}

/// Loops that do not cross, ready for [`nest`]: each with its exact box, its area integrals
/// about that box's centre and its exact length, and the loose boxes of its segments (for
/// the winding numbers of the containment tests). [`drop_crossing_loops`] works these out
/// while it has each loop's segments in the cache for its own pass; on a large sheet the
/// segments are out of the cache again by the time nesting comes to them.
#[derive(Debug, Clone, Default)]
pub struct LoopsToNest {
    loops: Vec<Loop>,
    facts: Vec<LoopFacts>,
    /// The loose boxes of the loops' segments ([`Segment::loose_bbox`]), each loop's from
    /// its `LoopFacts::first_box` on (boxes of loops dropped since may lie between).
    boxes: Vec<BBox>,
}

impl LoopsToNest {
    /// Loops known not to cross (a mesh's boundary, a test's shapes), with their facts
    /// worked out here; `curves` as for [`drop_crossing_loops`].
    pub fn new(loops: Vec<Loop>, curves: &[CurveSpan]) -> LoopsToNest {
        let mut boxes = Vec::new();
        let facts = loops
            .iter()
            .map(|l| {
                let first_box = boxes.len() as u32;
                boxes.extend(l.segments.iter().map(Segment::loose_bbox));
                LoopFacts::new(&l.segments, l.exact_bbox(curves), curves, first_box)
            })
            .collect();
        LoopsToNest {
            loops,
            facts,
            boxes,
        }
    }

    /// The loops, in the order they are listed.
    pub fn loops(&self) -> &[Loop] {
        &self.loops
    }
}

/// What nesting needs of one loop.
#[derive(Debug, Clone, Copy)]
struct LoopFacts {
    /// The exact box ([`Loop::exact_bbox`]).
    bbox: BBox,
    /// Area integrals about the centre of `bbox`, signed as the loop runs (for precision far
    /// from the origin); their area's sign gives the loop's direction.
    moments: Moments,
    /// The exact length.
    length: f64,
    /// Where the loose boxes of its segments start in `LoopsToNest::boxes`.
    first_box: u32,
}

impl LoopFacts {
    /// The facts of a loop of `segments` whose exact box is `bbox`: the integrals and the
    /// length in one pass (a large loop's segments are out of the cache again by the end
    /// of it).
    fn new(segments: &[Segment], bbox: BBox, curves: &[CurveSpan], first_box: u32) -> LoopFacts {
        let origin = bbox.center();
        let (moments, length) =
            segments
                .iter()
                .fold((Moments::default(), 0.0), |(m, length), s| {
                    (
                        m + segment_moments(s, origin, curves),
                        length + exact_length(s, curves),
                    )
                });
        LoopFacts {
            bbox,
            moments,
            length,
            first_box,
        }
    }
}

/// Append the problems found (each with its loop's `seq`) to `problems` in drawing order.
fn push_in_drawing_order(problems: &mut Vec<LoopProblem>, mut found: Vec<(u32, LoopProblem)>) {
    found.sort_by_key(|(seq, _)| *seq);
    problems.extend(found.into_iter().map(|(_, p)| p));
}

/// Where candidate pairs of segments come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PairSource {
    /// Pairs whose loose boxes overlap, from [`for_each_overlapping_pair`].
    Boxes,
    /// Every pair of segments (for tests: the reference the box search must agree with).
    #[cfg(test)]
    All,
}

/// Where a loop crosses itself or another loop (the lowest-left such point) and whether it
/// crosses itself; `None` for a loop that crosses nothing.
type Crossing = Option<(Point, bool)>;

/// For each loop, where it crosses itself or another loop (the lowest-left such point) and
/// whether it crosses itself (`None` for a loop that crosses nothing), and its facts for
/// nesting.
fn crossings(
    loops: &[Loop],
    tol: f64,
    curves: &[CurveSpan],
    source: PairSource,
) -> (Vec<Crossing>, Vec<LoopFacts>, Vec<BBox>) {
    // Items: every segment of every loop, numbered loop after loop; `first_item[l]` is the
    // number of loop l's first segment, and the boxes are the segments' loose boxes.
    let n_items: usize = loops.iter().map(|l| l.segments.len()).sum();
    // Items are numbered along each loop. Most overlapping pairs are a segment and the next
    // one of its loop, which usually meet only at their shared vertex: that is checked once
    // per vertex here, and such pairs are passed over below. `simple_next[i]` is the item
    // after item i when they only share their vertex, else NONE. Each loop's segments are
    // visited once for their boxes (loose, and the loop's exact box) and vertices, then once
    // more for the loop's facts while they are still in the cache.
    const NONE: u32 = u32::MAX;
    let mut simple_next = vec![NONE; n_items];
    let mut boxes: Vec<BBox> = Vec::with_capacity(n_items);
    let mut first_item: Vec<u32> = Vec::with_capacity(loops.len() + 1);
    let mut facts: Vec<LoopFacts> = Vec::with_capacity(loops.len());
    let mut all = BBox::EMPTY;
    for l in loops {
        let first = boxes.len();
        first_item.push(first as u32);
        let segs = &l.segments[..];
        let n = segs.len();
        let mut exact = BBox::EMPTY;
        for (k, s) in segs.iter().enumerate() {
            let bbox = s.loose_bbox();
            all = all.grow(&bbox);
            boxes.push(bbox);
            // As `Loop::exact_bbox`, segment by segment in the same order.
            exact = exact.grow(&exact_bbox(s, curves));
            if n >= 3 && k > 0 && only_share_their_vertex(&segs[k - 1], s, tol) {
                simple_next[first + k - 1] = (first + k) as u32;
            }
        }
        if n >= 3 && only_share_their_vertex(&segs[n - 1], &segs[0], tol) {
            simple_next[first + n - 1] = first as u32;
        }
        facts.push(LoopFacts::new(segs, exact, curves, first as u32));
    }
    first_item.push(boxes.len() as u32);
    // (loop, segment) of an item; only asked for the few pairs that need a full test.
    let locate = |i: u32| {
        let lp = first_item.partition_point(|&f| f <= i) - 1;
        (lp, i - first_item[lp])
    };
    // Per loop: where it crosses, and whether itself. Of several crossings the message names
    // the lowest-left one, so that it does not depend on the order pairs are found in.
    let mut bad: Vec<Crossing> = vec![None; loops.len()];
    let note = |slot: &mut Crossing, at: Point, itself: bool| {
        if slot.is_none_or(|(p, _)| (at.x, at.y) < (p.x, p.y)) {
            *slot = Some((at, itself));
        }
    };
    if n_items >= 2 && all.min.is_finite() && all.max.is_finite() {
        let check = |i: u32, j: u32| {
            // The lower-numbered segment first: the same pair gives the same rounding of its
            // meeting point whichever way it was found.
            let (i, j) = (i.min(j), i.max(j));
            if i == j
                || simple_next[i as usize] == j
                || simple_next[j as usize] == i
                || !boxes[i as usize].overlaps(&boxes[j as usize], tol)
            {
                return;
            }
            let ((lp1, sg1), (lp2, sg2)) = (locate(i), locate(j));
            let (l1, l2) = (&loops[lp1], &loops[lp2]);
            let (s1, s2) = (&l1.segments[sg1 as usize], &l2.segments[sg2 as usize]);
            if lp1 == lp2 {
                // Points of one loop that are close along the loop (a shared vertex, a
                // fillet shorter than the tolerance) are neighbours, not a crossing.
                for h in intersections(s1, s2, tol) {
                    if !close_along_loop(&l1.segments, (sg1, h.t1), (sg2, h.t2), 4.0 * tol) {
                        note(&mut bad[lp1], h.at, true);
                    }
                }
            } else {
                for h in intersections(s1, s2, tol) {
                    let at_end1 = h.at.dist(s1.start()) <= tol || h.at.dist(s1.end()) <= tol;
                    let at_end2 = h.at.dist(s2.start()) <= tol || h.at.dist(s2.end()) <= tol;
                    let touch = at_end1 || at_end2 || is_tangent(s1, s2, h.at, tol);
                    if !touch {
                        note(&mut bad[lp1], h.at, false);
                        note(&mut bad[lp2], h.at, false);
                    }
                }
            }
        };
        match source {
            PairSource::Boxes => {
                for_each_pair_in_groups(loops.len(), &first_item, &all, &boxes, tol, check)
            }
            #[cfg(test)]
            PairSource::All => {
                let mut check = check;
                for i in 0..n_items as u32 {
                    for j in i + 1..n_items as u32 {
                        check(i, j);
                    }
                }
            }
        }
    }
    (bad, facts, boxes)
}

/// Calls `f` for the pairs of items (segments) whose boxes overlap within `tol`, as
/// [`for_each_overlapping_pair`] over all of them would, but group by group: loops whose boxes
/// overlap (directly or through others) form a group, and segments of different groups
/// cannot meet. A sheet of many profiles side by side (a catalog sheet) then costs what its
/// profiles cost one by one: a sweep over the whole sheet would also compare segments of
/// profiles that lie above one another. Loop `l` holds the items
/// `first_item[l]..first_item[l + 1]`.
fn for_each_pair_in_groups(
    n_loops: usize,
    first_item: &[u32],
    all: &BBox,
    boxes: &[BBox],
    tol: f64,
    mut f: impl FnMut(u32, u32),
) {
    // A sheet's few loops (one profile and its holes, usually a single group) are searched
    // at once: grouping would cost more than it saves.
    const GROUPS_FROM: usize = 32;
    if n_loops <= GROUPS_FROM {
        let _ = for_each_overlapping_pair(all, boxes, tol, f);
        return;
    }
    let items_of = |l: usize| first_item[l] as usize..first_item[l + 1] as usize;
    // Each loop's box: the union of its items' boxes, so that items of loops whose boxes
    // are apart are apart too.
    let loop_boxes: Vec<BBox> = (0..n_loops)
        .map(|l| {
            boxes[items_of(l)]
                .iter()
                .fold(BBox::EMPTY, |a, b| a.grow(b))
        })
        .collect();
    // Groups by union-find (with path halving) over the overlapping pairs of loop boxes; a
    // group's root is its lowest-numbered loop.
    let mut parent: Vec<u32> = (0..n_loops as u32).collect();
    fn root(parent: &mut [u32], mut i: u32) -> u32 {
        while parent[i as usize] != i {
            parent[i as usize] = parent[parent[i as usize] as usize];
            i = parent[i as usize];
        }
        i
    }
    let _ = for_each_overlapping_pair(all, &loop_boxes, tol, |a, b| {
        let (ra, rb) = (root(&mut parent, a), root(&mut parent, b));
        if ra != rb {
            parent[ra.max(rb) as usize] = ra.min(rb);
        }
    });
    let roots: Vec<u32> = (0..n_loops as u32).map(|l| root(&mut parent, l)).collect();
    // One group (a sheet with one profile): all items at once, numbered as they are.
    let one_group = roots.iter().all(|&r| r == 0);
    // Otherwise the loops of each group (a counting sort by root), then each group's items.
    let order: Vec<u32> = if one_group {
        Vec::new()
    } else {
        super::chain::counting_sort(n_loops, n_loops, |l| roots[l])
    };
    let mut ids: Vec<u32> = Vec::new();
    let mut group_boxes: Vec<BBox> = Vec::new();
    let mut buffers = SweepBuffers::default();
    let mut k = 0;
    while k < n_loops {
        // The group's items, and what to add to an item's number in them (`offset`) or
        // where to look it up (`ids`, when not empty).
        let (group_all, items, offset, ids) = if one_group {
            k = n_loops;
            (*all, boxes, 0, &ids[..0])
        } else {
            let r = roots[order[k] as usize];
            let first = k;
            let mut group_all = BBox::EMPTY;
            while k < n_loops && roots[order[k] as usize] == r {
                group_all = group_all.union(&loop_boxes[order[k] as usize]);
                k += 1;
            }
            let (l0, l1) = (order[first] as usize, order[k - 1] as usize);
            if l1 - l0 + 1 == k - first {
                // Loops numbered one after another (a profile and its holes, as chaining
                // lists them): their items are one run of `boxes`, searched where they lie.
                let run = first_item[l0] as usize..first_item[l1 + 1] as usize;
                (group_all, &boxes[run.clone()], run.start as u32, &ids[..0])
            } else {
                ids.clear();
                group_boxes.clear();
                for &l in &order[first..k] {
                    ids.extend(items_of(l as usize).map(|i| i as u32));
                    group_boxes.extend_from_slice(&boxes[items_of(l as usize)]);
                }
                (group_all, &group_boxes[..], 0, &ids[..])
            }
        };
        if items.len() >= 2 {
            let _ = for_each_overlapping_pair_in(&mut buffers, &group_all, items, tol, |a, b| {
                if ids.is_empty() {
                    f(a + offset, b + offset)
                } else {
                    f(ids[a as usize], ids[b as usize])
                }
            });
        }
    }
}

/// Whether two places on a closed loop, each a segment index and a fraction along it, are at
/// most `limit` apart measured along the loop, either way round. Sums segment lengths from
/// one place towards the other and stops as soon as `limit` is passed, so the usual answer
/// ("far apart") costs a segment or two.
fn close_along_loop(segs: &[Segment], a: (u32, f64), b: (u32, f64), limit: f64) -> bool {
    let ((i, ti), (j, tj)) = if (a.0, a.1) <= (b.0, b.1) {
        (a, b)
    } else {
        (b, a)
    };
    let (i, j, n) = (i as usize, j as usize, segs.len());
    if i == j {
        return (tj - ti) * segs[i].length() <= limit;
    }
    // Forward from (i, ti) to (j, tj).
    let mut d = (1.0 - ti) * segs[i].length();
    let mut k = i + 1;
    while d <= limit && k < j {
        d += segs[k].length();
        k += 1;
    }
    if d <= limit && d + tj * segs[j].length() <= limit {
        return true;
    }
    // Backward, through the loop's closing point.
    let mut d = ti * segs[i].length() + (1.0 - tj) * segs[j].length();
    let mut k = (j + 1) % n;
    while d <= limit && k != i {
        d += segs[k].length();
        k = (k + 1) % n;
    }
    d <= limit
}

/// Call `f(i, j)` once for every pair of `boxes` (in `all`) that overlap within `tol`.
///
/// Usually by sweep and prune: the boxes sorted by their left edge, each compared with those
/// that start before its right edge. The sort is a counting sort into as many slices of the
/// x range as there are boxes (boxes in one slice stay unsorted, so the sweep stops at the
/// slice holding the right edge). Along a loop few boxes share an x range, so this tests a few
/// pairs per box; but a stack of long horizontal lines would make it quadratic, so when the
/// pairs it would test are many more than the boxes, a [`SegmentGrid`] does it instead.
/// Returns which of the two it used.
fn for_each_overlapping_pair(
    all: &BBox,
    boxes: &[BBox],
    tol: f64,
    f: impl FnMut(u32, u32),
) -> PairSearch {
    for_each_overlapping_pair_in(&mut SweepBuffers::default(), all, boxes, tol, f)
}

/// The working arrays of [`for_each_overlapping_pair`], kept from one call to the next where
/// it runs once per group of a sheet's loops (tens of thousands of small calls on a large
/// sheet, each of which would otherwise allocate and free them).
#[derive(Default)]
struct SweepBuffers {
    start: Vec<u32>,
    fill: Vec<u32>,
    order: Vec<u32>,
    sorted: Vec<([f64; 4], u32)>,
}

/// [`for_each_overlapping_pair`] with its working arrays in `buffers`.
fn for_each_overlapping_pair_in(
    buffers: &mut SweepBuffers,
    all: &BBox,
    boxes: &[BBox],
    tol: f64,
    mut f: impl FnMut(u32, u32),
) -> PairSearch {
    /// Candidate pairs per box above which the grid is used instead of the sweep.
    const SWEEP_PAIRS_PER_BOX: usize = 24;
    let SweepBuffers {
        start,
        fill,
        order,
        sorted,
    } = buffers;
    let n = boxes.len();
    let x0 = all.min.x - tol;
    let scale = n as f64 / (all.width() + 2.0 * tol);
    let scale = if scale.is_finite() { scale } else { 0.0 };
    // Slice of an x coordinate (a cast to i64 is one instruction; NaN becomes 0).
    let slice = |x: f64| (((x - x0) * scale) as i64).clamp(0, n as i64 - 1) as usize;
    // Counting sort by the slice of the left edge: start[k]..start[k + 1] is slice k.
    start.clear();
    start.resize(n + 1, 0);
    for b in boxes {
        start[slice(b.min.x) + 1] += 1;
    }
    for k in 0..n {
        start[k + 1] += start[k];
    }
    fill.clear();
    fill.extend_from_slice(start);
    order.clear();
    order.resize(n, 0);
    for (i, b) in boxes.iter().enumerate() {
        let k = slice(b.min.x);
        order[fill[k] as usize] = i as u32;
        fill[k] += 1;
    }
    // In sweep order: the box grown by `tol / 2` on every side (so that two grown boxes
    // overlap exactly when the boxes are within `tol`, as `BBox::overlaps` says), as
    // (min.x, min.y, −max.x, −max.y), and the end in `order` of the slice of its right edge:
    // boxes from there on start to its right. With the maxima negated, "o overlaps b" is
    // o.min ≤ b.max and −o.max ≤ −b.min: four comparisons of o's numbers, in order, with
    // four of b's, which the compiler can make one vector comparison. (Negation is exact,
    // and a NaN fails either way.)
    let half = 0.5 * tol;
    sorted.clear();
    sorted.extend(order.iter().map(|&i| {
        let b = boxes[i as usize];
        let grown = [
            b.min.x - half,
            b.min.y - half,
            -(b.max.x + half),
            -(b.max.y + half),
        ];
        (grown, start[slice(b.max.x + tol) + 1])
    }));
    let pairs: usize = sorted
        .iter()
        .enumerate()
        .map(|(a, &(_, end))| (end as usize).saturating_sub(a + 1))
        .sum();
    if pairs > SWEEP_PAIRS_PER_BOX * n {
        SegmentGrid::new(all, boxes.iter().copied(), tol).for_each_pair(f);
        return PairSearch::Grid;
    }
    // Which of a stretch of later boxes overlap this one, noted without a branch: along a
    // loop about half of the boxes tested are hits (the neighbours along the loop), which a
    // branch on each test would guess wrong half the time.
    const STRETCH: usize = 64;
    let mut hits = [0u32; STRETCH];
    for (a, (b, end)) in sorted.iter().enumerate() {
        // The boxes after this one that start before its right edge (a plain slice, so that
        // the loop is a counted one without bounds checks).
        let Some(later) = sorted.get(a + 1..*end as usize) else {
            continue;
        };
        // b.max and −b.min, to compare with (o.min, −o.max).
        let q = [-b[2], -b[3], -b[0], -b[1]];
        for (c, stretch) in later.chunks(STRETCH).enumerate() {
            let mut m = 0;
            for (k, (o, _)) in stretch.iter().enumerate() {
                // `&` does not short-circuit: no branch on any of the four tests.
                let hit = (o[0] <= q[0]) & (o[1] <= q[1]) & (o[2] <= q[2]) & (o[3] <= q[3]);
                hits[m] = k as u32;
                m += usize::from(hit);
            }
            for &k in &hits[..m] {
                f(order[a], order[a + 1 + c * STRETCH + k as usize]);
            }
        }
    }
    PairSearch::Sweep
}

/// How [`for_each_overlapping_pair`] found the pairs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PairSearch {
    Sweep,
    Grid,
}

/// A uniform grid over segment boxes for finding pairs whose boxes may overlap.
///
/// Each box is listed in every cell it covers (boxes grown by `tol`); a box covering very
/// many cells (a long line across a sheet) is kept in a separate list and paired with every
/// other box instead. A pair met in several cells is reported once: in the cell holding the
/// lower-left corner of the two boxes' overlap, which is the larger of their lower-left cells.
///
/// A cell that holds many boxes (a finely divided outline that takes one cell of a grid
/// spread over a far-away stray loop) is searched again with a grid over its own boxes, a
/// few levels deep, instead of pair by pair.
struct SegmentGrid {
    /// The boxes, and the grid's frame: its lower-left corner and cell size.
    boxes: Vec<BBox>,
    tol: f64,
    origin: Point,
    cell: f64,
    nx: usize,
    ny: usize,
    /// Items of cell k: `members[start[k]..start[k + 1]]`.
    start: Vec<u32>,
    members: Vec<u32>,
    /// Cells each box covers: [x0, y0, x1, y1], inclusive.
    spans: Vec<[u32; 4]>,
    big: Vec<u32>,
    /// Position in `big` plus one, or 0 for a box listed in the cells.
    big_rank: Vec<u32>,
}

impl SegmentGrid {
    /// Cells per side at most, and cells one box may cover before it counts as big.
    const MAX_SIDE: usize = 4096;
    const MAX_COVER: usize = 64;
    /// Boxes in a cell above which the cell gets a grid of its own, and levels of that.
    const CROWDED: usize = 64;
    const MAX_DEPTH: u32 = 3;

    fn new(all: &BBox, boxes: impl Iterator<Item = BBox>, tol: f64) -> SegmentGrid {
        let (w, h) = (all.width() + 2.0 * tol, all.height() + 2.0 * tol);
        let boxes: Vec<BBox> = boxes.collect();
        let n = boxes.len();
        // About one cell per box, square cells.
        let cell = ((w * h) / n as f64)
            .sqrt()
            .max(w / Self::MAX_SIDE as f64)
            .max(h / Self::MAX_SIDE as f64);
        let cell = if cell > 0.0 && cell.is_finite() {
            cell
        } else {
            w.max(h).max(1.0)
        };
        let inv_cell = 1.0 / cell;
        let nx = ((w * inv_cell) as usize + 1).min(Self::MAX_SIDE);
        let ny = ((h * inv_cell) as usize + 1).min(Self::MAX_SIDE);
        let origin = Point::new(all.min.x - tol, all.min.y - tol);
        // Cell index along one axis, clamped into the grid (a cast to i64 is one instruction).
        let index =
            |v: f64, o: f64, n: usize| (((v - o) * inv_cell) as i64).clamp(0, n as i64 - 1) as u32;
        let spans: Vec<[u32; 4]> = boxes
            .iter()
            .map(|b| {
                [
                    index(b.min.x - tol, origin.x, nx),
                    index(b.min.y - tol, origin.y, ny),
                    index(b.max.x + tol, origin.x, nx),
                    index(b.max.y + tol, origin.y, ny),
                ]
            })
            .collect();
        let mut grid = SegmentGrid {
            boxes,
            tol,
            origin,
            cell,
            nx,
            ny,
            start: vec![0; nx * ny + 1],
            members: Vec::new(),
            spans,
            big: Vec::new(),
            big_rank: vec![0; n],
        };
        // Two passes: count, then fill (a counting sort by cell).
        let mut big = Vec::new();
        for (i, &[x0, y0, x1, y1]) in grid.spans.iter().enumerate() {
            let (x0, y0, x1, y1) = (x0 as usize, y0 as usize, x1 as usize, y1 as usize);
            if (x1 - x0 + 1) * (y1 - y0 + 1) > Self::MAX_COVER {
                big.push(i as u32);
                continue;
            }
            for y in y0..=y1 {
                for x in x0..=x1 {
                    grid.start[y * nx + x + 1] += 1;
                }
            }
        }
        for k in 0..nx * ny {
            grid.start[k + 1] += grid.start[k];
        }
        let mut fill = grid.start.clone();
        grid.members = vec![0; grid.start[nx * ny] as usize];
        for (r, &i) in big.iter().enumerate() {
            grid.big_rank[i as usize] = r as u32 + 1;
        }
        for (i, &[x0, y0, x1, y1]) in grid.spans.iter().enumerate() {
            if grid.big_rank[i] != 0 {
                continue;
            }
            for y in y0 as usize..=y1 as usize {
                for x in x0 as usize..=x1 as usize {
                    let k = y * nx + x;
                    grid.members[fill[k] as usize] = i as u32;
                    fill[k] += 1;
                }
            }
        }
        grid.big = big;
        grid
    }

    /// Call `f(i, j)` once for every pair of boxes that share a cell (or involve a big box).
    fn for_each_pair(&self, mut f: impl FnMut(u32, u32)) {
        self.pairs(&mut f, 0);
    }

    fn pairs(&self, f: &mut dyn FnMut(u32, u32), depth: u32) {
        for y in 0..self.ny {
            for x in 0..self.nx {
                let k = y * self.nx + x;
                let cell = &self.members[self.start[k] as usize..self.start[k + 1] as usize];
                // The pair's owner is the cell of its overlap's lower-left corner.
                let owned = |i: u32, j: u32| {
                    let (si, sj) = (self.spans[i as usize], self.spans[j as usize]);
                    (si[0].max(sj[0]) as usize, si[1].max(sj[1]) as usize) == (x, y)
                };
                if cell.len() > Self::CROWDED && depth < Self::MAX_DEPTH {
                    if let Some(sub) = self.refined(cell, x, y) {
                        // The corner lies in this cell, so the cell's own grid meets the pair
                        // in the sub-cell of that corner, once.
                        sub.pairs(
                            &mut |a, b| {
                                let (i, j) = (cell[a as usize], cell[b as usize]);
                                if owned(i, j) {
                                    f(i, j);
                                }
                            },
                            depth + 1,
                        );
                        continue;
                    }
                }
                for (a, &i) in cell.iter().enumerate() {
                    // A crowded cell no grid can split is quadratic: `--time-limit` must be
                    // able to stop it (a fuzzer's soup of 83 000 chords took 72 s here).
                    crate::time_limit::check("checking for crossings");
                    for &j in &cell[a + 1..] {
                        if owned(i, j) {
                            f(i, j);
                        }
                    }
                }
            }
        }
        for (a, &i) in self.big.iter().enumerate() {
            crate::time_limit::check("checking for crossings");
            for j in 0..self.spans.len() as u32 {
                // A big box with every small one; two big boxes once (the later one asks).
                let rank = self.big_rank[j as usize] as usize;
                if rank == 0 || rank <= a {
                    f(i, j);
                }
            }
        }
    }

    /// A grid over the boxes `members` of cell (x, y), spread over the part of the cell
    /// they cover (its item numbers index `members`); `None` when it would be no finer.
    fn refined(&self, members: &[u32], x: usize, y: usize) -> Option<SegmentGrid> {
        let lo = self.origin + Point::new(x as f64, y as f64) * self.cell;
        let hi = lo + Point::new(self.cell, self.cell);
        let boxes = members.iter().map(|&i| self.boxes[i as usize]);
        let union = boxes.clone().fold(BBox::EMPTY, |b, o| b.union(&o));
        let all = BBox {
            min: Point::new(union.min.x.max(lo.x), union.min.y.max(lo.y)),
            max: Point::new(union.max.x.min(hi.x), union.max.y.min(hi.y)),
        };
        if !(all.min.x <= all.max.x && all.min.y <= all.max.y) {
            return None;
        }
        let sub = SegmentGrid::new(&all, boxes, self.tol);
        (sub.nx * sub.ny > 1).then_some(sub)
    }
}

/// Whether `second`, which starts where `first` ends, meets `first` only at that shared
/// vertex, decided cheaply; `false` means "maybe not", for the full test. For two segments
/// of a loop of three or more.
///
/// - Two lines meet elsewhere only when the second turns back along the first.
/// - A line and a circle through one of its ends `v` meet again at distance
///   s = −2·u·(v − c) from `v` along the unit direction u towards the line's far end; only
///   an s within the line's length can be a second meeting point.
/// - Two circles through a common point `v` meet again at the mirror image of `v` in the
///   line through their centres; the arcs meet there only if it lies on both (for circles
///   tangent at `v`, see the code). A point `w`
///   of a circle lies on the arc from `s` to `e` (counter-clockwise) exactly when it is on
///   the right of the chord s→e, on the left for a clockwise arc.
fn only_share_their_vertex(first: &Segment, second: &Segment, tol: f64) -> bool {
    let other_crossing_beyond = |v: Point, far: Point, c: Point| {
        let d = far - v;
        let len = d.norm();
        let s = -2.0 * (d * (1.0 / len)).dot(v - c);
        s <= tol || s > len + tol
    };
    // Whether `w` (on the arc's circle) is off the arc by more than `tol` beyond its chord.
    let clearly_off = |arc: &super::Arc, w: Point| {
        let chord = arc.end - arc.start;
        let len = chord.norm();
        len > tol && !arc.is_full_circle() && {
            let side = chord.cross(w - arc.start) / len;
            side * arc.sweep.signum() > tol
        }
    };
    match (&first.straight(), &second.straight()) {
        (Segment::Line { a, b }, Segment::Line { a: c, b: d }) => {
            // Not parallel (sine of the angle above 1e-9), or pointing on, not back.
            let (u, v) = (*b - *a, *d - *c);
            let cross = u.cross(v);
            cross * cross > 1e-18 * u.dot(u) * v.dot(v) || u.dot(v) > 0.0
        }
        (Segment::Line { a, b }, Segment::Arc(arc)) => other_crossing_beyond(*b, *a, arc.center),
        (Segment::Arc(arc), Segment::Line { a, b }) => other_crossing_beyond(*a, *b, arc.center),
        (Segment::Arc(x), Segment::Arc(y)) => {
            let v = x.end;
            let axis = y.center - x.center;
            let len = axis.norm();
            if len <= tol {
                return false; // one circle: overlapping arcs need the full test
            }
            let u = axis * (1.0 / len);
            let foot = x.center + u * u.dot(v - x.center);
            let w = foot * 2.0 - v;
            if w.dist(v) > 8.0 * tol {
                return clearly_off(x, w) || clearly_off(y, w);
            }
            // Circles (nearly) tangent at v. If the second arc goes on the way the first
            // arrives (a smooth joint) and neither turns more than a half circle, the first
            // lies behind v and the second ahead of it, and w, next to v, is on one side
            // only. Arcs turning back at v (a cusp) may run side by side: the full test.
            let tangent = |arc: &super::Arc| {
                let r = v - arc.center;
                Point::new(-r.y, r.x) * arc.sweep.signum()
            };
            x.sweep.abs() <= PI && y.sweep.abs() <= PI && tangent(x).dot(tangent(y)) > 0.0
        }
        (Segment::Curve(_), _) | (_, Segment::Curve(_)) => unreachable!("straightened above"),
    }
}

/// Whether two segments only touch at `at` (tangent curves) rather than cross: the points a
/// little before and after `at` along the first segment lie on the same side of the second.
fn is_tangent(s1: &super::Segment, s2: &super::Segment, at: Point, tol: f64) -> bool {
    use super::Segment;
    if let (Segment::Line { .. } | Segment::Curve(_), Segment::Line { .. } | Segment::Curve(_)) =
        (s1, s2)
    {
        return false;
    }
    let (s1, s2) = (&s1.straight(), &s2.straight());
    // Signed distance from the second segment's line or circle.
    let side = |p: Point| -> f64 {
        match s2 {
            Segment::Line { a, b } => {
                let d = *b - *a;
                d.cross(p - *a) / d.norm()
            }
            Segment::Arc(arc) => p.dist(arc.center) - arc.radius,
            Segment::Curve(_) => unreachable!("straightened above"),
        }
    };
    // Probe points on the first segment's own curve, a little before and after `at`.
    let step = (10.0 * tol).max(1e-9);
    let (before, after) = match s1 {
        Segment::Line { a, b } => {
            let d = *b - *a;
            let u = d * (1.0 / d.norm());
            (at - u * step, at + u * step)
        }
        Segment::Arc(arc) => {
            let v = at - arc.center;
            let ang = v.y.atan2(v.x);
            let dang = step / arc.radius;
            (
                arc.center + Point::polar(ang - dang) * arc.radius,
                arc.center + Point::polar(ang + dang) * arc.radius,
            )
        }
        Segment::Curve(_) => unreachable!("straightened above"),
    };
    side(before) * side(after) > 0.0
}

/// Profiles found by [`nest`], and how many loops were the same outline drawn again.
#[derive(Debug, Clone, PartialEq)]
pub struct Nested {
    pub profiles: Vec<Profile>,
    /// Loops dropped because another loop encloses the same region (an outline drawn twice,
    /// e.g. as a polyline and again as loose lines or as a hatch boundary).
    pub duplicate_loops: usize,
}

/// Orient and nest loops into profiles. The loops must not cross (they come from
/// [`drop_crossing_loops`], or [`LoopsToNest::new`] for loops known not to), but may touch;
/// `tol` is the distance within which a point counts as on a loop. Loops with no area become
/// problems.
///
/// A loop whose container encloses the same region (boxes within `tol` on every side,
/// centroids within `tol`, areas within `tol` times twice the box's half-perimeter or 1e-9 of
/// the area) is the same outline drawn twice: it is dropped and counted, not made a hole.
/// Loops that do not cross and share their box, centroid and area can only differ by slivers
/// thinner than the tolerance.
///
/// Whether a loop lies inside another is decided at a point of the loop that is clear of the
/// other (loops that touch along an edge share points, where inside and outside is a matter
/// of rounding): the midpoints of up to eight of its segments, spread along it, are tried in
/// turn.
pub fn nest(loops: LoopsToNest, tol: f64, problems: &mut Vec<LoopProblem>) -> Nested {
    /// Points of a loop tried, at most, to find one clear of a candidate container.
    const PROBES: usize = 8;
    let LoopsToNest {
        mut loops,
        facts,
        boxes,
    } = loops;
    // Area integrals about each loop's own box centre; their signed area gives the
    // direction, and the profiles reuse them.
    let mut info: Vec<(f64, BBox)> = Vec::with_capacity(loops.len());
    let mut moments: Vec<Moments> = Vec::with_capacity(loops.len());
    let mut lengths: Vec<f64> = Vec::with_capacity(loops.len());
    let mut first_probes: Vec<Point> = Vec::with_capacity(loops.len());
    let mut seqs: Vec<u32> = Vec::with_capacity(loops.len());
    let mut box_starts: Vec<usize> = Vec::with_capacity(loops.len());
    let mut zero_area = vec![false; loops.len()];
    // Loops with no area, reported in drawing order (`Loop::seq`).
    let mut flat: Vec<(u32, LoopProblem)> = Vec::new();
    for (k, (l, f)) in loops.iter().zip(facts).enumerate() {
        let LoopFacts {
            bbox: bb,
            moments: m,
            length,
            first_box,
        } = f;
        let area = m.a;
        // A loop with no area: below rounding noise for its size (common practice).
        if area.is_nan() || area.abs() <= 1e-12 * bb.width() * bb.height() {
            zero_area[k] = true;
            let problem = LoopProblem::ZeroArea {
                bbox: bb,
                origin: l.origin,
                layer: l.layer.clone(),
            };
            flat.push((l.seq, problem));
            continue;
        }
        info.push((area, bb));
        box_starts.push(first_box as usize);
        seqs.push(l.seq);
        moments.push(m);
        lengths.push(length);
        // The first point tried for containment (see `probe` below).
        first_probes.push(probe_point(&l.segments, area > 0.0, 0, PROBES));
    }
    push_in_drawing_order(problems, flat);
    let mut k = 0;
    loops.retain(|_| {
        k += 1;
        !zero_area[k - 1]
    });
    // Integrals as if every loop ran counter-clockwise; the loops themselves are turned
    // round only once their role is known (outer loops counter-clockwise, holes clockwise).
    let mut drawn_ccw: Vec<bool> = Vec::with_capacity(loops.len());
    for ((area, _), m) in info.iter_mut().zip(moments.iter_mut()) {
        drawn_ccw.push(*area > 0.0);
        if *area < 0.0 {
            *area = -*area;
            *m = *m * -1.0;
        }
    }
    // Largest first: a container is always larger than what it holds. Equal areas in
    // drawing order, which decides which of two equal outlines is kept.
    let mut order: Vec<usize> = (0..loops.len()).collect();
    order.sort_by(|&a, &b| info[b].0.total_cmp(&info[a].0).then(seqs[a].cmp(&seqs[b])));
    // Candidate containers: through a grid of boxes when there are many loops; a sheet's few
    // loops are simply all tried (their boxes are compared first anyway).
    const GRID_FROM: usize = 32;
    let grid = (loops.len() > GRID_FROM)
        .then(|| BoxGrid::new(&info.iter().map(|(_, b)| *b).collect::<Vec<_>>()));
    let every: Vec<u32> = if grid.is_none() {
        (0..loops.len() as u32).collect()
    } else {
        Vec::new()
    };
    let candidates = |p: Point| grid.as_ref().map_or(&every[..], |g| g.candidates(p));
    let rank: Vec<usize> = {
        let mut r = vec![0; loops.len()];
        for (k, &i) in order.iter().enumerate() {
            r[i] = k;
        }
        r
    };
    let mut queries: Vec<u32> = vec![0; loops.len()];
    // A loop asked about more than once (an outline with holes) gets its segments' heights
    // beside it, and a long one asked about many times a slab index (see `Index`; the slab
    // index boxed, so that a sheet of many loops keeps small slots).
    let mut indexes: Vec<Option<Index>> = (0..loops.len()).map(|_| None).collect();
    let mut parent: Vec<Option<usize>> = vec![None; loops.len()];
    let mut depth: Vec<usize> = vec![0; loops.len()];
    let mut duplicate = vec![false; loops.len()];
    // Whether loops i and j enclose the same region (see the doc above).
    let same_region = |i: usize, j: usize| {
        let (bi, bj) = (info[i].1, info[j].1);
        let near = |a: f64, b: f64| (a - b).abs() <= tol;
        let same_box = near(bi.min.x, bj.min.x)
            && near(bi.min.y, bj.min.y)
            && near(bi.max.x, bj.max.x)
            && near(bi.max.y, bj.max.y);
        if !same_box {
            return false;
        }
        let (ai, aj) = (info[i].0, info[j].0);
        let slack = (2.0 * tol * (bi.width() + bi.height())).max(1e-9 * ai);
        let ci = bi.center() + Point::new(moments[i].sx / ai, moments[i].sy / ai);
        let cj = bj.center() + Point::new(moments[j].sx / aj, moments[j].sy / aj);
        (ai - aj).abs() <= slack && ci.dist(cj) <= tol
    };
    for &i in &order {
        // Points of the loop: midpoints of segments spread along it, the first one first when
        // run counter-clockwise.
        let segs = &loops[i].segments;
        let n = segs.len();
        let probe = |k: usize| probe_point(segs, drawn_ccw[i], k, PROBES);
        let first_probe = first_probes[i];
        let bb = info[i].1;
        let mut best: Option<usize> = None;
        for &j in candidates(first_probe) {
            let j = j as usize;
            if j == i || rank[j] > rank[i] || duplicate[j] || !info[j].1.contains_box(&bb, tol) {
                continue;
            }
            if best.is_some_and(|b| rank[b] > rank[j]) {
                continue; // already found a smaller container
            }
            if same_region(i, j) {
                duplicate[i] = true;
                break;
            }
            let container = &loops[j].segments;
            queries[j] += 1;
            let slab_index_due = queries[j] > 32 && container.len() >= 64;
            if slab_index_due && !matches!(indexes[j], Some(Index::Slabs(_))) {
                indexes[j] = Some(Index::Slabs(Box::new(SlabIndex::new(container, tol))));
            }
            let index: &Index = indexes[j].get_or_insert_with(|| {
                let own_boxes = &boxes[box_starts[j]..][..container.len()];
                Index::Heights(Heights::with_boxes(container, own_boxes))
            });
            // The winding number around `q`: with a clearance, only if `q` is that clear of
            // the container (else `None`); without one, regardless.
            let around = |q: Point, clearance: Option<f64>| match (index, clearance) {
                (Index::Slabs(ix), Some(c)) => ix.winding_number_clear_of(q, c),
                (Index::Slabs(ix), None) => Some(ix.winding_number(q)),
                (Index::Heights(h), Some(c)) => h.winding_number_clear_of(q, c),
                (Index::Heights(h), None) => Some(h.winding_number(q)),
            };
            let w = (0..PROBES.min(n))
                .find_map(|k| around(if k == 0 { first_probe } else { probe(k) }, Some(tol)))
                .or_else(|| around(first_probe, None))
                .unwrap_or(0);
            if w != 0 {
                best = Some(j);
            }
        }
        if duplicate[i] {
            continue;
        }
        if let Some(p) = best {
            parent[i] = Some(p);
            depth[i] = depth[p] + 1;
        }
    }
    // Assemble profiles, largest first (the caller sorts rows).
    // The profile each outer loop became (`NO_PROFILE` for the other loops), and room for
    // every profile at once: a sheet of many profiles would otherwise grow the vector by
    // doubling, copying the profiles and touching fresh memory each time.
    const NO_PROFILE: u32 = u32::MAX;
    let mut profile_of = vec![NO_PROFILE; loops.len()];
    // Holes of each loop, so that each profile's list is allocated once at its size.
    let mut holes_of = vec![0u32; loops.len()];
    for i in 0..loops.len() {
        if let (Some(p), 1) = (parent[i], depth[i] % 2) {
            holes_of[p] += 1;
        }
    }
    let outers = (0..loops.len())
        .filter(|&i| depth[i].is_multiple_of(2) && !duplicate[i])
        .count();
    // Outer loops counter-clockwise, holes clockwise (loops of no profile are dropped),
    // turned in the order the loops lie in memory rather than by size: on a large sheet
    // their segments are long out of the cache by now.
    for (i, l) in loops.iter_mut().enumerate() {
        let outer = depth[i].is_multiple_of(2);
        if !duplicate[i] && outer != drawn_ccw[i] {
            l.reverse();
        }
    }
    let mut slots: Vec<Option<Loop>> = loops.into_iter().map(Some).collect();
    let mut profiles: Vec<Profile> = Vec::with_capacity(outers);
    for &i in &order {
        if depth[i].is_multiple_of(2) && !duplicate[i] {
            // `slots[i]` is taken exactly once, here or as a hole below.
            if let Some(outer) = slots[i].take() {
                profile_of[i] = profiles.len() as u32;
                let bbox = info[i].1;
                let outer_length = lengths[i];
                profiles.push(Profile {
                    outer,
                    holes: Vec::with_capacity(holes_of[i] as usize),
                    bbox,
                    moments: moments[i],
                    outer_length,
                    holes_length: 0.0,
                    depth: depth[i],
                });
            }
        }
    }
    for &i in &order {
        if depth[i] % 2 == 1 {
            if let (Some(p), Some(hole)) = (parent[i], slots[i].take()) {
                let k = profile_of[p] as usize;
                if profile_of[p] != NO_PROFILE {
                    // The hole's integrals, turned clockwise and moved to the profile's origin.
                    let d = profiles[k].bbox.center() - info[i].1.center();
                    let m = (moments[i] * -1.0).shifted(d);
                    profiles[k].moments += m;
                    profiles[k].holes_length += lengths[i];
                    profiles[k].holes.push(hole);
                }
            }
        }
    }
    Nested {
        profiles,
        duplicate_loops: duplicate.iter().filter(|&&d| d).count(),
    }
}

/// What a loop asked about for containment keeps to answer: its segments' heights (the loose
/// boxes the crossing check took, so that even the first question reads those instead of the
/// segments, most of which are not at the point's height), or a slab index (a long loop, past
/// thirty questions: building it costs about ten scans).
enum Index<'a> {
    Heights(Heights<'a>),
    Slabs(Box<SlabIndex<'a>>),
}

/// Point `k` of the `probes` points of a loop tried for containment: the midpoint of a
/// segment, the segments taken evenly spread along the loop as run counter-clockwise (`ccw`:
/// whether the loop is drawn that way), starting with its first.
fn probe_point(segs: &[Segment], ccw: bool, k: usize, probes: usize) -> Point {
    let n = segs.len();
    let at = k * n / probes.min(n);
    if ccw { &segs[at] } else { &segs[n - 1 - at] }.midpoint()
}

/// A uniform grid over boxes: each cell lists the boxes that cover it.
struct BoxGrid {
    origin: Point,
    cell: f64,
    n: i64,
    /// Boxes of cell (x, y), k = x·n + y: `members[start[k]..start[k + 1]]` (compressed rows:
    /// one lookup and a contiguous list, where a map of vectors chased a pointer per query).
    start: Vec<u32>,
    members: Vec<u32>,
}

impl BoxGrid {
    fn new(boxes: &[BBox]) -> BoxGrid {
        let all = boxes.iter().fold(BBox::EMPTY, |a, b| a.union(b));
        let n = ((boxes.len() as f64).sqrt().ceil() as i64).clamp(1, 256);
        let size = all.width().max(all.height()).max(f64::MIN_POSITIVE);
        let mut g = BoxGrid {
            origin: all.min,
            cell: size / n as f64,
            n,
            start: vec![0; (n * n) as usize + 1],
            members: Vec::new(),
        };
        // Cells covered by each box, counted, then filled in box order (a counting sort).
        let spans: Vec<((i64, i64), (i64, i64))> = boxes
            .iter()
            .map(|b| (g.index(b.min), g.index(b.max)))
            .collect();
        let cells = |&((x0, y0), (x1, y1)): &((i64, i64), (i64, i64))| {
            (x0..=x1).flat_map(move |x| (y0..=y1).map(move |y| (x * n + y) as usize))
        };
        for s in &spans {
            for k in cells(s) {
                g.start[k + 1] += 1;
            }
        }
        for k in 0..(n * n) as usize {
            g.start[k + 1] += g.start[k];
        }
        let mut fill = g.start.clone();
        g.members = vec![0; g.start[(n * n) as usize] as usize];
        for (i, s) in spans.iter().enumerate() {
            for k in cells(s) {
                g.members[fill[k] as usize] = i as u32;
                fill[k] += 1;
            }
        }
        g
    }
    fn index(&self, p: Point) -> (i64, i64) {
        let f = |v: f64, o: f64| (((v - o) / self.cell).floor() as i64).clamp(0, self.n - 1);
        (f(p.x, self.origin.x), f(p.y, self.origin.y))
    }
    fn candidates(&self, p: Point) -> &[u32] {
        let (x, y) = self.index(p);
        let k = (x * self.n + y) as usize;
        &self.members[self.start[k] as usize..self.start[k + 1] as usize]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::Arc;
    use crate::test_rng::uniform;
    use std::f64::consts::TAU;

    /// Pairs (i < j) whose boxes overlap within `tol`, by testing all of them.
    fn all_pairs(boxes: &[BBox], tol: f64) -> Vec<(u32, u32)> {
        let mut out = Vec::new();
        for i in 0..boxes.len() {
            for j in i + 1..boxes.len() {
                if boxes[i].overlaps(&boxes[j], tol) {
                    out.push((i as u32, j as u32));
                }
            }
        }
        out
    }

    /// What a pair finder reports: each pair once, as (smaller, larger), sorted; those whose
    /// boxes do not overlap are dropped (the grid may report a few).
    fn reported<R>(
        boxes: &[BBox],
        tol: f64,
        run: impl FnOnce(&mut dyn FnMut(u32, u32)) -> R,
    ) -> (Vec<(u32, u32)>, R) {
        let mut out = Vec::new();
        let r = run(&mut |i, j| out.push((i.min(j), i.max(j))));
        let n = out.len();
        out.sort_unstable();
        out.dedup();
        assert_eq!(out.len(), n, "a pair was reported twice");
        out.retain(|&(i, j)| boxes[i as usize].overlaps(&boxes[j as usize], tol));
        (out, r)
    }

    fn bounds(boxes: &[BBox]) -> BBox {
        boxes.iter().fold(BBox::EMPTY, |a, b| a.union(b))
    }

    /// Short segments' boxes scattered over a square: the sweep's case.
    fn scattered(n: usize, seed: u64) -> Vec<BBox> {
        let mut r = uniform(seed);
        (0..n)
            .map(|_| {
                let (x, y) = (100.0 * r(), 100.0 * r());
                let (w, h) = (4.0 * r(), 4.0 * r());
                BBox {
                    min: Point::new(x, y),
                    max: Point::new(x + w, y + h),
                }
            })
            .collect()
    }

    #[test]
    fn overlapping_pairs_are_found_exactly_once_by_the_sweep_and_by_the_grid() {
        for (n, seed, tol, long) in [
            (2, 1, 0.0, 0),
            (50, 2, 0.0, 0),
            (400, 3, 0.5, 0),
            (1000, 4, 1e-3, 0),
            (600, 5, 0.0, 3),
        ] {
            let mut boxes = scattered(n, seed);
            // Boxes across the whole width, among the others: each meets hundreds of later
            // boxes in the sweep, taken a stretch at a time.
            for k in 0..long {
                let y = 20.0 + 30.0 * k as f64;
                boxes.insert(
                    100 * k,
                    BBox {
                        min: Point::new(0.0, y),
                        max: Point::new(104.0, y + 1.0),
                    },
                );
            }
            let all = bounds(&boxes);
            let expected = all_pairs(&boxes, tol);
            let swept = reported(&boxes, tol, |f| {
                for_each_overlapping_pair(&all, &boxes, tol, f)
            });
            assert_eq!(
                swept,
                (expected.clone(), PairSearch::Sweep),
                "sweep, n = {n}"
            );
            let (gridded, ()) = reported(&boxes, tol, |f| {
                SegmentGrid::new(&all, boxes.iter().copied(), tol).for_each_pair(f)
            });
            assert_eq!(gridded, expected, "grid, n = {n}");
        }
    }

    /// A finely divided outline and one far-away box: the grid spreads over the far box, so
    /// the outline takes one of its cells, which gets a grid of its own (and that a few more
    /// levels). Every pair is still found once, and the candidates stay near the boxes'
    /// count instead of its square (found by fuzzing: 111 000 chords of a curve in one cell).
    #[test]
    fn a_crowded_cell_is_searched_with_a_grid_of_its_own() {
        for (far, tol) in [(1e9, 0.0), (1e300, 0.0), (1e6, 0.01)] {
            let mut boxes = scattered(4000, 7);
            boxes.push(BBox {
                min: Point::new(far, far),
                max: Point::new(far + 1.0, far + 1.0),
            });
            // A stack of tiny boxes in a column, all in one cell of the refined grid too.
            boxes.extend((0..500).map(|k| BBox {
                min: Point::new(50.0, 50.0 + 1e-3 * k as f64),
                max: Point::new(50.0, 50.0 + 1e-3 * (k + 1) as f64),
            }));
            let all = bounds(&boxes);
            let expected = all_pairs(&boxes, tol);
            let mut candidates = 0;
            let (found, ()) = reported(&boxes, tol, |f| {
                SegmentGrid::new(&all, boxes.iter().copied(), tol).for_each_pair(|i, j| {
                    candidates += 1;
                    f(i, j)
                })
            });
            assert_eq!(found, expected, "far = {far}");
            let n = boxes.len();
            assert!(
                candidates < 20 * n,
                "{candidates} candidates for {n} boxes, far = {far}"
            );
        }
    }

    /// Random pairs of segments where the second starts at the end of the first: whenever the
    /// quick test says they only share that vertex, the full intersection test finds them
    /// meeting nowhere else (beyond a few tolerances from it).
    #[test]
    fn quick_vertex_test_agrees_with_the_full_intersection_test() {
        let mut r = uniform(7);
        let tol = 1e-6;
        let (mut quick, mut agreed_maybe) = (0, 0);
        for k in 0..20_000 {
            let v = Point::new(10.0 * r() - 5.0, 10.0 * r() - 5.0);
            let mut point = || Point::new(10.0 * r() - 5.0, 10.0 * r() - 5.0);
            let (p, q) = (point(), point());
            // An arc through `v` about `c`, ending at `v` (or starting there).
            let arc_to = |c: Point, sw: f64| {
                let d = v - c;
                let end_angle = d.y.atan2(d.x);
                Segment::Arc(Arc::from_center(c, d.norm(), end_angle - sw, sw))
            };
            let arc_from = |c: Point, sw: f64| {
                let d = v - c;
                Segment::Arc(Arc::from_center(c, d.norm(), d.y.atan2(d.x), sw))
            };
            // For arcs tangent at `v`: the second centre on the line through the first
            // centre and `v`, on either side of `v` (circles touching inside or outside).
            let n = (v - p) * (1.0 / (v - p).norm());
            let side = if r() < 0.5 { -1.0 } else { 1.0 };
            let tangent_centre = v + n * ((0.2 + 8.0 * r()) * side);
            let mut sweep = || (r() * 6.0 + 0.05) * if r() < 0.5 { -1.0 } else { 1.0 };
            let (s1, s2) = match k % 5 {
                0 => (Segment::line(p, v), Segment::line(v, q)),
                1 => (Segment::line(p, v), arc_from(q, sweep())),
                2 => (arc_to(p, sweep()), Segment::line(v, q)),
                3 => (arc_to(p, sweep()), arc_from(q, sweep())),
                _ => (arc_to(p, sweep()), arc_from(tangent_centre, sweep())),
            };
            // The arcs' stored end points come from sin/cos: join them exactly at `v`.
            let s1 = match s1 {
                Segment::Arc(mut a) => {
                    a.end = v;
                    Segment::Arc(a)
                }
                l => l,
            };
            let s2 = match s2 {
                Segment::Arc(mut a) => {
                    a.start = v;
                    Segment::Arc(a)
                }
                l => l,
            };
            if only_share_their_vertex(&s1, &s2, tol) {
                quick += 1;
                for h in intersections(&s1, &s2, tol) {
                    assert!(
                        h.at.dist(v) <= 4.0 * tol,
                        "case {k}: {s1:?} and {s2:?} also meet at {:?}",
                        h.at
                    );
                }
            } else {
                agreed_maybe += 1;
            }
        }
        // Most random pairs are decided by the quick test; some go to the full one.
        assert!(
            quick > 12_000 && agreed_maybe > 500,
            "{quick} quick, {agreed_maybe} full"
        );
    }

    /// A closed loop through `pts`, edge k bulged by `bulges[k]` (0: straight).
    fn test_loop(pts: &[Point], bulges: &[f64]) -> Loop {
        let n = pts.len();
        let segments = (0..n)
            .map(|k| {
                let (a, b) = (pts[k], pts[(k + 1) % n]);
                match Arc::from_bulge(a, b, bulges[k]) {
                    Some(arc) => Segment::Arc(arc),
                    None => Segment::line(a, b),
                }
            })
            .collect();
        Loop {
            segments,
            seq: 0,
            layer: "0".into(),
            origin: crate::import::Origin {
                entity: "LWPOLYLINE",
                location: crate::import::Location::Line(1),
                handle: None,
                in_block: false,
            },
        }
    }

    /// The facts the crossing pass works out for nesting, along with its boxes, are those of
    /// the loop worked out on their own: its exact box, and its integrals and length about
    /// that box's centre, bit for bit (the pass visits the segments in the same order), and
    /// the loose boxes of its segments.
    #[test]
    fn facts_from_the_crossing_pass_are_the_loops_own() {
        let mut r = uniform(5);
        let mut loops = Vec::new();
        for _ in 0..200 {
            let (cx, cy) = (1e4 * r(), -1e4 * r());
            let n = 1 + (r() * 30.0) as usize;
            let pts: Vec<Point> = (0..n)
                .map(|k| {
                    let a = TAU * (k as f64 + 0.8 * r()) / n as f64;
                    Point::new(cx, cy) + Point::polar(a) * (1.0 + 9.0 * r())
                })
                .collect();
            let bulges: Vec<f64> = (0..n).map(|_| 2.0 * r() - 1.0).collect();
            loops.push(test_loop(&pts, &bulges));
        }
        let (_, facts, boxes) = crossings(&loops, 1e-6, &[], PairSource::Boxes);
        assert_eq!(facts.len(), loops.len());
        for (l, f) in loops.iter().zip(&facts) {
            // The segments' loose boxes, for the containment tests' winding numbers.
            let own: Vec<BBox> = l.segments.iter().map(Segment::loose_bbox).collect();
            assert_eq!(boxes[f.first_box as usize..][..own.len()], own[..]);
            let bbox = l.exact_bbox(&[]);
            assert_eq!(f.bbox, bbox);
            let c = bbox.center();
            let m = l
                .segments
                .iter()
                .fold(Moments::default(), |m, s| m + segment_moments(s, c, &[]));
            assert_eq!(f.moments, m);
            let length: f64 = l.segments.iter().map(Segment::length).sum();
            assert_eq!(f.length.to_bits(), length.to_bits());
        }
    }

    /// Where order decides, loops count in drawing order (`Loop::seq`), not in the order
    /// they are listed in (a large drawing lists them in memory order): of two equal
    /// outlines the one drawn first is kept, equal holes and the problems of several loops
    /// come in drawing order.
    #[test]
    fn order_follows_the_drawing_not_the_list() {
        let p = Point::new;
        let square = |x: f64, y: f64, w: f64| {
            test_loop(
                &[p(x, y), p(x + w, y), p(x + w, y + w), p(x, y + w)],
                &[0.0; 4],
            )
        };
        let named = |mut l: Loop, seq: u32, layer: &str| {
            l.seq = seq;
            l.layer = layer.into();
            l
        };
        for listed_backwards in [false, true] {
            let mut loops = vec![
                named(square(0.0, 0.0, 100.0), 0, "outer"),
                named(square(0.0, 0.0, 100.0), 1, "again"),
                named(square(10.0, 10.0, 5.0), 2, "hole 2"),
                named(square(50.0, 50.0, 5.0), 3, "hole 3"),
                // No area: a line there and back.
                named(
                    test_loop(&[p(200.0, 0.0), p(210.0, 0.0)], &[0.0; 2]),
                    4,
                    "flat 4",
                ),
                named(
                    test_loop(&[p(300.0, 0.0), p(310.0, 0.0)], &[0.0; 2]),
                    5,
                    "flat 5",
                ),
                // Figures of eight: each crosses itself.
                named(
                    test_loop(
                        &[p(400.0, 0.0), p(410.0, 10.0), p(410.0, 0.0), p(400.0, 10.0)],
                        &[0.0; 4],
                    ),
                    6,
                    "eight 6",
                ),
                named(
                    test_loop(
                        &[p(500.0, 0.0), p(510.0, 10.0), p(510.0, 0.0), p(500.0, 10.0)],
                        &[0.0; 4],
                    ),
                    7,
                    "eight 7",
                ),
            ];
            if listed_backwards {
                loops.reverse();
            }
            let mut problems = Vec::new();
            let loops = drop_crossing_loops(loops, 1e-6, &[], &mut problems);
            let nested = nest(loops, 1e-6, &mut problems);
            assert_eq!(nested.duplicate_loops, 1);
            assert_eq!(nested.profiles.len(), 1);
            let profile = &nested.profiles[0];
            assert_eq!(&*profile.outer.layer, "outer");
            let holes: Vec<&str> = profile.holes.iter().map(|h| &*h.layer).collect();
            assert_eq!(holes, ["hole 2", "hole 3"]);
            let problems: Vec<&str> = problems.iter().map(|pr| pr.layer()).collect();
            assert_eq!(problems, ["eight 6", "eight 7", "flat 4", "flat 5"]);
        }
    }

    /// The box search finds every crossing that testing all pairs of segments finds,
    /// on loops of every kind: random polygons (mostly crossing themselves), star-shaped
    /// ones (simple), with and without bulges, staircases of horizontal and vertical edges,
    /// and loops that touch or cross each other.
    #[test]
    fn the_box_search_misses_no_crossing_that_all_pairs_find() {
        let mut r = uniform(21);
        let mut found = [0usize; 2]; // cases with a crossing, without
        for case in 0..1500 {
            let n_loops = 1 + case % 3;
            let mut loops = Vec::new();
            for _ in 0..n_loops {
                let (cx, cy) = (20.0 * r(), 20.0 * r());
                let n = 3 + (r() * 25.0) as usize;
                let kind = (r() * 4.0) as usize;
                let pts: Vec<Point> = match kind {
                    // Random points: mostly self-crossing.
                    0 => (0..n)
                        .map(|_| Point::new(cx + 10.0 * r(), cy + 10.0 * r()))
                        .collect(),
                    // Star-shaped about (cx, cy): simple.
                    1 | 2 => (0..n)
                        .map(|k| {
                            let a = TAU * (k as f64 + 0.8 * r()) / n as f64;
                            Point::new(cx, cy) + Point::polar(a) * (3.0 + 5.0 * r())
                        })
                        .collect(),
                    // A staircase: horizontal and vertical edges on a grid.
                    _ => {
                        let mut p = Point::new(cx.round(), cy.round());
                        let mut v = vec![p];
                        for k in 0..n.max(4) {
                            let step =
                                (1.0 + (r() * 4.0).floor()) * if r() < 0.5 { -1.0 } else { 1.0 };
                            p = if k % 2 == 0 {
                                p + Point::new(step, 0.0)
                            } else {
                                p + Point::new(0.0, step)
                            };
                            v.push(p);
                        }
                        v
                    }
                };
                let bulges: Vec<f64> = (0..pts.len())
                    .map(|_| if r() < 0.5 { 0.0 } else { 0.8 * r() - 0.4 })
                    .collect();
                loops.push(test_loop(&pts, &bulges));
            }
            let tol = 1e-6 * 30.0;
            let boxes = crossings(&loops, tol, &[], PairSource::Boxes).0;
            let all = crossings(&loops, tol, &[], PairSource::All).0;
            assert_eq!(boxes, all, "case {case}");
            found[usize::from(all.iter().all(Option::is_none))] += 1;
        }
        // Both outcomes are well represented.
        assert!(found[0] > 300 && found[1] > 300, "{found:?}");
    }

    /// Sheets of many loops (more than the search takes at once), in separate groups that
    /// are each a few loops crossing or not: searching group by group finds what testing
    /// all pairs finds.
    #[test]
    fn many_loops_searched_group_by_group_give_the_crossings_all_pairs_give() {
        let mut r = uniform(77);
        let mut found = [0usize; 2]; // loops crossing something, loops clear
        for case in 0..40 {
            let mut loops = Vec::new();
            let groups = 20 + case % 20;
            for g in 0..groups {
                // Group centres on a grid 40 apart; two to four loops about each, some of
                // them crossing (random points), most simple (star-shaped).
                let (gx, gy) = ((g % 6) as f64 * 40.0, (g / 6) as f64 * 40.0);
                for _ in 0..2 + (r() * 3.0) as usize {
                    let (cx, cy) = (gx + 16.0 * r(), gy + 16.0 * r());
                    let n = 3 + (r() * 20.0) as usize;
                    let pts: Vec<Point> = if r() < 0.2 {
                        (0..n)
                            .map(|_| Point::new(cx + 10.0 * r(), cy + 10.0 * r()))
                            .collect()
                    } else {
                        (0..n)
                            .map(|k| {
                                let a = TAU * (k as f64 + 0.8 * r()) / n as f64;
                                Point::new(cx, cy) + Point::polar(a) * (1.5 + 2.5 * r())
                            })
                            .collect()
                    };
                    let bulges: Vec<f64> = (0..pts.len())
                        .map(|_| if r() < 0.5 { 0.0 } else { 0.8 * r() - 0.4 })
                        .collect();
                    loops.push(test_loop(&pts, &bulges));
                }
            }
            assert!(
                loops.len() > 32,
                "case {case}: the group search is not used"
            );
            let tol = 1e-6 * 300.0;
            let boxes = crossings(&loops, tol, &[], PairSource::Boxes).0;
            let all = crossings(&loops, tol, &[], PairSource::All).0;
            assert_eq!(boxes, all, "case {case}");
            for b in &all {
                found[usize::from(b.is_none())] += 1;
            }
        }
        assert!(found[0] > 200 && found[1] > 200, "{found:?}");
    }

    #[test]
    fn a_stack_of_long_lines_goes_to_the_grid_and_still_finds_every_overlap() {
        // 300 horizontal lines across the whole width, 1 apart, each overlapping the sweep
        // range of all others (the sweep would test ~45,000 pairs), and a few short
        // vertical lines crossing several of them.
        let mut boxes: Vec<BBox> = (0..300)
            .map(|k| BBox {
                min: Point::new(0.0, k as f64),
                max: Point::new(1000.0, k as f64),
            })
            .collect();
        for k in 0..20 {
            let x = 50.0 * k as f64 + 3.0;
            boxes.push(BBox {
                min: Point::new(x, 10.0 * k as f64 + 0.5),
                max: Point::new(x, 10.0 * k as f64 + 3.5),
            });
        }
        let all = bounds(&boxes);
        let expected = all_pairs(&boxes, 0.0);
        assert_eq!(expected.len(), 20 * 3);
        let found = reported(&boxes, 0.0, |f| {
            for_each_overlapping_pair(&all, &boxes, 0.0, f)
        });
        assert_eq!(found, (expected, PairSearch::Grid));
    }
}
