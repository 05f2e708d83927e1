//! Pole sensitivity of the loop as built ([`crate::sensitivity`]): the plant is perturbed,
//! sampled by zero-order hold again for a digital controller, and closed with the same
//! controller at the plant input ([`super::margins::loop_model`]); the gains stay as designed.
//! The uncertainty cloud closes its perturbed plants the same way ([`super::cloud`]).

use nalgebra::DMatrix;

use super::gains::Gains;
use super::setup::Setup;
use crate::margins::built::{plant_input_loop, PlantMatrices};
use crate::margins::LoopModel;
use crate::result::{pair, PoleSensitivityResult, PoleSensitivityRow};
use crate::sensitivity::pole_sensitivities;
use crate::uncertainty::PlantMatrix;
use crate::{fmt_num, PlantEntry};

/// The closed-loop matrix `A_L − B_L E C_L` of a loop model.
fn closed(l: &LoopModel) -> Option<DMatrix<f64>> {
    l.closed_loop().ok().map(|(_, acl)| acl)
}

/// The closed loop as built with the plant `(a, b)` (continuous, or already discrete when the
/// plant is given sampled).
pub(super) fn closed_with(s: &Setup, g: &Gains, a: &DMatrix<f64>, b: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let (ad, bd) = match (s.spec.plant_sample_time, &s.spec.implementation) {
        (None, Some(imp)) => {
            let dp = crate::controller::discretise(a, b, imp.sample_time).ok()?;
            (dp.phi, dp.gamma)
        }
        _ => (a.clone(), b.clone()),
    };
    let (c, d) = super::setup::output_matrices(s.plant);
    let ctrl = super::simulation::loop_controller(s, g);
    closed(&plant_input_loop(&PlantMatrices { a: &ad, b: &bd, c: &c, d: &d }, &ctrl).ok()?)
}

/// A complex number at the report's precision: `0.77 − 0.14j`.
fn short(z: num_complex::Complex64) -> String {
    if z.im == 0.0 {
        fmt_num(z.re)
    } else {
        format!("{} {} {}j", fmt_num(z.re), if z.im < 0.0 { "−" } else { "+" }, fmt_num(z.im.abs()))
    }
}

fn entry_name(e: &PlantEntry) -> String {
    format!("{}({}, {})", if e.matrix == PlantMatrix::A { "A" } else { "B" }, e.row + 1, e.column + 1)
}

/// `∂A_cl/∂p` by a central difference: a continuous loop is linear in `p`, so the step is the
/// plant's own scale (rounding error `ε ‖A_cl‖`, no truncation); a sampled one is not, and takes
/// `1e-4` of it (truncation about `1e-8` relative). The scale is `max(|p|, max|A|, max|B|)`, or
/// 1 for an all-zero plant.
fn direction(s: &Setup, g: &Gains, e: &PlantEntry) -> Option<DMatrix<f64>> {
    let (a, b) = (s.plant.a(), s.plant.b());
    let p = *(if e.matrix == PlantMatrix::A { a } else { b }).get((e.row, e.column))?;
    let scale = p.abs().max(a.amax()).max(b.amax());
    let scale = if scale > 0.0 { scale } else { 1.0 };
    let h = if s.t.is_some() && s.spec.plant_sample_time.is_none() { 1e-4 * scale } else { scale };
    let shifted = |dp: f64| {
        let (mut a2, mut b2) = (a.clone(), b.clone());
        let t = if e.matrix == PlantMatrix::A { &mut a2 } else { &mut b2 };
        t[(e.row, e.column)] += dp;
        closed_with(s, g, &a2, &b2)
    };
    Some((shifted(h)? - shifted(-h)?) / (2.0 * h))
}

/// Condition numbers of the loop's poles and, for the chosen entry, their derivatives.
pub(super) fn pole_sensitivity(s: &Setup, g: &Gains) -> Option<PoleSensitivityResult> {
    let acl = closed(&super::margins::loop_model(s, g)?)?;
    let entry = s.spec.robustness.sensitivity_entry;
    let dir = entry.as_ref().and_then(|e| direction(s, g, e));
    let mut rows = pole_sensitivities(&acl, dir.as_ref()).ok()?;
    rows.sort_by(|a, b| a.pole.re.total_cmp(&b.pole.re).then(a.pole.im.total_cmp(&b.pole.im)));
    let plane = if s.t.is_some() { "z" } else { "s" };
    let simple: Vec<_> = rows.iter().filter(|r| !r.repeated).collect();
    let mut summary = match simple.iter().max_by(|a, b| a.condition.total_cmp(&b.condition)) {
        Some(worst) => format!(
            "The pole most sensitive to model error is {plane} = {} (condition number {}: a model error of relative size δ can move it by about {} × δ × ‖closed loop‖).",
            short(worst.pole),
            fmt_num(worst.condition),
            fmt_num(worst.condition)
        ),
        None => "Every pole is repeated: first-order sensitivities are not defined.".to_string(),
    };
    let repeated: Vec<String> = rows.iter().filter(|r| r.repeated).map(|r| short(r.pole)).collect();
    if !repeated.is_empty() {
        summary.push_str(&format!(" Repeated poles ({}) have no first-order sensitivity: a defective one moves like δ^(1/p), far more than δ.", repeated.join(", ")));
    }
    if let (Some(e), Some(most)) = (&entry, simple.iter().filter_map(|r| r.derivative.map(|d| (r.pole, d))).max_by(|a, b| a.1.norm().total_cmp(&b.1.norm()))) {
        summary.push_str(&format!(" {} moves {plane} = {} most: dλ/dp = {}.", entry_name(e), short(most.0), short(most.1)));
    }
    Some(PoleSensitivityResult {
        entry: entry.as_ref().map(entry_name),
        poles: rows
            .iter()
            .map(|r| PoleSensitivityRow { pole: pair(r.pole), condition: (!r.repeated).then_some(r.condition), derivative: r.derivative.filter(|_| !r.repeated).map(pair), repeated: r.repeated })
            .collect(),
        summary,
    })
}
