//! Microstrip closed forms: Hammerstad-Jensen 1980 static model with strip
//! thickness, Kirschning-Jansen 1982 dispersion of the effective
//! permittivity, Jansen-Kirschning 1983 dispersion of the characteristic
//! impedance, and width synthesis for a target impedance.
//!
//! Geometry: strip of width `width` and thickness `thickness` on a dielectric
//! of height `height` (plane to strip bottom) and relative permittivity
//! `eps_r`, open (air) above. All lengths in metres, frequencies in hertz.

use crate::consts::{C0, ETA0};
use crate::validity::{
    require_eps_r, require_non_negative, require_positive, InputError, ValidityNote,
};
use std::f64::consts::{E, PI};

/// Model name used in validity notes.
pub const HJ_MODEL: &str = "Hammerstad-Jensen 1980 microstrip";
/// Model name used in validity notes.
pub const KJ_MODEL: &str = "Kirschning-Jansen 1982 microstrip dispersion";
/// Model name used in validity notes.
pub const JK_MODEL: &str = "Jansen-Kirschning 1983 microstrip impedance dispersion";

/// Static or dispersive microstrip result.
#[derive(Debug, Clone, PartialEq)]
pub struct MicrostripResult {
    /// Characteristic impedance, ohm.
    pub z0: f64,
    /// Effective relative permittivity.
    pub eps_eff: f64,
    /// Notes for every input outside the model's published validity range.
    pub notes: Vec<ValidityNote>,
}

/// Air-filled zero-thickness impedance Z01(u), u = W/h (Hammerstad-Jensen 1980):
/// Z01 = (η0/2π)·ln[F/u + √(1 + 4/u²)], F = 6 + (2π − 6)·exp[−(30.666/u)^0.7528].
///
/// Stated accuracy 0.01 % for u ≤ 1, 0.03 % up to u = 1000.
/// Returns NaN for u ≤ 0 or NaN.
pub fn hj_z01_air(u: f64) -> f64 {
    if u.is_nan() || u <= 0.0 {
        return f64::NAN;
    }
    let f = 6.0 + (2.0 * PI - 6.0) * (-(30.666 / u).powf(0.7528)).exp();
    ETA0 / (2.0 * PI) * (f / u + (1.0 + 4.0 / (u * u)).sqrt()).ln()
}

/// Zero-thickness effective permittivity εeff(u, εr) (Hammerstad-Jensen 1980):
/// εeff = (εr+1)/2 + (εr−1)/2·(1 + 10/u)^(−a·b).
///
/// Stated accuracy 0.2 % for 0.01 ≤ u ≤ 100, εr ≤ 128.
pub fn hj_eps_eff_zero_t(u: f64, eps_r: f64) -> f64 {
    if u.is_nan() || u <= 0.0 || eps_r.is_nan() {
        return f64::NAN;
    }
    let a = 1.0
        + ((u.powi(4) + (u / 52.0).powi(2)) / (u.powi(4) + 0.432)).ln() / 49.0
        + (1.0 + (u / 18.1).powi(3)).ln() / 18.7;
    let b = 0.564 * ((eps_r - 0.9) / (eps_r + 3.0)).powf(0.053);
    (eps_r + 1.0) / 2.0 + (eps_r - 1.0) / 2.0 * (1.0 + 10.0 / u).powf(-a * b)
}

/// Width corrections (Δu1, Δur) for strip thickness, Hammerstad-Jensen 1980:
/// Δu1 = (tn/π)·ln[1 + 4e/(tn·coth²√(6.517u))], Δur = ½·Δu1·(1 + sech√(εr−1)),
/// with tn = t/h. Both are 0 for t = 0.
pub fn hj_thickness_corrections(u: f64, t_over_h: f64, eps_r: f64) -> (f64, f64) {
    if t_over_h.is_nan() || t_over_h <= 0.0 || !u.is_finite() || u <= 0.0 {
        return (0.0, 0.0);
    }
    let th = (6.517 * u).sqrt().tanh();
    // 1/(tn·coth²) = tanh²/tn
    let du1 = t_over_h / PI * (1.0 + 4.0 * E * th * th / t_over_h).ln();
    let dur = 0.5 * du1 * (1.0 + 1.0 / (eps_r - 1.0).max(0.0).sqrt().cosh());
    (du1, dur)
}

/// Static microstrip impedance and effective permittivity with finite strip
/// thickness.
///
/// Source: E. Hammerstad, Ø. Jensen, "Accurate models for microstrip
/// computer-aided design", IEEE MTT-S Int. Microwave Symp. Digest, 1980,
/// pp. 407–409. Z0 = Z01(u+Δur)/√εeff(u+Δur),
/// εeff = εeff(u+Δur)·[Z01(u+Δu1)/Z01(u+Δur)]².
///
/// Validity (notes when outside): 0.01 ≤ W/h ≤ 100, 1 ≤ εr ≤ 128; accuracy
/// 0.2 % on εeff and 0.01–0.03 % on the air impedance. Errors for
/// non-finite, zero or negative dimensions and εr < 1.
pub fn hammerstad_jensen(
    width: f64,
    height: f64,
    thickness: f64,
    eps_r: f64,
) -> Result<MicrostripResult, InputError> {
    require_positive("microstrip width", width)?;
    require_positive("microstrip height", height)?;
    require_non_negative("microstrip thickness", thickness)?;
    require_eps_r("microstrip eps_r", eps_r)?;
    let u = width / height;
    let mut notes = Vec::new();
    ValidityNote::push_if_outside(&mut notes, HJ_MODEL, "W/h", u, 0.01, 100.0);
    ValidityNote::push_if_outside(&mut notes, HJ_MODEL, "eps_r", eps_r, 1.0, 128.0);
    let (du1, dur) = hj_thickness_corrections(u, thickness / height, eps_r);
    let ur = u + dur;
    let u1 = u + du1;
    let zr = hj_z01_air(ur);
    let z1 = hj_z01_air(u1);
    let e = hj_eps_eff_zero_t(ur, eps_r);
    let z0 = zr / e.sqrt();
    let eps_eff = e * (z1 / zr).powi(2);
    Ok(MicrostripResult { z0, eps_eff, notes })
}

/// Normalised frequency fn = f·h in GHz·mm used by the Kirschning-Jansen
/// formulas.
pub(crate) fn f_n(freq: f64, height: f64) -> f64 {
    freq * 1e-9 * height * 1e3
}

/// Effective width ratio the dispersion formulas use: u + Δur from the
/// Hammerstad-Jensen thickness correction (equal to W/h for t = 0).
fn u_eff(width: f64, height: f64, thickness: f64, eps_r: f64) -> f64 {
    let u = width / height;
    u + hj_thickness_corrections(u, thickness / height, eps_r).1
}

/// Frequency-dependent εeff(f) of microstrip.
///
/// Source: M. Kirschning, R. H. Jansen, "Accurate model for effective
/// dielectric constant of microstrip with validity up to millimetre-wave
/// frequencies", Electronics Letters 18(6), 1982, pp. 272–273.
/// εeff(f) = εr − (εr − εeff(0))/(1 + P), fn = f·h in GHz·mm,
/// P = P1·P2·[(0.1844 + P3·P4)·fn]^1.5763.
///
/// `eps_eff0` is the static value (normally from [`hammerstad_jensen`]);
/// u is the thickness-corrected W/h. Validity (notes): 0.1 ≤ u ≤ 100,
/// εr ≤ 20, h/λ0 ≤ 0.13; stated accuracy 0.6 %.
pub fn kirschning_jansen_eps_eff(
    width: f64,
    height: f64,
    thickness: f64,
    eps_r: f64,
    eps_eff0: f64,
    freq: f64,
) -> Result<(f64, Vec<ValidityNote>), InputError> {
    require_positive("microstrip width", width)?;
    require_positive("microstrip height", height)?;
    require_non_negative("microstrip thickness", thickness)?;
    require_eps_r("microstrip eps_r", eps_r)?;
    require_eps_r("microstrip static eps_eff", eps_eff0)?;
    require_non_negative("frequency", freq)?;
    let u = u_eff(width, height, thickness, eps_r);
    let fnn = f_n(freq, height);
    let mut notes = Vec::new();
    ValidityNote::push_if_outside(&mut notes, KJ_MODEL, "W/h", u, 0.1, 100.0);
    ValidityNote::push_if_outside(&mut notes, KJ_MODEL, "eps_r", eps_r, 1.0, 20.0);
    ValidityNote::push_if_outside(
        &mut notes,
        KJ_MODEL,
        "h/lambda0",
        height * freq / C0,
        0.0,
        0.13,
    );
    Ok((kj_eps_eff_raw(u, fnn, eps_r, eps_eff0), notes))
}

fn kj_eps_eff_raw(u: f64, fnn: f64, eps_r: f64, eps_eff0: f64) -> f64 {
    let [p1, p2, p3, p4] = kj_p1_to_p4(u, fnn, eps_r);
    let p = p1 * p2 * ((0.1844 + p3 * p4) * fnn).powf(1.5763);
    eps_r - (eps_r - eps_eff0) / (1.0 + p)
}

/// P1…P4 of Kirschning-Jansen 1982, shared with the coupled-line model of
/// 1984 (`crate::coupled::kirschning_jansen_coupled_dispersion`).
pub(crate) fn kj_p1_to_p4(u: f64, fnn: f64, eps_r: f64) -> [f64; 4] {
    let p1 = 0.27488 + (0.6315 + 0.525 / (1.0 + 0.0157 * fnn).powi(20)) * u
        - 0.065683 * (-8.7513 * u).exp();
    let p2 = 0.33622 * (1.0 - (-0.03442 * eps_r).exp());
    let p3 = 0.0363 * (-4.6 * u).exp() * (1.0 - (-(fnn / 38.7).powf(4.97)).exp());
    let p4 = 1.0 + 2.751 * (1.0 - (-(eps_r / 15.916).powi(8)).exp());
    [p1, p2, p3, p4]
}

/// Frequency-dependent characteristic impedance of microstrip,
/// Z(f) = Z(0)·(R13/R14)^R17.
///
/// Source: R. H. Jansen, M. Kirschning, "Arguments and an accurate model for
/// the power-current formulation of microstrip characteristic impedance",
/// AEÜ 37, 1983, pp. 108–112 (coefficients R1…R17 from memory of the paper
/// as transcribed in open references; searched: the paper's title and
/// coefficients, not found; R1, R2, R6 clamped to ≤ 20; in R8 the
/// factor (fn/18.365)^2.745 is inside the exponential).
///
/// Needs the static (`z0_static`, `eps_eff0`) and dispersive (`eps_eff_f`,
/// from [`kirschning_jansen_eps_eff`]) values. Validity (notes):
/// 0.1 ≤ u ≤ 10, εr ≤ 18, h/λ0 ≤ 0.1.
#[allow(clippy::too_many_arguments)]
pub fn jansen_kirschning_z0(
    width: f64,
    height: f64,
    thickness: f64,
    eps_r: f64,
    z0_static: f64,
    eps_eff0: f64,
    eps_eff_f: f64,
    freq: f64,
) -> Result<(f64, Vec<ValidityNote>), InputError> {
    require_positive("microstrip width", width)?;
    require_positive("microstrip height", height)?;
    require_non_negative("microstrip thickness", thickness)?;
    require_eps_r("microstrip eps_r", eps_r)?;
    require_positive("static Z0", z0_static)?;
    require_eps_r("static eps_eff", eps_eff0)?;
    require_eps_r("dispersive eps_eff", eps_eff_f)?;
    require_non_negative("frequency", freq)?;
    let u = u_eff(width, height, thickness, eps_r);
    let fnn = f_n(freq, height);
    let mut notes = Vec::new();
    ValidityNote::push_if_outside(&mut notes, JK_MODEL, "W/h", u, 0.1, 10.0);
    ValidityNote::push_if_outside(&mut notes, JK_MODEL, "eps_r", eps_r, 1.0, 18.0);
    ValidityNote::push_if_outside(
        &mut notes,
        JK_MODEL,
        "h/lambda0",
        height * freq / C0,
        0.0,
        0.1,
    );
    let er = eps_r;
    let r1 = (0.03891 * er.powf(1.4)).min(20.0);
    let r2 = (0.267 * u.powi(7)).min(20.0);
    let r3 = 4.766 * (-3.228 * u.powf(0.641)).exp();
    let r4 = 0.016 + (0.0514 * er).powf(4.524);
    let r5 = (fnn / 28.843).powi(12);
    let r6 = (22.2 * u.powf(1.92)).min(20.0);
    let r7 = 1.206 - 0.3144 * (-r1).exp() * (1.0 - (-r2).exp());
    let r8 =
        1.0 + 1.275 * (1.0 - (-0.004625 * r3 * er.powf(1.674) * (fnn / 18.365).powf(2.745)).exp());
    let em1_6 = (er - 1.0).powi(6);
    let r9 = 5.086 * r4 * r5 / (0.3838 + 0.386 * r4) * (-r6).exp() / (1.0 + 1.2992 * r5) * em1_6
        / (1.0 + 10.0 * em1_6);
    let r10 = 0.00044 * er.powf(2.136) + 0.0184;
    let x11 = (fnn / 19.47).powi(6);
    let r11 = x11 / (1.0 + 0.0962 * x11);
    let r12 = 1.0 / (1.0 + 0.00245 * u * u);
    let r13 = 0.9408 * eps_eff_f.powf(r8) - 0.9603;
    let r14 = (0.9408 - r9) * eps_eff0.powf(r8) - 0.9603;
    let r15 = 0.707 * r10 * (fnn / 12.3).powf(1.097);
    let r16 = 1.0 + 0.0503 * er * er * r11 * (1.0 - (-(u / 15.0).powi(6)).exp());
    let r17 = r7 * (1.0 - 1.1241 * r12 / r16 * (-0.026 * fnn.powf(1.15656) - r15).exp());
    let z = z0_static * (r13 / r14).powf(r17);
    if !z.is_finite() {
        return Err(InputError::new(format!(
            "Jansen-Kirschning impedance dispersion undefined here (R13/R14 = {r13}/{r14})"
        )));
    }
    Ok((z, notes))
}

/// Microstrip Z0 and εeff at frequency `freq`: Hammerstad-Jensen static
/// values with Kirschning-Jansen 1982 εeff(f) and Jansen-Kirschning 1983
/// Z0(f). Notes of all three models are merged.
pub fn microstrip_dispersive(
    width: f64,
    height: f64,
    thickness: f64,
    eps_r: f64,
    freq: f64,
) -> Result<MicrostripResult, InputError> {
    let s = hammerstad_jensen(width, height, thickness, eps_r)?;
    let (ef, n1) = kirschning_jansen_eps_eff(width, height, thickness, eps_r, s.eps_eff, freq)?;
    let (zf, n2) =
        jansen_kirschning_z0(width, height, thickness, eps_r, s.z0, s.eps_eff, ef, freq)?;
    let mut notes = s.notes;
    notes.extend(n1);
    notes.extend(n2);
    Ok(MicrostripResult {
        z0: zf,
        eps_eff: ef,
        notes,
    })
}

/// Result of a width synthesis.
#[derive(Debug, Clone, PartialEq)]
pub struct WidthSynthesis {
    /// Width that gives the target impedance, m.
    pub width: f64,
    /// Impedance of the model at that width, ohm.
    pub z0: f64,
    /// Effective permittivity at that width.
    pub eps_eff: f64,
    /// Validity notes of the model at that width.
    pub notes: Vec<ValidityNote>,
}

/// Root of a continuous function on [lo, hi] with f(lo), f(hi) of opposite
/// sign, by Brent's method (R. P. Brent, *Algorithms for Minimization Without
/// Derivatives*, 1973, ch. 4). Returns None if the bracket is invalid or a
/// NaN appears.
pub(crate) fn brent_root<F: FnMut(f64) -> f64>(
    mut f: F,
    lo: f64,
    hi: f64,
    xtol: f64,
) -> Option<f64> {
    let (mut a, mut b) = (lo, hi);
    let (mut fa, mut fb) = (f(a), f(b));
    if fa.is_nan() || fb.is_nan() || fa * fb > 0.0 {
        return None;
    }
    if fa == 0.0 {
        return Some(a);
    }
    if fb == 0.0 {
        return Some(b);
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..200 {
        if fb * fc > 0.0 {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * xtol;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Some(b);
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qq = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qq * (qq - r) - (b - a) * (r - 1.0));
                q = (qq - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b);
        if fb.is_nan() {
            return None;
        }
    }
    Some(b)
}

/// Finds the width (m) at which a monotonically decreasing impedance
/// function `z_of_w` equals `target`, searching `w_min..w_max` in ln w.
pub(crate) fn synthesize_monotone<F: FnMut(f64) -> f64>(
    mut z_of_w: F,
    target: f64,
    w_min: f64,
    w_max: f64,
    what: &str,
) -> Result<f64, InputError> {
    require_positive("target impedance", target)?;
    let zmax = z_of_w(w_min);
    let zmin = z_of_w(w_max);
    if !(target <= zmax && target >= zmin) {
        return Err(InputError::new(format!(
            "{what}: target {target} ohm is outside the reachable range {zmin:.4}..{zmax:.4} ohm \
             for widths {w_min:.4e}..{w_max:.4e} m"
        )));
    }
    let x = brent_root(|x| z_of_w(x.exp()) - target, w_min.ln(), w_max.ln(), 1e-13)
        .ok_or_else(|| InputError::new(format!("{what}: root search failed")))?;
    Ok(x.exp())
}

/// Width of a microstrip for a target static impedance (Hammerstad-Jensen
/// 1980 with thickness), by Brent's bracketed root search over
/// 1e-3·h ≤ W ≤ 1e3·h. Errors if the target is not reachable there.
pub fn microstrip_width_for_z0(
    target_z0: f64,
    height: f64,
    thickness: f64,
    eps_r: f64,
) -> Result<WidthSynthesis, InputError> {
    require_positive("microstrip height", height)?;
    require_non_negative("microstrip thickness", thickness)?;
    require_eps_r("microstrip eps_r", eps_r)?;
    let z = |w: f64| {
        hammerstad_jensen(w, height, thickness, eps_r)
            .map(|r| r.z0)
            .unwrap_or(f64::NAN)
    };
    let w = synthesize_monotone(
        z,
        target_z0,
        1e-3 * height,
        1e3 * height,
        "microstrip synthesis",
    )?;
    let r = hammerstad_jensen(w, height, thickness, eps_r)?;
    Ok(WidthSynthesis {
        width: w,
        z0: r.z0,
        eps_eff: r.eps_eff,
        notes: r.notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn hj_spot_values() {
        // Hammerstad-Jensen 1980 formulas evaluated independently (recomputed
        // with a separate script from the published equations).
        let h = 1e-3;
        for (u, er, t, z, e) in [
            (1.0, 4.0, 0.0, 74.052, 2.9146),
            (2.0, 4.0, 0.0, 50.811, 3.0701),
            (1.0, 10.0, 0.0, 48.823, 6.7053),
            (1.0, 4.0, 0.1, 70.681, 2.8164),
            (3.0812, 2.2, 0.0, 50.02, 1.881),
        ] {
            let r = hammerstad_jensen(u * h, h, t * h, er).unwrap();
            assert!(rel(r.z0, z) < 1e-4, "u={u} er={er} t={t}: {}", r.z0);
            assert!(rel(r.eps_eff, e) < 1e-4 * 2.0, "u={u}: {}", r.eps_eff);
            assert!(r.notes.is_empty());
        }
    }

    #[test]
    fn kj_dispersion_spot_values() {
        // Kirschning-Jansen 1982 evaluated independently for u = 3.0812,
        // eps_r = 2.2, h = 1.27 mm: 1.8839 (1 GHz), 1.9371 (10 GHz), 2.0536 (30 GHz).
        let h = 1.27e-3;
        let s = hammerstad_jensen(3.0812 * h, h, 0.0, 2.2).unwrap();
        for (f, want) in [(1e9, 1.8839), (10e9, 1.9371), (30e9, 2.0536)] {
            let (e, n) = kirschning_jansen_eps_eff(3.0812 * h, h, 0.0, 2.2, s.eps_eff, f).unwrap();
            assert!(rel(e, want) < 1e-4, "f={f}: {e}");
            assert!(n.is_empty());
        }
    }

    #[test]
    fn dispersion_limits() {
        let h = 0.2e-3;
        let s = hammerstad_jensen(0.35e-3, h, 35e-6, 3.5).unwrap();
        let d = microstrip_dispersive(0.35e-3, h, 35e-6, 3.5, 0.0).unwrap();
        assert!(rel(d.eps_eff, s.eps_eff) < 1e-12);
        assert!(rel(d.z0, s.z0) < 1e-3);
        let hi = microstrip_dispersive(0.35e-3, h, 35e-6, 3.5, 60e9).unwrap();
        assert!(hi.eps_eff > s.eps_eff && hi.eps_eff < 3.5);
        assert!(hi.z0 > s.z0, "power-current Z rises with frequency");
    }

    #[test]
    fn out_of_range_notes() {
        let r = hammerstad_jensen(0.001e-3, 1e-3, 0.0, 200.0).unwrap();
        assert_eq!(r.notes.len(), 2);
        let d = microstrip_dispersive(0.5e-3, 1e-3, 0.0, 4.0, 100e9).unwrap();
        assert!(d.notes.iter().any(|n| n.parameter == "h/lambda0"));
    }

    #[test]
    fn synthesis_round_trip() {
        for (z, er, t) in [(50.0, 4.0, 35e-6), (30.0, 10.0, 0.0), (90.0, 3.0, 18e-6)] {
            let s = microstrip_width_for_z0(z, 0.2e-3, t, er).unwrap();
            assert!(rel(s.z0, z) < 1e-9, "{s:?}");
        }
        assert!(microstrip_width_for_z0(0.01, 0.2e-3, 0.0, 4.0).is_err());
        assert!(microstrip_width_for_z0(1000.0, 0.2e-3, 0.0, 4.0).is_err());
        assert!(microstrip_width_for_z0(f64::NAN, 0.2e-3, 0.0, 4.0).is_err());
    }

    #[test]
    fn bad_inputs_are_errors() {
        for x in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(hammerstad_jensen(x, 1e-3, 0.0, 4.0).is_err());
            assert!(hammerstad_jensen(1e-3, x, 0.0, 4.0).is_err());
            assert!(microstrip_dispersive(1e-3, 1e-3, 0.0, x, 1e9).is_err());
        }
        assert!(hammerstad_jensen(1e-3, 1e-3, 0.0, 0.5).is_err());
    }
}
