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
//! # Failure modes
//! An eigenvalue iteration that does not converge: [`EigenError`].

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
    Ok(PrecisionCheck {
        max_distance,
        worst_damping_fraction,
        stable: poles.iter().all(|p| p.rounded.norm() < 1.0),
        designed_stable: poles.iter().all(|p| p.designed.norm() < 1.0),
        poles,
    })
}

#[cfg(test)]
#[path = "tests/precision.rs"]
mod tests;
