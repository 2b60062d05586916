//! Numerical robustness: a profile far from the origin, or drawn at a tiny or a huge scale,
//! with nearly tangent holes and nearly degenerate arcs (bulge near 0 and near ±∞), gives the
//! results of the same profile at the origin within 1e-9 relative (after the scaling laws:
//! areas s², first moments s³, second moments s⁴).

mod util;

use std::f64::consts::PI;

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use sectio::analyze::{measure_drawing, Settings};
use sectio::geom::Arc;
use sectio::import::Piece;
use sectio::section::SectionProps;
use util::*;

/// A star-shaped outline (some edges with bulges near 0: 1e-9, −3e-8, 2e-8, −1e-6) around
/// four holes: two circles 2e-6 apart (nearly tangent to each other), a circle 1e-6 inside
/// the outline's inscribed radius (nearly tangent to it) and a keyhole made of a line 1e-5
/// long closed by an arc of bulge ±4e5 (very nearly a full circle).
fn hard_profile(rng: &mut StdRng) -> Vec<Piece> {
    let n = rng.random_range(8..40);
    let mut pts = Vec::new();
    let mut bulges = Vec::new();
    for k in 0..n {
        let ang = 2.0 * PI * (k as f64 + rng.random_range(0.0..0.5)) / n as f64;
        let rad = rng.random_range(80.0..100.0);
        pts.push((rad * ang.cos(), rad * ang.sin()));
        bulges.push(match k {
            // Below Arc::STRAIGHT_BULGE (a straight edge), just above it, and small.
            0 => 1e-9,
            1 => -3e-8,
            2 => 2e-8,
            3 => -1e-6,
            _ if rng.random_bool(0.3) => rng.random_range(-0.1..0.1),
            _ => 0.0,
        });
    }
    // The smallest distance from the centre to an edge bounds the holes.
    let gap = 2e-6;
    let r = 20.0;
    let keyhole = {
        let (a, b) = (p(-1e-5 / 2.0, -45.0), p(1e-5 / 2.0, -45.0));
        // From b back to a the long way round: bulge tan(θ/4) with θ just under 2π.
        let bulge = if rng.random_bool(0.5) { 4e5 } else { -4e5 };
        let arc = Arc::from_bulge(b, a, bulge).expect("an arc");
        assert!(arc.sweep.abs() > 2.0 * PI - 1e-4, "nearly a full circle");
        vec![
            sectio::geom::Segment::line(a, b),
            sectio::geom::Segment::Arc(arc),
        ]
    };
    vec![
        closed(poly(&pts, &bulges)),
        closed(circle(-r - gap / 2.0, 20.0, r)),
        closed(circle(r + gap / 2.0, 20.0, r)),
        closed(keyhole),
    ]
}

/// A circle nearly tangent to the outline: outline a square of side 200, hole radius 30
/// whose edge is 1e-6 from the square's side.
fn tangent_to_outline() -> Vec<Piece> {
    vec![
        closed(rect(-100.0, -100.0, 200.0, 200.0)),
        closed(circle(100.0 - 30.0 - 1e-6, 0.0, 30.0)),
    ]
}

fn moved(pieces: &[Piece], scale: f64, shift: sectio::geom::Point) -> Vec<Piece> {
    let t = Similarity {
        mirror_x: false,
        angle: 0.0,
        scale,
        shift,
    };
    pieces.iter().map(|pc| t.piece(pc)).collect()
}

/// `b` is `a` scaled by `s` and moved by `shift`: every property within `rel`.
fn agree(a: &SectionProps, b: &SectionProps, s: f64, shift: sectio::geom::Point, rel: f64) {
    let (s2, s4) = (s * s, s.powi(4));
    assert_close!(b.area / s2, a.area, rel = rel);
    assert_close!(b.perimeter / s, a.perimeter, rel = rel);
    assert_close!(b.ixx / s4, a.ixx, rel = rel);
    assert_close!(b.iyy / s4, a.iyy, rel = rel);
    assert_close!(b.ixy / s4, a.ixy, abs = rel * a.i1);
    assert_close!(b.i1 / s4, a.i1, rel = rel);
    assert_close!(b.i2 / s4, a.i2, rel = rel);
    assert_close!(b.ip / s4, a.ip, rel = rel);
    let size = a.area.sqrt();
    assert_close!((b.centroid.x - shift.x) / s, a.centroid.x, abs = rel * size);
    assert_close!((b.centroid.y - shift.y) / s, a.centroid.y, abs = rel * size);
    assert_close!(b.wx_top / (s2 * s), a.wx_top, rel = rel);
    assert_close!(b.wy_left / (s2 * s), a.wy_left, rel = rel);
    assert_eq!(a.n_holes, b.n_holes);
    // Plastic moduli (exact integration on both sides of the axis): s³.
    let (pa, pb) = (a.plastic.expect("plastic"), b.plastic.expect("plastic"));
    assert_close!(pb.plastic_x / (s2 * s), pa.plastic_x, rel = rel);
    assert_close!(pb.plastic_y / (s2 * s), pa.plastic_y, rel = rel);
    // About the principal axes: their direction θ is known only to δθ ≈ δIxy / (i1 − i2),
    // and δIxy ≈ rel·ip, so a nearly round section's principal-axis values carry the condition
    // number ip / (i1 − i2) (tan 2θ = 2·Ixy / (Iyy − Ixx), differentiated).
    let cond = (a.ip / (a.i1 - a.i2)).max(1.0);
    assert_close!(pb.plastic_1 / (s2 * s), pa.plastic_1, rel = rel * cond);
    assert_close!(pb.plastic_2 / (s2 * s), pa.plastic_2, rel = rel * cond);
    // Neutral axes: offsets from the centroid.
    assert_close!(pb.pna_x / s, pa.pna_x, abs = rel * size);
    assert_close!(pb.pna_y / s, pa.pna_y, abs = rel * size);
    // Extrusion figures: lengths.
    let (ea, eb) = (
        a.extrusion.expect("extrusion"),
        b.extrusion.expect("extrusion"),
    );
    assert_close!(
        eb.circumscribed_diameter / s,
        ea.circumscribed_diameter,
        rel = rel
    );
    assert_close!(eb.perimeter_inner / s, ea.perimeter_inner, rel = rel);
    assert_eq!(ea.hollows, eb.hollows);
}

/// The only profile's properties with the plastic and extrusion tiers.
fn with_tiers(pieces: Vec<Piece>) -> SectionProps {
    let settings = Settings {
        plastic: true,
        extrusion: true,
        ..Settings::default()
    };
    let out = measure_drawing(drawing(pieces), &settings);
    assert_eq!(out.len(), 1, "{out:#?}");
    out[0].result.clone().expect("a profile")
}

#[test]
fn far_from_the_origin_and_at_tiny_and_huge_scales_nothing_changes() {
    let mut rng = StdRng::seed_from_u64(51);
    let mut cases: Vec<Vec<Piece>> = (0..20).map(|_| hard_profile(&mut rng)).collect();
    cases.push(tangent_to_outline());
    for (k, base) in cases.iter().enumerate() {
        let a = with_tiers(base.clone());
        assert!(a.n_holes >= 1, "case {k}");
        for (s, shift) in [
            (1.0, p(1e7, -1e7)),
            (1.0, p(-1e7, 3e6)),
            (1e-3, p(0.0, 0.0)),
            (1e5, p(0.0, 0.0)),
            (1e-3, p(1e4, 1e4)),
        ] {
            let b = with_tiers(moved(base, s, shift));
            agree(&a, &b, s, shift, 1e-9);
        }
    }
}
