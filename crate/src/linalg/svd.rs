//! Singular value decomposition with an explicit iteration limit.
//!
//! # Equation
//! `M = U Σ Vᴴ` with `U`, `V` unitary (thin factors) and `Σ` diagonal, `σ₁ ≥ … ≥ σₖ ≥ 0`.
//!
//! # Method
//! nalgebra's Golub–Kahan bidiagonalisation followed by implicit-shift QR
//! sweeps (Golub & Van Loan, *Matrix Computations*, 4th ed., §8.6), called
//! through `SVD::try_new` so that the sweep count is capped.
//!
//! # Cost
//! `O(m n min(m, n))` flops.
//!
//! # Failure modes
//! [`SvdError::NoConvergence`] when the cap is reached; [`SvdError::NotFinite`]
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
            SvdError::NoConvergence { rows, columns, limit } => write!(
                f,
                "the singular value iteration on a {rows}×{columns} matrix did not converge within {limit} sweeps"
            ),
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

/// Full thin SVD of `m` (real or complex).
///
/// # Errors
/// See [`SvdError`].
pub fn try_svd<T: ComplexField<RealField = f64>>(m: &DMatrix<T>, params: SvdParams) -> Result<Svd<T>, SvdError> {
    let (rows, columns) = m.shape();
    if m.iter().any(|z| !z.clone().is_finite()) {
        return Err(SvdError::NotFinite);
    }
    if rows == 0 || columns == 0 {
        return Ok(Svd { u: DMatrix::zeros(rows, 0), singular_values: DVector::zeros(0), v_adjoint: DMatrix::zeros(0, columns) });
    }
    let limit = limit_for(rows, columns, params);
    let svd = nalgebra::SVD::try_new(m.clone(), true, true, f64::EPSILON, limit)
        .ok_or(SvdError::NoConvergence { rows, columns, limit })?;
    match (svd.u, svd.v_t) {
        (Some(u), Some(v_adjoint)) => Ok(Svd { u, singular_values: svd.singular_values, v_adjoint }),
        _ => Err(SvdError::NoConvergence { rows, columns, limit }),
    }
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
    let svd = nalgebra::SVD::try_new(m.clone(), false, false, f64::EPSILON, limit)
        .ok_or(SvdError::NoConvergence { rows, columns, limit })?;
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
mod tests {
    use super::*;
    use num_complex::Complex64;

    #[test]
    fn diagonal_and_complex() {
        let m = DMatrix::from_row_slice(2, 2, &[3.0, 0.0, 0.0, -4.0]);
        let s = try_singular_values(&m, SvdParams::default()).unwrap();
        assert_eq!(s.as_slice(), &[4.0, 3.0]);
        // Unitary times 2: all singular values 2.
        let c = DMatrix::from_row_slice(2, 2, &[Complex64::new(1.0, 1.0), Complex64::new(1.0, -1.0), Complex64::new(1.0, -1.0), Complex64::new(1.0, 1.0)]);
        let s = try_singular_values(&c, SvdParams::default()).unwrap();
        assert!((s[0] - 2.0).abs() < 1e-14 && (s[1] - 2.0).abs() < 1e-14, "{s}");
        assert!(try_condition_number(&c, SvdParams::default()).unwrap() - 1.0 < 1e-12);
    }

    #[test]
    fn zero_and_non_finite() {
        let s = try_singular_values(&DMatrix::<f64>::zeros(3, 2), SvdParams::default()).unwrap();
        assert!(s.iter().all(|&v| v == 0.0));
        assert_eq!(try_condition_number(&DMatrix::<f64>::zeros(2, 2), SvdParams::default()).unwrap(), f64::INFINITY);
        let mut m = DMatrix::<f64>::zeros(2, 2);
        m[(0, 1)] = f64::INFINITY;
        assert_eq!(try_singular_values(&m, SvdParams::default()), Err(SvdError::NotFinite));
    }

    #[test]
    fn reconstructs() {
        let m = DMatrix::from_row_slice(3, 2, &[1.0, 2.0, -3.0, 0.5, 4.0, 1.0]);
        let svd = try_svd(&m, SvdParams::default()).unwrap();
        let sigma = DMatrix::from_diagonal(&svd.singular_values);
        let back = &svd.u * sigma * &svd.v_adjoint;
        assert!((back - m).norm() < 1e-14 * 6.0);
    }
}
