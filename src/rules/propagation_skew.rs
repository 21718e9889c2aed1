//! `propagation-skew`: mode-velocity skew of pairs in inhomogeneous
//! striplines, and arrival-time spread of matched groups routed on layers of
//! different effective Dk.

use crate::finding::{key_step, Finding, Severity};
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_length, Dimension};

pub struct PropagationSkew;

static META: RuleMeta = RuleMeta {
    name: "propagation-skew",
    summary: "mode skew of a stripline pair in unequal dielectrics, or a matched group whose delays spread beyond its skew budget",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/propagation-skew.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 2] = [
    OptionSpec {
        key: "max-mode-skew",
        kind: OptionKind::Quantity(Dimension::Time),
        // Budget per millimetre of coupled length (common practice, no source).
        default: 0.01e-12,
        default_text: "0.01 ps per mm of coupled length",
        doc: "mode-skew budget for (a)",
    },
    OptionSpec {
        key: "coupled-length",
        kind: OptionKind::Quantity(Dimension::Length),
        default: 0.1,
        default_text: "100 mm",
        doc: "coupled length used to state the skew in (a)",
    },
];

impl Rule for PropagationSkew {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let a = cx.analysis;
        // Budget per millimetre of coupled length (common practice, no source).
        let max_skew = cx.option(&OPTIONS[0]);
        let coupled = cx.option(&OPTIONS[1]);
        let mut out = Vec::new();
        // (a) Even/odd mode velocities of stripline pairs.
        for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
            let Some(m) = ca.mode_skew else { continue };
            let (ee, eo) = (m.eps_eff_even, m.eps_eff_odd);
            let per_mm = m.per_metre * 1e-3;
            if per_mm.abs() <= max_skew {
                continue;
            }
            let t_r = m.rise_time;
            let skew_len = m.per_metre * coupled;
            let dielectrics: Vec<String> = ca
                .geometry
                .as_ref()
                .map(|g| {
                    g.slabs
                        .iter()
                        .filter_map(|sl| {
                            s.dielectric(sl.layer).map(|d| {
                                format!(
                                    "{} `{}` Dk {:.2}",
                                    d.kind.as_str(),
                                    s.layers[sl.layer].name,
                                    sl.eps
                                )
                            })
                        })
                        .collect()
                })
                .unwrap_or_default();
            // Crosstalk only to a real neighbour at a stated pitch.
            let neighbour = ca.pair_crosstalk.map_or_else(
                || " (give `pair-pitch` for the crosstalk to a neighbouring pair)".to_string(),
                |x| {
                    format!(
                        "; to a neighbouring pair at {} pitch: near-end crosstalk about {:.2} %, far-end about {:.2} % over {} (superposition estimate)",
                        fmt_length(x.pitch),
                        100.0 * x.next.abs(),
                        100.0 * (x.fext_per_metre * coupled).abs(),
                        fmt_length(coupled)
                    )
                },
            );
            let (faster, slower) = if ee > eo {
                ("differential (odd)", "common (even)")
            } else {
                ("common (even)", "differential (odd)")
            };
            out.push(
                Finding::new(
                    META.name,
                    cx.at(&format!("{}/layer", nc.pointer)),
                    format!(
                        "pair `{}` is a stripline in unequal dielectrics ({}): even-mode eps_eff {ee:.3} vs odd-mode {eo:.3}, a mode skew of {:.3} ps/mm ({:.2} ps over {}, {:.0} % of a {:.1} ps rise time); the {faster} mode runs ahead of the {slower} mode, so common-mode noise converted along the route (bends, vias, intra-pair length mismatch) no longer lines up with the differential edge and turns partly into differential noise{neighbour}",
                        nc.name,
                        dielectrics.join(", "),
                        per_mm * 1e12,
                        skew_len.abs() * 1e12,
                        fmt_length(coupled),
                        100.0 * skew_len.abs() / t_r,
                        t_r * 1e12
                    ),
                )
                .label("inhomogeneous stripline")
                .with_help("use prepreg and core of matching Dk on both sides of the pair (a resin-matched build), or keep the coupled run short; length matching within the pair cannot cancel a mode skew")
                // 0.01 ps/mm: 1 ps over 100 mm of coupled route.
                .key(key_step(per_mm * 1e12, 0.01)),
            );
        }
        // (b) Matched groups: delay per net from its segments.
        for (g, gd) in s.matched_groups.iter().zip(&a.groups) {
            let mut delays: Vec<(usize, f64)> = Vec::new();
            let mut missing = Vec::new();
            for (ni, nd) in gd.nets.iter().enumerate() {
                match &nd.delay {
                    Ok(t) => delays.push((ni, *t)),
                    Err(m) => missing.extend(m.iter().cloned()),
                }
            }
            if !missing.is_empty() {
                for p in missing {
                    out.push(
                        Finding::new(META.name, cx.at(&format!("{p}/layer")), format!(
                            "matched group `{}`: no solved net class on this segment's layer, so its delay is unknown",
                            g.name
                        ))
                        .with_severity(Severity::Note)
                        .label("no net class on this layer")
                        .with_help("add `net-class:` to the segment, or define a net class on that layer"),
                    );
                }
                continue;
            }
            let Some(&(slow, t_slow)) = delays.iter().max_by(|x, y| x.1.total_cmp(&y.1)) else {
                continue;
            };
            let Some(&(fast, t_fast)) = delays.iter().min_by(|x, y| x.1.total_cmp(&y.1)) else {
                continue;
            };
            let spread = t_slow - t_fast;
            if spread <= g.skew_budget {
                continue;
            }
            let slow_net = &g.nets[slow];
            let fast_net = &g.nets[fast];
            // Length change on the slow net's longest segment's layer.
            let fix = gd.nets[slow].longest.map(|(seg, d)| {
                format!(
                    "shorten `{}` on `{}` by {} (or lengthen `{}` by the same delay)",
                    slow_net.name,
                    s.layers[slow_net.segments[seg].layer_index].name,
                    fmt_length(spread / d),
                    fast_net.name
                )
            });
            // The edit: every net that arrives early lengthened on its
            // longest segment until it arrives with the slowest (tuning
            // adds length; it cannot take any away).
            let mut added = Vec::new();
            let edits: Vec<Option<crate::finding::Edit>> = delays
                .iter()
                .filter(|&&(_, t)| t_slow - t > 0.01e-12)
                .map(|&(ni, t)| {
                    let (seg, d) = gd.nets[ni].longest?;
                    let sg = &g.nets[ni].segments[seg];
                    let more = (t_slow - t) / d;
                    added.push(format!(
                        "`{}` by {} on `{}`",
                        g.nets[ni].name,
                        fmt_length(more),
                        s.layers[sg.layer_index].name
                    ));
                    cx.edit_quantity(
                        &format!("{}/length", sg.pointer),
                        sg.length + more,
                        // 1 µm: 0.01 ps on a board.
                        1e-6,
                        Dimension::Length,
                    )
                })
                .collect();
            let len = |n: &crate::model::Net| n.segments.iter().map(|x| x.length).sum::<f64>();
            out.push(
                Finding::new(
                    META.name,
                    cx.at(&format!("{}/skew-budget", g.pointer)),
                    format!(
                        "matched group `{}` spreads {:.1} ps against a {:.1} ps budget: `{}` arrives after {:.1} ps over {} routed, `{}` after {:.1} ps over {} (length-equal is not time-equal across layers)",
                        g.name,
                        spread * 1e12,
                        g.skew_budget * 1e12,
                        slow_net.name,
                        t_slow * 1e12,
                        fmt_length(len(slow_net)),
                        fast_net.name,
                        t_fast * 1e12,
                        fmt_length(len(fast_net)),
                    ),
                )
                .label("skew budget")
                .secondary(cx.at(&format!("{}/name", slow_net.pointer)), "slowest net")
                .secondary(cx.at(&format!("{}/name", fast_net.pointer)), "fastest net")
                .with_help(fix.unwrap_or_else(|| "equalise the delays, not the lengths".into()))
                .with_fix(
                    format!(
                        "lengthen {} to arrive with `{}` (each on its longest segment; route the layout to the new lengths)",
                        added.join(", "),
                        slow_net.name,
                    ),
                    edits,
                )
                // Whole picoseconds.
                .key(key_step(spread * 1e12, 1.0)),
            );
        }
        out
    }
}
