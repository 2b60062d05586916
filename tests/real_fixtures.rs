//! Real drawings kept in the repository (`fixtures/real`, copied from the shared corpus with
//! their manifest rows): they run wherever the tests run, also without `../shared`.

use std::path::Path;

use sectio::analyze::Settings;
use sectio::cli::batch::measure_file;

fn rows(name: &str) -> Vec<Result<sectio::section::SectionProps, String>> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/real")
        .join(name);
    measure_file(&path, &Settings::default())
        .into_iter()
        .map(|r| r.outcome.result)
        .collect()
}

#[test]
fn splines_chained_into_one_outline() {
    // Twelve cubic SPLINEs and a line, end to end (manifest: one closed chain).
    let r = rows("r14_ac1014_splines_polylines.dxf");
    assert_eq!(r.len(), 1, "{r:?}");
    let p = r[0].as_ref().expect("measured");
    assert!(p.area > 1000.0 && p.area < 1100.0, "{}", p.area);
}

#[test]
fn closed_splines_one_inside_the_other() {
    // Two closed SPLINEs (manifest), code page ANSI_1256: one profile with one hole.
    let r = rows("ac1021_closed_splines_cp1256_no_layouts.dxf");
    assert_eq!(r.len(), 1, "{r:?}");
    assert_eq!(r[0].as_ref().expect("measured").n_holes, 1);
}

#[test]
fn frames_in_three_levels_of_nested_blocks() {
    // Model space holds only INSERTs; exploded, 14 closed LWPOLYLINE frames (manifest), six
    // of them inside others: eight profiles.
    let r = rows("ac1027_dimensions_in_nested_blocks.dxf");
    assert_eq!(r.len(), 8, "{r:?}");
    let holes: usize = r
        .iter()
        .map(|p| p.as_ref().expect("measured").n_holes)
        .sum();
    assert_eq!(holes, 6);
}

#[test]
fn a_periodic_rational_spline_that_crosses_itself() {
    // Flags 7, four control points, five knots: the closed curve crosses itself near
    // (2655.2, 879.8) drawing units (also found by an independent evaluation with the uniform
    // cubic basis matrix, see tests/corpus.rs).
    let r = rows("ac1015_closed_rational_spline.dxf");
    assert_eq!(r.len(), 1);
    let msg = r[0].as_ref().expect_err("error row");
    assert!(msg.contains("self-intersecting loop"), "{msg}");
    assert!(msg.contains("(2655"), "{msg}");
}
