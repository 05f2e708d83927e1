//! Unit tests of [`crate::analysis`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn double_integrator_is_controllable() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 2);
    assert!(r.is_complete() && r.stable_hidden_modes && r.consistent);
    assert!(r.modes.iter().all(|m| m.verdict == ModeVerdict::Yes && m.margin > 0.1));
}

#[test]
fn identical_subsystems_share_one_input() {
    // Two copies of x' = -x + u driven by the same input: one direction is unreachable.
    let a = DMatrix::from_row_slice(2, 2, &[-1.0, 0.0, 0.0, -1.0]);
    let b = DMatrix::from_row_slice(2, 1, &[1.0, 1.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 1);
    assert_eq!(r.hidden_modes.len(), 1);
    assert!((r.hidden_modes[0].re + 1.0).abs() < 1e-12);
    assert!(r.stable_hidden_modes);
    assert_eq!(r.modes.iter().filter(|m| m.verdict == ModeVerdict::No).count(), 1);
    assert!(r.consistent);
}

#[test]
fn unstable_hidden_mode_is_not_stabilizable() {
    let a = DMatrix::from_row_slice(2, 2, &[-1.0, 0.0, 0.0, 2.0]);
    let b = DMatrix::from_row_slice(2, 1, &[1.0, 0.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 1);
    assert!(!r.stable_hidden_modes);
    assert!((r.hidden_modes[0].re - 2.0).abs() < 1e-12);
}

#[test]
fn staircase_is_orthogonal_and_block_triangular() {
    let a = DMatrix::from_row_slice(3, 3, &[1.0, 2.0, 0.5, -1.0, 0.3, 2.0, 0.0, 0.0, -4.0]);
    let b = DMatrix::from_row_slice(3, 1, &[1.0, 0.0, 0.0]);
    let st = staircase(&a, &b, 1e-12).unwrap();
    assert_eq!(st.dimension, 2);
    let t = &st.transform;
    assert!((t.transpose() * t - DMatrix::identity(3, 3)).norm() < 1e-14);
    assert!((t.transpose() * &a * t - &st.a).norm() < 1e-13 * a.norm());
    assert_eq!(st.a[(2, 0)], 0.0);
    assert_eq!(st.a[(2, 1)], 0.0);
    assert!((st.a[(2, 2)] + 4.0).abs() < 1e-13);
}

#[test]
fn extreme_scales_give_the_same_verdicts_and_margins() {
    // (σA, σB) has the controllability and relative margins of (A, B), and eigenvalues σλ.
    // At σ = 2^600 the squares inside the SVDs would overflow without the internal rescaling.
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -6.0, -11.0, -6.0]);
    let b = DMatrix::from_row_slice(3, 1, &[0.0, 0.0, 1.0]);
    let plain = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    for e in [600, -600] {
        let sigma = 2f64.powi(e);
        let r = controllability_report(&(&a * sigma), &(&b * sigma), AnalysisParams::default()).unwrap();
        assert_eq!(r.rank, plain.rank);
        for (p, q) in plain.modes.iter().zip(&r.modes) {
            assert_eq!(p.margin, q.margin, "margins are exactly those of the unscaled pair");
            assert!((q.pole / sigma - p.pole).norm() <= 1e-12 * p.pole.norm().max(1.0));
        }
    }
}
