//! Complete elliptic integral of the first kind by the arithmetic-geometric
//! mean (AGM).
//!
//! K(k) = ∫₀^{π/2} (1 − k² sin²θ)^{−1/2} dθ = π / (2·AGM(1, k′)), k′ = √(1 − k²).
//!
//! Source: Abramowitz & Stegun, *Handbook of Mathematical Functions* (1964),
//! §17.6 (AGM method) and Table 17.1 (check values). The AGM converges
//! quadratically; the result is accurate to a few ulp over 0 ≤ k < 1.
//!
//! Because K(k) only depends on k′ and K(k′) only on k, the ratio
//! K(k)/K(k′) = AGM(1, k)/AGM(1, k′) can be evaluated with both moduli given
//! separately ([`k_ratio_pair`]), so callers whose geometry gives k′
//! analytically (e.g. Cohn's k = sech x, k′ = tanh x) never form 1 − k².

use std::f64::consts::{FRAC_PI_2, PI};

/// Arithmetic-geometric mean of two non-negative numbers.
///
/// Returns NaN for negative or NaN input, 0 when either argument is 0.
pub fn agm(a: f64, b: f64) -> f64 {
    if a.is_nan() || b.is_nan() || a < 0.0 || b < 0.0 {
        return f64::NAN;
    }
    if a == 0.0 || b == 0.0 {
        return 0.0;
    }
    if a.is_infinite() || b.is_infinite() {
        return f64::INFINITY;
    }
    let (mut a, mut b) = (a, b);
    // Quadratic convergence: even AGM(1, 1e-300) needs < 15 steps; cap anyway.
    for _ in 0..64 {
        let an = 0.5 * (a + b);
        let bn = (a * b).sqrt();
        if (an - bn).abs() <= 1e-16 * an {
            return an;
        }
        a = an;
        b = bn;
    }
    0.5 * (a + b)
}

/// K expressed through the complementary modulus: K = π / (2·AGM(1, k′)).
///
/// Use this when k′ is known analytically and k is close to 1.
/// Returns +inf at k′ = 0 and NaN for k′ outside [0, 1] or NaN.
pub fn ellip_k_from_kp(kp: f64) -> f64 {
    if !(0.0..=1.0).contains(&kp) {
        return f64::NAN;
    }
    if kp == 0.0 {
        return f64::INFINITY;
    }
    FRAC_PI_2 / agm(1.0, kp)
}

/// Complete elliptic integral of the first kind K(k), modulus k (not the
/// parameter m = k²).
///
/// K(0) = π/2, K → ∞ as k → 1. Accepts −1 < k < 1 (K is even in k);
/// returns +inf at |k| = 1 and NaN for |k| > 1 or NaN.
/// For k near 1 prefer [`ellip_k_from_kp`] with an analytic k′.
pub fn ellip_k(k: f64) -> f64 {
    let k = k.abs();
    if !(0.0..=1.0).contains(&k) {
        return f64::NAN;
    }
    // (1 − k)(1 + k) keeps more digits than 1 − k² near k = 1.
    let kp = ((1.0 - k) * (1.0 + k)).sqrt();
    ellip_k_from_kp(kp)
}

/// Ratio K(k)/K(k′) with both moduli given (k² + k′² = 1 is the caller's
/// responsibility). Equal to AGM(1, k)/AGM(1, k′), so no cancellation
/// occurs for k or k′ near 1.
///
/// Returns 0 at k = 0 (K(0)/K(1) = 0), +inf at k′ = 0, NaN for
/// arguments outside [0, 1].
pub fn k_ratio_pair(k: f64, kp: f64) -> f64 {
    if !(0.0..=1.0).contains(&k) || !(0.0..=1.0).contains(&kp) {
        return f64::NAN;
    }
    if kp == 0.0 {
        return if k == 0.0 { f64::NAN } else { f64::INFINITY };
    }
    if k == 0.0 {
        return 0.0;
    }
    agm(1.0, k) / agm(1.0, kp)
}

/// Ratio K(k)/K(k′) with k′ = √(1 − k²) formed internally.
///
/// Valid for 0 ≤ k ≤ 1 (NaN otherwise). See [`k_ratio_pair`] when k′ is
/// available analytically.
pub fn k_ratio(k: f64) -> f64 {
    if !(0.0..=1.0).contains(&k) {
        return f64::NAN;
    }
    let kp = ((1.0 - k) * (1.0 + k)).sqrt();
    k_ratio_pair(k, kp)
}

/// Hilberg's closed-form approximation of K(k)/K(k′) (W. Hilberg, IEEE
/// T-MTT 17(5), May 1969, pp. 259 ff.; journal, issue and first page
/// checked on a copy's first page, the formula from memory, not found
/// there), maximum
/// relative error about 2e-6 (this crate's comparison with the AGM,
/// `hilberg_close_to_agm`).
/// Provided for comparison; the AGM functions are exact.
pub fn k_ratio_hilberg(k: f64) -> f64 {
    if !(0.0..1.0).contains(&k) || k == 0.0 {
        return if k == 0.0 { 0.0 } else { f64::NAN };
    }
    let kp = ((1.0 - k) * (1.0 + k)).sqrt();
    if k <= std::f64::consts::FRAC_1_SQRT_2 {
        let s = kp.sqrt();
        PI / (2.0 * (1.0 + s) / (1.0 - s)).ln()
    } else {
        let s = k.sqrt();
        (2.0 * (1.0 + s) / (1.0 - s)).ln() / PI
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn abramowitz_stegun_table_17_1() {
        // Abramowitz & Stegun Table 17.1, K(m) with m = k² (values from
        // memory, confirmed to 30 digits with mpmath.ellipk).
        let cases = [
            (0.0, std::f64::consts::FRAC_PI_2),
            (0.1, 1.612_441_348_720_219),
            (0.5, 1.854_074_677_301_372),
            (0.9, 2.578_092_113_348_173),
            (0.99, 3.695_637_362_989_874),
        ];
        for (m, want) in cases {
            let k = f64::sqrt(m);
            assert!(rel(ellip_k(k), want) < 1e-14, "m={m}");
        }
    }

    #[test]
    fn k_of_one_over_sqrt2() {
        // K(1/√2) = Γ(1/4)² / (4√π) = 1.854074677301372 (lemniscatic case, A&S Table 17.1 at m = 0.5).
        assert!(
            rel(
                ellip_k(std::f64::consts::FRAC_1_SQRT_2),
                1.854_074_677_301_372
            ) < 1e-14
        );
        // Landen symmetry: K(1/√2)/K'(1/√2) = 1.
        assert!((k_ratio(std::f64::consts::FRAC_1_SQRT_2) - 1.0).abs() < 1e-14);
    }

    #[test]
    fn near_one_with_analytic_kp() {
        // k = sech x, k' = tanh x; K(k)/K(k') from mpmath (30 digits):
        // x = 1e-3 -> 5.28015604693881243, x = 1e-6 -> 9.67776958716379234.
        for (x, want) in [
            (1e-3_f64, 5.280_156_046_938_812),
            (1e-6, 9.677_769_587_163_792),
        ] {
            let r = k_ratio_pair(1.0 / x.cosh(), x.tanh());
            assert!(rel(r, want) < 1e-12, "x={x} r={r}");
        }
        // k' = 1e-3 exactly, m = 1 - 1e-6: mpmath ellipk(1 - 10**-6) = 8.29405146361543998.
        assert!(rel(ellip_k_from_kp(1e-3), 8.294_051_463_615_44) < 1e-13);
    }

    #[test]
    fn hilberg_close_to_agm() {
        for i in 1..100 {
            let k = i as f64 / 100.0;
            assert!(rel(k_ratio_hilberg(k), k_ratio(k)) < 3e-6, "k={k}");
        }
    }

    #[test]
    fn no_panic_on_bad_input() {
        for x in [f64::NAN, f64::INFINITY, -2.0, 1.5, f64::NEG_INFINITY] {
            let _ = ellip_k(x);
            let _ = k_ratio(x);
            let _ = k_ratio_pair(x, x);
            let _ = ellip_k_from_kp(x);
            let _ = k_ratio_hilberg(x);
        }
        assert!(ellip_k(1.0).is_infinite());
        assert!(ellip_k(2.0).is_nan());
        assert_eq!(k_ratio(0.0), 0.0);
    }
}
