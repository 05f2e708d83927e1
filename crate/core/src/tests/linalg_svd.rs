//! Unit tests of [`crate::linalg::svd`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use num_complex::Complex64;

#[test]
fn diagonal_and_complex() {
    let m = DMatrix::from_row_slice(2, 2, &[3.0, 0.0, 0.0, -4.0]);
    let s = try_singular_values(&m, SvdParams::default()).unwrap();
    assert_eq!(s.as_slice(), &[4.0, 3.0]);
    // Unitary times 2: all singular values 2.
    let c = DMatrix::from_row_slice(2, 2, &[Complex64::new(1.0, 1.0), Complex64::new(1.0, -1.0), Complex64::new(1.0, -1.0), Complex64::new(1.0, 1.0)]);
    let s = try_singular_values(&c, SvdParams::default()).unwrap();
    assert!((s[0] - 2.0).abs() < 1e-14 && (s[1] - 2.0).abs() < 1e-14, "{s}");
    assert!((try_condition_number(&c, SvdParams::default()).unwrap() - 1.0).abs() < 1e-12);
}

#[test]
fn zero_and_non_finite() {
    let s = try_singular_values(&DMatrix::<f64>::zeros(3, 2), SvdParams::default()).unwrap();
    assert!(s.iter().all(|&v| v == 0.0));
    assert_eq!(try_condition_number(&DMatrix::<f64>::zeros(2, 2), SvdParams::default()).unwrap(), f64::INFINITY);
    let mut m = DMatrix::<f64>::zeros(2, 2);
    m[(0, 1)] = f64::INFINITY;
    assert_eq!(try_singular_values(&m, SvdParams::default()), Err(SvdError::NotFinite));
}

#[test]
fn nearly_rank_one_block_reconstructs() {
    // Regression: nalgebra 0.35's SVD with vectors gave σ₁ = 2.12621 and a 13 % reconstruction
    // error on this block; numpy.linalg.svd gives σ₁ = 2.10771 (rank one up to rounding).
    let m = DMatrix::from_row_slice(3, 2, &[0.4354917477758842, 0.5850026317882419, 0.06927047959289279, 0.093052079801823, 1.1788104308554577, 1.5835138276483836]);
    let svd = try_svd(&m, SvdParams::default()).unwrap();
    assert!((svd.singular_values[0] - 2.1077116275064296).abs() < 1e-14, "{}", svd.singular_values);
    assert!(svd.singular_values[1] < 1e-14);
    let back = &svd.u * DMatrix::from_diagonal(&svd.singular_values) * &svd.v_adjoint;
    assert!((back - &m).norm() < 1e-14 * m.norm());
    assert!((svd.u.transpose() * &svd.u - DMatrix::identity(2, 2)).norm() < 1e-14);
}

#[test]
fn wide_complex_reconstructs() {
    use num_complex::Complex64 as C;
    let m = DMatrix::from_fn(2, 5, |i, j| C::new((i * 5 + j) as f64 * 0.31 - 1.0, ((i + 3 * j) % 4) as f64 * 0.7 - 1.1));
    let svd = try_svd(&m, SvdParams::default()).unwrap();
    let sigma = DMatrix::from_diagonal(&svd.singular_values.map(|s| C::new(s, 0.0)));
    let back = &svd.u * sigma * &svd.v_adjoint;
    assert!((back - &m).norm() < 1e-14 * m.norm() * 5.0);
    let vals = try_singular_values(&m, SvdParams::default()).unwrap();
    assert!((vals - &svd.singular_values).norm() < 1e-13 * svd.singular_values[0]);
}

#[test]
fn reconstructs() {
    let m = DMatrix::from_row_slice(3, 2, &[1.0, 2.0, -3.0, 0.5, 4.0, 1.0]);
    let svd = try_svd(&m, SvdParams::default()).unwrap();
    let sigma = DMatrix::from_diagonal(&svd.singular_values);
    let back = &svd.u * sigma * &svd.v_adjoint;
    assert!((back - m).norm() < 1e-14 * 6.0);
}
