//! Frequency dependence of a solved line's effective permittivity and
//! impedance.
//!
//! The field solver is quasi-static: its εeff is the f → 0 value of the
//! geometry (the materials' own Dk(f) is already in it). An open
//! microstrip's εeff rises with frequency as the field draws into the
//! substrate. Published models give that rise from the static value, the
//! substrate's Dk, its height and the strip width; they are applied here to
//! the field-solved static values (solder mask over the line allowed: the
//! mask holds a few per cent of the field):
//! - a single surface microstrip: Kirschning-Jansen 1982 for εeff(f)
//!   (within 0.6 % up to h/λ0 = 0.13; checked against scikit-rf's `MLine`)
//!   and Jansen-Kirschning 1983 for the power-current impedance Z(f);
//! - a surface edge-coupled pair: Kirschning-Jansen 1984 for the even- and
//!   odd-mode εeff(f) (its impedance dispersion is not applied: the pair's
//!   impedances stay static, a note says so when the εeff rise is large);
//! - a single surface grounded coplanar line: Frankel et al. 1991 for
//!   εeff(f) (as scikit-rf applies it to conductor-backed CPW); its
//!   impedance stays static;
//! - a microstrip or pair buried under dielectric (no plane above): the
//!   same Kirschning-Jansen models on its own solved static values, with
//!   the substrate's Dk as the high-frequency limit. The models are fitted
//!   to open microstrip; fed with a buried line's static value, the rise
//!   (bounded by εr − εeff(0)) tends to the open line's as the cover thins
//!   and to none as it thickens, the two limits a buried line must meet
//!   (a line in one uniform dielectric is TEM). In between it is an
//!   estimate; the impedance stays static.
//!
//! The class's impedance (what the target is checked against, and what a
//! fabricator's TDR coupon measures) stays the static one; the sweep
//! reports Z(f) beside it and the Touchstone export, which is per
//! frequency, uses Z(f). Delay, skew,
//! λg-based limits and loss use the dispersive εeff everywhere.
//!
//! Striplines are TEM and do not disperse beyond their materials. Not
//! modelled (a note says so when the rise would matter): coplanar pairs and
//! coplanar lines under dielectric, for which no published model was found
//! that starts from a solved static value.

use stackup_physics::consts::C0;
use stackup_physics::coupled::kirschning_jansen_coupled_dispersion;
use stackup_physics::cpw::frankel_coplanar_eps_eff;
use stackup_physics::microstrip::{jansen_kirschning_z0, kirschning_jansen_eps_eff};

use super::section::LineGeometry;
use super::LineNumbers;
use crate::model::{DielectricKind, Stackup};

/// Rise of εeff (relative) below which a line that is not modelled gets no
/// note: 0.5 % in εeff is 0.25 % in delay (common practice, no source).
const NOTE_BELOW: f64 = 0.005;

/// How a buried line's dispersion is taken, for its note.
const BURIED: &str = "the model is fitted to open microstrip; on a buried line's own static value it shrinks as the cover thickens, to none in one uniform dielectric";

/// Change of Z(f) against the static impedance below which the class note
/// does not mention it (common practice, no source: a tenth of a typical
/// ±10 % impedance tolerance, half of the ±5 % one).
const Z_NOTE_BELOW: f64 = 0.005;

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

impl Substrate {
    /// Kirschning-Jansen 1982 εeff(f) of a single strip from `e0`.
    fn eps_single(&self, e0: f64, f: f64) -> Option<f64> {
        kirschning_jansen_eps_eff(self.w, self.h, self.t, self.eps_r, e0, f)
            .ok()
            .map(|(e, _)| e)
            .filter(|e| e.is_finite() && *e >= e0)
    }

    /// Frankel et al. 1991 εeff(f) of a coplanar line with slots `slot`.
    fn eps_coplanar(&self, slot: f64, e0: f64, f: f64) -> Option<f64> {
        frankel_coplanar_eps_eff(self.w, slot, self.h, self.eps_r, e0, f)
            .ok()
            .filter(|e| e.is_finite() && *e >= e0)
    }

    /// Jansen-Kirschning 1983 Z(f) of a single strip.
    fn z_single(&self, z0: f64, e0: f64, ef: f64, f: f64) -> Option<f64> {
        jansen_kirschning_z0(self.w, self.h, self.t, self.eps_r, z0, e0, ef, f)
            .ok()
            .map(|(z, _)| z)
            .filter(|z| z.is_finite() && *z > 0.0)
    }
}

/// How a class's solved numbers move with frequency.
pub(super) enum Dispersion {
    /// Kirschning-Jansen / Jansen-Kirschning on the solved static values;
    /// `buried` under more than solder mask (εeff only).
    Microstrip {
        f: f64,
        sub: Substrate,
        buried: bool,
    },
    /// Kirschning-Jansen 1984 on a pair's solved static modes; `gap` edge
    /// to edge; `buried` as for a single line.
    Pair {
        f: f64,
        sub: Substrate,
        gap: f64,
        buried: bool,
    },
    /// Frankel et al. 1991 on a single grounded coplanar line's solved
    /// static value; `slot` to the coplanar grounds.
    Coplanar { f: f64, sub: Substrate, slot: f64 },
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
    let buried = !covered_by_mask_only;
    match (g.spacing, g.gap, covered_by_mask_only) {
        (None, None, _) => Dispersion::Microstrip { f, sub, buried },
        (Some(gap), None, _) if gap > 0.0 => Dispersion::Pair {
            f,
            sub,
            gap,
            buried,
        },
        (None, Some(slot), true) if slot > 0.0 => Dispersion::Coplanar { f, sub, slot },
        (spacing, Some(_), _) => Dispersion::NotModelled {
            what: if spacing.is_some() {
                "a coplanar pair"
            } else {
                "a coplanar line under dielectric"
            },
            f,
            sub,
        },
        (_, None, _) => Dispersion::Static,
    }
}

impl Dispersion {
    /// `n` at the class's frequency: εeff and delay raised by the model
    /// (both modes of a pair). The impedance stays static (see
    /// [`Dispersion::z_ratio`]).
    pub(super) fn apply(&self, n: &mut LineNumbers) {
        let single = |n: &mut LineNumbers, e: Option<f64>| {
            if let Some(e) = e {
                n.eps_eff = e;
                n.delay = e.sqrt() / C0;
            }
        };
        let e0 = n.eps_eff;
        match self {
            Dispersion::Microstrip { f, sub, .. } => single(n, sub.eps_single(e0, *f)),
            Dispersion::Coplanar { f, sub, slot } => single(n, sub.eps_coplanar(*slot, e0, *f)),
            Dispersion::Pair { f, sub, gap, .. } => {
                let Some(p) = n.pair.as_mut() else {
                    return;
                };
                let e0 = (p.eps_eff_even, p.eps_eff_odd);
                let Ok(((ee, eo), _)) =
                    kirschning_jansen_coupled_dispersion(sub.w, *gap, sub.h, sub.eps_r, e0, *f)
                else {
                    return;
                };
                if ee.is_finite() && eo.is_finite() && ee >= e0.0 && eo >= e0.1 {
                    p.eps_eff_even = ee;
                    p.eps_eff_odd = eo;
                    n.eps_eff = eo;
                    n.delay = eo.sqrt() / C0;
                }
            }
            Dispersion::Static | Dispersion::NotModelled { .. } => {}
        }
    }

    /// Z(f)/Z(0) of the power-current impedance (Jansen-Kirschning 1983)
    /// of a single surface microstrip, from its static numbers `before` and
    /// its dispersive εeff in `after`; 1 for every other line.
    pub(super) fn z_ratio(&self, before: &LineNumbers, after: &LineNumbers) -> f64 {
        let Dispersion::Microstrip {
            f,
            sub,
            buried: false,
        } = self
        else {
            return 1.0;
        };
        sub.z_single(before.z, before.eps_eff, after.eps_eff, *f)
            .map_or(1.0, |z| z / before.z)
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
                let e0 = smooth?.eps_eff;
                let rise = sub.eps_single(e0, *f).map_or(0.0, |e| e / e0 - 1.0);
                (rise > NOTE_BELOW).then(|| {
                    format!(
                        "eps_eff and delay are quasi-static: dispersion is not modelled for {what}; a single surface microstrip on this substrate would read about {:.1} % higher at {:.0} GHz",
                        100.0 * rise,
                        f / 1e9
                    )
                })
            }
            Dispersion::Microstrip {
                buried: true, f, ..
            } => static_z_note(
                "microstrip",
                &format!("Kirschning-Jansen 1982 on the solved static value of the buried line; {BURIED}"),
                *f,
                smooth?,
                raised?,
            ),
            Dispersion::Microstrip { f, sub, .. } => {
                let (a, b) = (smooth?, raised?);
                let rise = b.eps_eff / a.eps_eff - 1.0;
                if rise <= 1e-4 {
                    return None;
                }
                let z = sub
                    .z_single(a.z, a.eps_eff, b.eps_eff, *f)
                    .filter(|z| (z / a.z - 1.0).abs() > Z_NOTE_BELOW)
                    .map(|z| {
                        format!(
                            "; the power-current impedance at that frequency (Jansen-Kirschning 1983) is {z:.1} ohm, {:+.1} % from the static {:.1} ohm the target is checked with",
                            100.0 * (z / a.z - 1.0),
                            a.z
                        )
                    })
                    .unwrap_or_default();
                Some(format!(
                    "eps_eff and delay include microstrip dispersion at {:.0} GHz (Kirschning-Jansen 1982 on the solved static value): eps_eff +{:.2} %{z}",
                    f / 1e9,
                    100.0 * rise
                ))
            }
            Dispersion::Coplanar { f, .. } => static_z_note(
                "coplanar",
                "Frankel et al. 1991 on the solved static value",
                *f,
                smooth?,
                raised?,
            ),
            Dispersion::Pair { f, buried, .. } => {
                let (a, b) = (smooth?.pair?, raised?.pair?);
                let re = b.eps_eff_even / a.eps_eff_even - 1.0;
                let ro = b.eps_eff_odd / a.eps_eff_odd - 1.0;
                let of = if *buried {
                    format!("the solved static modes of the buried pair; {BURIED}")
                } else {
                    "the solved static modes".to_string()
                };
                (re.max(ro) > 1e-4).then(|| {
                    format!(
                        "eps_eff and delay include coupled-microstrip dispersion at {:.0} GHz (Kirschning-Jansen 1984 on {of}): even +{:.2} %, odd +{:.2} %; the impedances are static",
                        f / 1e9,
                        100.0 * re,
                        100.0 * ro
                    )
                })
            }
        }
    }
}

/// The note of a single line whose εeff disperses by `model` and whose
/// impedance is kept static.
fn static_z_note(
    kind: &str,
    model: &str,
    f: f64,
    smooth: &LineNumbers,
    raised: &LineNumbers,
) -> Option<String> {
    let rise = raised.eps_eff / smooth.eps_eff - 1.0;
    (rise > 1e-4).then(|| {
        format!(
            "eps_eff and delay include {kind} dispersion at {:.0} GHz ({model}): eps_eff +{:.2} %; the impedance is static",
            f / 1e9,
            100.0 * rise
        )
    })
}
