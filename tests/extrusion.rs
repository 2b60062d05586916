//! The extruder's figures (circumscribing circle, thinnest wall, thickest section, hollows,
//! surfaces, outline centroid, mass per metre) against closed forms, hand calculations and a
//! published table, and their invariances.
//!
//! Sources are named beside each check; check-values.md is ../shared/reference/check-values.md.

mod util;

use std::f64::consts::{PI, SQRT_2};

use sectio::analyze::{measure_drawing, Outcome, Settings};
use sectio::geom::curve::{Curve, EllipseArc};
use sectio::geom::{Point, Segment};
use sectio::import::{LengthUnit, Piece};
use sectio::report::{header, numeric_values, Tiers};
use sectio::section::{ExtrusionProps, SectionProps};
use util::*;

fn settings(merge: bool) -> Settings {
    Settings {
        extrusion: true,
        merge,
        ..Settings::default()
    }
}

fn one(out: Vec<Outcome>) -> (SectionProps, ExtrusionProps) {
    assert_eq!(out.len(), 1, "{out:#?}");
    assert!(out[0].message.is_empty(), "{}", out[0].message);
    let s = out[0].result.clone().expect("measured");
    (s, s.extrusion.expect("extrusion figures computed"))
}

fn only_x(pieces: Vec<Piece>) -> (SectionProps, ExtrusionProps) {
    one(measure_drawing(drawing(pieces), &settings(false)))
}

/// Distance from `q` to the nearest of `segs`, by sampling lines and arcs finely enough for
/// the checks below (points on the boundary come out at 0 to rounding).
fn distance_to_boundary(segs: &[Segment], q: Point) -> f64 {
    segs.iter()
        .map(|s| sectio::geom::predicates::distance_to(s, q))
        .fold(f64::INFINITY, f64::min)
}

/// The two ends of the thinnest wall lie on the boundary and the reported distance apart.
fn check_wall_ends(x: &ExtrusionProps, segs: &[Segment], scale: f64) {
    assert_close!(
        distance_to_boundary(segs, x.thinnest_wall_from),
        0.0,
        abs = 1e-9 * scale
    );
    assert_close!(
        distance_to_boundary(segs, x.thinnest_wall_to),
        0.0,
        abs = 1e-9 * scale
    );
    assert_close!(
        x.thinnest_wall_from.dist(x.thinnest_wall_to),
        x.thinnest_wall,
        rel = 1e-12
    );
}

#[test]
fn circumscribing_circle_of_a_rectangle_is_its_diagonal() {
    let (w, h) = (40.0, 30.0);
    let (_, x) = only_x(vec![closed(rect(1e5, -2e4, w, h))]);
    // Rectangle: the smallest circle holding it has the diagonal √(w² + h²) as its
    // diameter (closed form, from memory).
    assert_close!(x.circumscribed_diameter, 50.0, rel = 1e-12);
    assert_close!(x.circumscribed_center.x, 1e5 + w / 2.0, abs = 1e-9);
    assert_close!(x.circumscribed_center.y, -2e4 + h / 2.0, abs = 1e-9);
}

#[test]
fn circumscribing_circle_of_an_equilateral_triangle() {
    let a = 30.0;
    let tri = poly(
        &[(0.0, 0.0), (a, 0.0), (a / 2.0, a * 3f64.sqrt() / 2.0)],
        &[],
    );
    let (s, x) = only_x(vec![closed(tri)]);
    // Equilateral triangle of side a: circumradius a/√3, centred on the centroid (closed
    // form, from memory).
    assert_close!(x.circumscribed_diameter, 2.0 * a / 3f64.sqrt(), rel = 1e-12);
    assert_close!(x.circumscribed_center.x, s.centroid.x, abs = 1e-12 * a);
    assert_close!(x.circumscribed_center.y, s.centroid.y, abs = 1e-12 * a);
    // No two walls face each other: the thinnest wall is the largest inscribed circle's
    // diameter, 2·a/(2√3) (inradius of the equilateral triangle, closed form, from memory).
    assert_close!(x.thickest_section, a / 3f64.sqrt(), rel = 1e-6);
    assert_eq!(x.thinnest_wall, x.thickest_section);
}

/// A rectangle L × 2r whose right end is a semicircle of radius r centred on (L, 0).
fn slot(l: f64, r: f64) -> Vec<Segment> {
    // Bulge 1 = tan(180°/4): a counter-clockwise half turn (DXF reference, group 42).
    poly(
        &[(0.0, -r), (l, -r), (l, r), (0.0, r)],
        &[0.0, 1.0, 0.0, 0.0],
    )
}

#[test]
fn circumscribing_circle_touches_the_extreme_point_of_an_arc() {
    let (l, r) = (60.0, 10.0);
    let (_, x) = only_x(vec![closed(slot(l, r))]);
    // By hand: the circle passes through the corners (0, ±r) and the arc's extreme point
    // (L + r, 0), not a vertex. Its centre (x0, 0) has x0² + r² = (L + r − x0)², so the
    // diameter is ((L + r)² + r²)/(L + r) = 5000/70. The vertices alone would give
    // √(L² + 4r²) = 63.2.
    assert_close!(x.circumscribed_diameter, 5000.0 / 70.0, rel = 1e-12);
    assert_close!(x.circumscribed_center.y, 0.0, abs = 1e-12 * l);
    // Moved and turned: the same circle, moved and turned with it.
    let f = Similarity {
        mirror_x: false,
        angle: 0.7,
        scale: 1.0,
        shift: p(1e5, -3e4),
    };
    let (_, y) = only_x(vec![f.piece(&closed(slot(l, r)))]);
    assert_close!(
        y.circumscribed_diameter,
        x.circumscribed_diameter,
        rel = 1e-10
    );
    assert_close!(
        y.circumscribed_center.dist(f.apply(x.circumscribed_center)),
        0.0,
        abs = 1e-9
    );
}

#[test]
fn outline_centroid_of_the_slot_and_an_angle_by_hand() {
    let (l, r) = (60.0, 10.0);
    let (_, x) = only_x(vec![closed(slot(l, r))]);
    // By hand: two lines of length L with midpoints at x = L/2, the left side at x = 0, and a
    // semicircular arc of length πr whose centroid lies 2r/π beyond its diameter (centroid
    // of a semicircular arc, from memory): x̄ = (L² + πr·(L + 2r/π)) / (2L + 2r + πr).
    let want = (l * l + PI * r * (l + 2.0 * r / PI)) / (2.0 * l + 2.0 * r + PI * r);
    assert_close!(x.outline_centroid.x, want, rel = 1e-13);
    assert_close!(x.outline_centroid.y, 0.0, abs = 1e-13 * l);
    // L 60 × 40 × 5 with sharp corners; by hand from the six edges' midpoints and lengths
    // (40, 5, 35, 55, 5, 60; total 200): Σx·ℓ = 2075, Σy·ℓ = 4075.
    let angle = poly(
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
    let (_, x) = only_x(vec![closed(angle.clone())]);
    assert_close!(x.outline_centroid.x, 10.375, rel = 1e-13);
    assert_close!(x.outline_centroid.y, 20.375, rel = 1e-13);
    // Both legs are 5 thick: the thinnest wall (by construction).
    assert_close!(x.thinnest_wall, 5.0, rel = 1e-12);
    check_wall_ends(&x, &angle, 60.0);
}

#[test]
fn tube_wall_hollows_and_surfaces() {
    let (dd, d) = (50.0, 44.0);
    let pieces = vec![
        closed(circle(300.0, -40.0, dd / 2.0)),
        closed(circle(300.0, -40.0, d / 2.0)),
    ];
    let segs: Vec<Segment> = pieces.iter().flat_map(|p| p.segments.clone()).collect();
    let (s, x) = only_x(pieces);
    // Tube: wall (D − d)/2 (closed form); the largest circle in the wall has that diameter.
    assert_close!(x.thinnest_wall, (dd - d) / 2.0, rel = 1e-12);
    assert_close!(x.thickest_section, (dd - d) / 2.0, rel = 1e-12);
    check_wall_ends(&x, &segs, dd);
    assert_close!(x.circumscribed_diameter, dd, rel = 1e-12);
    assert_close!(x.outline_centroid.x, 300.0, abs = 1e-12 * dd);
    assert_eq!(x.hollows, 1);
    // Perimeters πD and πd (closed form); surface per metre = perimeter in metres.
    assert_close!(x.perimeter_inner, PI * d, rel = 1e-13);
    assert_close!(x.perimeter_outer, PI * dd, rel = 1e-13);
    assert_close!(x.surface_outer(), PI * dd * 1e-3, rel = 1e-13);
    assert_close!(x.surface_inner(), PI * d * 1e-3, rel = 1e-13);
    assert_close!(x.surface(), s.perimeter * 1e-3, rel = 1e-13);
}

/// A rectangular hollow section h × b × t, centred on (0, 0); corner radii `ro` outside and
/// `ri` inside (both 0 for sharp corners, else concentric: ro − ri = t).
fn rhs(h: f64, b: f64, t: f64, ro: f64, ri: f64) -> Vec<Piece> {
    let loop_ = |w: f64, hh: f64, r: f64| {
        let (x, y) = (w / 2.0, hh / 2.0);
        if r == 0.0 {
            return poly(&[(-x, -y), (x, -y), (x, y), (-x, y)], &[]);
        }
        let q = (PI / 8.0).tan(); // a counter-clockwise quarter turn
        poly(
            &[
                (-x + r, -y),
                (x - r, -y),
                (x, -y + r),
                (x, y - r),
                (x - r, y),
                (-x + r, y),
                (-x, y - r),
                (-x, -y + r),
            ],
            &[0.0, q, 0.0, q, 0.0, q, 0.0, q],
        )
    };
    vec![
        closed(loop_(b, h, ro)),
        closed(loop_(b - 2.0 * t, h - 2.0 * t, ri)),
    ]
}

#[test]
fn rectangular_hollow_section_wall() {
    let (h, b, t) = (100.0, 50.0, 4.0);
    let pieces = rhs(h, b, t, 0.0, 0.0);
    let segs: Vec<Segment> = pieces.iter().flat_map(|p| p.segments.clone()).collect();
    let (_, x) = only_x(pieces);
    // RHS 100 × 50 × 4: the wall is t (by construction).
    assert_close!(x.thinnest_wall, t, rel = 1e-12);
    check_wall_ends(&x, &segs, h);
    // Sharp corners: the largest circle sits in a corner, touching both outer faces and the
    // inner corner point: ρ = √2·(t − ρ), diameter 2(2 − √2)·t (by hand).
    assert_close!(x.thickest_section, 2.0 * (2.0 - SQRT_2) * t, rel = 1e-6);
    assert_eq!(x.hollows, 1);
    // Corner radii 2t outside and t inside (EN 10219-2 practice, check-values §4b): the wall
    // stays t everywhere, the corners included.
    let pieces = rhs(h, b, t, 2.0 * t, t);
    let segs: Vec<Segment> = pieces.iter().flat_map(|p| p.segments.clone()).collect();
    let (_, x) = only_x(pieces.clone());
    assert_close!(x.thinnest_wall, t, rel = 1e-12);
    assert_close!(x.thickest_section, t, rel = 1e-9);
    check_wall_ends(&x, &segs, h);
    // Box diagonal less the corner: the circle touches the two far corner arcs, so its
    // diameter is 2·(√(((h/2 − r)² + (b/2 − r)²)) + r) (by hand).
    let r = 2.0 * t;
    let want = 2.0 * ((h / 2.0 - r).hypot(b / 2.0 - r) + r);
    assert_close!(x.circumscribed_diameter, want, rel = 1e-12);
    // Turned and moved far away: the same figures.
    let f = Similarity {
        mirror_x: true,
        angle: 1.1,
        scale: 1.0,
        shift: p(-2e5, 7e4),
    };
    let moved: Vec<Piece> = pieces.iter().map(|pc| f.piece(pc)).collect();
    let (_, y) = only_x(moved);
    assert_close!(y.thinnest_wall, t, rel = 1e-9);
    assert_close!(y.thickest_section, t, rel = 1e-9);
    assert_close!(y.circumscribed_diameter, want, rel = 1e-10);
    assert_close!(
        y.outline_centroid.dist(f.apply(x.outline_centroid)),
        0.0,
        abs = 1e-8
    );
}

#[test]
fn slot_shaped_neck_gives_the_waist() {
    // Two lobes joined by a waist: a 40 × 30 block whose top and bottom edges are arcs
    // sagging 12 towards the middle (bulge −2·12/40: clockwise, 2 × sagitta / chord per the
    // DXF reference), leaving a waist of w = 30 − 2·12 = 6 at x = 0 (by construction).
    let neck = poly(
        &[(-20.0, -15.0), (20.0, -15.0), (20.0, 15.0), (-20.0, 15.0)],
        &[-0.6, 0.0, -0.6, 0.0],
    );
    let (s, x) = only_x(vec![closed(neck.clone())]);
    assert!(s.area < 40.0 * 30.0);
    assert_close!(x.thinnest_wall, 6.0, rel = 1e-9);
    check_wall_ends(&x, &neck, 40.0);
    assert_close!(x.thinnest_wall_from.x, 0.0, abs = 1e-4);
    assert!(x.thickest_section > 6.0);
}

#[test]
fn solid_rectangle_and_circle() {
    let (b, h) = (40.0, 10.0);
    let (_, x) = only_x(vec![closed(rect(7.0, 3.0, b, h))]);
    // Solid rectangle: the double normal across it is its smaller side, and so is the
    // largest inscribed circle's diameter (closed form).
    assert_close!(x.thinnest_wall, h, rel = 1e-12);
    assert_close!(x.thickest_section, h, rel = 1e-12);
    assert_eq!(x.hollows, 0);
    assert_eq!(x.perimeter_inner, 0.0);
    let d = 30.0;
    let (_, x) = only_x(vec![closed(circle(-5.0, 8.0, d / 2.0))]);
    // Solid circle: every diameter is a double normal, and the circle itself is the largest
    // inscribed one (closed form).
    assert_close!(x.thinnest_wall, d, rel = 1e-12);
    assert_close!(x.thickest_section, d, rel = 1e-9);
    assert_close!(x.thickest_center.dist(p(-5.0, 8.0)), 0.0, abs = 1e-6);
    assert_close!(x.circumscribed_diameter, d, rel = 1e-12);
}

#[test]
fn ipe_300_mass_per_metre_against_the_section_table() {
    // IPE 300 (h 300, b 150, tw 7.1, tf 10.7, r 15): G = 42.2 kg/m at 7850 kg/m³ (European
    // section tables for EN 10365 sections, check-values §4; reproduced there from the
    // dimensions). Tolerance ±0.5 % (tables round; check-values §4).
    let ipe = i_section(300.0, 150.0, 7.1, 10.7, 15.0);
    let out = measure_drawing(drawing(vec![closed(ipe.clone())]), &settings(false));
    let names = header(LengthUnit::MM, Tiers::ALL);
    let values = numeric_values(&out[0], LengthUnit::MM, 7850.0, Tiers::ALL).expect("ok row");
    let col = |name: &str| {
        let k = names.iter().position(|h| h == name).expect(name) - 6; // six text columns
        values[k]
    };
    assert_close!(col("mass_kg_per_m"), 42.2, rel = 5e-3);
    // The web is the thinnest wall, tw = 7.1 (by construction; check-values §4 dimensions).
    assert_close!(col("thinnest_wall_mm"), 7.1, rel = 1e-12);
    let (_, x) = one(out);
    check_wall_ends(&x, &ipe, 300.0);
    // The box's diagonal: every corner is a flange tip (closed form).
    assert_close!(x.circumscribed_diameter, 300f64.hypot(150.0), rel = 1e-12);
    // Thicker than the flange (the fillets widen the junction), thinner than the flange
    // plus the fillet.
    assert!(x.thickest_section > 10.7 && x.thickest_section < 10.7 + 15.0);
}

#[test]
fn ellipse_through_the_curve_path() {
    let (a, b) = (30.0, 10.0);
    let u = Point::new(0.3f64.cos(), 0.3f64.sin());
    let e = Curve::Ellipse(EllipseArc {
        center: Point::new(2e3, 5e2),
        u: u * a,
        v: Point::new(-u.y, u.x) * b,
        t0: 0.0,
        t1: 2.0 * PI,
    });
    let (s, x) = one(measure_drawing(curve_drawing(&[e]), &settings(false)));
    // Ellipse with semi-axes a, b: the smallest circle holding it is on its major axis, 2a
    // (closed form); found on the curve itself, not its chords.
    assert_close!(x.circumscribed_diameter, 2.0 * a, rel = 1e-10);
    assert_close!(
        x.circumscribed_center.dist(Point::new(2e3, 5e2)),
        0.0,
        abs = 1e-8
    );
    // Its narrowest double normal is the minor axis, 2b, and since a²/b ≥ b the largest
    // inscribed circle has radius b (closed form); chords are within 1e-5 of the size
    // (FLATTEN_REL), so within 2·1e-5·2a·√2 here.
    let tol = 2.0 * 1e-5 * 2.0 * a * SQRT_2;
    assert_close!(x.thinnest_wall, 2.0 * b, abs = tol);
    assert_close!(x.thickest_section, 2.0 * b, abs = tol);
    // Outline centroid at the centre (symmetry); perimeter from the curve, not the chords.
    assert_close!(
        x.outline_centroid.dist(Point::new(2e3, 5e2)),
        0.0,
        abs = 1e-9
    );
    assert_close!(x.perimeter_outer, s.perimeter, rel = 1e-13);
}

#[test]
fn merged_parts_sum_hollows_and_share_one_circle() {
    // Two tubes side by side, merged: one circle around both, two hollows, the thinner
    // wall of the two (closed forms as above).
    let pieces = vec![
        closed(circle(0.0, 0.0, 20.0)),
        closed(circle(0.0, 0.0, 17.0)),
        closed(circle(100.0, 0.0, 10.0)),
        closed(circle(100.0, 0.0, 9.0)),
    ];
    let (_, x) = one(measure_drawing(drawing(pieces), &settings(true)));
    assert_eq!(x.hollows, 2);
    assert_close!(x.circumscribed_diameter, 130.0, rel = 1e-12);
    assert_close!(x.thinnest_wall, 1.0, rel = 1e-12);
    assert_close!(x.thickest_section, 3.0, rel = 1e-9);
    assert_close!(x.perimeter_inner, 2.0 * PI * 26.0, rel = 1e-13);
}

#[test]
fn gear_of_ten_thousand_segments_with_a_bore() {
    // 100 flat-topped teeth of 100 segments each around a bore of radius 20; no timing, only
    // a sane answer: a tooth (about 1.5 wide at its tip) is the thinnest wall, well below
    // the 28 between bore and root.
    let n = 10_000;
    let pts: Vec<(f64, f64)> = (0..n)
        .map(|k| {
            let th = 2.0 * PI * k as f64 / n as f64;
            let r = 50.0 + 2.0 * (5.0 * (100.0 * th).sin()).tanh() / 5f64.tanh();
            (r * th.cos(), r * th.sin())
        })
        .collect();
    let gear = poly(&pts, &[]);
    assert_eq!(gear.len(), n);
    let (_, x) = only_x(vec![closed(gear.clone()), closed(circle(0.0, 0.0, 20.0))]);
    assert!(x.thinnest_wall > 0.5 && x.thinnest_wall < 3.0, "{x:?}");
    let mut segs = gear;
    segs.extend(circle(0.0, 0.0, 20.0));
    check_wall_ends(&x, &segs, 100.0);
    // Bore to root: the root circle is 48 (from the outline's formula), so a circle between
    // bore and root is 28 across; under a tooth it can grow a little, never by a tooth's 4.
    assert!(
        x.thickest_section > 27.0 && x.thickest_section < 29.0,
        "{x:?}"
    );
    assert_close!(x.circumscribed_diameter, 104.0, rel = 1e-6);
    assert_eq!(x.hollows, 1);
}
