//! Build the typed model from a schema-valid YAML tree.
//!
//! The schema has already checked structure; this stage checks units,
//! ranges and references, and collects every problem as an `invalid-input`
//! finding at its span instead of stopping at the first. Each part of the
//! file has its own module (`materials`, `layers`, `net_classes`,
//! `settings`); `derive` adds what follows from them.

use std::collections::BTreeMap;

use super::derive::{estimate_resin_plies, press_prepregs};
use super::layers::read_layers;
use super::materials::read_materials_and_foils;
use super::net_classes::{read_groups, read_net_classes};
use super::reader::Reader;
use super::settings::read_settings;
use super::*;
use crate::finding::Finding;
use crate::input::yaml::Node;
use crate::source::SourceDb;

/// Factor from the Nyquist frequency to the highest frequency a class must
/// carry when only a data rate is given: the third harmonic (see
/// `stackup_physics::loss::DEFAULT_HARMONIC_FACTOR`, common practice).
pub const HARMONIC_FACTOR: f64 = stackup_physics::loss::DEFAULT_HARMONIC_FACTOR;

/// A file's model and its input errors.
#[derive(Debug)]
pub struct Built {
    /// The model, when the board itself (layers, materials, foils,
    /// settings) has no error: net classes, matched groups and coupons
    /// with errors are left out of it, so the others are analysed.
    pub stackup: Option<Stackup>,
    pub errors: Vec<Finding>,
}

/// Whether an error at `pointer` is confined to one net class, matched
/// group or coupon (which the model then leaves out) rather than the
/// board every class is computed on.
fn confined_to_one_line(pointer: &str) -> bool {
    ["/net-classes/", "/matched-groups/", "/coupons/"]
        .iter()
        .any(|p| pointer.starts_with(p))
}

/// Build the stackup model from a file whose schema errors lie in the
/// elements `skip` names (pointers of layers, classes, groups, coupons,
/// materials, foils, or `/settings`), which are left out unread.
/// `libraries` are the already-loaded library files this file references,
/// in order. `rules` are the rules `settings` may name, with their options.
pub fn build_stackup(
    db: &SourceDb,
    file: FileId,
    tree: &Node,
    libraries: &[LibraryData],
    skip: &std::collections::BTreeSet<String>,
    rules: &[RuleSpec],
) -> Built {
    let Some(mut r) = Reader::new(db, file, tree) else {
        return Built {
            stackup: None,
            errors: Vec::new(),
        };
    };
    r.skip = skip.clone();
    let own = read_materials_and_foils(&mut r);
    let mut materials = BTreeMap::new();
    let mut foils = BTreeMap::new();
    let mut systems = BTreeMap::new();
    for lib in libraries {
        materials.extend(lib.materials.clone());
        foils.extend(lib.foils.clone());
        systems.extend(lib.resin_systems.clone());
    }
    // The file's own entries win over library entries of the same name.
    for name in own.materials.keys().chain(own.resin_systems.keys()) {
        materials.remove(name);
        systems.remove(name);
    }
    materials.extend(own.materials);
    foils.extend(own.foils);
    systems.extend(own.resin_systems);
    estimate_resin_plies(&mut r, &systems, &mut materials);

    let mut layers = read_layers(&mut r, &materials, &foils);
    press_prepregs(&mut r, &mut layers);
    let mut stackup = Stackup {
        file,
        board: r.string("/board"),
        layers,
        materials,
        foils,
        net_classes: Vec::new(),
        matched_groups: Vec::new(),
        coupons: Vec::new(),
        settings: Settings::default(),
    };
    stackup.net_classes = read_net_classes(&mut r, &stackup);
    stackup.matched_groups = read_groups(&mut r, &stackup);
    stackup.coupons = super::coupons::read_coupons(&mut r, &stackup);
    if !r.skip.contains("/settings") {
        stackup.settings = read_settings(&mut r, &stackup, rules);
    }
    let board_ok = r
        .errors
        .iter()
        .map(|e| e.primary.pointer.as_str())
        .chain(skip.iter().map(String::as_str))
        .all(|p| confined_to_one_line(&format!("{p}/")));
    Built {
        stackup: board_ok.then_some(stackup),
        errors: r.errors,
    }
}
