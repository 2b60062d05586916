//! St Venant torsion and warping by finite elements: the torsion constant J, the shear
//! centre and the warping constant Iw.
//!
//! ## The problem
//!
//! A prismatic bar twisted by a rate θ' warps out of plane by w = θ'·ω(x, y), where the
//! warping function ω solves Laplace's equation ∇²ω = 0 in the section with
//! ∂ω/∂n = y·nx − x·ny on every boundary, holes included (Saint-Venant; Timoshenko &
//! Goodier, Theory of Elasticity, §104; Pilkey, Analysis and Design of Elastic Beams, 2002,
//! §6.1; from memory). Multiplying by a test function v and integrating by parts turns the
//! boundary term into an area integral, so no normals are needed:
//!
//!   ∬ ∇ω·∇v dA = ∬ (y·∂v/∂x − x·∂v/∂y) dA   for every v.
//!
//! With 6-node triangles this is K·ω = F. K is singular (ω is defined up to a constant on each
//! connected piece), so one node per piece is held at zero (its row and column made an
//! identity) and the rest solved: on the first mesh by sparse Cholesky (faer), on its
//! refinements by conjugate gradients with a multigrid preconditioner
//! ([`super::multigrid`]). F sums to zero on each piece, so the system is consistent.
//!
//! ## What is computed from ω (all about the frame origin, which is the centroid)
//!
//! - Torsion constant J = ∬ (x² + y² + x·∂ω/∂y − y·∂ω/∂x) dA (Pilkey §6.1). The first part
//!   is the polar moment Ip, taken from the exact boundary integrals; the second is
//!   −ωᵀKω for the finite-element ω, taken as −(2ωᵀF − ωᵀKω), which differs from it only by
//!   the square of the iterative solver's error. Galerkin's method makes ωᵀKω converge from below
//!   on nested meshes, so J converges from above.
//! - Shear centre (Trefftz's definition, Pilkey §6.3): the pole P = (a, b) about which the
//!   warping function ω_P = ω − b·x + a·y + c has ∬ ω_P dA = ∬ x·ω_P dA = ∬ y·ω_P dA = 0
//!   (no first moments of warping: the sectorial products of thin-walled theory). With the
//!   mesh's own area integrals (about centroids of the pieces: Pxx = ∬x² − Σ X²/A, …,
//!   Qx = ∬x·ω − Σ X·W/A, …) this is the 2×2 system
//!   Pxy·a − Pxx·b = −Qx,  Pyy·a − Pxy·b = −Qy.
//! - Warping constant about the shear centre Iw = ∬ ω_P² dA (Pilkey §6.3; Vlasov).
//!
//! Sections of several separate pieces (`--merge`): each piece warps freely with its own
//! constant (chosen so that its ω_P has zero mean); J is the sum of the pieces' J.
//!
//! ## Accuracy
//!
//! [`torsion_props`] solves on a mesh and on its uniform refinements ([`Mesh::refined`]) until
//! two successive levels agree within the accuracy asked for: J relative to itself, the shear
//! centre relative to the polar radius of gyration √(Ip/A), Iw relative to the larger of
//! itself and 1 % of Ip²/A (the size Iw has for a compact section; a section that barely
//! warps, such as a tube or an angle, has Iw near zero, and its value is then reported to
//! that floor). The largest of the three relative changes is the reported estimate.
//! With quadratic elements J converges like h⁴ on smooth sections, like h^(4/3) near a
//! sharp re-entrant corner (a fillet ends that once the mesh resolves it).

use super::mesh::{boundary_vertex_count, shape, shape_derivatives, Mesh, MeshError, GAUSS};
use super::multigrid::{Csr, Hierarchy};
use crate::geom::curve_pieces::FLATTEN_REL;
use crate::geom::symmetry::mirror_symmetric;
use crate::geom::{Point, Profile, Segment};
use crate::section::SectionProps;

/// Settings of the torsion solver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TorsionSettings {
    /// Relative accuracy asked for (see the module doc).
    pub accuracy: f64,
    /// The largest mesh (nodes) a refinement level may have; beyond it the last level's
    /// results are reported with their estimate, not converged.
    pub max_nodes: usize,
}

impl Default for TorsionSettings {
    fn default() -> Self {
        TorsionSettings {
            accuracy: 1e-3,
            max_nodes: 400_000,
        }
    }
}

/// Torsion and warping properties of a section, millimetres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TorsionProps {
    /// St Venant torsion constant J (It).
    pub j: f64,
    /// Shear centre (Trefftz), drawing coordinates.
    pub shear_centre: Point,
    /// Warping constant Iw (Cw) about the shear centre.
    pub iw: f64,
    /// Estimated relative error: the largest relative change between the last two levels.
    pub accuracy: f64,
    /// Whether the estimate met the accuracy asked for.
    pub converged: bool,
    /// Nodes and elements of the last level.
    pub nodes: usize,
    pub elements: usize,
}

/// Results of one mesh level, in the frame of the mesh (origin at the section's centroid).
#[derive(Debug, Clone, Copy)]
struct Level {
    /// ωᵀKω = ∬ |∇ω|² dA.
    energy: f64,
    shear_centre: Point,
    iw: f64,
}

/// Per quadrature point of an element: position, weight × Jacobian, and the shape
/// functions' values and x, y derivatives.
struct PointData {
    at: Point,
    weight: f64,
    dx: [f64; 6],
    dy: [f64; 6],
}

/// The six quadrature points of element `e`; `None` if the element is inverted or flat.
fn element_points(mesh: &Mesh, e: usize, tables: &Tables) -> Option<[PointData; 6]> {
    let el = &mesh.elements[e];
    let xy: [Point; 6] = std::array::from_fn(|k| mesh.nodes[el[k] as usize]);
    let mut ok = true;
    let pts = std::array::from_fn(|g| {
        let (n, d) = (&tables.n[g], &tables.d[g]);
        let (mut x, mut y) = (0.0, 0.0);
        let (mut j11, mut j12, mut j21, mut j22) = (0.0, 0.0, 0.0, 0.0);
        for k in 0..6 {
            x += n[k] * xy[k].x;
            y += n[k] * xy[k].y;
            j11 += d[0][k] * xy[k].x;
            j12 += d[1][k] * xy[k].x;
            j21 += d[0][k] * xy[k].y;
            j22 += d[1][k] * xy[k].y;
        }
        let det = j11 * j22 - j12 * j21;
        if det.is_nan() || det <= 0.0 || det.is_infinite() {
            ok = false;
        }
        let inv = 1.0 / det;
        let mut dx = [0.0; 6];
        let mut dy = [0.0; 6];
        for k in 0..6 {
            dx[k] = (d[0][k] * j22 - d[1][k] * j21) * inv;
            dy[k] = (-d[0][k] * j12 + d[1][k] * j11) * inv;
        }
        PointData {
            at: Point::new(x, y),
            weight: GAUSS[g].2 * det,
            dx,
            dy,
        }
    });
    ok.then_some(pts)
}

/// Shape function values and derivatives at the quadrature points, computed once.
struct Tables {
    n: [[f64; 6]; 6],
    d: [[[f64; 6]; 2]; 6],
}

impl Tables {
    fn new() -> Tables {
        Tables {
            n: std::array::from_fn(|g| shape(GAUSS[g].0, GAUSS[g].1)),
            d: std::array::from_fn(|g| shape_derivatives(GAUSS[g].0, GAUSS[g].1)),
        }
    }
}

/// Connected pieces of the mesh: the piece of each node, and the number of pieces.
fn pieces(mesh: &Mesh) -> (Vec<u32>, usize) {
    let n = mesh.nodes.len();
    let mut parent: Vec<u32> = (0..n as u32).collect();
    fn root(parent: &mut [u32], mut v: u32) -> u32 {
        while parent[v as usize] != v {
            let up = parent[parent[v as usize] as usize];
            parent[v as usize] = up;
            v = up;
        }
        v
    }
    for el in &mesh.elements {
        let r0 = root(&mut parent, el[0]);
        for &v in &el[1..] {
            let r = root(&mut parent, v);
            if r != r0 {
                parent[r as usize] = r0;
            }
        }
    }
    let mut id = vec![u32::MAX; n];
    let mut count = 0usize;
    let piece = (0..n as u32)
        .map(|v| {
            let r = root(&mut parent, v) as usize;
            if id[r] == u32::MAX {
                id[r] = count as u32;
                count += 1;
            }
            id[r]
        })
        .collect();
    (piece, count)
}

/// The stiffness matrix K and load vector F of `mesh` (frame origin at the section's
/// centroid), with the `held` unknowns as identity rows, and the position and weight ×
/// Jacobian of every quadrature point (for the integrals of ω).
#[allow(clippy::type_complexity)]
fn assemble(
    mesh: &Mesh,
    held: &[u32],
    tables: &Tables,
) -> Result<(Csr, Vec<f64>, Vec<[(Point, f64); 6]>), String> {
    let n = mesh.nodes.len();
    let mut is_held = vec![false; n];
    for &h in held {
        is_held[h as usize] = true;
    }
    let mut k = Csr::pattern(n, &mesh.elements);
    let mut f = vec![0.0; n];
    let mut points: Vec<[(Point, f64); 6]> = Vec::with_capacity(mesh.elements.len());
    for (e, el) in mesh.elements.iter().enumerate() {
        let pts = element_points(mesh, e, tables)
            .ok_or_else(|| "a mesh element is inverted (internal error)".to_string())?;
        let mut ke = [[0.0; 6]; 6];
        let mut fe = [0.0; 6];
        for q in &pts {
            for i in 0..6 {
                fe[i] += q.weight * (q.at.y * q.dx[i] - q.at.x * q.dy[i]);
                let (wx, wy) = (q.weight * q.dx[i], q.weight * q.dy[i]);
                for (j, k) in ke[i][..=i].iter_mut().enumerate() {
                    *k += wx * q.dx[j] + wy * q.dy[j];
                }
            }
        }
        for i in 0..6 {
            let vi = el[i] as usize;
            if is_held[vi] {
                continue;
            }
            f[vi] += fe[i];
            for j in 0..=i {
                let vj = el[j] as usize;
                if is_held[vj] {
                    continue;
                }
                k.add(vi, vj, ke[i][j]);
                if vi != vj {
                    k.add(vj, vi, ke[i][j]);
                }
            }
        }
        points.push(pts.map(|q| (q.at, q.weight)));
    }
    for &h in held {
        k.hold(h as usize);
    }
    Ok((k, f, points))
}

/// The first node of each connected piece: held at zero to remove the constant.
fn held_nodes(piece: &[u32], n_pieces: usize) -> Vec<u32> {
    let mut held = vec![u32::MAX; n_pieces];
    for (v, &p) in piece.iter().enumerate() {
        if held[p as usize] == u32::MAX {
            held[p as usize] = v as u32;
        }
    }
    held
}

/// Relative residual the iterative solves of finer levels reach: far below what moves J,
/// the shear centre or Iw in their reported digits (J depends on the solution's error
/// only quadratically, through the energy 2·ωᵀF − ωᵀKω).
const SOLVER_TOLERANCE: f64 = 1e-10;

/// Solve the warping problem on the finest level of `hierarchy` (after `mesh` was pushed
/// onto it; `guess` is the level below's solution) and integrate the results.
fn solve_level(
    hierarchy: &mut Hierarchy,
    f: &[f64],
    points: &[[(Point, f64); 6]],
    guess: Option<&[f64]>,
    tables: &Tables,
) -> Result<(Level, Vec<f64>), String> {
    let guess = guess.map(|g| hierarchy.prolonged(g));
    let omega = match hierarchy.solve(f, guess.as_deref(), SOLVER_TOLERANCE) {
        Ok(w) => w,
        // Multigrid needs well-shaped, nested levels; where boundaries nearly touch some
        // elements are neither, and the level is factorised instead.
        Err(_) => hierarchy.solve_directly(f)?,
    };
    let top = hierarchy.matrices.len() - 1;
    let mut k_omega = vec![0.0; omega.len()];
    hierarchy.matrices[top].mul(&omega, &mut k_omega);
    // 2·ωᵀF − ωᵀKω: equal to ωᵀKω for the exact solution of K·ω = F, and off from it only
    // by the square of the solver's error.
    let energy: f64 = omega
        .iter()
        .zip(f)
        .zip(&k_omega)
        .map(|((w, fi), kw)| w * (2.0 * fi - kw))
        .sum();
    let mesh = &hierarchy.meshes[top];
    let (piece, n_pieces) = pieces(mesh);
    // Area integrals of each piece and of ω.
    #[derive(Clone, Copy, Default)]
    struct PieceSums {
        a: f64,
        x: f64,
        y: f64,
        w: f64,
    }
    let mut ps = vec![PieceSums::default(); n_pieces];
    let (mut xx, mut yy, mut xy, mut xw, mut yw) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for (e, pts) in points.iter().enumerate() {
        let el = &mesh.elements[e];
        let s = &mut ps[piece[el[0] as usize] as usize];
        for (g, &(at, dw)) in pts.iter().enumerate() {
            let n = &tables.n[g];
            let w: f64 = (0..6).map(|k| n[k] * omega[el[k] as usize]).sum();
            let (x, y) = (at.x, at.y);
            s.a += dw;
            s.x += dw * x;
            s.y += dw * y;
            s.w += dw * w;
            xx += dw * x * x;
            yy += dw * y * y;
            xy += dw * x * y;
            xw += dw * x * w;
            yw += dw * y * w;
        }
    }
    let (mut pxx, mut pyy, mut pxy, mut qx, mut qy) = (xx, yy, xy, xw, yw);
    for s in &ps {
        if s.a > 0.0 {
            pxx -= s.x * s.x / s.a;
            pyy -= s.y * s.y / s.a;
            pxy -= s.x * s.y / s.a;
            qx -= s.x * s.w / s.a;
            qy -= s.y * s.w / s.a;
        }
    }
    // Pxy·a − Pxx·b = −Qx;  Pyy·a − Pxy·b = −Qy  (Cramer's rule).
    let det = -pxy * pxy + pxx * pyy;
    let a = (qx * pxy - pxx * qy) / det;
    let b = (pyy * qx - pxy * qy) / det;
    let c: Vec<f64> = ps
        .iter()
        .map(|s| {
            if s.a > 0.0 {
                -(s.w + a * s.y - b * s.x) / s.a
            } else {
                0.0
            }
        })
        .collect();
    // Iw = ∬ ω_P² dA with ω_P = ω − b·x + a·y + c (exactly representable on the elements).
    let mut iw = 0.0;
    for (e, pts) in points.iter().enumerate() {
        let el = &mesh.elements[e];
        let ce = c[piece[el[0] as usize] as usize];
        for (g, &(at, dw)) in pts.iter().enumerate() {
            let n = &tables.n[g];
            let w: f64 = (0..6).map(|k| n[k] * omega[el[k] as usize]).sum();
            let wp = w - b * at.x + a * at.y + ce;
            iw += dw * wp * wp;
        }
    }
    if !(energy.is_finite() && a.is_finite() && b.is_finite() && iw.is_finite()) {
        return Err("the torsion solution is not finite".into());
    }
    Ok((
        Level {
            energy,
            shear_centre: Point::new(a, b),
            iw,
        },
        omega,
    ))
}

/// ωᵀKω = ∬ |∇ω|² dA of the finite-element warping function on `mesh` (built about the
/// section's centroid); J on this mesh alone is Ip − ωᵀKω. For tests of convergence.
pub fn warping_energy(mesh: &Mesh) -> Result<f64, String> {
    let tables = Tables::new();
    let (piece, n_pieces) = pieces(mesh);
    let mut hierarchy = Hierarchy::new(held_nodes(&piece, n_pieces));
    let (k, f, points) = assemble(mesh, &hierarchy.held, &tables)?;
    hierarchy.push(mesh.clone(), k);
    solve_level(&mut hierarchy, &f, &points, None, &tables).map(|(l, _)| l.energy)
}

/// Target element size of the first level: a fifth of the side of a square of the same area
/// as the section, but no more than a tenth of the box's larger side. Thin walls get smaller
/// elements by themselves (the refinement's angle limit).
fn first_size(area: f64, width: f64, height: f64) -> f64 {
    (area.abs().sqrt() / 5.0).min(width.max(height) / 10.0)
}

/// The shear centre `sc` put exactly on the section's lines of mirror symmetry, if it has
/// any: a principal axis through the centroid about which the boundary is symmetric (to
/// 1e-7 of the section's size, or to the flattening tolerance of its curve pieces) carries
/// the shear centre (module [`crate::geom::symmetry`]); two such axes meet at the centroid.
fn onto_symmetry_axes(profiles: &[&Profile], props: &SectionProps, sc: Point) -> Point {
    let segments: Vec<Segment> = profiles
        .iter()
        .flat_map(|p| std::iter::once(&p.outer).chain(&p.holes))
        .flat_map(|l| l.segments.iter().copied())
        .collect();
    let size = props.bbox.diagonal();
    let has_curves = segments.iter().any(|s| matches!(s, Segment::Curve(_)));
    let tolerance = size * if has_curves { 2.0 * FLATTEN_REL } else { 1e-7 };
    let c = props.centroid;
    let theta = props.theta_deg.to_radians();
    let axes: Vec<Point> = [theta, theta + std::f64::consts::FRAC_PI_2]
        .into_iter()
        .map(Point::polar)
        .filter(|&d| mirror_symmetric(&segments, c, d, tolerance))
        .collect();
    match axes[..] {
        [] => sc,
        [d] => c + d * (sc - c).dot(d),
        _ => c,
    }
}

/// J, shear centre and Iw of the section made of `profiles`, whose geometric properties
/// are `props`.
pub fn torsion_props(
    profiles: &[&Profile],
    props: &SectionProps,
    settings: &TorsionSettings,
) -> Result<TorsionProps, String> {
    let (centroid, area, ip) = (props.centroid, props.area, props.ip);
    let bbox = profiles
        .iter()
        .fold(crate::geom::BBox::EMPTY, |b, p| b.union(&p.bbox));
    let h = first_size(area, bbox.width(), bbox.height());
    if !(h > 0.0 && h.is_finite()) {
        return Err("no area to mesh".into());
    }
    // A first level of V vertices has about 4·V nodes (corners and edge middles), and the
    // second level four times as many: both must fit under the cap.
    // Its boundary alone gives at least two nodes per boundary vertex (the vertex and the
    // middle of the edge from it), so with more than an eighth of the cap in boundary
    // vertices there is no room for a second level: say so before building a mesh that
    // would be thrown away (a sliver 1e-160 mm thin needs millions at its target size).
    let boundary = boundary_vertex_count(profiles, h);
    if boundary > settings.max_nodes / 8 {
        return Err(format!(
            "cannot mesh the section: its boundary alone needs {boundary} vertices at the target \
             size, too many for the cap of {} nodes (a sliver or a very fine boundary; \
             --torsion-max-nodes raises the cap)",
            settings.max_nodes
        ));
    }
    let mesh = Mesh::build(profiles, centroid, h, settings.max_nodes / 16)
        .map_err(|e: MeshError| format!("cannot mesh the section: {e}"))?;
    let tables = Tables::new();
    let (piece, n_pieces) = pieces(&mesh);
    // Refinement keeps node numbers, so the held nodes stay the first of their pieces.
    let mut hierarchy = Hierarchy::new(held_nodes(&piece, n_pieces));
    let mut mesh = mesh;
    let mut previous: Option<(Level, Vec<f64>)> = None;
    // Scales of the relative changes (module doc).
    let rp = (ip / area).abs().sqrt();
    let iw_floor = 0.01 * ip * ip / area;
    loop {
        crate::time_limit::check_now("solving for torsion");
        let (k, f, points) = assemble(&mesh, &hierarchy.held, &tables)?;
        let (nodes, elements) = (mesh.nodes.len(), mesh.elements.len());
        hierarchy.push(mesh, k);
        let guess = previous.as_ref().map(|(_, w)| w.as_slice());
        let (level, omega) = solve_level(&mut hierarchy, &f, &points, guess, &tables)?;
        let j = ip - level.energy;
        let estimate = previous.as_ref().map(|(p, _)| {
            let dj = ((ip - p.energy) - j).abs() / j.abs();
            let ds = p.shear_centre.dist(level.shear_centre) / rp;
            let diw = (p.iw - level.iw).abs() / level.iw.abs().max(iw_floor);
            dj.max(ds).max(diw)
        });
        let done = estimate.is_some_and(|e| e <= settings.accuracy);
        let next_nodes = nodes * 4;
        if done || (estimate.is_some() && next_nodes > settings.max_nodes) {
            return Ok(TorsionProps {
                j,
                shear_centre: onto_symmetry_axes(profiles, props, centroid + level.shear_centre),
                iw: level.iw,
                accuracy: estimate.unwrap_or(f64::NAN),
                converged: done,
                nodes,
                elements,
            });
        }
        if next_nodes > settings.max_nodes {
            return Err(format!(
                "the first mesh ({nodes} nodes) leaves no room for a second level under the cap of {} nodes",
                settings.max_nodes
            ));
        }
        mesh = hierarchy.meshes[hierarchy.meshes.len() - 1].refined();
        previous = Some((level, omega));
    }
}

/// Area integrals of a mesh by its quadrature: [A, ∬x, ∬y, ∬x², ∬y², ∬xy] in the mesh's
/// frame. Exact for straight elements; for curved ones to the rule's accuracy.
pub fn mesh_integrals(mesh: &Mesh) -> Option<[f64; 6]> {
    let tables = Tables::new();
    let mut m = [0.0; 6];
    for e in 0..mesh.elements.len() {
        for q in element_points(mesh, e, &tables)? {
            let (x, y, w) = (q.at.x, q.at.y, q.weight);
            m[0] += w;
            m[1] += w * x;
            m[2] += w * y;
            m[3] += w * x * x;
            m[4] += w * y * y;
            m[5] += w * x * y;
        }
    }
    Some(m)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fem::mesh::MIN_ANGLE_DEG;
    use crate::geom::{nest, Arc, Loop, LoopsToNest, Segment};
    use crate::import::{LayerName, Location, Origin};

    fn profile(loops: Vec<Vec<Segment>>) -> Profile {
        let loops = loops
            .into_iter()
            .map(|segments| Loop {
                segments,
                seq: 0,
                layer: LayerName::default(),
                origin: Origin {
                    entity: "LWPOLYLINE",
                    location: Location::Line(1),
                    handle: None,
                    in_block: false,
                },
            })
            .collect();
        let mut problems = Vec::new();
        let mut ps = nest(LoopsToNest::new(loops, &[]), 1e-9, &mut problems).profiles;
        assert_eq!(ps.len(), 1, "{problems:?}");
        ps.pop().expect("one profile")
    }

    fn poly(pts: &[(f64, f64)]) -> Vec<Segment> {
        (0..pts.len())
            .map(|k| {
                let (a, b) = (pts[k], pts[(k + 1) % pts.len()]);
                Segment::line(Point::new(a.0, a.1), Point::new(b.0, b.1))
            })
            .collect()
    }

    /// An L-shaped plate with a round hole: lines, an arc boundary and a re-entrant corner.
    fn plate() -> Profile {
        profile(vec![
            poly(&[
                (0.0, 0.0),
                (40.0, 0.0),
                (40.0, 10.0),
                (10.0, 10.0),
                (10.0, 30.0),
                (0.0, 30.0),
            ]),
            vec![Segment::Arc(Arc::circle(Point::new(25.0, 5.0), 3.0))],
        ])
    }

    #[test]
    fn mesh_integrals_match_the_exact_ones_and_refinement_keeps_them() {
        // Two ways: the boundary integrals (Green's theorem, exact) and the mesh's own
        // quadrature. Curved element edges are quadratic curves through three points of
        // the hole's circle: their area error falls like h⁴ (16× per halving; at least 8×
        // is asked, until rounding), and is 1e-5 of the area on 30° pieces.
        let p = plate();
        let exact = crate::section::section_props(&[&p]);
        let c = exact.centroid;
        let mut mesh = Mesh::build(&[&p], c, 5.0, 1 << 20).expect("meshed");
        let mut errors = Vec::new();
        for _ in 0..4 {
            let m = mesh_integrals(&mesh).expect("no inverted element");
            let rel = |a: f64, b: f64, scale: f64| (a - b).abs() / scale;
            errors.push(
                [
                    rel(m[0], exact.area, exact.area),
                    rel(m[1], 0.0, exact.area * 30.0),
                    rel(m[2], 0.0, exact.area * 30.0),
                    rel(m[3], exact.iyy, exact.iyy),
                    rel(m[4], exact.ixx, exact.ixx),
                    rel(m[5], exact.ixy, exact.ixx),
                ]
                .into_iter()
                .fold(0.0f64, f64::max),
            );
            mesh = mesh.refined();
        }
        assert!(errors[0] < 2e-5, "{errors:?}");
        for w in errors.windows(2) {
            assert!(w[1] < w[0] / 8.0 || w[1] < 1e-12, "{errors:?}");
        }
        // Without arcs the mesh is the polygon exactly.
        let square = profile(vec![poly(&[
            (0.0, 0.0),
            (7.0, 0.0),
            (7.0, 3.0),
            (0.0, 3.0),
        ])]);
        let mesh = Mesh::build(&[&square], Point::new(0.0, 0.0), 1.0, 1 << 20).expect("meshed");
        let m = mesh_integrals(&mesh.refined()).expect("valid");
        assert!((m[0] - 21.0).abs() < 1e-12 * 21.0);
        assert!((m[4] - 7.0 * 27.0 / 3.0).abs() < 1e-12 * 63.0);
    }

    #[test]
    fn mesh_quality_and_shared_middle_nodes() {
        let p = plate();
        let mesh = Mesh::build(&[&p], Point::new(0.0, 0.0), 4.0, 1 << 20).expect("meshed");
        // Every corner angle at least the limit (less a little: spade's limit is on the
        // circumradius-to-shortest-edge ratio) away from the boundary's own angles, which
        // here are all 90° or more.
        let mut worst = 180.0f64;
        for el in &mesh.elements {
            let c = [0, 1, 2].map(|k| mesh.nodes[el[k] as usize]);
            for k in 0..3 {
                let (a, b, o) = (c[(k + 1) % 3], c[(k + 2) % 3], c[k]);
                let (u, v) = (a - o, b - o);
                worst = worst.min(u.cross(v).atan2(u.dot(v)).to_degrees());
            }
        }
        assert!(worst > MIN_ANGLE_DEG - 0.5, "smallest angle {worst}");
        // Each edge's middle node is shared by the two elements on it.
        let mut middles = std::collections::HashMap::new();
        for el in &mesh.elements {
            for k in 0..3 {
                let (a, b) = (el[k], el[(k + 1) % 3]);
                let m = el[3 + k];
                let old = middles.insert((a.min(b), a.max(b)), m);
                assert!(
                    old.is_none() || old == Some(m),
                    "edge {a}–{b} has two middles"
                );
            }
        }
    }

    #[test]
    fn multigrid_solution_equals_the_direct_one() {
        // The same fine system solved by the V-cycle-preconditioned conjugate gradients
        // (three levels) and by factorising it.
        let p = plate();
        let c = crate::section::section_props(&[&p]).centroid;
        let tables = Tables::new();
        let coarse = Mesh::build(&[&p], c, 6.0, 1 << 20).expect("meshed");
        let (piece, n_pieces) = pieces(&coarse);
        let held = held_nodes(&piece, n_pieces);
        let mut h = Hierarchy::new(held.clone());
        let mut mesh = coarse;
        let mut guess: Option<Vec<f64>> = None;
        let mut last = (Vec::new(), Vec::new());
        for _ in 0..3 {
            let (k, f, points) = assemble(&mesh, &h.held, &tables).expect("assembled");
            h.push(mesh, k);
            let (_, omega) =
                solve_level(&mut h, &f, &points, guess.as_deref(), &tables).expect("solved");
            last = (f, omega.clone());
            guess = Some(omega);
            mesh = h.meshes[h.meshes.len() - 1].refined();
        }
        let fine = h.meshes.pop().expect("three levels");
        let (k, f, _) = assemble(&fine, &held, &tables).expect("assembled");
        let mut direct = Hierarchy::new(held);
        direct.push(fine, k);
        let x = direct.solve(&f, None, 0.0).expect("factorised");
        assert_eq!(last.0, f);
        let scale = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        for (a, b) in last.1.iter().zip(&x) {
            assert!((a - b).abs() <= 1e-8 * scale, "{a} vs {b}");
        }
    }
}
