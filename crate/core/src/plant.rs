//! The plant model `x' = A x + B u`, `y = C x + D u`, validated once at this boundary.
//!
//! A [`Plant`] can only be built through [`Plant::new`], which checks shapes,
//! finiteness and that `B` is not all zero; everything downstream trusts it.
//! Names default to `x1…xn`, `u1…um`, `y1…yp`; units are optional free text.

use nalgebra::DMatrix;

/// Which matrix of the model a message is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Field {
    A,
    B,
    C,
    D,
    StateNames,
    InputNames,
    OutputNames,
    StateUnits,
    InputUnits,
    OutputUnits,
}

impl Field {
    /// The key used in design files and on the page (`"a"`, `"state_names"`, …).
    pub fn key(self) -> &'static str {
        match self {
            Field::A => "a",
            Field::B => "b",
            Field::C => "c",
            Field::D => "d",
            Field::StateNames => "state_names",
            Field::InputNames => "input_names",
            Field::OutputNames => "output_names",
            Field::StateUnits => "state_units",
            Field::InputUnits => "input_units",
            Field::OutputUnits => "output_units",
        }
    }
}

/// Why a plant model was refused.
#[derive(Debug, Clone, PartialEq)]
pub enum PlantError {
    /// A matrix has no entries.
    Empty { field: Field },
    /// `A` is not square.
    NotSquare { rows: usize, columns: usize },
    /// A matrix has the wrong number of rows.
    Rows { field: Field, expected: usize, found: usize, reason: &'static str },
    /// A matrix has the wrong number of columns.
    Columns { field: Field, expected: usize, found: usize, reason: &'static str },
    /// An entry is NaN or infinite (0-based indices).
    NotFinite { field: Field, row: usize, column: usize },
    /// `B` is all zero: no input acts on the plant.
    ZeroInput,
    /// `D` was given without `C`.
    FeedthroughWithoutOutput,
    /// A list of names or units has the wrong length.
    Count { field: Field, expected: usize, found: usize },
}

impl PlantError {
    /// The field the error belongs to.
    pub fn field(&self) -> Field {
        match self {
            PlantError::Empty { field } | PlantError::Rows { field, .. } | PlantError::Columns { field, .. } | PlantError::NotFinite { field, .. } | PlantError::Count { field, .. } => *field,
            PlantError::NotSquare { .. } => Field::A,
            PlantError::ZeroInput => Field::B,
            PlantError::FeedthroughWithoutOutput => Field::D,
        }
    }

    /// The message without the field's name.
    pub fn message(&self) -> String {
        let s = |n: usize| if n == 1 { "" } else { "s" };
        match self {
            PlantError::Empty { .. } => "the matrix is empty; enter at least one number".into(),
            PlantError::NotSquare { rows, columns } => format!("A must be square (states × states) but it is {rows}×{columns}; give as many columns as rows"),
            PlantError::Rows { expected, found, reason, .. } => format!("has {found} row{} but needs {expected} ({reason})", s(*found)),
            PlantError::Columns { expected, found, reason, .. } => format!("has {found} column{} but needs {expected} ({reason})", s(*found)),
            PlantError::NotFinite { row, column, .. } => format!("entry at row {}, column {} is not a finite number", row + 1, column + 1),
            PlantError::ZeroInput => "B is all zero, so no input acts on the plant; enter the input matrix".into(),
            PlantError::FeedthroughWithoutOutput => "D was given without C; give C (outputs × states) or leave D out".into(),
            PlantError::Count { expected, found, .. } => format!("{found} given but the plant has {expected}; give one per entry or leave the list empty"),
        }
    }
}

impl std::fmt::Display for PlantError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.field().key(), self.message())
    }
}

impl std::error::Error for PlantError {}

/// Everything a caller may supply; checked by [`Plant::new`].
#[derive(Debug, Clone, Default)]
pub struct PlantSpec {
    pub a: DMatrix<f64>,
    pub b: DMatrix<f64>,
    pub c: Option<DMatrix<f64>>,
    pub d: Option<DMatrix<f64>>,
    pub state_names: Vec<String>,
    pub input_names: Vec<String>,
    pub output_names: Vec<String>,
    pub state_units: Vec<String>,
    pub input_units: Vec<String>,
    pub output_units: Vec<String>,
}

/// A validated plant model.
#[derive(Debug, Clone, PartialEq)]
pub struct Plant {
    a: DMatrix<f64>,
    b: DMatrix<f64>,
    c: Option<DMatrix<f64>>,
    d: Option<DMatrix<f64>>,
    state_names: Vec<String>,
    input_names: Vec<String>,
    output_names: Vec<String>,
    state_units: Vec<String>,
    input_units: Vec<String>,
    output_units: Vec<String>,
}

fn check_finite(field: Field, m: &DMatrix<f64>) -> Result<(), PlantError> {
    for j in 0..m.ncols() {
        for i in 0..m.nrows() {
            if !m[(i, j)].is_finite() {
                return Err(PlantError::NotFinite { field, row: i, column: j });
            }
        }
    }
    Ok(())
}

fn names(field: Field, given: Vec<String>, count: usize, prefix: &str) -> Result<Vec<String>, PlantError> {
    if given.is_empty() {
        return Ok((1..=count).map(|i| format!("{prefix}{i}")).collect());
    }
    if given.len() != count {
        return Err(PlantError::Count { field, expected: count, found: given.len() });
    }
    Ok(given)
}

fn units(field: Field, given: Vec<String>, count: usize) -> Result<Vec<String>, PlantError> {
    if given.is_empty() {
        return Ok(vec![String::new(); count]);
    }
    if given.len() != count {
        return Err(PlantError::Count { field, expected: count, found: given.len() });
    }
    Ok(given)
}

impl Plant {
    /// Validates a plant model.
    ///
    /// # Errors
    /// A [`PlantError`] naming the matrix (or list) and what to change.
    pub fn new(spec: PlantSpec) -> Result<Plant, PlantError> {
        let PlantSpec { a, b, c, d, state_names, input_names, output_names, state_units, input_units, output_units } = spec;
        if a.is_empty() {
            return Err(PlantError::Empty { field: Field::A });
        }
        if a.nrows() != a.ncols() {
            return Err(PlantError::NotSquare { rows: a.nrows(), columns: a.ncols() });
        }
        let n = a.nrows();
        check_finite(Field::A, &a)?;
        if b.is_empty() {
            return Err(PlantError::Empty { field: Field::B });
        }
        if b.nrows() != n {
            return Err(PlantError::Rows { field: Field::B, expected: n, found: b.nrows(), reason: "one row per state, as in A" });
        }
        check_finite(Field::B, &b)?;
        if b.iter().all(|&v| v == 0.0) {
            return Err(PlantError::ZeroInput);
        }
        let m = b.ncols();
        if let Some(c) = &c {
            if c.is_empty() {
                return Err(PlantError::Empty { field: Field::C });
            }
            if c.ncols() != n {
                return Err(PlantError::Columns { field: Field::C, expected: n, found: c.ncols(), reason: "one column per state, as in A" });
            }
            check_finite(Field::C, c)?;
        }
        let d = match (&c, d) {
            (None, Some(_)) => return Err(PlantError::FeedthroughWithoutOutput),
            (None, None) => None,
            (Some(c), Some(d)) => {
                if d.nrows() != c.nrows() {
                    return Err(PlantError::Rows { field: Field::D, expected: c.nrows(), found: d.nrows(), reason: "one row per output, as in C" });
                }
                if d.ncols() != m {
                    return Err(PlantError::Columns { field: Field::D, expected: m, found: d.ncols(), reason: "one column per input, as in B" });
                }
                check_finite(Field::D, &d)?;
                Some(d)
            }
            (Some(c), None) => Some(DMatrix::zeros(c.nrows(), m)),
        };
        let p = c.as_ref().map_or(0, |c| c.nrows());
        Ok(Plant {
            state_names: names(Field::StateNames, state_names, n, "x")?,
            input_names: names(Field::InputNames, input_names, m, "u")?,
            output_names: names(Field::OutputNames, output_names, p, "y")?,
            state_units: units(Field::StateUnits, state_units, n)?,
            input_units: units(Field::InputUnits, input_units, m)?,
            output_units: units(Field::OutputUnits, output_units, p)?,
            a,
            b,
            c,
            d,
        })
    }

    /// The same plant (outputs, names and units) with other `A` and `B` of the same sizes, as
    /// for a perturbed model.
    ///
    /// # Errors
    /// [`PlantError`] when the new matrices do not fit or are not finite.
    pub fn with_dynamics(&self, a: DMatrix<f64>, b: DMatrix<f64>) -> Result<Plant, PlantError> {
        Plant::new(PlantSpec {
            a,
            b,
            c: self.c.clone(),
            d: self.d.clone(),
            state_names: self.state_names.clone(),
            input_names: self.input_names.clone(),
            output_names: self.output_names.clone(),
            state_units: self.state_units.clone(),
            input_units: self.input_units.clone(),
            output_units: self.output_units.clone(),
        })
    }

    /// Number of states `n`.
    pub fn states(&self) -> usize {
        self.a.nrows()
    }
    /// Number of inputs `m`.
    pub fn inputs(&self) -> usize {
        self.b.ncols()
    }
    /// Number of outputs `p` (0 without `C`).
    pub fn outputs(&self) -> usize {
        self.c.as_ref().map_or(0, |c| c.nrows())
    }
    pub fn a(&self) -> &DMatrix<f64> {
        &self.a
    }
    pub fn b(&self) -> &DMatrix<f64> {
        &self.b
    }
    pub fn c(&self) -> Option<&DMatrix<f64>> {
        self.c.as_ref()
    }
    /// `D`; zero when `C` was given without it.
    pub fn d(&self) -> Option<&DMatrix<f64>> {
        self.d.as_ref()
    }
    pub fn state_names(&self) -> &[String] {
        &self.state_names
    }
    pub fn input_names(&self) -> &[String] {
        &self.input_names
    }
    pub fn output_names(&self) -> &[String] {
        &self.output_names
    }
    pub fn state_units(&self) -> &[String] {
        &self.state_units
    }
    pub fn input_units(&self) -> &[String] {
        &self.input_units
    }
    pub fn output_units(&self) -> &[String] {
        &self.output_units
    }
}

#[cfg(test)]
#[path = "tests/plant.rs"]
mod tests;
