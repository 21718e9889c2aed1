//! Loss per unit length of a solved line: dielectric loss from the
//! filling-weighted loss tangent, conductor loss from the closed forms with
//! a roughness factor.

use std::collections::BTreeMap;

use stackup_physics::copper::surface_resistance;
use stackup_physics::loss;
use stackup_physics::roughness::{hammerstad_factor, RoughSurface};

use super::materials::DkAt;
use stackup_physics::fieldsolver::Region;

use super::section::{cross_section, LineGeometry};
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
) -> LossNumbers {
    let alpha_d = energy
        .and_then(|shares| {
            let tand = region_loss_tangents(g, dk);
            loss::dielectric_loss_of_mode(f, smooth.eps_eff, shares, &tand).ok()
        })
        .unwrap_or_else(|| thickness_weighted_dielectric_loss(g, dk, f, smooth));
    let rs = surface_resistance(f, SIGMA).unwrap_or(0.0);
    let delta = stackup_physics::copper::skin_depth(f, SIGMA).unwrap_or(1e-6);
    // Hammerstad-Bekkadal factor from Rq (saturates at 2). The Cannonball-
    // Huray factor with r = Rz/4.83 gives about 6 for standard ED foil at
    // 14 GHz, well above the 2-3 usually measured (from memory), so it is not
    // the default until calibrated; see crates/stackup-physics/README.md.
    let k_of = |r: RoughSurface| -> f64 {
        let rq = r.rq().unwrap_or(0.0);
        if rq <= 0.0 {
            return 1.0;
        }
        hammerstad_factor(rq, delta).unwrap_or(1.0)
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
            .map(|x| k_of(x.roughness.surface(true)))
            .collect(),
    );
    let plane_k = mean(
        g.faces
            .iter()
            .filter(|x| x.role.is_plane())
            .map(|x| k_of(x.roughness.surface(true)))
            .collect(),
    );
    let k_rough = 0.5 * (trace_k + plane_k);
    let w = 0.5 * (g.width_bottom + g.width_top);
    let z_line = smooth.z_line();
    let alpha_c = |k: f64| -> f64 {
        if let Some(_top) = g.top_plane {
            let b = g.height();
            let eps = smooth.eps_eff;
            loss::conductor_loss_stripline_pozar(rs * k, eps, z_line, w, b, g.thickness)
                .unwrap_or(0.0)
        } else {
            loss::conductor_loss_microstrip_hj(rs, z_line, w, k).unwrap_or(0.0)
        }
    };
    LossNumbers {
        dielectric: loss::np_per_m_to_db_per_m(alpha_d),
        conductor_smooth: loss::np_per_m_to_db_per_m(alpha_c(1.0)),
        conductor_rough: loss::np_per_m_to_db_per_m(alpha_c(k_rough)),
    }
}

/// Loss tangent of each dielectric region of the smooth section, in the
/// order of `CrossSection::regions`: a slab's own material (or the resin,
/// mask or core that fills a copper slot), a block that of the slab it
/// lies in, the air none.
fn region_loss_tangents(g: &LineGeometry, dk: &BTreeMap<usize, DkAt>) -> Vec<f64> {
    let cs = cross_section(g, None);
    let slab_tand = |k: usize| -> f64 {
        g.slabs
            .get(k)
            .and_then(|sl| sl.material)
            .and_then(|m| dk.get(&m))
            .map_or(0.0, |d| d.df)
    };
    cs.regions()
        .into_iter()
        .map(|r| match r {
            Region::Layer(k) => slab_tand(k),
            Region::Block(b) => {
                let y = 0.5 * (cs.blocks[b].y0 + cs.blocks[b].y1);
                cs.layer_at(y).map_or(0.0, slab_tand)
            }
            Region::Air => 0.0,
        })
        .collect()
}

/// The estimate used when the solver gave no energy shares: the loss
/// tangent weighted by thickness and Dk over the slabs, in the
/// homogeneous-stripline or microstrip filling-factor form.
fn thickness_weighted_dielectric_loss(
    g: &LineGeometry,
    dk: &BTreeMap<usize, DkAt>,
    f: f64,
    smooth: &LineNumbers,
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
        loss::dielectric_loss_stripline(f, smooth.eps_eff, tand).unwrap_or(0.0)
    } else {
        loss::dielectric_loss_microstrip(
            f,
            eps_bulk.max(smooth.eps_eff + 1e-6),
            smooth.eps_eff,
            tand,
        )
        .unwrap_or(0.0)
    }
}
