//! `modulation-assumed`: a net class gives a data rate without its
//! modulation, so its Nyquist frequency (and the highest frequency that
//! follows from it) rests on the NRZ the model assumed.

use crate::finding::{key_step, Finding, Severity};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::fmt_frequency;

pub struct ModulationAssumed;

static META: RuleMeta = RuleMeta {
    name: "modulation-assumed",
    summary: "a net class gives a data rate without `modulation`; it is read as NRZ",
    default_severity: Severity::Note,
    doc: include_str!("../../rules/modulation-assumed.md"),
    options: &[],
};

impl Rule for ModulationAssumed {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let mut out = Vec::new();
        for nc in &cx.stackup.net_classes {
            let (Some(rate), Some(nyquist)) = (nc.data_rate, nc.nyquist) else {
                continue;
            };
            if nc.modulation_given {
                continue;
            }
            let highest = match nc.max_frequency {
                Some(f) if !nc.max_frequency_given => {
                    format!(" and its highest frequency at {}", fmt_frequency(f))
                }
                _ => String::new(),
            };
            out.push(
                Finding::new(
                    META.name,
                    cx.at(&format!("{}/data-rate", nc.pointer)),
                    format!(
                        "net class `{}` gives a data rate of {} Gbps without `modulation`; it is read as NRZ, which puts its Nyquist frequency at {}{highest}",
                        nc.name,
                        format!("{:.3}", rate / 1e9)
                            .trim_end_matches('0')
                            .trim_end_matches('.'),
                        fmt_frequency(nyquist),
                    ),
                )
                .label("read as NRZ")
                .with_help(format!(
                    "add `modulation: nrz` to say so, or `modulation: pam4` if the link sends two bits per symbol (Nyquist frequency {})",
                    fmt_frequency(rate / 4.0)
                ))
                // 1 Gbps: rates are quoted to the gigabit or finer.
                .key(key_step(rate / 1e9, 1.0)),
            );
        }
        out
    }
}
