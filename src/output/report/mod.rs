//! The fabrication-note report: one self-contained HTML page and one
//! Markdown file (with its drawings as SVG files beside it) that show what
//! the stackup is and what it does electrically — cross-section, dielectrics
//! with bulk and apparent Dk, the impedance table, Dk/Df against frequency
//! per material, matched-group skew, and the findings.
//!
//! The content is built once as a [`Document`] of sections, tables and
//! figures; `html` and `markdown` only render it.

mod document;
mod html;
mod markdown;
mod plot;
mod sections;
mod svg;

pub use document::*;
use sections::*;

use crate::analysis::Analysis;
use crate::finding::Finding;
use crate::model::Stackup;
use crate::output::impedance::dielectric_rows;
use crate::source::SourceDb;

/// Slug for file names: lowercase ASCII letters, digits and dashes.
pub fn slug(s: &str) -> String {
    let mut out = String::new();
    for c in s.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.ends_with('-') {
            out.push('-');
        }
    }
    let out = out.trim_matches('-').to_string();
    if out.is_empty() {
        "x".into()
    } else {
        out
    }
}

/// Stem of the report files for a stackup file name.
pub fn stem(display: &str) -> String {
    let name = display.rsplit(['/', '\\']).next().unwrap_or(display);
    let name = [".stackup.yaml", ".stackup.yml", ".yaml", ".yml"]
        .iter()
        .find_map(|sfx| name.strip_suffix(sfx))
        .unwrap_or(name);
    slug(name)
}

/// Escape text for HTML and SVG: markup characters as entities, control
/// and invisible formatting characters as visible `\u{..}` (they are not
/// even valid XML).
pub(crate) fn esc(s: &str) -> String {
    let s = crate::output::escape::controls(s);
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// Build the report content for one stackup.
pub fn document(
    display: &str,
    s: &Stackup,
    a: &Analysis,
    findings: &[Finding],
    db: &SourceDb,
    opts: &ReportOptions,
) -> Document {
    let stem = stem(display);
    let rows = dielectric_rows(s, a);
    let title = match &s.board {
        Some(b) => format!("Fabrication notes: {b}"),
        None => format!("Fabrication notes: {display}"),
    };
    Document {
        title,
        source: display.to_string(),
        sections: [
            Some(summary_section(s, findings)),
            Some(cross_section_section(s, a, &stem, &rows, opts)),
            Some(impedance_section(s, a, opts, &stem)),
            Some(materials_section(s, a, &stem)),
            coupons_section(s, a, &stem),
            Some(skew_section(s, a)),
            Some(findings_section(findings, db)),
        ]
        .into_iter()
        .flatten()
        .collect(),
    }
}

/// Render the report files: `<stem>.html` (self-contained), `<stem>.md` and
/// the SVG drawings the Markdown links to.
pub fn render(doc: &Document) -> Vec<ReportFile> {
    let stem = stem(&doc.source);
    let mut files = vec![
        ReportFile {
            name: format!("{stem}.html"),
            contents: html::render(doc),
        },
        ReportFile {
            name: format!("{stem}.md"),
            contents: markdown::render(doc),
        },
    ];
    for sec in &doc.sections {
        for b in &sec.blocks {
            match b {
                Block::Figure(f) => files.push(ReportFile {
                    name: f.file.clone(),
                    contents: f.svg.clone(),
                }),
                Block::CrossSection {
                    readable, scaled, ..
                } => {
                    for f in [readable, scaled] {
                        files.push(ReportFile {
                            name: f.file.clone(),
                            contents: f.svg.clone(),
                        });
                    }
                }
                _ => {}
            }
        }
    }
    files
}
