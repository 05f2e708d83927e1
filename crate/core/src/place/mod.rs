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
//!    Householder QR of `(A − λ_j I)ᴴ U₁`; from [`LARGE_PLANT_ORDER`] states, as the `x`
//!    parts of the null space of `[A − λ_j I, U_r]` after one shared Hessenberg reduction
//!    (see Cost), checked by the residual with the QR as fallback.
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
//! With one input (`r = 1`) and distinct poles every `S_j` is a line: `X` is unique and no
//! iteration runs. With `r = n`, `S_j` is the whole space. Ackermann's formula
//! and powers of `A` are never used.
//!
//! Uncontrollable but stabilisable plants are first put in staircase form
//! (see [`crate::analysis`]); only the controllable part is assigned, the fixed
//! modes stay where they are and the requested poles they displace are reported.
//!
//! # Cost
//! - Subspaces, below 64 states: a Householder QR of the `n × (n − r)` matrix `(A − λI)ᴴ U₁`
//!   per distinct pole (a conjugate pair shares one), forming only the `r` trailing columns of
//!   `Q`: about `4n(n − r)² − 4(n − r)³/3 + 4n(n − r)r` flops (four times that in complex
//!   arithmetic), so `O(n⁴)` for `n` distinct poles. From 64 states: one Hessenberg reduction
//!   (`10n³/3`) shared by all poles, then per pole the null space of `[A − λI, U_r]` by Givens
//!   rotations (`O(n² r)`, [`crate::linalg::shifted_sigma::ShiftedPair::admissible_basis`]),
//!   checked by its residual `‖(I − U_r U_rᵀ)(A − λI) S‖` (`O(n² r)`; the QR route where it
//!   exceeds `10 n ε (‖A‖_F + |λ|)`): `O(n³)` in all. The benchmark log's runs before and
//!   after (`tests/bench/log.jsonl`, 16:27 and 19:04 UTC on 2026-12-04) show the whole
//!   200-state modal design at 1.89 s and 1.52 s, together with the margin changes of the
//!   same runs.
//! - One sweep: each real column costs two `n × n` matrix–vector products' worth (`X_r⁻¹ u` and
//!   the rank-one update of `X_r⁻¹`, `2n²` flops each) plus `4nr` for the projection; a pair
//!   twice that: about `4n³ + 4n²r` flops per sweep, with no allocation inside it. `X_r⁻¹` is
//!   refactored every [`PlacementParams::refactor_interval`] sweeps (`≈ 2n³`, LU and inverse).
//! - Sweeps: each of the (up to three) starting guesses gets
//!   [`PlacementParams::condition_check_interval`] sweeps ([`PlacementParams::large_first_stage_sweeps`]
//!   from [`LARGE_PLANT_ORDER`] states), the best continues to convergence
//!   or [`PlacementParams::max_sweeps`]; `κ₂(X)` (one SVD, one or two sweeps' cost) is
//!   checked at the end of the first stage, then every
//!   [`PlacementParams::final_check_interval`] sweeps.
//!   The count is reported (`iterations`). Measured on the
//!   benchmark plants of `tests/bench/whole_process.py` (README table): see the `sweeps`
//!   column there.
//!
//! A pole requested more often than `rank B` allows (with one input: any repeated pole, as in
//! deadbeat designs) has no diagonalisable closed loop; such requests go to the orthogonal
//! deflation of [`deflation`], which places a Jordan block.
//!
//! # Failure modes
//! - a requested pole repeated more than `rank B` times on a plant that no single combination
//!   of the inputs controls: [`PlacementError::RepeatedBeyondRank`];
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
use crate::linalg::eigen::{sort_eigenvalues, try_eigenvalues, EigenError};
use crate::linalg::svd::{try_condition_number, try_norm2, try_singular_values, SvdError, SvdParams};
use crate::poles::check_conjugate_pairs;

mod deflation;
mod robust;

use robust::{abs_det, balanced_condition, to_complex};

/// From this many states the placement takes its large-plant routes: admissible subspaces
/// from one shared Hessenberg reduction, and a shorter first stage of sweeps
/// ([`PlacementParams::large_first_stage_sweeps`]).
pub const LARGE_PLANT_ORDER: usize = 64;

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
    /// Below [`LARGE_PLANT_ORDER`] states, the length of the first stage in which every
    /// starting guess is refined (with one check of `κ₂(X)` at its end) before only the best
    /// ones continue; also the check interval of a continuation's sweeps. Default 40.
    pub condition_check_interval: usize,
    /// The first stage's length from [`LARGE_PLANT_ORDER`] states. Default 10: on the ten
    /// benchmark plants of that size (`tests/bench/whole_process.py` modal plants of 64, 100,
    /// 200 and 300 states; the six 100-state plants of `tests/bench/compare_scipy.py`) the
    /// same start won, with the same `κ₂(X)` and pole error, in 100 sweeps instead of 160. On
    /// the committed fixtures (n ≤ 50) a first stage of 10 picked a worse start in 1 of 121
    /// cases, which is why smaller plants keep 40.
    pub large_first_stage_sweeps: usize,
    /// Sweeps between checks of `κ₂(X)` once the best start continues alone, at every plant
    /// size (the first stage keeps [`PlacementParams::condition_check_interval`]). Default 10. A check costs
    /// about one sweep (at n = 40, two), and `κ₂(X)` often settles, or reaches its lowest
    /// value, long before `|det X|` stops creeping up: the trace of the 200-state modal plant of
    /// `tests/bench/whole_process.py` read 5319 after 10 sweeps of the winning start, 5305
    /// after 20 and 5302–5307 from then to 80; with checks every 40 sweeps the stall was seen
    /// only at sweep 80.
    pub final_check_interval: usize,
    /// Continuous or discrete time: decides whether a fixed (uncontrollable) mode is
    /// acceptable. Default continuous.
    pub domain: Domain,
    /// How many of the starting guesses continue after the first stage. Default 1.
    pub finalists: usize,
    /// Sweeps between refactorisations of `X⁻¹` (rank-one updates in between). Default 4.
    pub refactor_interval: usize,
    /// Stop when `κ₂(X)` improved by less than this fraction since the last check. Default `1e-4`.
    pub condition_stall_tolerance: f64,
    /// Continuation ([`state_feedback_gain_continued`]) keeps the branch followed from the
    /// previous eigenvectors unless its `κ₂(X)` is more than this factor above a fresh start's.
    /// Default 2.
    pub branch_condition_factor: f64,
    /// A continuation's sweeps stop when a sweep raises `log |det X|` (and a check lowers
    /// `κ₂(X)`) by less than this. Default `1e-13`.
    pub continuation_tolerance: f64,
    /// A continuation whose sweeps turn an eigenvector by more than this (`1 − |cos|` of the
    /// angle from its projected previous direction) has lost its branch. Default `1e-2` (about
    /// 8°; small pole steps move them by `1e-4` or less).
    pub branch_drift_limit: f64,
}

impl Default for PlacementParams {
    fn default() -> Self {
        PlacementParams {
            max_sweeps: 200,
            improvement_tolerance: 1e-6,
            rank_tolerance: 1e-10,
            controllability_tolerance: 1e-10,
            condition_check_interval: 40,
            large_first_stage_sweeps: 10,
            final_check_interval: 10,
            refactor_interval: 4,
            finalists: 1,
            domain: Domain::Continuous,
            condition_stall_tolerance: 1e-4,
            branch_condition_factor: 2.0,
            continuation_tolerance: 1e-13,
            branch_drift_limit: 1e-2,
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
    /// How the gain was computed.
    pub method: PlacementMethod,
    /// The closed-loop eigenvectors of the assigned poles in the plant's coordinates (unit
    /// columns), for a continuation; `None` where the gain is unique or there is no
    /// eigenvector basis (one input, a Jordan block, a gain given).
    pub eigenvectors: Option<Eigenvectors>,
    /// Whether a continuation followed the previous branch.
    pub branch: Branch,
    /// For requested poles that repeat: the largest distance of an achieved pole from the
    /// repeated pole it belongs to (relative, with the floor of [`pole_error_floor`]); 0 when no
    /// pole repeats. A `p`-fold pole in a Jordan block scatters by about `δ^{1/p}` for a
    /// perturbation `δ`, so this is larger than [`Placement::max_pole_error`], which compares
    /// each cluster's mean.
    pub repeated_pole_spread: f64,
}

/// Closed-loop eigenvectors of a placement, the start of a continuation.
#[derive(Debug, Clone, PartialEq)]
pub struct Eigenvectors {
    /// The pole of each column.
    pub poles: Vec<Complex64>,
    /// Unit columns.
    pub vectors: DMatrix<Complex64>,
}

/// What a continuation did ([`state_feedback_gain_continued`]).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Branch {
    /// No previous eigenvectors were used (none given, the gain is unique, or they did not fit).
    Fresh,
    /// The branch followed from the previous eigenvectors was kept. `fresh_condition` is a
    /// fresh start's `κ₂(X)` and `gain_difference` `‖K − K_fresh‖_F / ‖K_fresh‖_F`: how far this
    /// gain is from the one a fresh placement of the same poles gives (0 when the branches
    /// coincide).
    Followed { fresh_condition: f64, gain_difference: f64 },
    /// The followed branch ended (a fold): the sweeps moved an eigenvector from where the
    /// continuation started it by `drift` (`1 − |cos|` of the angle) above
    /// [`PlacementParams::branch_drift_limit`]; the gain jumps.
    Lost { drift: f64 },
    /// The followed branch's `κ₂(X)` (given) was more than
    /// [`PlacementParams::branch_condition_factor`] times a fresh start's: the fresh one is
    /// used and the gain may jump.
    Changed { followed_condition: f64 },
}

/// How a state-feedback gain was computed.
#[derive(Debug, Clone, PartialEq)]
pub enum PlacementMethod {
    /// Eigenstructure assignment (Kautsky–Nichols–Van Dooren with the Tits–Yang objective).
    Robust,
    /// One input, a pole repeated: orthogonal deflation on the controllable Hessenberg form.
    Deflation,
    /// Several inputs, a pole repeated beyond `rank B`: orthogonal deflation one eigenvector
    /// (or real invariant plane of a pair) at a time, each the admissible one needing the
    /// least gain.
    DeflationMultiInput,
    /// A gain computed elsewhere (an LQR gain), assessed as it is.
    Given,
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
    place_from(a, b, poles, params, None)
}

/// [`state_feedback_gain`] continued from a previous placement's eigenvectors (of the same
/// plant size), so that the gain follows the same branch of the robust placement as the poles
/// move: the sweeps also start from the previous eigenvectors projected onto the new
/// admissible subspaces, and that result is kept unless its `κ₂(X)` is more than
/// [`PlacementParams::branch_condition_factor`] times a fresh start's. [`Placement::branch`]
/// says which was used. With one input (the gain is unique) it is the same as a fresh placement.
///
/// # Errors
/// See [`PlacementError`].
pub fn state_feedback_gain_continued(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams, previous: &Eigenvectors) -> Result<Placement, PlacementError> {
    place_from(a, b, poles, params, Some(previous))
}

/// Eigenvectors with each column mapped by `f` (a change of coordinates), columns re-normalised.
fn map_vectors(e: &Eigenvectors, f: impl Fn(&DMatrix<Complex64>) -> DMatrix<Complex64>) -> Eigenvectors {
    let mut vectors = f(&e.vectors);
    for mut col in vectors.column_iter_mut() {
        let norm = col.norm();
        if norm > 0.0 && norm.is_finite() {
            col /= Complex64::new(norm, 0.0);
        }
    }
    Eigenvectors { poles: e.poles.clone(), vectors }
}

fn place_from(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams, start: Option<&Eigenvectors>) -> Result<Placement, PlacementError> {
    let n = a.nrows();
    let start = start.filter(|s| s.vectors.nrows() == n);
    check_conjugate_pairs(poles).map_err(|e| PlacementError::InvalidPoles { message: e.to_string() })?;
    // Controllability via the staircase.
    let m = b.ncols();
    let mut ab = DMatrix::<f64>::zeros(n, n + m);
    ab.columns_mut(0, n).copy_from(a);
    ab.columns_mut(n, m).copy_from(b);
    let scale = try_norm2(&ab, SvdParams::default())?;
    let st = staircase(a, b, params.controllability_tolerance * scale)?;
    let nc = st.dimension;
    if nc == n {
        if poles.len() != n {
            return Err(PlacementError::PoleCount { expected: n, controllable: n, found: poles.len() });
        }
        let core = assign(a, b, poles, params, start)?;
        return finish(a, b, core, poles.to_vec(), Vec::new(), Vec::new(), params.domain);
    }
    // Judged against ‖[A B]‖ some modes look unreached; judged in balanced coordinates, each
    // block against its own scale, they may only be measured in other units. The decision and
    // the placement are made there and the gain brought back: u = −K_bal D⁻¹ x.
    place_balanced(a, b, poles, params, start)
}

/// A placed core with the assigned, displaced and fixed poles.
type Partial = (Core, Vec<Complex64>, Vec<Complex64>, Vec<Complex64>);

/// The placement of a pair whose staircase `st` (of this `a`, `b`) may leave fixed modes: the
/// fixed modes must be strictly stable, each judged on its own scale; the requested poles they
/// displace are set aside; the controllable part is assigned. Returns the core (gain in these
/// coordinates), the assigned, displaced and fixed poles.
fn partial(a: &DMatrix<f64>, b: &DMatrix<f64>, st: &crate::analysis::Staircase, poles: &[Complex64], params: PlacementParams, start: Option<&Eigenvectors>) -> Result<Partial, PlacementError> {
    let (n, m) = (a.nrows(), b.ncols());
    let nc = st.dimension;
    if nc == n {
        if poles.len() != n {
            return Err(PlacementError::PoleCount { expected: n, controllable: n, found: poles.len() });
        }
        return Ok((assign(a, b, poles, params, start)?, poles.to_vec(), Vec::new(), Vec::new()));
    }
    let au = st.a.view((nc, nc), (n - nc, n - nc)).into_owned();
    let fixed = try_eigenvalues(&au)?;
    // Each fixed mode judged on its own scale (see `Domain::mode_tolerance`).
    let floor = crate::analysis::rounding_floor(params.domain, a);
    let axis_tol = |z: &Complex64| params.domain.mode_tolerance(params.controllability_tolerance, *z, floor);
    if let Some(z) = fixed.iter().rev().find(|z| !params.domain.is_strictly_stable(**z, axis_tol(z))) {
        return Err(PlacementError::UncontrollableUnstableMode { pole: *z });
    }
    let (assigned, dropped) = if poles.len() == nc {
        (poles.to_vec(), Vec::new())
    } else if poles.len() == n {
        split_for_fixed_modes(poles, &fixed).ok_or_else(|| PlacementError::FixedModesDoNotFit { fixed: fixed.clone(), controllable: nc })?
    } else {
        return Err(PlacementError::PoleCount { expected: n, controllable: nc, found: poles.len() });
    };
    let mut core = if nc == 0 {
        Core {
            gain: DMatrix::zeros(m, n),
            iterations: 0,
            converged: true,
            condition: 1.0,
            balanced_condition: 1.0,
            abs_det: 1.0,
            rank: 0,
            method: PlacementMethod::Robust,
            eigenvectors: None,
            branch: Branch::Fresh,
            closed_loop_poles: None,
        }
    } else {
        let ac = st.a.view((0, 0), (nc, nc)).into_owned();
        let bc = st.b.rows(0, nc).into_owned();
        // Staircase coordinates z = Tᵀ x; the assigned eigenvectors are [x_c; 0].
        let tt = st.transform.transpose().map(|t| Complex64::new(t, 0.0));
        let local = start.map(|s| map_vectors(s, |v| (&tt * v).rows(0, nc).into_owned()));
        let mut core = assign(&ac, &bc, &assigned, params, local.as_ref())?;
        let mut g = DMatrix::zeros(m, n);
        g.columns_mut(0, nc).copy_from(&core.gain);
        core.gain = g;
        core.closed_loop_poles = None; // those of the controllable block, not of this loop
        let t = st.transform.map(|t| Complex64::new(t, 0.0));
        core.eigenvectors = core.eigenvectors.map(|e| {
            map_vectors(&e, |v| {
                let mut full = DMatrix::<Complex64>::zeros(n, v.ncols());
                full.rows_mut(0, nc).copy_from(v);
                &t * full
            })
        });
        core
    };
    // K in these coordinates: K = [K_c 0] Tᵀ.
    core.gain = &core.gain * st.transform.transpose();
    Ok((core, assigned, dropped, fixed))
}

struct Core {
    gain: DMatrix<f64>,
    iterations: usize,
    converged: bool,
    /// `NaN` when the route has no eigenvector matrix of its own (a Jordan block): `finish`
    /// then measures it from the closed loop.
    condition: f64,
    balanced_condition: f64,
    abs_det: f64,
    rank: usize,
    method: PlacementMethod,
    /// In the coordinates `assign` was given.
    eigenvectors: Option<Eigenvectors>,
    branch: Branch,
    /// The eigenvalues of `A − B K` the route computed while choosing its gain, with the `K`
    /// they belong to (in the coordinates `assign` was given): `finish` uses them when it
    /// closes the loop with exactly that `K` on the same `A`, `B`, instead of computing them
    /// again (the same computation on the same matrix: the same values).
    closed_loop_poles: Option<(DMatrix<f64>, Vec<Complex64>)>,
}

/// The pole that repeats most often in `poles`, and how often (of a conjugate pair, the member
/// with the positive imaginary part).
pub fn most_repeated(poles: &[Complex64]) -> (Complex64, usize) {
    let mut best = (Complex64::new(0.0, 0.0), 0);
    for z in poles {
        let count = poles.iter().filter(|w| *w == z).count();
        if count > best.1 || (count == best.1 && z.im > best.0.im) {
            best = (*z, count);
        }
    }
    best
}

/// The numerical rank of `B` (singular values above `tolerance` times the largest).
fn input_rank(b: &DMatrix<f64>, tolerance: f64) -> Result<usize, PlacementError> {
    let sv = try_singular_values(b, SvdParams::default())?;
    let smax = sv.iter().fold(0.0f64, |m, s| m.max(*s));
    Ok(sv.iter().filter(|&&s| s > tolerance * smax && s > 0.0).count())
}

/// Gain for a controllable pair: eigenstructure assignment when no pole repeats more than
/// `rank B` times, the deflation of [`deflation`] otherwise.
fn assign(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams, start: Option<&Eigenvectors>) -> Result<Core, PlacementError> {
    let rank = input_rank(b, params.rank_tolerance)?;
    if rank == 0 {
        return Err(PlacementError::Numerical { message: "B has rank 0".into() });
    }
    if most_repeated(poles).1 > rank {
        deflation::assign_repeated(a, b, poles, params, rank)
    } else {
        robust::assign_robust(a, b, poles, params, start)
    }
}

fn finish(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    mut core: Core,
    mut assigned: Vec<Complex64>,
    mut not_assigned: Vec<Complex64>,
    mut fixed: Vec<Complex64>,
    domain: Domain,
) -> Result<Placement, PlacementError> {
    let closed = a - b * &core.gain;
    let mut achieved = match core.closed_loop_poles.take() {
        Some((k, poles)) if k == core.gain => poles,
        _ => try_eigenvalues(&closed)?,
    };
    sort_eigenvalues(&mut achieved);
    let mut target: Vec<Complex64> = assigned.iter().chain(fixed.iter()).cloned().collect();
    sort_eigenvalues(&mut target);
    let (max_pole_error, repeated_pole_spread) = cluster_errors(&target, &achieved, pole_error_floor(domain, a.norm()));
    if core.condition.is_nan() {
        let (condition, balanced, det) = closed_loop_conditioning(&closed, &achieved);
        core.condition = condition;
        core.balanced_condition = balanced;
        core.abs_det = det;
    }
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
        method: core.method,
        eigenvectors: core.eigenvectors,
        branch: core.branch,
        repeated_pole_spread,
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
    let Some(matches) = greedy_matching(requested, achieved) else {
        return f64::INFINITY;
    };
    matches.iter().map(|&(i, j)| (requested[i] - achieved[j]).norm() / requested[i].norm().max(floor)).fold(0.0, f64::max)
}

/// Pole errors when requested poles may repeat: `(max error, spread)`. The error of a pole
/// requested once is as in [`matching_error_with_floor`]; for a repeated pole it is the
/// distance of the mean of its matched achieved poles (well determined even for a Jordan
/// block), and the spread is the largest individual distance among repeated poles (0 when none
/// repeats). Both relative to `max(|r|, floor)`; infinite when the counts differ.
pub fn cluster_errors(requested: &[Complex64], achieved: &[Complex64], floor: f64) -> (f64, f64) {
    let Some(matches) = greedy_matching(requested, achieved) else {
        return (f64::INFINITY, f64::INFINITY);
    };
    let (mut worst, mut spread) = (0.0f64, 0.0f64);
    let mut done = vec![false; requested.len()];
    for &(i, _) in &matches {
        if done[i] {
            continue;
        }
        let r = requested[i];
        let group: Vec<usize> = matches.iter().filter(|(k, _)| requested[*k] == r).map(|(_, j)| *j).collect();
        for (k, _) in matches.iter().filter(|(k, _)| requested[*k] == r) {
            done[*k] = true;
        }
        let denom = r.norm().max(floor);
        let mean = group.iter().map(|j| achieved[*j]).sum::<Complex64>() / group.len() as f64;
        worst = worst.max((mean - r).norm() / denom);
        if group.len() > 1 {
            spread = spread.max(group.iter().map(|j| (achieved[*j] - r).norm() / denom).fold(0.0, f64::max));
        }
    }
    (worst, spread)
}

/// One-to-one matching of `requested` to `achieved`, closest pairs first; `None` when some
/// requested pole is left without a partner.
fn greedy_matching(requested: &[Complex64], achieved: &[Complex64]) -> Option<Vec<(usize, usize)>> {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::with_capacity(requested.len() * achieved.len());
    for (i, r) in requested.iter().enumerate() {
        for (j, z) in achieved.iter().enumerate() {
            pairs.push(((r - z).norm(), i, j));
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut used_r = vec![false; requested.len()];
    let mut used_a = vec![false; achieved.len()];
    let mut out = Vec::with_capacity(requested.len());
    for (_, i, j) in pairs {
        if used_r[i] || used_a[j] {
            continue;
        }
        used_r[i] = true;
        used_a[j] = true;
        out.push((i, j));
    }
    (out.len() == requested.len()).then_some(out)
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

/// Placement in the balanced coordinates `D⁻¹ A D`, `D⁻¹ B` (exact power-of-two Parlett–Reinsch
/// scaling of `A`, each input column then brought to the scale of `A` by a power of two), where
/// the rank of `B` is judged against its own norm and the blocks of `A` against theirs: the
/// fixed modes, if any, are decided there ([`partial`]). Eigenvalues are similarity invariant;
/// the gain comes back as `K = S K_s D⁻¹`.
fn place_balanced(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams, start: Option<&Eigenvectors>) -> Result<Placement, PlacementError> {
    let (n, m) = (a.nrows(), b.ncols());
    let d = crate::linalg::eigen::balancing_scale(a, 100);
    let a_bal = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
    let b_bal = DMatrix::from_fn(n, m, |i, j| b[(i, j)] / d[i]);
    let anorm = a_bal.norm().max(f64::MIN_POSITIVE);
    let s: Vec<f64> = (0..m)
        .map(|j| {
            let c = b_bal.column(j).norm();
            if c > 0.0 {
                2f64.powi((anorm / c).log2().round() as i32)
            } else {
                1.0
            }
        })
        .collect();
    let b_scaled = DMatrix::from_fn(n, m, |i, j| b_bal[(i, j)] * s[j]);
    let tol_a = params.controllability_tolerance * try_norm2(&a_bal, SvdParams::default())?;
    let tol_b = params.controllability_tolerance * try_norm2(&b_scaled, SvdParams::default())?;
    let st = crate::analysis::staircase_with(&a_bal, &b_scaled, tol_b, tol_a)?;
    // Balanced coordinates x_bal = D⁻¹ x.
    let local = start.map(|e| map_vectors(e, |v| DMatrix::from_fn(n, v.ncols(), |i, j| v[(i, j)] / d[i])));
    let (core, assigned, dropped, fixed) = partial(&a_bal, &b_scaled, &st, poles, params, local.as_ref())?;
    // u = −K_s x_bal with B_scaled = B_bal S: the input is S u_s, so K_bal = S K_s; then K = K_bal D⁻¹.
    let gain = DMatrix::from_fn(m, n, |i, j| s[i] * core.gain[(i, j)] / d[j]);
    let eigenvectors = core.eigenvectors.as_ref().map(|e| map_vectors(e, |v| DMatrix::from_fn(n, v.ncols(), |i, j| v[(i, j)] * d[i])));
    let core = Core { gain, eigenvectors, closed_loop_poles: None, ..core };
    finish(a, b, core, assigned, dropped, fixed, params.domain)
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
    let mut achieved = try_eigenvalues(&closed)?;
    sort_eigenvalues(&mut achieved);
    let (condition, balanced, det) = closed_loop_conditioning(&closed, &achieved);
    let rank = input_rank(b, params.rank_tolerance)?;
    let mut target = requested.to_vec();
    sort_eigenvalues(&mut target);
    let (max_pole_error, repeated_pole_spread) = cluster_errors(&target, &achieved, pole_error_floor(params.domain, a.norm()));
    Ok(Placement {
        gain: gain.clone(),
        max_pole_error,
        achieved_poles: achieved,
        assigned_poles: target,
        not_assigned: Vec::new(),
        fixed_modes: Vec::new(),
        eigenvector_condition: condition,
        balanced_eigenvector_condition: balanced,
        abs_det_x: det,
        gain_norm: try_norm2(gain, SvdParams::default())?,
        iterations: 0,
        converged: true,
        input_rank: rank,
        method: PlacementMethod::Given,
        eigenvectors: None,
        branch: Branch::Fresh,
        repeated_pole_spread,
    })
}

#[cfg(test)]
#[path = "../tests/place.rs"]
mod tests;

/// `(κ₂(X), balanced κ₂, |det X|)` of unit-column eigenvectors of `closed` at the eigenvalues
/// `achieved`, found by inverse iteration (three steps from a fixed start, the shift moved off
/// the eigenvalue by `√ε · ‖closed‖`; Golub & Van Loan, *Matrix Computations*, 4th ed., 2013,
/// §7.6.1; from memory). A repeated eigenvalue with one eigenvector (a Jordan block) gives
/// nearly parallel columns and so a large condition number, as it should. `O(n³)` per
/// eigenvalue.
fn closed_loop_conditioning(closed: &DMatrix<f64>, achieved: &[Complex64]) -> (f64, f64, f64) {
    let n = closed.nrows();
    let scale = closed.norm().max(f64::MIN_POSITIVE);
    let cc = to_complex(closed);
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
    let balanced = balanced_condition(closed, &x).unwrap_or(f64::INFINITY);
    (condition, balanced, abs_det(&x))
}
