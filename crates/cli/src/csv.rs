//! CSV output: a header line, then one line per row; numbers in SI base units.

use crate::eng;

/// A CSV document built row by row.
#[derive(Debug, Clone, Default)]
pub struct Csv {
    text: String,
    columns: usize,
}

/// One cell of a row.
#[derive(Debug, Clone)]
pub enum Cell {
    /// A number, written so it reads back exactly; a missing value is an empty cell.
    Number(Option<f64>),
    /// Text, quoted when it needs to be.
    Text(String),
}

impl Csv {
    /// A document with this header.
    pub fn new(header: &[String]) -> Self {
        let mut csv = Self {
            text: String::new(),
            columns: header.len(),
        };
        let cells: Vec<Cell> = header.iter().cloned().map(Cell::Text).collect();
        csv.push(&cells);
        csv
    }

    /// Appends a row.
    ///
    /// # Panics
    /// When the row does not have one cell per column (a programming error).
    pub fn push(&mut self, row: &[Cell]) {
        assert_eq!(
            row.len(),
            self.columns,
            "a CSV row needs one cell per column"
        );
        let cells: Vec<String> = row.iter().map(render_cell).collect();
        self.text.push_str(&cells.join(","));
        self.text.push('\n');
    }

    /// The document.
    pub fn into_text(self) -> String {
        self.text
    }
}

fn render_cell(cell: &Cell) -> String {
    match cell {
        Cell::Number(Some(value)) => eng::machine(*value),
        Cell::Number(None) => String::new(),
        Cell::Text(text) => quote(text),
    }
}

/// Quotes a field that holds a comma, a quote or a line break (RFC 4180).
fn quote(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn reads_back_with_a_csv_reader() {
        let mut csv = Csv::new(&["frequency_hz".into(), "out_db".into(), "note".into()]);
        csv.push(&[
            Cell::Number(Some(15_915.494_309_189_535)),
            Cell::Number(Some(-3.0103)),
            Cell::Text("a, \"b\"".into()),
        ]);
        csv.push(&[
            Cell::Number(Some(1e-12)),
            Cell::Number(None),
            Cell::Text(String::new()),
        ]);
        let text = csv.into_text();
        let mut reader = ::csv::Reader::from_reader(text.as_bytes());
        assert_eq!(
            reader.headers().unwrap(),
            vec!["frequency_hz", "out_db", "note"]
        );
        let rows: Vec<_> = reader.records().map(Result::unwrap).collect();
        assert_eq!(rows[0][0].parse::<f64>().unwrap(), 15_915.494_309_189_535);
        assert_eq!(&rows[0][2], "a, \"b\"");
        assert_eq!(rows[1][0].parse::<f64>().unwrap(), 1e-12);
        assert_eq!(&rows[1][1], "");
    }
}
