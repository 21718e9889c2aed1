//! `glass-weave-skew`: a fast differential pair over an open glass weave,
//! whose worst-case intra-pair skew (one trace over glass bundles, the
//! other over resin windows) exceeds a share of the unit interval.

use crate::analysis::weave::{WeavePly, WeaveSkew};
use crate::finding::{key_step, Finding, Severity};
use crate::model::{NetClass, OptionKind, OptionSpec, Stackup};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_length, Dimension};

pub struct GlassWeaveSkew;

static META: RuleMeta = RuleMeta {
    name: "glass-weave-skew",
    summary: "a fast differential pair runs over an open glass weave whose worst-case intra-pair skew exceeds a share of its unit interval",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/glass-weave-skew.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 3] = [
    OptionSpec {
        key: "min-data-rate",
        kind: OptionKind::Quantity(Dimension::DataRate),
        // Common practice, no source: below about 25 Gbps NRZ the weave's
        // skew is a small part of the unit interval.
        default: 25e9,
        default_text: "25 Gbps",
        doc: "lowest NRZ-equivalent data rate checked (the symbol rate: the data rate for NRZ, half of it for PAM4)",
    },
    OptionSpec {
        key: "max-ui-fraction",
        kind: OptionKind::Ratio { max: 1.0 },
        // Common practice, no source: the whole intra-pair skew budget is
        // often put at a quarter of the UI or less; the weave gets most of
        // it here, the rest is left to length and via mismatch.
        default: 0.2,
        default_text: "0.2",
        doc: "budget for the worst-case weave skew over `length`, as a fraction of the unit interval",
    },
    OptionSpec {
        key: "length",
        kind: OptionKind::Quantity(Dimension::Length),
        // Common practice, no source: a short-to-medium channel run; the
        // same 100 mm as `propagation-skew`'s coupled length.
        default: 0.1,
        default_text: "100 mm",
        doc: "routed length over which the pair may run parallel to the weave",
    },
];

impl Rule for GlassWeaveSkew {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let min_rate = cx.option(&OPTIONS[0]);
        let max_ui = cx.option(&OPTIONS[1]);
        let length = cx.option(&OPTIONS[2]);
        let mut out = Vec::new();
        for (nc, w) in s.net_classes.iter().zip(&cx.analysis.weave) {
            let Some(w) = w else { continue };
            let (Some(rate), Some(ui)) = (w.symbol_rate, w.unit_interval) else {
                continue;
            };
            if rate < min_rate * (1.0 - 1e-9) {
                continue;
            }
            out.extend(unassessed(cx, nc, w, rate));
            if let Some(f) = over_budget(cx, nc, w, rate, ui, max_ui, length) {
                out.push(f);
            }
        }
        out
    }
}

/// The glass-style value of dielectric layer `layer`.
fn style_pointer(s: &Stackup, layer: usize) -> String {
    format!("{}/dielectric/glass-style", s.layers[layer].pointer)
}

/// Symbol rate in GBd, with the decimals it needs.
fn fmt_baud(rate: f64) -> String {
    let g = rate / 1e9;
    if (g - g.round()).abs() < 1e-6 {
        format!("{g:.0} GBd")
    } else {
        format!("{g:.2} GBd")
    }
}

/// The worst-case skew over `length` against the budget, for a pair with
/// an open-weave ply in its field.
fn over_budget(
    cx: &RuleContext<'_>,
    nc: &NetClass,
    w: &WeaveSkew,
    rate: f64,
    ui: f64,
    max_ui: f64,
    length: f64,
) -> Option<Finding> {
    let s = cx.stackup;
    if !w.has_open_ply() {
        return None;
    }
    let skew = w.per_metre * length;
    let budget = max_ui * ui;
    if skew <= budget {
        return None;
    }
    // The open ply that moves the delay most leads (the upper one of
    // equals); the others are labelled.
    let weight = |p: &WeavePly| p.field_share * (p.dk_bundle - p.dk_window);
    let lead = w
        .plies
        .iter()
        .filter(|p| p.open)
        .rev()
        .max_by(|a, b| weight(a).total_cmp(&weight(b)))?;
    let plies: Vec<String> = w
        .plies
        .iter()
        .map(|p| {
            let d = s.dielectric(p.layer).map_or("ply", |d| d.kind.as_str());
            format!(
                "{d} `{}` ({} {}: Dk {:.2} over a bundle, {:.2} over a window; {:.0} % of the field)",
                s.layers[p.layer].name,
                p.style,
                if p.open { "open" } else { "spread" },
                p.dk_bundle,
                p.dk_window,
                p.field_share * 100.0
            )
        })
        .collect();
    let mut f = Finding::new(
        META.name,
        cx.at(&style_pointer(s, lead.layer)),
        format!(
            "pair `{}` ({}, UI {:.1} ps) runs over open-weave glass: {}; with one trace over bundles and the other over windows its worst-case intra-pair skew is {:.3} ps/mm, {:.1} ps over {} = {:.2} UI, above the {} UI budget ({:.1} ps)",
            nc.name,
            fmt_baud(rate),
            ui * 1e12,
            plies.join(", "),
            w.per_metre * 1e-3 * 1e12,
            skew * 1e12,
            fmt_length(length),
            skew / ui,
            max_ui,
            budget * 1e12
        ),
    )
    .label("open weave next to the pair");
    for p in w.plies.iter().filter(|p| p.open && p.layer != lead.layer) {
        f = f.secondary(cx.at(&style_pointer(s, p.layer)), "open weave");
    }
    if nc.data_rate.is_some() {
        f = f.secondary(cx.at(&format!("{}/data-rate", nc.pointer)), "sets the UI");
    }
    Some(
        f.with_help("use spread glass (e.g. 1035, 1067, 1078 or 1086) for the plies next to the pair, or route the pair at about 10° to the weave (or in a zig-zag), or have the fabricator rotate the artwork on the panel; length matching cannot remove this skew, which depends on where each trace falls on the weave")
            // Whole picoseconds over the length.
            .key(key_step(skew * 1e12, 1.0)),
    )
}

/// A note per ply whose glass style names no weave the analysis knows:
/// the style was given so the weave could be checked, and it was not.
fn unassessed(cx: &RuleContext<'_>, nc: &NetClass, w: &WeaveSkew, rate: f64) -> Vec<Finding> {
    let s = cx.stackup;
    w.unassessed
        .iter()
        .map(|u| {
            Finding::new(
                META.name,
                cx.at(&style_pointer(s, u.layer)),
                format!(
                    "ply `{}` (glass style `{}`) carries part of pair `{}`'s field at {}, but its weave skew was not assessed: {}",
                    s.layers[u.layer].name,
                    u.style,
                    nc.name,
                    fmt_baud(rate),
                    u.why
                ),
            )
            .with_severity(Severity::Note)
            .label("weave not assessed")
            .with_help("name a style the weave table knows, give the ply's `resin-content` and the material's `glass-dk` if they differ from the defaults, or judge the skew from the fabricator's data")
        })
        .collect()
}
