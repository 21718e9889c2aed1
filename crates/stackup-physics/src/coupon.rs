//! Line properties from measured test-coupon S parameters.
//!
//! - **Two-line (line-pair) method.** Two lines of one cross-section that
//!   differ only in length, with the same launches: each measured two-port
//!   becomes a wave-cascading (T) matrix, M = T_long·T_short⁻¹ is similar to
//!   diag(e^{−γΔL}, e^{+γΔL}), so its eigenvalues give γ whatever the
//!   launches are (R. B. Marks, "A multiline method of network analyzer
//!   calibration", IEEE T-MTT 39(7), 1991, pp. 1205–1215; M. D. Janezic,
//!   J. A. Jargon, "Complex permittivity determination from propagation
//!   constant measurements", IEEE Microwave Guided Wave Lett. 9(2), 1999,
//!   pp. 76–78). A coupled pair's four-ports go through the mixed-mode
//!   conversion of Bockelman and Eisenstadt first: Sdd gives the odd mode,
//!   Scc the even mode.
//! - **Resonator method** (the IPC-TM-650 2.5.5.5 stripline resonator
//!   family: "Stripline Test for Permittivity and Loss Tangent (Dielectric
//!   Constant and Dissipation Factor) at X-Band", revision C, March 1998;
//!   number, title, revision and date checked in a copy of the method and
//!   in a NIST-supported roadmap page): the peaks of |S21| of a
//!   gap-coupled line resonator give the resonant frequencies, loaded and
//!   unloaded Q, mode numbers, the effective permittivity (Dk for a
//!   stripline) and, with a conductor Q from a model, the loss tangent.
//!
//! SI units throughout (Hz, m, Np/m; dB/m where named). Time convention
//! e^{jωt}: a wave travelling towards +z goes as e^{−γz}, γ = α + jβ.
//! Two-port S matrices are laid out [[S11, S12], [S21, S22]] as in
//! [`crate::twoport::line_s_params`]; four-ports [[S11 … S14], …, [S41 … S44]].

use num_complex::Complex64;
use std::f64::consts::{LN_2, PI};

use crate::consts::{C0, NP_TO_DB};
use crate::validity::{require_eps_r, require_positive, InputError, ValidityNote};

/// A two-port S matrix [[S11, S12], [S21, S22]].
pub type SMatrix2 = [[Complex64; 2]; 2];
/// A four-port S matrix, row-major, `s[i][j]` = S_(i+1)(j+1).
pub type SMatrix4 = [[Complex64; 4]; 4];

type M2 = [[Complex64; 2]; 2];

// ------------------------------------------------------------------ two lines

/// Default |sin βΔL| below which a two-line point is flagged ill-conditioned:
/// sin 20° = 0.342, i.e. βΔL (mod 180°) must lie between 20° and 160°.
///
/// This is the rule usually given for the line standard of a TRL
/// calibration, which solves the same eigenvalue problem (common practice,
/// no source). Near βΔL = mπ the two eigenvalues of M meet: what depends on
/// the eigenvectors (the launches' error boxes, the line impedance) becomes
/// ill-conditioned, an estimate from the trace alone (cosh γΔL = tr M/2)
/// divides its error by |sinh γΔL|, and which eigenvalue is e^{−γΔL} can
/// only be told from the sign of α. The estimate here uses both eigenvalues
/// and does not amplify random errors at these points (tests:
/// `two_line_noise_is_not_amplified_by_the_eigenvalue_pair`), so the
/// threshold is conservative for γ; lower it through
/// [`TwoLineOptions::min_sin_beta_dl`] when only γ is wanted.
pub const DEFAULT_MIN_SIN_BETA_DL: f64 = 0.342_020_143_325_668_7;

/// Options of [`two_line_propagation`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoLineOptions {
    /// A rough effective permittivity. When given, it sets the phase branch
    /// until the first reliable point (needed when the sweep starts above
    /// the frequency where ΔL is half a wavelength; it must put βΔL within
    /// π of the truth there). When `None`, the first frequency is assumed
    /// to lie below that half-wave frequency (0 < βΔL < π there).
    pub eps_eff_guess: Option<f64>,
    /// Points with |sin βΔL| below this are flagged
    /// [`TwoLineFlag::IllConditioned`]; default [`DEFAULT_MIN_SIN_BETA_DL`].
    pub min_sin_beta_dl: f64,
}

impl Default for TwoLineOptions {
    fn default() -> Self {
        TwoLineOptions {
            eps_eff_guess: None,
            min_sin_beta_dl: DEFAULT_MIN_SIN_BETA_DL,
        }
    }
}

/// The propagation constant found at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Propagation {
    /// γ = α + jβ, 1/m.
    pub gamma: Complex64,
    /// Attenuation α, Np/m.
    pub alpha_np_per_m: f64,
    /// Attenuation α, dB/m (α·20/ln 10).
    pub alpha_db_per_m: f64,
    /// Phase constant β, rad/m (unwrapped across frequency).
    pub beta_rad_per_m: f64,
    /// Effective permittivity (β·c0/(2πf))².
    pub eps_eff: f64,
    /// sin(βΔL): the conditioning of this point (0 where ΔL is a multiple
    /// of half a wavelength).
    pub sin_beta_dl: f64,
    /// |ln det M|/2, dimensionless: an indicator of random measurement
    /// error in γΔL. Two reciprocal lines give det M = 1 exactly; random
    /// errors in the two eigenvalues' logarithms move their sum (ln det M)
    /// about as much as their difference (2γΔL), so for uncorrelated noise
    /// the RMS error of γΔL over a band is close to the RMS of this residual
    /// (derived here, no source; in the tests' simulation the ratio is 1.0
    /// with well-matched launches and grows to 1.4 where they reflect
    /// strongly). One point's value is a single sample: average over
    /// neighbouring frequencies. Blind to reciprocal errors, such as
    /// launches that differ between the two lines.
    pub reciprocity_residual: f64,
}

/// What is wrong with a two-line point.
#[derive(Debug, Clone, PartialEq)]
pub enum TwoLineFlag {
    /// |sin βΔL| is below the threshold: ΔL is near a multiple of half a
    /// wavelength, where the eigenvalue order rests on the sign of α alone
    /// (see [`DEFAULT_MIN_SIN_BETA_DL`]).
    IllConditioned,
    /// The chosen γ has α < 0 (a gain): noisy or non-passive data.
    NegativeAttenuation,
    /// The phase branch is in doubt: at this point the chosen βΔL lies more
    /// than π/2 from the continuity prediction (sampling too coarse, or a
    /// jump), or — on every point — the reliable points' β(f) does not
    /// extrapolate to within π/ΔL of 0 at f = 0 (wrong first branch: the
    /// sweep starts above the half-wave frequency of ΔL and no guess, or a
    /// wrong guess, was given).
    BranchDoubtful,
    /// No γ could be computed at this point (reason given).
    Failed(String),
}

/// One frequency of a two-line extraction.
#[derive(Debug, Clone, PartialEq)]
pub struct TwoLinePoint {
    /// Frequency, Hz.
    pub freq: f64,
    /// The estimate; `None` when the point failed.
    pub propagation: Option<Propagation>,
    /// Empty for a reliable point.
    pub flags: Vec<TwoLineFlag>,
}

impl TwoLinePoint {
    /// True when the point has an estimate and no flag.
    ///
    /// Source: the flags of [`two_line_propagation`] (Janezic & Jargon 1999
    /// for the conditioning).
    pub fn is_reliable(&self) -> bool {
        self.propagation.is_some() && self.flags.is_empty()
    }
}

fn mul2(a: &M2, b: &M2) -> M2 {
    let mut c = [[Complex64::new(0.0, 0.0); 2]; 2];
    for (i, row) in c.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = a[i][0] * b[0][j] + a[i][1] * b[1][j];
        }
    }
    c
}

fn all_finite2(m: &M2) -> bool {
    m.iter()
        .flatten()
        .all(|z| z.re.is_finite() && z.im.is_finite())
}

fn finite_c(z: Complex64) -> bool {
    z.re.is_finite() && z.im.is_finite()
}

/// Wave-cascading matrix of a two-port, [b1, a1]ᵀ = T·[a2, b2]ᵀ, so that
/// cascades multiply: T = (1/S21)·[[−det S, S11], [−S22, 1]]. A matched
/// line of γℓ has T = diag(e^{−γℓ}, e^{γℓ}).
fn s_to_t(s: &SMatrix2) -> Result<M2, String> {
    if !s.iter().flatten().all(|z| finite_c(*z)) {
        return Err("non-finite S parameter".into());
    }
    let s21 = s[1][0];
    if s21.norm() == 0.0 {
        return Err("S21 is zero: no transmission, no T matrix".into());
    }
    let det = s[0][0] * s[1][1] - s[0][1] * s[1][0];
    let t = [[-det / s21, s[0][0] / s21], [-s[1][1] / s21, 1.0 / s21]];
    if all_finite2(&t) {
        Ok(t)
    } else {
        Err("T matrix overflows (S21 too small)".into())
    }
}

fn inv2(t: &M2) -> Result<M2, String> {
    let det = t[0][0] * t[1][1] - t[0][1] * t[1][0];
    if det.norm() == 0.0 || !finite_c(det) {
        return Err("T matrix of the short line is singular (S12 = 0)".into());
    }
    let inv = [
        [t[1][1] / det, -t[0][1] / det],
        [-t[1][0] / det, t[0][0] / det],
    ];
    if all_finite2(&inv) {
        Ok(inv)
    } else {
        Err("T matrix of the short line is singular".into())
    }
}

/// e^{γΔL} up to the order of the two eigenvalues: s with s² = λb/λa,
/// the root nearer λb (both eigenvalues used, so a det M ≠ 1 from noise
/// splits evenly between them); and det M.
fn eigen_ratio_root(short: &SMatrix2, long: &SMatrix2) -> Result<(Complex64, Complex64), String> {
    let ts = s_to_t(short).map_err(|e| format!("short line: {e}"))?;
    let tl = s_to_t(long).map_err(|e| format!("long line: {e}"))?;
    let m = mul2(&tl, &inv2(&ts)?);
    if !all_finite2(&m) {
        return Err("M = T_long·T_short⁻¹ overflows".into());
    }
    let tr = m[0][0] + m[1][1];
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    let disc = (tr * tr - 4.0 * det).sqrt();
    let (p, q) = (tr + disc, tr - disc);
    let big = if p.norm() >= q.norm() {
        p / 2.0
    } else {
        q / 2.0
    };
    if big.norm() == 0.0 || det.norm() == 0.0 {
        return Err("M is singular".into());
    }
    let small = det / big;
    let mut s = (big / small).sqrt();
    if (s - big).norm() > (-s - big).norm() {
        s = -s;
    }
    if finite_c(s) && s.norm() > 0.0 {
        Ok((s, det))
    } else {
        Err("eigenvalues of M not finite".into())
    }
}

/// Chooses γΔL among ±ln(s) + j2πm nearest to the prediction (αp, βp)·ΔL.
/// Where the phase cannot tell the two eigenvalue orders apart (βΔL near
/// mπ), the α term decides, and αp ≥ 0 makes it pick α ≥ 0.
fn choose_branch(s: Complex64, pred_a: f64, pred_b: f64) -> (f64, f64) {
    let l = s.ln();
    let mut best = (0.0, 0.0, f64::INFINITY);
    for (a, th) in [(l.re, l.im), (-l.re, -l.im)] {
        let m = ((pred_b - th) / (2.0 * PI)).round();
        let b = th + 2.0 * PI * m;
        let cost = (b - pred_b).powi(2) + (a - pred_a).powi(2);
        if cost < best.2 {
            best = (a, b, cost);
        }
    }
    (best.0, best.1)
}

fn check_freqs(freqs: &[f64]) -> Result<(), InputError> {
    if freqs.is_empty() {
        return Err(InputError::new("no frequencies given"));
    }
    for (i, &f) in freqs.iter().enumerate() {
        require_positive("frequency", f)?;
        if i > 0 && f <= freqs[i - 1] {
            return Err(InputError::new(format!(
                "frequencies must increase strictly: {} Hz follows {} Hz",
                f,
                freqs[i - 1]
            )));
        }
    }
    Ok(())
}

/// Propagation constant of a line from two lengths of it (two-line method).
///
/// Sources: R. B. Marks, "A multiline method of network analyzer
/// calibration", IEEE T-MTT 39(7), 1991 (the eigenvalue problem
/// M = T_long·T_short⁻¹ ~ diag(e^{−γΔL}, e^{γΔL}), eigenvalue order chosen
/// by nearness to an estimate of γ); M. D. Janezic, J. A. Jargon, "Complex
/// permittivity determination from propagation constant measurements",
/// IEEE MGWL 9(2), 1999, pp. 76–78, DOI 10.1109/75.755052 (authors, title,
/// journal and issue checked in NIST's publication record; γ from two
/// lines; the doubtful points where ΔL is a multiple of half a wavelength
/// from memory, not in the abstract).
///
/// `freqs` in Hz, strictly increasing; `s_short` and `s_long` the measured
/// two-ports of the short and long line at each frequency, both ports
/// referred to one real impedance (any value: it cancels with the
/// launches); `delta_l` = L_long − L_short in metres (> 0). The two lines
/// must share cross-section and launches.
///
/// At each frequency: e^{±γΔL} from both eigenvalues (s = √(λb/λa), so
/// γΔL is half the difference of their logarithms);
/// γΔL = ±ln s + j2πm with the sign and m nearest a prediction: from the
/// last reliable point (β ∝ f, α ∝ √f), else from
/// `opts.eps_eff_guess`, else βΔL = π/2 (first frequency below the
/// half-wave frequency of ΔL). The frequency step must keep the change of
/// βΔL between points below π.
///
/// Every point is reported: flagged [`TwoLineFlag::IllConditioned`] where
/// |sin βΔL| < `opts.min_sin_beta_dl`, [`TwoLineFlag::NegativeAttenuation`]
/// where α < 0, [`TwoLineFlag::BranchDoubtful`] where the unwrapping is in
/// doubt (a jump of more than π/2 in βΔL from the prediction, or reliable
/// points whose β(f) does not extrapolate to 0 at f = 0, which flags every
/// point), [`TwoLineFlag::Failed`] where S21 or S12 vanishes or a value is
/// not finite.
///
/// Errors: empty or unequal inputs, frequencies not positive, finite and
/// strictly increasing, `delta_l` not > 0, a guess below 1 or a threshold
/// outside [0, 1].
pub fn two_line_propagation(
    freqs: &[f64],
    s_short: &[SMatrix2],
    s_long: &[SMatrix2],
    delta_l: f64,
    opts: &TwoLineOptions,
) -> Result<Vec<TwoLinePoint>, InputError> {
    check_freqs(freqs)?;
    if s_short.len() != freqs.len() || s_long.len() != freqs.len() {
        return Err(InputError::new(format!(
            "{} frequencies but {} short-line and {} long-line S matrices",
            freqs.len(),
            s_short.len(),
            s_long.len()
        )));
    }
    require_positive("line length difference delta_l", delta_l)?;
    if let Some(g) = opts.eps_eff_guess {
        require_eps_r("eps_eff guess", g)?;
    }
    let thr = opts.min_sin_beta_dl;
    if !(thr.is_finite() && (0.0..=1.0).contains(&thr)) {
        return Err(InputError::new(format!(
            "min_sin_beta_dl must lie in [0, 1], got {thr}"
        )));
    }
    // Last reliable point: (f, β, α).
    let mut reference: Option<(f64, f64, f64)> = None;
    let mut out = Vec::with_capacity(freqs.len());
    for ((&f, short), long) in freqs.iter().zip(s_short).zip(s_long) {
        let (s, det) = match eigen_ratio_root(short, long) {
            Ok(x) => x,
            Err(e) => {
                out.push(TwoLinePoint {
                    freq: f,
                    propagation: None,
                    flags: vec![TwoLineFlag::Failed(e)],
                });
                continue;
            }
        };
        let continuing = reference.is_some();
        let (pred_b, pred_a) = match (reference, opts.eps_eff_guess) {
            (Some((fr, br, ar)), _) => (br * f / fr, ar.max(0.0) * (f / fr).sqrt()),
            (None, Some(g)) => (2.0 * PI * f * g.sqrt() / C0, 0.0),
            (None, None) => (PI / (2.0 * delta_l), 0.0),
        };
        let (a, b) = choose_branch(s, pred_a * delta_l, pred_b * delta_l);
        let gdl = Complex64::new(a, b);
        let gamma = gdl / delta_l;
        let beta = gamma.im;
        let k0 = 2.0 * PI * f / C0;
        let sin_bdl = b.sin();
        let p = Propagation {
            gamma,
            alpha_np_per_m: gamma.re,
            alpha_db_per_m: gamma.re * NP_TO_DB,
            beta_rad_per_m: beta,
            eps_eff: (beta / k0).powi(2),
            sin_beta_dl: sin_bdl,
            reciprocity_residual: det.ln().norm() / 2.0,
        };
        let mut flags = Vec::new();
        if sin_bdl.abs() < thr {
            flags.push(TwoLineFlag::IllConditioned);
        }
        if a < 0.0 {
            flags.push(TwoLineFlag::NegativeAttenuation);
        }
        if continuing && (b - pred_b * delta_l).abs() > PI / 2.0 {
            flags.push(TwoLineFlag::BranchDoubtful);
        }
        if !(p.eps_eff.is_finite() && p.reciprocity_residual.is_finite()) {
            flags.push(TwoLineFlag::Failed("result not finite".into()));
        }
        if flags.is_empty() && beta > 0.0 {
            reference = Some((f, beta, gamma.re));
        }
        out.push(TwoLinePoint {
            freq: f,
            propagation: Some(p),
            flags,
        });
    }
    check_zero_intercept(&mut out, delta_l);
    Ok(out)
}

/// Flags every point [`TwoLineFlag::BranchDoubtful`] when the reliable
/// points' β(f) does not run through the origin: a straight line fitted to
/// the reliable points up to twice the lowest reliable frequency (at least
/// two points) must meet f = 0 within π/ΔL of β = 0 and rise with f. A
/// wrong first branch offsets β by a multiple of 2π/ΔL; dispersion moves
/// the intercept by a small fraction of βΔL at those frequencies.
fn check_zero_intercept(points: &mut [TwoLinePoint], delta_l: f64) {
    let reliable: Vec<(f64, f64)> = points
        .iter()
        .filter(|p| p.is_reliable())
        .filter_map(|p| p.propagation.map(|g| (p.freq, g.beta_rad_per_m)))
        .collect();
    if reliable.len() < 2 {
        return;
    }
    let f_lo = reliable[0].0;
    let mut set: Vec<(f64, f64)> = reliable
        .iter()
        .copied()
        .filter(|&(f, _)| f <= 2.0 * f_lo)
        .collect();
    if set.len() < 2 {
        set = reliable[..2].to_vec();
    }
    let n = set.len() as f64;
    let fm = set.iter().map(|x| x.0).sum::<f64>() / n;
    let bm = set.iter().map(|x| x.1).sum::<f64>() / n;
    let sff: f64 = set.iter().map(|x| (x.0 - fm).powi(2)).sum();
    let sfb: f64 = set.iter().map(|x| (x.0 - fm) * (x.1 - bm)).sum();
    let slope = sfb / sff;
    let intercept = bm - slope * fm;
    let ok = slope > 0.0 && (intercept * delta_l).abs() <= PI;
    if !ok {
        for p in points.iter_mut().filter(|p| p.propagation.is_some()) {
            if !p.flags.contains(&TwoLineFlag::BranchDoubtful) {
                p.flags.push(TwoLineFlag::BranchDoubtful);
            }
        }
    }
}

// ------------------------------------------------------------------ mixed mode

/// Port numbering of a coupled pair's four-port. Line A is the positive leg
/// of the differential mode (d = (A − B)/√2, c = (A + B)/√2).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PairPortOrder {
    /// Line A runs from port 1 to port 2, line B from port 3 to port 4:
    /// ports 1 and 3 at the near end, 2 and 4 at the far end.
    LineA12B34,
    /// Line A runs from port 1 to port 3, line B from port 2 to port 4:
    /// ports 1 and 2 at the near end, 3 and 4 at the far end.
    LineA13B24,
}

impl PairPortOrder {
    /// Zero-based port index of (leg, end): leg 0 = A, 1 = B; end 0 = near, 1 = far.
    fn port(self, leg: usize, end: usize) -> usize {
        match self {
            PairPortOrder::LineA12B34 => 2 * leg + end,
            PairPortOrder::LineA13B24 => leg + 2 * end,
        }
    }
}

/// Mixed-mode two-ports of a pair; index 0 = near end, 1 = far end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MixedModeS {
    /// Differential to differential (the odd mode), reference 2·Z_ref.
    pub sdd: SMatrix2,
    /// Common to common (the even mode), reference Z_ref/2.
    pub scc: SMatrix2,
    /// Differential response to a common-mode stimulus.
    pub sdc: SMatrix2,
    /// Common-mode response to a differential stimulus.
    pub scd: SMatrix2,
}

fn mixed_mode_unchecked(s: &SMatrix4, order: PairPortOrder) -> MixedModeS {
    let z = Complex64::new(0.0, 0.0);
    let mut mm = MixedModeS {
        sdd: [[z; 2]; 2],
        scc: [[z; 2]; 2],
        sdc: [[z; 2]; 2],
        scd: [[z; 2]; 2],
    };
    for i in 0..2 {
        for j in 0..2 {
            let aa = s[order.port(0, i)][order.port(0, j)];
            let ab = s[order.port(0, i)][order.port(1, j)];
            let ba = s[order.port(1, i)][order.port(0, j)];
            let bb = s[order.port(1, i)][order.port(1, j)];
            mm.sdd[i][j] = 0.5 * (aa - ab - ba + bb);
            mm.scc[i][j] = 0.5 * (aa + ab + ba + bb);
            mm.sdc[i][j] = 0.5 * (aa + ab - ba - bb);
            mm.scd[i][j] = 0.5 * (aa - ab + ba - bb);
        }
    }
    mm
}

/// Mixed-mode S parameters of a coupled pair from its single-ended
/// four-port.
///
/// Source: D. E. Bockelman, W. R. Eisenstadt, "Combined differential and
/// common-mode scattering parameters: theory and simulation", IEEE T-MTT
/// 43(7), 1995, pp. 1530–1539: with a_d = (a_A − a_B)/√2,
/// a_c = (a_A + a_B)/√2 at each end, Sdd_ij = ½(S_AiAj − S_AiBj − S_BiAj +
/// S_BiBj), Scc_ij = ½(S_AiAj + S_AiBj + S_BiAj + S_BiBj), and the cross
/// terms likewise. With every single-ended port at Z_ref, Sdd is referred to
/// 2·Z_ref and Scc to Z_ref/2.
///
/// Errors: a non-finite entry.
pub fn mixed_mode(s: &SMatrix4, order: PairPortOrder) -> Result<MixedModeS, InputError> {
    if !s.iter().flatten().all(|z| finite_c(*z)) {
        return Err(InputError::new("four-port S matrix has a non-finite entry"));
    }
    Ok(mixed_mode_unchecked(s, order))
}

/// Odd- and even-mode propagation of a coupled pair, from the two-line
/// method on each mode.
#[derive(Debug, Clone, PartialEq)]
pub struct PairModes {
    /// From Sdd of the two pairs: the odd mode.
    pub odd: Vec<TwoLinePoint>,
    /// From Scc of the two pairs: the even mode.
    pub even: Vec<TwoLinePoint>,
}

/// Odd- and even-mode γ and εeff of a symmetric coupled pair from a short
/// and a long pair with the same launches: [`mixed_mode`] at every
/// frequency, then [`two_line_propagation`] on Sdd (odd mode) and on Scc
/// (even mode).
///
/// Sources: Bockelman & Eisenstadt 1995 (mixed mode); Marks 1991 and
/// Janezic & Jargon 1999 (two lines). Mode conversion (Sdc, Scd) is
/// ignored: the pair is taken as symmetric.
///
/// Errors: as [`two_line_propagation`]; non-finite entries fail their
/// frequency point instead.
pub fn pair_modes_two_line(
    freqs: &[f64],
    s_short: &[SMatrix4],
    s_long: &[SMatrix4],
    order: PairPortOrder,
    delta_l: f64,
    opts: &TwoLineOptions,
) -> Result<PairModes, InputError> {
    if s_short.len() != freqs.len() || s_long.len() != freqs.len() {
        return Err(InputError::new(format!(
            "{} frequencies but {} short-pair and {} long-pair S matrices",
            freqs.len(),
            s_short.len(),
            s_long.len()
        )));
    }
    let ms: Vec<MixedModeS> = s_short
        .iter()
        .map(|s| mixed_mode_unchecked(s, order))
        .collect();
    let ml: Vec<MixedModeS> = s_long
        .iter()
        .map(|s| mixed_mode_unchecked(s, order))
        .collect();
    let pick = |v: &[MixedModeS], odd: bool| -> Vec<SMatrix2> {
        v.iter().map(|m| if odd { m.sdd } else { m.scc }).collect()
    };
    let odd = two_line_propagation(freqs, &pick(&ms, true), &pick(&ml, true), delta_l, opts)?;
    let even = two_line_propagation(freqs, &pick(&ms, false), &pick(&ml, false), delta_l, opts)?;
    Ok(PairModes { odd, even })
}

// ------------------------------------------------------------------ resonator

/// Default minimum prominence of a resonance peak, dB: the peak must stand
/// this far above the higher of the minima that separate it from higher
/// ground on either side (topographic prominence). Chosen here, no source:
/// loosely coupled line resonators stand 20–40 dB above the minima between
/// modes, trace noise and ripple of a few dB must not count.
pub const DEFAULT_MIN_PROMINENCE_DB: f64 = 10.0;

/// Default tolerance on the harmonic series, as a fraction of the local
/// fundamental f_n/n: a peak whose f/(f_ref/n_ref) lies more than this from
/// an integer is flagged [`PeakFlag::OffHarmonic`]. Chosen here, no source:
/// dispersion and a frequency-dependent end extension move f_n/n by well
/// under 1 % between neighbouring modes, a spurious or split peak lands
/// anywhere.
pub const DEFAULT_HARMONIC_TOLERANCE: f64 = 0.1;

/// Most missing modes [`resonator_analysis`] lists.
pub const MAX_MISSING: usize = 1000;

/// Options of [`resonator_analysis`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResonatorOptions {
    /// See [`DEFAULT_MIN_PROMINENCE_DB`].
    pub min_prominence_db: f64,
    /// See [`DEFAULT_HARMONIC_TOLERANCE`].
    pub harmonic_tolerance: f64,
    /// A rough Dk (εeff), used only to number the modes when a single peak
    /// is found.
    pub eps_eff_guess: Option<f64>,
}

impl Default for ResonatorOptions {
    fn default() -> Self {
        ResonatorOptions {
            min_prominence_db: DEFAULT_MIN_PROMINENCE_DB,
            harmonic_tolerance: DEFAULT_HARMONIC_TOLERANCE,
            eps_eff_guess: None,
        }
    }
}

/// What is doubtful about a resonance.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PeakFlag {
    /// Another peak got the same mode number: the mode is split (coupled to
    /// another resonance) or a spurious peak sits next to it.
    Split,
    /// The peak lies further from the harmonic series than the tolerance.
    OffHarmonic,
    /// Fewer than two samples inside the −3 dB band: f_n and Q rest on the
    /// Lorentzian shape alone.
    Undersampled,
    /// |S21| at resonance ≥ 1: no unloaded Q.
    NoUnloadedQ,
}

/// One resonance of a gap-coupled line resonator.
#[derive(Debug, Clone, PartialEq)]
pub struct Resonance {
    /// Mode number n (half-wavelengths along the resonator).
    pub mode: u32,
    /// Resonant frequency f_n, Hz (Lorentzian interpolation).
    pub freq: f64,
    /// |S21(f_n)| (Lorentzian interpolation).
    pub s21_mag: f64,
    /// Insertion loss at resonance, dB (−20·log10|S21(f_n)|).
    pub insertion_loss_db: f64,
    /// Prominence of the peak, dB.
    pub prominence_db: f64,
    /// −3 dB bandwidth, Hz.
    pub bandwidth: f64,
    /// Loaded Q = f_n / bandwidth.
    pub q_loaded: f64,
    /// Unloaded Q (see [`unloaded_q`]); `None` when |S21(f_n)| ≥ 1.
    pub q_unloaded: Option<f64>,
    /// εeff = [n·c0/(2·f_n·(L + ΔL))]² (Dk for a stripline).
    pub eps_eff: f64,
    /// Empty for a clean peak.
    pub flags: Vec<PeakFlag>,
}

/// Result of [`resonator_analysis`].
#[derive(Debug, Clone, PartialEq)]
pub struct ResonatorAnalysis {
    /// The resonances found, in frequency order.
    pub resonances: Vec<Resonance>,
    /// Mode numbers expected inside the sweep (at least a quarter of the
    /// local fundamental from either end) but not found, in increasing
    /// order; at most [`MAX_MISSING`].
    pub missing_modes: Vec<u32>,
}

impl ResonatorAnalysis {
    /// True when no mode is missing and no resonance carries a flag.
    ///
    /// Source: the flags of [`resonator_analysis`] (IPC-TM-650 2.5.5.5
    /// reports Dk per resonance; a missing or doubled mode breaks the mode
    /// numbering it relies on).
    pub fn is_clean(&self) -> bool {
        self.missing_modes.is_empty() && self.resonances.iter().all(|r| r.flags.is_empty())
    }
}

/// Unloaded Q of a symmetric two-port transmission resonator from its
/// loaded Q and |S21| at resonance: Q_u = Q_L/(1 − |S21(f0)|).
///
/// Source: with equal coupling β_c at both ports, |S21(f0)| = 2β_c/(1 + 2β_c)
/// and Q_L = Q_u/(1 + 2β_c) (D. M. Pozar, *Microwave Engineering*, 4th ed.,
/// sec. 6.7; D. Kajfez, *Q Factor*, 1994; from memory; Pozar's numbering
/// searched, only catalogue entries found; Kajfez not searched). Exact for a lumped
/// resonator, close for a weakly coupled line resonator.
///
/// Errors: Q_L not > 0, |S21| not in [0, 1).
pub fn unloaded_q(q_loaded: f64, s21_mag: f64) -> Result<f64, InputError> {
    require_positive("loaded Q", q_loaded)?;
    if !(s21_mag.is_finite() && (0.0..1.0).contains(&s21_mag)) {
        return Err(InputError::new(format!(
            "|S21| at resonance must lie in [0, 1) for an unloaded Q, got {s21_mag}"
        )));
    }
    Ok(q_loaded / (1.0 - s21_mag))
}

/// Effective permittivity from the n-th resonance of a line resonator of
/// length `length` with total end extension `delta_l` (both ends):
/// εeff = [n·c0/(2·f_n·(L + ΔL))]²; for a stripline εeff = Dk.
///
/// Source: resonance of an open-ended line, (L + ΔL) = n·λ/2 (IPC-TM-650
/// 2.5.5.5 stripline resonator test; Pozar 4th ed. sec. 6.3, from memory;
/// searched: the book's numbering, only catalogue entries found).
///
/// Errors: n = 0, f_n or L not > 0, ΔL not finite or L + ΔL ≤ 0.
pub fn resonator_eps_eff(
    mode: u32,
    f_n: f64,
    length: f64,
    delta_l: f64,
) -> Result<f64, InputError> {
    if mode == 0 {
        return Err(InputError::new("mode number must be >= 1"));
    }
    require_positive("resonant frequency", f_n)?;
    require_positive("resonator length", length)?;
    require_positive("resonator length plus end extension", length + delta_l)?;
    Ok((f64::from(mode) * C0 / (2.0 * f_n * (length + delta_l))).powi(2))
}

/// Dielectric loss tangent from the unloaded Q and the conductor Q:
/// tanδ = 1/Q_u − 1/Q_c.
///
/// Source: 1/Q_u = 1/Q_c + 1/Q_d and Q_d = 1/tanδ for a TEM line resonator
/// filled with one dielectric (Pozar 4th ed. sec. 6.3, from memory,
/// searched: the book's numbering, only catalogue entries found; IPC-TM-650
/// 2.5.5.5 separates the loss this way). Radiation is taken as
/// nil (stripline).
///
/// Errors: Q not > 0, or 1/Q_u < 1/Q_c (the conductor model already claims
/// more loss than was measured: the tangent would be negative).
pub fn loss_tangent_from_q(q_unloaded: f64, q_conductor: f64) -> Result<f64, InputError> {
    require_positive("unloaded Q", q_unloaded)?;
    require_positive("conductor Q", q_conductor)?;
    let t = 1.0 / q_unloaded - 1.0 / q_conductor;
    if t < 0.0 {
        return Err(InputError::new(format!(
            "conductor Q {q_conductor} is below the measured unloaded Q {q_unloaded}: \
             the loss tangent would be negative ({t:e})"
        )));
    }
    Ok(t)
}

/// End extension of a line whose end is loaded by a capacitance `c_end` to
/// ground (or a gap capacitance into a low impedance), at `freq`:
/// Δl = atan(ω·C·Z0)/β with β = ω√εeff/c0; for ω·C·Z0 ≪ 1,
/// Δl ≈ C·Z0·c0/√εeff.
///
/// Source: an open-circuited lossless line of length Δl has input
/// admittance jY0·tan(βΔl) (Pozar 4th ed. sec. 2.3, from memory;
/// searched: the book's numbering, only catalogue entries found); setting it
/// equal to jωC gives Δl.
///
/// Errors: any argument not > 0, εeff < 1.
pub fn end_capacitance_extension(
    c_end: f64,
    z0: f64,
    eps_eff: f64,
    freq: f64,
) -> Result<f64, InputError> {
    require_positive("end capacitance", c_end)?;
    require_positive("line impedance", z0)?;
    require_eps_r("eps_eff", eps_eff)?;
    require_positive("frequency", freq)?;
    let w = 2.0 * PI * freq;
    let beta = w * eps_eff.sqrt() / C0;
    Ok((w * c_end * z0).atan() / beta)
}

/// Model name used in validity notes.
pub const STRIPLINE_OPEN_END_MODEL: &str = "Oliner wide-strip stripline open end";

/// Open-end extension of a centred, thin, wide stripline, per end:
/// Δl = b·ln 2/π (b = ground-plane spacing).
///
/// Source: A. A. Oliner, "Equivalent circuits for discontinuities in
/// balanced strip transmission line", IRE T-MTT 3(2), 1955, pp. 134–143, and
/// H. M. Altschuler, A. A. Oliner, "Discontinuities in the center conductor
/// of symmetric strip transmission line", IRE T-MTT 8(3), 1960,
/// pp. 328–339 (from memory; searched: the second paper's title, not
/// found): the static limit b ≪ λ of a zero-thickness
/// strip much wider than b, where the end's fringing field is the same
/// two-dimensional edge field as at the strip's sides.
///
/// Validity (notes): W/b ≥ 1 (chosen here, no source: a narrower strip's
/// corners add fringing this formula does not hold).
///
/// Errors: b or W not > 0.
pub fn stripline_open_end_extension(
    b: f64,
    width: f64,
) -> Result<(f64, Vec<ValidityNote>), InputError> {
    require_positive("stripline plane spacing b", b)?;
    require_positive("stripline width", width)?;
    let mut notes = Vec::new();
    ValidityNote::push_if_outside(
        &mut notes,
        STRIPLINE_OPEN_END_MODEL,
        "W/b",
        width / b,
        1.0,
        f64::INFINITY,
    );
    Ok((b * LN_2 / PI, notes))
}

/// Model name used in validity notes.
pub const KJK_OPEN_END_MODEL: &str = "Kirschning-Jansen-Koster 1981 microstrip open end";

/// Open-end extension of a microstrip, per end.
///
/// Source: M. Kirschning, R. H. Jansen, N. H. L. Koster, "Accurate model for
/// open end effect of microstrip lines", Electronics Letters 17(3), 1981,
/// pp. 123–125 (from memory, coefficients included; searched: the paper's
/// text, not found), u = W/h:
/// Δl/h = ξ1·ξ3·ξ5/ξ4,
/// ξ1 = 0.434907·(εeff^0.81 + 0.26)/(εeff^0.81 − 0.189)·(u^0.8544 + 0.236)/(u^0.8544 + 0.87),
/// ξ2 = 1 + u^0.371/(2.358·εr + 1),
/// ξ3 = 1 + 0.5274·atan(0.084·u^(1.9413/ξ2))/εeff^0.9236,
/// ξ4 = 1 + 0.0377·atan(0.067·u^1.456)·[6 − 5·exp(0.036·(1 − εr))],
/// ξ5 = 1 − 0.218·exp(−7.5·u).
/// `eps_eff` is the line's static effective permittivity (e.g. from
/// [`crate::microstrip::hammerstad_jensen`]).
///
/// Validity (notes): 0.01 ≤ u ≤ 100, 1 ≤ εr ≤ 128 (from memory; searched:
/// the paper with its validity range, not found).
///
/// Errors: W or h not > 0, εr or εeff below 1, or εeff above εr.
pub fn microstrip_open_end_extension(
    width: f64,
    height: f64,
    eps_r: f64,
    eps_eff: f64,
) -> Result<(f64, Vec<ValidityNote>), InputError> {
    require_positive("microstrip width", width)?;
    require_positive("microstrip height", height)?;
    require_eps_r("microstrip eps_r", eps_r)?;
    require_eps_r("microstrip eps_eff", eps_eff)?;
    if eps_eff > eps_r {
        return Err(InputError::new(format!(
            "microstrip eps_eff {eps_eff} exceeds eps_r {eps_r}"
        )));
    }
    let u = width / height;
    let mut notes = Vec::new();
    ValidityNote::push_if_outside(&mut notes, KJK_OPEN_END_MODEL, "W/h", u, 0.01, 100.0);
    ValidityNote::push_if_outside(&mut notes, KJK_OPEN_END_MODEL, "eps_r", eps_r, 1.0, 128.0);
    let e81 = eps_eff.powf(0.81);
    let u8544 = u.powf(0.8544);
    let x1 = 0.434907 * (e81 + 0.26) / (e81 - 0.189) * (u8544 + 0.236) / (u8544 + 0.87);
    let x2 = 1.0 + u.powf(0.371) / (2.358 * eps_r + 1.0);
    let x3 = 1.0 + 0.5274 * (0.084 * u.powf(1.9413 / x2)).atan() / eps_eff.powf(0.9236);
    let x4 =
        1.0 + 0.0377 * (0.067 * u.powf(1.456)).atan() * (6.0 - 5.0 * (0.036 * (1.0 - eps_r)).exp());
    let x5 = 1.0 - 0.218 * (-7.5 * u).exp();
    let dl = height * x1 * x3 * x5 / x4;
    if dl.is_finite() {
        Ok((dl, notes))
    } else {
        Err(InputError::new(
            "microstrip open end overflows for these inputs",
        ))
    }
}

/// A local maximum of |S21|² with its prominence.
struct RawPeak {
    index: usize,
    prominence_db: f64,
}

fn db10(p: f64) -> f64 {
    10.0 * p.max(f64::MIN_POSITIVE).log10()
}

/// Local maxima of `p` whose topographic prominence reaches `min_db`.
fn prominent_peaks(p: &[f64], min_db: f64) -> Vec<RawPeak> {
    let mut out = Vec::new();
    let n = p.len();
    for i in 1..n.saturating_sub(1) {
        if !(p[i] > p[i - 1] && p[i] >= p[i + 1]) {
            continue;
        }
        let mut left_min = p[i];
        for &v in p[..i].iter().rev() {
            if v > p[i] {
                break;
            }
            left_min = left_min.min(v);
        }
        let mut right_min = p[i];
        for &v in &p[i + 1..] {
            if v > p[i] {
                break;
            }
            right_min = right_min.min(v);
        }
        let prominence_db = db10(p[i]) - db10(left_min.max(right_min));
        if prominence_db >= min_db {
            out.push(RawPeak {
                index: i,
                prominence_db,
            });
        }
    }
    out
}

/// Solves a 3×3 linear system by Gaussian elimination with partial pivoting.
fn solve3(mut a: [[f64; 3]; 3], mut b: [f64; 3]) -> Option<[f64; 3]> {
    for col in 0..3 {
        let piv = (col..3).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
        if a[piv][col] == 0.0 || !a[piv][col].is_finite() {
            return None;
        }
        a.swap(col, piv);
        b.swap(col, piv);
        let prow = a[col];
        for r in col + 1..3 {
            let k = a[r][col] / prow[col];
            for (x, p) in a[r].iter_mut().zip(prow).skip(col) {
                *x -= k * p;
            }
            b[r] -= k * b[col];
        }
    }
    let mut x = [0.0; 3];
    for r in (0..3).rev() {
        let mut s = b[r];
        for c in r + 1..3 {
            s -= a[r][c] * x[c];
        }
        x[r] = s / a[r][r];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// Lorentzian fit of one peak: 1/|S21|² is quadratic in f near a
/// single-pole resonance. Fitted (relative least squares) on the samples
/// around the maximum down to −6 dB along the monotone flanks, at least
/// the maximum and its two neighbours. Returns (f0, |S21(f0)|, −3 dB
/// bandwidth).
fn lorentzian_fit(freqs: &[f64], p: &[f64], i: usize) -> Option<(f64, f64, f64)> {
    let n = p.len();
    let mut lo = i - 1;
    while lo > 0 && p[lo - 1] < p[lo] && p[lo - 1] >= p[i] / 4.0 {
        lo -= 1;
    }
    let mut hi = i + 1;
    while hi + 1 < n && p[hi + 1] < p[hi] && p[hi + 1] >= p[i] / 4.0 {
        hi += 1;
    }
    let fc = freqs[i];
    let mut ata = [[0.0; 3]; 3];
    let mut aty = [0.0; 3];
    for k in lo..=hi {
        if p[k] <= 0.0 {
            return None;
        }
        let x = (freqs[k] - fc) / fc;
        let y = 1.0 / p[k];
        let w = 1.0 / (y * y);
        let row = [1.0, x, x * x];
        for r in 0..3 {
            for c in 0..3 {
                ata[r][c] += w * row[r] * row[c];
            }
            aty[r] += w * row[r] * y;
        }
    }
    let [c0, c1, c2] = solve3(ata, aty)?;
    if c2 <= 0.0 {
        return None;
    }
    let xv = -c1 / (2.0 * c2);
    let ymin = c0 - c1 * c1 / (4.0 * c2);
    let (xlo, xhi) = ((freqs[lo] - fc) / fc, (freqs[hi] - fc) / fc);
    if ymin <= 0.0 || xv < xlo || xv > xhi {
        return None;
    }
    let f0 = fc * (1.0 + xv);
    let bw = 2.0 * fc * (ymin / c2).sqrt();
    let mag = 1.0 / ymin.sqrt();
    (f0.is_finite() && bw.is_finite() && bw > 0.0).then_some((f0, mag, bw))
}

struct Fitted {
    freq: f64,
    mag: f64,
    bw: f64,
    prominence_db: f64,
    samples_in_band: usize,
}

/// Resonances of a gap-coupled line resonator (IPC-TM-650 2.5.5.5 stripline
/// resonator family) from its S21 over frequency.
///
/// Sources: peaks of |S21| standing at least `opts.min_prominence_db` above
/// the neighbouring minima (topographic prominence); f_n, |S21(f_n)| and
/// the −3 dB bandwidth from a Lorentzian fit (1/|S21|² quadratic in f near
/// a single-pole resonance, common practice, no source) so that few samples
/// per peak suffice; Q_L = f_n/bandwidth; Q_u by [`unloaded_q`]; εeff by
/// [`resonator_eps_eff`] with `delta_l` the total end extension of both
/// ends (e.g. 2× [`stripline_open_end_extension`] or
/// [`end_capacitance_extension`]; 0 for none).
///
/// Mode numbers come from the spacing of the peaks (f_n ≈ n·f_1): the
/// first peak is numbered against the median spacing, every later one
/// against the local fundamental f/n of the last clean peak, so a missing
/// first peak (sweep starting above f_1) or a missing mode in between
/// leaves the numbering right. With a single peak, `opts.eps_eff_guess`
/// numbers it. Flags: [`PeakFlag::OffHarmonic`] (more than
/// `opts.harmonic_tolerance` of f_1 from the series), [`PeakFlag::Split`]
/// (two peaks on one mode number), [`PeakFlag::Undersampled`],
/// [`PeakFlag::NoUnloadedQ`]; modes expected inside the sweep but not found
/// are listed in `missing_modes`.
///
/// `freqs` in Hz, strictly increasing (any spacing, e.g. a logarithmic
/// sweep); `length` the resonator's physical length, m.
///
/// Errors: inputs of unequal length, fewer than 3 samples, non-finite S21,
/// frequencies not positive and increasing, L not > 0, L + ΔL ≤ 0,
/// non-positive options; no peak found; a single peak and no guess.
pub fn resonator_analysis(
    freqs: &[f64],
    s21: &[Complex64],
    length: f64,
    delta_l: f64,
    opts: &ResonatorOptions,
) -> Result<ResonatorAnalysis, InputError> {
    check_freqs(freqs)?;
    if s21.len() != freqs.len() {
        return Err(InputError::new(format!(
            "{} frequencies but {} S21 values",
            freqs.len(),
            s21.len()
        )));
    }
    if freqs.len() < 3 {
        return Err(InputError::new("a resonator sweep needs at least 3 points"));
    }
    if !s21.iter().all(|z| finite_c(*z)) {
        return Err(InputError::new("S21 has a non-finite value"));
    }
    require_positive("resonator length", length)?;
    require_positive("resonator length plus end extension", length + delta_l)?;
    require_positive("minimum prominence (dB)", opts.min_prominence_db)?;
    require_positive("harmonic tolerance", opts.harmonic_tolerance)?;
    if opts.harmonic_tolerance >= 0.5 {
        return Err(InputError::new(format!(
            "harmonic tolerance must be below 0.5 (half a mode), got {}",
            opts.harmonic_tolerance
        )));
    }
    if let Some(g) = opts.eps_eff_guess {
        require_eps_r("eps_eff guess", g)?;
    }

    let p: Vec<f64> = s21.iter().map(|z| z.norm_sqr()).collect();
    let peaks: Vec<Fitted> = prominent_peaks(&p, opts.min_prominence_db)
        .into_iter()
        .filter_map(|rp| {
            let (f0, mag, bw) = lorentzian_fit(freqs, &p, rp.index)?;
            let samples_in_band = freqs
                .iter()
                .filter(|&&f| (f - f0).abs() <= bw / 2.0)
                .count();
            Some(Fitted {
                freq: f0,
                mag,
                bw,
                prominence_db: rp.prominence_db,
                samples_in_band,
            })
        })
        .collect();
    if peaks.is_empty() {
        return Err(InputError::new(format!(
            "no resonance stands {} dB above its surroundings in this sweep",
            opts.min_prominence_db
        )));
    }

    // First estimate of the fundamental.
    let f1_first = if peaks.len() >= 2 {
        let mut sp: Vec<f64> = peaks.windows(2).map(|w| w[1].freq - w[0].freq).collect();
        sp.sort_by(f64::total_cmp);
        let m = sp.len();
        if m % 2 == 1 {
            sp[m / 2]
        } else {
            0.5 * (sp[m / 2 - 1] + sp[m / 2])
        }
    } else if let Some(g) = opts.eps_eff_guess {
        C0 / (2.0 * (length + delta_l) * g.sqrt())
    } else {
        return Err(InputError::new(
            "one resonance found: its mode number needs a second peak or an eps_eff guess",
        ));
    };

    let tol = opts.harmonic_tolerance;
    let mut f1_local = f1_first;
    let mut modes: Vec<u32> = Vec::with_capacity(peaks.len());
    let mut flags: Vec<Vec<PeakFlag>> = vec![Vec::new(); peaks.len()];
    for (i, pk) in peaks.iter().enumerate() {
        let ratio = pk.freq / f1_local;
        let n = ratio.round().max(1.0);
        if (ratio - n).abs() > tol {
            flags[i].push(PeakFlag::OffHarmonic);
        }
        // Mode numbers above u32::MAX cannot come from a real sweep; clamp.
        let n = n.min(f64::from(u32::MAX)) as u32;
        for (j, &mj) in modes.iter().enumerate() {
            if mj == n {
                if !flags[j].contains(&PeakFlag::Split) {
                    flags[j].push(PeakFlag::Split);
                }
                if !flags[i].contains(&PeakFlag::Split) {
                    flags[i].push(PeakFlag::Split);
                }
            }
        }
        modes.push(n);
        if flags[i].is_empty() {
            f1_local = pk.freq / f64::from(n);
        }
    }

    // Missing modes: gaps in the numbering, and modes beyond the ends that
    // should lie inside the sweep by at least a quarter of a fundamental.
    // At most MAX_MISSING are listed (more means the numbering is nonsense
    // anyway, and the loops stay bounded whatever the data).
    let mut missing: Vec<u32> = Vec::new();
    let mut sorted = modes.clone();
    sorted.sort_unstable();
    sorted.dedup();
    let (nmin, nmax) = (sorted[0], sorted[sorted.len() - 1]);
    let f1_lo = peaks[0].freq / f64::from(modes[0]);
    let f1_hi = peaks[peaks.len() - 1].freq / f64::from(modes[modes.len() - 1]);
    let (fstart, fstop) = (freqs[0], freqs[freqs.len() - 1]);
    let first_expected = (fstart / f1_lo + 0.25).ceil().max(1.0);
    if first_expected < f64::from(nmin) {
        missing.extend((first_expected as u32..nmin).take(MAX_MISSING));
    }
    for w in sorted.windows(2) {
        let room = MAX_MISSING.saturating_sub(missing.len());
        missing.extend((w[0] + 1..w[1]).take(room));
    }
    let last_expected = (fstop / f1_hi - 0.25).floor();
    if last_expected > f64::from(nmax) {
        let room = MAX_MISSING.saturating_sub(missing.len());
        let last = last_expected.min(f64::from(u32::MAX)) as u32;
        missing.extend((nmax + 1..=last).take(room));
    }

    let mut resonances = Vec::with_capacity(peaks.len());
    for ((pk, n), mut fl) in peaks.iter().zip(&modes).zip(flags) {
        if pk.samples_in_band < 2 {
            fl.push(PeakFlag::Undersampled);
        }
        let q_loaded = pk.freq / pk.bw;
        let q_unloaded = unloaded_q(q_loaded, pk.mag).ok();
        if q_unloaded.is_none() {
            fl.push(PeakFlag::NoUnloadedQ);
        }
        resonances.push(Resonance {
            mode: *n,
            freq: pk.freq,
            s21_mag: pk.mag,
            insertion_loss_db: -20.0 * pk.mag.log10(),
            prominence_db: pk.prominence_db,
            bandwidth: pk.bw,
            q_loaded,
            q_unloaded,
            eps_eff: resonator_eps_eff(*n, pk.freq, length, delta_l)?,
            flags: fl,
        });
    }
    Ok(ResonatorAnalysis {
        resonances,
        missing_modes: missing,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    /// A matched line's T matrix is diag(e^{−γℓ}, e^{γℓ}) (the definition of
    /// the wave-cascading matrix, Marks 1991), and T of a cascade is the
    /// product: two matched sections of γℓ1, γℓ2 give diag(e^{−γ(ℓ1+ℓ2)}, …).
    #[test]
    fn t_matrix_of_a_matched_line() {
        let g = c(0.3, 2.0);
        let s21 = (-g).exp();
        let t = s_to_t(&[[c(0.0, 0.0), s21], [s21, c(0.0, 0.0)]]).unwrap();
        assert!((t[0][0] - (-g).exp()).norm() < 1e-14);
        assert!((t[1][1] - g.exp()).norm() < 1e-14);
        assert!(t[0][1].norm() < 1e-15 && t[1][0].norm() < 1e-15);
    }

    #[test]
    fn singular_and_non_finite_points_fail_without_panic() {
        let z = c(0.0, 0.0);
        let good = [[z, c(0.5, 0.0)], [c(0.5, 0.0), z]];
        let dead = [[c(1.0, 0.0), z], [z, c(1.0, 0.0)]];
        let nan = [[c(f64::NAN, 0.0), c(0.5, 0.0)], [c(0.5, 0.0), z]];
        let r = two_line_propagation(
            &[1e9, 2e9],
            &[dead, nan],
            &[good, good],
            0.01,
            &TwoLineOptions::default(),
        )
        .unwrap();
        for p in &r {
            assert!(p.propagation.is_none());
            assert!(
                matches!(p.flags[0], TwoLineFlag::Failed(_)),
                "{:?}",
                p.flags
            );
            assert!(!p.is_reliable());
        }
    }

    #[test]
    fn bad_inputs_are_errors() {
        let z = c(0.0, 0.0);
        let s = [[z, c(0.5, 0.0)], [c(0.5, 0.0), z]];
        let o = TwoLineOptions::default();
        assert!(two_line_propagation(&[1e9], &[s], &[s, s], 0.01, &o).is_err());
        assert!(two_line_propagation(&[1e9], &[s], &[s], 0.0, &o).is_err());
        assert!(two_line_propagation(&[2e9, 1e9], &[s, s], &[s, s], 0.01, &o).is_err());
        assert!(two_line_propagation(&[], &[], &[], 0.01, &o).is_err());
        let bad = TwoLineOptions {
            min_sin_beta_dl: 1.5,
            ..o
        };
        assert!(two_line_propagation(&[1e9], &[s], &[s], 0.01, &bad).is_err());
        let mut s4 = [[z; 4]; 4];
        s4[0][1] = c(f64::INFINITY, 0.0);
        assert!(mixed_mode(&s4, PairPortOrder::LineA12B34).is_err());
        assert!(unloaded_q(100.0, 1.0).is_err());
        assert!(unloaded_q(0.0, 0.1).is_err());
        assert!(resonator_eps_eff(0, 1e9, 0.1, 0.0).is_err());
        assert!(resonator_eps_eff(1, 1e9, 0.1, -0.2).is_err());
        assert!(end_capacitance_extension(1e-13, 50.0, 0.5, 1e9).is_err());
        assert!(stripline_open_end_extension(0.0, 1e-3).is_err());
        assert!(microstrip_open_end_extension(1e-3, 1e-3, 3.0, 3.5).is_err());
        let f = [1e9, 2e9, 3e9];
        let s21 = [c(0.1, 0.0); 3];
        let ro = ResonatorOptions::default();
        assert!(resonator_analysis(&f, &s21[..2], 0.1, 0.0, &ro).is_err());
        assert!(resonator_analysis(&f, &s21, -0.1, 0.0, &ro).is_err());
        let bad = ResonatorOptions {
            harmonic_tolerance: 0.5,
            ..ro
        };
        assert!(resonator_analysis(&f, &s21, 0.1, 0.0, &bad).is_err());
        // Flat response: no peak is an error, not a panic.
        assert!(resonator_analysis(&f, &s21, 0.1, 0.0, &ro).is_err());
    }

    /// Loss tangent by Q separation: Q_u = 100, Q_c = 250 gives
    /// 1/100 − 1/250 = 0.006 (arithmetic of 1/Q_u = 1/Q_c + tanδ, Pozar 4th
    /// ed. sec. 6.3); a conductor Q below the unloaded Q is an error.
    #[test]
    fn loss_tangent_by_q_separation() {
        assert!((loss_tangent_from_q(100.0, 250.0).unwrap() - 0.006).abs() < 1e-15);
        assert!(loss_tangent_from_q(100.0, 90.0).is_err());
    }

    /// Nonsense spacing (three peaks 1 MHz apart, one far away) numbers the
    /// modes in the thousands: the missing list stops at MAX_MISSING and
    /// the analysis returns at once, flagged.
    #[test]
    fn absurd_spacing_is_bounded() {
        let lor = |f: f64, f0: f64| c(0.1, 0.0) / c(1.0, 2.0 * 20_000.0 * (f - f0) / f0);
        let freqs: Vec<f64> = (0..60_000).map(|k| 0.9e9 + k as f64 * 1e5).collect();
        let s21: Vec<Complex64> = freqs
            .iter()
            .map(|&f| lor(f, 1.000e9) + lor(f, 1.001e9) + lor(f, 1.002e9) + lor(f, 5e9))
            .collect();
        let r = resonator_analysis(&freqs, &s21, 0.1, 0.0, &ResonatorOptions::default()).unwrap();
        assert_eq!(r.resonances.len(), 4, "{r:?}");
        assert_eq!(r.missing_modes.len(), MAX_MISSING);
        assert!(!r.is_clean());
    }

    /// A two-pole sum of Lorentzians whose second pole sits on the first's
    /// mode number is flagged split; a single Lorentzian of Q 200 is found
    /// at its centre with its Q (the Lorentzian's −3 dB width is f0/Q by
    /// definition).
    #[test]
    fn lorentzian_peaks_and_a_split_mode() {
        let lor = |f: f64, f0: f64, q: f64, a: f64| {
            let x = 2.0 * q * (f - f0) / f0;
            c(a, 0.0) / c(1.0, x)
        };
        let freqs: Vec<f64> = (0..4000).map(|k| 0.5e9 + k as f64 * 1e6).collect();
        let clean: Vec<Complex64> = freqs
            .iter()
            .map(|&f| (1..=4).map(|n| lor(f, n as f64 * 1e9, 200.0, 0.1)).sum())
            .collect();
        let r = resonator_analysis(&freqs, &clean, 0.1, 0.0, &ResonatorOptions::default()).unwrap();
        assert!(r.is_clean(), "{r:?}");
        assert_eq!(r.resonances.len(), 4);
        for (k, res) in r.resonances.iter().enumerate() {
            assert_eq!(res.mode, k as u32 + 1);
            let f0 = (k + 1) as f64 * 1e9;
            assert!(((res.freq - f0) / f0).abs() < 2e-4, "{}", res.freq);
            assert!(
                (res.q_loaded / 200.0 - 1.0).abs() < 0.02,
                "{}",
                res.q_loaded
            );
        }
        let split: Vec<Complex64> = freqs
            .iter()
            .zip(&clean)
            .map(|(&f, &s)| s + lor(f, 2.04e9, 400.0, 0.1))
            .collect();
        let r = resonator_analysis(&freqs, &split, 0.1, 0.0, &ResonatorOptions::default()).unwrap();
        assert!(!r.is_clean());
        let twos: Vec<_> = r.resonances.iter().filter(|x| x.mode == 2).collect();
        assert_eq!(twos.len(), 2, "{r:?}");
        assert!(twos.iter().all(|x| x.flags.contains(&PeakFlag::Split)));
    }
}
