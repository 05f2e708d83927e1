//! The multi-input (and distinct-pole single-input) route of [`super`]: eigenstructure
//! assignment by Kautsky–Nichols–Van Dooren sweeps with the Tits–Yang objective. The equation,
//! method, cost and failure modes are stated in the parent module's documentation.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use super::{max_matching_error, Branch, Core, Eigenvectors, PlacementError, PlacementMethod, PlacementParams, Slot, LARGE_PLANT_ORDER};
use crate::linalg::eigen::{balancing_scale, try_eigenvalues};
use crate::linalg::kernels::{add_outer, product_into, subtract_two_outer, two_products_into};
use crate::linalg::qr::{full_qr, trailing_q_columns};
use crate::linalg::shifted_sigma::{real_times_complex, ShiftedPair};
use crate::linalg::svd::{try_condition_number, try_svd, SvdParams};

pub(super) fn to_complex(m: &DMatrix<f64>) -> DMatrix<Complex64> {
    m.map(|v| Complex64::new(v, 0.0))
}

/// Eigenstructure assignment for a controllable pair whose requested poles repeat at most
/// `rank B` times.
pub(super) fn assign_robust(a: &DMatrix<f64>, b: &DMatrix<f64>, poles: &[Complex64], params: PlacementParams, start: Option<&Eigenvectors>) -> Result<Core, PlacementError> {
    let n = a.nrows();
    // 1. Rank of B and the bases U_r, U₁.
    let svd = try_svd(b, SvdParams::default())?;
    let smax = svd.singular_values.iter().cloned().fold(0.0, f64::max);
    let r = svd.singular_values.iter().filter(|&&s| s > params.rank_tolerance * smax && s > 0.0).count();
    if r == 0 {
        return Err(PlacementError::Numerical { message: "B has rank 0".into() });
    }
    let ur = svd.u.columns(0, r).into_owned();
    let (qb, _) = full_qr(&ur);
    let u1 = qb.columns(r, n - r).into_owned();

    // 2. Slots: real poles first, then conjugate pairs (positive imaginary part first).
    let mut ordered: Vec<Complex64> = poles.iter().filter(|z| z.im == 0.0).cloned().collect();
    ordered.sort_by(|x, y| x.re.total_cmp(&y.re));
    let mut pairs: Vec<Complex64> = poles.iter().filter(|z| z.im > 0.0).cloned().collect();
    pairs.sort_by(|x, y| x.re.total_cmp(&y.re).then(x.im.total_cmp(&y.im)));
    let mut slots = Vec::new();
    for j in 0..ordered.len() {
        slots.push(Slot::Real(j));
    }
    for p in pairs {
        slots.push(Slot::Pair(ordered.len()));
        ordered.push(p);
        ordered.push(p.conj());
    }
    if ordered.len() != n {
        return Err(PlacementError::PoleCount { expected: n, controllable: n, found: poles.len() });
    }
    // Multiplicities.
    for (i, z) in ordered.iter().enumerate() {
        let count = ordered.iter().filter(|w| *w == z).count();
        if count > r && ordered[..i].iter().all(|w| w != z) {
            return Err(PlacementError::RepeatedBeyondRank { pole: *z, multiplicity: count, rank: r });
        }
    }

    // 3. Admissible subspaces S_j (n × r), shared by equal poles; the conjugate column uses conj(S).
    // One Hessenberg reduction serves every pole ([`ShiftedPair::admissible_basis`]), with U_r
    // scaled to ‖A − λI‖'s size so that the bases come out well conditioned.
    let scale = a.norm() + ordered.iter().map(|z| z.norm()).fold(0.0, f64::max);
    let scale = if scale > 0.0 && scale.is_finite() { scale } else { 1.0 };
    let fast = (n >= LARGE_PLANT_ORDER).then(|| ShiftedPair::new(a, &(&ur * scale)));
    let mut subspaces: Vec<DMatrix<Complex64>> = Vec::with_capacity(slots.len());
    let mut cache: Vec<(Complex64, usize)> = Vec::new();
    for slot in &slots {
        let lambda = match *slot {
            Slot::Real(j) | Slot::Pair(j) => ordered[j],
        };
        if let Some(&(_, k)) = cache.iter().find(|(z, _)| *z == lambda) {
            let s = subspaces[k].clone();
            subspaces.push(s);
            continue;
        }
        let s = admissible_subspace(a, &u1, lambda, r, fast.as_ref(), &ur);
        cache.push((lambda, subspaces.len()));
        subspaces.push(s);
    }

    // 4. Several starting guesses; each is refined by sweeps and the best-conditioned result kept
    // (|det X| has local maxima, and a larger |det X| does not always mean a smaller κ₂(X)).
    let mut starts: Vec<DMatrix<Complex64>> = Vec::new();
    starts.extend(initial_x(&slots, &subspaces, &ordered, &qb));
    starts.extend(initial_x_sum(&slots, &subspaces, &ordered, n));
    if r > 1 {
        starts.extend(initial_x_seeded(&slots, &subspaces, &ordered, n, 0x5DEECE66D));
    }
    let real_subspaces: Vec<Option<DMatrix<f64>>> = slots.iter().zip(&subspaces).map(|(slot, s)| matches!(slot, Slot::Real(_)).then(|| s.map(|z| z.re))).collect();
    let mut runs: Vec<Refinement> = Vec::new();
    for x0 in starts {
        let Some(run) = Refinement::new(x0, &slots)? else {
            continue;
        };
        runs.push(run);
        if r == 1 {
            break; // X is unique up to column scaling: nothing to refine.
        }
    }
    if runs.is_empty() {
        return Err(PlacementError::Numerical {
            message: "no independent set of closed-loop eigenvectors was found; the requested poles may coincide with uncontrollable or nearly uncontrollable modes".into(),
        });
    }
    let mut total_sweeps = 0;
    // A first stage for each start (checks of κ₂ every `condition_check_interval` sweeps, as
    // before the best is chosen), then the best start alone with checks every
    // `final_check_interval` sweeps. The continuation below keeps its own schedule.
    let first_stage = if n >= LARGE_PLANT_ORDER { params.large_first_stage_sweeps } else { params.condition_check_interval };
    let finishing = PlacementParams { condition_check_interval: params.final_check_interval, ..params };
    if r > 1 {
        for run in runs.iter_mut() {
            run.sweep(&slots, &subspaces, &real_subspaces, params, first_stage)?;
            // The starts are ranked by the conditioning they reached: measure it where the
            // stage did not end on a check.
            if !run.converged && run.sweeps % params.condition_check_interval.max(1) != 0 {
                run.record_condition(&slots, params)?;
            }
            total_sweeps += run.sweeps;
        }
        runs.sort_by(|p, q| p.best_kappa.total_cmp(&q.best_kappa));
        runs.truncate(params.finalists.max(1));
        for run in runs.iter_mut() {
            let before = run.sweeps;
            run.sweep(&slots, &subspaces, &real_subspaces, finishing, params.max_sweeps.saturating_sub(before))?;
            total_sweeps += run.sweeps - before;
        }
        runs.sort_by(|p, q| q.best_kappa.total_cmp(&p.best_kappa));
    }
    let Some(best) = runs.pop() else {
        return Err(PlacementError::Numerical { message: "no eigenvector matrix".into() });
    };
    let mut converged = r == 1 || best.converged;
    let (mut x, mut condition) = best.into_best();
    let sigma_inv = DMatrix::from_diagonal(&svd.singular_values.rows(0, r).map(|s| 1.0 / s));
    let vr = svd.v_adjoint.rows(0, r).transpose();
    let left = to_complex(&(vr * sigma_inv * ur.transpose()));
    let (fresh_gain, mut poles) = gain_from_eigenvectors(a, b, &left, &x, &ordered)?;
    let mut gain = fresh_gain.clone();
    // Continuation: the same refinement from the previous eigenvectors projected onto the new
    // admissible subspaces; kept unless its conditioning is more than the stated factor worse.
    let mut branch = Branch::Fresh;
    if let (true, Some(x0)) = (r > 1, start.and_then(|s| continued_start(&slots, &subspaces, &ordered, s))) {
        if let Some(followed) = follow_branch(x0, &slots, &subspaces, &real_subspaces, params)? {
            total_sweeps += followed.sweeps;
            if followed.condition <= params.branch_condition_factor * condition {
                let (k, followed_poles) = gain_from_eigenvectors(a, b, &left, &followed.x, &ordered)?;
                let fresh_norm = fresh_gain.norm().max(f64::MIN_POSITIVE);
                let gain_difference = (&k - &fresh_gain).norm() / fresh_norm;
                branch = if followed.drift > params.branch_drift_limit { Branch::Lost { drift: followed.drift } } else { Branch::Followed { fresh_condition: condition, gain_difference } };
                x = followed.x;
                condition = followed.condition;
                converged = followed.converged;
                gain = k;
                poles = followed_poles;
            } else {
                branch = Branch::Changed { followed_condition: followed.condition };
            }
        }
    }
    let iterations = total_sweeps;
    let det = abs_det(&x);
    let balanced_condition = balanced_condition(&(a - b * &gain), &x).unwrap_or(condition);
    let eigenvectors = Some(Eigenvectors { poles: ordered.clone(), vectors: x });
    let closed_loop_poles = poles.map(|p| (gain.clone(), p));
    Ok(Core { gain, iterations, converged, condition, balanced_condition, abs_det: det, rank: r, method: PlacementMethod::Robust, eigenvectors, branch, closed_loop_poles })
}

/// A continuation's refinement: where it ended, its conditioning, how far it moved.
struct Followed {
    x: DMatrix<Complex64>,
    condition: f64,
    drift: f64,
    sweeps: usize,
    converged: bool,
}

/// Refines the continuation's start `x0` to the local maximiser of `|det X|` (tight stop).
fn follow_branch(
    x0: DMatrix<Complex64>,
    slots: &[Slot],
    subspaces: &[DMatrix<Complex64>],
    real_subspaces: &[Option<DMatrix<f64>>],
    params: PlacementParams,
) -> Result<Option<Followed>, PlacementError> {
    let start = x0.clone();
    let Some(mut run) = Refinement::new(x0, slots)? else {
        return Ok(None);
    };
    // Converged tightly: |det X| is flat at its maximum, so a loose stop leaves X behind the
    // moving optimum by about the square root of the tolerance, and the lag is made up later
    // in one jump of the gain.
    let tight = PlacementParams { improvement_tolerance: params.continuation_tolerance, condition_stall_tolerance: params.continuation_tolerance, ..params };
    run.sweep(slots, subspaces, real_subspaces, tight, params.max_sweeps)?;
    let (sweeps, converged) = (run.sweeps, run.converged);
    let (x, condition) = run.into_last(slots)?;
    let drift = column_drift(&start, &x);
    Ok(Some(Followed { x, condition, drift, sweeps, converged }))
}

/// The gain for the eigenvectors `x` of the poles `ordered`: `K X = L (A X − X Λ)` with
/// `L = V_r Σ_r⁻¹ U_rᵀ` (`left`), solved with `X` rather than through an explicit inverse (which
/// would square the effect of `κ(X)` on the rounding errors), one step of iterative
/// refinement; and the second route `K = L (A − M)`, `M = X Λ X⁻¹` from a solve. The two differ
/// only in rounding; when `X` is ill conditioned one can be markedly better, so both are
/// checked against the request through the eigenvalues of `A − B K` and the better one kept.
///
/// Returns the gain and, when they were computed to choose it, the eigenvalues of `A − B K`.
fn gain_from_eigenvectors(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    left: &DMatrix<Complex64>,
    x: &DMatrix<Complex64>,
    ordered: &[Complex64],
) -> Result<(DMatrix<f64>, Option<Vec<Complex64>>), PlacementError> {
    let mut xl = x.clone();
    for (j, z) in ordered.iter().enumerate() {
        let mut col = xl.column_mut(j);
        col *= *z;
    }
    let g = left * (to_complex(a) * x - &xl); // m × n
    let xt_lu = x.transpose().lu();
    let mut gain_c = xt_lu.solve(&g.transpose()).ok_or_else(|| PlacementError::Numerical { message: "the eigenvector matrix is singular".into() })?;
    let residual = g.transpose() - x.transpose() * &gain_c;
    if let Some(correction) = xt_lu.solve(&residual) {
        gain_c += correction;
    }
    let mut gain = gain_c.transpose().map(|z| z.re);
    let mut poles = None;
    if let Some(mt) = xt_lu.solve(&xl.transpose()) {
        let m_real = mt.transpose().map(|z| z.re);
        let gain_m = left.map(|z| z.re) * (a - m_real);
        if gain_m.iter().all(|v| v.is_finite()) {
            let (eig_direct, eig_m) = (try_eigenvalues(&(a - b * &gain)).ok(), try_eigenvalues(&(a - b * &gain_m)).ok());
            let error = |e: &Option<Vec<Complex64>>| e.as_ref().map_or(f64::INFINITY, |e| max_matching_error(ordered, e, a.norm()));
            if error(&eig_m) < error(&eig_direct) {
                gain = gain_m;
                poles = eig_m;
            } else {
                poles = eig_direct;
            }
        }
    }
    if !gain.iter().all(|v| v.is_finite()) {
        return Err(PlacementError::Numerical { message: "the gain is not finite".into() });
    }
    Ok((gain, poles))
}

/// `κ₂(D⁻¹ X)` with unit columns for the closed loop `closed` with eigenvectors `x` (see
/// [`Placement::balanced_eigenvector_condition`]); `None` when the SVD fails.
pub(super) fn balanced_condition(closed: &DMatrix<f64>, x: &DMatrix<Complex64>) -> Option<f64> {
    let d = balancing_scale(closed, 100);
    let mut xb = DMatrix::from_fn(x.nrows(), x.ncols(), |i, j| x[(i, j)] / d[i]);
    for mut col in xb.column_iter_mut() {
        let norm = col.norm();
        if norm > 0.0 && norm.is_finite() {
            col /= Complex64::new(norm, 0.0);
        }
    }
    try_condition_number(&xb, SvdParams::default()).ok()
}

/// KNV/Tits–Yang sweeps from one starting `X`, keeping the best-conditioned `X` seen.
///
/// The sweeps work on the real form `X_r` of `X`: a real pole's column as is, a conjugate
/// pair `x, x̄` as the two real columns `Re x, Im x`. Since `[x, x̄] = [Re x, Im x]·[[1, 1], [i, −i]]`,
/// `|det X| = 2^p |det X_r|` (`p` pairs), so both have the same maximisers, and real
/// arithmetic costs a quarter of complex. `X_r⁻¹` is carried along by rank-one (real pole)
/// and rank-two (pair, Woodbury) updates whose determinant ratio is known before they are
/// applied, so a step that would not improve `|det X|` is simply skipped.
struct Refinement {
    xr: DMatrix<f64>,
    xr_inv: DMatrix<f64>,
    best_x: DMatrix<Complex64>,
    best_kappa: f64,
    sweeps: usize,
    converged: bool,
}

/// Real form of a conjugate-structured complex `X`.
fn to_real_form(x: &DMatrix<Complex64>, slots: &[Slot]) -> DMatrix<f64> {
    let n = x.nrows();
    let mut xr = DMatrix::<f64>::zeros(n, n);
    for slot in slots {
        match *slot {
            Slot::Real(j) => {
                for i in 0..n {
                    xr[(i, j)] = x[(i, j)].re;
                }
            }
            Slot::Pair(j) => {
                for i in 0..n {
                    xr[(i, j)] = x[(i, j)].re;
                    xr[(i, j + 1)] = x[(i, j)].im;
                }
            }
        }
    }
    xr
}

/// Complex `X` (unit columns) from the real form.
fn from_real_form(xr: &DMatrix<f64>, slots: &[Slot]) -> DMatrix<Complex64> {
    let n = xr.nrows();
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for slot in slots {
        match *slot {
            Slot::Real(j) => {
                let norm = xr.column(j).norm();
                for i in 0..n {
                    x[(i, j)] = Complex64::new(xr[(i, j)] / norm, 0.0);
                }
            }
            Slot::Pair(j) => {
                let norm = (xr.column(j).norm_squared() + xr.column(j + 1).norm_squared()).sqrt();
                for i in 0..n {
                    let z = Complex64::new(xr[(i, j)], xr[(i, j + 1)]) / norm;
                    x[(i, j)] = z;
                    x[(i, j + 1)] = z.conj();
                }
            }
        }
    }
    x
}

fn invert_real(x: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    let inv = x.clone().lu().try_inverse()?;
    if inv.iter().all(|v| v.is_finite()) {
        Some(inv)
    } else {
        None
    }
}

impl Refinement {
    fn new(x: DMatrix<Complex64>, slots: &[Slot]) -> Result<Option<Self>, PlacementError> {
        let xr = to_real_form(&x, slots);
        let Some(xr_inv) = invert_real(&xr) else {
            return Ok(None);
        };
        let kappa = try_condition_number(&x, SvdParams::default())?;
        Ok(Some(Refinement { xr, xr_inv, best_x: x, best_kappa: kappa, sweeps: 0, converged: false }))
    }

    fn into_best(self) -> (DMatrix<Complex64>, f64) {
        (self.best_x, self.best_kappa)
    }

    /// The last `X` (the local maximiser of `|det X|` the sweeps converged to) and its `κ₂`: a
    /// smooth function of the poles, unlike the best-conditioned snapshot, whose choice among
    /// the checkpoints can change abruptly as the poles move.
    fn into_last(self, slots: &[Slot]) -> Result<(DMatrix<Complex64>, f64), PlacementError> {
        let x = from_real_form(&self.xr, slots);
        let kappa = try_condition_number(&x, SvdParams::default())?;
        Ok((x, kappa))
    }

    /// Runs up to `budget` more sweeps (fewer if converged). Nothing is allocated inside a
    /// sweep: every vector lives in one [`SweepWork`].
    fn sweep(&mut self, slots: &[Slot], subspaces: &[DMatrix<Complex64>], real_subspaces: &[Option<DMatrix<f64>>], params: PlacementParams, budget: usize) -> Result<(), PlacementError> {
        let n = self.xr.nrows();
        let r = subspaces.first().map_or(0, |s| s.ncols());
        let mut work = SweepWork::new(n, r);
        for _ in 0..budget {
            if self.converged {
                break;
            }
            self.sweeps += 1;
            let mut log_gain = 0.0;
            for (k, slot) in slots.iter().enumerate() {
                let gain = match *slot {
                    Slot::Real(j) => match real_subspaces[k].as_ref() {
                        Some(sr) => self.real_step(j, sr, &mut work),
                        None => None,
                    },
                    Slot::Pair(j) => self.pair_step(j, &subspaces[k], &mut work),
                };
                log_gain += gain.unwrap_or(0.0);
            }
            // Refactor X_r⁻¹ now and then to stop rounding drift in the low-rank updates.
            if self.sweeps % params.refactor_interval.max(1) == 0 {
                match invert_real(&self.xr) {
                    Some(inv) => self.xr_inv = inv,
                    None => return Err(PlacementError::Numerical { message: "the eigenvector matrix became singular".into() }),
                }
            }
            let mut stop = log_gain < params.improvement_tolerance;
            // Every few sweeps (and at the end), keep the best-conditioned X seen; stop once κ₂(X) stalls.
            if stop || self.sweeps % params.condition_check_interval.max(1) == 0 {
                stop |= self.record_condition(slots, params)?;
            }
            if stop {
                self.converged = true;
                break;
            }
        }
        Ok(())
    }

    /// Computes `κ₂(X)` now, keeps `X` if it is the best-conditioned seen, and tells whether
    /// `κ₂` has stalled (improved by less than the stall tolerance since the best).
    fn record_condition(&mut self, slots: &[Slot], params: PlacementParams) -> Result<bool, PlacementError> {
        let x = from_real_form(&self.xr, slots);
        let kappa = try_condition_number(&x, SvdParams::default())?;
        let stalled = kappa > self.best_kappa * (1.0 - params.condition_stall_tolerance);
        if kappa < self.best_kappa {
            self.best_kappa = kappa;
            self.best_x = x;
        }
        Ok(stalled)
    }

    /// One real pole's column `j`: `x_j ← S S^T y / ‖·‖` with `y` row `j` of `X_r⁻¹`, kept when
    /// it raises `|det X|`; `X_r⁻¹` follows by a rank-one (Sherman–Morrison) update. About
    /// `4n² + 4nr` flops. Returns `ln` of the determinant's growth, `None` when skipped.
    fn real_step(&mut self, j: usize, sr: &DMatrix<f64>, w: &mut SweepWork) -> Option<f64> {
        w.y.tr_copy_from(&self.xr_inv.row(j));
        w.t.gemv_tr(1.0, sr, &w.y, 0.0);
        w.v.gemv(1.0, sr, &w.t, 0.0);
        let vn = w.v.norm();
        if !(vn > 1e-300) || !vn.is_finite() {
            return None;
        }
        w.v /= vn;
        // u = v − x_j; w = X⁻¹ u; ratio = 1 + w_j.
        w.u.copy_from(&w.v);
        w.u.axpy(-1.0, &self.xr.column(j), 1.0);
        product_into(&self.xr_inv, &w.u, &mut w.w1);
        let denom = 1.0 + w.w1[j];
        if !(denom.abs() > 1.0 + 1e-15) || !denom.is_finite() {
            return None; // no improvement (or a breakdown): keep the column
        }
        add_outer(&mut self.xr_inv, -1.0 / denom, &w.w1, &w.y);
        self.xr.set_column(j, &w.v);
        Some(denom.abs().ln())
    }

    /// One conjugate pair's columns `j, j + 1` ([`SweepWork::best_pair_vector`]), kept when they raise
    /// `|det X|`; `X_r⁻¹` follows by a rank-two (Woodbury) update. About `8n² + 12nr` flops.
    fn pair_step(&mut self, j: usize, s: &DMatrix<Complex64>, w: &mut SweepWork) -> Option<f64> {
        // The complement of the other columns is spanned by rows j, j+1 of X_r⁻¹.
        w.y.tr_copy_from(&self.xr_inv.row(j));
        w.y2.tr_copy_from(&self.xr_inv.row(j + 1));
        w.best_pair_vector(s)?;
        w.u.copy_from(&w.v);
        w.u.axpy(-1.0, &self.xr.column(j), 1.0);
        w.u2.copy_from(&w.v2);
        w.u2.axpy(-1.0, &self.xr.column(j + 1), 1.0);
        two_products_into(&self.xr_inv, &w.u, &w.u2, &mut w.w1, &mut w.w2);
        // C = I + Eᵀ X⁻¹ U (2 × 2); det C = |det X_new| / |det X_old|.
        let (c11, c12, c21, c22) = (1.0 + w.w1[j], w.w2[j], w.w1[j + 1], 1.0 + w.w2[j + 1]);
        let det = c11 * c22 - c12 * c21;
        if !(det.abs() > 1.0 + 1e-15) || !det.is_finite() {
            return None;
        }
        // X⁻¹ ← X⁻¹ − W C⁻¹ R with R the rows j, j+1 of X⁻¹ (w.y, w.y2).
        let (i11, i12, i21, i22) = (c22 / det, -c12 / det, -c21 / det, c11 / det);
        // Columns 1 and 2 of W C⁻¹, into u and u2 (free now).
        w.u.copy_from(&w.w1);
        w.u.scale_mut(i11);
        w.u.axpy(i21, &w.w2, 1.0);
        w.u2.copy_from(&w.w1);
        w.u2.scale_mut(i12);
        w.u2.axpy(i22, &w.w2, 1.0);
        subtract_two_outer(&mut self.xr_inv, &w.u, &w.y, &w.u2, &w.y2);
        self.xr.set_column(j, &w.v);
        self.xr.set_column(j + 1, &w.v2);
        Some(det.abs().ln())
    }
}

/// The vectors of one sweep, allocated once per call of [`Refinement::sweep`].
struct SweepWork {
    /// Rows of `X_r⁻¹` (`y`, and `y2` for a pair).
    y: DVector<f64>,
    y2: DVector<f64>,
    /// Coordinates in a real subspace (`r`).
    t: DVector<f64>,
    /// The new column (a pair: real part `v`, imaginary part `v2`).
    v: DVector<f64>,
    v2: DVector<f64>,
    /// Column changes `u`, `u2` and `X_r⁻¹ u`, `X_r⁻¹ u2`.
    u: DVector<f64>,
    u2: DVector<f64>,
    w1: DVector<f64>,
    w2: DVector<f64>,
    /// `G = Yᵀ S` (2 × r, row-major) and `c = Gᴴ w` (r) of the pair step.
    g: Vec<Complex64>,
    c: Vec<Complex64>,
}

impl SweepWork {
    fn new(n: usize, r: usize) -> SweepWork {
        let z = || DVector::<f64>::zeros(n);
        SweepWork { y: z(), y2: z(), t: DVector::zeros(r), v: z(), v2: z(), u: z(), u2: z(), w1: z(), w2: z(), g: vec![Complex64::new(0.0, 0.0); 2 * r], c: vec![Complex64::new(0.0, 0.0); r] }
    }

    /// The unit `x ∈ range S` maximising `|det X|` when the conjugate columns `x, x̄` replace a
    /// pair whose complement is spanned by `y`, `y2` (rows of `X_r⁻¹`): `Re x` into `v`, `Im x`
    /// into `v2` (`y`, `y2` are kept). The reasoning is at [`pair_eigenvector`].
    fn best_pair_vector(&mut self, s: &DMatrix<Complex64>) -> Option<()> {
        let (n, r) = (s.nrows(), s.ncols());
        if r > self.c.len() {
            return None;
        }
        // A real orthonormal basis e1, e2 of span{y, y2} (into u, u2).
        let (ny, ny2) = (self.y.norm(), self.y2.norm());
        let n1 = ny.max(ny2);
        if !(n1 > 0.0) {
            return None;
        }
        let (p, q, pn) = if ny >= ny2 { (&self.y, &self.y2, ny) } else { (&self.y2, &self.y, ny2) };
        self.u.copy_from(p);
        self.u /= pn;
        let along = self.u.dot(q);
        self.u2.copy_from(q);
        self.u2.axpy(-along, &self.u, 1.0);
        let qn = self.u2.norm();
        if !(qn > 1e-8 * n1) {
            return None;
        }
        self.u2 /= qn;
        // G = [e1ᵀ S; e2ᵀ S].
        for c in 0..r {
            let col = s.column(c);
            let (mut d1, mut d2) = (Complex64::new(0.0, 0.0), Complex64::new(0.0, 0.0));
            for i in 0..n {
                d1 += col[i] * self.u[i];
                d2 += col[i] * self.u2[i];
            }
            self.g[c] = d1;
            self.g[r + c] = d2;
        }
        // N = G Gᴴ (2 × 2 Hermitian).
        let (g1, g2) = (&self.g[..r], &self.g[r..2 * r]);
        let dot = |a: &[Complex64], b: &[Complex64]| a.iter().zip(b).map(|(x, y)| x * y.conj()).sum::<Complex64>();
        let (n00, n01, n10, n11) = (dot(g1, g1), dot(g1, g2), dot(g2, g1), dot(g2, g2));
        let w = pair_eigenvector(n00, n01, n10, n11)?;
        // c = Gᴴ w; x = S c.
        for k in 0..r {
            self.c[k] = g1[k].conj() * w[0] + g2[k].conj() * w[1];
        }
        let mut norm2 = 0.0;
        for i in 0..n {
            let mut z = Complex64::new(0.0, 0.0);
            for k in 0..r {
                z += s[(i, k)] * self.c[k];
            }
            self.v[i] = z.re;
            self.v2[i] = z.im;
            norm2 += z.norm_sqr();
        }
        let xn = norm2.sqrt();
        if !(xn > 0.0 && xn.is_finite()) {
            return None;
        }
        self.v /= xn;
        self.v2 /= xn;
        Some(())
    }
}

/// Residual allowance of the fast admissible basis, in units of `n ε (‖A‖_F + |λ|)`.
const SUBSPACE_RESIDUAL_FACTOR: f64 = 10.0;

/// The admissible subspace of `λ`, `null(U₁ᵀ (A − λ I))`, `n × r`, orthonormal columns: from
/// [`LARGE_PLANT_ORDER`] states on [`ShiftedPair::admissible_basis`] (`O(n² r)` after the
/// shared reduction), kept when its residual is at rounding level, else the QR route.
fn admissible_subspace(a: &DMatrix<f64>, u1: &DMatrix<f64>, lambda: Complex64, r: usize, fast: Option<&ShiftedPair>, ur: &DMatrix<f64>) -> DMatrix<Complex64> {
    let n = a.nrows();
    if u1.ncols() == 0 {
        return DMatrix::identity(n, n);
    }
    if let Some(s) = fast.and_then(|f| checked_fast_subspace(a, ur, lambda, f)) {
        return s;
    }
    admissible_subspace_by_qr(a, u1, lambda, r)
}

/// [`ShiftedPair::admissible_basis`] kept only when the part of `(A − λI) S` outside range B
/// is within [`SUBSPACE_RESIDUAL_FACTOR`]` · n ε (‖A‖_F + |λ|)`. Measured on the benchmark
/// plants of 64–300 states: at most 1.5 ε (median 0.007–1.1 ε); the allowance 10 n ε (640 ε
/// and more) is at least 400 times that.
pub(super) fn checked_fast_subspace(a: &DMatrix<f64>, ur: &DMatrix<f64>, lambda: Complex64, fast: &ShiftedPair) -> Option<DMatrix<Complex64>> {
    let s = fast.admissible_basis(lambda)?;
    let n = a.nrows();
    let mut v = real_times_complex(a, &s);
    v -= &s * lambda;
    let outside = &v - real_times_complex(ur, &real_times_complex(&ur.transpose(), &v));
    (outside.norm() <= SUBSPACE_RESIDUAL_FACTOR * n as f64 * f64::EPSILON * (a.norm() + lambda.norm())).then_some(s)
}

/// The admissible subspace from the trailing columns of a Householder QR of `(A − λI)ᴴ U₁`
/// (`O(n³)` per pole): the fallback of [`admissible_subspace`].
fn admissible_subspace_by_qr(a: &DMatrix<f64>, u1: &DMatrix<f64>, lambda: Complex64, r: usize) -> DMatrix<Complex64> {
    let n = a.nrows();
    if lambda.im == 0.0 {
        // (A − λI)ᵀ U₁, real arithmetic.
        let mut w = a.transpose() * u1;
        for i in 0..n {
            for j in 0..u1.ncols() {
                w[(i, j)] -= lambda.re * u1[(i, j)];
            }
        }
        to_complex(&trailing_q_columns(&w, r))
    } else {
        // (A − λI)ᴴ U₁ = (Aᵀ − λ̄ I) U₁.
        let at_u1 = to_complex(&(a.transpose() * u1));
        let mut w = at_u1;
        let lc = lambda.conj();
        for i in 0..n {
            for j in 0..u1.ncols() {
                w[(i, j)] -= lc * u1[(i, j)];
            }
        }
        trailing_q_columns(&w, r)
    }
}

/// The eigenvector `w` of the largest-modulus eigenvalue of `J N` (`N = G Gᴴ`, 2 × 2, given by
/// its entries) for the pair step of [`SweepWork::best_pair_vector`]; `None` when it vanishes.
///
/// The complement of the other `n − 2` columns is spanned by `y` and `ȳ` (rows of `X⁻¹`), so it
/// has a real orthonormal basis `Y`. With `g = Yᵀ x = G c` (`G = Yᵀ S`, `x = S c`),
/// `|det X| ∝ |det [Re g, Im g]| = |Im(ḡ₁ g₂)| = |cᴴ Gᴴ J G c|` with the Hermitian
/// `J = [[0, −i/2], [i/2, 0]]`: a Hermitian quadratic form, maximised in modulus by the
/// eigenvector of its largest-modulus eigenvalue, `c = Gᴴ w` with `J G Gᴴ w = μ w` (2 × 2).
fn pair_eigenvector(n00: Complex64, n01: Complex64, n10: Complex64, n11: Complex64) -> Option<[Complex64; 2]> {
    let half_i = Complex64::new(0.0, 0.5);
    // J N with J = [[0, −i/2], [i/2, 0]].
    let p = -half_i * n10;
    let q = -half_i * n11;
    let s_ = half_i * n00;
    let t = half_i * n01;
    let tr = p + t;
    let det = p * t - q * s_;
    let disc = (tr * tr - det * 4.0).sqrt();
    let mu1 = (tr + disc) * 0.5;
    let mu2 = (tr - disc) * 0.5;
    let mu = if mu1.norm() >= mu2.norm() { mu1 } else { mu2 };
    let w1 = [q, mu - p];
    let w2 = [mu - t, s_];
    let norm = |w: &[Complex64; 2]| (w[0].norm_sqr() + w[1].norm_sqr()).sqrt();
    let w = if norm(&w1) >= norm(&w2) { w1 } else { w2 };
    (norm(&w) > 0.0).then_some(w)
}

fn project(s: &DMatrix<Complex64>, y: &DVector<Complex64>) -> DVector<Complex64> {
    s * (s.adjoint() * y)
}

pub(super) fn abs_det(x: &DMatrix<Complex64>) -> f64 {
    x.clone().lu().determinant().norm()
}

fn normalise(v: DVector<Complex64>) -> Option<DVector<Complex64>> {
    let norm = v.norm();
    if norm > 1e-300 && norm.is_finite() {
        Some(v / Complex64::new(norm, 0.0))
    } else {
        None
    }
}

/// Initial guess: project spread-out orthonormal vectors (the columns of `[U_r U₁]`) onto each `S_j`.
fn initial_x(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], qb: &DMatrix<f64>) -> Option<DMatrix<Complex64>> {
    let n = ordered.len();
    let q = to_complex(qb);
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    let inv_sqrt2 = Complex64::new(std::f64::consts::FRAC_1_SQRT_2, 0.0);
    for (k, slot) in slots.iter().enumerate() {
        let s = &subspaces[k];
        match *slot {
            Slot::Real(j) => {
                let mut v = project(s, &q.column(j).into_owned());
                for z in v.iter_mut() {
                    z.im = 0.0;
                }
                let v = normalise(v)?;
                x.set_column(j, &v);
            }
            Slot::Pair(j) => {
                let target = (q.column(j) + q.column(j + 1) * Complex64::new(0.0, 1.0)) * inv_sqrt2;
                let v = normalise(project(s, &target.into_owned()))?;
                x.set_column(j, &v);
                x.set_column(j + 1, &v.map(|z| z.conj()));
            }
        }
    }
    Some(x)
}

/// Initial guess: the normalised sum of each subspace's basis vectors, with repeated poles
/// taking successive basis vectors instead so that their columns are independent.
fn initial_x_sum(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], n: usize) -> Option<DMatrix<Complex64>> {
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for (k, slot) in slots.iter().enumerate() {
        let s = &subspaces[k];
        let j = match *slot {
            Slot::Real(j) | Slot::Pair(j) => j,
        };
        let copy = ordered[..j].iter().filter(|z| **z == ordered[j]).count();
        let v = if copy == 0 {
            let mut sum = DVector::<Complex64>::zeros(n);
            for c in 0..s.ncols() {
                sum += s.column(c);
            }
            sum
        } else {
            s.column(copy % s.ncols()).into_owned()
        };
        let mut v = normalise(v)?;
        if let Slot::Real(_) = slot {
            for z in v.iter_mut() {
                z.im = 0.0;
            }
            v = normalise(v)?;
        }
        x.set_column(j, &v);
        if let Slot::Pair(_) = slot {
            x.set_column(j + 1, &v.map(|z| z.conj()));
        }
    }
    Some(x)
}

/// Initial guess: projections of seeded pseudo-random vectors (a third start for the sweeps).
fn initial_x_seeded(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], n: usize, seed: u64) -> Option<DMatrix<Complex64>> {
    let mut state = seed | 1;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for (k, slot) in slots.iter().enumerate() {
        let s = &subspaces[k];
        let c = DVector::from_fn(s.ncols(), |_, _| {
            Complex64::new(
                next(),
                match slot {
                    Slot::Real(_) => 0.0,
                    Slot::Pair(_) => next(),
                },
            )
        });
        let mut v = s * c;
        if let Slot::Real(_) = slot {
            for z in v.iter_mut() {
                z.im = 0.0;
            }
        }
        let v = normalise(v)?;
        match *slot {
            Slot::Real(j) => x.set_column(j, &v),
            Slot::Pair(j) => {
                x.set_column(j, &v);
                x.set_column(j + 1, &v.map(|z| z.conj()));
            }
        }
    }
    let _ = ordered;
    Some(x)
}

/// The starting `X` of a continuation: for each slot the previous eigenvector of the nearest
/// previous pole of the same kind (real, or the upper member of a pair), each used once,
/// projected onto the slot's admissible subspace. `None` when the kinds or sizes do not match
/// or a projection vanishes (a fresh start is then the only one).
fn continued_start(slots: &[Slot], subspaces: &[DMatrix<Complex64>], ordered: &[Complex64], start: &Eigenvectors) -> Option<DMatrix<Complex64>> {
    let n = ordered.len();
    if start.vectors.nrows() != n || start.vectors.ncols() != start.poles.len() {
        return None;
    }
    let mut used = vec![false; start.poles.len()];
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    for (k, slot) in slots.iter().enumerate() {
        let (j, real) = match *slot {
            Slot::Real(j) => (j, true),
            Slot::Pair(j) => (j, false),
        };
        let target = ordered[j];
        let candidate = (0..start.poles.len())
            .filter(|&i| !used[i] && (start.poles[i].im == 0.0) == real && (real || start.poles[i].im > 0.0))
            .min_by(|&p, &q| (start.poles[p] - target).norm().total_cmp(&(start.poles[q] - target).norm()))?;
        used[candidate] = true;
        let mut v = project(&subspaces[k], &start.vectors.column(candidate).into_owned());
        if real {
            for z in v.iter_mut() {
                z.im = 0.0;
            }
        }
        let v = normalise(v)?;
        x.set_column(j, &v);
        if !real {
            x.set_column(j + 1, &v.map(|z| z.conj()));
        }
    }
    Some(x)
}

/// The largest `1 − |x_jᴴ y_j|` over the columns of two unit-column matrices: how far the
/// sweeps moved each eigenvector from where the continuation started it.
fn column_drift(x: &DMatrix<Complex64>, y: &DMatrix<Complex64>) -> f64 {
    (0..x.ncols().min(y.ncols())).map(|j| 1.0 - x.column(j).dotc(&y.column(j)).norm().min(1.0)).fold(0.0, f64::max)
}
