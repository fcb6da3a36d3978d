//! A plain aligned text table.

/// Rows of cells printed with aligned columns; numeric-looking cells are
/// right-aligned.
#[derive(Debug, Clone, Default)]
pub struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column headings.
    pub fn new<S: Into<String>>(header: impl IntoIterator<Item = S>) -> Table {
        Table {
            header: header.into_iter().map(Into::into).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends a row.
    pub fn row<S: Into<String>>(&mut self, cells: impl IntoIterator<Item = S>) {
        self.rows.push(cells.into_iter().map(Into::into).collect());
    }

    /// Renders the table, each line indented by `indent` spaces.
    pub fn render(&self, indent: usize) -> String {
        let cols = self.header.len();
        let mut width = vec![0; cols];
        for r in std::iter::once(&self.header).chain(&self.rows) {
            for (c, cell) in r.iter().enumerate().take(cols) {
                width[c] = width[c].max(cell.chars().count());
            }
        }
        // A column whose every data cell is numeric is right-aligned,
        // heading included.
        let numeric_col: Vec<bool> = (0..cols)
            .map(|c| {
                !self.rows.is_empty()
                    && self
                        .rows
                        .iter()
                        .all(|r| r.get(c).is_none_or(|x| x.is_empty() || looks_numeric(x)))
            })
            .collect();
        let pad = " ".repeat(indent);
        let mut out = String::new();
        for (i, r) in std::iter::once(&self.header).chain(&self.rows).enumerate() {
            let mut line = pad.clone();
            for (c, cell) in r.iter().enumerate().take(cols) {
                let numeric = numeric_col[c] || (i > 0 && looks_numeric(cell));
                let fill = width[c] - cell.chars().count();
                if c > 0 {
                    line.push_str("  ");
                }
                if numeric {
                    line.push_str(&" ".repeat(fill));
                    line.push_str(cell);
                } else {
                    line.push_str(cell);
                    if c + 1 < cols {
                        line.push_str(&" ".repeat(fill));
                    }
                }
            }
            out.push_str(line.trim_end());
            out.push('\n');
        }
        out
    }
}

fn looks_numeric(cell: &str) -> bool {
    !cell.is_empty()
        && cell
            .chars()
            .all(|c| c.is_ascii_digit() || ".,-+x^e%".contains(c))
}

#[cfg(test)]
mod tests {
    #[test]
    fn aligns_columns() {
        let mut t = super::Table::new(["name", "ops"]);
        t.row(["a", "15,125"]);
        t.row(["long name", "7"]);
        assert_eq!(
            t.render(0),
            "name          ops\na          15,125\nlong name       7\n"
        );
    }
}
