//! The fastest design the actuators allow.
//!
//! # Problem
//! Given a pole pattern `p₁ … pₙ` (a shape, in the s-plane), actuator limits `|uᵢ| ≤ uᵢ_max`
//! and the situations the machine must handle (initial deviations `x₀`, reference steps `r`),
//! find the largest speed-up `α` such that the design with poles `α p₁ … α pₙ` (digital:
//! `z = e^{α pᵢ T}`, with any fixed poles such as a computation delay's) never commands more
//! than the limits in any situation (linear, unsaturated response: the design is meant to stay
//! inside the limits, not to rely on saturation).
//!
//! # Method
//! `φ(α) = max over situations and inputs of peak |uᵢ| / uᵢ_max`, computed by placing the
//! scaled poles ([`crate::place`]) and simulating exactly ([`crate::simulate`] in continuous
//! time; the sampled closed loop `x[k+1] = (Φ − Γ K) x[k]` when digital); for a reference step
//! the deviation `e = x − N_x r` starts at `−N_x r` and `u = N_u r − K e` (feedforward from the
//! steady-state equations).
//! 1. **A path of factors.** `φ` is evaluated at log-spaced factors from
//!    [`SearchParams::min_factor`] upwards ([`SearchParams::path_samples`] over the range), each
//!    placement continued from the previous one's eigenvectors
//!    ([`crate::place::state_feedback_gain_continued`]), so that with several inputs the gains
//!    follow one branch of the robust placement instead of jumping between local optima; the
//!    path stops at twice the first factor that exceeds a limit.
//! 2. **Bisection** on `log α` inside the first bracket, each placement continued from the
//!    largest factor already known to be within the limits.
//! 3. **Verification.** Faster poles cost more control effort (common practice), so `φ`
//!    normally increases with `α`; this is **checked**, not assumed: any decrease along the path
//!    is reported. The peak at the factor found must be within 97–100 % of the limit; when it is
//!    not (a jump of `φ` inside the final bracket), the result says why: a branch change of
//!    the placement, a non-monotone `φ`, or a discontinuity.
//!
//! # Cost
//! One placement (two with continuation) and one simulation per situation for each evaluation
//! of `φ`: up to `path_samples` plus `log₂(bracket / tolerance)` evaluations (≈ 40).
//!
//! # Failure modes
//! [`SearchError::LimitsExceededAtSlowest`] when even the slowest factor exceeds a limit;
//! placement or simulation errors are passed on with the factor at which they happened.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use crate::controller::feedforward_gains;
use crate::metrics;
use crate::place::{state_feedback_gain, state_feedback_gain_continued, Branch, Eigenvectors, PlacementParams};
use crate::simulate::{closed_loop_response, default_horizon, SimulationParams, SimulationSpec};

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
    /// Log-spaced factors of the path over the whole range (the path stops early). Default 40.
    pub path_samples: usize,
    /// Largest number of samples of a digital simulation. Default 50 000.
    pub max_samples: usize,
    /// Settling band for the reported settling time. Default 0.02.
    pub band: f64,
}

impl Default for SearchParams {
    fn default() -> Self {
        SearchParams { min_factor: 0.01, max_factor: 100.0, tolerance: 1e-3, max_iterations: 60, path_samples: 40, max_samples: 50_000, band: metrics::DEFAULT_BAND }
    }
}

/// Why the search failed.
#[derive(Debug, Clone, PartialEq)]
pub enum SearchError {
    NoSituations,
    NoLimits,
    Size {
        what: &'static str,
        expected: usize,
        found: usize,
    },
    NeedsOutputs,
    /// Even the slowest factor exceeds a limit.
    LimitsExceededAtSlowest {
        factor: f64,
        ratio: f64,
        situation: usize,
        input: usize,
    },
    /// A placement, tracking or simulation step failed at this factor.
    Step {
        factor: f64,
        message: String,
    },
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
                "even at the slowest speed factor {factor} situation {} needs {} the limit of input {}: the limits are too tight for this pole pattern and these situations",
                situation + 1,
                times(*ratio),
                input + 1
            ),
            SearchError::Step { factor, message } => write!(f, "at speed factor {factor}: {message}"),
        }
    }
}

impl std::error::Error for SearchError {}

/// `ratio` as "N times", readable at any size: fixed with three decimals up to 1e6, then with an
/// exponent (a peak can overflow the double range on an ill-conditioned request).
fn times(ratio: f64) -> String {
    if !ratio.is_finite() {
        "an unbounded multiple of".to_string()
    } else if ratio.abs() < 1e6 {
        format!("{ratio:.3} times")
    } else {
        format!("{ratio:.3e} times")
    }
}

/// Why the peak at the factor found is below 97 % of the limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SearchShortfall {
    /// The placement changed branch (or lost its branch) inside the final bracket: the gains,
    /// and with them the peak, jumped.
    BranchChange,
    /// The peak does not grow steadily with the speed-up along the path.
    NonMonotonic,
    /// The peak jumps inside the final bracket for another reason.
    Discontinuous,
}

/// The time domain of the search.
#[derive(Debug, Clone, PartialEq)]
pub enum SearchDomain {
    /// `A`, `B` continuous; the poles are `α pᵢ`.
    Continuous,
    /// `A`, `B` are `Φ`, `Γ` at `sample_time` (possibly with delay states after the plant's);
    /// the poles are `e^{α pᵢ T}` followed by `fixed_poles` (not scaled).
    Sampled { sample_time: f64, fixed_poles: Vec<Complex64> },
}

/// What is searched: the design pair, the pattern, the limits and situations.
#[derive(Debug, Clone)]
pub struct SearchProblem<'a> {
    pub a: &'a DMatrix<f64>,
    pub b: &'a DMatrix<f64>,
    /// Outputs on the pair's states (zero on states after the plant's); for reference steps.
    pub c: Option<&'a DMatrix<f64>>,
    pub pattern: &'a [Complex64],
    pub limits: &'a [f64],
    /// Initial states have the plant's states only; the pair's further states start at zero.
    pub situations: &'a [Situation],
    /// How many of the pair's states are the plant's.
    pub plant_states: usize,
    pub domain: SearchDomain,
}

/// The outcome.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchResult {
    /// The largest factor found with every input within its limit.
    pub speed_factor: f64,
    /// The scaled poles (s-plane).
    pub poles: Vec<Complex64>,
    /// Situation (0-based) and input (0-based) that set the limit.
    pub limiting_situation: usize,
    pub limiting_input: usize,
    /// `φ` at the result (≤ 1).
    pub peak_ratio: f64,
    /// Per situation, the slowest state's settling time (s) at the result (`None`: not settled).
    pub settling_time: Vec<Option<f64>>,
    /// Whether `φ` was non-decreasing along the path.
    pub monotonic: bool,
    /// `(factor, φ)` along the path.
    pub samples: Vec<(f64, f64)>,
    /// The limits were never reached up to `max_factor`.
    pub limited_by_range: bool,
    pub evaluations: usize,
    /// Why `peak_ratio` is below 0.97 (`None` when it is not, or when the range limited).
    pub shortfall: Option<SearchShortfall>,
    /// The closed-loop eigenvectors at the factor found: the design at that factor continues
    /// from them, so that it has the gain the search judged.
    pub eigenvectors: Option<Eigenvectors>,
}

struct Evaluation {
    ratio: f64,
    situation: usize,
    input: usize,
    settling: Vec<Option<f64>>,
    eigenvectors: Option<Eigenvectors>,
    branch: Branch,
}

/// [`fastest_within_limits_of`] for a continuous plant.
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
    let problem = SearchProblem { a, b, c, pattern, limits, situations, plant_states: a.nrows(), domain: SearchDomain::Continuous };
    fastest_within_limits_of(&problem, params)
}

/// Checks the sizes of a problem.
fn check_problem(p: &SearchProblem) -> Result<(), SearchError> {
    let m = p.b.ncols();
    if p.situations.is_empty() {
        return Err(SearchError::NoSituations);
    }
    if p.limits.is_empty() {
        return Err(SearchError::NoLimits);
    }
    if p.limits.len() != m {
        return Err(SearchError::Size { what: "actuator limits", expected: m, found: p.limits.len() });
    }
    for s in p.situations {
        match s {
            Situation::InitialState(x) if x.len() != p.plant_states => return Err(SearchError::Size { what: "initial state", expected: p.plant_states, found: x.len() }),
            Situation::ReferenceStep(r) => match p.c {
                None => return Err(SearchError::NeedsOutputs),
                Some(c) if r.len() != c.nrows() => return Err(SearchError::Size { what: "reference step", expected: c.nrows(), found: r.len() }),
                _ => {}
            },
            _ => {}
        }
    }
    Ok(())
}

/// See the module documentation: [`SearchRun`] run to its end.
///
/// # Errors
/// See [`SearchError`].
pub fn fastest_within_limits_of(problem: &SearchProblem, params: SearchParams) -> Result<SearchResult, SearchError> {
    let mut run = SearchRun::new(problem, params)?;
    for _ in 0..=run.max_steps() {
        if let Some(outcome) = run.step() {
            return outcome;
        }
    }
    // Unreachable: every step evaluates once or finishes, and the evaluations are capped.
    Err(SearchError::Step { factor: f64::NAN, message: "the search did not finish within its evaluation cap".into() })
}

/// A [`SearchProblem`] with its data owned, comparable exactly (a caller that remembers a
/// search keys it by this and the [`SearchParams`]).
#[derive(Debug, Clone, PartialEq)]
pub struct SearchData {
    pub a: DMatrix<f64>,
    pub b: DMatrix<f64>,
    pub c: Option<DMatrix<f64>>,
    pub pattern: Vec<Complex64>,
    pub limits: Vec<f64>,
    pub situations: Vec<Situation>,
    pub plant_states: usize,
    pub domain: SearchDomain,
}

impl SearchData {
    /// Owned copies of `problem`'s data.
    pub fn new(problem: &SearchProblem) -> SearchData {
        SearchData {
            a: problem.a.clone(),
            b: problem.b.clone(),
            c: problem.c.cloned(),
            pattern: problem.pattern.to_vec(),
            limits: problem.limits.to_vec(),
            situations: problem.situations.to_vec(),
            plant_states: problem.plant_states,
            domain: problem.domain.clone(),
        }
    }

    /// The problem, borrowing this data.
    pub fn problem(&self) -> SearchProblem<'_> {
        SearchProblem {
            a: &self.a,
            b: &self.b,
            c: self.c.as_ref(),
            pattern: &self.pattern,
            limits: &self.limits,
            situations: &self.situations,
            plant_states: self.plant_states,
            domain: self.domain.clone(),
        }
    }
}

/// Where a [`SearchRun`] is.
enum Stage {
    /// Step 1: the path, at its `next` factor.
    Path {
        next: usize,
        path: Vec<(f64, Evaluation)>,
        first_over: Option<usize>,
    },
    /// Step 2: bisection on `log α` in the bracket, `best` the evaluation at its low end.
    Bisect {
        bracket: Bracket,
        best: Evaluation,
        done: usize,
        branch_trouble: bool,
        samples: Vec<(f64, f64)>,
        monotonic: bool,
    },
    Finished,
}

/// The search of [`fastest_within_limits_of`], one evaluation of `φ` (one placement and the
/// situations' simulations) per [`SearchRun::step`], so that a caller can spread it over time
/// (the page runs a few steps per slice of its main thread). The steps are exactly those of
/// the one-piece search, in the same order: the result is the same, bit for bit.
pub struct SearchRun {
    problem: SearchData,
    params: SearchParams,
    ff: Option<(DMatrix<f64>, DMatrix<f64>)>,
    evaluations: usize,
    stage: Stage,
}

impl SearchRun {
    /// Checks the problem and prepares the run (the feedforward gains for reference steps).
    ///
    /// # Errors
    /// [`SearchError`] for a malformed problem or when the feedforward cannot be computed.
    pub fn new(problem: &SearchProblem, params: SearchParams) -> Result<SearchRun, SearchError> {
        check_problem(problem)?;
        let m = problem.b.ncols();
        let discrete = matches!(problem.domain, SearchDomain::Sampled { .. });
        let ff = match problem.c {
            Some(c) if problem.situations.iter().any(|s| matches!(s, Situation::ReferenceStep(_))) => {
                let d = DMatrix::zeros(c.nrows(), m);
                Some(feedforward_gains(problem.a, problem.b, c, &d, discrete).map_err(|e| SearchError::Step { factor: 1.0, message: e.to_string() })?)
            }
            _ => None,
        };
        let problem = SearchData::new(problem);
        Ok(SearchRun { problem, params, ff, evaluations: 0, stage: Stage::Path { next: 0, path: Vec::new(), first_over: None } })
    }

    /// Evaluations of `φ` so far.
    pub fn evaluations(&self) -> usize {
        self.evaluations
    }

    /// The most evaluations the run can make: the path's factors and the bisection's cap.
    pub fn max_steps(&self) -> usize {
        self.params.path_samples.max(2) + self.params.max_iterations
    }

    /// Evaluates `φ` once (or finishes); `Some` with the outcome once the search is over (a
    /// later call returns an error saying that it has finished).
    pub fn step(&mut self) -> Option<Result<SearchResult, SearchError>> {
        // A stage change evaluates nothing: at most two of them before an evaluation or the end.
        for _ in 0..3 {
            let stage = std::mem::replace(&mut self.stage, Stage::Finished);
            let (stage, outcome) = match stage {
                Stage::Path { next, path, first_over } => self.path_step(next, path, first_over),
                Stage::Bisect { bracket, best, done, branch_trouble, samples, monotonic } => self.bisect_step(bracket, best, done, branch_trouble, samples, monotonic),
                Stage::Finished => (Stage::Finished, Some(StepOutcome::Done(Err(SearchError::Step { factor: f64::NAN, message: "the search has already finished".into() })))),
            };
            self.stage = stage;
            match outcome {
                Some(StepOutcome::Evaluated) => return None,
                Some(StepOutcome::Done(r)) => return Some(r),
                None => continue,
            }
        }
        None
    }

    fn evaluate(&mut self, alpha: f64, start: Option<&Eigenvectors>) -> Result<Evaluation, SearchError> {
        self.evaluations += 1;
        evaluate_at(&self.problem.problem(), self.ff.as_ref(), alpha, start, self.params)
    }

    /// One factor of the path, or the move to the bisection (or the end) once the path is over.
    fn path_step(&mut self, next: usize, mut path: Vec<(f64, Evaluation)>, mut first_over: Option<usize>) -> (Stage, Option<StepOutcome>) {
        let (lo0, hi0) = (self.params.min_factor, self.params.max_factor);
        let count = self.params.path_samples.max(2);
        let step = (hi0.ln() - lo0.ln()) / (count - 1) as f64;
        let f = (lo0.ln() + step * next as f64).exp();
        let over = next >= count || first_over.is_some_and(|i| f > 2.0 * path[i].0 * (1.0 + 1e-12));
        if over {
            return self.after_path(path, first_over);
        }
        let e = match self.evaluate(f, path.last().and_then(|(_, e)| e.eigenvectors.as_ref())) {
            Ok(e) => e,
            Err(err) => return (Stage::Finished, Some(StepOutcome::Done(Err(err)))),
        };
        if next == 0 && e.ratio > 1.0 {
            return (Stage::Finished, Some(StepOutcome::Done(Err(SearchError::LimitsExceededAtSlowest { factor: lo0, ratio: e.ratio, situation: e.situation, input: e.input }))));
        }
        if first_over.is_none() && e.ratio > 1.0 {
            first_over = Some(path.len());
        }
        path.push((f, e));
        (Stage::Path { next: next + 1, path, first_over }, Some(StepOutcome::Evaluated))
    }

    /// The path is over: the result when no factor exceeded a limit, else the first bracket.
    fn after_path(&mut self, mut path: Vec<(f64, Evaluation)>, first_over: Option<usize>) -> (Stage, Option<StepOutcome>) {
        let samples: Vec<(f64, f64)> = path.iter().map(|(f, e)| (*f, e.ratio)).collect();
        let monotonic = samples.windows(2).all(|w| w[1].1 >= w[0].1 * (1.0 - 1e-9));
        let Some(over) = first_over else {
            let outcome = match path.pop() {
                Some((f, best)) => Ok(finish(&self.problem.problem(), f, best, samples, monotonic, true, self.evaluations, None)),
                None => Err(SearchError::NoSituations),
            };
            return (Stage::Finished, Some(StepOutcome::Done(outcome)));
        };
        path.truncate(over + 1);
        let (Some((hi_f, hi_e)), Some((lo_f, best))) = (path.pop(), path.pop()) else {
            return (Stage::Finished, Some(StepOutcome::Done(Err(SearchError::NoSituations))));
        };
        let branch_trouble = matches!(hi_e.branch, Branch::Changed { .. } | Branch::Lost { .. });
        (Stage::Bisect { bracket: Bracket { lo: lo_f.ln(), hi: hi_f.ln(), lo_f }, best, done: 0, branch_trouble, samples, monotonic }, None)
    }

    /// One bisection step, or the result once the bracket is narrow enough (or the cap reached).
    fn bisect_step(&mut self, bracket: Bracket, mut best: Evaluation, done: usize, mut branch_trouble: bool, samples: Vec<(f64, f64)>, monotonic: bool) -> (Stage, Option<StepOutcome>) {
        let Bracket { mut lo, mut hi, mut lo_f } = bracket;
        if done >= self.params.max_iterations || hi - lo <= self.params.tolerance {
            // 3. Verification at the factor found.
            let reason = if branch_trouble {
                SearchShortfall::BranchChange
            } else if !monotonic {
                SearchShortfall::NonMonotonic
            } else {
                SearchShortfall::Discontinuous
            };
            let shortfall = (best.ratio < 0.97).then_some(reason);
            let result = finish(&self.problem.problem(), lo_f, best, samples, monotonic, false, self.evaluations, shortfall);
            return (Stage::Finished, Some(StepOutcome::Done(Ok(result))));
        }
        let mid = 0.5 * (lo + hi);
        let e = match self.evaluate(mid.exp(), best.eigenvectors.as_ref()) {
            Ok(e) => e,
            Err(err) => return (Stage::Finished, Some(StepOutcome::Done(Err(err)))),
        };
        branch_trouble |= matches!(e.branch, Branch::Changed { .. } | Branch::Lost { .. });
        if e.ratio <= 1.0 {
            lo = mid;
            lo_f = mid.exp();
            best = e;
        } else {
            hi = mid;
        }
        (Stage::Bisect { bracket: Bracket { lo, hi, lo_f }, best, done: done + 1, branch_trouble, samples, monotonic }, Some(StepOutcome::Evaluated))
    }
}

/// The bisection's bracket: `[lo, hi]` in `log α`, and the factor at `lo` as evaluated.
struct Bracket {
    lo: f64,
    hi: f64,
    lo_f: f64,
}

/// What one stage step did.
enum StepOutcome {
    Evaluated,
    Done(Result<SearchResult, SearchError>),
}

#[allow(clippy::too_many_arguments)]
fn finish(
    problem: &SearchProblem,
    factor: f64,
    best: Evaluation,
    samples: Vec<(f64, f64)>,
    monotonic: bool,
    limited_by_range: bool,
    evaluations: usize,
    shortfall: Option<SearchShortfall>,
) -> SearchResult {
    SearchResult {
        speed_factor: factor,
        poles: problem.pattern.iter().map(|p| p * factor).collect(),
        limiting_situation: best.situation,
        limiting_input: best.input,
        peak_ratio: best.ratio,
        settling_time: best.settling,
        monotonic,
        samples,
        limited_by_range,
        evaluations,
        shortfall,
        eigenvectors: best.eigenvectors,
    }
}

/// The design poles at factor `alpha`.
fn design_poles(problem: &SearchProblem, alpha: f64) -> Vec<Complex64> {
    match &problem.domain {
        SearchDomain::Continuous => problem.pattern.iter().map(|p| p * alpha).collect(),
        SearchDomain::Sampled { sample_time, fixed_poles } => {
            let mut z = crate::plane::z_from_s_all(&problem.pattern.iter().map(|p| p * alpha).collect::<Vec<_>>(), *sample_time);
            z.extend(fixed_poles.iter().copied());
            z
        }
    }
}

/// `φ(α)`: place (continued from `start` when given) and simulate every situation.
fn evaluate_at(problem: &SearchProblem, ff: Option<&(DMatrix<f64>, DMatrix<f64>)>, alpha: f64, start: Option<&Eigenvectors>, params: SearchParams) -> Result<Evaluation, SearchError> {
    let (a, b) = (problem.a, problem.b);
    let (n, m) = (a.nrows(), b.ncols());
    let poles = design_poles(problem, alpha);
    let pp = PlacementParams {
        domain: if matches!(problem.domain, SearchDomain::Continuous) { crate::analysis::Domain::Continuous } else { crate::analysis::Domain::Discrete },
        ..PlacementParams::default()
    };
    let placement = match start {
        Some(s) => state_feedback_gain_continued(a, b, &poles, pp, s),
        None => state_feedback_gain(a, b, &poles, pp),
    }
    .map_err(|e| SearchError::Step { factor: alpha, message: e.to_string() })?;
    let k = &placement.gain;
    let mut worst = Evaluation { ratio: 0.0, situation: 0, input: 0, settling: Vec::new(), eigenvectors: placement.eigenvectors.clone(), branch: placement.branch };
    for (si, s) in problem.situations.iter().enumerate() {
        let (e0, offset) = match s {
            Situation::InitialState(x) => {
                let mut e0 = DVector::zeros(n);
                e0.rows_mut(0, x.len()).copy_from(&DVector::from_column_slice(x));
                (e0, DVector::zeros(m))
            }
            Situation::ReferenceStep(r) => {
                let (nx, nu) = ff.ok_or(SearchError::NeedsOutputs)?;
                let r = DVector::from_column_slice(r);
                (-(nx * &r), nu * &r)
            }
        };
        let (time, states, commanded) = match &problem.domain {
            SearchDomain::Continuous => {
                let spec = SimulationSpec { initial_state: e0, duration: None, limits: Vec::new() };
                let resp = closed_loop_response(a, b, k, &spec, SimulationParams::default()).map_err(|e| SearchError::Step { factor: alpha, message: e.to_string() })?;
                (resp.time, resp.states, resp.commanded)
            }
            SearchDomain::Sampled { sample_time, .. } => sampled_response(a, b, k, &e0, problem.pattern, alpha, *sample_time, params.max_samples),
        };
        for i in 0..m {
            let peak = commanded[i].iter().map(|u| (u + offset[i]).abs()).fold(0.0, f64::max);
            let ratio = peak / problem.limits[i];
            if ratio > worst.ratio {
                worst.ratio = ratio;
                worst.situation = si;
                worst.input = i;
            }
        }
        let settle = states.iter().map(|x| metrics::settling_time(&time, x, 0.0, params.band)).try_fold(0.0f64, |acc, s| s.map(|v| acc.max(v)));
        worst.settling.push(settle);
    }
    Ok(worst)
}

/// The sampled closed loop `x[k+1] = (Φ − Γ K) x[k]`, `u[k] = −K x[k]`, over the horizon of
/// [`default_horizon`] for the scaled s-plane pattern (at least 20 samples, at most `cap`):
/// `(times, states, commanded inputs)`.
#[allow(clippy::too_many_arguments)]
fn sampled_response(a: &DMatrix<f64>, b: &DMatrix<f64>, k: &DMatrix<f64>, x0: &DVector<f64>, pattern: &[Complex64], alpha: f64, t: f64, cap: usize) -> (Vec<f64>, Vec<Vec<f64>>, Vec<Vec<f64>>) {
    let (n, m) = (a.nrows(), b.ncols());
    let scaled: Vec<Complex64> = pattern.iter().map(|p| p * alpha).collect();
    let wanted = (default_horizon(&scaled, false) / t).ceil();
    let samples = if wanted.is_finite() { (wanted as usize).clamp(20, cap.max(20)) } else { cap.max(20) };
    let closed = a - b * k;
    let mut x = x0.clone();
    let mut time = Vec::with_capacity(samples + 1);
    let mut states = (0..n).map(|_| Vec::with_capacity(samples + 1)).collect::<Vec<_>>();
    let mut commanded = (0..m).map(|_| Vec::with_capacity(samples + 1)).collect::<Vec<_>>();
    let bound = 1e100 * (1.0 + x.norm());
    for step in 0..=samples {
        let u = -(k * &x);
        time.push(step as f64 * t);
        for i in 0..n {
            states[i].push(x[i]);
        }
        for i in 0..m {
            commanded[i].push(u[i]);
        }
        x = &closed * &x;
        if !(x.norm() <= bound) {
            break;
        }
    }
    (time, states, commanded)
}

#[cfg(test)]
#[path = "tests/search.rs"]
mod tests;
