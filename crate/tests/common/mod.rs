//! Helpers shared by the integration tests: reading the committed scipy/numpy fixtures.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly
#![allow(dead_code)]

use nalgebra::DMatrix;
use num_complex::Complex64;
use serde_json::Value;

/// Reads `tests/fixtures/NAME` from the repository root.
pub fn fixture(name: &str) -> Value {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../tests/fixtures").join(name);
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read fixture {}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("fixture {} is not JSON: {e}", path.display()))
}

pub fn matrix(v: &Value) -> DMatrix<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().expect("matrix rows").iter().map(|r| r.as_array().expect("row").iter().map(|x| x.as_f64().expect("number")).collect()).collect();
    let n = rows.len();
    let m = rows.first().map_or(0, |r| r.len());
    DMatrix::from_fn(n, m, |i, j| rows[i][j])
}

pub fn complex_list(v: &Value) -> Vec<Complex64> {
    v.as_array()
        .expect("list")
        .iter()
        .map(|p| {
            let p = p.as_array().expect("[re, im]");
            Complex64::new(p[0].as_f64().expect("re"), p[1].as_f64().expect("im"))
        })
        .collect()
}

pub fn f64_of(v: &Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}
