//! SVG geometry in f64: path data and basic shapes as exact edges in user space, and those
//! edges as [`Segment`]s under an affine map.
//!
//! Edges are kept as the file states them: straight lines, circular arcs, elliptical arcs,
//! quadratic and cubic Bézier curves. Only when a piece is emitted does the full map (element
//! transforms, viewBox, unit scale, y flip) apply: lines stay lines, circular arcs stay arcs
//! under a similarity, and everything else becomes curve pieces with exact integrals
//! ([`curve_segments`]).

use std::f64::consts::{FRAC_PI_2, PI, TAU};

use svgtypes::{PathParser, PathSegment};

use crate::geom::curve::{Affine, Curve, EllipseArc, Nurbs};
use crate::geom::curve_pieces::{curve_segments, transformed_segments};
use crate::geom::{Arc, CurveTable, Point, Segment};

/// One edge of a subpath, in user units (y down, as the file has it).
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Edge {
    Line(Point, Point),
    /// A circular arc; its `start` and `end` are the file's own points.
    Arc(Arc),
    /// An elliptical arc from `a` to `b` (the file's points; the curve's own ends agree to
    /// rounding).
    Ellipse {
        arc: EllipseArc,
        a: Point,
        b: Point,
    },
    /// Bézier control points: three (quadratic) or four (cubic).
    Bezier(Vec<Point>),
}

/// A run of edges, closed by `Z` (or by the shape itself) or open.
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct Subpath {
    pub edges: Vec<Edge>,
    pub closed: bool,
}

/// Path data (`d`) as subpaths. Relative commands, `H`/`V` and the smooth curve commands are
/// resolved as the SVG 1.1 specification §8.3 says; arcs follow its Appendix F.6. A syntax
/// error ends the data: what came before it is kept (SVG 1.1 §F.2, "render up to the error"),
/// and the error is returned beside it for a note.
pub(crate) fn path_data(d: &str) -> (Vec<Subpath>, Option<String>) {
    let mut out: Vec<Subpath> = Vec::new();
    let mut cur = Subpath::default();
    let mut start = Point::default();
    let mut pos = Point::default();
    // The reflected control point for S/T: the previous cubic's (or quadratic's) last one.
    let mut last_cubic: Option<Point> = None;
    let mut last_quad: Option<Point> = None;
    let mut error = None;
    let flush = |cur: &mut Subpath, out: &mut Vec<Subpath>| {
        if !cur.edges.is_empty() {
            out.push(std::mem::take(cur));
        } else {
            cur.closed = false;
        }
    };
    for seg in PathParser::from(d) {
        let seg = match seg {
            Ok(s) => s,
            Err(e) => {
                error = Some(e.to_string());
                break;
            }
        };
        let rel = |abs: bool, x: f64, y: f64| {
            if abs {
                Point::new(x, y)
            } else {
                Point::new(pos.x + x, pos.y + y)
            }
        };
        let (mut next_cubic, mut next_quad) = (None, None);
        match seg {
            PathSegment::MoveTo { abs, x, y } => {
                flush(&mut cur, &mut out);
                pos = rel(abs, x, y);
                start = pos;
            }
            PathSegment::LineTo { abs, x, y } => {
                let p = rel(abs, x, y);
                push_line(&mut cur, pos, p);
                pos = p;
            }
            PathSegment::HorizontalLineTo { abs, x } => {
                let p = Point::new(if abs { x } else { pos.x + x }, pos.y);
                push_line(&mut cur, pos, p);
                pos = p;
            }
            PathSegment::VerticalLineTo { abs, y } => {
                let p = Point::new(pos.x, if abs { y } else { pos.y + y });
                push_line(&mut cur, pos, p);
                pos = p;
            }
            PathSegment::CurveTo {
                abs,
                x1,
                y1,
                x2,
                y2,
                x,
                y,
            } => {
                let (c1, c2, p) = (rel(abs, x1, y1), rel(abs, x2, y2), rel(abs, x, y));
                cur.edges.push(Edge::Bezier(vec![pos, c1, c2, p]));
                next_cubic = Some(c2);
                pos = p;
            }
            PathSegment::SmoothCurveTo { abs, x2, y2, x, y } => {
                let c1 = last_cubic.map_or(pos, |c| pos * 2.0 - c);
                let (c2, p) = (rel(abs, x2, y2), rel(abs, x, y));
                cur.edges.push(Edge::Bezier(vec![pos, c1, c2, p]));
                next_cubic = Some(c2);
                pos = p;
            }
            PathSegment::Quadratic { abs, x1, y1, x, y } => {
                let (c, p) = (rel(abs, x1, y1), rel(abs, x, y));
                cur.edges.push(Edge::Bezier(vec![pos, c, p]));
                next_quad = Some(c);
                pos = p;
            }
            PathSegment::SmoothQuadratic { abs, x, y } => {
                let c = last_quad.map_or(pos, |c| pos * 2.0 - c);
                let p = rel(abs, x, y);
                cur.edges.push(Edge::Bezier(vec![pos, c, p]));
                next_quad = Some(c);
                pos = p;
            }
            PathSegment::EllipticalArc {
                abs,
                rx,
                ry,
                x_axis_rotation,
                large_arc,
                sweep,
                x,
                y,
            } => {
                let p = rel(abs, x, y);
                if let Some(e) = arc_edge(pos, p, rx, ry, x_axis_rotation, large_arc, sweep) {
                    cur.edges.push(e);
                }
                pos = p;
            }
            PathSegment::ClosePath { .. } => {
                push_line(&mut cur, pos, start);
                cur.closed = true;
                flush(&mut cur, &mut out);
                pos = start;
            }
        }
        last_cubic = next_cubic;
        last_quad = next_quad;
    }
    flush(&mut cur, &mut out);
    (out, error)
}

/// A line unless its ends coincide.
fn push_line(cur: &mut Subpath, a: Point, b: Point) {
    if a != b {
        cur.edges.push(Edge::Line(a, b));
    }
}

/// The `A` command from `p1` to `p2` as an edge: a line when a radius is zero, a circular
/// arc when the radii are equal, an elliptical arc otherwise; `None` when the ends coincide.
/// Endpoint to centre parameterisation and radius correction: SVG 1.1, Appendix F.6.5 and
/// F.6.6.
pub(crate) fn arc_edge(
    p1: Point,
    p2: Point,
    rx: f64,
    ry: f64,
    rotation_deg: f64,
    large_arc: bool,
    sweep: bool,
) -> Option<Edge> {
    if p1 == p2 {
        return None;
    }
    let (mut rx, mut ry) = (rx.abs(), ry.abs());
    if rx == 0.0 || ry == 0.0 || !(rx.is_finite() && ry.is_finite()) {
        return Some(Edge::Line(p1, p2));
    }
    let phi = rotation_deg.to_radians();
    let (sin_phi, cos_phi) = if rx == ry { (0.0, 1.0) } else { phi.sin_cos() };
    let h = (p1 - p2) * 0.5;
    let x1p = cos_phi * h.x + sin_phi * h.y;
    let y1p = -sin_phi * h.x + cos_phi * h.y;
    let lambda = (x1p / rx).powi(2) + (y1p / ry).powi(2);
    if lambda > 1.0 {
        let s = lambda.sqrt();
        rx *= s;
        ry *= s;
    }
    let (rx2, ry2) = (rx * rx, ry * ry);
    let num = rx2 * ry2 - rx2 * y1p * y1p - ry2 * x1p * x1p;
    let den = rx2 * y1p * y1p + ry2 * x1p * x1p;
    // The centre's offset from the chord grows as the square root of 1 − Λ: a half arc
    // (Λ = 1) whose end points carry rounding (editors write about 8 significant digits, so
    // Λ is off by about 1e-8) would move its centre by √(rounding), about 1e-4 of the radius.
    // Within HALF_ARC of 1 the arc is taken as the half it was meant to be (common practice
    // for written data; an arc truly that close to a half differs from it by less than its
    // digits can say).
    const HALF_ARC: f64 = 1e-7;
    let mut k = if lambda > 1.0 - HALF_ARC {
        0.0
    } else {
        (num / den).max(0.0).sqrt()
    };
    if large_arc == sweep {
        k = -k;
    }
    let cxp = k * rx * y1p / ry;
    let cyp = -k * ry * x1p / rx;
    let mid = (p1 + p2) * 0.5;
    let center = Point::new(
        cos_phi * cxp - sin_phi * cyp + mid.x,
        sin_phi * cxp + cos_phi * cyp + mid.y,
    );
    let angle = |ux: f64, uy: f64| uy.atan2(ux);
    let theta1 = angle((x1p - cxp) / rx, (y1p - cyp) / ry);
    let theta2 = angle((-x1p - cxp) / rx, (-y1p - cyp) / ry);
    let mut dtheta = (theta2 - theta1).rem_euclid(TAU);
    if !sweep && dtheta > 0.0 {
        dtheta -= TAU;
    }
    if dtheta == 0.0 {
        return Some(Edge::Line(p1, p2));
    }
    if rx == ry {
        return Some(Edge::Arc(Arc {
            center,
            radius: rx,
            start: p1,
            end: p2,
            sweep: dtheta,
        }));
    }
    Some(Edge::Ellipse {
        arc: EllipseArc {
            center,
            u: Point::new(cos_phi, sin_phi) * rx,
            v: Point::new(-sin_phi, cos_phi) * ry,
            t0: theta1,
            t1: theta1 + dtheta,
        },
        a: p1,
        b: p2,
    })
}

/// A rectangle, with rounded corners when `rx`, `ry` > 0 (already resolved and clamped to
/// half the sides, SVG 1.1 §9.2), as one closed subpath running as the specification draws it.
pub(crate) fn rect(x: f64, y: f64, w: f64, h: f64, rx: f64, ry: f64) -> Subpath {
    let mut s = Subpath {
        edges: Vec::new(),
        closed: true,
    };
    let p = Point::new;
    if rx <= 0.0 || ry <= 0.0 {
        let c = [p(x, y), p(x + w, y), p(x + w, y + h), p(x, y + h)];
        for k in 0..4 {
            s.edges.push(Edge::Line(c[k], c[(k + 1) % 4]));
        }
        return s;
    }
    // Corner centres and the angle each corner arc starts at (user space, y down: the angle
    // runs from +x towards +y, and each corner turns a quarter in that sense).
    let corners = [
        (p(x + w - rx, y + ry), -FRAC_PI_2),
        (p(x + w - rx, y + h - ry), 0.0),
        (p(x + rx, y + h - ry), FRAC_PI_2),
        (p(x + rx, y + ry), PI),
    ];
    let on = |c: Point, t: f64| c + Point::new(rx * t.cos(), ry * t.sin());
    // Exact corner points (cos and sin of quarter turns are not exact in floating point).
    let ends = |k: usize| -> (Point, Point) {
        let c = corners[k].0;
        match k {
            0 => (p(c.x, y), p(x + w, c.y)),
            1 => (p(x + w, c.y), p(c.x, y + h)),
            2 => (p(c.x, y + h), p(x, c.y)),
            _ => (p(x, c.y), p(c.x, y)),
        }
    };
    for (k, &(c, t0)) in corners.iter().enumerate() {
        let (a, b) = ends(k);
        debug_assert!(on(c, t0).dist(a) <= 1e-9 * (w + h));
        if rx == ry {
            s.edges.push(Edge::Arc(Arc {
                center: c,
                radius: rx,
                start: a,
                end: b,
                sweep: FRAC_PI_2,
            }));
        } else {
            s.edges.push(Edge::Ellipse {
                arc: EllipseArc {
                    center: c,
                    u: p(rx, 0.0),
                    v: p(0.0, ry),
                    t0,
                    t1: t0 + FRAC_PI_2,
                },
                a,
                b,
            });
        }
        let next = ends((k + 1) % 4).0;
        if b != next {
            s.edges.push(Edge::Line(b, next));
        }
    }
    s
}

/// A full ellipse (a circle when `rx == ry`) as one closed subpath.
pub(crate) fn ellipse(c: Point, rx: f64, ry: f64) -> Subpath {
    let edge = if rx == ry {
        Edge::Arc(Arc::circle(c, rx))
    } else {
        let a = c + Point::new(rx, 0.0);
        Edge::Ellipse {
            arc: EllipseArc {
                center: c,
                u: Point::new(rx, 0.0),
                v: Point::new(0.0, ry),
                t0: 0.0,
                t1: TAU,
            },
            a,
            b: a,
        }
    };
    Subpath {
        edges: vec![edge],
        closed: true,
    }
}

/// Points joined by lines; closed for `<polygon>`.
pub(crate) fn poly(points: &[Point], closed: bool) -> Subpath {
    let mut s = Subpath {
        edges: Vec::new(),
        closed,
    };
    for w in points.windows(2) {
        push_line(&mut s, w[0], w[1]);
    }
    if closed && points.len() > 2 {
        push_line(&mut s, points[points.len() - 1], points[0]);
    }
    s.closed = closed && !s.edges.is_empty();
    s
}

/// The largest absolute coordinate, radius or semi-axis of the subpath's edges (in its own
/// user units).
pub(crate) fn local_extent(sub: &Subpath) -> f64 {
    let m = |p: &Point| p.x.abs().max(p.y.abs());
    sub.edges
        .iter()
        .map(|e| match e {
            Edge::Line(a, b) => m(a).max(m(b)),
            Edge::Arc(arc) => m(&arc.center) + arc.radius.abs(),
            Edge::Ellipse { arc, a, b } => {
                (m(&arc.center) + m(&arc.u) + m(&arc.v)).max(m(a)).max(m(b))
            }
            Edge::Bezier(ctrl) => ctrl.iter().map(m).fold(0.0, f64::max),
        })
        .fold(0.0, f64::max)
}

/// The subpath's edges mapped by `f` as segments, with curve data appended to `table`.
/// Consecutive segments meet exactly: each edge's ends are the mapped points of the file.
pub(crate) fn emit(sub: &Subpath, f: &Affine, table: &mut CurveTable) -> Vec<Segment> {
    let mut out = Vec::with_capacity(sub.edges.len());
    for e in &sub.edges {
        match e {
            Edge::Line(a, b) => {
                let (a, b) = (f.apply(*a), f.apply(*b));
                if a != b {
                    out.push(Segment::line(a, b));
                }
            }
            Edge::Arc(arc) => out.extend(transformed_segments(&[Segment::Arc(*arc)], f, table)),
            Edge::Ellipse { arc, a, b } => {
                let curve = Curve::Ellipse(*arc).transformed(f);
                out.extend(pinned(
                    curve_segments(&curve, table),
                    f.apply(*a),
                    f.apply(*b),
                ));
            }
            Edge::Bezier(ctrl) => {
                let degree = ctrl.len() - 1;
                let mut knots = vec![0.0; degree + 1];
                knots.extend(std::iter::repeat_n(1.0, degree + 1));
                let mapped: Vec<Point> = ctrl.iter().map(|p| f.apply(*p)).collect();
                let (a, b) = (mapped[0], mapped[degree]);
                // A Bézier curve is the B-spline of its control points on clamped knots
                // [0…0, 1…1] (common practice; Piegl & Tiller, The NURBS Book, §2.2).
                if let Ok(n) = Nurbs::new(degree, knots, mapped, Vec::new()) {
                    out.extend(pinned(curve_segments(&Curve::Nurbs(n), table), a, b));
                }
            }
        }
    }
    out
}

/// Curve pieces whose outer ends are set to the mapped points of the file, so that
/// neighbours meet exactly.
fn pinned(mut pieces: Vec<Segment>, a: Point, b: Point) -> Vec<Segment> {
    if let Some(Segment::Curve(first)) = pieces.first_mut() {
        first.a = a;
    }
    if let Some(Segment::Curve(last)) = pieces.last_mut() {
        last.b = b;
    }
    pieces
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn relative_and_smooth_commands_resolve_to_absolute_edges() {
        let (subs, err) = path_data("m10 10 h5 v5 H10 z M0 0 c1 1 2 1 3 0 s2 -1 3 0 q1 1 2 0 t2 0");
        assert!(err.is_none());
        assert_eq!(subs.len(), 2);
        assert!(subs[0].closed && subs[0].edges.len() == 4);
        assert_eq!(
            subs[0].edges[3],
            Edge::Line(Point::new(10.0, 15.0), Point::new(10.0, 10.0))
        );
        // S reflects the previous second control point (2,1) about (3,0): (4,-1).
        assert_eq!(
            subs[1].edges[1],
            Edge::Bezier(vec![
                Point::new(3.0, 0.0),
                Point::new(4.0, -1.0),
                Point::new(5.0, -1.0),
                Point::new(6.0, 0.0)
            ])
        );
        // T reflects (7,1) about (8,0): (9,-1).
        assert_eq!(
            subs[1].edges[3],
            Edge::Bezier(vec![
                Point::new(8.0, 0.0),
                Point::new(9.0, -1.0),
                Point::new(10.0, 0.0)
            ])
        );
        assert!(!subs[1].closed);
    }

    #[test]
    fn a_bad_command_keeps_what_came_before() {
        let (subs, err) = path_data("M0,0 L10,0 L10,10 X 99 Z");
        assert!(err.is_some());
        assert_eq!(subs.len(), 1);
        assert_eq!(subs[0].edges.len(), 2);
        assert!(!subs[0].closed);
    }

    /// A half circle by `A` with too small radii: the radii grow to half the chord (SVG 1.1
    /// F.6.6) and the centre is the chord's midpoint.
    #[test]
    fn arc_radii_grow_to_reach_the_end_point() {
        let Some(Edge::Arc(arc)) = arc_edge(
            Point::new(0.0, 0.0),
            Point::new(10.0, 0.0),
            1.0,
            1.0,
            0.0,
            false,
            true,
        ) else {
            panic!("circular arc expected")
        };
        assert_eq!(arc.radius, 5.0);
        assert!(arc.center.dist(Point::new(5.0, 0.0)) < 1e-15);
        assert!((arc.sweep - PI).abs() < 1e-15);
        // Zero radius: a straight line (SVG 1.1 F.6.2).
        let e = arc_edge(
            Point::new(0.0, 0.0),
            Point::new(1.0, 0.0),
            0.0,
            3.0,
            0.0,
            true,
            true,
        );
        assert_eq!(
            e,
            Some(Edge::Line(Point::new(0.0, 0.0), Point::new(1.0, 0.0)))
        );
    }

    /// A half circle written with 8 significant digits: still a half circle, its centre on
    /// the chord's midpoint (not √(rounding) away from it).
    #[test]
    fn rounded_half_arcs_stay_half() {
        let (a, b) = (
            Point::new(23.059575, 16.392569),
            Point::new(7.2207476, 31.138431),
        );
        let r = 0.5 * a.dist(b);
        // Rounding up by 2e-8 (8 significant digits) leaves Λ just under 1.
        let r8 = r * (1.0 + 2e-8);
        let Some(Edge::Arc(arc)) = arc_edge(a, b, r8, r8, 0.0, false, true) else {
            panic!("circular arc expected")
        };
        assert!(arc.center.dist((a + b) * 0.5) < 1e-12 * r);
        assert!((arc.sweep.abs() - PI).abs() < 1e-12);
    }

    /// Large-arc and sweep flags choose among the four arcs (SVG 1.1 F.6.4): from (0,0) to
    /// (10,0) with r = 10 the small arc sweeps 60°, the large one 300°.
    #[test]
    fn arc_flags_pick_the_arc() {
        let sweep = |large, sw| match arc_edge(
            Point::new(0.0, 0.0),
            Point::new(10.0, 0.0),
            10.0,
            10.0,
            0.0,
            large,
            sw,
        ) {
            Some(Edge::Arc(a)) => a.sweep,
            other => panic!("{other:?}"),
        };
        assert!((sweep(false, true) - PI / 3.0).abs() < 1e-14);
        assert!((sweep(false, false) + PI / 3.0).abs() < 1e-14);
        assert!((sweep(true, true) - 5.0 * PI / 3.0).abs() < 1e-14);
        assert!((sweep(true, false) + 5.0 * PI / 3.0).abs() < 1e-14);
    }

    #[test]
    fn rounded_rect_corners_meet_their_sides_exactly() {
        for (rx, ry) in [(2.0, 2.0), (3.0, 1.5), (5.0, 4.0)] {
            let s = rect(1.0, 2.0, 10.0, 8.0, rx, ry);
            let mut table = CurveTable::default();
            let segs = emit(&s, &Affine::IDENTITY, &mut table);
            for w in segs.windows(2) {
                assert_eq!(w[0].end(), w[1].start());
            }
            assert_eq!(segs[segs.len() - 1].end(), segs[0].start());
        }
    }
}
