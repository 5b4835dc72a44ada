//! Plain-text tables for the terminal: a header, a rule, aligned columns.
//! No colour and no box drawing, so the output pastes cleanly into mail,
//! tickets and logs.

/// Column alignment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Left-aligned (names, text).
    Left,
    /// Right-aligned (numbers).
    Right,
}

/// A table under construction.
#[derive(Debug, Clone)]
pub struct Table {
    headers: Vec<(String, Align)>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column headers and alignments.
    pub fn new(headers: Vec<(&str, Align)>) -> Self {
        Self {
            headers: headers
                .into_iter()
                .map(|(h, a)| (h.to_string(), a))
                .collect(),
            rows: Vec::new(),
        }
    }
    /// Add a row (missing cells are blank, extra cells are dropped).
    pub fn row(&mut self, mut cells: Vec<String>) {
        cells.resize(self.headers.len(), String::new());
        self.rows.push(cells);
    }
    /// Number of rows so far.
    pub fn len(&self) -> usize {
        self.rows.len()
    }
    /// True when no row was added.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }
    /// Render with two spaces between columns and a rule under the header.
    pub fn render(&self) -> String {
        let n = self.headers.len();
        let mut w: Vec<usize> = self.headers.iter().map(|h| h.0.chars().count()).collect();
        for r in &self.rows {
            for (i, c) in r.iter().enumerate().take(n) {
                w[i] = w[i].max(c.chars().count());
            }
        }
        let mut out = String::new();
        let line = |cells: &[String], out: &mut String| {
            let mut s = String::new();
            for (i, c) in cells.iter().enumerate().take(n) {
                let pad = w[i].saturating_sub(c.chars().count());
                if i > 0 {
                    s.push_str("  ");
                }
                match self.headers[i].1 {
                    Align::Left => {
                        s.push_str(c);
                        if i + 1 < n {
                            s.push_str(&" ".repeat(pad));
                        }
                    }
                    Align::Right => {
                        s.push_str(&" ".repeat(pad));
                        s.push_str(c);
                    }
                }
            }
            out.push_str(s.trim_end());
            out.push('\n');
        };
        let hdr: Vec<String> = self.headers.iter().map(|h| h.0.clone()).collect();
        line(&hdr, &mut out);
        let total: usize = w.iter().sum::<usize>() + 2 * n.saturating_sub(1);
        out.push_str(&"-".repeat(total));
        out.push('\n');
        for r in &self.rows {
            line(r, &mut out);
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn aligns_columns() {
        let mut t = Table::new(vec![("name", Align::Left), ("value", Align::Right)]);
        t.row(vec!["a".into(), "1.00 W".into()]);
        t.row(vec!["longer".into(), "20.0 W".into()]);
        let s = t.render();
        let lines: Vec<&str> = s.lines().collect();
        assert_eq!(lines.len(), 4);
        assert_eq!(lines[2], "a       1.00 W");
        assert_eq!(lines[3], "longer  20.0 W");
        assert!(lines[1].chars().all(|c| c == '-'));
    }
}
