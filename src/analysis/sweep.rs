//! A class's numbers across frequency, from its one solve.
//!
//! The section is solved once, at the class's analysis frequency. At any
//! other frequency f its numbers follow from what that solve gives
//! (`SweepBasis`), without solving again:
//!
//! - each material's Dk and Df at f from its causal Djordjevic-Sarkar
//!   model; the static εeff moves with the energy-weighted Dk,
//!   εeff(f) = εeff·Σ_r s_r·ε_r(f)/ε_r (first order in the change, exact for
//!   one dielectric), and Z with 1/√εeff (the inductance is a vacuum
//!   quantity and does not move);
//! - a surface microstrip's, pair's or grounded coplanar line's dispersion
//!   at f (Kirschning-Jansen 1982/1984 or Frankel et al. 1991 for εeff,
//!   Jansen-Kirschning 1983 for a single microstrip's Z);
//! - dielectric loss from the energy shares and each Df(f); conductor loss
//!   from Wheeler's rule with Rs(f) and each face's roughness factor at f
//!   (`loss::line_loss`);
//! - the delay at f with the smooth conductors' internal inductance
//!   ([`delay_with_conductors`]).
//!
//! The roughness layers that raise the apparent Dk are solved at the
//! analysis frequency only; at f the rough line's shift from the smooth one
//! is scaled by the layers' thickness at f over that at the analysis
//! frequency (their Hammerstad onset; the shift is nearly linear in the
//! thin layers' thickness).

use std::collections::BTreeMap;

use stackup_physics::consts::{C0, NP_TO_DB};
use stackup_physics::twoport::Rlgc;

use super::dispersion::dispersion;
use super::loss::{even_mode_loss, line_loss};
use super::materials::DkAt;
use super::solve::rough_layers;
use stackup_physics::fieldsolver::Region;

use super::section::{cross_section_owned, LineGeometry};
use super::{Analysis, LineNumbers, LossNumbers};
use crate::model::Stackup;

/// One class at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    pub frequency: f64,
    /// Smooth copper: Z (Z0 or Z_diff), εeff of the signal mode, delay s/m.
    pub smooth: LineNumbers,
    /// Worst-case rough copper (as declared), when solved.
    pub rough: Option<LineNumbers>,
    pub loss: LossNumbers,
    /// A pair's even mode: its loss (the rough line's εeff and Z of the
    /// even mode are in `rough`/`smooth`'s `pair`).
    pub even_loss: Option<LossNumbers>,
    /// Z(f)/Z of the power-current impedance of a surface microstrip
    /// (Jansen-Kirschning 1983); 1 for the other lines. `smooth.z` and
    /// `rough.z` are the static impedances (the TDR-comparable ones).
    pub z_ratio: f64,
}

impl SweepPoint {
    /// The numbers that carry the signal (rough when solved) with the
    /// impedance at f.
    pub fn at_frequency(&self) -> LineNumbers {
        let mut n = *self.rough.as_ref().unwrap_or(&self.smooth);
        n.z *= self.z_ratio;
        n
    }
}

/// Parses `"1GHz..110GHz"` or `"1GHz..110GHz:201"` into its frequencies
/// (linear steps, both ends included, 101 points by default).
pub fn parse_sweep(text: &str) -> Result<Vec<f64>, String> {
    let (range, n) = match text.rsplit_once(':') {
        Some((r, n)) => (
            r,
            n.trim()
                .parse::<usize>()
                .map_err(|_| format!("`{n}` is not a number of points"))?,
        ),
        None => (text, 101),
    };
    let (a, b) = range
        .split_once("..")
        .ok_or_else(|| format!("`{text}` is not a range like 1GHz..110GHz"))?;
    let f = |t: &str| {
        crate::units::parse_quantity(t.trim(), crate::units::Dimension::Frequency)
            .map_err(|e| format!("`{t}`: {e}"))
    };
    let (lo, hi) = (f(a)?, f(b)?);
    if !(lo > 0.0 && hi > lo && hi <= 1e12) {
        return Err(format!(
            "the sweep must rise from above 0 to at most 1 THz, got `{text}`"
        ));
    }
    if !(2..=10_001).contains(&n) {
        return Err(format!("a sweep takes 2 to 10001 points, got {n}"));
    }
    Ok((0..n)
        .map(|k| lo + (hi - lo) * k as f64 / (n - 1) as f64)
        .collect())
}

/// The dielectric layer of each region of `g`'s smooth section, in the
/// order of its energy shares (`None` for air).
pub(super) fn region_layers(g: &LineGeometry) -> Vec<Option<usize>> {
    let (cs, owners) = cross_section_owned(g, None);
    cs.regions()
        .into_iter()
        .map(|r| match r {
            Region::Layer(k) => g.slabs.get(k).and_then(|sl| sl.material),
            Region::Block(b) => owners.get(b).copied().flatten(),
            Region::Air => None,
        })
        .collect()
}

/// The numbers of class `i` of `s` at each of `freqs`; `None` when the
/// class was not solved.
pub fn sweep(s: &Stackup, a: &Analysis, i: usize, freqs: &[f64]) -> Option<Vec<SweepPoint>> {
    let ca = a.classes.get(i)?;
    let g = ca.geometry.as_ref().ok()?;
    let basis = ca.basis.as_ref()?;
    let region_material = region_layers(g);
    let materials: Vec<usize> = g
        .slabs
        .iter()
        .filter_map(|sl| sl.material)
        .chain(g.mask.map(|m| m.layer))
        .collect();
    let dk_at = |f: f64| -> BTreeMap<usize, DkAt> {
        materials
            .iter()
            .filter_map(|&m| {
                let d = s.dielectric(m)?;
                Some((m, a.materials.get(&d.material)?.at(f)))
            })
            .collect()
    };
    let f0 = ca.frequency;
    let t0: f64 = rough_layers(g, f0, true).thickness.iter().sum();
    let dk0 = dk_at(f0);
    Some(
        freqs
            .iter()
            .map(|&f| {
                let dk = dk_at(f);
                // εeff moves with the energy-weighted Dk; without shares,
                // with the thickness-weighted one.
                let ratio = |m: Option<usize>| -> f64 {
                    match m.and_then(|m| Some(dk.get(&m)?.dk / dk0.get(&m)?.dk)) {
                        Some(r) if r.is_finite() => r,
                        _ => 1.0,
                    }
                };
                let scale_of = |shares: Option<&Vec<f64>>| -> f64 {
                    match shares {
                        Some(sh) => sh
                            .iter()
                            .zip(&region_material)
                            .map(|(s, m)| s * ratio(*m))
                            .sum(),
                        None => thickness_scale(g, &dk, &dk0),
                    }
                };
                // The signal mode's shares (a pair's odd mode), and a
                // pair's even mode by its own.
                let scale = scale_of(basis.energy.as_ref());
                let scale_even = match &basis.energy_even {
                    Some(sh) => scale_of(Some(sh)),
                    None => scale,
                };
                let disp = dispersion(s, g, f);
                let at = |n: &LineNumbers| -> LineNumbers {
                    let mut m = *n;
                    m.eps_eff *= scale;
                    m.z /= scale.sqrt();
                    if let Some(p) = m.pair.as_mut() {
                        p.eps_eff_even *= scale_even;
                        p.eps_eff_odd *= scale;
                        p.z_even /= scale_even.sqrt();
                        p.z_odd /= scale.sqrt();
                    }
                    m.delay = m.eps_eff.sqrt() / C0;
                    disp.apply(&mut m);
                    m
                };
                let smooth = at(&basis.smooth);
                let z_ratio = {
                    let mut before = smooth;
                    before.eps_eff = basis.smooth.eps_eff * scale;
                    before.z = basis.smooth.z / scale.sqrt();
                    disp.z_ratio(&before, &smooth)
                };
                // The roughness layers are thinner where the skin depth
                // is not yet small against the roughness (the Hammerstad
                // onset): the rough line's shift from the smooth one
                // scales with their thickness.
                let k = if t0 > 0.0 {
                    rough_layers(g, f, true).thickness.iter().sum::<f64>() / t0
                } else {
                    1.0
                };
                let rough = basis.worst.as_ref().map(|w| {
                    let r = at(w);
                    let lerp = |s: f64, r: f64| s + (r - s) * k;
                    let mut m = r;
                    m.eps_eff = lerp(smooth.eps_eff, r.eps_eff);
                    m.z = lerp(smooth.z, r.z);
                    if let (Some(p), Some(ps)) = (m.pair.as_mut(), smooth.pair) {
                        p.eps_eff_even = lerp(ps.eps_eff_even, p.eps_eff_even);
                        p.eps_eff_odd = lerp(ps.eps_eff_odd, p.eps_eff_odd);
                        p.z_even = lerp(ps.z_even, p.z_even);
                        p.z_odd = lerp(ps.z_odd, p.z_odd);
                    }
                    m.delay = m.eps_eff.sqrt() / C0;
                    m
                });
                let loss = line_loss(
                    g,
                    &dk,
                    f,
                    &smooth,
                    basis.energy.as_deref(),
                    basis.wheeler.as_deref(),
                );
                let mut smooth = smooth;
                smooth.delay = delay_with_conductors(f, &smooth, &loss);
                let rough = rough.map(|mut r| {
                    r.delay = delay_with_conductors(f, &r, &loss);
                    r
                });
                let even_loss = even_mode_loss(
                    g,
                    &dk,
                    f,
                    &smooth,
                    basis.energy_even.as_deref(),
                    basis.wheeler.as_deref(),
                );
                SweepPoint {
                    frequency: f,
                    z_ratio,
                    smooth,
                    rough,
                    loss,
                    even_loss,
                }
            })
            .collect(),
    )
}

/// The thickness-weighted Dk's ratio, when the solve gave no shares.
fn thickness_scale(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    dk0: &BTreeMap<usize, DkAt>,
) -> f64 {
    let (mut a, mut b) = (0.0, 0.0);
    for sl in &g.slabs {
        if let Some(m) = sl.material {
            if let (Some(x), Some(y)) = (dk.get(&m), dk0.get(&m)) {
                a += sl.thickness * x.dk;
                b += sl.thickness * y.dk;
            }
        }
    }
    if b > 0.0 {
        a / b
    } else {
        1.0
    }
}

/// The per-unit-length parameters of one mode at frequency `f` from its
/// impedance per line `z`, εeff and loss (dB/m): L and C from Z and εeff,
/// G from the dielectric loss, R from the conductor loss of the declared
/// (worst-case rough) copper. L adds the smooth copper's internal
/// inductance R_s/ω: a conductor in the skin-effect regime has the surface
/// impedance (1 + j)·Rs (H. A. Wheeler, "Formulas for the skin effect",
/// Proc. IRE 30(9), 1942, pp. 412–424), whose reactance the quasi-static
/// εeff leaves out and which slows a thin line most at low frequency.
/// Rough copper's own slowing is in the apparent Dk of its roughness layers,
/// already in εeff (so in C); its excess resistance gets no reactance here,
/// which would count that slowing twice.
pub fn rlgc(f: f64, z: f64, eps_eff: f64, loss: &LossNumbers) -> Rlgc {
    let w = 2.0 * std::f64::consts::PI * f;
    let r_smooth = 2.0 * z * loss.conductor_smooth / NP_TO_DB;
    Rlgc {
        r: 2.0 * z * loss.conductor_rough / NP_TO_DB,
        l: z * eps_eff.sqrt() / C0 + r_smooth / w,
        g: 2.0 * (loss.dielectric / NP_TO_DB) / z,
        c: eps_eff.sqrt() / (z * C0),
    }
}

/// Delay of the signal mode of `n` at `f`, s/m: β/ω of its [`rlgc`], so
/// with the smooth copper's internal inductance (to first order
/// √εeff/c0·(1 + αc/β0), αc the smooth conductor loss). Falls back to
/// √εeff/c0 when `f` or the loss is not usable.
pub fn delay_with_conductors(f: f64, n: &LineNumbers, loss: &LossNumbers) -> f64 {
    let quasi_static = n.eps_eff.sqrt() / C0;
    let z = n.z_line();
    let usable = [loss.conductor_smooth, loss.conductor_rough, loss.dielectric]
        .iter()
        .all(|x| x.is_finite() && *x >= 0.0);
    if !(f > 0.0 && z > 0.0 && usable) {
        return quasi_static;
    }
    let (_, gamma) = rlgc(f, z, n.eps_eff, loss).zc_gamma(f);
    let d = gamma.im / (2.0 * std::f64::consts::PI * f);
    if d.is_finite() && d > 0.0 {
        d
    } else {
        quasi_static
    }
}
