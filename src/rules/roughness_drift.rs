//! `roughness-impedance-drift`: copper roughness moves a controlled line's
//! impedance and delay off what a smooth-copper model predicts.

use crate::finding::{Finding, Severity};
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, fmt_length, Dimension};

pub struct RoughnessImpedanceDrift;

static META: RuleMeta = RuleMeta {
    name: "roughness-impedance-drift",
    summary: "copper roughness pushes a controlled line outside, or uses up much of, its impedance tolerance",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/roughness-impedance-drift.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 1] = [OptionSpec {
    key: "budget-share",
    kind: OptionKind::Quantity(Dimension::Fraction),
    default: 0.5,
    default_text: "50 %",
    doc: "share of the tolerance that roughness may take from a smooth-copper design before the warning",
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
            // A section built but not solved is `net-class-not-computed`'s.
            let (Ok(sm), Some(best), Some(worst)) = (&ca.smooth, ca.rough_best, ca.rough_worst)
            else {
                continue;
            };
            if ca.geometry.as_ref().is_ok_and(|g| g.structure_fallback) {
                continue; // the structure itself is wrong: missing-reference-plane says so
            }
            let (z_lo, z_hi) = (best.z.min(worst.z), best.z.max(worst.z));
            // The rough value farthest from target decides.
            let z_far = if (z_lo - t.target).abs() > (z_hi - t.target).abs() {
                z_lo
            } else {
                z_hi
            };
            let drift = z_far - sm.z;
            let delay_drift = worst.ps_per_mm() - sm.ps_per_mm();
            let kind = if nc.structure.is_differential() {
                "Z_diff"
            } else {
                "Z0"
            };
            let z_text = if (z_hi - z_lo).abs() < 0.05 {
                format!("{z_far:.1} Ω")
            } else {
                format!("{z_lo:.1} to {z_hi:.1} Ω (a face of unknown roughness)")
            };
            let fix = ca
                .width_for_target
                .map(|w| {
                    format!(
                        "change the base width from {} to {} ({:+.1} µm) to meet {:.1} Ω with the declared copper",
                        fmt_length(nc.width),
                        fmt_length(w),
                        (w - nc.width) * 1e6,
                        t.target
                    )
                })
                .unwrap_or_else(|| "resize the trace for the rough-copper value".into());
            let numbers = format!(
                "{kind} {:.1} Ω with smooth copper, {z_text} with the declared foils at {} (drift {drift:+.1} Ω); delay {:.2} → {:.2} ps/mm ({delay_drift:+.3} ps/mm)",
                sm.z,
                fmt_frequency(ca.frequency),
                sm.ps_per_mm(),
                worst.ps_per_mm()
            );
            let outside = (z_far - t.target).abs() > t.tolerance;
            if outside {
                out.push(
                    Finding::new(
                        META.name,
                        cx.at(&format!("{}/impedance/target", nc.pointer)),
                        format!(
                            "net class `{}` misses its {:.1} ± {:.1} Ω target: {numbers}",
                            nc.name, t.target, t.tolerance
                        ),
                    )
                    .label("target")
                    .secondary(cx.at(&format!("{}/width", nc.pointer)), "width")
                    .with_help(fix)
                    .key(format!("{:.0}/{:.0}", sm.z, z_far)),
                );
            } else if (z_far - t.target).abs() > share * t.tolerance
                && (z_far - t.target).abs() > (sm.z - t.target).abs()
                && drift.abs() > 0.5 * (z_far - t.target).abs()
            {
                // Still in tolerance, but a design centred on smooth copper
                // has had most of its margin taken by roughness.
                out.push(
                    Finding::new(
                        META.name,
                        cx.at(&format!("{}/impedance/target", nc.pointer)),
                        format!(
                            "copper roughness moves net class `{}` to {:.0} % of its ±{:.1} Ω tolerance: {numbers}",
                            nc.name,
                            100.0 * (z_far - t.target).abs() / t.tolerance,
                            t.tolerance,
                        ),
                    )
                    .with_severity(Severity::Warning)
                    .label("target")
                    .with_help(format!("{fix}, so that etch and thickness tolerances keep their share of the budget"))
                    .key(format!("{:.0}/{:.0}", sm.z, z_far)),
                );
            }
        }
        out
    }
}
