//! Unit tests of [`crate::place`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

#[test]
fn third_order_textbook_example() {
    // Ogata, Modern Control Engineering, pole-placement example (from memory; checkable
    // by hand): det(sI − A + BK) = s³ + (6+k3)s² + (5+k2)s + (1+k1) = (s+10)(s²+4s+20).
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -1.0, -5.0, -6.0]);
    let b = DMatrix::from_row_slice(3, 1, &[0.0, 0.0, 1.0]);
    let p = state_feedback_gain(&a, &b, &[c(-2.0, 4.0), c(-2.0, -4.0), c(-10.0, 0.0)], PlacementParams::default()).unwrap();
    let expected = [199.0, 55.0, 8.0];
    for (j, want) in expected.iter().enumerate() {
        assert!((p.gain[(0, j)] - want).abs() < 1e-10 * want, "{}", p.gain);
    }
    assert!(p.max_pole_error < 1e-12);
    assert_eq!(p.iterations, 0);
}

#[test]
fn full_rank_input_gives_orthonormal_eigenvectors() {
    let a = DMatrix::from_row_slice(2, 2, &[1.0, 2.0, 3.0, 4.0]);
    let b = DMatrix::identity(2, 2);
    let p = state_feedback_gain(&a, &b, &[c(-1.0, 2.0), c(-1.0, -2.0)], PlacementParams::default()).unwrap();
    assert!(p.max_pole_error < 1e-13);
    assert!((p.eigenvector_condition - 1.0).abs() < 1e-10, "{}", p.eigenvector_condition);
}

#[test]
fn repeated_pole_limits() {
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, 1.0, 2.0, 3.0]);
    let b = DMatrix::from_row_slice(3, 2, &[0.0, 0.0, 1.0, 0.0, 0.0, 1.0]);
    let ok = state_feedback_gain(&a, &b, &[c(-1.0, 0.0), c(-1.0, 0.0), c(-3.0, 0.0)], PlacementParams::default()).unwrap();
    assert!(ok.max_pole_error < 1e-8, "{}", ok.max_pole_error);
    let e = state_feedback_gain(&a, &b, &[c(-1.0, 0.0); 3], PlacementParams::default()).unwrap_err();
    assert!(matches!(e, PlacementError::RepeatedBeyondRank { multiplicity: 3, rank: 2, .. }), "{e:?}");
}

#[test]
fn dependent_input_columns_use_the_rank() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, -2.0, -0.5]);
    let b = DMatrix::from_row_slice(2, 2, &[0.0, 0.0, 1.0, 2.0]);
    let p = state_feedback_gain(&a, &b, &[c(-3.0, 0.0), c(-4.0, 0.0)], PlacementParams::default()).unwrap();
    assert_eq!(p.input_rank, 1);
    assert!(p.max_pole_error < 1e-12);
}

#[test]
fn uncontrollable_stable_mode_is_left_in_place() {
    // x1' = -2 x1 (no input), x2' = x2 + u.
    let a = DMatrix::from_row_slice(2, 2, &[-2.0, 0.0, 0.0, 1.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let p = state_feedback_gain(&a, &b, &[c(-3.0, 0.0), c(-5.0, 0.0)], PlacementParams::default()).unwrap();
    assert_eq!(p.fixed_modes.len(), 1);
    assert!((p.fixed_modes[0].re + 2.0).abs() < 1e-12);
    assert_eq!(p.not_assigned, vec![c(-3.0, 0.0)]);
    assert!(p.achieved_poles.iter().any(|z| (z.re + 5.0).abs() < 1e-10));
    // With an unstable uncontrollable mode it must fail, naming the mode.
    let a = DMatrix::from_row_slice(2, 2, &[2.0, 0.0, 0.0, 1.0]);
    let e = state_feedback_gain(&a, &b, &[c(-3.0, 0.0), c(-5.0, 0.0)], PlacementParams::default()).unwrap_err();
    assert!(e.to_string().contains("mode at 2"), "{e}");
}

#[test]
fn wrong_count_and_unpaired() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    assert!(matches!(state_feedback_gain(&a, &b, &[c(-1.0, 0.0)], PlacementParams::default()), Err(PlacementError::PoleCount { .. })));
    assert!(matches!(
        state_feedback_gain(&a, &b, &[c(-1.0, 1.0), c(-2.0, 0.0)], PlacementParams::default()),
        Err(PlacementError::InvalidPoles { .. })
    ));
}
