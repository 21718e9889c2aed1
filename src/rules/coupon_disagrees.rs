//! `coupon-disagrees-with-stackup`: a measured test coupon's effective
//! permittivity or loss differs from the stackup's model of the same
//! structure by more than a margin, inside the range the data are valid.

use crate::analysis::coupons::{AGREE_EPS, AGREE_LOSS};
use crate::finding::{key_step, Finding, Severity};
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, Dimension};

pub struct CouponDisagrees;

static META: RuleMeta = RuleMeta {
    name: "coupon-disagrees-with-stackup",
    summary: "a measured test coupon's effective Dk or loss differs from the stackup's model of its structure",
    default_severity: Severity::Error,
    doc: include_str!("../../rules/coupon-disagrees-with-stackup.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 2] = [
    OptionSpec {
        key: "eps-margin",
        kind: OptionKind::Quantity(Dimension::Fraction),
        default: AGREE_EPS,
        default_text: "1 %",
        doc: "largest median difference of measured and modelled eps_eff inside the valid range",
    },
    OptionSpec {
        key: "loss-margin",
        kind: OptionKind::Quantity(Dimension::Fraction),
        default: AGREE_LOSS,
        default_text: "10 %",
        doc: "largest median difference of measured and modelled loss inside the valid range",
    },
];

impl Rule for CouponDisagrees {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let eps_margin = cx.option(&OPTIONS[0]);
        let loss_margin = cx.option(&OPTIONS[1]);
        let mut out = Vec::new();
        for ca in &cx.analysis.coupons {
            let c = &s.coupons[ca.coupon];
            let nc = &s.net_classes[c.net_class];
            // A coupon that gives nothing to compare says so: a measurement
            // the check silently skips would read as one that agreed.
            let unused = match (&ca.failure, ca.range) {
                (Some(why), _) => Some(format!("could not be extracted: {why}")),
                (None, None) => Some(format!(
                    "has no reliable point inside its valid range ({})",
                    ca.range_notes.join("; ")
                )),
                _ => None,
            };
            if let Some(why) = unused {
                out.push(
                    Finding::new(
                        META.name,
                        cx.at(&format!("{}/name", c.pointer)),
                        format!("coupon `{}` {why}; it checks nothing", c.name),
                    )
                    .label("coupon not used")
                    .with_help("check the files against the coupon's kind and lengths, and the sweep against its trust range (`stackup-lint coupons` shows every point)")
                    .with_severity(Severity::Warning),
                );
                continue;
            }
            let Some((lo, hi)) = ca.range else {
                continue;
            };
            let range = format!("{} to {}", fmt_frequency(lo), fmt_frequency(hi));
            if let Some(d) = ca.eps_difference.filter(|d| d.abs() > eps_margin) {
                let coupon_at = cx.at(&format!("{}/name", c.pointer));
                let (at, entry, help) = match &ca.implied_dk {
                    Some(im) => {
                        let m = &s.materials[&im.material];
                        let sub = if m.points.len() == 1 {
                            "/dk"
                        } else {
                            "/points/0"
                        };
                        let (at, entry) = cx.at_material(&im.material, sub);
                        (
                            at,
                            entry,
                            format!(
                                "the coupon implies Dk {:.3} ± {:.3} for `{}` at {} (stated {:.3}; the material holds {:.0} % of the line's field): confirm with the fabricator which lot was built, and state the Dk the board is made of",
                                im.implied,
                                im.uncertainty,
                                im.material,
                                fmt_frequency(im.frequency),
                                im.stated,
                                100.0 * im.share
                            ),
                        )
                    }
                    None => (
                        coupon_at.clone(),
                        None,
                        "check the coupon's lengths and the Dk of the plies around the line"
                            .to_string(),
                    ),
                };
                out.push(
                    Finding::new(
                        META.name,
                        at,
                        format!(
                            "coupon `{}` measures eps_eff {:+.1} % from the stackup's model of net class `{}` over {range} (median of the valid points; margin {:.1} %)",
                            c.name,
                            100.0 * d,
                            nc.name,
                            100.0 * eps_margin
                        ),
                    )
                    .label("what the coupon disproves")
                    .secondary(coupon_at, "the coupon")
                    .also(entry, "material data (library)")
                    .with_help(help)
                    .key(key_step(100.0 * d, 0.5)),
                );
            }
            if let Some(d) = ca.loss_difference.filter(|d| d.abs() > loss_margin) {
                out.push(
                    Finding::new(
                        META.name,
                        cx.at(&format!("{}/name", c.pointer)),
                        format!(
                            "coupon `{}` measures loss {:+.0} % from the stackup's model of net class `{}` over {range} (median of the valid points; margin {:.0} %)",
                            c.name,
                            100.0 * d,
                            nc.name,
                            100.0 * loss_margin
                        ),
                    )
                    .label("measured loss")
                    .with_help(if d > 0.0 {
                        "more loss than modelled: the Df of the plies around the line, or the roughness of its foils (give the foils' nodule data with `loss-model: huray`), is understated"
                    } else {
                        "less loss than modelled: the Df or the foil roughness is overstated"
                    })
                    .with_severity(Severity::Warning)
                    .key(key_step(100.0 * d, 5.0)),
                );
            }
        }
        out
    }
}
