//! The dielectrics of a stackup as the lines see them: which copper faces
//! each ply touches, how rough they are, and the apparent Dk that follows,
//! at one frequency per ply chosen once (the rules and every output read
//! the same [`Ply`]).

use stackup_physics::roughness::{RoughLayerModel, RoughSurface};

use std::collections::BTreeMap;

use super::materials::{DkAt, MaterialModel};
use super::section::{implied_face, FaceRoughness};
use super::{Analysis, SIGMA};
use crate::model::{DielectricKind, Stackup};

/// A dielectric ply (solder mask left out) at the frequency its apparent
/// Dk is evaluated at.
#[derive(Debug, Clone)]
pub struct Ply {
    pub layer: usize,
    /// The net classes whose section includes this ply.
    pub users: Vec<usize>,
    /// The highest analysis frequency of those classes; without any, the
    /// highest of all classes; without any class, the frequency of the
    /// material's first data point (where its data hold best).
    pub frequency: f64,
    pub contact: DielectricContact,
}

impl Ply {
    /// Some line's field runs in this ply.
    pub fn carries_lines(&self) -> bool {
        !self.users.is_empty()
    }
}

/// Every dielectric ply but solder mask, top to bottom, with its copper
/// contact at its frequency (the one frequency policy of the project).
pub fn plies(s: &Stackup, a: &Analysis) -> Vec<Ply> {
    let f_all = a
        .classes
        .iter()
        .map(|c| c.frequency)
        .fold(0.0_f64, f64::max);
    let mut out = Vec::new();
    for k in 0..s.layers.len() {
        let Some(d) = s.dielectric(k) else { continue };
        if d.kind == DielectricKind::SolderMask {
            continue;
        }
        let users: Vec<usize> = a
            .classes
            .iter()
            .enumerate()
            .filter(|(_, c)| {
                c.geometry
                    .as_ref()
                    .is_ok_and(|g| g.slabs.iter().any(|sl| sl.layer == k))
            })
            .map(|(i, _)| i)
            .collect();
        let f = users
            .iter()
            .map(|&i| a.classes[i].frequency)
            .fold(0.0_f64, f64::max);
        let frequency = if f > 0.0 {
            f
        } else if f_all > 0.0 {
            f_all
        } else {
            s.materials
                .get(&d.material)
                .map_or(1e9, |m| m.points[0].frequency)
        };
        let Some(contact) = dielectric_contact(s, &a.materials, k, frequency) else {
            continue;
        };
        out.push(Ply {
            layer: k,
            users,
            frequency,
            contact,
        });
    }
    out
}

/// A dielectric's copper contact: which of its faces touch copper and how
/// rough, and the apparent Dk that follows.
#[derive(Debug, Clone)]
pub struct DielectricContact {
    pub layer: usize,
    pub bulk: DkAt,
    /// Copper faces touching it: (copper layer, face pointer, roughness).
    pub faces: Vec<(usize, Option<String>, FaceRoughness)>,
    /// Faces that touch another dielectric (or the board surface).
    pub dielectric_faces: usize,
    pub apparent_best: f64,
    pub apparent_worst: f64,
    pub frequency: f64,
}

/// Copper contact and apparent Dk of dielectric layer `layer` at `f`, by the
/// effective-roughness-layer model in its parallel-plate form
/// (`RoughLayerModel::apparent_dk_parallel_plate`).
pub fn dielectric_contact(
    s: &Stackup,
    materials: &BTreeMap<String, MaterialModel>,
    layer: usize,
    f: f64,
) -> Option<DielectricContact> {
    let d = s.dielectric(layer)?;
    let bulk = materials.get(&d.material)?.at(f);
    let mut faces = Vec::new();
    let mut dielectric_faces = 0;
    let above = layer
        .checked_sub(1)
        .and_then(|j| s.copper(j).map(|c| (j, false, c.down.as_ref())));
    let below = s
        .copper(layer + 1)
        .map(|c| (layer + 1, true, c.up.as_ref()));
    for side in [above, below] {
        match side {
            Some((j, up, face)) => {
                // A face without data: the range its position implies,
                // as the lines' faces carry it.
                let r = match FaceRoughness::of(face) {
                    FaceRoughness::NotDeclared => FaceRoughness::Implied(implied_face(s, j, up)),
                    r => r,
                };
                faces.push((j, face.map(|f| f.pointer.clone()), r))
            }
            None => dielectric_faces += 1,
        }
    }
    let model = RoughLayerModel::default();
    let app = |worst: bool| -> f64 {
        let surfaces: Vec<RoughSurface> = faces.iter().map(|(_, _, r)| r.surface(worst)).collect();
        model
            .apparent_dk_parallel_plate(bulk.dk, d.thickness, &surfaces, f, SIGMA)
            .unwrap_or(bulk.dk)
    };
    Some(DielectricContact {
        layer,
        bulk,
        apparent_best: app(false),
        apparent_worst: app(true),
        faces,
        dielectric_faces,
        frequency: f,
    })
}
