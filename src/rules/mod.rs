//! The rule engine: a registry of rules, per-project severities and options,
//! and suppressions.
//!
//! A rule is a pure function of the model (and, for electrical rules, the
//! analysis results) that returns neutral findings. The engine decorates them:
//! configured severity, suppression state. Rules never parse YAML, never
//! solve fields and never format output.

mod board_thickness;
mod broadside;
mod copper_contact_dk;
mod coupon_disagrees;
mod frequency_validity;
mod glass_weave_skew;
mod impedance_off_target;
mod loss_budget;
mod material_data_not_causal;
mod mirror_symmetry;
mod modulation_assumed;
mod propagation_skew;
mod reference_plane;
mod roughness_drift;
mod tolerance_stack;
mod via_stub_resonance;

use crate::analysis::Analysis;
use crate::finding::{Finding, Label, Severity, INVALID_INPUT};
use crate::model::{LayerKind, Level, OptionSpec, RuleSpec, Stackup};
use crate::source::{Location, SourceDb};

/// What a rule is, for `rules`, `explain` and SARIF metadata.
#[derive(Debug)]
pub struct RuleMeta {
    /// kebab-case name, the rule's id everywhere.
    pub name: &'static str,
    /// One line: what it checks.
    pub summary: &'static str,
    pub default_severity: Severity,
    /// The rule page (rules/<name>.md), one copy.
    pub doc: &'static str,
    /// Options accepted under `settings.rules.<name>` (besides `severity`),
    /// with their defaults: checked and parsed by the model stage.
    pub options: &'static [OptionSpec],
}

/// A lint rule.
pub trait Rule: Sync {
    fn meta(&self) -> &'static RuleMeta;
    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding>;
}

/// What a rule may read.
pub struct RuleContext<'a> {
    pub stackup: &'a Stackup,
    /// Electrical results per net class (same order as `stackup.net_classes`).
    pub analysis: &'a Analysis,
    pub db: &'a SourceDb,
    rule: &'static str,
}

impl<'a> RuleContext<'a> {
    /// Location of a node of this stackup's file.
    pub fn at(&self, pointer: &str) -> Location {
        self.db.locate(self.stackup.file, pointer)
    }

    /// An edit setting the quantity at `pointer` to `si` (SI units) to a
    /// resolution of `step`, in the unit and quoting the file uses there
    /// (see [`crate::edit`]).
    pub fn edit_quantity(
        &self,
        pointer: &str,
        si: f64,
        step: f64,
        dim: crate::units::Dimension,
    ) -> Option<crate::finding::Edit> {
        crate::edit::quantity(self.db, self.stackup.file, pointer, si, step, dim)
    }

    /// An edit setting `key` of the mapping at `map_pointer` to `value`
    /// (YAML text), inserting the key if it is missing.
    pub fn edit_key(
        &self,
        map_pointer: &str,
        key: &str,
        value: &str,
    ) -> Option<crate::finding::Edit> {
        crate::edit::set_key(self.db, self.stackup.file, map_pointer, key, value)
    }

    /// Location of the key that introduces a node (for whole entries).
    pub fn at_key(&self, pointer: &str) -> Location {
        self.db.locate_key(self.stackup.file, pointer)
    }

    /// Location of layer `i`'s name (a short, one-line span).
    pub fn at_layer(&self, i: usize) -> Location {
        self.at(&format!("{}/name", self.stackup.layers[i].pointer))
    }

    /// Location of a node in any file (materials may live in libraries).
    pub fn at_in(&self, file: usize, pointer: &str) -> Location {
        self.db.locate(file, pointer)
    }

    /// Where a finding about material `name` goes. A material the
    /// stackup file defines: its entry, at `sub` (e.g. `/valid-to`; the
    /// entry itself where `sub` is not there). A library material: the
    /// first ply that names it (the board's use, where the fix and a
    /// suppression belong), with the library's entry as the second place
    /// when the library is a real file (the built-in one is not).
    pub fn at_material(&self, name: &str, sub: &str) -> (Location, Option<Location>) {
        let s = self.stackup;
        let Some(m) = s.materials.get(name) else {
            return (self.at(""), None);
        };
        let entry = {
            let at = self.at_in(m.file, &format!("{}{sub}", m.pointer));
            if at.span.is_empty() {
                self.at_in(m.file, &m.pointer)
            } else {
                at
            }
        };
        if m.file == s.file {
            return (entry, None);
        }
        let ply = s.layers.iter().find_map(|l| match &l.kind {
            LayerKind::Dielectric(d) if d.material == name => {
                Some(self.at(&format!("{}/dielectric/material", l.pointer)))
            }
            _ => None,
        });
        match ply {
            Some(p) => (p, self.is_real(m.file).then_some(entry)),
            None => (entry, None),
        }
    }

    /// Material `name`'s entry, unless it is in the built-in library
    /// (which is no file a reader or a review tool can open).
    pub fn material_entry(&self, name: &str) -> Option<Location> {
        let m = self.stackup.materials.get(name)?;
        self.is_real(m.file).then(|| self.at_in(m.file, &m.pointer))
    }

    fn is_real(&self, file: usize) -> bool {
        self.db.get(file).path != std::path::Path::new(crate::load::BUILTIN_GENERIC_NAME)
    }

    /// The value of one of this rule's options: as the file gives it in
    /// `settings.rules` (checked by the model stage), else its default.
    pub fn option(&self, spec: &OptionSpec) -> f64 {
        self.stackup
            .settings
            .rules
            .get(self.rule)
            .map_or(spec.default, |r| r.value(spec))
    }
}

/// Every rule, in the order they run and are listed.
pub fn registry() -> &'static [&'static dyn Rule] {
    &[
        &reference_plane::MissingReferencePlane,
        &broadside::BroadsideSignalLayers,
        &mirror_symmetry::StackupMirrorAsymmetry,
        &board_thickness::BoardThicknessOffTarget,
        &copper_contact_dk::CopperContactDkMismatch,
        &impedance_off_target::ImpedanceOffTarget,
        &loss_budget::InsertionLossBudget,
        &roughness_drift::RoughnessImpedanceDrift,
        &propagation_skew::PropagationSkew,
        &frequency_validity::FrequencyBeyondValidity,
        &glass_weave_skew::GlassWeaveSkew,
        &via_stub_resonance::ViaStubResonance,
        &material_data_not_causal::MaterialDataNotCausal,
        &coupon_disagrees::CouponDisagrees,
        &tolerance_stack::ImpedanceToleranceStack,
        &modulation_assumed::ModulationAssumed,
    ]
}

/// Metadata of the pseudo-rule for load, YAML, schema and model errors.
pub static INVALID_INPUT_META: RuleMeta = RuleMeta {
    name: INVALID_INPUT,
    summary: "the file cannot be read as a stackup: YAML, schema, unit or reference error",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/invalid-input.md"),
    options: &[],
};

/// Metadata of the pseudo-rule reporting suppressions that matched nothing.
pub static UNUSED_SUPPRESSION_META: RuleMeta = RuleMeta {
    name: UNUSED_SUPPRESSION,
    summary: "a suppression (in `settings.suppress` or inline on an element) matches no finding",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/unused-suppression.md"),
    options: &[],
};

pub const UNUSED_SUPPRESSION: &str = "unused-suppression";

/// Metadata of the pseudo-rule reporting net classes whose numbers could
/// not be computed (an uncheckable class must never pass).
pub static NOT_COMPUTED_META: RuleMeta = RuleMeta {
    name: NOT_COMPUTED,
    summary: "a net class's cross-section was built but its numbers could not be computed, so nothing about it is checked",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/net-class-not-computed.md"),
    options: &[],
};

pub const NOT_COMPUTED: &str = "net-class-not-computed";

/// One finding per net class whose section was built but not solved (a
/// section too extreme to mesh, a mesh budget too small): every rule that
/// reads its numbers skips it, so it must not pass in silence.
fn not_computed(stackup: &Stackup, analysis: &Analysis, db: &SourceDb) -> Vec<Finding> {
    let mut out = Vec::new();
    for (nc, ca) in stackup.net_classes.iter().zip(&analysis.classes) {
        if let (Ok(_), Err(why)) = (&ca.geometry, &ca.smooth) {
            out.push(
                Finding::new(
                    NOT_COMPUTED,
                    db.locate(stackup.file, &format!("{}/name", nc.pointer)),
                    format!(
                        "the numbers of net class `{}` could not be computed, so none of its checks ran: {why}",
                        nc.name
                    ),
                )
                .label("not checked")
                .with_help(
                    "check the class's width, spacing and gap against its layer and planes (or raise --max-mesh-nodes if the section is genuine)",
                ),
            );
        }
    }
    out
}

/// All rule metadata, the pseudo-rules included (SARIF lists them all).
pub fn all_meta() -> Vec<&'static RuleMeta> {
    let mut v: Vec<&'static RuleMeta> = registry().iter().map(|r| r.meta()).collect();
    v.push(&INVALID_INPUT_META);
    v.push(&UNUSED_SUPPRESSION_META);
    v.push(&NOT_COMPUTED_META);
    v
}

/// Every rule as the model stage checks settings against (pseudo-rules
/// included: they take a severity and may be suppressed).
pub fn specs() -> Vec<RuleSpec> {
    all_meta()
        .iter()
        .map(|m| RuleSpec {
            name: m.name,
            options: m.options,
        })
        .collect()
}

pub fn find_meta(name: &str) -> Option<&'static RuleMeta> {
    all_meta().into_iter().find(|m| m.name == name)
}

/// Run every enabled rule on one stackup; returns findings with configured
/// severities, suppressed ones marked (not dropped).
pub fn run(stackup: &Stackup, analysis: &Analysis, db: &SourceDb) -> Vec<Finding> {
    let mut out = Vec::new();
    let level = stackup
        .settings
        .rules
        .get(NOT_COMPUTED)
        .and_then(|r| r.level)
        .unwrap_or(Level::On(NOT_COMPUTED_META.default_severity));
    if let Level::On(severity) = level {
        out.extend(
            not_computed(stackup, analysis, db)
                .into_iter()
                .map(|f| f.with_severity(severity)),
        );
    }
    for rule in registry() {
        let meta = rule.meta();
        let configured = stackup.settings.rules.get(meta.name).and_then(|r| r.level);
        let level = configured.unwrap_or(Level::On(meta.default_severity));
        let Level::On(severity) = level else { continue };
        let cx = RuleContext {
            stackup,
            analysis,
            db,
            rule: meta.name,
        };
        let mut found = rule.check(&cx);
        for f in &mut found {
            f.rule = meta.name;
            if configured.is_some() || !f.severity_chosen {
                f.severity = severity;
            }
        }
        out.extend(found);
    }
    fold_consequences(&mut out);
    apply_suppressions(stackup, db, &mut out);
    out
}

/// Root causes first: a finding that `explains` others (a missing plane
/// explains the broadside warnings of the signal layer that should be it)
/// takes them in as related places, with a sentence, and they are not
/// reported on their own.
fn fold_consequences(findings: &mut Vec<Finding>) {
    let at = |f: &Finding, ptr: &str| {
        covers(ptr, &f.primary.pointer)
            || f.labels
                .iter()
                .any(|l| l.location.file == f.primary.file && covers(ptr, &l.location.pointer))
    };
    let mut folded = vec![false; findings.len()];
    for i in 0..findings.len() {
        if findings[i].explains.is_empty() {
            continue;
        }
        let mut taken = Vec::new();
        for (j, g) in findings.iter().enumerate() {
            if j == i || folded[j] || g.primary.file != findings[i].primary.file {
                continue;
            }
            if findings[i]
                .explains
                .iter()
                .any(|(rule, ptr)| g.rule == *rule && at(g, ptr))
            {
                taken.push(j);
            }
        }
        for j in taken {
            folded[j] = true;
            let g = findings[j].clone();
            let root = &mut findings[i];
            root.message.push_str(&format!(
                " (it also explains a {} finding: {})",
                g.rule, g.message
            ));
            root.labels.push(Label {
                location: g.primary.clone(),
                message: format!("follows from this ({})", g.rule),
            });
        }
    }
    let mut k = 0;
    findings.retain(|_| {
        k += 1;
        !folded[k - 1]
    });
}

/// The JSON pointers an `at:` name covers in this stackup.
fn pointers_named(stackup: &Stackup, name: &str) -> Vec<String> {
    let mut v = Vec::new();
    v.extend(
        stackup
            .layers
            .iter()
            .filter(|l| l.name == name)
            .map(|l| l.pointer.clone()),
    );
    v.extend(
        stackup
            .net_classes
            .iter()
            .filter(|c| c.name == name)
            .map(|c| c.pointer.clone()),
    );
    v.extend(
        stackup
            .matched_groups
            .iter()
            .filter(|g| g.name == name)
            .map(|g| g.pointer.clone()),
    );
    v.extend(
        stackup
            .materials
            .get(name)
            .filter(|m| m.file == stackup.file)
            .map(|m| m.pointer.clone()),
    );
    // A library material: where the board uses it (its findings are
    // placed there).
    if stackup
        .materials
        .get(name)
        .is_some_and(|m| m.file != stackup.file)
    {
        v.extend(stackup.layers.iter().filter_map(|l| match &l.kind {
            LayerKind::Dielectric(d) if d.material == name => {
                Some(format!("{}/dielectric/material", l.pointer))
            }
            _ => None,
        }));
    }
    v.extend(
        stackup
            .foils
            .get(name)
            .filter(|f| f.file == stackup.file)
            .map(|f| f.pointer.clone()),
    );
    v
}

fn covers(prefix: &str, pointer: &str) -> bool {
    pointer == prefix || pointer.starts_with(&format!("{prefix}/"))
}

fn apply_suppressions(stackup: &Stackup, db: &SourceDb, findings: &mut Vec<Finding>) {
    let mut unused = Vec::new();
    for s in &stackup.settings.suppressions {
        let scope = match &s.scope {
            Some(p) => Some(vec![p.clone()]),
            None => s.at.as_ref().map(|n| pointers_named(stackup, n)),
        };
        let mut used = false;
        for f in findings.iter_mut() {
            if f.rule != s.rule || f.rule == INVALID_INPUT || f.primary.file != stackup.file {
                continue;
            }
            let hit = match &scope {
                None => true,
                Some(ptrs) => ptrs.iter().any(|p| {
                    covers(p, &f.primary.pointer)
                        || f.labels.iter().any(|l| {
                            l.location.file == stackup.file && covers(p, &l.location.pointer)
                        })
                }),
            };
            if hit {
                used = true;
                if f.suppressed.is_none() {
                    f.suppressed = Some(s.reason.clone());
                }
            }
        }
        // An unknown rule name is already an input error; don't repeat it.
        let known = find_meta(&s.rule).is_some();
        if !used && known && s.rule != INVALID_INPUT {
            let mut f = Finding::new(
                UNUSED_SUPPRESSION,
                db.locate(stackup.file, &s.pointer),
                format!(
                    "this suppression of `{}`{} matches no finding",
                    s.rule,
                    s.at.as_ref()
                        .map(|a| format!(" at `{a}`"))
                        .unwrap_or_default()
                ),
            )
            .label("matches nothing")
            .with_help("remove it, so that a future finding of this rule is not hidden by mistake");
            f.severity = UNUSED_SUPPRESSION_META.default_severity;
            unused.push(f);
        }
    }
    findings.extend(unused);
}
