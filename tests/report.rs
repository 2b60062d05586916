//! `measure --report FILE.html`: the page's content through the binary, and the page loaded
//! in headless Chromium (no console messages, the script's sort and filter, a screenshot).
//!
//! The browser tests need Debian's `chromium` package (`bash scripts/test.sh` installs it
//! when missing, as CI does); without it they fail with a message naming the install step.
//! Set `SECTIO_CHROMIUM` to use another Chromium binary.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const BIN: &str = env!("CARGO_BIN_EXE_sectio");

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/demo")
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/dxf")
        .join(name)
}

fn sectio(args: &[&std::ffi::OsStr], dir: &Path) -> Output {
    Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run sectio")
}

/// `measure` of the demo drawings (`--layer PROFILE --all`) with `extra` arguments, in `dir`.
fn measure_demo(dir: &Path, extra: &[&str]) -> Output {
    let demo = demo();
    let mut args: Vec<&std::ffi::OsStr> = vec![
        "measure".as_ref(),
        demo.as_os_str(),
        "--layer".as_ref(),
        "PROFILE".as_ref(),
        "--all".as_ref(),
    ];
    args.extend(extra.iter().map(std::ffi::OsStr::new));
    sectio(&args, dir)
}

/// The ids of the summary rows (`p-<file>-<profile>`), in page order.
fn row_ids(html: &str) -> Vec<String> {
    html.split("<tr id=\"r-")
        .skip(1)
        .filter_map(|s| s.split('"').next())
        .map(str::to_string)
        .collect()
}

#[test]
fn report_has_every_row_and_detail_and_leaves_the_csv_unchanged() {
    let dir = tempfile::tempdir().expect("temp dir");
    let plain = measure_demo(dir.path(), &["-o", "plain.csv"]);
    assert_eq!(plain.status.code(), Some(0), "{plain:?}");
    let with = measure_demo(dir.path(), &["-o", "with.csv", "--report", "r.html"]);
    assert_eq!(with.status.code(), Some(0), "{with:?}");
    let read = |name: &str| std::fs::read_to_string(dir.path().join(name)).expect(name);
    // The run record's date is not in the CSV, so the two files are the same bytes.
    assert_eq!(read("plain.csv"), read("with.csv"));
    let html = read("r.html");
    let n_rows = read("plain.csv").lines().count() - 1;
    assert_eq!(n_rows, 11, "the demo drawings have 11 profiles");
    let ids = row_ids(&html);
    assert_eq!(ids.len(), n_rows);
    for id in &ids {
        assert!(
            html.contains(&format!("<section class=\"detail\" id=\"{id}\">")),
            "no detail for {id}"
        );
        assert!(html.contains(&format!("href=\"#{id}\"")), "no link to {id}");
    }
    // Each detail drawing is the full sheet with its marks and scale bar (--all computes
    // every tier).
    for mark in [
        "centroid",
        "principal-axes",
        "shear-centre",
        "plastic-axes",
        "circumscribed-circle",
        "thinnest-wall",
    ] {
        assert!(
            html.matches(&format!("class=\"mark {mark}\"")).count() >= n_rows,
            "a {mark} mark is missing"
        );
    }
    assert_eq!(html.matches("class=\"scale-bar").count(), n_rows);
    // Self-contained: nothing loaded from anywhere (the SVG namespace is a name, not a load).
    for outside in ["<link", "src=", "@import", "url(", "https://"] {
        assert!(
            !html.contains(outside),
            "the page refers outside: {outside}"
        );
    }
    assert!(
        html.contains("not a strength check"),
        "the caution is missing"
    );
    assert!(html.contains("<th data-key=\"area_mm2\" data-type=\"num\">"));
}

#[test]
fn error_rows_show_where_the_problem_is() {
    let dir = tempfile::tempdir().expect("temp dir");
    let file = fixture("one_good_one_broken.dxf");
    let out = sectio(
        &[
            "measure".as_ref(),
            file.as_os_str(),
            "--report".as_ref(),
            "r.html".as_ref(),
        ],
        dir.path(),
    );
    assert_eq!(out.status.code(), Some(1), "{out:?}");
    let html = std::fs::read_to_string(dir.path().join("r.html")).expect("report");
    assert!(html.contains("data-status=\"error\""));
    assert!(html.contains("broken loop"));
    // One circle at the gap and a dashed box around the broken chain.
    assert_eq!(html.matches("class=\"problem-mark\"").count(), 1);
    assert_eq!(html.matches("class=\"problem-box\"").count(), 1);
}

#[test]
fn file_names_are_escaped() {
    let dir = tempfile::tempdir().expect("temp dir");
    let name = "a<b>&'c\".dxf";
    std::fs::copy(fixture("tube.dxf"), dir.path().join(name)).expect("copy");
    let out = sectio(
        &[
            "measure".as_ref(),
            name.as_ref(),
            "--report".as_ref(),
            "r.html".as_ref(),
        ],
        dir.path(),
    );
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let html = std::fs::read_to_string(dir.path().join("r.html")).expect("report");
    assert!(html.contains("a&lt;b&gt;&amp;&#39;c&quot;.dxf"));
    assert!(!html.contains(name));
}

#[test]
fn an_unwritable_report_is_an_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let out = measure_demo(
        dir.path(),
        &["-o", "out.csv", "--report", "no/such/folder/r.html"],
    );
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("cannot write no/such/folder/r.html"),
        "{stderr}"
    );
}

// ---- In the browser ----

/// The Chromium binary: `SECTIO_CHROMIUM`, else `chromium` on the PATH. Fails the test with
/// the install step when there is none: a missing browser must not pass silently.
fn chromium() -> PathBuf {
    if let Some(p) = std::env::var_os("SECTIO_CHROMIUM") {
        return PathBuf::from(p);
    }
    let found = std::env::var_os("PATH").and_then(|path| {
        std::env::split_paths(&path)
            .map(|d| d.join("chromium"))
            .find(|p| p.is_file())
    });
    match found {
        Some(p) => p,
        None => panic!(
            "the browser tests need Chromium, and `chromium` is not on the PATH: install it \
             with `apt-get install chromium` (Debian; `bash scripts/test.sh` does it when missing), \
             or set SECTIO_CHROMIUM to a Chromium binary"
        ),
    }
}

/// Load `url` in headless Chromium with `extra` arguments; returns (stdout, stderr).
fn browse(url: &str, extra: &[&str]) -> (String, String) {
    let profile = tempfile::tempdir().expect("temp dir");
    let out = Command::new(chromium())
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            "--enable-logging=stderr",
            "--v=0",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .args(extra)
        .arg(url)
        .output()
        .expect("run chromium");
    assert!(out.status.success(), "chromium failed: {out:?}");
    (
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// The page's console messages (Chromium logs every one, errors included, as `CONSOLE`).
fn console_lines(stderr: &str) -> Vec<&str> {
    stderr.lines().filter(|l| l.contains(":CONSOLE")).collect()
}

fn file_url(path: &Path) -> String {
    format!("file://{}", path.display())
}

#[test]
fn the_console_check_sees_script_errors() {
    // The check below is only worth something if it sees an error when there is one.
    let dir = tempfile::tempdir().expect("temp dir");
    let page = dir.path().join("bad.html");
    std::fs::write(
        &page,
        "<!DOCTYPE html><html><body><script>undefinedFunction();</script></body></html>",
    )
    .expect("write");
    let (_, stderr) = browse(&file_url(&page), &["--dump-dom"]);
    let lines = console_lines(&stderr);
    assert_eq!(lines.len(), 1, "{stderr}");
    assert!(lines[0].contains("ReferenceError"), "{stderr}");
}

#[test]
fn report_loads_in_chromium_without_console_messages_and_sorts_and_filters() {
    let dir = tempfile::tempdir().expect("temp dir");
    let out = measure_demo(dir.path(), &["-o", "demo.csv", "--report", "report.html"]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let page = dir.path().join("report.html");
    let url = file_url(&page);

    // Loaded as is: no console message, and the script ran (it writes the count).
    let (dom, stderr) = browse(&url, &["--dump-dom"]);
    assert_eq!(console_lines(&stderr), Vec::<&str>::new(), "{stderr}");
    assert!(
        dom.contains("11 of 11 profiles shown"),
        "the script did not run"
    );
    let html = std::fs::read_to_string(&page).expect("report");
    assert_eq!(row_ids(&dom), row_ids(&html), "rows moved without a sort");

    // Sorted by area, largest first, through the URL (the same function a header click
    // calls); the expected order comes from the CSV: file numbers are positions in the
    // sorted file list, ties keep the page's order.
    let mut csv = csv::Reader::from_path(dir.path().join("demo.csv")).expect("csv");
    let head = csv.headers().expect("header").clone();
    let col = |name: &str| head.iter().position(|h| h == name).expect(name);
    let (c_file, c_profile, c_area) = (col("file"), col("profile"), col("area_mm2"));
    let mut files: Vec<String> = Vec::new();
    let mut rows: Vec<(String, f64)> = Vec::new();
    for rec in csv.records() {
        let rec = rec.expect("record");
        let file = rec[c_file].to_string();
        if files.last() != Some(&file) {
            files.push(file);
        }
        let area: f64 = rec[c_area].parse().expect("area");
        rows.push((format!("p-{}-{}", files.len(), &rec[c_profile]), area));
    }
    let unsorted: Vec<String> = rows.iter().map(|r| r.0.clone()).collect();
    assert_eq!(row_ids(&html), unsorted, "the page's rows follow the CSV");
    rows.sort_by(|a, b| b.1.total_cmp(&a.1));
    let expected: Vec<String> = rows.iter().map(|r| r.0.clone()).collect();
    assert_ne!(expected, unsorted, "the sort must change the order");
    let (dom, stderr) = browse(&format!("{url}?sort=area_mm2&dir=desc"), &["--dump-dom"]);
    assert_eq!(console_lines(&stderr), Vec::<&str>::new(), "{stderr}");
    assert_eq!(row_ids(&dom), expected);
    assert!(dom.contains("data-key=\"area_mm2\" data-type=\"num\" aria-sort=\"descending\""));
    // Ascending is the reverse here (no two areas are equal).
    let (dom, _) = browse(&format!("{url}?sort=area_mm2&dir=asc"), &["--dump-dom"]);
    let mut reversed = expected.clone();
    reversed.reverse();
    assert_eq!(row_ids(&dom), reversed);

    // The text filter: one demo file is the channel.
    let (dom, _) = browse(&format!("{url}?q=channel"), &["--dump-dom"]);
    assert!(dom.contains("1 of 11 profiles shown"), "filter: {dom}");

    // A screenshot for people to look at.
    let shot = Path::new(env!("CARGO_TARGET_TMPDIR")).join("report.png");
    let _ = std::fs::remove_file(&shot);
    browse(
        &url,
        &[
            &format!("--screenshot={}", shot.display()),
            "--window-size=1280,900",
            "--hide-scrollbars",
        ],
    );
    let png = std::fs::read(&shot).expect("screenshot");
    assert!(png.starts_with(b"\x89PNG"), "not a PNG");
    eprintln!("screenshot of the report: {}", shot.display());
}

// ---- The report of `sectio check` ----

/// `check` of the demo catalog (three deliberate slips, four failed values) with `--report`,
/// in `dir`; returns the page and the results CSV.
fn check_demo(dir: &Path) -> (String, String) {
    let catalog = demo().join("catalog.csv");
    let out = sectio(
        &[
            "check".as_ref(),
            catalog.as_os_str(),
            "--layer".as_ref(),
            "PROFILE".as_ref(),
            "-o".as_ref(),
            "results.csv".as_ref(),
            "--report".as_ref(),
            "check.html".as_ref(),
        ],
        dir,
    );
    assert_eq!(out.status.code(), Some(1), "some values fail: {out:?}");
    (
        std::fs::read_to_string(dir.join("check.html")).expect("report written"),
        std::fs::read_to_string(dir.join("results.csv")).expect("results written"),
    )
}

#[test]
fn check_report_shows_each_failure_at_its_profile() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (html, results) = check_demo(dir.path());
    assert!(html.contains("<h1>Catalog check</h1>"));
    assert!(html.contains("Some stated values disagree with the drawings."));
    assert!(html.contains("not a strength check"), "the caution");

    // The failures of the CSV, each in the page's failure table.
    let mut csv = csv::Reader::from_reader(results.as_bytes());
    let failed: Vec<csv::StringRecord> = csv
        .records()
        .map(|r| r.expect("record"))
        .filter(|r| &r[10] == "fail")
        .collect();
    assert_eq!(failed.len(), 4, "{results}");
    let table = html
        .split("<table id=\"failures\"")
        .nth(1)
        .and_then(|t| t.split("</table>").next())
        .expect("failure table");
    let links: Vec<&str> = table
        .split("<a href=\"#")
        .skip(1)
        .filter_map(|s| s.split('"').next())
        .collect();
    assert_eq!(links.len(), 4, "one link per failed value: {table}");
    for (f, link) in failed.iter().zip(&links) {
        assert!(table.contains(&f[4]), "property {} listed", &f[4]);
        // The link leads to a detail section, which shows the failed comparison.
        let at = html
            .find(&format!("<section class=\"detail\" id=\"{link}\""))
            .unwrap_or_else(|| panic!("no detail {link}"));
        let detail = &html[at..html[at..].find("</section>").expect("end") + at];
        assert!(detail.contains(&f[1]), "the part {} in {link}", &f[1]);
        assert!(detail.contains("class=\"error-row\""), "{link}");
        assert!(detail.contains(&f[4]), "{link}");
    }
    // The swapped Ix and Iy of the angle: both values, one profile.
    assert_eq!(links[0], links[1]);

    // Every summary row has the catalog verdict: 3 profiles fail, 8 pass, all measured.
    let tags = |t: &str| html.matches(&format!("data-status=\"{t}\"")).count();
    assert_eq!((tags("ok fail"), tags("ok pass")), (3, 8), "{html}");
    assert_eq!(row_ids(&html).len(), 11);
    assert!(html.contains("fail 2 of 5"));
}

#[test]
fn check_report_filters_by_verdict_in_chromium() {
    let dir = tempfile::tempdir().expect("temp dir");
    check_demo(dir.path());
    let url = file_url(&dir.path().join("check.html"));
    let (dom, stderr) = browse(&format!("{url}?status=fail"), &["--dump-dom"]);
    assert_eq!(console_lines(&stderr), Vec::<&str>::new(), "{stderr}");
    assert!(dom.contains("3 of 11 profiles shown"), "filter: {dom}");
    let (dom, _) = browse(&format!("{url}?status=pass"), &["--dump-dom"]);
    assert!(dom.contains("8 of 11 profiles shown"));
    // Sorted by the number of failed values, most first: the angle (two) leads.
    let (dom, _) = browse(&format!("{url}?sort=catalog&dir=desc"), &["--dump-dom"]);
    let first = row_ids(&dom).into_iter().next().expect("rows");
    let html = std::fs::read_to_string(dir.path().join("check.html")).expect("page");
    let row = html
        .split(&format!("<tr id=\"r-{first}\""))
        .nth(1)
        .expect("row");
    assert!(
        row[..row.find("</tr>").expect("end")].contains("angle"),
        "{first}"
    );
}
