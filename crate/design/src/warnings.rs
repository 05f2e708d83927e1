//! Design warnings: one enum of every warning the run can raise, each with a stable code for
//! scripts, a severity and a plain sentence for people. The page and the CLI show exactly these.
//!
//! | code | severity | when |
//! |---|---|---|
//! | `requested-pole-unstable` | danger | a requested pole is unstable (right half-plane, or outside the unit circle) |
//! | `requested-pole-on-axis` | caution | a requested pole is marginal (imaginary axis, or unit circle, within the analysis tolerance) |
//! | `fast-pole` | caution | a requested pole more than [`WarningParams::fast_pole_ratio`] (default 20) times faster than the plant's own dynamics (`‖A‖₂`): expect large gains and noise amplification |
//! | `fragile-design` | caution | `κ₂(D⁻¹X)` in balanced coordinates (independent of the state units) above [`WarningParams::fragile_condition`] (default 1e4): small model errors move the poles far |
//! | `placement-inaccurate` | danger | achieved poles differ from the request by more than 1e-6 (relative) |
//! | `not-converged` | note | the eigenvector optimisation stopped at its sweep limit |
//! | `dependent-inputs` | note | `B` has dependent columns (rank < inputs) |
//! | `uncontrollable-modes` | caution | the plant is stabilisable but not controllable: fixed modes stay put |
//! | `weakly-controllable` | caution | an open-loop mode with a PBH margin below the weak threshold (default 1e-6) |
//! | `weakly-observable` | caution | the same for observability |
//! | `analysis-inconsistent` | caution | the staircase and PBH tests disagree (borderline controllability) |
//! | `input-over-limit` | caution | the commanded input from the initial state exceeds its actuator limit |
//! | `not-settled` | caution | a state has not settled within the simulated horizon |
//! | `simulation-diverged` | danger | the simulated state grew without bound |
//! | `sample-rate-too-slow` | caution | fewer than 10 samples per closed-loop bandwidth period |
//! | `observer-inaccurate` | danger | the observer poles are achieved to worse than 1e-6 (relative) |
//! | `fragile-observer` | caution | the observer's eigenvector condition number is above 1e4 |
//! | `loop-input-over-limit` | caution | in the loop simulation an input is commanded beyond its limit (and saturates) |
//! | `state-over-limit` | caution | in the free response a state's peak exceeds its limit (`plant.state_limits`) |
//! | `loop-state-over-limit` | caution | in the loop simulation a state's peak exceeds its limit |
//! | `observer-slow` | caution | the observer speed factor is below 2 (common practice: 2–6) |
//! | `observer-fast` | caution | the observer speed factor is above 6: more measurement noise reaches the inputs |
//! | `loop-not-settled` | caution | a tracked output does not settle before the loop simulation ends or the load step comes |
//! | `loop-diverged` | danger | the whole loop (controller with the plant) grew without bound |
//! | `separation-failed` | danger | the loop with observer does not have the controller and observer poles (to 1e-6) |
//! | `pole-outside-region` | caution | closed-loop poles lie outside the specification's region |
//! | `repeated-poles` | caution | a pole repeats more often than rank B (with one input: at all): it is placed as a Jordan block, whose poles move by about the p-th root of a model error |
//! | `branch-followed` | note | the gain continues the previous design's (or the search's) branch of the robust placement and differs by more than 1 % from a fresh design of the same document |
//! | `branch-changed` | caution | the gain jumped: the branch followed from the previous design became more than twice as badly conditioned as a fresh start, or ended |
//! | `search-short-of-limit` | caution | at the factor the search found, the peak input is below 97 % of its limit (a branch change, a non-monotone or a discontinuous peak) |
//! | `lqr-weight-indefinite` | caution | the LQR state weight (after the cross weight) is not positive semidefinite but a stabilising solution exists and is used: LQR's guaranteed margins do not apply |
//! | `float32-sensitive` | caution | stored as float32, a closed-loop pole leaves the unit circle or a pole's damping falls below 90 % of its design value |
//! | `small-margin` | caution | the all-inputs disk margin guarantees less than about ±6 dB of gain or ±35° of phase (common practice minimum) |
//! | `deadbeat` | caution | requested poles at z = 0: the loop settles in a few samples with large inputs, and the sample time sets the speed |
//! | `search-not-monotonic` | note | the peak input did not grow steadily with the speed-up: the factor found is one crossing |
//! | `simulation-shortened` | note | the simulated time chosen from the slowest pole was cut to the sample cap (50 000 samples) |
//! | `search-range-limit` | note | the inputs stay within their limits even at the largest factor tried |
//!
//! Severity: *danger*, the loop as designed may be unstable or not what the numbers say;
//! *caution*, the design works but something deserves a look before it goes on a machine;
//! *note*, for information.

use serde::Serialize;

/// Thresholds behind the warnings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WarningParams {
    /// `κ₂(X)` above which a design is called fragile. Default `1e4`.
    pub fragile_condition: f64,
    /// Ratio `|λ| / ‖A‖₂` above which a requested pole is called far faster than the plant. Default 20.
    pub fast_pole_ratio: f64,
    /// Relative pole error above which placement is called inaccurate. Default `1e-6`.
    pub inaccurate_placement: f64,
}

impl Default for WarningParams {
    fn default() -> Self {
        WarningParams { fragile_condition: 1e4, fast_pole_ratio: 20.0, inaccurate_placement: 1e-6 }
    }
}

/// How much a warning matters.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    Note,
    Caution,
    Danger,
}

/// Every warning of a design; serialised by its code (`"input-over-limit"`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum WarningCode {
    /// A requested pole is unstable (right half-plane, or outside the unit circle).
    RequestedPoleUnstable,
    /// A requested pole is marginal (imaginary axis, or unit circle, within the analysis tolerance).
    RequestedPoleOnAxis,
    /// A requested pole more than [`WarningParams::fast_pole_ratio`] (default 20) times faster than the plant's own dynamics (`‖A‖₂`): expect large gains and noise amplification.
    FastPole,
    /// `κ₂(D⁻¹X)` in balanced coordinates (independent of the state units) above [`WarningParams::fragile_condition`] (default 1e4): small model errors move the poles far.
    FragileDesign,
    /// Achieved poles differ from the request by more than 1e-6 (relative).
    PlacementInaccurate,
    /// The eigenvector optimisation stopped at its sweep limit.
    NotConverged,
    /// `B` has dependent columns (rank < inputs).
    DependentInputs,
    /// The plant is stabilisable but not controllable: fixed modes stay put.
    UncontrollableModes,
    /// An open-loop mode with a PBH margin below the weak threshold (default 1e-6).
    WeaklyControllable,
    /// The same for observability.
    WeaklyObservable,
    /// The staircase and PBH tests disagree (borderline controllability).
    AnalysisInconsistent,
    /// A state's peak in the free response exceeds its limit.
    StateOverLimit,
    /// A state's peak in the loop simulation exceeds its limit.
    LoopStateOverLimit,
    /// The commanded input from the initial state exceeds its actuator limit.
    InputOverLimit,
    /// A state has not settled within the simulated horizon.
    NotSettled,
    /// The simulated state grew without bound.
    SimulationDiverged,
    /// Fewer than 10 samples per closed-loop bandwidth period.
    SampleRateTooSlow,
    /// The observer poles are achieved to worse than 1e-6 (relative).
    ObserverInaccurate,
    /// The observer's eigenvector condition number is above 1e4.
    FragileObserver,
    /// In the loop simulation an input is commanded beyond its limit (and saturates).
    LoopInputOverLimit,
    /// The observer speed factor is below 2 (common practice: 2–6).
    ObserverSlow,
    /// The observer speed factor is above 6: more measurement noise reaches the inputs.
    ObserverFast,
    /// A tracked output does not settle before the loop simulation ends or the load step comes.
    LoopNotSettled,
    /// The whole loop (controller with the plant) grew without bound.
    LoopDiverged,
    /// The loop with observer does not have the controller and observer poles (to 1e-6).
    SeparationFailed,
    /// Closed-loop poles lie outside the specification's region.
    PoleOutsideRegion,
    /// A pole repeats more often than rank B: placed as a Jordan block (sensitive to model errors).
    RepeatedPoles,
    /// Requested poles at z = 0 (deadbeat): a few samples to settle, large inputs.
    Deadbeat,
    /// The gain follows the previous design's branch and differs from a fresh design by over 1 %.
    BranchFollowed,
    /// The gain jumped: the followed branch became too badly conditioned, or ended.
    BranchChanged,
    /// The search's peak at the factor found is below 97 % of the limit.
    SearchShortOfLimit,
    /// The LQR state weight is indefinite; the stabilising solution is used without LQR's margins.
    LqrWeightIndefinite,
    /// Stored as float32, a pole leaves the unit circle or its damping falls below 90 %.
    Float32Sensitive,
    /// An input's disk margin guarantees less than about ±6 dB or ±35° (common practice).
    SmallMargin,
    /// The peak input did not grow steadily with the speed-up: the factor found is one crossing.
    SearchNotMonotonic,
    /// The inputs stay within their limits even at the largest factor tried.
    SearchRangeLimit,
    /// The simulated time chosen from the slowest pole was cut to the sample cap.
    SimulationShortened,
}

impl WarningCode {
    /// Every code, in the table's order.
    pub const ALL: [WarningCode; 37] = [
        WarningCode::RequestedPoleUnstable,
        WarningCode::RequestedPoleOnAxis,
        WarningCode::FastPole,
        WarningCode::FragileDesign,
        WarningCode::PlacementInaccurate,
        WarningCode::NotConverged,
        WarningCode::DependentInputs,
        WarningCode::UncontrollableModes,
        WarningCode::WeaklyControllable,
        WarningCode::WeaklyObservable,
        WarningCode::AnalysisInconsistent,
        WarningCode::InputOverLimit,
        WarningCode::NotSettled,
        WarningCode::SimulationDiverged,
        WarningCode::SampleRateTooSlow,
        WarningCode::ObserverInaccurate,
        WarningCode::FragileObserver,
        WarningCode::LoopInputOverLimit,
        WarningCode::StateOverLimit,
        WarningCode::LoopStateOverLimit,
        WarningCode::ObserverSlow,
        WarningCode::ObserverFast,
        WarningCode::LoopNotSettled,
        WarningCode::LoopDiverged,
        WarningCode::SeparationFailed,
        WarningCode::PoleOutsideRegion,
        WarningCode::RepeatedPoles,
        WarningCode::Deadbeat,
        WarningCode::BranchFollowed,
        WarningCode::BranchChanged,
        WarningCode::SearchShortOfLimit,
        WarningCode::LqrWeightIndefinite,
        WarningCode::Float32Sensitive,
        WarningCode::SmallMargin,
        WarningCode::SearchNotMonotonic,
        WarningCode::SearchRangeLimit,
        WarningCode::SimulationShortened,
    ];

    /// The stable code, as serialised.
    pub fn as_str(self) -> &'static str {
        match self {
            WarningCode::RequestedPoleUnstable => "requested-pole-unstable",
            WarningCode::RequestedPoleOnAxis => "requested-pole-on-axis",
            WarningCode::FastPole => "fast-pole",
            WarningCode::FragileDesign => "fragile-design",
            WarningCode::PlacementInaccurate => "placement-inaccurate",
            WarningCode::NotConverged => "not-converged",
            WarningCode::DependentInputs => "dependent-inputs",
            WarningCode::UncontrollableModes => "uncontrollable-modes",
            WarningCode::WeaklyControllable => "weakly-controllable",
            WarningCode::WeaklyObservable => "weakly-observable",
            WarningCode::AnalysisInconsistent => "analysis-inconsistent",
            WarningCode::InputOverLimit => "input-over-limit",
            WarningCode::NotSettled => "not-settled",
            WarningCode::SimulationDiverged => "simulation-diverged",
            WarningCode::SampleRateTooSlow => "sample-rate-too-slow",
            WarningCode::ObserverInaccurate => "observer-inaccurate",
            WarningCode::FragileObserver => "fragile-observer",
            WarningCode::LoopInputOverLimit => "loop-input-over-limit",
            WarningCode::StateOverLimit => "state-over-limit",
            WarningCode::LoopStateOverLimit => "loop-state-over-limit",
            WarningCode::ObserverSlow => "observer-slow",
            WarningCode::ObserverFast => "observer-fast",
            WarningCode::LoopNotSettled => "loop-not-settled",
            WarningCode::LoopDiverged => "loop-diverged",
            WarningCode::SeparationFailed => "separation-failed",
            WarningCode::PoleOutsideRegion => "pole-outside-region",
            WarningCode::RepeatedPoles => "repeated-poles",
            WarningCode::Deadbeat => "deadbeat",
            WarningCode::BranchFollowed => "branch-followed",
            WarningCode::BranchChanged => "branch-changed",
            WarningCode::SearchShortOfLimit => "search-short-of-limit",
            WarningCode::LqrWeightIndefinite => "lqr-weight-indefinite",
            WarningCode::Float32Sensitive => "float32-sensitive",
            WarningCode::SmallMargin => "small-margin",
            WarningCode::SearchNotMonotonic => "search-not-monotonic",
            WarningCode::SearchRangeLimit => "search-range-limit",
            WarningCode::SimulationShortened => "simulation-shortened",
        }
    }

    /// How much it matters.
    pub fn severity(self) -> Severity {
        match self {
            WarningCode::RequestedPoleUnstable
            | WarningCode::PlacementInaccurate
            | WarningCode::SimulationDiverged
            | WarningCode::ObserverInaccurate
            | WarningCode::LoopDiverged
            | WarningCode::SeparationFailed => Severity::Danger,
            WarningCode::RequestedPoleOnAxis
            | WarningCode::FastPole
            | WarningCode::FragileDesign
            | WarningCode::UncontrollableModes
            | WarningCode::WeaklyControllable
            | WarningCode::WeaklyObservable
            | WarningCode::AnalysisInconsistent
            | WarningCode::InputOverLimit
            | WarningCode::NotSettled
            | WarningCode::SampleRateTooSlow
            | WarningCode::FragileObserver
            | WarningCode::LoopInputOverLimit
            | WarningCode::StateOverLimit
            | WarningCode::LoopStateOverLimit
            | WarningCode::ObserverSlow
            | WarningCode::ObserverFast
            | WarningCode::LoopNotSettled
            | WarningCode::PoleOutsideRegion
            | WarningCode::RepeatedPoles
            | WarningCode::Deadbeat
            | WarningCode::BranchChanged
            | WarningCode::SearchShortOfLimit
            | WarningCode::LqrWeightIndefinite
            | WarningCode::Float32Sensitive
            | WarningCode::SmallMargin => Severity::Caution,
            WarningCode::NotConverged
            | WarningCode::DependentInputs
            | WarningCode::BranchFollowed
            | WarningCode::SearchNotMonotonic
            | WarningCode::SearchRangeLimit
            | WarningCode::SimulationShortened => Severity::Note,
        }
    }
}

impl std::fmt::Display for WarningCode {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Compare with a code as written (`w.code == "input-over-limit"`).
impl PartialEq<&str> for WarningCode {
    fn eq(&self, other: &&str) -> bool {
        self.as_str() == *other
    }
}

/// One warning.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Warning {
    /// Stable, machine-readable code (see the module table).
    pub code: WarningCode,
    pub severity: Severity,
    /// A plain sentence.
    pub message: String,
}

impl Warning {
    pub fn new(code: WarningCode, message: impl Into<String>) -> Self {
        Warning { code, severity: code.severity(), message: message.into() }
    }
}

#[cfg(test)]
#[path = "tests/warnings.rs"]
mod tests;
