//! Roughness loss factors, causal surface impedance and wall recession.

use num_complex::Complex64;
use proptest::prelude::*;
use stackup_physics::consts::MU0;
use stackup_physics::copper::*;
use stackup_physics::roughness::*;

const SIGMA: f64 = SIGMA_ANNEALED_COPPER;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// Hammerstad-Bekkadal factor at 10 GHz, sigma 5.8e7: Rq 0.5 µm -> 1.4301,
/// Rq 1 µm -> 1.8075. Formula of Hammerstad & Jensen, IEEE MTT-S Digest 1980,
/// evaluated independently in mpmath (tests/materials_reference_values.py).
#[test]
fn hammerstad_check_values() {
    let d = skin_depth(10e9, SIGMA).unwrap();
    assert!(rel(hammerstad_factor(0.5e-6, d).unwrap(), 1.4301) < 1e-4);
    assert!(rel(hammerstad_factor(1.0e-6, d).unwrap(), 1.8075) < 1e-4);
    // Generalised form (Shlepnev & Nwachukwu 2011): RF = 2 is the classic form,
    // and K - 1 scales with RF - 1.
    let k2 = hammerstad_factor_general(1e-6, d, 2.0).unwrap();
    let k3 = hammerstad_factor_general(1e-6, d, 3.0).unwrap();
    assert!(rel(k3 - 1.0, 2.0 * (k2 - 1.0)) < 1e-12);
    assert_eq!(hammerstad_factor_general(1e-6, d, 1.0).unwrap(), 1.0);
}

/// Groiss factor: 1 + exp(-(delta/2Rq)^1.6) (Groiss et al., IEEE Trans. Magn.
/// 32(3) 1996, from memory; searched, not found): at Rq = delta/2 it is 1 + 1/e.
#[test]
fn groiss_values() {
    let d = 1e-6;
    assert!(rel(groiss_factor(0.5e-6, d).unwrap(), 1.0 + (-1.0f64).exp()) < 1e-12);
    assert_eq!(groiss_factor(0.0, d).unwrap(), 1.0);
    assert!(groiss_factor(100e-6, d).unwrap() > 1.99);
}

/// Cannonball-Huray, r = 0.5 µm, sigma 5.8e7: K and Im(Zs/Rs) at 1, 10,
/// 28 GHz = (1.5268, 3.7288), (3.2942, 6.3265), (4.4876, 7.2424).
/// Sources: Simonovich (DesignCon 2015, EDICon 2016) for the 14-sphere tile
/// (f = 14 pi/9), Huray 2009 for K, Bracken (DesignCon 2012) for the causal
/// Zs; values evaluated independently in mpmath
/// (tests/materials_reference_values.py).
#[test]
fn cannonball_check_values() {
    let m = HurayModel::cannonball(0.5e-6).unwrap();
    assert!(
        rel(
            m.families[0].area_ratio(),
            14.0 * std::f64::consts::PI / 9.0
        ) < 1e-12
    );
    for (f, k, im) in [
        (1e9, 1.5268, 3.7288),
        (10e9, 3.2942, 6.3265),
        (28e9, 4.4876, 7.2424),
    ] {
        let d = skin_depth(f, SIGMA).unwrap();
        let rs = surface_resistance(f, SIGMA).unwrap();
        let kk = m.loss_factor(d).unwrap();
        assert!(rel(kk, k) < 1e-4, "K at {f}: {kk}");
        let zs = m.causal_surface_impedance(f, SIGMA).unwrap();
        assert!(rel(zs.im / rs, im) < 1e-4, "Im at {f}: {}", zs.im / rs);
        // Bracken 2012: Re Zs reproduces the classic Huray factor exactly.
        assert!(rel(zs.re / rs, kk) < 1e-12);
    }
}

/// r = Rz/(2 + 2 sqrt 2): a 9-4-1 square-pyramid stack of spheres in cubic
/// close packing has layer spacing sqrt(2) r (geometry of the fcc lattice).
#[test]
fn cannonball_radius_from_height() {
    let r = cannonball_radius_from_rz(4.828_427_124_746_19e-6).unwrap();
    assert!(rel(r, 1e-6) < 1e-12);
    let m = HurayModel::cannonball_from_rz(2.414e-6).unwrap();
    assert!(rel(m.families[0].radius, 0.5e-6) < 1e-3);
}

/// Causal Hammerstad (Dmitriev-Zdorov, Simonovich & Kochikov, Signal
/// Integrity Journal 2018): Re Zs/Rs equals the Hammerstad factor, Im Zs >
/// Rs (extra inductance) once rough, and Rq = 0 gives smooth copper.
#[test]
fn causal_hammerstad_real_part_is_k() {
    for f in [1e8, 1e9, 1e10, 5e10] {
        let d = skin_depth(f, SIGMA).unwrap();
        let rs = surface_resistance(f, SIGMA).unwrap();
        for rq in [0.1e-6, 0.5e-6, 1e-6, 3e-6] {
            for rf in [2.0, 3.5] {
                let zs = causal_hammerstad_surface_impedance(rq, rf, f, SIGMA).unwrap();
                let k = hammerstad_factor_general(rq, d, rf).unwrap();
                assert!(rel(zs.re / rs, k) < 1e-12, "{f} {rq} {rf}");
                assert!(zs.im > rs);
            }
        }
        let z0 = causal_hammerstad_surface_impedance(0.0, 2.0, f, SIGMA).unwrap();
        assert!(rel(z0.re, rs) < 1e-12 && rel(z0.im, rs) < 1e-12);
    }
}

/// Wheeler (Proc. IRE 1942): smooth copper recedes by delta/2 for both
/// inductance and resistance.
#[test]
fn wheeler_recession_of_smooth_copper_is_half_delta() {
    let f = 10e9;
    let d = skin_depth(f, SIGMA).unwrap();
    let zs = smooth_surface_impedance(f, SIGMA).unwrap();
    let r = wheeler_recession(zs, 2.0 * std::f64::consts::PI * f).unwrap();
    assert!(rel(r.inductive, d / 2.0) < 1e-12 && rel(r.resistive, d / 2.0) < 1e-12);
    assert!(extra_inductive_recession(zs, f, SIGMA).unwrap().abs() < 1e-18);
    // Im Zs = omega mu0 d_L by definition.
    let z = Complex64::new(0.1, 0.3);
    let w = 1e10;
    let r = wheeler_recession(z, w).unwrap();
    assert!(rel(r.inductive * w * MU0, 0.3) < 1e-12);
}

/// Cannonball spheres with delta >> r add a fixed inductance mu0 (3/2) f r
/// per square (low-frequency limit of Bracken's causal Huray form), i.e.
/// 7 pi/3 r = 3.665 µm of extra recession for r = 0.5 µm.
#[test]
fn cannonball_low_frequency_recession() {
    let m = HurayModel::cannonball(0.5e-6).unwrap();
    let f = 1e6; // delta = 66 µm >> r
    let zs = m.causal_surface_impedance(f, SIGMA).unwrap();
    let extra = extra_inductive_recession(zs, f, SIGMA).unwrap();
    assert!(
        rel(extra, 7.0 * std::f64::consts::PI / 3.0 * 0.5e-6) < 0.02,
        "{extra}"
    );
}

proptest! {
    /// No roughness model ever reduces loss below smooth copper (K >= 1), and
    /// causal forms never give less resistance or inductance than smooth.
    #[test]
    fn k_never_below_one(rq in 0.0f64..20e-6, lf in 6.0f64..11.5, rf in 1.0f64..6.0,
                         r in 0.05e-6f64..5e-6, n in 0.0f64..1e13, mr in 1.0f64..3.0) {
        let f = 10f64.powf(lf);
        let d = skin_depth(f, SIGMA).unwrap();
        let rs = surface_resistance(f, SIGMA).unwrap();
        prop_assert!(hammerstad_factor(rq, d).unwrap() >= 1.0);
        prop_assert!(hammerstad_factor_general(rq, d, rf).unwrap() >= 1.0);
        prop_assert!(groiss_factor(rq, d).unwrap() >= 1.0);
        let h = HurayModel::new(mr, vec![SphereFamily { radius: r, count_per_area: n }]).unwrap();
        prop_assert!(h.loss_factor(d).unwrap() >= 1.0);
        let zh = h.causal_surface_impedance(f, SIGMA).unwrap();
        prop_assert!(zh.re >= rs * (1.0 - 1e-12) && zh.im >= rs * (1.0 - 1e-12));
        let zc = causal_hammerstad_surface_impedance(rq, rf, f, SIGMA).unwrap();
        prop_assert!(zc.re >= rs * (1.0 - 1e-12) && zc.im >= rs * (1.0 - 1e-12));
        let c = HurayModel::cannonball(r).unwrap();
        prop_assert!(c.loss_factor(d).unwrap() >= 1.0);
    }

    /// Never panics on arbitrary input.
    #[test]
    fn never_panics(a in proptest::num::f64::ANY, b in proptest::num::f64::ANY, c in proptest::num::f64::ANY) {
        let reals = [
            hammerstad_factor(a, b),
            hammerstad_factor_general(a, b, c),
            groiss_factor(a, b),
            cannonball_radius_from_rz(a),
        ];
        for k in reals.into_iter().flatten() {
            prop_assert!(k.is_finite() && k >= 0.0);
        }
        let mut zs = vec![causal_hammerstad_surface_impedance(a, c, b, SIGMA)];
        if let Ok(m) = HurayModel::cannonball(a) {
            if let Ok(k) = m.loss_factor(b) {
                prop_assert!(k.is_finite() && k >= 1.0);
            }
            zs.push(m.causal_surface_impedance(b, c));
        }
        for z in zs.into_iter().flatten() {
            prop_assert!(z.re.is_finite() && z.im.is_finite() && z.re >= 0.0);
        }
        for d in [HeightDistribution::Normal, HeightDistribution::Rayleigh] {
            if let Ok(z) = gradient_model_surface_impedance(a, d, b, SIGMA, c) {
                prop_assert!(z.re.is_finite() && z.im.is_finite() && z.re > 0.0);
            }
        }
        if let Ok(r) = wheeler_recession(Complex64::new(a, b), c) {
            prop_assert!(r.inductive.is_finite() && r.resistive.is_finite());
        }
    }
}

/// Gradient model (Gold & Helmreich, IEEE T-MTT 65(10) 2017), Rq 1 µm
/// Rayleigh, sigma 58 MS/m, 10 GHz: Re Zs = 0.074824 ohm by the published
/// rational approximation (Grujic, IEEE T-MTT 70(4) 2022, as evaluated by an
/// open implementation); Rq 0.5 µm normal: sigma_eff = 2.276e7 S/m (same
/// source; sigma_eff defined by Re Zs = sqrt(omega mu0/(2 sigma_eff))). The
/// approximation is not exact, hence the tolerances.
#[test]
fn gradient_model_loss_matches_published_approximation() {
    let f = 10e9;
    let z =
        gradient_model_surface_impedance(1e-6, HeightDistribution::Rayleigh, f, 58e6, 0.0).unwrap();
    assert!(rel(z.re, 0.074824) < 2e-4, "{z}");
    let z =
        gradient_model_surface_impedance(0.5e-6, HeightDistribution::Normal, f, 58e6, 0.0).unwrap();
    let w = 2.0 * std::f64::consts::PI * f;
    let sigma_eff = w * MU0 / (2.0 * z.re * z.re);
    assert!(rel(sigma_eff, 2.276e7) < 5e-3, "{sigma_eff}");
}

/// Gradient model limits [derived from the model]: Rq = 0 is smooth copper;
/// with delta >> Rq both profiles look like smooth copper at the mean line
/// (metal volume above the base = mean height); moving the reference plane
/// outward by d adds j omega mu0 d and leaves Re Zs unchanged.
#[test]
fn gradient_model_limits() {
    let zs0 = smooth_surface_impedance(1e9, SIGMA).unwrap();
    let z =
        gradient_model_surface_impedance(0.0, HeightDistribution::Normal, 1e9, SIGMA, 0.0).unwrap();
    assert!((z - zs0).norm() < 1e-15);
    let f = 1e6; // delta = 66 µm
    let zs = smooth_surface_impedance(f, SIGMA).unwrap();
    for d in [HeightDistribution::Normal, HeightDistribution::Rayleigh] {
        let z = gradient_model_surface_impedance(0.5e-6, d, f, SIGMA, 0.0).unwrap();
        assert!((z - zs).norm() / zs.norm() < 0.02, "{d:?} {z} vs {zs}");
        let z1 = gradient_model_surface_impedance(0.5e-6, d, 20e9, SIGMA, 0.0).unwrap();
        let z2 = gradient_model_surface_impedance(0.5e-6, d, 20e9, SIGMA, 2e-6).unwrap();
        let w = 2.0 * std::f64::consts::PI * 20e9;
        assert!((z2.re - z1.re).abs() < 1e-12 && rel(z2.im - z1.im, w * MU0 * 2e-6) < 1e-9);
    }
    assert!(gradient_model_surface_impedance(
        f64::NAN,
        HeightDistribution::Normal,
        1e9,
        SIGMA,
        0.0
    )
    .is_err());
    assert!(gradient_model_surface_impedance(
        1e-6,
        HeightDistribution::Normal,
        1e9,
        SIGMA,
        f64::INFINITY
    )
    .is_err());
}

#[test]
fn gradient_model_loss_never_below_smooth_sweep() {
    for d in [HeightDistribution::Normal, HeightDistribution::Rayleigh] {
        for rq in [0.05e-6, 0.2e-6, 0.5e-6, 1e-6, 3e-6, 8e-6] {
            for f in [1e6, 1e7, 1e8, 1e9, 1e10, 5e10, 2e11] {
                let z = gradient_model_surface_impedance(rq, d, f, SIGMA, 0.0).unwrap();
                let rs = surface_resistance(f, SIGMA).unwrap();
                assert!(
                    z.re >= rs * (1.0 - 1e-9),
                    "{d:?} rq {rq} f {f}: K = {}",
                    z.re / rs
                );
            }
        }
    }
}

/// A subnormal frequency (found by the `never_panics` property) underflows
/// the surface resistance to 0: refused instead of giving a lossless
/// conductor.
#[test]
fn subnormal_frequency_is_refused() {
    assert!(surface_resistance(1.6202429153453e-311, SIGMA).is_err());
    for d in [HeightDistribution::Normal, HeightDistribution::Rayleigh] {
        assert!(
            gradient_model_surface_impedance(0.0, d, 1.6202429153453e-311, SIGMA, 0.0).is_err()
        );
    }
}

/// A foil's named loss model gives its published factor: Groiss at
/// δ = 4·Rq is 1 + e^(−2^1.6) (Groiss et al. 1996, formula from memory; searched, not found),
/// Hammerstad-Bekkadal at δ = Rq is 1 + (2/π)·atan(1.4) (Hammerstad &
/// Bekkadal 1975), Cannonball-Huray is the model's own factor from Rz
/// (Simonovich 2015); a smooth surface gives 1; the YAML keys round-trip.
#[test]
fn named_loss_models_give_their_factors() {
    use stackup_physics::roughness::{HurayModel, RoughLossModel, RoughSurface};
    let s = RoughSurface {
        rq: Some(1e-6),
        rz: Some(5e-6),
    };
    let g = RoughLossModel::Groiss.factor(&s, 4e-6).unwrap();
    assert!(rel(g, 1.0 + (-(2.0f64).powf(1.6)).exp()) < 1e-12, "{g}");
    let h = RoughLossModel::HammerstadBekkadal.factor(&s, 1e-6).unwrap();
    assert!(
        rel(h, 1.0 + 2.0 / std::f64::consts::PI * 1.4f64.atan()) < 1e-12,
        "{h}"
    );
    let c = RoughLossModel::CannonballHuray.factor(&s, 1e-6).unwrap();
    let want = HurayModel::cannonball_from_rz(5e-6)
        .unwrap()
        .loss_factor(1e-6)
        .unwrap();
    assert_eq!(c, want);
    assert!(c > 2.0, "Cannonball-Huray does not saturate at 2: {c}");
    for m in [
        RoughLossModel::HammerstadBekkadal,
        RoughLossModel::Groiss,
        RoughLossModel::CannonballHuray,
    ] {
        assert_eq!(m.factor(&RoughSurface::SMOOTH, 1e-6).unwrap(), 1.0);
        assert_eq!(RoughLossModel::from_key(m.key()), Some(m));
    }
}

/// The low-profile default lies inside the very-low-profile class: below
/// 5.1 µm (IPC-MF-150F, "Metal Foil for Printed Wiring Applications",
/// §3.4.5, as quoted in the si-list archive,
/// qsl.net/wb6tpu/si-list2/1373.html; low profile below 10.2 µm).
#[test]
fn low_profile_foil_is_in_the_published_very_low_profile_class() {
    let rz = LOW_PROFILE_FOIL.rz().unwrap();
    assert!(rz < 5.1e-6, "{rz}");
}
