//! The field solver's shortcuts give the answers of the plain path: the
//! mirror-symmetric half-domain solve, the shared-mesh family solve, and the
//! width search for a target impedance, the last against the inverses of
//! published closed forms (Cohn 1954 and 1955 exact striplines,
//! Hammerstad-Jensen 1980 microstrip).

use stackup_physics::coupled::cohn_coupled_stripline;
use stackup_physics::fieldsolver::*;
use stackup_physics::microstrip::hammerstad_jensen;
use stackup_physics::stripline::cohn_stripline;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn layer(thickness: f64, eps_r: f64) -> DielectricLayer {
    DielectricLayer { thickness, eps_r }
}

/// Inhomogeneous, asymmetric stripline (core below, prepreg above) with an
/// etched trace: nothing about it is special except its mirror symmetry.
fn offset_stripline(w: f64) -> CrossSection {
    CrossSection {
        layers: vec![layer(0.12e-3, 3.9), layer(0.18e-3, 3.4)],
        bottom_plane: true,
        top_plane: true,
        conductors: vec![Trace {
            x_center: 0.0,
            y_bottom: 0.12e-3,
            width_bottom: w,
            width_top: w - 20e-6,
            thickness: 17e-6,
        }],
        ..Default::default()
    }
}

fn pair(w: f64, s: f64, b: f64, er: f64, t: f64) -> CrossSection {
    CrossSection {
        layers: vec![layer(b / 2.0, er), layer(b / 2.0, er)],
        bottom_plane: true,
        top_plane: true,
        conductors: vec![
            Trace::rect(-(w + s) / 2.0, b / 2.0, w, t),
            Trace::rect((w + s) / 2.0, b / 2.0, w, t),
        ],
        ..Default::default()
    }
}

fn microstrip(w: f64, h: f64, er: f64) -> CrossSection {
    CrossSection {
        layers: vec![layer(h, er)],
        bottom_plane: true,
        top_plane: false,
        conductors: vec![Trace::rect(0.0, h, w, 0.0)],
        ..Default::default()
    }
}

fn whole() -> SolverOptions {
    SolverOptions {
        mirror: false,
        ..SolverOptions::default()
    }
}

/// Bisection for the width at which `z(w)` (decreasing in w) equals
/// `target`, between `lo` and `hi`.
fn invert(z: impl Fn(f64) -> f64, target: f64, mut lo: f64, mut hi: f64) -> f64 {
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if z(mid) > target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The half-domain solve (magnetic wall for the even excitation, electric
/// wall for the odd one) and the whole-domain solve mesh the same section
/// slightly differently; both are within the solver's stated error of each
/// other (common practice, no source: symmetry planes are exact boundary
/// conditions).
#[test]
fn mirror_half_matches_whole_domain() {
    let sections = [
        offset_stripline(120e-6),
        pair(100e-6, 150e-6, 0.3e-3, 3.7, 17e-6),
        microstrip(300e-6, 0.2e-3, 4.2),
        CrossSection {
            coplanar_grounds: Some(CoplanarGrounds {
                gap: 150e-6,
                width: None,
                y_bottom: 0.2e-3,
                thickness: 0.0,
            }),
            ..microstrip(300e-6, 0.2e-3, 4.2)
        },
    ];
    for cs in &sections {
        let half = solve(cs, &SolverOptions::default()).unwrap();
        let full = solve(cs, &whole()).unwrap();
        if cs.conductors.len() == 1 {
            // one trace: one half-size system instead of the whole
            assert!(half.unknowns < full.unknowns * 7 / 10, "{cs:?}");
        }
        for (a, b) in half.capacitance.iter().zip(&full.capacitance) {
            assert!(rel(*a, *b) < 2e-3, "C {a} vs {b} for {cs:?}");
        }
        for (a, b) in half.capacitance_vacuum.iter().zip(&full.capacitance_vacuum) {
            assert!(rel(*a, *b) < 2e-3, "C0 {a} vs {b}");
        }
    }
}

/// An asymmetric section (a pair with unequal traces) is solved whole: the
/// half-domain path must not be taken.
#[test]
fn asymmetric_pair_is_solved_whole() {
    let mut cs = pair(100e-6, 150e-6, 0.3e-3, 3.7, 0.0);
    cs.conductors[1].width_bottom = 120e-6;
    cs.conductors[1].width_top = 120e-6;
    let a = solve(&cs, &SolverOptions::default()).unwrap();
    let b = solve(&cs, &whole()).unwrap();
    assert_eq!(a, b);
    // The wider trace has the larger self-capacitance.
    assert!(a.capacitance[3] > a.capacitance[0]);
}

/// A family shares one mesh; each member's result equals its own solve
/// within the solver's error, a one-member family equals `solve` exactly,
/// and members that differ in their conductors are refused.
#[test]
fn family_members_match_their_own_solves() {
    let smooth = offset_stripline(120e-6);
    let mut rough = smooth.clone();
    rough.blocks.push(DielectricBlock {
        x0: -1.0,
        x1: 1.0,
        y0: 0.0,
        y1: 3e-6,
        eps_r: 3.9 * 2.3,
    });
    rough.blocks.push(DielectricBlock {
        x0: -60e-6,
        x1: 60e-6,
        y0: 0.12e-3 - 3e-6,
        y1: 0.12e-3,
        eps_r: 3.9 * 2.3,
    });
    let opt = SolverOptions::default();
    let fam = solve_family(&[smooth.clone(), rough.clone()], &opt).unwrap();
    let alone = [solve(&smooth, &opt).unwrap(), solve(&rough, &opt).unwrap()];
    for (f, a) in fam.iter().zip(&alone) {
        let (zf, za) = (f.single.unwrap(), a.single.unwrap());
        assert!(rel(zf.z0, za.z0) < 2e-3, "{} vs {}", zf.z0, za.z0);
        assert!(rel(zf.eps_eff, za.eps_eff) < 2e-3);
    }
    // The roughness layers slow the line and lower its impedance.
    assert!(fam[1].single.unwrap().eps_eff > fam[0].single.unwrap().eps_eff);
    assert_eq!(fam[0].capacitance_vacuum, fam[1].capacitance_vacuum);
    let one = solve_family(std::slice::from_ref(&smooth), &opt).unwrap();
    assert_eq!(one[0], alone[0]);
    let other = offset_stripline(150e-6);
    assert!(solve_family(&[smooth, other], &opt).is_err());
    assert!(solve_family(&[], &opt).is_err());
}

/// Width for 50 ohm in Cohn's exact zero-thickness stripline (S. B. Cohn,
/// IRE Trans. MTT-2, 1954), inverted by bisection, from starting widths far
/// below and above the answer.
#[test]
fn width_for_target_matches_inverse_of_cohn_stripline() {
    let (b, er) = (0.5e-3, 4.0);
    let opt = SolverOptions::default();
    let section = |w: f64| CrossSection {
        layers: vec![layer(b / 2.0, er), layer(b / 2.0, er)],
        bottom_plane: true,
        top_plane: true,
        conductors: vec![Trace::rect(0.0, b / 2.0, w, 0.0)],
        ..Default::default()
    };
    for target in [40.0, 50.0, 65.0] {
        let want = invert(
            |w| cohn_stripline(w, b, er).unwrap().z0,
            target,
            0.01e-3,
            3e-3,
        );
        for w0 in [0.05e-3, want * 1.05, 1.2e-3] {
            let z0 = solve(&section(w0), &opt).unwrap().single.unwrap().z0;
            let got = width_for_target(section, |r| r.single.map(|s| s.z0), w0, z0, target, &opt)
                .unwrap();
            assert!(
                rel(got, want) < 4e-3,
                "{target} ohm from {w0}: {got} vs Cohn {want}"
            );
        }
    }
}

/// Width for 100 ohm differential in Cohn's exact edge-coupled stripline
/// (S. B. Cohn, IRE Trans. MTT-3, 1955) at fixed spacing.
#[test]
fn width_for_target_matches_inverse_of_cohn_coupled_stripline() {
    let (b, er, s) = (0.4e-3, 3.6, 0.15e-3);
    let opt = SolverOptions::default();
    let want = invert(
        |w| 2.0 * cohn_coupled_stripline(w, s, b, er).unwrap().modes.z_odd,
        100.0,
        0.01e-3,
        1e-3,
    );
    let w0 = 0.2e-3;
    let z0 = solve(&pair(w0, s, b, er, 0.0), &opt)
        .unwrap()
        .pair
        .unwrap()
        .z_diff();
    let got = width_for_target(
        |w| pair(w, s, b, er, 0.0),
        |r| r.pair.map(|p| p.z_diff()),
        w0,
        z0,
        100.0,
        &opt,
    )
    .unwrap();
    assert!(rel(got, want) < 6e-3, "{got} vs Cohn {want}");
}

/// Width for 50 ohm microstrip against the inverse of Hammerstad-Jensen
/// (E. Hammerstad, O. Jensen, IEEE MTT-S Digest 1980; 0.2 % stated
/// accuracy), zero thickness.
#[test]
fn width_for_target_matches_inverse_of_hammerstad_jensen() {
    let (h, er) = (0.2e-3, 4.4);
    let opt = SolverOptions::default();
    let want = invert(
        |w| hammerstad_jensen(w, h, 0.0, er).unwrap().z0,
        50.0,
        0.02e-3,
        2e-3,
    );
    let w0 = 0.1e-3;
    let z0 = solve(&microstrip(w0, h, er), &opt)
        .unwrap()
        .single
        .unwrap()
        .z0;
    let got = width_for_target(
        |w| microstrip(w, h, er),
        |r| r.single.map(|s| s.z0),
        w0,
        z0,
        50.0,
        &opt,
    )
    .unwrap();
    assert!(rel(got, want) < 6e-3, "{got} vs HJ {want}");
}

/// The secant search itself on a known function (Z = 60·(w0/w)^0.7): it
/// stops within 0.1 % of the target and refuses non-finite input.
#[test]
fn secant_width_on_a_power_law() {
    let z = |w: f64| 60.0 * (1e-4 / w).powf(0.7);
    let w = secant_width(|w| Some(z(w)), 1e-4, 60.0, 45.0).unwrap();
    assert!(rel(z(w), 45.0) < 1e-3, "{}", z(w));
    assert!(secant_width(|w| Some(z(w)), f64::NAN, 60.0, 45.0).is_none());
    assert!(secant_width(|_| None, 1e-4, 60.0, 45.0).is_none());
}

/// The mesh budget: a section whose mesh would pass `max_mesh_nodes` is an
/// error naming the limit, not a long solve (and not a panic).
#[test]
fn mesh_budget_is_enforced() {
    let small = SolverOptions {
        max_mesh_nodes: 300,
        ..SolverOptions::default()
    };
    for cs in [offset_stripline(120e-6), microstrip(300e-6, 0.2e-3, 4.2)] {
        let e = solve(&cs, &small).unwrap_err();
        assert!(e.message.contains("limit of"), "{}", e.message);
        assert!(solve(&cs, &SolverOptions::default()).is_ok());
    }
}
