//! Reading YAML into a tree of nodes that each know their place in the file, and
//! the `file:line:column` problems with a source line and a caret.
//!
//! The YAML crate is serde-saphyr (panic-free, no unsafe, budgets against alias
//! bombs and deep nesting, duplicate keys are errors). Each node is read as
//! `Spanned<Node>` so that every problem found later — an unknown key, a bad
//! expression — points into the file. The schema is checked by hand in
//! [`super::load`] rather than by serde derives: that gives "did you mean" for
//! unknown keys and keeps locations inside what would otherwise be untagged enums,
//! where serde buffering loses them.

use std::fmt;

use serde::de::{Deserialize, Deserializer, MapAccess, SeqAccess, Visitor};
use serde_saphyr::Spanned;

/// A YAML node.
#[derive(Debug, Clone)]
pub enum Node {
    /// `~`, `null` or nothing
    Null,
    /// `true`, `false`
    Bool(bool),
    /// a number YAML recognised (kept as text too, for messages)
    Number(f64),
    /// any other scalar
    Str(String),
    /// a sequence
    Seq(Vec<Spanned<Node>>),
    /// a mapping, in file order
    Map(Vec<(Spanned<String>, Spanned<Node>)>),
}

impl Node {
    /// What kind of node, for messages.
    pub fn what(&self) -> &'static str {
        match self {
            Node::Null => "nothing",
            Node::Bool(_) => "a true/false",
            Node::Number(_) => "a number",
            Node::Str(_) => "a text",
            Node::Seq(_) => "a list",
            Node::Map(_) => "a mapping",
        }
    }
}

struct NodeVisitor;

impl<'de> Visitor<'de> for NodeVisitor {
    type Value = Node;
    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str("any YAML value")
    }
    fn visit_unit<E>(self) -> Result<Node, E> {
        Ok(Node::Null)
    }
    fn visit_none<E>(self) -> Result<Node, E> {
        Ok(Node::Null)
    }
    fn visit_bool<E>(self, v: bool) -> Result<Node, E> {
        Ok(Node::Bool(v))
    }
    fn visit_i64<E>(self, v: i64) -> Result<Node, E> {
        Ok(Node::Number(v as f64))
    }
    fn visit_u64<E>(self, v: u64) -> Result<Node, E> {
        Ok(Node::Number(v as f64))
    }
    fn visit_i128<E>(self, v: i128) -> Result<Node, E> {
        Ok(Node::Number(v as f64))
    }
    fn visit_u128<E>(self, v: u128) -> Result<Node, E> {
        Ok(Node::Number(v as f64))
    }
    fn visit_f64<E>(self, v: f64) -> Result<Node, E> {
        Ok(Node::Number(v))
    }
    fn visit_str<E>(self, v: &str) -> Result<Node, E> {
        Ok(Node::Str(v.to_string()))
    }
    fn visit_string<E>(self, v: String) -> Result<Node, E> {
        Ok(Node::Str(v))
    }
    fn visit_seq<A: SeqAccess<'de>>(self, mut a: A) -> Result<Node, A::Error> {
        let mut v = Vec::new();
        while let Some(x) = a.next_element()? {
            v.push(x);
        }
        Ok(Node::Seq(v))
    }
    fn visit_map<A: MapAccess<'de>>(self, mut a: A) -> Result<Node, A::Error> {
        let mut v = Vec::new();
        while let Some(kv) = a.next_entry()? {
            v.push(kv);
        }
        Ok(Node::Map(v))
    }
}

impl<'de> Deserialize<'de> for Node {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Node, D::Error> {
        d.deserialize_any(NodeVisitor)
    }
}

/// Characters of a source line shown under a problem.
const SHOWN_CHARS: usize = 160;

/// One problem at a place in a file.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// file as given
    pub file: String,
    /// 1-based line (0 when the problem is about the whole file)
    pub line: usize,
    /// 1-based column in characters
    pub column: usize,
    /// what is wrong
    pub message: String,
    /// the source line, for the caret display
    pub source_line: Option<String>,
    /// how many characters the caret underlines
    pub width: usize,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.line == 0 {
            return write!(f, "{}: {}", self.file, self.message);
        }
        write!(
            f,
            "{}:{}:{}: {}",
            self.file, self.line, self.column, self.message
        )?;
        if let Some(src) = &self.source_line {
            // tabs would move the caret: show them as single spaces; a long line is
            // shown as a window around the column
            let chars: Vec<char> = src
                .chars()
                .map(|c| if c == '\t' { ' ' } else { c })
                .collect();
            let col = self.column.saturating_sub(1).min(chars.len());
            let start = col.saturating_sub(SHOWN_CHARS / 2);
            let end = (start + SHOWN_CHARS).min(chars.len());
            let mut shown: String = chars[start..end].iter().collect();
            let mut pad = col - start;
            if start > 0 {
                shown.insert(0, '…');
                pad += 1;
            }
            if end < chars.len() {
                shown.push('…');
            }
            let width = self.width.clamp(1, SHOWN_CHARS);
            write!(f, "\n  {shown}\n  {}{}", " ".repeat(pad), "^".repeat(width))?;
        }
        Ok(())
    }
}

/// A rules file's text with a line index, for turning byte offsets into problems.
pub struct Source<'a> {
    /// file as given
    pub name: String,
    /// its text
    pub text: &'a str,
    starts: Vec<usize>,
}

impl<'a> Source<'a> {
    /// Index the lines of `text` (LF, CRLF and CR all end a line).
    pub fn new(name: &str, text: &'a str) -> Source<'a> {
        let b = text.as_bytes();
        let mut starts = vec![0];
        let mut i = 0;
        while i < b.len() {
            if b[i] == b'\n' || (b[i] == b'\r' && b.get(i + 1) != Some(&b'\n')) {
                starts.push(i + 1);
            }
            i += 1;
        }
        Source {
            name: name.to_string(),
            text,
            starts,
        }
    }

    fn line_text(&self, line: usize) -> Option<String> {
        let s = *self.starts.get(line.checked_sub(1)?)?;
        let e = self.starts.get(line).copied().unwrap_or(self.text.len());
        let raw = self.text.get(s..e)?;
        let t = raw.trim_end_matches(['\n', '\r']);
        // kept whole up to a bound; Display shows a window around the column
        Some(t.chars().take(20_000).collect())
    }

    /// A problem at byte offset `at` underlining `width` bytes' worth of characters.
    pub fn at_byte(&self, at: usize, width_bytes: usize, message: impl Into<String>) -> Problem {
        let at = at.min(self.text.len());
        let line_idx = self.starts.partition_point(|&s| s <= at).saturating_sub(1);
        let ls = self.starts[line_idx];
        let column = self
            .text
            .get(ls..at)
            .map(|s| s.chars().count() + 1)
            .unwrap_or(1);
        let width = self
            .text
            .get(at..(at + width_bytes).min(self.text.len()))
            .map(|s| s.chars().take_while(|c| *c != '\n' && *c != '\r').count())
            .unwrap_or(1);
        Problem {
            file: self.name.clone(),
            line: line_idx + 1,
            column,
            message: super::expr::articles(&message.into()),
            source_line: self.line_text(line_idx + 1),
            width: width.max(1),
        }
    }

    /// A problem at a node.
    pub fn at<T>(&self, node: &Spanned<T>, message: impl Into<String>) -> Problem {
        let loc = node.defined;
        match loc.span().byte_offset() {
            Some(off) => {
                let len = loc.span().byte_len().unwrap_or(1) as usize;
                self.at_byte(off as usize, len, message)
            }
            None => self.at_line_col(loc.line() as usize, loc.column() as usize, message),
        }
    }

    /// A problem at a line and column (1-based).
    pub fn at_line_col(&self, line: usize, column: usize, message: impl Into<String>) -> Problem {
        Problem {
            file: self.name.clone(),
            line,
            column: column.max(1),
            message: super::expr::articles(&message.into()),
            source_line: if line > 0 { self.line_text(line) } else { None },
            width: 1,
        }
    }

    /// A problem about the whole file.
    pub fn whole(&self, message: impl Into<String>) -> Problem {
        Problem {
            file: self.name.clone(),
            line: 0,
            column: 0,
            message: message.into(),
            source_line: None,
            width: 0,
        }
    }

    /// Where the text of a string scalar starts in the file: after its opening
    /// quote, if it has one. None when the scalar's text is not found verbatim
    /// there (escapes, folded lines), in which case positions fall back to the
    /// scalar's start.
    pub fn scalar_text_start(&self, node: &Spanned<Node>, text: &str) -> Option<usize> {
        let off = node.defined.span().byte_offset()? as usize;
        let first = self.text.as_bytes().get(off)?;
        let start = if *first == b'\'' || *first == b'"' {
            off + 1
        } else {
            off
        };
        (self.text.get(start..start + text.len())? == text).then_some(start)
    }
}

/// Read a YAML text into nodes, with the crate's budgets tightened for rules files.
pub fn parse(src: &Source) -> Result<Spanned<Node>, Problem> {
    let mut opts = serde_saphyr::Options::default();
    opts.with_snippet = false;
    opts.duplicate_keys = serde_saphyr::DuplicateKeyPolicy::Error;
    let mut budget = serde_saphyr::Budget::default();
    // rules files are small: a few thousand nodes; anything far larger is hostile
    budget.max_events = 400_000;
    budget.max_nodes = 200_000;
    budget.max_aliases = 1_000;
    budget.max_anchors = 1_000;
    budget.max_depth = 64;
    budget.max_documents = 1;
    budget.max_recorded_anchor_bytes = 1 << 20;
    opts.budget = Some(budget);
    opts.alias_limits.max_total_replayed_events = 100_000;
    if src.text.trim().is_empty() {
        return Err(src.whole("the file is empty"));
    }
    serde_saphyr::from_str_with_options::<Spanned<Node>>(src.text, opts).map_err(|e| {
        let msg = clean_message(&e.without_snippet().to_string());
        match e.location() {
            Some(loc) if loc.line() > 0 => match loc.span().byte_offset() {
                Some(off) => src.at_byte(off as usize, 1, msg),
                None => src.at_line_col(loc.line() as usize, loc.column() as usize, msg),
            },
            _ => src.whole(msg),
        }
    })
}

/// The YAML crate's message without its own "error: line L column C:" prefix.
fn clean_message(m: &str) -> String {
    let mut s = m.trim();
    s = s.strip_prefix("error:").unwrap_or(s).trim_start();
    if let Some(rest) = s.strip_prefix("line ") {
        if let Some(idx) = rest.find(": ") {
            let head = &rest[..idx];
            if head
                .split_whitespace()
                .all(|w| w == "column" || w.chars().all(|c| c.is_ascii_digit()))
            {
                s = &rest[idx + 2..];
            }
        }
    }
    let s = s.lines().next().unwrap_or("").trim();
    let s = s.replace(", set DuplicateKeyPolicy in Options if acceptable", "");
    format!("YAML: {s}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn problems_show_the_line_and_a_caret() {
        let src = Source::new("r.yaml", "a: 1\r\nbb: 'srf >= 1nH'\rc: 3\n");
        let p = src.at_byte(11, 3, "here");
        assert_eq!(
            p.to_string(),
            "r.yaml:2:6: here\n  bb: 'srf >= 1nH'\n       ^^^"
        );
        let p = src.at_byte(23, 1, "c");
        assert_eq!((p.line, p.column), (3, 1));
        // a long line is shown as a window around the column
        let long = format!("k: {}X\n", "y".repeat(1000));
        let src = Source::new("r.yaml", &long);
        let p = src.at_byte(1003, 1, "x").to_string();
        let lines: Vec<&str> = p.lines().collect();
        assert!(lines[1].chars().count() < 200);
        let caret = lines[2].chars().position(|c| c == '^').unwrap();
        assert_eq!(lines[1].chars().nth(caret), Some('X'));
    }

    #[test]
    fn yaml_messages_lose_the_crate_prefix() {
        assert_eq!(
            clean_message("error: line 2 column 1: duplicate mapping key: a, set DuplicateKeyPolicy in Options if acceptable"),
            "YAML: duplicate mapping key: a"
        );
    }
}
