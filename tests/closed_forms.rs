//! Exact properties of basic shapes against their closed forms.
//!
//! Sources: the closed forms are the standard plane-area table entries (Roark's Formulas for
//! Stress and Strain, Table A.1 "Properties of plane areas", from memory), as collected with
//! their check values in ../shared/reference/check-values.md §1.

mod util;

use std::f64::consts::PI;
use util::*;

#[test]
fn rectangle() {
    let (b, h) = (40.0, 10.0);
    let s = only(vec![closed(rect(3.0, -7.0, b, h))]);
    // Rectangle b×h: A = bh, Ix = bh³/12, Iy = hb³/12, Wel = bh²/6, i = h/√12 (Roark Table A.1; check-values §1).
    assert_close!(s.area, b * h, rel = 1e-14);
    assert_close!(s.centroid.x, 3.0 + b / 2.0, rel = 1e-14);
    assert_close!(s.centroid.y, -7.0 + h / 2.0, rel = 1e-14);
    assert_close!(s.ixx, b * h.powi(3) / 12.0, rel = 1e-13);
    assert_close!(s.iyy, h * b.powi(3) / 12.0, rel = 1e-13);
    assert_close!(s.ixy, 0.0, abs = 1e-9);
    assert_close!(s.wx_top, b * h * h / 6.0, rel = 1e-13);
    assert_close!(s.wx_bottom, b * h * h / 6.0, rel = 1e-13);
    assert_close!(s.wy_left, h * b * b / 6.0, rel = 1e-13);
    assert_close!(s.rx, h / 12f64.sqrt(), rel = 1e-13);
    assert_close!(s.perimeter, 2.0 * (b + h), rel = 1e-14);
    // Major axis along x for a wide rectangle: I1 = Iy, at 90°.
    assert_close!(s.i1, s.iyy, rel = 1e-13);
    assert_close!(s.theta_deg, 90.0, abs = 1e-9);
}

#[test]
fn solid_circle() {
    let (d, r) = (30.0, 15.0);
    let s = only(vec![closed(circle(100.0, 50.0, r))]);
    // Solid circle: A = πd²/4, I = πd⁴/64, Wel = πd³/32, i = d/4 (Roark Table A.1; check-values §1).
    assert_close!(s.area, PI * d * d / 4.0, rel = 1e-14);
    assert_close!(s.ixx, PI * d.powi(4) / 64.0, rel = 1e-13);
    assert_close!(s.iyy, PI * d.powi(4) / 64.0, rel = 1e-13);
    assert_close!(s.wx_top, PI * d.powi(3) / 32.0, rel = 1e-13);
    assert_close!(s.rx, d / 4.0, rel = 1e-13);
    assert_close!(s.ip, PI * d.powi(4) / 32.0, rel = 1e-13);
    assert_close!(s.centroid.x, 100.0, rel = 1e-15);
    assert_eq!(s.theta_deg, 0.0, "equal principal moments report 0°");
    assert_close!(s.perimeter, PI * d, rel = 1e-14);
}

#[test]
fn tube() {
    let (dd, d) = (50.0, 44.0);
    let s = only(vec![
        closed(circle(0.0, 0.0, dd / 2.0)),
        closed(circle(0.0, 0.0, d / 2.0)),
    ]);
    // Hollow circle: A = π(D²−d²)/4, I = π(D⁴−d⁴)/64, Wel = π(D⁴−d⁴)/(32D), i = √(D²+d²)/4 (Roark Table A.1; check-values §1).
    assert_eq!(s.n_holes, 1);
    assert_close!(s.area, PI * (dd * dd - d * d) / 4.0, rel = 1e-13);
    assert_close!(s.ixx, PI * (dd.powi(4) - d.powi(4)) / 64.0, rel = 1e-13);
    assert_close!(
        s.wx_top,
        PI * (dd.powi(4) - d.powi(4)) / (32.0 * dd),
        rel = 1e-13
    );
    assert_close!(s.rx, (dd * dd + d * d).sqrt() / 4.0, rel = 1e-13);
    assert_close!(s.perimeter, PI * (dd + d), rel = 1e-14);
    assert_close!(s.perimeter_outer, PI * dd, rel = 1e-14);
}

#[test]
fn right_triangle_centroid_at_thirds() {
    let (b, h) = (30.0, 12.0);
    let s = only(vec![closed(poly(&[(0.0, 0.0), (b, 0.0), (0.0, h)], &[]))]);
    // Triangle: A = bh/2, centroid a third of the height from each side (job.md "Facts of the
    // trade"; Roark Table A.1), Ix = bh³/36, Iy = hb³/36 (check-values §1).
    assert_close!(s.area, b * h / 2.0, rel = 1e-14);
    assert_close!(s.centroid.x, b / 3.0, rel = 1e-14);
    assert_close!(s.centroid.y, h / 3.0, rel = 1e-14);
    assert_close!(s.ixx, b * h.powi(3) / 36.0, rel = 1e-13);
    assert_close!(s.iyy, h * b.powi(3) / 36.0, rel = 1e-13);
    // Right triangle with the right angle at the origin and legs along +x, +y: centroidal
    // product of area −b²h²/72 (Gere & Timoshenko, Mechanics of Materials, Appendix D; from memory).
    assert_close!(s.ixy, -b * b * h * h / 72.0, rel = 1e-13);
    // Elastic moduli: apex side bh²/24, base side bh²/12 (check-values §1).
    assert_close!(s.wx_top, b * h * h / 24.0, rel = 1e-13);
    assert_close!(s.wx_bottom, b * h * h / 12.0, rel = 1e-13);
    assert_close!(s.ry, (s.iyy / s.area).sqrt(), rel = 1e-15);
    // Radius of gyration about x: h/√18 (check-values §1).
    assert_close!(s.rx, h / 18f64.sqrt(), rel = 1e-13);
}

#[test]
fn semicircle() {
    let r = 20.0;
    // Diameter along x from (−r, 0) to (r, 0), then the arc back over the top (bulge 1 = 180°).
    let s = only(vec![closed(poly(&[(-r, 0.0), (r, 0.0)], &[0.0, 1.0]))]);
    // Semicircle: A = πr²/2, centroid 4r/(3π) from the diameter, Ix = (π/8 − 8/(9π))r⁴,
    // Iy = πr⁴/8, Wel to the arc 0.190687 r³ and to the diameter 0.258609 r³ (check-values §1).
    assert_close!(s.area, PI * r * r / 2.0, rel = 1e-14);
    assert_close!(s.centroid.y, 4.0 * r / (3.0 * PI), rel = 1e-13);
    assert_close!(s.centroid.x, 0.0, abs = 1e-12);
    assert_close!(
        s.ixx,
        (PI / 8.0 - 8.0 / (9.0 * PI)) * r.powi(4),
        rel = 1e-13
    );
    assert_close!(s.iyy, PI * r.powi(4) / 8.0, rel = 1e-13);
    assert_close!(s.wx_top, 0.190687 * r.powi(3), rel = 2e-6);
    assert_close!(s.wx_bottom, 0.258609 * r.powi(3), rel = 2e-6);
    assert_close!(s.ymax_check(), r, rel = 1e-15);
}

trait Ymax {
    fn ymax_check(&self) -> f64;
}
impl Ymax for sectio::section::SectionProps {
    fn ymax_check(&self) -> f64 {
        self.bbox.max.y
    }
}

#[test]
fn quarter_circle_product_of_area() {
    let r = 10.0;
    // Quadrant x ≥ 0, y ≥ 0: straight edges on the axes, arc from (r,0) to (0,r) (bulge tan(22.5°)).
    let s = only(vec![closed(poly(
        &[(0.0, 0.0), (r, 0.0), (0.0, r)],
        &[0.0, (PI / 8.0).tan(), 0.0],
    ))]);
    // Quarter circle: A = πr²/4, centroid 4r/(3π) from each edge, Ix = Iy = (π/16 − 4/(9π))r⁴,
    // Ixy = (1/8 − 4/(9π))r⁴ = −0.016471 r⁴ for this quadrant; principal 0.071350 r⁴ and
    // 0.038407 r⁴ (check-values §1).
    assert_close!(s.area, PI * r * r / 4.0, rel = 1e-14);
    assert_close!(s.centroid.x, 4.0 * r / (3.0 * PI), rel = 1e-13);
    assert_close!(
        s.ixx,
        (PI / 16.0 - 4.0 / (9.0 * PI)) * r.powi(4),
        rel = 1e-13
    );
    assert_close!(
        s.ixy,
        (1.0 / 8.0 - 4.0 / (9.0 * PI)) * r.powi(4),
        rel = 1e-12
    );
    assert_close!(s.i1, 0.071350 * r.powi(4), rel = 1e-5);
    assert_close!(s.i2, 0.038407 * r.powi(4), rel = 2e-5);
    // The principal values are the extremes of the moment about a rotated axis (Mohr's circle).
    let about = |phi: f64| {
        let (s2, c2) = (2.0 * phi).sin_cos();
        (s.ixx + s.iyy) / 2.0 + (s.ixx - s.iyy) / 2.0 * c2 - s.ixy * s2
    };
    assert_close!(about(s.theta_deg.to_radians()), s.i1, rel = 1e-12);
    assert_close!(
        about(s.theta_deg.to_radians() + PI / 2.0),
        s.i2,
        rel = 1e-12
    );
}

#[test]
fn rounded_rectangle() {
    let (b, h, r) = (60.0, 30.0, 5.0);
    let t = (PI / 8.0).tan(); // bulge of a 90° arc
    let s = only(vec![closed(poly(
        &[
            (r, 0.0),
            (b - r, 0.0),
            (b, r),
            (b, h - r),
            (b - r, h),
            (r, h),
            (0.0, h - r),
            (0.0, r),
        ],
        &[0.0, t, 0.0, t, 0.0, t, 0.0, t],
    ))]);
    // Composition with the parallel-axis theorem of table entries (rectangle, square corner,
    // quarter circle; Roark Table A.1, check-values §1): A = bh − (4 − π)r².
    assert_close!(s.area, b * h - (4.0 - PI) * r * r, rel = 1e-13);
    let corner_sq = r.powi(4) / 12.0 + r * r * (h / 2.0 - r / 2.0).powi(2);
    let qc_y = h / 2.0 - r + 4.0 * r / (3.0 * PI);
    let corner_qc = (PI / 16.0 - 4.0 / (9.0 * PI)) * r.powi(4) + PI * r * r / 4.0 * qc_y * qc_y;
    let ixx = b * h.powi(3) / 12.0 - 4.0 * (corner_sq - corner_qc);
    assert_close!(s.ixx, ixx, rel = 1e-12);
    assert_close!(s.centroid.x, b / 2.0, rel = 1e-14);
    assert_close!(s.centroid.y, h / 2.0, rel = 1e-14);
    assert_close!(
        s.perimeter,
        2.0 * (b + h) - 8.0 * r + 2.0 * PI * r,
        rel = 1e-14
    );
}

#[test]
fn circular_segments_small_and_large() {
    // Segment of a circle cut by a chord, included angle θ: A = r²(θ − sin θ)/2, centroid
    // 4r·sin³(θ/2) / (3(θ − sin θ)) from the centre (Roark Table A.1; from memory).
    // Covers the series branch (θ < 2) and the closed-form branch of the integration.
    for &theta in &[1e-3, 0.05, 0.7, 1.9, 2.1, 3.0, PI, 4.5, 6.0] {
        let r = 7.0;
        let half = theta / 2.0;
        let (a, b) = (
            (r * (-half).sin(), r * (-half).cos()),
            (r * half.sin(), r * half.cos()),
        );
        // Chord from b to a, then the arc from a round the top to b, clockwise about the
        // centre at the origin; arc midpoint at (0, r).
        let pts = [b, a];
        let bulge = -(theta / 4.0).tan();
        let segs = poly(&pts, &[0.0, bulge]);
        let s = only(vec![closed(segs)]);
        // θ − sin θ by its Taylor series where the direct difference would cancel.
        let t_minus_sin = if theta < 0.1 {
            theta.powi(3) / 6.0 - theta.powi(5) / 120.0 + theta.powi(7) / 5040.0
        } else {
            theta - theta.sin()
        };
        let area = r * r * t_minus_sin / 2.0;
        let yc = 4.0 * r * half.sin().powi(3) / (3.0 * t_minus_sin);
        assert_close!(s.area, area, rel = 1e-11);
        assert_close!(s.centroid.y, yc, rel = 1e-11);
        assert_close!(s.centroid.x, 0.0, abs = 1e-12 * r);
    }
}

#[test]
fn nearly_straight_arc_keeps_precision() {
    // A 100 × 10 rectangle whose top edge is an arc of radius 1e7 (sagitta 1.25e-4): the
    // properties must equal the rectangle's plus the thin segment, with no cancellation noise.
    let (b, h) = (100.0, 10.0);
    let big_r: f64 = 1e7;
    let theta = 2.0 * (b / 2.0 / big_r).asin();
    let bulge = (theta / 4.0).tan();
    let s = only(vec![closed(poly(
        &[(0.0, 0.0), (b, 0.0), (b, h), (0.0, h)],
        &[0.0, 0.0, bulge, 0.0],
    ))]);
    // Segment area r²(θ − sin θ)/2 (Roark Table A.1; from memory), series form for tiny θ.
    let seg = big_r * big_r * (theta.powi(3) / 6.0 - theta.powi(5) / 120.0) / 2.0;
    assert_close!(s.area, b * h + seg, rel = 1e-14);
    assert!(seg > 0.0 && s.area > b * h);
}
