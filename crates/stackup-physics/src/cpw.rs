//! Grounded coplanar waveguide (conductor-backed CPW) by conformal mapping.
//!
//! Centre strip of width `width`, slots `gap` to the coplanar grounds on both
//! sides, on a dielectric of height `height` over a ground plane; air above.
//! The model assumes infinitely wide top grounds stitched to the bottom
//! plane. All lengths in metres.

use crate::consts::ETA0;
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
}
