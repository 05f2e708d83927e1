//! From a state-feedback gain to a controller: observer, reference tracking, integral action,
//! digital implementation.
//!
//! # Equations
//! - **Observer** (full-order state estimator): `x̂' = A x̂ + B u + L (y − C x̂ − D u)`; the
//!   estimation error obeys `e' = (A − L C) e`, so `L` is a pole-placement gain for the dual pair
//!   `(Aᵀ, Cᵀ)`: `Lᵀ = state_feedback_gain(Aᵀ, Cᵀ, observer poles)`. With `u = −K x̂` the closed
//!   loop has the eigenvalues of `A − B K` and of `A − L C` (separation principle).
//!   Digital: the predictor form `x̂[k+1] = Φ x̂[k] + Γ u[k] + L_p (y[k] − C x̂[k])` has error
//!   dynamics `Φ − L_p C`; the current-estimator form `x̄[k] = x̂[k] + L_c (y[k] − C x̂[k])`,
//!   `x̂[k+1] = Φ x̄[k] + Γ u[k]` has `Φ − Φ L_c C`, hence `L_c = Φ⁻¹ L_p` (`Φ = e^{AT}` is
//!   always invertible). (Franklin, Powell & Workman, *Digital Control of Dynamic Systems*, 3rd
//!   ed., 1998, ch. 8; from memory.)
//! - **Feedforward tracking**: the steady state `(x_ss, u_ss) = (N_x r, N_u r)` solves
//!   `[[A, B], [C, D]] [N_x; N_u] = [0; I]` (continuous) or `[[Φ − I, Γ], [C, D]] [N_x; N_u] =
//!   [0; I]` (discrete); control law `u = N_u r − K (x̂ − N_x r)`. The matrix must be square
//!   (as many tracked outputs as inputs) and nonsingular (no plant zero at `s = 0` / `z = 1`).
//! - **Integral action** (internal-model principle): augment with `z' = r − y`
//!   (`z[k+1] = z[k] + T (r[k] − y[k])`): `A_a = [[A, 0], [−C, 0]]`, `B_a = [[B], [−D]]`, place
//!   `n + q` poles, split `K_a = [K_x, K_i]`, `u = −K_x x̂ − K_i z`. The augmented pair is
//!   controllable iff `(A, B)` is and `[[A, B], [C, D]]` has full row rank (no zero at the origin).
//! - **Zero-order hold**: `Φ = e^{AT}`, `Γ = ∫₀ᵀ e^{As} ds B` (Van Loan block exponential);
//!   continuous targets map by `z = e^{sT}`.
//! - **Computation delay** of one sample: augment with `u_prev`: `[[Φ, Γ], [0, 0]]`, `[[0], [I]]`;
//!   the extra `m` poles are placed too (default near `z = 0`).
//!
//! # Cost and failure modes
//! Each design is one or two pole placements (see [`crate::place`]) plus `O(n³)` solves.
//! Errors name the cause: non-square or singular tracking matrix, uncontrollable augmented plant,
//! undetectable plant.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::expm::{try_zero_order_hold, ExpmError};
use crate::linalg::svd::{try_singular_values, SvdParams};
use crate::place::{state_feedback_gain, Placement, PlacementError, PlacementParams};

/// Which observer update a digital controller uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ObserverForm {
    /// Uses the previous measurement: `u[k]` does not wait for `y[k]`'s correction.
    Predictor,
    /// Corrects with the current measurement before computing `u[k]`.
    Current,
}

impl ObserverForm {
    pub fn key(self) -> &'static str {
        match self {
            ObserverForm::Predictor => "predictor",
            ObserverForm::Current => "current",
        }
    }
}

/// How the integrator is kept from winding up while an input is saturated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AntiWindup {
    None,
    /// Conditional integration: the integrator holds while any input is clipped.
    Clamp,
    /// Back-calculation: the integrator is driven by `−K_i⁺ (u_applied − u_cmd) / T_t`.
    BackCalculation {
        time_constant: f64,
    },
}

impl AntiWindup {
    pub fn key(self) -> &'static str {
        match self {
            AntiWindup::None => "none",
            AntiWindup::Clamp => "clamp",
            AntiWindup::BackCalculation { .. } => "back_calculation",
        }
    }
}

/// Why a controller could not be designed.
#[derive(Debug, Clone, PartialEq)]
pub enum ControllerError {
    /// Feedforward/integral tracking needs as many tracked outputs as inputs (or fewer, for integral).
    TrackingShape {
        outputs: usize,
        inputs: usize,
    },
    /// `[[A, B], [C, D]]` is singular: a plant zero at s = 0 (z = 1).
    SingularTracking {
        smallest_singular_value: f64,
    },
    /// The augmented (integral) plant is not controllable.
    IntegralNotControllable {
        message: String,
    },
    /// The observer cannot be designed: `cause` says whether the requested poles or the plant
    /// is to blame.
    Observer {
        message: String,
        cause: ObserverFailure,
    },
    Placement(PlacementError),
    Expm(ExpmError),
    /// The sample time is not a positive number.
    BadSampleTime {
        value: f64,
    },
}

/// Why an observer cannot be designed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ObserverFailure {
    /// The requested poles (count, pairing, multiplicity beyond the number of outputs).
    Poles,
    /// The plant and its measurements (an undetectable mode, a numerical failure).
    Plant,
}

impl std::fmt::Display for ControllerError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ControllerError::TrackingShape { outputs, inputs } => write!(
                f,
                "tracking {outputs} output(s) with {inputs} input(s) is not possible: feedforward tracking needs exactly as many tracked outputs as inputs, integral action at most as many; choose the outputs to track"
            ),
            ControllerError::SingularTracking { smallest_singular_value } => write!(
                f,
                "the steady-state equations [A B; C D] are singular (smallest singular value {smallest_singular_value:.3e} relative): the plant has a zero at s = 0 (z = 1 when digital), so these outputs cannot be held at a constant reference by a constant input"
            ),
            ControllerError::IntegralNotControllable { message } => write!(f, "integral action cannot be designed: {message}"),
            ControllerError::Observer { message, .. } => write!(f, "the observer cannot be designed: {message}"),
            ControllerError::Placement(e) => write!(f, "{e}"),
            ControllerError::Expm(e) => write!(f, "{e}"),
            ControllerError::BadSampleTime { value } => write!(f, "the sample time {value} must be a positive number of seconds"),
        }
    }
}

impl std::error::Error for ControllerError {}

impl From<PlacementError> for ControllerError {
    fn from(e: PlacementError) -> Self {
        ControllerError::Placement(e)
    }
}
impl From<ExpmError> for ControllerError {
    fn from(e: ExpmError) -> Self {
        ControllerError::Expm(e)
    }
}

/// Zero-order-hold model of a plant at sample time `t`.
#[derive(Debug, Clone)]
pub struct DiscretePlant {
    pub phi: DMatrix<f64>,
    pub gamma: DMatrix<f64>,
    pub sample_time: f64,
}

/// Zero-order-hold discretisation.
///
/// # Errors
/// [`ControllerError::BadSampleTime`] or a matrix-exponential failure.
pub fn discretise(a: &DMatrix<f64>, b: &DMatrix<f64>, t: f64) -> Result<DiscretePlant, ControllerError> {
    if !(t.is_finite() && t > 0.0) {
        return Err(ControllerError::BadSampleTime { value: t });
    }
    let (phi, gamma) = try_zero_order_hold(a, b, t)?;
    Ok(DiscretePlant { phi, gamma, sample_time: t })
}

/// Maps continuous poles to the z-plane: `z = e^{sT}`.
pub fn map_to_discrete(poles: &[Complex64], t: f64) -> Vec<Complex64> {
    crate::plane::z_from_s_all(poles, t)
}

/// The equivalent continuous pole of a z-plane pole: `s = ln(z) / T` (principal branch;
/// `z = 0` gives `Re s = −∞`: [`crate::plane`]).
pub fn map_to_continuous(z: Complex64, t: f64) -> Complex64 {
    crate::plane::s_from_z_or_infinite(z, t)
}

/// Observer gain and what it achieves.
#[derive(Debug, Clone)]
pub struct ObserverDesign {
    /// `L` (`n × p`) of the predictor form (or of the continuous observer).
    pub gain: DMatrix<f64>,
    /// `L_c = Φ⁻¹ L` for the current-estimator form (digital only).
    pub current_gain: Option<DMatrix<f64>>,
    /// The dual placement (its `achieved_poles` are the eigenvalues of `A − L C`).
    pub placement: Placement,
    pub gain_norm: f64,
}

/// Observer gain by duality.
///
/// # Errors
/// [`ControllerError::Observer`] with the reason (e.g. an undetectable unstable mode).
pub fn observer_gain(a: &DMatrix<f64>, c: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams) -> Result<ObserverDesign, ControllerError> {
    observer_gain_continued(a, c, poles, params, None)
}

/// [`observer_gain`] continued from the dual placement's previous eigenvectors (see
/// [`crate::place::state_feedback_gain_continued`]) when given and of the right size.
///
/// # Errors
/// As [`observer_gain`].
pub fn observer_gain_continued(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    poles: &[Complex64],
    params: PlacementParams,
    previous: Option<&crate::place::Eigenvectors>,
) -> Result<ObserverDesign, ControllerError> {
    let (at, ct) = (a.transpose(), c.transpose());
    let placed = match previous.filter(|e| e.vectors.nrows() == a.nrows()) {
        Some(e) => crate::place::state_feedback_gain_continued(&at, &ct, poles, params, e),
        None => state_feedback_gain(&at, &ct, poles, params),
    };
    let dual = placed.map_err(|e| {
        let cause = match e {
            PlacementError::PoleCount { .. } | PlacementError::InvalidPoles { .. } | PlacementError::RepeatedBeyondRank { .. } => ObserverFailure::Poles,
            _ => ObserverFailure::Plant,
        };
        let text = e.to_string().replace("uncontrollable (no input reaches it)", "unobservable (no output sees it)").replace("change the actuators (B)", "add a measurement (C)");
        ControllerError::Observer { message: text, cause }
    })?;
    let gain = dual.gain.transpose();
    let gain_norm = dual.gain_norm;
    Ok(ObserverDesign { gain, current_gain: None, placement: dual, gain_norm })
}

/// Observer poles as a multiple of the controller poles (`factor · λ`; common practice: 2–6).
pub fn observer_poles_from_speed(controller_poles: &[Complex64], factor: f64, states: usize) -> Vec<Complex64> {
    let mut out: Vec<Complex64> = controller_poles.iter().map(|z| z * factor).collect();
    out.truncate(states);
    out
}

/// `[N_x; N_u]` from the steady-state equations. `a` is `A` (continuous) or `Φ` (digital, then
/// `discrete = true` uses `Φ − I`).
///
/// # Errors
/// [`ControllerError::TrackingShape`] or [`ControllerError::SingularTracking`].
pub fn feedforward_gains(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, discrete: bool) -> Result<(DMatrix<f64>, DMatrix<f64>), ControllerError> {
    let n = a.nrows();
    let m = b.ncols();
    let q = c.nrows();
    if q != m {
        return Err(ControllerError::TrackingShape { outputs: q, inputs: m });
    }
    let mut big = DMatrix::<f64>::zeros(n + q, n + m);
    let mut top = a.clone();
    if discrete {
        for i in 0..n {
            top[(i, i)] -= 1.0;
        }
    }
    big.view_mut((0, 0), (n, n)).copy_from(&top);
    big.view_mut((0, n), (n, m)).copy_from(b);
    big.view_mut((n, 0), (q, n)).copy_from(c);
    big.view_mut((n, n), (q, m)).copy_from(d);
    let s = try_singular_values(&big, SvdParams::default()).map_err(|e| ControllerError::Observer { message: e.to_string(), cause: ObserverFailure::Plant })?;
    let smax = s.iter().cloned().fold(0.0, f64::max);
    let smin = s.iter().cloned().fold(f64::INFINITY, f64::min);
    if !(smin > 1e-10 * smax) {
        return Err(ControllerError::SingularTracking { smallest_singular_value: if smax > 0.0 { smin / smax } else { 0.0 } });
    }
    let mut rhs = DMatrix::<f64>::zeros(n + q, q);
    for i in 0..q {
        rhs[(n + i, i)] = 1.0;
    }
    let sol = big.lu().solve(&rhs).ok_or(ControllerError::SingularTracking { smallest_singular_value: 0.0 })?;
    Ok((sol.rows(0, n).into_owned(), sol.rows(n, m).into_owned()))
}

/// The integral-augmented pair. Continuous: `[[A, 0], [−C, 0]]`, `[[B], [−D]]`; digital with
/// sample time `T`: `[[Φ, 0], [−T C, I]]`, `[[Γ], [−T D]]`.
pub fn integral_augmented(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, sample_time: Option<f64>) -> (DMatrix<f64>, DMatrix<f64>) {
    let n = a.nrows();
    let m = b.ncols();
    let q = c.nrows();
    let mut aa = DMatrix::<f64>::zeros(n + q, n + q);
    let mut ba = DMatrix::<f64>::zeros(n + q, m);
    aa.view_mut((0, 0), (n, n)).copy_from(a);
    ba.view_mut((0, 0), (n, m)).copy_from(b);
    let scale = sample_time.unwrap_or(1.0);
    aa.view_mut((n, 0), (q, n)).copy_from(&(c * -scale));
    ba.view_mut((n, 0), (q, m)).copy_from(&(d * -scale));
    if sample_time.is_some() {
        for i in 0..q {
            aa[(n + i, n + i)] = 1.0;
        }
    }
    (aa, ba)
}

/// The one-sample-delay augmented pair `[[Φ, Γ], [0, 0]]`, `[[0], [I]]`.
pub fn delay_augmented(phi: &DMatrix<f64>, gamma: &DMatrix<f64>) -> (DMatrix<f64>, DMatrix<f64>) {
    let n = phi.nrows();
    let m = gamma.ncols();
    let mut pd = DMatrix::<f64>::zeros(n + m, n + m);
    pd.view_mut((0, 0), (n, n)).copy_from(phi);
    pd.view_mut((0, n), (n, m)).copy_from(gamma);
    let mut gd = DMatrix::<f64>::zeros(n + m, m);
    for i in 0..m {
        gd[(n + i, i)] = 1.0;
    }
    (pd, gd)
}

/// Sample-rate advice from the closed-loop bandwidth.
///
/// Rule of thumb (common practice; Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
/// 1997, from memory): sample 10–30 times per closed-loop bandwidth period, i.e.
/// `ω_s / ω_b ≈ 10…30` with `ω_s = 2π / T` and `ω_b` taken as the largest `|s|` of the
/// continuous closed-loop poles.
///
/// Poles at `z = 0` (deadbeat, or a computation delay) have no finite `s`: they settle in one
/// sample whatever the sample time, so they are left out of `ω_b` and named in the message; when
/// every pole is there the verdict is [`SampleRateVerdict::Deadbeat`] and no bandwidth is given.
/// The words for people are the design layer's (it formats the figures).
#[derive(Debug, Clone, PartialEq)]
pub struct SampleRateAdvice {
    /// `ω_b` in rad/s; `None` when every pole is at `z = 0`.
    pub bandwidth: Option<f64>,
    /// `ω_s / ω_b`; `None` when every pole is at `z = 0`.
    pub samples_per_bandwidth: Option<f64>,
    pub verdict: SampleRateVerdict,
    /// Poles at `z = 0` (left out of the bandwidth: they settle in one sample each).
    pub deadbeat_poles: usize,
}

/// Samples per closed-loop bandwidth period: fewer than 10, 10–30, more than 30; or every pole
/// at `z = 0`, where the rule does not apply.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SampleRateVerdict {
    TooSlow,
    Adequate,
    Fast,
    Deadbeat,
}

/// See [`SampleRateAdvice`]. `continuous_poles` are the s-plane equivalents; a pole at
/// `z = 0` is given as a non-finite `s` (see [`crate::plane::s_from_z_or_infinite`]).
pub fn sample_rate_advice(continuous_poles: &[Complex64], t: f64) -> SampleRateAdvice {
    let finite: Vec<f64> = continuous_poles.iter().filter(|z| z.re.is_finite() && z.im.is_finite()).map(|z| z.norm()).collect();
    let deadbeat = continuous_poles.len() - finite.len();
    if finite.is_empty() && deadbeat > 0 {
        return SampleRateAdvice { bandwidth: None, samples_per_bandwidth: None, verdict: SampleRateVerdict::Deadbeat, deadbeat_poles: deadbeat };
    }
    let wb = finite.iter().copied().fold(0.0, f64::max);
    let ratio = if wb > 0.0 { 2.0 * std::f64::consts::PI / (t * wb) } else { f64::INFINITY };
    let verdict = if ratio < 10.0 {
        SampleRateVerdict::TooSlow
    } else if ratio <= 30.0 {
        SampleRateVerdict::Adequate
    } else {
        SampleRateVerdict::Fast
    };
    let finite_or_none = |v: f64| v.is_finite().then_some(v);
    SampleRateAdvice { bandwidth: Some(wb), samples_per_bandwidth: finite_or_none(ratio), verdict, deadbeat_poles: deadbeat }
}

/// Pseudo-inverse of a small matrix through its normal equations (for back-calculation).
pub fn small_pseudo_inverse(m: &DMatrix<f64>) -> DMatrix<f64> {
    let (r, c) = m.shape();
    if r >= c {
        let mtm = m.transpose() * m;
        mtm.lu().solve(&m.transpose()).unwrap_or_else(|| DMatrix::zeros(c, r))
    } else {
        let mmt = m * m.transpose();
        match mmt.lu().solve(&DMatrix::identity(r, r)) {
            Some(inv) => m.transpose() * inv,
            None => DMatrix::zeros(c, r),
        }
    }
}

#[cfg(test)]
#[path = "tests/controller.rs"]
mod tests;
