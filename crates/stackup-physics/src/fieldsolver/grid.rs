//! Meshing a section: the graded tensor mesh with lines on every interface
//! and conductor edge, the cell permittivities, the refinement levels and
//! their solves (one vacuum solve and one symbolic factorisation shared by
//! a family), and the mesh budget.

use super::*;

/// Checked geometry with the derived box.
pub(super) struct Prepared<'a> {
    pub(super) cs: &'a CrossSection,
    /// Mesh the half x ≥ 0 only (see `SolverOptions::mirror`).
    pub(super) mirror: bool,
    pub(super) grounds: Vec<Trace>,
    /// Tolerance for coordinate comparisons.
    pub(super) tol: f64,
    pub(super) xspec: AxisSpec,
    pub(super) yspec: AxisSpec,
}

pub(super) fn prepare<'a>(
    cs: &'a CrossSection,
    opt: &SolverOptions,
) -> Result<Prepared<'a>, SolveError> {
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

/// Relative permittivity of every cell (row-major, (nx-1)·(ny-1)) of the
/// mesh `xs` × `ys` for the layers and blocks of `cs`, and the dielectric
/// region each cell belongs to: layer k is region k, block b region
/// L + b (L layers), the air outside every layer and block region L + B
/// (see [`CrossSection::region_layers`]).
pub(super) fn cell_eps(cs: &CrossSection, xs: &[f64], ys: &[f64]) -> (Vec<f64>, Vec<u32>) {
    let (nx, ny) = (xs.len(), ys.len());
    let n_layers = cs.layers.len();
    let air = (n_layers + cs.blocks.len()) as u32;
    let mut eps = vec![1.0; (nx - 1) * (ny - 1)];
    let mut region = vec![air; (nx - 1) * (ny - 1)];
    let mut bounds = Vec::with_capacity(n_layers);
    let mut acc = 0.0;
    for l in &cs.layers {
        bounds.push((acc, acc + l.thickness, l.eps_r));
        acc += l.thickness;
    }
    for j in 0..ny - 1 {
        let yc = 0.5 * (ys[j] + ys[j + 1]);
        let (layer_eps, layer_region) = bounds
            .iter()
            .position(|(a, b, _)| yc >= *a && yc < *b)
            .map_or((1.0, air), |k| (bounds[k].2, k as u32));
        for i in 0..nx - 1 {
            let xc = 0.5 * (xs[i] + xs[i + 1]);
            let (mut e, mut r) = (layer_eps, layer_region);
            for (k, b) in cs.blocks.iter().enumerate() {
                if xc >= b.x0 && xc <= b.x1 && yc >= b.y0 && yc <= b.y1 {
                    (e, r) = (b.eps_r, (n_layers + k) as u32);
                }
            }
            eps[j * (nx - 1) + i] = e;
            region[j * (nx - 1) + i] = r;
        }
    }
    (eps, region)
}

/// The mesh `xs` × `ys` with every node marked free or fixed (box walls,
/// planes, grounds, conductors) for the conductors of `p`. For a mirrored
/// section only the traces reaching into x ≥ 0 are placed, and the nodes on
/// x = 0 are grounded (`electric_wall`, odd excitation) or free (even).
pub(super) fn build_grid(
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

/// Mesh lines of one axis at refinement level `m`: every size in the
/// specification divided by m, the cell at the singular edges by m², and
/// the grading ratio brought towards 1 as 1 + (g − 1)/m. The edge region
/// then contributes O(1/m²) like the rest, so the capacitance converges at
/// second order and the two-level extrapolation can assume p = 2.
pub(super) fn level_lines(
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
    let (lines, used) = lines_with_counts(&s, tol, counts).map_err(|e| match e {
        LineError::Topology(m) => SolveError::new(m),
        LineError::TooMany(message) => SolveError {
            message,
            kind: SolveErrorKind::MeshBudget {
                needed: s.max_lines.saturating_add(1),
                limit: s.max_lines,
            },
        },
    })?;
    let n = lines.len();
    let lines = dedup_sorted(lines, tol);
    if lines.len() != n {
        return Err(SolveError::new("degenerate mesh: coincident lines"));
    }
    Ok((lines, used))
}

/// The error for a section whose mesh would pass `max_mesh_nodes`.
pub(super) fn too_large(nodes: usize, opt: &SolverOptions) -> SolveError {
    SolveError {
        message: format!(
            "the section needs a mesh of more than {nodes} nodes, beyond the solver's limit of {}: its features span too wide a range of sizes",
            opt.max_mesh_nodes
        ),
        kind: SolveErrorKind::MeshBudget {
            needed: nodes,
            limit: opt.max_mesh_nodes,
        },
    }
}

/// Cells per key interval (x, y) at every level.
pub(super) type Topology = Vec<(Vec<usize>, Vec<usize>)>;

/// Per-level capacitance matrices (÷ε0): with the dielectrics of each
/// member section (`c[member][level]`) and in vacuum (`c0[level]`), the
/// unknowns of the finest mesh, and the mesh topology used.
pub(super) struct Levels {
    pub(super) c: Vec<Vec<Vec<f64>>>,
    /// ∂C/∂ε_r (÷ε0) per member, level and region (`fill[member][level][region]`).
    pub(super) fill: Vec<Vec<Vec<Vec<f64>>>>,
    pub(super) c0: Vec<Vec<f64>>,
    pub(super) unknowns: usize,
    pub(super) topology: Topology,
}

/// Runs every refinement level of `p`'s mesh: one vacuum solve and one
/// solve per entry of `members` (sections sharing `p`'s conductors, whose
/// dielectrics are painted on the same mesh), all on one symbolic
/// factorisation per level (two for a mirrored pair: even and odd).
pub(super) fn run_levels(
    p: &Prepared,
    members: &[&CrossSection],
    opt: &SolverOptions,
    topology: Option<&Topology>,
) -> Result<Levels, SolveError> {
    let mut out = Levels {
        c: vec![Vec::new(); members.len()],
        fill: vec![Vec::new(); members.len()],
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
        #[allow(clippy::type_complexity)]
        let mut per_wall: Vec<(Vec<Vec<f64>>, Vec<f64>, Vec<Vec<Vec<f64>>>)> = Vec::new();
        out.unknowns = 0;
        for &electric in walls {
            let grid = build_grid(p, xs.clone(), ys.clone(), electric)?;
            out.unknowns += grid.n_free;
            let solver = Solver::new(&grid).map_err(SolveError::new)?;
            let mut cm = Vec::with_capacity(members.len());
            let mut fm = Vec::with_capacity(members.len());
            for (k, cs) in members.iter().enumerate() {
                let (eps, region) = cell_eps(cs, &grid.xs, &grid.ys);
                let n_regions = cs.layers.len() + cs.blocks.len() + 1;
                // The energy per region for the family's first member only
                // (the reference section, smooth copper in the analysis).
                let regions = (k == 0).then_some((region.as_slice(), n_regions));
                let (c, f) = solver
                    .capacitance_filling(Some(&eps), regions)
                    .map_err(SolveError::new)?;
                cm.push(c);
                fm.push(f);
            }
            let c0 = solver.capacitance(None).map_err(SolveError::new)?;
            per_wall.push((cm, c0, fm));
        }
        // Back to the whole section's Maxwell matrix (or its derivative
        // for one region: the same linear combination).
        let combine = |of: Vec<&Vec<f64>>| -> Vec<f64> {
            let q = |w: usize| of[w][0];
            match (p.mirror, n) {
                (false, _) => of[0].clone(),
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
            out.c[k].push(combine(per_wall.iter().map(|w| &w.0[k]).collect()));
            let regions = per_wall[0].2[k].len();
            out.fill[k].push(
                (0..regions)
                    .map(|r| combine(per_wall.iter().map(|w| &w.2[k][r]).collect()))
                    .collect(),
            );
        }
        out.c0
            .push(combine(per_wall.iter().map(|w| &w.1).collect()));
    }
    Ok(out)
}
