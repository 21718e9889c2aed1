//! Broadside coupling of two facing signal layers (no plane between them):
//! the widest net-class trace of each layer stacked over the other (full
//! overlap, the worst case of two parallel routes), solved as one section
//! between the planes outside them.

use stackup_physics::crosstalk::next_coefficient_matrices;
use stackup_physics::fieldsolver::{CrossSection, SolvedLine, Trace};

use super::section::{self, LineGeometry};
use crate::model::{NetClass, Stackup, Structure};

/// Two facing signal layers and the coupling of their widest traces.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Broadside {
    /// Stackup layer indices, upper first.
    pub upper: usize,
    pub lower: usize,
    /// Trace widths used (the widest class on each layer; a layer without
    /// a class takes the other's), m.
    pub width_upper: f64,
    pub width_lower: f64,
    /// Saturated near-end crosstalk between the two overlapping traces.
    pub next: f64,
    /// The frequency the dielectrics' Dk is taken at, Hz.
    pub frequency: f64,
}

/// A broadside section to solve: the pair of layers, the widths and the
/// frequency, and the section.
pub struct Pending {
    pub upper: usize,
    pub lower: usize,
    pub widths: (f64, f64),
    pub frequency: f64,
    pub section: CrossSection,
}

/// The widest class trace on `layer` and the highest analysis frequency of
/// the classes there.
fn widest(s: &Stackup, layer: usize) -> Option<(&NetClass, f64)> {
    let on: Vec<&NetClass> = s
        .net_classes
        .iter()
        .filter(|c| c.layer_index == layer)
        .collect();
    let nc = on
        .iter()
        .copied()
        .max_by(|a, b| a.width.total_cmp(&b.width))?;
    let f = on
        .iter()
        .map(|c| c.analysis_frequency())
        .fold(0.0, f64::max);
    Some((nc, f))
}

/// The sections of every pair of adjacent signal layers with a class on
/// at least one of them; `eps_of(layer, f)` gives a dielectric's Dk.
pub fn sections(s: &Stackup, eps_of: &dyn Fn(usize, f64) -> f64) -> Vec<Pending> {
    let copper = s.copper_indices();
    let mut out = Vec::new();
    for w in copper.windows(2) {
        let (a, b) = (w[0], w[1]);
        let signal = |j: usize| s.copper(j).is_some_and(|c| !c.role.is_reference());
        if !(signal(a) && signal(b)) {
            continue;
        }
        let (wa, wb) = (widest(s, a), widest(s, b));
        // The layer whose class builds the section, and the other one.
        let (base, other, (nc, f_base), w_other, f_other) = match (wa, wb) {
            (Some(x), Some(y)) => (a, b, x, y.0.width, y.1),
            (Some(x), None) => (a, b, x, x.0.width, 0.0),
            (None, Some(y)) => (b, a, y, y.0.width, 0.0),
            (None, None) => continue,
        };
        let f = f_base.max(f_other);
        let mut probe = nc.clone();
        probe.structure = Structure::Stripline;
        probe.spacing = None;
        probe.gap = None;
        probe.references = None;
        let Ok(g) = section::geometry(s, &probe, &|l| eps_of(l, f)) else {
            continue;
        };
        let Some(cs) = stacked(&g, other, w_other, s) else {
            continue;
        };
        let widths = if base == a {
            (nc.width, w_other)
        } else {
            (w_other, nc.width)
        };
        out.push(Pending {
            upper: a,
            lower: b,
            widths,
            frequency: f,
            section: cs,
        });
    }
    out
}

/// The class's section with a second trace of width `w` in the copper slot
/// of layer `other`, centred over the first.
fn stacked(g: &LineGeometry, other: usize, w: f64, s: &Stackup) -> Option<CrossSection> {
    let k = g.slabs.iter().position(|sl| sl.layer == other)?;
    let y: f64 = g.slabs[..k].iter().map(|sl| sl.thickness).sum();
    let t = s.copper(other)?.thickness.min(g.slabs[k].thickness);
    let mut cs = section::cross_section(g, None);
    let x = cs.conductors.first()?.x_center;
    cs.conductors.push(Trace::rect(x, y, w, t));
    Some(cs)
}

/// The coupling of a solved broadside section.
pub fn coupling(p: &Pending, solved: &SolvedLine) -> Option<Broadside> {
    (solved.n == 2).then(|| Broadside {
        upper: p.upper,
        lower: p.lower,
        width_upper: p.widths.0,
        width_lower: p.widths.1,
        next: next_coefficient_matrices(&solved.capacitance, &solved.inductance),
        frequency: p.frequency,
    })
}
