//! A positioned YAML tree built from `saphyr-parser` events.
//!
//! Every node keeps the byte span of its text so that any JSON pointer into
//! the document can be mapped back to the exact place in the file. Aliases are
//! expanded under a node budget (alias bombs are rejected) and nesting depth
//! is bounded; both limits are configurable through [`YamlLimits`].

mod parse;
#[cfg(test)]
mod tests;

use std::ops::Range;

use crate::source::{unescape_token, SpanChildren, SpanNode};

pub use parse::{parse, parse_with_anchors};

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
