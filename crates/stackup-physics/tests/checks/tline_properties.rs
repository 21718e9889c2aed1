//! Property tests of symmetry and convergence: impedance and effective
//! permittivity do not change under a mirror image of the cross-section,
//! the offset-stripline closed form is symmetric in its two gaps and equals
//! the centred form when centred, and the field solver's error against an
//! exact result shrinks as its mesh is refined.

use proptest::prelude::*;
use stackup_physics::fieldsolver::*;
use stackup_physics::stripline::{centered_stripline, cohn_stripline, offset_stripline};

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn layer(thickness: f64, eps_r: f64) -> DielectricLayer {
    DielectricLayer { thickness, eps_r }
}

/// One mesh, no extrapolation, at refinement level `m` (cell sizes divided
/// by m, the edge cell by m²).
fn level(m: f64) -> SolverOptions {
    SolverOptions {
        refinements: vec![m],
        ..SolverOptions::default()
    }
}

fn coarse() -> SolverOptions {
    SolverOptions {
        density: 0.5,
        refinements: vec![1.0],
        ..SolverOptions::default()
    }
}

/// Mirror a cross-section left to right (x → −x), conductors in reverse
/// order so conductor i of the image is the image of conductor n−1−i.
fn mirror_x(cs: &CrossSection) -> CrossSection {
    let mut m = cs.clone();
    m.conductors = cs
        .conductors
        .iter()
        .rev()
        .map(|t| Trace {
            x_center: -t.x_center,
            ..*t
        })
        .collect();
    m.blocks = cs
        .blocks
        .iter()
        .map(|b| DielectricBlock {
            x0: -b.x1,
            x1: -b.x0,
            ..*b
        })
        .collect();
    m
}

/// Mirror a cross-section closed by two planes top to bottom (y → b − y).
fn mirror_y(cs: &CrossSection) -> CrossSection {
    let b: f64 = cs.layers.iter().map(|l| l.thickness).sum();
    let mut m = cs.clone();
    m.layers.reverse();
    m.conductors = cs
        .conductors
        .iter()
        .map(|t| Trace {
            y_bottom: b - t.y_bottom - t.thickness,
            width_bottom: t.width_top,
            width_top: t.width_bottom,
            ..*t
        })
        .collect();
    m.blocks = cs
        .blocks
        .iter()
        .map(|k| DielectricBlock {
            y0: b - k.y1,
            y1: b - k.y0,
            ..*k
        })
        .collect();
    m
}

proptest! {
    // Closed forms are cheap: many cases.
    #![proptest_config(ProptestConfig { cases: 256, failure_persistence: None, .. ProptestConfig::default() })]

    /// Off-centre stripline (parallel combination of two centred lines,
    /// Wadell 1991 from memory; searched, not found, each by Wheeler 1978): Z(h1, h2) = Z(h2, h1)
    /// (the section's top-bottom mirror image is the same line), and with
    /// h1 = h2 = h it is the centred stripline of spacing b = 2h + t.
    #[test]
    fn offset_stripline_symmetric_and_centred(w in 20e-6f64..1e-3, h1 in 20e-6f64..1e-3,
                                              h2 in 20e-6f64..1e-3, t in 0.0f64..70e-6,
                                              er in 1.0f64..12.0) {
        let a = offset_stripline(w, h1, h2, t, er).unwrap();
        let b = offset_stripline(w, h2, h1, t, er).unwrap();
        prop_assert!(rel(a.z0, b.z0) < 1e-12, "{} vs {}", a.z0, b.z0);
        prop_assert_eq!(a.eps_eff, b.eps_eff);
        let c = offset_stripline(w, h1, h1, t, er).unwrap();
        if t > 0.0 {
            let centred = centered_stripline(w, 2.0 * h1 + t, t, er).unwrap();
            prop_assert!(rel(c.z0, centred.z0) < 1e-12, "{} vs {}", c.z0, centred.z0);
        }
        // Moving the strip off centre in the same spacing brings it nearer
        // one plane: more capacitance, lower Z (Wadell's combination is
        // largest when centred).
        let hm = 0.5 * (h1 + h2);
        let mid = offset_stripline(w, hm, hm, t, er).unwrap();
        prop_assert!(a.z0 <= mid.z0 * (1.0 + 1e-12), "{} > centred {}", a.z0, mid.z0);
    }
}

proptest! {
    // Each case runs several sparse factorisations: few cases.
    #![proptest_config(ProptestConfig { cases: 5, failure_persistence: None, .. ProptestConfig::default() })]

    /// An edge-coupled pair in two dielectrics with a dielectric block over
    /// one line only (not symmetric): its left-right mirror image has the
    /// same Maxwell capacitance matrices with the conductors swapped, and
    /// the same modal eps_eff. Exact: Laplace's equation is invariant under
    /// reflection (Paul 2008, ch. 5, per-unit-length parameters); the mesh
    /// need not be, hence the tolerance.
    #[test]
    fn coupled_pair_mirror_symmetric(w in 0.08e-3f64..0.3e-3, s in 0.08e-3f64..0.4e-3,
                                     er1 in 2.5f64..5.0, er2 in 2.5f64..5.0, off in -0.1e-3f64..0.1e-3) {
        let h = 0.15e-3;
        let cs = CrossSection {
            layers: vec![layer(h, er1), layer(h, er2)],
            bottom_plane: true,
            top_plane: true,
            conductors: vec![
                Trace::rect(off - (w + s) / 2.0, h, w, 18e-6),
                Trace::rect(off + (w + s) / 2.0, h, 0.9 * w, 18e-6),
            ],
            blocks: vec![DielectricBlock { x0: off, x1: off + w + s, y0: h, y1: h + 40e-6, eps_r: 3.2 }],
            ..Default::default()
        };
        let a = solve(&cs, &coarse()).unwrap();
        let b = solve(&mirror_x(&cs), &coarse()).unwrap();
        let tol = 2e-3;
        for (i, j) in [(0, 3), (3, 0), (1, 2), (2, 1)] {
            prop_assert!(rel(b.capacitance[i], a.capacitance[j]) < tol,
                "C[{i}] {} vs C[{j}] {}", b.capacitance[i], a.capacitance[j]);
            prop_assert!(rel(b.capacitance_vacuum[i], a.capacitance_vacuum[j]) < tol);
        }
        for (x, y) in a.modal_eps_eff.iter().zip(&b.modal_eps_eff) {
            prop_assert!(rel(*x, *y) < tol, "{x} vs {y}");
        }
        let (pa, pb) = (a.pair.unwrap(), b.pair.unwrap());
        prop_assert!(rel(pa.z_odd, pb.z_odd) < tol && rel(pa.z_even, pb.z_even) < tol);
    }

    /// An off-centre stripline with a trapezoidal strip in two dielectrics:
    /// its top-bottom mirror image (layers reversed, trapezoid flipped) has
    /// the same Z0 and eps_eff (reflection symmetry of Laplace's equation,
    /// Paul 2008, ch. 5).
    #[test]
    fn offset_stripline_solver_mirror_symmetric(w in 0.08e-3f64..0.3e-3, h1 in 0.08e-3f64..0.3e-3,
                                                h2 in 0.08e-3f64..0.3e-3, er1 in 2.5f64..5.0,
                                                er2 in 2.5f64..5.0) {
        let t = 18e-6;
        let cs = CrossSection {
            layers: vec![layer(h1, er1), layer(h2 + t, er2)],
            bottom_plane: true,
            top_plane: true,
            conductors: vec![Trace { width_top: 0.85 * w, ..Trace::rect(0.0, h1, w, t) }],
            ..Default::default()
        };
        let a = solve(&cs, &coarse()).unwrap().single.unwrap();
        let b = solve(&mirror_y(&cs), &coarse()).unwrap().single.unwrap();
        prop_assert!(rel(a.z0, b.z0) < 2e-3, "{} vs {}", a.z0, b.z0);
        prop_assert!(rel(a.eps_eff, b.eps_eff) < 2e-3, "{} vs {}", a.eps_eff, b.eps_eff);
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 4, failure_persistence: None, .. ProptestConfig::default() })]

    /// Mesh refinement converges: against Cohn's exact zero-thickness
    /// stripline (Cohn 1954, IRE Trans. MTT-2), the error of a single mesh
    /// (no extrapolation) shrinks at every refinement step 1 → 2 → 4, at
    /// second order, and the default two-mesh Richardson result is closer
    /// than its finer mesh.
    #[test]
    fn solver_converges_to_cohn_under_refinement(wb in 0.2f64..2.5, er in 1.0f64..10.0) {
        let b = 0.4e-3;
        let w = wb * b;
        let cs = CrossSection {
            layers: vec![layer(b / 2.0, er), layer(b / 2.0, er)],
            bottom_plane: true,
            top_plane: true,
            conductors: vec![Trace::rect(0.0, b / 2.0, w, 0.0)],
            ..Default::default()
        };
        let exact = cohn_stripline(w, b, er).unwrap().z0;
        let err = |o: &SolverOptions| rel(solve(&cs, o).unwrap().single.unwrap().z0, exact);
        let errs: Vec<f64> = [1.0, 2.0, 4.0].iter().map(|m| err(&level(*m))).collect();
        eprintln!("W/b {wb:.2} er {er:.2}: single-mesh errors {errs:?}");
        prop_assert!(errs[1] < errs[0] && errs[2] < errs[1], "{errs:?}");
        // Second order (the solver's `assumed_order`): halving the cells
        // divides the error by about 4 (measured 3.9 to 4.2).
        prop_assert!(errs[0] / errs[1] > 3.0 && errs[1] / errs[2] > 3.0, "{errs:?}");
        let extrapolated = err(&SolverOptions::default());
        prop_assert!(extrapolated < errs[1], "Richardson {extrapolated:e} vs level 2 {:e}", errs[1]);
    }
}
