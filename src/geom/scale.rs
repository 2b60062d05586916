//! The size of a drawing and of its short segments, added up segment by segment.
//!
//! The default chaining gap ([`crate::analyze::default_join_gap`]) depends on the extent of
//! all a drawing's pieces and on how short its short segments are. A reader adds each piece
//! here as it makes it, while the piece's segments are in the cache; working it out later
//! took one more pass over every segment of the drawing, out of the cache again by then.

use super::segment::{BBox, CurvePiece, Segment};

/// Squared lengths at or above this are never short enough to lower the default gap, so they
/// are not kept: four times the largest default gap (`analyze::MAX_GAP_MM`, 0.05 mm), in
/// millimetres, squared. `analyze` checks at compile time that the two agree.
pub const SHORT_LIMIT2_MM2: f64 = 0.2 * 0.2;

/// What [`crate::analyze::drawing_scale`] needs of a drawing's segments: their box, how many
/// have a length above zero, and the squares of the few lengths under [`SHORT_LIMIT2_MM2`]
/// (meaningful in millimetres; in other units the tally is not used).
///
/// A tally made by a reader counts the pieces it added, so that one no longer matching the
/// drawing's pieces (some removed or added since) can be told apart; code that changes the
/// segments of a drawing's pieces in place must not use the drawing's tally.
#[derive(Debug, Clone)]
pub struct ScaleTally {
    /// The box grown with plain comparisons ([`BBox::grow`]; it starts empty, so this is
    /// [`BBox::union`] of the loose boxes, NaN coordinates passed over), a line by its ends.
    pub bbox: BBox,
    /// Segments with a length above zero.
    pub lengths: usize,
    /// Squared lengths above zero and under [`SHORT_LIMIT2_MM2`], in the order added.
    pub short2: Vec<f64>,
    /// Pieces added.
    pub pieces: usize,
}

impl Default for ScaleTally {
    fn default() -> ScaleTally {
        ScaleTally {
            bbox: BBox::EMPTY,
            lengths: 0,
            short2: Vec::new(),
            pieces: 0,
        }
    }
}

impl ScaleTally {
    /// Add a piece's segments.
    #[inline]
    pub fn add_piece(&mut self, segments: &[Segment]) {
        self.pieces += 1;
        for s in segments {
            self.add(s);
        }
    }

    /// Add one segment.
    #[inline]
    pub fn add(&mut self, s: &Segment) {
        let l2 = match s {
            // A curve's chords count too: the gap must stay well below them.
            Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => {
                self.bbox = self.bbox.grow_point(*a).grow_point(*b);
                (*b - *a).dot(*b - *a)
            }
            Segment::Arc(arc) => {
                self.bbox = self.bbox.grow(&arc.loose_bbox());
                arc.length() * arc.length()
            }
        };
        self.lengths += usize::from(l2 > 0.0);
        if l2 > 0.0 && l2 < SHORT_LIMIT2_MM2 {
            self.short2.push(l2);
        }
    }
}
