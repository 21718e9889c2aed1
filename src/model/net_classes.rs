//! Net classes (structure, layer, widths, targets, frequencies) and
//! matched groups (nets routed over segments of several layers).

use std::collections::BTreeMap;

use super::layers::layer_ref;
use super::reader::{fmt_freq, fmt_len, fmt_time, Reader};
use super::*;
use crate::input::yaml::Node;
use crate::units::Dimension;

pub(super) fn read_net_classes(r: &mut Reader<'_>, s: &Stackup) -> Vec<NetClass> {
    let n = r
        .node("/net-classes")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut out = Vec::new();
    let mut names: BTreeMap<String, String> = BTreeMap::new();
    for i in 0..n {
        let ptr = format!("/net-classes/{i}");
        let name = r.string(&format!("{ptr}/name")).unwrap_or_default();
        if r.skip.contains(&ptr) {
            r.unusable.insert(name);
            continue;
        }
        // A class with any error is left out (the model keeps the others).
        let errors_before = r.errors.len();
        if let Some(first) = names.insert(name.clone(), ptr.clone()) {
            let first = r.line_of(&first);
            r.error(
                &format!("{ptr}/name"),
                format!("net class `{name}` is defined twice (first at line {first})"),
                "duplicate net class",
                None,
            );
        }
        match read_net_class(r, s, &ptr, name.clone()) {
            Some(nc) if r.errors.len() == errors_before => out.push(nc),
            _ => {
                r.unusable.insert(name);
            }
        }
    }
    out
}

pub(super) fn read_net_class(
    r: &mut Reader<'_>,
    s: &Stackup,
    ptr: &str,
    name: String,
) -> Option<NetClass> {
    let structure = r
        .string(&format!("{ptr}/structure"))
        .and_then(|w| w.parse().ok())
        .unwrap_or(Structure::Microstrip);
    let layer_index = layer_ref(r, s, &format!("{ptr}/layer"), "a net class's layer");
    let mut refs_ok = true;
    let references = r
        .node(&format!("{ptr}/references"))
        .and_then(Node::as_seq)
        .map(|items| {
            (0..items.len())
                .filter_map(|j| {
                    let v = layer_ref(r, s, &format!("{ptr}/references/{j}"), "a reference");
                    refs_ok &= v.is_some();
                    v
                })
                .collect::<Vec<_>>()
        });
    let len = |r: &mut Reader<'_>, key: &str, what: &str| -> Option<Option<f64>> {
        let p = format!("{ptr}/{key}");
        if r.node(&p).is_none() {
            return Some(None);
        }
        r.bounded(&p, Dimension::Length, what, 0.0, 20e-3, fmt_len)
            .map(Some)
    };
    let width = len(r, "width", "trace width");
    let top_width = len(r, "top-width", "top width");
    let spacing = len(r, "spacing", "pair spacing");
    let gap = len(r, "gap", "coplanar gap");
    let pitch = len(r, "via-fence-pitch", "via-fence pitch");
    let pair_pitch = len(r, "pair-pitch", "pair pitch");
    let loss_budget = if r.node(&format!("{ptr}/loss-budget")).is_some() {
        let loss = r.bounded(
            &format!("{ptr}/loss-budget/loss"),
            Dimension::Loss,
            "loss budget",
            0.0,
            1000.0,
            |v| format!("{v:.1} dB"),
        );
        let length = r.bounded(
            &format!("{ptr}/loss-budget/length"),
            Dimension::Length,
            "budgeted length",
            0.0,
            10.0,
            fmt_len,
        );
        Some(
            loss.zip(length)
                .map(|(loss, length)| LossBudget { loss, length }),
        )
    } else {
        Some(None)
    };
    let etch_factor = r.number(&format!("{ptr}/etch-factor"), "etch factor");
    if let Some(ef) = etch_factor {
        if ef <= 0.0 {
            r.error(
                &format!("{ptr}/etch-factor"),
                format!("etch factor must be positive (etch depth over undercut, typically 2 to 4), got {ef}"),
                "not physical",
                None,
            );
            return None;
        }
    }
    let freq = |r: &mut Reader<'_>, key: &str, what: &str| -> Option<Option<f64>> {
        let p = format!("{ptr}/{key}");
        if r.node(&p).is_none() {
            return Some(None);
        }
        r.bounded(&p, Dimension::Frequency, what, 0.0, 1e13, fmt_freq)
            .map(Some)
    };
    let max_frequency = freq(r, "max-frequency", "highest frequency");
    let launch = freq(r, "launch-valid-to", "launch validated frequency");
    let data_rate = if r.node(&format!("{ptr}/data-rate")).is_some() {
        r.bounded(
            &format!("{ptr}/data-rate"),
            Dimension::DataRate,
            "data rate",
            0.0,
            1e13,
            |v| format!("{:.3} Gbps", v / 1e9),
        )
        .map(Some)
    } else {
        Some(None)
    };
    let modulation: Option<Modulation> = r
        .string(&format!("{ptr}/modulation"))
        .and_then(|w| w.parse().ok());
    let assumed_dk = r.number(&format!("{ptr}/assumed-dk"), "assumed Dk");
    if let Some(dk) = assumed_dk {
        if dk < 1.0 {
            r.error(
                &format!("{ptr}/assumed-dk"),
                format!("assumed Dk {dk} is below 1, the Dk of vacuum"),
                "not physical",
                None,
            );
            return None;
        }
    }
    let impedance = if r.node(&format!("{ptr}/impedance")).is_some() {
        let tp = format!("{ptr}/impedance/target");
        let target = r.bounded(
            &tp,
            Dimension::Impedance,
            "target impedance",
            0.0,
            1000.0,
            |v| format!("{v:.1} Ω"),
        )?;
        let tolp = format!("{ptr}/impedance/tolerance");
        let tolerance = if r.node(&tolp).is_some() {
            r.tolerance(&tolp, Dimension::Impedance, target, "impedance tolerance")?
        } else {
            0.10 * target
        };
        if tolerance > MAX_IMPEDANCE_TOLERANCE * target {
            r.error(
                &tolp,
                format!(
                    "impedance tolerance ±{tolerance:.1} Ω is {:.0} % of the {target:.1} Ω target; above {:.0} % a class is not impedance-controlled",
                    100.0 * tolerance / target,
                    100.0 * MAX_IMPEDANCE_TOLERANCE
                ),
                "not a controlled impedance",
                Some("controlled impedance is usually held to ±5 % to ±10 %; remove `impedance:` if the class has no target".into()),
            );
            return None;
        }
        let cp = format!("{ptr}/impedance/coupling");
        let coupling = match r.node(&cp) {
            None => None,
            Some(_) => {
                let k = r.fraction(&cp, "coupling coefficient")?;
                let why = if !structure.is_differential() {
                    Some("a coupling coefficient is a pair's; this class is a single line")
                } else if !(k > 0.0 && k < 0.9) {
                    Some("a pair's coupling coefficient lies between 0 and 0.9 (0.05 to 0.3 for most board pairs)")
                } else {
                    None
                };
                if let Some(why) = why {
                    r.error(
                        &cp,
                        format!("coupling {k:.3}: {why}"),
                        "not a pair's coupling",
                        None,
                    );
                    return None;
                }
                Some(k)
            }
        };
        Some(ImpedanceTarget {
            target,
            tolerance,
            coupling,
        })
    } else {
        None
    };
    let (width, top_width, spacing, gap, pitch) = (width??, top_width?, spacing?, gap?, pitch?);
    let pair_pitch = pair_pitch?;
    let loss_budget = loss_budget?;
    let (max_frequency, launch, data_rate) = (max_frequency?, launch?, data_rate?);
    if structure.is_differential() && spacing.is_none() {
        r.error(
            ptr,
            format!("differential net class `{name}` needs `spacing` (the edge-to-edge gap of the pair)"),
            "spacing missing",
            Some("add e.g. `spacing: 0.15 mm`".into()),
        );
        return None;
    }
    if let Some(pp) = pair_pitch {
        let at = format!("{ptr}/pair-pitch");
        if !structure.is_differential() {
            r.error(
                &at,
                format!("`pair-pitch` is the centre-to-centre distance to the neighbouring pair, but net class `{name}` is not a differential pair"),
                "not a pair",
                Some("remove it, or declare a diff- structure with `spacing`".into()),
            );
            return None;
        }
        let own = 2.0 * width + spacing.unwrap_or(0.0);
        if pp <= own {
            r.error(
                &at,
                format!(
                    "pair pitch {} is not wider than the pair itself ({} for two {} traces {} apart): the neighbouring pair would overlap it",
                    fmt_len(pp),
                    fmt_len(own),
                    fmt_len(width),
                    fmt_len(spacing.unwrap_or(0.0))
                ),
                "pairs overlap",
                Some("give the centre-to-centre distance of the two pairs".into()),
            );
            return None;
        }
    }
    if structure == Structure::GroundedCoplanar && gap.is_none() {
        r.error(
            ptr,
            format!("coplanar net class `{name}` needs `gap` (trace edge to coplanar ground)"),
            "gap missing",
            Some("add e.g. `gap: 0.15 mm`".into()),
        );
        return None;
    }
    // A data rate without its modulation is read as NRZ, the common
    // case; the `modulation-assumed` rule says so.
    let modulation_given = modulation.is_some();
    let modulation = modulation.or(data_rate.map(|_| Modulation::Nrz));
    let layer_index = layer_index?;
    if !refs_ok {
        return None;
    }
    if let (Some(top), Some(ef)) = (top_width, etch_factor) {
        let _ = (top, ef);
        r.error(
            &format!("{ptr}/etch-factor"),
            "give either `top-width` or `etch-factor`, not both",
            "ambiguous etch",
            None,
        );
        return None;
    }
    let thickness = s.copper(layer_index).map_or(0.0, |c| c.thickness);
    let top_width = match (top_width, etch_factor) {
        (Some(t), _) => Some(t),
        (None, Some(ef)) => {
            let t = width - 2.0 * thickness / ef;
            if t <= 0.0 {
                r.error(
                    &format!("{ptr}/etch-factor"),
                    format!(
                        "etch factor {ef} on {} copper leaves no top width for a {} trace",
                        fmt_len(thickness),
                        fmt_len(width)
                    ),
                    "trace etched away",
                    None,
                );
                return None;
            }
            Some(t)
        }
        (None, None) => None,
    };
    if let Some(t) = top_width {
        if t > width {
            r.error(
                &format!("{ptr}/top-width"),
                format!(
                    "top width {} is wider than the base width {}; etching narrows the top",
                    fmt_len(t),
                    fmt_len(width)
                ),
                "wider than base",
                None,
            );
            return None;
        }
    }
    // Nyquist: bit rate / 2 for NRZ, / 4 for PAM4 (two bits per symbol).
    let nyquist = data_rate.zip(modulation).map(|(rate, m)| match m {
        Modulation::Nrz => rate / 2.0,
        Modulation::Pam4 => rate / 4.0,
    });
    let max_frequency_given = max_frequency.is_some();
    let max_frequency = max_frequency.or(nyquist.map(|n| n * HARMONIC_FACTOR));
    Some(NetClass {
        name,
        pointer: ptr.to_string(),
        structure,
        layer: s.layers[layer_index].name.clone(),
        layer_index,
        references,
        width,
        top_width,
        etch_factor,
        spacing,
        gap,
        impedance,
        max_frequency,
        max_frequency_given,
        nyquist,
        data_rate,
        modulation,
        modulation_given,
        assumed_dk,
        via_fence_pitch: pitch,
        pair_pitch,
        loss_budget,
        launch_valid_to: launch,
        mask_open: r.string(&format!("{ptr}/mask")).as_deref() == Some("open"),
    })
}

pub(super) fn read_groups(r: &mut Reader<'_>, s: &Stackup) -> Vec<MatchedGroup> {
    let n = r
        .node("/matched-groups")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut out = Vec::new();
    for g in 0..n {
        let gp = format!("/matched-groups/{g}");
        let name = r.string(&format!("{gp}/name")).unwrap_or_default();
        if r.skip.contains(&gp) {
            r.unusable.insert(name);
            continue;
        }
        let errors_before = r.errors.len();
        let budget = r.bounded(
            &format!("{gp}/skew-budget"),
            Dimension::Time,
            "skew budget",
            0.0,
            1e-6,
            fmt_time,
        );
        let mut nets = Vec::new();
        let mut ok = budget.is_some();
        let nn = r
            .node(&format!("{gp}/nets"))
            .and_then(Node::as_seq)
            .map_or(0, <[Node]>::len);
        for k in 0..nn {
            let np = format!("{gp}/nets/{k}");
            let mut segments = Vec::new();
            let ns = r
                .node(&format!("{np}/segments"))
                .and_then(Node::as_seq)
                .map_or(0, <[Node]>::len);
            for m in 0..ns {
                let sp = format!("{np}/segments/{m}");
                let layer = layer_ref(r, s, &format!("{sp}/layer"), "a segment's layer");
                let length = r.bounded(
                    &format!("{sp}/length"),
                    Dimension::Length,
                    "segment length",
                    0.0,
                    2.0,
                    fmt_len,
                );
                let net_class = match r.string(&format!("{sp}/net-class")) {
                    Some(cn) => match s.net_classes.iter().position(|c| c.name == cn) {
                        Some(ci) => Some(ci),
                        None if r.unusable.contains(&cn) => {
                            ok = false;
                            None
                        }
                        None => {
                            r.error(
                                &format!("{sp}/net-class"),
                                format!("there is no net class named `{cn}`"),
                                "unknown net class",
                                crate::suggest::closest(
                                    &cn,
                                    s.net_classes.iter().map(|c| c.name.as_str()),
                                )
                                .map(crate::suggest::did_you_mean),
                            );
                            ok = false;
                            None
                        }
                    },
                    None => None,
                };
                match (layer, length) {
                    (Some(layer_index), Some(length)) => segments.push(Segment {
                        pointer: sp,
                        layer_index,
                        length,
                        net_class,
                    }),
                    _ => ok = false,
                }
            }
            nets.push(Net {
                name: r.string(&format!("{np}/name")).unwrap_or_default(),
                pointer: np,
                segments,
            });
        }
        if ok && r.errors.len() == errors_before {
            out.push(MatchedGroup {
                name,
                pointer: gp,
                skew_budget: budget.unwrap_or(0.0),
                nets,
            });
        }
    }
    out
}
