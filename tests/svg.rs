//! SVG drawings through the whole pipeline: the same sections as DXF, closed forms, fill
//! rules, units, transforms, the real-drawing corpus and the command line.

mod util;

use std::f64::consts::PI;
use std::path::Path;
use std::process::Command;

use sectio::analyze::{analyze_drawing, Outcome, Settings};
use sectio::cli::batch::measure_file;
use sectio::import::ReadOptions;
use sectio::section::SectionProps;

/// An SVG page 100 mm square with a viewBox of 100 units: 1 user unit = 1 mm, and y up in
/// the results is 100 − y of the file.
fn svg(body: &str) -> String {
    format!(
        r#"<?xml version="1.0" encoding="UTF-8"?>
<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" width="100mm" height="100mm" viewBox="0 0 100 100">
{body}
</svg>
"#
    )
}

fn measure_with(text: &str, settings: &Settings) -> Vec<Outcome> {
    analyze_drawing(text.as_bytes(), settings)
}

fn measure(text: &str) -> Vec<Outcome> {
    measure_with(text, &Settings::default())
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

/// Every property the two readers must agree on, to `rel`.
#[track_caller]
fn same_section(a: &SectionProps, b: &SectionProps, rel: f64) {
    assert_close!(a.area, b.area, rel = rel);
    assert_close!(a.perimeter, b.perimeter, rel = rel);
    assert_eq!(a.n_holes, b.n_holes);
    let size = a.bbox.diagonal();
    assert_close!(a.centroid.x, b.centroid.x, abs = rel * size);
    assert_close!(a.centroid.y, b.centroid.y, abs = rel * size);
    assert_close!(a.ixx, b.ixx, rel = rel);
    assert_close!(a.iyy, b.iyy, rel = rel);
    let ip = a.ixx + a.iyy;
    assert_close!(a.ixy, b.ixy, abs = rel * ip);
}

/// A DXF drawing with the given ENTITIES.
fn dxf(entities: &str) -> String {
    format!("0\nSECTION\n2\nENTITIES\n{entities}0\nENDSEC\n0\nEOF\n")
}

/// A closed LWPOLYLINE from (x, y, bulge) vertices.
fn lwpolyline(vertices: &[(f64, f64, f64)]) -> String {
    let mut s = format!("0\nLWPOLYLINE\n8\n0\n90\n{}\n70\n1\n", vertices.len());
    for (x, y, b) in vertices {
        s += &format!("10\n{x}\n20\n{y}\n42\n{b}\n");
    }
    s
}

/// A rectangle x0..x0+w, y0..y0+h (y up) with corners of radius r, counter-clockwise.
fn rounded_lwpolyline(x0: f64, y0: f64, w: f64, h: f64, r: f64) -> String {
    // Bulge of a quarter turn: tan(90°/4) (DXF reference, LWPOLYLINE group 42).
    let q = (PI / 8.0).tan();
    let (x1, y1) = (x0 + w, y0 + h);
    lwpolyline(&[
        (x0 + r, y0, 0.0),
        (x1 - r, y0, q),
        (x1, y0 + r, 0.0),
        (x1, y1 - r, q),
        (x1 - r, y1, 0.0),
        (x0 + r, y1, q),
        (x0, y1 - r, 0.0),
        (x0, y0 + r, q),
    ])
}

fn circle_entity(c: (f64, f64), r: f64) -> String {
    format!(
        "0\nCIRCLE\n8\n0\n10\n{}\n20\n{}\n30\n0\n40\n{r}\n",
        c.0, c.1
    )
}

fn line_entity(a: (f64, f64), b: (f64, f64)) -> String {
    format!(
        "0\nLINE\n8\n0\n10\n{}\n20\n{}\n30\n0\n11\n{}\n21\n{}\n31\n0\n",
        a.0, a.1, b.0, b.1
    )
}

/// A cubic Bézier as a SPLINE: degree 3, knots [0,0,0,0,1,1,1,1].
fn bezier_spline(ctrl: &[(f64, f64); 4]) -> String {
    let mut s = "0\nSPLINE\n8\n0\n70\n8\n71\n3\n72\n8\n73\n4\n74\n0\n".to_string();
    for k in [0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 1.0] {
        s += &format!("40\n{k}\n");
    }
    for p in ctrl {
        s += &format!("10\n{}\n20\n{}\n30\n0\n", p.0, p.1);
    }
    s
}

/// Area and centroidal Ixx of a w×h rectangle with corners of radius r, by hand:
/// a w×(h−2r) band, two (w−2r)×r strips at distance c' = h/2 − r/2, and four quarter discs
/// whose centres sit at distance c = h/2 − r. A quarter disc about an axis through its centre
/// has πr⁴/16 and first moment (πr²/4)·4r/(3π) = r³/3 (quarter-disc centroid 4r/(3π); from
/// memory, standard table of plane-area properties), so about the section's axis it has
/// πr⁴/16 + 2c·r³/3 + c²·πr²/4 (parallel-axis theorem). Iyy is the same with w, h swapped.
fn rounded_rect_closed_form(w: f64, h: f64, r: f64) -> (f64, f64, f64) {
    let area = w * h - (4.0 - PI) * r * r;
    let c = h / 2.0 - r;
    let ixx = w * (h - 2.0 * r).powi(3) / 12.0
        + 2.0
            * ((w - 2.0 * r) * r.powi(3) / 12.0 + (w - 2.0 * r) * r * (h / 2.0 - r / 2.0).powi(2))
        + 4.0 * (PI * r.powi(4) / 16.0 + 2.0 * c * r.powi(3) / 3.0 + c * c * PI * r * r / 4.0);
    let perimeter = 2.0 * (w + h) - 8.0 * r + 2.0 * PI * r;
    (area, ixx, perimeter)
}

// ---------------------------------------------------------------------------------------------
// The same section as DXF and as SVG

#[test]
fn rounded_rectangle_tube_as_svg_and_dxf() {
    // Stroke-only outlines: nested by containment, as DXF loops are.
    let s = only_ok(&svg(r#"<g fill="none" stroke="black">
  <rect x="10" y="20" width="60" height="40" rx="8"/>
  <rect x="15" y="25" width="50" height="30" rx="3" ry="3"/>
</g>"#));
    // y up: the file's y 20..60 is 80..40.
    let d = only_ok(&dxf(&format!(
        "{}{}",
        rounded_lwpolyline(10.0, 40.0, 60.0, 40.0, 8.0),
        rounded_lwpolyline(15.0, 45.0, 50.0, 30.0, 3.0)
    )));
    same_section(&s, &d, 1e-9);
    assert_eq!(s.n_holes, 1);
    let (ao, io, po) = rounded_rect_closed_form(60.0, 40.0, 8.0);
    let (ai, ii, pi) = rounded_rect_closed_form(50.0, 30.0, 3.0);
    let (_, jo, _) = rounded_rect_closed_form(40.0, 60.0, 8.0);
    let (_, ji, _) = rounded_rect_closed_form(30.0, 50.0, 3.0);
    // Closed forms by hand (rounded_rect_closed_form above).
    assert_close!(s.area, ao - ai, rel = 1e-12);
    assert_close!(s.ixx, io - ii, rel = 1e-12);
    assert_close!(s.iyy, jo - ji, rel = 1e-12);
    assert_close!(s.perimeter, po + pi, rel = 1e-12);
    assert_close!(s.centroid.x, 40.0, abs = 1e-12);
    assert_close!(s.centroid.y, 60.0, abs = 1e-12);
}

#[test]
fn elliptical_corners_match_their_closed_form_area() {
    // Corners with rx ≠ ry: a w×h rectangle less four corner pieces of (4 − π)/4·rx·ry each
    // (ellipse area πab, check-values.md §1).
    let s = only_ok(&svg(
        r#"<rect x="10" y="10" width="50" height="30" rx="10" ry="4"/>"#,
    ));
    assert_close!(s.area, 50.0 * 30.0 - (4.0 - PI) * 10.0 * 4.0, rel = 1e-12);
}

#[test]
fn circle_with_a_hole_as_svg_and_dxf() {
    // One filled path under evenodd: an outer circle of two `A` halves, an eccentric hole
    // drawn as a <circle> would be, the same way round (evenodd makes it a hole).
    let s = only_ok(&svg(
        r#"<path fill-rule="evenodd" d="M 70 50 A 20 20 0 0 0 30 50 A 20 20 0 0 0 70 50 Z
           M 58 45 a 6 6 0 1 0 -12 0 a 6 6 0 1 0 12 0 z"/>"#,
    ));
    let d = only_ok(&dxf(&format!(
        "{}{}",
        circle_entity((50.0, 50.0), 20.0),
        circle_entity((52.0, 55.0), 6.0)
    )));
    same_section(&s, &d, 1e-9);
    // Circle r: area πr², I = πr⁴/4 about a diameter (from memory, standard table of
    // plane-area properties); the hole by the parallel-axis theorem.
    let (a_o, a_h) = (PI * 400.0, PI * 36.0);
    let area = a_o - a_h;
    assert_close!(s.area, area, rel = 1e-12);
    let cy = (a_o * 50.0 - a_h * 55.0) / area;
    assert_close!(s.centroid.y, cy, abs = 1e-12 * 50.0);
    let ixx = PI * 20f64.powi(4) / 4.0 + a_o * (50.0 - cy).powi(2)
        - (PI * 6f64.powi(4) / 4.0 + a_h * (55.0 - cy).powi(2));
    assert_close!(s.ixx, ixx, rel = 1e-12);
    assert_close!(s.perimeter, 2.0 * PI * 26.0, rel = 1e-12);
}

#[test]
fn profile_with_cubic_beziers_as_svg_and_dxf() {
    // A plate with a bulging right side (a cubic) and a wavy top (a cubic).
    let s = only_ok(&svg(
        r#"<path fill="none" stroke="black" d="M 10 80 L 50 80 C 60 70 62 50 50 40 C 40 30 20 50 10 40 Z"/>"#,
    ));
    let f = |x: f64, y: f64| (x, 100.0 - y);
    let d = only_ok(&dxf(&format!(
        "{}{}{}{}",
        line_entity(f(10.0, 80.0), f(50.0, 80.0)),
        bezier_spline(&[f(50.0, 80.0), f(60.0, 70.0), f(62.0, 50.0), f(50.0, 40.0)]),
        bezier_spline(&[f(50.0, 40.0), f(40.0, 30.0), f(20.0, 50.0), f(10.0, 40.0)]),
        line_entity(f(10.0, 40.0), f(10.0, 80.0)),
    )));
    same_section(&s, &d, 1e-9);
}

#[test]
fn a_quadratic_bezier_bounds_archimedes_parabolic_segment() {
    // Chord of length b under a parabola of height h (control point at 2h): area 2/3·b·h
    // (Archimedes, Quadrature of the Parabola; from memory).
    let s = only_ok(&svg(r#"<path d="M 10 60 Q 30 20 50 60 Z"/>"#));
    assert_close!(s.area, 2.0 / 3.0 * 40.0 * 20.0, rel = 1e-12);
    // Smooth continuation T mirrors the control point: a bump up then an equal dip down
    // over a 40×30 rectangle, which leaves the rectangle's area.
    let t = only_ok(&svg(
        r#"<path d="M 10 60 Q 20 20 30 60 T 50 60 L 50 90 L 10 90 Z"/>"#,
    ));
    assert_close!(t.area, 1200.0, rel = 1e-12);
}

#[test]
fn ellipse_element_and_elliptical_arcs_are_exact() {
    // Ellipse with semi-axes a, b: area πab, Ixx = πab³/4, Iyy = πa³b/4 (check-values.md §1).
    let (a, b) = (30.0, 12.0);
    let e = only_ok(&svg(r#"<ellipse cx="50" cy="50" rx="30" ry="12"/>"#));
    assert_close!(e.area, PI * a * b, rel = 1e-12);
    assert_close!(e.ixx, PI * a * b.powi(3) / 4.0, rel = 1e-12);
    assert_close!(e.iyy, PI * a.powi(3) * b / 4.0, rel = 1e-12);
    // The same ellipse as two `A` halves, turned by 30° with the arcs' x-axis-rotation:
    // principal moments unchanged.
    let c = 30f64.to_radians();
    let (x1, y1) = (50.0 + a * c.cos(), 50.0 + a * c.sin());
    let (x2, y2) = (50.0 - a * c.cos(), 50.0 - a * c.sin());
    let r = only_ok(&svg(&format!(
        r#"<path d="M {x1} {y1} A 30 12 30 0 1 {x2} {y2} A 30 12 30 0 1 {x1} {y1} Z"/>"#
    )));
    assert_close!(r.area, PI * a * b, rel = 1e-12);
    assert_close!(r.i1, PI * a.powi(3) * b / 4.0, rel = 1e-12);
    assert_close!(r.i2, PI * a * b.powi(3) / 4.0, rel = 1e-12);
    // y flip: the major axis, turned +30° in the file (y down), lies at −30° in the results;
    // the larger moment i1 is about the minor axis, at −30° + 90°.
    assert_close!(r.theta_deg, 60.0, abs = 1e-9);
}

// ---------------------------------------------------------------------------------------------
// Fill rules

/// Outer square 10..90 clockwise on screen; an inner square 30..70 running `inner`.
fn nested_squares(rule: &str, inner_same_way: bool) -> String {
    let inner = if inner_same_way {
        "M 30 30 L 70 30 L 70 70 L 30 70 Z"
    } else {
        "M 30 30 L 30 70 L 70 70 L 70 30 Z"
    };
    svg(&format!(
        r#"<path fill="black" fill-rule="{rule}" d="M 10 10 L 90 10 L 90 90 L 10 90 Z {inner}"/>"#
    ))
}

#[test]
fn nonzero_keeps_a_same_direction_inner_subpath_as_material() {
    let rows = measure(&nested_squares("nonzero", true));
    assert_eq!(rows.len(), 1);
    let p = rows[0].result.clone().expect("ok");
    assert_eq!(p.n_holes, 0);
    assert_close!(p.area, 6400.0, rel = 1e-12);
    assert!(
        rows[0].message.contains("counted as material"),
        "{}",
        rows[0].message
    );
    // Opposite direction: winding 0 inside, a hole.
    let p = only_ok(&nested_squares("nonzero", false));
    assert_eq!(p.n_holes, 1);
    assert_close!(p.area, 6400.0 - 1600.0, rel = 1e-12);
    // The same rule set through a style sheet class.
    let css = svg(
        r#"<style>.solid { fill-rule: nonzero } .cut { fill-rule: evenodd }</style>
<path class="cut" d="M 10 10 L 90 10 L 90 90 L 10 90 Z M 30 30 L 70 30 L 70 70 L 30 70 Z"/>"#,
    );
    assert_eq!(only_ok(&css).n_holes, 1);
}

#[test]
fn evenodd_makes_every_inner_subpath_a_hole() {
    for same_way in [true, false] {
        let p = only_ok(&nested_squares("evenodd", same_way));
        assert_eq!(p.n_holes, 1);
        assert_close!(p.area, 4800.0, rel = 1e-12);
    }
    // Style attribute beats the presentation attribute.
    let styled = svg(
        r#"<path fill-rule="nonzero" style="fill:#000;fill-rule:evenodd" d="M 10 10 L 90 10 L 90 90 L 10 90 Z M 30 30 L 70 30 L 70 70 L 30 70 Z"/>"#,
    );
    assert_eq!(only_ok(&styled).n_holes, 1);
}

#[test]
fn an_island_in_a_hole_under_nonzero() {
    // Outer one way, hole the other way, island inside the hole the first way again:
    // windings 1, 0, 1 from outside in, so all three are boundaries.
    let text = svg(
        r#"<path d="M 10 10 L 90 10 L 90 90 L 10 90 Z M 20 20 L 20 80 L 80 80 L 80 20 Z M 40 40 L 60 40 L 60 60 L 40 60 Z"/>"#,
    );
    let rows = measure(&text);
    let ok: Vec<SectionProps> = rows.iter().filter_map(|r| r.result.clone().ok()).collect();
    assert_eq!(ok.len(), 2, "{rows:#?}");
    let total: f64 = ok.iter().map(|p| p.area).sum();
    assert_close!(total, 6400.0 - 3600.0 + 400.0, rel = 1e-12);
}

#[test]
fn self_overlapping_subpaths_follow_the_fill_rule() {
    // Two 40 × 40 squares overlapping in a 20 × 20 corner, in one path (arithmetic):
    // nonzero fills their union, 2·1600 − 400 = 2800 user units²; evenodd leaves the overlap
    // out, 2400 (SVG 1.1 §11.3, fill-rule). 1 user unit = 1 mm here.
    for (rule, want) in [("nonzero", 2800.0), ("evenodd", 2400.0)] {
        let rows = measure(&svg(&format!(
            r#"<path fill-rule="{rule}" d="M 10 10 L 50 10 L 50 50 L 10 50 Z M 30 30 L 70 30 L 70 70 L 30 70 Z"/>"#
        )));
        let total: f64 = rows
            .iter()
            .map(|r| r.result.as_ref().expect("measured").area)
            .sum();
        assert_close!(total, want, rel = 1e-12);
        assert!(
            rows[0].message.contains("taken by its fill rule"),
            "{}",
            rows[0].message
        );
    }
    // A pentagram in one subpath: evenodd leaves the inner pentagon out, nonzero fills it;
    // they differ by that pentagon, circumradius ρ = R·cos(2π/5)/cos(π/5), area
    // (5/2)ρ²·sin(2π/5) (regular pentagram and polygon, from memory).
    let r = 40.0;
    let pts: Vec<String> = (0..5)
        .map(|k| {
            let a = std::f64::consts::PI / 2.0 + 4.0 * std::f64::consts::PI * k as f64 / 5.0;
            format!("{} {}", 50.0 + r * a.cos(), 50.0 - r * a.sin())
        })
        .collect();
    let area_of = |rule: &str| -> f64 {
        measure(&svg(&format!(
            r#"<path fill-rule="{rule}" d="M {} Z"/>"#,
            pts.join(" L ")
        )))
        .iter()
        .map(|r| r.result.as_ref().expect("measured").area)
        .sum()
    };
    let rho = r * (0.4 * std::f64::consts::PI).cos() / (0.2 * std::f64::consts::PI).cos();
    let pentagon = 2.5 * rho * rho * (0.4 * std::f64::consts::PI).sin();
    assert_close!(
        area_of("nonzero") - area_of("evenodd"),
        pentagon,
        rel = 1e-9
    );
    // Drawn with a stroke only, the same crossing squares stay an error: an outline must not
    // cross itself.
    let rows = measure(&svg(
        r#"<path fill="none" stroke="black" d="M 10 10 L 50 10 L 50 50 L 10 50 Z M 30 30 L 70 30 L 70 70 L 30 70 Z"/>"#,
    ));
    assert!(rows.iter().all(|r| r.result.is_err()), "{rows:#?}");
}

#[test]
fn an_open_path_is_chained_or_reported() {
    // Returns to its start without Z: closed by chaining.
    let p = only_ok(&svg(
        r#"<path fill="none" stroke="red" d="M 10 10 L 50 10 L 50 50 L 10 10"/>"#,
    ));
    assert_close!(p.area, 800.0, rel = 1e-12);
    // A gap far beyond the join gap: an error row.
    let rows = measure(&svg(
        r#"<path fill="none" stroke="red" d="M 10 10 L 50 10 L 50 50 L 12 14"/>"#,
    ));
    assert!(rows.iter().all(|r| r.result.is_err()), "{rows:#?}");
    // An open path far from closing beside (and across) a closed outline: its own error row
    // naming its ends, while the outline it crosses is still measured.
    let rows = measure(&svg(
        r#"<rect x="10" y="10" width="40" height="20"/><path fill="none" stroke="red" d="M 0 20 L 60 20"/>"#,
    ));
    assert_eq!(rows.len(), 2, "{rows:#?}");
    let ok: Vec<_> = rows.iter().filter_map(|r| r.result.as_ref().ok()).collect();
    assert_eq!(ok.len(), 1, "{rows:#?}");
    assert_close!(ok[0].area, 800.0, rel = 1e-12);
    let err = rows
        .iter()
        .find_map(|r| r.result.as_ref().err())
        .expect("error row");
    assert!(
        err.starts_with("open path:") && err.contains("60 apart"),
        "{err}"
    );
}

// ---------------------------------------------------------------------------------------------
// Units

fn page(size: &str, body: &str) -> String {
    format!(r#"<svg xmlns="http://www.w3.org/2000/svg" {size}>{body}</svg>"#)
}

#[test]
fn units_from_the_page_size_and_viewbox() {
    let rect = r#"<rect x="0" y="0" width="100" height="100"/>"#;
    // 100 mm over 1000 units: 0.1 mm per unit, 10 mm square.
    let p = only_ok(&page(
        r#"width="100mm" height="100mm" viewBox="0 0 1000 1000""#,
        rect,
    ));
    assert_close!(p.area, 100.0, rel = 1e-12);
    // 2 in over 200 units: 0.254 mm per unit (1 in = 25.4 mm, exact by definition).
    let p = only_ok(&page(
        r#"width="2in" height="2in" viewBox="0 0 200 200""#,
        rect,
    ));
    assert_close!(p.area, 25.4f64.powi(2), rel = 1e-12);
    // cm with the height alone deciding the scale.
    let p = only_ok(&page(r#"height="10cm" viewBox="0 0 100 100""#, rect));
    assert_close!(p.area, 10000.0, rel = 1e-12);
    // pt: 72 per inch (CSS Values and Units §6.2).
    let p = only_ok(&page(
        r#"width="72pt" height="72pt" viewBox="0 0 100 100""#,
        rect,
    ));
    assert_close!(p.area, 25.4f64.powi(2), rel = 1e-12);
}

#[test]
fn preserve_aspect_ratio_places_the_viewbox() {
    // A 200 mm × 100 mm page with a 100-unit square viewBox: scale 1 mm per unit either way;
    // SVG 1.1 §7.8: xMinYMin puts the viewBox at the left edge, the default xMidYMid centres
    // it (50 mm in), xMaxYMax puts it at the right (100 mm in).
    for (aspect, left) in [("xMinYMin meet", 0.0), ("", 50.0), ("xMaxYMax", 100.0)] {
        let attr = if aspect.is_empty() {
            String::new()
        } else {
            format!(r#" preserveAspectRatio="{aspect}""#)
        };
        let p = only_ok(&format!(
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="200mm" height="100mm" viewBox="0 0 100 100"{attr}><rect width="10" height="10"/></svg>"#
        ));
        assert_close!(p.bbox.min.x, left, abs = 1e-12);
        assert_close!(p.area, 100.0, rel = 1e-12);
    }
}

#[test]
fn no_physical_size_assumes_css_px_and_says_so() {
    // 96 px = 1 in (CSS Values and Units §6.2).
    let rows = measure(&page("", r#"<rect width="96" height="96"/>"#));
    let p = rows[0].result.clone().expect("ok");
    assert_close!(p.area, 25.4f64.powi(2), rel = 1e-12);
    assert!(
        rows[0].message.contains("1 px = 25.4/96 mm"),
        "{}",
        rows[0].message
    );
    // --svg-scale overrides page size and viewBox.
    let settings = Settings {
        read: ReadOptions {
            svg_mm_per_unit: Some(2.0),
            ..ReadOptions::default()
        },
        ..Settings::default()
    };
    let text = page(
        r#"width="100mm" height="100mm" viewBox="0 0 1000 1000""#,
        r#"<rect width="10" height="10"/>"#,
    );
    let rows = measure_with(&text, &settings);
    assert_close!(rows[0].result.clone().expect("ok").area, 400.0, rel = 1e-12);
    assert!(rows[0].message.contains("--svg-scale"));
}

// ---------------------------------------------------------------------------------------------
// Transforms

#[test]
fn group_and_use_transforms_compose() {
    // Rectangle b×h: I = b·h³/12 (from memory, standard table of plane-area properties);
    // turned by 30°, principal moments stay.
    let p = only_ok(&svg(
        r#"<g transform="translate(50 50)"><g transform="rotate(30)"><rect x="-20" y="-5" width="40" height="10"/></g></g>"#,
    ));
    assert_close!(p.i1, 10.0 * 40f64.powi(3) / 12.0, rel = 1e-12);
    assert_close!(p.i2, 40.0 * 10f64.powi(3) / 12.0, rel = 1e-12);
    assert_close!(p.centroid.x, 50.0, abs = 1e-12);
    // A non-uniform scale makes a circle an ellipse: semi-axes 2·5 and 3·5 (check-values.md §1).
    let e = only_ok(&svg(
        r#"<g transform="translate(50,50) scale(2,3)"><circle r="5"/></g>"#,
    ));
    assert_close!(e.area, PI * 10.0 * 15.0, rel = 1e-12);
    assert_close!(e.ixx, PI * 10.0 * 15f64.powi(3) / 4.0, rel = 1e-12);
    // skewX keeps the area (determinant 1) and moves the centroid along x.
    let k = only_ok(&svg(
        r#"<g transform="skewX(45)"><rect x="10" y="10" width="20" height="20"/></g>"#,
    ));
    assert_close!(k.area, 400.0, rel = 1e-12);
    assert_close!(k.centroid.x, 20.0 + 20.0, abs = 1e-12);
    // <use>: a symbol placed twice, with x/y and a transform.
    let rows = measure(&svg(r##"<defs><rect id="r" width="10" height="4"/></defs>
<use xlink:href="#r" x="5" y="5"/>
<use href="#r" transform="translate(60 0) rotate(90)" x="0" y="0"/>"##));
    let ok: Vec<SectionProps> = rows.iter().map(|r| r.result.clone().expect("ok")).collect();
    assert_eq!(ok.len(), 2);
    assert!(ok.iter().all(|p| (p.area - 40.0).abs() < 1e-12));
    assert_close!(ok[0].centroid.x, 10.0, abs = 1e-12);
    assert_close!(ok[0].centroid.y, 100.0 - 7.0, abs = 1e-12);
    // Turned a quarter: 4 wide, 10 high.
    assert_close!(ok[1].bbox.width(), 4.0, abs = 1e-12);
    assert_close!(ok[1].bbox.height(), 10.0, abs = 1e-12);
}

#[test]
fn y_points_up_in_the_results() {
    let rows = measure(&svg(
        r#"<rect id="top" x="10" y="5" width="10" height="10"/><rect id="bottom" x="40" y="80" width="10" height="10"/>"#,
    ));
    let by = |layer: &str| {
        rows.iter()
            .find(|r| r.layer == layer)
            .and_then(|r| r.result.clone().ok())
            .unwrap_or_else(|| panic!("{layer}: {rows:#?}"))
    };
    assert!(by("top").centroid.y > by("bottom").centroid.y);
    assert_close!(by("top").centroid.y, 90.0, abs = 1e-12);
}

#[test]
fn hidden_text_and_broken_files() {
    let rows = measure(&svg(
        r#"<rect width="10" height="10"/><rect x="50" width="10" height="10" style="display:none"/>
<g visibility="hidden"><rect x="20" width="5" height="5"/></g><text x="0" y="50">HV-204</text>"#,
    ));
    assert_eq!(rows.len(), 1);
    assert!(rows[0].message.contains("text"), "{}", rows[0].message);
    let e = measure("<svg><rect width='1' height='1'></svg>");
    assert_eq!(e.len(), 1);
    let msg = e[0].result.clone().expect_err("error row");
    assert!(
        msg.contains("malformed SVG") && msg.contains("line 1"),
        "{msg}"
    );
    let e = measure("<html><body/></html>");
    assert!(e[0]
        .result
        .clone()
        .expect_err("error")
        .contains("not <svg>"));
}

// ---------------------------------------------------------------------------------------------
// What is drawn: usvg's verdict, sectio's exact geometry

/// The areas of the ok rows, sorted.
fn areas(rows: &[Outcome]) -> Vec<f64> {
    let mut a: Vec<f64> = rows
        .iter()
        .map(|r| {
            r.result
                .clone()
                .unwrap_or_else(|e| panic!("error row: {e}"))
                .area
        })
        .collect();
    a.sort_by(f64::total_cmp);
    a
}

#[test]
fn a_switch_draws_only_its_first_matching_child() {
    // SVG 1.1 §5.8.2: <switch> renders the first direct child whose conditions hold; usvg
    // asks for English (systemLanguage "en"). The fallback child is the one drawn.
    let rows = measure(&svg(
        r#"<switch><rect systemLanguage="qq" width="10" height="10"/><rect x="20" width="30" height="10"/><rect x="60" width="5" height="5"/></switch>"#,
    ));
    assert_eq!(areas(&rows), vec![300.0], "{rows:#?}");
    assert!(
        rows[0].message.contains("not drawn by usvg"),
        "{}",
        rows[0].message
    );
}

#[test]
fn style_sheets_apply_with_any_selector() {
    // A child combinator and an attribute selector hide two of the four rectangles; a class
    // rule turns the fill of a third off and its stroke on (an outline, still measured).
    let rows = measure(&svg(
        r#"<style>g > rect.ghost { display: none } rect[data-note] { visibility: hidden } .line { fill: none; stroke: black }</style>
<g><rect class="ghost" width="10" height="10"/></g><rect data-note="x" x="20" width="10" height="10"/>
<rect class="line" x="40" width="10" height="20"/><rect x="60" width="10" height="30"/>"#,
    ));
    assert_eq!(areas(&rows), vec![200.0, 300.0], "{rows:#?}");
}

#[test]
fn markers_are_annotation_not_outlines() {
    // Arrowhead markers on every vertex of an outline: usvg would draw each as a closed
    // triangle beside the profile.
    let rows = measure(&svg(
        r#"<defs><marker id="arrow" markerWidth="10" markerHeight="10" refX="0" refY="5" orient="auto"><path d="M0,0 L10,5 L0,10 z"/></marker></defs>
<path d="M10 10 H50 V30 H10 Z" marker-start="url(#arrow)" marker-mid="url(#arrow)" marker-end="url(#arrow)"/>"#,
    ));
    assert_eq!(areas(&rows), vec![800.0], "{rows:#?}");
}

#[test]
fn a_path_only_usvg_places_keeps_usvgs_outline_with_a_note() {
    // `transform-origin` (CSS Transforms 1, §6) is resolved by usvg, not by sectio's walk:
    // the square turned a quarter about (50, 50) lands at x 60…80, y 10…30 (y down). The
    // walk places it elsewhere, so its usvg outline is measured (f32: the area to ~1e-6) and
    // the row says so.
    let rows = measure(&svg(
        r#"<rect x="10" y="20" width="20" height="20" transform="rotate(90)" transform-origin="50 50"/>"#,
    ));
    assert_eq!(rows.len(), 1, "{rows:#?}");
    let p = rows[0].result.clone().expect("ok row");
    assert_close!(p.area, 400.0, rel = 1e-6);
    assert_close!(p.centroid.x, 70.0, abs = 1e-4);
    assert_close!(p.centroid.y, 100.0 - 20.0, abs = 1e-4);
    assert!(
        rows[0]
            .message
            .contains("drawn by usvg not placed by sectio's reader")
            && rows[0].message.contains("not drawn by usvg"),
        "{}",
        rows[0].message
    );
}

#[test]
fn a_nested_viewport_fits_its_viewbox_exactly() {
    // SVG 1.1 §7.7-7.8: a nested <svg> at (10, 10), 20 × 20, with viewBox 0 0 10 10: a circle
    // of radius 5 becomes one of radius 10 centred at (20, 20); viewBox 0 0 10 5 fitted by the
    // default xMidYMid meet: scale 2, centred vertically (5 below the top), so the 10 × 5 rect
    // covers x 40…60, y 15…25 (y down). Exact, with no note of usvg's outline.
    let rows = measure(&svg(
        r#"<svg x="10" y="10" width="20" height="20" viewBox="0 0 10 10"><circle cx="5" cy="5" r="5"/></svg>
<svg x="40" y="10" width="20" height="20" viewBox="0 0 10 5"><rect width="10" height="5"/></svg>"#,
    ));
    assert_eq!(rows.len(), 2, "{rows:#?}");
    let circle = rows[0].result.clone().expect("ok");
    assert_close!(circle.area, PI * 100.0, rel = 1e-12);
    assert_close!(circle.centroid.x, 20.0, abs = 1e-12);
    assert_close!(circle.centroid.y, 100.0 - 20.0, abs = 1e-12);
    let rect = rows[1].result.clone().expect("ok");
    assert_close!(rect.area, 200.0, rel = 1e-12);
    assert_close!(rect.bbox.min.x, 40.0, abs = 1e-12);
    assert_close!(rect.bbox.max.y, 100.0 - 15.0, abs = 1e-12);
    assert!(
        rows.iter().all(|r| !r.message.contains("usvg")),
        "{rows:#?}"
    );
}

#[test]
fn usvg_is_not_asked_about_astronomical_arcs() {
    // usvg splits an arc into cubics at 0.1 user units: a radius of 1e30 would mean millions
    // of them and a parser buffering them quadratically (found by tests/fuzz_seeded.rs). Past
    // 1e12 user units sectio's reader decides alone, and the row says why.
    let rows = measure(&svg(
        r#"<path d="M0 0 A1e30 1e30 0 1 1 1e29 0 Z"/><rect x="10" y="10" width="10" height="10"/>"#,
    ));
    assert!(
        rows.iter().any(|r| r
            .message
            .contains("usvg would turn arcs into too many curves")),
        "{rows:#?}"
    );
}

#[test]
fn the_root_transform_applies_in_the_viewport() {
    // SVG 2 §8.5 allows `transform` on the outermost <svg>; it applies in the viewport, in
    // CSS px (96 per inch), about the root's transform-origin, whose initial value is the
    // viewport's centre (CSS Transforms 1, §6). Page 100 mm with viewBox 0 0 100 (1 unit =
    // 1 mm): scale(2) about (50, 50) takes the square x 10…20 to x −30…−10 (20 × 20);
    // with transform-origin 0 0 to x 20…40; translate(96 0) moves it 1 in = 25.4 mm right.
    // Exact, and paired with usvg's path (no note of usvg's outline).
    let page = |t: &str| {
        format!(
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="100mm" viewBox="0 0 100 100" {t}><rect x="10" y="10" width="10" height="10"/></svg>"#
        )
    };
    for (attrs, left, top) in [
        (r#"transform="scale(2)""#, -30.0, 100.0 + 30.0),
        (
            r#"transform="scale(2)" transform-origin="0 0""#,
            20.0,
            100.0 - 20.0,
        ),
        (r#"transform="translate(96 0)""#, 10.0 + 25.4, 100.0 - 10.0),
    ] {
        let rows = measure(&page(attrs));
        let p = rows[0].result.clone().expect("ok");
        let side = if attrs.contains("scale") { 20.0 } else { 10.0 };
        assert_close!(p.area, side * side, rel = 1e-12);
        assert_close!(p.bbox.min.x, left, abs = 1e-12);
        assert_close!(p.bbox.max.y, top, abs = 1e-12);
        assert!(
            !rows[0].message.contains("usvg"),
            "{attrs}: {}",
            rows[0].message
        );
    }
}

#[test]
fn a_symbol_viewbox_fits_the_use_that_places_it() {
    // SVG 1.1 §5.6: a <use> of a <symbol> with a viewBox draws it in a viewport of the use's
    // width and height (100 % of the page's viewBox by default). Symbol viewBox 0 0 10 10
    // holding a circle of radius 5: at 20 × 20 from (10, 10) it has radius 10 centred at
    // (20, 20); with no size it fills the 100-unit page: radius 50 centred at (50, 50).
    let rows = measure(&svg(
        r##"<defs><symbol id="dot" viewBox="0 0 10 10"><circle cx="5" cy="5" r="5"/></symbol></defs>
<use href="#dot" x="10" y="10" width="20" height="20"/>"##,
    ));
    let p = rows[0].result.clone().expect("ok");
    assert_close!(p.area, PI * 100.0, rel = 1e-12);
    assert_close!(p.centroid.x, 20.0, abs = 1e-12);
    assert_close!(p.centroid.y, 100.0 - 20.0, abs = 1e-12);
    assert!(!rows[0].message.contains("usvg"), "{}", rows[0].message);
    let rows = measure(&svg(
        r##"<defs><symbol id="dot" viewBox="0 0 10 10"><circle cx="5" cy="5" r="5"/></symbol></defs>
<use href="#dot"/>"##,
    ));
    let p = rows[0].result.clone().expect("ok");
    assert_close!(p.area, PI * 2500.0, rel = 1e-12);
    assert_close!(p.centroid.x, 50.0, abs = 1e-12);
    assert!(!rows[0].message.contains("usvg"), "{}", rows[0].message);
}

#[test]
fn a_hairline_stroke_is_an_outline() {
    // CAD programs write outlines with stroke-width 0 (a hairline); usvg paints nothing, but
    // the outline is the drawing's content.
    let rows = measure(&svg(
        r#"<rect x="10" y="10" width="20" height="10" fill="none" stroke="black" stroke-width="0"/>"#,
    ));
    assert_eq!(areas(&rows), vec![200.0], "{rows:#?}");
    assert!(rows[0].message.contains("hairline"), "{}", rows[0].message);
}

#[test]
fn when_usvg_cannot_read_the_file_sectios_reader_decides_alone() {
    // A zero page size is an error for usvg; sectio takes it as no physical size.
    let rows = measure(
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="0" height="0" viewBox="0 0 100 100"><rect width="10" height="10"/><rect x="20" width="5" height="5" fill="none"/></svg>"#,
    );
    assert_eq!(rows.len(), 1, "{rows:#?}");
    assert!(
        rows[0].message.contains("usvg could not read the file"),
        "{}",
        rows[0].message
    );
    assert_close!(
        rows[0].result.clone().expect("ok").area,
        100.0 * (25.4f64 / 96.0).powi(2),
        rel = 1e-12
    );
}

// ---------------------------------------------------------------------------------------------
// The real-drawing corpus and the command line

#[test]
fn every_corpus_svg_yields_rows_and_nothing_panics() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/corpus/real/svg");
    if !dir.is_dir() {
        eprintln!("skipped: {} is missing", dir.display());
        return;
    }
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("corpus folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "svg"))
        .collect();
    files.sort();
    assert!(files.len() >= 20, "{files:?}");
    let mut ok = 0;
    for f in &files {
        let rows = measure_file(f, &Settings::default());
        assert!(!rows.is_empty(), "{}", f.display());
        for r in &rows {
            if let Err(e) = &r.outcome.result {
                assert!(
                    !e.is_empty() && !e.contains("internal error"),
                    "{}: {e}",
                    f.display()
                );
            } else {
                ok += 1;
            }
        }
    }
    assert!(ok >= 10, "only {ok} profiles measured");
}

#[test]
fn measure_takes_a_folder_mixing_dxf_and_svg() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(
        dir.path().join("a.dxf"),
        dxf(&circle_entity((0.0, 0.0), 10.0)),
    )
    .expect("write");
    std::fs::write(
        dir.path().join("b.SVG"),
        svg(r#"<circle cx="50" cy="50" r="10"/>"#),
    )
    .expect("write");
    std::fs::write(dir.path().join("notes.txt"), "not a drawing").expect("write");
    let out = Command::new(env!("CARGO_BIN_EXE_sectio"))
        .arg("measure")
        .arg(dir.path())
        .output()
        .expect("runs");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut r = csv::Reader::from_reader(&out.stdout[..]);
    let header = r.headers().expect("header").clone();
    let col = |name: &str| header.iter().position(|h| h == name).expect(name);
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.expect("record")).collect();
    assert_eq!(rows.len(), 2);
    for row in &rows {
        let area: f64 = row[col("area_mm2")].parse().expect("number");
        // Circle r = 10: area πr² (from memory); CSV keeps 12 significant digits.
        assert_close!(area, PI * 100.0, rel = 1e-10);
    }
    assert!(rows[1][col("file")].ends_with("b.SVG"));
    // --svg-scale 2: r = 20 mm; a scale that is not a positive number is a usage error.
    let svg_file = dir.path().join("b.SVG");
    let out = Command::new(env!("CARGO_BIN_EXE_sectio"))
        .args(["measure", "--svg-scale", "2"])
        .arg(&svg_file)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(0));
    let mut r = csv::Reader::from_reader(&out.stdout[..]);
    let row = r.records().next().expect("a row").expect("record");
    let area: f64 = row[col("area_mm2")].parse().expect("number");
    assert_close!(area, PI * 400.0, rel = 1e-10);
    let out = Command::new(env!("CARGO_BIN_EXE_sectio"))
        .args(["measure", "--svg-scale", "-1"])
        .arg(&svg_file)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn deeply_nested_groups_are_an_error_not_a_stack_overflow() {
    let nested = |n: usize| {
        svg(&format!(
            "{}<rect x=\"1\" y=\"1\" width=\"10\" height=\"10\"/>{}",
            "<g>".repeat(n),
            "</g>".repeat(n)
        ))
    };
    // Within the limit: read as usual.
    assert!((only_ok(&nested(250)).area - 100.0).abs() < 1e-9); // 1 user unit = 1 mm here
                                                                // Far beyond it (this used to overflow the stack): one error row naming the limit.
    for n in [300, 100_000] {
        let rows = measure(&nested(n));
        assert_eq!(rows.len(), 1, "{rows:#?}");
        let err = rows[0].result.as_ref().expect_err("too deep");
        assert!(err.contains("nested more than 256 deep"), "{err}");
    }
}
