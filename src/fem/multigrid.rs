//! Solving the stiffness systems of a hierarchy of nested meshes: a sparse Cholesky
//! factorisation (faer) of the first level, and conjugate gradients preconditioned by a
//! multigrid V-cycle on the finer ones.
//!
//! The meshes of the torsion solver are nested ([`super::Mesh::refined`] splits every
//! element into four), so the finite-element space of a level contains the one before it and
//! the prolongation P (a coarse function evaluated at the fine nodes, through the coarse
//! element's shape functions) is exact. One V-cycle: a forward Gauss–Seidel sweep, the
//! residual restricted by Pᵀ and corrected from the level below (recursively, down to the
//! factorised first level), and a backward sweep; the cycle is symmetric, so it serves as a
//! preconditioner for conjugate gradients (e.g. Saad, Iterative Methods for Sparse Linear
//! Systems, 2nd ed., §13; Hackbusch, Multi-Grid Methods and Applications; from memory).
//! Factorising a fine level directly costs far more (its fill grows like n·log n and the
//! work like n^1.5); a V-cycle costs a few passes over the matrix.
//!
//! Unknowns held at zero (one node per connected piece, to remove the constant) keep their
//! rows as identity rows, with no coupling to the others.

use faer::dyn_stack::{MemBuffer, MemStack, StackReq};
use faer::linalg::cholesky::llt::factor::{LltParams, LltRegularization};
use faer::sparse::linalg::cholesky::{
    factorize_symbolic_cholesky, CholeskySymbolicParams, LltRef, SymbolicCholesky,
    SymmetricOrdering,
};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use faer::{Conj, MatMut, Par, Side, Spec};

use super::mesh::{shape, Mesh, SPLIT_POINTS};

/// A symmetric matrix in compressed rows, both triangles stored, columns sorted in each row.
#[derive(Debug, Clone)]
pub struct Csr {
    pub n: usize,
    ptr: Vec<usize>,
    col: Vec<u32>,
    val: Vec<f64>,
    /// Position of each row's diagonal entry in `col`/`val`.
    diag: Vec<usize>,
}

impl Csr {
    /// The pattern of a mesh: nodes sharing an element are coupled. Values zero.
    pub fn pattern(n: usize, elements: &[[u32; 6]]) -> Csr {
        let mut start = vec![0usize; n + 1];
        for el in elements {
            for &v in el {
                start[v as usize + 1] += 1;
            }
        }
        for k in 0..n {
            start[k + 1] += start[k];
        }
        let mut fill = start.clone();
        let mut of_node = vec![0u32; start[n]];
        for (e, el) in elements.iter().enumerate() {
            for &v in el {
                of_node[fill[v as usize]] = e as u32;
                fill[v as usize] += 1;
            }
        }
        let mut ptr = Vec::with_capacity(n + 1);
        ptr.push(0);
        let mut col: Vec<u32> = Vec::with_capacity(n * 14);
        let mut diag = Vec::with_capacity(n);
        let mut row: Vec<u32> = Vec::with_capacity(64);
        for v in 0..n {
            row.clear();
            for &e in &of_node[start[v]..start[v + 1]] {
                row.extend_from_slice(&elements[e as usize]);
            }
            row.sort_unstable();
            row.dedup();
            let at = col.len();
            diag.push(at + row.binary_search(&(v as u32)).unwrap_or(0));
            col.extend_from_slice(&row);
            ptr.push(col.len());
        }
        let nnz = col.len();
        Csr {
            n,
            ptr,
            col,
            val: vec![0.0; nnz],
            diag,
        }
    }

    /// Add `v` at (`i`, `j`), a pair of the pattern.
    #[inline]
    pub fn add(&mut self, i: usize, j: usize, v: f64) {
        let row = &self.col[self.ptr[i]..self.ptr[i + 1]];
        // The pattern holds every pair of nodes of an element (invariant).
        if let Ok(k) = row.binary_search(&(j as u32)) {
            self.val[self.ptr[i] + k] += v;
        }
    }

    /// Make row and column `i` an identity row (an unknown held at zero).
    pub fn hold(&mut self, i: usize) {
        for k in self.ptr[i]..self.ptr[i + 1] {
            self.val[k] = 0.0;
        }
        self.val[self.diag[i]] = 1.0;
    }

    /// y = A·x.
    pub fn mul(&self, x: &[f64], y: &mut [f64]) {
        for (i, yi) in y.iter_mut().enumerate() {
            let mut s = 0.0;
            for k in self.ptr[i]..self.ptr[i + 1] {
                s += self.val[k] * x[self.col[k] as usize];
            }
            *yi = s;
        }
    }

    /// One Gauss–Seidel sweep for A·x = b, rows in increasing (`forward`) or decreasing order.
    fn gauss_seidel(&self, b: &[f64], x: &mut [f64], forward: bool) {
        let mut step = |i: usize| {
            let mut s = b[i];
            for k in self.ptr[i]..self.ptr[i + 1] {
                s -= self.val[k] * x[self.col[k] as usize];
            }
            let d = self.val[self.diag[i]];
            x[i] += s / d;
        };
        if forward {
            (0..self.n).for_each(&mut step);
        } else {
            (0..self.n).rev().for_each(&mut step);
        }
    }
}

/// A sparse Cholesky factorisation (fill-reducing order: approximate minimum degree).
pub struct Direct {
    symbolic: SymbolicCholesky<usize>,
    l_values: Vec<f64>,
    scratch: MemBuffer,
}

impl Direct {
    pub fn new(a: &Csr) -> Result<Direct, String> {
        let n = a.n;
        // The upper triangle in compressed columns: row j of a symmetric matrix, columns ≤ j.
        let mut col_ptr = Vec::with_capacity(n + 1);
        col_ptr.push(0usize);
        let mut row_idx = Vec::with_capacity(a.val.len() / 2 + n);
        let mut values = Vec::with_capacity(a.val.len() / 2 + n);
        for j in 0..n {
            for k in a.ptr[j]..=a.diag[j] {
                row_idx.push(a.col[k] as usize);
                values.push(a.val[k]);
            }
            col_ptr.push(row_idx.len());
        }
        let structure = SymbolicSparseColMatRef::new_checked(n, n, &col_ptr, None, &row_idx);
        let symbolic = factorize_symbolic_cholesky(
            structure,
            Side::Upper,
            SymmetricOrdering::Amd,
            CholeskySymbolicParams::default(),
        )
        .map_err(|e| format!("symbolic factorisation failed: {e:?}"))?;
        let params: Spec<LltParams, f64> = Default::default();
        let req = StackReq::any_of(&[
            symbolic.factorize_numeric_llt_scratch::<f64>(Par::Seq, params),
            symbolic.solve_in_place_scratch::<f64>(1, Par::Seq),
        ]);
        let mut scratch = MemBuffer::new(req);
        let mut l_values = vec![0.0f64; symbolic.len_val()];
        symbolic
            .factorize_numeric_llt(
                &mut l_values,
                SparseColMatRef::new(structure, &values),
                Side::Upper,
                LltRegularization::default(),
                Par::Seq,
                MemStack::new(&mut scratch),
                params,
            )
            .map_err(|e| {
                format!(
                    "the stiffness matrix is not positive definite ({e:?}): degenerate \
                     elements where boundaries meet at a zero angle?"
                )
            })?;
        Ok(Direct {
            symbolic,
            l_values,
            scratch,
        })
    }

    /// Solve in place: `x` holds the right-hand side, then the solution.
    pub fn solve(&mut self, x: &mut [f64]) {
        let n = x.len();
        let llt = LltRef::new(&self.symbolic, &self.l_values);
        llt.solve_in_place_with_conj(
            Conj::No,
            MatMut::from_column_major_slice_mut(x, n, 1),
            Par::Seq,
            MemStack::new(&mut self.scratch),
        );
    }
}

/// The prolongation from a mesh to its refinement.
struct Prolongation<'a> {
    coarse: &'a Mesh,
    fine: &'a Mesh,
    weights: [[f64; 6]; 9],
}

impl<'a> Prolongation<'a> {
    fn new(coarse: &'a Mesh, fine: &'a Mesh) -> Self {
        Prolongation {
            coarse,
            fine,
            weights: SPLIT_POINTS.map(|(xi, eta)| shape(xi, eta)),
        }
    }

    /// fine = P·coarse.
    fn prolong(&self, coarse: &[f64], fine: &mut [f64]) {
        let nc = self.coarse.nodes.len();
        fine[..nc].copy_from_slice(coarse);
        for (k, &(e, at)) in self.fine.parents.iter().enumerate() {
            let el = &self.coarse.elements[e as usize];
            let w = &self.weights[at as usize];
            fine[nc + k] = (0..6).map(|m| w[m] * coarse[el[m] as usize]).sum();
        }
    }

    /// coarse = Pᵀ·fine.
    fn restrict(&self, fine: &[f64], coarse: &mut [f64]) {
        let nc = self.coarse.nodes.len();
        coarse.copy_from_slice(&fine[..nc]);
        for (k, &(e, at)) in self.fine.parents.iter().enumerate() {
            let el = &self.coarse.elements[e as usize];
            let w = &self.weights[at as usize];
            for m in 0..6 {
                coarse[el[m] as usize] += w[m] * fine[nc + k];
            }
        }
    }
}

/// A hierarchy of nested levels: meshes, their matrices, the held unknowns, and the
/// factorisation of the first.
pub struct Hierarchy {
    pub meshes: Vec<Mesh>,
    pub matrices: Vec<Csr>,
    /// Unknowns held at zero (the same nodes on every level: refinement keeps node numbers).
    pub held: Vec<u32>,
    direct: Option<Direct>,
}

/// Iterations of conjugate gradients allowed per level before giving up.
const MAX_ITERATIONS: usize = 200;

impl Hierarchy {
    pub fn new(held: Vec<u32>) -> Hierarchy {
        Hierarchy {
            meshes: Vec::new(),
            matrices: Vec::new(),
            held,
            direct: None,
        }
    }

    /// Add the next level (its mesh and matrix, held rows already made identity).
    pub fn push(&mut self, mesh: Mesh, matrix: Csr) {
        self.meshes.push(mesh);
        self.matrices.push(matrix);
    }

    /// Solve the finest level's system A·x = b. The first level is factorised; a finer
    /// one is solved by conjugate gradients with a V-cycle, starting from `guess`, to a
    /// residual of `tolerance` × |b|.
    pub fn solve(
        &mut self,
        b: &[f64],
        guess: Option<&[f64]>,
        tolerance: f64,
    ) -> Result<Vec<f64>, String> {
        let top = self.matrices.len() - 1;
        if self.direct.is_none() {
            self.direct = Some(Direct::new(&self.matrices[0])?);
        }
        if top == 0 {
            let mut x = b.to_vec();
            self.direct
                .as_mut()
                .expect("factorised above")
                .solve(&mut x);
            return Ok(x);
        }
        let n = b.len();
        let a = &self.matrices[top];
        let mut x = guess.map_or_else(|| vec![0.0; n], |g| g.to_vec());
        let mut r = vec![0.0; n];
        a.mul(&x, &mut r);
        for i in 0..n {
            r[i] = b[i] - r[i];
        }
        let norm_b = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        if norm_b == 0.0 {
            return Ok(vec![0.0; n]);
        }
        let mut z = vec![0.0; n];
        self.v_cycle(top, &r, &mut z);
        let mut p = z.clone();
        let mut rz: f64 = r.iter().zip(&z).map(|(a, b)| a * b).sum();
        let mut q = vec![0.0; n];
        for _ in 0..MAX_ITERATIONS {
            crate::time_limit::check("solving for torsion");
            let r_norm = r.iter().map(|v| v * v).sum::<f64>().sqrt();
            if r_norm <= tolerance * norm_b {
                return Ok(x);
            }
            let a = &self.matrices[top];
            a.mul(&p, &mut q);
            let pq: f64 = p.iter().zip(&q).map(|(a, b)| a * b).sum();
            if pq.is_nan() || pq <= 0.0 {
                break;
            }
            let alpha = rz / pq;
            for i in 0..n {
                x[i] += alpha * p[i];
                r[i] -= alpha * q[i];
            }
            self.v_cycle(top, &r, &mut z);
            let rz_new: f64 = r.iter().zip(&z).map(|(a, b)| a * b).sum();
            let beta = rz_new / rz;
            rz = rz_new;
            for i in 0..n {
                p[i] = z[i] + beta * p[i];
            }
        }
        Err("the iterative solver did not converge".into())
    }

    /// Solve the finest level's system by factorising it (slower, for when the iterative
    /// solve fails).
    pub fn solve_directly(&self, b: &[f64]) -> Result<Vec<f64>, String> {
        let top = self.matrices.len() - 1;
        let mut x = b.to_vec();
        Direct::new(&self.matrices[top])?.solve(&mut x);
        Ok(x)
    }

    /// x = V-cycle approximation of A_level⁻¹·r.
    fn v_cycle(&mut self, level: usize, r: &[f64], x: &mut [f64]) {
        if level == 0 {
            x.copy_from_slice(r);
            for &h in &self.held {
                x[h as usize] = 0.0;
            }
            self.direct.as_mut().expect("factorised in solve").solve(x);
            return;
        }
        x.iter_mut().for_each(|v| *v = 0.0);
        let a = &self.matrices[level];
        a.gauss_seidel(r, x, true);
        let n = r.len();
        let mut res = vec![0.0; n];
        a.mul(x, &mut res);
        for i in 0..n {
            res[i] = r[i] - res[i];
        }
        let nc = self.meshes[level - 1].nodes.len();
        let mut rc = vec![0.0; nc];
        {
            let p = Prolongation::new(&self.meshes[level - 1], &self.meshes[level]);
            p.restrict(&res, &mut rc);
        }
        for &h in &self.held {
            rc[h as usize] = 0.0;
        }
        let mut ec = vec![0.0; nc];
        self.v_cycle(level - 1, &rc, &mut ec);
        let mut e = vec![0.0; n];
        Prolongation::new(&self.meshes[level - 1], &self.meshes[level]).prolong(&ec, &mut e);
        for i in 0..n {
            x[i] += e[i];
        }
        self.matrices[level].gauss_seidel(r, x, false);
    }

    /// The finest level's solution guess from the level below: P·x_coarse.
    pub fn prolonged(&self, coarse: &[f64]) -> Vec<f64> {
        let top = self.meshes.len() - 1;
        let mut fine = vec![0.0; self.meshes[top].nodes.len()];
        Prolongation::new(&self.meshes[top - 1], &self.meshes[top]).prolong(coarse, &mut fine);
        fine
    }
}
