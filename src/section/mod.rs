//! Section properties of profiles, from the exact area integrals of [`crate::geom::moments`].
//!
//! This module does no I/O. All lengths are millimetres.

pub mod extrusion;
pub mod plastic;
pub mod props;

pub use extrusion::{extrusion_props, ExtrusionProps};
pub use plastic::{plastic_props, PlasticProps};
pub use props::{section_props, SectionProps};
