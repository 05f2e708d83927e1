//! The smallest singular value of `[A − λI, B]` for many shifts `λ`, in `O(n²(m + k))` per shift
//! after one `O(n³)` reduction (`k` inverse-iteration steps).
//!
//! # Equation
//! `σ_min([A − λI, B])`, `A` `n × n`, `B` `n × m`: the distance (2-norm) to the nearest pair in
//! which the mode `λ` is uncontrollable, the Popov–Belevitch–Hautus margin.
//!
//! # Method
//! 1. Once: the Hessenberg reduction `A = Q H Qᵀ` (Householder). With `B̃ = Qᵀ B`,
//!    `[A − λI, B] = Q [H − λI, B̃] diag(Qᵀ, I)`, so both have the same singular values.
//! 2. Per shift: `n − 1` Givens rotations from the left make `H − λI` upper triangular (`T`),
//!    applied to `B̃` as well (`C`); then, column by column of `C`, rotations from the right
//!    fold `C` into `T` from the bottom up, leaving `[R, 0]` with `R` upper triangular. All
//!    transformations are unitary: `σ([H − λI, B̃]) = σ(R)`.
//! 3. `σ_min(R)` by inverse iteration on `Rᴴ R` (two triangular solves a step), started from a
//!    fixed pseudo-random vector; the vector converges at the rate `(σ_min/σ₂)²` per step and
//!    the estimate `1/‖R⁻ᴴ x‖` (a Rayleigh quotient) decreases to `σ_min` at its square,
//!    `(σ_min/σ₂)⁴`. An exactly zero pivot gives `σ_min = 0`.
//!
//! This is the route Laub used for frequency responses (Hessenberg once, a cheap solve per
//! frequency; A. J. Laub, "Efficient multivariable frequency response computations", IEEE
//! TAC 26(2), 1981, from memory) applied to the PBH pencil; the folding of `C` is the
//! standard updating of a triangular factor by Givens rotations (Golub & Van Loan, *Matrix
//! Computations*, 4th ed., §6.5, from memory).
//!
//! 4. For pole placement ([`ShiftedPair::admissible_basis`]): the right rotations of step 2,
//!    recorded and applied in reverse to `[0; I]`, span the null space of `[H − λI, B̃]`;
//!    its `x` part, mapped back by `Q` and orthonormalised, is `{x : (A − λI) x ∈ range B}`.
//!
//! # Cost
//! `10 n³ / 3` flops once; per shift about `6 n² + 3 n² m` complex multiply–adds for the
//! rotations and `2 n²` per inverse-iteration step: the whole analysis of `n` modes is `O(n³)`
//! (for a bounded number of steps) instead of `O(n⁴)` for one SVD per mode.
//!
//! # Failure modes
//! When the iteration has not settled to [`ShiftedSigmaParams::tolerance`] (the remaining error
//! estimated from the observed linear convergence ratio) within
//! [`ShiftedSigmaParams::max_steps`] (two nearly equal smallest singular values), the caller is
//! told ([`ShiftedSigmaError::NoConvergence`]) and falls back to a full SVD. The result is
//! accurate to a small multiple of `ε ‖[A B]‖₂` in absolute terms (backward stable steps).
//! [`ShiftedPair::admissible_basis`] returns `None` for a non-finite factor or rank-deficient
//! `x` parts; the placement also checks the residual of what it returns.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

/// Tuning of the inverse iteration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ShiftedSigmaParams {
    /// Largest number of inverse-iteration steps per shift. Default 300. Each step costs about
    /// `2 n²` complex multiply–adds, so the cap costs less than one dense SVD of `[A − λI, B]`
    /// (about `(8/3) n³` complex operations) only above `n ≈ 200`; a shift whose two smallest
    /// singular values are 10 % apart settles in about 50 steps.
    pub max_steps: usize,
    /// Stop when the estimated remaining error is below this fraction of the estimate.
    /// Default `1e-9`.
    pub tolerance: f64,
}

impl Default for ShiftedSigmaParams {
    fn default() -> Self {
        ShiftedSigmaParams { max_steps: 300, tolerance: 1e-9 }
    }
}

/// Why a shift was not answered.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ShiftedSigmaError {
    /// The estimate still moved after `steps` steps (last relative change `change`).
    NoConvergence { steps: usize, change: f64 },
    /// A number that is not finite appeared.
    NotFinite,
}

impl std::fmt::Display for ShiftedSigmaError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ShiftedSigmaError::NoConvergence { steps, change } => write!(f, "the inverse iteration did not settle in {steps} steps (last change {change:.1e})"),
            ShiftedSigmaError::NotFinite => write!(f, "a number that is not finite appeared"),
        }
    }
}

impl std::error::Error for ShiftedSigmaError {}

/// `A` reduced once (`H`, `B̃`), ready for any number of shifts.
#[derive(Debug, Clone)]
pub struct ShiftedPair {
    h: DMatrix<f64>,
    bt: DMatrix<f64>,
    /// The orthogonal factor of the reduction (`A = Q H Qᵀ`).
    q: DMatrix<f64>,
}

/// A right rotation of [`ShiftedPair::fold`]: it acted on column `i` of `T` and column `j` of
/// `C` as `[[conj(a), −b], [conj(b), a]]` (`a`, `b` unit-normalised).
#[derive(Debug, Clone, Copy)]
struct RightRotation {
    i: usize,
    j: usize,
    a: Complex64,
    b: Complex64,
}

impl ShiftedPair {
    /// Reduces `A` to Hessenberg form and carries `B` along.
    pub fn new(a: &DMatrix<f64>, b: &DMatrix<f64>) -> ShiftedPair {
        if a.nrows() == 0 {
            return ShiftedPair { h: a.clone(), bt: b.clone(), q: a.clone() };
        }
        let (q, h) = a.clone().hessenberg().unpack();
        ShiftedPair { h, bt: q.transpose() * b, q }
    }

    /// An orthonormal basis (`n × m`) of the `x` parts of the null space of `[A − λI, B]`:
    /// `{x : (A − λI) x ∈ range B}` when `B` has full column rank and `λ` is a controllable
    /// mode, the admissible eigenvector subspace of pole placement.
    ///
    /// The right rotations of [`ShiftedPair::fold`] make `[H − λI, B̃] P = [R, 0]` (`P`
    /// unitary; the left rotations do not change the null space), so the null space of
    /// `[H − λI, B̃]` is spanned by the last `m` columns of `P`, formed by applying the recorded
    /// rotations in reverse to `[0; I]` (`O(n m²)`); `x = Q (first n rows)`, orthonormalised by
    /// classical Gram–Schmidt applied twice (Giraud, Langou, Rozložník & van den Eshof,
    /// "Rounding error analysis of the classical Gram–Schmidt orthogonalization process",
    /// Numer. Math. 101, 2005). Cost per shift: the fold's `O(n² + n² m)` plus `2 n² m` for
    /// `Q`. The `x` parts are well conditioned when `B̃`'s columns are orthonormal and scaled
    /// to `‖A − λI‖` (then `‖w‖ ≤ ‖x‖` for a null vector `(x, w)`): the caller passes such a
    /// `B`. `None` when a value is not finite or the `x` parts are rank deficient (the caller
    /// then uses a full QR).
    pub fn admissible_basis(&self, lambda: Complex64) -> Option<DMatrix<Complex64>> {
        let (n, m) = (self.h.nrows(), self.bt.ncols());
        let mut rotations = Vec::with_capacity(n * m);
        let r = self.fold(lambda, Some(&mut rotations));
        if r.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
            return None;
        }
        // P [0; I]: the rotations in reverse order, on rows i (of the x part) and n + j.
        let mut e = DMatrix::<Complex64>::zeros(n + m, m);
        for j in 0..m {
            e[(n + j, j)] = Complex64::new(1.0, 0.0);
        }
        for rot in rotations.iter().rev() {
            for col in 0..m {
                let (x, y) = (e[(rot.i, col)], e[(n + rot.j, col)]);
                e[(rot.i, col)] = rot.a.conj() * x - rot.b * y;
                e[(n + rot.j, col)] = rot.b.conj() * x + rot.a * y;
            }
        }
        orthonormal_columns(real_times_complex(&self.q, &e.rows(0, n).into_owned()))
    }

    /// `σ_min([A − λI, B])`.
    ///
    /// # Errors
    /// [`ShiftedSigmaError`]: the caller should then use a full SVD.
    pub fn smallest_singular_value(&self, lambda: Complex64, params: ShiftedSigmaParams) -> Result<f64, ShiftedSigmaError> {
        let n = self.h.nrows();
        if n == 0 {
            return Ok(0.0);
        }
        let r = self.fold(lambda, None);
        if r.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
            return Err(ShiftedSigmaError::NotFinite);
        }
        if (0..n).any(|i| r[(i, i)].norm_sqr() == 0.0) {
            return Ok(0.0);
        }
        inverse_iteration(&r, params)
    }

    /// `R` (upper triangular) with `σ(R) = σ([H − λI, B̃])`; the right rotations are recorded
    /// in `record` when given.
    fn fold(&self, lambda: Complex64, mut record: Option<&mut Vec<RightRotation>>) -> DMatrix<Complex64> {
        let n = self.h.nrows();
        let m = self.bt.ncols();
        let mut t = DMatrix::<Complex64>::from_fn(n, n, |i, j| Complex64::new(self.h[(i, j)], 0.0) - if i == j { lambda } else { Complex64::new(0.0, 0.0) });
        let mut c = DMatrix::<Complex64>::from_fn(n, m, |i, j| Complex64::new(self.bt[(i, j)], 0.0));
        // 1. Left rotations: rows k, k+1 zero T[k+1, k].
        for k in 0..n.saturating_sub(1) {
            let (a, b) = (t[(k, k)], t[(k + 1, k)]);
            let Some((ca, cb, r)) = rotation(a, b) else { continue };
            // G = [[conj(a), conj(b)], [−b, a]] / r
            for j in k..n {
                let (x, y) = (t[(k, j)], t[(k + 1, j)]);
                t[(k, j)] = ca.conj() * x + cb.conj() * y;
                t[(k + 1, j)] = -cb * x + ca * y;
            }
            t[(k, k)] = Complex64::new(r, 0.0);
            t[(k + 1, k)] = Complex64::new(0.0, 0.0);
            for j in 0..m {
                let (x, y) = (c[(k, j)], c[(k + 1, j)]);
                c[(k, j)] = ca.conj() * x + cb.conj() * y;
                c[(k + 1, j)] = -cb * x + ca * y;
            }
        }
        // 2. Right rotations fold each column of C into T, bottom up.
        for j in 0..m {
            for i in (0..n).rev() {
                let (a, b) = (t[(i, i)], c[(i, j)]);
                if b.norm_sqr() == 0.0 {
                    continue;
                }
                let Some((ca, cb, r)) = rotation(a, b) else { continue };
                // [t_i, c] ← [t_i, c] · [[conj(a), −b], [conj(b), a]] / r
                for row in 0..i {
                    let (x, y) = (t[(row, i)], c[(row, j)]);
                    t[(row, i)] = x * ca.conj() + y * cb.conj();
                    c[(row, j)] = -x * cb + y * ca;
                }
                t[(i, i)] = Complex64::new(r, 0.0);
                c[(i, j)] = Complex64::new(0.0, 0.0);
                if let Some(list) = record.as_deref_mut() {
                    list.push(RightRotation { i, j, a: ca, b: cb });
                }
            }
        }
        t
    }
}

/// `A S` for a real `A` and a complex `S`, as two real products (`A Re S`, `A Im S`): real
/// matrix products take the blocked kernel, complex ones a generic loop.
pub fn real_times_complex(a: &DMatrix<f64>, s: &DMatrix<Complex64>) -> DMatrix<Complex64> {
    let re = a * s.map(|z| z.re);
    let im = a * s.map(|z| z.im);
    DMatrix::from_fn(a.nrows(), s.ncols(), |i, j| Complex64::new(re[(i, j)], im[(i, j)]))
}

/// The columns of `x` made orthonormal by classical Gram–Schmidt applied twice; `None` when a
/// column loses more than all but `1e-8` of its norm to the previous ones (rank deficient).
fn orthonormal_columns(mut x: DMatrix<Complex64>) -> Option<DMatrix<Complex64>> {
    for j in 0..x.ncols() {
        let before = x.column(j).norm();
        for _ in 0..2 {
            for k in 0..j {
                let dot = x.column(k).dotc(&x.column(j));
                let qk = x.column(k).into_owned();
                x.column_mut(j).axpy(-dot, &qk, Complex64::new(1.0, 0.0));
            }
        }
        let after = x.column(j).norm();
        if !(after > 1e-8 * before) || !after.is_finite() {
            return None;
        }
        x.column_mut(j).unscale_mut(after);
    }
    Some(x)
}

/// The unit rotation taking `(a, b)` to `(r, 0)`: `(a/r, b/r, r)`, `None` when both vanish.
fn rotation(a: Complex64, b: Complex64) -> Option<(Complex64, Complex64, f64)> {
    let r = a.norm().hypot(b.norm());
    (r > 0.0 && r.is_finite()).then(|| (a / r, b / r, r))
}

/// `σ_min(R)` of an upper triangular `R` with non-zero diagonal, by inverse iteration on `Rᴴ R`.
fn inverse_iteration(r: &DMatrix<Complex64>, params: ShiftedSigmaParams) -> Result<f64, ShiftedSigmaError> {
    let n = r.nrows();
    // A fixed pseudo-random start (SplitMix64): never orthogonal to the wanted vector by design.
    let mut state = 0x9E37_79B9_7F4A_7C15u64;
    let mut x = DVector::<Complex64>::from_fn(n, |_, _| {
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        Complex64::new((z >> 11) as f64 / (1u64 << 53) as f64 - 0.5, 0.0)
    });
    let mut y = DVector::<Complex64>::zeros(n);
    let mut estimate = f64::INFINITY;
    let mut change = f64::INFINITY;
    let mut last_ratio = 1.0f64;
    for step in 0..params.max_steps {
        let norm = x.norm();
        if !(norm > 0.0 && norm.is_finite()) {
            return Err(ShiftedSigmaError::NotFinite);
        }
        x /= Complex64::new(norm, 0.0);
        // y = R⁻ᴴ x (forward substitution with Rᴴ), then x = R⁻¹ y.
        for i in 0..n {
            let mut v = x[i];
            for k in 0..i {
                v -= r[(k, i)].conj() * y[k];
            }
            y[i] = v / r[(i, i)].conj();
        }
        let yn = y.norm();
        if !(yn > 0.0 && yn.is_finite()) {
            return if yn.is_infinite() { Ok(0.0) } else { Err(ShiftedSigmaError::NotFinite) };
        }
        // ‖R⁻ᴴ x‖ ≤ 1/σ_min for a unit x, and → 1/σ_min: 1/‖y‖ decreases to σ_min.
        let next = 1.0 / yn;
        let previous = change;
        change = (estimate - next).abs() / next;
        estimate = next;
        // The estimate converges linearly with ratio ρ ≈ change / previous change (the fourth
        // power of the ratio of the two smallest singular values); the error left is about
        // change · ρ / (1 − ρ), so a slow iteration is not stopped early by a small step. ρ is
        // the larger of the last two ratios (one ratio can underestimate it before the slowest
        // component dominates), and the step itself must also be below the tolerance.
        let ratio = if previous.is_finite() && previous > 0.0 { change / previous } else { 1.0 };
        let rho = ratio.max(last_ratio);
        last_ratio = ratio;
        let remaining = if change == 0.0 {
            0.0
        } else if rho < 1.0 {
            change * rho / (1.0 - rho)
        } else {
            f64::INFINITY
        };
        if step > 2 && change.max(remaining) <= params.tolerance {
            return Ok(estimate);
        }
        // x = R⁻¹ y by columns (each column of R is contiguous; the row-wise form strides
        // through memory): y is consumed as the right-hand side.
        for i in (0..n).rev() {
            let xi = y[i] / r[(i, i)];
            x[i] = xi;
            let col = r.column(i);
            for k in 0..i {
                y[k] -= col[k] * xi;
            }
        }
    }
    Err(ShiftedSigmaError::NoConvergence { steps: params.max_steps, change })
}

#[cfg(test)]
#[path = "../tests/linalg_shifted_sigma.rs"]
mod tests;
