//! The report as one self-contained HTML page: inline CSS and inline SVG,
//! no script, no external resource. The cross-section switch between
//! exaggerated and to-scale heights is a CSS-only checkbox. Printed, the
//! page drops the navigation and the switch (the drawing shown stays),
//! scrolls nothing and starts each section on a new page.

use std::fmt::Write as _;

use super::{esc, Block, Document, Table, CAUTION};

const STYLE: &str = r#"
:root { --ink:#1d2428; --muted:#5a646b; --rule:#d5dadd; --band:#23424d; --paper:#fbfbf8;
        --err:#fbe3df; --warn:#fcf1d6; --note:#e6eff7; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, Helvetica, Arial, sans-serif; }
header { background:var(--band); color:#f4f7f7; padding:18px 28px 14px; }
header h1 { margin:0 0 4px; font-size:21px; font-weight:600; }
header p { margin:0; color:#c9d6d9; font-size:13px; }
nav { padding:8px 28px; border-bottom:1px solid var(--rule); background:#fff; font-size:13px; }
nav a { color:var(--band); margin-right:16px; text-decoration:none; }
main { padding:6px 28px 40px; max-width:1400px; }
section { margin-top:22px; }
h2 { font-size:17px; border-bottom:2px solid var(--band); padding-bottom:3px; margin:0 0 10px; }
h3 { font-size:14.5px; margin:18px 0 6px; }
.caution { margin:14px 0 0; padding:8px 12px; border-left:4px solid #b5832b; background:#fff7e6; }
table { border-collapse:collapse; margin:6px 0 4px; background:#fff; font-size:12.5px; }
th, td { border:1px solid var(--rule); padding:4px 7px; text-align:left; vertical-align:top; }
th { background:#eef1f2; font-weight:600; white-space:nowrap; }
tr.error td { background:var(--err); } tr.warning td { background:var(--warn); } tr.note td { background:var(--note); }
td.num { text-align:right; white-space:nowrap; font-variant-numeric: tabular-nums; }
p.note { color:var(--muted); font-size:12px; margin:4px 0 8px; max-width:1100px; }
figure { margin:8px 0 16px; overflow-x:auto; }
figure.plot { display:inline-block; vertical-align:top; margin-right:14px; max-width:780px; }
figcaption { color:var(--muted); font-size:12px; margin-top:2px; }
.switch { font-size:13px; margin:0 0 6px; display:inline-block; }
#to-scale:checked ~ .readable { display:none; }
#to-scale:not(:checked) ~ .scaled { display:none; }
footer { color:var(--muted); font-size:12px; padding:0 28px 24px; }
@media print {
  /* Paper: no navigation or switch to press, nothing to scroll, each
     section from a new page, the row tones kept. */
  * { -webkit-print-color-adjust:exact; print-color-adjust:exact; }
  body { background:#fff; font-size:11px; }
  header { background:none; color:var(--ink); padding:0 0 6px; border-bottom:2px solid var(--band); }
  header p { color:var(--muted); }
  nav, .switch, #to-scale { display:none; }
  main { padding:0; max-width:none; }
  section { break-before:page; }
  section:first-of-type { break-before:auto; }
  h2, h3 { break-after:avoid; }
  tr, figure { break-inside:avoid; }
  figure, figure.plot { overflow:visible; max-width:100%; }
  svg { max-width:100%; height:auto; }
  table { width:100%; font-size:9px; }
  th, td { padding:2px 3px; white-space:normal; }
  td.num { white-space:nowrap; }
  footer { padding:8px 0 0; }
}
"#;

fn is_number(cell: &str) -> bool {
    let c = cell.trim();
    !c.is_empty()
        && c.chars()
            .all(|ch| ch.is_ascii_digit() || " .±-–/()".contains(ch) || ch == '—')
        && c.chars().any(|ch| ch.is_ascii_digit())
}

fn table(out: &mut String, t: &Table) {
    out.push_str("<table>\n<thead><tr>");
    for h in &t.header {
        let _ = write!(out, "<th>{}</th>", esc(h));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for (row, tone) in t.rows.iter().zip(&t.tone) {
        match tone {
            Some(c) => {
                let _ = write!(out, "<tr class=\"{c}\">");
            }
            None => out.push_str("<tr>"),
        }
        for cell in row {
            if is_number(cell) {
                let _ = write!(out, "<td class=\"num\">{}</td>", esc(cell));
            } else {
                let _ = write!(out, "<td>{}</td>", esc(cell));
            }
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody>\n</table>\n");
}

/// The page.
pub fn render(doc: &Document) -> String {
    let mut out = String::new();
    let _ = write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<meta name=\"generator\" content=\"stackup-lint {}\">\n<title>{}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n",
        env!("CARGO_PKG_VERSION"),
        esc(&doc.title)
    );
    let _ = write!(
        out,
        "<header><h1>{}</h1><p>{} · stackup-lint {}</p></header>\n<nav>",
        esc(&doc.title),
        esc(&doc.source),
        env!("CARGO_PKG_VERSION")
    );
    for s in &doc.sections {
        let _ = write!(out, "<a href=\"#{}\">{}</a>", s.id, esc(s.title));
    }
    out.push_str("</nav>\n<main>\n");
    let _ = writeln!(out, "<p class=\"caution\">{}</p>", esc(CAUTION));
    for s in &doc.sections {
        let _ = writeln!(out, "<section id=\"{}\">\n<h2>{}</h2>", s.id, esc(s.title));
        for b in &s.blocks {
            match b {
                Block::Paragraph(p) => {
                    let _ = writeln!(out, "<p>{}</p>", esc(p));
                }
                Block::Note(p) => {
                    let _ = writeln!(out, "<p class=\"note\">{}</p>", esc(p));
                }
                Block::Heading(h) => {
                    let _ = writeln!(out, "<h3>{}</h3>", esc(h));
                }
                Block::Table(t) => table(&mut out, t),
                Block::Figure(f) => {
                    let _ = writeln!(
                        out,
                        "<figure class=\"plot\">\n{}<figcaption>{}</figcaption>\n</figure>",
                        f.svg,
                        esc(&f.caption)
                    );
                }
                Block::CrossSection {
                    readable,
                    scaled,
                    to_scale,
                } => {
                    let _ = writeln!(
                        out,
                        "<div class=\"xs\">\n<input type=\"checkbox\" id=\"to-scale\"{}>\n<label class=\"switch\" for=\"to-scale\">Heights to scale</label>",
                        if *to_scale { " checked" } else { "" }
                    );
                    for (class, f) in [("readable", readable), ("scaled", scaled)] {
                        let _ = writeln!(
                            out,
                            "<figure class=\"{class}\">\n{}<figcaption>{}</figcaption>\n</figure>",
                            f.svg,
                            esc(&f.caption)
                        );
                    }
                    out.push_str("</div>\n");
                }
            }
        }
        out.push_str("</section>\n");
    }
    out.push_str("</main>\n");
    let _ = writeln!(
        out,
        "<footer>Generated by stackup-lint {} from {}. Numbers are computed from the YAML as written; see the notes under each table for the models used.</footer>\n</body>\n</html>",
        env!("CARGO_PKG_VERSION"),
        esc(&doc.source)
    );
    out
}
