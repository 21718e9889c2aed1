//! Through-via stubs of each net class: the unused barrel beyond the layer
//! the class leaves a through via on, its quarter-wave resonance, and the
//! back-drill that shortens it.
//!
//! A through via runs from the top to the bottom outer copper. A signal that
//! enters it from the top and leaves on inner layer k leaves the barrel from
//! k down to the bottom copper as an open stub; one that enters from the
//! bottom leaves the barrel from the top copper down to k. Which side a net
//! enters from is not in the stackup, so both are computed and the longer is
//! the worst case. A class on an outer layer has no stub of its own: its
//! stub is set by the inner layer it goes to, which is that layer's class's
//! stub when that layer carries one.

use stackup_physics::vias::{quarter_wave_stub_resonance, thickness_weighted_eps};

use super::Analysis;
use crate::model::Stackup;

/// Residual stub a back-drill is asked to leave next to the signal layer,
/// m: 0.25 mm (about 10 mil), the drill's depth tolerance plus a margin so
/// that it does not cut into the layer's pad (common practice, no source).
pub const BACKDRILL_RESIDUAL: f64 = 0.25e-3;

/// Which way the stub runs from the class's layer.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StubSide {
    /// The signal enters from the top: the stub runs down to the bottom
    /// copper, and is back-drilled from the bottom.
    Below,
    /// The signal enters from the bottom: the stub runs up to the top
    /// copper, and is back-drilled from the top.
    Above,
}

/// A back-drill of a stub down to [`BACKDRILL_RESIDUAL`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Backdrill {
    /// Depth drilled, from the outer surface of the far copper, m.
    pub depth: f64,
    /// The stub left next to the class's layer, m.
    pub residual: f64,
    pub eps_eff: f64,
    /// Quarter-wave resonance of the residual stub, Hz.
    pub resonance: f64,
}

/// One stub of a through via: from the class's layer to an outer copper.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stub {
    pub side: StubSide,
    /// The outer copper layer at the stub's open end (layer index).
    pub far_copper: usize,
    /// From the class's layer's face to the far copper's outer face, m.
    pub length: f64,
    /// Thickness-weighted Dk of the dielectrics it crosses, at the class's
    /// analysis frequency.
    pub eps_eff: f64,
    /// First (quarter-wave) resonance, Hz.
    pub resonance: f64,
    /// `None` when the stub is no longer than the residual.
    pub backdrill: Option<Backdrill>,
}

/// The through-via stubs of one net class on an inner layer.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StubResonance {
    /// The class's layer (layer index).
    pub layer: usize,
    /// Frequency the Dk is taken at: the class's analysis frequency, Hz.
    pub frequency: f64,
    /// The longer stub (lower resonance) and the other one.
    pub worst: Stub,
    pub other: Stub,
}

/// The stubs of every net class, same order as the classes; `None` for a
/// class on an outer copper layer (or whose stub cannot be evaluated).
pub fn stubs(s: &Stackup, a: &Analysis) -> Vec<Option<StubResonance>> {
    s.net_classes
        .iter()
        .zip(&a.classes)
        .map(|(nc, ca)| class_stubs(s, a, nc.layer_index, ca.frequency))
        .collect()
}

fn class_stubs(s: &Stackup, a: &Analysis, k: usize, f: f64) -> Option<StubResonance> {
    let copper = s.copper_indices();
    let (&top, &bottom) = (copper.first()?, copper.last()?);
    if s.copper(k).is_none() || k <= top || k >= bottom {
        return None;
    }
    let below = stub(s, a, StubSide::Below, (k + 1..=bottom).collect(), f)?;
    let above = stub(s, a, StubSide::Above, (top..k).rev().collect(), f)?;
    let (worst, other) = if below.resonance <= above.resonance {
        (below, above)
    } else {
        (above, below)
    };
    Some(StubResonance {
        layer: k,
        frequency: f,
        worst,
        other,
    })
}

/// The stub through `path` (layer indices from the class's layer outwards;
/// the last is the far outer copper).
fn stub(s: &Stackup, a: &Analysis, side: StubSide, path: Vec<usize>, f: f64) -> Option<Stub> {
    let far_copper = *path.last()?;
    let length: f64 = path.iter().map(|&j| s.thickness(j)).sum();
    let (eps_eff, resonance) = stub_resonance(s, a, &path, length, f)?;
    let backdrill = if length > BACKDRILL_RESIDUAL {
        let (eps_eff, resonance) = stub_resonance(s, a, &path, BACKDRILL_RESIDUAL, f)?;
        Some(Backdrill {
            depth: length - BACKDRILL_RESIDUAL,
            residual: BACKDRILL_RESIDUAL,
            eps_eff,
            resonance,
        })
    } else {
        None
    };
    Some(Stub {
        side,
        far_copper,
        length,
        eps_eff,
        resonance,
        backdrill,
    })
}

/// εeff and resonance of the first `length` of the stub along `path`: the dielectrics
/// it crosses weighted by the thickness of each it crosses (copper layers,
/// whose antipads the barrel passes through, count in the length only).
fn stub_resonance(
    s: &Stackup,
    a: &Analysis,
    path: &[usize],
    length: f64,
    f: f64,
) -> Option<(f64, f64)> {
    let mut segments = Vec::new();
    let mut z = 0.0;
    for &j in path {
        let t = s.thickness(j).min(length - z);
        if t <= 0.0 {
            break;
        }
        z += t;
        if let Some(d) = s.dielectric(j) {
            segments.push((t, a.materials.get(&d.material)?.at(f).dk));
        }
    }
    let eps = thickness_weighted_eps(&segments).ok()?;
    Some((eps, quarter_wave_stub_resonance(length, eps).ok()?))
}
