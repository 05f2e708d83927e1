//! Unit tests of [`crate::linalg::expm`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn diagonal_and_rotation() {
    let d = DMatrix::from_diagonal(&nalgebra::DVector::from_vec(vec![1.0, -2.0, 0.0]));
    let e = try_expm(&d).unwrap();
    assert!((e[(0, 0)] - 1f64.exp()).abs() < 1e-15 * 3.0);
    assert!((e[(1, 1)] - (-2f64).exp()).abs() < 1e-16);
    assert!((e[(2, 2)] - 1.0).abs() < 1e-16);
    let th = 2.5;
    let r = DMatrix::from_row_slice(2, 2, &[0.0, th, -th, 0.0]);
    let e = try_expm(&r).unwrap();
    assert!((e[(0, 0)] - th.cos()).abs() < 1e-14);
    assert!((e[(0, 1)] - th.sin()).abs() < 1e-14);
}

#[test]
fn zoh_of_integrator() {
    // x' = u: Φ = 1, Γ = h.
    let (phi, gamma) = try_zero_order_hold(&DMatrix::zeros(1, 1), &DMatrix::from_element(1, 1, 1.0), 0.1).unwrap();
    assert_eq!(phi[(0, 0)], 1.0);
    assert!((gamma[(0, 0)] - 0.1).abs() < 1e-16);
}

#[test]
fn overflow_is_an_error() {
    let m = DMatrix::from_element(1, 1, 1000.0);
    assert_eq!(try_expm(&m), Err(ExpmError::NotFinite));
    let m = DMatrix::from_element(1, 1, f64::NAN);
    assert_eq!(try_expm(&m), Err(ExpmError::NotFinite));
}
