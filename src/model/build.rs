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

/// What a file's model is built without.
#[derive(Debug, Default, Clone)]
pub struct Gaps {
    /// Elements left out unread for their schema errors: pointers of
    /// layers, classes, groups, coupons, materials, foils, or `/settings`.
    pub elements: std::collections::BTreeSet<String>,
    /// A library the file names failed to load: a material or foil the
    /// model cannot find may be one of its, and is not reported again.
    pub library_failed: bool,
}

/// Whether an error at `pointer` is confined to one net class, matched
/// group or coupon (which the model then leaves out) rather than the
/// board every class is computed on.
fn confined_to_one_line(pointer: &str) -> bool {
    ["/net-classes/", "/matched-groups/", "/coupons/"]
        .iter()
        .any(|p| pointer.starts_with(p))
}

/// Build the stackup model from a file, without what `gaps` names (the
/// elements its schema errors lie in, a library that failed).
/// `libraries` are the library files this file references that loaded, in
/// order. `rules` are the rules `settings` may name, with their options.
pub fn build_stackup(
    db: &SourceDb,
    file: FileId,
    tree: &Node,
    libraries: &[LibraryData],
    gaps: &Gaps,
    rules: &[RuleSpec],
) -> Built {
    let Some(mut r) = Reader::new(db, file, tree) else {
        return Built {
            stackup: None,
            errors: Vec::new(),
        };
    };
    r.skip = gaps.elements.clone();
    r.library_failed = gaps.library_failed;
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
    let board_ok = !gaps.library_failed
        && r.errors
            .iter()
            .map(|e| e.primary.pointer.as_str())
            .chain(gaps.elements.iter().map(String::as_str))
            .all(|p| confined_to_one_line(&format!("{p}/")));
    Built {
        stackup: board_ok.then_some(stackup),
        errors: r.errors,
    }
}
