//! Shared helpers for the validation tests: reading the committed reference
//! tables in `tests/data/` and comparing numbers with a stated tolerance.
//!
//! Reference tables are CSV files whose leading `#` lines state their
//! provenance (generating script, library versions, method). The first
//! non-comment line holds the column names, each with its unit in brackets.

pub mod bidisperse;
pub mod kynch;

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use turbid_engine::physics::drag::DragLaw;

/// Absolute path of a file in `tests/data/`.
pub fn data_path(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("data")
        .join(name)
}

/// A numeric reference table: named columns of f64 (empty cells read as NaN).
#[derive(Debug, Clone)]
pub struct Table {
    pub provenance: Vec<String>,
    pub columns: Vec<String>,
    pub rows: Vec<Vec<f64>>,
    index: HashMap<String, usize>,
}

impl Table {
    /// Read `tests/data/<name>`; panics with a clear message if the file is
    /// missing or malformed (a test fixture problem, not a user input).
    pub fn read(name: &str) -> Table {
        let path = data_path(name);
        let text = std::fs::read_to_string(&path)
            .unwrap_or_else(|e| panic!("cannot read reference table {}: {e}", path.display()));
        let mut provenance = Vec::new();
        let mut body = String::new();
        for line in text.lines() {
            if let Some(c) = line.strip_prefix('#') {
                provenance.push(c.trim().to_string());
            } else if !line.trim().is_empty() {
                body.push_str(line);
                body.push('\n');
            }
        }
        assert!(
            !provenance.is_empty(),
            "{}: reference tables must state their provenance in '#' lines",
            path.display()
        );
        let mut rdr = csv::ReaderBuilder::new().from_reader(body.as_bytes());
        let columns: Vec<String> = rdr
            .headers()
            .unwrap_or_else(|e| panic!("{}: bad header: {e}", path.display()))
            .iter()
            .map(|s| s.trim().to_string())
            .collect();
        let mut rows = Vec::new();
        for (i, rec) in rdr.records().enumerate() {
            let rec = rec.unwrap_or_else(|e| panic!("{}: row {}: {e}", path.display(), i + 1));
            let row = rec
                .iter()
                .map(|s| {
                    let s = s.trim();
                    if s.is_empty() {
                        f64::NAN
                    } else {
                        s.parse::<f64>().unwrap_or_else(|e| {
                            panic!(
                                "{}: row {}: '{s}' is not a number: {e}",
                                path.display(),
                                i + 1
                            )
                        })
                    }
                })
                .collect::<Vec<f64>>();
            assert_eq!(
                row.len(),
                columns.len(),
                "{}: row {} width",
                path.display(),
                i + 1
            );
            rows.push(row);
        }
        assert!(!rows.is_empty(), "{}: no data rows", path.display());
        let index = columns
            .iter()
            .enumerate()
            .map(|(i, c)| (c.clone(), i))
            .collect();
        Table {
            provenance,
            columns,
            rows,
            index,
        }
    }

    /// Column by its exact header name (including the unit in brackets).
    pub fn col(&self, name: &str) -> Vec<f64> {
        let i = *self
            .index
            .get(name)
            .unwrap_or_else(|| panic!("no column '{name}'; have {:?}", self.columns));
        self.rows.iter().map(|r| r[i]).collect()
    }
}

/// Relative difference |a − b| / |b|.
pub fn rel_diff(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// Assert `actual` is within relative tolerance `tol` of `expected`; `what`
/// names the quantity and its source in the failure message.
#[track_caller]
pub fn assert_rel(actual: f64, expected: f64, tol: f64, what: &str) {
    let r = rel_diff(actual, expected);
    assert!(
        r <= tol,
        "{what}: got {actual:.10e}, expected {expected:.10e} (rel. diff {r:.3e} > tol {tol:.1e})"
    );
}

/// Every drag law of the engine with the suffix of its columns in
/// `drag_coefficients.csv` and `terminal_velocity_quartz_20C.csv`.
pub fn drag_laws() -> Vec<(DragLaw, &'static str)> {
    vec![
        (DragLaw::Stokes, "stokes"),
        (DragLaw::SchillerNaumann, "schiller_naumann"),
        (DragLaw::CliftGraceWeber, "clift_grace_weber"),
        (DragLaw::BrownLawler, "brown_lawler"),
        (
            DragLaw::HaiderLevenspiel { sphericity: 1.0 },
            "haider_levenspiel_psi1",
        ),
        (
            DragLaw::HaiderLevenspiel { sphericity: 0.8 },
            "haider_levenspiel_psi0p8",
        ),
        (
            DragLaw::FERGUSON_CHURCH_SMOOTH_SPHERES,
            "ferguson_church_18_0p4",
        ),
        (
            DragLaw::FERGUSON_CHURCH_NATURAL_SIEVE,
            "ferguson_church_18_1p0",
        ),
        (DragLaw::two_term_derived(0.44), "two_term_24_0p44"),
    ]
}

/// Assert `actual` rounds to `printed` (as printed in a published table, in
/// plain or e-notation): |actual − printed| ≤ half a unit in the last digit.
#[track_caller]
pub fn assert_printed(actual: f64, printed: &str, what: &str) {
    let expected: f64 = printed.parse().unwrap();
    let (mantissa, exponent) = match printed.split_once('e') {
        Some((m, e)) => (m, e.parse::<i32>().unwrap()),
        None => (printed, 0),
    };
    let decimals = mantissa.split_once('.').map_or(0, |(_, frac)| frac.len()) as i32;
    let half_unit = 0.5 * 10f64.powi(exponent - decimals);
    let err = (actual - expected).abs();
    assert!(
        err <= half_unit * (1.0 + 1e-9),
        "{what}: got {actual:.6e}, printed {printed} (|diff| {err:.2e} > half a last digit {half_unit:.1e})"
    );
}
