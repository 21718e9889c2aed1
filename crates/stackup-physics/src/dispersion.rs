//! Dielectric dispersion by the Djordjevic-Sarkar wideband Debye model.
//!
//! Source: A. R. Djordjevic, R. M. Biljic, V. D. Likar-Smiljanic and
//! T. K. Sarkar, "Wideband frequency-domain characterization of FR-4 and
//! time-domain causality", IEEE Trans. EMC 43(4), pp. 662-667, Nov. 2001.
//!
//! The model is a continuous distribution of Debye relaxations with equal
//! weight per decade between f1 and f2:
//!
//! eps(f) = eps_inf + m ln[(f2 + j f)/(f1 + j f)]
//!
//! (the paper writes it with log10 and angular frequencies; m here equals the
//! paper's delta_eps / ((m2 - m1) ln 10)). Time convention e^{jwt}, so the
//! complex permittivity is eps' - j eps'' with Dk = eps' and Df = eps''/eps'.
//! It is causal (it obeys Kramers-Kronig) for any eps_inf >= 1, m >= 0,
//! 0 < f1 < f2; its loss tangent is nearly flat for f1 << f << f2, so it
//! describes a material only where its Df is nearly flat, and only between
//! f1 and f2.

use num_complex::Complex64;

use crate::validity::{require_non_negative, require_positive, InputError};

/// Lower corner f1 commonly used for printed-board laminates, 1 kHz
/// (Djordjevic et al. 2001 use 10^{m1} rad/s with m1 a few decades below the
/// lowest frequency of interest; 1 kHz is common practice, no source).
pub const DEFAULT_F1: f64 = 1.0e3;
/// Upper corner f2 commonly used, 1 THz (common practice, no source).
pub const DEFAULT_F2: f64 = 1.0e12;

/// One Djordjevic-Sarkar term plus the frequency range over which the
/// material data behind it were validated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DjordjevicSarkar {
    /// High-frequency permittivity eps_inf (relative).
    pub eps_inf: f64,
    /// Slope m: eps' falls by m per neper of frequency (m ln 10 per decade)
    /// between f1 and f2.
    pub m: f64,
    /// Lower corner frequency f1, Hz.
    pub f1: f64,
    /// Upper corner frequency f2, Hz.
    pub f2: f64,
    /// Lowest frequency at which the fitted data were measured/validated, Hz.
    pub valid_min: f64,
    /// Highest frequency at which the fitted data were measured/validated, Hz.
    pub valid_max: f64,
}

/// The permittivity at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Permittivity {
    /// Complex relative permittivity eps' - j eps''.
    pub eps: Complex64,
    /// Dk = eps'.
    pub dk: f64,
    /// Df = eps''/eps'.
    pub df: f64,
    /// True when the frequency lies outside the validated data range
    /// [`DjordjevicSarkar::valid_min`, `DjordjevicSarkar::valid_max`]: the value
    /// is an extrapolation by the model.
    pub extrapolated: bool,
    /// True when the frequency lies outside [f1, f2], where the model no
    /// longer describes a flat-Df material at all.
    pub outside_model_band: bool,
}

impl Permittivity {
    /// From the complex permittivity eps' − j eps'' and the flags.
    fn of(eps: Complex64, extrapolated: bool, outside_model_band: bool) -> Self {
        Permittivity {
            eps,
            dk: eps.re,
            df: -eps.im / eps.re,
            extrapolated,
            outside_model_band,
        }
    }
}

/// One measured (or data-sheet) point for [`DjordjevicSarkar::fit_table`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DielectricPoint {
    /// Frequency, Hz.
    pub f: f64,
    /// Dk at `f`.
    pub dk: f64,
    /// Df at `f`.
    pub df: f64,
}

/// Quality of a least-squares fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitReport {
    /// RMS of (Dk_model - Dk_data) over the points.
    pub rms_dk_error: f64,
    /// RMS of (Df_model - Df_data) over the points.
    pub rms_df_error: f64,
    /// Largest |Dk_model - Dk_data|.
    pub max_dk_error: f64,
    /// Largest |Df_model - Df_data|.
    pub max_df_error: f64,
    /// True when the unconstrained fit gave m < 0 (Dk rising with frequency,
    /// which no passive causal material does) and m was clamped to 0.
    pub slope_clamped: bool,
}

/// k(f) = ln[(f2 + j f)/(f1 + j f)].
/// Computed as a difference of logarithms so that no intermediate overflows
/// for any finite f.
fn kernel(f: f64, f1: f64, f2: f64) -> Complex64 {
    Complex64::new(f2, f).ln() - Complex64::new(f1, f).ln()
}

fn check_band(f1: f64, f2: f64) -> Result<(), InputError> {
    require_positive("f1", f1)?;
    require_positive("f2", f2)?;
    if f2 <= f1 {
        return Err(InputError::new(format!(
            "f2 must exceed f1, got f1 = {f1} Hz, f2 = {f2} Hz"
        )));
    }
    Ok(())
}

impl DjordjevicSarkar {
    /// One-point fit from (Dk0, Df0) at f0 with corners f1 < f0 < f2
    /// (Djordjevic et al. 2001, eqs. 9-11):
    ///
    /// k = ln[(f2 + j f0)/(f1 + j f0)], m = -Df0 Dk0 / Im k,
    /// eps_inf = Dk0 (1 + Df0 Re k / Im k).
    ///
    /// The fitted model reproduces (Dk0, Df0) at f0 exactly. The validated
    /// range is set to the single point [f0, f0]; widen it with
    /// [`DjordjevicSarkar::with_valid_range`] when the data sheet states more.
    ///
    /// Errors: non-finite or non-positive Dk0, f0, f1, f2; Df0 < 0 or not
    /// finite; f0 outside (f1, f2); a fit giving eps_inf < 1 (Df0 too large for
    /// the band: the model cannot describe the material).
    pub fn fit_one_point(
        dk0: f64,
        df0: f64,
        f0: f64,
        f1: f64,
        f2: f64,
    ) -> Result<Self, InputError> {
        require_positive("Dk", dk0)?;
        require_non_negative("Df", df0)?;
        require_positive("frequency", f0)?;
        check_band(f1, f2)?;
        if !(f0 > f1 && f0 < f2) {
            return Err(InputError::new(format!(
                "fit frequency {f0} Hz must lie between f1 = {f1} Hz and f2 = {f2} Hz"
            )));
        }
        let k = kernel(f0, f1, f2);
        // Im k < 0 strictly for f1 < f0 < f2 (atan(f0/f2) < atan(f0/f1)).
        let m = -df0 * dk0 / k.im;
        let eps_inf = dk0 * (1.0 + df0 * k.re / k.im);
        if !(eps_inf.is_finite() && eps_inf >= 1.0 && m.is_finite()) {
            return Err(InputError::new(format!(
                "Djordjevic-Sarkar fit of Dk {dk0}, Df {df0} at {f0} Hz gives eps_inf = {eps_inf} < 1; \
                 the loss is too high for a flat-Df model over [{f1}, {f2}] Hz"
            )));
        }
        Ok(DjordjevicSarkar {
            eps_inf,
            m,
            f1,
            f2,
            valid_min: f0,
            valid_max: f0,
        })
    }

    /// [`DjordjevicSarkar::fit_one_point`] with f1 = [`DEFAULT_F1`] (1 kHz) and
    /// f2 = [`DEFAULT_F2`] (1 THz).
    pub fn fit_one_point_default(dk0: f64, df0: f64, f0: f64) -> Result<Self, InputError> {
        Self::fit_one_point(dk0, df0, f0, DEFAULT_F1, DEFAULT_F2)
    }

    /// Least-squares fit of one Djordjevic-Sarkar term to a table of
    /// (f, Dk, Df) points, with the corners f1 and f2 held fixed.
    ///
    /// What is fitted: eps_inf and m, the two parameters in which the model
    /// is linear. The fit minimises the sum over the points of the squared
    /// complex residual |eps_data - eps_model|², with eps_data = Dk (1 - j Df),
    /// i.e. errors in eps' and in eps'' count equally in absolute terms. It is
    /// solved in closed form (2x2 normal equations). m is constrained to be
    /// non-negative (a passive material); if the unconstrained solution has m < 0,
    /// m = 0 and eps_inf = mean Dk, and the report says so. The validated
    /// range is set to [min f, max f] of the table.
    ///
    /// Errors: empty table; any point with non-finite or non-positive f or Dk,
    /// negative Df, or f outside (f1, f2); a table whose points all share one
    /// frequency and disagree (no unique fit) is fitted as the mean; a
    /// solution with eps_inf < 1.
    pub fn fit_table(
        points: &[DielectricPoint],
        f1: f64,
        f2: f64,
    ) -> Result<(Self, FitReport), InputError> {
        check_band(f1, f2)?;
        if points.is_empty() {
            return Err(InputError::new(
                "Djordjevic-Sarkar fit needs at least one (f, Dk, Df) point",
            ));
        }
        let mut fmin = f64::INFINITY;
        let mut fmax = f64::NEG_INFINITY;
        for p in points {
            require_positive("frequency", p.f)?;
            require_positive("Dk", p.dk)?;
            require_non_negative("Df", p.df)?;
            if !(p.f > f1 && p.f < f2) {
                return Err(InputError::new(format!(
                    "data point at {} Hz lies outside the model band [{f1}, {f2}] Hz",
                    p.f
                )));
            }
            fmin = fmin.min(p.f);
            fmax = fmax.max(p.f);
        }
        let n = points.len() as f64;
        // Model: eps = eps_inf * 1 + m * k(f). Real unknowns x = (eps_inf, m).
        // Residual r = d - (a x) with complex columns a1 = 1, a2 = k.
        // Normal equations: Re(A^H A) x = Re(A^H d).
        let mut s_kr = 0.0; // sum Re k
        let mut s_kk = 0.0; // sum |k|^2
        let mut s_dr = 0.0; // sum Re d
        let mut s_kd = 0.0; // sum Re(conj(k) d)
        for p in points {
            let k = kernel(p.f, f1, f2);
            let d = Complex64::new(p.dk, -p.dk * p.df);
            s_kr += k.re;
            s_kk += k.norm_sqr();
            s_dr += d.re;
            s_kd += (k.conj() * d).re;
        }
        let det = n * s_kk - s_kr * s_kr;
        let mut slope_clamped = false;
        let (mut eps_inf, mut m) = if det > 1e-12 * n * s_kk {
            (
                (s_dr * s_kk - s_kr * s_kd) / det,
                (n * s_kd - s_kr * s_dr) / det,
            )
        } else {
            // Cannot happen for distinct points (Im k != 0), kept for safety.
            (s_dr / n, 0.0)
        };
        if m < 0.0 {
            m = 0.0;
            eps_inf = s_dr / n;
            slope_clamped = true;
        }
        if !(eps_inf.is_finite() && eps_inf >= 1.0 && m.is_finite()) {
            return Err(InputError::new(format!(
                "Djordjevic-Sarkar table fit gives eps_inf = {eps_inf} < 1; the data do not fit one term"
            )));
        }
        let model = DjordjevicSarkar {
            eps_inf,
            m,
            f1,
            f2,
            valid_min: fmin,
            valid_max: fmax,
        };
        let mut report = FitReport {
            rms_dk_error: 0.0,
            rms_df_error: 0.0,
            max_dk_error: 0.0,
            max_df_error: 0.0,
            slope_clamped,
        };
        for p in points {
            let e = model.eps_at(p.f);
            let (dk, df) = (e.re, -e.im / e.re);
            let (edk, edf) = ((dk - p.dk).abs(), (df - p.df).abs());
            report.rms_dk_error += edk * edk;
            report.rms_df_error += edf * edf;
            report.max_dk_error = report.max_dk_error.max(edk);
            report.max_df_error = report.max_df_error.max(edf);
        }
        report.rms_dk_error = (report.rms_dk_error / n).sqrt();
        report.rms_df_error = (report.rms_df_error / n).sqrt();
        Ok((model, report))
    }

    /// Sets the validated data range [fmin, fmax] (Hz) used for the
    /// `extrapolated` flag.
    ///
    /// Errors: non-finite or non-positive ends, or fmax < fmin.
    pub fn with_valid_range(mut self, fmin: f64, fmax: f64) -> Result<Self, InputError> {
        require_positive("validated range minimum", fmin)?;
        require_positive("validated range maximum", fmax)?;
        if fmax < fmin {
            return Err(InputError::new(format!(
                "validated range maximum {fmax} Hz is below its minimum {fmin} Hz"
            )));
        }
        self.valid_min = fmin;
        self.valid_max = fmax;
        Ok(self)
    }

    /// Total relaxation strength eps(0) - eps(inf) = m ln(f2/f1).
    pub fn delta_eps(&self) -> f64 {
        self.m * (self.f2 / self.f1).ln()
    }

    /// Complex permittivity eps' - j eps'' at frequency f (no checks).
    fn eps_at(&self, f: f64) -> Complex64 {
        self.eps_inf + self.m * kernel(f, self.f1, self.f2)
    }

    /// Permittivity at frequency `f` >= 0 (f = 0 gives the static value
    /// eps_inf + m ln(f2/f1)), with flags for extrapolation beyond the
    /// validated data and beyond the model band [f1, f2].
    ///
    /// Errors: `f` negative or not finite.
    pub fn eval(&self, f: f64) -> Result<Permittivity, InputError> {
        require_non_negative("frequency", f)?;
        Ok(Permittivity::of(
            self.eps_at(f),
            !(f >= self.valid_min && f <= self.valid_max),
            !(f >= self.f1 && f <= self.f2),
        ))
    }
}

/// Poles per decade of [`MultiPoleDebye::fit`]: close enough that a
/// relaxation between two of them is still met within 0.2 % in Dk and 3 %
/// in Df (measured on a two-term material; two per decade missed Df by
/// 4.6 %).
pub const POLES_PER_DECADE: f64 = 4.0;

/// Most poles, points and coordinate-descent sweeps of
/// [`MultiPoleDebye::fit`]: bounds on the work a hostile table can cause
/// (a project limit; real tables span a few decades, 10 to 20 poles, and
/// converge in a few hundred sweeps).
pub const MAX_DEBYE_POLES: usize = 48;
pub const MAX_DEBYE_POINTS: usize = 64;
pub const DEBYE_SWEEPS: usize = 5_000;

/// A sum of Debye relaxations (a multi-pole Debye model):
///
/// eps(f) = eps_inf + Σ_k Δ_k / (1 + j f/f_k),
///
/// each term the Debye relaxation of one time constant (P. Debye, *Polar
/// Molecules*, 1929; the multi-term form for wideband board data, e.g.
/// Djordjevic et al. 2001 above, whose single term is its continuous
/// limit). With eps_inf ≥ 1 and every Δ_k ≥ 0 it is causal and passive by
/// construction: each term obeys Kramers-Kronig. Time convention e^{jωt}:
/// eps = eps' − j eps'', Dk = eps', Df = eps''/eps'.
///
/// [`MultiPoleDebye::fit`] places poles [`POLES_PER_DECADE`] per decade from a decade below
/// the lowest data point to a decade above the highest and fits eps_inf
/// and the Δ_k by non-negative least squares to Dk and Df together: a
/// table whose Df varies across the band (which one Djordjevic-Sarkar
/// term, nearly flat in Df, cannot follow) is met where its points are
/// consistent with causality, and is not met where they are not (a Dk
/// that falls faster than its Df allows).
#[derive(Debug, Clone, PartialEq)]
pub struct MultiPoleDebye {
    pub eps_inf: f64,
    /// (f_k in Hz, Δ_k) per pole; only the poles with Δ_k > 0.
    pub poles: Vec<(f64, f64)>,
    /// The range of the data it was fitted to, Hz.
    pub valid_min: f64,
    pub valid_max: f64,
}

impl MultiPoleDebye {
    /// Complex permittivity at `f` (no checks).
    fn eps_at(&self, f: f64) -> Complex64 {
        let mut e = Complex64::new(self.eps_inf, 0.0);
        for &(fk, d) in &self.poles {
            e += d / Complex64::new(1.0, f / fk);
        }
        e
    }

    /// Permittivity at `f` ≥ 0, flagged outside the fitted data range.
    ///
    /// Errors: `f` negative or not finite.
    pub fn eval(&self, f: f64) -> Result<Permittivity, InputError> {
        require_non_negative("frequency", f)?;
        Ok(Permittivity::of(
            self.eps_at(f),
            !(f >= self.valid_min && f <= self.valid_max),
            false,
        ))
    }

    /// Fit to `points` (at least three): poles at [`POLES_PER_DECADE`] from a
    /// tenth of the lowest frequency to ten times the highest; eps_inf and
    /// every Δ_k ≥ 0 by least squares, each Dk residual weighted by 1/(0.2 %
    /// of Dk) and each eps'' residual by 1/(2 % of eps'' + 1e-4), solved by
    /// coordinate descent on the normal equations (exact for a convex
    /// quadratic with bounds; a few hundred sweeps for these sizes).
    ///
    /// Errors: fewer than three points, a frequency, Dk or Df not finite
    /// and positive (Df may be 0), or a fit whose eps_inf falls below 1.
    pub fn fit(points: &[DielectricPoint]) -> Result<Self, InputError> {
        if points.len() < 3 {
            return Err(InputError::new(
                "a multi-pole Debye fit needs at least three (f, Dk, Df) points",
            ));
        }
        for p in points {
            require_positive("frequency", p.f)?;
            require_positive("Dk", p.dk)?;
            require_non_negative("Df", p.df)?;
        }
        let fmin = points.iter().map(|p| p.f).fold(f64::INFINITY, f64::min);
        let fmax = points.iter().map(|p| p.f).fold(0.0, f64::max);
        let (lo, hi) = ((fmin / 10.0).log10(), (fmax * 10.0).log10());
        // Bounded work whatever the input: at most MAX_DEBYE_POLES poles,
        // MAX_DEBYE_POINTS points and a fixed number of sweeps (about 10 ms).
        if points.len() > MAX_DEBYE_POINTS {
            return Err(InputError::new(format!(
                "a multi-pole Debye fit takes at most {MAX_DEBYE_POINTS} points"
            )));
        }
        let n = (((hi - lo) * POLES_PER_DECADE).ceil() as usize + 1).min(MAX_DEBYE_POLES);
        let poles: Vec<f64> = (0..n)
            .map(|k| 10f64.powf(lo + (hi - lo) * k as f64 / (n - 1) as f64))
            .collect();
        // Rows: [eps_inf, Δ_1..Δ_n] -> weighted eps' and eps''.
        let mut rows: Vec<(Vec<f64>, f64)> = Vec::with_capacity(2 * points.len());
        for p in points {
            let w_re = 1.0 / (0.002 * p.dk);
            let e2 = p.dk * p.df;
            let w_im = 1.0 / (0.02 * e2 + 1e-4);
            let mut re = vec![w_re];
            let mut im = vec![0.0];
            for &fk in &poles {
                let x = p.f / fk;
                re.push(w_re / (1.0 + x * x));
                im.push(w_im * x / (1.0 + x * x));
            }
            rows.push((re, w_re * p.dk));
            rows.push((im, w_im * e2));
        }
        let m = n + 1;
        let mut h = vec![vec![0.0; m]; m];
        let mut g = vec![0.0; m];
        for (a, b) in &rows {
            for i in 0..m {
                g[i] += a[i] * b;
                for j in 0..m {
                    h[i][j] += a[i] * a[j];
                }
            }
        }
        // Coordinate descent for min ½xᵀHx − gᵀx, x ≥ 0.
        let mut x = vec![0.0; m];
        x[0] = points.iter().map(|p| p.dk).fold(f64::INFINITY, f64::min);
        for _ in 0..DEBYE_SWEEPS {
            let mut change: f64 = 0.0;
            for i in 0..m {
                if h[i][i] <= 0.0 {
                    continue;
                }
                let r: f64 = g[i] - (0..m).map(|j| h[i][j] * x[j]).sum::<f64>();
                let new = (x[i] + r / h[i][i]).max(0.0);
                change = change.max((new - x[i]).abs());
                x[i] = new;
            }
            if change < 1e-12 {
                break;
            }
        }
        if x[0].is_nan() || x[0] < 1.0 {
            return Err(InputError::new(
                "the multi-pole Debye fit needs eps_inf below 1: the data are not those of a passive material",
            ));
        }
        Ok(MultiPoleDebye {
            eps_inf: x[0],
            poles: poles
                .iter()
                .zip(&x[1..])
                .filter(|(_, d)| **d > 0.0)
                .map(|(f, d)| (*f, *d))
                .collect(),
            valid_min: fmin,
            valid_max: fmax,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_bad_fit_input() {
        assert!(DjordjevicSarkar::fit_one_point_default(f64::NAN, 0.01, 1e9).is_err());
        assert!(DjordjevicSarkar::fit_one_point_default(4.0, -0.01, 1e9).is_err());
        assert!(DjordjevicSarkar::fit_one_point_default(4.0, 0.01, 1e13).is_err());
        assert!(DjordjevicSarkar::fit_one_point(4.0, 0.01, 1e9, 1e6, 1e3).is_err());
        // Df so large the flat-loss model would need eps_inf < 1.
        assert!(DjordjevicSarkar::fit_one_point_default(1.5, 0.5, 1e9).is_err());
        assert!(DjordjevicSarkar::fit_table(&[], DEFAULT_F1, DEFAULT_F2).is_err());
        let m = DjordjevicSarkar::fit_one_point_default(4.0, 0.02, 1e9).unwrap();
        assert!(m.eval(-1.0).is_err());
        assert!(m.eval(f64::INFINITY).is_err());
        assert!(m.with_valid_range(2e9, 1e9).is_err());
    }

    #[test]
    fn static_value_is_eps_inf_plus_delta() {
        let m = DjordjevicSarkar::fit_one_point_default(4.0, 0.02, 1e9).unwrap();
        let p = m.eval(0.0).unwrap();
        assert!((p.dk - (m.eps_inf + m.delta_eps())).abs() < 1e-12);
        assert_eq!(p.df, 0.0);
        assert!(p.outside_model_band && p.extrapolated);
    }
}
