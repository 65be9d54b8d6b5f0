//! A tiny reader for the committed reference-vector CSV files in tests/vectors/.
//!
//! Lines starting with `#` are provenance comments; the first other line names the columns;
//! every further line is a row of numbers (`nan` allowed).

/// A parsed vector file: column names and numeric rows.
pub struct Vectors {
    pub columns: Vec<String>,
    pub rows: Vec<Vec<f64>>,
}

impl Vectors {
    /// Parses the text of a vector file; panics (test-only code) on a malformed file.
    pub fn parse(text: &str) -> Self {
        let mut lines = text
            .lines()
            .map(str::trim)
            .filter(|l| !l.is_empty() && !l.starts_with('#'));
        let columns: Vec<String> = lines
            .next()
            .expect("vector file has a header line")
            .split(',')
            .map(|c| c.trim().to_string())
            .collect();
        let rows: Vec<Vec<f64>> = lines
            .map(|line| {
                let row: Vec<f64> = line
                    .split(',')
                    .map(|v| {
                        v.trim()
                            .parse::<f64>()
                            .unwrap_or_else(|e| panic!("bad number {v:?}: {e}"))
                    })
                    .collect();
                assert_eq!(
                    row.len(),
                    columns.len(),
                    "row {line:?} has the wrong number of fields"
                );
                row
            })
            .collect();
        assert!(!rows.is_empty(), "vector file has no rows");
        Self { columns, rows }
    }

    /// Index of a named column; panics if it is missing.
    pub fn col(&self, name: &str) -> usize {
        self.columns
            .iter()
            .position(|c| c == name)
            .unwrap_or_else(|| panic!("column {name} missing from {:?}", self.columns))
    }
}
