//! The nested-parentheses form of a tree, e.g. `((A1,(A2,A3)),((A4,A5),A6))`.
//!
//! Leaves are tensor names; each pair of parentheses is one contraction of
//! exactly two operands. It is handy for small hand-written trees and for
//! printing; large trees are stored as merge lists.

use super::Tree;
use crate::network::Network;

/// Parses the nested form against a network's tensor names.
pub fn parse_nested(text: &str, net: &Network) -> Result<Tree, String> {
    let mut parser = Parser {
        chars: text.char_indices().peekable(),
        net,
        merges: Vec::new(),
        seen: vec![false; net.num_tensors()],
    };
    let _root = parser.node()?;
    parser.skip_ws();
    if let Some((pos, c)) = parser.chars.next() {
        return Err(format!(
            "unexpected '{c}' at character {} after the end of the tree",
            pos + 1
        ));
    }
    if let Some(t) = parser.seen.iter().position(|s| !s) {
        return Err(format!(
            "the tree does not use tensor '{}'; every tensor must appear exactly once",
            net.tensors[t].name
        ));
    }
    // The parser numbers merges in post-order, which is already a valid
    // single-assignment order; translate its temporary ids.
    let leaves = net.num_tensors();
    let merges = parser
        .merges
        .into_iter()
        .map(|[a, b]| [a.resolve(leaves), b.resolve(leaves)])
        .collect();
    Tree::new(leaves, merges)
}

#[derive(Clone, Copy)]
enum Node {
    Leaf(usize),
    Merge(usize),
}

impl Node {
    fn resolve(self, leaves: usize) -> usize {
        match self {
            Node::Leaf(t) => t,
            Node::Merge(k) => leaves + k,
        }
    }
}

struct Parser<'a> {
    chars: std::iter::Peekable<std::str::CharIndices<'a>>,
    net: &'a Network,
    merges: Vec<[Node; 2]>,
    seen: Vec<bool>,
}

impl Parser<'_> {
    fn skip_ws(&mut self) {
        while matches!(self.chars.peek(), Some((_, c)) if c.is_whitespace()) {
            self.chars.next();
        }
    }

    fn expect(&mut self, want: char) -> Result<(), String> {
        self.skip_ws();
        match self.chars.next() {
            Some((_, c)) if c == want => Ok(()),
            Some((pos, c)) => Err(format!(
                "expected '{want}' at character {}, found '{c}'",
                pos + 1
            )),
            None => Err(format!("expected '{want}', found the end of the text")),
        }
    }

    fn node(&mut self) -> Result<Node, String> {
        self.skip_ws();
        match self.chars.peek().copied() {
            Some((_, '(')) => {
                self.chars.next();
                let a = self.node()?;
                self.expect(',')?;
                let b = self.node()?;
                self.expect(')')?;
                self.merges.push([a, b]);
                Ok(Node::Merge(self.merges.len() - 1))
            }
            Some(_) => {
                let mut name = String::new();
                while let Some(&(_, c)) = self.chars.peek() {
                    if c == '(' || c == ')' || c == ',' || c.is_whitespace() {
                        break;
                    }
                    name.push(c);
                    self.chars.next();
                }
                if name.is_empty() {
                    return Err("expected a tensor name or '('".into());
                }
                let t = self
                    .net
                    .tensor_id(&name)
                    .ok_or_else(|| format!("the network has no tensor named '{name}'"))?;
                if std::mem::replace(&mut self.seen[t], true) {
                    return Err(format!("tensor '{name}' appears twice in the tree"));
                }
                Ok(Node::Leaf(t))
            }
            None => Err("the tree text ended early".into()),
        }
    }
}

/// Prints a tree in the nested form with the network's tensor names.
pub fn to_nested(tree: &Tree, net: &Network) -> String {
    let mut text: Vec<String> = net.tensors.iter().map(|t| t.name.clone()).collect();
    for &[a, b] in tree.merges() {
        let s = format!(
            "({},{})",
            std::mem::take(&mut text[a]),
            std::mem::take(&mut text[b])
        );
        text.push(s);
    }
    text.swap_remove(tree.root())
}
