//! The report as Markdown (GitHub-flavoured tables), for a fabrication
//! note or a pull request. Drawings are linked as the SVG files written
//! beside it.

use std::fmt::Write as _;

use super::{Block, Document, Table, CAUTION};

/// Escape text for Markdown: control and invisible characters as visible
/// `\u{..}`, and outside code spans (text between backticks, which
/// Markdown shows literally) `<`, `>` and `&` as HTML entities, so a name
/// never becomes raw HTML. A backtick in a name only ends a code span
/// early; what follows is escaped as ordinary text.
fn text(s: &str) -> String {
    let s = crate::output::escape::controls(s);
    let mut out = String::with_capacity(s.len());
    let mut in_code = false;
    for c in s.chars() {
        match c {
            '`' => {
                in_code = !in_code;
                out.push(c);
            }
            '<' if !in_code => out.push_str("&lt;"),
            '>' if !in_code => out.push_str("&gt;"),
            '&' if !in_code => out.push_str("&amp;"),
            c => out.push(c),
        }
    }
    // An unclosed code span would swallow the rest of the line: close it.
    if in_code {
        out.push('`');
    }
    out
}

/// Escape a table cell: as [`text`], and pipes.
fn cell(s: &str) -> String {
    text(s).replace('\\', "\\\\").replace('|', "\\|")
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
    let _ = writeln!(out, "# {}\n", text(&doc.title));
    let _ = writeln!(
        out,
        "Source: {} · stackup-lint {}\n",
        text(&format!("`{}`", doc.source.replace('`', "'"))),
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(out, "> {CAUTION}\n");
    for s in &doc.sections {
        let _ = writeln!(out, "## {}\n", s.title);
        for b in &s.blocks {
            match b {
                Block::Paragraph(p) => {
                    let _ = writeln!(out, "{}\n", text(p));
                }
                Block::Note(p) => {
                    let _ = writeln!(out, "_{}_\n", text(p).replace('_', "\\_"));
                }
                Block::Heading(h) => {
                    let _ = writeln!(out, "### {}\n", text(h));
                }
                Block::Table(t) => table(&mut out, t),
                Block::Figure(f) => {
                    let _ = writeln!(out, "![{}]({})\n", text(&f.caption), f.file);
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
                    let _ = writeln!(out, "![{}]({})\n", text(&shown.caption), shown.file);
                    let _ = writeln!(
                        out,
                        "Also drawn: [{}]({}).\n",
                        text(&other.caption),
                        other.file
                    );
                }
            }
        }
    }
    out
}
