//! Settings: the board-thickness target, per-rule severities and options
//! (typed, checked against each rule's declared options) and suppressions
//! (file-level and inline on elements).

use std::collections::BTreeMap;

use super::reader::{fmt_len, Reader};
use super::*;
use crate::finding::Severity;
use crate::input::yaml::{Node, Value};
use crate::source::escape_token;
use crate::units::Dimension;

pub(super) fn read_settings(r: &mut Reader<'_>, s: &Stackup) -> Settings {
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
    if let Some(entries) = r.node("/settings/rules").and_then(Node::as_map) {
        for e in entries {
            let ptr = format!("/settings/rules/{}", escape_token(&e.key));
            let mut rs = RuleSettings {
                pointer: ptr.clone(),
                level: None,
                options: BTreeMap::new(),
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
                        } else {
                            rs.options
                                .insert(o.key.clone(), format!("{ptr}/{}", escape_token(&o.key)));
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
            let known = s.layers.iter().any(|l| &l.name == name)
                || s.materials.contains_key(name)
                || s.net_classes.iter().any(|c| &c.name == name)
                || s.matched_groups.iter().any(|g| &g.name == name)
                || s.foils.contains_key(name)
                || r.unusable.contains(name);
            if !known {
                r.error(
                    &format!("{p}/at"),
                    format!("suppression names `{name}`, which is not a layer, material, foil, net class or matched group of this file"),
                    "nothing by that name",
                    None,
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
