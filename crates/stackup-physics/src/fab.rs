//! Fabrication effects on the electrical stackup: pressed prepreg thickness,
//! Dk of a glass-reinforced ply from its resin content, typical glass
//! styles, and the trapezoidal etch profile of a trace.
//!
//! All lengths in metres, fractions in [0, 1], densities in kg/m³. The typical
//! numbers here vary by fabricator and material; the analysis should let the
//! user override them.

use crate::validity::{finite, require_eps_r, require_non_negative, require_positive, InputError};

fn require_fraction(name: &str, v: f64) -> Result<(), InputError> {
    if v.is_finite() && (0.0..=1.0).contains(&v) {
        Ok(())
    } else {
        Err(InputError::new(format!(
            "{name} must be a fraction in [0, 1], got {v}"
        )))
    }
}

// ---------------------------------------------------------------------------
// Pressed prepreg thickness
// ---------------------------------------------------------------------------

/// What one face of a prepreg ply touches during lamination.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PrepregFace {
    /// A laminate (core) surface or another ply with no copper: the resin
    /// fills nothing, so this face takes no thickness.
    Laminate,
    /// An inner copper layer of thickness `thickness` (m) with copper fill
    /// `fill` (fraction of the area left after etching: about 0.2-0.5 for
    /// signal layers, 0.8-1 for planes, common practice, no source).
    Copper {
        /// Copper thickness, m.
        thickness: f64,
        /// Remaining copper fraction R in [0, 1].
        fill: f64,
    },
}

/// Pressed thickness of a prepreg ply between two faces:
/// t_pressed = t_nominal - sum over faces of (1 - R_i) t_Cu,i: the resin
/// flows into the etched-away parts of each adjacent copper layer. A
/// [`PrepregFace::Laminate`] face contributes nothing.
///
/// Source: common practice, no source (fabricators' stackup calculations).
/// Valid when the resin content suffices to fill the copper gaps; the
/// nominal thickness must be the ply's thickness as pressed between flat
/// plates.
///
/// Errors: `t_nominal` not finite and > 0; a copper face with thickness
/// negative or not finite, or fill outside [0, 1]; a result <= 0 (the ply
/// cannot fill the copper).
pub fn pressed_prepreg_thickness(
    t_nominal: f64,
    faces: [PrepregFace; 2],
) -> Result<f64, InputError> {
    require_positive("nominal prepreg thickness", t_nominal)?;
    let mut t = t_nominal;
    for face in faces {
        if let PrepregFace::Copper { thickness, fill } = face {
            require_non_negative("copper thickness", thickness)?;
            require_fraction("copper fill", fill)?;
            t -= (1.0 - fill) * thickness;
        }
    }
    if t > 0.0 {
        Ok(t)
    } else {
        Err(InputError::new(format!(
            "prepreg of nominal thickness {t_nominal} m cannot fill the adjacent copper (pressed thickness {t} m)"
        )))
    }
}

// ---------------------------------------------------------------------------
// Dk of a glass-reinforced ply
// ---------------------------------------------------------------------------

/// Typical Dk of E-glass fibre, 6.3 (range about 6.0-6.6; from memory;
/// searched: "E-glass dielectric constant 1 MHz handbook", found only glass
/// makers' data sheets, which this project does not use, no neutral
/// handbook table).
pub const E_GLASS_DK: f64 = 6.3;
/// Typical Dk of an FR-4 class epoxy resin system, 3.2 (range about 2.8-3.5
/// across resin systems; from memory; searched: "epoxy resin dielectric
/// constant range cured", "epoxy relative permittivity table", found only
/// circuit-board makers' pages and a trade forum post, not used, no neutral
/// table).
pub const EPOXY_RESIN_DK: f64 = 3.2;
/// Density of E-glass, 2540 kg/m³ (2.54-2.60 g/cm³; from memory; searched:
/// "E-glass density g/cm3 handbook", found a secondary text giving specific
/// gravity 2.54 and makers' data sheets, no handbook table).
pub const E_GLASS_DENSITY: f64 = 2540.0;
/// Density of a cured epoxy resin, 1300 kg/m³: "Epoxies have a density of
/// circa 1.3 Mg/m³" (K. G. Budinski and M. K. Budinski, *Engineering
/// Materials*, Prentice Hall 1999, as quoted by Princeton University's MAE
/// 324 course glossary, "Epoxy"). It was 1200 kg/m³, the middle of a range
/// of 1.1-1.3 g/cm³ recalled without a document. Filled resins are denser:
/// give the real value when known.
pub const EPOXY_RESIN_DENSITY: f64 = 1300.0;

/// Lichtenecker logarithmic mixing rule: ln eps = sum_i v_i ln eps_i, with
/// v_i the volume fractions (summing to 1) and eps_i the component Dk values.
///
/// Source: K. Lichtenecker, "Die Dielektrizitätskonstante natürlicher und
/// künstlicher Mischkörper", Physikalische Zeitschrift 27, pp. 115-158, 1926
/// (from memory; searched: title, journal and year, no text of the paper
/// found). An empirical rule for random mixtures; it always lies
/// between the series and parallel (Wiener) bounds. For glass/resin plies it
/// ignores the anisotropy of the woven glass (out-of-plane field assumed).
///
/// Errors: empty list; a fraction outside [0, 1] or a Dk < 1 or not finite;
/// fractions not summing to 1 within 1e-6.
pub fn lichtenecker_dk(components: &[(f64, f64)]) -> Result<f64, InputError> {
    if components.is_empty() {
        return Err(InputError::new("mixing rule needs at least one component"));
    }
    let mut sum_v = 0.0;
    let mut ln_eps = 0.0;
    for &(v, eps) in components {
        require_fraction("volume fraction", v)?;
        require_eps_r("component Dk", eps)?;
        sum_v += v;
        ln_eps += v * eps.ln();
    }
    if (sum_v - 1.0).abs() > 1e-6 {
        return Err(InputError::new(format!(
            "volume fractions must sum to 1, got {sum_v}"
        )));
    }
    Ok((ln_eps / sum_v).exp())
}

/// The Dk of the one unknown component of a two-component Lichtenecker mix
/// (the inverse of [`lichtenecker_dk`]): ln eps_x = (ln eps_mix - v ln
/// eps_k)/(1 - v), with `v` the volume fraction and `eps_known` the Dk of
/// the known component. Used to recover the resin Dk of a ply from its
/// measured Dk and its glass content.
///
/// Source: as [`lichtenecker_dk`] (solved for one component).
///
/// Errors: `mix_dk` or `eps_known` not a Dk >= 1; `v` outside [0, 1) (the
/// unknown component must have some volume); a result below 1 or not
/// finite (the mix cannot be made from the known component).
pub fn lichtenecker_other_dk(mix_dk: f64, v: f64, eps_known: f64) -> Result<f64, InputError> {
    require_eps_r("mixture Dk", mix_dk)?;
    require_eps_r("component Dk", eps_known)?;
    require_fraction("volume fraction", v)?;
    if v >= 1.0 {
        return Err(InputError::new(
            "the unknown component has no volume (volume fraction 1)",
        ));
    }
    let eps = ((mix_dk.ln() - v * eps_known.ln()) / (1.0 - v)).exp();
    if eps.is_finite() && eps >= 1.0 {
        Ok(eps)
    } else {
        Err(InputError::new(format!(
            "Dk {mix_dk} is no mix of Dk {eps_known} at volume fraction {v} with a material of Dk >= 1 (got {eps})"
        )))
    }
}

/// Resin volume fraction of a glass/resin ply from its resin content by
/// weight: v_r = (w/rho_r) / [w/rho_r + (1 - w)/rho_g] (definition of mass and
/// volume fractions; voids neglected).
///
/// Errors: `resin_weight_fraction` outside [0, 1]; densities not finite and
/// > 0.
pub fn resin_volume_fraction(
    resin_weight_fraction: f64,
    resin_density: f64,
    glass_density: f64,
) -> Result<f64, InputError> {
    require_fraction("resin content", resin_weight_fraction)?;
    require_positive("resin density", resin_density)?;
    require_positive("glass density", glass_density)?;
    let vr = resin_weight_fraction / resin_density;
    let vg = (1.0 - resin_weight_fraction) / glass_density;
    finite("resin volume fraction", vr / (vr + vg))
}

/// Dk of a glass-reinforced ply (an estimate) from its resin content by
/// weight: weight -> volume fraction by [`resin_volume_fraction`], then
/// [`lichtenecker_dk`] of resin and glass. With [`EPOXY_RESIN_DK`],
/// [`E_GLASS_DK`], [`EPOXY_RESIN_DENSITY`] and [`E_GLASS_DENSITY`] it is an
/// estimate for FR-4 class epoxy/E-glass; pass the material's own values when
/// known.
///
/// Errors: as the two functions it combines.
pub fn glass_ply_dk(
    resin_weight_fraction: f64,
    resin_dk: f64,
    glass_dk: f64,
    resin_density: f64,
    glass_density: f64,
) -> Result<f64, InputError> {
    let v = resin_volume_fraction(resin_weight_fraction, resin_density, glass_density)?;
    lichtenecker_dk(&[(v, resin_dk), (1.0 - v, glass_dk)])
}

/// How open a glass fabric's weave is: whether resin-rich windows remain
/// between its yarn bundles (the source of the fibre-weave Dk variation a
/// trace sees).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Weave {
    /// Round yarn bundles with resin-rich windows between them (106, 1080,
    /// 2116, 7628): the classic open styles.
    Open,
    /// Mechanically spread (flattened) yarns or a weave tight enough that
    /// the bundles nearly close the windows (1035, 1067, 1078, 1086, 2113,
    /// 3313): the usual mitigation of fibre-weave skew.
    Spread,
}

impl Weave {
    pub fn as_str(self) -> &'static str {
        match self {
            Weave::Open => "open",
            Weave::Spread => "spread",
        }
    }
}

/// A woven glass style with its typical prepreg build and weave geometry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GlassStyle {
    /// Style number (IPC-4412, "Specification for Finished Fabric Woven from
    /// 'E' Glass for Printed Boards", whose revision B (2013) tabulates the
    /// styles; title and revision checked in a standards catalogue entry).
    pub name: &'static str,
    /// Typical pressed thickness of one ply, m.
    pub pressed_thickness: f64,
    /// Typical resin content by weight, fraction.
    pub resin_content: f64,
    /// Open or spread weave (common practice, no source).
    pub weave: Weave,
    /// Centre-to-centre pitch of the yarn bundles in the coarser direction,
    /// m: 25.4 mm over the lower of the warp and fill thread counts (ends
    /// per inch; thread counts as IPC-4412 tabulates them, from memory; see
    /// [`GLASS_STYLES`] for what was searched).
    pub yarn_pitch: f64,
    /// Fraction of the width the bundles of one direction cover as pressed
    /// in a ply (1 = no resin window left). Estimates, no source: the
    /// weave's openness as a number, for [`crate::weave`].
    pub coverage: f64,
}

/// Yarn pitch from a thread count in ends per inch.
const fn pitch(ends_per_inch: f64) -> f64 {
    25.4e-3 / ends_per_inch
}

/// Common glass styles with typical pressed thickness per ply, resin
/// content by weight and weave geometry. Thickness and resin content:
/// common practice, no source (fabricators offer several resin contents
/// per style, so treat these as defaults to override). Thread counts (warp
/// x fill, ends per inch) from memory of IPC-4412 (searched: the style
/// numbers with their thread counts, found the standard's title, revisions
/// and table of contents and IPC-TM-650 2.1.7 "Thread Count of Glass
/// Fabric", rev. C, 12/94, but not the table): 106 56x56, 1035 66x68,
/// 1067 70x70, 1078 54x54, 1080 60x47, 1086 60x62, 2113 60x56, 3313 61x62,
/// 2116 60x58, 7628 44x32. Coverage: estimates, no source.
pub const GLASS_STYLES: [GlassStyle; 10] = [
    GlassStyle {
        name: "106",
        pressed_thickness: 50e-6,
        resin_content: 0.72,
        weave: Weave::Open,
        yarn_pitch: pitch(56.0),
        coverage: 0.45,
    },
    GlassStyle {
        name: "1035",
        pressed_thickness: 60e-6,
        resin_content: 0.68,
        weave: Weave::Spread,
        yarn_pitch: pitch(66.0),
        coverage: 0.95,
    },
    GlassStyle {
        name: "1067",
        pressed_thickness: 55e-6,
        resin_content: 0.70,
        weave: Weave::Spread,
        yarn_pitch: pitch(70.0),
        coverage: 0.95,
    },
    GlassStyle {
        name: "1078",
        pressed_thickness: 75e-6,
        resin_content: 0.67,
        weave: Weave::Spread,
        yarn_pitch: pitch(54.0),
        coverage: 0.95,
    },
    GlassStyle {
        name: "1080",
        pressed_thickness: 70e-6,
        resin_content: 0.63,
        weave: Weave::Open,
        yarn_pitch: pitch(47.0),
        coverage: 0.55,
    },
    GlassStyle {
        name: "1086",
        pressed_thickness: 70e-6,
        resin_content: 0.62,
        weave: Weave::Spread,
        yarn_pitch: pitch(60.0),
        coverage: 0.95,
    },
    GlassStyle {
        name: "2113",
        pressed_thickness: 90e-6,
        resin_content: 0.57,
        weave: Weave::Spread,
        yarn_pitch: pitch(56.0),
        coverage: 0.88,
    },
    GlassStyle {
        name: "3313",
        pressed_thickness: 100e-6,
        resin_content: 0.56,
        weave: Weave::Spread,
        yarn_pitch: pitch(61.0),
        coverage: 0.9,
    },
    GlassStyle {
        name: "2116",
        pressed_thickness: 115e-6,
        resin_content: 0.54,
        weave: Weave::Open,
        yarn_pitch: pitch(58.0),
        coverage: 0.75,
    },
    GlassStyle {
        name: "7628",
        pressed_thickness: 185e-6,
        resin_content: 0.44,
        weave: Weave::Open,
        yarn_pitch: pitch(32.0),
        coverage: 0.8,
    },
];

/// Looks up a glass style of [`GLASS_STYLES`] by its number, e.g. "2116".
pub fn glass_style(name: &str) -> Option<&'static GlassStyle> {
    GLASS_STYLES.iter().find(|g| g.name == name.trim())
}

// ---------------------------------------------------------------------------
// Etch profile
// ---------------------------------------------------------------------------

/// Top width of an etched trace: W_top = W_bottom - 2 t/EF, where the etch
/// factor EF = etch depth / undercut per side (typically 2-4; EF = +inf means
/// vertical walls).
///
/// Source: common practice, no source (etch factor as IPC-T-50 term
/// 54.0452 defines it, "the ratio of the depth of etch to the amount of
/// lateral etch", as quoted on IPC's TechNet list, June 2012, where 2 to 4
/// is given as what fabricators reach). The trace is a trapezoid with the wide base on the
/// dielectric it was laminated to.
///
/// Errors: `w_bottom` not finite and > 0; `t` negative or not finite;
/// `etch_factor` not > 0 (NaN, zero, negative); a top width <= 0 (the
/// trace would be a triangle).
pub fn etched_top_width(w_bottom: f64, t: f64, etch_factor: f64) -> Result<f64, InputError> {
    require_positive("bottom width", w_bottom)?;
    require_non_negative("copper thickness", t)?;
    if etch_factor.is_nan() || etch_factor <= 0.0 {
        return Err(InputError::new(format!(
            "etch factor must be > 0, got {etch_factor}"
        )));
    }
    let w_top = w_bottom - 2.0 * t / etch_factor;
    if w_top > 0.0 {
        Ok(w_top)
    } else {
        Err(InputError::new(format!(
            "etch undercut 2t/EF = {} m consumes the whole {w_bottom} m trace",
            2.0 * t / etch_factor
        )))
    }
}

/// Bottom width from the top width, inverse of [`etched_top_width`]:
/// W_bottom = W_top + 2 t/EF.
///
/// Errors: `w_top` not finite and > 0; `t` negative or not finite;
/// `etch_factor` not > 0.
pub fn etched_bottom_width(w_top: f64, t: f64, etch_factor: f64) -> Result<f64, InputError> {
    require_positive("top width", w_top)?;
    require_non_negative("copper thickness", t)?;
    if etch_factor.is_nan() || etch_factor <= 0.0 {
        return Err(InputError::new(format!(
            "etch factor must be > 0, got {etch_factor}"
        )));
    }
    finite("bottom width", w_top + 2.0 * t / etch_factor)
}

/// Mean width (W_bottom + W_top)/2 of a trapezoidal trace, the width closed
/// forms should use (common practice, no source).
///
/// Errors: a width not finite and > 0.
pub fn mean_width(w_bottom: f64, w_top: f64) -> Result<f64, InputError> {
    require_positive("bottom width", w_bottom)?;
    require_positive("top width", w_top)?;
    finite("mean width", 0.5 * (w_bottom + w_top))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_bad_input() {
        assert!(pressed_prepreg_thickness(-1e-4, [PrepregFace::Laminate; 2]).is_err());
        let cu = PrepregFace::Copper {
            thickness: 35e-6,
            fill: 1.5,
        };
        assert!(pressed_prepreg_thickness(1e-4, [cu, PrepregFace::Laminate]).is_err());
        assert!(lichtenecker_dk(&[]).is_err());
        assert!(lichtenecker_dk(&[(0.5, 3.0), (0.4, 6.0)]).is_err());
        assert!(etched_top_width(100e-6, 35e-6, 0.0).is_err());
        assert!(etched_top_width(100e-6, 35e-6, f64::NAN).is_err());
        assert!(etched_top_width(10e-6, 35e-6, 2.0).is_err());
        assert!(glass_style("9999").is_none());
    }
}
