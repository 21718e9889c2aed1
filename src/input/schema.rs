//! JSON Schema validation of stackup and library files.
//!
//! The schemas in `schema/` are the contract of the input format. Errors from
//! the `jsonschema` crate are rewritten into plain sentences and placed at
//! the span of the offending YAML node.

use std::sync::OnceLock;

use jsonschema::error::ValidationErrorKind;
use jsonschema::{Draft, Registry, ValidationError, Validator};

use crate::finding::{Finding, INVALID_INPUT};
use crate::input::yaml::{Node, Value};
use crate::source::{escape_token, Location};

/// The stackup file schema (schema/stackup.schema.json).
pub const STACKUP_SCHEMA: &str = include_str!("../../schema/stackup.schema.json");
/// The material library schema (schema/materials.schema.json).
pub const MATERIALS_SCHEMA: &str = include_str!("../../schema/materials.schema.json");

const STACKUP_ID: &str =
    "https://raw.githubusercontent.com/stackup-lint/stackup-lint/main/schema/stackup.schema.json";

/// Which kind of file is being validated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    Stackup,
    Library,
}

fn parse_schema(text: &str) -> serde_json::Value {
    serde_json::from_str(text).expect("bundled schema is valid JSON (checked by tests)")
}

fn registry() -> &'static Registry<'static> {
    static REG: OnceLock<Registry<'static>> = OnceLock::new();
    REG.get_or_init(|| {
        Registry::new()
            .add(STACKUP_ID, parse_schema(STACKUP_SCHEMA))
            .and_then(|b| b.prepare())
            .expect("bundled schema registers (checked by tests)")
    })
}

fn validator(kind: FileKind) -> &'static Validator {
    static STACKUP: OnceLock<Validator> = OnceLock::new();
    static LIBRARY: OnceLock<Validator> = OnceLock::new();
    let (cell, text) = match kind {
        FileKind::Stackup => (&STACKUP, STACKUP_SCHEMA),
        FileKind::Library => (&LIBRARY, MATERIALS_SCHEMA),
    };
    cell.get_or_init(|| {
        jsonschema::options()
            .with_draft(Draft::Draft202012)
            .with_registry(registry())
            .build(&parse_schema(text))
            .expect("bundled schema compiles (checked by tests)")
    })
}

/// A parsed file as the schema check reads it: its text and tree.
pub struct Doc<'a> {
    pub text: &'a str,
    pub tree: &'a Node,
}

impl Doc<'_> {
    /// The location of the node at `pointer` (or of the key that
    /// introduces it), in file 0: the caller gives the file its id.
    fn locate(&self, pointer: &str, key: bool) -> Location {
        let span = if key {
            self.tree.key_span(pointer)
        } else {
            self.tree.pointer(pointer).map(|n| n.span.clone())
        };
        Location {
            file: 0,
            pointer: pointer.to_string(),
            span: span.unwrap_or(0..0),
        }
    }
}

/// Validate a parsed file; returns findings at spans (in file 0), and
/// whether they are all the file's schema errors (a file with more than
/// [`MAX_FINDINGS`] gets only the first).
pub fn validate(doc: &Doc<'_>, kind: FileKind) -> (Vec<Finding>, bool) {
    let instance = doc.tree.to_json();
    let mut out: Vec<Finding> = Vec::new();
    // A hostile file can hold 100 000 unknown keys; a person reads the
    // first few, so stop early instead of spending minutes on messages.
    let mut errors = 0;
    for err in validator(kind)
        .iter_errors(&instance)
        .take(MAX_FINDINGS + 1)
    {
        errors += 1;
        if errors > MAX_FINDINGS {
            break;
        }
        explain(doc, &err, &mut out);
    }
    let complete = errors <= MAX_FINDINGS && out.len() <= MAX_FINDINGS;
    out.truncate(MAX_FINDINGS);
    // A misspelt key also leaves a required key missing; the unknown-key
    // finding (with its "did you mean") says it all, so drop the other.
    let typos: Vec<(String, String)> = out
        .iter()
        .filter_map(|f| {
            let fix = f.help.as_deref()?.strip_prefix("did you mean `")?;
            let fix = fix.split('`').next()?;
            let parent = f.primary.pointer.rsplit_once('/')?.0;
            Some((parent.to_string(), fix.to_string()))
        })
        .collect();
    out.retain(|f| {
        !typos.iter().any(|(parent, fix)| {
            &f.primary.pointer == parent
                && (f.message.ends_with(&format!("required key `{fix}`"))
                    || f.message.contains(&format!("`{fix}` (")))
        })
    });
    // One message per place is enough; keep the first.
    let mut seen = std::collections::BTreeSet::new();
    out.retain(|f| seen.insert((f.primary.pointer.clone(), f.message.clone())));
    (out, complete)
}

/// The elements a stackup's model leaves out for its schema findings:
/// each finding's layer, net class, matched group, coupon, material or foil
/// entry (or `/settings`, or an unknown top-level key); `None` when one is
/// about the file as a whole or one of its lists (no model is built).
/// What the model reads of the other elements is then schema-valid, when
/// `findings` are all the file's schema errors (see [`validate`]).
pub fn left_out(findings: &[Finding]) -> Option<std::collections::BTreeSet<String>> {
    const LISTS: [&str; 4] = ["layers", "net-classes", "matched-groups", "coupons"];
    const MAPS: [&str; 2] = ["materials", "foils"];
    const WHOLE: [&str; 3] = ["stackup-lint", "board", "libraries"];
    let mut out = std::collections::BTreeSet::new();
    for f in findings {
        let mut tokens = f.primary.pointer.split('/').skip(1);
        let element = match (tokens.next(), tokens.next()) {
            (Some(list), Some(i))
                if LISTS.contains(&list)
                    && !i.is_empty()
                    && i.bytes().all(|b| b.is_ascii_digit()) =>
            {
                format!("/{list}/{i}")
            }
            (Some(map), Some(key)) if MAPS.contains(&map) => format!("/{map}/{key}"),
            (Some("settings"), _) => "/settings".to_string(),
            (Some(key), None)
                if !key.is_empty()
                    && !LISTS.contains(&key)
                    && !MAPS.contains(&key)
                    && !WHOLE.contains(&key)
                    && key != "settings" =>
            {
                // An unknown top-level key: nothing reads it.
                format!("/{key}")
            }
            _ => return None,
        };
        out.insert(element);
    }
    Some(out)
}

/// Most schema findings reported for one file.
const MAX_FINDINGS: usize = 50;

fn finding(
    doc: &Doc<'_>,
    pointer: &str,
    key: bool,
    message: String,
    label: &str,
    help: Option<String>,
) -> Finding {
    let loc = doc.locate(pointer, key);
    let mut f = Finding::new(INVALID_INPUT, loc, message).label(label);
    f.help = help;
    f
}

fn describe_json(v: &serde_json::Value) -> String {
    match v {
        serde_json::Value::Null => "nothing (null)".into(),
        serde_json::Value::Bool(b) => format!("`{b}`"),
        serde_json::Value::Number(n) => format!("the number {n}"),
        serde_json::Value::String(s) => format!("the text \"{s}\""),
        serde_json::Value::Array(_) => "a list".into(),
        serde_json::Value::Object(_) => "a mapping".into(),
    }
}

/// Name of the node at `pointer`, for messages: the last key, or for a
/// list entry its `name` (or its 1-based position) and the list it is in.
fn field_name(doc: &Doc<'_>, pointer: &str) -> String {
    let unescape = |t: &str| t.replace("~1", "/").replace("~0", "~");
    let (parent, last) = pointer.rsplit_once('/').unwrap_or(("", pointer));
    if last.is_empty() {
        return "the file".into();
    }
    if !last.bytes().all(|b| b.is_ascii_digit()) {
        return format!("`{}`", unescape(last));
    }
    let list = parent.rsplit('/').next().map(unescape).unwrap_or_default();
    let name = doc
        .tree
        .pointer(pointer)
        .and_then(|n| n.get("name"))
        .and_then(|n| n.as_str().map(str::to_string));
    let position = last.parse::<usize>().map_or(0, |i| i + 1);
    match name {
        Some(name) => format!("the `{list}` entry named `{name}`"),
        None => format!("entry {position} of `{list}`"),
    }
}

/// The YAML source text of a number that is not finite (`.nan`, `.inf`),
/// which JSON cannot carry (it reaches the schema as null).
fn non_finite_text(doc: &Doc<'_>, pointer: &str) -> Option<String> {
    let node = doc.tree.pointer(pointer)?;
    match node.value {
        Value::Number(n) if !n.is_finite() => doc.text.get(node.span.clone()).map(str::to_string),
        _ => None,
    }
}

fn explain(doc: &Doc<'_>, err: &ValidationError<'_>, out: &mut Vec<Finding>) {
    let ptr = err.instance_path().as_str().to_string();
    let schema_path = err.schema_path().as_str().to_string();
    let what = field_name(doc, &ptr);
    let instance = err.instance();
    match err.kind() {
        ValidationErrorKind::Required { property } => {
            let name = property.as_str().unwrap_or("?");
            out.push(finding(
                doc,
                &ptr,
                ptr.rsplit('/')
                    .next()
                    .is_some_and(|t| !t.bytes().all(|b| b.is_ascii_digit()))
                    && !ptr.is_empty(),
                format!("{what} is missing the required key `{name}`"),
                &format!("`{name}` missing"),
                required_help(name),
            ));
        }
        ValidationErrorKind::AdditionalProperties { unexpected } => {
            let allowed = allowed_keys(&schema_path);
            for key in unexpected.iter().take(MAX_FINDINGS) {
                let kp = format!("{ptr}/{}", escape_token(key));
                let names: Vec<&str> = allowed
                    .as_deref()
                    .map_or(Vec::new(), |a| a.split(", ").collect());
                let help = match crate::suggest::key(key, &names) {
                    Some(fix) => Some(crate::suggest::did_you_mean(fix)),
                    None => allowed.as_ref().map(|a| format!("allowed keys here: {a}")),
                };
                out.push(finding(
                    doc,
                    &kp,
                    true,
                    format!("unknown key `{key}` in {what}"),
                    "not a key of this format",
                    help,
                ));
            }
        }
        ValidationErrorKind::Type { .. } if ptr.is_empty() && instance.is_null() => {
            out.push(finding(
                doc,
                &ptr,
                false,
                "the file is empty: it holds no YAML content".into(),
                "empty",
                Some("a stackup starts with `stackup-lint: 1` and lists its `layers:`".into()),
            ));
        }
        ValidationErrorKind::Type { .. } if non_finite_text(doc, &ptr).is_some() => {
            let text = non_finite_text(doc, &ptr).unwrap_or_default();
            out.push(finding(
                doc,
                &ptr,
                false,
                format!("{what} is `{text}`, which is not a finite number"),
                "NaN or infinity",
                Some("give a finite value; NaN and infinity are never valid data".into()),
            ));
        }
        ValidationErrorKind::Type { .. }
            if instance.is_number() && quantity_help(&schema_path).is_some() =>
        {
            out.push(finding(
                doc,
                &ptr,
                false,
                format!(
                    "{what} is the bare number {instance}; a bare number is ambiguous here, write it with a unit"
                ),
                "unit missing",
                quantity_help(&schema_path),
            ));
        }
        ValidationErrorKind::Type { kind } => {
            out.push(finding(
                doc,
                &ptr,
                false,
                format!(
                    "{what} should be {}, found {}",
                    type_words(&format!("{kind:?}")),
                    describe_json(instance)
                ),
                "wrong type",
                quantity_help(&schema_path),
            ));
        }
        ValidationErrorKind::Enum { options } => {
            let opts: Vec<String> = options
                .as_array()
                .map(|a| {
                    a.iter()
                        .map(|o| o.as_str().map_or(o.to_string(), str::to_string))
                        .collect()
                })
                .unwrap_or_default();
            out.push(finding(
                doc,
                &ptr,
                false,
                format!(
                    "{what} is {}, which is not one of: {}",
                    describe_json(instance),
                    opts.join(", ")
                ),
                "not an allowed value",
                Some(
                    match instance
                        .as_str()
                        .and_then(|v| crate::suggest::closest(v, opts.iter().map(String::as_str)))
                    {
                        Some(fix) => crate::suggest::did_you_mean(fix),
                        None => format!("use one of: {}", opts.join(", ")),
                    },
                ),
            ));
        }
        ValidationErrorKind::Constant { expected_value } => out.push(finding(
            doc,
            &ptr,
            false,
            format!(
                "{what} must be {expected_value}, found {}",
                describe_json(instance)
            ),
            "unsupported value",
            Some(format!(
                "this version of stackup-lint reads format {expected_value}"
            )),
        )),
        ValidationErrorKind::Pattern { .. } => out.push(finding(
            doc,
            &ptr,
            false,
            format!(
                "{what} is {}, which is not a number followed by a unit",
                describe_json(instance)
            ),
            "expected a number with a unit",
            quantity_help(&schema_path)
                .or_else(|| Some("write e.g. \"0.1 mm\", \"4 mil\", \"28 GHz\", \"5 ps\"".into())),
        )),
        ValidationErrorKind::MinItems { limit } => out.push(finding(
            doc,
            &ptr,
            false,
            format!(
                "{what} needs at least {limit} entr{}",
                if *limit == 1 { "y" } else { "ies" }
            ),
            "too few entries",
            None,
        )),
        ValidationErrorKind::MinLength { .. } => out.push(finding(
            doc,
            &ptr,
            false,
            format!("{what} must not be empty"),
            "empty",
            None,
        )),
        ValidationErrorKind::OneOfNotValid { context } | ValidationErrorKind::AnyOf { context } => {
            // Prefer the branch whose problems all lie deeper than this node:
            // it is the form the author meant.
            let deeper: Option<&Vec<ValidationError<'static>>> = context
                .iter()
                .filter(|branch| {
                    !branch.is_empty()
                        && branch
                            .iter()
                            .all(|e| e.instance_path().as_str().len() > ptr.len())
                })
                .min_by_key(|b| b.len());
            if let Some(branch) = deeper {
                for e in branch {
                    explain(doc, e, out);
                }
            } else {
                out.push(one_of_message(doc, &ptr, &schema_path, &what));
            }
        }
        ValidationErrorKind::OneOfMultipleValid { .. } | ValidationErrorKind::Not { .. } => {
            out.push(one_of_message(doc, &ptr, &schema_path, &what));
        }
        _ => out.push(finding(
            doc,
            &ptr,
            false,
            format!("{what}: {err}"),
            "does not match the format",
            None,
        )),
    }
}

fn one_of_message(doc: &Doc<'_>, ptr: &str, schema_path: &str, what: &str) -> Finding {
    let (msg, help) = if schema_path.contains("/layer/")
        || schema_path.starts_with("/properties/layers")
    {
        (
            format!("{what} must be either a copper layer (`copper:`) or a dielectric (`dielectric:`), exactly one"),
            "e.g. `- name: L1` with `copper: {role: signal, thickness: 35 um}`",
        )
    } else if schema_path.contains("dielectric") {
        (
            format!("{what} needs `thickness` (pressed) or `nominal-thickness` (as bought)"),
            "add e.g. `thickness: 0.1 mm`",
        )
    } else {
        (
            format!("{what} does not match any of the allowed forms"),
            "see the schema description of this key",
        )
    };
    finding(
        doc,
        ptr,
        false,
        msg,
        "not an allowed form",
        Some(help.into()),
    )
}

fn type_words(kind: &str) -> String {
    kind.replace("Single(", "")
        .replace("Multiple(", "")
        .replace(['(', ')'], "")
        .to_lowercase()
        .replace("object", "a mapping")
        .replace("array", "a list")
        .replace("string", "text")
        .replace("number", "a number")
        .replace("integer", "a whole number")
        .replace("boolean", "true or false")
}

fn quantity_help(schema_path: &str) -> Option<String> {
    let hint = if schema_path.contains("length") {
        "a length with its unit, e.g. \"0.1 mm\" or \"4 mil\""
    } else if schema_path.contains("frequency") {
        "a frequency with its unit, e.g. \"28 GHz\""
    } else if schema_path.contains("time") {
        "a time with its unit, e.g. \"5 ps\""
    } else {
        return None;
    };
    Some(format!("write {hint}"))
}

fn required_help(name: &str) -> Option<String> {
    let h = match name {
        "stackup-lint" => "start the file with `stackup-lint: 1`",
        "stackup-lint-materials" => "start the library with `stackup-lint-materials: 1`",
        "layers" => "list the layers from top to bottom under `layers:`",
        "thickness" => "add e.g. `thickness: 35 um` (copper) or `thickness: 0.1 mm` (dielectric)",
        "material" => "name a material defined under `materials:`",
        "width" => "add the trace width, e.g. `width: 0.1 mm`",
        _ => return None,
    };
    Some(h.into())
}

/// The allowed keys of the object schema at `schema_path`, for help text.
fn allowed_keys(schema_path: &str) -> Option<String> {
    let schema = parse_schema(STACKUP_SCHEMA);
    let base = schema_path.strip_suffix("/additionalProperties")?;
    // Follow "$ref" segments: the path is expressed through the reference.
    let mut node = &schema;
    for tok in base.split('/').filter(|t| !t.is_empty()) {
        node = match tok {
            "$ref" => {
                let r = node.as_str()?;
                let local = r.rsplit('#').next()?;
                schema.pointer(local)?
            }
            t => node.get(t)?,
        };
        if let Some(r) = node.get("$ref").and_then(|v| v.as_str()) {
            if node.get("properties").is_none() {
                let local = r.rsplit('#').next()?;
                node = schema.pointer(local)?;
            }
        }
    }
    let props = node.get("properties")?.as_object()?;
    Some(
        props
            .keys()
            .map(String::as_str)
            .collect::<Vec<_>>()
            .join(", "),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn bundled_schemas_compile() {
        let _ = validator(FileKind::Stackup);
        let _ = validator(FileKind::Library);
        // The schema itself must be a valid 2020-12 schema.
        for text in [STACKUP_SCHEMA, MATERIALS_SCHEMA] {
            let schema = parse_schema(text);
            let meta = jsonschema::draft202012::meta::validate(&schema);
            assert!(meta.is_ok(), "{meta:?}");
        }
    }
}
