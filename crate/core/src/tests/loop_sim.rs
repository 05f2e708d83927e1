//! Unit tests of [`crate::loop_sim`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn double_integrator() -> (DMatrix<f64>, DMatrix<f64>, DMatrix<f64>, DMatrix<f64>) {
    (DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]), DMatrix::from_row_slice(2, 1, &[0.0, 1.0]), DMatrix::from_row_slice(1, 2, &[1.0, 0.0]), DMatrix::zeros(1, 1))
}

fn scenario(duration: f64) -> LoopScenario {
    LoopScenario {
        x0: DVector::zeros(2),
        xhat0: None,
        duration,
        reference: vec![1.0],
        reference_time: 0.0,
        disturbance: vec![],
        disturbance_time: 0.0,
        disturbance_input: None,
        noise: Noise::None,
        limits: vec![],
        continuous_step: None,
    }
}

/// Poles −2, −3 on the double integrator: K = [6, 5], N_x = [1, 0]ᵀ, N_u = 0 (by hand).
fn feedforward_controller() -> LoopController {
    LoopController {
        k: DMatrix::from_row_slice(1, 2, &[6.0, 5.0]),
        k_delay: None,
        observer: None,
        observer_form: ObserverForm::Predictor,
        current_gain: None,
        tracking: TrackingLaw::Feedforward { nx: DMatrix::from_row_slice(2, 1, &[1.0, 0.0]), nu: DMatrix::zeros(1, 1) },
        tracked_outputs: vec![0],
        sample_time: None,
    }
}

#[test]
fn feedforward_tracks_a_step_exactly_in_steady_state() {
    // Poles −2, −3: K = [6, 5]; N_x = [1, 0]ᵀ, N_u = 0 (by hand).
    let (a, b, c, d) = double_integrator();
    let ctrl = feedforward_controller();
    let r = simulate_loop(&a, &b, &c, &d, &ctrl, &scenario(8.0)).unwrap();
    // y(t) = 1 − 3 e^{−2t} + 2 e^{−3t} (by hand).
    for (t, y) in r.time.iter().zip(&r.outputs[0]) {
        let exact = 1.0 - 3.0 * (-2.0 * t).exp() + 2.0 * (-3.0 * t).exp();
        assert!((y - exact).abs() < 1e-12, "t={t}: {y} vs {exact}");
    }
    let m = tracking_metrics(&r.time, &r.outputs[0], 0.0, 1.0, 0.02, f64::INFINITY);
    assert!(m.steady_state_error.abs() < 1e-6);
    assert!(m.overshoot == 0.0);
}

#[test]
fn noise_needs_a_digital_controller_and_sizes_are_checked() {
    let (a, b, c, d) = double_integrator();
    let ctrl = LoopController {
        k: DMatrix::from_row_slice(1, 2, &[6.0, 5.0]),
        k_delay: None,
        observer: None,
        observer_form: ObserverForm::Predictor,
        current_gain: None,
        tracking: TrackingLaw::None,
        tracked_outputs: vec![],
        sample_time: None,
    };
    let mut sc = scenario(1.0);
    sc.reference = vec![];
    sc.noise = Noise::Gaussian { std: vec![0.1], seed: 1 };
    assert_eq!(simulate_loop(&a, &b, &c, &d, &ctrl, &sc).unwrap_err(), LoopError::NoiseNeedsDigital);
    sc.noise = Noise::None;
    sc.x0 = DVector::zeros(3);
    assert!(matches!(simulate_loop(&a, &b, &c, &d, &ctrl, &sc), Err(LoopError::Size { .. })));
}

#[test]
fn absurd_sample_counts_are_refused() {
    let (a, b, c, d) = double_integrator();
    let ctrl = LoopController {
        k: DMatrix::from_row_slice(1, 2, &[6.0, 5.0]),
        k_delay: None,
        observer: None,
        observer_form: ObserverForm::Predictor,
        current_gain: None,
        tracking: TrackingLaw::None,
        tracked_outputs: vec![],
        sample_time: Some(1e-300),
    };
    let mut sc = scenario(1.0);
    sc.reference = vec![];
    assert!(matches!(simulate_loop(&a, &b, &c, &d, &ctrl, &sc), Err(LoopError::TooManySamples { .. }) | Err(LoopError::Expm(_))));
}

#[test]
fn gaussian_is_standard() {
    let mut g = Gaussian::new(7);
    let v: Vec<f64> = (0..20000).map(|_| g.next()).collect();
    let mean = v.iter().sum::<f64>() / v.len() as f64;
    let var = v.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / v.len() as f64;
    assert!(mean.abs() < 0.03 && (var - 1.0).abs() < 0.05, "{mean} {var}");
}

#[test]
fn a_load_through_e_equal_to_b_is_the_load_at_the_input_and_e_is_size_checked() {
    // The continuous loop with a saturating input: E = B must reproduce the document without
    // E bit for bit (same stacked model), and a load on the velocity only through a different
    // column must change the response.
    let (a, b, c, d) = double_integrator();
    let ctrl = feedforward_controller();
    let mut sc = scenario(6.0);
    sc.limits = vec![Some(2.0)];
    sc.disturbance = vec![0.5];
    sc.disturbance_time = 3.0;
    let plain = simulate_loop(&a, &b, &c, &d, &ctrl, &sc).unwrap();
    sc.disturbance_input = Some(b.clone());
    let same = simulate_loop(&a, &b, &c, &d, &ctrl, &sc).unwrap();
    assert_eq!(plain.outputs, same.outputs);
    assert_eq!(plain.inputs, same.inputs);
    // A load on the position rate (x1' = x2 + w) instead.
    sc.disturbance_input = Some(DMatrix::from_row_slice(2, 1, &[1.0, 0.0]));
    let other = simulate_loop(&a, &b, &c, &d, &ctrl, &sc).unwrap();
    let last = |r: &LoopResponse| *r.outputs[0].last().unwrap();
    assert!((last(&other) - last(&plain)).abs() > 1e-3, "{} vs {}", last(&other), last(&plain));
    // E with the wrong number of rows, and a load step of the wrong length for E's columns.
    sc.disturbance_input = Some(DMatrix::zeros(3, 1));
    assert_eq!(simulate_loop(&a, &b, &c, &d, &ctrl, &sc).err(), Some(LoopError::Size { what: "rows of the disturbance input matrix", expected: 2, found: 3 }));
    sc.disturbance_input = Some(DMatrix::zeros(2, 2));
    assert_eq!(simulate_loop(&a, &b, &c, &d, &ctrl, &sc).err(), Some(LoopError::Size { what: "disturbance", expected: 2, found: 1 }));
}
