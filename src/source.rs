//! Source files and locations (JSON pointer + byte span): every file a run
//! read, with its text and an index from JSON pointer to the span of each
//! node, so that findings, rules and outputs can place a pointer without the
//! YAML tree (which stays with the input and model stages).

use std::ops::Range;
use std::path::PathBuf;

/// Index of a file in a [`SourceDb`].
pub type FileId = usize;

/// A file read from disk (or from a test), with its parsed YAML tree.
#[derive(Debug, Clone)]
pub struct SourceFile {
    /// Path as opened.
    pub path: PathBuf,
    /// Path shown to people and written into SARIF: relative to the
    /// working directory where possible, with forward slashes.
    pub display: String,
    pub text: String,
    /// Where each node of the file is (empty until the file is parsed).
    pub spans: Spans,
}

/// The span of every node of a parsed file, by JSON pointer (RFC 6901):
/// the shape of the YAML tree without its values.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Spans {
    root: Option<SpanNode>,
}

/// One node: its span and its children.
#[derive(Debug, Clone, PartialEq)]
pub struct SpanNode {
    pub span: Range<usize>,
    pub children: SpanChildren,
}

/// The children of a node: list items, or mapping entries with the span
/// of their key.
#[derive(Debug, Clone, PartialEq)]
pub enum SpanChildren {
    None,
    Seq(Vec<SpanNode>),
    Map(Vec<(String, Range<usize>, SpanNode)>),
}

/// One JSON-pointer token with `~1` and `~0` turned back into `/` and `~`
/// (RFC 6901, in that order).
pub fn unescape_token(raw: &str) -> std::borrow::Cow<'_, str> {
    if raw.contains('~') {
        std::borrow::Cow::Owned(raw.replace("~1", "/").replace("~0", "~"))
    } else {
        std::borrow::Cow::Borrowed(raw)
    }
}

impl Spans {
    pub fn new(root: SpanNode) -> Spans {
        Spans { root: Some(root) }
    }

    /// The node at `pointer`.
    pub fn node(&self, pointer: &str) -> Option<&SpanNode> {
        let mut node = self.root.as_ref()?;
        if pointer.is_empty() {
            return Some(node);
        }
        for raw in pointer.strip_prefix('/')?.split('/') {
            let token = unescape_token(raw);
            node = match &node.children {
                SpanChildren::Map(entries) => &entries.iter().find(|e| e.0 == token)?.2,
                SpanChildren::Seq(items) => items.get(token.parse::<usize>().ok()?)?,
                SpanChildren::None => return None,
            };
        }
        Some(node)
    }

    /// The JSON pointer of the innermost node at byte `offset`, and whether
    /// the offset is on its key rather than its value (an editor's cursor).
    pub fn pointer_at(&self, offset: usize) -> Option<(String, bool)> {
        let mut node = self.root.as_ref()?;
        let mut pointer = String::new();
        let inside = |r: &Range<usize>| r.start <= offset && offset <= r.end;
        loop {
            let next = match &node.children {
                SpanChildren::Map(entries) => {
                    let mut found = None;
                    for (key, key_span, value) in entries {
                        let token = key.replace('~', "~0").replace('/', "~1");
                        if inside(key_span) {
                            return Some((format!("{pointer}/{token}"), true));
                        }
                        if inside(&value.span) && !value.span.is_empty() {
                            found = Some((token, value));
                            break;
                        }
                    }
                    found
                }
                SpanChildren::Seq(items) => items
                    .iter()
                    .enumerate()
                    .find(|(_, n)| inside(&n.span))
                    .map(|(i, n)| (i.to_string(), n)),
                SpanChildren::None => None,
            };
            match next {
                Some((token, n)) => {
                    pointer = format!("{pointer}/{token}");
                    node = n;
                }
                None => return Some((pointer, false)),
            }
        }
    }

    /// The span of the key that introduces the node at `pointer`, if it is
    /// a mapping value; otherwise the node's own span.
    pub fn key_span(&self, pointer: &str) -> Option<Range<usize>> {
        let Some((parent, last)) = pointer.rsplit_once('/') else {
            return self.node(pointer).map(|n| n.span.clone());
        };
        let token = unescape_token(last);
        match &self.node(parent)?.children {
            SpanChildren::Map(entries) => {
                entries.iter().find(|e| e.0 == token).map(|e| e.1.clone())
            }
            _ => self.node(pointer).map(|n| n.span.clone()),
        }
    }
}

/// All files of one run.
#[derive(Debug, Default, Clone)]
pub struct SourceDb {
    pub files: Vec<SourceFile>,
}

impl SourceDb {
    pub fn add(&mut self, file: SourceFile) -> FileId {
        self.files.push(file);
        self.files.len() - 1
    }

    pub fn get(&self, id: FileId) -> &SourceFile {
        &self.files[id]
    }

    /// The location of the node at `pointer` in file `file` (the whole file
    /// start when the pointer does not resolve).
    pub fn locate(&self, file: FileId, pointer: &str) -> Location {
        let span = self.files[file]
            .spans
            .node(pointer)
            .map_or(0..0, |n| n.span.clone());
        Location {
            file,
            pointer: pointer.to_string(),
            span,
        }
    }

    /// The location of the key introducing `pointer` (e.g. to point at a
    /// mapping entry whose value is missing or large).
    pub fn locate_key(&self, file: FileId, pointer: &str) -> Location {
        let span = self.files[file].spans.key_span(pointer).unwrap_or(0..0);
        Location {
            file,
            pointer: pointer.to_string(),
            span,
        }
    }
}

/// A place in a source file.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Location {
    pub file: FileId,
    /// JSON pointer of the YAML node (empty for the whole document).
    pub pointer: String,
    /// Byte range in the file text.
    pub span: Range<usize>,
}

/// 1-based line and column (in Unicode scalar values) of a byte offset.
///
/// SARIF regions use this convention (`columnKind: unicodeCodePoints`); it is
/// the one place where byte offsets become line/column.
pub fn line_col(text: &str, byte: usize) -> (usize, usize) {
    let byte = floor_char_boundary(text, byte);
    let before = &text[..byte];
    let line = before.bytes().filter(|&b| b == b'\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let col = text[line_start..byte].chars().count() + 1;
    (line, col)
}

/// Where each line of a text starts, for [`line_col`] answers by binary
/// search instead of a scan from the start of the file (a renderer asks
/// for every finding and label, and a file can hold thousands of them).
///
/// Lines end at `\n`, as in [`line_col`]; a `\r` before it belongs to the
/// line it ends.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LineIndex {
    /// Byte offset of the first byte of each line; `starts[0] == 0`.
    starts: Vec<usize>,
}

impl LineIndex {
    pub fn new(text: &str) -> LineIndex {
        let mut starts = vec![0];
        starts.extend(
            text.bytes()
                .enumerate()
                .filter(|&(_, b)| b == b'\n')
                .map(|(i, _)| i + 1),
        );
        LineIndex { starts }
    }

    /// Byte offsets where lines start (the first is 0).
    pub fn starts(&self) -> &[usize] {
        &self.starts
    }

    /// 0-based line holding byte `byte` (the last line for offsets past
    /// the end).
    pub fn line_of(&self, byte: usize) -> usize {
        self.starts.partition_point(|&s| s <= byte) - 1
    }

    /// The same answer as [`line_col`]`(text, byte)`, for the `text` this
    /// index was built from.
    pub fn line_col(&self, text: &str, byte: usize) -> (usize, usize) {
        let byte = floor_char_boundary(text, byte);
        let line = self.line_of(byte);
        let col = text[self.starts[line]..byte].chars().count() + 1;
        (line + 1, col)
    }
}

/// Line indexes of a run's files, each built the first time it is asked
/// for (outputs use it to turn many spans into lines and columns).
#[derive(Debug)]
pub struct DbLines<'a> {
    db: &'a SourceDb,
    index: Vec<std::sync::OnceLock<LineIndex>>,
}

impl<'a> DbLines<'a> {
    pub fn new(db: &'a SourceDb) -> DbLines<'a> {
        DbLines {
            db,
            index: db
                .files
                .iter()
                .map(|_| std::sync::OnceLock::new())
                .collect(),
        }
    }

    /// The files these indexes are of.
    pub fn db(&self) -> &'a SourceDb {
        self.db
    }

    /// The line index of file `file`.
    pub fn of(&self, file: FileId) -> &LineIndex {
        self.index[file].get_or_init(|| LineIndex::new(&self.db.get(file).text))
    }

    /// [`line_col`] of byte `byte` in file `file`.
    pub fn line_col(&self, file: FileId, byte: usize) -> (usize, usize) {
        self.of(file).line_col(&self.db.get(file).text, byte)
    }
}

/// `byte` clamped to the text and moved back to a character boundary.
pub fn floor_char_boundary(text: &str, byte: usize) -> usize {
    let byte = byte.min(text.len());
    (0..=byte)
        .rev()
        .find(|&b| text.is_char_boundary(b))
        .unwrap_or(0)
}

/// Escape one JSON-pointer token (RFC 6901).
pub fn escape_token(token: &str) -> String {
    token.replace('~', "~0").replace('/', "~1")
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn line_col_is_one_based_in_chars() {
        let t = "ab\nµc d\n";
        assert_eq!(line_col(t, 0), (1, 1));
        assert_eq!(line_col(t, 3), (2, 1));
        // 'c' is after the two-byte µ: byte 5, column 2.
        assert_eq!(line_col(t, 5), (2, 2));
        assert_eq!(line_col(t, t.len()), (3, 1));
    }

    /// The index must answer exactly as the scan does, at every byte
    /// (inside multibyte characters too) and past the end.
    #[test]
    fn line_index_agrees_with_the_scan_everywhere() {
        let texts = [
            "",
            "\n",
            "\n\n\n",
            "a",
            "ab\nµc d\n",
            "no newline at the end",
            // Two-, three- and four-byte characters, CRLF endings, a lone CR.
            "name: Ω\r\nεr: 4.2 # ≈\r\n\r\n🙂🙂: x\rstill line 4\nlast",
            "layers:\n  - name: L1 # 1 oz Cu\n    thickness: 35 µm\n\n",
        ];
        for t in texts {
            let idx = LineIndex::new(t);
            for b in 0..=t.len() + 3 {
                assert_eq!(idx.line_col(t, b), line_col(t, b), "{t:?} at byte {b}");
            }
        }
        // Known answers for the CRLF text: 'ε' starts line 2 at byte 10;
        // 'r' after it is column 2 (one character, two bytes).
        let t = texts[6];
        let idx = LineIndex::new(t);
        assert_eq!(idx.line_col(t, 10), (2, 1));
        assert_eq!(idx.line_col(t, 12), (2, 2));
        // Inside the two-byte 'ε' the column is the character's own.
        assert_eq!(idx.line_col(t, 11), (2, 1));
        // The lone CR does not end a line: "still" is on line 4.
        let still = t.find("still").unwrap();
        assert_eq!(idx.line_col(t, still), (4, 7));
        assert_eq!(idx.starts().len(), 5);
    }
}
