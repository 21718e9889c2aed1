//! Measured test coupons against the stackup's model of the structure
//! each represents.
//!
//! A line-pair coupon gives γ(f) by the two-line method
//! (`stackup_physics::coupon::two_line_propagation`; a pair's odd and even
//! modes from its mixed-mode two-ports), a resonator its resonances
//! (`resonator_analysis`, IPC-TM-650 2.5.5.5 family). The model of the
//! same structure at the same frequencies comes from the class's solve,
//! carried across frequency (`sweep`). The usable range is the user's
//! `trust-from`/`trust-to` narrowed by the data's own limits: the launch's
//! return loss, a jump in the extracted εeff (a resonance the model does
//! not have), the structure's first higher-order mode; ill-conditioned
//! points (ΔL near a multiple of half a wavelength) and doubtful peaks are
//! left out one by one.
//!
//! The implied Dk: inside the range, the median of measured over modelled
//! εeff, r, is put on the material with the largest share of the signal
//! mode's electric energy: to first order δεeff/εeff = Σ s_i·δε_i/ε_i, so
//! that material's Dk scales by 1 + (r − 1)/S (S its share). Exact for a
//! stripline in one material; the uncertainty given is the spread of the
//! per-point values and the lengths' tolerance.

use std::collections::BTreeMap;

use num_complex::Complex64;
use stackup_physics::coupon::{
    end_capacitance_extension, loss_tangent_from_q, microstrip_open_end_extension,
    pair_modes_two_line, resonator_analysis, resonator_eps_eff, stripline_open_end_extension,
    two_line_propagation, PairPortOrder, Resonance, ResonatorOptions, TwoLineOptions, TwoLinePoint,
};

use super::sweep::{region_layers, rlgc, sweep, SweepPoint};
use super::Analysis;
use crate::input::touchstone::Network;
use crate::model::{Coupon, CouponKind, Stackup};
use stackup_physics::consts::{C0, NP_TO_DB};

/// Return loss of a launch below which the data are not used (common
/// practice, no source: a launch reflecting more than a tenth of the power
/// leaves the line's own response hard to separate).
pub const MIN_LAUNCH_RETURN_LOSS_DB: f64 = 10.0;

/// A jump of the extracted εeff between neighbouring reliable points above
/// which the data end (a resonance or mode the line model has not; chosen
/// here, no source: the model's εeff moves by well under 0.5 % between
/// sweep points).
pub const MAX_EPS_JUMP: f64 = 0.02;

/// Tolerance of each coupon line's length (common practice, no source:
/// routing and etch-back of the launches, about ±0.05 mm).
pub const LENGTH_TOLERANCE: f64 = 0.05e-3;

/// Largest median difference of measured and modelled εeff for a coupon
/// to agree with the stackup (the default of `coupon-disagrees-with-stackup`;
/// 1 % in εeff is 0.5 % in delay and about 0.5 % in impedance, the size of
/// a typical Dk tolerance's effect: common practice, no source).
pub const AGREE_EPS: f64 = 0.01;

/// Largest median difference of measured and modelled loss for a coupon to
/// agree (loss models of rough copper and Df data are rarely better:
/// common practice, no source).
pub const AGREE_LOSS: f64 = 0.10;

/// One frequency of a coupon, measured against modelled.
#[derive(Debug, Clone, PartialEq)]
pub struct CouponPoint {
    pub frequency: f64,
    /// Measured εeff of the signal mode (a pair's odd mode).
    pub eps_measured: f64,
    pub eps_model: f64,
    /// Measured and modelled loss, dB/m (line pair; a resonator's Q gives
    /// no loss per metre here).
    pub loss_measured: Option<f64>,
    pub loss_model: f64,
    /// A resonance: the effective loss tangent it implies,
    /// 1/Q_u − 1/Q_c with Q_c from the model's conductor loss (roughness
    /// included), and the model's own (2·α_d/β).
    pub tan_delta: Option<(f64, f64)>,
    /// The point is reliable (not ill-conditioned, not flagged).
    pub reliable: bool,
    /// Inside the usable range.
    pub in_range: bool,
}

/// A Dk the measurement implies.
#[derive(Debug, Clone, PartialEq)]
pub struct ImpliedDk {
    /// Material name.
    pub material: String,
    /// Its Dk as stated (first data point) and at that point's frequency.
    pub stated: f64,
    pub frequency: f64,
    /// The Dk at the same frequency that reproduces the measurement.
    pub implied: f64,
    /// ± uncertainty (spread of points and length tolerance, combined).
    pub uncertainty: f64,
    /// The material's share of the signal mode's electric energy.
    pub share: f64,
    /// The same per frequency band (the valid points in three bands of
    /// equal count): (lowest Hz, highest Hz, implied Dk). A Dk that moves
    /// across the bands more than the material's model does says its
    /// frequency dependence is off too.
    pub bands: Vec<(f64, f64, f64)>,
}

/// One coupon's result.
#[derive(Debug, Clone, PartialEq)]
pub struct CouponAnalysis {
    /// Index into `Stackup::coupons`.
    pub coupon: usize,
    pub points: Vec<CouponPoint>,
    /// The usable range, when any point is in it.
    pub range: Option<(f64, f64)>,
    /// Why the range ends where it does, and what was left out.
    pub range_notes: Vec<String>,
    /// Median measured/modelled − 1 inside the range: εeff, and loss.
    pub eps_difference: Option<f64>,
    pub loss_difference: Option<f64>,
    pub implied_dk: Option<ImpliedDk>,
    /// A resonator's resonances.
    pub resonances: Vec<Resonance>,
    /// The extraction could not be made (why).
    pub failure: Option<String>,
}

impl CouponAnalysis {
    /// The material a coupon that agrees with the stackup validates, and
    /// up to which frequency: the one holding most of the line's field,
    /// to the top of the valid range.
    pub fn validates(&self) -> Option<(&str, f64)> {
        let (_, hi) = self.range?;
        let eps_ok = self.eps_difference?.abs() <= AGREE_EPS;
        let loss_ok = self.loss_difference.is_none_or(|d| d.abs() <= AGREE_LOSS);
        let im = self.implied_dk.as_ref()?;
        (eps_ok && loss_ok).then_some((im.material.as_str(), hi))
    }
}

/// Every coupon of `s`, in order.
pub(super) fn analyze_coupons(s: &Stackup, a: &Analysis) -> Vec<CouponAnalysis> {
    s.coupons
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let mut out = CouponAnalysis {
                coupon: i,
                points: Vec::new(),
                range: None,
                range_notes: Vec::new(),
                eps_difference: None,
                loss_difference: None,
                implied_dk: None,
                resonances: Vec::new(),
                failure: None,
            };
            if let Err(why) = analyze_one(s, a, c, &mut out) {
                out.failure = Some(why);
            }
            out
        })
        .collect()
}

fn networks(c: &Coupon) -> Result<Vec<&Network>, String> {
    c.files
        .iter()
        .map(|f| {
            f.network
                .as_ref()
                .ok_or_else(|| format!("file `{}` was not read", f.path))
        })
        .collect()
}

fn s2(n: &Network, k: usize) -> [[Complex64; 2]; 2] {
    let s = &n.s[k];
    [[s[0], s[1]], [s[2], s[3]]]
}

fn s4(n: &Network, k: usize) -> [[Complex64; 4]; 4] {
    let s = &n.s[k];
    std::array::from_fn(|i| std::array::from_fn(|j| s[4 * i + j]))
}

fn median(mut v: Vec<f64>) -> Option<f64> {
    v.retain(|x| x.is_finite());
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    Some(if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    })
}

fn analyze_one(
    s: &Stackup,
    a: &Analysis,
    c: &Coupon,
    out: &mut CouponAnalysis,
) -> Result<(), String> {
    let nc = &s.net_classes[c.net_class];
    let ca = &a.classes[c.net_class];
    let nets = networks(c)?;
    // The loader has checked the files against each other and the class
    // (`Coupon::check_files`).
    let pair = nc.structure.is_differential();
    let ports = if pair { 4 } else { 2 };
    let freqs = nets[0].frequencies.clone();
    // The range the user trusts, and the structure's own limit.
    let lo = c.trust.0.unwrap_or(0.0);
    let mut hi = c.trust.1.unwrap_or(f64::INFINITY);
    if let Some(m) = ca.limits.as_ref().and_then(|l| l.mode.as_ref()) {
        if m.frequency < hi {
            hi = m.frequency;
            out.range_notes.push(format!(
                "the structure's first higher-order mode ({}) from {:.1} GHz",
                m.what,
                m.frequency / 1e9
            ));
        }
    }
    // A via fence stops confining the field where its pitch reaches λg/8
    // (the loose limit of `stackup_physics::modes::via_pitch_check`).
    if let (Some(pitch), Some(l)) = (nc.via_fence_pitch, ca.limits.as_ref()) {
        let f_fence = C0 / (8.0 * pitch * l.eps_max.sqrt());
        if f_fence < hi {
            hi = f_fence;
            out.range_notes.push(format!(
                "the via fence's {:.2} mm pitch reaches an eighth of the guided wavelength at {:.1} GHz",
                pitch * 1e3,
                f_fence / 1e9
            ));
        }
    }
    // The launch: the first frequency where either file's return loss
    // falls below the threshold, at either end (a line pair; a resonator
    // reflects nearly everything off resonance by design).
    let rl_limit = 10f64.powf(-MIN_LAUNCH_RETURN_LOSS_DB / 20.0);
    let is_pair = matches!(c.kind, CouponKind::LinePair { .. });
    if let Some(k) = (0..freqs.len()).filter(|_| is_pair).find(|&k| {
        freqs[k] >= lo
            && nets.iter().any(|n| {
                let s = &n.s[k];
                (0..ports).any(|p| s[p * ports + p].norm() > rl_limit)
            })
    }) {
        if freqs[k] < hi {
            hi = freqs[k];
            out.range_notes.push(format!(
                "the launch's return loss falls below {MIN_LAUNCH_RETURN_LOSS_DB:.0} dB at {:.1} GHz",
                freqs[k] / 1e9
            ));
        }
    }
    // The model at the measured frequencies (a line pair: every point; a
    // resonator: its resonances, below).
    let model_at = |fs: &[f64]| {
        sweep(s, a, c.net_class, fs)
            .ok_or_else(|| format!("net class `{}` was not solved", nc.name))
    };
    // What a measurement of the modelled line would read: β and α of its
    // RLGC (the smooth copper's internal inductance included: it slows a
    // thin line noticeably at low frequency, and a coupon measures it; the
    // rough copper's slowing is in its apparent Dk, see `sweep::rlgc`).
    let model_eps = |p: &SweepPoint| measured_view(p).0;
    let model_loss = |p: &SweepPoint| measured_view(p).1;
    let f_first = *freqs
        .first()
        .ok_or("the coupon's files hold no frequency")?;
    let guess = model_at(&[f_first])?.first().map(model_eps);
    match c.kind {
        CouponKind::LinePair { lengths } => {
            let dl = lengths[1] - lengths[0];
            let (short, long) = if dl > 0.0 {
                (nets[0], nets[1])
            } else {
                (nets[1], nets[0])
            };
            let opts = TwoLineOptions {
                eps_eff_guess: guess,
                ..Default::default()
            };
            let k_all = 0..freqs.len();
            let pts: Vec<TwoLinePoint> = if pair {
                let ss: Vec<_> = k_all.clone().map(|k| s4(short, k)).collect();
                let sl: Vec<_> = k_all.map(|k| s4(long, k)).collect();
                pair_modes_two_line(&freqs, &ss, &sl, PairPortOrder::LineA12B34, dl.abs(), &opts)
                    .map_err(|e| e.to_string())?
                    .odd
            } else {
                let ss: Vec<_> = k_all.clone().map(|k| s2(short, k)).collect();
                let sl: Vec<_> = k_all.map(|k| s2(long, k)).collect();
                two_line_propagation(&freqs, &ss, &sl, dl.abs(), &opts)
                    .map_err(|e| e.to_string())?
            };
            let mut last: Option<f64> = None;
            let mut ill = 0;
            let model = model_at(&freqs)?;
            for (p, m) in pts.iter().zip(&model) {
                let Some(g) = p.propagation else {
                    continue;
                };
                let reliable = p.is_reliable();
                if !reliable {
                    ill += 1;
                }
                if reliable && p.freq >= lo && p.freq <= hi {
                    if let Some(prev) = last {
                        if (g.eps_eff / prev - 1.0).abs() > MAX_EPS_JUMP {
                            hi = p.freq;
                            out.range_notes.push(format!(
                                "the measured eps_eff jumps by {:.1} % at {:.1} GHz: a resonance or mode the line model has not",
                                100.0 * (g.eps_eff / prev - 1.0),
                                p.freq / 1e9
                            ));
                        }
                    }
                    last = Some(g.eps_eff);
                }
                out.points.push(CouponPoint {
                    frequency: p.freq,
                    eps_measured: g.eps_eff,
                    eps_model: model_eps(m),
                    loss_measured: Some(g.alpha_db_per_m),
                    loss_model: model_loss(m),
                    tan_delta: None,
                    reliable,
                    in_range: false,
                });
            }
            if ill > 0 {
                out.range_notes.push(format!(
                    "{ill} points left out where the lines' length difference is near a multiple of half a wavelength (the two-line method is ill-conditioned there)"
                ));
            }
            finish(s, a, c, out, lo, hi, 2.0 * LENGTH_TOLERANCE / dl.abs());
        }
        CouponKind::Resonator { length, gap } => {
            let g = ca.geometry.as_ref().map_err(|e| e.to_string())?;
            let w = 0.5 * (g.width_bottom + g.width_top);
            let e0 = guess.unwrap_or(1.0);
            let per_end = if g.top_plane.is_some() {
                stripline_open_end_extension(g.height(), w).map(|x| x.0)
            } else {
                let h = g.h_below();
                let er = g.slabs[..g.trace_slot]
                    .iter()
                    .map(|sl| sl.eps)
                    .fold(1.0, f64::max);
                microstrip_open_end_extension(w, h, er.max(e0), e0).map(|x| x.0)
            }
            .map_err(|e| e.to_string())?;
            if gap < g.h_below() {
                out.range_notes.push(format!(
                    "the coupling gap ({:.3} mm) is narrower than the dielectric under the line: the resonances are pulled by the coupling and the open-end extension is less certain",
                    gap * 1e3
                ));
            }
            let s21: Vec<Complex64> = (0..freqs.len()).map(|k| nets[0].s[k][2]).collect();
            let opts = ResonatorOptions {
                eps_eff_guess: guess,
                ..Default::default()
            };
            let r = resonator_analysis(&freqs, &s21, length, 2.0 * per_end, &opts)
                .map_err(|e| e.to_string())?;
            if !r.missing_modes.is_empty() {
                let first = r.missing_modes[0];
                // The range ends below the first missing mode above the
                // lowest found one.
                if let Some(below) = r.resonances.iter().rfind(|x| x.mode < first) {
                    let f_miss = below.freq * f64::from(first) / f64::from(below.mode);
                    if f_miss < hi {
                        hi = f_miss;
                    }
                }
                out.range_notes.push(format!(
                    "mode{} {} of the resonator missing",
                    if r.missing_modes.len() > 1 { "s" } else { "" },
                    r.missing_modes
                        .iter()
                        .map(u32::to_string)
                        .collect::<Vec<_>>()
                        .join(", ")
                ));
            }
            let flagged = r.resonances.iter().filter(|x| !x.flags.is_empty()).count();
            if flagged > 0 {
                out.range_notes.push(format!(
                    "{flagged} resonance{} left out (split, off the harmonic series or undersampled)",
                    if flagged > 1 { "s" } else { "" }
                ));
            }
            let r0 = nets[0].reference.first().copied().unwrap_or(50.0);
            let mut resonances = r.resonances;
            let at: Vec<f64> = resonances.iter().map(|x| x.freq).collect();
            let model = model_at(&at)?;
            for (x, m) in resonances.iter_mut().zip(&model) {
                // The coupling gaps lengthen the resonator too: each is a
                // series capacitance into the port, whose susceptance is
                // an end extension; its size follows from the coupling
                // the measurement shows.
                if let Some(dl) = gap_extension(x, m.at_frequency().z_line(), r0) {
                    if let Ok(e) = resonator_eps_eff(x.mode, x.freq, length, 2.0 * (per_end + dl)) {
                        x.eps_eff = e;
                    }
                }
                // The unloaded Q is the line's own loss: α = β/(2·Q_u)
                // (radiation taken as nil); with the model's conductor
                // Q the rest is the dielectric's.
                let beta = 2.0 * std::f64::consts::PI * x.freq * x.eps_eff.sqrt() / C0;
                let loss_measured = x.q_unloaded.map(|q| beta / (2.0 * q) * NP_TO_DB);
                let tan_delta = x.q_unloaded.and_then(|q| {
                    let q_c = beta / (2.0 * m.loss.conductor_rough / NP_TO_DB);
                    let meas = loss_tangent_from_q(q, q_c).ok()?;
                    Some((meas, 2.0 * (m.loss.dielectric / NP_TO_DB) / beta))
                });
                out.points.push(CouponPoint {
                    frequency: x.freq,
                    eps_measured: x.eps_eff,
                    eps_model: model_eps(m),
                    loss_measured,
                    loss_model: model_loss(m),
                    tan_delta,
                    reliable: x.flags.is_empty(),
                    in_range: false,
                });
            }
            out.resonances = resonances;
            finish(s, a, c, out, lo, hi, 2.0 * LENGTH_TOLERANCE / length);
        }
    }
    Ok(())
}

/// The end extension, m, of one coupling gap of a symmetric two-port
/// line resonator, from its measured coupling: with |S21| at resonance,
/// the coupling per port is k = |S21|/(2(1 − |S21|)) and the external Q
/// per port Q_e = Q_L(1 + 2k)/k (Pozar, *Microwave Engineering*, 4th ed.,
/// sec. 6.7, from memory; searched: the book's numbering, only catalogue
/// entries found). A series capacitance C into the port's
/// resistance R0 loads the end of an n-half-wave line of impedance Z0 with
/// the conductance G = ω²C²R0 (ωCR0 ≪ 1), and Q_e = nπ/(2·Z0·G) (energy
/// stored in the standing wave over the power into G); its susceptance ωC
/// is the extension `end_capacitance_extension`.
fn gap_extension(x: &Resonance, z0: f64, r0: f64) -> Option<f64> {
    let t = x.s21_mag;
    if !(t > 0.0 && t < 1.0 && z0 > 0.0 && r0 > 0.0) {
        return None;
    }
    let k = t / (2.0 * (1.0 - t));
    let q_e = x.q_loaded * (1.0 + 2.0 * k) / k;
    let w = 2.0 * std::f64::consts::PI * x.freq;
    let g = f64::from(x.mode) * std::f64::consts::PI / (2.0 * z0 * q_e);
    let cap = (g / r0).sqrt() / w;
    end_capacitance_extension(cap, z0, x.eps_eff, x.freq).ok()
}

/// The εeff and loss (dB/m) a coupon of the modelled line would measure:
/// from γ of its RLGC (`sweep::rlgc`, the signal mode at its impedance
/// per line), εeff = (β·c0/ω)².
fn measured_view(p: &SweepPoint) -> (f64, f64) {
    let n = p.at_frequency();
    let (_, gamma) = rlgc(p.frequency, n.z_line(), n.eps_eff, &p.loss).zc_gamma(p.frequency);
    let w = 2.0 * std::f64::consts::PI * p.frequency;
    ((gamma.im * C0 / w).powi(2), gamma.re * NP_TO_DB)
}

/// Mark the points inside [lo, hi], summarise them and derive the implied
/// Dk. `length_rel` is the relative uncertainty of the length the
/// extraction divides by (εeff goes with its square).
fn finish(
    s: &Stackup,
    a: &Analysis,
    c: &Coupon,
    out: &mut CouponAnalysis,
    lo: f64,
    hi: f64,
    length_rel: f64,
) {
    for p in &mut out.points {
        p.in_range = p.reliable && p.frequency >= lo && p.frequency < hi;
    }
    let used: Vec<&CouponPoint> = out.points.iter().filter(|p| p.in_range).collect();
    if used.is_empty() {
        out.range_notes
            .push("no reliable point inside the usable range".into());
        return;
    }
    out.range = Some((
        used.first().map_or(lo, |p| p.frequency),
        used.last().map_or(hi, |p| p.frequency),
    ));
    let ratios: Vec<f64> = used.iter().map(|p| p.eps_measured / p.eps_model).collect();
    let r = median(ratios.clone());
    out.eps_difference = r.map(|r| r - 1.0);
    out.loss_difference = median(
        used.iter()
            .filter_map(|p| Some(p.loss_measured? / p.loss_model - 1.0))
            .collect(),
    );
    let Some(r) = r else {
        return;
    };
    // The material with the largest share of the signal mode's energy.
    let ca = &a.classes[c.net_class];
    let (Some(g), Some(basis)) = (ca.geometry.as_ref().ok(), ca.basis.as_ref()) else {
        return;
    };
    let Some(shares) = basis.energy.as_ref() else {
        return;
    };
    let mut by_material: BTreeMap<&str, f64> = BTreeMap::new();
    for (sh, layer) in shares.iter().zip(region_layers(g)) {
        if let Some(d) = layer.and_then(|l| s.dielectric(l)) {
            *by_material.entry(d.material.as_str()).or_default() += sh;
        }
    }
    let Some((name, share)) = by_material.into_iter().max_by(|x, y| x.1.total_cmp(&y.1)) else {
        return;
    };
    let Some(m) = s.materials.get(name) else {
        return;
    };
    let Some(first) = m.points.first() else {
        return;
    };
    if share <= 0.0 {
        return;
    }
    let scale = |r: f64| 1.0 + (r - 1.0) / share;
    // Spread: half the interquartile range of the per-point values.
    let mut sorted = ratios;
    sorted.sort_by(f64::total_cmp);
    let q = |f: f64| sorted[((sorted.len() - 1) as f64 * f).round() as usize];
    let spread = 0.5 * (q(0.75) - q(0.25)) / share;
    let length = 2.0 * length_rel / share;
    let bands: Vec<(f64, f64, f64)> = if used.len() >= 6 {
        used.chunks(used.len().div_ceil(3))
            .filter_map(|b| {
                let r = median(b.iter().map(|p| p.eps_measured / p.eps_model).collect())?;
                Some((
                    b[0].frequency,
                    b[b.len() - 1].frequency,
                    first.dk * scale(r),
                ))
            })
            .collect()
    } else {
        Vec::new()
    };
    out.implied_dk = Some(ImpliedDk {
        material: name.to_string(),
        stated: first.dk,
        frequency: first.frequency,
        implied: first.dk * scale(r),
        uncertainty: first.dk * (spread * spread + length * length).sqrt(),
        share,
        bands,
    });
}
