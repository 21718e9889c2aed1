//! Synthesis: coarse same-topology solves and the width that meets a
//! target impedance (an accurate anchor scaled by coarse solves, a secant
//! search, a new full-solve anchor after any large step).

use super::*;

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
