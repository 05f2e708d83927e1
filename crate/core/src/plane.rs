//! The s- and z-planes of a sampled system: `z = e^{sT}` and `s = ln z / T`.
//!
//! One rule for every caller (pole lists, maps, reports, sample-rate advice): the principal
//! logarithm (`|Im s| ≤ π/T`); a real positive `z` has a real `s`; `z = 0` (a deadbeat or
//! computation-delay pole) has no finite equivalent and gives `None`, as do a non-finite `z` and
//! a sample time that is not a positive finite number (common practice; see Franklin, Powell &
//! Workman, *Digital Control of Dynamic Systems*, 3rd ed., 1998, §4.3, from memory).
//! Cost: one complex exponential or logarithm per pole. No failure beyond the `None` cases.

use num_complex::Complex64;

fn good_sample_time(t: f64) -> bool {
    t.is_finite() && t > 0.0
}

/// `z = e^{sT}`; a pole whose image is real to rounding (`|Im z| ≤ 1e-15 |z|`) is made real.
pub fn z_from_s(s: Complex64, t: f64) -> Complex64 {
    let z = (s * t).exp();
    if z.im.abs() <= 1e-15 * z.norm() {
        Complex64::new(z.re, 0.0)
    } else {
        z
    }
}

/// `z = e^{sT}` for each pole.
pub fn z_from_s_all(poles: &[Complex64], t: f64) -> Vec<Complex64> {
    poles.iter().map(|s| z_from_s(*s, t)).collect()
}

/// `s = ln z / T`, or `None` for `z = 0`, a non-finite `z` or a bad sample time.
pub fn s_from_z(z: Complex64, t: f64) -> Option<Complex64> {
    if !(z.re.is_finite() && z.im.is_finite() && good_sample_time(t)) || z.norm() == 0.0 {
        return None;
    }
    let s = z.ln() / t;
    Some(if z.im == 0.0 && z.re > 0.0 { Complex64::new(s.re, 0.0) } else { s })
}

/// `s = ln z / T` where a number is needed: `z = 0` is infinitely fast (`Re s = −∞`).
pub fn s_from_z_or_infinite(z: Complex64, t: f64) -> Complex64 {
    s_from_z(z, t).unwrap_or(Complex64::new(f64::NEG_INFINITY, 0.0))
}
