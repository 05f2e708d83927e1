//! What the form knew beyond the result (the loop scenario as asked, units, the search's
//! situations), for the report.

use super::*;

/// What the form knew beyond the result, for the report: the loop scenario as asked and the
/// output units (the result carries the names only).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ReportContext {
    pub output_units: Vec<String>,
    /// The observer speed factor, when the observer poles were chosen by one.
    pub speed_factor: Option<f64>,
    pub reference_time: f64,
    pub disturbance: Vec<f64>,
    pub disturbance_time: f64,
    pub noise_std: Vec<f64>,
    pub seed: u64,
    pub z_plane: bool,
    pub delay_poles: Vec<Complex64>,
    /// Bryson's-rule bounds `(max_state, max_input)` of an LQR design.
    pub lqr_bounds: Option<(Vec<f64>, Vec<f64>)>,
    /// The LQR input bounds are the actuator limits.
    pub lqr_inputs_from_limits: bool,
    /// The search's situations, described ("the free response from x₀ = …").
    pub search_situations: Vec<String>,
    /// What the search could not take into account.
    pub search_notes: Vec<String>,
    /// Samples of the uncertainty cloud the form asks for (drawn on demand).
    pub uncertainty_samples: Option<usize>,
    /// The load step acts through the disturbance input matrix E (one value per column of E,
    /// not per input).
    pub loads_through_e: bool,
}

impl ReportContext {
    /// The context of a form's request.
    pub fn from_request(req: &DesignRequest, spec: &ControllerSpec) -> ReportContext {
        ReportContext {
            output_units: req.plant.output_units().to_vec(),
            speed_factor: match spec.observer.as_ref().map(|o| &o.poles) {
                Some(ObserverPoles::SpeedFactor(f)) => Some(*f),
                _ => None,
            },
            reference_time: spec.scenario.reference_time,
            disturbance: spec.scenario.disturbance.clone(),
            disturbance_time: spec.scenario.disturbance_time,
            noise_std: spec.scenario.noise_std.clone(),
            seed: spec.scenario.seed,
            z_plane: spec.plane == Plane::Z,
            delay_poles: spec.implementation.as_ref().filter(|i| i.computation_delay).map(|i| i.delay_poles.clone()).unwrap_or_default(),
            lqr_bounds: match &spec.lqr {
                Some(design::LqrWeights::Bryson { max_state, max_input }) => Some((max_state.clone(), max_input.clone())),
                _ => None,
            },
            lqr_inputs_from_limits: false,
            search_situations: spec
                .search
                .as_ref()
                .map(|list| {
                    list.iter()
                        .map(|s| match s {
                            crate::search::Situation::InitialState(x) => {
                                format!("the free response from x₀ = {}", vector_text(x))
                            }
                            crate::search::Situation::ReferenceStep(r) => format!("the reference step r = {} (followed with feedforward)", vector_text(r)),
                        })
                        .collect()
                })
                .unwrap_or_default(),
            search_notes: Vec::new(),
            uncertainty_samples: spec.robustness.uncertainty.as_ref().map(|u| u.samples),
            loads_through_e: spec.scenario.disturbance_input.is_some(),
        }
    }
}
