//! sectio: cross-section properties of extruded profiles from DXF drawings.
//!
//! The pipeline, one file at a time:
//! 1. [`import`] reads a drawing into exact segments (lines and circular arcs) with layers and units;
//! 2. [`geom`] chains loose segments into closed loops and nests them into profiles (outer loop plus holes);
//! 3. [`section`] integrates each profile exactly with Green's theorem into [`section::SectionProps`];
//!    With `--torsion`, [`fem`] meshes each profile and solves for the torsion constant, the
//!    shear centre and the warping constant;
//! 4. [`report`] turns results into CSV rows;
//! 5. [`cli`] walks folders, runs files in parallel and writes the output atomically.
//!
//! [`explain`] runs steps 1 and 2 on one file and reports what each found, for diagnosis.
//!
//! The results are geometric properties of the outline as drawn, not a strength check.

pub mod analyze;
pub mod check;
pub mod cli;
pub mod explain;
pub mod fem;
pub mod geom;
pub mod import;
pub mod report;
pub mod section;
#[cfg(test)]
mod test_rng;
pub mod time_limit;
pub mod timings;
pub use analyze::{
    analyze_drawing, analyze_drawing_with_geometry, measure_drawing, measure_drawing_with_geometry,
    MeasuredDrawing, Outcome, Settings,
};
