//! A uniform transmission line as a two-port: from its per-unit-length
//! R, L, G, C to the characteristic impedance, propagation constant and
//! the scattering parameters of a length of it.
//!
//! Sources: the telegrapher's equations, Zc = √((R + jωL)/(G + jωC)),
//! γ = √((R + jωL)(G + jωC)); the ABCD matrix of a line section
//! [cosh γℓ, Zc sinh γℓ; sinh γℓ / Zc, cosh γℓ] and its conversion to S
//! parameters with equal reference impedances (D. M. Pozar, *Microwave
//! Engineering*, 4th ed., Tables 4.1 and 4.2, from memory; searched: the
//! book's numbering, only catalogue entries found). Time
//! convention e^{jωt}.

use num_complex::Complex64;

use crate::validity::{require_non_negative, require_positive, InputError};

/// Per-unit-length parameters: Ω/m, H/m, S/m, F/m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rlgc {
    pub r: f64,
    pub l: f64,
    pub g: f64,
    pub c: f64,
}

impl Rlgc {
    /// Characteristic impedance and propagation constant at `f` Hz.
    pub fn zc_gamma(&self, f: f64) -> (Complex64, Complex64) {
        let w = 2.0 * std::f64::consts::PI * f;
        let z = Complex64::new(self.r, w * self.l);
        let y = Complex64::new(self.g, w * self.c);
        ((z / y).sqrt(), (z * y).sqrt())
    }
}

/// S parameters [[S11, S12], [S21, S22]] of `length` metres of the line at
/// `f`, both ports referred to `z_ref` Ω. Symmetric and reciprocal by
/// construction; passive whenever R, G ≥ 0.
///
/// Errors: a non-positive frequency, length or reference impedance;
/// negative or non-finite R, L, G, C, or L or C zero.
pub fn line_s_params(
    p: &Rlgc,
    f: f64,
    length: f64,
    z_ref: f64,
) -> Result<[[Complex64; 2]; 2], InputError> {
    require_positive("frequency", f)?;
    require_positive("line length", length)?;
    require_positive("reference impedance", z_ref)?;
    require_non_negative("R", p.r)?;
    require_positive("L", p.l)?;
    require_non_negative("G", p.g)?;
    require_positive("C", p.c)?;
    let (zc, gamma) = p.zc_gamma(f);
    let gl = gamma * length;
    let (ch, sh) = (gl.cosh(), gl.sinh());
    let z0 = Complex64::new(z_ref, 0.0);
    let d = 2.0 * zc * z0 * ch + (zc * zc + z0 * z0) * sh;
    let s11 = (zc * zc - z0 * z0) * sh / d;
    let s21 = 2.0 * zc * z0 / d;
    if !(s11.re.is_finite() && s11.im.is_finite() && s21.re.is_finite() && s21.im.is_finite()) {
        return Err(InputError::new(
            "the line is too long or too lossy at this frequency for its S parameters to be computed",
        ));
    }
    Ok([[s11, s21], [s21, s11]])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A lossless matched line: |S21| = 1, S11 = 0, and the phase of S21
    /// is −βℓ (β = ω√(LC)); a quarter-wave of 100 Ω between 50 Ω ports
    /// reflects |Γ| = (100²−50²)/(100²+50²) = 0.6 (the quarter-wave
    /// transformer, Pozar 4th ed. sec. 2.5).
    #[test]
    fn matched_and_quarter_wave() {
        let (z, v) = (50.0, 2.0e8);
        let p = Rlgc {
            r: 0.0,
            l: z / v,
            g: 0.0,
            c: 1.0 / (z * v),
        };
        let s = line_s_params(&p, 1e9, 0.05, 50.0).unwrap();
        assert!(s[0][0].norm() < 1e-12);
        assert!((s[1][0].norm() - 1.0).abs() < 1e-12);
        let beta = 2.0 * std::f64::consts::PI * 1e9 / v;
        let phase = s[1][0].arg();
        let want = (-beta * 0.05).rem_euclid(2.0 * std::f64::consts::PI);
        let got = phase.rem_euclid(2.0 * std::f64::consts::PI);
        assert!((got - want).abs() < 1e-9, "{got} {want}");
        let q = Rlgc {
            r: 0.0,
            l: 100.0 / v,
            g: 0.0,
            c: 1.0 / (100.0 * v),
        };
        let quarter = v / 1e9 / 4.0;
        let s = line_s_params(&q, 1e9, quarter, 50.0).unwrap();
        assert!((s[0][0].norm() - 0.6).abs() < 1e-9, "{}", s[0][0].norm());
    }
}
