//! The design file (`polewright.design`, version 1) and the design run that turns it into a
//! result (`polewright.result`, version 1). The CLI and the page both go through [`run`].
//!
//! Input is validated once, here, into a [`DesignRequest`]; every error is an
//! [`InputError`] naming the field (`plant.a`, `feedback.poles`, …), the cause and what to
//! change. A design that is well formed but impossible (for example an unstable mode that
//! no input reaches) is a [`DesignError::Infeasible`].
//!
//! # Design file
//! ```json
//! { "format": "polewright.design", "version": 1,
//!   "plant": { "a": [[0, 1], [0, 0]], "b": [[0], [1]],
//!              "c": [[1, 0]], "d": [[0]],
//!              "state_names": ["position", "velocity"], "state_units": ["m", "m/s"],
//!              "input_names": ["force"], "input_units": ["N"], "output_names": ["position"] },
//!   "feedback": { "poles": [[-2, 1], [-2, -1]] },
//!   "actuators": { "limit": [5.0] },
//!   "simulation": { "initial_state": [0.1, 0], "duration": 5.0, "band": 0.02 } }
//! ```
//! Matrices are lists of rows, or a text block (one row per line; entries separated by
//! spaces, tabs or commas). For `b`, a flat list of `n` numbers is read as a column.
//! Poles are `[re, im]` pairs, numbers, or strings such as `"-1+2j"` or `"-1±2j"` (a pair),
//! or a single string listing them. Only `plant.a`, `plant.b` and `feedback.poles` are
//! required. Unknown keys are refused, so that a misspelt key cannot be silently ignored.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;
use serde::Serialize;
use serde_json::Value;

use crate::analysis::{controllability_report, observability_report, AnalysisParams, ModalReport, ModeVerdict};
use crate::linalg::eigen::try_eigenvalues;
use crate::metrics;
use crate::parse::{parse_matrix, parse_names};
use crate::place::{state_feedback_gain, PlacementParams};
use crate::plant::{Plant, PlantSpec};
use crate::poles::{check_conjugate_pairs, format_complex, parse_pole_items, parse_poles};
use crate::simulate::{closed_loop_response, SimulationParams, SimulationSpec};
use crate::warnings::{Warning, WarningParams};

/// The design-file format name.
pub const DESIGN_FORMAT: &str = "polewright.design";
/// The result format name.
pub const RESULT_FORMAT: &str = "polewright.result";
/// Highest design-file version this build reads.
pub const DESIGN_VERSION: u64 = 2;
/// Version of the result this build writes.
pub const RESULT_VERSION: u64 = 2;

/// Invalid input: which field, and what is wrong with it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputError {
    /// Dotted path of the field, e.g. `plant.a` or `feedback.poles`.
    pub field: String,
    pub message: String,
}

impl InputError {
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        InputError { field: field.into(), message: message.into() }
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
#[derive(Debug, Clone)]
pub struct DesignRequest {
    pub plant: Plant,
    pub poles: Vec<Complex64>,
    /// Per-input limits; empty = none given.
    pub limits: Vec<Option<f64>>,
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
    Feedforward { outputs: Vec<usize> },
    /// `integral_poles`: extra poles for the integrator states (else `feedback.poles` has `n + q`).
    Integral { outputs: Vec<usize>, integral_poles: Vec<Complex64> },
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
}

/// LQR weights as given.
#[derive(Debug, Clone, PartialEq)]
pub enum LqrWeights {
    Matrices { q: DMatrix<f64>, r: DMatrix<f64> },
    /// Bryson's rule: `Q = diag(1/x_max²)`, `R = diag(1/u_max²)`.
    Bryson { max_state: Vec<f64>, max_input: Vec<f64> },
}

/// A pole choice made by Polewright rather than listed by the user.
#[derive(Debug, Clone, PartialEq)]
pub struct PoleChoice {
    /// `"bessel"`, `"butterworth"`, `"itae"`, `"binomial"` or `"specification"`.
    pub method: &'static str,
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

// ---------------------------------------------------------------------------------------------
// Reading the design file.

fn number_matrix(v: &Value, field: &str) -> Result<DMatrix<f64>, InputError> {
    match v {
        Value::String(s) => parse_matrix(s).map_err(|e| InputError::new(field, e.to_string())),
        Value::Array(rows) => {
            if rows.is_empty() {
                return Err(InputError::new(field, "the matrix is empty; give at least one row"));
            }
            if rows.iter().all(|r| r.is_number()) {
                let vals = numbers(rows, field, 1)?;
                return Ok(DMatrix::from_row_slice(1, vals.len(), &vals));
            }
            let mut data: Vec<Vec<f64>> = Vec::with_capacity(rows.len());
            for (i, r) in rows.iter().enumerate() {
                let Value::Array(items) = r else {
                    return Err(InputError::new(field, format!("row {} is {}, not a list of numbers", i + 1, kind(r))));
                };
                data.push(numbers(items, field, i + 1)?);
            }
            let cols = data[0].len();
            if cols == 0 {
                return Err(InputError::new(field, "row 1 is empty; every row needs at least one number"));
            }
            for (i, r) in data.iter().enumerate() {
                if r.len() != cols {
                    return Err(InputError::new(
                        field,
                        format!("row {} has {} entries but row 1 has {cols}; every row needs the same number of entries", i + 1, r.len()),
                    ));
                }
            }
            Ok(DMatrix::from_fn(data.len(), cols, |i, j| data[i][j]))
        }
        other => Err(InputError::new(field, format!("expected a list of rows or a text block, found {}", kind(other)))),
    }
}

fn numbers(items: &[Value], field: &str, row: usize) -> Result<Vec<f64>, InputError> {
    items
        .iter()
        .enumerate()
        .map(|(j, x)| match x.as_f64() {
            Some(v) if v.is_finite() => Ok(v),
            _ => Err(InputError::new(field, format!("row {row}, column {}: {} is not a finite number", j + 1, short(x)))),
        })
        .collect()
}

fn number_vector(v: &Value, field: &str) -> Result<Vec<f64>, InputError> {
    match v {
        Value::Number(_) => Ok(vec![finite(v, field)?]),
        Value::String(s) => crate::parse::parse_vector(s).map_err(|e| InputError::new(field, e.to_string())),
        Value::Array(items) => items
            .iter()
            .enumerate()
            .map(|(i, x)| match x.as_f64() {
                Some(v) if v.is_finite() => Ok(v),
                _ => Err(InputError::new(field, format!("entry {}: {} is not a finite number", i + 1, short(x)))),
            })
            .collect(),
        other => Err(InputError::new(field, format!("expected a list of numbers, found {}", kind(other)))),
    }
}

fn finite(v: &Value, field: &str) -> Result<f64, InputError> {
    match v.as_f64() {
        Some(x) if x.is_finite() => Ok(x),
        _ => Err(InputError::new(field, format!("{} is not a finite number", short(v)))),
    }
}

fn names(v: &Value, field: &str) -> Result<Vec<String>, InputError> {
    match v {
        Value::String(s) => Ok(parse_names(s)),
        Value::Array(items) => items
            .iter()
            .enumerate()
            .map(|(i, x)| match x {
                Value::String(s) => Ok(s.trim().to_string()),
                other => Err(InputError::new(field, format!("entry {} is {}, not text", i + 1, kind(other)))),
            })
            .collect(),
        other => Err(InputError::new(field, format!("expected a list of names, found {}", kind(other)))),
    }
}

/// Reads a pole list from a design-file value.
///
/// # Errors
/// An [`InputError`] for `field` naming the bad entry.
pub fn poles_from_value(v: &Value, field: &str) -> Result<Vec<Complex64>, InputError> {
    let mut out = Vec::new();
    match v {
        Value::String(s) => return parse_poles(s).map_err(|e| InputError::new(field, e.to_string())),
        Value::Array(items) => {
            if items.is_empty() {
                return Err(InputError::new(field, "no poles given; list one per state"));
            }
            for (i, item) in items.iter().enumerate() {
                match item {
                    Value::Number(_) => out.push(Complex64::new(finite(item, field)?, 0.0)),
                    Value::String(s) => out.extend(parse_pole_items(s).map_err(|e| InputError::new(field, format!("entry {}: {e}", i + 1)))?),
                    Value::Array(pair) if pair.len() == 2 => {
                        let re = finite(&pair[0], field).map_err(|_| InputError::new(field, format!("entry {}: the real part {} is not a finite number", i + 1, short(&pair[0]))))?;
                        let im = finite(&pair[1], field).map_err(|_| InputError::new(field, format!("entry {}: the imaginary part {} is not a finite number", i + 1, short(&pair[1]))))?;
                        out.push(Complex64::new(re, im));
                    }
                    other => {
                        return Err(InputError::new(field, format!("entry {}: {} is not a pole; use [re, im], a number or a string like \"-1+2j\"", i + 1, short(other))))
                    }
                }
            }
        }
        other => return Err(InputError::new(field, format!("expected a list of poles, found {}", kind(other)))),
    }
    check_conjugate_pairs(&out).map_err(|e| InputError::new(field, e.to_string()))?;
    Ok(out)
}

fn kind(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true/false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

fn short(v: &Value) -> String {
    let s = v.to_string();
    if s.chars().count() > 40 {
        format!("{}…", s.chars().take(40).collect::<String>())
    } else {
        s
    }
}

fn object<'a>(v: &'a Value, field: &str, allowed: &[&str]) -> Result<&'a serde_json::Map<String, Value>, InputError> {
    let Value::Object(map) = v else {
        return Err(InputError::new(field, format!("expected an object {{ … }}, found {}", kind(v))));
    };
    for key in map.keys() {
        if !allowed.contains(&key.as_str()) {
            let path = if field.is_empty() { key.clone() } else { format!("{field}.{key}") };
            return Err(InputError::new(path, format!("unknown key \"{key}\"; allowed here: {}", allowed.join(", "))));
        }
    }
    Ok(map)
}

fn path(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

/// Parses and validates a design file (version 1 features only; see [`parse_design_full`]).
///
/// # Errors
/// An [`InputError`] naming the field.
pub fn parse_design(text: &str) -> Result<DesignRequest, InputError> {
    parse_design_full(text).map(|(r, _)| r)
}

fn positive(v: &Value, field: &str) -> Result<f64, InputError> {
    let x = finite(v, field)?;
    if x > 0.0 {
        Ok(x)
    } else {
        Err(InputError::new(field, format!("{x} must be a positive number")))
    }
}

fn non_negative(v: &Value, field: &str) -> Result<f64, InputError> {
    let x = finite(v, field)?;
    if x >= 0.0 {
        Ok(x)
    } else {
        Err(InputError::new(field, format!("{x} must be zero or positive")))
    }
}

/// Output selection: names or 1-based indices.
fn outputs_from_value(v: Option<&Value>, plant: &Plant, field: &str) -> Result<Vec<usize>, InputError> {
    let p = plant.outputs();
    let Some(v) = v else { return Ok((0..p).collect()) };
    let Value::Array(items) = v else {
        return Err(InputError::new(field, format!("expected a list of output names or numbers (1 = first output), found {}", kind(v))));
    };
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let idx = match item {
            Value::String(name) => plant.output_names().iter().position(|n| n == name.trim()).ok_or_else(|| {
                InputError::new(field, format!("entry {}: no output is named \"{}\"; the outputs are {}", i + 1, name, plant.output_names().join(", ")))
            })?,
            Value::Number(_) => match item.as_u64() {
                Some(k) if k >= 1 && (k as usize) <= p => k as usize - 1,
                _ => return Err(InputError::new(field, format!("entry {}: {} is not an output number from 1 to {p}", i + 1, short(item)))),
            },
            other => return Err(InputError::new(field, format!("entry {}: {} is not an output name or number", i + 1, short(other)))),
        };
        if out.contains(&idx) {
            return Err(InputError::new(field, format!("entry {}: output {} is listed twice", i + 1, idx + 1)));
        }
        out.push(idx);
    }
    if out.is_empty() {
        return Err(InputError::new(field, "no outputs listed; name at least one output to track"));
    }
    Ok(out)
}

/// Parses and validates a design file, version 1 or 2.
///
/// # Errors
/// An [`InputError`] naming the field.
pub fn parse_design_full(text: &str) -> Result<(DesignRequest, ControllerSpec), InputError> {
    use crate::controller::{AntiWindup, ObserverForm};
    let doc: Value = serde_json::from_str(text).map_err(|e| InputError::new("(file)", format!("not valid JSON: {e}")))?;
    let top = object(
        &doc,
        "",
        &["format", "version", "plant", "feedback", "actuators", "simulation", "implementation", "observer", "tracking", "anti_windup", "search", "comment", "description"],
    )?;
    match top.get("format") {
        Some(Value::String(s)) if s == DESIGN_FORMAT => {}
        Some(other) => return Err(InputError::new("format", format!("expected \"{DESIGN_FORMAT}\", found {}", short(other)))),
        None => return Err(InputError::new("format", format!("missing; add \"format\": \"{DESIGN_FORMAT}\""))),
    }
    match top.get("version").and_then(|v| v.as_u64()) {
        Some(v) if (1..=DESIGN_VERSION).contains(&v) => {}
        Some(v) => return Err(InputError::new("version", format!("version {v} is newer than this build reads (up to {DESIGN_VERSION}); use a newer Polewright"))),
        None => return Err(InputError::new("version", "missing or not a whole number; add \"version\": 1")),
    }
    let version = top.get("version").and_then(|v| v.as_u64()).unwrap_or(1);
    if version < 2 {
        for key in ["implementation", "observer", "tracking", "anti_windup", "search"] {
            if top.contains_key(key) {
                return Err(InputError::new(key, format!("\"{key}\" is a version-2 feature; set \"version\": 2")));
            }
        }
    }
    let plant_v = top.get("plant").ok_or_else(|| InputError::new("plant", "missing; give at least \"a\" and \"b\""))?;
    let plant = plant_from_value(plant_v, "plant")?;
    let fb = top.get("feedback").ok_or_else(|| InputError::new("feedback", "missing; give \"feedback\": {\"poles\": [...]}"))?;
    let fbm = object(fb, "feedback", &["poles", "plane", "pattern", "spec", "lqr"])?;
    let given = ["poles", "pattern", "spec", "lqr"].iter().filter(|k| fbm.contains_key(**k)).count();
    if given != 1 {
        return Err(InputError::new("feedback", "give exactly one of \"poles\" (the closed-loop poles), \"pattern\" (a prototype scaled to a settling time or bandwidth), \"spec\" (overshoot and settling time) or \"lqr\" (weights)"));
    }
    if version < 2 && (fbm.contains_key("pattern") || fbm.contains_key("spec") || fbm.contains_key("lqr")) {
        return Err(InputError::new("feedback", "\"pattern\", \"spec\" and \"lqr\" are version-2 features; set \"version\": 2"));
    }
    // Patterns and specifications are turned into poles at the end, once the number of
    // closed-loop poles (plant states + integrators) is known.
    let poles = match fbm.get("poles") {
        Some(v) => poles_from_value(v, "feedback.poles")?,
        None => Vec::new(),
    };
    let mut limits = Vec::new();
    if let Some(act) = top.get("actuators") {
        let am = object(act, "actuators", &["limit"])?;
        if let Some(l) = am.get("limit") {
            let vals: Vec<Option<f64>> = match l {
                Value::Array(items) => items
                    .iter()
                    .enumerate()
                    .map(|(i, x)| match x {
                        Value::Null => Ok(None),
                        _ => match x.as_f64() {
                            Some(v) if v.is_finite() && v > 0.0 => Ok(Some(v)),
                            _ => Err(InputError::new("actuators.limit", format!("entry {}: {} must be a positive number (or null for no limit)", i + 1, short(x)))),
                        },
                    })
                    .collect::<Result<_, _>>()?,
                _ => number_vector(l, "actuators.limit")?.into_iter().map(Some).collect(),
            };
            if vals.len() != plant.inputs() {
                return Err(InputError::new("actuators.limit", format!("{} limits given but the plant has {} inputs; give one per input", vals.len(), plant.inputs())));
            }
            for (i, v) in vals.iter().enumerate() {
                if let Some(v) = v {
                    if !(*v > 0.0) {
                        return Err(InputError::new("actuators.limit", format!("entry {}: {v} must be positive", i + 1)));
                    }
                }
            }
            limits = vals;
        }
    }
    let mut initial_state = None;
    let mut duration = None;
    let mut band = metrics::DEFAULT_BAND;
    if let Some(sim) = top.get("simulation") {
        let sm = object(sim, "simulation", &["initial_state", "duration", "band", "reference", "reference_time", "disturbance", "disturbance_time", "noise_std", "seed", "initial_estimate"])?;
        if let Some(x0) = sm.get("initial_state") {
            let x = number_vector(x0, "simulation.initial_state")?;
            if x.len() != plant.states() {
                return Err(InputError::new("simulation.initial_state", format!("{} values given but the plant has {} states; give one per state", x.len(), plant.states())));
            }
            initial_state = Some(x);
        }
        if let Some(d) = sm.get("duration") {
            let d = finite(d, "simulation.duration")?;
            if !(d > 0.0) {
                return Err(InputError::new("simulation.duration", format!("{d} must be a positive number of seconds")));
            }
            duration = Some(d);
        }
        if let Some(b) = sm.get("band") {
            let b = finite(b, "simulation.band")?;
            if !(b > 0.0 && b < 1.0) {
                return Err(InputError::new("simulation.band", format!("{b} must be a fraction between 0 and 1, e.g. 0.02 for 2 %")));
            }
            band = b;
        }
    }
    let request = DesignRequest { plant, poles, limits, initial_state, duration, band };

    // ---- version 2: digital implementation, observer, tracking, anti-windup, loop scenario.
    let mut spec = ControllerSpec::default();
    let plant = &request.plant;
    if let Some(t) = plant_v.get("sample_time") {
        spec.plant_sample_time = Some(positive(t, "plant.sample_time")?);
    }
    if let Some(pl) = fbm.get("plane") {
        spec.plane = match pl.as_str() {
            Some("s") => Plane::S,
            Some("z") => Plane::Z,
            _ => return Err(InputError::new("feedback.plane", format!("{} must be \"s\" (continuous targets) or \"z\" (discrete targets)", short(pl)))),
        };
    }
    if let Some(imp) = top.get("implementation") {
        let im = object(imp, "implementation", &["sample_time", "method", "computation_delay", "delay_poles"])?;
        if spec.plant_sample_time.is_some() {
            return Err(InputError::new("implementation", "the plant is already discrete (plant.sample_time); remove one of the two"));
        }
        let t = positive(im.get("sample_time").ok_or_else(|| InputError::new("implementation.sample_time", "missing; give the controller's sample time in seconds"))?, "implementation.sample_time")?;
        if let Some(mth) = im.get("method") {
            if mth.as_str() != Some("zoh") {
                return Err(InputError::new("implementation.method", format!("{} is not supported; use \"zoh\" (zero-order hold)", short(mth))));
            }
        }
        let delay = match im.get("computation_delay") {
            None => false,
            Some(Value::Bool(b)) => *b,
            Some(other) => return Err(InputError::new("implementation.computation_delay", format!("{} must be true or false", short(other)))),
        };
        let delay_poles = match im.get("delay_poles") {
            None => vec![Complex64::new(0.0, 0.0); plant.inputs()],
            Some(v) => {
                let p = poles_from_value(v, "implementation.delay_poles")?;
                if p.len() != plant.inputs() {
                    return Err(InputError::new("implementation.delay_poles", format!("{} given but there are {} inputs; give one z-plane pole per input", p.len(), plant.inputs())));
                }
                p
            }
        };
        if !delay && im.contains_key("delay_poles") {
            return Err(InputError::new("implementation.delay_poles", "delay poles are only used with \"computation_delay\": true"));
        }
        spec.implementation = Some(Implementation { sample_time: t, computation_delay: delay, delay_poles });
    }
    if spec.plane == Plane::Z && spec.sample_time().is_none() {
        return Err(InputError::new("feedback.plane", "z-plane poles need a digital design: give implementation.sample_time or plant.sample_time"));
    }
    if let Some(obs) = top.get("observer") {
        let om = object(obs, "observer", &["poles", "speed_factor", "form"])?;
        if plant.c().is_none() {
            return Err(InputError::new("observer", "an observer needs measurements: give plant.c (outputs × states)"));
        }
        let poles = match (om.get("poles"), om.get("speed_factor")) {
            (Some(_), Some(_)) => return Err(InputError::new("observer", "give either \"poles\" or \"speed_factor\", not both")),
            (Some(v), None) => {
                let p = poles_from_value(v, "observer.poles")?;
                if p.len() != plant.states() {
                    return Err(InputError::new("observer.poles", format!("{} poles given but the observer has {} states", p.len(), plant.states())));
                }
                ObserverPoles::Given(p)
            }
            (None, Some(v)) => ObserverPoles::SpeedFactor(positive(v, "observer.speed_factor")?),
            (None, None) => ObserverPoles::SpeedFactor(4.0),
        };
        let form = match om.get("form").map(|v| v.as_str()) {
            None | Some(Some("predictor")) => ObserverForm::Predictor,
            Some(Some("current")) => ObserverForm::Current,
            Some(_) => return Err(InputError::new("observer.form", "must be \"predictor\" (uses the previous measurement) or \"current\" (corrects with the current one)")),
        };
        if form == ObserverForm::Current && spec.sample_time().is_none() {
            return Err(InputError::new("observer.form", "the current-estimator form is for digital controllers; give implementation.sample_time"));
        }
        spec.observer = Some(ObserverSpec { poles, form });
    }
    if let Some(tr) = top.get("tracking") {
        let tm = object(tr, "tracking", &["mode", "outputs", "integral_poles"])?;
        if plant.c().is_none() {
            return Err(InputError::new("tracking", "tracking needs outputs: give plant.c"));
        }
        let outputs = outputs_from_value(tm.get("outputs"), plant, "tracking.outputs")?;
        spec.tracking = match tm.get("mode").and_then(|v| v.as_str()) {
            Some("none") => TrackingSpec::None,
            Some("feedforward") => TrackingSpec::Feedforward { outputs },
            Some("integral") => {
                let integral_poles = match tm.get("integral_poles") {
                    None => Vec::new(),
                    Some(v) => {
                        let p = poles_from_value(v, "tracking.integral_poles")?;
                        if p.len() != outputs.len() {
                            return Err(InputError::new("tracking.integral_poles", format!("{} given but {} outputs are tracked; give one pole per integrator", p.len(), outputs.len())));
                        }
                        p
                    }
                };
                TrackingSpec::Integral { outputs, integral_poles }
            }
            _ => return Err(InputError::new("tracking.mode", "must be \"feedforward\", \"integral\" or \"none\"")),
        };
    }
    if let Some(aw) = top.get("anti_windup") {
        let am = object(aw, "anti_windup", &["mode", "time_constant"])?;
        spec.anti_windup = match am.get("mode").and_then(|v| v.as_str()) {
            Some("none") => AntiWindup::None,
            Some("clamp") => AntiWindup::Clamp,
            Some("back_calculation") => {
                let tt = positive(am.get("time_constant").ok_or_else(|| InputError::new("anti_windup.time_constant", "missing; back-calculation needs a tracking time constant in seconds"))?, "anti_windup.time_constant")?;
                AntiWindup::BackCalculation { time_constant: tt }
            }
            _ => return Err(InputError::new("anti_windup.mode", "must be \"none\", \"clamp\" (conditional integration) or \"back_calculation\"")),
        };
        if !matches!(spec.tracking, TrackingSpec::Integral { .. }) && spec.anti_windup != AntiWindup::None {
            return Err(InputError::new("anti_windup", "anti-windup acts on the integrator: it needs \"tracking\": {\"mode\": \"integral\"}"));
        }
    }
    if let Some(sim) = top.get("simulation") {
        let sm = object(sim, "simulation", &["initial_state", "duration", "band", "reference", "reference_time", "disturbance", "disturbance_time", "noise_std", "seed", "initial_estimate"])?;
        let tracked = match &spec.tracking {
            TrackingSpec::None => 0,
            TrackingSpec::Feedforward { outputs } | TrackingSpec::Integral { outputs, .. } => outputs.len(),
        };
        if let Some(v) = sm.get("reference") {
            let r = number_vector(v, "simulation.reference")?;
            if r.len() != tracked {
                return Err(InputError::new("simulation.reference", format!("{} values given but {tracked} outputs are tracked; give one per tracked output", r.len())));
            }
            spec.scenario.reference = r;
        }
        if let Some(v) = sm.get("reference_time") {
            spec.scenario.reference_time = non_negative(v, "simulation.reference_time")?;
        }
        if let Some(v) = sm.get("disturbance") {
            let w = number_vector(v, "simulation.disturbance")?;
            if w.len() != plant.inputs() {
                return Err(InputError::new("simulation.disturbance", format!("{} values given but the plant has {} inputs; give one load disturbance per input", w.len(), plant.inputs())));
            }
            spec.scenario.disturbance = w;
        }
        if let Some(v) = sm.get("disturbance_time") {
            spec.scenario.disturbance_time = non_negative(v, "simulation.disturbance_time")?;
        }
        if let Some(v) = sm.get("noise_std") {
            let ns = number_vector(v, "simulation.noise_std")?;
            if ns.len() != plant.outputs() {
                return Err(InputError::new("simulation.noise_std", format!("{} values given but the plant has {} outputs", ns.len(), plant.outputs())));
            }
            if ns.iter().any(|x| *x < 0.0) {
                return Err(InputError::new("simulation.noise_std", "standard deviations cannot be negative"));
            }
            spec.scenario.noise_std = ns;
        }
        if let Some(v) = sm.get("seed") {
            spec.scenario.seed = v.as_u64().ok_or_else(|| InputError::new("simulation.seed", format!("{} must be a whole number ≥ 0", short(v))))?;
        }
        if let Some(v) = sm.get("initial_estimate") {
            let x = number_vector(v, "simulation.initial_estimate")?;
            if x.len() != plant.states() {
                return Err(InputError::new("simulation.initial_estimate", format!("{} values given but the plant has {} states", x.len(), plant.states())));
            }
            spec.scenario.initial_estimate = Some(x);
        }
    }
    if let Some(se) = top.get("search") {
        let sm = object(se, "search", &["fastest_within_limits", "situations"])?;
        match sm.get("fastest_within_limits") {
            Some(Value::Bool(true)) => {}
            Some(Value::Bool(false)) | None => return Err(InputError::new("search.fastest_within_limits", "set it to true to search (or remove the search section)")),
            Some(other) => return Err(InputError::new("search.fastest_within_limits", format!("{} must be true or false", short(other)))),
        }
        if request.limits.iter().all(|l| l.is_none()) {
            return Err(InputError::new("search", "the search needs actuator limits: give actuators.limit"));
        }
        if request.limits.iter().any(|l| l.is_none()) {
            return Err(InputError::new("actuators.limit", "the search needs a limit for every input"));
        }
        if spec.sample_time().is_some() {
            return Err(InputError::new("search", "the search works on continuous designs; remove the sample time, search, then discretise"));
        }
        let Some(Value::Array(items)) = sm.get("situations") else {
            return Err(InputError::new("search.situations", "missing; list situations such as {\"initial_state\": [...]} or {\"reference\": [...]}"));
        };
        if items.is_empty() {
            return Err(InputError::new("search.situations", "empty; list at least one situation"));
        }
        let mut situations = Vec::new();
        for (i, item) in items.iter().enumerate() {
            let field = format!("search.situations[{}]", i + 1);
            let im = object(item, &field, &["initial_state", "reference"])?;
            match (im.get("initial_state"), im.get("reference")) {
                (Some(x), None) => {
                    let x = number_vector(x, &field)?;
                    if x.len() != plant.states() {
                        return Err(InputError::new(field, format!("{} values given but the plant has {} states", x.len(), plant.states())));
                    }
                    situations.push(crate::search::Situation::InitialState(x));
                }
                (None, Some(r)) => {
                    let r = number_vector(r, &field)?;
                    if plant.c().is_none() {
                        return Err(InputError::new(field, "a reference situation needs outputs: give plant.c"));
                    }
                    if r.len() != plant.outputs() {
                        return Err(InputError::new(field, format!("{} values given but the plant has {} outputs", r.len(), plant.outputs())));
                    }
                    situations.push(crate::search::Situation::ReferenceStep(r));
                }
                _ => return Err(InputError::new(field, "give exactly one of \"initial_state\" or \"reference\"")),
            }
        }
        spec.search = Some(situations);
    }
    let mut request = request;
    if let Some(lv) = fbm.get("lqr") {
        let lm = object(lv, "feedback.lqr", &["q", "r", "bryson"])?;
        spec.lqr = Some(match (lm.get("q"), lm.get("r"), lm.get("bryson")) {
            (Some(q), Some(r), None) => LqrWeights::Matrices { q: number_matrix(q, "feedback.lqr.q")?, r: number_matrix(r, "feedback.lqr.r")? },
            (None, None, Some(b)) => {
                let bm = object(b, "feedback.lqr.bryson", &["max_state", "max_input"])?;
                let get = |k: &str| -> Result<Vec<f64>, InputError> {
                    let f = format!("feedback.lqr.bryson.{k}");
                    number_vector(bm.get(k).ok_or_else(|| InputError::new(f.clone(), "missing; give the largest acceptable excursion of each"))?, &f)
                };
                LqrWeights::Bryson { max_state: get("max_state")?, max_input: get("max_input")? }
            }
            _ => return Err(InputError::new("feedback.lqr", "give \"q\" and \"r\" (weight matrices), or \"bryson\": {\"max_state\": [...], \"max_input\": [...]}")),
        });
        return Ok((request, spec));
    }
    if request.poles.is_empty() {
        let integrators = match &spec.tracking {
            TrackingSpec::Integral { outputs, integral_poles } if integral_poles.is_empty() => outputs.len(),
            _ => 0,
        };
        let order = request.plant.states() + integrators;
        if spec.plane == Plane::Z && (fbm.contains_key("pattern") || fbm.contains_key("spec")) {
            return Err(InputError::new(
                "feedback.plane",
                "a pattern or a specification gives s-plane poles: use \"plane\": \"s\" (the default; a digital design maps them with z = e^(sT)), or list z-plane poles in \"poles\"",
            ));
        }
        let choice = pole_choice_from_value(fbm, order, request.band)?;
        request.poles = choice.poles.clone();
        spec.pole_choice = Some(choice);
    }
    Ok((request, spec))
}

/// How Polewright is asked to choose the closed-loop poles when they are not listed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PoleRequest {
    /// A prototype pattern scaled to a target. The settling band, when it matters, is part
    /// of the pattern (a Bessel pattern normalised to a unit settling time) and of the target.
    Pattern { pattern: crate::patterns::Pattern, target: crate::patterns::ScaleTarget },
    /// A time-response specification: the dominant pair at the corner of its region and the
    /// other poles faster ([`crate::patterns::poles_from_specification`]).
    Specification(crate::patterns::Specification),
}

/// Chooses `order` closed-loop poles (plant states, plus the integrators when their poles are
/// not listed apart) as `request` asks: the poles, a plain description of how they were
/// obtained and, for a specification, its admissible region. The design file and the page
/// both go through here.
///
/// # Errors
/// The [`crate::patterns::PatternError`] of the pattern or specification (an invalid number,
/// an order the pattern lacks, a failed settling or frequency computation).
pub fn choose_poles(request: &PoleRequest, order: usize) -> Result<PoleChoice, crate::patterns::PatternError> {
    use crate::patterns::{poles_from_specification, scaled_prototype_poles, specification_region, DominantPairParams, Pattern, ResponseParams, ScaleTarget};
    match request {
        PoleRequest::Pattern { pattern, target } => {
            let scaled = scaled_prototype_poles(*pattern, order, *target, &ResponseParams::default())?;
            let method = match pattern {
                Pattern::Bessel(_) => "bessel",
                Pattern::Butterworth => "butterworth",
                Pattern::Itae => "itae",
                Pattern::Binomial => "binomial",
            };
            let description = match target {
                ScaleTarget::SettlingTime { seconds, band } => format!(
                    "{} pattern of order {order} ({:?}), scaled so that its own step response settles into ±{} % at {} s",
                    pattern.name(),
                    scaled.prototype.normalisation,
                    fmt_num(band * 100.0),
                    fmt_num(*seconds)
                ),
                ScaleTarget::Bandwidth { rad_per_s } => format!("{} pattern of order {order} ({:?}), scaled to a −3 dB bandwidth of {} rad/s", pattern.name(), scaled.prototype.normalisation, fmt_num(*rad_per_s)),
            };
            Ok(PoleChoice { method, description, poles: scaled.poles, region: None })
        }
        PoleRequest::Specification(spec) => {
            let region = specification_region(spec)?;
            let chosen = poles_from_specification(spec, order, &DominantPairParams::default())?;
            let description = format!(
                "dominant pair at ζ = {}, σ = {} 1/s from {} % overshoot and {} s settling (±{} %; second-order formulas, an approximation: confirm by simulation), the other {} pole(s) five times faster",
                fmt_num(region.min_damping),
                fmt_num(region.min_decay_rate),
                fmt_num(spec.overshoot * 100.0),
                fmt_num(spec.settling_time),
                fmt_num(spec.settling_band * 100.0),
                order.saturating_sub(2)
            );
            Ok(PoleChoice { method: "specification", description, poles: chosen.poles, region: Some(region) })
        }
    }
}

/// Reads `feedback.pattern` or `feedback.spec` into a [`PoleRequest`] and chooses the poles.
fn pole_choice_from_value(fbm: &serde_json::Map<String, Value>, order: usize, default_band: f64) -> Result<PoleChoice, InputError> {
    use crate::patterns::{BesselNormalisation, Pattern, ScaleTarget, SettlingRule, Specification, SpeedRequirement};
    let band_of = |m: &serde_json::Map<String, Value>, field: &str| -> Result<f64, InputError> {
        match m.get("band") {
            None => Ok(default_band),
            Some(v) => {
                let b = finite(v, field)?;
                if b > 0.0 && b < 1.0 {
                    Ok(b)
                } else {
                    Err(InputError::new(field, format!("{b} must be a fraction between 0 and 1, e.g. 0.02 for 2 %")))
                }
            }
        }
    };
    if let Some(pv) = fbm.get("pattern") {
        let pm = object(pv, "feedback.pattern", &["family", "normalisation", "settling_time", "bandwidth", "band"])?;
        let band = band_of(pm, "feedback.pattern.band")?;
        let pattern = match pm.get("family").and_then(|v| v.as_str()) {
            Some("bessel") => Pattern::Bessel(match pm.get("normalisation").and_then(|v| v.as_str()) {
                None | Some("unit_settling_time") => BesselNormalisation::UnitSettlingTime { band },
                Some("unit_group_delay") => BesselNormalisation::UnitDcGroupDelay,
                Some("half_power_at_unit_frequency") => BesselNormalisation::HalfPowerAtUnitFrequency,
                Some(other) => {
                    return Err(InputError::new(
                        "feedback.pattern.normalisation",
                        format!("\"{other}\" is not a Bessel normalisation; use \"unit_settling_time\", \"unit_group_delay\" or \"half_power_at_unit_frequency\""),
                    ))
                }
            }),
            Some("butterworth") => Pattern::Butterworth,
            Some("itae") => Pattern::Itae,
            Some("binomial") => Pattern::Binomial,
            _ => return Err(InputError::new("feedback.pattern.family", "must be \"bessel\", \"butterworth\", \"itae\" or \"binomial\"")),
        };
        if pm.contains_key("normalisation") && !matches!(pattern, Pattern::Bessel(_)) {
            return Err(InputError::new("feedback.pattern.normalisation", "only the Bessel pattern has a choice of normalisation"));
        }
        let target = match (pm.get("settling_time"), pm.get("bandwidth")) {
            (Some(t), None) => ScaleTarget::SettlingTime { seconds: positive(t, "feedback.pattern.settling_time")?, band },
            (None, Some(w)) => ScaleTarget::Bandwidth { rad_per_s: positive(w, "feedback.pattern.bandwidth")? },
            _ => return Err(InputError::new("feedback.pattern", "give exactly one of \"settling_time\" (s) or \"bandwidth\" (rad/s) to scale the pattern")),
        };
        return choose_poles(&PoleRequest::Pattern { pattern, target }, order).map_err(|e| InputError::new("feedback.pattern", e.to_string()));
    }
    let Some(sv) = fbm.get("spec") else {
        return Err(InputError::new("feedback", "give the poles, a pattern or a specification"));
    };
    let sm = object(sv, "feedback.spec", &["overshoot", "settling_time", "band", "rise_time", "bandwidth"])?;
    let overshoot = finite(sm.get("overshoot").ok_or_else(|| InputError::new("feedback.spec.overshoot", "missing; give the largest overshoot as a fraction, e.g. 0.05 for 5 %"))?, "feedback.spec.overshoot")?;
    let settling_time = positive(sm.get("settling_time").ok_or_else(|| InputError::new("feedback.spec.settling_time", "missing; give the settling time in seconds"))?, "feedback.spec.settling_time")?;
    let band = band_of(sm, "feedback.spec.band")?;
    let speed = match (sm.get("rise_time"), sm.get("bandwidth")) {
        (None, None) => None,
        (Some(t), None) => Some(SpeedRequirement::RiseTime { seconds: positive(t, "feedback.spec.rise_time")? }),
        (None, Some(w)) => Some(SpeedRequirement::Bandwidth { rad_per_s: positive(w, "feedback.spec.bandwidth")? }),
        _ => return Err(InputError::new("feedback.spec", "give at most one of \"rise_time\" and \"bandwidth\"")),
    };
    let spec = Specification { overshoot, settling_time, settling_band: band, settling_rule: SettlingRule::EnvelopeBound, speed };
    choose_poles(&PoleRequest::Specification(spec), order).map_err(|e| InputError::new("feedback.spec", e.to_string()))
}

/// Reads and validates the `plant` object.
///
/// # Errors
/// An [`InputError`] naming the field.
pub fn plant_from_value(v: &Value, field: &str) -> Result<Plant, InputError> {
    let keys = ["a", "b", "c", "d", "state_names", "input_names", "output_names", "state_units", "input_units", "output_units", "sample_time"];
    let pm = object(v, field, &keys)?;
    let a = number_matrix(pm.get("a").ok_or_else(|| InputError::new(path(field, "a"), "missing; give the state matrix A (states × states)"))?, &path(field, "a"))?;
    let b_v = pm.get("b").ok_or_else(|| InputError::new(path(field, "b"), "missing; give the input matrix B (states × inputs)"))?;
    let mut b = number_matrix(b_v, &path(field, "b"))?;
    if b.nrows() == 1 && b.ncols() == a.nrows() && a.nrows() > 1 && matches!(b_v, Value::Array(r) if r.iter().all(|x| x.is_number())) {
        b = b.transpose();
    }
    let c = pm.get("c").map(|v| number_matrix(v, &path(field, "c"))).transpose()?;
    let d = pm.get("d").map(|v| number_matrix(v, &path(field, "d"))).transpose()?;
    let list = |k: &str| -> Result<Vec<String>, InputError> { pm.get(k).map(|v| names(v, &path(field, k))).transpose().map(|o| o.unwrap_or_default()) };
    let spec = PlantSpec {
        a,
        b,
        c,
        d,
        state_names: list("state_names")?,
        input_names: list("input_names")?,
        output_names: list("output_names")?,
        state_units: list("state_units")?,
        input_units: list("input_units")?,
        output_units: list("output_units")?,
    };
    Plant::new(spec).map_err(|e| {
        let s = e.to_string();
        match s.split_once(": ") {
            Some((k, rest)) => InputError::new(path(field, k), rest.to_string()),
            None => InputError::new(field, s),
        }
    })
}

// ---------------------------------------------------------------------------------------------
// The result.

/// `[re, im]`.
pub type Pair = [f64; 2];

fn pair(z: Complex64) -> Pair {
    [z.re, if z.im == 0.0 { 0.0 } else { z.im }]
}

fn rows(m: &DMatrix<f64>) -> Vec<Vec<f64>> {
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
    pub feedback: FeedbackResult,
    pub controllability: StructureResult,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub observability: Option<StructureResult>,
    pub simulation: SimulationResult,
    pub warnings: Vec<Warning>,
    /// `"continuous"` or `"discrete"` (version 2).
    pub domain: &'static str,
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
}

#[derive(Debug, Clone, Serialize)]
pub struct LqrResult {
    /// The Riccati solution `X` of the design pair.
    pub riccati_solution: Vec<Vec<f64>>,
    /// Its normalised residual.
    pub residual: f64,
    /// The LQR gain itself (inputs × design states). With one input it equals the placed gain;
    /// with several, the placed gain has the same poles but robust eigenvectors instead.
    pub gain: Vec<Vec<f64>>,
    pub closed_loop_poles: Vec<Pair>,
    pub q: Vec<Vec<f64>>,
    pub r: Vec<Vec<f64>>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PoleChoiceResult {
    pub method: &'static str,
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
    pub evaluations: usize,
}

#[derive(Debug, Clone, Serialize)]
pub struct DiscretePlantResult {
    pub a: Vec<Vec<f64>>,
    pub b: Vec<Vec<f64>>,
    pub sample_time: f64,
    pub method: &'static str,
    pub computation_delay: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct ObserverResult {
    /// `L`, states × outputs (predictor form, or the continuous observer).
    pub gain: Vec<Vec<f64>>,
    /// `L_c = Φ⁻¹ L` for the current-estimator form.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub current_gain: Option<Vec<Vec<f64>>>,
    pub form: &'static str,
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
    Feedforward { outputs: Vec<String>, nx: Vec<Vec<f64>>, nu: Vec<Vec<f64>> },
    Integral { outputs: Vec<String>, state_gain: Vec<Vec<f64>>, integral_gain: Vec<Vec<f64>>, anti_windup: &'static str, time_constant: Option<f64> },
}

#[derive(Debug, Clone, Serialize)]
pub struct SampleRateResult {
    pub bandwidth: f64,
    pub samples_per_bandwidth: f64,
    pub verdict: &'static str,
    pub message: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct OutputLoopMetrics {
    pub name: String,
    pub reference: f64,
    pub rise_time: Option<f64>,
    pub settling_time: Option<f64>,
    pub overshoot: f64,
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
    pub observer_form: Option<&'static str>,
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
}

#[derive(Debug, Clone, Serialize)]
pub struct ModeResult {
    pub pole: Pair,
    pub margin: f64,
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
    /// Per input, peak of the commanded `|−K x|`.
    pub peak_input: Vec<f64>,
    pub input_limit: Vec<Option<f64>>,
    pub first_saturation: Vec<Option<f64>>,
    pub time_saturated: Vec<f64>,
}

fn structure(r: &ModalReport) -> StructureResult {
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

/// Runs a design: analysis, placement, simulation, metrics and warnings.
///
/// # Errors
/// [`DesignError::Infeasible`] when the design cannot be done as asked (with the reason);
/// [`DesignError::Input`] for input that only turns out inconsistent here.
pub fn run(req: &DesignRequest) -> Result<DesignResult, DesignError> {
    run_with(req, &ControllerSpec::default())
}

/// Simulates a loop around the plant as given: continuous (any controller) or discrete.
fn run_loop(plant: &Plant, spec: &ControllerSpec, ctrl: &crate::loop_sim::LoopController, sc: &crate::loop_sim::LoopScenario) -> Result<crate::loop_sim::LoopResponse, crate::loop_sim::LoopError> {
    let n = plant.states();
    let m = plant.inputs();
    let (c, d) = match (plant.c(), plant.d()) {
        (Some(c), Some(d)) => (c.clone(), d.clone()),
        (Some(c), None) => (c.clone(), DMatrix::zeros(c.nrows(), m)),
        _ => (DMatrix::zeros(0, n), DMatrix::zeros(0, m)),
    };
    if spec.plant_sample_time.is_some() {
        crate::loop_sim::simulate_sampled_loop(plant.a(), plant.b(), &c, &d, ctrl, sc)
    } else {
        crate::loop_sim::simulate_loop(plant.a(), plant.b(), &c, &d, ctrl, sc)
    }
}

/// Keeps conjugate pairs together while taking the `count` fastest poles (a leftover single slot
/// takes the real part of the next pair).
fn fastest_poles(poles: &[Complex64], count: usize) -> Vec<Complex64> {
    let mut units: Vec<Complex64> = poles.iter().filter(|z| z.im >= 0.0).cloned().collect();
    units.sort_by(|x, y| y.norm().total_cmp(&x.norm()));
    let mut out = Vec::new();
    for z in units {
        if out.len() >= count {
            break;
        }
        if z.im > 0.0 && out.len() + 2 <= count {
            out.push(z);
            out.push(z.conj());
        } else if z.im > 0.0 {
            out.push(Complex64::new(z.re, 0.0));
        } else {
            out.push(z);
        }
    }
    out
}

/// Runs a design with the version-2 controller features: digital implementation, observer,
/// tracking, integral action with anti-windup, and the whole-loop simulation.
///
/// # Errors
/// See [`DesignError`].
pub fn run_with(req: &DesignRequest, spec: &ControllerSpec) -> Result<DesignResult, DesignError> {
    use crate::analysis::Domain;
    use crate::controller::{delay_augmented, discretise, feedforward_gains, integral_augmented, map_to_continuous, map_to_discrete, observer_gain, sample_rate_advice, ObserverForm};
    let plant = &req.plant;
    let (a, b) = (plant.a(), plant.b());
    let n = plant.states();
    let m = plant.inputs();
    let wp = WarningParams::default();
    let t = spec.sample_time();
    let domain = if t.is_some() { Domain::Discrete } else { Domain::Continuous };
    let ap = AnalysisParams { domain, ..AnalysisParams::default() };
    let pp = PlacementParams { domain, ..PlacementParams::default() };
    let infeasible = |e: &dyn std::fmt::Display| DesignError::Infeasible { message: e.to_string() };
    let pole_input = |e: crate::place::PlacementError, field: &str| match e {
        crate::place::PlacementError::PoleCount { .. } | crate::place::PlacementError::InvalidPoles { .. } | crate::place::PlacementError::RepeatedBeyondRank { .. } => {
            DesignError::Input(InputError::new(field, e.to_string()))
        }
        other => DesignError::Infeasible { message: other.to_string() },
    };
    // The plant in the design domain.
    let (ad, bd) = match (spec.plant_sample_time, &spec.implementation) {
        (None, Some(imp)) => {
            let dp = discretise(a, b, imp.sample_time).map_err(|e| infeasible(&e))?;
            (dp.phi, dp.gamma)
        }
        _ => (a.clone(), b.clone()),
    };
    let to_design = |poles: &[Complex64]| -> Vec<Complex64> {
        match (t, spec.plane) {
            (Some(t), Plane::S) => map_to_discrete(poles, t),
            _ => poles.to_vec(),
        }
    };
    let to_s = |poles: &[Complex64]| -> Vec<Complex64> {
        match (t, spec.plane) {
            (Some(t), Plane::Z) => poles.iter().map(|z| map_to_continuous(*z, t)).collect(),
            _ => poles.to_vec(),
        }
    };
    let delay = spec.implementation.as_ref().is_some_and(|i| i.computation_delay);
    let (tracked, integral_poles): (Vec<usize>, Option<&Vec<Complex64>>) = match &spec.tracking {
        TrackingSpec::None => (Vec::new(), None),
        TrackingSpec::Feedforward { outputs } => (outputs.clone(), None),
        TrackingSpec::Integral { outputs, integral_poles } => (outputs.clone(), Some(integral_poles)),
    };
    let q = tracked.len();
    let (c_full, d_full) = match (plant.c(), plant.d()) {
        (Some(c), Some(d)) => (c.clone(), d.clone()),
        (Some(c), None) => (c.clone(), DMatrix::zeros(c.nrows(), m)),
        _ => (DMatrix::zeros(0, n), DMatrix::zeros(0, m)),
    };
    let ct = DMatrix::from_fn(q, n, |i, j| c_full[(tracked[i], j)]);
    let dt = DMatrix::from_fn(q, m, |i, j| d_full[(tracked[i], j)]);
    // The design pair: plant, then the delay states, then the integrators.
    let mut da = ad.clone();
    let mut db = bd.clone();
    if spec.lqr.is_some() && spec.search.is_some() {
        return Err(DesignError::Input(InputError::new("search", "the search scales a pole pattern; with LQR weights, scale the weights instead (or list the LQR poles as feedback.poles and search)")));
    }
    let search = match (&spec.search, t) {
        (Some(situations), None) => {
            let limits: Vec<f64> = req.limits.iter().map(|l| l.unwrap_or(f64::INFINITY)).collect();
            let r = crate::search::fastest_within_limits(a, b, plant.c(), &req.poles, &limits, situations, crate::search::SearchParams { band: req.band, ..Default::default() })
                .map_err(|e| infeasible(&e))?;
            Some(r)
        }
        _ => None,
    };
    let mut base_poles: Vec<Complex64> = search.as_ref().map_or_else(|| req.poles.clone(), |r| r.poles.clone());
    let mut dpoles = to_design(&base_poles);
    if let (true, Some(imp)) = (delay, &spec.implementation) {
        let (pa, pb) = delay_augmented(&da, &db);
        da = pa;
        db = pb;
        dpoles.extend(imp.delay_poles.iter().cloned());
    }
    let nd = da.nrows();
    if let Some(ip) = integral_poles {
        let mut ct_d = DMatrix::<f64>::zeros(q, nd);
        ct_d.view_mut((0, 0), (q, n)).copy_from(&ct);
        let (ia, ib) = integral_augmented(&da, &db, &ct_d, &dt, t);
        let aug = crate::analysis::controllability_report(&ia, &ib, ap).map_err(|e| infeasible(&e))?;
        if !aug.is_complete() {
            return Err(DesignError::Infeasible {
                message: crate::controller::ControllerError::IntegralNotControllable {
                    message: format!(
                        "the plant augmented with {q} integrator(s) is not controllable (rank {} of {}): the tracked outputs have a zero at {} or there are more tracked outputs than independent inputs; track fewer outputs or use feedforward",
                        aug.rank,
                        aug.states,
                        if t.is_some() { "z = 1" } else { "s = 0" }
                    ),
                }
                .to_string(),
            });
        }
        da = ia;
        db = ib;
        dpoles.extend(to_design(ip));
    }
    // LQR: the poles are those of the LQR closed loop of the design pair.
    let lqr = match &spec.lqr {
        None => None,
        Some(w) => {
            let (qw, rw) = match w {
                LqrWeights::Matrices { q, r } => (q.clone(), r.clone()),
                LqrWeights::Bryson { max_state, max_input } => {
                    if max_state.len() != da.nrows() {
                        return Err(DesignError::Input(InputError::new("feedback.lqr.bryson.max_state", format!("{} values given but the design has {} states (plant, delay and integrator states)", max_state.len(), da.nrows()))));
                    }
                    if max_input.len() != m {
                        return Err(DesignError::Input(InputError::new("feedback.lqr.bryson.max_input", format!("{} values given but the plant has {m} inputs", max_input.len()))));
                    }
                    crate::riccati::bryson_weights(max_state, max_input).map_err(|e| DesignError::Input(InputError::new("feedback.lqr.bryson", e.to_string())))?
                }
            };
            if qw.shape() != (da.nrows(), da.nrows()) {
                return Err(DesignError::Input(InputError::new("feedback.lqr.q", format!("Q is {}×{} but the design has {} states (plant, delay and integrator states): give a {}×{} matrix", qw.nrows(), qw.ncols(), da.nrows(), da.nrows(), da.nrows()))));
            }
            if rw.shape() != (m, m) {
                return Err(DesignError::Input(InputError::new("feedback.lqr.r", format!("R is {}×{} but the plant has {m} inputs: give a {m}×{m} matrix", rw.nrows(), rw.ncols()))));
            }
            let design = match t {
                Some(_) => crate::riccati::discrete_lqr_gain(&da, &db, &qw, &rw),
                None => crate::riccati::lqr_gain(&da, &db, &qw, &rw),
            }
            .map_err(|e| match e {
                crate::riccati::RiccatiError::NotStabilizable { .. } | crate::riccati::RiccatiError::NotDetectable { .. } | crate::riccati::RiccatiError::NoConvergence { .. } | crate::riccati::RiccatiError::InaccurateSolution { .. } | crate::riccati::RiccatiError::NotStabilizing { .. } | crate::riccati::RiccatiError::SingularMatrix { .. } | crate::riccati::RiccatiError::Eigen(_) | crate::riccati::RiccatiError::Svd(_) | crate::riccati::RiccatiError::NotStable => infeasible(&e),
                other => DesignError::Input(InputError::new("feedback.lqr", other.to_string())),
            })?;
            dpoles = design.closed_loop_poles.clone();
            base_poles = match t {
                Some(ts) => {
                    // LQR puts the computation-delay states' poles at (or within rounding of)
                    // z = 0: deadbeat, gone after one sample. Their s = ln z / T (about −34 000
                    // 1/s at 1 kHz for z = 1e-15) says nothing about the loop's bandwidth and
                    // must not drive the sample-rate advice or an observer speed factor.
                    let live: Vec<Complex64> = dpoles.iter().filter(|z| z.norm() > 1e-9).copied().collect();
                    let kept = if live.len() >= n { live } else { dpoles.clone() };
                    kept.iter().map(|z| map_to_continuous(*z, ts)).collect()
                }
                None => dpoles.clone(),
            };
            Some(design)
        }
    };
    if dpoles.len() != da.nrows() {
        let extra = da.nrows() - n;
        return Err(DesignError::Input(InputError::new(
            "feedback.poles",
            if extra > 0 {
                format!(
                    "{} poles given but the design has {} states ({n} plant states + {extra} for {}); give {} poles{}",
                    dpoles.len(),
                    da.nrows(),
                    if integral_poles.is_some() && delay { "delay and integrators" } else if delay { "the computation delay" } else { "the integrators" },
                    da.nrows() - (dpoles.len() - req.poles.len()),
                    if integral_poles.is_some() { ", or list the integrator poles in tracking.integral_poles" } else { "" }
                )
            } else {
                format!("{} poles given but the plant has {n} states; give exactly {n} poles", dpoles.len())
            },
        )));
    }
    let open_loop = try_eigenvalues(&ad).map_err(|e| infeasible(&e))?;
    let ctrb = controllability_report(&ad, &bd, ap).map_err(|e| infeasible(&e))?;
    let obsv = match plant.c() {
        Some(c) => Some(observability_report(&ad, c, ap).map_err(|e| infeasible(&e))?),
        None => None,
    };
    let placement = state_feedback_gain(&da, &db, &dpoles, pp).map_err(|e| pole_input(e, "feedback.poles"))?;
    let k_x = placement.gain.columns(0, n).into_owned();
    let k_u = if delay { Some(placement.gain.columns(n, m).into_owned()) } else { None };
    let k_i = if integral_poles.is_some() { Some(placement.gain.columns(nd, q).into_owned()) } else { None };
    // Observer.
    let observer = match (&spec.observer, plant.c()) {
        (Some(os), Some(c)) => {
            let s_poles = match &os.poles {
                ObserverPoles::Given(p) => to_s(p),
                ObserverPoles::SpeedFactor(f) => fastest_poles(&to_s(&base_poles), n).iter().map(|z| z * *f).collect(),
            };
            let obs_design_poles = match &os.poles {
                ObserverPoles::Given(p) => to_design(p),
                ObserverPoles::SpeedFactor(_) => match t {
                    Some(t) => map_to_discrete(&s_poles, t),
                    None => s_poles.clone(),
                },
            };
            let mut od = observer_gain(&ad, c, &obs_design_poles, pp).map_err(|e| match e {
                crate::controller::ControllerError::Observer { message } if message.contains("poles") && !message.contains("unobservable") => DesignError::Input(InputError::new("observer.poles", message)),
                other => infeasible(&other),
            })?;
            if os.form == ObserverForm::Current {
                od.current_gain = ad.clone().lu().solve(&od.gain);
            }
            Some((od, obs_design_poles, os.form))
        }
        _ => None,
    };
    let feedforward = match &spec.tracking {
        TrackingSpec::Feedforward { .. } => Some(feedforward_gains(&ad, &bd, &ct, &dt, t.is_some()).map_err(|e| infeasible(&e))?),
        _ => None,
    };
    let advice = t.map(|t| sample_rate_advice(&to_s(&base_poles), t));
    let a = &ad;
    let b = &bd;
    let mut warnings = Vec::new();
    let anorm = crate::linalg::svd::try_norm2(plant.a(), crate::linalg::svd::SvdParams::default()).unwrap_or(0.0);
    let axis_tol = match domain {
        Domain::Continuous => ap.relative_tolerance * anorm.max(1.0),
        Domain::Discrete => 1e-12,
    };
    let mut seen_pairs = Vec::new();
    for z in &dpoles {
        if z.im < 0.0 || seen_pairs.contains(z) {
            continue;
        }
        seen_pairs.push(*z);
        let shown = if z.im > 0.0 { format!("{}±{}j", fmt_num(z.re), fmt_num(z.im)) } else { format_complex(*z) };
        if !domain.is_strictly_stable(*z, -axis_tol) && !domain.is_marginal(*z, axis_tol) {
            warnings.push(Warning::new(
                "requested-pole-unstable",
                match domain {
                    Domain::Continuous => format!("The requested pole {shown} lies in the right half-plane: the closed loop will be unstable."),
                    Domain::Discrete => format!("The requested z-plane pole {shown} lies outside the unit circle: the digital loop will be unstable."),
                },
            ));
        } else if domain.is_marginal(*z, axis_tol) {
            warnings.push(Warning::new(
                "requested-pole-on-axis",
                match domain {
                    Domain::Continuous => format!("The requested pole {shown} lies on the imaginary axis: the closed loop will not settle (marginal stability)."),
                    Domain::Discrete => format!("The requested z-plane pole {shown} lies on the unit circle: the digital loop will not settle (marginal stability)."),
                },
            ));
        }
    }
    for z in to_s(&base_poles).iter().filter(|z| z.im >= 0.0) {
        let shown = if z.im > 0.0 { format!("{}±{}j", fmt_num(z.re), fmt_num(z.im)) } else { format_complex(*z) };
        if spec.plant_sample_time.is_none() && anorm > 0.0 && z.norm() > wp.fast_pole_ratio * anorm {
            warnings.push(Warning::new(
                "fast-pole",
                format!(
                    "The requested pole {shown} is {:.0} times faster than the plant's own dynamics (‖A‖ = {}): expect large gains, actuator saturation and amplified measurement noise.",
                    z.norm() / anorm,
                    fmt_num(anorm)
                ),
            ));
        }
    }
    // Judged in balanced coordinates, so that the units of the states do not decide it.
    if !(placement.balanced_eigenvector_condition <= wp.fragile_condition) {
        warnings.push(Warning::new(
            "fragile-design",
            format!(
                "The closed-loop eigenvector condition number is {} in balanced coordinates ({} as the states are scaled; above {}): small errors in the plant model or the gain can move the poles far from where they were placed. Spread clustered poles apart or move them closer to the open-loop poles.",
                fmt_num(placement.balanced_eigenvector_condition),
                fmt_num(placement.eigenvector_condition),
                fmt_num(wp.fragile_condition)
            ),
        ));
    }
    if placement.max_pole_error > wp.inaccurate_placement {
        warnings.push(Warning::new(
            "placement-inaccurate",
            format!("The achieved poles differ from the requested ones by up to {} (relative): the problem is numerically ill conditioned.", fmt_num(placement.max_pole_error)),
        ));
    }
    if !placement.converged {
        warnings.push(Warning::new("not-converged", "The eigenvector optimisation stopped at its sweep limit; the gain is valid but its robustness may not be the best available."));
    }
    if placement.input_rank < m {
        warnings.push(Warning::new(
            "dependent-inputs",
            format!("B has rank {} but {m} columns: some inputs act in the same directions; the gain shown is the smallest-norm one.", placement.input_rank),
        ));
    }
    if !ctrb.is_complete() {
        warnings.push(Warning::new(
            "uncontrollable-modes",
            format!(
                "The plant is not controllable: {} mode(s) at {} cannot be moved by feedback and stay where they are{}.",
                ctrb.hidden_modes.len(),
                crate::poles::format_pole_list(&ctrb.hidden_modes),
                if placement.not_assigned.is_empty() { String::new() } else { format!("; the requested pole(s) {} were not assigned", crate::poles::format_pole_list(&placement.not_assigned)) }
            ),
        ));
    }
    for md in &ctrb.modes {
        if md.verdict == ModeVerdict::Weak {
            warnings.push(Warning::new(
                "weakly-controllable",
                format!("The mode at {} is only weakly controllable (margin {}): moving it needs large inputs.", format_complex(md.pole), fmt_num(md.margin)),
            ));
        }
    }
    if let Some(o) = &obsv {
        for md in &o.modes {
            if md.verdict == ModeVerdict::Weak {
                warnings.push(Warning::new(
                    "weakly-observable",
                    format!("The mode at {} is only weakly observable from the outputs (margin {}).", format_complex(md.pole), fmt_num(md.margin)),
                ));
            }
        }
    }
    if !ctrb.consistent || obsv.as_ref().is_some_and(|o| !o.consistent) {
        warnings.push(Warning::new("analysis-inconsistent", "The staircase and the per-mode (PBH) tests disagree: the plant is on the borderline of losing controllability or observability; treat the verdicts with care."));
    }

    // Simulation.
    let (x0, x0_chosen) = match &req.initial_state {
        Some(x) => (x.clone(), false),
        None => {
            let mut x = vec![0.0; n];
            x[0] = 1.0;
            (x, true)
        }
    };
    let limits = if req.limits.is_empty() { vec![None; m] } else { req.limits.clone() };
    // Horizon from the slowest s-plane pole (controller and observer): 7/σ, doubled with limits.
    let mut all_s = to_s(&base_poles);
    if let Some((_, op, _)) = &observer {
        all_s.extend(match t {
            Some(t) => op.iter().map(|z| map_to_continuous(*z, t)).collect::<Vec<_>>(),
            None => op.clone(),
        });
    }
    let slowest = all_s.iter().map(|z| -z.re).filter(|d| *d > 0.0).fold(f64::INFINITY, f64::min);
    let auto_horizon = if slowest.is_finite() { 7.0 / slowest } else { 10.0 } * if limits.iter().any(|l| l.is_some()) { 2.0 } else { 1.0 };
    // A digital simulation longer than the caller allows is refused before it is run.
    let check_samples = |duration: f64| -> Result<(), DesignError> {
        match (t, spec.scenario.max_samples) {
            (Some(ts), Some(cap)) if !(duration / ts <= cap) => Err(DesignError::Input(InputError::new(
                if req.duration.is_some() { "simulation.duration" } else { "implementation.sample_time" },
                format!(
                    "the simulation would run {} s{} at a sample time of {} s, that is {:.0} samples, but at most {} are simulated here: sample less often, give a shorter simulated time, or make the poles faster",
                    fmt_num(duration),
                    if req.duration.is_some() { "" } else { " (chosen from the slowest pole)" },
                    fmt_num(ts),
                    (duration / ts).ceil(),
                    cap
                ),
            ))),
            _ => Ok(()),
        }
    };
    let resp = match t {
        None => {
            let sim = SimulationSpec { initial_state: DVector::from_vec(x0.clone()), duration: req.duration, limits: req.limits.clone() };
            closed_loop_response(a, b, &k_x, &sim, SimulationParams::default()).map_err(|e| infeasible(&e))?
        }
        _ => {
            // Digital regulator: the sampled state feedback on the continuous (or given discrete) plant.
            let ctrl = crate::loop_sim::LoopController {
                k: k_x.clone(),
                k_delay: k_u.clone(),
                observer: None,
                observer_form: ObserverForm::Predictor,
                current_gain: None,
                tracking: crate::loop_sim::TrackingLaw::None,
                tracked_outputs: Vec::new(),
                sample_time: t,
            };
            let duration = req.duration.unwrap_or(auto_horizon);
            check_samples(duration)?;
            let sc = crate::loop_sim::LoopScenario {
                x0: DVector::from_vec(x0.clone()),
                xhat0: None,
                duration,
                reference: Vec::new(),
                reference_time: 0.0,
                disturbance: Vec::new(),
                disturbance_time: 0.0,
                noise: crate::loop_sim::Noise::None,
                limits: limits.clone(),
                continuous_step: None,
            };
            let lr = run_loop(plant, spec, &ctrl, &sc).map_err(|e| infeasible(&e))?;
            crate::simulate::Response {
                step: t.unwrap_or(0.0),
                duration,
                duration_chosen: req.duration.is_none(),
                diverged: lr.diverged,
                time: lr.time,
                states: lr.states,
                inputs: lr.inputs,
                commanded: lr.commanded,
            }
        }
    };
    let settling: Vec<Option<f64>> = resp.states.iter().map(|s| metrics::settling_time(&resp.time, s, 0.0, req.band)).collect();
    let overshoot: Vec<Option<f64>> = resp.states.iter().map(|s| metrics::overshoot(s)).collect();
    let peak_state: Vec<f64> = resp.states.iter().map(|s| metrics::peak_magnitude(s)).collect();
    let peak_input: Vec<f64> = resp.commanded.iter().map(|s| metrics::peak_magnitude(s)).collect();
    let first_sat: Vec<Option<f64>> = (0..m).map(|i| limits[i].and_then(|l| metrics::first_exceedance(&resp.time, &resp.commanded[i], l))).collect();
    let time_sat: Vec<f64> = (0..m).map(|i| limits[i].map_or(0.0, |l| metrics::time_exceeding(&resp.time, &resp.commanded[i], l))).collect();
    for i in 0..m {
        if let Some(l) = limits[i] {
            if peak_input[i] > l {
                warnings.push(Warning::new(
                    "input-over-limit",
                    format!(
                        "Input {} ({}) would need {} from this initial state but its limit is {}: it saturates from t = {} s for {} s in all. Slow the poles down or reduce the initial deviation.",
                        i + 1,
                        plant.input_names()[i],
                        fmt_num(peak_input[i]),
                        fmt_num(l),
                        first_sat[i].map_or("?".into(), fmt_num),
                        fmt_num(time_sat[i])
                    ),
                ));
            }
        }
    }
    if resp.diverged {
        warnings.push(Warning::new("simulation-diverged", "The simulated closed loop grew without bound and the run was stopped."));
    } else {
        for (i, s) in settling.iter().enumerate() {
            if s.is_none() {
                warnings.push(Warning::new(
                    "not-settled",
                    format!("State {} ({}) has not settled to within {} % by the end of the {} s simulation.", i + 1, plant.state_names()[i], fmt_num(req.band * 100.0), fmt_num(resp.duration)),
                ));
            }
        }
    }
    let stride = resp.time.len().div_ceil(1000).max(1);
    let dec = |v: &Vec<f64>| -> Vec<f64> {
        let mut out: Vec<f64> = v.iter().step_by(stride).cloned().collect();
        if (v.len() - 1) % stride != 0 {
            if let Some(last) = v.last() {
                out.push(*last);
            }
        }
        out
    };
    let simulation = SimulationResult {
        initial_state: x0.clone(),
        initial_state_chosen: x0_chosen,
        duration: resp.duration,
        duration_chosen: resp.duration_chosen,
        step: resp.step,
        band: req.band,
        diverged: resp.diverged,
        time: dec(&resp.time),
        states: resp.states.iter().map(dec).collect(),
        inputs: resp.inputs.iter().map(dec).collect(),
        settling_time: settling,
        overshoot,
        peak_state,
        peak_input,
        input_limit: limits.clone(),
        first_saturation: first_sat,
        time_saturated: time_sat,
    };
    // ---- version 2 sections.
    let discrete_plant = match (&spec.implementation, t) {
        (Some(imp), Some(ts)) => Some(DiscretePlantResult { a: rows(&ad), b: rows(&bd), sample_time: ts, method: "zoh", computation_delay: imp.computation_delay }),
        _ => None,
    };
    let observer_result = observer.as_ref().map(|(od, op, form)| ObserverResult {
        gain: rows(&od.gain),
        current_gain: od.current_gain.as_ref().map(rows),
        form: if t.is_some() { form.key() } else { "continuous" },
        requested_poles: op.iter().map(|z| pair(*z)).collect(),
        achieved_poles: od.placement.achieved_poles.iter().map(|z| pair(*z)).collect(),
        max_pole_error: od.placement.max_pole_error,
        eigenvector_condition: od.placement.eigenvector_condition,
        gain_norm: od.gain_norm,
        noise_to_input_gain: crate::linalg::svd::try_norm2(&(&k_x * &od.gain), crate::linalg::svd::SvdParams::default()).unwrap_or(f64::NAN),
        detectable: obsv.as_ref().is_some_and(|o| o.stable_hidden_modes),
    });
    let names_of = |idx: &[usize]| idx.iter().map(|&i| plant.output_names()[i].clone()).collect::<Vec<_>>();
    let tracking_result = match (&spec.tracking, &feedforward, &k_i) {
        (TrackingSpec::Feedforward { outputs }, Some((nx, nu)), _) => Some(TrackingResult::Feedforward { outputs: names_of(outputs), nx: rows(nx), nu: rows(nu) }),
        (TrackingSpec::Integral { outputs, .. }, _, Some(ki)) => Some(TrackingResult::Integral {
            outputs: names_of(outputs),
            state_gain: rows(&k_x),
            integral_gain: rows(ki),
            anti_windup: spec.anti_windup.key(),
            time_constant: match spec.anti_windup {
                crate::controller::AntiWindup::BackCalculation { time_constant } => Some(time_constant),
                _ => None,
            },
        }),
        _ => None,
    };
    if let Some(a) = &advice {
        if a.verdict == "too-slow" {
            warnings.push(Warning::new("sample-rate-too-slow", a.message.clone()));
        }
    }
    if let Some((od, _, _)) = &observer {
        if od.placement.max_pole_error > wp.inaccurate_placement {
            warnings.push(Warning::new("observer-inaccurate", format!("The observer poles are achieved only to within {} (relative).", fmt_num(od.placement.max_pole_error))));
        }
        if !(od.placement.eigenvector_condition <= wp.fragile_condition) {
            warnings.push(Warning::new("fragile-observer", format!("The observer's eigenvector condition number is {}: its poles are sensitive to model errors.", fmt_num(od.placement.eigenvector_condition))));
        }
    }
    // The whole loop, when anything beyond plain state feedback was asked for.
    let closed_loop = if spec.observer.is_some() || !matches!(spec.tracking, TrackingSpec::None) || t.is_some() {
        let tracking_law = match (&feedforward, &k_i) {
            (Some((nx, nu)), _) => crate::loop_sim::TrackingLaw::Feedforward { nx: nx.clone(), nu: nu.clone() },
            (None, Some(ki)) => crate::loop_sim::TrackingLaw::Integral { ki: ki.clone(), anti_windup: spec.anti_windup },
            _ => crate::loop_sim::TrackingLaw::None,
        };
        let ctrl = crate::loop_sim::LoopController {
            k: k_x.clone(),
            k_delay: k_u.clone(),
            observer: observer.as_ref().map(|(od, _, _)| od.gain.clone()),
            observer_form: observer.as_ref().map_or(ObserverForm::Predictor, |(_, _, f)| *f),
            current_gain: observer.as_ref().and_then(|(od, _, _)| od.current_gain.clone()),
            tracking: tracking_law,
            tracked_outputs: tracked.clone(),
            sample_time: t,
        };
        let tracking_on = !matches!(spec.tracking, TrackingSpec::None);
        let reference = if tracking_on { if spec.scenario.reference.is_empty() { vec![1.0; q] } else { spec.scenario.reference.clone() } } else { Vec::new() };
        let x0_loop = if tracking_on && req.initial_state.is_none() { vec![0.0; n] } else { x0.clone() };
        let events = spec.scenario.reference_time.max(if spec.scenario.disturbance.is_empty() { 0.0 } else { spec.scenario.disturbance_time });
        let duration = req.duration.unwrap_or(events + auto_horizon * if spec.scenario.disturbance.is_empty() { 1.0 } else { 2.0 });
        check_samples(duration)?;
        let noise = if spec.scenario.noise_std.iter().any(|s| *s > 0.0) {
            crate::loop_sim::Noise::Gaussian { std: spec.scenario.noise_std.clone(), seed: spec.scenario.seed }
        } else {
            crate::loop_sim::Noise::None
        };
        let sc = crate::loop_sim::LoopScenario {
            x0: DVector::from_vec(x0_loop),
            xhat0: spec.scenario.initial_estimate.clone().map(DVector::from_vec),
            duration,
            reference: reference.clone(),
            reference_time: spec.scenario.reference_time,
            disturbance: spec.scenario.disturbance.clone(),
            disturbance_time: spec.scenario.disturbance_time,
            noise,
            limits: limits.clone(),
            continuous_step: None,
        };
        let lr = run_loop(plant, spec, &ctrl, &sc).map_err(|e| match e {
            crate::loop_sim::LoopError::NoiseNeedsDigital => DesignError::Input(InputError::new("simulation.noise_std", e.to_string())),
            other => infeasible(&other),
        })?;
        let tracked_metrics: Vec<OutputLoopMetrics> = tracked
            .iter()
            .enumerate()
            .map(|(j, &o)| {
                let window_end = if !spec.scenario.disturbance.is_empty() && spec.scenario.disturbance_time > spec.scenario.reference_time { spec.scenario.disturbance_time } else { f64::INFINITY };
                let mtr = crate::loop_sim::tracking_metrics(&lr.time, &lr.outputs[o], spec.scenario.reference_time, reference[j], req.band, window_end);
                OutputLoopMetrics { name: plant.output_names()[o].clone(), reference: reference[j], rise_time: mtr.rise_time, settling_time: mtr.settling_time, overshoot: mtr.overshoot, steady_state_error: mtr.steady_state_error }
            })
            .collect();
        let input_metrics: Vec<InputLoopMetrics> = (0..m)
            .map(|i| InputLoopMetrics {
                name: plant.input_names()[i].clone(),
                peak_command: metrics::peak_magnitude(&lr.commanded[i]),
                limit: limits[i],
                time_saturated: limits[i].map_or(0.0, |l| metrics::time_exceeding(&lr.time, &lr.commanded[i], l)),
            })
            .collect();
        for im in &input_metrics {
            if let Some(l) = im.limit {
                if im.peak_command > l && !warnings.iter().any(|w| w.code == "input-over-limit" && w.message.contains(&im.name)) {
                    warnings.push(Warning::new(
                        "loop-input-over-limit",
                        format!("In the loop simulation, {} is commanded up to {} against its limit {} and saturates for {} s.", im.name, fmt_num(im.peak_command), fmt_num(l), fmt_num(im.time_saturated)),
                    ));
                }
            }
        }
        // Separation principle: eigenvalues of the linear loop with observer (no integrator, no delay).
        let (loop_poles, separation_error) = match (&observer, k_u.is_none() && k_i.is_none(), plant.c()) {
            (Some((od, _, form)), true, Some(c)) if *form == ObserverForm::Predictor || t.is_none() => {
                let l = &od.gain;
                let mut big = DMatrix::<f64>::zeros(2 * n, 2 * n);
                big.view_mut((0, 0), (n, n)).copy_from(&ad);
                big.view_mut((0, n), (n, n)).copy_from(&(-(&bd * &k_x)));
                big.view_mut((n, 0), (n, n)).copy_from(&(l * c));
                big.view_mut((n, n), (n, n)).copy_from(&(&ad - l * c - &bd * &k_x));
                match try_eigenvalues(&big) {
                    Ok(lp) => {
                        let mut union: Vec<Complex64> = placement.achieved_poles.clone();
                        union.extend(od.placement.achieved_poles.iter().cloned());
                        let err = crate::place::max_matching_error(&union, &lp, big.norm());
                        (Some(lp.iter().map(|z| pair(*z)).collect()), Some(err))
                    }
                    Err(_) => (None, None),
                }
            }
            _ => (None, None),
        };
        let stride = lr.time.len().div_ceil(1000).max(1);
        let dec = |v: &Vec<f64>| -> Vec<f64> {
            let mut out: Vec<f64> = v.iter().step_by(stride).cloned().collect();
            if !v.is_empty() && (v.len() - 1) % stride != 0 {
                if let Some(last) = v.last() {
                    out.push(*last);
                }
            }
            out
        };
        Some(LoopResult {
            sample_time: t,
            observer_form: observer.as_ref().map(|(_, _, f)| if t.is_some() { f.key() } else { "continuous" }),
            duration,
            diverged: lr.diverged,
            time: dec(&lr.time),
            outputs: lr.outputs.iter().map(dec).collect(),
            measured: lr.measured.iter().map(dec).collect(),
            reference: lr.reference.iter().map(dec).collect(),
            states: lr.states.iter().map(dec).collect(),
            estimates: lr.estimates.iter().map(dec).collect(),
            inputs: lr.inputs.iter().map(dec).collect(),
            commanded: lr.commanded.iter().map(dec).collect(),
            tracked: tracked_metrics,
            input_metrics,
            loop_poles,
            separation_error,
        })
    } else {
        None
    };

    let search_summary = search.as_ref().map(|r| SearchSummary {
        speed_factor: r.speed_factor,
        suggested_poles: r.poles.iter().map(|z| pair(*z)).collect(),
        limiting_situation: r.limiting_situation + 1,
        limiting_input: plant.input_names()[r.limiting_input].clone(),
        peak_ratio: r.peak_ratio,
        settling_time: r.settling_time.clone(),
        monotonic: r.monotonic,
        samples: r.samples.iter().map(|(f, v)| [*f, *v]).collect(),
        limited_by_range: r.limited_by_range,
        evaluations: r.evaluations,
    });
    let lqr_result = lqr.as_ref().map(|d| {
        let (qw, rw) = match &spec.lqr {
            Some(LqrWeights::Matrices { q, r }) => (rows(q), rows(r)),
            Some(LqrWeights::Bryson { max_state, max_input }) => crate::riccati::bryson_weights(max_state, max_input).map(|(q, r)| (rows(&q), rows(&r))).unwrap_or_default(),
            None => (Vec::new(), Vec::new()),
        };
        LqrResult { riccati_solution: rows(&d.riccati_solution), residual: d.residual, gain: rows(&d.gain), closed_loop_poles: d.closed_loop_poles.iter().map(|z| pair(*z)).collect(), q: qw, r: rw }
    });
    let pole_choice = spec.pole_choice.as_ref().map(|c| PoleChoiceResult {
        method: c.method,
        description: c.description.clone(),
        suggested_poles: c.poles.iter().map(|z| pair(*z)).collect(),
        region: c.region.as_ref().map(|r| RegionResult { min_damping: r.min_damping, min_decay_rate: r.min_decay_rate, natural_frequency: r.natural_frequency }),
    });
    if let Some(region) = spec.pole_choice.as_ref().and_then(|c| c.region.as_ref()) {
        let achieved_s: Vec<Complex64> = match t {
            Some(ts) => placement.achieved_poles.iter().map(|z| map_to_continuous(*z, ts)).collect(),
            None => placement.achieved_poles.clone(),
        };
        for v in crate::patterns::region_violations(&achieved_s, region) {
            warnings.push(Warning::new("pole-outside-region", format!("Closed-loop pole {}: {v}.", format_complex(v.pole))));
        }
    }
    if let Some(c) = &spec.pole_choice {
        if c.method == "binomial" && placement.input_rank < c.poles.len() {
            warnings.push(Warning::new("repeated-poles", "The binomial pattern repeats one pole: repeated poles are sensitive to model errors, and with several inputs at most rank(B) copies can be placed."));
        }
    }
    if let Some(r) = &search {
        if !r.monotonic {
            warnings.push(Warning::new("search-not-monotonic", "The peak input did not grow steadily with the speed-up over the searched range: the factor found is one crossing of the limit, not necessarily the only one; check the samples."));
        }
        if r.limited_by_range {
            warnings.push(Warning::new("search-range-limit", format!("The inputs stay within their limits even at the largest factor tried ({}): the actuators are not what limits this design; noise, model accuracy and sampling are.", fmt_num(r.speed_factor))));
        }
    }

    Ok(DesignResult {
        format: RESULT_FORMAT,
        version: RESULT_VERSION,
        convention: "u = -K x",
        plant: PlantSummary {
            states: n,
            inputs: m,
            outputs: plant.outputs(),
            state_names: plant.state_names().to_vec(),
            input_names: plant.input_names().to_vec(),
            output_names: plant.output_names().to_vec(),
            state_units: plant.state_units().to_vec(),
            input_units: plant.input_units().to_vec(),
        },
        open_loop_poles: open_loop.iter().map(|z| pair(*z)).collect(),
        feedback: FeedbackResult {
            gain: rows(&k_x),
            requested_poles: dpoles.iter().map(|z| pair(*z)).collect(),
            achieved_poles: placement.achieved_poles.iter().map(|z| pair(*z)).collect(),
            max_pole_error: placement.max_pole_error,
            eigenvector_condition: placement.eigenvector_condition,
            balanced_eigenvector_condition: placement.balanced_eigenvector_condition,
            eigenvector_determinant: placement.abs_det_x,
            gain_norm: placement.gain_norm,
            iterations: placement.iterations,
            converged: placement.converged,
            input_rank: placement.input_rank,
            not_assigned: placement.not_assigned.iter().map(|z| pair(*z)).collect(),
            fixed_modes: placement.fixed_modes.iter().map(|z| pair(*z)).collect(),
            delay_gain: k_u.as_ref().map(rows),
        },
        controllability: structure(&ctrb),
        observability: obsv.as_ref().map(structure),
        simulation,
        warnings,
        domain: if t.is_some() { "discrete" } else { "continuous" },
        sample_time: t,
        discrete_plant,
        observer: observer_result,
        tracking: tracking_result,
        sample_rate: advice.map(|a| SampleRateResult { bandwidth: a.bandwidth, samples_per_bandwidth: a.samples_per_bandwidth, verdict: a.verdict, message: a.message }),
        closed_loop,
        search: search_summary,
        pole_choice,
        lqr: lqr_result,
    })
}

/// Parses a design file and runs it.
///
/// # Errors
/// See [`DesignError`].
pub fn run_text(text: &str) -> Result<DesignResult, DesignError> {
    let (req, spec) = parse_design_full(text)?;
    run_with(&req, &spec)
}

/// A short human number: 4 significant figures, scientific when large or small.
pub fn fmt_num(x: f64) -> String {
    if !x.is_finite() {
        return if x.is_nan() { "NaN".into() } else if x > 0.0 { "∞".into() } else { "−∞".into() };
    }
    let ax = x.abs();
    if ax != 0.0 && !(1e-3..1e5).contains(&ax) {
        format!("{x:.3e}")
    } else {
        let s = format!("{x:.4}");
        let s = s.trim_end_matches('0').trim_end_matches('.').to_string();
        if s == "-0" { "0".into() } else { s }
    }
}

#[cfg(test)]
#[path = "tests/design.rs"]
mod tests;
