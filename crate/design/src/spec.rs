//! The design document (`polewright.design`): one typed value that the design file, the page
//! form and the page's saved state all are.
//!
//! The structure is derived with serde: unknown keys and repeated keys are refused, and every
//! syntax error names its [`FieldPath`]. The leaves that hold numbers accept both what a person
//! types (a text block: one matrix row per line, entries separated by spaces, tabs or commas;
//! a pole list such as `-2, -1±2j`) and plain JSON (lists of rows, lists of numbers, `[re, im]`
//! pairs), so that the page can save exactly what was typed and a script can write plain JSON.
//! What the numbers mean, and every rule between fields, is checked once, in
//! [`crate::check`].
//!
//! # Versions
//! Version 1 knew `plant`, `feedback.poles`, `actuators` and `simulation`; version 2 added the
//! controller sections (`implementation`, `observer`, `tracking`, `anti_windup`, `search`) and
//! the pole choices (`feedback.pattern`, `spec`, `lqr`); version 3 (this build's) adds `title`
//! and `notes`. A reader accepts every version up to its own: older documents keep their meaning
//! unchanged, and are written back as version 3.

use serde::de::Error as _;
use serde::{Deserialize, Deserializer, Serialize};
use serde_json::Value;

use super::path::FieldPath;
use super::InputError;

/// The design-file format name.
pub const DESIGN_FORMAT: &str = "polewright.design";
/// Highest design-file version this build reads (and the one it writes).
pub const DESIGN_VERSION: u64 = 3;
/// Largest design file read, in bytes (8 MiB): larger text is refused before it is parsed.
pub const MAX_DESIGN_BYTES: usize = 8 << 20;

/// The design document.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DesignSpec {
    pub format: String,
    pub version: u64,
    /// A short name for the design (version 3).
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub title: String,
    /// Free-text notes: purpose, assumptions, review remarks (version 3).
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub notes: String,
    /// Free text of versions 1 and 2, moved into `notes` on reading (never written).
    #[serde(default, skip_serializing)]
    pub comment: Option<Value>,
    #[serde(default, skip_serializing)]
    pub description: Option<Value>,
    #[serde(default)]
    pub plant: PlantDoc,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub feedback: Option<FeedbackDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub actuators: Option<ActuatorsDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub simulation: Option<SimulationDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub implementation: Option<ImplementationDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub observer: Option<ObserverDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tracking: Option<TrackingDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub anti_windup: Option<AntiWindupDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub search: Option<SearchDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub robustness: Option<RobustnessDoc>,
}

impl Default for DesignSpec {
    fn default() -> Self {
        DesignSpec {
            format: DESIGN_FORMAT.into(),
            version: DESIGN_VERSION,
            title: String::new(),
            notes: String::new(),
            comment: None,
            description: None,
            plant: PlantDoc::default(),
            feedback: None,
            actuators: None,
            simulation: None,
            implementation: None,
            observer: None,
            tracking: None,
            anti_windup: None,
            search: None,
            robustness: None,
        }
    }
}

/// `plant`: the model `x' = A x + B u`, `y = C x + D u`, with names and units.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlantDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub a: Option<MatrixValue>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub b: Option<MatrixValue>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub c: Option<MatrixValue>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub d: Option<MatrixValue>,
    /// Disturbance input matrix `E` (states × loads): the loop scenario's load step acts as
    /// `x' = A x + B u + E w` (in the plant's own time domain: discrete when `sample_time` is
    /// given). Without it the load enters at the plant input (`E = B`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub e: Option<MatrixValue>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub state_names: Option<NameList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub state_units: Option<NameList>,
    /// The largest magnitude each state may reach (an armature current, a stroke), one per
    /// state, `none` (text) or `null` (JSON) for a state without a limit: the simulations report
    /// each state's peak against it and warn when it is exceeded (the controller does not
    /// enforce it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub state_limits: Option<LimitList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_names: Option<NameList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_units: Option<NameList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub output_names: Option<NameList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub output_units: Option<NameList>,
    /// The matrices are already discrete at this sample time (seconds).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample_time: Option<Scalar>,
}

/// `feedback`: exactly one of `poles`, `pattern`, `spec` or `lqr`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FeedbackDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub poles: Option<PoleList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plane: Option<PlaneChoice>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pattern: Option<PatternDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spec: Option<SpecDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lqr: Option<LqrDoc>,
}

/// The plane the listed poles are given in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PlaneChoice {
    S,
    Z,
}

/// A prototype pole pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PatternFamily {
    Bessel,
    Butterworth,
    Itae,
    Binomial,
}

/// How a Bessel pattern is normalised before scaling.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BesselChoice {
    UnitSettlingTime,
    UnitGroupDelay,
    HalfPowerAtUnitFrequency,
}

/// `feedback.pattern`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PatternDoc {
    pub family: PatternFamily,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub normalisation: Option<BesselChoice>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub settling_time: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bandwidth: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub band: Option<Scalar>,
}

/// `feedback.spec`: a time-response specification (overshoot as a fraction).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpecDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub overshoot: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub settling_time: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub band: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rise_time: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bandwidth: Option<Scalar>,
}

/// `feedback.lqr`: weight matrices, or Bryson's rule.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LqrDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub q: Option<MatrixValue>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub r: Option<MatrixValue>,
    /// The cross weight `S` of `2 xᵀ S u` (states × inputs; version 3).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub s: Option<MatrixValue>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bryson: Option<BrysonDoc>,
}

/// Bryson's rule: the largest acceptable excursion of each design state and input
/// (`max_input` left out: the actuator limits).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BrysonDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_state: Option<NumberList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_input: Option<NumberList>,
}

/// `actuators`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ActuatorsDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit: Option<LimitList>,
}

/// `simulation`: what is simulated, and the loop scenario.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SimulationDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub initial_state: Option<NumberList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub duration: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub band: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<NumberList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference_time: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub disturbance: Option<NumberList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub disturbance_time: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub noise_std: Option<NumberList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub seed: Option<Whole>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub initial_estimate: Option<NumberList>,
}

/// Discretisation method of the implementation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MethodChoice {
    /// Zero-order hold.
    Zoh,
}

/// `implementation`: the digital controller.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImplementationDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample_time: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub method: Option<MethodChoice>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub computation_delay: Option<bool>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub delay_poles: Option<PoleList>,
}

/// Observer form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ObserverFormChoice {
    Predictor,
    Current,
}

/// `observer`: poles, or a speed factor over the controller poles (default 4).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ObserverDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub poles: Option<PoleList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub speed_factor: Option<Scalar>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub form: Option<ObserverFormChoice>,
}

/// Tracking mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TrackingMode {
    None,
    Feedforward,
    Integral,
}

/// `tracking`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TrackingDoc {
    pub mode: TrackingMode,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outputs: Option<OutputList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub integral_poles: Option<PoleList>,
    /// With integral action: also feed the reference forward (`N_u r + K N_x r`), two degrees
    /// of freedom. Needs as many tracked outputs as inputs.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub feedforward: Option<bool>,
}

/// Anti-windup mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AntiWindupMode {
    None,
    Clamp,
    BackCalculation,
}

/// `anti_windup`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AntiWindupDoc {
    pub mode: AntiWindupMode,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_constant: Option<Scalar>,
}

/// `search`: the fastest design within the actuator limits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SearchDoc {
    pub fastest_within_limits: bool,
    /// Left out: the free response from the initial state and, with tracking, the reference step.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub situations: Option<Vec<SituationDoc>>,
}

/// One search situation: exactly one of the two.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SituationDoc {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub initial_state: Option<NumberList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<NumberList>,
}

/// `robustness`: the disks' skew, the plant entry whose effect on each pole is reported, and
/// the uncertain parameters of the Monte-Carlo cloud.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RobustnessDoc {
    /// Skew σ of the disk margins, −1 to 1 (0 when left out).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub disk_skew: Option<Scalar>,
    /// `"A 2 1"` (matrix, row, column; 1-based) or `{"matrix": "a", "row": 2, "column": 1}`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensitivity_entry: Option<EntryRefDoc>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub uncertainty: Option<UncertaintyDoc>,
}

/// A plant entry: typed text or an object.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum EntryRefDoc {
    Text(String),
    Entry(EntryDoc),
}

/// One uncertain entry (`row` and `column` 1-based), or a whole matrix when both are left out.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EntryDoc {
    pub matrix: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub row: Option<u64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub column: Option<u64>,
    /// The relative amount (0.2 = ±20 %); only in `uncertainty.entries`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub relative: Option<f64>,
}

/// `robustness.uncertainty`: what is uncertain, how many samples, which seed.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UncertaintyDoc {
    /// Text, one per line (`A 2 1 20%`, `B 10%` for a whole matrix), or a list of entries.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub entries: Option<UncertainList>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub samples: Option<Whole>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub seed: Option<Whole>,
}

/// The uncertain entries: typed text or a list.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum UncertainList {
    Text(String),
    List(Vec<EntryDoc>),
}

// ---------------------------------------------------------------------------------------------
// Leaves: numbers as typed, or as JSON.

/// A matrix: a text block, a list of rows, or one flat list.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum MatrixValue {
    Text(String),
    Rows(Vec<Vec<f64>>),
    Flat(Vec<f64>),
}

/// A list of numbers: text, a list, or one number.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum NumberList {
    Text(String),
    List(Vec<f64>),
    One(f64),
}

/// Actuator limits: text (`60 none`), or a list with `null` for an unlimited input.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum LimitList {
    Text(String),
    List(Vec<Option<f64>>),
    One(f64),
}

/// One pole of a JSON pole list.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum PoleItem {
    Real(f64),
    Pair([f64; 2]),
    Text(String),
}

/// A pole list: text (`-2, -1±2j`) or a list of items.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum PoleList {
    Text(String),
    Items(Vec<PoleItem>),
}

/// Names or units: text (commas or new lines) or a list.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum NameList {
    Text(String),
    List(Vec<String>),
}

/// One output, by name or number (1 = first row of C).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum OutputRef {
    Number(u64),
    Name(String),
}

/// Tracked outputs.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum OutputList {
    Text(String),
    List(Vec<OutputRef>),
}

/// One number, or the text typed for it.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum Scalar {
    Number(f64),
    Text(String),
}

/// A whole number ≥ 0, or the text typed for it.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum Whole {
    Number(u64),
    Text(String),
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

/// A value, shortened for a message.
pub(crate) fn short(v: &Value) -> String {
    let s = v.to_string();
    if s.chars().count() > 40 {
        format!("{}…", s.chars().take(40).collect::<String>())
    } else {
        s
    }
}

fn finite(v: &Value, what: impl Fn() -> String) -> Result<f64, String> {
    match v.as_f64() {
        Some(x) if x.is_finite() => Ok(x),
        _ => Err(format!("{}: {} is not a finite number", what(), short(v))),
    }
}

fn number_items(items: &[Value], what: impl Fn(usize) -> String) -> Result<Vec<f64>, String> {
    items.iter().enumerate().map(|(j, x)| finite(x, || what(j))).collect()
}

impl<'de> Deserialize<'de> for MatrixValue {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(MatrixValue::Text(s.clone())),
            Value::Array(rows) if rows.is_empty() => Err("the matrix is empty; give at least one row".to_string()),
            Value::Array(rows) if rows.iter().all(|r| r.is_number()) => number_items(rows, |j| format!("entry {}", j + 1)).map(MatrixValue::Flat),
            Value::Array(rows) => rows
                .iter()
                .enumerate()
                .map(|(i, r)| match r {
                    Value::Array(items) => number_items(items, |j| format!("row {}, column {}", i + 1, j + 1)),
                    other => Err(format!("row {} is {}, not a list of numbers", i + 1, kind(other))),
                })
                .collect::<Result<Vec<_>, _>>()
                .map(MatrixValue::Rows),
            other => Err(format!("expected a list of rows or a text block, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for NumberList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(NumberList::Text(s.clone())),
            Value::Number(_) => finite(&v, || "the value".into()).map(NumberList::One),
            Value::Array(items) => number_items(items, |j| format!("entry {}", j + 1)).map(NumberList::List),
            other => Err(format!("expected a list of numbers, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for LimitList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(LimitList::Text(s.clone())),
            Value::Number(_) => finite(&v, || "the limit".into()).map(LimitList::One),
            Value::Array(items) => items
                .iter()
                .enumerate()
                .map(|(j, x)| if x.is_null() { Ok(None) } else { finite(x, || format!("entry {} (a positive number, or null for no limit)", j + 1)).map(Some) })
                .collect::<Result<Vec<_>, _>>()
                .map(LimitList::List),
            other => Err(format!("expected a list of limits, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for PoleList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let item = |i: usize, x: &Value| -> Result<PoleItem, String> {
            match x {
                Value::Number(_) => finite(x, || format!("entry {}", i + 1)).map(PoleItem::Real),
                Value::String(s) => Ok(PoleItem::Text(s.clone())),
                Value::Array(pair) if pair.len() == 2 => {
                    let re = finite(&pair[0], || format!("entry {}: the real part", i + 1))?;
                    let im = finite(&pair[1], || format!("entry {}: the imaginary part", i + 1))?;
                    Ok(PoleItem::Pair([re, im]))
                }
                other => Err(format!("entry {}: {} is not a pole; use [re, im], a number or a string like \"-1+2j\"", i + 1, short(other))),
            }
        };
        let out = match &v {
            Value::String(s) => Ok(PoleList::Text(s.clone())),
            Value::Array(items) if items.is_empty() => Err("no poles given; list one per state".to_string()),
            Value::Array(items) => items.iter().enumerate().map(|(i, x)| item(i, x)).collect::<Result<Vec<_>, _>>().map(PoleList::Items),
            other => Err(format!("expected a list of poles, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for NameList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(NameList::Text(s.clone())),
            Value::Array(items) => items
                .iter()
                .enumerate()
                .map(|(i, x)| match x {
                    Value::String(s) => Ok(s.clone()),
                    other => Err(format!("entry {} is {}, not text", i + 1, kind(other))),
                })
                .collect::<Result<Vec<_>, _>>()
                .map(NameList::List),
            other => Err(format!("expected a list of names, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for OutputList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(OutputList::Text(s.clone())),
            Value::Array(items) => items
                .iter()
                .enumerate()
                .map(|(i, x)| match x {
                    Value::String(s) => Ok(OutputRef::Name(s.clone())),
                    Value::Number(_) => x.as_u64().map(OutputRef::Number).ok_or_else(|| format!("entry {}: {} is not an output number (1 = first output)", i + 1, short(x))),
                    other => Err(format!("entry {}: {} is not an output name or number", i + 1, short(other))),
                })
                .collect::<Result<Vec<_>, _>>()
                .map(OutputList::List),
            other => Err(format!("expected a list of output names or numbers (1 = first output), found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for Scalar {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(Scalar::Text(s.clone())),
            Value::Number(_) => finite(&v, || "the value".into()).map(Scalar::Number),
            other => Err(format!("expected a number, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

impl<'de> Deserialize<'de> for Whole {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(Whole::Text(s.clone())),
            Value::Number(_) => v.as_u64().map(Whole::Number).ok_or_else(|| format!("{} must be a whole number ≥ 0", short(&v))),
            other => Err(format!("expected a whole number, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

fn entry_doc(v: &Value, k: Option<usize>) -> Result<EntryDoc, String> {
    let at = k.map_or(String::new(), |k| format!("entry {}: ", k + 1));
    match v {
        Value::Object(_) => serde_json::from_value::<EntryDoc>(v.clone())
            .map_err(|e| format!("{at}{e}; write {{\"matrix\": \"a\", \"row\": 2, \"column\": 1{}}}", if k.is_some() { ", \"relative\": 0.2" } else { "" })),
        other => Err(format!("{at}expected an object such as {{\"matrix\": \"a\", \"row\": 2, \"column\": 1}}, found {}", kind(other))),
    }
}

impl<'de> Deserialize<'de> for EntryRefDoc {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        match &v {
            Value::String(s) => Ok(EntryRefDoc::Text(s.clone())),
            _ => entry_doc(&v, None).map(EntryRefDoc::Entry).map_err(D::Error::custom),
        }
    }
}

impl<'de> Deserialize<'de> for UncertainList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        let out = match &v {
            Value::String(s) => Ok(UncertainList::Text(s.clone())),
            Value::Array(items) => items.iter().enumerate().map(|(k, x)| entry_doc(x, Some(k))).collect::<Result<Vec<_>, _>>().map(UncertainList::List),
            other => Err(format!("expected text (one entry per line, such as A 2 1 20%) or a list of entries, found {}", kind(other))),
        };
        out.map_err(D::Error::custom)
    }
}

// ---------------------------------------------------------------------------------------------
// Reading and writing.

/// Only the two keys that say what the file is, read before anything else so that a newer
/// file is told apart from a wrong one.
#[derive(Deserialize)]
struct Header {
    format: Option<Value>,
    version: Option<Value>,
}

/// Keys that arrived with version 2.
const VERSION_2_SECTIONS: [&str; 5] = ["implementation", "observer", "tracking", "anti_windup", "search"];

/// Reads a design document from its JSON text: syntax, keys and types only (the rules between
/// fields are [`crate::check`]'s). Older versions are read with their meaning kept.
///
/// # Errors
/// An [`InputError`] naming the path: text over [`MAX_DESIGN_BYTES`], not JSON, a missing or
/// foreign `format`, a `version` newer than this build reads, an unknown or repeated key, a value
/// of the wrong type.
pub fn read_design(text: &str) -> Result<DesignSpec, InputError> {
    if text.len() > MAX_DESIGN_BYTES {
        return Err(InputError::new(FieldPath::Document, format!("the file is {} bytes; design files of up to {} bytes are read (8 MiB)", text.len(), MAX_DESIGN_BYTES)));
    }
    let text = text.trim_start_matches('\u{feff}');
    let header: Header = serde_json::from_str(text).map_err(|e| InputError::new(FieldPath::Document, json_message(&e)))?;
    match &header.format {
        Some(Value::String(s)) if s == DESIGN_FORMAT => {}
        Some(other) => return Err(InputError::new(FieldPath::Format, format!("expected \"{DESIGN_FORMAT}\", found {}", short(other)))),
        None => return Err(InputError::new(FieldPath::Format, format!("missing; add \"format\": \"{DESIGN_FORMAT}\""))),
    }
    let version = match header.version.as_ref().and_then(Value::as_u64) {
        Some(v) if (1..=DESIGN_VERSION).contains(&v) => v,
        Some(v) if v > DESIGN_VERSION => {
            return Err(InputError::new(FieldPath::Version, format!("version {v} is newer than this build reads (up to {DESIGN_VERSION}); open it with a newer Polewright")))
        }
        _ => return Err(InputError::new(FieldPath::Version, format!("missing or not a whole number from 1 to {DESIGN_VERSION}; add \"version\": {DESIGN_VERSION}"))),
    };
    let mut de = serde_json::Deserializer::from_str(text);
    let spec: DesignSpec = serde_path_to_error::deserialize(&mut de).map_err(|e| {
        let path = e.path().to_string();
        let inner = e.into_inner();
        let at = FieldPath::nearest(&path);
        // A key's own problem (unknown, repeated) is reported at the key when it has a name.
        InputError::new(at, json_message(&inner))
    })?;
    de.end().map_err(|e| InputError::new(FieldPath::Document, json_message(&e)))?;
    migrate(spec, version)
}

/// Older documents: refuse what their version did not have, then carry them to this version.
fn migrate(mut spec: DesignSpec, version: u64) -> Result<DesignSpec, InputError> {
    if version < 2 {
        let present = [spec.implementation.is_some(), spec.observer.is_some(), spec.tracking.is_some(), spec.anti_windup.is_some(), spec.search.is_some()];
        if let Some(i) = present.iter().position(|p| *p) {
            let key = VERSION_2_SECTIONS[i];
            let path = FieldPath::from_dotted(key).unwrap_or(FieldPath::Document);
            return Err(InputError::new(path, format!("\"{key}\" is a version-2 feature; set \"version\": 2 or later")));
        }
        if spec.plant.sample_time.is_some() {
            return Err(InputError::new(FieldPath::PlantSampleTime, "\"sample_time\" is a version-2 feature; set \"version\": 2 or later"));
        }
        if let Some(f) = &spec.feedback {
            if f.pattern.is_some() || f.spec.is_some() || f.lqr.is_some() || f.plane.is_some() {
                return Err(InputError::new(FieldPath::Feedback, "\"pattern\", \"spec\", \"lqr\" and \"plane\" are version-2 features; set \"version\": 2 or later"));
            }
        }
    }
    if version < 3 && !(spec.title.is_empty() && spec.notes.is_empty()) {
        let path = if spec.title.is_empty() { FieldPath::Notes } else { FieldPath::Title };
        return Err(InputError::new(path, "\"title\" and \"notes\" are version-3 features; set \"version\": 3"));
    }
    if version >= 3 && (spec.comment.is_some() || spec.description.is_some()) {
        let key = if spec.comment.is_some() { "comment" } else { "description" };
        return Err(InputError::new(FieldPath::Notes, format!("\"{key}\" was replaced by \"notes\" in version 3; move its text there")));
    }
    // Versions 1 and 2 kept free text in `comment` and `description`: it becomes the notes.
    let old: Vec<String> = [spec.description.take(), spec.comment.take()]
        .into_iter()
        .flatten()
        .map(|v| match v {
            Value::String(s) => s,
            other => other.to_string(),
        })
        .collect();
    if !old.is_empty() {
        spec.notes = old.join("\n\n");
    }
    spec.version = DESIGN_VERSION;
    Ok(spec)
}

/// A serde_json message without the line/column suffix when it adds nothing a person can use;
/// line and column are kept for syntax errors (they point into the file).
fn json_message(e: &serde_json::Error) -> String {
    use serde_json::error::Category;
    let text = e.to_string();
    match e.classify() {
        Category::Syntax | Category::Eof => format!("not valid JSON: {text}"),
        Category::Io => text,
        Category::Data => match text.rfind(" at line ") {
            Some(i) => text[..i].to_string(),
            None => text,
        },
    }
}

/// The document as pretty JSON text (what *Save design* downloads and the CLI reads).
///
/// # Errors
/// An [`InputError`] of the document if serde_json refuses it (it cannot for this type: keys are
/// strings and numbers finite; the error is kept rather than assumed away).
pub fn write_design(spec: &DesignSpec) -> Result<String, InputError> {
    let mut text = serde_json::to_string_pretty(spec).map_err(|e| InputError::new(FieldPath::Document, format!("could not be written: {e}")))?;
    text.push('\n');
    Ok(text)
}
