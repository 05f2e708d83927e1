//! Margins of the loop as built, broken at the plant input ([`crate::margins`]): the plant in
//! the controller's domain with the complete controller the loop simulation runs
//! ([`crate::margins::built::plant_input_loop`]: observer in predictor or current form,
//! integrators, computation delay with its `K_u` term inside the controller). Each input's
//! loop with the other inputs closed gives its disk margin (skew as asked) and classical gain,
//! phase and delay margins; all inputs perturbed at once give the multiloop disk margin; the
//! largest singular values of `S` and `T` over frequency give the sensitivity peaks and the
//! frequency-response table.

use nalgebra::DMatrix;
use num_complex::Complex64;

use super::gains::Gains;
use super::setup::Setup;
use crate::margins::built::{plant_input_loop, PlantMatrices};
use crate::margins::{input_margins, multiloop_disk, Disk, LoopModel};
use crate::result::{AllInputsMargin, ClassicalMargins, DiskMargin, FrequencyResponse, InputMarginResult, MarginsResult, MultiloopAccuracy};

/// Frequencies in the logarithmic part of the grid.
const GRID_POINTS: usize = 400;

/// Frequencies in the logarithmic part of the all-inputs grid (each costs a minimisation; the
/// peak is then refined between its neighbours, and the closed-loop poles' frequencies are in).
const MULTILOOP_GRID_POINTS: usize = 120;

/// Largest number of frequencies kept in the result's frequency-response table.
const TABLE_POINTS: usize = 200;

/// The loop transfer at the plant input of the loop as built, with the plant's `(C, D)`.
pub(super) fn loop_model(s: &Setup, g: &Gains) -> Option<LoopModel> {
    let (c, d) = super::setup::output_matrices(s.plant);
    let ctrl = super::simulation::loop_controller(s, g);
    plant_input_loop(&PlantMatrices { a: &s.ad, b: &s.bd, c: &c, d: &d }, &ctrl).ok()
}

/// Largest singular value of a complex matrix.
fn sigma_max(m: &DMatrix<Complex64>) -> f64 {
    if m.shape() == (1, 1) {
        return m[(0, 0)].norm();
    }
    crate::linalg::svd::try_singular_values(m, crate::linalg::svd::SvdParams::default()).map_or(f64::NAN, |s| s.iter().copied().fold(0.0, f64::max))
}

fn disk(alpha: f64, skew: f64, frequency: f64) -> DiskMargin {
    let shape = Disk { alpha, skew };
    DiskMargin { disk_margin: alpha, gain_range: shape.gain_range(), phase_margin_deg: shape.phase_deg(), frequency }
}

/// The margins of the loop as built; `None` where a computation fails (the design has been
/// judged already; margins are information on top).
pub(super) fn margins(s: &Setup, g: &Gains) -> Option<MarginsResult> {
    let model = loop_model(s, g)?;
    let skew = s.spec.robustness.skew;
    let m = model.b.ncols();
    let mut per_input = Vec::with_capacity(m);
    for i in 0..m {
        let r = input_margins(&model.loop_at(i).ok()?, skew, GRID_POINTS).ok()?;
        per_input.push(InputMarginResult {
            input: s.plant.input_names()[i].clone(),
            disk: disk(r.disk_alpha, skew, r.disk_frequency),
            classical: ClassicalMargins { gain_margin_low: r.gain_margin_low, gain_margin_high: r.gain_margin_high, phase_margin_deg: r.phase_margin_deg, crossover: r.crossover, delay_margin: r.delay_margin },
        });
    }
    let ev = model.evaluator().ok()?;
    let all_inputs = match per_input.as_slice() {
        // One input: all inputs at once is that input's loop, exactly.
        [one] => AllInputsMargin { disk: one.disk, accuracy: MultiloopAccuracy::Exact, disk_margin_at_most: Some(one.disk.disk_margin) },
        _ => {
            let all = multiloop_disk(&model.grid(MULTILOOP_GRID_POINTS).ok()?, &|w| ev.sensitivity(w).ok(), skew);
            AllInputsMargin { disk: disk(all.alpha, skew, all.frequency), accuracy: if all.exact { MultiloopAccuracy::Exact } else { MultiloopAccuracy::Bound }, disk_margin_at_most: Some(all.alpha_upper) }
        }
    };
    let grid = model.grid(GRID_POINTS).ok()?;
    // Peaks of σ_max(S) and σ_max(T = I − S) over the grid, and the table.
    let (mut ps, mut ws, mut pt, mut wt) = (0.0f64, 0.0, 0.0f64, 0.0);
    let mut table = FrequencyResponse::default();
    let every = grid.len().div_ceil(TABLE_POINTS).max(1);
    for (k, &w) in grid.iter().enumerate() {
        let sm = ev.sensitivity(w).ok()?;
        let tm = DMatrix::<Complex64>::identity(m, m) - &sm;
        let (a, b) = (sigma_max(&sm), sigma_max(&tm));
        if a > ps {
            (ps, ws) = (a, w);
        }
        if b > pt {
            (pt, wt) = (b, w);
        }
        if k % every == 0 || k + 1 == grid.len() {
            table.frequency.push(w);
            table.sensitivity.push(a);
            table.complementary_sensitivity.push(b);
        }
    }
    Some(MarginsResult {
        skew,
        per_input,
        all_inputs,
        peak_sensitivity: ps,
        peak_sensitivity_frequency: ws,
        peak_complementary_sensitivity: pt,
        peak_complementary_sensitivity_frequency: wt,
        frequency_response: table,
    })
}
