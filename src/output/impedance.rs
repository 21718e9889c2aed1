//! The `impedance` command's table: per net class, what the stackup really
//! gives (field-solved), with smooth and rough copper.

use std::collections::BTreeMap;

use serde::Serialize;

use crate::analysis::{Analysis, ClassAnalysis, LineNumbers};
use crate::model::Stackup;

#[derive(Serialize)]
struct Row<'a> {
    net_class: &'a str,
    structure: &'a str,
    layer: &'a str,
    /// The planes the line was solved over, top to bottom (empty when it
    /// has no cross-section).
    reference_layers: Vec<&'a str>,
    width_um: f64,
    spacing_um: Option<f64>,
    frequency_ghz: f64,
    target_ohm: Option<f64>,
    smooth: Option<Numbers>,
    rough_best: Option<Numbers>,
    rough_worst: Option<Numbers>,
    roughness_unknown: bool,
    width_for_target_um: Option<f64>,
    /// A pair: the spacing that meets the target at the drawn width.
    spacing_for_target_um: Option<f64>,
    /// A pair with a stated coupling: the width and spacing that meet the
    /// target at that coupling coefficient.
    #[serde(skip_serializing_if = "Option::is_none")]
    pair_for_target_um: Option<[f64; 2]>,
    loss_db_per_mm: Option<f64>,
    loss_db_per_inch: Option<f64>,
    dielectric_loss_db_per_mm: Option<f64>,
    conductor_loss_db_per_mm: Option<f64>,
    conductor_loss_smooth_db_per_mm: Option<f64>,
    /// The rough conductor loss per group of metal faces, dB/mm (solver
    /// frame: the first plane below), when it comes from the solved section.
    conductor_loss_faces_db_per_mm: Option<BTreeMap<&'static str, f64>>,
    /// How the conductor loss was computed.
    conductor_loss_model: Option<&'static str>,
    /// Total loss over `--length`, dB (vias and connectors not included).
    loss_db_over_length: Option<f64>,
    /// The loss budget's frequency and the line's loss over its length.
    loss_budget: Option<BudgetJson>,
    /// Crosstalk from the neighbouring pair at `pair-pitch`.
    pair_crosstalk: Option<CrosstalkJson>,
    /// The worst through-via stub of an inner-layer class.
    via_stub: Option<StubJson>,
    /// Z at the build tolerances' corners.
    tolerance: Option<ToleranceJson<'a>>,
    model: &'a str,
    error: Option<String>,
    notes: &'a [String],
}

#[derive(Serialize)]
struct ToleranceJson<'a> {
    nominal_ohm: f64,
    worst_case_ohm: [f64; 2],
    rss_ohm: [f64; 2],
    corners_solved_ohm: Option<[f64; 2]>,
    contributions: Vec<ContributionJson<'a>>,
}

#[derive(Serialize)]
struct ContributionJson<'a> {
    quantity: &'a str,
    tolerance: &'a str,
    delta_ohm: f64,
}

#[derive(Serialize)]
struct BudgetJson {
    frequency_ghz: f64,
    budget_db: f64,
    length_mm: f64,
    loss_db: f64,
}

#[derive(Serialize)]
struct CrosstalkJson {
    pitch_um: f64,
    next_percent: f64,
    fext_percent_per_100_mm: f64,
    rise_time_ps: f64,
}

#[derive(Serialize)]
struct StubJson {
    length_mm: f64,
    resonance_ghz: f64,
}

#[derive(Serialize)]
struct Numbers {
    z_ohm: f64,
    z_even_ohm: Option<f64>,
    z_odd_ohm: Option<f64>,
    /// Common-mode impedance Z_even/2 of a pair.
    z_common_ohm: Option<f64>,
    eps_eff_even: Option<f64>,
    eps_eff_odd: Option<f64>,
    eps_eff: f64,
    delay_ps_per_mm: f64,
    rel_error: f64,
}

fn numbers(n: &LineNumbers) -> Numbers {
    Numbers {
        z_ohm: round(n.z, 2),
        z_even_ohm: n.pair.map(|p| round(p.z_even, 2)),
        z_odd_ohm: n.pair.map(|p| round(p.z_odd, 2)),
        z_common_ohm: n.pair.map(|p| round(p.z_common(), 2)),
        eps_eff_even: n.pair.map(|p| round(p.eps_eff_even, 4)),
        eps_eff_odd: n.pair.map(|p| round(p.eps_eff_odd, 4)),
        eps_eff: round(n.eps_eff, 4),
        delay_ps_per_mm: round(n.ps_per_mm(), 3),
        rel_error: round(n.rel_error, 5),
    }
}

fn round(v: f64, digits: i32) -> f64 {
    let p = 10f64.powi(digits);
    (v * p).round() / p
}

fn rows<'a>(s: &'a Stackup, a: &'a Analysis, length: Option<f64>) -> Vec<Row<'a>> {
    s.net_classes
        .iter()
        .zip(&a.classes)
        .enumerate()
        .map(|(i, (nc, ca)): (usize, (_, &ClassAnalysis))| Row {
            net_class: &nc.name,
            structure: nc.structure.as_str(),
            layer: &nc.layer,
            reference_layers: reference_layers(s, ca),
            width_um: round(nc.width * 1e6, 2),
            spacing_um: nc.spacing.map(|v| round(v * 1e6, 2)),
            frequency_ghz: round(ca.frequency / 1e9, 4),
            target_ohm: nc.impedance.map(|t| t.target),
            smooth: ca.smooth.as_ref().ok().map(numbers),
            rough_best: ca.rough_best.as_ref().map(numbers),
            rough_worst: ca.rough_worst.as_ref().map(numbers),
            roughness_unknown: ca.roughness_unknown,
            width_for_target_um: ca.width_for_target.map(|w| round(w * 1e6, 1)),
            spacing_for_target_um: ca.spacing_for_target.map(|w| round(w * 1e6, 1)),
            pair_for_target_um: ca
                .pair_for_target
                .map(|(w, sp)| [round(w * 1e6, 1), round(sp * 1e6, 1)]),
            loss_db_per_mm: ca.loss.as_ref().map(|l| round(l.total_rough() / 1e3, 5)),
            loss_db_per_inch: ca.loss.as_ref().map(|l| round(l.total_rough() * 0.0254, 4)),
            dielectric_loss_db_per_mm: ca.loss.as_ref().map(|l| round(l.dielectric / 1e3, 5)),
            conductor_loss_db_per_mm: ca.loss.as_ref().map(|l| round(l.conductor_rough / 1e3, 5)),
            conductor_loss_smooth_db_per_mm: ca
                .loss
                .as_ref()
                .map(|l| round(l.conductor_smooth / 1e3, 5)),
            conductor_loss_faces_db_per_mm: ca.loss.as_ref().and_then(|l| {
                l.conductor_faces.as_ref().map(|v| {
                    v.iter()
                        .map(|(f, db)| (face_name(*f), round(db / 1e3, 6)))
                        .collect()
                })
            }),
            conductor_loss_model: ca.loss.as_ref().map(|l| l.conductor_model),
            loss_db_over_length: length
                .and_then(|len| ca.loss.as_ref().map(|l| round(l.total_rough() * len, 3))),
            loss_budget: nc
                .loss_budget
                .zip(ca.budget_loss.as_ref())
                .map(|(b, (f, l))| BudgetJson {
                    frequency_ghz: round(f / 1e9, 4),
                    budget_db: b.loss,
                    length_mm: round(b.length * 1e3, 3),
                    loss_db: round(l.total_rough() * b.length, 3),
                }),
            pair_crosstalk: ca.pair_crosstalk.map(|x| CrosstalkJson {
                pitch_um: round(x.pitch * 1e6, 2),
                next_percent: round(100.0 * x.next.abs(), 3),
                fext_percent_per_100_mm: round(100.0 * (x.fext_per_metre * 0.1).abs(), 3),
                rise_time_ps: round(x.rise_time * 1e12, 2),
            }),
            via_stub: a.via_stubs.get(i).copied().flatten().map(|v| StubJson {
                length_mm: round(v.worst.length * 1e3, 3),
                resonance_ghz: round(v.worst.resonance / 1e9, 3),
            }),
            tolerance: ca.tolerance.as_ref().map(|t| ToleranceJson {
                nominal_ohm: round(t.nominal, 3),
                worst_case_ohm: [round(t.worst.0, 3), round(t.worst.1, 3)],
                rss_ohm: [round(t.rss.0, 3), round(t.rss.1, 3)],
                corners_solved_ohm: t.corners.map(|c| [round(c.0, 3), round(c.1, 3)]),
                contributions: t
                    .contributions
                    .iter()
                    .map(|c| ContributionJson {
                        quantity: &c.what,
                        tolerance: &c.tolerance,
                        delta_ohm: round(c.dz, 3),
                    })
                    .collect(),
            }),
            model: ca.model,
            error: ca.smooth.as_ref().err().map(ToString::to_string),
            notes: &ca.notes,
        })
        .collect()
}

/// One dielectric ply in the JSON: the same numbers as the table and the
/// rules (`Analysis::plies`).
#[derive(Serialize)]
struct PlyJson<'a> {
    layer: &'a str,
    kind: &'a str,
    material: &'a str,
    thickness_um: f64,
    frequency_ghz: f64,
    bulk_dk: f64,
    bulk_df: f64,
    apparent_dk_best: f64,
    apparent_dk_worst: f64,
    carries_lines: bool,
    copper_faces: Vec<String>,
}

/// JSON: `{"file": …, "net_classes": [ … ], "dielectrics": [ … ]}` per
/// stackup.
pub fn json(items: &[(&str, &Stackup, &Analysis)], length: Option<f64>) -> String {
    #[derive(Serialize)]
    struct File<'a> {
        file: &'a str,
        net_classes: Vec<Row<'a>>,
        dielectrics: Vec<PlyJson<'a>>,
    }
    let files: Vec<File> = items
        .iter()
        .map(|(name, s, a)| File {
            file: name,
            net_classes: rows(s, a, length),
            dielectrics: dielectric_rows(s, a)
                .into_iter()
                .filter_map(|r| {
                    let d = s.dielectric(r.layer)?;
                    let c = &r.contact;
                    Some(PlyJson {
                        layer: &s.layers[r.layer].name,
                        kind: d.kind.as_str(),
                        material: &d.material,
                        thickness_um: round(d.thickness * 1e6, 2),
                        frequency_ghz: round(r.frequency / 1e9, 4),
                        bulk_dk: round(c.bulk.dk, 4),
                        bulk_df: round(c.bulk.df, 5),
                        apparent_dk_best: round(c.apparent_best, 4),
                        apparent_dk_worst: round(c.apparent_worst, 4),
                        carries_lines: r.carries_lines,
                        copper_faces: r.faces,
                    })
                })
                .collect(),
        })
        .collect();
    let mut out = serde_json::to_string_pretty(&files).unwrap_or_default();
    out.push('\n');
    out
}

/// Plain text table.
/// The names of the planes a class's line was solved over, top to bottom.
fn reference_layers<'a>(s: &'a Stackup, ca: &ClassAnalysis) -> Vec<&'a str> {
    ca.geometry.as_ref().map_or(Vec::new(), |g| {
        g.reference_layers()
            .into_iter()
            .map(|i| s.layers[i].name.as_str())
            .collect()
    })
}

/// The reference-layer column of the impedance tables (the fabricator's
/// "signal layer over reference" pairing): "L2/L4" for a line between two
/// planes, "L2" over one; `None` without a cross-section.
pub fn reference_column(s: &Stackup, ca: &ClassAnalysis) -> Option<String> {
    let r = reference_layers(s, ca);
    (!r.is_empty()).then(|| r.join("/"))
}

pub fn table(name: &str, s: &Stackup, a: &Analysis, length: Option<f64>) -> String {
    let mut out = format!(
        "{name}{}\n",
        s.board
            .as_ref()
            .map(|b| format!(" — {b}"))
            .unwrap_or_default()
    );
    if s.net_classes.is_empty() {
        out.push_str("  (no net classes)\n");
        return out;
    }
    let header = [
        "net class",
        "structure",
        "layer",
        "ref",
        "W/S um",
        "f GHz",
        "target",
        "Z smooth",
        "Z rough",
        "eps_eff",
        "ps/mm",
        "dB/mm",
        "W for target",
    ];
    let mut lines: Vec<[String; 13]> = Vec::new();
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        let ws = match nc.spacing {
            Some(sp) => format!("{:.0}/{:.0}", nc.width * 1e6, sp * 1e6),
            None => format!("{:.0}", nc.width * 1e6),
        };
        let (zs, eps, delay) = match &ca.smooth {
            Ok(n) => (format!("{:.1}", n.z), n.eps_eff, n.ps_per_mm()),
            Err(_) => ("—".into(), f64::NAN, f64::NAN),
        };
        let zr = match (ca.rough_best, ca.rough_worst) {
            (Some(b), Some(w)) if (b.z - w.z).abs() >= 0.05 => {
                format!("{:.1}..{:.1}", w.z.min(b.z), w.z.max(b.z))
            }
            (_, Some(w)) => format!("{:.1}", w.z),
            _ => "—".into(),
        };
        let (eps, delay) = match ca.rough_worst {
            Some(w) => (w.eps_eff, w.ps_per_mm()),
            None => (eps, delay),
        };
        lines.push([
            nc.name.clone(),
            nc.structure.as_str().to_string(),
            nc.layer.clone(),
            reference_column(s, ca).unwrap_or_else(|| "—".into()),
            ws,
            ghz(ca.frequency),
            nc.impedance.map_or("—".into(), |t| {
                format!("{:.0}±{:.1}", t.target, t.tolerance)
            }),
            zs,
            zr,
            if eps.is_nan() {
                "—".into()
            } else {
                format!("{eps:.3}")
            },
            if delay.is_nan() {
                "—".into()
            } else {
                format!("{delay:.2}")
            },
            ca.loss
                .as_ref()
                .map_or("—".into(), |l| format!("{:.4}", l.total_rough() / 1e3)),
            ca.width_for_target
                .map_or("—".into(), |w| format!("{:.1} um", w * 1e6)),
        ]);
    }
    let mut widths = header.map(str::len);
    for l in &lines {
        for (k, c) in l.iter().enumerate() {
            widths[k] = widths[k].max(c.chars().count());
        }
    }
    let fmt_row = |cells: Vec<&str>| -> String {
        let mut r = String::from(" ");
        for (k, c) in cells.iter().enumerate() {
            r.push(' ');
            r.push_str(c);
            r.push_str(&" ".repeat(widths[k] - c.chars().count()));
            r.push(' ');
        }
        r.trim_end().to_string() + "\n"
    };
    out.push_str(&fmt_row(header.to_vec()));
    out.push_str(&fmt_row(
        widths
            .iter()
            .map(|&w| "-".repeat(w))
            .collect::<Vec<_>>()
            .iter()
            .map(String::as_str)
            .collect(),
    ));
    for l in &lines {
        out.push_str(&fmt_row(l.iter().map(String::as_str).collect()));
    }
    if let Some(len) = length {
        for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
            if let Some(l) = &ca.loss {
                out.push_str(&format!(
                    "  {}: {:.2} dB over {} at {} ({:.2} dB conductor with rough copper, {:.2} dB with smooth; {:.2} dB dielectric; {:.3} dB/inch)\n",
                    nc.name,
                    l.total_rough() * len,
                    crate::units::fmt_length(len),
                    crate::units::fmt_frequency(ca.frequency),
                    l.conductor_rough * len,
                    l.conductor_smooth * len,
                    l.dielectric * len,
                    l.total_rough() * 0.0254
                ));
            }
        }
    }
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        let (Some(t), Some(k)) = (nc.impedance, nc.impedance.and_then(|t| t.coupling)) else {
            continue;
        };
        match ca.pair_for_target {
            Some((w, sp)) => out.push_str(&format!(
                "  {}: width {:.1} um and spacing {:.1} um meet {:.1} ohm at coupling {:.3} (now {:.1} um and {:.1} um)\n",
                nc.name,
                w * 1e6,
                sp * 1e6,
                t.target,
                k,
                nc.width * 1e6,
                nc.spacing.unwrap_or(0.0) * 1e6
            )),
            None => out.push_str(&format!(
                "  {}: no width and spacing found that meet {:.1} ohm at coupling {:.3} on this stackup\n",
                nc.name, t.target, k
            )),
        }
    }
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        if let (Some(sp), Some(now)) = (ca.spacing_for_target, nc.spacing) {
            if (sp - now).abs() > 0.05e-6 {
                out.push_str(&format!(
                    "  {}: or keep the width and change the spacing to {:.1} um (now {:.1} um)\n",
                    nc.name,
                    sp * 1e6,
                    now * 1e6
                ));
            }
        }
    }
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        let Some(t) = &ca.tolerance else { continue };
        let (lo, hi) = t.extreme();
        let top: Vec<String> = {
            let mut c: Vec<_> = t.contributions.iter().collect();
            c.sort_by(|a, b| b.dz.abs().total_cmp(&a.dz.abs()));
            c.iter()
                .take(3)
                .map(|c| format!("{} {} {:+.2} ohm", c.what, c.tolerance, c.dz))
                .collect()
        };
        out.push_str(&format!(
            "  {}: Z at the build tolerances {:.1} to {:.1} ohm (worst case; RSS {:.1} to {:.1}); most from {}\n",
            nc.name,
            lo,
            hi,
            t.rss.0,
            t.rss.1,
            top.join(", ")
        ));
    }
    out.push_str("\n  Z rough, eps_eff, ps/mm and dB/mm include the declared copper roughness (worst case where a face is unknown);\n  ps/mm also includes the copper's internal inductance (beta/omega of the line's R, L, G, C);\n");
    out.push_str(
        "  W for target: base width that brings the rough line back to its target impedance.\n",
    );
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        if let Err(e) = &ca.smooth {
            out.push_str(&format!("  {}: not solved: {e}\n", nc.name));
        }
        for n in &ca.notes {
            out.push_str(&format!("  {}: {n}\n", nc.name));
        }
    }
    out.push_str(&format!("  model: {}\n", crate::analysis::FIELD_SOLVER));
    let mut loss_models: Vec<&str> = a
        .classes
        .iter()
        .filter_map(|c| c.loss.as_ref().map(|l| l.conductor_model))
        .collect();
    loss_models.sort_unstable();
    loss_models.dedup();
    for m in loss_models {
        out.push_str(&format!("  conductor loss: {m}\n"));
    }
    out.push_str(
        "  dielectric loss: each material's Df weighted by the share of the field's energy in it\n",
    );
    out.push_str(&dielectric_table(s, a));
    out
}

/// One dielectric's Dk as the lines see it.
#[derive(Debug, Clone)]
pub struct DielectricRow {
    /// Layer index in the stackup.
    pub layer: usize,
    /// Frequency the Dk is taken at, Hz: the highest analysis frequency of
    /// the lines whose section includes this dielectric (else of any line,
    /// else 1 GHz).
    pub frequency: f64,
    /// The material's Dk is a resin-content estimate.
    pub estimate: bool,
    /// Some line's field runs in this dielectric (else `frequency` is the
    /// highest of any line, for reference only).
    pub carries_lines: bool,
    pub contact: crate::analysis::dielectrics::DielectricContact,
    /// Each copper face touching it, described ("L2 Rq 0.40 um").
    pub faces: Vec<String>,
}

impl DielectricRow {
    /// Apparent Dk as text: one value, or "best..worst" where a face is unknown.
    pub fn apparent_text(&self) -> String {
        let c = &self.contact;
        if (c.apparent_worst - c.apparent_best).abs() < 0.005 {
            format!("{:.2}", c.apparent_worst)
        } else {
            format!("{:.2}..{:.2}", c.apparent_best, c.apparent_worst)
        }
    }

    /// Copper faces as text.
    pub fn faces_text(&self) -> String {
        if self.faces.is_empty() {
            "none (bonded to dielectric)".into()
        } else {
            self.faces.join(", ")
        }
    }
}

/// Per dielectric (solder mask left out): bulk Dk and the apparent Dk its
/// copper contact gives, as the analysis has them (`Analysis::plies`: the
/// same numbers the rules judge).
pub fn dielectric_rows(s: &Stackup, a: &Analysis) -> Vec<DielectricRow> {
    use crate::analysis::section::FaceRoughness;
    a.plies
        .iter()
        .map(|ply| {
            let c = &ply.contact;
            let faces: Vec<String> = c
                .faces
                .iter()
                .map(|(j, _, r)| {
                    let what = match r {
                        FaceRoughness::Known(sf) => sf
                            .rq()
                            .map_or("?".into(), |rq| format!("Rq {:.2} um", rq * 1e6)),
                        FaceRoughness::Unknown => "unknown".into(),
                        FaceRoughness::NotDeclared => "no data".into(),
                        FaceRoughness::Implied(_) => "no data (generic range)".into(),
                    };
                    format!("{} {what}", s.layers[*j].name)
                })
                .collect();
            let estimate = s
                .dielectric(ply.layer)
                .and_then(|d| s.materials.get(&d.material))
                .is_some_and(|m| m.estimate.is_some());
            DielectricRow {
                layer: ply.layer,
                frequency: ply.frequency,
                estimate,
                carries_lines: ply.carries_lines(),
                contact: c.clone(),
                faces,
            }
        })
        .collect()
}

/// `f` in GHz with at most three decimals, trailing zeros dropped.
pub fn ghz(f: f64) -> String {
    format!("{:.3}", f / 1e9)
        .trim_end_matches('0')
        .trim_end_matches('.')
        .to_string()
}

/// The dielectric table of the `impedance` command.
fn dielectric_table(s: &Stackup, a: &Analysis) -> String {
    let rows: Vec<[String; 7]> = dielectric_rows(s, a)
        .iter()
        .filter_map(|r| {
            let d = s.dielectric(r.layer)?;
            Some([
                s.layers[r.layer].name.clone(),
                d.kind.as_str().to_string(),
                format!("{:.1}", d.thickness * 1e6),
                ghz(r.frequency),
                if r.estimate {
                    format!("{:.2} (estimate)", r.contact.bulk.dk)
                } else {
                    format!("{:.2}", r.contact.bulk.dk)
                },
                r.apparent_text(),
                r.faces_text(),
            ])
        })
        .collect();
    if rows.is_empty() {
        return String::new();
    }
    let header = [
        "dielectric",
        "kind",
        "h um",
        "f GHz",
        "bulk Dk",
        "apparent Dk",
        "copper faces",
    ];
    let mut widths = header.map(str::len);
    for r in &rows {
        for (k, c) in r.iter().enumerate() {
            widths[k] = widths[k].max(c.chars().count());
        }
    }
    let line = |cells: &[&str]| -> String {
        let mut l = String::from(" ");
        for (k, c) in cells.iter().enumerate() {
            l.push(' ');
            l.push_str(c);
            l.push_str(&" ".repeat(widths[k] - c.chars().count()));
            l.push(' ');
        }
        l.trim_end().to_string() + "\n"
    };
    let mut out = String::from("\n");
    out.push_str(&line(&header));
    let dashes: Vec<String> = widths.iter().map(|&w| "-".repeat(w)).collect();
    out.push_str(&line(
        &dashes.iter().map(String::as_str).collect::<Vec<_>>(),
    ));
    for r in &rows {
        out.push_str(&line(&r.iter().map(String::as_str).collect::<Vec<_>>()));
    }
    out.push_str("  apparent Dk: effective-roughness-layer model, parallel-plate form; a range where a face's roughness is unknown\n");
    out
}

/// A group of metal faces as the JSON names it.
fn face_name(f: stackup_physics::fieldsolver::MetalFaces) -> &'static str {
    use stackup_physics::fieldsolver::MetalFaces as F;
    match f {
        F::PlaneBelow => "plane below",
        F::LayerBottom => "trace bottom",
        F::LayerTop => "trace top",
        F::Edges => "trace edges",
        F::PlaneAbove => "plane above",
    }
}
