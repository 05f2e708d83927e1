//! Simulation of the whole loop: plant, observer, tracking law, integrator with anti-windup,
//! actuator saturation, reference and load-disturbance steps, measurement noise.
//!
//! # Model
//! Plant `x' = A x + B u + E w`, `y = C x + D u`; `w` is a load disturbance step entering where
//! the physics puts it through the disturbance input matrix `E` (a load torque on the load
//! side, a heat load on one zone); without `E` it enters at the plant input (`E = B`).
//!
//! **Digital controller** (sample time `T`, `t_k = k T`, everything held over `[t_k, t_{k+1})`):
//! 1. measure `y_k = C x_k + D u_held + n_k` (`u_held` is the input being applied at `t_k`);
//! 2. estimate: predictor `x̂_k`, or current `x̄_k = x̂_k + L_c (y_k − C x̂_k − D u_held)`
//!    (no observer: the state itself);
//! 3. command `u_cmd,k` = `−K x̂` | `N_u r − K (x̂ − N_x r)` | `−K_x x̂ − K_i z` (`− K_u u_prev`
//!    with a computation delay, `− K_u (u_prev − N_u r)` with feedforward); apply `u_k = sat(u_cmd,k)`;
//! 4. integrator `z_{k+1} = z_k + T (r_k − y_k)` (tracked outputs), frozen while any input is
//!    clipped (clamp), or with `− K_i⁺ (u_k − u_cmd,k) / T_t` added (back-calculation);
//! 5. observer `x̂_{k+1} = Φ x̂_k + Γ u_a + L (y_k − C x̂_k − D u_held)` (predictor) or
//!    `Φ x̄_k + Γ u_a` (current), with `u_a` the input applied over the interval (`u_k`, or the
//!    previous command with a delay): the observer is fed the **applied**, saturated input;
//! 6. plant `x_{k+1} = Φ x_k + Γ u_a + Γ_E w_k` — exact zero-order hold (`Γ_E` from `(A, E)`,
//!    the load held over the interval as the input is).
//!
//! **Continuous controller**: the stacked state `s = [x; x̂; z]` obeys a linear ODE while no
//! input is clipped, stepped exactly with the block exponential of Van Loan (IEEE TAC 23(3),
//! 1978) on a fine grid (`h` = 1/20 of the fastest closed-loop time constant `1 / max |λ|`, at
//! most 1/2000 of the run); while any input is clipped, all inputs are held at their clipped
//! values over the step and the integrator obeys its anti-windup rule. A step in which an input
//! enters or leaves saturation is redone in 32 sub-steps, so the switching instant is resolved
//! to `h/32` (the scheme is `O(h)` in the switching instants only; checked against
//! `scipy.integrate.solve_ivp` of the saturated ODE by `tests/oracle/check_saturated_loop.py`).
//!
//! # Cost
//! `O((n + p)²)` per sample after two block exponentials; a 10-state loop over 5 000 samples
//! takes about a millisecond (see the closing figures in the README).
//!
//! # Failure modes
//! Errors for inconsistent sizes or a non-positive sample time; an unstable loop stops when the
//! state passes `1e100` and is reported as diverged.

use nalgebra::{DMatrix, DVector};

use crate::controller::{small_pseudo_inverse, AntiWindup, ObserverForm};
use crate::linalg::expm::{try_expm, try_zero_order_hold, ExpmError};

/// Largest number of samples a digital loop simulation may take.
pub const MAX_SAMPLES: usize = 2_000_000;

/// The reference-tracking part of the control law.
#[derive(Debug, Clone, PartialEq)]
pub enum TrackingLaw {
    /// Regulation: `u = −K x̂`.
    None,
    /// `u = N_u r − K (x̂ − N_x r)`.
    Feedforward { nx: DMatrix<f64>, nu: DMatrix<f64> },
    /// `u = −K x̂ − K_i z`; with `feedforward` `(N_x, N_u)` also `+ N_u r + K N_x r` (two
    /// degrees of freedom: the reference acts at once through the feedforward, the integrator
    /// removes what the model got wrong).
    Integral { ki: DMatrix<f64>, anti_windup: AntiWindup, feedforward: Option<(DMatrix<f64>, DMatrix<f64>)> },
}

impl TrackingLaw {
    /// `(N_x, N_u)` when the reference is fed forward (feedforward, or integral with feedforward).
    pub fn feedforward(&self) -> Option<(&DMatrix<f64>, &DMatrix<f64>)> {
        match self {
            TrackingLaw::Feedforward { nx, nu } => Some((nx, nu)),
            TrackingLaw::Integral { feedforward: Some((nx, nu)), .. } => Some((nx, nu)),
            _ => None,
        }
    }
}

/// A complete controller as it would go into firmware.
#[derive(Debug, Clone, PartialEq)]
pub struct LoopController {
    /// `K` (or `K_x`), `m × n`.
    pub k: DMatrix<f64>,
    /// `K_u`, `m × m`, with a one-sample computation delay (digital only).
    pub k_delay: Option<DMatrix<f64>>,
    /// Observer gain `L` (`n × p`): predictor form for digital, or the continuous observer.
    pub observer: Option<DMatrix<f64>>,
    pub observer_form: ObserverForm,
    /// `L_c` for the current-estimator form.
    pub current_gain: Option<DMatrix<f64>>,
    pub tracking: TrackingLaw,
    /// Rows of `C` that are tracked (reference entries correspond to these).
    pub tracked_outputs: Vec<usize>,
    /// `None`: continuous controller.
    pub sample_time: Option<f64>,
}

/// Measurement noise.
#[derive(Debug, Clone)]
pub enum Noise {
    None,
    /// Seeded Gaussian noise per output with these standard deviations (digital only).
    Gaussian {
        std: Vec<f64>,
        seed: u64,
    },
    /// An explicit sequence `noise[output][sample]` (digital only; for tests).
    Given(Vec<Vec<f64>>),
}

/// What the loop is asked to do.
#[derive(Debug, Clone)]
pub struct LoopScenario {
    pub x0: DVector<f64>,
    /// Observer initial estimate (zero when `None`).
    pub xhat0: Option<DVector<f64>>,
    pub duration: f64,
    /// Reference step values, one per tracked output.
    pub reference: Vec<f64>,
    pub reference_time: f64,
    /// Load-disturbance step values: one per column of `disturbance_input`, or one per input.
    pub disturbance: Vec<f64>,
    pub disturbance_time: f64,
    /// `E` (states × disturbances), through which the load step acts, in the time domain of
    /// the plant given: the continuous `E` for [`simulate_loop`]; for a plant given sampled
    /// ([`simulate_sampled_loop`]) its sampled `Γ_E`. `None`: at the plant input (`E = B`).
    pub disturbance_input: Option<DMatrix<f64>>,
    pub noise: Noise,
    /// Per-input magnitude limits.
    pub limits: Vec<Option<f64>>,
    /// Fine step of the continuous controller (chosen when `None`).
    pub continuous_step: Option<f64>,
}

/// Why a loop simulation could not run.
#[derive(Debug, Clone, PartialEq)]
pub enum LoopError {
    Size {
        what: &'static str,
        expected: usize,
        found: usize,
    },
    BadTime {
        what: &'static str,
        value: f64,
    },
    /// More samples than [`MAX_SAMPLES`].
    TooManySamples {
        samples: f64,
    },
    NoiseNeedsDigital,
    Expm(ExpmError),
}

impl std::fmt::Display for LoopError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LoopError::Size { what, expected, found } => write!(f, "{what}: {found} values given but {expected} are needed"),
            LoopError::BadTime { what, value } => write!(f, "{what} {value} must be a positive, finite number of seconds"),
            LoopError::TooManySamples { samples } => write!(f, "the simulation would need {samples:.0} samples (at most {MAX_SAMPLES}); shorten the duration or lengthen the sample time"),
            LoopError::NoiseNeedsDigital => write!(f, "measurement noise is simulated with a digital controller: give the implementation a sample time"),
            LoopError::Expm(e) => write!(f, "loop simulation failed: {e}"),
        }
    }
}

impl std::error::Error for LoopError {}

impl From<ExpmError> for LoopError {
    fn from(e: ExpmError) -> Self {
        LoopError::Expm(e)
    }
}

/// Recorded loop signals; `series[i][k]` is signal `i` at `time[k]`.
#[derive(Debug, Clone)]
pub struct LoopResponse {
    pub time: Vec<f64>,
    /// Outputs `C x + D u` without noise.
    pub outputs: Vec<Vec<f64>>,
    /// Measured outputs (with noise).
    pub measured: Vec<Vec<f64>>,
    /// Reference per tracked output.
    pub reference: Vec<Vec<f64>>,
    pub states: Vec<Vec<f64>>,
    /// The estimate the control law used (equals the state without an observer).
    pub estimates: Vec<Vec<f64>>,
    /// Applied (saturated) inputs over `[t_k, t_{k+1})`.
    pub inputs: Vec<Vec<f64>>,
    /// Commanded inputs before saturation.
    pub commanded: Vec<Vec<f64>>,
    pub integrator: Vec<Vec<f64>>,
    pub diverged: bool,
}

impl LoopResponse {
    fn new(n: usize, m: usize, p: usize, q: usize, qi: usize, capacity: usize) -> Self {
        let series = |k: usize| (0..k).map(|_| Vec::with_capacity(capacity)).collect::<Vec<_>>();
        LoopResponse {
            time: Vec::with_capacity(capacity),
            outputs: series(p),
            measured: series(p),
            reference: series(q),
            states: series(n),
            estimates: series(n),
            inputs: series(m),
            commanded: series(m),
            integrator: series(qi),
            diverged: false,
        }
    }
}

fn push(series: &mut [Vec<f64>], v: &DVector<f64>) {
    for (s, x) in series.iter_mut().zip(v.iter()) {
        s.push(*x);
    }
}

/// Seeded standard normal numbers (SplitMix64 + Box–Muller); reproducible across platforms.
struct Gaussian {
    state: u64,
    spare: Option<f64>,
}

impl Gaussian {
    fn new(seed: u64) -> Self {
        Gaussian { state: seed ^ 0x9E37_79B9_7F4A_7C15, spare: None }
    }
    fn uniform(&mut self) -> f64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn next(&mut self) -> f64 {
        if let Some(s) = self.spare.take() {
            return s;
        }
        let (u1, u2) = (self.uniform(), self.uniform());
        let r = (-2.0 * u1.ln()).sqrt();
        let th = 2.0 * std::f64::consts::PI * u2;
        self.spare = Some(r * th.sin());
        r * th.cos()
    }
}

fn clip(u: &DVector<f64>, limits: &[Option<f64>]) -> (DVector<f64>, bool) {
    let mut out = u.clone();
    let mut clipped = false;
    for (i, l) in limits.iter().enumerate() {
        if let Some(l) = l {
            if out[i] > *l {
                out[i] = *l;
                clipped = true;
            } else if out[i] < -*l {
                out[i] = -*l;
                clipped = true;
            }
        }
    }
    (out, clipped)
}

fn rows_of(c: &DMatrix<f64>, rows: &[usize]) -> DMatrix<f64> {
    DMatrix::from_fn(rows.len(), c.ncols(), |i, j| c[(rows[i], j)])
}

/// Simulates the loop.
///
/// # Errors
/// See [`LoopError`].
pub fn simulate_loop(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, ctrl: &LoopController, sc: &LoopScenario) -> Result<LoopResponse, LoopError> {
    let n = a.nrows();
    let m = b.ncols();
    let q = ctrl.tracked_outputs.len();
    if sc.x0.len() != n {
        return Err(LoopError::Size { what: "initial state", expected: n, found: sc.x0.len() });
    }
    if let Some(x) = &sc.xhat0 {
        if x.len() != n {
            return Err(LoopError::Size { what: "initial estimate", expected: n, found: x.len() });
        }
    }
    if !matches!(ctrl.tracking, TrackingLaw::None) && sc.reference.len() != q {
        return Err(LoopError::Size { what: "reference", expected: q, found: sc.reference.len() });
    }
    let nd = check_disturbance(sc, n, m)?;
    if !sc.limits.is_empty() && sc.limits.len() != m {
        return Err(LoopError::Size { what: "actuator limits", expected: m, found: sc.limits.len() });
    }
    if !(sc.duration.is_finite() && sc.duration > 0.0) {
        return Err(LoopError::BadTime { what: "the duration", value: sc.duration });
    }
    match ctrl.sample_time {
        Some(t) => {
            if !(t.is_finite() && t > 0.0) {
                return Err(LoopError::BadTime { what: "the sample time", value: t });
            }
            // One hold of (A, [B E]) gives Γ and Γ_E together.
            let (phi, gamma, gamma_w) = match &sc.disturbance_input {
                Some(e) => {
                    let (phi, both) = try_zero_order_hold(a, &concat_columns(b, e), t)?;
                    let m = b.ncols();
                    (phi, both.columns(0, m).into_owned(), both.columns(m, e.ncols()).into_owned())
                }
                None => {
                    let (phi, gamma) = try_zero_order_hold(a, b, t)?;
                    let gamma_w = gamma.clone();
                    (phi, gamma, gamma_w)
                }
            };
            digital(&phi, &gamma, &gamma_w, c, d, ctrl, sc, t)
        }
        None => {
            if !matches!(sc.noise, Noise::None) {
                return Err(LoopError::NoiseNeedsDigital);
            }
            let e = sc.disturbance_input.clone().unwrap_or_else(|| b.clone());
            debug_assert_eq!(e.ncols(), nd);
            continuous(a, b, &e, c, d, ctrl, sc)
        }
    }
}

/// `[B E]`, side by side (same rows).
fn concat_columns(b: &DMatrix<f64>, e: &DMatrix<f64>) -> DMatrix<f64> {
    let mut out = DMatrix::<f64>::zeros(b.nrows(), b.ncols() + e.ncols());
    out.columns_mut(0, b.ncols()).copy_from(b);
    out.columns_mut(b.ncols(), e.ncols()).copy_from(e);
    out
}

/// The number of disturbance values (columns of `E`, or the inputs) after checking the
/// scenario's load step and `E` against the plant's `n` states and `m` inputs.
fn check_disturbance(sc: &LoopScenario, n: usize, m: usize) -> Result<usize, LoopError> {
    let nd = match &sc.disturbance_input {
        Some(e) if e.nrows() != n => return Err(LoopError::Size { what: "rows of the disturbance input matrix", expected: n, found: e.nrows() }),
        Some(e) => e.ncols(),
        None => m,
    };
    if !sc.disturbance.is_empty() && sc.disturbance.len() != nd {
        return Err(LoopError::Size { what: "disturbance", expected: nd, found: sc.disturbance.len() });
    }
    Ok(nd)
}

fn step_value(values: &[f64], len: usize, time: f64, at: f64, eps: f64) -> DVector<f64> {
    if values.is_empty() || time + eps < at {
        DVector::zeros(len)
    } else {
        DVector::from_column_slice(values)
    }
}

/// Simulates a digital loop around a plant that is itself given in discrete time
/// (`x[k+1] = Φ x[k] + Γ (u[k] + w[k])`), at its sample time `ctrl.sample_time`.
///
/// # Errors
/// See [`LoopError`].
pub fn simulate_sampled_loop(phi: &DMatrix<f64>, gamma: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, ctrl: &LoopController, sc: &LoopScenario) -> Result<LoopResponse, LoopError> {
    let t = ctrl.sample_time.ok_or(LoopError::BadTime { what: "the sample time", value: 0.0 })?;
    if !(t.is_finite() && t > 0.0) {
        return Err(LoopError::BadTime { what: "the sample time", value: t });
    }
    if sc.x0.len() != phi.nrows() {
        return Err(LoopError::Size { what: "initial state", expected: phi.nrows(), found: sc.x0.len() });
    }
    if !(sc.duration.is_finite() && sc.duration > 0.0) {
        return Err(LoopError::BadTime { what: "the duration", value: sc.duration });
    }
    check_disturbance(sc, phi.nrows(), gamma.ncols())?;
    let gamma_w = sc.disturbance_input.clone().unwrap_or_else(|| gamma.clone());
    digital(phi, gamma, &gamma_w, c, d, ctrl, sc, t)
}

#[allow(clippy::too_many_arguments)] // the plant's matrices, the controller and the scenario
fn digital(phi: &DMatrix<f64>, gamma: &DMatrix<f64>, gamma_w: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, ctrl: &LoopController, sc: &LoopScenario, t: f64) -> Result<LoopResponse, LoopError> {
    let n = phi.nrows();
    let m = gamma.ncols();
    let nd = gamma_w.ncols();
    let p = c.nrows();
    let q = ctrl.tracked_outputs.len();
    let wanted = (sc.duration / t).round();
    if !(wanted <= MAX_SAMPLES as f64) {
        return Err(LoopError::TooManySamples { samples: wanted });
    }
    let steps = (wanted as usize).max(1);
    let limits: Vec<Option<f64>> = if sc.limits.is_empty() { vec![None; m] } else { sc.limits.clone() };
    let (ki, aw) = match &ctrl.tracking {
        TrackingLaw::Integral { ki, anti_windup, .. } => (Some(ki.clone()), *anti_windup),
        _ => (None, AntiWindup::None),
    };
    let qi = if ki.is_some() { q } else { 0 };
    let ki_pinv = ki.as_ref().map(small_pseudo_inverse);
    let mut rng = match &sc.noise {
        Noise::Gaussian { seed, .. } => Some(Gaussian::new(*seed)),
        _ => None,
    };
    let mut out = LoopResponse::new(n, m, p, q, qi, steps + 1);
    let mut x = sc.x0.clone();
    let mut xhat = sc.xhat0.clone().unwrap_or_else(|| DVector::zeros(n));
    let mut z = DVector::<f64>::zeros(qi);
    let mut u_held = DVector::<f64>::zeros(m); // input applied over the interval ending at t_k
    let mut u_prev = DVector::<f64>::zeros(m); // delayed command applied over [t_k, t_{k+1})
    let eps = 1e-9 * t;
    let bound = 1e100 * (1.0 + x.norm());
    for k in 0..=steps {
        let tk = k as f64 * t;
        let r = step_value(&sc.reference, q, tk, sc.reference_time, eps);
        let w = step_value(&sc.disturbance, nd, tk, sc.disturbance_time, eps);
        let mut noise = DVector::<f64>::zeros(p);
        match &sc.noise {
            Noise::None => {}
            Noise::Gaussian { std, .. } => {
                if let Some(g) = rng.as_mut() {
                    for i in 0..p {
                        noise[i] = g.next() * std.get(i).copied().unwrap_or(0.0);
                    }
                }
            }
            Noise::Given(seq) => {
                for i in 0..p {
                    noise[i] = seq.get(i).and_then(|s| s.get(k)).copied().unwrap_or(0.0);
                }
            }
        }
        let y_true = c * &x + d * &u_held;
        let y = &y_true + &noise;
        let estimate = match (&ctrl.observer, ctrl.observer_form, &ctrl.current_gain) {
            (None, _, _) => x.clone(),
            (Some(_), ObserverForm::Current, Some(lc)) => &xhat + lc * (&y - c * &xhat - d * &u_held),
            (Some(_), _, _) => xhat.clone(),
        };
        let mut u_cmd = match &ctrl.tracking {
            TrackingLaw::None => -(&ctrl.k * &estimate),
            TrackingLaw::Feedforward { nx, nu } => nu * &r - &ctrl.k * (&estimate - nx * &r),
            TrackingLaw::Integral { ki, feedforward: None, .. } => -(&ctrl.k * &estimate) - ki * &z,
            TrackingLaw::Integral { ki, feedforward: Some((nx, nu)), .. } => nu * &r - &ctrl.k * (&estimate - nx * &r) - ki * &z,
        };
        if let Some(ku) = &ctrl.k_delay {
            // With feedforward the delayed input is fed back about its steady-state value N_u r.
            match ctrl.tracking.feedforward() {
                Some((_, nu)) => u_cmd -= ku * (&u_prev - nu * &r),
                None => u_cmd -= ku * &u_prev,
            }
        }
        let (u, clipped) = clip(&u_cmd, &limits);
        let u_applied = if ctrl.k_delay.is_some() { u_prev.clone() } else { u.clone() };
        out.time.push(tk);
        push(&mut out.outputs, &y_true);
        push(&mut out.measured, &y);
        push(&mut out.reference, &r);
        push(&mut out.states, &x);
        push(&mut out.estimates, &estimate);
        push(&mut out.inputs, &u_applied);
        push(&mut out.commanded, &u_cmd);
        push(&mut out.integrator, &z);
        if k == steps {
            break;
        }
        if let (Some(_), Some(kp)) = (&ki, &ki_pinv) {
            let yt = rows_of_vec(&y, &ctrl.tracked_outputs);
            let e = &r - yt;
            match aw {
                AntiWindup::Clamp if clipped => {}
                AntiWindup::BackCalculation { time_constant } => z += (e - kp * (&u - &u_cmd) / time_constant) * t,
                _ => z += e * t,
            }
        }
        xhat = match (&ctrl.observer, ctrl.observer_form, &ctrl.current_gain) {
            (None, _, _) => xhat,
            (Some(_), ObserverForm::Current, Some(_)) => phi * &estimate + gamma * &u_applied,
            (Some(l), _, _) => phi * &xhat + gamma * &u_applied + l * (&y - c * &xhat - d * &u_held),
        };
        x = phi * &x + gamma * &u_applied + gamma_w * &w;
        u_held = u_applied;
        if ctrl.k_delay.is_some() {
            u_prev = u;
        }
        if !(x.norm() <= bound) {
            out.diverged = true;
            break;
        }
    }
    Ok(out)
}

fn rows_of_vec(v: &DVector<f64>, rows: &[usize]) -> DVector<f64> {
    DVector::from_iterator(rows.len(), rows.iter().map(|&i| v[i]))
}

/// The continuous loop as one stacked model `s' = F0 s + Gr r + Gw w + Gu u` with the control
/// law `u = H s + J r`; `s` holds the plant state, then the estimate, then the integrators.
struct Stacked {
    f0: DMatrix<f64>,
    gr: DMatrix<f64>,
    gw: DMatrix<f64>,
    gu: DMatrix<f64>,
    h: DMatrix<f64>,
    j: DMatrix<f64>,
    /// Offsets of the estimate (the plant state when there is no observer) and the integrators.
    est: usize,
    oz: usize,
    /// Integrator states (0 without integral action).
    qi: usize,
}

fn stacked(a: &DMatrix<f64>, b: &DMatrix<f64>, e: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, ctrl: &LoopController) -> Stacked {
    let (n, m, q, nd) = (a.nrows(), b.ncols(), ctrl.tracked_outputs.len(), e.ncols());
    let has_obs = ctrl.observer.is_some();
    let qi = if matches!(ctrl.tracking, TrackingLaw::Integral { .. }) { q } else { 0 };
    let ns = n + if has_obs { n } else { 0 } + qi;
    let (ox, oh, oz) = (0, n, n + if has_obs { n } else { 0 });
    let ct = rows_of(c, &ctrl.tracked_outputs);
    let dt = rows_of(d, &ctrl.tracked_outputs);
    let mut f0 = DMatrix::<f64>::zeros(ns, ns);
    let mut gr = DMatrix::<f64>::zeros(ns, q);
    let mut gw = DMatrix::<f64>::zeros(ns, nd);
    let mut gu = DMatrix::<f64>::zeros(ns, m);
    f0.view_mut((ox, ox), (n, n)).copy_from(a);
    gu.view_mut((ox, 0), (n, m)).copy_from(b);
    gw.view_mut((ox, 0), (n, nd)).copy_from(e);
    if let Some(l) = &ctrl.observer {
        // x̂' = L C x + (A − L C) x̂ + B u  (the D terms cancel in y − ŷ).
        f0.view_mut((oh, ox), (n, n)).copy_from(&(l * c));
        f0.view_mut((oh, oh), (n, n)).copy_from(&(a - l * c));
        gu.view_mut((oh, 0), (n, m)).copy_from(b);
    }
    if qi > 0 {
        f0.view_mut((oz, ox), (q, n)).copy_from(&(-&ct));
        gu.view_mut((oz, 0), (q, m)).copy_from(&(-&dt));
        for i in 0..q {
            gr[(oz + i, i)] = 1.0;
        }
    }
    let mut h = DMatrix::<f64>::zeros(m, ns);
    let mut j = DMatrix::<f64>::zeros(m, q);
    let est = if has_obs { oh } else { ox };
    h.view_mut((0, est), (m, n)).copy_from(&(-&ctrl.k));
    match &ctrl.tracking {
        TrackingLaw::None => {}
        TrackingLaw::Feedforward { nx, nu } => j.copy_from(&(nu + &ctrl.k * nx)),
        TrackingLaw::Integral { ki, feedforward, .. } => {
            h.view_mut((0, oz), (m, q)).copy_from(&(-ki));
            if let Some((nx, nu)) = feedforward {
                j.copy_from(&(nu + &ctrl.k * nx));
            }
        }
    }
    Stacked { f0, gr, gw, gu, h, j, est, oz, qi }
}

/// The fine step: 1/20 of the fastest closed-loop time constant, 1 / max |λ(F_cl)| (common
/// practice for a simulation step), at most 1/2000 of the duration and 200 000 steps. The
/// spectral radius, not ‖F_cl‖: an observer's L C block can make the norm hundreds of times
/// larger than any eigenvalue (seen: 75 151 against 144 for the belt axis with an observer),
/// which only shrank the step, never changed an unsaturated result (its transitions are
/// exact), and cost 200 000 steps. Should the eigenvalues not converge, the norm is the (safe)
/// fallback. Returns (step, number of steps).
fn fine_step(fcl: &DMatrix<f64>, sc: &LoopScenario) -> (f64, usize) {
    let speed = crate::linalg::eigen::try_eigenvalues(fcl)
        .ok()
        .map(|v| v.iter().map(|z| z.norm()).fold(0.0, f64::max))
        .filter(|r| r.is_finite() && *r > 0.0)
        .or_else(|| crate::linalg::svd::try_norm2(fcl, crate::linalg::svd::SvdParams::default()).ok())
        .unwrap_or(1.0)
        .max(1e-12);
    let hstep = match sc.continuous_step {
        Some(s) if s.is_finite() && s > 0.0 => s,
        _ => (sc.duration / 2000.0).min(0.05 / speed),
    };
    let steps = ((sc.duration / hstep).round() as usize).clamp(1, 200_000);
    (sc.duration / steps as f64, steps)
}

/// The held-input (saturated) mode `s' = F_sat s + G_sat [r; w; u]`: `u` is an external held
/// input and the integrators follow the anti-windup rule.
fn saturated_mode(st: &Stacked, ctrl: &LoopController) -> (DMatrix<f64>, DMatrix<f64>) {
    let (ns, q, m, nd) = (st.f0.nrows(), st.gr.ncols(), st.gu.ncols(), st.gw.ncols());
    let exo = q + nd;
    let mut fsat = st.f0.clone();
    let mut gsat = DMatrix::<f64>::zeros(ns, exo + m);
    gsat.view_mut((0, 0), (ns, q)).copy_from(&st.gr);
    gsat.view_mut((0, q), (ns, nd)).copy_from(&st.gw);
    gsat.view_mut((0, exo), (ns, m)).copy_from(&st.gu);
    let TrackingLaw::Integral { ki, anti_windup, .. } = &ctrl.tracking else {
        return (fsat, gsat);
    };
    let oz = st.oz;
    match anti_windup {
        AntiWindup::None => {}
        AntiWindup::Clamp => {
            for i in 0..q {
                fsat.row_mut(oz + i).fill(0.0);
                gsat.row_mut(oz + i).fill(0.0);
            }
        }
        AntiWindup::BackCalculation { time_constant } => {
            // z' += −K_i⁺ (u_sat − H s − J r) / T_t.
            let kp = small_pseudo_inverse(ki) / *time_constant;
            let add_s = &kp * &st.h;
            let add_r = &kp * &st.j;
            for i in 0..q {
                for col in 0..ns {
                    fsat[(oz + i, col)] += add_s[(i, col)];
                }
                for col in 0..q {
                    gsat[(oz + i, col)] += add_r[(i, col)];
                }
                for col in 0..m {
                    gsat[(oz + i, exo + col)] -= kp[(i, col)];
                }
            }
        }
    }
    (fsat, gsat)
}

/// Exact transitions of one step (and of a fine sub-step) in both modes.
struct Transitions {
    ecl: DMatrix<f64>,
    bcl: DMatrix<f64>,
    esat: DMatrix<f64>,
    bsat: DMatrix<f64>,
}

impl Transitions {
    fn new(fcl: &DMatrix<f64>, gcl: &DMatrix<f64>, fsat: &DMatrix<f64>, gsat: &DMatrix<f64>, h: f64) -> Result<Self, LoopError> {
        let (ecl, bcl) = block_transition(fcl, gcl, h)?;
        let (esat, bsat) = block_transition(fsat, gsat, h)?;
        Ok(Transitions { ecl, bcl, esat, bsat })
    }

    /// One step from `s` with exogenous `v = [r; w]`: the closed loop, or the held saturated
    /// input when an input is clipped at the start of the step.
    fn advance(&self, st: &Stacked, limits: &[Option<f64>], s: &DVector<f64>, v: &DVector<f64>, r: &DVector<f64>) -> DVector<f64> {
        let (u, clipped) = clip(&(&st.h * s + &st.j * r), limits);
        if clipped {
            let exo = v.len();
            let mut vs = DVector::<f64>::zeros(exo + u.len());
            vs.rows_mut(0, exo).copy_from(v);
            vs.rows_mut(exo, u.len()).copy_from(&u);
            &self.esat * s + &self.bsat * vs
        } else {
            &self.ecl * s + &self.bcl * v
        }
    }
}

fn continuous(a: &DMatrix<f64>, b: &DMatrix<f64>, e: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>, ctrl: &LoopController, sc: &LoopScenario) -> Result<LoopResponse, LoopError> {
    let (n, m, p, q, nd) = (a.nrows(), b.ncols(), c.nrows(), ctrl.tracked_outputs.len(), e.ncols());
    let st = stacked(a, b, e, c, d, ctrl);
    let ns = st.f0.nrows();
    let limits: Vec<Option<f64>> = if sc.limits.is_empty() { vec![None; m] } else { sc.limits.clone() };
    let fcl = &st.f0 + &st.gu * &st.h;
    let (hstep, steps) = fine_step(&fcl, sc);
    // Exact transitions with held exogenous inputs: closed (unsaturated) and held-input (saturated).
    let exo = q + nd;
    let mut gcl = DMatrix::<f64>::zeros(ns, exo);
    gcl.view_mut((0, 0), (ns, q)).copy_from(&(&st.gr + &st.gu * &st.j));
    gcl.view_mut((0, q), (ns, nd)).copy_from(&st.gw);
    let (fsat, gsat) = saturated_mode(&st, ctrl);
    let coarse = Transitions::new(&fcl, &gcl, &fsat, &gsat, hstep)?;
    // The same over a fraction of the step, for the steps in which an input enters or leaves
    // saturation: the switch is then resolved to h / SWITCH_SUBSTEPS.
    let fine = Transitions::new(&fcl, &gcl, &fsat, &gsat, hstep / SWITCH_SUBSTEPS as f64)?;
    let mut s = DVector::<f64>::zeros(ns);
    s.rows_mut(0, n).copy_from(&sc.x0);
    if let (true, Some(xh)) = (ctrl.observer.is_some(), &sc.xhat0) {
        s.rows_mut(n, n).copy_from(xh);
    }
    let mut out = LoopResponse::new(n, m, p, q, st.qi, steps + 1);
    let eps = 1e-9 * hstep;
    let bound = 1e100 * (1.0 + sc.x0.norm());
    for k in 0..=steps {
        let tk = k as f64 * hstep;
        let r = step_value(&sc.reference, q, tk, sc.reference_time, eps);
        let w = step_value(&sc.disturbance, nd, tk, sc.disturbance_time, eps);
        let u_cmd = &st.h * &s + &st.j * &r;
        let (u, clipped) = clip(&u_cmd, &limits);
        let x = s.rows(0, n).into_owned();
        let y = c * &x + d * &u;
        out.time.push(tk);
        push(&mut out.outputs, &y);
        push(&mut out.measured, &y);
        push(&mut out.reference, &r);
        push(&mut out.states, &x);
        push(&mut out.estimates, &s.rows(st.est, n).into_owned());
        push(&mut out.inputs, &u);
        push(&mut out.commanded, &u_cmd);
        push(&mut out.integrator, &s.rows(st.oz, st.qi).into_owned());
        if k == steps {
            break;
        }
        let mut v = DVector::<f64>::zeros(exo);
        v.rows_mut(0, q).copy_from(&r);
        v.rows_mut(q, nd).copy_from(&w);
        let next = coarse.advance(&st, &limits, &s, &v, &r);
        // An input entered or left saturation during the step: redo it in fine sub-steps.
        let (_, clipped_next) = clip(&(&st.h * &next + &st.j * &r), &limits);
        s = if clipped_next != clipped { (0..SWITCH_SUBSTEPS).fold(s.clone(), |sub, _| fine.advance(&st, &limits, &sub, &v, &r)) } else { next };
        if !(s.norm() <= bound) {
            out.diverged = true;
            break;
        }
    }
    Ok(out)
}

/// Sub-steps of a fine step in which an input enters or leaves saturation (continuous loop).
const SWITCH_SUBSTEPS: usize = 32;

/// `exp([[F, G], [0, 0]] h)` → `(e^{F h}, ∫₀ʰ e^{F s} ds G)`.
fn block_transition(f: &DMatrix<f64>, g: &DMatrix<f64>, h: f64) -> Result<(DMatrix<f64>, DMatrix<f64>), LoopError> {
    if g.ncols() == 0 {
        return Ok((try_expm(&(f * h))?, DMatrix::zeros(f.nrows(), 0)));
    }
    Ok(try_zero_order_hold(f, g, h)?)
}

/// Step-response figures of one tracked output after a reference step.
#[derive(Debug, Clone, PartialEq)]
pub struct TrackingMetrics {
    /// 10–90 % rise time (s), `None` if the output never reaches 90 % of the step.
    pub rise_time: Option<f64>,
    /// Settling time after the step (s) into `band · |step|` around the reference.
    pub settling_time: Option<f64>,
    /// Overshoot beyond the reference, fraction of the step.
    pub overshoot: f64,
    /// Undershoot: the largest move the wrong way (against the step, from the value at the
    /// step), fraction of the step; what a non-minimum-phase output does first. Moves below
    /// 1e-9 of the step count as 0 (rounding).
    pub undershoot: f64,
    /// `r − y` at the end of the run.
    pub steady_state_error: f64,
}

/// Figures for a step of the reference at `t_ref` (from the value at `t_ref` to `r_final`),
/// evaluated up to `t_window_end` (e.g. the time a load disturbance strikes); the steady-state
/// error is taken at the end of the whole run.
pub fn tracking_metrics(t: &[f64], y: &[f64], t_ref: f64, r_final: f64, band: f64, t_window_end: f64) -> TrackingMetrics {
    let last = y.last().copied().unwrap_or(0.0);
    let end = t.iter().position(|&ti| ti >= t_window_end - 1e-12).map_or(y.len(), |i| i.max(1));
    let (t, y) = (&t[..end.min(t.len())], &y[..end.min(y.len())]);
    let mut m = tracking_metrics_in(t, y, t_ref, r_final, band);
    m.steady_state_error = r_final - last;
    m
}

fn tracking_metrics_in(t: &[f64], y: &[f64], t_ref: f64, r_final: f64, band: f64) -> TrackingMetrics {
    let start = t.iter().position(|&ti| ti >= t_ref - 1e-12).unwrap_or(0);
    let y0 = y.get(start).copied().unwrap_or(0.0);
    let step = r_final - y0;
    let last = y.last().copied().unwrap_or(0.0);
    if step == 0.0 || y.len() <= start + 1 {
        return TrackingMetrics { rise_time: None, settling_time: None, overshoot: 0.0, undershoot: 0.0, steady_state_error: r_final - last };
    }
    let frac = |v: f64| (v - y0) / step;
    let t10 = (start..y.len()).find(|&i| frac(y[i]) >= 0.1).map(|i| t[i]);
    let t90 = (start..y.len()).find(|&i| frac(y[i]) >= 0.9).map(|i| t[i]);
    let rise_time = match (t10, t90) {
        (Some(a), Some(b)) => Some(b - a),
        _ => None,
    };
    let limit = band * step.abs();
    let last_out = (start..y.len()).rev().find(|&i| (y[i] - r_final).abs() > limit);
    let settling_time = match last_out {
        None => Some(0.0),
        Some(i) if i + 1 >= y.len() => None,
        Some(i) => Some(t[i + 1] - t[start]),
    };
    let overshoot = (start..y.len()).map(|i| frac(y[i]) - 1.0).fold(0.0, f64::max);
    let undershoot = (start..y.len()).map(|i| -frac(y[i])).fold(0.0, f64::max);
    let undershoot = if undershoot < 1e-9 { 0.0 } else { undershoot };
    TrackingMetrics { rise_time, settling_time, overshoot, undershoot, steady_state_error: r_final - last }
}

#[cfg(test)]
#[path = "tests/loop_sim.rs"]
mod tests;
