//! Frequency dependence of a solved line's effective permittivity.
//!
//! The field solver is quasi-static: its εeff is the f → 0 value of the
//! geometry (the materials' own Dk(f) is already in it). An open
//! microstrip's εeff rises with frequency as the field draws into the
//! substrate; Kirschning and Jansen's model (Electronics Letters 18(6),
//! 1982) gives that rise from the static value, the substrate's Dk, its
//! height and the strip width, within 0.6 % up to h/λ0 = 0.13
//! (`stackup_physics::microstrip::kirschning_jansen_eps_eff`, checked
//! against scikit-rf's `MLine`). It is applied here to the field-solved
//! static value of a single surface microstrip (solder mask over it
//! allowed: the mask is a few per cent of the field). Striplines are TEM
//! and do not disperse beyond their materials.
//!
//! Not modelled (a note says so when the rise would matter): pairs
//! (Kirschning-Jansen's 1984 coupled model is in the physics crate for the
//! static modes only), coplanar lines and microstrip buried under a
//! dielectric, whose published models do not fit a solved static value
//! this simply.

use stackup_physics::consts::C0;
use stackup_physics::microstrip::kirschning_jansen_eps_eff;

use super::section::LineGeometry;
use super::LineNumbers;
use crate::model::{DielectricKind, Stackup};

/// Rise of εeff (relative) below which a line that is not modelled gets no
/// note: 0.5 % in εeff is 0.25 % in delay (common practice, no source).
const NOTE_BELOW: f64 = 0.005;

/// The substrate a microstrip's dispersion is computed with: its height
/// (trace bottom to plane), the plies' Dk in series (the field under a
/// strip crosses them in turn), and the strip's mean width and thickness.
pub(super) struct Substrate {
    h: f64,
    eps_r: f64,
    w: f64,
    t: f64,
}

fn substrate(g: &LineGeometry) -> Option<Substrate> {
    let below = &g.slabs[..g.trace_slot];
    let h: f64 = below.iter().map(|s| s.thickness).sum();
    let inv: f64 = below.iter().map(|s| s.thickness / s.eps).sum();
    (h > 0.0 && inv > 0.0).then(|| Substrate {
        h,
        eps_r: h / inv,
        w: 0.5 * (g.width_bottom + g.width_top),
        t: g.thickness,
    })
}

/// How a class's solved numbers move with frequency.
pub(super) enum Dispersion {
    /// Kirschning-Jansen on the solved static value at the class's frequency.
    Microstrip { f: f64, sub: Substrate },
    /// Static: a TEM line.
    Static,
    /// An open structure the models do not cover: static, with a note
    /// where a single surface microstrip on the same substrate would move.
    NotModelled {
        what: &'static str,
        f: f64,
        sub: Substrate,
    },
}

/// Decide how the line of `g` disperses at `f`.
pub(super) fn dispersion(s: &Stackup, g: &LineGeometry, f: f64) -> Dispersion {
    if g.top_plane.is_some() {
        return Dispersion::Static;
    }
    let Some(sub) = substrate(g) else {
        return Dispersion::Static;
    };
    let covered_by_mask_only = g.slabs[g.trace_slot + 1..].iter().all(|sl| {
        s.dielectric(sl.layer)
            .is_some_and(|d| d.kind == DielectricKind::SolderMask)
    });
    if g.spacing.is_none() && g.gap.is_none() && covered_by_mask_only {
        return Dispersion::Microstrip { f, sub };
    }
    let what = if g.spacing.is_some() {
        "a pair"
    } else if g.gap.is_some() {
        "a coplanar line"
    } else {
        "a microstrip under dielectric"
    };
    Dispersion::NotModelled { what, f, sub }
}

impl Dispersion {
    /// `n` at the class's frequency: εeff and delay raised by the model;
    /// the impedance stays the static one (the power-current impedance of
    /// Jansen-Kirschning 1983 moves it by well under 1 % on board
    /// substrates below 100 GHz, from memory).
    pub(super) fn apply(&self, n: &mut LineNumbers) {
        let Dispersion::Microstrip { f, sub } = self else {
            return;
        };
        let s = sub;
        if let Ok((e, _)) = kirschning_jansen_eps_eff(s.w, s.h, s.t, s.eps_r, n.eps_eff, *f) {
            if e.is_finite() && e >= n.eps_eff {
                n.eps_eff = e;
                n.delay = e.sqrt() / C0;
            }
        }
    }

    /// The note for the class, if any.
    pub(super) fn note(
        &self,
        smooth: Option<&LineNumbers>,
        raised: Option<&LineNumbers>,
    ) -> Option<String> {
        match self {
            Dispersion::Static => None,
            Dispersion::NotModelled { what, f, sub } => {
                // The size of the effect this line's numbers leave out: a
                // single surface microstrip of the same strip and static
                // εeff.
                let (s, e0) = (sub, smooth?.eps_eff);
                let rise = kirschning_jansen_eps_eff(s.w, s.h, s.t, s.eps_r, e0, *f)
                    .map(|(e, _)| e / e0 - 1.0)
                    .unwrap_or(0.0);
                (rise > NOTE_BELOW).then(|| {
                    format!(
                        "eps_eff and delay are quasi-static: dispersion is not modelled for {what}; a single surface microstrip on this substrate would read about {:.1} % higher at {:.0} GHz",
                        100.0 * rise,
                        f / 1e9
                    )
                })
            }
            Dispersion::Microstrip { f, .. } => {
                let (a, b) = (smooth?, raised?);
                let rise = b.eps_eff / a.eps_eff - 1.0;
                (rise > 1e-4).then(|| {
                    format!(
                        "eps_eff and delay include microstrip dispersion at {:.0} GHz (Kirschning-Jansen on the solved static value): eps_eff +{:.2} %",
                        f / 1e9,
                        100.0 * rise
                    )
                })
            }
        }
    }
}
