//! Helpers shared by several test files. A test file uses only some of them.
#![allow(dead_code)]

pub mod field;
pub mod screen;

use std::collections::BTreeMap;
use std::path::Path;

/// The rows of a stored reference CSV under tests/reference/ (comment lines start with `#`;
/// the first other line names the columns): each row's first cell and its other cells by
/// column, as written (an empty cell, a figure the case does not have, left out).
pub fn reference_rows(name: &str) -> Vec<(String, BTreeMap<String, String>)> {
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
            let values = header[1..]
                .iter()
                .zip(&cells[1..])
                .filter(|(_, v)| !v.is_empty())
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
            (cells[0].to_string(), values)
        })
        .collect()
}

/// As [`reference_rows`], every cell a number.
pub fn reference_csv(name: &str) -> Vec<(String, BTreeMap<String, f64>)> {
    reference_rows(name)
        .into_iter()
        .map(|(case, cells)| {
            let values = cells
                .into_iter()
                .map(|(k, v)| (k, v.parse::<f64>().expect("a number")))
                .collect();
            (case, values)
        })
        .collect()
}

/// One case of a stored reference CSV whose rows name a supply file (a `file` column,
/// relative to tests/reference/) and perhaps a fault (a `fault` column, empty for none).
pub struct FileCase {
    pub name: String,
    pub file: String,
    pub fault: String,
    pub values: BTreeMap<String, f64>,
}

impl FileCase {
    /// Each (CSV column, engine JSON key, relative tolerance) of `checks` the case has a value
    /// for, against the engine's figures `got`; a figure the engine does not give is a failure
    /// of the test itself (these are figures every supply has).
    pub fn compare(
        &self,
        got: &serde_json::Value,
        checks: &[(&str, &str, f64)],
        compared: &mut Comparison,
    ) {
        for &(column, key, tol) in checks {
            let Some(&w) = self.values.get(column) else {
                continue;
            };
            let g = got[key]
                .as_f64()
                .unwrap_or_else(|| panic!("{}: {key} missing", self.name));
            compared.figure(&self.name, column, g, w, tol);
        }
    }

    /// As [`FileCase::compare`], for figures a supply may not have (a second capacitor's):
    /// compared where both sides give one.
    pub fn compare_where_given(
        &self,
        got: &serde_json::Value,
        checks: &[(&str, &str, f64)],
        compared: &mut Comparison,
    ) {
        for &(column, key, tol) in checks {
            if let (Some(&w), Some(g)) = (self.values.get(column), got[key].as_f64()) {
                compared.figure(&self.name, column, g, w, tol);
            }
        }
    }

    /// The ripple's frequency: the same harmonic as ngspice's, within half a hertz.
    pub fn compare_ripple_hz(&self, got: &serde_json::Value, compared: &mut Comparison) {
        let hz = got["ripple_hz"].as_f64().unwrap();
        if (hz - self.values["ripple_hz"]).abs() > 0.5 {
            compared.fail(format!(
                "{} ripple_hz: engine {hz}, ngspice {}",
                self.name, self.values["ripple_hz"]
            ));
        }
    }
}

/// The rows of such a CSV: the case, its file and fault (text), its figures by column.
pub fn file_cases(csv: &str) -> Vec<FileCase> {
    reference_rows(csv)
        .into_iter()
        .map(|(name, mut cells)| {
            let file = cells.remove("file").expect("a file column");
            let fault = cells.remove("fault").unwrap_or_default();
            let values = cells
                .into_iter()
                .map(|(k, v)| (k, v.parse::<f64>().expect("a number")))
                .collect();
            FileCase {
                name,
                file,
                fault,
                values,
            }
        })
        .collect()
}

/// The supply file `file` under tests/reference/.
pub fn reference_supply(file: &str) -> railcheck::Supply {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference")
        .join(file);
    railcheck::Supply::from_toml_str(&std::fs::read_to_string(&path).unwrap())
        .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// A comparison of the engine's figures against a stored reference: each figure's relative
/// error, the largest per figure with where it came, and the figures beyond their tolerance.
#[derive(Default)]
pub struct Comparison {
    worst: BTreeMap<String, (f64, String)>,
    failures: Vec<String>,
}

impl Comparison {
    /// Compares `got` with `want` for figure `key` of the case named `at`, against `tol`
    /// (a fraction of `want`).
    pub fn figure(&mut self, at: &str, key: &str, got: f64, want: f64, tol: f64) {
        let err = (got - want).abs() / want.abs().max(1e-12);
        let entry = self
            .worst
            .entry(key.to_string())
            .or_insert((0.0, String::new()));
        if err > entry.0 {
            *entry = (err, at.to_string());
        }
        if err > tol {
            self.failures.push(format!(
                "{at} {key}: engine {got:.5}, reference {want:.5} ({:+.2} %)",
                100.0 * (got - want) / want
            ));
        }
    }

    /// Notes a failure of some other kind (a harmonic, a missing figure).
    pub fn fail(&mut self, what: String) {
        self.failures.push(what);
    }

    /// Prints the largest difference of each figure, then fails with every one beyond its
    /// tolerance.
    pub fn finish(self) {
        for (key, (err, at)) in &self.worst {
            println!("largest {key} difference: {:.3} % ({at})", 100.0 * err);
        }
        assert!(
            self.failures.is_empty(),
            "outside tolerance:\n{}",
            self.failures.join("\n")
        );
    }
}
