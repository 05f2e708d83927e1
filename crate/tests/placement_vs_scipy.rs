//! Pole placement checked against scipy.signal.place_poles (method "YT", Tits & Yang 1996)
//! on the committed fixtures of tests/oracle/make_fixtures.py, and against published examples.
//!
//! What is compared is what is unique: the eigenvalues of A − B K against the request, and
//! the conditioning of the eigenvector matrix (ours must be no worse than 1.05 × scipy's).
//! K itself is not unique for m > 1 and is compared only for single-input cases.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic, clippy::neg_cmp_op_on_partial_ord)] // tests may fail loudly; !(a <= b) fails on NaN

mod common;

use common::{complex_list, f64_of, fixture, judge_gain, matrix};
use polewright::place::{state_feedback_gain, PlacementParams};

#[test]
fn placement_matches_or_beats_scipy_on_every_fixture() {
    let f = fixture("placement.json");
    let cases = f["cases"].as_array().expect("cases");
    assert!(cases.len() >= 50, "too few placement fixtures: {}", cases.len());
    let mut report = Vec::new();
    let mut failures = Vec::new();
    let (mut error_compared, mut kappa_compared, mut ill_posed) = (0, 0, 0);
    let (mut single_input, mut worst_single, mut capped) = (0usize, 0.0f64, 0usize);
    let (mut worst_kappa_ratio, mut worst_error_ratio) = (0.0f64, 0.0f64);
    for case in cases {
        let name = case["name"].as_str().unwrap_or("?");
        let a = matrix(&case["a"]);
        let b = matrix(&case["b"]);
        let poles = complex_list(&case["poles"]);
        let scipy_err = f64_of(&case["scipy"]["max_rel_error"]);
        let scipy_kappa = f64_of(&case["scipy"]["eigenvector_condition"]);
        let p = match state_feedback_gain(&a, &b, &poles, PlacementParams::default()) {
            Ok(p) => p,
            Err(e) => {
                failures.push(format!("{name}: error {e}"));
                continue;
            }
        };
        // Judged from the gain alone (nalgebra's Schur and SVD), not from what the placement
        // reports about itself.
        let judged = judge_gain(&a, &b, &p.gain, &poles, p.eigenvectors.as_ref().map(|e| (e.poles.as_slice(), &e.vectors)));
        let (err, kappa) = (judged.max_rel_error, judged.eigenvector_condition);
        // Accuracy allowed by the conditioning (Bauer–Fike: a backward error E of A − B K moves
        // each eigenvalue by at most κ₂(X) ‖E‖₂; forming and placing costs a backward error of a
        // modest multiple of ε (‖A‖₂ + ‖B‖₂ ‖K‖₂)): 100 n ε κ₂(X) (‖A‖₂ + ‖B‖₂ ‖K‖₂), and never
        // less than 1e-10.
        let (an, bn, kn) = (a.norm(), b.norm(), p.gain.norm());
        let err_bound = (100.0 * a.nrows() as f64 * f64::EPSILON * kappa * (an + bn * kn)).max(1e-10);
        // Beyond κ₂ ≈ 1e14 the eigenvectors are numerically dependent in double precision and the
        // condition number itself is not meaningful: compare only the placement error there.
        let kappa_meaningful = scipy_kappa < 1e14;
        if !kappa_meaningful {
            ill_posed += 1;
            // Numerically singular eigenvectors for both programs: nobody places these poles in
            // double precision. What matters is that the result says so (the error is reported
            // and large enough to trigger the placement-inaccurate warning) and the gain is finite.
            if !(p.max_pole_error.is_finite() && p.gain.iter().all(|v| v.is_finite())) {
                failures.push(format!("{name}: non-finite result on an ill-posed case"));
            }
            if scipy_err > 1e-6 && !(p.max_pole_error > 1e-6) {
                failures.push(format!("{name}: error {:.3e} reported as small on a case where scipy reaches only {:.3e}", p.max_pole_error, scipy_err));
            }
            // The report is honest: within a factor 10 of the independent figure (or both tiny).
            if !(p.max_pole_error >= err / 10.0 || err <= 1e-8) {
                failures.push(format!("{name}: reported error {:.3e} but the gain places to {err:.3e}", p.max_pole_error));
            }
        } else {
            error_compared += 1;
            if !(err <= err_bound) {
                failures.push(format!("{name}: pole error {err:.3e} > {err_bound:.3e} (conditioning bound; scipy {scipy_err:.3e})"));
            }
            kappa_compared += 1;
            worst_kappa_ratio = worst_kappa_ratio.max(kappa / scipy_kappa);
            worst_error_ratio = worst_error_ratio.max(err / err_bound);
            if !(kappa <= 1.05 * scipy_kappa) {
                failures.push(format!("{name}: κ₂(X) {kappa:.6e} > 1.05 × scipy {scipy_kappa:.6e}"));
            }
        }
        // Single input: K is unique, K = yᵀ p(A) with y = C⁻ᵀ e_n, C = [b, Ab, …, Aⁿ⁻¹b] and p
        // the requested characteristic polynomial (Ackermann's formula; Kailath, Linear
        // Systems, 1980, from memory). Rounding of relative size ε in C moves y by about
        // ε κ₂(C) ‖y‖, and rounding in the terms of p(A) moves yᵀ p(A) by about ε ‖y‖ Σ|p_i| ‖A‖^i;
        // with ‖y‖ ≤ ‖C⁻¹‖₂ and ‖p(A)‖ ≤ Σ|p_i| ‖A‖^i, K moves by at most about
        // ε ‖C⁻¹‖₂ Σ|p_i| ‖A‖^i (κ₂(C) + 1). That, times 100, relative to ‖K‖, is the allowed
        // difference between two correct programs (computed here: nalgebra's SVD, the
        // polynomial from the requested roots). This a-priori bound is pessimistic on badly
        // scaled plants (0.18 on the n = 8 case, whose gains differ by 3.2e-8): it is capped at
        // 1e-6, the measured difference there times 30 (8 of the 20 are held to the cap; counted).
        if b.ncols() == 1 && a.nrows() <= 8 {
            let k_ref = matrix(&case["scipy"]["gain"]);
            let rel = (&p.gain - &k_ref).norm() / k_ref.norm().max(1e-300);
            let n = a.nrows();
            let mut ctrb = nalgebra::DMatrix::<f64>::zeros(n, n);
            let mut v = b.column(0).into_owned();
            for j in 0..n {
                ctrb.set_column(j, &v);
                v = &a * v;
            }
            let sv = ctrb.singular_values();
            let kappa_c = sv.max() / sv.min();
            // Coefficients of Π(s − λ_i), highest power first.
            let mut poly = vec![num_complex::Complex64::new(1.0, 0.0)];
            for z in &poles {
                let mut next = poly.clone();
                next.push(num_complex::Complex64::new(0.0, 0.0));
                for i in 1..next.len() {
                    next[i] -= z * poly[i - 1];
                }
                poly = next;
            }
            let a2 = a.singular_values().max();
            let terms: f64 = poly.iter().enumerate().map(|(i, c)| c.norm() * a2.powi((n - i) as i32)).sum();
            let k_norm = k_ref.norm().max(1e-300);
            let derived = (100.0 * f64::EPSILON * terms / sv.min() * (kappa_c + 1.0) / k_norm).max(1e-13);
            let tol = derived.min(1e-6);
            capped += usize::from(derived > 1e-6);
            single_input += 1;
            worst_single = worst_single.max(rel / tol);
            if !(rel <= tol) {
                failures.push(format!("{name}: single-input K differs from scipy by {rel:.3e} relative > {tol:.1e} (Ackermann's rounding bound, κ₂(C) = {kappa_c:.1e})"));
            }
        }
        report.push(format!(
            "{name}: err {err:.1e} (reported {:.1e}, scipy {:.1e}), κ {kappa:.4e} (reported {:.4e}, scipy {:.4e}), det {:.4e} (scipy {:.4e}) sweeps {}",
            p.max_pole_error,
            scipy_err,
            p.eigenvector_condition,
            scipy_kappa,
            p.abs_det_x,
            f64_of(&case["scipy"]["abs_det_x"]),
            p.iterations
        ));
    }
    let fallbacks = common::SCHUR_FALLBACKS.with(|c| c.get());
    println!("single-input gains compared with scipy's: {single_input}, worst difference {worst_single:.2e} × the bound ({capped} held to the 1e-6 cap); worst κ₂ ratio to scipy {worst_kappa_ratio:.3}, worst pole error {worst_error_ratio:.2e} × its bound");
    println!("placement vs scipy: {} fixtures; error and κ₂ compared on {error_compared} and {kappa_compared}; {ill_posed} beyond double precision for both programs (κ₂ ≥ 1e14: finiteness and an honest report checked); nalgebra's Schur failed on {fallbacks} (Polewright's eigenvalues used there)", cases.len());
    if !failures.is_empty() {
        panic!("{} of {} fixtures failed:\n{}\n\nall:\n{}", failures.len(), cases.len(), failures.join("\n"), report.join("\n"));
    }
    assert_eq!(error_compared + ill_posed, cases.len(), "every fixture is judged one way or the other");
    assert!(kappa_compared >= 110, "only {kappa_compared} fixtures had κ₂ compared");
}

#[test]
fn batch_reactor_of_kautsky_nichols_van_dooren() {
    // Kautsky, Nichols & Van Dooren, "Robust pole assignment in linear state feedback",
    // Int. J. Control 41(5):1129–1155, 1985: the batch-reactor example.
    // scipy 1.17.1 (YT) reaches κ₂(X) ≈ 2.53 and |det X| ≈ 0.660 with unit columns.
    let f = fixture("placement.json");
    let case = f["cases"].as_array().unwrap().iter().find(|c| c["name"].as_str().is_some_and(|n| n.contains("batch"))).expect("batch reactor fixture");
    let a = matrix(&case["a"]);
    let b = matrix(&case["b"]);
    assert_eq!(a[(0, 0)], 1.380);
    let poles = complex_list(&case["poles"]);
    let p = state_feedback_gain(&a, &b, &poles, PlacementParams::default()).unwrap();
    let scipy_kappa = f64_of(&case["scipy"]["eigenvector_condition"]);
    let scipy_det = f64_of(&case["scipy"]["abs_det_x"]);
    // Judged from the gain (common::judge_gain: nalgebra's Schur and SVD), not from the report.
    let j = common::judge_gain(&a, &b, &p.gain, &poles, None);
    println!(
        "batch reactor (recomputed from the gain): error {:.1e}, κ₂(X) {} (scipy {}), |det X| {} (scipy {}), sweeps {}",
        j.max_rel_error, j.eigenvector_condition, scipy_kappa, j.abs_det, scipy_det, p.iterations
    );
    // Distinct, well-separated poles and κ₂ ≈ 2.5: rounding leaves ~1e-15; 1e-10 is far above it.
    assert!(j.max_rel_error < 1e-10, "{}", j.max_rel_error);
    assert!(j.eigenvector_condition <= scipy_kappa * 1.0001, "κ {} vs scipy {}", j.eigenvector_condition, scipy_kappa);
    assert!(j.abs_det >= scipy_det * 0.99, "|det X| {} vs scipy {}", j.abs_det, scipy_det);
    // The report agrees with the recomputation (κ₂² ε ≈ 1e-15: 1e-9 relative is generous).
    assert!((p.eigenvector_condition - j.eigenvector_condition).abs() <= 1e-9 * j.eigenvector_condition, "reported κ {} vs {}", p.eigenvector_condition, j.eigenvector_condition);
    assert!((p.abs_det_x - j.abs_det).abs() <= 1e-9 * j.abs_det, "reported |det X| {} vs {}", p.abs_det_x, j.abs_det);
}
