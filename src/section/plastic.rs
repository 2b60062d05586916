//! Plastic section properties: the plastic neutral axis and the plastic section modulus.
//!
//! For bending about an axis of direction e, the fully plastic section splits along the line
//! parallel to e that halves the area (the plastic neutral axis, PNA); for an asymmetric
//! section it does not pass through the centroid. The plastic section modulus is
//! Z = ∬ |d| dA, d the distance from the PNA: the sum of the first moments of the two halves
//! about it (common practice; e.g. Neal, The Plastic Methods of Structural Analysis, ch. 1,
//! from memory).
//!
//! Everything is computed exactly, without flattening. The section's boundary is moved into a
//! frame where the axis is horizontal (lines and circular arcs are rotated exactly, curves
//! through [`Curve::transformed`]); there, with y = c the candidate axis,
//!
//!   A_above(c) = ∬_{y>c} dA and S_above(c) = ∬_{y>c} (y − c) dA
//!
//! come from Green's theorem in the cone form of [`crate::geom::moments`] about the point
//! (0, c), which lies on the line: the boundary's portions with y ≥ c, closed along the line
//! y = c, bound the part above, and the closing pieces on the line contribute nothing about a
//! point of that line, so they are never built. Lines are clipped at the crossing
//! (interpolation), circular arcs split at the angles where y = c (asin), ellipse pieces at
//! the parameters in closed form and spline pieces at bracketed roots
//! ([`Curve::level_crossings`]); each part keeps the closed forms of the elastic properties
//! (`line_moments`, `arc_moments`, `Curve::moments_between`). Holes run clockwise and
//! subtract by themselves.
//!
//! A_above decreases continuously from A to 0 as c rises through the section, so the PNA is
//! found by Brent's bracketing root finder on A_above(c) − A/2 between the section's lowest
//! and highest points, and the split is then checked to 1e-9 of A. With A the area and ȳ
//! the centroid's height in the frame, Z = 2·S_above(c) − A·(ȳ − c) (the part below contributes
//! S_above − A·(ȳ − c)).
//!
//! This module does no I/O. All lengths are millimetres.

use crate::geom::curve::{Affine, Curve};
use crate::geom::moments::{line_moments, towards_arc, unit_segment_integrals};
use crate::geom::segment::wrap_tau;
use crate::geom::{Arc, CurveTable, Point, Profile, Segment};
use crate::section::SectionProps;
use std::f64::consts::PI;

/// Plastic properties of a section for bending about axes parallel to x, to y, and to the two
/// principal axes, each through its own plastic neutral axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlasticProps {
    /// Offset of the plastic neutral axis parallel to x from the centroid, positive up.
    pub pna_x: f64,
    /// Offset of the plastic neutral axis parallel to y from the centroid, positive to the
    /// right.
    pub pna_y: f64,
    /// Plastic section modulus for bending about the axis parallel to x (∬ |y − y_pna| dA).
    pub plastic_x: f64,
    /// Plastic section modulus for bending about the axis parallel to y (∬ |x − x_pna| dA).
    pub plastic_y: f64,
    /// Shape factors: plastic modulus over the smaller elastic modulus about the same axis.
    pub shape_x: f64,
    pub shape_y: f64,
    /// Offsets of the plastic neutral axes parallel to the principal axes from the centroid:
    /// for axis 1 (of i1, at `theta_deg`) positive towards theta + 90°, for axis 2 (at
    /// theta − 90°) positive towards theta.
    pub pna_1: f64,
    pub pna_2: f64,
    /// Plastic section moduli for bending about axes parallel to the major (i1) and minor
    /// (i2) principal axes.
    pub plastic_1: f64,
    pub plastic_2: f64,
    /// Shape factors about the principal axes: plastic modulus over the smaller elastic
    /// modulus, i1 (i2) over the distance from the principal axis to the farthest fibre.
    pub shape_1: f64,
    pub shape_2: f64,
}

/// The plastic neutral axis of one bending direction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlasticAxis {
    /// Distance from the frame's reference point to the plastic neutral axis, along the
    /// axis's left normal (up for an axis along +x).
    pub offset: f64,
    /// Plastic section modulus ∬ |d| dA.
    pub modulus: f64,
    /// The section's area, and the area on the left side of the plastic neutral axis.
    pub area: f64,
    pub area_beyond: f64,
    /// Distance from the frame's reference point to the farthest fibre, across the axis:
    /// max(y_max, −y_min) in the frame. With the centroid as reference, the second moment
    /// about the axis over this is the smaller elastic section modulus.
    pub farthest_fibre: f64,
}

/// A boundary piece in the frame; curve pieces run from `t0` to `t1` on `curves[curve]`.
/// `ymin`, `ymax` bound the piece and `whole` holds its integrals G (see [`line_g`]).
#[derive(Debug, Clone, Copy)]
struct Part {
    kind: Kind,
    ymin: f64,
    ymax: f64,
    whole: [f64; 3],
}

#[derive(Debug, Clone, Copy)]
enum Kind {
    Line(Point, Point),
    Arc(Arc),
    Curve { curve: usize, t0: f64, t1: f64 },
}

/// A section's boundary moved into a frame where one bending axis is horizontal: every point
/// p becomes R(−angle)·(p − reference).
#[derive(Debug, Clone)]
pub struct Frame {
    parts: Vec<Part>,
    curves: Vec<Curve>,
    ymin: f64,
    ymax: f64,
}

/// The map p -> R(−angle)·(p − reference); quarter turns are exact (no sin/cos rounding).
fn frame_map(reference: Point, angle_deg: f64) -> Affine {
    let quarter = |m: [f64; 4]| Affine {
        m,
        t: Point::default(),
    };
    let turn = if angle_deg == 0.0 {
        Affine::IDENTITY
    } else if angle_deg == 90.0 {
        quarter([0.0, 1.0, -1.0, 0.0])
    } else if angle_deg == -90.0 {
        quarter([0.0, -1.0, 1.0, 0.0])
    } else if angle_deg.abs() == 180.0 {
        Affine::scaling(-1.0, -1.0)
    } else {
        Affine::rotation(-angle_deg.to_radians())
    };
    Affine::translation(-reference).then(&turn)
}

impl Frame {
    /// The boundaries of `profiles` (outer loops counter-clockwise, holes clockwise, as
    /// nesting leaves them) in the frame of a bending axis through `reference` at `angle_deg`
    /// from +x (counter-clockwise).
    pub fn new(
        profiles: &[&Profile],
        table: &CurveTable,
        reference: Point,
        angle_deg: f64,
    ) -> Frame {
        let f = frame_map(reference, angle_deg);
        let mut parts = Vec::new();
        let mut curves: Vec<Curve> = Vec::new();
        let mut local: Vec<Option<usize>> = vec![None; table.curves.len()];
        let (mut ymin, mut ymax) = (f64::INFINITY, f64::NEG_INFINITY);
        let loops = profiles
            .iter()
            .flat_map(|p| std::iter::once(&p.outer).chain(p.holes.iter()));
        for l in loops {
            for s in &l.segments {
                let part = match s {
                    Segment::Line { a, b } => {
                        let (a, b) = (f.apply(*a), f.apply(*b));
                        Part {
                            kind: Kind::Line(a, b),
                            ymin: a.y.min(b.y),
                            ymax: a.y.max(b.y),
                            whole: line_g(a, b),
                        }
                    }
                    Segment::Arc(arc) => {
                        let arc = Arc {
                            center: f.apply(arc.center),
                            start: f.apply(arc.start),
                            end: f.apply(arc.end),
                            ..*arc
                        };
                        let b = arc.bbox();
                        Part {
                            kind: Kind::Arc(arc),
                            ymin: b.min.y,
                            ymax: b.max.y,
                            whole: arc_g(&arc),
                        }
                    }
                    Segment::Curve(c) => {
                        let span = &table.spans[c.span as usize];
                        let k = span.curve as usize;
                        let idx = match local.get(k).copied().flatten() {
                            Some(i) => i,
                            None => {
                                curves.push(table.curves[k].transformed(&f));
                                if let Some(slot) = local.get_mut(k) {
                                    *slot = Some(curves.len() - 1);
                                }
                                curves.len() - 1
                            }
                        };
                        let (t0, t1) = if c.reversed {
                            (span.tb, span.ta)
                        } else {
                            (span.ta, span.tb)
                        };
                        // The piece's box in the frame, from the turned curve itself (exact
                        // for ellipses, within 1e-12 of a span for splines): the farthest
                        // fibre of an elastic modulus may lie on it.
                        let bb = curves[idx].bbox_between(t0, t1);
                        let (lo, hi) = (bb.min.y, bb.max.y);
                        Part {
                            kind: Kind::Curve { curve: idx, t0, t1 },
                            ymin: lo,
                            ymax: hi,
                            whole: curve_g(&curves[idx], t0, t1),
                        }
                    }
                };
                ymin = ymin.min(part.ymin);
                ymax = ymax.max(part.ymax);
                parts.push(part);
            }
        }
        Frame {
            parts,
            curves,
            ymin,
            ymax,
        }
    }

    /// (A_above, S_above): the area of the section above the line y = c and its first moment
    /// about that line, ∬_{y>c} (y − c) dA (see the module doc).
    pub fn above(&self, c: f64) -> (f64, f64) {
        let (mut a, mut s) = (0.0, 0.0);
        let mut add = |[g1, g2, dx]: [f64; 3]| {
            // ∫ −(y − c) dx = G1 + c·Δx and ∫ −(y − c)²/2 dx = G2 − c·G1 − c²·Δx/2.
            a += g1 + c * dx;
            s += g2 - c * g1 - 0.5 * c * c * dx;
        };
        for part in &self.parts {
            if part.ymax <= c {
                continue;
            }
            if part.ymin >= c {
                add(part.whole);
                continue;
            }
            match part.kind {
                Kind::Line(p, q) => {
                    if let Some((p, q)) = clip_line(p, q, c) {
                        add(line_g(p, q));
                    }
                }
                Kind::Arc(arc) => {
                    for sub in arc_above(&arc, c) {
                        add(arc_g(&sub));
                    }
                }
                Kind::Curve { curve, t0, t1 } => {
                    let curve = &self.curves[curve];
                    let mut ts = curve.level_crossings(t0, t1, c);
                    if t1 < t0 {
                        ts.reverse();
                    }
                    let mut from = t0;
                    for to in ts.into_iter().chain(std::iter::once(t1)) {
                        if curve.point(0.5 * (from + to)).y >= c {
                            add(curve_g(curve, from, to));
                        }
                        from = to;
                    }
                }
            }
        }
        (a, s)
    }

    /// The plastic neutral axis parallel to the frame's x axis and the plastic modulus about
    /// it. Err when the section has no area or the equal-area line cannot be found to 1e-9
    /// of the area (a bug: the area function is continuous and monotone).
    pub fn plastic(&self) -> Result<PlasticAxis, String> {
        let (lo, hi) = (self.ymin, self.ymax);
        if !(lo.is_finite() && hi.is_finite() && hi > lo) {
            return Err("plastic neutral axis: the section has no height".into());
        }
        let (area, s_lo) = self.above(lo);
        if area.is_nan() || area <= 0.0 {
            return Err("plastic neutral axis: the section has no area".into());
        }
        let half = 0.5 * area;
        let f = |c: f64| self.above(c).0 - half;
        let c = brent(&f, lo, hi, half, f(hi), 1e-13 * (hi - lo));
        let (a_above, s_above) = self.above(c);
        if (a_above - half).abs() > 1e-9 * area {
            return Err(format!(
                "plastic neutral axis not found: the line splits the area {a_above} to {} (internal error: please report it with the drawing)",
                area - a_above
            ));
        }
        // ∬ (y − c) dA over the whole section, from its value about y = lo.
        let s_all = s_lo + (lo - c) * area;
        Ok(PlasticAxis {
            offset: c,
            modulus: 2.0 * s_above - s_all,
            area,
            area_beyond: a_above,
            farthest_fibre: hi.max(-lo),
        })
    }
}

/// The boundary integrals G = [∫ −y dx, ∫ −y²/2 dx, ∫ dx] of the line p→q, in the frame.
///
/// Green's theorem in the form ∬ f dA = ∮ −F dx with ∂F/∂y = f (counter-clockwise
/// boundary): f = 1 gives ∮ −y dx, f = y − c gives ∮ −(y − c)²/2 dx; both vanish along the
/// line y = c, so the part above needs only the boundary above. Along a line y is linear in
/// x: ∫ y dx = Δx·(y_p + y_q)/2 and ∫ y² dx = Δx·(y_p² + y_p·y_q + y_q²)/3.
fn line_g(p: Point, q: Point) -> [f64; 3] {
    let dx = q.x - p.x;
    [
        -dx * 0.5 * (p.y + q.y),
        -dx * (p.y * p.y + p.y * q.y + q.y * q.y) / 6.0,
        dx,
    ]
}

/// [`line_g`] of a circular arc: its chord, plus the circular segment between chord and arc
/// (∮ −y dx = ∬ dA and ∮ −y²/2 dx = ∬ y dA around it), signed by the arc's direction, with
/// the segment's integrals from [`unit_segment_integrals`] as in `arc_moments`. A full circle
/// gives its disk: ∬ dA = πr², ∬ y dA = πr²·c_y.
fn arc_g(arc: &Arc) -> [f64; 3] {
    let sign = arc.sweep.signum();
    let r = arc.radius;
    if arc.is_full_circle() {
        let a = PI * r * r;
        return [sign * a, sign * a * arc.center.y, 0.0];
    }
    let (p, q) = (arc.start, arc.end);
    let alpha = arc.sweep.abs() / 2.0;
    let ev = towards_arc(arc);
    let [ua, uv1, _, _] = unit_segment_integrals(alpha);
    let area = ua * r * r;
    let first = 0.5 * (p.y + q.y) * area + ev.y * uv1 * r * r * r;
    let [g1, g2, dx] = line_g(p, q);
    [g1 + sign * area, g2 + sign * first, dx]
}

/// [`line_g`] of a curve from t0 to t1: its chord, plus the region between chord and curve,
/// whose ∬ dA and ∬ y dA are the curve's cone-form integrals less the chord's
/// (`Curve::moments_between`, `line_moments`).
fn curve_g(curve: &Curve, t0: f64, t1: f64) -> [f64; 3] {
    let (p, q) = (curve.point(t0), curve.point(t1));
    let m = curve.moments_between(t0, t1, Point::default());
    let l = line_moments(p, q);
    let [g1, g2, dx] = line_g(p, q);
    [g1 + (m.a - l.a), g2 + (m.sy - l.sy), dx]
}

/// The part of the line p→q with y ≥ c, in the same direction; the crossing by
/// interpolation, placed on the line exactly.
fn clip_line(p: Point, q: Point, c: f64) -> Option<(Point, Point)> {
    match (p.y >= c, q.y >= c) {
        (true, true) => Some((p, q)),
        (false, false) => None,
        (p_in, _) => {
            let t = (c - p.y) / (q.y - p.y);
            let x = Point::new(p.x + t * (q.x - p.x), c);
            if p_in {
                Some((p, x))
            } else {
                Some((x, q))
            }
        }
    }
}

/// The sub-arcs of `arc` with y ≥ c, in its direction: the circle meets y = c at the
/// angles θ with sin θ = (c − c_y)/r (θ = asin, π − asin); the arc is split there and each
/// piece kept when its middle lies on or above the line.
fn arc_above(arc: &Arc, c: f64) -> Vec<Arc> {
    let r = arc.radius;
    let k = (c - arc.center.y) / r;
    let sign = arc.sweep.signum();
    let span = arc.sweep.abs();
    let start = arc.start_angle();
    let mut cuts: Vec<f64> = Vec::with_capacity(4);
    cuts.push(0.0);
    if k.abs() < 1.0 {
        let s = k.asin();
        for theta in [s, std::f64::consts::PI - s] {
            let phi = wrap_tau(sign * (theta - start));
            if phi > 0.0 && phi < span {
                cuts.push(phi);
            }
        }
    }
    cuts.sort_by(f64::total_cmp);
    cuts.push(span);
    let at = |phi: f64| -> Point {
        if phi == 0.0 {
            arc.start
        } else if phi == span && !arc.is_full_circle() {
            arc.end
        } else if phi == span {
            arc.start
        } else {
            let p = arc.center + Point::polar(start + sign * phi) * r;
            Point::new(p.x, c)
        }
    };
    let mut out = Vec::with_capacity(2);
    for w in cuts.windows(2) {
        let (p0, p1) = (w[0], w[1]);
        if p1 <= p0 {
            continue;
        }
        let mid = arc.center.y + r * (start + sign * 0.5 * (p0 + p1)).sin();
        if mid >= c {
            out.push(Arc {
                center: arc.center,
                radius: r,
                start: at(p0),
                end: at(p1),
                sweep: sign * (p1 - p0),
            });
        }
    }
    out
}

/// A zero of f in [a, b] given f(a) = fa and f(b) = fb of opposite signs (or zero), to
/// within `xtol` (plus rounding): Brent's method, inverse quadratic interpolation and secant
/// steps safeguarded by bisection (Brent, Algorithms for Minimization without Derivatives,
/// 1973, ch. 4, "zeroin"; from memory).
fn brent(f: &impl Fn(f64) -> f64, a: f64, b: f64, fa: f64, fb: f64, xtol: f64) -> f64 {
    let (mut a, mut b, mut fa, mut fb) = (a, b, fa, fb);
    if fa == 0.0 {
        return a;
    }
    if fb == 0.0 {
        return b;
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..300 {
        if (fb > 0.0) == (fc > 0.0) {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * xtol;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return b;
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q) = if a == c {
                (2.0 * m * s, 1.0 - s)
            } else {
                let q = fa / fc;
                let r = fb / fc;
                (
                    s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0)),
                    (q - 1.0) * (r - 1.0) * (s - 1.0),
                )
            };
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b);
    }
    b
}

/// Plastic properties of the union of `profiles` (one profile, or all of a file merged),
/// whose elastic properties are `props`: the plastic neutral axes parallel to x and y with
/// their offsets from the centroid, the plastic moduli about them and the shape factors, and
/// the plastic moduli about axes parallel to the principal axes (through their own plastic
/// neutral axes).
pub fn plastic_props(
    profiles: &[&Profile],
    table: &CurveTable,
    props: &SectionProps,
) -> Result<PlasticProps, String> {
    let at = props.centroid;
    let x = Frame::new(profiles, table, at, 0.0).plastic()?;
    // The axis along −y has +x on its left: offsets positive to the right.
    let y = Frame::new(profiles, table, at, -90.0).plastic()?;
    let theta = props.theta_deg;
    // Axis 1 lies at theta, axis 2 at theta − 90° (its frame's +y points along axis 1).
    let (one, two) = if theta == 0.0 {
        (x, y)
    } else {
        (
            Frame::new(profiles, table, at, theta).plastic()?,
            Frame::new(profiles, table, at, theta - 90.0).plastic()?,
        )
    };
    Ok(PlasticProps {
        pna_x: x.offset,
        pna_y: y.offset,
        plastic_x: x.modulus,
        plastic_y: y.modulus,
        shape_x: x.modulus / props.wx_top.min(props.wx_bottom),
        shape_y: y.modulus / props.wy_left.min(props.wy_right),
        pna_1: one.offset,
        pna_2: two.offset,
        plastic_1: one.modulus,
        plastic_2: two.modulus,
        shape_1: one.modulus / (props.i1 / one.farthest_fibre),
        shape_2: two.modulus / (props.i2 / two.farthest_fibre),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brent_finds_roots_of_smooth_and_flat_functions() {
        // x³ − 2 has its root at 2^(1/3) (arithmetic).
        let f = |x: f64| x * x * x - 2.0;
        let r = brent(&f, 0.0, 2.0, f(0.0), f(2.0), 1e-15);
        assert!((r - 2f64.cbrt()).abs() < 1e-14, "{r}");
        // A function flat at zero over [1, 2] (two parts apart): any point there will do.
        let g = |x: f64| (1.0 - x).max(0.0) - (x - 2.0).max(0.0);
        let r = brent(&g, -5.0, 7.0, g(-5.0), g(7.0), 1e-13);
        assert!((1.0..=2.0).contains(&r), "{r}");
    }

    /// The parts of a circle above a line: a full circle split in two, one touching the line,
    /// and a clockwise arc; the pieces add up to the segment of the disk above the line
    /// (circular segment area r²(α − sin α cos α) for half-angle α, from memory; the same
    /// closed form as `unit_segment_integrals`).
    #[test]
    fn arcs_split_at_the_line() {
        let r = 2.0;
        let circle = Arc::circle(Point::new(1.0, 0.5), r);
        let c = 1.5; // 1 above the centre: cos α = 1/2.
        let parts = arc_above(&circle, c);
        assert_eq!(parts.len(), 1);
        let g = arc_g(&parts[0]);
        let chord = line_g(parts[0].end, parts[0].start);
        let alpha = (0.5f64).acos();
        let want = r * r * (alpha - alpha.sin() * alpha.cos());
        assert!((g[0] + chord[0] - want).abs() < 1e-14 * r * r);
        // Tangent from below: nothing, or everything.
        assert!(arc_above(&circle, 2.5).is_empty());
        assert_eq!(arc_above(&circle, -1.5).len(), 1);
        // Clockwise half circle from the right: the part above runs from the start.
        let half = Arc::from_center(Point::new(0.0, 0.0), 1.0, 0.0, -PI);
        let parts = arc_above(&half, -0.5);
        assert_eq!(parts.len(), 2);
        assert_eq!(parts[0].start, half.start);
        assert_eq!(parts[1].end, half.end);
        assert!(parts.iter().all(|a| a.sweep < 0.0));
    }

    /// The exact frame map turns by quarter turns without rounding.
    #[test]
    fn quarter_turns_are_exact() {
        let q = Point::new(3.25, -7.5);
        let f = frame_map(Point::new(1.0, 2.0), -90.0);
        assert_eq!(f.apply(q), Point::new(9.5, 2.25));
        let f = frame_map(Point::new(1.0, 2.0), 90.0);
        assert_eq!(f.apply(q), Point::new(-9.5, -2.25));
    }
}
