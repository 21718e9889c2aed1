//! Finite-volume discretisation of ∇·(ε∇φ) = 0 on a tensor mesh, sparse
//! Cholesky solve (faer) and charges from link fluxes.
//!
//! Node-centred scheme: φ lives on mesh nodes, ε on cells. The coupling of
//! node P to its east neighbour is a = (ε_ne·dy_n/2 + ε_se·dy_s/2)/dx, i.e.
//! the length-weighted average of the two cells the dual face crosses
//! (interface averaging). On rectangles this is the same matrix as linear
//! finite elements on the cells split into two triangles, so the discrete
//! capacitance is an upper bound that decreases monotonically under nested
//! refinement.

use faer::linalg::solvers::Solve;
use faer::sparse::linalg::solvers::{Llt, SymbolicLlt};
use faer::sparse::{SparseColMat, SymbolicSparseColMat};
use faer::{Mat, Side};

/// What a mesh node is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Node {
    /// Unknown potential, index into the linear system.
    Free(usize),
    /// Fixed potential: 0 = ground, k ≥ 1 = conductor k − 1.
    Fixed(usize),
}

/// A discretised cross-section ready to solve.
pub(crate) struct Grid {
    pub xs: Vec<f64>,
    pub ys: Vec<f64>,
    /// Relative permittivity per cell, row-major (j * (nx-1) + i).
    pub eps: Vec<f64>,
    /// Node kinds, row-major (j * nx + i).
    pub nodes: Vec<Node>,
    /// Number of free nodes.
    pub n_free: usize,
    /// Number of signal conductors.
    pub n_cond: usize,
}

impl Grid {
    fn nx(&self) -> usize {
        self.xs.len()
    }
    fn ny(&self) -> usize {
        self.ys.len()
    }
    fn eps_cell(&self, i: usize, j: usize, vacuum: bool) -> f64 {
        if vacuum {
            1.0
        } else {
            self.eps[j * (self.nx() - 1) + i]
        }
    }

    /// Link coefficients (dimensionless; ×ε0 gives F/m per volt): `east[p]`
    /// couples node p to p + 1, `north[p]` couples p to p + nx.
    fn links(&self, vacuum: bool) -> (Vec<f64>, Vec<f64>) {
        let (nx, ny) = (self.nx(), self.ny());
        let mut east = vec![0.0; nx * ny];
        let mut north = vec![0.0; nx * ny];
        for j in 0..ny {
            for i in 0..nx {
                let p = j * nx + i;
                if i + 1 < nx {
                    let dx = self.xs[i + 1] - self.xs[i];
                    let mut s = 0.0;
                    if j > 0 {
                        s += self.eps_cell(i, j - 1, vacuum) * (self.ys[j] - self.ys[j - 1]) * 0.5;
                    }
                    if j + 1 < ny {
                        s += self.eps_cell(i, j, vacuum) * (self.ys[j + 1] - self.ys[j]) * 0.5;
                    }
                    east[p] = s / dx;
                }
                if j + 1 < ny {
                    let dy = self.ys[j + 1] - self.ys[j];
                    let mut s = 0.0;
                    if i > 0 {
                        s += self.eps_cell(i - 1, j, vacuum) * (self.xs[i] - self.xs[i - 1]) * 0.5;
                    }
                    if i + 1 < nx {
                        s += self.eps_cell(i, j, vacuum) * (self.xs[i + 1] - self.xs[i]) * 0.5;
                    }
                    north[p] = s / dy;
                }
            }
        }
        (east, north)
    }
}

/// Sparse Cholesky solver for one grid; the symbolic factorisation (fill
/// reducing ordering and elimination tree) is shared by the dielectric and
/// the vacuum systems, which have the same pattern.
pub(crate) struct Solver<'g> {
    grid: &'g Grid,
    symbolic: SymbolicLlt<usize>,
    col_ptr: Vec<usize>,
    row_idx: Vec<usize>,
}

impl<'g> Solver<'g> {
    /// Builds the lower-triangular pattern column by column. Free nodes are
    /// numbered in row-major order, so for column p the rows are p, its east
    /// neighbour and its north neighbour, already ascending.
    pub fn new(grid: &'g Grid) -> Result<Self, String> {
        let n = grid.n_free;
        if n == 0 {
            return Err("no free mesh nodes".into());
        }
        let nx = grid.nx();
        let mut col_ptr = Vec::with_capacity(n + 1);
        let mut row_idx = Vec::with_capacity(3 * n);
        col_ptr.push(0);
        for (p, node) in grid.nodes.iter().enumerate() {
            if let Node::Free(ip) = *node {
                row_idx.push(ip);
                if p % nx + 1 < nx {
                    if let Node::Free(iq) = grid.nodes[p + 1] {
                        row_idx.push(iq);
                    }
                }
                if p + nx < grid.nodes.len() {
                    if let Node::Free(iq) = grid.nodes[p + nx] {
                        row_idx.push(iq);
                    }
                }
                col_ptr.push(row_idx.len());
            }
        }
        let pattern =
            SymbolicSparseColMat::new_checked(n, n, col_ptr.clone(), None, row_idx.clone());
        let symbolic = SymbolicLlt::try_new(pattern.as_ref(), Side::Lower)
            .map_err(|e| format!("symbolic factorisation failed: {e:?}"))?;
        Ok(Solver {
            grid,
            symbolic,
            col_ptr,
            row_idx,
        })
    }

    /// Maxwell capacitance matrix (row-major n_cond × n_cond) divided by ε0,
    /// with the dielectrics (`vacuum = false`) or in vacuum.
    pub fn capacitance(&self, vacuum: bool) -> Result<Vec<f64>, String> {
        let g = self.grid;
        let n = g.n_free;
        let nc = g.n_cond;
        let nx = g.nx();
        let nn = g.nodes.len();
        let (east, north) = g.links(vacuum);
        // Neighbours of node p with their coefficients.
        let neighbours = |p: usize| {
            let i = p % nx;
            let mut out = [(usize::MAX, 0.0); 4];
            if i + 1 < nx {
                out[0] = (p + 1, east[p]);
            }
            if i > 0 {
                out[1] = (p - 1, east[p - 1]);
            }
            if p + nx < nn {
                out[2] = (p + nx, north[p]);
            }
            if p >= nx {
                out[3] = (p - nx, north[p - nx]);
            }
            out
        };
        let mut val = vec![0.0; self.row_idx.len()];
        let mut rhs = Mat::<f64>::zeros(n, nc);
        for (p, node) in g.nodes.iter().enumerate() {
            let Node::Free(ip) = *node else { continue };
            let nb = neighbours(p);
            let mut diag = 0.0;
            for &(q, a) in &nb {
                if q == usize::MAX {
                    continue;
                }
                diag += a;
                if let Node::Fixed(k) = g.nodes[q] {
                    if k > 0 {
                        rhs[(ip, k - 1)] += a;
                    }
                }
            }
            let start = self.col_ptr[ip];
            val[start] = diag;
            let mut k = start + 1;
            for q in [nb[0], nb[2]] {
                if q.0 != usize::MAX {
                    if let Node::Free(_) = g.nodes[q.0] {
                        val[k] = -q.1;
                        k += 1;
                    }
                }
            }
        }
        let pattern = SymbolicSparseColMat::new_checked(
            n,
            n,
            self.col_ptr.clone(),
            None,
            self.row_idx.clone(),
        );
        let a = SparseColMat::<usize, f64>::new(pattern, val);
        let llt = Llt::try_new_with_symbolic(self.symbolic.clone(), a.as_ref(), Side::Lower)
            .map_err(|e| format!("Cholesky factorisation failed: {e:?}"))?;
        let mut phi = rhs;
        llt.solve_in_place(phi.as_mut());
        // Charge on conductor k for excitation m: Σ a (φ_k − φ_other) over the
        // links that leave conductor k's nodes.
        let mut c = vec![0.0; nc * nc];
        for (p, node) in g.nodes.iter().enumerate() {
            let Node::Fixed(kk) = *node else { continue };
            if kk == 0 {
                continue;
            }
            let k = kk - 1;
            for (q, a) in neighbours(p) {
                if q == usize::MAX || g.nodes[q] == Node::Fixed(kk) {
                    continue;
                }
                for m in 0..nc {
                    let vk = if k == m { 1.0 } else { 0.0 };
                    let vo = match g.nodes[q] {
                        Node::Free(io) => phi[(io, m)],
                        Node::Fixed(j) => {
                            if j > 0 && j - 1 == m {
                                1.0
                            } else {
                                0.0
                            }
                        }
                    };
                    c[k * nc + m] += a * (vk - vo);
                }
            }
        }
        if c.iter().any(|v| !v.is_finite()) {
            return Err("non-finite capacitance (degenerate mesh)".into());
        }
        Ok(c)
    }
}
