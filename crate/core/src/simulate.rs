//! Closed-loop response from an initial state, with optional actuator saturation.
//!
//! # Equation
//! `x' = A x + B u`, `u = sat(−K x)` where `sat` clips input `i` to `[−uᵢ_max, uᵢ_max]`.
//!
//! # Method
//! A uniform fine grid of step `h`. While no input is at its limit, the step
//! is the exact transition of the linear closed loop, `x ← e^{(A − BK) h} x`.
//! While any input is clipped, the commanded input is evaluated at the start
//! of the step and held over it (zero-order hold), `x ← Φ x + Γ sat(−K x)`,
//! with `Φ = e^{A h}` and `Γ = ∫₀ʰ e^{A s} ds B` from one block exponential (Van
//! Loan, IEEE TAC 23(3):395–404, 1978; see [`crate::linalg::expm`]). So the
//! unsaturated response is exact at the grid points; the saturated one has an
//! `O(h)` hold error, small because `h` resolves the fastest closed-loop pole.
//!
//! # Horizon and grid
//! Unless given, the horizon is `7 / σ` with `σ` the decay rate of the slowest
//! closed-loop pole (about 1.5 times its 1 % settling time `4.6/σ`), doubled when
//! actuator limits are given (saturation slows the response). The step is
//! chosen so that `h |λ|_max ≤ 0.05` for the fastest pole, with between
//! [`SimulationParams::min_steps`] and [`SimulationParams::max_steps`] steps.
//!
//! # Cost
//! Two matrix exponentials of size `n + m` plus `O(n²)` per step: `Φ_cl x` or `Φ x` by the
//! contiguous kernel of [`crate::linalg::kernels`] (bitwise the matrix library's product).
//!
//! # Failure modes
//! An unstable closed loop grows without bound: the run stops when ‖x‖ passes
//! `1e100 (1 + ‖x₀‖)` and reports [`Response::diverged`]. A matrix exponential that
//! overflows is an error.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use crate::linalg::eigen::{try_eigenvalues, EigenError};
use crate::linalg::expm::{try_expm, try_zero_order_hold, ExpmError};
use crate::linalg::kernels::product_into;

/// Grid limits of the simulation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SimulationParams {
    /// Fewest steps on the grid. Default 500.
    pub min_steps: usize,
    /// Most steps on the grid. Default 20 000.
    pub max_steps: usize,
    /// Largest `h |λ|_max`. Default 0.05.
    pub max_step_times_speed: f64,
}

impl Default for SimulationParams {
    fn default() -> Self {
        SimulationParams { min_steps: 500, max_steps: 20_000, max_step_times_speed: 0.05 }
    }
}

/// What to simulate.
#[derive(Debug, Clone)]
pub struct SimulationSpec {
    pub initial_state: DVector<f64>,
    /// Horizon in seconds; chosen from the slowest pole when `None`.
    pub duration: Option<f64>,
    /// Per-input magnitude limits (`None` = unlimited).
    pub limits: Vec<Option<f64>>,
}

/// Why a simulation could not run.
#[derive(Debug, Clone, PartialEq)]
pub enum SimulationError {
    InitialStateLength { expected: usize, found: usize },
    LimitCount { expected: usize, found: usize },
    BadLimit { index: usize, value: f64 },
    BadDuration { value: f64 },
    Eigen(EigenError),
    Expm(ExpmError),
}

impl std::fmt::Display for SimulationError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SimulationError::InitialStateLength { expected, found } => {
                write!(f, "the initial state has {found} entries but the plant has {expected} states; give one value per state")
            }
            SimulationError::LimitCount { expected, found } => {
                write!(f, "{found} actuator limits were given but the plant has {expected} inputs; give one per input")
            }
            SimulationError::BadLimit { index, value } => {
                write!(f, "actuator limit {} is {value}; limits must be positive numbers", index + 1)
            }
            SimulationError::BadDuration { value } => write!(f, "the duration {value} must be a positive number of seconds"),
            SimulationError::Eigen(e) => write!(f, "simulation failed: {e}"),
            SimulationError::Expm(e) => write!(f, "simulation failed: {e}"),
        }
    }
}

impl std::error::Error for SimulationError {}

/// Sampled closed-loop response.
#[derive(Debug, Clone)]
pub struct Response {
    /// Grid times, `0, h, 2h, …`.
    pub time: Vec<f64>,
    /// `states[i][k]` = state `i` at `time[k]`.
    pub states: Vec<Vec<f64>>,
    /// Applied (saturated) inputs, `inputs[i][k]`, held from `time[k]`.
    pub inputs: Vec<Vec<f64>>,
    /// Commanded inputs `−K x` before saturation.
    pub commanded: Vec<Vec<f64>>,
    pub step: f64,
    pub duration: f64,
    /// Whether the horizon was chosen automatically.
    pub duration_chosen: bool,
    /// The run was stopped because the state grew without bound.
    pub diverged: bool,
}

/// Simulates `x' = A x + B sat(−K x)` from `spec.initial_state`.
///
/// # Errors
/// See [`SimulationError`].
pub fn closed_loop_response(a: &DMatrix<f64>, b: &DMatrix<f64>, k: &DMatrix<f64>, spec: &SimulationSpec, params: SimulationParams) -> Result<Response, SimulationError> {
    let n = a.nrows();
    let m = b.ncols();
    if spec.initial_state.len() != n {
        return Err(SimulationError::InitialStateLength { expected: n, found: spec.initial_state.len() });
    }
    let limits: Vec<Option<f64>> = if spec.limits.is_empty() { vec![None; m] } else { spec.limits.clone() };
    if limits.len() != m {
        return Err(SimulationError::LimitCount { expected: m, found: limits.len() });
    }
    for (i, l) in limits.iter().enumerate() {
        if let Some(v) = l {
            if !(v.is_finite() && *v > 0.0) {
                return Err(SimulationError::BadLimit { index: i, value: *v });
            }
        }
    }
    if let Some(d) = spec.duration {
        if !(d.is_finite() && d > 0.0) {
            return Err(SimulationError::BadDuration { value: d });
        }
    }
    let closed = a - b * k;
    let poles = try_eigenvalues(&closed).map_err(SimulationError::Eigen)?;
    let speed = poles.iter().map(|z| z.norm()).fold(0.0, f64::max);
    let any_limit = limits.iter().any(|l| l.is_some());
    let (duration, chosen) = match spec.duration {
        Some(d) => (d, false),
        None => (default_horizon(&poles, any_limit), true),
    };
    let wanted = if speed > 0.0 { (duration * speed / params.max_step_times_speed).ceil() } else { params.min_steps as f64 };
    let steps = (wanted.max(params.min_steps as f64).min(params.max_steps as f64)) as usize;
    let h = duration / steps as f64;
    let phi_cl = try_expm(&(&closed * h)).map_err(SimulationError::Expm)?;
    let (phi, gamma) = if any_limit { try_zero_order_hold(a, b, h).map_err(SimulationError::Expm)? } else { (DMatrix::zeros(0, 0), DMatrix::zeros(0, 0)) };

    let mut time = Vec::with_capacity(steps + 1);
    let mut states = (0..n).map(|_| Vec::with_capacity(steps + 1)).collect::<Vec<_>>();
    let mut inputs = (0..m).map(|_| Vec::with_capacity(steps + 1)).collect::<Vec<_>>();
    let mut commanded = (0..m).map(|_| Vec::with_capacity(steps + 1)).collect::<Vec<_>>();
    let mut x = spec.initial_state.clone();
    let bound = 1e100 * (1.0 + x.norm());
    let mut diverged = false;
    // Buffers reused by every step (matrix–vector products into place, no allocation).
    let (mut u_cmd, mut u, mut next) = (DVector::<f64>::zeros(m), DVector::<f64>::zeros(m), DVector::<f64>::zeros(n));
    for step in 0..=steps {
        u_cmd.gemv(-1.0, k, &x, 0.0);
        let mut clipped = false;
        u.copy_from(&u_cmd);
        for i in 0..m {
            if let Some(l) = limits[i] {
                if u[i] > l {
                    u[i] = l;
                    clipped = true;
                } else if u[i] < -l {
                    u[i] = -l;
                    clipped = true;
                }
            }
        }
        time.push(step as f64 * h);
        for i in 0..n {
            states[i].push(x[i]);
        }
        for i in 0..m {
            inputs[i].push(u[i]);
            commanded[i].push(u_cmd[i]);
        }
        if step == steps {
            break;
        }
        if clipped {
            product_into(&phi, &x, &mut next);
            next.gemv(1.0, &gamma, &u, 1.0);
        } else {
            product_into(&phi_cl, &x, &mut next);
        }
        std::mem::swap(&mut x, &mut next);
        if !(x.norm() <= bound) {
            diverged = true;
            break;
        }
    }
    Ok(Response { time, states, inputs, commanded, step: h, duration, duration_chosen: chosen, diverged })
}

#[cfg(test)]
#[path = "tests/simulate.rs"]
mod tests;

/// The simulated time when none is given (the one rule for every simulation and for the checks
/// that size them): `7 / σ` for the slowest decay rate `σ` of the (s-plane) poles, about seven
/// time constants, enough to settle into ±0.1 % (common practice); when the slowest pole is
/// repeated `p` times (a Jordan block, whose response carries `t^{p−1} e^{−σt}`) `3 / σ` more per
/// extra copy (`t²/2 · e^{−t}` falls to 1e-3 only near `t = 11`); `5 / max|λ|` when no pole
/// decays, 10 s when all are at the origin; doubled when an actuator limit may slow the
/// response. Non-finite poles (the s-plane image of `z = 0`) are left out.
pub fn default_horizon(poles: &[Complex64], limited: bool) -> f64 {
    let decaying: Vec<Complex64> = poles.iter().copied().filter(|z| z.re.is_finite() && z.im.is_finite() && z.re < 0.0).collect();
    let slowest = decaying.iter().copied().max_by(|x, y| x.re.total_cmp(&y.re));
    let slowest_decay = slowest.map_or(f64::INFINITY, |z| -z.re);
    // Copies of the slowest pole (a conjugate pair counts once): within 1 % of it.
    let copies = slowest.map_or(1, |s| decaying.iter().filter(|z| z.im >= 0.0 && (**z - Complex64::new(s.re, s.im.abs())).norm() <= 0.01 * s.norm()).count().max(1));
    let speed = poles.iter().map(|z| z.norm()).filter(|v| v.is_finite()).fold(0.0, f64::max);
    let base = if slowest_decay.is_finite() {
        (7.0 + 3.0 * (copies - 1) as f64) / slowest_decay
    } else if speed > 0.0 {
        5.0 / speed
    } else {
        10.0
    };
    if limited {
        2.0 * base
    } else {
        base
    }
}
