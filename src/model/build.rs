//! Build the typed model from a schema-valid YAML tree.
//!
//! The schema has already checked structure; this stage checks units,
//! ranges and references, and collects every problem as an `invalid-input`
//! finding at its span instead of stopping at the first.

use std::collections::{BTreeMap, BTreeSet};

use super::*;
use crate::finding::{Finding, Severity, INVALID_INPUT};
use crate::input::yaml::{Node, Value};
use crate::source::{escape_token, SourceDb};
use crate::units::{self, Dimension};

/// Factor from the Nyquist frequency to the highest frequency a class must
/// carry when only a data rate is given: the third harmonic (see
/// `stackup_physics::loss::DEFAULT_HARMONIC_FACTOR`, common practice).
pub const HARMONIC_FACTOR: f64 = stackup_physics::loss::DEFAULT_HARMONIC_FACTOR;

struct Reader<'a> {
    db: &'a SourceDb,
    file: FileId,
    root: &'a Node,
    errors: Vec<Finding>,
    /// Names of materials, foils, layers and net classes that are defined
    /// but failed to load. A reference to one of them is not reported
    /// again: the definition already has its finding.
    unusable: BTreeSet<String>,
}

impl<'a> Reader<'a> {
    fn new(db: &'a SourceDb, file: FileId) -> Option<Self> {
        let root = db.get(file).tree.as_ref()?;
        Some(Reader {
            db,
            file,
            root,
            errors: Vec::new(),
            unusable: BTreeSet::new(),
        })
    }

    fn node(&self, ptr: &str) -> Option<&'a Node> {
        self.root.pointer(ptr)
    }

    fn error(&mut self, ptr: &str, message: impl Into<String>, label: &str, help: Option<String>) {
        let loc = self.db.locate(self.file, ptr);
        let mut f = Finding::new(INVALID_INPUT, loc, message).label(label);
        f.severity = Severity::Error;
        f.help = help;
        self.errors.push(f);
    }

    /// 1-based line of the node at `ptr`, for messages that name a
    /// second place ("first at line 14").
    fn line_of(&self, ptr: &str) -> usize {
        let loc = self.db.locate(self.file, ptr);
        crate::source::line_col(&self.db.get(self.file).text, loc.span.start).0
    }

    fn string(&self, ptr: &str) -> Option<String> {
        match &self.node(ptr)?.value {
            Value::String(s) => Some(s.clone()),
            Value::Number(n) => Some(format!("{n}")),
            _ => None,
        }
    }

    fn bool(&self, ptr: &str) -> Option<bool> {
        match self.node(ptr)?.value {
            Value::Bool(b) => Some(b),
            _ => None,
        }
    }

    /// A plain YAML number (Dk, Df, etch factor), finite.
    fn number(&mut self, ptr: &str, what: &str) -> Option<f64> {
        match self.node(ptr)?.value {
            Value::Number(n) if n.is_finite() => Some(n),
            Value::Number(_) => {
                self.error(
                    ptr,
                    format!("{what} is not a finite number"),
                    "NaN or infinity",
                    None,
                );
                None
            }
            _ => None,
        }
    }

    /// A quantity with a unit (or a bare number where the dimension allows).
    fn quantity(&mut self, ptr: &str, dim: Dimension, what: &str) -> Option<f64> {
        let node = self.node(ptr)?;
        let result = match &node.value {
            Value::String(s) => units::parse_quantity(s, dim),
            Value::Number(n) => units::bare_number(*n, dim),
            _ => return None,
        };
        match result {
            Ok(v) => Some(v),
            Err(e) => {
                let help = Some(format!("write {what} as {}", dim.describe()));
                self.error(
                    ptr,
                    format!("{what}: {e}"),
                    "cannot read this quantity",
                    help,
                );
                None
            }
        }
    }

    /// A quantity that must lie in (min, max]; `min` exclusive.
    fn bounded(
        &mut self,
        ptr: &str,
        dim: Dimension,
        what: &str,
        min: f64,
        max: f64,
        fmt: fn(f64) -> String,
    ) -> Option<f64> {
        let v = self.quantity(ptr, dim, what)?;
        if v <= min {
            self.error(
                ptr,
                format!("{what} must be greater than {}, got {}", fmt(min), fmt(v)),
                "not physical",
                None,
            );
            return None;
        }
        if v > max {
            self.error(
                ptr,
                format!(
                    "{what} of {} is not plausible (more than {})",
                    fmt(v),
                    fmt(max)
                ),
                "implausibly large",
                Some("check the unit (mm vs mil vs um)".into()),
            );
            return None;
        }
        Some(v)
    }

    fn fraction(&mut self, ptr: &str, what: &str) -> Option<f64> {
        let v = self.quantity(ptr, Dimension::Fraction, what)?;
        if !(0.0..=1.0).contains(&v) {
            // Show the value as written ("150 %"), not only as a fraction.
            let written = self.string(ptr).unwrap_or_else(|| format!("{v}"));
            self.error(
                ptr,
                format!("{what} must lie between 0 and 1 (0 % to 100 %), got {written}"),
                "out of range",
                Some("give a fraction such as 0.3 or a percentage such as \"30 %\"".into()),
            );
            return None;
        }
        Some(v)
    }

    /// A tolerance: absolute in `dim` or relative ("10 %") of `nominal`.
    fn tolerance(&mut self, ptr: &str, dim: Dimension, nominal: f64, what: &str) -> Option<f64> {
        let node = self.node(ptr)?;
        let text = match &node.value {
            Value::String(s) => s.clone(),
            Value::Number(n) => format!("{n}"),
            _ => return None,
        };
        let tol = if text.trim_end().ends_with('%') {
            units::parse_quantity(&text, Dimension::Fraction).map(|f| f * nominal)
        } else {
            units::parse_quantity(&text, dim)
        };
        match tol {
            Ok(t) if t > 0.0 => Some(t),
            Ok(t) => {
                self.error(
                    ptr,
                    format!("{what} must be positive, got {t}"),
                    "not positive",
                    None,
                );
                None
            }
            Err(e) => {
                self.error(
                    ptr,
                    format!("{what}: {e}"),
                    "cannot read this tolerance",
                    Some(format!(
                        "write it as a percentage (\"10 %\") or as {}",
                        dim.describe()
                    )),
                );
                None
            }
        }
    }
}

fn fmt_len(v: f64) -> String {
    units::fmt_length(v)
}
fn fmt_freq(v: f64) -> String {
    units::fmt_frequency(v)
}
fn fmt_time(v: f64) -> String {
    format!("{:.1} ps", v * 1e12)
}

/// Materials and foils read from a library file.
#[derive(Debug, Clone, Default)]
pub struct LibraryData {
    pub materials: BTreeMap<String, Material>,
    pub foils: BTreeMap<String, Foil>,
    pub resin_systems: BTreeMap<String, ResinSystem>,
}

/// Read the `materials:` and `foils:` of a schema-valid library or stackup file.
fn read_materials_and_foils(r: &mut Reader<'_>) -> LibraryData {
    let mut out = LibraryData::default();
    if let Some(entries) = r.node("/materials").and_then(Node::as_map) {
        for e in entries {
            let ptr = format!("/materials/{}", escape_token(&e.key));
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
fn plausible_points(r: &mut Reader<'_>, ptr: &str, name: &str, points: &[DkPoint]) -> bool {
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
    use stackup_physics::dispersion::{DielectricPoint, DjordjevicSarkar, DEFAULT_F1, DEFAULT_F2};
    let data: Vec<DielectricPoint> = points
        .iter()
        .map(|p| DielectricPoint {
            f: p.frequency,
            dk: p.dk,
            df: p.df,
        })
        .collect();
    let misfit = |ds: &DjordjevicSarkar| -> Option<(usize, f64, f64)> {
        // The point that misses by most, relative to what is accepted.
        let mut worst: Option<(usize, f64, f64, f64)> = None;
        for (i, p) in points.iter().enumerate() {
            let m = ds.eval(p.frequency).ok()?;
            let dk_ok = (FIT_DK_RELATIVE * p.dk).max(FIT_DK_ABSOLUTE);
            let df_ok = (FIT_DF_RELATIVE * p.df).max(FIT_DF_ABSOLUTE);
            let badness = ((m.dk - p.dk).abs() / dk_ok).max((m.df - p.df).abs() / df_ok);
            if worst.is_none_or(|w| badness > w.1) {
                worst = Some((i, badness, m.dk, m.df));
            }
        }
        worst.filter(|w| w.1 > 1.0).map(|w| (w.0, w.2, w.3))
    };
    let problem = match DjordjevicSarkar::fit_table(&data, DEFAULT_F1, DEFAULT_F2) {
        Ok((ds, _)) => misfit(&ds).map(|(i, dk, df)| {
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

fn read_material(r: &mut Reader<'_>, ptr: &str, name: &str) -> Option<Material> {
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
            Some("add `dk: 3.5`, `df: 0.002` and `frequency: 10 GHz`".into()),
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
    let method = match r.string(&format!("{ptr}/method")).as_deref() {
        Some("resonator") => MeasurementMethod::Resonator,
        Some("transmission-line") => MeasurementMethod::TransmissionLine,
        _ => MeasurementMethod::Unknown,
    };
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
    })
}

fn read_resin_system(r: &mut Reader<'_>, ptr: &str, name: &str) -> Option<ResinSystem> {
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
    // E-glass: Dk about 6.3, Df about 0.0015 (from memory; see stackup_physics::fab).
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

/// Resin content of the ply at `ptr` (a dielectric node): given, or the
/// typical content of its glass style (`stackup_physics::fab::GLASS_STYLES`,
/// common practice).
fn ply_resin_content(r: &Reader<'_>, ptr: &str) -> Option<(f64, &'static str)> {
    let given = match r.node(&format!("{ptr}/resin-content")).map(|n| &n.value) {
        Some(Value::Number(v)) => Some(*v),
        Some(Value::String(t)) => units::parse_quantity(t, Dimension::Fraction).ok(),
        _ => None,
    };
    if let Some(v) = given.filter(|v| (0.0..=1.0).contains(v)) {
        return Some((v, "given resin content"));
    }
    let style = r.string(&format!("{ptr}/glass-style"))?;
    stackup_physics::fab::glass_style(&style)
        .map(|g| (g.resin_content, "typical resin content of its glass style"))
}

/// Key of the estimated material of a resin-system ply.
fn resin_key(system: &str, content: f64) -> String {
    format!("{system} at {:.0} % resin", content * 100.0)
}

/// For every ply made of a resin system, add an estimated material:
/// Dk by the Lichtenecker rule (`stackup_physics::fab::glass_ply_dk`), Df by
/// the same rule applied to the loss angle (ln ε* = Σ vᵢ ln εᵢ*, so the loss
/// angles mix linearly by volume).
fn estimate_resin_plies(
    r: &mut Reader<'_>,
    systems: &BTreeMap<String, ResinSystem>,
    materials: &mut BTreeMap<String, Material>,
) {
    use stackup_physics::fab::{
        glass_ply_dk, resin_volume_fraction, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY,
    };
    let n = r
        .node("/layers")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    for i in 0..n {
        let ptr = format!("/layers/{i}/dielectric");
        let Some(name) = r.string(&format!("{ptr}/material")) else {
            continue;
        };
        if materials.contains_key(&name) {
            continue;
        }
        let Some(sys) = systems.get(&name) else {
            continue;
        };
        let Some((w, how)) = ply_resin_content(r, &ptr) else {
            r.error(
                &format!("{ptr}/material"),
                format!("ply uses resin system `{name}`, whose Dk is estimated from resin content, but gives no `resin-content` and no known `glass-style`"),
                "resin content needed",
                Some("add e.g. `resin-content: 68 %` from the prepreg data, or `glass-style: 1080`".into()),
            );
            r.unusable.insert(name.clone());
            continue;
        };
        let v = resin_volume_fraction(w, EPOXY_RESIN_DENSITY, E_GLASS_DENSITY);
        let dk = glass_ply_dk(
            w,
            sys.resin_dk,
            sys.glass_dk,
            EPOXY_RESIN_DENSITY,
            E_GLASS_DENSITY,
        );
        let (Ok(v), Ok(dk)) = (v, dk) else { continue };
        let angle = v * sys.resin_df.atan() + (1.0 - v) * sys.glass_df.atan();
        let key = resin_key(&name, w);
        materials.entry(key.clone()).or_insert_with(|| Material {
            name: key.clone(),
            file: sys.file,
            pointer: sys.pointer.clone(),
            class: sys.class.clone(),
            points: vec![DkPoint {
                frequency: sys.frequency,
                dk,
                df: angle.tan(),
            }],
            valid_from: sys.valid_from,
            valid_to: sys.valid_to,
            method: MeasurementMethod::Unknown,
            dk_tolerance: None,
            estimate: Some(format!(
                "estimate: Lichtenecker mix of resin Dk {:.2} and glass Dk {:.2} at {:.0} % resin by weight ({how})",
                sys.resin_dk,
                sys.glass_dk,
                w * 100.0
            )),
        });
    }
}

/// Read rz/rq at `ptr`; when `required`, at least one must be given.
fn read_roughness(r: &mut Reader<'_>, ptr: &str, required: bool) -> Option<Roughness> {
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
    Some(Roughness { rz, rq })
}

/// Read a library file (already parsed and schema-checked).
pub fn load_library(db: &SourceDb, file: FileId) -> (LibraryData, Vec<Finding>) {
    let Some(mut r) = Reader::new(db, file) else {
        return (LibraryData::default(), Vec::new());
    };
    let data = read_materials_and_foils(&mut r);
    (data, r.errors)
}

/// Build the stackup model from a schema-valid file. `libraries` are the
/// already-loaded library files this file references, in order.
pub fn build_stackup(
    db: &SourceDb,
    file: FileId,
    libraries: &[LibraryData],
) -> Result<Stackup, Vec<Finding>> {
    let Some(mut r) = Reader::new(db, file) else {
        return Err(Vec::new());
    };
    let own = read_materials_and_foils(&mut r);
    let mut materials = BTreeMap::new();
    let mut foils = BTreeMap::new();
    let mut systems = BTreeMap::new();
    for lib in libraries {
        materials.extend(lib.materials.clone());
        foils.extend(lib.foils.clone());
        systems.extend(lib.resin_systems.clone());
    }
    // The file's own entries win over library entries of the same name.
    for name in own.materials.keys().chain(own.resin_systems.keys()) {
        materials.remove(name);
        systems.remove(name);
    }
    materials.extend(own.materials);
    foils.extend(own.foils);
    systems.extend(own.resin_systems);
    estimate_resin_plies(&mut r, &systems, &mut materials);

    let mut layers = read_layers(&mut r, &materials, &foils);
    press_prepregs(&mut r, &mut layers);
    let mut stackup = Stackup {
        file,
        board: r.string("/board"),
        layers,
        materials,
        foils,
        net_classes: Vec::new(),
        matched_groups: Vec::new(),
        settings: Settings::default(),
    };
    stackup.net_classes = read_net_classes(&mut r, &stackup);
    stackup.matched_groups = read_groups(&mut r, &stackup);
    stackup.settings = read_settings(&mut r, &stackup);
    if r.errors.is_empty() {
        Ok(stackup)
    } else {
        Err(r.errors)
    }
}

fn read_layers(
    r: &mut Reader<'_>,
    materials: &BTreeMap<String, Material>,
    foils: &BTreeMap<String, Foil>,
) -> Vec<Layer> {
    let n = r
        .node("/layers")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut layers: Vec<Layer> = Vec::new();
    let mut seen: BTreeMap<String, String> = BTreeMap::new();
    let mut ok = true;
    for i in 0..n {
        let ptr = format!("/layers/{i}");
        let name = r.string(&format!("{ptr}/name")).unwrap_or_default();
        if let Some(first) = seen.get(&name) {
            let first = r.line_of(first);
            r.error(
                &format!("{ptr}/name"),
                format!("layer name `{name}` is used twice (first at line {first}); net classes could not tell them apart"),
                "duplicate layer name",
                Some("give every layer a unique name, e.g. L1..Ln for copper".into()),
            );
            ok = false;
        }
        seen.insert(name.clone(), ptr.clone());
        let kind = if r.node(&format!("{ptr}/copper")).is_some() {
            read_copper(r, &format!("{ptr}/copper"), foils).map(LayerKind::Copper)
        } else {
            read_dielectric(r, &format!("{ptr}/dielectric"), materials).map(LayerKind::Dielectric)
        };
        match kind {
            Some(kind) => layers.push(Layer {
                name,
                pointer: ptr,
                kind,
            }),
            None => ok = false,
        }
    }
    if !ok {
        r.unusable.extend(seen.into_keys());
        return Vec::new();
    }
    // Two copper layers must be separated by a dielectric.
    for w in layers.windows(2) {
        if matches!(w[0].kind, LayerKind::Copper(_)) && matches!(w[1].kind, LayerKind::Copper(_)) {
            let p = w[1].pointer.clone();
            r.error(
                &p,
                format!(
                    "copper layers `{}` and `{}` touch with no dielectric between them",
                    w[0].name, w[1].name
                ),
                "missing dielectric",
                Some("add the core or prepreg that separates them".into()),
            );
        }
    }
    layers
}

fn read_copper(
    r: &mut Reader<'_>,
    ptr: &str,
    foils: &BTreeMap<String, Foil>,
) -> Option<CopperLayer> {
    let role = match r.string(&format!("{ptr}/role")).as_deref() {
        Some("plane") => CopperRole::Plane,
        Some("mixed") => CopperRole::Mixed,
        _ => CopperRole::Signal,
    };
    let thickness = r.bounded(
        &format!("{ptr}/thickness"),
        Dimension::CopperThickness,
        "copper thickness",
        0.0,
        0.5e-3,
        fmt_len,
    );
    let fill = if r.node(&format!("{ptr}/fill")).is_some() {
        Some(r.fraction(&format!("{ptr}/fill"), "copper fill")?)
    } else {
        None
    };
    let up = read_face(r, &format!("{ptr}/up"), foils);
    let down = read_face(r, &format!("{ptr}/down"), foils);
    Some(CopperLayer {
        role,
        thickness: thickness?,
        fill,
        plated: r.bool(&format!("{ptr}/plated")).unwrap_or(false),
        up: up?,
        down: down?,
    })
}

/// `Some(None)` = no face given; `None` = error.
fn read_face(
    r: &mut Reader<'_>,
    ptr: &str,
    foils: &BTreeMap<String, Foil>,
) -> Option<Option<Face>> {
    r.node(ptr).map_or(Some(None), |_| {
        let side = match r.string(&format!("{ptr}/side")).as_deref() {
            Some("drum") => FoilSide::Drum,
            Some("bond-treatment") => FoilSide::BondTreatment,
            _ => FoilSide::Treated,
        };
        let foil = r.string(&format!("{ptr}/foil"));
        let direct = read_roughness(r, ptr, false);
        let roughness = match (&foil, direct) {
            (Some(_), Some(_)) => {
                r.error(
                    ptr,
                    "give either `foil` or `rz`/`rq` on a face, not both",
                    "ambiguous roughness",
                    None,
                );
                return None;
            }
            (Some(name), None) => match foils.get(name) {
                Some(f) => Some(f.roughness),
                None if r.unusable.contains(name) => return None,
                None => {
                    let known: Vec<_> = foils.keys().map(String::as_str).collect();
                    r.error(
                        &format!("{ptr}/foil"),
                        format!("foil `{name}` is not defined"),
                        "unknown foil",
                        Some(if known.is_empty() {
                            "define it under `foils:` with its rz/rq".into()
                        } else {
                            format!("defined foils: {}", known.join(", "))
                        }),
                    );
                    return None;
                }
            },
            (None, Some(rough)) => Some(rough),
            (None, None) => {
                if side != FoilSide::BondTreatment {
                    r.error(
                        ptr,
                        format!("this {} face has no roughness; only a bond-treatment face may leave it unknown", side.as_str()),
                        "roughness missing",
                        Some("add `foil: NAME` or `rz: 5 um` from the foil data sheet".into()),
                    );
                    return None;
                }
                None
            }
        };
        Some(Some(Face {
            pointer: ptr.to_string(),
            side,
            roughness,
            foil,
        }))
    })
}

fn read_dielectric(
    r: &mut Reader<'_>,
    ptr: &str,
    materials: &BTreeMap<String, Material>,
) -> Option<DielectricLayer> {
    let kind = match r.string(&format!("{ptr}/kind")).as_deref() {
        Some("core") => DielectricKind::Core,
        Some("bonding-film") => DielectricKind::BondingFilm,
        Some("solder-mask") => DielectricKind::SolderMask,
        _ => DielectricKind::Prepreg,
    };
    let material_pointer = format!("{ptr}/material");
    let mut material = r.string(&material_pointer).unwrap_or_default();
    if !materials.contains_key(&material) {
        if let Some((w, _)) = ply_resin_content(r, ptr) {
            let key = resin_key(&material, w);
            if materials.contains_key(&key) {
                material = key;
            }
        }
    }
    let mut ok = true;
    if !materials.contains_key(&material) && r.unusable.contains(&material) {
        ok = false;
    } else if !materials.contains_key(&material) {
        let known: Vec<_> = materials.keys().map(String::as_str).collect();
        r.error(
            &material_pointer,
            format!("material `{material}` is not defined in this file or its libraries"),
            "unknown material",
            Some(if known.is_empty() {
                "define it under `materials:` or add a library under `libraries:`".into()
            } else {
                format!("known materials: {}", known.join(", "))
            }),
        );
        ok = false;
    }
    let tp = format!("{ptr}/thickness");
    let np = format!("{ptr}/nominal-thickness");
    let pressed = if r.node(&tp).is_some() {
        r.bounded(
            &tp,
            Dimension::Length,
            "dielectric thickness",
            0.0,
            10e-3,
            fmt_len,
        )
        .map(Some)
    } else {
        Some(None)
    };
    let nominal = if r.node(&np).is_some() {
        r.bounded(
            &np,
            Dimension::Length,
            "nominal thickness",
            0.0,
            10e-3,
            fmt_len,
        )
        .map(Some)
    } else {
        Some(None)
    };
    let resin = if r.node(&format!("{ptr}/resin-content")).is_some() {
        Some(r.fraction(&format!("{ptr}/resin-content"), "resin content")?)
    } else {
        None
    };
    let modelled_dk = r.number(&format!("{ptr}/modelled-dk"), "modelled Dk");
    if let Some(dk) = modelled_dk {
        if dk < 1.0 {
            r.error(
                &format!("{ptr}/modelled-dk"),
                format!("modelled Dk {dk} is below 1, the Dk of vacuum"),
                "not physical",
                None,
            );
            ok = false;
        } else if dk > MAX_BOARD_DK {
            r.error(
                &format!("{ptr}/modelled-dk"),
                format!("modelled Dk {dk} is above any board dielectric ({MAX_BOARD_DK} is the limit here)"),
                "above any board dielectric",
                Some("give the Dk the impedance model uses for this layer, e.g. 3.6".into()),
            );
            ok = false;
        }
    }
    let (pressed, nominal) = (pressed?, nominal?);
    if !ok {
        return None;
    }
    Some(DielectricLayer {
        kind,
        material,
        material_pointer,
        thickness: pressed.or(nominal)?,
        pressed_given: pressed.is_some(),
        nominal_thickness: nominal,
        glass_style: r.string(&format!("{ptr}/glass-style")),
        resin_content: resin,
        modelled_dk,
    })
}

fn layer_ref(r: &mut Reader<'_>, s: &Stackup, ptr: &str, want: &str) -> Option<usize> {
    let name = r.string(ptr)?;
    match s.layer_index(&name) {
        Some(i) if s.copper(i).is_some() => Some(i),
        Some(_) => {
            r.error(
                ptr,
                format!("layer `{name}` is a dielectric; {want} must be a copper layer"),
                "not a copper layer",
                None,
            );
            None
        }
        None if r.unusable.contains(&name) => None,
        None => {
            let copper: Vec<_> = s
                .copper_indices()
                .into_iter()
                .map(|i| s.layers[i].name.as_str())
                .collect();
            r.error(
                ptr,
                format!("there is no layer named `{name}`"),
                "unknown layer",
                Some(format!("copper layers: {}", copper.join(", "))),
            );
            None
        }
    }
}

fn read_net_classes(r: &mut Reader<'_>, s: &Stackup) -> Vec<NetClass> {
    let n = r
        .node("/net-classes")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut out = Vec::new();
    let mut names: BTreeMap<String, String> = BTreeMap::new();
    for i in 0..n {
        let ptr = format!("/net-classes/{i}");
        let name = r.string(&format!("{ptr}/name")).unwrap_or_default();
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
            Some(nc) => out.push(nc),
            None => {
                r.unusable.insert(name);
            }
        }
    }
    out
}

fn read_net_class(r: &mut Reader<'_>, s: &Stackup, ptr: &str, name: String) -> Option<NetClass> {
    let structure = match r.string(&format!("{ptr}/structure")).as_deref() {
        Some("embedded-microstrip") => Structure::EmbeddedMicrostrip,
        Some("stripline") => Structure::Stripline,
        Some("diff-microstrip") => Structure::DiffMicrostrip,
        Some("diff-stripline") => Structure::DiffStripline,
        Some("coplanar-grounded") => Structure::CoplanarGrounded,
        _ => Structure::Microstrip,
    };
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
    let modulation = match r.string(&format!("{ptr}/modulation")).as_deref() {
        Some("pam4") => Some(Modulation::Pam4),
        Some("nrz") => Some(Modulation::Nrz),
        _ => None,
    };
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
        Some(ImpedanceTarget { target, tolerance })
    } else {
        None
    };
    let (width, top_width, spacing, gap, pitch) = (width??, top_width?, spacing?, gap?, pitch?);
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
    if structure == Structure::CoplanarGrounded && gap.is_none() {
        r.error(
            ptr,
            format!("coplanar net class `{name}` needs `gap` (trace edge to coplanar ground)"),
            "gap missing",
            Some("add e.g. `gap: 0.15 mm`".into()),
        );
        return None;
    }
    if data_rate.is_some() && modulation.is_none() {
        r.error(
            &format!("{ptr}/data-rate"),
            "a data rate needs `modulation: nrz` or `modulation: pam4` to give its Nyquist frequency",
            "modulation missing",
            None,
        );
        return None;
    }
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
        assumed_dk,
        via_fence_pitch: pitch,
        launch_valid_to: launch,
    })
}

fn read_groups(r: &mut Reader<'_>, s: &Stackup) -> Vec<MatchedGroup> {
    let n = r
        .node("/matched-groups")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut out = Vec::new();
    for g in 0..n {
        let gp = format!("/matched-groups/{g}");
        let name = r.string(&format!("{gp}/name")).unwrap_or_default();
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
                                None,
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
        if ok {
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

fn read_settings(r: &mut Reader<'_>, s: &Stackup) -> Settings {
    let mut out = Settings::default();
    if r.node("/settings/board-thickness").is_some() {
        let p = "/settings/board-thickness";
        let target = r.bounded(
            &format!("{p}/target"),
            Dimension::Length,
            "board thickness target",
            0.0,
            20e-3,
            fmt_len,
        );
        if let Some(target) = target {
            let tol = if r.node(&format!("{p}/tolerance")).is_some() {
                r.tolerance(
                    &format!("{p}/tolerance"),
                    Dimension::Length,
                    target,
                    "board thickness tolerance",
                )
            } else {
                Some(0.10 * target)
            };
            if let Some(tolerance) = tol {
                out.board_thickness = Some(BoardThickness {
                    pointer: p.to_string(),
                    target,
                    tolerance,
                });
            }
        }
    }
    if let Some(entries) = r.node("/settings/rules").and_then(Node::as_map) {
        for e in entries {
            let ptr = format!("/settings/rules/{}", escape_token(&e.key));
            let mut rs = RuleSettings {
                pointer: ptr.clone(),
                level: None,
                options: BTreeMap::new(),
            };
            let level_of = |s: &str| match s {
                "off" => Some(Level::Off),
                other => Severity::parse(other).map(Level::On),
            };
            match &e.value.value {
                Value::String(sv) => rs.level = level_of(sv),
                Value::Map(opts) => {
                    for o in opts {
                        if o.key == "severity" {
                            rs.level = o.value.as_str().and_then(level_of);
                        } else {
                            rs.options
                                .insert(o.key.clone(), format!("{ptr}/{}", escape_token(&o.key)));
                        }
                    }
                }
                _ => {}
            }
            out.rules.insert(e.key.clone(), rs);
        }
    }
    let n = r
        .node("/settings/suppress")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    for i in 0..n {
        let p = format!("/settings/suppress/{i}");
        let at = r.string(&format!("{p}/at"));
        if let Some(name) = &at {
            let known = s.layers.iter().any(|l| &l.name == name)
                || s.materials.contains_key(name)
                || s.net_classes.iter().any(|c| &c.name == name)
                || s.matched_groups.iter().any(|g| &g.name == name)
                || s.foils.contains_key(name)
                || r.unusable.contains(name);
            if !known {
                r.error(
                    &format!("{p}/at"),
                    format!("suppression names `{name}`, which is not a layer, material, foil, net class or matched group of this file"),
                    "nothing by that name",
                    None,
                );
                continue;
            }
        }
        out.suppressions.push(Suppression {
            pointer: p.clone(),
            rule: r.string(&format!("{p}/rule")).unwrap_or_default(),
            at,
            scope: None,
            reason: r.string(&format!("{p}/reason")).unwrap_or_default(),
        });
    }
    read_inline_suppressions(r, s, &mut out.suppressions);
    out
}

/// Inline `suppress:` lists on layers, net classes, matched groups and this
/// file's materials and foils: each entry suppresses its rule's findings
/// whose primary or secondary location lies under that element.
fn read_inline_suppressions(r: &Reader<'_>, s: &Stackup, out: &mut Vec<Suppression>) {
    let mut elements: Vec<(String, String)> = Vec::new();
    elements.extend(s.layers.iter().map(|l| (l.name.clone(), l.pointer.clone())));
    elements.extend(
        s.net_classes
            .iter()
            .map(|c| (c.name.clone(), c.pointer.clone())),
    );
    elements.extend(
        s.matched_groups
            .iter()
            .map(|g| (g.name.clone(), g.pointer.clone())),
    );
    for top in ["materials", "foils"] {
        if let Some(entries) = r.node(&format!("/{top}")).and_then(Node::as_map) {
            elements.extend(
                entries
                    .iter()
                    .map(|e| (e.key.clone(), format!("/{top}/{}", escape_token(&e.key)))),
            );
        }
    }
    for (name, ptr) in elements {
        let n = r
            .node(&format!("{ptr}/suppress"))
            .and_then(Node::as_seq)
            .map_or(0, <[Node]>::len);
        for i in 0..n {
            let p = format!("{ptr}/suppress/{i}");
            out.push(Suppression {
                rule: r.string(&format!("{p}/rule")).unwrap_or_default(),
                at: Some(name.clone()),
                scope: Some(ptr.clone()),
                reason: r.string(&format!("{p}/reason")).unwrap_or_default(),
                pointer: p,
            });
        }
    }
}

/// Copper fill assumed when a layer gives none: planes 0.9, mixed 0.6,
/// signal 0.3 (common practice, no source; fabricators use similar values).
pub fn default_fill(role: CopperRole) -> f64 {
    match role {
        CopperRole::Plane => 0.9,
        CopperRole::Mixed => 0.6,
        CopperRole::Signal => 0.3,
    }
}

/// Pressed thickness of prepregs and bonding films given only a nominal
/// thickness: resin flows into the etched copper of the neighbouring layers
/// (`stackup_physics::fab::pressed_prepreg_thickness`).
fn press_prepregs(r: &mut Reader<'_>, layers: &mut [Layer]) {
    use stackup_physics::fab::{pressed_prepreg_thickness, PrepregFace};
    for k in 0..layers.len() {
        let LayerKind::Dielectric(d) = &layers[k].kind else {
            continue;
        };
        if d.pressed_given
            || !matches!(
                d.kind,
                DielectricKind::Prepreg | DielectricKind::BondingFilm
            )
        {
            continue;
        }
        let Some(nominal) = d.nominal_thickness else {
            continue;
        };
        let face = |j: Option<usize>| match j.and_then(|j| layers.get(j)).map(|l| &l.kind) {
            Some(LayerKind::Copper(c)) => PrepregFace::Copper {
                thickness: c.thickness,
                fill: c.fill.unwrap_or_else(|| default_fill(c.role)),
            },
            _ => PrepregFace::Laminate,
        };
        let faces = [face(k.checked_sub(1)), face(Some(k + 1))];
        match pressed_prepreg_thickness(nominal, faces) {
            Ok(t) => {
                if let LayerKind::Dielectric(d) = &mut layers[k].kind {
                    d.thickness = t;
                }
            }
            Err(_) => {
                let p = format!("{}/dielectric/nominal-thickness", layers[k].pointer);
                r.error(
                    &p,
                    format!(
                        "a {} ply cannot fill the etched copper next to it: nominal {} leaves no pressed thickness",
                        d.kind.as_str(),
                        fmt_len(nominal)
                    ),
                    "too thin to fill the copper",
                    Some("use a thicker or resin-richer ply, or give the pressed `thickness`".into()),
                );
            }
        }
    }
}
