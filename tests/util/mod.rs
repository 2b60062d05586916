//! Shared test helpers: building drawings by hand, transforming them, comparing numbers.
#![allow(dead_code)]

use sectio::analyze::{measure_drawing, Outcome, Settings};
use sectio::geom::{Arc, Point, Segment};
use sectio::import::{Drawing, Location, Origin, Piece, SourceUnits};
use sectio::section::SectionProps;

/// `assert_close!(actual, expected, rel = 1e-12)` or `abs = ...`.
#[macro_export]
macro_rules! assert_close {
    ($a:expr, $b:expr, rel = $tol:expr) => {{
        let (a, b): (f64, f64) = ($a, $b);
        let scale = a.abs().max(b.abs());
        assert!(
            (a - b).abs() <= $tol * scale,
            "{} = {a} vs {} = {b}: relative difference {:e} > {:e}",
            stringify!($a),
            stringify!($b),
            (a - b).abs() / scale,
            $tol
        );
    }};
    ($a:expr, $b:expr, abs = $tol:expr) => {{
        let (a, b): (f64, f64) = ($a, $b);
        assert!(
            (a - b).abs() <= $tol,
            "{} = {a} vs {} = {b}: difference {:e} > {:e}",
            stringify!($a),
            stringify!($b),
            (a - b).abs(),
            $tol
        );
    }};
}

pub fn p(x: f64, y: f64) -> Point {
    Point::new(x, y)
}

pub fn origin(entity: &'static str) -> Origin {
    Origin {
        entity,
        location: Location::Line(1),
        handle: None,
        in_block: false,
    }
}

/// A closed piece from segments.
pub fn closed(segments: Vec<Segment>) -> Piece {
    Piece {
        segments,
        closed: true,
        layer: "0".into(),
        origin: origin("TEST"),
    }
}

/// An open piece from segments.
pub fn open(segments: Vec<Segment>) -> Piece {
    Piece {
        segments,
        closed: false,
        layer: "0".into(),
        origin: origin("TEST"),
    }
}

/// Closed polygon through `pts` with a bulge per edge (0 for straight).
pub fn poly(pts: &[(f64, f64)], bulges: &[f64]) -> Vec<Segment> {
    let n = pts.len();
    (0..n)
        .filter_map(|i| {
            let a = p(pts[i].0, pts[i].1);
            let b = p(pts[(i + 1) % n].0, pts[(i + 1) % n].1);
            if a == b {
                return None;
            }
            let bulge = bulges.get(i).copied().unwrap_or(0.0);
            Some(match Arc::from_bulge(a, b, bulge) {
                Some(arc) => Segment::Arc(arc),
                None => Segment::line(a, b),
            })
        })
        .collect()
}

/// An I-section h × b, web tw, flanges tf, root fillets r drawn as arcs, centred at (0, 0).
pub fn i_section(h: f64, b: f64, tw: f64, tf: f64, r: f64) -> Vec<Segment> {
    let (yb, yt) = (-h / 2.0 + tf, h / 2.0 - tf);
    let (xw, xf) = (tw / 2.0, b / 2.0);
    // Concave corners of a counter-clockwise outline turn clockwise: bulge −tan(90°/4).
    let f = -(std::f64::consts::PI / 8.0).tan();
    poly(
        &[
            (-xf, -h / 2.0),
            (xf, -h / 2.0),
            (xf, yb),
            (xw + r, yb),
            (xw, yb + r),
            (xw, yt - r),
            (xw + r, yt),
            (xf, yt),
            (xf, h / 2.0),
            (-xf, h / 2.0),
            (-xf, yt),
            (-xw - r, yt),
            (-xw, yt - r),
            (-xw, yb + r),
            (-xw - r, yb),
            (-xf, yb),
        ],
        &[
            0.0, 0.0, 0.0, f, 0.0, f, 0.0, 0.0, 0.0, 0.0, 0.0, f, 0.0, f, 0.0, 0.0,
        ],
    )
}

pub fn rect(x0: f64, y0: f64, w: f64, h: f64) -> Vec<Segment> {
    poly(
        &[(x0, y0), (x0 + w, y0), (x0 + w, y0 + h), (x0, y0 + h)],
        &[],
    )
}

pub fn circle(cx: f64, cy: f64, r: f64) -> Vec<Segment> {
    vec![Segment::Arc(Arc::circle(p(cx, cy), r))]
}

pub fn drawing(pieces: Vec<Piece>) -> Drawing {
    Drawing {
        units: SourceUnits {
            code: Some(4),
            declared: sectio::import::LengthUnit::from_insunits(4),
        },
        pieces,
        ..Default::default()
    }
}

/// A drawing whose pieces are made by `curve_segments` from `curves`.
pub fn curve_drawing(curves: &[sectio::geom::curve::Curve]) -> Drawing {
    let mut table = sectio::geom::CurveTable::default();
    let pieces = curves
        .iter()
        .map(|c| closed(sectio::geom::curve_pieces::curve_segments(c, &mut table)))
        .collect();
    Drawing {
        curves: table,
        ..drawing(pieces)
    }
}

pub fn measure(pieces: Vec<Piece>) -> Vec<Outcome> {
    measure_drawing(drawing(pieces), &Settings::default())
}

/// The properties of the only profile; panics with the messages otherwise.
pub fn only(pieces: Vec<Piece>) -> SectionProps {
    let out = measure(pieces);
    assert_eq!(out.len(), 1, "expected one row, got {out:#?}");
    match &out[0].result {
        Ok(p) => *p,
        Err(e) => panic!("expected a profile, got error: {e}"),
    }
}

/// A similarity transform: rotate by `angle`, scale by `scale` (negative mirrors through
/// the origin), optionally mirror x → −x first, then translate.
#[derive(Clone, Copy, Debug)]
pub struct Similarity {
    pub mirror_x: bool,
    pub angle: f64,
    pub scale: f64,
    pub shift: Point,
}

impl Similarity {
    pub fn apply(&self, q: Point) -> Point {
        let q = if self.mirror_x { p(-q.x, q.y) } else { q };
        let (s, c) = self.angle.sin_cos();
        p(c * q.x - s * q.y, s * q.x + c * q.y) * self.scale + self.shift
    }
    pub fn segment(&self, seg: &Segment) -> Segment {
        match seg {
            Segment::Line { a, b } => Segment::line(self.apply(*a), self.apply(*b)),
            Segment::Arc(arc) => {
                let center = self.apply(arc.center);
                let start = self.apply(arc.start);
                let end = self.apply(arc.end);
                Segment::Arc(Arc {
                    center,
                    radius: arc.radius * self.scale.abs(),
                    start,
                    end,
                    sweep: if self.mirror_x { -arc.sweep } else { arc.sweep },
                })
            }
            Segment::Curve(_) => panic!("test drawings here have no curve pieces"),
        }
    }
    pub fn piece(&self, pc: &Piece) -> Piece {
        Piece {
            segments: pc.segments.iter().map(|s| self.segment(s)).collect(),
            ..pc.clone()
        }
    }
}

/// The zip entry `name` of an .xlsx file (its XML parts), as text.
pub fn zip_part(bytes: &[u8], name: &str) -> String {
    use std::io::Read;
    let mut archive = zip::ZipArchive::new(std::io::Cursor::new(bytes)).expect("a zip file");
    let mut text = String::new();
    archive
        .by_name(name)
        .unwrap_or_else(|_| panic!("no part {name}"))
        .read_to_string(&mut text)
        .expect("UTF-8 XML");
    text
}
