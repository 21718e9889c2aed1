//! The frequency limits of a class's structure (the first mode beyond the
//! quasi-TEM line, the via fence), and the mode skew of a pair in unequal
//! dielectrics: computed once here, judged by the rules.

use stackup_physics::consts::C0;
use stackup_physics::coupled::ModalPair;
use stackup_physics::modes;
pub use stackup_physics::modes::{PitchCheck, PitchClass};

use super::section::LineGeometry;
use super::LineNumbers;
use crate::model::{NetClass, Structure};
use crate::units::fmt_length;

/// Upper end of the frequency range the roughness layer model was
/// calibrated over (see `stackup_physics::roughness::RoughLayerModel`).
pub const ROUGHNESS_MODEL_MAX_F: f64 = 50e9;

/// The lowest frequency at which the line stops being one quasi-TEM mode,
/// and which mode sets it.
#[derive(Debug, Clone, PartialEq)]
pub struct ModeLimit {
    /// Hz.
    pub frequency: f64,
    /// The mode, in words ("the first non-TEM parallel-plate mode of the
    /// 0.300 mm plane spacing").
    pub what: String,
}

/// The structure limits of a class at its highest frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct StructureLimits {
    /// The lowest mode onset of the structure, if any form applies.
    pub mode: Option<ModeLimit>,
    /// Highest Dk of the section's dielectrics (the one the limits use).
    pub eps_max: f64,
    /// The via-fence pitch against the guided wavelength at the class's
    /// highest frequency, when the class gives a pitch and a frequency.
    pub via_fence: Option<PitchCheck>,
}

/// Mode onsets of the structure (Wadell; Vendelin; Hammerstad; see
/// `stackup_physics::modes`), the lowest of them, and the via-fence check.
pub fn structure_limits(
    nc: &NetClass,
    g: &LineGeometry,
    smooth: Option<&LineNumbers>,
) -> StructureLimits {
    let eps_max = g
        .slabs
        .iter()
        .map(|sl| sl.eps)
        .chain(g.mask.map(|m| m.eps))
        .fold(1.0_f64, f64::max);
    let w = nc.width;
    let mut limits: Vec<(f64, String)> = Vec::new();
    if g.top_plane.is_some() {
        let b = g.height();
        if let Ok(fc) = modes::stripline_te_cutoff(w, b, eps_max) {
            limits.push((fc, "the TE-type mode across the strip (Wadell)".into()));
        }
        if let Ok(fc) = modes::parallel_plate_first_mode(b, eps_max) {
            limits.push((
                fc,
                format!(
                    "the first non-TEM parallel-plate mode of the {} plane spacing",
                    fmt_length(b)
                ),
            ));
        }
    } else {
        let h = g.h_below();
        let eps_sub = g.slabs[..g.trace_slot]
            .iter()
            .map(|sl| sl.eps)
            .fold(1.0_f64, f64::max);
        if nc.structure == Structure::GroundedCoplanar {
            if let Ok(fc) = modes::gcpw_te1_cutoff(h, eps_sub) {
                limits.push((
                    fc,
                    "the TE1 surface-wave mode of the grounded substrate".into(),
                ));
            }
        } else {
            if let Ok(fc) = modes::microstrip_tm0_coupling(h, eps_sub) {
                limits.push((
                    fc,
                    "strong coupling to the TM0 surface wave (Vendelin)".into(),
                ));
            }
            if let Ok(fc) = modes::microstrip_transverse_resonance(w, h, eps_sub) {
                limits.push((fc, "the transverse resonance of the strip".into()));
            }
            if let Some(z) = smooth.map(LineNumbers::z_line) {
                if let Ok(fc) = modes::microstrip_first_higher_order(z, h) {
                    limits.push((fc, "Hammerstad's first higher-order mode".into()));
                }
            }
        }
    }
    let mode = limits
        .into_iter()
        .min_by(|x, y| x.0.total_cmp(&y.0))
        .map(|(frequency, what)| ModeLimit { frequency, what });
    let via_fence = nc
        .via_fence_pitch
        .zip(nc.max_frequency)
        .and_then(|(pitch, fmax)| modes::via_pitch_check(pitch, fmax, eps_max).ok());
    StructureLimits {
        mode,
        eps_max,
        via_fence,
    }
}

/// The even/odd mode velocities of a pair in an inhomogeneous section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModeSkew {
    pub eps_eff_even: f64,
    pub eps_eff_odd: f64,
    /// Delay of the even mode minus the odd mode, s/m.
    pub per_metre: f64,
    /// Rise time the class's frequency implies, t_r = 0.35/f (the knee
    /// frequency, common practice), s.
    pub rise_time: f64,
}

/// The mode skew of a differential stripline (worst-case rough copper,
/// else smooth), `None` for other classes or without solved modes.
pub fn mode_skew(nc: &NetClass, numbers: Option<&LineNumbers>, f: f64) -> Option<ModeSkew> {
    if !nc.structure.is_stripline() || !nc.structure.is_differential() {
        return None;
    }
    let n = numbers?;
    let p = n.pair?;
    let (ee, eo) = (p.eps_eff_even, p.eps_eff_odd);
    let per_metre = (ee.sqrt() - eo.sqrt()) / C0;
    let rise_time = rise_time(f);
    Some(ModeSkew {
        eps_eff_even: ee,
        eps_eff_odd: eo,
        per_metre,
        rise_time,
    })
}

/// Crosstalk from a neighbouring pair of the same class at `pitch`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairCrosstalk {
    /// Centre-to-centre pitch of the pairs, m.
    pub pitch: f64,
    /// Saturated near-end crosstalk, differential to differential.
    pub next: f64,
    /// Far-end crosstalk per metre of coupled length at `rise_time`, 1/m.
    pub fext_per_metre: f64,
    /// Rise time the class's frequency implies (0.35/f), s.
    pub rise_time: f64,
}

/// Pair-to-pair crosstalk from the modes of two single traces at the three
/// edge gaps of `stackup_physics::crosstalk::pair_gaps` (superposition,
/// weak coupling).
pub fn pair_crosstalk(pitch: f64, modes: [ModalPair; 3], f: f64) -> PairCrosstalk {
    use stackup_physics::crosstalk::{fext_per_metre, next_coefficient, pair_to_pair};
    let rise_time = rise_time(f);
    PairCrosstalk {
        pitch,
        next: pair_to_pair(modes.map(|m| next_coefficient(&m))),
        fext_per_metre: pair_to_pair(modes.map(|m| fext_per_metre(&m, rise_time))),
        rise_time,
    }
}

/// The rise time a class's frequency implies, t_r = 0.35/f (the knee
/// frequency, common practice), s.
fn rise_time(f: f64) -> f64 {
    0.35 / f.max(1.0)
}
