//! The impedance of a net class at the fabricator's tolerance corners.
//!
//! Each toleranced quantity of the section (etched width, every ply's
//! pressed thickness, every material's Dk, the trace copper, the solder
//! mask) is moved by its tolerance alone, and the section solved again on
//! the second-level mesh of the nominal one with the same topology
//! (`fieldsolver::solve_coarse`): the ratio of two such solves is accurate
//! to far better than either (the width search relies on the same; the
//! first level read the geometric changes 2-4 % small, the second within
//! about 1 %, `tests/it/tolerance.rs`), so
//! each contribution is ΔZ_i = Z·(z_i/z_0 − 1), Z the accurate worst-case
//! rough impedance. Tolerances are taken as symmetric. From them:
//! - the worst case Z ± Σ|ΔZ_i| (every quantity at the end of its range
//!   that moves Z the same way);
//! - the statistical range Z ± √(Σ ΔZ_i²) (independent quantities, each
//!   tolerance read as the same multiple of its standard deviation:
//!   root-sum-square, common practice, no source);
//! - the two worst-case corners solved as they are (every quantity moved
//!   at once), each by a full, extrapolated solve of its own, which holds
//!   the sum of one-at-a-time changes against the section's own
//!   non-linearity and the coarse ratios' error (they read the geometric
//!   changes 2 to 4 % small; `tests/it/tolerance.rs`).
//!
//! For a pair the etched width moves both traces' edges and the gap
//! between them by as much the other way (the pitch is drawn).

use stackup_physics::fieldsolver::{coarse_mesh, solve_coarse, SolverOptions};

use super::section::{self, LineGeometry};
use super::solve::rough_layers;
use super::LineNumbers;
use crate::model::Stackup;

/// One toleranced quantity's share.
#[derive(Debug, Clone, PartialEq)]
pub struct Contribution {
    /// What moves ("etched width", "thickness of `pp1`", "Dk of `fr4`").
    pub what: String,
    /// Its tolerance as the user reads it ("±12.7 µm", "±10 %").
    pub tolerance: String,
    /// Z at the quantity's upper end minus nominal, ohm.
    pub dz: f64,
}

/// A class's impedance under its build tolerances.
#[derive(Debug, Clone, PartialEq)]
pub struct ToleranceStack {
    /// Nominal (worst-case rough, static) impedance, ohm.
    pub nominal: f64,
    pub contributions: Vec<Contribution>,
    /// Z ± Σ|ΔZ_i|.
    pub worst: (f64, f64),
    /// Z ± √(Σ ΔZ_i²).
    pub rss: (f64, f64),
    /// The two worst-case corners solved (low, high), when they solved.
    pub corners: Option<(f64, f64)>,
}

impl ToleranceStack {
    /// The contribution that moves Z most.
    pub fn dominant(&self) -> Option<&Contribution> {
        self.contributions
            .iter()
            .max_by(|a, b| a.dz.abs().total_cmp(&b.dz.abs()))
    }

    /// The widest range the stack gives: the worst-case sum or the solved
    /// corners, whichever reaches further.
    pub fn extreme(&self) -> (f64, f64) {
        let (lo, hi) = self.corners.unwrap_or(self.worst);
        (lo.min(self.worst.0), hi.max(self.worst.1))
    }
}

/// A change of the geometry by one quantity's tolerance, scaled by `k`
/// (+1 upper end, −1 lower end).
type Move = Box<dyn Fn(&mut LineGeometry, f64) + Sync>;

/// The finite, positive impedance (Z0 or Z_diff) of a solve, if any.
fn usable_z(r: Option<stackup_physics::fieldsolver::SolvedLine>) -> Option<f64> {
    r.as_ref()
        .and_then(LineNumbers::from_solved)
        .map(|n| n.z)
        .filter(|z| z.is_finite() && *z > 0.0)
}

/// Layer `l`'s own thickness tolerance, else the fabricator's `default`.
fn ply_tolerance(s: &Stackup, l: usize, default: f64) -> f64 {
    s.dielectric(l)
        .and_then(|d| d.thickness_tolerance)
        .unwrap_or(default)
}

/// The toleranced quantities of `g` with their tolerance text.
fn moves(s: &Stackup, g: &LineGeometry) -> Vec<(String, String, Move)> {
    let fab = &s.settings.fabrication;
    let mut out: Vec<(String, String, Move)> = Vec::new();
    // A layer's own tolerance wins over the fabricator's default.
    let trace_layer = g.slabs[g.trace_slot].layer;
    let trace_copper = s.copper(trace_layer);
    let dw = trace_copper
        .and_then(|c| c.etch_tolerance)
        .unwrap_or(fab.etch_width);
    out.push((
        "etched width".into(),
        format!("±{:.1} µm", dw * 1e6),
        Box::new(move |g, k| {
            g.width_bottom += k * dw;
            g.width_top += k * dw;
            if let Some(sp) = g.spacing.as_mut() {
                *sp -= k * dw;
            }
        }),
    ));
    for (i, sl) in g.slabs.iter().enumerate() {
        if i == g.trace_slot || sl.material != Some(sl.layer) || sl.thickness <= 0.0 {
            continue;
        }
        let dt = ply_tolerance(s, sl.layer, fab.dielectric_thickness);
        out.push((
            format!("thickness of `{}`", s.layers[sl.layer].name),
            format!("±{:.0} %", dt * 100.0),
            Box::new(move |g, k| g.slabs[i].thickness *= 1.0 + k * dt),
        ));
    }
    // Each material's Dk, in every slab it fills and in the mask coat.
    let mut materials: Vec<&str> = Vec::new();
    for l in g
        .slabs
        .iter()
        .filter_map(|sl| sl.material)
        .chain(g.mask.map(|m| m.layer))
    {
        if let Some(d) = s.dielectric(l) {
            if !materials.contains(&d.material.as_str()) {
                materials.push(&d.material);
            }
        }
    }
    for name in materials {
        let Some(m) = s.materials.get(name) else {
            continue;
        };
        let rel = match (m.dk_tolerance, m.points.first()) {
            (Some(t), Some(p)) if p.dk > 0.0 => t / p.dk,
            _ => fab.dk,
        };
        let text = match m.dk_tolerance {
            Some(t) => format!("±{t:.3} (the material's)"),
            None => format!("±{:.0} %", fab.dk * 100.0),
        };
        let layers: Vec<usize> = (0..s.layers.len())
            .filter(|&l| s.dielectric(l).is_some_and(|d| d.material == name))
            .collect();
        out.push((
            format!("Dk of `{name}`"),
            text,
            Box::new(move |g, k| {
                for sl in &mut g.slabs {
                    if sl.material.is_some_and(|l| layers.contains(&l)) {
                        sl.eps *= 1.0 + k * rel;
                    }
                }
                if let Some(mk) = g.mask.as_mut() {
                    if layers.contains(&mk.layer) {
                        mk.eps *= 1.0 + k * rel;
                    }
                }
            }),
        ));
    }
    let dc = trace_copper
        .and_then(|c| c.thickness_tolerance)
        .unwrap_or(fab.copper_thickness);
    let slot = g.trace_slot;
    out.push((
        format!("copper thickness of `{}`", s.layers[trace_layer].name),
        format!("±{:.0} %", dc * 100.0),
        Box::new(move |g, k| {
            g.thickness *= 1.0 + k * dc;
            g.slabs[slot].thickness *= 1.0 + k * dc;
        }),
    ));
    if let Some(mk) = g.mask {
        let dm = ply_tolerance(s, mk.layer, fab.mask_thickness);
        out.push((
            format!("thickness of the mask `{}`", s.layers[mk.layer].name),
            format!("±{:.0} %", dm * 100.0),
            Box::new(move |g, k| {
                if let Some(m) = g.mask.as_mut() {
                    m.over_laminate *= 1.0 + k * dm;
                    m.over_copper *= 1.0 + k * dm;
                }
            }),
        ));
    }
    out
}

/// The toleranced quantities of a class: what moves, its tolerance text,
/// and the move.
pub(super) struct Quantities(Vec<(String, String, Move)>);

impl Quantities {
    pub(super) fn of(s: &Stackup, g: &LineGeometry) -> Quantities {
        Quantities(moves(s, g))
    }

    /// Text that identifies the quantities and their tolerances (a cache
    /// key part).
    pub(super) fn key(&self) -> String {
        self.0
            .iter()
            .map(|(w, t, _)| format!("{w} {t}"))
            .collect::<Vec<_>>()
            .join("; ")
    }

    pub(super) fn len(&self) -> usize {
        self.0.len()
    }
}

/// The worst-case rough section of `g` at `f` (what the stack moves).
pub(super) fn base_section(g: &LineGeometry, f: f64) -> stackup_physics::fieldsolver::CrossSection {
    section::cross_section(g, Some(&rough_layers(g, f, true)))
}

/// Each quantity's ΔZ at its upper end (NaN where its solve failed) and
/// the two corners solved (NaN when they failed), for accurate impedance
/// `z`: the numbers [`assemble`] builds the stack from (and the solver
/// cache keeps).
pub(super) fn solve(
    q: &Quantities,
    g: &LineGeometry,
    f: f64,
    z: f64,
    opt: &SolverOptions,
) -> Option<Vec<f64>> {
    let z_of = |g: &LineGeometry, mesh| usable_z(solve_coarse(&base_section(g, f), mesh).ok());
    // The second refinement level: the first reads geometric changes
    // 2-4 % small (cold cost of the finer level: +35 % on the 24-layer
    // bench board).
    let finer = SolverOptions {
        refinements: vec![2.0],
        ..opt.clone()
    };
    let mesh = coarse_mesh(&base_section(g, f), &finer).ok()?;
    let z0 = z_of(g, &mesh)?;
    let mut out = Vec::new();
    let mut signs: Vec<(usize, f64)> = Vec::new();
    for (k, (_, _, mv)) in q.0.iter().enumerate() {
        let mut g2 = g.clone();
        mv(&mut g2, 1.0);
        let dz = z_of(&g2, &mesh).map_or(f64::NAN, |zi| z * (zi / z0 - 1.0));
        if dz.is_finite() {
            signs.push((k, if dz >= 0.0 { 1.0 } else { -1.0 }));
        }
        out.push(dz);
    }
    // The two corners, every quantity moved at once, each confirmed by a
    // full (extrapolated) solve of its own.
    for k in [-1.0, 1.0] {
        let mut g2 = g.clone();
        for &(i, sign) in &signs {
            (q.0[i].2)(&mut g2, k * sign);
        }
        let full = usable_z(stackup_physics::fieldsolver::solve(&base_section(&g2, f), opt).ok());
        out.push(full.unwrap_or(f64::NAN));
    }
    Some(out)
}

/// Whether numbers read back (from the cache) can be a stack of `q` at
/// `z`: the right count; each change finite or NaN and under half of Z;
/// the corners, when there, on either side of Z and within a factor two of
/// the summed changes (their own non-linearity is a few per cent).
pub(super) fn plausible(q: &Quantities, z: f64, v: &[f64]) -> bool {
    if v.len() != q.len() + 2 || !(z.is_finite() && z > 0.0) {
        return false;
    }
    let (dz, c) = v.split_at(q.len());
    if !dz.iter().all(|d| d.is_nan() || d.abs() < 0.5 * z) {
        return false;
    }
    let sum: f64 = dz.iter().filter(|d| d.is_finite()).map(|d| d.abs()).sum();
    let side = |d: f64| d >= 0.5 * sum - 1e-9 * z && d <= 2.0 * sum + 1e-9 * z;
    match (c[0].is_nan(), c[1].is_nan()) {
        (true, true) => true,
        (false, false) => side(z - c[0]) && side(c[1] - z),
        _ => false,
    }
}

/// The stack from the numbers of [`solve`].
pub(super) fn assemble(q: &Quantities, z: f64, v: &[f64]) -> ToleranceStack {
    let (dz, c) = v.split_at(q.len());
    let contributions: Vec<Contribution> =
        q.0.iter()
            .zip(dz)
            .filter(|(_, d)| d.is_finite())
            .map(|((what, tolerance, _), &dz)| Contribution {
                what: what.clone(),
                tolerance: tolerance.clone(),
                dz,
            })
            .collect();
    let sum: f64 = contributions.iter().map(|c| c.dz.abs()).sum();
    let rss: f64 = contributions
        .iter()
        .map(|c| c.dz * c.dz)
        .sum::<f64>()
        .sqrt();
    let corners = (c[0].is_finite() && c[1].is_finite()).then_some((c[0], c[1]));
    ToleranceStack {
        nominal: z,
        contributions,
        worst: (z - sum, z + sum),
        rss: (z - rss, z + rss),
        corners,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn q(n: usize) -> Quantities {
        Quantities(
            (0..n)
                .map(|i| {
                    let mv: Move = Box::new(|_, _| {});
                    (format!("q{i}"), "±1 %".to_string(), mv)
                })
                .collect(),
        )
    }

    /// Cached numbers must have the stack's shape and sizes a solve could
    /// give; anything else is solved again.
    #[test]
    fn implausible_numbers_are_refused() {
        let q = q(3);
        let z = 50.0;
        assert!(plausible(&q, z, &[-1.0, 2.0, 0.5, 46.4, 53.6]));
        assert!(plausible(&q, z, &[-1.0, f64::NAN, 0.5, f64::NAN, f64::NAN]));
        for bad in [
            vec![-1.0, 2.0, 0.5, 46.4],           // too short
            vec![-1.0, 30.0, 0.5, 20.0, 80.0],    // a change of more than Z/2
            vec![-1.0, 2.0, 0.5, 53.6, 46.4],     // corners swapped
            vec![-1.0, 2.0, 0.5, 49.9, 50.1],     // corners far inside the sum
            vec![-1.0, 2.0, 0.5, 46.4, f64::NAN], // one corner only
            vec![-1.0, f64::INFINITY, 0.5, 46.4, 53.6],
        ] {
            assert!(!plausible(&q, z, &bad), "{bad:?}");
        }
        let s = assemble(&q, z, &[-1.0, 2.0, 0.5, 46.4, 53.6]);
        assert_eq!(s.worst, (46.5, 53.5));
        assert!((s.rss.1 - (50.0 + 5.25f64.sqrt())).abs() < 1e-12);
        assert_eq!(s.dominant().unwrap().what, "q1");
    }
}
