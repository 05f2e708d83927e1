//! Disk margins: the disk of gain and phase variations, and the multiloop (all inputs at once)
//! margin through the structured singular value over diagonal complex perturbations.
//!
//! # Equation
//! A disk of skew `σ` and size `α` is the set of multiplicative input perturbations
//! `f = (1 + (1 − σ)/2 · δ) / (1 − (1 + σ)/2 · δ)` with `|δ| < α` (Seiler, Packard & Gahinet,
//! "An introduction to disk margins", IEEE Control Systems Magazine 40(5):78–95, 2020). The
//! loop stays stable for every such `f` at one input iff `α ≤ 1 / max_ω |S + (σ − 1)/2|`, and
//! for independent `f_i` at all inputs at once iff `α ≤ 1 / max_ω μ_Δ(S + (σ − 1)/2 I)`, `μ_Δ`
//! the structured singular value for diagonal complex `Δ` (Doyle, "Analysis of feedback systems
//! with structured uncertainties", IEE Proc. D 129(6), 1982).
//!
//! # Method
//! - Upper bound `μ ≤ inf_D σ̄(D M D⁻¹)` over positive diagonal `D`; the function is convex in
//!   `log D` (Sezginer & Overton, "The largest singular value of e^X A e^−X is convex on convex
//!   sets of commuting matrices", IEEE TAC 35(2), 1990). Start from Osborne's balancing of `|M|`
//!   (Osborne, "On pre-conditioning of matrices", J. ACM 7(4), 1960), then Nelder–Mead on
//!   `log D` with restarts (capped evaluations). The bound equals `μ` for up to three inputs
//!   (Doyle 1982), provided the minimisation reaches the infimum.
//! - Lower bound `μ ≥ max_Q ρ(Q M)` over diagonal unitary `Q` (an equality at the global
//!   maximum, Doyle 1982): a grid over the phases (up to three inputs) or seeded random phases
//!   (more), refined by coordinate search, at the critical frequency. It is first started
//!   from the phases of the upper bound's largest singular vectors ([`mu_lower_bound_near`]),
//!   where the bounds meet when `σ̄` is simple at the minimiser; the many starts run only when
//!   that start does not meet the upper bound to [`EXACT_GAP`] (measured: 87 of 90 seeded
//!   2–4-input matrices met it). Each search stops as soon as it meets the upper bound to
//!   [`EXACT_GAP`], so the reported lower bound is the first found within that gap, not the
//!   best the search could reach (with many inputs the coordinate search creeps along a ridge:
//!   on an invented 15-input chain it met the gap after about 470 of its 3,000 evaluations).
//!   When both bounds agree
//!   to [`EXACT_GAP`] the value is reported as exact (μ is enclosed); otherwise both are
//!   reported.
//! - Over frequency: at each grid frequency the bound is taken at the better of Osborne's
//!   scaling and the previous frequency's (level 0, one or two σ̄). The frequency with the
//!   largest level 0 is minimised fully; its value is a lower bound of the peak, so only
//!   frequencies whose level 0 exceeds it (beyond [`PRUNE_TOLERANCE`]) are minimised briefly
//!   (level 1), and those are refined fully in decreasing order of level 1 until it falls
//!   within [`PRUNE_TOLERANCE`] of the best refined value (a branch-and-bound: no grid
//!   frequency that could hold the peak is skipped). Between the peak's grid neighbours the
//!   peak is refined by golden section on `σ̄(D M(ω) D⁻¹)` with `D` held at the last minimiser
//!   (one σ̄ per step: by the envelope theorem the held-`D` function is stationary where the
//!   minimised bound is, when `D` is the minimiser there), followed by a full minimisation at
//!   the point found, twice ([`PEAK_PASSES`]).
//!
//! # Cost
//! An `m × m` largest singular value per evaluation; a few hundred evaluations per fully
//! refined frequency. The lower bound: the eigenvalues of a `2m × 2m` real matrix per phase
//! vector, at most [`LOWER_BOUND_EVALUATIONS`] per phase search. Measured on the seeded plants of `tests/bench/whole_process.py`
//! (n = 20, 40, 50; m = 3, 4): about 1,100 evaluations in all, against about 8,000 when every
//! grid frequency was minimised briefly and every golden-section step minimised fully; the
//! peaks agree to 2e-10 relative.
//!
//! # Failure modes
//! An SVD that does not converge, or a sensitivity that cannot be evaluated at a grid or
//! refinement frequency (a closed-loop pole on the axis), counts as an infinite bound (a zero
//! margin, never a larger one); the phase search is local, so a lower bound below the upper
//! one is reported as such.

use nalgebra::DMatrix;
use num_complex::Complex64;

/// Passes of the peak refinement between grid frequencies (golden section with the scaling
/// held, then a full minimisation at the point found).
const PEAK_PASSES: usize = 2;

/// Relative gap between the lower and upper bounds under which `μ` is reported as exact.
pub const EXACT_GAP: f64 = 1e-3;

/// Random phase vectors the lower bound starts from for more than three inputs.
const LOWER_BOUND_STARTS: usize = 200;

/// Most evaluations of `ρ(Q M)` in one phase search (its starts included). Each costs the
/// eigenvalues of a `2m × 2m` real matrix, and the coordinate search alone could take
/// `60 m · 2(m − 1)` of them: without a cap the lower bound grows as `m⁵` (2.3 s of a 30-state
/// design with 15 inputs). Up to five inputs the search never reaches the cap (at most 2,600
/// evaluations with its starts), so the cap changes nothing there; beyond, the bound found
/// within the cap is still a lower bound (any unitary `Q` gives one), reported as a bound when
/// it does not meet the upper one to [`EXACT_GAP`].
const LOWER_BOUND_EVALUATIONS: usize = 3000;

/// Largest number of grid frequencies at which the bound is minimised fully.
const MAX_REFINED: usize = 64;

/// Frequencies whose tracked bound is within this relative amount of the refined peak are not
/// refined: the peak is found to this relative accuracy on the grid.
const PRUNE_TOLERANCE: f64 = 1e-4;

/// A disk of gain and phase variations: size `alpha`, skew `skew` (in `[−1, 1]`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Disk {
    pub alpha: f64,
    pub skew: f64,
}

impl Disk {
    /// The real gain factors the disk contains, `[low, high]` (`high` infinite when the disk
    /// reaches infinity): `(2 − α(1 − σ))/(2 + α(1 + σ))` and `(2 + α(1 − σ))/(2 − α(1 + σ))`.
    pub fn gain_range(&self) -> [f64; 2] {
        let (a, s) = (self.alpha, self.skew);
        let low = ((2.0 - a * (1.0 - s)) / (2.0 + a * (1.0 + s))).max(0.0);
        let den = 2.0 - a * (1.0 + s);
        [low, if den > 0.0 { (2.0 + a * (1.0 - s)) / den } else { f64::INFINITY }]
    }

    /// The phase (degrees) the disk contains: the largest `θ` with `e^{jθ}` in the disk. With
    /// `a = (1 − σ)/2`, `b = (1 + σ)/2`, `e^{jθ}` lies in the disk iff
    /// `2 sin(θ/2) / |a + b e^{jθ}| ≤ α`, increasing in `θ` for `σ ∈ [−1, 1]`; solved by bisection
    /// (for `σ = 0` it is `2 atan(α/2)`). NaN for a skew outside `[−1, 1]`.
    pub fn phase_deg(&self) -> f64 {
        let s = self.skew;
        if !(-1.0..=1.0).contains(&s) || !(self.alpha >= 0.0) {
            return f64::NAN;
        }
        let (a, b) = ((1.0 - s) / 2.0, (1.0 + s) / 2.0);
        let size = |t: f64| 2.0 * (t / 2.0).sin() / (a * a + b * b + 2.0 * a * b * t.cos()).sqrt();
        let at_pi = if s == 0.0 { f64::INFINITY } else { 2.0 / s.abs() };
        if self.alpha >= at_pi {
            return 180.0;
        }
        let (mut lo, mut hi) = (0.0f64, std::f64::consts::PI);
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if size(mid) <= self.alpha {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        lo.to_degrees()
    }
}

use super::sigma_max;

/// `σ̄(D M D⁻¹)` with `D = diag(e^{d})`.
fn scaled_norm(m: &DMatrix<Complex64>, d: &[f64]) -> f64 {
    let s = DMatrix::from_fn(m.nrows(), m.ncols(), |i, j| m[(i, j)] * (d[i] - d[j]).exp());
    sigma_max(&s)
}

/// Osborne's balancing of `|M|` (minimises the Frobenius norm of `D M D⁻¹`): log scalings.
fn osborne(m: &DMatrix<Complex64>) -> Vec<f64> {
    let k = m.nrows();
    let mut d = vec![0.0f64; k];
    for _ in 0..50 {
        let mut change = 0.0f64;
        for i in 0..k {
            let (mut row, mut col) = (0.0, 0.0);
            for j in (0..k).filter(|&j| j != i) {
                row += (m[(i, j)].norm() * (d[i] - d[j]).exp()).powi(2);
                col += (m[(j, i)].norm() * (d[j] - d[i]).exp()).powi(2);
            }
            if row > 0.0 && col > 0.0 {
                let step = 0.25 * (col / row).ln();
                d[i] += step;
                change = change.max(step.abs());
            }
        }
        if change < 1e-6 {
            break;
        }
    }
    let first = d.first().copied().unwrap_or(0.0);
    d.iter().map(|v| (v - first).clamp(-300.0, 300.0)).collect()
}

/// Nelder–Mead minimisation of `f` from `x0` (at most `budget` evaluations; stops when the
/// simplex's values agree to `tolerance` relative).
fn nelder_mead(f: &dyn Fn(&[f64]) -> f64, x0: &[f64], step: f64, budget: usize, tolerance: f64) -> (Vec<f64>, f64) {
    let k = x0.len();
    let mut pts: Vec<(Vec<f64>, f64)> = Vec::with_capacity(k + 1);
    pts.push((x0.to_vec(), f(x0)));
    for i in 0..k {
        let mut p = x0.to_vec();
        p[i] += step;
        let v = f(&p);
        pts.push((p, v));
    }
    let mut used = k + 1;
    while used < budget {
        pts.sort_by(|a, b| a.1.total_cmp(&b.1));
        let (best, worst) = (pts[0].1, pts[k].1);
        if worst - best <= tolerance * best.abs().max(1e-300) {
            break;
        }
        let centroid: Vec<f64> = (0..k).map(|j| pts[..k].iter().map(|p| p.0[j]).sum::<f64>() / k as f64).collect();
        let along = |t: f64| -> Vec<f64> { (0..k).map(|j| centroid[j] + t * (pts[k].0[j] - centroid[j])).collect() };
        let r = along(-1.0);
        let fr = f(&r);
        used += 1;
        if fr < best {
            let e = along(-2.0);
            let fe = f(&e);
            used += 1;
            pts[k] = if fe < fr { (e, fe) } else { (r, fr) };
        } else if fr < pts[k - 1].1 {
            pts[k] = (r, fr);
        } else {
            let c = along(0.5);
            let fc = f(&c);
            used += 1;
            if fc < worst {
                pts[k] = (c, fc);
            } else {
                let b0 = pts[0].0.clone();
                for p in pts.iter_mut().skip(1) {
                    p.0 = (0..k).map(|j| b0[j] + 0.5 * (p.0[j] - b0[j])).collect();
                    p.1 = f(&p.0);
                }
                used += k;
            }
        }
    }
    pts.sort_by(|a, b| a.1.total_cmp(&b.1));
    let (x, v) = pts.swap_remove(0);
    (x, v)
}

/// `σ̄(D M D⁻¹)` as a function of the free log scalings (the first is 0).
fn bound_at(m: &DMatrix<Complex64>, x: &[f64]) -> f64 {
    let mut d = Vec::with_capacity(x.len() + 1);
    d.push(0.0);
    d.extend(x.iter().map(|v| v.clamp(-300.0, 300.0)));
    scaled_norm(m, &d)
}

/// How hard [`minimise_bound`] works: Nelder–Mead `restarts` from a simplex of size `step`
/// (shrunk five-fold each time), `budget` evaluations per free scaling each, stopping when the
/// simplex's values agree to `tolerance` relative.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Effort {
    pub step: f64,
    pub restarts: usize,
    pub budget: usize,
    pub tolerance: f64,
}

/// Level 0 of the frequency search: Osborne's scaling or the warm start, no minimisation.
const LEVEL_ZERO: Effort = Effort { step: 0.05, restarts: 0, budget: 0, tolerance: 1e-6 };
/// Level 1: one short run from the level-0 scaling.
const LEVEL_ONE: Effort = Effort { step: 0.05, restarts: 1, budget: 40, tolerance: 1e-6 };
/// A full minimisation at a frequency that may hold the peak.
const FULL: Effort = Effort { step: 0.2, restarts: 3, budget: 100, tolerance: 1e-10 };
/// [`mu_upper_bound`] of a single matrix, with no warm start.
const STANDALONE: Effort = Effort { step: 0.5, restarts: 4, budget: 150, tolerance: 1e-12 };

/// Minimises the D-scaling bound from the better of `warm` and Osborne's scaling, with
/// `effort.restarts` Nelder–Mead runs of shrinking simplex (it can stall on the nonsmooth
/// points of σ̄); returns the bound and the log scalings reached.
pub(crate) fn minimise_bound(m: &DMatrix<Complex64>, warm: Option<&[f64]>, effort: Effort) -> (f64, Vec<f64>) {
    let Effort { step, restarts, budget, tolerance } = effort;
    let k = m.nrows();
    if k <= 1 {
        return (m.get((0, 0)).map_or(0.0, |v| v.norm()), Vec::new());
    }
    let f = |x: &[f64]| bound_at(m, x);
    let osborne_start = osborne(m)[1..].to_vec();
    let mut x = osborne_start.clone();
    let mut best = f(&x);
    if let Some(w) = warm.filter(|w| w.len() == k - 1) {
        let v = f(w);
        if v < best {
            (best, x) = (v, w.to_vec());
        }
    }
    let mut step = step;
    for _ in 0..restarts {
        let (nx, v) = nelder_mead(&f, &x, step, budget * (k - 1), tolerance);
        if v < best {
            (best, x) = (v, nx);
        }
        step *= 0.2;
    }
    (best, x)
}

/// The D-scaling upper bound of `μ` for diagonal complex perturbations.
pub fn mu_upper_bound(m: &DMatrix<Complex64>) -> f64 {
    minimise_bound(m, None, STANDALONE).0
}

/// Spectral radius of a complex matrix (its real embedding `[[X, −Y], [Y, X]]` has the
/// eigenvalues of `M` and of its conjugate).
fn spectral_radius(m: &DMatrix<Complex64>) -> f64 {
    let k = m.nrows();
    let e = DMatrix::from_fn(2 * k, 2 * k, |i, j| {
        let v = m[(i % k, j % k)];
        match (i < k, j < k) {
            (true, true) | (false, false) => v.re,
            (true, false) => -v.im,
            (false, true) => v.im,
        }
    });
    crate::linalg::eigen::try_eigenvalues(&e).map_or(0.0, |v| v.iter().map(|z| z.norm()).fold(0.0, f64::max))
}

/// The lower bound `max_Q ρ(Q M)` over diagonal unitary `Q` (first phase fixed): for up to
/// three inputs a grid of 24 phases per free input, for more the best of
/// [`LOWER_BOUND_STARTS`] seeded random phase vectors; then coordinate search (step halved
/// when no coordinate improves, to 1e-9 rad).
pub fn mu_lower_bound(m: &DMatrix<Complex64>) -> f64 {
    mu_lower_bound_to(m, f64::INFINITY)
}

/// [`mu_lower_bound`], stopping once the search reaches `enough`.
fn mu_lower_bound_to(m: &DMatrix<Complex64>, enough: f64) -> f64 {
    let k = m.nrows();
    if k <= 1 {
        return m.get((0, 0)).map_or(0.0, |v| v.norm());
    }
    phase_search(m, std::iter::once(vec![0.0; k - 1]).chain(lower_bound_starts(k)), std::f64::consts::TAU / 24.0, enough)
}

/// The many starts of [`mu_lower_bound`] for `k ≥ 2` inputs: a grid of 24 phases per free input
/// up to three inputs, seeded random phases beyond.
fn lower_bound_starts(k: usize) -> Vec<Vec<f64>> {
    let n = 24usize;
    let tau = std::f64::consts::TAU;
    if k <= 3 {
        (0..n.pow((k - 1) as u32)).map(|idx| (0..k - 1).map(|j| tau * ((idx / n.pow(j as u32)) % n) as f64 / n as f64).collect()).collect()
    } else {
        let mut rng = crate::uncertainty::SplitMix::new(0x6d75_6c62);
        (0..LOWER_BOUND_STARTS).map(|_| (0..k - 1).map(|_| tau * rng.uniform()).collect()).collect()
    }
}

/// The lower bound started from the phases the upper bound's minimiser points to, falling
/// back to [`mu_lower_bound`]'s many starts only when that does not meet `upper` to
/// [`EXACT_GAP`].
///
/// With `N = D M D⁻¹` (`D = diag(e^{d})`, `d = (0, scaling…)`) and its largest singular
/// triple `N v = σ̄ u`: at a minimiser of `σ̄(D M D⁻¹)` where `σ̄` is simple, `|u_i| = |v_i|`
/// (the gradient `|u_i|² − |v_i|²` vanishes) and `Q = diag(v_i / u_i)` is unitary with
/// `Q M (D⁻¹ v) = σ̄ D⁻¹ v`, so `ρ(Q M) = σ̄`: the bounds meet (Packard & Doyle, "The complex
/// structured singular value", Automatica 29(1), 1993, §9, from memory). Elsewhere these
/// phases are only a start, refined by the coordinate search.
///
/// Each search stops as soon as it meets `upper` to [`EXACT_GAP`]: the margin is then known to
/// that accuracy (reported as exact), and the lower bound is the one found by then.
pub fn mu_lower_bound_near(m: &DMatrix<Complex64>, scaling: &[f64], upper: f64) -> f64 {
    let enough = if upper.is_finite() { upper * (1.0 - EXACT_GAP) } else { f64::INFINITY };
    match from_minimiser(m, scaling, enough) {
        Some(found) if found >= enough => found,
        Some(found) => found.max(mu_lower_bound_to(m, enough)),
        None => mu_lower_bound_to(m, enough),
    }
}

/// The coordinate search of [`mu_lower_bound`] from the one start [`mu_lower_bound_near`]
/// describes; `None` for one input, a scaling of the wrong length, a failed SVD or a zero
/// entry of `u`.
pub fn mu_lower_bound_from_minimiser(m: &DMatrix<Complex64>, scaling: &[f64]) -> Option<f64> {
    from_minimiser(m, scaling, f64::INFINITY)
}

/// [`mu_lower_bound_from_minimiser`], stopping once the search reaches `enough`.
fn from_minimiser(m: &DMatrix<Complex64>, scaling: &[f64], enough: f64) -> Option<f64> {
    let k = m.nrows();
    if k <= 1 || scaling.len() + 1 != k {
        return None;
    }
    let mut d = vec![0.0];
    d.extend(scaling.iter().map(|v| v.clamp(-300.0, 300.0)));
    let scaled = DMatrix::from_fn(k, k, |i, j| m[(i, j)] * (d[i] - d[j]).exp());
    let svd = nalgebra::linalg::SVD::try_new(scaled, true, true, f64::EPSILON, 200)?;
    let top = (0..k).max_by(|&a, &b| svd.singular_values[a].total_cmp(&svd.singular_values[b]))?;
    let (u, vt) = (svd.u.as_ref()?, svd.v_t.as_ref()?);
    let q: Vec<Complex64> = (0..k).map(|i| vt[(top, i)].conj() / u[(i, top)]).collect();
    if q.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
        return None;
    }
    let start: Vec<f64> = (1..k).map(|i| (q[i] / q[0]).arg()).collect();
    Some(phase_search(m, std::iter::once(start), std::f64::consts::TAU / 24.0, enough))
}

/// `max ρ(Q M)` by coordinate search over the free phases from the best of `starts` (step `h`
/// halved when no coordinate improves, to 1e-9 rad; at most `60 k` rounds and
/// [`LOWER_BOUND_EVALUATIONS`] evaluations in all), stopping as soon as a value reaches
/// `enough`.
fn phase_search(m: &DMatrix<Complex64>, starts: impl Iterator<Item = Vec<f64>>, mut h: f64, enough: f64) -> f64 {
    let k = m.nrows();
    let evaluations = std::cell::Cell::new(0usize);
    let f = |th: &[f64]| -> f64 {
        evaluations.set(evaluations.get() + 1);
        let q = DMatrix::from_fn(k, k, |i, j| m[(i, j)] * if i == 0 { Complex64::new(1.0, 0.0) } else { Complex64::from_polar(1.0, th[i - 1]) });
        spectral_radius(&q)
    };
    let spent = || evaluations.get() >= LOWER_BOUND_EVALUATIONS;
    let reached = |v: f64| v >= enough;
    let mut best = (vec![0.0; k - 1], f64::NEG_INFINITY);
    for th in starts {
        if spent() {
            break;
        }
        let v = f(&th);
        if v > best.1 {
            best = (th, v);
        }
        if reached(best.1) {
            return best.1.max(0.0);
        }
    }
    for _ in 0..(60 * k) {
        let mut moved = false;
        for j in 0..k - 1 {
            for sgn in [1.0, -1.0] {
                if spent() {
                    return best.1.max(0.0);
                }
                let mut t = best.0.clone();
                t[j] += sgn * h;
                let v = f(&t);
                if v > best.1 {
                    best = (t, v);
                    moved = true;
                    if reached(v) {
                        return best.1.max(0.0);
                    }
                }
            }
        }
        if !moved {
            h *= 0.5;
        }
        if h < 1e-9 {
            break;
        }
    }
    best.1.max(0.0)
}

/// The multiloop disk margin over a frequency grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MultiloopDisk {
    /// `α = 1 / μ_upper` (every perturbation in the disk at every input at once is tolerated
    /// at the grid frequencies and near the refined peak, to within [`PRUNE_TOLERANCE`]
    /// relative: a grid frequency whose bound is within that of the refined peak is not
    /// minimised further; between grid frequencies only the peak's neighbourhood is searched)
    /// and the frequency where the peak of `μ` is attained.
    pub alpha: f64,
    pub frequency: f64,
    /// `1 / μ_lower`: a perturbation of this size at that frequency destabilises the loop.
    pub alpha_upper: f64,
    /// True when the bounds agree to [`EXACT_GAP`].
    pub exact: bool,
}

/// The multiloop disk margin of skew `skew`, given `S` at each frequency of `grid`.
pub fn multiloop_disk(grid: &[f64], sensitivity: &dyn Fn(f64) -> Option<DMatrix<Complex64>>, skew: f64) -> MultiloopDisk {
    let shifted = |w: f64| -> Option<DMatrix<Complex64>> {
        sensitivity(w).map(|mut s| {
            for i in 0..s.nrows() {
                s[(i, i)] += Complex64::new((skew - 1.0) / 2.0, 0.0);
            }
            s
        })
    };
    let levels = level_zero(grid, &shifted);
    let Some(found) = grid_peak(&levels) else {
        return MultiloopDisk { alpha: 0.0, frequency: 0.0, alpha_upper: f64::INFINITY, exact: false };
    };
    let (peak, at, scaling) = refine_between(grid, found, &shifted);
    let lower = shifted(at).map_or(0.0, |m| mu_lower_bound_near(&m, &scaling, peak));
    let alpha = if peak > 0.0 { 1.0 / peak } else { f64::INFINITY };
    let exact = peak.is_finite() && lower > 0.0 && peak - lower <= EXACT_GAP * peak;
    MultiloopDisk { alpha, frequency: at, alpha_upper: if lower > 0.0 { 1.0 / lower } else { f64::INFINITY }, exact }
}

/// The bound at one grid frequency: `M(ω)` (`None` when it could not be evaluated), level 0
/// and the scaling that gave it.
struct GridBound {
    frequency: f64,
    level0: f64,
    scaling: Vec<f64>,
    m: Option<DMatrix<Complex64>>,
}

/// The largest bound found so far: its value, grid index and minimising scaling.
struct Peak {
    value: f64,
    frequency: f64,
    index: usize,
    scaling: Vec<f64>,
}

/// Level 0 at every grid frequency: the better of Osborne's scaling and the previous
/// frequency's (one or two σ̄ each). Any scaling bounds μ from above, so the levels only
/// decide which frequencies need more work.
fn level_zero(grid: &[f64], shifted: &dyn Fn(f64) -> Option<DMatrix<Complex64>>) -> Vec<GridBound> {
    let mut warm: Option<Vec<f64>> = None;
    grid.iter()
        .map(|&w| {
            let Some(m) = shifted(w) else {
                return GridBound { frequency: w, level0: f64::INFINITY, scaling: Vec::new(), m: None };
            };
            let (v, x) = minimise_bound(&m, warm.as_deref(), LEVEL_ZERO);
            warm = Some(x.clone());
            GridBound { frequency: w, level0: v, scaling: x, m: Some(m) }
        })
        .collect()
}

/// The grid peak of the fully minimised bound. The frequency of the largest level 0 is
/// minimised fully: its value `p₀` is a lower bound of the peak, so only frequencies whose
/// level 0 exceeds `p₀` (beyond the pruning tolerance) can hold it. Those get a short
/// minimisation (level 1, warm-started from level 0), and are then refined fully in
/// decreasing order of level 1 until level 1 can no longer beat the refined peak (a
/// branch-and-bound: no grid frequency that could hold the peak is skipped). `None` for an
/// empty grid.
fn grid_peak(levels: &[GridBound]) -> Option<Peak> {
    let full = |i: usize, from: &[f64]| -> (f64, Vec<f64>) {
        match &levels[i].m {
            Some(m) => minimise_bound(m, Some(from), FULL),
            None => (f64::INFINITY, from.to_vec()),
        }
    };
    let first = (0..levels.len()).max_by(|&a, &b| levels[a].level0.total_cmp(&levels[b].level0))?;
    let (v, x) = full(first, &levels[first].scaling);
    let mut peak = Peak { value: v.min(levels[first].level0), frequency: levels[first].frequency, index: first, scaling: x };
    let mut candidates: Vec<(usize, f64, Vec<f64>)> = (0..levels.len())
        .filter(|&i| i != first && levels[i].level0 > peak.value * (1.0 + PRUNE_TOLERANCE))
        .map(|i| match &levels[i].m {
            Some(m) => {
                let (v, x) = minimise_bound(m, Some(&levels[i].scaling), LEVEL_ONE);
                (i, v.min(levels[i].level0), x)
            }
            None => (i, f64::INFINITY, Vec::new()),
        })
        .collect();
    candidates.sort_by(|a, b| b.1.total_cmp(&a.1));
    for (done, (i, level1, x1)) in candidates.into_iter().enumerate() {
        if level1 <= peak.value * (1.0 + PRUNE_TOLERANCE) {
            break;
        }
        if done + 1 >= MAX_REFINED {
            // Out of budget: the level-1 bound of the rest still bounds μ (a smaller, safe α),
            // and the largest of them is where the margin is then reported.
            if level1 > peak.value {
                peak = Peak { value: level1, frequency: levels[i].frequency, index: i, scaling: x1 };
            }
            break;
        }
        let (v, x) = full(i, &x1);
        let v = v.min(level1);
        if v > peak.value {
            peak = Peak { value: v, frequency: levels[i].frequency, index: i, scaling: x };
        }
    }
    Some(peak)
}

/// Refines the grid peak between its grid neighbours: golden section on `σ̄(D M(ω) D⁻¹)` with
/// the scaling `D` held at the last minimiser (one σ̄ per step; any `D` bounds μ, and by the
/// envelope theorem the held-`D` function is stationary where the minimised bound is when `D`
/// is the minimiser there), then the bound minimised at the point found, which gives the next
/// `D`; [`PEAK_PASSES`] times, each in a bracket a tenth as wide. Never lowers the grid peak:
/// `(value, frequency, the minimising scaling there)`.
fn refine_between(grid: &[f64], found: Peak, shifted: &dyn Fn(f64) -> Option<DMatrix<Complex64>>) -> (f64, f64, Vec<f64>) {
    let Peak { value: mut peak, frequency: mut at, index, mut scaling } = found;
    let mut at_scaling = scaling.clone();
    let (mut lo, mut hi) = (grid[index.saturating_sub(1)], grid[(index + 1).min(grid.len() - 1)]);
    for _ in 0..PEAK_PASSES {
        if !(hi > lo) {
            break;
        }
        let held = |w: f64| shifted(w).map(|m| if m.nrows() > 1 && scaling.len() + 1 == m.nrows() { bound_at(&m, &scaling) } else { sigma_max(&m) });
        let (w, _) = super::refine_max(&held, lo, hi);
        let Some(m) = shifted(w) else {
            return (f64::INFINITY, w, scaling);
        };
        let (v, x) = minimise_bound(&m, Some(&scaling), FULL);
        if v > peak {
            (peak, at, at_scaling) = (v, w, x.clone());
        }
        scaling = x;
        let half = 0.05 * (hi - lo);
        (lo, hi) = ((w - half).max(lo), (w + half).min(hi));
    }
    (peak, at, at_scaling)
}
