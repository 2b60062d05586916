//! ELLIPSE and SPLINE entities, and blocks placed by INSERT, read from hand-written DXF and
//! measured through the whole pipeline, against closed forms.

use std::f64::consts::PI;

use sectio::analyze::{analyze_drawing, Outcome, Settings};
use sectio::import::dxf::read;
use sectio::import::ReadOptions;
use sectio::section::SectionProps;

/// A drawing with the given BLOCKS content (may be empty) and ENTITIES content.
fn dxf(blocks: &str, entities: &str) -> String {
    let blocks = if blocks.is_empty() {
        String::new()
    } else {
        format!("0\nSECTION\n2\nBLOCKS\n{blocks}0\nENDSEC\n")
    };
    format!("{blocks}0\nSECTION\n2\nENTITIES\n{entities}0\nENDSEC\n0\nEOF\n")
}

/// A block definition named `name` with base point `base` holding `entities`.
fn block(name: &str, base: (f64, f64), entities: &str) -> String {
    format!(
        "0\nBLOCK\n8\n0\n2\n{name}\n70\n0\n10\n{}\n20\n{}\n30\n0\n{entities}0\nENDBLK\n8\n0\n",
        base.0, base.1
    )
}

/// An INSERT of `name` at `at` with scales, rotation (degrees) and extra groups.
fn insert(name: &str, at: (f64, f64), scale: (f64, f64), rot: f64, extra: &str) -> String {
    format!(
        "0\nINSERT\n8\nPARTS\n2\n{name}\n10\n{}\n20\n{}\n30\n0\n41\n{}\n42\n{}\n50\n{rot}\n{extra}",
        at.0, at.1, scale.0, scale.1
    )
}

fn line(a: (f64, f64), b: (f64, f64)) -> String {
    format!(
        "0\nLINE\n8\n0\n10\n{}\n20\n{}\n30\n0\n11\n{}\n21\n{}\n31\n0\n",
        a.0, a.1, b.0, b.1
    )
}

fn circle(c: (f64, f64), r: f64) -> String {
    format!(
        "0\nCIRCLE\n8\n0\n10\n{}\n20\n{}\n30\n0\n40\n{r}\n",
        c.0, c.1
    )
}

/// A full or partial ELLIPSE with its extrusion direction's z (1 or −1).
fn ellipse(c: (f64, f64), major: (f64, f64), ratio: f64, t: (f64, f64), nz: f64) -> String {
    format!(
        "0\nELLIPSE\n8\n0\n10\n{}\n20\n{}\n30\n0\n11\n{}\n21\n{}\n31\n0\n210\n0\n220\n0\n230\n{nz}\n40\n{ratio}\n41\n{}\n42\n{}\n",
        c.0, c.1, major.0, major.1, t.0, t.1
    )
}

/// A SPLINE from degree, flags, knots, control points and weights (empty: none written).
fn spline(
    degree: usize,
    flags: i64,
    knots: &[f64],
    ctrl: &[(f64, f64)],
    weights: &[f64],
) -> String {
    let mut s = format!(
        "0\nSPLINE\n8\n0\n70\n{flags}\n71\n{degree}\n72\n{}\n73\n{}\n74\n0\n",
        knots.len(),
        ctrl.len()
    );
    for k in knots {
        s += &format!("40\n{k}\n");
    }
    for w in weights {
        s += &format!("41\n{w}\n");
    }
    for p in ctrl {
        s += &format!("10\n{}\n20\n{}\n30\n0\n", p.0, p.1);
    }
    s
}

fn measure(text: &str) -> Vec<Outcome> {
    analyze_drawing(text.as_bytes(), &Settings::default())
}

#[track_caller]
fn only_ok(text: &str) -> SectionProps {
    let rows = measure(text);
    assert_eq!(rows.len(), 1, "{rows:#?}");
    rows[0]
        .result
        .clone()
        .unwrap_or_else(|e| panic!("error row: {e}"))
}

#[track_caller]
fn close(got: f64, want: f64, rel: f64) {
    assert!(
        (got - want).abs() <= rel * want.abs().max(1e-300),
        "got {got}, want {want}"
    );
}

// ---------------------------------------------------------------------------------------------
// ELLIPSE

#[test]
fn full_ellipse_entity_is_exact() {
    // a = 40 along a 30° axis, b = 15: A = πab; about its own axes Ix' = πab³/4,
    // Iy' = πa³b/4 (check-values.md §1, ellipse row), turned by 30° (Mohr's circle).
    let (a, b, th) = (40.0, 15.0, 30f64.to_radians());
    let major = (a * th.cos(), a * th.sin());
    let p = only_ok(&dxf(
        "",
        &ellipse((500.0, -200.0), major, b / a, (0.0, 2.0 * PI), 1.0),
    ));
    close(p.area, PI * a * b, 1e-12);
    let (iu, iv) = (PI * a * b.powi(3) / 4.0, PI * a.powi(3) * b / 4.0);
    close(p.i1, iv, 1e-12);
    close(p.i2, iu, 1e-12);
    // I1 is about the minor axis, at 30° + 90° = 120°, that is −60° in (−90°, 90°].
    close(p.theta_deg, -60.0, 1e-9);
    close(p.centroid.x, 500.0, 1e-14);
    // Box of the rotated ellipse: half-width √(a²cos²θ + b²sin²θ) (closed form, from memory).
    let hw = (a * a * th.cos().powi(2) + b * b * th.sin().powi(2)).sqrt();
    close(p.bbox.max.x - p.bbox.min.x, 2.0 * hw, 1e-12);
    // Perimeter of an ellipse by the Gauss–Kummer series P = π(a + b) Σ C(1/2, n)² hⁿ,
    // h = ((a − b)/(a + b))² (from memory); 40 terms leave less than 1e-16 here.
    let h = ((a - b) / (a + b)).powi(2);
    let (mut c, mut sum) = (1.0f64, 1.0f64);
    for n in 1..40 {
        c *= (0.5 - (n - 1) as f64) / n as f64; // C(1/2, n)
        sum += c * c * h.powi(n);
    }
    close(p.perimeter, PI * (a + b) * sum, 1e-12);
}

#[test]
fn half_ellipse_closed_by_a_line_has_its_centroid_at_4b_over_3pi() {
    // Upper half of a = 30, b = 12, centre (10, 20): A = πab/2, centroid 4b/(3π) above the
    // axis (the semicircle's 4r/(3π), check-values.md §1, scaled by b/r along y).
    for nz in [1.0, -1.0] {
        // With N = −Z the parameter runs clockwise: the minor axis is N × major (crates.md
        // §1), so the half from 0 to π lies below the axis.
        let text = dxf(
            "",
            &(ellipse((10.0, 20.0), (30.0, 0.0), 0.4, (0.0, PI), nz)
                + &line((-20.0, 20.0), (40.0, 20.0))),
        );
        let p = only_ok(&text);
        close(p.area, PI * 30.0 * 12.0 / 2.0, 1e-12);
        close(p.centroid.y, 20.0 + nz * 4.0 * 12.0 / (3.0 * PI), 1e-12);
        close(p.centroid.x, 10.0, 1e-12);
    }
}

// ---------------------------------------------------------------------------------------------
// SPLINE

#[test]
fn degree_one_spline_is_its_control_polygon() {
    // A closed degree-1 spline through a 20 × 10 rectangle's corners: A = 200, Ixx = bh³/12
    // (check-values.md §1, rectangle row).
    let ctrl = [
        (0.0, 0.0),
        (20.0, 0.0),
        (20.0, 10.0),
        (0.0, 10.0),
        (0.0, 0.0),
    ];
    let knots = [0.0, 0.0, 1.0, 2.0, 3.0, 4.0, 4.0];
    let p = only_ok(&dxf("", &spline(1, 1, &knots, &ctrl, &[])));
    close(p.area, 200.0, 1e-14);
    close(p.ixx, 20.0 * 1000.0 / 12.0, 1e-13);
    close(p.perimeter, 60.0, 1e-13);
}

#[test]
fn rational_quadratic_spline_circle_is_a_circle() {
    // The nine-point rational quadratic circle (standard NURBS construction, from memory):
    // A = πr², Ixx = πr⁴/4 (check-values.md §1, solid circle row).
    let r = 7.0;
    let w = std::f64::consts::FRAC_1_SQRT_2;
    let ctrl = [
        (r, 0.0),
        (r, r),
        (0.0, r),
        (-r, r),
        (-r, 0.0),
        (-r, -r),
        (0.0, -r),
        (r, -r),
        (r, 0.0),
    ];
    let weights = [1.0, w, 1.0, w, 1.0, w, 1.0, w, 1.0];
    let knots = [
        0.0, 0.0, 0.0, 0.25, 0.25, 0.5, 0.5, 0.75, 0.75, 1.0, 1.0, 1.0,
    ];
    let p = only_ok(&dxf("", &spline(2, 1 | 4, &knots, &ctrl, &weights)));
    close(p.area, PI * r * r, 1e-12);
    close(p.ixx, PI * r.powi(4) / 4.0, 1e-12);
    close(p.perimeter, 2.0 * PI * r, 1e-10);
    close(p.bbox.max.y, r, 1e-12);
}

#[test]
fn fit_point_spline_passes_through_its_points_and_closes_a_loop() {
    // A spline given only by fit points (no knots, no control points), closed by a line:
    // the loop's area lies between the polygon through the fit points and its bounding box.
    let fit = [
        (0.0, 0.0),
        (10.0, 6.0),
        (20.0, 8.0),
        (30.0, 6.0),
        (40.0, 0.0),
    ];
    let mut s = "0\nSPLINE\n8\n0\n70\n8\n71\n3\n74\n5\n".to_string();
    for p in fit {
        s += &format!("11\n{}\n21\n{}\n31\n0\n", p.0, p.1);
    }
    let p = only_ok(&dxf("", &(s + &line((40.0, 0.0), (0.0, 0.0)))));
    let polygon = 0.5 * (10.0 * 6.0 + 10.0 * (6.0 + 8.0) + 10.0 * (8.0 + 6.0) + 10.0 * 6.0);
    assert!(p.area > polygon && p.area < 40.0 * 8.5, "{}", p.area);
}

#[test]
fn a_broken_spline_is_counted_and_noted() {
    // Degree 3 with too few knots: left out with a note, never a panic.
    let bad = spline(
        3,
        0,
        &[0.0, 0.0, 1.0],
        &[(0.0, 0.0), (1.0, 1.0), (2.0, 0.0), (3.0, 1.0)],
        &[],
    );
    let d = read(dxf("", &bad).as_bytes(), &ReadOptions::default()).expect("reads");
    assert!(d.pieces.is_empty());
    assert_eq!(d.skipped.get("SPLINE that is not a valid curve"), Some(&1));
    assert!(
        d.notes.iter().any(|n| n.contains("SPLINE at line")),
        "{:?}",
        d.notes
    );
}

// ---------------------------------------------------------------------------------------------
// Blocks

/// A 40 × 20 plate with one corner rounded (r = 5) and a hole of radius 5, in block
/// coordinates around base point (100, 50). Area 800 − (25 − 25π/4) − 25π.
fn plate_block(name: &str) -> String {
    let (x0, y0) = (100.0, 50.0);
    let at = |x: f64, y: f64| (x0 + x, y0 + y);
    let mut e = line(at(0.0, 0.0), at(40.0, 0.0));
    e += &line(at(40.0, 0.0), at(40.0, 15.0));
    e += &format!(
        "0\nARC\n8\n0\n10\n{}\n20\n{}\n30\n0\n40\n5\n50\n0\n51\n90\n",
        x0 + 35.0,
        y0 + 15.0
    );
    e += &line(at(35.0, 20.0), at(0.0, 20.0));
    e += &line(at(0.0, 20.0), at(0.0, 0.0));
    e += &circle(at(28.0, 10.0), 5.0);
    block(name, (x0, y0), &e)
}

const PLATE_AREA: f64 = 800.0 - (25.0 - 25.0 * PI / 4.0) - 25.0 * PI;

#[test]
fn a_rotated_mirrored_insert_equals_the_transformed_original() {
    let plain = only_ok(&dxf(
        &plate_block("PLATE"),
        &insert("PLATE", (0.0, 0.0), (1.0, 1.0), 0.0, ""),
    ));
    // The plate itself, measured in block coordinates less the base.
    close(plain.area, PLATE_AREA, 1e-13);
    // Scale (−2, 2) (mirrored) and 30° turn: A·4, I·16, the principal moments kept, the
    // principal angle mirrored then turned: θ → 30° − θ.
    let (s, rot) = (2.0, 30.0);
    let moved = only_ok(&dxf(
        &plate_block("PLATE"),
        &insert("PLATE", (1000.0, -500.0), (-s, s), rot, ""),
    ));
    close(moved.area, plain.area * s * s, 1e-12);
    close(moved.i1, plain.i1 * s.powi(4), 1e-11);
    close(moved.i2, plain.i2 * s.powi(4), 1e-11);
    let angle = |d: f64| (d + 90.0).rem_euclid(180.0) - 90.0;
    close(angle(moved.theta_deg), angle(rot - plain.theta_deg), 1e-9);
    // The centroid is the mapped centroid: x → −s·x, turned by 30°, moved.
    let (c, sn) = (rot.to_radians().cos(), rot.to_radians().sin());
    let (x, y) = (-s * plain.centroid.x, s * plain.centroid.y);
    close(moved.centroid.x, 1000.0 + c * x - sn * y, 1e-12);
    close(moved.centroid.y, -500.0 + sn * x + c * y, 1e-12);
    assert_eq!(moved.n_holes, 1);
    close(moved.perimeter, plain.perimeter * s, 1e-12);
}

#[test]
fn a_non_uniform_scale_turns_a_circle_into_an_ellipse() {
    // Circle r = 10 scaled (3, 0.5): an ellipse a = 30, b = 5: A = πab, Ixx = πab³/4,
    // Iyy = πa³b/4 (check-values.md §1, ellipse row).
    let b = block("DOT", (0.0, 0.0), &circle((0.0, 0.0), 10.0));
    let p = only_ok(&dxf(&b, &insert("DOT", (5.0, 5.0), (3.0, 0.5), 0.0, "")));
    close(p.area, PI * 30.0 * 5.0, 1e-12);
    close(p.ixx, PI * 30.0 * 125.0 / 4.0, 1e-12);
    close(p.iyy, PI * 27000.0 * 5.0 / 4.0, 1e-12);
}

#[test]
fn minsert_nested_blocks_and_layer_zero_inheritance() {
    // MINSERT of 2 columns × 3 rows, 100 apart, of a block that inserts the plate: six
    // plates, on the MINSERT's layer (the plate's entities are on layer 0).
    let blocks = plate_block("PLATE")
        + &block(
            "HOLDER",
            (0.0, 0.0),
            &insert("PLATE", (0.0, 0.0), (1.0, 1.0), 0.0, "").replace("8\nPARTS", "8\n0"),
        );
    let grid = insert(
        "HOLDER",
        (0.0, 0.0),
        (1.0, 1.0),
        0.0,
        "70\n2\n71\n3\n44\n100\n45\n100\n",
    );
    let rows = measure(&dxf(&blocks, &grid));
    assert_eq!(rows.len(), 6, "{rows:#?}");
    for r in &rows {
        let p = r.result.as_ref().expect("ok");
        close(p.area, PLATE_AREA, 1e-12);
        assert_eq!(r.layer, "PARTS");
    }
    // Choosing another layer leaves them all out.
    let settings = Settings {
        read: ReadOptions {
            layers: vec!["OTHER".into()],
            ..ReadOptions::default()
        },
        ..Settings::default()
    };
    let rows = analyze_drawing(dxf(&blocks, &grid).as_bytes(), &settings);
    assert!(rows.len() == 1 && rows[0].result.is_err(), "{rows:#?}");
}

#[test]
fn a_block_defined_after_its_use_is_placed() {
    let text = format!(
        "0\nSECTION\n2\nENTITIES\n{}0\nENDSEC\n0\nSECTION\n2\nBLOCKS\n{}0\nENDSEC\n0\nEOF\n",
        insert("PLATE", (0.0, 0.0), (1.0, 1.0), 0.0, ""),
        plate_block("plate")
    );
    let p = only_ok(&text);
    close(p.area, PLATE_AREA, 1e-13);
    close(p.bbox.min.x, 0.0, 1e-12); // the base point (100, 50) is taken off
}

#[test]
fn a_block_that_inserts_itself_is_an_error_naming_the_cycle() {
    let a = block(
        "A",
        (0.0, 0.0),
        &(line((0.0, 0.0), (1.0, 0.0)) + &insert("B", (1.0, 0.0), (1.0, 1.0), 0.0, "")),
    );
    let b = block(
        "B",
        (0.0, 0.0),
        &insert("A", (0.0, 1.0), (1.0, 1.0), 0.0, ""),
    );
    let rows = measure(&dxf(
        &(a + &b),
        &insert("A", (0.0, 0.0), (1.0, 1.0), 0.0, ""),
    ));
    assert_eq!(rows.len(), 1);
    let msg = rows[0].result.as_ref().expect_err("error row");
    assert!(msg.contains("block A inserts itself (A → B → A)"), "{msg}");
    // Directly.
    let s = block(
        "S",
        (0.0, 0.0),
        &insert("S", (0.0, 0.0), (1.0, 1.0), 0.0, ""),
    );
    let rows = measure(&dxf(&s, &insert("S", (0.0, 0.0), (1.0, 1.0), 0.0, "")));
    let msg = rows[0].result.as_ref().expect_err("error row");
    assert!(msg.contains("(S → S)"), "{msg}");
}

#[test]
fn inserts_on_hidden_layers_and_of_missing_blocks_are_counted() {
    let tables = "0\nSECTION\n2\nTABLES\n0\nTABLE\n2\nLAYER\n0\nLAYER\n2\nPARTS\n70\n1\n62\n7\n0\nENDTAB\n0\nENDSEC\n";
    let text = format!(
        "{tables}{}",
        dxf(
            &plate_block("PLATE"),
            &(insert("PLATE", (0.0, 0.0), (1.0, 1.0), 0.0, "")
                + &insert("NONE", (0.0, 0.0), (1.0, 1.0), 0.0, "").replace("8\nPARTS", "8\n0"))
        )
    );
    let d = read(text.as_bytes(), &ReadOptions::default()).expect("reads");
    assert!(d.pieces.is_empty(), "{:?}", d.pieces);
    assert_eq!(
        d.skipped.get("INSERT of an undefined block: NONE"),
        Some(&1)
    );
    assert_eq!(
        d.skipped.get("layer off or frozen: PARTS"),
        Some(&1),
        "{:?}",
        d.skipped
    );
}

#[test]
fn an_insert_with_a_downward_extrusion_is_mirrored() {
    // N = (0, 0, −1): OCS x → −x (crates.md §1). The plate lands at x ∈ [−40, 0].
    let p = only_ok(&dxf(
        &plate_block("PLATE"),
        &insert(
            "PLATE",
            (0.0, 0.0),
            (1.0, 1.0),
            0.0,
            "210\n0\n220\n0\n230\n-1\n",
        ),
    ));
    close(p.bbox.min.x, -40.0, 1e-12);
    close(p.area, PLATE_AREA, 1e-13);
}

// ---------------------------------------------------------------------------------------------
// HATCH

/// A 20 × 10 rectangle with a half circle (r = 10) on its top edge: A = 200 + 50π.
const DOME_AREA: f64 = 200.0 + 50.0 * PI;

/// The dome as a HATCH with one polyline path (bulge 1 = half circle, DXF reference,
/// LWPOLYLINE group 42; from memory) and pattern groups after it.
fn dome_hatch_polyline() -> String {
    "0\nHATCH\n8\nSECTION\n10\n0\n20\n0\n30\n0\n210\n0\n220\n0\n230\n1\n2\nSOLID\n70\n1\n71\n0\n91\n1\n\
     92\n2\n72\n1\n73\n1\n93\n4\n10\n0\n20\n0\n42\n0\n10\n20\n20\n0\n42\n0\n10\n20\n20\n10\n42\n1\n10\n0\n20\n10\n42\n0\n97\n0\n\
     75\n0\n76\n1\n98\n1\n10\n5\n20\n5\n"
        .to_string()
}

/// The dome as a HATCH edge path run clockwise: its arc edge has ccw flag 0 and stores the
/// angles of the mirrored arc (50 = 180, 51 = 0: from 180° clockwise over the top to 0°).
fn dome_hatch_edges() -> String {
    "0\nHATCH\n8\nSECTION\n10\n0\n20\n0\n30\n0\n210\n0\n220\n0\n230\n1\n2\nSOLID\n70\n1\n71\n0\n91\n1\n\
     92\n1\n93\n4\n\
     72\n1\n10\n0\n20\n0\n11\n0\n21\n10\n\
     72\n2\n10\n10\n20\n10\n40\n10\n50\n180\n51\n0\n73\n0\n\
     72\n1\n10\n20\n20\n10\n11\n20\n21\n0\n\
     72\n1\n10\n20\n20\n0\n11\n0\n21\n0\n97\n0\n75\n0\n76\n1\n98\n0\n"
        .to_string()
}

fn with_hatches() -> Settings {
    Settings {
        read: ReadOptions {
            hatch_outlines: true,
            ..ReadOptions::default()
        },
        ..Settings::default()
    }
}

#[test]
fn hatch_boundaries_are_outlines_when_asked() {
    for hatch in [dome_hatch_polyline(), dome_hatch_edges()] {
        // By default a hatch is skipped, and the row points to the option.
        let rows = measure(&dxf("", &hatch));
        let msg = rows[0].result.as_ref().expect_err("no outline");
        assert!(msg.contains("--hatch-outlines"), "{msg}");
        // With it, the boundary is the outline: A = 200 + 50π, centroid on x = 10.
        let rows = analyze_drawing(dxf("", &hatch).as_bytes(), &with_hatches());
        assert_eq!(rows.len(), 1, "{rows:#?}");
        let p = rows[0].result.as_ref().expect("ok");
        close(p.area, DOME_AREA, 1e-13);
        close(p.centroid.x, 10.0, 1e-13);
        close(p.bbox.max.y, 20.0, 1e-13);
        assert_eq!(rows[0].layer, "SECTION");
    }
}

#[test]
fn a_hatch_in_a_block_and_beside_its_outline() {
    // In a block placed twice as large: A·4.
    let b = block("SEC", (0.0, 0.0), &dome_hatch_edges());
    let rows = analyze_drawing(
        dxf(&b, &insert("SEC", (0.0, 0.0), (2.0, 2.0), 0.0, "")).as_bytes(),
        &with_hatches(),
    );
    close(
        rows[0].result.as_ref().expect("ok").area,
        4.0 * DOME_AREA,
        1e-13,
    );
    // A hatch over the outline it fills (drawn as a polyline too) is the same loop once,
    // not a profile with itself as its hole.
    let outline = "0\nLWPOLYLINE\n8\nSECTION\n90\n4\n70\n1\n10\n20\n20\n10\n42\n1\n10\n0\n20\n10\n10\n0\n20\n0\n10\n20\n20\n0\n";
    let rows = analyze_drawing(
        dxf("", &(dome_hatch_edges() + outline)).as_bytes(),
        &with_hatches(),
    );
    assert_eq!(rows.len(), 1, "{rows:#?}");
    let p = rows[0].result.as_ref().expect("ok");
    close(p.area, DOME_AREA, 1e-13);
    assert_eq!(p.n_holes, 0);
    assert!(
        rows[0].message.contains("1 outlines drawn twice"),
        "{}",
        rows[0].message
    );
}

#[test]
fn two_loops_sharing_box_and_area_but_not_their_region_are_both_kept() {
    // The two triangles of a split square have the same box and area but different
    // centroids: two profiles, not one drawn twice.
    let tri = |p: [(f64, f64); 3]| {
        let mut s = "0\nLWPOLYLINE\n8\n0\n90\n3\n70\n1\n".to_string();
        for (x, y) in p {
            s += &format!("10\n{x}\n20\n{y}\n");
        }
        s
    };
    let t1 = tri([(0.0, 0.0), (10.0, 0.0), (10.0, 10.0)]);
    let t2 = tri([(0.0, 0.0), (10.0, 10.0), (0.0, 10.0)]);
    let rows = measure(&dxf("", &(t1 + &t2)));
    assert_eq!(rows.len(), 2, "{rows:#?}");
    for r in &rows {
        close(r.result.as_ref().expect("ok").area, 50.0, 1e-14);
    }
}

#[test]
fn a_periodic_spline_stored_with_one_knot_per_span_is_closed() {
    // Flags 1 | 2 (closed, periodic), degree 3, four control points of a square and five
    // knots 0..4 (as some writers store periodic splines). Reference: the uniform periodic
    // cubic B-spline evaluated span by span with its basis matrix (each span uses four
    // consecutive control points, cyclically; Piegl and Tiller, The NURBS Book, from memory),
    // area by the shoelace formula over 40 000 points (error below 1e-7 relative).
    let ctrl = [(10.0, -10.0), (10.0, 10.0), (-10.0, 10.0), (-10.0, -10.0)];
    let p = only_ok(&dxf(
        "",
        &spline(3, 1 | 2, &[0.0, 1.0, 2.0, 3.0, 4.0], &ctrl, &[]),
    ));
    let point = |i: usize, t: f64| {
        let b = [
            (1.0 - t).powi(3) / 6.0,
            (3.0 * t.powi(3) - 6.0 * t * t + 4.0) / 6.0,
            (-3.0 * t.powi(3) + 3.0 * t * t + 3.0 * t + 1.0) / 6.0,
            t.powi(3) / 6.0,
        ];
        (0..4).fold((0.0, 0.0), |(x, y), k| {
            let c = ctrl[(i + k) % 4];
            (x + b[k] * c.0, y + b[k] * c.1)
        })
    };
    let pts: Vec<(f64, f64)> = (0..4)
        .flat_map(|i| (0..10_000).map(move |k| (i, k as f64 / 10_000.0)))
        .map(|(i, t)| point(i, t))
        .collect();
    let shoelace: f64 = (0..pts.len())
        .map(|k| {
            let (a, b) = (pts[k], pts[(k + 1) % pts.len()]);
            a.0 * b.1 - b.0 * a.1
        })
        .sum::<f64>()
        / 2.0;
    close(p.area, shoelace.abs(), 1e-7);
    assert!(p.centroid.x.abs() < 1e-9 && p.centroid.y.abs() < 1e-9);
}

/// Every value of these drawings replaced by awkward numbers, and every line dropped in turn:
/// the pipeline gives rows (or a read error), never a panic or a hang.
#[test]
fn mutated_curve_block_and_hatch_drawings_never_panic() {
    use std::panic::{catch_unwind, AssertUnwindSafe};
    let w = std::f64::consts::FRAC_1_SQRT_2;
    let sources = [
        dxf("", &ellipse((1.0, 2.0), (30.0, 5.0), 0.5, (0.3, 2.0), -1.0)),
        dxf(
            "",
            &spline(
                2,
                1 | 4,
                &[0.0, 0.0, 0.0, 0.5, 0.5, 1.0, 1.0, 1.0],
                &[(1.0, 0.0), (1.0, 1.0), (0.0, 1.0), (-1.0, 1.0), (-1.0, 0.0)],
                &[1.0, w, 1.0, w, 1.0],
            ),
        ),
        dxf(
            "",
            &spline(
                3,
                3,
                &[0.0, 1.0, 2.0, 3.0, 4.0],
                &[(1.0, 0.0), (0.0, 1.0), (-1.0, 0.0), (0.0, -1.0)],
                &[],
            ),
        ),
        dxf(
            &(plate_block("PLATE")
                + &block(
                    "G",
                    (0.0, 0.0),
                    &insert("PLATE", (0.0, 0.0), (1.0, 1.0), 0.0, ""),
                )),
            &insert(
                "G",
                (5.0, 5.0),
                (2.0, -1.0),
                30.0,
                "70\n2\n71\n2\n44\n50\n45\n50\n",
            ),
        ),
        dxf("", &(dome_hatch_edges() + &dome_hatch_polyline())),
    ];
    let awkward = ["0", "-1", "1e300", "nan", "99999999", "x"];
    let mut runs = 0;
    for (k, text) in sources.iter().enumerate() {
        // Hatches (the last drawing) are read with the option, the others as by default.
        let settings = if k + 1 == sources.len() {
            with_hatches()
        } else {
            Settings::default()
        };
        let lines: Vec<&str> = text.lines().collect();
        let mut variants: Vec<String> = Vec::new();
        for i in (1..lines.len()).step_by(2) {
            for a in awkward {
                let mut v = lines.clone();
                v[i] = a;
                variants.push(v.join("\n") + "\n");
            }
            let mut v = lines.clone();
            v.drain(i - 1..=i);
            variants.push(v.join("\n") + "\n");
        }
        for v in variants {
            let r = catch_unwind(AssertUnwindSafe(|| {
                analyze_drawing(v.as_bytes(), &settings)
            }));
            assert!(r.is_ok(), "panic on:\n{v}");
            assert!(!r.unwrap().is_empty());
            runs += 1;
        }
    }
    assert!(runs > 800, "{runs}");
}
