//! Unit tests of [`crate::linalg::qr`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use num_complex::Complex64;

#[test]
fn full_q_is_unitary_and_reconstructs() {
    let m = DMatrix::from_fn(5, 3, |i, j| Complex64::new((i * 3 + j) as f64 * 0.37 - 1.0, ((i + 2 * j) % 4) as f64 - 1.5));
    let (q, r) = full_qr(&m);
    let eye = DMatrix::<Complex64>::identity(5, 5);
    assert!((q.adjoint() * &q - eye).norm() < 1e-14 * 5.0);
    assert!((&q * &r - &m).norm() < 1e-13 * m.norm());
    for j in 0..3 {
        for i in (j + 1)..5 {
            assert_eq!(r[(i, j)], Complex64::new(0.0, 0.0));
        }
    }
}

#[test]
fn null_space_of_rank_deficient() {
    // Rows: (1,1,0), (2,2,0): rank 1, null space dimension 2.
    let w = DMatrix::from_row_slice(2, 3, &[1.0, 1.0, 0.0, 2.0, 2.0, 0.0]);
    let ns = null_space(&w, 1e-12).unwrap();
    assert_eq!(ns.ncols(), 2);
    assert!((&w * &ns).norm() < 1e-14);
    assert!((ns.transpose() * &ns - DMatrix::identity(2, 2)).norm() < 1e-14);
}

#[test]
fn trailing_columns_are_those_of_the_full_q() {
    // Real and complex, tall and square: the formed columns equal the full Q's (same reflectors).
    let real = DMatrix::from_fn(9, 5, |i, j| ((i * 7 + j * 3) % 11) as f64 - 5.0 + 0.1 * (i as f64));
    let (q, _) = full_qr(&real);
    let tail = trailing_q_columns(&real, 4);
    assert!((&tail - q.columns(5, 4)).norm() < 1e-14 * q.norm(), "{}", (&tail - q.columns(5, 4)).norm());
    assert!((real.transpose() * &tail).norm() < 1e-13 * real.norm(), "orthogonal to the range");
    let complex = DMatrix::from_fn(7, 3, |i, j| num_complex::Complex64::new((i + 2 * j) as f64 - 3.0, ((i * j) % 4) as f64 - 1.5));
    let (qc, _) = full_qr(&complex);
    let tc = trailing_q_columns(&complex, 4);
    assert!((&tc - qc.columns(3, 4)).norm() < 1e-14 * qc.norm());
    assert!((tc.adjoint() * &tc - DMatrix::identity(4, 4)).norm() < 1e-14, "orthonormal");
}
