//! The fourth stage: the free response from the initial state (continuous, or the sampled
//! regulator of a digital design) and, when anything beyond plain state feedback was asked
//! for, the whole loop (observer, tracking, integral action, delay, noise, load step).
//! Signals are decimated to about 1000 points for the result; metrics use every step.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use super::gains::Gains;
use super::pair::DesignPair;
use super::setup::{infeasible, output_matrices, Setup};
use crate::controller::ObserverForm;
use crate::linalg::eigen::try_eigenvalues;
use crate::loop_sim::{LoopController, LoopError, LoopResponse, LoopScenario, Noise, TrackingLaw};
use crate::metrics;
use crate::plant::Plant;
use crate::result::{pair as pole_pair, InputLoopMetrics, LoopResult, OutputLoopMetrics, SimulationResult};
use crate::simulate::{closed_loop_response, default_horizon, SimulationParams, SimulationSpec};
use crate::warnings::{Warning, WarningCode};
use crate::{fmt_num, ControllerSpec, DesignError, FieldPath as P, InputError, TrackingSpec};

/// Most points kept per signal in the result.
const KEPT_POINTS: usize = 1000;

/// Every `stride`-th sample and the last one.
fn decimate(v: &[f64], stride: usize) -> Vec<f64> {
    let mut out: Vec<f64> = v.iter().step_by(stride).cloned().collect();
    if !v.is_empty() && (v.len() - 1) % stride != 0 {
        if let Some(last) = v.last() {
            out.push(*last);
        }
    }
    out
}

fn stride_for(len: usize) -> usize {
    len.div_ceil(KEPT_POINTS).max(1)
}

/// Simulates a loop around the plant as given: continuous (any controller) or discrete.
fn run_loop(plant: &Plant, spec: &ControllerSpec, ctrl: &LoopController, sc: &LoopScenario) -> Result<LoopResponse, LoopError> {
    let (c, d) = output_matrices(plant);
    if spec.plant_sample_time.is_some() {
        crate::loop_sim::simulate_sampled_loop(plant.a(), plant.b(), &c, &d, ctrl, sc)
    } else {
        crate::loop_sim::simulate_loop(plant.a(), plant.b(), &c, &d, ctrl, sc)
    }
}

/// Shared inputs of both simulations.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Horizon {
    pub x0: Vec<f64>,
    pub x0_chosen: bool,
    pub limits: Vec<Option<f64>>,
    /// The simulated time when none is given ([`default_horizon`] of the controller and observer poles).
    pub auto: f64,
}

pub(super) fn horizon(s: &Setup, pair: &DesignPair, g: &Gains) -> Horizon {
    let (x0, x0_chosen) = match &s.req.initial_state {
        Some(x) => (x.clone(), false),
        None => ((0..s.n).map(|i| if i == 0 { 1.0 } else { 0.0 }).collect(), true),
    };
    let limits = if s.req.limits.is_empty() { vec![None; s.m] } else { s.req.limits.clone() };
    let mut all_s = s.to_s(&pair.base_poles);
    if let Some((_, op, _)) = &g.observer {
        all_s.extend(s.design_to_s(op));
    }
    let limited = limits.iter().any(|l| l.is_some());
    let mut auto = default_horizon(&all_s, limited);
    if let Some(ts) = s.t {
        // Poles at z = 0 (deadbeat) have no s-plane image: such a loop settles within as many
        // samples as it has of them; show that many and some more.
        let at_origin = all_s.iter().filter(|z| !(z.re.is_finite() && z.im.is_finite())).count();
        if at_origin > 0 {
            let finite: Vec<Complex64> = all_s.iter().copied().filter(|z| z.re.is_finite() && z.im.is_finite()).collect();
            let from_finite = if finite.is_empty() { 0.0 } else { auto };
            auto = from_finite.max((4 * at_origin).max(20) as f64 * ts * if limited { 2.0 } else { 1.0 });
        }
    }
    Horizon { x0, x0_chosen, limits, auto }
}

/// A simulated time chosen from the poles, cut to the scenario's sample cap (said in a note):
/// only a time the user typed beyond the cap is an error.
fn capped(s: &Setup, chosen: f64, warnings: &mut Vec<Warning>) -> f64 {
    match (s.t, s.spec.scenario.max_samples) {
        (Some(ts), Some(cap)) if !(chosen / ts <= cap) => {
            let longest = cap * ts;
            if !warnings.iter().any(|w| w.code == WarningCode::SimulationShortened) {
                warnings.push(Warning::new(
                    WarningCode::SimulationShortened,
                    format!(
                        "The simulated time chosen from the slowest pole, {} s, would take {:.0} samples at T = {} s; it was cut to {} s ({} samples): the slowest response may not have settled by then. Give a simulated time (at most {} s at this sample time) or a faster slowest pole to see more.",
                        fmt_num(chosen),
                        (chosen / ts).ceil(),
                        fmt_num(ts),
                        fmt_num(longest),
                        cap,
                        fmt_num(longest)
                    ),
                ));
            }
            longest
        }
        _ => chosen,
    }
}

/// Refuses a digital simulation longer than the scenario's sample cap before it is run.
fn check_samples(s: &Setup, duration: f64) -> Result<(), DesignError> {
    match (s.t, s.spec.scenario.max_samples) {
        (Some(ts), Some(cap)) if !(duration / ts <= cap) => Err(DesignError::Input(InputError::new(
            if s.req.duration.is_some() { P::Duration } else { P::SampleTime },
            format!(
                "the simulation would run {} s{} at a sample time of {} s, that is {:.0} samples, but at most {} are simulated here: sample less often, give a shorter simulated time, or make the poles faster",
                fmt_num(duration),
                if s.req.duration.is_some() { "" } else { " (chosen from the slowest pole)" },
                fmt_num(ts),
                (duration / ts).ceil(),
                cap
            ),
        ))),
        _ => Ok(()),
    }
}

/// The free response, its metrics and its warnings.
pub(super) fn free_response(s: &Setup, g: &Gains, h: &Horizon, warnings: &mut Vec<Warning>) -> Result<SimulationResult, DesignError> {
    let resp = match s.t {
        None => {
            let sim = SimulationSpec { initial_state: DVector::from_vec(h.x0.clone()), duration: s.req.duration, limits: s.req.limits.clone() };
            closed_loop_response(&s.ad, &s.bd, &g.k_x, &sim, SimulationParams::default()).map_err(|e| infeasible(&e))?
        }
        Some(t) => {
            // Digital regulator: the sampled state feedback on the continuous (or given discrete) plant.
            let ctrl = LoopController {
                k: g.k_x.clone(),
                k_delay: g.k_u.clone(),
                observer: None,
                observer_form: ObserverForm::Predictor,
                current_gain: None,
                tracking: TrackingLaw::None,
                tracked_outputs: Vec::new(),
                sample_time: s.t,
            };
            let duration = s.req.duration.unwrap_or_else(|| capped(s, h.auto, warnings));
            check_samples(s, duration)?;
            let sc = LoopScenario {
                x0: DVector::from_vec(h.x0.clone()),
                xhat0: None,
                duration,
                reference: Vec::new(),
                reference_time: 0.0,
                disturbance: Vec::new(),
                disturbance_time: 0.0,
                disturbance_input: None,
                noise: Noise::None,
                limits: h.limits.clone(),
                continuous_step: None,
            };
            let lr = run_loop(s.plant, s.spec, &ctrl, &sc).map_err(|e| infeasible(&e))?;
            crate::simulate::Response {
                step: t,
                duration,
                duration_chosen: s.req.duration.is_none(),
                diverged: lr.diverged,
                time: lr.time,
                states: lr.states,
                inputs: lr.inputs,
                commanded: lr.commanded,
            }
        }
    };
    let (band, m) = (s.req.band, s.m);
    let settling: Vec<Option<f64>> = resp.states.iter().map(|x| metrics::settling_time(&resp.time, x, 0.0, band)).collect();
    let peak_input: Vec<f64> = resp.commanded.iter().map(|u| metrics::peak_magnitude(u)).collect();
    let first_sat: Vec<Option<f64>> = (0..m).map(|i| h.limits[i].and_then(|l| metrics::first_exceedance(&resp.time, &resp.commanded[i], l))).collect();
    let time_sat: Vec<f64> = (0..m).map(|i| h.limits[i].map_or(0.0, |l| metrics::time_exceeding(&resp.time, &resp.commanded[i], l))).collect();
    // With a loop scenario and no initial state typed, the free response starts from a made-up
    // unit deviation: its saturation is not what the user asked to simulate (the loop's is).
    let judged = !(h.x0_chosen && loop_runs(s));
    for i in (0..m).filter(|_| judged) {
        if let Some(l) = h.limits[i].filter(|l| peak_input[i] > *l) {
            warnings.push(Warning::new(
                WarningCode::InputOverLimit,
                format!(
                    "Input {} ({}) would need {} from this initial state but its limit is {}: it saturates from t = {} s for {} s in all. Slow the poles down or reduce the initial deviation.",
                    i + 1,
                    s.plant.input_names()[i],
                    fmt_num(peak_input[i]),
                    fmt_num(l),
                    first_sat[i].map_or("?".into(), fmt_num),
                    fmt_num(time_sat[i])
                ),
            ));
        }
    }
    let peak_state: Vec<f64> = resp.states.iter().map(|x| metrics::peak_magnitude(x)).collect();
    if judged {
        warnings.extend(state_limit_warnings(s, &peak_state, WarningCode::StateOverLimit, "From this initial state"));
    }
    if resp.diverged {
        warnings.push(Warning::new(WarningCode::SimulationDiverged, "The simulated closed loop grew without bound and the run was stopped."));
    } else {
        for (i, _) in settling.iter().enumerate().filter(|(_, st)| st.is_none()) {
            warnings.push(Warning::new(
                WarningCode::NotSettled,
                format!("State {} ({}) has not settled to within {} % by the end of the {} s simulation.", i + 1, s.plant.state_names()[i], fmt_num(band * 100.0), fmt_num(resp.duration)),
            ));
        }
    }
    let stride = stride_for(resp.time.len());
    Ok(SimulationResult {
        initial_state: h.x0.clone(),
        initial_state_chosen: h.x0_chosen,
        duration: resp.duration,
        duration_chosen: resp.duration_chosen,
        step: resp.step,
        band,
        diverged: resp.diverged,
        time: decimate(&resp.time, stride),
        states: resp.states.iter().map(|x| decimate(x, stride)).collect(),
        inputs: resp.inputs.iter().map(|u| decimate(u, stride)).collect(),
        settling_time: settling,
        overshoot: resp.states.iter().map(|x| metrics::overshoot(x)).collect(),
        peak_state,
        state_limit: s.req.state_limits.clone(),
        peak_input,
        input_limit: h.limits.clone(),
        first_saturation: first_sat,
        time_saturated: time_sat,
    })
}

/// True when the whole loop is simulated (anything beyond plain state feedback was asked for).
pub(super) fn loop_runs(s: &Setup) -> bool {
    s.spec.observer.is_some() || !matches!(s.spec.tracking, TrackingSpec::None) || s.t.is_some()
}

/// The complete controller as it would go into firmware (what the loop simulation runs and
/// the margins break at the plant input).
pub(super) fn loop_controller(s: &Setup, g: &Gains) -> LoopController {
    let tracking = match (&g.feedforward, &g.k_i) {
        // Integral action, with the reference also fed forward when asked (two degrees of freedom).
        (feedforward, Some(ki)) => TrackingLaw::Integral { ki: ki.clone(), anti_windup: s.spec.anti_windup, feedforward: feedforward.clone() },
        (Some((nx, nu)), None) => TrackingLaw::Feedforward { nx: nx.clone(), nu: nu.clone() },
        (None, None) => TrackingLaw::None,
    };
    LoopController {
        k: g.k_x.clone(),
        k_delay: g.k_u.clone(),
        observer: g.observer.as_ref().map(|(od, _, _)| od.gain.clone()),
        observer_form: g.observer.as_ref().map_or(ObserverForm::Predictor, |(_, _, f)| *f),
        current_gain: g.observer.as_ref().and_then(|(od, _, _)| od.current_gain.clone()),
        tracking,
        tracked_outputs: s.tracked.clone(),
        sample_time: s.t,
    }
}

/// The whole loop, when anything beyond plain state feedback was asked for.
pub(super) fn whole_loop(s: &Setup, g: &Gains, h: &Horizon, warnings: &mut Vec<Warning>) -> Result<Option<LoopResult>, DesignError> {
    let spec = s.spec;
    let tracking_on = !matches!(spec.tracking, TrackingSpec::None);
    if !loop_runs(s) {
        return Ok(None);
    }
    let ctrl = loop_controller(s, g);
    let sc = &spec.scenario;
    let reference = if tracking_on {
        if sc.reference.is_empty() {
            vec![1.0; s.q()]
        } else {
            sc.reference.clone()
        }
    } else {
        Vec::new()
    };
    let x0 = if tracking_on && s.req.initial_state.is_none() { vec![0.0; s.n] } else { h.x0.clone() };
    let events = sc.reference_time.max(if sc.disturbance.is_empty() { 0.0 } else { sc.disturbance_time });
    let duration = s.req.duration.unwrap_or_else(|| capped(s, events + h.auto * if sc.disturbance.is_empty() { 1.0 } else { 2.0 }, warnings));
    check_samples(s, duration)?;
    let noise = if sc.noise_std.iter().any(|v| *v > 0.0) { Noise::Gaussian { std: sc.noise_std.clone(), seed: sc.seed } } else { Noise::None };
    let scenario = LoopScenario {
        x0: DVector::from_vec(x0),
        xhat0: sc.initial_estimate.clone().map(DVector::from_vec),
        duration,
        reference: reference.clone(),
        reference_time: sc.reference_time,
        disturbance: sc.disturbance.clone(),
        disturbance_time: sc.disturbance_time,
        disturbance_input: sc.disturbance_input.clone(),
        noise,
        limits: h.limits.clone(),
        continuous_step: None,
    };
    let lr = run_loop(s.plant, spec, &ctrl, &scenario).map_err(|e| match e {
        LoopError::NoiseNeedsDigital => DesignError::Input(InputError::new(P::NoiseStd, e.to_string())),
        other => infeasible(&other),
    })?;
    let tracked = tracked_metrics(s, &lr, &reference);
    let input_metrics = input_metrics(s, &lr, h, warnings);
    let peak_states: Vec<f64> = lr.states.iter().map(|x| metrics::peak_magnitude(x)).collect();
    warnings.extend(state_limit_warnings(s, &peak_states, WarningCode::LoopStateOverLimit, "In the loop simulation"));
    let (loop_poles, separation_error) = separation(s, g);
    let stride = stride_for(lr.time.len());
    let dec = |v: &Vec<Vec<f64>>| v.iter().map(|x| decimate(x, stride)).collect::<Vec<_>>();
    Ok(Some(LoopResult {
        sample_time: s.t,
        observer_form: g.observer.as_ref().map(|(_, _, f)| crate::result::ObserverRunForm::of(*f, s.t.is_some())),
        duration,
        diverged: lr.diverged,
        time: decimate(&lr.time, stride),
        outputs: dec(&lr.outputs),
        measured: dec(&lr.measured),
        reference: dec(&lr.reference),
        states: dec(&lr.states),
        estimates: dec(&lr.estimates),
        inputs: dec(&lr.inputs),
        commanded: dec(&lr.commanded),
        tracked,
        input_metrics,
        peak_states,
        loop_poles,
        separation_error,
    }))
}

fn tracked_metrics(s: &Setup, lr: &LoopResponse, reference: &[f64]) -> Vec<OutputLoopMetrics> {
    let sc = &s.spec.scenario;
    let window_end = if !sc.disturbance.is_empty() && sc.disturbance_time > sc.reference_time { sc.disturbance_time } else { f64::INFINITY };
    s.tracked
        .iter()
        .enumerate()
        .map(|(j, &o)| {
            let mtr = crate::loop_sim::tracking_metrics(&lr.time, &lr.outputs[o], sc.reference_time, reference[j], s.req.band, window_end);
            OutputLoopMetrics {
                name: s.plant.output_names()[o].clone(),
                reference: reference[j],
                rise_time: mtr.rise_time,
                settling_time: mtr.settling_time,
                overshoot: mtr.overshoot,
                undershoot: mtr.undershoot,
                steady_state_error: mtr.steady_state_error,
            }
        })
        .collect()
}

/// A warning per state whose peak exceeds its limit (`plant.state_limits`).
fn state_limit_warnings(s: &Setup, peaks: &[f64], code: WarningCode, situation: &str) -> Vec<Warning> {
    let names = s.plant.state_names();
    let units = s.plant.state_units();
    s.req
        .state_limits
        .iter()
        .zip(peaks)
        .enumerate()
        .filter_map(|(i, (limit, peak))| limit.filter(|l| peak > l).map(|l| (i, l, *peak)))
        .map(|(i, l, peak)| {
            let unit = units.get(i).map(|u| u.trim()).filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
            Warning::new(
                code,
                format!(
                    "{situation}, state {} ({}) reaches {}{unit}, beyond its limit of {}{unit} ({} % of it): slow the poles down, reduce the step or the initial deviation, or check that the limit is protected independently of this controller.",
                    i + 1,
                    names.get(i).map_or("", String::as_str),
                    fmt_num(peak),
                    fmt_num(l),
                    fmt_num(100.0 * peak / l)
                ),
            )
        })
        .collect()
}

fn input_metrics(s: &Setup, lr: &LoopResponse, h: &Horizon, warnings: &mut Vec<Warning>) -> Vec<InputLoopMetrics> {
    let out: Vec<InputLoopMetrics> = (0..s.m)
        .map(|i| InputLoopMetrics {
            name: s.plant.input_names()[i].clone(),
            peak_command: metrics::peak_magnitude(&lr.commanded[i]),
            limit: h.limits[i],
            time_saturated: h.limits[i].map_or(0.0, |l| metrics::time_exceeding(&lr.time, &lr.commanded[i], l)),
        })
        .collect();
    for im in &out {
        if let Some(l) = im.limit {
            if im.peak_command > l && !warnings.iter().any(|w| w.code == "input-over-limit" && w.message.contains(&im.name)) {
                warnings.push(Warning::new(
                    WarningCode::LoopInputOverLimit,
                    format!("In the loop simulation, {} is commanded up to {} against its limit {} and saturates for {} s.", im.name, fmt_num(im.peak_command), fmt_num(l), fmt_num(im.time_saturated)),
                ));
            }
        }
    }
    out
}

/// Separation principle: eigenvalues of the linear loop with observer (no integrator, no
/// delay) against the union of controller and observer poles.
fn separation(s: &Setup, g: &Gains) -> (Option<Vec<crate::Pair>>, Option<f64>) {
    let n = s.n;
    let plain = g.k_u.is_none() && g.k_i.is_none();
    let (Some((od, _, form)), true, Some(c)) = (&g.observer, plain, s.plant.c()) else {
        return (None, None);
    };
    if !(*form == ObserverForm::Predictor || s.t.is_none()) {
        return (None, None);
    }
    let l = &od.gain;
    let (ad, bd, k) = (&s.ad, &s.bd, &g.k_x);
    let mut big = DMatrix::<f64>::zeros(2 * n, 2 * n);
    big.view_mut((0, 0), (n, n)).copy_from(ad);
    big.view_mut((0, n), (n, n)).copy_from(&(-(bd * k)));
    big.view_mut((n, 0), (n, n)).copy_from(&(l * c));
    big.view_mut((n, n), (n, n)).copy_from(&(ad - l * c - bd * k));
    match try_eigenvalues(&big) {
        Ok(lp) => {
            // Against the poles asked for (and the fixed modes): a repeated pole placed as a
            // Jordan block scatters by about ε^(1/p) in each computation, so its copies are
            // compared through their mean (see `cluster_errors`).
            let mut union: Vec<Complex64> = Vec::new();
            for p in [&g.placement, &od.placement] {
                union.extend(p.assigned_poles.iter().chain(p.fixed_modes.iter()).cloned());
            }
            let floor = crate::place::pole_error_floor(crate::analysis::Domain::Continuous, big.norm());
            let (err, _) = crate::place::cluster_errors(&union, &lp, floor);
            (Some(lp.iter().map(|z| pole_pair(*z)).collect()), Some(err))
        }
        Err(_) => (None, None),
    }
}
