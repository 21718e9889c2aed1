//! `frequency-beyond-validity`: a net class carries frequencies above what
//! its material data, its models or its structure are valid for.

use std::collections::BTreeMap;

use crate::analysis::limits::{PitchClass, ROUGHNESS_MODEL_MAX_F};
use crate::finding::{Finding, Severity};
use crate::rules::{Rule, RuleContext, RuleMeta};
use crate::units::{fmt_frequency, fmt_length};

pub struct FrequencyBeyondValidity;

static META: RuleMeta = RuleMeta {
    name: "frequency-beyond-validity",
    summary: "a net class's highest frequency is above the validated range of its material data, models, structure, via fence or launch",
    default_severity: Severity::Warning,
    doc: include_str!("../../rules/frequency-beyond-validity.md"),
    options: &[],
};

impl Rule for FrequencyBeyondValidity {
    fn meta(&self) -> &'static RuleMeta {
        &META
    }

    fn check(&self, cx: &RuleContext<'_>) -> Vec<Finding> {
        let s = cx.stackup;
        let a = cx.analysis;
        let mut out = Vec::new();
        // Material data: group the classes that exceed each material's range.
        let mut by_material: BTreeMap<String, Vec<(String, f64)>> = BTreeMap::new();
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
            for sl in &g.slabs {
                let Some(d) = s.dielectric(sl.layer) else {
                    continue;
                };
                let Some(m) = a.materials.get(&d.material) else {
                    continue;
                };
                if fmax > m.valid_to * (1.0 + 1e-9) {
                    let e = by_material.entry(d.material.clone()).or_default();
                    if !e.iter().any(|(n, _)| n == &nc.name) {
                        e.push((nc.name.clone(), fmax));
                    }
                }
            }
            let class_at = cx.at(&format!("{}/name", nc.pointer));
            let Some(limits) = &ca.limits else { continue };
            // The structure's own limits: first higher-order / surface-wave mode.
            if let Some(m) = limits.mode.as_ref().filter(|m| fmax > m.frequency) {
                out.push(
                    Finding::new(
                        META.name,
                        class_at.clone(),
                        format!(
                            "net class `{}` carries up to {} ({freq_src}), above {} at {}: the line is no longer a single quasi-TEM mode and its impedance and delay numbers do not hold",
                            nc.name,
                            fmt_frequency(fmax),
                            m.what,
                            fmt_frequency(m.frequency)
                        ),
                    )
                    .with_severity(Severity::Error)
                    .label("structure not valid this high")
                    .with_help("use a thinner dielectric or a narrower line (both raise the mode onset), or lower the frequency the class must carry")
                    .key(format!("mode{:.0}", m.frequency / 1e9)),
                );
            }
            // The roughness model's calibrated range.
            if fmax > ROUGHNESS_MODEL_MAX_F && !ca.roughness_undeclared {
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
            let m = &s.materials[&name];
            let model = &a.materials[&name];
            let fmax = classes.iter().map(|c| c.1).fold(0.0_f64, f64::max);
            let at = if m.valid_to.is_some() {
                cx.at_in(m.file, &format!("{}/valid-to", m.pointer))
            } else {
                cx.at_in(m.file, &m.pointer)
            };
            let list: Vec<String> = classes
                .iter()
                .map(|(n, f)| format!("`{n}` ({})", fmt_frequency(*f)))
                .collect();
            out.push(
                Finding::new(
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
                .key(format!("{:.0}", fmax / 1e9)),
            );
        }
        out
    }
}
