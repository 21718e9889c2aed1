//! What the model derives from what was written: Dk estimates of plies
//! made of a resin system (Lichtenecker mixing of resin and glass), the
//! copper fill a layer gives none for, and the pressed thickness of
//! prepregs given only a nominal one.

use std::collections::BTreeMap;

use super::reader::{fmt_len, Reader};
use super::*;
use crate::input::yaml::{Node, Value};
use crate::units::{self, Dimension};

/// Resin content of the ply at `ptr` (a dielectric node): given, or the
/// typical content of its glass style (`stackup_physics::fab::GLASS_STYLES`,
/// common practice).
pub(super) fn ply_resin_content(r: &Reader<'_>, ptr: &str) -> Option<(f64, &'static str)> {
    let given = match r.node(&format!("{ptr}/resin-content")).map(|n| &n.value) {
        Some(Value::Number(v)) => Some(*v),
        Some(Value::String(t)) => units::parse_quantity(t, Dimension::Fraction).ok(),
        _ => None,
    };
    if let Some(v) = given.filter(|v| (0.0..=1.0).contains(v)) {
        return Some((v, "given resin content"));
    }
    let style = r.string(&format!("{ptr}/glass-style"))?;
    stackup_physics::fab::glass_style(&style)
        .map(|g| (g.resin_content, "typical resin content of its glass style"))
}

/// Key of the estimated material of a resin-system ply.
pub(super) fn resin_key(system: &str, content: f64) -> String {
    format!("{system} at {:.0} % resin", content * 100.0)
}

/// For every ply made of a resin system, add an estimated material:
/// Dk by the Lichtenecker rule (`stackup_physics::fab::glass_ply_dk`), Df by
/// the same rule applied to the loss angle (ln ε* = Σ vᵢ ln εᵢ*, so the loss
/// angles mix linearly by volume).
pub(super) fn estimate_resin_plies(
    r: &mut Reader<'_>,
    systems: &BTreeMap<String, ResinSystem>,
    materials: &mut BTreeMap<String, Material>,
) {
    use stackup_physics::fab::{
        glass_ply_dk, resin_volume_fraction, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY,
    };
    let n = r
        .node("/layers")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    for i in 0..n {
        let ptr = format!("/layers/{i}/dielectric");
        let Some(name) = r.string(&format!("{ptr}/material")) else {
            continue;
        };
        if materials.contains_key(&name) {
            continue;
        }
        let Some(sys) = systems.get(&name) else {
            continue;
        };
        let Some((w, how)) = ply_resin_content(r, &ptr) else {
            r.error(
                &format!("{ptr}/material"),
                format!("ply uses resin system `{name}`, whose Dk is estimated from resin content, but gives no `resin-content` and no known `glass-style`"),
                "resin content needed",
                Some("add e.g. `resin-content: 68 %` from the prepreg data, or `glass-style: 1080`".into()),
            );
            r.unusable.insert(name.clone());
            continue;
        };
        let v = resin_volume_fraction(w, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY);
        let dk = glass_ply_dk(
            w,
            sys.resin_dk,
            sys.glass_dk,
            EPOXY_RESIN_DENSITY,
            E_GLASS_DENSITY,
        );
        let (Ok(v), Ok(dk)) = (v, dk) else { continue };
        let angle = v * sys.resin_df.atan() + (1.0 - v) * sys.glass_df.atan();
        let key = resin_key(&name, w);
        materials.entry(key.clone()).or_insert_with(|| Material {
            name: key.clone(),
            file: sys.file,
            pointer: sys.pointer.clone(),
            class: sys.class.clone(),
            points: vec![DkPoint {
                frequency: sys.frequency,
                dk,
                df: angle.tan(),
            }],
            valid_from: sys.valid_from,
            valid_to: sys.valid_to,
            method: MeasurementMethod::Unknown,
            dk_tolerance: None,
            estimate: Some(format!(
                "estimate: Lichtenecker mix of resin Dk {:.2} and glass Dk {:.2} at {:.0} % resin by weight ({how})",
                sys.resin_dk,
                sys.glass_dk,
                w * 100.0
            )),
            glass_dk: Some(sys.glass_dk),
        });
    }
}

/// Copper fill assumed when a layer gives none: planes 0.9, mixed 0.6,
/// signal 0.3 (common practice, no source; fabricators use similar values).
pub fn default_fill(role: CopperRole) -> f64 {
    match role {
        CopperRole::Plane => 0.9,
        CopperRole::Mixed => 0.6,
        CopperRole::Signal => 0.3,
    }
}

/// Pressed thickness of prepregs and bonding films given only a nominal
/// thickness: resin flows into the etched copper of the neighbouring layers
/// (`stackup_physics::fab::pressed_prepreg_thickness`).
pub(super) fn press_prepregs(r: &mut Reader<'_>, layers: &mut [Layer]) {
    use stackup_physics::fab::{pressed_prepreg_thickness, PrepregFace};
    for k in 0..layers.len() {
        let LayerKind::Dielectric(d) = &layers[k].kind else {
            continue;
        };
        if d.pressed_given
            || !matches!(
                d.kind,
                DielectricKind::Prepreg | DielectricKind::BondingFilm
            )
        {
            continue;
        }
        let Some(nominal) = d.nominal_thickness else {
            continue;
        };
        let face = |j: Option<usize>| match j.and_then(|j| layers.get(j)).map(|l| &l.kind) {
            Some(LayerKind::Copper(c)) => PrepregFace::Copper {
                thickness: c.thickness,
                fill: c.fill.unwrap_or_else(|| default_fill(c.role)),
            },
            _ => PrepregFace::Laminate,
        };
        let faces = [face(k.checked_sub(1)), face(Some(k + 1))];
        match pressed_prepreg_thickness(nominal, faces) {
            Ok(t) => {
                if let LayerKind::Dielectric(d) = &mut layers[k].kind {
                    d.thickness = t;
                }
            }
            Err(_) => {
                let p = format!("{}/dielectric/nominal-thickness", layers[k].pointer);
                r.error(
                    &p,
                    format!(
                        "a {} ply cannot fill the etched copper next to it: nominal {} leaves no pressed thickness",
                        d.kind.as_str(),
                        fmt_len(nominal)
                    ),
                    "too thin to fill the copper",
                    Some("use a thicker or resin-richer ply, or give the pressed `thickness`".into()),
                );
            }
        }
    }
}
