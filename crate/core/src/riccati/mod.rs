//! Algebraic Riccati equations and linear-quadratic regulator (LQR) gains.
//!
//! # Equations
//! For the plant `x' = A x + B u` (continuous) or `x[k+1] = A x[k] + B u[k]` (discrete),
//! state weight `Q = Qᵀ ⪰ 0` (`n × n`) and input weight `R = Rᵀ ≻ 0` (`m × m`), the
//! stabilising solution `X = Xᵀ ⪰ 0` of
//!
//! - the continuous algebraic Riccati equation (CARE)
//!   `Aᵀ X + X A − X B R⁻¹ Bᵀ X + Q = 0`, with `A − B K` stable (`Re λ < 0`) for
//!   `K = R⁻¹ Bᵀ X`;
//! - the discrete algebraic Riccati equation (DARE)
//!   `Aᵀ X A − X − Aᵀ X B (R + Bᵀ X B)⁻¹ Bᵀ X A + Q = 0`, with `A − B K` stable (`|λ| < 1`) for
//!   `K = (R + Bᵀ X B)⁻¹ Bᵀ X A`.
//!
//! `u = −K x` minimises `∫ xᵀQx + uᵀRu dt` (or the sum `Σ xᵀQx + uᵀRu`): the LQR gain
//! ([`lqr_gain`], [`discrete_lqr_gain`]). Throughout, `G = B R⁻¹ Bᵀ`, formed as `B̂ B̂ᵀ` with
//! `B̂ = B L⁻ᵀ` and `R = L Lᵀ` (Cholesky), so that `G` is exactly symmetric.
//!
//! A stabilising solution exists (and is unique) iff `(A, B)` is stabilisable and `(A, Q^{1/2})`
//! has no unobservable mode on the stability boundary (imaginary axis, unit circle); both hold
//! when `(A, Q^{1/2})` is detectable (common practice; e.g. Lancaster & Rodman, *Algebraic
//! Riccati Equations*, 1995, from memory).
//!
//! # Accuracy measure
//! The **normalised residual** reported with every solution is
//!
//! - continuous: `‖Aᵀ X + X A − X G X + Q‖_F / (‖Q‖_F + 2‖Aᵀ X‖_F + ‖X G X‖_F)`;
//! - discrete: `‖Aᵀ X A − X − Aᵀ X B S⁻¹ Bᵀ X A + Q‖_F /
//!   (‖Q‖_F + ‖Aᵀ X A‖_F + ‖X‖_F + ‖Aᵀ X B S⁻¹ Bᵀ X A‖_F)` with `S = R + Bᵀ X B`,
//!
//! i.e. the residual relative to the sum of the magnitudes of the terms it is made of, so a
//! value near `n ε` (ε = 2.2e-16) means `X` solves the equation to rounding level
//! ([`continuous_riccati_residual`], [`discrete_riccati_residual`]). `X G X` is evaluated as
//! `P Pᵀ` with `P = X B̂`, and `Aᵀ X B S⁻¹ Bᵀ X A` as `Nᵀ S⁻¹ N` with `N = Bᵀ X A`, never through
//! an explicitly formed `G`: the rounding error of `G`, multiplied by `X` on both sides, would
//! put a floor near `ε ‖X‖² ‖G‖` under the computed residual, which for ill-conditioned
//! solutions lies orders of magnitude above the true residual.
//!
//! # Method
//! Both solvers first scale the unknown: `X = s X̃` with `s` the power of two nearest to
//! `√(‖Q‖_F / ‖G‖_F)`, so that the scaled equation has `G̃ = s G` and `Q̃ = Q / s` of equal
//! norm (the diagonal similarity `H̃ = diag(I, s I)⁻¹ H diag(I, s I)`, which keeps `H`
//! Hamiltonian; powers of two add no rounding error). It equalises the two off-diagonal blocks of the Hamiltonian, which
//! matters when `‖Q‖` and `‖G‖` differ by many orders of magnitude. No further balancing is
//! applied: the Newton refinement below removes what an unbalanced start leaves
//! (Parlett–Reinsch balancing of the closed loop inside the Lyapunov solves was tried and
//! changed no outcome on the fixtures or on random plants up to `n = 50`).
//!
//! **Continuous** (`solve_continuous_riccati`):
//! 1. Matrix sign function of the Hamiltonian `H = [[A, −G̃], [−Q̃, −Aᵀ]]` by the scaled Newton
//!    iteration `Z ← (c Z + (c Z)⁻¹)/2`, `c = |det Z|^{−1/(2n)}` (determinant scaling; Byers,
//!    "Solving the algebraic Riccati equation with the matrix sign function", Linear Algebra
//!    Appl. 85:267–279, 1987; Kenney & Laub, "The matrix sign function", IEEE TAC 40(8):
//!    1330–1348, 1995, from memory). It is run on the symmetric matrix `Y = J Z` (`J = [[0, I], [−I, 0]]`),
//!    `Y ← (c Y + J Y⁻¹ J / c)/2`, re-symmetrised every step, which keeps the iterate exactly
//!    Hamiltonian (Byers 1987). Scaling stops once the relative change falls below
//!    [`RiccatiParams::scaling_cutoff`] so the last steps converge quadratically. The iteration
//!    stops when `‖Z_{k+1} − Z_k‖_F ≤ tol ‖Z_k‖_F` ([`RiccatiParams::convergence_tolerance`]), or
//!    when, below [`RiccatiParams::stagnation_level`], the change no longer halves (rounding
//!    level reached).
//! 2. With `W = sign(H)`, the stable invariant subspace `[I; X̃]` is the null space of `W + I`:
//!    `X̃` is the least-squares solution (Householder QR) of
//!    `[W₁₂; W₂₂ + I] X̃ = −[W₁₁ + I; W₂₁]`, symmetrised, and `X = s X̃`.
//! 3. Newton–Kleinman refinement on the unscaled data (Kleinman, "On an iterative technique
//!    for Riccati equation computations", IEEE TAC 13(1):114–115, 1968), in correction form:
//!    with `F = A − G X` and the residual `𝓡(X)`, solve the Lyapunov equation
//!    `Fᵀ Δ + Δ F + 𝓡(X) = 0` and set `X ← X + Δ`. This is algebraically Kleinman's step
//!    `Fᵀ X₊ + X₊ F + Q + Kᵀ R K = 0` (subtract `Fᵀ X + X F` from it), but it computes a small
//!    correction, so rounding errors in the Lyapunov solve scale with `‖𝓡(X)‖`, not `‖X‖`.
//!    Refinement stops as soon as the normalised residual no longer decreases (the best `X` is
//!    kept), or after [`RiccatiParams::max_refinement_steps`].
//!
//! **Discrete** (`solve_discrete_riccati`):
//! 1. The structure-preserving doubling algorithm (SDA; Chu, Fan, Lin & Wang,
//!    "Structure-preserving algorithms for periodic discrete-time algebraic Riccati equations",
//!    Int. J. Control 77(8):767–788, 2004): `A₀ = A`, `G₀ = G̃`, `H₀ = Q̃`,
//!    `A_{k+1} = A_k (I + G_k H_k)⁻¹ A_k`, `G_{k+1} = G_k + A_k (I + G_k H_k)⁻¹ G_k A_kᵀ`,
//!    `H_{k+1} = H_k + A_kᵀ H_k (I + G_k H_k)⁻¹ A_k`; `H_k → X̃` quadratically (the error
//!    decays like `ρ(A − B K)^{2^k}`). `I + G_k H_k` is invertible because `G_k, H_k ⪰ 0`.
//!    Stopping as for the sign function, on the relative change of `H_k`, and only once
//!    `‖A_k‖_F ≤ 1e-4 ‖A‖_F` (`A_k → 0` exactly when `H_k` tends to the stabilising solution).
//!    The SDA cannot find the stabilising solution when `(A, Q^{1/2})` has an unobservable
//!    unstable mode (started from `H₀ = 0` on that mode it stays at the non-stabilising
//!    solution while `A_k` grows). When the doubling fails and the diagnosis below finds the
//!    problem well posed, it is rerun once with `Q̃ + δ I`, `δ = 1e-6 max(‖Q̃‖_F, ‖G̃‖_F)`
//!    ([`RiccatiParams::doubling_shift`]),
//!    whose limit stabilises the loop; the refinement on the unshifted data then removes the
//!    `O(δ)` error quadratically.
//! 2. Newton refinement (Hewer, "An iterative technique for the computation of the steady
//!    state gains for the discrete optimal regulator", IEEE TAC 16(4):382–384, 1971, from memory), in
//!    correction form: with `F = A − B K(X)`, solve the Stein equation `Fᵀ Δ F − Δ + 𝓡(X) = 0`
//!    and set `X ← X + Δ`; same stopping rule as above.
//!
//! **Lyapunov and Stein equations** (inside the refinement; also public as
//! [`solve_continuous_lyapunov`] and [`solve_discrete_lyapunov`]). There is no Schur-vector
//! routine in Polewright, so the Bartels–Stewart method is not available. Chosen instead:
//! - `Fᵀ X + X F + M = 0` for stable `F`: the sign function of `[[Fᵀ, −M], [0, −F]]`, whose
//!   upper-right block is `−2X` (Roberts, "Linear model reduction and solution of the algebraic
//!   Riccati equation by use of the sign function", Int. J. Control 32(4):677–687, 1980, from
//!   memory). The block structure is kept: `E ← (c E + (c E)⁻¹)/2`,
//!   `M ← (c M + E⁻¹ M E⁻ᵀ / c)/2` with `E₀ = Fᵀ`, `c = |det E|^{−1/n}`, and `X = M_∞ / 2`;
//!   `E_∞ = −I` is checked (otherwise `F` was not stable: [`RiccatiError::NotStable`]).
//!   About `6 n³` flops per step, typically 6–15 steps.
//! - `Fᵀ X F − X + M = 0` for `ρ(F) < 1`: the squared Smith iteration
//!   `X ← X + Pᵀ X P`, `P ← P²` (`X₀ = M`, `P₀ = F`), which sums
//!   `Σ_k (Fᵀ)^k M F^k` in doubling blocks (Smith, "Matrix equation XA + BX = C", SIAM J. Appl.
//!   Math. 16(1):198–201, 1968, from memory). `4 n³` flops per step; stops when
//!   `‖P‖_F² ≤ tol`, after about `log₂(log ε / log ρ(F))` steps.
//!
//! The Kronecker form `(I ⊗ Fᵀ + Fᵀ ⊗ I) vec X = −vec M` was rejected: `O(n⁶)` flops and
//! `O(n⁴)` memory (already 6·10⁸ flops at `n = 30`), against `O(n³)` per step here. The
//! accuracy needed inside Newton's method is modest: a relative error `δ` in the correction `Δ`
//! only multiplies the next residual by about `δ`.
//!
//! # Cost
//! Continuous: about `16 n³` flops per sign step (inverse of a `2n × 2n` matrix) for 2–12
//! steps on the fixtures, `O(n³)` for the least-squares solve, then 1–6 refinement steps of
//! one Lyapunov solve (about 9 sign steps) each: roughly `200–600 n³` flops overall.
//! Discrete: about `10 n³` per doubling step (one LU, four products) for 2–25 steps plus 1–6
//! Stein solves of about 9 squarings each. One `O(n³)` eigenvalue
//! computation of `A − B K` for the closed-loop poles.
//!
//! # Failure modes
//! Every iteration is capped and returns an error instead of looping:
//! [`RiccatiError::NoConvergence`] / [`RiccatiError::SingularMatrix`] name the stage. Before
//! either is returned, the failure is diagnosed with PBH tests (Hautus, "Controllability and observability
//! conditions of linear autonomous systems", Proc. KNAW A 72, 1969, from memory; common
//! practice):
//! an unstable or boundary mode `λ` of `A` with `σ_min([A − λI, B]) ≤ tol ‖[A B]‖₂` gives
//! [`RiccatiError::NotStabilizable`]; a boundary mode with `σ_min([A − λI; Q]) ≤ tol ‖[A; Q]‖₂`
//! (the Hamiltonian, or the symplectic pencil, then has eigenvalues on the boundary, where the
//! sign function is undefined and the doubling does not converge) gives
//! [`RiccatiError::NotDetectable`]. The same diagnosis runs when an iteration "converges" but
//! the closed loop is not stable. Input errors: shapes, non-finite entries, `Q` or `R` not
//! symmetric, `Q` not positive semidefinite, `R` not positive definite. Near-unstabilisable or
//! near-undetectable problems are ill conditioned: they are solved if possible, and the
//! reported residual tells how well; a stabilising solution whose residual stays above
//! [`RiccatiParams::max_residual`] is refused with [`RiccatiError::InaccurateSolution`].
//! Known limit: the sign-function Lyapunov solve fails for extremely non-normal closed loops
//! (`‖K‖` ~ 1e7 and `‖X‖` ≥ 1e11, e.g. random single-input plants with `n ≥ 25`, where the
//! condition estimate of `X` exceeds 1e18); the refinement then cannot start and such
//! problems end in that error (scipy's residuals there are 1e-4 to 1).

// `!(x < bound)` is deliberate throughout: a NaN must count as a failure.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::eigen::{try_eigenvalues, EigenError};
use crate::linalg::svd::{try_norm2, try_singular_values, SvdError, SvdParams};

mod solvers;
use solvers::*;

/// Tuning constants of the Riccati and Lyapunov solvers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RiccatiParams {
    /// Largest number of Newton steps of the Hamiltonian sign function. Default 100
    /// (the fixtures need 2–12; the count grows with `log₂` of the spread of the
    /// Hamiltonian's eigenvalues).
    pub max_sign_iterations: usize,
    /// Largest number of doubling steps of the SDA. Default 100 (each step squares the
    /// contraction factor; the fixtures need 2–25).
    pub max_doubling_iterations: usize,
    /// Largest number of steps of one Lyapunov or Stein solve. Default 100.
    pub max_lyapunov_iterations: usize,
    /// Largest number of Newton refinement steps. Default 20 (the fixtures need 1–6).
    pub max_refinement_steps: usize,
    /// Relative change `‖Z_{k+1} − Z_k‖_F / ‖Z_k‖_F` that ends an iteration. Default `1e-13`.
    pub convergence_tolerance: f64,
    /// Below this relative change an iteration that no longer halves its change has reached
    /// rounding level and counts as converged. Default `1e-8` (the refinement then restores
    /// full accuracy).
    pub stagnation_level: f64,
    /// Relative change below which determinant scaling is switched off. Default `1e-2`.
    pub scaling_cutoff: f64,
    /// Largest accepted `max |Mᵢⱼ − Mⱼᵢ| / max |Mᵢⱼ|` for `Q` and `R` (which are then
    /// symmetrised). Default `1e-10`.
    pub symmetry_tolerance: f64,
    /// `Q` counts as positive semidefinite if `Q + δ I` has a Cholesky factor,
    /// `δ = semidefinite_tolerance · ‖Q‖_F`. Default `1e-10`.
    pub semidefinite_tolerance: f64,
    /// `R` counts as positive definite if `R − δ I` has a Cholesky factor,
    /// `δ = definite_tolerance · ‖R‖_F`. Default `1e-14`.
    pub definite_tolerance: f64,
    /// Relative PBH margin at or below which a mode is called uncontrollable (unobservable)
    /// when a failure is diagnosed; also the relative distance (to `max(1, ‖A‖₂)`, or to 1 on
    /// the unit circle) within which a mode counts as on the stability boundary. Default
    /// `1e-6`: loose, because it only explains a failure that already happened, and
    /// eigenvalues of Jordan blocks are only accurate to about `√ε`.
    pub diagnosis_tolerance: f64,
    /// Largest normalised residual accepted in a returned solution; above it the solve fails
    /// with [`RiccatiError::InaccurateSolution`]. Default `1e-8` (about `√ε`: beyond it fewer
    /// than half the digits of `X` can be trusted even for a well-conditioned problem). Set it
    /// to `f64::INFINITY` to accept whatever the solver reaches.
    pub max_residual: f64,
    /// Relative size `δ / max(‖Q̃‖_F, ‖G̃‖_F)` of the shift `δ I` added to `Q̃` when the plain
    /// doubling fails on a problem that the diagnosis finds well posed (an unobservable
    /// unstable mode: the stabilising solution exists but the SDA started from `H₀ = Q̃`
    /// cannot reach it). Default `1e-6`; the refinement on the unshifted data then removes the
    /// `O(δ)` error quadratically (two or three steps).
    pub doubling_shift: f64,
}

impl Default for RiccatiParams {
    fn default() -> Self {
        RiccatiParams {
            max_sign_iterations: 100,
            max_doubling_iterations: 100,
            max_lyapunov_iterations: 100,
            max_refinement_steps: 20,
            convergence_tolerance: 1e-13,
            stagnation_level: 1e-8,
            scaling_cutoff: 1e-2,
            symmetry_tolerance: 1e-10,
            semidefinite_tolerance: 1e-10,
            definite_tolerance: 1e-14,
            diagnosis_tolerance: 1e-6,
            max_residual: 1e-8,
            doubling_shift: 1e-6,
        }
    }
}

/// Which input matrix an error is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RiccatiInput {
    /// `A` (`n × n`).
    StateMatrix,
    /// `B` (`n × m`).
    InputMatrix,
    /// `Q` (`n × n`).
    StateWeight,
    /// `R` (`m × m`).
    InputWeight,
    /// `F` of a Lyapunov or Stein equation.
    LyapunovCoefficient,
    /// `M` of a Lyapunov or Stein equation.
    LyapunovConstant,
}

impl RiccatiInput {
    fn describe(self) -> &'static str {
        match self {
            RiccatiInput::StateMatrix => "the state matrix A",
            RiccatiInput::InputMatrix => "the input matrix B",
            RiccatiInput::StateWeight => "the state weight Q",
            RiccatiInput::InputWeight => "the input weight R",
            RiccatiInput::LyapunovCoefficient => "the Lyapunov coefficient F",
            RiccatiInput::LyapunovConstant => "the Lyapunov constant term M",
        }
    }
}

/// The stage of a solver that failed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SolverStage {
    /// Newton iteration for the sign function of the Hamiltonian.
    SignFunction,
    /// Least-squares solve for `X` from the sign function.
    StableSubspace,
    /// Structure-preserving doubling.
    Doubling,
    /// A Lyapunov (continuous) or Stein (discrete) solve.
    Lyapunov,
    /// Forming the gain (`R + Bᵀ X B` singular).
    Gain,
}

impl SolverStage {
    fn describe(self) -> &'static str {
        match self {
            SolverStage::SignFunction => "the matrix sign function of the Hamiltonian",
            SolverStage::StableSubspace => "the least-squares solve for the stable subspace",
            SolverStage::Doubling => "the structure-preserving doubling iteration",
            SolverStage::Lyapunov => "the Lyapunov (Stein) equation solve",
            SolverStage::Gain => "forming the feedback gain",
        }
    }
}

/// Which list of bounds of Bryson's rule an error is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BoundKind {
    /// Largest acceptable state deviations.
    State,
    /// Largest acceptable inputs.
    Input,
}

/// What went wrong solving a Riccati (or Lyapunov) equation.
#[derive(Debug, Clone, PartialEq)]
pub enum RiccatiError {
    /// A matrix has the wrong shape.
    DimensionMismatch { matrix: RiccatiInput, expected: (usize, usize), found: (usize, usize) },
    /// No states or no inputs (or an empty list of bounds).
    Empty,
    /// A matrix has a NaN or infinite entry.
    NotFinite { matrix: RiccatiInput },
    /// `Q` or `R` is not symmetric within [`RiccatiParams::symmetry_tolerance`].
    NotSymmetric { matrix: RiccatiInput, relative_asymmetry: f64 },
    /// `Q` has a negative eigenvalue beyond [`RiccatiParams::semidefinite_tolerance`] and no
    /// stabilising solution was found with it (one that exists is used, see
    /// [`LqrDesign::state_weight_smallest_eigenvalue`]). `smallest` is that eigenvalue and
    /// `relative` it divided by `‖Q‖₂`; `cause` what the solver met.
    StateWeightNotSemidefinite { smallest: f64, relative: f64, cause: String },
    /// `R` is not positive definite (within [`RiccatiParams::definite_tolerance`]).
    InputWeightNotPositiveDefinite,
    /// The mode `mode` of `A` is unstable (or on the boundary) and not reachable from the
    /// input: no feedback can stabilise it. `margin` is `σ_min([A − λI, B]) / ‖[A B]‖₂`.
    NotStabilizable { mode: Complex64, margin: f64 },
    /// The mode `mode` of `A` lies on the stability boundary and is invisible in `Q`
    /// (`margin = σ_min([A − λI; Q]) / ‖[A; Q]‖₂`): the Hamiltonian (symplectic pencil) has
    /// eigenvalues on the boundary and no stabilising solution exists. Weight that mode in `Q`.
    NotDetectable { mode: Complex64, margin: f64 },
    /// The coefficient of a Lyapunov (Stein) equation is not stable.
    NotStable,
    /// An iteration hit its cap.
    NoConvergence { stage: SolverStage, iterations: usize },
    /// A matrix that must be inverted was singular (or the iterate overflowed).
    SingularMatrix { stage: SolverStage },
    /// The computed solution does not stabilise the loop and no cause was found; `pole` is the
    /// least stable closed-loop pole.
    NotStabilizing { pole: Complex64 },
    /// The best solution found stabilises the loop but its normalised residual exceeds
    /// [`RiccatiParams::max_residual`]: the problem is too ill conditioned for double precision.
    InaccurateSolution { residual: f64, limit: f64 },
    /// A bound of Bryson's rule is not a positive finite number.
    NonPositiveBound { kind: BoundKind, index: usize, value: f64 },
    /// The eigenvalue computation failed.
    Eigen(EigenError),
    /// A singular value computation failed.
    Svd(SvdError),
}

impl std::fmt::Display for RiccatiError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RiccatiError::DimensionMismatch { matrix, expected, found } => write!(f, "{} must be {}×{}, got {}×{}", matrix.describe(), expected.0, expected.1, found.0, found.1),
            RiccatiError::Empty => write!(f, "the problem needs at least one state and one input"),
            RiccatiError::NotFinite { matrix } => {
                write!(f, "{} has an entry that is not a finite number", matrix.describe())
            }
            RiccatiError::NotSymmetric { matrix, relative_asymmetry } => write!(f, "{} must be symmetric (relative asymmetry {relative_asymmetry:.3e}); use (M + Mᵀ)/2", matrix.describe()),
            RiccatiError::StateWeightNotSemidefinite { smallest, relative, cause } => {
                let short = |v: f64| crate::poles::format_complex(Complex64::new(format!("{v:.4e}").parse().unwrap_or(v), 0.0));
                write!(
                    f,
                    "the state weight Q is not positive semidefinite (smallest eigenvalue {}, {} times ‖Q‖₂) \
                     and no stabilising solution exists with it ({cause}); make Q positive semidefinite, \
                     e.g. add {} to its diagonal, or use a weight of the form CᵀC or a non-negative diagonal",
                    short(*smallest),
                    short(*relative),
                    short(-*smallest)
                )
            }
            RiccatiError::InputWeightNotPositiveDefinite => write!(f, "the input weight R must be positive definite (every input needs a positive cost)"),
            RiccatiError::NotStabilizable { mode, margin } => write!(
                f,
                "the plant is not stabilisable: the mode {} is not stable and cannot be moved \
                 by the inputs (PBH margin {margin:.2e}); add an actuator that reaches it",
                format_complex(*mode)
            ),
            RiccatiError::NotDetectable { mode, margin } => write!(
                f,
                "no stabilising solution: the mode {} lies on the stability boundary and is not \
                 penalised by Q (PBH margin {margin:.2e}); give it weight in Q",
                format_complex(*mode)
            ),
            RiccatiError::NotStable => write!(f, "the Lyapunov equation's coefficient matrix is not stable"),
            RiccatiError::NoConvergence { stage, iterations } => write!(
                f,
                "{} did not converge within {iterations} iterations (the problem may be \
                 ill conditioned: nearly unstabilisable, or a weakly penalised mode near the \
                 stability boundary)",
                stage.describe()
            ),
            RiccatiError::SingularMatrix { stage } => {
                write!(f, "{} met a singular matrix", stage.describe())
            }
            RiccatiError::NotStabilizing { pole } => write!(f, "the computed Riccati solution does not stabilise the loop (closed-loop pole {})", format_complex(*pole)),
            RiccatiError::InaccurateSolution { residual, limit } => write!(
                f,
                "the Riccati solution is inaccurate (normalised residual {residual:.1e}, accepted \
                 up to {limit:.0e}): the problem is extremely ill conditioned (a nearly \
                 uncontrollable or nearly invisible mode, or weights spanning many orders of \
                 magnitude); rescale the states and inputs or change the weights"
            ),
            RiccatiError::NonPositiveBound { kind, index, value } => write!(
                f,
                "Bryson's rule needs positive finite bounds: {} bound {} is {value}",
                match kind {
                    BoundKind::State => "state",
                    BoundKind::Input => "input",
                },
                index + 1
            ),
            RiccatiError::Eigen(e) => write!(f, "Riccati solver: {e}"),
            RiccatiError::Svd(e) => write!(f, "Riccati solver: {e}"),
        }
    }
}

impl std::error::Error for RiccatiError {}

impl From<EigenError> for RiccatiError {
    fn from(e: EigenError) -> Self {
        RiccatiError::Eigen(e)
    }
}

impl From<SvdError> for RiccatiError {
    fn from(e: SvdError) -> Self {
        RiccatiError::Svd(e)
    }
}

fn format_complex(z: Complex64) -> String {
    if z.im == 0.0 {
        format!("{:.6}", z.re)
    } else {
        format!("{:.6} {} {:.6}i", z.re, if z.im < 0.0 { "−" } else { "+" }, z.im.abs())
    }
}

/// Iteration counts of one solve.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct IterationCounts {
    /// Steps of the initial solver (sign-function Newton steps, or doubling steps of the
    /// successful attempt).
    pub initial: usize,
    /// Newton refinement steps taken (each one Lyapunov or Stein solve), including a final
    /// rejected one that did not lower the residual.
    pub refinement: usize,
    /// Total inner steps of all Lyapunov (Stein) solves.
    pub lyapunov: usize,
}

/// The stabilising solution of an algebraic Riccati equation.
#[derive(Debug, Clone)]
pub struct RiccatiSolution {
    /// `X` (symmetric).
    pub solution: DMatrix<f64>,
    /// The normalised residual of `X` (see the module documentation).
    pub residual: f64,
    /// The normalised residual of the initial (sign-function or doubling) solution, before
    /// refinement.
    pub initial_residual: f64,
    pub iterations: IterationCounts,
}

/// An LQR design: `u = −K x`.
#[derive(Debug, Clone)]
pub struct LqrDesign {
    /// `K` (`m × n`): `R⁻¹ Bᵀ X` (continuous) or `(R + Bᵀ X B)⁻¹ Bᵀ X A` (discrete).
    pub gain: DMatrix<f64>,
    /// The stabilising Riccati solution `X`.
    pub riccati_solution: DMatrix<f64>,
    /// The normalised residual of `X`.
    pub residual: f64,
    /// Eigenvalues of `A − B K`, from [`try_eigenvalues`], sorted.
    pub closed_loop_poles: Vec<Complex64>,
    pub iterations: IterationCounts,
    /// `Some(λ_min(Q))` (negative) when `Q` is not positive semidefinite but the stabilising
    /// solution exists and is used: the cost is then not a sum of squares, and the guaranteed
    /// margins of LQR do not apply.
    pub state_weight_smallest_eigenvalue: Option<f64>,
}

// ----------------------------------------------------------------------------
// public entry points
// ----------------------------------------------------------------------------

/// The stabilising solution of `Aᵀ X + X A − X B R⁻¹ Bᵀ X + Q = 0`.
///
/// # Errors
/// See [`RiccatiError`]: input checks, [`RiccatiError::NotStabilizable`],
/// [`RiccatiError::NotDetectable`], or a capped iteration.
pub fn solve_continuous_riccati(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, params: RiccatiParams) -> Result<RiccatiSolution, RiccatiError> {
    let data = Problem::new(a, b, q, r, params)?;
    continuous_core(&data, params).map(|(s, _, _)| s).map_err(|e| data.explain(e))
}

/// The stabilising solution of `Aᵀ X A − X − Aᵀ X B (R + Bᵀ X B)⁻¹ Bᵀ X A + Q = 0`.
///
/// # Errors
/// As [`solve_continuous_riccati`].
pub fn solve_discrete_riccati(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, params: RiccatiParams) -> Result<RiccatiSolution, RiccatiError> {
    let data = Problem::new(a, b, q, r, params)?;
    discrete_core(&data, params).map(|(s, _, _)| s).map_err(|e| data.explain(e))
}

/// The continuous-time LQR gain with default parameters. See [`lqr_gain_with`].
///
/// # Errors
/// See [`RiccatiError`].
pub fn lqr_gain(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>) -> Result<LqrDesign, RiccatiError> {
    lqr_gain_with(a, b, q, r, RiccatiParams::default())
}

/// The continuous-time LQR gain `K = R⁻¹ Bᵀ X` (`u = −K x`) for `x' = A x + B u`.
///
/// # Errors
/// See [`RiccatiError`].
pub fn lqr_gain_with(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, params: RiccatiParams) -> Result<LqrDesign, RiccatiError> {
    let data = Problem::new(a, b, q, r, params)?;
    let (s, gain, poles) = continuous_core(&data, params).map_err(|e| data.explain(e))?;
    Ok(LqrDesign { gain, riccati_solution: s.solution, residual: s.residual, closed_loop_poles: poles, iterations: s.iterations, state_weight_smallest_eigenvalue: data.indefinite })
}

/// The discrete-time LQR gain with default parameters. See [`discrete_lqr_gain_with`].
///
/// # Errors
/// See [`RiccatiError`].
pub fn discrete_lqr_gain(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>) -> Result<LqrDesign, RiccatiError> {
    discrete_lqr_gain_with(a, b, q, r, RiccatiParams::default())
}

/// The discrete-time LQR gain `K = (R + Bᵀ X B)⁻¹ Bᵀ X A` (`u[k] = −K x[k]`) for
/// `x[k+1] = A x[k] + B u[k]`.
///
/// # Errors
/// See [`RiccatiError`].
pub fn discrete_lqr_gain_with(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, params: RiccatiParams) -> Result<LqrDesign, RiccatiError> {
    let data = Problem::new(a, b, q, r, params)?;
    let (s, gain, poles) = discrete_core(&data, params).map_err(|e| data.explain(e))?;
    Ok(LqrDesign { gain, riccati_solution: s.solution, residual: s.residual, closed_loop_poles: poles, iterations: s.iterations, state_weight_smallest_eigenvalue: data.indefinite })
}

/// LQR with the cross weight `S` of `2 xᵀ S u`: substituting `u = v − R⁻¹ Sᵀ x` gives the
/// standard problem of `A − B R⁻¹ Sᵀ` with `Q − S R⁻¹ Sᵀ` (the Schur complement, positive
/// semidefinite when the joint weight `[[Q, S], [Sᵀ, R]]` is), whose Riccati solution `X` is the
/// one of the original problem (e.g. Anderson & Moore, *Optimal Control: Linear Quadratic
/// Methods*, 1990, §2.4; from memory). The gain is then the original one:
/// `K = R⁻¹ (Bᵀ X + Sᵀ)`, or `(R + Bᵀ X B)⁻¹ (Bᵀ X A + Sᵀ)` when digital, and the closed-loop
/// poles are those of `A − B K`.
///
/// # Errors
/// As [`lqr_gain`] for the transformed problem; [`RiccatiError::SingularMatrix`] when `R` (or
/// `R + Bᵀ X B`) cannot be solved with.
pub fn lqr_gain_with_cross_weight(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, sw: &DMatrix<f64>, digital: bool) -> Result<LqrDesign, RiccatiError> {
    let singular = || RiccatiError::SingularMatrix { stage: SolverStage::Gain };
    let rinv_st = r.clone().lu().solve(&sw.transpose()).ok_or_else(singular)?;
    let a2 = a - b * &rinv_st;
    let q2 = q - sw * &rinv_st;
    let q2 = (&q2 + q2.transpose()) * 0.5;
    let base = if digital { discrete_lqr_gain(&a2, b, &q2, r)? } else { lqr_gain(&a2, b, &q2, r)? };
    let x = &base.riccati_solution;
    let gain = if digital {
        (r + b.transpose() * x * b).lu().solve(&(b.transpose() * x * a + sw.transpose())).ok_or_else(singular)?
    } else {
        r.clone().lu().solve(&(b.transpose() * x + sw.transpose())).ok_or_else(singular)?
    };
    let mut poles = crate::linalg::eigen::try_eigenvalues(&(a - b * &gain)).map_err(RiccatiError::Eigen)?;
    crate::linalg::eigen::sort_eigenvalues(&mut poles);
    Ok(LqrDesign { gain, closed_loop_poles: poles, ..base })
}

/// Bryson's rule (Bryson & Ho, *Applied Optimal Control*, 1975, from memory): diagonal weights
/// `Q = diag(1/x_max,i²)`, `R = diag(1/u_max,j²)` from the largest acceptable state deviations
/// and inputs, so that each term of the cost is 1 at its limit.
///
/// # Errors
/// [`RiccatiError::Empty`] for an empty list, [`RiccatiError::NonPositiveBound`] for a bound
/// that is not a positive finite number (or whose inverse square is not finite).
pub fn bryson_weights(max_state: &[f64], max_input: &[f64]) -> Result<(DMatrix<f64>, DMatrix<f64>), RiccatiError> {
    if max_state.is_empty() || max_input.is_empty() {
        return Err(RiccatiError::Empty);
    }
    let weights = |bounds: &[f64], kind: BoundKind| -> Result<DMatrix<f64>, RiccatiError> {
        let mut diag = Vec::with_capacity(bounds.len());
        for (index, &value) in bounds.iter().enumerate() {
            let w = 1.0 / (value * value);
            if !(value.is_finite() && value > 0.0 && w.is_finite() && w > 0.0) {
                return Err(RiccatiError::NonPositiveBound { kind, index, value });
            }
            diag.push(w);
        }
        Ok(DMatrix::from_diagonal(&nalgebra::DVector::from_vec(diag)))
    };
    Ok((weights(max_state, BoundKind::State)?, weights(max_input, BoundKind::Input)?))
}

/// The normalised residual of `X` for the continuous equation (see the module documentation).
///
/// # Errors
/// Input checks as for [`solve_continuous_riccati`], plus a shape check of `x`.
pub fn continuous_riccati_residual(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, x: &DMatrix<f64>) -> Result<f64, RiccatiError> {
    let data = Problem::new(a, b, q, r, RiccatiParams::default())?;
    check_solution_shape(&data, x)?;
    Ok(continuous_residual(&data, x).1)
}

/// The normalised residual of `X` for the discrete equation (see the module documentation).
///
/// # Errors
/// Input checks as for [`solve_discrete_riccati`], plus a shape check of `x`;
/// [`RiccatiError::SingularMatrix`] if `R + Bᵀ X B` is singular.
pub fn discrete_riccati_residual(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, x: &DMatrix<f64>) -> Result<f64, RiccatiError> {
    let data = Problem::new(a, b, q, r, RiccatiParams::default())?;
    check_solution_shape(&data, x)?;
    discrete_residual(&data, x).map(|d| d.normalised)
}

fn check_solution_shape(data: &Problem, x: &DMatrix<f64>) -> Result<(), RiccatiError> {
    let n = data.a.nrows();
    if x.shape() != (n, n) {
        return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::StateWeight, expected: (n, n), found: x.shape() });
    }
    if x.iter().any(|v| !v.is_finite()) {
        return Err(RiccatiError::NotFinite { matrix: RiccatiInput::StateWeight });
    }
    Ok(())
}

/// The solution of the Lyapunov equation `Fᵀ X + X F + M = 0` for a stable `F`
/// (`Re λ < 0`) and symmetric `M`, by the sign function (see the module documentation).
/// Returns `X` and the number of steps.
///
/// # Errors
/// Shape and finiteness checks, [`RiccatiError::NotStable`] if `F` is not stable,
/// [`RiccatiError::NoConvergence`], [`RiccatiError::SingularMatrix`].
pub fn solve_continuous_lyapunov(f: &DMatrix<f64>, m: &DMatrix<f64>, params: RiccatiParams) -> Result<(DMatrix<f64>, usize), RiccatiError> {
    check_lyapunov_inputs(f, m)?;
    lyapunov_sign(f, &symmetrize(m), params)
}

/// The solution of the Stein (discrete Lyapunov) equation `Fᵀ X F − X + M = 0` for
/// `ρ(F) < 1` and symmetric `M`, by the squared Smith iteration. Returns `X` and the number of
/// steps.
///
/// # Errors
/// Shape and finiteness checks, [`RiccatiError::NotStable`] if `ρ(F) ≥ 1` (detected by
/// divergence or non-convergence of the powers of `F`).
pub fn solve_discrete_lyapunov(f: &DMatrix<f64>, m: &DMatrix<f64>, params: RiccatiParams) -> Result<(DMatrix<f64>, usize), RiccatiError> {
    check_lyapunov_inputs(f, m)?;
    stein_smith(f, &symmetrize(m), params)
}

fn check_lyapunov_inputs(f: &DMatrix<f64>, m: &DMatrix<f64>) -> Result<(), RiccatiError> {
    let n = f.nrows();
    if f.ncols() != n {
        return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::LyapunovCoefficient, expected: (n, n), found: f.shape() });
    }
    if m.shape() != (n, n) {
        return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::LyapunovConstant, expected: (n, n), found: m.shape() });
    }
    if n == 0 {
        return Err(RiccatiError::Empty);
    }
    if f.iter().any(|v| !v.is_finite()) {
        return Err(RiccatiError::NotFinite { matrix: RiccatiInput::LyapunovCoefficient });
    }
    if m.iter().any(|v| !v.is_finite()) {
        return Err(RiccatiError::NotFinite { matrix: RiccatiInput::LyapunovConstant });
    }
    Ok(())
}

// ----------------------------------------------------------------------------
// validated problem data
// ----------------------------------------------------------------------------

/// Validated data: symmetrised weights, `B̂ = B L⁻ᵀ`, `G = B̂ B̂ᵀ`.
struct Problem {
    a: DMatrix<f64>,
    b: DMatrix<f64>,
    q: DMatrix<f64>,
    r: DMatrix<f64>,
    /// Cholesky factor of `R`.
    r_chol: nalgebra::linalg::Cholesky<f64, nalgebra::Dyn>,
    /// `B L⁻ᵀ` (`n × m`).
    b_hat: DMatrix<f64>,
    /// `G = B R⁻¹ Bᵀ = B̂ B̂ᵀ`.
    g: DMatrix<f64>,
    /// `Some(λ_min(Q))` when `Q` is not positive semidefinite.
    indefinite: Option<f64>,
    /// `‖Q‖₂` (the largest eigenvalue modulus).
    q_norm2: f64,
}

fn max_abs(m: &DMatrix<f64>) -> f64 {
    m.iter().fold(0.0_f64, |acc, v| acc.max(v.abs()))
}

fn symmetrize(m: &DMatrix<f64>) -> DMatrix<f64> {
    (m + m.transpose()) * 0.5
}

fn check_symmetric(m: &DMatrix<f64>, which: RiccatiInput, tol: f64) -> Result<DMatrix<f64>, RiccatiError> {
    let scale = max_abs(m);
    let asym = max_abs(&(m - m.transpose()));
    let relative = if scale > 0.0 { asym / scale } else { 0.0 };
    if relative > tol {
        return Err(RiccatiError::NotSymmetric { matrix: which, relative_asymmetry: relative });
    }
    Ok(symmetrize(m))
}

impl Problem {
    fn new(a: &DMatrix<f64>, b: &DMatrix<f64>, q: &DMatrix<f64>, r: &DMatrix<f64>, params: RiccatiParams) -> Result<Problem, RiccatiError> {
        let n = a.nrows();
        if a.ncols() != n {
            return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::StateMatrix, expected: (n, n), found: a.shape() });
        }
        let m = b.ncols();
        if b.nrows() != n {
            return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::InputMatrix, expected: (n, m), found: b.shape() });
        }
        if q.shape() != (n, n) {
            return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::StateWeight, expected: (n, n), found: q.shape() });
        }
        if r.shape() != (m, m) {
            return Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::InputWeight, expected: (m, m), found: r.shape() });
        }
        if n == 0 || m == 0 {
            return Err(RiccatiError::Empty);
        }
        for (mat, which) in [(a, RiccatiInput::StateMatrix), (b, RiccatiInput::InputMatrix), (q, RiccatiInput::StateWeight), (r, RiccatiInput::InputWeight)] {
            if mat.iter().any(|v| !v.is_finite()) {
                return Err(RiccatiError::NotFinite { matrix: which });
            }
        }
        let q = check_symmetric(q, RiccatiInput::StateWeight, params.symmetry_tolerance)?;
        let r = check_symmetric(r, RiccatiInput::InputWeight, params.symmetry_tolerance)?;
        // Q ⪰ 0 within a relative shift; an indefinite Q is solved for if it can be (published
        // data rounded to a few decimals is often slightly indefinite), and said.
        let (q_min, q_norm2) = symmetric_extremes(&q);
        let q_norm = q.norm();
        let indefinite = (q_norm > 0.0 && q_min < -params.semidefinite_tolerance * q_norm).then_some(q_min);
        // R ≻ 0 with a relative margin.
        let r_norm = r.norm();
        let shifted = &r - DMatrix::<f64>::identity(m, m) * (params.definite_tolerance * r_norm);
        if r_norm == 0.0 || nalgebra::linalg::Cholesky::new(shifted).is_none() {
            return Err(RiccatiError::InputWeightNotPositiveDefinite);
        }
        let r_chol = nalgebra::linalg::Cholesky::new(r.clone()).ok_or(RiccatiError::InputWeightNotPositiveDefinite)?;
        // B̂ = B L⁻ᵀ, i.e. B̂ᵀ = L⁻¹ Bᵀ.
        let b_hat_t = r_chol.l().solve_lower_triangular(&b.transpose()).ok_or(RiccatiError::InputWeightNotPositiveDefinite)?;
        let b_hat = b_hat_t.transpose();
        let g = &b_hat * &b_hat_t;
        Ok(Problem { a: a.clone(), b: b.clone(), q, r, r_chol, b_hat, g, indefinite, q_norm2 })
    }

    /// A solver failure with an indefinite `Q` is reported as such (with how negative it is),
    /// unless it is a property of the plant alone.
    fn explain(&self, e: RiccatiError) -> RiccatiError {
        match (self.indefinite, &e) {
            (None, _) | (_, RiccatiError::NotStabilizable { .. }) => e,
            (Some(smallest), _) => RiccatiError::StateWeightNotSemidefinite { smallest, relative: smallest / self.q_norm2.max(f64::MIN_POSITIVE), cause: e.to_string() },
        }
    }

    fn n(&self) -> usize {
        self.a.nrows()
    }

    /// The scale `s` (a power of two) of `X = s X̃` that equalises `‖G̃‖ = s‖G‖` and `‖Q̃‖ = ‖Q‖/s`.
    fn solution_scale(&self) -> f64 {
        let qn = self.q.norm();
        let gn = self.g.norm();
        if qn > 0.0 && gn > 0.0 && qn.is_finite() && gn.is_finite() {
            let e = (0.5 * (qn / gn).log2()).round().clamp(-500.0, 500.0);
            (2.0_f64).powi(e as i32)
        } else {
            1.0
        }
    }
}

// ----------------------------------------------------------------------------
// residuals
// ----------------------------------------------------------------------------

/// Residual matrix and normalised residual of the continuous equation.
fn continuous_residual(data: &Problem, x: &DMatrix<f64>) -> (DMatrix<f64>, f64) {
    let atx = data.a.transpose() * x;
    let xb = x * &data.b_hat;
    let xgx = &xb * xb.transpose();
    let res = &atx + atx.transpose() - &xgx + &data.q;
    let denom = data.q.norm() + 2.0 * atx.norm() + xgx.norm();
    let num = res.norm();
    let normalised = if denom > 0.0 {
        num / denom
    } else if num == 0.0 {
        0.0
    } else {
        f64::INFINITY
    };
    (res, normalised)
}

struct DiscreteResidual {
    matrix: DMatrix<f64>,
    normalised: f64,
    /// `K = S⁻¹ Bᵀ X A`.
    gain: DMatrix<f64>,
}

/// Solves `S Z = rhs` for symmetric `S`, by Cholesky when `S ≻ 0`, otherwise by LU.
fn solve_symmetric(s: &DMatrix<f64>, rhs: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    if let Some(ch) = nalgebra::linalg::Cholesky::new(s.clone()) {
        let z = ch.solve(rhs);
        if z.iter().all(|v| v.is_finite()) {
            return Some(z);
        }
    }
    let z = s.clone().lu().solve(rhs)?;
    if z.iter().all(|v| v.is_finite()) {
        Some(z)
    } else {
        None
    }
}

/// Residual matrix, normalised residual and gain of the discrete equation.
fn discrete_residual(data: &Problem, x: &DMatrix<f64>) -> Result<DiscreteResidual, RiccatiError> {
    let xa = x * &data.a;
    let ata = data.a.transpose() * &xa;
    let btxa = data.b.transpose() * &xa; // m × n
    let s = symmetrize(&(&data.r + data.b.transpose() * x * &data.b));
    let gain = solve_symmetric(&s, &btxa).ok_or(RiccatiError::SingularMatrix { stage: SolverStage::Gain })?;
    // Aᵀ X B S⁻¹ Bᵀ X A = (Bᵀ X A)ᵀ K, symmetrised.
    let correction = symmetrize(&(btxa.transpose() * &gain));
    let res = symmetrize(&(&ata - x - &correction + &data.q));
    let denom = data.q.norm() + ata.norm() + x.norm() + correction.norm();
    let num = res.norm();
    let normalised = if denom > 0.0 {
        num / denom
    } else if num == 0.0 {
        0.0
    } else {
        f64::INFINITY
    };
    Ok(DiscreteResidual { matrix: res, normalised, gain })
}

#[cfg(test)]
#[path = "../tests/riccati.rs"]
mod tests;

/// `(λ_min, max |λ|)` of a symmetric matrix, by the symmetric QR iteration (capped; on failure
/// the Gershgorin bounds, which can only make `λ_min` look smaller).
fn symmetric_extremes(q: &DMatrix<f64>) -> (f64, f64) {
    match nalgebra::linalg::SymmetricEigen::try_new(q.clone(), f64::EPSILON, 1000) {
        Some(e) => {
            let min = e.eigenvalues.iter().copied().fold(f64::INFINITY, f64::min);
            let max = e.eigenvalues.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            (min, max)
        }
        None => {
            let n = q.nrows();
            let radius = |i: usize| (0..n).filter(|&j| j != i).map(|j| q[(i, j)].abs()).sum::<f64>();
            let min = (0..n).map(|i| q[(i, i)] - radius(i)).fold(f64::INFINITY, f64::min);
            let max = (0..n).map(|i| q[(i, i)].abs() + radius(i)).fold(0.0, f64::max);
            (min, max)
        }
    }
}
