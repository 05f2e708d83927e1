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
//! | `c`, `d` | no | output and feedthrough matrices |
//! | `state_names`, `input_names` | no | names separated by commas or new lines |
//! | `state_units`, `input_units` | no | units, likewise |
//! | `poles` | yes | desired closed-loop poles, e.g. `-2, -1±2j` |
//! | `limits` | no | one actuator limit per input (positive), `none` for an unlimited input |
//! | `initial_state` | no | one value per state (blank: 1 in the first state) |
//! | `duration` | no | simulated time in seconds (blank: chosen from the slowest pole) |
//!
//! Every number shown with full precision uses the shortest text that reads back to the
//! same `f64` ([`format_complex`]); other figures use [`fmt_num`] (4 decimals).

use nalgebra::DMatrix;
use num_complex::Complex64;
use serde::{Deserialize, Serialize};

use crate::analysis::{controllability_report, AnalysisParams, ModalReport, ModeVerdict};
use crate::design::{self, fmt_num, DesignError, DesignRequest, DesignResult, Pair, StructureResult};
use crate::linalg::eigen::try_eigenvalues;
use crate::metrics::DEFAULT_BAND;
use crate::parse::{parse_matrix, parse_names, parse_vector, MatrixParseError};
use crate::plant::{Field, Plant, PlantError, PlantSpec};
use crate::plot::{Band, LimitLine, PoleMapScene, Series, TimePlotScene};
use crate::poles::{format_complex, format_pole_list, parse_poles, sort_for_display};

/// Largest plant the page designs (placement costs `O(n⁴)`; the page must stay responsive).
pub const MAX_STATES: usize = 50;

/// The form's fields, as typed. Every field may be omitted (it is then blank).
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct FormInput {
    pub a: String,
    pub b: String,
    pub c: String,
    pub d: String,
    pub state_names: String,
    pub input_names: String,
    pub state_units: String,
    pub input_units: String,
    pub poles: String,
    pub limits: String,
    pub initial_state: String,
    pub duration: String,
}

impl FormInput {
    /// The field keys, in page order.
    pub const FIELDS: [&'static str; 12] = [
        "a",
        "b",
        "c",
        "d",
        "state_names",
        "state_units",
        "input_names",
        "input_units",
        "poles",
        "limits",
        "initial_state",
        "duration",
    ];

    /// The text of field `key` (`None` for an unknown key).
    pub fn get(&self, key: &str) -> Option<&str> {
        Some(match key {
            "a" => &self.a,
            "b" => &self.b,
            "c" => &self.c,
            "d" => &self.d,
            "state_names" => &self.state_names,
            "input_names" => &self.input_names,
            "state_units" => &self.state_units,
            "input_units" => &self.input_units,
            "poles" => &self.poles,
            "limits" => &self.limits,
            "initial_state" => &self.initial_state,
            "duration" => &self.duration,
            _ => return None,
        })
    }

    /// Sets field `key`; returns false for an unknown key.
    pub fn set(&mut self, key: &str, text: impl Into<String>) -> bool {
        let slot = match key {
            "a" => &mut self.a,
            "b" => &mut self.b,
            "c" => &mut self.c,
            "d" => &mut self.d,
            "state_names" => &mut self.state_names,
            "input_names" => &mut self.input_names,
            "state_units" => &mut self.state_units,
            "input_units" => &mut self.input_units,
            "poles" => &mut self.poles,
            "limits" => &mut self.limits,
            "initial_state" => &mut self.initial_state,
            "duration" => &mut self.duration,
            _ => return false,
        };
        *slot = text.into();
        true
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
    pub poles: Option<String>,
    pub limits: Option<String>,
    pub initial_state: Option<String>,
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
}

/// What can be said about a plant whose design is infeasible.
#[derive(Debug, Clone, Serialize)]
pub struct OpenLoopAnalysis {
    pub open_loop_poles: Vec<Pair>,
    pub controllability: StructureReport,
}

// ---------------------------------------------------------------------------------------------
// Presentation.

/// The gain as a labelled table and as copyable text.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GainTable {
    /// One per input: name, with the unit in brackets when known.
    pub row_labels: Vec<String>,
    /// One per state.
    pub column_labels: Vec<String>,
    /// `K[i][j]` with full precision (shortest text that reads back exactly).
    pub entries: Vec<Vec<String>>,
    /// Tab-separated text with the labels, for copying into a spreadsheet or a file.
    pub text: String,
}

/// One row of the pole table.
#[derive(Debug, Clone, PartialEq, Serialize)]
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
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ModeRow {
    pub pole: String,
    pub margin: String,
    pub verdict: String,
}

/// A controllability (or observability) report in sentences and rows.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StructureReport {
    pub summary: String,
    pub tolerance: String,
    pub modes: Vec<ModeRow>,
}

/// One state's response figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StateRow {
    pub name: String,
    pub initial: String,
    pub peak: String,
    pub settling: String,
    pub overshoot: String,
}

/// One input's response figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputRow {
    pub name: String,
    pub peak: String,
    pub limit: String,
    pub verdict: String,
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
}

// ---------------------------------------------------------------------------------------------
// Reading the fields.

fn dims(m: &DMatrix<f64>) -> String {
    format!("{} × {}", m.nrows(), m.ncols())
}

fn plural(count: usize, one: &str, many: &str) -> String {
    format!("{count} {}", if count == 1 { one } else { many })
}

fn is_blank(text: &str) -> bool {
    text.trim_start_matches('\u{feff}').trim().is_empty()
}

/// Reads an optional matrix: blank is `None`.
fn optional_matrix(text: &str) -> Result<Option<DMatrix<f64>>, MatrixParseError> {
    if is_blank(text) {
        return Ok(None);
    }
    parse_matrix(text).map(Some)
}

struct Collector {
    errors: Vec<FieldError>,
}

impl Collector {
    fn push(&mut self, field: &'static str, message: impl Into<String>) {
        if !self.errors.iter().any(|e| e.field == field) {
            self.errors.push(FieldError { field, message: message.into() });
        }
    }
    fn has(&self, field: &str) -> bool {
        self.errors.iter().any(|e| e.field == field)
    }
}

/// Reads the limits list: numbers (positive) or `none`, separated by commas, spaces or new lines.
fn parse_limits(text: &str) -> Result<Vec<Option<f64>>, String> {
    let body = text.trim_start_matches('\u{feff}').trim();
    if body.starts_with('[') {
        let vals = parse_vector(body).map_err(|e| e.to_string())?;
        return vals.into_iter().enumerate().map(|(i, v)| positive_limit(i + 1, v, &format_complex(Complex64::new(v, 0.0)))).collect();
    }
    let mut out = Vec::new();
    for (i, token) in body.split(|c: char| c == ',' || c.is_whitespace()).filter(|t| !t.is_empty()).enumerate() {
        let k = i + 1;
        if token.eq_ignore_ascii_case("none") {
            out.push(None);
            continue;
        }
        let value = match parse_matrix(token) {
            Ok(m) if m.len() == 1 => m.iter().next().copied(),
            _ => None,
        };
        match value {
            Some(v) => out.push(positive_limit(k, v, token)?),
            None => {
                return Err(format!(
                    "entry {k}: {token:?} is not a number; give a positive limit such as 60 (in the input's unit), or none for an input without a limit"
                ))
            }
        }
    }
    Ok(out)
}

fn positive_limit(k: usize, v: f64, token: &str) -> Result<Option<f64>, String> {
    if v > 0.0 && v.is_finite() {
        Ok(Some(v))
    } else {
        Err(format!("entry {k}: {token} must be a positive number (a limit is the largest magnitude the input can reach); write none for an input without a limit"))
    }
}

fn parse_duration(text: &str) -> Result<f64, String> {
    let vals = parse_vector(text).map_err(|e| e.to_string())?;
    match vals.as_slice() {
        [d] if *d > 0.0 => Ok(*d),
        [d] => Err(format!("{} must be a positive number of seconds", format_complex(Complex64::new(*d, 0.0)))),
        _ => Err(format!("{} numbers given; give one duration in seconds, or leave blank to have it chosen", vals.len())),
    }
}

/// Field key of a plant field.
fn plant_field_key(field: Field) -> &'static str {
    match field {
        Field::A => "a",
        Field::B => "b",
        Field::C => "c",
        Field::D => "d",
        Field::StateNames => "state_names",
        Field::InputNames => "input_names",
        Field::StateUnits => "state_units",
        Field::InputUnits => "input_units",
        // Not on the form (never given, so never wrong); attributed to C, the output matrix.
        Field::OutputNames | Field::OutputUnits => "c",
    }
}

/// The field a plant error belongs to, and its message without the `key: ` prefix.
fn attribute_plant_error(e: &PlantError) -> (&'static str, String) {
    let field = match e {
        PlantError::Empty { field }
        | PlantError::Rows { field, .. }
        | PlantError::Columns { field, .. }
        | PlantError::NotFinite { field, .. }
        | PlantError::Count { field, .. } => plant_field_key(*field),
        PlantError::NotSquare { .. } => "a",
        PlantError::ZeroInput => "b",
        PlantError::FeedthroughWithoutOutput => "d",
    };
    let message = match e {
        PlantError::Count { field, expected, found } => {
            let (one, many, of_one, of_many) = match field {
                Field::StateNames => ("name", "names", "state", "states"),
                Field::StateUnits => ("unit", "units", "state", "states"),
                Field::InputNames => ("name", "names", "input", "inputs"),
                Field::InputUnits => ("unit", "units", "input", "inputs"),
                _ => ("entry", "entries", "entry", "entries"),
            };
            format!(
                "{} given but the plant has {}; give one per {of_one} or leave this blank",
                plural(*found, one, many),
                plural(*expected, of_one, of_many)
            )
        }
        other => {
            let full = other.to_string();
            match full.split_once(": ") {
                Some((key, rest)) if key == field => rest.to_string(),
                _ => full,
            }
        }
    };
    (field, message)
}

/// Maps a design-file field path to a form field key.
fn design_field_key(path: &str) -> Option<&'static str> {
    Some(match path {
        "feedback.poles" => "poles",
        "actuators.limit" => "limits",
        "simulation.initial_state" => "initial_state",
        "simulation.duration" => "duration",
        p => match p.strip_prefix("plant.") {
            Some(k) => FormInput::FIELDS.iter().copied().find(|f| *f == k)?,
            None => return None,
        },
    })
}

/// Evaluates the form: see the [module documentation](self).
pub fn evaluate_form(form: &FormInput) -> FormOutcome {
    let mut c = Collector { errors: Vec::new() };
    let mut dimensions = Dimensions::default();
    let mut sizes = ListSizes::default();

    // Matrices.
    let a = if is_blank(&form.a) {
        c.push("a", "required: enter the state matrix A (states × states), one row per line, entries separated by spaces, tabs or commas");
        None
    } else {
        match parse_matrix(&form.a) {
            Ok(m) => {
                dimensions.a = Some(dims(&m));
                Some(m)
            }
            Err(e) => {
                c.push("a", e.to_string());
                None
            }
        }
    };
    let n_hint = a.as_ref().map(|m| m.nrows());
    let b = if is_blank(&form.b) {
        c.push("b", "required: enter the input matrix B (states × inputs), one row per line");
        None
    } else {
        match parse_matrix(&form.b) {
            Ok(m) => {
                // One line of n numbers (n > 1) can only mean a column: B needs n rows.
                let column = m.nrows() == 1 && m.ncols() > 1 && n_hint == Some(m.ncols());
                let m = if column { m.transpose() } else { m };
                dimensions.b = Some(if column { format!("{} (one line read as a column)", dims(&m)) } else { dims(&m) });
                Some(m)
            }
            Err(e) => {
                c.push("b", e.to_string());
                None
            }
        }
    };
    let cm = match optional_matrix(&form.c) {
        Ok(m) => {
            dimensions.c = m.as_ref().map(dims);
            m
        }
        Err(e) => {
            c.push("c", e.to_string());
            None
        }
    };
    let dm = match optional_matrix(&form.d) {
        Ok(m) => {
            dimensions.d = m.as_ref().map(dims);
            m
        }
        Err(e) => {
            c.push("d", e.to_string());
            None
        }
    };

    // Lists.
    let state_names = parse_names(&form.state_names);
    let state_units = parse_names(&form.state_units);
    let input_names = parse_names(&form.input_names);
    let input_units = parse_names(&form.input_units);
    let count = |v: &Vec<String>, one: &str, many: &str| if v.is_empty() { None } else { Some(plural(v.len(), one, many)) };
    sizes.state_names = count(&state_names, "name", "names");
    sizes.state_units = count(&state_units, "unit", "units");
    sizes.input_names = count(&input_names, "name", "names");
    sizes.input_units = count(&input_units, "unit", "units");

    let poles = if is_blank(&form.poles) {
        c.push("poles", "required: list the desired closed-loop poles, one per state, separated by commas or spaces, for example -2, -3, -1±2j");
        None
    } else {
        match parse_poles(&form.poles) {
            Ok(p) => {
                sizes.poles = Some(plural(p.len(), "pole", "poles"));
                Some(p)
            }
            Err(e) => {
                c.push("poles", e.to_string());
                None
            }
        }
    };
    let limits = if is_blank(&form.limits) {
        Some(Vec::new())
    } else {
        match parse_limits(&form.limits) {
            Ok(l) => {
                sizes.limits = Some(plural(l.len(), "limit", "limits"));
                Some(l)
            }
            Err(e) => {
                c.push("limits", e);
                None
            }
        }
    };
    let initial_state = if is_blank(&form.initial_state) {
        Some(None)
    } else {
        match parse_vector(&form.initial_state) {
            Ok(v) => {
                sizes.initial_state = Some(plural(v.len(), "value", "values"));
                Some(Some(v))
            }
            Err(e) => {
                c.push("initial_state", e.to_string());
                None
            }
        }
    };
    let duration = if is_blank(&form.duration) {
        Some(None)
    } else {
        match parse_duration(&form.duration) {
            Ok(d) => Some(Some(d)),
            Err(e) => {
                c.push("duration", e);
                None
            }
        }
    };

    if let Some(a) = &a {
        if a.nrows() > MAX_STATES && a.nrows() == a.ncols() {
            c.push("a", format!("A has {} states; this page designs plants of up to {MAX_STATES} states", a.nrows()));
        }
    }

    // The plant, once A and B (and C, D) read.
    let mut plant = None;
    if let (Some(a), Some(b), false, false, false) = (&a, &b, c.has("a"), c.has("c"), c.has("d")) {
        let spec = PlantSpec {
            a: a.clone(),
            b: b.clone(),
            c: cm.clone(),
            d: dm.clone(),
            state_names,
            input_names,
            output_names: Vec::new(),
            state_units,
            input_units,
            output_units: Vec::new(),
        };
        match Plant::new(spec) {
            Ok(p) => plant = Some(p),
            Err(e) => {
                let (field, message) = attribute_plant_error(&e);
                c.push(field, message);
            }
        }
    }

    // Lengths that depend on the plant.
    if let Some(p) = &plant {
        let (n, m) = (p.states(), p.inputs());
        if let Some(l) = &limits {
            if !l.is_empty() && l.len() != m {
                c.push(
                    "limits",
                    format!(
                        "{} given but the plant has {}; give one limit per input in the order of the columns of B (write none for an input without a limit), or leave blank",
                        plural(l.len(), "limit", "limits"),
                        plural(m, "input", "inputs")
                    ),
                );
            }
        }
        if let Some(Some(x)) = &initial_state {
            if x.len() != n {
                c.push(
                    "initial_state",
                    format!(
                        "{} given but the plant has {}; give one value per state, or leave blank to start from 1 in the first state",
                        plural(x.len(), "value", "values"),
                        plural(n, "state", "states")
                    ),
                );
            }
        }
    }

    let mut outcome = FormOutcome {
        status: FormStatus::Invalid,
        errors: Vec::new(),
        dimensions,
        sizes,
        design: None,
        design_error: None,
        analysis: None,
        report: None,
    };

    let ready = match (plant, poles, limits, initial_state, duration) {
        (Some(p), Some(poles), Some(limits), Some(x0), Some(d)) if c.errors.is_empty() => Some(DesignRequest {
            plant: p,
            poles,
            limits,
            initial_state: x0,
            duration: d,
            band: DEFAULT_BAND,
        }),
        _ => None,
    };
    if let Some(req) = ready {
        match design::run(&req) {
            Ok(result) => {
                outcome.status = FormStatus::Designed;
                outcome.report = Some(report(&result));
                outcome.design = Some(result);
            }
            Err(DesignError::Input(e)) => match design_field_key(&e.field) {
                Some(field) => c.push(field, e.message),
                None => {
                    outcome.status = FormStatus::Infeasible;
                    outcome.design_error = Some(e.to_string());
                }
            },
            Err(DesignError::Infeasible { message }) => {
                outcome.status = FormStatus::Infeasible;
                outcome.design_error = Some(format!("The design is not possible: {message}."));
                outcome.analysis = open_loop_analysis(&req.plant);
            }
        }
    }
    // Errors in page order.
    c.errors.sort_by_key(|e| FormInput::FIELDS.iter().position(|f| *f == e.field).unwrap_or(usize::MAX));
    outcome.errors = c.errors;
    if !outcome.errors.is_empty() {
        outcome.status = FormStatus::Invalid;
    }
    outcome
}

/// Open-loop poles and controllability of a plant (for an infeasible design).
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

/// The gain as a labelled table and tab-separated text, full precision.
pub fn gain_table(result: &DesignResult) -> GainTable {
    let p = &result.plant;
    let row_labels: Vec<String> = p.input_names.iter().enumerate().map(|(i, n)| label(n, p.input_units.get(i))).collect();
    let column_labels: Vec<String> = p.state_names.iter().enumerate().map(|(j, n)| label(n, p.state_units.get(j))).collect();
    let entries: Vec<Vec<String>> = result.feedback.gain.iter().map(|row| row.iter().map(|v| full(*v)).collect()).collect();
    let clean = |s: &str| s.replace(['\t', '\n', '\r'], " ");
    let mut text = String::from("u = -K x; K has one row per input and one column per state\nK");
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
    GainTable { row_labels, column_labels, entries, text }
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
        let error = z.map(|z| {
            let d = (z - t).norm();
            if t.norm() > 0.0 {
                fmt_num(d / t.norm())
            } else {
                format!("{} (absolute)", fmt_num(d))
            }
        });
        rows.push(PoleRow {
            requested: if is_fixed { String::new() } else { format_complex(*t) },
            achieved: z.map(format_complex).unwrap_or_default(),
            error: error.unwrap_or_default(),
            character: z.map(pole_character).unwrap_or_default(),
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
    rank: usize,
    states: usize,
    hidden: &'a [Complex64],
    modes: &'a [ModeLike],
    tolerance: f64,
    relative: f64,
    consistent: bool,
}

fn structure_text(kind: Kind, st: Structure<'_>) -> StructureReport {
    let Structure { rank, states, hidden, modes, tolerance, relative, consistent } = st;
    let (word, weak, matrix, can) = match kind {
        Kind::Controllability => ("controllable", "weakly controllable", "[A − λI, B]", "feedback"),
        Kind::Observability => ("observable", "weakly observable", "[A − λI; C]", "the outputs"),
    };
    let stable_hidden = hidden.iter().all(|z| z.re < 0.0);
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
                ModeVerdict::No if m.pole.re < 0.0 => format!("not {word}; stable, so it stays where it is"),
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
        Structure { rank: r.rank, states: r.states, hidden: &r.hidden_modes, modes: &modes, tolerance: r.tolerance, relative: r.relative_tolerance, consistent: r.consistent },
    )
}

fn structure_result_text(r: &StructureResult, kind: Kind) -> StructureReport {
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
        Structure { rank: r.rank, states: r.states, hidden: &hidden, modes: &modes, tolerance: r.tolerance, relative: r.relative_tolerance, consistent: r.consistent },
    )
}

fn robustness_text(result: &DesignResult) -> String {
    let f = &result.feedback;
    let k = f.eigenvector_condition;
    let cond = if k.is_finite() { fmt_num(k) } else { "infinite".into() };
    let verdict = if !k.is_finite() {
        "the closed-loop eigenvectors are dependent: the placement is extremely sensitive to model errors"
    } else if k <= 100.0 {
        "well conditioned: the placed poles are insensitive to small errors in the model or the gain"
    } else if k <= 1e4 {
        "moderate: small model errors move the poles somewhat; check the design against the real plant's uncertainty"
    } else {
        "fragile: small model errors can move the poles far from where they were placed"
    };
    format!("Eigenvector condition number κ₂(X) = {cond} (1 is ideal): {verdict}. Gain size ‖K‖₂ = {}.", fmt_num(f.gain_norm))
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
    let summary = format!(
        "Free response of the closed loop u = −K x from {start} over {horizon}, time step {} s{limits}. Settling: within ±{} % of each state's peak deviation from zero, for good.",
        fmt_num(s.step),
        fmt_num(s.band * 100.0)
    );
    (states, inputs, summary)
}

/// Everything the page shows for a design.
pub fn report(result: &DesignResult) -> Report {
    let mut open: Vec<Complex64> = result.open_loop_poles.iter().map(c64).collect();
    sort_for_display(&mut open);
    let (states, inputs, simulation) = response_rows(result);
    Report {
        law: "u = −K x".into(),
        gain: gain_table(result),
        poles: pole_rows(result),
        open_loop: format_pole_list(&open),
        controllability: structure_result_text(&result.controllability, Kind::Controllability),
        observability: result.observability.as_ref().map(|o| structure_result_text(o, Kind::Observability)),
        robustness: robustness_text(result),
        warnings: result.warnings.iter().map(|w| w.message.clone()).collect(),
        states,
        inputs,
        simulation,
    }
}

// ---------------------------------------------------------------------------------------------
// Plot scenes.

/// Pole map: open-loop poles, achieved closed-loop poles, and requested poles that could not be assigned.
pub fn pole_map_scene(result: &DesignResult) -> PoleMapScene {
    PoleMapScene {
        open_loop: result.open_loop_poles.clone(),
        closed_loop: result.feedback.achieved_poles.clone(),
        not_assigned: result.feedback.not_assigned.clone(),
        discrete: false,
        highlight: None,
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
                Series { name, values: values.iter().map(|v| v * scale).collect() }
            } else {
                Series { name: label(&name, p.state_units.get(i)), values: values.clone() }
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
        x_label: "time (s)".into(),
        y_label: if normalised { "state ÷ its peak |value|".into() } else { "state (own units)".into() },
    }
}

/// Applied inputs versus time, with each input's limit drawn at ± limit.
pub fn inputs_scene(result: &DesignResult) -> TimePlotScene {
    let p = &result.plant;
    let s = &result.simulation;
    // One pair of lines per distinct (limit, unit); named by input unless every input shares it.
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
        })
        .collect();
    TimePlotScene {
        t: s.time.clone(),
        series,
        limits,
        band: None,
        x_label: "time (s)".into(),
        y_label: match shared_unit {
            Some(u) => format!("input ({u})"),
            None => "input (own units)".into(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn form(a: &str, b: &str, poles: &str) -> FormInput {
        FormInput { a: a.into(), b: b.into(), poles: poles.into(), ..Default::default() }
    }

    const TEXTBOOK_A: &str = "0 1 0\n0 0 1\n-1 -5 -6";

    #[test]
    fn textbook_plant_gives_the_textbook_gain() {
        // Ogata, Modern Control Engineering, pole-placement example (from memory): K = [199, 55, 8].
        let out = evaluate_form(&form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10"));
        assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
        let g = &out.design.as_ref().unwrap().feedback.gain;
        for (got, want) in g[0].iter().zip([199.0, 55.0, 8.0]) {
            assert!((got - want).abs() <= 1e-9 * want, "{got} vs {want}");
        }
        // The text shown reads back to the same numbers.
        let table = &out.report.as_ref().unwrap().gain;
        for (text, value) in table.entries[0].iter().zip(&g[0]) {
            assert_eq!(text.parse::<f64>().unwrap(), *value);
        }
        assert_eq!(table.row_labels, ["u1"]);
        assert_eq!(table.column_labels, ["x1", "x2", "x3"]);
        assert_eq!(out.dimensions.a.as_deref(), Some("3 × 3"));
        assert_eq!(out.dimensions.b.as_deref(), Some("3 × 1"));
        assert_eq!(out.sizes.poles.as_deref(), Some("3 poles"));
        assert!(out.dimensions.c.is_none());
    }

    #[test]
    fn one_line_b_is_a_column_and_json_works() {
        let out = evaluate_form(&form("[[0,1,0],[0,0,1],[-1,-5,-6]]", "[0, 0, 1]", "-10 -2+4j -2-4j"));
        assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
        assert_eq!(out.dimensions.b.as_deref(), Some("3 × 1 (one line read as a column)"));
        let k = &out.design.unwrap().feedback.gain[0];
        assert!((k[0] - 199.0).abs() < 1e-9 * 199.0);
    }

    #[test]
    fn bad_token_names_row_column_and_token() {
        let out = evaluate_form(&form("0 1 0\n0 0 x\n-1 -5 -6", "0\n0\n1", "-2±4j, -10"));
        assert_eq!(out.status, FormStatus::Invalid);
        let msg = out.error_for("a").unwrap();
        assert!(msg.contains("row 2, column 3") && msg.contains("\"x\""), "{msg}");
        assert!(out.design.is_none() && out.dimensions.a.is_none());
        assert_eq!(out.errors.len(), 1, "{:?}", out.errors);
    }

    #[test]
    fn every_wrong_field_gets_its_own_error_in_page_order() {
        let mut f = form("1 2\n3", "", "-1, 1+j");
        f.limits = "5, zero".into();
        f.duration = "-3".into();
        f.initial_state = "1 2\n3 4".into();
        let out = evaluate_form(&f);
        let fields: Vec<&str> = out.errors.iter().map(|e| e.field).collect();
        assert_eq!(fields, ["a", "b", "poles", "limits", "initial_state", "duration"], "{:?}", out.errors);
        assert!(out.error_for("a").unwrap().contains("row 2"));
        assert!(out.error_for("b").unwrap().starts_with("required"));
        assert!(out.error_for("poles").unwrap().contains("1-1j"), "{:?}", out.error_for("poles"));
        assert!(out.error_for("limits").unwrap().contains("entry 2: \"zero\""), "{:?}", out.error_for("limits"));
        assert!(out.error_for("duration").unwrap().contains("positive"));
    }

    #[test]
    fn plant_shape_errors_go_to_the_right_field() {
        let out = evaluate_form(&form("0 1\n0 0", "0\n1\n2", "-1, -2"));
        assert_eq!(out.errors.len(), 1);
        assert_eq!(out.errors[0].field, "b");
        assert!(out.errors[0].message.starts_with("has 3 rows but needs 2"), "{}", out.errors[0].message);

        let out = evaluate_form(&form("0 1 2\n0 0 1", "0\n1", "-1, -2"));
        assert_eq!(out.errors[0].field, "a");
        assert!(out.errors[0].message.contains("square"), "{}", out.errors[0].message);

        let out = evaluate_form(&form("0 1\n0 0", "0\n0", "-1, -2"));
        assert_eq!(out.errors[0].field, "b");

        let mut f = form("0 1\n0 0", "0\n1", "-1, -2");
        f.c = "1 0 0".into();
        assert_eq!(evaluate_form(&f).errors[0].field, "c");
        f.c = String::new();
        f.d = "0".into();
        assert_eq!(evaluate_form(&f).errors[0].field, "d");
        f.d = String::new();
        f.state_names = "position".into();
        let out = evaluate_form(&f);
        assert_eq!(out.errors[0].field, "state_names");
        assert!(out.errors[0].message.contains("1 name given but the plant has 2 states"), "{}", out.errors[0].message);
        f.state_names = "position, velocity".into();
        f.input_units = "N, N".into();
        let out = evaluate_form(&f);
        assert_eq!(out.errors[0].field, "input_units");
        assert!(out.errors[0].message.contains("has 1 input;"), "{}", out.errors[0].message);
    }

    #[test]
    fn counts_that_depend_on_the_plant() {
        let mut f = form("0 1\n0 0", "0 0\n1 1", "-1, -2");
        f.limits = "5".into();
        f.initial_state = "1 0 0".into();
        let out = evaluate_form(&f);
        assert!(out.error_for("limits").unwrap().contains("1 limit given but the plant has 2 inputs"), "{:?}", out.errors);
        assert!(out.error_for("initial_state").unwrap().contains("3 values given but the plant has 2 states"));
        let out = evaluate_form(&form("0 1\n0 0", "0\n1", "-1, -2, -3"));
        // The engine words it; the message lands on the poles field and gives both counts.
        let msg = out.error_for("poles").unwrap();
        assert!(msg.contains('3') && msg.contains("2 states"), "{msg}");
    }

    #[test]
    fn uncontrollable_unstable_plant_is_infeasible_with_analysis() {
        let out = evaluate_form(&form("1 0\n0 -1", "0\n1", "-1, -2"));
        assert_eq!(out.status, FormStatus::Infeasible);
        assert!(out.errors.is_empty());
        let msg = out.design_error.as_deref().unwrap();
        assert!(msg.contains("not possible") && msg.contains("mode at 1"), "{msg}");
        let an = out.analysis.unwrap();
        assert_eq!(an.open_loop_poles.len(), 2);
        assert!(an.controllability.summary.starts_with("Not stabilisable"), "{}", an.controllability.summary);
        assert!(an.controllability.modes.iter().any(|m| m.verdict == "not controllable and not stable"));
    }

    #[test]
    fn stabilisable_plant_reports_fixed_and_unassigned_poles() {
        // x1 is an uncontrollable stable mode at -1; x2 is an integrator driven by u.
        let out = evaluate_form(&form("-1 0\n0 0", "0\n1", "-3, -4"));
        assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
        let r = out.report.unwrap();
        assert!(r.controllability.summary.starts_with("Not controllable, but stabilisable"), "{}", r.controllability.summary);
        assert!(r.poles.iter().any(|p| p.note.starts_with("uncontrollable mode") && p.achieved == "-1"), "{:?}", r.poles);
        assert!(r.poles.iter().any(|p| p.note.starts_with("not assigned")), "{:?}", r.poles);
        let scene = pole_map_scene(out.design.as_ref().unwrap());
        assert_eq!(scene.not_assigned.len(), 1);
    }

    #[test]
    fn limits_accept_none_and_produce_limit_lines() {
        let mut f = form("0 1\n0 0", "0 0\n1 0.5", "-2, -3");
        f.limits = "none, 4".into();
        f.initial_state = "1 0".into();
        f.input_names = "push, pull".into();
        f.input_units = "N, N".into();
        let out = evaluate_form(&f);
        assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
        let d = out.design.unwrap();
        assert_eq!(d.simulation.input_limit, vec![None, Some(4.0)]);
        let scene = inputs_scene(&d);
        assert_eq!(scene.limits.len(), 2);
        assert!(scene.limits[0].label.contains("(pull)"), "{:?}", scene.limits);
        // A limit shared by every input is drawn once, without names.
        let mut shared = d.clone();
        shared.simulation.input_limit = vec![Some(4.0), Some(4.0)];
        let scene = inputs_scene(&shared);
        let labels: Vec<&str> = scene.limits.iter().map(|l| l.label.as_str()).collect();
        assert_eq!(labels, ["limit +4 N", "limit −4 N"]);
        assert_eq!(scene.y_label, "input (N)");
        assert_eq!(scene.series.len(), 2);
        let r = out.report.unwrap();
        assert_eq!(r.inputs[0].limit, "none");
        assert!(r.inputs[1].limit == "4 N", "{:?}", r.inputs[1]);
    }

    #[test]
    fn normalised_states_peak_at_one_and_carry_the_band() {
        let out = evaluate_form(&form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10"));
        let d = out.design.unwrap();
        let s = states_scene(&d, true);
        for ser in &s.series {
            let peak = ser.values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            assert!((peak - 1.0).abs() < 1e-12, "{peak}");
        }
        assert_eq!(s.band.as_ref().map(|b| b.upper), Some(0.02));
        let raw = states_scene(&d, false);
        assert!(raw.band.is_none());
        assert_eq!(raw.series[0].values, d.simulation.states[0]);
        assert_eq!(s.x_label, "time (s)");
    }

    #[test]
    fn gain_text_is_labelled_and_exact() {
        let mut f = form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10");
        f.state_names = "position, velocity, acceleration".into();
        f.state_units = "m, m/s, m/s²".into();
        f.input_names = "jerk".into();
        let out = evaluate_form(&f);
        assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
        let text = out.report.unwrap().gain.text;
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines[0].starts_with("u = -K x"));
        assert_eq!(lines[1], "K\tposition (m)\tvelocity (m/s)\tacceleration (m/s²)");
        let cells: Vec<&str> = lines[2].split('\t').collect();
        assert_eq!(cells[0], "jerk");
        assert_eq!(cells.len(), 4);
        let k: Vec<f64> = cells[1..].iter().map(|c| c.parse().unwrap()).collect();
        assert!((k[1] - 55.0).abs() < 1e-9 * 55.0);
    }

    #[test]
    fn pole_rows_pair_requested_with_achieved() {
        let out = evaluate_form(&form(TEXTBOOK_A, "0\n0\n1", "-10, -2±4j"));
        let rows = out.report.unwrap().poles;
        assert_eq!(rows.len(), 3);
        assert_eq!(rows[0].requested, "-10");
        for r in &rows {
            let want: Complex64 = crate::poles::parse_pole_items(&r.requested).unwrap()[0];
            let got: Complex64 = crate::poles::parse_pole_items(&r.achieved).unwrap()[0];
            assert!((want - got).norm() < 1e-9, "{r:?}");
            assert!(r.error.parse::<f64>().map_or(true, |e| e < 1e-9), "{r:?}");
        }
        assert!(rows[1].character.contains("damping ratio 0.4472"), "{:?}", rows[1]);
        assert!(rows[0].character.contains("time constant 0.1 s"), "{:?}", rows[0]);
    }

    #[test]
    fn blank_optional_fields_and_whitespace_are_fine() {
        let mut f = form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10");
        f.c = "  \n ".into();
        f.limits = " ".into();
        f.duration = "\n".into();
        let out = evaluate_form(&f);
        assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
        f.c = "1 0 0".into();
        let out = evaluate_form(&f);
        let r = out.report.unwrap();
        assert!(r.observability.unwrap().summary.starts_with("Observable"));
    }

    #[test]
    fn hostile_text_never_panics() {
        let samples = ["", "[", "]]", "1e999", "nan", "-", "±", "j", "\u{feff}", "1,,2", "[[1],[2,3]]", "0\n\n\n0", "∞", "1 2\n3 4\n5 6", "1e-320", "1e308 1e308\n1e308 1e308"];
        for a in samples {
            for b in samples {
                for p in ["", "-1", "-1, -2", "1+j", "j2", "-1±2j"] {
                    let mut f = form(a, b, p);
                    f.limits = a.into();
                    f.initial_state = b.into();
                    f.duration = p.into();
                    let out = evaluate_form(&f);
                    if out.status == FormStatus::Designed {
                        assert!(out.report.is_some());
                    }
                }
            }
        }
    }

    #[test]
    fn mutated_demo_text_never_panics() {
        // Deterministic pseudo-random edits (insert, delete, replace a character) of every
        // field of every demo, each evaluated through the full design run.
        let alphabet: Vec<char> = "0123456789 -+.,e\nj±x[]".chars().collect();
        let mut seed: u64 = 0x9e37_79b9_7f4a_7c15;
        let mut next = move |bound: usize| {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed % bound.max(1) as u64) as usize
        };
        let mut designed = 0;
        for demo in crate::demos::demos() {
            for round in 0..150 {
                let mut f = demo.form.clone();
                let key = FormInput::FIELDS[round % FormInput::FIELDS.len()];
                let mut chars: Vec<char> = f.get(key).unwrap_or("").chars().collect();
                for _ in 0..1 + next(3) {
                    let at = next(chars.len() + 1);
                    let c = alphabet[next(alphabet.len())];
                    match next(3) {
                        0 => chars.insert(at, c),
                        1 if at < chars.len() => {
                            chars.remove(at);
                        }
                        _ if at < chars.len() => chars[at] = c,
                        _ => chars.push(c),
                    }
                }
                f.set(key, chars.into_iter().collect::<String>());
                let out = evaluate_form(&f);
                match out.status {
                    FormStatus::Designed => {
                        designed += 1;
                        assert!(out.report.is_some() && out.errors.is_empty());
                    }
                    FormStatus::Invalid => assert!(!out.errors.is_empty()),
                    FormStatus::Infeasible => assert!(out.design_error.is_some()),
                }
            }
        }
        assert!(designed > 0, "some mutations still design");
    }

    #[test]
    fn oversize_plants_are_refused_politely() {
        let n = MAX_STATES + 1;
        let a: String = (0..n).map(|i| (0..n).map(|j| if i == j { "-1" } else { "0" }).collect::<Vec<_>>().join(" ")).collect::<Vec<_>>().join("\n");
        let b: String = (0..n).map(|_| "1").collect::<Vec<_>>().join("\n");
        let out = evaluate_form(&form(&a, &b, "-1"));
        assert!(out.error_for("a").unwrap().contains("up to 50 states"));
    }

    #[test]
    fn form_input_get_set_cover_every_field() {
        let mut f = FormInput::default();
        for (i, k) in FormInput::FIELDS.iter().enumerate() {
            assert!(f.set(k, format!("v{i}")));
        }
        for (i, k) in FormInput::FIELDS.iter().enumerate() {
            assert_eq!(f.get(k), Some(format!("v{i}").as_str()));
        }
        assert!(!f.set("nope", ""));
        assert_eq!(f.get("nope"), None);
        let json = serde_json::to_value(&f).unwrap();
        assert_eq!(json.as_object().unwrap().len(), FormInput::FIELDS.len());
    }

    #[test]
    fn short_pole_and_character() {
        assert_eq!(short_pole(Complex64::new(-12.0, 9.0)), "\u{2212}12 + 9j");
        assert_eq!(short_pole(Complex64::new(-12.0, -9.0)), "\u{2212}12 \u{2212} 9j");
        assert_eq!(short_pole(Complex64::new(0.5, 0.0)), "0.5");
        assert_eq!(short_pole(Complex64::new(0.0, -2.0)), "\u{2212}2j");
        assert_eq!(pole_character(Complex64::new(0.0, 0.0)), "integrator (does not decay)");
        assert!(pole_character(Complex64::new(2.0, 0.0)).starts_with("unstable"));
    }
}
