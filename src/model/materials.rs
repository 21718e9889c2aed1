//! Materials, resin systems and copper foils: read from a stackup or a
//! library file, with the plausibility of their data checked (Dk and Df
//! ranges, points a causal dielectric can have).

use std::collections::BTreeMap;

use super::reader::{fmt_freq, fmt_len, Reader};
use super::*;
use crate::finding::Finding;
use crate::input::yaml::Node;
use crate::source::{escape_token, SourceDb};
use crate::units::Dimension;
use stackup_physics::roughness::RoughLossModel;

/// Materials and foils read from a library file.
#[derive(Debug, Clone, Default)]
pub struct LibraryData {
    pub materials: BTreeMap<String, Material>,
    pub foils: BTreeMap<String, Foil>,
    pub resin_systems: BTreeMap<String, ResinSystem>,
}

/// Read the `materials:` and `foils:` of a schema-valid library or stackup file.
pub(super) fn read_materials_and_foils(r: &mut Reader<'_>) -> LibraryData {
    let mut out = LibraryData::default();
    if let Some(entries) = r.node("/materials").and_then(Node::as_map) {
        for e in entries {
            let ptr = format!("/materials/{}", escape_token(&e.key));
            if r.skip.contains(&ptr) {
                r.unusable.insert(e.key.clone());
                continue;
            }
            if r.node(&format!("{ptr}/resin-dk")).is_some() {
                match read_resin_system(r, &ptr, &e.key) {
                    Some(rs) => {
                        out.resin_systems.insert(e.key.clone(), rs);
                    }
                    None => {
                        r.unusable.insert(e.key.clone());
                    }
                }
                continue;
            }
            match read_material(r, &ptr, &e.key) {
                Some(m) => {
                    out.materials.insert(e.key.clone(), m);
                }
                None => {
                    r.unusable.insert(e.key.clone());
                }
            }
        }
    }
    if let Some(entries) = r.node("/foils").and_then(Node::as_map) {
        for e in entries {
            let ptr = format!("/foils/{}", escape_token(&e.key));
            if r.skip.contains(&ptr) {
                r.unusable.insert(e.key.clone());
                continue;
            }
            let roughness = read_roughness(r, &ptr, true);
            if roughness.is_none() {
                r.unusable.insert(e.key.clone());
            }
            if let Some(roughness) = roughness {
                out.foils.insert(
                    e.key.clone(),
                    Foil {
                        name: e.key.clone(),
                        file: r.file,
                        pointer: ptr,
                        roughness,
                    },
                );
            }
        }
    }
    out
}

/// Highest Dk accepted for a board dielectric (or a modelled Dk): laminates
/// lie between about 2 and 12 and ceramic-filled embedded-capacitance
/// layers reach a few tens (common practice, no source); 100 leaves room
/// for any real material and catches a percentage or a capacitance typed
/// as a Dk.
pub const MAX_BOARD_DK: f64 = 100.0;

/// Highest Df accepted: FR-4 class epoxy/glass reaches about 0.02 and
/// solder mask about 0.03 (common practice, no source); only absorbers and
/// ferrite-loaded materials reach 0.1.
pub const MAX_BOARD_DF: f64 = 0.1;

/// Largest impedance tolerance, as a fraction of the target.
pub const MAX_IMPEDANCE_TOLERANCE: f64 = 0.5;

/// Largest misfit of a causal Djordjevic-Sarkar model to a material's
/// points accepted as measurement scatter: 2 % of Dk (and 0.03 absolute,
/// for Dk read off a plot), and for Df the larger of 0.002 and 30 % of the
/// point's Df (data sheets round Df to one significant digit). A table that
/// misses by more cannot come from one passive, causal material (common
/// practice, no source; the tests show real tables fit well inside it).
pub const FIT_DK_RELATIVE: f64 = 0.02;
pub const FIT_DK_ABSOLUTE: f64 = 0.03;
pub const FIT_DF_ABSOLUTE: f64 = 0.002;
pub const FIT_DF_RELATIVE: f64 = 0.3;

/// Check a material's points against each other: no frequency given twice
/// with different values, and a causal Djordjevic-Sarkar model (the one
/// the analysis fits) that reproduces every point within the stated
/// scatter ([`FIT_DK_RELATIVE`] and friends). Contradictory data are an
/// input error at the point that misses most, never silently fitted.
pub(super) fn plausible_points(
    r: &mut Reader<'_>,
    ptr: &str,
    name: &str,
    points: &[DkPoint],
) -> bool {
    let point_ptr = |i: usize| {
        if r.node(&format!("{ptr}/points")).is_some() {
            format!("{ptr}/points/{i}")
        } else {
            ptr.to_string()
        }
    };
    for (j, b) in points.iter().enumerate() {
        if let Some(a) = points[..j].iter().find(|a| a.frequency == b.frequency) {
            if a.dk != b.dk || a.df != b.df {
                let at = point_ptr(j);
                r.error(
                    &format!("{at}/frequency"),
                    format!(
                        "material `{name}` gives two different points at {}: Dk {} / Df {} and Dk {} / Df {}",
                        fmt_freq(b.frequency),
                        a.dk,
                        a.df,
                        b.dk,
                        b.df
                    ),
                    "frequency given twice",
                    Some("keep one measurement per frequency".into()),
                );
                return false;
            }
        }
    }
    if points.len() < 2 {
        return true;
    }
    use stackup_physics::dispersion::{
        DjordjevicSarkar, MultiPoleDebye, Permittivity, DEFAULT_F1, DEFAULT_F2,
    };
    let data = DkPoint::dielectric_points(points);
    let misfit = |eval: &dyn Fn(f64) -> Option<Permittivity>| -> Option<(usize, f64, f64)> {
        // The point that misses by most, relative to what is accepted.
        let mut worst: Option<(usize, f64, f64, f64)> = None;
        for (i, p) in points.iter().enumerate() {
            let m = eval(p.frequency)?;
            let dk_ok = (FIT_DK_RELATIVE * p.dk).max(FIT_DK_ABSOLUTE);
            let df_ok = (FIT_DF_RELATIVE * p.df).max(FIT_DF_ABSOLUTE);
            let badness = ((m.dk - p.dk).abs() / dk_ok).max((m.df - p.df).abs() / df_ok);
            if worst.is_none_or(|w| badness > w.1) {
                worst = Some((i, badness, m.dk, m.df));
            }
        }
        worst.filter(|w| w.1 > 1.0).map(|w| (w.0, w.2, w.3))
    };
    // A table one Djordjevic-Sarkar term misses may still be causal: a
    // multi-pole Debye model (causal by construction) that meets it clears it.
    let debye_meets = || {
        data.len() >= 3
            && MultiPoleDebye::fit(&data).is_ok_and(|m| misfit(&|f| m.eval(f).ok()).is_none())
    };
    let problem = match DjordjevicSarkar::fit_table(&data, DEFAULT_F1, DEFAULT_F2) {
        Ok((ds, _)) => misfit(&|f| ds.eval(f).ok())
            .filter(|_| !debye_meets())
            .map(|(i, dk, df)| {
            let p = points[i];
            (
                i,
                format!(
                    "material `{name}`: no causal dielectric model fits its points; the best (Djordjevic-Sarkar) fit gives Dk {dk:.2} / Df {df:.4} at {} where the data say Dk {} / Df {} (accepted scatter: 2 % of Dk, 30 % of Df)",
                    fmt_freq(p.frequency),
                    p.dk,
                    p.df
                ),
            )
        }),
        Err(e) => Some((0, format!("material `{name}`: no causal dielectric model fits its points ({e})"))),
    };
    match problem {
        None => true,
        Some((i, message)) => {
            r.error(
                &point_ptr(i),
                message,
                "contradicts the other points",
                Some("a passive dielectric's Dk falls slowly with frequency and its Df changes little; check each point's value and frequency".into()),
            );
            false
        }
    }
}

pub(super) fn read_material(r: &mut Reader<'_>, ptr: &str, name: &str) -> Option<Material> {
    let mut points = Vec::new();
    let mut ok = true;
    let check_point = |r: &mut Reader<'_>, p: &str, fptr: String, dkp: String, dfp: String| {
        let f = r.bounded(
            &fptr,
            Dimension::Frequency,
            "measurement frequency",
            0.0,
            1e13,
            fmt_freq,
        );
        let dk = r.number(&dkp, "Dk");
        let df = if r.node(&dfp).is_some() {
            r.number(&dfp, "Df")
        } else {
            Some(0.0)
        };
        if let Some(dk) = dk {
            if dk < 1.0 {
                r.error(
                    &dkp,
                    format!("material `{name}` has Dk {dk}, which is not physical for a dielectric (it must be at least 1, the Dk of vacuum)"),
                    "Dk below 1",
                    Some("give the relative permittivity, e.g. 3.5".into()),
                );
                return None;
            }
            if dk > MAX_BOARD_DK {
                r.error(
                    &dkp,
                    format!("material `{name}` has Dk {dk}, above any board dielectric (laminates lie between about 2 and 12, ceramic-filled capacitance layers reach a few tens; {MAX_BOARD_DK} is the limit here)"),
                    "above any board dielectric",
                    Some("give the relative permittivity, e.g. 3.5 (not a percentage or a capacitance)".into()),
                );
                return None;
            }
        }
        if let Some(df) = df {
            if !(0.0..1.0).contains(&df) {
                r.error(
                    &dfp,
                    format!(
                        "material `{name}` has Df {df}, outside 0 to 1; board dielectrics lie between 0.0001 and 0.05"
                    ),
                    "not a loss tangent",
                    Some("give the loss tangent as a plain number, e.g. 0.002".into()),
                );
                return None;
            }
            if df > MAX_BOARD_DF {
                r.error(
                    &dfp,
                    format!(
                        "material `{name}` has Df {df}, above {MAX_BOARD_DF}: no board dielectric is that lossy (FR-4 class epoxy/glass reaches about 0.02, solder mask about 0.03; only absorbers and ferrite-loaded materials reach 0.1 and more)"
                    ),
                    "implausibly lossy",
                    Some("give the loss tangent as a plain number, e.g. 0.002 (not a percentage)".into()),
                );
                return None;
            }
        }
        let _ = p;
        Some(DkPoint {
            frequency: f?,
            dk: dk?,
            df: df?,
        })
    };
    let has_points = r.node(&format!("{ptr}/points")).is_some();
    let has_single = r.node(&format!("{ptr}/dk")).is_some();
    if has_points == has_single {
        r.error(
            ptr,
            format!("material `{name}` needs either `dk` (with `df` and `frequency`) or `points`, not {}", if has_points { "both" } else { "neither" }),
            "incomplete material",
            Some(if has_points {
                "keep one: `points` (Dk/Df at several frequencies) or the single `dk`/`df` at `frequency`; both at once would give two Dk values for the same material".into()
            } else {
                "add `dk: 3.5`, `df: 0.002` and `frequency: 10 GHz`".into()
            }),
        );
        return None;
    }
    if has_single {
        if r.node(&format!("{ptr}/frequency")).is_none() {
            r.error(
                ptr,
                format!("material `{name}` gives `dk` without the `frequency` it was measured at"),
                "frequency missing",
                Some("add e.g. `frequency: 10 GHz`; Dk and Df change with frequency".into()),
            );
            ok = false;
        } else {
            match check_point(
                r,
                ptr,
                format!("{ptr}/frequency"),
                format!("{ptr}/dk"),
                format!("{ptr}/df"),
            ) {
                Some(p) => points.push(p),
                None => ok = false,
            }
        }
    } else {
        let n = r
            .node(&format!("{ptr}/points"))
            .and_then(Node::as_seq)
            .map_or(0, <[Node]>::len);
        for i in 0..n {
            let pp = format!("{ptr}/points/{i}");
            match check_point(
                r,
                &pp,
                format!("{pp}/frequency"),
                format!("{pp}/dk"),
                format!("{pp}/df"),
            ) {
                Some(p) => points.push(p),
                None => ok = false,
            }
        }
    }
    let valid_from = r.node(&format!("{ptr}/valid-from")).and_then(|_| {
        r.bounded(
            &format!("{ptr}/valid-from"),
            Dimension::Frequency,
            "valid-from",
            0.0,
            1e13,
            fmt_freq,
        )
    });
    let valid_to = r.node(&format!("{ptr}/valid-to")).and_then(|_| {
        r.bounded(
            &format!("{ptr}/valid-to"),
            Dimension::Frequency,
            "valid-to",
            0.0,
            1e13,
            fmt_freq,
        )
    });
    if let (Some(a), Some(b)) = (valid_from, valid_to) {
        if a >= b {
            r.error(
                &format!("{ptr}/valid-to"),
                format!(
                    "valid-to ({}) must be above valid-from ({})",
                    fmt_freq(b),
                    fmt_freq(a)
                ),
                "empty range",
                None,
            );
            ok = false;
        }
    }
    let method = r
        .string(&format!("{ptr}/method"))
        .and_then(|w| w.parse().ok())
        .unwrap_or(MeasurementMethod::Unknown);
    let dk_tolerance = r.number(&format!("{ptr}/dk-tolerance"), "Dk tolerance");
    if let Some(t) = dk_tolerance {
        if t < 0.0 {
            r.error(
                &format!("{ptr}/dk-tolerance"),
                format!(
                    "material `{name}` has a negative Dk tolerance ({t}); a tolerance is a ± width"
                ),
                "negative",
                Some("give the tolerance as a positive number, e.g. 0.05".into()),
            );
            ok = false;
        } else if let Some(p) = points.first().filter(|p| t > p.dk - 1.0) {
            r.error(
                &format!("{ptr}/dk-tolerance"),
                format!(
                    "material `{name}` has Dk tolerance ±{t} on a Dk of {}, which would reach below the Dk of vacuum",
                    p.dk
                ),
                "too wide",
                Some("give the absolute ± tolerance of Dk, e.g. 0.05".into()),
            );
            ok = false;
        }
    }
    // Dk of the glass fabric of a woven laminate, for the fibre-weave
    // estimate (E-glass when not given; see stackup_physics::fab::E_GLASS_DK).
    let glass_dk = r.number(&format!("{ptr}/glass-dk"), "glass Dk");
    if let Some(g) = glass_dk.filter(|g| !(1.0..=20.0).contains(g)) {
        r.error(
            &format!("{ptr}/glass-dk"),
            format!("`glass-dk` of material `{name}` is {g}, outside 1 to 20"),
            "not physical",
            None,
        );
        ok = false;
    }
    if !ok || points.is_empty() {
        return None;
    }
    if !plausible_points(r, ptr, name, &points) {
        return None;
    }
    points.sort_by(|a, b| a.frequency.total_cmp(&b.frequency));
    Some(Material {
        name: name.to_string(),
        file: r.file,
        pointer: ptr.to_string(),
        class: r.string(&format!("{ptr}/class")),
        points,
        valid_from,
        valid_to,
        method,
        dk_tolerance,
        estimate: None,
        glass_dk,
    })
}

pub(super) fn read_resin_system(r: &mut Reader<'_>, ptr: &str, name: &str) -> Option<ResinSystem> {
    if r.node(&format!("{ptr}/dk")).is_some() || r.node(&format!("{ptr}/points")).is_some() {
        r.error(
            ptr,
            format!("material `{name}` gives both a measured Dk and `resin-dk`; a measured Dk makes the resin estimate pointless"),
            "two sources of Dk",
            Some("keep `dk` (measured) or `resin-dk` (estimate from resin content), not both".into()),
        );
        return None;
    }
    let num =
        |r: &mut Reader<'_>, key: &str, default: Option<f64>, lo: f64, hi: f64| -> Option<f64> {
            let p = format!("{ptr}/{key}");
            let v = if r.node(&p).is_some() {
                r.number(&p, key)?
            } else {
                default?
            };
            if !(lo..=hi).contains(&v) {
                r.error(
                    &p,
                    format!("`{key}` of material `{name}` is {v}, outside {lo} to {hi}"),
                    "not physical",
                    None,
                );
                return None;
            }
            Some(v)
        };
    let resin_dk = num(r, "resin-dk", None, 1.0, 20.0);
    let resin_df = num(r, "resin-df", Some(0.0), 0.0, 0.999);
    // E-glass: Dk about 6.3, Df about 0.0015 (from memory; what was searched
    // is in stackup_physics::fab::E_GLASS_DK).
    let glass_dk = num(
        r,
        "glass-dk",
        Some(stackup_physics::fab::E_GLASS_DK),
        1.0,
        20.0,
    );
    let glass_df = num(r, "glass-df", Some(0.0015), 0.0, 0.999);
    let fp = format!("{ptr}/frequency");
    if r.node(&fp).is_none() {
        r.error(
            ptr,
            format!("resin system `{name}` needs the `frequency` its resin and glass Dk apply at"),
            "frequency missing",
            Some("add e.g. `frequency: 1 GHz`".into()),
        );
        return None;
    }
    let frequency = r.bounded(&fp, Dimension::Frequency, "frequency", 0.0, 1e13, fmt_freq)?;
    let range = |r: &mut Reader<'_>, key: &str| {
        let p = format!("{ptr}/{key}");
        r.node(&p)?;
        r.bounded(&p, Dimension::Frequency, key, 0.0, 1e13, fmt_freq)
    };
    let valid_from = range(r, "valid-from");
    let valid_to = range(r, "valid-to");
    Some(ResinSystem {
        name: name.to_string(),
        file: r.file,
        pointer: ptr.to_string(),
        class: r.string(&format!("{ptr}/class")),
        resin_dk: resin_dk?,
        resin_df: resin_df?,
        glass_dk: glass_dk?,
        glass_df: glass_df?,
        frequency,
        valid_from,
        valid_to,
    })
}

/// Read rz/rq at `ptr`; when `required`, at least one must be given.
pub(super) fn read_roughness(r: &mut Reader<'_>, ptr: &str, required: bool) -> Option<Roughness> {
    let read = |r: &mut Reader<'_>, key: &str| -> Option<f64> {
        let p = format!("{ptr}/{key}");
        r.node(&p)?;
        let v = r.quantity(&p, Dimension::Roughness, key)?;
        if !(0.0..=50e-6).contains(&v) {
            r.error(
                &p,
                format!(
                    "{key} of {} is outside 0 to 50 µm; copper foil profiles lie well inside this",
                    fmt_len(v)
                ),
                "implausible roughness",
                Some("check the unit: roughness is usually given in um".into()),
            );
            return None;
        }
        Some(v)
    };
    let rz = read(r, "rz");
    let rq = read(r, "rq");
    if rz.is_none() && rq.is_none() {
        if required
            && r.node(&format!("{ptr}/rz")).is_none()
            && r.node(&format!("{ptr}/rq")).is_none()
        {
            r.error(
                ptr,
                "a foil profile needs `rz` or `rq`",
                "no roughness given",
                Some("add e.g. `rz: 5 um` from the foil data sheet".into()),
            );
        }
        return None;
    }
    let loss_model = read_loss_model(r, ptr);
    Some(Roughness { rz, rq, loss_model })
}

/// `loss-model` at `ptr`, with the sphere data of a fitted Huray model
/// (`huray-radius`, `huray-surface-ratio`: both or neither, and only with
/// `loss-model: huray`).
fn read_loss_model(r: &mut Reader<'_>, ptr: &str) -> RoughLossModel {
    let named = r
        .string(&format!("{ptr}/loss-model"))
        .and_then(|k| RoughLossModel::from_key(&k))
        .unwrap_or_default();
    let (pr, ps) = (
        format!("{ptr}/huray-radius"),
        format!("{ptr}/huray-surface-ratio"),
    );
    let (has_r, has_s) = (r.node(&pr).is_some(), r.node(&ps).is_some());
    if !has_r && !has_s {
        return named;
    }
    if named != RoughLossModel::CannonballHuray {
        let at = if has_r { &pr } else { &ps };
        r.error(
            at,
            "sphere data of a Huray model without `loss-model: huray`",
            "not used by this loss model",
            Some("add `loss-model: huray`, or remove the huray- keys".into()),
        );
        return named;
    }
    if has_r != has_s {
        let (at, missing) = if has_r {
            (&pr, "huray-surface-ratio")
        } else {
            (&ps, "huray-radius")
        };
        r.error(
            at,
            format!("a fitted Huray model needs both sphere keys; `{missing}` is missing"),
            "half of the sphere data",
            Some(format!(
                "add `{missing}`, or remove this key to use the Cannonball-Huray rule from Rz"
            )),
        );
        return named;
    }
    let radius = r.quantity(&pr, Dimension::Roughness, "huray-radius");
    if let Some(v) = radius.filter(|v| !(0.01e-6..=20e-6).contains(v)) {
        r.error(
            &pr,
            format!(
                "huray-radius of {} is outside 0.01 to 20 µm; the nodules of copper foil lie well inside this",
                fmt_len(v)
            ),
            "implausible sphere radius",
            Some("check the unit: sphere radii are usually given in um".into()),
        );
        return named;
    }
    let ratio = r.number(&ps, "huray-surface-ratio");
    if let Some(v) = ratio.filter(|v| !(0.0..=50.0).contains(v)) {
        r.error(
            &ps,
            format!("huray-surface-ratio of {v} is outside 0 to 50 (sphere surface per flat area)"),
            "implausible surface ratio",
            None,
        );
        return named;
    }
    match (radius, ratio) {
        (Some(a), Some(b)) => RoughLossModel::huray(a, b).unwrap_or(named),
        _ => named,
    }
}

/// Read a library file (already parsed and schema-checked).
pub fn load_library(db: &SourceDb, file: FileId, tree: &Node) -> (LibraryData, Vec<Finding>) {
    let Some(mut r) = Reader::new(db, file, tree) else {
        return (LibraryData::default(), Vec::new());
    };
    let data = read_materials_and_foils(&mut r);
    (data, r.errors)
}
