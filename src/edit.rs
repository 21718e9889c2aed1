//! Edits of a stackup's YAML text that change one value and nothing else:
//! the number is written in the unit and quoting the file already uses
//! there, and a missing key is inserted as one line at its mapping's
//! indentation. Rules build their fixes with these; `fix` applies them and
//! SARIF carries them.

use crate::finding::Edit;
use crate::source::{FileId, Location, SourceDb, SpanChildren};
use crate::units::{parse_quantity, written_unit, Dimension};

/// `v` written with the decimals that resolve `step`, trailing zeros
/// dropped (`number_text(0.17088, 1e-4)` is "0.1709").
pub fn number_text(v: f64, step: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return "0".into();
    }
    let decimals = (-step.log10()).ceil().clamp(0.0, 12.0) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The scalar at `pointer` as written: its location, its text without
/// quotes and the quote character, if any. `None` for a collection or a
/// node the file does not have.
fn scalar(db: &SourceDb, file: FileId, pointer: &str) -> Option<(Location, String, Option<char>)> {
    let f = db.get(file);
    let node = f.spans.node(pointer)?;
    if !matches!(node.children, SpanChildren::None) || node.span.is_empty() {
        return None;
    }
    let mut span = node.span.clone();
    // An anchor (`&name value`): the value after it.
    if let Some(rest) = f.text.get(span.clone())?.strip_prefix('&') {
        let name = rest.find(char::is_whitespace)?;
        let value = rest[name..].trim_start();
        span.start = span.end - value.len();
    }
    let raw = f.text.get(span.clone())?;
    if raw.starts_with('!') || raw.is_empty() {
        return None;
    }
    let quote = raw
        .chars()
        .next()
        .filter(|c| matches!(c, '"' | '\''))
        .filter(|&q| raw.len() >= 2 && raw.ends_with(q));
    let inner = match quote {
        Some(_) => &raw[1..raw.len() - 1],
        None => raw,
    };
    // Block scalars and multi-line values are not edited in place.
    if inner.contains('\n') || inner.starts_with(['|', '>']) {
        return None;
    }
    let location = Location {
        file,
        pointer: pointer.to_string(),
        span,
    };
    Some((location, inner.to_string(), quote))
}

fn quoted(text: &str, quote: Option<char>) -> String {
    match quote {
        Some(q) => format!("{q}{text}{q}"),
        None => text.to_string(),
    }
}

/// Replace the quantity at `pointer` with `si` (SI units) to a resolution
/// of `step` (SI), written in the unit, spacing and quoting used there;
/// `None` if the value there is not a quantity of `dim` or the new text
/// would not read back as `si`.
pub fn quantity(
    db: &SourceDb,
    file: FileId,
    pointer: &str,
    si: f64,
    step: f64,
    dim: Dimension,
) -> Option<Edit> {
    let (location, inner, quote) = scalar(db, file, pointer)?;
    let (_, unit, scale) = written_unit(&inner)?;
    let number = number_text(si / scale, step / scale);
    let sep = match unit.is_empty() {
        true => "",
        // The separator as written between the number and its unit.
        false => {
            let at = inner.rfind(unit)?;
            let before = inner[..at].trim_start();
            &before[before.trim_end().len()..]
        }
    };
    let text = format!("{number}{sep}{unit}");
    let back = parse_quantity(&text, dim).ok()?;
    if (back - si).abs() > step {
        return None;
    }
    let text = quoted(&text, quote);
    Some(Edit {
        location,
        value: text.clone(),
        text,
    })
}

/// Set `key` of the block mapping at `map_pointer` to `value` (already
/// YAML text): the existing scalar is replaced, or a line `key: value` is
/// added after the mapping's last entry at the indentation of its keys.
/// In a flow mapping (`{...}`) the entry is added after the last one.
/// `None` for an empty mapping or a key whose value is not a scalar.
pub fn set_key(
    db: &SourceDb,
    file: FileId,
    map_pointer: &str,
    key: &str,
    value: &str,
) -> Option<Edit> {
    let pointer = format!("{map_pointer}/{key}");
    let f = db.get(file);
    let map = f.spans.node(map_pointer)?;
    let SpanChildren::Map(entries) = &map.children else {
        return None;
    };
    if entries.iter().any(|(k, _, _)| k == key) {
        let (location, _, quote) = scalar(db, file, &pointer)?;
        let text = quoted(value, quote);
        return Some(Edit {
            location,
            value: text.clone(),
            text,
        });
    }
    let (_, key_span, last) = entries.last()?;
    let text = &f.text;
    let end = last.span.end.max(key_span.end);
    let opening = text.get(map.span.start..)?;
    // Past an anchor (`&name {`).
    let opening = match opening.strip_prefix('&') {
        Some(rest) => rest[rest.find(char::is_whitespace).unwrap_or(rest.len())..].trim_start(),
        None => opening,
    };
    if opening.starts_with('{') {
        // A flow mapping: one more entry after the last.
        return Some(Edit {
            location: Location {
                file,
                pointer,
                span: end..end,
            },
            text: format!(", {key}: {value}"),
            value: value.to_string(),
        });
    }
    // The keys' column, with any `- ` of a list item before it as spaces.
    let line_start = text[..key_span.start].rfind('\n').map_or(0, |i| i + 1);
    let indent: String = text[line_start..key_span.start]
        .chars()
        .map(|_| ' ')
        .collect();
    // After the line the last value ends on (a comment there stays put).
    let (at, lead) = if end > 0 && text.as_bytes()[end - 1] == b'\n' {
        (end, "")
    } else {
        match text[end..].find('\n') {
            Some(i) => (end + i + 1, ""),
            None => (text.len(), "\n"),
        }
    };
    Some(Edit {
        location: Location {
            file,
            pointer,
            span: at..at,
        },
        text: format!("{lead}{indent}{key}: {value}\n"),
        value: value.to_string(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::yaml::{parse, YamlLimits};
    use crate::source::{SourceFile, Spans};

    fn db(text: &str) -> SourceDb {
        let node = parse(text, YamlLimits::default()).unwrap();
        let mut db = SourceDb::default();
        db.add(SourceFile {
            path: "t.yaml".into(),
            display: "t.yaml".into(),
            text: text.into(),
            spans: Spans::new(node.spans()),
        });
        db
    }

    fn apply(text: &str, e: &Edit) -> String {
        let mut t = text.to_string();
        t.replace_range(e.location.span.clone(), &e.text);
        t
    }

    #[test]
    fn numbers_keep_five_figures() {
        assert_eq!(number_text(0.248, 1e-4), "0.248");
        assert_eq!(number_text(0.170_88, 1e-4), "0.1709");
        assert_eq!(number_text(9.763_779_5, 1e-3), "9.764");
        assert_eq!(number_text(120.0, 0.1), "120");
    }

    #[test]
    fn quantity_keeps_unit_spacing_and_quotes() {
        let text = "a:\n  w: 8 mil # drawn\n  s: \"0.2mm\"\n  t: 100 um\n";
        let d = db(text);
        let e = quantity(&d, 0, "/a/w", 0.25e-3, 1e-7, Dimension::Length).unwrap();
        assert_eq!(
            apply(text, &e),
            "a:\n  w: 9.843 mil # drawn\n  s: \"0.2mm\"\n  t: 100 um\n"
        );
        let e = quantity(&d, 0, "/a/s", 0.21e-3, 1e-7, Dimension::Length).unwrap();
        assert_eq!(e.text, "\"0.21mm\"");
        let e = quantity(&d, 0, "/a/t", 87.06e-6, 1e-7, Dimension::Length).unwrap();
        assert_eq!(e.text, "87.1 um");
        assert!(quantity(&d, 0, "/a", 1.0, 1e-7, Dimension::Length).is_none());
        assert!(quantity(&d, 0, "/a/t", 1e9, 1.0, Dimension::Frequency).is_none());
    }

    #[test]
    fn set_key_replaces_or_inserts_at_indentation() {
        let text = "layers:\n  - name: pp1\n    dielectric:\n      material: m # note\n      thickness: 0.1 mm\n  - name: L2\n";
        let d = db(text);
        let e = set_key(&d, 0, "/layers/0/dielectric", "modelled-dk", "3.87").unwrap();
        assert_eq!(
            apply(text, &e),
            "layers:\n  - name: pp1\n    dielectric:\n      material: m # note\n      thickness: 0.1 mm\n      modelled-dk: 3.87\n  - name: L2\n"
        );
        // A list item's own mapping: the `- ` becomes indentation.
        let e = set_key(&d, 0, "/layers/1", "notes", "x").unwrap();
        assert_eq!(apply(text, &e), format!("{text}    notes: x\n"));
        let e = set_key(&d, 0, "/layers/0/dielectric", "material", "n").unwrap();
        assert!(apply(text, &e).contains("material: n # note"));
        let text = "d: {material: m, t: 1 mm }\n";
        let e = set_key(&db(text), 0, "/d", "modelled-dk", "3.8").unwrap();
        assert_eq!(
            apply(text, &e),
            "d: {material: m, t: 1 mm, modelled-dk: 3.8 }\n"
        );
    }

    #[test]
    fn set_key_at_end_of_file_without_newline() {
        let text = "d:\n  material: m";
        let e = set_key(&db(text), 0, "/d", "modelled-dk", "3.8").unwrap();
        assert_eq!(apply(text, &e), "d:\n  material: m\n  modelled-dk: 3.8\n");
    }
}
