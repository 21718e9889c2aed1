//! `insertion-loss-budget`: a class's route loses more than its stated
//! insertion-loss budget at the frequency the budget is set at.

use crate::finding::{key_step, Finding, Severity};
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, fmt_length, Dimension};

pub struct InsertionLossBudget;

static META: RuleMeta = RuleMeta {
    name: "insertion-loss-budget",
    summary: "a net class's line loses more than its `loss-budget` over the budgeted length",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/insertion-loss-budget.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 1] = [OptionSpec {
    key: "warn-share",
    kind: OptionKind::Quantity(Dimension::Fraction),
    // Connectors, vias and package take the rest of a channel's budget;
    // a line that alone uses nearly all of its share leaves no margin
    // (common practice, no source).
    default: 0.9,
    default_text: "90 %",
    doc: "share of the budget the line may use before the warning",
}];

impl Rule for InsertionLossBudget {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let warn_share = cx.option(&OPTIONS[0]);
        let mut out = Vec::new();
        for (nc, ca) in s.net_classes.iter().zip(&cx.analysis.classes) {
            let (Some(b), Some(&(f, ref l))) = (nc.loss_budget, ca.budget_loss.as_ref()) else {
                continue;
            };
            let total = l.total_rough() * b.length;
            let share = total / b.loss;
            if share <= warn_share {
                continue;
            }
            let at = if nc.nyquist.is_some() {
                format!("{} (the Nyquist frequency)", fmt_frequency(f))
            } else {
                fmt_frequency(f)
            };
            let mut finding = Finding::new(
                META.name,
                cx.at(&format!("{}/loss-budget/loss", nc.pointer)),
                format!(
                    "net class `{}` loses {total:.1} dB over {} at {at} against a {:.1} dB budget ({:.0} %): dielectric {:.1} dB, conductor {:.1} dB with the declared roughness ({:.1} dB if smooth)",
                    nc.name,
                    fmt_length(b.length),
                    b.loss,
                    100.0 * share,
                    l.dielectric * b.length,
                    l.conductor_rough * b.length,
                    l.conductor_smooth * b.length,
                ),
            )
            .label("loss budget")
            .with_help(if l.dielectric > l.conductor_rough {
                "the dielectric dominates: a lower-Df material for the plies around the line, or a shorter route"
            } else {
                "the conductor dominates: smoother foil (and bond treatment), a wider line with the dielectric thickened to keep the impedance, or a shorter route"
            })
            .key(key_step(total, 0.5));
            if total <= b.loss {
                finding = finding.with_severity(Severity::Warning);
            }
            out.push(finding);
        }
        out
    }
}
