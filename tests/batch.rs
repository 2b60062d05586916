//! The batch as a whole: every file accounted for, limits that turn a runaway or oversized
//! file into an error row, byte-identical output for any number of threads and across runs,
//! and no partial output when a run is interrupted.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

const BIN: &str = env!("CARGO_BIN_EXE_sectio");

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn sectio(args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .output()
        .expect("the sectio binary runs")
}

/// (file, profile, status, message) of each CSV row.
fn rows(csv_text: &str) -> Vec<(String, String, String, String)> {
    let mut r = csv::Reader::from_reader(csv_text.as_bytes());
    r.records()
        .map(|rec| {
            let rec = rec.expect("record");
            (
                rec[0].to_string(),
                rec[1].to_string(),
                rec[2].to_string(),
                rec[3].to_string(),
            )
        })
        .collect()
}

fn stdout(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).expect("UTF-8 output")
}

#[test]
fn a_mixed_folder_accounts_for_every_file() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let copy = |from: &str, to: &str| {
        std::fs::copy(root().join(from), d.join(to)).expect("copy fixture");
    };
    copy("fixtures/dxf/tube.dxf", "good.dxf");
    copy("fixtures/demo/02_hv-152_tube-50x3.dxf", "good2.DXF");
    copy("fixtures/dxf/truncated.dxf", "broken.dxf");
    copy("fixtures/dxf/open_chain.dxf", "open.dxf");
    std::fs::write(d.join("empty.dxf"), b"").expect("write");
    std::fs::write(d.join("picture.dxf"), b"\x89PNG\r\n\x1a\n\0\0\0\rIHDR").expect("write");
    std::fs::write(d.join("notes.svg"), b"just some text, not XML").expect("write");
    std::fs::create_dir(d.join("sub")).expect("folder");
    copy("fixtures/dxf/garbage.dxf", "sub/garbage.dxf");
    // A file that cannot be opened: a link to nowhere (permissions do not stop root, and
    // CI may run as root).
    #[cfg(unix)]
    std::os::unix::fs::symlink(d.join("no-such-target"), d.join("dangling.dxf")).expect("link");
    // A file without read permission: an error row for an ordinary user; root reads it
    // anyway (and CI may run as root), so then it is measured. Either way it has its row.
    #[cfg(unix)]
    let locked_readable = {
        use std::os::unix::fs::PermissionsExt;
        copy("fixtures/dxf/tube.dxf", "locked.dxf");
        let locked = d.join("locked.dxf");
        std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o000)).expect("chmod");
        std::fs::File::open(&locked).is_ok()
    };
    // Not a drawing by its name: not in the run.
    std::fs::write(d.join("readme.txt"), b"hello").expect("write");

    let out = sectio(&["measure", d.to_str().expect("utf-8")]);
    assert_eq!(out.status.code(), Some(1), "some inputs failed: {out:?}");
    let rows = rows(&stdout(&out));
    let files: BTreeSet<String> = rows
        .iter()
        .map(|r| {
            Path::new(&r.0)
                .strip_prefix(d)
                .expect("under the folder")
                .display()
                .to_string()
        })
        .collect();
    let mut expected: BTreeSet<String> = [
        "good.dxf",
        "good2.DXF",
        "broken.dxf",
        "open.dxf",
        "empty.dxf",
        "picture.dxf",
        "notes.svg",
        "sub/garbage.dxf",
    ]
    .into_iter()
    .map(String::from)
    .collect();
    if cfg!(unix) {
        expected.insert("dangling.dxf".into());
        expected.insert("locked.dxf".into());
    }
    assert_eq!(
        files, expected,
        "every drawing has a row, nothing else does"
    );
    let status_of = |name: &str| -> Vec<&str> {
        rows.iter()
            .filter(|r| r.0.ends_with(name))
            .map(|r| r.2.as_str())
            .collect()
    };
    assert_eq!(status_of("/good.dxf"), ["ok"]);
    // The demo drawing's title block on its own layer is a row of its own.
    assert!(status_of("/good2.DXF").contains(&"ok"));
    for bad in [
        "/broken.dxf",
        "/empty.dxf",
        "/picture.dxf",
        "/notes.svg",
        "/sub/garbage.dxf",
    ] {
        assert_eq!(status_of(bad), ["error"], "{bad}");
    }
    #[cfg(unix)]
    {
        let row = rows
            .iter()
            .find(|r| r.0.ends_with("/dangling.dxf"))
            .expect("row");
        assert!(row.3.contains("cannot read file"), "{row:?}");
        let locked = status_of("/locked.dxf");
        if locked_readable {
            assert_eq!(locked, ["ok"], "root reads it");
        } else {
            assert_eq!(locked, ["error"], "no permission");
            let row = rows
                .iter()
                .find(|r| r.0.ends_with("/locked.dxf"))
                .expect("row");
            assert!(row.3.contains("cannot read file"), "{row:?}");
        }
    }
    // Every error row says what went wrong.
    assert!(rows
        .iter()
        .filter(|r| r.2 == "error")
        .all(|r| !r.3.is_empty()));
    // The summary on standard error counts the same files and rows.
    let err = String::from_utf8_lossy(&out.stderr);
    let errors = rows.iter().filter(|r| r.2 == "error").count();
    let failed_files: BTreeSet<&str> = rows
        .iter()
        .filter(|r| r.2 == "error")
        .map(|r| r.0.as_str())
        .collect();
    let profiles = rows.iter().filter(|r| r.2 == "ok").count();
    let summary = format!(
        "{} files, {profiles} profiles measured, {errors} errors in {} files",
        expected.len(),
        failed_files.len()
    );
    assert!(err.contains(&summary), "{summary:?} in {err}");
}

#[test]
fn a_file_over_the_time_limit_becomes_an_error_row_and_the_run_goes_on() {
    let demo = root().join("fixtures/demo");
    let demo = demo.to_str().expect("utf-8");
    let with_limit = |limit: Option<&str>| {
        let mut args = vec!["measure", demo, "--layer", "PROFILE", "--all"];
        if let Some(l) = limit {
            args.extend(["--time-limit", l]);
        }
        sectio(&args)
    };
    let free = with_limit(None);
    assert_eq!(free.status.code(), Some(0), "{free:?}");
    // A generous limit changes nothing.
    let generous = with_limit(Some("3600"));
    assert_eq!(generous.status.code(), Some(0));
    assert_eq!(stdout(&generous), stdout(&free));
    // A limit no file can keep: one error row per file, naming the limit and the step.
    let tight = with_limit(Some("0.000001"));
    assert_eq!(tight.status.code(), Some(1), "{tight:?}");
    let tight_rows = rows(&stdout(&tight));
    let files: BTreeSet<String> = rows(&stdout(&free)).into_iter().map(|r| r.0).collect();
    assert_eq!(tight_rows.len(), files.len(), "{tight_rows:#?}");
    for r in &tight_rows {
        assert!(files.contains(&r.0));
        assert_eq!((r.1.as_str(), r.2.as_str()), ("0", "error"));
        assert!(
            r.3.contains("time limit of 0.000001 s while") && r.3.contains("--time-limit"),
            "{r:?}"
        );
    }
    // Nonsense limits are usage errors.
    for bad in ["0", "-1", "soon", "inf"] {
        let out = sectio(&["measure", demo, "--time-limit", bad]);
        assert_eq!(out.status.code(), Some(2), "{bad}: {out:?}");
    }
}

#[test]
fn a_file_over_the_size_limit_is_not_read() {
    let dir = tempfile::tempdir().expect("temp dir");
    // A valid drawing padded with comments (group code 999) to just over 1 MB.
    let tube = std::fs::read_to_string(root().join("fixtures/dxf/tube.dxf")).expect("fixture");
    let mut big = String::new();
    while big.len() <= 1 << 20 {
        big.push_str("999\npadding comment line of a large drawing\n");
    }
    big.push_str(&tube);
    std::fs::write(dir.path().join("big.dxf"), &big).expect("write");
    std::fs::copy(
        root().join("fixtures/dxf/tube.dxf"),
        dir.path().join("small.dxf"),
    )
    .expect("copy");
    let folder = dir.path().to_str().expect("utf-8");

    let limited = sectio(&["measure", folder, "--max-file-size", "1"]);
    assert_eq!(limited.status.code(), Some(1), "{limited:?}");
    let r = rows(&stdout(&limited));
    assert_eq!(r.len(), 2, "{r:#?}");
    assert!(r[0].0.ends_with("big.dxf") && r[0].2 == "error", "{r:?}");
    assert!(r[0].3.contains("larger than the limit of 1 MB"), "{r:?}");
    assert!(r[1].0.ends_with("small.dxf") && r[1].2 == "ok", "{r:?}");
    // Under the default limit both are read, with the same tube.
    let free = sectio(&["measure", folder]);
    assert_eq!(free.status.code(), Some(0), "{free:?}");
    let r = rows(&stdout(&free));
    assert_eq!(r.iter().filter(|r| r.2 == "ok").count(), 2);
}

/// The output of `measure` over `paths` with `extra` options, for `jobs` threads.
fn measured_with_jobs(paths: &[&str], extra: &[&str], jobs: &str) -> Vec<u8> {
    let mut args = vec!["measure"];
    args.extend_from_slice(paths);
    args.extend_from_slice(extra);
    args.extend_from_slice(&["-j", jobs]);
    let out = sectio(&args);
    assert!(out.status.code().is_some_and(|c| c <= 1), "{out:?}");
    out.stdout
}

#[test]
fn output_is_byte_identical_for_any_number_of_threads_and_across_runs() {
    let demo = root().join("fixtures/demo");
    let fixtures = root().join("fixtures/dxf");
    let real = root().join("fixtures/real");
    let corpus = root().join("../shared/corpus/real");
    let mut paths = vec![
        demo.to_str().expect("utf-8"),
        fixtures.to_str().expect("utf-8"),
        real.to_str().expect("utf-8"),
    ];
    // The real-drawing corpus beside the repository, where it is (it is not part of it).
    if corpus.is_dir() {
        paths.push(corpus.to_str().expect("utf-8"));
    } else {
        eprintln!("../shared/corpus/real not found: determinism checked on the fixtures only");
    }
    // Every tier (torsion included) on the demo and fixtures, run twice with two threads;
    // the corpus's 1600 profiles with the geometric columns (its torsion takes minutes in a
    // debug build). Each run is a process of its own.
    let few = &paths[..3];
    for (paths, extra, again) in [
        (&paths[..], &[][..], false),
        (few, &["--all", "--torsion-max-nodes", "20000"][..], true),
    ] {
        let one = measured_with_jobs(paths, extra, "1");
        assert!(one.len() > 1000, "rows were written");
        for jobs in ["2", "8"] {
            assert!(
                measured_with_jobs(paths, extra, jobs) == one,
                "-j {jobs} differs from -j 1 with {extra:?}"
            );
        }
        if again {
            assert!(
                measured_with_jobs(paths, extra, "2") == one,
                "a second run differs with {extra:?}"
            );
        }
    }
}

#[cfg(unix)]
#[test]
fn an_interrupted_run_leaves_no_partial_output() {
    let dir = tempfile::tempdir().expect("temp dir");
    let drawings = dir.path().join("drawings");
    std::fs::create_dir(&drawings).expect("folder");
    // Enough drawings to keep a debug build busy for several seconds.
    for entry in std::fs::read_dir(root().join("fixtures/demo")).expect("demo") {
        let path = entry.expect("entry").path();
        if path.extension().is_some_and(|e| e == "dxf") {
            for k in 0..60 {
                let name = format!("{k:03}-{}", path.file_name().unwrap().to_string_lossy());
                std::fs::copy(&path, drawings.join(name)).expect("copy");
            }
        }
    }
    let out = dir.path().join("out.csv");
    let report = dir.path().join("report.html");
    // An older output stays as it was.
    std::fs::write(&out, b"older output\n").expect("write");
    for delay_ms in [300, 1500] {
        let child = Command::new(BIN)
            .args(["measure", "--all", "--torsion-max-nodes", "20000", "-o"])
            .arg(&out)
            .arg("--report")
            .arg(&report)
            .arg(&drawings)
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start sectio");
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let killed = Command::new("kill")
            .args(["-INT", &child.id().to_string()])
            .status()
            .expect("kill");
        assert!(killed.success());
        let done = child.wait_with_output().expect("wait");
        assert_eq!(
            done.status.code(),
            Some(130),
            "interrupted after {delay_ms} ms: {done:?}"
        );
        assert!(String::from_utf8_lossy(&done.stderr).contains("interrupted"));
        assert_eq!(std::fs::read(&out).expect("old output"), b"older output\n");
        assert!(!report.exists(), "no report");
        let left: Vec<_> = std::fs::read_dir(dir.path())
            .expect("dir")
            .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
            .filter(|n| n.starts_with(".sectio-"))
            .collect();
        assert!(left.is_empty(), "temporary files left: {left:?}");
    }
}

#[test]
fn timings_name_every_step_run_and_leave_the_output_alone() {
    let demo = root().join("fixtures/demo");
    let demo = demo.to_str().expect("utf-8");
    let plain = sectio(&["measure", demo, "--layer", "PROFILE", "--all"]);
    let timed = sectio(&["measure", demo, "--layer", "PROFILE", "--all", "--timings"]);
    assert_eq!(timed.status.code(), Some(0), "{timed:?}");
    assert_eq!(stdout(&timed), stdout(&plain));
    let err = String::from_utf8_lossy(&timed.stderr);
    for step in [
        "read files",
        "parse",
        "chain",
        "crossings and nesting",
        "integrate",
        "plastic tier",
        "extrusion tier",
        "torsion tier",
        "format and write output",
        "all steps",
        "slowest files:",
        "05_hv-731_heat-sink.dxf",
    ] {
        assert!(err.contains(step), "{step:?} in {err}");
    }
    // Without --timings, no table.
    assert!(!String::from_utf8_lossy(&plain.stderr).contains("all steps"));
}
