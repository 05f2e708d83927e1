//! The design layer: one design document ([`DesignSpec`]), one rulebook ([`check`]), one run
//! ([`run_with`]) and one result ([`DesignResult`]). The page and the CLI both go through here,
//! so that the same document gives the same design, warnings and errors at either door.
//!
//! | module | what |
//! |---|---|
//! | [`spec`] | the design document's schema (serde), reading (version migration) and writing |
//! | [`path`] | [`FieldPath`]: the typed path every input error carries |
//! | [`check`] | every rule between fields: [`DesignSpec`] → [`CheckedDesign`] or all its input errors |
//! | [`run`] | the design run: gains, observer, tracking, simulations, warnings |
//! | [`result`] | the result (`polewright.result`) |
//!
//! A design that is well formed but impossible (for example an unstable mode that no input
//! reaches) is a [`DesignError::Infeasible`] (CLI exit 1); every input error is a
//! [`DesignError::Input`] (CLI exit 2).

use crate::plant::Plant;
use nalgebra::DMatrix;
use num_complex::Complex64;
use serde::Serialize;

pub mod check;
pub mod export;
pub mod format;
pub mod path;
pub mod result;
pub mod run;
pub mod spec;
pub mod warnings;

/// The numerical core, re-exported so that `crate::analysis` and the like name it here as in
/// every layer above.
pub use polewright_core::*;

pub use check::{canonical, check, check_text, choose_poles, CheckReport, CheckedDesign, PoleRequest};
pub use path::FieldPath;
pub use result::*;
pub use run::{cloud_job, fmt_num, run, run_checked, run_checked_continued, run_continued, run_text, run_with, search_job, CloudJob, CloudMemo};
pub use spec::{read_design, write_design, DesignSpec, DESIGN_FORMAT, DESIGN_VERSION};

/// The result format name.
pub const RESULT_FORMAT: &str = "polewright.result";
/// Version of the result this build writes.
pub const RESULT_VERSION: u64 = 2;

/// The tool's version, written into every export and record.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// How the closed-loop poles were chosen when not listed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PoleChoiceMethod {
    Bessel,
    Butterworth,
    Itae,
    Binomial,
    Specification,
}

impl PoleChoiceMethod {
    /// The name in words.
    pub fn name(self) -> &'static str {
        match self {
            PoleChoiceMethod::Bessel => "Bessel pattern",
            PoleChoiceMethod::Butterworth => "Butterworth pattern",
            PoleChoiceMethod::Itae => "ITAE pattern",
            PoleChoiceMethod::Binomial => "binomial pattern",
            PoleChoiceMethod::Specification => "specification",
        }
    }
}

/// Invalid input: which field, and what is wrong with it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputError {
    /// The field, serialised by its dotted name (`plant.a`, `feedback.poles`).
    pub field: FieldPath,
    pub message: String,
}

impl InputError {
    pub fn new(field: FieldPath, message: impl Into<String>) -> Self {
        InputError { field, message: message.into() }
    }
}

impl std::fmt::Display for InputError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.field, self.message)
    }
}

impl std::error::Error for InputError {}

/// Why a design run failed.
#[derive(Debug, Clone, PartialEq)]
pub enum DesignError {
    /// The input is malformed (CLI exit code 2).
    Input(InputError),
    /// The input is well formed but the design cannot be done as asked (CLI exit code 1).
    Infeasible { message: String },
}

impl std::fmt::Display for DesignError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            DesignError::Input(e) => write!(f, "{e}"),
            DesignError::Infeasible { message } => write!(f, "{message}"),
        }
    }
}

impl std::error::Error for DesignError {}

impl From<InputError> for DesignError {
    fn from(e: InputError) -> Self {
        DesignError::Input(e)
    }
}

/// A validated design request.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignRequest {
    pub plant: Plant,
    pub poles: Vec<Complex64>,
    /// Per-input limits; empty = none given.
    pub limits: Vec<Option<f64>>,
    /// Per-state limits (reported against the peaks, not enforced); empty = none given.
    pub state_limits: Vec<Option<f64>>,
    /// `None`: a unit deviation of the first state.
    pub initial_state: Option<Vec<f64>>,
    pub duration: Option<f64>,
    pub band: f64,
}

/// In which plane `feedback.poles` (and observer poles) are given.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Plane {
    /// Continuous targets (s-plane); a digital design maps them by `z = e^{sT}`.
    #[default]
    S,
    /// Discrete targets (z-plane), used as given (digital designs only).
    Z,
}

/// How the controller is run on the target.
#[derive(Debug, Clone, PartialEq)]
pub struct Implementation {
    pub sample_time: f64,
    /// The input computed at one sample is applied at the next.
    pub computation_delay: bool,
    /// z-plane poles for the delay states (default: all at 0).
    pub delay_poles: Vec<Complex64>,
}

/// How the observer poles are chosen.
#[derive(Debug, Clone, PartialEq)]
pub enum ObserverPoles {
    Given(Vec<Complex64>),
    /// `factor ×` the controller poles (s-plane; common practice: 2–6).
    SpeedFactor(f64),
}

/// The observer request.
#[derive(Debug, Clone, PartialEq)]
pub struct ObserverSpec {
    pub poles: ObserverPoles,
    pub form: crate::controller::ObserverForm,
}

/// Reference tracking request.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum TrackingSpec {
    #[default]
    None,
    Feedforward {
        outputs: Vec<usize>,
    },
    /// `integral_poles`: extra poles for the integrator states (else `feedback.poles` has `n + q`).
    Integral {
        outputs: Vec<usize>,
        integral_poles: Vec<Complex64>,
        /// The reference is also fed forward (two degrees of freedom).
        feedforward: bool,
    },
}

/// The loop scenario of the full-controller simulation.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScenarioSpec {
    /// Most samples a digital simulation (free response or loop) may take; more is refused as
    /// an input error of `simulation.duration` (when given) or `implementation.sample_time`
    /// before anything is simulated. `None`: only the loop simulator's own limit. The page sets
    /// it; design files do not.
    pub max_samples: Option<f64>,
    pub reference: Vec<f64>,
    pub reference_time: f64,
    pub disturbance: Vec<f64>,
    pub disturbance_time: f64,
    /// `E` (states × loads) through which the load step acts; `None`: at the plant input.
    pub disturbance_input: Option<nalgebra::DMatrix<f64>>,
    pub noise_std: Vec<f64>,
    pub seed: u64,
    pub initial_estimate: Option<Vec<f64>>,
}

/// Everything beyond a plain state-feedback gain (design file version 2).
#[derive(Debug, Clone, PartialEq)]
pub struct ControllerSpec {
    /// The plant matrices are already discrete (`x[k+1] = A x[k] + B u[k]`) at this sample time.
    pub plant_sample_time: Option<f64>,
    pub plane: Plane,
    pub implementation: Option<Implementation>,
    pub observer: Option<ObserverSpec>,
    pub tracking: TrackingSpec,
    pub anti_windup: crate::controller::AntiWindup,
    pub scenario: ScenarioSpec,
    /// Speed the pole pattern up (or down) to the fastest the actuators allow in these situations.
    pub search: Option<Vec<crate::search::Situation>>,
    /// How the poles were chosen when not listed (pattern or specification), with the region
    /// the specification defines.
    pub pole_choice: Option<PoleChoice>,
    /// LQR weights: the poles are those of the LQR closed loop.
    pub lqr: Option<LqrWeights>,
    /// The robustness analysis asked for (margins' skew, pole sensitivity, uncertainty).
    pub robustness: RobustnessSpec,
}

/// What the robustness analysis is asked for (`robustness` in the document).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RobustnessSpec {
    /// Skew σ ∈ [−1, 1] of the disk margins (0, symmetric, by default).
    pub skew: f64,
    /// The plant entry whose effect on each closed-loop pole (∂λ/∂p) is reported.
    pub sensitivity_entry: Option<PlantEntry>,
    /// The uncertain plant parameters of the Monte-Carlo cloud.
    pub uncertainty: Option<UncertaintySpec>,
    /// Whether margins and pole sensitivity are computed in this run (not part of the document:
    /// the page defers them while a pole is dragged).
    pub depth: RobustnessDepth,
}

/// How much of the robustness analysis a run does.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum RobustnessDepth {
    /// Margins and pole sensitivity (and the cloud when asked for).
    #[default]
    Full,
    /// None of them: a quick run while the user drags a pole; the next full run brings them.
    Deferred,
}

/// One entry of `A` or `B` (0-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PlantEntry {
    pub matrix: crate::uncertainty::PlantMatrix,
    pub row: usize,
    pub column: usize,
}

/// The Monte-Carlo sample of the uncertain plant.
#[derive(Debug, Clone, PartialEq)]
pub struct UncertaintySpec {
    pub model: crate::uncertainty::UncertaintyModel,
    pub samples: usize,
    pub seed: u64,
}

/// What one design leaves for the next design of the same session to continue from: the
/// closed-loop eigenvectors of the robust placements (see
/// [`crate::place::state_feedback_gain_continued`]), so that gains move continuously while the
/// poles are edited or dragged. Not part of the design document or the result file: a fresh
/// run (the CLI, a reload) starts without it, and the result says when the two differ.
///
/// It also carries the last search for the fastest design ([`SearchMemo`]): the search is a
/// function of its inputs alone, so a later run whose search inputs are equal reuses the
/// result instead of repeating some forty placements and simulations (edits elsewhere in the
/// form, and the robustness analysis that follows each page cycle).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Continuation {
    pub feedback: Option<crate::place::Eigenvectors>,
    pub observer: Option<crate::place::Eigenvectors>,
    pub search: Option<SearchMemo>,
    /// An uncertainty cloud drawn in steps for the next run ([`CloudJob`]); a run's own
    /// continuation never carries one on.
    pub cloud: Option<CloudMemo>,
}

/// A search for the fastest design within the limits together with everything it was computed
/// from (owned copies, compared exactly): [`SearchMemo::outcome_for`] gives the outcome (a result
/// or the reason it failed) only for equal inputs, so reusing it cannot change a design.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchMemo {
    inputs: SearchInputs,
    outcome: Result<crate::search::SearchResult, crate::search::SearchError>,
}

/// The inputs of one search: its data and its tuning.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SearchInputs {
    pub data: crate::search::SearchData,
    pub params: crate::search::SearchParams,
}

impl SearchMemo {
    pub(crate) fn new(inputs: SearchInputs, outcome: Result<crate::search::SearchResult, crate::search::SearchError>) -> SearchMemo {
        SearchMemo { inputs, outcome }
    }

    /// The outcome, for the inputs it was computed from.
    pub(crate) fn outcome(&self) -> &Result<crate::search::SearchResult, crate::search::SearchError> {
        &self.outcome
    }

    /// The remembered outcome when `inputs` are exactly those it was computed from.
    pub(crate) fn outcome_for(&self, inputs: &SearchInputs) -> Option<&Result<crate::search::SearchResult, crate::search::SearchError>> {
        (self.inputs == *inputs).then_some(&self.outcome)
    }
}

/// A search for the fastest design that a caller runs in steps before the design
/// ([`run::search_job`]): the page spreads it over slices of its main thread. Its memo, put
/// into the [`Continuation`] of the run that follows, makes that run use the outcome instead of
/// searching (the same outcome: the steps are those of the one-piece search).
pub struct SearchJob {
    inputs: SearchInputs,
    run: crate::search::SearchRun,
}

impl SearchJob {
    pub(crate) fn new(inputs: SearchInputs, run: crate::search::SearchRun) -> SearchJob {
        SearchJob { inputs, run }
    }

    /// One evaluation of the search (one placement and its simulations); the memo once the
    /// search is over.
    pub fn step(&mut self) -> Option<SearchMemo> {
        self.run.step().map(|outcome| SearchMemo::new(self.inputs.clone(), outcome))
    }

    /// Evaluations so far.
    pub fn evaluations(&self) -> usize {
        self.run.evaluations()
    }

    /// Whether `other` searches exactly what this job searches (a caller can then keep this
    /// one running instead of starting again).
    pub fn same_search(&self, other: &SearchJob) -> bool {
        self.inputs == other.inputs
    }

    /// The most evaluations the search can take (the path's factors and the bisection's cap;
    /// about 40–60 are typical).
    pub fn max_evaluations(&self) -> usize {
        self.run.max_steps()
    }
}

/// LQR weights as given.
#[derive(Debug, Clone, PartialEq)]
pub enum LqrWeights {
    /// `Q`, `R` and the cross weight `S` of `2 xᵀ S u` (absent: zero).
    Matrices { q: DMatrix<f64>, r: DMatrix<f64>, s: Option<DMatrix<f64>> },
    /// Bryson's rule: `Q = diag(1/x_max²)`, `R = diag(1/u_max²)`.
    Bryson { max_state: Vec<f64>, max_input: Vec<f64> },
}

/// A pole choice made by Polewright rather than listed by the user.
#[derive(Debug, Clone, PartialEq)]
pub struct PoleChoice {
    pub method: PoleChoiceMethod,
    /// Plain description of the normalisation and scaling.
    pub description: String,
    pub poles: Vec<Complex64>,
    /// The admissible region from a specification.
    pub region: Option<crate::patterns::Region>,
}

impl Default for ControllerSpec {
    fn default() -> Self {
        ControllerSpec {
            plant_sample_time: None,
            plane: Plane::S,
            implementation: None,
            observer: None,
            tracking: TrackingSpec::None,
            anti_windup: crate::controller::AntiWindup::None,
            scenario: ScenarioSpec::default(),
            search: None,
            pole_choice: None,
            lqr: None,
            robustness: RobustnessSpec::default(),
        }
    }
}

impl ControllerSpec {
    /// True when the file asks for nothing beyond version 1.
    pub fn is_plain(&self) -> bool {
        *self == ControllerSpec::default()
    }
    /// The controller's sample time, if digital.
    pub fn sample_time(&self) -> Option<f64> {
        self.plant_sample_time.or(self.implementation.as_ref().map(|i| i.sample_time))
    }
}
