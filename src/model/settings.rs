//! Settings: the board-thickness target, per-rule severities and options
//! (typed, checked against each rule's declared options) and suppressions
//! (file-level and inline on elements).

use std::collections::BTreeMap;

use super::reader::{fmt_len, Reader};
use super::*;
use crate::finding::{Finding, Severity, INVALID_INPUT};
use crate::input::yaml::{Node, Value};
use crate::source::escape_token;
use crate::units::{self, Dimension};

/// Read one rule option's value as its spec says (unit, range); errors at
/// the value's span.
fn read_option(r: &mut Reader<'_>, rule: &str, spec: &OptionSpec, ptr: &str) -> Option<f64> {
    let key = spec.key;
    let node = r.node(ptr)?;
    let (dim, max) = match spec.kind {
        OptionKind::Ratio { max } => (Dimension::Fraction, max),
        OptionKind::Quantity(dim) => (dim, f64::INFINITY),
    };
    let parsed = match &node.value {
        Value::Number(n) => units::bare_number(*n, dim),
        Value::String(t) => units::parse_quantity(t, dim),
        _ => Err(units::UnitError::Empty),
    };
    let problem = match parsed {
        Ok(x) if (0.0..=max).contains(&x) => return Some(x),
        Ok(x) if matches!(spec.kind, OptionKind::Ratio { .. }) => {
            format!("option `{key}` of `{rule}` must be a fraction, got {x}")
        }
        Ok(x) => format!("option `{key}` of `{rule}` must not be negative, got {x}"),
        Err(e) => format!("option `{key}` of `{rule}`: {e}"),
    };
    r.error(ptr, problem, "invalid option value", None);
    None
}

pub(super) fn read_settings(r: &mut Reader<'_>, s: &Stackup, rules: &[RuleSpec]) -> Settings {
    let mut out = Settings::default();
    if r.node("/settings/board-thickness").is_some() {
        let p = "/settings/board-thickness";
        let target = r.bounded(
            &format!("{p}/target"),
            Dimension::Length,
            "board thickness target",
            0.0,
            20e-3,
            fmt_len,
        );
        if let Some(target) = target {
            let tol = if r.node(&format!("{p}/tolerance")).is_some() {
                r.tolerance(
                    &format!("{p}/tolerance"),
                    Dimension::Length,
                    target,
                    "board thickness tolerance",
                )
            } else {
                Some(0.10 * target)
            };
            if let Some(tolerance) = tol {
                out.board_thickness = Some(BoardThickness {
                    pointer: p.to_string(),
                    target,
                    tolerance,
                });
            }
        }
    }
    let fp = "/settings/fabrication";
    if r.node(fp).is_some() {
        let f = &mut out.fabrication;
        let p = format!("{fp}/etch-width");
        if r.node(&p).is_some() {
            if let Some(v) = etch_tolerance(r, &p) {
                f.etch_width = v;
                f.given.insert("etch-width", p);
            }
        }
        for (key, what) in [
            ("dielectric-thickness", "dielectric thickness tolerance"),
            ("copper-thickness", "copper thickness tolerance"),
            ("mask-thickness", "solder-mask thickness tolerance"),
            ("dk", "Dk tolerance"),
        ] {
            let p = format!("{fp}/{key}");
            if r.node(&p).is_none() {
                continue;
            }
            let Some(v) = tolerance_fraction(r, &p, what) else {
                continue;
            };
            let slot = match key {
                "dielectric-thickness" => &mut out.fabrication.dielectric_thickness,
                "copper-thickness" => &mut out.fabrication.copper_thickness,
                "mask-thickness" => &mut out.fabrication.mask_thickness,
                _ => &mut out.fabrication.dk,
            };
            *slot = v;
            out.fabrication.given.insert(key, p);
        }
    }
    let names = || {
        let mut v: Vec<&str> = rules.iter().map(|x| x.name).collect();
        v.sort_unstable();
        v.join(", ")
    };
    if let Some(entries) = r.node("/settings/rules").and_then(Node::as_map) {
        for e in entries {
            let ptr = format!("/settings/rules/{}", escape_token(&e.key));
            let Some(spec) = rules.iter().find(|x| x.name == e.key) else {
                let at = r.db.locate_key(r.file, &ptr);
                r.push(
                    Finding::new(
                        INVALID_INPUT,
                        at,
                        format!("there is no rule named `{}`", e.key),
                    )
                    .label("unknown rule")
                    .with_help(crate::suggest::help_for(
                        &e.key,
                        rules.iter().map(|x| x.name),
                        || format!("rules: {}", names()),
                    )),
                );
                continue;
            };
            let mut rs = RuleSettings {
                pointer: ptr.clone(),
                level: None,
                values: BTreeMap::new(),
            };
            let level_of = |s: &str| match s {
                "off" => Some(Level::Off),
                other => Severity::parse(other).map(Level::On),
            };
            match &e.value.value {
                Value::String(sv) => rs.level = level_of(sv),
                Value::Map(opts) => {
                    for o in opts {
                        if o.key == "severity" {
                            rs.level = o.value.as_str().and_then(level_of);
                            continue;
                        }
                        let optr = format!("{ptr}/{}", escape_token(&o.key));
                        match spec.options.iter().find(|x| x.key == o.key) {
                            Some(os) => {
                                if let Some(v) = read_option(r, spec.name, os, &optr) {
                                    rs.values.insert(o.key.clone(), v);
                                }
                            }
                            None => {
                                let at = r.db.locate_key(r.file, &optr);
                                let keys: Vec<&str> = spec.options.iter().map(|x| x.key).collect();
                                r.push(
                                    Finding::new(
                                        INVALID_INPUT,
                                        at,
                                        format!("rule `{}` has no option `{}`", e.key, o.key),
                                    )
                                    .label("unknown option")
                                    .with_help(
                                        crate::suggest::help_for(
                                            &o.key,
                                            keys.iter().copied().chain(["severity"]),
                                            || {
                                                if keys.is_empty() {
                                                    "this rule takes only `severity`".to_string()
                                                } else {
                                                    format!(
                                                        "options: severity, {}",
                                                        keys.join(", ")
                                                    )
                                                }
                                            },
                                        ),
                                    ),
                                );
                            }
                        }
                    }
                }
                _ => {}
            }
            out.rules.insert(e.key.clone(), rs);
        }
    }
    let n = r
        .node("/settings/suppress")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    for i in 0..n {
        let p = format!("/settings/suppress/{i}");
        let at = r.string(&format!("{p}/at"));
        if let Some(name) = &at {
            let present = s.layers.iter().any(|l| &l.name == name)
                || s.materials.contains_key(name)
                || s.net_classes.iter().any(|c| &c.name == name)
                || s.matched_groups.iter().any(|g| &g.name == name)
                || s.foils.contains_key(name);
            // An element left out for its own input error takes its
            // suppressions with it (they would only be reported unused).
            if !present && r.lost(name) {
                continue;
            }
            if !present {
                r.error(
                    &format!("{p}/at"),
                    format!("suppression names `{name}`, which is not a layer, material, foil, net class or matched group of this file"),
                    "nothing by that name",
                    crate::suggest::closest(
                        name,
                        s.layers
                            .iter()
                            .map(|l| l.name.as_str())
                            .chain(s.materials.keys().map(String::as_str))
                            .chain(s.net_classes.iter().map(|c| c.name.as_str()))
                            .chain(s.matched_groups.iter().map(|g| g.name.as_str()))
                            .chain(s.foils.keys().map(String::as_str)),
                    )
                    .map(crate::suggest::did_you_mean),
                );
                continue;
            }
        }
        out.suppressions.push(Suppression {
            pointer: p.clone(),
            rule: r.string(&format!("{p}/rule")).unwrap_or_default(),
            at,
            scope: None,
            reason: r.string(&format!("{p}/reason")).unwrap_or_default(),
        });
    }
    read_inline_suppressions(r, s, &mut out.suppressions);
    for sp in &out.suppressions {
        if !rules.iter().any(|x| x.name == sp.rule) {
            let at = r.db.locate(r.file, &format!("{}/rule", sp.pointer));
            r.push(
                Finding::new(
                    INVALID_INPUT,
                    at,
                    format!("suppression names `{}`, which is not a rule", sp.rule),
                )
                .label("unknown rule")
                .with_help(crate::suggest::help_for(
                    &sp.rule,
                    rules.iter().map(|x| x.name),
                    || format!("rules: {}", names()),
                )),
            );
        }
    }
    out
}

/// Inline `suppress:` lists on layers, net classes, matched groups and this
/// file's materials and foils: each entry suppresses its rule's findings
/// whose primary or secondary location lies under that element.
pub(super) fn read_inline_suppressions(r: &Reader<'_>, s: &Stackup, out: &mut Vec<Suppression>) {
    let mut elements: Vec<(String, String)> = Vec::new();
    elements.extend(s.layers.iter().map(|l| (l.name.clone(), l.pointer.clone())));
    elements.extend(
        s.net_classes
            .iter()
            .map(|c| (c.name.clone(), c.pointer.clone())),
    );
    elements.extend(
        s.matched_groups
            .iter()
            .map(|g| (g.name.clone(), g.pointer.clone())),
    );
    for top in ["materials", "foils"] {
        if let Some(entries) = r.node(&format!("/{top}")).and_then(Node::as_map) {
            elements.extend(
                entries
                    .iter()
                    .map(|e| (e.key.clone(), format!("/{top}/{}", escape_token(&e.key)))),
            );
        }
    }
    for (name, ptr) in elements {
        let n = r
            .node(&format!("{ptr}/suppress"))
            .and_then(Node::as_seq)
            .map_or(0, <[Node]>::len);
        for i in 0..n {
            let p = format!("{ptr}/suppress/{i}");
            out.push(Suppression {
                rule: r.string(&format!("{p}/rule")).unwrap_or_default(),
                at: Some(name.clone()),
                scope: Some(ptr.clone()),
                reason: r.string(&format!("{p}/reason")).unwrap_or_default(),
                pointer: p,
            });
        }
    }
}

/// A relative build tolerance at `p` (a thickness or Dk ±): above 0 and
/// below 50 %, else an input error there.
pub(super) fn tolerance_fraction(r: &mut Reader<'_>, p: &str, what: &str) -> Option<f64> {
    let v = r.fraction(p, what)?;
    if !(v > 0.0 && v < 0.5) {
        r.error(
            p,
            format!(
                "{what} of {:.1} % is not a build tolerance (give one between 0 and 50 %)",
                100.0 * v
            ),
            "implausible tolerance",
            None,
        );
        return None;
    }
    Some(v)
}

/// An etched-width tolerance at `p`: a length from 0 to 1 mm.
pub(super) fn etch_tolerance(r: &mut Reader<'_>, p: &str) -> Option<f64> {
    r.bounded(
        p,
        Dimension::Length,
        "etched width tolerance",
        0.0,
        1e-3,
        fmt_len,
    )
}
