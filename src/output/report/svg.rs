//! The stackup cross-section as an SVG drawing: every layer top to bottom,
//! copper with the net classes' traces on signal layers and a tooth line on
//! faces that declare roughness, dielectrics with material, pressed
//! thickness, bulk and apparent Dk. Heights to scale, or exaggerated for
//! reading (thin layers get a minimum height; the caption says which).

use std::fmt::Write as _;

use crate::analysis::section::FaceRoughness;
use crate::analysis::Analysis;
use crate::model::{CopperLayer, CopperRole, DielectricKind, LayerKind, Stackup};
use crate::output::impedance::{ghz, DielectricRow};
use crate::units::fmt_length;

use super::esc;

const WIDTH: f64 = 1040.0;
const NAME_X: f64 = 12.0;
const DRAW_X0: f64 = 110.0;
const DRAW_X1: f64 = 520.0;
const LABEL_X: f64 = 548.0;
const LINE_H: f64 = 15.0;
const TOP: f64 = 44.0;

/// Height of each layer in pixels.
fn heights(s: &Stackup, to_scale: bool) -> Vec<f64> {
    let total = s.total_thickness().max(1e-9);
    let t_max = (0..s.layers.len())
        .filter_map(|k| s.dielectric(k))
        .filter(|d| d.kind != DielectricKind::SolderMask)
        .map(|d| d.thickness)
        .fold(0.0_f64, f64::max)
        .max(1e-9);
    (0..s.layers.len())
        .map(|k| {
            let t = s.thickness(k);
            if to_scale {
                t / total * 900.0
            } else {
                match &s.layers[k].kind {
                    LayerKind::Copper(_) => 10.0 + 8.0 * (t / 35e-6).min(3.0),
                    LayerKind::Dielectric(d) if d.kind == DielectricKind::SolderMask => 10.0,
                    LayerKind::Dielectric(_) => 24.0 + 56.0 * (t / t_max).min(1.0),
                }
            }
        })
        .collect()
}

/// Fill colours (our own palette).
fn dielectric_fill(kind: DielectricKind) -> &'static str {
    match kind {
        DielectricKind::Core => "#d7e6cf",
        DielectricKind::Prepreg => "#f1e3bb",
        DielectricKind::SolderMask => "#6f9c7c",
        _ => "#e4e4dc",
    }
}

const COPPER: &str = "#c07a35";
const COPPER_EDGE: &str = "#7d4a1c";

/// Label lines for a copper layer.
fn copper_label(name: &str, c: &CopperLayer) -> Vec<String> {
    let mut first = format!("{name} · {} · {}", c.role.as_str(), fmt_length(c.thickness));
    if let Some(fill) = c.fill {
        let _ = write!(first, " · {:.0} % copper", fill * 100.0);
    }
    if c.plated {
        first.push_str(" · plated");
    }
    let mut faces = Vec::new();
    for (dir, face) in [("up", &c.up), ("down", &c.down)] {
        if let Some(f) = face {
            let what = match FaceRoughness::of(Some(f)) {
                FaceRoughness::Known(r) => match (r.rz, r.rq) {
                    (Some(rz), _) => format!("Rz {}", fmt_length(rz)),
                    (None, Some(rq)) => format!("Rq {}", fmt_length(rq)),
                    _ => "smooth".into(),
                },
                FaceRoughness::Unknown => "roughness unknown".into(),
                FaceRoughness::NotDeclared | FaceRoughness::Implied(_) => "no data".into(),
            };
            let foil = f
                .foil
                .as_deref()
                .map(|n| format!(" {n}"))
                .unwrap_or_default();
            faces.push(format!("{dir}: {}{foil}, {what}", f.side.as_str()));
        }
    }
    let mut out = vec![first];
    if !faces.is_empty() {
        out.push(faces.join("; "));
    }
    out
}

/// Label lines for a dielectric layer.
fn dielectric_label(s: &Stackup, k: usize, row: Option<&DielectricRow>) -> Vec<String> {
    let Some(d) = s.dielectric(k) else {
        return Vec::new();
    };
    let mut first = format!(
        "{} · {} · {} · {}",
        s.layers[k].name,
        d.kind.as_str(),
        d.material,
        fmt_length(d.thickness)
    );
    if let Some(n) = d.nominal_thickness {
        let _ = write!(first, " pressed (nominal {})", fmt_length(n));
    }
    let mut out = vec![first];
    if let Some(r) = row {
        let bulk = if r.estimate {
            format!("{:.2} (estimate)", r.contact.bulk.dk)
        } else {
            format!("{:.2}", r.contact.bulk.dk)
        };
        out.push(format!(
            "Dk {bulk} bulk, {} apparent at {} GHz",
            r.apparent_text(),
            ghz(r.frequency)
        ));
    }
    out
}

/// Trace rectangles for the net classes on copper layer `k`: (x, width at
/// the layer's upper face, width at its lower face).
fn traces(s: &Stackup, a: &Analysis, k: usize, hscale: f64) -> Vec<(f64, f64, f64)> {
    let mut out = Vec::new();
    let mut x = DRAW_X0 + 24.0;
    for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
        if nc.layer_index != k {
            continue;
        }
        let (w_up, w_down, spacing) = match &ca.geometry {
            Ok(g) if g.flipped => (g.width_bottom, g.width_top, g.spacing),
            Ok(g) => (g.width_top, g.width_bottom, g.spacing),
            Err(_) => (nc.width, nc.width, nc.spacing),
        };
        let wmax = w_up.max(w_down);
        let n = if nc.structure.is_differential() { 2 } else { 1 };
        for i in 0..n {
            let left = x + i as f64 * (wmax + spacing.unwrap_or(0.0)) * hscale;
            out.push((left, w_up * hscale, w_down * hscale));
        }
        x += (n as f64 * wmax + (n - 1) as f64 * spacing.unwrap_or(0.0)) * hscale + 36.0;
    }
    out
}

/// Horizontal scale for traces, px per metre: at most 0.3 px/um, and the
/// busiest layer's traces fit the drawing.
fn trace_scale(s: &Stackup) -> f64 {
    let mut widest: f64 = 0.0;
    for k in 0..s.layers.len() {
        let mut span = 0.0;
        let mut count = 0.0;
        for nc in s.net_classes.iter().filter(|c| c.layer_index == k) {
            let w = nc.width.max(nc.top_width.unwrap_or(0.0));
            span += if nc.structure.is_differential() {
                2.0 * w + nc.spacing.unwrap_or(0.0)
            } else {
                w
            };
            count += 1.0;
        }
        if count > 0.0 {
            widest = widest.max(span / (DRAW_X1 - DRAW_X0 - 24.0 - 36.0 * count).max(40.0));
        }
    }
    if widest > 0.0 {
        (1.0 / widest).min(0.3e6)
    } else {
        0.3e6
    }
}

/// A tooth line along a rough copper face: amplitude grows with Rz.
fn teeth(out: &mut String, x0: f64, x1: f64, y: f64, dir: f64, face: &FaceRoughness) {
    let amp = match face {
        FaceRoughness::Known(r) => match r.rz.or(r.rq.map(|q| q * 4.0)) {
            Some(rz) if rz > 0.0 => (rz * 1e6 * 0.35).clamp(1.0, 3.5),
            _ => return,
        },
        FaceRoughness::Unknown => {
            let _ = writeln!(
                out,
                r#"<line x1="{x0:.1}" y1="{y:.1}" x2="{x1:.1}" y2="{y:.1}" stroke="{COPPER_EDGE}" stroke-width="1" stroke-dasharray="2 3"/>"#
            );
            return;
        }
        FaceRoughness::NotDeclared | FaceRoughness::Implied(_) => return,
    };
    let mut d = format!("M{x0:.1} {y:.1}");
    let mut x = x0;
    let mut up = true;
    while x < x1 {
        x = (x + 3.0).min(x1);
        let yy = if up { y + dir * amp } else { y };
        let _ = write!(d, " L{x:.1} {yy:.1}");
        up = !up;
    }
    let _ = writeln!(
        out,
        r#"<path d="{d}" fill="none" stroke="{COPPER_EDGE}" stroke-width="0.8"/>"#
    );
}

/// The cross-section drawing.
pub fn cross_section(s: &Stackup, a: &Analysis, rows: &[DielectricRow], to_scale: bool) -> String {
    let h = heights(s, to_scale);
    let hscale = trace_scale(s);
    let mut body = String::new();
    let mut labels = String::new();
    let mut y = TOP;
    let mut next_label_y = TOP;
    let mut next_name_y = TOP;
    for (k, layer) in s.layers.iter().enumerate() {
        let hk = h[k];
        let mid = y + hk / 2.0;
        let lines = match &layer.kind {
            LayerKind::Copper(c) => {
                let has_lines = s.net_classes.iter().any(|nc| nc.layer_index == k);
                let is_plane =
                    c.role == CopperRole::Plane || (c.role == CopperRole::Mixed && !has_lines);
                if is_plane {
                    let _ = writeln!(
                        body,
                        r#"<rect x="{DRAW_X0}" y="{y:.2}" width="{:.1}" height="{hk:.2}" fill="{COPPER}"><title>{}</title></rect>"#,
                        DRAW_X1 - DRAW_X0,
                        esc(&layer.name)
                    );
                } else {
                    // Signal copper: resin fills between the traces.
                    let _ = writeln!(
                        body,
                        r##"<rect x="{DRAW_X0}" y="{y:.2}" width="{:.1}" height="{hk:.2}" fill="#f6efe2" stroke="{COPPER}" stroke-width="0.6" stroke-dasharray="4 3"><title>{}</title></rect>"##,
                        DRAW_X1 - DRAW_X0,
                        esc(&layer.name)
                    );
                    for (x, w_up, w_down) in traces(s, a, k, hscale) {
                        let wmax = w_up.max(w_down);
                        let (xu, xd) = (x + (wmax - w_up) / 2.0, x + (wmax - w_down) / 2.0);
                        let _ = writeln!(
                            body,
                            r#"<path d="M{xu:.2} {y:.2} L{:.2} {y:.2} L{:.2} {:.2} L{xd:.2} {:.2} Z" fill="{COPPER}" stroke="{COPPER_EDGE}" stroke-width="0.6"/>"#,
                            xu + w_up,
                            xd + w_down,
                            y + hk,
                            y + hk
                        );
                    }
                }
                let x1 = DRAW_X1;
                teeth(
                    &mut body,
                    DRAW_X0,
                    x1,
                    y,
                    -1.0,
                    &FaceRoughness::of(c.up.as_ref()),
                );
                teeth(
                    &mut body,
                    DRAW_X0,
                    x1,
                    y + hk,
                    1.0,
                    &FaceRoughness::of(c.down.as_ref()),
                );
                copper_label(&layer.name, c)
            }
            LayerKind::Dielectric(d) => {
                let _ = writeln!(
                    body,
                    r#"<rect x="{DRAW_X0}" y="{y:.2}" width="{:.1}" height="{hk:.2}" fill="{}"><title>{}</title></rect>"#,
                    DRAW_X1 - DRAW_X0,
                    dielectric_fill(d.kind),
                    esc(&layer.name)
                );
                let row = rows.iter().find(|r| r.layer == k);
                dielectric_label(s, k, row)
            }
        };
        // Names of thin neighbours are kept 13 px apart.
        let name_y = (mid + 4.0).max(next_name_y);
        next_name_y = name_y + 13.0;
        let _ = writeln!(
            body,
            r#"<text x="{NAME_X}" y="{name_y:.2}" class="name">{}</text>"#,
            esc(&layer.name)
        );
        // Labels stay in order; a label pushed down by its neighbours gets a
        // leader line back to its layer.
        let block = LINE_H * lines.len() as f64;
        let label_top = (mid - block / 2.0).max(next_label_y);
        let label_mid = label_top + block / 2.0;
        let _ = writeln!(
            labels,
            r##"<path d="M{DRAW_X1} {mid:.2} L{:.1} {mid:.2} L{:.1} {label_mid:.2} L{:.1} {label_mid:.2}" fill="none" stroke="#8a8a8a" stroke-width="0.6"/>"##,
            DRAW_X1 + 8.0,
            LABEL_X - 10.0,
            LABEL_X - 4.0
        );
        for (i, l) in lines.iter().enumerate() {
            let _ = writeln!(
                labels,
                r#"<text x="{LABEL_X}" y="{:.2}" class="{}">{}</text>"#,
                label_top + LINE_H * (i as f64 + 0.75),
                if i == 0 { "label" } else { "sub" },
                esc(l)
            );
        }
        next_label_y = label_top + block + 2.0;
        y += hk;
    }
    let board_bottom = y;
    let height = board_bottom.max(next_label_y) + 44.0;
    let mut total = format!(
        "Board {} over {} layers of build",
        fmt_length(s.total_thickness()),
        s.layers.len()
    );
    if let Some(bt) = &s.settings.board_thickness {
        let _ = write!(
            total,
            " (target {} ± {})",
            fmt_length(bt.target),
            fmt_length(bt.tolerance)
        );
    }
    let caption = if to_scale {
        format!(
            "Heights to scale: 1 px = {}. Trace widths at {:.2} px/µm.",
            fmt_length(s.total_thickness().max(1e-9) / 900.0),
            hscale * 1e-6
        )
    } else {
        format!(
            "Heights exaggerated for reading, not to scale. Trace widths at {:.2} px/µm.",
            hscale * 1e-6
        )
    };
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {WIDTH} {height:.0}" width="{WIDTH}" height="{height:.0}" font-family="Helvetica, Arial, sans-serif" role="img" aria-label="stackup cross-section">"#
    );
    out.push_str(
        "<style>.name{font-size:12px;font-weight:bold;fill:#222}.label{font-size:11.5px;fill:#222}.sub{font-size:10.5px;fill:#555}.cap{font-size:11px;fill:#444}</style>\n",
    );
    let _ = writeln!(
        out,
        r##"<rect x="0" y="0" width="{WIDTH}" height="{height:.0}" fill="#ffffff"/>"##
    );
    let _ = writeln!(
        out,
        r#"<text x="{NAME_X}" y="22" class="cap">{}</text>"#,
        esc(&caption)
    );
    out.push_str(&body);
    out.push_str(&labels);
    let _ = writeln!(
        out,
        r#"<text x="{NAME_X}" y="{:.1}" class="cap">{}</text>"#,
        height - 16.0,
        esc(&total)
    );
    out.push_str("</svg>\n");
    out
}
