//! `sectio check CATALOG`: compare a catalog's stated values with its drawings.

use std::collections::HashMap;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;

use super::args::{CheckArgs, FormatArg};
use super::{
    batch, measure_settings, output_format, read_settings, run_record_start, with_limits,
    write_atomically, CAUTION, EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE,
};
use rayon::prelude::*;

use crate::analyze::{MeasuredDrawing, Outcome};
use crate::check::{
    compare, is_profile_row, plan, read_catalog, summarize, Comparison, Mapping, Summary,
    TextOptions,
};
use crate::fem::TorsionSettings;
use crate::import::LengthUnit;
use crate::report::{format_number, html, write_jsonl, xlsx_bytes, Cell, CsvFormat, Row, Table};

/// Exit status: the catalog cannot be used (unreadable, no drawing column, no value column).
pub const EXIT_UNUSABLE_CATALOG: i32 = EXIT_USAGE;

/// Columns of the result table, in order.
pub const RESULT_HEADER: [&str; 12] = [
    "line",
    "label",
    "drawing",
    "profile",
    "property",
    "stated",
    "measured",
    "difference",
    "relative_difference",
    "allowed",
    "status",
    "reason",
];

pub fn check(args: CheckArgs) -> anyhow::Result<i32> {
    let started = Instant::now();
    let mut mapping = match &args.map {
        Some(path) => {
            let text = std::fs::read_to_string(path)
                .with_context(|| format!("cannot read the mapping file {}", path.display()))?;
            Mapping::parse(&text).map_err(|e| anyhow::anyhow!("{}: {e}", path.display()))?
        }
        None => Mapping::default(),
    };
    if let Some(t) = args.tolerance {
        mapping.tolerances.default = t;
    }
    for (stem, t) in &args.tolerance_for {
        mapping.tolerances.per_property.insert(stem.clone(), *t);
    }
    if let Some(f) = args.floor {
        mapping.tolerances.floor = f;
    }
    let density = args.mass.density_kg_m3().map_err(anyhow::Error::msg)?;
    let format = output_format(args.format, args.output.as_deref(), None)?;

    let table = match read_catalog(
        &args.catalog,
        TextOptions {
            delimiter: args.catalog_delimiter.map(|c| c as u8),
            decimal_comma: args.catalog_decimal.map(|d| d == "comma"),
        },
    ) {
        Ok(t) => t,
        Err(e) => return unusable(&e),
    };
    let plan = match plan(&table, &mapping) {
        Ok(p) => p,
        Err(e) => return unusable(&format!("{}: {e}", args.catalog.display())),
    };
    if !plan.ignored.is_empty() {
        eprintln!(
            "sectio: not compared (no such column in measure; --map can rename them): {}",
            plan.ignored.join(", ")
        );
    }

    // Measure every drawing named, once, in parallel.
    let base = args
        .catalog
        .parent()
        .map_or_else(|| PathBuf::from("."), Path::to_path_buf);
    let mut named: Vec<String> = table
        .rows
        .iter()
        .filter_map(|r| r.cells.get(plan.drawing).map(|c| c.text()))
        .filter(|d| !d.trim().is_empty())
        .collect();
    named.sort();
    named.dedup();
    let paths: Vec<PathBuf> = named.iter().map(|d| base.join(d.trim())).collect();
    let tiers = plan.tiers();
    let read = with_limits(read_settings(&args.read, false)?, &args.limits);
    let settings = measure_settings(
        read,
        args.merge,
        tiers,
        TorsionSettings {
            accuracy: args.torsion_accuracy,
            ..TorsionSettings::default()
        },
    );
    let existing: Vec<PathBuf> = paths.iter().filter(|p| p.is_file()).cloned().collect();
    // With --report each file's rows and geometry are kept for the page, which is built once
    // the comparisons are known.
    let batch = if args.report.is_some() {
        batch::run_batch_with(&existing, args.jobs, |path| {
            let (rows, geometry) = batch::measure_file_with_geometry(path, &settings);
            let kept = (rows.clone(), geometry);
            (rows, Some(kept))
        })?
    } else {
        batch::run_batch_with(&existing, args.jobs, |path| {
            (batch::measure_file(path, &settings), None)
        })?
    };
    let mut by_file: HashMap<String, Vec<Outcome>> = HashMap::new();
    for row in batch.rows {
        by_file.entry(row.file).or_default().push(row.outcome);
    }
    let measured = |drawing: &str| -> Result<Vec<Outcome>, String> {
        let path = base.join(drawing.trim());
        if !path.is_file() {
            return Err(format!("drawing missing: {}", path.display()));
        }
        by_file
            .get(&path.display().to_string())
            .cloned()
            .ok_or_else(|| format!("drawing not read: {}", path.display()))
    };
    let profile_rows: Vec<_> = table
        .rows
        .iter()
        .filter(|r| is_profile_row(r, &plan))
        .collect();
    let passed_over = table.rows.len() - profile_rows.len();
    if passed_over > 0 {
        eprintln!(
            "sectio check: {passed_over} catalog rows name no drawing and state no number (units rows, headings?): passed over"
        );
    }
    let missing = profile_rows
        .iter()
        .filter(|r| {
            let d = r
                .cells
                .get(plan.drawing)
                .map(|c| c.text())
                .unwrap_or_default();
            d.trim().is_empty() || !base.join(d.trim()).is_file()
        })
        .count();
    let results = compare(&table, &plan, &mapping.tolerances, density, &measured);
    let summary = summarize(profile_rows.len(), &results, missing);

    let bytes = match format {
        FormatArg::Csv => results_csv(&results)?,
        FormatArg::Jsonl => {
            let mut out = Vec::new();
            write_jsonl(&mut out, &results_table(&results))?;
            out
        }
        FormatArg::Xlsx => {
            let mut run = run_record_start();
            run.push("catalog", args.catalog.display().to_string());
            run.push("catalog read as", table.dialect.clone());
            if let Some(map) = &args.map {
                run.push("mapping", map.display().to_string());
            }
            run.push("density", args.mass.describe(density));
            run.push("drawings", named.len().to_string());
            for p in &paths {
                run.push("input", p.display().to_string());
            }
            run.push("caution", CAUTION);
            xlsx_bytes(
                &[results_table(&results), summary_table(&summary, &mapping)],
                &run,
            )?
        }
    };
    match &args.output {
        Some(path) => write_atomically(path, |w| w.write_all(&bytes))
            .with_context(|| format!("cannot write {}", path.display()))?,
        None => {
            let stdout = std::io::stdout();
            let mut lock = stdout.lock();
            lock.write_all(&bytes)
                .and_then(|_| lock.flush())
                .context("cannot write to standard output")?;
        }
    }
    if let Some(path) = &args.report {
        let format = CsvFormat {
            unit: LengthUnit::MM,
            delimiter: b',',
            decimal_comma: false,
            density_kg_m3: density,
            tiers,
        };
        let mut run = run_record_start();
        run.push("catalog", args.catalog.display().to_string());
        run.push("catalog read as", table.dialect.clone());
        if let Some(map) = &args.map {
            run.push("mapping", map.display().to_string());
        }
        run.push("units", format.unit.name);
        run.push("density", args.mass.describe(density));
        run.push("drawings", named.len().to_string());
        for p in &paths {
            run.push("input", p.display().to_string());
        }
        run.push("caution", CAUTION);
        let page = check_page(
            &base,
            &existing,
            &batch.rendered,
            &results,
            &summary,
            &mapping,
            &format,
        );
        write_atomically(path, |w| {
            html::write_page(
                w,
                &run,
                &format,
                &page.fragments.iter().collect::<Vec<_>>(),
                Some(&page.intro),
            )
        })
        .with_context(|| format!("cannot write {}", path.display()))?;
    }
    if let Some(path) = &args.summary {
        let md = markdown_summary(&args.catalog, &summary, &results, &mapping);
        write_atomically(path, |w| w.write_all(md.as_bytes()))
            .with_context(|| format!("cannot write {}", path.display()))?;
    }
    eprintln!(
        "sectio check: {} profiles, {} values compared, {} passed, {} failed, {} missing drawings, {:.2} s",
        summary.profiles,
        summary.values,
        summary.passed,
        summary.failed,
        summary.missing_drawings,
        started.elapsed().as_secs_f64()
    );
    Ok(if summary.failed > 0 || summary.missing_drawings > 0 {
        EXIT_SOME_FAILED
    } else {
        EXIT_OK
    })
}

/// The parts of a check's HTML report: its opening and one fragment per drawing.
struct CheckPage {
    intro: String,
    fragments: Vec<html::Fragment>,
}

/// Build the check report's parts. `kept[k]` holds the rows and geometry of `files[k]`
/// (drawings named by the catalog, relative to `base`); each comparison is shown with the
/// profile it was matched to, and every failure in the opening.
fn check_page(
    base: &Path,
    files: &[PathBuf],
    kept: &[Option<(Vec<Row>, Option<MeasuredDrawing>)>],
    results: &[Comparison],
    summary: &Summary,
    mapping: &Mapping,
    format: &CsvFormat,
) -> CheckPage {
    let file_no: HashMap<String, usize> = files
        .iter()
        .enumerate()
        .map(|(k, f)| (f.display().to_string(), k + 1))
        .collect();
    // The comparisons of each (file, profile).
    let mut matched: HashMap<(String, usize), Vec<&Comparison>> = HashMap::new();
    for c in results {
        if let Some(p) = c.measured_profile {
            let file = base.join(c.drawing.trim()).display().to_string();
            matched.entry((file, p)).or_default().push(c);
        }
    }
    let link = |c: &Comparison| -> Option<String> {
        let file = base.join(c.drawing.trim()).display().to_string();
        Some(format!("p-{}-{}", file_no.get(&file)?, c.measured_profile?))
    };
    let intro = html::check_intro(summary, results, &tolerance_text(mapping), &link);
    let fragments = kept
        .par_iter()
        .enumerate()
        .filter_map(|(k, f)| {
            let (rows, geometry) = f.as_ref()?;
            let checks: Vec<Vec<&Comparison>> = rows
                .iter()
                .map(|r| {
                    matched
                        .get(&(r.file.clone(), r.outcome.profile))
                        .cloned()
                        .unwrap_or_default()
                })
                .collect();
            Some(html::file_fragment(
                k + 1,
                rows,
                geometry.as_ref(),
                format,
                Some(&checks),
            ))
        })
        .collect();
    CheckPage { intro, fragments }
}

/// The tolerance rule in words, for the summaries.
fn tolerance_text(mapping: &Mapping) -> String {
    let mut per: Vec<(&String, &f64)> = mapping.tolerances.per_property.iter().collect();
    per.sort_by(|a, b| a.0.cmp(b.0));
    format!(
        "Tolerance: {}% of the stated value{}, at least {}% of the section's own magnitude \
         (for values near zero).",
        mapping.tolerances.default * 100.0,
        per.iter()
            .map(|(k, v)| format!(", {k} {}%", *v * 100.0))
            .collect::<String>(),
        mapping.tolerances.floor * 100.0
    )
}

/// Report an unusable catalog and give its exit status.
fn unusable(message: &str) -> anyhow::Result<i32> {
    eprintln!("sectio check: unusable catalog: {message}");
    Ok(EXIT_UNUSABLE_CATALOG)
}

fn number(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map_or_else(String::new, |x| format_number(x, false))
}

/// The cells of one result row, as text, in the order of [`RESULT_HEADER`].
pub fn result_cells(c: &Comparison) -> [String; 12] {
    [
        c.line.to_string(),
        c.label.clone(),
        c.drawing.clone(),
        c.profile.clone(),
        c.property.clone(),
        number(c.stated),
        number(c.measured),
        number(c.difference()),
        number(c.relative_difference()),
        number(c.allowed),
        if c.pass { "pass" } else { "fail" }.to_string(),
        c.reason.clone(),
    ]
}

fn cell(v: Option<f64>) -> Cell {
    v.filter(|x| x.is_finite())
        .map_or(Cell::Empty, Cell::Number)
}

/// The results as a table (for JSON Lines and .xlsx): numbers as numbers, failures flagged.
pub fn results_table(results: &[Comparison]) -> Table {
    let text = |s: &str| {
        if s.is_empty() {
            Cell::Empty
        } else {
            Cell::Text(s.to_string())
        }
    };
    Table {
        name: "results".into(),
        header: RESULT_HEADER.iter().map(|h| h.to_string()).collect(),
        rows: results
            .iter()
            .map(|c| {
                vec![
                    Cell::Number(c.line as f64),
                    text(&c.label),
                    text(&c.drawing),
                    text(&c.profile),
                    text(&c.property),
                    cell(c.stated),
                    cell(c.measured),
                    cell(c.difference()),
                    cell(c.relative_difference()),
                    cell(c.allowed),
                    text(if c.pass { "pass" } else { "fail" }),
                    text(&c.reason),
                ]
            })
            .collect(),
        flagged: results.iter().map(|c| !c.pass).collect(),
    }
}

/// The totals and tolerances as a two-column table.
fn summary_table(s: &Summary, mapping: &Mapping) -> Table {
    let mut rows = vec![
        ("profiles", Cell::Number(s.profiles as f64)),
        ("values compared", Cell::Number(s.values as f64)),
        ("passed", Cell::Number(s.passed as f64)),
        ("failed", Cell::Number(s.failed as f64)),
        ("missing drawings", Cell::Number(s.missing_drawings as f64)),
        ("tolerance", Cell::Number(mapping.tolerances.default)),
        ("floor", Cell::Number(mapping.tolerances.floor)),
    ];
    let mut per: Vec<(&String, &f64)> = mapping.tolerances.per_property.iter().collect();
    per.sort_by(|a, b| a.0.cmp(b.0));
    let per: Vec<(String, Cell)> = per
        .into_iter()
        .map(|(k, v)| (format!("tolerance {k}"), Cell::Number(*v)))
        .collect();
    let mut table = Table {
        name: "summary".into(),
        header: vec!["item".into(), "value".into()],
        rows: Vec::new(),
        flagged: Vec::new(),
    };
    for (k, v) in rows.drain(..) {
        table.flagged.push(
            (k == "failed" || k == "missing drawings") && matches!(v, Cell::Number(n) if n > 0.0),
        );
        table.rows.push(vec![Cell::Text(k.to_string()), v]);
    }
    for (k, v) in per {
        table.flagged.push(false);
        table.rows.push(vec![Cell::Text(k), v]);
    }
    table
}

/// The results as CSV: a header, then one record per stated value.
fn results_csv(results: &[Comparison]) -> std::io::Result<Vec<u8>> {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::CRLF)
        .from_writer(Vec::new());
    w.write_record(RESULT_HEADER)?;
    for c in results {
        w.write_record(result_cells(c))?;
    }
    w.into_inner().map_err(|e| e.into_error())
}

/// A Markdown summary for a merge request: totals, tolerances, and every failure.
pub fn markdown_summary(
    catalog: &Path,
    s: &Summary,
    results: &[Comparison],
    mapping: &Mapping,
) -> String {
    let mut md = String::new();
    let verdict = if s.failed == 0 && s.missing_drawings == 0 {
        "all values agree"
    } else {
        "some values disagree"
    };
    md.push_str(&format!(
        "# Catalog check: {}\n\n**{verdict}**: {} of {} values pass.\n\n",
        catalog.display(),
        s.passed,
        s.values
    ));
    md.push_str("| profiles | values compared | passed | failed | missing drawings |\n");
    md.push_str("|---:|---:|---:|---:|---:|\n");
    md.push_str(&format!(
        "| {} | {} | {} | {} | {} |\n\n",
        s.profiles, s.values, s.passed, s.failed, s.missing_drawings
    ));
    md.push_str(&tolerance_text(mapping));
    md.push_str("\n\n");
    let failures: Vec<&Comparison> = results.iter().filter(|c| !c.pass).collect();
    if !failures.is_empty() {
        md.push_str("## Failures\n\n");
        md.push_str("| line | part | drawing | profile | property | stated | measured | difference | reason |\n");
        md.push_str("|---:|---|---|---|---|---:|---:|---:|---|\n");
        for c in failures {
            let rel = c.relative_note();
            md.push_str(&format!(
                "| {} | {} | {} | {} | {} | {} | {} | {}{} | {} |\n",
                c.line,
                escape_md(&c.label),
                escape_md(&c.drawing),
                escape_md(&c.profile),
                c.property,
                number(c.stated),
                number(c.measured),
                number(c.difference()),
                rel,
                escape_md(&c.reason)
            ));
        }
        md.push('\n');
    }
    md.push_str(
        "Geometric properties of the outlines as drawn; not a strength check. Member design \
         follows the applicable code and a qualified engineer.\n",
    );
    md
}

fn escape_md(s: &str) -> String {
    s.replace('|', "\\|").replace('\n', " ")
}
