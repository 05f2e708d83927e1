//! Singular value decomposition with an explicit iteration limit.
//!
//! # Equation
//! `M = U Σ Vᴴ` with `U`, `V` unitary (thin factors) and `Σ` diagonal, `σ₁ ≥ … ≥ σₖ ≥ 0`.
//!
//! # Method
//! - **Singular values only** ([`try_singular_values`], used for norms and condition
//!   numbers): nalgebra's Golub–Kahan bidiagonalisation with implicit-shift QR sweeps
//!   (Golub & Van Loan, *Matrix Computations*, 4th ed., §8.6), through `SVD::try_new`
//!   with a capped sweep count.
//! - **Singular vectors** ([`try_svd`], used for rank decisions and bases): one-sided
//!   Jacobi (Hestenes, "Inversion of matrices by biorthogonalization", J. SIAM 6, 1958;
//!   Demmel & Veselić, "Jacobi's method is more accurate than QR", SIAM J. Matrix Anal.
//!   Appl. 13(4), 1992), with complex rotations for complex matrices. nalgebra 0.35's
//!   vector-computing path returns wrong factors for some nearly rank-deficient
//!   matrices (a 3×2 rank-one block gave ‖UΣVᴴ − M‖/‖M‖ = 0.13; nalgebra issue #1172),
//!   which corrupted the controllability staircase; that case is kept as a regression test.
//!
//! # Cost
//! `O(m n min(m, n))` flops for the values; Jacobi costs `O(m n²)` per sweep
//! (`m ≥ n`), typically 5–10 sweeps; it is only used on thin matrices (`n × m`
//! input blocks) and small square ones.
//!
//! # Failure modes
//! [`SvdError::NoConvergence`] when a cap is reached; [`SvdError::NotFinite`]
//! for NaN/∞ entries (checked before the call, since they would never converge).

use nalgebra::{ComplexField, DMatrix, DVector};

/// Tuning constants of the SVD iteration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SvdParams {
    /// Largest total number of QR sweeps, per unit of `min(rows, columns)`. Default 100.
    pub max_iterations_per_value: usize,
}

impl Default for SvdParams {
    fn default() -> Self {
        SvdParams { max_iterations_per_value: 100 }
    }
}

/// What went wrong computing a singular value decomposition.
#[derive(Debug, Clone, PartialEq)]
pub enum SvdError {
    /// An entry is NaN or infinite.
    NotFinite,
    /// The iteration did not converge within the limit.
    NoConvergence { rows: usize, columns: usize, limit: usize },
}

impl std::fmt::Display for SvdError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SvdError::NotFinite => write!(f, "singular values cannot be computed: the matrix has a non-finite entry"),
            SvdError::NoConvergence { rows, columns, limit } => write!(f, "the singular value iteration on a {rows}×{columns} matrix did not converge within {limit} sweeps"),
        }
    }
}

impl std::error::Error for SvdError {}

/// A thin SVD: `u` is rows×k, `singular_values` has k entries (descending), `v_adjoint` is k×columns.
#[derive(Debug, Clone)]
pub struct Svd<T: ComplexField> {
    pub u: DMatrix<T>,
    pub singular_values: DVector<f64>,
    pub v_adjoint: DMatrix<T>,
}

fn limit_for(rows: usize, columns: usize, params: SvdParams) -> usize {
    params.max_iterations_per_value.saturating_mul(rows.min(columns).max(1))
}

/// Largest number of one-sided Jacobi sweeps.
const JACOBI_MAX_SWEEPS: usize = 80;

/// Full thin SVD of `m` (real or complex) by one-sided Jacobi.
///
/// # Errors
/// See [`SvdError`].
pub fn try_svd<T: ComplexField<RealField = f64>>(m: &DMatrix<T>, params: SvdParams) -> Result<Svd<T>, SvdError> {
    let _ = params;
    let (rows, columns) = m.shape();
    if m.iter().any(|z| !z.clone().is_finite()) {
        return Err(SvdError::NotFinite);
    }
    if rows == 0 || columns == 0 {
        return Ok(Svd { u: DMatrix::zeros(rows, 0), singular_values: DVector::zeros(0), v_adjoint: DMatrix::zeros(0, columns) });
    }
    if rows < columns {
        // M = (Mᴴ)ᴴ = (U' Σ V'ᴴ)ᴴ = V' Σ U'ᴴ.
        let t = jacobi(&m.adjoint())?;
        return Ok(Svd { u: t.v_adjoint.adjoint(), singular_values: t.singular_values, v_adjoint: t.u.adjoint() });
    }
    jacobi(m)
}

/// One-sided Jacobi on a tall (`rows ≥ columns`) matrix.
fn jacobi<T: ComplexField<RealField = f64>>(m: &DMatrix<T>) -> Result<Svd<T>, SvdError> {
    let (rows, k) = m.shape();
    let mut a = m.clone();
    let mut v = DMatrix::<T>::identity(k, k);
    let tol = f64::EPSILON * (rows as f64).sqrt();
    let mut converged = k < 2;
    for _ in 0..JACOBI_MAX_SWEEPS {
        if converged {
            break;
        }
        let mut rotated = false;
        for p in 0..k {
            for q in (p + 1)..k {
                let mut alpha = 0.0;
                let mut beta = 0.0;
                let mut gamma = T::zero();
                for i in 0..rows {
                    let (x, y) = (a[(i, p)].clone(), a[(i, q)].clone());
                    alpha += x.clone().modulus_squared();
                    beta += y.clone().modulus_squared();
                    gamma += x.conjugate() * y;
                }
                let g = gamma.clone().modulus();
                if g == 0.0 || g <= tol * (alpha * beta).sqrt() {
                    continue;
                }
                rotated = true;
                // Make the inner product real: scale column q by e^{-iφ}, γ = |γ| e^{iφ}.
                let phase = gamma.conjugate().unscale(g);
                let zeta = (beta - alpha) / (2.0 * g);
                let t = zeta.signum() / (zeta.abs() + (1.0 + zeta * zeta).sqrt());
                let t = if zeta == 0.0 { 1.0 } else { t };
                let c = 1.0 / (1.0 + t * t).sqrt();
                let s = c * t;
                for i in 0..rows {
                    let x = a[(i, p)].clone();
                    let y = a[(i, q)].clone() * phase.clone();
                    a[(i, p)] = x.clone().scale(c) - y.clone().scale(s);
                    a[(i, q)] = x.scale(s) + y.scale(c);
                }
                for i in 0..k {
                    let x = v[(i, p)].clone();
                    let y = v[(i, q)].clone() * phase.clone();
                    v[(i, p)] = x.clone().scale(c) - y.clone().scale(s);
                    v[(i, q)] = x.scale(s) + y.scale(c);
                }
            }
        }
        if !rotated {
            converged = true;
        }
    }
    if !converged {
        return Err(SvdError::NoConvergence { rows, columns: k, limit: JACOBI_MAX_SWEEPS });
    }
    let norms: Vec<f64> = (0..k).map(|j| a.column(j).norm()).collect();
    let mut order: Vec<usize> = (0..k).collect();
    order.sort_by(|&x, &y| norms[y].total_cmp(&norms[x]));
    let smax = norms.iter().cloned().fold(0.0, f64::max);
    let mut u = DMatrix::<T>::zeros(rows, k);
    let mut sv = DVector::<f64>::zeros(k);
    let mut vt = DMatrix::<T>::zeros(k, k);
    for (dst, &src) in order.iter().enumerate() {
        let sigma = norms[src];
        sv[dst] = sigma;
        if sigma > f64::EPSILON * smax * (rows as f64) && sigma > 0.0 {
            for i in 0..rows {
                u[(i, dst)] = a[(i, src)].clone().unscale(sigma);
            }
        }
        for i in 0..k {
            vt[(dst, i)] = v[(i, src)].clone().conjugate();
        }
    }
    // Columns of U for (numerically) zero singular values: complete to an orthonormal set.
    for j in 0..k {
        if u.column(j).norm() > 0.5 {
            continue;
        }
        for e in 0..rows {
            let mut cand = DVector::<T>::zeros(rows);
            cand[e] = T::one();
            for _ in 0..2 {
                for c in 0..k {
                    if c == j || u.column(c).norm() < 0.5 {
                        continue;
                    }
                    let proj = u.column(c).dotc(&cand);
                    cand -= u.column(c) * proj;
                }
            }
            let nrm = cand.norm();
            if nrm > 0.5 {
                u.set_column(j, &cand.unscale(nrm));
                break;
            }
        }
    }
    Ok(Svd { u, singular_values: sv, v_adjoint: vt })
}

/// Singular values of `m` only, descending.
///
/// # Errors
/// See [`SvdError`].
pub fn try_singular_values<T: ComplexField<RealField = f64>>(m: &DMatrix<T>, params: SvdParams) -> Result<DVector<f64>, SvdError> {
    let (rows, columns) = m.shape();
    if m.iter().any(|z| !z.clone().is_finite()) {
        return Err(SvdError::NotFinite);
    }
    if rows == 0 || columns == 0 {
        return Ok(DVector::zeros(0));
    }
    let limit = limit_for(rows, columns, params);
    let svd = nalgebra::SVD::try_new(m.clone(), false, false, f64::EPSILON, limit).ok_or(SvdError::NoConvergence { rows, columns, limit })?;
    Ok(svd.singular_values)
}

/// Spectral-norm condition number `σ_max / σ_min` of a square matrix (∞ when singular).
///
/// # Errors
/// See [`SvdError`].
pub fn try_condition_number<T: ComplexField<RealField = f64>>(m: &DMatrix<T>, params: SvdParams) -> Result<f64, SvdError> {
    let s = try_singular_values(m, params)?;
    let n = s.len();
    if n == 0 {
        return Ok(1.0);
    }
    let (max, min) = (s[0], s[n - 1]);
    Ok(if min > 0.0 { max / min } else { f64::INFINITY })
}

/// Spectral norm ‖m‖₂ (largest singular value).
///
/// # Errors
/// See [`SvdError`].
pub fn try_norm2<T: ComplexField<RealField = f64>>(m: &DMatrix<T>, params: SvdParams) -> Result<f64, SvdError> {
    let s = try_singular_values(m, params)?;
    Ok(if s.is_empty() { 0.0 } else { s[0] })
}

#[cfg(test)]
#[path = "../tests/linalg_svd.rs"]
mod tests;
