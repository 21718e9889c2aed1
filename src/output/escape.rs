//! Escaping of text that came from input files before it reaches any
//! output: a name in a stackup (`"\e[2J"` in a double-quoted YAML string),
//! a file name found by the walk or a byte in a comment must never act on
//! the terminal, the CI log or a page that shows the report.
//!
//! Escaped: the C0 controls (U+0000 to U+001F, line breaks and tabs
//! included), DEL, the C1 controls (U+0080 to U+009F, which some terminals
//! read as escape sequences) and the invisible formatting characters that
//! can make text read differently from what it is (zero-width characters,
//! bidirectional embeddings, overrides and isolates, the byte order mark).

use std::borrow::Cow;

/// True for the characters this module escapes.
pub fn is_unsafe(c: char) -> bool {
    c.is_control()
        || matches!(
            c,
            '\u{200B}'..='\u{200F}' | '\u{202A}'..='\u{202E}' | '\u{2060}'..='\u{2069}' | '\u{FEFF}'
        )
}

/// `s` with each unsafe character written as `\u{..}` (hex, as Rust
/// writes it), so it stays visible and harmless.
pub fn controls(s: &str) -> Cow<'_, str> {
    if !s.chars().any(is_unsafe) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_unsafe(c) {
            out.push_str(&format!("\\u{{{:x}}}", u32::from(c)));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// As [`controls`], but line breaks (`\n`) stay: for whole rendered
/// texts (a table) whose lines are ours and whose names may not be.
pub fn controls_keep_lines(s: &str) -> Cow<'_, str> {
    if !s.chars().any(|c| is_unsafe(c) && c != '\n') {
        return Cow::Borrowed(s);
    }
    let lines: Vec<Cow<'_, str>> = s.split('\n').map(controls).collect();
    Cow::Owned(lines.join("\n"))
}

/// A JSON text with every unsafe character that JSON allows raw inside a
/// string (DEL, C1 controls, invisible formatting) written as a `\uXXXX`
/// escape: the same JSON value, nothing raw for a terminal or a viewer.
/// (The JSON writer already escapes the C0 controls; outside strings a
/// JSON text has only ASCII structure and white space.)
pub fn json_text(s: &str) -> Cow<'_, str> {
    if !s.chars().any(|c| is_unsafe(c) && !c.is_ascii_whitespace()) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 16);
    for c in s.chars() {
        if is_unsafe(c) && !c.is_ascii_whitespace() {
            let mut units = [0u16; 2];
            for u in c.encode_utf16(&mut units) {
                out.push_str(&format!("\\u{u:04x}"));
            }
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// Source text for a snippet: every unsafe character other than the line
/// ends `\n` and `\r\n` becomes `?` repeated over its UTF-8 bytes, so every
/// byte offset (and so every span and line number) stays where it was.
pub fn source_text(s: &str) -> Cow<'_, str> {
    let bytes = s.as_bytes();
    let keep = |i: usize, c: char| c == '\n' || (c == '\r' && bytes.get(i + 1) == Some(&b'\n'));
    if !s.char_indices().any(|(i, c)| is_unsafe(c) && !keep(i, c)) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len());
    for (i, c) in s.char_indices() {
        if is_unsafe(c) && !keep(i, c) {
            out.extend(std::iter::repeat_n('?', c.len_utf8()));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn controls_become_visible_escapes() {
        assert_eq!(controls("plain µm Ω"), "plain µm Ω");
        assert!(matches!(controls("plain"), Cow::Borrowed(_)));
        assert_eq!(controls("a\u{1b}[2Jb"), "a\\u{1b}[2Jb");
        assert_eq!(controls("x\ny\rz\t"), "x\\u{a}y\\u{d}z\\u{9}");
        assert_eq!(controls("\u{7f}\u{9b}"), "\\u{7f}\\u{9b}");
        // Trojan-source style reordering and invisible characters.
        assert_eq!(controls("a\u{202e}b\u{200b}c"), "a\\u{202e}b\\u{200b}c");
        assert_eq!(controls("\u{feff}k"), "\\u{feff}k");
    }

    #[test]
    fn json_keeps_its_value() {
        let v = serde_json::json!({"name": "a\u{7f}b\u{9b}c\u{202e}d\u{1b}e"});
        let text = serde_json::to_string_pretty(&v).unwrap();
        let safe = json_text(&text);
        assert!(!safe
            .chars()
            .any(|c| is_unsafe(c) && !c.is_ascii_whitespace()));
        let back: serde_json::Value = serde_json::from_str(&safe).unwrap();
        assert_eq!(back, v);
        assert_eq!(controls_keep_lines("a\u{1b}\nb"), "a\\u{1b}\nb");
    }

    #[test]
    fn source_text_keeps_every_offset() {
        let t = "a: \"\u{1b}[31m\"\r\nb: \u{9b}x\u{202e}\rq\n";
        let s = source_text(t);
        assert_eq!(s.len(), t.len());
        assert!(!s.chars().any(|c| is_unsafe(c) && c != '\n' && c != '\r'));
        // CRLF line ends stay, the lone CR goes.
        assert_eq!(s, "a: \"?[31m\"\r\nb: ??x???".to_string() + "?q\n");
        for (i, _) in t.char_indices() {
            assert!(s.is_char_boundary(i));
        }
    }
}
