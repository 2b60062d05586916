//! Chaining loose entities into loops, nesting holes, and the errors on bad outlines.

mod util;

use std::f64::consts::PI;

use sectio::analyze::{measure_drawing, Settings};
use sectio::geom::{Arc, Segment};
use util::*;

fn line(a: (f64, f64), b: (f64, f64)) -> sectio::import::Piece {
    open(vec![Segment::line(p(a.0, a.1), p(b.0, b.1))])
}

fn errors(out: &[sectio::Outcome]) -> Vec<String> {
    out.iter().filter_map(|o| o.result.clone().err()).collect()
}

#[test]
fn loose_lines_with_rounding_noise_chain_into_one_loop() {
    let e = 1e-6;
    let pieces = vec![
        line((100.0, 40.0 + e), (0.0 - e, 40.0)),
        line((0.0, 0.0), (100.0 + e, 0.0)),
        line((0.0, 40.0 + e), (0.0, 0.0 - e)),
        line((100.0, 40.0), (100.0 - e, 0.0)), // drawn downwards (reversed)
    ];
    let s = only(pieces);
    assert_close!(s.area, 4000.0, rel = 1e-7);
    assert_close!(s.centroid.x, 50.0, rel = 1e-7);
}

#[test]
fn duplicates_are_removed_and_counted() {
    let mut pieces: Vec<_> = rect(0.0, 0.0, 20.0, 10.0)
        .into_iter()
        .map(|s| open(vec![s]))
        .collect();
    pieces.push(open(vec![rect(0.0, 0.0, 20.0, 10.0)[0].reversed()])); // reversed duplicate
    pieces.push(closed(circle(10.0, 5.0, 2.0)));
    pieces.push(closed(circle(10.0, 5.0, 2.0))); // exact duplicate
    let out = measure(pieces);
    assert_eq!(out.len(), 1, "{out:#?}");
    let s = out[0].result.as_ref().expect("ok row");
    assert_eq!(s.n_holes, 1);
    assert_close!(s.area, 200.0 - PI * 4.0, rel = 1e-13);
    assert!(
        out[0].message.contains("2 duplicate entities removed"),
        "{}",
        out[0].message
    );
}

#[test]
fn an_open_chain_is_an_error_naming_the_gap() {
    // A 100 × 50 rectangle whose last edge stops 0.5 short of the start.
    let pieces = vec![
        line((0.0, 0.0), (100.0, 0.0)),
        line((100.0, 0.0), (100.0, 50.0)),
        line((100.0, 50.0), (0.0, 50.0)),
        line((0.0, 50.0), (0.0, 0.5)),
    ];
    let out = measure(pieces);
    let errs = errors(&out);
    assert_eq!(errs.len(), 1, "{out:#?}");
    assert!(errs[0].contains("broken loop"), "{}", errs[0]);
    assert!(errs[0].contains("gap 0.5"), "{}", errs[0]);
    assert!(
        errs[0].contains("(0, 0.5)") && errs[0].contains("(0, 0)"),
        "{}",
        errs[0]
    );
}

#[test]
fn a_tube_with_a_broken_outer_circle_is_not_reported_as_its_bore() {
    // Outer circle r = 25 drawn as two arcs with gaps of 0.2 mm at both joints; bore r = 22.
    let c = p(0.0, 0.0);
    let gap_ang = 0.2 / 25.0;
    let pieces = vec![
        open(vec![Segment::Arc(Arc::from_center(
            c,
            25.0,
            0.0,
            PI - gap_ang,
        ))]),
        open(vec![Segment::Arc(Arc::from_center(
            c,
            25.0,
            PI,
            PI - gap_ang,
        ))]),
        closed(circle(0.0, 0.0, 22.0)),
    ];
    let out = measure(pieces);
    assert!(
        out.iter().all(|o| o.result.is_err()),
        "no ok row may pretend: {out:#?}"
    );
    let errs = errors(&out).join(" | ");
    assert!(errs.contains("broken loop"), "{errs}");
}

#[test]
fn a_branch_is_an_error_naming_the_point() {
    let mut pieces: Vec<_> = rect(0.0, 0.0, 10.0, 10.0)
        .into_iter()
        .map(|s| open(vec![s]))
        .collect();
    pieces.push(line((10.0, 10.0), (20.0, 20.0)));
    let out = measure(pieces);
    let errs = errors(&out);
    assert_eq!(errs.len(), 1, "{out:#?}");
    assert!(
        errs[0].contains("branch: 3 segment ends meet at (10, 10)"),
        "{}",
        errs[0]
    );
}

#[test]
fn a_self_intersecting_loop_is_an_error() {
    // Bow-tie.
    let out = measure(vec![closed(poly(
        &[(0.0, 0.0), (10.0, 10.0), (10.0, 0.0), (0.0, 10.0)],
        &[],
    ))]);
    let errs = errors(&out);
    assert_eq!(errs.len(), 1, "{out:#?}");
    assert!(errs[0].contains("self-intersecting"), "{}", errs[0]);
    assert!(errs[0].contains("(5, 5)"), "{}", errs[0]);
}

#[test]
fn crossing_loops_are_errors() {
    let out = measure(vec![
        closed(rect(0.0, 0.0, 10.0, 10.0)),
        closed(rect(5.0, 5.0, 10.0, 10.0)),
    ]);
    assert!(out.iter().all(|o| o.result.is_err()), "{out:#?}");
    assert!(errors(&out).join(" ").contains("loops cross"));
}

#[test]
fn holes_and_islands_nest_by_depth() {
    // Square 100 with a square hole 60 holding a square island 20 with a round hole.
    let out = measure(vec![
        closed(rect(0.0, 0.0, 100.0, 100.0)),
        closed(rect(20.0, 20.0, 60.0, 60.0)),
        closed(rect(40.0, 40.0, 20.0, 20.0)),
        closed(circle(50.0, 50.0, 5.0)),
    ]);
    assert_eq!(out.len(), 2, "{out:#?}");
    let a = out[0].result.as_ref().expect("outer ok");
    let b = out[1].result.as_ref().expect("island ok");
    assert_eq!((a.n_holes, b.n_holes), (1, 1));
    assert_close!(a.area, 100.0 * 100.0 - 60.0 * 60.0, rel = 1e-14);
    assert_close!(b.area, 400.0 - PI * 25.0, rel = 1e-14);
    assert_eq!((out[0].profile, out[1].profile), (1, 2));
}

#[test]
fn holes_touching_each_other_are_fine() {
    let out = measure(vec![
        closed(rect(0.0, 0.0, 40.0, 20.0)),
        closed(circle(15.0, 10.0, 5.0)),
        closed(circle(25.0, 10.0, 5.0)),
    ]);
    assert_eq!(out.len(), 1, "{out:#?}");
    let s = out[0].result.as_ref().expect("ok");
    assert_eq!(s.n_holes, 2);
    assert_close!(s.area, 800.0 - 2.0 * PI * 25.0, rel = 1e-13);
}

#[test]
fn stray_centre_lines_are_skipped_with_a_note() {
    let mut pieces = vec![closed(rect(0.0, 0.0, 10.0, 10.0))];
    pieces.push(line((-5.0, 5.0), (15.0, 5.0)));
    let out = measure(pieces);
    assert_eq!(out.len(), 1, "{out:#?}");
    assert!(out[0].result.is_ok());
    assert!(
        out[0].message.contains("1 open chains ignored"),
        "{}",
        out[0].message
    );
}

#[test]
fn zero_area_loops_are_errors() {
    let out = measure(vec![closed(vec![
        Segment::line(p(0.0, 0.0), p(10.0, 0.0)),
        Segment::line(p(10.0, 0.0), p(0.0, 0.0)),
    ])]);
    assert!(
        errors(&out).join(" ").contains("encloses no area"),
        "{out:#?}"
    );
}

#[test]
fn merge_makes_one_section_of_a_file() {
    let d = drawing(vec![
        closed(rect(0.0, 0.0, 10.0, 100.0)),
        closed(rect(90.0, 0.0, 10.0, 100.0)),
    ]);
    let settings = Settings {
        merge: true,
        ..Settings::default()
    };
    let out = measure_drawing(d, &settings);
    assert_eq!(out.len(), 1);
    let s = out[0].result.as_ref().expect("ok");
    // Two 10 × 100 strips 80 apart: Iy = 2·(100·10³/12 + 1000·45²) (parallel-axis theorem).
    assert_close!(s.area, 2000.0, rel = 1e-14);
    assert_close!(
        s.iyy,
        2.0 * (100.0 * 1000.0 / 12.0 + 1000.0 * 45.0 * 45.0),
        rel = 1e-13
    );
}

#[test]
fn thousands_of_profiles_in_one_file() {
    // 60 × 60 grid of squares, each with a round hole: 3600 profiles, 7200 loops.
    let mut pieces = Vec::new();
    for i in 0..60 {
        for j in 0..60 {
            let (x, y) = (i as f64 * 20.0, j as f64 * 20.0);
            pieces.push(closed(rect(x, y, 10.0, 10.0)));
            pieces.push(closed(circle(x + 5.0, y + 5.0, 2.0)));
        }
    }
    let out = measure(pieces);
    assert_eq!(out.len(), 3600);
    for o in &out {
        let s = o.result.as_ref().expect("ok");
        assert_eq!(s.n_holes, 1);
        assert_close!(s.area, 100.0 - PI * 4.0, rel = 1e-12);
    }
    // Reading order: left to right, then bottom to top.
    let first = out[0].result.as_ref().expect("ok");
    let second = out[1].result.as_ref().expect("ok");
    assert!(first.bbox.min.x == 0.0 && first.bbox.min.y == 0.0);
    assert!(second.bbox.min.x == 0.0 && second.bbox.min.y == 20.0);
}

#[test]
fn fillets_smaller_than_the_gap_are_not_self_intersections() {
    // A 1.45 × 2.33 rectangular hole with r = 0.0015 fillets inside a square, far from the
    // origin so that the default gap (0.05 mm there) exceeds the fillets' chords.
    let (x0, y0, w, h, r) = (2865.0, 231.0, 1.45, 2.33, 0.0015);
    let t = (std::f64::consts::PI / 8.0).tan();
    let hole = poly(
        &[
            (x0 + r, y0),
            (x0 + w - r, y0),
            (x0 + w, y0 + r),
            (x0 + w, y0 + h - r),
            (x0 + w - r, y0 + h),
            (x0 + r, y0 + h),
            (x0, y0 + h - r),
            (x0, y0 + r),
        ],
        &[0.0, t, 0.0, t, 0.0, t, 0.0, t],
    );
    let mut pieces = vec![closed(rect(x0 - 5.0, y0 - 5.0, 10.0, 12.0)), closed(hole)];
    pieces.push(closed(rect(0.0, 0.0, 1.0, 1.0))); // widens the drawing: a larger default gap
    let out = measure(pieces);
    assert!(out.iter().all(|o| o.result.is_ok()), "{out:#?}");
    let s = out[1].result.as_ref().expect("ok");
    assert_eq!(s.n_holes, 1);
}

#[test]
fn a_hole_tangent_to_the_outline_touches_but_does_not_cross() {
    // Square 10 × 10 with an inscribed circular hole touching all four sides.
    let out = measure(vec![
        closed(rect(0.0, 0.0, 10.0, 10.0)),
        closed(circle(5.0, 5.0, 5.0)),
    ]);
    assert_eq!(out.len(), 1, "{out:#?}");
    let s = out[0].result.as_ref().expect("tangent loops are fine");
    assert_eq!(s.n_holes, 1);
    assert_close!(s.area, 100.0 - 25.0 * PI, rel = 1e-13);
}

#[test]
fn a_circle_drawn_as_two_half_arcs_is_not_a_duplicate() {
    // Two ARCs of the same circle between the same two points, each a half turn: the same
    // ends, centre and sweep size, but different halves.
    let c = p(5.0, 5.0);
    let halves = vec![
        open(vec![Segment::Arc(Arc::from_center(c, 2.0, 0.0, PI))]),
        open(vec![Segment::Arc(Arc::from_center(c, 2.0, PI, PI))]),
    ];
    let s = only(halves);
    // Area of a circle, πr².
    assert_close!(s.area, PI * 4.0, rel = 1e-12);
}

#[test]
fn a_loose_segment_drawn_twice_either_way_counts_once() {
    // A triangle of loose lines whose first edge is drawn three times (once reversed), and
    // a stray line drawn twice beside it.
    let mut pieces = vec![
        line((0.0, 0.0), (30.0, 0.0)),
        line((30.0, 0.0), (0.0, 0.0)),
        line((0.0, 0.0), (30.0, 0.0)),
        line((30.0, 0.0), (0.0, 40.0)),
        line((0.0, 40.0), (0.0, 0.0)),
    ];
    pieces.push(line((50.0, 0.0), (50.0, 40.0)));
    pieces.push(line((50.0, 0.0), (50.0, 40.0)));
    let out = measure(pieces);
    assert_eq!(out.len(), 1, "{out:#?}");
    let s = out[0].result.as_ref().expect("ok row");
    // Right triangle, legs 30 and 40: area ½·30·40.
    assert_close!(s.area, 600.0, rel = 1e-13);
    assert!(
        out[0].message.contains("3 duplicate entities removed"),
        "{}",
        out[0].message
    );
}

#[test]
fn side_by_side_rectangles_sharing_an_edge_are_two_profiles() {
    // Two 10 × 10 squares sharing the edge x = 10; the second is drawn starting along that
    // edge, either way round, so that the midpoint of its first edge lies on the first square.
    for reversed in [false, true] {
        let left = closed(rect(0.0, 0.0, 10.0, 10.0));
        let mut right = vec![
            Segment::line(p(10.0, 10.0), p(10.0, 0.0)),
            Segment::line(p(10.0, 0.0), p(20.0, 0.0)),
            Segment::line(p(20.0, 0.0), p(20.0, 10.0)),
            Segment::line(p(20.0, 10.0), p(10.0, 10.0)),
        ];
        if reversed {
            right.reverse();
            right = right.iter().map(Segment::reversed).collect();
        }
        let out = measure(vec![left, closed(right)]);
        assert_eq!(out.len(), 2, "reversed {reversed}: {out:#?}");
        for o in &out {
            let s = o.result.as_ref().expect("ok row");
            // Area of a 10 × 10 square.
            assert_close!(s.area, 100.0, rel = 1e-13);
            assert_eq!(s.n_holes, 0);
        }
    }
}

#[test]
fn a_square_filling_the_notch_of_an_l_is_a_profile_of_its_own() {
    // An L (20 × 20 less its top-right 10 × 10 quarter) and a square filling that quarter:
    // the square's box lies inside the L's box and every edge midpoint of the square's two
    // shared edges lies on the L, whichever edge the square is drawn from.
    let l = closed(vec![
        Segment::line(p(0.0, 0.0), p(20.0, 0.0)),
        Segment::line(p(20.0, 0.0), p(20.0, 10.0)),
        Segment::line(p(20.0, 10.0), p(10.0, 10.0)),
        Segment::line(p(10.0, 10.0), p(10.0, 20.0)),
        Segment::line(p(10.0, 20.0), p(0.0, 20.0)),
        Segment::line(p(0.0, 20.0), p(0.0, 0.0)),
    ]);
    for start in 0..4 {
        let mut sq = rect(10.0, 10.0, 10.0, 10.0);
        sq.rotate_left(start);
        let out = measure(vec![l.clone(), closed(sq)]);
        assert_eq!(out.len(), 2, "start {start}: {out:#?}");
        let mut areas: Vec<f64> = out
            .iter()
            .map(|o| o.result.as_ref().expect("ok row").area)
            .collect();
        areas.sort_by(f64::total_cmp);
        // Areas: the square 10·10, the L 20·20 − 10·10.
        assert_close!(areas[0], 100.0, rel = 1e-13);
        assert_close!(areas[1], 300.0, rel = 1e-13);
    }
}

#[test]
fn a_cut_out_sharing_an_edge_with_the_outline_is_a_hole() {
    // A 100 × 50 plate and a 20 × 10 rectangle inside it against its right edge (x = 100),
    // drawn from each of its corners in turn: whichever edge comes first (the shared one
    // too), the rectangle is a hole, not a second profile lying over the first.
    for start in 0..4 {
        let mut cut = rect(80.0, 20.0, 20.0, 10.0);
        cut.rotate_left(start);
        let out = measure(vec![closed(rect(0.0, 0.0, 100.0, 50.0)), closed(cut)]);
        assert_eq!(out.len(), 1, "start {start}: {out:#?}");
        let s = out[0].result.as_ref().expect("ok row");
        assert_eq!(s.n_holes, 1);
        // Area: 100·50 − 20·10.
        assert_close!(s.area, 4800.0, rel = 1e-13);
    }
}

/// The edges of a regular polygon of `n` sides and circumradius `r` about (cx, cy),
/// counter-clockwise, and its area n·r²·sin(2π/n)/2 (shoelace formula on a regular polygon).
fn fine_polygon(n: usize, cx: f64, cy: f64, r: f64) -> (Vec<Segment>, f64) {
    let vertex = |k: usize| {
        let a = 2.0 * PI * (k % n) as f64 / n as f64;
        p(cx + r * a.cos(), cy + r * a.sin())
    };
    let edges = (0..n)
        .map(|k| Segment::line(vertex(k), vertex(k + 1)))
        .collect();
    (edges, n as f64 * r * r * (2.0 * PI / n as f64).sin() / 2.0)
}

#[test]
fn a_finely_divided_outline_keeps_all_its_segments() {
    // A 200 mm circle as 40 000 loose lines of 0.016 mm, shuffled, and the same as one closed
    // polyline: 1e-4 of the extent would make a gap of 0.028 mm, longer than the segments;
    // the default gap stays below a quarter of them, so nothing is dropped and the area is
    // the polygon's.
    let (edges, area) = fine_polygon(40_000, 3000.0, -2000.0, 100.0);
    let n = edges.len();
    let mut loose: Vec<_> = edges.iter().map(|s| open(vec![*s])).collect();
    // A fixed shuffle: every 7th edge first, and so on (7 and 40 000 share no factor).
    loose = (0..n).map(|k| loose[(7 * k) % n].clone()).collect();
    for pieces in [loose, vec![closed(edges.clone())]] {
        let out = measure(pieces);
        assert_eq!(out.len(), 1, "{out:#?}");
        let s = out[0].result.as_ref().expect("ok row");
        assert_close!(s.area, area, rel = 1e-12);
        assert!(!out[0].message.contains("dropped"), "{}", out[0].message);
    }
}

#[test]
fn short_segments_under_a_large_gap_are_thinned_not_lost() {
    // The same kind of outline with a gap the user set far above its segments (1.57 mm
    // edges, gap 5 mm): runs of short edges are thinned to steps of about the gap, each
    // moving the outline by at most the gap, so the circle stays a circle.
    let (edges, area) = fine_polygon(2000, 0.0, 0.0, 500.0);
    let settings = Settings {
        join_gap: Some(5.0),
        ..Settings::default()
    };
    let out = measure_drawing(drawing(vec![closed(edges)]), &settings);
    assert_eq!(out.len(), 1, "{out:#?}");
    let s = out[0].result.as_ref().expect("ok row");
    // Chords of at most ~6.6 mm on r = 500 lose at most their segments, s²/(8r) deep:
    // under 0.011 mm over the 3142 mm perimeter, about 35 mm² of 785 000.
    assert!((s.area - area).abs() < 50.0, "{} against {area}", s.area);
    assert!(out[0].message.contains("dropped"), "{}", out[0].message);
}

#[test]
fn many_holes_in_a_finely_divided_outline() {
    // A 2000-sided polygon of circumradius 500 with a 10 × 10 grid of round holes (radius 3,
    // 40 apart) well inside it: one profile, 100 holes. (Enough holes for the outline to be
    // indexed by slabs.)
    let (edges, area) = fine_polygon(2000, 0.0, 0.0, 500.0);
    let mut pieces = vec![closed(edges)];
    for i in 0..10 {
        for j in 0..10 {
            let (x, y) = (-180.0 + 40.0 * i as f64, -180.0 + 40.0 * j as f64);
            pieces.push(closed(circle(x, y, 3.0)));
        }
    }
    let s = only(pieces);
    assert_eq!(s.n_holes, 100);
    // Polygon area less 100 discs of πr².
    assert_close!(s.area, area - 100.0 * PI * 9.0, rel = 1e-12);
}

#[test]
fn error_rows_name_the_layer_of_the_entity_they_name() {
    // A broken rectangle and a bow-tie, each on a layer of its own, far apart.
    let on = |layer: &str, mut pc: sectio::import::Piece| {
        pc.layer = layer.into();
        pc
    };
    let pieces = vec![
        on("OUTLINE", line((0.0, 0.0), (100.0, 0.0))),
        on("OUTLINE", line((100.0, 0.0), (100.0, 50.0))),
        on("OUTLINE", line((100.0, 50.0), (0.0, 50.0))),
        on("OUTLINE", line((0.0, 50.0), (0.0, 0.5))),
        on(
            "BOWTIE",
            closed(vec![
                Segment::line(p(500.0, 0.0), p(600.0, 100.0)),
                Segment::line(p(600.0, 100.0), p(600.0, 0.0)),
                Segment::line(p(600.0, 0.0), p(500.0, 100.0)),
                Segment::line(p(500.0, 100.0), p(500.0, 0.0)),
            ]),
        ),
    ];
    let out = measure(pieces);
    assert_eq!(out.len(), 2, "{out:#?}");
    assert!(out.iter().all(|o| o.result.is_err()), "{out:#?}");
    assert_eq!(out[0].layer, "OUTLINE");
    assert_eq!(out[1].layer, "BOWTIE");
}
