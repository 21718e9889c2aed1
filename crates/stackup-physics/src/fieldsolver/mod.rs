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
//! Measured accuracy with the default options (tests/tline_fieldsolver.rs):
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
use mesh::{dedup_sorted, lines_with_counts, AxisSpec};
use std::fmt;

/// A dielectric layer of the stack, listed bottom to top.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DielectricLayer {
    /// Thickness, m.
    pub thickness: f64,
    /// Relative permittivity (Dk).
    pub eps_r: f64,
}

/// A trace of trapezoidal cross-section (etch profile). `thickness` may be 0
/// (infinitely thin strip; `width_top` is then ignored).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trace {
    /// Horizontal position of the trace centre, m.
    pub x_center: f64,
    /// Height of the trace's bottom face above the bottom plane, m.
    pub y_bottom: f64,
    /// Width of the bottom face, m.
    pub width_bottom: f64,
    /// Width of the top face, m.
    pub width_top: f64,
    /// Copper thickness, m.
    pub thickness: f64,
}

impl Trace {
    /// A rectangular trace.
    pub fn rect(x_center: f64, y_bottom: f64, width: f64, thickness: f64) -> Self {
        Trace {
            x_center,
            y_bottom,
            width_bottom: width,
            width_top: width,
            thickness,
        }
    }
    fn y_top(&self) -> f64 {
        self.y_bottom + self.thickness
    }
    fn half_width_at(&self, y: f64) -> f64 {
        if self.thickness <= 0.0 {
            return 0.5 * self.width_bottom;
        }
        let f = ((y - self.y_bottom) / self.thickness).clamp(0.0, 1.0);
        0.5 * (self.width_bottom + (self.width_top - self.width_bottom) * f)
    }
    fn x_min(&self) -> f64 {
        self.x_center - 0.5 * self.max_width()
    }
    fn x_max(&self) -> f64 {
        self.x_center + 0.5 * self.max_width()
    }
    fn max_width(&self) -> f64 {
        if self.thickness > 0.0 {
            self.width_bottom.max(self.width_top)
        } else {
            self.width_bottom
        }
    }
    fn min_width(&self) -> f64 {
        if self.thickness > 0.0 {
            self.width_bottom.min(self.width_top)
        } else {
            self.width_bottom
        }
    }
}

/// A dielectric rectangle painted over the layers (later blocks override
/// earlier ones): resin pockets, solder mask, thin roughness layers on a
/// trace face.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DielectricBlock {
    /// Left edge, m.
    pub x0: f64,
    /// Right edge, m.
    pub x1: f64,
    /// Bottom edge (from the bottom plane), m.
    pub y0: f64,
    /// Top edge, m.
    pub y1: f64,
    /// Relative permittivity.
    pub eps_r: f64,
}

/// Grounded coplanar strips on both sides of the signal conductors, at
/// `gap` from the outermost bottom edges of the traces.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoplanarGrounds {
    /// Edge-to-edge gap from the outermost trace (bottom face) to each ground, m.
    pub gap: f64,
    /// Width of each ground strip, m; `None` runs them to the side walls.
    pub width: Option<f64>,
    /// Bottom face of the grounds, m (usually the traces' y_bottom).
    pub y_bottom: f64,
    /// Ground copper thickness, m (0 allowed).
    pub thickness: f64,
}

/// Cross-section of one to three signal conductors in a layered dielectric.
/// y is measured upwards from the bottom plane (or from the bottom of the
/// first layer when there is no bottom plane).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CrossSection {
    /// Dielectric layers, bottom to top.
    pub layers: Vec<DielectricLayer>,
    /// Ground plane under the first layer.
    pub bottom_plane: bool,
    /// Ground plane on the last layer; `false` means open air above.
    pub top_plane: bool,
    /// Signal conductors (1 to 3).
    pub conductors: Vec<Trace>,
    /// Dielectric rectangles painted over the layers, in order.
    pub blocks: Vec<DielectricBlock>,
    /// Optional coplanar grounds.
    pub coplanar_grounds: Option<CoplanarGrounds>,
}

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
}

impl SolveError {
    fn new(m: impl Into<String>) -> Self {
        SolveError { message: m.into() }
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

/// Two-conductor result. Even/odd values use the symmetrised matrices
/// (mean of the diagonal), exact for symmetric pairs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pair {
    /// Even-mode impedance, ohm.
    pub z_even: f64,
    /// Odd-mode impedance, ohm.
    pub z_odd: f64,
    /// Differential impedance 2·Z_odd, ohm.
    pub z_diff: f64,
    /// Common-mode impedance Z_even/2, ohm.
    pub z_common: f64,
    /// Even-mode effective permittivity.
    pub eps_eff_even: f64,
    /// Odd-mode effective permittivity.
    pub eps_eff_odd: f64,
}

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
    /// Estimated relative error of the impedances.
    pub z_rel_error: f64,
    /// Estimated relative error of the effective permittivities.
    pub eps_rel_error: f64,
    /// Number of unknowns of the finest mesh.
    pub unknowns: usize,
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

fn finite_pos(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(SolveError::new(format!(
            "{name} must be finite and > 0, got {v}"
        )))
    }
}

fn finite_nonneg(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() && v >= 0.0 {
        Ok(())
    } else {
        Err(SolveError::new(format!(
            "{name} must be finite and >= 0, got {v}"
        )))
    }
}

fn finite(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(SolveError::new(format!("{name} must be finite, got {v}")))
    }
}

fn eps_ok(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() && v >= 1.0 {
        Ok(())
    } else {
        Err(SolveError::new(format!(
            "{name} must be finite and >= 1, got {v}"
        )))
    }
}

/// Checked geometry with the derived box.
struct Prepared<'a> {
    cs: &'a CrossSection,
    /// Mesh the half x ≥ 0 only (see `SolverOptions::mirror`).
    mirror: bool,
    grounds: Vec<Trace>,
    /// Tolerance for coordinate comparisons.
    tol: f64,
    xspec: AxisSpec,
    yspec: AxisSpec,
}

fn validate(cs: &CrossSection) -> Result<f64, SolveError> {
    if cs.layers.is_empty() {
        return Err(SolveError::new("cross-section has no dielectric layers"));
    }
    for (i, l) in cs.layers.iter().enumerate() {
        finite_pos(&format!("layer {i} thickness"), l.thickness)?;
        eps_ok(&format!("layer {i} eps_r"), l.eps_r)?;
    }
    if !cs.bottom_plane && !cs.top_plane {
        return Err(SolveError::new(
            "cross-section needs at least one reference plane (bottom or top)",
        ));
    }
    if cs.conductors.is_empty() || cs.conductors.len() > 3 {
        return Err(SolveError::new(format!(
            "the solver takes 1 to 3 signal conductors, got {}",
            cs.conductors.len()
        )));
    }
    let stack_h: f64 = cs.layers.iter().map(|l| l.thickness).sum();
    for (i, t) in cs.conductors.iter().enumerate() {
        finite(&format!("trace {i} x_center"), t.x_center)?;
        finite(&format!("trace {i} y_bottom"), t.y_bottom)?;
        finite_pos(&format!("trace {i} width_bottom"), t.width_bottom)?;
        finite_nonneg(&format!("trace {i} thickness"), t.thickness)?;
        if t.thickness > 0.0 {
            finite_pos(&format!("trace {i} width_top"), t.width_top)?;
        }
        check_vertical(&format!("trace {i}"), t, cs, stack_h)?;
    }
    for (i, b) in cs.blocks.iter().enumerate() {
        for (n, v) in [("x0", b.x0), ("x1", b.x1), ("y0", b.y0), ("y1", b.y1)] {
            finite(&format!("block {i} {n}"), v)?;
        }
        eps_ok(&format!("block {i} eps_r"), b.eps_r)?;
        if !(b.x1 > b.x0 && b.y1 > b.y0) {
            return Err(SolveError::new(format!(
                "block {i} must have x1 > x0 and y1 > y0"
            )));
        }
    }
    if let Some(g) = &cs.coplanar_grounds {
        finite_pos("coplanar ground gap", g.gap)?;
        if let Some(w) = g.width {
            finite_pos("coplanar ground width", w)?;
        }
        finite_nonneg("coplanar ground thickness", g.thickness)?;
        finite("coplanar ground y_bottom", g.y_bottom)?;
        let probe = Trace::rect(0.0, g.y_bottom, 1.0, g.thickness);
        check_vertical("coplanar grounds", &probe, cs, stack_h)?;
    }
    // Overlap between signal conductors.
    let n = cs.conductors.len();
    for i in 0..n {
        for j in i + 1..n {
            let (a, b) = (&cs.conductors[i], &cs.conductors[j]);
            let y_overlap = a.y_bottom <= b.y_top() && b.y_bottom <= a.y_top();
            let x_overlap = a.x_min() <= b.x_max() && b.x_min() <= a.x_max();
            if x_overlap && y_overlap {
                return Err(SolveError::new(format!(
                    "traces {i} and {j} touch or overlap"
                )));
            }
        }
    }
    Ok(stack_h)
}

fn check_vertical(
    what: &str,
    t: &Trace,
    cs: &CrossSection,
    stack_h: f64,
) -> Result<(), SolveError> {
    if cs.bottom_plane && t.y_bottom <= 0.0 {
        return Err(SolveError::new(format!(
            "{what} must lie above the bottom plane (y_bottom = {} m)",
            t.y_bottom
        )));
    }
    if cs.top_plane && t.y_top() >= stack_h {
        return Err(SolveError::new(format!(
            "{what} must lie below the top plane at {stack_h} m (top face at {} m)",
            t.y_top()
        )));
    }
    if !cs.bottom_plane && t.y_bottom < 0.0 {
        return Err(SolveError::new(format!(
            "{what} lies below the first layer (y_bottom = {} m)",
            t.y_bottom
        )));
    }
    if !cs.top_plane && t.y_bottom > stack_h * 1.0001 + 1e-12 {
        return Err(SolveError::new(format!(
            "{what} floats above the stack (y_bottom = {} m > {stack_h} m)",
            t.y_bottom
        )));
    }
    Ok(())
}

fn prepare<'a>(cs: &'a CrossSection, opt: &SolverOptions) -> Result<Prepared<'a>, SolveError> {
    let stack_h = validate(cs)?;
    finite_pos("options density", opt.density)?;
    finite_pos("options edge_cell", opt.edge_cell)?;
    finite_pos("options cells_per_layer", opt.cells_per_layer)?;
    finite_pos("options cells_per_width", opt.cells_per_width)?;
    if !(opt.growth.is_finite() && opt.growth > 1.0 && opt.growth <= 3.0) {
        return Err(SolveError::new("options growth must be in (1, 3]"));
    }
    if opt.refinements.is_empty()
        || opt.refinements.len() > 3
        || opt.refinements.windows(2).any(|w| w[1] <= w[0])
        || opt.refinements.iter().any(|&m| !(1.0..=16.0).contains(&m))
    {
        return Err(SolveError::new(
            "options refinements must be 1 to 3 ascending factors in 1..=16",
        ));
    }
    finite_pos("options wall_factor_closed", opt.wall_factor_closed)?;
    finite_pos("options wall_factor_open", opt.wall_factor_open)?;

    let conds = &cs.conductors;
    let c_lo = conds
        .iter()
        .map(|t| t.x_min())
        .fold(f64::INFINITY, f64::min);
    let c_hi = conds
        .iter()
        .map(|t| t.x_max())
        .fold(f64::NEG_INFINITY, f64::max);
    let c_top = conds
        .iter()
        .map(|t| t.y_top())
        .fold(f64::NEG_INFINITY, f64::max);
    let min_w = conds
        .iter()
        .map(|t| t.min_width())
        .fold(f64::INFINITY, f64::min);
    // Reference height: the stack, or the span of the conductors if wider.
    let closed = cs.bottom_plane && cs.top_plane;
    let h_ref = stack_h.max(if closed { 0.0 } else { c_hi - c_lo });
    let wall = h_ref
        * if closed {
            opt.wall_factor_closed
        } else {
            opt.wall_factor_open
        };

    // Coplanar grounds become fixed-potential traces.
    let mut grounds = Vec::new();
    let mut span_lo = c_lo;
    let mut span_hi = c_hi;
    let bottom_lo = conds
        .iter()
        .map(|t| t.x_center - 0.5 * t.width_bottom)
        .fold(f64::INFINITY, f64::min);
    let bottom_hi = conds
        .iter()
        .map(|t| t.x_center + 0.5 * t.width_bottom)
        .fold(f64::NEG_INFINITY, f64::max);
    let mut x_lo = span_lo - wall;
    let mut x_hi = span_hi + wall;
    if let Some(g) = &cs.coplanar_grounds {
        let gl_in = bottom_lo - g.gap;
        let gr_in = bottom_hi + g.gap;
        if gl_in >= c_lo || gr_in <= c_hi {
            return Err(SolveError::new(
                "coplanar grounds overlap the traces (gap smaller than the etch overhang)",
            ));
        }
        let width = match g.width {
            Some(w) => w,
            None => {
                // run to the walls: walls measured from the ground edges
                span_lo = gl_in;
                span_hi = gr_in;
                x_lo = span_lo - wall;
                x_hi = span_hi + wall;
                wall + 1.0
            }
        };
        let wl = width.min(gl_in - x_lo + wall);
        grounds.push(Trace::rect(gl_in - 0.5 * wl, g.y_bottom, wl, g.thickness));
        grounds.push(Trace::rect(gr_in + 0.5 * wl, g.y_bottom, wl, g.thickness));
        if g.width.is_some() {
            span_lo = gl_in - width;
            span_hi = gr_in + width;
            x_lo = span_lo - wall;
            x_hi = span_hi + wall;
        }
        // check vertical overlap is harmless: grounds are beside the traces
    }
    let y_lo = if cs.bottom_plane { 0.0 } else { -wall };
    let y_hi = if cs.top_plane {
        stack_h
    } else {
        stack_h.max(c_top) + wall
    };
    let tol = 1e-9 * (x_hi - x_lo).max(y_hi - y_lo);

    // Feature sizes near the conductors.
    // The copper thickness is not a feature here: the r^(2/3) corner
    // singularity of thick copper needs less grading than the thin-edge one,
    // and every interval (the copper thickness included) gets at least two
    // cells.
    let mut feat = min_w;
    let mut sorted: Vec<&Trace> = conds.iter().collect();
    sorted.sort_by(|a, b| a.x_center.total_cmp(&b.x_center));
    for w in sorted.windows(2) {
        let gap = w[1].x_min() - w[0].x_max();
        if gap > 0.0 {
            feat = feat.min(gap);
        }
    }
    if let Some(g) = &cs.coplanar_grounds {
        feat = feat.min(g.gap);
    }
    // vertical clearance of each conductor to planes/other conductors
    let mut min_layer = cs
        .layers
        .iter()
        .map(|l| l.thickness)
        .fold(f64::INFINITY, f64::min);
    for t in conds {
        if cs.bottom_plane {
            feat = feat.min(t.y_bottom);
        }
        if cs.top_plane {
            feat = feat.min(stack_h - t.y_top());
        }
    }
    min_layer = min_layer.min(stack_h);

    let d = opt.density;
    let h_fine = feat * opt.edge_cell / d;

    // y axis keys
    let mut ykeys = vec![0.0, stack_h];
    let mut acc = 0.0;
    for l in &cs.layers {
        acc += l.thickness;
        ykeys.push(acc);
    }
    let mut ysing = Vec::new();
    for t in conds.iter().chain(grounds.iter()) {
        ykeys.push(t.y_bottom);
        ykeys.push(t.y_top());
        ysing.push(t.y_bottom);
        ysing.push(t.y_top());
    }
    for b in &cs.blocks {
        ykeys.push(b.y0.clamp(y_lo, y_hi));
        ykeys.push(b.y1.clamp(y_lo, y_hi));
    }
    // x axis keys
    let mut xkeys = Vec::new();
    let mut xsing = Vec::new();
    for t in conds.iter().chain(grounds.iter()) {
        for x in [
            t.x_center - 0.5 * t.width_bottom,
            t.x_center + 0.5 * t.width_bottom,
        ] {
            xkeys.push(x);
            xsing.push(x);
        }
        if t.thickness > 0.0 {
            for x in [
                t.x_center - 0.5 * t.width_top,
                t.x_center + 0.5 * t.width_top,
            ] {
                xkeys.push(x);
                xsing.push(x);
            }
        }
    }
    for b in &cs.blocks {
        xkeys.push(b.x0.clamp(x_lo, x_hi));
        xkeys.push(b.x1.clamp(x_lo, x_hi));
    }
    // Caps: inside each layer at least ~6·d cells across its thickness;
    // around the conductors cells no larger than the smallest width / 4.
    let mut ycaps = Vec::new();
    let mut acc = 0.0;
    for l in &cs.layers {
        ycaps.push((
            acc,
            acc + l.thickness,
            l.thickness / (opt.cells_per_layer * d),
        ));
        acc += l.thickness;
    }
    let near = (c_hi - c_lo).max(min_layer);
    let xcaps = vec![(
        span_lo,
        span_hi,
        (min_w / (opt.cells_per_width * d)).max(h_fine),
    )];
    let yspec = AxisSpec {
        lo: y_lo,
        hi: y_hi,
        keys: ykeys,
        singular: ysing,
        h_fine,
        growth: opt.growth,
        caps: ycaps,
        h_far: f64::INFINITY,
        min_cells: 2,
        max_lines: opt.max_mesh_nodes / 3,
    };
    let xspec = AxisSpec {
        lo: x_lo,
        hi: x_hi,
        keys: xkeys,
        singular: xsing,
        h_fine,
        growth: opt.growth,
        caps: xcaps,
        h_far: (near / (2.0 * d)).max(h_fine) * 1e3,
        min_cells: 2,
        max_lines: opt.max_mesh_nodes / 3,
    };
    let mirror = opt.mirror && mirror_symmetric(cs, tol);
    let mut xspec = xspec;
    if mirror {
        xspec.lo = 0.0;
        xspec.keys.retain(|&x| x >= -tol);
        xspec.keys.push(0.0);
        xspec.singular.retain(|&x| x >= -tol);
    }
    Ok(Prepared {
        cs,
        mirror,
        grounds,
        tol,
        xspec,
        yspec,
    })
}

/// Whether `cs` is its own mirror image in x = 0 with every trace either
/// centred on it (one trace) or clear of it (a pair): conductors, blocks
/// (and so the coplanar grounds, placed from the traces' edges).
fn mirror_symmetric(cs: &CrossSection, tol: f64) -> bool {
    let close = |a: f64, b: f64| (a - b).abs() <= tol;
    let conductors = match cs.conductors.as_slice() {
        [a] => close(a.x_center, 0.0),
        [a, b] => {
            close(a.x_center, -b.x_center)
                && a.y_bottom == b.y_bottom
                && a.width_bottom == b.width_bottom
                && a.width_top == b.width_top
                && a.thickness == b.thickness
                && b.x_min() > tol
        }
        _ => false,
    };
    conductors
        && cs.blocks.iter().all(|b| {
            cs.blocks.iter().any(|c| {
                close(b.x0, -c.x1)
                    && close(b.x1, -c.x0)
                    && b.y0 == c.y0
                    && b.y1 == c.y1
                    && b.eps_r == c.eps_r
            })
        })
}

fn inside(t: &Trace, x: f64, y: f64, tol: f64) -> bool {
    if y < t.y_bottom - tol || y > t.y_top() + tol {
        return false;
    }
    (x - t.x_center).abs() <= t.half_width_at(y) + tol
}

/// Relative permittivity of every cell (row-major, (nx-1)·(ny-1)) of the
/// mesh `xs` × `ys` for the layers and blocks of `cs`.
fn cell_eps(cs: &CrossSection, xs: &[f64], ys: &[f64]) -> Vec<f64> {
    let (nx, ny) = (xs.len(), ys.len());
    let mut eps = vec![1.0; (nx - 1) * (ny - 1)];
    let mut bounds = Vec::with_capacity(cs.layers.len());
    let mut acc = 0.0;
    for l in &cs.layers {
        bounds.push((acc, acc + l.thickness, l.eps_r));
        acc += l.thickness;
    }
    for j in 0..ny - 1 {
        let yc = 0.5 * (ys[j] + ys[j + 1]);
        let layer_eps = bounds
            .iter()
            .find(|(a, b, _)| yc >= *a && yc < *b)
            .map(|l| l.2)
            .unwrap_or(1.0);
        for i in 0..nx - 1 {
            let xc = 0.5 * (xs[i] + xs[i + 1]);
            let mut e = layer_eps;
            for b in &cs.blocks {
                if xc >= b.x0 && xc <= b.x1 && yc >= b.y0 && yc <= b.y1 {
                    e = b.eps_r;
                }
            }
            eps[j * (nx - 1) + i] = e;
        }
    }
    eps
}

/// The mesh `xs` × `ys` with every node marked free or fixed (box walls,
/// planes, grounds, conductors) for the conductors of `p`. For a mirrored
/// section only the traces reaching into x ≥ 0 are placed, and the nodes on
/// x = 0 are grounded (`electric_wall`, odd excitation) or free (even).
fn build_grid(
    p: &Prepared,
    xs: Vec<f64>,
    ys: Vec<f64>,
    electric_wall: bool,
) -> Result<Grid, SolveError> {
    let (nx, ny) = (xs.len(), ys.len());
    if nx < 3 || ny < 3 {
        return Err(SolveError::new("mesh too small"));
    }
    let conductors: Vec<&Trace> =
        p.cs.conductors
            .iter()
            .filter(|t| !p.mirror || t.x_max() > 0.0)
            .collect();
    // node kinds
    let mut nodes = vec![Node::Free(0); nx * ny];
    let mut n_free = 0;
    let mut count = vec![0usize; conductors.len()];
    for j in 0..ny {
        for i in 0..nx {
            let (x, y) = (xs[i], ys[j]);
            let wall_left = i == 0 && (!p.mirror || electric_wall);
            let boundary = wall_left || j == 0 || i == nx - 1 || j == ny - 1;
            let mut kind = None;
            if boundary {
                kind = Some(0);
            }
            for (k, t) in conductors.iter().enumerate() {
                if inside(t, x, y, p.tol) {
                    if boundary {
                        return Err(SolveError::new(format!(
                            "trace {k} touches the enclosing box"
                        )));
                    }
                    kind = Some(k + 1);
                    count[k] += 1;
                }
            }
            if kind.is_none() && p.grounds.iter().any(|g| inside(g, x, y, p.tol)) {
                kind = Some(0);
            }
            nodes[j * nx + i] = match kind {
                Some(k) => Node::Fixed(k),
                None => {
                    n_free += 1;
                    Node::Free(n_free - 1)
                }
            };
        }
    }
    if let Some(k) = count.iter().position(|&c| c == 0) {
        return Err(SolveError::new(format!(
            "trace {k} falls between mesh nodes"
        )));
    }
    Ok(Grid {
        xs,
        ys,
        nodes,
        n_free,
        n_cond: conductors.len(),
    })
}

/// Richardson extrapolation of values computed with refinement factors
/// `ms`; returns (extrapolated, error estimate, order used).
fn richardson(ms: &[f64], v: &[f64], assumed_p: f64) -> (f64, f64) {
    match v.len() {
        1 => (v[0], f64::NAN),
        2 => {
            let r = ms[1] / ms[0];
            let corr = (v[1] - v[0]) / (r.powf(assumed_p) - 1.0);
            // error: the spread between orders 1 and 2 around the assumption
            // error: half the spread of the extrapolation for orders
            // assumed_p ± 0.5 (observed orders on graded meshes lie within)
            let c1 = (v[1] - v[0]) / (r.powf(assumed_p - 0.5) - 1.0);
            let c2 = (v[1] - v[0]) / (r.powf(assumed_p + 0.5) - 1.0);
            (v[1] + corr, (c1 - c2).abs() * 0.5)
        }
        _ => {
            let (m0, m1, m2) = (ms[0], ms[1], ms[2]);
            let d01 = v[0] - v[1];
            let d12 = v[1] - v[2];
            // fit p: d01/d12 = (m0^-p − m1^-p)/(m1^-p − m2^-p)
            let ratio = |p: f64| (m0.powf(-p) - m1.powf(-p)) / (m1.powf(-p) - m2.powf(-p));
            let p = if d12 != 0.0 && d01 / d12 > 0.0 {
                let target = d01 / d12;
                let (mut lo, mut hi) = (0.5f64, 4.0f64);
                if target <= ratio(lo) {
                    lo
                } else if target >= ratio(hi) {
                    hi
                } else {
                    for _ in 0..60 {
                        let mid = 0.5 * (lo + hi);
                        if ratio(mid) < target {
                            lo = mid;
                        } else {
                            hi = mid;
                        }
                    }
                    0.5 * (lo + hi)
                }
            } else {
                assumed_p
            };
            let r = m2 / m1;
            let ext = v[2] + (v[2] - v[1]) / (r.powf(p) - 1.0);
            let r0 = m1 / m0;
            let ext01 = v[1] + (v[1] - v[0]) / (r0.powf(p) - 1.0);
            let err = (ext - ext01).abs() + 0.05 * (ext - v[2]).abs();
            (ext, err)
        }
    }
}

/// Mesh lines of one axis at refinement level `m`: every size in the
/// specification divided by m, the cell at the singular edges by m², and
/// the grading ratio brought towards 1 as 1 + (g − 1)/m. The edge region
/// then contributes O(1/m²) like the rest, so the capacitance converges at
/// second order and the two-level extrapolation can assume p = 2.
fn level_lines(
    spec: &AxisSpec,
    m: f64,
    tol: f64,
    counts: Option<&[usize]>,
) -> Result<(Vec<f64>, Vec<usize>), SolveError> {
    let mut s = spec.clone();
    s.h_fine = spec.h_fine / (m * m);
    s.growth = 1.0 + (spec.growth - 1.0) / m;
    s.caps = spec.caps.iter().map(|&(a, b, h)| (a, b, h / m)).collect();
    s.h_far = spec.h_far / m;
    let (lines, used) = lines_with_counts(&s, tol, counts).map_err(SolveError::new)?;
    let n = lines.len();
    let lines = dedup_sorted(lines, tol);
    if lines.len() != n {
        return Err(SolveError::new("degenerate mesh: coincident lines"));
    }
    Ok((lines, used))
}

/// The error for a section whose mesh would pass `max_mesh_nodes`.
fn too_large(nodes: usize, opt: &SolverOptions) -> SolveError {
    SolveError::new(format!(
        "the section needs a mesh of more than {nodes} nodes, beyond the solver's limit of {}: its features span too wide a range of sizes",
        opt.max_mesh_nodes
    ))
}

/// Cells per key interval (x, y) at every level.
type Topology = Vec<(Vec<usize>, Vec<usize>)>;

/// Per-level capacitance matrices (÷ε0): with the dielectrics of each
/// member section (`c[member][level]`) and in vacuum (`c0[level]`), the
/// unknowns of the finest mesh, and the mesh topology used.
struct Levels {
    c: Vec<Vec<Vec<f64>>>,
    c0: Vec<Vec<f64>>,
    unknowns: usize,
    topology: Topology,
}

/// Runs every refinement level of `p`'s mesh: one vacuum solve and one
/// solve per entry of `members` (sections sharing `p`'s conductors, whose
/// dielectrics are painted on the same mesh), all on one symbolic
/// factorisation per level (two for a mirrored pair: even and odd).
fn run_levels(
    p: &Prepared,
    members: &[&CrossSection],
    opt: &SolverOptions,
    topology: Option<&Topology>,
) -> Result<Levels, SolveError> {
    let mut out = Levels {
        c: vec![Vec::new(); members.len()],
        c0: Vec::new(),
        unknowns: 0,
        topology: Vec::new(),
    };
    let n = p.cs.conductors.len();
    for (l, &m) in opt.refinements.iter().enumerate() {
        let (cx, cy) = match topology.and_then(|t| t.get(l)) {
            Some((cx, cy)) => (Some(cx.as_slice()), Some(cy.as_slice())),
            None => (None, None),
        };
        let (xs, ux) = level_lines(&p.xspec, m, p.tol, cx)?;
        let (ys, uy) = level_lines(&p.yspec, m, p.tol, cy)?;
        if xs.len().saturating_mul(ys.len()) > opt.max_mesh_nodes {
            return Err(too_large(xs.len().saturating_mul(ys.len()), opt));
        }
        out.topology.push((ux, uy));
        // Excitations: the whole section, or the even (magnetic wall) and,
        // for a pair, odd (electric wall) halves.
        let walls: &[bool] = match (p.mirror, n) {
            (false, _) => &[false],
            (true, 1) => &[false],
            _ => &[false, true],
        };
        let mut per_wall: Vec<(Vec<Vec<f64>>, Vec<f64>)> = Vec::new();
        out.unknowns = 0;
        for &electric in walls {
            let grid = build_grid(p, xs.clone(), ys.clone(), electric)?;
            out.unknowns += grid.n_free;
            let solver = Solver::new(&grid).map_err(SolveError::new)?;
            let mut cm = Vec::with_capacity(members.len());
            for cs in members {
                let eps = cell_eps(cs, &grid.xs, &grid.ys);
                cm.push(solver.capacitance(Some(&eps)).map_err(SolveError::new)?);
            }
            let c0 = solver.capacitance(None).map_err(SolveError::new)?;
            per_wall.push((cm, c0));
        }
        // Back to the whole section's Maxwell matrix.
        let whole = |k: Option<usize>| -> Vec<f64> {
            let q = |w: usize| match k {
                Some(k) => per_wall[w].0[k][0],
                None => per_wall[w].1[0],
            };
            match (p.mirror, n) {
                (false, _) => match k {
                    Some(k) => per_wall[0].0[k].clone(),
                    None => per_wall[0].1.clone(),
                },
                // the half carries half the trace's charge
                (true, 1) => vec![2.0 * q(0)],
                // even: C11 + C12, odd: C11 − C12
                _ => {
                    let (e, o) = (q(0), q(1));
                    let (cs, cm) = (0.5 * (e + o), 0.5 * (e - o));
                    vec![cs, cm, cm, cs]
                }
            }
        };
        for k in 0..members.len() {
            out.c[k].push(whole(Some(k)));
        }
        out.c0.push(whole(None));
    }
    Ok(out)
}

/// Extrapolates each entry of a list of per-level matrices.
fn extrapolate(ms: &[f64], mats: &[Vec<f64>], assumed_p: f64, n: usize) -> (Vec<f64>, f64) {
    let mut out = vec![0.0; n * n];
    let mut rel_err: f64 = 0.0;
    for k in 0..n * n {
        let v: Vec<f64> = mats.iter().map(|m| m[k]).collect();
        let (e, err) = richardson(ms, &v, assumed_p);
        out[k] = e;
        if k % (n + 1) == 0 {
            rel_err = rel_err.max(err / e.abs());
        }
    }
    (out, rel_err)
}

fn inverse(a: &[f64], n: usize) -> Option<Vec<f64>> {
    match n {
        1 => (a[0] != 0.0).then(|| vec![1.0 / a[0]]),
        _ => {
            // Gauss-Jordan with partial pivoting (n ≤ 3)
            let mut m = a.to_vec();
            let mut inv = vec![0.0; n * n];
            for i in 0..n {
                inv[i * n + i] = 1.0;
            }
            for col in 0..n {
                let piv = (col..n)
                    .max_by(|&r1, &r2| m[r1 * n + col].abs().total_cmp(&m[r2 * n + col].abs()))?;
                if m[piv * n + col] == 0.0 {
                    return None;
                }
                for c in 0..n {
                    m.swap(col * n + c, piv * n + c);
                    inv.swap(col * n + c, piv * n + c);
                }
                let d = m[col * n + col];
                for c in 0..n {
                    m[col * n + c] /= d;
                    inv[col * n + c] /= d;
                }
                for r in 0..n {
                    if r != col {
                        let f = m[r * n + col];
                        for c in 0..n {
                            m[r * n + c] -= f * m[col * n + c];
                            inv[r * n + c] -= f * inv[col * n + c];
                        }
                    }
                }
            }
            Some(inv)
        }
    }
}

/// Eigenvalues of a real n×n matrix (n ≤ 3) known to have real positive
/// eigenvalues (C0⁻¹C is similar to a symmetric positive-definite matrix).
fn eigenvalues(a: &[f64], n: usize) -> Vec<f64> {
    match n {
        1 => vec![a[0]],
        2 => {
            let tr = a[0] + a[3];
            let det = a[0] * a[3] - a[1] * a[2];
            let disc = (0.25 * tr * tr - det).max(0.0).sqrt();
            vec![0.5 * tr - disc, 0.5 * tr + disc]
        }
        _ => {
            // characteristic polynomial λ³ − c2 λ² + c1 λ − c0, trigonometric roots
            let tr = a[0] + a[4] + a[8];
            let c1 =
                a[0] * a[4] - a[1] * a[3] + a[0] * a[8] - a[2] * a[6] + a[4] * a[8] - a[5] * a[7];
            let det = a[0] * (a[4] * a[8] - a[5] * a[7]) - a[1] * (a[3] * a[8] - a[5] * a[6])
                + a[2] * (a[3] * a[7] - a[4] * a[6]);
            let q = tr / 3.0;
            let pp = (tr * tr - 3.0 * c1) / 9.0;
            let r = (2.0 * tr.powi(3) - 9.0 * tr * c1 + 27.0 * det) / 54.0;
            let pp = pp.max(0.0);
            let s = pp.sqrt();
            let mut ev = if s == 0.0 {
                vec![q; 3]
            } else {
                let cosv = (r / (s * s * s)).clamp(-1.0, 1.0);
                let th = cosv.acos();
                (0..3)
                    .map(|k| {
                        q + 2.0 * s * ((th + 2.0 * std::f64::consts::PI * k as f64) / 3.0).cos()
                    })
                    .collect()
            };
            // roots of λ³ − tr λ² + c1 λ − det with the substitution above
            ev.sort_by(f64::total_cmp);
            ev
        }
    }
}

fn matmul(a: &[f64], b: &[f64], n: usize) -> Vec<f64> {
    let mut c = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..n {
            for k in 0..n {
                c[i * n + j] += a[i * n + k] * b[k * n + j];
            }
        }
    }
    c
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
        .map(|cm| {
            let (c, ce) = extrapolate(&opt.refinements, cm, opt.assumed_order, n);
            finish(c, c0.clone(), ce, c0e, n, lv.unknowns)
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
    let c0inv =
        inverse(&c0, n).ok_or_else(|| SolveError::new("singular vacuum capacitance matrix"))?;
    let inductance: Vec<f64> = inverse(&c0f, n)
        .ok_or_else(|| SolveError::new("singular vacuum capacitance matrix"))?
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
            z_diff: 2.0 * z_odd,
            z_common: 0.5 * z_even,
            eps_eff_even: ce_ / c0e_,
            eps_eff_odd: co_ / c0o_,
        }
    });
    let all_finite = cf.iter().chain(c0f.iter()).all(|v| v.is_finite())
        && modal_eps_eff.iter().all(|v| v.is_finite());
    if !all_finite {
        return Err(SolveError::new("solver produced non-finite values"));
    }
    Ok(SolvedLine {
        capacitance: cf,
        capacitance_vacuum: c0f,
        inductance,
        n,
        modal_eps_eff,
        single,
        pair,
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
        .ok_or_else(|| SolveError::new("singular vacuum capacitance matrix"))?
        .iter()
        .map(|v| v / (C0 * C0))
        .collect();
    if c0f.iter().chain(inductance.iter()).any(|v| !v.is_finite()) {
        return Err(SolveError::new("solver produced non-finite values"));
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

/// The coarsest mesh of a section (first refinement level), kept so that
/// nearby sections (the same line at another width) can be meshed with the
/// same topology: the same number of cells between corresponding key
/// lines, the lines moving with the geometry.
#[derive(Debug, Clone, PartialEq)]
pub struct CoarseMesh {
    topology: Topology,
    options: SolverOptions,
}

/// The coarse mesh of `cs` under `opt` (no solve; cheap).
pub fn coarse_mesh(cs: &CrossSection, opt: &SolverOptions) -> Result<CoarseMesh, SolveError> {
    let options = SolverOptions {
        refinements: opt.refinements.first().copied().into_iter().collect(),
        ..opt.clone()
    };
    let p = prepare(cs, &options)?;
    let m = options.refinements[0];
    let (_, ux) = level_lines(&p.xspec, m, p.tol, None)?;
    let (_, uy) = level_lines(&p.yspec, m, p.tol, None)?;
    Ok(CoarseMesh {
        topology: vec![(ux, uy)],
        options,
    })
}

/// Solves `cs` on one coarse mesh with the topology of `mesh` (no
/// extrapolation; the error estimates are NaN). Its absolute error is that
/// of the first level (a few per cent), but the ratio of two such results
/// for nearby geometries on the same topology is accurate to far better,
/// which is what [`width_for_target`] uses.
///
/// Errors: as [`solve`], or a section whose key lines do not match the
/// topology (a different number of interfaces or edges).
pub fn solve_coarse(cs: &CrossSection, mesh: &CoarseMesh) -> Result<SolvedLine, SolveError> {
    let opt = &mesh.options;
    let p = prepare(cs, opt)?;
    let lv = run_levels(&p, &[cs], opt, Some(&mesh.topology))?;
    let n = cs.conductors.len();
    finish(
        lv.c[0][0].clone(),
        lv.c0[0].clone(),
        0.0,
        0.0,
        n,
        lv.unknowns,
    )
    .map(|mut r| {
        r.z_rel_error = f64::NAN;
        r.eps_rel_error = f64::NAN;
        r
    })
}

/// Secant search (e.g. W. H. Press et al., *Numerical Recipes*, 3rd ed.,
/// 2007, §9.2) for the width at which `z_at(w)` meets `target`, from the
/// width `w0` with impedance `z0`. The second point assumes Z ∝ w^(−1/2)
/// locally (common practice, no source: the log-slope of stripline and
/// microstrip impedance against width lies near −0.3 to −0.8 over the
/// usual range), kept within 0.5 to 2 times `w0`. At most five evaluations
/// of `z_at`; stops within 0.1 % of the target; steps stay within 0.3 to 3
/// times `w0`. `None` if `z_at` fails or the inputs are not finite and
/// positive.
pub fn secant_width(
    mut z_at: impl FnMut(f64) -> Option<f64>,
    w0: f64,
    z0: f64,
    target: f64,
) -> Option<f64> {
    if ![w0, z0, target].iter().all(|v| v.is_finite() && *v > 0.0) {
        return None;
    }
    let (mut wa, mut za) = (w0, z0);
    let mut wb = w0 * (z0 / target).powi(2).clamp(0.5, 2.0);
    let mut zb = z_at(wb)?;
    for _ in 0..4 {
        if (zb - za).abs() < 1e-9 * target || (zb - target).abs() < 0.001 * target {
            break;
        }
        let w = wb + (target - zb) * (wb - wa) / (zb - za);
        let w = w.clamp(0.3 * w0, 3.0 * w0);
        wa = wb;
        za = zb;
        wb = w;
        zb = z_at(wb)?;
    }
    Some(wb)
}

/// Width at which the line `section_at(w)` has impedance `target`, where
/// `z_of` reads the impedance of interest (Z0, or Z_diff of a pair) from a
/// result, and `z0` is the accurate impedance at the current width `w0`.
///
/// The accurate impedance at an anchor width (first `w0`) is scaled by the
/// ratio of coarse solves on the anchor's mesh topology,
/// Z(w) = Z(w_a) · Z_coarse(w) / Z_coarse(w_a), searched by
/// [`secant_width`]: the coarse mesh's discretisation error is nearly the
/// same at both widths and cancels, at a small fraction of a full solve
/// per step. Over a change of more than 10 % in width it cancels less
/// well, so that width is then solved in full and becomes the next anchor
/// (at most twice). The impedance at the result then lies within about
/// 0.1 % of the target plus the solver's own error.
pub fn width_for_target(
    section_at: impl Fn(f64) -> CrossSection,
    z_of: impl Fn(&SolvedLine) -> Option<f64>,
    w0: f64,
    z0: f64,
    target: f64,
    opt: &SolverOptions,
) -> Option<f64> {
    let (mut wa, mut za) = (w0, z0);
    for anchors_left in (0..3).rev() {
        let reference = section_at(wa);
        let mesh = coarse_mesh(&reference, opt).ok()?;
        let coarse_z = |cs: &CrossSection| z_of(&solve_coarse(cs, &mesh).ok()?);
        let z_ref = coarse_z(&reference)?;
        let w = secant_width(
            |w| Some(za * coarse_z(&section_at(w))? / z_ref),
            wa,
            za,
            target,
        )?;
        if (w / wa - 1.0).abs() <= 0.1 || anchors_left == 0 {
            return Some(w);
        }
        za = z_of(&solve(&section_at(w), opt).ok()?)?;
        wa = w;
        if (za - target).abs() < 0.001 * target {
            return Some(w);
        }
    }
    None
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
