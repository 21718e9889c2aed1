//! Solving sections: families of sections through the field solver and
//! the disk cache, and the width that meets a target. Everything a run
//! decides about solving (mesh budget, cache, workers) comes in one
//! [`AnalysisOptions`] value from the command line; nothing here is global.

use std::collections::{HashMap, HashSet};
use std::sync::atomic::{AtomicU64, AtomicUsize, Ordering};
use std::sync::Arc;

use stackup_physics::fieldsolver::{
    self, estimate, solve, solve_family, CrossSection, InductanceDerivative, MetalFaces,
    SolveError, SolvedLine, SolverOptions,
};
use stackup_physics::roughness::RoughLayerModel;

use super::cache::{self, DiskCache};
use super::section::{self, LineGeometry, RoughLayers};
use super::{tolerance, ClassError, LineNumbers, SIGMA};
use crate::pool::Pool;

/// Default of [`AnalysisOptions::max_mesh_nodes`].
pub const DEFAULT_MAX_MESH_NODES: usize = 400_000;

/// How a run solves: from the command line, passed down through the
/// engine to every analysis.
#[derive(Debug, Clone)]
pub struct AnalysisOptions {
    /// Largest field-solver mesh (nodes of one grid,
    /// `SolverOptions::max_mesh_nodes`); a section that needs more is
    /// reported as not solved. Part of every cache key.
    pub max_mesh_nodes: usize,
    /// The disk cache of solves, if one is in use.
    pub cache: Option<Arc<DiskCache>>,
    /// Workers for the solves (results do not depend on their number).
    pub pool: Pool,
}

impl Default for AnalysisOptions {
    fn default() -> Self {
        AnalysisOptions {
            max_mesh_nodes: DEFAULT_MAX_MESH_NODES,
            cache: None,
            pool: Pool::default(),
        }
    }
}

/// Cache entries one analysis read, solved, rejected and stored, for
/// `STACKUP_LINT_CACHE_DEBUG` and the cache's size bound.
#[derive(Default)]
struct Tally {
    hits: AtomicUsize,
    solved: AtomicUsize,
    /// Cached results that failed the plausibility check (solved again).
    rejected: AtomicUsize,
    /// Disk space of the entries stored, not yet counted against the bound.
    stored: AtomicU64,
}

impl Tally {
    fn add(&self, hits: usize, solved: usize) {
        self.hits.fetch_add(hits, Ordering::Relaxed);
        self.solved.fetch_add(solved, Ordering::Relaxed);
    }
}

/// The solver of one analysis: the run's options and what it counted.
pub(super) struct Solver<'a> {
    opts: &'a AnalysisOptions,
    solver: SolverOptions,
    tally: Tally,
}

/// A family's solutions, per member.
pub(super) type Solved = HashMap<String, Vec<Result<SolvedLine, SolveError>>>;

/// `g2` with its base width `w` (the drawn base width of `g` scaled, the
/// top width with it).
fn set_width(g2: &mut LineGeometry, g: &LineGeometry, w: f64) {
    let scale = w / g.width_bottom.max(g.width_top);
    g2.width_bottom = g.width_bottom * scale;
    g2.width_top = g.width_top * scale;
}

impl<'a> Solver<'a> {
    pub(super) fn new(opts: &'a AnalysisOptions) -> Solver<'a> {
        Solver {
            opts,
            solver: SolverOptions {
                max_mesh_nodes: opts.max_mesh_nodes,
                ..SolverOptions::default()
            },
            tally: Tally::default(),
        }
    }

    pub(super) fn pool(&self) -> Pool {
        self.opts.pool
    }

    fn cache(&self) -> Option<&DiskCache> {
        self.opts.cache.as_deref()
    }

    /// Cache key text of a section. The engine identity (`cache.rs`) holds
    /// the default solver options; the run's mesh budget is added here,
    /// since a section refused under one budget may be solved under another.
    fn key(&self, cs: &CrossSection) -> String {
        format!("mesh budget {} | {cs:?}", self.opts.max_mesh_nodes)
    }

    /// A family's key: its members' keys in order.
    pub(super) fn family_key(&self, members: &[CrossSection]) -> String {
        members
            .iter()
            .map(|cs| self.key(cs))
            .collect::<Vec<_>>()
            .join(" & ")
    }

    /// Solve distinct families, in parallel, deterministically (results
    /// keyed by family). Cached results are read inside the workers; only
    /// misses are solved.
    pub(super) fn solve_all(&self, families: Vec<Vec<CrossSection>>) -> Solved {
        let mut seen = HashSet::new();
        let unique: Vec<(String, Vec<CrossSection>)> = families
            .into_iter()
            .map(|f| (self.family_key(&f), f))
            .filter(|(k, _)| seen.insert(k.clone()))
            .collect();
        let solved = self
            .opts
            .pool
            .map(&unique, |(k, f)| self.solve_family_cached(k, f));
        unique.into_iter().map(|(k, _)| k).zip(solved).collect()
    }

    /// Solve one family (sections differing only in their dielectrics) on
    /// one shared mesh, through the disk cache when one is in use. If the
    /// family cannot be solved as one, each member is solved alone so that
    /// each gets its own result or reason.
    fn solve_family_cached(
        &self,
        family: &str,
        members: &[CrossSection],
    ) -> Vec<Result<SolvedLine, SolveError>> {
        let member_key = |i: usize| format!("{family}#{i}");
        if let Some(c) = self.cache() {
            let hits: Option<Vec<_>> = (0..members.len()).map(|i| c.get(&member_key(i))).collect();
            if let Some(v) = hits {
                // A cache directory may have been written by someone else (a
                // CI cache restored from an earlier job): a cached number is
                // used only if it passes the checks a fresh one would, and a
                // cached error is never believed (solving again costs little
                // when the section is refused early).
                let trusted = v.iter().zip(members).all(|(r, cs)| match r {
                    Ok(s) => estimate::check_solution(cs, s).is_ok(),
                    Err(_) => false,
                });
                if trusted {
                    self.tally.add(members.len(), 0);
                    return v.into_iter().flatten().map(Ok).collect();
                }
                if v.iter().any(Result::is_ok) {
                    self.tally.rejected.fetch_add(1, Ordering::Relaxed);
                }
            }
        }
        self.tally.add(0, members.len());
        let v: Vec<Result<SolvedLine, SolveError>> = match solve_family(members, &self.solver) {
            Ok(v) => v.into_iter().map(Ok).collect(),
            Err(_) => members.iter().map(|cs| solve(cs, &self.solver)).collect(),
        };
        if let Some(c) = self.cache() {
            for (i, r) in v.iter().enumerate() {
                let n = c.put(&member_key(i), &r.clone().map_err(|e| e.message));
                self.tally.stored.fetch_add(n, Ordering::Relaxed);
            }
        }
        v
    }

    /// Width (base width, top width scaled alike) at which the worst-case
    /// rough section meets `target` (`fieldsolver::width_for_target`, its
    /// result through the disk cache as one entry).
    pub(super) fn width_for_target(
        &self,
        g: &LineGeometry,
        f: f64,
        target: f64,
        z_now: f64,
    ) -> Option<f64> {
        let w0 = g.width_bottom.max(g.width_top);
        self.dimension_for_target("width", g, f, target, z_now, w0, &|g2, w| {
            set_width(g2, g, w);
        })
    }

    /// The edge-to-edge spacing that brings a pair's worst-case section to
    /// `target` at its drawn width (`None` for a single line), searched as
    /// the width is.
    pub(super) fn spacing_for_target(
        &self,
        g: &LineGeometry,
        f: f64,
        target: f64,
        z_now: f64,
    ) -> Option<f64> {
        let s0 = g.spacing.filter(|s| *s > 0.0)?;
        self.dimension_for_target("spacing", g, f, target, z_now, s0, &|g2, sp| {
            g2.spacing = Some(sp);
        })
    }

    /// One dimension of the section (set by `set`, now `x0`) that brings
    /// the worst-case section to `target`: `fieldsolver::width_for_target`
    /// on it, cached as one entry and checked against the closed-form
    /// estimate (`plausible_width`).
    #[allow(clippy::too_many_arguments)]
    fn dimension_for_target(
        &self,
        what: &str,
        g: &LineGeometry,
        f: f64,
        target: f64,
        z_now: f64,
        x0: f64,
        set: &dyn Fn(&mut LineGeometry, f64),
    ) -> Option<f64> {
        let section = |x: f64| {
            let mut g2 = g.clone();
            set(&mut g2, x);
            section::cross_section(&g2, Some(&rough_layers(&g2, f, true)))
        };
        // The search's result is cached as a whole (one entry instead of
        // one per coarse solve): it follows from the worst-case section at
        // the current value, its accurate impedance and the target.
        let k = format!(
            "{what} for target {:016x} from {:016x} | {}",
            target.to_bits(),
            z_now.to_bits(),
            self.key(&section(x0))
        );
        if let Some(c) = self.cache() {
            if let Some(v) = c.get_numbers(&k) {
                if plausible_width(&v, x0, z_now, target, &section) {
                    self.tally.add(1, 0);
                    return v.first().copied();
                }
                self.tally.rejected.fetch_add(1, Ordering::Relaxed);
            }
        }
        self.tally.add(0, 1);
        let x = fieldsolver::width_for_target(
            section,
            |r| LineNumbers::from_solved(r).map(|n| n.z),
            x0,
            z_now,
            target,
            &self.solver,
        );
        if let Some(c) = self.cache() {
            let n = c.put_numbers(&k, x.as_slice());
            self.tally.stored.fetch_add(n, Ordering::Relaxed);
        }
        x
    }

    /// The width and edge-to-edge spacing of a pair that give both its
    /// target Z_diff and a coupling coefficient k = (Z_even − Z_odd) /
    /// (Z_even + Z_odd) (the coupled-line coupling coefficient, D. M.
    /// Pozar, *Microwave Engineering*, 4th ed., 2012, §7.6) on the
    /// worst-case section, from the drawn ones with accurate `z_now` and
    /// `k_now`. Newton's method on coarse solves of the section's mesh
    /// topology (Jacobian by one-sided differences of 1 %), each number
    /// carried to the accurate solve by the anchor's ratio (Z) or offset
    /// (k), steps kept within 0.5 to 2 times; then an accurate solve at the
    /// result, re-anchored once if it is off by more than 0.3 % or 0.003.
    /// `None` when a step leaves the topology or it does not converge.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn pair_for_target(
        &self,
        g: &LineGeometry,
        f: f64,
        target: f64,
        k_target: f64,
        z_now: f64,
        k_now: f64,
    ) -> Option<(f64, f64)> {
        let w0 = g.width_bottom.max(g.width_top);
        let s0 = g.spacing.filter(|s| *s > 0.0)?;
        let geometry = |w: f64, sp: f64| {
            let mut g2 = g.clone();
            set_width(&mut g2, g, w);
            g2.spacing = Some(sp);
            g2
        };
        let section = |w: f64, sp: f64| {
            let g2 = geometry(w, sp);
            section::cross_section(&g2, Some(&rough_layers(&g2, f, true)))
        };
        let zk = |r: &stackup_physics::fieldsolver::SolvedLine| {
            let p = LineNumbers::from_solved(r)?.pair?;
            Some((p.z_diff(), (p.z_even - p.z_odd) / (p.z_even + p.z_odd)))
        };
        let (mut w, mut sp) = (w0, s0);
        let (mut z_acc, mut k_acc) = (z_now, k_now);
        for _round in 0..2 {
            let mesh = fieldsolver::coarse_mesh(&section(w, sp), &self.solver).ok()?;
            let coarse = |w: f64, sp: f64| {
                fieldsolver::solve_coarse(&section(w, sp), &mesh)
                    .ok()
                    .as_ref()
                    .and_then(zk)
            };
            // The anchor's coarse numbers carry the coarse solves to the
            // accurate ones; each step's solve is the next step's start.
            let (mut z, mut k) = coarse(w, sp)?;
            let (rz, dk) = (z_acc / z, k_acc - k);
            let mut converged = false;
            for _ in 0..10 {
                let (fz, fk) = (rz * z - target, k + dk - k_target);
                if (fz / target).abs() < 2e-4 && fk.abs() < 2e-4 {
                    converged = true;
                    break;
                }
                let (hw, hs) = (0.01 * w, 0.01 * sp);
                let (zw, kw) = coarse(w + hw, sp)?;
                let (zs, ks) = coarse(w, sp + hs)?;
                let j = [
                    [rz * (zw - z) / hw, rz * (zs - z) / hs],
                    [(kw - k) / hw, (ks - k) / hs],
                ];
                let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
                if det.abs() < 1e-30 || !det.is_finite() {
                    return None;
                }
                let dw = (-fz * j[1][1] + fk * j[0][1]) / det;
                let ds = (-fk * j[0][0] + fz * j[1][0]) / det;
                w = (w + dw).clamp(0.5 * w, 2.0 * w);
                sp = (sp + ds).clamp(0.5 * sp, 2.0 * sp);
                (z, k) = coarse(w, sp)?;
            }
            if !converged {
                return None;
            }
            let r = fieldsolver::solve(&section(w, sp), &self.solver).ok()?;
            (z_acc, k_acc) = zk(&r)?;
            if (z_acc / target - 1.0).abs() < 3e-3 && (k_acc - k_target).abs() < 3e-3 {
                return Some((w, sp));
            }
        }
        None
    }

    /// The impedance at the build tolerances' corners of the class with
    /// geometry `g` at `f` and accurate worst-case impedance `z`
    /// (`tolerance`), through the disk cache as one entry; a cached entry
    /// is used only if `tolerance::plausible` holds.
    pub(super) fn tolerance_stack(
        &self,
        s: &crate::model::Stackup,
        g: &LineGeometry,
        f: f64,
        z: f64,
    ) -> Option<tolerance::ToleranceStack> {
        let q = tolerance::Quantities::of(s, g);
        let k = format!(
            "tolerance stack v1 {:016x} {} | {}",
            z.to_bits(),
            q.key(),
            self.key(&tolerance::base_section(g, f))
        );
        if let Some(c) = self.cache() {
            if let Some(v) = c.get_numbers(&k) {
                if tolerance::plausible(&q, z, &v) {
                    self.tally.add(1, 0);
                    return Some(tolerance::assemble(&q, z, &v));
                }
                self.tally.rejected.fetch_add(1, Ordering::Relaxed);
            }
        }
        self.tally.add(0, 1);
        let v = tolerance::solve(&q, g, f, z, &self.solver)?;
        if let Some(c) = self.cache() {
            let n = c.put_numbers(&k, &v);
            self.tally.stored.fetch_add(n, Ordering::Relaxed);
        }
        Some(tolerance::assemble(&q, z, &v))
    }

    /// ∂L/∂n of each group of metal faces of a class's smooth section
    /// (`fieldsolver::inductance_derivatives`, Wheeler's rule), through the
    /// disk cache as one entry: per group its index in `MetalFaces::ALL`
    /// and its n×n matrix. A cached entry is used only if its shape fits the
    /// section and every self term is finite and positive; the loss it
    /// gives is further held against the closed forms (`loss::line_loss`).
    pub(super) fn inductance_derivatives(
        &self,
        g: &LineGeometry,
    ) -> Option<Vec<InductanceDerivative>> {
        let cs = section::cross_section(g, None);
        let n = cs.conductors.len();
        let k = format!("wheeler | {}", self.key(&cs));
        let decode = |v: &[f64]| -> Option<Vec<InductanceDerivative>> {
            let per = 1 + n * n;
            if v.is_empty() || v.len() % per != 0 {
                return None;
            }
            let out: Vec<InductanceDerivative> = v
                .chunks(per)
                .map(|c| {
                    let faces = *MetalFaces::ALL.get(c[0] as usize)?;
                    let ok = c[0].fract() == 0.0
                        && c[1..].iter().all(|x| x.is_finite())
                        && (0..n).all(|i| c[1 + i * n + i] > 0.0);
                    ok.then(|| InductanceDerivative {
                        faces,
                        dl_dn: c[1..].to_vec(),
                    })
                })
                .collect::<Option<_>>()?;
            Some(out)
        };
        if let Some(c) = self.cache() {
            if let Some(v) = c.get_numbers(&k) {
                if let Some(d) = decode(&v) {
                    self.tally.add(1, 0);
                    return Some(d);
                }
                self.tally.rejected.fetch_add(1, Ordering::Relaxed);
            }
        }
        self.tally.add(0, 1);
        // Two coarser mesh levels (1 and 1.5) than the impedance solves:
        // the extrapolated derivatives stay within 0.3 % of levels 1 and 2
        // on the sections of `bench/RESULTS.md` at about half the work.
        let opt = SolverOptions {
            refinements: vec![1.0, 1.5],
            ..self.solver.clone()
        };
        let d = fieldsolver::inductance_derivatives(&cs, &opt).ok()?;
        let flat: Vec<f64> = d
            .iter()
            .flat_map(|x| {
                let i = MetalFaces::ALL
                    .iter()
                    .position(|f| *f == x.faces)
                    .unwrap_or(0);
                std::iter::once(i as f64).chain(x.dl_dn.iter().copied())
            })
            .collect();
        if let Some(c) = self.cache() {
            let stored = c.put_numbers(&k, &flat);
            self.tally.stored.fetch_add(stored, Ordering::Relaxed);
        }
        decode(&flat)
    }

    /// Count what this analysis stored against the cache's bound (evicting
    /// if it is passed) and say what it did under
    /// `STACKUP_LINT_CACHE_DEBUG`.
    pub(super) fn settle(&self) {
        let Some(c) = self.cache() else { return };
        if cache::debug() {
            eprintln!(
                "cache: {}: {} hits, {} solved and stored, {} cached results rejected by the plausibility check",
                c.dir().display(),
                self.tally.hits.load(Ordering::Relaxed),
                self.tally.solved.load(Ordering::Relaxed),
                self.tally.rejected.load(Ordering::Relaxed)
            );
        }
        let evicted = c.account(self.tally.stored.swap(0, Ordering::Relaxed));
        if evicted > 0 && cache::debug() {
            eprintln!("cache: {evicted} least recently used entries removed");
        }
    }
}

/// Roughness layers of a geometry at `f`: each face's T_r (best or worst).
pub(super) fn rough_layers(g: &LineGeometry, f: f64, worst: bool) -> RoughLayers {
    let model = RoughLayerModel::default();
    let mut thickness = vec![0.0; 4];
    for face in &g.faces {
        thickness[face.role.slot()] = model
            .thickness(&face.roughness.surface(worst), f, SIGMA)
            .unwrap_or(0.0);
    }
    let eps_factor = model.permittivity(1.0).unwrap_or(4.0);
    RoughLayers {
        thickness,
        eps_factor,
    }
}

/// The sections of a class at frequency `f`: smooth copper, and the
/// declared roughness at its best and worst case (equal when every face is
/// known).
pub fn family_sections(g: &LineGeometry, f: f64) -> [CrossSection; 3] {
    [
        section::cross_section(g, None),
        section::cross_section(g, Some(&rough_layers(g, f, false))),
        section::cross_section(g, Some(&rough_layers(g, f, true))),
    ]
}

/// Largest ratio of the section's overall size to its smallest feature that
/// the field solver is asked to mesh. Real boards stay far below it (about
/// 100); hostile input (a 1 µm trace beside a 19 mm gap) would need a mesh
/// of billions of cells, so it is refused with a clear reason instead.
pub const MAX_FEATURE_RATIO: f64 = 1000.0;

pub(super) fn solvable(g: &LineGeometry) -> Result<(), ClassError> {
    let w = g.width_bottom.max(g.width_top);
    let mut features = vec![g.width_bottom.min(g.width_top).max(0.0), w];
    features.extend(g.spacing);
    features.extend(g.gap);
    if g.thickness > 0.0 {
        features.push(g.thickness);
    }
    features.extend(g.slabs.iter().map(|s| s.thickness));
    let smallest = features
        .iter()
        .copied()
        .filter(|v| *v > 0.0)
        .fold(f64::INFINITY, f64::min);
    let span = w * if g.spacing.is_some() { 2.0 } else { 1.0 }
        + g.spacing.unwrap_or(0.0)
        + 2.0 * g.gap.unwrap_or(0.0);
    let largest = span.max(g.height());
    let ratio = largest / smallest;
    if !ratio.is_finite() || ratio > MAX_FEATURE_RATIO {
        return Err(ClassError::Refused(format!(
            "the cross-section spans {:.0} times its smallest feature ({} against {}), beyond the {MAX_FEATURE_RATIO:.0}:1 the field solver meshes; check the widths, gaps and thicknesses",
            ratio,
            crate::units::fmt_length(largest),
            crate::units::fmt_length(smallest)
        )));
    }
    Ok(())
}

/// Largest ratio between a proposed width and the current one that a
/// cached width for target may have.
const MAX_WIDTH_STEP: f64 = 20.0;

/// Accepted misfit of a cached width for target: the closed-form estimate
/// at that width, scaled by the solved impedance at the current width, must
/// come within this fraction of the target (the forms' own errors largely
/// cancel in the ratio).
const WIDTH_CHECK: f64 = 0.15;

/// Check a cached width for target (`[]` for none, or one width) before
/// it is used: a finite, positive width within [`MAX_WIDTH_STEP`] of the
/// current one, at which the closed-form estimate, scaled by the solved
/// impedance at the current width `w0`, comes within [`WIDTH_CHECK`] of
/// the target.
fn plausible_width(
    v: &[f64],
    w0: f64,
    z_now: f64,
    target: f64,
    section: &dyn Fn(f64) -> CrossSection,
) -> bool {
    let w = match v {
        [] => return true,
        [w] => *w,
        _ => return false,
    };
    if !(w.is_finite() && w > w0 / MAX_WIDTH_STEP && w < w0 * MAX_WIDTH_STEP) {
        return false;
    }
    let z_of = |cs: &CrossSection| {
        // The signal mode's impedance at the middle of the estimate's
        // air and permittivity ranges (the top of the air range for a
        // bound); the ratio of two of them is what is compared.
        estimate::estimate(cs).map(|e| {
            let m = e.signal;
            let z_air = if m.z_air_low > 0.0 {
                (m.z_air_low * m.z_air_high).sqrt()
            } else {
                m.z_air_high
            };
            z_air / (m.eps_low * m.eps_high).sqrt().sqrt()
        })
    };
    match (z_of(&section(w)), z_of(&section(w0))) {
        (Some(at_w), Some(at_w0)) => {
            let predicted = z_now * at_w / at_w0;
            (predicted / target - 1.0).abs() <= WIDTH_CHECK
        }
        _ => true,
    }
}
