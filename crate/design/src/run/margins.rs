//! Margins of the loop as built, broken at the plant input ([`crate::margins`]): the plant with
//! the controller's own dynamics — integrators, computation-delay states and, for a
//! predictor-form (or continuous) observer, the observer fed the controller's own command. Each
//! input's loop with the other inputs closed gives the disk margin (skew 0) and the classical
//! gain, phase and delay margins; the largest singular values of `S` and `T` over frequency give
//! the sensitivity peaks. A current-form observer with a computation delay is not yet modelled
//! (no margins are reported for it, and the result says so by their absence).

use nalgebra::DMatrix;
use num_complex::Complex64;

use super::gains::Gains;
use super::pair::DesignPair;
use super::setup::Setup;
use crate::controller::ObserverForm;
use crate::margins::{input_margins, LoopModel};
use crate::result::{InputMarginResult, MarginsResult};

/// Frequencies in the logarithmic part of the grid.
const GRID_POINTS: usize = 400;

/// The loop transfer at the plant input of the loop as built, or `None` where not modelled.
fn loop_model(s: &Setup, pair: &DesignPair, g: &Gains) -> Option<LoopModel> {
    let gain = &g.placement.gain;
    match (&g.observer, s.plant.c()) {
        (None, _) => Some(crate::margins::state_feedback_loop(&pair.da, &pair.db, gain, s.t)),
        (Some((od, _, form)), Some(c)) => {
            if *form == ObserverForm::Current || s.delay {
                return None;
            }
            // States [x; x̂; z]: the observer and the integrators are fed the controller's own
            // command u_fb = −K x̂ − K_i z, the plant the injected input u_in.
            let (n, m, q) = (s.n, s.m, pair.da.nrows() - s.n);
            let (a, b) = (&s.ad, &s.bd);
            let (_, d) = super::setup::output_matrices(s.plant);
            let l = &od.gain;
            let k = gain.columns(0, n).into_owned();
            let ki = gain.columns(n, q).into_owned();
            let bl = b - l * &d;
            let size = 2 * n + q;
            let mut al = DMatrix::<f64>::zeros(size, size);
            al.view_mut((0, 0), (n, n)).copy_from(a);
            al.view_mut((n, 0), (n, n)).copy_from(&(l * c));
            al.view_mut((n, n), (n, n)).copy_from(&(a - l * c - &bl * &k));
            if q > 0 {
                al.view_mut((n, 2 * n), (n, q)).copy_from(&(-(&bl * &ki)));
                // The integrator rows of the design pair: z⁺ = z − T C_t x − T D_t u (or z' = …).
                al.view_mut((2 * n, 0), (q, n)).copy_from(&pair.da.view((n, 0), (q, n)));
                al.view_mut((2 * n, 2 * n), (q, q)).copy_from(&pair.da.view((n, n), (q, q)));
            }
            let mut blm = DMatrix::<f64>::zeros(size, m);
            blm.view_mut((0, 0), (n, m)).copy_from(b);
            blm.view_mut((n, 0), (n, m)).copy_from(&(l * &d));
            if q > 0 {
                blm.view_mut((2 * n, 0), (q, m)).copy_from(&pair.db.view((n, 0), (q, m)));
            }
            let mut cl = DMatrix::<f64>::zeros(m, size);
            cl.view_mut((0, n), (m, n)).copy_from(&k);
            if q > 0 {
                cl.view_mut((0, 2 * n), (m, q)).copy_from(&ki);
            }
            Some(LoopModel { a: al, b: blm, c: cl, d: DMatrix::zeros(m, m), sample_time: s.t })
        }
        (Some(_), None) => None,
    }
}

/// Largest singular value of a complex matrix (2 × 2 and larger by the SVD).
fn sigma_max(m: &DMatrix<Complex64>) -> f64 {
    crate::linalg::svd::try_singular_values(m, crate::linalg::svd::SvdParams::default()).map_or(f64::NAN, |s| s.iter().copied().fold(0.0, f64::max))
}

/// The margins of the loop as built; `None` where the loop is not modelled or a computation
/// fails (the design has been judged already; margins are information on top).
pub(super) fn margins(s: &Setup, pair: &DesignPair, g: &Gains) -> Option<MarginsResult> {
    let model = loop_model(s, pair, g)?;
    let m = model.b.ncols();
    let mut per_input = Vec::with_capacity(m);
    for i in 0..m {
        let r = input_margins(&model.loop_at(i), 0.0, GRID_POINTS).ok()?;
        per_input.push(InputMarginResult {
            input: s.plant.input_names()[i].clone(),
            disk_margin: r.disk_alpha,
            gain_range: r.disk_gain_range,
            phase_margin_deg: r.disk_phase_deg,
            frequency: r.disk_frequency,
            gain_margin_low: r.gain_margin_low,
            gain_margin_high: r.gain_margin_high,
            classical_phase_margin_deg: r.phase_margin_deg,
            crossover: r.crossover,
            delay_margin: r.delay_margin,
        });
    }
    // Peaks of σ_max(S) and σ_max(T = I − S) over the grid.
    let grid = model.grid(GRID_POINTS).ok()?;
    let ev = model.evaluator().ok()?;
    let (mut ps, mut ws, mut pt, mut wt) = (0.0f64, 0.0, 0.0f64, 0.0);
    for w in grid {
        let sm = ev.sensitivity(w).ok()?;
        let tm = DMatrix::<Complex64>::identity(m, m) - &sm;
        let (a, b) = (sigma_max(&sm), sigma_max(&tm));
        if a > ps {
            ps = a;
            ws = w;
        }
        if b > pt {
            pt = b;
            wt = w;
        }
    }
    Some(MarginsResult { per_input, peak_sensitivity: ps, peak_sensitivity_frequency: ws, peak_complementary_sensitivity: pt, peak_complementary_sensitivity_frequency: wt })
}
