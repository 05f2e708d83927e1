//! The fastest design the actuators allow.
//!
//! # Problem
//! Given a pole pattern `p₁ … pₙ` (a shape), actuator limits `|uᵢ| ≤ uᵢ_max` and the
//! situations the machine must handle (initial deviations `x₀`, reference steps `r`), find the
//! largest speed-up `α` such that the design with poles `α p₁ … α pₙ` never commands more than
//! the limits in any situation (linear, unsaturated response: the design is meant to stay
//! inside the limits, not to rely on saturation).
//!
//! # Method
//! `φ(α) = max over situations and inputs of peak |uᵢ(t)| / uᵢ_max`, computed by placing the
//! scaled poles ([`crate::place`]) and simulating exactly ([`crate::simulate`]); for a reference
//! step the deviation `e = x − N_x r` starts at `−N_x r` and `u = N_u r − K e` (feedforward from
//! the steady-state equations). Bisection on `log α` for `φ(α) = 1` between
//! [`SearchParams::min_factor`] and [`SearchParams::max_factor`]. Faster poles cost more control
//! effort (common practice), so `φ` normally increases with `α`; this is **checked**, not
//! assumed: `φ` is sampled at [`SearchParams::monotonicity_samples`] log-spaced factors and any
//! decrease is reported, because then bisection may have found one of several crossings.
//!
//! # Cost
//! One placement and one simulation per situation for each evaluation of `φ`: about
//! `log₂(range / tolerance) + samples` evaluations (≈ 35).
//!
//! # Failure modes
//! [`SearchError::LimitsExceededAtSlowest`] when even the slowest factor exceeds a limit;
//! placement or simulation errors are passed on with the factor at which they happened.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use crate::controller::feedforward_gains;
use crate::metrics;
use crate::place::{state_feedback_gain, PlacementParams};
use crate::simulate::{closed_loop_response, SimulationParams, SimulationSpec};

/// One situation the design must handle.
#[derive(Debug, Clone, PartialEq)]
pub enum Situation {
    /// Return from this initial deviation.
    InitialState(Vec<f64>),
    /// Follow a reference step (one value per output of `C`) from rest, with feedforward.
    ReferenceStep(Vec<f64>),
}

/// Search range and resolution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SearchParams {
    /// Smallest speed factor tried. Default 0.01.
    pub min_factor: f64,
    /// Largest speed factor tried. Default 100.
    pub max_factor: f64,
    /// Relative width of the final bracket. Default 1e-3.
    pub tolerance: f64,
    /// Bisection steps at most. Default 60.
    pub max_iterations: usize,
    /// Log-spaced samples for the monotonicity check. Default 12.
    pub monotonicity_samples: usize,
    /// Settling band for the reported settling time. Default 0.02.
    pub band: f64,
}

impl Default for SearchParams {
    fn default() -> Self {
        SearchParams { min_factor: 0.01, max_factor: 100.0, tolerance: 1e-3, max_iterations: 60, monotonicity_samples: 12, band: metrics::DEFAULT_BAND }
    }
}

/// Why the search failed.
#[derive(Debug, Clone, PartialEq)]
pub enum SearchError {
    NoSituations,
    NoLimits,
    Size { what: &'static str, expected: usize, found: usize },
    NeedsOutputs,
    /// Even the slowest factor exceeds a limit.
    LimitsExceededAtSlowest { factor: f64, ratio: f64, situation: usize, input: usize },
    /// A placement, tracking or simulation step failed at this factor.
    Step { factor: f64, message: String },
}

impl std::fmt::Display for SearchError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SearchError::NoSituations => write!(f, "the search needs at least one situation (an initial state or a reference step)"),
            SearchError::NoLimits => write!(f, "the search needs actuator limits (actuators.limit)"),
            SearchError::Size { what, expected, found } => write!(f, "{what}: {found} values given but {expected} are needed"),
            SearchError::NeedsOutputs => write!(f, "reference-step situations need outputs (plant.c)"),
            SearchError::LimitsExceededAtSlowest { factor, ratio, situation, input } => write!(
                f,
                "even at the slowest speed factor {factor} situation {} needs {ratio:.3} times the limit of input {}: the limits are too tight for this pole pattern and these situations",
                situation + 1,
                input + 1
            ),
            SearchError::Step { factor, message } => write!(f, "at speed factor {factor}: {message}"),
        }
    }
}

impl std::error::Error for SearchError {}

/// The outcome.
#[derive(Debug, Clone)]
pub struct SearchResult {
    /// The largest factor found with every input within its limit.
    pub speed_factor: f64,
    /// The scaled poles.
    pub poles: Vec<Complex64>,
    /// Situation (0-based) and input (0-based) that set the limit.
    pub limiting_situation: usize,
    pub limiting_input: usize,
    /// `φ` at the result (≤ 1).
    pub peak_ratio: f64,
    /// Per situation, the slowest state's settling time (s) at the result (`None`: not settled).
    pub settling_time: Vec<Option<f64>>,
    /// Whether `φ` was non-decreasing over the sampled range.
    pub monotonic: bool,
    /// `(factor, φ)` samples of the monotonicity check.
    pub samples: Vec<(f64, f64)>,
    /// The limits were never reached up to `max_factor`.
    pub limited_by_range: bool,
    pub evaluations: usize,
}

struct Evaluation {
    ratio: f64,
    situation: usize,
    input: usize,
    settling: Vec<Option<f64>>,
}

/// See the module documentation.
///
/// # Errors
/// See [`SearchError`].
pub fn fastest_within_limits(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    c: Option<&DMatrix<f64>>,
    pattern: &[Complex64],
    limits: &[f64],
    situations: &[Situation],
    params: SearchParams,
) -> Result<SearchResult, SearchError> {
    let n = a.nrows();
    let m = b.ncols();
    if situations.is_empty() {
        return Err(SearchError::NoSituations);
    }
    if limits.is_empty() {
        return Err(SearchError::NoLimits);
    }
    if limits.len() != m {
        return Err(SearchError::Size { what: "actuator limits", expected: m, found: limits.len() });
    }
    for s in situations {
        match s {
            Situation::InitialState(x) if x.len() != n => return Err(SearchError::Size { what: "initial state", expected: n, found: x.len() }),
            Situation::ReferenceStep(r) => match c {
                None => return Err(SearchError::NeedsOutputs),
                Some(c) if r.len() != c.nrows() => return Err(SearchError::Size { what: "reference step", expected: c.nrows(), found: r.len() }),
                _ => {}
            },
            _ => {}
        }
    }
    let ff = match c {
        Some(c) if situations.iter().any(|s| matches!(s, Situation::ReferenceStep(_))) => {
            let d = DMatrix::zeros(c.nrows(), m);
            Some(feedforward_gains(a, b, c, &d, false).map_err(|e| SearchError::Step { factor: 1.0, message: e.to_string() })?)
        }
        _ => None,
    };
    let mut evaluations = 0usize;
    let mut evaluate = |alpha: f64| -> Result<Evaluation, SearchError> {
        evaluations += 1;
        let poles: Vec<Complex64> = pattern.iter().map(|p| p * alpha).collect();
        let placement = state_feedback_gain(a, b, &poles, PlacementParams::default()).map_err(|e| SearchError::Step { factor: alpha, message: e.to_string() })?;
        let k = &placement.gain;
        let mut worst = Evaluation { ratio: 0.0, situation: 0, input: 0, settling: Vec::new() };
        for (si, s) in situations.iter().enumerate() {
            let (e0, offset) = match s {
                Situation::InitialState(x) => (DVector::from_column_slice(x), DVector::zeros(m)),
                Situation::ReferenceStep(r) => {
                    let (nx, nu) = ff.as_ref().ok_or(SearchError::NeedsOutputs)?;
                    let r = DVector::from_column_slice(r);
                    (-(nx * &r), nu * &r)
                }
            };
            let spec = SimulationSpec { initial_state: e0, duration: None, limits: Vec::new() };
            let resp = closed_loop_response(a, b, k, &spec, SimulationParams::default()).map_err(|e| SearchError::Step { factor: alpha, message: e.to_string() })?;
            for i in 0..m {
                let peak = resp.commanded[i].iter().map(|u| (u + offset[i]).abs()).fold(0.0, f64::max);
                let ratio = peak / limits[i];
                if ratio > worst.ratio {
                    worst.ratio = ratio;
                    worst.situation = si;
                    worst.input = i;
                }
            }
            let settle = resp
                .states
                .iter()
                .map(|x| metrics::settling_time(&resp.time, x, 0.0, params.band))
                .try_fold(0.0f64, |acc, s| s.map(|v| acc.max(v)));
            worst.settling.push(settle);
        }
        Ok(worst)
    };
    let lo0 = params.min_factor;
    let hi0 = params.max_factor;
    let at_lo = evaluate(lo0)?;
    if at_lo.ratio > 1.0 {
        return Err(SearchError::LimitsExceededAtSlowest { factor: lo0, ratio: at_lo.ratio, situation: at_lo.situation, input: at_lo.input });
    }
    let at_hi = evaluate(hi0)?;
    let (factor, best, limited_by_range) = if at_hi.ratio <= 1.0 {
        (hi0, at_hi, true)
    } else {
        let (mut lo, mut hi) = (lo0.ln(), hi0.ln());
        let mut best = at_lo;
        for _ in 0..params.max_iterations {
            if hi - lo <= params.tolerance {
                break;
            }
            let mid = 0.5 * (lo + hi);
            let e = evaluate(mid.exp())?;
            if e.ratio <= 1.0 {
                lo = mid;
                best = e;
            } else {
                hi = mid;
            }
        }
        (lo.exp(), best, false)
    };
    // Monotonicity check over [min, min(2·found, max)].
    let top = (2.0 * factor).min(hi0);
    let k = params.monotonicity_samples.max(2);
    let mut samples = Vec::with_capacity(k);
    for j in 0..k {
        let f = (lo0.ln() + (top.ln() - lo0.ln()) * j as f64 / (k - 1) as f64).exp();
        samples.push((f, evaluate(f)?.ratio));
    }
    let monotonic = samples.windows(2).all(|w| w[1].1 >= w[0].1 * (1.0 - 1e-9));
    Ok(SearchResult {
        speed_factor: factor,
        poles: pattern.iter().map(|p| p * factor).collect(),
        limiting_situation: best.situation,
        limiting_input: best.input,
        peak_ratio: best.ratio,
        settling_time: best.settling,
        monotonic,
        samples,
        limited_by_range,
        evaluations,
    })
}

#[cfg(test)]
#[path = "tests/search.rs"]
mod tests;
