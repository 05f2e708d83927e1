//! Benchmark driver for pole placement (not a test).
//!
//! `polewright-bench CASES.json` reads `{"cases": [{"name", "a", "b", "poles": [[re, im], ...]}]}`
//! (written by `tests/bench/compare_scipy.py`), times `state_feedback_gain` on each case and prints
//! one JSON object per line: `{"name", "seconds" (median per placement), "repeats",
//! "max_rel_error", "eigenvector_condition", "iterations", "gain", "error"}` (the gain, rows =
//! inputs, so that a caller can judge it by its own means).
//!
//! `polewright-bench --loop tests/fixtures/loop.json` times the whole-loop simulation of the
//! ten-state case (observer, integral action, 5000 samples) and prints the median.
//!
//! `polewright-bench --riccati CASES.json` reads `{"cases": [{"name", "domain"
//! ("continuous"/"discrete"), "a", "b", "q", "r", "s" (optional cross weight)}]}` (written by
//! `tests/oracle/check_riccati_benchmarks.py`), solves each LQR problem with the core the design
//! path uses and prints one JSON object per line: `{"name", "x", "gain", "residual",
//! "seconds", "error"}`.

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

fn loop_benchmark(path: &str) {
    use polewright::controller::{AntiWindup, ObserverForm};
    use polewright::loop_sim::{simulate_loop, LoopController, LoopScenario, Noise, TrackingLaw};
    let Ok(text) = std::fs::read_to_string(path) else {
        eprintln!("polewright-bench: cannot read {path}");
        std::process::exit(2);
    };
    let Ok(doc) = serde_json::from_str::<Value>(&text) else {
        eprintln!("polewright-bench: {path} is not JSON");
        std::process::exit(2);
    };
    let empty = Vec::new();
    let Some(case) = doc["cases"].as_array().unwrap_or(&empty).iter().find(|c| c["kind"] == "digital-ten-state") else {
        eprintln!("polewright-bench: no ten-state case in {path}");
        std::process::exit(2);
    };
    let get = |v: &Value| matrix(v).unwrap_or_else(|| DMatrix::zeros(0, 0));
    let vecv = |v: &Value| -> Vec<f64> { v.as_array().map(|a| a.iter().filter_map(|x| x.as_f64()).collect()).unwrap_or_default() };
    let (a, b, c) = (get(&case["a"]), get(&case["b"]), get(&case["c"]));
    let g = &case["gains"];
    let p = c.nrows();
    let ctrl = LoopController {
        k: get(&g["k_x"]),
        k_delay: None,
        observer: Some(get(&g["l"])),
        observer_form: ObserverForm::Predictor,
        current_gain: None,
        tracking: TrackingLaw::Integral { ki: get(&g["k_i"]), anti_windup: AntiWindup::None, feedforward: None },
        tracked_outputs: (0..p).collect(),
        sample_time: case["t_sample"].as_f64(),
    };
    let sc = LoopScenario {
        x0: nalgebra::DVector::from_vec(vecv(&case["x0"])),
        xhat0: None,
        duration: case["duration"].as_f64().unwrap_or(1.0),
        reference: vecv(&case["reference"]),
        reference_time: case["reference_time"].as_f64().unwrap_or(0.0),
        disturbance: vecv(&case["disturbance"]),
        disturbance_time: case["disturbance_time"].as_f64().unwrap_or(0.0),
        disturbance_input: None,
        noise: Noise::None,
        limits: vec![],
        continuous_step: None,
    };
    let d = DMatrix::zeros(p, b.ncols());
    let mut times = Vec::new();
    let mut samples = 0;
    for _ in 0..30 {
        let t = Instant::now();
        match simulate_loop(&a, &b, &c, &d, &ctrl, &sc) {
            Ok(r) => samples = r.time.len() - 1,
            Err(e) => {
                eprintln!("polewright-bench: {e}");
                std::process::exit(1);
            }
        }
        times.push(t.elapsed().as_secs_f64());
    }
    times.sort_by(f64::total_cmp);
    println!(
        "{}",
        json!({"name": case["name"], "states": a.nrows(), "inputs": b.ncols(), "samples": samples, "median_seconds": times[times.len() / 2], "min_seconds": times[0], "repeats": times.len()})
    );
}

/// One LQR problem of `--riccati`.
fn riccati_case(case: &Value) -> Value {
    let name = case["name"].as_str().unwrap_or("?").to_string();
    let (Some(a), Some(b), Some(q), Some(r)) = (matrix(&case["a"]), matrix(&case["b"]), matrix(&case["q"]), matrix(&case["r"])) else {
        return json!({"name": name, "error": "malformed case"});
    };
    let digital = case["domain"] == "discrete";
    let start = Instant::now();
    let solved = match matrix(&case["s"]) {
        Some(s) => polewright::riccati::lqr_gain_with_cross_weight(&a, &b, &q, &r, &s, digital),
        None if digital => polewright::riccati::discrete_lqr_gain(&a, &b, &q, &r),
        None => polewright::riccati::lqr_gain(&a, &b, &q, &r),
    };
    let seconds = start.elapsed().as_secs_f64();
    let rows = |m: &DMatrix<f64>| -> Vec<Vec<f64>> { (0..m.nrows()).map(|i| m.row(i).iter().copied().collect()).collect() };
    match solved {
        Ok(d) => {
            json!({"name": name, "x": rows(&d.riccati_solution), "gain": rows(&d.gain), "residual": d.residual, "seconds": seconds, "error": null})
        }
        Err(e) => json!({"name": name, "error": e.to_string(), "seconds": seconds}),
    }
}

fn riccati_benchmark(path: &str) {
    let doc: Value = match std::fs::read_to_string(path).map_err(|e| e.to_string()).and_then(|t| serde_json::from_str(&t).map_err(|e| e.to_string())) {
        Ok(v) => v,
        Err(e) => {
            eprintln!("polewright-bench: cannot read {path}: {e}");
            std::process::exit(2);
        }
    };
    for case in doc["cases"].as_array().map(|v| v.as_slice()).unwrap_or(&[]) {
        println!("{}", riccati_case(case));
    }
}

fn main() {
    if std::env::args().nth(1).as_deref() == Some("--riccati") {
        let path = std::env::args().nth(2).unwrap_or_default();
        riccati_benchmark(&path);
        return;
    }
    if std::env::args().nth(1).as_deref() == Some("--loop") {
        let path = std::env::args().nth(2).unwrap_or_else(|| "tests/fixtures/loop.json".into());
        loop_benchmark(&path);
        return;
    }
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
                "gain": (0..result.gain.nrows()).map(|i| (0..result.gain.ncols()).map(|j| result.gain[(i, j)]).collect::<Vec<f64>>()).collect::<Vec<_>>(),
                "error": null,
            })
        );
    }
}
