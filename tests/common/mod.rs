//! Helpers shared by several test files. A test file uses only some of them.
#![allow(dead_code)]

pub mod field;
pub mod screen;

use std::collections::BTreeMap;
use std::path::Path;

/// The rows of a stored reference CSV under tests/reference/ (comment lines start with `#`;
/// the first other line names the columns): each row's first cell and its numbers by column.
pub fn reference_csv(name: &str) -> Vec<(String, BTreeMap<String, f64>)> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(name);
    let text =
        std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("tests/reference/{name}: {e}"));
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let header: Vec<&str> = lines.next().expect("a header").split(',').collect();
    lines
        .map(|line| {
            let cells: Vec<&str> = line.split(',').collect();
            // An empty cell is a figure the case does not have (no choke): left out.
            let values = header[1..]
                .iter()
                .zip(&cells[1..])
                .filter(|(_, v)| !v.is_empty())
                .map(|(k, v)| (k.to_string(), v.parse::<f64>().expect("a number")))
                .collect();
            (cells[0].to_string(), values)
        })
        .collect()
}
