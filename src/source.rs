//! Source files and locations (JSON pointer + byte span).

use std::ops::Range;
use std::path::PathBuf;

use crate::input::yaml::Node;

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
    pub tree: Option<Node>,
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
            .tree
            .as_ref()
            .and_then(|t| t.pointer(pointer))
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
        let span = self.files[file]
            .tree
            .as_ref()
            .and_then(|t| t.key_span(pointer))
            .unwrap_or(0..0);
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
    let byte = byte.min(text.len());
    let byte = (0..=byte)
        .rev()
        .find(|&b| text.is_char_boundary(b))
        .unwrap_or(0);
    let before = &text[..byte];
    let line = before.bytes().filter(|&b| b == b'\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let col = text[line_start..byte].chars().count() + 1;
    (line, col)
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
}
