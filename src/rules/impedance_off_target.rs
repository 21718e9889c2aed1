//! `impedance-off-target`: a controlled line's solved impedance, with the
//! copper it is declared with, lies outside its target ± tolerance,
//! whatever the reason (width, spacing, Dk, thickness or roughness).

use crate::analysis::{ClassAnalysis, LineNumbers};
use crate::finding::{key_step, Finding, Severity};
use crate::model::NetClass;
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, fmt_length, Dimension};

pub struct ImpedanceOffTarget;

/// A solved width is written to 0.1 µm, finer than any etching holds
/// (common practice, no source).
const WIDTH_STEP: f64 = 0.1e-6;

static META: RuleMeta = RuleMeta {
    name: "impedance-off-target",
    summary: "a controlled line's solved impedance, with its declared copper, is outside its target ± tolerance",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/impedance-off-target.md"),
    options: &[],
};

/// "Z0" or "Z_diff", as the class's structure carries its signal.
pub(super) fn z_kind(nc: &NetClass) -> &'static str {
    if nc.structure.is_differential() {
        "Z_diff"
    } else {
        "Z0"
    }
}

/// The class's solved numbers a judgement can use: smooth copper and the
/// declared roughness as a (low, high) impedance range, or `None` when the
/// class is not solved or its structure is not the declared one (those
/// have findings of their own).
pub(super) fn solved(ca: &ClassAnalysis) -> Option<(&LineNumbers, LineNumbers, LineNumbers)> {
    let (Ok(sm), Some(best), Some(worst)) = (&ca.smooth, ca.rough_best, ca.rough_worst) else {
        return None;
    };
    if ca.geometry.as_ref().is_ok_and(|g| g.structure_fallback) {
        return None; // missing-reference-plane says why
    }
    let (lo, hi) = if best.z <= worst.z {
        (best, worst)
    } else {
        (worst, best)
    };
    Some((sm, lo, hi))
}

/// The concrete change that brings the worst-case line back to target: the
/// solved base width, when the analysis found one.
pub(super) fn width_fix(nc: &NetClass, ca: &ClassAnalysis, target: f64) -> Option<String> {
    let w = ca.width_for_target?;
    ((w - nc.width).abs() > 0.05e-6).then(|| {
        format!(
            "change the base width from {} to {} ({:+.1} µm) to meet {target:.1} Ω with the declared copper",
            fmt_length(nc.width),
            fmt_length(w),
            (w - nc.width) * 1e6,
        )
    })
}

impl Rule for ImpedanceOffTarget {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let mut out = Vec::new();
        for (nc, ca) in s.net_classes.iter().zip(&cx.analysis.classes) {
            let Some(t) = nc.impedance else { continue };
            let Some((sm, lo, hi)) = solved(ca) else {
                continue;
            };
            let (min, max) = (t.target - t.tolerance, t.target + t.tolerance);
            let all_out = hi.z < min || lo.z > max;
            let some_out = lo.z < min || hi.z > max;
            if !some_out {
                continue;
            }
            let kind = z_kind(nc);
            let ranged = (hi.z - lo.z).abs() >= 0.05;
            let z_text = if ranged {
                format!("{:.1} to {:.1} Ω", lo.z, hi.z)
            } else {
                format!("{:.1} Ω", hi.z)
            };
            let off = |z: f64| 100.0 * (z - t.target) / t.target;
            let far = if (lo.z - t.target).abs() > (hi.z - t.target).abs() {
                lo.z
            } else {
                hi.z
            };
            let roughness = if (far - sm.z).abs() >= 0.05 {
                format!(
                    " (smooth copper {:.1} Ω; copper roughness {:+.1} Ω of it)",
                    sm.z,
                    far - sm.z
                )
            } else {
                String::new()
            };
            let why_range = if ranged {
                "; the range comes from copper faces of unknown roughness"
            } else {
                ""
            };
            // A line whose nearest plane lies beyond another signal layer is
            // not fixed by width: `missing-reference-plane` says why.
            // (Neither adjacent copper layer is a plane: a dual stripline,
            // with a plane on one side, is still sized by its width.)
            let i = nc.layer_index;
            let adjacent_plane = [s.nearest_copper(i, true), s.nearest_copper(i, false)]
                .into_iter()
                .flatten()
                .any(|j| s.copper(j).is_some_and(|c| c.role.is_reference()));
            let far_plane = !adjacent_plane;
            let fix = if far_plane {
                Some("give the line a plane on the layer next to it (or move it to a layer next to a plane) and re-solve the width; sizing the width for a plane beyond another signal layer gives a line that only holds while that layer is empty".to_string())
            } else {
                width_fix(nc, ca, t.target)
            };
            let at_target = cx.at(&format!("{}/impedance/target", nc.pointer));
            let f = if all_out {
                Finding::new(
                    META.name,
                    at_target,
                    format!(
                        "net class `{}` is {kind} {z_text} at {} ({:+.0} %), outside its {:.1} ± {:.1} Ω target{roughness}{why_range}",
                        nc.name,
                        fmt_frequency(ca.frequency),
                        off(far),
                        t.target,
                        t.tolerance
                    ),
                )
                .label("target")
                .secondary(cx.at(&format!("{}/width", nc.pointer)), "width")
                .with_help(fix.unwrap_or_else(|| {
                    "resize the line (width, spacing or dielectric) for the target with the declared copper".into()
                }))
            } else {
                // Only part of a roughness range is outside: the line may
                // pass or fail depending on copper the stackup does not state.
                Finding::new(
                    META.name,
                    at_target,
                    format!(
                        "net class `{}` may miss its {:.1} ± {:.1} Ω target: {kind} {z_text} at {}, and the end at {far:.1} Ω ({:+.0} %) is outside{roughness}{why_range}",
                        nc.name,
                        t.target,
                        t.tolerance,
                        fmt_frequency(ca.frequency),
                        off(far),
                    ),
                )
                .with_severity(Severity::Warning)
                .label("target")
                .with_help(match fix {
                    Some(fix) => format!(
                        "get the roughness of the faces from the foil and the fabricator's treatment data to narrow the range, or {fix} (sized for the worst case)"
                    ),
                    None => "get the roughness of the faces from the foil and the fabricator's treatment data to narrow the range".into(),
                })
            };
            // The solved width as an edit of the `width:` value, where a
            // width fixes the line (not for a plane beyond another layer).
            let f = match ca.width_for_target.filter(|_| !far_plane) {
                Some(w) if (w - nc.width).abs() > 0.05e-6 => f.with_fix(
                    format!(
                        "set the width of net class `{}` to {:.1} µm, the width that meets {:.1} Ω with the declared copper",
                        nc.name,
                        w * 1e6,
                        t.target
                    ),
                    [cx.edit_quantity(&format!("{}/width", nc.pointer), w, WIDTH_STEP, Dimension::Length)],
                ),
                _ => f,
            };
            // Whole ohms: a baseline holds until the line moves by one.
            out.push(f.key(key_step(far, 1.0)));
        }
        out
    }
}
