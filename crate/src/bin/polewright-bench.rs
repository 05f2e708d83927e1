//! Benchmark driver for pole placement (not a test).
//!
//! `polewright-bench CASES.json` reads `{"cases": [{"name", "a", "b", "poles": [[re, im], ...]}]}`
//! (written by `tests/bench/compare_scipy.py`), times `state_feedback_gain` on each case and prints
//! one JSON object per line: `{"name", "seconds" (median per placement), "repeats",
//! "max_rel_error", "eigenvector_condition", "iterations", "error"}`.

use std::time::Instant;

use nalgebra::DMatrix;
use num_complex::Complex64;
use polewright::place::{max_matching_error, state_feedback_gain, PlacementParams};
use serde_json::{json, Value};

fn matrix(v: &Value) -> Option<DMatrix<f64>> {
    let rows = v.as_array()?;
    let n = rows.len();
    let m = rows.first()?.as_array()?.len();
    let mut out = DMatrix::zeros(n, m);
    for (i, r) in rows.iter().enumerate() {
        let r = r.as_array()?;
        if r.len() != m {
            return None;
        }
        for (j, x) in r.iter().enumerate() {
            out[(i, j)] = x.as_f64()?;
        }
    }
    Some(out)
}

fn poles(v: &Value) -> Option<Vec<Complex64>> {
    v.as_array()?.iter().map(|p| Some(Complex64::new(p.get(0)?.as_f64()?, p.get(1)?.as_f64()?))).collect()
}

fn main() {
    let Some(path) = std::env::args().nth(1) else {
        eprintln!("usage: polewright-bench CASES.json");
        std::process::exit(2);
    };
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("polewright-bench: cannot read {path}: {e}");
            std::process::exit(2);
        }
    };
    let doc: Value = match serde_json::from_str(&text) {
        Ok(v) => v,
        Err(e) => {
            eprintln!("polewright-bench: {path} is not JSON: {e}");
            std::process::exit(2);
        }
    };
    let empty = Vec::new();
    for case in doc["cases"].as_array().unwrap_or(&empty) {
        let name = case["name"].as_str().unwrap_or("?").to_string();
        let (Some(a), Some(b), Some(p)) = (matrix(&case["a"]), matrix(&case["b"]), poles(&case["poles"])) else {
            println!("{}", json!({"name": name, "error": "malformed case"}));
            continue;
        };
        let params = PlacementParams::default();
        // Warm-up and result.
        let first = state_feedback_gain(&a, &b, &p, params);
        let result = match first {
            Ok(r) => r,
            Err(e) => {
                println!("{}", json!({"name": name, "error": e.to_string()}));
                continue;
            }
        };
        // Repeat until about 0.3 s has been spent (at least 3, at most 200 runs), report the median.
        let mut times = Vec::new();
        let budget = Instant::now();
        while times.len() < 3 || (budget.elapsed().as_secs_f64() < 0.3 && times.len() < 200) {
            let t = Instant::now();
            let r = state_feedback_gain(&a, &b, &p, params);
            times.push(t.elapsed().as_secs_f64());
            std::hint::black_box(r.ok());
        }
        times.sort_by(f64::total_cmp);
        let median = times[times.len() / 2];
        let err = max_matching_error(&p, &result.achieved_poles, a.norm());
        println!(
            "{}",
            json!({
                "name": name,
                "seconds": median,
                "repeats": times.len(),
                "max_rel_error": err,
                "eigenvector_condition": if result.eigenvector_condition.is_finite() { json!(result.eigenvector_condition) } else { json!(null) },
                "iterations": result.iterations,
                "error": null,
            })
        );
    }
}
