//! Grounded coplanar waveguide (conductor-backed CPW) by conformal mapping.
//!
//! Centre strip of width `width`, slots `gap` to the coplanar grounds on both
//! sides, on a dielectric of height `height` over a ground plane; air above.
//! The model assumes infinitely wide top grounds stitched to the bottom
//! plane. All lengths in metres.

use crate::consts::{C0, ETA0};
use crate::elliptic::k_ratio_pair;
use crate::validity::{
    require_eps_r, require_non_negative, require_positive, InputError, ValidityNote,
};
use std::f64::consts::PI;

/// Model name used in validity notes.
pub const GCPW_MODEL: &str = "GCPW conformal mapping (Gupta et al. 1996)";

/// GCPW result.
#[derive(Debug, Clone, PartialEq)]
pub struct CpwResult {
    /// Characteristic impedance, ohm.
    pub z0: f64,
    /// Effective permittivity.
    pub eps_eff: f64,
    /// Validity notes.
    pub notes: Vec<ValidityNote>,
}

/// K(k)/K′(k) for 0 < k < 1 with k′ formed as √((1−k)(1+k)).
fn r_of(k: f64) -> f64 {
    let kp = ((1.0 - k) * (1.0 + k)).sqrt();
    k_ratio_pair(k, kp)
}

/// Grounded coplanar waveguide, quasi-static.
///
/// Source: K. C. Gupta, R. Garg, I. Bahl, P. Bhartia, *Microstrip Lines and
/// Slotlines*, 2nd ed., Artech House 1996, ch. 7 (conductor-backed CPW; also
/// G. Ghione, C. Naldi, Electronics Letters 19(18), 1983, pp. 734–735):
/// k1 = W/(W+2s), k3 = tanh(πW/4h)/tanh(π(W+2s)/4h), rᵢ = K(kᵢ)/K′(kᵢ),
/// εeff = 1 + r3/(r1+r3)·(εr − 1), Z0 = (η0/2)/√εeff/(r1+r3).
///
/// Strip thickness (Gupta et al. eqs. 7.98–7.100): Δ = (1.25t/π)[1 + ln(4πW/t)],
/// k1 → ke = k1 + (1 − k1²)Δ/(2s) in the impedance (k3 kept),
/// εeff → εeff − 0.7(εeff − 1)(t/s)/(r1 + 0.7t/s).
///
/// Notes: the thickness correction is first order; a note is attached when
/// Δ > s/2 (the effective slot would shrink by more than half). Errors for
/// non-positive dimensions or when the corrected k leaves (0, 1).
pub fn gcpw(
    width: f64,
    gap: f64,
    height: f64,
    thickness: f64,
    eps_r: f64,
) -> Result<CpwResult, InputError> {
    require_positive("GCPW width", width)?;
    require_positive("GCPW gap", gap)?;
    require_positive("GCPW height", height)?;
    require_non_negative("GCPW thickness", thickness)?;
    require_eps_r("GCPW eps_r", eps_r)?;
    let a = width;
    let b = width + 2.0 * gap;
    let k1 = a / b;
    let k3 = (PI * a / (4.0 * height)).tanh() / (PI * b / (4.0 * height)).tanh();
    let r1 = r_of(k1);
    let r3 = r_of(k3);
    let mut eps_eff = 1.0 + r3 / (r1 + r3) * (eps_r - 1.0);
    let mut r1z = r1;
    let mut notes = Vec::new();
    if thickness > 0.0 {
        let delta = 1.25 * thickness / PI * (1.0 + (4.0 * PI * width / thickness).ln());
        ValidityNote::push_if_outside(
            &mut notes,
            GCPW_MODEL,
            "thickness shift/gap",
            delta / gap,
            0.0,
            0.5,
        );
        let ke = k1 + (1.0 - k1 * k1) * delta / (2.0 * gap);
        if !(ke > 0.0 && ke < 1.0) {
            return Err(InputError::new(format!(
                "GCPW thickness correction leaves the model: t = {thickness} m is too thick for gap {gap} m"
            )));
        }
        r1z = r_of(ke);
        let ts = thickness / gap;
        eps_eff -= 0.7 * (eps_eff - 1.0) * ts / (r1 + 0.7 * ts);
    }
    let z0 = ETA0 / 2.0 / eps_eff.sqrt() / (r1z + r3);
    if !(z0.is_finite() && eps_eff.is_finite()) {
        return Err(InputError::new("GCPW geometry out of numeric range"));
    }
    Ok(CpwResult { z0, eps_eff, notes })
}

/// Frequency-dependent effective permittivity of a coplanar line from its
/// static value `eps_static`.
///
/// Source: M. Y. Frankel, S. Gupta, J. A. Valdmanis, G. A. Mourou,
/// "Terahertz attenuation and dispersion characteristics of coplanar
/// transmission lines", IEEE T-MTT 39(6), June 1991, pp. 910–916 (also
/// cited for it: S. Gevorgian et al., "Simple and accurate dispersion
/// expression for the effective dielectric constant of coplanar
/// waveguides", IEE Proc. MAP 144(2), 1997, pp. 145–148). With W the centre
/// strip, s the slot and h the substrate under them:
/// √εeff(f) = √εq + (√εr − √εq)/(1 + G·(f/f_TE)^−1.8),
/// f_TE = c0/(4h·√(εr − 1)) (the substrate's first TE surface-wave cutoff
/// over a ground plane), G = exp(u·ln(W/s) + v), p = ln(W/h),
/// u = 0.54 − 0.64p + 0.015p², v = 0.43 − 0.86p + 0.54p².
/// Equations as transcribed in scikit-rf 2.2.0's `CPW` (natural
/// logarithms), which applies them with and without a metal backside; the
/// papers' own text was not reached (searched: both titles), so the
/// logarithm base and the fit's range of validity are not confirmed here.
///
/// The static value may come from any source (the field solver here).
/// Below f_TE the rise is small; it tends to εr far above. `eps_static`
/// above εr (a coat denser than the substrate) is returned unchanged: the
/// model only raises a value towards the substrate's.
pub fn frankel_coplanar_eps_eff(
    width: f64,
    slot: f64,
    height: f64,
    eps_r: f64,
    eps_static: f64,
    freq: f64,
) -> Result<f64, InputError> {
    require_positive("coplanar width", width)?;
    require_positive("coplanar slot", slot)?;
    require_positive("coplanar substrate height", height)?;
    require_eps_r("coplanar eps_r", eps_r)?;
    require_eps_r("static eps_eff", eps_static)?;
    require_non_negative("frequency", freq)?;
    if freq == 0.0 || eps_r <= 1.0 || eps_static >= eps_r {
        return Ok(eps_static);
    }
    let f_te = C0 / (4.0 * height * (eps_r - 1.0).sqrt());
    let p = (width / height).ln();
    let u = 0.54 - 0.64 * p + 0.015 * p * p;
    let v = 0.43 - 0.86 * p + 0.54 * p * p;
    let g = (u * (width / slot).ln() + v).exp();
    let sq = eps_static.sqrt();
    let root = sq + (eps_r.sqrt() - sq) / (1.0 + g * (freq / f_te).powf(-1.8));
    let e = root * root;
    if !e.is_finite() {
        return Err(InputError::new(format!(
            "coplanar dispersion undefined at W/h = {}, W/s = {}",
            width / height,
            width / slot
        )));
    }
    Ok(e)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gcpw_spot_value() {
        // Gupta et al. conformal-mapping formulas evaluated independently:
        // W 0.3, s 0.15, h 0.127 mm, eps_r 3 -> 50.96 ohm with η0 = 120π,
        // i.e. 50.926 ohm with η0 = 376.7303 ohm; eps_eff 2.352.
        let r = gcpw(0.3e-3, 0.15e-3, 0.127e-3, 0.0, 3.0).unwrap();
        let want = 50.96 * ETA0 / (120.0 * PI);
        assert!(((r.z0 - want) / want).abs() < 1e-4, "{}", r.z0);
        assert!(((r.eps_eff - 2.352) / 2.352).abs() < 2e-4, "{}", r.eps_eff);
    }

    #[test]
    fn thickness_lowers_impedance() {
        let r0 = gcpw(0.3e-3, 0.15e-3, 0.127e-3, 0.0, 3.0).unwrap();
        let r1 = gcpw(0.3e-3, 0.15e-3, 0.127e-3, 17e-6, 3.0).unwrap();
        assert!(r1.z0 < r0.z0 && r1.eps_eff < r0.eps_eff);
        // A 70 um strip in a 10 um slot: the first-order correction breaks down.
        assert!(gcpw(0.3e-3, 0.01e-3, 0.127e-3, 70e-6, 3.0).is_err());
        // Moderate case: the shift exceeds half the slot -> note, not error.
        let n = gcpw(0.3e-3, 0.1e-3, 0.127e-3, 35e-6, 3.0).unwrap();
        assert_eq!(n.notes.len(), 1, "{n:?}");
        for x in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(gcpw(x, 0.15e-3, 0.127e-3, 0.0, 3.0).is_err());
            assert!(gcpw(0.3e-3, x, 0.127e-3, 0.0, 3.0).is_err());
        }
    }

    #[test]
    fn coplanar_dispersion_limits() {
        let e0 = 2.35;
        let at = |f: f64| frankel_coplanar_eps_eff(0.3e-3, 0.15e-3, 0.127e-3, 3.0, e0, f).unwrap();
        assert_eq!(at(0.0), e0);
        let (a, b, c) = (at(10e9), at(77e9), at(1e15));
        assert!(e0 < a && a < b && b < c && c < 3.0, "{a} {b} {c}");
        assert!((c - 3.0).abs() < 1e-3, "{c}");
        // A coat denser than the substrate: left as it is.
        assert_eq!(
            frankel_coplanar_eps_eff(0.3e-3, 0.15e-3, 0.127e-3, 3.0, 3.2, 77e9).unwrap(),
            3.2
        );
        for x in [0.0, -1.0, f64::NAN] {
            assert!(frankel_coplanar_eps_eff(x, 0.15e-3, 0.127e-3, 3.0, e0, 1e9).is_err());
            assert!(frankel_coplanar_eps_eff(0.3e-3, x, 0.127e-3, 3.0, e0, 1e9).is_err());
        }
    }
}
