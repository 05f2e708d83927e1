//! Rules of the pole choice: a list, a pattern, a specification or LQR weights; and the search
//! for the fastest design within the actuator limits.

use num_complex::Complex64;

use super::{band_fraction, plural, poles, positive, scalar, vector, Basics, Checker, PoleSetup, PoleSource};
use crate::patterns::{BesselNormalisation, Pattern, PatternError, ScaleTarget, SettlingRule, Specification, SpeedRequirement};
use crate::plant::Plant;
use crate::search::Situation;
use crate::spec::{BesselChoice, BrysonDoc, DesignSpec, FeedbackDoc, LqrDoc, PatternDoc, PatternFamily, PlaneChoice, SpecDoc};
use crate::{fmt_num, ControllerSpec, FieldPath as P, LqrWeights, PoleChoice, PoleChoiceMethod, TrackingSpec};

/// The normalisation of a pattern in words (for reports).
fn normalisation_words(n: &crate::patterns::Normalisation) -> String {
    use crate::patterns::Normalisation;
    match n {
        Normalisation::UnitDcGroupDelay => "normalised to a group delay of 1 s at DC".into(),
        Normalisation::HalfPowerAtUnitFrequency => "normalised to half power at 1 rad/s".into(),
        Normalisation::UnitSettlingTime { band } => format!("normalised to settle into ±{} % at 1 s", fmt_num(band * 100.0)),
        Normalisation::UnitNaturalFrequency => "normalised to a natural frequency of 1 rad/s".into(),
    }
}

/// How Polewright is asked to choose the closed-loop poles when they are not listed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PoleRequest {
    /// A prototype pattern scaled to a target. The settling band, when it matters, is part
    /// of the pattern (a Bessel pattern normalised to a unit settling time) and of the target.
    Pattern { pattern: Pattern, target: ScaleTarget },
    /// A time-response specification: the dominant pair at the corner of its region and the
    /// other poles faster ([`crate::patterns::poles_from_specification`]).
    Specification(Specification),
}

/// Chooses `order` closed-loop poles (plant states, plus the integrators when their poles are
/// not listed apart) as `request` asks: the poles, a plain description of how they were
/// obtained and, for a specification, its admissible region. The design file and the page
/// both go through here.
///
/// # Errors
/// The [`crate::patterns::PatternError`] of the pattern or specification (an invalid number,
/// an order the pattern lacks, a failed settling or frequency computation).
pub fn choose_poles(request: &PoleRequest, order: usize) -> Result<PoleChoice, crate::patterns::PatternError> {
    use crate::patterns::{poles_from_specification, scaled_prototype_poles, specification_region, DominantPairParams, ResponseParams};
    match request {
        PoleRequest::Pattern { pattern, target } => {
            let scaled = scaled_prototype_poles(*pattern, order, *target, &ResponseParams::default())?;
            let method = match pattern {
                Pattern::Bessel(_) => PoleChoiceMethod::Bessel,
                Pattern::Butterworth => PoleChoiceMethod::Butterworth,
                Pattern::Itae => PoleChoiceMethod::Itae,
                Pattern::Binomial => PoleChoiceMethod::Binomial,
            };
            let description = match target {
                ScaleTarget::SettlingTime { seconds, band } => format!(
                    "{} pattern of order {order} ({}), scaled so that its own step response settles into ±{} % at {} s",
                    pattern.name(),
                    normalisation_words(&scaled.prototype.normalisation),
                    fmt_num(band * 100.0),
                    fmt_num(*seconds)
                ),
                ScaleTarget::Bandwidth { rad_per_s } => {
                    format!("{} pattern of order {order} ({}), scaled to a −3 dB bandwidth of {} rad/s", pattern.name(), normalisation_words(&scaled.prototype.normalisation), fmt_num(*rad_per_s))
                }
            };
            Ok(PoleChoice { method, description, poles: scaled.poles, region: None })
        }
        PoleRequest::Specification(spec) => {
            let region = specification_region(spec)?;
            let chosen = poles_from_specification(spec, order, &DominantPairParams::default())?;
            let description = format!(
                "dominant pair at ζ = {}, σ = {} 1/s from {} % overshoot and {} s settling (±{} %; second-order formulas, an approximation: confirm by simulation), the other {} pole(s) five times faster",
                fmt_num(region.min_damping),
                fmt_num(region.min_decay_rate),
                fmt_num(spec.overshoot * 100.0),
                fmt_num(spec.settling_time),
                fmt_num(spec.settling_band * 100.0),
                order.saturating_sub(2)
            );
            Ok(PoleChoice { method: PoleChoiceMethod::Specification, description, poles: chosen.poles, region: Some(region) })
        }
    }
}

/// `count` of plant states, delay states and integrators, in words.
fn design_states_text(n: usize, delay: usize, integrators: usize) -> String {
    let mut parts = vec![plural(n, "plant state", "plant states")];
    if delay > 0 {
        parts.push(plural(delay, "delay state", "delay states"));
    }
    if integrators > 0 {
        parts.push(plural(integrators, "integrator", "integrators"));
    }
    parts.join(" + ")
}

/// The field a pattern or specification error belongs to.
fn pattern_error_field(e: &PatternError, pattern: bool) -> P {
    let main = if pattern { P::Pattern } else { P::Spec };
    match e {
        PatternError::InvalidValue { quantity, .. } => match *quantity {
            "the overshoot" => P::SpecOvershoot,
            "the settling time" if pattern => P::PatternSettlingTime,
            "the settling time" => P::SpecSettlingTime,
            "the rise time" => P::SpecRiseTime,
            "the settling band" if pattern => P::PatternBand,
            "the settling band" => P::SpecBand,
            _ => main,
        },
        PatternError::NotSettled { .. } if pattern => P::PatternSettlingTime,
        _ => main,
    }
}

/// Reads the pole source and the search into `out`.
pub(super) fn pole_source(spec: &DesignSpec, plant: Option<&Plant>, known: &Basics, out: &mut ControllerSpec, c: &mut Checker) -> Option<PoleSetup> {
    let Some(fb) = &spec.feedback else {
        c.push(P::Feedback, "required: give the closed-loop poles (\"poles\"), a pattern, a specification or LQR weights");
        return None;
    };
    let given = [fb.poles.is_some(), fb.pattern.is_some(), fb.spec.is_some(), fb.lqr.is_some()];
    if given.iter().filter(|g| **g).count() != 1 {
        c.push(
            P::Feedback,
            "give exactly one of \"poles\" (the closed-loop poles), \"pattern\" (a prototype scaled to a settling time or bandwidth), \"spec\" (overshoot and settling time) or \"lqr\" (weights)",
        );
        return None;
    }
    let source = match given {
        [true, ..] => PoleSource::List,
        [_, true, ..] => PoleSource::Pattern,
        [_, _, true, _] => PoleSource::Specification,
        _ => PoleSource::Lqr,
    };
    let n = plant.map(|p| p.states());
    let (integrators, apart) = match &out.tracking {
        TrackingSpec::Integral { outputs, integral_poles, .. } => (outputs.len(), !integral_poles.is_empty()),
        _ => (0, false),
    };
    // The tracking fields decide the number of poles: without them the count is unknown.
    let tracking_read = !(c.has(P::Tracking) || c.has(P::TrackedOutputs) || c.has(P::IntegralPoles));
    let order = n.map(|n| n + if apart { 0 } else { integrators });
    let mut setup = PoleSetup { source, poles: Vec::new(), lqr_inputs_from_limits: false, search_notes: Vec::new() };
    let mut ok = true;
    if matches!(source, PoleSource::Pattern | PoleSource::Specification) && fb.plane == Some(PlaneChoice::Z) {
        c.push(P::FeedbackPlane, "a pattern or a specification gives s-plane poles (mapped by z = e^(sT) for a digital controller): use the s-plane, or list z-plane poles yourself");
        ok = false;
    }
    let request = match source {
        PoleSource::List => {
            match listed(fb, c) {
                Some(p) => {
                    if let (Some(n), true) = (n, tracking_read) {
                        ok &= pole_count(c, p.len(), n, if apart { 0 } else { integrators });
                    }
                    setup.poles = p;
                }
                None => ok = false,
            }
            None
        }
        PoleSource::Pattern => fb.pattern.as_ref().and_then(|p| pattern_request(p, known.band, c)),
        PoleSource::Specification => fb.spec.as_ref().and_then(|s| spec_request(s, known.band, c)),
        PoleSource::Lqr => {
            let lqr = fb.lqr.as_ref().and_then(|l| lqr_weights(l, plant, out, integrators, tracking_read, known, &mut setup, c));
            ok &= lqr.is_some();
            out.lqr = lqr;
            None
        }
    };
    if matches!(source, PoleSource::Pattern | PoleSource::Specification) {
        ok &= request.is_some();
    }
    if let (Some(req), Some(order), true, true) = (request, order, ok, tracking_read) {
        let pattern = matches!(req, PoleRequest::Pattern { .. });
        match choose_poles(&req, order) {
            Ok(choice) => {
                setup.poles = choice.poles.clone();
                out.pole_choice = Some(choice);
            }
            Err(e) => {
                let needs = format!("this design needs {} ({})", plural(order, "pole", "poles"), design_states_text(n.unwrap_or(0), 0, if apart { 0 } else { integrators }));
                let advice = match (&e, pattern) {
                    (PatternError::UnsupportedOrder { .. }, true) => format!("; {needs}: choose another pattern, or list the poles"),
                    (PatternError::UnsupportedOrder { .. }, false) => format!("; {needs}: a specification places a dominant pair, so it needs at least 2 poles; choose a pattern, or list the poles"),
                    _ => String::new(),
                };
                c.push(pattern_error_field(&e, pattern), format!("{e}{advice}"));
                ok = false;
            }
        }
    }
    ok &= search(spec, plant, source, known, out, integrators, apart, &mut setup, c);
    ok.then_some(setup)
}

fn listed(fb: &FeedbackDoc, c: &mut Checker) -> Option<Vec<Complex64>> {
    match fb.poles.as_ref().and_then(poles) {
        None => {
            c.push(P::FeedbackPoles, "required: list the desired closed-loop poles, one per state, separated by commas or spaces, for example -2, -3, -1±2j");
            None
        }
        Some(r) => {
            let p = c.take(P::FeedbackPoles, r)?;
            c.size(P::FeedbackPoles, plural(p.len(), "pole", "poles"));
            Some(p)
        }
    }
}

/// One listed pole per plant state, and per integrator whose poles are not listed apart.
fn pole_count(c: &mut Checker, given: usize, n: usize, integrators: usize) -> bool {
    let wanted = n + integrators;
    if given == wanted {
        return true;
    }
    let message = if integrators > 0 {
        format!("{given} poles given but the design has {wanted} states ({n} plant states + {integrators} for the integrators); give {wanted} poles, or list the integrator poles in tracking.integral_poles")
    } else {
        format!("{given} pole{} given but the plant has {n} state{}; give exactly {n} pole{}", if given == 1 { "" } else { "s" }, if n == 1 { "" } else { "s" }, if n == 1 { "" } else { "s" })
    };
    c.push(P::FeedbackPoles, message);
    false
}

fn required_positive(c: &mut Checker, path: P, v: Option<&crate::spec::Scalar>, what: &str, example: &str, missing: &str) -> Option<f64> {
    match v.and_then(|v| positive(v, what, example)) {
        None => {
            c.push(path, missing.to_string());
            None
        }
        Some(r) => c.take(path, r),
    }
}

fn band_of(c: &mut Checker, path: P, v: Option<&crate::spec::Scalar>, default: Option<f64>) -> Option<f64> {
    match v.and_then(band_fraction) {
        None => default,
        Some(r) => c.take(path, r),
    }
}

fn pattern_request(p: &PatternDoc, band: Option<f64>, c: &mut Checker) -> Option<PoleRequest> {
    let band = band_of(c, P::PatternBand, p.band.as_ref(), band);
    let pattern = match (p.family, p.normalisation) {
        (PatternFamily::Bessel, None | Some(BesselChoice::UnitSettlingTime)) => band.map(|band| Pattern::Bessel(BesselNormalisation::UnitSettlingTime { band })),
        (PatternFamily::Bessel, Some(BesselChoice::UnitGroupDelay)) => Some(Pattern::Bessel(BesselNormalisation::UnitDcGroupDelay)),
        (PatternFamily::Bessel, Some(BesselChoice::HalfPowerAtUnitFrequency)) => Some(Pattern::Bessel(BesselNormalisation::HalfPowerAtUnitFrequency)),
        (_, Some(_)) => {
            c.push(P::PatternNormalisation, "only the Bessel pattern has a choice of normalisation");
            None
        }
        (PatternFamily::Butterworth, None) => Some(Pattern::Butterworth),
        (PatternFamily::Itae, None) => Some(Pattern::Itae),
        (PatternFamily::Binomial, None) => Some(Pattern::Binomial),
    };
    let target = match (&p.settling_time, &p.bandwidth) {
        (Some(_), Some(_)) => {
            c.push(P::Pattern, "give one of the settling time (s) or the bandwidth (rad/s) to scale the pattern, not both");
            None
        }
        (_, Some(w)) => {
            required_positive(c, P::PatternBandwidth, Some(w), "the −3 dB bandwidth in rad/s", "10", "required: the bandwidth in rad/s").map(|rad_per_s| ScaleTarget::Bandwidth { rad_per_s })
        }
        (t, None) => required_positive(
            c,
            P::PatternSettlingTime,
            t.as_ref(),
            "the settling time in seconds",
            "0.5",
            "required for a pattern: the settling time in seconds that the pattern is scaled to, for example 0.5",
        )
        .and_then(|seconds| band.map(|band| ScaleTarget::SettlingTime { seconds, band })),
    };
    Some(PoleRequest::Pattern { pattern: pattern?, target: target? })
}

fn spec_request(s: &SpecDoc, band: Option<f64>, c: &mut Checker) -> Option<PoleRequest> {
    let band = band_of(c, P::SpecBand, s.band.as_ref(), band);
    let overshoot = match s.overshoot.as_ref().and_then(|v| scalar(v, "largest overshoot")) {
        None => {
            c.push(P::SpecOvershoot, "required for a specification: the largest overshoot, for example 5 %");
            None
        }
        Some(Ok(v)) if v > 0.0 && v < 1.0 => Some(v),
        Some(Ok(0.0)) => {
            c.push(P::SpecOvershoot, "0 % cannot be asked of a dominant pair (it would need a damping ratio of 1 or more); give a small overshoot such as 1 %, or choose the binomial pattern for a response without overshoot");
            None
        }
        Some(Ok(v)) => {
            c.push(P::SpecOvershoot, format!("{} % is not an overshoot; give the largest overshoot in percent of the step, more than 0 and less than 100 (5 % for example)", fmt_num(v * 100.0)));
            None
        }
        Some(Err(e)) => {
            c.push(P::SpecOvershoot, e);
            None
        }
    };
    let settling =
        required_positive(c, P::SpecSettlingTime, s.settling_time.as_ref(), "the settling time in seconds", "2", "required for a specification: the settling time in seconds, for example 2");
    let speed = match (&s.rise_time, &s.bandwidth) {
        (Some(_), Some(_)) => {
            c.push(P::Spec, "give at most one of the rise time and the bandwidth");
            None
        }
        (Some(t), None) => match positive(t, "the 10–90 % rise time in seconds", "0.5") {
            None => Some(None),
            Some(r) => c.take(P::SpecRiseTime, r).map(|seconds| Some(SpeedRequirement::RiseTime { seconds })),
        },
        (None, Some(w)) => match positive(w, "the bandwidth in rad/s", "10") {
            None => Some(None),
            Some(r) => c.take(P::SpecBandwidth, r).map(|rad_per_s| Some(SpeedRequirement::Bandwidth { rad_per_s })),
        },
        (None, None) => Some(None),
    };
    Some(PoleRequest::Specification(Specification { overshoot: overshoot?, settling_time: settling?, settling_band: band?, settling_rule: SettlingRule::EnvelopeBound, speed: speed? }))
}

/// Checks Bryson bounds: positive, with a finite, positive weight `1/value²`.
fn bryson_bounds_ok(c: &mut Checker, path: P, values: &[f64], what: &str) -> bool {
    for (i, v) in values.iter().enumerate() {
        let w = 1.0 / (v * v);
        let problem = if !(v.is_finite() && *v > 0.0) {
            Some(format!("must be a positive number (the largest acceptable {what})"))
        } else if !w.is_finite() {
            Some("is too small: its weight 1 / value² overflows".to_string())
        } else if w <= 0.0 {
            Some("is too large: its weight 1 / value² is zero".to_string())
        } else {
            None
        };
        if let Some(p) = problem {
            c.push(path, format!("entry {}: {} {p}; give the largest acceptable {what}, for example 0.1", i + 1, fmt_num(*v)));
            return false;
        }
    }
    true
}

#[allow(clippy::too_many_arguments)]
fn lqr_weights(l: &LqrDoc, plant: Option<&Plant>, out: &ControllerSpec, integrators: usize, tracking_read: bool, known: &Basics, setup: &mut super::PoleSetup, c: &mut Checker) -> Option<LqrWeights> {
    match (&l.q, &l.r, &l.bryson) {
        (Some(q), Some(r), None) => {
            let q = super::matrix(q).map(|r| c.take(P::LqrQ, r)).unwrap_or_else(|| {
                c.push(P::LqrQ, "required: the state weight matrix Q");
                None
            });
            let r = super::matrix(r).map(|r| c.take(P::LqrR, r)).unwrap_or_else(|| {
                c.push(P::LqrR, "required: the input weight matrix R");
                None
            });
            let cross = match l.s.as_ref().map(super::matrix) {
                None | Some(None) => Some(None),
                Some(Some(r)) => c.take(P::LqrS, r).map(Some),
            };
            let (q, r, cross) = (q?, r?, cross?);
            let m = plant.map(|p| p.inputs());
            if let (Some(n), Some(m), true) = (plant.map(|p| p.states()), m, tracking_read) {
                let k = n + if out.implementation.as_ref().is_some_and(|i| i.computation_delay) { m } else { 0 } + integrators;
                if q.shape() != (k, k) {
                    c.push(P::LqrQ, format!("Q is {}×{} but the design has {k} states (plant, delay and integrator states): give a {k}×{k} matrix", q.nrows(), q.ncols()));
                    return None;
                }
                if r.shape() != (m, m) {
                    c.push(P::LqrR, format!("R is {}×{} but the plant has {m} inputs: give a {m}×{m} matrix", r.nrows(), r.ncols()));
                    return None;
                }
                if let Some(sm) = cross.as_ref().filter(|sm| sm.shape() != (k, m)) {
                    c.push(P::LqrS, format!("S is {}×{} but the design has {k} states and {m} inputs: give a {k}×{m} matrix", sm.nrows(), sm.ncols()));
                    return None;
                }
            }
            Some(LqrWeights::Matrices { q, r, s: cross })
        }
        (None, None, Some(b)) => bryson(b, plant, out, integrators, tracking_read, known, setup, c),
        _ if l.s.is_some() && l.bryson.is_some() => {
            c.push(P::LqrS, "a cross weight goes with \"q\" and \"r\", not with Bryson's rule");
            None
        }
        _ => {
            c.push(P::Lqr, "give \"q\" and \"r\" (weight matrices), or \"bryson\": {\"max_state\": [...], \"max_input\": [...]}");
            None
        }
    }
}

#[allow(clippy::too_many_arguments)]
fn bryson(b: &BrysonDoc, plant: Option<&Plant>, out: &ControllerSpec, integrators: usize, tracking_read: bool, known: &Basics, setup: &mut super::PoleSetup, c: &mut Checker) -> Option<LqrWeights> {
    let n = plant.map(|p| p.states());
    let m = plant.map(|p| p.inputs());
    let delay = if out.implementation.as_ref().is_some_and(|i| i.computation_delay) { m.unwrap_or(0) } else { 0 };
    let max_state = match b.max_state.as_ref().and_then(vector) {
        None => {
            c.push(P::LqrMaxState, "required for LQR: the largest acceptable excursion of each design state (plant states, then delay states and integrators), for example 0.1, 1");
            None
        }
        Some(r) => c.take(P::LqrMaxState, r).and_then(|v| {
            c.size(P::LqrMaxState, plural(v.len(), "value", "values"));
            match n {
                Some(n) if tracking_read && v.len() != n + delay + integrators => {
                    c.push(
                        P::LqrMaxState,
                        format!(
                            "{} given but the design has {} ({}); give one largest acceptable excursion per state, in that order",
                            plural(v.len(), "value", "values"),
                            plural(n + delay + integrators, "state", "states"),
                            design_states_text(n, delay, integrators)
                        ),
                    );
                    None
                }
                _ => bryson_bounds_ok(c, P::LqrMaxState, &v, "excursion of that state").then_some(v),
            }
        }),
    };
    let max_input = match b.max_input.as_ref().and_then(vector) {
        None => match (known.limits.as_ref(), plant) {
            (Some(l), Some(p)) if l.is_empty() => {
                c.push(
                    P::LqrMaxInput,
                    format!(
                        "left out, it means the actuator limits, but none are given: give the largest acceptable value of each input ({}), or the actuator limits",
                        plural(p.inputs(), "value", "values")
                    ),
                );
                None
            }
            (Some(l), Some(p)) => match l.iter().position(|x| x.is_none()) {
                Some(i) => {
                    c.push(
                        P::LqrMaxInput,
                        format!(
                            "left out, it means the actuator limits, but input {} ({}) has no limit: give the largest acceptable value of each input, or a limit for every input",
                            i + 1,
                            p.input_names().get(i).map_or("", |s| s.as_str())
                        ),
                    );
                    None
                }
                None => {
                    setup.lqr_inputs_from_limits = true;
                    Some(l.iter().flatten().copied().collect::<Vec<f64>>())
                }
            },
            _ => None,
        },
        Some(r) => c.take(P::LqrMaxInput, r).and_then(|v| {
            c.size(P::LqrMaxInput, plural(v.len(), "value", "values"));
            match m {
                Some(m) if v.len() != m => {
                    c.push(
                        P::LqrMaxInput,
                        format!(
                            "{} given but the plant has {}; give one largest acceptable value per input, or leave this out to use the actuator limits",
                            plural(v.len(), "value", "values"),
                            plural(m, "input", "inputs")
                        ),
                    );
                    None
                }
                _ => bryson_bounds_ok(c, P::LqrMaxInput, &v, "value of that input").then_some(v),
            }
        }),
    };
    Some(LqrWeights::Bryson { max_state: max_state?, max_input: max_input? })
}

/// The search for the fastest design within the actuator limits; false when it cannot run.
#[allow(clippy::too_many_arguments)]
fn search(spec: &DesignSpec, plant: Option<&Plant>, source: PoleSource, known: &Basics, out: &mut ControllerSpec, integrators: usize, apart: bool, setup: &mut PoleSetup, c: &mut Checker) -> bool {
    let Some(s) = &spec.search else { return true };
    if !s.fastest_within_limits {
        c.push(P::SearchFastest, "set it to true to search (or leave the search out)");
        return false;
    }
    let mut can = true;
    if source == PoleSource::Lqr {
        c.push(
            P::Search,
            "the search speeds up a pole pattern, but LQR chooses its poles from the weights: change the largest excursions instead, or copy the LQR poles into the pole list and search those",
        );
        can = false;
    } else if integrators > 0 && !apart {
        c.push(P::Search, "the search scales the plant's poles only: with integral action, give the integrator poles apart (tracking.integral_poles)");
        can = false;
    }
    match known.limits.as_ref() {
        Some(l) if l.iter().all(|x| x.is_none()) => {
            c.push(P::Search, "the search looks for the fastest design the actuator limits allow, so it needs limits: give a limit for at least one input");
            can = false;
        }
        Some(_) => {}
        None => can = false,
    }
    let Some(p) = plant.filter(|_| can) else {
        return false;
    };
    let situations = match &s.situations {
        Some(list) => given_situations(list, p, c),
        None => derived_situations(p, known, out, setup),
    };
    match situations {
        Some(s) => {
            out.search = Some(s);
            true
        }
        None => false,
    }
}

fn given_situations(list: &[crate::spec::SituationDoc], p: &Plant, c: &mut Checker) -> Option<Vec<Situation>> {
    if list.is_empty() {
        c.push(P::SearchSituations, "empty; list at least one situation, or leave this out to judge the free response and the reference step");
        return None;
    }
    let mut out = Vec::new();
    for (i, item) in list.iter().enumerate() {
        let path = P::SearchSituation(i);
        let read = match (&item.initial_state, &item.reference) {
            (Some(x), None) => vector(x).map(|r| r.map(|x| (x, true))),
            (None, Some(r)) => vector(r).map(|r| r.map(|x| (x, false))),
            _ => Some(Err("give exactly one of \"initial_state\" or \"reference\"".to_string())),
        };
        let (values, initial) = c.take(path, read.unwrap_or_else(|| Err("empty; give the values".into())))?;
        if initial && values.len() != p.states() {
            c.push(path, format!("{} given but the plant has {}", plural(values.len(), "value", "values"), plural(p.states(), "state", "states")));
            return None;
        }
        if !initial && p.c().is_none() {
            c.push(path, "a reference situation needs outputs: give plant.c");
            return None;
        }
        if !initial && values.len() != p.outputs() {
            c.push(path, format!("{} given but the plant has {}", plural(values.len(), "value", "values"), plural(p.outputs(), "output", "outputs")));
            return None;
        }
        out.push(if initial { Situation::InitialState(values) } else { Situation::ReferenceStep(values) });
    }
    Some(out)
}

/// The situations when none are listed: the free response from the initial state and, with
/// tracking, the reference step (followed with feedforward on every row of C).
fn derived_situations(p: &Plant, known: &Basics, out: &ControllerSpec, setup: &mut PoleSetup) -> Option<Vec<Situation>> {
    let x0 = match known.initial_state.as_ref()? {
        Some(x) => x.clone(),
        None => (0..p.states()).map(|i| if i == 0 { 1.0 } else { 0.0 }).collect(),
    };
    let mut situations = vec![Situation::InitialState(x0)];
    if let TrackingSpec::Feedforward { outputs } | TrackingSpec::Integral { outputs, .. } = &out.tracking {
        let steps = if out.scenario.reference.is_empty() { vec![1.0; outputs.len()] } else { out.scenario.reference.clone() };
        match p.c() {
            Some(cm) if cm.nrows() == p.inputs() => {
                let mut r = vec![0.0; cm.nrows()];
                for (j, &o) in outputs.iter().enumerate() {
                    if let (Some(slot), Some(v)) = (r.get_mut(o), steps.get(j)) {
                        *slot = *v;
                    }
                }
                situations.push(Situation::ReferenceStep(r));
            }
            Some(cm) => setup.search_notes.push(format!(
                "The search judged the free response only: its reference step is followed with feedforward on every row of C, which needs as many outputs as inputs (C has {}, the plant {}).",
                plural(cm.nrows(), "row", "rows"),
                plural(p.inputs(), "input", "inputs")
            )),
            None => {}
        }
        if matches!(out.tracking, TrackingSpec::Integral { .. }) {
            setup.search_notes.push("The search judges the state feedback of the plant alone (and the reference step with feedforward), not the integrators: check the loop simulation for the inputs with integral action.".into());
        }
    }
    Some(situations)
}
