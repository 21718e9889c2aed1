//! `impedance-tolerance-stack`: at the fabricator's build tolerances a net
//! class's impedance can leave its target ± tolerance.

use crate::finding::{key_step, Finding, Severity};
use crate::rules::{Rule, RuleContext, RuleMeta};

pub struct ImpedanceToleranceStack;

static META: RuleMeta = RuleMeta {
    name: "impedance-tolerance-stack",
    summary: "at the fabricator's build tolerances a net class's impedance can leave its target ± tolerance",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/impedance-tolerance-stack.md"),
    options: &[],
};

impl Rule for ImpedanceToleranceStack {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let mut out = Vec::new();
        for (nc, ca) in s.net_classes.iter().zip(&cx.analysis.classes) {
            let (Some(t), Some(st)) = (nc.impedance, ca.tolerance.as_ref()) else {
                continue;
            };
            // A nominal already outside is `impedance-off-target`'s finding:
            // the root cause, not repeated here.
            if (st.nominal - t.target).abs() > t.tolerance {
                continue;
            }
            let (lo_ok, hi_ok) = (t.target - t.tolerance, t.target + t.tolerance);
            let (lo, hi) = st.extreme();
            if lo >= lo_ok && hi <= hi_ok {
                continue;
            }
            // The statistical range out as well: most boards of a lot miss.
            let rss_out = st.rss.0 < lo_ok || st.rss.1 > hi_ok;
            let Some(dom) = st.dominant() else {
                continue;
            };
            let sum: f64 = st.contributions.iter().map(|c| c.dz.abs()).sum();
            let off = st.nominal - t.target;
            let excess = (lo_ok - lo).max(hi - hi_ok);
            let centre = if off.abs() > 0.25 * t.tolerance {
                format!(
                    "; the nominal {:.1} Ω sits {:+.1} Ω from the target: re-centring it (the width for target{}) gives back up to {:.1} Ω",
                    st.nominal,
                    off,
                    ca.width_for_target
                        .map_or(String::new(), |w| format!(" is {:.1} µm", w * 1e6)),
                    off.abs()
                )
            } else {
                String::new()
            };
            let what = if dom.what == "etched width" {
                "a tighter etch tolerance from the fabricator, or a wider trace (its impedance moves less per micrometre of etch)"
            } else if dom.what.starts_with("thickness of the mask") {
                "opening the mask over the class (`mask: open`) or a tighter mask-thickness tolerance"
            } else if dom.what.starts_with("thickness of") {
                "a tighter pressed-thickness tolerance, or a thicker dielectric (re-solve the width)"
            } else if dom.what.starts_with("Dk of") {
                "a tighter Dk lot, or a material whose Dk is held closer"
            } else {
                "a tighter copper-thickness tolerance (plating)"
            };
            let mut f = Finding::new(
                META.name,
                cx.at(&format!("{}/impedance/target", nc.pointer)),
                format!(
                    "net class `{}` can come out at {lo:.1} to {hi:.1} Ω at the fabricator's tolerances (root-sum-square {:.1} to {:.1} Ω), outside {:.1} ± {:.1} Ω by up to {excess:.1} Ω; the largest part is the {} ({}: {:.1} Ω of the {sum:.1} Ω worst-case swing)",
                    nc.name,
                    st.rss.0,
                    st.rss.1,
                    t.target,
                    t.tolerance,
                    dom.what,
                    dom.tolerance,
                    dom.dz.abs(),
                ),
            )
            .label("target at the build tolerances")
            .with_help(format!(
                "bring the range inside the tolerance: {what}{centre}; the tolerances are in `settings.fabrication` (and each material's `dk-tolerance`): state the fabricator's own"
            ))
            .key(key_step(excess, 0.5));
            if !rss_out {
                f = f.with_severity(Severity::Warning);
            }
            out.push(f);
        }
        out
    }
}
