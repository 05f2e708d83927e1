//! Invariant (transmission) zeros of `x' = A x + B u`, `y = C x + D u`.
//!
//! # Equation
//! The zeros are the finite `z` at which the system matrix
//! `S(z) = [A − zI, B; C, D]` loses rank below its normal rank: an input `u₀ e^{zt}` with a
//! suitable initial state then gives `y ≡ 0`. A zero in the right half-plane (outside the unit
//! circle for a sampled plant) makes the plant non-minimum-phase: a step response first moves
//! the wrong way (undershoot) and feedback cannot move that zero.
//!
//! # Method
//! Structure deflation by orthogonal transformations, then one standard eigenvalue problem —
//! the reduction of A. Emami-Naeini and P. Van Dooren, "Computation of zeros of linear
//! multivariable systems", Automatica 18(4), 1982 (from memory; the step below is derived here,
//! it is the output-zeroing argument of the structure algorithm):
//! 1. compress the rows of `D` (SVD): `Uᵀ D = [D₁; 0]` with `D₁` of full row rank σ, and
//!    `Uᵀ C = [C₁; C₂]`; with σ = p, stop;
//! 2. compress `C₂` (SVD): an orthogonal state change `W` with `C₂ W = [0, C₂₂]`, `C₂₂` of full
//!    column rank τ. Output-zeroing forces the last τ states to 0, so their derivative
//!    `A₂₁ x₁ + B₂ u` must vanish too: the system `(A₁₁, B₁, [C₁₁; A₂₁], [D₁; B₂])` with τ fewer
//!    states has the same zeros (rows of `C₂` beyond its rank are outputs that are identically
//!    0 and are dropped); τ = 0 drops those outputs and stops;
//! 3. repeat; then do the same on the dual `(Aᵀ, Cᵀ, Bᵀ, Dᵀ)`, alternating until `D` is square
//!    and invertible (or no state is left: no zeros);
//! 4. the zeros are the eigenvalues of `A_f − B_f D_f⁻¹ C_f`.
//!
//! Before the reduction the state is balanced (a diagonal similarity of powers of two) and each
//! input column of `[B; D]` and output row of `[C, D]` scaled to unit norm, so the rank
//! decisions do not depend on the units; a singular value at or below
//! `relative_tolerance · ‖[A B; C D]‖₂` counts as zero. Each zero is then checked on the system
//! as given: its residual is `σ_min(S(z)) / ‖S‖₂` over the `n + min(m, p)` largest singular
//! values, reported beside it.
//!
//! # Cost
//! Each reduction step is `O((n + m + p)³)` (two SVDs and a similarity); at most `n` steps
//! remove states, so `O(n (n + m + p)³)` in the worst case (a chain of integrators), usually a
//! few steps; then one `O(n³)` eigenvalue problem.
//!
//! # Failure modes
//! An SVD or the eigenvalue iteration that does not converge (an error, never a guess); a plant
//! without inputs or outputs has no zeros (an empty list). `D_f` is invertible by the rank
//! decisions but may be ill-conditioned near the tolerance: the residual shows it.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::eigen::{balancing_scale, try_eigenvalues, EigenError};
use crate::linalg::qr::full_qr;
use crate::linalg::svd::{try_singular_values, try_svd, SvdError, SvdParams};

/// Tuning of [`try_invariant_zeros`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ZeroParams {
    /// Singular values at or below this fraction of `‖[A B; C D]‖₂` count as zero. Default
    /// 1e-10 (the controllability analysis's tolerance: common practice puts it between
    /// `n ε` and `√ε`).
    pub relative_tolerance: f64,
}

impl Default for ZeroParams {
    fn default() -> Self {
        ZeroParams { relative_tolerance: 1e-10 }
    }
}

/// The zeros with their checks.
#[derive(Debug, Clone, PartialEq)]
pub struct Zeros {
    pub zeros: Vec<Complex64>,
    /// Per zero, `σ_min(S(z)) / ‖S‖₂` of the system as given (0 at an exact zero).
    pub residuals: Vec<f64>,
    /// Reduction steps taken (states removed by deflation, primal and dual).
    pub reductions: usize,
    /// The absolute rank tolerance used, in the scaled units.
    pub tolerance: f64,
}

/// Why the zeros could not be computed.
#[derive(Debug, Clone, PartialEq)]
pub enum ZerosError {
    /// The matrices do not fit together (`what`: expected and found sizes).
    Size {
        what: &'static str,
        expected: usize,
        found: usize,
    },
    Svd(SvdError),
    Eigen(EigenError),
    /// The alternating reduction did not reach a square, invertible `D` within its limit.
    NoConvergence {
        steps: usize,
    },
}

impl std::fmt::Display for ZerosError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ZerosError::Size { what, expected, found } => write!(f, "{what}: expected {expected}, found {found}"),
            ZerosError::Svd(e) => write!(f, "zeros: {e}"),
            ZerosError::Eigen(e) => write!(f, "zeros: {e}"),
            ZerosError::NoConvergence { steps } => write!(f, "zeros: the structure reduction did not finish in {steps} steps"),
        }
    }
}

impl std::error::Error for ZerosError {}

impl From<SvdError> for ZerosError {
    fn from(e: SvdError) -> Self {
        ZerosError::Svd(e)
    }
}

impl From<EigenError> for ZerosError {
    fn from(e: EigenError) -> Self {
        ZerosError::Eigen(e)
    }
}

/// A system being reduced.
#[derive(Debug, Clone)]
struct System {
    a: DMatrix<f64>,
    b: DMatrix<f64>,
    c: DMatrix<f64>,
    d: DMatrix<f64>,
}

impl System {
    fn dual(&self) -> System {
        System { a: self.a.transpose(), b: self.c.transpose(), c: self.b.transpose(), d: self.d.transpose() }
    }
}

/// An orthogonal `k × k` matrix whose first `r` columns span the columns of `basis` (`k × r`,
/// orthonormal columns), completed by a full Householder QR.
fn completed(basis: &DMatrix<f64>, k: usize) -> DMatrix<f64> {
    if basis.ncols() == 0 {
        return DMatrix::identity(k, k);
    }
    full_qr(basis).0
}

/// The rank of `m` (singular values above `tol`) and an orthogonal basis of its column space
/// (`U`'s leading columns) and of its row space (`V`'s leading columns).
fn ranges(m: &DMatrix<f64>, tol: f64) -> Result<(usize, DMatrix<f64>, DMatrix<f64>), ZerosError> {
    let svd = try_svd(m, SvdParams::default())?;
    let rank = svd.singular_values.iter().filter(|s| **s > tol).count();
    let cols = svd.u.columns(0, rank).into_owned();
    let rows = svd.v_adjoint.rows(0, rank).transpose();
    Ok((rank, cols, rows))
}

/// Step 1–3 of the module notes on `s` until `D` has full row rank; returns the steps taken.
fn reduce(s: &mut System, tol: f64) -> Result<usize, ZerosError> {
    let mut steps = 0;
    loop {
        let (n, p) = (s.a.nrows(), s.c.nrows());
        if p == 0 {
            return Ok(steps);
        }
        // 1. Rows of D: U = [range of D, the rest].
        let (sigma, d_range, _) = ranges(&s.d, tol)?;
        if sigma == p {
            return Ok(steps);
        }
        let u = completed(&d_range, p);
        let c = u.transpose() * &s.c;
        let d = u.transpose() * &s.d;
        let c2 = c.rows(sigma, p - sigma).into_owned();
        // 2. C₂'s row space goes to the last τ states.
        let (tau, _, c2_rows) = ranges(&c2, tol)?;
        if tau == 0 || n == 0 {
            s.c = c.rows(0, sigma).into_owned();
            s.d = d.rows(0, sigma).into_owned();
            return Ok(steps);
        }
        let q = completed(&c2_rows, n);
        // W = [the complement, the row space]: C₂ W = [0, C₂₂].
        let mut w = DMatrix::<f64>::zeros(n, n);
        w.columns_mut(0, n - tau).copy_from(&q.columns(tau, n - tau));
        w.columns_mut(n - tau, tau).copy_from(&q.columns(0, tau));
        let a = w.transpose() * &s.a * &w;
        let b = w.transpose() * &s.b;
        let cw = c.rows(0, sigma) * &w;
        let k = n - tau;
        let mut new_c = DMatrix::<f64>::zeros(sigma + tau, k);
        new_c.rows_mut(0, sigma).copy_from(&cw.columns(0, k));
        new_c.rows_mut(sigma, tau).copy_from(&a.view((k, 0), (tau, k)));
        let mut new_d = DMatrix::<f64>::zeros(sigma + tau, s.b.ncols());
        new_d.rows_mut(0, sigma).copy_from(&d.rows(0, sigma));
        new_d.rows_mut(sigma, tau).copy_from(&b.rows(k, tau));
        *s = System { a: a.view((0, 0), (k, k)).into_owned(), b: b.rows(0, k).into_owned(), c: new_c, d: new_d };
        steps += tau;
    }
}

/// The system balanced and with unit-norm input columns and output rows (same zeros).
fn scaled(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>) -> System {
    let scale = balancing_scale(a, 50);
    let (n, m, p) = (a.nrows(), b.ncols(), c.nrows());
    let mut s = System { a: a.clone(), b: b.clone(), c: c.clone(), d: d.clone() };
    for i in 0..n {
        for j in 0..n {
            s.a[(i, j)] *= scale[j] / scale[i];
        }
        for j in 0..m {
            s.b[(i, j)] /= scale[i];
        }
        for k in 0..p {
            s.c[(k, i)] *= scale[i];
        }
    }
    for j in 0..m {
        let norm = (s.b.column(j).norm_squared() + s.d.column(j).norm_squared()).sqrt();
        if norm > 0.0 && norm.is_finite() {
            s.b.column_mut(j).unscale_mut(norm);
            s.d.column_mut(j).unscale_mut(norm);
        }
    }
    for k in 0..p {
        let norm = (s.c.row(k).norm_squared() + s.d.row(k).norm_squared()).sqrt();
        if norm > 0.0 && norm.is_finite() {
            s.c.row_mut(k).unscale_mut(norm);
            s.d.row_mut(k).unscale_mut(norm);
        }
    }
    s
}

fn system_matrix(s: &System) -> DMatrix<f64> {
    let (n, m, p) = (s.a.nrows(), s.b.ncols(), s.c.nrows());
    let mut out = DMatrix::<f64>::zeros(n + p, n + m);
    out.view_mut((0, 0), (n, n)).copy_from(&s.a);
    out.view_mut((0, n), (n, m)).copy_from(&s.b);
    out.view_mut((n, 0), (p, n)).copy_from(&s.c);
    out.view_mut((n, n), (p, m)).copy_from(&s.d);
    out
}

/// The invariant zeros of `(A, B, C, D)` (see the module notes), each with its residual.
///
/// # Errors
/// [`ZerosError::Size`] when the matrices do not fit, an SVD or eigenvalue failure, or
/// [`ZerosError::NoConvergence`] of the reduction.
pub fn try_invariant_zeros(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, params: ZeroParams) -> Result<Zeros, ZerosError> {
    let (n, m, p) = (a.nrows(), b.ncols(), c.nrows());
    for (what, expected, found) in [("columns of A", n, a.ncols()), ("rows of B", n, b.nrows()), ("columns of C", n, c.ncols()), ("rows of D", p, d.nrows()), ("columns of D", m, d.ncols())] {
        if expected != found {
            return Err(ZerosError::Size { what, expected, found });
        }
    }
    let mut s = scaled(a, b, c, d);
    let norm = crate::linalg::svd::try_norm2(&system_matrix(&s), SvdParams::default())?;
    let tol = params.relative_tolerance * norm.max(f64::MIN_POSITIVE);
    let none = |reductions| Zeros { zeros: Vec::new(), residuals: Vec::new(), reductions, tolerance: tol };
    if m == 0 || p == 0 || n == 0 {
        return Ok(none(0));
    }
    let mut reductions = 0;
    let limit = 2 * (n + m + p) + 2;
    for round in 0..limit {
        if s.a.nrows() == 0 || s.c.nrows() == 0 || s.b.ncols() == 0 {
            return Ok(none(reductions));
        }
        if s.d.nrows() == s.d.ncols() && ranges(&s.d, tol)?.0 == s.d.nrows() {
            return finish(&s, a, b, c, d, reductions, tol);
        }
        // Alternate: the system, then its dual.
        if round % 2 == 0 {
            reductions += reduce(&mut s, tol)?;
        } else {
            let mut dual = s.dual();
            reductions += reduce(&mut dual, tol)?;
            s = dual.dual();
        }
    }
    Err(ZerosError::NoConvergence { steps: limit })
}

/// Step 4: the eigenvalues of `A_f − B_f D_f⁻¹ C_f`, checked on the system as given.
fn finish(s: &System, a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, reductions: usize, tol: f64) -> Result<Zeros, ZerosError> {
    let dinv_c = s.d.clone().lu().solve(&s.c).ok_or(ZerosError::NoConvergence { steps: reductions })?;
    let zeros = try_eigenvalues(&(&s.a - &s.b * dinv_c))?;
    let given = System { a: a.clone(), b: b.clone(), c: c.clone(), d: d.clone() };
    let residuals = zeros.iter().map(|z| residual(&given, *z)).collect::<Result<Vec<_>, _>>()?;
    Ok(Zeros { zeros, residuals, reductions, tolerance: tol })
}

/// `σ_k(S(z)) / σ_1(S(z))` with `k = n + min(m, p)`, the normal rank of a system without
/// degenerate structure: 0 where `S(z)` loses rank.
fn residual(s: &System, z: Complex64) -> Result<f64, ZerosError> {
    let (n, m, p) = (s.a.nrows(), s.b.ncols(), s.c.nrows());
    let mut sm = DMatrix::<Complex64>::zeros(n + p, n + m);
    for i in 0..n {
        for j in 0..n {
            sm[(i, j)] = Complex64::new(s.a[(i, j)], 0.0) - if i == j { z } else { Complex64::new(0.0, 0.0) };
        }
        for j in 0..m {
            sm[(i, n + j)] = Complex64::new(s.b[(i, j)], 0.0);
        }
    }
    for k in 0..p {
        for j in 0..n {
            sm[(n + k, j)] = Complex64::new(s.c[(k, j)], 0.0);
        }
        for j in 0..m {
            sm[(n + k, n + j)] = Complex64::new(s.d[(k, j)], 0.0);
        }
    }
    let sv = try_singular_values(&sm, SvdParams::default())?;
    let k = n + m.min(p);
    let top = sv.iter().copied().fold(0.0, f64::max);
    Ok(if top > 0.0 { sv.get(k - 1).copied().unwrap_or(0.0) / top } else { 0.0 })
}

#[cfg(test)]
#[path = "tests/zeros.rs"]
mod tests;
