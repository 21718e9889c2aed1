//! Layers, top to bottom: copper (role, thickness, the foil faces towards
//! each neighbour) and dielectrics (kind, material, thickness), and
//! references to them by name.

use std::collections::BTreeMap;

use super::derive::{ply_resin_content, resin_key};
use super::materials::read_roughness;
use super::reader::{fmt_len, Reader};
use super::*;
use crate::input::yaml::Node;
use crate::units::Dimension;

pub(super) fn read_layers(
    r: &mut Reader<'_>,
    materials: &BTreeMap<String, Material>,
    foils: &BTreeMap<String, Foil>,
) -> Vec<Layer> {
    let n = r
        .node("/layers")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut layers: Vec<Layer> = Vec::new();
    let mut seen: BTreeMap<String, String> = BTreeMap::new();
    let mut ok = true;
    for i in 0..n {
        let ptr = format!("/layers/{i}");
        let name = r.string(&format!("{ptr}/name")).unwrap_or_default();
        if let Some(first) = seen.get(&name) {
            let first = r.line_of(first);
            r.error(
                &format!("{ptr}/name"),
                format!("layer name `{name}` is used twice (first at line {first}); net classes could not tell them apart"),
                "duplicate layer name",
                Some("give every layer a unique name, e.g. L1..Ln for copper".into()),
            );
            ok = false;
        }
        seen.insert(name.clone(), ptr.clone());
        if r.skip.contains(&ptr) {
            ok = false;
            continue;
        }
        let kind = if r.node(&format!("{ptr}/copper")).is_some() {
            read_copper(r, &format!("{ptr}/copper"), foils).map(LayerKind::Copper)
        } else {
            read_dielectric(r, &format!("{ptr}/dielectric"), materials).map(LayerKind::Dielectric)
        };
        match kind {
            Some(kind) => layers.push(Layer {
                name,
                pointer: ptr,
                kind,
            }),
            None => ok = false,
        }
    }
    if !ok {
        r.unusable.extend(seen.into_keys());
        return Vec::new();
    }
    // Two copper layers must be separated by a dielectric.
    for w in layers.windows(2) {
        if matches!(w[0].kind, LayerKind::Copper(_)) && matches!(w[1].kind, LayerKind::Copper(_)) {
            let p = w[1].pointer.clone();
            r.error(
                &p,
                format!(
                    "copper layers `{}` and `{}` touch with no dielectric between them",
                    w[0].name, w[1].name
                ),
                "missing dielectric",
                Some("add the core or prepreg that separates them".into()),
            );
        }
    }
    layers
}

pub(super) fn read_copper(
    r: &mut Reader<'_>,
    ptr: &str,
    foils: &BTreeMap<String, Foil>,
) -> Option<CopperLayer> {
    let role = r
        .string(&format!("{ptr}/role"))
        .and_then(|w| w.parse().ok())
        .unwrap_or(CopperRole::Signal);
    let thickness = r.bounded(
        &format!("{ptr}/thickness"),
        Dimension::CopperThickness,
        "copper thickness",
        0.0,
        0.5e-3,
        fmt_len,
    );
    let fill = if r.node(&format!("{ptr}/fill")).is_some() {
        Some(r.fraction(&format!("{ptr}/fill"), "copper fill")?)
    } else {
        None
    };
    let up = read_face(r, &format!("{ptr}/up"), foils);
    let down = read_face(r, &format!("{ptr}/down"), foils);
    let tolerances = layer_tolerances(r, ptr, "copper thickness tolerance", true);
    let (thickness_tolerance, etch_tolerance) = tolerances?;
    Some(CopperLayer {
        role,
        thickness: thickness?,
        fill,
        plated: r.bool(&format!("{ptr}/plated")).unwrap_or(false),
        up: up?,
        down: down?,
        thickness_tolerance,
        etch_tolerance,
    })
}

/// A layer's own `thickness-tolerance` (and, for copper, `etch-tolerance`):
/// `Some((None, None))` when not given, `None` on an input error.
fn layer_tolerances(
    r: &mut Reader<'_>,
    ptr: &str,
    what: &str,
    copper: bool,
) -> Option<(Option<f64>, Option<f64>)> {
    let p = format!("{ptr}/thickness-tolerance");
    let thickness = match r.node(&p) {
        Some(_) => Some(super::settings::tolerance_fraction(r, &p, what)?),
        None => None,
    };
    let p = format!("{ptr}/etch-tolerance");
    let etch = match r.node(&p) {
        Some(_) if copper => Some(super::settings::etch_tolerance(r, &p)?),
        _ => None,
    };
    Some((thickness, etch))
}

/// `Some(None)` = no face given; `None` = error.
pub(super) fn read_face(
    r: &mut Reader<'_>,
    ptr: &str,
    foils: &BTreeMap<String, Foil>,
) -> Option<Option<Face>> {
    r.node(ptr).map_or(Some(None), |_| {
        let side = r
            .string(&format!("{ptr}/side"))
            .and_then(|w| w.parse().ok())
            .unwrap_or(FoilSide::Treated);
        let foil = r.string(&format!("{ptr}/foil"));
        let direct = read_roughness(r, ptr, false);
        let roughness = match (&foil, direct) {
            (Some(_), Some(_)) => {
                r.error(
                    ptr,
                    "give either `foil` or `rz`/`rq` on a face, not both",
                    "ambiguous roughness",
                    None,
                );
                return None;
            }
            (Some(name), None) => match foils.get(name) {
                Some(f) => Some(f.roughness),
                None if r.lost(name) => return None,
                None => {
                    let known: Vec<_> = foils.keys().map(String::as_str).collect();
                    r.error(
                        &format!("{ptr}/foil"),
                        format!("foil `{name}` is not defined"),
                        "unknown foil",
                        Some(crate::suggest::help_for(name, known.clone(), || {
                            if known.is_empty() {
                                "define it under `foils:` with its rz/rq".into()
                            } else {
                                format!("defined foils: {}", known.join(", "))
                            }
                        })),
                    );
                    return None;
                }
            },
            (None, Some(rough)) => Some(rough),
            (None, None) => {
                if side != FoilSide::BondTreatment {
                    r.error(
                        ptr,
                        format!("this {} face has no roughness; only a bond-treatment face may leave it unknown", side.as_str()),
                        "roughness missing",
                        Some("add `foil: NAME` or `rz: 5 um` from the foil data sheet".into()),
                    );
                    return None;
                }
                None
            }
        };
        Some(Some(Face {
            pointer: ptr.to_string(),
            side,
            roughness,
            foil,
        }))
    })
}

pub(super) fn read_dielectric(
    r: &mut Reader<'_>,
    ptr: &str,
    materials: &BTreeMap<String, Material>,
) -> Option<DielectricLayer> {
    let kind = r
        .string(&format!("{ptr}/kind"))
        .and_then(|w| w.parse().ok())
        .unwrap_or(DielectricKind::Prepreg);
    let material_pointer = format!("{ptr}/material");
    let mut material = r.string(&material_pointer).unwrap_or_default();
    if !materials.contains_key(&material) {
        if let Some((w, _)) = ply_resin_content(r, ptr) {
            let key = resin_key(&material, w);
            if materials.contains_key(&key) {
                material = key;
            }
        }
    }
    let mut ok = true;
    if !materials.contains_key(&material) && r.lost(&material) {
        ok = false;
    } else if !materials.contains_key(&material) {
        let known: Vec<_> = materials.keys().map(String::as_str).collect();
        r.error(
            &material_pointer,
            format!("material `{material}` is not defined in this file or its libraries"),
            "unknown material",
            Some(crate::suggest::help_for(&material, known.clone(), || {
                if known.is_empty() {
                    "define it under `materials:` or add a library under `libraries:`".into()
                } else {
                    format!("known materials: {}", known.join(", "))
                }
            })),
        );
        ok = false;
    }
    let tp = format!("{ptr}/thickness");
    let np = format!("{ptr}/nominal-thickness");
    let pressed = if r.node(&tp).is_some() {
        r.bounded(
            &tp,
            Dimension::Length,
            "dielectric thickness",
            0.0,
            10e-3,
            fmt_len,
        )
        .map(Some)
    } else {
        Some(None)
    };
    let nominal = if r.node(&np).is_some() {
        r.bounded(
            &np,
            Dimension::Length,
            "nominal thickness",
            0.0,
            10e-3,
            fmt_len,
        )
        .map(Some)
    } else {
        Some(None)
    };
    let resin = if r.node(&format!("{ptr}/resin-content")).is_some() {
        Some(r.fraction(&format!("{ptr}/resin-content"), "resin content")?)
    } else {
        None
    };
    let modelled_dk = r.number(&format!("{ptr}/modelled-dk"), "modelled Dk");
    if let Some(dk) = modelled_dk {
        if dk < 1.0 {
            r.error(
                &format!("{ptr}/modelled-dk"),
                format!("modelled Dk {dk} is below 1, the Dk of vacuum"),
                "not physical",
                None,
            );
            ok = false;
        } else if dk > MAX_BOARD_DK {
            r.error(
                &format!("{ptr}/modelled-dk"),
                format!("modelled Dk {dk} is above any board dielectric ({MAX_BOARD_DK} is the limit here)"),
                "above any board dielectric",
                Some("give the Dk the impedance model uses for this layer, e.g. 3.6".into()),
            );
            ok = false;
        }
    }
    let (pressed, nominal) = (pressed?, nominal?);
    let mask = if kind == DielectricKind::SolderMask {
        let thickness = pressed.or(nominal).unwrap_or(0.0);
        let coat = |r: &mut Reader<'_>, key: &str| -> Option<Option<f64>> {
            let p = format!("{ptr}/{key}");
            if r.node(&p).is_none() {
                return Some(None);
            }
            r.bounded(
                &p,
                Dimension::Length,
                "solder mask thickness",
                0.0,
                1e-3,
                fmt_len,
            )
            .map(Some)
        };
        let over_laminate = coat(r, "over-laminate");
        let over_copper = coat(r, "over-copper");
        match (
            r.string(&format!("{ptr}/shape")).as_deref(),
            over_laminate,
            over_copper,
        ) {
            (_, None, _) | (_, _, None) => {
                ok = false;
                None
            }
            (Some("planar"), Some(l), Some(c)) => {
                if l.is_some() || c.is_some() {
                    r.error(
                        &format!("{ptr}/shape"),
                        "a planar solder mask takes one `thickness`; `over-laminate` and `over-copper` describe a conformal coat".to_string(),
                        "planar with coat thicknesses",
                        Some("remove `shape: planar` to model the coat, or the coat thicknesses to keep the planar fill".into()),
                    );
                    ok = false;
                }
                Some(MaskCoat::Planar)
            }
            (_, Some(l), Some(c)) => Some(MaskCoat::Conformal {
                over_laminate: l.unwrap_or(thickness),
                over_copper: c.unwrap_or(thickness),
            }),
        }
    } else {
        for key in ["over-laminate", "over-copper", "shape"] {
            let p = format!("{ptr}/{key}");
            if r.node(&p).is_some() {
                r.error(
                    &p,
                    format!(
                        "`{key}` describes a solder mask coat; this layer is a {}",
                        kind.as_str()
                    ),
                    "only for solder mask",
                    Some("remove it, or make the layer `kind: solder-mask`".into()),
                );
                ok = false;
            }
        }
        None
    };
    let tolerance = layer_tolerances(r, ptr, "dielectric thickness tolerance", false);
    if !ok {
        return None;
    }
    let (thickness_tolerance, _) = tolerance?;
    Some(DielectricLayer {
        kind,
        material,
        material_pointer,
        thickness: pressed.or(nominal)?,
        pressed_given: pressed.is_some(),
        nominal_thickness: nominal,
        glass_style: r.string(&format!("{ptr}/glass-style")),
        resin_content: resin,
        modelled_dk,
        mask,
        thickness_tolerance,
    })
}

pub(super) fn layer_ref(r: &mut Reader<'_>, s: &Stackup, ptr: &str, want: &str) -> Option<usize> {
    let name = r.string(ptr)?;
    match s.layer_index(&name) {
        Some(i) if s.copper(i).is_some() => Some(i),
        Some(_) => {
            r.error(
                ptr,
                format!("layer `{name}` is a dielectric; {want} must be a copper layer"),
                "not a copper layer",
                None,
            );
            None
        }
        None if r.unusable.contains(&name) => None,
        None => {
            // The copper layers the file defines, also when some failed to
            // load (then the model has none).
            let copper: Vec<String> = r
                .node("/layers")
                .and_then(Node::as_seq)
                .unwrap_or_default()
                .iter()
                .filter(|l| l.get("copper").is_some())
                .filter_map(|l| l.get("name").and_then(|n| n.as_str().map(str::to_string)))
                .collect();
            let names: Vec<&str> = copper.iter().map(String::as_str).collect();
            r.error(
                ptr,
                format!("there is no layer named `{name}`"),
                "unknown layer",
                Some(crate::suggest::help_for(&name, names.clone(), || {
                    format!("copper layers: {}", names.join(", "))
                })),
            );
            None
        }
    }
}
