//! Copper surface roughness: loss factors, causal surface impedance, wall
//! recession (Wheeler) and the apparent Dk that rough copper gives a thin
//! dielectric.
//!
//! Lengths in metres, frequencies in hertz, conductivity in S/m, impedances
//! in ohm per square. Time convention e^{jwt}: an inductive surface impedance
//! has a positive imaginary part.
//!
//! Two mechanisms raise the apparent Dk of a dielectric touching rough copper:
//! the copper teeth shorten the electric path (capacitance, modelled here by
//! an effective roughness dielectric layer, [`RoughLayerModel`]) and the
//! current crowding in the teeth adds internal inductance (the imaginary part
//! of a causal surface impedance, [`HurayModel::causal_surface_impedance`],
//! [`causal_hammerstad_surface_impedance`],
//! [`gradient_model_surface_impedance`], turned into a length by
//! [`wheeler_recession`] and into a Dk by [`apparent_dk_internal_inductance`]).
//! The layer model is the project's default; see [`RoughLayerModel`] for its
//! calibration.
//!
//! Use one route for the apparent Dk, not both: the layer model is
//! calibrated to the total apparent Dk reported in the trade, so a line model
//! that uses it should give the copper only the smooth internal inductance
//! (delta/2 per face) and take roughness loss from a loss factor K or from
//! Re Zs. The reactance of a causal Zs depends on the plane it is referred to
//! (moving the plane by d changes it by omega mu0 d), so its apparent Dk is
//! only meaningful with the smooth copper placed on that same plane.

use std::f64::consts::{FRAC_2_PI, PI, SQRT_2};

use num_complex::Complex64;

use crate::consts::MU0;
use crate::copper::{skin_depth, surface_resistance};
use crate::validity::{finite, require_eps_r, require_non_negative, require_positive, InputError};

// ---------------------------------------------------------------------------
// Loss factors (K multiplies the smooth-copper surface resistance Rs)
// ---------------------------------------------------------------------------

/// Hammerstad-Bekkadal roughness loss factor
/// K_H = 1 + (2/pi) atan[1.4 (Rq/delta)²], Rq the RMS roughness, delta the
/// skin depth.
///
/// Source: E. Hammerstad and F. Bekkadal, "A microstrip handbook", ELAB
/// Report STF44 A74169, University of Trondheim, Norway, February 1975 (the
/// reference as listed in M. Steer, *Fundamentals of Microwave and RF
/// Design*, ch. 4 references; the report itself not seen), as used in
/// E. Hammerstad and O. Jensen, "Accurate models for microstrip computer-aided
/// design", IEEE MTT-S Digest 1980, pp. 407-409. The formula itself was
/// seen only in secondary documentation, as the RF = 2 case of
/// [`hammerstad_factor_general`]. Saturates at 2. Fitted to
/// 2-D periodic grooves: valid for Rq up to about delta; for Rq >> delta (a few
/// GHz and up for standard foil) it under-predicts loss (common practice, no
/// source).
///
/// Errors: `rq` negative or not finite, `delta` not finite and > 0.
pub fn hammerstad_factor(rq: f64, delta: f64) -> Result<f64, InputError> {
    hammerstad_factor_general(rq, delta, 2.0)
}

/// Generalised Hammerstad loss factor with roughness factor RF (the
/// high-frequency limit of K): K = 1 + (RF - 1) (2/pi) atan[1.4 (Rq/delta)²].
/// RF = 2 gives [`hammerstad_factor`].
///
/// Source: Y. Shlepnev and C. Nwachukwu, "Roughness characterization for
/// interconnect analysis", IEEE Int. Symp. EMC 2011,
/// DOI 10.1109/ISEMC.2011.6038367. RF is a fitted parameter (1 <= RF, typical
/// 2-4 for printed-board foil); validity as [`hammerstad_factor`].
///
/// Errors: as [`hammerstad_factor`], and RF < 1 or not finite.
pub fn hammerstad_factor_general(rq: f64, delta: f64, rf: f64) -> Result<f64, InputError> {
    require_non_negative("RMS roughness Rq", rq)?;
    require_positive("skin depth", delta)?;
    require_roughness_factor(rf)?;
    let x = 1.4 * (rq / delta).powi(2);
    Ok(1.0 + (rf - 1.0) * FRAC_2_PI * x.atan())
}

fn require_roughness_factor(rf: f64) -> Result<(), InputError> {
    if rf.is_finite() && rf >= 1.0 {
        Ok(())
    } else {
        Err(InputError::new(format!(
            "roughness factor RF must be finite and >= 1, got {rf}"
        )))
    }
}

/// Groiss roughness loss factor K_G = 1 + exp[-(delta/(2 Rq))^1.6].
///
/// Source: S. Groiss, I. Bardi, O. Biro, K. Preis and K. R. Richter,
/// "Parameters of lossy cavity resonators calculated by the finite element
/// method", IEEE Trans. Magn. 32(3), pp. 894-897, 1996 (formula from memory;
/// searched: the paper's title and authors with "roughness correction
/// factor", no checkable text found).
/// Saturates at 2; same range as [`hammerstad_factor`]. Rq = 0 gives 1.
///
/// Errors: as [`hammerstad_factor`].
pub fn groiss_factor(rq: f64, delta: f64) -> Result<f64, InputError> {
    require_non_negative("RMS roughness Rq", rq)?;
    require_positive("skin depth", delta)?;
    if rq == 0.0 {
        return Ok(1.0);
    }
    Ok(1.0 + (-(delta / (2.0 * rq)).powf(1.6)).exp())
}

/// One family of equal copper spheres ("snowballs") in the Huray model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SphereFamily {
    /// Sphere radius r_i, m.
    pub radius: f64,
    /// Number of spheres per square metre of flat (projected) area, N_i/A_flat.
    pub count_per_area: f64,
}

impl SphereFamily {
    /// Surface-area ratio f_i = N_i 4 pi r_i² / A_flat.
    pub fn area_ratio(&self) -> f64 {
        self.count_per_area * 4.0 * PI * self.radius * self.radius
    }
}

/// Huray "snowball" roughness: a flat base (matte area ratio A_m/A_f) carrying
/// families of copper spheres.
///
/// Sources: P. G. Huray, *The Foundations of Signal Integrity*, Wiley 2009
/// (loss factor); J. E. Bracken, "A causal Huray model for surface roughness",
/// DesignCon 2012 (causal surface impedance). The sphere radii and counts are
/// fitted or measured parameters; the model holds while the spheres are
/// electrically small (r << wavelength in the dielectric), i.e. far above
/// 100 GHz for micrometre spheres.
#[derive(Debug, Clone, PartialEq)]
pub struct HurayModel {
    /// A_matte/A_flat (>= 1): area of the base under the spheres relative to
    /// the flat projected area.
    pub matte_ratio: f64,
    /// Sphere families.
    pub families: Vec<SphereFamily>,
}

/// Radius of the Cannonball-Huray sphere from the ten-point roughness height:
/// r = Rz/(2 + 2 sqrt 2).
///
/// The Cannonball stack is 9 + 4 + 1 equal spheres in cubic close packing
/// (a square pyramid, layer spacing sqrt(2) r), so its height is
/// 2r + 2 sqrt(2) r; setting that height equal to Rz gives r. The stack and
/// tile are from Simonovich (see [`HurayModel::cannonball`]); the height rule
/// follows from that geometry, but that it is exactly the published rule for
/// Rz is not confirmed (from memory; searched: the Cannonball model with
/// "sphere radius from Rz", not found).
///
/// Errors: `rz` not finite and > 0.
pub fn cannonball_radius_from_rz(rz: f64) -> Result<f64, InputError> {
    require_positive("ten-point roughness Rz", rz)?;
    Ok(rz / (2.0 + 2.0 * SQRT_2))
}

impl HurayModel {
    /// Huray model with the given matte ratio and sphere families.
    ///
    /// Errors: matte ratio < 1 or not finite; a family with radius not finite
    /// and > 0 or a negative/non-finite count.
    pub fn new(matte_ratio: f64, families: Vec<SphereFamily>) -> Result<Self, InputError> {
        if !(matte_ratio.is_finite() && matte_ratio >= 1.0) {
            return Err(InputError::new(format!(
                "Huray matte area ratio must be finite and >= 1, got {matte_ratio}"
            )));
        }
        for fam in &families {
            require_positive("Huray sphere radius", fam.radius)?;
            require_non_negative("Huray sphere count per area", fam.count_per_area)?;
            if !fam.area_ratio().is_finite() {
                return Err(InputError::new("Huray sphere area ratio overflows"));
            }
        }
        Ok(HurayModel {
            matte_ratio,
            families,
        })
    }

    /// Cannonball-Huray model: 14 spheres of radius r (9 + 4 + 1, cubic close
    /// packing) on a flat tile of 6r x 6r, A_m/A_f = 1. Area ratio
    /// f = 14 pi / 9, so K = 1 + (7 pi/3)/[1 + delta/r + delta²/(2 r²)].
    ///
    /// Source: G. Simonovich, "Practical method for modeling conductor
    /// surface roughness using close packing of equal spheres", DesignCon
    /// 2015, and "Practical model of conductor surface roughness using cubic
    /// close-packing of equal spheres", EDICon 2016.
    pub fn cannonball(radius: f64) -> Result<Self, InputError> {
        require_positive("Cannonball sphere radius", radius)?;
        let tile = (6.0 * radius) * (6.0 * radius);
        Self::new(
            1.0,
            vec![SphereFamily {
                radius,
                count_per_area: 14.0 / tile,
            }],
        )
    }

    /// Cannonball-Huray model with the radius from Rz by
    /// [`cannonball_radius_from_rz`].
    pub fn cannonball_from_rz(rz: f64) -> Result<Self, InputError> {
        Self::cannonball(cannonball_radius_from_rz(rz)?)
    }

    /// Huray loss factor
    /// K = A_m/A_f + (3/2) sum_i f_i / [1 + delta/r_i + delta²/(2 r_i²)].
    ///
    /// Errors: `delta` not finite and > 0.
    pub fn loss_factor(&self, delta: f64) -> Result<f64, InputError> {
        require_positive("skin depth", delta)?;
        let mut k = self.matte_ratio;
        for fam in &self.families {
            let a = delta / fam.radius;
            let d = 1.0 + a + 0.5 * a * a;
            if d.is_finite() {
                k += 1.5 * fam.area_ratio() / d;
            }
        }
        finite("Huray loss factor", k)
    }

    /// Causal Huray surface impedance
    /// Zs = (1 + j) Rs [A_m/A_f + (3/2) sum_i f_i / (1 + (1 - j) delta/(2 r_i))]
    /// (Bracken, DesignCon 2012). Its real part equals Rs times
    /// [`HurayModel::loss_factor`]; the imaginary part is the internal
    /// reactance that Kramers-Kronig requires with that resistance.
    ///
    /// Errors: `f`, `sigma` not finite and > 0.
    pub fn causal_surface_impedance(&self, f: f64, sigma: f64) -> Result<Complex64, InputError> {
        let rs = surface_resistance(f, sigma)?;
        let delta = skin_depth(f, sigma)?;
        let mut bracket = Complex64::new(self.matte_ratio, 0.0);
        for fam in &self.families {
            let a = delta / (2.0 * fam.radius);
            let den = Complex64::new(1.0 + a, -a);
            if den.re.is_finite() {
                bracket += 1.5 * fam.area_ratio() / den;
            }
        }
        finite_complex("surface impedance", Complex64::new(rs, rs) * bracket)
    }
}

/// Causal Hammerstad surface impedance
/// Zs = (1 + j) Rs {1 + (RF - 1)/pi [ln(1 + 2 sqrt(s)/(1 + s)) + 2 atan sqrt(s)]},
/// s = j 1.4 (Rq/delta)², principal branches.
///
/// Source: V. Dmitriev-Zdorov, G. Simonovich and I. Kochikov, "A causal
/// conductor roughness model and its effect on transmission line
/// characteristics", Signal Integrity Journal, 2018. Its real part equals
/// Rs times [`hammerstad_factor_general`]. Validity as the Hammerstad factor.
///
/// Errors: `rq` negative or not finite; `f`, `sigma` not finite and > 0;
/// RF < 1 or not finite.
pub fn causal_hammerstad_surface_impedance(
    rq: f64,
    rf: f64,
    f: f64,
    sigma: f64,
) -> Result<Complex64, InputError> {
    require_non_negative("RMS roughness Rq", rq)?;
    require_roughness_factor(rf)?;
    let rs = surface_resistance(f, sigma)?;
    let delta = skin_depth(f, sigma)?;
    let x = 1.4 * (rq / delta).powi(2);
    let mut bracket = Complex64::new(1.0, 0.0);
    if x > 0.0 && x.is_finite() {
        let s = Complex64::new(0.0, x);
        let rs_s = s.sqrt();
        let one = Complex64::new(1.0, 0.0);
        let term = (one + 2.0 * rs_s / (one + s)).ln() + 2.0 * rs_s.atan();
        bracket += (rf - 1.0) / PI * term;
    } else if x.is_infinite() {
        // (Rq/delta)² overflows: use the limit x -> inf, where
        // ln(1 + 2 sqrt(s)/(1 + s)) -> 0 and 2 atan(sqrt(s)) -> pi, so the
        // bracket tends to RF.
        bracket += rf - 1.0;
    }
    finite_complex("surface impedance", Complex64::new(rs, rs) * bracket)
}

/// Height distribution of a rough surface for the gradient model.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HeightDistribution {
    /// Normal (Gaussian) heights about the mean line, standard deviation Rq:
    /// the usual choice for a bond-treated (drum) side.
    Normal,
    /// Rayleigh-distributed heights above a solid base (long tail of sharp
    /// peaks into the dielectric), standard deviation Rq: the usual choice for
    /// the treated tooth side of electrodeposited foil.
    Rayleigh,
}

/// Gradient-model surface impedance of rough copper, referred to the mean
/// line of the profile moved outward (into the dielectric) by
/// `reference_offset` (m; 0 = mean line).
///
/// Model: G. Gold and K. Helmreich, "A physical surface roughness model and
/// its applications", IEEE Trans. MTT 65(10), pp. 3720-3732, 2017: the
/// conductivity rises across the interface as sigma(x) = sigma0 P(x), with
/// P(x) the fraction of metal at depth x, i.e. the cumulative distribution of
/// the surface heights. This function solves the model's 1-D field problem
/// numerically (not the closed form of D. N. Grujic, IEEE Trans. MTT 66(11),
/// 2018, nor its rational approximation, IEEE Trans. MTT 70(4), 2022): from
/// Maxwell's equations with E = E_z, H = H_y, the wave impedance Z = -E_z/H_y
/// looking into the metal obeys the Riccati equation
/// dZ/dx = sigma(x) Z² - j omega mu0, integrated by fourth-order Runge-Kutta
/// from deep in the metal (Z = (1 + j) Rs) out to where no metal is left, and
/// then shifted to the reference plane (dZ = j omega mu0 per metre of
/// dielectric). Causal by construction.
///
/// The real part (loss) does not depend on the reference plane; the
/// imaginary part does: moving the reference outward by d adds
/// j omega mu0 d. With the mean line as reference both distributions reduce
/// to (1 + j) Rs when delta >> Rq (the metal volume above the base equals
/// the mean height).
///
/// Validity: quasi-static conductor (sigma >> omega eps0), roughness
/// laterally fine compared with the line width; 0 <= Rq <= 50 µm. Step size
/// is min(delta, Rq)/40; the work grows as Rq/delta.
///
/// Errors: `rq` negative or not finite or above 50 µm; `f`, `sigma` not
/// finite and > 0; `reference_offset` not finite; Rq/delta above 1e4.
pub fn gradient_model_surface_impedance(
    rq: f64,
    distribution: HeightDistribution,
    f: f64,
    sigma: f64,
    reference_offset: f64,
) -> Result<Complex64, InputError> {
    require_non_negative("RMS roughness Rq", rq)?;
    if rq > 50e-6 {
        return Err(InputError::new(format!(
            "gradient model limited to Rq <= 50 µm, got {rq} m"
        )));
    }
    if !reference_offset.is_finite() {
        return Err(InputError::new("reference offset must be finite"));
    }
    let rs = surface_resistance(f, sigma)?;
    let delta = skin_depth(f, sigma)?;
    let w_mu0 = 2.0 * PI * f * MU0;
    let z_bulk = Complex64::new(rs, rs);
    if rq == 0.0 {
        return finite_complex(
            "surface impedance",
            z_bulk + Complex64::new(0.0, w_mu0 * reference_offset),
        );
    }
    if rq / delta > 1e4 {
        return Err(InputError::new(format!(
            "gradient model: Rq/delta = {} is beyond the supported 1e4",
            rq / delta
        )));
    }
    // x: depth into the metal measured from the mean line (x < 0 in the
    // dielectric). State: (Z, P) with P the metal fraction; dP/dx = pdf.
    let (x_deep, x_out, p_deep) = match distribution {
        // Normal: P(x) = Phi(x/Rq); integrate from +9 Rq (1 - Phi = 1e-19).
        HeightDistribution::Normal => (9.0 * rq, -9.0 * rq, 1.0),
        // Rayleigh heights above a base with scale s = Rq/sqrt((4 - pi)/2),
        // mean height s sqrt(pi/2); the base lies at x = mean height, below
        // which P = 1. Heights above 9 s have probability exp(-40.5).
        HeightDistribution::Rayleigh => {
            let s = rq / ((4.0 - PI) / 2.0).sqrt();
            let mean = s * (PI / 2.0).sqrt();
            (mean, mean - 9.0 * s, 1.0)
        }
    };
    // Metal-fraction derivative dP/dx (the height density seen from the
    // metal side).
    let density = |x: f64| -> f64 {
        match distribution {
            HeightDistribution::Normal => {
                let u = x / rq;
                (-0.5 * u * u).exp() / (rq * (2.0 * PI).sqrt())
            }
            HeightDistribution::Rayleigh => {
                let s = rq / ((4.0 - PI) / 2.0).sqrt();
                let mean = s * (PI / 2.0).sqrt();
                let y = mean - x; // height above the base
                if y <= 0.0 {
                    0.0
                } else {
                    y / (s * s) * (-0.5 * y * y / (s * s)).exp()
                }
            }
        }
    };
    let span = x_deep - x_out;
    let step_target = delta.min(rq) / 40.0;
    let n = (span / step_target).ceil().max(100.0);
    if n > 2.0e6 {
        return Err(InputError::new(
            "gradient model needs too many steps for these inputs",
        ));
    }
    let n = n as usize;
    let h = -span / n as f64; // integrate outward (decreasing x)
    let jw = Complex64::new(0.0, w_mu0);
    let rhs = |x: f64, z: Complex64, p: f64| -> (Complex64, f64) {
        (sigma * p.clamp(0.0, 1.0) * z * z - jw, density(x))
    };
    let mut x = x_deep;
    let mut z = z_bulk;
    let mut p = p_deep;
    for _ in 0..n {
        let (k1z, k1p) = rhs(x, z, p);
        let (k2z, k2p) = rhs(x + 0.5 * h, z + 0.5 * h * k1z, p + 0.5 * h * k1p);
        let (k3z, k3p) = rhs(x + 0.5 * h, z + 0.5 * h * k2z, p + 0.5 * h * k2p);
        let (k4z, k4p) = rhs(x + h, z + h * k3z, p + h * k3p);
        z += h / 6.0 * (k1z + 2.0 * k2z + 2.0 * k3z + k4z);
        p += h / 6.0 * (k1p + 2.0 * k2p + 2.0 * k3p + k4p);
        x += h;
    }
    // Z now refers to the plane x_out (outside the mean line by -x_out);
    // move it to the plane at `reference_offset` outside the mean line.
    let shift = reference_offset - (-x_out);
    finite_complex("surface impedance", z + jw * shift)
}

/// Equivalent wall recessions of a surface impedance at angular frequency
/// omega (Wheeler's incremental inductance rule: H. A. Wheeler, "Formulas for
/// the skin effect", Proc. IRE 30(9), pp. 412-424, 1942).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WallRecession {
    /// d_L = Im(Zs)/(omega mu0): how far the wall would have to recede to give
    /// the same inductance as the internal reactance. delta/2 for smooth copper.
    pub inductive: f64,
    /// d_R = Re(Zs)/(omega mu0): the recession whose inductance derivative
    /// gives the resistance. delta/2 for smooth copper.
    pub resistive: f64,
}

/// [`WallRecession`] of the surface impedance `zs` (ohm per square) at
/// angular frequency `omega` (rad/s). Valid where the surface impedance
/// concept holds (wall thicker than a few skin depths, curvature radii larger
/// than the recession).
///
/// Errors: `omega` not finite and > 0; `zs` not finite.
pub fn wheeler_recession(zs: Complex64, omega: f64) -> Result<WallRecession, InputError> {
    require_positive("angular frequency", omega)?;
    if !(zs.re.is_finite() && zs.im.is_finite()) {
        return Err(InputError::new(format!(
            "surface impedance must be finite, got {zs}"
        )));
    }
    let wm = omega * MU0;
    Ok(WallRecession {
        inductive: finite("inductive wall recession", zs.im / wm)?,
        resistive: finite("resistive wall recession", zs.re / wm)?,
    })
}

/// Inductive recession of `zs` beyond that of smooth copper:
/// Im(Zs)/(omega mu0) - delta/2 at frequency `f` and conductivity `sigma`.
/// This is the part of the internal inductance a smooth-copper line model
/// does not already contain.
///
/// Errors: as [`wheeler_recession`] and [`skin_depth`].
pub fn extra_inductive_recession(zs: Complex64, f: f64, sigma: f64) -> Result<f64, InputError> {
    let delta = skin_depth(f, sigma)?;
    let r = wheeler_recession(zs, 2.0 * PI * f)?;
    finite("wall recession", r.inductive - 0.5 * delta)
}

/// Apparent Dk of a wide (parallel-plate) line of dielectric thickness `h`
/// whose walls carry extra internal inductance equivalent to a total wall
/// recession `extra_recession_sum` (sum over both walls, m):
/// eps_app = eps (1 + sum d/h).
///
/// Derivation: L = mu0 (h + sum d)/W and C = eps eps0 W/h give
/// v = c0/sqrt(eps (1 + sum d/h)). With d = delta/2 per wall (smooth copper)
/// it reduces to the familiar 1 + delta/h. Valid for W >> h; for a microstrip
/// apply the recession in a field solver instead.
///
/// Errors: `eps` < 1 or not finite; `h` not finite and > 0;
/// `extra_recession_sum` negative or not finite.
pub fn apparent_dk_internal_inductance(
    eps: f64,
    h: f64,
    extra_recession_sum: f64,
) -> Result<f64, InputError> {
    require_eps_r("Dk", eps)?;
    require_positive("dielectric thickness", h)?;
    require_non_negative("wall recession", extra_recession_sum)?;
    finite("apparent Dk", eps * (1.0 + extra_recession_sum / h))
}

// ---------------------------------------------------------------------------
// Roughness description and the effective roughness dielectric layer
// ---------------------------------------------------------------------------

/// Ratio Rz/Rq used to derive a missing roughness parameter, 4.0.
///
/// Common practice, no source. Reasoning: for a Gaussian height profile the
/// expected peak-to-valley height within one sampling length of some tens of
/// correlation lengths is about 3.5-4.5 Rq (order statistics of a normal
/// distribution); a sine gives 2.8 and a triangle wave 3.5. Give both Rq and
/// Rz when the foil data state both.
pub const RZ_PER_RQ: f64 = 4.0;

/// Roughness of one copper face: RMS height Rq and/or ten-point height Rz, m.
/// At least one must be given; the missing one is derived with [`RZ_PER_RQ`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RoughSurface {
    /// RMS roughness Rq, m.
    pub rq: Option<f64>,
    /// Ten-point (peak-to-valley) roughness Rz, m.
    pub rz: Option<f64>,
}

impl RoughSurface {
    /// Ideally smooth copper (Rq = Rz = 0).
    pub const SMOOTH: RoughSurface = RoughSurface {
        rq: Some(0.0),
        rz: Some(0.0),
    };

    /// Surface known by its RMS roughness.
    pub fn from_rq(rq: f64) -> Self {
        RoughSurface {
            rq: Some(rq),
            rz: None,
        }
    }

    /// Surface known by its ten-point roughness.
    pub fn from_rz(rz: f64) -> Self {
        RoughSurface {
            rq: None,
            rz: Some(rz),
        }
    }

    /// RMS roughness Rq, derived as Rz/[`RZ_PER_RQ`] when only Rz is given.
    ///
    /// Errors: neither given, or the given value negative or not finite.
    pub fn rq(&self) -> Result<f64, InputError> {
        match (self.rq, self.rz) {
            (Some(rq), _) => {
                require_non_negative("RMS roughness Rq", rq)?;
                Ok(rq)
            }
            (None, Some(rz)) => {
                require_non_negative("ten-point roughness Rz", rz)?;
                Ok(rz / RZ_PER_RQ)
            }
            (None, None) => Err(InputError::new("copper surface needs Rq or Rz")),
        }
    }

    /// Ten-point roughness Rz, derived as [`RZ_PER_RQ`] x Rq when only Rq is
    /// given.
    ///
    /// Errors: as [`RoughSurface::rq`].
    pub fn rz(&self) -> Result<f64, InputError> {
        match (self.rz, self.rq) {
            (Some(rz), _) => {
                require_non_negative("ten-point roughness Rz", rz)?;
                Ok(rz)
            }
            (None, Some(rq)) => {
                require_non_negative("RMS roughness Rq", rq)?;
                finite("ten-point roughness Rz", rq * RZ_PER_RQ)
            }
            (None, None) => Err(InputError::new("copper surface needs Rq or Rz")),
        }
    }
}

/// Typical standard electrodeposited foil, treated (tooth) side:
/// Rz 9 µm, Rq 2.25 µm (common practice, no source; IPC-4562's predecessor
/// IPC-MF-150F, "Metal Foil for Printed Wiring Applications", §3.4.5, sets
/// no profile value for the standard type, as quoted in the si-list
/// archive, qsl.net/wb6tpu/si-list2/1373.html).
pub const STANDARD_ED_FOIL: RoughSurface = RoughSurface {
    rq: Some(2.25e-6),
    rz: Some(9.0e-6),
};

/// Low-profile electrodeposited foil, treated side: Rz 2 µm, Rq 0.5 µm, the
/// smooth end of the foils a laminate is commonly built with (the
/// "very low" and "hyper very low" profile classes, around Rz 1.5 to 3 µm;
/// common practice, no source; inside the very-low-profile limit of
/// IPC-MF-150F §3.4.5, below 5.1 µm, quoted as for [`STANDARD_ED_FOIL`]).
/// The best case of a foil face whose profile
/// the stackup does not state.
pub const LOW_PROFILE_FOIL: RoughSurface = RoughSurface {
    rq: Some(0.5e-6),
    rz: Some(2.0e-6),
};

/// Fabricator's bond-enhancement treatment of unknown roughness, best case:
/// Rz 1 µm, Rq 0.25 µm (low-etch treatments; common practice, no source).
pub const BOND_TREATMENT_UNKNOWN_BEST: RoughSurface = RoughSurface {
    rq: Some(0.25e-6),
    rz: Some(1.0e-6),
};

/// Fabricator's bond-enhancement treatment of unknown roughness, worst case:
/// Rz 5 µm, Rq 1.25 µm (aggressive oxide-alternative micro-etch; common
/// practice, no source).
pub const BOND_TREATMENT_UNKNOWN_WORST: RoughSurface = RoughSurface {
    rq: Some(1.25e-6),
    rz: Some(5.0e-6),
};

/// Effective roughness dielectric layer: the rough transition zone between
/// copper and dielectric is replaced by a homogeneous layer of thickness T_r
/// and raised permittivity eps_rough on smooth copper.
///
/// Concept: the "effective roughness dielectric" of M. Y. Koledintseva et
/// al., a homogeneous layer of thickness Tr and Dk DKr placed on smooth
/// copper in place of the rough transition zone (M. Y. Koledintseva and
/// T. Vincent, "Equivalent Capacitance Approach to Calculate Effective
/// Roughness Dielectric Parameters for Copper Foils on Printed Circuit
/// Boards", IMAPS journal, DOI 10.4071/imaps.654479; the same authors,
/// "Calculation of Frequency-Dependent Effective Roughness Dielectric
/// Parameters for Copper Foil Using Equivalent Capacitance Models",
/// Design007 Magazine, 2 January 2019, which names its earlier papers as
/// the concept's origin).
///
/// This project's parameterisation (no published constants exist):
///
/// * thickness T_r(f) = k Rq g(f), with the onset
///   g(f) = (2/pi) atan[1.4 (Rq/delta(f))²] (the Hammerstad-Bekkadal shape):
///   the layer grows in as the skin depth falls below the roughness;
/// * permittivity eps_rough = eps (1 + 2 phi)/(1 - phi), the Maxwell Garnett
///   mixing rule for perfectly conducting spheres of volume fraction phi in
///   the host dielectric (J. C. Maxwell Garnett, Phil. Trans. R. Soc. A 203,
///   1904). phi = 0.5 (half of a zone symmetric about the mean line is metal)
///   gives eps_rough = 4 eps.
///
/// Calibration of k (done once, [`ROUGH_LAYER_K`]): with phi = 0.5, k was
/// solved so that a 101.6 µm (4 mil) dielectric of bulk Dk 2.95 between two
/// foils of Rq 3 µm has an apparent Dk 0.30 higher than between two foils of
/// Rq 0.5 µm at 30 GHz, by the parallel-plate form (k = 2.34 exactly; 2.35
/// adopted). Check of the second trade fact with the same constants: bulk
/// Dk 3.0, [`STANDARD_ED_FOIL`] on both faces, 50 GHz: 3.20 at 127 µm, 3.10 at
/// 254 µm, 3.05 at 508 µm, 3.02 at 1.27 mm. Both facts are common practice
/// with no source. T_r = 2.35 Rq is about 0.6 Rz, consistent with "T_r about
/// the profile height". The calibration: crate README, "Calibration of the
/// roughness layer".
///
/// In a microstrip the field is not parallel-plate: the analysis should put
/// a layer of thickness [`RoughLayerModel::thickness`] and permittivity
/// [`RoughLayerModel::permittivity`] on each rough copper face inside the
/// 2-D field solver. The parallel-plate form
/// [`RoughLayerModel::apparent_dk_parallel_plate`] is for quick estimates and
/// tests. Valid for Rq well below h and below a few micrometres; the
/// calibration covers 0.1-1.3 mm dielectrics and 10-50 GHz.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RoughLayerModel {
    /// Layer thickness per unit RMS roughness at full onset, T_r/Rq.
    pub k: f64,
    /// Metal volume fraction phi of the transition zone (0 <= phi < 1).
    pub metal_fraction: f64,
}

/// Calibrated T_r/Rq of the roughness layer, see [`RoughLayerModel`].
pub const ROUGH_LAYER_K: f64 = 2.35;
/// Metal volume fraction of the roughness layer, see [`RoughLayerModel`].
pub const ROUGH_LAYER_METAL_FRACTION: f64 = 0.5;

impl Default for RoughLayerModel {
    fn default() -> Self {
        RoughLayerModel {
            k: ROUGH_LAYER_K,
            metal_fraction: ROUGH_LAYER_METAL_FRACTION,
        }
    }
}

/// Onset g = (2/pi) atan[1.4 (Rq/delta)²] in [0, 1) (Hammerstad-Bekkadal
/// shape, see [`hammerstad_factor`]).
///
/// Errors: `rq` negative or not finite, `delta` not finite and > 0.
pub fn roughness_onset(rq: f64, delta: f64) -> Result<f64, InputError> {
    Ok(hammerstad_factor(rq, delta)? - 1.0)
}

impl RoughLayerModel {
    fn check(&self) -> Result<(), InputError> {
        require_non_negative("roughness layer k", self.k)?;
        if !(self.metal_fraction.is_finite() && (0.0..1.0).contains(&self.metal_fraction)) {
            return Err(InputError::new(format!(
                "roughness layer metal fraction must be in [0, 1), got {}",
                self.metal_fraction
            )));
        }
        Ok(())
    }

    /// Thickness T_r(f) = k Rq g(f) of the roughness layer on one copper face
    /// at frequency `f`, copper conductivity `sigma` (m).
    ///
    /// Errors: invalid surface, `f` or `sigma` not finite and > 0, invalid
    /// model parameters.
    pub fn thickness(&self, surface: &RoughSurface, f: f64, sigma: f64) -> Result<f64, InputError> {
        self.check()?;
        let rq = surface.rq()?;
        let delta = skin_depth(f, sigma)?;
        finite(
            "roughness layer thickness",
            self.k * rq * roughness_onset(rq, delta)?,
        )
    }

    /// Relative permittivity eps_rough = eps (1 + 2 phi)/(1 - phi) of the
    /// roughness layer in a dielectric of bulk Dk `eps_bulk`.
    ///
    /// Errors: `eps_bulk` < 1 or not finite, invalid model parameters.
    pub fn permittivity(&self, eps_bulk: f64) -> Result<f64, InputError> {
        self.check()?;
        require_eps_r("Dk", eps_bulk)?;
        let phi = self.metal_fraction;
        finite(
            "roughness layer permittivity",
            eps_bulk * (1.0 + 2.0 * phi) / (1.0 - phi),
        )
    }

    /// Apparent Dk of a dielectric of bulk Dk `eps_bulk` and thickness `h`
    /// between copper, the field normal to the layers (parallel plates), with
    /// the given rough faces (usually 1 to 4; a smooth face adds nothing):
    ///
    /// eps_app = eps h / (h - sum_i T_r,i (1 - eps/eps_rough))
    ///
    /// (series capacitance of the bulk and the layers). If the layers fill
    /// the whole thickness (sum T_r >= h) the layer total is capped at h and
    /// the result saturates at eps_rough. Never below `eps_bulk`;
    /// non-increasing in `h`.
    ///
    /// Errors: `eps_bulk` < 1 or not finite; `h`, `f`, `sigma` not finite or
    /// not positive; an invalid surface.
    pub fn apparent_dk_parallel_plate(
        &self,
        eps_bulk: f64,
        h: f64,
        surfaces: &[RoughSurface],
        f: f64,
        sigma: f64,
    ) -> Result<f64, InputError> {
        let eps_r = self.permittivity(eps_bulk)?;
        require_positive("dielectric thickness", h)?;
        let mut t_sum = 0.0;
        for s in surfaces {
            t_sum += self.thickness(s, f, sigma)?;
        }
        let t = t_sum.min(h);
        // Series form h/eps_app = (h - t)/eps + t/eps_r, algebraically equal
        // to the expression above and free of cancellation.
        finite("apparent Dk", h / ((h - t) / eps_bulk + t / eps_r))
    }
}

/// Returns `z` when both parts are finite, else an error.
fn finite_complex(what: &str, z: Complex64) -> Result<Complex64, InputError> {
    finite(what, z.re)?;
    finite(what, z.im)?;
    Ok(z)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bad_inputs_are_errors() {
        for bad in [-1.0, f64::NAN, f64::INFINITY] {
            assert!(hammerstad_factor(bad, 1e-6).is_err());
            assert!(groiss_factor(bad, 1e-6).is_err());
            assert!(HurayModel::cannonball(bad).is_err());
            assert!(RoughSurface::from_rz(bad).rq().is_err());
        }
        assert!(hammerstad_factor(1e-6, 0.0).is_err());
        assert!(hammerstad_factor_general(1e-6, 1e-6, 0.5).is_err());
        assert!(HurayModel::new(0.9, vec![]).is_err());
        assert!(RoughSurface { rq: None, rz: None }.rq().is_err());
        assert!(wheeler_recession(Complex64::new(f64::NAN, 0.0), 1.0).is_err());
        assert!(wheeler_recession(Complex64::new(1.0, 1.0), 0.0).is_err());
        let bad_model = RoughLayerModel {
            k: 2.0,
            metal_fraction: 1.0,
        };
        assert!(bad_model.permittivity(3.0).is_err());
    }

    #[test]
    fn missing_parameter_is_derived() {
        let s = RoughSurface::from_rz(8e-6);
        assert!((s.rq().unwrap() - 2e-6).abs() < 1e-18);
        let s = RoughSurface::from_rq(1e-6);
        assert!((s.rz().unwrap() - 4e-6).abs() < 1e-18);
    }

    #[test]
    fn huge_roughness_saturates_without_nan() {
        let z = causal_hammerstad_surface_impedance(1e300, 2.0, 1e9, 5.8e7).unwrap();
        assert!(z.re.is_finite() && z.im.is_finite());
        let k = hammerstad_factor(1e300, 1e-6).unwrap();
        assert!((k - 2.0).abs() < 1e-12);
    }
}

/// Which roughness loss factor a copper face's conductor loss uses.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum RoughLossModel {
    /// [`hammerstad_factor`] from Rq (saturates at 2); the default.
    #[default]
    HammerstadBekkadal,
    /// [`groiss_factor`] from Rq (saturates at 2).
    Groiss,
    /// The Cannonball-Huray factor ([`HurayModel::cannonball_from_rz`])
    /// from Rz; it does not saturate at 2.
    CannonballHuray,
    /// The Huray factor of one family of spheres on a flat base
    /// (A_m/A_f = 1) with a measured or fitted sphere radius (m) and
    /// surface ratio Σ N·4πr²/A_flat (e.g. from micrographs of the foil,
    /// as Huray's method takes them); independent of Rz and Rq.
    Huray { radius: f64, surface_ratio: f64 },
}

impl RoughLossModel {
    /// The name as YAML writes it.
    pub fn key(self) -> &'static str {
        match self {
            RoughLossModel::HammerstadBekkadal => "hammerstad-bekkadal",
            RoughLossModel::Groiss => "groiss",
            RoughLossModel::CannonballHuray | RoughLossModel::Huray { .. } => "huray",
        }
    }

    /// The published model's name.
    pub fn name(self) -> &'static str {
        match self {
            RoughLossModel::HammerstadBekkadal => "Hammerstad-Bekkadal",
            RoughLossModel::Groiss => "Groiss",
            RoughLossModel::CannonballHuray => "Cannonball-Huray",
            RoughLossModel::Huray { .. } => "Huray (sphere radius and surface ratio given)",
        }
    }

    /// The fitted Huray model of one sphere family.
    ///
    /// Errors: `radius` not finite and > 0; `surface_ratio` negative or
    /// not finite.
    pub fn huray(radius: f64, surface_ratio: f64) -> Result<Self, InputError> {
        require_positive("Huray sphere radius", radius)?;
        require_non_negative("Huray surface ratio", surface_ratio)?;
        Ok(RoughLossModel::Huray {
            radius,
            surface_ratio,
        })
    }

    /// Parses [`Self::key`] (`huray` gives the Cannonball-Huray model from
    /// Rz; [`Self::huray`] the one with sphere data).
    pub fn from_key(k: &str) -> Option<Self> {
        [
            RoughLossModel::HammerstadBekkadal,
            RoughLossModel::Groiss,
            RoughLossModel::CannonballHuray,
        ]
        .into_iter()
        .find(|m| m.key() == k)
    }

    /// The loss factor K ≥ 1 of surface `s` at skin depth `delta`: 1 for a
    /// smooth surface.
    ///
    /// Errors: a surface with neither Rq nor Rz, or a non-positive skin
    /// depth.
    pub fn factor(self, s: &RoughSurface, delta: f64) -> Result<f64, InputError> {
        match self {
            RoughLossModel::HammerstadBekkadal => hammerstad_factor(s.rq()?, delta),
            RoughLossModel::Groiss => groiss_factor(s.rq()?, delta),
            RoughLossModel::CannonballHuray => {
                let rz = s.rz()?;
                if rz <= 0.0 {
                    return Ok(1.0);
                }
                HurayModel::cannonball_from_rz(rz)?.loss_factor(delta)
            }
            RoughLossModel::Huray {
                radius,
                surface_ratio,
            } => {
                let count_per_area = surface_ratio / (4.0 * PI * radius * radius);
                HurayModel::new(
                    1.0,
                    vec![SphereFamily {
                        radius,
                        count_per_area,
                    }],
                )?
                .loss_factor(delta)
            }
        }
    }
}

#[cfg(test)]
mod loss_model_tests {
    use super::*;

    /// Huray's loss factor for one sphere family on a flat base, by hand:
    /// K = 1 + (3/2)·SR/(1 + δ/r + δ²/(2r²)). r = 0.5 µm, SR = 3, δ = 0.5 µm:
    /// 1 + 4.5/2.5 = 2.8; δ → 0: 1 + 1.5·SR = 5.5 (P. G. Huray, *The
    /// Foundations of Signal Integrity*, Wiley 2009, the snowball model).
    #[test]
    fn fitted_huray_factor_by_hand() {
        let m = RoughLossModel::huray(0.5e-6, 3.0).unwrap();
        let s = RoughSurface::from_rq(2e-6);
        assert!((m.factor(&s, 0.5e-6).unwrap() - 2.8).abs() < 1e-12);
        assert!((m.factor(&s, 1e-12).unwrap() - 5.5).abs() < 1e-5);
        assert_eq!(m.key(), "huray");
        for (r, sr) in [
            (0.0, 1.0),
            (-1e-6, 1.0),
            (1e-6, -1.0),
            (f64::NAN, 1.0),
            (1e-6, f64::INFINITY),
        ] {
            assert!(RoughLossModel::huray(r, sr).is_err(), "{r} {sr}");
        }
    }
}
