//! Step responses and the half-power frequency of all-pole prototypes: an exact cascade of
//! first- and second-order sections propagated by matrix exponentials (see the module header).

#[allow(unused_imports)]
use super::*;

// ----------------------------------------------------------------------------
// step responses and frequency
// ----------------------------------------------------------------------------

/// Cascade realisation of `Π(−pₖ) / Π(s − pₖ)` driven by a unit step.
pub(crate) struct Cascade {
    pub(crate) a: DMatrix<f64>,
    pub(crate) b: DMatrix<f64>,
    /// Index of the state that is the output.
    pub(crate) output: usize,
}

pub(crate) fn check_response_poles(poles: &[Complex64]) -> Result<(), PatternError> {
    if poles.is_empty() {
        return Err(PatternError::InvalidValue { quantity: "the number of poles", value: 0.0, allowed: "at least 1" });
    }
    check_conjugate_pairs(poles)?;
    if let Some(p) = poles.iter().find(|p| p.re >= 0.0) {
        if p.norm() == 0.0 {
            return Err(PatternError::PoleAtOrigin);
        }
        return Err(PatternError::NotStable { pole: *p });
    }
    Ok(())
}

pub(crate) fn cascade(poles: &[Complex64]) -> Cascade {
    // Sections: a real pole p → one state y' = p y + (−p) v; a pair (re ± j im, ω = |p|)
    // → states (y, w = y'/ω): y' = ω w, w' = −ω y + 2 re w + ω v. v = previous output.
    let mut sections: Vec<Complex64> = poles.iter().copied().filter(|p| p.im >= 0.0).collect();
    sort_eigenvalues(&mut sections);
    let n: usize = sections.iter().map(|p| if p.im > 0.0 { 2 } else { 1 }).sum();
    let mut a = DMatrix::<f64>::zeros(n, n);
    let mut b = DMatrix::<f64>::zeros(n, 1);
    let mut previous: Option<usize> = None;
    let mut next = 0;
    for p in sections {
        if p.im > 0.0 {
            let (y, w) = (next, next + 1);
            let omega = p.norm();
            a[(y, w)] = omega;
            a[(w, y)] = -omega;
            a[(w, w)] = 2.0 * p.re;
            match previous {
                None => b[(w, 0)] = omega,
                Some(v) => a[(w, v)] = omega,
            }
            previous = Some(y);
            next += 2;
        } else {
            let y = next;
            a[(y, y)] = p.re;
            match previous {
                None => b[(y, 0)] = -p.re,
                Some(v) => a[(y, v)] = -p.re,
            }
            previous = Some(y);
            next += 1;
        }
    }
    // invariant: poles is non-empty (checked by check_response_poles), so at least one
    // section was built and `previous` is set; 0 is never used.
    Cascade { a, b, output: previous.unwrap_or(0) }
}

/// Unit-step response sampled on a uniform grid.
#[derive(Debug, Clone, PartialEq)]
pub struct StepResponse {
    /// Sample times `0, h, 2h, …` (s).
    pub time: Vec<f64>,
    /// Output `y(t)` of `p(0)/p(s)` at those times.
    pub output: Vec<f64>,
}

/// Figures of a [`StepResponse`] read off its grid (final value 1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepFigures {
    /// First grid time after the last sample with `|y − 1| > band`; `None` if the last
    /// sample is still outside.
    pub settling_time: Option<f64>,
    /// `max(0, max y − 1)`.
    pub overshoot: f64,
    /// Time of the largest sample.
    pub peak_time: f64,
    /// 10 %–90 % rise time, linearly interpolated between samples; `None` if 90 % is
    /// never reached.
    pub rise_time: Option<f64>,
}

pub(crate) const MAX_STEPS: usize = 1_000_000;

pub(crate) fn require_steps(steps: usize) -> Result<(), PatternError> {
    require("the number of grid steps", steps as f64, (10..=MAX_STEPS).contains(&steps), "between 10 and 1000000")
}

/// Sample times, states and outputs of a simulated step response.
pub(crate) type Trajectory = (Vec<f64>, Vec<DVector<f64>>, Vec<f64>);

pub(crate) fn simulate(c: &Cascade, horizon: f64, steps: usize) -> Result<Trajectory, PatternError> {
    let h = horizon / steps as f64;
    let (phi, gamma) = try_zero_order_hold(&c.a, &c.b, h)?;
    let gamma = gamma.column(0).into_owned();
    let mut x = DVector::<f64>::zeros(c.a.nrows());
    let mut t = Vec::with_capacity(steps + 1);
    let mut xs = Vec::with_capacity(steps + 1);
    let mut y = Vec::with_capacity(steps + 1);
    for k in 0..=steps {
        t.push(k as f64 * h);
        y.push(x[c.output]);
        xs.push(x.clone());
        x = &phi * &x + &gamma;
    }
    Ok((t, xs, y))
}

/// Unit-step response of `p(0)/p(s)` for the given poles on `steps` intervals of
/// `[0, horizon]`, propagated exactly by the zero-order hold.
///
/// # Errors
/// [`PatternError::Poles`], [`PatternError::NotStable`], [`PatternError::PoleAtOrigin`],
/// [`PatternError::InvalidValue`] for a non-positive horizon or `steps` outside
/// 10 ..= 1 000 000, or an exponential failure.
pub fn step_response(poles: &[Complex64], horizon: f64, steps: usize) -> Result<StepResponse, PatternError> {
    check_response_poles(poles)?;
    require("the horizon", horizon, horizon > 0.0, "positive (seconds)")?;
    require_steps(steps)?;
    let (time, _, output) = simulate(&cascade(poles), horizon, steps)?;
    Ok(StepResponse { time, output })
}

/// Settling time, overshoot, peak time and rise time of a step response (final value 1),
/// on its grid.
pub fn step_figures(response: &StepResponse, band: f64) -> StepFigures {
    let t = &response.time;
    let y = &response.output;
    let settling_time = match y.iter().rposition(|v| (v - 1.0).abs() > band) {
        None => Some(0.0),
        Some(i) => t.get(i + 1).copied(),
    };
    let (peak_index, peak) = y.iter().enumerate().fold((0, f64::NEG_INFINITY), |acc, (i, &v)| if v > acc.1 { (i, v) } else { acc });
    let crossing = |level: f64| -> Option<f64> {
        let i = y.iter().position(|&v| v >= level)?;
        if i == 0 {
            return t.first().copied();
        }
        let (t0, t1) = (*t.get(i - 1)?, *t.get(i)?);
        let (y0, y1) = (y[i - 1], y[i]);
        Some(t0 + (level - y0) / (y1 - y0) * (t1 - t0))
    };
    let rise_time = match (crossing(RISE_LEVELS.0), crossing(RISE_LEVELS.1)) {
        (Some(a), Some(b)) => Some(b - a),
        _ => None,
    };
    StepFigures { settling_time, overshoot: (peak - 1.0).max(0.0), peak_time: t.get(peak_index).copied().unwrap_or(0.0), rise_time }
}

/// Settling time of the unit-step response of `p(0)/p(s)`: the last instant at which
/// `|y − 1| > band`. Found on a grid of `params.steps` intervals over a horizon that is
/// doubled (at most `params.max_horizon_doublings` times) until the response stays in
/// the band for the whole second half, then refined inside the last grid interval by
/// bisection on the exactly propagated state.
///
/// # Errors
/// [`PatternError::InvalidValue`] for a band outside `(0, 1)` or invalid params;
/// [`PatternError::Poles`], [`PatternError::NotStable`], [`PatternError::PoleAtOrigin`];
/// [`PatternError::NotSettled`] when the doublings run out; exponential failures.
pub fn step_settling_time(poles: &[Complex64], band: f64, params: &ResponseParams) -> Result<f64, PatternError> {
    require_band(band)?;
    check_response_poles(poles)?;
    require_steps(params.steps)?;
    let c = cascade(poles);
    let slowest = poles.iter().map(|p| -p.re).fold(f64::INFINITY, f64::min);
    let mut horizon = (-band.ln() + poles.len() as f64) / slowest;
    for _ in 0..=params.max_horizon_doublings {
        let (t, xs, y) = simulate(&c, horizon, params.steps)?;
        // y[0] = 0 is always outside the band (band < 1), so a last outside sample exists.
        let last_outside = y.iter().rposition(|v| (v - 1.0).abs() > band).unwrap_or(0);
        if last_outside + 1 < y.len() && t[last_outside + 1] <= 0.5 * horizon {
            let h = t[1] - t[0];
            let x0 = &xs[last_outside];
            let outside = |tau: f64| -> Result<bool, PatternError> {
                let (phi, gamma) = try_zero_order_hold(&c.a, &c.b, tau)?;
                let x = phi * x0 + gamma.column(0);
                Ok((x[c.output] - 1.0).abs() > band)
            };
            let (mut lo, mut hi) = (0.0, h);
            for _ in 0..params.bisection_iterations {
                let mid = 0.5 * (lo + hi);
                if mid <= lo || mid >= hi {
                    break;
                }
                if outside(mid)? {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            return Ok(t[last_outside] + 0.5 * (lo + hi));
        }
        horizon *= 2.0;
    }
    Err(PatternError::NotSettled { horizon: horizon / 2.0 })
}

/// `ln |H(jω)|² − ln(1/2)` for `H = Π|pₖ| / Π(jω − pₖ)`; positive below the half-power point.
pub(crate) fn log_gain_above_half(poles: &[Complex64], w: f64) -> f64 {
    let jw = Complex64::new(0.0, w);
    poles.iter().map(|p| 2.0 * (p.norm().ln() - (jw - p).norm().ln())).sum::<f64>() + std::f64::consts::LN_2
}

/// Lowest frequency at which `|H(jω)|² = Π|pₖ|² / Π|jω − pₖ|²` falls to 1/2: a scan
/// upwards in steps of ×2^{1/8} from 1000 times below the smallest `|pₖ|` (at most
/// `params.max_frequency_steps` steps), then bisection on `log ω`.
///
/// # Errors
/// [`PatternError::Poles`] for non-conjugate poles, [`PatternError::PoleAtOrigin`],
/// [`PatternError::InvalidValue`] for an empty list, or
/// [`PatternError::NoHalfPowerFrequency`] when the scan runs out.
pub fn half_power_frequency(poles: &[Complex64], params: &ResponseParams) -> Result<f64, PatternError> {
    if poles.is_empty() {
        return Err(PatternError::InvalidValue { quantity: "the number of poles", value: 0.0, allowed: "at least 1" });
    }
    check_conjugate_pairs(poles)?;
    let smallest = poles.iter().map(|p| p.norm()).fold(f64::INFINITY, f64::min);
    if smallest == 0.0 {
        return Err(PatternError::PoleAtOrigin);
    }
    let ratio = 2f64.powf(0.125);
    let mut lo = 1e-3 * smallest;
    for _ in 0..params.max_frequency_steps {
        let hi = lo * ratio;
        if log_gain_above_half(poles, hi) <= 0.0 {
            let (mut a, mut b) = (lo.ln(), hi.ln());
            for _ in 0..params.bisection_iterations {
                let mid = 0.5 * (a + b);
                if mid <= a || mid >= b {
                    break;
                }
                if log_gain_above_half(poles, mid.exp()) > 0.0 {
                    a = mid;
                } else {
                    b = mid;
                }
            }
            return Ok((0.5 * (a + b)).exp());
        }
        lo = hi;
    }
    Err(PatternError::NoHalfPowerFrequency { searched_up_to: lo })
}
