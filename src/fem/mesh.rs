//! Quadratic triangle meshes of profiles, for the finite-element solvers.
//!
//! A mesh is built in three steps:
//! 1. every boundary loop becomes a closed polygon whose vertices lie on the true boundary:
//!    lines are split into pieces no longer than the target size `h`, circular arcs into
//!    pieces of at most 30° (and at most `h` long) with their vertices on the arc, and curve
//!    pieces (ellipses, splines) are taken as their chords, which lie within the flattening
//!    tolerance of the curve ([`crate::geom::curve_pieces`]);
//! 2. `spade` builds the constrained Delaunay triangulation of those polygons and refines it
//!    (Ruppert/Chew refinement: no angle below [`MIN_ANGLE_DEG`], no triangle larger than
//!    about h²/2), leaving out the outside and the holes by parity;
//! 3. each triangle gets a node at the middle of each edge (6-node triangles). On an edge that
//!    lies on a circular arc the middle node is put on the arc, and so are the vertices spade
//!    added on such edges, so arcs are followed by curved (isoparametric) element edges rather
//!    than by chords.
//!
//! [`Mesh::refined`] splits every triangle into four at its middle nodes (the new nodes
//! are placed by the element's own quadratic map, or on the arc for arc edges), which keeps the
//! element shapes and nests the finite-element spaces: the torsion solver's successive
//! levels.
//!
//! Invariants: elements are counter-clockwise with positive Jacobian at their quadrature
//! points (the solver checks); node numbers are dense; an edge between two elements has the
//! same middle node in both.

use std::collections::HashMap;
use std::f64::consts::PI;

use spade::{
    AngleLimit, ConstrainedDelaunayTriangulation, Point2, RefinementParameters, Triangulation,
};

use crate::geom::{Point, Profile, Segment};

/// Smallest angle the refinement aims for (degrees). Quadratic elements stay accurate well
/// below this; a higher limit (spade's refinement terminates up to about 30°, Shewchuk's
/// bound for Ruppert's algorithm) grades the mesh more slowly away from short boundary
/// pieces: 28° gave 1.6× the nodes of 20° on the benchmark drawings for the same accuracy.
pub const MIN_ANGLE_DEG: f64 = 20.0;

/// Largest turn of a boundary piece on a circular arc (radians). A 30° piece bulges
/// 6.6 % of its chord, which the curved element edges follow.
const MAX_ARC_STEP: f64 = PI / 6.0;

/// "No arc" in [`Mesh::edge_arcs`].
pub const NO_ARC: u32 = u32::MAX;

/// A mesh of 6-node triangles.
#[derive(Debug, Clone, Default)]
pub struct Mesh {
    /// Node positions, in the frame the mesh was built in.
    pub nodes: Vec<Point>,
    /// Corner nodes counter-clockwise, then the middle nodes of edges 0–1, 1–2 and 2–0.
    pub elements: Vec<[u32; 6]>,
    /// For each element and edge (0–1, 1–2, 2–0): the boundary arc the edge lies on
    /// (an index into `arcs`), or [`NO_ARC`].
    pub edge_arcs: Vec<[u32; 3]>,
    /// Circles of the boundary arcs: centre and radius.
    pub arcs: Vec<(Point, f64)>,
    /// For a mesh made by [`Mesh::refined`]: where each node it added (numbered after the
    /// coarse mesh's nodes, in order) came from: the coarse element and the code of its
    /// reference point in [`SPLIT_POINTS`]. Empty for a mesh built from a drawing.
    pub parents: Vec<(u32, u8)>,
}

/// Reference points (ξ, η) of the nodes added when an element is split into four
/// ([`Mesh::refined`]): quarter points of the edges 0–1, 1–2, 2–0 (two each), then the
/// middles of the inner edges 3–5, 3–4, 4–5.
pub const SPLIT_POINTS: [(f64, f64); 9] = [
    (0.25, 0.0),
    (0.75, 0.0),
    (0.75, 0.25),
    (0.25, 0.75),
    (0.0, 0.75),
    (0.0, 0.25),
    (0.25, 0.25),
    (0.5, 0.25),
    (0.25, 0.5),
];

/// Why a profile could not be meshed.
#[derive(Debug, Clone, PartialEq)]
pub enum MeshError {
    /// Boundary pieces cross or overlap (spade refused the constraint between two vertices).
    ConflictingBoundary { at: Point },
    /// A coordinate spade cannot take (NaN, infinite, or beyond its range).
    BadCoordinate,
    /// Refinement stopped at its vertex cap before reaching the quality asked for.
    RefinementIncomplete { cap: usize },
    /// Nothing left after removing the outside and the holes.
    Empty,
    /// The triangles kept do not cover the profile: loops overlap along an edge.
    Overlapping,
    /// Elements fold over even with straight edges (boundaries touching).
    Folded,
}

impl std::fmt::Display for MeshError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            MeshError::ConflictingBoundary { at } => write!(
                f,
                "boundary pieces cross or overlap near ({:.6}, {:.6})",
                at.x, at.y
            ),
            MeshError::BadCoordinate => write!(f, "a boundary coordinate cannot be meshed"),
            MeshError::RefinementIncomplete { cap } => write!(
                f,
                "the mesh needs more than {cap} vertices (a sliver or a very fine boundary; \
                 --torsion-max-nodes raises the cap)"
            ),
            MeshError::Empty => write!(f, "the mesh is empty"),
            MeshError::Overlapping => write!(
                f,
                "loops run along each other (a hole drawn on the outline?), which the mesh cannot follow"
            ),
            MeshError::Folded => write!(
                f,
                "boundaries touch so closely that mesh elements fold over"
            ),
        }
    }
}

/// One boundary vertex and what the boundary does from it to the next vertex of its loop.
#[derive(Debug, Clone, Copy)]
struct BoundaryVertex {
    at: Point,
    /// The arc the edge to the next vertex follows, or [`NO_ARC`].
    arc: u32,
}

/// How many boundary pieces a segment is split into for target size `h`: lines and curve
/// chords no longer than `h`, arcs no longer than `h` and turning at most [`MAX_ARC_STEP`]
/// (at most 10⁶ either way).
fn boundary_pieces(s: &Segment, h: f64) -> usize {
    let n = match s {
        Segment::Arc(a) => (a.sweep.abs() / MAX_ARC_STEP)
            .ceil()
            .max((a.length() / h).ceil()),
        Segment::Line { a, b } | Segment::Curve(crate::geom::CurvePiece { a, b, .. }) => {
            (a.dist(*b) / h).ceil()
        }
    };
    n.clamp(1.0, 1e6) as usize
}

/// How many vertices the profiles' boundary polygons get for target size `h` before any
/// are merged ([`Mesh::build`] starts from them), counted without building them: a sliver's
/// boundary at its own target size can need millions.
pub fn boundary_vertex_count(profiles: &[&Profile], h: f64) -> usize {
    profiles
        .iter()
        .flat_map(|p| std::iter::once(&p.outer).chain(&p.holes))
        .flat_map(|lp| &lp.segments)
        .map(|s| boundary_pieces(s, h))
        .sum()
}

/// Polygons of the profiles' loops, moved by `-origin`, with arcs recorded in `arcs`.
fn boundary_polygons(
    profiles: &[&Profile],
    origin: Point,
    h: f64,
    arcs: &mut Vec<(Point, f64)>,
) -> Vec<Vec<BoundaryVertex>> {
    let size = profiles
        .iter()
        .map(|p| p.bbox.diagonal())
        .fold(0.0, f64::max);
    let merge = 1e-12 * size;
    let mut polygons = Vec::new();
    for p in profiles {
        for lp in std::iter::once(&p.outer).chain(&p.holes) {
            let mut poly: Vec<BoundaryVertex> = Vec::with_capacity(lp.segments.len());
            let push = |v: BoundaryVertex, poly: &mut Vec<BoundaryVertex>| {
                match poly.last_mut() {
                    // A vertex on the last one: the edge from there follows the new kind.
                    Some(last) if last.at.dist(v.at) <= merge => last.arc = v.arc,
                    _ => poly.push(v),
                }
            };
            for s in &lp.segments {
                match s {
                    Segment::Arc(a) => {
                        let id = arcs.len() as u32;
                        arcs.push((a.center - origin, a.radius));
                        let n = boundary_pieces(s, h);
                        for k in 0..n {
                            let at = a.point_at(k as f64 / n as f64) - origin;
                            push(BoundaryVertex { at, arc: id }, &mut poly);
                        }
                    }
                    _ => {
                        let (a, b) = match s {
                            Segment::Line { a, b } => (*a, *b),
                            Segment::Curve(c) => (c.a, c.b),
                            Segment::Arc(_) => unreachable!("arcs are handled above"),
                        };
                        let n = boundary_pieces(s, h);
                        for k in 0..n {
                            let at = a + (b - a) * (k as f64 / n as f64) - origin;
                            push(BoundaryVertex { at, arc: NO_ARC }, &mut poly);
                        }
                    }
                }
            }
            // The loop closes on its first vertex.
            while poly.len() > 1 && poly[poly.len() - 1].at.dist(poly[0].at) <= merge {
                poly.pop();
            }
            if poly.len() >= 3 {
                polygons.push(poly);
            }
        }
    }
    polygons
}

/// `edges` with every edge split at the vertices that lie on it (within `tolerance`) between
/// its ends: where a loop touches another at one of its vertices (a circle touching a flat),
/// the flat must pass through that vertex, or the two constraints conflict. Split pieces
/// keep their edge's arc, which still passes through the vertex to within the tolerance.
fn split_at_touching_vertices(
    vertices: &[Point2<f64>],
    edges: Vec<[usize; 2]>,
    edge_arc: &mut HashMap<(usize, usize), u32>,
    tolerance: f64,
) -> Vec<[usize; 2]> {
    if edges.is_empty() {
        return edges;
    }
    let pt = |k: usize| Point::new(vertices[k].x, vertices[k].y);
    // Vertices filed in a uniform grid of about one vertex per cell.
    let (mut lo, mut hi) = (pt(0), pt(0));
    for k in 0..vertices.len() {
        let p = pt(k);
        lo = Point::new(lo.x.min(p.x), lo.y.min(p.y));
        hi = Point::new(hi.x.max(p.x), hi.y.max(p.y));
    }
    let n = (vertices.len() as f64).sqrt().ceil().clamp(1.0, 2048.0) as usize;
    let cell = ((hi.x - lo.x).max(hi.y - lo.y) / n as f64).max(f64::MIN_POSITIVE);
    let at = |v: f64, l: f64| (((v - l) / cell).floor().max(0.0) as usize).min(n - 1);
    let mut grid: Vec<Vec<u32>> = vec![Vec::new(); n * n];
    for k in 0..vertices.len() {
        let p = pt(k);
        grid[at(p.y, lo.y) * n + at(p.x, lo.x)].push(k as u32);
    }
    let mut out = Vec::with_capacity(edges.len());
    for [i, j] in edges {
        let (a, b) = (pt(i), pt(j));
        let d = b - a;
        let len2 = d.dot(d);
        let (x0, x1) = (
            at(a.x.min(b.x) - tolerance, lo.x),
            at(a.x.max(b.x) + tolerance, lo.x),
        );
        let (y0, y1) = (
            at(a.y.min(b.y) - tolerance, lo.y),
            at(a.y.max(b.y) + tolerance, lo.y),
        );
        // Boundary pieces are short (at most the target size), so each looks at few cells.
        let mut on: Vec<(f64, usize)> = Vec::new();
        if len2 > 0.0 && (x1 - x0 + 1) * (y1 - y0 + 1) <= 4096 {
            for cy in y0..=y1 {
                for cx in x0..=x1 {
                    for &k in &grid[cy * n + cx] {
                        let k = k as usize;
                        if k == i || k == j {
                            continue;
                        }
                        let t = (pt(k) - a).dot(d) / len2;
                        if t > 0.0 && t < 1.0 && (a + d * t).dist(pt(k)) <= tolerance {
                            on.push((t, k));
                        }
                    }
                }
            }
        }
        if on.is_empty() {
            out.push([i, j]);
            continue;
        }
        on.sort_by(|p, q| p.0.total_cmp(&q.0));
        let arc = edge_arc.get(&(i.min(j), i.max(j))).copied();
        let mut from = i;
        for (_, k) in on.into_iter().chain(std::iter::once((1.0, j))) {
            if k != from {
                out.push([from, k]);
                if let Some(arc) = arc {
                    edge_arc.insert((from.min(k), from.max(k)), arc);
                }
            }
            from = k;
        }
    }
    out
}

/// How many times the polygons wind around `p`, counter-clockwise positive (each edge
/// crossing the horizontal line through `p` to its right counts ±1; e.g. O'Rourke,
/// Computational Geometry in C, §7.4; from memory).
fn winding_number(polygons: &[Vec<BoundaryVertex>], p: Point) -> i32 {
    let mut w = 0;
    for poly in polygons {
        for k in 0..poly.len() {
            let (a, b) = (poly[k].at, poly[(k + 1) % poly.len()].at);
            let side = (b - a).cross(p - a);
            if a.y <= p.y && b.y > p.y && side > 0.0 {
                w += 1;
            } else if a.y > p.y && b.y <= p.y && side < 0.0 {
                w -= 1;
            }
        }
    }
    w
}

/// The point of the circle (`center`, `radius`) in the direction of `p` from the centre.
fn onto_circle(p: Point, (center, radius): (Point, f64)) -> Point {
    let d = p - center;
    let n = d.norm();
    if n > 0.0 {
        center + d * (radius / n)
    } else {
        p
    }
}

/// Value of the six quadratic shape functions at reference point (ξ, η).
///
/// With L1 = 1 − ξ − η, L2 = ξ, L3 = η: N0 = L1(2L1 − 1), N1 = L2(2L2 − 1),
/// N2 = L3(2L3 − 1), N3 = 4L1L2, N4 = 4L2L3, N5 = 4L3L1 (the standard 6-node triangle,
/// e.g. Zienkiewicz & Taylor, The Finite Element Method, vol. 1, §8.8; from memory).
pub fn shape(xi: f64, eta: f64) -> [f64; 6] {
    let (l1, l2, l3) = (1.0 - xi - eta, xi, eta);
    [
        l1 * (2.0 * l1 - 1.0),
        l2 * (2.0 * l2 - 1.0),
        l3 * (2.0 * l3 - 1.0),
        4.0 * l1 * l2,
        4.0 * l2 * l3,
        4.0 * l3 * l1,
    ]
}

/// Gauss points of the degree-4 rule on the reference triangle (Dunavant 1985, 6 points;
/// from memory): barycentric (a, a, 1 − 2a) and permutations, weights already halved for
/// the reference triangle's area ½.
pub const GAUSS: [(f64, f64, f64); 6] = {
    const A1: f64 = 0.445_948_490_915_965;
    const W1: f64 = 0.223_381_589_678_011 / 2.0;
    const A2: f64 = 0.091_576_213_509_771;
    const W2: f64 = 0.109_951_743_655_322 / 2.0;
    [
        (A1, A1, W1),
        (1.0 - 2.0 * A1, A1, W1),
        (A1, 1.0 - 2.0 * A1, W1),
        (A2, A2, W2),
        (1.0 - 2.0 * A2, A2, W2),
        (A2, 1.0 - 2.0 * A2, W2),
    ]
};

/// Derivatives of the shape functions ([`shape`]) with respect to ξ and η.
pub fn shape_derivatives(xi: f64, eta: f64) -> [[f64; 6]; 2] {
    let l1 = 1.0 - xi - eta;
    let (l2, l3) = (xi, eta);
    // dL1 = (−1, −1), dL2 = (1, 0), dL3 = (0, 1).
    [
        [
            -(4.0 * l1 - 1.0),
            4.0 * l2 - 1.0,
            0.0,
            4.0 * (l1 - l2),
            4.0 * l3,
            -4.0 * l3,
        ],
        [
            -(4.0 * l1 - 1.0),
            0.0,
            4.0 * l3 - 1.0,
            -4.0 * l2,
            4.0 * l2,
            4.0 * (l1 - l3),
        ],
    ]
}

impl Mesh {
    /// Mesh `profiles` (their outer loops and holes) with elements of size about `h`, in a
    /// frame moved by `-origin` (choose a point near the profiles, for precision).
    /// `max_vertices` caps the refinement.
    pub fn build(
        profiles: &[&Profile],
        origin: Point,
        h: f64,
        max_vertices: usize,
    ) -> Result<Mesh, MeshError> {
        match Mesh::build_with(profiles, origin, h, max_vertices, false) {
            Err(MeshError::Overlapping) => {
                Mesh::build_with(profiles, origin, h, max_vertices, true)
            }
            other => other,
        }
    }

    /// [`Mesh::build`], keeping the triangles of odd parity across the loops (spade's
    /// classification, which refines only those), or with `by_winding` the triangles whose
    /// centre the loops wind around once (outer loops count +1, holes −1), after refining
    /// the whole triangulation. The second is right also where loops run along each other
    /// (a notch drawn as a hole on the outline), where parity fails.
    fn build_with(
        profiles: &[&Profile],
        origin: Point,
        h: f64,
        max_vertices: usize,
        by_winding: bool,
    ) -> Result<Mesh, MeshError> {
        let mut arcs = Vec::new();
        let polygons = boundary_polygons(profiles, origin, h, &mut arcs);
        // Vertices closer than 1e-12 of the size are one (where two loops touch, their
        // vertices computed a rounding error apart would leave a sliver of zero width), so
        // indices stay ours (spade would merge only exact duplicates, and shift indices).
        let size = profiles
            .iter()
            .map(|p| p.bbox.diagonal())
            .fold(0.0, f64::max);
        let merge = 1e-12 * size;
        let cell = if merge > 0.0 { merge } else { 1.0 };
        let mut index: HashMap<(i64, i64), Vec<usize>> = HashMap::new();
        let mut vertices: Vec<Point2<f64>> = Vec::new();
        let mut edges: Vec<[usize; 2]> = Vec::new();
        // Arc of each constraint edge (keyed by its two vertices, smaller first).
        let mut edge_arc: HashMap<(usize, usize), u32> = HashMap::new();
        for poly in &polygons {
            let ids: Vec<usize> = poly
                .iter()
                .map(|v| {
                    if !v.at.is_finite() {
                        return usize::MAX;
                    }
                    let (cx, cy) = (
                        (v.at.x / cell).floor() as i64,
                        (v.at.y / cell).floor() as i64,
                    );
                    for dx in -1..=1 {
                        for dy in -1..=1 {
                            if let Some(near) =
                                index.get(&(cx.wrapping_add(dx), cy.wrapping_add(dy)))
                            {
                                for &k in near {
                                    let p = vertices[k];
                                    if Point::new(p.x, p.y).dist(v.at) <= merge {
                                        return k;
                                    }
                                }
                            }
                        }
                    }
                    // + 0.0 turns −0 into +0, which spade would take for the same point.
                    vertices.push(Point2::new(v.at.x + 0.0, v.at.y + 0.0));
                    index.entry((cx, cy)).or_default().push(vertices.len() - 1);
                    vertices.len() - 1
                })
                .collect();
            if ids.contains(&usize::MAX) {
                return Err(MeshError::BadCoordinate);
            }
            for k in 0..ids.len() {
                let (a, b) = (ids[k], ids[(k + 1) % ids.len()]);
                if a != b {
                    edges.push([a, b]);
                    if poly[k].arc != NO_ARC {
                        edge_arc.insert((a.min(b), a.max(b)), poly[k].arc);
                    }
                }
            }
        }
        let edges = split_at_touching_vertices(&vertices, edges, &mut edge_arc, 1e-10 * size);
        let n_input = vertices.len();
        let triangulate = || -> Result<ConstrainedDelaunayTriangulation<Point2<f64>>, MeshError> {
            let mut conflict = None;
            let cdt = ConstrainedDelaunayTriangulation::<Point2<f64>>::try_bulk_load_cdt(
                vertices.clone(),
                edges.clone(),
                |[a, _]| {
                    conflict.get_or_insert(a);
                },
            )
            .map_err(|_| MeshError::BadCoordinate)?;
            if cdt.num_vertices() != n_input {
                return Err(MeshError::BadCoordinate);
            }
            if let Some(a) = conflict {
                let p = vertices[a];
                return Err(MeshError::ConflictingBoundary {
                    at: Point::new(p.x, p.y) + origin,
                });
            }
            Ok(cdt)
        };
        let parameters = RefinementParameters::<f64>::new()
            .exclude_outer_faces(!by_winding)
            .with_angle_limit(AngleLimit::from_deg(MIN_ANGLE_DEG))
            .with_max_allowed_area(0.5 * h * h)
            // Elements a thousandth of the size asked for are not refined further.
            .with_min_required_area(1e-6 * h * h)
            .with_max_additional_vertices(max_vertices.saturating_sub(n_input));
        let mut cdt = triangulate()?;
        let mut result = cdt.refine(parameters.clone());
        if !result.refinement_complete {
            // Near a cusp (two boundaries meeting at a zero angle) splitting boundary edges
            // to mend encroachment never ends; the boundary is already split to the target
            // size, so refine again without splitting it (some triangles at the boundary
            // then stay below the angle limit).
            cdt = triangulate()?;
            result = cdt.refine(parameters.keep_constraint_edges());
        }
        if !result.refinement_complete {
            return Err(MeshError::RefinementIncomplete { cap: max_vertices });
        }

        // Vertices spade added on a constraint edge lie on its chord; find the input edge
        // each lies on by walking the chain of added vertices to input vertices at both ends.
        let n_all = cdt.num_vertices();
        let mut positions: Vec<Point> = cdt
            .vertices()
            .map(|v| {
                let p = v.position();
                Point::new(p.x, p.y)
            })
            .collect();
        let handles: Vec<_> = cdt.fixed_vertices().collect();
        let constraint_neighbours = |v: usize| -> Vec<usize> {
            cdt.vertex(handles[v])
                .out_edges()
                .filter(|e| e.is_constraint_edge())
                .map(|e| e.to().fix().index())
                .collect()
        };
        // For each added vertex on a constraint: the arc of its input edge (or NO_ARC).
        let mut added_arc: Vec<Option<u32>> = vec![None; n_all.saturating_sub(n_input)];
        for v in n_input..n_all {
            if added_arc[v - n_input].is_some() {
                continue;
            }
            let nb = constraint_neighbours(v);
            if nb.len() != 2 {
                continue; // an interior vertex
            }
            // Walk both ways to input vertices, collecting the added ones on the way.
            let mut chain = vec![v];
            let mut ends = [0usize; 2];
            for (side, &first) in nb.iter().enumerate() {
                let (mut prev, mut cur) = (v, first);
                while cur >= n_input {
                    chain.push(cur);
                    let next = constraint_neighbours(cur);
                    match next.iter().find(|&&w| w != prev) {
                        Some(&w) if next.len() == 2 => {
                            prev = cur;
                            cur = w;
                        }
                        _ => break,
                    }
                }
                ends[side] = cur;
            }
            let key = (ends[0].min(ends[1]), ends[0].max(ends[1]));
            let arc = edge_arc.get(&key).copied().unwrap_or(NO_ARC);
            for &c in &chain {
                added_arc[c - n_input] = Some(arc);
            }
        }
        // Moving a vertex by d onto its arc changes the area of the straight triangles by
        // at most d times the length of the two boundary edges at it.
        let mut arc_moves = 0.0;
        let chord_positions = positions.clone();
        for (k, arc) in added_arc.iter().enumerate() {
            if let Some(a) = arc.filter(|&a| a != NO_ARC) {
                let moved = onto_circle(positions[n_input + k], arcs[a as usize]);
                arc_moves += moved.dist(positions[n_input + k]) * 2.0 * h;
                positions[n_input + k] = moved;
            }
        }
        let arc_of = |a: usize, b: usize| -> u32 {
            for v in [a, b] {
                if v >= n_input {
                    return added_arc[v - n_input].unwrap_or(NO_ARC);
                }
            }
            edge_arc
                .get(&(a.min(b), a.max(b)))
                .copied()
                .unwrap_or(NO_ARC)
        };

        // Kept triangles, renumbered densely, with middle nodes.
        let mut renumber = vec![u32::MAX; n_all];
        let mut mesh = Mesh {
            arcs,
            ..Mesh::default()
        };
        let mut middles: HashMap<(u32, u32), u32> = HashMap::new();
        for face in cdt.inner_faces() {
            let kept = if by_winding {
                let [a, b, c] = face.positions();
                let centre = Point::new((a.x + b.x + c.x) / 3.0, (a.y + b.y + c.y) / 3.0);
                winding_number(&polygons, centre) == 1
            } else {
                !result.excluded_faces.contains(&face.fix())
            };
            if !kept {
                continue;
            }
            let vs = face.vertices().map(|v| v.fix().index());
            let corners = vs.map(|v| {
                if renumber[v] == u32::MAX {
                    renumber[v] = mesh.nodes.len() as u32;
                    mesh.nodes.push(positions[v]);
                }
                renumber[v]
            });
            let edges_of_face = face.adjacent_edges();
            let mut element = [corners[0], corners[1], corners[2], 0, 0, 0];
            let mut arcs_of = [NO_ARC; 3];
            for k in 0..3 {
                let (a, b) = (vs[k], vs[(k + 1) % 3]);
                // spade's adjacent_edges()[k] runs from vertex k to vertex k + 1.
                let is_constraint = edges_of_face[k].is_constraint_edge();
                let arc = if is_constraint { arc_of(a, b) } else { NO_ARC };
                arcs_of[k] = arc;
                let (ca, cb) = (corners[k], corners[(k + 1) % 3]);
                let key = (ca.min(cb), ca.max(cb));
                let nodes = &mut mesh.nodes;
                let arcs = &mesh.arcs;
                element[3 + k] = *middles.entry(key).or_insert_with(|| {
                    let m = (nodes[ca as usize] + nodes[cb as usize]) * 0.5;
                    nodes.push(if arc == NO_ARC {
                        m
                    } else {
                        onto_circle(m, arcs[arc as usize])
                    });
                    nodes.len() as u32 - 1
                });
            }
            mesh.elements.push(element);
            mesh.edge_arcs.push(arcs_of);
        }
        if mesh.elements.is_empty() {
            // Odd parity left nothing: loops that run along each other (see below).
            return Err(MeshError::Overlapping);
        }
        // spade keeps the faces of odd parity; where a hole's edge lies along the outline
        // (a notch drawn as a hole) parity is wrong. The kept triangles must cover the
        // polygons' area exactly (both are the same straight-edged region).
        let polygon_area: f64 = polygons
            .iter()
            .map(|poly| {
                (0..poly.len())
                    .map(|k| poly[k].at.cross(poly[(k + 1) % poly.len()].at))
                    .sum::<f64>()
                    / 2.0
            })
            .sum();
        let mesh_area: f64 = mesh
            .elements
            .iter()
            .map(|el| {
                let [a, b, c] = [0, 1, 2].map(|k| mesh.nodes[el[k] as usize]);
                (b - a).cross(c - a) / 2.0
            })
            .sum();
        // Vertices moved onto arcs change the triangles' area by the segments they add.
        let tolerance = 1e-6 * polygon_area.abs() + arc_moves;
        if (mesh_area - polygon_area).abs() > tolerance {
            return Err(MeshError::Overlapping);
        }
        // Where boundaries nearly touch, a vertex moved onto its arc or a curved edge can
        // fold an element over: put such vertices back on their chords and straighten the
        // edges, until no element folds (each round only moves vertices back, so it ends).
        let chord_of: Vec<Option<Point>> = (0..mesh.nodes.len()).map(|_| None).collect();
        let mut chord_of = chord_of;
        for (v, &r) in renumber.iter().enumerate() {
            if r != u32::MAX && v >= n_input && chord_positions[v] != positions[v] {
                chord_of[r as usize] = Some(chord_positions[v]);
            }
        }
        loop {
            mesh.place_middles();
            let mut moved_back = false;
            for e in 0..mesh.elements.len() {
                if mesh.element_is_valid(e) {
                    continue;
                }
                for k in 0..3 {
                    let v = mesh.elements[e][k] as usize;
                    if let Some(p) = chord_of[v].take() {
                        mesh.nodes[v] = p;
                        moved_back = true;
                    }
                }
            }
            if !moved_back {
                break;
            }
        }
        if mesh.straighten_folded() > 0 {
            return Err(MeshError::Folded);
        }
        Ok(mesh)
    }

    /// Whether element `e`'s quadratic map keeps a positive Jacobian at its corners, its
    /// edge middles and its quadrature points (not folded over by a curved edge).
    pub fn element_is_valid(&self, e: usize) -> bool {
        const CHECK: [(f64, f64); 6] = [
            (0.0, 0.0),
            (1.0, 0.0),
            (0.0, 1.0),
            (0.5, 0.0),
            (0.5, 0.5),
            (0.0, 0.5),
        ];
        let el = &self.elements[e];
        let points = CHECK
            .iter()
            .copied()
            .chain(GAUSS.iter().map(|g| (g.0, g.1)));
        points.into_iter().all(|(xi, eta)| {
            let d = shape_derivatives(xi, eta);
            let (mut j11, mut j12, mut j21, mut j22) = (0.0, 0.0, 0.0, 0.0);
            for k in 0..6 {
                let p = self.nodes[el[k] as usize];
                j11 += d[0][k] * p.x;
                j12 += d[1][k] * p.x;
                j21 += d[0][k] * p.y;
                j22 += d[1][k] * p.y;
            }
            let det = j11 * j22 - j12 * j21;
            det.is_finite() && det > 0.0
        })
    }

    /// Straighten the arc edges of elements that a curved edge folds over (where a hole
    /// nearly touches another boundary, the material between can be thinner than an arc
    /// edge's bulge): their middle nodes go back to the chord's middle. A boundary edge
    /// belongs to one element only, so no neighbour is affected. Returns how many elements
    /// remain invalid.
    fn straighten_folded(&mut self) -> usize {
        let mut invalid = 0;
        for e in 0..self.elements.len() {
            if self.element_is_valid(e) {
                continue;
            }
            let el = self.elements[e];
            for k in 0..3 {
                if self.edge_arcs[e][k] != NO_ARC {
                    let (a, b) = (
                        self.nodes[el[k] as usize],
                        self.nodes[el[(k + 1) % 3] as usize],
                    );
                    self.nodes[el[3 + k] as usize] = (a + b) * 0.5;
                    self.edge_arcs[e][k] = NO_ARC;
                }
            }
            if !self.element_is_valid(e) {
                invalid += 1;
            }
        }
        invalid
    }

    /// Put every middle node at the middle of its edge: on the arc for an arc edge, else
    /// halfway between the corners (the placement [`Mesh::build`] makes).
    fn place_middles(&mut self) {
        for e in 0..self.elements.len() {
            let el = self.elements[e];
            for k in 0..3 {
                let m = (self.nodes[el[k] as usize] + self.nodes[el[(k + 1) % 3] as usize]) * 0.5;
                let arc = self.edge_arcs[e][k];
                self.nodes[el[3 + k] as usize] = if arc == NO_ARC {
                    m
                } else {
                    onto_circle(m, self.arcs[arc as usize])
                };
            }
        }
    }

    /// Position of reference point (ξ, η) of element `e` under its quadratic map.
    pub fn map(&self, e: usize, xi: f64, eta: f64) -> Point {
        let n = shape(xi, eta);
        let el = &self.elements[e];
        let mut p = Point::new(0.0, 0.0);
        for k in 0..6 {
            p = p + self.nodes[el[k] as usize] * n[k];
        }
        p
    }

    /// Every element split into four at its middle nodes: the corner and middle nodes become
    /// corners, and the new middle nodes sit at the element's own quadratic map of the
    /// reference midpoints (so straight edges stay straight and interior edges of curved
    /// elements follow their element), except on arc edges, where they go onto the arc.
    pub fn refined(&self) -> Mesh {
        let mut out = Mesh {
            nodes: self.nodes.clone(),
            elements: Vec::with_capacity(4 * self.elements.len()),
            edge_arcs: Vec::with_capacity(4 * self.elements.len()),
            arcs: self.arcs.clone(),
            parents: Vec::with_capacity(3 * self.elements.len()),
        };
        let mut middles: HashMap<(u32, u32), u32> = HashMap::with_capacity(2 * self.nodes.len());
        for (e, el) in self.elements.iter().enumerate() {
            let arcs = self.edge_arcs[e];
            // New middle node on the child edge a–b at reference point `code` of
            // SPLIT_POINTS; `arc` is the arc the child edge lies on; `shared` edges (on the
            // parent's edges) are looked up so that both neighbours use one node.
            let mut middle = |a: u32, b: u32, code: u8, arc: u32, shared: bool| {
                let place = |out: &mut Mesh| {
                    let (xi, eta) = SPLIT_POINTS[code as usize];
                    let p = self.map(e, xi, eta);
                    out.parents.push((e as u32, code));
                    out.nodes.push(if arc == NO_ARC {
                        p
                    } else {
                        onto_circle(p, out.arcs[arc as usize])
                    });
                    out.nodes.len() as u32 - 1
                };
                if shared {
                    let key = (a.min(b), a.max(b));
                    if let Some(&m) = middles.get(&key) {
                        return m;
                    }
                    let m = place(&mut out);
                    middles.insert(key, m);
                    m
                } else {
                    place(&mut out)
                }
            };
            let [n0, n1, n2, n3, n4, n5] = *el;
            let m03 = middle(n0, n3, 0, arcs[0], true);
            let m31 = middle(n3, n1, 1, arcs[0], true);
            let m14 = middle(n1, n4, 2, arcs[1], true);
            let m42 = middle(n4, n2, 3, arcs[1], true);
            let m25 = middle(n2, n5, 4, arcs[2], true);
            let m50 = middle(n5, n0, 5, arcs[2], true);
            let m35 = middle(n3, n5, 6, NO_ARC, false);
            let m34 = middle(n3, n4, 7, NO_ARC, false);
            let m45 = middle(n4, n5, 8, NO_ARC, false);
            out.elements.extend([
                [n0, n3, n5, m03, m35, m50],
                [n3, n1, n4, m31, m14, m34],
                [n5, n4, n2, m45, m42, m25],
                [n3, n4, n5, m34, m45, m35],
            ]);
            out.edge_arcs.extend([
                [arcs[0], NO_ARC, arcs[2]],
                [arcs[0], arcs[1], NO_ARC],
                [NO_ARC, arcs[1], arcs[2]],
                [NO_ARC; 3],
            ]);
        }
        out.straighten_folded();
        out
    }
}
