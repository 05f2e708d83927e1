//! Pole sensitivity and the uncertainty cloud of the loop as built ([`crate::sensitivity`],
//! [`crate::uncertainty`]): the plant is perturbed, sampled by zero-order hold again for a
//! digital controller, and closed with the same controller at the plant input
//! ([`super::margins::loop_model`]); the gains stay as designed.

use nalgebra::DMatrix;

use super::gains::Gains;
use super::setup::Setup;
use super::simulation::Horizon;
use crate::margins::built::{plant_input_loop, PlantMatrices};
use crate::margins::LoopModel;
use crate::result::{pair, PoleSensitivityResult, PoleSensitivityRow, ResponseSpread, UncertaintyResult};
use crate::sensitivity::pole_sensitivities;
use crate::uncertainty::{perturbed, sample_cloud, LoopDomain, PlantMatrix, SplitMix, UncertaintyModel};
use crate::{fmt_num, DesignRequest, PlantEntry};

/// The closed-loop matrix `A_L − B_L E C_L` of a loop model.
fn closed(l: &LoopModel) -> Option<DMatrix<f64>> {
    l.closed_loop().ok().map(|(_, acl)| acl)
}

/// The closed loop as built with the plant `(a, b)` (continuous, or already discrete when the
/// plant is given sampled).
fn closed_with(s: &Setup, g: &Gains, a: &DMatrix<f64>, b: &DMatrix<f64>) -> Option<DMatrix<f64>> {
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

fn spread(mut v: Vec<f64>) -> Option<[f64; 3]> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    Some([v[0], v[v.len() / 2], v[v.len() - 1]])
}

fn describe(model: &UncertaintyModel) -> Vec<String> {
    let name = |m: PlantMatrix| if m == PlantMatrix::A { "A" } else { "B" };
    let mut out: Vec<String> = model.entries.iter().map(|e| format!("{}({}, {}) ±{} %", name(e.matrix), e.row + 1, e.column + 1, fmt_num(100.0 * e.relative))).collect();
    out.extend(model.matrices.iter().map(|(m, r)| format!("{} (norm-bounded) ±{} %", name(*m), fmt_num(100.0 * r))));
    out
}

/// The simulated response of one perturbed plant: longest settling time and peak inputs.
fn response_of(req: &DesignRequest, s: &Setup, g: &Gains, h: &Horizon, loop_scenario: bool, a: DMatrix<f64>, b: DMatrix<f64>) -> Option<(Option<f64>, Vec<f64>)> {
    let plant = s.plant.with_dynamics(a, b).ok()?;
    let req2 = DesignRequest { plant, ..req.clone() };
    let s2 = Setup::new(&req2, s.spec, None).ok()?;
    let mut sink = Vec::new();
    if loop_scenario {
        let l = super::simulation::whole_loop(&s2, g, h, &mut sink).ok()??;
        let settle = l.tracked.iter().map(|t| t.settling_time).try_fold(0.0f64, |acc, t| t.map(|t| acc.max(t)));
        Some((settle.filter(|_| !l.diverged), l.input_metrics.iter().map(|i| i.peak_command.abs()).collect()))
    } else {
        let r = super::simulation::free_response(&s2, g, h, &mut sink).ok()?;
        let settle = r.settling_time.iter().try_fold(0.0f64, |acc, t| t.map(|t| acc.max(t)));
        Some((settle.filter(|_| !r.diverged), r.peak_input.clone()))
    }
}

/// The uncertainty cloud, when the design asks for it.
pub(super) fn uncertainty(req: &DesignRequest, s: &Setup, g: &Gains, h: &Horizon, loop_scenario: bool) -> Option<UncertaintyResult> {
    let u = s.spec.robustness.uncertainty.as_ref()?;
    let domain = s.t.map_or(LoopDomain::Continuous, |t| LoopDomain::Sampled { sample_time: t });
    let (a, b) = (s.plant.a(), s.plant.b());
    // Settling is judged on the tracked outputs of the loop scenario; without tracking, on the
    // states of the free response.
    let loop_scenario = loop_scenario && !s.tracked.is_empty();
    let cloud = sample_cloud(a, b, &u.model, u.samples, u.seed, domain, &|pa, pb| closed_with(s, g, pa, pb));
    // The same perturbed plants again (same seed), simulated.
    let mut rng = SplitMix::new(u.seed);
    let (mut settle, mut not_settled, mut failed, mut peaks) = (Vec::new(), 0usize, 0usize, vec![Vec::new(); s.m]);
    for _ in 0..u.samples.min(crate::uncertainty::MAX_SAMPLES) {
        let (pa, pb) = perturbed(a, b, &u.model, &mut rng);
        match response_of(req, s, g, h, loop_scenario, pa, pb) {
            Some((t, p)) => {
                match t {
                    Some(t) => settle.push(t),
                    None => not_settled += 1,
                }
                for (k, v) in p.into_iter().enumerate().take(s.m) {
                    peaks[k].push(v);
                }
            }
            None => failed += 1,
        }
    }
    let response = Some(ResponseSpread {
        scenario: if loop_scenario { "loop" } else { "free response" },
        settling_time: spread(settle),
        not_settled,
        failed,
        peak_input: peaks.into_iter().map(spread).collect(),
    });
    Some(UncertaintyResult {
        samples: u.samples,
        seed: u.seed,
        parameters: describe(&u.model),
        stable: cloud.stable,
        failed: cloud.failed,
        stable_fraction: cloud.stable_fraction(),
        worst_decay_rate: cloud.worst_decay_rate,
        worst_damping: cloud.worst_damping,
        poles: cloud.poles.iter().flatten().map(|p| pair(*p)).collect(),
        response,
    })
}
