//! Terminal output through miette: graphical with colour on a terminal,
//! the same layout without colour when not a TTY or when NO_COLOR is set.

use std::fmt;
use std::sync::Arc;

use miette::{
    Diagnostic, GraphicalReportHandler, GraphicalTheme, LabeledSpan, NamedSource, SourceCode,
};

use crate::finding::{Finding, Severity};
use crate::source::{line_col, SourceDb};

struct Rendered<'a> {
    finding: &'a Finding,
    source: NamedSource<Arc<str>>,
    labels: Vec<LabeledSpan>,
    help: Option<String>,
    related: Vec<Related>,
}

/// A secondary place far from the primary one, shown as its own snippet.
#[derive(Debug)]
struct Related {
    message: String,
    source: NamedSource<Arc<str>>,
    label: LabeledSpan,
}

impl fmt::Display for Related {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Related {}

impl Diagnostic for Related {
    fn severity(&self) -> Option<miette::Severity> {
        Some(miette::Severity::Advice)
    }

    fn source_code(&self) -> Option<&dyn SourceCode> {
        Some(&self.source)
    }

    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        Some(Box::new(std::iter::once(self.label.clone())))
    }
}

/// Secondary labels further than this many lines from the primary span get
/// their own snippet instead of stretching one snippet over the gap.
const NEAR_LINES: usize = 4;

impl fmt::Debug for Rendered<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.finding.message)
    }
}

impl fmt::Display for Rendered<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.finding.message)
    }
}

impl std::error::Error for Rendered<'_> {}

impl Diagnostic for Rendered<'_> {
    fn code<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        Some(Box::new(self.finding.rule))
    }

    fn severity(&self) -> Option<miette::Severity> {
        Some(match self.finding.severity {
            Severity::Error => miette::Severity::Error,
            Severity::Warning => miette::Severity::Warning,
            Severity::Note => miette::Severity::Advice,
        })
    }

    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.help
            .as_ref()
            .map(|h| Box::new(h) as Box<dyn fmt::Display>)
    }

    fn source_code(&self) -> Option<&dyn SourceCode> {
        Some(&self.source)
    }

    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        Some(Box::new(self.labels.iter().cloned()))
    }

    fn related<'a>(&'a self) -> Option<Box<dyn Iterator<Item = &'a dyn Diagnostic> + 'a>> {
        if self.related.is_empty() {
            return None;
        }
        Some(Box::new(self.related.iter().map(|r| r as &dyn Diagnostic)))
    }
}

/// Render options.
#[derive(Debug, Clone, Copy)]
pub struct HumanOptions {
    pub color: bool,
    /// Wrap width in columns.
    pub width: usize,
}

/// Render all findings (suppressed and baselined ones are left out) as
/// terminal text.
pub fn render(findings: &[Finding], db: &SourceDb, opts: HumanOptions) -> String {
    // One shared copy of each file's text, however many findings point into it.
    let texts: Vec<Arc<str>> = db
        .files
        .iter()
        .map(|f| Arc::from(f.text.as_str()))
        .collect();
    let theme = if opts.color {
        GraphicalTheme::unicode()
    } else {
        GraphicalTheme::unicode_nocolor()
    };
    let handler = GraphicalReportHandler::new_themed(theme)
        .with_width(opts.width)
        .with_links(false)
        .with_context_lines(1);
    let mut out = String::new();
    for f in findings
        .iter()
        .filter(|f| f.suppressed.is_none() && f.baselined != Some(true))
    {
        let file = db.get(f.primary.file);
        let mut labels = vec![LabeledSpan::new_primary_with_span(
            Some(f.primary_label.clone()).filter(|l| !l.is_empty()),
            f.primary.span.clone(),
        )];
        let (primary_line, _) = line_col(&file.text, f.primary.span.start);
        let mut related = Vec::new();
        for l in &f.labels {
            let other = db.get(l.location.file);
            let (line, _) = line_col(&other.text, l.location.span.start);
            if l.location.file == f.primary.file && line.abs_diff(primary_line) <= NEAR_LINES {
                labels.push(LabeledSpan::new_with_span(
                    Some(l.message.clone()),
                    l.location.span.clone(),
                ));
            } else {
                related.push(Related {
                    message: l.message.clone(),
                    source: NamedSource::new(other.display.clone(), texts[l.location.file].clone()),
                    label: LabeledSpan::new_primary_with_span(None, l.location.span.clone()),
                });
            }
        }
        let rendered = Rendered {
            finding: f,
            source: NamedSource::new(file.display.clone(), texts[f.primary.file].clone()),
            labels,
            help: f.help.clone(),
            related,
        };
        if handler.render_report(&mut out, &rendered).is_err() {
            let (line, col) = line_col(&file.text, f.primary.span.start);
            out.push_str(&format!(
                "{}:{line}:{col}: {}[{}]: {}\n",
                file.display, f.severity, f.rule, f.message
            ));
        }
        out.push('\n');
    }
    out
}
