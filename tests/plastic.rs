//! Plastic neutral axes and plastic section moduli against closed forms, hand calculations and
//! a published table, and their invariances.
//!
//! Sources are named beside each check; check-values.md is ../shared/reference/check-values.md.

mod util;

use std::f64::consts::PI;

use sectio::analyze::{measure_drawing, Outcome, Settings};
use sectio::geom::curve::{Curve, EllipseArc, Nurbs};
use sectio::geom::{Point, Segment};
use sectio::import::{Drawing, Piece};
use sectio::section::{PlasticProps, SectionProps};
use util::*;

fn settings(merge: bool) -> Settings {
    Settings {
        plastic: true,
        merge,
        ..Settings::default()
    }
}

fn run(d: Drawing, merge: bool) -> Vec<Outcome> {
    measure_drawing(d, &settings(merge))
}

/// The only profile's properties and its plastic properties.
fn only_p(pieces: Vec<Piece>) -> (SectionProps, PlasticProps) {
    one(run(drawing(pieces), false))
}

fn one(out: Vec<Outcome>) -> (SectionProps, PlasticProps) {
    assert_eq!(out.len(), 1, "{out:#?}");
    let s = out[0].result.clone().expect("measured");
    (s, s.plastic.expect("plastic properties computed"))
}

#[test]
fn rectangle_far_from_the_origin() {
    let (b, h) = (40.0, 10.0);
    let (s, q) = only_p(vec![closed(rect(1e6, -3e5, b, h))]);
    // Rectangle: Wpl = bh²/4 about x, hb²/4 about y, shape factor 1.5 (Roark Table A.1; check-values §1).
    assert_close!(q.plastic_x, b * h * h / 4.0, rel = 1e-11);
    assert_close!(q.plastic_y, h * b * b / 4.0, rel = 1e-11);
    assert_close!(q.shape_x, 1.5, rel = 1e-11);
    assert_close!(q.shape_y, 1.5, rel = 1e-11);
    assert_close!(q.pna_x, 0.0, abs = 1e-9 * h);
    assert_close!(q.pna_y, 0.0, abs = 1e-9 * b);
    // Principal axes: i1 about y for a wide rectangle (θ = 90°).
    assert_eq!(s.theta_deg, 90.0);
    assert_close!(q.plastic_1, q.plastic_y, rel = 1e-13);
    assert_close!(q.plastic_2, q.plastic_x, rel = 1e-13);
    assert_close!(q.shape_1, 1.5, rel = 1e-11);
    assert_close!(q.shape_2, 1.5, rel = 1e-11);
    assert_close!(q.pna_1, 0.0, abs = 1e-9 * b);
    assert_close!(q.pna_2, 0.0, abs = 1e-9 * h);
}

#[test]
fn solid_circle_and_tube() {
    let d = 30.0;
    let (_, q) = only_p(vec![closed(circle(100.0, 50.0, d / 2.0))]);
    // Solid circle: Wpl = d³/6, shape factor 16/(3π) (Roark Table A.1; check-values §1).
    assert_close!(q.plastic_x, d.powi(3) / 6.0, rel = 1e-12);
    assert_close!(q.plastic_y, d.powi(3) / 6.0, rel = 1e-12);
    assert_close!(q.shape_x, 16.0 / (3.0 * PI), rel = 1e-12);
    let (dd, d) = (50.0, 44.0);
    let (_, q) = only_p(vec![
        closed(circle(-20.0, 7.0, dd / 2.0)),
        closed(circle(-20.0, 7.0, d / 2.0)),
    ]);
    // Hollow circle: Wpl = (D³ − d³)/6 (Roark Table A.1; check-values §1).
    assert_close!(q.plastic_x, (dd.powi(3) - d.powi(3)) / 6.0, rel = 1e-12);
    assert_close!(q.plastic_y, (dd.powi(3) - d.powi(3)) / 6.0, rel = 1e-12);
    assert_close!(q.plastic_1, (dd.powi(3) - d.powi(3)) / 6.0, rel = 1e-12);
}

/// A T: flange `bf` × `tf` on top of a web `tw` wide and `hw` deep, web centred, bottom at 0.
fn tee(bf: f64, tf: f64, tw: f64, hw: f64) -> Vec<Segment> {
    let (x1, x2) = (-tw / 2.0, tw / 2.0);
    poly(
        &[
            (x1, 0.0),
            (x2, 0.0),
            (x2, hw),
            (bf / 2.0, hw),
            (bf / 2.0, hw + tf),
            (-bf / 2.0, hw + tf),
            (-bf / 2.0, hw),
            (x1, hw),
        ],
        &[],
    )
}

#[test]
fn tee_with_the_neutral_axis_in_the_flange() {
    // Beer, Johnston, DeWolf & Mazurek, Mechanics of Materials, Sample Problem 4.2 (from
    // memory; check-values §7.1): flange 90 × 20 on a web 30 × 40, centroid 38 above the
    // bottom. By hand: A = 1800 + 1200 = 3000; half 1500 = 90·t gives t = 16.667 below the
    // top, PNA at 43.333 above the bottom, 5.333 above the centroid; Wpl,x = 1500·8.333
    // (flange above) + 300·1.667 (flange below) + 1200·23.333 (web) = 41 000; Wpl,y =
    // 20·90²/4 + 40·30²/4 = 49 500 (check-values §7.1 gives 41.0e3 and 49.5e3).
    let (s, q) = only_p(vec![closed(tee(90.0, 20.0, 30.0, 40.0))]);
    assert_close!(s.centroid.y, 38.0, rel = 1e-13);
    assert_close!(q.pna_x, 60.0 - 50.0 / 3.0 - 38.0, rel = 1e-11);
    assert_close!(q.plastic_x, 41_000.0, rel = 1e-11);
    assert_close!(q.plastic_y, 49_500.0, rel = 1e-11);
    assert_close!(q.pna_y, 0.0, abs = 1e-9);
}

#[test]
fn tee_with_the_neutral_axis_in_the_web() {
    // By hand: flange 100 × 10 on a web 10 × 150. A = 1000 + 1500 = 2500, half 1250 = 10·c
    // gives c = 125 above the bottom (in the web). Below: 1250·62.5 = 78 125; above: web
    // 10·25 at 12.5 → 3125, flange 1000 at 30 → 30 000; Wpl,x = 111 250. Centroid:
    // (1500·75 + 1000·155)/2500 = 107, so the PNA is 18 above it.
    let (s, q) = only_p(vec![closed(tee(100.0, 10.0, 10.0, 150.0))]);
    assert_close!(s.centroid.y, 107.0, rel = 1e-13);
    assert_close!(q.pna_x, 18.0, rel = 1e-11);
    assert_close!(q.plastic_x, 111_250.0, rel = 1e-11);
    // Shape factor: over the smaller elastic modulus (here to the bottom fibre, 107 from
    // the centroid against 53 to the top).
    assert_close!(q.shape_x, q.plastic_x / s.wx_bottom, rel = 1e-14);
    assert!(s.wx_bottom < s.wx_top);
}

#[test]
fn ipe_300_and_ipe_200_against_the_section_table() {
    // European section tables for EN 10365 sections (from memory, each value reproduced by
    // exact integration in check-values §4): IPE 300 A = 53.81 cm², Wpl,y = 628.4 cm³,
    // Wpl,z = 125.2 cm³; IPE 200 A = 28.48 cm², Wpl,y = 220.6 cm³, Wpl,z = 44.61 cm³.
    // Tolerance ±0.5 % (the tables round to 4 digits; check-values §4).
    for (h, b, tw, tf, r, area, wy, wz) in [
        (300.0, 150.0, 7.1, 10.7, 15.0, 53.81e2, 628.4e3, 125.2e3),
        (200.0, 100.0, 5.6, 8.5, 12.0, 28.48e2, 220.6e3, 44.61e3),
    ] {
        let (s, q) = only_p(vec![closed(i_section(h, b, tw, tf, r))]);
        assert_close!(s.area, area, rel = 5e-3);
        assert_close!(q.plastic_x, wy, rel = 5e-3);
        assert_close!(q.plastic_y, wz, rel = 5e-3);
        assert_close!(q.pna_x, 0.0, abs = 1e-9 * h);
        assert_close!(q.plastic_1, q.plastic_x, rel = 1e-12);
    }
}

#[test]
fn unequal_angle_by_hand() {
    // L 60 × 40 × 5, sharp corners: vertical leg x ∈ [0, 5], y ∈ [0, 60]; horizontal leg
    // x ∈ [5, 40], y ∈ [0, 5]. By hand: A = 300 + 175 = 475, half 237.5.
    // Axis ∥ x: the bottom strip y < 5 holds 200, so 200 + 5(c − 5) = 237.5, c = 12.5;
    // Wpl,x = 200·10 + 37.5·3.75 + 237.5·23.75 = 7781.25.
    // Axis ∥ y: the strip x < 5 holds 300, so 60c = 237.5, c = 3.958 33;
    // Wpl,y = 237.5·c/2 + 60(5 − c)²/2 + 175·(22.5 − c).
    let seg = poly(
        &[
            (0.0, 0.0),
            (40.0, 0.0),
            (40.0, 5.0),
            (5.0, 5.0),
            (5.0, 60.0),
            (0.0, 60.0),
        ],
        &[],
    );
    let (s, q) = only_p(vec![closed(seg.clone())]);
    let cy = (300.0 * 30.0 + 175.0 * 2.5) / 475.0;
    let cx = (300.0 * 2.5 + 175.0 * 22.5) / 475.0;
    assert_close!(s.centroid.y, cy, rel = 1e-13);
    assert_close!(q.pna_x, 12.5 - cy, rel = 1e-11);
    assert_close!(q.plastic_x, 7781.25, rel = 1e-11);
    let c: f64 = 237.5 / 60.0;
    assert_close!(q.pna_y, c - cx, rel = 1e-11);
    assert_close!(
        q.plastic_y,
        237.5 * c / 2.0 + 60.0 * (5.0 - c).powi(2) / 2.0 + 175.0 * (22.5 - c),
        rel = 1e-11
    );
    // The principal values equal the moduli of the section turned so that its principal
    // axes lie along x and y (two ways: frame rotation inside, drawing rotation here).
    let turn = Similarity {
        mirror_x: false,
        angle: -s.theta_deg.to_radians(),
        scale: 1.0,
        shift: p(3.0, -8.0),
    };
    let (s2, q2) = only_p(vec![turn.piece(&closed(seg))]);
    assert_close!(s2.theta_deg, 0.0, abs = 1e-9);
    assert_close!(q2.plastic_x, q.plastic_1, rel = 1e-10);
    assert_close!(q2.plastic_y, q.plastic_2, rel = 1e-10);
    assert!(q.plastic_1 > q.plastic_2);
    // And so do the neutral axes' offsets (axis 1 positive towards theta + 90°, axis 2
    // towards theta) and the shape factors (i1, i2 over the farthest fibres).
    assert_close!(q2.pna_x, q.pna_1, rel = 1e-9);
    assert_close!(q2.pna_y, q.pna_2, rel = 1e-9);
    assert!(q.pna_1.abs() > 1.0 && q.pna_2.abs() > 0.1); // unsymmetric: off the centroid
    assert_close!(q2.shape_x, q.shape_1, rel = 1e-9);
    assert_close!(q2.shape_y, q.shape_2, rel = 1e-9);
}

#[test]
fn two_rectangles_merged_and_an_island() {
    // Rectangles 10 × 20 and 30 × 5 side by side on y = 0, merged. By hand: A = 350, and
    // below c ≤ 5 lie 40c = 175, c = 4.375; Wpl,x = Σ b·((c² + (h − c)²)/2).
    let pieces = vec![
        closed(rect(0.0, 0.0, 10.0, 20.0)),
        closed(rect(50.0, 0.0, 30.0, 5.0)),
    ];
    let (s, q) = one(run(drawing(pieces), true));
    let c: f64 = 4.375;
    let want = 10.0 * (c * c + (20.0 - c).powi(2)) / 2.0 + 30.0 * (c * c + (5.0 - c).powi(2)) / 2.0;
    assert_close!(q.plastic_x, want, rel = 1e-11);
    assert_close!(q.pna_x, c - s.centroid.y, rel = 1e-11);
    // A square tube 100 (wall 10) with a 20 square island in its hole, merged: symmetric,
    // Wpl = (100·100² − 80·80² + 20·20²)/4 (rectangle bh²/4 by superposition; check-values §1).
    let pieces = vec![
        closed(rect(-50.0, -50.0, 100.0, 100.0)),
        closed(rect(-40.0, -40.0, 80.0, 80.0)),
        closed(rect(-10.0, -10.0, 20.0, 20.0)),
    ];
    let want = (100.0f64.powi(3) - 80.0f64.powi(3) + 20.0f64.powi(3)) / 4.0;
    let (_, q) = one(run(drawing(pieces.clone()), true));
    assert_close!(q.plastic_x, want, rel = 1e-12);
    assert_close!(q.plastic_y, want, rel = 1e-12);
    // Without --merge the island is a row of its own.
    let out = run(drawing(pieces), false);
    assert_eq!(out.len(), 2);
}

#[test]
fn ellipse_through_the_curve_path() {
    // Ellipse with semi-axes a (along x) and b: Wpl = 4ab²/3 about x, 4a²b/3 about y
    // (Roark Table A.1; check-values §1, ellipse row).
    let (a, b) = (50.0, 20.0);
    let e = |angle: f64, t0: f64, t1: f64| {
        let u = Point::new(angle.cos(), angle.sin());
        Curve::Ellipse(EllipseArc {
            center: Point::new(1e4, -2e3),
            u: u * a,
            v: Point::new(-u.y, u.x) * b,
            t0,
            t1,
        })
    };
    let (_, q) = one(run(curve_drawing(&[e(0.0, 0.0, 2.0 * PI)]), false));
    assert_close!(q.plastic_x, 4.0 * a * b * b / 3.0, rel = 1e-12);
    assert_close!(q.plastic_y, 4.0 * a * a * b / 3.0, rel = 1e-12);
    // Turned by 0.6 rad and drawn clockwise from another start: the principal values hold (the
    // major principal axis I1 is the minor axis of the ellipse).
    let (s, q) = one(run(curve_drawing(&[e(0.6, 1.0, 1.0 - 2.0 * PI)]), false));
    assert_close!(s.theta_deg, 0.6f64.to_degrees() - 90.0, abs = 1e-9);
    assert_close!(q.plastic_1, 4.0 * a * a * b / 3.0, rel = 1e-12);
    assert_close!(q.plastic_2, 4.0 * a * b * b / 3.0, rel = 1e-12);
}

#[test]
fn rational_and_polynomial_splines() {
    // A circle as a rational quadratic NURBS (nine control points, weights 1 and √2/2; Piegl
    // & Tiller, The NURBS Book, §7.5, from memory): Wpl = d³/6 (check-values §1).
    let r = 12.0;
    let w = 0.5f64.sqrt();
    let (cx, cy) = (300.0, 40.0);
    let ctrl: Vec<Point> = [
        (1.0, 0.0),
        (1.0, 1.0),
        (0.0, 1.0),
        (-1.0, 1.0),
        (-1.0, 0.0),
        (-1.0, -1.0),
        (0.0, -1.0),
        (1.0, -1.0),
        (1.0, 0.0),
    ]
    .iter()
    .map(|&(x, y)| Point::new(cx + r * x, cy + r * y))
    .collect();
    let knots = vec![
        0.0, 0.0, 0.0, 0.25, 0.25, 0.5, 0.5, 0.75, 0.75, 1.0, 1.0, 1.0,
    ];
    let weights = vec![1.0, w, 1.0, w, 1.0, w, 1.0, w, 1.0];
    let nurbs = Nurbs::new(2, knots, ctrl, weights).expect("valid circle");
    let (_, q) = one(run(curve_drawing(&[Curve::Nurbs(nurbs)]), false));
    // Rational spans integrate adaptively to 1e-13 of their size.
    assert_close!(q.plastic_x, (2.0 * r).powi(3) / 6.0, rel = 1e-11);
    assert_close!(q.plastic_y, (2.0 * r).powi(3) / 6.0, rel = 1e-11);
    // A 30 × 12 rectangle as a cubic spline: each edge a cubic Bézier span with its control
    // points at thirds of the edge (a straight line, uniformly parametrised). Wpl = bh²/4
    // (check-values §1).
    let corners = [(0.0, 0.0), (30.0, 0.0), (30.0, 12.0), (0.0, 12.0)];
    let mut ctrl = Vec::new();
    for i in 0..4 {
        let (a, b) = (corners[i], corners[(i + 1) % 4]);
        for k in 0..3 {
            let t = k as f64 / 3.0;
            ctrl.push(Point::new(a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1)));
        }
    }
    ctrl.push(Point::new(0.0, 0.0));
    let mut knots = vec![0.0; 4];
    for k in 1..4 {
        knots.extend([k as f64; 3]);
    }
    knots.extend([4.0; 4]);
    let nurbs = Nurbs::new(3, knots, ctrl, Vec::new()).expect("valid spline");
    let (_, q) = one(run(curve_drawing(&[Curve::Nurbs(nurbs)]), false));
    assert_close!(q.plastic_x, 30.0 * 144.0 / 4.0, rel = 1e-12);
    assert_close!(q.plastic_y, 12.0 * 900.0 / 4.0, rel = 1e-12);
}

/// The corners of a random outline: points sorted by their angle about (0, 0).
fn random_outline(r: &mut impl FnMut() -> f64) -> Vec<(f64, f64)> {
    let n = 3 + (r() * 9.0) as usize;
    let mut angles: Vec<f64> = (0..n).map(|_| r() * 2.0 * PI).collect();
    angles.sort_by(f64::total_cmp);
    angles
        .iter()
        .map(|&a| {
            let rho = 10.0 + 40.0 * r();
            (rho * a.cos(), rho * a.sin())
        })
        .collect()
}

fn uniform(seed: u64) -> impl FnMut() -> f64 {
    // xorshift64*, seeded (common practice).
    let mut s = seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) | 1;
    move || {
        s ^= s >> 12;
        s ^= s << 25;
        s ^= s >> 27;
        (s.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Area of the part of the polygon with y ≥ c: Sutherland–Hodgman clipping by one
/// half-plane, exact for concave polygons too (check-values §7.3), then the shoelace formula.
fn area_above(pts: &[(f64, f64)], c: f64) -> f64 {
    let mut out: Vec<(f64, f64)> = Vec::new();
    for i in 0..pts.len() {
        let (a, b) = (pts[i], pts[(i + 1) % pts.len()]);
        let (ia, ib) = (a.1 >= c, b.1 >= c);
        if ia {
            out.push(a);
        }
        if ia != ib {
            let t = (c - a.1) / (b.1 - a.1);
            out.push((a.0 + t * (b.0 - a.0), c));
        }
    }
    let n = out.len();
    (0..n)
        .map(|i| {
            let (a, b) = (out[i], out[(i + 1) % n]);
            a.0 * b.1 - b.0 * a.1
        })
        .sum::<f64>()
        / 2.0
}

#[test]
fn invariances_on_random_outlines() {
    let mut r = uniform(5);
    let mut checked = 0;
    for round in 0..300 {
        let pts = random_outline(&mut r);
        let bulged = round % 2 == 1;
        let bulges: Vec<f64> = if bulged {
            pts.iter().map(|_| 0.3 * (r() - 0.5)).collect()
        } else {
            Vec::new()
        };
        let piece = closed(poly(&pts, &bulges));
        let out = run(drawing(vec![piece.clone()]), false);
        if out.len() != 1 || out[0].result.is_err() {
            continue;
        }
        checked += 1;
        let (s, q) = one(out);
        // Plastic modulus ≥ the smaller elastic modulus about the same axis: the fully
        // plastic moment exceeds the first-yield moment (common practice; Neal, The Plastic
        // Methods of Structural Analysis, ch. 1, from memory).
        assert!(q.plastic_x >= s.wx_top.min(s.wx_bottom) * (1.0 - 1e-12));
        assert!(q.plastic_y >= s.wy_left.min(s.wy_right) * (1.0 - 1e-12));
        assert!(q.shape_x >= 1.0 - 1e-12 && q.shape_y >= 1.0 - 1e-12);
        // Polygons: the plastic neutral axis halves the area, checked by clipping.
        if !bulged {
            let c = s.centroid.y + q.pna_x;
            // (The outline may run clockwise when its points span less than a half turn.)
            assert_close!(area_above(&pts, c).abs(), s.area / 2.0, rel = 1e-9);
        }
        let with = |sim: Similarity| one(run(drawing(vec![sim.piece(&piece)]), false));
        // Scaling by k multiplies the moduli by k³ and the offsets by k.
        let k = 2.5;
        let (_, qs) = with(Similarity {
            mirror_x: false,
            angle: 0.0,
            scale: k,
            shift: p(1e5, -7e4),
        });
        assert_close!(qs.plastic_x, q.plastic_x * k.powi(3), rel = 1e-10);
        assert_close!(qs.plastic_y, q.plastic_y * k.powi(3), rel = 1e-10);
        assert_close!(qs.plastic_1, q.plastic_1 * k.powi(3), rel = 1e-9);
        assert_close!(qs.pna_x, q.pna_x * k, abs = 1e-9 * k * 50.0);
        // A quarter turn swaps x and y: the new up is the old right, the new right the old down.
        let (_, qr) = with(Similarity {
            mirror_x: false,
            angle: PI / 2.0,
            scale: 1.0,
            shift: p(0.0, 0.0),
        });
        assert_close!(qr.plastic_x, q.plastic_y, rel = 1e-10);
        assert_close!(qr.plastic_y, q.plastic_x, rel = 1e-10);
        assert_close!(qr.pna_x, q.pna_y, abs = 1e-9 * 50.0);
        assert_close!(qr.pna_y, -q.pna_x, abs = 1e-9 * 50.0);
        // A mirror image keeps the moduli and turns the offset across the mirror.
        let (_, qm) = with(Similarity {
            mirror_x: true,
            angle: 0.0,
            scale: 1.0,
            shift: p(0.0, 0.0),
        });
        assert_close!(qm.plastic_x, q.plastic_x, rel = 1e-10);
        assert_close!(qm.plastic_y, q.plastic_y, rel = 1e-10);
        assert_close!(qm.plastic_1, q.plastic_1, rel = 1e-9);
        assert_close!(qm.pna_y, -q.pna_y, abs = 1e-9 * 50.0);
    }
    assert!(checked > 200, "only {checked} outlines measured");
}
