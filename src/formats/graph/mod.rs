//! Graphs from DIMACS `p edge` files or plain edge lists, and the counting
//! and Ising networks built on them ([`problems`]).
//!
//! DIMACS (as in the DIMACS graph-colouring challenge): comment lines `c`,
//! one header `p edge VERTICES EDGES` (`p col` is accepted too), then one
//! `e U V` line per edge with vertices numbered from 1. An optional third
//! number on an `e` line is the edge's Ising coupling.
//!
//! Plain edge list: one edge per line, `U V` or `U V COUPLING`, separated by
//! spaces, tabs or commas; lines starting with `#` or `%` are comments.
//! Vertices are any names and are numbered in order of first appearance; a
//! vertex that is on no edge cannot be written in this form.
//!
//! A file is read as DIMACS when its first line that is neither blank nor a
//! comment starts with `p`. Without that header, a line `e U V` with U and V
//! positive whole numbers is refused as a DIMACS edge line before its
//! header, not read as an edge from a vertex named `e`. The header may
//! declare at most [`MAX_TENSORS`] vertices. Both forms refuse self-loops; an edge listed
//! twice is kept once (with the same coupling, or it is an error).

pub mod problems;

use std::collections::HashMap;
use std::path::Path;

use crate::error::{Error, Result};
use crate::network::MAX_TENSORS;

pub use problems::{graph_network, GraphProblem, ProblemKind};

/// An undirected simple graph with optional per-edge couplings.
#[derive(Debug, Clone, PartialEq)]
pub struct Graph {
    /// Vertex names for tensor and index names (DIMACS numbers, or the edge
    /// list's names when they are all whole numbers, else 0, 1, ...).
    pub names: Vec<String>,
    /// Edges as pairs of vertex positions, in file order.
    pub edges: Vec<(usize, usize)>,
    /// One coupling per edge, when the file gives them.
    pub couplings: Option<Vec<f64>>,
}

impl Graph {
    /// A graph on vertices 0..n (named by their numbers) without couplings.
    pub fn from_edges(n: usize, edges: &[(usize, usize)]) -> Graph {
        Graph {
            names: (0..n).map(|v| v.to_string()).collect(),
            edges: edges.to_vec(),
            couplings: None,
        }
    }

    /// Number of vertices.
    pub fn num_vertices(&self) -> usize {
        self.names.len()
    }
}

/// Collects edges, merging repeats and checking couplings.
struct EdgeSet<'a> {
    source: &'a str,
    seen: HashMap<(usize, usize), (usize, usize)>,
    edges: Vec<(usize, usize)>,
    couplings: Vec<Option<f64>>,
}

impl EdgeSet<'_> {
    fn add(
        &mut self,
        u: usize,
        v: usize,
        w: Option<f64>,
        line: usize,
        shown: (&str, &str),
    ) -> Result<()> {
        if u == v {
            return Err(Error::at_line(self.source, line, format!(
                "self-loop at vertex {}; the graph problems here need simple graphs, remove the line",
                shown.0
            )));
        }
        let key = (u.min(v), u.max(v));
        if let Some(&(k, first)) = self.seen.get(&key) {
            if self.couplings[k] != w {
                return Err(Error::at_line(self.source, line, format!(
                    "edge {} {} is listed again (first on line {first}) with another coupling; give each edge once",
                    shown.0, shown.1
                )));
            }
            return Ok(());
        }
        if !self.couplings.is_empty() && self.couplings[0].is_some() != w.is_some() {
            return Err(Error::at_line(
                self.source,
                line,
                "give a coupling on every edge line or on none",
            ));
        }
        self.seen.insert(key, (self.edges.len(), line));
        self.edges.push((u, v));
        self.couplings.push(w);
        Ok(())
    }

    fn finish(self, names: Vec<String>) -> Graph {
        let couplings = self.couplings.iter().copied().collect::<Option<Vec<f64>>>();
        Graph {
            names,
            edges: self.edges,
            couplings,
        }
    }
}

fn coupling(tok: Option<&str>, source: &str, line: usize) -> Result<Option<f64>> {
    match tok {
        None => Ok(None),
        Some(t) => match t.parse::<f64>() {
            Ok(x) if x.is_finite() => Ok(Some(x)),
            _ => Err(Error::at_line(
                source,
                line,
                format!("'{t}' is not a coupling; give a finite number"),
            )),
        },
    }
}

fn is_comment(line: &str, dimacs: bool) -> bool {
    line.starts_with('#') || line.starts_with('%') || (dimacs && line.starts_with('c'))
}

/// Parses a graph file's text; `source` names it in errors.
pub fn parse_graph(text: &str, source: &str) -> Result<Graph> {
    let lines: Vec<(usize, &str)> = text
        .split('\n')
        .enumerate()
        .map(|(k, l)| (k + 1, l.trim()))
        .filter(|(_, l)| !l.is_empty())
        .collect();
    let dimacs = lines
        .iter()
        .find(|(_, l)| !is_comment(l, true))
        .is_some_and(|(_, l)| l.starts_with('p'));
    let lines = lines.into_iter().filter(|(_, l)| !is_comment(l, dimacs));
    if dimacs {
        parse_dimacs(lines, source)
    } else {
        parse_edge_list(lines, source)
    }
}

fn parse_dimacs<'a>(lines: impl Iterator<Item = (usize, &'a str)>, source: &str) -> Result<Graph> {
    let mut header: Option<(usize, usize, usize)> = None;
    let mut set = EdgeSet {
        source,
        seen: HashMap::new(),
        edges: Vec::new(),
        couplings: Vec::new(),
    };
    let mut lines_seen = 0usize;
    for (no, line) in lines {
        let f: Vec<&str> = line.split_whitespace().collect();
        match f[0] {
            "p" => {
                if let Some((_, _, at)) = header {
                    return Err(Error::at_line(source, no, format!("a second `p` header (the first is on line {at})")));
                }
                let parsed = match f.as_slice() {
                    ["p", "edge" | "col", n, m] => n.parse::<usize>().ok().zip(m.parse::<usize>().ok()),
                    _ => None,
                };
                let (n, m) = parsed.ok_or_else(|| {
                    Error::at_line(source, no, format!("malformed header '{line}'; expected `p edge VERTICES EDGES`"))
                })?;
                // Checked before anything is built per vertex: each vertex
                // becomes at least one tensor.
                if n > MAX_TENSORS {
                    return Err(Error::at_line(source, no, format!(
                        "{n} vertices is more than this reader accepts (2^23 = {MAX_TENSORS}, the most tensors a network may have)"
                    )));
                }
                header = Some((n, m, no));
            }
            "e" => {
                let Some((n, _, _)) = header else {
                    return Err(Error::at_line(source, no, "edge before the `p edge VERTICES EDGES` header"));
                };
                if f.len() != 3 && f.len() != 4 {
                    return Err(Error::at_line(source, no, format!("malformed edge '{line}'; expected `e U V` or `e U V COUPLING`")));
                }
                let vertex = |t: &str| -> Result<usize> {
                    match t.parse::<usize>() {
                        Ok(v) if (1..=n).contains(&v) => Ok(v - 1),
                        _ => Err(Error::at_line(source, no, format!("vertex '{t}' is out of range; the header declares vertices 1..{n}"))),
                    }
                };
                let (u, v) = (vertex(f[1])?, vertex(f[2])?);
                set.add(u, v, coupling(f.get(3).copied(), source, no)?, no, (f[1], f[2]))?;
                lines_seen += 1;
            }
            other => {
                return Err(Error::at_line(source, no, format!(
                    "unexpected line type '{other}'; DIMACS graph lines are `c` (comment), `p edge N M` and `e U V`"
                )))
            }
        }
    }
    let (n, m, at) = header
        .ok_or_else(|| Error::in_source(source, "no `p edge VERTICES EDGES` header found"))?;
    if lines_seen != m {
        return Err(Error::at_line(source, at, format!(
            "the header declares {m} edges but the file has {lines_seen} `e` lines; fix the `p edge` line"
        )));
    }
    Ok(set.finish((1..=n).map(|v| v.to_string()).collect()))
}

fn parse_edge_list<'a>(
    lines: impl Iterator<Item = (usize, &'a str)>,
    source: &str,
) -> Result<Graph> {
    let mut set = EdgeSet {
        source,
        seen: HashMap::new(),
        edges: Vec::new(),
        couplings: Vec::new(),
    };
    let mut ids: HashMap<String, usize> = HashMap::new();
    let mut labels: Vec<String> = Vec::new();
    for (no, line) in lines {
        let f: Vec<&str> = line
            .split(|c: char| c.is_whitespace() || c == ',')
            .filter(|s| !s.is_empty())
            .collect();
        let positive = |t: &str| t.parse::<u64>().is_ok_and(|n| n >= 1);
        if f.len() >= 3 && f[0] == "e" && positive(f[1]) && positive(f[2]) {
            return Err(Error::at_line(source, no, format!(
                "'{line}' is a DIMACS edge line, but no `p edge VERTICES EDGES` header comes before it; add the header as the first line (in a plain edge list, rename the vertex 'e')"
            )));
        }
        if f.len() != 2 && f.len() != 3 {
            return Err(Error::at_line(source, no, format!(
                "'{line}' is not an edge; write `U V` or `U V COUPLING` (comments start with # or %)"
            )));
        }
        let mut vertex = |t: &str| -> usize {
            *ids.entry(t.to_string()).or_insert_with(|| {
                labels.push(t.to_string());
                labels.len() - 1
            })
        };
        let (u, v) = (vertex(f[0]), vertex(f[1]));
        set.add(
            u,
            v,
            coupling(f.get(2).copied(), source, no)?,
            no,
            (f[0], f[1]),
        )?;
    }
    if set.edges.is_empty() {
        return Err(Error::in_source(
            source,
            "no edges found; an edge list has one `U V` pair per line",
        ));
    }
    let numeric = labels.iter().all(|l| l.bytes().all(|b| b.is_ascii_digit()));
    let names = if numeric {
        labels
    } else {
        (0..labels.len()).map(|v| v.to_string()).collect()
    };
    Ok(set.finish(names))
}

/// Reads a graph file.
pub fn read_graph(path: &Path) -> Result<Graph> {
    let text = crate::io::read_text(path)?;
    parse_graph(&text, &path.display().to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dimacs_and_edge_lists() {
        let g = parse_graph(
            "c triangle\r\np edge 3 3\r\ne 1 2\r\ne 2 3\r\ne 1 3\r\n",
            "t",
        )
        .unwrap();
        assert_eq!(g.edges, vec![(0, 1), (1, 2), (0, 2)]);
        assert_eq!(g.names, vec!["1", "2", "3"]);
        let g = parse_graph("# a path\na b 0.5\nb,c,-1\nb a 0.5\n", "t").unwrap();
        assert_eq!(g.edges, vec![(0, 1), (1, 2)]);
        assert_eq!(g.couplings, Some(vec![0.5, -1.0]));
        assert_eq!(g.names, vec!["0", "1", "2"]);
    }

    #[test]
    fn a_vertex_named_e_is_fine_when_the_line_is_not_dimacs() {
        // Only `e`, then two positive whole numbers, reads as a DIMACS line.
        let g = parse_graph("e 1 -2\ne x -2\n1 x 0.5\ne 0 1\n", "t").unwrap();
        // Hand count: edges e-1, e-x, 1-x, e-0 on vertices e, 1, x, 0.
        assert_eq!(g.edges.len(), 4);
        assert_eq!(g.names.len(), 4);
        let g = parse_graph("e 1\n1 2\n", "t").unwrap();
        assert_eq!(g.edges, vec![(0, 1), (1, 2)]);
    }

    #[test]
    fn malformed_graphs_are_named() {
        let cases = [
            ("p edge 3 1\ne 1 4\n", "t:2: vertex '4' is out of range"),
            (
                "p edge 3 2\ne 1 2\n",
                "t:1: the header declares 2 edges but the file has 1",
            ),
            ("p edge x 2\n", "t:1: malformed header"),
            ("p edge 3 1\ne 2 2\n", "t:2: self-loop at vertex 2"),
            ("1 2\n3\n", "t:2: '3' is not an edge"),
            (
                "1 2 1.0\n2 3\n",
                "t:2: give a coupling on every edge line or on none",
            ),
            (
                "1 2 0.5\n2 1 0.7\n",
                "t:2: edge 2 1 is listed again (first on line 1)",
            ),
            ("p edge 3 1\nx 1 2\n", "t:2: unexpected line type 'x'"),
            ("1 2 inf\n", "t:1: 'inf' is not a coupling"),
            (
                "e 1 2\ne 2 3\n",
                "t:1: 'e 1 2' is a DIMACS edge line, but no `p edge VERTICES EDGES` header comes before it",
            ),
            (
                "# no header\n\ne 1 2 0.5\n",
                "t:3: 'e 1 2 0.5' is a DIMACS edge line, but no `p edge",
            ),
            // 2^23 + 1 = 8388609 vertices: one over MAX_TENSORS.
            (
                "p edge 8388609 1\ne 1 2\n",
                "t:1: 8388609 vertices is more than this reader accepts (2^23 = 8388608,",
            ),
        ];
        for (text, want) in cases {
            let e = parse_graph(text, "t").unwrap_err().to_string();
            assert!(e.starts_with(want), "{text:?}: {e}");
        }
    }
}
