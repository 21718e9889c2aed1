//! Edge-coupled line closed forms: Cohn 1955 coupled stripline (t = 0) and
//! Kirschning-Jansen 1984 coupled microstrip (static, t = 0).
//!
//! Two equal strips of width `width` separated by the edge-to-edge gap `gap`.
//! Z_diff = 2·Z_odd and Z_common = Z_even/2 (terminated pair, no coupling
//! to other conductors). All lengths in metres.

use crate::consts::ETA0;
use crate::elliptic::k_ratio_pair;
use crate::microstrip::{f_n, hj_eps_eff_zero_t, hj_z01_air, kj_p1_to_p4};
use crate::validity::{
    require_eps_r, require_non_negative, require_positive, InputError, ValidityNote,
};
use std::f64::consts::PI;

/// Model name used in validity notes.
pub const KJ84_MODEL: &str = "Kirschning-Jansen 1984 coupled microstrip";

/// The even and odd modes of a symmetric coupled pair: the one pair
/// result of the crate (closed forms and the field solver alike).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModalPair {
    /// Even-mode impedance, ohm.
    pub z_even: f64,
    /// Odd-mode impedance, ohm.
    pub z_odd: f64,
    /// Even-mode effective permittivity.
    pub eps_eff_even: f64,
    /// Odd-mode effective permittivity.
    pub eps_eff_odd: f64,
}

impl ModalPair {
    /// Differential impedance 2·Z_odd, ohm.
    pub fn z_diff(&self) -> f64 {
        2.0 * self.z_odd
    }

    /// Common-mode impedance Z_even/2, ohm.
    pub fn z_common(&self) -> f64 {
        self.z_even / 2.0
    }
}

/// A closed form's pair with its validity notes.
#[derive(Debug, Clone, PartialEq)]
pub struct CoupledResult {
    pub modes: ModalPair,
    /// Validity notes.
    pub notes: Vec<ValidityNote>,
}

impl CoupledResult {
    fn new(
        z_even: f64,
        z_odd: f64,
        eps_eff_even: f64,
        eps_eff_odd: f64,
        notes: Vec<ValidityNote>,
    ) -> Self {
        CoupledResult {
            modes: ModalPair {
                z_even,
                z_odd,
                eps_eff_even,
                eps_eff_odd,
            },
            notes,
        }
    }
}

/// 1 − tanh(x) without cancellation, x ≥ 0.
fn one_minus_tanh(x: f64) -> f64 {
    let e = (-2.0 * x).exp();
    2.0 * e / (1.0 + e)
}

/// Edge-coupled stripline, zero thickness, strips centred between planes
/// `b` apart, single dielectric.
///
/// Source: S. B. Cohn, "Shielded coupled-strip transmission line", IRE
/// Trans. MTT-3, Oct. 1955, pp. 29–38:
/// ke = tanh(πW/2b)·tanh(π(W+S)/2b), ko = tanh(πW/2b)·coth(π(W+S)/2b),
/// Z0e,o = η0/(4√εr)·K(k′e,o)/K(ke,o). Exact for t = 0 (conformal mapping);
/// εeff = εr for both modes (TEM). The complementary moduli are formed
/// without cancellation.
pub fn cohn_coupled_stripline(
    width: f64,
    gap: f64,
    b: f64,
    eps_r: f64,
) -> Result<CoupledResult, InputError> {
    require_positive("coupled stripline width", width)?;
    require_positive("coupled stripline gap", gap)?;
    require_positive("coupled stripline plane spacing b", b)?;
    require_eps_r("coupled stripline eps_r", eps_r)?;
    let xa = PI * width / (2.0 * b);
    let xb = PI * (width + gap) / (2.0 * b);
    let (ta, tb) = (xa.tanh(), xb.tanh());
    // even: k = ta·tb, 1 − k = (1 − ta) + ta(1 − tb)
    let ke = ta * tb;
    let oke = one_minus_tanh(xa) + ta * one_minus_tanh(xb);
    let kpe = (oke * (1.0 + ke)).sqrt();
    // odd: k = ta/tb, 1 − k = (tb − ta)/tb, tb − ta = sinh(xb − xa)/(cosh xa cosh xb)
    let ko = ta / tb;
    let d = (xb - xa).sinh() / (xa.cosh() * xb.cosh());
    let oko = if d.is_finite() { d / tb } else { 1.0 - ko };
    let kpo = (oko * (1.0 + ko)).sqrt();
    let pre = ETA0 / (4.0 * eps_r.sqrt());
    let z_even = pre / k_ratio_pair(ke, kpe);
    let z_odd = pre / k_ratio_pair(ko, kpo);
    if !(z_even.is_finite() && z_odd.is_finite()) {
        return Err(InputError::new(
            "coupled stripline geometry out of numeric range",
        ));
    }
    Ok(CoupledResult::new(z_even, z_odd, eps_r, eps_r, Vec::new()))
}

/// Coupled microstrip, static, zero thickness.
///
/// Source: M. Kirschning, R. H. Jansen, "Accurate wide-range design
/// equations for the frequency-dependent characteristic of parallel coupled
/// microstrip lines", IEEE T-MTT 32(1), Jan. 1984, pp. 83–90 (static part).
/// Uses the Hammerstad-Jensen single-line εeff(0) and ZL(0) at u = W/h;
/// g = S/h. Even mode: v = u(20+g²)/(10+g²) + g·e^(−g) in the HJ εeff;
/// odd mode: εo = [(εr+1)/2 + ao − εeff(0)]·e^(−co·g^do) + εeff(0);
/// Z0e,o = √(εeff(0)/εe,o)·ZL(0)/[1 − ZL(0)·√εeff(0)·Q/η0] with Q = Q4 (even)
/// or Q10 (odd).
///
/// Validity (notes): 0.1 ≤ u ≤ 10, 0.1 ≤ g ≤ 10, 1 ≤ εr ≤ 18; stated accuracy
/// 0.6 %. Strip thickness is not modelled (use the field solver for t > 0).
pub fn kirschning_jansen_coupled(
    width: f64,
    gap: f64,
    height: f64,
    eps_r: f64,
) -> Result<CoupledResult, InputError> {
    require_positive("coupled microstrip width", width)?;
    require_positive("coupled microstrip gap", gap)?;
    require_positive("coupled microstrip height", height)?;
    require_eps_r("coupled microstrip eps_r", eps_r)?;
    let u = width / height;
    let g = gap / height;
    let er = eps_r;
    let mut notes = Vec::new();
    ValidityNote::push_if_outside(&mut notes, KJ84_MODEL, "W/h", u, 0.1, 10.0);
    ValidityNote::push_if_outside(&mut notes, KJ84_MODEL, "S/h", g, 0.1, 10.0);
    ValidityNote::push_if_outside(&mut notes, KJ84_MODEL, "eps_r", er, 1.0, 18.0);

    let e0 = hj_eps_eff_zero_t(u, er);
    let zl0 = hj_z01_air(u) / e0.sqrt();

    // Even-mode effective permittivity.
    let v = u * (20.0 + g * g) / (10.0 + g * g) + g * (-g).exp();
    let ee = hj_eps_eff_zero_t(v, er);
    // Odd-mode effective permittivity.
    let ao = 0.7287 * (e0 - (er + 1.0) / 2.0) * (1.0 - (-0.179 * u).exp());
    let bo = 0.747 * er / (0.15 + er);
    let co = bo - (bo - 0.207) * (-0.414 * u).exp();
    let d_o = 0.593 + 0.694 * (-0.562 * u).exp();
    let eo = ((er + 1.0) / 2.0 + ao - e0) * (-co * g.powf(d_o)).exp() + e0;

    // Impedances.
    let q1 = 0.8695 * u.powf(0.194);
    let q2 = 1.0 + 0.7519 * g + 0.189 * g.powf(2.31);
    let q3 = 0.1975
        + (16.6 + (8.4 / g).powi(6)).powf(-0.387)
        + (g.powi(10) / (1.0 + (g / 3.4).powi(10))).ln() / 241.0;
    let q4 = (q1 / q2) * 2.0 / ((-g).exp() * u.powf(q3) + (2.0 - (-g).exp()) * u.powf(-q3));
    let q5 = 1.794 + 1.14 * (1.0 + 0.638 / (g + 0.517 * g.powf(2.43))).ln();
    let q6 = 0.2305
        + (g.powi(10) / (1.0 + (g / 5.8).powi(10))).ln() / 281.3
        + (1.0 + 0.598 * g.powf(1.154)).ln() / 5.1;
    let q7 = (10.0 + 190.0 * g * g) / (1.0 + 82.3 * g.powi(3));
    let q8 = (-6.5 - 0.95 * g.ln() - (g / 0.15).powi(5)).exp();
    let q9 = q7.ln() * (q8 + 1.0 / 16.5);
    let q10 = q4 - (q5 / q2) * u.powf(q6 * u.powf(-q9));

    let z_of = |e: f64, q: f64| (e0 / e).sqrt() * zl0 / (1.0 - zl0 * e0.sqrt() * q / ETA0);
    let z_even = z_of(ee, q4);
    let z_odd = z_of(eo, q10);
    if !(z_even.is_finite() && z_odd.is_finite() && z_even > 0.0 && z_odd > 0.0) {
        return Err(InputError::new(format!(
            "Kirschning-Jansen 1984 coupled microstrip undefined at W/h = {u}, S/h = {g}"
        )));
    }
    Ok(CoupledResult::new(z_even, z_odd, ee, eo, notes))
}

/// Model name used in validity notes.
pub const KJ84_DISPERSION_MODEL: &str = "Kirschning-Jansen 1984 coupled microstrip dispersion";

/// Frequency-dependent even- and odd-mode effective permittivity of a
/// symmetric edge-coupled microstrip pair, from their static values.
///
/// Source: M. Kirschning, R. H. Jansen, "Accurate wide-range design
/// equations for the frequency-dependent characteristic of parallel coupled
/// microstrip lines", IEEE T-MTT 32(1), Jan. 1984, pp. 83–90 (dispersion
/// part; coefficients from memory, checked one by one against an
/// independent open transcription in a general-purpose photonics library's
/// coupled-microstrip class, identical; the paper's own tables were not
/// reached). With fn = f·h in GHz·mm, u = W/h, g = S/h and P1…P4 of the
/// single line (Kirschning-Jansen 1982):
/// P5 = 0.334·e^(−3.3(εr/15)³) + 0.746, P6 = P5·e^(−(fn/18)^0.368),
/// P7 = 1 + 4.069·P6·g^0.479·e^(−1.347 g^0.595 − 0.17 g^2.5),
/// Fe = P1·P2·[(P3·P4 + 0.1844·P7)·fn]^1.5763;
/// P8 = 0.7168·[1 + 1.076/(1 + 0.0576(εr − 1))],
/// P9 = P8 − 0.7913·[1 − e^(−(fn/20)^1.424)]·atan[2.481(εr/8)^0.946],
/// P10 = 0.242(εr − 1)^0.55, P11 = 0.6366·[e^(−0.3401 fn) − 1]·atan[1.263(u/3)^1.629],
/// P12 = P9 + (1 − P9)/(1 + 1.183 u^1.376), P13 = 1.695·P10/(0.414 + 1.605·P10),
/// P14 = 0.8928 + 0.1072·[1 − e^(−0.42(fn/20)^3.215)],
/// P15 = |1 − 0.8928·(1 + P11)·P12·e^(−P13 g^1.092)/P14|,
/// Fo = P1·P2·[(P3·P4 + 0.1844)·fn·P15]^1.5763;
/// εe,o(f) = εr − (εr − εe,o(0))/(1 + Fe,o).
/// Far apart (g → ∞) both reduce to the single line's model.
///
/// The static values may come from any source (the field solver here);
/// strip thickness is not in the model. Validity (notes): 0.1 ≤ u ≤ 10,
/// 0.1 ≤ g ≤ 10, 1 ≤ εr ≤ 18, fn ≤ 25 GHz·mm; stated accuracy 1.4 %
/// (from memory; searched: the paper's title with "accuracy", not found).
pub fn kirschning_jansen_coupled_dispersion(
    width: f64,
    gap: f64,
    height: f64,
    eps_r: f64,
    static_modes: (f64, f64),
    freq: f64,
) -> Result<((f64, f64), Vec<ValidityNote>), InputError> {
    require_positive("coupled microstrip width", width)?;
    require_positive("coupled microstrip gap", gap)?;
    require_positive("coupled microstrip height", height)?;
    require_eps_r("coupled microstrip eps_r", eps_r)?;
    require_eps_r("static even-mode eps_eff", static_modes.0)?;
    require_eps_r("static odd-mode eps_eff", static_modes.1)?;
    require_non_negative("frequency", freq)?;
    let (u, g, er) = (width / height, gap / height, eps_r);
    let fnn = f_n(freq, height);
    let mut notes = Vec::new();
    let m = KJ84_DISPERSION_MODEL;
    ValidityNote::push_if_outside(&mut notes, m, "W/h", u, 0.1, 10.0);
    ValidityNote::push_if_outside(&mut notes, m, "S/h", g, 0.1, 10.0);
    ValidityNote::push_if_outside(&mut notes, m, "eps_r", er, 1.0, 18.0);
    ValidityNote::push_if_outside(&mut notes, m, "f*h (GHz*mm)", fnn, 0.0, 25.0);

    let [p1, p2, p3, p4] = kj_p1_to_p4(u, fnn, er);
    let p5 = 0.334 * (-3.3 * (er / 15.0).powi(3)).exp() + 0.746;
    let p6 = p5 * (-(fnn / 18.0).powf(0.368)).exp();
    let p7 = 1.0 + 4.069 * p6 * g.powf(0.479) * (-1.347 * g.powf(0.595) - 0.17 * g.powf(2.5)).exp();
    let fe = p1 * p2 * ((p3 * p4 + 0.1844 * p7) * fnn).powf(1.5763);
    let p8 = 0.7168 * (1.0 + 1.076 / (1.0 + 0.0576 * (er - 1.0)));
    let p9 = p8
        - 0.7913
            * (1.0 - (-(fnn / 20.0).powf(1.424)).exp())
            * (2.481 * (er / 8.0).powf(0.946)).atan();
    let p10 = 0.242 * (er - 1.0).powf(0.55);
    // The paper's rounded coefficient (≈ 2/π), kept as published.
    #[allow(clippy::approx_constant)]
    let p11 = 0.6366 * ((-0.3401 * fnn).exp() - 1.0) * (1.263 * (u / 3.0).powf(1.629)).atan();
    let p12 = p9 + (1.0 - p9) / (1.0 + 1.183 * u.powf(1.376));
    let p13 = 1.695 * p10 / (0.414 + 1.605 * p10);
    let p14 = 0.8928 + 0.1072 * (1.0 - (-0.42 * (fnn / 20.0).powf(3.215)).exp());
    let p15 = (1.0 - 0.8928 * (1.0 + p11) * p12 * (-p13 * g.powf(1.092)).exp() / p14).abs();
    let fo = p1 * p2 * ((p3 * p4 + 0.1844) * fnn * p15).powf(1.5763);
    let raise = |e0: f64, f: f64| er - (er - e0) / (1.0 + f);
    let (ee, eo) = (raise(static_modes.0, fe), raise(static_modes.1, fo));
    if !(ee.is_finite() && eo.is_finite()) {
        return Err(InputError::new(format!(
            "Kirschning-Jansen 1984 dispersion undefined at W/h = {u}, S/h = {g}, f*h = {fnn} GHz*mm"
        )));
    }
    Ok(((ee, eo), notes))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn cohn_1955_values() {
        // Cohn 1955 exact t = 0 result evaluated independently with
        // arbitrary-precision elliptic integrals.
        let b = 1e-3;
        let r = cohn_coupled_stripline(0.5e-3, 0.5e-3, b, 1.0).unwrap();
        assert!(rel(r.modes.z_even, 107.154) < 1e-4, "{}", r.modes.z_even);
        assert!(rel(r.modes.z_odd, 93.217) < 1e-4, "{}", r.modes.z_odd);
        let r = cohn_coupled_stripline(0.3e-3, 0.2e-3, b, 4.0).unwrap();
        assert!(rel(r.modes.z_even, 78.232) < 1e-4, "{}", r.modes.z_even);
        assert!(rel(r.modes.z_odd, 49.366) < 1e-4, "{}", r.modes.z_odd);
        assert_eq!(r.modes.z_diff(), 2.0 * r.modes.z_odd);
        assert_eq!(r.modes.z_common(), r.modes.z_even / 2.0);
    }

    #[test]
    fn cohn_wide_gap_tends_to_single_line() {
        // For S >> b both modes tend to Cohn's 1954 single-strip impedance.
        let single = crate::stripline::cohn_stripline(0.4e-3, 1e-3, 3.0)
            .unwrap()
            .z0;
        let r = cohn_coupled_stripline(0.4e-3, 20e-3, 1e-3, 3.0).unwrap();
        assert!(rel(r.modes.z_even, single) < 1e-9 && rel(r.modes.z_odd, single) < 1e-9);
        let r = cohn_coupled_stripline(0.4e-3, 0.3e-3, 1e-3, 3.0).unwrap();
        assert!(r.modes.z_odd < single && single < r.modes.z_even);
    }

    #[test]
    fn kj84_static_values() {
        // Kirschning-Jansen 1984 static formulas evaluated independently at
        // u = 1, g = 1, eps_r = 4: Z0e 84.457, Z0o 63.009 ohm; eps_e 3.1038, eps_o 2.6652.
        let h = 1e-3;
        let r = kirschning_jansen_coupled(h, h, h, 4.0).unwrap();
        assert!(rel(r.modes.z_even, 84.457) < 1e-4, "{}", r.modes.z_even);
        assert!(rel(r.modes.z_odd, 63.009) < 1e-4, "{}", r.modes.z_odd);
        assert!(
            rel(r.modes.eps_eff_even, 3.1038) < 1e-4,
            "{}",
            r.modes.eps_eff_even
        );
        assert!(
            rel(r.modes.eps_eff_odd, 2.6652) < 1e-4,
            "{}",
            r.modes.eps_eff_odd
        );
        assert!(r.notes.is_empty());
        // In microstrip the even mode is the slower one.
        assert!(r.modes.eps_eff_even > r.modes.eps_eff_odd);
    }

    #[test]
    fn kj84_notes_and_errors() {
        let r = kirschning_jansen_coupled(20e-3, 1e-3, 1e-3, 4.0).unwrap();
        assert_eq!(r.notes.len(), 1);
        for x in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(kirschning_jansen_coupled(x, 1e-3, 1e-3, 4.0).is_err());
            assert!(cohn_coupled_stripline(1e-3, x, 1e-3, 4.0).is_err());
        }
    }

    #[test]
    fn coupled_dispersion_is_static_at_dc_and_bounded_by_the_substrate() {
        let (w, s, h, er) = (0.2e-3, 0.15e-3, 0.1e-3, 3.6);
        let st = kirschning_jansen_coupled(w, s, h, er).unwrap().modes;
        let e0 = (st.eps_eff_even, st.eps_eff_odd);
        let ((ee, eo), notes) = kirschning_jansen_coupled_dispersion(w, s, h, er, e0, 0.0).unwrap();
        assert!(notes.is_empty());
        assert!(rel(ee, e0.0) < 1e-12 && rel(eo, e0.1) < 1e-12);
        let mut last = e0;
        for f in [10e9, 40e9, 110e9, 500e9] {
            let ((ee, eo), _) = kirschning_jansen_coupled_dispersion(w, s, h, er, e0, f).unwrap();
            assert!(ee > last.0 && eo > last.1, "{f}: {ee} {eo} after {last:?}");
            assert!(ee < er && eo < er);
            last = (ee, eo);
        }
        let ((_, _), notes) = kirschning_jansen_coupled_dispersion(w, s, h, er, e0, 400e9).unwrap();
        assert!(
            notes.iter().any(|n| n.parameter.contains("f*h")),
            "{notes:?}"
        );
        for x in [f64::NAN, -1.0] {
            assert!(kirschning_jansen_coupled_dispersion(w, s, h, er, e0, x).is_err());
        }
    }
}
