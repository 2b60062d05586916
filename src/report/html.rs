//! The HTML report of `measure --report FILE.html`: one self-contained page (inline CSS and
//! script, inline SVG drawings; no network, no external scripts or fonts), so that it works
//! from a `file://` URL and offline.
//!
//! The page holds the run record and the safety caution, the legend of the marks, a summary
//! table (one row per profile: a small thumbnail, file, profile, status, message and key
//! values; sortable by any column, filterable by status and text) and one detail section per
//! profile: its drawing to scale with its marks ([`profile_svg`]) beside all of its values.
//! An error row's detail shows the file's measured profiles with the places of the problems
//! that stopped it circled in red.
//!
//! Each file's part is built on its worker thread ([`file_fragment`]); the page is joined at
//! the end ([`write_page`]). Row and section ids are `p-<file>-<profile>` (the file's
//! 1-based position in the sorted list), so the parts need no global numbering.
//!
//! The script applies `?sort=<column>&dir=asc|desc` (and `status=ok|error`, `q=<text>`) from
//! the URL with the same functions the controls use, which is how the browser test checks
//! sorting. This module does no I/O beyond the writer it is given.

use std::fmt::Write as _;
use std::io;

use super::drawing::{profile_svg, DrawStyle, Mark};
use super::{header, numeric_values, CsvFormat, Row, RunRecord};
use crate::analyze::{MeasuredDrawing, ProblemPlace};
use crate::check::Comparison;
use crate::geom::{BBox, Point, Profile, Segment};

/// One file's part of the report: its summary-table rows and its detail sections.
#[derive(Debug, Clone, Default)]
pub struct Fragment {
    pub rows: String,
    pub details: String,
}

/// Text with HTML's special characters escaped, for element content and quoted attribute
/// values alike.
pub fn escape_html(text: &str) -> String {
    let mut s = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => s.push_str("&amp;"),
            '<' => s.push_str("&lt;"),
            '>' => s.push_str("&gt;"),
            '"' => s.push_str("&quot;"),
            '\'' => s.push_str("&#39;"),
            c => s.push(c),
        }
    }
    s
}

/// The stems of the summary table's value columns: the core ones, then one per tier present.
const KEY_STEMS: &[&str] = &[
    "area",
    "mass_kg_per_m",
    "ixx",
    "iyy",
    "plastic_x",
    "thinnest_wall",
    "j",
];

/// Number of leading text columns in [`header`] (file, profile, status, message, layer,
/// drawing_units).
const N_TEXT: usize = 6;

/// The header positions of the summary's value columns present under `fmt`: a column
/// matches a stem when its name is the stem, or the stem, `_`, the unit and a power.
fn key_columns(head: &[String], fmt: &CsvFormat) -> Vec<usize> {
    let mut out = Vec::new();
    for stem in KEY_STEMS {
        let found = head.iter().position(|name| {
            name == stem
                || name
                    .strip_prefix(stem)
                    .and_then(|r| r.strip_prefix('_'))
                    .and_then(|r| r.strip_prefix(fmt.unit.name))
                    .is_some_and(|p| p.chars().all(|c| c.is_ascii_digit()))
        });
        if let Some(i) = found {
            if i >= N_TEXT {
                out.push(i);
            }
        }
    }
    out
}

/// A value for reading: six significant digits, exponent form outside 1e-4 … 1e12; empty for
/// NaN and infinity.
fn show(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    if v == 0.0 {
        return "0".into();
    }
    let mag = v.abs().log10().floor();
    if !(-4.0..12.0).contains(&mag) {
        return format!("{v:.5e}");
    }
    let decimals = (5.0 - mag).max(0.0) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A value as the sort key of its cell: the shortest text that reads back to it; empty when
/// not finite (sorted last).
fn sort_key(v: f64) -> String {
    if v.is_finite() {
        format!("{v}")
    } else {
        String::new()
    }
}

/// One file's rows and details. `rows` are the file's rows; `geometry`, when the file was
/// measured with geometry, holds the same rows' outcomes, profiles and problem boxes (same
/// index). `file_no` is the file's 1-based position in the run.
///
/// `checks` is given for the report of `sectio check`: for each row (same index), the
/// comparisons of the catalog rows matched to its profile. The summary row then has a
/// catalog column (`pass n`, `fail k of n`, or empty when no catalog row names the profile)
/// and the detail lists every comparison.
pub fn file_fragment(
    file_no: usize,
    rows: &[Row],
    geometry: Option<&MeasuredDrawing>,
    fmt: &CsvFormat,
    checks: Option<&[Vec<&Comparison>]>,
) -> Fragment {
    let head = header(fmt.unit, fmt.tiers);
    let keys = key_columns(&head, fmt);
    let mut out = Fragment::default();
    // Every measured profile of the file, the background of an error row's drawing.
    let all_profiles: Vec<&Profile> = geometry
        .map(|g| g.profiles.iter().flatten().collect())
        .unwrap_or_default();
    for (i, row) in rows.iter().enumerate() {
        let o = &row.outcome;
        let id = format!("p-{file_no}-{}", o.profile);
        let ok = o.result.is_ok();
        let status = if ok { "ok" } else { "error" };
        let message = match &o.result {
            Ok(_) => o.message.clone(),
            Err(e) => e.clone(),
        };
        let values = numeric_values(o, fmt.unit, fmt.density_kg_m3, fmt.tiers);
        let profiles: Vec<&Profile> = geometry
            .and_then(|g| g.profiles.get(i))
            .map(|ps| ps.iter().collect())
            .unwrap_or_default();
        let problems: &[ProblemPlace] = geometry
            .and_then(|g| g.problems.get(i))
            .map(Vec::as_slice)
            .unwrap_or(&[]);

        // The summary row.
        let thumb = if profiles.is_empty() {
            String::new()
        } else {
            outline_svg(&profiles, &[], 40.0, 24, "thumb")
        };
        let file = escape_html(&row.file);
        // The catalog's verdict on the profile: its tag for the status filter, and its cell.
        let compared: Option<&[&Comparison]> =
            checks.map(|c| c.get(i).map_or(&[][..], Vec::as_slice));
        let (tag, verdict_cell) = match compared {
            None => (String::new(), String::new()),
            Some([]) => (
                " unlisted".to_string(),
                "<td data-v=\"\" class=\"unlisted\">not listed</td>".to_string(),
            ),
            Some(cs) => {
                let failed = cs.iter().filter(|c| !c.pass).count();
                if failed == 0 {
                    (
                        " pass".to_string(),
                        format!("<td data-v=\"0\" class=\"ok\">pass {}</td>", cs.len()),
                    )
                } else {
                    (
                        " fail".to_string(),
                        format!(
                            "<td data-v=\"{failed}\" class=\"error\">fail {failed} of {}</td>",
                            cs.len()
                        ),
                    )
                }
            }
        };
        let _ = write!(
            out.rows,
            "<tr id=\"r-{id}\" data-status=\"{status}{tag}\"><td><a href=\"#{id}\" aria-label=\"details of profile {} of {file}\">{thumb}</a></td><td>{file}</td><td data-v=\"{}\">{}</td><td class=\"{status}\">{status}</td>{verdict_cell}<td class=\"msg\">{}</td>",
            o.profile,
            o.profile,
            o.profile,
            escape_html(&message),
        );
        for &k in &keys {
            let v = values
                .as_ref()
                .and_then(|vs| vs.get(k - N_TEXT).copied())
                .unwrap_or(f64::NAN);
            let _ = write!(
                out.rows,
                "<td class=\"num\" data-v=\"{}\">{}</td>",
                sort_key(v),
                show(v)
            );
        }
        out.rows.push_str("</tr>\n");

        // The detail section.
        let _ = writeln!(
            out.details,
            "<section class=\"detail\" id=\"{id}\"><h3>{file}, profile {} <span class=\"{status}\">{status}</span></h3>",
            o.profile
        );
        if !message.is_empty() {
            let _ = writeln!(
                out.details,
                "<p class=\"msg\">{}</p>",
                escape_html(&message)
            );
        }
        if let Some(cs) = compared {
            out.details.push_str(&comparison_table(cs));
        }
        out.details
            .push_str("<div class=\"pair\"><div class=\"fig\">");
        match (&o.result, geometry) {
            (Ok(props), Some(g)) if !profiles.is_empty() => {
                let style = DrawStyle {
                    digits: 4,
                    ..DrawStyle::default()
                };
                let svg = profile_svg(&profiles, &g.curves, props, &style);
                // Inline SVG in HTML takes no XML declaration.
                let svg = match svg.find("<svg") {
                    Some(at) => &svg[at..],
                    None => &svg[..],
                };
                out.details.push_str(svg);
            }
            (Err(_), Some(_)) if !problems.is_empty() => {
                let mut shown = all_profiles.clone();
                for p in &profiles {
                    if !shown.iter().any(|q| std::ptr::eq(*q, *p)) {
                        shown.push(p);
                    }
                }
                out.details
                    .push_str(&outline_svg(&shown, problems, 480.0, 400, "problem"));
                out.details.push_str(
                    "<p class=\"note\">The file's measured profiles (not to scale); a red circle marks each problem's place, a dashed red box the chain or loop it concerns.</p>",
                );
            }
            _ => out.details.push_str("<p class=\"note\">No drawing.</p>"),
        }
        out.details.push_str("</div>");
        if let Some(vs) = &values {
            out.details.push_str("<table class=\"values\"><tbody>");
            let text = [
                ("layer", o.layer.as_str()),
                ("drawing_units", o.drawing_units.as_str()),
            ];
            for (name, value) in text {
                let _ = write!(
                    out.details,
                    "<tr><th>{name}</th><td>{}</td></tr>",
                    escape_html(value)
                );
            }
            for (name, v) in head.iter().skip(N_TEXT).zip(vs) {
                let _ = write!(
                    out.details,
                    "<tr><th>{}</th><td class=\"num\">{}</td></tr>",
                    escape_html(name),
                    show(*v)
                );
            }
            out.details.push_str("</tbody></table>");
        }
        out.details
            .push_str("</div><p><a href=\"#summary\">Back to the table</a></p></section>\n");
    }
    out
}

/// The catalog's stated values of one profile beside the measured ones: a table with a row
/// per comparison, failures marked; a note when no catalog row names the profile.
fn comparison_table(cs: &[&Comparison]) -> String {
    if cs.is_empty() {
        return "<p class=\"note\">No catalog row names this profile.</p>".into();
    }
    let mut t = String::from(
        "<table class=\"compare\"><caption>Catalog</caption><thead><tr><th>line</th><th>part</th><th>property</th><th>stated</th><th>measured</th><th>difference</th><th>allowed</th><th>status</th><th>reason</th></tr></thead><tbody>",
    );
    for c in cs {
        let opt = |v: Option<f64>| v.map_or_else(String::new, show);
        let rel = c.relative_note();
        let (class, status) = if c.pass {
            ("ok", "pass")
        } else {
            ("error", "fail")
        };
        let _ = write!(
            t,
            "<tr class=\"{class}-row\"><td class=\"num\">{}</td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}{rel}</td><td class=\"num\">{}</td><td class=\"{class}\">{status}</td><td>{}</td></tr>",
            c.line,
            escape_html(&c.label),
            escape_html(&c.property),
            opt(c.stated),
            opt(c.measured),
            opt(c.difference()),
            opt(c.allowed),
            escape_html(&c.reason)
        );
    }
    t.push_str("</tbody></table>");
    t
}

/// The opening of a check report: the verdict, the totals, the tolerance rule and every
/// failed value, each linked to its profile's detail when the row was matched to one
/// (`link(c)` gives the detail's id).
pub fn check_intro(
    summary: &crate::check::Summary,
    results: &[Comparison],
    tolerance: &str,
    link: &dyn Fn(&Comparison) -> Option<String>,
) -> String {
    let s = summary;
    let verdict = if s.failed == 0 && s.missing_drawings == 0 {
        "<p class=\"verdict ok\">All stated values agree with the drawings.</p>"
    } else {
        "<p class=\"verdict error\">Some stated values disagree with the drawings.</p>"
    };
    let mut h = String::from("<h2>Verdict</h2>\n");
    h.push_str(verdict);
    let _ = write!(
        h,
        "<table class=\"totals\"><thead><tr><th>profiles</th><th>values compared</th><th>passed</th><th>failed</th><th>missing drawings</th></tr></thead><tbody><tr><td>{}</td><td>{}</td><td>{}</td><td class=\"{}\">{}</td><td class=\"{}\">{}</td></tr></tbody></table>\n<p class=\"note\">{}</p>\n",
        s.profiles,
        s.values,
        s.passed,
        if s.failed > 0 { "error" } else { "ok" },
        s.failed,
        if s.missing_drawings > 0 { "error" } else { "ok" },
        s.missing_drawings,
        escape_html(tolerance)
    );
    let failures: Vec<&Comparison> = results.iter().filter(|c| !c.pass).collect();
    if !failures.is_empty() {
        h.push_str("<h3>Failed values</h3>\n<table id=\"failures\" class=\"compare\"><thead><tr><th>line</th><th>part</th><th>drawing</th><th>profile</th><th>property</th><th>stated</th><th>measured</th><th>difference</th><th>reason</th></tr></thead><tbody>\n");
        for c in failures {
            let opt = |v: Option<f64>| v.map_or_else(String::new, show);
            let rel = c.relative_note();
            let drawing = escape_html(&c.drawing);
            let drawing = match link(c) {
                Some(id) => format!("<a href=\"#{id}\">{drawing}</a>"),
                None => drawing,
            };
            let _ = writeln!(
                h,
                "<tr><td class=\"num\">{}</td><td>{}</td><td>{drawing}</td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}{rel}</td><td>{}</td></tr>",
                c.line,
                escape_html(&c.label),
                escape_html(&c.profile),
                escape_html(&c.property),
                opt(c.stated),
                opt(c.measured),
                opt(c.difference()),
                escape_html(&c.reason)
            );
        }
        h.push_str("</tbody></table>\n");
    }
    h
}

/// A small SVG of the profiles' material (outer loops and holes as polygons through their
/// vertices and points on arcs every 15° at most, at most `max_points` per loop), fitted into a square of
/// `size` pixels, with a red circle around each problem's spot and a dashed red box around
/// its chain or loop.
fn outline_svg(
    profiles: &[&Profile],
    marks: &[ProblemPlace],
    size: f64,
    max_points: usize,
    class: &str,
) -> String {
    let mut extent = profiles.iter().fold(BBox::EMPTY, |b, p| b.union(&p.bbox));
    for m in marks {
        extent = extent.union(&m.bbox).union(&m.spot);
    }
    if extent.is_empty() || !extent.min.is_finite() || !extent.max.is_finite() {
        return String::new();
    }
    // Room for the problem circles at the edge.
    let pad = if marks.is_empty() { 2.0 } else { 16.0 };
    let span = extent.width().max(extent.height()).max(1e-9);
    let k = (size - 2.0 * pad) / span;
    // Centred in the square; y flipped.
    let ox = pad + (size - 2.0 * pad - k * extent.width()) / 2.0;
    let oy = pad + (size - 2.0 * pad - k * extent.height()) / 2.0;
    let map =
        |p: Point| -> (f64, f64) { (ox + k * (p.x - extent.min.x), oy + k * (extent.max.y - p.y)) };
    // One decimal in a large drawing, whole pixels in a thumbnail.
    let decimals = usize::from(size > 100.0);
    let mut d = String::new();
    for p in profiles {
        for lp in std::iter::once(&p.outer).chain(p.holes.iter()) {
            let mut pts: Vec<Point> = Vec::with_capacity(lp.segments.len());
            for s in &lp.segments {
                pts.push(s.start());
                if let Segment::Arc(a) = s {
                    // A point every 15° at most (a full circle: 24 sides).
                    let n = (a.sweep.abs() / (std::f64::consts::PI / 12.0))
                        .ceil()
                        .clamp(1.0, 24.0) as usize;
                    for i in 1..n {
                        pts.push(a.point_at(i as f64 / n as f64));
                    }
                }
            }
            let step = pts.len().div_ceil(max_points.max(3)).max(1);
            let mut last = String::new();
            let mut n = 0;
            for q in pts.iter().step_by(step) {
                let (x, y) = map(*q);
                let xy = format!("{x:.decimals$} {y:.decimals$}");
                if xy != last {
                    d.push(if n == 0 { 'M' } else { 'L' });
                    d.push_str(&xy);
                    n += 1;
                    last = xy;
                }
            }
            if n > 0 {
                d.push('Z');
            }
        }
    }
    let mut svg = format!(
        "<svg class=\"{class}\" xmlns=\"http://www.w3.org/2000/svg\" width=\"{size}\" height=\"{size}\" viewBox=\"0 0 {size} {size}\"><path d=\"{d}\" fill=\"{}\" stroke=\"{}\" stroke-width=\"0.5\" fill-rule=\"evenodd\"/>",
        super::drawing::MATERIAL,
        super::drawing::OUTLINE
    );
    for m in marks {
        let (x0, y0) = map(Point::new(m.bbox.min.x, m.bbox.max.y));
        let (x1, y1) = map(Point::new(m.bbox.max.x, m.bbox.min.y));
        let _ = write!(
            svg,
            "<rect class=\"problem-box\" x=\"{:.1}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"none\" stroke=\"#d00000\" stroke-width=\"1\" stroke-dasharray=\"4 3\"/>",
            x0 - 2.0,
            y0 - 2.0,
            x1 - x0 + 4.0,
            y1 - y0 + 4.0
        );
        let s = m.spot;
        let c = Point::new((s.min.x + s.max.x) / 2.0, (s.min.y + s.max.y) / 2.0);
        let (x, y) = map(c);
        let r = (k * s.width().max(s.height()) / 2.0 + 10.0).min(size / 2.0);
        let _ = write!(
            svg,
            "<circle class=\"problem-mark\" cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"{r:.1}\" fill=\"none\" stroke=\"#d00000\" stroke-width=\"3\"/>"
        );
    }
    svg.push_str("</svg>");
    svg
}

const STYLE: &str = r#"
body{font-family:system-ui,sans-serif;margin:1em 2em;color:#1a1a1a;background:#fff}
h1{font-size:1.5em;margin:.2em 0}
.caution{border-left:4px solid #a51c30;padding:.3em .8em;background:#fbeff1}
table.run td,table.run th{text-align:left;padding:0 .8em 0 0;vertical-align:top;font-size:.9em}
ul.legend{list-style:none;padding:0;columns:2;font-size:.9em}
ul.legend li{margin:.15em 0}
.swatch{display:inline-block;width:1.6em;height:.7em;margin-right:.5em;border:1px solid #1a1a1a;vertical-align:middle}
.controls{position:sticky;top:0;background:#fff;padding:.5em 0;border-bottom:1px solid #ccc;z-index:1}
.controls input{width:20em}
table#summary{border-collapse:collapse;font-size:.85em}
#summary th,#summary td{border-bottom:1px solid #ddd;padding:2px 6px;text-align:left}
#summary th{vertical-align:bottom;position:sticky;top:2.6em;background:#fff}
#summary th button{font:inherit;font-weight:bold;background:none;border:none;cursor:pointer;padding:0}
#summary th[aria-sort=ascending] button::after{content:" \25B2"}
#summary th[aria-sort=descending] button::after{content:" \25BC"}
#summary td.num,.values td.num{text-align:right;font-variant-numeric:tabular-nums}
#summary td.msg{max-width:14em;overflow:hidden;text-overflow:ellipsis;white-space:nowrap}
#summary svg.thumb{display:block}
.ok{color:#006b3c}
.error{color:#b00020;font-weight:bold}
section.detail{content-visibility:auto;contain-intrinsic-size:auto 600px;border-top:2px solid #5b6e82;margin-top:1.5em}
.pair{display:flex;flex-wrap:wrap;gap:1.5em;align-items:flex-start}
.fig svg{max-width:100%;height:auto;border:1px solid #ddd}
.fig{max-width:60em}
table.values{border-collapse:collapse;font-size:.85em}
table.values th{text-align:left;font-weight:normal;padding:0 1em 0 0;font-family:ui-monospace,monospace}
p.note{font-size:.85em;color:#555}
.unlisted{color:#555}
p.verdict{font-size:1.1em}
table.totals,table.compare{border-collapse:collapse;font-size:.85em;margin:.4em 0}
table.totals td,table.totals th,table.compare td,table.compare th{border-bottom:1px solid #ddd;padding:2px 6px;text-align:left}
table.totals td,table.compare td.num{text-align:right;font-variant-numeric:tabular-nums}
table.compare caption{text-align:left;font-weight:bold}
tr.error-row{background:#fbeff1}
"#;

const SCRIPT: &str = r#"
(function () {
  "use strict";
  var table = document.getElementById("summary");
  var tbody = table.tBodies[0];
  var heads = table.tHead.rows[0].cells;
  var rows = Array.prototype.slice.call(tbody.rows);
  var texts = rows.map(function (r) { return r.textContent.toLowerCase(); });
  rows.forEach(function (r, k) { r.setAttribute("data-k", k); });
  var filterBox = document.getElementById("filter");
  var statusBox = document.getElementById("status");
  var count = document.getElementById("count");
  function cellKey(row, i, numeric) {
    var c = row.cells[i];
    if (numeric) {
      var v = c.getAttribute("data-v");
      return v === null || v === "" ? NaN : parseFloat(v);
    }
    return c.textContent;
  }
  function sortBy(i, dir) {
    var numeric = heads[i].getAttribute("data-type") === "num";
    var sign = dir === "desc" ? -1 : 1;
    var keyed = rows.map(function (r) { return [cellKey(r, i, numeric), +r.getAttribute("data-k"), r]; });
    keyed.sort(function (a, b) {
      var x = a[0], y = b[0], c;
      if (numeric) {
        var xn = isNaN(x), yn = isNaN(y);
        if (xn || yn) { return (xn === yn ? 0 : (xn ? 1 : -1)) || a[1] - b[1]; }
        c = x < y ? -1 : (x > y ? 1 : 0);
      } else {
        c = x.localeCompare(y, undefined, { numeric: true });
      }
      return sign * c || a[1] - b[1];
    });
    var frag = document.createDocumentFragment();
    keyed.forEach(function (e) { frag.appendChild(e[2]); });
    tbody.appendChild(frag);
    for (var h = 0; h < heads.length; h++) { heads[h].removeAttribute("aria-sort"); }
    heads[i].setAttribute("aria-sort", dir === "desc" ? "descending" : "ascending");
  }
  function applyFilter() {
    var q = filterBox.value.toLowerCase();
    var s = statusBox.value;
    var shown = 0;
    rows.forEach(function (r, k) {
      var ok = (s === "" || (" " + r.getAttribute("data-status") + " ").indexOf(" " + s + " ") >= 0) && (q === "" || texts[k].indexOf(q) >= 0);
      r.hidden = !ok;
      if (ok) { shown++; }
    });
    count.textContent = shown + " of " + rows.length + " profiles shown";
  }
  function columnIndex(key) {
    for (var h = 0; h < heads.length; h++) {
      if (heads[h].getAttribute("data-key") === key) { return h; }
    }
    return -1;
  }
  Array.prototype.forEach.call(heads, function (th, i) {
    var b = th.querySelector("button");
    if (b) {
      b.addEventListener("click", function () {
        sortBy(i, th.getAttribute("aria-sort") === "ascending" ? "desc" : "asc");
      });
    }
  });
  filterBox.addEventListener("input", applyFilter);
  statusBox.addEventListener("change", applyFilter);
  var params = new URLSearchParams(window.location.search);
  if (params.has("status")) { statusBox.value = params.get("status"); }
  if (params.has("q")) { filterBox.value = params.get("q"); }
  var sortKey = params.get("sort");
  if (sortKey !== null) {
    var i = columnIndex(sortKey);
    if (i >= 0) { sortBy(i, params.get("dir") === "desc" ? "desc" : "asc"); }
  }
  applyFilter();
})();
"#;

/// Write the whole page: the run record, the legend, the summary table of every file's rows
/// and every detail section, in the order of `fragments`. `check` is the opening of a check
/// report ([`check_intro`]); with it the page is titled as a catalog check and its table has
/// the catalog column the fragments were built with.
pub fn write_page(
    w: &mut dyn io::Write,
    run: &RunRecord,
    fmt: &CsvFormat,
    fragments: &[&Fragment],
    check: Option<&str>,
) -> io::Result<()> {
    let head = header(fmt.unit, fmt.tiers);
    let keys = key_columns(&head, fmt);
    let title = if check.is_some() {
        "Catalog check"
    } else {
        "Section properties"
    };
    let mut top = String::new();
    let _ = write!(top, "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>{title}: sectio report</title>\n<style>");
    top.push_str(STYLE);
    let _ = writeln!(top, "</style></head><body>\n<h1>{title}</h1>");
    let mut caution = "";
    let mut inputs: Vec<&str> = Vec::new();
    top.push_str("<table class=\"run\"><tbody>\n");
    for (k, v) in &run.entries {
        if k == "caution" {
            caution = v;
            continue;
        }
        if k == "input" {
            inputs.push(v);
            continue;
        }
        let _ = writeln!(
            top,
            "<tr><th>{}</th><td>{}</td></tr>",
            escape_html(k),
            escape_html(v)
        );
    }
    top.push_str("</tbody></table>\n");
    if !inputs.is_empty() {
        let _ = write!(
            top,
            "<details><summary>Input files ({})</summary><ul>",
            inputs.len()
        );
        for i in inputs {
            let _ = write!(top, "<li>{}</li>", escape_html(i));
        }
        top.push_str("</ul></details>\n");
    }
    if !caution.is_empty() {
        let _ = writeln!(top, "<p class=\"caution\">{}</p>", escape_html(caution));
    }
    if let Some(intro) = check {
        top.push_str(intro);
    }
    top.push_str("<h2>Marks on the drawings</h2>\n<ul class=\"legend\">\n<li><span class=\"swatch\" style=\"background:#5b6e82\"></span>Material (holes left open)</li>\n");
    for m in Mark::ALL {
        let _ = writeln!(
            top,
            "<li data-mark=\"{}\"><span class=\"swatch\" style=\"background:{}\"></span>{}</li>",
            m.name(),
            m.colour(),
            escape_html(m.legend_text())
        );
    }
    top.push_str("<li><span class=\"swatch\" style=\"background:#fff;border-color:#d00000;border-width:3px\"></span>Where a problem stopped a profile (error rows)</li>\n</ul>\n");
    top.push_str("<p class=\"note\">Detail drawings are to scale, with the scale and a scale bar in their legend; a mark appears only when its tier was computed (--plastic, --extrusion, --torsion or --all).</p>\n");
    let catalog_options = if check.is_some() {
        "<option value=\"fail\">catalog: fail</option><option value=\"pass\">catalog: pass</option><option value=\"unlisted\">catalog: not listed</option>"
    } else {
        ""
    };
    let _ = write!(top, "<h2>Profiles</h2>\n<div class=\"controls\"><label>Filter <input id=\"filter\" type=\"search\" placeholder=\"text in any column\"></label> <label>Status <select id=\"status\"><option value=\"\">all</option><option value=\"ok\">ok</option><option value=\"error\">error</option>{catalog_options}</select></label> <span id=\"count\"></span></div>\n");
    let catalog_head = if check.is_some() {
        "<th data-key=\"catalog\" data-type=\"num\"><button type=\"button\">catalog</button></th>"
    } else {
        ""
    };
    let _ = write!(top, "<table id=\"summary\"><thead><tr><th>drawing</th><th data-key=\"file\"><button type=\"button\">file</button></th><th data-key=\"profile\" data-type=\"num\"><button type=\"button\">profile</button></th><th data-key=\"status\"><button type=\"button\">status</button></th>{catalog_head}<th data-key=\"message\"><button type=\"button\">message</button></th>");
    for &k in &keys {
        let name = escape_html(&head[k]);
        // Long names may break after an underscore.
        let shown = name.replace('_', "_<wbr>");
        let _ = write!(
            top,
            "<th data-key=\"{name}\" data-type=\"num\"><button type=\"button\">{shown}</button></th>"
        );
    }
    top.push_str("</tr></thead><tbody>\n");
    w.write_all(top.as_bytes())?;
    for f in fragments {
        w.write_all(f.rows.as_bytes())?;
    }
    w.write_all(b"</tbody></table>\n<h2>Details</h2>\n")?;
    for f in fragments {
        w.write_all(f.details.as_bytes())?;
    }
    w.write_all(b"<script>")?;
    w.write_all(SCRIPT.as_bytes())?;
    w.write_all(b"</script>\n</body></html>\n")?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn html_special_characters_are_escaped() {
        assert_eq!(
            escape_html(r#"<a href="x">Tom & 'Jerry'</a>"#),
            "&lt;a href=&quot;x&quot;&gt;Tom &amp; &#39;Jerry&#39;&lt;/a&gt;"
        );
        assert_eq!(escape_html("Größe 40×40.dxf"), "Größe 40×40.dxf");
        assert_eq!(escape_html(""), "");
    }

    #[test]
    fn values_are_shown_with_six_significant_digits() {
        assert_eq!(show(1234.56789), "1234.57");
        assert_eq!(show(0.000123456), "0.000123456");
        assert_eq!(show(0.0), "0");
        assert_eq!(show(-2.5), "-2.5");
        assert_eq!(show(1.0e13), "1.00000e13");
        assert_eq!(show(f64::NAN), "");
        assert_eq!(sort_key(f64::INFINITY), "");
        assert_eq!(sort_key(2.5), "2.5");
    }
}
