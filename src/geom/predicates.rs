//! Intersections between segments and point-in-loop tests, on exact lines and arcs.

use std::borrow::Cow;
use std::f64::consts::{PI, TAU};

use super::segment::{wrap_tau, Arc, BBox, CurvePiece, Point, Segment};

/// A point where two segments meet, with the fraction along each (0 at start, 1 at end).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hit {
    pub at: Point,
    pub t1: f64,
    pub t2: f64,
}

/// Fraction along an arc of the direction `angle`, or `None` when outside the sweep by more
/// than `ang_tol` radians.
fn arc_fraction(arc: &Arc, angle: f64, ang_tol: f64) -> Option<f64> {
    let sweep = arc.sweep.abs();
    let rel = wrap_tau((angle - arc.start_angle()) * arc.sweep.signum());
    if rel <= sweep + ang_tol {
        Some((rel / sweep).min(1.0))
    } else if rel >= TAU - ang_tol {
        Some(0.0)
    } else {
        None
    }
}

/// All points where two segments meet, within `tol` (a length). Collinear or concentric
/// overlaps are reported by the ends of the shared stretch.
pub fn intersections(s1: &Segment, s2: &Segment, tol: f64) -> Vec<Hit> {
    match (&s1.straight(), &s2.straight()) {
        (Segment::Line { a, b }, Segment::Line { a: c, b: d }) => line_line(*a, *b, *c, *d, tol),
        (Segment::Line { a, b }, Segment::Arc(arc)) => line_arc(*a, *b, arc, tol),
        (Segment::Arc(arc), Segment::Line { a, b }) => line_arc(*a, *b, arc, tol)
            .into_iter()
            .map(|h| Hit {
                at: h.at,
                t1: h.t2,
                t2: h.t1,
            })
            .collect(),
        (Segment::Arc(x), Segment::Arc(y)) => arc_arc(x, y, tol),
        (Segment::Curve(_), _) | (_, Segment::Curve(_)) => unreachable!("straightened above"),
    }
}

fn line_line(p: Point, p2: Point, q: Point, q2: Point, tol: f64) -> Vec<Hit> {
    let r = p2 - p;
    let s = q2 - q;
    let (lr, ls) = (r.norm(), s.norm());
    if lr == 0.0 || ls == 0.0 {
        return Vec::new();
    }
    let denom = r.cross(s);
    let qp = q - p;
    // Parallel when the sine of the angle between them is below tol / length.
    if denom.abs() <= tol / lr.max(ls) * lr * ls {
        // Collinear if q lies on the line through p.
        if (qp.cross(r) / lr).abs() > tol {
            return Vec::new();
        }
        let t0 = qp.dot(r) / (lr * lr);
        let t1 = (q2 - p).dot(r) / (lr * lr);
        let (lo, hi) = (t0.min(t1).max(0.0), t0.max(t1).min(1.0));
        if hi < lo - tol / lr {
            return Vec::new();
        }
        let mut hits = Vec::new();
        for t in [lo, hi] {
            let at = p + r * t;
            let u = (at - q).dot(s) / (ls * ls);
            hits.push(Hit {
                at,
                t1: t,
                t2: u.clamp(0.0, 1.0),
            });
        }
        if (hi - lo) * lr <= tol {
            hits.truncate(1);
        }
        return hits;
    }
    let t = qp.cross(s) / denom;
    let u = qp.cross(r) / denom;
    let (et, eu) = (tol / lr, tol / ls);
    if t < -et || t > 1.0 + et || u < -eu || u > 1.0 + eu {
        return Vec::new();
    }
    vec![Hit {
        at: p + r * t,
        t1: t.clamp(0.0, 1.0),
        t2: u.clamp(0.0, 1.0),
    }]
}

fn line_arc(p: Point, p2: Point, arc: &Arc, tol: f64) -> Vec<Hit> {
    let d = p2 - p;
    let len = d.norm();
    if len == 0.0 {
        return Vec::new();
    }
    let u = d * (1.0 / len);
    let f = p - arc.center;
    // Foot of the perpendicular from the centre, then ± along the line.
    let foot = -f.dot(u);
    let dist = f.cross(u).abs();
    let r = arc.radius;
    if dist > r + tol {
        return Vec::new();
    }
    let h = (r * r - dist * dist).max(0.0).sqrt();
    let roots: &[f64] = if h <= tol { &[0.0] } else { &[-1.0, 1.0] };
    let ang_tol = tol / r;
    let mut hits = Vec::new();
    for &sgn in roots {
        let along = foot + sgn * h;
        if along < -tol || along > len + tol {
            continue;
        }
        let at = p + u * along;
        let v = at - arc.center;
        if let Some(ta) = arc_fraction(arc, v.y.atan2(v.x), ang_tol) {
            hits.push(Hit {
                at,
                t1: (along / len).clamp(0.0, 1.0),
                t2: ta,
            });
        }
    }
    hits
}

fn arc_arc(x: &Arc, y: &Arc, tol: f64) -> Vec<Hit> {
    let dc = y.center - x.center;
    let d = dc.norm();
    let (r1, r2) = (x.radius, y.radius);
    let (t1, t2) = (tol / r1, tol / r2);
    if d <= tol {
        // Concentric: they meet only if they are the same circle and their sweeps overlap.
        if (r1 - r2).abs() > tol {
            return Vec::new();
        }
        // The shared stretch is bounded by ends of the two arcs that lie on both.
        let mut hits = Vec::new();
        for p in [y.start, y.end, x.start, x.end] {
            let v = p - x.center;
            let ang = v.y.atan2(v.x);
            let (fx, fy) = (arc_fraction(x, ang, t1), arc_fraction(y, ang, t2));
            if let (Some(fx), Some(fy)) = (fx, fy) {
                hits.push(Hit {
                    at: p,
                    t1: fx,
                    t2: fy,
                });
            }
        }
        return hits;
    }
    if d > r1 + r2 + tol || d < (r1 - r2).abs() - tol {
        return Vec::new();
    }
    let a = (d * d + r1 * r1 - r2 * r2) / (2.0 * d);
    let h = (r1 * r1 - a * a).max(0.0).sqrt();
    let e = dc * (1.0 / d);
    let perp = Point::new(-e.y, e.x);
    let base = x.center + e * a;
    let pts: Vec<Point> = if h <= tol {
        vec![base]
    } else {
        vec![base + perp * h, base - perp * h]
    };
    let mut hits = Vec::new();
    for at in pts {
        let v1 = at - x.center;
        let v2 = at - y.center;
        if let (Some(f1), Some(f2)) = (
            arc_fraction(x, v1.y.atan2(v1.x), t1),
            arc_fraction(y, v2.y.atan2(v2.x), t2),
        ) {
            hits.push(Hit { at, t1: f1, t2: f2 });
        }
    }
    hits
}

/// Winding number of a closed run of segments around `p` (counter-clockwise positive); `p`
/// must not lie on the run.
///
/// Counts signed crossings of the ray from `p` towards +x, with the half-open rule, so that a
/// vertex on the ray is counted once (common practice for crossing-number tests). An arc
/// counts as its chord plus the circular segment between them: the loop "arc, then chord
/// back" winds once (the sweep's sign) around the points inside that segment and not at all
/// around the others, so an arc adds its chord's crossings, and ±1 when `p` is inside its
/// circular segment (inside the circle, on the arc's side of the chord). No angles; only
/// when `p` is on an arc's circle or chord line is the arc itself followed
/// (`arc_ray_crossings`).
pub fn winding_number(segments: &[Segment], p: Point) -> i32 {
    winding(segments, p, None).unwrap_or(0)
}

/// [`winding_number`] when `p` is farther than `clearance` from every segment; `None` when it
/// is that near the run, where which side it lies on is a matter of rounding.
pub fn winding_number_clear_of(segments: &[Segment], p: Point, clearance: f64) -> Option<i32> {
    winding(segments, p, Some(clearance))
}

/// The winding number, in the same pass checking (with `Some(clearance)`) that `p` is
/// farther than that from every segment (`None` if not). Each segment is looked at closely
/// only when `p` is within its reach: its box for the distance, its height for the ray.
fn winding<'a>(
    segments: impl IntoIterator<Item = &'a Segment>,
    p: Point,
    clearance: Option<f64>,
) -> Option<i32> {
    let cl = clearance.unwrap_or(-1.0);
    let check = clearance.is_some();
    let mut w = 0;
    for s in segments {
        match s {
            Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
                // Most lines are above or below `p` (beyond the clearance): neither near nor
                // crossing the ray, decided by two comparisons.
                let (ylo, yhi) = (a.y.min(b.y), a.y.max(b.y));
                if p.y < ylo - cl.max(0.0) || p.y > yhi + cl.max(0.0) {
                    continue;
                }
                if check
                    && p.x >= a.x.min(b.x) - cl
                    && p.x <= a.x.max(b.x) + cl
                    && distance_to(s, p) <= cl
                {
                    return None;
                }
                w += line_ray_crossings(*a, *b, p);
            }
            Segment::Arc(arc) => {
                let (c, r) = (arc.center, arc.radius);
                let reach = r + cl.max(0.0);
                // Far from the circle: neither near the arc nor able to cross the ray.
                if p.y < c.y - reach || p.y > c.y + reach || p.x > c.x + reach {
                    continue;
                }
                let d = p - c;
                let (d2, r2) = (d.dot(d), r * r);
                if check
                    && d2 <= reach * reach
                    && d2 >= (r - cl).max(0.0).powi(2)
                    && distance_to(s, p) <= cl
                {
                    return None;
                }
                // Neither the arc nor its chord (inside its circle) can reach the ray from
                // a point above, below or right of the circle.
                if p.y < c.y - r || p.y > c.y + r || p.x > c.x + r {
                    continue;
                }
                let turn = arc.sweep.signum() as i32;
                // Within rounding of the circle or of the chord's line the two ways of
                // counting could decide differently: there the arc itself is followed.
                let near = 1e-12 * (d2 + r2);
                if d2 > r2 + near {
                    // Outside the circle the arc crosses the ray as its chord does.
                    w += line_ray_crossings(arc.start, arc.end, p);
                    continue;
                }
                if d2 < r2 - near {
                    if arc.is_full_circle() {
                        w += turn;
                        continue;
                    }
                    // A counter-clockwise arc lies on the right of its chord.
                    let chord = arc.end - arc.start;
                    let side = arc.sweep.signum() * chord.cross(p - arc.start);
                    let scale = p.x.abs() + p.y.abs() + arc.radius;
                    if side.abs() > 1e-12 * chord.norm() * scale {
                        w += line_ray_crossings(arc.start, arc.end, p)
                            + if side < 0.0 { turn } else { 0 };
                        continue;
                    }
                }
                w += arc_ray_crossings(arc, p);
            }
        }
    }
    Some(w)
}

/// A closed run's segments filed by horizontal slabs, for many winding numbers around points
/// of other loops (a plate with thousands of holes in a finely divided outline).
///
/// A point looks only at the segments whose loose box, grown by `clearance`, reaches its
/// height: no other segment can cross the ray from it or come within `clearance` of it (an
/// arc's chord and circular segment lie inside its loose box). As many slabs as segments;
/// a segment reaching across more than `SlabIndex::MAX_SPAN` (16) slabs is kept apart and
/// looked at for every point, so that the index stays linear in size.
pub struct SlabIndex<'a> {
    segments: &'a [Segment],
    clearance: f64,
    y0: f64,
    inv: f64,
    /// Segments of slab k: `items[start[k]..start[k + 1]]`.
    start: Vec<u32>,
    items: Vec<u32>,
    tall: Vec<u32>,
}

impl<'a> SlabIndex<'a> {
    const MAX_SPAN: usize = 16;

    /// Index `segments` for points to be tested with a clearance of at most `clearance`.
    pub fn new(segments: &'a [Segment], clearance: f64) -> SlabIndex<'a> {
        let cl = clearance.max(0.0);
        let ranges = height_ranges(segments, cl);
        let (lo, hi) = ranges
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), r| {
                (l.min(r.0), h.max(r.1))
            });
        let n = segments.len().max(1);
        let inv = n as f64 / (hi - lo);
        let inv = if inv.is_finite() { inv } else { 0.0 };
        let mut index = SlabIndex {
            segments,
            clearance: cl,
            y0: lo,
            inv,
            start: vec![0; n + 1],
            items: Vec::new(),
            tall: Vec::new(),
        };
        let spans: Vec<(usize, usize)> = ranges
            .iter()
            .map(|&(a, b)| (index.slab(a), index.slab(b)))
            .collect();
        for (i, &(k0, k1)) in spans.iter().enumerate() {
            if k1 - k0 >= Self::MAX_SPAN {
                index.tall.push(i as u32);
            } else {
                for count in &mut index.start[k0 + 1..=k1 + 1] {
                    *count += 1;
                }
            }
        }
        for k in 0..n {
            index.start[k + 1] += index.start[k];
        }
        let mut fill = index.start.clone();
        index.items = vec![0; index.start[n] as usize];
        for (i, &(k0, k1)) in spans.iter().enumerate() {
            if k1 - k0 < Self::MAX_SPAN {
                for slot in &mut fill[k0..=k1] {
                    index.items[*slot as usize] = i as u32;
                    *slot += 1;
                }
            }
        }
        index
    }

    /// The slab of height y, clamped into the index (a cast to i64 is one instruction).
    fn slab(&self, y: f64) -> usize {
        let last = self.start.len() as i64 - 2;
        (((y - self.y0) * self.inv) as i64).clamp(0, last) as usize
    }

    /// [`winding_number`] of the run around `p`.
    pub fn winding_number(&self, p: Point) -> i32 {
        winding(self.near(p), p, None).unwrap_or(0)
    }

    /// [`winding_number_clear_of`] for a clearance of at most the index's.
    pub fn winding_number_clear_of(&self, p: Point, clearance: f64) -> Option<i32> {
        debug_assert!(clearance <= self.clearance);
        winding(self.near(p), p, Some(clearance))
    }

    /// The segments that can matter at `p`.
    fn near(&self, p: Point) -> impl Iterator<Item = &'a Segment> + '_ {
        let k = self.slab(p.y);
        let slab = &self.items[self.start[k] as usize..self.start[k + 1] as usize];
        slab.iter()
            .chain(self.tall.iter())
            .map(|&i| &self.segments[i as usize])
    }
}

/// The lowest and highest y of each segment's loose box, grown by `grow` each way.
fn height_ranges(segments: &[Segment], grow: f64) -> Vec<(f64, f64)> {
    segments
        .iter()
        .map(|s| {
            let b = s.loose_bbox();
            (b.min.y - grow, b.max.y + grow)
        })
        .collect()
}

/// A closed run's segments with the height range of each one's loose box beside them, for a
/// few winding numbers around points of other loops (an outline with a dozen holes).
///
/// [`winding`] decides for each segment what kind it is before it looks at its height, and
/// on an outline of lines and arcs mixed at random that first step is a guess the processor
/// gets wrong about half the time, for every segment and every point. Here the heights come
/// first, from one array read in order: a segment is looked at only when its range, grown by
/// the clearance, reaches the point's height, which on an outline is a handful. No other
/// segment can cross the ray from the point or come within the clearance of it (an arc's
/// chord and circular segment lie inside its loose box, as for [`SlabIndex`]), so the
/// winding number and the clearance found are those of the full scan.
pub struct Heights<'a> {
    segments: &'a [Segment],
    /// Each segment's loose box ([`Segment::loose_bbox`]), of which its height range is read.
    boxes: Cow<'a, [BBox]>,
}

impl<'a> Heights<'a> {
    pub fn new(segments: &'a [Segment]) -> Heights<'a> {
        Heights {
            segments,
            boxes: Cow::Owned(segments.iter().map(Segment::loose_bbox).collect()),
        }
    }

    /// With the segments' loose boxes worked out already (by the crossing check, which
    /// needs them too), in the segments' order.
    pub fn with_boxes(segments: &'a [Segment], boxes: &'a [BBox]) -> Heights<'a> {
        debug_assert_eq!(segments.len(), boxes.len());
        Heights {
            segments,
            boxes: Cow::Borrowed(boxes),
        }
    }

    /// [`winding_number`] of the run around `p`.
    pub fn winding_number(&self, p: Point) -> i32 {
        winding(self.near(p.y, 0.0), p, None).unwrap_or(0)
    }

    /// [`winding_number_clear_of`].
    pub fn winding_number_clear_of(&self, p: Point, clearance: f64) -> Option<i32> {
        winding(self.near(p.y, clearance.max(0.0)), p, Some(clearance))
    }

    /// The segments whose range, grown by `reach`, holds height `y`. The test is written so
    /// that a NaN height keeps every segment, as [`winding`] itself would look at them.
    fn near(&self, y: f64, reach: f64) -> impl Iterator<Item = &'a Segment> + '_ {
        self.segments
            .iter()
            .zip(self.boxes.iter())
            // `|` rather than `||`: one well-predicted branch ("far") instead of two.
            .filter(move |(_, b)| !((y < b.min.y - reach) | (y > b.max.y + reach)))
            .map(|(s, _)| s)
    }
}

/// The point of the line a → b nearest `p` (the foot of the perpendicular, clamped to the
/// ends).
fn nearest_on_line(a: Point, b: Point, p: Point) -> Point {
    let d = b - a;
    let len2 = d.dot(d);
    let t = if len2 > 0.0 {
        ((p - a).dot(d) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    a + d * t
}

/// The point of the segment nearest `p` (for a curve piece, of its chord).
pub fn closest_point(s: &Segment, p: Point) -> Point {
    match s {
        Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
            nearest_on_line(*a, *b, p)
        }
        Segment::Arc(arc) => {
            let end = if p.dist(arc.start) <= p.dist(arc.end) {
                arc.start
            } else {
                arc.end
            };
            let v = p - arc.center;
            let n = v.norm();
            if n > 0.0 {
                let w = arc.center + v * (arc.radius / n);
                if arc.holds_circle_point(w) && w.dist(p) < end.dist(p) {
                    return w;
                }
            }
            end
        }
    }
}

/// Distance from `p` to the segment.
pub fn distance_to(s: &Segment, p: Point) -> f64 {
    match s {
        Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
            p.dist(nearest_on_line(*a, *b, p))
        }
        Segment::Arc(arc) => {
            // The nearest point of the circle if it lies on the arc, else the nearer end.
            let v = p - arc.center;
            let len = v.norm();
            let ends = p.dist(arc.start).min(p.dist(arc.end));
            if len > 0.0 && arc.holds_circle_point(arc.center + v * (arc.radius / len)) {
                (len - arc.radius).abs().min(ends)
            } else {
                ends
            }
        }
    }
}

/// Signed crossings of the ray from `p` towards +x by the line a → b (half-open rule).
fn line_ray_crossings(a: Point, b: Point, p: Point) -> i32 {
    if (a.y <= p.y) != (b.y <= p.y) {
        let t = (p.y - a.y) / (b.y - a.y);
        let x = a.x + t * (b.x - a.x);
        if x > p.x {
            return if b.y > a.y { 1 } else { -1 };
        }
    }
    0
}

/// Signed crossings of the ray from `p` towards +x by the arc itself: the arc is split at its
/// top and bottom points into y-monotone pieces, each counted with the half-open rule.
fn arc_ray_crossings(arc: &Arc, p: Point) -> i32 {
    let r = arc.radius;
    // Only an arc that spans the ray's height and reaches right of `p` can cross.
    if p.y < arc.center.y - r || p.y > arc.center.y + r || p.x > arc.center.x + r {
        return 0;
    }
    let mut w = 0;
    // Split at the angles π/2 and 3π/2 inside the sweep; each piece is y-monotone.
    let mut cuts = [0.0f64; 6];
    let mut n_cuts = 1;
    let sweep = arc.sweep;
    let start_angle = arc.start_angle();
    for k in [PI / 2.0, 3.0 * PI / 2.0] {
        let mut rel = wrap_tau((k - start_angle) * sweep.signum());
        while rel < sweep.abs() && n_cuts < 5 {
            if rel > 0.0 {
                cuts[n_cuts] = rel / sweep.abs();
                n_cuts += 1;
            }
            rel += TAU;
        }
    }
    cuts[n_cuts] = 1.0;
    n_cuts += 1;
    let cuts = &mut cuts[..n_cuts];
    cuts.sort_by(f64::total_cmp);
    for win in cuts.windows(2) {
        let (ta, tb) = (win[0], win[1]);
        let a = if ta == 0.0 {
            arc.start
        } else {
            arc.point_at(ta)
        };
        let b = if tb == 1.0 { arc.end } else { arc.point_at(tb) };
        if (a.y <= p.y) != (b.y <= p.y) {
            // The crossing point on the circle, on this monotone piece.
            let dy = p.y - arc.center.y;
            let dx = (r * r - dy * dy).max(0.0).sqrt();
            let mid = arc.point_at((ta + tb) / 2.0);
            let x = if mid.x >= arc.center.x {
                arc.center.x + dx
            } else {
                arc.center.x - dx
            };
            if x > p.x {
                w += if b.y > a.y { 1 } else { -1 };
            }
        }
    }
    w
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_rng::uniform;

    /// The winding number following every arc itself (the reference).
    fn winding_by_arcs(segments: &[Segment], p: Point) -> i32 {
        segments
            .iter()
            .map(|s| match s {
                Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
                    line_ray_crossings(*a, *b, p)
                }
                Segment::Arc(arc) => arc_ray_crossings(arc, p),
            })
            .sum()
    }

    /// Counting arcs by their chords and circular segments gives the winding number that
    /// following the arcs gives: random loops (crossing themselves or not, bulges of either
    /// sign up to nearly full circles, full circles) and points anywhere, inside the arcs'
    /// circles, and on their chords.
    #[test]
    fn chords_and_segments_count_as_the_arcs_do() {
        let mut r = uniform(31);
        let mut nonzero = 0;
        for case in 0..3000 {
            let n = 2 + (r() * 10.0) as usize;
            let pts: Vec<Point> = (0..n).map(|_| Point::new(10.0 * r(), 10.0 * r())).collect();
            let segments: Vec<Segment> = if case % 10 == 0 {
                let c = Point::new(10.0 * r(), 10.0 * r());
                let sweep = if r() < 0.5 { TAU } else { -TAU };
                vec![Segment::Arc(Arc::from_center(
                    c,
                    0.5 + 4.0 * r(),
                    0.0,
                    sweep,
                ))]
            } else {
                (0..n)
                    .map(|k| {
                        let (a, b) = (pts[k], pts[(k + 1) % n]);
                        let bulge = if r() < 0.3 { 0.0 } else { 6.0 * r() - 3.0 };
                        match Arc::from_bulge(a, b, bulge) {
                            Some(arc) => Segment::Arc(arc),
                            None => Segment::line(a, b),
                        }
                    })
                    .collect()
            };
            let index = SlabIndex::new(&segments, 0.05);
            let heights = Heights::new(&segments);
            for _ in 0..20 {
                let p = match (r() * 3.0) as usize {
                    0 => Point::new(14.0 * r() - 2.0, 14.0 * r() - 2.0),
                    // Inside an arc's circle.
                    1 => match &segments[(r() * segments.len() as f64) as usize] {
                        Segment::Arc(arc) => {
                            arc.center + Point::polar(TAU * r()) * (arc.radius * r())
                        }
                        Segment::Line { a, .. } | Segment::Curve(CurvePiece { a, .. }) => {
                            *a + Point::new(0.3, 0.1)
                        }
                    },
                    // On an arc's chord.
                    _ => {
                        let s = &segments[(r() * segments.len() as f64) as usize];
                        let t = r();
                        s.start() + (s.end() - s.start()) * t
                    }
                };
                let on_curve = segments.iter().any(|s| match s {
                    Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
                        let d = *b - *a;
                        (p - *a).cross(d).abs() <= 1e-9 * d.norm()
                            && (p - *a).dot(d) >= 0.0
                            && (p - *b).dot(d) <= 0.0
                    }
                    Segment::Arc(arc) => (p.dist(arc.center) - arc.radius).abs() <= 1e-9,
                });
                if on_curve {
                    continue;
                }
                // With a clearance: `None` exactly when the point is that near the run.
                let cl = 0.05;
                let nearest = segments
                    .iter()
                    .map(|s| distance_to(s, p))
                    .fold(f64::INFINITY, f64::min);
                let clear = winding_number_clear_of(&segments, p, cl);
                assert_eq!(clear.is_none(), nearest <= cl, "case {case} at {p:?}");
                let w = winding_number(&segments, p);
                if let Some(wc) = clear {
                    assert_eq!(wc, w);
                }
                // The slab index gives the same answers.
                assert_eq!(index.winding_number(p), w, "case {case} at {p:?}");
                assert_eq!(
                    index.winding_number_clear_of(p, cl),
                    clear,
                    "case {case} at {p:?}"
                );
                // So does the scan that looks at heights first.
                assert_eq!(heights.winding_number(p), w, "case {case} at {p:?}");
                assert_eq!(
                    heights.winding_number_clear_of(p, cl),
                    clear,
                    "case {case} at {p:?}"
                );
                assert_eq!(
                    w,
                    winding_by_arcs(&segments, p),
                    "case {case} at {p:?}: {segments:?}"
                );
                nonzero += usize::from(w != 0);
            }
        }
        assert!(nonzero > 5000, "{nonzero}");
    }

    #[test]
    fn distances_to_lines_and_arcs() {
        let line = Segment::line(Point::new(0.0, 0.0), Point::new(10.0, 0.0));
        assert_eq!(distance_to(&line, Point::new(5.0, 3.0)), 3.0);
        // Past the end: to the end point, a 3-4-5 triangle.
        assert_eq!(distance_to(&line, Point::new(-4.0, 3.0)), 5.0);
        // A quarter circle of radius 10 from (10, 0) to (0, 10), counter-clockwise.
        let arc = Segment::Arc(Arc::from_center(Point::new(0.0, 0.0), 10.0, 0.0, PI / 2.0));
        let d = |x: f64, y: f64| distance_to(&arc, Point::new(x, y));
        assert!((d(6.0, 8.0) - 0.0).abs() < 1e-12); // on the arc (6-8-10)
        assert!((d(3.0, 4.0) - 5.0).abs() < 1e-12); // inside, towards the arc
        assert!((d(12.0, 16.0) - 10.0).abs() < 1e-12); // outside, radially
                                                       // Beside the arc's sweep: to the nearer end, (10, 0) from (10, -5).
        assert!((d(10.0, -5.0) - 5.0).abs() < 1e-12);
    }

    /// A comb: 60 teeth of long vertical edges (each reaching across most slabs, so kept
    /// apart) and short horizontal ones, with a bulged back; the index and the scan by heights
    /// answer as a full scan.
    #[test]
    fn slab_index_and_heights_answer_as_a_full_scan_on_a_comb() {
        let mut pts = vec![Point::new(0.0, 0.0)];
        for k in 0..60 {
            let x = k as f64 * 2.0;
            pts.push(Point::new(x + 0.5, 0.0));
            pts.push(Point::new(x + 0.5, 50.0));
            pts.push(Point::new(x + 1.5, 50.0));
            pts.push(Point::new(x + 1.5, 0.0));
        }
        pts.push(Point::new(121.0, 0.0));
        pts.push(Point::new(121.0, -10.0));
        pts.push(Point::new(0.0, -10.0));
        let n = pts.len();
        let segments: Vec<Segment> = (0..n)
            .map(|k| {
                match Arc::from_bulge(pts[k], pts[(k + 1) % n], if k == n - 2 { 0.3 } else { 0.0 })
                {
                    Some(arc) => Segment::Arc(arc),
                    None => Segment::line(pts[k], pts[(k + 1) % n]),
                }
            })
            .collect();
        let index = SlabIndex::new(&segments, 0.01);
        assert!(!index.tall.is_empty());
        let heights = Heights::new(&segments);
        let mut r = uniform(41);
        let mut inside = 0;
        for _ in 0..5000 {
            let p = Point::new(130.0 * r() - 5.0, 75.0 * r() - 20.0);
            let w = winding_number(&segments, p);
            assert_eq!(index.winding_number(p), w, "{p:?}");
            assert_eq!(
                index.winding_number_clear_of(p, 0.01),
                winding_number_clear_of(&segments, p, 0.01),
                "{p:?}"
            );
            assert_eq!(heights.winding_number(p), w, "{p:?}");
            assert_eq!(
                heights.winding_number_clear_of(p, 0.01),
                winding_number_clear_of(&segments, p, 0.01),
                "{p:?}"
            );
            inside += usize::from(w != 0);
        }
        assert!(inside > 1000, "{inside}");
        // A point with no place at all: every segment looked at, as the full scan does.
        let nowhere = Point::new(f64::NAN, f64::NAN);
        assert_eq!(
            heights.winding_number(nowhere),
            winding_number(&segments, nowhere)
        );
    }
}
