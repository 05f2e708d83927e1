//! Unit tests of [`crate::metrics`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn first_order_settling_matches_closed_form() {
    // y = e^{-t}: within 2 % of the peak 1 after t = ln 50 ≈ 3.912 (common practice: ≈ 4 τ).
    let t: Vec<f64> = (0..=100_000).map(|i| i as f64 * 1e-4).collect();
    let y: Vec<f64> = t.iter().map(|t| (-t).exp()).collect();
    let ts = settling_time(&t, &y, 0.0, 0.02).unwrap();
    assert!((ts - 50f64.ln()).abs() < 2e-4, "{ts}");
    assert_eq!(overshoot(&y), Some(0.0));
}

#[test]
fn underdamped_overshoot_matches_second_order_formula() {
    // x'' + 2ζω x' + ω² x = 0 from x(0)=1, x'(0)=0: the first swing past zero is
    // exp(-πζ/√(1-ζ²)) · (1 + …) — for the free response from rest the peak of -x is
    // exactly exp(-πζ/√(1-ζ²)) (common practice; checkable from the closed form).
    let (z, w): (f64, f64) = (0.3, 2.0);
    let wd = w * (1.0 - z * z).sqrt();
    let t: Vec<f64> = (0..=200_000).map(|i| i as f64 * 5e-5).collect();
    let y: Vec<f64> = t.iter().map(|&t| (-z * w * t).exp() * ((wd * t).cos() + z * w / wd * (wd * t).sin())).collect();
    let os = overshoot(&y).unwrap();
    let expected = (-std::f64::consts::PI * z / (1.0 - z * z).sqrt()).exp();
    assert!((os - expected).abs() < 1e-6, "{os} vs {expected}");
}

#[test]
fn not_settled_and_zero_signals() {
    let t = [0.0, 1.0, 2.0];
    assert_eq!(settling_time(&t, &[1.0, 0.5, 0.9], 0.0, 0.02), None);
    assert_eq!(settling_time(&t, &[0.0, 0.0, 0.0], 0.0, 0.02), Some(0.0));
    assert_eq!(overshoot(&[0.0, 1.0]), None);
    assert_eq!(first_exceedance(&t, &[0.5, 2.0, 3.0], 1.0), Some(1.0));
    assert_eq!(time_exceeding(&t, &[0.5, 2.0, 3.0], 1.0), 1.0);
}
