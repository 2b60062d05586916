//! Inputs the fuzzers found (DEVELOPERS.md, "Robustness: fuzzing"), kept in `fixtures/fuzz/`
//! as small drawings: each runs through `analyze_drawing` with the tier that failed and must
//! come back with rows, saying why a figure is missing where it cannot be computed. Any
//! drawing dropped into `fixtures/fuzz/` is also run through every tier.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

use sectio::analyze::{analyze_drawing, Outcome, Settings};
use sectio::fem::TorsionSettings;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/fuzz")
        .join(name)
}

/// The rows of a drawing, failing the test (not aborting it) on a panic, also on one that
/// the library caught (the torsion solver's guard turns it into a message).
fn rows(path: &Path, settings: &Settings) -> Vec<Outcome> {
    let bytes = std::fs::read(path).unwrap();
    let rows = catch_unwind(AssertUnwindSafe(|| analyze_drawing(&bytes, settings)))
        .unwrap_or_else(|_| panic!("{} panicked", path.display()));
    for r in &rows {
        let text = format!("{:?} {}", r.result.as_ref().err(), r.message);
        assert!(
            !text.contains("internal error"),
            "{}: {text}",
            path.display()
        );
    }
    rows
}

/// The only row, which must be measured.
fn only_ok(rows: &[Outcome]) -> &Outcome {
    assert_eq!(rows.len(), 1, "{rows:#?}");
    assert!(rows[0].result.is_ok(), "{rows:#?}");
    &rows[0]
}

fn extrusion() -> Settings {
    Settings {
        extrusion: true,
        ..Settings::default()
    }
}

/// Fuzz target `pipeline` (a triangle 54 mm long and 1e-300 mm high; here a strip 1 km
/// long and 10 nm thick): the largest inscribed circle's search started with square cells
/// of the box's short side, one per 10 nm of the length (10¹¹ cells, more than memory
/// holds); it now starts with about a thousand at most.
#[test]
fn thin_strip_gets_its_extrusion_figures() {
    let rows = rows(&fixture("thin_strip.dxf"), &extrusion());
    let x = only_ok(&rows)
        .result
        .as_ref()
        .unwrap()
        .extrusion
        .expect("extrusion figures");
    // The strip is 1e-5 mm thick: its thickest section and thinnest wall (hand calculation).
    assert!((x.thickest_section - 1e-5).abs() <= 1e-5 * 1e-6, "{x:?}");
    assert!((x.thinnest_wall - 1e-5).abs() <= 1e-5 * 1e-6, "{x:?}");
}

/// Fuzz target `pipeline` (a spline outline 17.5 mm long and 1e-160 mm high; here a strip
/// 1 km long and 10 nm thick): the torsion mesh's target size follows the area (0.6 mm for
/// the strip), so the boundary alone needed millions of vertices, far over any cap, and
/// building them took minutes; the solver now says so at once.
#[test]
fn thin_strip_torsion_stops_at_the_cap() {
    let settings = Settings {
        torsion: Some(TorsionSettings::default()),
        ..Settings::default()
    };
    let rows = rows(&fixture("thin_strip.dxf"), &settings);
    let row = only_ok(&rows);
    assert!(row.result.as_ref().unwrap().torsion.is_none());
    assert!(
        row.message.contains(
            "torsion not computed: cannot mesh the section: its boundary alone needs 2000002 \
             vertices at the target size, too many for the cap of 400000 nodes"
        ),
        "{}",
        row.message
    );
}

/// Fuzz target `pipeline`: a half disc of radius 5e153 mm. Squared distances overflow,
/// every distance of the extrusion searches was infinite, and each nearest-segment query
/// walked the whole grid (seconds per profile); the tier now declines such a section.
#[test]
fn astronomically_large_section_declines_extrusion_figures() {
    let rows = rows(&fixture("huge_half_disc.dxf"), &extrusion());
    let row = only_ok(&rows);
    assert!(row.result.as_ref().unwrap().extrusion.is_none());
    assert!(
        row.message.contains(
            "extrusion figures: the section is too large (1.118e154 mm) for distances in double \
             precision"
        ),
        "{}",
        row.message
    );
}

/// Fuzz target `pipeline` (a closed spline reaching 1e153 mm): the derivative's length
/// overflows, so each adaptive integral of the curve's pieces (lengths, moments) split its
/// interval until its budget ran out, 3.8 s for this one spline in a release build; a
/// non-finite half is now taken at once (unit test `adaptive_takes_non_finite_halves_at_once`).
#[test]
fn astronomically_large_spline_is_measured() {
    let settings = Settings {
        plastic: true,
        ..Settings::default()
    };
    let rows = rows(&fixture("huge_spline.dxf"), &settings);
    let props = only_ok(&rows).result.as_ref().unwrap();
    // The area is finite (6.2e307 mm²), its second moments are not.
    assert!(
        props.area.is_finite() && props.area > 6e307,
        "{}",
        props.area
    );
    assert!(!props.ixx.is_finite());
}

/// Fuzz target `pipeline` (an ellipse at x = −1.7e284 mm): its 10¹⁰ mm axis lies below the
/// precision of its position, so it comes out as a flat column of about 100 000 chords; the
/// crossing check's grid spread over the whole drawing and put them all in one cell, and
/// compared them pair by pair (103 s in a release build). A crowded cell now gets a grid of
/// its own (unit test `a_crowded_cell_is_searched_with_a_grid_of_its_own` counts the pairs).
#[test]
fn far_flat_ellipse_beside_a_circle() {
    let rows = rows(&fixture("far_flat_ellipse.dxf"), &Settings::default());
    assert_eq!(rows.len(), 2, "{rows:#?}");
    let e = rows[0].result.as_ref().unwrap_err();
    assert!(
        e.starts_with("self-intersecting loop (starting with ELLIPSE"),
        "{e}"
    );
    // The circle r = 10: A = π·r² (from memory; any table of plane areas).
    let circle = rows[1].result.as_ref().unwrap();
    assert!(
        (circle.area - 100.0 * std::f64::consts::PI).abs() < 1e-9,
        "{}",
        circle.area
    );
}

/// Fuzz target `svg_reader`: a file that is not UTF-8 whose XML declaration has a byte
/// that is not ASCII (0xF2) where the quote of `encoding=` belongs. The reader took the
/// first character after `encoding=` for the quote and sliced one byte past it, inside the
/// replacement character: a panic. Only `"` and `'` open the value now (XML 1.0, §4.3.3);
/// the file is read as Windows-1252, and the XML parser rejects the declaration.
#[test]
fn svg_encoding_without_a_quote_is_a_malformed_file() {
    let rows = rows(
        &fixture("svg_encoding_quote_not_ascii.svg"),
        &Settings::default(),
    );
    assert_eq!(rows.len(), 1, "{rows:#?}");
    let e = rows[0].result.as_ref().unwrap_err();
    assert!(e.starts_with("malformed SVG: expected a quote"), "{e}");
}

/// Fuzz target `pipeline`: two circles, one 7.5e46 mm away, measured as one section with
/// torsion. The mesh merges vertices through a hash grid of cells 1e-12 of the section's
/// size; the far circle's cell number saturated at i64::MAX and its neighbour's overflowed
/// (a panic with overflow checks, which the torsion guard turned into "internal error").
#[test]
fn far_circle_merged_into_one_section_with_torsion() {
    let settings = Settings {
        merge: true,
        torsion: Some(TorsionSettings::default()),
        ..Settings::default()
    };
    let rows = rows(&fixture("far_circle_merged.dxf"), &settings);
    assert_eq!(rows.len(), 1, "{rows:#?}");
}

/// Every drawing in `fixtures/fuzz/`, with every tier (the torsion mesh kept small), gives
/// rows without a panic.
#[test]
fn every_fuzz_fixture_runs_through_every_tier() {
    let all = Settings {
        plastic: true,
        extrusion: true,
        torsion: Some(TorsionSettings {
            accuracy: 1e-2,
            max_nodes: 20_000,
        }),
        ..Settings::default()
    };
    let mut n = 0;
    for entry in std::fs::read_dir(fixture("")).unwrap() {
        let path = entry.unwrap().path();
        for settings in [&Settings::default(), &all] {
            assert!(!rows(&path, settings).is_empty(), "{}", path.display());
        }
        n += 1;
    }
    assert!(n >= 2, "{n} drawings in fixtures/fuzz");
}
