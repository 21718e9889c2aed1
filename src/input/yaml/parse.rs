//! Reading YAML events (`saphyr-parser`) into the positioned tree: byte
//! spans for every node, aliases expanded under node and byte budgets,
//! nesting bounded, duplicate keys refused, scalars resolved by the YAML
//! 1.2 core schema, parser errors moved to where the fix belongs.

use std::collections::HashMap;
use std::ops::Range;

use saphyr_parser::{Event, Parser, ScalarStyle, Span};

use super::{Entry, Node, Value, YamlError, YamlLimits};

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
    parse_with_anchors(text, limits).map(|(node, _)| node)
}

/// As [`parse`], and also return the spans of every anchored node (`&name`)
/// and alias (`*name`): text that stands for more than one place, which an
/// edit must not change unseen.
pub fn parse_with_anchors(
    text: &str,
    limits: YamlLimits,
) -> Result<(Node, Vec<Range<usize>>), YamlError> {
    let offsets = Offsets::new(text);
    let mut builder = Builder {
        offsets: &offsets,
        limits,
        anchored: Vec::new(),
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
    let root = root.unwrap_or(Node {
        value: Value::Null,
        span: 0..0,
    });
    Ok((root, builder.anchored))
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
    /// Spans of the anchored nodes and of the aliases.
    anchored: Vec<Range<usize>>,
    nodes: usize,
    bytes: usize,
}

/// Mappings with more keys than this find duplicate keys through a hash
/// map instead of a scan.
pub(super) const SMALL_MAP: usize = 16;

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
            self.anchored.push(node.span.clone());
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
                self.anchored.push(range.clone());
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

pub(super) fn count_nodes(node: &Node) -> usize {
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
pub(super) fn count_bytes(node: &Node) -> usize {
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

pub(super) fn format_number(n: f64) -> String {
    if n.fract() == 0.0 && n.abs() < 9.0e15 {
        format!("{}", n as i64)
    } else {
        format!("{n}")
    }
}

/// YAML 1.2 core schema resolution of a plain scalar.
pub(super) fn resolve_scalar(text: &str, style: ScalarStyle, tagged: bool) -> Value {
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
