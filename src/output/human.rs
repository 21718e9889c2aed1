//! Terminal output through miette: graphical with colour on a terminal,
//! the same layout without colour when not a TTY or when NO_COLOR is set.

use std::fmt;
use std::sync::{Arc, OnceLock};

use miette::{
    Diagnostic, GraphicalReportHandler, GraphicalTheme, LabeledSpan, MietteError,
    MietteSpanContents, NamedSource, SourceCode, SourceSpan, SpanContents,
};

use crate::finding::{Finding, Severity};
use crate::source::{LineIndex, SourceDb};

/// A file's text for miette, with a line index.
///
/// miette's own reader of a text finds a span's lines by scanning from the
/// first byte, so each snippet of a long file costs a pass over everything
/// before it. This reader hands that same reader only the tail of the text
/// that starts a few lines before the span, then moves its answer back to
/// whole-file offsets and line numbers, so the contents are exactly those
/// of a whole-text read (`tests` below compares the two at every offset).
#[derive(Debug, Clone)]
struct IndexedText {
    text: Arc<str>,
    lines: Arc<LineIndex>,
    /// Line breaks as miette counts them (`\n`, `\r\n` and a lone `\r`)
    /// before each line start of `lines`; `None` when the text has no lone
    /// `\r`, so the count is the line's number.
    breaks: Option<Arc<[usize]>>,
}

impl IndexedText {
    fn new(text: &str) -> IndexedText {
        let lines = LineIndex::new(text);
        let bytes = text.as_bytes();
        let lone_cr = |i: usize| bytes[i] == b'\r' && bytes.get(i + 1) != Some(&b'\n');
        let breaks = (0..bytes.len()).any(lone_cr).then(|| {
            let mut crs = 0;
            let mut from = 0;
            lines
                .starts()
                .iter()
                .enumerate()
                .map(|(line, &start)| {
                    crs += (from..start).filter(|&i| lone_cr(i)).count();
                    from = start;
                    line + crs
                })
                .collect()
        });
        IndexedText {
            text: Arc::from(text),
            lines: Arc::new(lines),
            breaks,
        }
    }
}

impl SourceCode for IndexedText {
    fn read_span<'a>(
        &'a self,
        span: &SourceSpan,
        context_lines_before: usize,
        context_lines_after: usize,
    ) -> Result<Box<dyn SpanContents<'a> + 'a>, MietteError> {
        // Start two lines more than the context before the span's line: the
        // scan then sees at least `context_lines_before + 2` line breaks
        // before the span, as many as it keeps, and starts at a line start
        // with nothing of the span seen yet, the state it would be in
        // there after scanning from the first byte.
        let first = self
            .lines
            .line_of(span.offset())
            .saturating_sub(context_lines_before.saturating_add(2));
        let start = self.lines.starts()[first];
        let breaks_before = self.breaks.as_ref().map_or(first, |b| b[first]);
        let tail = &self.text.as_bytes()[start..];
        let local = SourceSpan::new((span.offset() - start).into(), span.len());
        let c = tail.read_span(&local, context_lines_before, context_lines_after)?;
        Ok(Box::new(MietteSpanContents::new(
            c.data(),
            SourceSpan::new((c.span().offset() + start).into(), c.span().len()),
            c.line() + breaks_before,
            c.column(),
            c.line_count() + breaks_before,
        )))
    }
}

struct Rendered<'a> {
    finding: &'a Finding,
    source: NamedSource<IndexedText>,
    labels: Vec<LabeledSpan>,
    help: Option<String>,
    related: Vec<Related>,
}

/// A secondary place far from the primary one, shown as its own snippet.
#[derive(Debug)]
struct Related {
    message: String,
    source: NamedSource<IndexedText>,
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

/// The header line miette writes above a related snippet without a code.
const RELATED_HEADER: &str = "\nAdvice: \n";

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
    /// Workers the findings are rendered on.
    pub pool: crate::pool::Pool,
}

/// Render all findings (suppressed and baselined ones are left out) as
/// terminal text. Findings are rendered on the `--threads` workers and
/// joined in order, so the text does not depend on the thread count.
pub fn render(findings: &[Finding], db: &SourceDb, opts: HumanOptions) -> String {
    // One shared copy of each file's text and line index, however many
    // findings point into it, built when a finding first needs it.
    let texts: Vec<OnceLock<IndexedText>> = db.files.iter().map(|_| OnceLock::new()).collect();
    let text = |file: usize| {
        texts[file].get_or_init(|| {
            IndexedText::new(&crate::output::escape::source_text(&db.get(file).text))
        })
    };
    let theme = if opts.color {
        GraphicalTheme::unicode()
    } else {
        GraphicalTheme::unicode_nocolor()
    };
    let handler = GraphicalReportHandler::new_themed(theme)
        .with_width(opts.width)
        .with_links(false)
        .with_context_lines(1);
    let shown: Vec<&Finding> = findings
        .iter()
        .filter(|f| f.suppressed.is_none() && f.baselined != Some(true))
        .collect();
    let parts = opts.pool.map(&shown, |f| {
        let file = db.get(f.primary.file);
        let primary = text(f.primary.file);
        let mut labels = vec![LabeledSpan::new_primary_with_span(
            Some(f.primary_label.clone()).filter(|l| !l.is_empty()),
            f.primary.span.clone(),
        )];
        let (primary_line, _) = primary.lines.line_col(&file.text, f.primary.span.start);
        let mut related = Vec::new();
        for l in &f.labels {
            let other = db.get(l.location.file);
            let other_text = text(l.location.file);
            let (line, _) = other_text
                .lines
                .line_col(&other.text, l.location.span.start);
            if l.location.file == f.primary.file && line.abs_diff(primary_line) <= NEAR_LINES {
                labels.push(LabeledSpan::new_with_span(
                    Some(l.message.clone()),
                    l.location.span.clone(),
                ));
            } else {
                related.push(Related {
                    message: l.message.clone(),
                    source: NamedSource::new(other.display.clone(), other_text.clone()),
                    label: LabeledSpan::new_primary_with_span(None, l.location.span.clone()),
                });
            }
        }
        let rendered = Rendered {
            finding: f,
            source: NamedSource::new(file.display.clone(), primary.clone()),
            labels,
            help: f.help.clone(),
            related,
        };
        let mut out = String::new();
        if handler.render_report(&mut out, &rendered).is_ok() {
            // miette heads each related snippet with its severity and code;
            // ours have no code, which leaves a line that says only
            // "Advice: ". The snippet's own `☞` line says it all.
            out = out.replace(RELATED_HEADER, "\n");
        } else {
            let (line, col) = primary.lines.line_col(&file.text, f.primary.span.start);
            out.push_str(&format!(
                "{}:{line}:{col}: {}[{}]: {}\n",
                file.display, f.severity, f.rule, f.message
            ));
        }
        out.push('\n');
        out
    });
    parts.concat()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// What a reader answers for `span`, as text to compare.
    fn read(
        source: &dyn SourceCode,
        span: SourceSpan,
        before: usize,
        after: usize,
    ) -> Option<String> {
        let c = source.read_span(&span, before, after).ok()?;
        Some(format!(
            "{:?} {:?} line {} column {} lines {}",
            String::from_utf8_lossy(c.data()),
            c.span(),
            c.line(),
            c.column(),
            c.line_count()
        ))
    }

    /// The windowed reader gives miette exactly what its whole-text reader
    /// gives, for spans of every start and several lengths, with and
    /// without context lines, across LF, CRLF and lone-CR line ends and
    /// multibyte characters. (Spans past the end are left out: miette's
    /// own reader panics on some of them, and findings never carry one.)
    #[test]
    fn windowed_reads_equal_whole_text_reads() {
        let texts = [
            String::new(),
            "one line".to_string(),
            "a\nb\nc\nd\ne\nf\ng\nh\n".to_string(),
            "layers:\r\n  - name: L1\r\n    εr: 4.2 # ≈ µm\r\n\r\n  - name: 🙂\r\n".to_string(),
            "x: 1\ry: 2\rz: Ω\n\nw: 3\r\nv: 4\n".to_string(),
            (0..40)
                .map(|i| format!("line {i}: µ{}\n", "é".repeat(i % 5)))
                .collect(),
        ];
        for text in &texts {
            let idx = IndexedText::new(text);
            for offset in 0..=text.len() {
                for len in [0, 1, 2, 7, 30]
                    .into_iter()
                    .filter(|l| offset + l <= text.len())
                {
                    for (before, after) in [(0, 0), (1, 1), (2, 3)] {
                        let span = SourceSpan::new(offset.into(), len);
                        assert_eq!(
                            read(&idx, span, before, after),
                            // miette's own reader of the whole text.
                            read(&text.as_bytes(), span, before, after),
                            "{text:?} offset {offset} len {len} context {before}/{after}"
                        );
                    }
                }
            }
        }
    }
}
