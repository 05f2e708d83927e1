//! The uncertainty cloud of the loop as built ([`crate::uncertainty`]): each perturbed plant
//! is closed with the designed controller ([`super::robustness::closed_with`]) for its poles,
//! and simulated in the design's own scenario (the loop when there is one with tracked outputs,
//! otherwise the free response) for the spread of settling times and peak inputs. The gains
//! stay as designed.
//!
//! The cloud can also be drawn in steps ([`CloudJob`], which the page spreads over slices of its
//! main thread). Its result is kept with owned copies of everything it was computed from
//! ([`CloudMemo`]: the request, the controller specification, the controller as built and the
//! simulation horizon, compared exactly), and a run with exactly those inputs uses it instead of
//! sampling again: the same plants in the same order, so the same figures.
//!
//! Cost per sample: one closed-loop build and one eigenvalue computation (`O(n³)`) and one
//! simulation (`O(n²)` per step). A perturbed plant whose loop cannot be closed or simulated is
//! counted as failed, never as stable or settled.

use super::gains::Gains;
use super::robustness::closed_with;
use super::setup::Setup;
use super::simulation::{horizon, loop_controller, loop_runs, Horizon};
use crate::check::CheckedDesign;
use crate::loop_sim::LoopController;
use crate::result::{pair, ResponseSpread, UncertaintyResult};
use crate::uncertainty::{CloudSampler, LoopDomain, PlantMatrix, UncertaintyModel};
use crate::{fmt_num, ControllerSpec, DesignRequest, RobustnessDepth, UncertaintySpec};

/// Everything a cloud is computed from, owned and compared exactly.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct CloudInputs {
    request: DesignRequest,
    /// The controller specification, at full robustness depth (the depth is not an input).
    controller: ControllerSpec,
    /// The controller as built: every gain the loop uses.
    law: LoopController,
    horizon: Horizon,
}

impl CloudInputs {
    fn new(s: &Setup, g: &Gains, h: &Horizon) -> Self {
        let mut controller = s.spec.clone();
        controller.robustness.depth = RobustnessDepth::Full;
        CloudInputs { request: s.req.clone(), controller, law: loop_controller(s, g), horizon: h.clone() }
    }
}

/// A drawn cloud with everything it was drawn from: [`CloudJob`] leaves it for the run that
/// follows (in [`crate::Continuation::cloud`]), which uses it only for exactly these inputs.
#[derive(Debug, Clone, PartialEq)]
pub struct CloudMemo {
    inputs: CloudInputs,
    pub(super) result: UncertaintyResult,
}

impl CloudMemo {
    fn result_for(&self, inputs: &CloudInputs) -> Option<&UncertaintyResult> {
        (self.inputs == *inputs).then_some(&self.result)
    }
}

/// The cloud in progress: the sampler and the simulated responses' figures so far.
struct CloudRun {
    sampler: CloudSampler,
    loop_scenario: bool,
    settle: Vec<f64>,
    not_settled: usize,
    failed: usize,
    peaks: Vec<Vec<f64>>,
}

fn domain(s: &Setup) -> LoopDomain {
    s.t.map_or(LoopDomain::Continuous, |t| LoopDomain::Sampled { sample_time: t })
}

impl CloudRun {
    fn new(s: &Setup, u: &UncertaintySpec) -> Self {
        // Settling is judged on the tracked outputs of the loop scenario; without tracking, on
        // the states of the free response.
        let loop_scenario = loop_runs(s) && !s.tracked.is_empty();
        CloudRun { sampler: CloudSampler::new(u.samples, u.seed), loop_scenario, settle: Vec::new(), not_settled: 0, failed: 0, peaks: vec![Vec::new(); s.m] }
    }

    /// One perturbed plant: its poles and its response. False once every sample is drawn.
    fn step(&mut self, s: &Setup, g: &Gains, h: &Horizon, u: &UncertaintySpec) -> bool {
        let Some((pa, pb)) = self.sampler.draw(s.plant.a(), s.plant.b(), &u.model, domain(s), &|pa, pb| closed_with(s, g, pa, pb)) else {
            return false;
        };
        match response_of(s, g, h, self.loop_scenario, pa, pb) {
            Some((t, p)) => {
                match t {
                    Some(t) => self.settle.push(t),
                    None => self.not_settled += 1,
                }
                for (k, v) in p.into_iter().enumerate().take(s.m) {
                    self.peaks[k].push(v);
                }
            }
            None => self.failed += 1,
        }
        true
    }

    fn result(&self, u: &UncertaintySpec) -> UncertaintyResult {
        let cloud = self.sampler.clone().finish();
        let response = Some(ResponseSpread {
            scenario: if self.loop_scenario { "loop" } else { "free response" },
            settling_time: spread(self.settle.clone()),
            not_settled: self.not_settled,
            failed: self.failed,
            peak_input: self.peaks.iter().cloned().map(spread).collect(),
        });
        UncertaintyResult {
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
        }
    }
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
fn response_of(s: &Setup, g: &Gains, h: &Horizon, loop_scenario: bool, a: nalgebra::DMatrix<f64>, b: nalgebra::DMatrix<f64>) -> Option<(Option<f64>, Vec<f64>)> {
    let plant = s.plant.with_dynamics(a, b).ok()?;
    let req2 = DesignRequest { plant, ..s.req.clone() };
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

/// The uncertainty cloud, when the design asks for it: the one remembered in the previous
/// design's continuation for exactly these inputs, or drawn here.
pub(super) fn uncertainty(s: &Setup, g: &Gains, h: &Horizon) -> Option<UncertaintyResult> {
    let u = s.spec.robustness.uncertainty.as_ref()?;
    if let Some(memo) = s.previous.and_then(|p| p.cloud.as_ref()) {
        if let Some(result) = memo.result_for(&CloudInputs::new(s, g, h)) {
            return Some(result.clone());
        }
    }
    let mut run = CloudRun::new(s, u);
    while run.step(s, g, h, u) {}
    Some(run.result(u))
}

/// The uncertainty cloud of a design, drawn in steps by a caller ([`cloud_job`]): the page
/// spreads it over slices of its main thread. Its memo, put into the [`crate::Continuation`]
/// of the run that follows, makes that run use the cloud instead of sampling again.
pub struct CloudJob {
    request: DesignRequest,
    controller: ControllerSpec,
    uncertainty: UncertaintySpec,
    gains: Gains,
    horizon: Horizon,
    inputs: CloudInputs,
    run: CloudRun,
    stopped: bool,
}

impl CloudJob {
    /// Draws samples while `keep_going()` says so (at least one each call); true once the job
    /// is over.
    pub fn run_for(&mut self, keep_going: &mut dyn FnMut() -> bool) -> bool {
        if self.stopped {
            return true;
        }
        // Built once already, from the same owned inputs, when the job was made.
        let Ok(s) = Setup::new(&self.request, &self.controller, None) else {
            self.stopped = true;
            return true;
        };
        loop {
            if !self.run.step(&s, &self.gains, &self.horizon, &self.uncertainty) || self.drawn() >= self.samples() {
                return true;
            }
            if !keep_going() {
                return false;
            }
        }
    }

    /// Samples drawn so far.
    pub fn drawn(&self) -> usize {
        self.run.sampler.drawn()
    }

    /// Samples to draw in all.
    pub fn samples(&self) -> usize {
        self.run.sampler.samples()
    }

    /// The drawn cloud once every sample is drawn; `None` before that, or when the job stopped
    /// early (its setup failed to build again; the run then draws the cloud itself).
    pub fn memo(&self) -> Option<CloudMemo> {
        (!self.stopped && self.drawn() >= self.samples()).then(|| CloudMemo { inputs: self.inputs.clone(), result: self.run.result(&self.uncertainty) })
    }
}

/// The uncertainty cloud that [`super::run_checked_continued`] would draw for `design` after
/// `previous` (the same design: the gains are computed exactly as the run computes them), ready
/// to draw in steps; `None` when there is none to draw: no uncertain parameters, the cloud
/// already remembered in `previous` for these very inputs, or an error in the design or its
/// simulations (which the run then reports). A search for the fastest design runs here unless
/// `previous` remembers it; the nominal simulations run once, to find their errors.
pub fn cloud_job(design: &CheckedDesign, previous: Option<&crate::Continuation>) -> Option<CloudJob> {
    let uncertainty = design.controller.robustness.uncertainty.clone()?;
    let s = Setup::new(&design.request, &design.controller, previous).ok()?;
    let dp = super::pair::design_pair(&s).ok()?;
    let g = super::gains::gains(&s, &dp).ok()?;
    super::independent_verdict(&s, &dp, &g).ok()?;
    let h = horizon(&s, &dp, &g);
    let mut sink = Vec::new();
    super::simulation::free_response(&s, &g, &h, &mut sink).ok()?;
    super::simulation::whole_loop(&s, &g, &h, &mut sink).ok()?;
    let inputs = CloudInputs::new(&s, &g, &h);
    if previous.and_then(|p| p.cloud.as_ref()).is_some_and(|m| m.result_for(&inputs).is_some()) {
        return None;
    }
    let run = CloudRun::new(&s, &uncertainty);
    drop(s);
    Some(CloudJob { request: design.request.clone(), controller: design.controller.clone(), uncertainty, gains: g, horizon: h, inputs, run, stopped: false })
}

#[cfg(test)]
#[path = "../tests/cloud.rs"]
mod tests;
