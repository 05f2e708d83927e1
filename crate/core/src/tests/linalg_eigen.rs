//! Unit tests of [`crate::linalg::eigen`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn companion_bottom(coeffs: &[f64]) -> DMatrix<f64> {
    // x^n + c_{n-1} x^{n-1} + ... + c_0 ; last row = -c
    let n = coeffs.len();
    let mut m = DMatrix::zeros(n, n);
    for i in 0..n - 1 {
        m[(i, i + 1)] = 1.0;
    }
    for j in 0..n {
        m[(n - 1, j)] = -coeffs[j];
    }
    m
}

fn poly_from_roots(roots: &[f64]) -> Vec<f64> {
    // monic coefficients c_0..c_{n-1}
    let mut p = vec![1.0];
    for &r in roots {
        let mut q = vec![0.0; p.len() + 1];
        for (i, &c) in p.iter().enumerate() {
            q[i + 1] += c;
            q[i] -= r * c;
        }
        p = q;
    }
    p.pop();
    p
}

#[test]
fn zero_matrix_converges() {
    // Regression: the zero matrix made an unbounded iteration spin.
    let v = try_eigenvalues(&DMatrix::zeros(3, 3)).unwrap();
    assert!(v.iter().all(|z| z.norm() == 0.0));
}

#[test]
fn companion_matrices_converge() {
    // Regression: companion matrices (nalgebra issue #611) are what single-input placement produces.
    for k in 2..=10 {
        let roots: Vec<f64> = (1..=k).map(|i| -(i as f64)).collect();
        let m = companion_bottom(&poly_from_roots(&roots));
        let v = try_eigenvalues(&m).unwrap();
        // Wilkinson-type polynomials are ill-conditioned: the root r of p = ∏(x + i) moves by
        // about ε ‖companion‖ · κ(r), with the root's condition number
        // κ(r) = Σ|c_j| |r|^j / |p'(r)| (Wilkinson, *Rounding Errors in Algebraic Processes*,
        // 1963; common practice). The tolerance is 100 times that first-order estimate.
        let coeffs = poly_from_roots(&roots);
        for (i, z) in v.iter().enumerate() {
            let exact = roots[roots.len() - 1 - i];
            let r = exact.abs();
            let size: f64 = coeffs.iter().enumerate().map(|(j, c)| c.abs() * r.powi(j as i32)).sum::<f64>() + r.powi(k);
            let slope: f64 = roots.iter().filter(|&&q| q != exact).map(|q| (exact - q).abs()).product();
            let tol = 100.0 * f64::EPSILON * size / slope;
            assert!((z - Complex64::new(exact, 0.0)).norm() < tol, "k={k} {z} vs {exact} (tolerance {tol:.1e})");
        }
    }
    // The closed loop of the third-order textbook example: roots -2±4j and -10.
    let m = companion_bottom(&[200.0, 60.0, 14.0]);
    let v = try_eigenvalues(&m).unwrap();
    assert!((v[0] - Complex64::new(-10.0, 0.0)).norm() < 1e-12);
    assert!((v[1] - Complex64::new(-2.0, 4.0)).norm() < 1e-12);
    assert!((v[2] - Complex64::new(-2.0, -4.0)).norm() < 1e-12);
}

#[test]
fn permutation_cycle_needs_exceptional_shift() {
    // A cyclic permutation has its eigenvalues on the unit circle; plain shifts stall.
    let n = 5;
    let mut m = DMatrix::zeros(n, n);
    for i in 0..n {
        m[((i + 1) % n, i)] = 1.0;
    }
    let v = try_eigenvalues(&m).unwrap();
    for z in &v {
        assert!((z.norm() - 1.0).abs() < 1e-12, "{z}");
    }
    let sum: Complex64 = v.iter().sum();
    assert!(sum.norm() < 1e-12);
}

#[test]
fn iteration_limit_is_reported() {
    let n = 6;
    let mut m = DMatrix::zeros(n, n);
    for i in 0..n {
        m[((i + 1) % n, i)] = 1.0;
    }
    let r = try_eigenvalues_with(&m, EigenParams { max_iterations_per_eigenvalue: 1, max_balancing_sweeps: 10 });
    assert!(matches!(r, Err(EigenError::NoConvergence { .. })), "{r:?}");
}

#[test]
fn rejects_non_finite_and_non_square() {
    let mut m = DMatrix::zeros(2, 2);
    m[(1, 0)] = f64::NAN;
    assert_eq!(try_eigenvalues(&m), Err(EigenError::NotFinite { row: 1, column: 0 }));
    assert!(matches!(try_eigenvalues(&DMatrix::zeros(2, 3)), Err(EigenError::NotSquare { .. })));
}

#[test]
fn trace_and_determinant_on_seeded_random_matrices() {
    let mut state = 0x9E3779B97F4A7C15u64;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    for n in [2usize, 3, 5, 8, 13, 21, 40] {
        let m = DMatrix::from_fn(n, n, |_, _| next());
        let v = try_eigenvalues(&m).unwrap();
        let trace: f64 = v.iter().map(|z| z.re).sum();
        let scale = m.norm() * n as f64;
        assert!((trace - m.trace()).abs() < 1e-12 * scale, "n={n}");
        let det: Complex64 = v.iter().product();
        let lu_det = m.clone().lu().determinant();
        assert!((det.re - lu_det).abs() < 1e-9 * lu_det.abs().max(1.0), "n={n} {det} {lu_det}");
        assert!(det.im.abs() < 1e-9 * lu_det.abs().max(1.0));
    }
}

#[test]
fn balancing_scale_equalises_a_badly_scaled_matrix() {
    // A = S B S⁻¹ with B well scaled and S = diag(1, 1e4, 1e-3): balancing must undo most of
    // S. Check: D⁻¹ A D has row and column off-diagonal sums within a factor 2 (radix 2,
    // the Parlett–Reinsch stopping rule) of each other, and is far better scaled than A.
    let b = DMatrix::from_row_slice(3, 3, &[1.0, 2.0, -1.0, 0.5, -3.0, 1.5, 2.0, 1.0, -2.0]);
    let s = [1.0, 1e4, 1e-3];
    let a = DMatrix::from_fn(3, 3, |i, j| b[(i, j)] * s[i] / s[j]);
    let d = balancing_scale(&a, 100);
    let bal = DMatrix::from_fn(3, 3, |i, j| a[(i, j)] * d[j] / d[i]);
    for i in 0..3 {
        let r: f64 = (0..3).filter(|&j| j != i).map(|j| bal[(i, j)].abs()).sum();
        let c: f64 = (0..3).filter(|&j| j != i).map(|j| bal[(j, i)].abs()).sum();
        assert!(r / c < 4.0 && c / r < 4.0, "row {r} col {c}");
    }
    let spread = |m: &DMatrix<f64>| m.iter().filter(|x| **x != 0.0).map(|x| x.abs()).fold(0.0f64, f64::max) / m.iter().filter(|x| **x != 0.0).map(|x| x.abs()).fold(f64::INFINITY, f64::min);
    assert!(spread(&bal) < 100.0 && spread(&a) > 1e6, "{} {}", spread(&bal), spread(&a));
    assert!(d.iter().all(|x| x.log2().fract() == 0.0), "powers of two: {d:?}");
}
