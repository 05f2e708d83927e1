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
pub const DESIGN_VERSION: u64 = 1;
/// Version of the result this build writes.
pub const RESULT_VERSION: u64 = 1;

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

/// Parses and validates a design file.
///
/// # Errors
/// An [`InputError`] naming the field.
pub fn parse_design(text: &str) -> Result<DesignRequest, InputError> {
    let doc: Value = serde_json::from_str(text).map_err(|e| InputError::new("(file)", format!("not valid JSON: {e}")))?;
    let top = object(&doc, "", &["format", "version", "plant", "feedback", "actuators", "simulation", "comment", "description"])?;
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
    let plant_v = top.get("plant").ok_or_else(|| InputError::new("plant", "missing; give at least \"a\" and \"b\""))?;
    let plant = plant_from_value(plant_v, "plant")?;
    let fb = top.get("feedback").ok_or_else(|| InputError::new("feedback", "missing; give \"feedback\": {\"poles\": [...]}"))?;
    let fbm = object(fb, "feedback", &["poles"])?;
    let poles_v = fbm.get("poles").ok_or_else(|| InputError::new("feedback.poles", "missing; list the desired closed-loop poles"))?;
    let poles = poles_from_value(poles_v, "feedback.poles")?;
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
        let sm = object(sim, "simulation", &["initial_state", "duration", "band"])?;
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
    Ok(DesignRequest { plant, poles, limits, initial_state, duration, band })
}

/// Reads and validates the `plant` object.
///
/// # Errors
/// An [`InputError`] naming the field.
pub fn plant_from_value(v: &Value, field: &str) -> Result<Plant, InputError> {
    let keys = ["a", "b", "c", "d", "state_names", "input_names", "output_names", "state_units", "input_units", "output_units"];
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
    pub eigenvector_determinant: f64,
    pub gain_norm: f64,
    pub iterations: usize,
    pub converged: bool,
    pub input_rank: usize,
    pub not_assigned: Vec<Pair>,
    pub fixed_modes: Vec<Pair>,
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
    let plant = &req.plant;
    let (a, b) = (plant.a(), plant.b());
    let n = plant.states();
    let m = plant.inputs();
    let wp = WarningParams::default();
    let ap = AnalysisParams::default();
    let infeasible = |e: &dyn std::fmt::Display| DesignError::Infeasible { message: e.to_string() };
    let open_loop = try_eigenvalues(a).map_err(|e| infeasible(&e))?;
    let ctrb = controllability_report(a, b, ap).map_err(|e| infeasible(&e))?;
    let obsv = match plant.c() {
        Some(c) => Some(observability_report(a, c, ap).map_err(|e| infeasible(&e))?),
        None => None,
    };
    let placement = state_feedback_gain(a, b, &req.poles, PlacementParams::default()).map_err(|e| match e {
        crate::place::PlacementError::PoleCount { .. } | crate::place::PlacementError::InvalidPoles { .. } => {
            DesignError::Input(InputError::new("feedback.poles", e.to_string()))
        }
        crate::place::PlacementError::RepeatedBeyondRank { .. } => DesignError::Input(InputError::new("feedback.poles", e.to_string())),
        other => infeasible(&other),
    })?;

    let mut warnings = Vec::new();
    let anorm = crate::linalg::svd::try_norm2(a, crate::linalg::svd::SvdParams::default()).unwrap_or(0.0);
    let axis_tol = ap.relative_tolerance * anorm.max(1.0);
    let mut seen_pairs = Vec::new();
    for z in &req.poles {
        if z.im < 0.0 || seen_pairs.contains(z) {
            continue;
        }
        seen_pairs.push(*z);
        let shown = if z.im > 0.0 { format!("{}±{}j", fmt_num(z.re), fmt_num(z.im)) } else { format_complex(*z) };
        if z.re > axis_tol {
            warnings.push(Warning::new("requested-pole-unstable", format!("The requested pole {shown} lies in the right half-plane: the closed loop will be unstable.")));
        } else if z.re.abs() <= axis_tol {
            warnings.push(Warning::new("requested-pole-on-axis", format!("The requested pole {shown} lies on the imaginary axis: the closed loop will not settle (marginal stability).")));
        }
        if anorm > 0.0 && z.norm() > wp.fast_pole_ratio * anorm {
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
    if !(placement.eigenvector_condition <= wp.fragile_condition) {
        warnings.push(Warning::new(
            "fragile-design",
            format!(
                "The closed-loop eigenvector condition number is {} (above {}): small errors in the plant model or the gain can move the poles far from where they were placed. Spread clustered poles apart or move them closer to the open-loop poles.",
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
    let spec = SimulationSpec { initial_state: DVector::from_vec(x0.clone()), duration: req.duration, limits: req.limits.clone() };
    let resp = closed_loop_response(a, b, &placement.gain, &spec, SimulationParams::default()).map_err(|e| infeasible(&e))?;
    let limits = if req.limits.is_empty() { vec![None; m] } else { req.limits.clone() };
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
        initial_state: x0,
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
        input_limit: limits,
        first_saturation: first_sat,
        time_saturated: time_sat,
    };
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
            gain: rows(&placement.gain),
            requested_poles: req.poles.iter().map(|z| pair(*z)).collect(),
            achieved_poles: placement.achieved_poles.iter().map(|z| pair(*z)).collect(),
            max_pole_error: placement.max_pole_error,
            eigenvector_condition: placement.eigenvector_condition,
            eigenvector_determinant: placement.abs_det_x,
            gain_norm: placement.gain_norm,
            iterations: placement.iterations,
            converged: placement.converged,
            input_rank: placement.input_rank,
            not_assigned: placement.not_assigned.iter().map(|z| pair(*z)).collect(),
            fixed_modes: placement.fixed_modes.iter().map(|z| pair(*z)).collect(),
        },
        controllability: structure(&ctrb),
        observability: obsv.as_ref().map(structure),
        simulation,
        warnings,
    })
}

/// Parses a design file and runs it.
///
/// # Errors
/// See [`DesignError`].
pub fn run_text(text: &str) -> Result<DesignResult, DesignError> {
    let req = parse_design(text)?;
    run(&req)
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
mod tests {
    use super::*;

    const TEXTBOOK: &str = r#"{"format": "polewright.design", "version": 1,
        "plant": {"a": [[0,1,0],[0,0,1],[-1,-5,-6]], "b": [0,0,1]},
        "feedback": {"poles": ["-2±4j", -10]}}"#;

    #[test]
    fn textbook_design_file_runs() {
        // Ogata, Modern Control Engineering, pole-placement example (from memory): K = [199, 55, 8].
        let r = run_text(TEXTBOOK).unwrap();
        let k = &r.feedback.gain[0];
        for (got, want) in k.iter().zip([199.0, 55.0, 8.0]) {
            assert!((got - want).abs() < 1e-9 * want);
        }
        assert_eq!(r.convention, "u = -K x");
        assert!(r.controllability.complete && r.controllability.stabilizable);
        assert!(r.simulation.settling_time.iter().all(|s| s.is_some()));
        let json = serde_json::to_string(&r).unwrap();
        assert!(json.contains("\"format\":\"polewright.result\""));
    }

    #[test]
    fn input_errors_name_the_field() {
        let bad = TEXTBOOK.replace("[[0,1,0],[0,0,1],[-1,-5,-6]]", "[[0,1,0],[0,0],[-1,-5,-6]]");
        let e = parse_design(&bad).unwrap_err();
        assert_eq!(e.field, "plant.a");
        assert!(e.message.contains("row 2"), "{e}");
        let bad = TEXTBOOK.replace("\"feedback\"", "\"feedbak\"");
        assert_eq!(parse_design(&bad).unwrap_err().field, "feedbak");
        let bad = TEXTBOOK.replace("\"-2±4j\"", "\"-2+4j\"");
        let e = parse_design(&bad).unwrap_err();
        assert_eq!(e.field, "feedback.poles");
        assert!(e.message.contains("-2-4j"), "{e}");
        let bad = TEXTBOOK.replace("\"b\": [0,0,1]", "\"b\": [0,0,1,2]");
        assert_eq!(parse_design(&bad).unwrap_err().field, "plant.b");
        let e = parse_design("{").unwrap_err();
        assert_eq!(e.field, "(file)");
    }

    #[test]
    fn unstable_uncontrollable_is_infeasible() {
        let text = r#"{"format": "polewright.design", "version": 1,
            "plant": {"a": [[1,0],[0,-1]], "b": [[0],[1]]}, "feedback": {"poles": [-1, -2]}}"#;
        match run_text(text) {
            Err(DesignError::Infeasible { message }) => assert!(message.contains("mode at 1"), "{message}"),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn limits_produce_saturation_warning() {
        let text = r#"{"format": "polewright.design", "version": 1,
            "plant": {"a": "0 1\n0 0", "b": "0\n1", "input_names": ["force"]},
            "feedback": {"poles": "-5, -6"}, "actuators": {"limit": [1]},
            "simulation": {"initial_state": [1, 0]}}"#;
        let r = run_text(text).unwrap();
        assert!(r.warnings.iter().any(|w| w.code == "input-over-limit"), "{:?}", r.warnings);
        assert!(r.simulation.peak_input[0] > 1.0);
        assert!(r.simulation.inputs[0].iter().all(|u| u.abs() <= 1.0 + 1e-12));
        assert!(r.simulation.first_saturation[0] == Some(0.0));
    }
}
