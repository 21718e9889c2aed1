//! Transmission-line loss per unit length, unit conversions and the
//! frequencies a digital signal occupies.
//!
//! Attenuation constants are in nepers per metre (Np/m) unless the name says
//! dB; 1 Np = 20/ln 10 = 8.686 dB ([`crate::consts::NP_TO_DB`]).

use std::f64::consts::PI;

use crate::consts::{C0, ETA0, NP_TO_DB};
use crate::validity::{finite, require_eps_r, require_non_negative, require_positive, InputError};

/// Metres per inch (exact).
pub const METRES_PER_INCH: f64 = 0.0254;

fn require_loss_tangent(tan_d: f64) -> Result<(), InputError> {
    require_non_negative("loss tangent", tan_d)
}

/// Dielectric attenuation of one quasi-TEM mode of any cross-section from
/// the share s_r of its electric energy in each dielectric region
/// (`SolvedLine::energy_shares`): tanδ_eff = Σ s_r·tanδ_r and
/// alpha_d = pi f sqrt(eps_eff) tanδ_eff / c0, Np/m.
///
/// Source: the quasi-TEM perturbation result G = ω·Σ_r tanδ_r·ε_r·∂C/∂ε_r
/// (each region's loss weighted by the electric energy stored in it), with
/// alpha_d = G·Z0/2; for one dielectric it is [`dielectric_loss_stripline`]
/// and for microstrip the filling-factor form of
/// [`dielectric_loss_microstrip`] (Pozar, *Microwave Engineering*, 4th ed.,
/// sec. 3.8, from memory; searched: the book's numbering, only catalogue
/// entries found), both of which the tests check.
///
/// Errors: `f` not finite and > 0; `eps_eff` < 1; shares and loss tangents
/// of different length, negative or not finite.
pub fn dielectric_loss_of_mode(
    f: f64,
    eps_eff: f64,
    shares: &[f64],
    tan_d: &[f64],
) -> Result<f64, InputError> {
    if shares.len() != tan_d.len() {
        return Err(InputError::new(
            "energy shares and loss tangents differ in length",
        ));
    }
    let mut tand_eff = 0.0;
    for (s, t) in shares.iter().zip(tan_d) {
        require_non_negative("loss tangent", *t)?;
        if !s.is_finite() || *s < -1e-9 {
            return Err(InputError::new(format!("energy share {s} is not valid")));
        }
        tand_eff += s.max(0.0) * t;
    }
    dielectric_loss_stripline(f, eps_eff, tand_eff)
}

/// Dielectric attenuation of a TEM line filled with one dielectric
/// (stripline): alpha_d = pi f sqrt(eps_r) tan_d / c0, Np/m.
///
/// Source: Pozar, *Microwave Engineering*, 4th ed., eq. 2.88 / sec. 3.7
/// (equation numbers from memory; searched: the book's numbering, only
/// catalogue entries found); exact for TEM lines with a homogeneous
/// dielectric at any frequency, low-loss approximation (tan_d << 1).
///
/// Errors: `f` not finite and > 0; `eps_r` < 1 or not finite; `tan_d`
/// negative or not finite.
pub fn dielectric_loss_stripline(f: f64, eps_r: f64, tan_d: f64) -> Result<f64, InputError> {
    require_positive("frequency", f)?;
    require_eps_r("Dk", eps_r)?;
    require_loss_tangent(tan_d)?;
    finite("dielectric attenuation", PI * f * eps_r.sqrt() * tan_d / C0)
}

/// Dielectric attenuation of a quasi-TEM line in a mixed dielectric
/// (microstrip) by the filling-factor form
/// alpha_d = (pi f/c0) eps_r (eps_eff - 1) / [sqrt(eps_eff) (eps_r - 1)] tan_d,
/// Np/m.
///
/// Source: Pozar, *Microwave Engineering*, 4th ed., eq. 3.198 (from memory;
/// searched: the equation number in code and pages, where two secondary
/// sources give it to different formulas, so the number stays unchecked;
/// the filling-factor form goes back to Welch & Pratt, IEEE Trans. MTT 14(6),
/// 1966, and Schneider, Bell Syst. Tech. J. 48, 1969). Quasi-static; needs
/// 1 <= eps_eff <= eps_r. For eps_r = 1 (air-like dielectric) the filling
/// factor is taken as 1, giving pi f tan_d / c0.
///
/// Errors: as [`dielectric_loss_stripline`], and `eps_eff` outside
/// [1, eps_r].
pub fn dielectric_loss_microstrip(
    f: f64,
    eps_r: f64,
    eps_eff: f64,
    tan_d: f64,
) -> Result<f64, InputError> {
    require_positive("frequency", f)?;
    require_eps_r("Dk", eps_r)?;
    require_eps_r("effective Dk", eps_eff)?;
    require_loss_tangent(tan_d)?;
    if eps_eff > eps_r * (1.0 + 1e-12) {
        return Err(InputError::new(format!(
            "effective Dk {eps_eff} exceeds the substrate Dk {eps_r}"
        )));
    }
    let fill = if eps_r - 1.0 > 1e-12 {
        eps_r * (eps_eff - 1.0) / (eps_r - 1.0)
    } else {
        1.0
    };
    finite(
        "dielectric attenuation",
        PI * f / C0 * fill / eps_eff.sqrt() * tan_d,
    )
}

/// Conductor attenuation of any TEM/quasi-TEM line by Wheeler's incremental
/// inductance rule: alpha_c = K Rs (dZ0_air/dn) / (2 eta0 Z0), Np/m.
///
/// `z0` is the line impedance (ohm), `dz0_air_dn` the rate (ohm per metre) at
/// which the impedance of the same line with air dielectric rises when every
/// metal face recedes by dn, `rs` the surface resistance (ohm per square) and
/// `k` a roughness loss factor (1 for smooth copper). Equivalent to
/// (pi f/c0) [Z0_air(faces receded by delta/2) - Z0_air]/Z0 for K = 1.
///
/// Source: H. A. Wheeler, "Formulas for the skin effect", Proc. IRE 30(9),
/// pp. 412-424, 1942. Valid when conductors are thicker than a few skin
/// depths and corner radii exceed the skin depth.
///
/// Errors: `z0`, `rs` not finite and > 0; `dz0_air_dn` negative or not
/// finite; `k` < 1 or not finite.
pub fn conductor_loss_wheeler(
    z0: f64,
    dz0_air_dn: f64,
    rs: f64,
    k: f64,
) -> Result<f64, InputError> {
    require_positive("impedance", z0)?;
    require_non_negative("dZ0_air/dn", dz0_air_dn)?;
    require_positive("surface resistance", rs)?;
    require_roughness_multiplier(k)?;
    finite(
        "conductor attenuation",
        k * rs * dz0_air_dn / (2.0 * ETA0 * z0),
    )
}

fn require_roughness_multiplier(k: f64) -> Result<(), InputError> {
    if k.is_finite() && k >= 1.0 {
        Ok(())
    } else {
        Err(InputError::new(format!(
            "roughness loss factor must be finite and >= 1, got {k}"
        )))
    }
}

/// Microstrip conductor attenuation, Hammerstad-Jensen closed form:
/// alpha_c = Rs K_rough K_i / (Z0 W), K_i = exp[-1.2 (Z0/eta0)^0.7], Np/m.
///
/// Source: E. Hammerstad and O. Jensen, "Accurate models for microstrip
/// computer-aided design", IEEE MTT-S Digest 1980, pp. 407-409. `z0` is the
/// quasi-static impedance of the line (whether the paper's K_i uses the
/// air-filled impedance instead is not confirmed); `w` the strip width
/// (m); `k_rough` a roughness factor (1 = smooth). Valid for conductor
/// thickness t > 3 delta and the Hammerstad-Jensen impedance range.
///
/// Errors: `rs`, `z0`, `w` not finite and > 0; `k_rough` < 1 or not finite.
pub fn conductor_loss_microstrip_hj(
    rs: f64,
    z0: f64,
    w: f64,
    k_rough: f64,
) -> Result<f64, InputError> {
    require_positive("surface resistance", rs)?;
    require_positive("impedance", z0)?;
    require_positive("strip width", w)?;
    require_roughness_multiplier(k_rough)?;
    let ki = (-1.2 * (z0 / ETA0).powf(0.7)).exp();
    finite("conductor attenuation", rs * k_rough * ki / (z0 * w))
}

/// Microstrip conductor attenuation of Pucel, Massé and Hartwig, derived
/// from Wheeler's incremental-inductance rule on Wheeler's microstrip
/// impedance formulas, Np/m. With We the effective width,
/// A = 1 + h/We + (h/(π We))·L:
///
/// * W/h ≤ 1/(2π): L = ln(4πW/t) + t/W, We = W + (t/π)(1 + ln(4πW/t)),
///   αc = Rs/(2π Z0 h)·[1 − (We/4h)²]·A;
/// * 1/(2π) < W/h ≤ 2: L = ln(2h/t) − t/h, We = W + (t/π)(1 + ln(2h/t)),
///   αc = Rs/(2π Z0 h)·[1 − (We/4h)²]·A;
/// * W/h > 2: L and We as above,
///   αc = Rs/(Z0 h)·[We/h + (We/πh)/(We/2h + 0.94)]·A
///   / {We/h + (2/π)·ln[2πe(We/2h + 0.94)]}².
///
/// Source: R. A. Pucel, D. J. Massé, C. P. Hartwig, "Losses in
/// microstrip", IEEE T-MTT 16(6), 1968, pp. 342–350, DOI
/// 10.1109/TMTT.1968.1126691, with its correction in 16(12), p. 1064; as
/// collected in K. C. Gupta, R. Garg, I. Bahl, P. Bhartia, *Microstrip
/// Lines and Slotlines*, 2nd ed., Artech House 1996, ch. 2 (the equations
/// from memory; searched: the paper's title, DOI and abstract checked in
/// its OpenAIRE record (conductor loss with the strip's finite thickness,
/// mixed dielectric), its equations not found; the book found only as
/// catalogue entries (Artech House, Boston 1996), the chapter not checked).
/// `z0` is the line's quasi-static
/// impedance (with its dielectric), `t` > 0 the strip thickness. The ranges
/// join with a step of several per cent (the approximations of Wheeler's
/// formulas differ); a cross-check, not the engine's value.
///
/// Errors: any input not finite and > 0.
pub fn conductor_loss_microstrip_pucel(
    rs: f64,
    z0: f64,
    w: f64,
    h: f64,
    t: f64,
) -> Result<f64, InputError> {
    require_positive("surface resistance", rs)?;
    require_positive("impedance", z0)?;
    require_positive("strip width", w)?;
    require_positive("substrate height", h)?;
    require_positive("strip thickness", t)?;
    let pi = std::f64::consts::PI;
    let u = w / h;
    let narrow = u <= 1.0 / (2.0 * pi);
    let (we, l) = if narrow {
        let lg = (4.0 * pi * w / t).ln();
        (w + t / pi * (1.0 + lg), lg + t / w)
    } else {
        let lg = (2.0 * h / t).ln();
        (w + t / pi * (1.0 + lg), lg - t / h)
    };
    let a = 1.0 + h / we + h / (pi * we) * l;
    let ue = we / h;
    let alpha = if u <= 2.0 {
        rs / (2.0 * pi * z0 * h) * (1.0 - (ue / 4.0).powi(2)) * a
    } else {
        let d = ue / 2.0 + 0.94;
        let den = ue + 2.0 / pi * (2.0 * pi * std::f64::consts::E * d).ln();
        rs / (z0 * h) * (ue + ue / pi / d) * a / (den * den)
    };
    finite("conductor attenuation", alpha)
}

/// Stripline conductor attenuation, closed form from Wheeler's rule as given
/// by Pozar, *Microwave Engineering*, 4th ed., eq. 3.199 (from memory;
/// searched as for [`dielectric_loss_microstrip`]), Np/m:
///
/// * sqrt(eps_r) Z0 < 120 ohm: alpha_c = 2.7e-3 Rs eps_r Z0 A / [30 pi (b - t)],
///   A = 1 + 2W/(b - t) + (1/pi) (b + t)/(b - t) ln[(2b - t)/t];
/// * otherwise: alpha_c = 0.16 Rs B / (Z0 b),
///   B = 1 + b/(0.5 W + 0.7 t) [0.5 + 0.414 t/W + (1/(2 pi)) ln(4 pi W/t)].
///
/// `b` is the ground-plane spacing, `t` the strip thickness, `w` the strip
/// width (m), `z0` the line impedance. Valid for a centred strip with
/// 0 < t << b (thin strip).
///
/// Errors: any input not finite and > 0; `eps_r` < 1; t >= b.
pub fn conductor_loss_stripline_pozar(
    rs: f64,
    eps_r: f64,
    z0: f64,
    w: f64,
    b: f64,
    t: f64,
) -> Result<f64, InputError> {
    require_positive("surface resistance", rs)?;
    require_eps_r("Dk", eps_r)?;
    require_positive("impedance", z0)?;
    require_positive("strip width", w)?;
    require_positive("plane spacing b", b)?;
    require_positive("strip thickness", t)?;
    if t >= b {
        return Err(InputError::new(format!(
            "strip thickness {t} m must be below the plane spacing {b} m"
        )));
    }
    if eps_r.sqrt() * z0 < 120.0 {
        let a = 1.0 + 2.0 * w / (b - t) + (b + t) / (b - t) * ((2.0 * b - t) / t).ln() / PI;
        finite(
            "conductor attenuation",
            2.7e-3 * rs * eps_r * z0 * a / (30.0 * PI * (b - t)),
        )
    } else {
        let bb = 1.0
            + b / (0.5 * w + 0.7 * t)
                * (0.5 + 0.414 * t / w + (4.0 * PI * w / t).ln() / (2.0 * PI));
        finite("conductor attenuation", 0.16 * rs * bb / (z0 * b))
    }
}

/// Converts Np/m to dB/m (x 20/ln 10).
pub fn np_per_m_to_db_per_m(alpha: f64) -> f64 {
    alpha * NP_TO_DB
}

/// Converts Np/m to dB/mm.
pub fn np_per_m_to_db_per_mm(alpha: f64) -> f64 {
    alpha * NP_TO_DB * 1e-3
}

/// Converts Np/m to dB/inch.
pub fn np_per_m_to_db_per_inch(alpha: f64) -> f64 {
    alpha * NP_TO_DB * METRES_PER_INCH
}

/// Converts dB/m to dB/inch.
pub fn db_per_m_to_db_per_inch(db_per_m: f64) -> f64 {
    db_per_m * METRES_PER_INCH
}

/// Rule of thumb for dielectric loss: 2.3 f[GHz] Df sqrt(Dk) dB/inch
/// (E. Bogatin, *Signal and Power Integrity - Simplified*, from memory;
/// searched: the rule with its constant, not found).
/// It is [`dielectric_loss_stripline`] with the constant rounded (the exact
/// constant is 2.312); input f in Hz, result in dB/inch.
///
/// Errors: as [`dielectric_loss_stripline`].
pub fn dielectric_loss_rule_of_thumb_db_per_inch(
    f: f64,
    dk: f64,
    df: f64,
) -> Result<f64, InputError> {
    require_positive("frequency", f)?;
    require_eps_r("Dk", dk)?;
    require_loss_tangent(df)?;
    finite("dielectric loss", 2.3 * f * 1e-9 * df * dk.sqrt())
}

/// Total line insertion loss in dB, 8.686 L (alpha_c + alpha_d), for a length
/// `length` (m) and attenuation constants in Np/m. Vias, connectors and
/// mismatch are not included.
///
/// Errors: any input negative or not finite.
pub fn line_insertion_loss_db(alpha_c: f64, alpha_d: f64, length: f64) -> Result<f64, InputError> {
    require_non_negative("conductor attenuation", alpha_c)?;
    require_non_negative("dielectric attenuation", alpha_d)?;
    require_non_negative("length", length)?;
    finite("insertion loss", NP_TO_DB * length * (alpha_c + alpha_d))
}

/// Line code of a serial link.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Modulation {
    /// Two levels, one bit per symbol.
    Nrz,
    /// Four levels, two bits per symbol.
    Pam4,
    /// Pulse-amplitude modulation with the given number of levels (>= 2);
    /// log2(levels) bits per symbol.
    Pam(u32),
}

impl Modulation {
    /// Bits carried per symbol, log2(levels).
    pub fn bits_per_symbol(self) -> Result<f64, InputError> {
        let levels = match self {
            Modulation::Nrz => 2,
            Modulation::Pam4 => 4,
            Modulation::Pam(n) => n,
        };
        if levels < 2 {
            return Err(InputError::new(format!(
                "PAM needs at least 2 levels, got {levels}"
            )));
        }
        Ok(f64::from(levels).log2())
    }
}

/// Nyquist frequency of a serial link: half the symbol rate,
/// f_N = bitrate / (2 bits_per_symbol): bitrate/2 for NRZ, bitrate/4 for PAM4.
/// (Nyquist's signalling-rate limit, H. Nyquist, Trans. AIEE 47, 1928; that
/// channel loss is judged at this frequency is common practice, no source.)
///
/// Errors: `bitrate` not finite and > 0 (bit/s); fewer than 2 levels.
pub fn nyquist_frequency(bitrate: f64, modulation: Modulation) -> Result<f64, InputError> {
    require_positive("bit rate", bitrate)?;
    Ok(bitrate / (2.0 * modulation.bits_per_symbol()?))
}

/// Default ratio of the highest frequency of interest to the Nyquist
/// frequency: 3, the third harmonic of the alternating 1010 pattern, whose
/// amplitude is a third of the fundamental for square edges (common practice,
/// no source). Material and roughness models are checked up to this
/// frequency.
pub const DEFAULT_HARMONIC_FACTOR: f64 = 3.0;

/// Highest frequency of interest: `harmonic_factor` x the Nyquist frequency
/// (use [`DEFAULT_HARMONIC_FACTOR`]).
///
/// Errors: as [`nyquist_frequency`]; `harmonic_factor` < 1 or not finite.
pub fn highest_frequency_of_interest(
    bitrate: f64,
    modulation: Modulation,
    harmonic_factor: f64,
) -> Result<f64, InputError> {
    if !(harmonic_factor.is_finite() && harmonic_factor >= 1.0) {
        return Err(InputError::new(format!(
            "harmonic factor must be finite and >= 1, got {harmonic_factor}"
        )));
    }
    finite(
        "frequency",
        nyquist_frequency(bitrate, modulation)? * harmonic_factor,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_bad_input() {
        assert!(dielectric_loss_stripline(1e9, 0.5, 0.01).is_err());
        assert!(dielectric_loss_microstrip(1e9, 3.0, 3.5, 0.01).is_err());
        assert!(conductor_loss_wheeler(50.0, 1.0, 0.02, 0.9).is_err());
        assert!(conductor_loss_stripline_pozar(0.02, 2.2, 50.0, 1e-3, 1e-3, 2e-3).is_err());
        assert!(nyquist_frequency(1e9, Modulation::Pam(1)).is_err());
        assert!(highest_frequency_of_interest(1e9, Modulation::Nrz, f64::NAN).is_err());
    }
}
