//! Every drawing of the real-drawing corpus (`../shared/corpus/real/dxf`, written by many
//! CAD programs and versions; see its MANIFEST.md) goes through the whole pipeline: each file
//! yields rows, every error row says why, and nothing panics. The table pins today's counts
//! so that a change in behaviour shows up here and gets looked at.

use std::path::{Path, PathBuf};

use sectio::analyze::Settings;
use sectio::cli::batch::measure_file;

fn corpus() -> Option<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/corpus/real/dxf");
    dir.is_dir().then_some(dir)
}

/// (file, ok rows, error rows) with default settings.
const EXPECTED: &[(&str, usize, usize)] = &[
    ("ac1015_binary_text_only.dxf", 0, 1),
    (
        "ac1015_channel_profile_polyline_not_flagged_closed.dxf",
        1,
        0,
    ),
    // A periodic rational spline whose curve crosses itself near (2655.2, 879.8): found by an
    // independent evaluation with the uniform cubic basis matrix as well.
    ("ac1015_closed_rational_spline.dxf", 0, 1),
    ("ac1015_concave_outline_with_hole.dxf", 1, 0),
    ("ac1015_fan_plate_lines_arcs_circles.dxf", 1, 7),
    ("ac1015_holes_touching_each_other.dxf", 1, 0),
    ("ac1015_insert_transforms.dxf", 3, 0),
    ("ac1015_plate_many_circular_holes.dxf", 22, 0),
    ("ac1015_rotated_elliptic_arcs.dxf", 4, 0),
    ("ac1015_self_intersecting_outline.dxf", 0, 1),
    ("ac1015_t_part_lines_arcs.dxf", 3, 0),
    ("ac1018_tslot_extrusion_profile_inch.dxf", 1, 0),
    // Two closed splines, one inside the other.
    ("ac1021_closed_splines_cp1256_no_layouts.dxf", 1, 0),
    ("ac1021_donut_bulge_polyline.dxf", 1, 0),
    ("ac1021_spur_gear_outline.dxf", 1, 0),
    ("ac1021_v_groove_extrusion_profile_20mm.dxf", 1, 0),
    // One box holds two arcs that nearly close (a broken loop).
    ("ac1024_entity_catalog_in_blocks.dxf", 28, 1),
    ("ac1024_hatch_mixed_edge_boundary.dxf", 1, 0),
    ("ac1024_hex_nut_top_view.dxf", 2, 0),
    ("ac1024_rounded_contour_lines_arcs.dxf", 1, 0),
    ("ac1027_closed_loop_from_lines_and_arcs.dxf", 0, 1),
    // 14 closed frames from three levels of blocks, six of them holes.
    ("ac1027_dimensions_in_nested_blocks.dxf", 8, 0),
    ("ac1027_flange_drawing_with_dimensions.dxf", 2, 18),
    ("ac1027_mirrored_nested_block_inserts.dxf", 24, 0),
    // The inserted LINE networks overlap and branch over every polyline.
    ("ac1027_nested_inserts_one_level.dxf", 0, 6),
    ("ac1027_nesting_parts_closed_polylines.dxf", 9, 0),
    ("ac1027_projected_grid_huge_coordinates.dxf", 1, 0),
    ("ac1027_proxy_objects_cjk_strings.dxf", 0, 1),
    ("ac1027_utf8_layer_name_no_entities.dxf", 0, 1),
    ("ac1032_arc_negative_extrusion_angle_over_360.dxf", 0, 1),
    ("ac1032_binary_mixed_entities.dxf", 0, 1),
    ("ac1032_dynamic_block_flip.dxf", 2, 0),
    ("ac1032_georeferenced_outline_large_coordinates.dxf", 1, 0),
    ("ac1032_hatches_with_polyline_boundaries.dxf", 10, 0),
    ("ac1032_shapes_polylines_circles_ellipses.dxf", 23, 0),
    // A table of boxes; one small box shares an edge with the box around it and is its hole.
    ("ac1032_text_negative_extrusion_with_outlines.dxf", 62, 21),
    ("ac1032_uncommon_entities_mix.dxf", 2, 5),
    ("bad_blocks_section_only_fragment.dxf", 0, 1),
    ("bad_decimal_comma_numbers.dxf", 0, 1),
    ("bad_missing_header_needs_recovery.dxf", 0, 1),
    ("bad_trailing_garbage_after_eof.dxf", 1, 0),
    ("degenerate_circles_zero_negative_radius.dxf", 0, 1),
    ("minimal_single_line_entities_only.dxf", 0, 1),
    ("r10_ac1006_entity_sampler.dxf", 2, 0),
    ("r12_binary_3d_diamond_lines.dxf", 0, 1),
    // Inserted blocks whose lines miss each other by 1e-6 (six-digit values) next to
    // segments just as short, so the default gap stays below the misses.
    ("r12_entity_sampler_ascii.dxf", 37, 16),
    ("r12_entity_sampler_binary.dxf", 37, 16),
    ("r12_headerless_arc_negative_extrusion.dxf", 0, 1),
    ("r12_laser_rangefinder_floor_sketch.dxf", 0, 1),
    ("r12_polyline_variants_uppercase_ext.DXF", 0, 1),
    ("r13_ac1012_footprint_polylines_dos932.dxf", 0, 4),
    ("r13_binary_lines.dxf", 0, 1),
    ("r14_ac1014_mixed_entities_blocks.dxf", 0, 1),
    // Twelve splines and a line chained into one outline.
    ("r14_ac1014_splines_polylines.dxf", 1, 0),
    ("r1_4_comma_separated_legacy_format.dxf", 0, 1),
    ("r2_10_entity_sampler.dxf", 1, 0),
    ("r2_6_ac1003_lines_arcs.dxf", 0, 1),
];

#[test]
fn every_corpus_drawing_yields_rows_and_nothing_panics() {
    let Some(dir) = corpus() else {
        eprintln!("../shared/corpus/real/dxf not found: corpus test skipped");
        return;
    };
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("corpus folder readable")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e.eq_ignore_ascii_case("dxf")))
        .collect();
    files.sort();
    assert_eq!(
        files.len(),
        EXPECTED.len(),
        "the corpus changed: update the table"
    );
    let settings = Settings::default();
    let mut mismatches = Vec::new();
    for (path, &(name, ok, err)) in files.iter().zip(EXPECTED) {
        assert_eq!(path.file_name().unwrap().to_string_lossy(), name);
        let rows = measure_file(path, &settings);
        assert!(!rows.is_empty(), "{name}: no row");
        for r in &rows {
            if let Err(msg) = &r.outcome.result {
                assert!(!msg.is_empty(), "{name}: error row without a message");
                assert!(!msg.contains("internal error"), "{name}: {msg}");
            }
        }
        let n_ok = rows.iter().filter(|r| r.outcome.result.is_ok()).count();
        if (n_ok, rows.len() - n_ok) != (ok, err) {
            mismatches.push(format!(
                "{name}: expected {ok} ok / {err} error, got {n_ok} / {}",
                rows.len() - n_ok
            ));
        }
    }
    assert!(mismatches.is_empty(), "{}", mismatches.join("\n"));
    // With hatches and hidden layers read too, every file still yields rows, each error
    // with its reason, and nothing panics.
    let everything = Settings {
        read: sectio::import::ReadOptions {
            hatch_outlines: true,
            include_hidden_layers: true,
            ..Default::default()
        },
        ..Settings::default()
    };
    for path in &files {
        let rows = measure_file(path, &everything);
        assert!(!rows.is_empty(), "{}: no row", path.display());
        for r in &rows {
            if let Err(msg) = &r.outcome.result {
                assert!(!msg.is_empty() && !msg.contains("internal error"), "{msg}");
            }
        }
    }
}

#[test]
fn ascii_and_binary_twins_give_the_same_rows() {
    let Some(dir) = corpus() else {
        return;
    };
    let settings = Settings::default();
    let a = measure_file(&dir.join("r12_entity_sampler_ascii.dxf"), &settings);
    let b = measure_file(&dir.join("r12_entity_sampler_binary.dxf"), &settings);
    assert_eq!(a.len(), b.len());
    // ASCII carries the numbers in decimal (about 16 digits), binary as exact doubles: the
    // same geometry, so the same results to rounding.
    let close = |u: f64, v: f64| (u - v).abs() <= 1e-12 * u.abs().max(v.abs()).max(1.0);
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x.outcome.layer, y.outcome.layer);
        match (&x.outcome.result, &y.outcome.result) {
            (Ok(p), Ok(q)) => {
                for (u, v) in [
                    (p.area, q.area),
                    (p.centroid.x, q.centroid.x),
                    (p.centroid.y, q.centroid.y),
                    (p.ixx, q.ixx),
                    (p.iyy, q.iyy),
                    (p.perimeter, q.perimeter),
                ] {
                    assert!(close(u, v), "{u} vs {v}");
                }
                assert!(
                    (p.ixy - q.ixy).abs() <= 1e-12 * p.i1,
                    "{} vs {}",
                    p.ixy,
                    q.ixy
                );
                assert_eq!(p.n_holes, q.n_holes);
            }
            // The same problems, found at a line of one file and a byte of the other. Which
            // entity a broken chain is named by follows the files' entity order, which differs
            // inside blocks: the kinds are compared, and the whole text where the order agrees.
            (Err(e), Err(f)) => {
                let kinds =
                    |m: &str| ["broken loop", "branch", "cross"].map(|k| m.matches(k).count());
                assert_eq!(kinds(e), kinds(f), "{e}\nvs\n{f}");
                if !e.contains("broken loop") {
                    assert_eq!(without_locations(e), without_locations(f));
                }
            }
            (u, v) => panic!("ASCII gave {u:?}, binary {v:?}"),
        }
    }
}

/// `text` with every "line N" and "byte N" turned into "@" and handles left out (the two
/// files number their entities differently).
fn without_locations(text: &str) -> String {
    let mut text = text.to_string();
    while let Some(i) = text.find(" (handle ") {
        let end = text[i..].find(')').map_or(text.len(), |j| i + j + 1);
        text.replace_range(i..end, "");
    }
    let mut out = String::new();
    let mut rest = text.as_str();
    while let Some(i) = rest
        .find("line ")
        .into_iter()
        .chain(rest.find("byte "))
        .min()
    {
        out.push_str(&rest[..i]);
        let after = &rest[i + 5..];
        let digits = after.len() - after.trim_start_matches(|c: char| c.is_ascii_digit()).len();
        if digits > 0 {
            out.push('@');
        } else {
            out.push_str(&rest[i..i + 5]);
        }
        rest = &after[digits..];
    }
    out.push_str(rest);
    out
}

#[test]
fn a_far_away_outline_keeps_its_precision() {
    // Projected map coordinates around (2 867 612, 1 480 658): the profile must come out with
    // a positive area and finite, consistent moments (principal values bracket ixx and iyy).
    let Some(dir) = corpus() else {
        return;
    };
    let rows = measure_file(
        &dir.join("ac1027_projected_grid_huge_coordinates.dxf"),
        &Settings::default(),
    );
    let p = rows[0].outcome.result.as_ref().expect("ok");
    assert!(p.area > 0.0 && p.ixx > 0.0 && p.iyy > 0.0);
    assert!(p.i1 >= p.ixx.max(p.iyy) * (1.0 - 1e-12) && p.i2 <= p.ixx.min(p.iyy) * (1.0 + 1e-12));
    assert!(
        p.centroid.x > 2.8e6 && p.centroid.y > 1.4e6,
        "{:?}",
        p.centroid
    );
}

/// Drawings that carry each section twice, as outline entities and as a hatch: the
/// hatch's boundary paths alone (with `hatch_outlines`) must measure as the outlines do.
/// The two are read independently (entity readers against the hatch path parser), so this
/// checks each against the other.
#[test]
fn hatch_boundaries_measure_like_the_outlines_they_fill() {
    use sectio::analyze::{analyze_drawing, measure_drawing};
    use sectio::import::{dxf, ReadOptions};
    let Some(dir) = corpus() else {
        return;
    };
    for (name, profiles) in [
        ("ac1032_hatches_with_polyline_boundaries.dxf", 10),
        // Line, arc, elliptic arc and spline edges around the outline drawn beside it.
        ("ac1024_hatch_mixed_edge_boundary.dxf", 1),
    ] {
        let bytes = std::fs::read(dir.join(name)).expect("corpus file");
        let settings = Settings::default();
        let outlines = analyze_drawing(&bytes, &settings);
        let opts = ReadOptions {
            hatch_outlines: true,
            ..ReadOptions::default()
        };
        let mut d = dxf::read(&bytes, &opts).expect("reads");
        d.pieces.retain(|p| p.origin.entity == "HATCH");
        assert!(!d.pieces.is_empty(), "{name}: no hatch pieces");
        let hatches = measure_drawing(d, &settings);
        assert_eq!(outlines.len(), profiles, "{name}: {outlines:#?}");
        assert_eq!(hatches.len(), profiles, "{name}: {hatches:#?}");
        for (a, b) in outlines.iter().zip(&hatches) {
            let (p, q) = (
                a.result.as_ref().expect("ok"),
                b.result.as_ref().expect("ok"),
            );
            let close = |u: f64, v: f64, scale: f64| (u - v).abs() <= 1e-9 * scale;
            assert!(
                close(p.area, q.area, p.area),
                "{name}: {} vs {}",
                p.area,
                q.area
            );
            assert!(close(p.centroid.x, q.centroid.x, p.bbox.diagonal()));
            assert!(close(p.centroid.y, q.centroid.y, p.bbox.diagonal()));
            assert!(close(p.ixx, q.ixx, p.i1) && close(p.iyy, q.iyy, p.i1));
            assert!(close(p.perimeter, q.perimeter, p.perimeter));
            assert_eq!(p.n_holes, q.n_holes);
        }
    }
}

/// The DXF reader tallies each piece's segments for the default gap as it adds the piece
/// (`Drawing::scale`): for every corpus drawing and fixture, read with and without hatch
/// outlines, the tally is that of the pieces the drawing ends up with, segment for segment
/// (blocks placed by INSERT, curves, polylines and 3-D planes included), and so are the facts
/// it notes for chaining of each piece of several segments or a closed one.
#[test]
fn the_readers_scale_tally_is_that_of_the_pieces_it_made() {
    use sectio::geom::{RunFacts, ScaleTally};
    use sectio::import::{dxf, ReadOptions};
    let fixtures = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures");
    let mut dirs = vec![
        fixtures.join("dxf"),
        fixtures.join("demo"),
        fixtures.join("real"),
    ];
    dirs.extend(corpus());
    let (mut read, mut runs) = (0, 0);
    for dir in dirs {
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        for path in entries.map(|e| e.expect("entry").path()) {
            if !path
                .extension()
                .is_some_and(|e| e.eq_ignore_ascii_case("dxf"))
            {
                continue;
            }
            let bytes = std::fs::read(&path).expect("readable");
            for hatch_outlines in [false, true] {
                let opts = ReadOptions {
                    hatch_outlines,
                    ..ReadOptions::default()
                };
                let Ok(d) = dxf::read(&bytes, &opts) else {
                    continue;
                };
                let mut own = ScaleTally::default();
                for p in &d.pieces {
                    own.add_piece(&p.segments);
                }
                let name = path.display();
                assert_eq!(d.scale.pieces, own.pieces, "{name}");
                assert_eq!(d.scale.lengths, own.lengths, "{name}");
                assert_eq!(d.scale.bbox, own.bbox, "{name}");
                assert_eq!(d.scale.short2, own.short2, "{name}");
                // The run facts: one for each piece of several segments or a closed one, in
                // order, each as worked out from that piece alone (bit for bit: NaN too).
                let bits = |r: &RunFacts| {
                    let b = [r.bbox.min.x, r.bbox.min.y, r.bbox.max.x, r.bbox.max.y];
                    (
                        r.piece,
                        r.shortest2.to_bits(),
                        r.joined,
                        b.map(f64::to_bits),
                    )
                };
                let expected: Vec<_> = d
                    .pieces
                    .iter()
                    .enumerate()
                    .filter(|(_, p)| p.closed || p.segments.len() > 1)
                    .map(|(i, p)| bits(&RunFacts::of(i as u32, &p.segments)))
                    .collect();
                let got: Vec<_> = d.scale.runs.iter().map(bits).collect();
                assert_eq!(got, expected, "{name}");
                runs += got.len();
                read += 1;
            }
        }
    }
    assert!(read >= 40, "only {read} drawings read");
    // The fixtures alone note 116 (the corpus, where it is present, many more).
    assert!(runs >= 100, "only {runs} runs noted");
}
