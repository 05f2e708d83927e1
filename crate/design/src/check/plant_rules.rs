//! Rules of the plant, the actuator limits and the free-response simulation.

use nalgebra::DMatrix;

use super::{band_fraction, blank, limits, matrix, names, plural, positive, vector, Basics, Checker};
use crate::plant::{Field, Plant, PlantError, PlantSpec};
use crate::spec::{DesignSpec, MatrixValue};
use crate::FieldPath as P;

fn dims(m: &DMatrix<f64>) -> String {
    format!("{} × {}", m.nrows(), m.ncols())
}

/// The path of a plant field.
fn plant_path(field: Field) -> P {
    match field {
        Field::A => P::PlantA,
        Field::B => P::PlantB,
        Field::C => P::PlantC,
        Field::D => P::PlantD,
        Field::StateNames => P::PlantStateNames,
        Field::InputNames => P::PlantInputNames,
        Field::StateUnits => P::PlantStateUnits,
        Field::InputUnits => P::PlantInputUnits,
        Field::OutputNames => P::PlantOutputNames,
        Field::OutputUnits => P::PlantOutputUnits,
    }
}

/// The field a plant error belongs to, and its message.
fn attribute(e: &PlantError) -> (P, String) {
    let field = e.field();
    let message = match e {
        PlantError::Count { field, expected, found } => {
            let (one, many, of_one, of_many) = match field {
                Field::OutputNames => ("name", "names", "output", "outputs"),
                Field::OutputUnits => ("unit", "units", "output", "outputs"),
                Field::StateNames => ("name", "names", "state", "states"),
                Field::StateUnits => ("unit", "units", "state", "states"),
                Field::InputNames => ("name", "names", "input", "inputs"),
                Field::InputUnits => ("unit", "units", "input", "inputs"),
                _ => ("entry", "entries", "entry", "entries"),
            };
            format!("{} given but the plant has {}; give one per {of_one} or leave this out", plural(*found, one, many), plural(*expected, of_one, of_many))
        }
        other => other.message(),
    };
    (plant_path(field), message)
}

/// A required matrix: blank or missing is "required".
fn required(c: &mut Checker, path: P, v: &Option<MatrixValue>, what: &str) -> Option<DMatrix<f64>> {
    match v.as_ref().and_then(matrix) {
        None => {
            c.push(path, format!("required: enter {what}, one row per line, entries separated by spaces, tabs or commas"));
            None
        }
        Some(r) => c.take(path, r),
    }
}

fn optional(c: &mut Checker, path: P, v: &Option<MatrixValue>) -> Option<DMatrix<f64>> {
    let m = c.take(path, v.as_ref().and_then(matrix).transpose()).flatten();
    if let Some(m) = &m {
        c.size(path, dims(m));
    }
    m
}

/// The plant, when A and B (and C, D, names and units) read and agree.
pub(super) fn plant(spec: &DesignSpec, c: &mut Checker) -> Option<Plant> {
    let p = &spec.plant;
    let a = required(c, P::PlantA, &p.a, "the state matrix A (states × states)");
    if let Some(a) = &a {
        c.size(P::PlantA, dims(a));
    }
    let b = required(c, P::PlantB, &p.b, "the input matrix B (states × inputs)").map(|b| {
        // One line of n numbers (n > 1) can only mean a column: B needs n rows.
        let column = b.nrows() == 1 && b.ncols() > 1 && a.as_ref().is_some_and(|a| a.nrows() == b.ncols());
        let shown = if column { format!("{} (one line read as a column)", dims(&b.transpose())) } else { dims(&b) };
        c.size(P::PlantB, shown);
        if column {
            b.transpose()
        } else {
            b
        }
    });
    let cm = optional(c, P::PlantC, &p.c);
    let dm = optional(c, P::PlantD, &p.d);
    let lists = [
        (P::PlantStateNames, names(&p.state_names), "name", "names"),
        (P::PlantStateUnits, names(&p.state_units), "unit", "units"),
        (P::PlantInputNames, names(&p.input_names), "name", "names"),
        (P::PlantInputUnits, names(&p.input_units), "unit", "units"),
        (P::PlantOutputNames, names(&p.output_names), "name", "names"),
        (P::PlantOutputUnits, names(&p.output_units), "unit", "units"),
    ];
    for (path, list, one, many) in &lists {
        if !list.is_empty() {
            c.size(*path, plural(list.len(), one, many));
        }
    }
    if cm.is_none() && !c.has(P::PlantC) {
        if !lists[4].1.is_empty() {
            c.push(P::PlantOutputNames, "output names need outputs: give the output matrix C, or leave this out");
        }
        if !lists[5].1.is_empty() {
            c.push(P::PlantOutputUnits, "output units need outputs: give the output matrix C, or leave this out");
        }
    }
    let (a, b) = (a?, b?);
    if c.has(P::PlantC) || c.has(P::PlantD) {
        return None;
    }
    let [sn, su, inn, iu, on, ou] = lists.map(|l| l.1);
    let has_c = cm.is_some();
    let spec = PlantSpec {
        a,
        b,
        c: cm,
        d: dm,
        state_names: sn,
        input_names: inn,
        output_names: if has_c { on } else { Vec::new() },
        state_units: su,
        input_units: iu,
        output_units: if has_c { ou } else { Vec::new() },
    };
    match Plant::new(spec) {
        Ok(p) => Some(p),
        Err(e) => {
            let (field, message) = attribute(&e);
            c.push(field, message);
            None
        }
    }
}

/// Actuator limits, initial state, duration and settling band.
pub(super) fn basics(spec: &DesignSpec, plant: Option<&Plant>, c: &mut Checker) -> Basics {
    let sim = spec.simulation.as_ref();
    let limits = match spec.actuators.as_ref().and_then(|a| a.limit.as_ref()).and_then(|l| limits(l, "input")) {
        None => Some(Vec::new()),
        Some(r) => c.take(P::ActuatorLimits, r),
    };
    if let Some(l) = limits.as_ref().filter(|l| !l.is_empty()) {
        c.size(P::ActuatorLimits, plural(l.len(), "limit", "limits"));
    }
    let state_limits = match spec.plant.state_limits.as_ref().and_then(|l| super::limits(l, "state")) {
        None => Some(Vec::new()),
        Some(r) => c.take(P::PlantStateLimits, r),
    };
    if let Some(l) = state_limits.as_ref().filter(|l| !l.is_empty()) {
        c.size(P::PlantStateLimits, plural(l.len(), "limit", "limits"));
    }
    let initial_state = match sim.and_then(|s| s.initial_state.as_ref()).and_then(vector) {
        None => Some(None),
        Some(r) => c.take(P::InitialState, r).map(Some),
    };
    if let Some(Some(x)) = &initial_state {
        c.size(P::InitialState, plural(x.len(), "value", "values"));
    }
    let duration = match sim.and_then(|s| s.duration.as_ref()) {
        None => Some(None),
        Some(d) => match positive(d, "simulated time in seconds", "5") {
            None => Some(None),
            Some(r) => c.take(P::Duration, r).map(Some),
        },
    };
    let band = match sim.and_then(|s| s.band.as_ref()).and_then(band_fraction) {
        None => Some(crate::metrics::DEFAULT_BAND),
        Some(r) => c.take(P::Band, r),
    };
    if let Some(p) = plant {
        let (n, m) = (p.states(), p.inputs());
        if let Some(l) = limits.as_ref().filter(|l| !l.is_empty() && l.len() != m) {
            c.push(
                P::ActuatorLimits,
                format!(
                    "{} given but the plant has {}; give one limit per input in the order of the columns of B (none for an input without a limit), or leave this out{}",
                    plural(l.len(), "limit", "limits"),
                    plural(m, "input", "inputs"),
                    super::comma_hint(match spec.actuators.as_ref().and_then(|a| a.limit.as_ref()) {
                        Some(crate::spec::LimitList::Text(t)) => Some(t.as_str()),
                        _ => None,
                    })
                ),
            );
        }
        if let Some(l) = state_limits.as_ref().filter(|l| !l.is_empty() && l.len() != n) {
            c.push(
                P::PlantStateLimits,
                format!(
                    "{} given but the plant has {}; give one limit per state in the order of the rows of A (none for a state without a limit), or leave this out",
                    plural(l.len(), "limit", "limits"),
                    plural(n, "state", "states")
                ),
            );
        }
        if let Some(Some(x)) = initial_state.as_ref().filter(|x| x.as_ref().is_some_and(|x| x.len() != n)) {
            c.push(
                P::InitialState,
                format!(
                    "{} given but the plant has {}; give one value per state, or leave this out to start from 1 in the first state{}",
                    plural(x.len(), "value", "values"),
                    plural(n, "state", "states"),
                    super::comma_hint(match sim.and_then(|s| s.initial_state.as_ref()) {
                        Some(crate::spec::NumberList::Text(t)) => Some(t.as_str()),
                        _ => None,
                    })
                ),
            );
        }
    }
    let _ = blank;
    Basics { limits, state_limits, initial_state, duration, band }
}
