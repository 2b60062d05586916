//! The plain-text report of `sectio explain`.
//!
//! Sections in pipeline order: the file, its layers, what was skipped, the join gap, the
//! chaining, the loops, the rows `measure` writes, the problems and the stray geometry, then
//! a one-line result and the caution. Lengths are in millimetres, as everything after
//! reading is. Tables are plain columns two spaces apart, so the report reads in a terminal
//! and diffs line by line.

use std::io::{self, Write};

use super::{Details, Explanation, GapChoice, LayerLine, LayerVerdict, RowKind};
use crate::geom::chain::fmt_len;
use crate::geom::LoopProblem;

/// The caution printed at the end of every report.
pub const CAUTION: &str =
    "Results are geometric properties of the outline as drawn, not a strength check; \
member design follows the applicable code and is signed off by a qualified engineer.";

/// Write the report on `explanation` of the file shown as `path`.
pub fn write_report(w: &mut dyn Write, path: &str, explanation: &Explanation) -> io::Result<()> {
    writeln!(w, "sectio explain: {path}")?;
    writeln!(w)?;
    writeln!(w, "File")?;
    let format = if explanation.binary {
        "binary DXF"
    } else {
        "ASCII DXF"
    };
    let d = match &explanation.read {
        Err(e) => {
            writeln!(w, "  format      {format} (by its first bytes)")?;
            writeln!(w, "  not read    {e}")?;
            writeln!(w)?;
            writeln!(w, "Result: the file could not be read; measure writes one error row (profile 0) for it.")?;
            writeln!(w)?;
            return writeln!(w, "{CAUTION}");
        }
        Ok(d) => d,
    };
    write_file(w, format, d)?;
    write_layers(w, d)?;
    write_list(
        w,
        "Skipped entities",
        d.skipped.iter().map(|(k, n)| format!("{n} {k}")),
    )?;
    write_list(w, "Reader notes", d.notes.iter().cloned())?;
    if let Some(gap) = &d.gap {
        write_gap(w, gap)?;
    }
    write_chaining(w, d)?;
    write_loops(w, d)?;
    write_rows(w, d)?;
    write_problems(w, d)?;
    write_strays(w, d)?;
    let errors = d.rows.iter().filter(|r| r.error.is_some()).count();
    let rows = d.rows.len();
    writeln!(
        w,
        "Result: {rows} row{} ({} ok, {errors} error{}); measure's exit status for this file alone: {}.",
        plural(rows),
        rows - errors,
        plural(errors),
        if errors == 0 { 0 } else { 1 }
    )?;
    writeln!(w)?;
    writeln!(w, "{CAUTION}")
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

fn write_file(w: &mut dyn Write, format: &str, d: &Details) -> io::Result<()> {
    let f = &d.file;
    let mut lines = Vec::new();
    if f.svg {
        lines.push(vec!["format".to_string(), "SVG".to_string()]);
        lines.push(vec!["encoding".to_string(), f.text_encoding.to_string()]);
    } else {
        lines.push(vec!["format".to_string(), format.to_string()]);
        lines.extend(dxf_facts(f));
    }
    let units = &d.units;
    lines.push(vec![
        "units".into(),
        match (units.assumed, units.code) {
            (false, Some(c)) => format!("{} ($INSUNITS {c})", units.unit.name),
            (false, None) => units.unit.name.to_string(),
            (true, Some(c)) if c != 0 => format!(
                "{} assumed ($INSUNITS {c} is not a unit; --assume-units changes this)",
                units.unit.name
            ),
            (true, Some(_)) => format!(
                "{} assumed ($INSUNITS 0, unitless; --assume-units changes this)",
                units.unit.name
            ),
            (true, None) => format!(
                "{} assumed (no $INSUNITS; --assume-units changes this)",
                units.unit.name
            ),
        },
    ]);
    lines.push(vec![
        "lengths".into(),
        "below in millimetres, after unit conversion".into(),
    ]);
    for l in columns(&lines, &[]).lines() {
        writeln!(w, "  {l}")?;
    }
    writeln!(w)
}

/// The reading options as typed on the command line.
fn options_text(d: &Details) -> String {
    let o = &d.options;
    let mut parts: Vec<String> = Vec::new();
    parts.extend(o.layers.iter().map(|g| format!("--layer {g}")));
    parts.extend(
        o.exclude_layers
            .iter()
            .map(|g| format!("--exclude-layer {g}")),
    );
    if o.include_hidden_layers {
        parts.push("--include-hidden-layers".into());
    }
    if parts.is_empty() {
        "none (every layer that is on and not frozen is read)".into()
    } else {
        parts.join(" ")
    }
}

fn write_layers(w: &mut dyn Write, d: &Details) -> io::Result<()> {
    let in_table = d.layers.iter().filter(|l| l.table.is_some()).count();
    let only_used = d.layers.len() - in_table;
    writeln!(
        w,
        "Layers: {in_table} in the LAYER table{}; layer options: {}",
        if only_used > 0 {
            format!(", {only_used} more named only by entities")
        } else {
            String::new()
        },
        options_text(d)
    )?;
    if d.layers.is_empty() {
        writeln!(w, "  (none)")?;
        return writeln!(w);
    }
    let mut rows = vec![vec![
        "layer".to_string(),
        "state".into(),
        "reading".into(),
        "entities in model space, by type".into(),
    ]];
    rows.extend(d.layers.iter().map(|l| {
        vec![
            l.name.clone(),
            layer_state(l),
            match l.verdict {
                LayerVerdict::Read => "read".into(),
                LayerVerdict::Hidden => "skipped (off or frozen)".into(),
                LayerVerdict::NotSelected => "skipped (not selected)".into(),
            },
            if l.entities.is_empty() {
                "-".into()
            } else {
                l.entities
                    .iter()
                    .map(|(t, n)| format!("{t} {n}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            },
        ]
    }));
    for l in columns(&rows, &[]).lines() {
        writeln!(w, "  {l}")?;
    }
    writeln!(w)
}

fn layer_state(l: &LayerLine) -> String {
    match &l.table {
        None => "not in table".into(),
        Some(t) => match (t.off, t.frozen) {
            (false, false) => "on".into(),
            (true, false) => "off".into(),
            (false, true) => "frozen".into(),
            (true, true) => "off, frozen".into(),
        },
    }
}

fn write_list(
    w: &mut dyn Write,
    title: &str,
    items: impl Iterator<Item = String>,
) -> io::Result<()> {
    writeln!(w, "{title}")?;
    let mut any = false;
    for item in items {
        writeln!(w, "  {item}")?;
        any = true;
    }
    if !any {
        writeln!(w, "  (none)")?;
    }
    writeln!(w)
}

fn write_gap(w: &mut dyn Write, g: &GapChoice) -> io::Result<()> {
    if g.given {
        writeln!(w, "Join gap: {} mm, given with --gap", fmt_len(g.used))?;
        writeln!(w, "  (the default would be {} mm)", fmt_len(g.default))?;
    } else {
        writeln!(w, "Join gap: {} mm, the default", fmt_len(g.used))?;
    }
    writeln!(
        w,
        "  by extent: 1e-4 of the drawing's extent (box diagonal {} mm), kept between 0.000001 mm (1e-8 of the extent under 100 mm) and 0.05 mm: {} mm",
        fmt_len(g.extent),
        fmt_len(g.by_extent)
    )?;
    if g.short_segment.is_finite() {
        writeln!(
            w,
            "  by short segments: at most a quarter of the 1st percentile of segment lengths ({} mm): {} mm",
            fmt_len(g.short_segment),
            fmt_len((0.25 * g.short_segment).max(1e-6))
        )?;
    } else {
        writeln!(
            w,
            "  by short segments: none short enough to lower it (under four times the gap by extent)"
        )?;
    }
    writeln!(
        w,
        "  ends closer than the gap are joined; shorter segments count as noise"
    )?;
    writeln!(w)
}

fn write_chaining(w: &mut dyn Write, d: &Details) -> io::Result<()> {
    let (closed, open) = d.pieces;
    writeln!(w, "Chaining")?;
    writeln!(
        w,
        "  {} pieces read: {closed} closed as drawn (circles, closed polylines), {open} open (lines, arcs, open polylines)",
        closed + open
    )?;
    if d.gap.is_some() {
        writeln!(w, "  {} duplicate entities removed", d.duplicates)?;
        writeln!(
            w,
            "  {} loops dropped as the same outline drawn again",
            d.duplicate_loops
        )?;
        writeln!(
            w,
            "  {} segments shorter than the gap left out",
            d.degenerate
        )?;
        let broken = d
            .problems
            .iter()
            .filter(|p| matches!(p.problem, LoopProblem::OpenChain { .. }))
            .count();
        writeln!(
            w,
            "  result: {} closed loop{} nested; {} problem{} ({broken} broken loop{}); {} stray open chain{}",
            d.loops.len(),
            plural(d.loops.len()),
            d.problems.len(),
            plural(d.problems.len()),
            plural(broken),
            d.strays.len(),
            plural(d.strays.len())
        )?;
    }
    writeln!(w)
}

fn write_loops(w: &mut dyn Write, d: &Details) -> io::Result<()> {
    writeln!(
        w,
        "Loops (signed area: positive counter-clockwise; outer loops are turned counter-clockwise, holes clockwise)"
    )?;
    if d.loops.is_empty() {
        writeln!(w, "  (none)")?;
        return writeln!(w);
    }
    let mut rows = vec![[
        "loop",
        "row",
        "layer",
        "role",
        "depth",
        "segments",
        "signed area mm2",
        "xmin",
        "ymin",
        "xmax",
        "ymax",
        "starts with",
    ]
    .map(String::from)
    .to_vec()];
    rows.extend(d.loops.iter().map(|l| {
        vec![
            l.number.to_string(),
            l.row.to_string(),
            l.layer.clone(),
            if l.is_hole() { "hole" } else { "material" }.into(),
            l.depth.to_string(),
            l.segments.to_string(),
            fmt_sig(l.signed_area, 7),
            fmt_len(l.bbox.min.x),
            fmt_len(l.bbox.min.y),
            fmt_len(l.bbox.max.x),
            fmt_len(l.bbox.max.y),
            l.origin.to_string(),
        ]
    }));
    let right = [
        true, true, false, false, true, true, true, true, true, true, true, false,
    ];
    for l in columns(&rows, &right).lines() {
        writeln!(w, "  {l}")?;
    }
    writeln!(w)
}

fn write_rows(w: &mut dyn Write, d: &Details) -> io::Result<()> {
    writeln!(w, "Rows of `sectio measure` for this file (column profile)")?;
    let mut rows = vec![["profile", "status", "layer", "what"]
        .map(String::from)
        .to_vec()];
    for r in &d.rows {
        let what = match (&r.kind, &r.error) {
            (RowKind::Profile { loops, area }, None) => {
                let mut s = format!("{}; area {} mm2", loop_list(loops), fmt_sig(*area, 7));
                if let Some(warning) = &r.warning {
                    s.push_str(&format!("; warning: {warning}"));
                }
                s
            }
            (RowKind::Profile { loops, .. }, Some(e)) => format!("{}; {e}", loop_list(loops)),
            (_, Some(e)) => e.clone(),
            (_, None) => String::new(),
        };
        rows.push(vec![
            r.row.to_string(),
            if r.error.is_some() { "error" } else { "ok" }.into(),
            r.layer.clone(),
            what,
        ]);
    }
    for l in columns(&rows, &[true]).lines() {
        writeln!(w, "  {l}")?;
    }
    writeln!(w)
}

/// "outer loop 1, holes 2, 3".
fn loop_list(loops: &[usize]) -> String {
    let mut s = format!("outer loop {}", loops[0]);
    match loops.len() {
        1 => {}
        2 => s.push_str(&format!(", hole {}", loops[1])),
        _ => {
            let holes: Vec<String> = loops[1..].iter().map(usize::to_string).collect();
            s.push_str(&format!(", holes {}", holes.join(", ")));
        }
    }
    s
}

fn write_problems(w: &mut dyn Write, d: &Details) -> io::Result<()> {
    writeln!(w, "Problems")?;
    if d.problems.is_empty() {
        writeln!(w, "  (none)")?;
    }
    for p in &d.problems {
        let rows = match (&p.row, p.blocks.as_slice()) {
            (Some(r), _) => format!("row {r}"),
            (None, [r]) => format!("stops row {r}"),
            (None, rs) => format!(
                "stops rows {}",
                rs.iter()
                    .map(usize::to_string)
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        };
        writeln!(
            w,
            "  {rows}, layer {}: {}",
            p.problem.layer(),
            p.problem.describe()
        )?;
        if let LoopProblem::OpenChain {
            gap_at: (a, b),
            gap,
            length,
            ..
        } = &p.problem
        {
            writeln!(
                w,
                "    gap {} mm from ({}, {}) to ({}, {}); the chain is {} mm long; ends this far apart are never joined silently",
                fmt_len(*gap),
                fmt_len(a.x),
                fmt_len(a.y),
                fmt_len(b.x),
                fmt_len(b.y),
                fmt_len(*length)
            )?;
        }
    }
    writeln!(w)
}

fn write_strays(w: &mut dyn Write, d: &Details) -> io::Result<()> {
    writeln!(
        w,
        "Stray open geometry (left out: far from closing, e.g. centre or construction lines)"
    )?;
    if d.strays.is_empty() {
        writeln!(w, "  (none)")?;
    }
    for s in &d.strays {
        let (a, b) = s.ends;
        writeln!(
            w,
            "  layer {}: {} segment{}, {} mm long, from ({}, {}) to ({}, {}), starting with {}",
            s.layer,
            s.segments,
            plural(s.segments),
            fmt_len(s.length),
            fmt_len(a.x),
            fmt_len(a.y),
            fmt_len(b.x),
            fmt_len(b.y),
            s.origin
        )?;
    }
    writeln!(w)
}

/// Lay out rows of cells as columns two spaces apart, each as wide as its widest cell
/// (counted in characters); cells of columns marked in `right` are aligned right, the last
/// column is never padded.
pub fn columns(rows: &[Vec<String>], right: &[bool]) -> String {
    let n = rows.iter().map(Vec::len).max().unwrap_or(0);
    let mut widths = vec![0; n];
    for row in rows {
        for (k, cell) in row.iter().enumerate() {
            widths[k] = widths[k].max(cell.chars().count());
        }
    }
    let mut out = String::new();
    for row in rows {
        let mut line = String::new();
        for (k, cell) in row.iter().enumerate() {
            if k > 0 {
                line.push_str("  ");
            }
            let pad = widths[k] - cell.chars().count();
            let last = k + 1 == row.len();
            if right.get(k).copied().unwrap_or(false) {
                line.extend(std::iter::repeat_n(' ', pad));
                line.push_str(cell);
            } else {
                line.push_str(cell);
                if !last {
                    line.extend(std::iter::repeat_n(' ', pad));
                }
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}

/// `v` with `digits` significant digits, without trailing zeros: 1234.5678 → "1234.568"
/// with 7 digits.
pub fn fmt_sig(v: f64, digits: usize) -> String {
    if v == 0.0 || !v.is_finite() {
        return if v == 0.0 { "0".into() } else { v.to_string() };
    }
    let magnitude = v.abs().log10().floor() as i64;
    let decimals = (digits as i64 - 1 - magnitude).clamp(0, 17) as usize;
    let s = format!("{v:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        &s
    };
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// The release and code-page lines of a DXF file.
fn dxf_facts(f: &crate::import::FileFacts) -> Vec<Vec<String>> {
    vec![
        vec![
            "release".into(),
            match &f.version {
                Some(v) => format!("{v} ($ACADVER)"),
                None => "not stated (no $ACADVER)".into(),
            },
        ],
        vec![
            "code page".into(),
            match &f.code_page {
                Some(c) => format!(
                    "{c} ($DWGCODEPAGE); names that are not UTF-8 read as {}",
                    f.text_encoding
                ),
                None => format!(
                    "not stated; names that are not UTF-8 read as {}",
                    f.text_encoding
                ),
            },
        ],
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_pad_and_align() {
        let rows = vec![
            vec!["loop".to_string(), "layer".into(), "area".into()],
            vec!["1".to_string(), "PROFILE".into(), "12.5".into()],
            vec!["10".to_string(), "Ü".into(), "-3".into()],
        ];
        let text = columns(&rows, &[true, false, true]);
        assert_eq!(
            text,
            "loop  layer    area\n   1  PROFILE  12.5\n  10  Ü          -3\n"
        );
        assert_eq!(columns(&[], &[]), "");
    }

    #[test]
    fn significant_digits() {
        assert_eq!(fmt_sig(1234.5678, 7), "1234.568");
        assert_eq!(fmt_sig(-0.000123456789, 3), "-0.000123");
        assert_eq!(fmt_sig(1200.0, 7), "1200");
        assert_eq!(fmt_sig(123456789.0, 3), "123456789");
        assert_eq!(fmt_sig(0.0, 7), "0");
        assert_eq!(fmt_sig(-1e-30, 2), "0"); // below the 17 decimals shown
    }

    #[test]
    fn loop_lists() {
        assert_eq!(loop_list(&[1]), "outer loop 1");
        assert_eq!(loop_list(&[4, 5]), "outer loop 4, hole 5");
        assert_eq!(loop_list(&[1, 2, 3]), "outer loop 1, holes 2, 3");
    }
}
