//! Pole placement when a requested pole repeats more often than `rank B` — with one input any
//! repeated pole, deadbeat (every pole at `z = 0`) among them.
//!
//! # Equation
//! Find `K` with `A − B K` having the requested eigenvalues, a pole of multiplicity `p > rank B`
//! included. No diagonalisable closed loop then exists (each eigenvalue of `A − B K` has at most
//! `rank B` independent eigenvectors), so the eigenvector methods of [`super::robust`] do not
//! apply; the closed loop holds a Jordan block. With one input the gain is unique.
//!
//! # Method
//! Orthogonal deflation on the controllable Hessenberg form, in the manner of the single-input
//! algorithms of Miminis & Paige, "An algorithm for pole assignment of time invariant linear
//! systems", Int. J. Control 35(2):341–354, 1982, and Petkov, Christov & Konstantinov, "A
//! computational algorithm for pole assignment of linear single-input systems", IEEE TAC
//! 29(11):1045–1048, 1984 (both from memory; the derivation below is our own):
//! 1. The staircase of `(A, b)` ([`crate::analysis::staircase`]) gives `H = Tᵀ A T` upper
//!    Hessenberg with non-zero subdiagonal and `Tᵀ b = β e₁`. Only the first row of
//!    `H − β e₁ kᵀ` depends on `k`.
//! 2. For the next pole `λ`, plane rotations applied to the columns of `H − λ I` (planes
//!    `(p−1, p)`, then `(p−2, p−1)`, …, `(1, 2)`) zero, row by row from the bottom, the
//!    subdiagonal: `(H − λ I) Z = U` upper triangular. `Z e₁` spans the null space of rows
//!    `2 … p` of `H − λ I`, so with `k₁ = U₁₁ / β` in the new coordinates the first column of
//!    the closed loop becomes `λ e₁`.
//! 3. `Zᴴ H Z = Zᴴ U + λ I` is again upper Hessenberg (a product of adjacent-plane rotations
//!    times a triangular matrix) and `Zᴴ β e₁` has its only other entry in position 2, so the
//!    trailing `(p−1) × (p−1)` block with that entry is again a controllable Hessenberg pair:
//!    the step repeats on it until every pole is placed. The closed loop is upper triangular
//!    in the accumulated unitary coordinates, with the requested poles on its diagonal.
//!
//! The arithmetic is complex (a complex pole is one step); with one input the exact gain is
//! real, and the imaginary part left by rounding is dropped (its size is checked).
//!
//! With several inputs the inputs are combined into one direction, `u = g v` (the cyclic
//! design: e.g. Chen, *Linear System Theory and Design*, 3rd ed., 1999, §8.3; from memory):
//! the right singular vectors of `B` and a few seeded combinations are tried, those for which
//! `(A, B g)` is controllable are designed, and the smallest gain `K = g k` is kept.
//!
//! # Cost
//! `O(n²)` per pole (rotations on a Hessenberg matrix), `O(n³)` in all for the staircase and
//! the accumulated coordinates; times the number of input directions tried.
//!
//! # Failure modes
//! - no tried input direction reaches every state (the plant is not cyclic, e.g. an eigenvalue
//!   with two independent eigenvectors needs two inputs):
//!   [`PlacementError::RepeatedBeyondRank`] with the reason;
//! - a gain with a non-negligible imaginary part or a non-finite entry:
//!   [`PlacementError::Numerical`].
//!
//! A Jordan block's eigenvalues are inherently sensitive: a perturbation of size `δ` moves a
//! `p`-fold pole by about `δ^{1/p}` (e.g. Golub & Van Loan, *Matrix Computations*, 4th ed.,
//! 2013, §7.2.2; from memory), while the mean of the cluster moves only by `O(δ)`. The caller
//! reports both ([`super::Placement::repeated_pole_spread`]).

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use super::{most_repeated, Branch, Core, PlacementError, PlacementMethod, PlacementParams};
use crate::analysis::staircase_with;
use crate::linalg::qr::full_qr;
use crate::linalg::svd::{try_norm2, try_svd, SvdParams};

/// Largest relative imaginary part of a single-input gain accepted as rounding.
const IMAGINARY_TOLERANCE: f64 = 1e-6;

/// Gain for poles some of which repeat more than `rank` (the numerical rank of `B`) times.
///
/// # Errors
/// See the module documentation.
pub(super) fn assign_repeated(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams, rank: usize) -> Result<Core, PlacementError> {
    let (gain, method) = if b.ncols() == 1 {
        let b1 = b.column(0).into_owned();
        let Some(k) = single_input_gain(a, &b1, poles, params)? else {
            let (pole, multiplicity) = most_repeated(poles);
            return Err(PlacementError::RepeatedBeyondRank { pole, multiplicity, rank });
        };
        (DMatrix::from_row_slice(1, k.len(), k.as_slice()), PlacementMethod::Deflation)
    } else {
        (multi_input_gain(a, b, poles, params)?, PlacementMethod::DeflationMultiInput)
    };
    if !gain.iter().all(|v| v.is_finite()) {
        return Err(PlacementError::Numerical { message: "the gain is not finite".into() });
    }
    Ok(Core { gain, iterations: 0, converged: true, condition: f64::NAN, balanced_condition: f64::NAN, abs_det: 0.0, rank, method, eigenvectors: None, branch: Branch::Fresh, closed_loop_poles: None })
}

/// The multi-input deflation of the module documentation, in real arithmetic: a real pole
/// deflates one state, a conjugate pair the real two-dimensional invariant subspace
/// `[Re x, Im x]`.
fn multi_input_gain(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams) -> Result<DMatrix<f64>, PlacementError> {
    let (n, m) = (a.nrows(), b.ncols());
    let mut h = a.clone();
    let mut g = b.clone();
    let mut w = DMatrix::<f64>::identity(n, n);
    let mut k = DMatrix::<f64>::zeros(m, n);
    let steps: Vec<Complex64> = poles.iter().filter(|z| z.im == 0.0).chain(poles.iter().filter(|z| z.im > 0.0)).copied().collect();
    for lambda in steps {
        let p = h.nrows();
        let (g_pinv, u1) = pseudo_inverse_and_complement(&g, params.rank_tolerance)?;
        let basis = if lambda.im == 0.0 { real_step_basis(&h, &g_pinv, &u1, lambda.re)? } else { pair_step_basis(&h, &g_pinv, &u1, lambda)? };
        let d = basis.ncols();
        if d > p {
            return Err(PlacementError::PoleCount { expected: n, controllable: n, found: poles.len() });
        }
        // A unitary Q whose first d columns span the basis; the closed loop maps that span to
        // itself with the requested eigenvalue(s): F Q_d = G⁺ (H Q_d − Q_d M̃).
        let (q, _) = full_qr(&basis);
        let qd = q.columns(0, d).into_owned();
        let r = qd.transpose() * &basis;
        let mt = block_matrix(lambda, &r)?;
        let f = &g_pinv * (&h * &qd - &qd * mt);
        k += &f * (&w * &qd).transpose();
        let ht = q.transpose() * &h * &q;
        let gt = q.transpose() * &g;
        h = ht.view((d, d), (p - d, p - d)).into_owned();
        g = gt.rows(d, p - d).into_owned();
        w = (&w * &q).columns(d, p - d).into_owned();
    }
    Ok(k)
}

/// `G⁺` (minimum-norm pseudo-inverse) and an orthonormal basis `U₁` of the complement of
/// `range G`.
fn pseudo_inverse_and_complement(g: &DMatrix<f64>, tolerance: f64) -> Result<(DMatrix<f64>, DMatrix<f64>), PlacementError> {
    let p = g.nrows();
    let svd = try_svd(g, SvdParams::default())?;
    let smax = svd.singular_values.iter().copied().fold(0.0, f64::max);
    let keep: Vec<usize> = (0..svd.singular_values.len()).filter(|&i| svd.singular_values[i] > tolerance * smax && svd.singular_values[i] > 0.0).collect();
    if keep.is_empty() {
        return Err(PlacementError::Numerical { message: "the inputs no longer reach the remaining states during the deflation".into() });
    }
    let mut pinv = DMatrix::<f64>::zeros(g.ncols(), p);
    let mut ur = DMatrix::<f64>::zeros(p, keep.len());
    for (c, &i) in keep.iter().enumerate() {
        let u = svd.u.column(i);
        let v = svd.v_adjoint.row(i).transpose();
        pinv += (&v * u.transpose()) / svd.singular_values[i];
        ur.set_column(c, &u);
    }
    let (qb, _) = full_qr(&ur);
    Ok((pinv, qb.columns(keep.len(), p - keep.len()).into_owned()))
}

/// One real eigenvector direction for `λ`: the unit `x` in `null(U₁ᵀ (H − λ I))` needing the
/// least gain, `‖G⁺ (H − λ I) x‖` smallest.
fn real_step_basis(h: &DMatrix<f64>, g_pinv: &DMatrix<f64>, u1: &DMatrix<f64>, lambda: f64) -> Result<DMatrix<f64>, PlacementError> {
    let p = h.nrows();
    let shifted = h - DMatrix::<f64>::identity(p, p) * lambda;
    let s = null_space(&(u1.transpose() * &shifted), p)?;
    let v = least_gain_combination(&(g_pinv * &shifted * &s))?;
    let x = &s * v;
    let norm = x.norm();
    if !(norm > 0.0 && norm.is_finite()) {
        return Err(PlacementError::Numerical { message: "no eigenvector direction was found during the deflation".into() });
    }
    Ok(DMatrix::from_column_slice(p, 1, (x / norm).as_slice()))
}

/// The real pair `[Re x, Im x]` for a complex `λ`, `x` in the admissible subspace needing the
/// least gain (the next candidates when `Re x` and `Im x` are dependent).
fn pair_step_basis(h: &DMatrix<f64>, g_pinv: &DMatrix<f64>, u1: &DMatrix<f64>, lambda: Complex64) -> Result<DMatrix<f64>, PlacementError> {
    let p = h.nrows();
    let hc = h.map(|v| Complex64::new(v, 0.0));
    let shifted = hc - DMatrix::<Complex64>::identity(p, p) * lambda;
    let u1c = u1.map(|v| Complex64::new(v, 0.0));
    let s = null_space(&(u1c.transpose() * &shifted), p)?;
    let gp = g_pinv.map(|v| Complex64::new(v, 0.0));
    let svd = try_svd(&(gp * &shifted * &s), SvdParams::default())?;
    let mut order: Vec<usize> = (0..svd.singular_values.len()).collect();
    order.sort_by(|i, j| svd.singular_values[*i].total_cmp(&svd.singular_values[*j]));
    let candidates: Vec<DVector<Complex64>> = if s.ncols() > svd.singular_values.len() {
        (0..s.ncols()).rev().map(|j| DVector::from_fn(s.ncols(), |i, _| Complex64::new(if i == j { 1.0 } else { 0.0 }, 0.0))).collect()
    } else {
        order.iter().map(|&i| svd.v_adjoint.row(i).adjoint()).collect()
    };
    for v in candidates {
        let x = &s * v;
        let pair = DMatrix::from_fn(p, 2, |i, j| if j == 0 { x[i].re } else { x[i].im });
        let sv = crate::linalg::svd::try_singular_values(&pair, SvdParams::default())?;
        let (lo, hi) = (sv.iter().copied().fold(f64::INFINITY, f64::min), sv.iter().copied().fold(0.0, f64::max));
        if lo > 1e-8 * hi && hi.is_finite() {
            return Ok(pair / hi);
        }
    }
    Err(PlacementError::Numerical { message: format!("no real invariant plane for the pole pair {:.6}±{:.6}j was found during the deflation", lambda.re, lambda.im) })
}

/// Orthonormal basis of the null space of the `k × p` matrix `m` (all of `ℂᵖ` when `k = 0`),
/// from a full QR of `mᴴ`: the trailing `p − rank` columns.
fn null_space<T: nalgebra::ComplexField<RealField = f64>>(m: &DMatrix<T>, p: usize) -> Result<DMatrix<T>, PlacementError> {
    if m.nrows() == 0 {
        return Ok(DMatrix::identity(p, p));
    }
    let rank = m.nrows().min(p);
    let (q, _) = full_qr(&m.adjoint());
    if rank >= p {
        return Err(PlacementError::Numerical { message: "the admissible eigenvector space is empty during the deflation".into() });
    }
    Ok(q.columns(rank, p - rank).into_owned())
}

/// The unit vector `v` minimising `‖W v‖` (a right singular vector of the smallest singular
/// value; any null vector of `W` when it has more columns than rows).
fn least_gain_combination(wm: &DMatrix<f64>) -> Result<DVector<f64>, PlacementError> {
    let r = wm.ncols();
    if wm.nrows() < r {
        let (q, _) = full_qr(&wm.transpose());
        return Ok(q.column(r - 1).into_owned());
    }
    let svd = try_svd(wm, SvdParams::default())?;
    let i = (0..svd.singular_values.len()).min_by(|i, j| svd.singular_values[*i].total_cmp(&svd.singular_values[*j])).unwrap_or(0);
    Ok(svd.v_adjoint.row(i).transpose())
}

/// `M̃ = R M R⁻¹`: the closed loop on the deflated span in the basis `Q_d`, where `M` is `λ`
/// (real) or `[[a, b], [−b, a]]` for `λ = a + ib` in the basis `[Re x, Im x] = Q_d R`.
fn block_matrix(lambda: Complex64, r: &DMatrix<f64>) -> Result<DMatrix<f64>, PlacementError> {
    if r.nrows() == 1 {
        return Ok(DMatrix::from_element(1, 1, lambda.re));
    }
    let m = DMatrix::from_row_slice(2, 2, &[lambda.re, lambda.im, -lambda.im, lambda.re]);
    let r_inv = r.clone().try_inverse().ok_or_else(|| PlacementError::Numerical { message: "a singular invariant plane during the deflation".into() })?;
    Ok(r * m * r_inv)
}

/// The single-input gain `k` (`A − b kᵀ` has the requested poles), or `None` when `(A, b)` is
/// not controllable.
fn single_input_gain(a: &DMatrix<f64>, b: &DVector<f64>, poles: &[Complex64], params: PlacementParams) -> Result<Option<DVector<f64>>, PlacementError> {
    let n = a.nrows();
    let bm = DMatrix::from_column_slice(n, 1, b.as_slice());
    let scale_a = try_norm2(a, SvdParams::default())?;
    let scale_b = b.norm();
    if !(scale_b > 0.0) {
        return Ok(None);
    }
    let st = staircase_with(a, &bm, params.controllability_tolerance * scale_b, params.controllability_tolerance * scale_a.max(f64::MIN_POSITIVE))?;
    if st.dimension < n {
        return Ok(None);
    }
    let k_stair = deflate(&st.a, st.b[(0, 0)], poles)?;
    // u = −k_hᵀ z with z = Tᵀ x: k = T k_h.
    let k_complex = st.transform.map(|v| Complex64::new(v, 0.0)) * k_stair;
    let re = k_complex.map(|z| z.re);
    let im = k_complex.map(|z| z.im);
    let re_norm = re.norm();
    if !re.iter().all(|v| v.is_finite()) || !(im.norm() <= IMAGINARY_TOLERANCE * re_norm.max(f64::MIN_POSITIVE)) {
        return Err(PlacementError::Numerical {
            message: format!("the single-input gain came out complex (imaginary part {:.1e} of its size {:.1e}); the poles may not come in exact conjugate pairs", im.norm(), re_norm),
        });
    }
    Ok(Some(re))
}

/// The deflation of the module documentation on `(h, β e₁)`, `h` upper Hessenberg; returns the
/// gain in the same coordinates.
fn deflate(h: &DMatrix<f64>, beta: f64, poles: &[Complex64]) -> Result<DVector<Complex64>, PlacementError> {
    let n = h.nrows();
    // Entries below the subdiagonal are rounding left by the staircase.
    let mut hc = DMatrix::from_fn(n, n, |i, j| Complex64::new(if i > j + 1 { 0.0 } else { h[(i, j)] }, 0.0));
    let mut beta = Complex64::new(beta, 0.0);
    // Columns of w: the current coordinates in the staircase coordinates (orthonormal).
    let mut w = DMatrix::<Complex64>::identity(n, n);
    let mut k = DVector::<Complex64>::zeros(n);
    for (step, lambda) in poles.iter().enumerate() {
        let p = n - step;
        if !(beta.norm() > 0.0) {
            return Err(PlacementError::Numerical { message: "the input no longer reaches the remaining states during the deflation".into() });
        }
        if p == 1 {
            let c = (hc[(0, 0)] - lambda) / beta;
            k += w.column(0).map(|z| z.conj()) * c;
            break;
        }
        // (H − λI) Z = U: rotations on columns (i−1, i) zero the subdiagonal entry of row i.
        for i in 0..p {
            hc[(i, i)] -= lambda;
        }
        let mut rotations = Vec::with_capacity(p - 1);
        for i in (1..p).rev() {
            let rot = Rotation::zeroing(hc[(i, i - 1)], hc[(i, i)]);
            rot.apply_columns(&mut hc, i - 1, i, i + 1);
            rot.apply_columns(&mut w, i - 1, i, n);
            rotations.push((i, rot));
        }
        let c = hc[(0, 0)] / beta;
        k += w.column(0).map(|z| z.conj()) * c;
        // Zᴴ U + λ I, and Zᴴ β e₁: Z = G₁ G₂ ⋯ (in the order applied), so Zᴴ applies G₁ᴴ first.
        let mut g = DVector::<Complex64>::zeros(p);
        g[0] = beta;
        for &(i, rot) in &rotations {
            rot.apply_rows_adjoint(&mut hc, i - 1, i);
            rot.apply_vector_adjoint(&mut g, i - 1, i);
        }
        for i in 0..p {
            hc[(i, i)] += lambda;
        }
        beta = g[1];
        hc = hc.view((1, 1), (p - 1, p - 1)).into_owned();
        w = w.columns(1, p - 1).into_owned();
    }
    Ok(k)
}

/// A plane rotation `[[c, s], [−s̄, c]]` (`c` real) acting on two coordinates.
#[derive(Debug, Clone, Copy)]
struct Rotation {
    c: f64,
    s: Complex64,
}

impl Rotation {
    /// The rotation which, applied to the columns `(j, j+1)` of a row `[x, y]`, zeroes `x`.
    fn zeroing(x: Complex64, y: Complex64) -> Rotation {
        let r = x.norm().hypot(y.norm());
        if !(r > 0.0) || !r.is_finite() {
            return Rotation { c: 1.0, s: Complex64::new(0.0, 0.0) };
        }
        // [x, y] · [[c, s], [−s̄, c]] = [c x − s̄ y, s x + c y]; zero the first entry with
        // c = |y| / r and s̄ = c x / y (or c = 0, s = 1 when y = 0).
        if y.norm() == 0.0 {
            return Rotation { c: 0.0, s: Complex64::new(1.0, 0.0) * x.conj() / x.norm() };
        }
        let c = y.norm() / r;
        let s = (x / y * c).conj();
        Rotation { c, s }
    }

    /// Columns `j`, `l` of the first `rows` rows: `[col_j, col_l] ← [col_j, col_l] · G`.
    fn apply_columns(&self, m: &mut DMatrix<Complex64>, j: usize, l: usize, rows: usize) {
        let rows = rows.min(m.nrows());
        for i in 0..rows {
            let (x, y) = (m[(i, j)], m[(i, l)]);
            m[(i, j)] = x * self.c - self.s.conj() * y;
            m[(i, l)] = self.s * x + y * self.c;
        }
    }

    /// Rows `j`, `l`: `[row_j; row_l] ← Gᴴ [row_j; row_l]`.
    fn apply_rows_adjoint(&self, m: &mut DMatrix<Complex64>, j: usize, l: usize) {
        for col in 0..m.ncols() {
            let (x, y) = (m[(j, col)], m[(l, col)]);
            m[(j, col)] = x * self.c - self.s * y;
            m[(l, col)] = self.s.conj() * x + y * self.c;
        }
    }

    fn apply_vector_adjoint(&self, v: &mut DVector<Complex64>, j: usize, l: usize) {
        let (x, y) = (v[j], v[l]);
        v[j] = x * self.c - self.s * y;
        v[l] = self.s.conj() * x + y * self.c;
    }
}
