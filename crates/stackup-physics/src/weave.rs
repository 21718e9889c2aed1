//! Fibre-weave (glass-weave) skew: the Dk a narrow strip sees over a glass
//! bundle and over a resin-rich window of a woven ply, the share of a
//! strip's field each ply of a layered section holds, and the delay
//! difference that follows.
//!
//! A woven ply is not homogeneous on the scale of a trace: E-glass (Dk about
//! 6.3) is bundled into yarns, resin (Dk about 3) fills the rest. A trace
//! running parallel to one yarn direction can lie over a bundle for its
//! whole length while the other trace of its pair lies over the window
//! between two bundles; the two then propagate at different speeds
//! (intra-pair skew that length matching cannot remove). Common practice,
//! no source for the mechanism's numbers; the local-fraction model below is
//! this crate's own geometry, stated with its assumptions.
//!
//! SI units: lengths in metres, delays in s/m, fractions in [0, 1].

use crate::consts::C0;
use crate::fab::{
    lichtenecker_dk, lichtenecker_other_dk, resin_volume_fraction, GlassStyle, EPOXY_RESIN_DENSITY,
    E_GLASS_DENSITY,
};
use crate::validity::{finite, require_eps_r, require_positive, InputError};

/// Glass volume fraction under a strip at its two extreme lateral
/// positions on a woven ply.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocalGlass {
    /// Strip centred over a bundle running along it (the densest position).
    pub bundle: f64,
    /// Strip centred over the window between two bundles (the sparsest).
    pub window: f64,
}

/// Local glass volume fraction under a strip of width `width` running
/// parallel to one yarn direction of a ply with average glass volume
/// fraction `v_glass`, at the densest and the sparsest lateral position.
///
/// Model (plain weave, this crate's own geometry; common practice, no
/// source): half of the glass runs along the strip in bundles of width
/// b = c·p on a pitch p (c = `coverage`, p = `yarn_pitch`), leaving windows
/// g = p − b; the other half crosses under the strip and averages out along
/// its length. Over the strip, the fraction f of its width lying over
/// parallel bundles ranges, for W = n·p + r (0 <= r < p), between
/// f_max = (n·b + min(r, b))/W and f_min = (n·b + max(0, r − g))/W; the
/// local glass fraction is v_glass·(1/2 + f/(2c)), at most 1. Averaged over
/// all positions f is c and the local fraction is v_glass: glass is
/// conserved.
///
/// Validity: a strip parallel to the weave (the worst case; a strip at an
/// angle averages bundles and windows along its length). The field's
/// spread beyond the strip width is ignored, which overstates the contrast
/// for strips narrow next to their dielectric height (a worst-case
/// estimate). Warp and fill are taken as equal in glass.
///
/// Errors: `v_glass` outside [0, 1]; `coverage` outside (0, 1]; `yarn_pitch`
/// or `width` not finite and > 0.
pub fn local_glass_fraction(
    v_glass: f64,
    coverage: f64,
    yarn_pitch: f64,
    width: f64,
) -> Result<LocalGlass, InputError> {
    if !(v_glass.is_finite() && (0.0..=1.0).contains(&v_glass)) {
        return Err(InputError::new(format!(
            "glass volume fraction must be in [0, 1], got {v_glass}"
        )));
    }
    if !(coverage.is_finite() && coverage > 0.0 && coverage <= 1.0) {
        return Err(InputError::new(format!(
            "bundle coverage must be in (0, 1], got {coverage}"
        )));
    }
    require_positive("yarn pitch", yarn_pitch)?;
    require_positive("strip width", width)?;
    let b = coverage * yarn_pitch;
    let g = yarn_pitch - b;
    let n = (width / yarn_pitch).floor();
    let r = width - n * yarn_pitch;
    let f_max = (n * b + r.min(b)) / width;
    let f_min = (n * b + (r - g).max(0.0)) / width;
    let local = |f: f64| (v_glass * (0.5 + f / (2.0 * coverage))).min(1.0);
    Ok(LocalGlass {
        bundle: finite("local glass fraction", local(f_max))?,
        window: finite("local glass fraction", local(f_min))?,
    })
}

/// The Dk a strip sees in a woven ply, over a bundle and over a window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WovenPlyDk {
    /// Resin Dk recovered from the ply's Dk and glass content.
    pub resin: f64,
    /// Over a bundle running along the strip.
    pub bundle: f64,
    /// Over the window between two bundles.
    pub window: f64,
    /// The local glass volume fractions behind them.
    pub glass: LocalGlass,
}

/// Local Dk extremes of a woven glass/resin ply of bulk Dk `ply_dk` (at the
/// frequency of interest) and resin content `resin_weight_fraction`, for a
/// strip of width `width` parallel to the weave of glass style `style`.
///
/// Steps: resin volume fraction from the weight fraction
/// ([`resin_volume_fraction`], E-glass and epoxy densities); the resin Dk
/// that makes the bulk Dk by the Lichtenecker rule with glass of Dk
/// `glass_dk` ([`lichtenecker_other_dk`]); the local glass fractions
/// ([`local_glass_fraction`]); the Lichtenecker Dk of each
/// ([`lichtenecker_dk`], K. Lichtenecker, Phys. Z. 27, 1926, from memory;
/// searched, see [`lichtenecker_dk`]).
/// Recovering the resin Dk from the ply's own Dk keeps the average of the
/// local Dk at the ply's measured value.
///
/// Errors: a Dk < 1 or not finite; a resin content outside [0, 1]; a bulk
/// Dk that no resin of Dk between 1 and the bulk Dk mixes to with this much
/// glass (a glass of lower Dk than `glass_dk`, or a wrong resin content);
/// the errors of [`local_glass_fraction`].
pub fn woven_ply_local_dk(
    ply_dk: f64,
    resin_weight_fraction: f64,
    glass_dk: f64,
    style: &GlassStyle,
    width: f64,
) -> Result<WovenPlyDk, InputError> {
    require_eps_r("ply Dk", ply_dk)?;
    require_eps_r("glass Dk", glass_dk)?;
    let v_resin =
        resin_volume_fraction(resin_weight_fraction, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY)?;
    let v_glass = 1.0 - v_resin;
    let resin = lichtenecker_other_dk(ply_dk, v_glass, glass_dk)?;
    if resin > ply_dk * (1.0 + 1e-12) {
        return Err(InputError::new(format!(
            "ply Dk {ply_dk} is below glass Dk {glass_dk}: no resin mixes to it with {:.0} % glass by volume",
            v_glass * 100.0
        )));
    }
    let glass = local_glass_fraction(v_glass, style.coverage, style.yarn_pitch, width)?;
    let mix = |v: f64| lichtenecker_dk(&[(v, glass_dk), (1.0 - v, resin)]);
    Ok(WovenPlyDk {
        resin,
        bundle: mix(glass.bundle)?,
        window: mix(glass.window)?,
        glass,
    })
}

/// A strip between (or over) layered dielectrics in the parallel-plate
/// model.
#[derive(Debug, Clone, PartialEq)]
pub struct LayeredStrip {
    /// Effective Dk: the section's capacitance over its capacitance in air.
    pub dk: f64,
    /// Share of the electric energy in each ply, `below` then `above`
    /// (sums to 1): eps_i·(∂dk/∂eps_i)/dk.
    pub energy_share: Vec<f64>,
}

/// Effective Dk of a strip with a stack of plies `below` it (to a plane)
/// and, for a stripline, a stack `above` it (to the second plane; empty for
/// a microstrip-like line), each ply `(thickness, Dk)`, in the
/// parallel-plate model: the plies of one side are capacitors in series,
/// the two sides in parallel, fringing neglected:
/// dk = (1/S_below + 1/S_above)/(1/T_below + 1/T_above), S = Σ t_i/eps_i,
/// T = Σ t_i. The energy share of ply i on side s is
/// (t_i/eps_i)/S_s × C_s/ΣC, the part of that side's voltage across the ply
/// times the side's part of the charge.
///
/// Source: capacitance of a layered parallel-plate capacitor (series and
/// parallel combination): two plies of equal thickness in series give
/// C = (2·eps0·A/d)·k1·k2/(k1 + k2) (Ben-Gurion University of the Negev,
/// physics exercise pool, problem e_38_3_011 "Capacitance"); layered
/// dielectrics add as capacitors in series (Technical University of
/// Cluj-Napoca, Electromagnetics course, solved problem 1.19). Hayt & Buck,
/// *Engineering Electromagnetics*, recalled for the same result; searched,
/// its section not found. Validity: wide strips
/// (W ≫ h); used here only for the relative change of Dk between plies,
/// with the solved eps_eff carrying the absolute value
/// ([`filled_eps_eff`]).
///
/// Errors: `below` empty; a thickness not finite and > 0 or a Dk < 1.
pub fn layered_strip_dk(
    below: &[(f64, f64)],
    above: &[(f64, f64)],
) -> Result<LayeredStrip, InputError> {
    if below.is_empty() {
        return Err(InputError::new("a strip needs a dielectric below it"));
    }
    let side = |plies: &[(f64, f64)]| -> Result<(f64, f64), InputError> {
        let (mut s, mut t) = (0.0, 0.0);
        for &(ti, ei) in plies {
            require_positive("ply thickness", ti)?;
            require_eps_r("ply Dk", ei)?;
            s += ti / ei;
            t += ti;
        }
        Ok((s, t))
    };
    let (s_b, t_b) = side(below)?;
    let (c_b, air_b) = (1.0 / s_b, 1.0 / t_b);
    let (c_a, air_a) = if above.is_empty() {
        (0.0, 0.0)
    } else {
        let (s_a, t_a) = side(above)?;
        (1.0 / s_a, 1.0 / t_a)
    };
    let c = c_b + c_a;
    let dk = finite("layered Dk", c / (air_b + air_a))?;
    let mut energy_share = Vec::with_capacity(below.len() + above.len());
    for &(t, e) in below {
        energy_share.push((t / e) * c_b * (c_b / c));
    }
    for &(t, e) in above {
        energy_share.push((t / e) * c_a * (c_a / c));
    }
    Ok(LayeredStrip { dk, energy_share })
}

/// Effective permittivity of a line after its dielectric changes from an
/// effective Dk `dk_section` to `dk_new`, keeping the filling factor
/// q = (eps_eff − 1)/(dk_section − 1) of the known solution:
/// eps_eff' = 1 + q·(dk_new − 1).
///
/// Source: Wheeler's filling-factor form of eps_eff (H. A. Wheeler,
/// "Transmission-Line Properties of Parallel Strips Separated by a
/// Dielectric Sheet", IEEE Trans. MTT 13(2), 1965, whose abstract states
/// that the effective filling fraction depends mainly on the shape ratio and
/// only slightly on the dielectric constant). Exact when every dielectric of a
/// closed (stripline) section changes by the same factor; for a microstrip
/// q rises slightly with Dk, which this holds constant (checked against
/// scikit-rf's Hammerstad-Jensen microstrip in the crate's tests).
///
/// Errors: `eps_eff` or `dk_new` < 1; `dk_section` not > 1 (no filling
/// factor); a result not finite.
pub fn filled_eps_eff(eps_eff: f64, dk_section: f64, dk_new: f64) -> Result<f64, InputError> {
    require_eps_r("effective permittivity", eps_eff)?;
    require_eps_r("new Dk", dk_new)?;
    if !(dk_section.is_finite() && dk_section > 1.0) {
        return Err(InputError::new(format!(
            "section Dk must be > 1 for a filling factor, got {dk_section}"
        )));
    }
    let q = (eps_eff - 1.0) / (dk_section - 1.0);
    finite("effective permittivity", 1.0 + q * (dk_new - 1.0))
}

/// Delay difference per unit length of two quasi-TEM lines of effective
/// permittivities `eps_slow` and `eps_fast`: (√eps_slow − √eps_fast)/c0,
/// s/m (positive when the first is slower).
///
/// Source: the TEM delay t_pd = √eps_eff/c0 per unit length (any
/// transmission-line text; checked against scikit-rf's phase delay of two
/// lines in the crate's tests).
///
/// Errors: a permittivity < 1 or not finite.
pub fn delay_difference(eps_slow: f64, eps_fast: f64) -> Result<f64, InputError> {
    require_eps_r("effective permittivity", eps_slow)?;
    require_eps_r("effective permittivity", eps_fast)?;
    Ok((eps_slow.sqrt() - eps_fast.sqrt()) / C0)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fab::glass_style;

    #[test]
    fn rejects_bad_input() {
        assert!(local_glass_fraction(1.5, 0.5, 4e-4, 1e-4).is_err());
        assert!(local_glass_fraction(0.2, 0.0, 4e-4, 1e-4).is_err());
        assert!(local_glass_fraction(0.2, 0.5, f64::NAN, 1e-4).is_err());
        assert!(local_glass_fraction(0.2, 0.5, 4e-4, -1.0).is_err());
        let s = glass_style("1080").unwrap();
        // Dk 1.5 with a third of the volume E-glass needs a resin below 1.
        assert!(woven_ply_local_dk(1.5, 0.5, 6.3, s, 1e-4).is_err());
        assert!(woven_ply_local_dk(7.0, 0.5, 6.3, s, 1e-4).is_err());
        assert!(layered_strip_dk(&[], &[(1e-4, 3.0)]).is_err());
        assert!(layered_strip_dk(&[(0.0, 3.0)], &[]).is_err());
        assert!(filled_eps_eff(2.5, 1.0, 3.0).is_err());
        assert!(delay_difference(0.5, 3.0).is_err());
    }
}
