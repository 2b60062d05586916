//! Mirror symmetry of a set of loops about a line.
//!
//! A section symmetric about a line has its shear centre on that line (common practice; e.g.
//! Pilkey, Analysis and Design of Elastic Beams, §6.3), which a finite-element solution on an
//! unsymmetric mesh meets only to its discretisation error. Knowing the symmetry lets the
//! solver put the shear centre exactly on the line.

use super::predicates::distance_to;
use super::segment::{BBox, Point, Segment};

/// Whether the boundary made of `segments` is mirror symmetric about the line through
/// `point` with direction `direction`, to within `tolerance`: every segment's ends and
/// middle (and for arcs their quarter points), mirrored, lie within `tolerance` of the
/// boundary. Mirroring maps the boundary onto a curve of the same length, so if all of its
/// samples lie on the boundary the two coincide (up to what the samples can see).
pub fn mirror_symmetric(
    segments: &[Segment],
    point: Point,
    direction: Point,
    tolerance: f64,
) -> bool {
    let len = direction.norm();
    if segments.is_empty() || len.is_nan() || len <= 0.0 {
        return false;
    }
    let d = direction * (1.0 / len);
    let mirror = |p: Point| {
        let v = p - point;
        point + d * (2.0 * v.dot(d)) - v
    };
    let grid = Grid::new(segments, tolerance);
    segments.iter().all(|s| {
        let mut samples = vec![s.start(), s.end(), s.midpoint()];
        if let Segment::Arc(a) = s {
            samples.extend([a.point_at(0.25), a.point_at(0.75)]);
        }
        samples
            .into_iter()
            .all(|p| grid.near(segments, mirror(p), tolerance))
    })
}

/// Segments filed by the cells of a uniform grid that their boxes, grown by the tolerance,
/// cover; a segment covering many cells is kept apart and tried by every query.
struct Grid {
    lo: Point,
    cell: f64,
    nx: usize,
    ny: usize,
    cells: Vec<Vec<u32>>,
    big: Vec<u32>,
}

impl Grid {
    const MAX_CELLS: usize = 16;

    fn new(segments: &[Segment], tolerance: f64) -> Grid {
        let bbox = segments
            .iter()
            .fold(BBox::EMPTY, |b, s| b.union(&s.loose_bbox()));
        let n = (segments.len() as f64).sqrt().ceil().clamp(1.0, 1024.0) as usize;
        let cell = (bbox.width().max(bbox.height()) / n as f64).max(f64::MIN_POSITIVE);
        let lo = bbox.min;
        let nx = ((bbox.width() / cell) as usize + 1).min(1024);
        let ny = ((bbox.height() / cell) as usize + 1).min(1024);
        let mut grid = Grid {
            lo,
            cell,
            nx,
            ny,
            cells: vec![Vec::new(); nx * ny],
            big: Vec::new(),
        };
        for (k, s) in segments.iter().enumerate() {
            let b = s.loose_bbox();
            let (x0, y0) = grid.index(b.min - Point::new(tolerance, tolerance));
            let (x1, y1) = grid.index(b.max + Point::new(tolerance, tolerance));
            if (x1 - x0 + 1) * (y1 - y0 + 1) > Self::MAX_CELLS {
                grid.big.push(k as u32);
                continue;
            }
            for iy in y0..=y1 {
                for ix in x0..=x1 {
                    grid.cells[iy * nx + ix].push(k as u32);
                }
            }
        }
        grid
    }

    /// The cell of `p`, clamped to the grid.
    fn index(&self, p: Point) -> (usize, usize) {
        let f = |v: f64, n: usize| (v / self.cell).floor().clamp(0.0, (n - 1) as f64) as usize;
        (f(p.x - self.lo.x, self.nx), f(p.y - self.lo.y, self.ny))
    }

    /// Whether `p` lies within `tolerance` of one of the segments.
    fn near(&self, segments: &[Segment], p: Point, tolerance: f64) -> bool {
        if !p.is_finite() {
            return false;
        }
        let (ix, iy) = self.index(p);
        self.cells[iy * self.nx + ix]
            .iter()
            .chain(&self.big)
            .any(|&k| distance_to(&segments[k as usize], p) <= tolerance)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::Arc;

    fn rect(x0: f64, y0: f64, w: f64, h: f64) -> Vec<Segment> {
        let p = [
            Point::new(x0, y0),
            Point::new(x0 + w, y0),
            Point::new(x0 + w, y0 + h),
            Point::new(x0, y0 + h),
        ];
        (0..4)
            .map(|k| Segment::line(p[k], p[(k + 1) % 4]))
            .collect()
    }

    #[test]
    fn rectangles_circles_and_notches() {
        let r = rect(-2.0, 1.0, 10.0, 4.0);
        let c = Point::new(3.0, 3.0);
        assert!(mirror_symmetric(&r, c, Point::new(1.0, 0.0), 1e-9));
        assert!(mirror_symmetric(&r, c, Point::new(0.0, 2.0), 1e-9));
        assert!(!mirror_symmetric(&r, c, Point::new(1.0, 1.0), 1e-9));
        assert!(!mirror_symmetric(
            &r,
            Point::new(3.1, 3.0),
            Point::new(0.0, 1.0),
            1e-9
        ));
        // A circle drawn as one arc starting at angle 0 is symmetric about any diameter.
        let circle = [Segment::Arc(Arc::circle(Point::new(1.0, 2.0), 5.0))];
        assert!(mirror_symmetric(
            &circle,
            Point::new(1.0, 2.0),
            Point::new(0.3, 0.8),
            1e-9
        ));
        // A rectangle with a notch in its top edge near the right end is not symmetric
        // about the vertical line through its middle.
        let pts = [
            (0.0, 0.0),
            (10.0, 0.0),
            (10.0, 4.0),
            (8.0, 4.0),
            (8.0, 3.0),
            (7.0, 3.0),
            (7.0, 4.0),
            (0.0, 4.0),
        ];
        let notch: Vec<Segment> = (0..pts.len())
            .map(|k| {
                let (a, b) = (pts[k], pts[(k + 1) % pts.len()]);
                Segment::line(Point::new(a.0, a.1), Point::new(b.0, b.1))
            })
            .collect();
        assert!(!mirror_symmetric(
            &notch,
            Point::new(5.0, 2.0),
            Point::new(0.0, 1.0),
            1e-9
        ));
    }
}
