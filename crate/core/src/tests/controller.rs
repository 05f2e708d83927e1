//! Unit tests of [`crate::controller`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn textbook_observer() {
    // Ogata, Modern Control Engineering, state-observer example (from memory; checkable by
    // hand): A = [[0, 1], [20.6, 0]], C = [1, 0], observer poles −8, −8 give
    // det(sI − A + L C) = s² + l₁ s + (l₂ − 20.6) = s² + 16 s + 64 ⇒ L = [16, 84.6]ᵀ.
    // A pole repeated beyond rank Cᵀ = 1 is refused by the robust placement (no diagonalisable
    // error dynamics), so the pair is split to −8 ± 1e-4, i.e. (s + 8)² − 1e-8: L moves by 1e-8.
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 20.6, 0.0]);
    let c = DMatrix::from_row_slice(1, 2, &[1.0, 0.0]);
    let o = observer_gain(&a, &c, &[Complex64::new(-8.0 + 1e-4, 0.0), Complex64::new(-8.0 - 1e-4, 0.0)], PlacementParams::default()).unwrap();
    assert!((o.gain[(0, 0)] - 16.0).abs() < 1e-7, "{}", o.gain);
    assert!((o.gain[(1, 0)] - 84.6).abs() < 1e-7, "{}", o.gain);
}

#[test]
fn feedforward_of_double_integrator() {
    // x1' = x2, x2' = u, y = x1: N_x = [1, 0]ᵀ, N_u = 0 (by hand).
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let c = DMatrix::from_row_slice(1, 2, &[1.0, 0.0]);
    let d = DMatrix::zeros(1, 1);
    let (nx, nu) = feedforward_gains(&a, &b, &c, &d, false).unwrap();
    assert!((nx[(0, 0)] - 1.0).abs() < 1e-14 && nx[(1, 0)].abs() < 1e-14 && nu[(0, 0)].abs() < 1e-14);
    // Tracking the velocity x2 of a double integrator: a constant nonzero velocity needs
    // u = 0 while x1 grows without bound, so no steady state exists ([A B; C D] singular).
    let c2 = DMatrix::from_row_slice(1, 2, &[0.0, 1.0]);
    assert!(matches!(feedforward_gains(&a, &b, &c2, &d, false), Err(ControllerError::SingularTracking { .. })));
    let c3 = DMatrix::from_row_slice(2, 2, &[1.0, 0.0, 0.0, 1.0]);
    assert!(matches!(feedforward_gains(&a, &b, &c3, &DMatrix::zeros(2, 1), false), Err(ControllerError::TrackingShape { outputs: 2, inputs: 1 })));
}

#[test]
fn mapping_round_trip_and_advice() {
    let s = [Complex64::new(-2.0, 3.0), Complex64::new(-2.0, -3.0), Complex64::new(-5.0, 0.0)];
    let z = map_to_discrete(&s, 0.01);
    for (si, zi) in s.iter().zip(&z) {
        assert!((map_to_continuous(*zi, 0.01) - si).norm() < 1e-12);
    }
    assert_eq!(sample_rate_advice(&s, 1.0).verdict, SampleRateVerdict::TooSlow);
    assert_eq!(sample_rate_advice(&s, 0.05).verdict, SampleRateVerdict::Adequate);
    assert_eq!(sample_rate_advice(&s, 0.001).verdict, SampleRateVerdict::Fast);
}
