//! The design run: gains, observer, tracking and integral action, the simulations and the
//! warnings, for a checked design ([`crate::check`]).

use num_complex::Complex64;

mod cloud;
pub use cloud::{cloud_job, CloudJob, CloudMemo};
mod gains;
mod margins;
mod pair;
mod robustness;
mod setup;
pub(crate) use setup::output_matrices;
mod simulation;
mod verdict;
mod warnings;

use super::check::{check_text, CheckedDesign, PoleSource};
use super::result::*;
use super::{ControllerSpec, DesignError, DesignRequest, FieldPath as P, InputError, LqrWeights, TrackingSpec};
use super::{RESULT_FORMAT, RESULT_VERSION};
use crate::plant::Plant;

/// Runs a plain state-feedback design (no controller sections).
///
/// # Errors
/// See [`DesignError`].
pub fn run(req: &DesignRequest) -> Result<DesignResult, DesignError> {
    run_with(req, &ControllerSpec::default())
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
/// tracking, integral action with anti-windup, and the whole-loop simulation. The stages:
/// `setup` (the plant in the design domain), `pair` (the design pair and its poles), `gains`
/// (analysis, gains, observer, feedforward), `simulation` (free response and loop) and
/// `warnings`; this function only puts the result together.
///
/// # Errors
/// See [`DesignError`].
pub fn run_with(req: &DesignRequest, spec: &ControllerSpec) -> Result<DesignResult, DesignError> {
    run_continued(req, spec, None)
}

/// [`run_with`] continuing from the previous design of a session (see [`crate::Continuation`]):
/// the robust placements start from its eigenvectors, so that the gains follow one branch.
///
/// # Errors
/// See [`DesignError`].
pub fn run_continued(req: &DesignRequest, spec: &ControllerSpec, previous: Option<&crate::Continuation>) -> Result<DesignResult, DesignError> {
    let s = setup::Setup::new(req, spec, previous)?;
    let dp = pair::design_pair(&s)?;
    let analysis = gains::analysis(&s)?;
    let g = gains::gains(&s, &dp)?;
    independent_verdict(&s, &dp, &g)?;
    let advice = s.t.map(|t| crate::controller::sample_rate_advice(&s.to_s(&dp.base_poles), t));
    let finite_precision = s.t.and_then(|t| finite_precision(&s, &dp, &g, t));
    let full = spec.robustness.depth == crate::RobustnessDepth::Full;
    let margins = if full { margins::margins(&s, &g) } else { None };
    let margins_unavailable = match (&margins, full) {
        (Some(_), _) => None,
        (None, false) => Some("not computed in this quick run (the page computes them right after showing the design, or when a dragged pole is released)".into()),
        (None, true) => Some(margins::unavailable(&s, &g).unwrap_or_else(|| "a computation of the margins failed".into())),
    };
    let pole_sensitivity = if full { robustness::pole_sensitivity(&s, &g) } else { None };
    let anorm = crate::linalg::svd::try_norm2(s.plant.a(), crate::linalg::svd::SvdParams::default()).unwrap_or(0.0);
    let mut warnings = warnings::requested_pole_warnings(&s, &dp, anorm);
    warnings.extend(warnings::placement_warnings(&s, &g, &analysis));
    let h = simulation::horizon(&s, &dp, &g);
    let simulation = simulation::free_response(&s, &g, &h, &mut warnings)?;
    warnings.extend(warnings::controller_warnings(&g, advice.as_ref()));
    let closed_loop = simulation::whole_loop(&s, &g, &h, &mut warnings)?;
    let uncertainty = if full { cloud::uncertainty(&s, &g, &h) } else { None };
    warnings.extend(warnings::observer_speed_warning(spec));
    if let Some(l) = &closed_loop {
        warnings.extend(warnings::loop_warnings(l, req.band));
    }
    warnings.extend(warnings::choice_warnings(&s, &dp, &g));
    warnings.extend(finite_precision.as_ref().and_then(warnings::precision_warning));
    warnings.extend(margins.as_ref().and_then(warnings::margin_warning));
    let t = s.t;
    let zeros = plant_zeros(&s);
    let result = DesignResult {
        format: RESULT_FORMAT,
        version: RESULT_VERSION,
        convention: "u = -K x",
        plant: plant_summary(s.plant),
        open_loop_poles: analysis.open_loop.iter().map(|z| pair(*z)).collect(),
        zeros: zeros.as_ref().ok().cloned().flatten(),
        zeros_unavailable: zeros.err(),
        feedback: feedback_result(&dp, &g),
        controllability: structure(&analysis.ctrb),
        observability: analysis.obsv.as_ref().map(structure),
        simulation,
        warnings,
        domain: s.domain,
        sample_time: t,
        discrete_plant: match (&spec.implementation, t) {
            (Some(imp), Some(ts)) => Some(DiscretePlantResult { a: rows(&s.ad), b: rows(&s.bd), sample_time: ts, method: crate::spec::MethodChoice::Zoh, computation_delay: imp.computation_delay }),
            _ => None,
        },
        observer: observer_result(&s, &g, &analysis),
        tracking: tracking_result(&s, &g),
        sample_rate: advice.map(|a| SampleRateResult { bandwidth: a.bandwidth, samples_per_bandwidth: a.samples_per_bandwidth, verdict: a.verdict, message: sample_rate_message(&a) }),
        closed_loop,
        search: dp.search.as_ref().map(|r| search_summary(s.plant, r)),
        pole_choice: spec.pole_choice.as_ref().map(|c| PoleChoiceResult {
            method: c.method,
            description: c.description.clone(),
            suggested_poles: c.poles.iter().map(|z| pair(*z)).collect(),
            region: c.region.as_ref().map(|r| RegionResult { min_damping: r.min_damping, min_decay_rate: r.min_decay_rate, natural_frequency: r.natural_frequency }),
        }),
        lqr: dp.lqr.as_ref().map(|d| lqr_result(spec, d)),
        finite_precision,
        margins,
        margins_unavailable,
        robustness_deferred: !full,
        pole_sensitivity,
        uncertainty,
        continuation: crate::Continuation {
            feedback: g.placement.eigenvectors.clone(),
            observer: g.observer.as_ref().and_then(|(od, _, _)| od.placement.eigenvectors.clone()),
            search: dp.search_memo.clone(),
            // Not carried on: a cloud is drawn on request, for one design.
            cloud: None,
        },
    };
    verdict::finite(&result)?;
    Ok(result)
}

/// The float32 re-check ([`crate::precision`]) of the controller loop (the gains rounded) and
/// the observer (its model `Φ`, gain and output matrix rounded); `None` when an eigenvalue
/// computation fails (the design itself has already been judged).
fn finite_precision(s: &setup::Setup, dp: &pair::DesignPair, g: &gains::Gains, t: f64) -> Option<FinitePrecisionResult> {
    use crate::precision::{recheck, round_to_f32};
    let gain = &g.placement.gain;
    let exact = &dp.da - &dp.db * gain;
    let rounded = &dp.da - &dp.db * round_to_f32(gain);
    let mut loops = vec![("controller", recheck(&exact, &rounded, t).ok()?)];
    if let (Some((od, _, _)), Some(c)) = (&g.observer, s.plant.c()) {
        let exact = &s.ad - &od.gain * c;
        let rounded = round_to_f32(&s.ad) - round_to_f32(&od.gain) * round_to_f32(c);
        loops.push(("observer", recheck(&exact, &rounded, t).ok()?));
    }
    Some(FinitePrecisionResult {
        number_format: "float32",
        loops: loops
            .into_iter()
            .map(|(name, ch)| LoopPrecision {
                name,
                max_pole_move: ch.max_distance,
                worst_damping_fraction: ch.worst_damping_fraction,
                stable: ch.stable || !ch.designed_stable,
                poles: ch.poles.iter().map(|p| [pair(p.designed), pair(p.rounded)]).collect(),
            })
            .collect(),
    })
}

/// The closed loop and the observer, judged by routes independent of placement
/// ([`verdict::stability`]) before anything is simulated.
fn independent_verdict(s: &setup::Setup, dp: &pair::DesignPair, g: &gains::Gains) -> Result<(), DesignError> {
    let relative = match s.domain {
        crate::analysis::Domain::Continuous => s.ap.relative_tolerance,
        crate::analysis::Domain::Discrete => 1e-12,
    };
    let closed = &dp.da - &dp.db * &g.placement.gain;
    verdict::stability(s.domain, &closed, &dp.dpoles, relative, "gain")?;
    if let (Some((od, poles, _)), Some(c)) = (&g.observer, s.plant.c()) {
        verdict::stability(s.domain, &(&s.ad - &od.gain * c), poles, relative, "observer gain")?;
    }
    Ok(())
}

fn plant_summary(plant: &Plant) -> PlantSummary {
    PlantSummary {
        states: plant.states(),
        inputs: plant.inputs(),
        outputs: plant.outputs(),
        state_names: plant.state_names().to_vec(),
        input_names: plant.input_names().to_vec(),
        output_names: plant.output_names().to_vec(),
        state_units: plant.state_units().to_vec(),
        input_units: plant.input_units().to_vec(),
    }
}

fn feedback_result(dp: &pair::DesignPair, g: &gains::Gains) -> FeedbackResult {
    let p = &g.placement;
    FeedbackResult {
        gain: rows(&g.k_x),
        requested_poles: dp.dpoles.iter().map(|z| pair(*z)).collect(),
        achieved_poles: p.achieved_poles.iter().map(|z| pair(*z)).collect(),
        max_pole_error: p.max_pole_error,
        eigenvector_condition: p.eigenvector_condition,
        balanced_eigenvector_condition: p.balanced_eigenvector_condition,
        eigenvector_determinant: p.abs_det_x,
        gain_norm: p.gain_norm,
        iterations: p.iterations,
        converged: p.converged,
        input_rank: p.input_rank,
        not_assigned: p.not_assigned.iter().map(|z| pair(*z)).collect(),
        fixed_modes: p.fixed_modes.iter().map(|z| pair(*z)).collect(),
        delay_gain: g.k_u.as_ref().map(rows),
        branch: p.branch,
    }
}

fn observer_result(s: &setup::Setup, g: &gains::Gains, an: &gains::Analysis) -> Option<ObserverResult> {
    g.observer.as_ref().map(|(od, op, form)| ObserverResult {
        gain: rows(&od.gain),
        current_gain: od.current_gain.as_ref().map(rows),
        form: ObserverRunForm::of(*form, s.t.is_some()),
        requested_poles: op.iter().map(|z| pair(*z)).collect(),
        achieved_poles: od.placement.achieved_poles.iter().map(|z| pair(*z)).collect(),
        max_pole_error: od.placement.max_pole_error,
        eigenvector_condition: od.placement.eigenvector_condition,
        gain_norm: od.gain_norm,
        noise_to_input_gain: crate::linalg::svd::try_norm2(&(&g.k_x * &od.gain), crate::linalg::svd::SvdParams::default()).unwrap_or(f64::NAN),
        detectable: an.obsv.as_ref().is_some_and(|o| o.stable_hidden_modes),
    })
}

fn tracking_result(s: &setup::Setup, g: &gains::Gains) -> Option<TrackingResult> {
    let names_of = |idx: &[usize]| idx.iter().map(|&i| s.plant.output_names()[i].clone()).collect::<Vec<_>>();
    match (&s.spec.tracking, &g.feedforward, &g.k_i) {
        (TrackingSpec::Feedforward { outputs }, Some((nx, nu)), _) => Some(TrackingResult::Feedforward { outputs: names_of(outputs), nx: rows(nx), nu: rows(nu) }),
        (TrackingSpec::Integral { outputs, .. }, _, Some(ki)) => Some(TrackingResult::Integral {
            outputs: names_of(outputs),
            state_gain: rows(&g.k_x),
            integral_gain: rows(ki),
            anti_windup: match s.spec.anti_windup {
                crate::controller::AntiWindup::None => crate::spec::AntiWindupMode::None,
                crate::controller::AntiWindup::Clamp => crate::spec::AntiWindupMode::Clamp,
                crate::controller::AntiWindup::BackCalculation { .. } => crate::spec::AntiWindupMode::BackCalculation,
            },
            time_constant: match s.spec.anti_windup {
                crate::controller::AntiWindup::BackCalculation { time_constant } => Some(time_constant),
                _ => None,
            },
            nx: g.feedforward.as_ref().map(|(nx, _)| rows(nx)),
            nu: g.feedforward.as_ref().map(|(_, nu)| rows(nu)),
        }),
        _ => None,
    }
}

fn search_summary(plant: &Plant, r: &crate::search::SearchResult) -> SearchSummary {
    SearchSummary {
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
        shortfall: r.shortfall,
    }
}

fn lqr_result(spec: &ControllerSpec, d: &crate::riccati::LqrDesign) -> LqrResult {
    let (qw, rw) = match &spec.lqr {
        Some(LqrWeights::Matrices { q, r, .. }) => (rows(q), rows(r)),
        Some(LqrWeights::Bryson { max_state, max_input }) => crate::riccati::bryson_weights(max_state, max_input).map(|(q, r)| (rows(&q), rows(&r))).unwrap_or_default(),
        None => (Vec::new(), Vec::new()),
    };
    LqrResult {
        riccati_solution: rows(&d.riccati_solution),
        residual: d.residual,
        gain: rows(&d.gain),
        closed_loop_poles: d.closed_loop_poles.iter().map(|z| pair(*z)).collect(),
        q: qw,
        r: rw,
        state_weight_smallest_eigenvalue: d.state_weight_smallest_eigenvalue,
    }
}

pub use warnings::OBSERVER_SPEED_RULE;

/// The search for the fastest design that [`run_checked_continued`] would run for `design`
/// after `previous`, ready to run in steps ([`crate::SearchJob`]); `None` when there is none
/// to run: no search, its outcome already in `previous` for these very inputs, or an error
/// before it (which the run then reports). Put the job's memo into the continuation given to
/// the run and the run uses it instead of searching.
pub fn search_job(design: &CheckedDesign, previous: Option<&crate::Continuation>) -> Option<crate::SearchJob> {
    let s = setup::Setup::new(&design.request, &design.controller, previous).ok()?;
    pair::search_job(&s)
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
    run_checked_continued(design, None)
}

/// [`run_checked`] continuing from the previous design of a session ([`run_continued`]).
///
/// # Errors
/// See [`DesignError`].
pub fn run_checked_continued(design: &CheckedDesign, previous: Option<&crate::Continuation>) -> Result<DesignResult, DesignError> {
    let run = run_continued(&design.request, &design.controller, previous);
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

/// The plant's zeros in the design's domain; `Ok(None)` without outputs.
fn plant_zeros(s: &setup::Setup) -> Result<Option<ZerosResult>, String> {
    if s.plant.c().is_none() {
        return Ok(None);
    }
    // With tracking, the zeros from the inputs to the tracked outputs (those a step is judged
    // on); else to every output.
    let tracked_only = !s.tracked.is_empty();
    let (c, d) = if tracked_only { (s.ct.clone(), s.dt.clone()) } else { output_matrices(s.plant) };
    let z = crate::zeros::try_invariant_zeros(&s.ad, &s.bd, &c, &d, crate::zeros::ZeroParams::default()).map_err(|e| e.to_string())?;
    // A zero within rounding (1e-9, relative to its size in the s-plane) of the stability
    // boundary is not called unstable.
    let unstable = |w: &Complex64| {
        let tol = match s.domain {
            crate::analysis::Domain::Continuous => 1e-9 * w.norm().max(1.0),
            crate::analysis::Domain::Discrete => 1e-9,
        };
        !s.domain.is_strictly_stable(*w, tol) && !s.domain.is_marginal(*w, tol)
    };
    let mut order: Vec<usize> = (0..z.zeros.len()).collect();
    order.sort_by(|&i, &j| z.zeros[i].re.total_cmp(&z.zeros[j].re).then(z.zeros[j].im.total_cmp(&z.zeros[i].im)));
    let zeros: Vec<Complex64> = order.iter().map(|&i| z.zeros[i]).collect();
    let residuals = order.iter().map(|&i| z.residuals.get(i).copied().unwrap_or(f64::NAN)).collect();
    let unstable: Vec<bool> = zeros.iter().map(unstable).collect();
    Ok(Some(ZerosResult { non_minimum_phase: unstable.contains(&true), zeros: zeros.iter().map(|w| pair(*w)).collect(), residuals, unstable, tracked_only }))
}

/// The sample-rate advice in words, with the figures in the display format.
pub(super) fn sample_rate_message(a: &crate::controller::SampleRateAdvice) -> String {
    use crate::controller::SampleRateVerdict as V;
    let deadbeat = a.deadbeat_poles;
    let (ratio, wb) = (a.samples_per_bandwidth.unwrap_or(f64::INFINITY), a.bandwidth.unwrap_or(0.0));
    let aside = if deadbeat > 0 { format!(" ({deadbeat} pole(s) at z = 0, which settle in one sample each, are left out)") } else { String::new() };
    let (ratio, wb) = (fmt_num(ratio), fmt_num(wb));
    match a.verdict {
        V::Deadbeat => format!("Every closed-loop pole is at z = 0 (deadbeat): the loop settles in at most {deadbeat} samples, so the sample time itself sets the speed and the rule of 10–30 samples per bandwidth period does not apply. Deadbeat asks for inputs of the order of the state error divided by a power of the sample time: check the peak inputs against the limits."),
        V::TooSlow => format!("The sample rate is only {ratio} times the closed-loop bandwidth ({wb} rad/s){aside}; rules of thumb ask for 10–30 times. Sample faster or slow the poles down: the digital loop will behave worse than designed."),
        V::Adequate => format!("The sample rate is {ratio} times the closed-loop bandwidth ({wb} rad/s){aside}, within the usual 10–30."),
        V::Fast => format!("The sample rate is {ratio} times the closed-loop bandwidth ({wb} rad/s){aside}: more than enough (beyond about 30, numerical precision of the controller coefficients starts to matter more than sampling)."),
    }
}

/// A number for people: the significant digits in force (see [`crate::format`]).
pub fn fmt_num(x: f64) -> String {
    crate::format::number(x)
}

#[cfg(test)]
#[path = "../tests/design.rs"]
mod tests;
