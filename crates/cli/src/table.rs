//! Plain aligned text tables: a header line, a rule, then rows.

/// How a column's cells line up.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Flush left (names, text).
    Left,
    /// Flush right (numbers).
    Right,
}

/// A table built row by row and rendered with two spaces between columns.
#[derive(Debug, Clone, Default)]
pub struct Table {
    headers: Vec<String>,
    aligns: Vec<Align>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column headers and alignments.
    pub fn new(columns: &[(&str, Align)]) -> Self {
        Self {
            headers: columns.iter().map(|(h, _)| (*h).to_string()).collect(),
            aligns: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }

    /// A table whose headers are computed (probe names); every column aligned as given.
    ///
    /// # Panics
    /// When the two lists differ in length (a programming error).
    pub fn with_headers(headers: Vec<String>, aligns: Vec<Align>) -> Self {
        assert_eq!(
            headers.len(),
            aligns.len(),
            "one alignment per header is required"
        );
        Self {
            headers,
            aligns,
            rows: Vec::new(),
        }
    }

    /// Appends a row.
    ///
    /// # Panics
    /// When the row does not have one cell per column (a programming error).
    pub fn push(&mut self, row: Vec<String>) {
        assert_eq!(
            row.len(),
            self.headers.len(),
            "a row needs one cell per column"
        );
        self.rows.push(row);
    }

    /// Whether no row has been added.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// The table as text, each line ending in `\n`, no trailing spaces.
    pub fn render(&self) -> String {
        let widths = self.widths();
        let mut out = String::new();
        self.render_line(&mut out, &self.headers, &widths);
        let rule: Vec<String> = widths.iter().map(|w| "─".repeat(*w)).collect();
        let rule_aligns = vec![Align::Left; widths.len()];
        render_cells(&mut out, &rule, &widths, &rule_aligns);
        for row in &self.rows {
            self.render_line(&mut out, row, &widths);
        }
        out
    }

    fn widths(&self) -> Vec<usize> {
        let mut widths: Vec<usize> = self.headers.iter().map(|h| width(h)).collect();
        for row in &self.rows {
            for (w, cell) in widths.iter_mut().zip(row) {
                *w = (*w).max(width(cell));
            }
        }
        widths
    }

    fn render_line(&self, out: &mut String, cells: &[String], widths: &[usize]) {
        render_cells(out, cells, widths, &self.aligns);
    }
}

fn render_cells(out: &mut String, cells: &[String], widths: &[usize], aligns: &[Align]) {
    let mut line = String::new();
    for (i, cell) in cells.iter().enumerate() {
        if i > 0 {
            line.push_str("  ");
        }
        let pad = widths[i] - width(cell);
        match aligns[i] {
            Align::Left => {
                line.push_str(cell);
                line.push_str(&" ".repeat(pad));
            }
            Align::Right => {
                line.push_str(&" ".repeat(pad));
                line.push_str(cell);
            }
        }
    }
    out.push_str(line.trim_end());
    out.push('\n');
}

/// Display width in terminal columns; every character the tool prints (`µ`, `Ω`,
/// `°`, `−`, box rules) is one column wide.
fn width(text: &str) -> usize {
    text.chars().count()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_align_and_lines_have_no_trailing_space() {
        let mut table = Table::new(&[("f [Hz]", Align::Right), ("note", Align::Left)]);
        table.push(vec!["15.92 kHz".into(), "corner".into()]);
        table.push(vec!["1.000 Hz".into(), String::new()]);
        let text = table.render();
        let expected = "   f [Hz]  note\n\
                        ─────────  ──────\n\
                        15.92 kHz  corner\n\
                        \x201.000 Hz\n";
        assert_eq!(text, expected);
    }

    #[test]
    fn multibyte_units_count_as_one_column() {
        let mut table = Table::new(&[("R", Align::Right)]);
        table.push(vec!["4.700 kΩ".into()]);
        table.push(vec!["10 Ω".into()]);
        let text = table.render();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[2].chars().count(), lines[3].chars().count());
    }
}
