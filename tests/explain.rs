//! `sectio explain`: the rows it names are `measure`'s rows, and the binary's report and exit
//! status on demo, broken and garbage drawings.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use sectio::explain::{explain_drawing, RowKind};
use sectio::import::ReadOptions;
use sectio::{analyze_drawing, Settings};

const BIN: &str = env!("CARGO_BIN_EXE_sectio");

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn fixture(name: &str) -> String {
    root().join("fixtures").join(name).display().to_string()
}

fn run(args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .output()
        .expect("the sectio binary runs")
}

fn explain(args: &[&str]) -> (i32, String, String) {
    let mut all = vec!["explain"];
    all.extend_from_slice(args);
    let out = run(&all);
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn dxf_files(dir: &Path) -> Vec<PathBuf> {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut files: Vec<PathBuf> = entries
        .map(|e| e.unwrap().path())
        .filter(|p| {
            p.extension()
                .is_some_and(|e| e.eq_ignore_ascii_case("dxf") || e.eq_ignore_ascii_case("svg"))
        })
        .collect();
    files.sort();
    files
}

/// Every row `explain` names is the row `measure` writes: same number, layer, status and
/// error message (the row about a whole file only by status: `measure` adds what was
/// skipped). Over the fixtures, the demo sheets with and without `--layer PROFILE`, and the
/// real-drawing corpus when it is there.
#[test]
fn rows_are_numbered_as_measure_numbers_them() {
    let mut files = dxf_files(&root().join("fixtures/dxf"));
    files.extend(dxf_files(&root().join("fixtures/demo")));
    files.extend(dxf_files(&root().join("../shared/corpus/real/dxf")));
    files.extend(dxf_files(&root().join("../shared/corpus/real/svg")));
    assert!(files.len() >= 20, "fixtures missing: {files:?}");
    let profile_only = Settings {
        read: ReadOptions {
            layers: vec!["PROFILE".into()],
            ..ReadOptions::default()
        },
        ..Settings::default()
    };
    let mut compared = 0;
    for settings in [Settings::default(), profile_only] {
        for f in &files {
            let bytes = std::fs::read(f).unwrap();
            let rows = analyze_drawing(&bytes, &settings);
            let explanation = explain_drawing(&bytes, &settings);
            let Ok(details) = &explanation.read else {
                assert_eq!(rows.len(), 1, "{f:?}");
                assert_eq!(rows[0].profile, 0, "{f:?}");
                assert!(rows[0].result.is_err(), "{f:?}");
                continue;
            };
            assert_eq!(details.rows.len(), rows.len(), "{f:?}");
            for (ours, theirs) in details.rows.iter().zip(&rows) {
                assert_eq!(ours.row, theirs.profile, "{f:?}");
                assert_eq!(
                    ours.error.is_none(),
                    theirs.result.is_ok(),
                    "{f:?} row {}",
                    ours.row
                );
                if ours.row > 0 {
                    assert_eq!(ours.layer, theirs.layer, "{f:?} row {}", ours.row);
                    assert_eq!(ours.error.as_ref(), theirs.result.as_ref().err(), "{f:?}");
                }
                if let (RowKind::Profile { area, .. }, Ok(props)) = (&ours.kind, &theirs.result) {
                    // The same integrals, moved to another point: equal to rounding.
                    assert!(
                        (area - props.area).abs() <= 1e-9 * props.area.abs(),
                        "{f:?}"
                    );
                }
            }
            assert_eq!(
                explanation.all_measured(),
                rows.iter().all(|r| r.result.is_ok())
            );
            compared += 1;
        }
    }
    // The fixtures and demo sheets alone give 2 × 17 readable drawings (the corpus, when it
    // is beside the repository, adds more).
    assert!(compared >= 2 * 17, "{compared}");
}

#[test]
fn demo_drawing_report_names_layers_loops_and_profiles() {
    let (code, out, err) = explain(&[
        &fixture("demo/01_hv-110_frame-40x40.dxf"),
        "--layer",
        "PROFILE",
    ]);
    assert_eq!(code, 0, "{err}\n{out}");
    assert!(err.is_empty(), "{err}");
    for expected in [
        "release    AC1015 ($ACADVER)",
        "units      mm ($INSUNITS 4)",
        "layer options: --layer PROFILE",
        "skipped (not selected)",
        "Loops",
        "Rows of `sectio measure`",
        "Result: 1 row (1 ok, 0 errors)",
        "not a strength check",
    ] {
        assert!(out.contains(expected), "no {expected:?} in\n{out}");
    }
    // The profile layer is read and shows its entities; the title block's layer is not read.
    let line = |start: &str| {
        out.lines()
            .find(|l| l.trim_start().starts_with(start))
            .unwrap_or_else(|| panic!("no line starting {start:?} in\n{out}"))
            .to_string()
    };
    let profile = line("PROFILE ");
    assert!(
        profile.contains(" read ") && profile.contains("LWPOLYLINE"),
        "{profile}"
    );
    assert!(line("TITLE ").contains("skipped (not selected)"));
    // One outer loop (material, depth 0) with its holes (depth 1), all in row 1.
    let loops: Vec<Vec<String>> = out
        .lines()
        .skip_while(|l| !l.starts_with("Loops"))
        .skip(2)
        .take_while(|l| !l.is_empty())
        .map(|l| l.split_whitespace().map(String::from).collect())
        .collect();
    assert!(loops.len() >= 2, "{out}");
    assert_eq!(loops[0][1..5], ["1", "PROFILE", "material", "0"]);
    for hole in &loops[1..] {
        assert_eq!(hole[1..5], ["1", "PROFILE", "hole", "1"]);
        assert!(
            hole[6].starts_with('-'),
            "holes have negative signed area: {hole:?}"
        );
    }
    let row = line("1  ok");
    assert!(row.contains("outer loop 1, holes 2"), "{row}");
}

#[test]
fn open_chain_report_gives_the_gap_ends_and_size() {
    let (code, out, _) = explain(&[&fixture("dxf/open_chain.dxf")]);
    assert_eq!(code, 1, "{out}");
    // The fixture's last edge stops 0.5 mm short of the first corner (fixtures/README.md).
    assert!(out.contains("gap 0.5 mm from (0, 0) to (0, 0.5)"), "{out}");
    assert!(out.contains("row 1, layer 0: broken loop"), "{out}");
    assert!(out.contains("1  error"), "{out}");
    assert!(out.contains("Result: 1 row (0 ok, 1 error)"), "{out}");
}

#[test]
fn crossing_and_stray_geometry_are_reported() {
    let (code, out, _) = explain(&[&fixture("dxf/self_intersection.dxf")]);
    assert_eq!(code, 1);
    assert!(out.contains("self-intersecting loop"), "{out}");
    // Every layer, every state: the hidden layer's circle is counted but not read.
    let (code, out, _) = explain(&[&fixture("dxf/layers.dxf")]);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("HIDDEN   off    skipped (off or frozen)  CIRCLE 1"),
        "{out}"
    );
    assert!(out.contains("warning: outer loop on layer TITLE"), "{out}");
    let (code, out, _) = explain(&[
        &fixture("demo/05_hv-731_heat-sink.dxf"),
        "--layer",
        "PROFILE",
        "--layer",
        "CENTER",
    ]);
    assert_eq!(code, 0, "{out}");
    assert!(out.contains("layer CENTER: 1 segment, 44 mm long"), "{out}");
}

#[test]
fn unreadable_files_exit_1_and_usage_errors_exit_2() {
    for bad in ["dxf/garbage.dxf", "dxf/empty.dxf", "dxf/truncated.dxf"] {
        let (code, out, _) = explain(&[&fixture(bad)]);
        assert_eq!(code, 1, "{bad}: {out}");
        assert!(out.contains("not read"), "{bad}: {out}");
        assert!(out.contains("not a strength check"), "{bad}: {out}");
    }
    let (code, out, err) = explain(&[&fixture("dxf/no-such-file.dxf")]);
    assert_eq!(code, 2, "{out}");
    assert!(err.contains("cannot read"), "{err}");
    let (code, _, err) = explain(&[&fixture("dxf")]);
    assert_eq!(code, 2);
    assert!(err.contains("folder"), "{err}");
    let (code, _, _) = explain(&[&fixture("dxf/tube.dxf"), "--gap", "-1"]);
    assert_eq!(code, 2);
    let (code, _, _) = explain(&[]);
    assert_eq!(code, 2);
}

#[test]
fn gap_given_or_default_is_explained() {
    let (code, out, _) = explain(&[&fixture("dxf/tube.dxf"), "--gap", "0.2"]);
    assert_eq!(code, 0, "{out}");
    assert!(out.contains("Join gap: 0.2 mm, given with --gap"), "{out}");
    let (_, out, _) = explain(&[&fixture("dxf/tube.dxf")]);
    assert!(out.contains("mm, the default"), "{out}");
    assert!(
        out.contains("by extent: 1e-4 of the drawing's extent"),
        "{out}"
    );
}

#[test]
fn help_gives_exit_statuses_and_the_caution() {
    let out = run(&["explain", "--help"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("Exit status: 0"), "{text}");
    assert!(text.contains("--include-hidden-layers"), "{text}");
    assert!(text.contains("not a strength"), "{text}");
}
