//! Hand-off to firmware: the designed controller as C99 source, Rust constants, JSON, CSV, and
//! test vectors, each opening with the same header (what the numbers mean and where they came
//! from).
//!
//! The numbers are those of the design result, unchanged; the controller step the C export
//! implements is the one the loop simulation runs (`crate::loop_sim`, its module documentation
//! lists the difference equations), and the test vectors are that simulation's own record of
//! the controller, so a port that reproduces them runs the controller that was simulated.
//!
//! Text from the design (title, names, units) only ever appears inside comments, string
//! literals or quoted CSV cells, escaped for each target ([`text`]); every identifier is generic.

mod c;
mod fixed;
mod header;
pub mod record;
pub mod text;
mod vectors;

use nalgebra::DMatrix;
use sha2::{Digest, Sha256};

use crate::check::CheckedDesign;
use crate::controller::{AntiWindup, ObserverForm};
use crate::result::DesignResult;
use crate::spec::DesignSpec;
use crate::{TrackingSpec, TOOL_VERSION};

/// What to export.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExportFormat {
    /// A C99 header and source: the matrices and one controller step.
    C,
    /// Rust constants.
    Rust,
    /// The controller's matrices as JSON.
    Json,
    /// The controller's matrices as CSV.
    Csv,
    /// Test vectors: measurements and references with the controller's expected outputs.
    Vectors,
}

impl ExportFormat {
    /// Reads `c`, `rust`, `json`, `csv` or `vectors`.
    pub fn parse(text: &str) -> Option<ExportFormat> {
        match text {
            "c" => Some(ExportFormat::C),
            "rust" => Some(ExportFormat::Rust),
            "json" => Some(ExportFormat::Json),
            "csv" => Some(ExportFormat::Csv),
            "vectors" => Some(ExportFormat::Vectors),
            _ => None,
        }
    }
}

/// Number format of the exported coefficients.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Precision {
    /// `double`, 17 significant digits (reads back exactly).
    Double,
    /// `float`, 9 significant digits with an `f` suffix (reads back to the nearest float32).
    Float,
    /// 16-bit fixed point (Q15) with a power-of-two shift per matrix; coefficients only.
    Q15,
    /// 32-bit fixed point (Q31) with a power-of-two shift per matrix; coefficients only.
    Q31,
}

impl Precision {
    /// Reads `double` or `float`.
    pub fn parse(text: &str) -> Option<Precision> {
        match text {
            "double" => Some(Precision::Double),
            "float" => Some(Precision::Float),
            "q15" => Some(Precision::Q15),
            "q31" => Some(Precision::Q31),
            _ => None,
        }
    }
}

/// One exported file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ExportFile {
    pub name: String,
    pub contents: String,
}

/// Why an export could not be made.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ExportError {
    /// The design has no controller step to export in this form (e.g. test vectors of a
    /// continuous design).
    NotAvailable { what: String, why: String },
}

impl std::fmt::Display for ExportError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ExportError::NotAvailable { what, why } => {
                write!(f, "{what} cannot be exported: {why}")
            }
        }
    }
}

impl std::error::Error for ExportError {}

/// A named matrix of the controller, row-major.
#[derive(Debug, Clone, PartialEq)]
pub struct NamedMatrix {
    /// Generic identifier (`K`, `L`, …).
    pub name: &'static str,
    pub description: &'static str,
    pub rows: usize,
    pub cols: usize,
    /// Row-major.
    pub data: Vec<f64>,
}

impl NamedMatrix {
    fn of(name: &'static str, description: &'static str, m: &DMatrix<f64>) -> NamedMatrix {
        let data = (0..m.nrows()).flat_map(|i| (0..m.ncols()).map(move |j| (i, j))).map(|(i, j)| m[(i, j)]).collect();
        NamedMatrix { name, description, rows: m.nrows(), cols: m.ncols(), data }
    }

    /// The matrix itself.
    pub fn dense(&self) -> DMatrix<f64> {
        DMatrix::from_row_slice(self.rows, self.cols, &self.data)
    }

    fn from_rows(name: &'static str, description: &'static str, rows: &[Vec<f64>]) -> NamedMatrix {
        let r = rows.len();
        let c = rows.first().map_or(0, |x| x.len());
        NamedMatrix { name, description, rows: r, cols: c, data: rows.iter().flatten().copied().collect() }
    }
}

/// The controller as it goes into firmware: every matrix and setting of one step, with the
/// design's names for the header.
#[derive(Debug, Clone)]
pub struct Controller {
    pub title: String,
    pub document_sha256: String,
    pub state_names: Vec<String>,
    pub state_units: Vec<String>,
    pub input_names: Vec<String>,
    pub input_units: Vec<String>,
    pub output_names: Vec<String>,
    /// Indices (0-based) of the tracked outputs among the outputs.
    pub tracked: Vec<usize>,
    pub sample_time: Option<f64>,
    pub computation_delay: bool,
    pub observer_form: Option<ObserverForm>,
    pub anti_windup: AntiWindup,
    pub tracking: Tracking,
    pub limits: Vec<Option<f64>>,
    /// `K` (plant states), then as present: `K_u`, `K_i`, `N_x`, `N_u`, `L`, `L_c`, `Phi`,
    /// `Gamma`, `C`, `D`.
    pub matrices: Vec<NamedMatrix>,
}

/// The reference-tracking law of the exported controller.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tracking {
    None,
    Feedforward,
    Integral,
}

impl Controller {
    /// The matrix called `name`, if the controller has it.
    pub fn matrix(&self, name: &str) -> Option<&NamedMatrix> {
        self.matrices.iter().find(|m| m.name == name)
    }
    pub fn states(&self) -> usize {
        self.state_names.len()
    }
    pub fn inputs(&self) -> usize {
        self.input_names.len()
    }
    pub fn outputs(&self) -> usize {
        self.output_names.len()
    }
}

/// SHA-256 (hex) of the canonical form of the design document: the same design gives the same
/// hash however it was written.
pub fn document_hash(spec: &DesignSpec) -> String {
    let text = crate::spec::write_design(&crate::check::canonical(spec)).unwrap_or_default();
    let digest = Sha256::digest(text.as_bytes());
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// Collects the controller of a designed document.
pub fn controller(spec: &DesignSpec, design: &CheckedDesign, result: &DesignResult) -> Controller {
    let plant = &design.request.plant;
    let ctrl = &design.controller;
    let (c, d) = crate::run::output_matrices(plant);
    let tracked = match &ctrl.tracking {
        TrackingSpec::None => Vec::new(),
        TrackingSpec::Feedforward { outputs } | TrackingSpec::Integral { outputs, .. } => outputs.clone(),
    };
    let mut matrices = vec![NamedMatrix::from_rows("K", "state-feedback gain on the plant states (inputs x states)", &result.feedback.gain)];
    if let Some(ku) = &result.feedback.delay_gain {
        matrices.push(NamedMatrix::from_rows("K_u", "gain on the previous command (computation delay; inputs x inputs)", ku));
    }
    let tracking = match &result.tracking {
        Some(crate::result::TrackingResult::Feedforward { nx, nu, .. }) => {
            matrices.push(NamedMatrix::from_rows("N_x", "steady-state state per unit reference (states x tracked)", nx));
            matrices.push(NamedMatrix::from_rows("N_u", "steady-state input per unit reference (inputs x tracked)", nu));
            Tracking::Feedforward
        }
        Some(crate::result::TrackingResult::Integral { integral_gain, nx, nu, .. }) => {
            if let (Some(nx), Some(nu)) = (nx, nu) {
                matrices.push(NamedMatrix::from_rows("N_x", "steady-state state per unit reference, fed forward with integral action (states x tracked)", nx));
                matrices.push(NamedMatrix::from_rows("N_u", "steady-state input per unit reference, fed forward with integral action (inputs x tracked)", nu));
            }
            matrices.push(NamedMatrix::from_rows("K_i", "gain on the integrators of the tracking error (inputs x tracked)", integral_gain));
            if let AntiWindup::BackCalculation { .. } = ctrl.anti_windup {
                let ki = DMatrix::from_row_slice(integral_gain.len(), integral_gain.first().map_or(0, |r| r.len()), &integral_gain.iter().flatten().copied().collect::<Vec<_>>());
                matrices.push(NamedMatrix::of("K_i_pinv", "pseudo-inverse of K_i for back-calculation anti-windup (tracked x inputs)", &crate::controller::small_pseudo_inverse(&ki)));
            }
            Tracking::Integral
        }
        None => Tracking::None,
    };
    let observer_form = result.observer.as_ref().map(|o| if o.current_gain.is_some() { ObserverForm::Current } else { ObserverForm::Predictor });
    if let Some(o) = &result.observer {
        matrices.push(NamedMatrix::from_rows("L", "observer gain, predictor form (states x outputs)", &o.gain));
        if let Some(lc) = &o.current_gain {
            matrices.push(NamedMatrix::from_rows("L_c", "observer gain, current form (states x outputs)", lc));
        }
    }
    let sampled = result.discrete_plant.as_ref().map(|p| (p.a.clone(), p.b.clone())).or_else(|| ctrl.plant_sample_time.map(|_| (rows_of(plant.a()), rows_of(plant.b()))));
    if let Some((phi, gamma)) = &sampled {
        matrices.push(NamedMatrix::from_rows("Phi", "sampled plant: state transition (states x states)", phi));
        matrices.push(NamedMatrix::from_rows("Gamma", "sampled plant: input matrix (states x inputs)", gamma));
    }
    if c.nrows() > 0 {
        matrices.push(NamedMatrix::of("C", "output matrix (outputs x states)", &c));
        matrices.push(NamedMatrix::of("D", "feedthrough (outputs x inputs)", &d));
    }
    Controller {
        title: spec.title.clone(),
        document_sha256: document_hash(spec),
        state_names: result.plant.state_names.clone(),
        state_units: result.plant.state_units.clone(),
        input_names: result.plant.input_names.clone(),
        input_units: result.plant.input_units.clone(),
        output_names: result.plant.output_names.clone(),
        tracked,
        sample_time: ctrl.sample_time(),
        computation_delay: ctrl.implementation.as_ref().is_some_and(|i| i.computation_delay),
        observer_form,
        anti_windup: ctrl.anti_windup,
        tracking,
        limits: if design.request.limits.is_empty() { vec![None; plant.inputs()] } else { design.request.limits.clone() },
        matrices,
    }
}

fn rows_of(m: &DMatrix<f64>) -> Vec<Vec<f64>> {
    (0..m.nrows()).map(|i| m.row(i).iter().copied().collect()).collect()
}

/// The files of one export.
///
/// # Errors
/// [`ExportError::NotAvailable`] when the design has nothing of that kind to export (test
/// vectors of a continuous design, or of a design without a loop simulation).
pub fn export(spec: &DesignSpec, design: &CheckedDesign, result: &DesignResult, format: ExportFormat, precision: Precision) -> Result<Vec<ExportFile>, ExportError> {
    let ctrl = controller(spec, design, result);
    let mut head = header::lines(&ctrl);
    if let Precision::Q15 | Precision::Q31 = precision {
        let f = fixed::fixed(&ctrl, if precision == Precision::Q15 { 16 } else { 32 })?;
        head.extend(fixed::header(&f));
        return fixed::files(&ctrl, &head, &f, format);
    }
    Ok(match format {
        ExportFormat::C => c::files(&ctrl, &head, precision),
        ExportFormat::Rust => vec![ExportFile { name: "polewright_controller.rs".into(), contents: rust_constants(&ctrl, &head) }],
        ExportFormat::Json => vec![ExportFile { name: "polewright_controller.json".into(), contents: json(&ctrl, &head) }],
        ExportFormat::Csv => vec![ExportFile { name: "polewright_controller.csv".into(), contents: csv(&ctrl, &head) }],
        ExportFormat::Vectors => vec![vectors::file(&ctrl, &head, design)?],
    })
}

/// Why [`export_text`] gave no files: the document cannot be designed, or not exported so.
#[derive(Debug, Clone, PartialEq)]
pub enum ExportFailure {
    Design(crate::DesignError),
    Export(ExportError),
}

/// Reads, checks and runs a design file, then exports it (what the CLI and the page do).
///
/// # Errors
/// See [`ExportFailure`].
pub fn export_text(text: &str, format: ExportFormat, precision: Precision) -> Result<Vec<ExportFile>, ExportFailure> {
    let spec = crate::spec::read_design(text).map_err(|e| ExportFailure::Design(crate::DesignError::Input(e)))?;
    let design = crate::check::check_text(text).map_err(ExportFailure::Design)?;
    let result = crate::run::run_checked(&design).map_err(ExportFailure::Design)?;
    export(&spec, &design, &result, format, precision).map_err(ExportFailure::Export)
}

/// Rust constants: one `pub const` array per matrix, row-major, with its dimensions.
fn rust_constants(ctrl: &Controller, head: &[String]) -> String {
    let mut out = String::new();
    for l in head {
        out.push_str(&format!("// {}\n", text::comment_line(l)));
    }
    out.push_str("#![allow(dead_code, clippy::excessive_precision)]\n\n");
    out.push_str(&format!("pub const STATES: usize = {};\npub const INPUTS: usize = {};\npub const OUTPUTS: usize = {};\n", ctrl.states(), ctrl.inputs(), ctrl.outputs()));
    if let Some(t) = ctrl.sample_time {
        out.push_str(&format!("pub const SAMPLE_TIME: f64 = {};\n", text::rust_f64(t)));
    }
    for m in &ctrl.matrices {
        let ident = m.name.to_uppercase();
        out.push_str(&format!(
            "\n/// {} ({} x {}, row-major).\npub const {ident}_ROWS: usize = {};\npub const {ident}_COLS: usize = {};\npub const {ident}: [f64; {}] = [",
            m.description,
            m.rows,
            m.cols,
            m.rows,
            m.cols,
            m.data.len()
        ));
        out.push_str(&m.data.iter().map(|v| text::rust_f64(*v)).collect::<Vec<_>>().join(", "));
        out.push_str("];\n");
    }
    out
}

/// JSON: the header as a list of lines, the settings and every matrix as rows.
fn json(ctrl: &Controller, head: &[String]) -> String {
    let matrices: serde_json::Map<String, serde_json::Value> = ctrl
        .matrices
        .iter()
        .map(|m| (m.name.to_string(), serde_json::json!({"description": m.description, "rows": m.rows, "cols": m.cols, "data": m.data.chunks(m.cols.max(1)).collect::<Vec<_>>()})))
        .collect();
    let doc = serde_json::json!({
        "format": "polewright.controller",
        "version": 1,
        "header": head,
        "document_sha256": ctrl.document_sha256,
        "sample_time": ctrl.sample_time,
        "computation_delay": ctrl.computation_delay,
        "states": ctrl.state_names,
        "inputs": ctrl.input_names,
        "outputs": ctrl.output_names,
        "limits": ctrl.limits,
        "matrices": matrices,
    });
    serde_json::to_string_pretty(&doc).unwrap_or_default() + "\n"
}

/// CSV (RFC 4180): the header lines as `#`-led quoted cells, then one block per matrix.
fn csv(ctrl: &Controller, head: &[String]) -> String {
    let mut out = String::new();
    for l in head {
        out.push_str(&text::csv_cell(&format!("# {l}")));
        out.push_str("\r\n");
    }
    for m in &ctrl.matrices {
        out.push_str(&format!("{},{},{}\r\n", text::csv_cell(m.name), m.rows, m.cols));
        for row in m.data.chunks(m.cols.max(1)) {
            out.push_str(&row.iter().map(|v| text::rust_f64(*v)).collect::<Vec<_>>().join(","));
            out.push_str("\r\n");
        }
    }
    out
}

/// The tool's name and version for headers.
pub fn tool() -> String {
    format!("Polewright {TOOL_VERSION}")
}

#[cfg(test)]
mod tests;
