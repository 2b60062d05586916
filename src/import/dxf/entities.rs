//! Entity readers of the ENTITIES section, and the object coordinate system.
//!
//! LINE, ARC, CIRCLE, LWPOLYLINE and 2-D POLYLINE become [`Piece`]s; every other entity is
//! passed over pair by pair (values unparsed) and counted by type. An entity is decided on in
//! this order, and counted under the first reason that leaves it out:
//! 1. its type (not read, or a 3-D polyline or mesh);
//! 2. paper space (group 67 = 1);
//! 3. its layer (off, frozen, or not selected by the layer globs);
//! 4. its geometry (non-finite numbers, out of the drawing plane, zero length or radius).
//!
//! ARC, CIRCLE, LWPOLYLINE and POLYLINE coordinates are in the entity's object coordinate
//! system (OCS), given by its extrusion direction N (groups 210/220/230, default 0,0,1); LINE is
//! in world coordinates. See [`Plane`] for how OCS coordinates reach the drawing plane.

use std::borrow::Cow;

use super::blocks::Item;
use super::codes::{Pair, Value};
use super::hatch::{parse_hatch, HatchBoundary, HatchEdge, HatchPath};
use super::{decode_text, Reader, Verdict};
use crate::geom::curve::{Affine, Curve, EllipseArc, Nurbs};
use crate::geom::curve_pieces::{curve_segments, transformed_segments};
use crate::geom::{Arc, CurveTable, Point, Segment};
use crate::import::{Handle, ImportError, LayerName, Location, Origin, Piece};

/// Skip-reason texts used in more than one place.
pub(crate) mod reason {
    pub const PAPER_SPACE: &str = "paper space";
    pub const POLYLINE_3D: &str = "3-D POLYLINE";
}

/// A polyline vertex as read, in the OCS.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Vertex {
    x: f64,
    y: f64,
    bulge: f64,
    has_y: bool,
}

/// Groups shared by all entities.
struct Common<'a> {
    /// The layer name (group 8), when the entity has one; the first one counts.
    layer: Option<&'a [u8]>,
    /// The layer's entry among the reader's verdicts, once looked up (by
    /// [`Reader::left_out`], so that [`Reader::admit`] need not look again).
    layer_entry: Option<usize>,
    handle: Option<&'a [u8]>,
    paper: bool,
    /// Extrusion direction N (groups 210/220/230).
    normal: [f64; 3],
    at: Location,
}

impl<'a> Common<'a> {
    /// The groups of the entity whose `0/TYPE` pair is at `at`.
    fn new(at: Location) -> Self {
        Common {
            layer: None,
            layer_entry: None,
            handle: None,
            paper: false,
            normal: [0.0, 0.0, 1.0],
            at,
        }
    }

    /// The entity's layer: an entity without group 8 is on layer 0 (DXF reference, common
    /// group codes).
    fn layer(&self) -> &'a [u8] {
        self.layer.unwrap_or(b"0")
    }

    /// Take a pair if it is one of the shared groups. `ocs` entities also read their
    /// extrusion direction; LINE ignores its own. Returns whether the pair was the entity's
    /// layer name, which the readers then ask [`Reader::left_out_by_layer`] about. Of two
    /// layer names (not seen in real files) the first counts, as in the census.
    #[inline(always)]
    fn take(&mut self, p: &Pair<'a>, ocs: bool) -> Result<bool, ImportError> {
        match p.code {
            8 if self.layer.is_none() => {
                self.layer = Some(p.text());
                return Ok(true);
            }
            5 => self.handle = Some(p.text()),
            67 => self.paper = p.int()? == 1,
            210 if ocs => self.normal[0] = p.real()?,
            220 if ocs => self.normal[1] = p.real()?,
            230 if ocs => self.normal[2] = p.real()?,
            _ => {}
        }
        Ok(false)
    }
}

/// How an entity's OCS maps onto the drawing (world XY) plane.
///
/// The OCS axes follow the Arbitrary Axis Algorithm (DXF reference, "Object Coordinate
/// Systems (OCS)", "Arbitrary Axis Algorithm"; from memory) in [`arbitrary_axes`]. Only
/// entities whose N is parallel to world Z lie in the drawing plane; for those the map is the
/// identity (N = +Z) or the mirror x → −x (N = −Z, OCS x axis = (−1, 0, 0), y axis = (0, 1, 0)).
/// A normal within 1e-6 of ±Z (float noise from converters) is used through the full axes;
/// a circle in such a plane projects to an ellipse whose axes differ by less than
/// 1 − cos(1e-6) ≈ 5e-13 relative, below any tolerance downstream.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Plane {
    Identity,
    MirrorX,
    /// Nearly ±Z: world x,y of the OCS axes and of N.
    Tilted {
        ax: Point,
        ay: Point,
        n: Point,
        flips: bool,
    },
}

/// Largest sine of the angle between N and world Z still taken as the drawing plane.
const PLANE_TILT: f64 = 1e-6;

/// Why an extrusion direction cannot be used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum PlaneError {
    /// Zero or non-finite N.
    Invalid,
    /// N not parallel to world Z.
    OutOfPlane,
}

impl Plane {
    pub(crate) fn from_normal(n: [f64; 3]) -> Result<Plane, PlaneError> {
        let [nx, ny, nz] = n;
        if !(nx.is_finite() && ny.is_finite() && nz.is_finite()) {
            return Err(PlaneError::Invalid);
        }
        if nx == 0.0 && ny == 0.0 {
            return match nz {
                z if z > 0.0 => Ok(Plane::Identity),
                z if z < 0.0 => Ok(Plane::MirrorX),
                _ => Err(PlaneError::Invalid),
            };
        }
        let Some((ax, ay, n)) = arbitrary_axes(n) else {
            return Err(PlaneError::Invalid);
        };
        if n[0].hypot(n[1]) > PLANE_TILT {
            return Err(PlaneError::OutOfPlane);
        }
        Ok(Plane::Tilted {
            ax: Point::new(ax[0], ax[1]),
            ay: Point::new(ay[0], ay[1]),
            n: Point::new(n[0], n[1]),
            flips: n[2] < 0.0,
        })
    }

    /// World x,y of the OCS point (x, y, z).
    #[inline]
    pub(crate) fn point(&self, x: f64, y: f64, z: f64) -> Point {
        match *self {
            Plane::Identity => Point::new(x, y),
            Plane::MirrorX => Point::new(-x, y),
            Plane::Tilted { ax, ay, n, .. } => ax * x + ay * y + n * z,
        }
    }

    /// World angle (radians) of the OCS direction at `deg` degrees.
    pub(crate) fn angle(&self, deg: f64) -> f64 {
        match *self {
            Plane::Identity => deg.rem_euclid(360.0).to_radians(),
            Plane::MirrorX => (180.0 - deg).rem_euclid(360.0).to_radians(),
            Plane::Tilted { ax, ay, .. } => {
                let (s, c) = deg.to_radians().sin_cos();
                let d = ax * c + ay * s;
                d.y.atan2(d.x)
            }
        }
    }

    /// The map of OCS points at elevation `z` onto the drawing plane, as an affine map.
    pub(crate) fn affine(&self, z: f64) -> Affine {
        match *self {
            Plane::Identity => Affine::IDENTITY,
            Plane::MirrorX => Affine::scaling(-1.0, 1.0),
            Plane::Tilted { ax, ay, n, .. } => Affine {
                m: [ax.x, ay.x, ax.y, ay.y],
                t: n * z,
            },
        }
    }

    /// Whether counter-clockwise in the OCS is clockwise in the world (N points down).
    pub(crate) fn flips(&self) -> bool {
        match *self {
            Plane::Identity => false,
            Plane::MirrorX => true,
            Plane::Tilted { flips, .. } => flips,
        }
    }
}

/// The OCS axes (Ax, Ay) and the normalised N for an extrusion direction N, by the Arbitrary
/// Axis Algorithm (DXF reference, "Object Coordinate Systems (OCS)", "Arbitrary Axis
/// Algorithm"; from memory):
///
///   if |Nx| < 1/64 and |Ny| < 1/64: Ax = Wy × N, else Ax = Wz × N;  Ax normalised;
///   Ay = N × Ax, normalised.
///
/// `None` for a zero or non-finite N.
pub(crate) fn arbitrary_axes(n: [f64; 3]) -> Option<([f64; 3], [f64; 3], [f64; 3])> {
    let len = (n[0] * n[0] + n[1] * n[1] + n[2] * n[2]).sqrt();
    if !(len.is_finite() && len > 0.0) {
        return None;
    }
    let n = [n[0] / len, n[1] / len, n[2] / len];
    const LIMIT: f64 = 1.0 / 64.0;
    let ax = if n[0].abs() < LIMIT && n[1].abs() < LIMIT {
        cross([0.0, 1.0, 0.0], n)
    } else {
        cross([0.0, 0.0, 1.0], n)
    };
    let ax = unit(ax)?;
    let ay = unit(cross(n, ax))?;
    Some((ax, ay, n))
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

fn unit(a: [f64; 3]) -> Option<[f64; 3]> {
    let len = (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt();
    (len.is_finite() && len > 0.0).then(|| [a[0] / len, a[1] / len, a[2] / len])
}

/// [`Handle::parse`] (hexadecimal digits of group 5), with the digit test done without a
/// branch per digit: handles mix digits and letters in no order a branch could learn.
fn handle(text: &[u8]) -> Option<Handle> {
    let t = text.trim_ascii();
    if t.is_empty() || t.len() > 16 {
        return None;
    }
    let mut v = 0u64;
    let mut bad = false;
    for &b in t {
        let digit = b.wrapping_sub(b'0');
        let letter = (b | 0x20).wrapping_sub(b'a'); // 'A'..='F' as 'a'..='f'
        bad |= digit > 9 && letter > 5;
        let d = if digit <= 9 {
            digit
        } else {
            letter.wrapping_add(10)
        };
        v = (v << 4) | u64::from(d & 15);
    }
    (!bad).then_some(Handle(v))
}

/// The reason text for an entity type that is not read.
fn type_reason(ty: &[u8]) -> Cow<'_, str> {
    match std::str::from_utf8(ty) {
        Ok(s) => s.into(),
        Err(_) => decode_text(ty).into(),
    }
}

/// Sweep of an ARC in degrees from its start and end angles: counter-clockwise from start to
/// end, in (0, 360] (DXF reference, ARC: angles in degrees; an end at or before the start
/// wraps once around).
pub(crate) fn arc_sweep_deg(start: f64, end: f64) -> f64 {
    let sweep = (end - start).rem_euclid(360.0);
    if sweep == 0.0 {
        360.0
    } else {
        sweep
    }
}

impl<'a> Reader<'a, '_> {
    /// Move to the next pair of the current entity (in `self.pairs.cur`); `false` at the
    /// next `0/…` pair, which is left for the next read.
    #[inline(always)]
    pub(super) fn field(&mut self) -> Result<bool, ImportError> {
        self.advance_in("ENTITIES")?;
        if self.pairs.cur.code == 0 {
            self.pairs.replay();
            Ok(false)
        } else {
            Ok(true)
        }
    }

    /// Pass over the rest of an entity without parsing values.
    pub(super) fn skip_fields(&mut self) -> Result<(), ImportError> {
        while self.field()? {}
        Ok(())
    }

    /// ENTITIES: one entity per `0/TYPE` pair until `0/ENDSEC`.
    pub(super) fn read_entities(&mut self) -> Result<(), ImportError> {
        loop {
            self.advance_in("ENTITIES")?;
            crate::time_limit::check("reading the entities");
            if self.opts.census && self.pairs.cur.code == 0 {
                self.count_entity(); // for `sectio explain` (census.rs)
            }
            let p = &self.pairs.cur;
            if p.code != 0 {
                continue; // pairs between the section name and the first entity
            }
            let at = p.location();
            match p.text() {
                b"ENDSEC" | b"SECTION" | b"EOF" => {
                    if self.section_end("ENTITIES") {
                        return Ok(());
                    }
                }
                _ => self.read_entity(at)?,
            }
        }
    }

    /// The entity whose `0/TYPE` pair is the current one, in ENTITIES or inside a block.
    pub(super) fn read_entity(&mut self, at: Location) -> Result<(), ImportError> {
        match self.pairs.cur.text() {
            // 3DLINE: the Release 10 name of a LINE with z coordinates.
            b"LINE" => self.read_line(at, "LINE"),
            b"3DLINE" => self.read_line(at, "3DLINE"),
            b"ARC" => self.read_arc(at, false),
            b"CIRCLE" => self.read_arc(at, true),
            b"LWPOLYLINE" => self.read_lwpolyline(at),
            b"POLYLINE" => self.read_polyline(at),
            b"ELLIPSE" => self.read_ellipse(at),
            b"SPLINE" => self.read_spline(at),
            b"INSERT" | b"MINSERT" => self.read_insert(at),
            b"HATCH" if self.opts.hatch_outlines => self.read_hatch(at),
            // The type name borrows the file, not the reader: no copy per skipped entity.
            ty => {
                self.skip_fields()?;
                if self.block.is_none() {
                    self.skip(&type_reason(ty));
                }
                Ok(())
            }
        }
    }

    /// The ATTRIB entities after an INSERT, and their SEQEND: part of the INSERT.
    pub(super) fn skip_attributes(&mut self) -> Result<(), ImportError> {
        loop {
            let p = self.next_in("ENTITIES")?;
            if p.is(0, b"ATTRIB") {
                self.skip_fields()?;
            } else if p.is(0, b"SEQEND") {
                return self.skip_fields();
            } else {
                self.pairs.push_back(p);
                return Ok(());
            }
        }
    }

    /// Paper space and layer checks: the layer name to use, or `None` when counted as skipped.
    /// Inside a block both wait until an INSERT places it (see `blocks.rs`).
    fn admit(&mut self, c: &Common<'a>) -> Option<LayerName> {
        if self.block.is_some() {
            return Some(self.block_layer.clone());
        }
        if c.paper {
            self.skip(reason::PAPER_SPACE);
            return None;
        }
        let i = match c.layer_entry {
            Some(i) => i,
            None => self.layers.verdict(c.layer(), self.opts),
        };
        let entry = &mut self.layers.entries[i]; // `verdict` returns an index into `entries`
        match &entry.verdict {
            Verdict::Keep(name) => Some(name.clone()),
            Verdict::Skip(_) => {
                entry.skipped += 1; // counted under its reason in `finish`
                None
            }
        }
    }

    /// Whether [`admit`](Self::admit) will leave the entity out for its layer or for paper
    /// space, as far as its groups read so far tell; counts nothing, and notes the layer's
    /// entry in `c` for `admit`. Inside a block both wait for the INSERT, so nothing is left
    /// out there.
    fn left_out(&mut self, c: &mut Common<'a>) -> bool {
        if self.block.is_some() {
            return false;
        }
        if c.paper {
            return true;
        }
        let i = self.layers.verdict(c.layer(), self.opts);
        c.layer_entry = Some(i);
        matches!(self.layers.entries[i].verdict, Verdict::Skip(_))
    }

    /// Called by the entity readers right after the layer name (group 8): when the entity is
    /// left out ([`left_out`](Self::left_out)), passes over the rest of it without parsing
    /// its numbers, counts it as `admit` does, and returns `true` for the reader to return.
    /// The shared groups are still taken (`Common::take`, without the extrusion direction), so
    /// that an entity in paper space (group 67) is counted as such whichever group comes first. Layer names precede the coordinates in every entity (the common
    /// groups come first, DXF reference), so a left-out layer costs the reader no numbers.
    #[inline(never)]
    fn left_out_by_layer(&mut self, c: &mut Common<'a>) -> Result<bool, ImportError> {
        if !self.left_out(c) {
            return Ok(false);
        }
        while self.field()? {
            // The shared groups only (no extrusion direction: nothing is parsed as a number).
            c.take(&self.pairs.cur, false)?;
        }
        let kept = self.admit(c);
        debug_assert!(kept.is_none(), "left_out and admit disagree");
        Ok(true)
    }

    /// Count an entity left out for a non-finite number, with one note for the file.
    pub(super) fn skip_non_finite(&mut self, entity: &'static str, at: Location) {
        self.skip(&format!("non-finite value: {entity}"));
        self.note_once("non-finite", || {
            format!("{entity} at {at} has a non-finite coordinate (NaN or infinity) and was left out (further cases only counted)")
        });
    }

    /// The map of an OCS entity onto the drawing plane, or `None` when counted as skipped.
    fn plane(&mut self, c: &Common<'a>, entity: &'static str) -> Option<Plane> {
        self.plane_at(c.normal, entity, c.at)
    }

    /// [`Reader::plane`] for an extrusion direction `normal` of the entity at `at`.
    pub(super) fn plane_at(
        &mut self,
        normal: [f64; 3],
        entity: &'static str,
        at: Location,
    ) -> Option<Plane> {
        match Plane::from_normal(normal) {
            Ok(plane) => Some(plane),
            Err(PlaneError::OutOfPlane) => {
                self.skip(&format!("not in the drawing plane: {entity}"));
                None
            }
            Err(PlaneError::Invalid) => {
                self.skip(&format!("invalid extrusion direction: {entity}"));
                self.note_once("bad normal", || {
                    format!("{entity} at {at} has a zero or non-finite extrusion direction (groups 210/220/230) and was left out (further cases only counted)")
                });
                None
            }
        }
    }

    fn piece(
        &mut self,
        c: &Common<'a>,
        entity: &'static str,
        layer: LayerName,
        segments: Vec<Segment>,
        closed: bool,
    ) {
        let origin = Origin {
            entity,
            location: c.at,
            handle: c.handle.and_then(handle),
            in_block: self.block.is_some(),
        };
        match &mut self.block {
            Some(block) => block.items.push(Item::Piece {
                segments,
                closed,
                layer: c.layer().to_vec(),
                origin,
            }),
            None => self.push_piece(Piece {
                segments,
                closed,
                layer,
                origin,
            }),
        }
    }

    /// A curve read from `c`'s entity: kept whole inside a block, as curve pieces in model
    /// space.
    fn curve(&mut self, c: &Common<'a>, entity: &'static str, layer: LayerName, curve: Curve) {
        let origin = Origin {
            entity,
            location: c.at,
            handle: c.handle.and_then(handle),
            in_block: self.block.is_some(),
        };
        if let Some(block) = &mut self.block {
            block.items.push(Item::Curve {
                curve,
                layer: c.layer().to_vec(),
                origin,
            });
            return;
        }
        let segments = curve_segments(&curve, &mut self.drawing.curves);
        if segments.is_empty() {
            self.skip(&format!("{entity} with no extent"));
            return;
        }
        let closed = segments[0].start() == segments[segments.len() - 1].end();
        self.push_piece(Piece {
            segments,
            closed,
            layer,
            origin,
        });
    }

    /// LINE (and 3DLINE): start 10/20, end 11/21, in world coordinates; z (30/31) is dropped.
    fn read_line(&mut self, at: Location, entity: &'static str) -> Result<(), ImportError> {
        let mut c = Common::new(at);
        let (mut x1, mut y1, mut x2, mut y2) = (0.0, 0.0, 0.0, 0.0);
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                10 => x1 = p.real()?,
                20 => y1 = p.real()?,
                11 => x2 = p.real()?,
                21 => y2 = p.real()?,
                _ => {
                    if c.take(p, false)? && self.left_out_by_layer(&mut c)? {
                        return Ok(());
                    }
                }
            }
        }
        let Some(layer) = self.admit(&c) else {
            return Ok(());
        };
        let (a, b) = (Point::new(x1, y1), Point::new(x2, y2));
        if !(a.is_finite() && b.is_finite()) {
            self.skip_non_finite(entity, c.at);
        } else if a == b {
            self.skip(&format!("zero-length {entity}"));
        } else {
            self.piece(&c, entity, layer, vec![Segment::line(a, b)], false);
        }
        Ok(())
    }

    /// ARC (centre 10/20/30, radius 40, start and end angles 50/51 in degrees,
    /// counter-clockwise in the OCS) and CIRCLE (centre, radius).
    fn read_arc(&mut self, at: Location, circle: bool) -> Result<(), ImportError> {
        let entity = if circle { "CIRCLE" } else { "ARC" };
        let mut c = Common::new(at);
        let (mut x, mut y, mut z, mut r) = (0.0, 0.0, 0.0, 0.0);
        let (mut a0, mut a1) = (0.0, 360.0);
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                10 => x = p.real()?,
                20 => y = p.real()?,
                30 => z = p.real()?,
                40 => r = p.real()?,
                50 if !circle => a0 = p.real()?,
                51 if !circle => a1 = p.real()?,
                _ => {
                    if c.take(p, true)? && self.left_out_by_layer(&mut c)? {
                        return Ok(());
                    }
                }
            }
        }
        let Some(layer) = self.admit(&c) else {
            return Ok(());
        };
        if ![x, y, z, r, a0, a1].iter().all(|v| v.is_finite()) {
            self.skip_non_finite(entity, c.at);
            return Ok(());
        }
        let Some(plane) = self.plane(&c, entity) else {
            return Ok(());
        };
        if r <= 0.0 {
            self.skip(&format!("{entity} with radius <= 0"));
            return Ok(());
        }
        let center = plane.point(x, y, z);
        let segment = if circle {
            Segment::Arc(Arc::circle(center, r))
        } else {
            // A mirrored OCS turns the counter-clockwise sweep clockwise in the world.
            let sweep = arc_sweep_deg(a0, a1).to_radians();
            let sweep = if plane.flips() { -sweep } else { sweep };
            Segment::Arc(Arc::from_center(center, r, plane.angle(a0), sweep))
        };
        if !segment.is_finite() {
            self.skip_non_finite(entity, c.at);
            return Ok(());
        }
        self.piece(&c, entity, layer, vec![segment], circle);
        Ok(())
    }

    /// ELLIPSE (DXF reference, ELLIPSE; from memory): centre 10/20/30 and major-axis end
    /// 11/21/31 relative to the centre, both in world coordinates; ratio of minor to major
    /// axis 40; start and end parameters 41/42 in radians (0 and 2π for a full ellipse),
    /// counter-clockwise about the extrusion direction N (210/220/230). The minor axis is
    /// ratio · (N × major) (crates.md §1, confirmed there against a general-purpose DXF
    /// library), so with N = −Z the parameter runs clockwise in the drawing.
    fn read_ellipse(&mut self, at: Location) -> Result<(), ImportError> {
        let mut c = Common::new(at);
        let (mut center, mut major) = ([0.0; 3], [0.0; 3]);
        let (mut ratio, mut t0, mut t1) = (1.0, 0.0, std::f64::consts::TAU);
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                10 => center[0] = p.real()?,
                20 => center[1] = p.real()?,
                30 => center[2] = p.real()?,
                11 => major[0] = p.real()?,
                21 => major[1] = p.real()?,
                31 => major[2] = p.real()?,
                40 => ratio = p.real()?,
                41 => t0 = p.real()?,
                42 => t1 = p.real()?,
                _ => {
                    if c.take(p, true)? && self.left_out_by_layer(&mut c)? {
                        return Ok(());
                    }
                }
            }
        }
        let Some(layer) = self.admit(&c) else {
            return Ok(());
        };
        let numbers = [
            center[0], center[1], major[0], major[1], major[2], ratio, t0, t1,
        ];
        if !numbers.iter().all(|v| v.is_finite()) {
            self.skip_non_finite("ELLIPSE", at);
            return Ok(());
        }
        if self.plane(&c, "ELLIPSE").is_none() {
            return Ok(());
        }
        let u = Point::new(major[0], major[1]);
        if ratio <= 0.0 || u.norm() == 0.0 {
            self.skip("ELLIPSE with a zero axis");
            return Ok(());
        }
        let len = c.normal.iter().map(|v| v * v).sum::<f64>().sqrt();
        let n = c.normal.map(|v| v / len);
        // N × major, in the drawing plane.
        let v = Point::new(
            n[1] * major[2] - n[2] * major[1],
            n[2] * major[0] - n[0] * major[2],
        ) * ratio;
        let sweep = arc_sweep_deg(t0.to_degrees(), t1.to_degrees()).to_radians();
        let t0 = t0.rem_euclid(std::f64::consts::TAU);
        let ellipse = EllipseArc {
            center: Point::new(center[0], center[1]),
            u,
            v,
            t0,
            t1: t0 + sweep,
        };
        self.curve(&c, "ELLIPSE", layer, Curve::Ellipse(ellipse));
        Ok(())
    }

    /// SPLINE (DXF reference, SPLINE; from memory): flags 70 (1 closed, 2 periodic, 4
    /// rational, 8 planar), degree 71, knots 40 (repeated), weights 41 (repeated, rational
    /// splines), control points 10/20/30, fit points 11/21/31, start and end tangents
    /// 12/22/32 and 13/23/33, all in world coordinates. The counts 72/73/74 are checked
    /// against what follows by the curve's own checks. A spline given only by fit points is
    /// the interpolating curve through them (see [`Nurbs::interpolate`]).
    fn read_spline(&mut self, at: Location) -> Result<(), ImportError> {
        let mut c = Common::new(at);
        let (mut flags, mut degree) = (0i64, 3i64);
        let (mut knots, mut weights) = (Vec::new(), Vec::new());
        let (mut ctrl, mut fit): (Vec<[f64; 3]>, Vec<[f64; 3]>) = (Vec::new(), Vec::new());
        let (mut t_start, mut t_end): (Option<[f64; 3]>, Option<[f64; 3]>) = (None, None);
        // Coordinates arrive as x, then y, then z of the last point started.
        fn set(points: &mut [[f64; 3]], k: usize, v: f64) {
            if let Some(p) = points.last_mut() {
                p[k] = v;
            }
        }
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                70 => flags = p.int()?,
                71 => degree = p.int()?,
                40 => knots.push(p.real()?),
                41 => weights.push(p.real()?),
                10 => ctrl.push([p.real()?, 0.0, 0.0]),
                20 => set(&mut ctrl, 1, p.real()?),
                30 => set(&mut ctrl, 2, p.real()?),
                11 => fit.push([p.real()?, 0.0, 0.0]),
                21 => set(&mut fit, 1, p.real()?),
                31 => set(&mut fit, 2, p.real()?),
                12 => t_start = Some([p.real()?, 0.0, 0.0]),
                22 => t_start.get_or_insert([0.0; 3])[1] = p.real()?,
                32 => t_start.get_or_insert([0.0; 3])[2] = p.real()?,
                13 => t_end = Some([p.real()?, 0.0, 0.0]),
                23 => t_end.get_or_insert([0.0; 3])[1] = p.real()?,
                33 => t_end.get_or_insert([0.0; 3])[2] = p.real()?,
                _ => {
                    if c.take(p, true)? && self.left_out_by_layer(&mut c)? {
                        return Ok(());
                    }
                }
            }
        }
        let Some(layer) = self.admit(&c) else {
            return Ok(());
        };
        let all = ctrl
            .iter()
            .chain(&fit)
            .flatten()
            .chain(&knots)
            .chain(&weights);
        if !all.into_iter().all(|v| v.is_finite()) {
            self.skip_non_finite("SPLINE", at);
            return Ok(());
        }
        // In the drawing plane: every point at one height (to 1e-9 of the spline's size).
        let pts = if ctrl.is_empty() { &fit } else { &ctrl };
        let (zmin, zmax) = pts
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
                (a.min(p[2]), b.max(p[2]))
            });
        let size = pts
            .iter()
            .fold(crate::geom::BBox::EMPTY, |mut b, p| {
                b.add_point(Point::new(p[0], p[1]));
                b
            })
            .diagonal();
        if zmax - zmin > 1e-9 * size.max(f64::MIN_POSITIVE) {
            self.skip("not in the drawing plane: SPLINE");
            return Ok(());
        }
        let xy = |p: &[f64; 3]| Point::new(p[0], p[1]);
        let degree = usize::try_from(degree).unwrap_or(0);
        let rational = flags & 4 != 0 || weights.iter().any(|&w| w != 1.0);
        let curve = if ctrl.is_empty() {
            let fit: Vec<Point> = fit.iter().map(xy).collect();
            Nurbs::interpolate(
                &fit,
                degree.max(1),
                t_start.as_ref().map(xy),
                t_end.as_ref().map(xy),
            )
        } else {
            let mut weights = if rational { weights } else { Vec::new() };
            let mut ctrl: Vec<Point> = ctrl.iter().map(xy).collect();
            let mut knots = knots;
            if flags & 2 != 0 && knots.len() == ctrl.len() + 1 {
                (ctrl, weights, knots) = unwrap_periodic(degree, ctrl, weights, &knots);
            }
            Nurbs::new(degree, knots, ctrl, weights)
        };
        match curve {
            Ok(nurbs) => {
                let curve = Curve::Nurbs(nurbs);
                if flags & 1 != 0 && curve.start().dist(curve.end()) > 1e-9 * size {
                    self.note_once("open closed spline", || {
                        format!("SPLINE at {at} is flagged closed but its curve does not end where it starts; read as drawn (further cases not noted)")
                    });
                }
                self.curve(&c, "SPLINE", layer, curve);
            }
            Err(why) => {
                self.skip("SPLINE that is not a valid curve");
                self.note_once("bad spline", || {
                    format!("SPLINE at {at} was left out: {why} (further cases only counted)")
                });
            }
        }
        Ok(())
    }

    /// HATCH, with `--hatch-outlines`: every boundary path becomes pieces in the drawing
    /// plane (the hatch is an OCS entity at its elevation). Polyline paths keep their bulges;
    /// edge paths give lines, arcs, elliptical arcs and splines, chained like loose entities.
    /// The boundary groups are parsed by `hatch.rs`; a path that cannot be read leaves the
    /// hatch out with a note.
    ///
    /// Clockwise edges (ccw flag 73 = 0) store the angles of the mirrored counter-clockwise
    /// edge: a clockwise arc starts at −50° and runs clockwise to −51° (found in the corpus:
    /// every such path closes this way and none closes as written; see `hatch.rs`). Elliptic
    /// edges are taken the same way, with 50/51 as parameters in degrees.
    fn read_hatch(&mut self, at: Location) -> Result<(), ImportError> {
        let mut c = Common::new(at);
        let mut owned: Vec<(i32, Vec<u8>)> = Vec::new();
        while self.field()? {
            let p = self.pairs.cur;
            c.take(&p, true)?;
            owned.push((p.code, hatch_text(&p)));
        }
        let Some(layer) = self.admit(&c) else {
            return Ok(());
        };
        let pairs: Vec<(i32, &[u8])> = owned.iter().map(|(k, v)| (*k, v.as_slice())).collect();
        let hatch = match parse_hatch(&pairs) {
            Ok(h) => h,
            Err(why) => {
                self.skip("HATCH whose boundary cannot be read");
                self.note_once("bad hatch", || {
                    format!("HATCH at {at} was left out: {why} (further cases only counted)")
                });
                return Ok(());
            }
        };
        let Some(plane) = self.plane_at(hatch.normal, "HATCH", at) else {
            return Ok(());
        };
        let f = plane.affine(hatch.elevation);
        for path in &hatch.paths {
            match hatch_path(path, &f, &mut self.drawing.curves) {
                Ok(parts) => {
                    for part in parts {
                        match part {
                            PathPart::Segments(segments, closed) => {
                                self.piece(&c, "HATCH", layer.clone(), segments, closed)
                            }
                            PathPart::Curve(curve) => {
                                self.curve(&c, "HATCH", layer.clone(), curve.transformed(&f))
                            }
                        }
                    }
                }
                Err(why) => {
                    self.skip("HATCH boundary path that is not a valid curve");
                    self.note_once("bad hatch path", || {
                        format!("a boundary path of the HATCH at {at} was left out: {why} (further cases only counted)")
                    });
                }
            }
        }
        Ok(())
    }

    /// LWPOLYLINE: flags 70 (bit 1 = closed), elevation 38, vertices 10/20 each optionally
    /// followed by a bulge 42 (DXF reference, LWPOLYLINE). Widths (40/41/43) and vertex ids
    /// (91) are not needed.
    fn read_lwpolyline(&mut self, at: Location) -> Result<(), ImportError> {
        let mut c = Common::new(at);
        let mut vertices = std::mem::take(&mut self.vertices);
        vertices.clear();
        let (mut flags, mut elevation, mut count) = (0i64, 0.0, None);
        let mut broken = false;
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                10 => vertices.push(Vertex {
                    x: p.real()?,
                    y: 0.0,
                    bulge: 0.0,
                    has_y: false,
                }),
                20 => match vertices.last_mut() {
                    Some(v) if !v.has_y => {
                        v.y = p.real()?;
                        v.has_y = true;
                    }
                    _ => broken = true,
                },
                42 => match vertices.last_mut() {
                    Some(v) => v.bulge = p.real()?,
                    None => broken = true,
                },
                38 => elevation = p.real()?,
                70 => flags = p.int()?,
                90 => {
                    let n = p.int()?;
                    count = Some(n);
                    // Room for the announced vertices, but no more than the rest of the file
                    // could hold (a vertex takes at least 8 bytes), whatever group 90 says.
                    let room = self.pairs.bytes_left() / 8;
                    vertices.reserve(usize::try_from(n).unwrap_or(0).min(room));
                }
                _ => {
                    if c.take(p, true)? && self.left_out_by_layer(&mut c)? {
                        self.vertices = vertices;
                        return Ok(());
                    }
                }
            }
        }
        let result = self.finish_polyline(
            &c,
            "LWPOLYLINE",
            &vertices,
            flags & 1 != 0,
            elevation,
            broken,
        );
        if let Some(n) = count.filter(|&n| n != vertices.len() as i64) {
            let (at, found) = (c.at, vertices.len());
            self.note_once("vertex count", || {
                format!("LWPOLYLINE at {at} announces {n} vertices (group 90) but has {found}; the vertices found were used")
            });
        }
        self.vertices = vertices;
        result
    }

    /// POLYLINE with its VERTEX entities and SEQEND (DXF reference, POLYLINE and VERTEX).
    /// Flags 70: 1 = closed, 2 = curve-fit, 4 = spline-fit, 8 = 3-D polyline, 16 = 3-D mesh,
    /// 64 = polyface mesh. Vertex flag 16 marks a spline frame control point, which is not
    /// on the curve and is dropped. Elevation is the z of the POLYLINE's own point (30).
    fn read_polyline(&mut self, at: Location) -> Result<(), ImportError> {
        let mut c = Common::new(at);
        let (mut flags, mut elevation) = (0i64, 0.0);
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                30 => elevation = p.real()?,
                70 => flags = p.int()?,
                _ => {
                    c.take(p, true)?;
                }
            }
        }
        let mut vertices = std::mem::take(&mut self.vertices);
        vertices.clear();
        // The vertices' numbers are parsed only when the polyline can be kept: a 3-D
        // polyline or a left-out layer is counted as skipped below without them.
        let numbers = flags & (8 | 16 | 64) == 0 && !self.left_out(&mut c);
        let result = self.read_vertices(&c, &mut vertices, numbers);
        let result = result.and_then(|()| {
            if flags & (8 | 16 | 64) != 0 {
                self.skip(reason::POLYLINE_3D);
                return Ok(());
            }
            if flags & (2 | 4) != 0 {
                let at = c.at;
                self.note_once("fit polyline", || {
                    format!("POLYLINE at {at} is curve- or spline-fit; its fit curve is read as the polyline through its vertices (further cases not noted)")
                });
            }
            self.finish_polyline(&c, "POLYLINE", &vertices, flags & 1 != 0, elevation, false)
        });
        self.vertices = vertices;
        result
    }

    /// The VERTEX entities after a POLYLINE, and its SEQEND; with `numbers` false they are
    /// passed over without parsing anything.
    fn read_vertices(
        &mut self,
        c: &Common<'a>,
        vertices: &mut Vec<Vertex>,
        numbers: bool,
    ) -> Result<(), ImportError> {
        loop {
            self.advance_in("ENTITIES")?;
            let p = &self.pairs.cur;
            if p.is(0, b"VERTEX") && !numbers {
                self.skip_fields()?;
            } else if p.is(0, b"VERTEX") {
                let mut v = Vertex {
                    x: 0.0,
                    y: 0.0,
                    bulge: 0.0,
                    has_y: true,
                };
                let mut vflags = 0i64;
                while self.field()? {
                    let f = &self.pairs.cur;
                    match f.code {
                        10 => v.x = f.real()?,
                        20 => v.y = f.real()?,
                        42 => v.bulge = f.real()?,
                        70 => vflags = f.int()?,
                        _ => {}
                    }
                }
                if vflags & 16 == 0 {
                    vertices.push(v);
                }
            } else if p.is(0, b"SEQEND") {
                return self.skip_fields();
            } else if p.code == 0 {
                // Another entity or the section end: SEQEND is missing.
                self.pairs.replay();
                let at = c.at;
                self.note_once("no SEQEND", || {
                    format!("POLYLINE at {at} has no SEQEND; its vertices end at the next entity")
                });
                return Ok(());
            }
            // Pairs other than code 0 here belong to no entity: passed over.
        }
    }

    /// Checks shared by both polyline kinds, then the piece.
    fn finish_polyline(
        &mut self,
        c: &Common<'a>,
        entity: &'static str,
        vertices: &[Vertex],
        closed: bool,
        elevation: f64,
        broken: bool,
    ) -> Result<(), ImportError> {
        let Some(layer) = self.admit(c) else {
            return Ok(());
        };
        if broken || vertices.iter().any(|v| !v.has_y) {
            self.skip(&format!("{entity} with a vertex missing x or y"));
            return Ok(());
        }
        let finite = elevation.is_finite()
            && vertices
                .iter()
                .all(|v| v.x.is_finite() && v.y.is_finite() && v.bulge.is_finite());
        if !finite {
            self.skip_non_finite(entity, c.at);
            return Ok(());
        }
        let Some(plane) = self.plane(c, entity) else {
            return Ok(());
        };
        let segments = polyline_segments(vertices, closed, &plane, elevation);
        // The vertices are finite (checked above), and on the identity or mirror plane a
        // line's ends are copies of them: only arcs, and all segments of a tilted plane, can
        // have come out non-finite.
        let copied = matches!(plane, Plane::Identity | Plane::MirrorX);
        let finite = |s: &Segment| (copied && matches!(s, Segment::Line { .. })) || s.is_finite();
        if segments.is_empty() {
            self.skip(&format!("{entity} with fewer than 2 distinct vertices"));
        } else if !segments.iter().all(finite) {
            self.skip_non_finite(entity, c.at);
        } else {
            self.piece(c, entity, layer, segments, closed);
        }
        Ok(())
    }
}

/// The edges of a polyline in the drawing plane.
///
/// Edge i runs from vertex i to vertex i+1 (and, when closed, from the last vertex back to
/// the first); it is straight for a zero bulge and otherwise the arc of that bulge, the bulge
/// belonging to the vertex that starts the edge (DXF reference, LWPOLYLINE group 42: the
/// tangent of a quarter of the included angle, positive counter-clockwise). A mirrored OCS
/// negates the bulge. Edges between coincident vertices are dropped.
fn polyline_segments(vertices: &[Vertex], closed: bool, plane: &Plane, z: f64) -> Vec<Segment> {
    let n = vertices.len();
    let edges = if closed { n } else { n.saturating_sub(1) };
    let sign = if plane.flips() { -1.0 } else { 1.0 };
    let mut segments = Vec::with_capacity(edges);
    let mut a = match vertices.first() {
        Some(v) => plane.point(v.x, v.y, z),
        None => return segments,
    };
    for (i, va) in vertices.iter().enumerate().take(edges) {
        // The closing edge returns to the first vertex (no `%`: a division per edge).
        let vb = vertices.get(i + 1).unwrap_or(&vertices[0]); // n > 0
        let b = plane.point(vb.x, vb.y, z);
        if a != b {
            // A zero bulge is a straight edge; `Arc::from_bulge` says so too, after work.
            let bulge = va.bulge * sign;
            let arc = if bulge == 0.0 {
                None
            } else {
                Arc::from_bulge(a, b, bulge)
            };
            segments.push(match arc {
                Some(arc) => Segment::Arc(arc),
                None => Segment::line(a, b),
            });
        }
        a = b;
    }
    segments
}

/// A periodic spline stored as its n distinct control points with one knot per span and
/// the closing one (n + 1 knots, period T = last − first), as some writers store them, turned
/// into the equivalent unclamped B-spline: the first `degree` control points (and weights)
/// repeated after the last, and the knots continued periodically on both sides,
/// t_j = k((j − p) mod n) + ⌊(j − p)/n⌋·T for j = 0 … n + 2p. The curve over [k_0, k_0 + T]
/// is then the closed periodic one (standard construction of periodic B-splines; Piegl and
/// Tiller, The NURBS Book, ch. 12, from memory).
fn unwrap_periodic(
    degree: usize,
    mut ctrl: Vec<Point>,
    mut weights: Vec<f64>,
    period_knots: &[f64],
) -> (Vec<Point>, Vec<f64>, Vec<f64>) {
    let n = ctrl.len();
    if n == 0 || degree == 0 || degree > n {
        return (ctrl, weights, period_knots.to_vec());
    }
    let period = period_knots[n] - period_knots[0];
    for i in 0..degree {
        ctrl.push(ctrl[i]);
        if weights.len() >= n {
            weights.push(weights[i]);
        }
    }
    let knot = |m: i64| {
        let n = n as i64;
        period_knots[m.rem_euclid(n) as usize] + m.div_euclid(n) as f64 * period
    };
    let p = degree as i64;
    let knots = (0..(n + 2 * degree + 1) as i64)
        .map(|j| knot(j - p))
        .collect();
    (ctrl, weights, knots)
}

/// The value of a HATCH pair as text for `hatch.rs` (numbers of binary files formatted;
/// `{:?}` prints the shortest text that reads back to the same double).
fn hatch_text(p: &Pair<'_>) -> Vec<u8> {
    match p.value {
        Value::Real(v) => format!("{v:?}").into_bytes(),
        Value::Int(v) => v.to_string().into_bytes(),
        _ => p.text().to_vec(),
    }
}

/// A piece of a hatch boundary path: lines and arcs (in the drawing plane already, closed
/// when the path is a closed polyline), or a curve still in the hatch's OCS.
enum PathPart {
    Segments(Vec<Segment>, bool),
    Curve(Curve),
}

/// One boundary path as [`PathPart`]s; `f` maps the hatch's OCS onto the drawing plane.
fn hatch_path(
    path: &HatchPath,
    f: &Affine,
    curves: &mut CurveTable,
) -> Result<Vec<PathPart>, String> {
    let p = |(x, y): (f64, f64)| Point::new(x, y);
    let mut parts = Vec::new();
    match &path.edges {
        HatchBoundary::Polyline { vertices, closed } => {
            let vertices: Vec<Vertex> = vertices
                .iter()
                .map(|&(x, y, bulge)| Vertex {
                    x,
                    y,
                    bulge,
                    has_y: true,
                })
                .collect();
            // Bulges in the OCS, mapped with the arcs they make.
            let ocs = polyline_segments(&vertices, *closed, &Plane::Identity, 0.0);
            if !ocs.is_empty() {
                parts.push(PathPart::Segments(
                    transformed_segments(&ocs, f, curves),
                    *closed,
                ));
            }
        }
        HatchBoundary::Edges(edges) => {
            let mut run: Vec<Segment> = Vec::new();
            for edge in edges {
                match edge {
                    HatchEdge::Line { a, b } => {
                        if a != b {
                            run.push(Segment::line(p(*a), p(*b)));
                        }
                    }
                    HatchEdge::Arc {
                        center,
                        radius,
                        start_deg,
                        end_deg,
                        ccw,
                    } => {
                        if *radius <= 0.0 {
                            return Err(format!("an arc edge with radius {radius}"));
                        }
                        let sweep = arc_sweep_deg(*start_deg, *end_deg).to_radians();
                        let arc = if *ccw {
                            Arc::from_center(p(*center), *radius, start_deg.to_radians(), sweep)
                        } else {
                            Arc::from_center(p(*center), *radius, (-start_deg).to_radians(), -sweep)
                        };
                        run.push(Segment::Arc(arc));
                    }
                    HatchEdge::Ellipse {
                        center,
                        major,
                        ratio,
                        start_deg,
                        end_deg,
                        ccw,
                    } => {
                        let u = p(*major);
                        if *ratio <= 0.0 || u.norm() == 0.0 {
                            return Err("an elliptic edge with a zero axis".into());
                        }
                        let sweep = arc_sweep_deg(*start_deg, *end_deg).to_radians();
                        let (t0, t1) = if *ccw {
                            (start_deg.to_radians(), start_deg.to_radians() + sweep)
                        } else {
                            ((-start_deg).to_radians(), (-start_deg).to_radians() - sweep)
                        };
                        flush(&mut run, &mut parts, f, curves);
                        parts.push(PathPart::Curve(Curve::Ellipse(EllipseArc {
                            center: p(*center),
                            u,
                            v: Point::new(-u.y, u.x) * *ratio,
                            t0,
                            t1,
                        })));
                    }
                    HatchEdge::Spline {
                        degree,
                        knots,
                        ctrl,
                        weights,
                        fit,
                        start_tangent,
                        end_tangent,
                        ..
                    } => {
                        let nurbs = if ctrl.is_empty() {
                            let fit: Vec<Point> = fit.iter().map(|&q| p(q)).collect();
                            Nurbs::interpolate(
                                &fit,
                                (*degree).max(1),
                                start_tangent.map(p),
                                end_tangent.map(p),
                            )?
                        } else {
                            let w = if weights.iter().any(|&w| w != 1.0) {
                                weights.clone()
                            } else {
                                Vec::new()
                            };
                            Nurbs::new(
                                *degree,
                                knots.clone(),
                                ctrl.iter().map(|&q| p(q)).collect(),
                                w,
                            )?
                        };
                        flush(&mut run, &mut parts, f, curves);
                        parts.push(PathPart::Curve(Curve::Nurbs(nurbs)));
                    }
                }
            }
            flush(&mut run, &mut parts, f, curves);
        }
    }
    Ok(parts)
}

/// The lines and arcs gathered so far as one open part, mapped onto the drawing plane.
fn flush(run: &mut Vec<Segment>, parts: &mut Vec<PathPart>, f: &Affine, curves: &mut CurveTable) {
    if !run.is_empty() {
        parts.push(PathPart::Segments(
            transformed_segments(run, f, curves),
            false,
        ));
        run.clear();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn arbitrary_axes_for_minus_z() {
        // Check values from crates.md §1 (confirmed there against a general-purpose DXF
        // library's OCS class): N = (0,0,-1) gives Ax = (-1,0,0), Ay = (0,1,0).
        let (ax, ay, n) = arbitrary_axes([0.0, 0.0, -1.0]).unwrap();
        assert_eq!(ax, [-1.0, 0.0, 0.0]);
        assert_eq!(ay, [0.0, 1.0, 0.0]);
        assert_eq!(n, [0.0, 0.0, -1.0]);
        // N = +Z gives the world axes (DXF reference, Arbitrary Axis Algorithm; from memory).
        let (ax, ay, _) = arbitrary_axes([0.0, 0.0, 2.0]).unwrap();
        assert_eq!(ax, [1.0, 0.0, 0.0]);
        assert_eq!(ay, [0.0, 1.0, 0.0]);
    }

    #[test]
    fn arbitrary_axes_general() {
        // For any N the axes are orthonormal and right-handed (Ax × Ay = N), by construction
        // of the algorithm (DXF reference, Arbitrary Axis Algorithm; from memory).
        for n in [
            [1.0, 0.0, 0.0],
            [0.0, -1.0, 0.0],
            [0.3, -0.4, 0.5],
            [0.01, 0.001, -1.0],
        ] {
            let (ax, ay, n) = arbitrary_axes(n).unwrap();
            let dot = |a: [f64; 3], b: [f64; 3]| a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
            assert!(dot(ax, ay).abs() < 1e-15 && dot(ax, n).abs() < 1e-15);
            assert!((dot(ax, ax) - 1.0).abs() < 1e-15 && (dot(ay, ay) - 1.0).abs() < 1e-15);
            let c = cross(ax, ay);
            assert!(
                (0..3).all(|k| (c[k] - n[k]).abs() < 1e-15),
                "{c:?} vs {n:?}"
            );
        }
        // N = (1,0,0): |Nx| >= 1/64, so Ax = Wz × N = (0,1,0) and Ay = N × Ax = (0,0,1).
        let (ax, ay, _) = arbitrary_axes([1.0, 0.0, 0.0]).unwrap();
        assert_eq!(ax, [0.0, 1.0, 0.0]);
        assert_eq!(ay, [0.0, 0.0, 1.0]);
        assert!(arbitrary_axes([0.0, 0.0, 0.0]).is_none());
        assert!(arbitrary_axes([f64::NAN, 0.0, 1.0]).is_none());
    }

    #[test]
    fn planes() {
        assert_eq!(Plane::from_normal([0.0, 0.0, 1.0]), Ok(Plane::Identity));
        assert_eq!(Plane::from_normal([0.0, 0.0, -3.0]), Ok(Plane::MirrorX));
        assert_eq!(
            Plane::from_normal([0.0, 0.0, 0.0]),
            Err(PlaneError::Invalid)
        );
        assert_eq!(
            Plane::from_normal([0.0, 1.0, 0.0]),
            Err(PlaneError::OutOfPlane)
        );
        assert_eq!(
            Plane::from_normal([0.0, 0.01, 1.0]),
            Err(PlaneError::OutOfPlane)
        );
        // crates.md §1: N = (0,0,-1), OCS (-50,50) -> WCS (50,50).
        let m = Plane::MirrorX;
        assert_eq!(m.point(-50.0, 50.0, 7.0), Point::new(50.0, 50.0));
        // crates.md §1: an OCS angle of 30° is 150° in the world, 120° is 60°.
        assert!((m.angle(30.0) - 150f64.to_radians()).abs() < 1e-15);
        assert!((m.angle(120.0) - 60f64.to_radians()).abs() < 1e-15);
        // A normal tilted by float noise: close to the exact map.
        let t = Plane::from_normal([1e-9, 0.0, -1.0]).unwrap();
        assert!(t.flips());
        assert!(t.point(-50.0, 50.0, 0.0).dist(Point::new(50.0, 50.0)) < 1e-12);
        let d = t.angle(30.0) - 150f64.to_radians();
        assert!(d.abs() < 1e-12, "{d}");
        // The elevation moves the point along N's world x,y part: z * Nx.
        let p = t.point(0.0, 0.0, 1e6);
        assert!((p.x - 1e-3).abs() < 1e-12 && p.y == 0.0, "{p:?}");
    }

    #[test]
    fn arc_sweeps() {
        // DXF reference, ARC: counter-clockwise from start to end (from memory).
        assert_eq!(arc_sweep_deg(30.0, 120.0), 90.0);
        assert_eq!(arc_sweep_deg(350.0, 10.0), 20.0);
        assert_eq!(arc_sweep_deg(0.0, 360.0), 360.0);
        assert_eq!(arc_sweep_deg(45.0, 45.0), 360.0);
        assert_eq!(arc_sweep_deg(90.0, 450.0), 360.0);
        assert_eq!(arc_sweep_deg(30.0, 450.0), 60.0);
        assert_eq!(arc_sweep_deg(-90.0, 90.0), 180.0);
    }

    #[test]
    fn segments_of_polylines() {
        let v = |x: f64, y: f64, bulge: f64| Vertex {
            x,
            y,
            bulge,
            has_y: true,
        };
        // Open, with a repeated vertex: the zero-length edge is dropped.
        let s = polyline_segments(
            &[
                v(0.0, 0.0, 0.0),
                v(1.0, 0.0, 0.0),
                v(1.0, 0.0, 1.0),
                v(1.0, 2.0, 0.0),
            ],
            false,
            &Plane::Identity,
            0.0,
        );
        assert_eq!(s.len(), 2);
        let Segment::Arc(arc) = s[1] else {
            panic!("bulge 1 makes an arc")
        };
        // Bulge 1 = half circle (tan(θ/4) = 1 → θ = 180°; DXF reference, group 42).
        assert!((arc.sweep - std::f64::consts::PI).abs() < 1e-15);
        assert!(arc.center.dist(Point::new(1.0, 1.0)) < 1e-15);
        // Closed: the closing edge starts at the last vertex.
        let s = polyline_segments(
            &[v(0.0, 0.0, 0.0), v(1.0, 0.0, 0.0), v(1.0, 1.0, -1.0)],
            true,
            &Plane::Identity,
            0.0,
        );
        assert_eq!(s.len(), 3);
        assert!(matches!(s[2], Segment::Arc(a) if a.sweep < 0.0));
        assert!(polyline_segments(&[v(1.0, 1.0, 0.0)], true, &Plane::Identity, 0.0).is_empty());
        assert!(polyline_segments(&[], true, &Plane::Identity, 0.0).is_empty());
    }

    #[test]
    fn handles_as_the_import_module_reads_them() {
        let mut texts: Vec<Vec<u8>> = (0..=255u8).map(|b| vec![b]).collect();
        texts.extend(
            [
                &b"1F"[..],
                b"a3",
                b" 2B ",
                b"",
                b" ",
                b"FFFFFFFFFFFFFFFF",
                b"10000000000000000",
                b"12G",
                b"0x1",
                b"-1",
            ]
            .map(<[u8]>::to_vec),
        );
        for t in &texts {
            assert_eq!(handle(t), Handle::parse(t), "{t:?}");
        }
    }

    #[test]
    fn type_reasons() {
        assert_eq!(type_reason(b"MTEXT"), "MTEXT");
        assert_eq!(type_reason(b"\xe4"), "ä");
    }
}
