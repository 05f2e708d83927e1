//! The design page's form: the text of its fields in, a design (or per-field errors) out.
//!
//! [`evaluate_form`] is pure and never panics, whatever the text. It
//!
//! 1. reads every field on its own, so that every field with a problem gets its own
//!    message (the field keys are those of [`FormInput`]; the page's control for key
//!    `k` has the id `pw-k`, its error element `pw-k-error`);
//! 2. reports the live size of each matrix (`"3 × 3"`) and list (`"4 poles"`) so the
//!    page can show them while the user types;
//! 3. checks the plant with [`Plant::new`] and attributes its shape errors to the field
//!    that is wrong (B with the wrong number of rows is an error of `b`, not of `a`);
//! 4. when everything is valid, runs [`design::run`] and returns the
//!    [`DesignResult`], plus a [`Report`]: the texts and tables the page shows (gain
//!    with full precision, poles, controllability per mode, response figures); or, when
//!    the design is infeasible (e.g. an unstable mode no input reaches), the reason and an
//!    [`OpenLoopAnalysis`] so the page can still show where the trouble lies.
//!
//! # Fields
//! | key | required | text |
//! |---|---|---|
//! | `a` | yes | state matrix, one row per line (or a JSON list of rows) |
//! | `b` | yes | input matrix; one line of `n` numbers (`n > 1`) is read as a column |
//! | `state_names`, `input_names` | no | names separated by commas or new lines |
//! | `state_units`, `input_units` | no | units, likewise |
//! | `c`, `d` | no | output and feedthrough matrices (the measurements) |
//! | `output_names`, `output_units` | no | names and units of the outputs (rows of C) |
//! | `poles` | with `list` | desired closed-loop poles, e.g. `-2, -1±2j` |
//! | `pole_source` | no | `list` (blank), `pattern`, `specification` or `lqr`: how the poles are chosen |
//! | `pattern_family` | no | `bessel` (blank), `butterworth`, `itae` or `binomial` (with `pattern`) |
//! | `pattern_normalisation` | no | `unit_settling_time` (blank), `unit_group_delay` or `half_power_at_unit_frequency` (Bessel only) |
//! | `pattern_settling_time` | with `pattern` | seconds: the pattern is scaled so that its own step response settles then |
//! | `spec_overshoot` | with `specification` | largest overshoot in percent (`5` is 5 %), more than 0 and less than 100 |
//! | `spec_settling_time` | with `specification` | settling time in seconds |
//! | `spec_rise_time` | no | 10–90 % rise time in seconds (with `specification`) |
//! | `settling_band` | no | `2` (blank), `1` or `5`: the settling band in percent, for the whole design |
//! | `lqr_max_state` | with `lqr` | largest acceptable excursion per design state (plant, delay and integrator states) |
//! | `lqr_max_input` | no | largest acceptable input per input (blank: the actuator limits) |
//! | `search` | no | `true` for the fastest design within the actuator limits (a checkbox) |
//! | `limits` | no | one actuator limit per input (positive), `none` for an unlimited input |
//! | `initial_state` | no | one value per state (blank: 1 in the first state) |
//! | `duration` | no | simulated time in seconds (blank: chosen from the slowest pole) |
//! | `observer` | no | `none` (blank), `poles` or `speed_factor` |
//! | `observer_poles` | with `poles` | one observer pole per state (same plane as `poles`) |
//! | `observer_speed` | no | observer poles = factor × controller poles (blank: 4) |
//! | `observer_form` | no | `predictor` (blank) or `current` (digital only) |
//! | `tracking` | no | `none` (blank), `feedforward` or `integral` |
//! | `tracked_outputs` | no | output names or numbers (1 = first row of C); blank: all |
//! | `integral_poles` | no | one pole per integrator (blank: listed in `poles`) |
//! | `anti_windup` | no | `none` (blank), `clamp` or `back_calculation` |
//! | `anti_windup_time` | with `back_calculation` | tracking time constant in seconds |
//! | `sample_time` | no | the digital controller's sample time in seconds (blank: continuous) |
//! | `computation_delay` | no | `true` when the input is applied one sample late (a checkbox) |
//! | `delay_poles` | no | one z-plane pole per input for the delay states (blank: 0) |
//! | `plane` | no | `s` (blank) or `z`: the plane the poles are given in |
//! | `reference`, `reference_time` | no | reference step per tracked output (blank: 1) and its time |
//! | `disturbance`, `disturbance_time` | no | load step per input and its time |
//! | `noise_std`, `seed` | no | measurement-noise standard deviation per output, and the seed |
//!
//! Sub-fields of a section that is switched off (for example `observer_poles` while
//! `observer` is `none`) are not read at all: see [`FormInput::is_active`]. With every
//! version-2 field blank the design is exactly the version-1 one ([`design::run`]).
//!
//! # Choosing the poles
//! `pole_source` says where the controller's poles come from: the `poles` list, a prototype
//! pattern scaled to a settling time, a specification (overshoot and settling time, through
//! its region's dominant pair) or LQR with Bryson's rule. Patterns and specifications go
//! through [`design::choose_poles`], as the design file's `feedback.pattern` and
//! `feedback.spec` do, with as many poles as the design file uses: the plant states, plus
//! one per integrator when integral action is on and `integral_poles` is blank. With LQR the
//! integrator poles come from the LQR too (`integral_poles` is not read) and `lqr_max_state`
//! has one value per design state: the plant states, then one per input with a computation
//! delay, then one per integrator. The `search` box scales the poles (from any source but
//! LQR) by the largest common factor that keeps every input within its limit, in the free
//! response from the initial state and, with tracking, in the reference step; it works on
//! continuous designs only (as in the design file). The report's
//! [`PoleChoiceReport`] shows how the poles were chosen, with text to copy into `poles`.
//!
//! Every number shown with full precision uses the shortest text that reads back to the
//! same `f64` ([`format_complex`]); other figures use [`fmt_num`] (4 decimals).

use num_complex::Complex64;
use serde::{Deserialize, Serialize};

use crate::analysis::{controllability_report, AnalysisParams, ModalReport, ModeVerdict};
use crate::design::{self, fmt_num, ControllerSpec, DesignError, DesignRequest, DesignResult, ObserverPoles, Pair, Plane, StructureResult, TrackingResult};
use crate::linalg::eigen::try_eigenvalues;
use crate::plant::Plant;
use crate::plot::{Band, EventLine, LimitLine, PoleMapScene, RegionShape, Series, TimePlotScene};
use crate::poles::{check_conjugate_pairs, format_complex, format_pole_list, sort_for_display};

/// Largest plant the page designs (placement costs `O(n⁴)`; the page must stay responsive).
pub const MAX_STATES: usize = 50;

/// The usual observer speed factor range (common practice): 2–6 times the controller poles.
pub use crate::design::run::OBSERVER_SPEED_RULE;

/// Observer speed factor used when the field is blank.
pub use crate::design::check::DEFAULT_OBSERVER_SPEED;

pub mod adapter;
pub use adapter::{form_from_spec, form_key, spec_from_form, FORM_KEYS};

/// The form's fields, as typed. Every field may be omitted (it is then blank).
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FormInput {
    /// The design's title and notes (saved in the document; no effect on the numbers).
    pub title: String,
    pub notes: String,
    pub a: String,
    pub b: String,
    pub state_names: String,
    pub state_units: String,
    pub input_names: String,
    pub input_units: String,
    pub c: String,
    pub d: String,
    pub output_names: String,
    pub output_units: String,
    pub poles: String,
    pub pole_source: String,
    pub pattern_family: String,
    pub pattern_normalisation: String,
    pub pattern_settling_time: String,
    pub spec_overshoot: String,
    pub spec_settling_time: String,
    pub spec_rise_time: String,
    pub settling_band: String,
    pub lqr_max_state: String,
    pub lqr_max_input: String,
    pub search: String,
    pub limits: String,
    pub initial_state: String,
    pub duration: String,
    pub observer: String,
    pub observer_poles: String,
    pub observer_speed: String,
    pub observer_form: String,
    pub tracking: String,
    pub tracked_outputs: String,
    pub integral_poles: String,
    pub anti_windup: String,
    pub anti_windup_time: String,
    pub sample_time: String,
    pub computation_delay: String,
    pub delay_poles: String,
    pub plane: String,
    pub reference: String,
    pub reference_time: String,
    pub disturbance: String,
    pub disturbance_time: String,
    pub noise_std: String,
    pub seed: String,
}

/// The choice fields (a select or a checkbox on the page) and their allowed values
/// (the first is what a blank field means).
pub const CHOICES: [(&str, &[&str]); 11] = [
    ("pole_source", &["list", "pattern", "specification", "lqr"]),
    ("pattern_family", &["bessel", "butterworth", "itae", "binomial"]),
    ("pattern_normalisation", &["unit_settling_time", "unit_group_delay", "half_power_at_unit_frequency"]),
    ("settling_band", &["2", "1", "5"]),
    ("search", &["false", "true"]),
    ("observer", &["none", "poles", "speed_factor"]),
    ("observer_form", &["predictor", "current"]),
    ("tracking", &["none", "feedforward", "integral"]),
    ("anti_windup", &["none", "clamp", "back_calculation"]),
    ("computation_delay", &["false", "true"]),
    ("plane", &["s", "z"]),
];

impl FormInput {
    /// The field keys, in page order.
    pub const FIELDS: [&'static str; 46] = [
        "title",
        "notes",
        "a",
        "b",
        "state_names",
        "state_units",
        "input_names",
        "input_units",
        "c",
        "d",
        "output_names",
        "output_units",
        "poles",
        "pole_source",
        "pattern_family",
        "pattern_normalisation",
        "pattern_settling_time",
        "spec_overshoot",
        "spec_settling_time",
        "spec_rise_time",
        "settling_band",
        "lqr_max_state",
        "lqr_max_input",
        "search",
        "limits",
        "initial_state",
        "duration",
        "observer",
        "observer_poles",
        "observer_speed",
        "observer_form",
        "tracking",
        "tracked_outputs",
        "integral_poles",
        "anti_windup",
        "anti_windup_time",
        "sample_time",
        "computation_delay",
        "delay_poles",
        "plane",
        "reference",
        "reference_time",
        "disturbance",
        "disturbance_time",
        "noise_std",
        "seed",
    ];

    fn slot(&self, key: &str) -> Option<&String> {
        Some(match key {
            "title" => &self.title,
            "notes" => &self.notes,
            "a" => &self.a,
            "b" => &self.b,
            "state_names" => &self.state_names,
            "state_units" => &self.state_units,
            "input_names" => &self.input_names,
            "input_units" => &self.input_units,
            "c" => &self.c,
            "d" => &self.d,
            "output_names" => &self.output_names,
            "output_units" => &self.output_units,
            "poles" => &self.poles,
            "pole_source" => &self.pole_source,
            "pattern_family" => &self.pattern_family,
            "pattern_normalisation" => &self.pattern_normalisation,
            "pattern_settling_time" => &self.pattern_settling_time,
            "spec_overshoot" => &self.spec_overshoot,
            "spec_settling_time" => &self.spec_settling_time,
            "spec_rise_time" => &self.spec_rise_time,
            "settling_band" => &self.settling_band,
            "lqr_max_state" => &self.lqr_max_state,
            "lqr_max_input" => &self.lqr_max_input,
            "search" => &self.search,
            "limits" => &self.limits,
            "initial_state" => &self.initial_state,
            "duration" => &self.duration,
            "observer" => &self.observer,
            "observer_poles" => &self.observer_poles,
            "observer_speed" => &self.observer_speed,
            "observer_form" => &self.observer_form,
            "tracking" => &self.tracking,
            "tracked_outputs" => &self.tracked_outputs,
            "integral_poles" => &self.integral_poles,
            "anti_windup" => &self.anti_windup,
            "anti_windup_time" => &self.anti_windup_time,
            "sample_time" => &self.sample_time,
            "computation_delay" => &self.computation_delay,
            "delay_poles" => &self.delay_poles,
            "plane" => &self.plane,
            "reference" => &self.reference,
            "reference_time" => &self.reference_time,
            "disturbance" => &self.disturbance,
            "disturbance_time" => &self.disturbance_time,
            "noise_std" => &self.noise_std,
            "seed" => &self.seed,
            _ => return None,
        })
    }

    /// The text of field `key` (`None` for an unknown key).
    pub fn get(&self, key: &str) -> Option<&str> {
        self.slot(key).map(|s| s.as_str())
    }

    /// Sets field `key`; returns false for an unknown key.
    pub fn set(&mut self, key: &str, text: impl Into<String>) -> bool {
        let slot = match key {
            "title" => &mut self.title,
            "notes" => &mut self.notes,
            "a" => &mut self.a,
            "b" => &mut self.b,
            "state_names" => &mut self.state_names,
            "state_units" => &mut self.state_units,
            "input_names" => &mut self.input_names,
            "input_units" => &mut self.input_units,
            "c" => &mut self.c,
            "d" => &mut self.d,
            "output_names" => &mut self.output_names,
            "output_units" => &mut self.output_units,
            "poles" => &mut self.poles,
            "pole_source" => &mut self.pole_source,
            "pattern_family" => &mut self.pattern_family,
            "pattern_normalisation" => &mut self.pattern_normalisation,
            "pattern_settling_time" => &mut self.pattern_settling_time,
            "spec_overshoot" => &mut self.spec_overshoot,
            "spec_settling_time" => &mut self.spec_settling_time,
            "spec_rise_time" => &mut self.spec_rise_time,
            "settling_band" => &mut self.settling_band,
            "lqr_max_state" => &mut self.lqr_max_state,
            "lqr_max_input" => &mut self.lqr_max_input,
            "search" => &mut self.search,
            "limits" => &mut self.limits,
            "initial_state" => &mut self.initial_state,
            "duration" => &mut self.duration,
            "observer" => &mut self.observer,
            "observer_poles" => &mut self.observer_poles,
            "observer_speed" => &mut self.observer_speed,
            "observer_form" => &mut self.observer_form,
            "tracking" => &mut self.tracking,
            "tracked_outputs" => &mut self.tracked_outputs,
            "integral_poles" => &mut self.integral_poles,
            "anti_windup" => &mut self.anti_windup,
            "anti_windup_time" => &mut self.anti_windup_time,
            "sample_time" => &mut self.sample_time,
            "computation_delay" => &mut self.computation_delay,
            "delay_poles" => &mut self.delay_poles,
            "plane" => &mut self.plane,
            "reference" => &mut self.reference,
            "reference_time" => &mut self.reference_time,
            "disturbance" => &mut self.disturbance,
            "disturbance_time" => &mut self.disturbance_time,
            "noise_std" => &mut self.noise_std,
            "seed" => &mut self.seed,
            _ => return false,
        };
        *slot = text.into();
        true
    }

    /// The value of a choice field, normalised (blank → its first value; unknown text is
    /// returned trimmed and lower-cased so that the evaluation can name it in an error).
    pub fn choice(&self, key: &str) -> String {
        let text = self.get(key).unwrap_or("").trim().to_ascii_lowercase().replace(['-', ' '], "_");
        let allowed = CHOICES.iter().find(|(k, _)| *k == key).map(|(_, v)| *v).unwrap_or(&[]);
        match text.as_str() {
            "" => allowed.first().map_or(String::new(), |v| v.to_string()),
            // A checkbox may also arrive as on/off, yes/no or 1/0.
            "on" | "yes" | "1" if matches!(key, "computation_delay" | "search") => "true".into(),
            "off" | "no" | "0" if matches!(key, "computation_delay" | "search") => "false".into(),
            _ => text,
        }
    }

    /// Whether field `key` is read: the sub-fields of a section that is switched off are
    /// not (the page hides them). Unknown keys are not active.
    pub fn is_active(&self, key: &str) -> bool {
        let observer = self.choice("observer");
        let tracking = self.choice("tracking");
        let source = self.choice("pole_source");
        match key {
            "poles" => source == "list",
            "pattern_family" | "pattern_settling_time" => source == "pattern",
            "pattern_normalisation" => source == "pattern" && self.choice("pattern_family") == "bessel",
            "spec_overshoot" | "spec_settling_time" | "spec_rise_time" => source == "specification",
            "lqr_max_state" | "lqr_max_input" => source == "lqr",
            "observer_poles" => observer == "poles",
            "observer_speed" => observer == "speed_factor",
            "observer_form" => observer != "none",
            "tracked_outputs" | "reference" | "reference_time" => tracking != "none",
            // With LQR the integrator poles come from the LQR as well.
            "integral_poles" => tracking == "integral" && source != "lqr",
            "anti_windup" => tracking == "integral",
            "anti_windup_time" => tracking == "integral" && self.choice("anti_windup") == "back_calculation",
            "delay_poles" => self.choice("computation_delay") == "true",
            k => FormInput::FIELDS.contains(&k),
        }
    }
}

/// A problem with one field.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct FieldError {
    /// A key of [`FormInput::FIELDS`].
    pub field: &'static str,
    pub message: String,
}

/// Live size of each matrix field: `"3 × 3"`, or `None` when blank or unreadable.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct Dimensions {
    pub a: Option<String>,
    pub b: Option<String>,
    pub c: Option<String>,
    pub d: Option<String>,
}

/// Live size of each list field (`"4 names"`, `"3 poles"`), or `None` when blank or unreadable.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct ListSizes {
    pub state_names: Option<String>,
    pub state_units: Option<String>,
    pub input_names: Option<String>,
    pub input_units: Option<String>,
    pub output_names: Option<String>,
    pub output_units: Option<String>,
    pub poles: Option<String>,
    pub lqr_max_state: Option<String>,
    pub lqr_max_input: Option<String>,
    pub limits: Option<String>,
    pub initial_state: Option<String>,
    pub observer_poles: Option<String>,
    pub tracked_outputs: Option<String>,
    pub integral_poles: Option<String>,
    pub delay_poles: Option<String>,
    pub reference: Option<String>,
    pub disturbance: Option<String>,
    pub noise_std: Option<String>,
}

/// How the evaluation ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FormStatus {
    /// A design was computed: see [`FormOutcome::design`] and [`FormOutcome::report`].
    Designed,
    /// At least one field is wrong: see [`FormOutcome::errors`].
    Invalid,
    /// The input is valid but the design cannot be done: see [`FormOutcome::design_error`].
    Infeasible,
}

/// Everything the page needs after one evaluation.
#[derive(Debug, Clone, Serialize)]
pub struct FormOutcome {
    pub status: FormStatus,
    /// One entry per wrong field (at most one per field), in page order.
    pub errors: Vec<FieldError>,
    pub dimensions: Dimensions,
    pub sizes: ListSizes,
    /// The design, when [`FormStatus::Designed`].
    pub design: Option<DesignResult>,
    /// Why the design is not possible, when [`FormStatus::Infeasible`].
    pub design_error: Option<String>,
    /// Open-loop poles and controllability, when [`FormStatus::Infeasible`] (if they could be computed).
    pub analysis: Option<OpenLoopAnalysis>,
    /// Texts and tables for the page, when [`FormStatus::Designed`].
    pub report: Option<Report>,
}

impl FormOutcome {
    /// The message for `field`, if it has one.
    pub fn error_for(&self, field: &str) -> Option<&str> {
        self.errors.iter().find(|e| e.field == field).map(|e| e.message.as_str())
    }

    /// The live size shown beside field `key` (`"3 × 3"`, `"4 poles"`), if any.
    pub fn size_for(&self, key: &str) -> Option<&str> {
        let (d, s) = (&self.dimensions, &self.sizes);
        match key {
            "a" => d.a.as_deref(),
            "b" => d.b.as_deref(),
            "c" => d.c.as_deref(),
            "d" => d.d.as_deref(),
            "state_names" => s.state_names.as_deref(),
            "state_units" => s.state_units.as_deref(),
            "input_names" => s.input_names.as_deref(),
            "input_units" => s.input_units.as_deref(),
            "output_names" => s.output_names.as_deref(),
            "output_units" => s.output_units.as_deref(),
            "poles" => s.poles.as_deref(),
            "lqr_max_state" => s.lqr_max_state.as_deref(),
            "lqr_max_input" => s.lqr_max_input.as_deref(),
            "limits" => s.limits.as_deref(),
            "initial_state" => s.initial_state.as_deref(),
            "observer_poles" => s.observer_poles.as_deref(),
            "tracked_outputs" => s.tracked_outputs.as_deref(),
            "integral_poles" => s.integral_poles.as_deref(),
            "delay_poles" => s.delay_poles.as_deref(),
            "reference" => s.reference.as_deref(),
            "disturbance" => s.disturbance.as_deref(),
            "noise_std" => s.noise_std.as_deref(),
            _ => None,
        }
    }
}

/// What can be said about a plant whose design is infeasible.
#[derive(Debug, Clone, Serialize)]
pub struct OpenLoopAnalysis {
    pub open_loop_poles: Vec<Pair>,
    pub controllability: StructureReport,
}

// ---------------------------------------------------------------------------------------------
// Presentation.

/// A labelled matrix (a gain, Φ, Γ, …) as a table and as copyable text.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct MatrixTable {
    /// Its symbol, shown in the table's corner cell (`K`, `L`, `Φ`, …).
    pub symbol: String,
    /// What it is, in one sentence (the table's caption).
    pub caption: String,
    pub row_labels: Vec<String>,
    pub column_labels: Vec<String>,
    /// Entries with full precision (shortest text that reads back exactly).
    pub entries: Vec<Vec<String>>,
    /// Tab-separated text with the labels, for copying into a spreadsheet or a file.
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

/// The parts beyond a plain gain (design file version 2), when any was asked for.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ControllerReport {
    /// The control law, one equation per line.
    pub law: Vec<String>,
    /// Continuous or digital, and how the plant was converted.
    pub domain: String,
    /// The sample-rate advice sentence (digital designs).
    pub sample_rate: Option<String>,
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
    pub controllability: StructureReport,
    pub observability: Option<StructureReport>,
    /// The eigenvector condition number and what it means.
    pub robustness: String,
    pub warnings: Vec<String>,
    pub states: Vec<StateRow>,
    pub inputs: Vec<InputRow>,
    /// How the response was simulated.
    pub simulation: String,
    /// Observer, tracking, digital implementation and loop simulation (`None` for a plain gain).
    pub controller: Option<ControllerReport>,
    /// How the poles were chosen (`None` when they were listed and not searched).
    pub pole_choice: Option<PoleChoiceReport>,
}

// ---------------------------------------------------------------------------------------------
// Evaluating the form: the adapter, the one rulebook, the run.

fn plural(count: usize, one: &str, many: &str) -> String {
    format!("{count} {}", if count == 1 { one } else { many })
}

/// Most samples a digital simulation may take (the rule is the design layer's, at both doors).
pub use crate::design::check::MAX_LOOP_SAMPLES;

impl ListSizes {
    /// Sets the live size shown beside field `key`; false for a field without one.
    fn set(&mut self, key: &str, text: String) -> bool {
        let slot = match key {
            "state_names" => &mut self.state_names,
            "state_units" => &mut self.state_units,
            "input_names" => &mut self.input_names,
            "input_units" => &mut self.input_units,
            "output_names" => &mut self.output_names,
            "output_units" => &mut self.output_units,
            "poles" => &mut self.poles,
            "lqr_max_state" => &mut self.lqr_max_state,
            "lqr_max_input" => &mut self.lqr_max_input,
            "limits" => &mut self.limits,
            "initial_state" => &mut self.initial_state,
            "observer_poles" => &mut self.observer_poles,
            "tracked_outputs" => &mut self.tracked_outputs,
            "integral_poles" => &mut self.integral_poles,
            "delay_poles" => &mut self.delay_poles,
            "reference" => &mut self.reference,
            "disturbance" => &mut self.disturbance,
            "noise_std" => &mut self.noise_std,
            _ => return false,
        };
        *slot = Some(text);
        true
    }
}

impl Dimensions {
    fn set(&mut self, key: &str, text: String) -> bool {
        let slot = match key {
            "a" => &mut self.a,
            "b" => &mut self.b,
            "c" => &mut self.c,
            "d" => &mut self.d,
            _ => return false,
        };
        *slot = Some(text);
        true
    }
}

/// Page capacity (not a design rule: the CLI designs larger plants): at most [`MAX_STATES`].
fn page_capacity(form: &FormInput) -> Option<FieldError> {
    let rows = crate::parse::parse_matrix(&form.a).ok()?.nrows();
    (rows > MAX_STATES).then(|| FieldError { field: "a", message: format!("A has {rows} states; this page designs plants of up to {MAX_STATES} states (the command-line tool designs larger ones)") })
}

/// An input error as a field error of the form (errors of paths the page does not show go to
/// the nearest section's control).
fn field_error(e: &crate::design::InputError) -> FieldError {
    FieldError { field: adapter::form_key(e.field).unwrap_or("a"), message: e.message.clone() }
}

/// Evaluates the form: see the [module documentation](self).
pub fn evaluate_form(form: &FormInput) -> FormOutcome {
    let mut outcome = FormOutcome {
        status: FormStatus::Invalid,
        errors: Vec::new(),
        dimensions: Dimensions::default(),
        sizes: ListSizes::default(),
        design: None,
        design_error: None,
        analysis: None,
        report: None,
    };
    let spec = match adapter::spec_from_form(form) {
        Ok(spec) => spec,
        Err(errors) => {
            outcome.errors = errors;
            return outcome;
        }
    };
    let checked = crate::design::check(&spec);
    for (path, text) in &checked.sizes {
        if let Some(key) = adapter::form_key(*path) {
            let _ = outcome.dimensions.set(key, text.clone()) || outcome.sizes.set(key, text.clone());
        }
    }
    let mut errors: Vec<FieldError> = Vec::new();
    let push = |errors: &mut Vec<FieldError>, e: FieldError| {
        if !errors.iter().any(|x| x.field == e.field) {
            errors.push(e);
        }
    };
    if let Some(e) = page_capacity(form) {
        push(&mut errors, e);
    }
    for e in &checked.errors {
        push(&mut errors, field_error(e));
    }
    if let (Some(design), true) = (&checked.design, errors.is_empty()) {
        match crate::design::run_checked(design) {
            Ok(result) => {
                outcome.status = FormStatus::Designed;
                let mut context = ReportContext::from_request(&design.request, &design.controller);
                context.lqr_inputs_from_limits = design.lqr_inputs_from_limits;
                context.search_notes = design.search_notes.clone();
                outcome.report = Some(report_with(&result, &context));
                outcome.design = Some(result);
            }
            Err(DesignError::Input(e)) => push(&mut errors, field_error(&e)),
            Err(DesignError::Infeasible { message }) => {
                outcome.status = FormStatus::Infeasible;
                let situations = ReportContext::from_request(&design.request, &design.controller).search_situations;
                let searched = if situations.is_empty() {
                    String::new()
                } else {
                    format!(" (The search's situations: {}.)", situations.iter().enumerate().map(|(i, s)| format!("{} = {s}", i + 1)).collect::<Vec<_>>().join("; "))
                };
                outcome.design_error = Some(format!("The design is not possible: {message}.{searched}"));
                outcome.analysis = open_loop_analysis(&design.request.plant);
            }
        }
    }
    // Errors in page order.
    errors.sort_by_key(|e| FormInput::FIELDS.iter().position(|f| *f == e.field).unwrap_or(usize::MAX));
    outcome.errors = errors;
    if !outcome.errors.is_empty() {
        outcome.status = FormStatus::Invalid;
    }
    outcome
}

pub fn open_loop_analysis(plant: &Plant) -> Option<OpenLoopAnalysis> {
    let mut poles = try_eigenvalues(plant.a()).ok()?;
    sort_for_display(&mut poles);
    let report = controllability_report(plant.a(), plant.b(), AnalysisParams::default()).ok()?;
    Some(OpenLoopAnalysis {
        open_loop_poles: poles.iter().map(|z| [z.re, z.im]).collect(),
        controllability: modal_report_text(&report, Kind::Controllability),
    })
}

// ---------------------------------------------------------------------------------------------
// Texts.

fn c64(p: &Pair) -> Complex64 {
    Complex64::new(p[0], p[1])
}

/// Full-precision real number (shortest text that reads back exactly).
pub fn full(x: f64) -> String {
    format_complex(Complex64::new(x, 0.0))
}

/// `name (unit)`, or `name` without a unit.
pub fn label(name: &str, unit: Option<&String>) -> String {
    match unit.map(|u| u.trim()).filter(|u| !u.is_empty()) {
        Some(u) => format!("{name} ({u})"),
        None => name.to_string(),
    }
}

/// A concise pole: 4 decimals (or scientific) per part, typographic minus signs,
/// e.g. `−12 + 9j`.
pub fn short_pole(z: Complex64) -> String {
    let minus = |s: String| s.replace('-', "\u{2212}");
    if z.im == 0.0 {
        return minus(fmt_num(z.re));
    }
    let sign = if z.im < 0.0 { "\u{2212}" } else { "+" };
    if z.re == 0.0 {
        return format!("{}{}j", if z.im < 0.0 { "\u{2212}" } else { "" }, fmt_num(z.im.abs()));
    }
    format!("{} {sign} {}j", minus(fmt_num(z.re)), fmt_num(z.im.abs()))
}

/// Damping ratio and natural frequency of a complex pole, or the time constant of a real one.
pub fn pole_character(z: Complex64) -> String {
    if !(z.re.is_finite() && z.im.is_finite()) {
        return String::new();
    }
    if z.im != 0.0 {
        let w = z.norm();
        let zeta = -z.re / w;
        format!("damping ratio {}, natural frequency {} rad/s", fmt_num(zeta), fmt_num(w))
    } else if z.re < 0.0 {
        format!("time constant {} s", fmt_num(-1.0 / z.re))
    } else if z.re == 0.0 {
        "integrator (does not decay)".into()
    } else {
        format!("unstable: grows by e every {} s", fmt_num(1.0 / z.re))
    }
}

/// A labelled matrix with full-precision entries and its copyable text (`heading` is the
/// text's first line).
pub fn matrix_table(symbol: &str, caption: &str, heading: &str, row_labels: Vec<String>, column_labels: Vec<String>, rows: &[Vec<f64>]) -> MatrixTable {
    let entries: Vec<Vec<String>> = rows.iter().map(|row| row.iter().map(|v| full(*v)).collect()).collect();
    let clean = |s: &str| s.replace(['\t', '\n', '\r'], " ");
    let mut text = format!("{heading}\n{symbol}");
    for l in &column_labels {
        text.push('\t');
        text.push_str(&clean(l));
    }
    text.push('\n');
    for (i, row) in entries.iter().enumerate() {
        text.push_str(&clean(row_labels.get(i).map_or("", |s| s.as_str())));
        for v in row {
            text.push('\t');
            text.push_str(v);
        }
        text.push('\n');
    }
    MatrixTable { symbol: symbol.into(), caption: caption.into(), row_labels, column_labels, entries, text }
}

fn state_labels(result: &DesignResult) -> Vec<String> {
    let p = &result.plant;
    p.state_names.iter().enumerate().map(|(j, n)| label(n, p.state_units.get(j))).collect()
}

fn input_labels(result: &DesignResult) -> Vec<String> {
    let p = &result.plant;
    p.input_names.iter().enumerate().map(|(i, n)| label(n, p.input_units.get(i))).collect()
}

fn output_label(result: &DesignResult, units: &[String], name: &str) -> String {
    let unit = result.plant.output_names.iter().position(|n| n == name).and_then(|i| units.get(i));
    label(name, unit)
}

/// `s = ln z / T`, the continuous-time equivalent of a z-plane pole (`None` for `z = 0`,
/// a non-finite `z` or a sample time that is not positive).
pub fn z_to_s(z: Complex64, t: f64) -> Option<Complex64> {
    crate::plane::s_from_z(z, t)
}

/// The character of a z-plane pole, read through its equivalent `s = ln z / T`.
pub fn z_pole_character(z: Complex64, t: f64) -> String {
    match z_to_s(z, t) {
        Some(s) => {
            let c = pole_character(s);
            if c.is_empty() {
                format!("|z| = {}, s = {}", fmt_num(z.norm()), short_pole(s))
            } else {
                format!("|z| = {}, s = {}: {c}", fmt_num(z.norm()), short_pole(s))
            }
        }
        None if z.norm() == 0.0 => "at z = 0: gone after one sample (s = −∞)".into(),
        None => String::new(),
    }
}

/// The character of a pole of `result`: s-plane, or z-plane read through `s = ln z / T`.
/// A pole's placement error for the pole tables, on the same rule as the design's
/// `max_pole_error` ([`crate::place::pole_error_floor`]): relative in the s-plane (absolute
/// for a pole requested at 0); in the z-plane relative to `max(|z|, 1)`, i.e. the distance
/// itself for every pole inside the unit circle (a delay or deadbeat pole at `z = 0` included).
fn pole_error_text(result: &DesignResult, requested: Complex64, achieved: Complex64) -> String {
    let d = (achieved - requested).norm();
    if result.domain == "discrete" {
        fmt_num(d / requested.norm().max(1.0))
    } else if requested.norm() > 0.0 {
        fmt_num(d / requested.norm())
    } else {
        format!("{} (absolute)", fmt_num(d))
    }
}

fn character_in(result: &DesignResult, z: Complex64) -> String {
    match (result.domain, result.sample_time) {
        ("discrete", Some(t)) => z_pole_character(z, t),
        _ => pole_character(z),
    }
}

/// The gain as a labelled table and tab-separated text, full precision.
pub fn gain_table(result: &DesignResult) -> GainTable {
    matrix_table(
        "K",
        "Gain K: one row per input, one column per state",
        "u = -K x; K has one row per input and one column per state",
        input_labels(result),
        state_labels(result),
        &result.feedback.gain,
    )
}

/// Pairs each target with the nearest unused candidate, closest pairs first (as the
/// engine's pole-error measure does). Returns, per target, the index of its candidate.
fn match_nearest(targets: &[Complex64], candidates: &[Complex64]) -> Vec<Option<usize>> {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::with_capacity(targets.len() * candidates.len());
    for (i, t) in targets.iter().enumerate() {
        for (j, z) in candidates.iter().enumerate() {
            pairs.push(((t - z).norm(), i, j));
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut out = vec![None; targets.len()];
    let mut used = vec![false; candidates.len()];
    for (_, i, j) in pairs {
        let free_target = out.get(i).is_some_and(|o| o.is_none());
        let free_candidate = used.get(j).is_some_and(|u| !u);
        if free_target && free_candidate {
            if let Some(o) = out.get_mut(i) {
                *o = Some(j);
            }
            if let Some(u) = used.get_mut(j) {
                *u = true;
            }
        }
    }
    out
}

/// Removes one copy of each of `remove` from `from` (exact match).
fn without(from: &[Complex64], remove: &[Complex64]) -> Vec<Complex64> {
    let mut rest = from.to_vec();
    for z in remove {
        if let Some(i) = rest.iter().position(|r| r == z) {
            rest.remove(i);
        }
    }
    rest
}

/// Requested versus achieved poles, one row per closed-loop pole.
pub fn pole_rows(result: &DesignResult) -> Vec<PoleRow> {
    let f = &result.feedback;
    let mut requested: Vec<Complex64> = f.requested_poles.iter().map(c64).collect();
    sort_for_display(&mut requested);
    let not_assigned: Vec<Complex64> = f.not_assigned.iter().map(c64).collect();
    let fixed: Vec<Complex64> = f.fixed_modes.iter().map(c64).collect();
    let achieved: Vec<Complex64> = f.achieved_poles.iter().map(c64).collect();
    let assigned = without(&requested, &not_assigned);
    // Targets: the assigned poles, then the fixed modes (they stay where they are).
    let targets: Vec<Complex64> = assigned.iter().chain(fixed.iter()).copied().collect();
    let matched = match_nearest(&targets, &achieved);
    let mut rows = Vec::new();
    for (i, t) in targets.iter().enumerate() {
        let z = matched.get(i).copied().flatten().and_then(|j| achieved.get(j)).copied();
        let is_fixed = i >= assigned.len();
        let error = z.map(|z| pole_error_text(result, *t, z));
        rows.push(PoleRow {
            requested: if is_fixed { String::new() } else { format_complex(*t) },
            achieved: z.map(format_complex).unwrap_or_default(),
            error: error.unwrap_or_default(),
            character: z.map(|z| character_in(result, z)).unwrap_or_default(),
            note: if is_fixed { "uncontrollable mode: feedback cannot move it; it stays where it is".into() } else { String::new() },
        });
    }
    for z in &not_assigned {
        rows.push(PoleRow {
            requested: format_complex(*z),
            achieved: String::new(),
            error: String::new(),
            character: String::new(),
            note: "not assigned: an uncontrollable mode takes its place".into(),
        });
    }
    rows
}

#[derive(Clone, Copy)]
enum Kind {
    Controllability,
    Observability,
}

struct ModeLike {
    pole: Complex64,
    margin: f64,
    verdict: ModeVerdict,
}

/// What [`structure_text`] describes: the analysis results in one place.
struct Structure<'a> {
    /// z-plane modes: stable means |z| < 1.
    discrete: bool,
    rank: usize,
    states: usize,
    hidden: &'a [Complex64],
    modes: &'a [ModeLike],
    tolerance: f64,
    relative: f64,
    consistent: bool,
}

fn structure_text(kind: Kind, st: Structure<'_>) -> StructureReport {
    let Structure { discrete, rank, states, hidden, modes, tolerance, relative, consistent } = st;
    let stable = |z: &Complex64| if discrete { z.norm() < 1.0 } else { z.re < 0.0 };
    let (word, weak, matrix, can) = match kind {
        Kind::Controllability => ("controllable", "weakly controllable", "[A − λI, B]", "feedback"),
        Kind::Observability => ("observable", "weakly observable", "[A − λI; C]", "the outputs"),
    };
    let stable_hidden = hidden.iter().all(stable);
    let mut summary = if rank == states {
        match kind {
            Kind::Controllability => format!("Controllable: every one of the {states} modes can be moved by feedback."),
            Kind::Observability => format!("Observable: every one of the {states} modes is seen in the outputs."),
        }
    } else {
        let list = format_pole_list(hidden);
        let count = plural(states - rank, "mode", "modes");
        match (kind, stable_hidden) {
            (Kind::Controllability, true) => format!(
                "Not controllable, but stabilisable: {count} ({list}) cannot be moved by feedback; they are stable and stay where they are. Controllable part: {rank} of {states} states."
            ),
            (Kind::Controllability, false) => format!(
                "Not stabilisable: {count} ({list}) cannot be moved by feedback and not all of them are stable, so no state feedback can stabilise this plant. Controllable part: {rank} of {states} states."
            ),
            (Kind::Observability, true) => format!("Not observable, but detectable: {count} ({list}) are not seen in the outputs; they are stable. Observable part: {rank} of {states} states."),
            (Kind::Observability, false) => format!("Not detectable: {count} ({list}) are not seen in the outputs and not all of them are stable. Observable part: {rank} of {states} states."),
        }
    };
    if !consistent {
        summary.push_str(" The two tests used (staircase and per-mode margins) disagree: the plant is on the borderline; treat these verdicts with care.");
    }
    let norm = match kind {
        Kind::Controllability => "‖[A B]‖₂",
        Kind::Observability => "‖[A; C]‖₂",
    };
    let tolerance = format!(
        "Tolerance used: singular values at or below {} ({} × {norm}) count as zero. A mode's margin is the smallest singular value of {matrix} divided by {norm}: 0 means {can} cannot reach it; margins below {} are called weak.",
        fmt_num(tolerance),
        fmt_num(relative),
        fmt_num(AnalysisParams::default().weak_margin)
    );
    let modes = modes
        .iter()
        .map(|m| ModeRow {
            pole: format_complex(m.pole),
            margin: fmt_num(m.margin),
            verdict: match m.verdict {
                ModeVerdict::Yes => word.to_string(),
                ModeVerdict::Weak => format!("{weak}: moving it needs large inputs"),
                ModeVerdict::No if stable(&m.pole) => format!("not {word}; stable, so it stays where it is"),
                ModeVerdict::No => format!("not {word} and not stable"),
            },
        })
        .collect();
    StructureReport { summary, tolerance, modes }
}

fn modal_report_text(r: &ModalReport, kind: Kind) -> StructureReport {
    let modes: Vec<ModeLike> = r.modes.iter().map(|m| ModeLike { pole: m.pole, margin: m.margin, verdict: m.verdict }).collect();
    structure_text(
        kind,
        Structure { discrete: false, rank: r.rank, states: r.states, hidden: &r.hidden_modes, modes: &modes, tolerance: r.tolerance, relative: r.relative_tolerance, consistent: r.consistent },
    )
}

fn structure_result_text(r: &StructureResult, kind: Kind, discrete: bool) -> StructureReport {
    let modes: Vec<ModeLike> = r
        .modes
        .iter()
        .map(|m| ModeLike {
            pole: c64(&m.pole),
            margin: m.margin,
            verdict: match m.verdict {
                "yes" => ModeVerdict::Yes,
                "weak" => ModeVerdict::Weak,
                _ => ModeVerdict::No,
            },
        })
        .collect();
    let hidden: Vec<Complex64> = r.uncontrollable_modes.iter().map(c64).collect();
    structure_text(
        kind,
        Structure { discrete, rank: r.rank, states: r.states, hidden: &hidden, modes: &modes, tolerance: r.tolerance, relative: r.relative_tolerance, consistent: r.consistent },
    )
}

fn robustness_text(result: &DesignResult) -> String {
    let f = &result.feedback;
    // The verdict is judged in balanced coordinates (independent of the state units), as the
    // fragile-design warning is; the condition as the states are scaled is shown beside it.
    let k = f.balanced_eigenvector_condition;
    let raw = f.eigenvector_condition;
    let fmt_cond = |k: f64| if k.is_finite() { fmt_num(k) } else { "infinite".into() };
    let cond = fmt_cond(k);
    let verdict = if !k.is_finite() {
        "the closed-loop eigenvectors are dependent: the placement is extremely sensitive to model errors"
    } else if k <= 100.0 {
        "well conditioned: the placed poles are insensitive to small errors in the model or the gain"
    } else if k <= 1e4 {
        "moderate: small model errors move the poles somewhat; check the design against the real plant's uncertainty"
    } else {
        "fragile: small model errors can move the poles far from where they were placed"
    };
    format!(
        "Eigenvector condition number κ₂ = {cond} in balanced coordinates ({} as the states are scaled; 1 is ideal): {verdict}. Gain size ‖K‖₂ = {}.",
        fmt_cond(raw),
        fmt_num(f.gain_norm)
    )
}

fn vector_text(v: &[f64]) -> String {
    format!("[{}]", v.iter().map(|x| full(*x)).collect::<Vec<_>>().join(", "))
}

fn response_rows(result: &DesignResult) -> (Vec<StateRow>, Vec<InputRow>, String) {
    let p = &result.plant;
    let s = &result.simulation;
    let unit = |units: &Vec<String>, i: usize| units.get(i).map(|u| u.trim().to_string()).filter(|u| !u.is_empty());
    let with_unit = |v: String, u: &Option<String>| match u {
        Some(u) => format!("{v} {u}"),
        None => v,
    };
    let states = p
        .state_names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let u = unit(&p.state_units, i);
            StateRow {
                name: label(name, u.as_ref()),
                initial: s.initial_state.get(i).map(|v| with_unit(fmt_num(*v), &u)).unwrap_or_default(),
                peak: s.peak_state.get(i).map(|v| with_unit(fmt_num(*v), &u)).unwrap_or_default(),
                settling: match s.settling_time.get(i).copied().flatten() {
                    Some(t) => format!("{} s", fmt_num(t)),
                    None if s.diverged => "diverged".into(),
                    None => format!("not settled within {} s", fmt_num(s.duration)),
                },
                overshoot: match s.overshoot.get(i).copied().flatten() {
                    Some(o) => format!("{} %", fmt_num(o * 100.0)),
                    None => "— (starts at 0)".into(),
                },
            }
        })
        .collect();
    let inputs = p
        .input_names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let u = unit(&p.input_units, i);
            let peak = s.peak_input.get(i).copied().unwrap_or(0.0);
            let limit = s.input_limit.get(i).copied().flatten();
            let verdict = match limit {
                None => "no limit given".to_string(),
                Some(l) if peak <= l => format!("within the limit (peak is {} % of it)", fmt_num(100.0 * peak / l)),
                Some(l) => {
                    let from = s.first_saturation.get(i).copied().flatten().map_or_else(|| "?".to_string(), fmt_num);
                    let total = s.time_saturated.get(i).copied().unwrap_or(0.0);
                    format!("over the limit by {} %: saturated from t = {from} s, {} s in all", fmt_num(100.0 * (peak / l - 1.0)), fmt_num(total))
                }
            };
            InputRow {
                name: label(name, u.as_ref()),
                peak: with_unit(fmt_num(peak), &u),
                limit: limit.map_or_else(|| "none".to_string(), |l| with_unit(fmt_num(l), &u)),
                verdict,
            }
        })
        .collect();
    let start = if s.initial_state_chosen {
        format!("x₀ = {} (none given: 1 in the first state)", vector_text(&s.initial_state))
    } else {
        format!("x₀ = {}", vector_text(&s.initial_state))
    };
    let horizon = if s.duration_chosen {
        format!("{} s (chosen from the slowest closed-loop pole)", fmt_num(s.duration))
    } else {
        format!("{} s", fmt_num(s.duration))
    };
    let limits = if s.input_limit.iter().any(|l| l.is_some()) { "; inputs clipped at their limits" } else { "" };
    let summary = if result.domain == "discrete" {
        format!(
            "Free response of the sampled state feedback u[k] = −K x[k] (the state measured exactly, no reference) from {start} over {horizon}, sample time {} s{limits}. Settling: within ±{} % of each state's peak deviation from zero, for good.",
            fmt_num(s.step),
            fmt_num(s.band * 100.0)
        )
    } else {
        format!(
            "Free response of the closed loop u = −K x from {start} over {horizon}, time step {} s{limits}. Settling: within ±{} % of each state's peak deviation from zero, for good.",
            fmt_num(s.step),
            fmt_num(s.band * 100.0)
        )
    };
    (states, inputs, summary)
}

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
                            crate::search::Situation::InitialState(x) => format!("the free response from x₀ = {}", vector_text(x)),
                            crate::search::Situation::ReferenceStep(r) => format!("the reference step r = {} (followed with feedforward)", vector_text(r)),
                        })
                        .collect()
                })
                .unwrap_or_default(),
            search_notes: Vec::new(),
        }
    }
}

/// Everything the page shows for a design (without the form's context).
pub fn report(result: &DesignResult) -> Report {
    report_with(result, &ReportContext::default())
}

/// Everything the page shows for a design.
pub fn report_with(result: &DesignResult, context: &ReportContext) -> Report {
    let mut open: Vec<Complex64> = result.open_loop_poles.iter().map(c64).collect();
    sort_for_display(&mut open);
    let (states, inputs, simulation) = response_rows(result);
    let discrete = result.domain == "discrete";
    let warnings: Vec<String> = result.warnings.iter().map(|w| w.message.clone()).collect();
    let controller = controller_report(result, context);
    let pole_choice = pole_choice_report(result, context);
    Report {
        law: "u = −K x".into(),
        gain: gain_table(result),
        poles: pole_rows(result),
        open_loop: format_pole_list(&open),
        controllability: structure_result_text(&result.controllability, Kind::Controllability, discrete),
        observability: result.observability.as_ref().map(|o| structure_result_text(o, Kind::Observability, discrete)),
        robustness: robustness_text(result),
        warnings,
        states,
        inputs,
        simulation,
        controller,
        pole_choice,
    }
}

/// `value unit`, or the value alone.
fn with_unit(v: String, unit: Option<&String>) -> String {
    match unit.map(|u| u.trim()).filter(|u| !u.is_empty()) {
        Some(u) => format!("{v} {u}"),
        None => v,
    }
}

/// Requested versus achieved poles of any placement (no fixed modes), matched nearest first.
fn matched_pole_rows(result: &DesignResult, requested: &[Pair], achieved: &[Pair]) -> Vec<PoleRow> {
    let mut req: Vec<Complex64> = requested.iter().map(c64).collect();
    sort_for_display(&mut req);
    let ach: Vec<Complex64> = achieved.iter().map(c64).collect();
    let matched = match_nearest(&req, &ach);
    req.iter()
        .enumerate()
        .map(|(i, t)| {
            let z = matched.get(i).copied().flatten().and_then(|j| ach.get(j)).copied();
            PoleRow {
                requested: format_complex(*t),
                achieved: z.map(format_complex).unwrap_or_default(),
                error: z.map(|z| pole_error_text(result, *t, z)).unwrap_or_default(),
                character: z.map(|z| character_in(result, z)).unwrap_or_default(),
                note: String::new(),
            }
        })
        .collect()
}

/// The control law, one equation per line.
fn law_lines(result: &DesignResult) -> Vec<String> {
    let digital = result.sample_time.is_some();
    let delay = result.feedback.delay_gain.is_some();
    let observer = result.observer.as_ref();
    let current = observer.is_some_and(|o| o.form == "current");
    let x = match (observer.is_some(), current, digital) {
        (false, _, true) => "x[k]",
        (false, _, false) => "x",
        (true, true, _) => "x̄[k]",
        (true, false, true) => "x̂[k]",
        (true, false, false) => "x̂",
    };
    let k = if digital { "[k]" } else { "" };
    let mut lines = Vec::new();
    let delay_term = |ff: bool| if delay { if ff { " − K_u (u[k−1] − N_u r)" } else { " − K_u u[k−1]" } } else { "" };
    match &result.tracking {
        Some(TrackingResult::Feedforward { .. }) => lines.push(format!("u{k} = N_u r − K ({x} − N_x r){}", delay_term(true))),
        Some(TrackingResult::Integral { .. }) => lines.push(format!("u{k} = −K {x} − K_i z{k}{}", delay_term(false))),
        None => lines.push(format!("u{k} = −K {x}{}", delay_term(false))),
    }
    let applied = if delay { "u[k−1]" } else { "u[k]" };
    if let Some(o) = observer {
        if !digital {
            lines.push("x̂′ = A x̂ + B u + L (y − C x̂ − D u)".into());
        } else if o.form == "current" {
            lines.push("x̄[k] = x̂[k] + L_c (y[k] − C x̂[k] − D u_held), the estimate corrected with the measurement of the same sample".into());
            lines.push(format!("x̂[k+1] = Φ x̄[k] + Γ {applied}"));
        } else {
            lines.push(format!("x̂[k+1] = Φ x̂[k] + Γ {applied} + L (y[k] − C x̂[k] − D u_held)"));
        }
    }
    if observer.is_some() && digital {
        lines.push("u_held: the input being applied when y[k] is measured".into());
    }
    if let Some(TrackingResult::Integral { anti_windup, time_constant, .. }) = &result.tracking {
        lines.push(if digital { "z[k+1] = z[k] + T (r − y[k]) for each tracked output".into() } else { "z′ = r − y for each tracked output".into() });
        match (*anti_windup, time_constant) {
            ("clamp", _) => lines.push("anti-windup: the integrators hold while any input is clipped (conditional integration)".into()),
            ("back_calculation", Some(tt)) => lines.push(format!("anti-windup: back-calculation, the integrators also driven by −K_i⁺ (u_applied − u_commanded) / T_t with T_t = {} s", fmt_num(*tt))),
            _ => lines.push("no anti-windup: the integrators keep integrating while an input is clipped".into()),
        }
    }
    if result.simulation.input_limit.iter().any(|l| l.is_some()) {
        lines.push("applied input: the command clipped to each input's limit".into());
    }
    lines
}

fn controller_report(result: &DesignResult, context: &ReportContext) -> Option<ControllerReport> {
    let v2 = result.sample_time.is_some() || result.observer.is_some() || result.tracking.is_some() || result.closed_loop.is_some();
    if !v2 {
        return None;
    }
    let p = &result.plant;
    let inputs = input_labels(result);
    let states = state_labels(result);
    let outputs: Vec<String> = p.output_names.iter().enumerate().map(|(i, n)| label(n, context.output_units.get(i))).collect();

    let domain = domain_text(result, context);
    let delay_gain = result.feedback.delay_gain.as_ref().map(|ku| {
        matrix_table(
            "K_u",
            "K_u: gain on the previous input (computation delay): one row per input, one column per previous input",
            "u[k] = -K x[k] - K_u u[k-1]; K_u has one row per input and one column per previous input",
            inputs.clone(),
            p.input_names.iter().map(|n| format!("previous {n}")).collect(),
            ku,
        )
    });

    let (tracking, tracking_note) = match &result.tracking {
        Some(TrackingResult::Feedforward { outputs: names, nx, nu }) => {
            let cols: Vec<String> = names.iter().map(|n| output_label(result, &context.output_units, n)).collect();
            (
                vec![
                    matrix_table("N_x", "N_x: the steady state per unit of reference (one row per state, one column per tracked output)", "N_x: steady state per unit reference; one row per state, one column per tracked output", states.clone(), cols.clone(), nx),
                    matrix_table("N_u", "N_u: the steady input per unit of reference (one row per input, one column per tracked output)", "N_u: steady input per unit reference; one row per input, one column per tracked output", inputs.clone(), cols, nu),
                ],
                Some(format!("Feedforward from the steady-state equations [A B; C D] [N_x; N_u] = [0; I] (digital: [Φ − I, Γ; C, D]): the reference sets the target state N_x r and the input N_u r; K acts on the difference. Tracked: {}.", names.join(", "))),
            )
        }
        Some(TrackingResult::Integral { outputs: names, integral_gain, .. }) => {
            let cols: Vec<String> = names.iter().map(|n| format!("∫ error of {}", output_label(result, &context.output_units, n))).collect();
            (
                vec![matrix_table("K_i", "K_i: integral gain, one row per input, one column per integrator (tracked output)", "u = -K x - K_i z; K_i has one row per input and one column per integrator", inputs.clone(), cols, integral_gain)],
                Some(format!("Integral action: one integrator z of r − y per tracked output ({}); the state gain K_x of u = −K_x x − K_i z is the gain K above. Placed with the plant: the desired poles and the integrator poles together.", names.join(", "))),
            )
        }
        None => (Vec::new(), None),
    };

    let discrete_plant = match &result.discrete_plant {
        Some(dp) => vec![
            matrix_table("Φ", "Φ = e^(A T): the plant's state transition over one sample (one row and one column per state)", "Φ = e^(A T); one row and one column per state", states.clone(), states.clone(), &dp.a),
            matrix_table("Γ", "Γ = ∫₀ᵀ e^(A s) ds B: the effect of an input held over one sample (one row per state, one column per input)", "Γ = (integral of e^(A s) ds over one sample) B; one row per state, one column per input", states.clone(), inputs.clone(), &dp.b),
        ],
        None => Vec::new(),
    };

    let observer = observer_report(result, context, &states, &outputs);
    let LoopParts { summary: loop_summary, outputs: loop_outputs, inputs: loop_inputs, estimation, events } = loop_parts(result, context);
    Some(ControllerReport {
        law: law_lines(result),
        domain,
        sample_rate: result.sample_rate.as_ref().map(|a| a.message.clone()),
        delay_gain,
        tracking,
        tracking_note,
        discrete_plant,
        observer,
        loop_summary,
        loop_outputs,
        loop_inputs,
        estimation,
        settling_band: format!("±{} %", fmt_num(result.simulation.band * 100.0)),
        output_units: context.output_units.clone(),
        events,
    })
}


/// How the controller runs: continuous, or digital with its sample time and delay.
fn domain_text(result: &DesignResult, context: &ReportContext) -> String {
    let (p, t) = (&result.plant, result.sample_time);
    match (t, &result.discrete_plant) {
        (Some(t), Some(dp)) => format!(
            "Digital controller: sample time T = {} s ({} Hz). The design uses the exact zero-order-hold model of the plant, Φ = e^(A T) and Γ = ∫₀ᵀ e^(A s) ds B, and {}{}.",
            fmt_num(t),
            fmt_num(1.0 / t),
            if context.z_plane { "the desired poles as given in the z-plane" } else { "the desired poles mapped to the z-plane by z = e^(s T)" },
            if dp.computation_delay {
                format!(
                    "; with a one-sample computation delay the model also carries the previous input, whose pole{} placed at z = {}",
                    if p.inputs == 1 { " is" } else { "s are" },
                    if context.delay_poles.is_empty() { "0".to_string() } else { format_pole_list(&context.delay_poles) }
                )
            } else {
                String::new()
            }
        ),
        (Some(t), None) => format!("Digital controller: sample time T = {} s ({} Hz); the plant matrices are already discrete.", fmt_num(t), fmt_num(1.0 / t)),
        (None, _) => "Continuous controller: the equations above run in continuous time.".into(),
    }
}

/// The observer's gain tables, poles and summary.
fn observer_report(result: &DesignResult, context: &ReportContext, states: &[String], outputs: &[String]) -> Option<ObserverReport> {
    let t = result.sample_time;
    let (states, outputs) = (states.to_vec(), outputs.to_vec());
    result.observer.as_ref().map(|o| {
        let (heading, caption) = match (t.is_some(), o.form) {
            (false, _) => ("observer x̂′ = A x̂ + B u + L (y - C x̂ - D u); L has one row per state and one column per output", "Observer gain L: one row per state, one column per output"),
            (true, "current") => ("predictor gain L (the current estimator uses L_c = Φ⁻¹ L); L has one row per state and one column per output", "Observer gain L (predictor form; the current form uses L_c below): one row per state, one column per output"),
            _ => ("observer x̂[k+1] = Φ x̂[k] + Γ u[k] + L (y[k] - C x̂[k] - D u[k]); L has one row per state and one column per output", "Observer gain L: one row per state, one column per output"),
        };
        let gain = matrix_table("L", caption, heading, states.clone(), outputs.clone(), &o.gain);
        let current_gain = o.current_gain.as_ref().map(|lc| {
            matrix_table("L_c", "Current-estimator gain L_c = Φ⁻¹ L: one row per state, one column per output", "current estimator x̄[k] = x̂[k] + L_c (y[k] - C x̂[k] - D u[k]); L_c has one row per state and one column per output", states.clone(), outputs.clone(), lc)
        });
        let cond = if o.eigenvector_condition.is_finite() { fmt_num(o.eigenvector_condition) } else { "infinite".into() };
        let form = match o.form {
            "predictor" => "Predictor form (the estimate for the next sample uses this sample's measurement, so the input never waits for the computation).",
            "current" => "Current-estimator form (the estimate is corrected with the measurement of the same sample before the input is computed).",
            _ => "Continuous observer.",
        };
        let speed = context.speed_factor.map(|f| format!(" Observer poles: {} times the controller poles (s-plane).", fmt_num(f))).unwrap_or_default();
        let summary = format!(
            "{form}{speed} Achieved to within {} (relative); eigenvector condition number {cond}; gain size ‖L‖₂ = {}.{}",
            fmt_num(o.max_pole_error),
            fmt_num(o.gain_norm),
            if o.detectable { "" } else { " The plant is not detectable from these outputs: some modes cannot be estimated." }
        );
        let noise = format!(
            "Noise-to-input gain ‖K L‖₂ = {}: a measurement error e moves the inputs by up to {} × |e| (worst direction) through the observer. A faster observer (larger L) passes more measurement noise to the actuators.",
            fmt_num(o.noise_to_input_gain),
            fmt_num(o.noise_to_input_gain)
        );
        ObserverReport { gain, current_gain, poles: matched_pole_rows(result, &o.requested_poles, &o.achieved_poles), summary, noise }
    })
}

/// The loop simulation in words and rows.
#[derive(Default)]
struct LoopParts {
    summary: Option<String>,
    outputs: Vec<LoopOutputRow>,
    inputs: Vec<LoopInputRow>,
    estimation: Vec<EstimationRow>,
    events: Vec<EventLine>,
}

fn loop_parts(result: &DesignResult, context: &ReportContext) -> LoopParts {
    let p = &result.plant;
    let mut parts_out = LoopParts::default();
    let LoopParts { summary: loop_summary, outputs: loop_outputs, inputs: loop_inputs, estimation, events } = &mut parts_out;
    if let Some(l) = &result.closed_loop {
        let band = result.simulation.band;
        let unit_of = |name: &str| result.plant.output_names.iter().position(|n| n == name).and_then(|i| context.output_units.get(i)).cloned();
        for tm in &l.tracked {
            let u = unit_of(&tm.name);
            let step = tm.reference;
            loop_outputs.push(LoopOutputRow {
                name: label(&tm.name, u.as_ref()),
                reference: format!("{} at t = {} s", with_unit(fmt_num(step), u.as_ref()), fmt_num(context.reference_time)),
                rise_time: tm.rise_time.map_or_else(|| "not reached".to_string(), |v| format!("{} s", fmt_num(v))),
                settling_time: tm.settling_time.map_or_else(|| format!("not settled within ±{} %", fmt_num(band * 100.0)), |v| format!("{} s", fmt_num(v))),
                overshoot: format!("{} %", fmt_num(tm.overshoot * 100.0)),
                steady_state_error: if step != 0.0 {
                    format!("{} ({} % of the step)", with_unit(fmt_num(tm.steady_state_error), u.as_ref()), fmt_num(100.0 * tm.steady_state_error / step))
                } else {
                    with_unit(fmt_num(tm.steady_state_error), u.as_ref())
                },
            });
        }
        for (i, im) in l.input_metrics.iter().enumerate() {
            let u = p.input_units.get(i);
            loop_inputs.push(LoopInputRow {
                name: label(&im.name, u),
                peak: with_unit(fmt_num(im.peak_command), u),
                limit: im.limit.map_or_else(|| "none".to_string(), |v| with_unit(fmt_num(v), u)),
                saturated: match im.limit {
                    None => "no limit given".into(),
                    Some(lim) if im.peak_command <= lim => format!("never (peak is {} % of the limit)", fmt_num(100.0 * im.peak_command / lim)),
                    Some(_) => format!("{} s in all", fmt_num(im.time_saturated)),
                },
            });
        }
        if result.observer.is_some() {
            for (i, (x, xh)) in l.states.iter().zip(&l.estimates).enumerate() {
                let u = p.state_units.get(i);
                let err: Vec<f64> = x.iter().zip(xh).map(|(a, b)| a - b).collect();
                let peak = err.iter().fold(0.0f64, |m, v| m.max(v.abs()));
                let last = err.last().copied().unwrap_or(0.0).abs();
                estimation.push(EstimationRow {
                    name: p.state_names.get(i).map(|n| label(n, u)).unwrap_or_default(),
                    peak: with_unit(fmt_num(peak), u),
                    last: with_unit(fmt_num(last), u),
                });
            }
        }
        let mut parts = Vec::new();
        for tm in &l.tracked {
            parts.push(format!("a reference step to {} on {} at t = {} s", with_unit(fmt_num(tm.reference), unit_of(&tm.name).as_ref()), tm.name, fmt_num(context.reference_time)));
        }
        if !l.tracked.is_empty() {
            events.push(EventLine { time: context.reference_time, label: "reference step".into() });
        }
        if context.disturbance.iter().any(|w| *w != 0.0) {
            let loads: Vec<String> = context
                .disturbance
                .iter()
                .enumerate()
                .filter(|(_, w)| **w != 0.0)
                .map(|(i, w)| format!("{} on {}", with_unit(fmt_num(*w), p.input_units.get(i)), p.input_names.get(i).map_or("", |s| s.as_str())))
                .collect();
            parts.push(format!("a load step of {} at t = {} s", loads.join(" and "), fmt_num(context.disturbance_time)));
            events.push(EventLine { time: context.disturbance_time, label: "load step".into() });
        }
        if context.noise_std.iter().any(|v| *v > 0.0) {
            parts.push(format!("measurement noise of standard deviation {} (seed {})", context.noise_std.iter().map(|v| fmt_num(*v)).collect::<Vec<_>>().join(", "), context.seed));
        }
        if parts.is_empty() {
            parts.push(format!("the free response from x₀ = {}", vector_text(&result.simulation.initial_state)));
        }
        let timing = match l.sample_time {
            Some(t) => format!("sampled every {} s", fmt_num(t)),
            None => "continuous".into(),
        };
        let start = if result.observer.is_some() { " The observer starts from x̂ = 0." } else { "" };
        let separation = match l.separation_error {
            Some(e) if e.is_finite() => format!(
                " Separation check: the eigenvalues of the loop with observer are the controller and observer poles to within {} (relative).",
                fmt_num(e)
            ),
            _ => String::new(),
        };
        *loop_summary = Some(format!(
            "The whole controller in the loop with the plant ({timing}) over {} s: {}{}.{start}{separation}",
            fmt_num(l.duration),
            parts.join("; "),
            if result.simulation.input_limit.iter().any(|x| x.is_some()) { "; inputs clipped at their limits" } else { "" }
        ));
    }
    parts_out
}

// ---------------------------------------------------------------------------------------------
// How the poles were chosen.

/// Poles as text that [`parse_poles`] reads back to exactly the same values in the same order:
/// full precision ([`format_complex`]), an exact conjugate pair that follows each other written
/// once as `re±imj`.
pub fn exact_pole_text(poles: &[Complex64]) -> String {
    let mut parts = Vec::with_capacity(poles.len());
    let mut i = 0;
    while let Some(z) = poles.get(i) {
        match poles.get(i + 1) {
            Some(w) if z.im > 0.0 && *w == z.conj() => {
                parts.push(format_pole_list(&[*z, *w]));
                i += 2;
            }
            _ => {
                parts.push(format_complex(*z));
                i += 1;
            }
        }
    }
    parts.join(", ")
}

/// The region of a result, with its dominant pair at the corner (as the specification gives it).
fn region_of(r: &design::RegionResult) -> crate::patterns::Region {
    let zeta = r.min_damping;
    let corner = if zeta > 0.0 { r.min_decay_rate / zeta } else { 0.0 };
    let wn = r.natural_frequency.map_or(corner, |w| w.max(corner));
    let re = -zeta * wn;
    let im = wn * (1.0 - zeta * zeta).max(0.0).sqrt();
    crate::patterns::Region { min_damping: zeta, min_decay_rate: r.min_decay_rate, natural_frequency: r.natural_frequency, dominant_pair: [Complex64::new(re, im), Complex64::new(re, -im)] }
}

/// "5 % overshoot, 2 s settling at ±2 %": the specification behind a region, as far as the
/// result tells it. The overshoot follows from ζ exactly; the settling time from σ with the
/// design's band, and only when the description confirms that band.
fn specification_words(result: &DesignResult, region: &crate::patterns::Region) -> String {
    let zeta = region.min_damping;
    let mut parts = Vec::new();
    if let Ok(mp) = crate::patterns::overshoot_from_damping(zeta) {
        parts.push(format!("{} % overshoot", fmt_num(mp * 100.0)));
    }
    let band = result.simulation.band;
    let ts = -(band * (1.0 - zeta * zeta).sqrt()).ln() / region.min_decay_rate;
    let described = result.pole_choice.as_ref().is_some_and(|c| c.description.contains(&format!("{} s settling (±{} %", fmt_num(ts), fmt_num(band * 100.0))));
    if ts.is_finite() && described {
        parts.push(format!("{} s settling at ±{} %", fmt_num(ts), fmt_num(band * 100.0)));
    }
    parts.join(", ")
}

fn violation_text(v: &crate::patterns::RegionViolation, region: &crate::patterns::Region, sample_time: Option<f64>) -> String {
    use crate::patterns::ViolationKind;
    let pole = match sample_time {
        Some(t) => match z_to_s(v.pole, t) {
            Some(s) => format!("z = {} (s = ln z / T = {})", short_pole(v.pole), short_pole(s)),
            None => format!("z = {}", short_pole(v.pole)),
        },
        None => short_pole(v.pole),
    };
    match v.kind {
        ViolationKind::TooSlow { decay_rate } => format!("{pole}: decay rate {} 1/s, below σ = {} 1/s (outside the decay boundary)", fmt_num(decay_rate), fmt_num(region.min_decay_rate)),
        ViolationKind::TooLittleDamping { damping } => format!("{pole}: damping ratio {}, below ζ = {} (outside the damping boundary)", fmt_num(damping), fmt_num(region.min_damping)),
        ViolationKind::TooLowNaturalFrequency { natural_frequency } => format!(
            "{pole}: natural frequency {} rad/s, below ωn = {} rad/s (outside the natural-frequency boundary)",
            fmt_num(natural_frequency),
            region.natural_frequency.map_or_else(String::new, fmt_num)
        ),
    }
}

/// The achieved closed-loop poles of `result` outside `region` (digital: through `s = ln z / T`).
fn region_violations_of(result: &DesignResult, region: &crate::patterns::Region) -> Vec<crate::patterns::RegionViolation> {
    let achieved: Vec<Complex64> = result.feedback.achieved_poles.iter().map(c64).collect();
    match (result.domain, result.sample_time) {
        ("discrete", Some(t)) => crate::patterns::discrete_region_violations(&achieved, region, t).unwrap_or_default(),
        _ => crate::patterns::region_violations(&achieved, region),
    }
}

fn region_report(result: &DesignResult, r: &design::RegionResult) -> RegionReport {
    let region = region_of(r);
    let t = match (result.domain, result.sample_time) {
        ("discrete", Some(t)) => Some(t),
        _ => None,
    };
    let overshoot = crate::patterns::overshoot_from_damping(region.min_damping).map(|mp| format!(" (a pure pair with this damping overshoots by {} %)", fmt_num(mp * 100.0))).unwrap_or_default();
    let damping = format!("Damping ratio ζ ≥ {}{overshoot}: every pole within ±{}° of the negative real axis.", fmt_num(region.min_damping), fmt_num(region.min_damping.clamp(-1.0, 1.0).acos().to_degrees()));
    let circle = match t.and_then(|t| crate::patterns::discrete_decay_radius(&region, t).ok()) {
        Some(radius) => format!("; in the z-plane, |z| ≤ e^(−σT) = {}", fmt_num(radius)),
        None => String::new(),
    };
    let decay_rate = format!("Decay rate σ ≥ {} 1/s: every pole at Re s ≤ −{}{circle}.", fmt_num(region.min_decay_rate), fmt_num(region.min_decay_rate));
    let natural_frequency = region.natural_frequency.map(|w| format!("Natural frequency ωn ≥ {} rad/s (from the rise time): every pole at |s| ≥ {}.", fmt_num(w), fmt_num(w)));
    let note = "These bounds come from the formulas of a pure second-order pair (no zeros, no other poles); for this closed loop they are approximations: confirm the response by simulation.".to_string();
    let violations = region_violations_of(result, &region);
    let outside_region: Vec<String> = violations.iter().map(|v| violation_text(v, &region, t)).collect();
    RegionReport { damping, decay_rate, natural_frequency, note, outside_region }
}

/// Labels of the design states: plant states, then the delay states, then the integrators.
fn design_state_labels(result: &DesignResult, count: usize) -> Vec<String> {
    let mut labels = state_labels(result);
    if result.feedback.delay_gain.is_some() {
        labels.extend(result.plant.input_names.iter().map(|n| format!("previous {n}")));
    }
    if let Some(TrackingResult::Integral { outputs, .. }) = &result.tracking {
        labels.extend(outputs.iter().map(|o| format!("∫ error of {o}")));
    }
    if labels.len() == count {
        labels
    } else {
        (1..=count).map(|i| format!("x{i}")).collect()
    }
}

/// `diag(a, b, …)` of a diagonal matrix, or `None`.
fn diagonal_text(m: &[Vec<f64>]) -> Option<String> {
    let diagonal = m.iter().enumerate().all(|(i, row)| row.iter().enumerate().all(|(j, v)| i == j || *v == 0.0));
    if !diagonal {
        return None;
    }
    Some(format!("diag({})", m.iter().enumerate().map(|(i, row)| row.get(i).map_or_else(String::new, |v| fmt_num(*v))).collect::<Vec<_>>().join(", ")))
}

fn lqr_report(result: &DesignResult, l: &design::LqrResult, context: &ReportContext) -> LqrReport {
    let size = l.riccati_solution.len();
    let labels = design_state_labels(result, size);
    let inputs = input_labels(result);
    let discrete = result.domain == "discrete";
    let short_list = |v: &[f64]| format!("[{}]", v.iter().map(|x| fmt_num(*x)).collect::<Vec<_>>().join(", "));
    let (q, r) = match &context.lqr_bounds {
        Some((xs, us)) => (
            format!(
                "Q = diag(1/x_max²) = {} with the largest acceptable excursions x_max = {} of the design states (Bryson's rule: each term of the cost is 1 at its bound).",
                diagonal_text(&l.q).unwrap_or_default(),
                short_list(xs)
            ),
            format!(
                "R = diag(1/u_max²) = {} with the largest acceptable inputs u_max = {}{}.",
                diagonal_text(&l.r).unwrap_or_default(),
                short_list(us),
                if context.lqr_inputs_from_limits { " (the actuator limits)" } else { "" }
            ),
        ),
        None => (
            diagonal_text(&l.q).map_or_else(|| format!("Q as given ({size} × {size})."), |d| format!("Q = {d}.")),
            diagonal_text(&l.r).map_or_else(|| format!("R as given ({} × {}).", l.r.len(), l.r.len()), |d| format!("R = {d}.")),
        ),
    };
    let residual = format!(
        "Normalised residual of the {} Riccati equation: {} (0 would be exact; values near 1e-15 are at rounding level).",
        if discrete { "discrete" } else { "continuous" },
        fmt_num(l.residual)
    );
    let riccati_solution = matrix_table(
        "X",
        "Riccati solution X: one row and one column per design state",
        "Riccati solution X; one row and one column per design state",
        labels.clone(),
        labels.clone(),
        &l.riccati_solution,
    );
    let gain = matrix_table("K_lqr", "LQR gain: one row per input, one column per design state", "u = -K_lqr x; one row per input, one column per design state", inputs, labels, &l.gain);
    let mut poles: Vec<Complex64> = l.closed_loop_poles.iter().map(c64).collect();
    sort_for_display(&mut poles);
    let gain_note = if result.plant.inputs == 1 {
        "With one input only one gain places these poles, so the gain K used is this LQR gain.".to_string()
    } else {
        "With several inputs many gains place these poles: the gain K used places the LQR poles with well-conditioned eigenvectors and is in general not this LQR gain, so the LQR's optimality belongs to this gain, not to K.".to_string()
    };
    let margins = (!discrete).then(|| {
        let mut text = "Full-state LQR has guaranteed margins: at least 60° of phase margin and a gain margin from −6 dB to infinity in each input loop (Safonov & Athans, IEEE Trans. Automatic Control 22(2), 1977; for a diagonal R, as with Bryson's rule). This holds only for the full-state loop u = −K_lqr x with the whole state measured: not with an observer, and not for a digital implementation.".to_string();
        if result.plant.inputs > 1 {
            text.push_str(" With several inputs it belongs to the LQR gain shown here, not to the placed gain K.");
        }
        if result.observer.is_some() {
            text.push_str(" This design uses an observer, so the guarantee does not apply to it.");
        }
        text
    });
    LqrReport { q, r, residual, riccati_solution, gain, closed_loop_poles: format_pole_list(&poles), gain_note, margins }
}

fn search_report(result: &DesignResult, s: &design::SearchSummary, context: &ReportContext) -> SearchReport {
    let situation = |k: usize| context.search_situations.get(k).cloned().unwrap_or_else(|| format!("situation {}", k + 1));
    let band = fmt_num(result.simulation.band * 100.0);
    let settling_times = s
        .settling_time
        .iter()
        .enumerate()
        .map(|(k, t)| match t {
            Some(t) => format!("{}: the slowest state settles (±{band} %) in {} s", situation(k), fmt_num(*t)),
            None => format!("{}: not settled (±{band} %) within the simulated time", situation(k)),
        })
        .collect();
    let top = s.samples.last().map_or(s.speed_factor, |x| x[0]);
    let bottom = s.samples.first().map_or(s.speed_factor, |x| x[0]);
    let monotonicity = if s.limited_by_range {
        format!("Warning: the inputs stay within their limits even at the largest factor tried ({}): the actuators do not limit this design; measurement noise, model accuracy and sampling do.", fmt_num(s.speed_factor))
    } else if s.monotonic {
        format!("The peak input grew steadily with the factor over the range checked ({} to {}), so the factor found is the only crossing of the limit there.", fmt_num(bottom), fmt_num(top))
    } else {
        format!("Warning: the peak input did not grow steadily with the factor over the range checked ({} to {}): the factor found is one crossing of the limit, not necessarily the only one.", fmt_num(bottom), fmt_num(top))
    };
    SearchReport {
        speed_factor: format!("Speed factor {}: every pole multiplied by it.", fmt_num(s.speed_factor)),
        limiting: format!("Set by {}, on input {}.", situation(s.limiting_situation.saturating_sub(1)), s.limiting_input),
        peak_ratio: format!("Peak input at the factor found: {} % of its limit.", fmt_num(100.0 * s.peak_ratio)),
        settling_times,
        monotonic: s.monotonic,
        monotonicity,
        evaluations: s.evaluations,
        notes: context.search_notes.clone(),
    }
}

/// How the poles were chosen: `None` when they were listed and not searched.
fn pole_choice_report(result: &DesignResult, context: &ReportContext) -> Option<PoleChoiceReport> {
    let choice = result.pole_choice.as_ref();
    let lqr = result.lqr.as_ref();
    let search = result.search.as_ref();
    if choice.is_none() && lqr.is_none() && search.is_none() {
        return None;
    }
    let method = match (choice, lqr) {
        (Some(c), _) => match c.method {
            design::PoleChoiceMethod::Bessel => "Bessel pattern".to_string(),
            design::PoleChoiceMethod::Butterworth => "Butterworth pattern".to_string(),
            design::PoleChoiceMethod::Itae => "ITAE pattern".to_string(),
            design::PoleChoiceMethod::Binomial => "Binomial pattern".to_string(),
            design::PoleChoiceMethod::Specification => "Specification (dominant pair)".to_string(),
        },
        (None, Some(_)) if context.lqr_bounds.is_some() => "LQR (Bryson's rule)".to_string(),
        (None, Some(_)) => "LQR (weights Q and R)".to_string(),
        (None, None) => "Listed poles, sped up by the search".to_string(),
    };
    let mut description = match (choice, lqr) {
        (Some(c), _) => {
            let mut chars = c.description.chars();
            let first: String = chars.next().map(|f| f.to_uppercase().collect()).unwrap_or_default();
            format!("{first}{}.", chars.as_str())
        }
        (None, Some(_)) => format!(
            "The closed-loop poles of the LQR design: the state feedback that minimises the {} of xᵀ Q x + uᵀ R u over the design states, with the weights below.",
            if result.domain == "discrete" { "sum over the samples" } else { "integral over time" }
        ),
        (None, None) => "The listed poles, used as the shape of the design.".to_string(),
    };
    if let Some(s) = search {
        description.push_str(&format!(" The search then multiplied every pole by {}: the fastest design within the actuator limits.", fmt_num(s.speed_factor)));
    }

    let sample_time = result.sample_time.filter(|_| result.domain == "discrete");
    let mut suggested_delay_poles = None;
    let adopt = "To adopt them, press “Use these poles”: the design stays the same (with several inputs: the same poles, with the robust placement's gain).";
    let (poles, suggested_note, suggested_plane): (Vec<Complex64>, String, &str) = match (search, choice, lqr) {
        (Some(s), _, _) => (
            s.suggested_poles.iter().map(c64).collect(),
            format!("{} (s-plane): the poles after the search, which adopting them switches off. {adopt}", plural(s.suggested_poles.len(), "pole", "poles")),
            "s",
        ),
        (None, Some(c), _) => (c.suggested_poles.iter().map(c64).collect(), format!("{} (s-plane). {adopt}", plural(c.suggested_poles.len(), "pole", "poles")), "s"),
        (None, None, Some(l)) => {
            let mut z: Vec<Complex64> = l.closed_loop_poles.iter().map(c64).collect();
            // With a computation delay the LQR also placed the delay states' poles, which the
            // pole list does not take: the m poles nearest the origin (LQR puts them at or near
            // z = 0, deadbeat) go to the delay poles instead.
            let mut delay = String::new();
            if result.feedback.delay_gain.is_some() && sample_time.is_some() {
                let m = result.plant.inputs.min(z.len());
                let mut order: Vec<usize> = (0..z.len()).collect();
                order.sort_by(|&i, &j| z[i].norm().total_cmp(&z[j].norm()));
                let chosen: Vec<usize> = order.into_iter().take(m).collect();
                let mut fast: Vec<Complex64> = chosen.iter().map(|&i| z[i]).collect();
                // A real delay pole is written as a real number (the LQR's complex rounding dropped).
                for p in fast.iter_mut() {
                    if p.im.abs() <= 1e-12 {
                        p.im = 0.0;
                    }
                }
                if check_conjugate_pairs(&fast).is_ok() {
                    z = (0..z.len()).filter(|i| !chosen.contains(i)).map(|i| z[i]).collect();
                    suggested_delay_poles = Some(exact_pole_text(&fast));
                    delay = format!(" The {} nearest the origin, {}, go to the delay poles of the computation-delay states.", plural(m, "pole", "poles"), exact_pole_text(&fast));
                } else {
                    delay = format!(" The list also holds the {} of the computation-delay states, which the pole list does not take: give those as delay poles.", plural(m, "pole", "poles"));
                }
            }
            match sample_time {
                None => (z.clone(), format!("{} (s-plane). {adopt}{delay}", plural(z.len(), "pole", "poles")), "s"),
                Some(_) if context.z_plane => (z.clone(), format!("{} (z-plane, the pole plane chosen). {adopt}{delay}", plural(z.len(), "pole", "poles")), "z"),
                Some(t) => {
                    let s: Option<Vec<Complex64>> = z.iter().map(|p| z_to_s(*p, t)).collect();
                    match s {
                        Some(s) => (s.clone(), format!("{} (s-plane: s = ln z / T of the LQR's z-plane poles, which z = e^(sT) gives back to rounding). {adopt}{delay}", plural(s.len(), "pole", "poles")), "s"),
                        None => (z.clone(), format!("{} (z-plane: a pole at z = 0 has no s-plane equivalent, so the pole plane becomes z). {adopt}{delay}", plural(z.len(), "pole", "poles")), "z"),
                    }
                }
            }
        }
        (None, None, None) => (Vec::new(), String::new(), "s"),
    };
    Some(PoleChoiceReport {
        method,
        description,
        suggested_poles: exact_pole_text(&poles),
        suggested_note,
        suggested_plane: suggested_plane.to_string(),
        suggested_delay_poles,
        region: choice.and_then(|c| c.region.as_ref()).map(|r| region_report(result, r)),
        lqr: lqr.map(|l| lqr_report(result, l, context)),
        search: search.map(|s| search_report(result, s, context)),
    })
}

// ---------------------------------------------------------------------------------------------
// Plot scenes.

/// Points on a polyline of the region boundary in the z-plane.
const REGION_CIRCLE_POINTS: usize = 96;

/// The boundary of a specification's region in the map's plane, when the design has one.
///
/// Continuous: the decay line `Re s = −σ` and the damping rays from the origin at `acos ζ` from
/// the negative real axis (one polyline, upper end → origin → lower end), both `length` long,
/// and the half circle `|s| = ωn` left of the imaginary axis when a rise time set `ωn`.
/// Discrete (sample time `T`): the circle `|z| = e^{−σT}`, the damping spiral
/// ([`crate::patterns::discrete_damping_boundary`], both halves, one polyline) and the image
/// `z = e^{sT}` of that half circle (where `|Im s| ≤ π/T`).
pub fn region_shape(result: &DesignResult, length: f64) -> Option<RegionShape> {
    use std::f64::consts::PI;
    let r = result.pole_choice.as_ref()?.region.as_ref()?;
    let region = region_of(r);
    let zeta = region.min_damping;
    let sigma = region.min_decay_rate;
    if !(zeta > 0.0 && zeta < 1.0 && sigma.is_finite() && length.is_finite()) {
        return None;
    }
    let sin = (1.0 - zeta * zeta).sqrt();
    let half_circle = |w: f64| -> Vec<Complex64> {
        (0..=REGION_CIRCLE_POINTS).map(|k| Complex64::from_polar(w, PI / 2.0 + PI * k as f64 / REGION_CIRCLE_POINTS as f64)).collect()
    };
    let pairs = |points: &[Complex64]| -> Vec<[f64; 2]> { points.iter().map(|z| [z.re, z.im]).collect() };
    let words = specification_words(result, &region);
    let from = if words.is_empty() { String::new() } else { format!(" (from {words})") };
    let speed = region.natural_frequency.map(|w| format!(" and |s| ≥ {}", fmt_num(w))).unwrap_or_default();
    match (result.domain, result.sample_time) {
        ("discrete", Some(t)) => {
            let radius = crate::patterns::discrete_decay_radius(&region, t).ok()?;
            let circle: Vec<Complex64> = (0..=REGION_CIRCLE_POINTS).map(|k| Complex64::from_polar(radius, 2.0 * PI * k as f64 / REGION_CIRCLE_POINTS as f64)).collect();
            let upper = crate::patterns::discrete_damping_boundary(&region, t, REGION_CIRCLE_POINTS / 2 + 1).ok()?;
            let spiral: Vec<Complex64> = upper.iter().rev().map(|z| z.conj()).chain(upper.iter().skip(1).copied()).collect();
            let mut boundaries = vec![pairs(&circle), pairs(&spiral)];
            if let Some(w) = region.natural_frequency {
                let arc: Vec<Complex64> = half_circle(w).into_iter().filter(|s| s.im.abs() * t <= PI).map(|s| (s * t).exp()).collect();
                if arc.len() >= 2 {
                    boundaries.push(pairs(&arc));
                }
            }
            Some(RegionShape {
                boundaries,
                label: format!("admissible (s = ln z / T): ζ ≥ {} and |z| ≤ {} (Re s ≤ −{}){speed}{from}", fmt_num(zeta), fmt_num(radius), fmt_num(sigma)),
            })
        }
        _ => {
            let decay = vec![[-sigma, -length], [-sigma, length]];
            let rays = vec![[-zeta * length, sin * length], [0.0, 0.0], [-zeta * length, -sin * length]];
            let mut boundaries = vec![decay, rays];
            if let Some(w) = region.natural_frequency {
                boundaries.push(pairs(&half_circle(w)));
            }
            Some(RegionShape { boundaries, label: format!("admissible: ζ ≥ {} and Re s ≤ −{}{speed}{from}", fmt_num(zeta), fmt_num(sigma)) })
        }
    }
}

/// Pole map: open-loop poles, achieved closed-loop poles, observer poles, and requested
/// poles that could not be assigned; a digital design's map is the z-plane with the unit circle.
/// With a specification, the boundary of its region ([`region_shape`]), its lines 10 times
/// the largest pole magnitude long (at least 10).
pub fn pole_map_scene(result: &DesignResult) -> PoleMapScene {
    let observer = result.observer.as_ref().map(|o| o.achieved_poles.clone()).unwrap_or_default();
    let largest = result
        .open_loop_poles
        .iter()
        .chain(&result.feedback.achieved_poles)
        .chain(&result.feedback.not_assigned)
        .chain(&observer)
        .map(|p| p[0].hypot(p[1]))
        .filter(|r| r.is_finite())
        .fold(0.0f64, f64::max);
    PoleMapScene {
        open_loop: result.open_loop_poles.clone(),
        closed_loop: result.feedback.achieved_poles.clone(),
        not_assigned: result.feedback.not_assigned.clone(),
        observer,
        discrete: result.domain == "discrete",
        fit_poles: false,
        highlight: None,
        region: region_shape(result, (10.0 * largest).max(10.0)),
        ..PoleMapScene::default()
    }
}

/// Pole map of an infeasible design: the open-loop poles only.
pub fn open_loop_scene(analysis: &OpenLoopAnalysis) -> PoleMapScene {
    PoleMapScene { open_loop: analysis.open_loop_poles.clone(), ..PoleMapScene::default() }
}

/// States versus time. `normalised`: each state divided by its peak magnitude, so that
/// all share one scale and the settling band (± band) applies to every curve.
pub fn states_scene(result: &DesignResult, normalised: bool) -> TimePlotScene {
    let p = &result.plant;
    let s = &result.simulation;
    let series = s
        .states
        .iter()
        .enumerate()
        .map(|(i, values)| {
            let name = p.state_names.get(i).cloned().unwrap_or_else(|| format!("x{}", i + 1));
            let peak = s.peak_state.get(i).copied().unwrap_or(0.0);
            if normalised {
                let scale = if peak > 0.0 && peak.is_finite() { 1.0 / peak } else { 1.0 };
                Series { name, values: values.iter().map(|v| v * scale).collect(), ..Series::default() }
            } else {
                Series { name: label(&name, p.state_units.get(i)), values: values.clone(), ..Series::default() }
            }
        })
        .collect();
    let band = if normalised {
        Some(Band { lower: -s.band, upper: s.band, label: format!("±{} % settling band", fmt_num(s.band * 100.0)) })
    } else {
        None
    };
    TimePlotScene {
        t: s.time.clone(),
        series,
        limits: Vec::new(),
        band,
        events: Vec::new(),
        x_label: "time (s)".into(),
        y_label: if normalised { "state ÷ its peak |value|".into() } else { "state (own units)".into() },
        pinned: Vec::new(),
    }
}

/// Each input's limit as a pair of lines at ± limit; one pair per distinct (limit, unit),
/// named by input unless every input shares it.
fn limit_lines(result: &DesignResult) -> Vec<LimitLine> {
    let p = &result.plant;
    let s = &result.simulation;
    let mut groups: Vec<(f64, String, Vec<String>)> = Vec::new();
    for (i, l) in s.input_limit.iter().enumerate() {
        if let Some(l) = l {
            let name = p.input_names.get(i).cloned().unwrap_or_default();
            let unit = p.input_units.get(i).map(|u| u.trim()).filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
            match groups.iter_mut().find(|g| g.0 == *l && g.1 == unit) {
                Some(g) => g.2.push(name),
                None => groups.push((*l, unit, vec![name])),
            }
        }
    }
    let shared = groups.len() == 1 && groups.first().is_some_and(|g| g.2.len() == p.inputs);
    let mut limits = Vec::new();
    for (l, unit, names) in &groups {
        let whose = if shared { String::new() } else { format!(" ({})", names.join(", ")) };
        limits.push(LimitLine { value: *l, label: format!("limit +{}{unit}{whose}", fmt_num(*l)) });
        limits.push(LimitLine { value: -*l, label: format!("limit −{}{unit}{whose}", fmt_num(*l)) });
    }
    limits
}

/// The unit shared by every input, if there is one.
fn shared_input_unit(result: &DesignResult) -> Option<String> {
    let units: Vec<&str> = result.plant.input_units.iter().map(|u| u.trim()).collect();
    match units.first() {
        Some(u) if !u.is_empty() && units.iter().all(|v| v == u) => Some(u.to_string()),
        _ => None,
    }
}

/// Applied inputs versus time, with each input's limit drawn at ± limit.
pub fn inputs_scene(result: &DesignResult) -> TimePlotScene {
    let p = &result.plant;
    let s = &result.simulation;
    let units: Vec<&str> = p.input_units.iter().map(|u| u.trim()).collect();
    let shared_unit = match units.first() {
        Some(u) if !u.is_empty() && units.iter().all(|v| v == u) => Some(*u),
        _ => None,
    };
    let series = s
        .inputs
        .iter()
        .enumerate()
        .map(|(i, values)| Series {
            name: if shared_unit.is_some() {
                p.input_names.get(i).cloned().unwrap_or_default()
            } else {
                label(&p.input_names.get(i).cloned().unwrap_or_default(), p.input_units.get(i))
            },
            values: values.clone(),
            ..Series::default()
        })
        .collect();
    TimePlotScene {
        t: s.time.clone(),
        series,
        limits: limit_lines(result),
        band: None,
        events: Vec::new(),
        x_label: "time (s)".into(),
        y_label: match shared_unit {
            Some(u) => format!("input ({u})"),
            None => "input (own units)".into(),
        },
        pinned: Vec::new(),
    }
}

/// The loop's outputs (solid) against their references (dashed, in the output's colour),
/// with the reference and load steps marked. `None` without a loop simulation.
pub fn loop_outputs_scene(result: &DesignResult, report: &Report) -> Option<TimePlotScene> {
    let l = result.closed_loop.as_ref()?;
    let p = &result.plant;
    let units = report.controller.as_ref().map(|c| c.output_units.as_slice()).unwrap_or(&[]);
    let shared = match units.first() {
        Some(u) if !u.trim().is_empty() && units.len() == p.outputs && units.iter().all(|v| v == u) => Some(u.trim().to_string()),
        _ => None,
    };
    let name_of = |i: usize| {
        let n = p.output_names.get(i).cloned().unwrap_or_else(|| format!("y{}", i + 1));
        if shared.is_some() {
            n
        } else {
            label(&n, units.get(i))
        }
    };
    let mut series: Vec<Series> = l.outputs.iter().enumerate().map(|(i, v)| Series { name: name_of(i), values: v.clone(), colour: Some(i), dash: Some(0) }).collect();
    for (j, (r, tm)) in l.reference.iter().zip(&l.tracked).enumerate() {
        let i = p.output_names.iter().position(|n| *n == tm.name).unwrap_or(j);
        series.push(Series { name: format!("reference for {}", p.output_names.get(i).map_or("", |s| s.as_str())), values: r.clone(), colour: Some(i), dash: Some(1) });
    }
    Some(loop_scene(l, report, series, Vec::new(), "output", shared))
}

/// A plot of the loop simulation: its time axis, the reference and load steps marked, and one
/// y label (`quantity (unit)` with a shared unit, else "own units").
fn loop_scene(l: &design::LoopResult, report: &Report, series: Vec<Series>, limits: Vec<LimitLine>, quantity: &str, shared: Option<String>) -> TimePlotScene {
    TimePlotScene {
        t: l.time.clone(),
        series,
        limits,
        band: None,
        events: report.controller.as_ref().map(|c| c.events.clone()).unwrap_or_default(),
        x_label: "time (s)".into(),
        y_label: match shared {
            Some(u) => format!("{quantity} ({u})"),
            None => format!("{quantity} (own units)"),
        },
        pinned: Vec::new(),
    }
}

/// The loop's applied inputs (solid) and the commands before clipping (dashed, same colour),
/// with the limits. `None` without a loop simulation.
pub fn loop_inputs_scene(result: &DesignResult, report: &Report) -> Option<TimePlotScene> {
    let l = result.closed_loop.as_ref()?;
    let p = &result.plant;
    let shared = shared_input_unit(result);
    let name_of = |i: usize| {
        let n = p.input_names.get(i).cloned().unwrap_or_default();
        if shared.is_some() {
            n
        } else {
            label(&n, p.input_units.get(i))
        }
    };
    let mut series: Vec<Series> = l.inputs.iter().enumerate().map(|(i, v)| Series { name: format!("{} applied", name_of(i)), values: v.clone(), colour: Some(i), dash: Some(0) }).collect();
    series.extend(l.commanded.iter().enumerate().map(|(i, v)| Series { name: format!("{} commanded", name_of(i)), values: v.clone(), colour: Some(i), dash: Some(1) }));
    Some(loop_scene(l, report, series, limit_lines(result), "input", shared))
}

/// The estimation error `x − x̂` of each state in the loop, divided by that state's peak
/// `|x|` (one scale for all). `None` without an observer.
pub fn estimation_scene(result: &DesignResult, report: &Report) -> Option<TimePlotScene> {
    let l = result.closed_loop.as_ref()?;
    result.observer.as_ref()?;
    let p = &result.plant;
    let series = l
        .states
        .iter()
        .zip(&l.estimates)
        .enumerate()
        .map(|(i, (x, xh))| {
            let peak = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let scale = if peak > 0.0 && peak.is_finite() { 1.0 / peak } else { 1.0 };
            Series {
                name: p.state_names.get(i).cloned().unwrap_or_else(|| format!("x{}", i + 1)),
                values: x.iter().zip(xh).map(|(a, b)| (a - b) * scale).collect(),
                ..Series::default()
            }
        })
        .collect();
    Some(TimePlotScene {
        t: l.time.clone(),
        series,
        limits: Vec::new(),
        band: None,
        events: report.controller.as_ref().map(|c| c.events.clone()).unwrap_or_default(),
        x_label: "time (s)".into(),
        y_label: "(x − x̂) ÷ the state's peak |x|".into(),
        pinned: Vec::new(),
    })
}

#[cfg(test)]
#[path = "../tests/form.rs"]
mod tests;
