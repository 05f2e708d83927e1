//! Zooming and panning a plot's view: a time window on a time plot (the time axis only; the
//! vertical axis fits what is in the window), a region of the complex plane on the pole map.
//! Pure functions of the current view; the front end keeps the view per canvas.

use super::Range;

/// Narrowest window, as a fraction of the whole run (a zoom stops there).
pub const MIN_WINDOW_FRACTION: f64 = 1e-6;

/// A time window zoomed by `factor` (> 1 zooms in) about the time `at`, kept inside `full`;
/// `None` when it would show the whole run again.
pub fn zoom_window(full: Range, current: Option<[f64; 2]>, factor: f64, at: f64) -> Option<[f64; 2]> {
    let [lo, hi] = current.filter(|[a, b]| b > a && a.is_finite() && b.is_finite()).unwrap_or([full.min, full.max]);
    if !(factor.is_finite() && factor > 0.0 && full.span() > 0.0 && full.span().is_finite()) {
        return current;
    }
    let at = if at.is_finite() { at.clamp(lo, hi) } else { 0.5 * (lo + hi) };
    let span = ((hi - lo) / factor).max(MIN_WINDOW_FRACTION * full.span());
    if span >= full.span() {
        return None;
    }
    let left = at - (at - lo) / (hi - lo) * span;
    Some(clamp_window(full, left, span))
}

/// A time window moved by `fraction` of its own width (positive: later), kept inside `full`.
pub fn pan_window(full: Range, current: Option<[f64; 2]>, fraction: f64) -> Option<[f64; 2]> {
    let [lo, hi] = current?;
    if !(fraction.is_finite() && hi > lo) {
        return current;
    }
    // A window kept from a longer run may now be as wide as the whole run: show it all.
    if hi - lo >= full.span() {
        return None;
    }
    Some(clamp_window(full, lo + fraction * (hi - lo), hi - lo))
}

/// `[left, left + span]` moved inside `full` (a span wider than `full` is cut to it).
fn clamp_window(full: Range, left: f64, span: f64) -> [f64; 2] {
    let span = span.min(full.span()).max(0.0);
    let right_most = (full.max - span).max(full.min);
    let left = if left.is_finite() { left.max(full.min).min(right_most) } else { full.min };
    [left, left + span]
}

/// A region `[re min, re max, im min, im max]` of the complex plane zoomed by `factor` (> 1
/// zooms in) about the point `at` (which stays where it is on the screen).
pub fn zoom_region(current: [f64; 4], factor: f64, at: [f64; 2]) -> [f64; 4] {
    if !(factor.is_finite() && factor > 0.0 && at.iter().all(|v| v.is_finite())) {
        return current;
    }
    let [x0, x1, y0, y1] = current;
    [at[0] - (at[0] - x0) / factor, at[0] + (x1 - at[0]) / factor, at[1] - (at[1] - y0) / factor, at[1] + (y1 - at[1]) / factor]
}

/// A region moved by fractions of its own width and height (positive: towards larger values).
pub fn pan_region(current: [f64; 4], dx: f64, dy: f64) -> [f64; 4] {
    if !(dx.is_finite() && dy.is_finite()) {
        return current;
    }
    let [x0, x1, y0, y1] = current;
    let (w, h) = (x1 - x0, y1 - y0);
    [x0 + dx * w, x1 + dx * w, y0 + dy * h, y1 + dy * h]
}

#[cfg(test)]
#[path = "../tests/view.rs"]
mod tests;
