//! Closed-form estimates of a cross-section's solution, to check a
//! solution that comes from elsewhere (an on-disk cache another job may
//! have written) before it is believed.
//!
//! The air (vacuum) impedance of the signal mode comes from the published
//! closed form of the section's structure:
//!
//! | section | form |
//! |---|---|
//! | one trace, plane below only | Hammerstad-Jensen 1980 with thickness ([`crate::microstrip::hammerstad_jensen`]) |
//! | one trace, planes both sides | offset stripline, Wheeler 1978 halves in parallel ([`crate::stripline::offset_stripline`]) |
//! | one trace, coplanar grounds, plane below | grounded CPW, Gupta et al. 1996 ([`crate::cpw::gcpw`]) |
//! | a pair, plane below only | Kirschning-Jansen 1984 coupled microstrip ([`crate::coupled::kirschning_jansen_coupled`]) |
//! | a pair, planes both sides | Cohn 1955 coupled stripline, halves in parallel as for the offset stripline ([`crate::coupled::cohn_coupled_stripline`]) |
//! | coplanar grounds with a second plane, or a coplanar pair | the same section without the coplanar grounds, as an upper bound (grounds only add capacitance) |
//!
//! The effective permittivity is estimated from the permittivity profile
//! under and over the trace centre: each side's series (parallel-plate)
//! permittivity, weighted by the side's share of the vacuum capacitance
//! (stripline), or put into the closed form as the substrate's Dk with a
//! cover over the trace allowed for up to its full effect (microstrip,
//! CPW). Whatever the structure, every modal permittivity must lie between
//! the lowest and the highest permittivity in the section (capacitance
//! grows with every ε, so it cannot leave that range).
//!
//! The accepted deviations ([`AIR_TOLERANCE`], [`EPS_TOLERANCE`]) are each
//! form's error against this crate's field solver over the sections of a
//! synthetic repository of 1,000 boards and the demo boards (measured in
//! `tests/it/cache_trust.rs`, recorded in `bench/RESULTS.md`), plus a margin.

use super::{CrossSection, SolvedLine};
use crate::consts::{C0, EPS0};
use crate::coupled::{cohn_coupled_stripline, kirschning_jansen_coupled};
use crate::cpw::gcpw;
use crate::microstrip::hammerstad_jensen;
use crate::stripline::{cohn_stripline, wheeler_stripline};

/// Closed forms, in the order of the table above.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Form {
    Microstrip,
    Stripline,
    Gcpw,
    CoupledMicrostrip,
    CoupledStripline,
    /// An upper bound of the air impedance only (extra coplanar grounds).
    UpperBound,
}

impl Form {
    pub fn name(self) -> &'static str {
        match self {
            Form::Microstrip => "Hammerstad-Jensen microstrip",
            Form::Stripline => "offset stripline (Wheeler halves)",
            Form::Gcpw => "grounded CPW (Gupta et al.)",
            Form::CoupledMicrostrip => "Kirschning-Jansen coupled microstrip",
            Form::CoupledStripline => "Cohn coupled stripline (halves)",
            Form::UpperBound => "air impedance bound without the coplanar grounds",
        }
    }
}

/// Accepted relative deviation of the solved air impedance from the
/// closed form, per form (measured error plus margin; see the module doc).
pub fn air_tolerance(form: Form) -> f64 {
    match form {
        Form::Microstrip => AIR_TOLERANCE[0],
        Form::Stripline => AIR_TOLERANCE[1],
        Form::Gcpw => AIR_TOLERANCE[2],
        Form::CoupledMicrostrip => AIR_TOLERANCE[3],
        Form::CoupledStripline => AIR_TOLERANCE[4],
        Form::UpperBound => AIR_TOLERANCE[5],
    }
}

/// Relative air-impedance tolerances, in the order of [`Form`].
///
/// Largest deviation measured (1,000 random sections of each structure
/// over the ranges of real boards and every section of 200 synthetic
/// boards, `tests/it/cache_trust.rs`): microstrip 3.1 %, stripline 4.3 %,
/// GCPW 4.8 %, coupled microstrip 8.7 %, coupled stripline 6.1 %; the
/// tolerance adds a margin of about 2 points.
pub const AIR_TOLERANCE: [f64; 6] = [0.05, 0.06, 0.07, 0.11, 0.09, 0.07];

/// Relative tolerance on the effective permittivity band, in the order of
/// [`Form`] (the band itself already spans what a cover can add).
/// Set, like [`AIR_TOLERANCE`], from the same survey: at these values only
/// trapezoids narrower at the top than a third of their base (an etch no
/// fabricator delivers) came within 2 % of a band's edge.
pub const EPS_TOLERANCE: [f64; 6] = [0.06, 0.05, 0.07, 0.13, 0.07, 0.0];

/// What one mode's solution may be.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModeEstimate {
    /// Closed-form air impedance, ohm: the lowest and highest of the
    /// form's variants (equal for most forms; 0 below when the form bounds
    /// it from above only).
    pub z_air_low: f64,
    pub z_air_high: f64,
    /// Accepted relative deviation of the solved air impedance beyond
    /// that range.
    pub z_air_tolerance: f64,
    /// Accepted band of the effective permittivity (tolerances included).
    pub eps_low: f64,
    pub eps_high: f64,
}

/// The estimate of a section: the form used and the signal mode (the odd
/// mode of a pair) and, for a pair, the even mode.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SectionEstimate {
    pub form: Form,
    pub signal: ModeEstimate,
    pub even: Option<ModeEstimate>,
}

/// Permittivity at (x, y): the layer at height y (air above the stack),
/// painted over by the last block that holds the point.
fn eps_at(cs: &CrossSection, x: f64, y: f64) -> f64 {
    let mut top = 0.0;
    let mut eps = 1.0;
    for l in &cs.layers {
        if y >= top && y < top + l.thickness {
            eps = l.eps_r;
            break;
        }
        top += l.thickness;
    }
    for b in &cs.blocks {
        if x >= b.x0 && x <= b.x1 && y >= b.y0 && y < b.y1 {
            eps = b.eps_r;
        }
    }
    eps
}

/// Series (parallel-plate) permittivity of the column at x from y0 to y1:
/// (y1 − y0) / ∫ dy/ε, the interval split at every layer and block edge.
fn series_eps(cs: &CrossSection, x: f64, y0: f64, y1: f64) -> f64 {
    if y1 <= y0 {
        return 1.0;
    }
    let mut cuts = vec![y0, y1];
    let mut top = 0.0;
    for l in &cs.layers {
        top += l.thickness;
        cuts.push(top);
    }
    for b in &cs.blocks {
        if x >= b.x0 && x <= b.x1 {
            cuts.push(b.y0);
            cuts.push(b.y1);
        }
    }
    cuts.retain(|&c| c >= y0 && c <= y1);
    cuts.sort_by(f64::total_cmp);
    cuts.dedup();
    let mut integral = 0.0;
    for w in cuts.windows(2) {
        let dy = w[1] - w[0];
        if dy > 0.0 {
            integral += dy / eps_at(cs, x, 0.5 * (w[0] + w[1]));
        }
    }
    (y1 - y0) / integral
}

/// Lowest and highest permittivity anywhere in the section (air included
/// when the top is open).
pub fn eps_bounds(cs: &CrossSection) -> (f64, f64) {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    let all = cs
        .layers
        .iter()
        .map(|l| l.eps_r)
        .chain(cs.blocks.iter().map(|b| b.eps_r))
        .chain((!cs.top_plane).then_some(1.0));
    for e in all {
        lo = lo.min(e);
        hi = hi.max(e);
    }
    if !lo.is_finite() {
        (1.0, 1.0)
    } else {
        (lo, hi)
    }
}

/// Highest permittivity at or above height y (the cover of a microstrip
/// trace: the resin or mask beside and over it, a layer or a coat block
/// wider than the traces), at least 1. A block no wider than a trace (a
/// roughness layer on its face) is not a cover.
fn cover_eps(cs: &CrossSection, y: f64) -> f64 {
    let mut top = 0.0;
    let mut hi: f64 = 1.0;
    for l in &cs.layers {
        if top + l.thickness > y {
            hi = hi.max(l.eps_r);
        }
        top += l.thickness;
    }
    let widest = cs
        .conductors
        .iter()
        .map(|t| t.width_bottom.max(t.width_top))
        .fold(0.0, f64::max);
    for b in &cs.blocks {
        if b.y1 > y && b.x1 - b.x0 > widest * (1.0 + 1e-6) {
            hi = hi.max(b.eps_r);
        }
    }
    hi
}

/// Band of a microstrip-like mode: from the closed form on the substrate
/// alone (`e_sub`, no cover) up to the same filling factor with the cover's
/// permittivity over the whole upper half-space (an overestimate of any
/// real, thin cover).
fn covered_band(e_sub: f64, eps_sub: f64, cover: f64, tol: f64) -> (f64, f64) {
    let q = if eps_sub > 1.0 + 1e-9 {
        ((e_sub - 1.0) / (eps_sub - 1.0)).clamp(0.0, 1.0)
    } else {
        0.5
    };
    let high = (eps_sub * q + cover * (1.0 - q)).max(e_sub);
    (e_sub * (1.0 - tol), high * (1.0 + tol))
}

/// The closed-form estimate of `cs`, or `None` when no form applies (more
/// than two traces, two on different layers, a section the forms cannot
/// take); only the physical
/// bounds then hold.
pub fn estimate(cs: &CrossSection) -> Option<SectionEstimate> {
    if !cs.bottom_plane || cs.conductors.is_empty() || cs.conductors.len() > 2 {
        return None;
    }
    // Two traces on different layers (broadside): no form applies.
    if cs.conductors.len() == 2 && cs.conductors[0].y_bottom != cs.conductors[1].y_bottom {
        return None;
    }
    let c = cs.conductors[0];
    let t = c.thickness.max(0.0);
    let w = 0.5 * (c.width_bottom + c.width_top.max(0.0));
    let w = if t > 0.0 { w } else { c.width_bottom };
    let h_total: f64 = cs.layers.iter().map(|l| l.thickness).sum();
    let h1 = c.y_bottom;
    let h2 = h_total - c.y_bottom - t;
    if !(w > 0.0 && h1 > 0.0) {
        return None;
    }
    let x = c.x_center;
    let eps_below = series_eps(cs, x, 0.0, h1);
    let pair = cs.conductors.len() == 2;
    let spacing = if pair {
        let d = (cs.conductors[1].x_center - c.x_center).abs();
        let s = d - w;
        if s <= 0.0 {
            return None;
        }
        Some(s)
    } else {
        None
    };
    let (eps_lo, eps_hi) = eps_bounds(cs);
    let clamp_band =
        |lo: f64, hi: f64| (lo.max(eps_lo * (1.0 - 1e-6)), hi.min(eps_hi * (1.0 + 1e-6)));
    let cpw = cs.coplanar_grounds.is_some();
    if cs.top_plane {
        if h2 <= 0.0 {
            return None;
        }
        let eps_above = series_eps(cs, x, h1 + t, h_total);
        let (b1, b2) = (2.0 * h1 + t, 2.0 * h2 + t);
        // One mode of a stripline from its two halves (centred lines of
        // spacing b1 and b2, each carrying half the section): the air
        // impedance of the halves in parallel, and the permittivity of
        // each side weighted by that side's capacitance.
        let halves = |z1: f64, z2: f64, form: Form| -> ModeEstimate {
            let (g1, g2) = (1.0 / z1, 1.0 / z2);
            let z_air = 2.0 / (g1 + g2);
            let eps = (eps_below * g1 + eps_above * g2) / (g1 + g2);
            let tol = EPS_TOLERANCE[form as usize];
            let (lo, hi) = if cpw {
                (eps_lo, eps_hi)
            } else {
                clamp_band(eps * (1.0 - tol), eps * (1.0 + tol))
            };
            ModeEstimate {
                z_air_low: if cpw { 0.0 } else { z_air },
                z_air_high: z_air,
                z_air_tolerance: air_tolerance(if cpw { Form::UpperBound } else { form }),
                eps_low: lo,
                eps_high: hi,
            }
        };
        let form = if cpw {
            Form::UpperBound
        } else if pair {
            Form::CoupledStripline
        } else {
            Form::Stripline
        };
        return match spacing {
            None => {
                let z1 = wheeler_stripline(w, b1, t, 1.0).ok()?.z0;
                let z2 = wheeler_stripline(w, b2, t, 1.0).ok()?.z0;
                Some(SectionEstimate {
                    form,
                    signal: halves(z1, z2, Form::Stripline),
                    even: None,
                })
            }
            Some(s) => {
                // The single offset strip (thick, as above) plus the
                // coupling a centred pair between the same two planes has
                // (Cohn 1955 against Cohn 1954, t = 0): the field between
                // neighbours is confined by both planes, at distance b.
                let b = h1 + t + h2;
                let single = cohn_stripline(w, b, 1.0).ok()?.z0;
                let r = cohn_coupled_stripline(w, s, b, 1.0).ok()?;
                let z1 = wheeler_stripline(w, b1, t, 1.0).ok()?.z0;
                let z2 = wheeler_stripline(w, b2, t, 1.0).ok()?.z0;
                let c_single = 0.5 * (cap(z1) + cap(z2));
                let z1_0 = wheeler_stripline(w, b1, 0.0, 1.0).ok()?.z0;
                let z2_0 = wheeler_stripline(w, b2, 0.0, 1.0).ok()?.z0;
                let dc = c_single - 0.5 * (cap(z1_0) + cap(z2_0));
                // The inner side walls, as for the microstrip pair: odd
                // mode between the single strip's fringe and the plates to
                // the electric wall; even mode between none of the fringe
                // and all of it, by how far apart the strips are.
                let side = 0.5 * dc.max(0.0);
                let wall = EPS0 * t / (0.5 * s);
                let apart = 1.0 - (-s / h1.min(h2)).exp();
                let odd_base = c_single + (cap(r.modes.z_odd) - cap(single));
                let odd = (odd_base + (wall - side).max(0.0), odd_base);
                let even_base = c_single - (cap(single) - cap(r.modes.z_even));
                let even = (even_base, even_base - side * (1.0 - apart));
                let (g1, g2) = (1.0 / z1, 1.0 / z2);
                // (most, least) capacitance of a mode to its estimate: the
                // capacitance split between the sides as the single
                // strip's is split.
                let mode = |c: (f64, f64)| -> ModeEstimate {
                    let at = |c: f64| {
                        let z = imp(c);
                        halves(
                            z * (g1 + g2) / (2.0 * g1),
                            z * (g1 + g2) / (2.0 * g2),
                            Form::CoupledStripline,
                        )
                    };
                    let (most, least) = (at(c.0), at(c.1));
                    ModeEstimate {
                        z_air_low: most.z_air_low,
                        z_air_high: least.z_air_high,
                        ..most
                    }
                };
                Some(SectionEstimate {
                    form,
                    signal: mode(odd),
                    even: Some(mode(even)),
                })
            }
        };
    }
    let cover = cover_eps(cs, h1);
    // What fills the copper slot beside the trace (resin, mask or air):
    // the capacitance that thickness adds sits in it.
    let slot = eps_at(
        cs,
        x + 0.5 * w.max(c.width_bottom) + 0.25 * t.max(1e-9),
        h1 + 0.5 * t,
    );
    // A mode from its air impedance with thickness (`z_air`), without
    // (`z_air0`), and its permittivity for a zero-thickness strip on the
    // substrate (`e0`): the zero-thickness capacitance takes the substrate's
    // share, the thickness addition the slot's permittivity.
    // `z_air` is the (low, high) range of the form's air impedance.
    let mode = |z_air: (f64, f64), z_air0: f64, e0: f64, form: Form, bound: bool| -> ModeEstimate {
        let tol = EPS_TOLERANCE[form as usize];
        let (lo, hi) = if bound {
            (eps_lo, eps_hi)
        } else {
            // Both ends of the air range give an estimate; the band spans
            // them.
            let e_of = |z: f64| {
                let (c, c0) = (cap(z), cap(z_air0));
                (c0 * e0 + (c - c0).max(0.0) * slot) / c.max(c0)
            };
            let (e1, e2) = (e_of(z_air.0), e_of(z_air.1));
            let (lo1, hi1) = covered_band(e1.min(e2), eps_below, cover, tol);
            let (lo2, hi2) = covered_band(e1.max(e2), eps_below, cover, tol);
            clamp_band(lo1.min(lo2), hi1.max(hi2))
        };
        ModeEstimate {
            z_air_low: if bound { 0.0 } else { z_air.0 },
            z_air_high: z_air.1,
            z_air_tolerance: air_tolerance(if bound { Form::UpperBound } else { form }),
            eps_low: lo,
            eps_high: hi,
        }
    };
    match (spacing, cs.coplanar_grounds) {
        (None, None) => {
            // Hammerstad-Jensen carries the thickness itself.
            let air = hammerstad_jensen(w, h1, t, 1.0).ok()?;
            let sub = hammerstad_jensen(w, h1, t, eps_below).ok()?;
            Some(SectionEstimate {
                form: Form::Microstrip,
                signal: mode(
                    (air.z0, air.z0),
                    air.z0,
                    sub.eps_eff,
                    Form::Microstrip,
                    false,
                ),
                even: None,
            })
        }
        (None, Some(g)) => {
            // The side walls facing the grounds and the top's thickness
            // fringe (half a microstrip's) add to the zero-thickness form.
            let air0 = gcpw(w, g.gap, h1, 0.0, 1.0).ok()?;
            let sub0 = gcpw(w, g.gap, h1, 0.0, eps_below).ok()?;
            let dc = cap(hammerstad_jensen(w, h1, t, 1.0).ok()?.z0)
                - cap(hammerstad_jensen(w, h1, 0.0, 1.0).ok()?.z0);
            // The side walls add between ε0·t/gap and 2·ε0·t/gap (two
            // parallel plates; the zero-thickness form already holds part
            // of that field in its edge singularity): the range spans both.
            let with_wall = |k: f64| imp(cap(air0.z0) + 0.5 * dc.max(0.0) + k * EPS0 * t / g.gap);
            // Grounds beside a microstrip only add capacitance: never
            // above the microstrip's own air impedance.
            let z_ms = hammerstad_jensen(w, h1, t, 1.0).ok()?.z0;
            let z_air = (with_wall(2.0).min(z_ms), with_wall(1.0).min(z_ms));
            Some(SectionEstimate {
                form: Form::Gcpw,
                signal: mode(z_air, air0.z0, sub0.eps_eff, Form::Gcpw, false),
                even: None,
            })
        }
        (Some(s), grounds) => {
            let bound = grounds.is_some();
            let air = kirschning_jansen_coupled(w, s, h1, 1.0).ok()?;
            let sub = kirschning_jansen_coupled(w, s, h1, eps_below).ok()?;
            let dc = cap(hammerstad_jensen(w, h1, t, 1.0).ok()?.z0)
                - cap(hammerstad_jensen(w, h1, 0.0, 1.0).ok()?.z0);
            let (z_odd, z_even) = thick_pair(air.modes.z_odd, air.modes.z_even, dc, t, s, h1);
            let form = if bound {
                Form::UpperBound
            } else {
                Form::CoupledMicrostrip
            };
            Some(SectionEstimate {
                form,
                signal: mode(
                    z_odd,
                    air.modes.z_odd,
                    sub.modes.eps_eff_odd,
                    Form::CoupledMicrostrip,
                    bound,
                ),
                even: Some(mode(
                    z_even,
                    air.modes.z_even,
                    sub.modes.eps_eff_even,
                    Form::CoupledMicrostrip,
                    bound,
                )),
            })
        }
    }
}

/// Per-unit-length vacuum capacitance of a line of air impedance `z`, F/m.
fn cap(z: f64) -> f64 {
    1.0 / (C0 * z)
}

/// Air impedance of a per-unit-length vacuum capacitance, ohm.
fn imp(c: f64) -> f64 {
    1.0 / (C0 * c)
}

/// A zero-thickness pair form made thick (the coupled forms take t = 0).
/// Each strip gains the thickness capacitance of a single strip of the
/// same width (`dc_single`, both sides) on its outer side (half of it);
/// its inner side gains, in the odd mode, between the single strip's half
/// and the parallel-plate capacitance of the side wall to the electric
/// wall midway across the gap, ε0·t/(s/2); in the even mode, between
/// nothing (a magnetic wall close by) and the single strip's half (strips
/// far apart), by how far apart they are against the height `h`. Returns
/// the (low, high) air impedance range of the odd and the even mode.
fn thick_pair(
    z_odd0: f64,
    z_even0: f64,
    dc_single: f64,
    t: f64,
    s: f64,
    h: f64,
) -> ((f64, f64), (f64, f64)) {
    let side = 0.5 * dc_single.max(0.0);
    let wall = EPS0 * t / (0.5 * s);
    let apart = 1.0 - (-s / h).exp();
    let odd = (
        imp(cap(z_odd0) + side + wall.max(side)),
        imp(cap(z_odd0) + side + wall.min(side)),
    );
    let even = (
        imp(cap(z_even0) + side + side * apart.max(0.5)),
        imp(cap(z_even0) + side + side * apart * 0.5),
    );
    (odd, even)
}

/// Relative difference |a − b| / |b|.
fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// Check a solution of `cs` obtained elsewhere (a cache entry) before it
/// is used: the shape matches the section; every number is finite; the
/// impedances and permittivities follow from the stored capacitance
/// matrices as the solver derives them; every modal permittivity lies
/// between the lowest and highest permittivity of the section; the energy
/// per dielectric region, where there is one, has one matrix per region,
/// no negative share and adds up to the capacitance; and the air
/// impedance and effective permittivity of each mode lie within the
/// closed-form estimate's accepted deviation. The error says which check
/// failed.
pub fn check_solution(cs: &CrossSection, s: &SolvedLine) -> Result<(), String> {
    let n = cs.conductors.len();
    if s.n != n
        || s.capacitance.len() != n * n
        || s.capacitance_vacuum.len() != n * n
        || s.inductance.len() != n * n
        || s.modal_eps_eff.len() != n
        || s.single.is_some() != (n == 1)
        || s.pair.is_some() != (n == 2)
    {
        return Err("its shape does not match the section".into());
    }
    let finite = s
        .capacitance
        .iter()
        .chain(&s.capacitance_vacuum)
        .chain(&s.inductance)
        .chain(&s.modal_eps_eff)
        .chain([&s.z_rel_error, &s.eps_rel_error])
        .all(|v| v.is_finite());
    if !finite {
        return Err("it holds a non-finite number".into());
    }
    if !(0.0..0.5).contains(&s.z_rel_error) || !(0.0..0.5).contains(&s.eps_rel_error) {
        return Err("its error estimate is not a small positive number".into());
    }
    for i in 0..n {
        if !(s.capacitance[i * n + i] > 0.0 && s.capacitance_vacuum[i * n + i] > 0.0) {
            return Err("a self-capacitance is not positive".into());
        }
    }
    // The energy per dielectric region: one matrix per region of the
    // section, each mode's share non-negative, and the shares adding up
    // to the capacitance (Euler's identity; exact with two mesh levels,
    // to the extrapolation's accuracy with three).
    if !s.filling.is_empty() {
        if s.filling.len() != cs.regions().len() || s.filling.iter().any(|f| f.len() != n * n) {
            return Err("its energy per dielectric region does not match the section".into());
        }
        match s.energy_shares(cs) {
            Some(modes)
                if modes.iter().all(|m| {
                    m.iter().all(|&v| v >= -1e-9) && (m.iter().sum::<f64>() - 1.0).abs() <= 1e-3
                }) => {}
            _ => return Err("its energy per dielectric region does not add up".into()),
        }
    }
    // The derived numbers, as the solver derives them from the matrices.
    let c: Vec<f64> = s.capacitance.iter().map(|v| v / EPS0).collect();
    let c0: Vec<f64> = s.capacitance_vacuum.iter().map(|v| v / EPS0).collect();
    let z = |cap: f64, cap0: f64| 1.0 / (C0 * EPS0 * (cap * cap0).sqrt());
    const SAME: f64 = 1e-9;
    let mut modes: Vec<(f64, f64, Option<ModeEstimate>)> = Vec::new();
    let est = estimate(cs);
    match (s.single, s.pair) {
        (Some(x), None) => {
            if rel(x.z0, z(c[0], c0[0])) > SAME || rel(x.eps_eff, c[0] / c0[0]) > SAME {
                return Err("its impedance does not follow from its capacitances".into());
            }
            modes.push((x.z0, x.eps_eff, est.map(|e| e.signal)));
        }
        (None, Some(p)) => {
            let cs_ = 0.5 * (c[0] + c[3]);
            let c0s = 0.5 * (c0[0] + c0[3]);
            let cm = 0.5 * (c[1] + c[2]);
            let c0m = 0.5 * (c0[1] + c0[2]);
            let (ce, co) = (cs_ + cm, cs_ - cm);
            let (c0e, c0o) = (c0s + c0m, c0s - c0m);
            if !(ce > 0.0 && co > 0.0 && c0e > 0.0 && c0o > 0.0) {
                return Err("a modal capacitance is not positive".into());
            }
            let consistent = rel(p.z_even, z(ce, c0e)) <= SAME
                && rel(p.z_odd, z(co, c0o)) <= SAME
                && rel(p.eps_eff_even, ce / c0e) <= SAME
                && rel(p.eps_eff_odd, co / c0o) <= SAME;
            if !consistent {
                return Err("its impedances do not follow from its capacitances".into());
            }
            modes.push((p.z_odd, p.eps_eff_odd, est.map(|e| e.signal)));
            modes.push((p.z_even, p.eps_eff_even, est.and_then(|e| e.even)));
        }
        _ => return Err("its shape does not match the section".into()),
    }
    let (lo, hi) = eps_bounds(cs);
    for e in s.modal_eps_eff.iter().chain(modes.iter().map(|m| &m.1)) {
        if *e < lo * (1.0 - 1e-6) || *e > hi * (1.0 + 1e-6) {
            return Err(format!(
                "an effective permittivity of {e:.4} lies outside the section's {lo:.3} to {hi:.3}"
            ));
        }
    }
    for (z0, eps, m) in modes {
        let Some(m) = m else { continue };
        let z_air = z0 * eps.sqrt();
        let (lo, hi) = (
            m.z_air_low * (1.0 - m.z_air_tolerance),
            m.z_air_high * (1.0 + m.z_air_tolerance),
        );
        if z_air < lo || z_air > hi {
            let near = if z_air < lo {
                m.z_air_low
            } else {
                m.z_air_high
            };
            return Err(format!(
                "its air impedance {z_air:.2} Ω is {:+.1} % from the closed form's {:.2} Ω",
                100.0 * (z_air / near - 1.0),
                near
            ));
        }
        if eps < m.eps_low || eps > m.eps_high {
            return Err(format!(
                "its effective permittivity {eps:.4} lies outside the closed form's {:.4} to {:.4}",
                m.eps_low, m.eps_high
            ));
        }
    }
    Ok(())
}
