//! `stackup-mirror-asymmetry`: the build is not mirror-symmetric about its
//! centre in copper or dielectric (bow-and-twist risk).

use crate::finding::{Finding, Severity};
use crate::model::LayerKind;
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::fmt_length;

pub struct StackupMirrorAsymmetry;

/// Resin contents of mirror plies further apart than this (absolute) differ
/// (common practice, no source: prepreg data give resin content to a few
/// per cent).
const RESIN_CONTENT_TOLERANCE: f64 = 0.03;

static META: RuleMeta = RuleMeta {
    name: "stackup-mirror-asymmetry",
    summary:
        "the stackup is not mirror-symmetric about its centre in copper or dielectric (warp risk)",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/stackup-mirror-asymmetry.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 2] = [
    OptionSpec {
        key: "thickness-tolerance",
        kind: OptionKind::Ratio { max: 10.0 },
        default: 0.10,
        default_text: "10 %",
        doc: "relative difference in copper or dielectric thickness tolerated between mirror layers",
    },
    OptionSpec {
        key: "fill-tolerance",
        kind: OptionKind::Ratio { max: 10.0 },
        default: 0.30,
        default_text: "30 %",
        doc: "absolute difference in copper fill tolerated between mirror copper layers, when both give `fill`",
    },
];

impl Rule for StackupMirrorAsymmetry {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let tol = cx.option(&OPTIONS[0]);
        let fill_tol = cx.option(&OPTIONS[1]);
        let n = s.layers.len();
        let mut out = Vec::new();
        for i in 0..n / 2 {
            let j = n - 1 - i;
            let (a, b) = (&s.layers[i], &s.layers[j]);
            let mut problems = Vec::new();
            let mut keys = Vec::new();
            let rel = |x: f64, y: f64| (x - y).abs() / x.max(y);
            match (&a.kind, &b.kind) {
                (LayerKind::Copper(ca), LayerKind::Copper(cb)) => {
                    if rel(ca.thickness, cb.thickness) > tol {
                        problems.push(format!(
                            "copper {} vs {}",
                            fmt_length(ca.thickness),
                            fmt_length(cb.thickness)
                        ));
                        keys.push(format!(
                            "cu{:.0}/{:.0}",
                            ca.thickness * 1e6,
                            cb.thickness * 1e6
                        ));
                    }
                    if let (Some(fa), Some(fb)) = (ca.fill, cb.fill) {
                        if (fa - fb).abs() > fill_tol {
                            problems.push(format!(
                                "copper fill {:.0} % vs {:.0} %",
                                fa * 100.0,
                                fb * 100.0
                            ));
                            keys.push(format!("fill{:.0}/{:.0}", fa * 100.0, fb * 100.0));
                        }
                    }
                }
                (LayerKind::Dielectric(da), LayerKind::Dielectric(db)) => {
                    if rel(da.thickness, db.thickness) > tol {
                        problems.push(format!(
                            "thickness {} vs {}",
                            fmt_length(da.thickness),
                            fmt_length(db.thickness)
                        ));
                        keys.push(format!(
                            "t{:.0}/{:.0}",
                            da.thickness * 1e6,
                            db.thickness * 1e6
                        ));
                    }
                    if da.kind != db.kind {
                        problems.push(format!("{} vs {}", da.kind.as_str(), db.kind.as_str()));
                        keys.push(format!("{}/{}", da.kind.as_str(), db.kind.as_str()));
                    }
                    if da.material != db.material {
                        problems.push(format!("material `{}` vs `{}`", da.material, db.material));
                        keys.push(format!("{}/{}", da.material, db.material));
                    }
                    // Glass style and resin content set a ply's expansion
                    // and its shrink in pressing, as much as its thickness
                    // (common practice, no source).
                    if let (Some(ga), Some(gb)) = (&da.glass_style, &db.glass_style) {
                        if ga != gb {
                            problems.push(format!("glass style {ga} vs {gb}"));
                            keys.push(format!("glass{ga}/{gb}"));
                        }
                    }
                    if let (Some(ra), Some(rb)) = (da.resin_content, db.resin_content) {
                        if (ra - rb).abs() > RESIN_CONTENT_TOLERANCE {
                            problems.push(format!(
                                "resin content {:.0} % vs {:.0} %",
                                ra * 100.0,
                                rb * 100.0
                            ));
                            keys.push(format!("resin{:.0}/{:.0}", ra * 100.0, rb * 100.0));
                        }
                    }
                }
                _ => {
                    problems.push(
                        "copper facing dielectric: the two halves have different layer sequences"
                            .to_string(),
                    );
                    keys.push("sequence".into());
                }
            }
            if problems.is_empty() {
                continue;
            }
            let mut f = Finding::new(
                META.name,
                cx.at_layer(i),
                format!(
                    "layer `{}` and its mirror `{}` differ: {}",
                    a.name,
                    b.name,
                    problems.join("; ")
                ),
            )
            .label("upper half")
            .secondary(cx.at_layer(j), "mirror position in the lower half")
            .with_help(format!(
                "build the two halves alike (copper weight, dielectric thickness within {:.0} %, ply kind, material, glass style and resin content) so the board stays flat through reflow; or suppress with the fab's agreement",
                tol * 100.0
            ));
            for k in keys {
                f = f.key(k);
            }
            out.push(f);
        }
        out
    }
}
