//! A positioned YAML tree built from `saphyr-parser` events.
//!
//! Every node keeps the byte span of its text so that any JSON pointer into
//! the document can be mapped back to the exact place in the file. Aliases are
//! expanded under a node budget (alias bombs are rejected) and nesting depth
//! is bounded; both limits are configurable through [`YamlLimits`].

use std::borrow::Cow;
use std::collections::HashMap;
use std::ops::Range;

use saphyr_parser::{Event, Parser, ScalarStyle, Span};

use crate::source::{SpanChildren, SpanNode};

/// Input budgets enforced while reading YAML.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct YamlLimits {
    /// Deepest allowed nesting of mappings and sequences.
    pub max_depth: usize,
    /// Most nodes the document may expand to, aliases included.
    pub max_nodes: usize,
    /// Most bytes of scalar text (keys and values) the document may
    /// expand to, aliases included: one long string aliased a thousand
    /// times is refused before it is copied.
    pub max_bytes: usize,
}

/// Default of [`YamlLimits::max_bytes`]: twice the default file-size limit.
pub const DEFAULT_MAX_YAML_BYTES: usize = 8 * 1024 * 1024;

impl Default for YamlLimits {
    fn default() -> Self {
        YamlLimits {
            max_depth: 64,
            max_nodes: 200_000,
            max_bytes: DEFAULT_MAX_YAML_BYTES,
        }
    }
}

/// A YAML value with the byte span of its source text.
#[derive(Debug, Clone, PartialEq)]
pub struct Node {
    pub value: Value,
    /// Byte range of the node in the file text.
    pub span: Range<usize>,
}

/// One entry of a mapping: the key text, the key's span and the value.
#[derive(Debug, Clone, PartialEq)]
pub struct Entry {
    pub key: String,
    pub key_span: Range<usize>,
    pub value: Node,
}

/// The value of a YAML node after YAML 1.2 core-schema scalar resolution.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    Null,
    Bool(bool),
    Number(f64),
    String(String),
    Seq(Vec<Node>),
    Map(Vec<Entry>),
}

/// Why a YAML text could not be read.
#[derive(Debug, Clone, PartialEq)]
pub struct YamlError {
    pub message: String,
    pub span: Range<usize>,
}

/// One JSON-pointer token with `~1` and `~0` turned back into `/` and `~`
/// (RFC 6901, in that order); borrowed when it has no `~`, as almost every
/// token has (the model looks up thousands of pointers per file).
fn unescape_token(raw: &str) -> Cow<'_, str> {
    if raw.contains('~') {
        Cow::Owned(raw.replace("~1", "/").replace("~0", "~"))
    } else {
        Cow::Borrowed(raw)
    }
}

impl Node {
    /// Look up a JSON pointer (RFC 6901), e.g. `/layers/3/thickness`.
    pub fn pointer(&self, pointer: &str) -> Option<&Node> {
        if pointer.is_empty() {
            return Some(self);
        }
        let mut node = self;
        for raw in pointer.strip_prefix('/')?.split('/') {
            let token = unescape_token(raw);
            node = match &node.value {
                Value::Map(entries) => &entries.iter().find(|e| e.key == token)?.value,
                Value::Seq(items) => items.get(token.parse::<usize>().ok()?)?,
                _ => return None,
            };
        }
        Some(node)
    }

    /// The span of the key that introduces the node at `pointer`, if the
    /// node is a mapping value; otherwise the node's own span.
    pub fn key_span(&self, pointer: &str) -> Option<Range<usize>> {
        let (parent, last) = match pointer.rfind('/') {
            Some(i) => (&pointer[..i], &pointer[i + 1..]),
            None => return self.pointer(pointer).map(|n| n.span.clone()),
        };
        let token = unescape_token(last);
        match &self.pointer(parent)?.value {
            Value::Map(entries) => entries
                .iter()
                .find(|e| e.key == token)
                .map(|e| e.key_span.clone()),
            _ => self.pointer(pointer).map(|n| n.span.clone()),
        }
    }

    /// The spans of this node and all below it, by pointer (the tree's
    /// shape without its values), for the run's source database.
    pub fn spans(&self) -> SpanNode {
        let children = match &self.value {
            Value::Seq(items) => SpanChildren::Seq(items.iter().map(Node::spans).collect()),
            Value::Map(entries) => SpanChildren::Map(
                entries
                    .iter()
                    .map(|e| (e.key.clone(), e.key_span.clone(), e.value.spans()))
                    .collect(),
            ),
            _ => SpanChildren::None,
        };
        SpanNode {
            span: self.span.clone(),
            children,
        }
    }

    /// Convert to a `serde_json::Value` for schema validation.
    pub fn to_json(&self) -> serde_json::Value {
        use serde_json::Value as J;
        match &self.value {
            Value::Null => J::Null,
            Value::Bool(b) => J::Bool(*b),
            Value::Number(n) => {
                if n.fract() == 0.0 && n.abs() < 9.0e15 {
                    J::from(*n as i64)
                } else {
                    serde_json::Number::from_f64(*n).map_or(J::Null, J::Number)
                }
            }
            Value::String(s) => J::String(s.clone()),
            Value::Seq(items) => J::Array(items.iter().map(Node::to_json).collect()),
            Value::Map(entries) => J::Object(
                entries
                    .iter()
                    .map(|e| (e.key.clone(), e.value.to_json()))
                    .collect(),
            ),
        }
    }

    pub fn as_map(&self) -> Option<&[Entry]> {
        match &self.value {
            Value::Map(e) => Some(e),
            _ => None,
        }
    }

    pub fn as_seq(&self) -> Option<&[Node]> {
        match &self.value {
            Value::Seq(s) => Some(s),
            _ => None,
        }
    }

    pub fn as_str(&self) -> Option<&str> {
        match &self.value {
            Value::String(s) => Some(s),
            _ => None,
        }
    }

    /// Value of key `key` in a mapping.
    pub fn get(&self, key: &str) -> Option<&Node> {
        self.as_map()?
            .iter()
            .find(|e| e.key == key)
            .map(|e| &e.value)
    }
}

/// Maps saphyr's character indices to byte offsets.
struct Offsets<'a> {
    text: &'a str,
    ascii: bool,
    /// Byte offset of each character (only for non-ASCII text).
    table: Vec<usize>,
}

impl<'a> Offsets<'a> {
    fn new(text: &'a str) -> Self {
        let ascii = text.is_ascii();
        let table = if ascii {
            Vec::new()
        } else {
            text.char_indices().map(|(b, _)| b).collect()
        };
        Offsets { text, ascii, table }
    }

    fn byte(&self, char_index: usize) -> usize {
        if self.ascii {
            char_index.min(self.text.len())
        } else {
            self.table
                .get(char_index)
                .copied()
                .unwrap_or(self.text.len())
        }
    }

    fn range(&self, span: Span) -> Range<usize> {
        let start = self.byte(span.start.index());
        let end = self.byte(span.end.index()).max(start);
        start..end
    }
}

/// Parse one YAML document into a positioned tree.
///
/// An empty document gives a `Null` node. A stream of several documents is
/// rejected: one stackup per file.
pub fn parse(text: &str, limits: YamlLimits) -> Result<Node, YamlError> {
    let offsets = Offsets::new(text);
    let mut builder = Builder {
        offsets: &offsets,
        limits,
        anchors: HashMap::new(),
        nodes: 0,
        bytes: 0,
    };
    let mut parser = Parser::new_from_str(text);
    let mut root: Option<Node> = None;
    loop {
        let (event, span) = next(&mut parser, &offsets)?;
        match event {
            Event::StreamStart | Event::DocumentEnd | Event::Nothing => {}
            Event::StreamEnd => break,
            Event::DocumentStart(_) => {
                if root.is_some() {
                    return Err(YamlError {
                        message:
                            "a stackup file holds one YAML document; found a second `---` document"
                                .into(),
                        span: offsets.range(span),
                    });
                }
                let (event, span) = next(&mut parser, &offsets)?;
                root = Some(builder.node(&mut parser, event, span, 0)?);
            }
            other => {
                return Err(YamlError {
                    message: format!("unexpected YAML event {other:?}"),
                    span: offsets.range(span),
                })
            }
        }
    }
    Ok(root.unwrap_or(Node {
        value: Value::Null,
        span: 0..0,
    }))
}

fn next<'i>(
    parser: &mut Parser<'i, saphyr_parser::StrInput<'i>>,
    offsets: &Offsets<'_>,
) -> Result<(Event<'i>, Span), YamlError> {
    match parser.next_event() {
        Some(Ok(ev)) => Ok(ev),
        Some(Err(e)) => {
            let at = offsets.byte(e.marker().index());
            let info = e.info();
            // The scanner reports a tab where the scalar before it ended;
            // point at the tab itself.
            if info.contains("tab") {
                if let Some(tab) = offsets.text[at..].find('\t').map(|i| at + i) {
                    return Err(YamlError {
                        message: "the YAML is malformed: a tab character is used for indentation; \
                                  YAML indents with spaces only"
                            .into(),
                        span: tab..tab + 1,
                    });
                }
            }
            // The scanner's own guard against deep flow nesting (`[[[…`)
            // fires before our depth budget can.
            if info.contains("recursion limit") {
                return Err(YamlError {
                    message: "the YAML nests too deeply: flow collections (`[` / `{`) are nested beyond the parser's limit; a stackup needs only a few levels".into(),
                    span: at..at,
                });
            }
            let hint = if info.contains("did not find expected key") {
                " (check the indentation of this line against the lines above)"
            } else {
                ""
            };
            Err(YamlError {
                message: format!("the YAML is malformed: {info}{hint}"),
                span: at..at,
            })
        }
        None => {
            let end = offsets.text.len();
            Err(YamlError {
                message: "the YAML ends unexpectedly".into(),
                span: end..end,
            })
        }
    }
}

struct Builder<'o, 'a> {
    offsets: &'o Offsets<'a>,
    limits: YamlLimits,
    /// Anchored nodes with the nodes and scalar bytes an alias to them
    /// materialises.
    anchors: HashMap<usize, (Node, usize, usize)>,
    nodes: usize,
    bytes: usize,
}

/// Mappings with more keys than this find duplicate keys through a hash
/// map instead of a scan.
const SMALL_MAP: usize = 16;

impl Builder<'_, '_> {
    fn count(&mut self, n: usize, span: &Range<usize>) -> Result<(), YamlError> {
        self.nodes = self.nodes.saturating_add(n);
        if self.nodes > self.limits.max_nodes {
            return Err(YamlError {
                message: format!(
                    "the YAML expands to more than {} nodes (alias expansion bomb or oversized file); \
                     raise the limit with --max-yaml-nodes if this file is genuine",
                    self.limits.max_nodes
                ),
                span: span.clone(),
            });
        }
        Ok(())
    }

    /// Count `n` bytes of scalar text against the byte budget.
    fn count_bytes(&mut self, n: usize, span: &Range<usize>) -> Result<(), YamlError> {
        self.bytes = self.bytes.saturating_add(n);
        if self.bytes > self.limits.max_bytes {
            return Err(YamlError {
                message: format!(
                    "the YAML expands to more than {} bytes of text (alias expansion bomb or oversized file); \
                     raise the limit with --max-yaml-bytes if this file is genuine",
                    self.limits.max_bytes
                ),
                span: span.clone(),
            });
        }
        Ok(())
    }

    /// Remember an anchored node with what an alias to it costs.
    fn anchor(&mut self, anchor: usize, node: &Node) {
        if anchor > 0 {
            let cost = (count_nodes(node), count_bytes(node));
            self.anchors.insert(anchor, (node.clone(), cost.0, cost.1));
        }
    }

    fn node<'i>(
        &mut self,
        parser: &mut Parser<'i, saphyr_parser::StrInput<'i>>,
        event: Event<'i>,
        span: Span,
        depth: usize,
    ) -> Result<Node, YamlError> {
        let range = self.offsets.range(span);
        if depth > self.limits.max_depth {
            return Err(YamlError {
                message: format!(
                    "the YAML nests deeper than {} levels; a stackup never needs this \
                     (raise the limit with --max-yaml-depth if this file is genuine)",
                    self.limits.max_depth
                ),
                span: range,
            });
        }
        match event {
            Event::Alias(id) => {
                // Count what the alias materialises before copying it.
                let (nodes, bytes) = match self.anchors.get(&id) {
                    Some((_, n, b)) => (*n, *b),
                    None => {
                        return Err(YamlError {
                            message: "this alias refers to an anchor that is not defined before it"
                                .into(),
                            span: range.clone(),
                        })
                    }
                };
                self.count(nodes, &range)?;
                self.count_bytes(bytes, &range)?;
                let value = self.anchors[&id].0.value.clone();
                // The alias takes the anchored value but reports at the alias.
                Ok(Node { value, span: range })
            }
            Event::Scalar(text, style, anchor, tag) => {
                self.count(1, &range)?;
                self.count_bytes(text.len(), &range)?;
                let value = resolve_scalar(&text, style, tag.is_some());
                // Quoted scalars: the span saphyr gives covers the content; widen to quotes.
                let range = self.widen_quotes(range, style);
                let node = Node { value, span: range };
                self.anchor(anchor, &node);
                Ok(node)
            }
            Event::SequenceStart(anchor, _) => {
                self.count(1, &range)?;
                let mut items = Vec::new();
                let mut end = range.end;
                loop {
                    let (ev, sp) = self.next_in(parser, &range, ']')?;
                    if let Event::SequenceEnd = ev {
                        if items.is_empty() {
                            end = end.max(self.offsets.range(sp).end);
                        }
                        break;
                    }
                    let item = self.node(parser, ev, sp, depth + 1)?;
                    end = end.max(item.span.end);
                    items.push(item);
                }
                let end = self.close_bracket(end, b']');
                let node = Node {
                    value: Value::Seq(items),
                    span: range.start..end,
                };
                self.anchor(anchor, &node);
                Ok(node)
            }
            Event::MappingStart(anchor, _) => {
                self.count(1, &range)?;
                let mut entries: Vec<Entry> = Vec::new();
                // Key -> index in `entries`, built once the mapping passes
                // `SMALL_MAP` keys: a linear search per key made a 100 000-key
                // mapping take minutes, but for the few keys of a real
                // mapping a scan is cheaper than hashing and copying keys.
                let mut seen: Option<HashMap<String, usize>> = None;
                let mut end = range.end;
                loop {
                    let (ev, sp) = self.next_in(parser, &range, '}')?;
                    if let Event::MappingEnd = ev {
                        if entries.is_empty() {
                            end = end.max(self.offsets.range(sp).end);
                        }
                        break;
                    }
                    let key_node = self.node(parser, ev, sp, depth + 1)?;
                    let key = match &key_node.value {
                        Value::String(s) => s.clone(),
                        Value::Number(n) => format_number(*n),
                        Value::Bool(b) => b.to_string(),
                        Value::Null => "null".to_string(),
                        _ => {
                            return Err(YamlError {
                                message: "mapping keys must be plain words, not lists or mappings"
                                    .into(),
                                span: key_node.span,
                            })
                        }
                    };
                    let (ev, sp) = self.next_in(parser, &range, '}')?;
                    let value = self.node(parser, ev, sp, depth + 1)?;
                    let earlier = match &seen {
                        Some(index) => index.get(&key).copied(),
                        None => entries.iter().position(|e| e.key == key),
                    };
                    if let Some(first) = earlier {
                        let (line, _) = crate::source::line_col(
                            self.offsets.text,
                            entries[first].key_span.start,
                        );
                        return Err(YamlError {
                            message: format!(
                                "key `{key}` appears twice in the same mapping (first at line {line}); \
                                 YAML keeps only one, so the other would be silently lost"
                            ),
                            span: key_node.span,
                        });
                    }
                    match &mut seen {
                        Some(index) => {
                            index.insert(key.clone(), entries.len());
                        }
                        None if entries.len() >= SMALL_MAP => {
                            let mut index: HashMap<String, usize> = entries
                                .iter()
                                .enumerate()
                                .map(|(i, e)| (e.key.clone(), i))
                                .collect();
                            index.insert(key.clone(), entries.len());
                            seen = Some(index);
                        }
                        None => {}
                    }
                    end = end.max(value.span.end);
                    entries.push(Entry {
                        key,
                        key_span: key_node.span,
                        value,
                    });
                }
                let end = self.close_bracket(end, b'}');
                let node = Node {
                    value: Value::Map(entries),
                    span: range.start..end,
                };
                self.anchor(anchor, &node);
                Ok(node)
            }
            other => Err(YamlError {
                message: format!("unexpected YAML event {other:?}"),
                span: range,
            }),
        }
    }

    /// The next event inside the collection that starts at `open`. When the
    /// parser gives up on an unclosed flow collection (`[` or `{`), it
    /// reports where it stopped (often the end of the file); the error is
    /// moved to the opening bracket, where the fix belongs.
    fn next_in<'i>(
        &self,
        parser: &mut Parser<'i, saphyr_parser::StrInput<'i>>,
        open: &Range<usize>,
        close: char,
    ) -> Result<(Event<'i>, Span), YamlError> {
        next(parser, self.offsets).map_err(|e| {
            let text = self.offsets.text;
            let opener = if close == ']' { '[' } else { '{' };
            let flow_error =
                e.message.contains("flow sequence") || e.message.contains("flow mapping");
            let at_opener = text[open.start..].starts_with(opener);
            if flow_error && at_opener && e.span.start >= open.start {
                let (line, column) = crate::source::line_col(text, e.span.start);
                YamlError {
                    message: format!(
                        "the YAML is malformed: this `{opener}` is never closed with `{close}` \
                         (the parser stopped at line {line}, column {column})"
                    ),
                    span: open.start..open.start + 1,
                }
            } else {
                e
            }
        })
    }

    /// For a flow collection (`[..]`, `{..}`), extend the span over the
    /// closing bracket that follows the last item (spaces allowed).
    fn close_bracket(&self, end: usize, bracket: u8) -> usize {
        let bytes = self.offsets.text.as_bytes();
        let mut i = end;
        while i < bytes.len() && matches!(bytes[i], b' ' | b'\t') {
            i += 1;
        }
        if bytes.get(i) == Some(&bracket) {
            i + 1
        } else {
            end
        }
    }

    fn widen_quotes(&self, range: Range<usize>, style: ScalarStyle) -> Range<usize> {
        if !matches!(style, ScalarStyle::SingleQuoted | ScalarStyle::DoubleQuoted) {
            return range;
        }
        let bytes = self.offsets.text.as_bytes();
        let q = if matches!(style, ScalarStyle::SingleQuoted) {
            b'\''
        } else {
            b'"'
        };
        let mut r = range;
        if r.start > 0 && bytes.get(r.start - 1) == Some(&q) && bytes.get(r.start) != Some(&q) {
            r.start -= 1;
        }
        if bytes.get(r.end) == Some(&q) {
            r.end += 1;
        }
        r
    }
}

fn count_nodes(node: &Node) -> usize {
    match &node.value {
        Value::Seq(items) => 1 + items.iter().map(count_nodes).sum::<usize>(),
        Value::Map(entries) => {
            1 + entries
                .iter()
                .map(|e| 1 + count_nodes(&e.value))
                .sum::<usize>()
        }
        _ => 1,
    }
}

/// Bytes of scalar text (keys and values) in `node`.
fn count_bytes(node: &Node) -> usize {
    match &node.value {
        Value::String(s) => s.len(),
        Value::Seq(items) => items.iter().map(count_bytes).sum(),
        Value::Map(entries) => entries
            .iter()
            .map(|e| e.key.len() + count_bytes(&e.value))
            .sum(),
        _ => 8,
    }
}

fn format_number(n: f64) -> String {
    if n.fract() == 0.0 && n.abs() < 9.0e15 {
        format!("{}", n as i64)
    } else {
        format!("{n}")
    }
}

/// YAML 1.2 core schema resolution of a plain scalar.
fn resolve_scalar(text: &str, style: ScalarStyle, tagged: bool) -> Value {
    if !matches!(style, ScalarStyle::Plain) || tagged {
        return Value::String(text.to_string());
    }
    match text {
        "" | "~" | "null" | "Null" | "NULL" => return Value::Null,
        "true" | "True" | "TRUE" => return Value::Bool(true),
        "false" | "False" | "FALSE" => return Value::Bool(false),
        ".nan" | ".NaN" | ".NAN" => return Value::Number(f64::NAN),
        ".inf" | ".Inf" | ".INF" | "+.inf" | "+.Inf" | "+.INF" => {
            return Value::Number(f64::INFINITY)
        }
        "-.inf" | "-.Inf" | "-.INF" => return Value::Number(f64::NEG_INFINITY),
        _ => {}
    }
    let t = text;
    let looks_numeric = t
        .bytes()
        .all(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.' | b'e' | b'E'))
        && t.bytes().any(|b| b.is_ascii_digit());
    if looks_numeric {
        if let Ok(n) = t.parse::<f64>() {
            return Value::Number(n);
        }
    }
    if let Some(hex) = t.strip_prefix("0x") {
        if let Ok(n) = i64::from_str_radix(hex, 16) {
            return Value::Number(n as f64);
        }
    }
    if let Some(oct) = t.strip_prefix("0o") {
        if let Ok(n) = i64::from_str_radix(oct, 8) {
            return Value::Number(n as f64);
        }
    }
    Value::String(text.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(t: &str) -> Result<Node, YamlError> {
        parse(t, YamlLimits::default())
    }

    /// The example document and pointers of RFC 6901, section 5, plus
    /// `~01` (a key `~1`: `~1` is undone before `~0`, RFC 6901 section 4).
    #[test]
    fn json_pointers_follow_rfc_6901() {
        let t = r#"{"foo": ["bar", "baz"], "": 0, "a/b": 1, "c%d": 2, "e^f": 3, "g|h": 4, 'i\j': 5, 'k"l': 6, " ": 7, "m~n": 8, "~1": 9}"#;
        let n = p(t).unwrap();
        let num = |ptr: &str| match n.pointer(ptr).map(|x| &x.value) {
            Some(Value::Number(v)) => Some(*v),
            _ => None,
        };
        assert_eq!(n.pointer("").unwrap().span, n.span);
        assert_eq!(n.pointer("/foo/0").unwrap().as_str(), Some("bar"));
        for (ptr, want) in [
            ("/", 0.0),
            ("/a~1b", 1.0),
            ("/c%d", 2.0),
            ("/e^f", 3.0),
            ("/g|h", 4.0),
            ("/i\\j", 5.0),
            ("/k\"l", 6.0),
            ("/ ", 7.0),
            ("/m~0n", 8.0),
            ("/~01", 9.0),
        ] {
            assert_eq!(num(ptr), Some(want), "{ptr}");
        }
        assert_eq!(num("/a/b"), None);
        // The key's own span, found through an escaped token.
        let key = n.key_span("/a~1b").unwrap();
        assert_eq!(&t[key], "\"a/b\"");
    }

    #[test]
    fn spans_point_at_values() {
        let t = "a:\n  b: 4 mil\n  c: [1, 2]\n";
        let n = p(t).unwrap();
        let b = n.pointer("/a/b").unwrap();
        assert_eq!(&t[b.span.clone()], "4 mil");
        let c1 = n.pointer("/a/c/1").unwrap();
        assert_eq!(&t[c1.span.clone()], "2");
        assert_eq!(&t[n.key_span("/a/b").unwrap()], "b");
    }

    #[test]
    fn quoted_spans_include_quotes() {
        let t = "a: \"4 mil\"\n";
        let n = p(t).unwrap();
        assert_eq!(&t[n.pointer("/a").unwrap().span.clone()], "\"4 mil\"");
        assert_eq!(n.pointer("/a").unwrap().as_str(), Some("4 mil"));
    }

    #[test]
    fn non_ascii_spans_are_bytes() {
        let t = "a: \"µm\"\nb: 3 µm\n";
        let n = p(t).unwrap();
        assert_eq!(&t[n.pointer("/b").unwrap().span.clone()], "3 µm");
    }

    #[test]
    fn core_schema_scalars() {
        let n = p("a: 3\nb: '3'\nc: true\nd: ~\ne: .nan\n").unwrap();
        assert_eq!(n.pointer("/a").unwrap().value, Value::Number(3.0));
        assert_eq!(n.pointer("/b").unwrap().value, Value::String("3".into()));
        assert_eq!(n.pointer("/c").unwrap().value, Value::Bool(true));
        assert_eq!(n.pointer("/d").unwrap().value, Value::Null);
        assert!(matches!(n.pointer("/e").unwrap().value, Value::Number(x) if x.is_nan()));
    }

    #[test]
    fn alias_bomb_is_rejected() {
        let mut t = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..9 {
            t.push_str(&format!(
                "a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n",
                p = i - 1
            ));
        }
        let e = p(&t).unwrap_err();
        assert!(e.message.contains("expands to more than"), "{}", e.message);
    }

    /// One 1 MiB string aliased 3,000 times would be 3 GB of text: refused
    /// by the byte budget at the alias that crosses it, before any copy.
    #[test]
    fn aliased_long_string_is_rejected_by_bytes() {
        let mut t = format!("a: &big \"{}\"\nb: [", "x".repeat(1 << 20));
        for _ in 0..3000 {
            t.push_str("*big, ");
        }
        t.push_str("]\n");
        let started = std::time::Instant::now();
        let e = p(&t).unwrap_err();
        assert!(
            e.message.contains("more than 8388608 bytes"),
            "{}",
            e.message
        );
        assert_eq!(&t[e.span.clone()], "*big");
        // The anchored string counts once, the keys `a` and `b` one byte
        // each, so the seventh alias crosses 8 MiB by those two bytes.
        let seventh = t.match_indices("*big").nth(6).unwrap().0;
        assert_eq!(e.span.start, seventh);
        assert!(started.elapsed().as_secs() < 5);
    }

    #[test]
    fn deep_nesting_is_rejected() {
        let t = format!("{}1{}", "[".repeat(100), "]".repeat(100));
        let e = p(&t).unwrap_err();
        assert!(e.message.contains("nests deeper"), "{}", e.message);
    }

    #[test]
    fn duplicate_keys_are_rejected() {
        let t = "a: 1\na: 2\n";
        let e = p(t).unwrap_err();
        assert_eq!(&t[e.span.clone()], "a");
        assert_eq!(e.span.start, 5);
    }

    #[test]
    fn tab_indentation_points_at_the_tab() {
        let t = "a:\n  b: 1\n\tc: 2\n";
        let e = p(t).unwrap_err();
        assert!(e.message.contains("tab"), "{}", e.message);
        assert_eq!(&t[e.span.clone()], "\t");
    }

    #[test]
    fn unclosed_flow_list_points_at_its_bracket() {
        let t = "a:\n  b: [1, 2\n";
        let e = p(t).unwrap_err();
        assert!(e.message.contains("never closed"), "{}", e.message);
        assert_eq!(e.span.start, t.find('[').unwrap());
    }

    #[test]
    fn duplicate_key_message_names_the_first_line() {
        let e = p("a: 1\nb: 2\na: 3\n").unwrap_err();
        assert!(e.message.contains("first at line 1"), "{}", e.message);
    }

    /// Duplicates are found alike below and above the size where the
    /// search switches from a scan to a hash map, whichever key repeats.
    #[test]
    fn duplicate_keys_are_found_in_small_and_large_mappings() {
        for n in [1, 2, SMALL_MAP, SMALL_MAP + 1, SMALL_MAP + 2, 3 * SMALL_MAP] {
            let keys: String = (0..n).map(|i| format!("k{i}: {i}\n")).collect();
            let tree = p(&keys).unwrap();
            match &tree.value {
                Value::Map(entries) => {
                    let names: Vec<&str> = entries.iter().map(|e| e.key.as_str()).collect();
                    let want: Vec<String> = (0..n).map(|i| format!("k{i}")).collect();
                    assert_eq!(names, want);
                }
                other => panic!("{other:?}"),
            }
            for j in [0, n / 2, n - 1] {
                let t = format!("{keys}k{j}: again\n");
                let e = p(&t).unwrap_err();
                assert!(
                    e.message.contains(&format!("first at line {}", j + 1)),
                    "{n} keys, k{j}: {}",
                    e.message
                );
                assert_eq!(e.span.start, keys.len(), "{n} keys, k{j}");
            }
        }
    }

    #[test]
    fn malformed_yaml_has_position() {
        let e = p("a: [1, 2\nb: 3\n").unwrap_err();
        assert!(e.message.contains("malformed") || e.message.contains("ends"));
    }
}
