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
#[path = "tests/metrics.rs"]
mod tests;
