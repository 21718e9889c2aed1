//! Smooth-copper checks: skin depth, surface resistance, foil weight.

use stackup_physics::copper::*;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// delta = 1/sqrt(pi f mu0 sigma) for sigma = 5.8e7 S/m: 2.0898 µm at 1 GHz
/// and 0.6609 µm at 10 GHz; Rs(10 GHz) = 0.026090 ohm. Values evaluated
/// independently in mpmath by tests/materials_reference_values.py; the
/// rounded handbook values are 2.09 µm and 0.66 µm (Pozar, *Microwave
/// Engineering*, skin-depth table for copper, from memory; Pozar's numbering searched, not found).
#[test]
fn skin_depth_and_rs_of_annealed_copper() {
    let s = SIGMA_ANNEALED_COPPER;
    assert!(rel(skin_depth(1e9, s).unwrap(), 2.0898e-6) < 1e-4);
    assert!(rel(skin_depth(10e9, s).unwrap(), 0.6609e-6) < 1e-4);
    assert!(rel(surface_resistance(10e9, s).unwrap(), 0.026090) < 1e-4);
    // Rs = 1/(sigma delta) identity.
    for f in [1e6, 1e9, 3e10] {
        let d = skin_depth(f, s).unwrap();
        assert!(rel(surface_resistance(f, s).unwrap(), 1.0 / (s * d)) < 1e-12);
        let z = smooth_surface_impedance(f, s).unwrap();
        assert_eq!(z.re, z.im);
    }
}

/// Pozar's stripline example uses sigma = 5.813e7 S/m; at 10 GHz
/// Rs = 0.026 ohm (Pozar, *Microwave Engineering*, stripline attenuation
/// example, from memory; Pozar's numbering searched, not found).
#[test]
fn rs_pozar_example() {
    let rs = surface_resistance(10e9, 5.813e7).unwrap();
    assert!((rs - 0.026).abs() < 0.0005, "{rs}");
}

/// 1 oz/ft² copper is 34.3 µm (IPC-4562, from memory; searched as noted at
/// `consts::OUNCE_COPPER_THICKNESS`) with electrodeposited
/// copper density 8.89 g/cm³; 0.5 oz = 17.1 µm, 2 oz = 68.6 µm.
#[test]
fn ounce_weight_to_thickness() {
    let t1 = ounces_to_thickness(1.0, COPPER_FOIL_DENSITY).unwrap();
    assert!((t1 - 34.3e-6).abs() < 0.05e-6, "{t1}");
    let t_half = ounces_to_thickness(0.5, COPPER_FOIL_DENSITY).unwrap();
    assert!((t_half - 17.15e-6).abs() < 0.05e-6);
    // 1 oz/ft² = 305.15 g/m² (exact avoirdupois ounce and foot definitions).
    assert!((OUNCE_PER_SQUARE_FOOT - 0.305_152).abs() < 1e-6);
    // Annealed bulk density 8.96 g/cm³ gives 34.06 µm.
    let t_bulk = ounces_to_thickness(1.0, 8960.0).unwrap();
    assert!((t_bulk - 34.06e-6).abs() < 0.02e-6);
    let oz = thickness_to_ounces(t1 * 2.0, COPPER_FOIL_DENSITY).unwrap();
    assert!((oz - 2.0).abs() < 1e-12);
}
