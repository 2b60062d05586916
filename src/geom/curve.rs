//! Curved boundary pieces: elliptical arcs and B-spline / NURBS curves (the DXF ELLIPSE and
//! SPLINE entities), kept exactly, with their Green's-theorem contributions.
//!
//! Every piece contributes in the same "cone" convention as [`line_moments`]: the directed
//! piece from parameter ta to tb contributes, for each integrand f of degree k in
//! q = p − origin (1, x, y, x², y², xy),
//!
//!   ∫ f(q) (q_x dq_y − q_y dq_x) / (k + 2),
//!
//! which is the signed integral of f over the fan of triangles from the origin to the piece
//! (Green's theorem applied to that fan; common practice). Pieces of a closed loop, whatever
//! their kind, therefore add up to the integrals of the region the loop encloses, and a
//! straight piece gives exactly what `line_moments` gives.
//!
//! - Elliptical arcs are affine images of circular arcs, so they contribute their chord (as a
//!   straight edge) plus the affine image of a circular segment, whose integrals
//!   [`unit_segment_integrals`] gives (series for small angles, so short pieces keep their
//!   digits). See [`EllipseArc`].
//! - Polynomial spline spans are integrated by Gauss–Legendre quadrature with enough points
//!   to be exact; rational spans adaptively. See [`Curve::moments_between`].
//!
//! Curves are evaluated about a caller-chosen origin (control points are moved before the
//! arithmetic), so drawings far from (0, 0) keep their detail.

use super::moments::{line_moments, unit_segment_integrals, Moments};
use super::segment::{BBox, Point};
use std::cmp::Ordering;
use std::f64::consts::{PI, TAU};
use std::sync::OnceLock;

/// 2-D affine map p -> m·p + t, m = [[m[0], m[1]], [m[2], m[3]]] (row-major).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Affine {
    pub m: [f64; 4],
    pub t: Point,
}

impl Affine {
    pub const IDENTITY: Affine = Affine {
        m: [1.0, 0.0, 0.0, 1.0],
        t: Point::new(0.0, 0.0),
    };

    /// m·p + t.
    pub fn apply(&self, p: Point) -> Point {
        self.apply_vector(p) + self.t
    }

    /// m·v (vectors do not move with the translation).
    pub fn apply_vector(&self, v: Point) -> Point {
        let [a, b, c, d] = self.m;
        Point::new(a * v.x + b * v.y, c * v.x + d * v.y)
    }

    pub fn det(&self) -> f64 {
        self.m[0] * self.m[3] - self.m[1] * self.m[2]
    }

    /// The map that applies `self` first, then `next`.
    pub fn then(&self, next: &Affine) -> Affine {
        let [a, b, c, d] = next.m;
        let [e, f, g, h] = self.m;
        Affine {
            m: [a * e + b * g, a * f + b * h, c * e + d * g, c * f + d * h],
            t: next.apply(self.t),
        }
    }

    /// The inverse map, when the matrix is not singular: m⁻¹·(p − t).
    pub fn inverse(&self) -> Option<Affine> {
        let det = self.det();
        if !(det.is_finite() && det != 0.0) {
            return None;
        }
        let [a, b, c, d] = self.m;
        let m = [d / det, -b / det, -c / det, a / det];
        let t = Affine {
            m,
            t: Point::default(),
        }
        .apply_vector(self.t);
        Some(Affine {
            m,
            t: Point::new(-t.x, -t.y),
        })
    }

    pub fn translation(d: Point) -> Affine {
        Affine {
            m: [1.0, 0.0, 0.0, 1.0],
            t: d,
        }
    }

    /// Rotation about (0, 0), counter-clockwise, `angle` in radians.
    pub fn rotation(angle: f64) -> Affine {
        let (s, c) = angle.sin_cos();
        Affine {
            m: [c, -s, s, c],
            t: Point::default(),
        }
    }

    pub fn scaling(sx: f64, sy: f64) -> Affine {
        Affine {
            m: [sx, 0.0, 0.0, sy],
            t: Point::default(),
        }
    }

    /// Whether m is a rotation times a uniform scale, possibly mirrored: m·mᵀ = s²·I within
    /// a relative tolerance of 1e-12 (s² the mean of the diagonal of m·mᵀ). A singular map
    /// is not a similarity.
    pub fn is_similarity(&self) -> bool {
        let [a, b, c, d] = self.m;
        let r0 = a * a + b * b;
        let r1 = c * c + d * d;
        let s2 = 0.5 * (r0 + r1);
        let tol = 1e-12 * s2;
        s2 > 0.0 && s2.is_finite() && (r0 - r1).abs() <= tol && (a * c + b * d).abs() <= tol
    }
}

/// Elliptical arc p(t) = center + u·cos t + v·sin t for t from t0 to t1 (t1 may be < t0: the
/// curve then runs the other way). u, v are conjugate semi-diameters (perpendicular for a DXF
/// ELLIPSE: v = ratio·(major rotated +90°); any pair after an affine map). |t1 − t0| <= 2π; a
/// full ellipse has |t1 − t0| = 2π (taken as full from 2π·(1 − 1e-12) on, so that t1 = t0 + 2π
/// computed in floating point still counts).
///
/// The map w -> center + M·w with M = [u v] (columns) takes the unit circle to the ellipse
/// and the angle t to the parameter t, which is what every formula below uses.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EllipseArc {
    pub center: Point,
    pub u: Point,
    pub v: Point,
    pub t0: f64,
    pub t1: f64,
}

/// A B-spline or NURBS curve in the plane: degree p >= 1, knots (non-decreasing, len =
/// ctrl.len() + p + 1), control points, weights (empty = non-rational, else one positive
/// weight per control point). The curve's domain is [knots[p], knots[n]] with n = ctrl.len()
/// (this covers clamped, unclamped and periodic splines as DXF stores them).
///
/// The fields are public for reading; build values with [`Nurbs::new`] (or
/// [`Nurbs::interpolate`]), whose checks the methods rely on.
#[derive(Debug, Clone, PartialEq)]
pub struct Nurbs {
    pub degree: usize,
    pub knots: Vec<f64>,
    pub ctrl: Vec<Point>,
    pub weights: Vec<f64>,
}

/// A curved boundary piece.
#[derive(Debug, Clone, PartialEq)]
pub enum Curve {
    Ellipse(EllipseArc),
    Nurbs(Nurbs),
}

// ---------------------------------------------------------------------------------------
// Elliptical arcs

/// |t1 − t0| from which an arc counts as a full ellipse.
const FULL_TURN: f64 = TAU * (1.0 - 1e-12);

impl EllipseArc {
    fn is_full(&self) -> bool {
        (self.t1 - self.t0).abs() >= FULL_TURN
    }

    /// Point relative to an origin, given c = center − origin.
    fn local_point(&self, t: f64, c: Point) -> Point {
        let (s, co) = t.sin_cos();
        c + self.u * co + self.v * s
    }

    /// The parameter at which to evaluate t: a full ellipse ends exactly where it starts,
    /// so that loops close exactly.
    fn snapped(&self, t: f64) -> f64 {
        if t == self.t1 && self.is_full() {
            self.t0
        } else {
            t
        }
    }

    fn point(&self, t: f64) -> Point {
        self.local_point(self.snapped(t), self.center)
    }

    fn derivative(&self, t: f64) -> Point {
        let (s, c) = t.sin_cos();
        self.v * c - self.u * s
    }

    /// Largest singular value of M = [u v]: the longest semi-axis (the eigenvalues of
    /// M·Mᵀ = u·uᵀ + v·vᵀ, common practice).
    fn max_semi_axis(&self) -> f64 {
        let (uu, vv, uv) = (self.u.dot(self.u), self.v.dot(self.v), self.u.dot(self.v));
        let h = 0.5 * (uu - vv);
        (0.5 * (uu + vv) + (h * h + uv * uv).sqrt()).sqrt()
    }

    /// Green's-theorem contribution of the piece from ta to tb, about `origin`.
    ///
    /// With M = [u v] and d = det M = u × v, the piece is the image under
    /// w -> center + M·w of the unit-circle arc from angle ta to tb. It contributes its chord
    /// p(ta) → p(tb) as a straight edge, plus the region between chord and arc signed by
    /// d·sign(tb − ta) (an affine map scales areas by |d| and keeps or flips orientation with
    /// the sign of d). That region is the image of the unit circular segment of half-angle
    /// α = |tb − ta|/2 around the mid-angle φ = (ta + tb)/2. In the segment's frame (ξ along
    /// the chord, η from the chord midpoint towards the arc, e_v = (cos φ, sin φ),
    /// e_u = (−sin φ, cos φ)) its integrals are A, V1 = ∬η, U2 = ∬ξ², V2 = ∬η², with ∬ξ and
    /// ∬ξη zero by symmetry ([`unit_segment_integrals`]). A point of the image is
    /// m + ξ·E_u + η·E_v with m the chord midpoint (relative to the origin), E_u = M·e_u and
    /// E_v = M·e_v, so, with D = d·sign(tb − ta):
    ///
    ///   A' = D·A, ∬x = D(m_x·A + E_vx·V1),
    ///   ∬x² = D(m_x²·A + 2·m_x·E_vx·V1 + E_ux²·U2 + E_vx²·V2),
    ///   ∬xy = D(m_x·m_y·A + (m_x·E_vy + m_y·E_vx)·V1 + E_ux·E_uy·U2 + E_vx·E_vy·V2),
    ///
    /// and likewise for y. Source: the circular-segment form of `arc_moments`, carried through
    /// the affine map (change of variables in the double integral); derived here.
    ///
    /// A full ellipse contributes its whole region: A = π·d, ∬x = A·c_x,
    /// ∬x² = A·(c_x² + (u_x² + v_x²)/4), ∬xy = A·(c_x·c_y + (u_x·u_y + v_x·v_y)/4), from the unit
    /// disk's ∬w·wᵀ = (π/4)·I mapped by M (change of variables; from memory).
    ///
    /// Short pieces keep their digits: the chord term is exact to rounding and the segment
    /// term comes from the small-angle series, so nothing large cancels.
    fn moments_between(&self, ta: f64, tb: f64, origin: Point) -> Moments {
        let dt = tb - ta;
        if dt == 0.0 || !dt.is_finite() {
            return Moments::default();
        }
        let det = self.u.cross(self.v);
        let c = self.center - origin;
        let (u, v) = (self.u, self.v);
        if dt.abs() >= FULL_TURN {
            let a = PI * det * dt.signum();
            return Moments {
                a,
                sx: a * c.x,
                sy: a * c.y,
                sxx: a * (c.x * c.x + (u.x * u.x + v.x * v.x) / 4.0),
                syy: a * (c.y * c.y + (u.y * u.y + v.y * v.y) / 4.0),
                sxy: a * (c.x * c.y + (u.x * u.y + v.x * v.y) / 4.0),
            };
        }
        let p = self.local_point(self.snapped(ta), c);
        let q = self.local_point(self.snapped(tb), c);
        let alpha = 0.5 * dt.abs();
        let (s, co) = (0.5 * (ta + tb)).sin_cos();
        let ev = u * co + v * s;
        let eu = v * co - u * s;
        let m = (p + q) * 0.5;
        let [ua, v1, u2, v2] = unit_segment_integrals(alpha);
        let seg = Moments {
            a: ua,
            sx: m.x * ua + ev.x * v1,
            sy: m.y * ua + ev.y * v1,
            sxx: m.x * m.x * ua + 2.0 * m.x * ev.x * v1 + eu.x * eu.x * u2 + ev.x * ev.x * v2,
            syy: m.y * m.y * ua + 2.0 * m.y * ev.y * v1 + eu.y * eu.y * u2 + ev.y * ev.y * v2,
            sxy: m.x * m.y * ua
                + (m.x * ev.y + m.y * ev.x) * v1
                + eu.x * eu.y * u2
                + ev.x * ev.y * v2,
        };
        line_moments(p, q) + seg * (det * dt.signum())
    }

    /// Parameters of a flattening: equal steps h in t. The chord of a step is the image of a
    /// unit-circle chord of half-angle h/2; the arc lies in the image of the rectangle on that
    /// chord with height 1 − cos(h/2), whose points are within (1 − cos(h/2))·|E_v| <=
    /// 2·sin²(h/4)·σ of the chord (σ the longest semi-axis). So h = 4·asin(√(tol/(2σ)))
    /// suffices (derived here), capped at π/2.
    fn flatten(&self, tol: f64, min_pieces: usize) -> Vec<f64> {
        let sigma = self.max_semi_axis();
        let dt = self.t1 - self.t0;
        let tol = effective_tolerance(tol, sigma);
        let h = if sigma > 0.0 {
            (4.0 * (tol / (2.0 * sigma)).min(0.5).sqrt().asin()).min(PI / 2.0)
        } else {
            PI / 2.0
        };
        let mut n = ((dt.abs() / h).ceil() as usize).max(min_pieces).max(1);
        if self.is_full() {
            n = n.max(4);
        }
        n = n.min(MAX_PIECES);
        let mut ts: Vec<f64> = (0..n)
            .map(|i| self.t0 + dt * (i as f64 / n as f64))
            .collect();
        ts.push(self.t1);
        ts
    }

    /// Exact box: the ends, and the points where x or y is extreme that lie on the piece
    /// (x'(t) = −u_x·sin t + v_x·cos t = 0 at t = atan2(v_x, u_x) + kπ, likewise y).
    fn bbox_between(&self, ta: f64, tb: f64) -> BBox {
        let mut b = BBox::EMPTY;
        b.add_point(self.point(ta));
        b.add_point(self.point(tb));
        let (lo, hi) = (ta.min(tb), ta.max(tb));
        for theta in [self.v.x.atan2(self.u.x), self.v.y.atan2(self.u.y)] {
            let k0 = ((lo - theta) / PI).ceil();
            let k1 = ((hi - theta) / PI).floor();
            // At most four extremes (a full turn); counted by an integer, as `k + 1.0` no
            // longer moves past 2^53 (parameters that large come only from broken files).
            for j in 0..4 {
                let k = k0 + f64::from(j);
                if k.partial_cmp(&k1).is_none_or(|o| o.is_gt()) {
                    break;
                }
                b.add_point(self.local_point(theta + k * PI, self.center));
            }
        }
        b
    }

    fn length_between(&self, ta: f64, tb: f64, mut budget: Option<&mut u32>) -> f64 {
        let (lo, hi) = (ta.min(tb), ta.max(tb));
        if hi.partial_cmp(&lo) != Some(Ordering::Greater) {
            return 0.0;
        }
        // Quarter turns at most per piece keep the integrand smooth on each.
        let n = ((hi - lo) / (PI / 2.0)).ceil().max(1.0) as usize;
        let rule = gauss_legendre(16);
        let tol = 1e-14 * self.max_semi_axis() * (hi - lo) / n as f64;
        let mut f = |t: f64| [self.derivative(t).norm()];
        (0..n)
            .map(|i| {
                let a = lo + (hi - lo) * (i as f64 / n as f64);
                let b = if i + 1 == n {
                    hi
                } else {
                    lo + (hi - lo) * ((i + 1) as f64 / n as f64)
                };
                let whole = gauss(&mut f, a, b, rule);
                adaptive(&mut f, a, b, rule, [tol], whole, budget.as_deref_mut())[0]
            })
            .sum()
    }
}

// ---------------------------------------------------------------------------------------
// B-splines and NURBS

/// Most pieces a flattening returns (a guard against absurd tolerances).
const MAX_PIECES: usize = 1 << 22;

/// Tolerances at or below zero (or not numbers) are raised to 1e-10 of the curve's size;
/// so are positive ones smaller than that, which no drawing needs and which would only make
/// flattenings huge.
fn effective_tolerance(tol: f64, size: f64) -> f64 {
    let floor = 1e-10 * size.max(f64::MIN_POSITIVE);
    if tol.is_nan() {
        floor
    } else {
        tol.max(floor)
    }
}

/// Homogeneous point (w·x, w·y, w).
type Hom = [f64; 3];

fn lerp(a: Hom, b: Hom, s: f64) -> Hom {
    [
        a[0] + s * (b[0] - a[0]),
        a[1] + s * (b[1] - a[1]),
        a[2] + s * (b[2] - a[2]),
    ]
}

fn project(h: Hom) -> Point {
    Point::new(h[0] / h[2], h[1] / h[2])
}

/// Runs `f` on a scratch buffer of p + 1 homogeneous points (on the stack for the usual
/// degrees).
fn with_scratch<R>(p: usize, f: impl FnOnce(&mut [Hom]) -> R) -> R {
    const STACK: usize = 16;
    if p < STACK {
        let mut buf = [[0.0; 3]; STACK];
        f(&mut buf[..=p])
    } else {
        let mut buf = vec![[0.0; 3]; p + 1];
        f(&mut buf)
    }
}

impl Nurbs {
    /// Checks the counts, knot order, finite values and positive weights; Err(reason) in
    /// plain words.
    pub fn new(
        degree: usize,
        knots: Vec<f64>,
        ctrl: Vec<Point>,
        weights: Vec<f64>,
    ) -> Result<Nurbs, String> {
        let n = ctrl.len();
        if degree == 0 {
            return Err("spline degree must be at least 1".into());
        }
        if n < degree + 1 {
            return Err(format!(
                "a spline of degree {degree} needs at least {} control points, found {n}",
                degree + 1
            ));
        }
        if knots.len() != n + degree + 1 {
            return Err(format!(
                "a spline of degree {degree} with {n} control points needs {} knots, found {}",
                n + degree + 1,
                knots.len()
            ));
        }
        if let Some(i) = knots.iter().position(|k| !k.is_finite()) {
            return Err(format!("knot {} is not a finite number", i + 1));
        }
        if let Some(i) = knots.windows(2).position(|w| w[1] < w[0]) {
            return Err(format!("knots decrease at knot {}", i + 2));
        }
        if knots[degree] >= knots[n] {
            return Err("the spline's knots leave it an empty parameter range".into());
        }
        if let Some(i) = ctrl.iter().position(|p| !p.is_finite()) {
            return Err(format!("control point {} is not finite", i + 1));
        }
        if !weights.is_empty() {
            if weights.len() != n {
                return Err(format!(
                    "{n} control points need {n} weights, found {}",
                    weights.len()
                ));
            }
            if let Some(i) = weights.iter().position(|w| !(w.is_finite() && *w > 0.0)) {
                return Err(format!(
                    "weight {} is not a positive finite number ({})",
                    i + 1,
                    weights[i]
                ));
            }
        }
        Ok(Nurbs {
            degree,
            knots,
            ctrl,
            weights,
        })
    }

    /// Weights present and not all equal.
    pub fn is_rational(&self) -> bool {
        self.weights.windows(2).any(|w| w[0] != w[1])
    }

    /// Interpolating spline through fit points (global interpolation, Piegl & Tiller, The
    /// NURBS Book, 2nd ed., §9.2.1–9.2.2, from memory):
    ///
    /// - consecutive repeated fit points are dropped; fewer than 2 distinct points is an error;
    /// - parameters by chord length, scaled to [0, 1];
    /// - clamped knots by averaging the parameters over windows of p (§9.2.1 without end
    ///   derivatives: windows within ū_1..ū_{m−1}; §9.2.2 with both: windows within ū_0..ū_m;
    ///   with one, the windows reach the end that has it);
    /// - a given end tangent (DXF stores its direction only) is scaled to the total chord
    ///   length and imposed as the derivative dC/dt there, which adds a control point;
    /// - without end tangents the ends are free in the "not-a-knot" style: the averaged knots
    ///   leave out the first and last interior parameters, so for a cubic the first two and
    ///   last two spans form single polynomial pieces (not natural ends; no second derivative
    ///   is set to zero);
    /// - the degree is lowered to what the points allow: (number of points − 1 + number of
    ///   tangents) if smaller. Two points and no tangents give a straight line of degree 1;
    ///   three give a parabola of degree 2.
    ///
    /// The collocation system is banded and solved without pivoting, which is stable for
    /// B-spline collocation matrices that meet the Schoenberg–Whitney conditions (de Boor, A
    /// Practical Guide to Splines, ch. XIII, from memory); averaged knots meet them.
    pub fn interpolate(
        fit: &[Point],
        degree: usize,
        start_tangent: Option<Point>,
        end_tangent: Option<Point>,
    ) -> Result<Nurbs, String> {
        if let Some(i) = fit.iter().position(|p| !p.is_finite()) {
            return Err(format!("fit point {} is not finite", i + 1));
        }
        let mut q: Vec<Point> = Vec::with_capacity(fit.len());
        for &p in fit {
            if q.last() != Some(&p) {
                q.push(p);
            }
        }
        if q.len() < 2 {
            return Err("a spline through fit points needs at least 2 distinct points".into());
        }
        if degree == 0 {
            return Err("spline degree must be at least 1".into());
        }
        let m = q.len() - 1;
        // Chord-length parameters.
        let mut ub = vec![0.0; m + 1];
        for i in 1..=m {
            ub[i] = ub[i - 1] + q[i].dist(q[i - 1]);
        }
        let total = ub[m];
        for x in ub.iter_mut() {
            *x /= total;
        }
        ub[m] = 1.0;
        let tangent = |t: Option<Point>| {
            t.filter(|d| d.is_finite() && d.norm() > 0.0)
                .map(|d| d * (total / d.norm()))
        };
        let d0 = tangent(start_tangent);
        let d1 = tangent(end_tangent);
        let k = d0.is_some() as usize + d1.is_some() as usize;
        let p = degree.min(m + k);
        let n_ctrl = m + 1 + k;
        // Knots: p + 1 zeros, the averaged interior knots, p + 1 ones.
        let n_inner = n_ctrl - p - 1;
        let first = match (d0.is_some(), d1.is_some()) {
            (false, false) => 1,
            (true, false) | (true, true) => 0,
            (false, true) => 1,
        };
        let mut knots = vec![0.0; p + 1];
        for j in 0..n_inner {
            let s: f64 = ub[first + j..first + j + p].iter().sum();
            knots.push(s / p as f64);
        }
        knots.extend(std::iter::repeat_n(1.0, p + 1));
        // Rows, in the order of their first column: interpolation at ū_0, the start
        // derivative, interpolation at ū_1..ū_{m−1}, the end derivative, interpolation at ū_m.
        let w = p + 1;
        let mut rows: Vec<(usize, Vec<f64>, Point)> = Vec::with_capacity(n_ctrl);
        let basis_row = |t: f64| {
            let span = find_span(&knots, p, n_ctrl, t);
            (span - p, basis_funs(&knots, p, span, t))
        };
        let mut e0 = vec![0.0; w];
        e0[0] = 1.0;
        rows.push((0, e0, q[0]));
        if let Some(d) = d0 {
            // C'(0) = p/(U[p+1] − U[1])·(P1 − P0) for clamped knots, and likewise at the end
            // (Piegl & Tiller, The NURBS Book, ch. 3, from memory).
            let c = p as f64 / (knots[p + 1] - knots[1]);
            let mut r = vec![0.0; w];
            r[0] = -c;
            r[1] = c;
            rows.push((0, r, d));
        }
        for i in 1..m {
            let (s, b) = basis_row(ub[i]);
            rows.push((s, b, q[i]));
        }
        if let Some(d) = d1 {
            let nn = n_ctrl - 1;
            let c = p as f64 / (knots[nn + p] - knots[nn]);
            let mut r = vec![0.0; w];
            let s = nn + 1 - w;
            r[w - 2] = -c;
            r[w - 1] = c;
            rows.push((s, r, d));
        }
        let mut el = vec![0.0; w];
        el[w - 1] = 1.0;
        rows.push((n_ctrl - w, el, q[m]));
        let ctrl = solve_banded(rows, w)?;
        Nurbs::new(p, knots, ctrl, Vec::new())
    }

    fn n(&self) -> usize {
        self.ctrl.len()
    }

    fn domain(&self) -> (f64, f64) {
        (self.knots[self.degree], self.knots[self.n()])
    }

    fn span(&self, t: f64) -> usize {
        find_span(&self.knots, self.degree, self.n(), t)
    }

    fn weight(&self, j: usize) -> f64 {
        if self.weights.is_empty() {
            1.0
        } else {
            self.weights[j]
        }
    }

    fn hom(&self, j: usize, origin: Point) -> Hom {
        let w = self.weight(j);
        let q = self.ctrl[j] - origin;
        [q.x * w, q.y * w, w]
    }

    /// Whether span k is a polynomial piece (its p + 1 weights are equal).
    fn span_is_polynomial(&self, k: usize) -> bool {
        self.weights.is_empty()
            || self.weights[k - self.degree..=k]
                .windows(2)
                .all(|w| w[0] == w[1])
    }

    /// Point and first derivative at t, computed on span k, relative to `origin`.
    ///
    /// de Boor's algorithm on homogeneous points (w·x, w·y, w). Before its last step two
    /// points d_{p−1}, d_p remain, and the homogeneous derivative is
    /// p·(d_p − d_{p−1})/(U[k+1] − U[k]) (Piegl & Tiller, The NURBS Book, §3.3, from memory);
    /// the quotient rule C' = (A' − w'·C)/w gives the rational derivative.
    fn eval_span(&self, k: usize, t: f64, origin: Point) -> (Point, Point) {
        let p = self.degree;
        let knots = &self.knots;
        with_scratch(p, |d| {
            for (j, dj) in d.iter_mut().enumerate() {
                *dj = self.hom(j + k - p, origin);
            }
            let mut dh = [0.0; 3];
            for r in 1..=p {
                for j in (r..=p).rev() {
                    let lo = knots[j + k - p];
                    let hi = knots[j + 1 + k - r];
                    if r == p {
                        let s = p as f64 / (hi - lo);
                        dh = [
                            (d[j][0] - d[j - 1][0]) * s,
                            (d[j][1] - d[j - 1][1]) * s,
                            (d[j][2] - d[j - 1][2]) * s,
                        ];
                    }
                    d[j] = lerp(d[j - 1], d[j], (t - lo) / (hi - lo));
                }
            }
            let h = d[p];
            let c = project(h);
            let der = Point::new((dh[0] - dh[2] * c.x) / h[2], (dh[1] - dh[2] * c.y) / h[2]);
            (c, der)
        })
    }

    /// Blossom of span k at the arguments `args` (p of them), homogeneous, relative to
    /// `origin`: de Boor's algorithm with args[r − 1] at level r (the polar form; Ramshaw's
    /// blossoming, common practice). With all arguments equal to t it is the point at t.
    fn blossom(&self, k: usize, args: &[f64], origin: Point) -> Hom {
        let p = self.degree;
        let knots = &self.knots;
        with_scratch(p, |d| {
            for (j, dj) in d.iter_mut().enumerate() {
                *dj = self.hom(j + k - p, origin);
            }
            for r in 1..=p {
                let t = args[r - 1];
                for j in (r..=p).rev() {
                    let lo = knots[j + k - p];
                    let hi = knots[j + 1 + k - r];
                    d[j] = lerp(d[j - 1], d[j], (t - lo) / (hi - lo));
                }
            }
            d[p]
        })
    }

    /// Bézier control points (projected, relative to `origin`) of the piece [a, b] of span k:
    /// B_i = blossom(a, …, a, b, …, b) with i copies of b. With positive weights the piece
    /// lies in their convex hull.
    fn bezier(&self, k: usize, a: f64, b: f64, origin: Point) -> Vec<Point> {
        let p = self.degree;
        let mut args = vec![a; p];
        let mut out = Vec::with_capacity(p + 1);
        out.push(project(self.blossom(k, &args, origin)));
        for i in 0..p {
            args[i] = b;
            out.push(project(self.blossom(k, &args, origin)));
        }
        out
    }

    /// Non-empty spans k with their parameter pieces [a, b] within [lo, hi] (lo < hi).
    fn pieces(&self, lo: f64, hi: f64) -> Vec<(usize, f64, f64)> {
        let mut out = Vec::new();
        let mut k = self.span(lo);
        while k < self.n() {
            let (ka, kb) = (self.knots[k], self.knots[k + 1]);
            if ka >= hi && !out.is_empty() {
                break;
            }
            if kb > ka {
                let a = lo.max(ka);
                let b = hi.min(kb);
                if b > a {
                    out.push((k, a, b));
                }
            }
            if kb >= hi {
                break;
            }
            k += 1;
        }
        out
    }

    /// Integrand of the cone form at t on span k: c = q × q', then
    /// [c/2, q_x·c/3, q_y·c/3, q_x²·c/4, q_y²·c/4, q_x·q_y·c/4].
    fn cone_integrand(&self, k: usize, t: f64, origin: Point) -> [f64; 6] {
        let (q, dq) = self.eval_span(k, t, origin);
        let c = q.cross(dq);
        let (c3, c4) = (c / 3.0, c / 4.0);
        [
            c / 2.0,
            q.x * c3,
            q.y * c3,
            q.x * q.x * c4,
            q.y * q.y * c4,
            q.x * q.y * c4,
        ]
    }

    /// Cone-form integrals of the piece [a, b] of span k by an `npts`-point Gauss–Legendre
    /// rule.
    fn span_moments_gauss(&self, k: usize, a: f64, b: f64, origin: Point, npts: usize) -> Moments {
        let rule = gauss_legendre(npts);
        to_moments(gauss(
            &mut |t| self.cone_integrand(k, t, origin),
            a,
            b,
            rule,
        ))
    }

    /// Cone-form integrals of the piece [a, b] of span k.
    ///
    /// Polynomial span of degree p: q has degree p and q' degree p − 1, so f(q)·(q × q') has
    /// degree at most 2p + (2p − 1) = 4p − 1, which the 2p-point Gauss–Legendre rule
    /// integrates exactly (an n-point rule is exact to degree 2n − 1; common practice).
    ///
    /// Rational span: adaptive bisection with the (2p + 4)-point rule, accepting a piece when
    /// its two halves agree with the whole within 1e-13 of the span's size in each integral
    /// (size: L·s^(k+1) for an integrand of degree k, L the length of the span's control
    /// polygon and s the farthest of its control points from the origin), the tolerance
    /// halving with each bisection.
    fn span_moments(&self, k: usize, a: f64, b: f64, origin: Point) -> Moments {
        let p = self.degree;
        if self.span_is_polynomial(k) {
            return self.span_moments_gauss(k, a, b, origin, 2 * p);
        }
        let pts = &self.ctrl[k - p..=k];
        let len: f64 = pts.windows(2).map(|w| w[0].dist(w[1])).sum();
        let s = pts.iter().map(|c| c.dist(origin)).fold(len, f64::max);
        let tol = [
            1e-13 * len * s,
            1e-13 * len * s * s,
            1e-13 * len * s * s,
            1e-13 * len * s * s * s,
            1e-13 * len * s * s * s,
            1e-13 * len * s * s * s,
        ];
        let rule = gauss_legendre(2 * p + 4);
        let mut f = |t: f64| self.cone_integrand(k, t, origin);
        let whole = gauss(&mut f, a, b, rule);
        to_moments(adaptive(&mut f, a, b, rule, tol, whole, None))
    }

    fn moments_between(&self, ta: f64, tb: f64, origin: Point) -> Moments {
        let (lo, hi, sign) = self.clamped_range(ta, tb);
        if hi.partial_cmp(&lo) != Some(Ordering::Greater) {
            return Moments::default();
        }
        self.pieces(lo, hi)
            .into_iter()
            .map(|(k, a, b)| self.span_moments(k, a, b, origin))
            .fold(Moments::default(), |s, m| s + m)
            * sign
    }

    /// (low, high, direction sign) of a parameter range, clamped to the domain.
    fn clamped_range(&self, ta: f64, tb: f64) -> (f64, f64, f64) {
        let (d0, d1) = self.domain();
        let cl = |t: f64| t.clamp(d0, d1);
        let (a, b) = (cl(ta), cl(tb));
        if b >= a {
            (a, b, 1.0)
        } else {
            (b, a, -1.0)
        }
    }

    fn length_between(&self, ta: f64, tb: f64, mut budget: Option<&mut u32>) -> f64 {
        let (lo, hi, _) = self.clamped_range(ta, tb);
        if hi.partial_cmp(&lo) != Some(Ordering::Greater) {
            return 0.0;
        }
        let rule = gauss_legendre(2 * self.degree + 4);
        self.pieces(lo, hi)
            .into_iter()
            .map(|(k, a, b)| {
                let p = self.degree;
                let poly: f64 = self.ctrl[k - p..=k]
                    .windows(2)
                    .map(|w| w[0].dist(w[1]))
                    .sum();
                let mut f = |t: f64| [self.eval_span(k, t, Point::default()).1.norm()];
                let whole = gauss(&mut f, a, b, rule);
                let tol = 1e-13 * poly.max(whole[0].abs());
                adaptive(&mut f, a, b, rule, [tol], whole, budget.as_deref_mut())[0]
            })
            .sum()
    }

    /// Tight box by branch and bound: the box of curve points seen so far, grown by the
    /// Bézier hull boxes of sub-pieces that reach beyond it, bisecting those that reach
    /// beyond by more than 1e-12 of the span's hull size. The result holds the whole piece
    /// (every sub-piece lies in its Bézier hull) and is tight to that margin.
    fn bbox_between(&self, ta: f64, tb: f64) -> BBox {
        let (lo, hi, _) = self.clamped_range(ta, tb);
        let mut r = BBox::EMPTY;
        r.add_point(self.point(lo));
        r.add_point(self.point(hi));
        let o = Point::default();
        for (k, a, b) in self.pieces(lo, hi) {
            let hull = |a: f64, b: f64| {
                let mut h = BBox::EMPTY;
                for q in self.bezier(k, a, b, o) {
                    h.add_point(q);
                }
                h
            };
            let margin = 1e-12 * hull(a, b).diagonal();
            r.add_point(self.eval_span(k, a, o).0);
            r.add_point(self.eval_span(k, b, o).0);
            let mut stack = vec![(a, b, 0u32)];
            while let Some((a, b, depth)) = stack.pop() {
                let h = hull(a, b);
                let excess = (h.max.x - r.max.x)
                    .max(h.max.y - r.max.y)
                    .max(r.min.x - h.min.x)
                    .max(r.min.y - h.min.y);
                if excess <= 0.0 {
                    continue;
                }
                // Not a number (a spline whose points overflow, near 1e308: found by fuzzing)
                // is taken as it stands too: bisecting it never gives anything else, and the
                // depth limit alone let it run 2^60 steps.
                if excess <= margin || excess.is_nan() || depth >= 60 {
                    r = r.union(&h);
                    continue;
                }
                let mid = 0.5 * (a + b);
                r.add_point(self.eval_span(k, mid, o).0);
                stack.push((a, mid, depth + 1));
                stack.push((mid, b, depth + 1));
            }
        }
        r
    }

    /// Flattening parameters: every span boundary, and within each span bisection until the
    /// Bézier control points of each piece lie within `tol` of its chord. The curve piece lies
    /// in the convex hull of those points and distance to a segment is convex, so the piece
    /// itself lies within `tol` of the chord.
    fn flatten(&self, tol: f64, min_pieces: usize) -> Vec<f64> {
        let (d0, d1) = self.domain();
        let size = self.ctrl_box().diagonal();
        let tol = effective_tolerance(tol, size);
        let mut ts = vec![d0];
        for (k, a, b) in self.pieces(d0, d1) {
            let origin = self.ctrl[k];
            self.flatten_piece(k, (a, b), tol, origin, 0, &mut ts);
        }
        let closed = self.point(d0).dist(self.point(d1)) <= tol;
        let want = min_pieces.max(if closed { 4 } else { 1 });
        refine_to(ts, want)
    }

    fn flatten_piece(
        &self,
        k: usize,
        (a, b): (f64, f64),
        tol: f64,
        origin: Point,
        depth: u32,
        out: &mut Vec<f64>,
    ) {
        let bz = self.bezier(k, a, b, origin);
        let (s, e) = (bz[0], bz[bz.len() - 1]);
        let dev = bz[1..bz.len() - 1]
            .iter()
            .map(|&q| dist_to_segment(q, s, e))
            .fold(0.0, f64::max);
        if dev <= tol || depth >= 50 || out.len() >= MAX_PIECES {
            out.push(b);
            return;
        }
        let mid = 0.5 * (a + b);
        self.flatten_piece(k, (a, mid), tol, origin, depth + 1, out);
        self.flatten_piece(k, (mid, b), tol, origin, depth + 1, out);
    }

    fn ctrl_box(&self) -> BBox {
        let mut b = BBox::EMPTY;
        for &p in &self.ctrl {
            b.add_point(p);
        }
        b
    }

    fn point(&self, t: f64) -> Point {
        self.eval_span(self.span(t), t, Point::default()).0
    }
}

/// Splits pieces evenly until there are at least `want` of them.
fn refine_to(ts: Vec<f64>, want: usize) -> Vec<f64> {
    let pieces = ts.len() - 1;
    if pieces >= want || pieces == 0 {
        return ts;
    }
    let split = want.div_ceil(pieces);
    let mut out = Vec::with_capacity(pieces * split + 1);
    out.push(ts[0]);
    for w in ts.windows(2) {
        for i in 1..split {
            out.push(w[0] + (w[1] - w[0]) * (i as f64 / split as f64));
        }
        out.push(w[1]);
    }
    out
}

fn dist_to_segment(q: Point, a: Point, b: Point) -> f64 {
    let d = b - a;
    let l2 = d.dot(d);
    if l2 == 0.0 {
        return q.dist(a);
    }
    let s = ((q - a).dot(d) / l2).clamp(0.0, 1.0);
    q.dist(a + d * s)
}

/// Index k of the non-empty span [U[k], U[k+1]) holding t, p <= k <= n − 1, by binary
/// search; parameters beyond the domain take the first or last non-empty span.
fn find_span(knots: &[f64], p: usize, n: usize, t: f64) -> usize {
    let mut k = p + knots[p + 1..n].partition_point(|&x| x <= t);
    while k > p && knots[k] == knots[k + 1] {
        k -= 1;
    }
    while k < n - 1 && knots[k] == knots[k + 1] {
        k += 1;
    }
    k
}

/// The p + 1 non-zero B-spline basis values N_{k−p..k, p}(t) on span k (Cox–de Boor
/// recursion in the triangular form of Piegl & Tiller, The NURBS Book, algorithm A2.2, from
/// memory).
fn basis_funs(knots: &[f64], p: usize, k: usize, t: f64) -> Vec<f64> {
    let mut n = vec![0.0; p + 1];
    let mut left = vec![0.0; p + 1];
    let mut right = vec![0.0; p + 1];
    n[0] = 1.0;
    for j in 1..=p {
        left[j] = t - knots[k + 1 - j];
        right[j] = knots[k + j] - t;
        let mut saved = 0.0;
        for r in 0..j {
            let temp = n[r] / (right[r + 1] + left[j - r]);
            n[r] = saved + right[r + 1] * temp;
            saved = left[j - r] * temp;
        }
        n[j] = saved;
    }
    n
}

/// Solves a square banded system whose row i has its non-zeros in columns
/// start_i..start_i + w, starts non-decreasing and start_i <= i < start_i + w, by Gaussian
/// elimination without pivoting (no fill-in outside each row's window then).
fn solve_banded(mut rows: Vec<(usize, Vec<f64>, Point)>, w: usize) -> Result<Vec<Point>, String> {
    let n = rows.len();
    let singular = || Err("the fit points give a singular interpolation system".to_string());
    for c in 0..n {
        let (sc, rc, bc) = rows[c].clone();
        if c < sc || c - sc >= w {
            return singular();
        }
        let piv = rc[c - sc];
        if !piv.is_finite() || piv.abs() <= 1e-300 {
            return singular();
        }
        for row in rows.iter_mut().skip(c + 1) {
            let (sr, rr, br) = row;
            if *sr > c {
                break;
            }
            if c - *sr >= w || *sr < sc {
                return singular();
            }
            let f = rr[c - *sr] / piv;
            if f == 0.0 {
                continue;
            }
            for col in c..sc + w {
                rr[col - *sr] -= f * rc[col - sc];
            }
            *br = *br - bc * f;
        }
    }
    let mut x = vec![Point::default(); n];
    for c in (0..n).rev() {
        let (sc, rc, bc) = &rows[c];
        let mut acc = *bc;
        for col in c + 1..(sc + w).min(n) {
            acc = acc - x[col] * rc[col - sc];
        }
        x[c] = acc * (1.0 / rc[c - sc]);
    }
    if x.iter().all(|p| p.is_finite()) {
        Ok(x)
    } else {
        singular()
    }
}

// ---------------------------------------------------------------------------------------
// Quadrature

/// Nodes and weights of an n-point Gauss–Legendre rule on [−1, 1].
pub(crate) struct Rule {
    x: Vec<f64>,
    w: Vec<f64>,
}

/// Rules up to this many points are computed once and kept.
const KEPT_RULES: usize = 72;

/// The n-point Gauss–Legendre rule (n >= 1), from a table filled on first use.
fn gauss_legendre(n: usize) -> &'static Rule {
    static TABLE: OnceLock<Vec<Rule>> = OnceLock::new();
    let table = TABLE.get_or_init(|| (1..=KEPT_RULES).map(legendre_rule).collect());
    // Larger rules are never needed for degrees below 34; beyond, the largest kept rule is
    // used and the adaptive paths still converge (polynomial spans then lose exactness).
    &table[n.clamp(1, KEPT_RULES) - 1]
}

/// Gauss–Legendre nodes as roots of P_n by Newton's method from cos(π(i + 3/4)/(n + 1/2)),
/// weights 2/((1 − x²)·P_n'(x)²) (Abramowitz & Stegun 25.4.29, from memory).
fn legendre_rule(n: usize) -> Rule {
    let mut x = vec![0.0; n];
    let mut w = vec![0.0; n];
    for i in 0..n.div_ceil(2) {
        let mut z = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        for _ in 0..100 {
            let (mut p0, mut p1) = (1.0, z);
            for j in 2..=n {
                let p2 = ((2 * j - 1) as f64 * z * p1 - (j - 1) as f64 * p0) / j as f64;
                p0 = p1;
                p1 = p2;
            }
            let pn = if n == 1 { z } else { p1 };
            let pm = if n == 1 { 1.0 } else { p0 };
            let dp = n as f64 * (z * pn - pm) / (z * z - 1.0);
            let dz = pn / dp;
            z -= dz;
            if dz.abs() <= 1e-16 {
                break;
            }
        }
        // One more derivative at the converged root.
        let (mut p0, mut p1) = (1.0, z);
        for j in 2..=n {
            let p2 = ((2 * j - 1) as f64 * z * p1 - (j - 1) as f64 * p0) / j as f64;
            p0 = p1;
            p1 = p2;
        }
        let dp = if n > 1 {
            n as f64 * (z * p1 - p0) / (z * z - 1.0)
        } else {
            1.0
        };
        let wi = 2.0 / ((1.0 - z * z) * dp * dp);
        x[i] = -z;
        x[n - 1 - i] = z;
        w[i] = wi;
        w[n - 1 - i] = wi;
    }
    if n % 2 == 1 {
        x[n / 2] = 0.0;
    }
    Rule { x, w }
}

fn gauss<const N: usize>(
    f: &mut impl FnMut(f64) -> [f64; N],
    a: f64,
    b: f64,
    rule: &Rule,
) -> [f64; N] {
    let (h, c) = (0.5 * (b - a), 0.5 * (a + b));
    let mut s = [0.0; N];
    for (x, w) in rule.x.iter().zip(&rule.w) {
        let v = f(c + h * x);
        for (si, vi) in s.iter_mut().zip(v) {
            *si += w * vi;
        }
    }
    s.map(|v| v * h)
}

/// Adaptive bisection: accepts the two halves when their sum agrees with `whole` within
/// `tol` in every component (or within rounding of the values themselves, 1e-15 of their
/// size, which no further split can improve), else recurses with half the tolerance on each.
/// At most [`ADAPTIVE_SPLITS`] splits per call in all, so that no integrand, however
/// awkward, can make it run long: past that the halves are taken as they are. Halves that
/// are not finite (an integrand that overflows, on a curve near 1e154) are taken at once:
/// splitting cannot mend them, and each of a curve's pieces used up the whole budget.
///
/// With a `budget`, the splits are also drawn from it (at most [`ADAPTIVE_SPLITS`] in this
/// call, as ever, and no more than the budget has left), so that the pieces of one curve can
/// share one.
fn adaptive<const N: usize>(
    f: &mut impl FnMut(f64) -> [f64; N],
    a: f64,
    b: f64,
    rule: &Rule,
    tol: [f64; N],
    whole: [f64; N],
    budget: Option<&mut u32>,
) -> [f64; N] {
    let mut here = budget
        .as_deref()
        .map_or(ADAPTIVE_SPLITS, |&b| b.min(ADAPTIVE_SPLITS));
    let allowed = here;
    let sum = adaptive_within(f, a, b, rule, tol, whole, 0, &mut here);
    if let Some(budget) = budget {
        *budget -= allowed - here;
    }
    sum
}

/// Most interval splits one [`adaptive`] call makes.
pub const ADAPTIVE_SPLITS: u32 = 4096;

#[allow(clippy::too_many_arguments)]
fn adaptive_within<const N: usize>(
    f: &mut impl FnMut(f64) -> [f64; N],
    a: f64,
    b: f64,
    rule: &Rule,
    tol: [f64; N],
    whole: [f64; N],
    depth: u32,
    budget: &mut u32,
) -> [f64; N] {
    let mid = 0.5 * (a + b);
    let left = gauss(f, a, mid, rule);
    let right = gauss(f, mid, b, rule);
    let mut sum = [0.0; N];
    let mut ok = true;
    for i in 0..N {
        sum[i] = left[i] + right[i];
        let rounding = 1e-15 * (left[i].abs() + right[i].abs());
        ok &= (sum[i] - whole[i]).abs() <= tol[i].max(rounding);
    }
    let finite = sum.iter().all(|v| v.is_finite());
    if ok || !finite || depth >= 40 || *budget == 0 || !(mid > a && mid < b) {
        return sum;
    }
    *budget -= 1;
    let half = tol.map(|t| 0.5 * t);
    let l = adaptive_within(f, a, mid, rule, half, left, depth + 1, budget);
    let r = adaptive_within(f, mid, b, rule, half, right, depth + 1, budget);
    let mut out = [0.0; N];
    for i in 0..N {
        out[i] = l[i] + r[i];
    }
    out
}

fn to_moments(v: [f64; 6]) -> Moments {
    Moments {
        a: v[0],
        sx: v[1],
        sy: v[2],
        sxx: v[3],
        syy: v[4],
        sxy: v[5],
    }
}

// ---------------------------------------------------------------------------------------
// Where a curve crosses a horizontal line

impl EllipseArc {
    /// Parameters in (lo, hi) where y(t) = c, in closed form: y(t) = c_y + u_y·cos t +
    /// v_y·sin t = c_y + R·cos(t − φ) with R = √(u_y² + v_y²), φ = atan2(v_y, u_y), so
    /// t = φ ± acos((c − c_y)/R) + 2πn. A line that only touches (|c − c_y| ≥ R) gives none.
    fn level_crossings(&self, lo: f64, hi: f64, c: f64, out: &mut Vec<f64>) {
        let r = self.u.y.hypot(self.v.y);
        if r.is_nan() || r == 0.0 {
            return;
        }
        let k = (c - self.center.y) / r;
        if k.is_nan() || k.abs() >= 1.0 {
            return;
        }
        let phi = self.v.y.atan2(self.u.y);
        let d = k.acos();
        for base in [phi + d, phi - d] {
            // The range spans at most a few turns; start one turn below it.
            let mut t = base + TAU * ((lo - base) / TAU).floor();
            for _ in 0..8 {
                if t > lo && t < hi {
                    out.push(t);
                }
                t += TAU;
                if t >= hi {
                    break;
                }
            }
        }
    }
}

impl Nurbs {
    /// Parameters in (lo, hi) where y(t) − c changes sign. On each span the Bézier control
    /// points of a piece bound it (positive weights), and the number of sign changes of their
    /// y − c bounds the number of crossings (variation diminishing property of the Bernstein
    /// basis, also for rational pieces with positive weights: the numerator's coefficients
    /// are w_i·(y_i − c); common practice). Pieces with no sign change hold no crossing;
    /// pieces with one whose ends have opposite signs hold exactly one, found by bracketing;
    /// others are halved (at most 60 times, after which a sign change at the ends counts as
    /// one crossing at the middle).
    fn level_crossings(&self, lo: f64, hi: f64, c: f64, out: &mut Vec<f64>) {
        let o = Point::new(0.0, c);
        for (k, a, b) in self.pieces(lo, hi) {
            let g = |t: f64| self.eval_span(k, t, o).0.y;
            let mut stack = vec![(a, b, 0u32)];
            while let Some((a, b, depth)) = stack.pop() {
                let bz = self.bezier(k, a, b, o);
                let mut changes = 0;
                let mut last = 0.0f64;
                for q in &bz {
                    if q.y != 0.0 {
                        if last != 0.0 && (q.y > 0.0) != (last > 0.0) {
                            changes += 1;
                        }
                        last = q.y;
                    }
                }
                if changes == 0 {
                    continue;
                }
                let (ga, gb) = (g(a), g(b));
                let opposite = (ga < 0.0 && gb > 0.0) || (ga > 0.0 && gb < 0.0);
                let mid = 0.5 * (a + b);
                if changes == 1 && opposite {
                    out.push(bracketed_root(&g, a, b, ga, gb));
                } else if depth >= 60 || !(mid > a && mid < b) {
                    if opposite {
                        out.push(mid);
                    }
                } else {
                    stack.push((a, mid, depth + 1));
                    stack.push((mid, b, depth + 1));
                }
            }
        }
    }
}

/// A root of g in (a, b), given g(a) and g(b) of opposite signs: regula falsi with the
/// Illinois modification (the retained end's value halved when the same end is kept twice),
/// falling back to bisection when a step gains little; stops when the bracket is a few
/// rounding units wide (Dahlquist & Björck, Numerical Methods, §6.2, from memory).
pub(crate) fn bracketed_root(g: &impl Fn(f64) -> f64, a: f64, b: f64, ga: f64, gb: f64) -> f64 {
    let (mut a, mut b, mut ga, mut gb) = (a, b, ga, gb);
    let mut side = 0i8;
    for _ in 0..200 {
        let width = b - a;
        if width.abs() <= 4.0 * f64::EPSILON * a.abs().max(b.abs()) {
            break;
        }
        let mut t = (a * gb - b * ga) / (gb - ga);
        if !(t > a.min(b) && t < a.max(b)) {
            t = 0.5 * (a + b);
        }
        let gt = g(t);
        if gt == 0.0 {
            return t;
        }
        if (gt > 0.0) == (ga > 0.0) {
            a = t;
            ga = gt;
            if side == -1 {
                gb *= 0.5;
            }
            side = -1;
        } else {
            b = t;
            gb = gt;
            if side == 1 {
                ga *= 0.5;
            }
            side = 1;
        }
        // A step that kept less than half the bracket gets a bisection next.
        if (b - a).abs() > 0.5 * width.abs() {
            let m = 0.5 * (a + b);
            let gm = g(m);
            if gm == 0.0 {
                return m;
            }
            if (gm > 0.0) == (ga > 0.0) {
                a = m;
                ga = gm;
            } else {
                b = m;
                gb = gm;
            }
            side = 0;
        }
    }
    0.5 * (a + b)
}

// ---------------------------------------------------------------------------------------
// The common interface

impl Curve {
    /// (t0, t1) for an ellipse, (knots[p], knots[n]) for a spline.
    pub fn domain(&self) -> (f64, f64) {
        match self {
            Curve::Ellipse(e) => (e.t0, e.t1),
            Curve::Nurbs(s) => s.domain(),
        }
    }

    /// The point at parameter t. A spline is evaluated on the span holding t (the last one
    /// at its end; beyond the domain its end spans extend).
    pub fn point(&self, t: f64) -> Point {
        match self {
            Curve::Ellipse(e) => e.point(t),
            Curve::Nurbs(s) => s.point(t),
        }
    }

    /// dp/dt at t.
    pub fn derivative(&self, t: f64) -> Point {
        match self {
            Curve::Ellipse(e) => e.derivative(t),
            Curve::Nurbs(s) => s.eval_span(s.span(t), t, Point::default()).1,
        }
    }

    pub fn start(&self) -> Point {
        self.point(self.domain().0)
    }

    /// The end point; a full ellipse ends exactly at its start.
    pub fn end(&self) -> Point {
        self.point(self.domain().1)
    }

    /// The curve mapped by `f`, exactly: an ellipse's centre and semi-diameters are mapped
    /// (its parameters kept), a spline's control points are mapped (weights and knots kept;
    /// NURBS are affinely invariant, common practice).
    pub fn transformed(&self, f: &Affine) -> Curve {
        match self {
            Curve::Ellipse(e) => Curve::Ellipse(EllipseArc {
                center: f.apply(e.center),
                u: f.apply_vector(e.u),
                v: f.apply_vector(e.v),
                t0: e.t0,
                t1: e.t1,
            }),
            Curve::Nurbs(s) => Curve::Nurbs(Nurbs {
                degree: s.degree,
                knots: s.knots.clone(),
                ctrl: s.ctrl.iter().map(|&p| f.apply(p)).collect(),
                weights: s.weights.clone(),
            }),
        }
    }

    /// Parameters t_0 = domain start < … < t_k = domain end (decreasing for an ellipse
    /// running backwards) such that each chord p(t_i) → p(t_i+1) stays within `tol` of the
    /// curve piece between them (largest distance from the piece to the chord), every knot
    /// of a spline inside its domain is among them, and there are at least `min_pieces`
    /// pieces (and at least 4 for a full ellipse or a spline that closes within `tol`, so no
    /// chord repeats another).
    ///
    /// The bound is rigorous (see the ellipse and spline helpers). A `tol` that is not
    /// positive, or below 1e-10 of the curve's size, is raised to that; at most 2²² pieces
    /// are returned.
    pub fn flatten(&self, tol: f64, min_pieces: usize) -> Vec<f64> {
        match self {
            Curve::Ellipse(e) => e.flatten(tol, min_pieces),
            Curve::Nurbs(s) => s.flatten(tol, min_pieces),
        }
    }

    /// Green's-theorem contribution of the directed piece from parameter ta to tb, about
    /// `origin`, in the same convention as `line_moments`: for each integrand f of degree k
    /// (1, x, y, x², y², xy in q = p − origin) the contribution is
    /// ∫ f(q) (q_x dq_y − q_y dq_x) / (k + 2) along the path.
    ///
    /// - Ellipse: closed form, chord plus the affine image of a circular segment (see the
    ///   formula at `EllipseArc::moments_between`); exact to rounding, also for short pieces.
    /// - Spline, polynomial span: 2p-point Gauss–Legendre per span, exact for the integrand
    ///   of degree up to 4p − 1.
    /// - Spline, rational span: adaptive Gauss–Legendre ((2p + 4)-point rule) per span to
    ///   1e-13 of the span's size.
    ///
    /// Spline parameters are clamped to the domain. Call it with an origin near the piece
    /// for full precision.
    pub fn moments_between(&self, ta: f64, tb: f64, origin: Point) -> Moments {
        match self {
            Curve::Ellipse(e) => e.moments_between(ta, tb, origin),
            Curve::Nurbs(s) => s.moments_between(ta, tb, origin),
        }
    }

    /// Parameters strictly between ta and tb (either order) at which the curve crosses the
    /// horizontal line y = c, ascending: in closed form on an ellipse, by Bézier sign
    /// changes and bracketing on a spline (parameters clamped to its domain). Points where
    /// the curve only touches the line may be missing; they change nothing on either side.
    pub fn level_crossings(&self, ta: f64, tb: f64, c: f64) -> Vec<f64> {
        let (mut lo, mut hi) = (ta.min(tb), ta.max(tb));
        let mut out = Vec::new();
        match self {
            Curve::Ellipse(e) => e.level_crossings(lo, hi, c, &mut out),
            Curve::Nurbs(s) => {
                let (d0, d1) = s.domain();
                lo = lo.max(d0);
                hi = hi.min(d1);
                if hi > lo {
                    s.level_crossings(lo, hi, c, &mut out);
                }
            }
        }
        out.sort_by(f64::total_cmp);
        out
    }

    /// Arc length from ta to tb (>= 0): adaptive Gauss–Legendre per quarter turn of an
    /// ellipse or per spline span, to about 1e-13 relative.
    pub fn length_between(&self, ta: f64, tb: f64) -> f64 {
        match self {
            Curve::Ellipse(e) => e.length_between(ta, tb, None),
            Curve::Nurbs(s) => s.length_between(ta, tb, None),
        }
    }

    /// [`Curve::length_between`] with its interval splits drawn from `budget`, shared with
    /// other calls (the pieces of one curve), instead of [`ADAPTIVE_SPLITS`] for each
    /// quarter turn or span: once it is spent, each piece's length is its Gauss–Legendre
    /// estimate as it stands.
    pub fn length_between_within(&self, ta: f64, tb: f64, budget: &mut u32) -> f64 {
        match self {
            Curve::Ellipse(e) => e.length_between(ta, tb, Some(budget)),
            Curve::Nurbs(s) => s.length_between(ta, tb, Some(budget)),
        }
    }

    /// The piece's length ∫ ds and first moment of length ∫ (p − origin) ds from ta to tb
    /// (either order; the sign of ds is taken positive), by 16-point Gauss–Legendre on the
    /// curve's own parameter. Meant for the short pieces the pipeline cuts (each within one
    /// spline span, its chord within 1e-5 of the curve's size), where the integrand is smooth
    /// and the rule is exact to rounding; spline parameters are clamped to the domain.
    pub fn length_moment_between(&self, ta: f64, tb: f64, origin: Point) -> (f64, Point) {
        let (lo, hi) = match self {
            Curve::Ellipse(_) => (ta.min(tb), ta.max(tb)),
            Curve::Nurbs(s) => {
                let (d0, d1) = s.domain();
                (ta.min(tb).max(d0), ta.max(tb).min(d1))
            }
        };
        if hi <= lo {
            return (0.0, Point::default());
        }
        let rule = gauss_legendre(16);
        let (mid, half) = ((lo + hi) / 2.0, (hi - lo) / 2.0);
        let (mut len, mut m) = (0.0, Point::default());
        for (x, w) in rule.x.iter().zip(&rule.w) {
            let t = mid + half * x;
            let ds = self.derivative(t).norm() * w * half;
            len += ds;
            m = m + (self.point(t) - origin) * ds;
        }
        (len, m)
    }

    /// Bounding box of the piece from ta to tb: exact for an ellipse; for a spline it holds
    /// the piece and exceeds it by at most 1e-12 of a span's size.
    pub fn bbox_between(&self, ta: f64, tb: f64) -> BBox {
        match self {
            Curve::Ellipse(e) => e.bbox_between(ta, tb),
            Curve::Nurbs(s) => s.bbox_between(ta, tb),
        }
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn affine_inverse_undoes_the_map() {
        let f = super::Affine {
            m: [2.0, 0.5, -1.0, 3.0],
            t: super::Point::new(4.0, -7.0),
        };
        let g = f.inverse().unwrap();
        let p = super::Point::new(1.25, -3.5);
        let q = g.apply(f.apply(p));
        assert!((q.x - p.x).abs() < 1e-14 && (q.y - p.y).abs() < 1e-14);
        assert!(super::Affine::scaling(0.0, 1.0).inverse().is_none());
    }

    use super::*;
    use crate::test_rng::uniform;

    /// |got − want| <= rel·scale.
    fn near(got: f64, want: f64, scale: f64, rel: f64, what: &str) {
        assert!(
            (got - want).abs() <= rel * scale,
            "{what}: {got} against {want} (off by {:e} of {scale})",
            (got - want) / scale
        );
    }

    /// All six integrals: the area against `area`, first moments against area·len, second
    /// moments against area·len².
    fn near_moments(got: Moments, want: Moments, area: f64, len: f64, rel: f64, what: &str) {
        let (s1, s2) = (area * len, area * len * len);
        near(got.a, want.a, area, rel, &format!("{what} a"));
        near(got.sx, want.sx, s1, rel, &format!("{what} sx"));
        near(got.sy, want.sy, s1, rel, &format!("{what} sy"));
        near(got.sxx, want.sxx, s2, rel, &format!("{what} sxx"));
        near(got.syy, want.syy, s2, rel, &format!("{what} syy"));
        near(got.sxy, want.sxy, s2, rel, &format!("{what} sxy"));
    }

    /// An integrand that overflows is integrated once and split no further (a curve near
    /// 1e154 mm used up the whole budget on each of its pieces; found by fuzzing).
    #[test]
    fn adaptive_takes_non_finite_halves_at_once() {
        let rule = gauss_legendre(8);
        for value in [f64::INFINITY, f64::NAN] {
            let mut calls = 0;
            let mut f = |_t: f64| {
                calls += 1;
                [value, 1.0]
            };
            let whole = gauss(&mut f, 0.0, 1.0, rule);
            let got = adaptive(&mut f, 0.0, 1.0, rule, [1e-12, 1e-12], whole, None);
            assert!(!got[0].is_finite() && got[1] == 1.0, "{got:?}");
            // The whole interval and its two halves.
            assert_eq!(calls, 3 * rule.x.len(), "{value}");
        }
        // A finite integrand that needs splitting still gets them.
        let mut calls = 0;
        let mut f = |t: f64| {
            calls += 1;
            [t.abs().sqrt()]
        };
        let whole = gauss(&mut f, -1.0, 1.0, rule);
        let got = adaptive(&mut f, -1.0, 1.0, rule, [1e-12], whole, None);
        // ∫ √|t| dt over [−1, 1] = 4/3.
        assert!((got[0] - 4.0 / 3.0).abs() < 1e-9, "{got:?}");
        assert!(calls > 10 * rule.x.len(), "{calls}");
    }

    /// Ellipse with semi-axes a (at `angle` from the x axis) and b, from t0 to t1.
    fn ellipse(center: Point, a: f64, b: f64, angle: f64, t0: f64, t1: f64) -> Curve {
        let (s, c) = angle.sin_cos();
        Curve::Ellipse(EllipseArc {
            center,
            u: Point::new(a * c, a * s),
            v: Point::new(-b * s, b * c),
            t0,
            t1,
        })
    }

    fn whole(c: &Curve, origin: Point) -> Moments {
        let (t0, t1) = c.domain();
        c.moments_between(t0, t1, origin)
    }

    /// Sum of the pieces between consecutive parameters.
    fn by_pieces(c: &Curve, ts: &[f64], origin: Point) -> Moments {
        ts.windows(2)
            .map(|w| c.moments_between(w[0], w[1], origin))
            .fold(Moments::default(), |s, m| s + m)
    }

    /// Rational quadratic circle of nine control points, weights 1 and √2/2 in turn, knots
    /// 0,0,0,¼,¼,½,½,¾,¾,1,1,1 (standard construction; from memory).
    fn nurbs_circle(c: Point, r: f64) -> Curve {
        let h = std::f64::consts::FRAC_1_SQRT_2;
        let corners = [
            (1.0, 0.0),
            (1.0, 1.0),
            (0.0, 1.0),
            (-1.0, 1.0),
            (-1.0, 0.0),
            (-1.0, -1.0),
            (0.0, -1.0),
            (1.0, -1.0),
            (1.0, 0.0),
        ];
        let ctrl = corners
            .iter()
            .map(|&(x, y)| c + Point::new(x, y) * r)
            .collect();
        let weights = (0..9).map(|i| if i % 2 == 0 { 1.0 } else { h }).collect();
        let knots = vec![
            0.0, 0.0, 0.0, 0.25, 0.25, 0.5, 0.5, 0.75, 0.75, 1.0, 1.0, 1.0,
        ];
        Curve::Nurbs(Nurbs::new(2, knots, ctrl, weights).unwrap())
    }

    /// Closed cubic with uniform knots: eight control points, the first three repeated at
    /// the end (invented shape).
    fn closed_cubic(offset: Point) -> Curve {
        let base: Vec<Point> = (0..8)
            .map(|i| {
                let a = TAU * i as f64 / 8.0;
                let r = 3.0 + (i % 3) as f64;
                offset + Point::new(r * a.cos(), 0.6 * r * a.sin())
            })
            .collect();
        let ctrl: Vec<Point> = base.iter().chain(&base[..3]).copied().collect();
        let knots = (0..15).map(|k| k as f64).collect();
        Curve::Nurbs(Nurbs::new(3, knots, ctrl, Vec::new()).unwrap())
    }

    fn polygon_moments(pts: &[Point], origin: Point) -> Moments {
        pts.windows(2)
            .map(|w| line_moments(w[0] - origin, w[1] - origin))
            .fold(Moments::default(), |s, m| s + m)
    }

    #[test]
    fn full_ellipse_has_the_closed_form_integrals() {
        let (a, b) = (5.0, 2.0);
        let o = Point::default();
        let e = ellipse(o, a, b, 0.0, 0.0, TAU);
        let area = PI * a * b;
        // Ellipse: A = πab, Ix = πab³/4, Iy = πa³b/4 (check-values.md §1, ellipse row).
        let want = Moments {
            a: area,
            sx: 0.0,
            sy: 0.0,
            sxx: PI * a.powi(3) * b / 4.0,
            syy: PI * a * b.powi(3) / 4.0,
            sxy: 0.0,
        };
        near_moments(whole(&e, o), want, area, a, 1e-15, "full");
        // The same through the general (chord plus segment) formula, in pieces.
        let pieces = by_pieces(&e, &[0.0, 0.1, 1.0, 2.5, 4.0, 6.0, TAU], o);
        near_moments(pieces, want, area, a, 1e-14, "pieces");
        // Backwards, the same with the opposite sign.
        let back = ellipse(o, a, b, 0.0, TAU, 0.0);
        near_moments(whole(&back, o), want * -1.0, area, a, 1e-15, "backwards");
    }

    #[test]
    fn rotated_far_ellipse_has_the_rotated_tensor() {
        let (a, b) = (5.0, 2.0);
        let theta = PI / 6.0;
        let c = Point::new(1e5, -3e4);
        let f = Affine::rotation(theta).then(&Affine::translation(c));
        let e = ellipse(Point::default(), a, b, 0.0, 0.0, TAU).transformed(&f);
        let origin = c + Point::new(0.3, -0.7);
        let area = PI * a * b;
        // Ellipse principal values (check-values.md §1, ellipse row) turned by θ (Mohr's
        // circle, from memory): ∬x² = cos²θ·I_a + sin²θ·I_b, ∬xy = sinθ·cosθ·(I_a − I_b),
        // with I_a = πa³b/4 (∬x² along the major axis) and I_b = πab³/4.
        let (ia, ib) = (PI * a.powi(3) * b / 4.0, PI * a * b.powi(3) / 4.0);
        let (s, co) = theta.sin_cos();
        let (ixx, iyy, ixy) = (
            co * co * ia + s * s * ib,
            s * s * ia + co * co * ib,
            s * co * (ia - ib),
        );
        let full = whole(&e, origin);
        let pieces = by_pieces(&e, &[0.0, 0.7, 2.0, 3.3, 5.1, TAU], origin);
        for (m, what) in [(full, "full"), (pieces, "pieces")] {
            near(m.a, area, area, 1e-12, what);
            let g = Point::new(m.sx / m.a, m.sy / m.a);
            // The centroid is the centre (ellipse row), here 0.3 left and 0.7 up of the origin.
            near(g.x, -0.3, a, 1e-12, what);
            near(g.y, 0.7, a, 1e-12, what);
            let central = m.shifted(g);
            near(central.sxx, ixx, ia, 1e-12, what);
            near(central.syy, iyy, ia, 1e-12, what);
            near(central.sxy, ixy, ia, 1e-12, what);
        }
    }

    #[test]
    fn half_and_quarter_ellipse_closed_by_chords() {
        let (a, b) = (5.0, 2.0);
        let o = Point::default();
        let e = ellipse(o, a, b, 0.0, 0.0, TAU);
        let half =
            e.moments_between(0.0, PI, o) + line_moments(Point::new(-a, 0.0), Point::new(a, 0.0));
        // Half ellipse: A = πab/2; centroid 4b/(3π) from the diameter (the semicircle's
        // 4r/(3π), check-values.md §1 semicircle row, scaled by b/r in y; closed form).
        near(half.a, PI * a * b / 2.0, PI * a * b, 1e-14, "half area");
        near(
            half.sy / half.a,
            4.0 * b / (3.0 * PI),
            b,
            1e-14,
            "half centroid",
        );
        near(half.sx / half.a, 0.0, a, 1e-14, "half centroid x");
        // ∬y² about the diameter is half the full ellipse's πab³/4 by symmetry
        // (check-values.md §1, ellipse row).
        near(
            half.syy,
            PI * a * b.powi(3) / 8.0,
            PI * a * b.powi(3),
            1e-14,
            "half Ix",
        );
        let quarter = e.moments_between(0.0, PI / 2.0, o)
            + line_moments(Point::new(0.0, b), o)
            + line_moments(o, Point::new(a, 0.0));
        // Quarter ellipse: A = πab/4, centroid (4a/(3π), 4b/(3π)) (quarter-circle row of
        // check-values.md §1, scaled by a/r and b/r; closed form).
        near(
            quarter.a,
            PI * a * b / 4.0,
            PI * a * b,
            1e-14,
            "quarter area",
        );
        near(
            quarter.sx / quarter.a,
            4.0 * a / (3.0 * PI),
            a,
            1e-14,
            "quarter x",
        );
        near(
            quarter.sy / quarter.a,
            4.0 * b / (3.0 * PI),
            b,
            1e-14,
            "quarter y",
        );
    }

    /// Thousands of short pieces (sweeps from 1e-6 to 1e-2) of an ellipse far from (0, 0)
    /// add up to the whole: the segment term keeps its digits for short pieces.
    #[test]
    fn short_ellipse_pieces_add_up_to_the_whole() {
        let mut r = uniform(31);
        let c = Point::new(1e5, -3e4);
        let (t0, t1) = (0.3, 0.3 + TAU);
        let e = ellipse(c, 5.0, 2.0, 0.4, t0, t1);
        let origin = c + Point::new(1.0, 1.0);
        let full = whole(&e, origin);
        let mut ts = vec![t0];
        while *ts.last().unwrap() < t1 {
            let step = 1e-6 * 1e4f64.powf(r());
            ts.push((ts.last().unwrap() + step).min(t1));
        }
        assert!(ts.len() > 3000, "{} pieces", ts.len());
        let area = PI * 10.0;
        let len = 5.0 + 2f64.sqrt();
        near_moments(
            by_pieces(&e, &ts, origin),
            full,
            area,
            len,
            1e-12,
            "forwards",
        );
        let back: Vec<f64> = ts.iter().rev().copied().collect();
        near_moments(
            by_pieces(&e, &back, origin),
            full * -1.0,
            area,
            len,
            1e-12,
            "backwards",
        );
    }

    #[test]
    fn degree_one_spline_is_its_control_polygon() {
        let mut r = uniform(32);
        let c = Point::new(1e5, 2e3);
        let mut pts: Vec<Point> = (0..9)
            .map(|i| {
                let a = TAU * i as f64 / 9.0;
                c + Point::polar(a) * (2.0 + r())
            })
            .collect();
        pts.push(pts[0]);
        let n = pts.len();
        // Uneven knots, clamped.
        let mut knots = vec![0.0, 0.0];
        for _ in 1..n - 1 {
            let last = *knots.last().unwrap();
            knots.push(last + 0.5 + r());
        }
        let end = knots.last().unwrap() + 0.5 + r();
        knots.push(end);
        knots.push(end);
        let s = Curve::Nurbs(Nurbs::new(1, knots.clone(), pts.clone(), Vec::new()).unwrap());
        let origin = c + Point::new(0.2, -0.1);
        let poly = polygon_moments(&pts, origin);
        near_moments(whole(&s, origin), poly, poly.a.abs(), 3.0, 1e-14, "closed");
        // A piece from inside span 1 to inside span 3 is two part-edges and one whole edge.
        let (ta, tb) = (
            0.5 * (knots[1] + knots[2]),
            0.25 * knots[3] + 0.75 * knots[4],
        );
        let part = polygon_moments(&[s.point(ta), pts[1], pts[2], s.point(tb)], origin);
        near_moments(
            s.moments_between(ta, tb, origin),
            part,
            poly.a.abs(),
            3.0,
            1e-14,
            "part",
        );
    }

    #[test]
    fn rational_circle_is_a_circle() {
        let (c, r) = (Point::new(2.0, -1.0), 3.0);
        let s = nurbs_circle(c, r);
        for k in 0..=1000 {
            let p = s.point(k as f64 / 1000.0);
            near(p.dist(c), r, r, 1e-14, "on the circle");
        }
        let area = PI * r * r;
        // Solid circle: A = πd²/4, I = πd⁴/64 about the centre (check-values.md §1, solid
        // circle row), d = 2r.
        let want = Moments {
            a: area,
            sx: 0.0,
            sy: 0.0,
            sxx: PI * r.powi(4) / 4.0,
            syy: PI * r.powi(4) / 4.0,
            sxy: 0.0,
        };
        near_moments(whole(&s, c), want, area, r, 1e-12, "disk");
        // Circumference 2πr (closed form, from memory).
        near(
            s.length_between(0.0, 1.0),
            TAU * r,
            TAU * r,
            1e-12,
            "length",
        );
        near(
            s.length_between(0.25, 0.5),
            PI * r / 2.0,
            TAU * r,
            1e-12,
            "quarter length",
        );
        let bb = s.bbox_between(0.0, 1.0);
        near(bb.min.x, c.x - r, r, 1e-12, "box");
        near(bb.max.y, c.y + r, r, 1e-12, "box");
    }

    #[test]
    fn polynomial_spline_quadrature_is_exact() {
        let off = Point::new(1e5, -3e4);
        let s = closed_cubic(off);
        let Curve::Nurbs(n) = &s else { unreachable!() };
        let (d0, d1) = s.domain();
        assert!(s.start().dist(s.end()) < 1e-9, "closes");
        let origin = off + Point::new(0.4, 0.2);
        let gl = whole(&s, origin);
        // A fine polygon of N chords converges as 1/N² (common practice); its limit is the
        // region's integrals.
        let poly = |chords: usize| {
            let mut pts: Vec<Point> = (0..chords)
                .map(|i| s.point(d0 + (d1 - d0) * (i as f64 / chords as f64)))
                .collect();
            pts.push(pts[0]);
            polygon_moments(&pts, origin)
        };
        let (fine, finer) = (poly(500_000), poly(1_000_000));
        let rich = (finer * 4.0 + fine * -1.0) * (1.0 / 3.0);
        let area = gl.a.abs();
        eprintln!(
            "polygon 1e6 area off {:e}, Richardson off {:e}",
            (finer.a - gl.a) / area,
            (rich.a - gl.a) / area
        );
        near_moments(finer, gl, area, 6.0, 1e-9, "1e6 chords");
        near_moments(rich, gl, area, 6.0, 1e-11, "Richardson");
        // 2p points already exact: 2p + 4 give the same to rounding.
        for k in 3..11 {
            let (a, b) = (n.knots[k], n.knots[k + 1]);
            let m6 = n.span_moments_gauss(k, a, b, origin, 6);
            let m10 = n.span_moments_gauss(k, a, b, origin, 10);
            near_moments(m6, m10, area / 8.0, 6.0, 1e-14, "2p against 2p + 4");
        }
    }

    /// Under x -> M·x + t, with the origin mapped too, the integrals of a piece become
    /// A' = det·A, s' = det·M·s, S' = det·M·S·Mᵀ (change of variables; from memory).
    fn mapped(m: Moments, f: &Affine) -> Moments {
        let [a, b, c, d] = f.m;
        let det = f.det();
        Moments {
            a: det * m.a,
            sx: det * (a * m.sx + b * m.sy),
            sy: det * (c * m.sx + d * m.sy),
            sxx: det * (a * a * m.sxx + 2.0 * a * b * m.sxy + b * b * m.syy),
            syy: det * (c * c * m.sxx + 2.0 * c * d * m.sxy + d * d * m.syy),
            sxy: det * (a * c * m.sxx + (a * d + b * c) * m.sxy + b * d * m.syy),
        }
    }

    #[test]
    fn moments_follow_affine_maps() {
        let shear = Affine {
            m: [1.3, 0.4, -0.2, 0.7],
            t: Point::new(50.0, -20.0),
        };
        let mirror = Affine::scaling(-1.0, 1.0).then(&Affine::translation(Point::new(3.0, 0.0)));
        let curves = [
            (
                closed_cubic(Point::new(1.0, 2.0)),
                3.0,
                11.0,
                "closed cubic",
            ),
            (
                closed_cubic(Point::new(1.0, 2.0)),
                4.3,
                7.9,
                "open cubic piece",
            ),
            (
                nurbs_circle(Point::new(1.0, -1.0), 2.0),
                0.0,
                1.0,
                "rational circle",
            ),
            (
                nurbs_circle(Point::new(1.0, -1.0), 2.0),
                0.1,
                0.6,
                "rational piece",
            ),
            (
                ellipse(Point::new(1.0, 1.0), 5.0, 2.0, 0.3, 0.0, TAU),
                0.7,
                0.7 + TAU,
                "ellipse",
            ),
            (
                ellipse(Point::new(1.0, 1.0), 5.0, 2.0, 0.3, 0.2, 2.9),
                0.2,
                2.9,
                "ellipse arc",
            ),
        ];
        let origin = Point::new(0.5, 0.25);
        for (c, ta, tb, what) in &curves {
            let (ta, tb) = (*ta, *tb);
            let m = c.moments_between(ta, tb, origin);
            let scale = m.a.abs().max(1.0);
            for (f, name) in [(&shear, "shear"), (&mirror, "mirror")] {
                let got = c.transformed(f).moments_between(ta, tb, f.apply(origin));
                near_moments(
                    got,
                    mapped(m, f),
                    scale * 2.0,
                    8.0,
                    1e-12,
                    &format!("{what}, {name}"),
                );
            }
            // Mirroring flips the sign of the directed area.
            let got = c
                .transformed(&mirror)
                .moments_between(ta, tb, mirror.apply(origin));
            assert!(got.a * m.a < 0.0, "{what}");
        }
    }

    /// Chord-length parameters scaled to [0, 1] (as the method describes).
    fn chord_params(fit: &[Point]) -> Vec<f64> {
        let mut u = vec![0.0];
        for w in fit.windows(2) {
            u.push(u.last().unwrap() + w[0].dist(w[1]));
        }
        let total = *u.last().unwrap();
        u.iter().map(|x| x / total).collect()
    }

    #[test]
    fn interpolation_passes_through_the_fit_points() {
        let fit: Vec<Point> = [0.0, 0.7, 1.5, 3.0, 3.4, 5.0, 6.2]
            .iter()
            .map(|&x| Point::new(1e3 + x, 2.0 * (x * 1.3_f64).sin()))
            .collect();
        let u = chord_params(&fit);
        let total: f64 = fit.windows(2).map(|w| w[0].dist(w[1])).sum();
        let t0 = Point::new(1.0, 1.0);
        let t1 = Point::new(1.0, -2.0);
        for (st, et) in [
            (None, None),
            (Some(t0), None),
            (None, Some(t1)),
            (Some(t0), Some(t1)),
        ] {
            let n = Nurbs::interpolate(&fit, 3, st, et).unwrap();
            assert_eq!(n.degree, 3);
            let c = Curve::Nurbs(n);
            for (p, &t) in fit.iter().zip(&u) {
                near(
                    c.point(t).dist(*p),
                    0.0,
                    1e3,
                    1e-12,
                    "through the fit point",
                );
            }
            if let Some(d) = st {
                let got = c.derivative(0.0);
                near(
                    got.cross(d) / d.norm(),
                    0.0,
                    total,
                    1e-12,
                    "start direction",
                );
                near(got.norm(), total, total, 1e-12, "start length");
                assert!(got.dot(d) > 0.0);
            }
            if let Some(d) = et {
                let got = c.derivative(1.0);
                near(got.cross(d) / d.norm(), 0.0, total, 1e-12, "end direction");
                assert!(got.dot(d) > 0.0);
            }
        }
        // Repeated points are dropped; fewer than two distinct points is an error.
        let p = Point::new(1.0, 2.0);
        assert!(Nurbs::interpolate(&[], 3, None, None).is_err());
        assert!(Nurbs::interpolate(&[p], 3, None, None).is_err());
        assert!(Nurbs::interpolate(&[p, p, p], 3, None, None).is_err());
        assert!(Nurbs::interpolate(&[p, p, Point::new(2.0, 2.0)], 3, None, None).is_ok());
    }

    #[test]
    fn interpolation_of_few_points_and_straight_lines() {
        // Collinear fit points, unevenly spaced: the spline stays on their line.
        let line = |x: f64| Point::new(x, 2.0 * x + 1.0);
        let dir = Point::new(1.0, 2.0) * (1.0 / 5f64.sqrt());
        for xs in [
            &[0.0, 5.0][..],
            &[0.0, 0.3, 5.0],
            &[0.0, 0.3, 1.7, 2.0, 5.0],
        ] {
            let fit: Vec<Point> = xs.iter().map(|&x| line(x)).collect();
            let n = Nurbs::interpolate(&fit, 3, None, None).unwrap();
            assert_eq!(n.degree, 3.min(xs.len() - 1));
            let c = Curve::Nurbs(n);
            for (p, t) in fit.iter().zip(chord_params(&fit)) {
                near(c.point(t).dist(*p), 0.0, 5.0, 1e-12, "through");
            }
            for k in 0..=200 {
                let q = c.point(k as f64 / 200.0) - line(0.0);
                near(q.cross(dir), 0.0, 5.0, 1e-12, "on the line");
            }
        }
        // Two points and both tangents: a cubic with those end directions.
        let fit = [Point::new(0.0, 0.0), Point::new(4.0, 0.0)];
        let n = Nurbs::interpolate(
            &fit,
            3,
            Some(Point::new(0.0, 1.0)),
            Some(Point::new(0.0, -1.0)),
        )
        .unwrap();
        assert_eq!((n.degree, n.ctrl.len()), (3, 4));
        let c = Curve::Nurbs(n);
        near(c.end().dist(fit[1]), 0.0, 4.0, 1e-15, "end");
        near(c.derivative(0.0).x, 0.0, 4.0, 1e-15, "start tangent");
        near(c.derivative(0.0).y, 4.0, 4.0, 1e-15, "start tangent");
    }

    /// The largest distance of `n` samples of each piece from its chord.
    fn worst_chord_distance(c: &Curve, ts: &[f64], n: usize) -> f64 {
        let mut worst: f64 = 0.0;
        for w in ts.windows(2) {
            let (a, b) = (c.point(w[0]), c.point(w[1]));
            for k in 1..n {
                let t = w[0] + (w[1] - w[0]) * (k as f64 / n as f64);
                worst = worst.max(dist_to_segment(c.point(t), a, b));
            }
        }
        worst
    }

    #[test]
    fn flattening_keeps_within_tolerance() {
        let far = Point::new(1e5, -3e4);
        let curves = [
            ellipse(far, 5.0, 2.0, 0.4, 2.0, -1.5),
            ellipse(far, 5.0, 2.0, 0.4, 0.0, TAU),
            nurbs_circle(far, 3.0),
            closed_cubic(far),
            Curve::Nurbs(
                Nurbs::interpolate(
                    &[
                        far,
                        far + Point::new(1.0, 3.0),
                        far + Point::new(4.0, -1.0),
                        far + Point::new(6.0, 0.0),
                    ],
                    3,
                    None,
                    None,
                )
                .unwrap(),
            ),
        ];
        for c in &curves {
            let (d0, d1) = c.domain();
            for tol in [1e-2, 1e-4] {
                let ts = c.flatten(tol, 1);
                assert_eq!((ts[0], *ts.last().unwrap()), (d0, d1));
                let dir = (d1 - d0).signum();
                assert!(ts.windows(2).all(|w| (w[1] - w[0]) * dir > 0.0), "monotone");
                let worst = worst_chord_distance(c, &ts, 64);
                assert!(worst <= tol * (1.0 + 1e-6), "{worst} > {tol}");
                // Not wastefully fine either: the worst piece uses a good part of the budget.
                assert!(
                    worst >= tol / 16.0,
                    "{worst} for {tol}, {} pieces",
                    ts.len()
                );
                if let Curve::Nurbs(n) = c {
                    for k in &n.knots[n.degree..=n.ctrl.len()] {
                        assert!(ts.contains(k), "knot {k}");
                    }
                }
            }
            // Minimum piece counts: asked for, and 4 for closed curves.
            assert!(c.flatten(1e3, 50).len() > 50);
            let closed = c.start().dist(c.end()) < 1e-9;
            assert!(!closed || c.flatten(1e3, 1).len() > 4);
        }
    }

    #[test]
    fn boxes_hold_the_piece_tightly() {
        let far = Point::new(1e5, -3e4);
        let curves = [
            (ellipse(far, 5.0, 2.0, 0.4, 2.0, -1.5), 1.7, -0.9),
            (nurbs_circle(far, 3.0), 0.1, 0.8),
            (closed_cubic(Point::new(1.0, 2.0)), 3.5, 10.2),
        ];
        for (c, ta, tb) in &curves {
            let b = c.bbox_between(*ta, *tb);
            let mut seen = BBox::EMPTY;
            for k in 0..=20_000 {
                seen.add_point(c.point(ta + (tb - ta) * (k as f64 / 20_000.0)));
            }
            // Holds every sample, and sampling every 1/20000 misses an extreme by at most
            // ~(size·(π/20000)²)/2 here.
            assert!(b.contains_box(&seen, 1e-10 * 1e5), "{b:?} against {seen:?}");
            assert!(seen.contains_box(&b, 1e-6), "{b:?} against {seen:?}");
        }
    }

    #[test]
    fn derivatives_match_finite_differences() {
        let curves = [
            nurbs_circle(Point::new(0.5, 0.1), 3.0),
            closed_cubic(Point::new(1.0, 2.0)),
            ellipse(Point::new(1.0, 1.0), 5.0, 2.0, 0.3, 0.2, 2.9),
        ];
        for c in &curves {
            let (d0, d1) = c.domain();
            for k in 1..40 {
                let t = d0 + (d1 - d0) * (k as f64 + 0.37) / 40.5;
                let h = 1e-5 * (d1 - d0);
                // Central difference, error O(h²) (common practice).
                let fd = (c.point(t + h) - c.point(t - h)) * (0.5 / h);
                let d = c.derivative(t);
                near(d.dist(fd), 0.0, d.norm().max(1.0), 1e-7, "derivative");
            }
        }
    }

    #[test]
    fn ellipse_length() {
        // Quarter circle of radius 2: π (closed form, from memory).
        let c = ellipse(Point::new(3.0, 4.0), 2.0, 2.0, 0.3, 0.0, TAU);
        near(
            c.length_between(0.1, 0.1 + PI / 2.0),
            PI,
            PI,
            1e-13,
            "quarter circle",
        );
        // Ellipse 5 × 2: against a polygon of 2²⁰ chords (converges as 1/N², common practice).
        let e = ellipse(Point::default(), 5.0, 2.0, 0.0, 0.0, TAU);
        let n = 1 << 20;
        let poly: f64 = (0..n)
            .map(|i| {
                let t = TAU * i as f64 / n as f64;
                e.point(t).dist(e.point(TAU * (i + 1) as f64 / n as f64))
            })
            .sum();
        near(e.length_between(0.0, TAU), poly, poly, 1e-10, "perimeter");
        near(e.length_between(TAU, 0.0), poly, poly, 1e-10, "backwards");
    }

    #[test]
    fn spline_checks_reject_bad_input() {
        let ctrl = vec![
            Point::new(0.0, 0.0),
            Point::new(1.0, 0.0),
            Point::new(1.0, 1.0),
        ];
        let knots = vec![0.0, 0.0, 0.0, 1.0, 1.0, 1.0];
        assert!(Nurbs::new(2, knots.clone(), ctrl.clone(), vec![]).is_ok());
        assert!(Nurbs::new(2, knots.clone(), ctrl.clone(), vec![1.0, 0.5, 1.0]).is_ok());
        let errs = [
            Nurbs::new(0, knots.clone(), ctrl.clone(), vec![]),
            Nurbs::new(3, knots.clone(), ctrl.clone(), vec![]),
            Nurbs::new(2, knots[1..].to_vec(), ctrl.clone(), vec![]),
            Nurbs::new(2, vec![0.0, 0.0, 0.5, 0.4, 1.0, 1.0], ctrl.clone(), vec![]),
            Nurbs::new(2, vec![0.0, 0.0, 1.0, 1.0, 1.0, 1.0], ctrl.clone(), vec![]),
            Nurbs::new(
                2,
                vec![0.0, 0.0, 0.0, f64::NAN, 1.0, 1.0],
                ctrl.clone(),
                vec![],
            ),
            Nurbs::new(
                2,
                knots.clone(),
                vec![ctrl[0], Point::new(f64::NAN, 0.0), ctrl[2]],
                vec![],
            ),
            Nurbs::new(2, knots.clone(), ctrl.clone(), vec![1.0, 0.0, 1.0]),
            Nurbs::new(2, knots.clone(), ctrl.clone(), vec![1.0, -1.0, 1.0]),
            Nurbs::new(2, knots.clone(), ctrl.clone(), vec![1.0, f64::NAN, 1.0]),
            Nurbs::new(2, knots.clone(), ctrl.clone(), vec![1.0, 1.0]),
            Nurbs::new(2, vec![1.0; 6], ctrl.clone(), vec![]),
        ];
        for (i, e) in errs.iter().enumerate() {
            assert!(e.is_err(), "case {i}: {e:?}");
        }
        assert!(!Nurbs::new(2, knots.clone(), ctrl.clone(), vec![2.0; 3])
            .unwrap()
            .is_rational());
    }

    #[test]
    fn affine_maps_compose() {
        let f = Affine::rotation(0.3)
            .then(&Affine::scaling(2.0, 2.0))
            .then(&Affine::translation(Point::new(1.0, -4.0)));
        let p = Point::new(0.7, -1.2);
        let by_steps = rotated_point(p, 0.3) * 2.0 + Point::new(1.0, -4.0);
        near(f.apply(p).dist(by_steps), 0.0, 1.0, 1e-15, "then");
        near(f.det(), 4.0, 4.0, 1e-15, "det");
        assert!(f.is_similarity());
        assert!(f.then(&Affine::scaling(-1.0, 1.0)).is_similarity());
        assert!(!f.then(&Affine::scaling(1.0, 1.001)).is_similarity());
        assert!(!Affine::scaling(0.0, 0.0).is_similarity());
        assert_eq!(Affine::IDENTITY.apply(p), p);
    }

    fn rotated_point(p: Point, a: f64) -> Point {
        crate::geom::segment::rotated(p, a)
    }
}
