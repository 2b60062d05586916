//! Blocks: BLOCK definitions of the BLOCKS section and the INSERTs that place them.
//!
//! A block's entities are read with the same entity readers as model space, but kept in
//! block coordinates with their layer as written ([`Item`]); nothing of a block is measured
//! until an INSERT places it. After the whole file is read, every model-space INSERT is
//! expanded ([`Reader::expand_inserts`]): its block's items are mapped by the insert's
//! affine map and become pieces, nested INSERTs to any depth.
//!
//! The map of an INSERT (DXF reference, INSERT; from memory): a block point p goes to
//!
//!   OCS(ins + R(rot)·(S(sx, sy)·(p − base) + (col·dc, row·dr)))
//!
//! with `base` the block's base point (BLOCK groups 10/20), `ins` the insertion point
//! (10/20/30), scales 41/42 (default 1; a negative one mirrors), rotation 50 in degrees,
//! MINSERT columns/rows 70/71 with spacings 44/45, and OCS the insert's object coordinate
//! system (extrusion 210/220/230). Lines stay lines; arcs stay arcs under a similarity and
//! become elliptical arcs otherwise; ellipses and splines are mapped as curves.
//!
//! Layers: an entity on layer `0` inside a block takes the layer of the INSERT that places
//! it (at any depth); other entities keep their own. Layer selection and hidden layers apply
//! to that layer; an INSERT on a hidden layer hides its whole block.
//!
//! A block that inserts itself, directly or through others, is an error naming the cycle.
//! Expansion stops with an error beyond [`MAX_DEPTH`] levels or [`MAX_SEGMENTS`] segments,
//! so that no file can make the reader hang or run out of memory.

use super::{decode_text, Reader};
use crate::geom::curve::{Affine, Curve};
use crate::geom::curve_pieces::{curve_segments, transformed_segments};
use crate::geom::{Point, Segment};
use crate::import::{ImportError, ImportErrorKind, LayerName, Location, Origin, Piece};

/// Deepest nesting of INSERTs followed.
pub(crate) const MAX_DEPTH: usize = 64;
/// Most segments all INSERTs of a file may produce together.
pub(crate) const MAX_SEGMENTS: usize = 20_000_000;
/// Most copies one MINSERT may place (columns × rows).
const MAX_COPIES: usize = 1_000_000;

/// A block definition: its base point and what it holds, in block coordinates.
#[derive(Debug, Default)]
pub(crate) struct Block {
    /// The name as written (for messages).
    pub name: String,
    pub base: Point,
    pub items: Vec<Item>,
    /// Where its BLOCK pair is.
    pub at: Option<Location>,
}

/// One thing read inside a block, with its layer name as written (group 8).
#[derive(Debug)]
pub(crate) enum Item {
    Piece {
        segments: Vec<Segment>,
        closed: bool,
        layer: Vec<u8>,
        origin: Origin,
    },
    Curve {
        curve: Curve,
        layer: Vec<u8>,
        origin: Origin,
    },
    Insert(Insert),
}

/// An INSERT (or MINSERT): which block, where, on which layer.
#[derive(Debug, Clone)]
pub(crate) struct Insert {
    /// Block name, upper-cased (block names are case-insensitive).
    pub block: Vec<u8>,
    /// The name as written, for messages.
    pub shown: String,
    pub layer: Vec<u8>,
    /// One map per placed copy (several for a MINSERT), block coordinates to the parent's.
    pub copies: Vec<Affine>,
    pub at: Location,
}

/// The key of a block name: upper-cased bytes.
pub(crate) fn block_key(name: &[u8]) -> Vec<u8> {
    name.to_ascii_uppercase()
}

/// The maps of an INSERT's copies, from block coordinates less the base point (see the
/// module documentation for the formula; the base is taken off when the block is placed, as
/// a block may be defined after its first use).
pub(crate) fn insert_maps(
    ins: [f64; 3],
    scale: (f64, f64),
    rotation_deg: f64,
    grid: (usize, usize),
    spacing: (f64, f64),
    plane: Affine,
) -> Vec<Affine> {
    let rot = Affine::rotation(rotation_deg.to_radians());
    let local = Affine::scaling(scale.0, scale.1);
    let mut copies = Vec::with_capacity(grid.0 * grid.1);
    for row in 0..grid.1 {
        for col in 0..grid.0 {
            let offset = Point::new(col as f64 * spacing.0, row as f64 * spacing.1);
            copies.push(
                local
                    .then(&Affine::translation(offset))
                    .then(&rot)
                    .then(&Affine::translation(Point::new(ins[0], ins[1])))
                    .then(&plane),
            );
        }
    }
    copies
}

impl<'a> Reader<'a, '_> {
    /// BLOCKS: each `0/BLOCK` … `0/ENDBLK` is read into [`Reader::blocks`]. Model- and
    /// paper-space blocks (`*Model_Space`, `*Paper_Space…`) are passed over: model space is
    /// the ENTITIES section, and paper space is not measured.
    pub(super) fn read_blocks(&mut self) -> Result<(), ImportError> {
        loop {
            self.advance_in("BLOCKS")?;
            let p = self.pairs.cur;
            if p.code != 0 {
                continue;
            }
            if self.section_end("BLOCKS") {
                self.block = None;
                return Ok(());
            }
            let at = p.location();
            match p.text() {
                b"BLOCK" => {
                    let (mut name, mut base) = (Vec::new(), Point::default());
                    while self.field()? {
                        let f = &self.pairs.cur;
                        match f.code {
                            2 => name = f.text().to_vec(),
                            10 => base.x = f.real()?,
                            20 => base.y = f.real()?,
                            _ => {}
                        }
                    }
                    let key = block_key(&name);
                    let layout =
                        key.starts_with(b"*MODEL_SPACE") || key.starts_with(b"*PAPER_SPACE");
                    self.block = (!layout).then(|| Block {
                        name: decode_text(&name),
                        base,
                        items: Vec::new(),
                        at: Some(at),
                    });
                    self.skipping_block = layout;
                }
                b"ENDBLK" => {
                    self.skip_fields()?;
                    if let Some(block) = self.block.take() {
                        let key = block_key(block.name.as_bytes());
                        self.blocks.insert(key, block);
                    }
                    self.skipping_block = false;
                }
                _ if self.skipping_block || self.block.is_none() => self.skip_fields()?,
                _ => self.read_entity(at)?,
            }
        }
    }

    /// INSERT and MINSERT: block name 2, insertion point 10/20/30, scales 41/42/43, rotation
    /// 50, columns/rows 70/71, spacings 44/45, extrusion 210/220/230; then its ATTRIBs.
    pub(super) fn read_insert(&mut self, at: Location) -> Result<(), ImportError> {
        let (mut name, mut layer, mut paper) = (Vec::new(), b"0".to_vec(), false);
        let mut ins = [0.0; 3];
        let (mut sx, mut sy, mut rot) = (1.0, 1.0, 0.0);
        let (mut cols, mut rows, mut dc, mut dr) = (1i64, 1i64, 0.0, 0.0);
        let mut normal = [0.0, 0.0, 1.0];
        while self.field()? {
            let p = &self.pairs.cur;
            match p.code {
                2 => name = p.text().to_vec(),
                8 => layer = p.text().to_vec(),
                67 => paper = p.int()? == 1,
                10 => ins[0] = p.real()?,
                20 => ins[1] = p.real()?,
                30 => ins[2] = p.real()?,
                41 => sx = p.real()?,
                42 => sy = p.real()?,
                50 => rot = p.real()?,
                70 => cols = p.int()?,
                71 => rows = p.int()?,
                44 => dc = p.real()?,
                45 => dr = p.real()?,
                210 => normal[0] = p.real()?,
                220 => normal[1] = p.real()?,
                230 => normal[2] = p.real()?,
                _ => {}
            }
        }
        self.skip_attributes()?;
        if paper && self.block.is_none() {
            self.skip(super::entities::reason::PAPER_SPACE);
            return Ok(());
        }
        let finite = [ins[0], ins[1], ins[2], sx, sy, rot, dc, dr]
            .iter()
            .all(|v| v.is_finite());
        if !finite {
            self.skip_non_finite("INSERT", at);
            return Ok(());
        }
        if sx == 0.0 || sy == 0.0 {
            self.skip("INSERT with a zero scale");
            return Ok(());
        }
        let Some(plane) = self.plane_at(normal, "INSERT", at) else {
            return Ok(());
        };
        let plane = plane.affine(ins[2]);
        let (cols, rows) = (cols.max(1) as usize, rows.max(1) as usize);
        if cols.saturating_mul(rows) > MAX_COPIES {
            return Err(ImportError::new(
                Some(at),
                ImportErrorKind::Unsupported(format!(
                    "MINSERT of {cols} × {rows} copies (more than {MAX_COPIES})"
                )),
            ));
        }
        let insert = Insert {
            shown: decode_text(&name),
            block: block_key(&name),
            layer,
            copies: insert_maps(ins, (sx, sy), rot, (cols, rows), (dc, dr), plane),
            at,
        };
        match &mut self.block {
            Some(block) => block.items.push(Item::Insert(insert)),
            None => self.inserts.push(insert),
        }
        Ok(())
    }

    /// Turn every model-space INSERT into pieces (see the module documentation).
    pub(super) fn expand_inserts(&mut self) -> Result<(), ImportError> {
        let inserts = std::mem::take(&mut self.inserts);
        let mut budget = MAX_SEGMENTS;
        let mut path: Vec<(Vec<u8>, String)> = Vec::new();
        for insert in &inserts {
            // The INSERT's own layer: hidden or unselected hides nothing yet (its layer-0
            // children take it), but a hidden one hides the whole block.
            let i = self.layers.verdict(&insert.layer, self.opts);
            if let super::Verdict::Skip(reason) = &self.layers.entries[i].verdict {
                if reason.starts_with("layer off or frozen") {
                    self.layers.entries[i].skipped += 1;
                    continue;
                }
            }
            for f in &insert.copies {
                self.place(insert, f, &insert.layer.clone(), &mut path, &mut budget)?;
            }
        }
        Ok(())
    }

    /// The pieces of one placed block copy, `f` mapping block coordinates to the drawing.
    fn place(
        &mut self,
        insert: &Insert,
        f: &Affine,
        layer: &[u8],
        path: &mut Vec<(Vec<u8>, String)>,
        budget: &mut usize,
    ) -> Result<(), ImportError> {
        if let Some(start) = path.iter().position(|(k, _)| *k == insert.block) {
            let mut names: Vec<&str> = path[start..].iter().map(|(_, n)| n.as_str()).collect();
            names.push(&path[start].1);
            let cycle = names.join(" → ");
            return Err(ImportError::new(
                Some(insert.at),
                ImportErrorKind::Malformed(format!(
                    "block {} inserts itself ({cycle})",
                    insert.shown
                )),
            ));
        }
        if path.len() >= MAX_DEPTH {
            return Err(ImportError::new(
                Some(insert.at),
                ImportErrorKind::Unsupported(format!(
                    "INSERTs nested more than {MAX_DEPTH} deep (block {})",
                    insert.shown
                )),
            ));
        }
        let Some(block) = self.blocks.remove(&insert.block) else {
            self.skip(&format!("INSERT of an undefined block: {}", insert.shown));
            return Ok(());
        };
        // The block is taken out while it is placed (its items are borrowed) and put back.
        path.push((insert.block.clone(), block.name.clone()));
        let f = Affine::translation(Point::new(-block.base.x, -block.base.y)).then(f);
        let result = self.place_items(&block, &f, layer, path, budget);
        path.pop();
        self.blocks.insert(insert.block.clone(), block);
        result
    }

    fn place_items(
        &mut self,
        block: &Block,
        f: &Affine,
        layer: &[u8],
        path: &mut Vec<(Vec<u8>, String)>,
        budget: &mut usize,
    ) -> Result<(), ImportError> {
        for item in &block.items {
            crate::time_limit::check("expanding blocks");
            let (own, origin) = match item {
                Item::Piece { layer, origin, .. } | Item::Curve { layer, origin, .. } => {
                    (layer, origin)
                }
                Item::Insert(inner) => {
                    let inner_layer = effective(&inner.layer, layer).to_vec();
                    for g in &inner.copies {
                        self.place(inner, &g.then(f), &inner_layer, path, budget)?;
                    }
                    continue;
                }
            };
            let Some(name) = self.keep_layer(effective(own, layer)) else {
                continue;
            };
            let (segments, closed) = match item {
                Item::Piece {
                    segments, closed, ..
                } => (
                    transformed_segments(segments, f, &mut self.drawing.curves),
                    *closed,
                ),
                Item::Curve { curve, .. } => {
                    let segs = curve_segments(&curve.transformed(f), &mut self.drawing.curves);
                    let closed = segs.first().map(Segment::start) == segs.last().map(Segment::end);
                    (segs, closed)
                }
                Item::Insert(_) => unreachable!("handled above"),
            };
            if segments.is_empty() {
                continue;
            }
            *budget = budget.checked_sub(segments.len()).ok_or_else(|| {
                ImportError::new(
                    block.at,
                    ImportErrorKind::Unsupported(format!(
                        "INSERTs expand to more than {MAX_SEGMENTS} segments"
                    )),
                )
            })?;
            self.push_piece(Piece {
                segments,
                closed,
                layer: name,
                origin: Origin {
                    in_block: true,
                    ..*origin
                },
            });
        }
        Ok(())
    }

    /// The layer's name if its entities are read, else `None` (counted as skipped).
    fn keep_layer(&mut self, layer: &[u8]) -> Option<LayerName> {
        let i = self.layers.verdict(layer, self.opts);
        let entry = &mut self.layers.entries[i];
        match &entry.verdict {
            super::Verdict::Keep(name) => Some(name.clone()),
            super::Verdict::Skip(_) => {
                entry.skipped += 1;
                None
            }
        }
    }
}

/// The layer an entity inside a block is on: its own, or the inserting layer for layer `0`.
fn effective<'l>(own: &'l [u8], inserting: &'l [u8]) -> &'l [u8] {
    if own == b"0" {
        inserting
    } else {
        own
    }
}
