//! Where each key and value of a config file is written: a tree of byte spans built from the
//! same TOML text, used to put a line and column on every error, including the errors the
//! validation pass finds after serde has produced the typed config.

use std::fmt;
use std::ops::Range;

use serde::de::{Deserialize, Deserializer, MapAccess, SeqAccess, Visitor};

/// One step of a key path: a table key or a 0-based list index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) enum Segment {
    Key(String),
    Index(usize),
}

/// A key path such as `strategy[2].clean.gain`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub(crate) struct KeyPath(pub(crate) Vec<Segment>);

impl KeyPath {
    /// Parses the dotted form used in messages (keys contain no `.` or `[`).
    pub(crate) fn parse(text: &str) -> Self {
        let mut segments = Vec::new();
        for part in text.split('.').filter(|p| !p.is_empty()) {
            let (key, mut rest) = match part.find('[') {
                Some(i) => (&part[..i], &part[i..]),
                None => (part, ""),
            };
            if !key.is_empty() {
                segments.push(Segment::Key(key.to_string()));
            }
            while let Some(close) = rest.find(']') {
                if let Ok(index) = rest[1..close].parse::<usize>() {
                    segments.push(Segment::Index(index));
                }
                rest = &rest[close + 1..];
            }
        }
        KeyPath(segments)
    }
}

impl fmt::Display for KeyPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, segment) in self.0.iter().enumerate() {
            match segment {
                Segment::Key(key) if i == 0 => write!(f, "{key}")?,
                Segment::Key(key) => write!(f, ".{key}")?,
                Segment::Index(index) => write!(f, "[{index}]")?,
            }
        }
        Ok(())
    }
}

/// A TOML value and the spans of its children (scalars keep only their own span).
#[derive(Debug)]
enum Node {
    Leaf,
    Array(Vec<SpannedNode>),
    Table(Vec<(String, SpannedNode)>),
}

/// A node with its byte span, when the parser gives one. Tables that are only implied by a
/// dotted key or a deeper header (`[array.layout.log-spiral]` implies `array.layout`) have none.
#[derive(Debug)]
struct SpannedNode {
    span: Option<Range<usize>>,
    node: Node,
}

// toml reports spans through serde_spanned's protocol: asked for a struct with these names,
// it visits a map of start, end and value. For implied tables it ignores the request and visits
// the table itself, which `toml::Spanned` rejects; reading the protocol here lets both through.
const SPANNED_NAME: &str = "$__serde_spanned_private_Spanned";
const SPANNED_START: &str = "$__serde_spanned_private_start";
const SPANNED_END: &str = "$__serde_spanned_private_end";
const SPANNED_VALUE: &str = "$__serde_spanned_private_value";
const SPANNED_FIELDS: [&str; 3] = [SPANNED_START, SPANNED_END, SPANNED_VALUE];

impl<'de> Deserialize<'de> for Node {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(NodeVisitor)
    }
}

impl<'de> Deserialize<'de> for SpannedNode {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_struct(SPANNED_NAME, &SPANNED_FIELDS, SpannedNodeVisitor)
    }
}

fn unspanned(node: Node) -> SpannedNode {
    SpannedNode { span: None, node }
}

struct NodeVisitor;

impl<'de> Visitor<'de> for NodeVisitor {
    type Value = Node;

    fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("any TOML value")
    }
    fn visit_bool<E>(self, _: bool) -> Result<Node, E> {
        Ok(Node::Leaf)
    }
    fn visit_i64<E>(self, _: i64) -> Result<Node, E> {
        Ok(Node::Leaf)
    }
    fn visit_u64<E>(self, _: u64) -> Result<Node, E> {
        Ok(Node::Leaf)
    }
    fn visit_f64<E>(self, _: f64) -> Result<Node, E> {
        Ok(Node::Leaf)
    }
    fn visit_str<E>(self, _: &str) -> Result<Node, E> {
        Ok(Node::Leaf)
    }
    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Node, A::Error> {
        let mut items = Vec::new();
        while let Some(item) = seq.next_element::<SpannedNode>()? {
            items.push(item);
        }
        Ok(Node::Array(items))
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Node, A::Error> {
        let mut entries = Vec::new();
        while let Some(key) = map.next_key::<String>()? {
            entries.push((key, map.next_value::<SpannedNode>()?));
        }
        Ok(Node::Table(entries))
    }
}

struct SpannedNodeVisitor;

impl<'de> Visitor<'de> for SpannedNodeVisitor {
    type Value = SpannedNode;

    fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("any TOML value")
    }
    fn visit_bool<E>(self, _: bool) -> Result<SpannedNode, E> {
        Ok(unspanned(Node::Leaf))
    }
    fn visit_i64<E>(self, _: i64) -> Result<SpannedNode, E> {
        Ok(unspanned(Node::Leaf))
    }
    fn visit_u64<E>(self, _: u64) -> Result<SpannedNode, E> {
        Ok(unspanned(Node::Leaf))
    }
    fn visit_f64<E>(self, _: f64) -> Result<SpannedNode, E> {
        Ok(unspanned(Node::Leaf))
    }
    fn visit_str<E>(self, _: &str) -> Result<SpannedNode, E> {
        Ok(unspanned(Node::Leaf))
    }
    fn visit_seq<A: SeqAccess<'de>>(self, seq: A) -> Result<SpannedNode, A::Error> {
        NodeVisitor.visit_seq(seq).map(unspanned)
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<SpannedNode, A::Error> {
        let Some(first) = map.next_key::<String>()? else {
            return Ok(unspanned(Node::Table(Vec::new())));
        };
        if first != SPANNED_START {
            // An implied table: its entries, without a span of its own.
            let mut entries = vec![(first, map.next_value::<SpannedNode>()?)];
            while let Some(key) = map.next_key::<String>()? {
                entries.push((key, map.next_value::<SpannedNode>()?));
            }
            return Ok(unspanned(Node::Table(entries)));
        }
        let start: usize = map.next_value()?;
        let mut end = start;
        let mut node = Node::Leaf;
        while let Some(key) = map.next_key::<String>()? {
            if key == SPANNED_END {
                end = map.next_value()?;
            } else {
                node = map.next_value::<Node>()?;
            }
        }
        Ok(SpannedNode { span: Some(start..end.max(start)), node })
    }
}

/// The span tree of one config text. Empty (every look-up fails) when the text holds something
/// the tree cannot represent, such as a date-time; errors then fall back to the spans that the
/// TOML parser reports itself.
#[derive(Debug, Default)]
pub(crate) struct SpanIndex {
    root: Option<Node>,
}

impl SpanIndex {
    /// Builds the tree; never fails (see the type's doc).
    pub(crate) fn build(text: &str) -> Self {
        Self { root: toml::from_str::<Node>(text).ok() }
    }

    /// The span of the value at `path`, or of its nearest ancestor that is written in the file,
    /// together with how many segments of `path` were found.
    pub(crate) fn nearest_span(&self, path: &KeyPath) -> (Option<Range<usize>>, usize) {
        let Some(root) = &self.root else { return (None, 0) };
        let mut node = root;
        let mut span = None;
        let mut found = 0;
        for segment in &path.0 {
            let next = match (node, segment) {
                (Node::Table(entries), Segment::Key(key)) => {
                    entries.iter().find(|(k, _)| k == key).map(|(_, v)| v)
                }
                (Node::Array(items), Segment::Index(index)) => items.get(*index),
                _ => None,
            };
            match next {
                Some(child) => {
                    if child.span.is_some() {
                        span = child.span.clone();
                    }
                    node = &child.node;
                    found += 1;
                }
                None => break,
            }
        }
        (span, found)
    }

    /// The key path of the innermost value whose span contains all of `range`.
    pub(crate) fn path_at(&self, range: &Range<usize>) -> KeyPath {
        if range.is_empty() {
            // toml reports problems of the document itself (a missing top-level section) with
            // an empty span at its start.
            return KeyPath::default();
        }
        let mut best: Option<(usize, KeyPath)> = None;
        if let Some(root) = &self.root {
            let mut prefix = Vec::new();
            search(root, range, &mut prefix, &mut best);
        }
        best.map(|(_, path)| path).unwrap_or_default()
    }
}

fn contains(span: &Range<usize>, range: &Range<usize>) -> bool {
    span.start <= range.start && range.end <= span.end
}

fn consider(
    span: &Option<Range<usize>>,
    range: &Range<usize>,
    path: &[Segment],
    best: &mut Option<(usize, KeyPath)>,
) {
    let Some(span) = span else { return };
    if !contains(span, range) {
        return;
    }
    let width = span.len();
    let better = match best {
        None => true,
        Some((w, p)) => width < *w || (width == *w && path.len() > p.0.len()),
    };
    if better {
        *best = Some((width, KeyPath(path.to_vec())));
    }
}

fn search(
    node: &Node,
    range: &Range<usize>,
    prefix: &mut Vec<Segment>,
    best: &mut Option<(usize, KeyPath)>,
) {
    match node {
        Node::Leaf => {}
        Node::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                prefix.push(Segment::Index(i));
                consider(&item.span, range, prefix, best);
                search(&item.node, range, prefix, best);
                prefix.pop();
            }
        }
        Node::Table(entries) => {
            for (key, value) in entries {
                prefix.push(Segment::Key(key.clone()));
                consider(&value.span, range, prefix, best);
                search(&value.node, range, prefix, best);
                prefix.pop();
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_spans_of_nested_keys_and_list_entries() {
        let text = "[beam]\ndish_diameter_m = 13.5\n\n[[strategy]]\nname = \"a\"\n[[strategy]]\nname = \"b\"\n[strategy.clean]\ngain = 2.0\n";
        let index = SpanIndex::build(text);
        assert!(index.root.is_some(), "{:?}", toml::from_str::<Node>(text).err());
        let (span, found) = index.nearest_span(&KeyPath::parse("strategy[1].clean.gain"));
        assert_eq!(found, 4);
        assert_eq!(&text[span.unwrap()], "2.0");
        let (span, found) = index.nearest_span(&KeyPath::parse("beam.dish_diameter_m"));
        assert_eq!(found, 2);
        assert_eq!(&text[span.unwrap()], "13.5");
        // A missing key falls back to its table.
        let (span, found) = index.nearest_span(&KeyPath::parse("beam.legs.count"));
        assert_eq!(found, 1);
        assert!(text[span.unwrap()].starts_with("[beam]"));
        // Implied tables have no span of their own; their children do.
        let text2 = "[array.layout.log-spiral]\narms = 3\n";
        let index2 = SpanIndex::build(text2);
        let (span, found) = index2.nearest_span(&KeyPath::parse("array.layout.log-spiral.arms"));
        assert_eq!((found, &text2[span.unwrap()]), (4, "3"));
        let gain_at = text.find("2.0").unwrap();
        assert_eq!(index.path_at(&(gain_at..gain_at + 3)).to_string(), "strategy[1].clean.gain");
    }

    #[test]
    fn key_paths_print_and_parse_alike() {
        let p = KeyPath::parse("strategy[2].clean.gain");
        assert_eq!(p.0.len(), 4);
        assert_eq!(p.to_string(), "strategy[2].clean.gain");
        assert_eq!(
            KeyPath::parse("beam.pointing.offsets_arcsec[1]").to_string(),
            "beam.pointing.offsets_arcsec[1]"
        );
    }
}
