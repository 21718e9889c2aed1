//! `via-stub-resonance`: the stub a through via leaves beyond an inner
//! layer's class resonates inside, or too close to, the band the class
//! carries.

use crate::analysis::vias::{Stub, StubResonance, StubSide};
use crate::finding::{key_step, Finding, Severity};
use crate::model::{OptionKind, OptionSpec};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::fmt_frequency;

pub struct ViaStubResonance;

static META: RuleMeta = RuleMeta {
    name: "via-stub-resonance",
    summary: "the through-via stub beyond an inner layer's net class resonates inside, or within the margin of, the band the class carries",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/via-stub-resonance.md"),
    options: &OPTIONS,
};

static OPTIONS: [OptionSpec; 1] = [OptionSpec {
    key: "margin",
    kind: OptionKind::Ratio { max: 10.0 },
    // Common practice, no source: keep the first stub resonance 1.5× to 2×
    // above the highest frequency that matters.
    default: 1.5,
    default_text: "1.5",
    doc: "factor above the class's highest frequency (its `max-frequency`, else 3 × the Nyquist frequency of its data rate) that the first stub resonance must reach",
}];

impl Rule for ViaStubResonance {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let margin = cx.option(&OPTIONS[0]);
        let mut out = Vec::new();
        for (nc, st) in s.net_classes.iter().zip(&cx.analysis.via_stubs) {
            let (Some(st), Some(top)) = (st, nc.max_frequency) else {
                continue;
            };
            let limit = margin * top;
            let w = &st.worst;
            if w.resonance >= limit {
                continue;
            }
            // The frequency the class cannot do without: its Nyquist
            // frequency, or the highest frequency of an RF class.
            let (hard, hard_text) = match nc.nyquist {
                Some(n) => (n, format!("its {} Nyquist frequency", ghz(n))),
                None => (top, format!("its {} max-frequency", ghz(top))),
            };
            let band = if nc.max_frequency_given {
                format!("the class's {} max-frequency", ghz(top))
            } else {
                format!(
                    "the class's highest frequency of {} (3 × its {} Nyquist frequency)",
                    ghz(top),
                    ghz(nc.nyquist.unwrap_or(0.0))
                )
            };
            let judged = if w.resonance <= hard {
                format!("at or below {hard_text}")
            } else {
                format!("below {}, {margin} × {band}", ghz(limit))
            };
            let layer = &s.layers[st.layer].name;
            let message = format!(
                "net class `{}` leaves its through vias on `{layer}` with a {} stub {} to `{}` (εeff {:.2} at {}); its quarter-wave resonance at {} is {judged}",
                nc.name,
                mm(w.length),
                match w.side {
                    StubSide::Below => "down",
                    StubSide::Above => "up",
                },
                s.layers[w.far_copper].name,
                w.eps_eff,
                ghz(st.frequency),
                ghz(w.resonance),
            );
            let mut help = vec![fix(cx, st, w, limit)];
            if st.other.resonance < limit {
                help.push(fix(cx, st, &st.other, limit));
            }
            if help.iter().any(|h| h.contains("back-drill from")) {
                help.push("a back-drill leaves the trace and its impedance unchanged".into());
            }
            let band_at = if nc.max_frequency_given {
                "max-frequency"
            } else {
                "data-rate"
            };
            let mut f = Finding::new(META.name, cx.at(&format!("{}/layer", nc.pointer)), message)
                .label(format!("stub resonance {}", ghz(w.resonance)))
                .secondary(cx.at_layer(w.far_copper), "the stub runs to here")
                .secondary(cx.at(&format!("{}/{band_at}", nc.pointer)), "sets the band")
                .with_help(help.join("; "))
                // 10 um is 1 % of a 1 mm stub; 1 GHz steps keep Dk noise
                // inside one step.
                .key(key_step(w.length * 1e6, 10.0))
                .key(key_step(w.resonance / 1e9, 1.0));
            if w.resonance <= hard {
                f = f.with_severity(Severity::Error);
            }
            out.push(f);
        }
        out
    }
}

/// What shortens one stub enough, in words: the back-drill of the analysis
/// when it clears `limit`; otherwise that it does not, and a blind via.
fn fix(cx: &RuleContext<'_>, st: &StubResonance, stub: &Stub, limit: f64) -> String {
    let s = cx.stackup;
    let layer = &s.layers[st.layer].name;
    let far = &s.layers[stub.far_copper].name;
    let (entry, beside) = match stub.side {
        StubSide::Below => ("the top", "below"),
        StubSide::Above => ("the bottom", "above"),
    };
    match &stub.backdrill {
        Some(b) if b.resonance >= limit => format!(
            "for vias entered from {entry}, back-drill from the `{far}` side to a depth of {} (leaving at most {} {beside} `{layer}`), which moves the resonance to {}",
            mm(b.depth),
            mm(b.residual),
            ghz(b.resonance),
        ),
        Some(b) => format!(
            "for vias entered from {entry}, a back-drill leaving the usual {} {beside} `{layer}` moves the resonance only to {}, still below {}: use blind vias for this class",
            mm(b.residual),
            ghz(b.resonance),
            ghz(limit),
        ),
        None => format!(
            "for vias entered from {entry}, the {} stub is already shorter than a back-drill leaves: use blind vias for this class",
            mm(stub.length),
        ),
    }
}

/// A frequency to the precision the estimate has: 0.1 GHz, trailing `.0`
/// dropped (`31 GHz`, `12.5 GHz`).
fn ghz(f: f64) -> String {
    if f < 1e9 {
        return fmt_frequency(f);
    }
    let t = format!("{:.1}", f / 1e9);
    format!("{} GHz", t.trim_end_matches(".0"))
}

/// A stub length or drill depth as a fabrication drawing gives it, in mm to
/// 10 µm.
fn mm(m: f64) -> String {
    format!("{:.2} mm", m * 1e3)
}
