//! From the positioned YAML tree to typed values, with closed keys. Problems
//! are collected (not returned at the first one) so `check` can list them all.

use super::yaml::{Kind, Node};
use crate::error::{nearest, Diagnostic, Location};
use std::path::Path;

pub struct Ctx<'a> {
    pub file: &'a Path,
    pub diags: Vec<Diagnostic>,
}

impl<'a> Ctx<'a> {
    pub fn new(file: &'a Path) -> Self {
        Ctx {
            file,
            diags: Vec::new(),
        }
    }

    pub fn loc(&self, node: &Node) -> Option<Location> {
        Some(Location {
            file: self.file.to_path_buf(),
            line: Some(node.line),
            column: Some(node.column),
        })
    }

    pub fn error(&mut self, node: &Node, message: impl Into<String>) {
        let loc = self.loc(node);
        self.diags.push(Diagnostic::new(loc, message));
    }

    /// A problem explained on a page of its own.
    pub fn error_see(&mut self, node: &Node, message: impl Into<String>, page: &'static str) {
        let loc = self.loc(node);
        self.diags.push(Diagnostic::new(loc, message).see(page));
    }

    /// A problem of size or safety, explained with the refusals.
    pub fn refuse(&mut self, node: &Node, message: impl Into<String>) {
        let loc = self.loc(node);
        self.diags
            .push(Diagnostic::new(loc, message).see(crate::error::pages::REFUSALS));
    }

    /// View a node as a mapping with a closed set of keys. Unknown keys are
    /// reported with the nearest valid key; keys listed in `later` are
    /// accepted by the grammar but refused as not supported yet.
    pub fn map<'n>(
        &mut self,
        node: &'n Node,
        path: &str,
        allowed: &[&str],
        later: &[&str],
    ) -> Option<MapView<'n>> {
        let Kind::Map(entries) = &node.kind else {
            if node.is_null() {
                return Some(MapView {
                    entries: &[],
                    line: node.line,
                    column: node.column,
                });
            }
            self.error(
                node,
                format!(
                    "{path} must be a mapping of keys to values, found {}",
                    node.describe()
                ),
            );
            return None;
        };
        let mut seen: Vec<&str> = Vec::new();
        for (key, _) in entries {
            let Kind::Scalar(name, _) = &key.kind else {
                self.error(key, format!("{path}: keys must be plain names"));
                continue;
            };
            if seen.contains(&name.as_str()) {
                self.error(key, format!("{path}: key '{name}' is given twice"));
            }
            seen.push(name);
            if later.contains(&name.as_str()) {
                self.error(
                    key,
                    format!("{}{name} is not supported yet by this version of outturn; remove it to run the experiment", prefix(path)),
                );
            } else if !allowed.contains(&name.as_str()) {
                let mut all: Vec<&str> = allowed.to_vec();
                all.extend_from_slice(later);
                let hint = match nearest(name, &all) {
                    Some(n) => format!("; did you mean '{n}'?"),
                    None => format!("; valid keys here: {}", allowed.join(", ")),
                };
                self.error(key, format!("unknown key '{}' in {path}{hint}", clip(name)));
            }
        }
        Some(MapView {
            entries,
            line: node.line,
            column: node.column,
        })
    }

    pub fn string(&mut self, node: &Node, what: &str) -> Option<String> {
        match &node.kind {
            Kind::Scalar(s, _) if !node.is_null() => Some(s.clone()),
            _ => {
                self.error(
                    node,
                    format!("{what} must be a single value, found {}", node.describe()),
                );
                None
            }
        }
    }

    pub fn integer(&mut self, node: &Node, what: &str, min: i64) -> Option<i64> {
        let s = self.string(node, what)?;
        match s.trim().parse::<i64>() {
            Ok(v) if v >= min => Some(v),
            Ok(v) => {
                self.error(node, format!("{what} must be at least {min}, found {v}"));
                None
            }
            Err(_) => {
                let t = s.trim();
                let digits = t.strip_prefix('-').unwrap_or(t);
                if !digits.is_empty() && digits.bytes().all(|b| b.is_ascii_digit()) {
                    self.error(node, format!("{what} {t} is too large a number"));
                } else {
                    self.error(
                        node,
                        format!("{what} must be a whole number, found '{}'", clip(&s)),
                    );
                }
                None
            }
        }
    }

    /// A whole number from 0 to 2⁶⁴ − 1, such as a seed.
    pub fn unsigned(&mut self, node: &Node, what: &str) -> Option<u64> {
        let s = self.string(node, what)?;
        match s.trim().parse::<u64>() {
            Ok(v) => Some(v),
            Err(_) => {
                self.error(
                    node,
                    format!(
                        "{what} must be a whole number from 0 to 18446744073709551615, found '{}'",
                        clip(&s)
                    ),
                );
                None
            }
        }
    }

    pub fn boolean(&mut self, node: &Node, what: &str) -> Option<bool> {
        let s = self.string(node, what)?;
        match s.as_str() {
            "true" | "True" | "TRUE" => Some(true),
            "false" | "False" | "FALSE" => Some(false),
            _ => {
                self.error(
                    node,
                    format!("{what} must be true or false, found '{}'", clip(&s)),
                );
                None
            }
        }
    }

    /// A value from a closed list of names.
    pub fn choice(&mut self, node: &Node, what: &str, options: &[&str]) -> Option<String> {
        let s = self.string(node, what)?;
        if options.contains(&s.as_str()) {
            return Some(s);
        }
        let hint = match nearest(&s, options) {
            Some(n) => format!("did you mean '{n}'? "),
            None => String::new(),
        };
        self.error(
            node,
            format!(
                "{what} '{}' is not known; {hint}choose one of: {}",
                clip(&s),
                options.join(", ")
            ),
        );
        None
    }

    /// A single value or a list of values.
    pub fn list<'n>(&mut self, node: &'n Node) -> Vec<&'n Node> {
        match &node.kind {
            Kind::Seq(items) => items.iter().collect(),
            _ => vec![node],
        }
    }

    /// A list of whole numbers, or `{from, to}`.
    pub fn orders(&mut self, node: &Node, what: &str, min: i64) -> Option<Vec<usize>> {
        if let Kind::Map(_) = &node.kind {
            let view = self.map(node, what, &["from", "to"], &[])?;
            let from = match view.get("from") {
                Some(n) => self.integer(n, &format!("{what}.from"), min)?,
                None => {
                    self.error(
                        node,
                        format!("{what} as a range needs both 'from' and 'to'"),
                    );
                    return None;
                }
            };
            let to = match view.get("to") {
                Some(n) => self.integer(n, &format!("{what}.to"), min)?,
                None => {
                    self.error(
                        node,
                        format!("{what} as a range needs both 'from' and 'to'"),
                    );
                    return None;
                }
            };
            if to < from {
                self.error(
                    node,
                    format!("{what}: 'to' ({to}) is below 'from' ({from})"),
                );
                return None;
            }
            if to - from > 10_000 {
                self.refuse(node, format!("{what}: the range {from}..{to} is too large"));
                return None;
            }
            if to > super::limits::MAX_ORDER as i64 {
                self.refuse(
                    node,
                    format!(
                        "{what}: {to} is larger than outturn estimates (at most {} lags)",
                        super::limits::MAX_ORDER
                    ),
                );
                return None;
            }
            return Some((from..=to).map(|v| v as usize).collect());
        }
        let items = self.list(node);
        if items.is_empty() {
            self.error(
                node,
                format!("{what} is an empty list; give at least one order"),
            );
            return None;
        }
        let mut out = Vec::new();
        for item in items {
            let v = self.integer(item, what, min)? as usize;
            if v > super::limits::MAX_ORDER {
                self.refuse(
                    item,
                    format!(
                        "{what}: {v} is larger than outturn estimates (at most {} lags)",
                        super::limits::MAX_ORDER
                    ),
                );
                return None;
            }
            if out.contains(&v) {
                self.error(item, format!("{what} lists {v} twice"));
                return None;
            }
            out.push(v);
        }
        Some(out)
    }
}

/// A user's text shortened for a message: at most 60 characters, one line.
pub fn clip(text: &str) -> String {
    let one_line: String = text
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect();
    if one_line.chars().count() <= 60 {
        one_line
    } else {
        let head: String = one_line.chars().take(57).collect();
        format!("{head}...")
    }
}

fn prefix(path: &str) -> String {
    if path == "the experiment" {
        String::new()
    } else {
        format!("{path}.")
    }
}

pub struct MapView<'n> {
    entries: &'n [(Node, Node)],
    pub line: usize,
    pub column: usize,
}

impl<'n> MapView<'n> {
    pub fn get(&self, key: &str) -> Option<&'n Node> {
        self.entries
            .iter()
            .find(|(k, _)| matches!(&k.kind, Kind::Scalar(s, _) if s == key))
            .map(|(_, v)| v)
    }
    pub fn key_node(&self, key: &str) -> Option<&'n Node> {
        self.entries
            .iter()
            .find(|(k, _)| matches!(&k.kind, Kind::Scalar(s, _) if s == key))
            .map(|(k, _)| k)
    }
    pub fn anchor(&self) -> Node {
        Node {
            kind: Kind::Scalar(String::new(), false),
            line: self.line,
            column: self.column,
        }
    }
}
