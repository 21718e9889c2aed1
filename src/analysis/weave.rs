//! Fibre-weave skew of differential pairs: for each woven ply of a pair's
//! section, the Dk a trace sees over a glass bundle and over a resin-rich
//! window, and the worst-case intra-pair skew per unit length that follows
//! when one trace runs over bundles and the other over windows. Computed
//! once here, judged by `glass-weave-skew`.
//!
//! The chain (each step in `stackup_physics::weave`, with its source):
//! the ply's resin Dk recovered from its Dk at the class frequency and its
//! glass content (Lichtenecker); the local glass fractions of the style's
//! weave under a strip of the traces' width; the section's Dk in the
//! parallel-plate model with every woven ply at its bundle, then its window
//! Dk; the solved odd-mode eps_eff moved by Wheeler's filling factor; the
//! TEM delay difference. A worst case: the traces parallel to the weave for
//! the whole length, no fringing beyond the trace width.

use stackup_physics::fab::{glass_style, Weave, E_GLASS_DK, GLASS_STYLES};
use stackup_physics::weave::{
    delay_difference, filled_eps_eff, layered_strip_dk, woven_ply_local_dk,
};

use super::ClassAnalysis;
use crate::model::{DielectricKind, NetClass, Stackup};

/// A woven ply of a pair's section at its two extreme positions.
#[derive(Debug, Clone, PartialEq)]
pub struct WeavePly {
    /// Stackup layer index.
    pub layer: usize,
    /// The glass style as written.
    pub style: String,
    /// Open weave (resin windows between the bundles).
    pub open: bool,
    /// Resin content by weight used: the ply's own, else the style's typical.
    pub resin_content: f64,
    /// The ply's Dk at the class frequency (as the section uses it).
    pub dk: f64,
    /// Dk under a trace over a bundle and over a window.
    pub dk_bundle: f64,
    pub dk_window: f64,
    /// Share of the line's field energy in this ply (parallel-plate model
    /// through Wheeler's filling factor).
    pub field_share: f64,
}

/// A ply that names a glass style whose weave could not be assessed.
#[derive(Debug, Clone, PartialEq)]
pub struct Unassessed {
    pub layer: usize,
    pub style: String,
    pub why: String,
}

/// The fibre-weave skew of one differential class.
#[derive(Debug, Clone, PartialEq)]
pub struct WeaveSkew {
    /// The woven plies of the section with a known style, top to bottom.
    pub plies: Vec<WeavePly>,
    pub unassessed: Vec<Unassessed>,
    /// The solved odd-mode eps_eff (smooth copper), and the same with every
    /// assessed woven ply at its bundle and at its window Dk.
    pub eps_eff: f64,
    pub eps_eff_bundle: f64,
    pub eps_eff_window: f64,
    /// Worst-case intra-pair skew per unit length, s/m.
    pub per_metre: f64,
    /// The width a trace samples the weave over (its mean width), m.
    pub width: f64,
    /// Symbol rate (the data rate for NRZ, half of it for PAM4), Bd, and
    /// its unit interval, s, when the class gives a data rate.
    pub symbol_rate: Option<f64>,
    pub unit_interval: Option<f64>,
}

impl WeaveSkew {
    /// Some ply of the section has an open weave.
    pub fn has_open_ply(&self) -> bool {
        self.plies.iter().any(|p| p.open)
    }
}

/// The fibre-weave skew of `nc` (a differential class whose section was
/// solved and holds at least one ply naming a glass style), else `None`.
/// Plies without a glass style are taken as homogeneous (nothing is known
/// of their weave); solder mask is never woven.
pub fn weave_skew(s: &Stackup, nc: &NetClass, ca: &ClassAnalysis) -> Option<WeaveSkew> {
    if !nc.structure.is_differential() {
        return None;
    }
    let g = ca.geometry.as_ref().ok()?;
    let eps_eff = ca.smooth.as_ref().ok()?.eps_eff;
    let width = 0.5 * (g.width_bottom + g.width_top);
    let above_end = if g.top_plane.is_some() {
        g.slabs.len()
    } else {
        g.trace_slot + 1
    };
    let field: Vec<usize> = (0..g.trace_slot)
        .chain(g.trace_slot + 1..above_end)
        .collect();
    let mut plies = Vec::new();
    let mut unassessed = Vec::new();
    // Per field slab: (thickness, nominal, bundle, window Dk).
    let mut stack = Vec::new();
    for &k in &field {
        let sl = &g.slabs[k];
        let mut row = (sl.thickness, sl.eps, sl.eps, sl.eps);
        let woven = s
            .dielectric(sl.layer)
            .filter(|d| d.kind != DielectricKind::SolderMask)
            .and_then(|d| d.glass_style.as_ref().map(|st| (d, st)));
        if let Some((d, st)) = woven {
            let assessed = glass_style(st)
                .ok_or_else(|| {
                    let known: Vec<&str> = GLASS_STYLES.iter().map(|g| g.name).collect();
                    format!(
                        "the style is not in the weave table ({})",
                        known.join(", ")
                    )
                })
                .and_then(|style| {
                    let rc = d.resin_content.unwrap_or(style.resin_content);
                    let glass_dk = s
                        .materials
                        .get(&d.material)
                        .and_then(|m| m.glass_dk)
                        .unwrap_or(E_GLASS_DK);
                    woven_ply_local_dk(sl.eps, rc, glass_dk, style, width)
                        .map(|l| (style, rc, l))
                        .map_err(|_| {
                            format!(
                                "its Dk {:.2} is no mix of glass of Dk {glass_dk:.2} at {:.0} % resin by weight with any resin of lower Dk (check the ply's `resin-content` and the material's `glass-dk`)",
                                sl.eps,
                                rc * 100.0
                            )
                        })
                });
            match assessed {
                Ok((style, rc, l)) => {
                    row = (sl.thickness, sl.eps, l.bundle, l.window);
                    plies.push((
                        k,
                        WeavePly {
                            layer: sl.layer,
                            style: st.clone(),
                            open: style.weave == Weave::Open,
                            resin_content: rc,
                            dk: sl.eps,
                            dk_bundle: l.bundle,
                            dk_window: l.window,
                            field_share: 0.0,
                        },
                    ));
                }
                Err(why) => unassessed.push(Unassessed {
                    layer: sl.layer,
                    style: st.clone(),
                    why,
                }),
            }
        }
        stack.push(row);
    }
    if plies.is_empty() && unassessed.is_empty() {
        return None;
    }
    let below = g.trace_slot;
    let section = |pick: fn(&(f64, f64, f64, f64)) -> f64| {
        let v: Vec<(f64, f64)> = stack.iter().map(|r| (r.0, pick(r))).collect();
        let (b, a) = v.split_at(below);
        layered_strip_dk(b, a)
    };
    let nominal = section(|r| r.1).ok()?;
    let bundle = section(|r| r.2).ok()?.dk;
    let window = section(|r| r.3).ok()?.dk;
    let eps_eff_bundle = filled_eps_eff(eps_eff, nominal.dk, bundle).ok()?;
    let eps_eff_window = filled_eps_eff(eps_eff, nominal.dk, window).ok()?;
    let per_metre = delay_difference(eps_eff_bundle, eps_eff_window).ok()?;
    // A ply's share of the line's energy, eps_i·(∂eps_eff/∂eps_i)/eps_eff
    // with eps_eff = 1 + q·(Dk − 1): its parallel-plate share times
    // q·Dk/eps_eff (1 in a stripline; below 1 where part of the field is
    // in air). `field` lists the slabs in stack order.
    let q = (eps_eff - 1.0) / (nominal.dk - 1.0);
    let scale = q * nominal.dk / eps_eff;
    let mut plies: Vec<WeavePly> = plies
        .into_iter()
        .map(|(k, mut p)| {
            let at = field.iter().position(|&f| f == k).unwrap_or(0);
            let share = nominal.energy_share.get(at).copied().unwrap_or(0.0) * scale;
            p.field_share = if share.is_finite() {
                share.clamp(0.0, 1.0)
            } else {
                0.0
            };
            p
        })
        .collect();
    plies.sort_by_key(|p| p.layer);
    let symbol_rate = nc.nyquist.map(|f_n| 2.0 * f_n).filter(|r| *r > 0.0);
    Some(WeaveSkew {
        plies,
        unassessed,
        eps_eff,
        eps_eff_bundle,
        eps_eff_window,
        per_metre,
        width,
        symbol_rate,
        unit_interval: symbol_rate.map(|r| 1.0 / r),
    })
}

/// The weave skew of every class of `s`, same order as the classes.
pub fn weave_skews(s: &Stackup, classes: &[ClassAnalysis]) -> Vec<Option<WeaveSkew>> {
    s.net_classes
        .iter()
        .zip(classes)
        .map(|(nc, ca)| weave_skew(s, nc, ca))
        .collect()
}
