//! The output formats of `measure` (CSV, JSON Lines, .xlsx), through the real binary: the
//! same header and values in each, numbers as numbers, error rows marked, the format chosen
//! by `--format` or by the extension of `-o`, and the usage errors.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use calamine::{Data, Reader, Xlsx};

mod util;
use util::zip_part;

const BIN: &str = env!("CARGO_BIN_EXE_sectio");

/// Values read back from the CSV carry 12 significant digits: compare to 1e-10 relative.
const CSV_REL: f64 = 1e-10;

/// Columns before the numeric ones: file, profile, status, message, layer, drawing_units;
/// `profile` (index 1) is a number.
const N_TEXT: usize = 6;

fn fixture(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name)
        .to_string_lossy()
        .into_owned()
}

fn run(args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .output()
        .expect("the sectio binary runs")
}

/// The drawings measured: a good circle beside a broken rectangle (one ok row, one error
/// row), a tube, and a file that is not DXF (an error row about the whole file).
fn inputs() -> Vec<String> {
    vec![
        fixture("dxf/one_good_one_broken.dxf"),
        fixture("dxf/tube.dxf"),
        fixture("dxf/garbage.dxf"),
    ]
}

/// `measure` with `args` after the inputs; the exit code must be 1 (output written, some
/// profiles failed).
fn measure(extra: &[&str]) -> Output {
    let inputs = inputs();
    let mut args = vec!["measure"];
    args.extend(inputs.iter().map(String::as_str));
    args.extend_from_slice(extra);
    let out = run(&args);
    assert_eq!(
        out.status.code(),
        Some(1),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// The CSV of the same run: header and records as text.
fn csv_of(extra: &[&str]) -> (Vec<String>, Vec<Vec<String>>) {
    let out = measure(extra);
    let mut r = csv::Reader::from_reader(&out.stdout[..]);
    let header = r
        .headers()
        .expect("a header")
        .iter()
        .map(String::from)
        .collect();
    let rows = r
        .records()
        .map(|rec| rec.expect("a record").iter().map(String::from).collect())
        .collect();
    (header, rows)
}

fn assert_number_matches_csv(got: f64, csv_text: &str, what: &str) {
    let expected: f64 = csv_text
        .parse()
        .unwrap_or_else(|_| panic!("{what}: CSV {csv_text:?} is not a number"));
    let scale = got.abs().max(expected.abs());
    assert!(
        (got - expected).abs() <= CSV_REL * scale,
        "{what}: {got} against the CSV's {csv_text}"
    );
}

fn tempdir() -> tempfile::TempDir {
    tempfile::tempdir().expect("a temporary folder")
}

fn path_str(p: &Path) -> &str {
    p.to_str().expect("temporary paths are UTF-8")
}

// ---------------------------------------------------------------------------------------
// .xlsx

fn workbook(bytes: &[u8]) -> Xlsx<std::io::Cursor<Vec<u8>>> {
    Xlsx::new(std::io::Cursor::new(bytes.to_vec())).expect("calamine reads the workbook")
}

#[test]
fn xlsx_holds_the_csv_values_as_numbers() {
    let dir = tempdir();
    let out_path = dir.path().join("sections.xlsx");
    measure(&["-o", path_str(&out_path), "--all"]);
    let bytes = std::fs::read(&out_path).expect("the workbook was written");
    let (csv_header, csv_rows) = csv_of(&["--all"]);
    let mut book = workbook(&bytes);
    assert_eq!(book.sheet_names(), ["profiles", "run"]);
    let range = book.worksheet_range("profiles").expect("sheet profiles");
    let mut rows = range.rows();
    let header: Vec<String> = rows
        .next()
        .expect("a header row")
        .iter()
        .map(|c| match c {
            Data::String(s) => s.clone(),
            other => panic!("header cell {other:?} is not text"),
        })
        .collect();
    assert_eq!(header, csv_header);
    let data: Vec<&[Data]> = rows.collect();
    assert_eq!(data.len(), csv_rows.len());
    let statuses: Vec<&str> = csv_rows.iter().map(|r| r[2].as_str()).collect();
    assert!(statuses.contains(&"ok") && statuses.contains(&"error"));
    let mut numbers = 0;
    for (r, (cells, csv_row)) in data.iter().zip(&csv_rows).enumerate() {
        assert_eq!(cells.len(), csv_header.len());
        for (c, (cell, text)) in cells.iter().zip(csv_row).enumerate() {
            let what = format!("row {} column {}", r + 2, csv_header[c]);
            let numeric = c == 1 || c >= N_TEXT;
            match cell {
                Data::Float(v) => {
                    assert!(numeric, "{what}: a number in a text column");
                    assert_number_matches_csv(*v, text, &what);
                    numbers += 1;
                }
                Data::String(s) => {
                    assert!(!numeric, "{what}: {s:?} written as text");
                    assert_eq!(s, text, "{what}");
                }
                Data::Empty => assert_eq!(text, "", "{what}"),
                other => panic!("{what}: unexpected cell {other:?}"),
            }
        }
        if csv_row[2] == "error" {
            assert!(
                cells[N_TEXT..].iter().all(|c| *c == Data::Empty),
                "row {}: an error row has no numbers",
                r + 2
            );
        }
    }
    assert!(numbers > 100, "{numbers} numbers");

    let run = book.worksheet_range("run").expect("sheet run");
    let entries: Vec<(String, String)> = run
        .rows()
        .map(|r| (r[0].to_string(), r[1].to_string()))
        .collect();
    let value = |k: &str| {
        entries
            .iter()
            .find(|(key, _)| key == k)
            .map(|(_, v)| v.as_str())
            .unwrap_or_else(|| panic!("no run entry {k}: {entries:?}"))
    };
    assert_eq!(entries[0], ("key".to_string(), "value".to_string()));
    assert_eq!(value("tool"), "sectio");
    assert_eq!(value("version"), env!("CARGO_PKG_VERSION"));
    assert_eq!(value("units"), "mm");
    assert_eq!(value("density"), "2700 kg/m³");
    assert_eq!(value("files"), "3");
    assert!(value("command line").contains("--all"), "{entries:?}");
    assert!(value("caution").contains("not a strength check"));
    assert!(value("caution").contains("qualified engineer"));
    let date = value("date (UTC)");
    assert!(
        date.len() == 20 && date.starts_with("20") && date.ends_with('Z'),
        "{date}"
    );
    let inputs: Vec<&str> = entries
        .iter()
        .filter(|(k, _)| k == "input")
        .map(|(_, v)| v.as_str())
        .collect();
    // The files in the order measured: sorted by path.
    let mut expected = self::inputs();
    expected.sort();
    assert_eq!(inputs, expected);
}

/// Frozen header, bold header, and error rows filled and bold, read from the sheet's XML.
#[test]
fn xlsx_freezes_the_header_and_highlights_error_rows() {
    let dir = tempdir();
    let out_path = dir.path().join("sections.xlsx");
    measure(&["-o", path_str(&out_path)]);
    let bytes = std::fs::read(&out_path).expect("the workbook was written");
    let (_, csv_rows) = csv_of(&[]);

    let sheet_xml = zip_part(&bytes, "xl/worksheets/sheet1.xml");
    let sheet = roxmltree::Document::parse(&sheet_xml).expect("sheet XML");
    let pane = sheet
        .descendants()
        .find(|n| n.has_tag_name("pane"))
        .expect("a pane: frozen rows");
    assert_eq!(pane.attribute("ySplit"), Some("1"));
    assert_eq!(pane.attribute("state"), Some("frozen"));
    assert_eq!(pane.attribute("xSplit"), None, "no frozen columns");

    // Style index of every cell, by row number (1-based as in the sheet).
    let style_of_row = |row: usize| -> Vec<usize> {
        let node = sheet
            .descendants()
            .find(|n| n.has_tag_name("row") && n.attribute("r") == Some(&row.to_string()))
            .unwrap_or_else(|| panic!("no row {row}"));
        node.children()
            .filter(|c| c.has_tag_name("c"))
            .map(|c| {
                c.attribute("s")
                    .map_or(0, |s| s.parse().expect("a style index"))
            })
            .collect()
    };
    let header_styles = style_of_row(1);
    let mut ok_style = None;
    let mut error_style = None;
    for (r, csv_row) in csv_rows.iter().enumerate() {
        let styles = style_of_row(r + 2);
        let first = styles[0];
        assert!(
            styles.iter().all(|s| *s == first),
            "row {}: one style across the row",
            r + 2
        );
        if csv_row[2] == "error" {
            assert_eq!(
                styles.len(),
                header_styles.len(),
                "the fill spans the table"
            );
            assert_eq!(*error_style.get_or_insert(first), first);
        } else {
            assert_eq!(*ok_style.get_or_insert(first), first);
        }
    }
    let (ok_style, error_style) = (ok_style.expect("ok rows"), error_style.expect("error rows"));
    assert_ne!(ok_style, error_style);

    let styles_xml = zip_part(&bytes, "xl/styles.xml");
    let styles = roxmltree::Document::parse(&styles_xml).expect("styles XML");
    let children = |parent: &str, child: &str| -> Vec<roxmltree::Node> {
        styles
            .descendants()
            .find(|n| n.has_tag_name(parent))
            .unwrap_or_else(|| panic!("no {parent}"))
            .children()
            .filter(|n| n.has_tag_name(child))
            .collect()
    };
    let (xfs, fonts, fills) = (
        children("cellXfs", "xf"),
        children("fonts", "font"),
        children("fills", "fill"),
    );
    let id = |xf: &roxmltree::Node, attr: &str| -> usize {
        xf.attribute(attr)
            .map_or(0, |v| v.parse().expect("an index"))
    };
    let bold = |xf: &roxmltree::Node| {
        fonts[id(xf, "fontId")]
            .children()
            .any(|c| c.has_tag_name("b"))
    };
    let fill_rgb = |xf: &roxmltree::Node| {
        fills[id(xf, "fillId")]
            .descendants()
            .find(|c| c.has_tag_name("fgColor"))
            .and_then(|c| c.attribute("rgb"))
            .map(str::to_string)
    };
    assert!(bold(&xfs[header_styles[0]]), "the header is bold");
    assert!(!bold(&xfs[ok_style]) && fill_rgb(&xfs[ok_style]).is_none());
    // Light red fill (Excel's "Bad" style colour) and bold text.
    assert_eq!(fill_rgb(&xfs[error_style]).as_deref(), Some("FFFFC7CE"));
    assert!(bold(&xfs[error_style]));
}

// ---------------------------------------------------------------------------------------
// JSON Lines

fn jsonl_objects(text: &[u8]) -> Vec<serde_json::Map<String, serde_json::Value>> {
    let text = std::str::from_utf8(text).expect("JSON Lines are UTF-8");
    assert!(text.ends_with('\n'));
    text.lines()
        .map(|line| match serde_json::from_str(line) {
            Ok(serde_json::Value::Object(map)) => map,
            other => panic!("{line:?} is not a JSON object: {other:?}"),
        })
        .collect()
}

#[test]
fn jsonl_holds_the_csv_values() {
    let out = measure(&["--format", "jsonl", "--all"]);
    let objects = jsonl_objects(&out.stdout);
    let (csv_header, csv_rows) = csv_of(&["--all"]);
    assert_eq!(objects.len(), csv_rows.len());
    for (r, (obj, csv_row)) in objects.iter().zip(&csv_rows).enumerate() {
        let keys: Vec<&String> = obj.keys().collect();
        assert_eq!(
            keys,
            csv_header.iter().collect::<Vec<_>>(),
            "line {}",
            r + 1
        );
        for (c, (value, text)) in obj.values().zip(csv_row).enumerate() {
            let what = format!("line {} key {}", r + 1, csv_header[c]);
            let numeric = c == 1 || c >= N_TEXT;
            match value {
                serde_json::Value::Number(n) => {
                    assert!(numeric, "{what}: a number for a text key");
                    let v = n.as_f64().expect("a finite number");
                    assert_number_matches_csv(v, text, &what);
                }
                serde_json::Value::String(s) => {
                    assert!(!numeric, "{what}: {s:?} written as text");
                    assert_eq!(s, text, "{what}");
                }
                serde_json::Value::Null => {
                    assert!(numeric, "{what}: null text");
                    assert_eq!(text, "", "{what}");
                }
                other => panic!("{what}: unexpected {other:?}"),
            }
        }
        if csv_row[2] == "error" {
            assert!(
                obj.values().skip(N_TEXT).all(serde_json::Value::is_null),
                "line {}: an error row has null numbers",
                r + 1
            );
        }
    }
}

/// JSON and .xlsx carry the same f64s, not merely the same 12 digits: both are written as
/// the shortest text that reads back exactly (serde_json parses exactly with its feature
/// `float_roundtrip`; without it the last bit may differ).
#[test]
fn jsonl_and_xlsx_numbers_agree_exactly() {
    let dir = tempdir();
    let xlsx = dir.path().join("a.xlsx");
    let jsonl = dir.path().join("a.jsonl");
    measure(&["-o", path_str(&xlsx), "--extrusion"]);
    measure(&["-o", path_str(&jsonl), "--extrusion"]);
    let objects = jsonl_objects(&std::fs::read(&jsonl).expect("jsonl written"));
    let mut book = workbook(&std::fs::read(&xlsx).expect("xlsx written"));
    let range = book.worksheet_range("profiles").expect("sheet profiles");
    for (obj, cells) in objects.iter().zip(range.rows().skip(1)) {
        for (value, cell) in obj.values().zip(cells) {
            match (value, cell) {
                (serde_json::Value::Number(n), Data::Float(v)) => {
                    assert_eq!(n.as_f64(), Some(*v));
                }
                (serde_json::Value::Number(n), other) => panic!("{n} against {other:?}"),
                _ => {}
            }
        }
    }
}

#[test]
fn jsonl_keys_follow_units() {
    let mm = jsonl_objects(&measure(&["--format", "jsonl"]).stdout);
    let cm = jsonl_objects(&measure(&["--format", "jsonl", "--units", "cm"]).stdout);
    assert!(cm[0].contains_key("area_cm2") && !cm[0].contains_key("area_mm2"));
    assert!(cm[0].contains_key("ixx_cm4") && cm[0].contains_key("cx_cm"));
    let ok = mm
        .iter()
        .position(|o| o["status"] == "ok")
        .expect("an ok row");
    let area = |o: &serde_json::Map<_, _>, k: &str| o[k].as_f64().expect("a number");
    // 1 cm² = 100 mm², 1 cm⁴ = 10 000 mm⁴ (unit definitions).
    let rel = |a: f64, b: f64| (a - b).abs() / a.abs().max(b.abs());
    assert!(rel(area(&cm[ok], "area_cm2") * 100.0, area(&mm[ok], "area_mm2")) < 1e-14);
    assert!(rel(area(&cm[ok], "ixx_cm4") * 1e4, area(&mm[ok], "ixx_mm4")) < 1e-14);
}

// ---------------------------------------------------------------------------------------
// Choosing the format

/// What a written file holds, by its first bytes.
#[derive(Debug, PartialEq)]
enum Kind {
    Csv,
    Jsonl,
    Xlsx,
}

fn kind_of(bytes: &[u8]) -> Kind {
    if bytes.starts_with(b"PK\x03\x04") {
        Kind::Xlsx
    } else if bytes.starts_with(b"{\"file\":") {
        Kind::Jsonl
    } else if bytes.starts_with(b"file,profile,status") || bytes.starts_with(b"file;profile;status")
    {
        Kind::Csv
    } else {
        panic!("unknown output {:?}", String::from_utf8_lossy(&bytes[..40]))
    }
}

#[test]
fn format_follows_the_extension_unless_given() {
    let dir = tempdir();
    let cases: &[(&str, &[&str], Kind)] = &[
        ("a.xlsx", &[], Kind::Xlsx),
        ("b.XLSX", &[], Kind::Xlsx),
        ("c.jsonl", &[], Kind::Jsonl),
        ("d.ndjson", &[], Kind::Jsonl),
        ("e.csv", &[], Kind::Csv),
        ("f.txt", &[], Kind::Csv),
        ("g", &[], Kind::Csv),
        ("h.xlsx", &["--format", "csv"], Kind::Csv),
        ("i.csv", &["--format", "jsonl"], Kind::Jsonl),
        ("j.out", &["--format", "xlsx"], Kind::Xlsx),
        ("k.csv", &["--delimiter", ";"], Kind::Csv),
    ];
    for (name, extra, kind) in cases {
        let path: PathBuf = dir.path().join(name);
        let mut args = vec!["-o", path_str(&path)];
        args.extend_from_slice(extra);
        measure(&args);
        let bytes = std::fs::read(&path).expect("output written");
        assert_eq!(kind_of(&bytes), *kind, "{name} {extra:?}");
    }
    // Standard output: CSV unless --format says otherwise.
    assert_eq!(kind_of(&measure(&[]).stdout), Kind::Csv);
    assert_eq!(
        kind_of(&measure(&["--format", "jsonl"]).stdout),
        Kind::Jsonl
    );
    assert_eq!(kind_of(&measure(&["--format", "csv"]).stdout), Kind::Csv);
}

/// Usage errors exit with 2 before anything is written.
#[test]
fn format_usage_errors() {
    let dir = tempdir();
    let tube = fixture("dxf/tube.dxf");
    let usage_error = |args: &[&str], expected: &str| {
        let out = run(args);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(stderr.contains(expected), "{args:?}: {stderr}");
        assert!(out.stdout.is_empty(), "{args:?}");
    };
    usage_error(&["measure", &tube, "--format", "xlsx"], "-o");
    let jsonl = dir.path().join("a.jsonl");
    usage_error(
        &["measure", &tube, "-o", path_str(&jsonl), "--decimal-comma"],
        "--decimal-comma applies to CSV output only",
    );
    usage_error(
        &["measure", &tube, "--format", "jsonl", "--decimal-comma"],
        "--decimal-comma applies to CSV output only",
    );
    let xlsx = dir.path().join("a.xlsx");
    usage_error(
        &["measure", &tube, "-o", path_str(&xlsx), "--delimiter", ";"],
        "--delimiter applies to CSV output only",
    );
    usage_error(&["measure", &tube, "--format", "ods"], "possible values");
    assert!(!jsonl.exists() && !xlsx.exists(), "nothing written");
    let leftovers = std::fs::read_dir(dir.path()).expect("the folder").count();
    assert_eq!(leftovers, 0, "no temporary files left behind");
}
