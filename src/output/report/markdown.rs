//! The report as Markdown (GitHub-flavoured tables), for a fabrication
//! note or a pull request. Drawings are linked as the SVG files written
//! beside it.

use std::fmt::Write as _;

use super::{Block, Document, Table, CAUTION};

/// Escape a table cell: pipes, and line breaks as spaces.
fn cell(s: &str) -> String {
    s.replace('\\', "\\\\")
        .replace('|', "\\|")
        .replace(['\n', '\r'], " ")
}

fn table(out: &mut String, t: &Table) {
    out.push('|');
    for h in &t.header {
        let _ = write!(out, " {} |", cell(h));
    }
    out.push_str("\n|");
    for _ in &t.header {
        out.push_str(" --- |");
    }
    out.push('\n');
    for row in &t.rows {
        out.push('|');
        for c in row {
            let _ = write!(out, " {} |", cell(c));
        }
        out.push('\n');
    }
    out.push('\n');
}

/// The Markdown text.
pub fn render(doc: &Document) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "# {}\n", doc.title);
    let _ = writeln!(
        out,
        "Source: `{}` · stackup-lint {}\n",
        doc.source,
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(out, "> {CAUTION}\n");
    for s in &doc.sections {
        let _ = writeln!(out, "## {}\n", s.title);
        for b in &s.blocks {
            match b {
                Block::Paragraph(p) => {
                    let _ = writeln!(out, "{p}\n");
                }
                Block::Note(p) => {
                    let _ = writeln!(out, "_{}_\n", p.replace('_', "\\_"));
                }
                Block::Heading(h) => {
                    let _ = writeln!(out, "### {h}\n");
                }
                Block::Table(t) => table(&mut out, t),
                Block::Figure(f) => {
                    let _ = writeln!(out, "![{}]({})\n", f.caption, f.file);
                }
                Block::CrossSection {
                    readable,
                    scaled,
                    to_scale,
                } => {
                    let (shown, other) = if *to_scale {
                        (scaled, readable)
                    } else {
                        (readable, scaled)
                    };
                    let _ = writeln!(out, "![{}]({})\n", shown.caption, shown.file);
                    let _ = writeln!(out, "Also drawn: [{}]({}).\n", other.caption, other.file);
                }
            }
        }
    }
    out
}
