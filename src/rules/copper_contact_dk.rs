//! `copper-contact-dk-mismatch`: a dielectric's modelled Dk ignores what its
//! faces touch — rough copper raises the Dk a line really sees; a ply bonded
//! between laminates keeps its bulk Dk.

use crate::analysis::dielectrics::Ply;
use crate::analysis::section::FaceRoughness;
use crate::finding::{key_step, Finding, Severity};
use crate::model::MeasurementMethod;
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, fmt_length, Dimension};

pub struct CopperContactDkMismatch;

static META: RuleMeta = RuleMeta {
    name: "copper-contact-dk-mismatch",
    summary:
        "a dielectric or net class uses a Dk that ignores the copper roughness its faces touch",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/copper-contact-dk-mismatch.md"),
    options: &OPTIONS,
};

fn range(lo: f64, hi: f64) -> String {
    if (hi - lo).abs() < 0.005 {
        format!("{hi:.2}")
    } else {
        format!("{lo:.2} to {hi:.2}")
    }
}

static OPTIONS: [OptionSpec; 3] = [
    OptionSpec {
        key: "margin",
        kind: OptionKind::Quantity(Dimension::Fraction),
        // About the spread of a resonator Dk measurement (common practice,
        // no source).
        default: 0.015,
        default_text: "1.5 %",
        doc: "how far, relative to it, the apparent Dk may exceed the Dk a ply is modelled with",
    },
    OptionSpec {
        key: "assumed-dk-margin",
        kind: OptionKind::Quantity(Dimension::Fraction),
        default: 0.015,
        default_text: "1.5 %",
        doc: "how far, relative to it, a class's `assumed-dk` may lie outside its line's apparent-Dk range",
    },
    OptionSpec {
        key: "tolerance-share",
        kind: OptionKind::Quantity(Dimension::Fraction),
        // A fifth of the tolerance: less is lost in etch and thickness
        // spread (common practice, no source).
        default: 0.2,
        default_text: "20 %",
        doc: "share of a line's impedance tolerance that a ply's mis-modelled Dk must move it by before the rule fires",
    },
];

/// What modelling one ply with `assigned` instead of its apparent Dk does
/// to one line: the ply's own share of the shift, from the line solved
/// with that ply alone raised (`ClassAnalysis::ply_shares`).
struct Effect {
    class: usize,
    dz: f64,
    tolerance: f64,
    /// s/m.
    ddelay: f64,
}

/// The effect on every line with an impedance target that runs in the ply,
/// except lines already sized for their rough copper (roughness moves them
/// towards their target, so their width accounts for it).
fn effects(cx: &RuleContext<'_>, ply: &Ply, assigned: f64) -> Vec<Effect> {
    let (s, a) = (cx.stackup, cx.analysis);
    ply.users
        .iter()
        .filter_map(|&i| {
            let (nc, ca) = (&s.net_classes[i], &a.classes[i]);
            let t = nc.impedance?;
            let sm = ca.smooth.as_ref().ok()?;
            let rough = ca.rough_worst?;
            if (rough.z - t.target).abs() <= (sm.z - t.target).abs() {
                return None;
            }
            let share = ca.ply_shares.iter().find(|p| p.layer == ply.layer)?;
            let span = share.apparent - share.bulk;
            let scale = if span > 1e-9 {
                ((share.apparent - assigned) / span).max(0.0)
            } else {
                0.0
            };
            Some(Effect {
                class: i,
                dz: (share.numbers.z - sm.z) * scale,
                tolerance: t.tolerance,
                ddelay: (share.numbers.delay - sm.delay) * scale,
            })
        })
        .collect()
}

impl Rule for CopperContactDkMismatch {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let a = cx.analysis;
        let margin = cx.option(&OPTIONS[0]);
        let class_margin = cx.option(&OPTIONS[1]);
        let share = cx.option(&OPTIONS[2]);
        let mut out = Vec::new();
        for ply in &a.plies {
            let k = ply.layer;
            let layer = &s.layers[k];
            let Some(d) = s.dielectric(k) else { continue };
            let c = &ply.contact;
            let material = &s.materials[&d.material];
            let apparent_data = material.method == MeasurementMethod::TransmissionLine;
            let assigned = d.modelled_dk.unwrap_or(c.bulk.dk);
            let rough_faces: Vec<&(usize, Option<String>, FaceRoughness)> = c
                .faces
                .iter()
                .filter(|(_, _, r)| match r {
                    FaceRoughness::Known(sf) => sf.rq().is_ok_and(|rq| rq > 0.0),
                    FaceRoughness::Unknown => true,
                    // No data: the class's own note and the impedance
                    // rules carry the range; the ply claims nothing.
                    FaceRoughness::NotDeclared | FaceRoughness::Implied(_) => false,
                })
                .collect();
            let primary = match d.modelled_dk {
                Some(_) => cx.at(&format!("{}/dielectric/modelled-dk", layer.pointer)),
                None => cx.at(&d.material_pointer),
            };
            // Only plies that carry a controlled line's field matter here.
            // Transmission-line data already include their copper's roughness.
            let already_apparent = apparent_data && d.modelled_dk.is_none();
            let carries_lines = ply.carries_lines();
            let touches_rough = !rough_faces.is_empty();
            // The largest effect on a line, if it matters against that
            // line's tolerance.
            let effect = effects(cx, ply, assigned)
                .into_iter()
                .filter(|e| e.dz.abs() >= share * e.tolerance)
                .max_by(|x, y| {
                    (x.dz / x.tolerance)
                        .abs()
                        .total_cmp(&(y.dz / y.tolerance).abs())
                });
            if carries_lines
                && touches_rough
                && !already_apparent
                && assigned < c.apparent_worst * (1.0 - margin)
            {
                if let Some(e) = effect {
                    out.push(rough_finding(
                        cx,
                        ply,
                        assigned,
                        d.modelled_dk.is_some(),
                        primary,
                        c.apparent_worst * (1.0 - margin),
                        &e,
                    ));
                }
            } else if c.faces.is_empty()
                && (apparent_data || d.modelled_dk.is_some_and(|dk| dk - c.bulk.dk > margin))
            {
                let what = if apparent_data && d.modelled_dk.is_none() {
                    format!("material `{}` gives an apparent Dk {:.2} measured on transmission lines (it includes their copper roughness)", d.material, c.bulk.dk)
                } else {
                    format!(
                        "it is given modelled Dk {assigned:.2}, above its bulk Dk {:.2}",
                        c.bulk.dk
                    )
                };
                let mut f = Finding::new(
                    META.name,
                    primary,
                    format!(
                        "{} `{}` is bonded between two dielectrics with no copper on either face, so it keeps its bulk Dk, but {what}",
                        d.kind.as_str(),
                        layer.name
                    ),
                )
                .label("roughness-raised Dk on a ply with no copper contact")
                .with_help(format!(
                    "model this ply with its bulk (resonator) Dk {:.2}; a roughness-raised Dk applies only to plies that touch copper",
                    c.bulk.dk
                ))
                .key(format!("{:.2}", c.bulk.dk));
                f = f.also(cx.material_entry(&d.material), "material data");
                out.push(f);
            }
        }
        // Net classes whose assumed Dk differs from their line's apparent Dk.
        for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
            let (Some(assumed), Some((lo, hi))) = (nc.assumed_dk, ca.apparent_dk()) else {
                continue;
            };
            if assumed < lo * (1.0 - class_margin) || assumed > hi * (1.0 + class_margin) {
                let dz = ca
                    .smooth
                    .as_ref()
                    .ok()
                    .zip(ca.rough_worst)
                    .map(|(sm, r)| format!("; with it the line reads {:.1} Ω where the smooth-copper bulk-Dk model gives {:.1} Ω", r.z, sm.z))
                    .unwrap_or_default();
                out.push(
                    Finding::new(
                        META.name,
                        cx.at(&format!("{}/assumed-dk", nc.pointer)),
                        format!(
                            "net class `{}` was sized for Dk {assumed:.2}, but its line's apparent Dk at {} is {} (bulk {:.2} plus copper roughness){dz}",
                            nc.name,
                            fmt_frequency(ca.frequency),
                            range(lo, hi),
                            ca.bulk_dk().unwrap_or(f64::NAN)
                        ),
                    )
                    .label("assumed Dk")
                    .with_help(format!(
                        "resize the line for Dk {}{}",
                        range(lo, hi),
                        ca.width_for_target.map(|w| format!(" (base width {} meets the target with the declared roughness)", fmt_length(w))).unwrap_or_default()
                    ))
                    // Assumed Dk is input (0.01); the solved range moves with
                    // the mesh, so 0.02.
                    .key(format!(
                        "{}/{}/{}",
                        key_step(assumed, 0.01),
                        key_step(lo, 0.02),
                        key_step(hi, 0.02)
                    )),
                );
            }
        }
        out
    }
}

fn rough_finding(
    cx: &RuleContext<'_>,
    ply: &Ply,
    assigned: f64,
    design: bool,
    primary: crate::source::Location,
    accepted_from: f64,
    e: &Effect,
) -> Finding {
    let (k, c) = (ply.layer, &ply.contact);
    let s = cx.stackup;
    let d = s.dielectric(k).expect("dielectric layer");
    let layer = &s.layers[k];
    let faces: Vec<String> = c
        .faces
        .iter()
        .map(|(j, _, r)| {
            let what = match r {
                // As given: an Rz is never derived from an Rq in a message.
                FaceRoughness::Known(sf) => match (sf.rz, sf.rq) {
                    (Some(rz), _) => format!("Rz {} copper", fmt_length(rz)),
                    (None, Some(rq)) => format!("Rq {} copper", fmt_length(rq)),
                    (None, None) => "rough copper".to_string(),
                },
                FaceRoughness::Unknown => "bond-treated copper of unknown roughness".to_string(),
                FaceRoughness::NotDeclared | FaceRoughness::Implied(_) => {
                    "copper with no roughness data".to_string()
                }
            };
            format!("`{}` ({what})", s.layers[*j].name)
        })
        .collect();
    let unknown = c.faces.iter().any(|(_, _, r)| *r == FaceRoughness::Unknown);
    let nc = &s.net_classes[e.class];
    let z_text = format!(
        "; on its own this moves net class `{}` by {:+.1} Ω ({:.0} % of its ±{:.1} Ω tolerance) and {:+.3} ps/mm",
        nc.name,
        e.dz,
        100.0 * e.dz.abs() / e.tolerance,
        e.tolerance,
        e.ddelay * 1e9
    );
    let given = if design { "modelled Dk" } else { "bulk Dk" };
    let mut f = Finding::new(
        META.name,
        primary,
        format!(
            "{} `{}` ({}{}) touches {} but is modelled with its {given} {assigned:.2}; its apparent Dk at {} is {}{z_text}",
            d.kind.as_str(),
            layer.name,
            fmt_length(d.thickness),
            if d.is_pressed() { " pressed" } else { "" },
            faces.join(" and "),
            fmt_frequency(c.frequency),
            range(c.apparent_best, c.apparent_worst),
        ),
    )
    .label(format!("{given} {assigned:.2}"))
    .with_help(if unknown {
        format!(
            "ask the fabricator for the Rz/Rq of its bond-enhancement treatment to close the range {}; until then size the lines with Dk {:.2} for this ply (the worst case) in the impedance model the widths come from, and record it as `modelled-dk` (any value from {accepted_from:.2} is accepted)",
            range(c.apparent_best, c.apparent_worst),
            c.apparent_worst
        )
    } else {
        format!(
            "size the lines with Dk {:.2} for this ply (its apparent Dk at this frequency) in the impedance model the widths come from, then record it as `modelled-dk: {:.2}` (any value from {accepted_from:.2} is accepted); `modelled-dk` states what the design used and does not change this tool's solve. Or specify smoother foil",
            c.apparent_worst, c.apparent_worst
        )
    })
    // Solved apparent Dk: 0.02 steps (see the range above).
    .key(format!(
        "{}/{}",
        key_step(c.apparent_best, 0.02),
        key_step(c.apparent_worst, 0.02)
    ));
    // Recording the worst-case apparent Dk, rounded up to the two decimals
    // Dk is written with, is the edit the help asks for.
    let dk = (c.apparent_worst * 100.0).ceil() / 100.0;
    f = f.with_fix(
        format!(
            "record `modelled-dk: {dk:.2}` for {} `{}` (size its lines with this Dk in the impedance model the widths come from)",
            d.kind.as_str(),
            layer.name
        ),
        [cx.edit_key(
            &format!("{}/dielectric", layer.pointer),
            "modelled-dk",
            &format!("{dk:.2}"),
        )],
    );
    for (_, ptr, _) in &c.faces {
        if let Some(p) = ptr {
            f = f.secondary(cx.at(p), "copper face touching this ply");
        }
    }
    f
}
