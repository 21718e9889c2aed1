//! Smooth copper: conductivity, skin depth, surface resistance and foil
//! weight (ounces per square foot) to thickness.
//!
//! All functions take and return SI units (S/m, Hz, m, ohm). Copper is taken
//! as non-magnetic (mu_r = 1).

use num_complex::Complex64;

use crate::consts::MU0;
use crate::validity::{finite, require_non_negative, require_positive, InputError};

/// Conductivity of the International Annealed Copper Standard at 20 °C,
/// 5.8e7 S/m (IEC 60028, "International standard of resistance for copper",
/// 1925: 1/58 ohm·mm²/m). Board copper is often less conductive (electro-
/// deposited foil, treatment), so every function here takes sigma as input.
pub const SIGMA_ANNEALED_COPPER: f64 = 5.8e7;

/// Density of electrodeposited copper foil used for weight/thickness
/// conversion, kg/m³ (8.89 g/cm³). With it, 1 oz/ft² gives 34.3 µm, the value
/// listed for 1 oz foil in IPC-4562 (from memory; searched as for
/// [`crate::consts::OUNCE_COPPER_THICKNESS`]). Wrought/annealed bulk
/// copper is 8.96 g/cm³, which would give 34.1 µm.
pub const COPPER_FOIL_DENSITY: f64 = 8890.0;

/// Areal mass of one ounce (avoirdupois, 28.349523125 g exact) per square
/// foot (0.09290304 m² exact), kg/m².
pub const OUNCE_PER_SQUARE_FOOT: f64 = 0.028_349_523_125 / 0.092_903_04;

/// Skin depth of a good, non-magnetic conductor, delta = 1/sqrt(pi f mu0 sigma).
///
/// Source: classical good-conductor solution of Maxwell's equations, e.g.
/// Pozar, *Microwave Engineering*, 4th ed., eq. 1.56 (from memory for the
/// equation number; searched: the book's numbering, only catalogue entries
/// found). Valid while sigma >> omega eps0 (true for copper far above
/// 1 THz) and the anomalous skin effect is absent (room temperature).
///
/// Errors: `f` or `sigma` not finite and > 0.
pub fn skin_depth(f: f64, sigma: f64) -> Result<f64, InputError> {
    require_positive("frequency", f)?;
    require_positive("conductivity", sigma)?;
    finite(
        "skin depth",
        1.0 / (std::f64::consts::PI * f * MU0 * sigma).sqrt(),
    )
}

/// Surface resistance of smooth, thick copper, Rs = 1/(sigma delta) =
/// sqrt(pi f mu0 / sigma), ohm per square.
///
/// Source: Pozar, *Microwave Engineering*, 4th ed., eq. 1.131 (equation number
/// from memory; searched: the book's numbering, only catalogue entries found).
/// Valid for conductor thickness above about 3 delta (thinner
/// copper carries more resistance than this) and the range of [`skin_depth`].
pub fn surface_resistance(f: f64, sigma: f64) -> Result<f64, InputError> {
    require_positive("frequency", f)?;
    require_positive("conductivity", sigma)?;
    let rs = finite(
        "surface resistance",
        (std::f64::consts::PI * f * MU0 / sigma).sqrt(),
    )?;
    // A frequency or conductivity so small that the product underflows
    // (subnormal input) would give a lossless conductor.
    require_positive(
        "surface resistance (frequency or conductivity too small)",
        rs,
    )?;
    Ok(rs)
}

/// Surface impedance of smooth, thick copper, Zs = (1 + j) Rs (time
/// convention e^{jwt}): the internal reactance equals the resistance.
///
/// Source and validity as [`surface_resistance`].
pub fn smooth_surface_impedance(f: f64, sigma: f64) -> Result<Complex64, InputError> {
    let rs = surface_resistance(f, sigma)?;
    Ok(Complex64::new(rs, rs))
}

/// Foil thickness (m) from weight in ounces per square foot, for a copper
/// density `density` in kg/m³ (use [`COPPER_FOIL_DENSITY`] for the usual
/// 34.3 µm per ounce).
///
/// Errors: `oz` negative or not finite, `density` not finite and > 0.
pub fn ounces_to_thickness(oz: f64, density: f64) -> Result<f64, InputError> {
    require_non_negative("copper weight (oz/ft²)", oz)?;
    require_positive("copper density", density)?;
    finite("copper thickness", oz * OUNCE_PER_SQUARE_FOOT / density)
}

/// Foil weight in ounces per square foot from thickness (m), inverse of
/// [`ounces_to_thickness`].
pub fn thickness_to_ounces(thickness: f64, density: f64) -> Result<f64, InputError> {
    require_non_negative("copper thickness", thickness)?;
    require_positive("copper density", density)?;
    finite("copper weight", thickness * density / OUNCE_PER_SQUARE_FOOT)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_bad_input() {
        for bad in [0.0, -1.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            assert!(skin_depth(bad, SIGMA_ANNEALED_COPPER).is_err());
            assert!(skin_depth(1e9, bad).is_err());
            assert!(surface_resistance(bad, SIGMA_ANNEALED_COPPER).is_err());
            assert!(ounces_to_thickness(1.0, bad).is_err());
        }
        assert!(ounces_to_thickness(-0.5, COPPER_FOIL_DENSITY).is_err());
        assert_eq!(ounces_to_thickness(0.0, COPPER_FOIL_DENSITY), Ok(0.0));
    }
}
