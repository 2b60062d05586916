//! Exact boundary pieces: straight lines, circular arcs, and the chords of other curves.
//!
//! Lines and circular arcs are kept exactly. Other curves (ellipses, splines) enter the
//! pipeline as [`CurvePiece`]s: chords between points of the curve, close to it within a
//! flattening tolerance, which chaining, crossing and nesting treat as straight lines. Each
//! piece names a [`CurveSpan`] in the drawing's span table that holds the exact integrals of
//! the curve between the chord's ends, so that the measured properties stay exact.

use super::moments::Moments;

use std::f64::consts::{PI, TAU};
use std::ops::{Add, Mul, Neg, Sub};

/// A point or vector in the drawing plane (y up).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Point {
    pub x: f64,
    pub y: f64,
}

impl Point {
    pub const fn new(x: f64, y: f64) -> Self {
        Point { x, y }
    }
    pub fn dot(self, o: Point) -> f64 {
        self.x * o.x + self.y * o.y
    }
    /// z component of the cross product `self × o`.
    pub fn cross(self, o: Point) -> f64 {
        self.x * o.y - self.y * o.x
    }
    /// Length of the vector. Plain √(x² + y²): drawing coordinates are far from overflow,
    /// and `hypot`'s guard costs several times more in the hot paths.
    pub fn norm(self) -> f64 {
        (self.x * self.x + self.y * self.y).sqrt()
    }
    pub fn dist(self, o: Point) -> f64 {
        (self - o).norm()
    }
    pub fn is_finite(self) -> bool {
        self.x.is_finite() && self.y.is_finite()
    }
    /// The point on the unit circle at `angle` radians.
    pub fn polar(angle: f64) -> Point {
        let (s, c) = angle.sin_cos();
        Point::new(c, s)
    }
}

impl Add for Point {
    type Output = Point;
    fn add(self, o: Point) -> Point {
        Point::new(self.x + o.x, self.y + o.y)
    }
}
impl Sub for Point {
    type Output = Point;
    fn sub(self, o: Point) -> Point {
        Point::new(self.x - o.x, self.y - o.y)
    }
}
impl Mul<f64> for Point {
    type Output = Point;
    fn mul(self, s: f64) -> Point {
        Point::new(self.x * s, self.y * s)
    }
}
impl Neg for Point {
    type Output = Point;
    fn neg(self) -> Point {
        Point::new(-self.x, -self.y)
    }
}

/// ⌊v⌋ as an integer by a cast and a correction (`f64::floor` is a library call on the
/// baseline x86-64 target).
pub(crate) fn floor_i64(v: f64) -> i64 {
    let t = v as i64;
    t.wrapping_sub(i64::from((t as f64) > v))
}

/// `v` turned counter-clockwise by `angle` radians.
pub fn rotated(v: Point, angle: f64) -> Point {
    let (s, c) = angle.sin_cos();
    Point::new(v.x * c - v.y * s, v.x * s + v.y * c)
}

/// `x` reduced to [0, 2π). Angles here are within a few turns of zero, where adding or
/// subtracting whole turns is exact enough and much cheaper than `rem_euclid` (a call to
/// `fmod`); anything larger falls back to it.
pub fn wrap_tau(x: f64) -> f64 {
    if (-2.0 * TAU..2.0 * TAU).contains(&x) {
        let mut v = x;
        while v < 0.0 {
            v += TAU;
        }
        while v >= TAU {
            v -= TAU;
        }
        v
    } else {
        x.rem_euclid(TAU)
    }
}

/// The smaller of `a` and `b`, and `a` when `b` is NaN: `f64::min` for an `a` that is not
/// NaN, in one instruction (`minsd`) instead of four.
#[inline]
fn plain_min(a: f64, b: f64) -> f64 {
    if b < a {
        b
    } else {
        a
    }
}

/// The larger of `a` and `b`, and `a` when `b` is NaN (see [`plain_min`]).
#[inline]
fn plain_max(a: f64, b: f64) -> f64 {
    if b > a {
        b
    } else {
        a
    }
}

/// Axis-aligned bounding box.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BBox {
    pub min: Point,
    pub max: Point,
}

impl BBox {
    /// The empty box: adding any point makes it that point.
    pub const EMPTY: BBox = BBox {
        min: Point::new(f64::INFINITY, f64::INFINITY),
        max: Point::new(f64::NEG_INFINITY, f64::NEG_INFINITY),
    };
    pub fn add_point(&mut self, p: Point) {
        self.min.x = self.min.x.min(p.x);
        self.min.y = self.min.y.min(p.y);
        self.max.x = self.max.x.max(p.x);
        self.max.y = self.max.y.max(p.y);
    }
    pub fn union(mut self, o: &BBox) -> BBox {
        self.add_point(o.min);
        self.add_point(o.max);
        self
    }
    /// [`BBox::union`] for a box that holds no NaN, such as one grown from [`BBox::EMPTY`] by
    /// this method only (for the folds over a loop's many segments). Plain comparisons, one
    /// instruction each, where `f64::min` and `f64::max` take four for their NaN rule. A
    /// comparison with NaN is false, so a NaN in `o` is passed over just as `union` passes
    /// it over (each of `o`'s corners counts for both ends, as there); a NaN in `self` would
    /// stay where `union` drops it, which is why `union` keeps `f64::min`.
    ///
    /// A box grown from [`BBox::EMPTY`] by `union` and `add_point` holds no NaN either
    /// (`f64::min` keeps the number of a number and NaN), so `grow` gives what `union` gives
    /// for it too; only a box built with NaN in it (the loose box of an arc with a NaN
    /// radius) differs.
    #[inline]
    pub fn grow(self, o: &BBox) -> BBox {
        self.grow_point(o.min).grow_point(o.max)
    }
    /// [`BBox::add_point`] for a box that holds no NaN, as [`BBox::grow`] is `union`.
    #[inline]
    pub fn grow_point(self, p: Point) -> BBox {
        BBox {
            min: Point::new(plain_min(self.min.x, p.x), plain_min(self.min.y, p.y)),
            max: Point::new(plain_max(self.max.x, p.x), plain_max(self.max.y, p.y)),
        }
    }
    pub fn is_empty(&self) -> bool {
        !(self.min.x <= self.max.x && self.min.y <= self.max.y)
    }
    pub fn width(&self) -> f64 {
        self.max.x - self.min.x
    }
    pub fn height(&self) -> f64 {
        self.max.y - self.min.y
    }
    pub fn diagonal(&self) -> f64 {
        if self.is_empty() {
            0.0
        } else {
            self.width().hypot(self.height())
        }
    }
    pub fn center(&self) -> Point {
        (self.min + self.max) * 0.5
    }
    /// Whether the two boxes overlap, each grown by `margin`.
    pub fn overlaps(&self, o: &BBox, margin: f64) -> bool {
        self.min.x <= o.max.x + margin
            && o.min.x <= self.max.x + margin
            && self.min.y <= o.max.y + margin
            && o.min.y <= self.max.y + margin
    }
    /// Whether `o` lies inside `self` grown by `margin`.
    pub fn contains_box(&self, o: &BBox, margin: f64) -> bool {
        self.min.x - margin <= o.min.x
            && self.min.y - margin <= o.min.y
            && o.max.x <= self.max.x + margin
            && o.max.y <= self.max.y + margin
    }
}

/// A circular arc, kept exactly.
///
/// `start` and `end` are stored explicitly (for polyline bulges they are the drawing's own
/// vertices, so chaining compares exact file values); `center`, `radius` and the signed
/// `sweep` (radians, counter-clockwise positive, `0 < |sweep| <= 2π`) describe the curve.
/// A full circle has `start == end` and `|sweep| == 2π`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Arc {
    pub center: Point,
    pub radius: f64,
    pub start: Point,
    pub end: Point,
    pub sweep: f64,
}

impl Arc {
    /// Arc from centre, radius, start angle and signed sweep (radians).
    pub fn from_center(center: Point, radius: f64, start_angle: f64, sweep: f64) -> Arc {
        let start = center + Point::polar(start_angle) * radius;
        let end = if sweep.abs() >= TAU {
            start
        } else {
            center + Point::polar(start_angle + sweep) * radius
        };
        Arc {
            center,
            radius,
            start,
            end,
            sweep: sweep.clamp(-TAU, TAU),
        }
    }

    /// Bulges smaller than this (in size) give straight edges. Such an arc's centre lies
    /// c / (4·b) away (c the chord), so any arithmetic through its centre carries rounding of
    /// about ε·c/(4·b) in position, while the region between chord and arc has area
    /// (2/3)·c·(c·b/2) = b·c²/3: below b ≈ √ε ≈ 1.5e-8 the chord is the more accurate edge.
    /// At 1e-8 the area left out is under 3.4e-9·c² (a polyline edge of 100 mm: 3.4e-5 mm²).
    pub const STRAIGHT_BULGE: f64 = 1e-8;

    /// A full circle, counter-clockwise, starting at angle 0.
    pub fn circle(center: Point, radius: f64) -> Arc {
        Arc::from_center(center, radius, 0.0, TAU)
    }

    /// Arc between two points given a polyline bulge (tan of a quarter of the included angle,
    /// positive counter-clockwise; DXF reference, LWPOLYLINE group 42). `None` for coincident
    /// points (an empty edge) and for a bulge under [`Arc::STRAIGHT_BULGE`] in size, which is a
    /// straight edge.
    pub fn from_bulge(start: Point, end: Point, bulge: f64) -> Option<Arc> {
        let chord = end - start;
        let c = chord.norm();
        if bulge.abs() < Self::STRAIGHT_BULGE || !bulge.is_finite() || c == 0.0 {
            return None;
        }
        // Included angle θ = 4·atan(b); radius r = c / (2·sin(θ/2)); the centre lies on the
        // chord's perpendicular bisector at distance r·cos(θ/2) (common practice).
        // With b = tan(θ/4): sin(θ/2) = 2b/(1+b²) and cos(θ/2) = (1−b²)/(1+b²).
        let sweep = 4.0 * bulge.atan();
        let one_b2 = 1.0 + bulge * bulge;
        let sin_half = 2.0 * bulge / one_b2;
        let cos_half = (1.0 - bulge * bulge) / one_b2;
        let radius = c / (2.0 * sin_half.abs());
        // Offset from chord midpoint to centre, to the left of the chord for a positive bulge.
        let left = Point::new(-chord.y, chord.x) * (1.0 / c);
        let offset = radius * cos_half * sweep.signum();
        let center = (start + end) * 0.5 + left * offset;
        Some(Arc {
            center,
            radius,
            start,
            end,
            sweep,
        })
    }

    pub fn is_full_circle(&self) -> bool {
        self.sweep.abs() >= TAU
    }

    pub fn length(&self) -> f64 {
        self.radius * self.sweep.abs()
    }

    /// Angle of `start` seen from `center`, radians (computed: most arcs never need it).
    pub fn start_angle(&self) -> f64 {
        let d = self.start - self.center;
        d.y.atan2(d.x)
    }

    /// Point at fraction `t` in [0, 1] of the sweep: `start` turned about `center` by
    /// `t·sweep`.
    pub fn point_at(&self, t: f64) -> Point {
        self.center + rotated(self.start - self.center, self.sweep * t)
    }

    /// Whether the direction `angle` (radians) lies within the sweep.
    pub fn contains_angle(&self, angle: f64) -> bool {
        if self.is_full_circle() {
            return true;
        }
        let rel = (angle - self.start_angle()) * self.sweep.signum();
        wrap_tau(rel) <= self.sweep.abs()
    }

    /// Whether `w`, a point of the arc's circle, lies on the arc: the circle's points on the
    /// arc are those on the right of the chord start → end for a counter-clockwise arc (on
    /// the left for a clockwise one), whatever the sweep; no angles needed. For an arc
    /// whose ends nearly meet the chord gives no direction, and the angle decides.
    pub fn holds_circle_point(&self, w: Point) -> bool {
        if self.is_full_circle() {
            return true;
        }
        let chord = self.end - self.start;
        if chord.dot(chord) < 1e-12 * self.radius * self.radius {
            let d = w - self.center;
            return self.contains_angle(d.y.atan2(d.x));
        }
        self.sweep.signum() * chord.cross(w - self.start) <= 0.0
    }

    pub fn reversed(&self) -> Arc {
        Arc {
            center: self.center,
            radius: self.radius,
            start: self.end,
            end: self.start,
            sweep: -self.sweep,
        }
    }

    /// A box that surely holds the arc, cheaply (no angles, no square root).
    ///
    /// An arc of at most a half turn stays within its sagitta h = (c/2)·tan(|sweep|/4) of its
    /// chord (c the chord's length; every point of it projects onto the chord and lies at
    /// most h from it), so within the chord's box grown by h. Since tan is convex,
    /// tan(x) ≤ 4x/π on [0, π/4], and c ≤ |dx| + |dy|: h ≤ (|dx| + |dy|)·|sweep|/(2π). A
    /// longer arc lies within its own circle.
    pub fn loose_bbox(&self) -> BBox {
        if self.sweep.abs() <= PI {
            let d = self.end - self.start;
            let h = (d.x.abs() + d.y.abs()) * self.sweep.abs() * (0.5 / PI);
            BBox {
                min: Point::new(
                    self.start.x.min(self.end.x) - h,
                    self.start.y.min(self.end.y) - h,
                ),
                max: Point::new(
                    self.start.x.max(self.end.x) + h,
                    self.start.y.max(self.end.y) + h,
                ),
            }
        } else {
            let (c, r) = (self.center, self.radius);
            BBox {
                min: Point::new(c.x - r, c.y - r),
                max: Point::new(c.x + r, c.y + r),
            }
        }
    }

    /// The exact box: the ends, and each of the circle's four extreme points that lies on
    /// the arc ([`Arc::holds_circle_point`], its chord-side test written out once for all
    /// four: with k = chord × (centre − start), the point centre + d is on the arc when
    /// sign(sweep)·(k + chord × d) ≤ 0).
    pub fn bbox(&self) -> BBox {
        // Grown from the empty box, so plain comparisons give what `add_point` gives.
        let mut b = BBox::EMPTY.grow_point(self.start).grow_point(self.end);
        let (c, r) = (self.center, self.radius);
        let chord = self.end - self.start;
        if self.is_full_circle() || chord.dot(chord) < 1e-12 * r * r {
            for d in [(r, 0.0), (0.0, r), (-r, 0.0), (0.0, -r)] {
                let w = c + Point::new(d.0, d.1);
                if self.holds_circle_point(w) {
                    b.add_point(w);
                }
            }
            return b;
        }
        let s = self.sweep.signum();
        let k = chord.cross(c - self.start);
        if s * (k - chord.y * r) <= 0.0 {
            b.max.x = plain_max(b.max.x, c.x + r); // d = (r, 0)
        }
        if s * (k + chord.x * r) <= 0.0 {
            b.max.y = plain_max(b.max.y, c.y + r); // d = (0, r)
        }
        if s * (k + chord.y * r) <= 0.0 {
            b.min.x = plain_min(b.min.x, c.x - r); // d = (−r, 0)
        }
        if s * (k - chord.x * r) <= 0.0 {
            b.min.y = plain_min(b.min.y, c.y - r); // d = (0, −r)
        }
        b
    }
}

/// The chord a→b of a piece of a curve (an ellipse or a spline).
///
/// Predicates (chaining, crossings, containment) take it as the straight line a→b; the curve
/// lies within the flattening tolerance of it. `mid` is the curve's own point halfway along
/// the piece (by parameter), which tells two curves through the same two points apart.
/// `span` indexes the drawing's [`CurveSpan`] table; `reversed` says that the piece runs
/// against the direction in which the span's integrals were taken.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurvePiece {
    pub a: Point,
    pub b: Point,
    pub mid: Point,
    pub span: u32,
    pub reversed: bool,
}

/// Exact data of one piece of a curve, for the [`CurvePiece`]s that name it.
///
/// `correction` is the Green's-theorem contribution of the curve from the chord's start to
/// its end minus that of the chord, taken about `at` (a point near the piece, for precision);
/// a loop's integrals are its segments' contributions plus the corrections of its curve
/// pieces (negated for reversed pieces). `length` is the curve's length and `bbox` its exact
/// box over the piece. `curve` indexes the drawing's curves
/// ([`CurveTable::curves`](super::curve_pieces::CurveTable)) and the piece is that curve
/// from parameter `ta` to `tb` (a piece with `reversed` runs from `tb` to `ta`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurveSpan {
    pub at: Point,
    pub correction: Moments,
    pub length: f64,
    pub bbox: BBox,
    pub curve: u32,
    pub ta: f64,
    pub tb: f64,
}

impl CurveSpan {
    /// The same span with every coordinate multiplied by `s > 0` (a change of units).
    pub fn scaled(&self, s: f64) -> CurveSpan {
        let c = &self.correction;
        let (s2, s3, s4) = (s * s, s * s * s, s * s * s * s);
        CurveSpan {
            at: self.at * s,
            correction: Moments {
                a: c.a * s2,
                sx: c.sx * s3,
                sy: c.sy * s3,
                sxx: c.sxx * s4,
                syy: c.syy * s4,
                sxy: c.sxy * s4,
            },
            length: self.length * s,
            bbox: BBox {
                min: self.bbox.min * s,
                max: self.bbox.max * s,
            },
            ..*self
        }
    }
}

/// One piece of boundary: exact lines and circular arcs, and chords of other curves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Segment {
    Line { a: Point, b: Point },
    Arc(Arc),
    Curve(CurvePiece),
}

impl Segment {
    pub fn line(a: Point, b: Point) -> Segment {
        Segment::Line { a, b }
    }
    pub fn start(&self) -> Point {
        match self {
            Segment::Line { a, .. } | Segment::Curve(CurvePiece { a, .. }) => *a,
            Segment::Arc(arc) => arc.start,
        }
    }
    pub fn end(&self) -> Point {
        match self {
            Segment::Line { b, .. } | Segment::Curve(CurvePiece { b, .. }) => *b,
            Segment::Arc(arc) => arc.end,
        }
    }
    /// The length; for a curve piece, that of its chord (the curve's own length is in its
    /// [`CurveSpan`]).
    pub fn length(&self) -> f64 {
        match self {
            Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => a.dist(*b),
            Segment::Arc(arc) => arc.length(),
        }
    }
    pub fn reversed(&self) -> Segment {
        match self {
            Segment::Line { a, b } => Segment::Line { a: *b, b: *a },
            Segment::Arc(arc) => Segment::Arc(arc.reversed()),
            Segment::Curve(c) => Segment::Curve(CurvePiece {
                a: c.b,
                b: c.a,
                reversed: !c.reversed,
                ..*c
            }),
        }
    }
    /// The box of the segment; for a curve piece, that of its chord (the curve's own box is
    /// in its [`CurveSpan`]).
    pub fn bbox(&self) -> BBox {
        match self {
            Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
                BBox::EMPTY.grow_point(*a).grow_point(*b)
            }
            Segment::Arc(arc) => arc.bbox(),
        }
    }
    /// A box that surely holds the segment: exact for lines, cheap and a little larger for
    /// arcs (see [`Arc::loose_bbox`]). For searches, not for reported extents.
    pub fn loose_bbox(&self) -> BBox {
        match self {
            Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => BBox {
                min: Point::new(a.x.min(b.x), a.y.min(b.y)),
                max: Point::new(a.x.max(b.x), a.y.max(b.y)),
            },
            Segment::Arc(arc) => arc.loose_bbox(),
        }
    }
    /// The segment as predicates see it: a curve piece becomes the straight line of its
    /// chord; lines and arcs stay as they are.
    #[inline]
    pub fn straight(&self) -> Segment {
        match self {
            Segment::Curve(c) => Segment::Line { a: c.a, b: c.b },
            s => *s,
        }
    }
    /// The point halfway along the segment.
    pub fn midpoint(&self) -> Point {
        match self {
            Segment::Line { a, b } => (*a + *b) * 0.5,
            Segment::Arc(arc) => arc.point_at(0.5),
            Segment::Curve(c) => c.mid,
        }
    }
    /// Whether every number in the segment is finite and an arc has a positive radius.
    ///
    /// Tested without a branch per number: v·0 is ±0 for a finite v and NaN for an infinite
    /// or NaN one, so a sum of such products is zero exactly when every v is finite.
    pub fn is_finite(&self) -> bool {
        let all_finite = |vs: &[f64]| vs.iter().fold(0.0, |sum, v| sum + v * 0.0) == 0.0;
        match self {
            Segment::Line { a, b } => all_finite(&[a.x, a.y, b.x, b.y]),
            Segment::Curve(c) => all_finite(&[c.a.x, c.a.y, c.b.x, c.b.y, c.mid.x, c.mid.y]),
            Segment::Arc(arc) => {
                let (c, s, e) = (arc.center, arc.start, arc.end);
                all_finite(&[c.x, c.y, s.x, s.y, e.x, e.y, arc.radius, arc.sweep])
                    & (arc.radius > 0.0)
                    & (arc.sweep != 0.0)
            }
        }
    }
    /// The same segment with every coordinate mapped by `f` (a similarity: translation,
    /// uniform scale; mirroring flips arcs).
    pub fn scaled(&self, s: f64) -> Segment {
        match self {
            Segment::Line { a, b } => Segment::Line {
                a: *a * s,
                b: *b * s,
            },
            Segment::Arc(arc) => Segment::Arc(Arc {
                center: arc.center * s,
                radius: arc.radius * s.abs(),
                start: arc.start * s,
                end: arc.end * s,
                sweep: arc.sweep,
            }),
            Segment::Curve(c) => Segment::Curve(CurvePiece {
                a: c.a * s,
                b: c.b * s,
                mid: c.mid * s,
                ..*c
            }),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_rng::uniform;

    /// `Segment::is_finite` against the plain test, number by number, with each number of
    /// each kind of segment in turn set to NaN, an infinity, a huge, tiny or subnormal value,
    /// or a zero of either sign, together with its neighbour.
    #[test]
    fn is_finite_tests_every_number() {
        let plain = |s: &Segment| match s {
            Segment::Line { a, b } => [a.x, a.y, b.x, b.y].iter().all(|v| v.is_finite()),
            Segment::Curve(c) => [c.a.x, c.a.y, c.b.x, c.b.y, c.mid.x, c.mid.y]
                .iter()
                .all(|v| v.is_finite()),
            Segment::Arc(a) => {
                [
                    a.center.x, a.center.y, a.start.x, a.start.y, a.end.x, a.end.y,
                ]
                .iter()
                .all(|v| v.is_finite())
                    && a.radius.is_finite()
                    && a.radius > 0.0
                    && a.sweep.is_finite()
                    && a.sweep != 0.0
            }
        };
        let specials = [
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::MAX,
            -f64::MAX,
            f64::MIN_POSITIVE,
            5e-324,
            0.0,
            -0.0,
            -2.5,
        ];
        let p = |x: f64, y: f64| Point::new(x, y);
        let line = |v: [f64; 8]| Segment::line(p(v[0], v[1]), p(v[2], v[3]));
        let curve = |v: [f64; 8]| {
            Segment::Curve(CurvePiece {
                a: p(v[0], v[1]),
                b: p(v[2], v[3]),
                mid: p(v[4], v[5]),
                span: 0,
                reversed: false,
            })
        };
        let arc = |v: [f64; 8]| {
            Segment::Arc(Arc {
                center: p(v[0], v[1]),
                start: p(v[2], v[3]),
                end: p(v[4], v[5]),
                radius: v[6],
                sweep: v[7],
            })
        };
        let base = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 0.5];
        let (mut finite, mut not) = (0, 0);
        let makers: [&dyn Fn([f64; 8]) -> Segment; 3] = [&line, &curve, &arc];
        for make in makers {
            assert!(make(base).is_finite());
            // Every pair of values in every two neighbouring numbers (infinities of both
            // signs together, two huge values whose sum overflows), and every number huge.
            let mut cases = vec![[f64::MAX; 8]];
            for field in 0..8 {
                for &v in &specials {
                    for &w in &specials {
                        let mut vs = base;
                        vs[field] = v;
                        vs[(field + 1) % 8] = w;
                        cases.push(vs);
                    }
                }
            }
            for vs in cases {
                let s = make(vs);
                assert_eq!(s.is_finite(), plain(&s), "{s:?}");
                if plain(&s) {
                    finite += 1;
                } else {
                    not += 1;
                }
            }
        }
        assert!(finite > 50 && not > 50, "{finite} finite, {not} not");
    }

    /// `grow` and `grow_point` give what `union` and `add_point` give, bit for bit, for boxes
    /// grown from the empty box, also when the box or point added holds NaN, infinities or
    /// zeros of either sign.
    #[test]
    fn grow_is_union_for_boxes_grown_from_empty() {
        let mut r = uniform(0x0dd_b1a5);
        let values = [
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            0.0,
            -0.0,
            1.5,
            -2.5,
        ];
        let mut pick = || {
            let u = r();
            if u < 0.5 {
                values[(u * 14.0) as usize]
            } else {
                200.0 * r() - 100.0
            }
        };
        // Equal bits, or equal numbers: `f64::min` may return either zero of 0.0 and -0.0.
        let same = |a: &BBox, b: &BBox| {
            let (a, b) = (
                [a.min.x, a.min.y, a.max.x, a.max.y],
                [b.min.x, b.min.y, b.max.x, b.max.y],
            );
            (0..4).all(|k| a[k].to_bits() == b[k].to_bits() || a[k] == b[k])
        };
        for _ in 0..2000 {
            let (mut plain, mut reference) = (BBox::EMPTY, BBox::EMPTY);
            for _ in 0..6 {
                let o = BBox {
                    min: Point::new(pick(), pick()),
                    max: Point::new(pick(), pick()),
                };
                let p = Point::new(pick(), pick());
                plain = plain.grow(&o).grow_point(p);
                reference = reference.union(&o);
                reference.add_point(p);
                assert!(
                    same(&plain, &reference),
                    "{plain:?} {reference:?} after {o:?}, {p:?}"
                );
            }
        }
    }

    fn random_arc(r: &mut impl FnMut() -> f64) -> Arc {
        let center = Point::new(200.0 * r() - 100.0, 200.0 * r() - 100.0);
        let sweep = (0.01 + r() * (TAU - 0.02)) * if r() < 0.5 { -1.0 } else { 1.0 };
        Arc::from_center(center, 0.1 + 50.0 * r(), TAU * r() - PI, sweep)
    }

    #[test]
    fn the_chord_side_test_agrees_with_the_angle_test() {
        let mut r = uniform(11);
        for _ in 0..5000 {
            let arc = random_arc(&mut r);
            for _ in 0..8 {
                let a = TAU * r();
                let w = arc.center + Point::polar(a) * arc.radius;
                // Away from the ends, where rounding could go either way.
                if w.dist(arc.start).min(w.dist(arc.end)) < 1e-6 * arc.radius {
                    continue;
                }
                assert_eq!(
                    arc.holds_circle_point(w),
                    arc.contains_angle(a),
                    "{arc:?} at {a}"
                );
            }
        }
    }

    #[test]
    fn exact_box_holds_the_arc_and_touches_it_on_every_side() {
        let mut r = uniform(12);
        for _ in 0..2000 {
            let arc = random_arc(&mut r);
            let b = arc.bbox();
            let mut seen = BBox::EMPTY;
            for k in 0..=4000 {
                let p = arc.point_at(k as f64 / 4000.0);
                seen.add_point(p);
                assert!(
                    b.contains_box(&BBox { min: p, max: p }, 1e-9 * arc.radius),
                    "{arc:?}"
                );
            }
            // Sampling every 1/4000 of the sweep misses an extreme by at most r·(1 − cos(π/4000)).
            let slack = arc.radius * 1e-6;
            assert!((seen.min.x - b.min.x).abs() <= slack && (seen.max.x - b.max.x).abs() <= slack);
            assert!((seen.min.y - b.min.y).abs() <= slack && (seen.max.y - b.max.y).abs() <= slack);
            // And the loose box holds the exact one.
            assert!(arc.loose_bbox().contains_box(&b, 1e-9 * arc.radius));
            // point_at by rotation agrees with the angle form.
            let p = arc.point_at(0.3);
            let q = arc.center + Point::polar(arc.start_angle() + 0.3 * arc.sweep) * arc.radius;
            assert!(p.dist(q) <= 1e-12 * (arc.radius + arc.center.norm()));
        }
    }
}
