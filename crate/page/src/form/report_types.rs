//! The report's types: what the page shows for a design, as text and tables (built in
//! [`super::report`]).

use super::*;

/// A labelled matrix (a gain, Φ, Γ, …) as a table and as copyable text.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct MatrixTable {
    /// Its symbol, shown in the table's corner cell (`K`, `L`, `Φ`, …).
    pub symbol: String,
    /// What it is, in one sentence (the table's caption).
    pub caption: String,
    pub row_labels: Vec<String>,
    pub column_labels: Vec<String>,
    /// Entries for reading, with the digits in force ([`crate::design::format`]).
    pub entries: Vec<Vec<String>>,
    /// Tab-separated text with the labels and full-precision entries (the shortest text that
    /// reads back to the same number), for copying into a spreadsheet or a file.
    pub text: String,
}

/// The gain as a labelled table and as copyable text (`K`: one row per input, one column per state).
pub type GainTable = MatrixTable;

/// One row of the pole table.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct PoleRow {
    /// Requested pole (full precision), or empty for a fixed mode.
    pub requested: String,
    /// Achieved closed-loop pole (full precision), or empty when not assigned.
    pub achieved: String,
    /// Relative error `|achieved − requested| / |requested|`, or empty.
    pub error: String,
    /// Damping ratio and natural frequency of the achieved pole, or its time constant.
    pub character: String,
    /// Remark: empty, or why the pole is special.
    pub note: String,
}

/// One open-loop mode in a controllability (observability) report.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct ModeRow {
    pub pole: String,
    pub margin: String,
    pub verdict: String,
}

/// A controllability (or observability) report in sentences and rows.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct StructureReport {
    pub summary: String,
    pub tolerance: String,
    pub modes: Vec<ModeRow>,
}

/// One state's response figures.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct StateRow {
    pub name: String,
    pub initial: String,
    pub peak: String,
    pub settling: String,
    pub overshoot: String,
    /// The peak against the state's limit (empty without one).
    pub limit: String,
}

/// One state's peak in the loop simulation, against its limit.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct LoopStateRow {
    pub name: String,
    pub peak: String,
    /// The limit and the verdict (`no limit given` without one).
    pub limit: String,
}

/// One input's response figures.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct InputRow {
    pub name: String,
    pub peak: String,
    pub limit: String,
    pub verdict: String,
}

/// One tracked output's figures in the loop simulation.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct LoopOutputRow {
    pub name: String,
    pub reference: String,
    pub rise_time: String,
    pub settling_time: String,
    pub overshoot: String,
    /// The largest move the wrong way, percent of the step (`0 %` for a minimum-phase output).
    pub undershoot: String,
    pub steady_state_error: String,
}

/// One input's figures in the loop simulation.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct LoopInputRow {
    pub name: String,
    pub peak: String,
    pub limit: String,
    pub saturated: String,
}

/// One state's estimation error in the loop simulation.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct EstimationRow {
    pub name: String,
    pub peak: String,
    pub last: String,
}

/// The observer: its gain, poles and what it does to measurement noise.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct ObserverReport {
    /// `L`, one row per state, one column per output.
    pub gain: MatrixTable,
    /// `L_c` of the current-estimator form.
    pub current_gain: Option<MatrixTable>,
    pub poles: Vec<PoleRow>,
    /// Form, conditioning and gain size in a sentence.
    pub summary: String,
    /// The noise-to-input gain ‖K L‖₂ in a sentence.
    pub noise: String,
}

/// The parts beyond a plain gain (design file version 2), when any was asked for. `Hash`
/// fingerprints the whole report: the page redraws its blocks when anything in it changed.
#[derive(Debug, Clone, PartialEq, Hash, Serialize)]
pub struct ControllerReport {
    /// The control law, one equation per line.
    pub law: Vec<String>,
    /// Continuous or digital, and how the plant was converted.
    pub domain: String,
    /// The sample-rate advice sentence (digital designs).
    pub sample_rate: Option<String>,
    /// The float32 re-check in one sentence (digital designs).
    pub precision: Option<String>,
    /// `K_u` on the previous input (computation delay).
    pub delay_gain: Option<MatrixTable>,
    /// `N_x`, `N_u` (feedforward) or `K_i` (integral action).
    pub tracking: Vec<MatrixTable>,
    pub tracking_note: Option<String>,
    /// `Φ` and `Γ` of the zero-order-hold model (digital implementation of a continuous plant).
    pub discrete_plant: Vec<MatrixTable>,
    pub observer: Option<ObserverReport>,
    /// The whole-loop simulation: what was simulated.
    pub loop_summary: Option<String>,
    pub loop_outputs: Vec<LoopOutputRow>,
    pub loop_inputs: Vec<LoopInputRow>,
    /// Each state's peak over the loop simulation, against its limit.
    pub loop_states: Vec<LoopStateRow>,
    pub estimation: Vec<EstimationRow>,
    /// The settling band of the step figures, e.g. `±2 %`.
    pub settling_band: String,
    /// Output units (rows of C), for the plots' labels.
    pub output_units: Vec<String>,
    /// Reference and load step times, drawn on the loop plots.
    pub events: Vec<EventLine>,
}

/// How the controller's poles were chosen, when the user did not simply list them (or the
/// search scaled them): ready-to-show texts.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct PoleChoiceReport {
    /// E.g. "Bessel pattern", "Specification (dominant pair)", "LQR (Bryson's rule)".
    pub method: String,
    /// How the poles were obtained, in a sentence or two.
    pub description: String,
    /// The poles the choice produced (after the search, when it ran), full precision, in the
    /// plane of the `poles` field: text that [`parse_poles`] reads back exactly, to copy into
    /// `poles` with the pole source set to `list` ("adopt").
    pub suggested_poles: String,
    /// What `suggested_poles` holds and how to adopt it.
    pub suggested_note: String,
    /// The plane of `suggested_poles`: `"s"` or `"z"` (the `plane` field to adopt them with).
    pub suggested_plane: String,
    /// With a computation delay under LQR: the delay states' poles (z-plane, full precision),
    /// for the `delay_poles` field; `None` otherwise.
    pub suggested_delay_poles: Option<String>,
    /// The admissible region of a specification.
    pub region: Option<RegionReport>,
    /// The LQR design, when the poles came from LQR weights.
    pub lqr: Option<LqrReport>,
    /// The search for the fastest design within the actuator limits, when it ran.
    pub search: Option<SearchReport>,
}

/// The region of the s-plane a specification asks for, in words.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct RegionReport {
    /// The smallest damping ratio ζ and the overshoot it stands for.
    pub damping: String,
    /// The smallest decay rate σ (and, for a digital design, the circle it maps to).
    pub decay_rate: String,
    /// The smallest natural frequency ωn, when a rise time was given.
    pub natural_frequency: Option<String>,
    /// That the bounds are second-order approximations, to be confirmed by simulation.
    pub note: String,
    /// The achieved closed-loop poles outside the region, one entry per broken boundary
    /// (damping, decay or natural frequency); for a digital design judged through
    /// `s = ln z / T`.
    pub outside_region: Vec<String>,
}

/// The LQR design behind the poles.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct LqrReport {
    /// The state weight Q in words.
    pub q: String,
    /// The input weight R in words.
    pub r: String,
    /// The normalised residual of the Riccati equation in a sentence.
    pub residual: String,
    /// The Riccati solution X (design states × design states).
    pub riccati_solution: MatrixTable,
    /// The LQR gain (inputs × design states).
    pub gain: MatrixTable,
    /// The LQR closed-loop poles (the plane of the design: z for a digital one), full precision.
    pub closed_loop_poles: String,
    /// Whether the gain K used is this LQR gain (one input) or only shares its poles.
    pub gain_note: String,
    /// The guaranteed margins of full-state LQR and where they hold (continuous designs only).
    pub margins: Option<String>,
}

/// The search for the fastest design within the actuator limits.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct SearchReport {
    /// The common factor the poles were multiplied by, in a sentence.
    pub speed_factor: String,
    /// The situation and the input that set the factor.
    pub limiting: String,
    /// Peak input over its limit at the factor found.
    pub peak_ratio: String,
    /// Per situation, its description and the slowest state's settling time.
    pub settling_times: Vec<String>,
    /// Whether the peak input grew steadily with the factor over the searched range.
    pub monotonic: bool,
    /// That, in a sentence (a warning when it did not hold, or when the range ran out).
    pub monotonicity: String,
    /// How many trial designs the search evaluated.
    pub evaluations: usize,
    /// What the search did not consider (for example a reference step it could not judge).
    pub notes: Vec<String>,
}

/// All the text the page shows for a design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// Always `"u = −K x"`.
    pub law: String,
    pub gain: GainTable,
    pub poles: Vec<PoleRow>,
    pub open_loop: String,
    /// The plant's zeros in a sentence (empty without outputs C).
    pub zeros: String,
    pub controllability: StructureReport,
    pub observability: Option<StructureReport>,
    /// The eigenvector condition number and what it means.
    pub robustness: String,
    /// Margins at the plant input, one line per input and one for the sensitivity peaks
    /// (empty where the loop is not yet modelled).
    pub margins: Vec<String>,
    /// Frequency table, pole sensitivity and the uncertainty cloud.
    pub robustness_detail: super::robustness::RobustnessDetail,
    /// Margins and pole sensitivity were skipped in this (quick) run: the page keeps showing
    /// the last ones instead of emptying those sections (which would move the page under a
    /// dragging pointer).
    pub robustness_deferred: bool,
    pub warnings: Vec<String>,
    /// The key verdicts beside the gain.
    pub verdicts: Vec<super::Verdict>,
    pub states: Vec<StateRow>,
    pub inputs: Vec<InputRow>,
    /// How the response was simulated.
    pub simulation: String,
    /// Observer, tracking, digital implementation and loop simulation (`None` for a plain gain).
    pub controller: Option<ControllerReport>,
    /// How the poles were chosen (`None` when they were listed and not searched).
    pub pole_choice: Option<PoleChoiceReport>,
}
