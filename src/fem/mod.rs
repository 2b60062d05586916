//! Finite-element analysis of sections: quadratic triangle meshes ([`mesh`]) and the
//! St Venant torsion and warping solver ([`torsion`]).
//!
//! This module does no I/O. All lengths are millimetres.

pub mod mesh;
pub mod multigrid;
pub mod torsion;

pub use mesh::{Mesh, MeshError};
pub use torsion::{torsion_props, TorsionProps, TorsionSettings};
