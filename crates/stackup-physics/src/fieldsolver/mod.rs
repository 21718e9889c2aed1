//! 2-D quasi-static field solver for transmission-line cross-sections.
//!
//! Method (standard quasi-TEM analysis, e.g. C. R. Paul, *Analysis of
//! Multiconductor Transmission Lines*, 2nd ed., Wiley 2008, ch. 5; finite
//! differences/volumes as in M. N. O. Sadiku, *Numerical Techniques in
//! Electromagnetics*, ch. 3):
//!
//! 1. Laplace's equation ∇·(ε∇φ) = 0 is discretised by finite volumes on a
//!    non-uniform tensor mesh with lines on every dielectric interface and
//!    conductor edge, graded geometrically towards the conductor corners. The
//!    box walls (and the reference planes) are grounded; side walls and, for
//!    open (microstrip-like) sections, the lid are placed far away.
//! 2. Each conductor in turn is set to 1 V, the others to 0 V; the charge on
//!    every conductor is the sum of link fluxes around it. This gives the
//!    Maxwell capacitance matrix C with the dielectrics and C0 in vacuum.
//! 3. L = μ0ε0·C0⁻¹; the eigenvalues of L·C are 1/v², so the modal effective
//!    permittivities are the eigenvalues of C0⁻¹C. One conductor:
//!    Z0 = 1/(c0·√(C·C0)), εeff = C/C0. A pair: even/odd capacitances
//!    C11 ± C12 (C12 < 0) give Z_even, Z_odd, Z_diff = 2·Z_odd,
//!    Z_common = Z_even/2.
//! 4. The whole computation runs on two or three meshes of increasing
//!    density m (all cell sizes divided by m, the cells at the conductor
//!    edges by m², the grading ratio brought towards 1), so the error falls
//!    as O(1/m²) despite the edge singularities; the capacitances are then
//!    extrapolated (Richardson, order 2 assumed with two meshes, fitted with
//!    three). The spread of the extrapolation is returned as an error
//!    estimate.
//!
//! The scheme equals linear finite elements on the rectangles split into
//! triangles, so each mesh's capacitance is an upper bound (Dirichlet
//! principle) for the geometry as meshed; sloped trace sides (etch
//! trapezoids) are represented by staircases of mesh nodes.
//!
//! Measured accuracy with the default options (tests/checks/tline_fieldsolver.rs):
//! within 0.13 % of Cohn's exact stripline (W/b 0.1–3), 0.08 % of Cohn's
//! coupled stripline, 0.1 % of Hammerstad-Jensen microstrip (inside its
//! 0.2 % stated accuracy). `SolverOptions::accurate()` runs three finer
//! meshes with a fitted order for reference-grade values.
//!
//! The sparse symmetric positive-definite systems are solved by a sparse
//! Cholesky factorisation (faer), sequential and deterministic.

pub mod estimate;
mod fv;
mod mesh;

use crate::consts::{C0, EPS0};
use fv::{Grid, Node, Solver};
use mesh::{dedup_sorted, lines_with_counts, AxisSpec, LineError};
use std::fmt;

mod extrapolate;
mod geometry;
mod grid;
mod linalg;
mod synthesis;
mod wheeler;

use extrapolate::*;
use geometry::*;
pub use geometry::{
    CoplanarGrounds, CrossSection, DielectricBlock, DielectricLayer, Region, Trace,
};
use grid::*;
use linalg::*;
pub use synthesis::{coarse_mesh, secant_width, solve_coarse, width_for_target, CoarseMesh};
pub use wheeler::{
    inductance_derivatives, modal_resistance, resistance_matrix, InductanceDerivative, MetalFaces,
};

/// Solver settings. The defaults aim at about 0.3 % on Z0.
#[derive(Debug, Clone, PartialEq)]
pub struct SolverOptions {
    /// Scales the base mesh density (cells per feature); 1.0 default.
    pub density: f64,
    /// Growth ratio of successive cells away from conductor edges.
    pub growth: f64,
    /// Cell size at conductor edges as a fraction of the smallest feature
    /// (width, gap, thickness, clearance), at density 1.
    pub edge_cell: f64,
    /// Cells across each dielectric layer, at density 1.
    pub cells_per_layer: f64,
    /// Cells across the narrowest trace, at density 1.
    pub cells_per_width: f64,
    /// Mesh refinement levels m, ascending (all cell sizes divided by m,
    /// the edge cell by m²). One entry: no extrapolation; two: Richardson
    /// with order `assumed_order`; three: order fitted.
    pub refinements: Vec<f64>,
    /// Convergence order assumed with two refinement levels.
    pub assumed_order: f64,
    /// Side-wall distance beyond the outermost conductor, in units of the
    /// reference height, for sections closed by two planes.
    pub wall_factor_closed: f64,
    /// Side-wall and lid distance for open sections, in the same unit.
    pub wall_factor_open: f64,
    /// Solve mirror-symmetric sections (one trace centred on x = 0, or a
    /// pair placed symmetrically, with symmetric blocks) on the half
    /// x ≥ 0 only: a magnetic wall (zero normal field) on x = 0 for the
    /// even excitation and an electric wall (0 V) for the odd one. Exact
    /// by symmetry; about a third of the work for one trace.
    pub mirror: bool,
    /// Largest mesh (nodes of one grid) the solver builds; a section that
    /// would need more is refused with an error instead of taking minutes
    /// and gigabytes. Real sections need 10³ to 10⁴ nodes on the finest
    /// default level; the default 400 000 bounds a solve to about 0.3 GB
    /// and a few seconds.
    pub max_mesh_nodes: usize,
}

impl Default for SolverOptions {
    fn default() -> Self {
        SolverOptions {
            density: 0.6,
            growth: 1.7,
            edge_cell: 1.0 / 40.0,
            cells_per_layer: 8.0,
            cells_per_width: 6.0,
            refinements: vec![1.0, 2.0],
            assumed_order: 2.0,
            wall_factor_closed: 8.0,
            wall_factor_open: 40.0,
            mirror: true,
            max_mesh_nodes: 400_000,
        }
    }
}

impl SolverOptions {
    /// Reference-grade settings: three finer meshes (levels 1, 2, 3), the
    /// convergence order fitted; about 10–50× the cost of the default.
    pub fn accurate() -> Self {
        SolverOptions {
            density: 1.0,
            growth: 1.3,
            refinements: vec![1.0, 2.0, 3.0],
            ..SolverOptions::default()
        }
    }
}

/// Why a cross-section could not be solved.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveError {
    /// Human-readable reason.
    pub message: String,
    /// What kind of failure it is.
    pub kind: SolveErrorKind,
}

/// Why a section was not solved.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SolveErrorKind {
    /// The section itself is not valid (a bad dimension, a conductor
    /// outside its layers, members of a family that differ).
    Section,
    /// The mesh it needs passes `SolverOptions::max_mesh_nodes`.
    MeshBudget {
        /// Nodes of one grid the section needs (at least).
        needed: usize,
        /// The budget.
        limit: usize,
    },
    /// The numbers went wrong (a singular or non-finite result).
    Numerical,
}

impl SolveError {
    fn new(m: impl Into<String>) -> Self {
        SolveError {
            message: m.into(),
            kind: SolveErrorKind::Section,
        }
    }

    fn numerical(m: impl Into<String>) -> Self {
        SolveError {
            message: m.into(),
            kind: SolveErrorKind::Numerical,
        }
    }
}

impl fmt::Display for SolveError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for SolveError {}

/// Single-conductor result.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SingleEnded {
    /// Characteristic impedance, ohm.
    pub z0: f64,
    /// Effective permittivity.
    pub eps_eff: f64,
}

/// Two-conductor result: the even and odd modes (symmetrised matrices,
/// mean of the diagonal, exact for symmetric pairs).
pub use crate::coupled::ModalPair as Pair;

/// Full solver result.
#[derive(Debug, Clone, PartialEq)]
pub struct SolvedLine {
    /// Maxwell capacitance matrix with dielectrics, F/m, row-major n×n.
    pub capacitance: Vec<f64>,
    /// Maxwell capacitance matrix in vacuum, F/m, row-major n×n.
    pub capacitance_vacuum: Vec<f64>,
    /// Inductance matrix L = μ0ε0·C0⁻¹, H/m, row-major n×n.
    pub inductance: Vec<f64>,
    /// Number of signal conductors n.
    pub n: usize,
    /// Modal effective permittivities (eigenvalues of C0⁻¹C), ascending.
    pub modal_eps_eff: Vec<f64>,
    /// One conductor: Z0 and εeff.
    pub single: Option<SingleEnded>,
    /// Two conductors: even/odd results.
    pub pair: Option<Pair>,
    /// Derivative of the capacitance matrix with respect to each dielectric
    /// region's relative permittivity, F/m, one row-major n×n matrix per
    /// region in the order of [`CrossSection::region_layers`] (layers,
    /// blocks, then the air outside them). Σ_r ε_r·∂C/∂ε_r = C. Dividing
    /// a mode's entry by its vacuum capacitance gives the filling factor
    /// q_r = ∂εeff/∂ε_r that dielectric loss is weighted by. Computed for
    /// a single section and for the first member of a family; empty for
    /// the other members.
    pub filling: Vec<Vec<f64>>,
    /// Estimated relative error of the impedances.
    pub z_rel_error: f64,
    /// Estimated relative error of the effective permittivities.
    pub eps_rel_error: f64,
    /// Number of unknowns of the finest mesh.
    pub unknowns: usize,
}

impl SolvedLine {
    /// Share of each dielectric region in the electric energy of each
    /// mode, s_r = ε_r·(∂C_mode/∂ε_r)/C_mode (they sum to one): one list
    /// for a single conductor, `[even, odd]` for a pair; regions in the
    /// order of [`CrossSection::regions`] of the section `cs` this line
    /// was solved from. `None` without filling data or for a section
    /// that does not match.
    ///
    /// A mode's conductance per metre is G = ω·Σ_r tanδ_r·ε_r·∂C/∂ε_r
    /// (quasi-TEM perturbation: each region's loss weighted by the
    /// electric energy stored in it), so its effective loss tangent is
    /// Σ_r s_r·tanδ_r and α_d = π·f·√εeff·tanδ_eff/c0 (see
    /// [`crate::loss::dielectric_loss_of_mode`]).
    pub fn energy_shares(&self, cs: &CrossSection) -> Option<Vec<Vec<f64>>> {
        let eps = cs.region_eps();
        if self.filling.len() != eps.len() || self.n == 0 || self.n > 2 {
            return None;
        }
        let n = self.n;
        // The mode's capacitance from an n×n matrix.
        let modes = |m: &[f64]| -> Vec<f64> {
            if n == 1 {
                vec![m[0]]
            } else {
                let (s, c) = (0.5 * (m[0] + m[3]), 0.5 * (m[1] + m[2]));
                vec![s + c, s - c]
            }
        };
        let total = modes(&self.capacitance);
        let per_region: Vec<Vec<f64>> = self.filling.iter().map(|f| modes(f)).collect();
        let shares: Vec<Vec<f64>> = (0..total.len())
            .map(|k| {
                eps.iter()
                    .zip(&per_region)
                    .map(|(e, d)| e * d[k] / total[k])
                    .collect()
            })
            .collect();
        shares
            .iter()
            .flatten()
            .all(|v| v.is_finite())
            .then_some(shares)
    }
}

/// Vacuum-only result.
#[derive(Debug, Clone, PartialEq)]
pub struct VacuumCapacitance {
    /// Maxwell capacitance matrix in vacuum, F/m, row-major n×n.
    pub capacitance_vacuum: Vec<f64>,
    /// Inductance matrix L = μ0ε0·C0⁻¹, H/m, row-major n×n.
    pub inductance: Vec<f64>,
    /// Number of signal conductors.
    pub n: usize,
    /// Estimated relative error of the diagonal entries.
    pub rel_error: f64,
}

/// Solves a cross-section: capacitance matrices with dielectrics and in
/// vacuum, inductance matrix, modal effective permittivities, and Z0/εeff
/// (one conductor) or even/odd results (two conductors), each with a
/// relative error estimate from the nested-mesh extrapolation.
///
/// Never panics on bad geometry; returns [`SolveError`] instead.
pub fn solve(cs: &CrossSection, opt: &SolverOptions) -> Result<SolvedLine, SolveError> {
    let mut out = solve_family(std::slice::from_ref(cs), opt)?;
    out.pop()
        .ok_or_else(|| SolveError::new("internal error: no result"))
}

/// Solves several cross-sections that differ only in their dielectrics
/// (layers and blocks): the same conductors, planes, coplanar grounds and
/// stack height, as the smooth and the roughness-layer versions of one
/// line. One mesh carries every member's interfaces (the union of their
/// key lines), so the vacuum capacitance, the mesh and the symbolic
/// factorisation are computed once; each member costs one numeric
/// factorisation per level. Results are in the order of `members` and are
/// the same as [`solve`] on each member meshed with the union's lines.
///
/// Errors: an empty list, members that differ beyond their dielectrics,
/// or any error [`solve`] gives for a member.
pub fn solve_family(
    members: &[CrossSection],
    opt: &SolverOptions,
) -> Result<Vec<SolvedLine>, SolveError> {
    let p = prepare_family(members, opt)?;
    let n = members[0].conductors.len();
    let refs: Vec<&CrossSection> = members.iter().collect();
    let lv = run_levels(&p, &refs, opt, None)?;
    let (c0, c0e) = extrapolate(&opt.refinements, &lv.c0, opt.assumed_order, n);
    lv.c.iter()
        .zip(&lv.fill)
        .map(|(cm, fm)| {
            let (c, ce) = extrapolate(&opt.refinements, cm, opt.assumed_order, n);
            let regions = fm.first().map_or(0, Vec::len);
            let filling = (0..regions)
                .map(|r| {
                    let per_level: Vec<Vec<f64>> = fm.iter().map(|l| l[r].clone()).collect();
                    let (d, _) = extrapolate(&opt.refinements, &per_level, opt.assumed_order, n);
                    d.iter().map(|v| v * EPS0).collect()
                })
                .collect();
            let mut line = finish(c, c0.clone(), ce, c0e, n, lv.unknowns)?;
            line.filling = filling;
            Ok(line)
        })
        .collect()
}

/// The mesh description of a family: the first member's, with the key
/// lines and layer caps of every other member added.
fn prepare_family<'a>(
    members: &'a [CrossSection],
    opt: &SolverOptions,
) -> Result<Prepared<'a>, SolveError> {
    let first = members
        .first()
        .ok_or_else(|| SolveError::new("no cross-section to solve"))?;
    let mut p = prepare(first, opt)?;
    for m in &members[1..] {
        let q = prepare(m, opt)?;
        let same_box = [
            (p.xspec.lo, q.xspec.lo),
            (p.xspec.hi, q.xspec.hi),
            (p.yspec.lo, q.yspec.lo),
            (p.yspec.hi, q.yspec.hi),
        ]
        .iter()
        .all(|(a, b)| (a - b).abs() <= p.tol);
        if m.conductors != first.conductors
            || m.bottom_plane != first.bottom_plane
            || m.top_plane != first.top_plane
            || m.coplanar_grounds != first.coplanar_grounds
            || !same_box
        {
            return Err(SolveError::new(
                "the cross-sections of a family must differ only in their dielectrics",
            ));
        }
        for (ps, qs) in [(&mut p.xspec, q.xspec), (&mut p.yspec, q.yspec)] {
            ps.keys.extend(qs.keys);
            ps.caps.extend(qs.caps);
            ps.h_fine = ps.h_fine.min(qs.h_fine);
            ps.h_far = ps.h_far.min(qs.h_far);
        }
    }
    Ok(p)
}

fn finish(
    c: Vec<f64>,
    c0: Vec<f64>,
    ce: f64,
    c0e: f64,
    n: usize,
    unknowns: usize,
) -> Result<SolvedLine, SolveError> {
    let cf: Vec<f64> = c.iter().map(|v| v * EPS0).collect();
    let c0f: Vec<f64> = c0.iter().map(|v| v * EPS0).collect();
    let c0inv = inverse(&c0, n)
        .ok_or_else(|| SolveError::numerical("singular vacuum capacitance matrix"))?;
    let inductance: Vec<f64> = inverse(&c0f, n)
        .ok_or_else(|| SolveError::numerical("singular vacuum capacitance matrix"))?
        .iter()
        .map(|v| v / (C0 * C0))
        .collect();
    let modal_eps_eff = eigenvalues(&matmul(&c0inv, &c, n), n);
    let z = |cap: f64, cap0: f64| 1.0 / (C0 * EPS0 * (cap * cap0).sqrt());
    let single = (n == 1).then(|| SingleEnded {
        z0: z(c[0], c0[0]),
        eps_eff: c[0] / c0[0],
    });
    let pair = (n == 2).then(|| {
        let cs = 0.5 * (c[0] + c[3]);
        let c0s = 0.5 * (c0[0] + c0[3]);
        let cm = 0.5 * (c[1] + c[2]);
        let c0m = 0.5 * (c0[1] + c0[2]);
        let (ce_, co_) = (cs + cm, cs - cm);
        let (c0e_, c0o_) = (c0s + c0m, c0s - c0m);
        let z_even = z(ce_, c0e_);
        let z_odd = z(co_, c0o_);
        Pair {
            z_even,
            z_odd,
            eps_eff_even: ce_ / c0e_,
            eps_eff_odd: co_ / c0o_,
        }
    });
    let all_finite = cf.iter().chain(c0f.iter()).all(|v| v.is_finite())
        && modal_eps_eff.iter().all(|v| v.is_finite());
    if !all_finite {
        return Err(SolveError::numerical("solver produced non-finite values"));
    }
    Ok(SolvedLine {
        capacitance: cf,
        capacitance_vacuum: c0f,
        inductance,
        n,
        modal_eps_eff,
        single,
        pair,
        filling: Vec::new(),
        z_rel_error: 0.5 * (ce + c0e),
        eps_rel_error: ce + c0e,
        unknowns,
    })
}

/// Vacuum capacitance matrix only (one factorisation per mesh level): the
/// cheap path for inductance and incremental-inductance (receding metal
/// wall) computations. Dielectric layers and blocks are ignored.
pub fn solve_vacuum(
    cs: &CrossSection,
    opt: &SolverOptions,
) -> Result<VacuumCapacitance, SolveError> {
    let p = prepare(cs, opt)?;
    let lv = run_levels(&p, &[], opt, None)?;
    vacuum_result(&lv, opt, cs.conductors.len())
}

fn vacuum_result(
    lv: &Levels,
    opt: &SolverOptions,
    n: usize,
) -> Result<VacuumCapacitance, SolveError> {
    let (c0, err) = extrapolate(&opt.refinements, &lv.c0, opt.assumed_order, n);
    let c0f: Vec<f64> = c0.iter().map(|v| v * EPS0).collect();
    let inductance: Vec<f64> = inverse(&c0f, n)
        .ok_or_else(|| SolveError::numerical("singular vacuum capacitance matrix"))?
        .iter()
        .map(|v| v / (C0 * C0))
        .collect();
    if c0f.iter().chain(inductance.iter()).any(|v| !v.is_finite()) {
        return Err(SolveError::numerical("solver produced non-finite values"));
    }
    Ok(VacuumCapacitance {
        capacitance_vacuum: c0f,
        inductance,
        n,
        rel_error: err,
    })
}

/// Vacuum capacitance and inductance of two nearly identical
/// cross-sections, the second meshed with the first one's topology (same
/// number of cells between corresponding key lines, lines moving with the
/// geometry). Differences such as L(b) − L(a) then vary smoothly with the
/// geometry instead of jumping when a mesh count changes. This is the path
/// for H. A. Wheeler's incremental-inductance rule ("Formulas for the skin
/// effect", Proc. IRE 30, 1942), with `b` equal to `a` with every metal
/// surface receded by half a skin depth.
///
/// Errors if the two sections differ in conductor count or in the number
/// of key lines (topology), or for any geometry error of either.
pub fn solve_vacuum_pair(
    a: &CrossSection,
    b: &CrossSection,
    opt: &SolverOptions,
) -> Result<(VacuumCapacitance, VacuumCapacitance), SolveError> {
    if a.conductors.len() != b.conductors.len() {
        return Err(SolveError::new(
            "paired vacuum solve needs the same conductors in both sections",
        ));
    }
    let pa = prepare(a, opt)?;
    let pb = prepare(b, opt)?;
    let la = run_levels(&pa, &[], opt, None)?;
    let lb = run_levels(&pb, &[], opt, Some(&la.topology))?;
    let n = a.conductors.len();
    Ok((vacuum_result(&la, opt, n)?, vacuum_result(&lb, opt, n)?))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn richardson_recovers_known_order() {
        // v(h) = 1 + 0.3 h^1.7 with h = 1/m
        let ms = [1.0, 2.0, 3.0];
        let v: Vec<f64> = ms
            .iter()
            .map(|&m: &f64| 1.0 + 0.3 * (1.0 / m).powf(1.7))
            .collect();
        let (e, err) = richardson(&ms, &v, 2.0);
        assert!((e - 1.0).abs() < 1e-9, "{e}");
        // exact fit: only the 5 % floor of the applied correction remains
        assert!(err <= 0.05 * (v[2] - 1.0) + 1e-12, "{err}");
        // Two levels with the right assumed order are exact too.
        let v2: Vec<f64> = [1.0, 2.0]
            .iter()
            .map(|&m: &f64| 1.0 + 0.3 * (1.0 / m).powi(2))
            .collect();
        let (e2, err2) = richardson(&[1.0, 2.0], &v2, 2.0);
        assert!((e2 - 1.0).abs() < 1e-12, "{e2}");
        assert!(err2 > 0.0 && err2 < v2[1] - 1.0, "{err2}");
    }

    #[test]
    fn eigen_3x3() {
        let a = [2.0, 0.0, 0.0, 0.0, 3.0, 0.0, 0.0, 0.0, 5.0];
        let e = eigenvalues(&a, 3);
        assert!(
            (e[0] - 2.0).abs() < 1e-12 && (e[1] - 3.0).abs() < 1e-12 && (e[2] - 5.0).abs() < 1e-12
        );
        let inv = inverse(&a, 3).unwrap();
        assert!((inv[8] - 0.2).abs() < 1e-15);
    }
}
