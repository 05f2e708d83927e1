//! The largest eigenvalue of a Hermitian matrix, alone (no eigenvectors, no other eigenvalues).
//!
//! # Equation
//! `λ_max(G)` for `G = Gᴴ` (`n × n`, complex).
//!
//! # Method
//! Householder reduction to a real symmetric tridiagonal `T` with diagonal `d` and off-diagonal
//! moduli `|e|` (nalgebra's `SymmetricTridiagonal`; a diagonal unitary similarity makes the
//! complex off-diagonal real without changing the eigenvalues). Then Laguerre's iteration on
//! `p(x) = det(x I − T)` from above Gershgorin's discs: `p` has only real roots, and from above
//! the largest one the iteration decreases monotonically to it, cubically near a simple root
//! and linearly near a repeated one (Wilkinson, "The Algebraic Eigenvalue Problem", 1965, ch. 7;
//! from memory). A matrix far from 1 in size is first scaled by a power of two (exactly). `p'/p` and `p''/p` come from
//! the pivots of `x I − T = L D Lᵀ` and their derivatives, `O(n)` per step, all pivots positive
//! above the largest eigenvalue. The result is confirmed by a Sturm count (the number of
//! negative pivots of `T − x I` is the number of eigenvalues below `x`); if Laguerre does not
//! settle in [`MAX_LAGUERRE`] steps or the count disagrees, bisection on Sturm counts decides
//! (Barth, Martin & Wilkinson, "Calculation of the eigenvalues of a symmetric tridiagonal
//! matrix by the method of bisection", Numer. Math. 9, 1967; Golub & Van Loan, "Matrix
//! Computations", 4th ed., 2013, §8.4.1; both from memory), halving the bracket until it is
//! `4 ε max|x|` wide (plus the pivot floor), at most [`MAX_BISECTIONS`] times, and returning
//! its upper end.
//!
//! # Accuracy
//! Both stages are backward stable: the result is within a small multiple of `ε ‖G‖` of
//! `λ_max`, which for a positive semidefinite `G` (a Gram matrix `MᴴM`, whose largest eigenvalue
//! is `‖M‖₂²`) is a relative accuracy of that order.
//!
//! # Cost
//! `16/3 n³` real flops for the reduction, then `O(n)` per Laguerre step (a handful) or
//! bisection step (about 60): no iteration that can fail to give an answer.
//!
//! # Failure modes
//! A non-finite entry: [`TopEigenError::NotFinite`]. An empty or non-square matrix:
//! [`TopEigenError::Shape`].

use nalgebra::DMatrix;
use num_complex::Complex64;

/// Most Laguerre steps before bisection takes over (a handful is usual).
pub const MAX_LAGUERRE: usize = 40;

/// Most halvings of the bracket (about 60 reach `ε` from Gershgorin's bracket of a finite matrix;
/// the cap only guards against an unforeseen input).
pub const MAX_BISECTIONS: usize = 200;

/// Why the largest eigenvalue could not be computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TopEigenError {
    /// An entry is NaN or infinite.
    NotFinite,
    /// The matrix is empty or not square.
    Shape { rows: usize, columns: usize },
}

impl std::fmt::Display for TopEigenError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            TopEigenError::NotFinite => write!(f, "the matrix has a non-finite entry"),
            TopEigenError::Shape { rows, columns } => write!(f, "a {rows} × {columns} matrix has no largest eigenvalue (it must be square and not empty)"),
        }
    }
}

impl std::error::Error for TopEigenError {}

/// The largest eigenvalue of the Hermitian matrix `g` (only its lower triangle is read).
///
/// # Errors
/// See [`TopEigenError`].
pub fn try_largest_hermitian_eigenvalue(g: &DMatrix<Complex64>) -> Result<f64, TopEigenError> {
    let (rows, columns) = g.shape();
    if rows == 0 || rows != columns {
        return Err(TopEigenError::Shape { rows, columns });
    }
    if g.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
        return Err(TopEigenError::NotFinite);
    }
    if rows == 1 {
        return Ok(g[(0, 0)].re);
    }
    // Far from 1 in size, scale by a power of two (exactly) so that squares of the
    // off-diagonal neither overflow nor underflow; the eigenvalue is scaled back.
    let largest = g.iter().map(|z| z.re.abs().max(z.im.abs())).fold(0.0, f64::max);
    let exponent = if largest > 0.0 { largest.log2().round().clamp(-1000.0, 1000.0) as i32 } else { 0 };
    let (scale, scaled);
    let g = if exponent.abs() > 500 {
        scale = 2f64.powi(exponent);
        scaled = g * Complex64::new(1.0 / scale, 0.0);
        &scaled
    } else {
        scale = 1.0;
        g
    };
    Ok(scale * largest_eigenvalue_of(g))
}

/// The largest eigenvalue of a finite Hermitian `g` of at least two rows, of moderate size.
fn largest_eigenvalue_of(g: &DMatrix<Complex64>) -> f64 {
    let (d, e) = nalgebra::linalg::SymmetricTridiagonal::new(g.clone()).unpack_tridiagonal();
    let e2: Vec<f64> = e.iter().map(|v| v * v).collect();
    let (d, e) = (d.as_slice(), e.as_slice());
    let (lo, hi, pivmin) = gershgorin(d, e, &e2);
    match largest_by_laguerre(d, &e2, hi, pivmin) {
        Some(x) if count_below(d, &e2, x + 4.0 * f64::EPSILON * x.abs() + pivmin, pivmin) == d.len() => x,
        _ => largest_by_bisection(d, &e2, lo, hi, pivmin),
    }
}

/// Gershgorin's bracket of the eigenvalues, widened by a few units in the last place so that
/// rounding in the discs cannot shut one out, and the pivot floor.
fn gershgorin(d: &[f64], e: &[f64], e2: &[f64]) -> (f64, f64, f64) {
    let n = d.len();
    let radius = |i: usize| (if i > 0 { e[i - 1].abs() } else { 0.0 }) + (if i + 1 < n { e[i].abs() } else { 0.0 });
    let hi = (0..n).map(|i| d[i] + radius(i)).fold(f64::NEG_INFINITY, f64::max);
    let lo = (0..n).map(|i| d[i] - radius(i)).fold(f64::INFINITY, f64::min);
    let pivmin = f64::MIN_POSITIVE * e2.iter().copied().fold(1.0, f64::max);
    let slack = 4.0 * f64::EPSILON * lo.abs().max(hi.abs()) + pivmin;
    (lo - slack, hi + slack, pivmin)
}

/// Laguerre's iteration for the largest root of `det(x I − T)` from `start` (above it); `None`
/// when it does not settle. A pivot that is not positive after a step means the iterate is at
/// the root within rounding (a quadratic is solved exactly in one step), and that iterate is
/// returned for the caller to confirm.
fn largest_by_laguerre(d: &[f64], e2: &[f64], start: f64, pivmin: f64) -> Option<f64> {
    let n = d.len() as f64;
    let mut x = start;
    for taken in 0..MAX_LAGUERRE {
        // Pivots p of x I − T and their first two derivatives in x: G = Σ p'/p = (log det)',
        // H = Σ (p'² − p p'')/p² = −(log det)''.
        let (mut p, mut dp, mut ddp) = (0.0f64, 0.0f64, 0.0f64);
        let (mut g, mut h) = (0.0f64, 0.0f64);
        for (i, di) in d.iter().enumerate() {
            let (np, ndp, nddp) = if i == 0 {
                (x - di, 1.0, 0.0)
            } else {
                let e = e2[i - 1];
                (x - di - e / p, 1.0 + e * dp / (p * p), e * (ddp * p - 2.0 * dp * dp) / (p * p * p))
            };
            (p, dp, ddp) = (np, ndp, nddp);
            if !(p > 0.0) {
                // At (or, by rounding, just below) the root after a step: the caller's Sturm
                // count decides whether it is close enough.
                return (taken > 0 && p.is_finite()).then_some(x);
            }
            g += dp / p;
            h += (dp * dp - p * ddp) / (p * p);
        }
        let root = ((n - 1.0) * (n * h - g * g)).max(0.0).sqrt();
        let step = n / (g + root);
        if !step.is_finite() {
            return None;
        }
        x -= step;
        if step <= 4.0 * f64::EPSILON * x.abs() + pivmin {
            return Some(x);
        }
    }
    None
}

/// Eigenvalues of the tridiagonal `(d, e)` below `x`: the negative pivots of `T − x I = L D Lᵀ`
/// (a pivot smaller than `pivmin` in size is replaced by `−pivmin`, as in LAPACK's `dstebz`).
fn count_below(d: &[f64], e2: &[f64], x: f64, pivmin: f64) -> usize {
    let mut count = 0;
    let mut q = 0.0f64;
    for (i, di) in d.iter().enumerate() {
        q = if i == 0 { di - x } else { di - x - e2[i - 1] / q };
        if q.abs() < pivmin {
            q = -pivmin;
        }
        count += usize::from(q < 0.0);
    }
    count
}

/// Bisection on Sturm counts in `[lo, hi]`; the upper end of the last bracket.
fn largest_by_bisection(d: &[f64], e2: &[f64], mut lo: f64, mut hi: f64, pivmin: f64) -> f64 {
    let n = d.len();
    for _ in 0..MAX_BISECTIONS {
        if hi - lo <= 4.0 * f64::EPSILON * lo.abs().max(hi.abs()) + pivmin {
            break;
        }
        let mid = 0.5 * (lo + hi);
        if count_below(d, e2, mid, pivmin) == n {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi
}

#[cfg(test)]
#[path = "../tests/hermitian_top.rs"]
mod tests;
