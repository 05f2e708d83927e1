//! The design result (`polewright.result`).

use nalgebra::DMatrix;
use num_complex::Complex64;
use serde::Serialize;

use super::PoleChoiceMethod;
use crate::analysis::{ModalReport, ModeVerdict};
use crate::warnings::Warning;

// ---------------------------------------------------------------------------------------------
pub type Pair = [f64; 2];

pub(crate) fn pair(z: Complex64) -> Pair {
    [z.re, if z.im == 0.0 { 0.0 } else { z.im }]
}

pub(crate) fn rows(m: &DMatrix<f64>) -> Vec<Vec<f64>> {
    (0..m.nrows()).map(|i| m.row(i).iter().cloned().collect()).collect()
}

/// The design result (`polewright.result`, version 1).
#[derive(Debug, Clone, Serialize)]
pub struct DesignResult {
    pub format: &'static str,
    pub version: u64,
    /// Always `"u = -K x"`.
    pub convention: &'static str,
    pub plant: PlantSummary,
    pub open_loop_poles: Vec<Pair>,
    /// The plant's zeros (`null` without outputs C, or when they could not be computed:
    /// `zeros_unavailable` says why).
    pub zeros: Option<ZerosResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub zeros_unavailable: Option<String>,
    pub feedback: FeedbackResult,
    pub controllability: StructureResult,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub observability: Option<StructureResult>,
    pub simulation: SimulationResult,
    pub warnings: Vec<Warning>,
    /// Continuous or discrete, serialised as `"continuous"` / `"discrete"` (version 2).
    pub domain: crate::analysis::Domain,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sample_time: Option<f64>,
    /// The zero-order-hold model the digital design used.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub discrete_plant: Option<DiscretePlantResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub observer: Option<ObserverResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tracking: Option<TrackingResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sample_rate: Option<SampleRateResult>,
    /// The whole controller simulated in the loop.
    #[serde(rename = "loop", skip_serializing_if = "Option::is_none")]
    pub closed_loop: Option<LoopResult>,
    /// The fastest design the actuators allow (when asked for).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub search: Option<SearchSummary>,
    /// Poles chosen from a pattern or a specification.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pole_choice: Option<PoleChoiceResult>,
    /// LQR as a way of choosing poles.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lqr: Option<LqrResult>,
    /// Margins at the plant input of the loop as built (null when the loop is not stable, or a
    /// computation failed: `margins_unavailable` says which).
    pub margins: Option<MarginsResult>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub margins_unavailable: Option<String>,
    /// The run skipped margins and pole sensitivity on purpose (a quick run while a pole is
    /// dragged); not part of the result file.
    #[serde(skip)]
    pub robustness_deferred: bool,
    pub pole_sensitivity: Option<PoleSensitivityResult>,
    /// Only when the design asks for it (`robustness.uncertainty`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub uncertainty: Option<UncertaintyResult>,
    /// The float32 re-check (digital designs).
    pub finite_precision: Option<FinitePrecisionResult>,
    /// The start of the next design of a session (not written to the result file).
    #[serde(skip)]
    pub continuation: crate::Continuation,
}

#[derive(Debug, Clone, Serialize)]
pub struct LqrResult {
    /// The Riccati solution `X` of the design pair.
    pub riccati_solution: Vec<Vec<f64>>,
    /// Its normalised residual.
    pub residual: f64,
    /// The LQR gain itself (inputs × design states): the gain the design uses.
    pub gain: Vec<Vec<f64>>,
    pub closed_loop_poles: Vec<Pair>,
    pub q: Vec<Vec<f64>>,
    pub r: Vec<Vec<f64>>,
    /// When the state weight (after the cross weight) is not positive semidefinite but a
    /// stabilising solution exists: its smallest eigenvalue (negative). Null otherwise.
    pub state_weight_smallest_eigenvalue: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PoleChoiceResult {
    pub method: PoleChoiceMethod,
    pub description: String,
    pub suggested_poles: Vec<Pair>,
    /// From a specification: `{min_damping, min_decay_rate, natural_frequency}`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub region: Option<RegionResult>,
}

#[derive(Debug, Clone, Serialize)]
pub struct RegionResult {
    pub min_damping: f64,
    pub min_decay_rate: f64,
    pub natural_frequency: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct SearchSummary {
    /// The pattern (`feedback.poles`) was multiplied by this factor.
    pub speed_factor: f64,
    pub suggested_poles: Vec<Pair>,
    /// 1-based, as in the design file.
    pub limiting_situation: usize,
    pub limiting_input: String,
    /// Peak command / limit at the result (≤ 1).
    pub peak_ratio: f64,
    /// Per situation, the slowest state's settling time (null: not settled).
    pub settling_time: Vec<Option<f64>>,
    pub monotonic: bool,
    /// `[factor, peak ratio]` samples of the monotonicity check.
    pub samples: Vec<[f64; 2]>,
    pub limited_by_range: bool,
    /// Why the peak at the factor found is below 97 % of the limit (null: it is not).
    pub shortfall: Option<crate::search::SearchShortfall>,
    pub evaluations: usize,
}

#[derive(Debug, Clone, Serialize)]
pub struct DiscretePlantResult {
    pub a: Vec<Vec<f64>>,
    pub b: Vec<Vec<f64>>,
    pub sample_time: f64,
    pub method: crate::spec::MethodChoice,
    pub computation_delay: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct ObserverResult {
    /// `L`, states × outputs (predictor form, or the continuous observer).
    pub gain: Vec<Vec<f64>>,
    /// `L_c = Φ⁻¹ L` for the current-estimator form.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub current_gain: Option<Vec<Vec<f64>>>,
    pub form: ObserverRunForm,
    pub requested_poles: Vec<Pair>,
    /// Eigenvalues of `A − L C` (or `Φ − L C`), recomputed.
    pub achieved_poles: Vec<Pair>,
    pub max_pole_error: f64,
    pub eigenvector_condition: f64,
    pub gain_norm: f64,
    /// `‖K L‖₂`: how strongly measurement noise reaches the control input through the observer.
    pub noise_to_input_gain: f64,
    pub detectable: bool,
}

#[derive(Debug, Clone, Serialize)]
#[serde(tag = "mode", rename_all = "snake_case")]
pub enum TrackingResult {
    Feedforward {
        outputs: Vec<String>,
        nx: Vec<Vec<f64>>,
        nu: Vec<Vec<f64>>,
    },
    Integral {
        outputs: Vec<String>,
        state_gain: Vec<Vec<f64>>,
        integral_gain: Vec<Vec<f64>>,
        anti_windup: crate::spec::AntiWindupMode,
        time_constant: Option<f64>,
        /// `N_x`, `N_u` when the reference is also fed forward (two degrees of freedom).
        #[serde(skip_serializing_if = "Option::is_none")]
        nx: Option<Vec<Vec<f64>>>,
        #[serde(skip_serializing_if = "Option::is_none")]
        nu: Option<Vec<Vec<f64>>>,
    },
}

/// Margins of the loop as built, broken at the plant input (`crate::margins`).
#[derive(Debug, Clone, Serialize)]
pub struct MarginsResult {
    /// Skew σ of the disks (0: symmetric gain variations; 1: gain increase unbounded).
    pub skew: f64,
    /// One per input, the other inputs' loops closed (loop at a time).
    pub per_input: Vec<InputMarginResult>,
    /// Every input perturbed at once, independently (multiloop disk margin).
    pub all_inputs: AllInputsMargin,
    /// The same at skew 0, on which the common-practice verdict (±6 dB, ±35°) is made.
    pub all_inputs_symmetric: DiskMargin,
    /// Largest σ_max(S) over frequency at the plant input, and where (rad/s).
    pub peak_sensitivity: f64,
    pub peak_sensitivity_frequency: f64,
    /// Largest σ_max(T), and where.
    pub peak_complementary_sensitivity: f64,
    pub peak_complementary_sensitivity_frequency: f64,
    /// σ_max(S) and σ_max(T) over frequency (a logarithmic selection of the grid, for plots).
    pub frequency_response: FrequencyResponse,
}

/// A disk margin: size α, the real gain factors `[low, high]` it guarantees (`high` null when
/// unbounded), the phase (degrees) it guarantees and the frequency (rad/s) where it is attained.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct DiskMargin {
    #[serde(skip)]
    pub skew: f64,
    pub disk_margin: f64,
    pub gain_range: [f64; 2],
    pub phase_margin_deg: f64,
    pub frequency: f64,
}

/// One input's margins.
#[derive(Debug, Clone, Serialize)]
pub struct InputMarginResult {
    pub input: String,
    #[serde(flatten)]
    pub disk: DiskMargin,
    pub classical: ClassicalMargins,
}

impl InputMarginResult {
    /// Whether this input's disk has the skew `skew` (margins are computed at one skew).
    pub(crate) fn disk_skew_is(&self, skew: f64) -> bool {
        self.disk.skew == skew
    }
}

/// Classical loop-at-a-time margins (null where the loop has no such crossing).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct ClassicalMargins {
    /// Gain factors at the −180° crossings below and above 1.
    pub gain_margin_low: Option<f64>,
    pub gain_margin_high: Option<f64>,
    /// Phase margin (degrees) at the first crossover, and the crossover frequency (rad/s).
    pub phase_margin_deg: Option<f64>,
    pub crossover: Option<f64>,
    /// Extra input delay (s) the loop tolerates.
    pub delay_margin: Option<f64>,
}

/// How exact the all-inputs margin is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MultiloopAccuracy {
    /// The D-scaling bound met the lower bound (up to three inputs): the margin is exact.
    Exact,
    /// A guaranteed margin that may be conservative (the D-scaling bound of μ).
    Bound,
}

/// The all-inputs disk margin.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct AllInputsMargin {
    #[serde(flatten)]
    pub disk: DiskMargin,
    pub accuracy: MultiloopAccuracy,
    /// A disk of this size at that frequency destabilises the loop (from the lower bound of μ;
    /// equal to `disk_margin` when exact; null when infinite).
    pub disk_margin_at_most: Option<f64>,
}

/// `σ_max(S)` and `σ_max(T)` at the plant input over frequency.
#[derive(Debug, Clone, Default, Serialize)]
pub struct FrequencyResponse {
    pub frequency: Vec<f64>,
    pub sensitivity: Vec<f64>,
    pub complementary_sensitivity: Vec<f64>,
}

/// The plant's invariant (transmission) zeros from the inputs to the outputs C, in the
/// design's domain (the sampled plant's zeros, sampling zeros included, for a digital design).
#[derive(Debug, Clone, Serialize)]
pub struct ZerosResult {
    pub zeros: Vec<Pair>,
    /// Per zero, `σ_min(S(z)) / ‖S(z)‖₂` of the system matrix (0 at an exact zero).
    pub residuals: Vec<f64>,
    /// Per zero, whether it lies in the right half-plane (outside the unit circle for a digital
    /// design), beyond rounding (1e-9) of the boundary.
    pub unstable: Vec<bool>,
    /// Some zero is unstable: feedback cannot move it, and (unless it is a sampling zero on the
    /// negative real axis of the z-plane) an output's step response first moves the wrong way.
    pub non_minimum_phase: bool,
    /// The zeros are those to the tracked outputs (tracking is on), not to every output.
    pub tracked_only: bool,
}

/// How sensitive each closed-loop pole of the loop as built is to model error.
#[derive(Debug, Clone, Serialize)]
pub struct PoleSensitivityResult {
    /// The plant entry of the derivatives (`"A(2, 1)"`), when one was chosen.
    pub entry: Option<String>,
    /// One row per pole of the loop as built (the controller's domain: z for a digital design).
    pub poles: Vec<PoleSensitivityRow>,
    /// A sentence naming the pole most sensitive to model error.
    pub summary: String,
}

/// One pole: its eigenvalue condition number and, for the chosen entry `p`, `dλ/dp` (both null
/// for a repeated pole, where they are not defined).
#[derive(Debug, Clone, Serialize)]
pub struct PoleSensitivityRow {
    pub pole: Pair,
    pub condition: Option<f64>,
    pub derivative: Option<Pair>,
    pub repeated: bool,
}

/// The seeded Monte-Carlo sample of the uncertain plant with the gains held fixed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UncertaintyResult {
    pub samples: usize,
    pub seed: u64,
    /// The uncertain parameters as read (`"A(2, 1) ±20 %"`, `"B (norm-bounded) ±10 %"`).
    pub parameters: Vec<String>,
    pub stable: usize,
    pub failed: usize,
    pub stable_fraction: f64,
    /// Smallest decay rate (1/s; negative: growing) and damping ratio over every pole sampled.
    pub worst_decay_rate: f64,
    pub worst_damping: f64,
    /// Every sampled closed-loop pole (the controller's domain), sample after sample.
    pub poles: Vec<Pair>,
    /// The spread over the samples of the response the design simulates (the loop scenario
    /// when there is one, otherwise the free response).
    pub response: Option<ResponseSpread>,
}

/// Spread of the simulated response over the samples.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResponseSpread {
    /// `"loop"` or `"free response"`.
    pub scenario: &'static str,
    /// Longest settling time of each sample: smallest, median, largest (s), over the samples
    /// that settled; and how many did not settle.
    pub settling_time: Option<[f64; 3]>,
    pub not_settled: usize,
    /// Samples whose response could not be simulated.
    pub failed: usize,
    /// Peak input (or command) magnitude per input: smallest, median, largest (null when no
    /// sample could be simulated).
    pub peak_input: Vec<Option<[f64; 3]>>,
}

/// The float32 re-check of a digital design ([`crate::precision`]).
#[derive(Debug, Clone, Serialize)]
pub struct FinitePrecisionResult {
    /// `"float32"`.
    pub number_format: &'static str,
    pub loops: Vec<LoopPrecision>,
}

/// One loop of the re-check: `"controller"` (the plant with the gains rounded) or
/// `"observer"` (the observer's model, gain and outputs rounded).
#[derive(Debug, Clone, Serialize)]
pub struct LoopPrecision {
    pub name: &'static str,
    pub max_pole_move: f64,
    /// Smallest `ζ_rounded / ζ_designed` over the complex poles.
    pub worst_damping_fraction: f64,
    pub stable: bool,
    /// `[designed, rounded]` per pole.
    pub poles: Vec<[Pair; 2]>,
}

#[derive(Debug, Clone, Serialize)]
pub struct SampleRateResult {
    /// rad/s; absent when every pole is at `z = 0` (deadbeat).
    pub bandwidth: Option<f64>,
    pub samples_per_bandwidth: Option<f64>,
    pub verdict: crate::controller::SampleRateVerdict,
    pub message: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct OutputLoopMetrics {
    pub name: String,
    pub reference: f64,
    pub rise_time: Option<f64>,
    pub settling_time: Option<f64>,
    pub overshoot: f64,
    /// The largest move the wrong way after the step, fraction of the step (a non-minimum-phase
    /// output's dip).
    pub undershoot: f64,
    pub steady_state_error: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct InputLoopMetrics {
    pub name: String,
    pub peak_command: f64,
    pub limit: Option<f64>,
    pub time_saturated: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct LoopResult {
    pub sample_time: Option<f64>,
    pub observer_form: Option<ObserverRunForm>,
    pub duration: f64,
    pub diverged: bool,
    pub time: Vec<f64>,
    pub outputs: Vec<Vec<f64>>,
    pub measured: Vec<Vec<f64>>,
    pub reference: Vec<Vec<f64>>,
    pub states: Vec<Vec<f64>>,
    pub estimates: Vec<Vec<f64>>,
    pub inputs: Vec<Vec<f64>>,
    pub commanded: Vec<Vec<f64>>,
    pub tracked: Vec<OutputLoopMetrics>,
    pub input_metrics: Vec<InputLoopMetrics>,
    /// Per state, its largest magnitude over the whole loop simulation (every step, not only
    /// the plotted ones); compared with `simulation.state_limit`.
    pub peak_states: Vec<f64>,
    /// Eigenvalues of the linear closed loop with observer (when computed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub loop_poles: Option<Vec<Pair>>,
    /// Largest distance between those and the union of controller and observer poles
    /// (separation principle), relative.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub separation_error: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PlantSummary {
    pub states: usize,
    pub inputs: usize,
    pub outputs: usize,
    pub state_names: Vec<String>,
    pub input_names: Vec<String>,
    pub output_names: Vec<String>,
    pub state_units: Vec<String>,
    pub input_units: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct FeedbackResult {
    /// `K`, inputs × states.
    pub gain: Vec<Vec<f64>>,
    pub requested_poles: Vec<Pair>,
    pub achieved_poles: Vec<Pair>,
    pub max_pole_error: f64,
    /// `κ₂(X)`; `null` in JSON when infinite.
    pub eigenvector_condition: f64,
    /// `κ₂(D⁻¹ X)` in balanced coordinates (independent of the state units; what the
    /// `fragile-design` warning judges); `null` when infinite.
    pub balanced_eigenvector_condition: f64,
    pub eigenvector_determinant: f64,
    pub gain_norm: f64,
    pub iterations: usize,
    pub converged: bool,
    pub input_rank: usize,
    pub not_assigned: Vec<Pair>,
    pub fixed_modes: Vec<Pair>,
    /// `K_u` (inputs × inputs) on the previous input, with a computation delay.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub delay_gain: Option<Vec<Vec<f64>>>,
    /// Whether the gain continued the previous design's branch (page sessions and the search).
    pub branch: crate::place::Branch,
}

#[derive(Debug, Clone, Serialize)]
pub struct ModeResult {
    pub pole: Pair,
    /// The PBH margin in balanced units (independent of the units of states and inputs): the
    /// one the verdict is judged on.
    pub margin: f64,
    /// The PBH margin `σ_min([A − λI, B]) / ‖[A B]‖₂` of the data as given.
    pub unscaled_margin: f64,
    /// Controllable (or observable, in the observability report).
    pub controllable: bool,
    /// `"yes"`, `"weak"` or `"no"`.
    pub verdict: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct StructureResult {
    /// Dimension of the controllable (observable) subspace.
    pub rank: usize,
    pub states: usize,
    /// Controllable (observable) — every mode reachable (visible).
    pub complete: bool,
    /// Stabilisable (detectable).
    pub stabilizable: bool,
    pub modes: Vec<ModeResult>,
    pub uncontrollable_modes: Vec<Pair>,
    pub tolerance: f64,
    pub relative_tolerance: f64,
    pub consistent: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct SimulationResult {
    pub initial_state: Vec<f64>,
    pub initial_state_chosen: bool,
    pub duration: f64,
    pub duration_chosen: bool,
    pub step: f64,
    pub band: f64,
    pub diverged: bool,
    /// Sample times of the series below (at most about 1000 points, decimated from the fine grid).
    pub time: Vec<f64>,
    pub states: Vec<Vec<f64>>,
    /// Applied (saturated) inputs.
    pub inputs: Vec<Vec<f64>>,
    /// Per state, `null` when not settled within the horizon.
    pub settling_time: Vec<Option<f64>>,
    /// Per state, fraction of the initial value; `null` for states starting at zero.
    pub overshoot: Vec<Option<f64>>,
    pub peak_state: Vec<f64>,
    /// Per state, its limit (`plant.state_limits`; `null`: none); empty when none was given.
    pub state_limit: Vec<Option<f64>>,
    /// Per input, peak of the commanded `|−K x|`.
    pub peak_input: Vec<f64>,
    pub input_limit: Vec<Option<f64>>,
    pub first_saturation: Vec<Option<f64>>,
    pub time_saturated: Vec<f64>,
}

pub(crate) fn structure(r: &ModalReport) -> StructureResult {
    StructureResult {
        rank: r.rank,
        states: r.states,
        complete: r.is_complete(),
        stabilizable: r.stable_hidden_modes,
        modes: r
            .modes
            .iter()
            .map(|m| ModeResult {
                pole: pair(m.pole),
                margin: m.margin,
                unscaled_margin: m.unscaled_margin,
                controllable: m.verdict != ModeVerdict::No,
                verdict: match m.verdict {
                    ModeVerdict::Yes => "yes",
                    ModeVerdict::Weak => "weak",
                    ModeVerdict::No => "no",
                },
            })
            .collect(),
        uncontrollable_modes: r.hidden_modes.iter().map(|z| pair(*z)).collect(),
        tolerance: r.tolerance,
        relative_tolerance: r.relative_tolerance,
        consistent: r.consistent,
    }
}

/// How the observer runs: continuous, or digital in the predictor or current form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ObserverRunForm {
    Continuous,
    Predictor,
    Current,
}

impl ObserverRunForm {
    /// The form of an observer of a digital (`digital`) or continuous controller.
    pub fn of(form: crate::controller::ObserverForm, digital: bool) -> Self {
        match (digital, form) {
            (false, _) => ObserverRunForm::Continuous,
            (true, crate::controller::ObserverForm::Predictor) => ObserverRunForm::Predictor,
            (true, crate::controller::ObserverForm::Current) => ObserverRunForm::Current,
        }
    }
}
