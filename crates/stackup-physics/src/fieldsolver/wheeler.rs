//! Conductor loss of any solved section by Wheeler's incremental-inductance
//! rule.
//!
//! Source: H. A. Wheeler, "Formulas for the skin effect", Proc. IRE 30(9),
//! pp. 412–424, 1942: the series resistance per metre of a line with a
//! good conductor is R = (Rs/μ0)·∂L/∂n, where ∂L/∂n is the rise of the
//! external inductance per metre when the metal walls recede into the
//! metal by dn. L is a vacuum quantity (it does not depend on the
//! dielectrics), so the rule holds for inhomogeneous sections, coupled
//! modes and coplanar grounds alike, and each group of faces may be
//! receded on its own: R = Σ_g (Rs·K_g/μ0)·∂L/∂n_g with each group's own
//! roughness factor K_g, which weights the roughness by that group's share
//! of the current.
//!
//! Why this method and not the integral of |J_s|² over the perimeter from
//! the solved surface charge: the surface charge is singular at the trace
//! corners (ρ ~ r^(−1/3)), so that integral converges only as h^(1/3)
//! under mesh refinement, whereas ∂L/∂n is a difference of two energies,
//! which converges as the capacitance does (order two with the graded
//! mesh) and is extrapolated the same way. The receded section is meshed
//! with the base section's topology (`solve_vacuum_pair`'s path), so the
//! difference is smooth in the recession; a recession of 1 % of the
//! smallest metal dimension keeps the one-sided difference within 0.5 %
//! of the derivative (checked against half that recession in the tests).
//!
//! Cost: the total (every group receded at once) is solved on all mesh
//! levels and extrapolated; each group's share of it comes from the
//! coarsest level only, where the shares are already within 1.5 % of the
//! extrapolated ones on board-like sections (tests). That is two full
//! vacuum solves and one coarse one per group instead of a full one per
//! group.
//!
//! Valid where Wheeler's rule is: skin depth small against the conductor
//! thickness and the radii of curvature (the closed forms assume the
//! same). Traces of zero thickness have no faces to recede and are
//! refused.

use super::*;

/// A group of metal faces receded together.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum MetalFaces {
    /// The reference plane under the section.
    PlaneBelow,
    /// The bottom faces of the traces (and of coplanar grounds).
    LayerBottom,
    /// The top faces of the traces (and of coplanar grounds).
    LayerTop,
    /// The etched side walls of the traces and the inner edges of coplanar
    /// grounds.
    Edges,
    /// The reference plane over the section (stripline).
    PlaneAbove,
}

impl MetalFaces {
    /// Every group, in a fixed order.
    pub const ALL: [MetalFaces; 5] = [
        MetalFaces::PlaneBelow,
        MetalFaces::LayerBottom,
        MetalFaces::LayerTop,
        MetalFaces::Edges,
        MetalFaces::PlaneAbove,
    ];
}

/// ∂L/∂n of one group of faces: H/m per metre of recession, row-major n×n.
#[derive(Debug, Clone, PartialEq)]
pub struct InductanceDerivative {
    pub faces: MetalFaces,
    pub dl_dn: Vec<f64>,
}

/// Recession as a fraction of the smallest metal dimension.
const RECESSION: f64 = 0.01;

/// ∂L/∂n for every group of metal faces `cs` has (planes, trace bottoms,
/// tops and edges), each from one vacuum solve of the section with only
/// that group receded, meshed like the base section. Dielectrics and
/// blocks play no part (L is a vacuum quantity).
///
/// Errors: a trace or coplanar ground of zero thickness, and any error of
/// the vacuum solves.
pub fn inductance_derivatives(
    cs: &CrossSection,
    opt: &SolverOptions,
) -> Result<Vec<InductanceDerivative>, SolveError> {
    derivatives_with(cs, opt, RECESSION)
}

fn derivatives_with(
    cs: &CrossSection,
    opt: &SolverOptions,
    fraction: f64,
) -> Result<Vec<InductanceDerivative>, SolveError> {
    let base = CrossSection {
        blocks: Vec::new(),
        ..cs.clone()
    };
    let mut smallest = f64::INFINITY;
    for t in &base.conductors {
        if t.thickness <= 0.0 {
            return Err(SolveError::new(
                "conductor loss by incremental inductance needs traces of some thickness",
            ));
        }
        smallest = smallest.min(t.thickness).min(t.min_width());
    }
    if let Some(g) = base.coplanar_grounds {
        if g.thickness <= 0.0 {
            return Err(SolveError::new(
                "conductor loss by incremental inductance needs grounds of some thickness",
            ));
        }
        smallest = smallest.min(g.thickness).min(g.gap);
        if let Some(w) = g.width {
            smallest = smallest.min(w);
        }
    }
    for l in &base.layers {
        smallest = smallest.min(l.thickness);
    }
    let d = fraction * smallest;
    let groups: Vec<MetalFaces> = MetalFaces::ALL
        .into_iter()
        .filter(|g| match g {
            MetalFaces::PlaneBelow => base.bottom_plane,
            MetalFaces::PlaneAbove => base.top_plane,
            _ => true,
        })
        .collect();
    let n = base.conductors.len();
    let meshed_like_base = |what: &str, e: SolveError| {
        SolveError::new(format!(
            "the section with its {what} receded could not be meshed like the base one: {e}"
        ))
    };
    // The total: every group receded at once, on all mesh levels and
    // extrapolated like the impedance.
    let all = groups.iter().fold(base.clone(), |c, &g| receded(&c, g, d));
    let pb = prepare(&base, opt)?;
    let lb = run_levels(&pb, &[], opt, None)?;
    let pa = prepare(&all, opt)?;
    let la =
        run_levels(&pa, &[], opt, Some(&lb.topology)).map_err(|e| meshed_like_base("faces", e))?;
    let total = difference(
        &vacuum_result(&la, opt, n)?.inductance,
        &vacuum_result(&lb, opt, n)?.inductance,
        d,
    );
    // Each group's share of it from the coarsest level alone (the shares
    // converge much faster than the values: within 1.5 % at level 1 on
    // board-like sections, see the tests), the total's extrapolated value
    // split in those shares.
    let coarse_opt = SolverOptions {
        refinements: vec![opt.refinements[0]],
        ..opt.clone()
    };
    let coarse = |lv: &Levels| -> Result<Vec<f64>, SolveError> {
        let first = Levels {
            c: Vec::new(),
            fill: Vec::new(),
            c0: lv.c0.first().cloned().into_iter().collect(),
            unknowns: lv.unknowns,
            topology: Vec::new(),
        };
        Ok(vacuum_result(&first, &coarse_opt, n)?.inductance)
    };
    let l0 = coarse(&lb)?;
    let per_group: Vec<Vec<f64>> = if groups.len() == 1 {
        vec![total.clone()]
    } else {
        groups
            .iter()
            .map(|&faces| {
                let v = receded(&base, faces, d);
                let pv = prepare(&v, &coarse_opt)?;
                let lv = run_levels(&pv, &[], &coarse_opt, Some(&lb.topology))
                    .map_err(|e| meshed_like_base(&format!("{faces:?}"), e))?;
                Ok(difference(&coarse(&lv)?, &l0, d))
            })
            .collect::<Result<_, SolveError>>()?
    };
    let diag = |m: &[f64]| (0..n).map(|i| m[i * n + i]).sum::<f64>();
    let coarse_total: f64 = per_group.iter().map(|m| diag(m)).sum();
    let coarse_sum: Vec<f64> = (0..n * n)
        .map(|k| per_group.iter().map(|m| m[k]).sum())
        .collect();
    if coarse_total.is_nan() || coarse_total <= 0.0 {
        return Err(SolveError::numerical(
            "no inductance rise from receding the metal",
        ));
    }
    groups
        .iter()
        .zip(per_group)
        .map(|(&faces, m)| {
            let share = diag(&m) / coarse_total;
            let dl_dn: Vec<f64> = (0..n * n)
                .map(|k| m[k] + share * (total[k] - coarse_sum[k]))
                .collect();
            if dl_dn.iter().any(|v| !v.is_finite()) {
                return Err(SolveError::numerical("non-finite inductance derivative"));
            }
            Ok(InductanceDerivative { faces, dl_dn })
        })
        .collect()
}

/// (L1 − L0)/d entry by entry.
fn difference(l1: &[f64], l0: &[f64], d: f64) -> Vec<f64> {
    l1.iter().zip(l0).map(|(a, b)| (a - b) / d).collect()
}

/// `cs` with one group of metal faces receded by `d` into the metal. Layer
/// interfaces on a receded face move with it, so the mesh keeps its
/// topology (the dielectrics do not matter in vacuum).
fn receded(cs: &CrossSection, faces: MetalFaces, d: f64) -> CrossSection {
    let mut c = cs.clone();
    // Interfaces (cumulative heights) and the moves of faces lying on them.
    let mut moves: Vec<(f64, f64)> = Vec::new();
    match faces {
        MetalFaces::PlaneBelow => {
            c.layers[0].thickness += d;
            for t in &mut c.conductors {
                t.y_bottom += d;
            }
            if let Some(g) = c.coplanar_grounds.as_mut() {
                g.y_bottom += d;
            }
            return c;
        }
        MetalFaces::PlaneAbove => {
            if let Some(l) = c.layers.last_mut() {
                l.thickness += d;
            }
            return c;
        }
        MetalFaces::LayerBottom => {
            for t in &mut c.conductors {
                moves.push((t.y_bottom, t.y_bottom + d));
                t.y_bottom += d;
                t.thickness -= d;
            }
            if let Some(g) = c.coplanar_grounds.as_mut() {
                moves.push((g.y_bottom, g.y_bottom + d));
                g.y_bottom += d;
                g.thickness -= d;
            }
        }
        MetalFaces::LayerTop => {
            for t in &mut c.conductors {
                moves.push((t.y_top(), t.y_top() - d));
                t.thickness -= d;
            }
            if let Some(g) = c.coplanar_grounds.as_mut() {
                let top = g.y_bottom + g.thickness;
                moves.push((top, top - d));
                g.thickness -= d;
            }
        }
        MetalFaces::Edges => {
            for t in &mut c.conductors {
                t.width_bottom -= 2.0 * d;
                t.width_top -= 2.0 * d;
            }
            if let Some(g) = c.coplanar_grounds.as_mut() {
                // Measured from the (receded) trace edge to the (receded)
                // ground edge.
                g.gap += 2.0 * d;
                if let Some(w) = g.width.as_mut() {
                    *w -= 2.0 * d;
                }
            }
        }
    }
    let tol = 1e-3 * d;
    let mut acc = 0.0;
    let mut heights: Vec<f64> = c
        .layers
        .iter()
        .map(|l| {
            acc += l.thickness;
            acc
        })
        .collect();
    // The top of an open section's stack may carry a trace's bottom face;
    // a plane's interface never does.
    let movable = heights.len() - usize::from(c.top_plane);
    for h in heights.iter_mut().take(movable) {
        if let Some(&(_, to)) = moves.iter().find(|(from, _)| (*from - *h).abs() <= tol) {
            *h = to;
        }
    }
    let mut prev = 0.0;
    for (l, h) in c.layers.iter_mut().zip(&heights) {
        l.thickness = h - prev;
        prev = *h;
    }
    c
}

/// Series resistance matrix R = Σ_g (Rs_g/μ0)·∂L/∂n_g, Ω/m (row-major
/// n×n), with `rs_of(g)` the surface resistance of group g (Rs times its
/// roughness factor).
pub fn resistance_matrix(
    derivs: &[InductanceDerivative],
    rs_of: impl Fn(MetalFaces) -> f64,
) -> Vec<f64> {
    let len = derivs.first().map_or(0, |d| d.dl_dn.len());
    let mut r = vec![0.0; len];
    for d in derivs {
        let k = rs_of(d.faces) / crate::consts::MU0;
        for (a, b) in r.iter_mut().zip(&d.dl_dn) {
            *a += k * b;
        }
    }
    r
}

/// Resistance of each mode from a resistance matrix: `[R]` for one
/// conductor, `[R_even, R_odd]` per line for a symmetric pair (R11 ± R12).
pub fn modal_resistance(r: &[f64]) -> Vec<f64> {
    match r.len() {
        1 => vec![r[0]],
        4 => {
            let (s, m) = (0.5 * (r[0] + r[3]), 0.5 * (r[1] + r[2]));
            vec![s + m, s - m]
        }
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Each group receded alone and extrapolated on every level (the
    /// reference the coarse shares are held against).
    fn per_group_extrapolated(cs: &CrossSection, opt: &SolverOptions) -> Vec<f64> {
        let d = RECESSION * 10e-6;
        let pb = prepare(cs, opt).unwrap();
        let lb = run_levels(&pb, &[], opt, None).unwrap();
        let l0 = vacuum_result(&lb, opt, 1).unwrap().inductance;
        MetalFaces::ALL
            .into_iter()
            .filter(|g| *g != MetalFaces::PlaneAbove || cs.top_plane)
            .map(|g| {
                let v = receded(cs, g, d);
                let pv = prepare(&v, opt).unwrap();
                let lv = run_levels(&pv, &[], opt, Some(&lb.topology)).unwrap();
                difference(&vacuum_result(&lv, opt, 1).unwrap().inductance, &l0, d)[0]
            })
            .collect()
    }

    /// Board-like sections (17-35 µm copper on 0.1-0.13 mm dielectrics,
    /// stripline, microstrip, grounded coplanar): the groups' shares taken
    /// from the coarsest level are within 1.5 % (relative) of the shares of
    /// the fully extrapolated per-group derivatives.
    #[test]
    fn coarse_shares_hold_on_board_like_sections() {
        let l = |t: f64| DielectricLayer {
            thickness: t,
            eps_r: 1.0,
        };
        let sections = [
            CrossSection {
                layers: vec![l(100e-6), l(18e-6), l(120e-6)],
                bottom_plane: true,
                top_plane: true,
                conductors: vec![Trace::rect(0.0, 100e-6, 0.12e-3, 18e-6)],
                ..Default::default()
            },
            CrossSection {
                layers: vec![l(100e-6)],
                bottom_plane: true,
                top_plane: false,
                conductors: vec![Trace::rect(0.0, 100e-6, 0.2e-3, 35e-6)],
                ..Default::default()
            },
            CrossSection {
                layers: vec![l(127e-6)],
                bottom_plane: true,
                top_plane: false,
                conductors: vec![Trace::rect(0.0, 127e-6, 0.22e-3, 35e-6)],
                coplanar_grounds: Some(CoplanarGrounds {
                    gap: 0.15e-3,
                    width: None,
                    y_bottom: 127e-6,
                    thickness: 35e-6,
                }),
                ..Default::default()
            },
        ];
        let opt = SolverOptions::default();
        for cs in sections {
            let full = per_group_extrapolated(&cs, &opt);
            let got = inductance_derivatives(&cs, &opt).unwrap();
            let (ft, gt): (f64, f64) = (full.iter().sum(), got.iter().map(|g| g.dl_dn[0]).sum());
            for (f, g) in full.iter().zip(&got) {
                let (a, b) = (f / ft, g.dl_dn[0] / gt);
                assert!(
                    ((b - a) / a).abs() < 0.015,
                    "{:?}: share {b} vs {a}",
                    g.faces
                );
            }
            assert!(((gt - ft) / ft).abs() < 0.01, "total {gt} vs {ft}");
        }
    }

    /// The one-sided difference at the default recession against one at
    /// half of it: their difference is the O(d) error of the first, which
    /// must stay under 0.5 % of the derivative for every group.
    #[test]
    fn recession_is_small_enough() {
        let cs = CrossSection {
            layers: vec![
                DielectricLayer {
                    thickness: 100e-6,
                    eps_r: 3.5,
                },
                DielectricLayer {
                    thickness: 35e-6,
                    eps_r: 3.0,
                },
                DielectricLayer {
                    thickness: 100e-6,
                    eps_r: 3.0,
                },
            ],
            bottom_plane: true,
            top_plane: true,
            conductors: vec![Trace::rect(0.0, 100e-6, 120e-6, 35e-6)],
            ..Default::default()
        };
        let opt = SolverOptions::default();
        let a = derivatives_with(&cs, &opt, RECESSION).unwrap();
        let b = derivatives_with(&cs, &opt, 0.5 * RECESSION).unwrap();
        assert_eq!(a.len(), 5);
        for (x, y) in a.iter().zip(&b) {
            let (p, q) = (x.dl_dn[0], y.dl_dn[0]);
            assert!(
                p > 0.0 && ((p - q) / q).abs() < 5e-3,
                "{:?}: {p} vs {q}",
                x.faces
            );
        }
    }
}
