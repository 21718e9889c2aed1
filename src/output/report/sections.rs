//! The report's sections, built from the stackup, its analysis and the
//! findings: summary, layers and cross-section, impedance, materials
//! (Dk/Df against frequency), matched-group skew, findings.

use std::fmt::Write as _;

use crate::analysis::Analysis;
use crate::finding::{Finding, Severity};
use crate::model::Stackup;
use crate::output::impedance::ghz;
use crate::output::Summary;
use crate::source::{line_col, SourceDb};
use crate::units::{fmt_frequency, fmt_length};

use super::document::*;
use super::{plot, slug, svg};

pub(super) fn opt(v: Option<String>) -> String {
    v.unwrap_or_else(|| "—".into())
}

/// "An 8-layer board", "A 10-layer board": a board is counted in its
/// copper layers, as boards are named, with the article its spoken number
/// takes (eight, eleven, eighteen and the eighties start with a vowel).
fn board_layers(copper: usize) -> String {
    let vowel = copper == 11 || copper == 18 || copper.to_string().starts_with('8');
    format!("{} {copper}-layer board", if vowel { "An" } else { "A" })
}

pub(super) fn summary_section(s: &Stackup, findings: &[Finding]) -> Section {
    let copper = s.copper_indices().len();
    let mut text = format!(
        "{} ({} layers of build: {} copper, {} dielectric), {} thick as pressed",
        board_layers(copper),
        s.layers.len(),
        copper,
        s.layers.len() - copper,
        fmt_length(s.total_thickness())
    );
    if let Some(bt) = &s.settings.board_thickness {
        let _ = write!(
            text,
            " against a target of {} ± {}",
            fmt_length(bt.target),
            fmt_length(bt.tolerance)
        );
    }
    let _ = write!(
        text,
        "; {} impedance-controlled net class{}, {} matched group{}.",
        s.net_classes.len(),
        if s.net_classes.len() == 1 { "" } else { "es" },
        s.matched_groups.len(),
        if s.matched_groups.len() == 1 { "" } else { "s" }
    );
    let counts = Summary::of(findings, 1).line();
    Section {
        id: "summary",
        title: "Summary",
        blocks: vec![
            Block::Paragraph(text),
            Block::Paragraph(format!("Findings: {counts}.")),
        ],
    }
}

/// The build table: every layer with its thickness in µm and mil, copper
/// weight, material or foils, and the running height from the bottom.
pub(super) fn layer_table(s: &Stackup) -> Table {
    use crate::model::LayerKind;
    use crate::units::fmt_copper_weight;
    let mut t = Table::new(&[
        "#",
        "layer",
        "kind",
        "material / copper",
        "thickness µm",
        "thickness mil",
        "lower face at mm",
    ]);
    let total = s.total_thickness();
    let mut above = 0.0;
    for (k, layer) in s.layers.iter().enumerate() {
        let th = s.thickness(k);
        let (kind, what) = match &layer.kind {
            LayerKind::Copper(c) => {
                let mut what = fmt_copper_weight(c.thickness);
                if let Some(fill) = c.fill {
                    let _ = write!(what, ", {:.0} % copper", fill * 100.0);
                }
                if c.plated {
                    what.push_str(", plated");
                }
                for (dir, face) in [("up", &c.up), ("down", &c.down)] {
                    if let Some(f) = face {
                        let _ = write!(what, "; {dir}: {}", f.side.as_str());
                        if let Some(foil) = &f.foil {
                            let _ = write!(what, " ({foil})");
                        }
                    }
                }
                (format!("copper, {}", c.role.as_str()), what)
            }
            LayerKind::Dielectric(d) => {
                let mut what = d.material.clone();
                if let Some(g) = &d.glass_style {
                    let _ = write!(what, ", {g} glass");
                }
                if let Some(rc) = d.resin_content {
                    let _ = write!(what, ", {:.0} % resin", rc * 100.0);
                }
                if let Some(n) = d.nominal_thickness {
                    let _ = write!(what, "; nominal {}", fmt_length(n));
                }
                (d.kind.as_str().to_string(), what)
            }
        };
        above += th;
        t.push(
            vec![
                (k + 1).to_string(),
                layer.name.clone(),
                kind,
                what,
                format!("{:.1}", th * 1e6),
                format!("{:.2}", th / 25.4e-6),
                format!("{:.3}", (total - above) * 1e3),
            ],
            None,
        );
    }
    t
}

pub(super) fn cross_section_section(
    s: &Stackup,
    a: &Analysis,
    stem: &str,
    rows: &[crate::output::impedance::DielectricRow],
    opts: &ReportOptions,
) -> Section {
    let fig = |to_scale: bool| Figure {
        file: format!(
            "{stem}-cross-section{}.svg",
            if to_scale { "-to-scale" } else { "" }
        ),
        caption: if to_scale {
            "Cross-section, heights to scale".into()
        } else {
            "Cross-section, heights exaggerated for reading".into()
        },
        svg: svg::cross_section(s, a, rows, to_scale),
    };
    let mut blocks = vec![
        Block::CrossSection {
            readable: fig(false),
            scaled: fig(true),
            to_scale: opts.to_scale,
        },
        Block::Heading("Layers".into()),
        Block::Table(layer_table(s)),
        Block::Note("Top to bottom as built; dielectric thickness as pressed. 1 mil = 25.4 µm; copper weight in ounces (1 oz = 28.35 g of copper over one square foot, 34.3 µm); the last column is the height of each layer's lower face above the bottom of the board.".into()),
    ];
    let mut t = Table::new(&[
        "layer",
        "kind",
        "material",
        "pressed thickness",
        "f GHz",
        "bulk Dk",
        "Df",
        "apparent Dk",
        "copper faces",
    ]);
    for r in rows {
        let Some(d) = s.dielectric(r.layer) else {
            continue;
        };
        let thickness = match d.nominal_thickness {
            Some(n) => format!("{} (nominal {})", fmt_length(d.thickness), fmt_length(n)),
            None => fmt_length(d.thickness),
        };
        let bulk = r.contact.bulk;
        t.push(
            vec![
                s.layers[r.layer].name.clone(),
                d.kind.as_str().to_string(),
                d.material.clone(),
                thickness,
                ghz(r.frequency),
                if r.estimate {
                    format!("{:.2} (estimate)", bulk.dk)
                } else {
                    format!("{:.2}", bulk.dk)
                } + match a.materials.get(&d.material) {
                    Some(m) if bulk.extrapolated && r.carries_lines => {
                        if r.frequency < m.valid_from {
                            " (below its validated range)"
                        } else {
                            " (above its validated range)"
                        }
                    }
                    _ => "",
                },
                format!("{:.4}", bulk.df),
                r.apparent_text(),
                r.faces_text(),
            ],
            None,
        );
    }
    if !t.rows.is_empty() {
        blocks.push(Block::Heading("Dielectrics".into()));
        blocks.push(Block::Table(t));
        blocks.push(Block::Note(
            "Bulk Dk and Df from a causal Djordjevic-Sarkar fit of the material data, at the highest analysis frequency of the lines whose field runs in the layer (a layer no line uses: the highest of any line). Apparent Dk: the effective-roughness-layer model (parallel-plate form) with the roughness of the copper faces touching the layer; a range where a face's roughness is unknown. A dielectric bonded only to other dielectrics keeps its bulk Dk.".into(),
        ));
    }
    Section {
        id: "cross-section",
        title: "Cross-section",
        blocks,
    }
}

pub(super) fn impedance_section(
    s: &Stackup,
    a: &Analysis,
    opts: &ReportOptions,
    stem: &str,
) -> Section {
    let mut t = Table::new(&[
        "net class",
        "structure",
        "layer",
        "reference",
        "W / S µm",
        "f GHz",
        "target Ω",
        "Z smooth Ω",
        "Z rough Ω",
        "apparent Dk",
        "delay ps/mm",
        "loss dB/mm",
        "W for target µm",
        "Z at corners Ω",
    ]);
    let mut notes = Vec::new();
    // The sensitivity table: each class's toleranced quantities.
    let mut sens = Table::new(&["net class", "quantity", "tolerance", "ΔZ Ω"]);
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        let ws = match (nc.spacing, nc.top_width) {
            (Some(sp), _) => format!("{:.0} / {:.0}", nc.width * 1e6, sp * 1e6),
            (None, Some(top)) => format!("{:.0} (top {:.0})", nc.width * 1e6, top * 1e6),
            (None, None) => format!("{:.0}", nc.width * 1e6),
        };
        let target = nc
            .impedance
            .map(|t| format!("{:.0} ± {:.1}", t.target, t.tolerance));
        let smooth = ca.smooth.as_ref().ok();
        let z_rough = match (ca.rough_best, ca.rough_worst) {
            (Some(b), Some(w)) if (b.z - w.z).abs() >= 0.05 => {
                Some(format!("{:.1}..{:.1}", w.z.min(b.z), w.z.max(b.z)))
            }
            (_, Some(w)) => Some(format!("{:.1}", w.z)),
            _ => None,
        };
        let apparent = ca.apparent_dk().map(|(lo, hi)| {
            if hi - lo < 0.005 {
                format!("{hi:.2}")
            } else {
                format!("{lo:.2}..{hi:.2}")
            }
        });
        let delay = ca
            .rough_worst
            .or(smooth.copied())
            .map(|n| format!("{:.2}", n.ps_per_mm()));
        let mut tone = None;
        if let (Some(t), Some(w)) = (nc.impedance, ca.rough_worst) {
            if (w.z - t.target).abs() > t.tolerance {
                tone = Some("warning");
            }
        }
        t.push(
            vec![
                nc.name.clone(),
                nc.structure.as_str().to_string(),
                nc.layer.clone(),
                opt(crate::output::impedance::reference_column(s, ca)),
                ws,
                ghz(ca.frequency),
                opt(target),
                opt(smooth.map(|n| format!("{:.1}", n.z))),
                opt(z_rough),
                opt(apparent),
                opt(delay),
                opt(ca
                    .loss
                    .as_ref()
                    .map(|l| format!("{:.4}", l.total_rough() / 1e3))),
                opt(ca.width_for_target.map(|w| format!("{:.1}", w * 1e6))),
                opt(ca.tolerance.as_ref().map(|st| {
                    let (lo, hi) = st.extreme();
                    format!("{lo:.1}..{hi:.1} (RSS {:.1}..{:.1})", st.rss.0, st.rss.1)
                })),
            ],
            tone,
        );
        if let Some(st) = &ca.tolerance {
            let mut c: Vec<_> = st.contributions.iter().collect();
            c.sort_by(|a, b| b.dz.abs().total_cmp(&a.dz.abs()));
            for x in c {
                sens.push(
                    vec![
                        nc.name.clone(),
                        x.what.clone(),
                        x.tolerance.clone(),
                        format!("{:+.2}", x.dz),
                    ],
                    None,
                );
            }
        }
        if let Err(e) = &ca.smooth {
            notes.push(format!("{}: not solved: {e}", nc.name));
        }
        if let (Some(len), Some(l)) = (opts.length, ca.loss.as_ref()) {
            notes.push(format!(
                "{}: {:.2} dB over {} at {} ({:.2} dB conductor with rough copper, {:.2} dB with smooth; {:.2} dB dielectric).",
                nc.name,
                l.total_rough() * len,
                fmt_length(len),
                fmt_frequency(ca.frequency),
                l.conductor_rough * len,
                l.conductor_smooth * len,
                l.dielectric * len,
            ));
        }
        for n in &ca.notes {
            notes.push(format!("{}: {n}", nc.name));
        }
    }
    let mut blocks = Vec::new();
    if t.rows.is_empty() {
        blocks.push(Block::Paragraph(
            "The stackup declares no impedance-controlled net classes.".into(),
        ));
    } else {
        blocks.push(Block::Table(t));
        blocks.push(Block::Note(format!(
            "Solved with the {} at each class's analysis frequency; differential pairs show Z_diff. Z rough, apparent Dk, delay and loss include the declared copper roughness (effective-roughness-layer model for Z and delay, the delay also slowed by the copper's internal inductance; conductor loss by Wheeler's incremental-inductance rule on the solved section with each face's Hammerstad-Bekkadal factor; dielectric loss from the share of the field in each material), worst case where a face is unknown; a range shows best..worst. W for target: base width that brings the rough line back to its target. Rows over tolerance with rough copper are marked.",
            crate::analysis::FIELD_SOLVER
        )));
        for n in notes {
            blocks.push(Block::Note(n));
        }
        if !sens.rows.is_empty() {
            blocks.push(Block::Heading("Impedance at the build tolerances".into()));
            blocks.push(Block::Table(sens));
            blocks.push(Block::Note(format!(
                "Each toleranced quantity moved alone to the upper end of its tolerance (settings.fabrication; a material's dk-tolerance), the section solved again; the corners column adds the changes (worst case: every quantity at the end that moves Z the same way; RSS: root-sum-square) and holds the two worst-case corners solved as they are. Tolerances used: etched width ±{:.1} µm, dielectric thickness ±{:.0} %, copper ±{:.0} %, mask ±{:.0} %, Dk ±{:.0} % where the material states none (defaults are common practice, no source).",
                s.settings.fabrication.etch_width * 1e6,
                100.0 * s.settings.fabrication.dielectric_thickness,
                100.0 * s.settings.fabrication.copper_thickness,
                100.0 * s.settings.fabrication.mask_thickness,
                100.0 * s.settings.fabrication.dk,
            )));
        }
        blocks.extend(loss_figure(s, a, stem));
    }
    Section {
        id: "impedance",
        title: "Impedance-controlled net classes",
        blocks,
    }
}

pub(super) fn materials_section(s: &Stackup, a: &Analysis, stem: &str) -> Section {
    let mut blocks = Vec::new();
    let mut t = Table::new(&[
        "material",
        "class",
        "data points",
        "validated range",
        "method",
        "used by",
    ]);
    let mut figures = Vec::new();
    for (name, m) in &s.materials {
        let Some(model) = a.materials.get(name) else {
            continue;
        };
        let layers: Vec<usize> = (0..s.layers.len())
            .filter(|&k| s.dielectric(k).is_some_and(|d| &d.material == name))
            .collect();
        if layers.is_empty() {
            continue;
        }
        let marks: Vec<(String, f64)> = s
            .net_classes
            .iter()
            .zip(&a.classes)
            .filter(|(_, ca)| {
                ca.geometry
                    .as_ref()
                    .is_ok_and(|g| g.dielectric_layers().any(|l| layers.contains(&l)))
            })
            .map(|(nc, ca)| (nc.name.clone(), ca.frequency))
            .collect();
        let points: Vec<String> = m
            .points
            .iter()
            .map(|p| {
                format!(
                    "{:.2} / {:.4} at {}",
                    p.dk,
                    p.df,
                    fmt_frequency(p.frequency)
                )
            })
            .collect();
        let range = format!(
            "{} to {}{}",
            fmt_frequency(model.valid_from),
            fmt_frequency(model.valid_to),
            if m.valid_from.is_none() || m.valid_to.is_none() {
                " (policy: not stated)"
            } else {
                ""
            }
        );
        let layer_names: Vec<&str> = layers.iter().map(|&k| s.layers[k].name.as_str()).collect();
        t.push(
            vec![
                name.clone(),
                m.class.clone().unwrap_or_else(|| "—".into()),
                if points.is_empty() {
                    m.estimate.clone().unwrap_or_else(|| "—".into())
                } else {
                    points.join("; ")
                },
                range,
                m.method.as_str().to_string(),
                layer_names.join(", "),
            ],
            None,
        );
        let mut caption = format!(
            "{name}: Dk and Df against frequency (Djordjevic-Sarkar model line, data points as dots, validated range shaded"
        );
        if marks.is_empty() {
            caption.push(')');
        } else {
            let names: Vec<String> = marks
                .iter()
                .map(|(n, f)| format!("{n} at {}", fmt_frequency(*f)))
                .collect();
            let _ = write!(caption, "; amber lines: {})", names.join(", "));
        }
        match plot::material_plot(m, model, &marks) {
            Ok(svg) => figures.push(Block::Figure(Figure {
                file: format!("{stem}-material-{}.svg", slug(name)),
                caption,
                svg,
            })),
            Err(e) => figures.push(Block::Note(format!("{name}: no plot: {e}"))),
        }
        if let Some(n) = model.multi_pole() {
            figures.push(Block::Note(format!(
                "{name}: its points vary more across the band than one Djordjevic-Sarkar term follows; a causal sum of {n} Debye terms meets them all and is used."
            )));
        }
        if let Some(p) = &model.fit_problem {
            figures.push(Block::Note(format!(
                "{name}: no causal fit ({p}); the first data point is held constant."
            )));
        }
    }
    if t.rows.is_empty() {
        blocks.push(Block::Paragraph("No dielectric materials in use.".into()));
    } else {
        blocks.push(Block::Table(t));
        blocks.extend(figures);
    }
    Section {
        id: "materials",
        title: "Materials",
        blocks,
    }
}

pub(super) fn skew_section(s: &Stackup, a: &Analysis) -> Section {
    let mut t = Table::new(&[
        "group",
        "net",
        "routed",
        "layers",
        "delay ps",
        "behind fastest ps",
        "budget ps",
        "status",
    ]);
    for (g, gd) in s.matched_groups.iter().zip(&a.groups) {
        let delays: Vec<&Result<f64, Vec<String>>> = gd.nets.iter().map(|n| &n.delay).collect();
        let known: Vec<f64> = delays
            .iter()
            .filter_map(|d| d.as_ref().ok().copied())
            .collect();
        let fastest = known.iter().copied().fold(f64::INFINITY, f64::min);
        let slowest = known.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let complete = known.len() == delays.len() && !known.is_empty();
        let over = complete && slowest - fastest > g.skew_budget;
        for (net, d) in g.nets.iter().zip(&delays) {
            let routed: f64 = net.segments.iter().map(|x| x.length).sum();
            let mut layers: Vec<&str> = Vec::new();
            for seg in &net.segments {
                let n = s.layers[seg.layer_index].name.as_str();
                if !layers.contains(&n) {
                    layers.push(n);
                }
            }
            let (delay, behind, status, tone) = match d {
                Ok(t) => {
                    let behind = t - fastest;
                    let late = complete && behind > g.skew_budget;
                    (
                        format!("{:.1}", t * 1e12),
                        format!("{:.1}", behind * 1e12),
                        if !complete {
                            "group incomplete"
                        } else if late {
                            "over budget"
                        } else {
                            "within budget"
                        },
                        late.then_some("error").or(over.then_some("warning")),
                    )
                }
                Err(_) => (
                    "—".into(),
                    "—".into(),
                    "no solved class on a segment's layer",
                    Some("warning"),
                ),
            };
            t.push(
                vec![
                    g.name.clone(),
                    net.name.clone(),
                    fmt_length(routed),
                    layers.join(", "),
                    delay,
                    behind,
                    format!("{:.1}", g.skew_budget * 1e12),
                    status.into(),
                ],
                tone,
            );
        }
    }
    let blocks = if t.rows.is_empty() {
        vec![Block::Paragraph(
            "The stackup declares no matched groups.".into(),
        )]
    } else {
        vec![
            Block::Table(t),
            Block::Note("Delay per segment: routed length times the delay per unit length of the net class on its layer (rough copper, worst case). Vias and breakouts are not included.".into()),
        ]
    };
    Section {
        id: "skew",
        title: "Matched-group skew",
        blocks,
    }
}

pub(super) fn findings_section(findings: &[Finding], db: &SourceDb) -> Section {
    let mut t = Table::new(&["severity", "rule", "where", "finding", "fix"]);
    let mut suppressed = Table::new(&["rule", "where", "finding", "reason"]);
    for f in findings {
        let file = db.get(f.primary.file);
        let (line, col) = line_col(&file.text, f.primary.span.start);
        let place = if f.primary.span.is_empty() && f.primary.span.start == 0 {
            file.display.clone()
        } else {
            format!("{}:{line}:{col}", file.display)
        };
        if let Some(reason) = &f.suppressed {
            suppressed.push(
                vec![f.rule.into(), place, f.message.clone(), reason.clone()],
                None,
            );
            continue;
        }
        let tone = match f.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
            Severity::Note => "note",
        };
        t.push(
            vec![
                f.severity.as_str().into(),
                f.rule.into(),
                place,
                f.message.clone(),
                f.help.clone().unwrap_or_default(),
            ],
            Some(tone),
        );
    }
    let mut blocks = Vec::new();
    if t.rows.is_empty() {
        blocks.push(Block::Paragraph("No findings.".into()));
    } else {
        blocks.push(Block::Table(t));
    }
    if !suppressed.rows.is_empty() {
        blocks.push(Block::Heading("Suppressed".into()));
        blocks.push(Block::Table(suppressed));
    }
    Section {
        id: "findings",
        title: "Findings",
        blocks,
    }
}

/// Insertion loss per 100 mm against frequency for every solved class, up
/// to one and a half times the highest class frequency (at least 10 GHz),
/// from each class's one solve (`analysis::sweep`).
fn loss_figure(s: &Stackup, a: &Analysis, stem: &str) -> Option<Block> {
    let top = a
        .classes
        .iter()
        .map(|c| c.frequency)
        .fold(10e9_f64, f64::max)
        * 1.5;
    let freqs: Vec<f64> = (1..=100).map(|k| top * k as f64 / 100.0).collect();
    let series: Vec<(String, Vec<(f64, f64)>)> = s
        .net_classes
        .iter()
        .enumerate()
        .filter_map(|(i, nc)| {
            let pts = crate::analysis::sweep::sweep(s, a, i, &freqs)?;
            Some((
                crate::output::escape::controls(&nc.name).into_owned(),
                pts.iter()
                    .map(|p| (p.frequency, p.loss.total_rough() * 0.1))
                    .collect(),
            ))
        })
        .collect();
    if series.is_empty() {
        return None;
    }
    Some(match plot::loss_plot(&series) {
        Ok(svg) => Block::Figure(Figure {
            file: format!("{stem}-loss.svg"),
            caption: "Insertion loss per 100 mm against frequency, declared copper roughness (worst case where unknown), conductor loss by Wheeler's rule and dielectric loss from each material's causal model; the line alone, without vias or connectors".into(),
            svg,
        }),
        Err(e) => Block::Note(format!("no loss plot: {e}")),
    })
}

/// Measured coupons against the model: a table for the fabrication note,
/// and per coupon its εeff and loss against frequency.
pub(super) fn coupons_section(s: &Stackup, a: &Analysis, stem: &str) -> Option<Section> {
    if a.coupons.is_empty() {
        return None;
    }
    let mut blocks = vec![Block::Paragraph(
        "Measured test coupons held against the stackup's model of the structure each represents: the effective Dk and loss measured, the model's at the same frequencies, the range the data are valid over, and the Dk the measurement implies for the material holding most of the line's field.".into(),
    )];
    let mut t = Table::new(&[
        "coupon",
        "net class",
        "kind",
        "valid range",
        "eps_eff vs model",
        "loss vs model",
        "implied Dk",
    ]);
    let mut figures = Vec::new();
    for ca in &a.coupons {
        let c = &s.coupons[ca.coupon];
        let nc = &s.net_classes[c.net_class];
        let pct = |d: Option<f64>, digits: usize| {
            d.map_or("—".into(), |d| format!("{:+.*} %", digits, 100.0 * d))
        };
        let implied = ca.implied_dk.as_ref().map_or("—".into(), |im| {
            format!(
                "{} {:.3} ± {:.3} at {} (stated {:.3})",
                im.material,
                im.implied,
                im.uncertainty,
                fmt_frequency(im.frequency),
                im.stated
            )
        });
        let disagrees = ca
            .eps_difference
            .is_some_and(|d| d.abs() > crate::analysis::coupons::AGREE_EPS);
        t.push(
            vec![
                c.name.clone(),
                nc.name.clone(),
                c.kind.keyword().into(),
                ca.failure.as_ref().map_or_else(
                    || {
                        ca.range.map_or("none".into(), |(lo, hi)| {
                            format!("{} to {}", fmt_frequency(lo), fmt_frequency(hi))
                        })
                    },
                    |f| format!("not extracted: {f}"),
                ),
                pct(ca.eps_difference, 2),
                pct(ca.loss_difference, 1),
                implied,
            ],
            disagrees.then_some("error"),
        );
        if let Ok(svg) = plot::coupon_plot(&ca.points, ca.range) {
            figures.push(Block::Figure(Figure {
                file: format!("{stem}-coupon-{}.svg", slug(&c.name)),
                caption: format!(
                    "Coupon {} ({}): measured (points) and modelled (line) eps_eff and loss per 100 mm; the valid range shaded.",
                    c.name, nc.name
                ),
                svg,
            }));
        }
    }
    blocks.push(Block::Table(t));
    blocks.push(Block::Note(
        "eps_eff and loss vs model: the median of measured over modelled minus one inside the valid range (a pair: its odd mode). The model includes the copper's internal inductance, as a measurement does (smooth copper's; rough copper's slowing is in its apparent Dk).".into(),
    ));
    blocks.extend(figures);
    Some(Section {
        id: "coupons",
        title: "Measured coupons",
        blocks,
    })
}

#[cfg(test)]
mod tests {
    use super::board_layers;

    #[test]
    fn board_layers_take_the_article_of_their_spoken_number() {
        assert_eq!(board_layers(8), "An 8-layer board");
        assert_eq!(board_layers(11), "An 11-layer board");
        assert_eq!(board_layers(18), "An 18-layer board");
        assert_eq!(board_layers(80), "An 80-layer board");
        assert_eq!(board_layers(1), "A 1-layer board");
        assert_eq!(board_layers(10), "A 10-layer board");
        assert_eq!(board_layers(28), "A 28-layer board");
    }
}
