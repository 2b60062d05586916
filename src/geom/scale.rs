//! The size of a drawing and of its short segments, added up segment by segment, and what
//! chaining's first step needs of each piece.
//!
//! The default chaining gap ([`crate::analyze::default_join_gap`]) depends on the extent of
//! all a drawing's pieces and on how short its short segments are. A reader adds each piece
//! here as it makes it, while the piece's segments are in the cache; working it out later
//! took one more pass over every segment of the drawing, out of the cache again by then. In
//! the same visit it notes each piece's [`RunFacts`], which spare chaining another such pass.

use super::segment::{BBox, CurvePiece, Point, Segment};

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
    /// The segments' loose boxes grown with plain comparisons ([`BBox::grow`]; it starts
    /// empty, so this is [`BBox::union`] of the loose boxes, NaN coordinates passed over).
    pub bbox: BBox,
    /// Segments with a length above zero.
    pub lengths: usize,
    /// Squared lengths above zero and under [`SHORT_LIMIT2_MM2`], in the order added.
    pub short2: Vec<f64>,
    /// Pieces added.
    pub pieces: usize,
    /// The [`RunFacts`] of the pieces added by [`ScaleTally::add_read_piece`] that have more
    /// than one segment or are closed, in the order added.
    pub runs: Vec<RunFacts>,
}

/// What chaining's first step needs of a piece of more than one segment, or of a closed one:
/// noted by [`ScaleTally::add_read_piece`] while the piece's segments are in the cache, so
/// that [`crate::geom::chain::chain_read`] can pass over a piece none of whose segments is
/// short enough to drop without reading its segments again (on a large sheet they are out
/// of the cache by then).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunFacts {
    /// The piece's index among the drawing's pieces.
    pub piece: u32,
    /// The least squared length of its segments, as [`ScaleTally::add`] measures them (a
    /// line's or a curve piece's chord, an arc's length); NaN when a segment is not finite,
    /// infinity for a piece without segments.
    pub shortest2: f64,
    /// Whether each segment starts exactly where the one before it ends.
    pub joined: bool,
    /// The union of the segments' loose boxes, grown in order with [`BBox::grow`].
    pub bbox: BBox,
}

impl RunFacts {
    /// The facts of `segments`, the `piece`-th piece, worked out on their own (the reference
    /// for [`ScaleTally::add_read_piece`], which works them out with the tally).
    pub fn of(piece: u32, segments: &[Segment]) -> RunFacts {
        let finite = segments.iter().all(Segment::is_finite);
        RunFacts {
            piece,
            shortest2: if finite {
                segments.iter().map(length2).fold(f64::INFINITY, f64::min)
            } else {
                f64::NAN
            },
            joined: segments.windows(2).all(|w| w[0].end() == w[1].start()),
            bbox: segments
                .iter()
                .fold(BBox::EMPTY, |b, s| b.grow(&s.loose_bbox())),
        }
    }
}

/// The squared length the tally goes by: a line's or a curve piece's chord, an arc's length.
#[inline]
fn length2(s: &Segment) -> f64 {
    match s {
        Segment::Line { a, b } | Segment::Curve(CurvePiece { a, b, .. }) => (*b - *a).dot(*b - *a),
        Segment::Arc(arc) => arc.length() * arc.length(),
    }
}

impl Default for ScaleTally {
    fn default() -> ScaleTally {
        ScaleTally {
            bbox: BBox::EMPTY,
            lengths: 0,
            short2: Vec::new(),
            pieces: 0,
            runs: Vec::new(),
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

    /// [`ScaleTally::add_piece`] for a piece a reader has just made (the next of the
    /// drawing's pieces), also noting its [`RunFacts`] when it has more than one segment or
    /// is closed: one visit of its segments for both.
    #[inline]
    pub fn add_read_piece(&mut self, segments: &[Segment], closed: bool) {
        if segments.len() < 2 && !closed {
            self.add_piece(segments);
            return;
        }
        // Past u32::MAX pieces (far more memory than a drawing may take) the facts name no
        // piece, and chaining reads the pieces' segments itself.
        let piece = u32::try_from(self.pieces).unwrap_or(u32::MAX);
        self.pieces += 1;
        let mut shortest2 = f64::INFINITY;
        let (mut finite, mut joined) = (true, true);
        let mut bbox = BBox::EMPTY;
        let mut last_end: Option<Point> = None;
        for s in segments {
            let loose = s.loose_bbox();
            shortest2 = shortest2.min(self.add_boxed(s, &loose));
            finite &= s.is_finite();
            joined &= last_end.is_none_or(|e| e == s.start());
            last_end = Some(s.end());
            bbox = bbox.grow(&loose);
        }
        self.runs.push(RunFacts {
            piece,
            shortest2: if finite { shortest2 } else { f64::NAN },
            joined,
            bbox,
        });
    }

    /// Add one segment; returns its squared length as the tally measures it.
    #[inline]
    pub fn add(&mut self, s: &Segment) -> f64 {
        self.add_boxed(s, &s.loose_bbox())
    }

    /// [`ScaleTally::add`] with the segment's loose box worked out already.
    #[inline]
    fn add_boxed(&mut self, s: &Segment, loose: &BBox) -> f64 {
        self.bbox = self.bbox.grow(loose);
        // A curve's chords count too: the gap must stay well below them.
        let l2 = length2(s);
        self.lengths += usize::from(l2 > 0.0);
        if l2 > 0.0 && l2 < SHORT_LIMIT2_MM2 {
            self.short2.push(l2);
        }
        l2
    }
}
