//! Where the quasi-TEM description stops: onset frequencies of higher-order
//! and surface-wave modes, and via-fence / via-cavity checks.
//!
//! All inputs SI (metres, hertz, ohm); all outputs in hertz or metres.
//! Items marked "from memory" cite a source whose exact equation was not
//! re-read for this crate; treat them as order-of-magnitude limits.

use crate::consts::{C0, MU0};
use crate::validity::{require_eps_r, require_positive, InputError};
use std::f64::consts::PI;

/// Microstrip transverse resonance, f_TR ≈ c0/[√εr·(2W + 0.8h)].
///
/// Source (from memory): T. C. Edwards, M. B. Steer, *Foundations for
/// Microstrip Circuit Design*, 4th ed., Wiley 2016 (transverse-resonance
/// limit of a wide strip; the book's authors, title, publisher and year
/// checked in a reference list, the equation not found: searched
/// "microstrip transverse resonance frequency limit"). Approximate.
pub fn microstrip_transverse_resonance(
    width: f64,
    height: f64,
    eps_r: f64,
) -> Result<f64, InputError> {
    require_positive("width", width)?;
    require_positive("height", height)?;
    require_eps_r("eps_r", eps_r)?;
    Ok(C0 / (eps_r.sqrt() * (2.0 * width + 0.8 * height)))
}

/// Frequency at which microstrip couples strongly to the TM0 surface wave,
/// f_T = c0·arctan(εr)/(√2·π·h·√(εr − 1)).
///
/// Source (from memory): G. D. Vendelin, "Limitations on stripline Q",
/// Microwave Journal, May 1970 (searched: the title, and the formula in
/// code and pages, no checkable text found). Returns +inf for εr = 1 (no
/// surface wave).
pub fn microstrip_tm0_coupling(height: f64, eps_r: f64) -> Result<f64, InputError> {
    require_positive("height", height)?;
    require_eps_r("eps_r", eps_r)?;
    if eps_r == 1.0 {
        return Ok(f64::INFINITY);
    }
    Ok(C0 * eps_r.atan() / (2f64.sqrt() * PI * height * (eps_r - 1.0).sqrt()))
}

/// Hammerstad's first higher-order microstrip mode, f_p = Z0/(2μ0h).
///
/// Source: E. Hammerstad, Ø. Jensen, IEEE MTT-S Digest 1980 (the f_p
/// normalisation of their dispersion model). For 50 Ω at h = 0.1 mm: 199 GHz.
pub fn microstrip_first_higher_order(z0: f64, height: f64) -> Result<f64, InputError> {
    require_positive("Z0", z0)?;
    require_positive("height", height)?;
    Ok(z0 / (2.0 * MU0 * height))
}

/// Stripline TE-type mode across the strip, f_c ≈ c0/[√εr·(2W + πb/2)].
///
/// Source (from memory): B. C. Wadell, *Transmission Line Design Handbook*,
/// Artech House, Boston 1991 (book details checked in a library catalogue;
/// the equation not found: searched the formula in code and pages). For
/// b = 0.3 mm, W = 0.15 mm, εr = 3.5: 208 GHz.
pub fn stripline_te_cutoff(width: f64, b: f64, eps_r: f64) -> Result<f64, InputError> {
    require_positive("width", width)?;
    require_positive("plane spacing b", b)?;
    require_eps_r("eps_r", eps_r)?;
    Ok(C0 / (eps_r.sqrt() * (2.0 * width + PI * b / 2.0)))
}

/// First non-TEM parallel-plate mode between planes `b` apart,
/// f = c0/(2b√εr) (TE1/TM1 cut-off of a parallel-plate guide; standard
/// waveguide theory, e.g. D. M. Pozar, *Microwave Engineering*, 4th ed., §3.1).
/// The TEM parallel-plate mode itself exists at all frequencies.
pub fn parallel_plate_first_mode(b: f64, eps_r: f64) -> Result<f64, InputError> {
    require_positive("plane spacing b", b)?;
    require_eps_r("eps_r", eps_r)?;
    Ok(C0 / (2.0 * b * eps_r.sqrt()))
}

/// Guided wavelength λg = c0/(f·√εeff).
pub fn guided_wavelength(freq: f64, eps_eff: f64) -> Result<f64, InputError> {
    require_positive("frequency", freq)?;
    require_eps_r("eps_eff", eps_eff)?;
    Ok(C0 / (freq * eps_eff.sqrt()))
}

/// Classification of a via-fence pitch against the guided wavelength.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PitchClass {
    /// pitch ≤ λg/20.
    Strict,
    /// λg/20 < pitch ≤ λg/8.
    Loose,
    /// pitch > λg/8.
    TooWide,
}

/// Via-fence pitch check at frequency `f_max`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PitchCheck {
    /// Guided wavelength at f_max, m.
    pub lambda_g: f64,
    /// λg/8, the loose limit, m.
    pub loose_limit: f64,
    /// λg/20, the strict limit, m.
    pub strict_limit: f64,
    /// Where the pitch falls.
    pub class: PitchClass,
}

/// Compares a stitching-via pitch with λg/8 (loose) and λg/20 (strict) at
/// `f_max`, λg = c0/(f·√εr). These fractions are common practice, no
/// published source. At 40 GHz and εr = 3.5 the limits are 0.50 and 0.20 mm.
pub fn via_pitch_check(pitch: f64, f_max: f64, eps_r: f64) -> Result<PitchCheck, InputError> {
    require_positive("via pitch", pitch)?;
    let lambda_g = guided_wavelength(f_max, eps_r)?;
    let loose_limit = lambda_g / 8.0;
    let strict_limit = lambda_g / 20.0;
    let class = if pitch <= strict_limit {
        PitchClass::Strict
    } else if pitch <= loose_limit {
        PitchClass::Loose
    } else {
        PitchClass::TooWide
    };
    Ok(PitchCheck {
        lambda_g,
        loose_limit,
        strict_limit,
        class,
    })
}

/// Resonance f_mn of the rectangular cavity a × l formed by vias between two
/// planes: f_mn = c0/(2√εr)·√((m/a)² + (n/l)²) (TM_mn0 of a rectangular
/// cavity with plate spacing below half a wavelength; Pozar, *Microwave
/// Engineering*, 4th ed., §6.3, with the via rows as side walls — a first-order
/// model that ignores via diameter and leakage).
pub fn via_cell_resonance(a: f64, l: f64, eps_r: f64, m: u32, n: u32) -> Result<f64, InputError> {
    require_positive("cell length a", a)?;
    require_positive("cell length l", l)?;
    require_eps_r("eps_r", eps_r)?;
    if m == 0 && n == 0 {
        return Err(InputError::new(
            "cavity mode indices m = n = 0 have no resonance",
        ));
    }
    let (m, n) = (m as f64, n as f64);
    Ok(C0 / (2.0 * eps_r.sqrt()) * ((m / a).powi(2) + (n / l).powi(2)).sqrt())
}

/// Lowest mode of a square via cell of pitch p: f_110 = c0/(√2·√εr·p).
pub fn via_cell_f110(pitch: f64, eps_r: f64) -> Result<f64, InputError> {
    via_cell_resonance(pitch, pitch, eps_r, 1, 1)
}

/// Via-fenced channel treated as a waveguide.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FencedChannel {
    /// Equivalent solid-wall width a_eff = a − d²/(0.95p), m.
    pub a_eff: f64,
    /// TE10 cut-off c0/(2·a_eff·√εr), Hz.
    pub f_te10: f64,
    /// Whether the low-leakage rule p ≤ 2d holds.
    pub low_leakage: bool,
}

/// TE10 cut-off of a channel of centre-to-centre width `a` between two via
/// rows (via diameter `d`, pitch `p`).
///
/// a_eff = a − d²/(0.95p): F. Cassivi et al., "Dispersion characteristics of
/// substrate integrated rectangular waveguide", IEEE MWCL 12(9), 2002 (from
/// memory). Low-leakage rule p ≤ 2d: D. Deslandes, K. Wu, IEEE T-MTT 54(6),
/// 2006 (from memory; both searched with the two formulas, not found).
/// Example: a = 1 mm, d = 0.3 mm, p = 0.6 mm, εr = 3 gives
/// 103 GHz. Errors when p ≤ d (vias overlap) or a_eff ≤ 0.
pub fn via_fenced_channel(a: f64, d: f64, p: f64, eps_r: f64) -> Result<FencedChannel, InputError> {
    require_positive("channel width a", a)?;
    require_positive("via diameter d", d)?;
    require_positive("via pitch p", p)?;
    require_eps_r("eps_r", eps_r)?;
    if p <= d {
        return Err(InputError::new(format!(
            "via pitch {p} m must exceed the via diameter {d} m"
        )));
    }
    let a_eff = a - d * d / (0.95 * p);
    if a_eff <= 0.0 {
        return Err(InputError::new(format!(
            "channel width {a} m leaves no room between the vias"
        )));
    }
    Ok(FencedChannel {
        a_eff,
        f_te10: C0 / (2.0 * a_eff * eps_r.sqrt()),
        low_leakage: p <= 2.0 * d,
    })
}

/// GCPW TE1 surface-wave cut-off of the grounded slab, f_TE = c0/(4h√(εr − 1)).
///
/// Source: the TE1 cut-off of a grounded dielectric slab (Pozar, *Microwave
/// Engineering*, 4th ed., §3.6); it is the f_TE that the CPW dispersion model
/// of Gupta et al. (1996) normalises to. +inf for εr = 1.
pub fn gcpw_te1_cutoff(height: f64, eps_r: f64) -> Result<f64, InputError> {
    require_positive("height", height)?;
    require_eps_r("eps_r", eps_r)?;
    if eps_r == 1.0 {
        return Ok(f64::INFINITY);
    }
    Ok(C0 / (4.0 * height * (eps_r - 1.0).sqrt()))
}

/// Patch-like resonance of a narrow, unstitched top ground of length `lg`:
/// c0/(2·lg·√εeff). Common practice, no published source.
pub fn ground_patch_resonance(lg: f64, eps_eff: f64) -> Result<f64, InputError> {
    require_positive("ground length", lg)?;
    require_eps_r("eps_eff", eps_eff)?;
    Ok(C0 / (2.0 * lg * eps_eff.sqrt()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn worked_values() {
        // Values recomputed independently from the published expressions.
        // Hammerstad f_p, 50 ohm at h = 0.1 mm: 199 GHz.
        assert!(rel(microstrip_first_higher_order(50.0, 0.1e-3).unwrap(), 199e9) < 3e-3);
        // Stripline TE-type mode, b 0.3, W 0.15 mm, eps_r 3.5: 208 GHz.
        assert!(rel(stripline_te_cutoff(0.15e-3, 0.3e-3, 3.5).unwrap(), 208e9) < 3e-3);
        // Fenced channel a 1, d 0.3, p 0.6 mm, eps_r 3: 103 GHz.
        let ch = via_fenced_channel(1e-3, 0.3e-3, 0.6e-3, 3.0).unwrap();
        assert!(rel(ch.f_te10, 103e9) < 5e-3, "{}", ch.f_te10);
        assert!(ch.low_leakage);
        // Pitch limits at 40 GHz, eps_r 3.5: 0.50 mm and 0.20 mm.
        let pc = via_pitch_check(0.3e-3, 40e9, 3.5).unwrap();
        assert!(rel(pc.loose_limit, 0.50e-3) < 2e-2 && rel(pc.strict_limit, 0.20e-3) < 2e-2);
        assert_eq!(pc.class, PitchClass::Loose);
        assert_eq!(
            via_pitch_check(0.1e-3, 40e9, 3.5).unwrap().class,
            PitchClass::Strict
        );
        assert_eq!(
            via_pitch_check(1e-3, 40e9, 3.5).unwrap().class,
            PitchClass::TooWide
        );
    }

    #[test]
    fn cavity_and_plates() {
        // f110 of a square cell equals the general formula and c0/(√2 √εr p).
        let p = 1e-3;
        let f = via_cell_f110(p, 4.0).unwrap();
        assert!(rel(f, C0 / (2f64.sqrt() * 2.0 * p)) < 1e-12);
        // Parallel plates 1 mm apart in air: 149.9 GHz (half wavelength = b).
        assert!(rel(parallel_plate_first_mode(1e-3, 1.0).unwrap(), 149.896_229e9) < 1e-6);
        // Grounded slab TE1: quarter wavelength in the slab at cut-off.
        let fte = gcpw_te1_cutoff(0.127e-3, 3.0).unwrap();
        assert!(rel(C0 / (fte * (3.0f64 - 1.0).sqrt()), 4.0 * 0.127e-3) < 1e-12);
        assert!(gcpw_te1_cutoff(1e-3, 1.0).unwrap().is_infinite());
        assert!(microstrip_tm0_coupling(1e-3, 1.0).unwrap().is_infinite());
        let ftm = microstrip_tm0_coupling(0.2e-3, 3.5).unwrap();
        assert!(ftm > 100e9 && ftm < 400e9, "{ftm}");
        let ftr = microstrip_transverse_resonance(0.4e-3, 0.2e-3, 3.5).unwrap();
        assert!(rel(ftr, C0 / (3.5f64.sqrt() * 0.96e-3)) < 1e-12);
    }

    #[test]
    fn bad_inputs() {
        for x in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(microstrip_transverse_resonance(x, 1e-3, 3.0).is_err());
            assert!(microstrip_tm0_coupling(x, 3.0).is_err());
            assert!(stripline_te_cutoff(1e-3, x, 3.0).is_err());
            assert!(via_pitch_check(x, 1e9, 3.0).is_err());
            assert!(via_fenced_channel(1e-3, 0.3e-3, x, 3.0).is_err());
            assert!(guided_wavelength(x, 3.0).is_err());
        }
        assert!(via_fenced_channel(1e-3, 0.3e-3, 0.2e-3, 3.0).is_err());
        assert!(via_cell_resonance(1e-3, 1e-3, 3.0, 0, 0).is_err());
        assert!(microstrip_tm0_coupling(1e-3, 0.5).is_err());
    }
}
