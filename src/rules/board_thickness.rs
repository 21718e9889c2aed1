//! `board-thickness-off-target`: the summed layer thickness misses the
//! stated board thickness target.

use crate::finding::{key_step, Finding, Severity};
use crate::model::LayerKind;
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::fmt_length;

pub struct BoardThicknessOffTarget;

static META: RuleMeta = RuleMeta {
    name: "board-thickness-off-target",
    summary: "the summed layer thickness is outside the board thickness target ± tolerance",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/board-thickness-off-target.md"),
    options: &[],
};

impl Rule for BoardThicknessOffTarget {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let Some(bt) = &s.settings.board_thickness else {
            return Vec::new();
        };
        let total = s.total_thickness();
        let diff = total - bt.target;
        if diff.abs() <= bt.tolerance {
            return Vec::new();
        }
        let copper: f64 = s
            .layers
            .iter()
            .filter_map(|l| match &l.kind {
                LayerKind::Copper(c) => Some(c.thickness),
                LayerKind::Dielectric(_) => None,
            })
            .sum();
        let nominal_only = s
            .layers
            .iter()
            .filter(|l| matches!(&l.kind, LayerKind::Dielectric(d) if !d.pressed_given))
            .count();
        let note = if nominal_only > 0 {
            format!(" ({nominal_only} dielectric(s) counted at their nominal thickness)")
        } else {
            String::new()
        };
        vec![Finding::new(
            META.name,
            cx.at(&format!("{}/target", bt.pointer)),
            format!(
                "the layers add up to {} ({} copper, {} dielectric){}, {} {} the {} target; the tolerance is ±{}",
                fmt_length(total),
                fmt_length(copper),
                fmt_length(total - copper),
                note,
                fmt_length(diff.abs()),
                if diff > 0.0 { "above" } else { "below" },
                fmt_length(bt.target),
                fmt_length(bt.tolerance),
            ),
        )
        .label("target")
        .with_help(format!(
            "{} the dielectric thickness by {} in total (keep the build symmetric), or correct the target",
            if diff > 0.0 { "reduce" } else { "increase" },
            fmt_length(diff.abs())
        ))
        // 10 um: pressed-thickness arithmetic moves by less; a
        // ply change moves it by more.
        .key(key_step(total * 1e6, 10.0))]
    }
}
