//! Command-line flags (raw, validated by clap), and their help text.

use std::path::PathBuf;

use clap::{Parser, Subcommand, ValueEnum};

const ABOUT: &str = "Cross-section properties of extruded profiles, read from the closed outlines of DXF and SVG drawings: one CSV row per profile.";

const CONVENTIONS: &str = "\
Conventions: coordinates are the drawing's own, y up. Second moments (ixx, iyy) are about axes
through the centroid parallel to x and y; ixy is the product of area, the integral of x*y dA
with x, y from the centroid. theta_deg is the angle from +x to the principal axis about which
the second moment is i1 (the larger), counter-clockwise positive, in (-90, 90]. With
--torsion: j is the St Venant torsion constant, (xs, ys) the shear centre (Trefftz) in drawing
coordinates, iw the warping constant about it, torsion_accuracy the estimated relative error.

Exit status: 0 every profile measured; 1 output written but some inputs or profiles failed
(see rows with status=error); 2 usage or I/O error before any output.

Safety: the results are geometric properties of the outline as drawn (torsion and warping
constants: elastic section constants, to the stated accuracy). They are not a strength or
buckling check. Member design follows the applicable code and is signed off by a
qualified engineer.";

#[derive(Debug, Parser)]
#[command(name = "sectio", version, about = ABOUT, after_help = CONVENTIONS)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Measure every closed profile in DXF and SVG files or folders (searched recursively) and write one CSV row per profile.
    #[command(after_help = CONVENTIONS)]
    Measure(MeasureArgs),
    /// Check a catalog's stated values (CSV or .xlsx: a drawing column, optionally a profile column, and columns named as measure names them, e.g. area_mm2, ixx_cm4) against its drawings, and write one row per value: stated, measured, difference, pass or fail.
    #[command(after_help = CHECK_HELP)]
    Check(CheckArgs),
    /// Explain what sectio makes of one DXF or SVG file: layers, skipped entities, the join gap, every loop and profile, and every problem, as plain text.
    #[command(after_help = EXPLAIN_HELP)]
    Explain(ExplainArgs),
    /// Draw every profile of one DXF or SVG file as an SVG sheet to scale, with its centroid, principal axes and (when computed) shear centre, plastic neutral axes, circumscribing circle and thinnest wall, and a legend: for embedding in documents.
    #[command(after_help = DRAW_HELP)]
    Draw(DrawArgs),
}

const DRAW_HELP: &str = "\
The sheet is drawn to scale (width and height in millimetres; by default the largest of 1:1,
1:2, 2:1, 1:5, 5:1, ... at which the drawing fits 170 x 180 mm), y up, each profile at its
place in the drawing and labelled with its number as measure numbers them. Material is
filled blue-grey, holes are left open; the legend below the drawing explains every mark drawn
and carries a scale bar. --plastic, --extrusion, --torsion (or --all) compute the marks of
those tiers: plastic neutral axes; circumscribing circle and thinnest wall; shear centre.

Exit status: 0 every profile drawn; 1 some profile could not be measured (the others are
drawn and the failures listed on standard error; nothing is written when none could be); 2
usage or I/O error.

Safety: the drawing shows geometric properties of the outline as drawn. They are not a
strength or buckling check. Member design follows the applicable code and is signed off by a
qualified engineer.";

const EXPLAIN_HELP: &str = "\
Run it on a file whose rows say status=error. The report numbers profiles as measure does
(without --merge) and gives lengths in millimetres.

Exit status: 0 the file was read and every profile would be measured; 1 the file could not be
read or has problems (the rows of measure would say error); 2 usage or I/O error (bad option,
file missing or unreadable).

Safety: the results are geometric properties of the outline as drawn. They are not a strength
check. Member design follows the applicable code and is signed off by a qualified engineer.";

const CHECK_HELP: &str = "\
The catalog: a header row, one row per profile. Column drawing names the drawing file
(relative to the catalog); column profile (optional) says which profile in it: its number as
measure numbers them, or its layer; a drawing holding one profile needs none. Value columns are
named as measure names them, the unit taken from the name (area_cm2, ixx_mm4, j_in4,
mass_kg_per_m); --map renames other headers. Delimited text: delimiter and decimal comma are
found from the text unless given; UTF-8 with or without BOM. .xlsx: the first sheet.

A value passes when |measured - stated| <= max(tolerance x |stated|, floor x the section's own
magnitude of that dimension: A for areas, ip for second moments, A x r^(k-2) with r = sqrt(ip/A)
for a length to the power k). Defaults: tolerance 1%, floor 0.1%.

Exit status: 0 every value passes; 1 some value fails or a drawing is missing or unreadable;
2 the catalog cannot be used (unreadable, no drawing column, no value column) or a usage error.

Safety: the results are geometric properties of the outline as drawn. They are not a strength
or buckling check. Member design follows the applicable code and is signed off by a
qualified engineer.";

/// The density for `mass_kg_per_m`: by number or by material (`measure` and `check`).
#[derive(Debug, Clone, Copy, clap::Args)]
pub struct MassArgs {
    /// Density in kg/m³ for mass_kg_per_m. Default: aluminium, 2700 kg/m³ (EN 1999-1-1); steel is 7850. Cannot be given with --material.
    #[arg(long, default_value_t = 2700.0, value_name = "KG_M3")]
    pub density: f64,

    /// Named material for mass_kg_per_m, case-insensitive: aluminium (2700 kg/m³, EN 1999-1-1), steel (7850, EN 1993-1-1 tables basis), stainless (7900, EN 10088-1 austenitic grades), pvc (1400, common practice for rigid PVC). Cannot be given with --density.
    #[arg(
        long,
        value_enum,
        ignore_case = true,
        conflicts_with = "density",
        value_name = "NAME"
    )]
    pub material: Option<MaterialArg>,
}

impl MassArgs {
    /// The density in kg/m³; a non-positive or non-finite `--density` is a usage error.
    pub fn density_kg_m3(&self) -> Result<f64, String> {
        if !(self.density.is_finite() && self.density > 0.0) {
            return Err("--density must be a positive number of kg/m³".into());
        }
        Ok(self.material.map_or(self.density, |m| m.density_kg_m3()))
    }

    /// The density as the run record states it, e.g. `7850 kg/m³ (steel)`.
    pub fn describe(&self, density: f64) -> String {
        let material = self
            .material
            .and_then(|m| m.to_possible_value())
            .map(|v| format!(" ({})", v.get_name()));
        format!("{density} kg/m³{}", material.unwrap_or_default())
    }
}

/// A tolerance fraction: `1%`, `0.5 %`, `0.01`.
fn fraction(text: &str) -> Result<f64, String> {
    crate::check::parse_fraction(text)
}

/// `STEM=FRACTION`, e.g. `ixx=0.5%`.
fn property_fraction(text: &str) -> Result<(String, f64), String> {
    let (stem, f) = text
        .split_once('=')
        .ok_or_else(|| format!("expected PROPERTY=FRACTION such as ixx=0.5%, found {text:?}"))?;
    let stem = crate::check::property_stem(stem).ok_or_else(|| {
        format!(
            "{stem:?} is not a property of measure (use the column's name without its unit, e.g. ixx, area, j, mass)"
        )
    })?;
    Ok((stem.to_string(), crate::check::parse_fraction(f)?))
}

#[derive(Debug, clap::Args)]
pub struct CheckArgs {
    /// The catalog: delimited text (CSV, ';' or tab separated) or an .xlsx workbook.
    #[arg(value_name = "CATALOG")]
    pub catalog: PathBuf,

    /// Write the results to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,

    /// Results format: csv, jsonl (one JSON object per line) or xlsx (a workbook: results with failures highlighted, a summary sheet and a run sheet; needs -o). Default: from the extension of -o, CSV on standard output.
    #[arg(long, value_enum, value_name = "FORMAT")]
    pub format: Option<FormatArg>,

    /// Also write a Markdown summary (totals, tolerances, every failure) to FILE, for a merge request or a report.
    #[arg(long, value_name = "FILE")]
    pub summary: Option<PathBuf>,

    /// Also write an HTML report to FILE (one self-contained page, works offline): the verdict, the totals and every failed value, then every profile of the drawings named, with a catalog column (pass, fail, not listed) to sort and filter by, and for each profile its drawing to scale beside its measured values and the catalog's stated ones.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,

    /// TOML file mapping the catalog's headers to measure's names ([columns] "Ix [cm4]" = "ixx_cm4", "Drawing file" = "drawing") and setting tolerances ([tolerances] default = "1%", ixx = "0.5%", floor = "0.1%").
    #[arg(long, value_name = "FILE")]
    pub map: Option<PathBuf>,

    /// Relative tolerance for every property (e.g. 1% or 0.01), over the mapping file's. Default 1%.
    #[arg(long, value_name = "FRACTION", value_parser = fraction)]
    pub tolerance: Option<f64>,

    /// Relative tolerance for one property, by the column's name without its unit (ixx=0.5%); repeatable.
    #[arg(long, value_name = "PROPERTY=FRACTION", value_parser = property_fraction)]
    pub tolerance_for: Vec<(String, f64)>,

    /// Absolute floor, as a fraction of the section's own magnitude of the value's dimension (for values near zero, such as ixy of a symmetric section). Default 0.1%.
    #[arg(long, value_name = "FRACTION", value_parser = fraction)]
    pub floor: Option<f64>,

    /// Delimiter of a text catalog (one character, e.g. ';'); found from the header line when not given.
    #[arg(long, value_name = "CHAR")]
    pub catalog_delimiter: Option<char>,

    /// Decimal separator of a text catalog; found from its numbers when not given.
    #[arg(long, value_name = "SEP", value_parser = ["comma", "point"])]
    pub catalog_decimal: Option<String>,

    #[command(flatten)]
    pub read: ReadArgs,

    #[command(flatten)]
    pub limits: LimitArgs,

    /// Measure all profiles of each drawing as one section (built-up sections).
    #[arg(long)]
    pub merge: bool,

    #[command(flatten)]
    pub mass: MassArgs,

    /// Relative accuracy of the torsion solver, when the catalog states j, xs, ys or iw.
    #[arg(long, default_value_t = 1e-3, value_name = "REL", value_parser = accuracy)]
    pub torsion_accuracy: f64,

    /// Number of drawings measured in parallel (default: one per core).
    #[arg(short = 'j', long, value_name = "N")]
    pub jobs: Option<usize>,
}

/// The reading options of `explain`: the same flags, help and defaults as `measure`'s.
/// Limits that keep one file from holding up or swamping a batch (`measure`, `check`).
#[derive(Debug, clap::Args)]
pub struct LimitArgs {
    /// Longest time one file may take, in seconds (e.g. 30 or 0.5); a file that takes longer becomes an error row naming the step it was in, and the run goes on. Default: no limit.
    #[arg(long, value_name = "SECONDS", value_parser = seconds)]
    pub time_limit: Option<std::time::Duration>,

    /// Largest file read, in megabytes; a larger one becomes an error row without being read whole. Default 1024.
    #[arg(long, value_name = "MB", default_value_t = 1024, value_parser = clap::value_parser!(u64).range(1..=1 << 24))]
    pub max_file_size: u64,
}

fn seconds(text: &str) -> Result<std::time::Duration, String> {
    let v: f64 = text
        .trim()
        .parse()
        .map_err(|_| format!("expected a number of seconds, found {text:?}"))?;
    if !(v.is_finite() && v > 0.0) {
        return Err("the time limit must be a positive number of seconds".into());
    }
    std::time::Duration::try_from_secs_f64(v).map_err(|e| e.to_string())
}

/// How drawings are read: the options `measure` and `explain` share.
#[derive(Debug, clap::Args)]
pub struct ReadArgs {
    /// Unit of drawings that declare none ($INSUNITS missing or 0). Unitless extrusion drawings are almost always millimetres.
    #[arg(long, value_enum, default_value = "mm", value_name = "UNIT")]
    pub assume_units: UnitArg,

    /// Only read entities on layers matching GLOB (* and ?, case-insensitive); repeatable.
    #[arg(long, value_name = "GLOB")]
    pub layer: Vec<String>,

    /// Skip entities on layers matching GLOB; repeatable.
    #[arg(long, value_name = "GLOB")]
    pub exclude_layer: Vec<String>,

    /// Also read layers that are switched off or frozen (skipped by default).
    #[arg(long)]
    pub include_hidden_layers: bool,

    /// Also take outlines from the boundary paths of hatches (section drawings often carry the section only as a hatch). Skipped and counted by default.
    #[arg(long)]
    pub hatch_outlines: bool,

    /// Largest gap in millimetres closed when chaining loose entities into loops.
    /// Default: 1e-4 of the drawing's extent, between 0.000001 mm (1e-8 of the extent in drawings under 100 mm) and 0.05 mm, and at most a quarter of its short segments. Larger gaps are reported, never closed silently; `explain` shows how the gap was chosen.
    #[arg(long, value_name = "MM")]
    pub gap: Option<f64>,

    /// Millimetres per SVG user unit, overriding the page size (width, height) and viewBox of SVG files. Default: from the page size; 1 px = 25.4/96 mm when the file gives none (the row says so).
    #[arg(long, value_name = "MM_PER_UNIT", value_parser = positive_scale)]
    pub svg_scale: Option<f64>,
}

#[derive(Debug, clap::Args)]
pub struct ExplainArgs {
    /// The DXF or SVG file to explain.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,

    #[command(flatten)]
    pub read: ReadArgs,
}

#[derive(Debug, clap::Args)]
pub struct DrawArgs {
    /// The DXF or SVG file to draw.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,

    /// Write the SVG to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,

    #[command(flatten)]
    pub read: ReadArgs,

    /// Draw all profiles of the file as one section (one set of marks).
    #[arg(long)]
    pub merge: bool,

    /// Compute the plastic properties and draw the plastic neutral axes parallel to x and y.
    #[arg(long)]
    pub plastic: bool,

    /// Compute the extruder's figures and draw the circumscribing circle and the thinnest wall.
    #[arg(long)]
    pub extrusion: bool,

    /// Compute torsion by finite elements and draw the shear centre.
    #[arg(long)]
    pub torsion: bool,

    /// Compute every optional tier (--plastic, --extrusion, --torsion) and draw all their marks.
    #[arg(long)]
    pub all: bool,

    /// Relative accuracy the torsion solver refines to (see measure).
    #[arg(long, default_value_t = 1e-3, value_name = "REL", value_parser = accuracy)]
    pub torsion_accuracy: f64,

    /// Largest mesh (nodes) the torsion solver may use for one profile.
    #[arg(long, default_value_t = 400_000, value_name = "N")]
    pub torsion_max_nodes: usize,

    /// Drawing scale, paper to drawing: 1:5, 2:1 or a number (paper millimetres per drawing millimetre). Default: the largest standard scale that fits.
    #[arg(long, value_name = "RATIO", value_parser = drawing_scale)]
    pub scale: Option<f64>,
}

/// A drawing scale: `A:B` (paper A to drawing B) or one positive number.
fn drawing_scale(text: &str) -> Result<f64, String> {
    let num = |t: &str| {
        t.trim()
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite() && *v > 0.0)
    };
    let value = match text.split_once(':') {
        Some((a, b)) => num(a).zip(num(b)).map(|(a, b)| a / b),
        None => num(text),
    };
    value
        .filter(|v| v.is_finite() && *v > 0.0)
        .ok_or_else(|| format!("expected a scale such as 1:5, 2:1 or 0.5, found {text:?}"))
}

/// Named materials and their densities (see [`MaterialArg::density_kg_m3`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MaterialArg {
    #[value(alias = "aluminum")]
    Aluminium,
    Steel,
    Stainless,
    Pvc,
}

impl MaterialArg {
    /// Density in kg/m³:
    /// - aluminium 2700: EN 1999-1-1 §3.2.5, design value for all alloys;
    /// - steel 7850: EN 10219 tables basis, EN 1991-1-1 Table A.4 (77.0–78.5 kN/m³);
    /// - stainless 7900: EN 10088-1 for austenitic grades such as 1.4301 (from memory;
    ///   ferritic grades are about 7700);
    /// - PVC 1400: rigid (unplasticised) PVC, 1350–1450 (common practice).
    pub fn density_kg_m3(self) -> f64 {
        match self {
            MaterialArg::Aluminium => 2700.0,
            MaterialArg::Steel => 7850.0,
            MaterialArg::Stainless => 7900.0,
            MaterialArg::Pvc => 1400.0,
        }
    }
}

/// Output formats of `measure`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatArg {
    Csv,
    Jsonl,
    Xlsx,
}

/// Output and assumed length units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum UnitArg {
    Mm,
    Cm,
    M,
    In,
}

#[derive(Debug, clap::Args)]
pub struct MeasureArgs {
    /// DXF and SVG files, or folders searched recursively for *.dxf and *.svg (any case).
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,

    /// Write the output to FILE (atomically: a temporary file renamed at the end) instead of standard output. Its extension picks the format unless --format is given: .xlsx, .jsonl or .ndjson, else CSV.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,

    /// Output format: csv (one row per profile), jsonl (one JSON object per line, keys = the CSV header, numbers as JSON numbers, null where the CSV is empty) or xlsx (an Excel workbook: numbers as numbers, error rows highlighted, a "run" sheet saying how it was made; needs -o). Default: from the extension of -o, CSV on standard output.
    #[arg(long, value_enum, value_name = "FORMAT")]
    pub format: Option<FormatArg>,

    /// Also write an HTML report to FILE (one self-contained page: a sortable, filterable table of every profile with thumbnails, and for each profile its drawing to scale with the centroid, principal axes and the marks of the tiers computed, beside its values; error rows show where the problem is). Works offline.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,

    /// Length unit of the output columns; the header names carry it (area_mm2, ixx_in4, ...).
    #[arg(long, value_enum, default_value = "mm")]
    pub units: UnitArg,

    #[command(flatten)]
    pub read: ReadArgs,

    #[command(flatten)]
    pub limits: LimitArgs,

    /// Print where the run's time went on standard error: each step (read files, parse, chain, crossings and nesting, integrate, each tier, output with its final write and rename) summed over the threads, and the slowest files.
    #[arg(long)]
    pub timings: bool,

    /// Measure all profiles of a file as one section (a built-up or multi-part section).
    #[arg(long)]
    pub merge: bool,

    /// Also compute the plastic properties: plastic neutral axes parallel to x and y (pna_x, pna_y: offsets from the centroid, positive up and right), plastic section moduli about them and about the principal axes (plastic_x, plastic_y, plastic_1, plastic_2, with pna_1, pna_2) and shape factors (shape_x, shape_y, shape_1, shape_2). Exact, no flattening; columns added after the others.
    #[arg(long)]
    pub plastic: bool,

    /// Also compute the extruder's figures: circumscribing circle (circumscribed_diameter, its centre), thinnest wall with its two ends, thickest section (largest inscribed circle), hollows, inner perimeter, surface per metre in m2/m (outer, inner, whole) and the outline's own centroid (outline_cx, outline_cy). Columns added after the plastic ones.
    #[arg(long)]
    pub extrusion: bool,

    /// Also compute torsion and warping by finite elements: St Venant torsion constant (j), shear centre in drawing coordinates (xs, ys), warping constant about the shear centre (iw) and the solver's estimated relative error (torsion_accuracy). Each profile is meshed with 6-node triangles and the mesh refined until two levels agree within --torsion-accuracy. Slower than the other tiers (milliseconds to a second per profile); columns added after the extrusion ones.
    #[arg(long)]
    pub torsion: bool,

    /// Relative accuracy the torsion solver refines to (the largest change of J, of the shear centre over the polar radius of gyration, and of iw between two mesh levels). A profile that reaches the mesh cap first says so in its message.
    #[arg(long, default_value_t = 1e-3, value_name = "REL", value_parser = accuracy)]
    pub torsion_accuracy: f64,

    /// Largest mesh (nodes) the torsion solver may use for one profile; bounds time and memory.
    #[arg(long, default_value_t = 400_000, value_name = "N")]
    pub torsion_max_nodes: usize,

    /// Compute every optional tier of properties (--plastic, --extrusion, --torsion). Their columns come after the core ones, in a fixed order.
    #[arg(long)]
    pub all: bool,

    #[command(flatten)]
    pub mass: MassArgs,

    /// Number of files processed in parallel (default: one per core). The output is the same for any value.
    #[arg(short = 'j', long, value_name = "N")]
    pub jobs: Option<usize>,

    /// CSV only: field delimiter (one character, e.g. ';' or 'tab'). Default ',' (';' with --decimal-comma).
    #[arg(long, value_name = "CHAR")]
    pub delimiter: Option<String>,

    /// CSV only: write decimal commas (1234,5) for spreadsheets in locales that expect them.
    #[arg(long)]
    pub decimal_comma: bool,
}

/// A relative accuracy, for `--torsion-accuracy`.
fn accuracy(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() && (1e-9..=0.5).contains(&v) => Ok(v),
        _ => Err(format!(
            "expected a relative accuracy between 1e-9 and 0.5, found {text:?}"
        )),
    }
}

/// A finite number above zero, for `--svg-scale`.
fn positive_scale(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() && v > 0.0 => Ok(v),
        _ => Err(format!(
            "expected a number of millimetres above zero, found {text:?}"
        )),
    }
}
