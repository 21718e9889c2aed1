//! Physical constants (SI). CODATA values.

/// Speed of light in vacuum, m/s (exact, SI definition).
pub const C0: f64 = 299_792_458.0;
/// Vacuum permeability, H/m (CODATA 2018: 1.25663706212e-6).
pub const MU0: f64 = 1.256_637_062_12e-6;
/// Vacuum permittivity, F/m, from 1/(mu0 c0^2).
pub const EPS0: f64 = 1.0 / (MU0 * C0 * C0);
/// Free-space impedance eta0 = mu0 c0 = 376.7303 ohm (not 120 pi).
pub const ETA0: f64 = MU0 * C0;
/// One mil in metres (exact).
pub const MIL: f64 = 25.4e-6;
/// Nepers to decibels: 20 / ln 10.
pub const NP_TO_DB: f64 = 8.685_889_638_065_037;
/// Thickness of one ounce per square foot of copper, m.
///
/// 1 oz = 28.3495 g spread over 1 ft² = 0.092903 m² at a density of
/// 8.89 g/cm³ gives 34.3 µm; IPC-4562 ("Metal Foil for Printed Board
/// Applications") lists 34.3 µm for 1 oz foil (from memory; searched:
/// "IPC-4562 1 oz nominal thickness 34.3 µm", found only a question-and-answer
/// page giving 305 g/m² nominal (34.15 µm at 8.93 g/cm³) and a ±10 %
/// area-weight tolerance, not the standard's table).
pub const OUNCE_COPPER_THICKNESS: f64 = 28.349_523_125e-3 / (0.092_903_04 * 8_890.0);

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn eta0_is_physical_not_120pi() {
        // CODATA 2018 characteristic impedance of vacuum: 376.730 313 668 ohm.
        assert!((ETA0 - 376.730_313_668).abs() < 1e-6);
    }

    #[test]
    fn ounce_of_copper() {
        // IPC-4562 nominal 1 oz foil: 34.3 um (from memory; see the constant's
        // doc for what was searched); 0.5 oz = 17.1 um.
        assert!((OUNCE_COPPER_THICKNESS - 34.3e-6).abs() < 0.05e-6);
    }
}
