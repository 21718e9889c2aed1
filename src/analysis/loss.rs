//! Loss per unit length of a solved line: dielectric loss from the
//! filling-weighted loss tangent, conductor loss from the closed forms with
//! a roughness factor.

use std::collections::BTreeMap;

use stackup_physics::copper::surface_resistance;
use stackup_physics::loss;
use stackup_physics::roughness::RoughSurface;

use super::materials::DkAt;
use stackup_physics::fieldsolver::{
    modal_resistance, resistance_matrix, InductanceDerivative, MetalFaces, Region,
};

use super::section::{cross_section_owned, FaceRole, LineGeometry};
use super::{LineNumbers, LossNumbers, SIGMA};

/// Loss per metre: dielectric loss from the share of the signal mode's
/// electric energy in each dielectric (`energy`, from the solver, in the
/// order of the smooth section's regions), conductor loss from the closed
/// forms (Hammerstad-Jensen microstrip, Pozar stripline) with the
/// Hammerstad-Bekkadal roughness factor averaged over the line's faces
/// (common practice: equal weight to trace and planes).
///
/// Without energy shares (a solve that gave none) the dielectric loss
/// falls back to the thickness-weighted loss tangent of the slabs.
pub(super) fn line_loss(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    f: f64,
    smooth: &LineNumbers,
    energy: Option<&[f64]>,
    derivatives: Option<&[InductanceDerivative]>,
) -> LossNumbers {
    let mode = Mode {
        eps_eff: smooth.eps_eff,
        z: smooth.z_line(),
        index: usize::from(smooth.pair.is_some()),
    };
    mode_loss(g, dk, f, mode, energy, derivatives)
}

/// A pair's even mode, as [`line_loss`] gives the odd one (`energy`: the
/// even mode's shares); `None` for a single line.
pub(super) fn even_mode_loss(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    f: f64,
    smooth: &LineNumbers,
    energy: Option<&[f64]>,
    derivatives: Option<&[InductanceDerivative]>,
) -> Option<LossNumbers> {
    let p = smooth.pair?;
    let mode = Mode {
        eps_eff: p.eps_eff_even,
        z: p.z_even,
        index: 0,
    };
    Some(mode_loss(g, dk, f, mode, energy, derivatives))
}

/// One mode of the line: its εeff, its impedance per line, and its index
/// among the solver's modes (single line 0; pair: even 0, odd 1).
#[derive(Clone, Copy)]
struct Mode {
    eps_eff: f64,
    z: f64,
    index: usize,
}

fn mode_loss(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    f: f64,
    m: Mode,
    energy: Option<&[f64]>,
    derivatives: Option<&[InductanceDerivative]>,
) -> LossNumbers {
    let alpha_d = energy
        .and_then(|shares| {
            let (dk_now, tand, solved_eps) = region_materials(g, dk);
            // The line was solved at the class's analysis frequency; at
            // another one (a loss budget's Nyquist frequency) each region's
            // Dk has moved, and εeff with it by the same energy weights:
            // εeff(f) = εeff·Σ s_r·ε_r(f)/ε_r (first order, exact for one
            // dielectric).
            let scale: f64 = shares
                .iter()
                .zip(dk_now.iter().zip(&solved_eps))
                .map(|(s, (now, was))| s * now.map_or(1.0, |d| d / was))
                .sum();
            loss::dielectric_loss_of_mode(f, m.eps_eff * scale, shares, &tand).ok()
        })
        .unwrap_or_else(|| thickness_weighted_dielectric_loss(g, dk, f, m.eps_eff));
    let rs = surface_resistance(f, SIGMA).unwrap_or(0.0);
    let delta = stackup_physics::copper::skin_depth(f, SIGMA).unwrap_or(1e-6);
    // Each face's roughness factor by the model its foil names
    // (`loss-model:`; Hammerstad-Bekkadal by default, which saturates at
    // 2). The Cannonball-Huray factor with r = Rz/4.83 gives about 6 for
    // standard ED foil at 14 GHz, well above the 2-3 usually measured
    // (from memory; searched: measured loss enhancement of rough ED foil,
    // measured Huray factors; found only makers' pages, no paper with such
    // figures), so it is not the default until calibrated; see
    // crates/stackup-physics/README.md.
    let k_of = |face: &super::section::LineFace| -> f64 {
        let sf: RoughSurface = face.roughness.surface(true);
        let smooth = sf.rq().map_or(true, |v| v <= 0.0) && sf.rz().map_or(true, |v| v <= 0.0);
        if smooth {
            return 1.0;
        }
        face.loss_model.factor(&sf, delta).unwrap_or(1.0)
    };
    let mean = |v: Vec<f64>| {
        if v.is_empty() {
            1.0
        } else {
            v.iter().sum::<f64>() / v.len() as f64
        }
    };
    let trace_k = mean(
        g.faces
            .iter()
            .filter(|x| x.role.is_trace())
            .map(k_of)
            .collect(),
    );
    let plane_k = mean(
        g.faces
            .iter()
            .filter(|x| x.role.is_plane())
            .map(k_of)
            .collect(),
    );
    let k_rough = 0.5 * (trace_k + plane_k);
    let w = 0.5 * (g.width_bottom + g.width_top);
    let z_line = m.z;
    // The closed forms: the estimate without solved derivatives, and the
    // bound a solved (or cached) value must keep.
    let closed = |k: f64| -> f64 {
        if let Some(_top) = g.top_plane {
            let b = g.height();
            let eps = m.eps_eff;
            loss::conductor_loss_stripline_pozar(rs * k, eps, z_line, w, b, g.thickness)
                .unwrap_or(0.0)
        } else {
            loss::conductor_loss_microstrip_hj(rs, z_line, w, k).unwrap_or(0.0)
        }
    };
    // Wheeler's rule: each group of faces with its own roughness factor
    // (the edges, etched, take the mean of the trace's two faces: common
    // practice, no source).
    let face_k =
        |role: FaceRole| -> Option<f64> { g.faces.iter().find(|f| f.role == role).map(k_of) };
    let group_k = |faces: MetalFaces| -> f64 {
        match faces {
            MetalFaces::PlaneBelow => face_k(FaceRole::PlaneBelow),
            MetalFaces::PlaneAbove => face_k(FaceRole::PlaneAbove),
            MetalFaces::LayerBottom => face_k(FaceRole::TraceBottom),
            MetalFaces::LayerTop => face_k(FaceRole::TraceTop),
            MetalFaces::Edges => Some(trace_k),
        }
        .unwrap_or(1.0)
    };
    let mode = m.index;
    let solved = |d: &[InductanceDerivative], k: &dyn Fn(MetalFaces) -> f64| -> Option<f64> {
        let r = modal_resistance(&resistance_matrix(d, |f| rs * k(f)));
        r.get(mode).map(|r| r / (2.0 * z_line))
    };
    let by_rule = derivatives.and_then(|d| {
        let smooth_c = solved(d, &|_| 1.0)?;
        // A solved value far from the closed form is a broken solve or a
        // forged cache entry: keep the closed form then.
        let c = closed(1.0);
        (smooth_c.is_finite() && c > 0.0 && (0.25..=4.0).contains(&(smooth_c / c))).then_some(d)
    });
    match by_rule {
        Some(d) => {
            let faces: Vec<(MetalFaces, f64)> = d
                .iter()
                .map(|x| {
                    let one = [x.clone()];
                    let a = solved(&one, &|f| group_k(f)).unwrap_or(0.0);
                    (x.faces, loss::np_per_m_to_db_per_m(a))
                })
                .collect();
            LossNumbers {
                dielectric: loss::np_per_m_to_db_per_m(alpha_d),
                conductor_smooth: loss::np_per_m_to_db_per_m(solved(d, &|_| 1.0).unwrap_or(0.0)),
                conductor_rough: faces.iter().map(|f| f.1).sum(),
                conductor_faces: Some(faces),
                conductor_model: WHEELER_MODEL,
            }
        }
        None => LossNumbers {
            dielectric: loss::np_per_m_to_db_per_m(alpha_d),
            conductor_smooth: loss::np_per_m_to_db_per_m(closed(1.0)),
            conductor_rough: loss::np_per_m_to_db_per_m(closed(k_rough)),
            conductor_faces: None,
            conductor_model: CLOSED_FORM_MODEL,
        },
    }
}

/// Conductor loss from the solved section (see `fieldsolver::inductance_derivatives`).
pub const WHEELER_MODEL: &str = "Wheeler's incremental-inductance rule on the solved section, Hammerstad-Bekkadal roughness per face";
/// Conductor loss from the closed forms.
pub const CLOSED_FORM_MODEL: &str =
    "closed form (Hammerstad-Jensen microstrip, Pozar stripline), Hammerstad-Bekkadal roughness averaged over trace and planes";

/// Dk (at the frequency `dk` holds), loss tangent and solved permittivity
/// of each dielectric region of the smooth section, in the order of `CrossSection::regions`:
/// a slab's own material (or the resin, mask or core that fills a copper
/// slot), a block that of the slab it lies in, the air none (Dk `None`,
/// loss tangent 0).
/// A factor this close to its ceiling of 2 counts as saturated (common
/// practice, no source: K_H = 1.9 at Rq/δ ≈ 2.7).
const SATURATED_K: f64 = 1.9;

/// The faces whose roughness loss factor is a saturating one
/// (Hammerstad-Bekkadal, Groiss) at its ceiling at `f`, with their factor:
/// there the rough conductor loss is likely under-stated, since measured
/// loss of rough foil keeps rising (S. H. Hall, H. L. Heck, *Advanced
/// Signal Integrity for High-Speed Digital Designs*, Wiley-IEEE Press 2009,
/// ch. 5).
pub(super) fn saturated_faces(g: &LineGeometry, f: f64) -> Vec<(FaceRole, f64)> {
    use stackup_physics::roughness::RoughLossModel as M;
    let Ok(delta) = stackup_physics::copper::skin_depth(f, SIGMA) else {
        return Vec::new();
    };
    g.faces
        .iter()
        .filter(|face| matches!(face.loss_model, M::HammerstadBekkadal | M::Groiss))
        .filter_map(|face| {
            let sf = face.roughness.surface(true);
            let k = face.loss_model.factor(&sf, delta).ok()?;
            (k >= SATURATED_K).then_some((face.role, k))
        })
        .collect()
}

fn region_materials(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
) -> (Vec<Option<f64>>, Vec<f64>, Vec<f64>) {
    let (cs, owners) = cross_section_owned(g, None);
    let slab = |k: usize| -> Option<&DkAt> {
        g.slabs
            .get(k)
            .and_then(|sl| sl.material)
            .and_then(|m| dk.get(&m))
    };
    let (dks, tands) = cs
        .regions()
        .into_iter()
        .map(|r| match r {
            Region::Layer(k) => slab(k),
            Region::Block(b) => owners.get(b).copied().flatten().and_then(|m| dk.get(&m)),
            Region::Air => None,
        })
        .map(|d| (d.map(|d| d.dk), d.map_or(0.0, |d| d.df)))
        .unzip();
    (dks, tands, cs.region_eps())
}

/// The estimate used when the solver gave no energy shares: the loss
/// tangent weighted by thickness and Dk over the slabs, in the
/// homogeneous-stripline or microstrip filling-factor form.
fn thickness_weighted_dielectric_loss(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    f: f64,
    eps_eff: f64,
) -> f64 {
    let (mut num, mut den) = (0.0, 0.0);
    for sl in &g.slabs {
        if let Some(d) = sl.material.and_then(|m| dk.get(&m)) {
            num += sl.thickness * d.dk * d.df;
            den += sl.thickness * d.dk;
        }
    }
    let tand = if den > 0.0 { num / den } else { 0.0 };
    let eps_bulk = if den > 0.0 {
        den / g.slabs.iter().map(|s| s.thickness).sum::<f64>()
    } else {
        1.0
    };
    if g.top_plane.is_some() {
        loss::dielectric_loss_stripline(f, eps_eff, tand).unwrap_or(0.0)
    } else {
        loss::dielectric_loss_microstrip(f, eps_bulk.max(eps_eff + 1e-6), eps_eff, tand)
            .unwrap_or(0.0)
    }
}
