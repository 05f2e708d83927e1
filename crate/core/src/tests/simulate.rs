//! Unit tests of [`crate::simulate`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn first_order_decay_is_exact() {
    // x' = -x + u, K = 1: x(t) = e^{-2t}.
    let a = DMatrix::from_element(1, 1, -1.0);
    let b = DMatrix::from_element(1, 1, 1.0);
    let k = DMatrix::from_element(1, 1, 1.0);
    let spec = SimulationSpec { initial_state: DVector::from_element(1, 1.0), duration: Some(2.0), limits: vec![] };
    let r = closed_loop_response(&a, &b, &k, &spec, SimulationParams::default()).unwrap();
    for (t, x) in r.time.iter().zip(&r.states[0]) {
        assert!((x - (-2.0 * t).exp()).abs() < 1e-13, "t={t}");
    }
    assert!((r.time.last().unwrap() - 2.0).abs() < 1e-12);
}

#[test]
fn saturated_integrator_ramps_at_the_limit() {
    // x' = u, K = 10, |u| ≤ 1, x0 = 1: u = -1 until x = 0.1, so x(t) = 1 - t for t ≤ 0.9.
    let a = DMatrix::zeros(1, 1);
    let b = DMatrix::from_element(1, 1, 1.0);
    let k = DMatrix::from_element(1, 1, 10.0);
    let spec = SimulationSpec { initial_state: DVector::from_element(1, 1.0), duration: Some(1.5), limits: vec![Some(1.0)] };
    let r = closed_loop_response(&a, &b, &k, &spec, SimulationParams::default()).unwrap();
    let i = r.time.iter().position(|&t| t >= 0.5).unwrap();
    assert!((r.states[0][i] - (1.0 - r.time[i])).abs() < 1e-12);
    assert!(r.inputs[0].iter().all(|u| u.abs() <= 1.0));
    assert!(r.commanded[0][0] == -10.0);
}

#[test]
fn bad_inputs_are_errors() {
    let a = DMatrix::zeros(2, 2);
    let b = DMatrix::from_element(2, 1, 1.0);
    let k = DMatrix::from_element(1, 2, 1.0);
    let spec = SimulationSpec { initial_state: DVector::from_element(3, 1.0), duration: None, limits: vec![] };
    assert!(matches!(closed_loop_response(&a, &b, &k, &spec, SimulationParams::default()), Err(SimulationError::InitialStateLength { .. })));
    let spec = SimulationSpec { initial_state: DVector::from_element(2, 1.0), duration: None, limits: vec![Some(-1.0)] };
    assert!(matches!(closed_loop_response(&a, &b, &k, &spec, SimulationParams::default()), Err(SimulationError::BadLimit { .. })));
}

#[test]
fn unstable_loop_stops_when_diverging() {
    let a = DMatrix::from_element(1, 1, 50.0);
    let b = DMatrix::from_element(1, 1, 1.0);
    let k = DMatrix::from_element(1, 1, 0.0);
    let spec = SimulationSpec { initial_state: DVector::from_element(1, 1.0), duration: Some(10.0), limits: vec![] };
    let r = closed_loop_response(&a, &b, &k, &spec, SimulationParams::default()).unwrap();
    assert!(r.diverged);
}
