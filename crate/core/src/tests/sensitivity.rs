//! Unit tests of [`crate::sensitivity`].
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn triangular_two_by_two() {
    // A = [[λ₁, c], [0, λ₂]] (derived by hand): λ₁ has x = e₁ and y = (1, c/(λ₁ − λ₂)); λ₂
    // has x = (−c/(λ₁ − λ₂), 1) and y = e₂; both give κ = √(1 + (c/(λ₁ − λ₂))²).
    let (l1, l2, c) = (-1.0, -3.0, 4.0);
    let a = DMatrix::from_row_slice(2, 2, &[l1, c, 0.0, l2]);
    let e = DMatrix::from_row_slice(2, 2, &[0.0, 0.0, 1.0, 0.0]);
    let s = pole_sensitivities(&a, Some(&e)).unwrap();
    let kappa = (1.0 + (c / (l1 - l2)).powi(2)).sqrt();
    for p in &s {
        assert!((p.condition - kappa).abs() < 1e-12 * kappa, "{p:?} vs {kappa}");
    }
    // The characteristic polynomial of A + ε E is (λ − l1)(λ − l2) − ε c, so
    // dλ/dε = c / (2λ − l1 − l2) at ε = 0: c/(l1 − l2) at l1, c/(l2 − l1) at l2.
    for p in &s {
        let want = c / (2.0 * p.pole.re - l1 - l2);
        assert!((p.derivative.unwrap() - Complex64::new(want, 0.0)).norm() < 1e-12, "{p:?} vs {want}");
    }
}

#[test]
fn repeated_poles_are_flagged() {
    // A Jordan block and −I: both have a double eigenvalue.
    for a in [DMatrix::from_row_slice(2, 2, &[-1.0, 1.0, 0.0, -1.0]), DMatrix::from_row_slice(2, 2, &[-1.0, 0.0, 0.0, -1.0])] {
        let s = pole_sensitivities(&a, None).unwrap();
        assert!(s.iter().all(|p| p.repeated && p.condition.is_finite()), "{s:?}");
    }
    let s = pole_sensitivities(&DMatrix::from_row_slice(2, 2, &[-1.0, 0.0, 0.0, -2.0]), None).unwrap();
    assert!(s.iter().all(|p| !p.repeated), "{s:?}");
}

#[test]
fn normal_matrix_is_perfectly_conditioned() {
    let a = DMatrix::from_row_slice(2, 2, &[-1.0, 2.0, -2.0, -1.0]);
    for p in pole_sensitivities(&a, None).unwrap() {
        assert!((p.condition - 1.0).abs() < 1e-12, "{p:?}");
    }
}
