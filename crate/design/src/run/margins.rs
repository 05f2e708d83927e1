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
use crate::margins::{multiloop_disk, per_input_margins_on, refine_grid_peak, sigma_max, Disk, LoopModel};
use crate::result::{AllInputsMargin, ClassicalMargins, DiskMargin, FrequencyResponse, InputMarginResult, MarginsResult, MultiloopAccuracy};

/// Frequencies in the logarithmic part of the grid.
const GRID_POINTS: usize = 240;

/// Largest number of frequencies kept in the result's frequency-response table.
const TABLE_POINTS: usize = 200;

/// The loop transfer at the plant input of the loop as built, with the plant's `(C, D)`.
pub(super) fn loop_model(s: &Setup, g: &Gains) -> Option<LoopModel> {
    let (c, d) = super::setup::output_matrices(s.plant);
    let ctrl = super::simulation::loop_controller(s, g);
    plant_input_loop(&PlantMatrices { a: &s.ad, b: &s.bd, c: &c, d: &d }, &ctrl).ok()
}

fn disk(alpha: f64, skew: f64, frequency: f64) -> DiskMargin {
    let shape = Disk { alpha, skew };
    DiskMargin { skew, disk_margin: alpha, gain_range: shape.gain_range(), phase_margin_deg: shape.phase_deg(), frequency }
}

/// Why margins are not given for a design (`None`: they are).
pub(super) fn unavailable(s: &Setup, g: &Gains) -> Option<String> {
    let Some(model) = loop_model(s, g) else {
        return Some("the loop as built could not be formed".into());
    };
    stable_poles(s, &model).err()
}

/// The closed loop's poles, or why margins do not apply (not formed, not computed, unstable).
fn stable_poles(s: &Setup, model: &LoopModel) -> Result<Vec<Complex64>, String> {
    let poles = model.closed_loop().ok().and_then(|(_, acl)| crate::linalg::eigen::try_eigenvalues(&acl).ok());
    let Some(poles) = poles else {
        return Err("the closed loop's poles could not be computed".into());
    };
    let scale = poles.iter().map(|p| p.norm()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let unstable = match s.t {
        None => poles.iter().any(|p| p.re >= -1e-12 * scale),
        Some(_) => poles.iter().any(|p| p.norm() >= 1.0 - 1e-12),
    };
    if unstable {
        return Err("the loop as built is not stable, so stability margins do not apply".to_string());
    }
    Ok(poles)
}

/// `σ_max(S)` and `σ_max(T)` at one frequency.
fn peaks_at(ev: &crate::margins::Evaluator, w: f64) -> Option<(f64, f64)> {
    let (sm, tm) = ev.sensitivity_pair(w).ok()?;
    Some((sigma_max(&sm), sigma_max(&tm)))
}

/// The grid shared by every margin, with `S` and `T` at each of its frequencies.
struct Scan<'a> {
    grid: &'a [f64],
    values: &'a [Option<(DMatrix<Complex64>, DMatrix<Complex64>)>],
}

impl Scan<'_> {
    /// `S` at `w`: from the scan at a grid frequency, evaluated elsewhere.
    fn sensitivity(&self, ev: &crate::margins::Evaluator, w: f64) -> Option<DMatrix<Complex64>> {
        match self.grid.binary_search_by(|g| g.total_cmp(&w)) {
            Ok(k) => self.values[k].as_ref().map(|(s, _)| s.clone()),
            Err(_) => ev.sensitivity(w).ok(),
        }
    }
}

/// The all-inputs disk margin of skew `skew`, on the shared grid (the peak is then refined
/// between its neighbours; the closed-loop poles' frequencies are in the grid).
fn all_inputs(scan: &Scan, ev: &crate::margins::Evaluator, per_input: &[InputMarginResult], skew: f64) -> Option<AllInputsMargin> {
    Some(match per_input {
        // One input: all inputs at once is that input's loop, exactly.
        [one] if one.disk_skew_is(skew) => AllInputsMargin { disk: one.disk, accuracy: MultiloopAccuracy::Exact, disk_margin_at_most: Some(one.disk.disk_margin) },
        _ => {
            let all = multiloop_disk(scan.grid, &|w| scan.sensitivity(ev, w), skew);
            AllInputsMargin {
                disk: disk(all.alpha, skew, all.frequency),
                accuracy: if all.exact { MultiloopAccuracy::Exact } else { MultiloopAccuracy::Bound },
                disk_margin_at_most: all.alpha_upper.is_finite().then_some(all.alpha_upper),
            }
        }
    })
}

/// The margins of the loop as built; `None` where the loop is unstable ([`unavailable`]) or a
/// computation fails (the design has been judged already; margins are information on top).
pub(super) fn margins(s: &Setup, g: &Gains) -> Option<MarginsResult> {
    let model = loop_model(s, g)?;
    let poles = stable_poles(s, &model).ok()?;
    let skew = s.spec.robustness.skew;
    let ev = model.evaluator().ok()?;
    // One grid and one evaluation of S and T per frequency serve every input's margins and
    // the sensitivity peaks.
    let grid = model.grid_for_poles(&poles, GRID_POINTS);
    let scan: Vec<_> = grid.iter().map(|&w| ev.sensitivity_pair(w).ok()).collect();
    let per_input: Vec<InputMarginResult> = per_input_margins_on(&ev, &grid, &scan, skew)
        .into_iter()
        .zip(s.plant.input_names())
        .map(|(r, name)| InputMarginResult {
            input: name.clone(),
            disk: disk(r.disk_alpha, skew, r.disk_frequency),
            classical: ClassicalMargins {
                gain_margin_low: r.gain_margin_low,
                gain_margin_high: r.gain_margin_high,
                phase_margin_deg: r.phase_margin_deg,
                crossover: r.crossover,
                delay_margin: r.delay_margin,
            },
        })
        .collect();
    let shared = Scan { grid: &grid, values: &scan };
    let all = all_inputs(&shared, &ev, &per_input, skew)?;
    // The common-practice verdict is on the symmetric disk, whatever skew is shown.
    let symmetric = if skew == 0.0 { all.disk } else { all_inputs(&shared, &ev, &per_input, 0.0)?.disk };
    let mut table = FrequencyResponse::default();
    let every = grid.len().div_ceil(TABLE_POINTS).max(1);
    let (mut s_values, mut t_values) = (Vec::with_capacity(grid.len()), Vec::with_capacity(grid.len()));
    for (k, &w) in grid.iter().enumerate() {
        let (sm, tm) = scan[k].as_ref()?;
        let (a, b) = (sigma_max(sm), sigma_max(tm));
        s_values.push(a);
        t_values.push(b);
        if k % every == 0 || k + 1 == grid.len() {
            table.frequency.push(w);
            table.sensitivity.push(a);
            table.complementary_sensitivity.push(b);
        }
    }
    // Each peak refined between its grid neighbours (never below the grid's value).
    let (ws, ps) = refine_grid_peak(&grid, &s_values, &|w| peaks_at(&ev, w).map(|p| p.0));
    let (wt, pt) = refine_grid_peak(&grid, &t_values, &|w| peaks_at(&ev, w).map(|p| p.1));
    Some(MarginsResult {
        skew,
        per_input,
        all_inputs: all,
        all_inputs_symmetric: symmetric,
        peak_sensitivity: ps,
        peak_sensitivity_frequency: ws,
        peak_complementary_sensitivity: pt,
        peak_complementary_sensitivity_frequency: wt,
        frequency_response: table,
    })
}
