//! Poles repeated beyond rank B (Jordan blocks, deadbeat) against outside references committed
//! in `tests/fixtures/repeated_poles.json` by `tests/oracle/make_repeated_pole_fixtures.py`:
//! numpy.poly of the requested poles (numpy 2.4.6) and, with one input, the unique gain from
//! Ackermann's formula evaluated in 60-digit arithmetic (mpmath 1.3.0).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly
#![allow(clippy::neg_cmp_op_on_partial_ord)] // `!(x <= tol)` so that NaN fails

mod common;

use common::{complex_list, fixture, matrix};
use nalgebra::DMatrix;
use polewright::analysis::Domain;
use polewright::place::{state_feedback_gain, PlacementMethod, PlacementParams};

/// `‖p(M)‖ / Σ |c_i| ‖M‖^(n−i)` for numpy's coefficients (highest power first), by Horner:
/// zero by Cayley–Hamilton exactly when `p` is the characteristic polynomial of `M`.
fn polynomial_residual(m: &DMatrix<f64>, coeffs: &[f64]) -> f64 {
    let n = m.nrows();
    let norm = m.norm();
    let mut value = DMatrix::<f64>::zeros(n, n);
    let mut scale = 0.0;
    for c in coeffs {
        value = &value * m + DMatrix::identity(n, n) * *c;
        scale = scale * norm + c.abs();
    }
    value.norm() / scale.max(f64::MIN_POSITIVE)
}

#[test]
fn repeated_poles_give_the_numpy_polynomial_and_the_mpmath_gain() {
    let f = fixture("repeated_poles.json");
    let cases = f["cases"].as_array().expect("cases");
    assert_eq!(cases.len(), 30, "fixture case count");
    let mut failures = Vec::new();
    let (mut worst_residual, mut worst_gain_ratio) = (0.0f64, 0.0f64);
    let mut gains_compared = 0;
    for c in cases {
        let name = c["name"].as_str().unwrap_or("?");
        let (a, b) = (matrix(&c["a"]), matrix(&c["b"]));
        let poles = complex_list(&c["poles"]);
        let coeffs: Vec<f64> = c["numpy_poly"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
        let domain = if c["domain"] == "discrete" { Domain::Discrete } else { Domain::Continuous };
        let p = match state_feedback_gain(&a, &b, &poles, PlacementParams { domain, ..PlacementParams::default() }) {
            Ok(p) => p,
            Err(e) => {
                failures.push(format!("{name}: refused: {e}"));
                continue;
            }
        };
        let m = b.ncols();
        let repeats_beyond_rank = poles.iter().any(|z| poles.iter().filter(|w| *w == z).count() > m);
        if repeats_beyond_rank && !matches!(p.method, PlacementMethod::Deflation | PlacementMethod::DeflationMultiInput) {
            failures.push(format!("{name}: method {:?}", p.method));
        }
        // The closed loop's characteristic polynomial is numpy's (deadbeat: (A − BK)ⁿ = 0). The
        // residual is relative to Σ|c_i| ‖A − BK‖^{n−i}: a backward-stable gain leaves a few n ε
        // there (measured worst 2e-16); 1e-12 (4,500 ε) is far below any real misplacement.
        let closed = &a - &b * &p.gain;
        let residual = polynomial_residual(&closed, &coeffs);
        worst_residual = worst_residual.max(residual);
        if !(residual <= 1e-12) {
            failures.push(format!("{name}: Cayley–Hamilton residual {residual:.1e}"));
        }
        // One input: the gain is unique; rounding is amplified at most by the conditioning of
        // the controllability matrix (stored with the fixture, up to 5e3 here).
        if m == 1 {
            // Required for every single-input case.
            let k_mp = c["mpmath_gain"].as_array().unwrap_or_else(|| panic!("{name}: no mpmath_gain"));
            let kappa = c["controllability_condition"].as_f64().unwrap();
            gains_compared += 1;
            let k_mp: Vec<f64> = k_mp.iter().map(|v| v.as_f64().unwrap()).collect();
            let norm = k_mp.iter().map(|v| v * v).sum::<f64>().sqrt();
            let err = p.gain.iter().zip(&k_mp).map(|(x, y)| (x - y).powi(2)).sum::<f64>().sqrt();
            let ratio = err / (f64::EPSILON * kappa * norm.max(1.0));
            worst_gain_ratio = worst_gain_ratio.max(ratio);
            if !(ratio <= 100.0) {
                failures.push(format!("{name}: gain {:?} vs mpmath {k_mp:?}: error {err:.1e} is {ratio:.0} × ε κ ‖K‖", p.gain.as_slice()));
            }
        }
    }
    eprintln!("repeated poles vs numpy/mpmath: worst Cayley–Hamilton residual {worst_residual:.1e}, worst gain error {worst_gain_ratio:.2} × ε κ(C) ‖K‖ over {gains_compared} single-input gains");
    assert_eq!(gains_compared, 22, "single-input gains compared with mpmath");
    assert!(failures.is_empty(), "{} failures:\n{}", failures.len(), failures.join("\n"));
}

#[test]
fn deadbeat_through_the_design_path() {
    // The same fixture plants as digital designs with every z-plane pole at 0: the design run
    // (verdict, warnings, simulation) accepts them, says deadbeat, and the simulated free
    // response is at rest after n samples.
    let f = fixture("repeated_poles.json");
    let mut checked = 0;
    for c in f["cases"].as_array().unwrap().iter().filter(|c| c["name"].as_str().is_some_and(|s| s.contains("deadbeat"))) {
        checked += 1;
        let n = c["n"].as_u64().unwrap() as usize;
        let doc = format!(
            r#"{{"format": "polewright.design", "version": 3, "plant": {{"a": {}, "b": {}, "sample_time": 0.01}}, "feedback": {{"poles": {}, "plane": "z"}}}}"#,
            c["a"],
            c["b"],
            serde_json::json!(vec![0.0; n])
        );
        let r = polewright::design::run_text(&doc).unwrap_or_else(|e| panic!("{}: {e}", c["name"]));
        assert!(r.warnings.iter().any(|w| w.code == "deadbeat"), "{}: {:?}", c["name"], r.warnings);
        let sr = r.sample_rate.as_ref().expect("sample-rate advice");
        assert!(sr.bandwidth.is_none() && sr.message.contains("deadbeat"), "{}: {sr:?}", c["name"]);
        let states = &r.simulation.states;
        let peak = states.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
        let steps = states.first().map_or(0, |s| s.len());
        assert!(steps > n + 1, "{}: {steps} samples", c["name"]);
        for s in states {
            assert!(s[n..].iter().all(|v| v.abs() <= 1e-9 * peak), "{}: not at rest after {n} samples: {:?}", c["name"], &s[..(n + 2).min(s.len())]);
        }
    }
    assert_eq!(checked, 10, "deadbeat fixture cases");
}
