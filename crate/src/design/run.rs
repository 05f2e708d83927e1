//! The design run: gains, observer, tracking and integral action, the simulations and the
//! warnings, for a checked design ([`crate::design::check`]).

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use super::check::{check_text, CheckedDesign, PoleSource};
use super::{RESULT_FORMAT, RESULT_VERSION};
use super::result::*;
use super::{ControllerSpec, DesignError, DesignRequest, FieldPath as P, InputError, LqrWeights, ObserverPoles, Plane, PoleChoiceMethod, TrackingSpec};
use crate::metrics;
use crate::analysis::{controllability_report, observability_report, AnalysisParams, ModeVerdict};
use crate::linalg::eigen::try_eigenvalues;
use crate::place::{state_feedback_gain, PlacementParams};
use crate::plant::Plant;
use crate::poles::format_complex;
use crate::simulate::{closed_loop_response, SimulationParams, SimulationSpec};
use crate::warnings::{Warning, WarningParams};

/// Runs a plain state-feedback design (no controller sections).
///
/// # Errors
/// See [`DesignError`].
pub fn run(req: &DesignRequest) -> Result<DesignResult, DesignError> {
    run_with(req, &ControllerSpec::default())
}

/// Simulates a loop around the plant as given: continuous (any controller) or discrete.
fn run_loop(plant: &Plant, spec: &ControllerSpec, ctrl: &crate::loop_sim::LoopController, sc: &crate::loop_sim::LoopScenario) -> Result<crate::loop_sim::LoopResponse, crate::loop_sim::LoopError> {
    let n = plant.states();
    let m = plant.inputs();
    let (c, d) = match (plant.c(), plant.d()) {
        (Some(c), Some(d)) => (c.clone(), d.clone()),
        (Some(c), None) => (c.clone(), DMatrix::zeros(c.nrows(), m)),
        _ => (DMatrix::zeros(0, n), DMatrix::zeros(0, m)),
    };
    if spec.plant_sample_time.is_some() {
        crate::loop_sim::simulate_sampled_loop(plant.a(), plant.b(), &c, &d, ctrl, sc)
    } else {
        crate::loop_sim::simulate_loop(plant.a(), plant.b(), &c, &d, ctrl, sc)
    }
}

/// Keeps conjugate pairs together while taking the `count` fastest poles (a leftover single slot
/// takes the real part of the next pair).
fn fastest_poles(poles: &[Complex64], count: usize) -> Vec<Complex64> {
    let mut units: Vec<Complex64> = poles.iter().filter(|z| z.im >= 0.0).cloned().collect();
    units.sort_by(|x, y| y.norm().total_cmp(&x.norm()));
    let mut out = Vec::new();
    for z in units {
        if out.len() >= count {
            break;
        }
        if z.im > 0.0 && out.len() + 2 <= count {
            out.push(z);
            out.push(z.conj());
        } else if z.im > 0.0 {
            out.push(Complex64::new(z.re, 0.0));
        } else {
            out.push(z);
        }
    }
    out
}

/// Runs a design with the version-2 controller features: digital implementation, observer,
/// tracking, integral action with anti-windup, and the whole-loop simulation.
///
/// # Errors
/// See [`DesignError`].
pub fn run_with(req: &DesignRequest, spec: &ControllerSpec) -> Result<DesignResult, DesignError> {
    use crate::analysis::Domain;
    use crate::controller::{delay_augmented, discretise, feedforward_gains, integral_augmented, map_to_continuous, map_to_discrete, observer_gain, sample_rate_advice, ObserverForm};
    let plant = &req.plant;
    let (a, b) = (plant.a(), plant.b());
    let n = plant.states();
    let m = plant.inputs();
    let wp = WarningParams::default();
    let t = spec.sample_time();
    let domain = if t.is_some() { Domain::Discrete } else { Domain::Continuous };
    let ap = AnalysisParams { domain, ..AnalysisParams::default() };
    let pp = PlacementParams { domain, ..PlacementParams::default() };
    let infeasible = |e: &dyn std::fmt::Display| DesignError::Infeasible { message: e.to_string() };
    let pole_input = |e: crate::place::PlacementError, field: P| match e {
        crate::place::PlacementError::PoleCount { .. } | crate::place::PlacementError::InvalidPoles { .. } | crate::place::PlacementError::RepeatedBeyondRank { .. } => {
            DesignError::Input(InputError::new(field, e.to_string()))
        }
        other => DesignError::Infeasible { message: other.to_string() },
    };
    // The plant in the design domain.
    let (ad, bd) = match (spec.plant_sample_time, &spec.implementation) {
        (None, Some(imp)) => {
            let dp = discretise(a, b, imp.sample_time).map_err(|e| infeasible(&e))?;
            (dp.phi, dp.gamma)
        }
        _ => (a.clone(), b.clone()),
    };
    let to_design = |poles: &[Complex64]| -> Vec<Complex64> {
        match (t, spec.plane) {
            (Some(t), Plane::S) => map_to_discrete(poles, t),
            _ => poles.to_vec(),
        }
    };
    let to_s = |poles: &[Complex64]| -> Vec<Complex64> {
        match (t, spec.plane) {
            (Some(t), Plane::Z) => poles.iter().map(|z| map_to_continuous(*z, t)).collect(),
            _ => poles.to_vec(),
        }
    };
    let delay = spec.implementation.as_ref().is_some_and(|i| i.computation_delay);
    let (tracked, integral_poles): (Vec<usize>, Option<&Vec<Complex64>>) = match &spec.tracking {
        TrackingSpec::None => (Vec::new(), None),
        TrackingSpec::Feedforward { outputs } => (outputs.clone(), None),
        TrackingSpec::Integral { outputs, integral_poles } => (outputs.clone(), Some(integral_poles)),
    };
    let q = tracked.len();
    let (c_full, d_full) = match (plant.c(), plant.d()) {
        (Some(c), Some(d)) => (c.clone(), d.clone()),
        (Some(c), None) => (c.clone(), DMatrix::zeros(c.nrows(), m)),
        _ => (DMatrix::zeros(0, n), DMatrix::zeros(0, m)),
    };
    let ct = DMatrix::from_fn(q, n, |i, j| c_full[(tracked[i], j)]);
    let dt = DMatrix::from_fn(q, m, |i, j| d_full[(tracked[i], j)]);
    // The design pair: plant, then the delay states, then the integrators.
    let mut da = ad.clone();
    let mut db = bd.clone();
    if spec.lqr.is_some() && spec.search.is_some() {
        return Err(DesignError::Input(InputError::new(P::Search, "the search scales a pole pattern; with LQR weights, scale the weights instead (or list the LQR poles as feedback.poles and search)")));
    }
    let search = match (&spec.search, t) {
        (Some(situations), None) => {
            let limits: Vec<f64> = req.limits.iter().map(|l| l.unwrap_or(f64::INFINITY)).collect();
            let r = crate::search::fastest_within_limits(a, b, plant.c(), &req.poles, &limits, situations, crate::search::SearchParams { band: req.band, ..Default::default() })
                .map_err(|e| infeasible(&e))?;
            Some(r)
        }
        _ => None,
    };
    let mut base_poles: Vec<Complex64> = search.as_ref().map_or_else(|| req.poles.clone(), |r| r.poles.clone());
    let mut dpoles = to_design(&base_poles);
    if let (true, Some(imp)) = (delay, &spec.implementation) {
        let (pa, pb) = delay_augmented(&da, &db);
        da = pa;
        db = pb;
        dpoles.extend(imp.delay_poles.iter().cloned());
    }
    let nd = da.nrows();
    if let Some(ip) = integral_poles {
        let mut ct_d = DMatrix::<f64>::zeros(q, nd);
        ct_d.view_mut((0, 0), (q, n)).copy_from(&ct);
        let (ia, ib) = integral_augmented(&da, &db, &ct_d, &dt, t);
        let aug = crate::analysis::controllability_report(&ia, &ib, ap).map_err(|e| infeasible(&e))?;
        if !aug.is_complete() {
            return Err(DesignError::Infeasible {
                message: crate::controller::ControllerError::IntegralNotControllable {
                    message: format!(
                        "the plant augmented with {q} integrator(s) is not controllable (rank {} of {}): the tracked outputs have a zero at {} or there are more tracked outputs than independent inputs; track fewer outputs or use feedforward",
                        aug.rank,
                        aug.states,
                        if t.is_some() { "z = 1" } else { "s = 0" }
                    ),
                }
                .to_string(),
            });
        }
        da = ia;
        db = ib;
        dpoles.extend(to_design(ip));
    }
    // LQR: the poles are those of the LQR closed loop of the design pair.
    let lqr = match &spec.lqr {
        None => None,
        Some(w) => {
            let (qw, rw) = match w {
                LqrWeights::Matrices { q, r } => (q.clone(), r.clone()),
                LqrWeights::Bryson { max_state, max_input } => {
                    if max_state.len() != da.nrows() {
                        return Err(DesignError::Input(InputError::new(P::LqrMaxState, format!("{} values given but the design has {} states (plant, delay and integrator states)", max_state.len(), da.nrows()))));
                    }
                    if max_input.len() != m {
                        return Err(DesignError::Input(InputError::new(P::LqrMaxInput, format!("{} values given but the plant has {m} inputs", max_input.len()))));
                    }
                    crate::riccati::bryson_weights(max_state, max_input).map_err(|e| DesignError::Input(InputError::new(P::LqrBryson, e.to_string())))?
                }
            };
            if qw.shape() != (da.nrows(), da.nrows()) {
                return Err(DesignError::Input(InputError::new(P::LqrQ, format!("Q is {}×{} but the design has {} states (plant, delay and integrator states): give a {}×{} matrix", qw.nrows(), qw.ncols(), da.nrows(), da.nrows(), da.nrows()))));
            }
            if rw.shape() != (m, m) {
                return Err(DesignError::Input(InputError::new(P::LqrR, format!("R is {}×{} but the plant has {m} inputs: give a {m}×{m} matrix", rw.nrows(), rw.ncols()))));
            }
            let design = match t {
                Some(_) => crate::riccati::discrete_lqr_gain(&da, &db, &qw, &rw),
                None => crate::riccati::lqr_gain(&da, &db, &qw, &rw),
            }
            .map_err(|e| match e {
                crate::riccati::RiccatiError::NotStabilizable { .. } | crate::riccati::RiccatiError::NotDetectable { .. } | crate::riccati::RiccatiError::NoConvergence { .. } | crate::riccati::RiccatiError::InaccurateSolution { .. } | crate::riccati::RiccatiError::NotStabilizing { .. } | crate::riccati::RiccatiError::SingularMatrix { .. } | crate::riccati::RiccatiError::Eigen(_) | crate::riccati::RiccatiError::Svd(_) | crate::riccati::RiccatiError::NotStable => infeasible(&e),
                other => DesignError::Input(InputError::new(P::Lqr, other.to_string())),
            })?;
            dpoles = design.closed_loop_poles.clone();
            base_poles = match t {
                Some(ts) => {
                    // LQR puts the computation-delay states' poles at (or within rounding of)
                    // z = 0: deadbeat, gone after one sample. Their s = ln z / T (about −34 000
                    // 1/s at 1 kHz for z = 1e-15) says nothing about the loop's bandwidth and
                    // must not drive the sample-rate advice or an observer speed factor.
                    let live: Vec<Complex64> = dpoles.iter().filter(|z| z.norm() > 1e-9).copied().collect();
                    let kept = if live.len() >= n { live } else { dpoles.clone() };
                    kept.iter().map(|z| map_to_continuous(*z, ts)).collect()
                }
                None => dpoles.clone(),
            };
            Some(design)
        }
    };
    if dpoles.len() != da.nrows() {
        let extra = da.nrows() - n;
        return Err(DesignError::Input(InputError::new(
            P::FeedbackPoles,
            if extra > 0 {
                format!(
                    "{} poles given but the design has {} states ({n} plant states + {extra} for {}); give {} poles{}",
                    dpoles.len(),
                    da.nrows(),
                    if integral_poles.is_some() && delay { "delay and integrators" } else if delay { "the computation delay" } else { "the integrators" },
                    da.nrows() - (dpoles.len() - req.poles.len()),
                    if integral_poles.is_some() { ", or list the integrator poles in tracking.integral_poles" } else { "" }
                )
            } else {
                format!("{} poles given but the plant has {n} states; give exactly {n} poles", dpoles.len())
            },
        )));
    }
    let open_loop = try_eigenvalues(&ad).map_err(|e| infeasible(&e))?;
    let ctrb = controllability_report(&ad, &bd, ap).map_err(|e| infeasible(&e))?;
    let obsv = match plant.c() {
        Some(c) => Some(observability_report(&ad, c, ap).map_err(|e| infeasible(&e))?),
        None => None,
    };
    let placement = state_feedback_gain(&da, &db, &dpoles, pp).map_err(|e| pole_input(e, P::FeedbackPoles))?;
    let k_x = placement.gain.columns(0, n).into_owned();
    let k_u = if delay { Some(placement.gain.columns(n, m).into_owned()) } else { None };
    let k_i = if integral_poles.is_some() { Some(placement.gain.columns(nd, q).into_owned()) } else { None };
    // Observer.
    let observer = match (&spec.observer, plant.c()) {
        (Some(os), Some(c)) => {
            let s_poles = match &os.poles {
                ObserverPoles::Given(p) => to_s(p),
                ObserverPoles::SpeedFactor(f) => fastest_poles(&to_s(&base_poles), n).iter().map(|z| z * *f).collect(),
            };
            let obs_design_poles = match &os.poles {
                ObserverPoles::Given(p) => to_design(p),
                ObserverPoles::SpeedFactor(_) => match t {
                    Some(t) => map_to_discrete(&s_poles, t),
                    None => s_poles.clone(),
                },
            };
            let mut od = observer_gain(&ad, c, &obs_design_poles, pp).map_err(|e| match e {
                crate::controller::ControllerError::Observer { message } if message.contains("poles") && !message.contains("unobservable") => DesignError::Input(InputError::new(P::ObserverPoles, message)),
                other => infeasible(&other),
            })?;
            if os.form == ObserverForm::Current {
                od.current_gain = ad.clone().lu().solve(&od.gain);
            }
            Some((od, obs_design_poles, os.form))
        }
        _ => None,
    };
    let feedforward = match &spec.tracking {
        TrackingSpec::Feedforward { .. } => Some(feedforward_gains(&ad, &bd, &ct, &dt, t.is_some()).map_err(|e| infeasible(&e))?),
        _ => None,
    };
    let advice = t.map(|t| sample_rate_advice(&to_s(&base_poles), t));
    let a = &ad;
    let b = &bd;
    let mut warnings = Vec::new();
    let anorm = crate::linalg::svd::try_norm2(plant.a(), crate::linalg::svd::SvdParams::default()).unwrap_or(0.0);
    let axis_tol = match domain {
        Domain::Continuous => ap.relative_tolerance * anorm.max(1.0),
        Domain::Discrete => 1e-12,
    };
    let mut seen_pairs = Vec::new();
    for z in &dpoles {
        if z.im < 0.0 || seen_pairs.contains(z) {
            continue;
        }
        seen_pairs.push(*z);
        let shown = if z.im > 0.0 { format!("{}±{}j", fmt_num(z.re), fmt_num(z.im)) } else { format_complex(*z) };
        if !domain.is_strictly_stable(*z, -axis_tol) && !domain.is_marginal(*z, axis_tol) {
            warnings.push(Warning::new(
                "requested-pole-unstable",
                match domain {
                    Domain::Continuous => format!("The requested pole {shown} lies in the right half-plane: the closed loop will be unstable."),
                    Domain::Discrete => format!("The requested z-plane pole {shown} lies outside the unit circle: the digital loop will be unstable."),
                },
            ));
        } else if domain.is_marginal(*z, axis_tol) {
            warnings.push(Warning::new(
                "requested-pole-on-axis",
                match domain {
                    Domain::Continuous => format!("The requested pole {shown} lies on the imaginary axis: the closed loop will not settle (marginal stability)."),
                    Domain::Discrete => format!("The requested z-plane pole {shown} lies on the unit circle: the digital loop will not settle (marginal stability)."),
                },
            ));
        }
    }
    for z in to_s(&base_poles).iter().filter(|z| z.im >= 0.0) {
        let shown = if z.im > 0.0 { format!("{}±{}j", fmt_num(z.re), fmt_num(z.im)) } else { format_complex(*z) };
        if spec.plant_sample_time.is_none() && anorm > 0.0 && z.norm() > wp.fast_pole_ratio * anorm {
            warnings.push(Warning::new(
                "fast-pole",
                format!(
                    "The requested pole {shown} is {:.0} times faster than the plant's own dynamics (‖A‖ = {}): expect large gains, actuator saturation and amplified measurement noise.",
                    z.norm() / anorm,
                    fmt_num(anorm)
                ),
            ));
        }
    }
    // Judged in balanced coordinates, so that the units of the states do not decide it.
    if !(placement.balanced_eigenvector_condition <= wp.fragile_condition) {
        warnings.push(Warning::new(
            "fragile-design",
            format!(
                "The closed-loop eigenvector condition number is {} in balanced coordinates ({} as the states are scaled; above {}): small errors in the plant model or the gain can move the poles far from where they were placed. Spread clustered poles apart or move them closer to the open-loop poles.",
                fmt_num(placement.balanced_eigenvector_condition),
                fmt_num(placement.eigenvector_condition),
                fmt_num(wp.fragile_condition)
            ),
        ));
    }
    if placement.max_pole_error > wp.inaccurate_placement {
        warnings.push(Warning::new(
            "placement-inaccurate",
            format!("The achieved poles differ from the requested ones by up to {} (relative): the problem is numerically ill conditioned.", fmt_num(placement.max_pole_error)),
        ));
    }
    if !placement.converged {
        warnings.push(Warning::new("not-converged", "The eigenvector optimisation stopped at its sweep limit; the gain is valid but its robustness may not be the best available."));
    }
    if placement.input_rank < m {
        warnings.push(Warning::new(
            "dependent-inputs",
            format!("B has rank {} but {m} columns: some inputs act in the same directions; the gain shown is the smallest-norm one.", placement.input_rank),
        ));
    }
    if !ctrb.is_complete() {
        warnings.push(Warning::new(
            "uncontrollable-modes",
            format!(
                "The plant is not controllable: {} mode(s) at {} cannot be moved by feedback and stay where they are{}.",
                ctrb.hidden_modes.len(),
                crate::poles::format_pole_list(&ctrb.hidden_modes),
                if placement.not_assigned.is_empty() { String::new() } else { format!("; the requested pole(s) {} were not assigned", crate::poles::format_pole_list(&placement.not_assigned)) }
            ),
        ));
    }
    for md in &ctrb.modes {
        if md.verdict == ModeVerdict::Weak {
            warnings.push(Warning::new(
                "weakly-controllable",
                format!("The mode at {} is only weakly controllable (margin {}): moving it needs large inputs.", format_complex(md.pole), fmt_num(md.margin)),
            ));
        }
    }
    if let Some(o) = &obsv {
        for md in &o.modes {
            if md.verdict == ModeVerdict::Weak {
                warnings.push(Warning::new(
                    "weakly-observable",
                    format!("The mode at {} is only weakly observable from the outputs (margin {}).", format_complex(md.pole), fmt_num(md.margin)),
                ));
            }
        }
    }
    if !ctrb.consistent || obsv.as_ref().is_some_and(|o| !o.consistent) {
        warnings.push(Warning::new("analysis-inconsistent", "The staircase and the per-mode (PBH) tests disagree: the plant is on the borderline of losing controllability or observability; treat the verdicts with care."));
    }

    // Simulation.
    let (x0, x0_chosen) = match &req.initial_state {
        Some(x) => (x.clone(), false),
        None => {
            let mut x = vec![0.0; n];
            x[0] = 1.0;
            (x, true)
        }
    };
    let limits = if req.limits.is_empty() { vec![None; m] } else { req.limits.clone() };
    // Horizon from the slowest s-plane pole (controller and observer): 7/σ, doubled with limits.
    let mut all_s = to_s(&base_poles);
    if let Some((_, op, _)) = &observer {
        all_s.extend(match t {
            Some(t) => op.iter().map(|z| map_to_continuous(*z, t)).collect::<Vec<_>>(),
            None => op.clone(),
        });
    }
    let slowest = all_s.iter().map(|z| -z.re).filter(|d| *d > 0.0).fold(f64::INFINITY, f64::min);
    let auto_horizon = if slowest.is_finite() { 7.0 / slowest } else { 10.0 } * if limits.iter().any(|l| l.is_some()) { 2.0 } else { 1.0 };
    // A digital simulation longer than the caller allows is refused before it is run.
    let check_samples = |duration: f64| -> Result<(), DesignError> {
        match (t, spec.scenario.max_samples) {
            (Some(ts), Some(cap)) if !(duration / ts <= cap) => Err(DesignError::Input(InputError::new(
                if req.duration.is_some() { P::Duration } else { P::SampleTime },
                format!(
                    "the simulation would run {} s{} at a sample time of {} s, that is {:.0} samples, but at most {} are simulated here: sample less often, give a shorter simulated time, or make the poles faster",
                    fmt_num(duration),
                    if req.duration.is_some() { "" } else { " (chosen from the slowest pole)" },
                    fmt_num(ts),
                    (duration / ts).ceil(),
                    cap
                ),
            ))),
            _ => Ok(()),
        }
    };
    let resp = match t {
        None => {
            let sim = SimulationSpec { initial_state: DVector::from_vec(x0.clone()), duration: req.duration, limits: req.limits.clone() };
            closed_loop_response(a, b, &k_x, &sim, SimulationParams::default()).map_err(|e| infeasible(&e))?
        }
        _ => {
            // Digital regulator: the sampled state feedback on the continuous (or given discrete) plant.
            let ctrl = crate::loop_sim::LoopController {
                k: k_x.clone(),
                k_delay: k_u.clone(),
                observer: None,
                observer_form: ObserverForm::Predictor,
                current_gain: None,
                tracking: crate::loop_sim::TrackingLaw::None,
                tracked_outputs: Vec::new(),
                sample_time: t,
            };
            let duration = req.duration.unwrap_or(auto_horizon);
            check_samples(duration)?;
            let sc = crate::loop_sim::LoopScenario {
                x0: DVector::from_vec(x0.clone()),
                xhat0: None,
                duration,
                reference: Vec::new(),
                reference_time: 0.0,
                disturbance: Vec::new(),
                disturbance_time: 0.0,
                noise: crate::loop_sim::Noise::None,
                limits: limits.clone(),
                continuous_step: None,
            };
            let lr = run_loop(plant, spec, &ctrl, &sc).map_err(|e| infeasible(&e))?;
            crate::simulate::Response {
                step: t.unwrap_or(0.0),
                duration,
                duration_chosen: req.duration.is_none(),
                diverged: lr.diverged,
                time: lr.time,
                states: lr.states,
                inputs: lr.inputs,
                commanded: lr.commanded,
            }
        }
    };
    let settling: Vec<Option<f64>> = resp.states.iter().map(|s| metrics::settling_time(&resp.time, s, 0.0, req.band)).collect();
    let overshoot: Vec<Option<f64>> = resp.states.iter().map(|s| metrics::overshoot(s)).collect();
    let peak_state: Vec<f64> = resp.states.iter().map(|s| metrics::peak_magnitude(s)).collect();
    let peak_input: Vec<f64> = resp.commanded.iter().map(|s| metrics::peak_magnitude(s)).collect();
    let first_sat: Vec<Option<f64>> = (0..m).map(|i| limits[i].and_then(|l| metrics::first_exceedance(&resp.time, &resp.commanded[i], l))).collect();
    let time_sat: Vec<f64> = (0..m).map(|i| limits[i].map_or(0.0, |l| metrics::time_exceeding(&resp.time, &resp.commanded[i], l))).collect();
    for i in 0..m {
        if let Some(l) = limits[i] {
            if peak_input[i] > l {
                warnings.push(Warning::new(
                    "input-over-limit",
                    format!(
                        "Input {} ({}) would need {} from this initial state but its limit is {}: it saturates from t = {} s for {} s in all. Slow the poles down or reduce the initial deviation.",
                        i + 1,
                        plant.input_names()[i],
                        fmt_num(peak_input[i]),
                        fmt_num(l),
                        first_sat[i].map_or("?".into(), fmt_num),
                        fmt_num(time_sat[i])
                    ),
                ));
            }
        }
    }
    if resp.diverged {
        warnings.push(Warning::new("simulation-diverged", "The simulated closed loop grew without bound and the run was stopped."));
    } else {
        for (i, s) in settling.iter().enumerate() {
            if s.is_none() {
                warnings.push(Warning::new(
                    "not-settled",
                    format!("State {} ({}) has not settled to within {} % by the end of the {} s simulation.", i + 1, plant.state_names()[i], fmt_num(req.band * 100.0), fmt_num(resp.duration)),
                ));
            }
        }
    }
    let stride = resp.time.len().div_ceil(1000).max(1);
    let dec = |v: &Vec<f64>| -> Vec<f64> {
        let mut out: Vec<f64> = v.iter().step_by(stride).cloned().collect();
        if (v.len() - 1) % stride != 0 {
            if let Some(last) = v.last() {
                out.push(*last);
            }
        }
        out
    };
    let simulation = SimulationResult {
        initial_state: x0.clone(),
        initial_state_chosen: x0_chosen,
        duration: resp.duration,
        duration_chosen: resp.duration_chosen,
        step: resp.step,
        band: req.band,
        diverged: resp.diverged,
        time: dec(&resp.time),
        states: resp.states.iter().map(dec).collect(),
        inputs: resp.inputs.iter().map(dec).collect(),
        settling_time: settling,
        overshoot,
        peak_state,
        peak_input,
        input_limit: limits.clone(),
        first_saturation: first_sat,
        time_saturated: time_sat,
    };
    // ---- version 2 sections.
    let discrete_plant = match (&spec.implementation, t) {
        (Some(imp), Some(ts)) => Some(DiscretePlantResult { a: rows(&ad), b: rows(&bd), sample_time: ts, method: "zoh", computation_delay: imp.computation_delay }),
        _ => None,
    };
    let observer_result = observer.as_ref().map(|(od, op, form)| ObserverResult {
        gain: rows(&od.gain),
        current_gain: od.current_gain.as_ref().map(rows),
        form: if t.is_some() { form.key() } else { "continuous" },
        requested_poles: op.iter().map(|z| pair(*z)).collect(),
        achieved_poles: od.placement.achieved_poles.iter().map(|z| pair(*z)).collect(),
        max_pole_error: od.placement.max_pole_error,
        eigenvector_condition: od.placement.eigenvector_condition,
        gain_norm: od.gain_norm,
        noise_to_input_gain: crate::linalg::svd::try_norm2(&(&k_x * &od.gain), crate::linalg::svd::SvdParams::default()).unwrap_or(f64::NAN),
        detectable: obsv.as_ref().is_some_and(|o| o.stable_hidden_modes),
    });
    let names_of = |idx: &[usize]| idx.iter().map(|&i| plant.output_names()[i].clone()).collect::<Vec<_>>();
    let tracking_result = match (&spec.tracking, &feedforward, &k_i) {
        (TrackingSpec::Feedforward { outputs }, Some((nx, nu)), _) => Some(TrackingResult::Feedforward { outputs: names_of(outputs), nx: rows(nx), nu: rows(nu) }),
        (TrackingSpec::Integral { outputs, .. }, _, Some(ki)) => Some(TrackingResult::Integral {
            outputs: names_of(outputs),
            state_gain: rows(&k_x),
            integral_gain: rows(ki),
            anti_windup: spec.anti_windup.key(),
            time_constant: match spec.anti_windup {
                crate::controller::AntiWindup::BackCalculation { time_constant } => Some(time_constant),
                _ => None,
            },
        }),
        _ => None,
    };
    if let Some(a) = &advice {
        if a.verdict == "too-slow" {
            warnings.push(Warning::new("sample-rate-too-slow", a.message.clone()));
        }
    }
    if let Some((od, _, _)) = &observer {
        if od.placement.max_pole_error > wp.inaccurate_placement {
            warnings.push(Warning::new("observer-inaccurate", format!("The observer poles are achieved only to within {} (relative).", fmt_num(od.placement.max_pole_error))));
        }
        if !(od.placement.eigenvector_condition <= wp.fragile_condition) {
            warnings.push(Warning::new("fragile-observer", format!("The observer's eigenvector condition number is {}: its poles are sensitive to model errors.", fmt_num(od.placement.eigenvector_condition))));
        }
    }
    // The whole loop, when anything beyond plain state feedback was asked for.
    let closed_loop = if spec.observer.is_some() || !matches!(spec.tracking, TrackingSpec::None) || t.is_some() {
        let tracking_law = match (&feedforward, &k_i) {
            (Some((nx, nu)), _) => crate::loop_sim::TrackingLaw::Feedforward { nx: nx.clone(), nu: nu.clone() },
            (None, Some(ki)) => crate::loop_sim::TrackingLaw::Integral { ki: ki.clone(), anti_windup: spec.anti_windup },
            _ => crate::loop_sim::TrackingLaw::None,
        };
        let ctrl = crate::loop_sim::LoopController {
            k: k_x.clone(),
            k_delay: k_u.clone(),
            observer: observer.as_ref().map(|(od, _, _)| od.gain.clone()),
            observer_form: observer.as_ref().map_or(ObserverForm::Predictor, |(_, _, f)| *f),
            current_gain: observer.as_ref().and_then(|(od, _, _)| od.current_gain.clone()),
            tracking: tracking_law,
            tracked_outputs: tracked.clone(),
            sample_time: t,
        };
        let tracking_on = !matches!(spec.tracking, TrackingSpec::None);
        let reference = if tracking_on { if spec.scenario.reference.is_empty() { vec![1.0; q] } else { spec.scenario.reference.clone() } } else { Vec::new() };
        let x0_loop = if tracking_on && req.initial_state.is_none() { vec![0.0; n] } else { x0.clone() };
        let events = spec.scenario.reference_time.max(if spec.scenario.disturbance.is_empty() { 0.0 } else { spec.scenario.disturbance_time });
        let duration = req.duration.unwrap_or(events + auto_horizon * if spec.scenario.disturbance.is_empty() { 1.0 } else { 2.0 });
        check_samples(duration)?;
        let noise = if spec.scenario.noise_std.iter().any(|s| *s > 0.0) {
            crate::loop_sim::Noise::Gaussian { std: spec.scenario.noise_std.clone(), seed: spec.scenario.seed }
        } else {
            crate::loop_sim::Noise::None
        };
        let sc = crate::loop_sim::LoopScenario {
            x0: DVector::from_vec(x0_loop),
            xhat0: spec.scenario.initial_estimate.clone().map(DVector::from_vec),
            duration,
            reference: reference.clone(),
            reference_time: spec.scenario.reference_time,
            disturbance: spec.scenario.disturbance.clone(),
            disturbance_time: spec.scenario.disturbance_time,
            noise,
            limits: limits.clone(),
            continuous_step: None,
        };
        let lr = run_loop(plant, spec, &ctrl, &sc).map_err(|e| match e {
            crate::loop_sim::LoopError::NoiseNeedsDigital => DesignError::Input(InputError::new(P::NoiseStd, e.to_string())),
            other => infeasible(&other),
        })?;
        let tracked_metrics: Vec<OutputLoopMetrics> = tracked
            .iter()
            .enumerate()
            .map(|(j, &o)| {
                let window_end = if !spec.scenario.disturbance.is_empty() && spec.scenario.disturbance_time > spec.scenario.reference_time { spec.scenario.disturbance_time } else { f64::INFINITY };
                let mtr = crate::loop_sim::tracking_metrics(&lr.time, &lr.outputs[o], spec.scenario.reference_time, reference[j], req.band, window_end);
                OutputLoopMetrics { name: plant.output_names()[o].clone(), reference: reference[j], rise_time: mtr.rise_time, settling_time: mtr.settling_time, overshoot: mtr.overshoot, steady_state_error: mtr.steady_state_error }
            })
            .collect();
        let input_metrics: Vec<InputLoopMetrics> = (0..m)
            .map(|i| InputLoopMetrics {
                name: plant.input_names()[i].clone(),
                peak_command: metrics::peak_magnitude(&lr.commanded[i]),
                limit: limits[i],
                time_saturated: limits[i].map_or(0.0, |l| metrics::time_exceeding(&lr.time, &lr.commanded[i], l)),
            })
            .collect();
        for im in &input_metrics {
            if let Some(l) = im.limit {
                if im.peak_command > l && !warnings.iter().any(|w| w.code == "input-over-limit" && w.message.contains(&im.name)) {
                    warnings.push(Warning::new(
                        "loop-input-over-limit",
                        format!("In the loop simulation, {} is commanded up to {} against its limit {} and saturates for {} s.", im.name, fmt_num(im.peak_command), fmt_num(l), fmt_num(im.time_saturated)),
                    ));
                }
            }
        }
        // Separation principle: eigenvalues of the linear loop with observer (no integrator, no delay).
        let (loop_poles, separation_error) = match (&observer, k_u.is_none() && k_i.is_none(), plant.c()) {
            (Some((od, _, form)), true, Some(c)) if *form == ObserverForm::Predictor || t.is_none() => {
                let l = &od.gain;
                let mut big = DMatrix::<f64>::zeros(2 * n, 2 * n);
                big.view_mut((0, 0), (n, n)).copy_from(&ad);
                big.view_mut((0, n), (n, n)).copy_from(&(-(&bd * &k_x)));
                big.view_mut((n, 0), (n, n)).copy_from(&(l * c));
                big.view_mut((n, n), (n, n)).copy_from(&(&ad - l * c - &bd * &k_x));
                match try_eigenvalues(&big) {
                    Ok(lp) => {
                        let mut union: Vec<Complex64> = placement.achieved_poles.clone();
                        union.extend(od.placement.achieved_poles.iter().cloned());
                        let err = crate::place::max_matching_error(&union, &lp, big.norm());
                        (Some(lp.iter().map(|z| pair(*z)).collect()), Some(err))
                    }
                    Err(_) => (None, None),
                }
            }
            _ => (None, None),
        };
        let stride = lr.time.len().div_ceil(1000).max(1);
        let dec = |v: &Vec<f64>| -> Vec<f64> {
            let mut out: Vec<f64> = v.iter().step_by(stride).cloned().collect();
            if !v.is_empty() && (v.len() - 1) % stride != 0 {
                if let Some(last) = v.last() {
                    out.push(*last);
                }
            }
            out
        };
        Some(LoopResult {
            sample_time: t,
            observer_form: observer.as_ref().map(|(_, _, f)| if t.is_some() { f.key() } else { "continuous" }),
            duration,
            diverged: lr.diverged,
            time: dec(&lr.time),
            outputs: lr.outputs.iter().map(dec).collect(),
            measured: lr.measured.iter().map(dec).collect(),
            reference: lr.reference.iter().map(dec).collect(),
            states: lr.states.iter().map(dec).collect(),
            estimates: lr.estimates.iter().map(dec).collect(),
            inputs: lr.inputs.iter().map(dec).collect(),
            commanded: lr.commanded.iter().map(dec).collect(),
            tracked: tracked_metrics,
            input_metrics,
            loop_poles,
            separation_error,
        })
    } else {
        None
    };

    warnings.extend(observer_speed_warning(spec));
    if let Some(l) = &closed_loop {
        warnings.extend(loop_warnings(l, req.band));
    }
    let search_summary = search.as_ref().map(|r| SearchSummary {
        speed_factor: r.speed_factor,
        suggested_poles: r.poles.iter().map(|z| pair(*z)).collect(),
        limiting_situation: r.limiting_situation + 1,
        limiting_input: plant.input_names()[r.limiting_input].clone(),
        peak_ratio: r.peak_ratio,
        settling_time: r.settling_time.clone(),
        monotonic: r.monotonic,
        samples: r.samples.iter().map(|(f, v)| [*f, *v]).collect(),
        limited_by_range: r.limited_by_range,
        evaluations: r.evaluations,
    });
    let lqr_result = lqr.as_ref().map(|d| {
        let (qw, rw) = match &spec.lqr {
            Some(LqrWeights::Matrices { q, r }) => (rows(q), rows(r)),
            Some(LqrWeights::Bryson { max_state, max_input }) => crate::riccati::bryson_weights(max_state, max_input).map(|(q, r)| (rows(&q), rows(&r))).unwrap_or_default(),
            None => (Vec::new(), Vec::new()),
        };
        LqrResult { riccati_solution: rows(&d.riccati_solution), residual: d.residual, gain: rows(&d.gain), closed_loop_poles: d.closed_loop_poles.iter().map(|z| pair(*z)).collect(), q: qw, r: rw }
    });
    let pole_choice = spec.pole_choice.as_ref().map(|c| PoleChoiceResult {
        method: c.method,
        description: c.description.clone(),
        suggested_poles: c.poles.iter().map(|z| pair(*z)).collect(),
        region: c.region.as_ref().map(|r| RegionResult { min_damping: r.min_damping, min_decay_rate: r.min_decay_rate, natural_frequency: r.natural_frequency }),
    });
    if let Some(region) = spec.pole_choice.as_ref().and_then(|c| c.region.as_ref()) {
        let achieved_s: Vec<Complex64> = match t {
            Some(ts) => placement.achieved_poles.iter().map(|z| map_to_continuous(*z, ts)).collect(),
            None => placement.achieved_poles.clone(),
        };
        let violations = crate::patterns::region_violations(&achieved_s, region);
        let mut outside: Vec<usize> = violations.iter().map(|v| v.index).collect();
        outside.dedup();
        if !outside.is_empty() {
            let slowed = search.as_ref().is_some_and(|r| r.speed_factor < 1.0);
            let each: Vec<String> = violations.iter().map(|v| format!("{}: {v}", format_complex(v.pole))).collect();
            warnings.push(Warning::new(
                "pole-outside-region",
                format!(
                    "{} outside the region of the specification (ζ ≥ {}, σ ≥ {} 1/s): the response may not meet the specification{}. {}.",
                    super::check::plural(outside.len(), "closed-loop pole lies", "closed-loop poles lie"),
                    fmt_num(region.min_damping),
                    fmt_num(region.min_decay_rate),
                    if slowed { "; the search slowed the poles down to keep the inputs within their limits" } else { "" },
                    each.join("; ")
                ),
            ));
        }
    }
    if let Some(c) = &spec.pole_choice {
        if c.method == PoleChoiceMethod::Binomial && placement.input_rank < c.poles.len() {
            warnings.push(Warning::new("repeated-poles", "The binomial pattern repeats one pole: repeated poles are sensitive to model errors, and with several inputs at most rank(B) copies can be placed."));
        }
    }
    if let Some(r) = &search {
        if !r.monotonic {
            warnings.push(Warning::new("search-not-monotonic", "The peak input did not grow steadily with the speed-up over the searched range: the factor found is one crossing of the limit, not necessarily the only one; check the samples."));
        }
        if r.limited_by_range {
            warnings.push(Warning::new("search-range-limit", format!("The inputs stay within their limits even at the largest factor tried ({}): the actuators are not what limits this design; noise, model accuracy and sampling are.", fmt_num(r.speed_factor))));
        }
    }

    Ok(DesignResult {
        format: RESULT_FORMAT,
        version: RESULT_VERSION,
        convention: "u = -K x",
        plant: PlantSummary {
            states: n,
            inputs: m,
            outputs: plant.outputs(),
            state_names: plant.state_names().to_vec(),
            input_names: plant.input_names().to_vec(),
            output_names: plant.output_names().to_vec(),
            state_units: plant.state_units().to_vec(),
            input_units: plant.input_units().to_vec(),
        },
        open_loop_poles: open_loop.iter().map(|z| pair(*z)).collect(),
        feedback: FeedbackResult {
            gain: rows(&k_x),
            requested_poles: dpoles.iter().map(|z| pair(*z)).collect(),
            achieved_poles: placement.achieved_poles.iter().map(|z| pair(*z)).collect(),
            max_pole_error: placement.max_pole_error,
            eigenvector_condition: placement.eigenvector_condition,
            balanced_eigenvector_condition: placement.balanced_eigenvector_condition,
            eigenvector_determinant: placement.abs_det_x,
            gain_norm: placement.gain_norm,
            iterations: placement.iterations,
            converged: placement.converged,
            input_rank: placement.input_rank,
            not_assigned: placement.not_assigned.iter().map(|z| pair(*z)).collect(),
            fixed_modes: placement.fixed_modes.iter().map(|z| pair(*z)).collect(),
            delay_gain: k_u.as_ref().map(rows),
        },
        controllability: structure(&ctrb),
        observability: obsv.as_ref().map(structure),
        simulation,
        warnings,
        domain: if t.is_some() { "discrete" } else { "continuous" },
        sample_time: t,
        discrete_plant,
        observer: observer_result,
        tracking: tracking_result,
        sample_rate: advice.map(|a| SampleRateResult { bandwidth: a.bandwidth, samples_per_bandwidth: a.samples_per_bandwidth, verdict: a.verdict, message: a.message }),
        closed_loop,
        search: search_summary,
        pole_choice,
        lqr: lqr_result,
    })
}

/// The usual observer speed factor (common practice): 2–6 times the controller poles.
pub const OBSERVER_SPEED_RULE: (f64, f64) = (2.0, 6.0);

/// A speed factor outside [`OBSERVER_SPEED_RULE`].
fn observer_speed_warning(spec: &ControllerSpec) -> Option<Warning> {
    let Some(ObserverPoles::SpeedFactor(f)) = spec.observer.as_ref().map(|o| &o.poles) else { return None };
    let (lo, hi) = OBSERVER_SPEED_RULE;
    if *f < lo {
        Some(Warning::new("observer-slow", format!("The observer poles are only {} times the controller poles; the usual rule of thumb is 2–6 times faster than the controller (common practice): with a slow observer the estimation error shapes the response.", fmt_num(*f))))
    } else if *f > hi {
        Some(Warning::new("observer-fast", format!("The observer poles are {} times the controller poles; the usual rule of thumb is 2–6 times faster than the controller (common practice): a much faster observer passes more measurement noise to the inputs.", fmt_num(*f))))
    } else {
        None
    }
}

/// What the whole-loop simulation shows: divergence, outputs that do not settle, a failed
/// separation check.
fn loop_warnings(l: &LoopResult, band: f64) -> Vec<Warning> {
    let mut out = Vec::new();
    for tm in l.tracked.iter().filter(|tm| tm.settling_time.is_none() && !l.diverged) {
        out.push(Warning::new(
            "loop-not-settled",
            format!(
                "In the loop simulation, {} does not settle within ±{} % of its reference step before the simulation ends ({} s) or the load step comes: lengthen the simulated time, or make the controller faster.",
                tm.name,
                fmt_num(band * 100.0),
                fmt_num(l.duration)
            ),
        ));
    }
    if l.diverged {
        out.push(Warning::new("loop-diverged", "The loop simulation (the whole controller with the plant) grew without bound and was stopped: this controller does not stabilise the plant as simulated."));
    }
    if let Some(e) = l.separation_error.filter(|e| !(*e <= 1e-6)) {
        out.push(Warning::new("separation-failed", format!("The eigenvalues of the loop with observer differ from the controller and observer poles by up to {} (relative): the separation check failed; treat the design with care.", fmt_num(e))));
    }
    out
}

/// Reads, checks and runs a design file (what the CLI does).
///
/// # Errors
/// See [`DesignError`]: the first input error in document order, or why the design cannot be
/// done.
pub fn run_text(text: &str) -> Result<DesignResult, DesignError> {
    run_checked(&check_text(text)?)
}

/// Runs a checked design. A placement error about the poles of a pattern, a specification or
/// an LQR design (which the user did not type as a list) is reported at the field that chose
/// them.
///
/// # Errors
/// See [`DesignError`].
pub fn run_checked(design: &CheckedDesign) -> Result<DesignResult, DesignError> {
    let spec = &design.controller;
    let run = if spec.is_plain() { run(&design.request) } else { run_with(&design.request, spec) };
    run.map_err(|e| match e {
        DesignError::Input(e) if e.field == P::FeedbackPoles && design.source != PoleSource::List => {
            let (field, advice) = match design.source {
                PoleSource::Pattern => (P::Pattern, "choose another pattern, or list the poles yourself"),
                PoleSource::Lqr => (P::LqrMaxState, "change the weights, or list the poles yourself"),
                _ => (P::Spec, "change the specification, or list the poles yourself"),
            };
            DesignError::Input(InputError::new(field, format!("the chosen poles cannot be placed ({}); {advice}", e.message)))
        }
        other => other,
    })
}

/// A short human number: 4 significant figures, scientific when large or small.
pub fn fmt_num(x: f64) -> String {
    if !x.is_finite() {
        return if x.is_nan() { "NaN".into() } else if x > 0.0 { "∞".into() } else { "−∞".into() };
    }
    let ax = x.abs();
    if ax != 0.0 && !(1e-3..1e5).contains(&ax) {
        format!("{x:.3e}")
    } else {
        let s = format!("{x:.4}");
        let s = s.trim_end_matches('0').trim_end_matches('.').to_string();
        if s == "-0" { "0".into() } else { s }
    }
}

#[cfg(test)]
#[path = "../tests/design.rs"]
mod tests;
