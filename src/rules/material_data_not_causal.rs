//! `material-data-not-causal`: a material's Dk and Df points cannot all
//! hold for one causal material, so the numbers built on them use a fitted
//! pair that differs from what the file states.

use crate::finding::{key_step, Finding, Severity};
use crate::model::LayerKind;
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::fmt_frequency;

pub struct MaterialDataNotCausal;

static META: RuleMeta = RuleMeta {
    name: "material-data-not-causal",
    summary: "a material's Dk and Df points cannot all hold for one causal material; the numbers use a fitted pair instead",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/material-data-not-causal.md"),
    options: &[],
};

impl Rule for MaterialDataNotCausal {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let mut out = Vec::new();
        for (name, model) in &cx.analysis.materials {
            let Some(m) = s.materials.get(name) else {
                continue;
            };
            // Only materials a ply of this stackup is made of.
            let used = s
                .layers
                .iter()
                .any(|l| matches!(&l.kind, LayerKind::Dielectric(d) if &d.material == name));
            if !used {
                continue;
            }
            if let Some(why) = &model.fit_problem {
                let (at, entry) = cx.at_material(name, "");
                out.push(
                    Finding::new(
                        META.name,
                        at,
                        format!(
                            "material `{name}`'s data admit no causal wideband model ({why}); every frequency uses its first point, Dk {:.2} and Df {:.4}, unchanged",
                            m.points[0].dk, m.points[0].df
                        ),
                    )
                    .label("material data")
                    .with_help("check the data against their source; give points measured over the band the lines use")
                    .also(entry, "material data (library)"),
                );
                continue;
            }
            let Some(first) = model.misfits.first() else {
                continue;
            };
            let list: Vec<String> = model
                .misfits
                .iter()
                .take(3)
                .map(|p| {
                    format!(
                        "at {} the file states Dk {:.3} / Df {:.4}, the causal fit gives {:.3} / {:.4} (Df {:+.0} %)",
                        fmt_frequency(p.frequency),
                        p.dk,
                        p.df,
                        p.fit_dk,
                        p.fit_df,
                        100.0 * (p.fit_df / p.df - 1.0)
                    )
                })
                .collect();
            let more = model.misfits.len().saturating_sub(3);
            let every_point = model.misfits.len() == m.points.len();
            let direction = if every_point && model.misfits.iter().all(|p| p.fit_df > p.df) {
                " (the fit's Df is above every stated point: loss comes out higher than the file's Df implies)"
            } else if every_point && model.misfits.iter().all(|p| p.fit_df < p.df) {
                " (the fit's Df is below every stated point: loss comes out lower than the file's Df implies)"
            } else {
                ""
            };
            let worst_df = model
                .misfits
                .iter()
                .map(|p| (p.fit_df / p.df - 1.0).abs())
                .fold(0.0, f64::max);
            let (at_points, entry) = cx.at_material(name, &format!("/points/{}", first.index));
            out.push(
                Finding::new(
                    META.name,
                    at_points,
                    format!(
                        "material `{name}`'s points cannot all hold for one causal material (a Djordjevic-Sarkar term, nearly flat Df): {}{}; loss and Dk use the fitted values{direction}",
                        list.join("; "),
                        if more > 0 { format!(" (and {more} more)") } else { String::new() }
                    ),
                )
                .label("not met by a causal fit")
                .with_help(format!(
                    "check the points against their source (a Dk that falls faster across the band than its Df allows, or a Df that climbs, is the usual sign of mixed test methods); or state the fitted pair, Dk {:.3} and Df {:.4} at {}, if the data cannot be checked",
                    first.fit_dk,
                    first.fit_df,
                    fmt_frequency(first.frequency)
                ))
                .also(entry, "material data (library)")
                .key(key_step(worst_df * 100.0, 5.0)),
            );
        }
        out
    }
}
