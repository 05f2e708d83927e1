//! The first stage: the plant in the design domain, the planes, the tracked outputs.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::analysis::{AnalysisParams, Domain};
use crate::controller::{discretise, map_to_continuous, map_to_discrete};
use crate::place::PlacementParams;
use crate::plant::Plant;
use crate::{ControllerSpec, DesignError, DesignRequest, Plane, TrackingSpec};

/// A design that cannot be done, with its reason.
pub(super) fn infeasible(e: &dyn std::fmt::Display) -> DesignError {
    DesignError::Infeasible { message: e.to_string() }
}

/// What every later stage reads.
pub(super) struct Setup<'a> {
    pub req: &'a DesignRequest,
    pub spec: &'a ControllerSpec,
    pub plant: &'a Plant,
    pub n: usize,
    pub m: usize,
    /// The controller's sample time (digital design).
    pub t: Option<f64>,
    pub domain: Domain,
    pub ap: AnalysisParams,
    pub pp: PlacementParams,
    /// The plant in the design domain (sampled by zero-order hold for a digital controller).
    pub ad: DMatrix<f64>,
    pub bd: DMatrix<f64>,
    pub delay: bool,
    pub tracked: Vec<usize>,
    /// With integral action: the integrators' own poles (empty: listed with the controller's).
    pub integral_poles: Option<&'a Vec<Complex64>>,
    /// The tracked rows of C and D.
    pub ct: DMatrix<f64>,
    pub dt: DMatrix<f64>,
    /// The previous design of the session, to continue from.
    pub previous: Option<&'a crate::Continuation>,
}

impl<'a> Setup<'a> {
    pub fn new(req: &'a DesignRequest, spec: &'a ControllerSpec, previous: Option<&'a crate::Continuation>) -> Result<Self, DesignError> {
        let plant = &req.plant;
        let (n, m) = (plant.states(), plant.inputs());
        let t = spec.sample_time();
        let domain = if t.is_some() { Domain::Discrete } else { Domain::Continuous };
        let (ad, bd) = match (spec.plant_sample_time, &spec.implementation) {
            (None, Some(imp)) => {
                let dp = discretise(plant.a(), plant.b(), imp.sample_time).map_err(|e| infeasible(&e))?;
                (dp.phi, dp.gamma)
            }
            _ => (plant.a().clone(), plant.b().clone()),
        };
        let (tracked, integral_poles): (Vec<usize>, Option<&Vec<Complex64>>) = match &spec.tracking {
            TrackingSpec::None => (Vec::new(), None),
            TrackingSpec::Feedforward { outputs } => (outputs.clone(), None),
            TrackingSpec::Integral { outputs, integral_poles, .. } => (outputs.clone(), Some(integral_poles)),
        };
        let (c_full, d_full) = output_matrices(plant);
        let q = tracked.len();
        let ct = DMatrix::from_fn(q, n, |i, j| c_full[(tracked[i], j)]);
        let dt = DMatrix::from_fn(q, m, |i, j| d_full[(tracked[i], j)]);
        Ok(Setup {
            req,
            spec,
            plant,
            n,
            m,
            t,
            domain,
            ap: AnalysisParams { domain, ..AnalysisParams::default() },
            pp: PlacementParams { domain, ..PlacementParams::default() },
            ad,
            bd,
            delay: spec.implementation.as_ref().is_some_and(|i| i.computation_delay),
            tracked,
            integral_poles,
            ct,
            dt,
            previous,
        })
    }

    /// Number of tracked outputs.
    pub fn q(&self) -> usize {
        self.tracked.len()
    }

    /// Requested poles (in the plane they were given) → the design domain.
    pub fn to_design(&self, poles: &[Complex64]) -> Vec<Complex64> {
        match (self.t, self.spec.plane) {
            (Some(t), Plane::S) => map_to_discrete(poles, t),
            _ => poles.to_vec(),
        }
    }

    /// Requested poles (in the plane they were given) → the s-plane.
    pub fn to_s(&self, poles: &[Complex64]) -> Vec<Complex64> {
        match (self.t, self.spec.plane) {
            (Some(t), Plane::Z) => poles.iter().map(|z| map_to_continuous(*z, t)).collect(),
            _ => poles.to_vec(),
        }
    }

    /// Design-domain poles → the s-plane.
    pub fn design_to_s(&self, poles: &[Complex64]) -> Vec<Complex64> {
        match self.t {
            Some(t) => poles.iter().map(|z| map_to_continuous(*z, t)).collect(),
            None => poles.to_vec(),
        }
    }
}

/// C and D of the plant (zero-row matrices without outputs; D zero when left out).
pub(crate) fn output_matrices(plant: &Plant) -> (DMatrix<f64>, DMatrix<f64>) {
    let (n, m) = (plant.states(), plant.inputs());
    match (plant.c(), plant.d()) {
        (Some(c), Some(d)) => (c.clone(), d.clone()),
        (Some(c), None) => (c.clone(), DMatrix::zeros(c.nrows(), m)),
        _ => (DMatrix::zeros(0, n), DMatrix::zeros(0, m)),
    }
}
