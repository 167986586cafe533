//! A YAML tree that remembers where every node stands in the file, so that
//! every problem with an experiment file can name its line and column.
//! Built from the marked event stream of `yaml-rust2`.

use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::{Marker, TScalarStyle};

#[derive(Debug, Clone, PartialEq)]
pub enum Kind {
    /// A scalar and whether it was quoted (quoted scalars are always strings).
    Scalar(String, bool),
    Seq(Vec<Node>),
    Map(Vec<(Node, Node)>),
}

#[derive(Debug, Clone, PartialEq)]
pub struct Node {
    pub kind: Kind,
    /// 1-based line and column.
    pub line: usize,
    pub column: usize,
}

impl Node {
    pub fn is_null(&self) -> bool {
        matches!(&self.kind, Kind::Scalar(s, false) if s.is_empty() || s == "~" || s == "null" || s == "Null" || s == "NULL")
    }
    pub fn describe(&self) -> &'static str {
        match &self.kind {
            Kind::Scalar(_, _) if self.is_null() => "nothing",
            Kind::Scalar(_, _) => "a single value",
            Kind::Seq(_) => "a list",
            Kind::Map(_) => "a mapping",
        }
    }
}

#[derive(Debug)]
pub struct YamlError {
    pub line: usize,
    pub column: usize,
    pub message: String,
}

/// The most nodes a document may hold once aliases are expanded. An
/// experiment file holds a few hundred; the bound stops a file of nested
/// aliases (the "billion laughs") from expanding into gigabytes.
pub const MAX_NODES: usize = 200_000;

struct Builder {
    /// Open collections: the node, its anchor id, and the node count when it opened.
    stack: Vec<(Node, Option<usize>, usize)>,
    keys: Vec<Option<Node>>,
    /// Anchored nodes and their size in nodes.
    anchors: std::collections::HashMap<usize, (Node, usize)>,
    docs: Vec<Node>,
    error: Option<YamlError>,
    /// Nodes built so far, aliases counted at their expanded size.
    nodes: usize,
}

impl Builder {
    fn push_value(&mut self, node: Node) {
        match self.stack.last_mut() {
            None => self.docs.push(node),
            Some((parent, _, _)) => match &mut parent.kind {
                Kind::Seq(items) => items.push(node),
                Kind::Map(entries) => {
                    let slot = self.keys.last_mut();
                    match slot {
                        Some(slot @ None) => *slot = Some(node),
                        Some(slot) => {
                            if let Some(key) = slot.take() {
                                entries.push((key, node));
                            }
                        }
                        None => {}
                    }
                }
                Kind::Scalar(..) => {}
            },
        }
    }
}

impl Builder {
    /// Count `size` more nodes; false (with the error set) past [`MAX_NODES`].
    fn count(&mut self, size: usize, line: usize, column: usize) -> bool {
        self.nodes = self.nodes.saturating_add(size);
        if self.nodes > MAX_NODES {
            self.error = Some(YamlError {
                line,
                column,
                message: format!(
                    "the document expands to more than {MAX_NODES} values (aliases repeat anchored values); an experiment file is far smaller — write the values out or remove the aliases"
                ),
            });
            return false;
        }
        true
    }
}

impl MarkedEventReceiver for Builder {
    /// One match over the parser's events (start and end of documents,
    /// mappings, sequences, scalars, aliases): a state machine read best whole.
    fn on_event(&mut self, ev: Event, mark: Marker) {
        if self.error.is_some() {
            return;
        }
        let line = mark.line();
        let column = mark.col() + 1;
        let opens = matches!(
            ev,
            Event::Scalar(..) | Event::SequenceStart(..) | Event::MappingStart(..)
        );
        if opens && !self.count(1, line, column) {
            return;
        }
        match ev {
            Event::Scalar(value, style, anchor, _) => {
                let quoted = !matches!(style, TScalarStyle::Plain);
                let node = Node {
                    kind: Kind::Scalar(value, quoted),
                    line,
                    column,
                };
                if anchor > 0 {
                    self.anchors.insert(anchor, (node.clone(), 1));
                }
                self.push_value(node);
            }
            Event::SequenceStart(anchor, _) => {
                self.stack.push((
                    Node {
                        kind: Kind::Seq(Vec::new()),
                        line,
                        column,
                    },
                    Some(anchor),
                    self.nodes,
                ));
            }
            Event::MappingStart(anchor, _) => {
                self.stack.push((
                    Node {
                        kind: Kind::Map(Vec::new()),
                        line,
                        column,
                    },
                    Some(anchor),
                    self.nodes,
                ));
                self.keys.push(None);
            }
            Event::SequenceEnd | Event::MappingEnd => {
                if let Some((mut node, anchor, opened_at)) = self.stack.pop() {
                    if let Kind::Map(entries) = &node.kind {
                        self.keys.pop();
                        // A block mapping's start mark sits at its first ':';
                        // point at its first key instead, where an editor would.
                        if let Some((first, _)) = entries.first() {
                            if (first.line, first.column) < (node.line, node.column) {
                                node.line = first.line;
                                node.column = first.column;
                            }
                        }
                    }
                    if let Some(a) = anchor.filter(|a| *a > 0) {
                        let size = self.nodes - opened_at + 1;
                        self.anchors.insert(a, (node.clone(), size));
                    }
                    self.push_value(node);
                }
            }
            Event::Alias(id) => match self.anchors.get(&id).map(|(_, size)| *size) {
                Some(size) => {
                    if self.count(size, line, column) {
                        if let Some((node, _)) = self.anchors.get(&id) {
                            let node = node.clone();
                            self.push_value(node);
                        }
                    }
                }
                None => {
                    self.error = Some(YamlError {
                        line,
                        column,
                        message: "alias to an unknown anchor".into(),
                    })
                }
            },
            _ => {}
        }
    }
}

/// Parse one YAML document into a positioned tree. An empty file gives an
/// empty mapping at line 1.
pub fn parse(text: &str) -> Result<Node, YamlError> {
    // YAML forbids control characters other than tab and line breaks; name
    // the first one rather than let it end a scalar silently.
    for (i, line) in text.lines().enumerate() {
        if let Some((col, c)) = line
            .chars()
            .enumerate()
            .find(|(_, c)| c.is_control() && *c != '\t' && *c != '\r')
        {
            return Err(YamlError {
                line: i + 1,
                column: col + 1,
                message: format!(
                    "the file holds the control character U+{:04X}; an experiment file is plain text",
                    c as u32
                ),
            });
        }
    }
    let mut builder = Builder {
        stack: Vec::new(),
        keys: Vec::new(),
        anchors: Default::default(),
        docs: Vec::new(),
        error: None,
        nodes: 0,
    };
    let mut parser = Parser::new_from_str(text);
    if let Err(e) = parser.load(&mut builder, true) {
        let m = e.marker();
        // The scanner reports a tab where the scalar before it began; point
        // at the tab that indents a line instead, where an editor shows it.
        let tab = text.lines().enumerate().find_map(|(i, line)| {
            let indent = &line[..line.len() - line.trim_start().len()];
            indent.find('\t').map(|col| (i + 1, col + 1))
        });
        let about_tabs = e.info().contains("tab");
        if let Some((line, column)) = tab.filter(|(line, _)| about_tabs && *line <= m.line() + 1) {
            return Err(YamlError {
                line,
                column,
                message: "a tab indents this line; YAML indents with spaces only".into(),
            });
        }
        return Err(YamlError {
            line: m.line(),
            column: m.col() + 1,
            message: e.info().to_string(),
        });
    }
    if let Some(err) = builder.error {
        return Err(err);
    }
    if builder.docs.len() > 1 {
        let second = &builder.docs[1];
        return Err(YamlError {
            line: second.line,
            column: second.column,
            message: "the file holds more than one YAML document; an experiment is one document"
                .into(),
        });
    }
    Ok(builder.docs.pop().unwrap_or(Node {
        kind: Kind::Map(Vec::new()),
        line: 1,
        column: 1,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn positions_are_one_based_lines() {
        let node = parse("a: 1\nb:\n  - x\n  - 'y'\n").expect("valid yaml");
        let Kind::Map(entries) = &node.kind else {
            panic!("map")
        };
        assert_eq!(entries.len(), 2);
        assert_eq!(entries[1].0.line, 2);
        let Kind::Seq(items) = &entries[1].1.kind else {
            panic!("seq")
        };
        assert_eq!(items[1].line, 4);
        assert_eq!(items[1].kind, Kind::Scalar("y".into(), true));
    }
    #[test]
    fn nested_aliases_cannot_expand_without_bound() {
        let mut text = String::from("a: &a [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..9u8 {
            let (name, prev) = ((b'a' + i) as char, (b'a' + i - 1) as char);
            let items = vec![format!("*{prev}"); 10].join(", ");
            text.push_str(&format!("{name}: &{name} [{items}]\n"));
        }
        let err = parse(&text).unwrap_err();
        assert!(
            err.message.contains("expands to more than"),
            "{}",
            err.message
        );
        // A few aliases are fine.
        assert!(parse("a: &a [1, 2]\nb: *a\n").is_ok());
    }

    #[test]
    fn control_characters_and_tabs_are_pointed_at() {
        let err = parse("a: 1\nb: x\u{7}y\n").unwrap_err();
        assert_eq!((err.line, err.column), (2, 5));
        let err = parse("a:\n  b: 1\n\tc: 2\n").unwrap_err();
        assert_eq!((err.line, err.column), (3, 1), "{}", err.message);
    }

    #[test]
    fn a_block_mapping_stands_at_its_first_key() {
        let node = parse("\n  a: 1\n  b: 2\n").expect("valid yaml");
        assert_eq!((node.line, node.column), (2, 3));
    }

    #[test]
    fn malformed_yaml_reports_line() {
        let err = parse("a: [1, 2\nb: 3\n").unwrap_err();
        assert!(err.line >= 1);
    }
}
