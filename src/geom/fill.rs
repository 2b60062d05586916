//! The outline of what a self-overlapping filled path covers, under its fill rule.
//!
//! A filled SVG path may have subpaths that cross each other or themselves (two overlapping
//! squares, a pentagram). What it fills is decided point by point by the fill rule from the
//! winding number w of all its subpaths around the point: `nonzero` fills where w ≠ 0,
//! `evenodd` where w is odd (SVG 1.1 §11.3, fill-rule). Its boundary is then made of the
//! pieces of the subpaths that separate a filled side from an unfilled one.
//!
//! [`filled_boundary`] splits every line and arc at its crossings with the others (exact
//! intersection points, shared by both pieces), keeps each piece whose two sides differ
//! (probed just left and right of its midpoint), turns it so that the filled side is on its
//! left, and links the kept pieces into closed loops. Where four or more kept pieces meet (a
//! crossing under `evenodd`), each arriving piece continues with the leaving piece next to it
//! clockwise from where it came from — the usual rule for tracing the face on the left — so
//! that the loops may touch there but never cross. Outer loops come out counter-clockwise and
//! holes clockwise, ready for nesting.

use std::f64::consts::TAU;

use super::predicates::{intersections, winding_number};
use super::segment::{Arc, BBox, Point, Segment};

/// The loops bounding what `subpaths` (closed runs of lines and arcs) fill under the fill
/// rule (`evenodd`, else nonzero), when some of them cross; `None` when nothing crosses
/// (the subpaths are their own boundary), when a subpath holds a curve piece (it cannot be
/// cut exactly), or when the path is too large for this all-pairs method (over 4000
/// segments). Loops that cannot be closed are left out.
pub fn filled_boundary(subpaths: &[Vec<Segment>], evenodd: bool) -> Option<Vec<Vec<Segment>>> {
    let segs: Vec<Segment> = subpaths.iter().flatten().copied().collect();
    if segs.len() > 4000 || segs.iter().any(|s| matches!(s, Segment::Curve(_))) {
        return None;
    }
    let bbox = segs.iter().fold(BBox::EMPTY, |b, s| b.union(&s.bbox()));
    let size = bbox.diagonal();
    if !(size.is_finite() && size > 0.0) {
        return None;
    }
    let tol = 1e-9 * size;
    // Crossings, as (fraction along the segment, point) for each segment.
    let boxes: Vec<BBox> = segs.iter().map(Segment::loose_bbox).collect();
    let mut cuts: Vec<Vec<(f64, Point)>> = vec![Vec::new(); segs.len()];
    let inside = |t: f64| t > 1e-9 && t < 1.0 - 1e-9;
    for i in 0..segs.len() {
        for j in i + 1..segs.len() {
            if !boxes[i].overlaps(&boxes[j], tol) {
                continue;
            }
            for h in intersections(&segs[i], &segs[j], tol) {
                if inside(h.t1) {
                    cuts[i].push((h.t1, h.at));
                }
                if inside(h.t2) {
                    cuts[j].push((h.t2, h.at));
                }
            }
        }
    }
    if cuts.iter().all(Vec::is_empty) {
        return None;
    }
    // The pieces between cuts.
    let mut pieces: Vec<Segment> = Vec::new();
    for (s, mut c) in segs.iter().zip(cuts) {
        c.sort_by(|a, b| a.0.total_cmp(&b.0));
        let (mut t0, mut p0) = (0.0, s.start());
        for (t, at) in c.into_iter().chain(std::iter::once((1.0, s.end()))) {
            if at.dist(p0) <= tol {
                continue;
            }
            pieces.push(sub_segment(s, t0, t, p0, at));
            (t0, p0) = (t, at);
        }
    }
    // Keep the pieces with fill on one side only, filled side on the left.
    let filled = |p: Point| {
        let w: i32 = subpaths.iter().map(|sp| winding_number(sp, p)).sum();
        if evenodd {
            w % 2 != 0
        } else {
            w != 0
        }
    };
    let delta = 1e-7 * size;
    let kept: Vec<Segment> = pieces
        .into_iter()
        .filter_map(|e| {
            let (m, n) = mid_and_left_normal(&e);
            let (left, right) = (filled(m + n * delta), filled(m - n * delta));
            (left != right).then(|| if left { e } else { e.reversed() })
        })
        .collect();
    Some(link_loops(kept, 10.0 * tol))
}

/// The part of `s` from fraction t0 to t1, running from `a` to `b` (its points there).
fn sub_segment(s: &Segment, t0: f64, t1: f64, a: Point, b: Point) -> Segment {
    match s {
        Segment::Arc(arc) => Segment::Arc(Arc {
            start: a,
            end: b,
            sweep: arc.sweep * (t1 - t0),
            ..*arc
        }),
        _ => Segment::line(a, b),
    }
}

/// The midpoint of a line or arc and the unit normal to the left of its direction there.
fn mid_and_left_normal(s: &Segment) -> (Point, Point) {
    match s {
        Segment::Arc(arc) => {
            let m = arc.point_at(0.5);
            let r = m - arc.center;
            // Left of a counter-clockwise arc is its centre; of a clockwise one, outwards.
            (m, r * (-arc.sweep.signum() / r.norm()))
        }
        _ => {
            let (a, b) = (s.start(), s.end());
            let d = b - a;
            (a + d * 0.5, Point::new(-d.y, d.x) * (1.0 / d.norm()))
        }
    }
}

/// The direction in which a line or arc leaves its start (`end = false`) or arrives at its
/// end (`end = true`), as an angle.
fn direction(s: &Segment, end: bool) -> f64 {
    let d = match s {
        Segment::Arc(arc) => {
            let p = if end { arc.end } else { arc.start };
            let r = p - arc.center;
            Point::new(-r.y, r.x) * arc.sweep.signum()
        }
        _ => s.end() - s.start(),
    };
    d.y.atan2(d.x)
}

/// Closed loops from oriented pieces whose ends meet (within `tol`): at a point where several
/// pieces leave, an arriving piece goes on with the leaving one next clockwise from the way
/// back (the face on the left is traced).
fn link_loops(pieces: Vec<Segment>, tol: f64) -> Vec<Vec<Segment>> {
    // Nodes: piece ends merged within `tol` (few pieces: a linear search is enough).
    let mut nodes: Vec<Point> = Vec::new();
    let mut node_of = |p: Point| -> usize {
        match nodes.iter().position(|q| q.dist(p) <= tol) {
            Some(i) => i,
            None => {
                nodes.push(p);
                nodes.len() - 1
            }
        }
    };
    let ends: Vec<(usize, usize)> = pieces
        .iter()
        .map(|s| (node_of(s.start()), node_of(s.end())))
        .collect();
    let mut leaving: Vec<Vec<usize>> = vec![Vec::new(); nodes.len()];
    for (k, &(from, _)) in ends.iter().enumerate() {
        leaving[from].push(k);
    }
    let mut used = vec![false; pieces.len()];
    let mut loops = Vec::new();
    for first in 0..pieces.len() {
        if used[first] {
            continue;
        }
        let mut run = vec![first];
        used[first] = true;
        let mut cur = first;
        let closed = loop {
            let at = ends[cur].1;
            // The way back, and the leaving piece next clockwise from it; the first piece
            // counts too, so that a loop closes where its own turn leads back to its start.
            let back = direction(&pieces[cur], true) + std::f64::consts::PI;
            let next = leaving[at]
                .iter()
                .copied()
                .filter(|&k| !used[k] || k == first)
                .min_by(|&a, &b| {
                    let turn = |k: usize| (back - direction(&pieces[k], false)).rem_euclid(TAU);
                    turn(a).total_cmp(&turn(b))
                });
            match next {
                Some(k) if k == first => break true,
                Some(k) => {
                    used[k] = true;
                    run.push(k);
                    cur = k;
                }
                None => break false,
            }
        };
        if closed {
            loops.push(run.into_iter().map(|k| pieces[k]).collect());
        }
    }
    loops
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::moments::loop_moments;
    use std::f64::consts::PI;

    fn square(x: f64, y: f64, s: f64, ccw: bool) -> Vec<Segment> {
        let mut p = [
            Point::new(x, y),
            Point::new(x + s, y),
            Point::new(x + s, y + s),
            Point::new(x, y + s),
        ];
        if !ccw {
            p.reverse();
        }
        (0..4)
            .map(|i| Segment::line(p[i], p[(i + 1) % 4]))
            .collect()
    }

    fn area(loops: &[Vec<Segment>]) -> f64 {
        loops
            .iter()
            .map(|l| loop_moments(l, Point::new(0.0, 0.0), &[]).a)
            .sum()
    }

    #[test]
    fn two_overlapping_squares_under_both_rules() {
        // Squares 40 × 40 overlapping in a 20 × 20 corner (arithmetic): nonzero fills the
        // union, 2·1600 − 400 = 2800; evenodd leaves the overlap out, 2800 − 400 = 2400.
        let subpaths = vec![
            square(10.0, 10.0, 40.0, true),
            square(30.0, 30.0, 40.0, true),
        ];
        let union = filled_boundary(&subpaths, false).expect("crossings");
        assert_eq!(union.len(), 1);
        assert!((area(&union) - 2800.0).abs() < 1e-9);
        let xor = filled_boundary(&subpaths, true).expect("crossings");
        assert!((area(&xor) - 2400.0).abs() < 1e-9, "{}", area(&xor));
        // Two L-shaped loops touching at the two crossings, not one loop through them.
        assert_eq!(xor.len(), 2);
        // Opposite directions under nonzero: the overlap has w = 0, as under evenodd.
        let mixed = vec![
            square(10.0, 10.0, 40.0, true),
            square(30.0, 30.0, 40.0, false),
        ];
        let r = filled_boundary(&mixed, false).expect("crossings");
        assert!((area(&r) - 2400.0).abs() < 1e-9);
        // Nothing crosses: nothing to do.
        let apart = vec![square(0.0, 0.0, 1.0, true), square(5.0, 0.0, 1.0, true)];
        assert!(filled_boundary(&apart, false).is_none());
    }

    #[test]
    fn a_pentagram_and_a_circle_crossing_a_square() {
        // Pentagram of circumradius 1 (vertices joined two apart): nonzero fills the whole
        // star, evenodd leaves its inner pentagon out, so the two differ by that pentagon:
        // circumradius ρ = cos(2π/5)/cos(π/5) and area (5/2)·ρ²·sin(2π/5) (regular pentagram
        // and polygon, from memory).
        let v: Vec<Point> = (0..5)
            .map(|k| {
                let a = PI / 2.0 + 2.0 * PI * (2 * k) as f64 / 5.0;
                Point::new(a.cos(), a.sin())
            })
            .collect();
        let star: Vec<Segment> = (0..5)
            .map(|k| Segment::line(v[k], v[(k + 1) % 5]))
            .collect();
        let nonzero_loops = filled_boundary(std::slice::from_ref(&star), false).expect("crosses");
        let evenodd_loops = filled_boundary(&[star], true).expect("crosses");
        // One star outline; five point triangles touching at the inner pentagon's corners.
        assert_eq!((nonzero_loops.len(), evenodd_loops.len()), (1, 5));
        let (nonzero, evenodd) = (area(&nonzero_loops), area(&evenodd_loops));
        let rho = (2.0 * PI / 5.0).cos() / (PI / 5.0).cos();
        let inner = 2.5 * rho * rho * (2.0 * PI / 5.0).sin();
        assert!(
            (nonzero - evenodd - inner).abs() < 1e-12,
            "{nonzero} {evenodd} {inner}"
        );
        // A unit circle across a square's edge, same direction, nonzero: union area
        // = 4 + π/2 for a circle centred on the edge of a 2 × 2 square (half inside).
        let circle = vec![Segment::Arc(Arc::circle(Point::new(1.0, 2.0), 1.0))];
        let sq = square(0.0, 0.0, 2.0, true);
        let u = area(&filled_boundary(&[sq, circle], false).expect("crosses"));
        assert!((u - (4.0 + PI / 2.0)).abs() < 1e-12, "{u}");
    }
}
