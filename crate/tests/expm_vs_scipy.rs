//! The matrix exponential and the zero-order hold checked against `scipy.linalg.expm` and
//! `scipy.signal.cont2discrete(..., method="zoh")` (scipy 1.17.1), and against closed forms, on
//! every case of `tests/fixtures/expm.json` (written by `tests/oracle/make_fixtures.py`).
//!
//! Tolerance model. Scaling and squaring with a [13/13] Padé approximant has a backward error
//! of about ε in `A` (Higham, "The scaling and squaring method for the matrix exponential
//! revisited", SIAM J. Matrix Anal. Appl. 26(4), 2005), so its relative forward error is about
//! `ε·κ_exp(A)`, where the condition number of the exponential satisfies `κ_exp(A) ≥ ‖A‖` with
//! equality for normal `A` (Van Loan, "The sensitivity of the matrix exponential", SIAM J.
//! Numer. Anal. 14, 1977; Moler & Van Loan, "Nineteen dubious ways to compute the exponential
//! of a matrix, twenty-five years later", SIAM Review 45(1), 2003, §2). The `s` squarings each
//! add a relative error of a few ε·n times `‖e^{A/2^k}‖² / ‖e^{A/2^{k−1}}‖`, which for the
//! fixtures' `‖A‖ ≤ 113` adds a factor of order `‖A‖` again, not more. Hence
//!
//! `‖ours − ref‖_F / ‖ref‖_F ≤ 1e-12 · (1 + ‖A t‖₁)`:
//!
//! 1e-12 ≈ 4500 ε covers n ≤ 12 and the constants of both implementations (ours and scipy's
//! each contribute), and the `‖A t‖₁` term is the unavoidable conditioning allowance.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]
// tests may fail loudly

// `!(error <= tolerance)` is deliberate throughout: a NaN must count as a failure.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

mod common;

use common::{f64_of, fixture, matrix};
use nalgebra::DMatrix;
use polewright::linalg::expm::{try_expm, try_zero_order_hold};

fn norm1(m: &DMatrix<f64>) -> f64 {
    m.column_iter().map(|c| c.iter().map(|v| v.abs()).sum::<f64>()).fold(0.0, f64::max)
}

fn relative_error(ours: &DMatrix<f64>, reference: &DMatrix<f64>) -> f64 {
    let d = (ours - reference).norm();
    let r = reference.norm();
    if r > 0.0 {
        d / r
    } else {
        d
    }
}

/// The documented allowance, 1e-12 · (1 + ‖M‖₁) for the exponent M.
fn allowance(exponent: &DMatrix<f64>) -> f64 {
    1e-12 * (1.0 + norm1(exponent))
}

#[test]
fn expm_matches_scipy_and_closed_forms() {
    let f = fixture("expm.json");
    let cases: Vec<_> = f["cases"].as_array().expect("cases").iter().filter(|c| c["kind"] == "expm").collect();
    assert!(cases.len() >= 48, "too few expm fixtures: {}", cases.len());
    let mut failures = Vec::new();
    let mut report = Vec::new();
    let mut exact_checked = 0;
    for case in cases {
        let name = case["name"].as_str().expect("name");
        let a = matrix(&case["a"]);
        let t = f64_of(&case["t"]);
        assert!(t.is_finite(), "{name}: t");
        let at = &a * t;
        let ours = match try_expm(&at) {
            Ok(e) => e,
            Err(e) => {
                failures.push(format!("{name}: try_expm failed: {e}"));
                continue;
            }
        };
        let tol = allowance(&at);
        // Source: scipy.linalg.expm(a * t) (fixture field `expm`).
        let scipy = matrix(&case["expm"]);
        assert_eq!(scipy.shape(), ours.shape(), "{name}: shape");
        let e_scipy = relative_error(&ours, &scipy);
        if !(e_scipy <= tol) {
            failures.push(format!("{name}: ‖ours − scipy‖/‖scipy‖ = {e_scipy:.3e} > {tol:.3e}"));
        }
        let mut line = format!("{name:28} ‖At‖₁ {:8.3} vs scipy {:.2e} (tol {tol:.1e})", norm1(&at), e_scipy);
        if let Some(ex) = case.get("exact") {
            // Source: the closed form named in the case's `source` (Moler & Van Loan 2003 for
            // mvl-2x2; finite Taylor series for nilpotent/Jordan blocks; cos/sin for
            // rotations; e^d for diagonals). Same allowance: the closed form is exact up to
            // the rounding of its own evaluation (a few ε).
            let exact = matrix(ex);
            let e_exact = relative_error(&ours, &exact);
            if !(e_exact <= tol) {
                failures.push(format!("{name}: ‖ours − exact‖/‖exact‖ = {e_exact:.3e} > {tol:.3e}"));
            }
            line.push_str(&format!(", vs exact {e_exact:.2e}"));
            exact_checked += 1;
        }
        report.push(line);
    }
    println!("{}", report.join("\n"));
    assert!(exact_checked >= 11, "only {exact_checked} closed-form cases found");
    assert!(failures.is_empty(), "{} expm failures:\n{}", failures.len(), failures.join("\n"));
}

#[test]
fn moler_van_loan_example_entries() {
    // Moler & Van Loan, "Nineteen dubious ways ...", SIAM Review 45(1), 2003 (from memory, per
    // the fixture): A = [[-49, 24], [-64, 31]] = V diag(-1, -17) V⁻¹, V = [[1, 3], [2, 4]], so
    // e^A = [[-2e⁻¹ + 3e⁻¹⁷, 1.5e⁻¹ − 1.5e⁻¹⁷], [-4e⁻¹ + 4e⁻¹⁷, 3e⁻¹ − 2e⁻¹⁷]]. Computed here
    // from the formula, not read from the fixture. This is the example on which a truncated
    // Taylor series loses all accuracy through cancellation. Entrywise relative check with the
    // allowance of the module comment (‖A‖₁ = 113).
    let a = DMatrix::from_row_slice(2, 2, &[-49.0, 24.0, -64.0, 31.0]);
    let (e1, e17) = ((-1f64).exp(), (-17f64).exp());
    let exact = DMatrix::from_row_slice(2, 2, &[-2.0 * e1 + 3.0 * e17, 1.5 * e1 - 1.5 * e17, -4.0 * e1 + 4.0 * e17, 3.0 * e1 - 2.0 * e17]);
    let ours = try_expm(&a).expect("expm");
    let tol = allowance(&a);
    for i in 0..2 {
        for j in 0..2 {
            let rel = (ours[(i, j)] - exact[(i, j)]).abs() / exact[(i, j)].abs();
            assert!(rel <= tol, "entry ({i}, {j}): {} vs {} (relative {rel:.2e} > {tol:.1e})", ours[(i, j)], exact[(i, j)]);
        }
    }
}

#[test]
fn zero_order_hold_matches_cont2discrete() {
    let f = fixture("expm.json");
    let cases: Vec<_> = f["cases"].as_array().expect("cases").iter().filter(|c| c["kind"] == "zoh").collect();
    assert!(cases.len() >= 5, "too few zoh fixtures: {}", cases.len());
    let mut failures = Vec::new();
    for case in cases {
        let name = case["name"].as_str().expect("name");
        let a = matrix(&case["a"]);
        let b = matrix(&case["b"]);
        let dt = f64_of(&case["dt"]);
        let (phi, gamma) = match try_zero_order_hold(&a, &b, dt) {
            Ok(r) => r,
            Err(e) => {
                failures.push(format!("{name}: try_zero_order_hold failed: {e}"));
                continue;
            }
        };
        // Source: scipy.signal.cont2discrete((a, b, c, d), dt, method="zoh") (`ad`, `bd`),
        // which exponentiates the same augmented matrix [[A, B], [0, 0]]·dt (Van Loan, IEEE TAC
        // 23(3), 1978); the allowance is the module's, for that augmented exponent.
        let mut block = DMatrix::<f64>::zeros(a.nrows() + b.ncols(), a.nrows() + b.ncols());
        block.view_mut((0, 0), a.shape()).copy_from(&(&a * dt));
        block.view_mut((0, a.nrows()), b.shape()).copy_from(&(&b * dt));
        let tol = allowance(&block);
        let ad = matrix(&case["ad"]);
        let bd = matrix(&case["bd"]);
        assert_eq!(phi.shape(), ad.shape(), "{name}: Φ shape");
        assert_eq!(gamma.shape(), bd.shape(), "{name}: Γ shape");
        let e_phi = relative_error(&phi, &ad);
        let e_gamma = relative_error(&gamma, &bd);
        println!("{name:20} Φ {e_phi:.2e}, Γ {e_gamma:.2e} (tol {tol:.1e})");
        if !(e_phi <= tol) {
            failures.push(format!("{name}: Φ relative error {e_phi:.3e} > {tol:.3e}"));
        }
        if !(e_gamma <= tol) {
            failures.push(format!("{name}: Γ relative error {e_gamma:.3e} > {tol:.3e}"));
        }
    }
    assert!(failures.is_empty(), "{} zoh failures:\n{}", failures.len(), failures.join("\n"));
}
