//! The third stage: the open-loop analysis, the state-feedback gain, the observer and the
//! feedforward gains.

use nalgebra::DMatrix;
use num_complex::Complex64;

use super::pair::DesignPair;
use super::setup::{infeasible, Setup};
use crate::analysis::{controllability_report, observability_report, ModalReport};
use crate::controller::{feedforward_gains, map_to_discrete, observer_gain_continued, ControllerError, ObserverDesign, ObserverFailure, ObserverForm};
use crate::linalg::eigen::try_eigenvalues;
use crate::place::{state_feedback_gain, state_feedback_gain_continued, Placement, PlacementError};
use crate::{DesignError, FieldPath as P, InputError, ObserverPoles};

/// Open-loop poles, controllability and observability of the plant in the design domain.
pub(super) struct Analysis {
    pub open_loop: Vec<Complex64>,
    pub ctrb: ModalReport,
    pub obsv: Option<ModalReport>,
}

pub(super) fn analysis(s: &Setup) -> Result<Analysis, DesignError> {
    let open_loop = try_eigenvalues(&s.ad).map_err(|e| infeasible(&e))?;
    let ctrb = controllability_report(&s.ad, &s.bd, s.ap).map_err(|e| infeasible(&e))?;
    let obsv = match s.plant.c() {
        Some(c) => Some(observability_report(&s.ad, c, s.ap).map_err(|e| infeasible(&e))?),
        None => None,
    };
    Ok(Analysis { open_loop, ctrb, obsv })
}

/// The observer: its design, its poles in the design domain, its form.
pub(super) type Observer = (ObserverDesign, Vec<Complex64>, ObserverForm);

/// Every gain of the controller.
pub(super) struct Gains {
    pub placement: Placement,
    /// On the plant states.
    pub k_x: DMatrix<f64>,
    /// On the previous inputs (computation delay).
    pub k_u: Option<DMatrix<f64>>,
    /// On the integrators.
    pub k_i: Option<DMatrix<f64>>,
    pub observer: Option<Observer>,
    /// `(Nx, Nu)` of feedforward tracking.
    pub feedforward: Option<(DMatrix<f64>, DMatrix<f64>)>,
}

/// A placement error: about the requested poles (an input error of `field`) or the plant.
fn pole_input(e: PlacementError, field: P) -> DesignError {
    match e {
        PlacementError::PoleCount { .. } | PlacementError::InvalidPoles { .. } | PlacementError::RepeatedBeyondRank { .. } => DesignError::Input(InputError::new(field, e.to_string())),
        other => DesignError::Infeasible { message: other.to_string() },
    }
}

pub(super) fn gains(s: &Setup, pair: &DesignPair) -> Result<Gains, DesignError> {
    let (n, m) = (s.n, s.m);
    // An LQR gain is used as it is (K = R⁻¹ Bᵀ X, or its discrete form), for any number of
    // inputs: placing its poles again would give another gain when there are several inputs.
    let placement = match &pair.lqr {
        Some(lqr) => crate::place::placement_of_gain(&pair.da, &pair.db, &lqr.gain, &pair.dpoles, s.pp).map_err(|e| infeasible(&e))?,
        None => {
            // Continue from the search's branch at the factor it found (so that the gain is
            // the one it judged), else from the previous design of the session.
            let start = pair.search.as_ref().and_then(|r| r.eigenvectors.as_ref()).or_else(|| s.previous.and_then(|p| p.feedback.as_ref()));
            match start.filter(|e| e.vectors.nrows() == pair.da.nrows()) {
                Some(e) => state_feedback_gain_continued(&pair.da, &pair.db, &pair.dpoles, s.pp, e),
                None => state_feedback_gain(&pair.da, &pair.db, &pair.dpoles, s.pp),
            }
            .map_err(|e| pole_input(e, P::FeedbackPoles))?
        }
    };
    let k_x = placement.gain.columns(0, n).into_owned();
    let k_u = s.delay.then(|| placement.gain.columns(n, m).into_owned());
    let k_i = s.integral_poles.map(|_| placement.gain.columns(pair.nd, s.q()).into_owned());
    let observer = observer(s, pair)?;
    let feedforward = match &s.spec.tracking {
        crate::TrackingSpec::Feedforward { .. } | crate::TrackingSpec::Integral { feedforward: true, .. } => {
            Some(feedforward_gains(&s.ad, &s.bd, &s.ct, &s.dt, s.t.is_some()).map_err(|e| infeasible(&e))?)
        }
        _ => None,
    };
    Ok(Gains { placement, k_x, k_u, k_i, observer, feedforward })
}

fn observer(s: &Setup, pair: &DesignPair) -> Result<Option<Observer>, DesignError> {
    let (Some(os), Some(c)) = (&s.spec.observer, s.plant.c()) else {
        return Ok(None);
    };
    let poles = match &os.poles {
        ObserverPoles::Given(p) => s.to_design(p),
        ObserverPoles::SpeedFactor(f) => {
            let s_poles: Vec<Complex64> = super::fastest_poles(&s.to_s(&pair.base_poles), s.n).iter().map(|z| z * *f).collect();
            match s.t {
                Some(t) => map_to_discrete(&s_poles, t),
                None => s_poles,
            }
        }
    };
    let previous = s.previous.and_then(|p| p.observer.as_ref());
    let mut od = observer_gain_continued(&s.ad, c, &poles, s.pp, previous).map_err(|e| match e {
        ControllerError::Observer { message, cause: ObserverFailure::Poles } => DesignError::Input(InputError::new(P::ObserverPoles, message)),
        other => infeasible(&other),
    })?;
    if os.form == ObserverForm::Current {
        od.current_gain = s.ad.clone().lu().solve(&od.gain);
    }
    Ok(Some((od, poles, os.form)))
}
