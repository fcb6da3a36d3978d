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
        names: net
            .tensors
            .iter()
            .enumerate()
            .map(|(k, t)| (t.name.as_str(), k))
            .collect(),
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
    names: std::collections::HashMap<&'a str, usize>,
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

    /// Parses one node. Iterative, with an explicit stack of the
    /// parentheses still open, so a deeply nested tree (a left-deep tree
    /// over a million tensors is a million levels) cannot overflow the
    /// thread's stack.
    fn node(&mut self) -> Result<Node, String> {
        // Each open parenthesis: its left operand once parsed.
        let mut open: Vec<Option<Node>> = Vec::new();
        loop {
            self.skip_ws();
            // Descend through '(' until an operand starts with a name.
            let mut done = match self.chars.peek().copied() {
                Some((_, '(')) => {
                    self.chars.next();
                    open.push(None);
                    continue;
                }
                Some(_) => self.leaf()?,
                None => return Err("the tree text ended early".into()),
            };
            // Climb: a finished operand is the left one of its parenthesis
            // (then a ',' follows and the right one is parsed next) or the
            // right one (then ')' closes the merge, which is itself done).
            loop {
                match open.last_mut() {
                    None => return Ok(done),
                    Some(slot @ None) => {
                        *slot = Some(done);
                        self.expect(',')?;
                        break;
                    }
                    Some(Some(left)) => {
                        let left = *left;
                        self.expect(')')?;
                        open.pop();
                        self.merges.push([left, done]);
                        done = Node::Merge(self.merges.len() - 1);
                    }
                }
            }
        }
    }

    fn leaf(&mut self) -> Result<Node, String> {
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
        let t = *self
            .names
            .get(name.as_str())
            .ok_or_else(|| format!("the network has no tensor named '{name}'"))?;
        if std::mem::replace(&mut self.seen[t], true) {
            return Err(format!("tensor '{name}' appears twice in the tree"));
        }
        Ok(Node::Leaf(t))
    }
}

/// Prints a tree in the nested form with the network's tensor names.
/// Written in one pass over an explicit stack, so deep trees take linear
/// time and no recursion.
pub fn to_nested(tree: &Tree, net: &Network) -> String {
    enum Step {
        Node(usize),
        Text(&'static str),
    }
    let mut out = String::new();
    let mut stack = vec![Step::Node(tree.root())];
    while let Some(step) = stack.pop() {
        match step {
            Step::Text(t) => out.push_str(t),
            Step::Node(n) => match tree.children(n) {
                None => out.push_str(&net.tensors[n].name),
                Some([a, b]) => {
                    out.push('(');
                    stack.extend([
                        Step::Text(")"),
                        Step::Node(b),
                        Step::Text(","),
                        Step::Node(a),
                    ]);
                }
            },
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::NetworkBuilder;

    /// A chain T0 - T1 - ... - T(n-1) of matrices with bond dimension 2.
    fn chain(n: usize) -> Network {
        let mut b = NetworkBuilder::new("chain");
        b.default_dim(2, None).unwrap();
        for k in 0..n {
            let mut idx = Vec::new();
            if k > 0 {
                idx.push(format!("b{}", k - 1));
            }
            if k + 1 < n {
                idx.push(format!("b{k}"));
            }
            b.tensor(&format!("T{k}"), &idx, None, None).unwrap();
        }
        b.build().unwrap()
    }

    #[test]
    fn parses_and_prints_back() {
        let net = chain(4);
        let text = "((T0,(T1,T2)),T3)";
        let tree = parse_nested(text, &net).unwrap();
        assert_eq!(tree.merges(), &[[1, 2], [0, 4], [5, 3]]);
        assert_eq!(to_nested(&tree, &net), text);
        let tree = parse_nested(" ( (T0 ,T1), ( T2,T3 ) ) ", &net).unwrap();
        assert_eq!(to_nested(&tree, &net), "((T0,T1),(T2,T3))");
    }

    #[test]
    fn a_left_deep_tree_of_200000_tensors_does_not_overflow_the_stack() {
        let n = 200_000;
        let net = chain(n);
        let tree = Tree::left_deep(n);
        let text = to_nested(&tree, &net);
        assert_eq!(text.matches('(').count(), n - 1);
        assert_eq!(parse_nested(&text, &net).unwrap(), tree);
    }

    #[test]
    fn malformed_text_is_refused() {
        let net = chain(3);
        for (text, want) in [
            ("(T0)", "expected ','"),
            ("(T0,T1", "expected ')'"),
            ("((T0,T1),T2))", "after the end of the tree"),
            ("((T0,T1),T1)", "appears twice"),
            ("(T0,T1)", "does not use tensor 'T2'"),
            ("((T0,T9),T2)", "no tensor named 'T9'"),
            ("((", "ended early"),
            ("(,T0)", "expected a tensor name"),
        ] {
            let e = parse_nested(text, &net).unwrap_err();
            assert!(e.contains(want), "{text}: {e}");
        }
    }
}
