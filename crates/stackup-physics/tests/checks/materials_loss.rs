//! Loss per length, unit helpers and signal frequencies.

use std::f64::consts::PI;

use proptest::prelude::*;
use stackup_physics::consts::ETA0;
use stackup_physics::copper::surface_resistance;
use stackup_physics::loss::*;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// Pozar, *Microwave Engineering*, stripline attenuation example (edition
/// and example number from memory; Pozar's numbering searched, not found): b =
/// 0.32 cm, eps_r 2.2, W = 0.266 cm,
/// t = 0.01 mm, sigma 5.813e7, tan_d 0.001, 10 GHz, Z0 50 ohm:
/// alpha_d = 0.155 Np/m, alpha_c = 0.122 Np/m. mpmath evaluation of the same
/// formulas (tests/materials_reference_values.py): 0.155432, 0.121945.
#[test]
fn pozar_stripline_example() {
    let f = 10e9;
    let rs = surface_resistance(f, 5.813e7).unwrap();
    let ad = dielectric_loss_stripline(f, 2.2, 0.001).unwrap();
    let ac = conductor_loss_stripline_pozar(rs, 2.2, 50.0, 2.66e-3, 3.2e-3, 0.01e-3).unwrap();
    assert!(
        (ad - 0.155).abs() < 0.0005 && rel(ad, 0.155432) < 1e-5,
        "{ad}"
    );
    assert!(
        (ac - 0.122).abs() < 0.0005 && rel(ac, 0.121945) < 1e-5,
        "{ac}"
    );
    // Total 0.277 Np/m = 2.41 dB/m (Pozar's example total, from memory;
    // Pozar's numbering searched, not found).
    assert!((np_per_m_to_db_per_m(ad + ac) - 2.41).abs() < 0.01);
}

/// Stripline alpha_d, eps_r 4, tan_d 0.02, 10 GHz = 36.41 dB/m (formula of
/// Pozar eq. for TEM dielectric loss, mpmath value 36.40856 dB/m); the rule of
/// thumb 2.3 f[GHz] Df sqrt(Dk) dB/in (Bogatin, from memory; searched, not found) gives 0.92 dB/in
/// against the exact 0.9248 dB/in.
#[test]
fn dielectric_loss_and_rule_of_thumb() {
    let ad = dielectric_loss_stripline(10e9, 4.0, 0.02).unwrap();
    assert!(rel(np_per_m_to_db_per_m(ad), 36.40856) < 1e-5);
    assert!(rel(np_per_m_to_db_per_inch(ad), 0.924777) < 1e-5);
    assert!(rel(np_per_m_to_db_per_mm(ad), 0.03640856) < 1e-5);
    let rot = dielectric_loss_rule_of_thumb_db_per_inch(10e9, 4.0, 0.02).unwrap();
    assert!((rot - 0.92).abs() < 1e-12);
    assert!(rel(rot, np_per_m_to_db_per_inch(ad)) < 0.01);
    assert!(rel(db_per_m_to_db_per_inch(36.40856), 0.924777) < 1e-5);
}

/// Microstrip filling-factor form (Pozar eq. 3.198, from memory; Pozar's
/// numbering searched, not found): full
/// filling (eps_eff = eps_r) gives the stripline value; eps_eff = 1 gives
/// zero; in between it is proportional to the filling factor q.
#[test]
fn microstrip_filling_factor_limits() {
    let (f, er, td) = (5e9, 3.66, 0.004);
    let full = dielectric_loss_microstrip(f, er, er, td).unwrap();
    assert!(rel(full, dielectric_loss_stripline(f, er, td).unwrap()) < 1e-12);
    assert_eq!(dielectric_loss_microstrip(f, er, 1.0, td).unwrap(), 0.0);
    let ee = 2.8;
    let q = (ee - 1.0) / (er - 1.0);
    let a = dielectric_loss_microstrip(f, er, ee, td).unwrap();
    assert!(
        rel(
            a,
            PI * f / stackup_physics::consts::C0 * er * q / ee.sqrt() * td
        ) < 1e-12
    );
    assert!(dielectric_loss_microstrip(f, 1.0, 1.0, td).is_ok());
}

/// Wheeler's rule (Proc. IRE 1942) against textbook conductor losses (Pozar,
/// *Microwave Engineering*, table of TEM line parameters, from memory; Pozar's
/// numbering searched, not found):
/// parallel plates R = 2 Rs/W, coax R = Rs/(2 pi) (1/a + 1/b), with
/// alpha_c = R/(2 Z0).
#[test]
fn wheeler_rule_matches_textbook_lines() {
    let rs = 0.026;
    // Parallel plate, air: Z0_air = eta0 h/W; walls recede -> h + 2 dn.
    let (w, h, er) = (5e-3, 0.2e-3, 2.2);
    let z0 = ETA0 * h / w / f64::sqrt(er);
    let dz = 2.0 * ETA0 / w;
    let a = conductor_loss_wheeler(z0, dz, rs, 1.0).unwrap();
    assert!(rel(a, (2.0 * rs / w) / (2.0 * z0)) < 1e-12);
    // Coax: Z0_air = eta0/(2 pi) ln(b/a); a -> a - dn, b -> b + dn.
    let (ra, rb): (f64, f64) = (0.45e-3, 1.5e-3);
    let z0 = ETA0 / (2.0 * PI) * (rb / ra).ln() / f64::sqrt(er);
    let dz = ETA0 / (2.0 * PI) * (1.0 / ra + 1.0 / rb);
    let a = conductor_loss_wheeler(z0, dz, rs, 1.0).unwrap();
    let r = rs / (2.0 * PI) * (1.0 / ra + 1.0 / rb);
    assert!(rel(a, r / (2.0 * z0)) < 1e-12);
    // A roughness factor multiplies.
    assert!(rel(conductor_loss_wheeler(z0, dz, rs, 1.7).unwrap(), 1.7 * a) < 1e-12);
}

/// Hammerstad-Jensen (IEEE MTT-S Digest 1980) conductor loss: current
/// distribution factor K_i = exp(-1.2 (Z0/eta0)^0.7); for a very wide strip
/// (Z0 -> 0) it tends to the parallel-plate value Rs/(Z0 W) (Pozar table of
/// TEM lines, from memory; Pozar's numbering searched, not found).
#[test]
fn hj_conductor_loss() {
    let (rs, z0, w) = (0.03, 50.0, 200e-6);
    let a = conductor_loss_microstrip_hj(rs, z0, w, 1.0).unwrap();
    let ki = (-1.2 * (50.0 / ETA0).powf(0.7)).exp();
    assert!(rel(a, rs * ki / (z0 * w)) < 1e-12);
    assert!((ki - 0.746_841).abs() < 1e-6, "{ki}");
    let wide = conductor_loss_microstrip_hj(rs, 0.01, w, 1.0).unwrap();
    assert!(rel(wide, rs / (0.01 * w)) < 0.01);
    assert!(
        rel(
            conductor_loss_microstrip_hj(rs, z0, w, 1.5).unwrap(),
            1.5 * a
        ) < 1e-12
    );
}

/// Nyquist frequency: NRZ bit rate/2, PAM4 bit rate/4 (one symbol carries
/// log2(levels) bits; Nyquist, Trans. AIEE 1928).
#[test]
fn nyquist_and_highest_frequency() {
    assert_eq!(
        nyquist_frequency(25.78125e9, Modulation::Nrz).unwrap(),
        12.890625e9
    );
    assert_eq!(
        nyquist_frequency(106.25e9, Modulation::Pam4).unwrap(),
        26.5625e9
    );
    assert_eq!(
        nyquist_frequency(106.25e9, Modulation::Pam(4)).unwrap(),
        26.5625e9
    );
    assert!(rel(nyquist_frequency(3e9, Modulation::Pam(8)).unwrap(), 0.5e9) < 1e-12);
    let hf = highest_frequency_of_interest(28e9, Modulation::Nrz, DEFAULT_HARMONIC_FACTOR).unwrap();
    assert_eq!(hf, 42e9);
    let il = line_insertion_loss_db(0.5, 0.5, 0.1).unwrap();
    assert!(rel(il, 0.8685889638) < 1e-9);
}

/// Overflowing intermediate results are errors, never inf or NaN (found by
/// the property test below: pi f sqrt(eps) overflowing times a zero loss
/// tangent gave NaN).
#[test]
fn overflow_is_an_error() {
    assert!(dielectric_loss_stripline(2.6e191, 4.7e275, -0.0).is_err());
    assert!(dielectric_loss_stripline(1e300, 1e300, 1.0).is_err());
    assert!(conductor_loss_wheeler(1e-300, 1e300, 1e300, 1.0).is_err());
}

proptest! {
    /// Never panics on arbitrary input; losses are never negative.
    #[test]
    fn never_panics(a in proptest::num::f64::ANY, b in proptest::num::f64::ANY,
                    c in proptest::num::f64::ANY, d in proptest::num::f64::ANY, n in 0u32..20) {
        for v in [
            dielectric_loss_stripline(a, b, c),
            dielectric_loss_microstrip(a, b, c, d),
            conductor_loss_wheeler(a, b, c, d),
            conductor_loss_microstrip_hj(a, b, c, d),
            conductor_loss_stripline_pozar(a, b, c, d, a, b),
            dielectric_loss_rule_of_thumb_db_per_inch(a, b, c),
            line_insertion_loss_db(a, b, c),
            nyquist_frequency(a, Modulation::Pam(n)),
            highest_frequency_of_interest(a, Modulation::Nrz, b),
        ].into_iter().flatten() {
            prop_assert!(v >= 0.0);
        }
    }
}
