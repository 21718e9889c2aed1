//! `roughness-impedance-drift`: copper roughness moves a controlled line's
//! impedance and delay off what a smooth-copper model predicts.

use crate::finding::{Finding, Severity};
use crate::model::{OptionKind, OptionSpec};
use crate::rules::impedance_off_target::{solved, width_fix, z_kind};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, Dimension};

pub struct RoughnessImpedanceDrift;

static META: RuleMeta = RuleMeta {
    name: "roughness-impedance-drift",
    summary: "copper roughness alone moves a controlled line's impedance by much of, or more than, its tolerance",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/roughness-impedance-drift.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 1] = [OptionSpec {
    key: "budget-share",
    kind: OptionKind::Quantity(Dimension::Fraction),
    default: 0.5,
    default_text: "50 %",
    doc: "share of the tolerance that roughness may move a line by before the warning",
}];

impl Rule for RoughnessImpedanceDrift {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let share = cx.option(&OPTIONS[0]);
        let mut out = Vec::new();
        for (nc, ca) in s.net_classes.iter().zip(&cx.analysis.classes) {
            let Some(t) = nc.impedance else { continue };
            let Some((sm, lo, hi)) = solved(ca) else {
                continue;
            };
            // The rough value farthest from the smooth-copper one: the
            // roughness share, whatever else moves the line.
            let rough = if (lo.z - sm.z).abs() > (hi.z - sm.z).abs() {
                lo
            } else {
                hi
            };
            let drift = rough.z - sm.z;
            // A line sized for its rough copper has roughness working for
            // it: nothing to say (`impedance-off-target` judges the result).
            let toward_target = (rough.z - t.target).abs() <= (sm.z - t.target).abs();
            if drift.abs() <= share * t.tolerance || toward_target {
                continue;
            }
            let kind = z_kind(nc);
            let ranged = (hi.z - lo.z).abs() >= 0.05;
            let z_text = if ranged {
                format!("{:.1} to {:.1} Ω (faces of unknown roughness)", lo.z, hi.z)
            } else {
                format!("{:.1} Ω", rough.z)
            };
            let delay_drift = rough.ps_per_mm() - sm.ps_per_mm();
            let message = format!(
                "copper roughness moves net class `{}` by {drift:+.1} Ω, {:.0} % of its ±{:.1} Ω tolerance: {kind} {:.1} Ω with smooth copper, {z_text} with the declared foils at {}; delay {:.2} → {:.2} ps/mm ({delay_drift:+.3} ps/mm)",
                nc.name,
                100.0 * drift.abs() / t.tolerance,
                t.tolerance,
                sm.z,
                fmt_frequency(ca.frequency),
                sm.ps_per_mm(),
                rough.ps_per_mm()
            );
            let fix = width_fix(nc, ca, t.target).unwrap_or_else(|| {
                "size the line with the declared copper, not a smooth-copper model".into()
            });
            let mut f = Finding::new(
                META.name,
                cx.at(&format!("{}/impedance/target", nc.pointer)),
                message,
            )
            .label("target")
            .secondary(cx.at(&format!("{}/width", nc.pointer)), "width");
            if drift.abs() > t.tolerance {
                // Roughness alone is larger than the whole tolerance.
                f = f.with_help(fix);
            } else {
                f = f.with_severity(Severity::Warning).with_help(format!(
                    "{fix}, so that etch and thickness tolerances keep their share of the budget"
                ));
            }
            out.push(f.key(format!("{:.0}/{:.0}", sm.z, rough.z)));
        }
        out
    }
}
