//! Fabrication effects: pressed prepreg, glass-ply Dk, etch profile.

use proptest::prelude::*;
use stackup_physics::copper::{ounces_to_thickness, COPPER_FOIL_DENSITY};
use stackup_physics::fab::*;

/// t_pressed = t_nominal - sum (1 - R_i) t_Cu,i (common practice, no
/// source): 1 oz signal layer at 30 % fill and a 1 oz plane at 90 % fill eat
/// 0.7 x 34.3 + 0.1 x 34.3 = 27.4 µm of a 127 µm ply.
#[test]
fn pressed_prepreg() {
    let cu = ounces_to_thickness(1.0, COPPER_FOIL_DENSITY).unwrap();
    let t = pressed_prepreg_thickness(
        127e-6,
        [
            PrepregFace::Copper {
                thickness: cu,
                fill: 0.3,
            },
            PrepregFace::Copper {
                thickness: cu,
                fill: 0.9,
            },
        ],
    )
    .unwrap();
    assert!((t - (127e-6 - 0.8 * cu)).abs() < 1e-15);
    assert!((t - 99.56e-6).abs() < 0.1e-6, "{t}");
    // A laminate face takes nothing; full copper takes nothing.
    let lam = pressed_prepreg_thickness(
        127e-6,
        [
            PrepregFace::Laminate,
            PrepregFace::Copper {
                thickness: cu,
                fill: 1.0,
            },
        ],
    );
    assert_eq!(lam.unwrap(), 127e-6);
    // Too little resin for the copper: error, not a negative thickness.
    let thin = pressed_prepreg_thickness(
        40e-6,
        [PrepregFace::Copper {
            thickness: 70e-6,
            fill: 0.1,
        }; 2],
    );
    assert!(thin.is_err());
}

/// Lichtenecker (Phys. Z. 27, 1926, from memory; searched, not found): a single component is
/// itself; equal Dk is unchanged; a 50/50 mix of 2 and 8 is their geometric
/// mean 4.
#[test]
fn lichtenecker_basics() {
    assert!((lichtenecker_dk(&[(1.0, 3.3)]).unwrap() - 3.3).abs() < 1e-12);
    assert!((lichtenecker_dk(&[(0.3, 4.0), (0.7, 4.0)]).unwrap() - 4.0).abs() < 1e-12);
    assert!((lichtenecker_dk(&[(0.5, 2.0), (0.5, 8.0)]).unwrap() - 4.0).abs() < 1e-12);
}

/// Weight-to-volume conversion: equal densities keep the fraction; resin at
/// 50 % by weight with densities 1.3/2.54 g/cm³ is 66.1 % by volume. The
/// resin density is Budinski & Budinski's "circa 1.3 Mg/m³" for epoxies
/// (*Engineering Materials*, Prentice Hall 1999, quoted by Princeton's MAE
/// 324 course glossary).
#[test]
fn resin_volume_fraction_values() {
    assert!((resin_volume_fraction(0.37, 2.0, 2.0).unwrap() - 0.37).abs() < 1e-12);
    let v = resin_volume_fraction(0.5, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY).unwrap();
    assert!((EPOXY_RESIN_DENSITY - 1300.0).abs() < 1e-9);
    let expected = (0.5 / 1.3) / (0.5 / 1.3 + 0.5 / 2.54);
    assert!((v - expected).abs() < 1e-12 && (v - 0.661_458).abs() < 1e-6);
}

/// FR-4 class epoxy/E-glass with ~50 % resin is commonly quoted at Dk ~4.0-4.4
/// near 1 GHz and lower for resin-rich plies (common practice, no source);
/// glass style order: more resin, lower Dk.
#[test]
fn glass_ply_dk_trends() {
    let dk = |rc| glass_ply_dk(rc, 3.5, 6.3, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY).unwrap();
    let mid = dk(0.5);
    assert!((3.9..=4.5).contains(&mid), "{mid}");
    // mpmath evaluation of the same two formulas
    // (tests/materials_reference_values.py): 4.270595.
    assert!((mid - 4.270_595).abs() < 1e-6, "{mid}");
    let s106 = glass_style("106").unwrap();
    let s2116 = glass_style("2116").unwrap();
    let s7628 = glass_style(" 7628 ").unwrap();
    assert!(dk(s106.resin_content) < dk(s2116.resin_content));
    assert!(dk(s2116.resin_content) < dk(s7628.resin_content));
    // Table sanity (common practice, no source): thickness rises as resin falls
    // from 106 to 7628; all plies 40-200 µm, resin 40-75 %.
    assert!(
        s106.pressed_thickness < s2116.pressed_thickness
            && s2116.pressed_thickness < s7628.pressed_thickness
    );
    for g in GLASS_STYLES {
        assert!(
            (40e-6..=200e-6).contains(&g.pressed_thickness)
                && (0.40..=0.75).contains(&g.resin_content)
        );
    }
    assert_eq!(GLASS_STYLES.len(), 10);
}

/// W_top = W_bottom - 2t/EF (common practice; etch factor per IPC-T-50, from
/// memory): 100 µm at the base, 35 µm copper, EF 2.5 -> 72 µm top, 86 µm mean.
#[test]
fn etch_profile() {
    let top = etched_top_width(100e-6, 35e-6, 2.5).unwrap();
    assert!((top - 72e-6).abs() < 1e-12);
    assert!((mean_width(100e-6, top).unwrap() - 86e-6).abs() < 1e-12);
    assert!((etched_bottom_width(top, 35e-6, 2.5).unwrap() - 100e-6).abs() < 1e-12);
    assert_eq!(
        etched_top_width(100e-6, 35e-6, f64::INFINITY).unwrap(),
        100e-6
    );
}

proptest! {
    /// Lichtenecker lies between the series and parallel (Wiener 1912)
    /// bounds: harmonic <= geometric <= arithmetic weighted means.
    #[test]
    fn lichtenecker_within_wiener_bounds(v in 0.0f64..=1.0, e1 in 1.0f64..20.0, e2 in 1.0f64..20.0) {
        let l = lichtenecker_dk(&[(v, e1), (1.0 - v, e2)]).unwrap();
        let par = v * e1 + (1.0 - v) * e2;
        let ser = 1.0 / (v / e1 + (1.0 - v) / e2);
        prop_assert!(l <= par * (1.0 + 1e-12) && l >= ser * (1.0 - 1e-12));
    }

    /// Never panics on arbitrary input.
    #[test]
    fn never_panics(a in proptest::num::f64::ANY, b in proptest::num::f64::ANY, c in proptest::num::f64::ANY) {
        let all = [
            pressed_prepreg_thickness(a, [PrepregFace::Copper { thickness: b, fill: c }, PrepregFace::Laminate]),
            lichtenecker_dk(&[(a, b), (c, a)]),
            resin_volume_fraction(a, b, c),
            glass_ply_dk(a, b, c, a, b),
            etched_top_width(a, b, c),
            etched_bottom_width(a, b, c),
            mean_width(a, b),
        ];
        for v in all.into_iter().flatten() {
            prop_assert!(v.is_finite() && v >= 0.0);
        }
    }
}
