//! Rules of the controller sections: digital implementation, plane, observer, tracking,
//! anti-windup, the loop scenario, and the length of a digital simulation.

use num_complex::Complex64;

use super::{non_negative, outputs, plural, poles, positive, vector, Checker, DEFAULT_OBSERVER_SPEED, MAX_LOOP_SAMPLES};
use crate::controller::{AntiWindup, ObserverForm};
use crate::plant::Plant;
use crate::spec::{AntiWindupMode, DesignSpec, ObserverFormChoice, PlaneChoice, TrackingMode, Whole};
use crate::{fmt_num, ControllerSpec, DesignRequest, FieldPath as P, Implementation, ObserverPoles, ObserverSpec, Plane, ScenarioSpec, TrackingSpec};

/// Everything beyond the plain state feedback, field by field.
pub(super) fn controller(spec: &DesignSpec, plant: Option<&Plant>, c: &mut Checker) -> ControllerSpec {
    let mut out = ControllerSpec::default();
    let n = plant.map(|p| p.states());
    let m = plant.map(|p| p.inputs());
    // C left out is known without a plant; C given but unreadable is C's own error.
    let has_c = if spec.plant.c.is_none() { Some(false) } else { plant.map(|p| p.c().is_some()) };
    if let Some(t) = &spec.plant.sample_time {
        if let Some(r) = positive(t, "the sample time of the discrete plant in seconds", "0.001") {
            out.plant_sample_time = c.take(P::PlantSampleTime, r);
        }
    }
    let digital = implementation(spec, m, &mut out, c);
    match spec.feedback.as_ref().and_then(|f| f.plane) {
        None | Some(PlaneChoice::S) => {}
        Some(PlaneChoice::Z) if digital => out.plane = Plane::Z,
        Some(PlaneChoice::Z) => c.push(P::FeedbackPlane, "z-plane poles belong to a digital controller: give a sample time, or use the s-plane"),
    }
    observer(spec, n, has_c, digital, &mut out, c);
    let tracked = tracking(spec, plant, has_c, &mut out, c);
    scenario(spec, plant, has_c, digital, tracked, &mut out, c);
    out
}

/// A pole list that read (`r`), with its live size; when `expected` is known and differs, the
/// error `mismatch(given, expected)` goes to `path`. The list is kept even then, as before.
fn counted_poles(c: &mut Checker, path: P, r: Result<Vec<Complex64>, String>, expected: Option<usize>, mismatch: impl Fn(usize, usize) -> String) -> Option<Vec<Complex64>> {
    let p = c.take(path, r)?;
    c.size(path, plural(p.len(), "pole", "poles"));
    if let Some(e) = expected.filter(|e| *e != p.len()) {
        c.push(path, mismatch(p.len(), e));
    }
    Some(p)
}

/// The digital implementation; true when the controller is digital (a sample time was given,
/// even one that did not read).
fn implementation(spec: &DesignSpec, m: Option<usize>, out: &mut ControllerSpec, c: &mut Checker) -> bool {
    let Some(imp) = &spec.implementation else {
        return spec.plant.sample_time.is_some();
    };
    if spec.plant.sample_time.is_some() {
        c.push(P::Implementation, "the plant is already discrete (plant.sample_time); remove one of the two");
        return true;
    }
    let delay = imp.computation_delay.unwrap_or(false);
    let t = match imp.sample_time.as_ref().and_then(|t| positive(t, "the controller's sample time in seconds", "0.001 for 1 kHz")) {
        Some(r) => c.take(P::SampleTime, r),
        None if delay => {
            c.push(P::ComputationDelay, "a computation delay is a digital effect (the input is applied one sample late): give a sample time, or turn it off");
            return false;
        }
        None => {
            c.push(P::SampleTime, "required: give the controller's sample time in seconds, for example 0.001 for 1 kHz");
            return false;
        }
    };
    let delay_poles = match imp.delay_poles.as_ref() {
        Some(_) if !delay => {
            c.push(P::DelayPoles, "delay poles are only used with a computation delay");
            None
        }
        Some(p) => match poles(p) {
            None => Some(Vec::new()),
            Some(r) => counted_poles(c, P::DelayPoles, r, m, |k, m| {
                format!("{} given but the plant has {}; give one z-plane pole per input (0 is usual), or leave this out for 0", plural(k, "pole", "poles"), plural(m, "input", "inputs"))
            }),
        },
        None => Some(Vec::new()),
    };
    if let (Some(t), Some(dp)) = (t, delay_poles) {
        let delay_poles = if dp.is_empty() { vec![Complex64::new(0.0, 0.0); m.unwrap_or(0)] } else { dp };
        out.implementation = Some(Implementation { sample_time: t, computation_delay: delay, delay_poles });
    }
    true
}

fn observer(spec: &DesignSpec, n: Option<usize>, has_c: Option<bool>, digital: bool, out: &mut ControllerSpec, c: &mut Checker) {
    let Some(o) = &spec.observer else { return };
    if has_c == Some(false) {
        c.push(P::Observer, "an observer estimates the state from the measurements: give the output matrix C, or leave the observer out");
    }
    let poles_read = match (&o.poles, &o.speed_factor) {
        (Some(_), Some(_)) => {
            c.push(P::Observer, "give either observer poles or a speed factor, not both");
            None
        }
        (Some(p), None) => match poles(p) {
            None => {
                c.push(P::ObserverPoles, "required with this choice: list one observer pole per state, or choose a speed factor instead");
                None
            }
            Some(r) => {
                counted_poles(c, P::ObserverPoles, r, n, |k, n| format!("{} given but the plant has {}; give one observer pole per state", plural(k, "pole", "poles"), plural(n, "state", "states")))
                    .map(ObserverPoles::Given)
            }
        },
        (None, Some(f)) => match positive(f, "how many times faster than the controller poles", "4") {
            None => Some(ObserverPoles::SpeedFactor(DEFAULT_OBSERVER_SPEED)),
            Some(r) => c.take(P::ObserverSpeedFactor, r).map(ObserverPoles::SpeedFactor),
        },
        (None, None) => Some(ObserverPoles::SpeedFactor(DEFAULT_OBSERVER_SPEED)),
    };
    let form = match o.form {
        None | Some(ObserverFormChoice::Predictor) => Some(ObserverForm::Predictor),
        Some(ObserverFormChoice::Current) if digital => Some(ObserverForm::Current),
        Some(ObserverFormChoice::Current) => {
            c.push(P::ObserverForm, "the current-estimator form corrects with the measurement of the same sample, so it needs a digital controller: give a sample time, or use the predictor form");
            None
        }
    };
    if let (Some(poles), Some(form)) = (poles_read, form) {
        out.observer = Some(ObserverSpec { poles, form });
    }
}

/// Tracking and anti-windup; the number of tracked outputs when known.
fn tracking(spec: &DesignSpec, plant: Option<&Plant>, has_c: Option<bool>, out: &mut ControllerSpec, c: &mut Checker) -> Option<usize> {
    let mode = spec.tracking.as_ref().map_or(TrackingMode::None, |t| t.mode);
    let m = plant.map(|p| p.inputs());
    let mut tracked = Some(0);
    if let Some(t) = spec.tracking.as_ref().filter(|_| mode != TrackingMode::None) {
        tracked = None;
        if has_c == Some(false) {
            c.push(P::Tracking, "tracking follows a reference on the outputs: give the output matrix C, or leave tracking out");
        }
        let chosen = match plant.filter(|p| p.c().is_some()) {
            Some(pl) => match t.outputs.as_ref().and_then(|o| outputs(o, pl.output_names())) {
                None => Some((0..pl.outputs()).collect::<Vec<usize>>()),
                Some(r) => {
                    let o = c.take(P::TrackedOutputs, r);
                    if let Some(o) = &o {
                        c.size(P::TrackedOutputs, plural(o.len(), "output", "outputs"));
                    }
                    o
                }
            },
            None => None,
        };
        let two_dof = t.feedforward == Some(true);
        if two_dof && mode != TrackingMode::Integral {
            c.push(
                P::TrackingFeedforward,
                "feedforward added to integral action (two degrees of freedom) needs tracking.mode integral; with mode feedforward the reference is fed forward already: leave this out",
            );
        }
        if let (Some(o), Some(m)) = (&chosen, m) {
            tracked = Some(o.len());
            // Feeding the reference forward (feedforward, or integral action with it) needs one
            // tracked output per input: N_x, N_u solve a square system.
            let feeds_forward = mode == TrackingMode::Feedforward || (mode == TrackingMode::Integral && two_dof);
            if feeds_forward && o.len() != m {
                let (path, what, advice) = match (mode, o.len() > m) {
                    (TrackingMode::Feedforward, true) => (P::TrackedOutputs, "feedforward tracking", "list fewer outputs"),
                    (TrackingMode::Feedforward, false) => (P::TrackedOutputs, "feedforward tracking", "list more outputs, or use integral action"),
                    (_, true) => (P::TrackingFeedforward, "feedforward", "list fewer outputs, or use integral action alone"),
                    (_, false) => (P::TrackingFeedforward, "feedforward", "list more outputs, or use integral action alone"),
                };
                c.push(path, format!("{what} needs exactly as many tracked outputs as inputs: {} tracked, {}; {advice}", plural(o.len(), "output", "outputs"), plural(m, "input", "inputs")));
            }
            if mode == TrackingMode::Integral && o.len() > m {
                c.push(
                    P::TrackedOutputs,
                    format!(
                        "integral action can hold at most as many outputs as there are inputs: {} tracked, {}; list fewer outputs",
                        plural(o.len(), "output", "outputs"),
                        plural(m, "input", "inputs")
                    ),
                );
            }
        }
        let integral_poles = match t.integral_poles.as_ref().filter(|_| mode == TrackingMode::Integral).and_then(poles) {
            None => Some(Vec::new()),
            Some(r) => counted_poles(c, P::IntegralPoles, r, tracked, |k, q| {
                format!(
                    "{} given but {} tracked; give one pole per integrator, or leave this out and list them with the controller poles",
                    plural(k, "pole", "poles"),
                    plural(q, "output is", "outputs are")
                )
            }),
        };
        if t.integral_poles.is_some() && mode != TrackingMode::Integral {
            c.push(P::IntegralPoles, "integrator poles belong to integral action: leave them out, or use integral action");
        }
        match (mode, chosen, integral_poles) {
            (TrackingMode::Feedforward, Some(outputs), _) => out.tracking = TrackingSpec::Feedforward { outputs },
            (TrackingMode::Integral, Some(outputs), Some(integral_poles)) => out.tracking = TrackingSpec::Integral { outputs, integral_poles, feedforward: two_dof },
            _ => {}
        }
    }
    if let Some(aw) = &spec.anti_windup {
        match aw.mode {
            AntiWindupMode::None => {}
            _ if mode != TrackingMode::Integral => c.push(P::AntiWindup, "anti-windup acts on the integrator: it needs integral action"),
            AntiWindupMode::Clamp => out.anti_windup = AntiWindup::Clamp,
            AntiWindupMode::BackCalculation => match aw.time_constant.as_ref().and_then(|t| positive(t, "the tracking time constant in seconds", "0.05")) {
                None => c.push(P::AntiWindupTime, "required for back-calculation: the tracking time constant in seconds (a fraction of the integrator's time constant is usual)"),
                Some(r) => {
                    if let Some(tt) = c.take(P::AntiWindupTime, r) {
                        out.anti_windup = AntiWindup::BackCalculation { time_constant: tt };
                    }
                }
            },
        }
    }
    tracked
}

/// A list with one value per item (`count`, when known).
fn counted(c: &mut Checker, path: P, list: Option<&crate::spec::NumberList>, count: Option<(usize, &str, &str)>) -> Option<Vec<f64>> {
    let v = c.take(path, list.and_then(vector)?)?;
    c.size(path, plural(v.len(), "value", "values"));
    if let Some((n, one, many)) = count.filter(|(n, _, _)| *n != v.len()) {
        let text = match list {
            Some(crate::spec::NumberList::Text(t)) => Some(t.as_str()),
            _ => None,
        };
        c.push(path, format!("{} given but there {} {}; give one per {one}{}", plural(v.len(), "value", "values"), if n == 1 { "is" } else { "are" }, plural(n, one, many), super::comma_hint(text)));
        return None;
    }
    Some(v)
}

/// The disturbance input matrix `E`: one row per state (one line of n numbers is a column).
fn disturbance_input(spec: &DesignSpec, n: Option<usize>, c: &mut Checker) -> Option<nalgebra::DMatrix<f64>> {
    let e = c.take(P::PlantE, spec.plant.e.as_ref().and_then(super::matrix)?)?;
    let e = if e.nrows() == 1 && e.ncols() > 1 && n == Some(e.ncols()) { e.transpose() } else { e };
    c.size(P::PlantE, format!("{} × {}", e.nrows(), e.ncols()));
    match n {
        Some(n) if e.nrows() != n => {
            c.push(P::PlantE, format!("E has {} but the plant has {}; give one row per state (one column per load)", plural(e.nrows(), "row", "rows"), plural(n, "state", "states")));
            None
        }
        _ => Some(e),
    }
}

fn scenario(spec: &DesignSpec, plant: Option<&Plant>, has_c: Option<bool>, digital: bool, tracked: Option<usize>, out: &mut ControllerSpec, c: &mut Checker) {
    let mut sc = ScenarioSpec::default();
    let (n, m, p) = (plant.map(|p| p.states()), plant.map(|p| p.inputs()), plant.map(|p| p.outputs()));
    sc.disturbance_input = disturbance_input(spec, n, c);
    let Some(s) = &spec.simulation else {
        out.scenario = ScenarioSpec { max_samples: out.sample_time().map(|_| MAX_LOOP_SAMPLES), ..sc };
        return;
    };
    if s.reference.is_some() && tracked == Some(0) {
        c.push(P::Reference, "a reference step needs tracking: choose feedforward or integral action, or leave this out");
    } else if let Some(r) = counted(c, P::Reference, s.reference.as_ref(), tracked.map(|q| (q, "tracked output", "tracked outputs"))) {
        sc.reference = r;
    }
    if let Some(t) = s.reference_time.as_ref().and_then(|t| non_negative(t, "the time of the reference step in seconds")) {
        sc.reference_time = c.take(P::ReferenceTime, t).unwrap_or(0.0);
    }
    let loop_runs = spec.observer.is_some() || !matches!(out.tracking, TrackingSpec::None) || spec.tracking.as_ref().is_some_and(|t| t.mode != TrackingMode::None) || digital;
    let loads = match &sc.disturbance_input {
        Some(e) => Some((e.ncols(), "column of E (load)", "columns of E (loads)")),
        None if c.has(P::PlantE) => None,
        None => m.map(|m| (m, "input", "inputs")),
    };
    if let Some(w) = counted(c, P::Disturbance, s.disturbance.as_ref(), loads) {
        if loop_runs {
            sc.disturbance = w;
        } else {
            c.push(P::Disturbance, "the load step is simulated in the loop, which runs with an observer, tracking or a sample time; choose one of those, or leave this out");
        }
    }
    if let Some(t) = s.disturbance_time.as_ref().and_then(|t| non_negative(t, "the time of the load step in seconds")) {
        sc.disturbance_time = c.take(P::DisturbanceTime, t).unwrap_or(0.0);
    }
    if s.noise_std.as_ref().and_then(vector).is_some() && has_c == Some(false) {
        c.push(P::NoiseStd, "noise is added to the measured outputs: give the output matrix C, or leave this out");
    } else if let Some(ns) = counted(c, P::NoiseStd, s.noise_std.as_ref(), p.map(|p| (p, "output", "outputs"))) {
        if ns.iter().any(|v| *v < 0.0) {
            c.push(P::NoiseStd, "a standard deviation cannot be negative; give zero or a positive number per output");
        } else if !digital {
            c.push(P::NoiseStd, "measurement noise is simulated only with a digital controller (one noise sample per controller sample): give a sample time, or leave this out");
        } else {
            sc.noise_std = ns;
        }
    }
    match &s.seed {
        None => {}
        Some(Whole::Number(v)) => sc.seed = *v,
        Some(Whole::Text(t)) if t.trim().is_empty() => {}
        Some(Whole::Text(t)) => match t.trim().parse::<u64>() {
            Ok(v) => sc.seed = v,
            Err(_) => c.push(P::Seed, format!("\"{}\" is not a whole number from 0 up; the seed picks the noise sequence (the same seed gives the same noise)", t.trim())),
        },
    }
    sc.initial_estimate = counted(c, P::InitialEstimate, s.initial_estimate.as_ref(), n.map(|n| (n, "state", "states")));
    // Every digital simulation is capped, at either door.
    sc.max_samples = if digital { Some(MAX_LOOP_SAMPLES) } else { None };
    out.scenario = sc;
}

/// Refuses a typed simulated time of more than [`MAX_LOOP_SAMPLES`] samples, and steps that
/// come after the end of the simulated time (typed, or the longest the cap allows); the error
/// goes to the field that sets the length. A time chosen from the slowest pole is never refused:
/// the run cuts it to the cap ([`ScenarioSpec::max_samples`]) and says so.
pub(super) fn loop_length(req: &DesignRequest, spec: &ControllerSpec, c: &mut Checker) {
    let sc = &spec.scenario;
    let events = sc.reference_time.max(if sc.disturbance.is_empty() { 0.0 } else { sc.disturbance_time });
    if let Some(d) = req.duration {
        if !matches!(spec.tracking, TrackingSpec::None) && sc.reference_time > d {
            c.push(
                P::ReferenceTime,
                format!("the reference step at {} s comes after the end of the simulated time ({} s); make it earlier, or simulate longer", fmt_num(sc.reference_time), fmt_num(d)),
            );
        }
        if !sc.disturbance.is_empty() && sc.disturbance_time > d {
            c.push(
                P::DisturbanceTime,
                format!("the load step at {} s comes after the end of the simulated time ({} s); make it earlier, or simulate longer", fmt_num(sc.disturbance_time), fmt_num(d)),
            );
        }
    }
    let Some(t) = spec.sample_time() else { return };
    let samples = |d: f64| d / t;
    let too_many = |d: f64| !(samples(d) <= MAX_LOOP_SAMPLES);
    let advice = format!("at most {} samples are simulated", MAX_LOOP_SAMPLES as u64);
    if let Some(d) = req.duration {
        if too_many(d) {
            c.push(P::Duration, format!("{} s at a sample time of {} s is {:.0} samples, but {advice}: simulate a shorter time, or sample less often", fmt_num(d), fmt_num(t), samples(d).ceil()));
        }
        return;
    }
    // A time chosen from the slowest pole is cut to the cap by the run (and said in a note);
    // only the step times the user typed can make it impossible.
    if too_many(events) {
        let field = if sc.reference_time >= sc.disturbance_time || sc.disturbance.is_empty() { P::ReferenceTime } else { P::DisturbanceTime };
        c.push(
            field,
            format!(
                "the step at {} s comes after the longest simulated time at a sample time of {} s ({} s, {advice}): make the step earlier, or sample less often",
                fmt_num(events),
                fmt_num(t),
                fmt_num(MAX_LOOP_SAMPLES * t)
            ),
        );
    }
}
