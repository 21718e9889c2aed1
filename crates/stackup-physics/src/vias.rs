//! Through-via stubs: the unused part of a plated barrel, below (or above)
//! the layer a signal leaves the via on, and its quarter-wave resonance.
//!
//! All inputs SI (metres, hertz); outputs in hertz or as a relative
//! permittivity.

use crate::consts::C0;
use crate::validity::{finite, require_eps_r, require_positive, InputError};

/// First resonance of an open-ended stub of length `length` in a medium of
/// effective relative permittivity `eps_eff`: f = c0/(4·L·√εeff), Hz.
///
/// An open-circuited lossless line has the input impedance
/// Z_in = −j·Z0·cot(βL), zero where βL = π/2 (D. M. Pozar, *Microwave
/// Engineering*, 4th ed., Wiley 2012, §2.3, the terminated lossless line;
/// section number from memory; searched: the book's numbering, only catalogue
/// entries found). Hung as a shunt on a through line, the stub
/// shorts it there and |S21| has its first null (checked against scikit-rf's
/// shunt open stub, `tests/checks/vias_reference.rs`). The next nulls are at
/// 3f, 5f, ….
///
/// A via stub is such a line with the barrel as inner conductor and the
/// plane antipads as outer one; its field is not a TEM mode and its pads add
/// capacitance, so for a via the number is an estimate of where the notch
/// lies, not a measurement.
pub fn quarter_wave_stub_resonance(length: f64, eps_eff: f64) -> Result<f64, InputError> {
    require_positive("stub length", length)?;
    require_eps_r("eps_eff", eps_eff)?;
    finite("stub resonance", C0 / (4.0 * length * eps_eff.sqrt()))
}

/// Thickness-weighted relative permittivity of the dielectrics a stub
/// crosses, Σ tᵢ·εᵢ / Σ tᵢ, with `segments` as (thickness m, εr) pairs.
///
/// The barrel runs through the layers in series, so the wave crosses each in
/// turn. For sections of equal impedance the exact quarter-wave condition is
/// Σ βᵢ·tᵢ = π/2, i.e. the transit-time average (Σ tᵢ·√εᵢ / Σ tᵢ)², which
/// differs from this one by well under 0.1 % for the Dk spread of one
/// laminate family. With the impedance stepping as 1/√εᵢ (same barrel and
/// antipad in every layer), neither average is exact: against scikit-rf's
/// stepped-impedance cascade (`tests/reference/gen_via_stub_reference.py`)
/// the resonance from this average is within 1 % for alternating cores and
/// prepregs of similar Dk and within 7 % for stubs crossing blocks of Dk 3.0
/// and 4.4, the sign depending on which block lies at the open end. That is
/// inside the uncertainty of the via model itself.
pub fn thickness_weighted_eps(segments: &[(f64, f64)]) -> Result<f64, InputError> {
    let (mut num, mut den) = (0.0, 0.0);
    for &(t, eps) in segments {
        require_positive("segment thickness", t)?;
        require_eps_r("segment eps_r", eps)?;
        num += t * eps;
        den += t;
    }
    require_positive("total stub thickness", den)?;
    finite("thickness-weighted eps_r", num / den)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bad_input_is_an_error_not_a_panic() {
        assert!(quarter_wave_stub_resonance(0.0, 3.5).is_err());
        assert!(quarter_wave_stub_resonance(-1e-3, 3.5).is_err());
        assert!(quarter_wave_stub_resonance(f64::NAN, 3.5).is_err());
        assert!(quarter_wave_stub_resonance(1e-3, 0.5).is_err());
        assert!(quarter_wave_stub_resonance(1e-310, 1.0).is_err());
        assert!(thickness_weighted_eps(&[]).is_err());
        assert!(thickness_weighted_eps(&[(1e-4, f64::INFINITY)]).is_err());
        assert!(thickness_weighted_eps(&[(0.0, 3.0)]).is_err());
    }

    #[test]
    fn quarter_wave_in_vacuum() {
        // A quarter wave of 1 mm in vacuum: c0/4 mm = 74.948 GHz (c0 exact, SI).
        let f = quarter_wave_stub_resonance(1e-3, 1.0).unwrap();
        assert!((f - 74.948_114_5e9).abs() < 1e3, "{f}");
    }
}
