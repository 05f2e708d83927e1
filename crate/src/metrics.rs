//! Time-response figures: settling time, overshoot, peaks, saturation.
//!
//! Definitions (for a regulator returning every state to zero; common practice):
//! - **settling time** of a signal `y`: the first grid time after which
//!   `|y(t) − y_final| ≤ band · max_t |y(t) − y_final|` for the rest of the run
//!   (`band` defaults to 2 %); `None` when the last sample is still outside the
//!   band (not settled within the horizon); `0` for a signal that is identically
//!   at its final value.
//! - **overshoot** of a state starting at `x₀ ≠ 0`: how far it swings past zero
//!   to the opposite side, as a fraction of `|x₀|`: `max(0, max_t(−sign(x₀) x(t))) / |x₀|`.
//!   `None` for a state starting at zero (it has no direction to overshoot).
//! - **peak input**: `max_t |u_i(t)|` of the commanded input `−K x`, compared with its limit;
//!   **first saturation**: the first time the command exceeds the limit;
//!   **time saturated**: total time spent clipped (grid resolution).

/// The settling band used when none is given: 2 % (common practice).
pub const DEFAULT_BAND: f64 = 0.02;

/// Settling time of `y` sampled at `t` towards `final_value`.
pub fn settling_time(t: &[f64], y: &[f64], final_value: f64, band: f64) -> Option<f64> {
    let peak = y.iter().map(|v| (v - final_value).abs()).fold(0.0, f64::max);
    if peak == 0.0 {
        return Some(0.0);
    }
    let limit = band * peak;
    let last_outside = y.iter().rposition(|v| (v - final_value).abs() > limit);
    match last_outside {
        None => Some(0.0),
        Some(i) if i + 1 >= y.len() => None,
        Some(i) => t.get(i + 1).copied(),
    }
}

/// Overshoot of a state starting at `y[0]` and returning to zero, as a fraction of `|y[0]|`.
pub fn overshoot(y: &[f64]) -> Option<f64> {
    let x0 = *y.first()?;
    if x0 == 0.0 {
        return None;
    }
    let s = x0.signum();
    let past = y.iter().map(|v| -s * v).fold(0.0, f64::max);
    Some(past / x0.abs())
}

/// Largest magnitude.
pub fn peak_magnitude(y: &[f64]) -> f64 {
    y.iter().map(|v| v.abs()).fold(0.0, f64::max)
}

/// First time `|y| > limit`.
pub fn first_exceedance(t: &[f64], y: &[f64], limit: f64) -> Option<f64> {
    y.iter().position(|v| v.abs() > limit).and_then(|i| t.get(i).copied())
}

/// Total time with `|y| > limit`, counting each grid interval by its starting sample.
pub fn time_exceeding(t: &[f64], y: &[f64], limit: f64) -> f64 {
    let mut total = 0.0;
    for i in 0..y.len().saturating_sub(1) {
        if y[i].abs() > limit {
            total += t[i + 1] - t[i];
        }
    }
    total
}

#[cfg(test)]
mod tests {
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
}
