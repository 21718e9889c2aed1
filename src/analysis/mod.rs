//! Analysis: turn each net class of a loaded stackup into solved
//! cross-sections and electrical numbers, once, for the rules and the
//! `impedance` command to read.
//!
//! Per class: the section is built from the stackup (`section`), every
//! dielectric's Dk taken at the class's analysis frequency from a causal
//! Djordjevic-Sarkar fit (`materials`), and solved by the 2-D field solver
//! with smooth copper and with the declared copper roughness (the
//! effective-roughness-layer model, `stackup_physics::roughness::RoughLayerModel`),
//! unknown roughness carried as best and worst case. Identical sections are
//! solved once; distinct ones in parallel.

pub mod cache;
pub mod delay;
pub mod materials;
pub mod section;

use std::collections::{BTreeMap, HashMap};
use std::sync::atomic::{AtomicUsize, Ordering};

use stackup_physics::consts::C0;
use stackup_physics::copper::{surface_resistance, SIGMA_ANNEALED_COPPER};
use stackup_physics::fieldsolver::{
    self, estimate, solve, solve_family, CrossSection, SolvedLine, SolverOptions,
};
use stackup_physics::loss;
use stackup_physics::roughness::{hammerstad_factor, RoughLayerModel, RoughSurface};

use crate::model::{Stackup, Structure};
use materials::{DkAt, MaterialModel};
use section::{FaceRoughness, LineGeometry, RoughLayers};

/// Electrical numbers of one solved section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineNumbers {
    /// Z0 (single-ended) or Z_diff (pairs), ohm.
    pub z: f64,
    pub z_even: Option<f64>,
    pub z_odd: Option<f64>,
    /// Effective permittivity of the mode that carries the signal (the odd
    /// mode for pairs).
    pub eps_eff: f64,
    pub eps_eff_even: Option<f64>,
    pub eps_eff_odd: Option<f64>,
    /// Propagation delay of the signal mode, s/m.
    pub delay: f64,
    /// Solver's estimated relative error of the impedance.
    pub rel_error: f64,
}

impl LineNumbers {
    fn from_solved(s: &SolvedLine) -> Option<LineNumbers> {
        if let Some(p) = s.pair {
            return Some(LineNumbers {
                z: p.z_diff,
                z_even: Some(p.z_even),
                z_odd: Some(p.z_odd),
                eps_eff: p.eps_eff_odd,
                eps_eff_even: Some(p.eps_eff_even),
                eps_eff_odd: Some(p.eps_eff_odd),
                delay: p.eps_eff_odd.sqrt() / C0,
                rel_error: s.z_rel_error,
            });
        }
        let single = s.single?;
        Some(LineNumbers {
            z: single.z0,
            z_even: None,
            z_odd: None,
            eps_eff: single.eps_eff,
            eps_eff_even: None,
            eps_eff_odd: None,
            delay: single.eps_eff.sqrt() / C0,
            rel_error: s.z_rel_error,
        })
    }

    /// Delay in ps/mm.
    pub fn ps_per_mm(&self) -> f64 {
        self.delay * 1e9
    }
}

/// Loss per unit length at the analysis frequency, dB/m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LossNumbers {
    pub dielectric: f64,
    pub conductor_smooth: f64,
    /// Worst case of the declared roughness.
    pub conductor_rough: f64,
}

impl LossNumbers {
    pub fn total_rough(&self) -> f64 {
        self.dielectric + self.conductor_rough
    }
}

/// Everything the analysis knows about one net class.
#[derive(Debug, Clone)]
pub struct ClassAnalysis {
    /// Frequency the numbers are evaluated at, Hz.
    pub frequency: f64,
    pub geometry: Result<LineGeometry, String>,
    /// Smooth copper, bulk Dk at the frequency.
    pub smooth: Result<LineNumbers, String>,
    /// Declared roughness, best and worst case (equal when every face is
    /// known). `None` when the section could not be solved.
    pub rough_best: Option<LineNumbers>,
    pub rough_worst: Option<LineNumbers>,
    /// Some copper face of the line has no roughness data (bond treatment).
    pub roughness_unknown: bool,
    /// No face of the line declares roughness.
    pub roughness_undeclared: bool,
    /// Width that brings the worst-case rough line back to its target, m.
    pub width_for_target: Option<f64>,
    pub loss: Option<LossNumbers>,
    /// Dk of each dielectric of the section at the frequency (layer index).
    pub dk: BTreeMap<usize, DkAt>,
    /// Name of the model that produced the numbers.
    pub model: &'static str,
    pub notes: Vec<String>,
}

/// The analysis of one stackup: one entry per net class, same order.
#[derive(Debug, Clone)]
pub struct Analysis {
    pub classes: Vec<ClassAnalysis>,
    pub materials: BTreeMap<String, MaterialModel>,
}

/// The project's field-solver model name, as reported.
pub const FIELD_SOLVER: &str = "2-D field solver (finite volume, Richardson-extrapolated)";

/// Copper conductivity used for skin depth and loss (annealed copper).
pub const SIGMA: f64 = SIGMA_ANNEALED_COPPER;

/// Cache key text of a section. The engine identity (`cache.rs`) holds
/// the default solver options; the run's mesh budget is added here, since
/// a section refused under one budget may be solved under another.
fn key(cs: &CrossSection) -> String {
    format!(
        "mesh budget {} | {cs:?}",
        MAX_MESH_NODES.load(Ordering::Relaxed)
    )
}

/// Threads used for field solves; 0 = one per available core. Results do
/// not depend on it (each section is solved alone, results keyed by
/// geometry); `tests/determinism.rs` checks that.
static SOLVER_THREADS: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

/// Set the number of threads for field solves (0 = automatic).
pub fn set_solver_threads(n: usize) {
    SOLVER_THREADS.store(n, std::sync::atomic::Ordering::Relaxed);
}

/// Default of [`set_max_mesh_nodes`].
pub const DEFAULT_MAX_MESH_NODES: usize = 400_000;

static MAX_MESH_NODES: AtomicUsize = AtomicUsize::new(DEFAULT_MAX_MESH_NODES);

/// Set the largest field-solver mesh (nodes of one grid,
/// `SolverOptions::max_mesh_nodes`); a section that needs more is reported
/// as not solved. Part of the solver options, so of the cache key.
pub fn set_max_mesh_nodes(n: usize) {
    MAX_MESH_NODES.store(n, Ordering::Relaxed);
}

/// The solver options of this run.
fn solver_options() -> SolverOptions {
    SolverOptions {
        max_mesh_nodes: MAX_MESH_NODES.load(Ordering::Relaxed),
        ..SolverOptions::default()
    }
}

/// Bytes this process stored in the disk cache and has not yet counted
/// against its size bound (see `cache::DiskCache::account`).
static CACHE_PENDING: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);

/// Cache entries one analysis read (`hits`) and solved (`solved`), for
/// `STACKUP_LINT_CACHE_DEBUG`.
#[derive(Default)]
struct Tally {
    hits: AtomicUsize,
    solved: AtomicUsize,
    /// Cached results that failed the plausibility check (solved again).
    rejected: AtomicUsize,
}

impl Tally {
    fn add(&self, hits: usize, solved: usize) {
        self.hits.fetch_add(hits, Ordering::Relaxed);
        self.solved.fetch_add(solved, Ordering::Relaxed);
    }
}

/// Count what this process stored against the cache's bound (evicting if
/// it is passed).
fn settle_cache(cache: Option<&cache::DiskCache>) -> usize {
    let added = CACHE_PENDING.swap(0, std::sync::atomic::Ordering::Relaxed);
    cache.map_or(0, |c| c.account(added))
}

/// Cache key of member `i` of a family.
fn member_key(family: &str, i: usize) -> String {
    format!("{family}#{i}")
}

/// Solve one family (sections differing only in their dielectrics) on one
/// shared mesh, through the disk cache when one is in use. If the family
/// cannot be solved as one, each member is solved alone so that each gets
/// its own result or reason.
fn solve_family_cached(
    cache: Option<&cache::DiskCache>,
    tally: &Tally,
    family: &str,
    members: &[CrossSection],
    opts: &SolverOptions,
) -> Vec<Result<SolvedLine, String>> {
    if let Some(c) = cache {
        let hits: Option<Vec<_>> = (0..members.len())
            .map(|i| c.get(&member_key(family, i)))
            .collect();
        if let Some(v) = hits {
            // A cache directory may have been written by someone else (a CI
            // cache restored from an earlier job): a cached number is used
            // only if it passes the checks a fresh one would, and a cached
            // error is never believed (solving again costs little when the
            // section is refused early).
            let trusted = v.iter().zip(members).all(|(r, cs)| match r {
                Ok(s) => estimate::check_solution(cs, s).is_ok(),
                Err(_) => false,
            });
            if trusted {
                tally.add(members.len(), 0);
                return v;
            }
            if v.iter().any(Result::is_ok) {
                tally.rejected.fetch_add(1, Ordering::Relaxed);
            }
        }
    }
    tally.add(0, members.len());
    let v: Vec<Result<SolvedLine, String>> = match solve_family(members, opts) {
        Ok(v) => v.into_iter().map(Ok).collect(),
        Err(_) => members
            .iter()
            .map(|cs| solve(cs, opts).map_err(|e| e.message))
            .collect(),
    };
    if let Some(c) = cache {
        for (i, r) in v.iter().enumerate() {
            let n = c.put(&member_key(family, i), r);
            CACHE_PENDING.fetch_add(n, std::sync::atomic::Ordering::Relaxed);
        }
    }
    v
}

/// A family's key: its members' keys in order.
fn family_key(members: &[CrossSection]) -> String {
    members.iter().map(key).collect::<Vec<_>>().join(" & ")
}

/// Solve distinct families, in parallel, deterministically (results keyed
/// by family). Cached results are read inside the workers; only misses are
/// solved.
fn solve_all(
    families: Vec<Vec<CrossSection>>,
    tally: &Tally,
) -> HashMap<String, Vec<Result<SolvedLine, String>>> {
    let cache = cache::active();
    let cache = cache.as_deref();
    let mut seen = std::collections::HashSet::new();
    let unique: Vec<(String, Vec<CrossSection>)> = families
        .into_iter()
        .map(|f| (family_key(&f), f))
        .filter(|(k, _)| seen.insert(k.clone()))
        .collect();
    let opts = solver_options();
    let solved = in_parallel(&unique, |(k, f)| {
        solve_family_cached(cache, tally, k, f, &opts)
    });
    unique.into_iter().map(|(k, _)| k).zip(solved).collect()
}

/// Map `f` over `items` on the solver threads (`--threads`); results in
/// input order, so output does not depend on the thread count.
pub fn in_parallel<T: Sync, R: Send>(items: &[T], f: impl Fn(&T) -> R + Sync) -> Vec<R> {
    let wanted = SOLVER_THREADS.load(std::sync::atomic::Ordering::Relaxed);
    let threads = if wanted > 0 {
        wanted
    } else {
        std::thread::available_parallelism().map_or(1, |n| n.get())
    }
    .min(items.len().max(1));
    // Nested calls (a file's analysis on a worker that analyses files)
    // run on their caller's thread: the outer call already keeps every
    // core busy, and spawning per file costs more than it gains.
    if threads <= 1 || IN_WORKER.with(|w| w.get()) {
        return items.iter().map(&f).collect();
    }
    let f = &f;
    // Items are handed out one at a time from a shared counter, so a few
    // slow items do not leave the other workers idle; results are put back
    // in item order, so the output does not depend on the schedule. The
    // calling thread is one of the workers; a thread that cannot be
    // spawned (a process or memory limit) only leaves fewer workers.
    let next = AtomicUsize::new(0);
    let next = &next;
    let work = move || {
        let was = IN_WORKER.with(|w| w.replace(true));
        let mut done = Vec::new();
        loop {
            let i = next.fetch_add(1, Ordering::Relaxed);
            let Some(x) = items.get(i) else { break };
            done.push((i, f(x)));
        }
        IN_WORKER.with(|w| w.set(was));
        done
    };
    let mut parts: Vec<Vec<(usize, R)>> = std::thread::scope(|scope| {
        let mut handles = Vec::new();
        for _ in 1..threads {
            match std::thread::Builder::new().spawn_scoped(scope, work) {
                Ok(h) => handles.push(h),
                Err(_) => break,
            }
        }
        let mut parts = vec![work()];
        parts.extend(
            handles
                .into_iter()
                .map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e))),
        );
        parts
    });
    let mut out: Vec<(usize, R)> = parts.drain(..).flatten().collect();
    out.sort_by_key(|(i, _)| *i);
    out.into_iter().map(|(_, r)| r).collect()
}

thread_local! {
    /// Set on the threads `in_parallel` spawns.
    static IN_WORKER: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// Roughness layers of a geometry at `f`: each face's T_r (best or worst).
fn rough_layers(g: &LineGeometry, f: f64, worst: bool) -> RoughLayers {
    let model = RoughLayerModel::default();
    // Faces are in the order plane below, trace bottom, trace top, [plane above].
    let mut thickness = vec![0.0; 4];
    for (k, face) in g.faces.iter().enumerate() {
        let slot = if k == 3 || face.role == "plane above" {
            3
        } else {
            k
        };
        thickness[slot] = model
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

struct Pending {
    geometry: LineGeometry,
    /// Why the section is not solved (outside the solver's range).
    blocked: Option<String>,
    /// Key of the family (smooth, best-case rough, worst-case rough
    /// sections; equal sections once) and each one's member index.
    family: String,
    smooth: usize,
    best: usize,
    worst: usize,
}

/// Analyse every net class of `s`.
pub fn analyze(s: &Stackup) -> Analysis {
    let materials: BTreeMap<String, MaterialModel> = s
        .materials
        .iter()
        .map(|(k, m)| (k.clone(), MaterialModel::fit(m)))
        .collect();
    let dk_at = |layer: usize, f: f64| -> Option<DkAt> {
        let d = s.dielectric(layer)?;
        Some(materials.get(&d.material)?.at(f))
    };
    // First pass: build sections.
    let mut pending: Vec<Result<Pending, String>> = Vec::new();
    let mut families = Vec::new();
    for nc in &s.net_classes {
        let f = nc.analysis_frequency();
        let eps_of = |layer: usize| dk_at(layer, f).map_or(1.0, |d| d.dk);
        match section::geometry(s, nc, &eps_of) {
            Ok(g) if solvable(&g).is_err() => {
                let why = solvable(&g).err().unwrap_or_default();
                pending.push(Ok(Pending {
                    family: String::new(),
                    smooth: 0,
                    best: 0,
                    worst: 0,
                    blocked: Some(why),
                    geometry: g,
                }));
            }
            Ok(g) => {
                let [smooth, best, worst] = family_sections(&g, f);
                let mut members: Vec<CrossSection> = vec![smooth];
                let mut index_of = |cs: CrossSection| match members.iter().position(|m| *m == cs) {
                    Some(i) => i,
                    None => {
                        members.push(cs);
                        members.len() - 1
                    }
                };
                let (best, worst) = (index_of(best), index_of(worst));
                let p = Pending {
                    family: family_key(&members),
                    smooth: 0,
                    best,
                    worst,
                    blocked: None,
                    geometry: g,
                };
                families.push(members);
                pending.push(Ok(p));
            }
            Err(e) => pending.push(Err(e.0)),
        }
    }
    let tally = Tally::default();
    let solved = solve_all(families, &tally);
    let numbers = |family: &str, i: usize| -> Result<LineNumbers, String> {
        match solved.get(family).and_then(|v| v.get(i)) {
            Some(Ok(s)) => LineNumbers::from_solved(s)
                .ok_or_else(|| "the solver returned no impedance".to_string()),
            Some(Err(e)) if e.contains("the solver's limit of") => Err(format!(
                "{e} (raise the limit with --max-mesh-nodes if the section is genuine)"
            )),
            Some(Err(e)) => Err(e.clone()),
            None => Err("not solved".into()),
        }
    };
    // Width back to target (secant on the worst-case section) for every
    // class off its target, the classes spread over the solver threads.
    let searches: Vec<(usize, &LineGeometry, f64, f64, f64)> = s
        .net_classes
        .iter()
        .zip(&pending)
        .enumerate()
        .filter_map(|(i, (nc, p))| {
            let p = p.as_ref().ok().filter(|p| p.blocked.is_none())?;
            let t = nc.impedance?;
            let w = numbers(&p.family, p.worst).ok()?;
            ((w.z - t.target).abs() > 1e-3 * t.target).then_some((
                i,
                &p.geometry,
                nc.analysis_frequency(),
                t.target,
                w.z,
            ))
        })
        .collect();
    let widths = in_parallel(&searches, |&(i, g, f, target, z)| {
        (i, width_for_target(g, f, target, z, &tally))
    });
    let widths: HashMap<usize, Option<f64>> = widths.into_iter().collect();
    // Second pass: assemble each class.
    let mut classes = Vec::new();
    for (i, (nc, p)) in s.net_classes.iter().zip(pending).enumerate() {
        let f = nc.analysis_frequency();
        let mut notes = Vec::new();
        if !nc.max_frequency_given && nc.nyquist.is_none() {
            notes.push("no max-frequency or data-rate given: evaluated at 1 GHz".to_string());
        }
        let p = match p {
            Ok(p) => p,
            Err(e) => {
                classes.push(ClassAnalysis::unsolved(f, Err(e.clone()), e, notes));
                continue;
            }
        };
        let g = p.geometry;
        notes.extend(g.notes.iter().cloned());
        if let Some(why) = p.blocked {
            classes.push(ClassAnalysis::unsolved(f, Ok(g), why, notes));
            continue;
        }
        let smooth = numbers(&p.family, p.smooth);
        let best = numbers(&p.family, p.best).ok();
        let worst = numbers(&p.family, p.worst).ok();
        let roughness_unknown = g
            .faces
            .iter()
            .any(|f| f.roughness == FaceRoughness::Unknown);
        let roughness_undeclared = g
            .faces
            .iter()
            .all(|f| f.roughness == FaceRoughness::NotDeclared);
        let mut dk = BTreeMap::new();
        for sl in &g.slabs {
            if let Some(d) = dk_at(sl.layer, f) {
                dk.insert(sl.layer, d);
            }
        }
        let width_for_target = match (nc.impedance, worst) {
            (Some(t), Some(w)) if (w.z - t.target).abs() > 1e-3 * t.target => {
                widths.get(&i).copied().flatten()
            }
            (Some(_), Some(_)) => Some(nc.width),
            _ => None,
        };
        let loss = smooth
            .as_ref()
            .ok()
            .map(|sm| line_loss(s, nc.structure, &g, &dk, f, sm, worst.unwrap_or(*sm)));
        classes.push(ClassAnalysis {
            frequency: f,
            geometry: Ok(g),
            smooth,
            rough_best: best,
            rough_worst: worst,
            roughness_unknown,
            roughness_undeclared,
            width_for_target,
            loss,
            dk,
            model: FIELD_SOLVER,
            notes,
        });
    }
    let active = cache::active();
    if let (Some(c), true) = (active.as_deref(), cache::debug()) {
        eprintln!(
            "cache: {}: {} hits, {} solved and stored, {} cached results rejected by the plausibility check",
            c.dir().display(),
            tally.hits.load(Ordering::Relaxed),
            tally.solved.load(Ordering::Relaxed),
            tally.rejected.load(Ordering::Relaxed)
        );
    }
    let evicted = settle_cache(active.as_deref());
    if evicted > 0 && cache::debug() {
        eprintln!("cache: {evicted} least recently used entries removed");
    }
    Analysis { classes, materials }
}

/// Largest ratio of the section's overall size to its smallest feature that
/// the field solver is asked to mesh. Real boards stay far below it (about
/// 100); hostile input (a 1 µm trace beside a 19 mm gap) would need a mesh
/// of billions of cells, so it is refused with a clear reason instead.
pub const MAX_FEATURE_RATIO: f64 = 1000.0;

fn solvable(g: &LineGeometry) -> Result<(), String> {
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
        return Err(format!(
            "the cross-section spans {:.0} times its smallest feature ({} against {}), beyond the {MAX_FEATURE_RATIO:.0}:1 the field solver meshes; check the widths, gaps and thicknesses",
            ratio,
            crate::input::units::fmt_length(largest),
            crate::input::units::fmt_length(smallest)
        ));
    }
    Ok(())
}

/// Width (base width, top width scaled alike) at which the worst-case rough
/// section meets `target` (`fieldsolver::width_for_target`, its solves
/// through the disk cache).
fn width_for_target(
    g: &LineGeometry,
    f: f64,
    target: f64,
    z_now: f64,
    tally: &Tally,
) -> Option<f64> {
    let w0 = g.width_bottom.max(g.width_top);
    let section = |w: f64| {
        let mut g2 = g.clone();
        let scale = w / w0;
        g2.width_bottom = g.width_bottom * scale;
        g2.width_top = g.width_top * scale;
        section::cross_section(&g2, Some(&rough_layers(&g2, f, true)))
    };
    let opts = solver_options();
    let active = cache::active();
    // The search's result is cached as a whole (one entry instead of one
    // per coarse solve): it follows from the worst-case section at the
    // current width, its accurate impedance and the target.
    let k = format!(
        "width for target {:016x} from {:016x} | {}",
        target.to_bits(),
        z_now.to_bits(),
        key(&section(w0))
    );
    if let Some(c) = active.as_deref() {
        if let Some(v) = c.get_numbers(&k) {
            if plausible_width(&v, w0, z_now, target, &section) {
                tally.add(1, 0);
                return v.first().copied();
            }
            tally.rejected.fetch_add(1, Ordering::Relaxed);
        }
    }
    tally.add(0, 1);
    let w = fieldsolver::width_for_target(
        section,
        |r| LineNumbers::from_solved(r).map(|n| n.z),
        w0,
        z_now,
        target,
        &opts,
    );
    if let Some(c) = active.as_deref() {
        let n = c.put_numbers(&k, w.as_slice());
        CACHE_PENDING.fetch_add(n, Ordering::Relaxed);
    }
    w
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

/// Loss per metre: dielectric loss from the filling-weighted loss tangent,
/// conductor loss from the closed forms (Hammerstad-Jensen microstrip,
/// Pozar stripline) with the Hammerstad-Bekkadal roughness factor averaged
/// over the line's faces (common practice: equal weight to trace and planes).
fn line_loss(
    s: &Stackup,
    structure: Structure,
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    f: f64,
    smooth: &LineNumbers,
    rough: LineNumbers,
) -> LossNumbers {
    let _ = s;
    // Filling-weighted loss tangent of the dielectrics between the planes
    // (weights h·eps: the share of electric energy in each, to first order).
    let (mut num, mut den) = (0.0, 0.0);
    for sl in &g.slabs {
        if let Some(d) = dk.get(&sl.layer) {
            num += sl.thickness * d.dk * d.df;
            den += sl.thickness * d.dk;
        }
    }
    let tand = if den > 0.0 { num / den } else { 0.0 };
    let eps_bulk = if den > 0.0 {
        den / g.slabs.iter().map(|s| s.thickness).sum::<f64>()
    } else {
        1.0
    };
    let alpha_d = if g.top_plane.is_some() {
        // Homogeneous-equivalent stripline: pi f sqrt(eps_eff) tan(d) / c0.
        loss::dielectric_loss_stripline(f, smooth.eps_eff, tand).unwrap_or(0.0)
    } else {
        loss::dielectric_loss_microstrip(
            f,
            eps_bulk.max(smooth.eps_eff + 1e-6),
            smooth.eps_eff,
            tand,
        )
        .unwrap_or(0.0)
    };
    let rs = surface_resistance(f, SIGMA).unwrap_or(0.0);
    let delta = stackup_physics::copper::skin_depth(f, SIGMA).unwrap_or(1e-6);
    // Hammerstad-Bekkadal factor from Rq (saturates at 2). The Cannonball-
    // Huray factor with r = Rz/4.83 gives about 6 for standard ED foil at
    // 14 GHz, well above the 2-3 usually measured (from memory), so it is not
    // the default until calibrated; see DEVELOPERS.md.
    let k_of = |r: RoughSurface| -> f64 {
        let rq = r.rq().unwrap_or(0.0);
        if rq <= 0.0 {
            return 1.0;
        }
        hammerstad_factor(rq, delta).unwrap_or(1.0)
    };
    let mean = |v: Vec<f64>| {
        if v.is_empty() {
            1.0
        } else {
            v.iter().sum::<f64>() / v.len() as f64
        }
    };
    let trace_k = mean(
        g.faces
            .iter()
            .filter(|x| x.role.starts_with("trace"))
            .map(|x| k_of(x.roughness.surface(true)))
            .collect(),
    );
    let plane_k = mean(
        g.faces
            .iter()
            .filter(|x| x.role.starts_with("plane"))
            .map(|x| k_of(x.roughness.surface(true)))
            .collect(),
    );
    let k_rough = 0.5 * (trace_k + plane_k);
    let w = 0.5 * (g.width_bottom + g.width_top);
    let z_line = smooth.z_odd.unwrap_or(smooth.z);
    let alpha_c = |k: f64| -> f64 {
        if let Some(_top) = g.top_plane {
            let b = g.height();
            let eps = smooth.eps_eff;
            loss::conductor_loss_stripline_pozar(rs * k, eps, z_line, w, b, g.thickness)
                .unwrap_or(0.0)
        } else {
            loss::conductor_loss_microstrip_hj(rs, z_line, w, k).unwrap_or(0.0)
        }
    };
    let _ = (structure, rough);
    LossNumbers {
        dielectric: loss::np_per_m_to_db_per_m(alpha_d),
        conductor_smooth: loss::np_per_m_to_db_per_m(alpha_c(1.0)),
        conductor_rough: loss::np_per_m_to_db_per_m(alpha_c(k_rough)),
    }
}

impl ClassAnalysis {
    /// A class with no numbers: its section could not be built or solved.
    fn unsolved(
        frequency: f64,
        geometry: Result<LineGeometry, String>,
        why: String,
        notes: Vec<String>,
    ) -> Self {
        ClassAnalysis {
            frequency,
            geometry,
            smooth: Err(why),
            rough_best: None,
            rough_worst: None,
            roughness_unknown: false,
            roughness_undeclared: true,
            width_for_target: None,
            loss: None,
            dk: BTreeMap::new(),
            model: FIELD_SOLVER,
            notes,
        }
    }

    /// Thickness-weighted bulk Dk of the dielectrics that carry the line's
    /// field: all slabs between two planes; the slabs under the trace for
    /// an open (microstrip-like) section.
    pub fn bulk_dk(&self) -> Option<f64> {
        let g = self.geometry.as_ref().ok()?;
        let slabs = if g.top_plane.is_some() {
            &g.slabs[..]
        } else {
            &g.slabs[..g.trace_slot]
        };
        let (mut num, mut den) = (0.0, 0.0);
        for sl in slabs {
            num += sl.thickness * sl.eps;
            den += sl.thickness;
        }
        (den > 0.0).then(|| num / den)
    }

    /// Apparent Dk of the line (best, worst): the Dk a smooth-copper model
    /// of this same section needs to reproduce the rough-copper delay, by
    /// inverting the filling factor q = (eps_eff − 1)/(Dk − 1) of the smooth
    /// solution (Wheeler's filling-factor form of eps_eff, Proc. IRE 1942 /
    /// IEEE T-MTT 1965).
    pub fn apparent_dk(&self) -> Option<(f64, f64)> {
        let smooth = self.smooth.as_ref().ok()?;
        let bulk = self.bulk_dk()?;
        if bulk <= 1.0 + 1e-9 {
            return None;
        }
        let q = (smooth.eps_eff - 1.0) / (bulk - 1.0);
        if q <= 0.0 {
            return None;
        }
        let app = |n: &LineNumbers| 1.0 + (n.eps_eff - 1.0) / q;
        let best = self.rough_best.as_ref().map_or(bulk, app);
        let worst = self.rough_worst.as_ref().map_or(bulk, app);
        Some((best.min(worst), best.max(worst)))
    }
}

/// A dielectric's copper contact: which of its faces touch copper and how
/// rough, and the apparent Dk that follows.
#[derive(Debug, Clone)]
pub struct DielectricContact {
    pub layer: usize,
    pub bulk: DkAt,
    /// Copper faces touching it: (copper layer, face pointer, roughness).
    pub faces: Vec<(usize, Option<String>, FaceRoughness)>,
    /// Faces that touch another dielectric (or the board surface).
    pub dielectric_faces: usize,
    pub apparent_best: f64,
    pub apparent_worst: f64,
    pub frequency: f64,
}

/// Copper contact and apparent Dk of dielectric layer `layer` at `f`, by the
/// effective-roughness-layer model in its parallel-plate form
/// (`RoughLayerModel::apparent_dk_parallel_plate`).
pub fn dielectric_contact(
    s: &Stackup,
    a: &Analysis,
    layer: usize,
    f: f64,
) -> Option<DielectricContact> {
    let d = s.dielectric(layer)?;
    let bulk = a.materials.get(&d.material)?.at(f);
    let mut faces = Vec::new();
    let mut dielectric_faces = 0;
    let above = layer
        .checked_sub(1)
        .and_then(|j| s.copper(j).map(|c| (j, c.down.as_ref())));
    let below = s.copper(layer + 1).map(|c| (layer + 1, c.up.as_ref()));
    for side in [above, below] {
        match side {
            Some((j, face)) => {
                faces.push((j, face.map(|f| f.pointer.clone()), FaceRoughness::of(face)))
            }
            None => dielectric_faces += 1,
        }
    }
    let model = RoughLayerModel::default();
    let app = |worst: bool| -> f64 {
        let surfaces: Vec<RoughSurface> = faces.iter().map(|(_, _, r)| r.surface(worst)).collect();
        model
            .apparent_dk_parallel_plate(bulk.dk, d.thickness, &surfaces, f, SIGMA)
            .unwrap_or(bulk.dk)
    };
    Some(DielectricContact {
        layer,
        bulk,
        apparent_best: app(false),
        apparent_worst: app(true),
        faces,
        dielectric_faces,
        frequency: f,
    })
}
