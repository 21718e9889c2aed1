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

pub mod broadside;
pub mod cache;
pub mod coupons;
pub mod delay;
pub mod dielectrics;
mod dispersion;
pub mod limits;
mod loss;
pub mod materials;
pub mod section;
mod solve;
pub mod sweep;
pub mod tolerance;
pub mod vias;
pub mod weave;

pub use solve::{family_sections, AnalysisOptions, DEFAULT_MAX_MESH_NODES, MAX_FEATURE_RATIO};
use solve::{solvable, Solver};

use std::collections::{BTreeMap, HashMap};

use stackup_physics::consts::C0;
use stackup_physics::copper::SIGMA_ANNEALED_COPPER;
use stackup_physics::coupled::ModalPair;
use stackup_physics::fieldsolver::{
    CrossSection, InductanceDerivative, SolveError, SolveErrorKind, SolvedLine,
};

use crate::model::Stackup;
use materials::{DkAt, MaterialModel};
use section::{FaceRoughness, LineGeometry};

/// Electrical numbers of one solved section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineNumbers {
    /// Z0 (single-ended) or Z_diff (pairs), ohm.
    pub z: f64,
    /// Effective permittivity of the mode that carries the signal (the odd
    /// mode for pairs).
    pub eps_eff: f64,
    /// A pair's even and odd modes.
    pub pair: Option<ModalPair>,
    /// Propagation delay of the signal mode, s/m.
    pub delay: f64,
    /// Solver's estimated relative error of the impedance.
    pub rel_error: f64,
}

impl LineNumbers {
    fn from_solved(s: &SolvedLine) -> Option<LineNumbers> {
        if let Some(p) = s.pair {
            return Some(LineNumbers {
                z: p.z_diff(),
                eps_eff: p.eps_eff_odd,
                pair: Some(p),
                delay: p.eps_eff_odd.sqrt() / C0,
                rel_error: s.z_rel_error,
            });
        }
        let single = s.single?;
        Some(LineNumbers {
            z: single.z0,
            eps_eff: single.eps_eff,
            pair: None,
            delay: single.eps_eff.sqrt() / C0,
            rel_error: s.z_rel_error,
        })
    }

    /// The impedance of one line of the signal mode: Z0, or a pair's
    /// Z_odd.
    pub fn z_line(&self) -> f64 {
        self.pair.map_or(self.z, |p| p.z_odd)
    }

    /// Delay in ps/mm.
    pub fn ps_per_mm(&self) -> f64 {
        self.delay * 1e9
    }
}

/// Loss per unit length at the analysis frequency, dB/m.
#[derive(Debug, Clone, PartialEq)]
pub struct LossNumbers {
    pub dielectric: f64,
    pub conductor_smooth: f64,
    /// Worst case of the declared roughness.
    pub conductor_rough: f64,
    /// The rough conductor loss split over the groups of metal faces
    /// (solver frame), when it comes from the solved section.
    pub conductor_faces: Option<Vec<(stackup_physics::fieldsolver::MetalFaces, f64)>>,
    /// How the conductor loss was computed.
    pub conductor_model: &'static str,
}

impl LossNumbers {
    pub fn total_rough(&self) -> f64 {
        self.dielectric + self.conductor_rough
    }
}

/// Why a class has no numbers.
#[derive(Debug, Clone, PartialEq)]
pub enum ClassError {
    /// The section could not be built from the stackup (the layer is not
    /// copper, no plane where the structure needs one).
    Section(String),
    /// The section spans too wide a range of sizes to mesh
    /// ([`MAX_FEATURE_RATIO`]).
    Refused(String),
    /// The field solver refused the section or failed on it.
    Solver(SolveError),
    /// The solver gave no impedance for the section's conductors.
    NoImpedance,
}

impl std::fmt::Display for ClassError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ClassError::Section(m) | ClassError::Refused(m) => f.write_str(m),
            ClassError::Solver(e) => match e.kind {
                SolveErrorKind::MeshBudget { .. } => write!(
                    f,
                    "{} (raise the limit with --max-mesh-nodes if the section is genuine)",
                    e.message
                ),
                _ => f.write_str(&e.message),
            },
            ClassError::NoImpedance => f.write_str("the solver returned no impedance"),
        }
    }
}

/// Everything the analysis knows about one net class.
#[derive(Debug, Clone)]
pub struct ClassAnalysis {
    /// Frequency the numbers are evaluated at, Hz.
    pub frequency: f64,
    pub geometry: Result<LineGeometry, ClassError>,
    /// Smooth copper, bulk Dk at the frequency.
    pub smooth: Result<LineNumbers, ClassError>,
    /// Declared roughness, best and worst case (equal when every face is
    /// known). `None` when the section could not be solved.
    pub rough_best: Option<LineNumbers>,
    pub rough_worst: Option<LineNumbers>,
    /// Some copper face of the line is carried as a best/worst range: a
    /// bond treatment without data, or a face with no data at all.
    pub roughness_unknown: bool,
    /// The line's faces with no roughness data, and the generic surface
    /// each is carried as.
    pub implied_faces: Vec<(section::FaceRole, section::GenericFace)>,
    /// Width that brings the worst-case rough line back to its target, m.
    pub width_for_target: Option<f64>,
    /// For a pair: the spacing that brings it back at its drawn width, m.
    pub spacing_for_target: Option<f64>,
    /// A pair with a stated coupling: the width and edge-to-edge spacing
    /// (m) that meet both its target and that coupling coefficient.
    pub pair_for_target: Option<(f64, f64)>,
    pub loss: Option<LossNumbers>,
    /// For a class with a `loss-budget`: the frequency it is judged at (the
    /// Nyquist frequency of a data rate, else the analysis frequency) and
    /// the loss per metre there.
    pub budget_loss: Option<(f64, LossNumbers)>,
    /// Dk of each dielectric of the section at the frequency (layer index).
    pub dk: BTreeMap<usize, DkAt>,
    /// Name of the model that produced the numbers.
    pub model: &'static str,
    pub notes: Vec<String>,
    /// Where the structure stops being one quasi-TEM line (and the via
    /// fence check), when the section was built.
    pub limits: Option<limits::StructureLimits>,
    /// Mode skew of a differential stripline.
    pub mode_skew: Option<limits::ModeSkew>,
    /// Crosstalk to the neighbouring pair at the class's `pair-pitch`.
    pub pair_crosstalk: Option<limits::PairCrosstalk>,
    /// Each ply of the section that touches rough copper, with the line
    /// solved with that ply alone at its apparent Dk (smooth copper, every
    /// other ply at its bulk Dk): the ply's own share of the line's shift.
    pub ply_shares: Vec<PlyShare>,
    /// What the numbers at other frequencies are derived from (`sweep`).
    pub basis: Option<SweepBasis>,
    /// Z at the build tolerances' corners (classes with a target).
    pub tolerance: Option<tolerance::ToleranceStack>,
}

/// A solved class's quasi-static results, from which its numbers at any
/// frequency follow without another solve (see `sweep`).
#[derive(Debug, Clone)]
pub struct SweepBasis {
    /// Smooth and worst-case rough copper, before dispersion.
    pub smooth: LineNumbers,
    pub worst: Option<LineNumbers>,
    /// The signal mode's share of electric energy per dielectric region.
    pub energy: Option<Vec<f64>>,
    /// A pair's even mode's shares.
    pub energy_even: Option<Vec<f64>>,
    /// ∂L/∂n per group of metal faces (Wheeler's rule).
    pub wheeler: Option<Vec<InductanceDerivative>>,
}

/// One ply's share of a line's roughness shift.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlyShare {
    /// Stackup layer index of the ply.
    pub layer: usize,
    /// Its bulk and (worst-case) apparent Dk at the class's frequency.
    pub bulk: f64,
    pub apparent: f64,
    /// The line with only this ply raised to its apparent Dk.
    pub numbers: LineNumbers,
}

/// The analysis of one stackup: one entry per net class, same order.
#[derive(Debug, Clone)]
pub struct Analysis {
    pub classes: Vec<ClassAnalysis>,
    pub materials: BTreeMap<String, MaterialModel>,
    /// Every dielectric ply but solder mask, with its copper contact and
    /// apparent Dk (one frequency policy for rules and outputs).
    pub plies: Vec<dielectrics::Ply>,
    /// Facing signal layers (no plane between them) with a class on at
    /// least one: the coupling of their widest traces stacked.
    pub broadside: Vec<broadside::Broadside>,
    /// The delays of each matched group's nets, same order as the groups.
    pub groups: Vec<delay::GroupDelays>,
    /// Fibre-weave skew per net class (same order; `None` for classes that
    /// are not pairs or have no ply naming a glass style).
    pub weave: Vec<Option<weave::WeaveSkew>>,
    /// The through-via stubs of each net class, same order as the classes
    /// (`None` on an outer layer).
    pub via_stubs: Vec<Option<vias::StubResonance>>,
    /// The measured coupons against the model, same order as
    /// `Stackup::coupons`.
    pub coupons: Vec<coupons::CouponAnalysis>,
}

/// The project's field-solver model name, as reported.
pub const FIELD_SOLVER: &str = "2-D field solver (finite volume, Richardson-extrapolated)";

/// Copper conductivity used for skin depth and loss (annealed copper).
pub const SIGMA: f64 = SIGMA_ANNEALED_COPPER;

struct Pending {
    geometry: LineGeometry,
    /// Plies solved alone at their apparent Dk: (layer, bulk, apparent,
    /// member index).
    plies: Vec<(usize, f64, f64, usize)>,
    /// Two single traces at the three gaps of the neighbouring pair
    /// (`pair-pitch`): member indices.
    neighbours: Option<[usize; 3]>,
    /// Why the section is not solved (outside the solver's range).
    blocked: Option<ClassError>,
    /// Key of the family (smooth, best-case rough, worst-case rough
    /// sections; equal sections once) and each one's member index.
    family: String,
    smooth: usize,
    best: usize,
    worst: usize,
}

/// Analyse every net class of `s`, solving as `opts` says.
pub fn analyze(s: &Stackup, opts: &AnalysisOptions) -> Analysis {
    let solver = Solver::new(opts);
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
    let mut pending: Vec<Result<Pending, ClassError>> = Vec::new();
    let mut families = Vec::new();
    for nc in &s.net_classes {
        let f = nc.analysis_frequency();
        let eps_of = |layer: usize| dk_at(layer, f).map_or(1.0, |d| d.dk);
        match section::geometry(s, nc, &eps_of).map(|g| (solvable(&g), g)) {
            Ok((Err(why), g)) => {
                pending.push(Ok(Pending {
                    plies: Vec::new(),
                    neighbours: None,
                    family: String::new(),
                    smooth: 0,
                    best: 0,
                    worst: 0,
                    blocked: Some(why),
                    geometry: g,
                }));
            }
            Ok((Ok(()), g)) => {
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
                // Each ply touching rough copper, raised alone.
                let mut plies = Vec::new();
                for (k, sl) in g.slabs.iter().enumerate() {
                    let mask = s
                        .dielectric(sl.layer)
                        .is_some_and(|d| d.kind == crate::model::DielectricKind::SolderMask);
                    if k == g.trace_slot || mask {
                        continue;
                    }
                    let Some(c) = dielectrics::dielectric_contact(s, &materials, sl.layer, f)
                    else {
                        continue;
                    };
                    if c.apparent_worst <= c.bulk.dk * (1.0 + 1e-4) {
                        continue;
                    }
                    let mut raised = g.clone();
                    raised.slabs[k].eps = c.apparent_worst;
                    let m = index_of(section::cross_section(&raised, None));
                    plies.push((sl.layer, c.bulk.dk, c.apparent_worst, m));
                }
                // The neighbouring pair: two of its traces at each of the
                // three edge gaps the superposition needs.
                let neighbours = nc.pair_pitch.zip(nc.spacing).map(|(pitch, sp)| {
                    let gap = pitch - 2.0 * nc.width - sp;
                    stackup_physics::crosstalk::pair_gaps(gap, nc.width, sp).map(|d| {
                        let mut two = g.clone();
                        two.spacing = Some(d);
                        index_of(section::cross_section(&two, None))
                    })
                });
                let p = Pending {
                    plies,
                    neighbours,
                    family: solver.family_key(&members),
                    smooth: 0,
                    best,
                    worst,
                    blocked: None,
                    geometry: g,
                };
                families.push(members);
                pending.push(Ok(p));
            }
            Err(e) => pending.push(Err(ClassError::Section(e.0))),
        }
    }
    // Facing signal layers: one section each, solved with the rest.
    let broadside_pending =
        broadside::sections(s, &|layer, f| dk_at(layer, f).map_or(1.0, |d| d.dk));
    let broadside_keys: Vec<String> = broadside_pending
        .iter()
        .map(|p| {
            let members = vec![p.section.clone()];
            let key = solver.family_key(&members);
            families.push(members);
            key
        })
        .collect();
    let solved = solver.solve_all(families);
    let numbers = |family: &str, i: usize| -> Result<LineNumbers, ClassError> {
        match solved.get(family).and_then(|v| v.get(i)) {
            Some(Ok(s)) => LineNumbers::from_solved(s).ok_or(ClassError::NoImpedance),
            Some(Err(e)) => Err(ClassError::Solver(e.clone())),
            // Every family built is solved; a missing one would be a bug.
            None => Err(ClassError::NoImpedance),
        }
    };
    // Every solved class with a target: its worst-case section's numbers
    // and the target.
    let solved_targets: Vec<_> = s
        .net_classes
        .iter()
        .zip(&pending)
        .enumerate()
        .filter_map(|(i, (nc, p))| {
            let p = p.as_ref().ok().filter(|p| p.blocked.is_none())?;
            let t = nc.impedance?;
            let w = numbers(&p.family, p.worst).ok()?;
            Some((i, &p.geometry, nc.analysis_frequency(), t, w))
        })
        .collect();
    let targets: Vec<(usize, &LineGeometry, f64, f64, f64)> = solved_targets
        .iter()
        .map(|&(i, g, f, t, w)| (i, g, f, t.target, w.z))
        .collect();
    // Width back to target (secant on the worst-case section) for every
    // class off its target, the classes spread over the solver threads.
    let searches: Vec<_> = targets
        .iter()
        .filter(|t| (t.4 - t.3).abs() > 1e-3 * t.3)
        .collect();
    let widths = solver.pool().map(&searches, |&&(i, g, f, target, z)| {
        (i, solver.width_for_target(g, f, target, z))
    });
    let widths: HashMap<usize, Option<f64>> = widths.into_iter().collect();
    // A pair off its target: the spacing that meets it at the drawn width.
    let pairs: Vec<_> = searches.iter().filter(|t| t.1.spacing.is_some()).collect();
    let spacings: HashMap<usize, Option<f64>> = solver
        .pool()
        .map(&pairs, |&&&(i, g, f, target, z)| {
            (i, solver.spacing_for_target(g, f, target, z))
        })
        .into_iter()
        .collect();
    // A pair designed for a coupling coefficient: the width and spacing
    // that meet both its target and that coupling.
    let coupled: Vec<_> = solved_targets
        .iter()
        .filter(|(.., t, w)| t.coupling.is_some() && w.pair.is_some())
        .collect();
    let pair_dims: HashMap<usize, Option<(f64, f64)>> = solver
        .pool()
        .map(&coupled, |&&(i, g, f, t, w)| {
            let dims = t.coupling.zip(w.pair).and_then(|(k, m)| {
                let k_now = (m.z_even - m.z_odd) / (m.z_even + m.z_odd);
                solver.pair_for_target(g, f, t.target, k, w.z, k_now)
            });
            (i, dims)
        })
        .into_iter()
        .collect();
    // Impedance at the build tolerances' corners, for every class with a
    // target.
    let stacks: HashMap<usize, Option<tolerance::ToleranceStack>> = solver
        .pool()
        .map(&targets, |&(i, g, f, _, z)| {
            (i, solver.tolerance_stack(s, g, f, z))
        })
        .into_iter()
        .collect();
    // Conductor loss by Wheeler's rule: each solvable class's metal faces
    // receded group by group, spread over the solver threads.
    let wheeler_items: Vec<(usize, &LineGeometry)> = pending
        .iter()
        .enumerate()
        .filter_map(|(i, p)| {
            let p = p.as_ref().ok().filter(|p| p.blocked.is_none())?;
            Some((i, &p.geometry))
        })
        .collect();
    let wheeler: HashMap<usize, Option<Vec<InductanceDerivative>>> = solver
        .pool()
        .map(&wheeler_items, |&(i, g)| {
            (i, solver.inductance_derivatives(g))
        })
        .into_iter()
        .collect();
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
            let limits = limits::structure_limits(nc, &g, None);
            let mut ca = ClassAnalysis::unsolved(f, Ok(g), why, notes);
            ca.limits = Some(limits);
            classes.push(ca);
            continue;
        }
        let disp = dispersion::dispersion(s, &g, f);
        let static_smooth_r = numbers(&p.family, p.smooth);
        let static_smooth = static_smooth_r.as_ref().ok().copied();
        let static_worst = numbers(&p.family, p.worst).ok();
        let raise = |mut n: LineNumbers| {
            disp.apply(&mut n);
            n
        };
        let mut smooth = static_smooth_r.map(raise);
        let mut best = numbers(&p.family, p.best).ok().map(raise);
        let mut worst = static_worst.map(raise);
        notes.extend(disp.note(static_smooth.as_ref(), smooth.as_ref().ok()));
        let roughness_unknown = g.faces.iter().any(|f| f.roughness.is_range());
        let implied_faces: Vec<_> = g
            .faces
            .iter()
            .filter_map(|f| match f.roughness {
                FaceRoughness::Implied(gf) => Some((f.role, gf)),
                _ => None,
            })
            .collect();
        if !implied_faces.is_empty() {
            notes.push(implied_note(&g, &implied_faces, s));
        }
        let chosen: Vec<String> = g
            .faces
            .iter()
            .filter(|f| f.loss_model != Default::default())
            .map(|f| format!("{} {}", f.role.as_str(), f.loss_model.name()))
            .collect();
        let saturated = loss::saturated_faces(&g, f);
        if !saturated.is_empty() {
            let faces: Vec<String> = saturated
                .iter()
                .map(|(role, k)| format!("{} {k:.2}", role.as_str()))
                .collect();
            notes.push(format!(
                "rough conductor loss likely low: the roughness factor is at its ceiling of 2 at {:.0} GHz ({}), while measured loss of rough foil keeps rising; give the foil's nodule data (`loss-model: huray` with `huray-radius` and `huray-surface-ratio`) for a factor without a ceiling",
                f / 1e9,
                faces.join(", ")
            ));
        }
        if !chosen.is_empty() {
            notes.push(format!(
                "conductor loss roughness factor as the foils name it: {} (Hammerstad-Bekkadal elsewhere)",
                chosen.join(", ")
            ));
        }
        let mut dk = BTreeMap::new();
        let mask_layer = g.mask.map(|m| m.layer);
        for m in g
            .slabs
            .iter()
            .filter_map(|sl| sl.material)
            .chain(mask_layer)
        {
            if let Some(d) = dk_at(m, f) {
                dk.insert(m, d);
            }
        }
        // The signal mode's share of electric energy per dielectric region
        // of the smooth section (single: its one mode; pair: the odd mode).
        let modes: Option<Vec<Vec<f64>>> = solved
            .get(&p.family)
            .and_then(|v| v.get(p.smooth))
            .and_then(|r| r.as_ref().ok())
            .and_then(|line| line.energy_shares(&section::cross_section(&g, None)));
        let energy: Option<Vec<f64>> = modes.as_ref().and_then(|m| m.last().cloned());
        let energy_even: Option<Vec<f64>> =
            modes.filter(|m| m.len() == 2).map(|mut m| m.swap_remove(0));
        let width_for_target = match (nc.impedance, worst) {
            (Some(t), Some(w)) if (w.z - t.target).abs() > 1e-3 * t.target => {
                widths.get(&i).copied().flatten()
            }
            (Some(_), Some(_)) => Some(nc.width),
            _ => None,
        };
        let derivs = wheeler.get(&i).and_then(|d| d.as_deref());
        let loss = smooth
            .as_ref()
            .ok()
            .map(|sm| loss::line_loss(&g, &dk, f, sm, energy.as_deref(), derivs));
        // Delays with the conductors' internal inductance at f.
        let slowed = |n: &mut LineNumbers| {
            if let Some(l) = &loss {
                n.delay = sweep::delay_with_conductors(f, n, l);
            }
        };
        if let Ok(n) = smooth.as_mut() {
            slowed(n);
        }
        best.iter_mut().chain(worst.iter_mut()).for_each(slowed);
        let budget_loss = nc.loss_budget.and(smooth.as_ref().ok()).and_then(|sm| {
            let fb = nc.nyquist.unwrap_or(f);
            if fb == f {
                return loss.clone().map(|l| (f, l));
            }
            let dk_b: BTreeMap<usize, DkAt> = g
                .slabs
                .iter()
                .filter_map(|sl| sl.material)
                .chain(g.mask.map(|m| m.layer))
                .filter_map(|m| Some((m, dk_at(m, fb)?)))
                .collect();
            Some((
                fb,
                loss::line_loss(&g, &dk_b, fb, sm, energy.as_deref(), derivs),
            ))
        });
        let limits = Some(limits::structure_limits(nc, &g, smooth.as_ref().ok()));
        let mode_skew = limits::mode_skew(nc, worst.as_ref().or(smooth.as_ref().ok()), f);
        let pair_crosstalk = p.neighbours.and_then(|m| {
            let modes = |i: usize| numbers(&p.family, m[i]).ok().and_then(|n| n.pair);
            Some(limits::pair_crosstalk(
                nc.pair_pitch?,
                [modes(0)?, modes(1)?, modes(2)?],
                f,
            ))
        });
        let ply_shares = p
            .plies
            .iter()
            .filter_map(|&(layer, bulk, apparent, m)| {
                let mut numbers = raise(numbers(&p.family, m).ok()?);
                slowed(&mut numbers);
                Some(PlyShare {
                    layer,
                    bulk,
                    apparent,
                    numbers,
                })
            })
            .collect();
        classes.push(ClassAnalysis {
            frequency: f,
            geometry: Ok(g),
            smooth,
            rough_best: best,
            rough_worst: worst,
            roughness_unknown,
            implied_faces,
            width_for_target,
            loss,
            budget_loss,
            dk,
            model: FIELD_SOLVER,
            notes,
            limits,
            mode_skew,
            pair_crosstalk,
            ply_shares,
            basis: static_smooth.map(|sm| SweepBasis {
                smooth: sm,
                worst: static_worst,
                energy: energy.clone(),
                energy_even,
                wheeler: derivs.map(<[InductanceDerivative]>::to_vec),
            }),
            tolerance: stacks.get(&i).cloned().flatten(),
            pair_for_target: pair_dims.get(&i).copied().flatten(),
            spacing_for_target: match spacings.get(&i) {
                Some(sp) => *sp,
                // On target already: the drawn spacing.
                None => nc.spacing.filter(|_| width_for_target == Some(nc.width)),
            },
        });
    }
    solver.settle();
    let groups = s
        .matched_groups
        .iter()
        .map(|g| delay::group_delays(s, &classes, g))
        .collect();
    let broadside: Vec<broadside::Broadside> = broadside_pending
        .iter()
        .zip(&broadside_keys)
        .filter_map(|(p, k)| match solved.get(k)?.first()? {
            Ok(line) => broadside::coupling(p, line),
            Err(_) => None,
        })
        .collect();
    let mut a = Analysis {
        classes,
        broadside,
        materials,
        plies: Vec::new(),
        groups,
        weave: Vec::new(),
        via_stubs: Vec::new(),
        coupons: Vec::new(),
    };
    a.plies = dielectrics::plies(s, &a);
    a.weave = weave::weave_skews(s, &a.classes);
    a.via_stubs = vias::stubs(s, &a);
    a.coupons = coupons::analyze_coupons(s, &a);
    a
}

/// The note on a line whose faces carry no roughness data: which faces, on
/// which layers, and the range each is carried as.
fn implied_note(
    g: &LineGeometry,
    implied: &[(section::FaceRole, section::GenericFace)],
    s: &Stackup,
) -> String {
    let mut parts: Vec<String> = Vec::new();
    for kind in [section::GenericFace::Foil, section::GenericFace::Treated] {
        let faces: Vec<String> = implied
            .iter()
            .filter(|(_, k)| *k == kind)
            .filter_map(|(role, _)| {
                let f = g.faces.iter().find(|f| f.role == *role)?;
                Some(format!("{} (`{}`)", role.as_str(), s.layers[f.layer].name))
            })
            .collect();
        if !faces.is_empty() {
            parts.push(format!("{}: {}", faces.join(", "), kind.describe()));
        }
    }
    format!(
        "no roughness data for {}; the numbers are a best/worst range, not smooth copper (declare the foils with `up:`/`down:` on the copper layers to narrow it)",
        parts.join("; ")
    )
}

impl ClassAnalysis {
    /// A class with no numbers: its section could not be built or solved.
    fn unsolved(
        frequency: f64,
        geometry: Result<LineGeometry, ClassError>,
        why: ClassError,
        notes: Vec<String>,
    ) -> Self {
        ClassAnalysis {
            frequency,
            geometry,
            smooth: Err(why),
            rough_best: None,
            rough_worst: None,
            roughness_unknown: false,
            implied_faces: Vec::new(),
            width_for_target: None,
            loss: None,
            budget_loss: None,
            dk: BTreeMap::new(),
            model: FIELD_SOLVER,
            notes,
            limits: None,
            mode_skew: None,
            pair_crosstalk: None,
            ply_shares: Vec::new(),
            basis: None,
            tolerance: None,
            spacing_for_target: None,
            pair_for_target: None,
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
