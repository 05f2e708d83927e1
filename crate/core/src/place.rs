//! Robust pole placement by eigenstructure assignment, for any number of inputs.
//!
//! # Equation
//! Find `K` (`m × n`, control law `u = −K x`) such that `A − B K` has the
//! requested eigenvalues `λ₁ … λₙ`, and among all such `K` one whose
//! eigenvector matrix `X` is well conditioned, so that the closed-loop poles
//! are insensitive to errors in `A`, `B` and `K`.
//!
//! # Method
//! Kautsky, Nichols & Van Dooren, "Robust pole assignment in linear state
//! feedback", Int. J. Control 41(5):1129–1155, 1985 (KNV), with the objective of
//! Tits & Yang, "Globally convergent algorithms for robust pole assignment by
//! state feedback", IEEE TAC 41(10):1432–1452, 1996: maximise `|det X|` over
//! unit-norm eigenvectors.
//! 1. SVD of `B = U_r Σ_r V_rᴴ` gives the numerical rank `r` (dependent input
//!    columns are detected here) and `U₁`, an orthonormal basis of the
//!    complement of `range B`.
//! 2. For each requested pole, the admissible eigenvectors form
//!    `S_j = null(U₁ᵀ (A − λ_j I))`, of dimension `r` (KNV §2), found from a full
//!    Householder QR of `(A − λ_j I)ᴴ U₁`.
//! 3. Starting from the better (larger `|det X|`) of two initial guesses, each
//!    column is replaced in turn by the unit vector of `S_j` most orthogonal to
//!    the other columns: `x_j ← S_j S_jᴴ y_j / ‖·‖`, where `y_j = X⁻ᴴ e_j`
//!    is orthogonal to every other column (KNV "method 0"). Each such step cannot
//!    decrease `|det X|`. `X⁻¹` is carried along by rank-one (Sherman–Morrison)
//!    updates — the rank-one structure KNV point out — so a sweep costs `O(n³)`
//!    instead of `O(n⁴)`, and it is refactored from scratch after each sweep.
//!    A complex pair updates its two conjugate columns together; the pair step is
//!    kept only if `|det X|` does not decrease (matrix determinant lemma).
//! 4. Sweeps stop when `|det X|` improves by less than
//!    [`PlacementParams::improvement_tolerance`] (relative) over a sweep, or when
//!    `κ₂(X)`, checked every few sweeps, stops improving; the best-conditioned `X`
//!    seen is kept. Three starting guesses are refined and the best kept.
//! 5. `M = X Λ X⁻¹` (real up to rounding) and `K = V_r Σ_r⁻¹ U_rᵀ (A − M)`,
//!    the minimum-norm gain when `B` has dependent columns.
//!
//! With one input (`r = 1`) every `S_j` is a line: `X` is unique and no
//! iteration runs. With `r = n`, `S_j` is the whole space. Ackermann's formula
//! and powers of `A` are never used.
//!
//! Uncontrollable but stabilisable plants are first put in staircase form
//! (see [`crate::analysis`]); only the controllable part is assigned, the fixed
//! modes stay where they are and the requested poles they displace are reported.
//!
//! # Cost
//! `O(n² (n − r))` per distinct pole for the subspaces (`O(n⁴)` in all, less with
//! conjugate pairs, which share theirs), and `O(n³)` per sweep.
//!
//! # Failure modes
//! - a requested pole repeated more than `rank B` times: no diagonalisable
//!   closed loop exists, [`PlacementError::RepeatedBeyondRank`];
//! - an uncontrollable mode outside the open left half-plane:
//!   [`PlacementError::UncontrollableUnstableMode`];
//! - a singular eigenvector matrix (a degenerate problem), or a failed
//!   eigenvalue/SVD iteration: [`PlacementError::Numerical`].
//!
//! The achieved poles are always recomputed from `A − B K` by an independent
//! eigenvalue computation and compared with the request.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use crate::analysis::{staircase, AnalysisError, Domain};
use crate::linalg::eigen::{balancing_scale, sort_eigenvalues, try_eigenvalues, EigenError};
use crate::linalg::qr::full_qr;
use crate::linalg::svd::{try_condition_number, try_norm2, try_svd, SvdError, SvdParams};
use crate::poles::check_conjugate_pairs;

/// Tuning constants of the placement.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlacementParams {
    /// Largest number of sweeps over all columns. Default 200.
    pub max_sweeps: usize,
    /// Stop when a sweep raises `|det X|` by less than this fraction. Default `1e-6`.
    pub improvement_tolerance: f64,
    /// Singular values of `B` below this fraction of the largest count as zero. Default `1e-10`.
    pub rank_tolerance: f64,
    /// Relative rank tolerance of the staircase used for uncontrollable plants. Default `1e-10`.
    pub controllability_tolerance: f64,
    /// Sweeps between checks of `κ₂(X)`; also the length of the first stage in which every
    /// starting guess is refined before only the best ones continue. Default 40.
    pub condition_check_interval: usize,
    /// Continuous or discrete time: decides whether a fixed (uncontrollable) mode is
    /// acceptable. Default continuous.
    pub domain: Domain,
    /// How many of the starting guesses continue after the first stage. Default 1.
    pub finalists: usize,
    /// Sweeps between refactorisations of `X⁻¹` (rank-one updates in between). Default 4.
    pub refactor_interval: usize,
    /// Stop when `κ₂(X)` improved by less than this fraction since the last check. Default `1e-4`.
    pub condition_stall_tolerance: f64,
}

impl Default for PlacementParams {
    fn default() -> Self {
        PlacementParams {
            max_sweeps: 200,
            improvement_tolerance: 1e-6,
            rank_tolerance: 1e-10,
            controllability_tolerance: 1e-10,
            condition_check_interval: 40,
            refactor_interval: 4,
            finalists: 1,
            domain: Domain::Continuous,
            condition_stall_tolerance: 1e-4,
        }
    }
}

/// Why a gain could not be computed.
#[derive(Debug, Clone, PartialEq)]
pub enum PlacementError {
    /// The number of requested poles does not fit the plant.
    PoleCount { expected: usize, controllable: usize, found: usize },
    /// A requested pole is not finite or lacks its conjugate.
    InvalidPoles { message: String },
    /// A pole is requested more often than `rank B` allows.
    RepeatedBeyondRank { pole: Complex64, multiplicity: usize, rank: usize },
    /// A mode that feedback cannot move is not strictly stable.
    UncontrollableUnstableMode { pole: Complex64 },
    /// The fixed modes of an uncontrollable plant cannot be matched to the request.
    FixedModesDoNotFit { fixed: Vec<Complex64>, controllable: usize },
    /// A numerical step failed.
    Numerical { message: String },
}

impl std::fmt::Display for PlacementError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        use crate::poles::format_complex as fc;
        match self {
            PlacementError::PoleCount { expected, controllable, found } => {
                if controllable < expected {
                    write!(f, "{found} poles were requested but the plant has {expected} states, of which {controllable} are controllable; give {expected} poles (the ones nearest the fixed modes are left unassigned) or exactly {controllable}")
                } else {
                    write!(f, "{found} poles were requested but the plant has {expected} states; give exactly {expected} poles")
                }
            }
            PlacementError::InvalidPoles { message } => write!(f, "{message}"),
            PlacementError::RepeatedBeyondRank { pole, multiplicity, rank } => write!(
                f,
                "the pole {} is requested {multiplicity} times but B has rank {rank}: state feedback can give one eigenvalue at most {rank} independent eigenvectors; spread the repeated poles slightly apart (e.g. by 1 %) or use fewer copies",
                fc(*pole)
            ),
            PlacementError::UncontrollableUnstableMode { pole } => write!(
                f,
                "the mode at {} is uncontrollable (no input reaches it) and not strictly stable, so no state feedback can stabilise this plant; change the actuators (B) or the plant",
                fc(*pole)
            ),
            PlacementError::FixedModesDoNotFit { fixed, controllable } => write!(
                f,
                "the uncontrollable modes {} cannot be matched to requested poles of the same kind (real or complex pair); give exactly {controllable} poles for the controllable part",
                fixed.iter().map(|z| fc(*z)).collect::<Vec<_>>().join(", ")
            ),
            PlacementError::Numerical { message } => write!(f, "pole placement failed: {message}"),
        }
    }
}

impl std::error::Error for PlacementError {}

impl From<EigenError> for PlacementError {
    fn from(e: EigenError) -> Self {
        PlacementError::Numerical { message: e.to_string() }
    }
}
impl From<SvdError> for PlacementError {
    fn from(e: SvdError) -> Self {
        PlacementError::Numerical { message: e.to_string() }
    }
}
impl From<AnalysisError> for PlacementError {
    fn from(e: AnalysisError) -> Self {
        PlacementError::Numerical { message: e.to_string() }
    }
}

/// What the placement achieved.
#[derive(Debug, Clone)]
pub struct Placement {
    /// `K`, `m × n`, for `u = −K x`.
    pub gain: DMatrix<f64>,
    /// Eigenvalues of `A − B K`, recomputed independently, sorted.
    pub achieved_poles: Vec<Complex64>,
    /// The requested poles that were assigned, sorted.
    pub assigned_poles: Vec<Complex64>,
    /// Requested poles left unassigned because fixed modes take their place.
    pub not_assigned: Vec<Complex64>,
    /// Uncontrollable modes (they stay where they are).
    pub fixed_modes: Vec<Complex64>,
    /// Largest `|λ_achieved − λ_requested| / |λ_requested|` over a one-to-one matching
    /// (absolute for a requested pole at 0), including fixed modes against themselves.
    pub max_pole_error: f64,
    /// `κ₂(X)` of the unit-column eigenvector matrix of the assigned part.
    pub eigenvector_condition: f64,
    /// `κ₂(D⁻¹ X)` with unit columns, `D` the Parlett–Reinsch balancing of the closed loop
    /// ([`balancing_scale`]): the same conditioning judged independently of the units the
    /// states are measured in. An element-wise relative model error `δA_ij = ε_ij A_ij` stays
    /// element-wise relative under a diagonal similarity, so the balanced coordinates are the
    /// fairer place to judge sensitivity to such errors; `κ₂(X)` itself grows without bound
    /// when one state is measured in much larger units than another (seen: 64 207 against
    /// 222 for a digital belt axis whose computation-delay state is in newtons). With
    /// uncontrollable modes it is computed in the orthogonal staircase coordinates of the
    /// controllable part.
    pub balanced_eigenvector_condition: f64,
    /// `|det X|` with unit columns (1 is the ideal: orthonormal eigenvectors).
    pub abs_det_x: f64,
    /// `‖K‖₂`.
    pub gain_norm: f64,
    /// Sweeps used (0 for one input or rank B = n).
    pub iterations: usize,
    /// Whether the sweeps met the improvement tolerance (true when no sweep was needed).
    pub converged: bool,
    /// Numerical rank of `B`.
    pub input_rank: usize,
}

#[derive(Debug, Clone, Copy)]
enum Slot {
    Real(usize),
    Pair(usize),
}

/// State-feedback gain placing the eigenvalues of `A − B K` at `poles`.
///
/// `poles` must have `n` entries (or exactly as many as the controllable
/// subspace has dimensions), complex ones in conjugate pairs.
///
/// # Errors
/// See [`PlacementError`].
pub fn state_feedback_gain(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams) -> Result<Placement, PlacementError> {
    let n = a.nrows();
    check_conjugate_pairs(poles).map_err(|e| PlacementError::InvalidPoles { message: e.to_string() })?;
    // Controllability via the staircase.
    let m = b.ncols();
    let mut ab = DMatrix::<f64>::zeros(n, n + m);
    ab.columns_mut(0, n).copy_from(a);
    ab.columns_mut(n, m).copy_from(b);
    let scale = try_norm2(&ab, SvdParams::default())?;
    let st = staircase(a, b, params.controllability_tolerance * scale)?;
    let nc = st.dimension;
    if nc < n {
        // Judged against ‖[A B]‖ some modes look unreached; judged in balanced coordinates,
        // each block against its own scale, they may only be measured in other units. Then the
        // placement is done there and the gain brought back: u = −K_bal D⁻¹ x.
        if let Some(placed) = place_balanced(a, b, poles, params)? {
            return Ok(placed);
        }
    }
    if nc == n {
        if poles.len() != n {
            return Err(PlacementError::PoleCount { expected: n, controllable: n, found: poles.len() });
        }
        let core = assign(a, b, poles, params)?;
        return finish(a, b, core, poles.to_vec(), Vec::new(), Vec::new(), params.domain);
    }
    // Uncontrollable: the fixed modes must be strictly stable.
    let au = st.a.view((nc, nc), (n - nc, n - nc)).into_owned();
    let fixed = try_eigenvalues(&au)?;
    let anorm = try_norm2(a, SvdParams::default())?;
    let axis_tol = match params.domain {
        Domain::Continuous => params.controllability_tolerance * anorm.max(1.0),
        Domain::Discrete => params.controllability_tolerance,
    };
    if let Some(z) = fixed.iter().rev().find(|z| !params.domain.is_strictly_stable(**z, axis_tol)) {
        return Err(PlacementError::UncontrollableUnstableMode { pole: *z });
    }
    let (assigned, dropped) = if poles.len() == nc {
        (poles.to_vec(), Vec::new())
    } else if poles.len() == n {
        split_for_fixed_modes(poles, &fixed).ok_or_else(|| PlacementError::FixedModesDoNotFit { fixed: fixed.clone(), controllable: nc })?
    } else {
        return Err(PlacementError::PoleCount { expected: n, controllable: nc, found: poles.len() });
    };
    let (gain_t, iterations, converged, cond, balanced, det, rank) = if nc == 0 {
        (DMatrix::zeros(m, n), 0, true, 1.0, 1.0, 1.0, 0)
    } else {
        let ac = st.a.view((0, 0), (nc, nc)).into_owned();
        let bc = st.b.rows(0, nc).into_owned();
        let core = assign(&ac, &bc, &assigned, params)?;
        let mut g = DMatrix::zeros(m, n);
        g.columns_mut(0, nc).copy_from(&core.gain);
        (g, core.iterations, core.converged, core.condition, core.balanced_condition, core.abs_det, core.rank)
    };
    // K in the original coordinates: K = [K_c 0] Tᵀ.
    let gain = gain_t * st.transform.transpose();
    let core = Core { gain, iterations, converged, condition: cond, balanced_condition: balanced, abs_det: det, rank };
    finish(a, b, core, assigned, dropped, fixed, params.domain)
}

struct Core {
    gain: DMatrix<f64>,
    iterations: usize,
    converged: bool,
    condition: f64,
    balanced_condition: f64,
    abs_det: f64,
    rank: usize,
}

fn finish(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    core: Core,
    mut assigned: Vec<Complex64>,
    mut not_assigned: Vec<Complex64>,
    mut fixed: Vec<Complex64>,
    domain: Domain,
) -> Result<Placement, PlacementError> {
    let closed = a - b * &core.gain;
    let achieved = try_eigenvalues(&closed)?;
    let mut target: Vec<Complex64> = assigned.iter().chain(fixed.iter()).cloned().collect();
    sort_eigenvalues(&mut target);
    let max_pole_error = matching_error_with_floor(&target, &achieved, pole_error_floor(domain, a.norm()));
    let gain_norm = try_norm2(&core.gain, SvdParams::default())?;
    sort_eigenvalues(&mut assigned);
    sort_eigenvalues(&mut not_assigned);
    sort_eigenvalues(&mut fixed);
    Ok(Placement {
        gain: core.gain,
        achieved_poles: achieved,
        assigned_poles: assigned,
        not_assigned,
        fixed_modes: fixed,
        max_pole_error,
        eigenvector_condition: core.condition,
        balanced_eigenvector_condition: core.balanced_condition,
        abs_det_x: core.abs_det,
        gain_norm,
        iterations: core.iterations,
        converged: core.converged,
        input_rank: core.rank,
    })
}

/// Largest relative error over a greedy one-to-one matching of `requested` to `achieved`
/// (closest pairs first): `|r − z| / max(|r|, √ε · scale)`. A requested pole at (or within
/// rounding of) 0 — a deadbeat or computation-delay pole in the z-plane — is thus compared with
/// `√ε` of the matrix scale, not with itself (for z-plane poles see [`pole_error_floor`]):
/// eigenvalues are only determined to about
/// `κ · ε · ‖A‖` in absolute terms (Bauer–Fike; e.g. Golub & Van Loan, *Matrix Computations*,
/// 4th ed., 2013, §7.2; from memory), so a relative error against a pole of size `1e-15` would
/// report rounding noise as a failure. (Until this release the floor was `ε · scale`, which
/// flagged every delay pole at `z = 0` as misplaced by a factor of hundreds.)
pub fn max_matching_error(requested: &[Complex64], achieved: &[Complex64], scale: f64) -> f64 {
    matching_error_with_floor(requested, achieved, pole_error_floor(Domain::Continuous, scale))
}

/// The smallest denominator of a pole's relative error ([`matching_error_with_floor`]):
/// `√ε · scale` in the s-plane; 1 in the z-plane, where the unit circle is the natural scale
/// (a z-plane pole's distance from where it should be is what changes the response, and
/// poles at `z = 0` — deadbeat or computation-delay poles — are common).
pub fn pole_error_floor(domain: Domain, scale: f64) -> f64 {
    match domain {
        Domain::Continuous => (scale * f64::EPSILON.sqrt()).max(f64::MIN_POSITIVE),
        Domain::Discrete => 1.0,
    }
}

/// [`max_matching_error`] with an explicit floor: `|r − z| / max(|r|, floor)`.
pub fn matching_error_with_floor(requested: &[Complex64], achieved: &[Complex64], floor: f64) -> f64 {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::with_capacity(requested.len() * achieved.len());
    for (i, r) in requested.iter().enumerate() {
        for (j, z) in achieved.iter().enumerate() {
            pairs.push(((r - z).norm(), i, j));
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut used_r = vec![false; requested.len()];
    let mut used_a = vec![false; achieved.len()];
    let mut worst: f64 = 0.0;
    let mut matched = 0;
    for (d, i, j) in pairs {
        if used_r[i] || used_a[j] {
            continue;
        }
        used_r[i] = true;
        used_a[j] = true;
        matched += 1;
        let denom = requested[i].norm().max(floor);
        worst = worst.max(d / denom);
    }
    if matched < requested.len() {
        return f64::INFINITY;
    }
    worst
}

/// Splits `n` requested poles into those assigned to the controllable part and those displaced
/// by the fixed modes (nearest first, keeping conjugate pairs together).
fn split_for_fixed_modes(poles: &[Complex64], fixed: &[Complex64]) -> Option<(Vec<Complex64>, Vec<Complex64>)> {
    let mut remaining: Vec<Complex64> = poles.to_vec();
    let mut dropped = Vec::new();
    let take = |remaining: &mut Vec<Complex64>, dropped: &mut Vec<Complex64>, value: Complex64| {
        if let Some(i) = remaining.iter().position(|z| *z == value) {
            dropped.push(remaining.remove(i));
        }
    };
    let mut fixed_reals: Vec<Complex64> = fixed.iter().filter(|z| z.im == 0.0).cloned().collect();
    let fixed_pairs: Vec<Complex64> = fixed.iter().filter(|z| z.im > 0.0).cloned().collect();
    for fp in fixed_pairs {
        // Prefer a requested complex pair; else two real poles.
        let best_pair = remaining.iter().filter(|z| z.im > 0.0).min_by(|x, y| (*x - fp).norm().total_cmp(&(*y - fp).norm())).cloned();
        if let Some(p) = best_pair {
            take(&mut remaining, &mut dropped, p);
            take(&mut remaining, &mut dropped, p.conj());
            continue;
        }
        for _ in 0..2 {
            let best = remaining.iter().filter(|z| z.im == 0.0).min_by(|x, y| (*x - fp).norm().total_cmp(&(*y - fp).norm())).cloned()?;
            take(&mut remaining, &mut dropped, best);
        }
    }
    while let Some(fr) = fixed_reals.pop() {
        if let Some(best) = remaining.iter().filter(|z| z.im == 0.0).min_by(|x, y| (*x - fr).norm().total_cmp(&(*y - fr).norm())).cloned() {
            take(&mut remaining, &mut dropped, best);
            continue;
        }
        // Two fixed real modes may displace one requested pair.
        let other = fixed_reals.pop()?;
        let mid = (fr + other) * 0.5;
        let p = remaining.iter().filter(|z| z.im > 0.0).min_by(|x, y| (*x - mid).norm().total_cmp(&(*y - mid).norm())).cloned()?;
        take(&mut remaining, &mut dropped, p);
        take(&mut remaining, &mut dropped, p.conj());
    }
    if dropped.len() != fixed.len() {
        return None;
    }
    Some((remaining, dropped))
}

struct Assigned {
    gain: DMatrix<f64>,
    iterations: usize,
    converged: bool,
    condition: f64,
    balanced_condition: f64,
    abs_det: f64,
    rank: usize,
}

impl From<Assigned> for Core {
    fn from(a: Assigned) -> Core {
        Core { gain: a.gain, iterations: a.iterations, converged: a.converged, condition: a.condition, balanced_condition: a.balanced_condition, abs_det: a.abs_det, rank: a.rank }
    }
}

fn to_complex(m: &DMatrix<f64>) -> DMatrix<Complex64> {
    m.map(|v| Complex64::new(v, 0.0))
}

/// Eigenstructure assignment for a pair with no uncontrollable mode among the requested poles.
fn assign(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams) -> Result<Core, PlacementError> {
    assign_inner(a, b, poles, params).map(Core::from)
}

fn assign_inner(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams) -> Result<Assigned, PlacementError> {
    let n = a.nrows();
    // 1. Rank of B and the bases U_r, U₁.
    let svd = try_svd(b, SvdParams::default())?;
    let smax = svd.singular_values.iter().cloned().fold(0.0, f64::max);
    let r = svd.singular_values.iter().filter(|&&s| s > params.rank_tolerance * smax && s > 0.0).count();
    if r == 0 {
        return Err(PlacementError::Numerical { message: "B has rank 0".into() });
    }
    let ur = svd.u.columns(0, r).into_owned();
    let (qb, _) = full_qr(&ur);
    let u1 = qb.columns(r, n - r).into_owned();

    // 2. Slots: real poles first, then conjugate pairs (positive imaginary part first).
    let mut ordered: Vec<Complex64> = poles.iter().filter(|z| z.im == 0.0).cloned().collect();
    ordered.sort_by(|x, y| x.re.total_cmp(&y.re));
    let mut pairs: Vec<Complex64> = poles.iter().filter(|z| z.im > 0.0).cloned().collect();
    pairs.sort_by(|x, y| x.re.total_cmp(&y.re).then(x.im.total_cmp(&y.im)));
    let mut slots = Vec::new();
    for j in 0..ordered.len() {
        slots.push(Slot::Real(j));
    }
    for p in pairs {
        slots.push(Slot::Pair(ordered.len()));
        ordered.push(p);
        ordered.push(p.conj());
    }
    if ordered.len() != n {
        return Err(PlacementError::PoleCount { expected: n, controllable: n, found: poles.len() });
    }
    // Multiplicities.
    for (i, z) in ordered.iter().enumerate() {
        let count = ordered.iter().filter(|w| *w == z).count();
        if count > r && ordered[..i].iter().all(|w| w != z) {
            return Err(PlacementError::RepeatedBeyondRank { pole: *z, multiplicity: count, rank: r });
        }
    }

    // 3. Admissible subspaces S_j (n × r), shared by equal poles; the conjugate column uses conj(S).
    let mut subspaces: Vec<DMatrix<Complex64>> = Vec::with_capacity(slots.len());
    let mut cache: Vec<(Complex64, usize)> = Vec::new();
    for slot in &slots {
        let lambda = match *slot {
            Slot::Real(j) | Slot::Pair(j) => ordered[j],
        };
        if let Some(&(_, k)) = cache.iter().find(|(z, _)| *z == lambda) {
            let s = subspaces[k].clone();
            subspaces.push(s);
            continue;
        }
        let s = admissible_subspace(a, &u1, lambda, r);
        cache.push((lambda, subspaces.len()));
        subspaces.push(s);
    }

    // 4. Several starting guesses; each is refined by sweeps and the best-conditioned result kept
    // (|det X| has local maxima, and a larger |det X| does not always mean a smaller κ₂(X)).
    let mut starts: Vec<DMatrix<Complex64>> = Vec::new();
    starts.extend(initial_x(&slots, &subspaces, &ordered, &qb));
    starts.extend(initial_x_sum(&slots, &subspaces, &ordered, n));
    if r > 1 {
        starts.extend(initial_x_seeded(&slots, &subspaces, &ordered, n, 0x5DEECE66D));
    }
    let real_subspaces: Vec<Option<DMatrix<f64>>> =
        slots.iter().zip(&subspaces).map(|(slot, s)| matches!(slot, Slot::Real(_)).then(|| s.map(|z| z.re))).collect();
    let mut runs: Vec<Refinement> = Vec::new();
    for x0 in starts {
        let Some(run) = Refinement::new(x0, &slots)? else { continue };
        runs.push(run);
        if r == 1 {
            break; // X is unique up to column scaling: nothing to refine.
        }
    }
    if runs.is_empty() {
        return Err(PlacementError::Numerical {
            message: "no independent set of closed-loop eigenvectors was found; the requested poles may coincide with uncontrollable or nearly uncontrollable modes".into(),
        });
    }
    let mut total_sweeps = 0;
    if r > 1 {
        // Each start gets a first stage; the best-conditioned one is then refined to the end.
        for run in runs.iter_mut() {
            run.sweep(&slots, &subspaces, &real_subspaces, params, params.condition_check_interval)?;
            total_sweeps += run.sweeps;
        }
        runs.sort_by(|p, q| p.best_kappa.total_cmp(&q.best_kappa));
        runs.truncate(params.finalists.max(1));
        for run in runs.iter_mut() {
            let before = run.sweeps;
            run.sweep(&slots, &subspaces, &real_subspaces, params, params.max_sweeps.saturating_sub(before))?;
            total_sweeps += run.sweeps - before;
        }
        runs.sort_by(|p, q| q.best_kappa.total_cmp(&p.best_kappa));
    }
    let Some(best) = runs.pop() else {
        return Err(PlacementError::Numerical { message: "no eigenvector matrix".into() });
    };
    let converged = r == 1 || best.converged;
    let (x, condition) = best.into_best();
    let iterations = total_sweeps;

    // 6. Gain: K X = V_r Σ_r⁻¹ U_rᵀ (A X − X Λ), solved with X rather than through an explicit
    // inverse (which would square the effect of κ(X) on the rounding errors).
    let mut xl = x.clone();
    for (j, z) in ordered.iter().enumerate() {
        let mut col = xl.column_mut(j);
        col *= *z;
    }
    let sigma_inv = DMatrix::from_diagonal(&svd.singular_values.rows(0, r).map(|s| 1.0 / s));
    let vr = svd.v_adjoint.rows(0, r).transpose();
    let left = to_complex(&(vr * sigma_inv * ur.transpose()));
    let g = &left * (to_complex(a) * &x - &xl); // m × n
    let xt_lu = x.transpose().lu();
    let mut gain_c = xt_lu.solve(&g.transpose()).ok_or_else(|| PlacementError::Numerical { message: "the eigenvector matrix is singular".into() })?;
    // One step of iterative refinement of Xᵀ Kᵀ = Gᵀ.
    let residual = g.transpose() - x.transpose() * &gain_c;
    if let Some(correction) = xt_lu.solve(&residual) {
        gain_c += correction;
    }
    let gain_direct = gain_c.transpose().map(|z| z.re);
    // Second route, K = V_r Σ_r⁻¹ U_rᵀ (A − M) with M = X Λ X⁻¹ from a solve. The two differ
    // only in rounding; when X is ill conditioned one can be markedly better, so both are
    // checked against the request through the eigenvalues of A − B K and the better one kept.
    let mut gain = gain_direct;
    if let Some(mt) = xt_lu.solve(&xl.transpose()) {
        let m_real = mt.transpose().map(|z| z.re);
        let gain_m = left.map(|z| z.re) * (a - m_real);
        if gain_m.iter().all(|v| v.is_finite()) {
            let err_direct = try_eigenvalues(&(a - b * &gain)).map(|e| max_matching_error(&ordered, &e, a.norm())).unwrap_or(f64::INFINITY);
            let err_m = try_eigenvalues(&(a - b * &gain_m)).map(|e| max_matching_error(&ordered, &e, a.norm())).unwrap_or(f64::INFINITY);
            if err_m < err_direct {
                gain = gain_m;
            }
        }
    }
    let det = abs_det(&x);
    if !gain.iter().all(|v| v.is_finite()) {
        return Err(PlacementError::Numerical { message: "the gain is not finite".into() });
    }
    let balanced_condition = balanced_condition(&(a - b * &gain), &x).unwrap_or(condition);
    Ok(Assigned { gain, iterations, converged, condition, balanced_condition, abs_det: det, rank: r })
}

/// `κ₂(D⁻¹ X)` with unit columns for the closed loop `closed` with eigenvectors `x` (see
/// [`Placement::balanced_eigenvector_condition`]); `None` when the SVD fails.
fn balanced_condition(closed: &DMatrix<f64>, x: &DMatrix<Complex64>) -> Option<f64> {
    let d = balancing_scale(closed, 100);
    let mut xb = DMatrix::from_fn(x.nrows(), x.ncols(), |i, j| x[(i, j)] / d[i]);
    for mut col in xb.column_iter_mut() {
        let norm = col.norm();
        if norm > 0.0 && norm.is_finite() {
            col /= Complex64::new(norm, 0.0);
        }
    }
    try_condition_number(&xb, SvdParams::default()).ok()
}

/// KNV/Tits–Yang sweeps from one starting `X`, keeping the best-conditioned `X` seen.
///
/// The sweeps work on the real form `X_r` of `X`: a real pole's column as is, a conjugate
/// pair `x, x̄` as the two real columns `Re x, Im x`. Since `[x, x̄] = [Re x, Im x]·[[1, 1], [i, −i]]`,
/// `|det X| = 2^p |det X_r|` (`p` pairs), so both have the same maximisers, and real
/// arithmetic costs a quarter of complex. `X_r⁻¹` is carried along by rank-one (real pole)
/// and rank-two (pair, Woodbury) updates whose determinant ratio is known before they are
/// applied, so a step that would not improve `|det X|` is simply skipped.
struct Refinement {
    xr: DMatrix<f64>,
    xr_inv: DMatrix<f64>,
    best_x: DMatrix<Complex64>,
    best_kappa: f64,
    sweeps: usize,
    converged: bool,
}

/// Real form of a conjugate-structured complex `X`.
fn to_real_form(x: &DMatrix<Complex64>, slots: &[Slot]) -> DMatrix<f64> {
    let n = x.nrows();
    let mut xr = DMatrix::<f64>::zeros(n, n);
    for slot in slots {
        match *slot {
            Slot::Real(j) => {
                for i in 0..n {
                    xr[(i, j)] = x[(i, j)].re;
                }
            }
            Slot::Pair(j) => {
                for i in 0..n {
                    xr[(i, j)] = x[(i, j)].re;
                    xr[(i, j + 1)] = x[(i, j)].im;
                }
            }
        }
    }
    xr
}

/// Complex `X` (unit columns) from the real form.
fn from_real_form(xr: &DMatrix<f64>, slots: &[Slot]) -> DMatrix<Complex64> {
    let n = xr.nrows();
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for slot in slots {
        match *slot {
            Slot::Real(j) => {
                let norm = xr.column(j).norm();
                for i in 0..n {
                    x[(i, j)] = Complex64::new(xr[(i, j)] / norm, 0.0);
                }
            }
            Slot::Pair(j) => {
                let norm = (xr.column(j).norm_squared() + xr.column(j + 1).norm_squared()).sqrt();
                for i in 0..n {
                    let z = Complex64::new(xr[(i, j)], xr[(i, j + 1)]) / norm;
                    x[(i, j)] = z;
                    x[(i, j + 1)] = z.conj();
                }
            }
        }
    }
    x
}

fn invert_real(x: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let inv = x.clone().lu().try_inverse()?;
    if inv.iter().all(|v| v.is_finite()) {
        Some(inv)
    } else {
        None
    }
}

impl Refinement {
    fn new(x: DMatrix<Complex64>, slots: &[Slot]) -> Result<Option<Self>, PlacementError> {
        let xr = to_real_form(&x, slots);
        let Some(xr_inv) = invert_real(&xr) else { return Ok(None) };
        let kappa = try_condition_number(&x, SvdParams::default())?;
        Ok(Some(Refinement { xr, xr_inv, best_x: x, best_kappa: kappa, sweeps: 0, converged: false }))
    }

    fn into_best(self) -> (DMatrix<Complex64>, f64) {
        (self.best_x, self.best_kappa)
    }

    /// Runs up to `budget` more sweeps (fewer if converged).
    fn sweep(&mut self, slots: &[Slot], subspaces: &[DMatrix<Complex64>], real_subspaces: &[Option<DMatrix<f64>>], params: PlacementParams, budget: usize) -> Result<(), PlacementError> {
        let n = self.xr.nrows();
        let mut w1 = DVector::<f64>::zeros(n);
        let mut w2 = DVector::<f64>::zeros(n);
        for _ in 0..budget {
            if self.converged {
                break;
            }
            self.sweeps += 1;
            let mut log_gain = 0.0;
            for (k, slot) in slots.iter().enumerate() {
                match *slot {
                    Slot::Real(j) => {
                        let Some(sr) = real_subspaces[k].as_ref() else { continue };
                        let y = self.xr_inv.row(j).transpose();
                        let mut v = sr * (sr.transpose() * &y);
                        let vn = v.norm();
                        if !(vn > 1e-300) || !vn.is_finite() {
                            continue;
                        }
                        v /= vn;
                        // u = v − x_j; w = X⁻¹ u; ratio = 1 + w_j.
                        let u = &v - self.xr.column(j);
                        w1.gemv(1.0, &self.xr_inv, &u, 0.0);
                        let denom = 1.0 + w1[j];
                        if !(denom.abs() > 1.0 + 1e-15) || !denom.is_finite() {
                            continue; // no improvement (or a breakdown): keep the column
                        }
                        let row = self.xr_inv.row(j).transpose();
                        self.xr_inv.ger(-1.0 / denom, &w1, &row, 1.0);
                        self.xr.set_column(j, &v);
                        log_gain += denom.abs().ln();
                    }
                    Slot::Pair(j) => {
                        // The complement of the other columns is spanned by rows j, j+1 of X_r⁻¹.
                        let r1 = self.xr_inv.row(j).transpose();
                        let r2 = self.xr_inv.row(j + 1).transpose();
                        let Some(x) = best_pair_vector_in(&subspaces[k], &r1, &r2) else { continue };
                        let xr_new = DVector::from_iterator(n, x.iter().map(|z| z.re));
                        let xi_new = DVector::from_iterator(n, x.iter().map(|z| z.im));
                        let u1 = &xr_new - self.xr.column(j);
                        let u2 = &xi_new - self.xr.column(j + 1);
                        w1.gemv(1.0, &self.xr_inv, &u1, 0.0);
                        w2.gemv(1.0, &self.xr_inv, &u2, 0.0);
                        // C = I + Eᵀ X⁻¹ U (2 × 2); det C = |det X_new| / |det X_old|.
                        let (c11, c12, c21, c22) = (1.0 + w1[j], w2[j], w1[j + 1], 1.0 + w2[j + 1]);
                        let det = c11 * c22 - c12 * c21;
                        if !(det.abs() > 1.0 + 1e-15) || !det.is_finite() {
                            continue;
                        }
                        // X⁻¹ ← X⁻¹ − W C⁻¹ R with R the rows j, j+1 of X⁻¹.
                        let (i11, i12, i21, i22) = (c22 / det, -c12 / det, -c21 / det, c11 / det);
                        let a1 = &w1 * i11 + &w2 * i21; // column 1 of W C⁻¹
                        let a2 = &w1 * i12 + &w2 * i22; // column 2 of W C⁻¹
                        self.xr_inv.ger(-1.0, &a1, &r1, 1.0);
                        self.xr_inv.ger(-1.0, &a2, &r2, 1.0);
                        self.xr.set_column(j, &xr_new);
                        self.xr.set_column(j + 1, &xi_new);
                        log_gain += det.abs().ln();
                    }
                }
            }
            // Refactor X_r⁻¹ now and then to stop rounding drift in the low-rank updates.
            if self.sweeps % params.refactor_interval.max(1) == 0 {
                match invert_real(&self.xr) {
                    Some(inv) => self.xr_inv = inv,
                    None => return Err(PlacementError::Numerical { message: "the eigenvector matrix became singular".into() }),
                }
            }
            let mut stop = log_gain < params.improvement_tolerance;
            // Every few sweeps (and at the end), keep the best-conditioned X seen; stop once κ₂(X) stalls.
            if stop || self.sweeps % params.condition_check_interval.max(1) == 0 {
                let x = from_real_form(&self.xr, slots);
                let kappa = try_condition_number(&x, SvdParams::default())?;
                if kappa > self.best_kappa * (1.0 - params.condition_stall_tolerance) {
                    stop = true;
                }
                if kappa < self.best_kappa {
                    self.best_kappa = kappa;
                    self.best_x = x;
                }
            }
            if stop {
                self.converged = true;
                break;
            }
        }
        Ok(())
    }
}

/// [`best_pair_vector`] given two real vectors spanning the complement of the other columns.
fn best_pair_vector_in(s: &DMatrix<Complex64>, r1: &DVector<f64>, r2: &DVector<f64>) -> Option<DVector<Complex64>> {
    let n = r1.len();
    let y = DVector::from_iterator(n, r1.iter().zip(r2.iter()).map(|(&a, &b)| Complex64::new(a, b)));
    best_pair_vector(s, &y)
}

/// `null(U₁ᵀ (A − λ I))`, `n × r`, orthonormal columns.
fn admissible_subspace(a: &DMatrix<f64>, u1: &DMatrix<f64>, lambda: Complex64, r: usize) -> DMatrix<Complex64> {
    let n = a.nrows();
    if u1.ncols() == 0 {
        return DMatrix::identity(n, n);
    }
    if lambda.im == 0.0 {
        // (A − λI)ᵀ U₁, real arithmetic.
        let mut w = a.transpose() * u1;
        for i in 0..n {
            for j in 0..u1.ncols() {
                w[(i, j)] -= lambda.re * u1[(i, j)];
            }
        }
        let (q, _) = full_qr(&w);
        to_complex(&q.columns(n - r, r).into_owned())
    } else {
        // (A − λI)ᴴ U₁ = (Aᵀ − λ̄ I) U₁.
        let at_u1 = to_complex(&(a.transpose() * u1));
        let mut w = at_u1;
        let lc = lambda.conj();
        for i in 0..n {
            for j in 0..u1.ncols() {
                w[(i, j)] -= lc * u1[(i, j)];
            }
        }
        let (q, _) = full_qr(&w);
        q.columns(n - r, r).into_owned()
    }
}

/// The unit `x ∈ range S` maximising `|det X|` when the conjugate columns `x, x̄` replace a pair.
///
/// The complement of the other `n − 2` columns is spanned by `y` and `ȳ` (rows of `X⁻¹`), so it
/// has a real orthonormal basis `Y`. With `g = Yᵀ x = G c` (`G = Yᵀ S`, `x = S c`),
/// `|det X| ∝ |det [Re g, Im g]| = |Im(ḡ₁ g₂)| = |cᴴ Gᴴ J G c|` with the Hermitian
/// `J = [[0, −i/2], [i/2, 0]]`: a Hermitian quadratic form, maximised in modulus by the
/// eigenvector of its largest-modulus eigenvalue, `c = Gᴴ w` with `J G Gᴴ w = μ w` (2 × 2).
fn best_pair_vector(s: &DMatrix<Complex64>, y: &DVector<Complex64>) -> Option<DVector<Complex64>> {
    let n = y.len();
    let yr = DVector::from_iterator(n, y.iter().map(|z| z.re));
    let yi = DVector::from_iterator(n, y.iter().map(|z| z.im));
    let n1 = yr.norm().max(yi.norm());
    if !(n1 > 0.0) {
        return None;
    }
    let (e1, e2) = {
        let (p, q) = if yr.norm() >= yi.norm() { (yr, yi) } else { (yi, yr) };
        let e1 = &p / p.norm();
        let q = &q - &e1 * e1.dot(&q);
        let qn = q.norm();
        if !(qn > 1e-8 * n1) {
            return None;
        }
        (e1, q / qn)
    };
    // G = Yᵀ S, 2 × r.
    let r = s.ncols();
    let mut g = DMatrix::<Complex64>::zeros(2, r);
    for c in 0..r {
        let col = s.column(c);
        let mut d1 = Complex64::new(0.0, 0.0);
        let mut d2 = Complex64::new(0.0, 0.0);
        for i in 0..n {
            d1 += col[i] * e1[i];
            d2 += col[i] * e2[i];
        }
        g[(0, c)] = d1;
        g[(1, c)] = d2;
    }
    let nn = &g * g.adjoint(); // 2 × 2 Hermitian
    let half_i = Complex64::new(0.0, 0.5);
    // J N with J = [[0, −i/2], [i/2, 0]].
    let p = -half_i * nn[(1, 0)];
    let q = -half_i * nn[(1, 1)];
    let s_ = half_i * nn[(0, 0)];
    let t = half_i * nn[(0, 1)];
    let tr = p + t;
    let det = p * t - q * s_;
    let disc = (tr * tr - det * 4.0).sqrt();
    let mu1 = (tr + disc) * 0.5;
    let mu2 = (tr - disc) * 0.5;
    let mu = if mu1.norm() >= mu2.norm() { mu1 } else { mu2 };
    let w1 = DVector::from_vec(vec![q, mu - p]);
    let w2 = DVector::from_vec(vec![mu - t, s_]);
    let w = if w1.norm() >= w2.norm() { w1 } else { w2 };
    if !(w.norm() > 0.0) {
        return None;
    }
    let c = g.adjoint() * w;
    let x = s * c;
    let xn = x.norm();
    if xn > 0.0 && xn.is_finite() {
        Some(x / Complex64::new(xn, 0.0))
    } else {
        None
    }
}

fn project(s: &DMatrix<Complex64>, y: &DVector<Complex64>) -> DVector<Complex64> {
    s * (s.adjoint() * y)
}




fn abs_det(x: &DMatrix<Complex64>) -> f64 {
    x.clone().lu().determinant().norm()
}

fn normalise(v: DVector<Complex64>) -> Option<DVector<Complex64>> {
    let norm = v.norm();
    if norm > 1e-300 && norm.is_finite() {
        Some(v / Complex64::new(norm, 0.0))
    } else {
        None
    }
}

/// Initial guess: project spread-out orthonormal vectors (the columns of `[U_r U₁]`) onto each `S_j`.
fn initial_x(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], qb: &DMatrix<f64>) -> Option<DMatrix<Complex64>> {
    let n = ordered.len();
    let q = to_complex(qb);
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    let inv_sqrt2 = Complex64::new(std::f64::consts::FRAC_1_SQRT_2, 0.0);
    for (k, slot) in slots.iter().enumerate() {
        let s = &subspaces[k];
        match *slot {
            Slot::Real(j) => {
                let mut v = project(s, &q.column(j).into_owned());
                for z in v.iter_mut() {
                    z.im = 0.0;
                }
                let v = normalise(v)?;
                x.set_column(j, &v);
            }
            Slot::Pair(j) => {
                let target = (q.column(j) + q.column(j + 1) * Complex64::new(0.0, 1.0)) * inv_sqrt2;
                let v = normalise(project(s, &target.into_owned()))?;
                x.set_column(j, &v);
                x.set_column(j + 1, &v.map(|z| z.conj()));
            }
        }
    }
    Some(x)
}

/// Initial guess: the normalised sum of each subspace's basis vectors, with repeated poles
/// taking successive basis vectors instead so that their columns are independent.
fn initial_x_sum(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], n: usize) -> Option<DMatrix<Complex64>> {
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for (k, slot) in slots.iter().enumerate() {
        let s = &subspaces[k];
        let j = match *slot {
            Slot::Real(j) | Slot::Pair(j) => j,
        };
        let copy = ordered[..j].iter().filter(|z| **z == ordered[j]).count();
        let v = if copy == 0 {
            let mut sum = DVector::<Complex64>::zeros(n);
            for c in 0..s.ncols() {
                sum += s.column(c);
            }
            sum
        } else {
            s.column(copy % s.ncols()).into_owned()
        };
        let mut v = normalise(v)?;
        if let Slot::Real(_) = slot {
            for z in v.iter_mut() {
                z.im = 0.0;
            }
            v = normalise(v)?;
        }
        x.set_column(j, &v);
        if let Slot::Pair(_) = slot {
            x.set_column(j + 1, &v.map(|z| z.conj()));
        }
    }
    Some(x)
}

/// Initial guess: projections of seeded pseudo-random vectors (a third start for the sweeps).
fn initial_x_seeded(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], n: usize, seed: u64) -> Option<DMatrix<Complex64>> {
    let mut state = seed | 1;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for (k, slot) in slots.iter().enumerate() {
        let s = &subspaces[k];
        let c = DVector::from_fn(s.ncols(), |_, _| Complex64::new(next(), match slot { Slot::Real(_) => 0.0, Slot::Pair(_) => next() }));
        let mut v = s * c;
        if let Slot::Real(_) = slot {
            for z in v.iter_mut() {
                z.im = 0.0;
            }
        }
        let v = normalise(v)?;
        match *slot {
            Slot::Real(j) => x.set_column(j, &v),
            Slot::Pair(j) => {
                x.set_column(j, &v);
                x.set_column(j + 1, &v.map(|z| z.conj()));
            }
        }
    }
    let _ = ordered;
    Some(x)
}

#[cfg(test)]
#[path = "tests/place.rs"]
mod tests;

/// Placement in the balanced coordinates `D⁻¹ A D`, `D⁻¹ B` (exact power-of-two Parlett–Reinsch
/// scaling of `A`) when the pair is controllable there with the rank of `B` judged against
/// `‖D⁻¹B‖` and the blocks of `A` against `‖D⁻¹AD‖`; `None` when it is not (the caller then
/// treats the fixed modes as before). Eigenvalues are similarity invariant; the gain comes back
/// as `K = K_bal D⁻¹`.
fn place_balanced(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams) -> Result<Option<Placement>, PlacementError> {
    let (n, m) = (a.nrows(), b.ncols());
    let d = crate::linalg::eigen::balancing_scale(a, 100);
    let a_bal = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
    let b_bal = DMatrix::from_fn(n, m, |i, j| b[(i, j)] / d[i]);
    let tol_a = params.controllability_tolerance * try_norm2(&a_bal, SvdParams::default())?;
    let tol_b = params.controllability_tolerance * try_norm2(&b_bal, SvdParams::default())?;
    let st = crate::analysis::staircase_with(&a_bal, &b_bal, tol_b, tol_a)?;
    if st.dimension < n || poles.len() != n {
        return Ok(None);
    }
    // Within the balanced pair the inputs are put on the scale of A (a power of two per
    // column), so that the placement's own tolerances see them as they are.
    let anorm = a_bal.norm().max(f64::MIN_POSITIVE);
    let s: Vec<f64> = (0..m).map(|j| {
        let c = b_bal.column(j).norm();
        if c > 0.0 { 2f64.powi((anorm / c).log2().round() as i32) } else { 1.0 }
    }).collect();
    let b_scaled = DMatrix::from_fn(n, m, |i, j| b_bal[(i, j)] * s[j]);
    let core = assign(&a_bal, &b_scaled, poles, params)?;
    // u = −K_s x_bal with B_scaled = B_bal S: the input is S u_s, so K_bal = S K_s; then K = K_bal D⁻¹.
    let gain = DMatrix::from_fn(m, n, |i, j| s[i] * core.gain[(i, j)] / d[j]);
    let core = Core { gain, ..core };
    finish(a, b, core, poles.to_vec(), Vec::new(), Vec::new(), params.domain).map(Some)
}

/// What a gain computed elsewhere (an LQR gain, used as it is) achieves, in the terms of a
/// [`Placement`]: the eigenvalues of `A − B K` against `requested`, and the conditioning of the
/// closed-loop eigenvectors. The eigenvectors come from inverse iteration on `A − B K` at each
/// eigenvalue (three steps from a fixed start, the shift moved off the eigenvalue by
/// `√ε · ‖A − B K‖`; Golub & Van Loan, *Matrix Computations*, 4th ed., 2013, §7.6.1; from
/// memory): a repeated eigenvalue with one eigenvector (a Jordan block) gives nearly parallel
/// columns and so a large condition number, as it should. Cost: `O(n³)` per distinct
/// eigenvalue.
///
/// # Errors
/// [`PlacementError`] when an eigenvalue or singular-value computation fails.
pub fn placement_of_gain(a: &DMatrix<f64>, b: &DMatrix<f64>, gain: &DMatrix<f64>, requested: &[Complex64], params: PlacementParams) -> Result<Placement, PlacementError> {
    let closed = a - b * gain;
    let n = a.nrows();
    let mut achieved = try_eigenvalues(&closed)?;
    sort_eigenvalues(&mut achieved);
    let scale = closed.norm().max(f64::MIN_POSITIVE);
    let cc = to_complex(&closed);
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for (j, lambda) in achieved.iter().enumerate() {
        let shift = lambda + Complex64::new(f64::EPSILON.sqrt() * scale, 0.0);
        let mut m = cc.clone();
        for i in 0..n {
            m[(i, i)] -= shift;
        }
        let lu = m.lu();
        let mut v = DVector::<Complex64>::from_fn(n, |i, _| Complex64::new(1.0 + 0.1 * i as f64, 0.0));
        for _ in 0..3 {
            let Some(w) = lu.solve(&v) else { break };
            let norm = w.norm();
            if !(norm.is_finite() && norm > 0.0) {
                break;
            }
            v = w / Complex64::new(norm, 0.0);
        }
        x.set_column(j, &v);
    }
    let condition = try_condition_number(&x, SvdParams::default()).unwrap_or(f64::INFINITY);
    let balanced = balanced_condition(&closed, &x).unwrap_or(f64::INFINITY);
    let sv = crate::linalg::svd::try_singular_values(b, SvdParams::default())?;
    let smax = sv.iter().fold(0.0f64, |m, s| m.max(*s));
    let rank = sv.iter().filter(|&&s| s > params.rank_tolerance * smax && s > 0.0).count();
    let mut target = requested.to_vec();
    sort_eigenvalues(&mut target);
    Ok(Placement {
        gain: gain.clone(),
        max_pole_error: matching_error_with_floor(&target, &achieved, pole_error_floor(params.domain, a.norm())),
        achieved_poles: achieved,
        assigned_poles: target,
        not_assigned: Vec::new(),
        fixed_modes: Vec::new(),
        eigenvector_condition: condition,
        balanced_eigenvector_condition: balanced,
        abs_det_x: abs_det(&x),
        gain_norm: try_norm2(gain, SvdParams::default())?,
        iterations: 0,
        converged: true,
        input_rank: rank,
    })
}
