//! Roughness never lowers loss below smooth copper: every roughness model in
//! `roughness` (Hammerstad-Bekkadal, its general form, Groiss, Huray with
//! any sphere family, Cannonball-Huray from a radius or from Rz, causal
//! Hammerstad, causal Huray, the gradient model) gives a loss factor K >= 1
//! or Re Zs >= Rs, and the conductor-loss closed forms fed with that K give
//! at least the smooth-copper loss. (`materials_roughness.rs` checks K >= 1
//! for the first six; this file adds the gradient model, Cannonball from
//! Rz, and the step from K to attenuation.)

use proptest::prelude::*;
use stackup_physics::copper::*;
use stackup_physics::loss::{conductor_loss_microstrip_hj, conductor_loss_wheeler};
use stackup_physics::roughness::*;

const SIGMA: f64 = SIGMA_ANNEALED_COPPER;

/// Every model's loss factor K = Re Zs / Rs for one surface.
fn all_factors(rq: f64, rz: f64, f: f64) -> Vec<(&'static str, f64)> {
    let d = skin_depth(f, SIGMA).unwrap();
    let rs = surface_resistance(f, SIGMA).unwrap();
    let mut k = vec![
        ("Hammerstad-Bekkadal", hammerstad_factor(rq, d).unwrap()),
        (
            "Hammerstad general (rf 3)",
            hammerstad_factor_general(rq, d, 3.0).unwrap(),
        ),
        ("Groiss", groiss_factor(rq, d).unwrap()),
        (
            "causal Hammerstad",
            causal_hammerstad_surface_impedance(rq, 2.0, f, SIGMA)
                .unwrap()
                .re
                / rs,
        ),
    ];
    if rz > 0.0 {
        let c = HurayModel::cannonball_from_rz(rz).unwrap();
        k.push(("Cannonball-Huray from Rz", c.loss_factor(d).unwrap()));
        k.push((
            "causal Cannonball-Huray from Rz",
            c.causal_surface_impedance(f, SIGMA).unwrap().re / rs,
        ));
    }
    for dist in [HeightDistribution::Normal, HeightDistribution::Rayleigh] {
        let z = gradient_model_surface_impedance(rq, dist, f, SIGMA, 0.0).unwrap();
        k.push(("gradient model", z.re / rs));
    }
    k
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 128, failure_persistence: None, .. ProptestConfig::default() })]

    /// K >= 1 for every model (a rough surface is longer than the smooth
    /// one it replaces: Hammerstad & Jensen 1980; Huray et al. 2010; Gold &
    /// Helmreich 2017), up to rounding.
    #[test]
    fn no_model_below_smooth(rq in 0.0f64..10e-6, rz_over_rq in 3.0f64..6.0, lf in 6.0f64..11.5) {
        let f = 10f64.powf(lf);
        for (name, k) in all_factors(rq, rq * rz_over_rq, f) {
            prop_assert!(k.is_finite() && k >= 1.0 - 1e-9, "{name}: K = {k} (Rq {rq:e}, f {f:e})");
        }
    }

    /// The conductor-loss closed forms scale with K, so rough copper is
    /// never less lossy than smooth: Hammerstad-Jensen microstrip
    /// (Hammerstad & Jensen 1980) and Wheeler's incremental inductance
    /// (Wheeler 1942).
    #[test]
    fn attenuation_never_below_smooth(rq in 0.0f64..10e-6, lf in 7.0f64..11.5, z0 in 20.0f64..120.0,
                                      w in 50e-6f64..1e-3, dz in 1e2f64..1e5) {
        let f = 10f64.powf(lf);
        let rs = surface_resistance(f, SIGMA).unwrap();
        let smooth_hj = conductor_loss_microstrip_hj(rs, z0, w, 1.0).unwrap();
        let smooth_wh = conductor_loss_wheeler(z0, dz, rs, 1.0).unwrap();
        for (name, k) in all_factors(rq, 5.0 * rq, f) {
            // The loss forms refuse K < 1; a K a rounding error under 1 is taken as 1.
            let k = k.max(1.0);
            prop_assert!(conductor_loss_microstrip_hj(rs, z0, w, k).unwrap() >= smooth_hj, "{name}");
            prop_assert!(conductor_loss_wheeler(z0, dz, rs, k).unwrap() >= smooth_wh, "{name}");
        }
    }
}
