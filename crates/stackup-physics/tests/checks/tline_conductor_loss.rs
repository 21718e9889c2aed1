//! Conductor loss of solved sections by Wheeler's incremental-inductance
//! rule, against Pozar's stripline example, the parallel-plate limit and
//! the closed forms.

use stackup_physics::consts::ETA0;
use stackup_physics::copper::surface_resistance;
use stackup_physics::fieldsolver::*;
use stackup_physics::loss::{
    conductor_loss_microstrip_hj, conductor_loss_microstrip_pucel, conductor_loss_stripline_pozar,
};

use crate::tline_fieldsolver::{layer, microstrip};

/// αc of the signal mode (single line or a pair's odd mode), Np/m.
fn alpha_c(cs: &CrossSection, rs: f64) -> f64 {
    let opt = SolverOptions::default();
    let d = inductance_derivatives(cs, &opt).unwrap();
    let r = modal_resistance(&resistance_matrix(&d, |_| rs));
    let s = solve(cs, &opt).unwrap();
    match (s.single, s.pair) {
        (Some(x), _) => r[0] / (2.0 * x.z0),
        (_, Some(p)) => r[1] / (2.0 * p.z_odd),
        _ => unreachable!(),
    }
}

fn stripline(w: f64, b: f64, t: f64, er: f64) -> CrossSection {
    let h = 0.5 * (b - t);
    CrossSection {
        layers: vec![layer(h, er), layer(t, er), layer(h, er)],
        bottom_plane: true,
        top_plane: true,
        conductors: vec![Trace::rect(0.0, h, w, t)],
        ..Default::default()
    }
}

/// D. M. Pozar, *Microwave Engineering*, 4th ed., Example 3.5 (example
/// number from memory; Pozar's numbering searched, not found): copper
/// stripline b = 3.2 mm, εr 2.2, W = 2.66 mm,
/// t = 0.01 mm, 10 GHz: αc = 0.122 Np/m from his closed form (itself
/// derived by Wheeler's rule, and an approximation of it: applied to
/// Wheeler's 1978 impedance the rule gives 0.1198 Np/m, see below). The
/// solved value, 0.117 Np/m, is within 5 % of the book's.
#[test]
fn pozar_stripline_example() {
    let rs = surface_resistance(10e9, 5.813e7).unwrap();
    let a = alpha_c(&stripline(2.66e-3, 3.2e-3, 0.01e-3, 2.2), rs);
    eprintln!("Pozar Example 3.5: solved alpha_c {a:.4} Np/m (book 0.122)");
    assert!(((a - 0.122) / 0.122).abs() < 0.05, "{a}");
}

/// A wide stripline tends to two parallel-plate lines in parallel, where
/// Wheeler's rule is exact: αc = Rs/(η0·h) with h the plate spacing of
/// each half (any electromagnetics text; the fields are uniform between
/// the plates). The solved αc·η0·h/Rs approaches 1 as the fringing edges'
/// share falls like h/W; extrapolated in h/W it is 1 within 1 %.
#[test]
fn parallel_plate_limit() {
    let rs = surface_resistance(5e9, 5.8e7).unwrap();
    let (h, t) = (100e-6, 10e-6);
    let ratio = |w_over_h: f64| {
        let cs = stripline(w_over_h * h, 2.0 * h + t, t, 1.0);
        alpha_c(&cs, rs) * ETA0 * h / rs
    };
    let (r1, r2) = (ratio(20.0), ratio(40.0));
    // linear in h/W: r(x) = 1 + c·x, extrapolated to x = 0
    let r0 = 2.0 * r2 - r1;
    eprintln!("parallel-plate ratio: W/h 20 {r1:.4}, 40 {r2:.4}, limit {r0:.4}");
    assert!(r1 > r2 && r2 > 1.0, "{r1} {r2}");
    assert!((r0 - 1.0).abs() < 0.01, "{r0}");
}

/// The Pozar stripline closed form (Microwave Engineering, 4th ed.,
/// sec. 3.7) over a range of widths: the solved αc within 5 % where its
/// assumptions hold (copper much thinner than the dielectric).
#[test]
fn closed_forms_where_they_hold() {
    let rs = surface_resistance(10e9, 5.8e7).unwrap();
    for (w, b) in [(0.2e-3, 0.5e-3), (0.5e-3, 1.0e-3), (1.0e-3, 1.0e-3)] {
        let t = 5e-6;
        let cs = stripline(w, b, t, 3.0);
        let s = solve(&cs, &SolverOptions::default())
            .unwrap()
            .single
            .unwrap();
        let solved = alpha_c(&cs, rs);
        let closed = conductor_loss_stripline_pozar(rs, 3.0, s.z0, w, b, t).unwrap();
        eprintln!("stripline W {w} b {b}: solved {solved:.4}, Pozar {closed:.4} Np/m");
        assert!(
            ((solved - closed) / closed).abs() < 0.05,
            "{solved} {closed}"
        );
    }
}

/// Hammerstad-Jensen's microstrip conductor loss (HJ 1980: Rs/(Z0·W) with
/// the width correction) over-states αc: 13 % on a 0.5 mm substrate with
/// 5 µm copper, 70–100 % on 0.05–0.1 mm with 35 µm copper, where the
/// strip's thickness carries current the form does not see. The solved
/// values agree with Wheeler's rule on HJ's own impedance (below), so it
/// is the closed form's current model, not the rule, that is off.
#[test]
fn hammerstad_jensen_loss_is_high() {
    let rs = surface_resistance(28e9, 5.8e7).unwrap();
    for (w, h, t) in [
        (1.0e-3, 0.5e-3, 5e-6),
        (0.1e-3, 0.05e-3, 35e-6),
        (0.2e-3, 0.1e-3, 35e-6),
    ] {
        let cs = microstrip(w, h, t, 3.0);
        let s = solve(&cs, &SolverOptions::default())
            .unwrap()
            .single
            .unwrap();
        let solved = alpha_c(&cs, rs);
        let closed = conductor_loss_microstrip_hj(rs, s.z0, w, 1.0).unwrap();
        eprintln!(
            "thick copper W {w} h {h} t {t}: solved {solved:.3}, HJ {closed:.3} Np/m ({:+.0} %)",
            100.0 * (closed / solved - 1.0)
        );
        assert!(solved > 0.0 && solved < closed, "{solved} {closed}");
    }
}

/// A coupled pair's odd mode attenuates more than its even mode (its
/// currents crowd to the facing edges and its impedance is lower; coupled
/// microstrip and stripline loss curves in Gupta, Garg, Bahl & Bhartia,
/// *Microstrip Lines and Slotlines*, 2nd ed., ch. 8, from memory; searched:
/// the book's contents, found only catalogue entries), and the
/// groups of faces add up to the total.
#[test]
fn pair_modes_and_face_groups() {
    let rs = surface_resistance(10e9, 5.8e7).unwrap();
    let (h, t, w, s) = (100e-6, 18e-6, 100e-6, 100e-6);
    let pair = CrossSection {
        layers: vec![layer(h, 3.5), layer(t, 3.5), layer(h, 3.5)],
        bottom_plane: true,
        top_plane: true,
        conductors: vec![
            Trace::rect(-0.5 * (w + s), h, w, t),
            Trace::rect(0.5 * (w + s), h, w, t),
        ],
        ..Default::default()
    };
    let opt = SolverOptions::default();
    let d = inductance_derivatives(&pair, &opt).unwrap();
    assert_eq!(d.len(), 5);
    assert!(d.iter().all(|g| g.dl_dn[0] > 0.0), "{d:?}");
    let r = modal_resistance(&resistance_matrix(&d, |_| rs));
    let sol = solve(&pair, &opt).unwrap().pair.unwrap();
    let (even, odd) = (r[0] / (2.0 * sol.z_even), r[1] / (2.0 * sol.z_odd));
    eprintln!("pair alpha_c even {even:.4}, odd {odd:.4} Np/m");
    assert!(odd > even, "odd {odd} even {even}");
    // Far apart, both modes tend to the single line.
    let wide = CrossSection {
        conductors: vec![
            Trace::rect(-0.5 * (w + 12.0 * h), h, w, t),
            Trace::rect(0.5 * (w + 12.0 * h), h, w, t),
        ],
        ..pair.clone()
    };
    let dw = inductance_derivatives(&wide, &opt).unwrap();
    let rw = modal_resistance(&resistance_matrix(&dw, |_| rs));
    let sw = solve(&wide, &opt).unwrap().pair.unwrap();
    let single = alpha_c(&stripline(w, 2.0 * h + t, t, 3.5), rs);
    for a in [rw[0] / (2.0 * sw.z_even), rw[1] / (2.0 * sw.z_odd)] {
        assert!(
            ((a - single) / single).abs() < 0.01,
            "{a} vs single {single}"
        );
    }
    assert!(odd > 1.05 * single, "tight pair {odd}, single {single}");
    let total: f64 = d.iter().map(|g| g.dl_dn[0]).sum();
    let one = resistance_matrix(&d, |_| 1.0)[0] * stackup_physics::consts::MU0;
    assert!(((one - total) / total).abs() < 1e-12);
}

/// Wheeler's rule applied to a closed-form impedance instead of the
/// solver: L = Z0_air/c0 from Hammerstad-Jensen microstrip (HJ 1980,
/// 0.2 % on Z0) or Wheeler's 1978 stripline (0.5 %), every face receded by
/// d (strip W − 2d, t − 2d; the gap to each plane + 2d). An independent
/// route to the same physics: the solved αc agrees within 4 %.
#[test]
fn wheeler_rule_on_the_closed_forms() {
    use stackup_physics::consts::{C0, MU0};
    use stackup_physics::microstrip::hammerstad_jensen;
    use stackup_physics::stripline::wheeler_stripline;
    let rs = surface_resistance(10e9, 5.8e7).unwrap();
    let dl = |l: &dyn Fn(f64) -> f64, d: f64| (l(d) - l(-d)) / (2.0 * d);
    for (w, h, t) in [
        (1.0e-3, 0.5e-3, 5e-6),
        (0.2e-3, 0.1e-3, 18e-6),
        (0.12e-3, 0.1e-3, 35e-6),
    ] {
        let l = |d: f64| {
            hammerstad_jensen(w - 2.0 * d, h + 2.0 * d, t - 2.0 * d, 1.0)
                .unwrap()
                .z0
                / C0
        };
        let z = hammerstad_jensen(w, h, t, 3.0).unwrap().z0;
        let closed = rs / (2.0 * z * MU0) * dl(&l, 1e-3 * t);
        let cs = microstrip(w, h, t, 3.0);
        let solved = alpha_c(&cs, rs);
        eprintln!(
            "microstrip W {w} h {h} t {t}: solved {solved:.4}, Wheeler on HJ {closed:.4} Np/m"
        );
        assert!(
            ((solved - closed) / closed).abs() < 0.04,
            "{solved} {closed}"
        );
    }
    for (w, b, t) in [(2.66e-3, 3.2e-3, 0.01e-3), (0.15e-3, 0.3e-3, 18e-6)] {
        let l = |d: f64| {
            wheeler_stripline(w - 2.0 * d, b + 2.0 * d, t - 2.0 * d, 1.0)
                .unwrap()
                .z0
                / C0
        };
        let z = wheeler_stripline(w, b, t, 2.2).unwrap().z0;
        let closed = rs / (2.0 * z * MU0) * dl(&l, 1e-3 * t);
        let solved = alpha_c(&stripline(w, b, t, 2.2), rs);
        eprintln!("stripline W {w} b {b} t {t}: solved {solved:.4}, Wheeler on Wheeler 1978 {closed:.4} Np/m");
        assert!(
            ((solved - closed) / closed).abs() < 0.04,
            "{solved} {closed}"
        );
    }
}

/// scikit-rf's `MLine` conductor loss (its Hammerstad-Jensen closed form,
/// smooth copper, tests/reference/conductor_loss_reference.tsv) against the
/// solved value on the same sections at 10 GHz: the closed form lies above
/// by 13 % on a 0.5 mm substrate with 5 µm copper, 44 % on 0.2 mm with
/// 18 µm, 71 % on 0.1 mm and 100 % on 0.05 mm with 35 µm. Documented as numbers (the
/// printed table) and bounded so that a change in either shows.
#[test]
fn scikit_rf_closed_form_disagreement() {
    let (header, rows) = crate::reference::table(
        "conductor_loss_reference.tsv",
        "kind\tw\th\tt\teps_r\tf\trho\talpha_c",
        7,
    );
    assert!(
        header.starts_with("# reference library: scikit-rf "),
        "{header}"
    );
    let expected = [(0.10, 0.16), (0.30, 0.60), (0.55, 0.90), (0.85, 1.30)];
    assert_eq!(rows.len(), expected.len());
    for (r, (lo, hi)) in rows.iter().zip(expected) {
        let [w, h, t, er, f, rho, skrf_alpha] = r.v[..] else {
            unreachable!()
        };
        let rs = surface_resistance(f, 1.0 / rho).unwrap();
        let cs = microstrip(w, h, t, er);
        let solved = alpha_c(&cs, rs);
        let over = skrf_alpha / solved - 1.0;
        eprintln!(
            "W {w} h {h} t {t}: solved {solved:.4}, scikit-rf {skrf_alpha:.4} Np/m ({:+.0} %)",
            100.0 * over
        );
        assert!((lo..hi).contains(&over), "{over}");
    }
}

/// Pucel, Massé & Hartwig 1968 (Wheeler's rule on Wheeler's microstrip
/// formulas; the equations from memory; the paper's record checked, its
/// equations not found, see
/// `conductor_loss_microstrip_pucel`) against the solved value, with the
/// solved Z0 in both so that only the rule's derivative is compared: thin
/// copper on a 0.5 mm substrate (5 µm, where the closed form's thin-strip
/// approximations hold) across its three ranges of W/h. Measured: the
/// closed form lies 1.4, 5.2, 5.3, 12.4, 5.2, 1.4 and 0.0 % below the
/// solved value at W/h 0.1, 0.5, 1, 1.9, 2.1, 4 and 8; the 12 % is the
/// narrow-strip formula near its upper end W/h = 2, where it steps by
/// 5 % to the wide-strip one. Held within 6 % (13 % at 1.9).
#[test]
fn pucel_masse_hartwig_microstrip() {
    let (h, t, er) = (0.5e-3, 5e-6, 3.0);
    let rs = surface_resistance(10e9, 5.8e7).unwrap();
    for (u, tol) in [
        (0.1, 0.06),
        (0.5, 0.06),
        (1.0, 0.06),
        (1.9, 0.13),
        (2.1, 0.06),
        (4.0, 0.06),
        (8.0, 0.06),
    ] {
        let w = u * h;
        let cs = microstrip(w, h, t, er);
        let solved = alpha_c(&cs, rs);
        let z0 = solve(&cs, &SolverOptions::default())
            .unwrap()
            .single
            .unwrap()
            .z0;
        let pmh = conductor_loss_microstrip_pucel(rs, z0, w, h, t).unwrap();
        let d = pmh / solved - 1.0;
        eprintln!(
            "W/h {u}: solved {solved:.4}, Pucel {pmh:.4} Np/m ({:+.1} %)",
            100.0 * d
        );
        assert!(d.abs() < tol, "W/h {u}: {d}");
    }
}
