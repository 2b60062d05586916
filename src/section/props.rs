//! Geometric section properties of one profile (or of several merged into one section).

use super::{ExtrusionProps, PlasticProps};
use crate::fem::TorsionProps;
use crate::geom::{BBox, Moments, Point, Profile};

/// Properties of a cross-section, in millimetres. Axes and signs:
/// second moments are about axes through the centroid parallel to x and y (y up);
/// `ixy` = ∬ x·y dA with x, y from the centroid; `theta_deg` is the angle from +x to the
/// principal axis about which the second moment is `i1`, counter-clockwise positive, in
/// (−90°, 90°].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SectionProps {
    pub area: f64,
    /// All boundaries, outer and holes.
    pub perimeter: f64,
    /// Outer boundaries only.
    pub perimeter_outer: f64,
    pub n_holes: usize,
    pub centroid: Point,
    pub bbox: BBox,
    /// ∬ y² dA about the centroidal x axis.
    pub ixx: f64,
    /// ∬ x² dA about the centroidal y axis.
    pub iyy: f64,
    /// ∬ x·y dA about the centroid.
    pub ixy: f64,
    /// Polar moment about the centroid, ixx + iyy.
    pub ip: f64,
    /// Major principal second moment.
    pub i1: f64,
    /// Minor principal second moment.
    pub i2: f64,
    pub theta_deg: f64,
    /// Elastic section moduli about the centroidal x axis to the top and bottom extreme
    /// fibres, and about the y axis to the left and right ones: W = I / distance.
    pub wx_top: f64,
    pub wx_bottom: f64,
    pub wy_left: f64,
    pub wy_right: f64,
    /// Radii of gyration √(I/A) about x, y and the principal axes.
    pub rx: f64,
    pub ry: f64,
    pub r1: f64,
    pub r2: f64,
    /// Plastic properties, when asked for ([`super::plastic_props`]).
    pub plastic: Option<PlasticProps>,
    /// The extruder's figures, when asked for ([`super::extrusion_props`]).
    pub extrusion: Option<ExtrusionProps>,
    /// Torsion and warping, when asked for ([`crate::fem::torsion_props`]).
    pub torsion: Option<TorsionProps>,
}

/// Principal second moments and the angle of the major axis, from centroidal ixx, iyy, ixy.
///
/// I(φ) about an axis at angle φ is ixx·cos²φ + iyy·sin²φ − ixy·sin2φ (Mohr's circle,
/// e.g. Gere & Timoshenko, Mechanics of Materials, §12.8; from memory), so
/// I1,2 = (ixx+iyy)/2 ± √(((ixx−iyy)/2)² + ixy²) and the major axis lies at
/// θ = ½·atan2(−2·ixy, ixx − iyy). When the two are equal to rounding (a circle, a square)
/// every axis is principal and θ = 0 is reported.
pub fn principal(ixx: f64, iyy: f64, ixy: f64) -> (f64, f64, f64) {
    let mean = (ixx + iyy) / 2.0;
    let half_diff = (ixx - iyy) / 2.0;
    let radius = half_diff.hypot(ixy);
    let theta = if radius <= 1e-13 * mean.abs() {
        0.0
    } else {
        0.5 * (-2.0 * ixy).atan2(ixx - iyy)
    };
    let mut deg = theta.to_degrees();
    if deg <= -90.0 {
        deg += 180.0;
    }
    (mean + radius, mean - radius, deg)
}

/// Properties of the union of `profiles` (one profile, or all of a file when merged).
pub fn section_props(profiles: &[&Profile]) -> SectionProps {
    let bbox = profiles.iter().fold(BBox::EMPTY, |b, p| b.union(&p.bbox()));
    // Integrals about a point near the section: full precision far from the drawing origin.
    // Each profile's were taken about its own box centre; moving them is exact algebra.
    let origin = bbox.center();
    let mut m = Moments::default();
    let (mut perimeter, mut perimeter_outer, mut n_holes) = (0.0, 0.0, 0);
    for p in profiles {
        m += p.moments.shifted(origin - p.bbox.center());
        perimeter_outer += p.outer_length;
        perimeter += p.outer_length + p.holes_length;
        n_holes += p.holes.len();
    }
    let area = m.a;
    let c_local = Point::new(m.sx / area, m.sy / area);
    let centroid = origin + c_local;
    let central = m.shifted(c_local);
    let (ixx, iyy, ixy) = (central.syy, central.sxx, central.sxy);
    let (i1, i2, theta_deg) = principal(ixx, iyy, ixy);
    let gyr = |i: f64| (i.max(0.0) / area).sqrt();
    SectionProps {
        area,
        perimeter,
        perimeter_outer,
        n_holes,
        centroid,
        bbox,
        ixx,
        iyy,
        ixy,
        ip: ixx + iyy,
        i1,
        i2,
        theta_deg,
        wx_top: ixx / (bbox.max.y - centroid.y),
        wx_bottom: ixx / (centroid.y - bbox.min.y),
        wy_left: iyy / (centroid.x - bbox.min.x),
        wy_right: iyy / (bbox.max.x - centroid.x),
        rx: gyr(ixx),
        ry: gyr(iyy),
        r1: gyr(i1),
        r2: gyr(i2),
        plastic: None,
        extrusion: None,
        torsion: None,
    }
}
