//! The bodies of the fuzz targets, shared by the libFuzzer binaries (`fuzz/fuzz_targets`) and
//! the seeded stable test (`tests/fuzz_seeded.rs`, which includes this file by path), so that
//! both run exactly the same paths.
//!
//! Each function takes arbitrary bytes and must return without panicking, whatever they are;
//! any outcome (rows, error rows) is fine.
//!
//! - [`dxf_reader`] and [`svg_reader`]: the bytes as a file, through the reader alone (with
//!   every option that makes it read more), the whole analysis as `measure` runs it, and
//!   `explain` with its report;
//! - [`pipeline`]: the bytes decoded by [`soup`] into a drawing of lines, arcs and curves
//!   with awkward numbers (NaN, infinities, 1e300, zero lengths, duplicates, tangencies), and
//!   settings that sometimes turn on the plastic, extrusion and torsion tiers; measured, then
//!   written as CSV records and drawn as an SVG sheet.

use sectio::analyze::{analyze_drawing_with_geometry, measure_drawing_with_geometry, Settings};
use sectio::analyze::{MeasuredDrawing, Outcome};
use sectio::fem::TorsionSettings;
use sectio::geom::curve::{Curve, EllipseArc, Nurbs};
use sectio::geom::curve_pieces::curve_segments;
use sectio::geom::{Arc, CurveTable, Point, Segment};
use sectio::import::{self, Drawing, LengthUnit, Location, Origin, Piece, ReadOptions};
use sectio::import::{LayerName, SourceUnits};
use sectio::report::csv_out::{csv_records, CsvFormat};
use sectio::report::drawing::{sheet_svg, DrawStyle, SheetItem};
use sectio::report::{Row, Tiers};

/// A DXF file (or anything else): the reader alone (reading everything, and with a layer
/// selection, whose left-out entities are passed over unparsed), the analysis, and `explain`.
pub fn dxf_reader(data: &[u8]) {
    let _ = import::dxf::read(data, &read_more());
    let selected = ReadOptions {
        layers: vec!["P*".into()],
        ..ReadOptions::default()
    };
    let _ = import::dxf::read(data, &selected);
    file_paths(data);
}

/// An SVG file (or anything else): the reader alone (for inputs of odd length with
/// `--svg-scale`, which overrides the page size and viewBox), the analysis and `explain`.
pub fn svg_reader(data: &[u8]) {
    let opts = ReadOptions {
        svg_mm_per_unit: (data.len() % 2 == 1).then_some(0.5),
        ..read_more()
    };
    let _ = import::svg::read(data, &opts);
    file_paths(data);
}

/// A segment soup decoded from the bytes ([`soup`]), measured and written out.
pub fn pipeline(data: &[u8]) {
    let (drawing, settings) = soup(data);
    let measured = measure_drawing_with_geometry(drawing, &settings);
    outputs(&measured, &settings);
}

/// Reader options that read everything a drawing offers: hidden layers, hatch boundaries and
/// the census that `explain` takes.
fn read_more() -> ReadOptions {
    ReadOptions {
        include_hidden_layers: true,
        hatch_outlines: true,
        census: true,
        ..ReadOptions::default()
    }
}

/// What the command line does with one file's bytes: `measure` (whose
/// `analyze_drawing` is `analyze_drawing_with_geometry(..).outcomes`) with its CSV and drawing,
/// and `explain` with its report.
fn file_paths(data: &[u8]) {
    let settings = Settings::default();
    let measured = analyze_drawing_with_geometry(data, &settings);
    outputs(&measured, &settings);
    let explanation = sectio::explain::explain_drawing(data, &settings);
    let _ = sectio::explain::render::write_report(&mut Vec::new(), "fuzz", &explanation);
}

/// The CSV records of the rows (every tier's columns) and the SVG sheet of the measured
/// profiles, as `measure` and `draw` write them.
fn outputs(measured: &MeasuredDrawing, settings: &Settings) {
    let tiers = Tiers {
        plastic: settings.plastic,
        extrusion: settings.extrusion,
        torsion: settings.torsion.is_some(),
    };
    let rows: Vec<Row> = measured
        .outcomes
        .iter()
        .map(|o: &Outcome| Row {
            file: "fuzz".into(),
            outcome: o.clone(),
        })
        .collect();
    for fmt in [
        CsvFormat {
            tiers,
            ..CsvFormat::default()
        },
        CsvFormat {
            tiers: Tiers::ALL,
            decimal_comma: true,
            delimiter: b';',
            unit: LengthUnit::INCH,
            ..CsvFormat::default()
        },
    ] {
        let _ = csv_records(&rows, &fmt);
    }
    let items: Vec<SheetItem> = measured
        .outcomes
        .iter()
        .zip(&measured.profiles)
        .filter_map(|(o, profiles)| {
            let props = o.result.as_ref().ok()?;
            Some(SheetItem {
                label: Some(o.profile.to_string()),
                profiles: profiles.iter().collect(),
                props,
            })
        })
        .collect();
    if !items.is_empty() {
        let _ = sheet_svg(&items, &measured.curves, &DrawStyle::default());
    }
}

/// Choices read from the fuzzer's bytes, front to back; zeros once they run out (so every
/// input decodes, and a short input is a small drawing).
pub struct Source<'a> {
    data: &'a [u8],
}

impl<'a> Source<'a> {
    pub fn new(data: &'a [u8]) -> Self {
        Source { data }
    }

    pub fn is_empty(&self) -> bool {
        self.data.is_empty()
    }

    pub fn byte(&mut self) -> u8 {
        match self.data.split_first() {
            Some((&b, rest)) => {
                self.data = rest;
                b
            }
            None => 0,
        }
    }

    /// A number in `0..n` (`n` > 0).
    pub fn below(&mut self, n: usize) -> usize {
        self.byte() as usize % n
    }

    pub fn flag(&mut self) -> bool {
        self.byte() & 1 == 1
    }

    /// The next eight bytes as the bits of an f64 (any value, NaN payloads included).
    pub fn raw_f64(&mut self) -> f64 {
        let mut bits = [0u8; 8];
        for b in &mut bits {
            *b = self.byte();
        }
        f64::from_le_bytes(bits)
    }

    /// A coordinate or length: mostly on a coarse grid (so ends meet, segments overlap and
    /// circles touch), sometimes just off it, sometimes extreme or not a number.
    pub fn number(&mut self) -> f64 {
        match self.byte() % 16 {
            // Half-unit grid from −64 to 63.5.
            0..=6 => f64::from(self.byte() as i8) * 0.5,
            // Small integers: tangencies and coincidences are likely.
            7..=9 => f64::from(self.byte() % 11),
            // Just off the grid: near-coincident ends, slivers.
            10 => {
                let on = f64::from(self.byte() as i8) * 0.5;
                on + f64::from(self.byte() as i8) * 1e-9
            }
            11 => {
                let on = f64::from(self.byte() as i8) * 0.5;
                on * (1.0 + f64::from(self.byte() as i8) * f64::EPSILON)
            }
            12 | 13 => SPECIAL[self.below(SPECIAL.len())],
            14 => self.raw_f64(),
            _ => f64::from(i16::from_le_bytes([self.byte(), self.byte()])) / 64.0,
        }
    }

    pub fn point(&mut self) -> Point {
        Point::new(self.number(), self.number())
    }

    /// An angle: mostly a multiple of 45°, sometimes any number.
    pub fn angle(&mut self) -> f64 {
        match self.byte() % 4 {
            0..=2 => f64::from(self.byte() as i8) * std::f64::consts::FRAC_PI_4,
            _ => self.number(),
        }
    }
}

/// Awkward numbers: not a number, infinities, extremes, signed zero, subnormals, values whose
/// squares overflow or underflow, and values far from the origin.
pub const SPECIAL: [f64; 22] = [
    f64::NAN,
    f64::INFINITY,
    f64::NEG_INFINITY,
    1e300,
    -1e300,
    -0.0,
    0.0,
    1e-300,
    5e-324,
    f64::MAX,
    f64::MIN,
    f64::MIN_POSITIVE,
    f64::EPSILON,
    1e154,
    1e-160,
    1e15,
    -1e15,
    1e9,
    1e-9,
    1e6 + 0.5,
    1e308,
    -2.5e-310,
];

/// Most segments one soup holds (keeps each run short).
const MAX_SEGMENTS: usize = 160;

/// Decode bytes into a drawing of "segment soup" and the settings to measure it with.
///
/// The first bytes choose the settings (tiers, merge, join gap, units); the rest is a list of
/// operations that draw lines, arcs (by centre, by bulge, full circles), rectangles,
/// duplicates and reversed copies, scaled or moved copies of earlier pieces, circles touching
/// earlier ones, ellipse arcs and splines (as curve pieces with their span table), with
/// numbers from [`Source::number`]. Arcs and ellipses are built as the readers build them
/// (radius > 0, sweep within a turn); coordinates that are not finite are kept, as the
/// geometry stage must cope with them whatever a reader lets through.
pub fn soup(data: &[u8]) -> (Drawing, Settings) {
    let mut src = Source::new(data);
    let settings = soup_settings(&mut src);
    let units = match src.byte() % 4 {
        0 => SourceUnits {
            code: None,
            declared: None,
        },
        _ => {
            let code = i64::from(src.byte() % 26);
            SourceUnits {
                code: Some(code),
                declared: LengthUnit::from_insunits(code),
            }
        }
    };
    let layers: [LayerName; 3] = ["0".into(), "PROFILE".into(), "Ä layer, long".into()];
    let mut table = CurveTable::default();
    let mut pieces: Vec<Piece> = Vec::new();
    let mut current: Vec<Segment> = Vec::new();
    let mut n_segments = 0;
    let mut line_no = 0u64;
    let mut finish =
        |segments: &mut Vec<Segment>, closed: bool, layer: usize, pieces: &mut Vec<Piece>| {
            if segments.is_empty() {
                return;
            }
            line_no += 1;
            pieces.push(Piece {
                segments: std::mem::take(segments),
                closed,
                layer: layers[layer % layers.len()].clone(),
                origin: Origin {
                    entity: "FUZZ",
                    location: Location::Line(line_no),
                    handle: None,
                    in_block: false,
                },
            });
        };
    while !src.is_empty() && n_segments < MAX_SEGMENTS {
        let before = current.len() + pieces.iter().map(|p| p.segments.len()).sum::<usize>();
        let last_end = current.last().map(Segment::end);
        match src.byte() % 14 {
            0 => current.push(Segment::line(src.point(), src.point())),
            // Continue the path (or start it at a new point).
            1 => {
                let a = last_end.unwrap_or_else(|| src.point());
                current.push(Segment::line(a, src.point()));
            }
            2 => {
                let (c, r, a0) = (src.point(), src.number().abs(), src.angle());
                let sweep = sweep(a0, src.angle()) * if src.flag() { 1.0 } else { -1.0 };
                if r > 0.0 {
                    current.push(Segment::Arc(Arc::from_center(c, r, a0, sweep)));
                }
            }
            3 => {
                let a = last_end.unwrap_or_else(|| src.point());
                let bulge = match src.byte() % 4 {
                    0 => 1.0,
                    1 => -1.0,
                    2 => (std::f64::consts::PI / 8.0).tan() * if src.flag() { 1.0 } else { -1.0 },
                    _ => src.number(),
                };
                let b = src.point();
                current.push(match Arc::from_bulge(a, b, bulge) {
                    Some(arc) => Segment::Arc(arc),
                    None => Segment::line(a, b),
                });
            }
            4 => {
                let (c, r) = (src.point(), src.number().abs());
                if r > 0.0 {
                    let mut circle = vec![Segment::Arc(Arc::circle(c, r))];
                    finish(&mut circle, true, src.byte().into(), &mut pieces);
                }
            }
            // A copy of an earlier segment, maybe reversed.
            5 => {
                let all: Vec<Segment> = pieces
                    .iter()
                    .flat_map(|p| p.segments.iter().copied())
                    .chain(current.iter().copied())
                    .collect();
                if !all.is_empty() {
                    let s = all[src.below(all.len())];
                    current.push(if src.flag() { s.reversed() } else { s });
                }
            }
            6 => {
                let (o, w, h) = (src.point(), src.number(), src.number());
                let c = [
                    o,
                    o + Point::new(w, 0.0),
                    o + Point::new(w, h),
                    o + Point::new(0.0, h),
                ];
                let mut rect: Vec<Segment> = (0..4)
                    .map(|k| Segment::line(c[k], c[(k + 1) % 4]))
                    .collect();
                if src.flag() {
                    rect.reverse();
                    rect.iter_mut().for_each(|s| *s = s.reversed());
                }
                finish(&mut rect, src.flag(), src.byte().into(), &mut pieces);
            }
            // Close the path back to its start, or leave it open.
            7 => {
                if let (Some(first), Some(end)) = (current.first().map(Segment::start), last_end) {
                    if src.flag() {
                        current.push(Segment::line(end, first));
                    }
                }
                let closed = src.flag();
                finish(&mut current, closed, src.byte().into(), &mut pieces);
            }
            8 => finish(&mut current, false, src.byte().into(), &mut pieces),
            // A circle touching an earlier circle from outside or inside, or concentric.
            9 => {
                let (c, r) = pieces
                    .iter()
                    .flat_map(|p| &p.segments)
                    .find_map(|s| match s {
                        Segment::Arc(a) => Some((a.center, a.radius)),
                        _ => None,
                    })
                    .unwrap_or((Point::new(0.0, 0.0), 10.0));
                let r2 = src.number().abs();
                let centre = match src.byte() % 3 {
                    0 => c + Point::new(r + r2, 0.0),
                    1 => c + Point::new(r - r2, 0.0),
                    _ => c,
                };
                if r2 > 0.0 {
                    let mut circle = vec![Segment::Arc(Arc::circle(centre, r2))];
                    finish(&mut circle, true, 0, &mut pieces);
                }
            }
            // A copy of an earlier piece, moved and scaled (far away, huge, tiny).
            10 => {
                if !pieces.is_empty() {
                    let k = src.below(pieces.len());
                    let (shift, scale) = (src.point(), src.number());
                    let mut copy = pieces[k].clone();
                    for s in &mut copy.segments {
                        *s = moved(&s.scaled(scale), shift);
                    }
                    pieces.push(copy);
                }
            }
            11 => {
                // As the DXF reader builds them (v = ratio times u turned by 90°), or with
                // any conjugate v (an affine map of the SVG reader).
                let (center, u) = (src.point(), src.point());
                let v = if src.flag() {
                    Point::new(-u.y, u.x) * src.number()
                } else {
                    src.point()
                };
                // The start parameter turned into [0, 2π) as the DXF reader does: a raw
                // 1e300 made every sine and cosine of the integrals a slow huge-argument
                // reduction (a 10 s timeout of the fuzzer, not an input any reader makes).
                let t0 = src.angle().rem_euclid(std::f64::consts::TAU);
                let t1 = t0 + sweep(t0, src.angle()) * if src.flag() { 1.0 } else { -1.0 };
                let e = EllipseArc {
                    center,
                    u,
                    v,
                    t0,
                    t1,
                };
                let mut segs = curve_segments(&Curve::Ellipse(e), &mut table);
                finish(&mut segs, true, 1, &mut pieces);
            }
            12 => {
                if let Some(n) = nurbs(&mut src) {
                    let mut segs = curve_segments(&Curve::Nurbs(n), &mut table);
                    let closed = src.flag();
                    finish(&mut segs, closed, 1, &mut pieces);
                }
            }
            _ => {
                // A polyline with bulges, closed: the reader's commonest outline.
                let n = 2 + src.below(6);
                let pts: Vec<Point> = (0..n).map(|_| src.point()).collect();
                let mut segs: Vec<Segment> = (0..n)
                    .map(|i| {
                        let (a, b) = (pts[i], pts[(i + 1) % n]);
                        let bulge = if src.flag() { 0.0 } else { src.number() * 0.25 };
                        match Arc::from_bulge(a, b, bulge) {
                            Some(arc) => Segment::Arc(arc),
                            None => Segment::line(a, b),
                        }
                    })
                    .collect();
                finish(&mut segs, true, src.byte().into(), &mut pieces);
            }
        }
        let after = current.len() + pieces.iter().map(|p| p.segments.len()).sum::<usize>();
        n_segments += after.saturating_sub(before).max(1);
    }
    finish(&mut current, false, 0, &mut pieces);
    let drawing = Drawing {
        units,
        pieces,
        curves: table,
        ..Drawing::default()
    };
    (drawing, settings)
}

/// Settings within what the command line accepts: any join gap that is a finite number
/// ≥ 0, the tiers, merge, the assumed unit, and the torsion solver with small meshes (so a
/// run stays short) and any accuracy the command line allows.
fn soup_settings(src: &mut Source) -> Settings {
    let flags = src.byte();
    let join_gap = match src.byte() % 8 {
        0 => Some(0.0),
        1 => Some(1e-9),
        2 => Some(0.05),
        3 => Some(2.0),
        4 => Some(1e300),
        5 => Some(src.number().abs()).filter(|g| g.is_finite()),
        _ => None,
    };
    let torsion = (flags & 4 != 0).then(|| TorsionSettings {
        accuracy: [0.5, 0.1, 1e-2, 1e-3][src.below(4)],
        max_nodes: [0, 1, 40, 300, 1500][src.below(5)],
    });
    Settings {
        join_gap,
        merge: flags & 8 != 0,
        assume_units: if flags & 16 != 0 {
            LengthUnit::INCH
        } else {
            LengthUnit::MM
        },
        plastic: flags & 1 != 0,
        extrusion: flags & 2 != 0,
        torsion,
        ..Settings::default()
    }
}

/// A small B-spline from the bytes (degree 1 to 3, up to 8 control points, clamped or
/// uniform knots, sometimes rational), or one through fit points; `None` when
/// [`Nurbs::new`] refuses it, as the DXF reader would.
fn nurbs(src: &mut Source) -> Option<Nurbs> {
    let degree = 1 + src.below(3);
    let n = degree + 1 + src.below(6);
    let ctrl: Vec<Point> = (0..n).map(|_| src.point()).collect();
    if src.below(4) == 0 {
        return Nurbs::interpolate(&ctrl, degree, None, None).ok();
    }
    let clamped = src.flag();
    let knots: Vec<f64> = (0..n + degree + 1)
        .map(|i| {
            if clamped {
                i.saturating_sub(degree).min(n - degree) as f64
            } else {
                i as f64
            }
        })
        .collect();
    let weights = if src.flag() {
        (0..n).map(|_| 0.25 + f64::from(src.byte() % 8)).collect()
    } else {
        Vec::new()
    };
    Nurbs::new(degree, knots, ctrl, weights).ok()
}

/// The counter-clockwise sweep from angle `a0` to `a1` in (0, 2π], as the DXF reader takes
/// an ARC's (a full turn for equal angles); NaN for non-finite angles.
fn sweep(a0: f64, a1: f64) -> f64 {
    let s = (a1 - a0).rem_euclid(std::f64::consts::TAU);
    if s == 0.0 {
        std::f64::consts::TAU
    } else {
        s
    }
}

/// `s` moved by `d`.
fn moved(s: &Segment, d: Point) -> Segment {
    match s {
        Segment::Line { a, b } => Segment::line(*a + d, *b + d),
        Segment::Arc(arc) => Segment::Arc(Arc {
            center: arc.center + d,
            start: arc.start + d,
            end: arc.end + d,
            ..*arc
        }),
        // A curve piece's span stays where it was: moving it would need the table. Kept as
        // its chord, moved.
        Segment::Curve(c) => Segment::line(c.a + d, c.b + d),
    }
}
