//! Finite-precision re-check of a digital loop: how far the closed-loop poles move when the
//! controller's numbers are stored as `float32`.
//!
//! # Equation
//! For a closed-loop matrix `F(θ)` built from the controller's coefficients `θ`, compare the
//! eigenvalues of `F(θ)` with those of `F(fl₃₂(θ))`, `fl₃₂` the rounding to the nearest IEEE
//! single. Each pole is reported with its move `|z̃ − z|` and its damping ratio
//! `ζ = −Re s / |s|`, `s = ln z / T`, before and after.
//!
//! # Method
//! The rounding is done exactly (`f64 → f32 → f64`); both eigenvalue problems are solved by the
//! capped Francis QR of [`crate::linalg::eigen`] and the poles matched one to one, closest
//! first. Poles near `z = 1` at high sample rates are the sensitive ones: a relative coefficient
//! error `δ` moves a pole by about `δ / |dz/dθ|`, large against its distance `|s| T` from 1
//! (Middleton & Goodwin, "Improved finite word length characteristics in digital control using
//! delta operators", IEEE TAC 31(11):1015–1021, 1986; from memory).
//!
//! # Cost
//! Two `O(n³)` eigenvalue computations.
//!
//! Fixed point ([`quantise`]): each matrix in `Q15` or `Q31` with one power-of-two shift, the
//! smallest that keeps its largest entry within full scale (common practice for fixed-point
//! coefficient storage).
//!
//! # Failure modes
//! An eigenvalue iteration that does not converge: [`EigenError`]; a matrix whose entries span
//! more than the format can hold with one shift: [`QuantiseError`].

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::eigen::{sort_eigenvalues, try_eigenvalues, EigenError};

/// A matrix with every entry rounded to the nearest `float32`.
pub fn round_to_f32(m: &DMatrix<f64>) -> DMatrix<f64> {
    m.map(|v| v as f32 as f64)
}

/// One pole before and after rounding.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoleMove {
    pub designed: Complex64,
    pub rounded: Complex64,
    /// `|rounded − designed|` in the z-plane.
    pub distance: f64,
    /// Damping ratio before and after (`None` for a real pole or `z = 0`).
    pub damping: Option<(f64, f64)>,
}

/// The re-check of one loop.
#[derive(Debug, Clone, PartialEq)]
pub struct PrecisionCheck {
    pub poles: Vec<PoleMove>,
    /// Largest pole move (z-plane).
    pub max_distance: f64,
    /// Smallest `ζ_rounded / ζ_designed` over the complex poles with `ζ_designed > 0`
    /// (1 when there are none).
    pub worst_damping_fraction: f64,
    /// Every rounded pole strictly inside the unit circle.
    pub stable: bool,
    /// Every designed pole strictly inside the unit circle.
    pub designed_stable: bool,
}

fn damping(z: Complex64, t: f64) -> Option<f64> {
    if z.im == 0.0 || z.norm() == 0.0 {
        return None;
    }
    let s = z.ln() / t;
    let w = s.norm();
    (w > 0.0).then(|| -s.re / w)
}

/// Compares the eigenvalues of `exact` and `rounded` (two versions of one discrete closed
/// loop at sample time `t`).
///
/// # Errors
/// [`EigenError`] when an eigenvalue computation fails.
pub fn recheck(exact: &DMatrix<f64>, rounded: &DMatrix<f64>, t: f64) -> Result<PrecisionCheck, EigenError> {
    let mut a = try_eigenvalues(exact)?;
    let mut b = try_eigenvalues(rounded)?;
    sort_eigenvalues(&mut a);
    sort_eigenvalues(&mut b);
    let mut pairs: Vec<(f64, usize, usize)> = Vec::with_capacity(a.len() * b.len());
    for (i, z) in a.iter().enumerate() {
        for (j, w) in b.iter().enumerate() {
            pairs.push(((z - w).norm(), i, j));
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let (mut used_a, mut used_b) = (vec![false; a.len()], vec![false; b.len()]);
    let mut poles = Vec::with_capacity(a.len());
    for (d, i, j) in pairs {
        if used_a[i] || used_b[j] {
            continue;
        }
        used_a[i] = true;
        used_b[j] = true;
        let damping = match (damping(a[i], t), damping(b[j], t)) {
            (Some(x), Some(y)) => Some((x, y)),
            (Some(x), None) => Some((x, if b[j].norm() < 1.0 { 1.0 } else { -1.0 })),
            _ => None,
        };
        poles.push(PoleMove { designed: a[i], rounded: b[j], distance: d, damping });
    }
    poles.sort_by(|p, q| p.designed.re.total_cmp(&q.designed.re).then(p.designed.im.total_cmp(&q.designed.im)));
    let max_distance = poles.iter().map(|p| p.distance).fold(0.0, f64::max);
    let worst_damping_fraction = poles.iter().filter_map(|p| p.damping).filter(|(d, _)| *d > 0.0).map(|(d, r)| r / d).fold(1.0, f64::min);
    Ok(PrecisionCheck { max_distance, worst_damping_fraction, stable: poles.iter().all(|p| p.rounded.norm() < 1.0), designed_stable: poles.iter().all(|p| p.designed.norm() < 1.0), poles })
}

/// A matrix in a signed fixed-point format `Q(bits−1)` with one power-of-two shift: entry
/// `(i, j)` is `ints[(i, j)] · 2^(shift − (bits − 1))`.
#[derive(Debug, Clone, PartialEq)]
pub struct QMatrix {
    pub bits: u32,
    pub shift: i32,
    /// Row-major integers, each in `[−2^(bits−1), 2^(bits−1) − 1]`.
    pub ints: Vec<i64>,
    /// The values the integers stand for.
    pub values: DMatrix<f64>,
}

/// Why a matrix cannot be stored in a fixed-point format with one shift.
#[derive(Debug, Clone, PartialEq)]
pub enum QuantiseError {
    /// A non-zero entry is below the format's resolution at the shift the largest entry needs,
    /// so it would be stored as 0 (or with more than 1 % error).
    BelowResolution { row: usize, col: usize, value: f64, largest: f64, bits: u32 },
    /// An entry is not finite.
    NotFinite,
}

impl std::fmt::Display for QuantiseError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            QuantiseError::BelowResolution { row, col, value, largest, bits } => write!(
                f,
                "entry ({}, {}) = {value:e} is below the resolution of Q{} at the scale of the matrix's largest entry ({largest:e}): it would be stored with more than 1 % error; use Q31 or floating point",
                row + 1,
                col + 1,
                bits - 1
            ),
            QuantiseError::NotFinite => write!(f, "an entry is not finite"),
        }
    }
}

impl std::error::Error for QuantiseError {}

/// Stores `m` in `Q(bits−1)` with the smallest power-of-two shift that keeps the largest entry
/// within full scale (`1 − 2^−(bits−1)`): the headroom is the format's, and the shift is stated
/// with the matrix. Rounding to nearest.
///
/// # Errors
/// [`QuantiseError`] when an entry would lose more than 1 % (the matrix's dynamic range is too
/// wide for the format with one shift); entries at or below `1e-12` of the largest count as
/// rounding noise of a zero.
pub fn quantise(m: &DMatrix<f64>, bits: u32) -> Result<QMatrix, QuantiseError> {
    if m.iter().any(|v| !v.is_finite()) {
        return Err(QuantiseError::NotFinite);
    }
    let frac = (bits - 1) as i32;
    let one = 2f64.powi(frac);
    let full = 1.0 - 1.0 / one;
    let largest = m.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    let shift = if largest > 0.0 { (largest / full).log2().ceil() as i32 } else { 0 };
    let step = 2f64.powi(shift) / one;
    let (lo, hi) = (-one, one - 1.0);
    let mut ints = Vec::with_capacity(m.len());
    let mut values = DMatrix::zeros(m.nrows(), m.ncols());
    for i in 0..m.nrows() {
        for j in 0..m.ncols() {
            let v = m[(i, j)];
            let q = (v / step).round().clamp(lo, hi);
            let back = q * step;
            // Entries at the rounding level of the matrix (≤ 1e-12 of its largest) are zeros
            // computed inexactly, and stored as 0.
            if v.abs() > 1e-12 * largest && !((back - v).abs() <= 0.01 * v.abs()) {
                return Err(QuantiseError::BelowResolution { row: i, col: j, value: v, largest, bits });
            }
            ints.push(q as i64);
            values[(i, j)] = back;
        }
    }
    Ok(QMatrix { bits, shift, ints, values })
}

#[cfg(test)]
#[path = "tests/precision.rs"]
mod tests;
