//! The one rulebook: a [`DesignSpec`] in, a [`CheckedDesign`] (the types the run trusts) or every
//! input error out, each with its [`FieldPath`]. The design file and the page form both end
//! here; neither holds a design rule of its own.
//!
//! Fields are read one by one, so that every field with a problem gets its own message (at most
//! one per field); rules between fields run once the fields they join have read. Along the way
//! the live size of each matrix and list (`"3 × 3"`, `"4 poles"`) is recorded for the page.
//!
//! Blank text in a field that the document names counts as *given but empty*: the page writes
//! a required field that way, and the message then says it is required.

use nalgebra::DMatrix;
use num_complex::Complex64;

use super::spec::*;
use super::{ControllerSpec, DesignError, DesignRequest, FieldPath as P, InputError};
use crate::parse::{parse_matrix, parse_names, parse_vector};
use crate::poles::{check_conjugate_pairs, format_complex, parse_pole_items, parse_poles};

/// Most samples a digital simulation may take (every sample of every signal is kept: 50 000
/// samples of a 10-state loop are about 10 MB and a tenth of a second).
pub const MAX_LOOP_SAMPLES: f64 = 50_000.0;

/// Observer speed factor used when none is given (common practice: 2–6).
pub const DEFAULT_OBSERVER_SPEED: f64 = 4.0;

/// A document that passed every rule: what the run needs, and how the choices were made.
#[derive(Debug, Clone)]
pub struct CheckedDesign {
    pub request: DesignRequest,
    pub controller: ControllerSpec,
    /// How the poles were chosen (for redirecting a placement error to the right field).
    pub source: PoleSource,
    /// The LQR input bounds are the actuator limits (`bryson.max_input` left out).
    pub lqr_inputs_from_limits: bool,
    /// What the search could not take into account.
    pub search_notes: Vec<String>,
}

/// Where the controller's poles come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PoleSource {
    List,
    Pattern,
    Specification,
    Lqr,
}

/// The checker's answer: a design, or every input error; and the live sizes either way.
#[derive(Debug, Clone)]
pub struct CheckReport {
    pub design: Option<CheckedDesign>,
    /// At most one per field, in the order found.
    pub errors: Vec<InputError>,
    /// Live sizes of matrices and lists that read (`"3 × 3"`, `"4 poles"`).
    pub sizes: Vec<(P, String)>,
}

/// Reads and checks a design file: the first input error, or the checked design.
///
/// # Errors
/// [`DesignError::Input`] with the first error (in document order).
pub fn check_text(text: &str) -> Result<CheckedDesign, DesignError> {
    let spec = read_design(text)?;
    let mut report = check(&spec);
    report.errors.sort_by_key(|e| e.field);
    match (report.design, report.errors.into_iter().next()) {
        (_, Some(e)) => Err(DesignError::Input(e)),
        (Some(d), None) => Ok(d),
        // invariant: `check` returns a design exactly when it found no error.
        (None, None) => Err(DesignError::Input(InputError::new(P::Document, "the design could not be read"))),
    }
}

// ---------------------------------------------------------------------------------------------
// Collecting errors and sizes.

struct Checker {
    errors: Vec<InputError>,
    sizes: Vec<(P, String)>,
}

impl Checker {
    fn push(&mut self, field: P, message: impl Into<String>) {
        if !self.has(field) {
            self.errors.push(InputError::new(field, message));
        }
    }
    fn has(&self, field: P) -> bool {
        self.errors.iter().any(|e| e.field == field)
    }
    fn take<T>(&mut self, field: P, r: Result<T, String>) -> Option<T> {
        match r {
            Ok(v) => Some(v),
            Err(e) => {
                self.push(field, e);
                None
            }
        }
    }
    fn size(&mut self, field: P, text: String) {
        self.sizes.push((field, text));
    }
}

pub(crate) fn plural(count: usize, one: &str, many: &str) -> String {
    format!("{count} {}", if count == 1 { one } else { many })
}

fn blank(text: &str) -> bool {
    text.trim_start_matches('\u{feff}').trim().is_empty()
}

fn full(x: f64) -> String {
    format_complex(Complex64::new(x, 0.0))
}

// ---------------------------------------------------------------------------------------------
// Leaves.

/// Largest magnitude of a matrix entry or a pole: the numerical routines square and multiply
/// entries, so numbers near the ends of `f64`'s range (about 1e±308) overflow or underflow
/// inside them; a model is brought into range by a change of units.
pub const MAX_MAGNITUDE: f64 = 1e150;

/// Refuses an entry outside `[1/MAX_MAGNITUDE, MAX_MAGNITUDE]` in magnitude (zero is fine).
fn in_range(m: DMatrix<f64>) -> Result<DMatrix<f64>, String> {
    for j in 0..m.ncols() {
        for i in 0..m.nrows() {
            let v = m[(i, j)].abs();
            if v > MAX_MAGNITUDE || (v > 0.0 && v < 1.0 / MAX_MAGNITUDE) {
                return Err(format!(
                    "row {}, column {}: {:e} is beyond the range this tool computes with (1e-150 to 1e150 in magnitude); change the units of the states or inputs to bring the numbers nearer 1",
                    i + 1,
                    j + 1,
                    m[(i, j)]
                ));
            }
        }
    }
    Ok(m)
}

/// `None` for blank text (given but empty).
fn matrix(v: &MatrixValue) -> Option<Result<DMatrix<f64>, String>> {
    matrix_as_typed(v).map(|r| r.and_then(in_range))
}

fn matrix_as_typed(v: &MatrixValue) -> Option<Result<DMatrix<f64>, String>> {
    Some(match v {
        MatrixValue::Text(s) if blank(s) => return None,
        MatrixValue::Text(s) => parse_matrix(s).map_err(|e| e.to_string()),
        MatrixValue::Flat(x) => Ok(DMatrix::from_row_slice(1, x.len(), x)),
        MatrixValue::Rows(rows) => {
            let cols = rows.first().map_or(0, Vec::len);
            if cols == 0 {
                return Some(Err("row 1 is empty; every row needs at least one number".into()));
            }
            match rows.iter().position(|r| r.len() != cols) {
                Some(i) => Err(format!("row {} has {} entries but row 1 has {cols}; every row needs the same number of entries", i + 1, rows[i].len())),
                None => Ok(DMatrix::from_fn(rows.len(), cols, |i, j| rows[i][j])),
            }
        }
    })
}

fn vector(v: &NumberList) -> Option<Result<Vec<f64>, String>> {
    Some(match v {
        NumberList::Text(s) if blank(s) => return None,
        NumberList::Text(s) => parse_vector(s).map_err(|e| e.to_string()),
        NumberList::List(x) => Ok(x.clone()),
        NumberList::One(x) => Ok(vec![*x]),
    })
}

fn poles(v: &PoleList) -> Option<Result<Vec<Complex64>, String>> {
    let items = match v {
        PoleList::Text(s) if blank(s) => return None,
        PoleList::Text(s) => {
            return Some(parse_poles(s).map_err(|e| e.to_string()).and_then(|p| match p.iter().find(|z| z.norm() > MAX_MAGNITUDE) {
                Some(z) => {
                    Err(format!("the pole {} is beyond the range this tool computes with (magnitude up to 1e150); change the time unit to bring the poles nearer 1", crate::poles::format_complex(*z)))
                }
                None => Ok(p),
            }))
        }
        PoleList::Items(items) => items,
    };
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        match item {
            PoleItem::Real(x) => out.push(Complex64::new(*x, 0.0)),
            PoleItem::Pair([re, im]) => out.push(Complex64::new(*re, *im)),
            PoleItem::Text(s) => match parse_pole_items(s) {
                Ok(p) => out.extend(p),
                Err(e) => return Some(Err(format!("entry {}: {e}", i + 1))),
            },
        }
    }
    if let Some(z) = out.iter().find(|z| z.norm() > MAX_MAGNITUDE) {
        return Some(Err(format!(
            "the pole {} is beyond the range this tool computes with (magnitude up to 1e150); change the time unit to bring the poles nearer 1",
            crate::poles::format_complex(*z)
        )));
    }
    Some(check_conjugate_pairs(&out).map(|_| out).map_err(|e| e.to_string()))
}

fn names(v: &Option<NameList>) -> Vec<String> {
    match v {
        None => Vec::new(),
        Some(NameList::Text(s)) => parse_names(s),
        Some(NameList::List(items)) => items.iter().map(|s| s.trim().to_string()).collect(),
    }
}

/// The decimal-comma hint of a list typed as text (empty otherwise).
pub(crate) fn comma_hint(text: Option<&str>) -> String {
    text.and_then(crate::parse::decimal_comma_hint).unwrap_or_default()
}

/// One number; `None` for blank text.
fn scalar(v: &Scalar, what: &str) -> Option<Result<f64, String>> {
    Some(match v {
        Scalar::Number(x) => Ok(*x),
        Scalar::Text(s) if blank(s) => return None,
        Scalar::Text(s) => parse_vector(s).map_err(|e| e.to_string()).and_then(|vals| match vals.as_slice() {
            [x] => Ok(*x),
            _ => Err(format!("{} numbers given; give one {what}{}", vals.len(), crate::parse::decimal_comma_hint(s).unwrap_or_default())),
        }),
    })
}

fn positive(v: &Scalar, what: &str, example: &str) -> Option<Result<f64, String>> {
    scalar(v, what).map(|r| r.and_then(|x| if x > 0.0 { Ok(x) } else { Err(format!("{} must be a positive number ({what}), for example {example}", full(x))) }))
}

fn non_negative(v: &Scalar, what: &str) -> Option<Result<f64, String>> {
    scalar(v, what).map(|r| r.and_then(|x| if x >= 0.0 { Ok(x) } else { Err(format!("{} must be zero or positive ({what})", full(x))) }))
}

fn positive_limit(k: usize, v: f64, token: &str, what: &str) -> Result<Option<f64>, String> {
    if v > 0.0 && v.is_finite() {
        Ok(Some(v))
    } else {
        Err(format!(
            "entry {k}: {token} must be a positive number (a limit is the largest magnitude the {what} can reach); write none for {} {what} without a limit",
            if what.starts_with(['a', 'e', 'i', 'o', 'u']) { "an" } else { "a" }
        ))
    }
}

/// Limits of inputs or of states (`what`): positive numbers, `none` (text) or `null` (JSON)
/// for one without a limit.
fn limits(v: &LimitList, what: &str) -> Option<Result<Vec<Option<f64>>, String>> {
    let text = match v {
        LimitList::One(x) => return Some(positive_limit(1, *x, &full(*x), what).map(|l| vec![l])),
        LimitList::List(items) => return Some(items.iter().enumerate().map(|(i, x)| x.map_or(Ok(None), |x| positive_limit(i + 1, x, &full(x), what))).collect()),
        LimitList::Text(s) if blank(s) => return None,
        LimitList::Text(s) => s.trim_start_matches('\u{feff}').trim(),
    };
    if text.starts_with('[') {
        return Some(parse_vector(text).map_err(|e| e.to_string()).and_then(|vals| vals.into_iter().enumerate().map(|(i, v)| positive_limit(i + 1, v, &full(v), what)).collect()));
    }
    let mut out = Vec::new();
    for (i, token) in text.split(|c: char| c == ',' || c.is_whitespace()).filter(|t| !t.is_empty()).enumerate() {
        if token.eq_ignore_ascii_case("none") {
            out.push(None);
            continue;
        }
        let value = match parse_matrix(token) {
            Ok(m) if m.len() == 1 => m.iter().next().copied(),
            _ => None,
        };
        match value {
            Some(v) => match positive_limit(i + 1, v, token, what) {
                Ok(l) => out.push(l),
                Err(e) => return Some(Err(e)),
            },
            None => {
                let article = if what.starts_with(['a', 'e', 'i', 'o', 'u']) { "an" } else { "a" };
                return Some(Err(format!("entry {}: {token:?} is not a number; give a positive limit such as 60 (in the {what}'s unit), or none for {article} {what} without a limit", i + 1)));
            }
        }
    }
    Some(Ok(out))
}

/// Tracked outputs: names (as in the output names) or numbers (1 = first row of C).
fn outputs(v: &OutputList, names: &[String]) -> Option<Result<Vec<usize>, String>> {
    let p = names.len();
    let refs: Vec<OutputRef> = match v {
        OutputList::Text(s) if blank(s) => return None,
        OutputList::Text(s) => parse_names(s).into_iter().map(|t| t.parse::<u64>().map_or(OutputRef::Name(t.clone()), OutputRef::Number)).collect(),
        OutputList::List(items) => items.clone(),
    };
    let mut out = Vec::new();
    for (i, r) in refs.iter().enumerate() {
        let idx = match r {
            OutputRef::Name(name) => names.iter().position(|n| n == name.trim()),
            OutputRef::Number(k) => usize::try_from(*k).ok().filter(|k| (1..=p).contains(k)).map(|k| k - 1),
        };
        let Some(idx) = idx else {
            let shown = match r {
                OutputRef::Name(s) => format!("\"{s}\""),
                OutputRef::Number(k) => k.to_string(),
            };
            return Some(Err(format!("entry {}: no output is named {shown}; the outputs are {} (or give their numbers, 1 to {p})", i + 1, names.join(", "))));
        };
        if out.contains(&idx) {
            return Some(Err(format!("entry {}: output {} ({}) is listed twice", i + 1, idx + 1, names.get(idx).map_or("", |s| s.as_str()))));
        }
        out.push(idx);
    }
    if out.is_empty() {
        return Some(Err("no outputs listed; name the outputs to track, or leave this out to track all of them".into()));
    }
    Some(Ok(out))
}

fn band_fraction(v: &Scalar) -> Option<Result<f64, String>> {
    scalar(v, "settling band").map(|r| r.and_then(|b| if b > 0.0 && b < 1.0 { Ok(b) } else { Err(format!("{} must be a fraction between 0 and 1, e.g. 0.02 for ±2 %", full(b))) }))
}

#[path = "check/controller_rules.rs"]
mod controller_rules;
#[path = "check/plant_rules.rs"]
mod plant_rules;
#[path = "check/pole_rules.rs"]
mod pole_rules;
mod robustness_rules;

pub use pole_rules::{choose_poles, PoleRequest};

/// Checks every rule of the document: see the [module documentation](self).
pub fn check(spec: &DesignSpec) -> CheckReport {
    let mut c = Checker { errors: Vec::new(), sizes: Vec::new() };
    let plant = plant_rules::plant(spec, &mut c);
    let basics = plant_rules::basics(spec, plant.as_ref(), &mut c);
    let mut controller = controller_rules::controller(spec, plant.as_ref(), &mut c);
    robustness_rules::robustness(spec, plant.as_ref(), &mut controller, &mut c);
    let poles = pole_rules::pole_source(spec, plant.as_ref(), &basics, &mut controller, &mut c);
    let design = match (plant, basics, poles) {
        (Some(plant), b, Some(setup)) if c.errors.is_empty() => match (b.limits, b.state_limits, b.initial_state, b.duration, b.band) {
            (Some(limits), Some(state_limits), Some(initial_state), Some(duration), Some(band)) => {
                let request = DesignRequest { plant, poles: setup.poles, limits, state_limits, initial_state, duration, band };
                controller_rules::loop_length(&request, &controller, &mut c);
                Some(CheckedDesign { request, controller, source: setup.source, lqr_inputs_from_limits: setup.lqr_inputs_from_limits, search_notes: setup.search_notes })
            }
            _ => None,
        },
        _ => None,
    };
    let design = design.filter(|_| c.errors.is_empty());
    CheckReport { design, errors: c.errors, sizes: c.sizes }
}

/// What the other sections gave, for the rules that join them.
struct Basics {
    limits: Option<Vec<Option<f64>>>,
    state_limits: Option<Vec<Option<f64>>>,
    initial_state: Option<Option<Vec<f64>>>,
    duration: Option<Option<f64>>,
    band: Option<f64>,
}

/// The pole source, once read.
struct PoleSetup {
    source: PoleSource,
    poles: Vec<Complex64>,
    lqr_inputs_from_limits: bool,
    search_notes: Vec<String>,
}

// ---------------------------------------------------------------------------------------------
// The canonical document.

/// The same document with every leaf that reads written as plain JSON (matrices as lists of
/// rows, lists of numbers, real poles as numbers and complex ones as `[re, im]`, names as
/// lists, single numbers as numbers); text that does not read is kept as it is. Two documents
/// that say the same thing — one typed on the page, one written by a script — have the same
/// canonical form.
pub fn canonical(spec: &DesignSpec) -> DesignSpec {
    let mut out = spec.clone();
    let p = &mut out.plant;
    for m in [&mut p.a, &mut p.b, &mut p.c, &mut p.d, &mut p.e].into_iter().flatten() {
        *m = canonical_matrix(m);
    }
    for n in [&mut p.state_names, &mut p.state_units, &mut p.input_names, &mut p.input_units, &mut p.output_names, &mut p.output_units].into_iter().flatten() {
        *n = NameList::List(names(&Some(n.clone())));
    }
    canonical_scalar(&mut p.sample_time);
    if let Some(f) = &mut out.feedback {
        canonical_poles(&mut f.poles);
        if let Some(pt) = &mut f.pattern {
            for s in [&mut pt.settling_time, &mut pt.bandwidth, &mut pt.band] {
                canonical_scalar(s);
            }
        }
        if let Some(sp) = &mut f.spec {
            for s in [&mut sp.overshoot, &mut sp.settling_time, &mut sp.band, &mut sp.rise_time, &mut sp.bandwidth] {
                canonical_scalar(s);
            }
        }
        if let Some(l) = &mut f.lqr {
            for m in [&mut l.q, &mut l.r, &mut l.s].into_iter().flatten() {
                *m = canonical_matrix(m);
            }
            if let Some(b) = &mut l.bryson {
                canonical_numbers(&mut b.max_state);
                canonical_numbers(&mut b.max_input);
            }
        }
    }
    if let Some(Some(l)) = out.actuators.as_mut().map(|a| &mut a.limit) {
        if let Some(Ok(v)) = limits(l, "input") {
            *l = LimitList::List(v);
        }
    }
    if let Some(l) = out.plant.state_limits.as_mut() {
        if let Some(Ok(v)) = limits(l, "state") {
            *l = LimitList::List(v);
        }
    }
    canonical_sections(&mut out);
    drop_defaults(&mut out);
    out
}

/// Values written out that only repeat the default are left out.
fn drop_defaults(out: &mut DesignSpec) {
    if let Some(f) = &mut out.feedback {
        if f.plane == Some(PlaneChoice::S) {
            f.plane = None;
        }
    }
    if let Some(i) = &mut out.implementation {
        if i.method == Some(MethodChoice::Zoh) {
            i.method = None;
        }
        if i.computation_delay == Some(false) {
            i.computation_delay = None;
        }
    }
    if let Some(o) = &mut out.observer {
        if o.form == Some(ObserverFormChoice::Predictor) {
            o.form = None;
        }
    }
    if let Some(s) = &mut out.simulation {
        if s.band == Some(Scalar::Number(crate::metrics::DEFAULT_BAND)) {
            s.band = None;
        }
    }
}

fn canonical_sections(out: &mut DesignSpec) {
    if let Some(s) = &mut out.simulation {
        for v in [&mut s.initial_state, &mut s.reference, &mut s.disturbance, &mut s.noise_std, &mut s.initial_estimate] {
            canonical_numbers(v);
        }
        for v in [&mut s.duration, &mut s.band, &mut s.reference_time, &mut s.disturbance_time] {
            canonical_scalar(v);
        }
        if let Some(Whole::Text(t)) = &s.seed {
            if let Ok(v) = t.trim().parse::<u64>() {
                s.seed = Some(Whole::Number(v));
            }
        }
    }
    if let Some(i) = &mut out.implementation {
        canonical_scalar(&mut i.sample_time);
        canonical_poles(&mut i.delay_poles);
    }
    if let Some(o) = &mut out.observer {
        canonical_poles(&mut o.poles);
        canonical_scalar(&mut o.speed_factor);
    }
    if let Some(t) = &mut out.tracking {
        canonical_poles(&mut t.integral_poles);
        if let Some(OutputList::Text(text)) = &t.outputs {
            if !blank(text) {
                let refs = parse_names(text).into_iter().map(|n| n.parse::<u64>().map_or(OutputRef::Name(n.clone()), OutputRef::Number)).collect();
                t.outputs = Some(OutputList::List(refs));
            }
        }
    }
    if let Some(a) = &mut out.anti_windup {
        canonical_scalar(&mut a.time_constant);
    }
}

fn canonical_matrix(m: &MatrixValue) -> MatrixValue {
    match matrix(m) {
        Some(Ok(v)) => MatrixValue::Rows((0..v.nrows()).map(|i| v.row(i).iter().copied().collect()).collect()),
        _ => m.clone(),
    }
}

fn canonical_numbers(v: &mut Option<NumberList>) {
    if let Some(Some(Ok(x))) = v.as_ref().map(vector) {
        *v = Some(NumberList::List(x));
    }
}

fn canonical_scalar(v: &mut Option<Scalar>) {
    if let Some(Some(Ok(x))) = v.as_ref().map(|s| scalar(s, "value")) {
        *v = Some(Scalar::Number(x));
    }
}

fn canonical_poles(v: &mut Option<PoleList>) {
    if let Some(Some(Ok(p))) = v.as_ref().map(poles) {
        *v = Some(PoleList::Items(p.iter().map(|z| if z.im == 0.0 { PoleItem::Real(z.re) } else { PoleItem::Pair([z.re, z.im]) }).collect()));
    }
}
