//! Sensitivity of closed-loop poles to model error: eigenvalue condition numbers and the
//! derivative of each pole with respect to one model parameter.
//!
//! # Equation
//! For a simple eigenvalue `λ` of `A` with right and left eigenvectors `x`, `y`
//! (`A x = λ x`, `yᴴ A = λ yᴴ`), a perturbation `A + ε E` moves it by
//! `dλ/dε = yᴴ E x / (yᴴ x)`, and its condition number is `κ(λ) = ‖x‖ ‖y‖ / |yᴴ x|`: a
//! perturbation of norm `δ` moves `λ` by at most about `κ δ` (Wilkinson, *The Algebraic
//! Eigenvalue Problem*, 1965; Golub & Van Loan, *Matrix Computations*, 4th ed., §7.2.2).
//!
//! # Method
//! The complex Schur form `A = Q T Qᴴ` (nalgebra's `Schur::try_new`, capped iterations). For
//! the `k`-th diagonal entry, the right eigenvector of `T` is found by back substitution with
//! `z_k = 1`, `z_j = 0` for `j > k`, and the left one by forward substitution with `w_k = 1`,
//! `w_j = 0` for `j < k` (as LAPACK's `trevc`, with tiny denominators replaced by
//! `ε ‖T‖`). Then `wᴴ z = 1`, so `κ = ‖z‖ ‖w‖` and `dλ = (Q w)ᴴ E (Q z)`.
//!
//! # Cost
//! `O(n³)` for the Schur form, `O(n²)` per eigenvalue for its vectors: `O(n³)` in all.
//!
//! # Failure modes
//! [`SensitivityError::NoConvergence`] when the Schur iteration reaches its cap;
//! [`SensitivityError::NotFinite`] for NaN or infinite entries. A repeated eigenvalue (two
//! within [`REPEATED`] of the largest size) is flagged: first-order perturbation theory does not
//! describe it (a defective one moves like `δ^{1/p}`; for a non-defective one the figures depend
//! on the basis chosen), so its figures are not to be read. Condition numbers are capped at 1/ε.

use nalgebra::DMatrix;
use num_complex::Complex64;

/// Why pole sensitivities could not be computed.
#[derive(Debug, Clone, PartialEq)]
pub enum SensitivityError {
    NotFinite,
    NoConvergence,
    /// The perturbation direction does not have the matrix's size.
    Size {
        expected: usize,
        found: (usize, usize),
    },
}

impl std::fmt::Display for SensitivityError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SensitivityError::NotFinite => {
                write!(f, "the closed-loop matrix has a NaN or infinite entry")
            }
            SensitivityError::NoConvergence => {
                write!(f, "the Schur form of the closed loop did not converge")
            }
            SensitivityError::Size { expected, found } => write!(f, "the perturbation is {}×{}, the closed loop {expected}×{expected}", found.0, found.1),
        }
    }
}

impl std::error::Error for SensitivityError {}

/// One pole's sensitivity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoleSensitivity {
    pub pole: Complex64,
    /// `κ(λ) = ‖x‖ ‖y‖ / |yᴴ x|` (1 for a normal matrix).
    pub condition: f64,
    /// `dλ/dp = yᴴ (∂A/∂p) x / (yᴴ x)` when a direction was given.
    pub derivative: Option<Complex64>,
    /// Another eigenvalue lies within [`REPEATED`] `‖A‖` of this one: the pole is repeated (or
    /// nearly), its condition number and derivative are not defined (a defective pole moves like
    /// `δ^{1/p}`) and those figures should not be read.
    pub repeated: bool,
}

/// Relative distance (to the largest eigenvalue size) under which two eigenvalues count as one
/// repeated pole: a defective pair computed in double precision splits by about `√ε`.
pub const REPEATED: f64 = 1e-6;

/// Condition numbers of every eigenvalue of `a` and, given `direction = ∂A/∂p`, the
/// derivative of each eigenvalue.
///
/// # Errors
/// See the module documentation.
pub fn pole_sensitivities(a: &DMatrix<f64>, direction: Option<&DMatrix<f64>>) -> Result<Vec<PoleSensitivity>, SensitivityError> {
    let n = a.nrows();
    if a.iter().any(|v| !v.is_finite()) {
        return Err(SensitivityError::NotFinite);
    }
    if let Some(e) = direction {
        if e.shape() != (n, n) {
            return Err(SensitivityError::Size { expected: n, found: e.shape() });
        }
    }
    if n == 0 {
        return Ok(Vec::new());
    }
    let ac = a.map(|v| Complex64::new(v, 0.0));
    let schur = nalgebra::linalg::Schur::try_new(ac, f64::EPSILON, 100 * n.max(10)).ok_or(SensitivityError::NoConvergence)?;
    let (q, t) = schur.unpack();
    let scale = t.iter().map(|v| v.norm()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let small = f64::EPSILON * scale;
    let guard = |d: Complex64| {
        if d.norm() < small {
            Complex64::new(small, 0.0)
        } else {
            d
        }
    };
    let ec = direction.map(|e| e.map(|v| Complex64::new(v, 0.0)));
    let mut out = Vec::with_capacity(n);
    for k in 0..n {
        let lambda = t[(k, k)];
        let mut z = nalgebra::DVector::<Complex64>::zeros(n);
        z[k] = Complex64::new(1.0, 0.0);
        for j in (0..k).rev() {
            let mut s = Complex64::new(0.0, 0.0);
            for i in j + 1..=k {
                s += t[(j, i)] * z[i];
            }
            z[j] = -s / guard(t[(j, j)] - lambda);
        }
        // Left: wᴴ (T − λ I) = 0, i.e. (T − λ I)ᴴ w = 0, solved forward from w_k = 1.
        let mut w = nalgebra::DVector::<Complex64>::zeros(n);
        w[k] = Complex64::new(1.0, 0.0);
        for j in k + 1..n {
            let mut s = Complex64::new(0.0, 0.0);
            for i in k..j {
                s += w[i].conj() * t[(i, j)];
            }
            w[j] = (-s / guard(t[(j, j)] - lambda)).conj();
        }
        // Capped at 1/ε: beyond it the figure says only "as ill-conditioned as can be told".
        let condition = (z.norm() * w.norm()).min(1.0 / f64::EPSILON);
        let repeated = (0..n).any(|j| j != k && (t[(j, j)] - lambda).norm() <= REPEATED * scale);
        let derivative = ec.as_ref().map(|e| {
            let (x, y) = (&q * &z, &q * &w);
            (y.adjoint() * e * x)[(0, 0)]
        });
        out.push(PoleSensitivity { pole: lambda, condition, derivative: derivative.filter(|d| d.re.is_finite() && d.im.is_finite()), repeated });
    }
    Ok(out)
}

#[cfg(test)]
#[path = "tests/sensitivity.rs"]
mod tests;
