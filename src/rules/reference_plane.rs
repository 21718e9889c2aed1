//! `missing-reference-plane`: a controlled-impedance line without the
//! reference planes its structure needs.

use crate::finding::{Finding, Severity};
use crate::model::{CopperRole, Structure};
use crate::rules::{Rule, RuleContext, RuleMeta};

pub struct MissingReferencePlane;

static META: RuleMeta = RuleMeta {
    name: "missing-reference-plane",
    summary:
        "a controlled-impedance net class lacks the adjacent reference plane(s) its structure needs",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/missing-reference-plane.md"),
    options: &[],
};

impl Rule for MissingReferencePlane {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let mut out = Vec::new();
        for (nc, ca) in s.net_classes.iter().zip(&cx.analysis.classes) {
            let i = nc.layer_index;
            let layer = &s.layers[i];
            let above = s.nearest_copper(i, true);
            let below = s.nearest_copper(i, false);
            let is_ref = |j: Option<usize>| {
                j.and_then(|j| s.copper(j))
                    .is_some_and(|c| c.role.is_reference())
            };
            let name_of = |j: Option<usize>| {
                j.map_or("nothing".to_string(), |j| {
                    format!(
                        "`{}` ({})",
                        s.layers[j].name,
                        s.copper(j).map_or("", |c| c.role.as_str())
                    )
                })
            };
            let here = cx.at(&format!("{}/layer", nc.pointer));
            let layer_loc = cx.at_layer(i);
            // A signal layer with no class of its own where a plane is
            // missing: most likely the plane, with `role` left as signal.
            // Its broadside findings follow from this one.
            let should_be_plane = |j: Option<usize>, f: Finding| -> Finding {
                let Some(j) = j.filter(|&j| {
                    s.copper(j).is_some_and(|c| !c.role.is_reference())
                        && !s.net_classes.iter().any(|c| c.layer_index == j)
                }) else {
                    return f;
                };
                let name = &s.layers[j].name;
                let mut f = f
                    .secondary(cx.at_layer(j), "the plane? (no net class is routed on it)")
                    .explains("broadside-signal-layers", s.layers[j].pointer.clone());
                f.message.push_str(&format!(
                    "; `{name}`, where the plane would be, is a signal layer that carries no net class: if it is a solid plane under the route, give it `role: plane`"
                ));
                f
            };
            match nc.structure {
                Structure::Microstrip
                | Structure::DiffMicrostrip
                | Structure::EmbeddedMicrostrip
                | Structure::GroundedCoplanar => {
                    // Microstrip-like lines reference the nearest copper on
                    // one side; a plane on the other side makes them striplines.
                    let (near, far) = if above.is_none() {
                        (below, above)
                    } else if below.is_none() {
                        (above, below)
                    } else {
                        // Inner layer: it is a stripline if both neighbours are planes.
                        if is_ref(above) && is_ref(below) {
                            out.push(
                                Finding::new(META.name, here.clone(), format!(
                                    "net class `{}` is declared {} but its layer `{}` lies between planes {} and {}: the line is a stripline",
                                    nc.name, nc.structure.as_str(), layer.name, name_of(above), name_of(below)
                                ))
                                .label("inner layer between two planes")
                                .with_help("declare `structure: stripline` (or diff-stripline); a microstrip model underestimates its Dk_eff and mispredicts its impedance")
                                .key(nc.structure.as_str()),
                            );
                            continue;
                        }
                        // Embedded microstrip on an inner layer with one plane.
                        if is_ref(below) {
                            (below, above)
                        } else {
                            (above, below)
                        }
                    };
                    let _ = far;
                    if !is_ref(near) {
                        out.push(should_be_plane(near,
                            Finding::new(META.name, here, format!(
                                "net class `{}` ({}) on `{}` has no reference plane next to it: the nearest copper is {}",
                                nc.name, nc.structure.as_str(), layer.name, name_of(near)
                            ))
                            .label("no adjacent plane")
                            .secondary(layer_loc, "signal layer")
                            .with_help("give the adjacent copper layer `role: plane` (or `mixed` with a solid pour under the route), or move the class to a layer next to a plane")
                            .key(name_of(near)),
                        ));
                    }
                }
                Structure::Stripline | Structure::DiffStripline => {
                    let ra = s.reference_above(i);
                    let rb = s.reference_below(i);
                    let missing: Vec<&str> = [(ra, "above"), (rb, "below")]
                        .iter()
                        .filter(|(r, _)| r.is_none())
                        .map(|(_, side)| *side)
                        .collect();
                    if !missing.is_empty() {
                        let one_side = missing.len() == 1;
                        let mut f =
                            Finding::new(META.name, here, format!(
                                "net class `{}` is a {} on `{}` but there is no reference plane {}{}",
                                nc.name, nc.structure.as_str(), layer.name, missing.join(" or "),
                                if one_side { ": with a plane on one side only it is an embedded microstrip, not a stripline" } else { "" }
                            ))
                            .label(if one_side { "plane on one side only" } else { "no planes" })
                            .secondary(layer_loc, "signal layer")
                            .with_help("add a plane on the missing side, or declare `structure: embedded-microstrip` and resize the trace for it")
                            .key(missing.join(","));
                        if ra.is_none() {
                            f = should_be_plane(above, f);
                        }
                        if rb.is_none() {
                            f = should_be_plane(below, f);
                        }
                        out.push(f);
                    }
                }
            }
            // A mixed (split) layer as a reference: the numbers hold only
            // over its solid pour.
            if let Ok(g) = &ca.geometry {
                for p in [Some(g.bottom_plane), g.top_plane].into_iter().flatten() {
                    if s.copper(p).is_some_and(|c| c.role == CopperRole::Mixed) {
                        out.push(
                            Finding::new(META.name, cx.at(&format!("{}/layer", nc.pointer)), format!(
                                "net class `{}` uses `{}`, a mixed (split) layer, as a reference: its impedance holds only where the pour under the route is continuous",
                                nc.name, s.layers[p].name
                            ))
                            .with_severity(Severity::Note)
                            .label("reference is a mixed layer")
                            .secondary(cx.at_layer(p), "mixed layer")
                            .with_help("keep the route over solid pour, never across a split or a void; where it must cross, stitch a capacitor or a via across the split next to it")
                            .key(format!("mixed:{}", s.layers[p].name)),
                        );
                    }
                }
            }
            // Explicit references must be the planes actually next to the line.
            if let Some(refs) = &nc.references {
                for (k, &r) in refs.iter().enumerate() {
                    let role = s.copper(r).map(|c| c.role);
                    if !role.is_some_and(|c| c.is_reference()) {
                        let f = Finding::new(META.name, cx.at(&format!("{}/references/{k}", nc.pointer)), format!(
                                "net class `{}` names `{}` as its reference, but that layer is a {} layer, not a plane",
                                nc.name, s.layers[r].name, role.map_or("", |c| c.as_str())
                            ))
                            .label("not a plane")
                            .with_help("set `role: plane` on that layer if it is a solid plane under the route")
                            .key(s.layers[r].name.clone());
                        // Named as the reference: the layer itself is the
                        // candidate (its findings follow when it carries no
                        // class).
                        let f = if s.net_classes.iter().any(|c| c.layer_index == r) {
                            f
                        } else {
                            f.explains("broadside-signal-layers", s.layers[r].pointer.clone())
                        };
                        out.push(f);
                    } else if Some(r) != s.reference_above(i) && Some(r) != s.reference_below(i) {
                        out.push(
                            Finding::new(META.name, cx.at(&format!("{}/references/{k}", nc.pointer)), format!(
                                "net class `{}` names `{}` as its reference, but a nearer plane lies between it and `{}`",
                                nc.name, s.layers[r].name, layer.name
                            ))
                            .label("not the adjacent plane")
                            .with_help("reference the nearest plane on each side; the return current flows there")
                            .key(s.layers[r].name.clone()),
                        );
                    }
                }
            }
        }
        out
    }
}
