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

static OPTIONS: [OptionSpec; 2] = [
    OptionSpec {
        key: "margin",
        kind: OptionKind::Quantity(Dimension::Fraction),
        default: 0.05,
        default_text: "0.05",
        doc: "how far the apparent Dk may exceed the Dk a ply is modelled with",
    },
    OptionSpec {
        key: "assumed-dk-margin",
        kind: OptionKind::Quantity(Dimension::Fraction),
        default: 0.05,
        default_text: "0.05",
        doc: "how far a class's `assumed-dk` may lie outside its line's apparent-Dk range",
    },
];

impl Rule for CopperContactDkMismatch {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let a = cx.analysis;
        let margin = cx.option(&OPTIONS[0]);
        let class_margin = cx.option(&OPTIONS[1]);
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
                    FaceRoughness::NotDeclared => false,
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
            if carries_lines
                && touches_rough
                && !already_apparent
                && c.apparent_worst - assigned > margin
            {
                out.push(rough_finding(
                    cx,
                    ply,
                    assigned,
                    d.modelled_dk.is_some(),
                    primary,
                    margin,
                ));
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
                f = f.secondary(cx.at_in(material.file, &material.pointer), "material data");
                out.push(f);
            }
        }
        // Net classes whose assumed Dk differs from their line's apparent Dk.
        for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
            let (Some(assumed), Some((lo, hi))) = (nc.assumed_dk, ca.apparent_dk()) else {
                continue;
            };
            if assumed < lo - class_margin || assumed > hi + class_margin {
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
    margin: f64,
) -> Finding {
    let (k, c, users) = (ply.layer, &ply.contact, &ply.users);
    let s = cx.stackup;
    let a = cx.analysis;
    let d = s.dielectric(k).expect("dielectric layer");
    let layer = &s.layers[k];
    let faces: Vec<String> = c
        .faces
        .iter()
        .map(|(j, _, r)| {
            let what = match r {
                FaceRoughness::Known(sf) => format!(
                    "{} copper",
                    sf.rz()
                        .map_or("?".into(), |rz| format!("Rz {}", fmt_length(rz)))
                ),
                FaceRoughness::Unknown => "bond-treated copper of unknown roughness".to_string(),
                FaceRoughness::NotDeclared => "copper with no roughness data".to_string(),
            };
            format!("`{}` ({what})", s.layers[*j].name)
        })
        .collect();
    let unknown = c.faces.iter().any(|(_, _, r)| *r == FaceRoughness::Unknown);
    // The impedance error on the line most affected.
    let worst_line = users
        .iter()
        .filter_map(|&i| {
            let ca = &a.classes[i];
            let sm = ca.smooth.as_ref().ok()?;
            let r = ca.rough_worst?;
            Some((i, sm.z, r.z))
        })
        .max_by(|x, y| (x.1 - x.2).abs().total_cmp(&(y.1 - y.2).abs()));
    let z_text = worst_line
        .map(|(i, zs, zr)| {
            format!(
                "; net class `{}` reads {zr:.1} Ω instead of the {zs:.1} Ω its bulk Dk gives ({:+.1} Ω)",
                s.net_classes[i].name,
                zr - zs
            )
        })
        .unwrap_or_default();
    let given = if design { "modelled Dk" } else { "bulk Dk" };
    let mut f = Finding::new(
        META.name,
        primary,
        format!(
            "{} `{}` ({}) touches {} but is modelled with its {given} {assigned:.2}; its apparent Dk at {} is {}{z_text}",
            d.kind.as_str(),
            layer.name,
            fmt_length(d.thickness),
            faces.join(" and "),
            fmt_frequency(c.frequency),
            range(c.apparent_best, c.apparent_worst),
        ),
    )
    .label(format!("{given} {assigned:.2}"))
    .with_help(if unknown {
        format!(
            "model this ply with Dk {} and ask the fabricator for the Rz/Rq of its bond-enhancement treatment to close the range (the unknown face is carried as best/worst case); tolerance margin {margin:.2}",
            range(c.apparent_best, c.apparent_worst)
        )
    } else {
        format!("model this ply with `modelled-dk: {:.2}` (its apparent Dk at this frequency), or specify smoother foil", c.apparent_worst)
    })
    // Solved apparent Dk: 0.02 steps (see the range above).
    .key(format!(
        "{}/{}",
        key_step(c.apparent_best, 0.02),
        key_step(c.apparent_worst, 0.02)
    ));
    for (_, ptr, _) in &c.faces {
        if let Some(p) = ptr {
            f = f.secondary(cx.at(p), "copper face touching this ply");
        }
    }
    f
}
