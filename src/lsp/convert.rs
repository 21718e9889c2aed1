//! Between the server's byte offsets and paths and the protocol's
//! positions (UTF-16 code units unless the client takes UTF-8) and `file:`
//! URIs; findings as diagnostics.

use std::path::{Path, PathBuf};
use std::str::FromStr;

use lsp_types::{
    CodeDescription, Diagnostic, DiagnosticRelatedInformation, DiagnosticSeverity, Location,
    NumberOrString, Position, Range, Uri,
};

use crate::finding::{Finding, Severity};
use crate::source::{FileId, SourceDb};

/// How a position's `character` counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Encoding {
    Utf8,
    Utf16,
}

/// The protocol position of byte `offset` of `text`.
pub fn position(text: &str, offset: usize, enc: Encoding) -> Position {
    let offset = crate::source::floor_char_boundary(text, offset.min(text.len()));
    let line_start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line = text[..line_start].bytes().filter(|&b| b == b'\n').count();
    let col = &text[line_start..offset];
    let character = match enc {
        Encoding::Utf8 => col.len(),
        Encoding::Utf16 => col.encode_utf16().count(),
    };
    Position::new(line as u32, character as u32)
}

/// The byte offset of protocol position `p` in `text` (clamped to its
/// line and to the text).
pub fn offset(text: &str, p: Position, enc: Encoding) -> usize {
    let mut start = 0;
    for _ in 0..p.line {
        match text[start..].find('\n') {
            Some(i) => start += i + 1,
            None => return text.len(),
        }
    }
    let line_end = text[start..].find('\n').map_or(text.len(), |i| start + i);
    let line = &text[start..line_end];
    let mut units = 0u32;
    for (i, c) in line.char_indices() {
        if units >= p.character {
            return start + i;
        }
        units += match enc {
            Encoding::Utf8 => c.len_utf8() as u32,
            Encoding::Utf16 => c.len_utf16() as u32,
        };
    }
    line_end
}

pub fn range(text: &str, span: &std::ops::Range<usize>, enc: Encoding) -> Range {
    Range::new(
        position(text, span.start, enc),
        position(text, span.end, enc),
    )
}

/// The path of a `file:` URI (percent-decoded); `None` for other schemes.
pub fn uri_to_path(uri: &Uri) -> Option<PathBuf> {
    let s = uri.as_str();
    let rest = s.strip_prefix("file://")?;
    // `file:///p` (empty host) or `file://localhost/p`.
    let rest = rest.strip_prefix("localhost").unwrap_or(rest);
    if !rest.starts_with('/') {
        return None;
    }
    let bytes = rest.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'%' && i + 2 < bytes.len() {
            let hex = std::str::from_utf8(&bytes[i + 1..i + 3]).ok()?;
            out.push(u8::from_str_radix(hex, 16).ok()?);
            i += 3;
        } else {
            out.push(bytes[i]);
            i += 1;
        }
    }
    Some(PathBuf::from(String::from_utf8(out).ok()?))
}

/// The `file:` URI of a file the run read (made absolute against the
/// working directory, `.` and `..` removed).
pub fn file_uri(path: &Path) -> Option<Uri> {
    let cwd = std::env::current_dir().ok()?;
    path_to_uri(&crate::files::lexical_absolute(path, &cwd))
}

/// The `file:` URI of an absolute path (percent-encoding all but the
/// unreserved characters and `/`).
pub fn path_to_uri(path: &Path) -> Option<Uri> {
    let s = path.to_str()?;
    if !s.starts_with('/') {
        return None;
    }
    let mut out = String::from("file://");
    for b in s.bytes() {
        if b.is_ascii_alphanumeric() || matches!(b, b'/' | b'-' | b'_' | b'.' | b'~') {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    Uri::from_str(&out).ok()
}

fn severity(s: Severity) -> DiagnosticSeverity {
    match s {
        Severity::Error => DiagnosticSeverity::ERROR,
        Severity::Warning => DiagnosticSeverity::WARNING,
        Severity::Note => DiagnosticSeverity::INFORMATION,
    }
}

/// The diagnostics of stackup `file` from the findings of its run
/// (suppressed ones left out). A finding placed in another file (one of
/// its libraries) is shown at the top of this one, with its place as
/// related information where that is a real file.
pub fn diagnostics(
    findings: &[Finding],
    db: &SourceDb,
    file: FileId,
    docs_url: &str,
    enc: Encoding,
) -> Vec<Diagnostic> {
    let text = &db.get(file).text;
    let location = |id: FileId, span: &std::ops::Range<usize>| {
        let f = db.get(id);
        let uri = file_uri(&f.path)?;
        Some(Location::new(uri, range(&f.text, span, enc)))
    };
    findings
        .iter()
        .filter(|f| f.suppressed.is_none())
        .map(|f| {
            let here = f.primary.file == file;
            let span = if here { f.primary.span.clone() } else { 0..0 };
            let mut related: Vec<DiagnosticRelatedInformation> = f
                .labels
                .iter()
                .filter_map(|l| {
                    Some(DiagnosticRelatedInformation {
                        location: location(l.location.file, &l.location.span)?,
                        message: l.message.clone(),
                    })
                })
                .collect();
            if !here {
                if let Some(loc) = location(f.primary.file, &f.primary.span) {
                    related.insert(
                        0,
                        DiagnosticRelatedInformation {
                            location: loc,
                            message: f.primary_label.clone(),
                        },
                    );
                }
            }
            let message = match &f.help {
                Some(h) => format!("{}\nhelp: {h}", f.message),
                None => f.message.clone(),
            };
            let href = Uri::from_str(&format!("{docs_url}{}.md", f.rule)).ok();
            Diagnostic {
                range: range(text, &span, enc),
                severity: Some(severity(f.severity)),
                code: Some(NumberOrString::String(f.rule.to_string())),
                code_description: href.map(|href| CodeDescription { href }),
                source: Some("stackup-lint".into()),
                message,
                related_information: (!related.is_empty()).then_some(related),
                tags: None,
                data: None,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn positions_count_utf16_or_utf8() {
        let text = "a: 1\nµm: 2 # ∆\n";
        let at = text.find('2').unwrap();
        assert_eq!(position(text, at, Encoding::Utf16), Position::new(1, 4));
        assert_eq!(position(text, at, Encoding::Utf8), Position::new(1, 5));
        assert_eq!(offset(text, Position::new(1, 4), Encoding::Utf16), at);
        assert_eq!(offset(text, Position::new(1, 5), Encoding::Utf8), at);
        // Past the line's end: its end.
        assert_eq!(offset(text, Position::new(0, 99), Encoding::Utf16), 4);
        assert_eq!(
            offset(text, Position::new(9, 0), Encoding::Utf16),
            text.len()
        );
    }

    #[test]
    fn file_uris_round_trip() {
        let p = Path::new("/tmp/a b/µ.stackup.yaml");
        let uri = path_to_uri(p).unwrap();
        assert_eq!(uri.as_str(), "file:///tmp/a%20b/%C2%B5.stackup.yaml");
        assert_eq!(uri_to_path(&uri).unwrap(), p);
        let other = Uri::from_str("untitled:Untitled-1").unwrap();
        assert!(uri_to_path(&other).is_none());
    }
}
