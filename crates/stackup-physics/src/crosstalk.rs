//! Crosstalk between coupled lines from their even and odd modes, and
//! between two neighbouring differential pairs by superposition.
//!
//! Weak-coupling forms (each line's own mode barely disturbed by the
//! other): backward (near-end) coupling saturates at
//! K_b = (1/4)(L_m/L + C_m/C), and forward (far-end) coupling of a ramp of
//! rise time t_r after a coupled length ℓ is K_f = ℓ(τ_e − τ_o)/(2 t_r)
//! with τ = √ε_eff/c0 the modes' delays (H. W. Johnson and M. Graham,
//! *High-Speed Signal Propagation*, 2003, §10; S. H. Hall, G. W. Hall and
//! J. A. McCall, *High-Speed Digital System Design*, 2000, ch. 3; both
//! from memory; searched: Johnson & Graham's crosstalk chapter, not found,
//! Hall et al. not searched). L and C per unit length follow from the modes:
//! C_e,o = √ε_e,o/(c0 Z_e,o), L_e,o = Z_e,o √ε_e,o/c0, so
//! C_m/C = (C_o − C_e)/(C_o + C_e) and L_m/L = (L_e − L_o)/(L_e + L_o).
//! In a homogeneous medium both ratios equal (Z_e − Z_o)/(Z_e + Z_o), so
//! K_b is half the coupled-line coupling coefficient of a quarter-wave
//! coupler (Pozar, *Microwave Engineering*, 4th ed., §7.6) and K_f = 0.

use crate::consts::C0;
use crate::coupled::ModalPair;

/// Saturated near-end (backward) crosstalk coefficient of two coupled
/// lines, from their modes (dimensionless, positive for the usual
/// capacitive and inductive coupling).
pub fn next_coefficient(m: &ModalPair) -> f64 {
    let (se, so) = (m.eps_eff_even.sqrt(), m.eps_eff_odd.sqrt());
    let (ce, co) = (se / m.z_even, so / m.z_odd);
    let (le, lo) = (m.z_even * se, m.z_odd * so);
    0.25 * ((co - ce) / (co + ce) + (le - lo) / (le + lo))
}

/// Far-end (forward) crosstalk per metre of coupled length for a ramp of
/// rise time `rise_time` (s): (τ_e − τ_o)/(2 t_r), 1/m. Negative when the
/// odd mode is the faster (inductive coupling dominates, as on a
/// microstrip).
pub fn fext_per_metre(m: &ModalPair, rise_time: f64) -> f64 {
    (m.eps_eff_even.sqrt() - m.eps_eff_odd.sqrt()) / (C0 * 2.0 * rise_time)
}

/// Differential-to-differential coupling of two side-by-side pairs from
/// the single-ended coupling k(d) of two of their traces at edge gap d:
/// with the nearest traces `gap` apart, each trace `width` wide and each
/// pair's own spacing `spacing`, the aggressor's traces are d1 = gap,
/// d2 = gap + width + spacing and d3 = gap + 2(width + spacing) from the
/// victim's, and
///
///   k_dd = (1/2)[2 k(d2) − k(d1) − k(d3)]
///
/// for a differential drive of unit amplitude (superposition of the four
/// two-line couplings, valid for weak coupling; it neglects the shielding
/// of the traces in between; C. R. Paul, *Analysis of Multiconductor
/// Transmission Lines*, 2nd ed., 2008, on weak coupling, from memory, not
/// searched).
/// Returns the three gaps, for the caller to solve k at.
pub fn pair_gaps(gap: f64, width: f64, spacing: f64) -> [f64; 3] {
    [gap, gap + width + spacing, gap + 2.0 * (width + spacing)]
}

/// The superposition of [`pair_gaps`]: k_dd from k(d1), k(d2), k(d3).
pub fn pair_to_pair(k: [f64; 3]) -> f64 {
    0.5 * (2.0 * k[1] - k[0] - k[2])
}

#[cfg(test)]
mod tests {
    use super::*;

    fn homogeneous(ze: f64, zo: f64, eps: f64) -> ModalPair {
        ModalPair {
            z_even: ze,
            z_odd: zo,
            eps_eff_even: eps,
            eps_eff_odd: eps,
        }
    }

    #[test]
    fn homogeneous_lines_have_half_the_coupler_coefficient_and_no_fext() {
        // Pozar, Microwave Engineering, 4th ed., §7.6: a quarter-wave
        // coupled-line coupler's coupling is (Z0e − Z0o)/(Z0e + Z0o); a
        // 10 dB coupler in 50 Ω has Z0e = 69.37 Ω, Z0o = 36.04 Ω (Pozar's
        // design equations, C = 0.3162). The step's backward plateau is
        // half of it (K_b = C/2, the frequency response 2K_b sin θ peaks
        // at θ = 90°).
        let m = homogeneous(69.37, 36.04, 3.2);
        let c: f64 = (69.37 - 36.04) / (69.37 + 36.04);
        assert!((c - 0.3162).abs() < 1e-3, "{c}");
        assert!((next_coefficient(&m) - 0.5 * c).abs() < 1e-12);
        assert_eq!(fext_per_metre(&m, 30e-12), 0.0);
    }

    #[test]
    fn microstrip_fext_is_negative_and_scales_with_the_mode_delays() {
        // Odd mode faster than even (more of its field in air): negative
        // far-end crosstalk, 100 mm at 30 ps = ℓ(τ_e − τ_o)/(2 t_r).
        let m = ModalPair {
            z_even: 60.0,
            z_odd: 42.0,
            eps_eff_even: 3.1,
            eps_eff_odd: 2.7,
        };
        let want = (3.1f64.sqrt() - 2.7f64.sqrt()) / C0 * 0.1 / (2.0 * 30e-12);
        assert!((fext_per_metre(&m, 30e-12) * 0.1 - want).abs() < 1e-12);
        assert!(want > 0.0);
        let flipped = ModalPair {
            eps_eff_even: 2.7,
            eps_eff_odd: 3.1,
            ..m
        };
        assert!(fext_per_metre(&flipped, 30e-12) < 0.0);
    }

    #[test]
    fn pair_superposition() {
        // Couplings falling off with distance: the far aggressor trace
        // partly cancels the near one (exact arithmetic of the formula).
        let g = pair_gaps(0.3e-3, 0.1e-3, 0.15e-3);
        assert!((g[1] - 0.55e-3).abs() < 1e-12 && (g[2] - 0.8e-3).abs() < 1e-12);
        assert!((pair_to_pair([0.02, 0.008, 0.004]) - 0.5 * (0.016 - 0.024)).abs() < 1e-15);
    }
}

/// Saturated near-end crosstalk between two lines of any shapes from their
/// 2×2 Maxwell capacitance and inductance matrices (row-major):
/// K_b = (1/4)(|C12|/√(C11·C22) + L12/√(L11·L22)), the weak-coupling form
/// above with each ratio taken against both lines' self terms (Johnson &
/// Graham 2003, §10, from memory; searched, not found). For two equal lines it equals
/// [`next_coefficient`] of their even and odd modes.
pub fn next_coefficient_matrices(c: &[f64], l: &[f64]) -> f64 {
    if c.len() != 4 || l.len() != 4 {
        return f64::NAN;
    }
    0.25 * (c[1].abs() / (c[0] * c[3]).sqrt() + l[1] / (l[0] * l[3]).sqrt())
}

#[cfg(test)]
mod matrix_tests {
    use super::*;

    #[test]
    fn matrices_of_two_equal_lines_give_the_modal_form() {
        // Equal lines: C11 = (Ce + Co)/2, C12 = (Ce − Co)/2 and likewise L,
        // with the modal C and L of the module's formulas.
        let m = ModalPair {
            z_even: 61.0,
            z_odd: 43.0,
            eps_eff_even: 3.3,
            eps_eff_odd: 3.1,
        };
        let (ce, co) = (
            m.eps_eff_even.sqrt() / (C0 * m.z_even),
            m.eps_eff_odd.sqrt() / (C0 * m.z_odd),
        );
        let (le, lo) = (
            m.z_even * m.eps_eff_even.sqrt() / C0,
            m.z_odd * m.eps_eff_odd.sqrt() / C0,
        );
        let c = [
            (ce + co) / 2.0,
            (ce - co) / 2.0,
            (ce - co) / 2.0,
            (ce + co) / 2.0,
        ];
        let l = [
            (le + lo) / 2.0,
            (le - lo) / 2.0,
            (le - lo) / 2.0,
            (le + lo) / 2.0,
        ];
        assert!((next_coefficient_matrices(&c, &l) - next_coefficient(&m)).abs() < 1e-12);
        assert!(next_coefficient_matrices(&c[..3], &l).is_nan());
    }
}
