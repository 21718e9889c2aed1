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

use faer::dyn_stack::{MemBuffer, MemStack};
use faer::perm::PermRef;
use faer::sparse::linalg::cholesky::{
    factorize_symbolic_cholesky, CholeskySymbolicParams, SymbolicCholesky, SymmetricOrdering,
};
use faer::sparse::linalg::SupernodalThreshold;
use faer::sparse::{SparseColMat, SymbolicSparseColMat};
use faer::{Conj, Mat, Par, Side};

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
    /// Every link of the mesh, once: `f(p, q, cells)` for nodes p and q (q
    /// east or north of p) with the (up to two) cells whose halves its dual
    /// face crosses and each one's geometric weight (half the cell's extent
    /// across the link over the link's length; 0 where there is no cell,
    /// whose index is then `usize::MAX`). The link coefficient is
    /// Σ ε_cell·weight.
    fn for_each_link(&self, mut f: impl FnMut(usize, usize, [(usize, f64); 2])) {
        let (nx, ny) = (self.nx(), self.ny());
        let ncx = nx - 1;
        for j in 0..ny {
            for i in 0..nx {
                let p = j * nx + i;
                if i + 1 < nx {
                    let dx = self.xs[i + 1] - self.xs[i];
                    let below = if j > 0 {
                        ((j - 1) * ncx + i, 0.5 * (self.ys[j] - self.ys[j - 1]) / dx)
                    } else {
                        (usize::MAX, 0.0)
                    };
                    let above = if j + 1 < ny {
                        (j * ncx + i, 0.5 * (self.ys[j + 1] - self.ys[j]) / dx)
                    } else {
                        (usize::MAX, 0.0)
                    };
                    f(p, p + 1, [below, above]);
                }
                if j + 1 < ny {
                    let dy = self.ys[j + 1] - self.ys[j];
                    let left = if i > 0 {
                        (j * ncx + i - 1, 0.5 * (self.xs[i] - self.xs[i - 1]) / dy)
                    } else {
                        (usize::MAX, 0.0)
                    };
                    let right = if i + 1 < nx {
                        (j * ncx + i, 0.5 * (self.xs[i + 1] - self.xs[i]) / dy)
                    } else {
                        (usize::MAX, 0.0)
                    };
                    f(p, p + nx, [left, right]);
                }
            }
        }
    }

    /// Link coefficients (dimensionless; ×ε0 gives F/m per volt): `east[p]`
    /// couples node p to p + 1, `north[p]` couples p to p + nx. `eps` is the
    /// relative permittivity per cell, row-major (j * (nx-1) + i); `None`
    /// is vacuum.
    fn links(&self, eps: Option<&[f64]>) -> (Vec<f64>, Vec<f64>) {
        let nn = self.nx() * self.ny();
        let mut east = vec![0.0; nn];
        let mut north = vec![0.0; nn];
        self.for_each_link(|p, q, cells| {
            let a: f64 = cells
                .iter()
                .filter(|(_, w)| *w > 0.0)
                .map(|&(c, w)| eps.map_or(1.0, |e| e[c]) * w)
                .sum();
            if q == p + 1 {
                east[p] = a;
            } else {
                north[p] = a;
            }
        });
        (east, north)
    }
}

/// Nested-dissection ordering of the free nodes of a tensor grid
/// (A. George, "Nested dissection of a regular finite element mesh", SIAM J.
/// Numer. Anal. 10, 1973): the index box is split by a grid line across its
/// longer side, both halves are ordered recursively and the separator
/// line comes last. Returns `forward` (new → old free index).
fn nested_dissection(grid: &Grid) -> Vec<usize> {
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut order = Vec::with_capacity(grid.n_free);
    // explicit stack instead of recursion
    enum Task {
        Box(usize, usize, usize, usize),
        Line(usize, usize, usize, usize),
    }
    let mut stack = vec![Task::Box(0, nx, 0, ny)];
    let emit = |i0: usize, i1: usize, j0: usize, j1: usize, order: &mut Vec<usize>| {
        for j in j0..j1 {
            for i in i0..i1 {
                if let Node::Free(ip) = grid.nodes[j * nx + i] {
                    order.push(ip);
                }
            }
        }
    };
    while let Some(t) = stack.pop() {
        match t {
            Task::Line(i0, i1, j0, j1) => emit(i0, i1, j0, j1, &mut order),
            Task::Box(i0, i1, j0, j1) => {
                let (w, h) = (i1 - i0, j1 - j0);
                if w * h <= 48 || w < 3 || h < 3 {
                    emit(i0, i1, j0, j1, &mut order);
                } else if w >= h {
                    let s = i0 + w / 2;
                    // pushed in reverse: first half, second half, separator
                    stack.push(Task::Line(s, s + 1, j0, j1));
                    stack.push(Task::Box(s + 1, i1, j0, j1));
                    stack.push(Task::Box(i0, s, j0, j1));
                } else {
                    let s = j0 + h / 2;
                    stack.push(Task::Line(i0, i1, s, s + 1));
                    stack.push(Task::Box(i0, i1, s + 1, j1));
                    stack.push(Task::Box(i0, i1, j0, s));
                }
            }
        }
    }
    order
}

/// Sparse Cholesky solver for one grid; the symbolic factorisation (fill
/// reducing ordering and elimination tree) is shared by the dielectric and
/// the vacuum systems, which have the same pattern.
pub(crate) struct Solver<'g> {
    grid: &'g Grid,
    symbolic: SymbolicCholesky<usize>,
    col_ptr: Vec<usize>,
    row_idx: Vec<usize>,
    /// Factor values and workspaces, allocated once and reused by every
    /// factorisation on this pattern (dielectric members and vacuum).
    work: std::cell::RefCell<Work>,
}

struct Work {
    l_values: Vec<f64>,
    factor: MemBuffer,
    solve: MemBuffer,
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
        let forward = nested_dissection(grid);
        if forward.len() != n {
            return Err("internal error: ordering lost nodes".into());
        }
        let mut inverse = vec![0usize; n];
        for (new, &old) in forward.iter().enumerate() {
            inverse[old] = new;
        }
        let perm = PermRef::new_checked(&forward, &inverse, n);
        let symbolic = factorize_symbolic_cholesky(
            pattern.as_ref(),
            Side::Lower,
            SymmetricOrdering::Custom(perm),
            CholeskySymbolicParams {
                supernodal_flop_ratio_threshold: SupernodalThreshold::FORCE_SUPERNODAL,
                ..Default::default()
            },
        )
        .map_err(|e| format!("symbolic factorisation failed: {e:?}"))?;
        let oom = |_| "out of memory for the factorisation workspace".to_string();
        let factor = MemBuffer::try_new(
            symbolic.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()),
        )
        .map_err(oom)?;
        let solve =
            MemBuffer::try_new(symbolic.solve_in_place_scratch::<f64>(grid.n_cond, Par::Seq))
                .map_err(oom)?;
        let work = std::cell::RefCell::new(Work {
            l_values: vec![0.0; symbolic.len_val()],
            factor,
            solve,
        });
        Ok(Solver {
            grid,
            symbolic,
            col_ptr,
            row_idx,
            work,
        })
    }

    /// Maxwell capacitance matrix (row-major n_cond × n_cond) divided by ε0,
    /// with the cell permittivities `eps` (row-major, (nx-1)·(ny-1)) or in
    /// vacuum (`None`).
    pub fn capacitance(&self, eps: Option<&[f64]>) -> Result<Vec<f64>, String> {
        Ok(self.capacitance_filling(eps, None)?.0)
    }

    /// [`Self::capacitance`] and, when `regions` gives each cell's region
    /// and the number of regions, the derivative of the capacitance matrix
    /// with respect to each region's relative permittivity (÷ε0, one
    /// row-major n_cond × n_cond matrix per region).
    ///
    /// The discrete capacitance is the minimum of the energy form
    /// C_km = Σ_links a·Δφ_k·Δφ_m over the potentials that meet the
    /// conductor values, and each link coefficient a is a sum of cell
    /// terms ε_cell·w_cell. By the envelope theorem (the solution is
    /// stationary) ∂C_km/∂ε_r = Σ_links Σ_{cells of r} w_cell·Δφ_k·Δφ_m
    /// exactly, for the discrete system, with no extra solve. C is
    /// homogeneous of degree one in the permittivities, so
    /// Σ_r ε_r·∂C/∂ε_r = C (Euler), which the tests check.
    pub fn capacitance_filling(
        &self,
        eps: Option<&[f64]>,
        regions: Option<(&[u32], usize)>,
    ) -> Result<(Vec<f64>, Vec<Vec<f64>>), String> {
        let g = self.grid;
        let n = g.n_free;
        let nc = g.n_cond;
        let nx = g.nx();
        let nn = g.nodes.len();
        if eps.is_some_and(|e| e.len() != (nx - 1) * (g.ny() - 1))
            || regions.is_some_and(|(r, k)| {
                r.len() != (nx - 1) * (g.ny() - 1) || r.iter().any(|&v| v as usize >= k)
            })
        {
            return Err("internal error: permittivity map does not fit the mesh".into());
        }
        let (east, north) = g.links(eps);
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
        let sym = &self.symbolic;
        let mut work = self.work.borrow_mut();
        let Work {
            l_values,
            factor,
            solve,
        } = &mut *work;
        let llt = sym
            .factorize_numeric_llt::<f64>(
                l_values,
                a.as_ref(),
                Side::Lower,
                Default::default(),
                Par::Seq,
                MemStack::new(factor),
                Default::default(),
            )
            .map_err(|e| format!("Cholesky factorisation failed: {e:?}"))?;
        let mut phi = rhs;
        llt.solve_in_place_with_conj(Conj::No, phi.as_mut(), Par::Seq, MemStack::new(solve));
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
        let Some((region, n_regions)) = regions else {
            return Ok((c, Vec::new()));
        };
        // Energy of every link, split over the (up to two) cells whose
        // halves its dual face crosses.
        let potential = |q: usize, m: usize| -> f64 {
            match g.nodes[q] {
                Node::Free(iq) => phi[(iq, m)],
                Node::Fixed(k) => {
                    if k > 0 && k - 1 == m {
                        1.0
                    } else {
                        0.0
                    }
                }
            }
        };
        let mut fill = vec![vec![0.0; nc * nc]; n_regions];
        let mut dphi = vec![0.0; nc];
        g.for_each_link(|p, q, cells| {
            for (m, d) in dphi.iter_mut().enumerate() {
                *d = potential(q, m) - potential(p, m);
            }
            if dphi.iter().all(|d| *d == 0.0) {
                return;
            }
            for (cell, w) in cells {
                if w == 0.0 {
                    continue;
                }
                let f = &mut fill[region[cell] as usize];
                for k in 0..nc {
                    for m in 0..nc {
                        f[k * nc + m] += w * dphi[k] * dphi[m];
                    }
                }
            }
        });
        Ok((c, fill))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nested_dissection_is_a_permutation() {
        let (nx, ny) = (37, 23);
        let mut nodes = Vec::new();
        let mut n_free = 0;
        for j in 0..ny {
            for i in 0..nx {
                // boundary and a strip of fixed nodes, the rest free
                if i == 0
                    || j == 0
                    || i == nx - 1
                    || j == ny - 1
                    || (j == 11 && (10..20).contains(&i))
                {
                    nodes.push(Node::Fixed(0));
                } else {
                    nodes.push(Node::Free(n_free));
                    n_free += 1;
                }
            }
        }
        let grid = Grid {
            xs: (0..nx).map(|i| i as f64).collect(),
            ys: (0..ny).map(|j| j as f64).collect(),
            nodes,
            n_free,
            n_cond: 1,
        };
        let mut order = nested_dissection(&grid);
        assert_eq!(order.len(), n_free);
        order.sort_unstable();
        assert!(order.iter().enumerate().all(|(k, &v)| k == v));
    }
}
