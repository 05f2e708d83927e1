//! Matrix exponential and the zero-order-hold discretisation.
//!
//! # Equation
//! `e^{M} = Σ Mᵏ/k!`; for `x' = A x + B u` with `u` held over a step `h`,
//! `x[k+1] = Φ x[k] + Γ u[k]` with `Φ = e^{A h}`, `Γ = ∫₀ʰ e^{A s} ds B`, read from
//! `exp([[A, B], [0, 0]] h) = [[Φ, Γ], [0, I]]` (Van Loan, "Computing integrals
//! involving the matrix exponential", IEEE TAC 23(3):395–404, 1978).
//!
//! # Method
//! Scaling and squaring with the [13/13] Padé approximant (Higham, "The scaling
//! and squaring method for the matrix exponential revisited", SIAM J. Matrix
//! Anal. Appl. 26(4):1179–1193, 2005): scale by `2^{-s}` so that
//! `‖M‖₁ 2^{-s} ≤ θ₁₃ = 5.37`, evaluate `r₁₃ = (V − U)⁻¹ (V + U)`, square `s` times.
//!
//! # Cost
//! Six matrix products and one LU solve, plus `s` squarings: `(12 + 2s) n³` flops.
//!
//! # Failure modes
//! [`ExpmError::NotFinite`] for NaN/∞ input or an overflowing result
//! (‖M‖ of several hundred with positive eigenvalues); [`ExpmError::Singular`]
//! if the Padé denominator is singular (not expected after scaling).

use nalgebra::DMatrix;

/// What went wrong computing a matrix exponential.
#[derive(Debug, Clone, PartialEq)]
pub enum ExpmError {
    /// The input or the result has NaN/∞ entries.
    NotFinite,
    /// The Padé denominator could not be inverted.
    Singular,
    /// The matrix is not square.
    NotSquare { rows: usize, columns: usize },
}

impl std::fmt::Display for ExpmError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ExpmError::NotFinite => write!(f, "the matrix exponential is not finite (input not finite, or the result overflows: shorten the time step or horizon)"),
            ExpmError::Singular => write!(f, "the matrix exponential failed: singular Padé denominator"),
            ExpmError::NotSquare { rows, columns } => write!(f, "the matrix exponential needs a square matrix, got {rows}×{columns}"),
        }
    }
}

impl std::error::Error for ExpmError {}

const PADE13: [f64; 14] = [
    64764752532480000.0,
    32382376266240000.0,
    7771770303897600.0,
    1187353796428800.0,
    129060195264000.0,
    10559470521600.0,
    670442572800.0,
    33522128640.0,
    1323241920.0,
    40840800.0,
    960960.0,
    16380.0,
    182.0,
    1.0,
];
const THETA13: f64 = 5.371920351148152;

fn norm1(m: &DMatrix<f64>) -> f64 {
    m.column_iter().map(|c| c.iter().map(|v| v.abs()).sum::<f64>()).fold(0.0, f64::max)
}

/// `e^{m}`.
///
/// # Errors
/// See [`ExpmError`].
pub fn try_expm(m: &DMatrix<f64>) -> Result<DMatrix<f64>, ExpmError> {
    let (rows, columns) = m.shape();
    if rows != columns {
        return Err(ExpmError::NotSquare { rows, columns });
    }
    if m.iter().any(|v| !v.is_finite()) {
        return Err(ExpmError::NotFinite);
    }
    let n = rows;
    if n == 0 {
        return Ok(DMatrix::zeros(0, 0));
    }
    let norm = norm1(m);
    let s = if norm > THETA13 { (norm / THETA13).log2().ceil().max(0.0) as i32 } else { 0 };
    let a = m * 2f64.powi(-s);
    let b = &PADE13;
    let eye = DMatrix::<f64>::identity(n, n);
    let a2 = &a * &a;
    let a4 = &a2 * &a2;
    let a6 = &a4 * &a2;
    let u_inner = &a6 * (&a6 * b[13] + &a4 * b[11] + &a2 * b[9]) + &a6 * b[7] + &a4 * b[5] + &a2 * b[3] + &eye * b[1];
    let u = &a * u_inner;
    let v = &a6 * (&a6 * b[12] + &a4 * b[10] + &a2 * b[8]) + &a6 * b[6] + &a4 * b[4] + &a2 * b[2] + &eye * b[0];
    let p = &v + &u;
    let q = &v - &u;
    let mut r = q.lu().solve(&p).ok_or(ExpmError::Singular)?;
    for _ in 0..s {
        r = &r * &r;
    }
    if r.iter().any(|v| !v.is_finite()) {
        return Err(ExpmError::NotFinite);
    }
    Ok(r)
}

/// Zero-order-hold discretisation of `(A, B)` over a step `h`: returns `(Φ, Γ)`.
///
/// # Errors
/// See [`ExpmError`].
pub fn try_zero_order_hold(a: &DMatrix<f64>, b: &DMatrix<f64>, h: f64) -> Result<(DMatrix<f64>, DMatrix<f64>), ExpmError> {
    let n = a.nrows();
    let m = b.ncols();
    if a.ncols() != n || b.nrows() != n {
        return Err(ExpmError::NotSquare { rows: a.nrows(), columns: a.ncols() });
    }
    let mut block = DMatrix::<f64>::zeros(n + m, n + m);
    block.view_mut((0, 0), (n, n)).copy_from(&(a * h));
    block.view_mut((0, n), (n, m)).copy_from(&(b * h));
    let e = try_expm(&block)?;
    Ok((e.view((0, 0), (n, n)).into_owned(), e.view((0, n), (n, m)).into_owned()))
}

#[cfg(test)]
#[path = "../tests/linalg_expm.rs"]
mod tests;
