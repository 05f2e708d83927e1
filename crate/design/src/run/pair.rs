//! The second stage: the design pair (plant, then the computation-delay states, then the
//! integrators) and its poles: listed, found by the search, or those of the LQR closed loop.

use nalgebra::DMatrix;
use num_complex::Complex64;

use super::setup::{infeasible, Setup};
use crate::controller::{delay_augmented, integral_augmented, map_to_continuous};
use crate::riccati::{LqrDesign, RiccatiError};
use crate::search::SearchResult;
use crate::{DesignError, FieldPath as P, InputError, LqrWeights, SearchInputs, SearchJob, SearchMemo};

/// The design pair and its requested poles.
pub(super) struct DesignPair {
    pub da: DMatrix<f64>,
    pub db: DMatrix<f64>,
    /// States of plant and delay (the integrators follow).
    pub nd: usize,
    /// Requested poles in the design domain, one per design state.
    pub dpoles: Vec<Complex64>,
    /// The controller's poles in the plane they were given (after the search, or the LQR's).
    pub base_poles: Vec<Complex64>,
    pub search: Option<SearchResult>,
    /// The search with its inputs, for the next run of the session ([`crate::Continuation`]).
    pub search_memo: Option<SearchMemo>,
    pub lqr: Option<LqrDesign>,
}

/// `A`, `B` of the plant with the computation-delay states after it, and the delay's poles.
type PlantAndDelay = (DMatrix<f64>, DMatrix<f64>, Vec<Complex64>);

/// The sampled (or continuous) plant with the computation-delay states after it, and the
/// delay's poles: the part of the pair the search works on.
fn plant_and_delay(s: &Setup) -> Result<PlantAndDelay, DesignError> {
    if s.spec.lqr.is_some() && s.spec.search.is_some() {
        return Err(DesignError::Input(InputError::new(
            P::Search,
            "the search scales a pole pattern; with LQR weights, scale the weights instead (or list the LQR poles as feedback.poles and search)",
        )));
    }
    if let (true, Some(imp)) = (s.delay, &s.spec.implementation) {
        let (pa, pb) = delay_augmented(&s.ad, &s.bd);
        return Ok((pa, pb, imp.delay_poles.clone()));
    }
    Ok((s.ad.clone(), s.bd.clone(), Vec::new()))
}

/// The search the design `s` asks for, ready to run in steps; `None` when there is none to
/// run: no search, its outcome already in `s.previous` for these very inputs, or an error
/// before it (the design run reports that).
pub(super) fn search_job(s: &Setup) -> Option<SearchJob> {
    let situations = s.spec.search.as_ref()?;
    let (da, db, delay_poles) = plant_and_delay(s).ok()?;
    let inputs = search_inputs(s, &da, &db, situations, &delay_poles).ok()?;
    if s.previous.and_then(|p| p.search.as_ref()).and_then(|m| m.outcome_for(&inputs)).is_some() {
        return None;
    }
    let run = crate::search::SearchRun::new(&inputs.data.problem(), inputs.params).ok()?;
    Some(SearchJob::new(inputs, run))
}

/// Builds the pair; see the module documentation.
pub(super) fn design_pair(s: &Setup) -> Result<DesignPair, DesignError> {
    let spec = s.spec;
    let (da, db, delay_poles) = plant_and_delay(s)?;
    let (search, search_memo) = match &spec.search {
        Some(situations) => {
            let memo = search(s, &da, &db, situations, &delay_poles)?;
            let result = memo.outcome().clone().map_err(|e| infeasible(&e))?;
            (Some(result), Some(memo))
        }
        None => (None, None),
    };
    let base_poles: Vec<Complex64> = match &search {
        Some(r) => match s.t {
            // The search works in the s-plane; the poles are shown in the plane they were given.
            Some(t) if s.spec.plane == crate::Plane::Z => crate::plane::z_from_s_all(&r.poles, t),
            _ => r.poles.clone(),
        },
        None => s.req.poles.clone(),
    };
    let mut pair = DesignPair { nd: da.nrows(), dpoles: s.to_design(&base_poles), da, db, base_poles, search, search_memo, lqr: None };
    pair.dpoles.extend(delay_poles);
    pair.nd = pair.da.nrows();
    if let Some(ip) = s.integral_poles {
        add_integrators(s, &mut pair)?;
        pair.dpoles.extend(s.to_design(ip));
    }
    if let Some(w) = &spec.lqr {
        let design = lqr(s, &pair, w)?;
        pair.dpoles = design.closed_loop_poles.clone();
        pair.base_poles = match s.t {
            Some(ts) => {
                // LQR puts the computation-delay states' poles at (or within rounding of)
                // z = 0: deadbeat, gone after one sample. Their s = ln z / T (about −34 000
                // 1/s at 1 kHz for z = 1e-15) says nothing about the loop's bandwidth and
                // must not drive the sample-rate advice or an observer speed factor.
                let live: Vec<Complex64> = pair.dpoles.iter().filter(|z| z.norm() > 1e-9).copied().collect();
                let kept = if live.len() >= s.n { live } else { pair.dpoles.clone() };
                kept.iter().map(|z| map_to_continuous(*z, ts)).collect()
            }
            None => pair.dpoles.clone(),
        };
        pair.lqr = Some(design);
    }
    check_pole_count(s, &pair)?;
    Ok(pair)
}

/// Appends the integrators of the tracked outputs; refuses a pair they make uncontrollable.
fn add_integrators(s: &Setup, pair: &mut DesignPair) -> Result<(), DesignError> {
    let (q, n, nd) = (s.q(), s.n, pair.nd);
    let mut ct_d = DMatrix::<f64>::zeros(q, nd);
    ct_d.view_mut((0, 0), (q, n)).copy_from(&s.ct);
    let (ia, ib) = integral_augmented(&pair.da, &pair.db, &ct_d, &s.dt, s.t);
    let aug = crate::analysis::controllability_report(&ia, &ib, s.ap).map_err(|e| infeasible(&e))?;
    if !aug.is_complete() {
        return Err(DesignError::Infeasible {
            message: crate::controller::ControllerError::IntegralNotControllable {
                message: format!(
                    "the plant augmented with {q} integrator(s) is not controllable (rank {} of {}): the tracked outputs have a zero at {} or there are more tracked outputs than independent inputs; track fewer outputs or use feedforward",
                    aug.rank,
                    aug.states,
                    if s.t.is_some() { "z = 1" } else { "s = 0" }
                ),
            }
            .to_string(),
        });
    }
    pair.da = ia;
    pair.db = ib;
    Ok(())
}

/// The LQR design of the pair with the weights as given.
fn lqr(s: &Setup, pair: &DesignPair, w: &LqrWeights) -> Result<LqrDesign, DesignError> {
    let (da, m) = (&pair.da, s.m);
    let input = |path: P, message: String| DesignError::Input(InputError::new(path, message));
    let (qw, rw, cross) = match w {
        LqrWeights::Matrices { q, r, s: cross } => (q.clone(), r.clone(), cross.clone()),
        LqrWeights::Bryson { max_state, max_input } => {
            if max_state.len() != da.nrows() {
                return Err(input(P::LqrMaxState, format!("{} values given but the design has {} states (plant, delay and integrator states)", max_state.len(), da.nrows())));
            }
            if max_input.len() != m {
                return Err(input(P::LqrMaxInput, format!("{} values given but the plant has {m} inputs", max_input.len())));
            }
            let (q, r) = crate::riccati::bryson_weights(max_state, max_input).map_err(|e| input(P::LqrBryson, e.to_string()))?;
            (q, r, None)
        }
    };
    let k = da.nrows();
    if qw.shape() != (k, k) {
        return Err(input(P::LqrQ, format!("Q is {}×{} but the design has {k} states (plant, delay and integrator states): give a {k}×{k} matrix", qw.nrows(), qw.ncols())));
    }
    if rw.shape() != (m, m) {
        return Err(input(P::LqrR, format!("R is {}×{} but the plant has {m} inputs: give a {m}×{m} matrix", rw.nrows(), rw.ncols())));
    }
    let design = match &cross {
        None => match s.t {
            Some(_) => crate::riccati::discrete_lqr_gain(da, &pair.db, &qw, &rw),
            None => crate::riccati::lqr_gain(da, &pair.db, &qw, &rw),
        },
        Some(sw) => crate::riccati::lqr_gain_with_cross_weight(da, &pair.db, &qw, &rw, sw, s.t.is_some()),
    };
    design.map_err(|e| match e {
        RiccatiError::NotStabilizable { .. }
        | RiccatiError::NotDetectable { .. }
        | RiccatiError::NoConvergence { .. }
        | RiccatiError::InaccurateSolution { .. }
        | RiccatiError::NotStabilizing { .. }
        | RiccatiError::SingularMatrix { .. }
        | RiccatiError::Eigen(_)
        | RiccatiError::Svd(_)
        | RiccatiError::NotStable => infeasible(&e),
        RiccatiError::StateWeightNotSemidefinite { .. } => input(P::LqrQ, e.to_string()),
        other => input(P::Lqr, other.to_string()),
    })
}

/// One requested pole per design state.
fn check_pole_count(s: &Setup, pair: &DesignPair) -> Result<(), DesignError> {
    let (n, states, given) = (s.n, pair.da.nrows(), pair.dpoles.len());
    if given == states {
        return Ok(());
    }
    let extra = states - n;
    let message = if extra > 0 {
        format!(
            "{given} poles given but the design has {states} states ({n} plant states + {extra} for {}); give {} poles{}",
            if s.integral_poles.is_some() && s.delay {
                "delay and integrators"
            } else if s.delay {
                "the computation delay"
            } else {
                "the integrators"
            },
            states - (given - s.req.poles.len()),
            if s.integral_poles.is_some() { ", or list the integrator poles in tracking.integral_poles" } else { "" }
        )
    } else {
        format!("{given} pole{} given but the plant has {n} state{}; give exactly {n} pole{}", if given == 1 { "" } else { "s" }, if n == 1 { "" } else { "s" }, if n == 1 { "" } else { "s" })
    };
    Err(DesignError::Input(InputError::new(P::FeedbackPoles, message)))
}

/// What the search works on: on the plant (continuous), or on the sampled plant with its
/// computation-delay states (digital), the pattern in the s-plane.
fn search_inputs(s: &Setup, da: &DMatrix<f64>, db: &DMatrix<f64>, situations: &[crate::search::Situation], delay_poles: &[Complex64]) -> Result<SearchInputs, DesignError> {
    let limits: Vec<f64> = s.req.limits.iter().map(|l| l.unwrap_or(f64::INFINITY)).collect();
    let params = crate::search::SearchParams { band: s.req.band, max_samples: s.spec.scenario.max_samples.map_or(50_000, |c| c as usize), ..Default::default() };
    let pattern = s.to_s(&s.req.poles);
    if pattern.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
        return Err(DesignError::Input(InputError::new(
            P::Search,
            "the search speeds up a pole pattern, but poles at z = 0 (deadbeat) cannot be made faster: give the poles in the s-plane or leave the search out",
        )));
    }
    let c_pair = s.plant.c().map(|c| {
        let mut cp = DMatrix::<f64>::zeros(c.nrows(), da.nrows());
        cp.columns_mut(0, s.n).copy_from(c);
        cp
    });
    let domain = match s.t {
        Some(t) => crate::search::SearchDomain::Sampled { sample_time: t, fixed_poles: delay_poles.to_vec() },
        None => crate::search::SearchDomain::Continuous,
    };
    let data = crate::search::SearchData { a: da.clone(), b: db.clone(), c: c_pair, pattern, limits, situations: situations.to_vec(), plant_states: s.n, domain };
    Ok(SearchInputs { data, params })
}

/// The fastest design within the actuator limits ([`search_inputs`]). The previous run's
/// outcome is reused when its inputs are exactly these ([`SearchMemo`]).
fn search(s: &Setup, da: &DMatrix<f64>, db: &DMatrix<f64>, situations: &[crate::search::Situation], delay_poles: &[Complex64]) -> Result<SearchMemo, DesignError> {
    let inputs = search_inputs(s, da, db, situations, delay_poles)?;
    if let Some(outcome) = s.previous.and_then(|p| p.search.as_ref()).and_then(|m| m.outcome_for(&inputs)) {
        return Ok(SearchMemo::new(inputs.clone(), outcome.clone()));
    }
    let outcome = crate::search::fastest_within_limits_of(&inputs.data.problem(), inputs.params);
    Ok(SearchMemo::new(inputs, outcome))
}
