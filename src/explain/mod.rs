//! `sectio explain`: what each step of the pipeline makes of one drawing, for the user whose
//! CSV row says `error`.
//!
//! [`explain_drawing`] runs the steps of [`crate::measure_drawing`] (read, units, join gap,
//! chain, crossing check, nesting) on one file and keeps what each one found, instead of only
//! the rows: the layers and what was on them, what was skipped, how the gap was chosen, every
//! loop with its role, and every problem. Rows are numbered as `measure` numbers them (the
//! same reading order and the same rule for problems that stop a profile), which
//! `tests/explain.rs` checks against `measure_drawing` on every fixture and corpus drawing.
//! [`render`] turns the result into the plain-text report.
//!
//! This module does no I/O: the caller passes the bytes and a writer.

pub mod render;

use std::collections::BTreeMap;

use crate::analyze::{default_join_gap, drawing_scale, frame_warning, Settings};
use crate::geom::chain::StrayChain;
use crate::geom::moments::loop_moments;
use crate::geom::{chain, drop_crossing_loops, nest, BBox, CurveSpan, Loop, LoopProblem};
use crate::import::{self, FileFacts, ImportError, LayerState, LengthUnit, Origin, ReadOptions};

/// Everything `explain` found in one file.
#[derive(Debug, Clone)]
pub struct Explanation {
    /// The file starts with the binary DXF sentinel.
    pub binary: bool,
    /// What was found, or why the file could not be read.
    pub read: Result<Details, ImportError>,
}

/// What was found in a file that could be read.
#[derive(Debug, Clone)]
pub struct Details {
    pub file: FileFacts,
    pub units: UnitsUsed,
    /// The reading options in force (for the report's header of the layer list).
    pub options: ReadOptions,
    /// Every layer of the LAYER table, then those only entities name.
    pub layers: Vec<LayerLine>,
    /// Entities not turned into pieces, by reason, most frequent first.
    pub skipped: Vec<(String, usize)>,
    /// The reader's remarks.
    pub notes: Vec<String>,
    /// Pieces read: (closed, open).
    pub pieces: (usize, usize),
    /// `None` when no piece was read (nothing to chain).
    pub gap: Option<GapChoice>,
    pub duplicates: usize,
    /// Loops dropped as the same outline drawn again (see [`crate::geom::nest::Nested`]).
    pub duplicate_loops: usize,
    /// Segments shorter than the gap left out.
    pub degenerate: usize,
    /// Closed loops kept for nesting, numbered in row order.
    pub loops: Vec<LoopLine>,
    /// The rows `measure` writes for this file, in order.
    pub rows: Vec<RowLine>,
    pub problems: Vec<ProblemLine>,
    /// Open chains left out as stray geometry.
    pub strays: Vec<StrayChain>,
}

/// The drawing's unit as used.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UnitsUsed {
    pub unit: LengthUnit,
    /// `$INSUNITS` as written.
    pub code: Option<i64>,
    /// No unit was declared: `unit` is `--assume-units`.
    pub assumed: bool,
}

impl UnitsUsed {
    /// As in the `drawing_units` column: `mm`, or `mm (assumed)`.
    pub fn label(&self) -> String {
        if self.assumed {
            format!("{} (assumed)", self.unit.name)
        } else {
            self.unit.name.to_string()
        }
    }
}

/// One layer: its LAYER table entry, whether its entities are read, and what is on it.
#[derive(Debug, Clone, PartialEq)]
pub struct LayerLine {
    pub name: String,
    /// `None` for a layer that only entities name.
    pub table: Option<LayerState>,
    pub verdict: LayerVerdict,
    /// Model-space entities by type, most frequent first.
    pub entities: Vec<(String, usize)>,
}

/// What the reading options do with a layer's entities (as the reader decides).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LayerVerdict {
    Read,
    /// Off or frozen, and `--include-hidden-layers` not given.
    Hidden,
    /// Not matched by `--layer`, or matched by `--exclude-layer`.
    NotSelected,
}

/// The join gap and where it came from (millimetres).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GapChoice {
    pub used: f64,
    /// Given with `--gap`; the numbers below are then for information only.
    pub given: bool,
    /// Diagonal of the box of all pieces.
    pub extent: f64,
    /// The default by extent alone: 1e-4 of `extent`, kept between the floor (1e-6 mm, 1e-8 of the extent under 100 mm) and 0.05 mm.
    pub by_extent: f64,
    /// The drawing's short segments (1st percentile of lengths), infinite when none is short
    /// enough to lower the default.
    pub short_segment: f64,
    /// The default both give ([`default_join_gap`]).
    pub default: f64,
}

/// One closed loop that reached nesting.
#[derive(Debug, Clone, PartialEq)]
pub struct LoopLine {
    /// 1-based, in row order (each profile's outer loop, then its holes).
    pub number: usize,
    /// The row of the profile it belongs to.
    pub row: usize,
    pub layer: String,
    pub segments: usize,
    pub bbox: BBox,
    /// Area enclosed, positive for outer loops (counter-clockwise), negative for holes.
    pub signed_area: f64,
    /// Number of loops around it: even is material, odd a hole.
    pub depth: usize,
    /// The entity it starts with.
    pub origin: Origin,
}

impl LoopLine {
    pub fn is_hole(&self) -> bool {
        self.depth % 2 == 1
    }
}

/// One row of `measure`'s output.
#[derive(Debug, Clone, PartialEq)]
pub struct RowLine {
    /// 1, 2, … as `measure` numbers profiles; 0 for a row about the whole file.
    pub row: usize,
    pub layer: String,
    pub kind: RowKind,
    /// `measure`'s error message, `None` for an `ok` row.
    pub error: Option<String>,
    /// A profile whose holes lie on other layers than its outer loop: the outer loop may be
    /// a sheet frame (`measure` warns in the row's message).
    pub warning: Option<String>,
}

#[derive(Debug, Clone, PartialEq)]
pub enum RowKind {
    /// A profile: its loops (numbers in [`Details::loops`]) and net area (mm²).
    Profile { loops: Vec<usize>, area: f64 },
    /// A problem no profile overlaps (index in [`Details::problems`]).
    Problem(usize),
    /// Nothing to measure in the file.
    File,
}

/// A problem found while building loops, and the rows it concerns.
#[derive(Debug, Clone, PartialEq)]
pub struct ProblemLine {
    pub problem: LoopProblem,
    /// Its own row, when no profile overlaps it.
    pub row: Option<usize>,
    /// Rows of profiles it stops from being measured.
    pub blocks: Vec<usize>,
}

impl Explanation {
    /// Whether `measure` would measure every profile of the file (its exit status 0).
    pub fn all_measured(&self) -> bool {
        self.read
            .as_ref()
            .is_ok_and(|d| d.rows.iter().all(|r| r.error.is_none()))
    }
}

/// Read one DXF file held in memory and explain what the pipeline makes of it. `--merge`
/// (`settings.merge`) is not followed: rows are the profiles one by one.
pub fn explain_drawing(bytes: &[u8], settings: &Settings) -> Explanation {
    let binary = bytes.starts_with(b"AutoCAD Binary DXF");
    let options = ReadOptions {
        census: true,
        ..settings.read.clone()
    };
    let read = if import::svg::looks_like_svg(bytes) {
        import::svg::read(bytes, &options)
    } else {
        import::dxf::read(bytes, &options)
    };
    let read = read.map(|d| details(d, settings, options));
    Explanation { binary, read }
}

fn details(mut drawing: import::Drawing, settings: &Settings, options: ReadOptions) -> Details {
    // Units, as in `measure_drawing`.
    let units = UnitsUsed {
        unit: drawing.units.declared.unwrap_or(settings.assume_units),
        code: drawing.units.code,
        assumed: drawing.units.declared.is_none(),
    };
    crate::analyze::to_millimetres(&mut drawing, units.unit);
    let layers = layer_lines(&drawing.file, &options);
    let hint = crate::analyze::hatch_hint(&drawing.skipped);
    let mut skipped: Vec<(String, usize)> = drawing.skipped.into_iter().collect();
    skipped.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
    let closed = drawing.pieces.iter().filter(|p| p.closed).count();
    let pieces = (closed, drawing.pieces.len() - closed);
    let mut d = Details {
        file: drawing.file,
        units,
        options,
        layers,
        skipped,
        notes: drawing.notes,
        pieces,
        gap: None,
        duplicates: 0,
        duplicate_loops: 0,
        degenerate: 0,
        loops: Vec::new(),
        rows: Vec::new(),
        problems: Vec::new(),
        strays: Vec::new(),
    };
    if drawing.pieces.is_empty() {
        d.rows.push(file_row(&format!("no outline found{hint}")));
        return d;
    }
    // The gap, the chaining, the crossing check and the nesting, as in `measure_drawing`.
    let (extent, short_segment) = drawing_scale(&drawing.pieces);
    let default = default_join_gap(extent, short_segment);
    let gap = GapChoice {
        used: settings.join_gap.unwrap_or(default),
        given: settings.join_gap.is_some(),
        extent,
        by_extent: default_join_gap(extent, f64::INFINITY),
        short_segment,
        default,
    };
    let join_gap = gap.used;
    d.gap = Some(gap);
    let chained = chain(drawing.pieces, join_gap);
    let mut problems = chained.problems;
    if crate::analyze::open_paths_are_errors(&d.file) {
        problems.extend(chained.strays.iter().map(LoopProblem::open_path));
    }
    let loops = drop_crossing_loops(
        chained.loops,
        join_gap,
        &drawing.curves.spans,
        &mut problems,
    );
    let nested = nest(loops, join_gap, &mut problems);
    let profiles = nested.profiles;
    d.duplicate_loops = nested.duplicate_loops;
    d.duplicates = chained.duplicates;
    d.degenerate = chained.degenerate;
    d.strays = chained.strays;

    // Rows in reading order, as `measure_drawing` makes them: each profile, blocked by the
    // problems its box overlaps, then the problems no profile overlaps; sorted (stably) by
    // the left, then the bottom edge of their boxes.
    enum Item {
        Profile(usize, Vec<usize>),
        Problem(usize),
    }
    let mut used = vec![false; problems.len()];
    let mut items: Vec<((f64, f64), Item)> = Vec::new();
    for (i, p) in profiles.iter().enumerate() {
        let bbox = p.bbox();
        let blocking: Vec<usize> = (0..problems.len())
            .filter(|&k| {
                problems[k].blocks_profiles() && problems[k].bbox().overlaps(&bbox, join_gap)
            })
            .collect();
        for &k in &blocking {
            used[k] = true;
        }
        items.push(((bbox.min.x, bbox.min.y), Item::Profile(i, blocking)));
    }
    for (k, pr) in problems.iter().enumerate() {
        if !used[k] {
            let bbox = pr.bbox();
            items.push(((bbox.min.x, bbox.min.y), Item::Problem(k)));
        }
    }
    items.sort_by(|a, b| a.0 .0.total_cmp(&b.0 .0).then(a.0 .1.total_cmp(&b.0 .1)));
    d.problems = problems
        .into_iter()
        .map(|problem| ProblemLine {
            problem,
            row: None,
            blocks: Vec::new(),
        })
        .collect();
    for (n, (_, item)) in items.into_iter().enumerate() {
        let row = n + 1;
        match item {
            Item::Profile(i, blocking) => {
                let p = &profiles[i];
                let mut numbers = Vec::new();
                for (l, depth) in std::iter::once((&p.outer, p.depth))
                    .chain(p.holes.iter().map(|h| (h, p.depth + 1)))
                {
                    let number = d.loops.len() + 1;
                    d.loops
                        .push(loop_line(l, number, row, depth, &drawing.curves.spans));
                    numbers.push(number);
                }
                let error = (!blocking.is_empty()).then(|| {
                    let msgs: Vec<String> = blocking
                        .iter()
                        .map(|&k| d.problems[k].problem.describe())
                        .collect();
                    format!("not measured: {}", msgs.join("; "))
                });
                for &k in &blocking {
                    d.problems[k].blocks.push(row);
                }
                d.rows.push(RowLine {
                    row,
                    layer: p.outer.layer.to_string(),
                    kind: RowKind::Profile {
                        loops: numbers,
                        area: p.moments.a,
                    },
                    error,
                    warning: frame_warning(p),
                });
            }
            Item::Problem(k) => {
                let pr = &mut d.problems[k];
                pr.row = Some(row);
                d.rows.push(RowLine {
                    row,
                    layer: pr.problem.layer().to_string(),
                    kind: RowKind::Problem(k),
                    error: Some(pr.problem.describe()),
                    warning: None,
                });
            }
        }
    }
    if d.rows.is_empty() {
        d.rows
            .push(file_row(&format!("no closed outline found{hint}")));
    }
    d
}

/// The row about the whole file when nothing can be measured (`measure` adds what was
/// skipped to the message).
fn file_row(message: &str) -> RowLine {
    RowLine {
        row: 0,
        layer: String::new(),
        kind: RowKind::File,
        error: Some(message.into()),
        warning: None,
    }
}

fn loop_line(l: &Loop, number: usize, row: usize, depth: usize, curves: &[CurveSpan]) -> LoopLine {
    let bbox = l.exact_bbox(curves);
    LoopLine {
        number,
        row,
        layer: l.layer.to_string(),
        segments: l.segments.len(),
        bbox,
        signed_area: loop_moments(&l.segments, bbox.center(), curves).a,
        depth,
        origin: l.origin,
    }
}

/// The layers of the LAYER table (in file order), then those that only entities name (by
/// name), with the reader's verdict and the entity counts. Layer names are case-insensitive:
/// entities on `Profile` count for a table entry `PROFILE`.
fn layer_lines(file: &FileFacts, options: &ReadOptions) -> Vec<LayerLine> {
    let mut lines: Vec<LayerLine> = Vec::new();
    let mut by_name: BTreeMap<String, usize> = BTreeMap::new();
    for entry in &file.layer_table {
        let key = entry.name.to_lowercase();
        match by_name.get(&key) {
            // A name listed twice: the reader keeps the last entry's state.
            Some(&i) => lines[i].table = Some(entry.clone()),
            None => {
                by_name.insert(key, lines.len());
                lines.push(LayerLine {
                    name: entry.name.clone(),
                    table: Some(entry.clone()),
                    verdict: LayerVerdict::Read,
                    entities: Vec::new(),
                });
            }
        }
    }
    for ((layer, ty), &n) in &file.entity_counts {
        let key = layer.to_lowercase();
        let i = *by_name.entry(key).or_insert_with(|| {
            lines.push(LayerLine {
                name: layer.clone(),
                table: None,
                verdict: LayerVerdict::Read,
                entities: Vec::new(),
            });
            lines.len() - 1
        });
        match lines[i].entities.iter_mut().find(|(t, _)| t == ty) {
            Some((_, count)) => *count += n,
            None => lines[i].entities.push((ty.clone(), n)),
        }
    }
    for line in &mut lines {
        line.entities
            .sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
        let hidden = line.table.as_ref().is_some_and(|t| t.off || t.frozen);
        line.verdict = if hidden && !options.include_hidden_layers {
            LayerVerdict::Hidden
        } else if !options.layer_selected(&line.name) {
            LayerVerdict::NotSelected
        } else {
            LayerVerdict::Read
        };
    }
    lines
}
