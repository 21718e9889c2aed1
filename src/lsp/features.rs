//! What the editor asks about a stackup: hover, completion, go to
//! definition and quick fixes, read from the last analysed snapshot of the
//! file (and, for completion, from the text as typed).

use std::ops::Range;

use serde_json::Value;

use crate::analysis::Analysis;
use crate::finding::Finding;
use crate::input::schema::STACKUP_SCHEMA;
use crate::model::{LayerKind, Stackup};
use crate::source::{FileId, SourceDb};
use crate::units::{fmt_frequency, fmt_length, unit_is, written_unit, Dimension};

/// One analysed state of a document.
pub struct Snapshot {
    /// The document version it was made from.
    pub version: i32,
    pub db: SourceDb,
    /// The document's file in `db`.
    pub file: FileId,
    pub findings: Vec<Finding>,
    /// The stackup and its analysis, when the file loaded without input
    /// errors.
    pub model: Option<(Stackup, Analysis)>,
}

impl Snapshot {
    pub fn text(&self) -> &str {
        &self.db.get(self.file).text
    }

    fn pointer_at(&self, offset: usize) -> Option<(String, bool)> {
        self.db.get(self.file).spans.pointer_at(offset)
    }

    /// The scalar text at `pointer` of the document.
    fn scalar(&self, pointer: &str) -> Option<&str> {
        let node = self.db.get(self.file).spans.node(pointer)?;
        self.text().get(node.span.clone())
    }
}

/// The index in `items` of the entry whose pointer starts `pointer`
/// (`/net-classes/3/width` → the class at `/net-classes/3`).
fn owner<'a, T>(items: &'a [T], pointer: &str, of: impl Fn(&T) -> &str) -> Option<(usize, &'a T)> {
    items.iter().enumerate().find(|(_, x)| {
        let p = of(x);
        pointer == p || pointer.starts_with(&format!("{p}/"))
    })
}

/// Markdown for the node under the cursor: a quantity in SI and its usual
/// units, a net class's solved numbers, a dielectric's bulk and apparent
/// Dk.
pub fn hover(snap: &Snapshot, offset: usize) -> Option<String> {
    let (pointer, on_key) = snap.pointer_at(offset)?;
    let mut parts = Vec::new();
    if !on_key {
        if let Some(q) = snap.scalar(&pointer).and_then(quantity_hover) {
            parts.push(q);
        }
    }
    if let Some((s, a)) = &snap.model {
        if let Some((ci, nc)) = owner(&s.net_classes, &pointer, |c| &c.pointer) {
            parts.push(class_hover(s, a, ci, nc));
        } else if let Some((li, _)) = owner(&s.layers, &pointer, |l| &l.pointer) {
            if let Some(h) = dielectric_hover(s, a, li) {
                parts.push(h);
            }
        }
    }
    (!parts.is_empty()).then(|| parts.join("\n\n---\n\n"))
}

/// "8 mil" → "203.20 µm = 8.000 mil = 0.2032 mm (SI: 2.032e-4 m)".
fn quantity_hover(raw: &str) -> Option<String> {
    let inner = raw.trim_matches(|c| c == '"' || c == '\'');
    let (value, unit, scale) = written_unit(inner)?;
    if unit.is_empty() {
        return None;
    }
    let si = value * scale;
    Some(if unit_is(unit, Dimension::CopperThickness) {
        format!(
            "`{inner}` = {:.2} µm = {:.3} mil = {:.4} mm (SI: {si:e} m)",
            si * 1e6,
            si / 25.4e-6,
            si * 1e3
        )
    } else if unit_is(unit, Dimension::Frequency) {
        format!("`{inner}` = {} ({si:e} Hz)", fmt_frequency(si))
    } else {
        format!("`{inner}` = {si:e} in SI units")
    })
}

fn class_hover(s: &Stackup, a: &Analysis, ci: usize, nc: &crate::model::NetClass) -> String {
    let ca = &a.classes[ci];
    let mut out = format!(
        "**net class `{}`**: {} on `{}`, field-solved at {}",
        nc.name,
        nc.structure.as_str(),
        s.layers[nc.layer_index].name,
        fmt_frequency(ca.frequency)
    );
    let smooth = match &ca.smooth {
        Ok(n) => n,
        Err(e) => {
            out.push_str(&format!("\n\nnot solved: {e}"));
            return out;
        }
    };
    let zname = if smooth.pair.is_some() {
        "Z_diff"
    } else {
        "Z0"
    };
    let rough = match (ca.rough_best, ca.rough_worst) {
        (Some(b), Some(w)) if (b.z - w.z).abs() > 0.05 => {
            format!(
                "; {:.1} to {:.1} Ω with the declared roughness",
                b.z.max(w.z),
                b.z.min(w.z)
            )
        }
        (_, Some(w)) => format!("; {:.1} Ω with the declared roughness", w.z),
        _ => String::new(),
    };
    out.push_str(&format!(
        "\n\n- {zname}: {:.1} Ω with smooth copper{rough}",
        smooth.z
    ));
    if let Some(t) = nc.impedance {
        out.push_str(&format!(" (target {:.1} ± {:.1} Ω)", t.target, t.tolerance));
    }
    if let Some(p) = smooth.pair {
        out.push_str(&format!(
            "\n- Z_odd {:.1} Ω, Z_even {:.1} Ω, Z_common {:.1} Ω (smooth copper)",
            p.z_odd,
            p.z_even,
            p.z_common()
        ));
    }
    let line = ca.rough_worst.unwrap_or(*smooth);
    out.push_str(&format!(
        "\n- εeff {:.3}, delay {:.3} ps/mm",
        line.eps_eff,
        line.ps_per_mm()
    ));
    if let Some(l) = &ca.loss {
        out.push_str(&format!(
            "\n- loss at {}: dielectric {:.2} dB/m, conductor {:.2} dB/m (rough), total {:.2} dB/m",
            fmt_frequency(ca.frequency),
            l.dielectric,
            l.conductor_rough,
            l.total_rough()
        ));
    }
    if let Some(w) = ca.width_for_target {
        out.push_str(&format!("\n- width for target: {}", fmt_length(w)));
    }
    if let Some(sp) = ca.spacing_for_target {
        out.push_str(&format!("\n- spacing for target: {}", fmt_length(sp)));
    }
    if let (Some((w, sp)), Some(k)) = (ca.pair_for_target, nc.impedance.and_then(|t| t.coupling)) {
        out.push_str(&format!(
            "\n- width {} and spacing {} for the target at coupling {k:.3}",
            fmt_length(w),
            fmt_length(sp)
        ));
    }
    if let Some(t) = &ca.tolerance {
        let (lo, hi) = t.extreme();
        out.push_str(&format!(
            "\n- at the build tolerances: {lo:.1} to {hi:.1} Ω (root-sum-square {:.1} to {:.1} Ω)",
            t.rss.0, t.rss.1
        ));
    }
    out
}

fn dielectric_hover(s: &Stackup, a: &Analysis, li: usize) -> Option<String> {
    let layer = &s.layers[li];
    if !matches!(layer.kind, LayerKind::Dielectric(_)) {
        return None;
    }
    let d = s.dielectric(li)?;
    let mut out = format!(
        "**{} `{}`**: `{}`, {}",
        d.kind.as_str(),
        layer.name,
        d.material,
        fmt_length(d.thickness)
    );
    match a.plies.iter().find(|p| p.layer == li) {
        Some(p) => {
            let c = &p.contact;
            out.push_str(&format!(
                "\n\n- bulk Dk {:.3} at {}",
                c.bulk.dk,
                fmt_frequency(c.frequency)
            ));
            if (c.apparent_worst - c.apparent_best).abs() > 0.005 {
                out.push_str(&format!(
                    "\n- apparent Dk {:.2} to {:.2} with the copper it touches",
                    c.apparent_best, c.apparent_worst
                ));
            } else {
                out.push_str(&format!(
                    "\n- apparent Dk {:.2} with the copper it touches",
                    c.apparent_worst
                ));
            }
            if let Some(m) = d.modelled_dk {
                out.push_str(&format!("\n- modelled Dk (as designed) {m:.2}"));
            }
        }
        None => out.push_str("\n\nno controlled line's field reaches this ply"),
    }
    Some(out)
}

/// Where the name under the cursor is defined: a material or foil (in the
/// stackup or a library file), a layer or a net class. `None` for names
/// of the built-in library, which is no file.
pub fn definition(snap: &Snapshot, offset: usize) -> Option<(FileId, Range<usize>)> {
    let (pointer, on_key) = snap.pointer_at(offset)?;
    if on_key {
        return None;
    }
    let (s, _) = snap.model.as_ref()?;
    let key = pointer.rsplit('/').next()?;
    let name = snap
        .scalar(&pointer)?
        .trim_matches(|c| c == '"' || c == '\'');
    let (file, ptr) = match key {
        "material" => s.materials.get(name).map(|m| (m.file, m.pointer.clone()))?,
        "foil" => s.foils.get(name).map(|f| (f.file, f.pointer.clone()))?,
        "layer" | "reference" => s
            .layers
            .iter()
            .find(|l| l.name == name)
            .map(|l| (s.file, format!("{}/name", l.pointer)))?,
        "net-class" => s
            .net_classes
            .iter()
            .find(|c| c.name == name)
            .map(|c| (s.file, format!("{}/name", c.pointer)))?,
        _ => return None,
    };
    if !snap.db.get(file).path.is_file() {
        return None;
    }
    // A material or foil at its name (the key), a layer or class at its
    // `name:` value.
    let loc = match key {
        "material" | "foil" => snap.db.locate_key(file, &ptr),
        _ => snap.db.locate(file, &ptr),
    };
    Some((file, loc.span))
}

/// The findings with a fix whose place or edits touch `range` (bytes of
/// the document).
pub fn fixes_at<'s>(snap: &'s Snapshot, range: &Range<usize>) -> Vec<&'s Finding> {
    let touches = |r: &Range<usize>| r.start <= range.end && range.start <= r.end;
    snap.findings
        .iter()
        .filter(|f| f.suppressed.is_none())
        .filter(|f| {
            f.fix.as_ref().is_some_and(|fx| {
                (f.primary.file == snap.file && touches(&f.primary.span))
                    || fx
                        .edits
                        .iter()
                        .any(|e| e.location.file == snap.file && touches(&e.location.span))
            })
        })
        .collect()
}

/// One completion: the text and what it is.
#[derive(Debug, Clone, PartialEq)]
pub struct Completion {
    pub label: String,
    pub detail: String,
}

/// Completions at byte `offset` of `text` (the document as typed, which
/// need not parse): after `key:` the names that key takes (materials,
/// foils, layers, net classes, from the last snapshot), else the keys the
/// schema allows where the cursor is (found by indentation).
pub fn completion(text: &str, offset: usize, snap: Option<&Snapshot>) -> Vec<Completion> {
    let offset = crate::source::floor_char_boundary(text, offset);
    let line_start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let prefix = &text[line_start..offset];
    // A value after `key:` (block or flow style).
    if let Some(key) = value_key(prefix) {
        let Some((s, _)) = snap.and_then(|s| s.model.as_ref()) else {
            return Vec::new();
        };
        let names: Vec<(String, &str)> = match key {
            "material" => s
                .materials
                .keys()
                .map(|k| (k.clone(), "material"))
                .collect(),
            "foil" => s.foils.keys().map(|k| (k.clone(), "copper foil")).collect(),
            "layer" | "reference" => s.layers.iter().map(|l| (l.name.clone(), "layer")).collect(),
            "net-class" => s
                .net_classes
                .iter()
                .map(|c| (c.name.clone(), "net class"))
                .collect(),
            _ => Vec::new(),
        };
        return names
            .into_iter()
            .map(|(label, what)| Completion {
                label,
                detail: what.to_string(),
            })
            .collect();
    }
    let path = key_path(text, line_start, prefix);
    schema_keys(&path)
}

/// The key whose value the cursor is in: `  material: lo` → `material`;
/// `{kind: core, material: ` → `material`.
fn value_key(prefix: &str) -> Option<&str> {
    let colon = prefix
        .rfind(": ")
        .or_else(|| prefix.strip_suffix(':').map(|p| p.len()))?;
    let value = prefix[colon + 1..].trim_start();
    if value.contains([',', '{', '}', '[', ']', ':']) {
        return None;
    }
    let before = &prefix[..colon];
    let start = before
        .rfind(|c: char| !(c.is_ascii_alphanumeric() || c == '-' || c == '_'))
        .map_or(0, |i| i + 1);
    let key = &before[start..];
    (!key.is_empty()).then_some(key)
}

/// The keys from the document root to the mapping the cursor's line
/// belongs to, by indentation (list items as `*`); works on text that does
/// not parse.
fn key_path(text: &str, line_start: usize, prefix: &str) -> Vec<String> {
    let indent_of = |l: &str| l.len() - l.trim_start_matches(' ').len();
    let mut ind = if prefix.trim().is_empty() {
        prefix.len()
    } else {
        indent_of(prefix)
    };
    // The cursor's own line may start a list item.
    let mut path: Vec<String> = Vec::new();
    let mut after_item = false;
    if prefix.trim_start().starts_with("- ") {
        path.push("*".into());
        after_item = true;
    }
    for line in text[..line_start].lines().rev() {
        let trimmed = line.trim();
        if trimmed.is_empty() || trimmed.starts_with('#') {
            continue;
        }
        let lead = indent_of(line);
        let rest = line.trim_start();
        if let Some(item) = rest.strip_prefix("- ") {
            let key_col = lead + 2 + (item.len() - item.trim_start().len());
            if ind >= key_col && !after_item {
                // A key of this item's mapping: we are in the item.
                path.push("*".into());
                ind = lead;
                after_item = true;
            } else if ind > lead && !after_item {
                path.push("*".into());
                ind = lead;
                after_item = true;
            }
            continue;
        }
        let Some(colon) = rest.find(':') else {
            continue;
        };
        let key = rest[..colon].trim_matches(|c| c == '"' || c == '\'');
        let opens =
            rest[colon + 1..].trim().is_empty() || rest[colon + 1..].trim_start().starts_with('#');
        if opens && (lead < ind || (after_item && lead == ind)) {
            path.push(key.to_string());
            ind = lead;
            after_item = false;
            if lead == 0 {
                break;
            }
        }
    }
    path.reverse();
    path
}

/// The schema's keys for the mapping at `path` (`*` for list items), with
/// their descriptions.
fn schema_keys(path: &[String]) -> Vec<Completion> {
    let Ok(root) = serde_json::from_str::<Value>(STACKUP_SCHEMA) else {
        return Vec::new();
    };
    let mut nodes = vec![&root];
    for token in path {
        let mut next = Vec::new();
        for n in nodes {
            for n in alternatives(&root, n) {
                let child = if token == "*" {
                    n.get("items")
                } else {
                    n.get("properties").and_then(|p| p.get(token.as_str()))
                };
                next.extend(child);
            }
        }
        nodes = next;
    }
    let mut out: Vec<Completion> = Vec::new();
    for n in nodes {
        for n in alternatives(&root, n) {
            if let Some(Value::Object(props)) = n.get("properties") {
                for (k, v) in props {
                    if out.iter().any(|c| &c.label == k) {
                        continue;
                    }
                    let v = resolve(&root, v);
                    out.push(Completion {
                        label: k.clone(),
                        detail: v
                            .get("description")
                            .and_then(Value::as_str)
                            .unwrap_or_default()
                            .to_string(),
                    });
                }
            }
        }
    }
    out
}

/// `n` with its `$ref` followed.
fn resolve<'v>(root: &'v Value, n: &'v Value) -> &'v Value {
    let mut n = n;
    for _ in 0..16 {
        match n
            .get("$ref")
            .and_then(Value::as_str)
            .and_then(|r| r.strip_prefix('#'))
        {
            Some(ptr) => match root.pointer(ptr) {
                Some(t) => n = t,
                None => break,
            },
            None => break,
        }
    }
    n
}

/// `n` and the schemas it combines (`allOf`, `anyOf`, `oneOf`, `then`,
/// `else`), references followed.
fn alternatives<'v>(root: &'v Value, n: &'v Value) -> Vec<&'v Value> {
    let mut out: Vec<&'v Value> = Vec::new();
    let mut todo = vec![n];
    while let Some(n) = todo.pop() {
        let n = resolve(root, n);
        if out.iter().any(|o: &&Value| std::ptr::eq(*o, n)) || out.len() > 64 {
            continue;
        }
        out.push(n);
        for key in ["allOf", "anyOf", "oneOf"] {
            if let Some(Value::Array(xs)) = n.get(key) {
                todo.extend(xs.iter());
            }
        }
        for key in ["then", "else"] {
            if let Some(x) = n.get(key) {
                todo.push(x);
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn labels(c: &[Completion]) -> Vec<&str> {
        c.iter().map(|c| c.label.as_str()).collect()
    }

    #[test]
    fn key_paths_follow_indentation_and_list_items() {
        let text = "stackup-lint: 1\nlayers:\n  - name: L1\n    copper:\n      \nnet-classes:\n- name: a\n  ";
        let at = text.find("      \n").unwrap() + 6;
        let ls = text[..at].rfind('\n').unwrap() + 1;
        assert_eq!(key_path(text, ls, &text[ls..at]), ["layers", "*", "copper"]);
        let at = text.len();
        let ls = text[..at].rfind('\n').unwrap() + 1;
        assert_eq!(key_path(text, ls, &text[ls..at]), ["net-classes", "*"]);
        assert_eq!(key_path(text, 0, ""), Vec::<String>::new());
    }

    #[test]
    fn schema_keys_at_a_path() {
        let top = schema_keys(&[]);
        assert!(labels(&top).contains(&"net-classes"), "{:?}", labels(&top));
        let class = schema_keys(&["net-classes".into(), "*".into()]);
        for k in ["width", "spacing", "impedance", "structure"] {
            assert!(labels(&class).contains(&k), "{k}: {:?}", labels(&class));
        }
        let copper = schema_keys(&["layers".into(), "*".into(), "copper".into()]);
        assert!(
            labels(&copper).contains(&"thickness"),
            "{:?}",
            labels(&copper)
        );
    }

    #[test]
    fn value_keys_in_block_and_flow_style() {
        assert_eq!(value_key("    material: lo"), Some("material"));
        assert_eq!(value_key("  d: {kind: core, material: "), Some("material"));
        assert_eq!(value_key("    material:"), Some("material"));
        assert_eq!(value_key("    mater"), None);
    }

    #[test]
    fn quantities_in_si_and_usual_units() {
        let h = quantity_hover("8 mil").unwrap();
        assert!(
            h.contains("203.20 µm") && h.contains("0.2032 mm") && h.contains("SI: 2.032e-4 m"),
            "{h}"
        );
        assert!(quantity_hover("\"28 GHz\"").unwrap().contains("28 GHz"));
        assert!(quantity_hover("3.5").is_none());
    }
}
