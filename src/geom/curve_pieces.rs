//! Curves into segments: chords with exact spans, and segments under affine maps.
//!
//! A curve (ellipse or spline, [`Curve`]) enters the pipeline as [`CurvePiece`]s: chords
//! between points of the curve, no farther from it than [`FLATTEN_REL`] of the curve's size,
//! each naming a [`CurveSpan`] with the curve's exact integrals, length and box over the piece.
//! Predicates see the chords; the properties see the exact curve.

use super::curve::{Affine, Curve, EllipseArc};
use super::moments::line_moments;
use super::segment::{Arc, CurvePiece, CurveSpan, Point, Segment};

/// Largest distance between a curve and its chords, relative to the diagonal of the curve's
/// box. At 1e-5 a full ellipse takes a few hundred chords; the chords only steer chaining,
/// crossing and nesting tests (properties are exact), where 1e-5 of a part's size is far
/// below its wall thicknesses.
pub const FLATTEN_REL: f64 = 1e-5;

/// The curve data of a drawing: the span table that [`CurvePiece::span`] indexes, and the
/// curves the spans were cut from, which [`CurveSpan::curve`] indexes (the plastic
/// properties clip the curve itself, see `section::plastic`).
#[derive(Debug, Clone, Default)]
pub struct CurveTable {
    pub spans: Vec<CurveSpan>,
    pub curves: Vec<Curve>,
}

impl CurveTable {
    /// Every coordinate multiplied by `s > 0` (a change of units).
    pub fn scale(&mut self, s: f64) {
        for c in &mut self.spans {
            *c = c.scaled(s);
        }
        let f = Affine::scaling(s, s);
        for c in &mut self.curves {
            *c = c.transformed(&f);
        }
    }
}

/// Smallest curve, by the diagonal of its box, that is cut into pieces; a smaller one has no
/// extent in any drawing. Around 1e-155 the squares of its coordinates fall among the
/// subnormal numbers, where arithmetic is some hundred times slower and the adaptive
/// integrals of its spans never converge: found by fuzzing, one ellipse 7e-156 across took
/// 12 s (curves near 1e-60 or 1e-160 take a millisecond, like any other).
const MIN_CURVE_SIZE: f64 = 1e-100;

/// Interval splits the length integrals of one curve's pieces may make together (16 times
/// what one integral may make alone). A spline whose control points lie 3e-8 apart at 13 mm
/// from the origin (found by fuzzing) turns back on itself at cusps, where no split satisfies
/// the tolerance: each of its 472 pieces spent a whole budget, 19 s in all. Ordinary curves
/// take a few splits per piece.
const CURVE_LENGTH_SPLITS: u32 = 16 * crate::geom::curve::ADAPTIVE_SPLITS;

/// The curve as curve pieces, with one span per piece appended to `table.spans` and the
/// curve itself to `table.curves`. A closed curve
/// (end on start to 1e-12 of its size) ends exactly on its first point. Empty when the
/// curve has no extent (its box's diagonal not above [`MIN_CURVE_SIZE`]).
pub fn curve_segments(curve: &Curve, table: &mut CurveTable) -> Vec<Segment> {
    let (t0, t1) = curve.domain();
    let size = curve.bbox_between(t0, t1).diagonal();
    if !(size.is_finite() && size > MIN_CURVE_SIZE) {
        return Vec::new();
    }
    let closed = curve.start().dist(curve.end()) <= 1e-12 * size;
    let curve_idx = table.curves.len() as u32;
    let curves = &mut table.spans;
    let params = curve.flatten(FLATTEN_REL * size, if closed { 4 } else { 2 });
    let first = curve.point(params[0]);
    let mut out = Vec::with_capacity(params.len().saturating_sub(1));
    let mut splits = CURVE_LENGTH_SPLITS;
    let mut a = first;
    for (k, w) in params.windows(2).enumerate() {
        let (ta, tb) = (w[0], w[1]);
        let b = if closed && k + 2 == params.len() {
            first
        } else {
            curve.point(tb)
        };
        if a == b {
            continue;
        }
        let at = (a + b) * 0.5;
        let exact = curve.moments_between(ta, tb, at);
        curves.push(CurveSpan {
            at,
            correction: exact + line_moments(a - at, b - at) * -1.0,
            length: curve.length_between_within(ta, tb, &mut splits),
            bbox: curve.bbox_between(ta, tb),
            curve: curve_idx,
            ta,
            tb,
        });
        out.push(Segment::Curve(CurvePiece {
            a,
            b,
            mid: curve.point(0.5 * (ta + tb)),
            span: (curves.len() - 1) as u32,
            reversed: false,
        }));
        a = b;
    }
    if !out.is_empty() {
        table.curves.push(curve.clone());
    }
    out
}

/// `segments` (lines and arcs) mapped by `f`. Lines stay lines; arcs stay arcs under a
/// similarity (mirrored ones turn the other way) and become elliptical arcs otherwise, as
/// curve pieces with their spans and curves appended to `curves`. Curve pieces are not expected here
/// (curves are mapped as curves, see [`Curve::transformed`]); any met are mapped as chords.
pub fn transformed_segments(
    segments: &[Segment],
    f: &Affine,
    curves: &mut CurveTable,
) -> Vec<Segment> {
    let similar = f.is_similarity();
    let det = f.det();
    let scale = det.abs().sqrt();
    let mut out = Vec::with_capacity(segments.len());
    for s in segments {
        match s {
            Segment::Line { a, b } => out.push(Segment::line(f.apply(*a), f.apply(*b))),
            Segment::Curve(c) => out.push(Segment::line(f.apply(c.a), f.apply(c.b))),
            Segment::Arc(arc) if similar => out.push(Segment::Arc(Arc {
                center: f.apply(arc.center),
                radius: arc.radius * scale,
                start: f.apply(arc.start),
                end: f.apply(arc.end),
                sweep: arc.sweep * det.signum(),
            })),
            Segment::Arc(arc) => {
                // p(t) = c + r(cos t, sin t) maps to f(c) + f(r·x̂) cos t + f(r·ŷ) sin t.
                let t0 = arc.start_angle();
                let ellipse = Curve::Ellipse(EllipseArc {
                    center: f.apply(arc.center),
                    u: f.apply_vector(Point::new(arc.radius, 0.0)),
                    v: f.apply_vector(Point::new(0.0, arc.radius)),
                    t0,
                    t1: t0 + arc.sweep,
                });
                let mut pieces = curve_segments(&ellipse, curves);
                // The chords' ends are the curve's points; keep the arc's own mapped ends
                // so that neighbours in a polyline still meet exactly.
                if let Some(Segment::Curve(first)) = pieces.first_mut() {
                    first.a = f.apply(arc.start);
                }
                if let Some(Segment::Curve(last)) = pieces.last_mut() {
                    last.b = f.apply(arc.end);
                }
                out.extend(pieces);
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::moments::{loop_moments, Moments};
    use std::f64::consts::PI;

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs().max(1e-300)
    }

    /// A curve below the smallest size has no pieces (the fuzzer's ellipse, 7e-156 across,
    /// whose spans took 12 s to integrate); one far smaller than a drawing but above it is cut
    /// as usual.
    #[test]
    fn a_curve_without_extent_has_no_pieces() {
        let flat = |scale: f64| {
            Curve::Ellipse(EllipseArc {
                center: Point::new(-2.5e-310, -2.5e-310),
                u: Point::new(-2.5e-310, -2.5e-310),
                v: Point::new(scale, -scale),
                t0: 6.084073464102694,
                t1: 12.36725877128228,
            })
        };
        let mut table = CurveTable::default();
        assert!(curve_segments(&flat(2.500000000000017e-156), &mut table).is_empty());
        assert!(table.spans.is_empty() && table.curves.is_empty());
        let pieces = curve_segments(&flat(1e-60), &mut table);
        assert!(pieces.len() > 100, "{} pieces", pieces.len());
    }

    /// The fuzzer's spline that turns back on itself at cusps, 3e-8 mm across at 13 mm from
    /// the origin: its pieces share one budget of splits for their lengths (it took 19 s
    /// when each piece had its own), and still each piece is at least as long as its chord
    /// (within the rounding of its ends) and the curve's length is its pieces' lengths.
    #[test]
    fn a_tiny_cusped_spline_is_cut_with_lengths_no_shorter_than_its_chords() {
        use crate::geom::curve::Nurbs;
        let (hi, lo) = (13.000000026, 12.999999974);
        let ctrl = vec![
            Point::new(hi, hi),
            Point::new(hi, hi),
            Point::new(hi, lo),
            Point::new(13.0, hi),
            Point::new(hi, hi),
            Point::new(hi, hi),
        ];
        let knots: Vec<f64> = (0..10).map(f64::from).collect();
        let spline = Curve::Nurbs(Nurbs::new(3, knots, ctrl, Vec::new()).expect("valid spline"));
        let mut table = CurveTable::default();
        let pieces = curve_segments(&spline, &mut table);
        assert!(pieces.len() > 10, "{} pieces", pieces.len());
        let mut sum = 0.0;
        for (piece, span) in pieces.iter().zip(&table.spans) {
            let chord = piece.start().dist(piece.end());
            // The chord's ends are rounded to about 2e-15 at 13 mm: a margin of 1e-13.
            assert!(span.length.is_finite() && span.length >= chord - 1e-13);
            sum += span.length;
        }
        let whole = spline.length_between(3.0, 6.0);
        assert!((sum - whole).abs() <= 1e-6 * whole, "{sum} against {whole}");
    }

    /// A rational spline reaching the largest double (the fuzzer's): its points overflow,
    /// its box is not a number, and it has no pieces (its box's search ran 2^60 steps).
    #[test]
    fn a_spline_whose_points_overflow_has_no_pieces() {
        use crate::geom::curve::Nurbs;
        let ctrl = vec![
            Point::new(f64::EPSILON, f64::EPSILON),
            Point::new(f64::MAX, f64::MAX),
        ];
        let spline = Nurbs::new(1, vec![0.0, 0.0, 1.0, 1.0], ctrl, vec![4.25, 4.25]);
        let mut table = CurveTable::default();
        let pieces = curve_segments(&Curve::Nurbs(spline.expect("valid spline")), &mut table);
        assert!(pieces.is_empty() && table.spans.is_empty());
    }

    /// A full ellipse as curve pieces: area πab, Ixx = πab³/4, Iyy = πa³b/4 about its centre
    /// (check-values.md §1, ellipse row), length and box from its own spans.
    #[test]
    fn an_ellipse_as_curve_pieces_keeps_its_exact_integrals() {
        let (a, b) = (50.0, 20.0);
        let c = Point::new(1.0e5, -3.0e4);
        let e = Curve::Ellipse(EllipseArc {
            center: c,
            u: Point::new(a, 0.0),
            v: Point::new(0.0, b),
            t0: 0.0,
            t1: 2.0 * PI,
        });
        let mut table = CurveTable::default();
        let segs = curve_segments(&e, &mut table);
        let curves = &table.spans;
        assert!(segs.len() >= 100, "{} chords", segs.len());
        assert_eq!(segs[0].start(), segs[segs.len() - 1].end());
        let m = loop_moments(&segs, c, curves);
        assert!(rel(m.a, PI * a * b) < 1e-12, "{}", m.a);
        assert!(rel(m.syy, PI * a * b.powi(3) / 4.0) < 1e-12);
        assert!(rel(m.sxx, PI * a.powi(3) * b / 4.0) < 1e-12);
        assert!(m.sx.abs() < 1e-9 * a * a * b && m.sxy.abs() < 1e-9 * a.powi(3) * b);
        // The chords alone fall short by the segments between chord and curve.
        let chords: Moments = segs
            .iter()
            .map(|s| line_moments(s.start() - c, s.end() - c))
            .fold(Moments::default(), |x, y| x + y);
        assert!(chords.a < m.a && rel(chords.a, m.a) < 1e-4);
        // Every chord stays within the flattening tolerance of the curve.
        let tol = FLATTEN_REL * 2.0 * (a * a + b * b).sqrt();
        for s in &segs {
            let Segment::Curve(p) = s else { panic!() };
            let chord_mid = (p.a + p.b) * 0.5;
            assert!(chord_mid.dist(p.mid) <= tol * 1.01);
        }
    }

    /// A circle under a non-uniform scale is an ellipse: area πr²·sx·sy (the area scales by
    /// the determinant), and a similarity keeps arcs as arcs.
    #[test]
    fn arcs_under_affine_maps() {
        let r = 10.0;
        let circle = [Segment::Arc(Arc::circle(Point::new(3.0, 4.0), r))];
        let f = Affine::scaling(2.0, 0.5).then(&Affine::rotation(0.3));
        let mut curves = CurveTable::default();
        let segs = transformed_segments(&circle, &f, &mut curves);
        assert!(segs.iter().all(|s| matches!(s, Segment::Curve(_))));
        let m = loop_moments(&segs, f.apply(Point::new(3.0, 4.0)), &curves.spans);
        assert!(rel(m.a, PI * r * r * 1.0) < 1e-12, "{}", m.a);
        // Mirrored similarity: still an arc, turning the other way, same size.
        let g = Affine::scaling(-1.5, 1.5);
        let segs = transformed_segments(&circle, &g, &mut curves);
        let Segment::Arc(arc) = segs[0] else { panic!() };
        assert!(arc.sweep < 0.0 && rel(arc.radius, 15.0) < 1e-15);
        // A half-circle polyline edge keeps its mapped end points exactly.
        let half = Arc::from_bulge(Point::new(0.0, 0.0), Point::new(10.0, 0.0), 1.0).unwrap();
        let segs = transformed_segments(&[Segment::Arc(half)], &f, &mut curves);
        assert_eq!(segs[0].start(), f.apply(half.start));
        assert_eq!(segs[segs.len() - 1].end(), f.apply(half.end));
    }
}
