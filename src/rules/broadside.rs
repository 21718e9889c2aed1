//! `broadside-signal-layers`: two signal layers face each other across a
//! single dielectric with no plane between them.

use crate::finding::{Finding, Severity};
use crate::model::LayerKind;
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_length, Dimension};

pub struct BroadsideSignalLayers;

static META: RuleMeta = RuleMeta {
    name: "broadside-signal-layers",
    summary: "two signal layers face each other with no plane between them (broadside coupling)",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/broadside-signal-layers.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 2] = [
    OptionSpec {
        key: "min-separation-ratio",
        kind: OptionKind::Ratio { max: 10.0 },
        default: 3.0,
        default_text: "3",
        doc: "separation between the signal layers divided by the larger distance from either layer to its own plane, below which the rule fires (layers without a net class)",
    },
    OptionSpec {
        key: "max-coupling",
        kind: OptionKind::Quantity(Dimension::Fraction),
        // A single aggressor's share of a typical 3-5 % crosstalk budget
        // (common practice, no source).
        default: 0.02,
        default_text: "2 %",
        doc: "near-end crosstalk between the widest traces of the two layers, overlapping, above which the rule fires (layers with a net class)",
    },
];

impl Rule for BroadsideSignalLayers {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let ratio_limit = cx.option(&OPTIONS[0]);
        let max_coupling = cx.option(&OPTIONS[1]);
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
            // With a class on either layer the traces' own coupling decides
            // (width and overlap, solved); without, the geometry ratio.
            let solved = cx
                .analysis
                .broadside
                .iter()
                .find(|x| x.upper == a && x.lower == b);
            match solved {
                Some(x) if x.next <= max_coupling => continue,
                None if ratio.is_some_and(|r| r >= ratio_limit) => continue,
                _ => {}
            }
            let dielectrics: Vec<String> = (a + 1..b)
                .filter_map(|k| match &s.layers[k].kind {
                    LayerKind::Dielectric(d) => {
                        Some(format!("{} `{}`", d.kind.as_str(), s.layers[k].name))
                    }
                    LayerKind::Copper(_) => None,
                })
                .collect();
            let coupling = solved.map_or(String::new(), |x| {
                format!(
                    "; their widest traces ({} on `{}`, {} on `{}`), run over each other in parallel, couple with near-end crosstalk of about {:.1} % (above {:.1} %)",
                    fmt_length(x.width_upper),
                    s.layers[a].name,
                    fmt_length(x.width_lower),
                    s.layers[b].name,
                    100.0 * x.next,
                    100.0 * max_coupling
                )
            });
            let detail = match (h, ratio) {
                (Some(h), Some(r)) if r < ratio_limit => format!(
                    "; they are {} apart but each is {} from its own plane, a ratio of {:.1} (below {:.1})",
                    fmt_length(sep), fmt_length(h), r, ratio_limit
                ),
                (Some(h), Some(r)) => format!(
                    "; they are {} apart and each is {} from its own plane, a ratio of {:.1} (the rule of thumb's {:.1} is met)",
                    fmt_length(sep), fmt_length(h), r, ratio_limit
                ),
                _ => format!("; they are {} apart and at least one has no plane of its own", fmt_length(sep)),
            };
            out.push(
                Finding::new(
                    META.name,
                    cx.at_layer(a),
                    format!(
                        "signal layers `{}` and `{}` face each other across {} with no plane between{}{coupling}",
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
