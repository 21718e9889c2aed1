//! The report as content: a [`Document`] of titled sections holding
//! paragraphs, notes, tables and figures, and the report's files. The
//! renderers (`html`, `markdown`) know only this.

/// Report settings.
#[derive(Debug, Clone, Copy, Default)]
pub struct ReportOptions {
    /// Draw the cross-section with heights to scale (the HTML page has both
    /// drawings and a switch; this picks the one shown first and the one
    /// the Markdown file uses).
    pub to_scale: bool,
    /// Line length for total-loss figures, m.
    pub length: Option<f64>,
}

/// One output file: name (no directory) and contents.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportFile {
    pub name: String,
    pub contents: String,
}

/// A table: header cells and rows of text cells; `tone` marks rows to
/// highlight (a finding's severity, a group over budget).
#[derive(Debug, Clone, Default)]
pub struct Table {
    pub header: Vec<&'static str>,
    pub rows: Vec<Vec<String>>,
    pub tone: Vec<Option<&'static str>>,
}

impl Table {
    pub(super) fn new(header: &[&'static str]) -> Table {
        Table {
            header: header.to_vec(),
            ..Table::default()
        }
    }

    pub(super) fn push(&mut self, row: Vec<String>, tone: Option<&'static str>) {
        self.rows.push(row);
        self.tone.push(tone);
    }
}

/// A drawing: its file name for the Markdown, its caption and its SVG.
#[derive(Debug, Clone)]
pub struct Figure {
    pub file: String,
    pub caption: String,
    pub svg: String,
}

/// Content blocks.
#[derive(Debug, Clone)]
pub enum Block {
    Paragraph(String),
    /// Small print under a table or figure.
    Note(String),
    Table(Table),
    Figure(Figure),
    /// The cross-section in both forms: (exaggerated, to scale), and which
    /// one is shown first.
    CrossSection {
        readable: Figure,
        scaled: Figure,
        to_scale: bool,
    },
    /// A sub-heading inside a section.
    Heading(String),
}

/// A titled section.
#[derive(Debug, Clone)]
pub struct Section {
    pub id: &'static str,
    pub title: &'static str,
    pub blocks: Vec<Block>,
}

/// The whole report.
#[derive(Debug, Clone)]
pub struct Document {
    pub title: String,
    pub source: String,
    pub sections: Vec<Section>,
}

/// The caution printed at the top of every report.
pub const CAUTION: &str = "Engineering aid, not a sign-off: confirm the final stackup with the fabricator's own impedance modelling and test coupons, and follow the applicable IPC standards.";
