//! Plane geometry: exact segments, area integrals, chaining loops and nesting them.
//!
//! Sign conventions, stated once for the whole crate:
//! - y points up;
//! - outer loops run counter-clockwise and have positive area, holes run clockwise;
//! - arcs sweep counter-clockwise for positive `sweep`;
//! - `sxy` (and the product of area `ixy` built from it) is ∬ x·y dA.
//!
//! This module does no I/O.

pub mod chain;
pub mod curve;
pub mod curve_pieces;
pub mod fill;
pub mod moments;
pub mod nest;
pub mod predicates;
pub mod scale;
pub mod segment;
pub mod symmetry;

pub use chain::{chain, chain_read, Chained, Loop, LoopProblem};
pub use curve_pieces::CurveTable;
pub use moments::Moments;
pub use nest::{drop_crossing_loops, nest, LoopsToNest, Nested, Profile};
pub use scale::{RunFacts, ScaleTally};
pub use segment::{Arc, BBox, CurvePiece, CurveSpan, Point, Segment};
