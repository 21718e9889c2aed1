//! Apparent Dk from copper roughness: effective roughness dielectric layer
//! (project default) and the internal-inductance route.

use proptest::prelude::*;
use stackup_physics::copper::*;
use stackup_physics::roughness::*;

const SIGMA: f64 = SIGMA_ANNEALED_COPPER;

fn app(eps: f64, h: f64, s: RoughSurface, f: f64) -> f64 {
    RoughLayerModel::default()
        .apparent_dk_parallel_plate(eps, h, &[s, s], f, SIGMA)
        .unwrap()
}

/// Trade fact (common practice, no source): on a ~0.1 mm laminate of bulk
/// Dk 2.9-3.0, 50 ohm microstrip at tens of GHz, foil of ~0.5 µm RMS versus
/// ~3 µm RMS raises the apparent Dk by about 0.3 (+-0.1). Parallel-plate
/// estimate, both faces rough.
#[test]
fn trade_fact_low_vs_standard_profile() {
    for eps in [2.9, 2.95, 3.0] {
        for h in [0.1e-3, 101.6e-6] {
            for f in [20e9, 30e9, 50e9] {
                let lo = app(eps, h, RoughSurface::from_rq(0.5e-6), f);
                let hi = app(eps, h, RoughSurface::from_rq(3e-6), f);
                let d = hi - lo;
                assert!(
                    (d - 0.3).abs() <= 0.1,
                    "eps {eps} h {h} f {f}: {lo} -> {hi}"
                );
            }
        }
    }
}

/// Trade fact (common practice, no source): bulk Dk 3.0 with standard
/// electrodeposited foil (Rz 9 µm, Rq 2.25 µm chosen as typical) near 50 GHz
/// reads about 3.2 at 0.127 mm, lower at 0.254 mm, lower again at 0.508 mm,
/// and within a few hundredths of 3.0 by 1.27 mm; monotonic.
#[test]
fn trade_fact_thickness_series() {
    let s = STANDARD_ED_FOIL;
    let v: Vec<f64> = [127e-6, 254e-6, 508e-6, 1.27e-3]
        .iter()
        .map(|&h| app(3.0, h, s, 50e9))
        .collect();
    assert!((v[0] - 3.2).abs() < 0.05, "{v:?}");
    assert!(v[0] > v[1] && v[1] > v[2] && v[2] > v[3], "{v:?}");
    assert!(v[3] - 3.0 < 0.04 && v[3] > 3.0, "{v:?}");
    // Same foil known only by its Rz gives the same answer (Rz/Rq = 4).
    let by_rz = app(3.0, 127e-6, RoughSurface::from_rz(9e-6), 50e9);
    assert!((by_rz - v[0]).abs() < 1e-12);
}

/// The calibration procedure of [`ROUGH_LAYER_K`] (crate README,
/// "Calibration of the roughness layer"), re-run: with the metal fraction
/// fixed at 0.5, bisect k until a 101.6 µm dielectric of bulk Dk 2.95 reads
/// 0.30 higher between two Rq 3 µm foils than between two Rq 0.5 µm foils at
/// 30 GHz (the trade fact, common practice, no source). It gives k = 2.343;
/// the adopted constant is that value rounded to 2.35.
#[test]
fn calibration_procedure_reproduces_k() {
    let rise = |k: f64| {
        let m = RoughLayerModel {
            k,
            metal_fraction: ROUGH_LAYER_METAL_FRACTION,
        };
        let at = |rq: f64| {
            m.apparent_dk_parallel_plate(
                2.95,
                101.6e-6,
                &[RoughSurface::from_rq(rq); 2],
                30e9,
                SIGMA,
            )
            .unwrap()
        };
        at(3e-6) - at(0.5e-6)
    };
    let (mut lo, mut hi) = (0.1, 10.0);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if rise(mid) < 0.30 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    assert!((lo - 2.343).abs() < 0.001, "calibrated k {lo}");
    assert!(
        (ROUGH_LAYER_K - lo).abs() < 0.01,
        "adopted {ROUGH_LAYER_K}, calibrated {lo}"
    );
}

/// Published measurements (Horn, Reynolds & Rautio, IEEE IMS 2010, from
/// memory; searched: the authors and "conductor profile phase constant thin
/// laminates", found only unattributed sentences of an article on that
/// subject, without its numbers): ~0.1 mm laminates with standard ED foil read a few percent up to
/// ~10 % above the smooth-copper Dk; 0.5 mm and thicker within ~1-2 %; the
/// effect changes only weakly with frequency above a few GHz.
#[test]
fn magnitude_against_published_measurements() {
    for f in [10e9, 20e9, 50e9] {
        let r100 = app(3.0, 0.1e-3, STANDARD_ED_FOIL, f) / 3.0 - 1.0;
        let r500 = app(3.0, 0.5e-3, STANDARD_ED_FOIL, f) / 3.0 - 1.0;
        assert!((0.02..=0.12).contains(&r100), "{f}: {r100}");
        assert!(r500 <= 0.025, "{f}: {r500}");
    }
    let a = app(3.0, 0.1e-3, STANDARD_ED_FOIL, 10e9);
    let b = app(3.0, 0.1e-3, STANDARD_ED_FOIL, 50e9);
    assert!((a - b).abs() < 0.01 * a);
}

/// Layer permittivity: Maxwell Garnett (Phil. Trans. R. Soc. A 203, 1904) in
/// Clausius-Mossotti form (eps_m - eps)/(eps_m + 2 eps) = phi (eps_i - eps)/(eps_i + 2 eps)
/// with perfectly conducting inclusions (eps_i -> inf): at phi = 0.5,
/// eps_m = 4 eps.
#[test]
fn layer_permittivity_is_maxwell_garnett() {
    let m = RoughLayerModel::default();
    for eps in [1.0, 3.0, 10.2] {
        let em = m.permittivity(eps).unwrap();
        assert!(((em - eps) / (em + 2.0 * eps) - m.metal_fraction).abs() < 1e-12);
    }
    assert!((m.permittivity(3.0).unwrap() - 12.0).abs() < 1e-12);
    // No metal in the layer: no apparent-Dk change.
    let none = RoughLayerModel {
        k: ROUGH_LAYER_K,
        metal_fraction: 0.0,
    };
    let e = none
        .apparent_dk_parallel_plate(3.0, 1e-4, &[STANDARD_ED_FOIL; 2], 30e9, SIGMA)
        .unwrap();
    assert!((e - 3.0).abs() < 1e-12);
}

/// The closed form eps h/(h - sum T (1 - eps/eps_r)) equals the series
/// capacitance of bulk and layers, and smooth copper or low frequency
/// (skin depth far above the roughness) leave the bulk Dk.
#[test]
fn closed_form_and_limits() {
    let m = RoughLayerModel::default();
    let (eps, h, f) = (3.4, 150e-6, 28e9);
    let s = [
        RoughSurface::from_rq(1.2e-6),
        RoughSurface::from_rz(3e-6),
        RoughSurface::SMOOTH,
    ];
    let t: f64 = s.iter().map(|x| m.thickness(x, f, SIGMA).unwrap()).sum();
    let er = m.permittivity(eps).unwrap();
    let closed = eps * h / (h - t * (1.0 - eps / er));
    assert!((m.apparent_dk_parallel_plate(eps, h, &s, f, SIGMA).unwrap() - closed).abs() < 1e-12);
    assert_eq!(
        m.apparent_dk_parallel_plate(eps, h, &[RoughSurface::SMOOTH; 2], f, SIGMA)
            .unwrap(),
        eps
    );
    let low = m
        .apparent_dk_parallel_plate(eps, h, &[STANDARD_ED_FOIL; 2], 1e3, SIGMA)
        .unwrap();
    assert!(low - eps < 1e-6);
    // Four rough faces (e.g. two thin cores' foils) add up.
    let four = m
        .apparent_dk_parallel_plate(eps, h, &[STANDARD_ED_FOIL; 4], f, SIGMA)
        .unwrap();
    let two = m
        .apparent_dk_parallel_plate(eps, h, &[STANDARD_ED_FOIL; 2], f, SIGMA)
        .unwrap();
    assert!(four > two);
    // Layers thicker than the dielectric saturate at eps_rough.
    let sat = m
        .apparent_dk_parallel_plate(eps, 1e-6, &[STANDARD_ED_FOIL; 2], f, SIGMA)
        .unwrap();
    assert!((sat - er).abs() < 1e-9);
}

/// Bond-enhancement treatment of unknown roughness is carried as a range:
/// best case below worst case (common practice, no source).
#[test]
fn bond_treatment_range() {
    let best = app(3.5, 76e-6, BOND_TREATMENT_UNKNOWN_BEST, 28e9);
    let worst = app(3.5, 76e-6, BOND_TREATMENT_UNKNOWN_WORST, 28e9);
    assert!(3.5 <= best && best < worst);
    assert!(BOND_TREATMENT_UNKNOWN_BEST.rz().unwrap() < BOND_TREATMENT_UNKNOWN_WORST.rz().unwrap());
}

/// Internal-inductance route, wide-strip form eps (1 + sum d/h): smooth
/// copper (d = delta/2 per wall, Wheeler 1942) gives 1 + delta/h, 0.66 % at
/// 10 GHz for h = 100 µm.
#[test]
fn internal_inductance_route() {
    let f = 10e9;
    let zs = smooth_surface_impedance(f, SIGMA).unwrap();
    let r = wheeler_recession(zs, 2.0 * std::f64::consts::PI * f).unwrap();
    let e = apparent_dk_internal_inductance(1.0, 100e-6, 2.0 * r.inductive).unwrap();
    assert!((e - 1.0066085).abs() < 1e-6, "{e}");
    // Causal Huray (Cannonball) adds more than smooth copper.
    let hm = HurayModel::cannonball_from_rz(9e-6).unwrap();
    let extra = extra_inductive_recession(hm.causal_surface_impedance(f, SIGMA).unwrap(), f, SIGMA)
        .unwrap();
    assert!(extra > 0.0);
    assert!(apparent_dk_internal_inductance(3.0, 100e-6, 2.0 * extra).unwrap() > 3.0);
    assert!(apparent_dk_internal_inductance(3.0, 0.0, 1e-6).is_err());
}

fn surf() -> impl Strategy<Value = RoughSurface> {
    prop_oneof![
        (0.0f64..6e-6).prop_map(RoughSurface::from_rq),
        (0.0f64..25e-6).prop_map(RoughSurface::from_rz),
    ]
}

proptest! {
    /// Apparent Dk is never below the bulk Dk and never rises with thickness.
    #[test]
    fn apparent_dk_bounds_and_monotone(eps in 1.0f64..12.0, h1 in 1e-6f64..3e-3, h2 in 1e-6f64..3e-3,
                                       lf in 6.0f64..11.3, s in proptest::collection::vec(surf(), 1..=4)) {
        let m = RoughLayerModel::default();
        let f = 10f64.powf(lf);
        let a = m.apparent_dk_parallel_plate(eps, h1.min(h2), &s, f, SIGMA).unwrap();
        let b = m.apparent_dk_parallel_plate(eps, h1.max(h2), &s, f, SIGMA).unwrap();
        prop_assert!(a >= eps * (1.0 - 1e-12) && b >= eps * (1.0 - 1e-12));
        prop_assert!(b <= a * (1.0 + 1e-12));
        prop_assert!(a <= m.permittivity(eps).unwrap() * (1.0 + 1e-12));
    }

    /// Rougher copper never lowers the apparent Dk.
    #[test]
    fn rougher_is_not_lower(eps in 1.0f64..12.0, h in 10e-6f64..2e-3, r1 in 0.0f64..6e-6, r2 in 0.0f64..6e-6, lf in 8.0f64..11.3) {
        let m = RoughLayerModel::default();
        let f = 10f64.powf(lf);
        let lo = m.apparent_dk_parallel_plate(eps, h, &[RoughSurface::from_rq(r1.min(r2))], f, SIGMA).unwrap();
        let hi = m.apparent_dk_parallel_plate(eps, h, &[RoughSurface::from_rq(r1.max(r2))], f, SIGMA).unwrap();
        prop_assert!(hi >= lo * (1.0 - 1e-12));
    }

    /// Never panics on arbitrary input.
    #[test]
    fn never_panics(a in proptest::num::f64::ANY, b in proptest::num::f64::ANY, c in proptest::num::f64::ANY,
                    d in proptest::num::f64::ANY, e in proptest::num::f64::ANY) {
        let m = RoughLayerModel { k: d, metal_fraction: e };
        let s = [RoughSurface::from_rq(a), RoughSurface { rq: None, rz: Some(b) }];
        let all = [
            m.apparent_dk_parallel_plate(c, a, &s, b, d),
            RoughLayerModel::default().apparent_dk_parallel_plate(c, a, &s, b, SIGMA),
            m.thickness(&s[0], c, SIGMA),
            m.permittivity(a),
            apparent_dk_internal_inductance(a, b, c),
            roughness_onset(a, b),
        ];
        for v in all.into_iter().flatten() {
            prop_assert!(v.is_finite() && v >= 0.0);
        }
    }
}
