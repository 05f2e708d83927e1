//! Controllability and observability analysis: staircase reduction plus a PBH margin per mode.
//!
//! # Equations
//! The pair `(A, B)` is controllable iff `rank [A − λI, B] = n` for every
//! eigenvalue `λ` of `A` (Popov–Belevitch–Hautus test). Observability of
//! `(A, C)` is controllability of `(Aᵀ, Cᵀ)` (duality).
//!
//! # Method
//! 1. **Orthogonal staircase reduction** (Paige, "Properties of numerical
//!    algorithms related to computing controllability", IEEE TAC 26(1):130–138,
//!    1981; Van Dooren, "The generalized eigenstructure problem in linear
//!    system theory", IEEE TAC 26(1):111–129, 1981): an orthogonal `T` with
//!    `Tᵀ A T = [[A_c, A₁₂], [0, A_u]]`, `Tᵀ B = [[B_c], [0]]`, built block by
//!    block from SVD rank decisions. `dim A_c` is the dimension of the
//!    controllable subspace and the eigenvalues of `A_u` are the uncontrollable
//!    (fixed) modes. Unlike a rank test on `[B, AB, …, Aⁿ⁻¹B]`, every step is
//!    an orthogonal transformation, so rounding errors are not amplified.
//! 2. **PBH margin** per open-loop eigenvalue: `σ_min([A − λI, B]) / ‖[A B]‖₂`,
//!    the relative distance to a plant in which that mode is uncontrollable, computed in
//!    balanced coordinates (`D⁻¹ A D`, `D⁻¹ B`, each input column scaled by a power of two
//!    to the norm of the balanced `A`) so that it does not depend on the units of the states
//!    and inputs. Margins below [`AnalysisParams::weak_margin`] are reported as weak.
//!
//! The staircase decides which modes are uncontrollable (it counts dimensions
//! correctly for repeated eigenvalues, where PBH alone cannot); the PBH margin
//! quantifies each mode; the two are cross-checked and any disagreement is
//! reported ([`ModalReport::consistent`]).
//!
//! # Tolerance
//! A singular value counts as zero when it is at most
//! `relative_tolerance` (default `1e-10`, i.e. about a million times the rounding level of
//! double precision) times its own block's norm in the balanced coordinates. A hidden mode
//! with `|Re λ| ≤ max(relative_tolerance · |λ|, 10 ε ‖A_bal‖₂)` counts as on the imaginary axis
//! ([`Domain::mode_tolerance`]): each mode is judged on its own scale.
//!
//! # Cost
//! `O(n³)` for the staircase (at most `n` SVDs of shrinking blocks, typically a
//! few). The PBH margins: one Hessenberg reduction, then `O(n²(m + k))` per distinct
//! eigenvalue ([`crate::linalg::shifted_sigma`]: rotations to a triangular factor and `k`
//! inverse-iteration steps), `O(n³)` in all; a mode whose two smallest singular values are too
//! close for the iteration to settle gets a full `n × (n+m)` SVD instead.
//!
//! # Failure modes
//! Errors only if an eigenvalue or SVD iteration fails to converge
//! ([`AnalysisError`]). Defective eigenvalues (Jordan blocks) are computed only to
//! about `ε^(1/k)`, so their PBH margins are correspondingly blurred.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::eigen::{sort_eigenvalues, try_eigenvalues, EigenError};
use crate::linalg::qr::full_qr;
use crate::linalg::shifted_sigma::{ShiftedPair, ShiftedSigmaParams};
use crate::linalg::svd::{try_norm2, try_singular_values, try_svd, SvdError, SvdParams};

/// Whether the model is a differential (`x' = A x + B u`) or a difference
/// (`x[k+1] = A x[k] + B u[k]`) equation: it decides what a stable mode is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Domain {
    /// Stable: `Re λ < 0`.
    #[default]
    Continuous,
    /// Stable: `|λ| < 1`.
    Discrete,
}

impl Domain {
    /// Strictly stable, with a margin `tol` (absolute, in the units of `λ`).
    pub fn is_strictly_stable(self, z: Complex64, tol: f64) -> bool {
        match self {
            Domain::Continuous => z.re < -tol,
            Domain::Discrete => z.norm() < 1.0 - tol,
        }
    }
    /// On the stability boundary within `tol`.
    pub fn is_marginal(self, z: Complex64, tol: f64) -> bool {
        match self {
            Domain::Continuous => z.re.abs() <= tol,
            Domain::Discrete => (z.norm() - 1.0).abs() <= tol,
        }
    }
    /// The boundary tolerance for the mode `z`, on its own scale: `relative · |z|` in the
    /// s-plane (a change of time units scales `z` and the tolerance alike), `relative` in the
    /// z-plane (whose scale is the unit circle); never below `floor` (the rounding level of the
    /// matrix the mode came from, e.g. `10 ε ‖A‖`, so that a mode computed as `±1e-17` for an
    /// exact 0 is not called stable).
    pub fn mode_tolerance(self, relative: f64, z: Complex64, floor: f64) -> f64 {
        match self {
            Domain::Continuous => (relative * z.norm()).max(floor),
            Domain::Discrete => relative.max(floor),
        }
    }
}

/// The rounding floor of [`Domain::mode_tolerance`] for modes computed from `a`: `10 ε` times
/// the norm of its Parlett–Reinsch balanced form (the scale its eigenvalues are computed on).
pub fn rounding_floor(domain: Domain, a: &DMatrix<f64>) -> f64 {
    match domain {
        Domain::Continuous => {
            let n = a.nrows();
            let d = crate::linalg::eigen::balancing_scale(a, 100);
            let bal = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
            10.0 * f64::EPSILON * bal.norm()
        }
        Domain::Discrete => 10.0 * f64::EPSILON,
    }
}

/// Tolerances of the analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnalysisParams {
    /// Relative level below which a singular value is zero. Default `1e-10`.
    pub relative_tolerance: f64,
    /// PBH margin below which a controllable mode is reported as weak. Default `1e-6`.
    pub weak_margin: f64,
    /// Continuous or discrete time (what "stable" means for hidden modes). Default continuous.
    pub domain: Domain,
}

impl Default for AnalysisParams {
    fn default() -> Self {
        AnalysisParams { relative_tolerance: 1e-10, weak_margin: 1e-6, domain: Domain::Continuous }
    }
}

/// What went wrong during the analysis.
#[derive(Debug, Clone, PartialEq)]
pub enum AnalysisError {
    Eigen(EigenError),
    Svd(SvdError),
}

impl std::fmt::Display for AnalysisError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            AnalysisError::Eigen(e) => write!(f, "analysis failed: {e}"),
            AnalysisError::Svd(e) => write!(f, "analysis failed: {e}"),
        }
    }
}

impl std::error::Error for AnalysisError {}

impl From<EigenError> for AnalysisError {
    fn from(e: EigenError) -> Self {
        AnalysisError::Eigen(e)
    }
}
impl From<SvdError> for AnalysisError {
    fn from(e: SvdError) -> Self {
        AnalysisError::Svd(e)
    }
}

/// The verdict on one mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModeVerdict {
    /// Reachable (or visible) with a margin above the weak threshold.
    Yes,
    /// Reachable but with a margin below the weak threshold: expect large gains.
    Weak,
    /// Not reachable (not visible): the mode stays where it is under feedback.
    No,
}

/// One open-loop mode.
#[derive(Debug, Clone, PartialEq)]
pub struct ModeReport {
    pub pole: Complex64,
    /// `σ_min([A − λI, B]) / ‖[A B]‖₂` in the balanced, column-scaled coordinates (see the
    /// module documentation): the margin the verdict is judged on, independent of units.
    pub margin: f64,
    /// `σ_min([A − λI, B]) / ‖[A B]‖₂` as the data are given (or the observability dual).
    pub unscaled_margin: f64,
    pub verdict: ModeVerdict,
}

/// The staircase form: `transform` is orthogonal; its first `dimension` columns
/// span the controllable subspace.
#[derive(Debug, Clone)]
pub struct Staircase {
    pub transform: DMatrix<f64>,
    /// `Tᵀ A T`.
    pub a: DMatrix<f64>,
    /// `Tᵀ B`.
    pub b: DMatrix<f64>,
    pub dimension: usize,
    pub block_sizes: Vec<usize>,
}

/// Controllability (or, by duality, observability) of one pair.
#[derive(Debug, Clone)]
pub struct ModalReport {
    /// Number of states.
    pub states: usize,
    /// Dimension of the controllable (observable) subspace.
    pub rank: usize,
    /// Every uncontrollable (unobservable) mode is strictly stable (open left half-plane, or
    /// inside the unit circle for a discrete-time model).
    pub stable_hidden_modes: bool,
    /// All open-loop modes, sorted.
    pub modes: Vec<ModeReport>,
    /// Eigenvalues of the uncontrollable (unobservable) part, from the staircase.
    pub hidden_modes: Vec<Complex64>,
    /// Absolute tolerance used for rank decisions (`relative_tolerance · ‖[A B]‖₂`).
    pub tolerance: f64,
    /// The relative tolerance that produced it.
    pub relative_tolerance: f64,
    /// Whether the staircase count and the PBH margins agree.
    pub consistent: bool,
}

impl ModalReport {
    /// True when every mode is reachable (visible).
    pub fn is_complete(&self) -> bool {
        self.rank == self.states
    }
}

/// The orthogonal controllability staircase of `(a, b)` with an absolute rank tolerance `tol`.
///
/// # Errors
/// [`AnalysisError::Svd`] if an SVD fails to converge.
pub fn staircase(a: &DMatrix<f64>, b: &DMatrix<f64>, tol: f64) -> Result<Staircase, AnalysisError> {
    staircase_with(a, b, tol, tol)
}

/// [`staircase`] with the rank of `B` decided against `tol_b` and the ranks of the blocks of
/// `A` against `tol_a`, so that each is judged on its own scale (the units of the inputs do
/// not decide whether the states are reached).
///
/// # Errors
/// See [`AnalysisError`].
pub fn staircase_with(a: &DMatrix<f64>, b: &DMatrix<f64>, tol_b: f64, tol_a: f64) -> Result<Staircase, AnalysisError> {
    let n = a.nrows();
    let mut at = a.clone();
    let mut t = DMatrix::<f64>::identity(n, n);
    let mut bt = b.clone();
    let mut start = 0usize;
    let mut blocks = Vec::new();
    // The current block whose column space is split off: rows start..n.
    let mut block = b.clone();
    let mut first = true;
    while start < n {
        let svd = try_svd(&block, SvdParams::default())?;
        let tol = if first { tol_b } else { tol_a };
        let r = svd.singular_values.iter().filter(|&&s| s > tol).count();
        if r == 0 {
            break;
        }
        let (q, _) = full_qr(&svd.u.columns(0, r).into_owned());
        let rows = n - start;
        // at ← diag(I, Qᵀ) at diag(I, Q)
        let lower = q.transpose() * at.rows(start, rows);
        at.rows_mut(start, rows).copy_from(&lower);
        let right = at.columns(start, rows) * &q;
        at.columns_mut(start, rows).copy_from(&right);
        let tq = t.columns(start, rows) * &q;
        t.columns_mut(start, rows).copy_from(&tq);
        if first {
            let bl = q.transpose() * bt.rows(start, rows);
            bt.rows_mut(start, rows).copy_from(&bl);
            // Entries below the first block are zero up to rounding; make it exact.
            for i in r..n {
                for j in 0..bt.ncols() {
                    bt[(i, j)] = 0.0;
                }
            }
            first = false;
        }
        blocks.push(r);
        let next = start + r;
        if next >= n {
            start = n;
            break;
        }
        block = at.view((next, start), (n - next, r)).into_owned();
        start = next;
    }
    // Zero the part below the controllable block exactly (it is below tolerance).
    for j in 0..start {
        for i in start..n {
            at[(i, j)] = 0.0;
        }
    }
    Ok(Staircase { transform: t, a: at, b: bt, dimension: start, block_sizes: blocks })
}

/// Controllability of `(a, b)`.
///
/// # Errors
/// See [`AnalysisError`].
pub fn controllability_report(a: &DMatrix<f64>, b: &DMatrix<f64>, params: AnalysisParams) -> Result<ModalReport, AnalysisError> {
    // Entries beyond about 2^±400 overflow or underflow inside the SVDs (squares of 1e154 are
    // infinite). (A, B) and (σA, σB) have the same controllability and relative margins, and
    // σA's eigenvalues are σλ: with σ a power of two the scaling is exact, and it is undone
    // before any stability verdict.
    let big = a.iter().chain(b.iter()).fold(0.0f64, |m, v| m.max(v.abs()));
    if big.is_finite() && big > 0.0 && !(2f64.powi(-400)..2f64.powi(400)).contains(&big) {
        let sigma = 2f64.powi(-(big.log2().round() as i32));
        let inner = report_in_range(&(a * sigma), &(b * sigma), params)?;
        return Ok(unscaled(inner, 1.0 / sigma, a, params));
    }
    report_in_range(a, b, params)
}

/// A report computed on `(σA, σB)`, with its poles and tolerance brought back by `undo = 1/σ`.
fn unscaled(mut r: ModalReport, undo: f64, a: &DMatrix<f64>, params: AnalysisParams) -> ModalReport {
    for md in r.modes.iter_mut() {
        md.pole *= undo;
    }
    for h in r.hidden_modes.iter_mut() {
        *h *= undo;
    }
    r.tolerance *= undo;
    // The floor on the scaled matrix (its squares stay finite), brought back.
    let floor = match params.domain {
        Domain::Continuous => rounding_floor(params.domain, &(a / undo)) * undo,
        Domain::Discrete => rounding_floor(params.domain, a),
    };
    r.stable_hidden_modes = r.hidden_modes.iter().all(|z| params.domain.is_strictly_stable(*z, params.domain.mode_tolerance(params.relative_tolerance, *z, floor)));
    r
}

fn report_in_range(a: &DMatrix<f64>, b: &DMatrix<f64>, params: AnalysisParams) -> Result<ModalReport, AnalysisError> {
    let n = a.nrows();
    let m = b.ncols();
    let mut ab = DMatrix::<f64>::zeros(n, n + m);
    ab.columns_mut(0, n).copy_from(a);
    ab.columns_mut(n, m).copy_from(b);
    let scale = try_norm2(&ab, SvdParams::default())?;
    let tol = params.relative_tolerance * scale;
    // The rank decisions are made in balanced coordinates (D⁻¹ A D, D⁻¹ B with the exact
    // power-of-two Parlett–Reinsch scaling of A), B's against ‖B‖ and A's blocks against ‖A‖:
    // a change of the units of the states or inputs then leaves the verdict alone (a double
    // integrator with B = [0; 1e10] was called uncontrollable against ‖[A B]‖). Controllability
    // and the hidden eigenvalues are invariant under the similarity.
    let d = crate::linalg::eigen::balancing_scale(a, 100);
    let a_bal = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
    let b_bal = DMatrix::from_fn(n, m, |i, j| b[(i, j)] / d[i]);
    let tol_a = params.relative_tolerance * try_norm2(&a_bal, SvdParams::default())?;
    let tol_b = params.relative_tolerance * try_norm2(&b_bal, SvdParams::default())?;
    let st = staircase_with(&a_bal, &b_bal, tol_b, tol_a)?;
    let nc = st.dimension;
    let hidden = if nc < n {
        let au = st.a.view((nc, nc), (n - nc, n - nc)).into_owned();
        try_eigenvalues(&au)?
    } else {
        Vec::new()
    };
    let mut open_loop = try_eigenvalues(a)?;
    sort_eigenvalues(&mut open_loop);
    let (b_pbh, scale_pbh) = pbh_input_scaling(&a_bal, &b_bal)?;
    // One Hessenberg reduction per pair, then O(n²) work per distinct eigenvalue (a conjugate
    // shares its partner's); a full SVD only where the inverse iteration does not settle.
    let fast_pbh = ShiftedPair::new(&a_bal, &b_pbh);
    let fast_raw = ShiftedPair::new(a, b);
    let mut margins = vec![0.0; n];
    let mut unscaled = vec![0.0; n];
    for i in 0..n {
        let lambda = open_loop[i];
        if lambda.im < 0.0 {
            if let Some(j) = (0..i).find(|&j| (open_loop[j] - lambda.conj()).norm() == 0.0) {
                margins[i] = margins[j];
                unscaled[i] = unscaled[j];
                continue;
            }
        }
        if let Some(j) = (0..i).find(|&j| open_loop[j] == lambda) {
            margins[i] = margins[j];
            unscaled[i] = unscaled[j];
            continue;
        }
        margins[i] = pbh_margin(&fast_pbh, &a_bal, &b_pbh, lambda, scale_pbh)?;
        unscaled[i] = pbh_margin(&fast_raw, a, b, lambda, scale)?;
    }
    // Verdicts: the staircase's hidden modes, matched to the nearest open-loop modes.
    let mut hidden_flag = vec![false; n];
    for h in &hidden {
        let mut best: Option<(usize, f64)> = None;
        for (i, z) in open_loop.iter().enumerate() {
            if hidden_flag[i] {
                continue;
            }
            let d = (z - h).norm();
            if best.is_none_or(|(_, bd)| d < bd) {
                best = Some((i, d));
            }
        }
        if let Some((i, _)) = best {
            hidden_flag[i] = true;
        }
    }
    let mut consistent = true;
    let modes: Vec<ModeReport> = (0..n)
        .map(|i| {
            let margin = margins[i];
            let verdict = if hidden_flag[i] {
                ModeVerdict::No
            } else if margin <= params.weak_margin {
                ModeVerdict::Weak
            } else {
                ModeVerdict::Yes
            };
            // A hidden mode must have a (near-)zero margin; a visible one may be zero only
            // when it repeats a hidden eigenvalue (PBH cannot tell copies apart).
            if hidden_flag[i] && margin > params.weak_margin {
                consistent = false;
            }
            if !hidden_flag[i] && margin <= params.relative_tolerance {
                let repeats_hidden = hidden.iter().any(|h| (h - open_loop[i]).norm() <= 1e-6 * (1.0 + h.norm()));
                if !repeats_hidden {
                    consistent = false;
                }
            }
            ModeReport { pole: open_loop[i], margin, unscaled_margin: unscaled[i], verdict }
        })
        .collect();
    // Each hidden mode is judged on its own scale (a stable fixed mode at −0.0163 ± 18 081j of
    // a plant with ‖A‖₂ = 4e11 was called not strictly stable against 1e-10 ‖A‖₂).
    let floor = rounding_floor(params.domain, a);
    let stable_hidden_modes = hidden.iter().all(|z| params.domain.is_strictly_stable(*z, params.domain.mode_tolerance(params.relative_tolerance, *z, floor)));
    Ok(ModalReport { states: n, rank: nc, stable_hidden_modes, modes, hidden_modes: hidden, tolerance: tol, relative_tolerance: params.relative_tolerance, consistent })
}

/// PBH margins are taken in the balanced coordinates with each input column brought to the
/// scale of `A_bal` by a power of two: the margin is then (nearly) independent of the units of
/// the states and inputs (eigenvalues are similarity invariant, and a rank-deficient
/// `[A − λI, B]` stays so). Returns that `B` and `‖[A_bal B]‖₂`.
pub(crate) fn pbh_input_scaling(a_bal: &DMatrix<f64>, b_bal: &DMatrix<f64>) -> Result<(DMatrix<f64>, f64), AnalysisError> {
    let (n, m) = (a_bal.nrows(), b_bal.ncols());
    let anorm_bal = try_norm2(a_bal, SvdParams::default())?;
    let b_pbh = DMatrix::from_fn(n, m, |i, j| {
        let c = b_bal.column(j).norm();
        if c > 0.0 && anorm_bal > 0.0 {
            b_bal[(i, j)] * 2f64.powi((anorm_bal / c).log2().round() as i32)
        } else {
            b_bal[(i, j)]
        }
    });
    let mut ab_pbh = DMatrix::<f64>::zeros(n, n + m);
    ab_pbh.columns_mut(0, n).copy_from(a_bal);
    ab_pbh.columns_mut(n, m).copy_from(&b_pbh);
    let scale_pbh = try_norm2(&ab_pbh, SvdParams::default())?;
    Ok((b_pbh, scale_pbh))
}

/// Observability of `(a, c)`, by duality with controllability of `(aᵀ, cᵀ)`.
///
/// # Errors
/// See [`AnalysisError`].
pub fn observability_report(a: &DMatrix<f64>, c: &DMatrix<f64>, params: AnalysisParams) -> Result<ModalReport, AnalysisError> {
    controllability_report(&a.transpose(), &c.transpose(), params)
}

/// `σ_min([A − λI, B]) / scale`: from the reduced pair, or by a full SVD when its inverse
/// iteration does not settle.
fn pbh_margin(fast: &ShiftedPair, a: &DMatrix<f64>, b: &DMatrix<f64>, lambda: Complex64, scale: f64) -> Result<f64, AnalysisError> {
    let smin = match fast.smallest_singular_value(lambda, ShiftedSigmaParams::default()) {
        Ok(s) => s,
        Err(_) => dense_sigma_min(a, b, lambda)?,
    };
    Ok(if scale > 0.0 { smin / scale } else { 0.0 })
}

/// `σ_min([A − λI, B])` by a full SVD (the route the reduced one is checked against).
pub(crate) fn dense_sigma_min(a: &DMatrix<f64>, b: &DMatrix<f64>, lambda: Complex64) -> Result<f64, AnalysisError> {
    let n = a.nrows();
    let m = b.ncols();
    let s = if lambda.im == 0.0 {
        let mut w = DMatrix::<f64>::zeros(n, n + m);
        w.columns_mut(0, n).copy_from(a);
        for i in 0..n {
            w[(i, i)] -= lambda.re;
        }
        w.columns_mut(n, m).copy_from(b);
        try_singular_values(&w, SvdParams::default())?
    } else {
        let mut w = DMatrix::<Complex64>::zeros(n, n + m);
        for i in 0..n {
            for j in 0..n {
                w[(i, j)] = Complex64::new(a[(i, j)], 0.0);
            }
            w[(i, i)] -= lambda;
            for j in 0..m {
                w[(i, n + j)] = Complex64::new(b[(i, j)], 0.0);
            }
        }
        try_singular_values(&w, SvdParams::default())?
    };
    Ok(s.iter().cloned().fold(f64::INFINITY, f64::min))
}

#[cfg(test)]
#[path = "tests/analysis.rs"]
mod tests;
