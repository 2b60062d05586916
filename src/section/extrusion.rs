//! Figures an extruder quotes and plans with: the circumscribing circle (it sets the press
//! and container), the thinnest wall and the thickest section (they set the die and the
//! speed), the hollows, the outer and inner perimeters (surface to anodise or coat per
//! metre), and the centroid of the outline taken as a line.
//!
//! Methods and accuracy (lengths in millimetres, "size" the diagonal of the section's box):
//!
//! - **Circumscribing circle**: the smallest circle holding every outer loop. Welzl's
//!   randomised incremental algorithm (Welzl 1991, "Smallest enclosing disks"; from memory),
//!   expected linear time, with the points in an order shuffled from a fixed seed so that
//!   the output never changes. The points are every segment's ends, the axis-extreme points
//!   of arcs and a point of every curve piece; then each segment's farthest point from the
//!   circle's centre is found exactly (an arc's is its centre plus r towards it, when that
//!   point lies on the arc; a curve piece's by a golden-section search on the curve itself,
//!   for pieces whose exact box reaches beyond the circle), any outside the circle are added,
//!   and the circle is found again until none is. Exact to rounding for lines, arcs,
//!   ellipses and splines.
//! - **Thinnest wall**: the smallest width across material between two places of the
//!   boundary where the boundary is perpendicular to the line joining them (a double
//!   normal: the diameter of the circle that passes through the neck there), never the
//!   length of an edge or a gap between neighbouring vertices. The boundary is sampled (at
//!   least [`SAMPLES`] points and 4 per segment; lines and arcs exactly, with their exact
//!   normals), a ray is cast from each sample into the material to the first boundary it
//!   meets (a uniform grid of segments, so each ray looks at a few cells), and the hit
//!   counts when the boundary there faces back within [`DOUBLE_NORMAL_DEG`] degrees.
//!   Between two straight edges that is a wall as it stands (a drafted fin) and golden
//!   section finds its narrowest place; where an arc or a curve takes part only a true
//!   double normal counts, found by bisection where the angle changes sign. Exact to
//!   rounding for lines and arcs; curve pieces count as their chords (within 1e-5 of the
//!   curve's size). A profile with no double normal (a triangle), or whose double normals
//!   are all wider than its largest inscribed circle, reports that circle's diameter, with
//!   its touching point and the opposite end of its diameter.
//! - **Thickest section**: the diameter of the largest circle inside the material (the pole
//!   of inaccessibility): a best-first search over square cells of the section's box, with
//!   the exact distance to the boundary (the grid of segments) and the winding number for
//!   inside, to 1e-9 of the size or [`INSCRIBED_CELLS`] cells, then once more around the
//!   best point with a fresh budget; the point is then moved onto the ridge between the
//!   walls that hold it (halfway between its nearest boundary point and the boundary
//!   straight across), which makes circles between parallel walls or concentric arcs exact
//!   to rounding. The result is always a circle that fits (a lower bound); on the shapes
//!   tested it is within 1e-6 of the closed form or better.
//! - **Outline centroid**: (∮ x ds, ∮ y ds) / ∮ ds over every loop, outer and holes: lines
//!   by their midpoints, arcs by the centroid of a circular arc, c + r·sin(α)/α along the
//!   bisector, α half the sweep (from memory; any table of centroids of lines), curve pieces
//!   by 16-point Gauss–Legendre on the curve itself (exact to rounding on the short pieces).
//! - **Surface per metre** (m²/m): the perimeter in metres, since one metre of profile has
//!   perimeter × 1 m of surface (common practice). Outer and inner separately, and both.
//!
//! This module does no I/O.

use std::cmp::Ordering;
use std::collections::BinaryHeap;
use std::f64::consts::SQRT_2;
use std::ops::RangeInclusive;

use crate::geom::predicates::{closest_point, SlabIndex};
use crate::geom::{Arc, BBox, CurvePiece, CurveTable, Point, Profile, Segment};

/// Largest angle, in degrees, between the ray into the material and the boundary's outward
/// normal where it leaves, for the width to count as a wall (a double normal). A few
/// degrees admit the draft of tapered fins; the walls of a corner (90° apart) never pass.
pub const DOUBLE_NORMAL_DEG: f64 = 5.0;

/// Boundary samples the thinnest-wall search takes at least (and 4 per segment).
pub const SAMPLES: usize = 1000;

/// Cells the largest-inscribed-circle search looks at before it stops (see the module doc).
pub const INSCRIBED_CELLS: usize = 1000;

/// The extruder's figures of a section (one profile, or all of a file merged), millimetres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExtrusionProps {
    /// Diameter and centre of the smallest circle holding the section.
    pub circumscribed_diameter: f64,
    pub circumscribed_center: Point,
    /// The thinnest wall and its two ends on the boundary.
    pub thinnest_wall: f64,
    pub thinnest_wall_from: Point,
    pub thinnest_wall_to: Point,
    /// Diameter and centre of the largest circle inside the material.
    pub thickest_section: f64,
    pub thickest_center: Point,
    /// Number of hollows (holes) of the section.
    pub hollows: usize,
    /// Length of the outer loops and of the holes.
    pub perimeter_outer: f64,
    pub perimeter_inner: f64,
    /// Centroid of all loops taken as lines (∮ p ds / ∮ ds).
    pub outline_centroid: Point,
}

impl ExtrusionProps {
    /// Outer surface per metre of length, m²/m: the outer perimeter in metres.
    pub fn surface_outer(&self) -> f64 {
        self.perimeter_outer * 1e-3
    }
    /// Inner surface (of the hollows) per metre of length, m²/m.
    pub fn surface_inner(&self) -> f64 {
        self.perimeter_inner * 1e-3
    }
    /// Whole surface per metre of length, m²/m.
    pub fn surface(&self) -> f64 {
        (self.perimeter_outer + self.perimeter_inner) * 1e-3
    }
}

/// The extruder's figures of the union of `profiles` (curve pieces look up their curves in
/// `table`). An error says which figure could not be found.
pub fn extrusion_props(
    profiles: &[&Profile],
    table: &CurveTable,
) -> Result<ExtrusionProps, String> {
    let bbox = profiles.iter().fold(BBox::EMPTY, |b, p| b.union(&p.bbox()));
    let size = bbox.diagonal();
    if profiles.is_empty() || !(size.is_finite() && size > 0.0) {
        return Err("extrusion figures: the section has no extent".into());
    }
    // Distances are roots of sums of squares: beyond about 1e154 mm the squares overflow,
    // every distance comes out infinite and the searches never settle (each nearest-segment
    // query would walk the whole grid). A margin of 4 covers points of the search cells
    // and rays beyond the section's box.
    if !(4.0 * size).powi(2).is_finite() {
        return Err(format!(
            "extrusion figures: the section is too large ({size:.3e} mm) for distances in \
             double precision"
        ));
    }
    // Work about the box centre: full precision far from the drawing's origin.
    let reference = bbox.center();
    let shift =
        |segs: &[Segment]| -> Vec<Segment> { segs.iter().map(|s| shifted(s, reference)).collect() };

    let outer: Vec<Segment> = profiles
        .iter()
        .flat_map(|p| shift(&p.outer.segments))
        .collect();
    let circle = circumscribing_circle(&outer, table, reference, 1e-12 * size)
        .ok_or("extrusion figures: the circumscribing circle did not settle")?;

    let mut wall: Option<Wall> = None;
    let mut thickest = (f64::NEG_INFINITY, Point::default());
    for p in profiles {
        let mut segs = shift(&p.outer.segments);
        for h in &p.holes {
            segs.extend(shift(&h.segments));
        }
        let segs: Vec<Segment> = segs.into_iter().filter(|s| s.length() > 0.0).collect();
        let grid = SegmentGrid::new(&segs);
        let slab = SlabIndex::new(&segs, 0.0);
        let pb = p.bbox();
        let local = BBox {
            min: pb.min - reference,
            max: pb.max - reference,
        };
        let psize = local.diagonal();
        let (r, c) = largest_inscribed_circle(&grid, &slab, &local, psize);
        let mut w = thinnest_wall(&grid, psize);
        // No double normal, or none narrower than the largest inscribed circle: that
        // circle's diameter is the wall (see the module doc).
        if w.as_ref().is_none_or(|w| w.width > 2.0 * r * (1.0 + 1e-9)) {
            let (_, near, _) = grid.nearest(c);
            w = Some(Wall {
                width: 2.0 * r,
                from: near,
                to: c + (c - near),
            });
        }
        if let Some(w) = w {
            if wall.as_ref().is_none_or(|b| w.width < b.width) {
                wall = Some(w);
            }
        }
        if r > thickest.0 {
            thickest = (r, c);
        }
    }
    let wall = wall.ok_or("extrusion figures: no wall found")?;

    let (mut len, mut moment) = (0.0, Point::default());
    for p in profiles {
        for l in std::iter::once(&p.outer).chain(&p.holes) {
            for s in &l.segments {
                let (ds, m) = length_moment(s, table, reference);
                len += ds;
                moment = moment + m;
            }
        }
    }
    let out = ExtrusionProps {
        circumscribed_diameter: 2.0 * circle.radius,
        circumscribed_center: circle.center + reference,
        thinnest_wall: wall.width,
        thinnest_wall_from: wall.from + reference,
        thinnest_wall_to: wall.to + reference,
        thickest_section: 2.0 * thickest.0,
        thickest_center: thickest.1 + reference,
        hollows: profiles.iter().map(|p| p.holes.len()).sum(),
        perimeter_outer: profiles.iter().map(|p| p.outer_length).sum(),
        perimeter_inner: profiles.iter().map(|p| p.holes_length).sum(),
        outline_centroid: reference + moment * (1.0 / len),
    };
    let finite = [
        out.circumscribed_diameter,
        out.thinnest_wall,
        out.thickest_section,
        out.outline_centroid.x,
        out.outline_centroid.y,
        out.circumscribed_center.x,
        out.circumscribed_center.y,
    ]
    .iter()
    .all(|v| v.is_finite());
    if !finite || out.thickest_section <= 0.0 {
        return Err("extrusion figures: a figure came out undefined (a loop without area?)".into());
    }
    Ok(out)
}

/// The segment moved by −d.
fn shifted(s: &Segment, d: Point) -> Segment {
    match *s {
        Segment::Line { a, b } => Segment::Line { a: a - d, b: b - d },
        Segment::Arc(arc) => Segment::Arc(Arc {
            center: arc.center - d,
            start: arc.start - d,
            end: arc.end - d,
            ..arc
        }),
        Segment::Curve(c) => Segment::Curve(CurvePiece {
            a: c.a - d,
            b: c.b - d,
            mid: c.mid - d,
            ..c
        }),
    }
}

// ---------------------------------------------------------------------------------------
// Circumscribing circle

/// A circle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Circle {
    pub center: Point,
    pub radius: f64,
}

impl Circle {
    fn holds(&self, p: Point, slack: f64) -> bool {
        p.dist(self.center) <= self.radius + slack
    }
}

fn circle_on_two(a: Point, b: Point) -> Circle {
    Circle {
        center: (a + b) * 0.5,
        radius: a.dist(b) * 0.5,
    }
}

/// The circle through three points; for (nearly) collinear points the largest of the three
/// circles on two of them, which then holds the third.
fn circle_on_three(a: Point, b: Point, c: Point) -> Circle {
    let (u, v) = (b - a, c - a);
    let (uu, vv) = (u.dot(u), v.dot(v));
    let d = 2.0 * u.cross(v);
    if d.abs() <= 1e-14 * (uu + vv) {
        return [
            circle_on_two(a, b),
            circle_on_two(a, c),
            circle_on_two(b, c),
        ]
        .into_iter()
        .fold(
            circle_on_two(a, a),
            |m, k| if k.radius > m.radius { k } else { m },
        );
    }
    // Circumcentre relative to a (common practice: the perpendicular bisectors' meeting).
    let o = Point::new(v.y * uu - u.y * vv, u.x * vv - v.x * uu) * (1.0 / d);
    Circle {
        center: a + o,
        radius: o.norm(),
    }
}

/// The smallest circle holding every point to within `slack`, by Welzl's algorithm in its
/// incremental form (Welzl 1991; from memory) over the points in an order shuffled from a
/// fixed seed: expected linear time, and the same answer on every run. `None` for no
/// points, or for a point that is not finite.
pub fn smallest_enclosing_circle(points: &[Point], slack: f64) -> Option<Circle> {
    // No circle holds a point that is not finite, and every such point would restart the
    // search below: `None`.
    if points.iter().any(|p| !(p.x.is_finite() && p.y.is_finite())) {
        return None;
    }
    let mut pts = points.to_vec();
    // Fisher–Yates with xorshift64 (Marsaglia 2003) from a fixed seed.
    let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
    for i in (1..pts.len()).rev() {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        pts.swap(i, (x % (i as u64 + 1)) as usize);
    }
    let mut c = Circle {
        center: *pts.first()?,
        radius: 0.0,
    };
    for i in 1..pts.len() {
        if c.holds(pts[i], slack) {
            continue;
        }
        c = Circle {
            center: pts[i],
            radius: 0.0,
        };
        for j in 0..i {
            if c.holds(pts[j], slack) {
                continue;
            }
            c = circle_on_two(pts[i], pts[j]);
            for k in 0..j {
                if !c.holds(pts[k], slack) {
                    c = circle_on_three(pts[i], pts[j], pts[k]);
                }
            }
        }
    }
    Some(c)
}

/// The smallest circle holding the segments `outer` (moved by −`reference`), exactly: see
/// the module doc. `None` if it does not settle in 32 rounds (never seen).
fn circumscribing_circle(
    outer: &[Segment],
    table: &CurveTable,
    reference: Point,
    slack: f64,
) -> Option<Circle> {
    let mut pts = Vec::with_capacity(2 * outer.len());
    for s in outer {
        pts.push(s.start());
        match s {
            Segment::Arc(arc) => {
                let r = arc.radius;
                for d in [(r, 0.0), (0.0, r), (-r, 0.0), (0.0, -r)] {
                    let w = arc.center + Point::new(d.0, d.1);
                    if arc.holds_circle_point(w) {
                        pts.push(w);
                    }
                }
            }
            Segment::Curve(c) => pts.push(c.mid),
            Segment::Line { .. } => {}
        }
    }
    for _ in 0..32 {
        let c = smallest_enclosing_circle(&pts, slack)?;
        let before = pts.len();
        for s in outer {
            if let Some(w) = farthest_point(s, &c, table, reference, slack) {
                // A point that is not finite (arithmetic overflowing on a section near 1e150
                // mm: found by fuzzing) is held by no circle, so it is added, and the next
                // round's `smallest_enclosing_circle` ends the search with `None`.
                if !c.holds(w, slack) {
                    pts.push(w);
                }
            }
        }
        if pts.len() == before {
            return Some(c);
        }
    }
    None
}

/// A segment's farthest point from the circle's centre when it may lie outside the circle
/// and is not one of its ends (those are already in): an arc's point straight away from
/// the centre, a curve piece's farthest point by a search on the curve itself.
fn farthest_point(
    s: &Segment,
    c: &Circle,
    table: &CurveTable,
    reference: Point,
    slack: f64,
) -> Option<Point> {
    match s {
        Segment::Line { .. } => None,
        Segment::Arc(arc) => {
            let v = arc.center - c.center;
            let n = v.norm();
            if n <= 1e-15 * arc.radius {
                return None; // Concentric: every point is as far as the ends.
            }
            let w = arc.center + v * (arc.radius / n);
            arc.holds_circle_point(w).then_some(w)
        }
        Segment::Curve(piece) => {
            let span = table.spans.get(piece.span as usize)?;
            // The piece lies in its exact box: no corner outside, nothing to look for.
            let (lo, hi) = (span.bbox.min - reference, span.bbox.max - reference);
            let far = [lo, hi, Point::new(lo.x, hi.y), Point::new(hi.x, lo.y)]
                .iter()
                .map(|q| q.dist(c.center))
                .fold(0.0, f64::max);
            if far <= c.radius + slack {
                return None;
            }
            let curve = table.curves.get(span.curve as usize)?;
            let at = |t: f64| curve.point(t) - reference;
            let g = |t: f64| -at(t).dist(c.center);
            let t = golden_min(&g, span.ta.min(span.tb), span.ta.max(span.tb), 16);
            Some(at(t))
        }
    }
}

/// The argument of the smallest of `f` over [lo, hi]: the best of `n + 1` evenly spaced
/// samples, refined by golden-section search between its neighbours (common practice; the
/// functions searched here have one minimum near the best sample).
fn golden_min(f: &impl Fn(f64) -> f64, lo: f64, hi: f64, n: usize) -> f64 {
    let step = (hi - lo) / n as f64;
    let best = (0..=n)
        .map(|k| lo + step * k as f64)
        .min_by(|a, b| f(*a).total_cmp(&f(*b)))
        .unwrap_or(lo); // n + 1 ≥ 1 samples: never empty
    golden(f, (best - step).max(lo), (best + step).min(hi))
}

/// Golden-section search for the smallest of `f` on [a, b] (Kiefer 1953; common practice),
/// to the resolution of the arguments.
fn golden(f: &impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    const R: f64 = 0.618_033_988_749_894_8; // (√5 − 1)/2
    let mut c = b - R * (b - a);
    let mut d = a + R * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..64 {
        if (b - a).abs() <= 1e-13 * (a.abs() + b.abs()) + f64::MIN_POSITIVE {
            break;
        }
        if fc <= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - R * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + R * (b - a);
            fd = f(d);
        }
    }
    if fc <= fd {
        c
    } else {
        d
    }
}

// ---------------------------------------------------------------------------------------
// A uniform grid of segments: rays and nearest points

/// Where a ray first meets the boundary.
#[derive(Debug, Clone, Copy)]
struct RayHit {
    t: f64,
    seg: usize,
    at: Point,
}

/// Segments filed by the cells of a uniform grid their loose boxes cover (about one cell per
/// segment); a segment covering more than `MAX_CELLS` cells is kept apart and looked at by
/// every query, so the index stays linear in size.
struct SegmentGrid<'a> {
    segs: &'a [Segment],
    lo: Point,
    cell: f64,
    nx: usize,
    ny: usize,
    /// Segments of cell (ix, iy): `items[start[k]..start[k + 1]]`, k = iy·nx + ix.
    start: Vec<u32>,
    items: Vec<u32>,
    big: Vec<u32>,
}

impl<'a> SegmentGrid<'a> {
    const MAX_CELLS: usize = 64;
    const MAX_SIDE: usize = 1024;

    fn new(segs: &'a [Segment]) -> SegmentGrid<'a> {
        let boxes: Vec<BBox> = segs.iter().map(|s| s.loose_bbox()).collect();
        let all = boxes.iter().fold(BBox::EMPTY, |b, x| b.union(x));
        let (w, h) = (all.width().max(0.0), all.height().max(0.0));
        let side = w.max(h);
        let n = segs.len().max(1) as f64;
        let mut cell = (w * h / n).sqrt().max(side / Self::MAX_SIDE as f64);
        if !(cell > 0.0 && cell.is_finite()) {
            cell = 1.0;
        }
        let count = |len: f64| ((len / cell).ceil() as usize).clamp(1, Self::MAX_SIDE);
        let (nx, ny) = (count(w), count(h));
        let mut grid = SegmentGrid {
            segs,
            lo: if all.is_empty() {
                Point::default()
            } else {
                all.min
            },
            cell,
            nx,
            ny,
            start: vec![0; nx * ny + 1],
            items: Vec::new(),
            big: Vec::new(),
        };
        let ranges: Vec<(usize, usize, usize, usize)> = boxes
            .iter()
            .map(|b| {
                let (x0, y0) = grid.cell_of(b.min);
                let (x1, y1) = grid.cell_of(b.max);
                (x0, y0, x1, y1)
            })
            .collect();
        let small =
            |r: &(usize, usize, usize, usize)| (r.2 - r.0 + 1) * (r.3 - r.1 + 1) <= Self::MAX_CELLS;
        for (i, r) in ranges.iter().enumerate() {
            if small(r) {
                for iy in r.1..=r.3 {
                    for ix in r.0..=r.2 {
                        grid.start[iy * nx + ix + 1] += 1;
                    }
                }
            } else {
                grid.big.push(i as u32);
            }
        }
        for k in 0..nx * ny {
            grid.start[k + 1] += grid.start[k];
        }
        let mut fill = grid.start.clone();
        grid.items = vec![0; grid.start[nx * ny] as usize];
        for (i, r) in ranges.iter().enumerate() {
            if small(r) {
                for iy in r.1..=r.3 {
                    for ix in r.0..=r.2 {
                        let slot = &mut fill[iy * nx + ix];
                        grid.items[*slot as usize] = i as u32;
                        *slot += 1;
                    }
                }
            }
        }
        grid
    }

    /// The cell holding `p`, clamped into the grid.
    fn cell_of(&self, p: Point) -> (usize, usize) {
        let f = |v: f64, lo: f64, n: usize| {
            (((v - lo) / self.cell) as i64).clamp(0, n as i64 - 1) as usize
        };
        (f(p.x, self.lo.x, self.nx), f(p.y, self.lo.y, self.ny))
    }

    fn cell_items(&self, ix: usize, iy: usize) -> &[u32] {
        let k = iy * self.nx + ix;
        &self.items[self.start[k] as usize..self.start[k + 1] as usize]
    }

    /// The first point where the ray p + t·dir (dir a unit vector), t in (t_min, t_max),
    /// meets a segment. The cells along the ray are visited in order (Amanatides & Woo 1987,
    /// "A fast voxel traversal algorithm"; from memory) until a hit lies within the cell.
    fn first_hit(&self, p: Point, dir: Point, t_min: f64, t_max: f64) -> Option<RayHit> {
        let mut best: Option<RayHit> = None;
        let mut t_best = t_max;
        let test = |i: u32, best: &mut Option<RayHit>, t_best: &mut f64| {
            if let Some((t, at)) = ray_segment(p, dir, &self.segs[i as usize], t_min) {
                if t < *t_best {
                    *t_best = t;
                    *best = Some(RayHit {
                        t,
                        seg: i as usize,
                        at,
                    });
                }
            }
        };
        for &i in &self.big {
            test(i, &mut best, &mut t_best);
        }
        // Clip the ray to the grid's box.
        let hi = Point::new(
            self.lo.x + self.nx as f64 * self.cell,
            self.lo.y + self.ny as f64 * self.cell,
        );
        let (mut t0, mut t1) = (t_min.max(0.0), t_best);
        for (o, d, l, h) in [(p.x, dir.x, self.lo.x, hi.x), (p.y, dir.y, self.lo.y, hi.y)] {
            if d != 0.0 {
                let (ta, tb) = ((l - o) / d, (h - o) / d);
                t0 = t0.max(ta.min(tb));
                t1 = t1.min(ta.max(tb));
            } else if o < l || o > h {
                return best;
            }
        }
        if t0 > t1 {
            return best;
        }
        let q = p + dir * t0;
        let (mut ix, mut iy) = self.cell_of(q);
        let axis = |d: f64, o: f64, lo: f64, i: usize| -> (i64, f64, f64) {
            if d > 0.0 {
                (1, (lo + (i + 1) as f64 * self.cell - o) / d, self.cell / d)
            } else if d < 0.0 {
                (-1, (lo + i as f64 * self.cell - o) / d, -self.cell / d)
            } else {
                (0, f64::INFINITY, f64::INFINITY)
            }
        };
        let (sx, mut next_x, dx) = axis(dir.x, p.x, self.lo.x, ix);
        let (sy, mut next_y, dy) = axis(dir.y, p.y, self.lo.y, iy);
        loop {
            for &i in self.cell_items(ix, iy) {
                test(i, &mut best, &mut t_best);
            }
            let exit = next_x.min(next_y);
            if t_best <= exit || exit >= t1.min(t_best) {
                break;
            }
            if next_x < next_y {
                let n = ix as i64 + sx;
                if n < 0 || n >= self.nx as i64 {
                    break;
                }
                ix = n as usize;
                next_x += dx;
            } else {
                let n = iy as i64 + sy;
                if n < 0 || n >= self.ny as i64 {
                    break;
                }
                iy = n as usize;
                next_y += dy;
            }
        }
        best
    }

    /// The distance from `p` to the nearest segment, that point, and the segment: rings of
    /// cells around p's cell, until the next ring lies farther than the best found.
    fn nearest(&self, p: Point) -> (f64, Point, usize) {
        self.nearest_within(p, f64::INFINITY)
    }

    /// [`SegmentGrid::nearest`] when a segment lies within `limit` of `p`; otherwise the
    /// search stops at rings beyond `limit` and the distance returned is at least `limit`.
    fn nearest_within(&self, p: Point, limit: f64) -> (f64, Point, usize) {
        let mut best = (f64::INFINITY, p, 0usize);
        let test = |i: u32, best: &mut (f64, Point, usize)| {
            let q = closest_point(&self.segs[i as usize], p);
            let d = q.dist(p);
            if d < best.0 {
                *best = (d, q, i as usize);
            }
        };
        for &i in &self.big {
            test(i, &mut best);
        }
        let (cx, cy) = self.cell_of(p);
        let (cx, cy) = (cx as i64, cy as i64);
        let (nx, ny) = (self.nx as i64, self.ny as i64);
        // The segments of the cells of columns `xs` in row `iy`.
        let row = |xs: RangeInclusive<i64>, iy: i64, best: &mut _| {
            for ix in xs {
                for &i in self.cell_items(ix as usize, iy as usize) {
                    test(i, best);
                }
            }
        };
        for k in 0i64.. {
            if cx - k < 0 && cx + k >= nx && cy - k < 0 && cy + k >= ny {
                break;
            }
            // Ring k, row by row from the bottom: its bottom and top rows whole, the rows
            // between at its left and right columns, each clipped to the grid. The rows
            // between are visited only when one of those columns is in the grid, so that a
            // ring costs the cells it has there (stepping through all its rows cost a long
            // thin grid k steps per ring: half a million for each point of a 1 × 1024 grid).
            let (x0, x1) = ((cx - k).max(0), (cx + k).min(nx - 1));
            let (left, right) = (cx - k >= 0, k > 0 && cx + k < nx);
            if cy - k >= 0 {
                row(x0..=x1, cy - k, &mut best);
            }
            if left || right {
                for iy in (cy - k + 1).max(0)..=(cy + k - 1).min(ny - 1) {
                    if left {
                        row(cx - k..=cx - k, iy, &mut best);
                    }
                    if right {
                        row(cx + k..=cx + k, iy, &mut best);
                    }
                }
            }
            if k > 0 && cy + k < ny {
                row(x0..=x1, cy + k, &mut best);
            }
            // Cells of the next ring lie at least k cells away from p.
            if best.0.min(limit) <= k as f64 * self.cell {
                break;
            }
        }
        best
    }
}

/// The first point (t > t_min) where the ray p + t·dir meets the segment; a curve piece
/// counts as its chord.
fn ray_segment(p: Point, dir: Point, s: &Segment, t_min: f64) -> Option<(f64, Point)> {
    match s {
        Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
            let e = *b - *a;
            let denom = dir.cross(e);
            if denom == 0.0 {
                return None;
            }
            let ap = *a - p;
            let t = ap.cross(e) / denom;
            let u = ap.cross(dir) / denom;
            (t > t_min && (0.0..=1.0).contains(&u)).then(|| (t, *a + e * u))
        }
        Segment::Arc(arc) => {
            let f = p - arc.center;
            let b = f.dot(dir);
            let disc = b * b - (f.dot(f) - arc.radius * arc.radius);
            if disc < 0.0 {
                return None;
            }
            let root = disc.sqrt();
            [-b - root, -b + root]
                .into_iter()
                .filter(|&t| t > t_min)
                .map(|t| (t, p + dir * t))
                .find(|&(_, w)| arc.holds_circle_point(w))
        }
    }
}

/// The point at fraction t of a segment and the unit normal there pointing into the
/// material (on the left: outer loops run counter-clockwise, holes clockwise).
fn boundary_point(s: &Segment, t: f64) -> (Point, Point) {
    match s {
        Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
            let e = *b - *a;
            let e = e * (1.0 / e.norm());
            (*a + (*b - *a) * t, Point::new(-e.y, e.x))
        }
        Segment::Arc(arc) => {
            let w = arc.point_at(t);
            let u = (w - arc.center) * (1.0 / arc.radius);
            (w, u * -arc.sweep.signum())
        }
    }
}

/// The unit normal pointing out of the material at a point `q` of the segment.
fn outward_normal(s: &Segment, q: Point) -> Point {
    match s {
        Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
            let e = *b - *a;
            let e = e * (1.0 / e.norm());
            Point::new(e.y, -e.x)
        }
        Segment::Arc(arc) => (q - arc.center) * (arc.sweep.signum() / arc.radius),
    }
}

// ---------------------------------------------------------------------------------------
// Thinnest wall

/// A width across material and its two ends.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Wall {
    width: f64,
    from: Point,
    to: Point,
}

/// What a ray cast into the material from fraction t of segment `i` along its inward normal
/// n finds: the width to the first boundary, n · m and n × m for the outward normal m
/// there (m = n at a double normal), and whether either end is on a curved piece.
#[derive(Debug, Clone, Copy)]
struct Probe {
    wall: Wall,
    cos: f64,
    sin: f64,
    curved: bool,
}

fn probe(grid: &SegmentGrid, i: usize, t: f64, t_min: f64, cap: f64) -> Option<Probe> {
    let s = &grid.segs[i];
    let (p, n) = boundary_point(s, t);
    let hit = grid.first_hit(p, n, t_min, cap)?;
    let other = &grid.segs[hit.seg];
    let m = outward_normal(other, hit.at);
    let straight = |x: &Segment| matches!(x, Segment::Line { .. });
    Some(Probe {
        wall: Wall {
            width: hit.t,
            from: p,
            to: hit.at,
        },
        cos: m.dot(n),
        sin: n.cross(m),
        curved: !(straight(s) && straight(other)),
    })
}

/// A probe whose far side faces back within [`DOUBLE_NORMAL_DEG`].
fn facing(pr: Option<Probe>) -> Option<Probe> {
    pr.filter(|q| q.cos >= DOUBLE_NORMAL_DEG.to_radians().cos())
}

/// The thinnest wall of the loops filed in `grid` (see the module doc); `None` when no
/// double normal exists.
///
/// Between two straight edges the angle between the ray and the far side's normal is the
/// same all along, so any sample that faces back within [`DOUBLE_NORMAL_DEG`] is a wall (a
/// drafted fin), refined by golden section to its narrowest place. Where an arc or a curve
/// piece takes part, the angle turns along the boundary and the narrowest facing sample can
/// lie merely at the edge of the tolerance (across an ellipse near its minor axis the ray
/// shortens as it tilts): there only a true double normal counts, found where n × m changes
/// sign between the sample's neighbours (bisection), or at a sample where it is zero to
/// rounding (concentric arcs).
fn thinnest_wall(grid: &SegmentGrid, size: f64) -> Option<Wall> {
    let segs = grid.segs;
    let total: f64 = segs.iter().map(|s| s.length()).sum();
    let samples = (4 * segs.len()).max(SAMPLES) as f64;
    let spacing = total / samples;
    let t_min = 1e-9 * size;
    let aligned = 1e-9;
    // Facing samples: (width, segment, fraction, samples on that segment, curved).
    let mut found: Vec<(f64, usize, f64, usize, bool)> = Vec::new();
    let mut best = f64::INFINITY;
    for (i, s) in segs.iter().enumerate() {
        let k = ((s.length() / spacing).ceil() as usize).clamp(4, 256);
        for j in 0..k {
            let t = (j as f64 + 0.5) / k as f64;
            // Walls much wider than the best so far cannot become the thinnest.
            if let Some(q) = facing(probe(grid, i, t, t_min, 2.0 * best)) {
                if !q.curved || q.sin.abs() <= aligned {
                    best = best.min(q.wall.width);
                }
                found.push((q.wall.width, i, t, k, q.curved));
            }
        }
    }
    found.sort_by(|a, b| a.0.total_cmp(&b.0));
    // Refine the narrowest, one per segment, until a dozen have given a wall.
    let mut tried = Vec::new();
    let (mut walls, mut result) = (0, None::<Wall>);
    for &(_, i, t, k, curved) in &found {
        if tried.contains(&i) {
            continue;
        }
        tried.push(i);
        let h = 1.0 / k as f64;
        let (lo, hi) = ((t - h).max(0.0), (t + h).min(1.0));
        let wall = if curved {
            double_normal(grid, i, t, lo, hi, t_min, aligned)
        } else {
            let width = |u: f64| match facing(probe(grid, i, u, t_min, f64::INFINITY)) {
                Some(q) if !q.curved => q.wall.width,
                _ => f64::INFINITY,
            };
            let u = golden(&width, lo, hi);
            [u, t]
                .iter()
                .filter_map(|&v| facing(probe(grid, i, v, t_min, f64::INFINITY)))
                .filter(|q| !q.curved)
                .map(|q| q.wall)
                .min_by(|a, b| a.width.total_cmp(&b.width))
        };
        if let Some(w) = wall {
            walls += 1;
            if result.is_none_or(|r| w.width < r.width) {
                result = Some(w);
            }
        }
        if walls >= 12 || tried.len() >= 48 {
            break;
        }
    }
    result
}

/// A true double normal from segment `i` near fraction t: the sample itself when n × m is
/// zero there to rounding, else where n × m changes sign in [lo, hi] (bisection).
fn double_normal(
    grid: &SegmentGrid,
    i: usize,
    t: f64,
    lo: f64,
    hi: f64,
    t_min: f64,
    aligned: f64,
) -> Option<Wall> {
    let at = |u: f64| facing(probe(grid, i, u, t_min, f64::INFINITY));
    let here = at(t)?;
    if here.sin.abs() <= aligned {
        return Some(here.wall);
    }
    // The neighbour on the side where the sign changes.
    let (mut a, mut b, mut sa) = match (at(lo), at(hi)) {
        (Some(l), _) if l.sin * here.sin <= 0.0 => (lo, t, l.sin),
        (_, Some(r)) if r.sin * here.sin <= 0.0 => (t, hi, here.sin),
        _ => return None,
    };
    for _ in 0..48 {
        let m = 0.5 * (a + b);
        let sm = at(m)?.sin;
        if sm * sa <= 0.0 {
            b = m;
        } else {
            (a, sa) = (m, sm);
        }
    }
    // At a joint of two chords the sign changes by a jump: accept the place if it faces
    // back within a degree (far more than a curve's chords turn there).
    at(0.5 * (a + b))
        .filter(|q| q.cos >= 1f64.to_radians().cos())
        .map(|q| q.wall)
}

// ---------------------------------------------------------------------------------------
// Thickest section: the largest inscribed circle

/// A square cell of the search: its centre, half its side, the signed distance from its
/// centre to the boundary (positive inside) and the most any point of it could have.
#[derive(Debug, Clone, Copy)]
struct Cell {
    center: Point,
    half: f64,
    d: f64,
    potential: f64,
}

impl PartialEq for Cell {
    fn eq(&self, o: &Self) -> bool {
        self.potential == o.potential
    }
}
impl Eq for Cell {}
impl PartialOrd for Cell {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}
impl Ord for Cell {
    fn cmp(&self, o: &Self) -> Ordering {
        self.potential.total_cmp(&o.potential)
    }
}

/// Radius and centre of the largest circle inside the loops (see the module doc).
fn largest_inscribed_circle(
    grid: &SegmentGrid,
    slab: &SlabIndex,
    bbox: &BBox,
    size: f64,
) -> (f64, Point) {
    let signed = |p: Point| {
        let d = grid.nearest(p).0;
        if slab.winding_number(p) != 0 {
            d
        } else {
            -d
        }
    };
    // A cell whose centre is outside the material matters only if its potential can beat
    // `floor`: its distance is looked for no farther than that (searching far from the
    // boundary, across a hollow, costs many rings of the grid).
    let cell = |center: Point, half: f64, floor: f64| {
        let d = if slab.winding_number(center) != 0 {
            grid.nearest(center).0
        } else {
            -grid.nearest_within(center, half * SQRT_2 - floor).0
        };
        Cell {
            center,
            half,
            d,
            potential: d + half * SQRT_2,
        }
    };
    let (short, long) = (
        bbox.width().min(bbox.height()),
        bbox.width().max(bbox.height()),
    );
    let mut best = cell(bbox.center(), 0.0, f64::NEG_INFINITY);
    if short.is_nan() || short <= 0.0 {
        return (best.d.max(0.0), best.center);
    }
    // Square cells of the box's short side, but about INSCRIBED_CELLS of them at most: a
    // sliver (a triangle 50 mm long and 1e-300 mm high) would otherwise start with more
    // cells than memory holds. Larger cells are as sound (a cell's potential bounds every
    // point of it), only slower to split.
    let side = short.max(long / INSCRIBED_CELLS as f64);
    let precision = 1e-9 * size;
    let mut heap = BinaryHeap::new();
    let (nx, ny) = (
        (bbox.width() / side).ceil() as usize,
        (bbox.height() / side).ceil() as usize,
    );
    for iy in 0..ny {
        for ix in 0..nx {
            let c = cell(
                bbox.min + Point::new((ix as f64 + 0.5) * side, (iy as f64 + 0.5) * side),
                side / 2.0,
                best.d,
            );
            if c.d > best.d {
                best = c;
            }
            heap.push(c);
        }
    }
    // Best first, by the most a cell could hold; then again around the best point with a
    // fresh budget: long ridges between parallel walls (where the distance is the same all
    // along) use up the first budget, and a maximum held by three walls (a sharp corner) is
    // found only near the point.
    let search = |mut heap: BinaryHeap<Cell>, best: &mut Cell| {
        let mut looked = 0;
        while let Some(c) = heap.pop() {
            if c.potential - best.d <= precision || looked >= INSCRIBED_CELLS {
                break;
            }
            let h = c.half / 2.0;
            for (sx, sy) in [(-1.0, -1.0), (1.0, -1.0), (-1.0, 1.0), (1.0, 1.0)] {
                let k = cell(c.center + Point::new(sx * h, sy * h), h, best.d);
                looked += 1;
                if k.d > best.d {
                    *best = k;
                }
                if k.potential > best.d + precision {
                    heap.push(k);
                }
            }
        }
    };
    search(heap, &mut best);
    let around = cell(
        best.center,
        2.0 * best.half.max(precision),
        f64::NEG_INFINITY,
    );
    search(BinaryHeap::from([around]), &mut best);
    // Onto the ridge: halfway between the nearest boundary point and the boundary straight
    // across from it, while that gains.
    let (mut x, mut r) = (best.center, best.d);
    for _ in 0..32 {
        if r <= 0.0 {
            break;
        }
        let (d, near, _) = grid.nearest(x);
        let g = (x - near) * (1.0 / d);
        let Some(hit) = grid.first_hit(x, g, 0.0, f64::INFINITY) else {
            break;
        };
        let y = x + g * ((hit.t - d) / 2.0);
        let ry = signed(y);
        if ry > r {
            (x, r) = (y, ry);
        } else {
            break;
        }
    }
    (r.max(0.0), x)
}

// ---------------------------------------------------------------------------------------
// Outline centroid

/// A segment's length and its first moment of length ∫ (p − reference) ds (module doc).
fn length_moment(s: &Segment, table: &CurveTable, reference: Point) -> (f64, Point) {
    match s {
        Segment::Line { a, b } => {
            let len = a.dist(*b);
            (len, ((*a + *b) * 0.5 - reference) * len)
        }
        Segment::Arc(arc) => {
            let len = arc.length();
            let half = arc.sweep.abs() / 2.0;
            let mid = arc.point_at(0.5) - arc.center;
            let c = arc.center + mid * (half.sin() / half);
            (len, (c - reference) * len)
        }
        Segment::Curve(piece) => {
            let span = &table.spans[piece.span as usize];
            match table.curves.get(span.curve as usize) {
                Some(curve) => curve.length_moment_between(span.ta, span.tb, reference),
                // A span without its curve (hand-built tables): its length at the chord's
                // midpoint.
                None => (
                    span.length,
                    ((piece.a + piece.b) * 0.5 - reference) * span.length,
                ),
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_rng::uniform;
    use std::f64::consts::{PI, TAU};

    fn line(ax: f64, ay: f64, bx: f64, by: f64) -> Segment {
        Segment::line(Point::new(ax, ay), Point::new(bx, by))
    }

    fn rect(w: f64, h: f64) -> Vec<Segment> {
        vec![
            line(0.0, 0.0, w, 0.0),
            line(w, 0.0, w, h),
            line(w, h, 0.0, h),
            line(0.0, h, 0.0, 0.0),
        ]
    }

    /// A point that is not finite (overflowing arithmetic on a section near 1e150 mm, found
    /// by fuzzing) gives no circle, instead of a search that restarts at every such point.
    #[test]
    fn no_circle_holds_a_point_that_is_not_finite() {
        let mut pts = vec![
            Point::new(0.0, 0.0),
            Point::new(4.0, 0.0),
            Point::new(0.0, 3.0),
        ];
        let c = smallest_enclosing_circle(&pts, 1e-12).expect("points");
        // A right triangle's hypotenuse is the diameter of its circumcircle (Thales).
        assert!((c.radius - 2.5).abs() < 1e-12, "{c:?}");
        for bad in [f64::NAN, f64::INFINITY] {
            pts.push(Point::new(bad, 1.0));
            assert_eq!(smallest_enclosing_circle(&pts, 1e-12), None);
            pts.pop();
        }
    }

    #[test]
    fn welzl_against_all_triples() {
        let mut r = uniform(7);
        for case in 0..300 {
            let n = 1 + (r() * 12.0) as usize;
            let pts: Vec<Point> = (0..n).map(|_| Point::new(r() * 10.0, r() * 10.0)).collect();
            let c = smallest_enclosing_circle(&pts, 1e-12).expect("points");
            assert!(pts.iter().all(|p| c.holds(*p, 1e-9)), "case {case}");
            // The smallest circle is one on two or three of the points (common practice):
            // none of those holding every point is smaller.
            let mut smallest = f64::INFINITY;
            for i in 0..n {
                for j in i..n {
                    let mut cands = vec![circle_on_two(pts[i], pts[j])];
                    for k in j + 1..n {
                        cands.push(circle_on_three(pts[i], pts[j], pts[k]));
                    }
                    for k in cands {
                        if pts.iter().all(|p| k.holds(*p, 1e-9)) {
                            smallest = smallest.min(k.radius);
                        }
                    }
                }
            }
            assert!(
                (c.radius - smallest).abs() <= 1e-9,
                "case {case}: {c:?} vs {smallest}"
            );
        }
    }

    #[test]
    fn rays_and_nearest_points_agree_with_a_full_scan() {
        // A ring of 200 arcs and lines around a square hole.
        let mut segs = Vec::new();
        let n = 200;
        for k in 0..n {
            let a0 = TAU * k as f64 / n as f64;
            let arc = Arc::from_center(Point::default(), 50.0, a0, TAU / n as f64);
            if k % 2 == 0 {
                segs.push(Segment::Arc(arc));
            } else {
                segs.push(Segment::line(arc.start, arc.end));
            }
        }
        segs.extend(
            rect(20.0, 20.0)
                .iter()
                .map(|s| shifted(&s.reversed(), Point::new(10.0, 10.0))),
        );
        let grid = SegmentGrid::new(&segs);
        let mut r = uniform(3);
        for _ in 0..2000 {
            let p = Point::new(120.0 * r() - 60.0, 120.0 * r() - 60.0);
            let dir = Point::polar(TAU * r());
            let got = grid.first_hit(p, dir, 1e-9, f64::INFINITY).map(|h| h.t);
            let want = segs
                .iter()
                .filter_map(|s| ray_segment(p, dir, s, 1e-9).map(|x| x.0))
                .fold(None, |m: Option<f64>, t| Some(m.map_or(t, |m| m.min(t))));
            assert_eq!(got, want, "{p:?} {dir:?}");
            let near = grid.nearest(p).0;
            let full = segs
                .iter()
                .map(|s| closest_point(s, p).dist(p))
                .fold(f64::INFINITY, f64::min);
            assert_eq!(near, full);
        }
    }

    /// Long thin grids (1 × 1024 cells and 1024 × 1): the ring search, which steps through a
    /// ring's rows only where the ring has cells, finds what a full scan finds, for points
    /// on the grid and far off it on every side.
    #[test]
    fn nearest_points_of_a_long_thin_grid_agree_with_a_full_scan() {
        let mut r = uniform(5);
        for upright in [false, true] {
            let along = |t: f64, across: f64| {
                if upright {
                    Point::new(across, t)
                } else {
                    Point::new(t, across)
                }
            };
            // 2000 short segments along a line 1000 long and 0.01 wide.
            let segs: Vec<Segment> = (0..2000)
                .map(|k| {
                    let t = k as f64 * 0.5;
                    Segment::line(along(t, 0.01 * r()), along(t + 0.4, 0.01 * r()))
                })
                .collect();
            let grid = SegmentGrid::new(&segs);
            assert_eq!(
                (grid.nx.min(grid.ny), grid.nx.max(grid.ny)),
                (1, SegmentGrid::MAX_SIDE)
            );
            for _ in 0..500 {
                let p = along(3000.0 * r() - 1000.0, 2000.0 * r() - 1000.0);
                let near = grid.nearest(p).0;
                let full = segs
                    .iter()
                    .map(|s| closest_point(s, p).dist(p))
                    .fold(f64::INFINITY, f64::min);
                assert_eq!(near, full, "{p:?}");
            }
        }
    }

    #[test]
    fn golden_section_finds_a_parabola_minimum() {
        let f = |x: f64| (x - 0.3).powi(2);
        assert!((golden_min(&f, 0.0, 1.0, 8) - 0.3).abs() < 1e-7);
        // At an end of the interval.
        let g = |x: f64| x;
        assert!(golden_min(&g, 0.0, 1.0, 8) < 1e-7);
        let _ = PI;
    }
}
