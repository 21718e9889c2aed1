//! SARIF 2.1.0 output (OASIS Static Analysis Results Interchange Format),
//! built with the typed `serde-sarif` crate.
//!
//! What code-scanning services need is always present: `$schema` and
//! `version`, the rules array with metadata, `message.text` on every result,
//! and a location with a region. Regions are 1-based lines and columns in
//! Unicode code points (`columnKind: unicodeCodePoints`).

use std::collections::BTreeMap;

use serde_sarif::sarif::{
    ArtifactChange, ArtifactContent, ArtifactLocation, Fix, Location, Message,
    MultiformatMessageString, PhysicalLocation, Region, Replacement, ReportingConfiguration,
    ReportingDescriptor, Result as SarifResult, ResultLevel, Run, Sarif, Suppression, Tool,
    ToolComponent,
};

use crate::finding::{Finding, Severity};
use crate::rules::RuleMeta;
use crate::source::{DbLines, Location as SrcLocation, SourceDb};

/// The SARIF 2.1.0 schema address written into `$schema`.
pub const SCHEMA_URI: &str = "https://json.schemastore.org/sarif-2.1.0.json";

/// Default base address of the rule pages (`rules/<name>.md`); override with
/// `--rule-docs-url` when the project is mirrored elsewhere.
pub const DEFAULT_DOCS_URL: &str = "https://github.com/stackup-lint/stackup-lint/blob/main/rules/";

/// The partial-fingerprint key (versioned, so a scheme change is a new key).
pub const FINGERPRINT_KEY: &str = "stackupLintFinding/v1";

fn level(s: Severity) -> ResultLevel {
    match s {
        Severity::Error => ResultLevel::Error,
        Severity::Warning => ResultLevel::Warning,
        Severity::Note => ResultLevel::Note,
    }
}

fn text(s: impl Into<String>) -> Message {
    Message::builder().text(s.into()).build()
}

fn mstring(s: &str) -> MultiformatMessageString {
    MultiformatMessageString::builder()
        .text(s.to_string())
        .build()
}

/// First paragraph of a rule page after its title, as plain text.
fn first_paragraph(doc: &str) -> String {
    doc.lines()
        .skip_while(|l| l.starts_with('#') || l.trim().is_empty())
        .take_while(|l| !l.trim().is_empty())
        .collect::<Vec<_>>()
        .join(" ")
}

fn descriptor(m: &RuleMeta, docs_url: &str) -> ReportingDescriptor {
    ReportingDescriptor::builder()
        .id(m.name.to_string())
        .name(m.name.to_string())
        .short_description(mstring(m.summary))
        .full_description(mstring(&first_paragraph(m.doc)))
        .help(
            MultiformatMessageString::builder()
                .text(m.doc.to_string())
                .markdown(m.doc.to_string())
                .build(),
        )
        .help_uri(format!("{docs_url}{}.md", m.name))
        .default_configuration(
            ReportingConfiguration::builder()
                .level(serde_json::Value::String(
                    m.default_severity.as_str().to_string(),
                ))
                .build(),
        )
        .build()
}

fn builtin(db: &SourceDb, file: usize) -> bool {
    db.get(file).path == std::path::Path::new(crate::load::BUILTIN_GENERIC_NAME)
}

fn artifact(db: &SourceDb, file: usize) -> ArtifactLocation {
    let shown = &db.get(file).display;
    if shown.starts_with('/') {
        ArtifactLocation::builder()
            .uri(format!("file://{shown}"))
            .build()
    } else {
        ArtifactLocation::builder()
            .uri(shown.clone())
            .uri_base_id("%SRCROOT%".to_string())
            .build()
    }
}

fn region(lines: &DbLines, loc: &SrcLocation) -> Region {
    let (sl, sc) = lines.line_col(loc.file, loc.span.start);
    let (el, ec) = lines.line_col(loc.file, loc.span.end);
    Region::builder()
        .start_line(sl as i64)
        .start_column(sc as i64)
        .end_line(el as i64)
        .end_column(ec as i64)
        .build()
}

fn location(lines: &DbLines, loc: &SrcLocation, message: Option<&str>) -> Location {
    let phys = PhysicalLocation::builder()
        .artifact_location(artifact(lines.db(), loc.file))
        .region(region(lines, loc))
        .build();
    match message {
        Some(m) => Location::builder()
            .physical_location(phys)
            .message(text(m))
            .build(),
        None => Location::builder().physical_location(phys).build(),
    }
}

/// Build the SARIF log for `findings`.
pub fn build(findings: &[Finding], db: &SourceDb, rules: &[&RuleMeta], docs_url: &str) -> Sarif {
    let index: BTreeMap<&str, usize> = rules.iter().enumerate().map(|(i, m)| (m.name, i)).collect();
    let lines = DbLines::new(db);
    let results: Vec<SarifResult> = findings
        .iter()
        .map(|f| {
            let display = &db.get(f.primary.file).display;
            let mut message = f.message.clone();
            if let Some(h) = &f.help {
                message.push_str(&format!(". Fix: {h}"));
            }
            let mut fp = BTreeMap::new();
            fp.insert(FINGERPRINT_KEY.to_string(), f.fingerprint(display));
            // The built-in library is no file a review tool can open: it is
            // never an artifact (rules place their findings at its use).
            let related: Vec<Location> = f
                .labels
                .iter()
                .filter(|l| !builtin(db, l.location.file))
                .map(|l| location(&lines, &l.location, Some(&l.message)))
                .collect();
            let base = SarifResult::builder()
                .rule_id(f.rule.to_string())
                .level(level(f.severity))
                .message(text(message))
                .locations(vec![location(&lines, &f.primary, None)])
                .partial_fingerprints(fp);
            let mut r = match index.get(f.rule) {
                Some(&i) => base.rule_index(i as i64).build(),
                None => base.build(),
            };
            if !related.is_empty() {
                r.related_locations = Some(related);
            }
            if let Some(fx) = &f.fix {
                // One change per file, its replacements in file order.
                let mut by_file: BTreeMap<usize, Vec<&crate::finding::Edit>> = BTreeMap::new();
                for e in &fx.edits {
                    by_file.entry(e.location.file).or_default().push(e);
                }
                let changes: Vec<ArtifactChange> = by_file
                    .into_iter()
                    .map(|(file, mut edits)| {
                        edits.sort_by_key(|e| (e.location.span.start, e.location.span.end));
                        ArtifactChange::builder()
                            .artifact_location(artifact(lines.db(), file))
                            .replacements(
                                edits
                                    .iter()
                                    .map(|e| {
                                        Replacement::builder()
                                            .deleted_region(region(&lines, &e.location))
                                            .inserted_content(
                                                ArtifactContent::builder()
                                                    .text(e.text.clone())
                                                    .build(),
                                            )
                                            .build()
                                    })
                                    .collect::<Vec<_>>(),
                            )
                            .build()
                    })
                    .collect();
                r.fixes = Some(vec![Fix::builder()
                    .description(text(fx.description.clone()))
                    .artifact_changes(changes)
                    .build()]);
            }
            if let Some(b) = f.baselined {
                let state = if b { "unchanged" } else { "new" };
                r.baseline_state = Some(serde_json::Value::String(state.into()));
            }
            if let Some(reason) = &f.suppressed {
                r.suppressions = Some(vec![Suppression::builder()
                    .kind(serde_json::Value::String("inSource".into()))
                    .justification(reason.clone())
                    .build()]);
            }
            r
        })
        .collect();
    let driver = ToolComponent::builder()
        .name("stackup-lint".to_string())
        .version(env!("CARGO_PKG_VERSION").to_string())
        .semantic_version(env!("CARGO_PKG_VERSION").to_string())
        .information_uri(docs_url.trim_end_matches("rules/").to_string())
        .rules(
            rules
                .iter()
                .map(|m| descriptor(m, docs_url))
                .collect::<Vec<_>>(),
        )
        .build();
    let run = Run::builder()
        .tool(Tool::builder().driver(driver).build())
        .results(results)
        .column_kind(serde_json::Value::String("unicodeCodePoints".into()))
        .build();
    Sarif::builder()
        .schema(SCHEMA_URI.to_string())
        .version(serde_json::Value::String("2.1.0".into()))
        .runs(vec![run])
        .build()
}

/// Render the SARIF log as pretty JSON.
pub fn render(findings: &[Finding], db: &SourceDb, rules: &[&RuleMeta], docs_url: &str) -> String {
    let log = build(findings, db, rules, docs_url);
    let mut s =
        serde_json::to_string_pretty(&log).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}
