//! One drawing in, one outcome per profile out: the whole pipeline for a single file.

use std::collections::BTreeMap;

use crate::fem::{torsion_props, TorsionSettings};
use crate::geom::scale::SHORT_LIMIT2_MM2;
use crate::geom::{
    chain_read, drop_crossing_loops, nest, BBox, CurveTable, LoopProblem, Profile, RunFacts,
    ScaleTally,
};
use crate::import::{self, Drawing, LengthUnit, Piece, ReadOptions};
use crate::section::{extrusion_props, plastic_props, section_props, SectionProps};
use crate::timings::{self, Step};

/// Settings that shape how a drawing is read and measured.
#[derive(Debug, Clone)]
pub struct Settings {
    pub read: ReadOptions,
    /// Largest gap (mm) closed when chaining; `None` picks [`default_join_gap`].
    pub join_gap: Option<f64>,
    /// Measure all profiles of a file as one section.
    pub merge: bool,
    /// Unit of drawings that declare none.
    pub assume_units: LengthUnit,
    /// Also compute the plastic properties ([`crate::section::plastic`]).
    pub plastic: bool,
    /// Also compute the extruder's figures ([`crate::section::extrusion`]).
    pub extrusion: bool,
    /// Also compute the torsion and warping constants and the shear centre, with these
    /// solver settings ([`crate::fem::torsion`]).
    pub torsion: Option<TorsionSettings>,
    /// Longest time one file may take ([`crate::time_limit`]); a file that takes longer is
    /// an error row. `None`: no limit.
    pub time_limit: Option<std::time::Duration>,
    /// Largest file read, in bytes: a larger one is an error row, read no further than that
    /// (the batch reads each file whole into memory).
    pub max_file_bytes: u64,
}

/// Default of [`Settings::max_file_bytes`]: 1 GiB, far above any profile drawing (the
/// largest of the real-drawing corpus is a few megabytes) and within a laptop's memory.
pub const DEFAULT_MAX_FILE_BYTES: u64 = 1 << 30;

impl Default for Settings {
    fn default() -> Self {
        Settings {
            read: ReadOptions::default(),
            join_gap: None,
            merge: false,
            assume_units: LengthUnit::MM,
            plastic: false,
            extrusion: false,
            torsion: None,
            time_limit: None,
            max_file_bytes: DEFAULT_MAX_FILE_BYTES,
        }
    }
}

/// The result for one profile of a file (or for the file, when it yields no profile).
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// 1-based position in reading order; 0 for a row about the whole file.
    pub profile: usize,
    pub layer: String,
    /// The drawing's unit as used, e.g. `mm`, or `mm (assumed)`.
    pub drawing_units: String,
    /// Properties in millimetres, or why there are none.
    pub result: Result<SectionProps, String>,
    /// Warnings and notes (for `ok` rows) — never the error itself.
    pub message: String,
}

/// Default chaining gap: 1e-4 of the drawing's extent (its bounding-box diagonal), kept
/// between the floor ([`gap_floor`]: 1e-6 mm) and 0.05 mm, so that CAD rounding
/// (micrometres) closes and real gaps (tenths of a millimetre and more) do not (common
/// practice; see README). It is also kept at most a quarter of the drawing's short segments
/// (`short_segment_mm`, see [`drawing_scale`]; not below the floor): the gap is the size
/// below which a segment counts as noise, and a finely divided outline (a curve exported as
/// thousands of short lines) must keep its segments.
pub fn default_join_gap(extent_mm: f64, short_segment_mm: f64) -> f64 {
    let floor = gap_floor(extent_mm);
    extent_gap(extent_mm).min((0.25 * short_segment_mm).max(floor))
}

/// The smallest default gap: 1e-6 mm, or 1e-8 of the extent in a drawing under 100 mm (not
/// below 1e-12 mm), so that a small drawing keeps its small features: the same profile drawn
/// at a thousandth of the size chains alike and gives the same results scaled.
fn gap_floor(extent_mm: f64) -> f64 {
    let floor = extent_mm * 1e-8;
    if floor.is_nan() {
        1e-6 // no extent to scale by (coordinates that are not numbers)
    } else {
        floor.clamp(1e-12, 1e-6)
    }
}

/// The largest default gap, in millimetres.
const MAX_GAP_MM: f64 = 0.05;

/// The gap by extent alone: 1e-4 of it, kept between the floor and [`MAX_GAP_MM`].
fn extent_gap(extent_mm: f64) -> f64 {
    let gap = extent_mm * 1e-4;
    if gap.is_nan() {
        gap_floor(extent_mm)
    } else {
        gap.clamp(gap_floor(extent_mm), MAX_GAP_MM)
    }
}

/// The extent of a drawing's pieces (the diagonal of a box holding them) and the length of
/// its short segments: the 1st percentile of the lengths above zero (a few slivers do not
/// count) when that is short enough to lower the default gap (under four times the gap by
/// extent), infinity otherwise.
pub fn drawing_scale(pieces: &[Piece]) -> (f64, f64) {
    let mut tally = ScaleTally::default();
    for p in pieces {
        tally.add_piece(&p.segments);
    }
    scale_of_tally(&mut tally)
}

/// [`drawing_scale`] from a tally of the pieces' segments (see [`ScaleTally`]). The gap by
/// extent is at most `MAX_GAP_MM`, so only lengths under four times that can lower it: the
/// tally keeps their squares (most drawings have none), sorted out here against the real
/// limit. Squared lengths keep the order, and only the chosen one needs a root. Takes the
/// squared lengths out of the tally.
fn scale_of_tally(tally: &mut ScaleTally) -> (f64, f64) {
    let n = tally.lengths;
    let mut candidates = std::mem::take(&mut tally.short2);
    let extent = tally.bbox.diagonal();
    let limit2 = (4.0 * extent_gap(extent)).powi(2);
    debug_assert!(limit2 <= SHORT_LIMIT2_MM2);
    candidates.retain(|&l2| l2 < limit2);
    let k = n / 100;
    let short = if candidates.len() > k {
        candidates
            .select_nth_unstable_by(k, f64::total_cmp)
            .1
            .sqrt()
    } else {
        f64::INFINITY
    };
    (extent, short)
}

// The tally keeps the lengths that could lower the largest default gap.
const _: () = assert!(SHORT_LIMIT2_MM2 == (4.0 * MAX_GAP_MM) * (4.0 * MAX_GAP_MM));

/// [`drawing_scale`] of a drawing in millimetres (converted to them from `unit`, if need be):
/// from the reader's tally when it [holds](tally_holds), else from the pieces. Takes the
/// tally's short lengths out of the drawing (call it once).
pub fn drawing_scale_of(drawing: &mut Drawing, unit: LengthUnit) -> (f64, f64) {
    if tally_holds(drawing, unit) {
        scale_of_tally(&mut drawing.scale)
    } else {
        drawing_scale(&drawing.pieces)
    }
}

/// The [`RunFacts`] of a drawing in millimetres (converted from `unit`, if need be), for
/// [`chain_read`]: the reader's when its tally [holds](tally_holds), else none (chaining
/// then reads every piece itself). Takes them out of the drawing.
pub fn run_facts_of(drawing: &mut Drawing, unit: LengthUnit) -> Vec<RunFacts> {
    if tally_holds(drawing, unit) {
        std::mem::take(&mut drawing.scale.runs)
    } else {
        Vec::new()
    }
}

/// Whether the reader's tally describes the drawing's pieces as they are now: the drawing
/// was in millimetres already (converting it scaled every segment) and has as many pieces
/// as the reader added (none were added or removed since; a drawing built by hand has an
/// empty tally).
fn tally_holds(drawing: &Drawing, unit: LengthUnit) -> bool {
    unit.mm == 1.0 && drawing.scale.pieces == drawing.pieces.len()
}

/// Read and measure one DXF or SVG file held in memory (told apart by content, see
/// [`import::svg::looks_like_svg`]), within `settings.time_limit`.
pub fn analyze_drawing(bytes: &[u8], settings: &Settings) -> Vec<Outcome> {
    analyze_drawing_with_geometry(bytes, settings).outcomes
}

/// [`analyze_drawing`], keeping each row's profiles and the curve table
/// ([`measure_drawing_with_geometry`]).
pub fn analyze_drawing_with_geometry(bytes: &[u8], settings: &Settings) -> MeasuredDrawing {
    if bytes.len() as u64 > settings.max_file_bytes {
        return MeasuredDrawing::file_row(
            "",
            too_large(settings.max_file_bytes),
            CurveTable::default(),
        );
    }
    let work = || match timings::time(Step::Parse, || read_drawing(bytes, settings)) {
        Ok(d) => measure_drawing_with_geometry(d, settings),
        Err(e) => MeasuredDrawing::file_row("", e, CurveTable::default()),
    };
    match settings.time_limit {
        None => work(),
        Some(limit) => crate::time_limit::run(Some(limit), work).unwrap_or_else(|e| {
            MeasuredDrawing::file_row("", time_limit_message(limit, e.step), CurveTable::default())
        }),
    }
}

/// The error of a file over [`Settings::max_file_bytes`].
pub fn too_large(limit: u64) -> String {
    format!(
        "file larger than the limit of {} MB (--max-file-size)",
        limit.div_ceil(1 << 20)
    )
}

/// The error of a file stopped by [`Settings::time_limit`] while in `step`.
pub fn time_limit_message(limit: std::time::Duration, step: &str) -> String {
    format!(
        "stopped after the time limit of {} s while {step} (--time-limit)",
        limit.as_secs_f64()
    )
}

/// The reader's drawing, or its error as text.
fn read_drawing(bytes: &[u8], settings: &Settings) -> Result<Drawing, String> {
    let read = if import::svg::looks_like_svg(bytes) {
        import::svg::read(bytes, &settings.read)
    } else {
        import::dxf::read(bytes, &settings.read)
    };
    read.map_err(|e| e.to_string())
}

/// A row about the whole file.
fn file_row(units: &str, msg: String) -> Vec<Outcome> {
    vec![Outcome {
        profile: 0,
        layer: String::new(),
        drawing_units: units.to_string(),
        result: Err(msg),
        message: String::new(),
    }]
}

/// Whether an open path far from closing is an error row of its own (SVG: every path is meant
/// as an outline) rather than stray geometry skipped with a note (DXF: centre and construction
/// lines are common). Either way it does not stop the profiles it overlaps.
pub(crate) fn open_paths_are_errors(file: &import::FileFacts) -> bool {
    file.svg
}

/// For a file without a closed outline: a pointer to `--hatch-outlines` when hatches were
/// skipped (section drawings often carry the section only as a hatch), else nothing.
pub(crate) fn hatch_hint(skipped: &BTreeMap<String, usize>) -> String {
    match skipped.get("HATCH") {
        Some(n) => format!(
            "; the file has {n} hatch{}: --hatch-outlines takes outlines from hatch boundaries",
            if *n == 1 { "" } else { "es" }
        ),
        None => String::new(),
    }
}

/// The drawing's geometry (segments and curve spans) turned from `unit` into millimetres.
pub(crate) fn to_millimetres(drawing: &mut Drawing, unit: LengthUnit) {
    if unit.mm != 1.0 {
        for p in &mut drawing.pieces {
            for s in &mut p.segments {
                *s = s.scaled(unit.mm);
            }
        }
        drawing.curves.scale(unit.mm);
    }
}

/// Measure a drawing already read (by any reader, or built by hand in tests).
pub fn measure_drawing(drawing: Drawing, settings: &Settings) -> Vec<Outcome> {
    measure_drawing_with_geometry(drawing, settings).outcomes
}

/// A measured drawing with the geometry behind each row, for drawing it
/// ([`crate::report::drawing`]).
#[derive(Debug, Clone, Default)]
pub struct MeasuredDrawing {
    /// The rows, exactly as [`measure_drawing`] returns them.
    pub outcomes: Vec<Outcome>,
    /// For each row of `outcomes` (same index), the profiles it is about, in millimetres:
    /// one, or every profile of the file with `merge`; also for a profile that a problem kept
    /// from being measured; empty for rows about a problem or about the whole file.
    pub profiles: Vec<Vec<Profile>>,
    /// The curve spans the profiles' curve pieces index, in millimetres.
    pub curves: CurveTable,
    /// For each row of `outcomes` (same index), where the geometry problems that made it an
    /// error row are (millimetres): those blocking its profile, or its own; empty for
    /// measured rows and rows about the whole file.
    pub problems: Vec<Vec<ProblemPlace>>,
}

/// Where a geometry problem is: the box of the chain or loop concerned, and the box of the
/// exact place (the gap's ends, the branch or crossing point; see [`LoopProblem::spot`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProblemPlace {
    pub bbox: BBox,
    pub spot: BBox,
}

impl ProblemPlace {
    fn of(problem: &LoopProblem) -> ProblemPlace {
        ProblemPlace {
            bbox: problem.bbox(),
            spot: problem.spot(),
        }
    }
}

impl MeasuredDrawing {
    /// Rows about the whole file carry no geometry.
    fn file_row(units: &str, msg: String, curves: CurveTable) -> MeasuredDrawing {
        MeasuredDrawing {
            outcomes: file_row(units, msg),
            profiles: vec![Vec::new()],
            curves,
            problems: vec![Vec::new()],
        }
    }
}

/// [`measure_drawing`], keeping each row's profiles and the curve table. The profiles are
/// moved out of the pipeline, not copied, so this costs `measure_drawing` nothing.
pub fn measure_drawing_with_geometry(mut drawing: Drawing, settings: &Settings) -> MeasuredDrawing {
    let (unit, units_label) = match drawing.units.declared {
        Some(u) => (u, u.name.to_string()),
        None => (
            settings.assume_units,
            format!("{} (assumed)", settings.assume_units.name),
        ),
    };
    let mut notes: Vec<String> = Vec::new();
    if drawing.units.declared.is_none() {
        notes.push(format!(
            "no drawing units declared{}: {} assumed",
            match drawing.units.code {
                Some(c) if c != 0 => format!(" ($INSUNITS {c} unknown)"),
                _ => String::new(),
            },
            settings.assume_units.name
        ));
    }
    notes.append(&mut drawing.notes);
    to_millimetres(&mut drawing, unit);
    let skipped = summarize_skipped(&drawing.skipped);
    let hint = hatch_hint(&drawing.skipped);
    if drawing.pieces.is_empty() {
        let mut msg = "no outline found".to_string();
        if !skipped.is_empty() {
            msg.push_str(&format!("; skipped {skipped}"));
        }
        msg.push_str(&hint);
        return MeasuredDrawing::file_row(&units_label, msg, drawing.curves);
    }
    let join_gap = settings.join_gap.unwrap_or_else(|| {
        let (extent, short) = drawing_scale_of(&mut drawing, unit);
        default_join_gap(extent, short)
    });
    let runs = run_facts_of(&mut drawing, unit);
    crate::time_limit::check_now("reading");
    let chained = timings::time(Step::Chain, || chain_read(drawing.pieces, join_gap, &runs));
    crate::time_limit::check_now("chaining loops");
    let mut problems = chained.problems;
    let strays_are_errors = open_paths_are_errors(&drawing.file);
    if strays_are_errors {
        problems.extend(chained.strays.iter().map(LoopProblem::open_path));
    }
    let nested = timings::time(Step::Nest, || {
        let loops = drop_crossing_loops(
            chained.loops,
            join_gap,
            &drawing.curves.spans,
            &mut problems,
        );
        nest(loops, join_gap, &mut problems)
    });
    crate::time_limit::check_now("nesting loops");
    let profiles = nested.profiles;

    if !skipped.is_empty() {
        notes.push(format!("skipped {skipped}"));
    }
    if chained.duplicates > 0 {
        notes.push(format!("{} duplicate entities removed", chained.duplicates));
    }
    if nested.duplicate_loops > 0 {
        notes.push(format!(
            "{} outlines drawn twice (the same loop again, e.g. as a hatch boundary) counted once",
            nested.duplicate_loops
        ));
    }
    if chained.stray_chains > 0 && !strays_are_errors {
        notes.push(format!(
            "{} open chains ignored (not near closing: centre or construction lines?)",
            chained.stray_chains
        ));
    }
    if chained.degenerate > 0 {
        notes.push(format!(
            "{} segments shorter than the gap {} mm dropped",
            chained.degenerate,
            crate::geom::chain::fmt_len(join_gap)
        ));
    }
    let note = notes.join("; ");

    // Profiles a problem overlaps are not measured: the problem may hide a loop of theirs
    // (a tube whose outer circle is broken must not come out as its bore).
    let mut used_problem = vec![false; problems.len()];
    struct Item {
        key: (f64, f64),
        outcome: Outcome,
        /// The indices into `profiles` the row is about.
        members: std::ops::Range<usize>,
        /// The boxes of the problems that make it an error row.
        problem_boxes: Vec<ProblemPlace>,
    }
    let mut items: Vec<Item> = Vec::new();
    let blocked = |bbox: &BBox, used: &mut Vec<bool>| -> (Vec<String>, Vec<ProblemPlace>) {
        let mut msgs = Vec::new();
        let mut boxes = Vec::new();
        for (k, pr) in problems.iter().enumerate() {
            if pr.blocks_profiles() && pr.bbox().overlaps(bbox, join_gap) {
                used[k] = true;
                msgs.push(pr.describe());
                boxes.push(ProblemPlace::of(pr));
            }
        }
        (msgs, boxes)
    };
    // Elastic properties, and the optional tiers when asked for; a failure of one of those
    // (never expected) leaves its columns empty and says why in the message.
    let curve_table = &drawing.curves;
    let measure = |ps: &[&Profile]| -> (SectionProps, Option<String>) {
        crate::time_limit::check_now("measuring a profile");
        let mut props = timings::time(Step::Integrate, || section_props(ps));
        let mut failed: Vec<String> = Vec::new();
        if settings.plastic {
            crate::time_limit::check_now("the plastic properties");
            match timings::time(Step::Plastic, || plastic_props(ps, curve_table, &props)) {
                Ok(p) => props.plastic = Some(p),
                Err(e) => failed.push(e),
            }
        }
        if settings.extrusion {
            crate::time_limit::check_now("the extrusion figures");
            match timings::time(Step::Extrusion, || extrusion_props(ps, curve_table)) {
                Ok(x) => props.extrusion = Some(x),
                Err(e) => failed.push(e),
            }
        }
        if let Some(t) = &settings.torsion {
            // The solver leans on two outside crates (spade, faer): a panic there must
            // not cost the row its other columns.
            let solved = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                timings::time(Step::Torsion, || torsion_props(ps, &props, t))
            }))
            .unwrap_or_else(|payload| {
                // The time limit passes through to the file's row (time_limit::run).
                if payload.is::<crate::time_limit::Exceeded>() {
                    std::panic::resume_unwind(payload)
                }
                Err("internal error in the torsion solver".to_string())
            });
            match solved {
                Ok(x) => {
                    if !x.converged {
                        failed.push(format!(
                            "torsion accuracy {:.1e} not reached (estimate {:.1e} at the cap of {} nodes)",
                            t.accuracy, x.accuracy, t.max_nodes
                        ));
                    }
                    props.torsion = Some(x);
                }
                Err(e) => failed.push(format!("torsion not computed: {e}")),
            }
        }
        (props, (!failed.is_empty()).then(|| failed.join("; ")))
    };
    let make = |layer: &str, result: Result<SectionProps, String>| Outcome {
        profile: 0,
        layer: layer.to_string(),
        drawing_units: units_label.clone(),
        message: if result.is_ok() {
            note.clone()
        } else {
            String::new()
        },
        result,
    };
    if settings.merge && !profiles.is_empty() {
        let all: Vec<&Profile> = profiles.iter().collect();
        let bbox = all.iter().fold(BBox::EMPTY, |b, p| b.union(&p.bbox()));
        let (msgs, problem_boxes) = blocked(&bbox, &mut used_problem);
        let layers = joined_layers(&all);
        let mut failed = None;
        let result = if msgs.is_empty() {
            let (props, f) = measure(&all);
            failed = f;
            Ok(props)
        } else {
            Err(format!("not measured: {}", msgs.join("; ")))
        };
        let mut outcome = make(&layers, result);
        if let Some(f) = failed {
            outcome.message = join_notes(&f, &outcome.message);
        }
        items.push(Item {
            key: (bbox.min.x, bbox.min.y),
            outcome,
            members: 0..profiles.len(),
            problem_boxes,
        });
    } else {
        for (k, p) in profiles.iter().enumerate() {
            let bbox = p.bbox();
            let (msgs, problem_boxes) = blocked(&bbox, &mut used_problem);
            let mut failed = None;
            let result = if msgs.is_empty() {
                let (props, f) = measure(&[p]);
                failed = f;
                Ok(props)
            } else {
                Err(format!("not measured: {}", msgs.join("; ")))
            };
            let mut outcome = make(&p.outer.layer, result);
            if let Some(f) = failed {
                outcome.message = join_notes(&f, &outcome.message);
            }
            if let Some(warning) = frame_warning(p) {
                outcome.message = join_notes(&warning, &outcome.message);
            }
            items.push(Item {
                key: (bbox.min.x, bbox.min.y),
                outcome,
                members: k..k + 1,
                problem_boxes,
            });
        }
    }
    for (k, pr) in problems.iter().enumerate() {
        if !used_problem[k] {
            let bbox = pr.bbox();
            items.push(Item {
                key: (bbox.min.x, bbox.min.y),
                outcome: make(pr.layer(), Err(pr.describe())),
                members: 0..0,
                problem_boxes: vec![ProblemPlace::of(pr)],
            });
        }
    }
    if items.is_empty() {
        let mut msg = "no closed outline found".to_string();
        if !note.is_empty() {
            msg.push_str(&format!("; {note}"));
        }
        msg.push_str(&hint);
        return MeasuredDrawing::file_row(&units_label, msg, drawing.curves);
    }
    // Reading order: left to right by the left edge of each box, then bottom to top, rows
    // at the same place in the order made. The keys are sorted, not the rows (each row
    // holds its properties: moving rows about would copy hundreds of bytes a step).
    let mut order: Vec<((f64, f64), u32)> = items
        .iter()
        .enumerate()
        .map(|(k, it)| (it.key, k as u32))
        .collect();
    order.sort_unstable_by(|(a, i), (b, j)| {
        a.0.total_cmp(&b.0).then(a.1.total_cmp(&b.1)).then(i.cmp(j))
    });
    let mut items: Vec<Option<Item>> = items.into_iter().map(Some).collect();
    // Each profile belongs to at most one row (the ranges are disjoint), so each is moved
    // out once.
    let mut slots: Vec<Option<Profile>> = profiles.into_iter().map(Some).collect();
    let mut outcomes = Vec::with_capacity(items.len());
    let mut row_profiles = Vec::with_capacity(items.len());
    let mut row_problems = Vec::with_capacity(items.len());
    let in_order = order.iter().filter_map(|&(_, k)| items[k as usize].take());
    for (i, mut it) in in_order.enumerate() {
        it.outcome.profile = i + 1;
        outcomes.push(it.outcome);
        row_problems.push(it.problem_boxes);
        row_profiles.push(
            it.members
                .filter_map(|k| slots.get_mut(k).and_then(Option::take))
                .collect(),
        );
    }
    MeasuredDrawing {
        outcomes,
        profiles: row_profiles,
        curves: drawing.curves,
        problems: row_problems,
    }
}

/// A warning when a profile's holes lie on other layers than its outer loop: the outer loop
/// may be a sheet frame or title block drawn around the real profiles, which then count as
/// its holes. Geometry alone cannot tell; the user can, by choosing layers.
pub(crate) fn frame_warning(p: &Profile) -> Option<String> {
    let mut others: Vec<&str> = p
        .holes
        .iter()
        .map(|h| &*h.layer)
        .filter(|l| *l != &*p.outer.layer)
        .collect();
    if others.is_empty() {
        return None;
    }
    others.sort_unstable();
    others.dedup();
    Some(format!(
        "outer loop on layer {} holds loops on layer {}: if it is a sheet frame or title block, choose layers with --layer or --exclude-layer",
        p.outer.layer,
        others.join(", ")
    ))
}

/// Two notes joined by "; ", either of which may be empty.
fn join_notes(a: &str, b: &str) -> String {
    match (a.is_empty(), b.is_empty()) {
        (true, _) => b.to_string(),
        (_, true) => a.to_string(),
        _ => format!("{a}; {b}"),
    }
}

fn joined_layers(profiles: &[&Profile]) -> String {
    let mut layers: Vec<&str> = profiles.iter().map(|p| &*p.outer.layer).collect();
    layers.sort_unstable();
    layers.dedup();
    layers.join("+")
}

/// "TEXT 3, DIMENSION 2" from the reader's skip counts, most frequent first.
fn summarize_skipped(skipped: &std::collections::BTreeMap<String, usize>) -> String {
    let mut v: Vec<(&String, &usize)> = skipped.iter().collect();
    v.sort_by(|a, b| b.1.cmp(a.1).then(a.0.cmp(b.0)));
    v.iter()
        .map(|(k, n)| format!("{n} {k}"))
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::{Point, Segment};
    use crate::import::{Location, Origin};

    #[test]
    fn default_gap_follows_the_extent_and_stays_below_short_segments() {
        let inf = f64::INFINITY;
        assert_eq!(default_join_gap(100.0, inf), 0.01);
        assert_eq!(default_join_gap(1000.0, inf), 0.05); // capped
        assert!((default_join_gap(0.001, inf) - 1e-7).abs() < 1e-20); // 1e-4 of a tiny extent
        assert_eq!(default_join_gap(1e-6, 1e-20), 1e-12); // the floor's floor
        assert_eq!(default_join_gap(f64::NAN, f64::INFINITY), 1e-6); // no extent: no panic
        assert_eq!(default_join_gap(f64::INFINITY, f64::INFINITY), 0.05);
        assert!((default_join_gap(0.01, 1e-12) - 1e-10).abs() < 1e-22); // 1e-8 of a small extent
        assert_eq!(default_join_gap(100.0, 0.02), 0.005); // a quarter of the short segments
        assert_eq!(default_join_gap(100.0, 1e-9), 1e-6); // never below the floor
    }

    /// A piece of `segments` for `drawing_scale` (which reads nothing else of it).
    fn piece(segments: Vec<Segment>) -> Piece {
        Piece {
            segments,
            closed: true,
            layer: "0".into(),
            origin: Origin {
                entity: "TEST",
                location: Location::Line(1),
                handle: None,
                in_block: false,
            },
        }
    }

    #[test]
    fn drawing_scale_is_the_box_diagonal_and_a_low_percentile_of_lengths() {
        let (a, b, c, d) = (
            Point::new(0.0, 0.0),
            Point::new(30.0, 0.0),
            Point::new(30.0, 40.0),
            Point::new(0.0, 40.0),
        );
        // A 30 × 40 rectangle: diagonal 50; shortest of its four edges 30.
        let rect = vec![
            Segment::line(a, b),
            Segment::line(b, c),
            Segment::line(c, d),
            Segment::line(d, a),
        ];
        // Edges far longer than four times the gap by extent (4·0.005 mm): no short length.
        assert_eq!(drawing_scale(&[piece(rect.clone())]), (50.0, f64::INFINITY));
        // Edges of 0.1 mm beside it are short for a larger drawing (under 0.2 mm), but not
        // for this one: still no short length.
        let tiny: Vec<Segment> = rect.iter().map(|s| s.scaled(0.1 / 30.0)).collect();
        let (extent, short) = drawing_scale(&[piece(rect.clone()), piece(tiny)]);
        assert_eq!((extent, short), (50.0, f64::INFINITY));
        // The rectangle with a 1000 mm bar beside it (gap by extent 0.05 mm): edges of 0.03
        // and 0.04 mm are short; the shortest is the 1st percentile of five.
        let small: Vec<Segment> = rect.iter().map(|s| s.scaled(1e-3)).collect();
        let bar = vec![Segment::line(a, Point::new(1000.0, 0.0))];
        let (extent, short) = drawing_scale(&[piece(small.clone()), piece(bar.clone())]);
        assert!((extent - 1000.0).abs() < 1e-6); // √(1000² + 0.04²)
        assert!((short - 0.03).abs() < 1e-15);
        // One sliver among 200 short edges is below the 1st percentile's reach; zero-length
        // edges do not count.
        let mut many: Vec<Segment> = (0..199).map(|_| small[0]).collect();
        many.push(Segment::line(a, Point::new(1e-6, 0.0)));
        many.push(Segment::line(a, a));
        let short = drawing_scale(&[piece(many), piece(bar)]).1;
        assert!((short - 0.03).abs() < 1e-15);
        assert_eq!(drawing_scale(&[]).1, f64::INFINITY);
    }

    /// The extent is the diagonal of the union of the segments' loose boxes taken with
    /// `BBox::union`, also when some coordinates are NaN (passed over, not spread) and with
    /// arcs of both kinds of loose box.
    #[test]
    fn drawing_scale_extent_is_the_union_of_loose_boxes_even_with_nan() {
        let nan = f64::NAN;
        let p = Point::new;
        let segments = vec![
            Segment::line(p(nan, 2.0), p(5.0, nan)),
            Segment::line(p(-3.0, 1.0), p(nan, nan)),
            Segment::line(p(1.0, -7.0), p(2.0, 4.0)),
            // A quarter circle (box from its chord and sagitta) and a three-quarter one (box
            // of its circle), far out; an arc with a NaN radius.
            Segment::Arc(crate::geom::Arc::from_center(p(100.0, 0.0), 10.0, 0.0, 1.5)),
            Segment::Arc(crate::geom::Arc::from_center(p(0.0, 200.0), 20.0, 1.0, 4.5)),
            Segment::Arc(crate::geom::Arc::from_center(p(0.0, 0.0), nan, 0.0, 1.0)),
        ];
        let expected = segments
            .iter()
            .fold(BBox::EMPTY, |b, s| b.union(&s.loose_bbox()));
        assert!(expected.diagonal().is_finite());
        // Each segment alone, every order of two, and all of them.
        for (i, s) in segments.iter().enumerate() {
            let alone = BBox::EMPTY.union(&s.loose_bbox()).diagonal();
            assert_eq!(
                drawing_scale(&[piece(vec![*s])]).0.to_bits(),
                alone.to_bits(),
                "{i}"
            );
            for t in &segments {
                let two = BBox::EMPTY.union(&s.loose_bbox()).union(&t.loose_bbox());
                let got = drawing_scale(&[piece(vec![*s]), piece(vec![*t])]).0;
                assert_eq!(got.to_bits(), two.diagonal().to_bits());
            }
        }
        assert_eq!(drawing_scale(&[piece(segments)]).0, expected.diagonal());
    }

    /// A tube drawn with curve pieces (chords plus span table) measures like the exact one:
    /// the pieces are shuffled and some reversed, and the drawing is in centimetres far from
    /// the origin, so the span table's scaling and the corrections' signs are exercised.
    #[test]
    fn curve_pieces_measure_exactly_through_the_pipeline() {
        use crate::geom::curve::{Curve, EllipseArc};
        use crate::geom::moments::{arc_moments, line_moments};
        use crate::geom::{Arc, CurvePiece, CurveSpan, CurveTable};
        use crate::import::{LengthUnit, SourceUnits};
        use std::f64::consts::PI;
        let origin = Origin {
            entity: "TEST",
            location: Location::Line(1),
            handle: None,
            in_block: false,
        };
        // Pieces mostly along their spans, then mostly against them.
        for flip in [false, true] {
            let (c, r_out, r_in) = (Point::new(4000.0, -2500.0), 3.0, 2.0);
            let mut curves: Vec<CurveSpan> = Vec::new();
            let mut shapes: Vec<Curve> = Vec::new();
            let mut pieces: Vec<Piece> = Vec::new();
            for (r, n) in [(r_out, 12), (r_in, 7)] {
                shapes.push(Curve::Ellipse(EllipseArc {
                    center: c,
                    u: Point::new(r, 0.0),
                    v: Point::new(0.0, r),
                    t0: 0.0,
                    t1: 2.0 * PI,
                }));
                for k in 0..n {
                    let (ta, tb) = (
                        2.0 * PI * k as f64 / n as f64,
                        2.0 * PI * (k + 1) as f64 / n as f64,
                    );
                    let arc = Arc::from_center(c, r, ta, 2.0 * PI / n as f64);
                    let at = (arc.start + arc.end) * 0.5;
                    let chord = line_moments(arc.start - at, arc.end - at);
                    curves.push(CurveSpan {
                        at,
                        correction: arc_moments(&arc, at) + chord * -1.0,
                        length: arc.length(),
                        bbox: arc.bbox(),
                        curve: (shapes.len() - 1) as u32,
                        ta,
                        tb,
                    });
                    let seg = Segment::Curve(CurvePiece {
                        a: arc.start,
                        b: arc.end,
                        mid: arc.point_at(0.5),
                        span: (curves.len() - 1) as u32,
                        reversed: false,
                    });
                    pieces.push(Piece {
                        segments: vec![if (k % 3 == 1) != flip {
                            seg.reversed()
                        } else {
                            seg
                        }],
                        closed: false,
                        layer: "0".into(),
                        origin,
                    });
                }
            }
            pieces.reverse();
            let drawing = Drawing {
                units: SourceUnits {
                    declared: Some(LengthUnit::CM),
                    code: Some(5),
                },
                pieces,
                curves: CurveTable {
                    spans: curves,
                    curves: shapes,
                },
                ..Drawing::default()
            };
            let out = measure_drawing(drawing, &Settings::default());
            assert_eq!(out.len(), 1, "{out:?}");
            let got = out[0].result.as_ref().expect("measured");
            // In millimetres: radii 30 and 20. Tube: A = π(R² − r²), Ixx = π(R⁴ − r⁴)/4
            // (check-values.md §1, hollow circle row).
            let (ro, ri) = (10.0 * r_out, 10.0 * r_in);
            let rel = |a: f64, b: f64| (a - b).abs() / b.abs();
            assert!(
                rel(got.area, PI * (ro * ro - ri * ri)) < 1e-12,
                "{}",
                got.area
            );
            assert!(rel(got.ixx, PI * (ro.powi(4) - ri.powi(4)) / 4.0) < 1e-11);
            assert!(rel(got.iyy, got.ixx) < 1e-11 && got.ixy.abs() < 1e-9 * got.ixx);
            assert!(rel(got.perimeter, 2.0 * PI * (ro + ri)) < 1e-12);
            assert!(rel(got.perimeter_outer, 2.0 * PI * ro) < 1e-12);
            assert!(
                (got.centroid.x - 40_000.0).abs() < 1e-8
                    && (got.centroid.y + 25_000.0).abs() < 1e-8
            );
            // The box is the circle's, not its chords'.
            assert!((got.bbox.min.x - (40_000.0 - ro)).abs() < 1e-9);
            assert!((got.bbox.max.y - (-25_000.0 + ro)).abs() < 1e-9);
            assert_eq!(got.n_holes, 1);
        }
    }
}
