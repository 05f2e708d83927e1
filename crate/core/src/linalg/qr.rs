//! Householder QR with the full (square) orthogonal factor, and null spaces.
//!
//! # Equation
//! `M = Q R` with `Q` unitary `n × n` and `R` upper trapezoidal `n × k`.
//!
//! # Method
//! Householder reflections `H = I − β v vᴴ` chosen so that `H x = −e^{i arg x₁} ‖x‖ e₁`
//! (Golub & Van Loan, *Matrix Computations*, 4th ed., §5.1–5.2), applied
//! to the identity to form all of `Q`. nalgebra's `QR` returns only the thin
//! factor; the full one is needed for orthogonal complements.
//!
//! # Cost
//! `4 n k² − 4k³/3` flops for `R` plus `4 n² k` for all of `Q`, or `4 n k d` for its last `d`
//! columns ([`trailing_q_columns`]) (real arithmetic; four times that for complex).
//!
//! # Failure modes
//! None: the algorithm is finite and backward stable. Rank decisions are left
//! to the caller (see [`null_space`], which uses the SVD).

use nalgebra::{ComplexField, DMatrix};

use super::svd::{try_svd, SvdError, SvdParams};

/// Full Householder QR: returns `(Q, R)` with `Q` `n × n` unitary and `R` `n × k`.
pub fn full_qr<T: ComplexField<RealField = f64>>(m: &DMatrix<T>) -> (DMatrix<T>, DMatrix<T>) {
    let n = m.nrows();
    let (reflectors, r) = householder(m);
    let mut q = DMatrix::<T>::identity(n, n);
    // Q = H₁ H₂ … H_k: applied to I from the right, in order.
    for h in &reflectors {
        for row in 0..n {
            let mut dot = T::zero();
            for (idx, i) in (h.start..n).enumerate() {
                dot += q[(row, i)].clone() * h.v[idx].clone();
            }
            let f = dot.scale(h.beta);
            for (idx, i) in (h.start..n).enumerate() {
                q[(row, i)] = q[(row, i)].clone() - f.clone() * h.v[idx].clone().conjugate();
            }
        }
    }
    (q, r)
}

/// The last `d` columns of the full `Q` of `m = Q R` (`n × k`, `d ≤ n`): an orthonormal basis of
/// the orthogonal complement of `range m` when `m` has full column rank and `d = n − k`.
/// Only these columns are formed (`Q [0; I_d]`, the reflectors applied in reverse order), at
/// `4 n k d` flops instead of the `4 n² k` of all of `Q`.
pub fn trailing_q_columns<T: ComplexField<RealField = f64>>(m: &DMatrix<T>, d: usize) -> DMatrix<T> {
    let n = m.nrows();
    let d = d.min(n);
    let (reflectors, _) = householder(m);
    let mut e = DMatrix::<T>::zeros(n, d);
    for j in 0..d {
        e[(n - d + j, j)] = T::one();
    }
    for h in reflectors.iter().rev() {
        for c in 0..d {
            let mut dot = T::zero();
            for (idx, i) in (h.start..n).enumerate() {
                dot += h.v[idx].clone().conjugate() * e[(i, c)].clone();
            }
            let f = dot.scale(h.beta);
            for (idx, i) in (h.start..n).enumerate() {
                e[(i, c)] = e[(i, c)].clone() - h.v[idx].clone() * f.clone();
            }
        }
    }
    e
}

/// One reflector `H = I − β v vᴴ` acting on rows `start..n`.
struct Reflector<T> {
    start: usize,
    v: Vec<T>,
    beta: f64,
}

/// The reflectors of `m`'s Householder QR and its `R`.
fn householder<T: ComplexField<RealField = f64>>(m: &DMatrix<T>) -> (Vec<Reflector<T>>, DMatrix<T>) {
    let (n, k) = m.shape();
    let mut r = m.clone();
    let steps = k.min(n.saturating_sub(1));
    let mut reflectors = Vec::with_capacity(steps);
    for j in 0..steps {
        let mut norm_sq = 0.0;
        for i in j..n {
            norm_sq += r[(i, j)].clone().modulus_squared();
        }
        let alpha = norm_sq.sqrt();
        if alpha == 0.0 {
            continue;
        }
        let x0 = r[(j, j)].clone();
        let x0_mod = x0.clone().modulus();
        let phase = if x0_mod > 0.0 { x0.clone().unscale(x0_mod) } else { T::one() };
        let mut v: Vec<T> = (j..n).map(|i| r[(i, j)].clone()).collect();
        v[0] = v[0].clone() + phase.scale(alpha);
        let vnorm_sq: f64 = v.iter().map(|z| z.clone().modulus_squared()).sum();
        if vnorm_sq == 0.0 {
            continue;
        }
        let beta = 2.0 / vnorm_sq;
        // R ← H R  (columns j..k)
        for c in j..k {
            let mut dot = T::zero();
            for (idx, i) in (j..n).enumerate() {
                dot += v[idx].clone().conjugate() * r[(i, c)].clone();
            }
            let f = dot.scale(beta);
            for (idx, i) in (j..n).enumerate() {
                r[(i, c)] = r[(i, c)].clone() - v[idx].clone() * f.clone();
            }
        }
        for i in (j + 1)..n {
            r[(i, j)] = T::zero();
        }
        reflectors.push(Reflector { start: j, v, beta });
    }
    (reflectors, r)
}

/// An orthonormal basis of the null space of `w` (`p × n`), as the columns of an
/// `n × d` matrix, with the rank decided by singular values above
/// `relative_tolerance · σ_max` (or, for the zero matrix, the whole space).
///
/// # Errors
/// Propagates [`SvdError`].
pub fn null_space<T: ComplexField<RealField = f64>>(w: &DMatrix<T>, relative_tolerance: f64) -> Result<DMatrix<T>, SvdError> {
    let (p, n) = w.shape();
    if p == 0 {
        return Ok(DMatrix::identity(n, n));
    }
    // Work on wᴴ (n × p): its full QR's trailing columns span null(w) when w has full row rank;
    // the SVD decides the rank robustly.
    let svd = try_svd(&w.adjoint(), SvdParams::default())?;
    let smax = svd.singular_values.iter().cloned().fold(0.0, f64::max);
    let rank = svd.singular_values.iter().filter(|&&s| s > relative_tolerance * smax && s > 0.0).count();
    let range = svd.u.columns(0, rank).into_owned();
    let (q, _) = full_qr(&range);
    Ok(q.columns(rank, n - rank).into_owned())
}

#[cfg(test)]
#[path = "../tests/linalg_qr.rs"]
mod tests;
