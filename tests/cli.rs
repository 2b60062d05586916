//! Runs the real binary on fixture drawings and checks exit codes, rows and values.

mod util;

use std::collections::HashMap;
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const BIN: &str = env!("CARGO_BIN_EXE_sectio");

/// Values read back from the CSV carry 12 significant digits: compare to 1e-10 relative.
const CSV_REL: f64 = 1e-10;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name)
}

fn run(args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .output()
        .expect("the sectio binary runs")
}

/// A CSV row read back by header name.
#[derive(Debug)]
struct Row(HashMap<String, String>);

impl Row {
    fn s(&self, k: &str) -> &str {
        self.0
            .get(k)
            .map(String::as_str)
            .unwrap_or_else(|| panic!("no column {k}"))
    }
    fn f(&self, k: &str) -> f64 {
        self.s(k)
            .replace(',', ".")
            .parse()
            .unwrap_or_else(|_| panic!("{k} = {:?} is not a number", self.s(k)))
    }
}

fn parse(csv_text: &[u8], delimiter: u8) -> (Vec<String>, Vec<Row>) {
    let mut r = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .from_reader(csv_text);
    let header: Vec<String> = r
        .headers()
        .expect("header")
        .iter()
        .map(String::from)
        .collect();
    let rows = r
        .records()
        .map(|rec| {
            let rec = rec.expect("record");
            Row(header
                .iter()
                .cloned()
                .zip(rec.iter().map(String::from))
                .collect())
        })
        .collect();
    (header, rows)
}

fn measure(args: &[&str]) -> (i32, Vec<String>, Vec<Row>, String) {
    let mut all = vec!["measure"];
    all.extend_from_slice(args);
    let out = run(&all);
    let (h, rows) = parse(&out.stdout, b',');
    (
        out.status.code().unwrap_or(-1),
        h,
        rows,
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn path(name: &str) -> String {
    fixture(name).display().to_string()
}

#[test]
fn tube_gives_one_ok_row_with_the_required_columns() {
    let (code, header, rows, stderr) = measure(&[&path("dxf/tube.dxf")]);
    assert_eq!(code, 0, "{stderr}");
    for col in [
        "file",
        "profile",
        "status",
        "message",
        "area_mm2",
        "perimeter_mm",
        "holes",
        "cx_mm",
        "cy_mm",
        "ixx_mm4",
        "iyy_mm4",
        "ixy_mm4",
        "i1_mm4",
        "i2_mm4",
        "theta_deg",
    ] {
        assert!(
            header.iter().any(|h| h == col),
            "missing column {col} in {header:?}"
        );
    }
    assert_eq!(rows.len(), 1);
    let r = &rows[0];
    assert_eq!(r.s("status"), "ok");
    assert_eq!(r.s("profile"), "1");
    // Hollow circle D = 50, d = 44: A = π(D²−d²)/4, I = π(D⁴−d⁴)/64 (Roark Table A.1; check-values §1).
    assert_close!(
        r.f("area_mm2"),
        PI * (50.0f64.powi(2) - 44.0f64.powi(2)) / 4.0,
        rel = CSV_REL
    );
    assert_close!(
        r.f("ixx_mm4"),
        PI * (50.0f64.powi(4) - 44.0f64.powi(4)) / 64.0,
        rel = CSV_REL
    );
    assert_eq!(r.f("holes"), 1.0);
    // Mass per metre = A × 2700 kg/m³ (EN 1999-1-1 §3.2.5 density of aluminium; check-values §5).
    assert_close!(
        r.f("mass_kg_per_m"),
        r.f("area_mm2") * 1e-6 * 2700.0,
        rel = CSV_REL
    );
    assert!(
        stderr.contains("1 files, 1 profiles measured, 0 errors"),
        "{stderr}"
    );
}

#[test]
fn inch_drawing_converts_and_output_units_follow_units_flag() {
    let (code, _, rows, _) = measure(&[&path("dxf/plate_inch.dxf")]);
    assert_eq!(code, 0);
    // 2 in × 1 in = 2 in² = 2 × 25.4² mm² (1 in = 25.4 mm exactly, by definition).
    assert_close!(rows[0].f("area_mm2"), 2.0 * 25.4 * 25.4, rel = CSV_REL);
    assert_eq!(rows[0].s("drawing_units"), "in");
    let (code, header, rows, _) = measure(&[&path("dxf/plate_inch.dxf"), "--units", "in"]);
    assert_eq!(code, 0);
    assert!(header.contains(&"area_in2".to_string()) && header.contains(&"ixx_in4".to_string()));
    assert_close!(rows[0].f("area_in2"), 2.0, rel = CSV_REL);
    // Plate b = 2, h = 1: Ix = bh³/12 (Roark Table A.1).
    assert_close!(rows[0].f("ixx_in4"), 2.0 / 12.0, rel = CSV_REL);
    assert_close!(rows[0].f("cx_in"), 1.0, rel = CSV_REL);
}

#[test]
fn unitless_drawings_assume_millimetres_and_say_so() {
    let (code, _, rows, _) = measure(&[&path("dxf/plate_unitless.dxf")]);
    assert_eq!(code, 0);
    assert_eq!(rows[0].s("drawing_units"), "mm (assumed)");
    assert!(
        rows[0].s("message").contains("mm assumed"),
        "{}",
        rows[0].s("message")
    );
    assert_close!(rows[0].f("area_mm2"), 800.0, rel = CSV_REL);
    let (_, _, rows, _) = measure(&[&path("dxf/plate_unitless.dxf"), "--assume-units", "cm"]);
    assert_eq!(rows[0].s("drawing_units"), "cm (assumed)");
    assert_close!(rows[0].f("area_mm2"), 800.0 * 100.0, rel = CSV_REL);
}

#[test]
fn layers_choose_what_is_measured() {
    // Default: the closed title frame holds the flat bar as a hole; the off layer is skipped.
    let (_, _, rows, _) = measure(&[&path("dxf/layers.dxf")]);
    assert_eq!(rows.len(), 1);
    assert_close!(rows[0].f("area_mm2"), 300.0 * 200.0 - 300.0, rel = CSV_REL);
    assert!(
        rows[0].s("message").contains("TEXT"),
        "{}",
        rows[0].s("message")
    );
    // ... and the row says why that may be wrong, and what to do.
    assert!(
        rows[0]
            .s("message")
            .contains("outer loop on layer TITLE holds loops on layer PROFILE"),
        "{}",
        rows[0].s("message")
    );
    for args in [vec!["--layer", "PROF*"], vec!["--exclude-layer", "title"]] {
        let mut a = vec![path("dxf/layers.dxf")];
        a.extend(args.iter().map(|s| s.to_string()));
        let a: Vec<&str> = a.iter().map(String::as_str).collect();
        let (code, _, rows, _) = measure(&a);
        assert_eq!(code, 0);
        assert_eq!(rows.len(), 1, "{rows:?}");
        assert_eq!(rows[0].s("layer"), "PROFILE");
        assert_close!(rows[0].f("area_mm2"), 300.0, rel = CSV_REL);
    }
    let (_, _, rows, _) = measure(&[
        &path("dxf/layers.dxf"),
        "--layer",
        "PROFILE",
        "--layer",
        "HIDDEN",
        "--include-hidden-layers",
    ]);
    assert_eq!(
        rows.len(),
        2,
        "the circle on the layer that is off is read on request"
    );
}

#[test]
fn bad_files_get_error_rows_and_exit_1_while_good_files_still_come_out() {
    let names = ["empty", "garbage", "truncated", "tube"];
    let args: Vec<String> = names
        .iter()
        .map(|n| path(&format!("dxf/{n}.dxf")))
        .collect();
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let (code, _, rows, stderr) = measure(&args);
    assert_eq!(code, 1, "{stderr}");
    assert_eq!(rows.len(), 4, "{rows:?}");
    let by_file = |n: &str| {
        rows.iter()
            .find(|r| r.s("file").ends_with(&format!("{n}.dxf")))
            .expect("row")
    };
    assert!(by_file("empty").s("message").contains("empty file"));
    assert!(
        by_file("garbage").s("status") == "error" && !by_file("garbage").s("message").is_empty()
    );
    let t = by_file("truncated").s("message");
    assert!(t.contains("truncated") && t.contains("line"), "{t}");
    assert_eq!(by_file("tube").s("status"), "ok");
    for r in &rows {
        if r.s("status") == "error" {
            assert_eq!(r.s("area_mm2"), "", "error rows carry no numbers");
        }
    }
}

#[test]
fn geometry_errors_name_what_and_where() {
    let cases = [
        ("open_chain", "broken loop"),
        ("branch", "branch: 3 segment ends meet at (10, 10)"),
        ("self_intersection", "self-intersecting loop"),
        ("tube_broken_outer", "broken loop"),
    ];
    for (name, expect) in cases {
        let (code, _, rows, _) = measure(&[&path(&format!("dxf/{name}.dxf"))]);
        assert_eq!(code, 1, "{name}");
        assert!(
            rows.iter().all(|r| r.s("status") == "error"),
            "{name}: {rows:?}"
        );
        let msgs: Vec<&str> = rows.iter().map(|r| r.s("message")).collect();
        assert!(msgs.iter().any(|m| m.contains(expect)), "{name}: {msgs:?}");
        assert!(
            msgs.iter().any(|m| m.contains("line ")),
            "{name}: the entity's line is named: {msgs:?}"
        );
    }
    let (code, _, rows, _) = measure(&[&path("dxf/one_good_one_broken.dxf")]);
    assert_eq!(code, 1);
    assert_eq!(rows.len(), 2);
    assert_eq!(rows[0].s("status"), "ok");
    assert_eq!(rows[1].s("status"), "error");
    assert!(
        rows[1].s("message").contains("gap 0.3"),
        "{}",
        rows[1].s("message")
    );
}

#[test]
fn output_file_is_written_atomically_and_is_the_same_for_any_thread_count() {
    let dir = tempfile::tempdir().expect("temp dir");
    let a = dir.path().join("a.csv");
    let b = dir.path().join("b.csv");
    let out1 = run(&[
        "measure",
        &path("dxf"),
        "-o",
        a.to_str().unwrap(),
        "-j",
        "1",
    ]);
    let out2 = run(&[
        "measure",
        &path("dxf"),
        "-o",
        b.to_str().unwrap(),
        "-j",
        "2",
    ]);
    assert_eq!(
        out1.status.code(),
        Some(1),
        "some fixtures are broken on purpose"
    );
    assert_eq!(out2.status.code(), Some(1));
    assert!(
        out1.stdout.is_empty(),
        "with -o nothing goes to standard output"
    );
    let (ta, tb) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
    assert_eq!(ta, tb, "output must not depend on -j");
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty());
    // Every input file appears, sorted by path.
    let (_, rows) = parse(&ta, b',');
    let files: Vec<&str> = rows.iter().map(|r| r.s("file")).collect();
    let mut sorted = files.clone();
    sorted.sort();
    assert_eq!(files, sorted);
    let n_files = std::fs::read_dir(fixture("dxf")).unwrap().count();
    let mut distinct = files.clone();
    distinct.dedup();
    assert_eq!(distinct.len(), n_files);
    // Writing into a folder that does not exist is an I/O error before any output.
    let bad = dir.path().join("no/such/dir/out.csv");
    let out = run(&[
        "measure",
        &path("dxf/tube.dxf"),
        "-o",
        bad.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot write"));
}

#[test]
fn locale_friendly_delimiter_and_decimal_comma() {
    let out = run(&["measure", &path("dxf/tube.dxf"), "--decimal-comma"]);
    assert_eq!(out.status.code(), Some(0));
    let (header, rows) = parse(&out.stdout, b';');
    assert!(header.contains(&"area_mm2".to_string()));
    let area = rows[0].s("area_mm2");
    assert!(area.contains(',') && !area.contains('.'), "{area}");
    assert_close!(rows[0].f("area_mm2"), PI * (625.0 - 484.0), rel = CSV_REL);
    let out = run(&["measure", &path("dxf/tube.dxf"), "--delimiter", "tab"]);
    let (_, rows) = parse(&out.stdout, b'\t');
    assert_eq!(rows[0].s("status"), "ok");
    let out = run(&[
        "measure",
        &path("dxf/tube.dxf"),
        "--decimal-comma",
        "--delimiter",
        ",",
    ]);
    assert_eq!(out.status.code(), Some(2));
}

#[test]
fn density_and_merge() {
    let (_, _, rows, _) = measure(&[&path("dxf/tube.dxf"), "--density", "7850"]);
    // Steel 7850 kg/m³ (EN 1993-1-1 tables basis; check-values §5).
    assert_close!(
        rows[0].f("mass_kg_per_m"),
        rows[0].f("area_mm2") * 7850e-6,
        rel = CSV_REL
    );
    let (_, _, rows, _) = measure(&[
        &path("dxf/layers.dxf"),
        "--layer",
        "PROFILE",
        "--layer",
        "HIDDEN",
        "--include-hidden-layers",
        "--merge",
    ]);
    assert_eq!(rows.len(), 1);
    assert_close!(rows[0].f("area_mm2"), 300.0 + PI * 25.0, rel = CSV_REL);
}

#[test]
fn usage_errors_exit_2() {
    let dir = tempfile::tempdir().expect("temp dir");
    let out = run(&["measure", dir.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2), "a folder without drawings");
    assert!(String::from_utf8_lossy(&out.stderr).contains("no .dxf or .svg files"));
    let out = run(&["measure", &path("dxf/tube.dxf"), "--units", "furlong"]);
    assert_eq!(out.status.code(), Some(2));
    let out = run(&["measure"]);
    assert_eq!(out.status.code(), Some(2));
    let out = run(&["measure", &path("dxf/no-such-file.dxf")]);
    assert_eq!(out.status.code(), Some(1), "a missing file is an error row");
}

#[test]
fn help_states_conventions_and_the_safety_caution() {
    let out = run(&["measure", "--help"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("counter-clockwise"), "{text}");
    assert!(text.contains("not a strength"), "{text}");
    assert!(text.contains("buckling check"), "{text}");
    assert!(text.contains("qualified engineer"), "{text}");
}

#[test]
fn all_adds_the_plastic_columns_with_their_units() {
    let (code, header, rows, stderr) = measure(&[&path("dxf/tube.dxf")]);
    assert_eq!(code, 0, "{stderr}");
    assert!(!header.iter().any(|h| h.starts_with("plastic")));
    let (code, header, rows_all, stderr) = measure(&[&path("dxf/tube.dxf"), "--all"]);
    assert_eq!(code, 0, "{stderr}");
    // The core columns keep their order; the plastic tier follows them.
    let core = header_core_len(&header);
    assert_eq!(
        &header[core..core + 12],
        [
            "pna_x_mm",
            "pna_y_mm",
            "plastic_x_mm3",
            "plastic_y_mm3",
            "shape_x",
            "shape_y",
            "pna_1_mm",
            "pna_2_mm",
            "plastic_1_mm3",
            "plastic_2_mm3",
            "shape_1",
            "shape_2"
        ]
    );
    assert_eq!(rows[0].s("ixx_mm4"), rows_all[0].s("ixx_mm4"));
    let r = &rows_all[0];
    // Hollow circle D = 50, d = 44: Wpl = (D³ − d³)/6 (Roark Table A.1; check-values §1).
    let wpl = (50.0f64.powi(3) - 44.0f64.powi(3)) / 6.0;
    assert_close!(r.f("plastic_x_mm3"), wpl, rel = CSV_REL);
    assert_close!(r.f("plastic_y_mm3"), wpl, rel = CSV_REL);
    assert_close!(r.f("plastic_1_mm3"), wpl, rel = CSV_REL);
    assert_close!(r.f("shape_x"), wpl / r.f("wx_top_mm3"), rel = CSV_REL);
    assert_close!(r.f("pna_x_mm"), 0.0, abs = 1e-9);
    // --plastic alone gives the same columns, without the extrusion tier; --units in turns
    // mm3 into in3 (25.4 mm/in).
    let (_, header_p, _, _) = measure(&[&path("dxf/tube.dxf"), "--plastic"]);
    assert_eq!(header_p[..], header[..core + 12]);
    let (_, header_in, rows_in, _) = measure(&[&path("dxf/tube.dxf"), "--all", "--units", "in"]);
    assert!(header_in.iter().any(|h| h == "plastic_x_in3"));
    assert!(header_in.iter().any(|h| h == "pna_y_in"));
    assert_close!(
        rows_in[0].f("plastic_x_in3"),
        wpl / 25.4f64.powi(3),
        rel = CSV_REL
    );
    assert_close!(rows_in[0].f("shape_y"), r.f("shape_y"), rel = CSV_REL);
}

/// The number of columns before the first optional tier.
fn header_core_len(header: &[String]) -> usize {
    header
        .iter()
        .position(|h| h == "mass_kg_per_m")
        .expect("mass column")
        + 1
}

/// The extrusion tier's columns in mm, in their order.
const EXTRUSION_MM: [&str; 16] = [
    "circumscribed_diameter_mm",
    "circumscribed_cx_mm",
    "circumscribed_cy_mm",
    "thinnest_wall_mm",
    "thinnest_wall_x1_mm",
    "thinnest_wall_y1_mm",
    "thinnest_wall_x2_mm",
    "thinnest_wall_y2_mm",
    "thickest_section_mm",
    "hollows",
    "perimeter_inner_mm",
    "surface_outer_m2_per_m",
    "surface_inner_m2_per_m",
    "surface_m2_per_m",
    "outline_cx_mm",
    "outline_cy_mm",
];

/// The torsion tier's columns in mm, in their order.
const TORSION_MM: [&str; 5] = ["j_mm4", "xs_mm", "ys_mm", "iw_mm6", "torsion_accuracy"];

#[test]
fn torsion_columns_convert_with_the_units() {
    // Tube D = 50, d = 44 (fixtures/README.md): J = π(D⁴ − d⁴)/32 (exact; check-values §2),
    // shear centre at the centre, no warping.
    let (code, header, rows, stderr) = measure(&[&path("dxf/tube.dxf"), "--torsion"]);
    assert_eq!(code, 0, "{stderr}");
    let core = header_core_len(&header);
    assert_eq!(&header[core..], TORSION_MM);
    let r = &rows[0];
    let j = PI * (50f64.powi(4) - 44f64.powi(4)) / 32.0;
    assert_close!(r.f("j_mm4"), j, rel = 1e-6);
    assert_close!(r.f("xs_mm"), r.f("cx_mm"), abs = 1e-9);
    assert_close!(r.f("ys_mm"), r.f("cy_mm"), abs = 1e-9);
    assert!(r.f("torsion_accuracy") <= 1e-3);
    let (_, _, rows_cm, _) = measure(&[&path("dxf/tube.dxf"), "--torsion", "--units", "cm"]);
    assert_close!(rows_cm[0].f("j_cm4"), j * 1e-4, rel = 1e-6);
    assert_close!(rows_cm[0].f("xs_cm"), r.f("xs_mm") / 10.0, rel = CSV_REL);
    assert!(rows_cm[0].s("iw_cm6").parse::<f64>().is_ok());
    // A finer accuracy is accepted and met; a meaningless one is a usage error.
    let (code, _, rows_fine, _) = measure(&[
        &path("dxf/tube.dxf"),
        "--torsion",
        "--torsion-accuracy",
        "1e-5",
    ]);
    assert_eq!(code, 0);
    assert!(rows_fine[0].f("torsion_accuracy") <= 1e-5);
    let (code, _, _, stderr) = measure(&[
        &path("dxf/tube.dxf"),
        "--torsion",
        "--torsion-accuracy",
        "2",
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("relative accuracy"), "{stderr}");
}

#[test]
fn all_adds_the_tiers_in_their_order() {
    let (code, header, rows, stderr) = measure(&[&path("dxf/tube.dxf"), "--all"]);
    assert_eq!(code, 0, "{stderr}");
    let core = header_core_len(&header);
    assert_eq!(header.len(), core + 12 + 16 + TORSION_MM.len());
    assert_eq!(&header[core + 12..core + 28], EXTRUSION_MM);
    assert_eq!(&header[core + 28..], TORSION_MM);
    for col in [
        "circumscribed_diameter_mm",
        "thinnest_wall_mm",
        "mass_kg_per_m",
    ] {
        assert!(header.iter().any(|h| h == col), "{col}");
    }
    let r = &rows[0];
    // Tube D = 50, d = 44 (fixtures/README.md): circumscribing circle D, wall (D − d)/2,
    // perimeters πD and πd, surface per metre = perimeter in metres (closed forms).
    assert_close!(r.f("circumscribed_diameter_mm"), 50.0, rel = CSV_REL);
    assert_close!(r.f("thinnest_wall_mm"), 3.0, rel = CSV_REL);
    assert_close!(r.f("thickest_section_mm"), 3.0, rel = 1e-9);
    assert_eq!(r.f("hollows"), 1.0);
    assert_close!(r.f("perimeter_inner_mm"), PI * 44.0, rel = CSV_REL);
    assert_close!(r.f("surface_outer_m2_per_m"), PI * 50.0e-3, rel = CSV_REL);
    assert_close!(r.f("surface_inner_m2_per_m"), PI * 44.0e-3, rel = CSV_REL);
    assert_close!(
        r.f("surface_m2_per_m"),
        r.f("perimeter_mm") * 1e-3,
        rel = CSV_REL
    );
    // Concentric circles: both centres are the centroid (symmetry).
    assert_close!(r.f("outline_cx_mm"), r.f("cx_mm"), abs = 1e-9);
    assert_close!(r.f("circumscribed_cx_mm"), r.f("cx_mm"), abs = 1e-9);
    // --extrusion alone: the core columns and this tier, no plastic ones.
    let (_, header_x, rows_x, _) = measure(&[&path("dxf/tube.dxf"), "--extrusion"]);
    assert_eq!(header_x[..core], header[..core]);
    assert_eq!(&header_x[core..], EXTRUSION_MM);
    assert_eq!(rows_x[0].s("thinnest_wall_mm"), r.s("thinnest_wall_mm"));
    // --units in: lengths in inches (25.4 mm/in), surfaces stay in m²/m.
    let (_, header_in, rows_in, _) = measure(&[&path("dxf/tube.dxf"), "--all", "--units", "in"]);
    for col in [
        "circumscribed_diameter_in",
        "thinnest_wall_in",
        "outline_cy_in",
        "perimeter_inner_in",
    ] {
        assert!(header_in.iter().any(|h| h == col), "{col} in {header_in:?}");
    }
    assert!(!header_in.iter().any(|h| h.ends_with("_mm")));
    let q = &rows_in[0];
    assert_close!(q.f("circumscribed_diameter_in"), 50.0 / 25.4, rel = CSV_REL);
    assert_close!(q.f("thinnest_wall_in"), 3.0 / 25.4, rel = CSV_REL);
    assert_eq!(q.s("surface_m2_per_m"), r.s("surface_m2_per_m"));
    assert_eq!(q.s("mass_kg_per_m"), r.s("mass_kg_per_m"));
}

#[test]
fn named_materials_set_the_density() {
    let (code, _, rows, stderr) = measure(&[&path("dxf/tube.dxf"), "--material", "steel"]);
    assert_eq!(code, 0, "{stderr}");
    let area = rows[0].f("area_mm2");
    // Steel 7850 kg/m³ (EN 10219 tables basis, EN 1991-1-1 Table A.4; check-values §5).
    assert_close!(rows[0].f("mass_kg_per_m"), area * 7850e-6, rel = CSV_REL);
    // Case-insensitive, and the US spelling of aluminium: 2700 kg/m³ (EN 1999-1-1 §3.2.5;
    // check-values §5).
    for (name, density) in [
        ("STEEL", 7850.0),
        ("Aluminum", 2700.0),
        ("aluminium", 2700.0),
        // Austenitic stainless 7900 kg/m³ (EN 10088-1, from memory).
        ("stainless", 7900.0),
        // Rigid PVC about 1400 kg/m³ (common practice).
        ("pvc", 1400.0),
    ] {
        let (code, _, rows, stderr) = measure(&[&path("dxf/tube.dxf"), "--material", name]);
        assert_eq!(code, 0, "{name}: {stderr}");
        assert_close!(
            rows[0].f("mass_kg_per_m"),
            area * density * 1e-6,
            rel = CSV_REL
        );
    }
    // A material and a density together are a usage error; an unknown name too.
    let out = run(&[
        "measure",
        &path("dxf/tube.dxf"),
        "--material",
        "steel",
        "--density",
        "7000",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let out = run(&[
        "measure",
        &path("dxf/tube.dxf"),
        "--material",
        "unobtainium",
    ]);
    assert_eq!(out.status.code(), Some(2));
}
