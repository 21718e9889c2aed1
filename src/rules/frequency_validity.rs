//! `frequency-beyond-validity`: a net class carries frequencies above what
//! its material data, its models or its structure are valid for.

use std::collections::BTreeMap;

use crate::analysis::limits::{PitchClass, ROUGHNESS_MODEL_MAX_F};
use crate::finding::{Finding, Severity};
use crate::model::{OptionKind, OptionSpec, Structure};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, fmt_length, Dimension};

pub struct FrequencyBeyondValidity;

static META: RuleMeta = RuleMeta {
    name: "frequency-beyond-validity",
    summary: "a net class's highest frequency is above the validated range of its material data, models, structure, via fence or launch",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/frequency-beyond-validity.md"),
    options: &OPTIONS,
};

/// Above this, a grounded coplanar line without a stated via fence gets a
/// note (common practice, no source: fences matter from the low tens of GHz
/// on typical board dielectrics).
const GCPW_FENCE_NOTE_F: f64 = 20e9;

static OPTIONS: [OptionSpec; 1] = [OptionSpec {
    key: "onset-margin",
    kind: OptionKind::Quantity(Dimension::Fraction),
    // The closed-form onsets agree with full-wave results to roughly
    // 10-20 % (common practice, no source).
    default: 0.2,
    default_text: "20 %",
    doc: "how close below a mode-onset estimate the highest frequency may come before the warning",
}];

impl Rule for FrequencyBeyondValidity {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let a = cx.analysis;
        let margin = cx.option(&OPTIONS[0]);
        let mut out = Vec::new();
        // Material data: group the classes that exceed each material's range.
        // Per class: its highest frequency, and whether the data fall short
        // of what its signal needs (a given max-frequency, or the Nyquist
        // frequency of a data rate; above Nyquist only the harmonics are
        // extrapolated, a note).
        let mut by_material: BTreeMap<String, Vec<(String, f64, bool)>> = BTreeMap::new();
        // A measured coupon that agrees with the stackup validates the
        // material holding most of its line's field up to the top of its
        // valid range.
        let mut by_coupon: BTreeMap<&str, f64> = BTreeMap::new();
        for (m, hi) in a.coupons.iter().filter_map(|c| c.validates()) {
            let e = by_coupon.entry(m).or_insert(hi);
            *e = e.max(hi);
        }
        for (nc, ca) in s.net_classes.iter().zip(&a.classes) {
            let Some(fmax) = nc.max_frequency else {
                continue;
            };
            let Ok(g) = &ca.geometry else { continue };
            let freq_src = if nc.max_frequency_given {
                "max-frequency".to_string()
            } else {
                format!(
                    "3 × the {} Nyquist frequency",
                    fmt_frequency(nc.nyquist.unwrap_or(0.0))
                )
            };
            for layer in g.dielectric_layers() {
                let Some(d) = s.dielectric(layer) else {
                    continue;
                };
                let Some(m) = a.materials.get(&d.material) else {
                    continue;
                };
                let valid_to = by_coupon
                    .get(d.material.as_str())
                    .map_or(m.valid_to, |&c| c.max(m.valid_to));
                if fmax > valid_to * (1.0 + 1e-9) {
                    let needed = nc.max_frequency_given
                        || nc.nyquist.is_none_or(|n| n > valid_to * (1.0 + 1e-9));
                    let e = by_material.entry(d.material.clone()).or_default();
                    if !e.iter().any(|(n, _, _)| n == &nc.name) {
                        e.push((nc.name.clone(), fmax, needed));
                    }
                }
            }
            let class_at = cx.at(&format!("{}/name", nc.pointer));
            let Some(limits) = &ca.limits else { continue };
            // The structure's own limits: first higher-order / surface-wave
            // mode. The onsets are closed-form estimates, so a margin.
            if let Some(m) = &limits.mode {
                let help = "a thinner or lower-Dk dielectric raises the onset (re-solve the width for the target: `stackup-lint impedance` gives it); or lower the frequency the class must carry";
                let onset = fmt_frequency(m.frequency);
                if ca.frequency > m.frequency {
                    out.push(
                        Finding::new(
                            META.name,
                            class_at.clone(),
                            format!(
                                "net class `{}` is analysed at {}, above {} at {onset}: the line is no longer a single quasi-TEM mode there, so its solved impedance and delay do not hold",
                                nc.name,
                                fmt_frequency(ca.frequency),
                                m.what,
                            ),
                        )
                        .with_severity(Severity::Error)
                        .label("structure not valid this high")
                        .with_help(help)
                        .key(format!("mode{:.0}", m.frequency / 1e9)),
                    );
                } else if fmax > m.frequency {
                    out.push(
                        Finding::new(
                            META.name,
                            class_at.clone(),
                            format!(
                                "net class `{}` carries up to {} ({freq_src}), above {} at {onset}: its numbers at {} hold, but content above {onset} can couple into that mode",
                                nc.name,
                                fmt_frequency(fmax),
                                m.what,
                                fmt_frequency(ca.frequency),
                            ),
                        )
                        .label("harmonics beyond the mode onset")
                        .with_help(help)
                        .key(format!("mode{:.0}", m.frequency / 1e9)),
                    );
                } else if fmax > (1.0 - margin) * m.frequency {
                    out.push(
                        Finding::new(
                            META.name,
                            class_at.clone(),
                            format!(
                                "net class `{}` carries up to {} ({freq_src}), {:.0} % of {} at {onset}; the onset is a closed-form estimate, so the margin is too thin to rely on",
                                nc.name,
                                fmt_frequency(fmax),
                                100.0 * fmax / m.frequency,
                                m.what,
                            ),
                        )
                        .label("close to the mode onset")
                        .with_help(format!("keep the highest frequency below {} ({:.0} % of the onset estimate), or confirm the structure with a full-wave simulation or measured lines; {help}", fmt_frequency((1.0 - margin) * m.frequency), 100.0 * (1.0 - margin)))
                        .key(format!("near{:.0}", m.frequency / 1e9)),
                    );
                }
            }
            // The roughness model's calibrated range.
            if fmax > ROUGHNESS_MODEL_MAX_F && ca.rough_worst.is_some() {
                out.push(
                    Finding::new(
                        META.name,
                        class_at.clone(),
                        format!(
                            "net class `{}` carries up to {}, above the {} the copper-roughness model is calibrated to; the rough-copper Dk and loss are extrapolated",
                            nc.name,
                            fmt_frequency(fmax),
                            fmt_frequency(ROUGHNESS_MODEL_MAX_F)
                        ),
                    )
                    .with_severity(Severity::Note)
                    .label("beyond the roughness model's range")
                    .with_help("confirm the rough-copper numbers with measured lines (two-line phase method) on this foil and thickness")
                    .key("roughness-range"),
                );
            }
            // A grounded coplanar line at millimetre-wave with no stated
            // fence: its grounds may not be tied to the plane closely enough.
            if nc.structure == Structure::GroundedCoplanar
                && nc.via_fence_pitch.is_none()
                && fmax > GCPW_FENCE_NOTE_F
            {
                out.push(
                    Finding::new(
                        META.name,
                        class_at.clone(),
                        format!(
                            "grounded coplanar net class `{}` carries up to {} but gives no `via-fence-pitch`: unless the side grounds are stitched to the plane closely, they carry parallel-plate and slot modes, and the line's numbers do not hold",
                            nc.name,
                            fmt_frequency(fmax)
                        ),
                    )
                    .with_severity(Severity::Note)
                    .label("no via fence stated")
                    .with_help("add `via-fence-pitch:` with the stitching-via pitch along the line, so it is checked against the guided wavelength")
                    .key("no-fence"),
                );
            }
            // Via fence pitch against the guided wavelength.
            if let (Some(pitch), Some(pc)) = (nc.via_fence_pitch, &limits.via_fence) {
                if pc.class == PitchClass::TooWide {
                    out.push(
                        Finding::new(
                            META.name,
                            cx.at(&format!("{}/via-fence-pitch", nc.pointer)),
                            format!(
                                "via-fence pitch {} of net class `{}` is wider than λg/8 = {} at {} (λg = {} in Dk {:.2}); the fence lets the parallel-plate and waveguide-like modes through",
                                fmt_length(pitch),
                                nc.name,
                                fmt_length(pc.loose_limit),
                                fmt_frequency(fmax),
                                fmt_length(pc.lambda_g),
                                limits.eps_max
                            ),
                        )
                        .label("pitch too wide")
                        .with_help(format!(
                            "stitch at {} or less (λg/8, common practice), {} or less for a strict fence (λg/20)",
                            fmt_length(pc.loose_limit),
                            fmt_length(pc.strict_limit)
                        ))
                        .key(format!("{:.0}", pitch * 1e6)),
                    );
                }
            }
            // Launch validated frequency.
            if let Some(launch) = nc.launch_valid_to {
                if fmax > launch {
                    out.push(
                        Finding::new(
                            META.name,
                            cx.at(&format!("{}/launch-valid-to", nc.pointer)),
                            format!(
                                "net class `{}` carries up to {} but its launch is validated only to {}",
                                nc.name,
                                fmt_frequency(fmax),
                                fmt_frequency(launch)
                            ),
                        )
                        .label("launch validated to here")
                        .with_help("validate the connector launch (simulation or measured fixture) up to the class's highest frequency")
                        .key(format!("{:.0}", launch / 1e9)),
                    );
                }
            }
        }
        for (name, classes) in by_material {
            let model = &a.materials[&name];
            let fmax = classes.iter().map(|c| c.1).fold(0.0_f64, f64::max);
            let (at, entry) = cx.at_material(&name, "/valid-to");
            let list: Vec<String> = classes
                .iter()
                .map(|(n, f, _)| format!("`{n}` ({})", fmt_frequency(*f)))
                .collect();
            let needed = classes.iter().any(|c| c.2);
            let mut f = Finding::new(
                    META.name,
                    at,
                    format!(
                        "material `{name}` has data validated {} to {}, but {} carr{} frequencies up to {}; its Dk and Df there are extrapolated by the Djordjevic-Sarkar model",
                        fmt_frequency(model.valid_from),
                        fmt_frequency(model.valid_to),
                        list.join(", "),
                        if classes.len() == 1 { "ies" } else { "y" },
                        fmt_frequency(fmax)
                    ),
                )
                .label("validated up to here")
                .with_help(format!(
                    "get Dk/Df data measured up to {} (e.g. a split-post or stripline resonator at several frequencies, or two-line phase data) and add them as `points`",
                    fmt_frequency(fmax)
                ))
                .key(format!("{:.0}", fmax / 1e9));
            if !needed {
                f = f
                    .with_severity(Severity::Note)
                    .label("validated to the classes' Nyquist frequency, not their harmonics");
            }
            if let Some(e) = entry {
                f = f.secondary(e, "material data (library)");
            }
            out.push(f);
        }
        out
    }
}
