//! Properties must follow the laws of plane geometry under moves, turns, mirrors and
//! scaling, and must not depend on how loops are drawn. Seeded random profiles.

mod util;

use std::f64::consts::PI;

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use sectio::geom::{CurvePiece, Segment};
use sectio::import::Piece;
use sectio::section::SectionProps;
use util::*;

/// A random star-shaped outline with small bulges on some edges and a round hole near its
/// middle (vertices at increasing angles, radii between 40 and 60: never self-crossing).
fn random_profile(rng: &mut StdRng) -> Vec<Piece> {
    let n = rng.random_range(5..40);
    let mut pts = Vec::new();
    let mut bulges = Vec::new();
    for k in 0..n {
        let ang = 2.0 * PI * (k as f64 + rng.random_range(0.0..0.6)) / n as f64;
        let rad = rng.random_range(40.0..60.0);
        pts.push((rad * ang.cos() + 5.0, rad * ang.sin() - 3.0));
        bulges.push(if rng.random_bool(0.4) {
            rng.random_range(-0.15..0.15)
        } else {
            0.0
        });
    }
    vec![
        closed(poly(&pts, &bulges)),
        closed(circle(
            rng.random_range(0.0..10.0),
            rng.random_range(-8.0..2.0),
            12.0,
        )),
    ]
}

fn transformed(pieces: &[Piece], t: Similarity) -> Vec<Piece> {
    pieces.iter().map(|pc| t.piece(pc)).collect()
}

fn same(a: &SectionProps, b: &SectionProps, rel: f64) {
    let scale4 = a.i1;
    assert_close!(a.area, b.area, rel = rel);
    assert_close!(a.ixx, b.ixx, rel = rel);
    assert_close!(a.iyy, b.iyy, rel = rel);
    assert_close!(a.ixy, b.ixy, abs = rel * scale4);
    assert_close!(a.i1, b.i1, rel = rel);
    assert_close!(a.i2, b.i2, rel = rel);
    assert_close!(a.perimeter, b.perimeter, rel = rel);
    assert_eq!(a.n_holes, b.n_holes);
}

#[test]
fn translation_far_from_origin() {
    let mut rng = StdRng::seed_from_u64(11);
    for _ in 0..50 {
        let base = random_profile(&mut rng);
        let a = only(base.clone());
        for shift in [p(1e6, -3e6), p(-2.87e6, 1.48e6), p(1e8, 1e8)] {
            let t = Similarity {
                mirror_x: false,
                angle: 0.0,
                scale: 1.0,
                shift,
            };
            let b = only(transformed(&base, t));
            // Far from the origin the input coordinates themselves carry only about
            // 1e-16·|shift| of precision, so the tolerance grows with the shift.
            let rel = 1e-9 * (shift.norm() / 1e6).max(1.0);
            same(&a, &b, rel);
            assert_close!(
                b.centroid.x - shift.x,
                a.centroid.x,
                abs = 1e-7 * shift.norm() / 1e6
            );
            assert_close!(
                b.centroid.y - shift.y,
                a.centroid.y,
                abs = 1e-7 * shift.norm() / 1e6
            );
        }
    }
}

#[test]
fn rotation_turns_the_tensor_as_mohrs_circle_says() {
    let mut rng = StdRng::seed_from_u64(12);
    for _ in 0..50 {
        let base = random_profile(&mut rng);
        let a = only(base.clone());
        let phi: f64 = rng.random_range(-PI..PI);
        let t = Similarity {
            mirror_x: false,
            angle: phi,
            scale: 1.0,
            shift: p(rng.random_range(-100.0..100.0), 7.0),
        };
        let b = only(transformed(&base, t));
        // Turning the body by φ: its moment about x is the old moment about the axis at −φ,
        // I(−φ) = Ixx·cos²φ + Iyy·sin²φ + Ixy·sin2φ, and Ixy' = (Iyy − Ixx)/2·sin2φ + Ixy·cos2φ
        // (transformation of second moments, Mohr's circle; Gere & Timoshenko §12.8, from memory).
        let (s2, c2) = (2.0 * phi).sin_cos();
        let (c, s) = (phi.cos(), phi.sin());
        let ixx = a.ixx * c * c + a.iyy * s * s + a.ixy * s2;
        let iyy = a.ixx * s * s + a.iyy * c * c - a.ixy * s2;
        let ixy = (a.iyy - a.ixx) / 2.0 * s2 + a.ixy * c2;
        assert_close!(b.ixx, ixx, rel = 1e-11);
        assert_close!(b.iyy, iyy, rel = 1e-11);
        assert_close!(b.ixy, ixy, abs = 1e-11 * a.i1);
        assert_close!(b.i1, a.i1, rel = 1e-11);
        assert_close!(b.i2, a.i2, rel = 1e-11);
        assert_close!(b.area, a.area, rel = 1e-12);
        // The principal direction turns with the body (mod 180°).
        let d = (b.theta_deg - a.theta_deg - phi.to_degrees()).rem_euclid(180.0);
        assert!(
            d.min(180.0 - d) < 1e-6,
            "theta {} -> {} for φ {}",
            a.theta_deg,
            b.theta_deg,
            phi.to_degrees()
        );
    }
}

#[test]
fn mirroring_flips_the_product_of_area() {
    let mut rng = StdRng::seed_from_u64(13);
    for _ in 0..50 {
        let base = random_profile(&mut rng);
        let a = only(base.clone());
        let t = Similarity {
            mirror_x: true,
            angle: 0.0,
            scale: 1.0,
            shift: p(0.0, 0.0),
        };
        let b = only(transformed(&base, t));
        assert_close!(b.area, a.area, rel = 1e-13);
        assert!(b.area > 0.0, "a mirrored outline still has positive area");
        assert_close!(b.ixx, a.ixx, rel = 1e-12);
        assert_close!(b.iyy, a.iyy, rel = 1e-12);
        assert_close!(b.ixy, -a.ixy, abs = 1e-12 * a.i1);
        assert_close!(b.centroid.x, -a.centroid.x, abs = 1e-12 * 60.0);
    }
}

#[test]
fn scaling_by_s_gives_area_s2_and_moments_s4() {
    let mut rng = StdRng::seed_from_u64(14);
    for _ in 0..30 {
        let base = random_profile(&mut rng);
        let a = only(base.clone());
        let s: f64 = rng.random_range(0.01..100.0);
        let t = Similarity {
            mirror_x: false,
            angle: 0.0,
            scale: s,
            shift: p(0.0, 0.0),
        };
        let b = only(transformed(&base, t));
        assert_close!(b.area, a.area * s * s, rel = 1e-12);
        assert_close!(b.ixx, a.ixx * s.powi(4), rel = 1e-12);
        assert_close!(b.iyy, a.iyy * s.powi(4), rel = 1e-12);
        assert_close!(b.wx_top, a.wx_top * s.powi(3), rel = 1e-12);
        assert_close!(b.rx, a.rx * s, rel = 1e-12);
        assert_close!(b.perimeter, a.perimeter * s, rel = 1e-12);
    }
}

#[test]
fn direction_start_point_and_splitting_change_nothing() {
    let mut rng = StdRng::seed_from_u64(15);
    for _ in 0..50 {
        let base = random_profile(&mut rng);
        let a = only(base.clone());
        // Reverse every loop.
        let reversed: Vec<Piece> = base
            .iter()
            .map(|pc| {
                let mut segs: Vec<Segment> = pc.segments.iter().map(|s| s.reversed()).collect();
                segs.reverse();
                Piece {
                    segments: segs,
                    ..pc.clone()
                }
            })
            .collect();
        same(&a, &only(reversed), 1e-12);
        // Start each loop at another segment.
        let rotated: Vec<Piece> = base
            .iter()
            .map(|pc| {
                let mut segs = pc.segments.clone();
                let k = rng.random_range(0..segs.len());
                segs.rotate_left(k);
                Piece {
                    segments: segs,
                    ..pc.clone()
                }
            })
            .collect();
        same(&a, &only(rotated), 1e-12);
        // Explode the outline into loose single-segment pieces, shuffled.
        let mut loose: Vec<Piece> = base[0]
            .segments
            .iter()
            .map(|s| {
                open(vec![if rng.random_bool(0.5) {
                    s.reversed()
                } else {
                    *s
                }])
            })
            .collect();
        for i in (1..loose.len()).rev() {
            let j = rng.random_range(0..=i);
            loose.swap(i, j);
        }
        loose.push(base[1].clone());
        same(&a, &only(loose), 1e-12);
    }
}

/// Area and centroid of random polygons against the `geo` crate, a general-purpose
/// geometry library used as an independent reference.
#[test]
fn polygons_agree_with_geo() {
    use geo::{Area, Centroid};
    let mut rng = StdRng::seed_from_u64(16);
    for _ in 0..200 {
        let n = rng.random_range(3..60);
        let mut pts = Vec::new();
        for k in 0..n {
            let ang = 2.0 * PI * (k as f64 + rng.random_range(0.0..0.9)) / n as f64;
            let rad = rng.random_range(1.0..100.0);
            pts.push((rad * ang.cos() + 1000.0, rad * ang.sin() - 500.0));
        }
        let ours = only(vec![closed(poly(&pts, &[]))]);
        let ring: Vec<geo::Coord<f64>> =
            pts.iter().map(|&(x, y)| geo::coord! {x: x, y: y}).collect();
        let gp = geo::Polygon::new(geo::LineString::from(ring), vec![]);
        let area = gp.unsigned_area();
        let c = gp.centroid().expect("non-empty polygon");
        assert_close!(ours.area, area, rel = 1e-10);
        assert_close!(ours.centroid.x, c.x(), rel = 1e-10);
        assert_close!(ours.centroid.y, c.y(), rel = 1e-10);
    }
}

/// Arcs against `geo` on finely flattened outlines: the difference must stay within what
/// the flattening tolerance implies (area error of a chord ≈ (2/3)·chord·sagitta per arc piece).
#[test]
fn arcs_agree_with_geo_on_flattened_outlines() {
    use geo::{Area, Centroid};
    let mut rng = StdRng::seed_from_u64(17);
    for _ in 0..20 {
        let base = random_profile(&mut rng);
        let ours = only(vec![base[0].clone()]);
        let tol = 1e-5;
        let mut ring: Vec<geo::Coord<f64>> = Vec::new();
        for s in &base[0].segments {
            match s {
                Segment::Line { a, .. } | Segment::Curve(CurvePiece { a, .. }) => {
                    ring.push(geo::coord! {x: a.x, y: a.y})
                }
                Segment::Arc(arc) => {
                    // Chord count so that the sagitta r(1 − cos(Δ/2n)) stays below tol.
                    let step = 2.0 * (1.0 - tol / arc.radius).acos();
                    let n = (arc.sweep.abs() / step).ceil().max(1.0) as usize;
                    for k in 0..n {
                        let q = arc.point_at(k as f64 / n as f64);
                        ring.push(geo::coord! {x: q.x, y: q.y});
                    }
                }
            }
        }
        let gp = geo::Polygon::new(geo::LineString::from(ring), vec![]);
        let perimeter = ours.perimeter;
        // Each chord loses at most (2/3)·chord·tol of area: in total (2/3)·perimeter·tol.
        assert_close!(gp.unsigned_area(), ours.area, abs = perimeter * tol);
        let c = gp.centroid().expect("non-empty");
        assert_close!(c.x(), ours.centroid.x, abs = 1e-5);
        assert_close!(c.y(), ours.centroid.y, abs = 1e-5);
    }
}
