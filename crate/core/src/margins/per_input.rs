//! Loop-at-a-time margins of every input from the multivariable loop's own sensitivity.
//!
//! # Equation
//! Breaking input `i` with the other loops closed gives the scalar loop `L_i`. A signal
//! injected at input `i` reaches input `i` through `[(I + L)⁻¹]_ii` with every loop closed, and
//! through `1 / (1 + L_i)` when read off the loop broken at `i`: the interconnection is the same,
//! so `1 / (1 + L_i) = S_ii` (common practice; e.g. Skogestad & Postlethwaite, *Multivariable
//! Feedback Control*, 2nd ed., Wiley 2005, from memory). Hence `L_i = T_ii / S_ii` with
//! `T = I − S`, and the disk margin of skew `σ` at input `i` is `1 / max_ω |S_ii + (σ − 1)/2|`
//! (Seiler, Packard & Gahinet, IEEE Control Systems Magazine 40(5), 2020).
//!
//! # Method
//! - One frequency grid and one evaluation of `S` and `T` per grid frequency serve every input
//!   (and the caller's sensitivity peaks): no per-input model, eigenvalues or Hessenberg form.
//! - Refinements (golden section for the disk's peak, regula falsi for crossings) evaluate only
//!   the `(i, i)` entries, from one right-hand side.
//! - Classical margins of `L_i` (common practice) as in the module [`super`]: gain margins at
//!   the −180° crossings (and at ω = 0 and the Nyquist frequency, where `L_i` is real), the
//!   phase margin of smallest size over every crossover, and the delay margin.
//!
//! # Cost
//! `O(n³)` once (the caller's Hessenberg reduction), then per grid frequency one Hessenberg
//! solve with `m` right-hand sides (`O(n² m)`), and per refinement step `O(n²)`.
//!
//! # Failure modes
//! A closed-loop pole on the boundary at a grid frequency makes that frequency's values
//! infinite (a zero disk margin there, never a larger one); `S_ii = 0` (a pole of `L_i`) is
//! skipped for the classical margins, as a pole of `L_i` is.

use nalgebra::DMatrix;
use num_complex::Complex64;

use super::{refine_grid_peak, sign_change, Disk, Evaluator, InputMargins, LoopModel, MarginError};

/// `S` and `T` at each grid frequency (`None` where the evaluation failed).
pub type SensitivityScan = [Option<(DMatrix<Complex64>, DMatrix<Complex64>)>];

/// Margins of the scalar loop `l` (one input, the others closed), disk of skew `sigma`; for a
/// loop with several inputs, those of its first input.
///
/// # Errors
/// [`MarginError`] from forming the grid or the evaluator.
pub fn input_margins(l: &LoopModel, sigma: f64, points: usize) -> Result<InputMargins, MarginError> {
    let grid = l.grid(points)?;
    let ev = l.evaluator()?;
    if ev.inputs() == 0 {
        return Err(MarginError::Size { what: "loop model" });
    }
    let scan: Vec<_> = grid.iter().map(|&w| ev.sensitivity_pair(w).ok()).collect();
    Ok(one_input(&ev, &grid, &scan, 0, sigma))
}

/// Margins of every input of `l`, each with the other inputs closed.
///
/// # Errors
/// [`MarginError`] from forming the grid or the evaluator.
pub fn per_input_margins(l: &LoopModel, sigma: f64, points: usize) -> Result<Vec<InputMargins>, MarginError> {
    let grid = l.grid(points)?;
    let ev = l.evaluator()?;
    let scan: Vec<_> = grid.iter().map(|&w| ev.sensitivity_pair(w).ok()).collect();
    Ok(per_input_margins_on(&ev, &grid, &scan, sigma))
}

/// Margins of every input from a scan the caller has made (`scan[k]` at `grid[k]`, the grid
/// sorted ascending).
pub fn per_input_margins_on(ev: &Evaluator, grid: &[f64], scan: &SensitivityScan, sigma: f64) -> Vec<InputMargins> {
    (0..ev.inputs()).map(|i| one_input(ev, grid, scan, i, sigma)).collect()
}

fn finite(v: Complex64) -> bool {
    v.re.is_finite() && v.im.is_finite()
}

/// `L_i = T_ii / S_ii`, `None` at a pole of `L_i` (`S_ii = 0`) or where it is not finite.
fn loop_value((s, t): (Complex64, Complex64)) -> Option<Complex64> {
    if s.norm_sqr() == 0.0 {
        return None;
    }
    Some(t / s).filter(|v| finite(*v))
}

fn one_input(ev: &Evaluator, grid: &[f64], scan: &SensitivityScan, i: usize, sigma: f64) -> InputMargins {
    let shift = Complex64::new((sigma - 1.0) / 2.0, 0.0);
    let entry = |w: f64| ev.diagonal_pair(w, i).ok();
    let at_grid = |k: usize| scan[k].as_ref().map(|(s, t)| (s[(i, i)], t[(i, i)]));
    let disk = |w: f64| entry(w).map(|(s, _)| (s + shift).norm());
    let values: Vec<f64> = (0..grid.len()).map(|k| at_grid(k).map_or(f64::INFINITY, |(s, _)| (s + shift).norm())).collect();
    let (wk, peak) = refine_grid_peak(grid, &values, &disk);
    let alpha = if peak > 0.0 { 1.0 / peak } else { f64::INFINITY };
    let shape = Disk { alpha, skew: sigma };
    let classical = classical(grid, &|k| at_grid(k).and_then(loop_value), &|w| entry(w).and_then(loop_value), ev.sample_time(), &entry);
    InputMargins {
        disk_alpha: alpha,
        disk_frequency: wk,
        disk_gain_range: shape.gain_range(),
        disk_phase_deg: shape.phase_deg(),
        gain_margin_low: classical.gain_low,
        gain_margin_high: classical.gain_high,
        phase_margin_deg: classical.phase,
        crossover: classical.crossover,
        delay_margin: classical.delay,
    }
}

#[derive(Default)]
struct Classical {
    gain_low: Option<f64>,
    gain_high: Option<f64>,
    phase: Option<f64>,
    crossover: Option<f64>,
    delay: Option<f64>,
}

impl Classical {
    /// A −180° point where `|L| = |v|`: a gain margin `1/|v|`, below or above 1.
    fn gain_at(&mut self, v: Complex64) {
        let g = 1.0 / v.norm();
        if g > 1.0 {
            self.gain_high = Some(self.gain_high.map_or(g, |x| x.min(g)));
        } else {
            self.gain_low = Some(self.gain_low.map_or(g, |x| x.max(g)));
        }
    }
}

/// Classical margins of `L_i` from its values on the grid (`at_grid(k)`) and anywhere
/// (`at(w)`); `pair` gives `(S_ii, T_ii)` for the real end points.
fn classical(
    grid: &[f64],
    at_grid: &dyn Fn(usize) -> Option<Complex64>,
    at: &dyn Fn(f64) -> Option<Complex64>,
    sample_time: Option<f64>,
    pair: &dyn Fn(f64) -> Option<(Complex64, Complex64)>,
) -> Classical {
    let mut out = Classical::default();
    // ω = 0 is left out here: L has its integrators' poles there.
    let positive: Vec<(f64, Option<Complex64>)> = grid.iter().enumerate().filter(|(_, w)| **w > 0.0).map(|(k, w)| (*w, at_grid(k))).collect();
    for pair_of in positive.windows(2) {
        let ((w0, Some(a)), (w1, Some(b))) = (pair_of[0], pair_of[1]) else {
            continue;
        };
        // −180° crossing: Im L changes sign with Re L < 0.
        if (a.im > 0.0) != (b.im > 0.0) {
            let w = sign_change(&|w| at(w).map_or(f64::NAN, |v| v.im), w0, w1);
            if let Some(v) = at(w).filter(|v| v.re < 0.0) {
                out.gain_at(v);
            }
        }
        // Crossover |L| = 1: every one. The phase margin is the one of smallest size (a
        // rotation of L by it puts a closed-loop pole on the boundary); the delay margin is the
        // smallest lag that reaches −180° at a crossover, (PM_i mod 360°) / ω_i.
        if (a.norm() > 1.0) != (b.norm() > 1.0) {
            let w = sign_change(&|w| at(w).map_or(f64::NAN, |v| v.norm() - 1.0), w0, w1);
            if let Some(v) = at(w) {
                let margin = 180.0 + v.arg().to_degrees();
                let margin = if margin > 180.0 { margin - 360.0 } else { margin };
                if out.phase.is_none_or(|p: f64| margin.abs() < p.abs()) {
                    out.phase = Some(margin);
                    out.crossover = Some(w);
                }
                let lag = margin.rem_euclid(360.0);
                if lag > 0.0 && w > 0.0 {
                    let d = lag.to_radians() / w;
                    out.delay = Some(out.delay.map_or(d, |x: f64| x.min(d)));
                }
            }
        }
    }
    // L is real at ω = 0 and, sampled, at the Nyquist frequency: a negative real value there is
    // a −180° point too (a real closed-loop pole crossing z = 1 / s = 0, or z = −1). A pole of
    // L there (S = 0) is recognised as one by the size of S.
    let mut ends = vec![0.0];
    if let Some(t) = sample_time {
        ends.push(std::f64::consts::PI / t);
    }
    for w in ends {
        let value = pair(w).filter(|(s, _)| s.norm() > 1e-10).and_then(loop_value);
        if let Some(v) = value.filter(|v| v.re < 0.0 && v.im.abs() <= 1e-9 * v.norm()) {
            out.gain_at(v);
        }
    }
    out
}
