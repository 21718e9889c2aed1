//! `broadside-signal-layers`: two signal layers face each other across a
//! single dielectric with no plane between them.

use crate::finding::{Finding, Severity};
use crate::model::LayerKind;
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::fmt_length;

pub struct BroadsideSignalLayers;

static META: RuleMeta = RuleMeta {
    name: "broadside-signal-layers",
    summary: "two signal layers face each other with no plane between them (broadside coupling)",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/broadside-signal-layers.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 1] = [OptionSpec {
    key: "min-separation-ratio",
    kind: OptionKind::Ratio { max: 10.0 },
    default: 3.0,
    default_text: "3",
    doc: "separation between the signal layers divided by the larger distance from either layer to its own plane, below which the rule fires",
}];

impl Rule for BroadsideSignalLayers {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let ratio_limit = cx.option(&OPTIONS[0]);
        let copper = s.copper_indices();
        let mut out = Vec::new();
        for w in copper.windows(2) {
            let (a, b) = (w[0], w[1]);
            let (ca, cb) = (s.copper(a), s.copper(b));
            let both_signal = ca
                .zip(cb)
                .is_some_and(|(x, y)| !x.role.is_reference() && !y.role.is_reference());
            if !both_signal {
                continue;
            }
            let sep: f64 = (a + 1..b).map(|k| s.thickness(k)).sum();
            // Distance from each layer to its own plane on the far side.
            let to_plane = |from: usize, plane: Option<usize>| -> Option<f64> {
                let p = plane?;
                let (lo, hi) = if p < from {
                    (p + 1, from)
                } else {
                    (from + 1, p)
                };
                Some((lo..hi).map(|k| s.thickness(k)).sum())
            };
            let ha = to_plane(a, s.reference_above(a));
            let hb = to_plane(b, s.reference_below(b));
            let h = match (ha, hb) {
                (Some(x), Some(y)) => Some(x.max(y)),
                (x, y) => x.or(y),
            };
            let ratio = h.map(|h| sep / h);
            if ratio.is_some_and(|r| r >= ratio_limit) {
                continue;
            }
            let dielectrics: Vec<String> = (a + 1..b)
                .filter_map(|k| match &s.layers[k].kind {
                    LayerKind::Dielectric(d) => {
                        Some(format!("{} `{}`", d.kind.as_str(), s.layers[k].name))
                    }
                    LayerKind::Copper(_) => None,
                })
                .collect();
            let detail = match (h, ratio) {
                (Some(h), Some(r)) => format!(
                    "; they are {} apart but each is {} from its own plane, a ratio of {:.1} (below {:.1})",
                    fmt_length(sep), fmt_length(h), r, ratio_limit
                ),
                _ => format!("; they are {} apart and at least one has no plane of its own", fmt_length(sep)),
            };
            out.push(
                Finding::new(
                    META.name,
                    cx.at_layer(a),
                    format!(
                        "signal layers `{}` and `{}` face each other across {} with no plane between{}",
                        s.layers[a].name, s.layers[b].name, dielectrics.join(" and "), detail
                    ),
                )
                .label("signal layer")
                .secondary(cx.at_layer(b), "facing signal layer")
                .with_help(format!(
                    "route the two layers orthogonally and never in parallel over each other, put a plane between them, or make the separation at least {ratio_limit:.1}× the distance to their planes"
                ))
                .key(format!("{:.0}", sep * 1e6)),
            );
        }
        out
    }
}
