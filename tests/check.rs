//! `sectio check`: a catalog's stated values against its drawings, through the real binary.
//!
//! The drawings are the demo's (fixtures/demo, an invented shop); the stated values are
//! the demo's own measurements rounded to four significant digits, as catalogs print them,
//! with deliberate slips where a test says so.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

mod util;
use util::zip_part;

const BIN: &str = env!("CARGO_BIN_EXE_sectio");

fn demo(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/demo")
        .join(name)
        .display()
        .to_string()
}

/// One result row, by column name.
#[derive(Debug, Clone)]
struct ResultRow {
    cells: HashMap<String, String>,
}

impl ResultRow {
    fn s(&self, k: &str) -> &str {
        self.cells
            .get(k)
            .map(String::as_str)
            .unwrap_or_else(|| panic!("no column {k}"))
    }
    fn f(&self, k: &str) -> f64 {
        self.s(k)
            .parse()
            .unwrap_or_else(|_| panic!("{k} = {:?}", self.s(k)))
    }
}

struct Run {
    code: i32,
    results: Vec<ResultRow>,
    stderr: String,
}

fn check(args: &[&str]) -> Run {
    let out = Command::new(BIN)
        .arg("check")
        .args(args)
        .output()
        .expect("run sectio");
    let mut reader = csv::ReaderBuilder::new().from_reader(out.stdout.as_slice());
    let header: Vec<String> = reader
        .headers()
        .map(|h| h.iter().map(String::from).collect())
        .unwrap_or_default();
    let results = reader
        .records()
        .map(|r| {
            let r = r.expect("csv record");
            ResultRow {
                cells: header
                    .iter()
                    .cloned()
                    .zip(r.iter().map(String::from))
                    .collect(),
            }
        })
        .collect();
    Run {
        code: out.status.code().unwrap_or(-1),
        results,
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn write(dir: &Path, name: &str, bytes: &[u8]) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, bytes).expect("write");
    p
}

fn failures(run: &Run) -> Vec<&ResultRow> {
    run.results
        .iter()
        .filter(|r| r.s("status") == "fail")
        .collect()
}

#[test]
fn the_demo_catalog_shows_its_three_slips() {
    let dir = tempfile::tempdir().expect("temp");
    let summary = dir.path().join("summary.md");
    let run = check(&[
        &demo("catalog.csv"),
        "--layer",
        "PROFILE",
        "--summary",
        summary.to_str().expect("utf-8 path"),
    ]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert_eq!(run.results.len(), 55);
    let fails = failures(&run);
    let got: Vec<(&str, &str)> = fails
        .iter()
        .map(|r| (r.s("label"), r.s("property")))
        .collect();
    assert_eq!(
        got,
        [
            ("HV-318", "ixx_cm4"),
            ("HV-318", "iyy_cm4"),
            ("HV-731", "area_cm2"),
            ("HV-902", "ixx_cm4")
        ]
    );
    assert!(fails[0].s("reason").contains("matches iyy_cm4 (swapped?)"));
    assert!(fails[2].s("reason").contains("two digits transposed"));
    assert!(fails[3].s("reason").contains("10^4 times"));
    // Every other value passes, within 1 % (the values are rounded to 4 digits).
    for r in run.results.iter().filter(|r| r.s("status") == "pass") {
        assert!(r.f("relative_difference").abs() < 0.0006, "{r:?}");
        assert!(r.f("difference").abs() <= r.f("allowed"), "{r:?}");
    }
    assert!(run.stderr.contains("4 failed"), "{}", run.stderr);
    assert!(run.stderr.contains("not compared") && run.stderr.contains("description"));
    let md = std::fs::read_to_string(&summary).expect("summary written");
    assert!(md.contains("51 of 55 values pass"), "{md}");
    assert!(md.contains("| 11 | 55 | 51 | 4 | 0 |"), "{md}");
    assert!(md.contains("HV-731"), "{md}");
    assert!(md.contains("not a strength check"), "{md}");
}

/// A catalog of the channel and the tube, correct values, in the given dialect.
fn good_catalog(delimiter: &str, decimal_comma: bool, bom: bool) -> String {
    let rows = [
        [
            "04_hv-204_channel-80x40x4.dxf",
            "7.010",
            "93510",
            "1.893",
            "0",
        ],
        ["02_hv-152_tube-50x3.dxf", "4.430", "122800", "1.196", "0"],
    ];
    let mut s = String::new();
    if bom {
        s.push('\u{feff}');
    }
    s.push_str(&["drawing", "area_cm2", "ixx_mm4", "mass_kg_per_m", "ixy_mm4"].join(delimiter));
    s.push_str("\r\n");
    for r in rows {
        let cells: Vec<String> = r
            .iter()
            .enumerate()
            .map(|(k, c)| {
                if k == 0 {
                    demo(c)
                } else if decimal_comma {
                    c.replace('.', ",")
                } else {
                    c.to_string()
                }
            })
            .collect();
        s.push_str(&cells.join(delimiter));
        s.push_str("\r\n");
    }
    s
}

#[test]
fn both_decimal_conventions_a_bom_and_any_delimiter_read_alike() {
    let dir = tempfile::tempdir().expect("temp");
    let mut seen = Vec::new();
    for (name, delimiter, comma, bom) in [
        ("a.csv", ",", false, false),
        ("b.csv", ";", true, true),
        ("c.tsv", "\t", true, false),
        ("d.txt", "|", false, true),
    ] {
        let p = write(
            dir.path(),
            name,
            good_catalog(delimiter, comma, bom).as_bytes(),
        );
        let run = check(&[p.to_str().expect("utf-8"), "--layer", "PROFILE"]);
        assert_eq!(run.code, 0, "{name}: {}", run.stderr);
        assert_eq!(run.results.len(), 8, "{name}");
        assert!(failures(&run).is_empty(), "{name}");
        // ixy of these symmetric sections is zero to rounding: the floor lets a stated 0 pass.
        let ixy = run
            .results
            .iter()
            .find(|r| r.s("property") == "ixy_mm4")
            .expect("ixy");
        assert!(ixy.f("allowed") > 0.0 && ixy.f("stated") == 0.0);
        seen.push(
            run.results
                .iter()
                .map(|r| r.s("measured").to_string())
                .collect::<Vec<_>>(),
        );
    }
    assert!(seen.windows(2).all(|w| w[0] == w[1]));
    // Given explicitly, the dialect wins over the guess: read as decimal point, "7,010"
    // is 7010 and fails.
    let p = write(
        dir.path(),
        "e.csv",
        good_catalog(";", true, false).as_bytes(),
    );
    let run = check(&[
        p.to_str().expect("utf-8"),
        "--layer",
        "PROFILE",
        "--catalog-decimal",
        "point",
    ]);
    assert_eq!(run.code, 1);
}

#[test]
fn headers_are_mapped_units_converted_and_tolerances_set() {
    let dir = tempfile::tempdir().expect("temp");
    // The channel in inches and cm, under the supplier's own headers. Measured (demo):
    // area 7.009915 cm², ixx 9.351461 cm⁴ = 9.351461 / 2.54⁴ in⁴ = 0.224669 in⁴.
    // A units row under the header, as many catalogs print, is passed over.
    let catalog = format!(
        "Part;Drawing file;Area [cm2];Ix [in4];Weight [kg/m]\n\
         ;;cm²;in⁴;kg/m\n\
         HV-204;{};7,010;0,2247;1,893\n",
        demo("04_hv-204_channel-80x40x4.dxf")
    );
    let p = write(dir.path(), "supplier.csv", catalog.as_bytes());
    let map = write(
        dir.path(),
        "map.toml",
        br#"
[columns]
"Drawing file" = "drawing"
"Area [cm2]" = "area_cm2"
"Ix [in4]" = "ixx_in4"
"Weight [kg/m]" = "mass_kg_per_m"

[tolerances]
default = "0.2%"
mass = "0.01%"
"#,
    );
    let run = check(&[
        p.to_str().expect("utf-8"),
        "--layer",
        "PROFILE",
        "--map",
        map.to_str().expect("utf-8"),
    ]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let by: HashMap<&str, &ResultRow> = run.results.iter().map(|r| (r.s("property"), r)).collect();
    assert_eq!(by["area_cm2"].s("status"), "pass");
    assert_eq!(by["area_cm2"].s("label"), "HV-204");
    assert_eq!(by["area_cm2"].s("line"), "3");
    assert_eq!(run.results.len(), 3);
    assert!(
        run.stderr.contains("1 catalog rows name no drawing"),
        "{}",
        run.stderr
    );
    // 9.351461 cm⁴ in in⁴ (1 in = 2.54 cm).
    let ixx_in4 = 9.351461 / 2.54f64.powi(4);
    assert!((by["ixx_in4"].f("measured") - ixx_in4).abs() < 1e-6 * ixx_in4);
    assert_eq!(by["ixx_in4"].s("status"), "pass");
    // Mass: 7.009915 cm² × 2700 kg/m³ = 1.89268 kg/m; 1.893 is 0.017 % off, outside 0.01 %.
    assert_eq!(by["mass_kg_per_m"].s("status"), "fail");
    // The same on the command line: --tolerance-for overrides the mapping file.
    let run = check(&[
        p.to_str().expect("utf-8"),
        "--layer",
        "PROFILE",
        "--map",
        map.to_str().expect("utf-8"),
        "--tolerance-for",
        "mass=0.1%",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    // Steel instead of aluminium: every mass fails, by the density ratio 7850/2700.
    let run = check(&[
        p.to_str().expect("utf-8"),
        "--layer",
        "PROFILE",
        "--map",
        map.to_str().expect("utf-8"),
        "--material",
        "steel",
    ]);
    let mass = run
        .results
        .iter()
        .find(|r| r.s("property") == "mass_kg_per_m")
        .expect("mass");
    assert!((mass.f("measured") / mass.f("stated") - 7850.0 / 2700.0).abs() < 1e-3);
}

#[test]
fn a_missing_drawing_and_unmeasurable_values_are_failures_with_reasons() {
    let dir = tempfile::tempdir().expect("temp");
    let catalog = format!(
        "drawing,profile,area_mm2,ixx_mm4\n\
         no-such-drawing.dxf,,100,2000\n\
         {sheet},,60,45\n\
         {sheet},7,60,45\n\
         {sheet},PROFILE,60,45\n\
         {sheet},1,n/a,45\n\
         {sheet},1,,45\n",
        sheet = demo("07_hv-901_bar-sheet.dxf")
    );
    let p = write(dir.path(), "c.csv", catalog.as_bytes());
    let run = check(&[p.to_str().expect("utf-8"), "--layer", "PROFILE"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let reasons: Vec<(&str, &str, &str)> = run
        .results
        .iter()
        .map(|r| (r.s("line"), r.s("status"), r.s("reason")))
        .collect();
    // Missing drawing: every stated value of the row fails and says so.
    assert!(
        reasons[0].2.starts_with("drawing missing") && reasons[1].2.starts_with("drawing missing")
    );
    // Four profiles on the sheet: which one must be said.
    assert!(reasons[2].2.contains("holds 4 profiles"), "{reasons:?}");
    assert!(reasons[4].2.contains("profile 7 not found"), "{reasons:?}");
    assert!(reasons[6].2.contains("4 profiles on layer"), "{reasons:?}");
    assert!(reasons[8].2.contains("not a number"), "{reasons:?}");
    // Profile 1 (flat 20×3): Ixx = 20·3³/12 = 45 mm⁴ (closed form) passes; an empty cell is
    // not compared.
    assert_eq!(reasons[9], ("6", "pass", ""));
    assert_eq!(reasons[10], ("7", "pass", ""));
    assert_eq!(run.results.len(), 11);
    assert!(run.stderr.contains("1 missing drawings"), "{}", run.stderr);
}

#[test]
fn unusable_catalogs_exit_2() {
    let dir = tempfile::tempdir().expect("temp");
    let no_drawing = write(dir.path(), "a.csv", b"part,area_mm2\nx,1\n");
    let no_values = write(dir.path(), "b.csv", b"drawing,colour\nx.dxf,red\n");
    let not_utf8 = write(dir.path(), "c.csv", b"drawing,area_mm2\n\xff\xfe,1\n");
    let bad_map = write(
        dir.path(),
        "m.toml",
        b"[columns]\n\"A\" = \"no_such_column\"\n",
    );
    for (args, why) in [
        (vec![no_drawing.to_str().unwrap()], "no drawing column"),
        (vec![no_values.to_str().unwrap()], "no value to compare"),
        (vec![not_utf8.to_str().unwrap()], "not UTF-8"),
        (vec!["/no/such/catalog.csv"], "cannot read"),
    ] {
        let run = check(&args);
        assert_eq!(run.code, 2, "{why}: {}", run.stderr);
        assert!(run.stderr.contains(why), "{why}: {}", run.stderr);
    }
    let run = check(&[
        no_values.to_str().unwrap(),
        "--map",
        bad_map.to_str().unwrap(),
    ]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("no_such_column"), "{}", run.stderr);
    let run = check(&[no_values.to_str().unwrap(), "--tolerance", "lots"]);
    assert_eq!(run.code, 2);
    let run = check(&[no_values.to_str().unwrap(), "--tolerance-for", "colour=1%"]);
    assert_eq!(run.code, 2);
}

#[test]
fn results_as_xlsx_keep_numbers_and_highlight_failures_and_jsonl_agrees() {
    use calamine::{Data, Reader, Xlsx};
    let dir = tempfile::tempdir().expect("temp");
    let out = dir.path().join("results.xlsx");
    let run = check(&[
        &demo("catalog.csv"),
        "--layer",
        "PROFILE",
        "-o",
        out.to_str().expect("utf-8"),
    ]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let bytes = std::fs::read(&out).expect("workbook written");
    let mut book: Xlsx<_> = Xlsx::new(std::io::Cursor::new(bytes.clone())).expect("calamine");
    assert_eq!(book.sheet_names(), ["results", "summary", "run"]);
    let results = book.worksheet_range("results").expect("results sheet");
    let rows: Vec<&[Data]> = results.rows().collect();
    assert_eq!(rows.len(), 56, "header and 55 values");
    let header: Vec<String> = rows[0].iter().map(|c| c.to_string()).collect();
    assert_eq!(
        header[..6],
        ["line", "label", "drawing", "profile", "property", "stated"]
    );
    let col = |name: &str| header.iter().position(|h| h == name).expect("column");
    let mut failed_rows = Vec::new();
    for (k, r) in rows.iter().enumerate().skip(1) {
        assert!(matches!(r[col("stated")], Data::Float(_)), "{r:?}");
        assert!(matches!(r[col("measured")], Data::Float(_)), "{r:?}");
        assert!(matches!(r[col("line")], Data::Float(_)), "{r:?}");
        if r[col("status")] == Data::String("fail".into()) {
            failed_rows.push(k + 1); // 1-based sheet row
        }
    }
    assert_eq!(failed_rows.len(), 4);
    // The same values as JSON Lines.
    let jsonl = Command::new(BIN)
        .args([
            "check",
            &demo("catalog.csv"),
            "--layer",
            "PROFILE",
            "--format",
            "jsonl",
        ])
        .output()
        .expect("run");
    let lines: Vec<serde_json::Value> = jsonl
        .stdout
        .split(|&b| b == b'\n')
        .filter(|l| !l.is_empty())
        .map(|l| serde_json::from_slice(l).expect("a JSON object"))
        .collect();
    assert_eq!(lines.len(), 55);
    for (k, obj) in lines.iter().enumerate() {
        let measured = obj["measured"].as_f64().expect("number");
        assert_eq!(Data::Float(measured), rows[k + 1][col("measured")]);
    }
    // Failing rows carry one style, different from passing rows'.
    let sheet = zip_part(&bytes, "xl/worksheets/sheet1.xml");
    let doc = roxmltree::Document::parse(&sheet).expect("sheet XML");
    let style = |row: usize| -> String {
        doc.descendants()
            .find(|n| n.has_tag_name("row") && n.attribute("r") == Some(&row.to_string()))
            .and_then(|n| n.children().find(|c| c.has_tag_name("c")))
            .and_then(|c| c.attribute("s"))
            .unwrap_or("0")
            .to_string()
    };
    let fail_style = style(failed_rows[0]);
    assert!(failed_rows.iter().all(|&r| style(r) == fail_style));
    assert_ne!(style(2), fail_style, "row 2 passes");
    // Summary and run sheets.
    let summary = book.worksheet_range("summary").expect("summary sheet");
    let items: HashMap<String, Data> = summary
        .rows()
        .skip(1)
        .map(|r| (r[0].to_string(), r[1].clone()))
        .collect();
    assert_eq!(items["failed"], Data::Float(4.0));
    assert_eq!(items["values compared"], Data::Float(55.0));
    let run_sheet = book.worksheet_range("run").expect("run sheet");
    let keys: Vec<String> = run_sheet.rows().map(|r| r[0].to_string()).collect();
    for k in ["version", "catalog", "density", "input", "caution"] {
        assert!(keys.iter().any(|x| x == k), "{k} in {keys:?}");
    }
}

#[test]
fn an_xlsx_catalog_is_read_like_its_text() {
    // The channel and the tube again, in a workbook: numbers as number cells; and a third
    // row whose area is stored as text ("4,800"), which is ambiguous (4.8 or 4800) and so
    // not taken for a number.
    let dir = tempfile::tempdir().expect("temp");
    let path = dir.path().join("catalog.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    for (c, h) in ["Part", "drawing", "area_cm2", "ixx_mm4"]
        .iter()
        .enumerate()
    {
        sheet.write_string(0, c as u16, *h).expect("cell");
    }
    let rows = [
        ("HV-204", "04_hv-204_channel-80x40x4.dxf", 7.010, 93510.0),
        ("HV-152", "02_hv-152_tube-50x3.dxf", 4.430, 122800.0),
    ];
    for (r, (part, drawing, area, ixx)) in rows.iter().enumerate() {
        let r = r as u32 + 1;
        sheet.write_string(r, 0, *part).expect("cell");
        sheet.write_string(r, 1, demo(drawing)).expect("cell");
        sheet.write_number(r, 2, *area).expect("cell");
        sheet.write_number(r, 3, *ixx).expect("cell");
    }
    sheet.write_string(3, 0, "HV-318").expect("cell");
    sheet
        .write_string(3, 1, demo("03_hv-318_angle-60x40x5.dxf"))
        .expect("cell");
    sheet.write_string(3, 2, "4,800").expect("cell");
    book.save(&path).expect("saved");
    let run = check(&[path.to_str().expect("utf-8"), "--layer", "PROFILE"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let area: Vec<&ResultRow> = run
        .results
        .iter()
        .filter(|r| r.s("property") == "area_cm2")
        .collect();
    assert_eq!(area.len(), 3);
    assert_eq!(area[0].s("status"), "pass");
    assert_eq!(area[0].s("label"), "HV-204");
    assert_eq!(area[0].s("line"), "2", "sheet row");
    assert_eq!(area[1].s("status"), "pass");
    // A number stored as text is not a number to compare: a failure that says so.
    assert!(
        area[2].s("reason").contains("not a number"),
        "{:?}",
        area[2]
    );
}
