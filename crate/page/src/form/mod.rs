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
//! | `disturbance`, `disturbance_time` | no | load step per input (or per column of E) and its time |
//! | `disturbance_input` | no | disturbance input matrix E (states × loads): where the load step enters |
//! | `state_limits` | no | one limit per state (positive), `none` for a state without one |
//! | `tracking_feedforward` | no | `true`: integral action with the reference also fed forward |
//! | `noise_std`, `seed` | no | measurement-noise standard deviation per output, and the seed |
//! | `disk_skew` | no | skew of the disk margins, −1 to 1 (blank: 0, symmetric) |
//! | `sensitivity_entry` | no | the plant entry whose effect on each pole is shown, e.g. `A 2 1` |
//! | `uncertain_entries` | no | one per line: `A 2 1 20%` (an entry) or `B 10%` (a whole matrix) |
//! | `uncertainty_samples`, `uncertainty_seed` | no | samples of the uncertainty cloud (blank: 500) and their seed (blank: 1); sampled on demand |
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
use serde::Serialize;

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
mod axes;
mod choice_report;
mod context;
mod fields;
pub mod history;
mod report;
mod report_types;
mod robustness;
mod scenes;
mod verdicts;
pub use adapter::{form_from_spec, form_key, spec_from_form};
pub use axes::{arrange_inputs, arrange_outputs, SignalAxes, MAX_PANELS};
pub use choice_report::*;
pub use context::ReportContext;
pub use report::*;
pub use report_types::*;
pub use robustness::RobustnessDetail;
pub use scenes::*;
pub use verdicts::{verdicts, Verdict, VerdictTone};

pub use fields::FormInput;

impl FormInput {
    /// The value of a choice field, normalised (blank → its first value; unknown text is
    /// returned trimmed and lower-cased so that the evaluation can name it in an error).
    pub fn choice(&self, key: &str) -> String {
        let text = self.get(key).unwrap_or("").trim().to_ascii_lowercase().replace(['-', ' '], "_");
        let allowed = FormInput::choices(key).unwrap_or(&[]);
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
            "anti_windup" | "tracking_feedforward" => tracking == "integral",
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
    /// Live size shown beside a field, by key: matrices `"3 × 3"`, lists `"4 poles"` (absent
    /// when blank or unreadable).
    pub sizes: std::collections::BTreeMap<&'static str, String>,
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
        self.sizes.get(key).map(String::as_str)
    }
}

/// What can be said about a plant whose design is infeasible.
#[derive(Debug, Clone, Serialize)]
pub struct OpenLoopAnalysis {
    pub open_loop_poles: Vec<Pair>,
    pub controllability: StructureReport,
}

// ---------------------------------------------------------------------------------------------
// Evaluating the form: the adapter, the one rulebook, the run.

fn plural(count: usize, one: &str, many: &str) -> String {
    format!("{count} {}", if count == 1 { one } else { many })
}

/// Most samples a digital simulation may take (the rule is the design layer's, at both doors).
pub use crate::design::check::MAX_LOOP_SAMPLES;

/// Most characters the page reads from a matrix field (a 50-state `A` with 25-character
/// entries is about 65,000); longer text is refused before it is parsed.
pub const MAX_MATRIX_CHARS: usize = 500_000;

/// Most characters the page reads from any other field (a pole list of 50 poles is under
/// 2,000); longer text is refused before it is parsed.
pub const MAX_FIELD_CHARS: usize = 50_000;

/// The fields that hold matrices.
const MATRIX_FIELDS: [&str; 5] = ["a", "b", "c", "d", "disturbance_input"];

/// Fields over their length limit, refused before anything is parsed (a pasted file or a
/// runaway generator must not freeze the page).
fn oversized_fields(form: &FormInput) -> Vec<FieldError> {
    FormInput::FIELDS
        .iter()
        .filter_map(|&key| {
            let limit = if MATRIX_FIELDS.contains(&key) { MAX_MATRIX_CHARS } else { MAX_FIELD_CHARS };
            let chars = form.get(key).map_or(0, |t| t.len());
            (chars > limit).then(|| FieldError {
                field: key,
                message: format!("the text has {chars} characters; this field reads at most {limit}: shorten it (the command-line tool reads design files of up to 8 MiB)"),
            })
        })
        .collect()
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
    evaluate_form_continued(form, None)
}

/// [`evaluate_form`] continuing from the previous design of the page session (its
/// [`crate::design::DesignResult::continuation`]), so that gains follow one branch of the
/// robust placement while the poles are dragged or edited.
pub fn evaluate_form_continued(form: &FormInput, previous: Option<&crate::design::Continuation>) -> FormOutcome {
    evaluate_form_with(form, previous, Depth::Full)
}

/// How much robustness analysis an evaluation does: the uncertainty cloud only on request, and
/// no margins while a pole is dragged, so that those cycles stay fast.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Depth {
    /// No margins, pole sensitivity or cloud (a drag in progress).
    Quick,
    /// Margins and pole sensitivity, no cloud.
    Full,
    /// Everything, the uncertainty cloud included.
    WithCloud,
}

/// [`evaluate_form_continued`] at the given [`Depth`].
pub fn evaluate_form_with(form: &FormInput, previous: Option<&crate::design::Continuation>, depth: Depth) -> FormOutcome {
    let mut outcome = FormOutcome { status: FormStatus::Invalid, errors: Vec::new(), sizes: std::collections::BTreeMap::new(), design: None, design_error: None, analysis: None, report: None };
    let oversized = oversized_fields(form);
    if !oversized.is_empty() {
        outcome.errors = oversized;
        return outcome;
    }
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
            outcome.sizes.insert(key, text.clone());
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
        let adjusted;
        let run_design = match (depth, &design.controller.robustness.uncertainty) {
            (Depth::WithCloud, _) | (Depth::Full, None) => design,
            (Depth::Full, Some(_)) | (Depth::Quick, _) => {
                let mut d = design.clone();
                d.controller.robustness.uncertainty = None;
                if depth == Depth::Quick {
                    d.controller.robustness.depth = crate::design::RobustnessDepth::Deferred;
                }
                adjusted = d;
                &adjusted
            }
        };
        match crate::design::run_checked_continued(run_design, previous) {
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

/// The search for the fastest design that [`evaluate_form_with`] would run for `form` after
/// `previous`, ready to run in steps (the page spreads it over slices of its main thread);
/// `None` when there is none to run: no search, an outcome already remembered in `previous`
/// for these very inputs, or input errors (which the evaluation then reports).
pub fn search_job(form: &FormInput, previous: Option<&crate::design::Continuation>) -> Option<crate::design::SearchJob> {
    // Most cycles have no search: nothing else is read for them.
    if form.search != "true" {
        return None;
    }
    crate::design::search_job(&checked_without_errors(form)?, previous)
}

/// The uncertainty cloud that [`evaluate_form_with`] at [`Depth::WithCloud`] would draw for
/// `form` after `previous`, ready to draw in steps (the page spreads it over slices of its main
/// thread); `None` when there is none to draw: no uncertain parameters, a cloud already
/// remembered in `previous` for these very inputs, or input errors (which the evaluation then
/// reports).
pub fn cloud_job(form: &FormInput, previous: Option<&crate::design::Continuation>) -> Option<crate::design::CloudJob> {
    if form.uncertain_entries.trim().is_empty() {
        return None;
    }
    crate::design::cloud_job(&checked_without_errors(form)?, previous)
}

/// The checked design of `form` when the page would design it: no oversized field, within the
/// page's capacity, and no input error.
fn checked_without_errors(form: &FormInput) -> Option<crate::design::CheckedDesign> {
    if !oversized_fields(form).is_empty() || page_capacity(form).is_some() {
        return None;
    }
    let checked = crate::design::check(&adapter::spec_from_form(form).ok()?);
    if checked.errors.is_empty() {
        checked.design
    } else {
        None
    }
}

pub fn open_loop_analysis(plant: &Plant) -> Option<OpenLoopAnalysis> {
    let mut poles = try_eigenvalues(plant.a()).ok()?;
    sort_for_display(&mut poles);
    let report = controllability_report(plant.a(), plant.b(), AnalysisParams::default()).ok()?;
    Some(OpenLoopAnalysis { open_loop_poles: poles.iter().map(|z| [z.re, z.im]).collect(), controllability: modal_report_text(&report, Kind::Controllability) })
}

#[cfg(test)]
#[path = "../tests/form.rs"]
mod tests;
