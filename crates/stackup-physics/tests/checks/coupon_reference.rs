//! Test-coupon extraction against a general-purpose reference library:
//! scikit-rf (PyPI), tables written by
//! tests/reference/gen_coupon_reference.py (library and version in each
//! table's first line).
//!
//! - two lines: a lossy line of known εeff(f) and α(f) between identical
//!   non-ideal launches, 20 and 45 mm long; the launches must cancel;
//! - a coupled pair (four-ports built from even- and odd-mode two-ports,
//!   each with its own launch), 15 and 35 mm, with scikit-rf's own
//!   mixed-mode conversion of each;
//! - a gap-coupled resonator (0.03 pF gaps, 60 mm of a Dk 3.45 line of
//!   known Q) on a logarithmic sweep; a version with mode 4 split by a trap
//!   at the centre and one with mode 4 drowned below port-to-port leakage;
//!   scikit-rf's peak frequencies, −3 dB bandwidths and |S21| per mode, and
//!   the line's own Q = β/2α.

use num_complex::Complex64;
use stackup_physics::consts::C0;
use stackup_physics::coupon::{
    end_capacitance_extension, loss_tangent_from_q, microstrip_open_end_extension, mixed_mode,
    pair_modes_two_line, resonator_analysis, resonator_eps_eff, stripline_open_end_extension,
    two_line_propagation, unloaded_q, PairPortOrder, PeakFlag, ResonatorOptions, SMatrix2,
    SMatrix4, TwoLineFlag, TwoLineOptions, TwoLinePoint, DEFAULT_MIN_SIN_BETA_DL,
};
use stackup_physics::microstrip::hammerstad_jensen;
use stackup_physics::stripline::cohn_stripline;
use std::f64::consts::PI;

use crate::reference::{self, Row};

const DL_TWO_LINE: f64 = 0.045 - 0.020;
const DL_PAIR: f64 = 0.035 - 0.015;

fn c(v: &[f64], k: usize) -> Complex64 {
    Complex64::new(v[2 * k], v[2 * k + 1])
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn check_header(h: &str) {
    assert!(h.starts_with("# reference library: scikit-rf "), "{h}");
}

// ------------------------------------------------------------- two lines

struct TwoLineRow {
    f: f64,
    eps: f64,
    alpha: f64,
    short: SMatrix2,
    long: SMatrix2,
}

/// Columns S11 S21 S12 S22 (re, im) into [[S11, S12], [S21, S22]].
fn two_port(v: &[f64]) -> SMatrix2 {
    [[c(v, 0), c(v, 2)], [c(v, 1), c(v, 3)]]
}

fn two_line_table() -> Vec<TwoLineRow> {
    let (h, rows) = reference::table(
        "coupon_two_line_reference.tsv",
        "kind\tf\teps_eff\talpha\t",
        19,
    );
    check_header(&h);
    rows.iter()
        .map(|r: &Row| TwoLineRow {
            f: r.v[0],
            eps: r.v[1],
            alpha: r.v[2],
            short: two_port(&r.v[3..11]),
            long: two_port(&r.v[11..19]),
        })
        .collect()
}

fn true_beta_dl(f: f64, eps: f64, dl: f64) -> f64 {
    2.0 * PI * f * eps.sqrt() / C0 * dl
}

fn run_two_line(rows: &[TwoLineRow], opts: &TwoLineOptions) -> Vec<TwoLinePoint> {
    let f: Vec<f64> = rows.iter().map(|r| r.f).collect();
    let s: Vec<SMatrix2> = rows.iter().map(|r| r.short).collect();
    let l: Vec<SMatrix2> = rows.iter().map(|r| r.long).collect();
    two_line_propagation(&f, &s, &l, DL_TWO_LINE, opts).unwrap()
}

/// Checks the points against the truth: reliable points within 1e-3 in
/// εeff and 2 % in α; every point whose true |sin βΔL| is clearly below the
/// threshold flagged, every point clearly above it reliable. Returns the
/// number of reliable points and the worst errors (εeff, α).
fn check_against_truth(
    pts: &[TwoLinePoint],
    truth: &[(f64, f64, f64)],
    dl: f64,
    what: &str,
) -> (usize, f64, f64) {
    let thr = DEFAULT_MIN_SIN_BETA_DL;
    let (mut n, mut we, mut wa) = (0, 0.0f64, 0.0f64);
    for (p, &(f, eps, alpha)) in pts.iter().zip(truth) {
        let s = true_beta_dl(f, eps, dl).sin().abs();
        if s < 0.95 * thr {
            assert!(
                p.flags.contains(&TwoLineFlag::IllConditioned),
                "{what} {f}: |sin bdl| {s} not flagged"
            );
        }
        if s > 1.05 * thr {
            assert!(p.is_reliable(), "{what} {f}: {:?}", p.flags);
        }
        if p.is_reliable() {
            let g = p.propagation.unwrap();
            let (de, da) = (rel(g.eps_eff, eps), rel(g.alpha_np_per_m, alpha));
            assert!(de < 1e-3, "{what} {f}: eps {} vs {eps}", g.eps_eff);
            assert!(
                da < 0.02,
                "{what} {f}: alpha {} vs {alpha}",
                g.alpha_np_per_m
            );
            assert!((g.alpha_db_per_m / g.alpha_np_per_m - 8.685_889_638).abs() < 1e-6);
            we = we.max(de);
            wa = wa.max(da);
            n += 1;
        }
    }
    (n, we, wa)
}

/// Source: scikit-rf DefinedGammaZ0 lines, 20 and 45 mm, with identical
/// launches (series L, shunt C, a 60 ohm section) and a 46 ohm line between
/// 50 ohm ports. Away from ΔL = mλ/2 the launches cancel: εeff within 1e-3
/// and α within 2 % of the line's own (the task's bounds; the measured
/// worst is printed).
#[test]
fn two_line_recovers_eps_eff_and_alpha() {
    let rows = two_line_table();
    assert_eq!(rows.len(), 160);
    let pts = run_two_line(&rows, &TwoLineOptions::default());
    let truth: Vec<_> = rows.iter().map(|r| (r.f, r.eps, r.alpha)).collect();
    let (n, we, wa) = check_against_truth(&pts, &truth, DL_TWO_LINE, "two-line");
    assert!(n > 100, "only {n} reliable points of {}", rows.len());
    eprintln!(
        "two-line: {n} of {} points reliable; worst eps_eff {we:.2e}, worst alpha {wa:.2e} (relative)",
        rows.len()
    );
}

/// Janezic & Jargon's conditioning: the sample nearest to each frequency
/// where ΔL is a whole number of half-wavelengths is flagged, never
/// reported as reliable.
#[test]
fn two_line_flags_the_half_wave_points() {
    let rows = two_line_table();
    let pts = run_two_line(&rows, &TwoLineOptions::default());
    let bdl: Vec<f64> = rows
        .iter()
        .map(|r| true_beta_dl(r.f, r.eps, DL_TWO_LINE))
        .collect();
    let mut m = 1;
    let mut checked = 0;
    while (m as f64) * PI < bdl[bdl.len() - 1] {
        let target = m as f64 * PI;
        let (k, _) = bdl
            .iter()
            .enumerate()
            .min_by(|a, b| (a.1 - target).abs().total_cmp(&(b.1 - target).abs()))
            .unwrap();
        assert!(
            pts[k].flags.contains(&TwoLineFlag::IllConditioned) && !pts[k].is_reliable(),
            "half wave {m} at {} Hz: {:?}",
            rows[k].f,
            pts[k]
        );
        checked += 1;
        m += 1;
    }
    assert!(checked >= 12, "{checked}");
}

/// The first point's phase branch. Data starting at 5 GHz, above the first
/// half-wave frequency of ΔL (3.2 GHz): without a guess the method assumes
/// 0 < βΔL < π there and lands on a wrong branch; it must say so (β(f) no
/// longer runs through the origin), not report wrong values as reliable.
/// With a rough guess (εeff 3.0 against 3.56) every reliable point is
/// within 1e-3 again.
#[test]
fn two_line_first_branch_from_a_guess() {
    let rows: Vec<TwoLineRow> = two_line_table()
        .into_iter()
        .filter(|r| r.f >= 5e9)
        .collect();
    let truth: Vec<_> = rows.iter().map(|r| (r.f, r.eps, r.alpha)).collect();
    let blind = run_two_line(&rows, &TwoLineOptions::default());
    assert!(blind.iter().all(|p| !p.is_reliable()));
    assert!(blind
        .iter()
        .all(|p| p.flags.contains(&TwoLineFlag::BranchDoubtful)));
    let first = blind[0].propagation.unwrap();
    eprintln!(
        "two-line from 5 GHz without a guess: first point eps_eff {:.3} (true {:.3}), every point flagged",
        first.eps_eff, truth[0].1
    );
    let guided = run_two_line(
        &rows,
        &TwoLineOptions {
            eps_eff_guess: Some(3.0),
            ..TwoLineOptions::default()
        },
    );
    let (n, we, wa) = check_against_truth(&guided, &truth, DL_TWO_LINE, "guided");
    assert!(n > 80, "{n}");
    eprintln!(
        "two-line from 5 GHz with guess 3.0: {n} reliable, worst eps {we:.2e}, alpha {wa:.2e}"
    );
}

/// Deterministic pseudo-random numbers in [−1, 1] (xorshift64).
struct Noise(u64);
impl Noise {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 52) as f64 - 1.0
    }
    fn add(&mut self, s: &SMatrix2, sigma: f64) -> SMatrix2 {
        let mut o = *s;
        for z in o.iter_mut().flatten() {
            *z += Complex64::new(sigma * self.next(), sigma * self.next());
        }
        o
    }
}

/// Random error near the half-wave points. With 1e-3 of trace noise on
/// every S parameter (about −60 dB, uniform in a square, added here to
/// scikit-rf's data), the error |δ(γΔL)| at the flagged points is no larger
/// than at the reliable ones: using both eigenvalues, the estimate does not
/// amplify random errors where they meet (a trace-based cosh γΔL = tr M/2
/// would divide them by |sinh γΔL|). The flag stands for the eigenvalue
/// order and the branch, decided by α alone there. The reciprocity residual
/// |ln det M|/2 estimates the error: the RMS error of γΔL over the band is
/// 0.7 to 1.6 times its RMS (1.0 for well-matched launches; these launches
/// reflect strongly above 20 GHz, where a simulation with many noise draws
/// gives 1.4).
#[test]
fn two_line_noise_is_not_amplified_by_the_eigenvalue_pair() {
    let mut rows = two_line_table();
    let mut noise = Noise(0x2545_f491_4f6c_dd1d);
    let sigma = 1e-3;
    for r in rows.iter_mut() {
        r.short = noise.add(&r.short, sigma);
        r.long = noise.add(&r.long, sigma);
    }
    let pts = run_two_line(&rows, &TwoLineOptions::default());
    let (mut worst_reliable, mut worst_flagged, mut worst_eps) = (0.0f64, 0.0f64, 0.0f64);
    let (mut sum_err2, mut sum_res2) = (0.0, 0.0);
    for (p, r) in pts.iter().zip(&rows) {
        let g = p.propagation.unwrap();
        let err =
            (g.gamma - Complex64::new(r.alpha, true_beta_dl(r.f, r.eps, 1.0))).norm() * DL_TWO_LINE;
        if p.is_reliable() {
            worst_reliable = worst_reliable.max(err);
            worst_eps = worst_eps.max(rel(g.eps_eff, r.eps));
        } else {
            worst_flagged = worst_flagged.max(err);
        }
        sum_err2 += err * err;
        sum_res2 += g.reciprocity_residual.powi(2);
    }
    let ratio = (sum_err2 / sum_res2).sqrt();
    eprintln!(
        "two-line with 1e-3 noise: worst |d(gamma dL)| reliable {worst_reliable:.2e}, flagged \
         {worst_flagged:.2e}; RMS error / RMS reciprocity residual {ratio:.2}; worst eps_eff \
         error at reliable points {worst_eps:.2e}"
    );
    assert!(worst_flagged < 2.0 * worst_reliable);
    assert!((0.7..1.6).contains(&ratio), "{ratio}");
    // Noise-free data: the residual is at the table's rounding.
    let clean = run_two_line(&two_line_table(), &TwoLineOptions::default());
    assert!(clean
        .iter()
        .all(|p| p.propagation.unwrap().reciprocity_residual < 1e-7));
}

// ------------------------------------------------------------- coupled pair

struct PairRow {
    f: f64,
    odd: (f64, f64),
    even: (f64, f64),
    short: SMatrix4,
    long: SMatrix4,
    /// scikit-rf's Sdd, Scc of the short then the long pair.
    skrf: [(SMatrix2, SMatrix2); 2],
}

fn four_port(v: &[f64]) -> SMatrix4 {
    let mut s = [[Complex64::new(0.0, 0.0); 4]; 4];
    for (k, z) in s.iter_mut().flatten().enumerate() {
        *z = c(v, k);
    }
    s
}

fn two_by_two(v: &[f64]) -> SMatrix2 {
    [[c(v, 0), c(v, 1)], [c(v, 2), c(v, 3)]]
}

fn pair_table() -> Vec<PairRow> {
    let (h, rows) = reference::table(
        "coupon_pair_reference.tsv",
        "kind\tf\teps_odd\talpha_odd\teps_even\talpha_even\t",
        101,
    );
    check_header(&h);
    rows.iter()
        .map(|r| {
            let v = &r.v;
            PairRow {
                f: v[0],
                odd: (v[1], v[2]),
                even: (v[3], v[4]),
                short: four_port(&v[5..37]),
                long: four_port(&v[37..69]),
                skrf: [
                    (two_by_two(&v[69..77]), two_by_two(&v[77..85])),
                    (two_by_two(&v[85..93]), two_by_two(&v[93..101])),
                ],
            }
        })
        .collect()
}

/// Renumbers a four-port from (A near, A far, B near, B far) to
/// (A near, B near, A far, B far).
fn to_a13b24(s: &SMatrix4) -> SMatrix4 {
    let order = [0, 2, 1, 3];
    let mut o = *s;
    for i in 0..4 {
        for j in 0..4 {
            o[i][j] = s[order[i]][order[j]];
        }
    }
    o
}

fn max_diff(a: &SMatrix2, b: &SMatrix2) -> f64 {
    a.iter()
        .flatten()
        .zip(b.iter().flatten())
        .map(|(x, y)| (x - y).norm())
        .fold(0.0, f64::max)
}

/// Source: scikit-rf Network.se2gmm (generalised mixed-mode parameters,
/// 50 ohm single-ended ports) on the same four-ports. Both port orders give
/// its Sdd and Scc to the table's nine digits.
#[test]
fn mixed_mode_matches_scikit_rf() {
    let rows = pair_table();
    assert_eq!(rows.len(), 40);
    let mut worst = 0.0f64;
    for r in &rows {
        for (k, s) in [r.short, r.long].iter().enumerate() {
            let (sdd, scc) = r.skrf[k];
            let a = mixed_mode(s, PairPortOrder::LineA12B34).unwrap();
            let b = mixed_mode(&to_a13b24(s), PairPortOrder::LineA13B24).unwrap();
            for m in [a, b] {
                worst = worst
                    .max(max_diff(&m.sdd, &sdd))
                    .max(max_diff(&m.scc, &scc));
                // A symmetric pair converts no mode into the other.
                assert!(max_diff(&m.sdc, &[[Complex64::new(0.0, 0.0); 2]; 2]) < 1e-8);
                assert!(max_diff(&m.scd, &[[Complex64::new(0.0, 0.0); 2]; 2]) < 1e-8);
            }
        }
    }
    eprintln!("mixed mode vs scikit-rf se2gmm: worst entry difference {worst:.1e}");
    assert!(worst < 1e-8, "{worst}");
}

/// The pair's odd and even modes from Sdd and Scc of a 15 and a 35 mm pair
/// (scikit-rf), each mode with its own launch: εeff within 1e-3 and α
/// within 2 % at reliable points, half-wave points flagged, for either
/// port order.
#[test]
fn pair_odd_and_even_modes_recovered() {
    let rows = pair_table();
    let f: Vec<f64> = rows.iter().map(|r| r.f).collect();
    for order in [PairPortOrder::LineA12B34, PairPortOrder::LineA13B24] {
        let conv = |s: &SMatrix4| match order {
            PairPortOrder::LineA12B34 => *s,
            PairPortOrder::LineA13B24 => to_a13b24(s),
        };
        let s: Vec<SMatrix4> = rows.iter().map(|r| conv(&r.short)).collect();
        let l: Vec<SMatrix4> = rows.iter().map(|r| conv(&r.long)).collect();
        let modes =
            pair_modes_two_line(&f, &s, &l, order, DL_PAIR, &TwoLineOptions::default()).unwrap();
        let odd: Vec<_> = rows.iter().map(|r| (r.f, r.odd.0, r.odd.1)).collect();
        let even: Vec<_> = rows.iter().map(|r| (r.f, r.even.0, r.even.1)).collect();
        let (no, eo, ao) = check_against_truth(&modes.odd, &odd, DL_PAIR, "odd");
        let (ne, ee, ae) = check_against_truth(&modes.even, &even, DL_PAIR, "even");
        assert!(no > 20 && ne > 20, "{no} {ne}");
        eprintln!(
            "pair {order:?}: odd {no}/40 reliable, worst eps {eo:.2e}, alpha {ao:.2e}; \
             even {ne}/40, worst eps {ee:.2e}, alpha {ae:.2e}"
        );
    }
}

// ------------------------------------------------------------- resonator

struct Sweep {
    f: Vec<f64>,
    clean: Vec<Complex64>,
    split: Vec<Complex64>,
    missing: Vec<Complex64>,
}

fn sweep() -> Sweep {
    let (h, rows) = reference::table(
        "coupon_resonator_sweep.tsv",
        "kind\tf\tclean S21 re im\t",
        7,
    );
    check_header(&h);
    Sweep {
        f: rows.iter().map(|r| r.v[0]).collect(),
        clean: rows.iter().map(|r| c(&r.v[1..3], 0)).collect(),
        split: rows.iter().map(|r| c(&r.v[3..5], 0)).collect(),
        missing: rows.iter().map(|r| c(&r.v[5..7], 0)).collect(),
    }
}

struct Peak {
    n: u32,
    f: f64,
    q_loaded: f64,
    s21: f64,
    q_unloaded: f64,
    q_conductor: f64,
    dk: f64,
    tan_d: f64,
    length: f64,
    c_gap: f64,
    z_line: f64,
}

fn peaks() -> Vec<Peak> {
    let (h, rows) = reference::table(
        "coupon_resonator_peaks.tsv",
        "kind\tn\tf_n\tq_loaded\ts21_peak\tq_unloaded\tq_conductor\tdk\ttan_d\tlength\tc_gap\tz_line",
        11,
    );
    check_header(&h);
    rows.iter()
        .map(|r| {
            let v = &r.v;
            Peak {
                n: v[0] as u32,
                f: v[1],
                q_loaded: v[2],
                s21: v[3],
                q_unloaded: v[4],
                q_conductor: v[5],
                dk: v[6],
                tan_d: v[7],
                length: v[8],
                c_gap: v[9],
                z_line: v[10],
            }
        })
        .collect()
}

/// Total end extension of the gap-coupled resonator: each gap C into a
/// 50 ohm port loads its end with the susceptance ωC/(1 + (ωC·50)²) (series
/// C and R), i.e. a capacitance C/(1 + (ωC·50)²) to ground.
fn gap_extension(p: &Peak, f: f64) -> f64 {
    let wcr = 2.0 * PI * f * p.c_gap * 50.0;
    let c_eff = p.c_gap / (1.0 + wcr * wcr);
    2.0 * end_capacitance_extension(c_eff, p.z_line, p.dk, f).unwrap()
}

/// Source: scikit-rf's resonances of the gap-coupled line (peak of |S21|
/// and half-power points found to 1 Hz) and the line's own Q = β/2α.
/// f_n within 0.05 %, Dk within 0.2 % (end extension of the gap
/// capacitances), Q_u within 3 %, Q_L within 2 %, insertion loss within
/// 0.1 dB; tanδ from Q_u and the conductor Q within 10 % (1/Q_u carries
/// both losses, so its error grows by 1 + Q_d/Q_c ≈ 3 in the tangent).
#[test]
fn resonator_matches_scikit_rf() {
    let sw = sweep();
    let truth = peaks();
    assert_eq!(truth.len(), 8);
    let p0 = &truth[0];
    let dl = gap_extension(p0, 5e9);
    let r = resonator_analysis(
        &sw.f,
        &sw.clean,
        p0.length,
        dl,
        &ResonatorOptions::default(),
    )
    .unwrap();
    assert!(r.is_clean(), "{r:?}");
    assert_eq!(r.resonances.len(), truth.len());
    let mut worst = [0.0f64; 6];
    for (res, t) in r.resonances.iter().zip(&truth) {
        assert_eq!(res.mode, t.n);
        let qu = res.q_unloaded.unwrap();
        let tand = loss_tangent_from_q(qu, t.q_conductor).unwrap();
        let dk_own_dl =
            resonator_eps_eff(res.mode, res.freq, t.length, gap_extension(t, res.freq)).unwrap();
        let d = [
            rel(res.freq, t.f),
            rel(res.eps_eff, t.dk).max(rel(dk_own_dl, t.dk)),
            rel(qu, t.q_unloaded),
            rel(res.q_loaded, t.q_loaded),
            (res.insertion_loss_db + 20.0 * t.s21.log10()).abs(),
            rel(tand, t.tan_d),
        ];
        eprintln!(
            "mode {}: f {:.6e} (skrf {:.6e}), Dk {:.5}, Q_L {:.1} ({:.1}), Q_u {:.1} ({:.1}), \
             IL {:.2} dB, tan d {:.5}",
            res.mode,
            res.freq,
            t.f,
            res.eps_eff,
            res.q_loaded,
            t.q_loaded,
            qu,
            t.q_unloaded,
            res.insertion_loss_db,
            tand
        );
        for i in 0..6 {
            worst[i] = worst[i].max(d[i]);
        }
    }
    eprintln!(
        "resonator worst: f_n {:.1e}, Dk {:.1e}, Q_u {:.1e}, Q_L {:.1e}, IL {:.3} dB, tan d {:.1e}",
        worst[0], worst[1], worst[2], worst[3], worst[4], worst[5]
    );
    assert!(worst[0] < 5e-4);
    assert!(worst[1] < 2e-3);
    assert!(worst[2] < 0.03);
    assert!(worst[3] < 0.02);
    assert!(worst[4] < 0.1);
    assert!(worst[5] < 0.10);
    // Without the end extension the gaps read as a Dk about 1.5 % high.
    let bare = resonator_analysis(
        &sw.f,
        &sw.clean,
        p0.length,
        0.0,
        &ResonatorOptions::default(),
    )
    .unwrap();
    assert!(bare.resonances.iter().all(|x| rel(x.eps_eff, p0.dk) > 0.01));
}

/// Source: scikit-rf's peak |S21| and −3 dB bandwidth per mode fed to
/// Q_u = Q_L/(1 − |S21|): within 1 % of the line's β/2α for every mode.
#[test]
fn unloaded_q_from_scikit_rf_peaks() {
    let mut worst = 0.0f64;
    for t in peaks() {
        let qu = unloaded_q(t.q_loaded, t.s21).unwrap();
        worst = worst.max(rel(qu, t.q_unloaded));
        // The model's own split of the loss gives back its tangent.
        let tand = loss_tangent_from_q(t.q_unloaded, t.q_conductor).unwrap();
        assert!(rel(tand, t.tan_d) < 1e-6, "{tand}");
    }
    eprintln!("Q_u = Q_L/(1-|S21|) on scikit-rf's peaks: worst {worst:.2e} from beta/2alpha");
    assert!(worst < 0.01, "{worst}");
}

/// Source: scikit-rf's resonant frequencies of the gap-coupled line. The
/// gaps' end extension (atan(ωC·Z0)/β per end, C the gap's effective
/// capacitance to ground) puts every mode at
/// n·c0/(2√Dk·(L + 2Δl)): Dk from scikit-rf's f_n within 1e-4 of the line's
/// 3.45; without the extension 1.5 % high.
#[test]
fn gap_extension_against_scikit_rf_resonances() {
    let mut worst = 0.0f64;
    for t in peaks() {
        let dk = resonator_eps_eff(t.n, t.f, t.length, gap_extension(&t, t.f)).unwrap();
        let bare = resonator_eps_eff(t.n, t.f, t.length, 0.0).unwrap();
        worst = worst.max(rel(dk, t.dk));
        assert!(rel(bare, t.dk) > 0.014, "{bare}");
    }
    eprintln!("Dk from scikit-rf's f_n with the gap extension: worst {worst:.1e}");
    assert!(worst < 1e-4, "{worst}");
}

/// A sweep that starts above the first mode (2 GHz; f_1 = 1.33 GHz): the
/// modes are still numbered from 2, nothing is reported missing.
#[test]
fn resonator_sweep_starting_above_the_first_mode() {
    let sw = sweep();
    let truth = peaks();
    let k0 = sw.f.iter().position(|&f| f >= 2e9).unwrap();
    let r = resonator_analysis(
        &sw.f[k0..],
        &sw.clean[k0..],
        truth[0].length,
        gap_extension(&truth[0], 5e9),
        &ResonatorOptions::default(),
    )
    .unwrap();
    assert!(r.is_clean(), "{r:?}");
    let modes: Vec<u32> = r.resonances.iter().map(|x| x.mode).collect();
    assert_eq!(modes, (2..=8).collect::<Vec<_>>());
    for x in &r.resonances {
        assert!(rel(x.eps_eff, truth[0].dk) < 2e-3);
    }
}

/// Mode 4 drowned below the port-to-port leakage (scikit-rf: traps on both
/// feeds, 0.01 fF leakage): mode 4 is reported missing, the other modes
/// keep their numbers and their Dk.
#[test]
fn resonator_missing_mode_is_flagged() {
    let sw = sweep();
    let t = &peaks()[0];
    let r = resonator_analysis(
        &sw.f,
        &sw.missing,
        t.length,
        gap_extension(t, 5e9),
        &ResonatorOptions::default(),
    )
    .unwrap();
    assert!(!r.is_clean());
    assert_eq!(r.missing_modes, vec![4]);
    let modes: Vec<u32> = r.resonances.iter().map(|x| x.mode).collect();
    assert_eq!(modes, vec![1, 2, 3, 5, 6, 7, 8]);
    for x in &r.resonances {
        assert!(rel(x.eps_eff, t.dk) < 2e-3, "{x:?}");
    }
}

/// Mode 4 split in two by a trap resonance at the line's centre
/// (scikit-rf): both peaks flagged split and off the harmonic series; the
/// modes around them keep their numbers.
#[test]
fn resonator_split_mode_is_flagged() {
    let sw = sweep();
    let t = &peaks()[0];
    let r = resonator_analysis(
        &sw.f,
        &sw.split,
        t.length,
        gap_extension(t, 5e9),
        &ResonatorOptions::default(),
    )
    .unwrap();
    assert!(!r.is_clean());
    let fours: Vec<_> = r.resonances.iter().filter(|x| x.mode == 4).collect();
    assert_eq!(fours.len(), 2, "{r:?}");
    for x in &fours {
        assert!(x.flags.contains(&PeakFlag::Split) && x.flags.contains(&PeakFlag::OffHarmonic));
    }
    let others: Vec<u32> = r
        .resonances
        .iter()
        .filter(|x| x.mode != 4)
        .map(|x| x.mode)
        .collect();
    assert_eq!(others, vec![1, 2, 3, 5, 6, 7, 8]);
    assert!(r.missing_modes.is_empty());
}

// ------------------------------------------------------------- open ends

/// Oliner's wide-strip open end b·ln2/π against Cohn 1954 (exact, zero
/// thickness): the excess capacitance of a wide strip over the
/// parallel-plate value 4εW/b is its two side edges, each worth a strip
/// widening of b·ln2/π; the open end is the same two-dimensional edge.
#[test]
fn stripline_open_end_matches_cohn_edge_fringing() {
    let b = 1.0e-3;
    let (dl, notes) = stripline_open_end_extension(b, 5.0 * b).unwrap();
    assert!(notes.is_empty());
    for wb in [3.0, 5.0, 10.0] {
        let s = cohn_stripline(wb * b, b, 1.0).unwrap();
        let c_over_eps = 1.0 / (s.z0 * C0 * stackup_physics::consts::EPS0);
        let edge = b * (c_over_eps - 4.0 * wb) / 8.0;
        eprintln!("W/b {wb}: Cohn edge {edge:.6e} m, open end {dl:.6e} m");
        assert!(rel(dl, edge) < 1e-4, "{edge} {dl}");
    }
    assert!(!stripline_open_end_extension(b, 0.5 * b)
        .unwrap()
        .1
        .is_empty());
}

/// Kirschning-Jansen-Koster 1981 against Hammerstad's 1975 open end
/// Δl/h = 0.412(εeff + 0.3)(u + 0.264)/((εeff − 0.258)(u + 0.8)) (E. O.
/// Hammerstad, "Equations for microstrip circuit design", Proc. 5th EuMC,
/// Sept. 1975, pp. 268-272, as listed in M. Steer's *Fundamentals of
/// Microwave and RF Design*, ch. 4 references; the formula from memory,
/// not searched),
/// both with Hammerstad-Jensen's static εeff: two
/// independent fits agree within 5 % for 0.5 ≤ W/h ≤ 2 (they part for wide
/// strips, where Hammerstad's saturates; no tabulated value of either was
/// at hand).
#[test]
fn microstrip_open_end_agrees_with_hammerstad_1975() {
    let h = 0.5e-3;
    let mut worst = 0.0f64;
    for er in [2.2, 3.0, 3.5, 4.4, 6.15, 9.8] {
        for u in [0.5, 0.75, 1.0, 1.5, 2.0] {
            let ee = hammerstad_jensen(u * h, h, 0.0, er).unwrap().eps_eff;
            let (dl, notes) = microstrip_open_end_extension(u * h, h, er, ee).unwrap();
            assert!(notes.is_empty());
            let ham = h * 0.412 * (ee + 0.3) * (u + 0.264) / ((ee - 0.258) * (u + 0.8));
            worst = worst.max(rel(dl, ham));
        }
    }
    eprintln!("KJK 1981 vs Hammerstad 1975 open end, 0.5 <= W/h <= 2: worst {worst:.3}");
    assert!(worst < 0.05, "{worst}");
}
