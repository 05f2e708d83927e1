//! The two solvers (continuous: Newton–Kleinman started from the matrix sign function;
//! discrete: structure-preserving doubling), their small dense helpers, and the diagnosis of a
//! failure (see the module header for the equations and references).

#[allow(unused_imports)]
use super::*;

// ----------------------------------------------------------------------------
// small dense helpers
// ----------------------------------------------------------------------------

/// `ln |det M|` and `M⁻¹` from one LU factorisation; `None` if singular or not finite.
pub(crate) fn inverse_and_log_det(m: &DMatrix<f64>) -> Option<(DMatrix<f64>, f64)> {
    let lu = m.clone().lu();
    let u = lu.u();
    let mut log_det = 0.0;
    for i in 0..u.nrows() {
        let d = u[(i, i)].abs();
        if d == 0.0 || !d.is_finite() {
            return None;
        }
        log_det += d.ln();
    }
    let inv = lu.try_inverse()?;
    if inv.iter().all(|v| v.is_finite()) && log_det.is_finite() {
        Some((inv, log_det))
    } else {
        None
    }
}

/// Decision of one step of a scaled Newton-type iteration.
pub(crate) enum StepVerdict {
    Converged,
    Continue { scaling: bool },
}

/// Shared stopping rule: converged on `change ≤ tol`, or on stagnation (below the
/// stagnation level and no longer halving); scaling off below the cutoff.
pub(crate) fn stopping_rule(change: f64, previous: f64, scaling: bool, params: RiccatiParams) -> StepVerdict {
    if change <= params.convergence_tolerance {
        return StepVerdict::Converged;
    }
    if change <= params.stagnation_level && change > 0.5 * previous {
        return StepVerdict::Converged;
    }
    StepVerdict::Continue { scaling: scaling && change > params.scaling_cutoff }
}

/// Newton iteration for the sign function of a Hamiltonian `H`, carried out on the symmetric
/// `Y = J H` (Byers 1987). Returns `sign(H)` and the number of steps.
pub(crate) fn hamiltonian_sign(y0: DMatrix<f64>, params: RiccatiParams) -> Result<(DMatrix<f64>, usize), RiccatiError> {
    let size = y0.nrows();
    let n = size / 2;
    let mut y = y0;
    let mut scaling = true;
    let mut previous = f64::INFINITY;
    let stage = SolverStage::SignFunction;
    for k in 1..=params.max_sign_iterations {
        let (p, log_det) = inverse_and_log_det(&y).ok_or(RiccatiError::SingularMatrix { stage })?;
        // J P J for J = [[0, I], [−I, 0]] is [[−P₂₂, P₂₁], [P₁₂, −P₁₁]].
        let mut jpj = DMatrix::<f64>::zeros(size, size);
        jpj.view_mut((0, 0), (n, n)).copy_from(&(-p.view((n, n), (n, n))));
        jpj.view_mut((0, n), (n, n)).copy_from(&p.view((n, 0), (n, n)));
        jpj.view_mut((n, 0), (n, n)).copy_from(&p.view((0, n), (n, n)));
        jpj.view_mut((n, n), (n, n)).copy_from(&(-p.view((0, 0), (n, n))));
        let c = if scaling { (-log_det / size as f64).exp() } else { 1.0 };
        if !(c.is_finite() && c > 0.0) {
            return Err(RiccatiError::SingularMatrix { stage });
        }
        let next = symmetrize(&((&y * c + jpj * (1.0 / c)) * 0.5));
        if next.iter().any(|v| !v.is_finite()) {
            return Err(RiccatiError::SingularMatrix { stage });
        }
        let change = (&next - &y).norm() / y.norm();
        y = next;
        match stopping_rule(change, previous, scaling, params) {
            StepVerdict::Converged => {
                // sign(H) = J⁻¹ Y = −J Y = [[−Y₂₁, −Y₂₂], [Y₁₁, Y₁₂]].
                let mut w = DMatrix::<f64>::zeros(size, size);
                w.view_mut((0, 0), (n, n)).copy_from(&(-y.view((n, 0), (n, n))));
                w.view_mut((0, n), (n, n)).copy_from(&(-y.view((n, n), (n, n))));
                w.view_mut((n, 0), (n, n)).copy_from(&y.view((0, 0), (n, n)));
                w.view_mut((n, n), (n, n)).copy_from(&y.view((0, n), (n, n)));
                return Ok((w, k));
            }
            StepVerdict::Continue { scaling: s } => scaling = s,
        }
        previous = change;
    }
    Err(RiccatiError::NoConvergence { stage, iterations: params.max_sign_iterations })
}

/// `X` from `W = sign(H)`: least squares `[W₁₂; W₂₂ + I] X = −[W₁₁ + I; W₂₁]` by Householder QR.
pub(crate) fn stable_subspace_solution(w: &DMatrix<f64>, n: usize) -> Result<DMatrix<f64>, RiccatiError> {
    let stage = SolverStage::StableSubspace;
    let mut lhs = DMatrix::<f64>::zeros(2 * n, n);
    let mut rhs = DMatrix::<f64>::zeros(2 * n, n);
    lhs.view_mut((0, 0), (n, n)).copy_from(&w.view((0, n), (n, n)));
    lhs.view_mut((n, 0), (n, n)).copy_from(&(w.view((n, n), (n, n)) + DMatrix::<f64>::identity(n, n)));
    rhs.view_mut((0, 0), (n, n)).copy_from(&(-(w.view((0, 0), (n, n)) + DMatrix::<f64>::identity(n, n))));
    rhs.view_mut((n, 0), (n, n)).copy_from(&(-w.view((n, 0), (n, n))));
    let qr = lhs.qr();
    let r = qr.r();
    let diag_max = (0..n).map(|i| r[(i, i)].abs()).fold(0.0_f64, f64::max);
    let diag_min = (0..n).map(|i| r[(i, i)].abs()).fold(f64::INFINITY, f64::min);
    if !(diag_max > 0.0) || diag_min <= (n as f64) * f64::EPSILON * diag_max {
        return Err(RiccatiError::SingularMatrix { stage });
    }
    let qt_rhs = qr.q().transpose() * rhs;
    let x = r.solve_upper_triangular(&qt_rhs).ok_or(RiccatiError::SingularMatrix { stage })?;
    if x.iter().any(|v| !v.is_finite()) {
        return Err(RiccatiError::SingularMatrix { stage });
    }
    Ok(symmetrize(&x))
}

/// Lyapunov `Fᵀ X + X F + M = 0` by the structured sign iteration (see the module docs).
pub(crate) fn lyapunov_sign(f: &DMatrix<f64>, m: &DMatrix<f64>, params: RiccatiParams) -> Result<(DMatrix<f64>, usize), RiccatiError> {
    let n = f.nrows();
    let stage = SolverStage::Lyapunov;
    let mut e = f.transpose();
    let mut c_m = m.clone();
    let mut scaling = true;
    let mut previous = f64::INFINITY;
    for k in 1..=params.max_lyapunov_iterations {
        let (inv, log_det) = inverse_and_log_det(&e).ok_or(RiccatiError::SingularMatrix { stage })?;
        let c = if scaling { (-log_det / n as f64).exp() } else { 1.0 };
        if !(c.is_finite() && c > 0.0) {
            return Err(RiccatiError::SingularMatrix { stage });
        }
        let e_next = (&e * c + &inv * (1.0 / c)) * 0.5;
        let m_next = symmetrize(&((&c_m * c + &inv * &c_m * inv.transpose() * (1.0 / c)) * 0.5));
        if e_next.iter().chain(m_next.iter()).any(|v| !v.is_finite()) {
            return Err(RiccatiError::SingularMatrix { stage });
        }
        let change = (&e_next - &e).norm() / e.norm();
        e = e_next;
        c_m = m_next;
        match stopping_rule(change, previous, scaling, params) {
            StepVerdict::Converged => {
                // sign(Fᵀ) must be −I: every eigenvalue of F in the open left half-plane.
                let distance = (&e + DMatrix::<f64>::identity(n, n)).norm() / (n as f64).sqrt();
                if !(distance <= 1e-6) {
                    return Err(RiccatiError::NotStable);
                }
                return Ok((c_m * 0.5, k));
            }
            StepVerdict::Continue { scaling: s } => scaling = s,
        }
        previous = change;
    }
    Err(RiccatiError::NoConvergence { stage, iterations: params.max_lyapunov_iterations })
}

/// Stein `Fᵀ X F − X + M = 0` by the squared Smith iteration.
pub(crate) fn stein_smith(f: &DMatrix<f64>, m: &DMatrix<f64>, params: RiccatiParams) -> Result<(DMatrix<f64>, usize), RiccatiError> {
    let mut x = m.clone();
    let mut p = f.clone();
    for k in 1..=params.max_lyapunov_iterations {
        let increment = p.transpose() * &x * &p;
        x = symmetrize(&(&x + &increment));
        p = &p * &p;
        let pn = p.norm();
        if !pn.is_finite() || pn > 1e150 || x.iter().any(|v| !v.is_finite()) {
            return Err(RiccatiError::NotStable);
        }
        // The remaining tail Σ_{j ≥ 2^k} is bounded by about ‖P‖² ‖X‖ (ρ(F) < 1).
        if pn * pn <= params.convergence_tolerance * 1e-3 {
            return Ok((x, k));
        }
    }
    Err(RiccatiError::NotStable)
}

// ----------------------------------------------------------------------------
// the two solvers
// ----------------------------------------------------------------------------

pub(crate) type Core = (RiccatiSolution, DMatrix<f64>, Vec<Complex64>);

pub(crate) fn continuous_core(data: &Problem, params: RiccatiParams) -> Result<Core, RiccatiError> {
    let n = data.n();
    let s = data.solution_scale();
    let g_scaled = &data.g * s;
    let q_scaled = &data.q * (1.0 / s);
    // Y₀ = J H = [[−Q̃, −Aᵀ], [−A, G̃]].
    let mut y0 = DMatrix::<f64>::zeros(2 * n, 2 * n);
    y0.view_mut((0, 0), (n, n)).copy_from(&(-&q_scaled));
    y0.view_mut((0, n), (n, n)).copy_from(&(-data.a.transpose()));
    y0.view_mut((n, 0), (n, n)).copy_from(&(-&data.a));
    y0.view_mut((n, n), (n, n)).copy_from(&g_scaled);
    let initial = hamiltonian_sign(y0, params).and_then(|(w, k)| stable_subspace_solution(&w, n).map(|x| (x * s, k)));
    let (x0, sign_steps) = match initial {
        Ok(v) => v,
        Err(e) => return Err(diagnose(data, Domain::Continuous, params).unwrap_or(e)),
    };
    let mut iterations = IterationCounts { initial: sign_steps, ..IterationCounts::default() };
    let (_, initial_residual) = continuous_residual(data, &x0);
    let mut best_x = x0;
    let mut best_residual = initial_residual;
    for _ in 0..params.max_refinement_steps {
        let (res, _) = continuous_residual(data, &best_x);
        let f = &data.a - &data.g * &best_x;
        iterations.refinement += 1;
        let (delta, steps) = match lyapunov_sign(&f, &res, params) {
            Ok(v) => v,
            Err(_) => break,
        };
        iterations.lyapunov += steps;
        let candidate = symmetrize(&(&best_x + delta));
        let (_, residual) = continuous_residual(data, &candidate);
        if residual < best_residual {
            best_x = candidate;
            best_residual = residual;
        } else {
            break;
        }
    }
    // K = R⁻¹ Bᵀ X = L⁻ᵀ B̂ᵀ X.
    let b_hat_t_x = data.b_hat.transpose() * &best_x;
    let gain = data.r_chol.l().tr_solve_lower_triangular(&b_hat_t_x).ok_or(RiccatiError::SingularMatrix { stage: SolverStage::Gain })?;
    let closed = &data.a - &data.b * &gain;
    let poles = try_eigenvalues(&closed)?;
    if let Some(worst) = poles.iter().copied().max_by(|x, y| x.re.total_cmp(&y.re)) {
        if !(worst.re < 0.0) || best_x.iter().any(|v| !v.is_finite()) {
            return Err(diagnose(data, Domain::Continuous, params).unwrap_or(RiccatiError::NotStabilizing { pole: worst }));
        }
    }
    if !(best_residual <= params.max_residual) {
        return Err(RiccatiError::InaccurateSolution { residual: best_residual, limit: params.max_residual });
    }
    Ok((RiccatiSolution { solution: best_x, residual: best_residual, initial_residual, iterations }, gain, poles))
}

/// The SDA on the (scaled) data `A`, `G`, `H₀`; returns `lim H_k` and the number of steps.
/// Convergence also requires `‖A_k‖_F ≤ 1e-4 ‖A‖_F`: `A_k → 0` exactly when the limit is the
/// stabilising solution (with `H₀ = 0` and an unstable `A`, `H_k` stays 0 while `A_k` grows).
pub(crate) fn doubling(a: &DMatrix<f64>, g: &DMatrix<f64>, h: &DMatrix<f64>, params: RiccatiParams) -> Result<(DMatrix<f64>, usize), RiccatiError> {
    let n = a.nrows();
    let stage = SolverStage::Doubling;
    let identity = DMatrix::<f64>::identity(n, n);
    let a_norm = a.norm();
    let mut a_k = a.clone();
    let mut g_k = g.clone();
    let mut h_k = h.clone();
    let mut previous = f64::INFINITY;
    for k in 1..=params.max_doubling_iterations {
        let lu = (&identity + &g_k * &h_k).lu();
        let (Some(w_a), Some(w_g)) = (lu.solve(&a_k), lu.solve(&g_k)) else {
            return Err(RiccatiError::SingularMatrix { stage });
        };
        let a_next = &a_k * &w_a;
        let g_next = symmetrize(&(&g_k + &a_k * w_g * a_k.transpose()));
        let h_next = symmetrize(&(&h_k + a_k.transpose() * &h_k * &w_a));
        if a_next.iter().chain(g_next.iter()).chain(h_next.iter()).any(|v| !v.is_finite()) {
            return Err(RiccatiError::SingularMatrix { stage });
        }
        let hn = h_next.norm();
        let change = if hn > 0.0 { (&h_next - &h_k).norm() / hn } else { 0.0 };
        a_k = a_next;
        g_k = g_next;
        h_k = h_next;
        // No determinant scaling in the SDA: `scaling = false`.
        if let StepVerdict::Converged = stopping_rule(change, previous, false, params) {
            if a_k.norm() <= 1e-4 * a_norm {
                return Ok((h_k, k));
            }
        }
        previous = change;
    }
    Err(RiccatiError::NoConvergence { stage, iterations: params.max_doubling_iterations })
}

pub(crate) fn discrete_core(data: &Problem, params: RiccatiParams) -> Result<Core, RiccatiError> {
    let n = data.n();
    let s = data.solution_scale();
    let g_scaled = &data.g * s;
    let q_scaled = &data.q * (1.0 / s);
    let (h_limit, doubling_steps) = match doubling(&data.a, &g_scaled, &q_scaled, params) {
        Ok(v) => v,
        Err(first) => {
            if let Some(cause) = diagnose(data, Domain::Discrete, params) {
                return Err(cause);
            }
            let scale = q_scaled.norm().max(g_scaled.norm());
            if !(scale > 0.0) {
                return Err(first);
            }
            let shifted = &q_scaled + DMatrix::<f64>::identity(n, n) * (params.doubling_shift * scale);
            match doubling(&data.a, &g_scaled, &shifted, params) {
                Ok((h, k)) => (h, k),
                Err(_) => return Err(first),
            }
        }
    };
    let h_k = h_limit;
    let x0 = h_k * s;
    let mut iterations = IterationCounts { initial: doubling_steps, ..IterationCounts::default() };
    let initial = match discrete_residual(data, &x0) {
        Ok(r) => r,
        Err(e) => return Err(diagnose(data, Domain::Discrete, params).unwrap_or(e)),
    };
    let initial_residual = initial.normalised;
    let mut best_x = x0;
    let mut best = initial;
    for _ in 0..params.max_refinement_steps {
        let f = &data.a - &data.b * &best.gain;
        iterations.refinement += 1;
        let (delta, steps) = match stein_smith(&f, &best.matrix, params) {
            Ok(v) => v,
            Err(_) => break,
        };
        iterations.lyapunov += steps;
        let candidate = symmetrize(&(&best_x + delta));
        let Ok(evaluated) = discrete_residual(data, &candidate) else {
            break;
        };
        if evaluated.normalised < best.normalised {
            best_x = candidate;
            best = evaluated;
        } else {
            break;
        }
    }
    let gain = best.gain;
    let closed = &data.a - &data.b * &gain;
    let poles = try_eigenvalues(&closed)?;
    if let Some(worst) = poles.iter().copied().max_by(|x, y| x.norm().total_cmp(&y.norm())) {
        if !(worst.norm() < 1.0) || best_x.iter().any(|v| !v.is_finite()) {
            return Err(diagnose(data, Domain::Discrete, params).unwrap_or(RiccatiError::NotStabilizing { pole: worst }));
        }
    }
    if !(best.normalised <= params.max_residual) {
        return Err(RiccatiError::InaccurateSolution { residual: best.normalised, limit: params.max_residual });
    }
    Ok((RiccatiSolution { solution: best_x, residual: best.normalised, initial_residual, iterations }, gain, poles))
}

// ----------------------------------------------------------------------------
// diagnosis of failures
// ----------------------------------------------------------------------------

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Domain {
    Continuous,
    Discrete,
}

/// `σ_min([A − λI, B]) / ‖[A B]‖₂` (`stacked_below = false`, `other = B`), or
/// `σ_min([A − λI; C]) / ‖[A; C]‖₂` (`stacked_below = true`, `other = C`).
pub(crate) fn pbh_margin(a: &DMatrix<f64>, other: &DMatrix<f64>, lambda: Complex64, stacked_below: bool, scale: f64) -> Result<f64, RiccatiError> {
    let n = a.nrows();
    let k = if stacked_below { other.nrows() } else { other.ncols() };
    let shifted = DMatrix::<Complex64>::from_fn(n, n, |i, j| Complex64::new(a[(i, j)], 0.0) - if i == j { lambda } else { Complex64::new(0.0, 0.0) });
    let w = if stacked_below {
        let mut w = DMatrix::<Complex64>::zeros(n + k, n);
        w.view_mut((0, 0), (n, n)).copy_from(&shifted);
        w.view_mut((n, 0), (k, n)).copy_from(&other.map(|v| Complex64::new(v, 0.0)));
        w
    } else {
        let mut w = DMatrix::<Complex64>::zeros(n, n + k);
        w.view_mut((0, 0), (n, n)).copy_from(&shifted);
        w.view_mut((0, n), (n, k)).copy_from(&other.map(|v| Complex64::new(v, 0.0)));
        w
    };
    let sv = try_singular_values(&w, SvdParams::default())?;
    let smin = sv.iter().copied().fold(f64::INFINITY, f64::min);
    Ok(if scale > 0.0 { smin / scale } else { smin })
}

/// Explains a failure: an unstable (or boundary) uncontrollable mode, or a boundary mode
/// invisible in `Q`. `None` when neither is found (or the diagnosis itself fails).
pub(crate) fn diagnose(data: &Problem, domain: Domain, params: RiccatiParams) -> Option<RiccatiError> {
    let a = &data.a;
    let n = a.nrows();
    let tol = params.diagnosis_tolerance;
    let eigs = try_eigenvalues(a).ok()?;
    let a_norm = try_norm2(a, SvdParams::default()).ok()?;
    let radius = a_norm.max(1.0);
    let mut ab = DMatrix::<f64>::zeros(n, n + data.b.ncols());
    ab.view_mut((0, 0), (n, n)).copy_from(a);
    ab.view_mut((0, n), (n, data.b.ncols())).copy_from(&data.b);
    let ab_norm = try_norm2(&ab, SvdParams::default()).ok()?;
    let mut aq = DMatrix::<f64>::zeros(2 * n, n);
    aq.view_mut((0, 0), (n, n)).copy_from(a);
    aq.view_mut((n, 0), (n, n)).copy_from(&data.q);
    let aq_norm = try_norm2(&aq, SvdParams::default()).ok()?;
    let mut worst_control: Option<(f64, Complex64)> = None;
    let mut worst_observe: Option<(f64, Complex64)> = None;
    for &lambda in &eigs {
        let (not_stable, on_boundary) = match domain {
            Domain::Continuous => (lambda.re >= -tol * radius, lambda.re.abs() <= tol * radius),
            Domain::Discrete => (lambda.norm() >= 1.0 - tol, (lambda.norm() - 1.0).abs() <= tol),
        };
        if not_stable {
            let margin = pbh_margin(a, &data.b, lambda, false, ab_norm).ok()?;
            if worst_control.is_none_or(|(m, _)| margin < m) {
                worst_control = Some((margin, lambda));
            }
        }
        if on_boundary {
            let margin = pbh_margin(a, &data.q, lambda, true, aq_norm).ok()?;
            if worst_observe.is_none_or(|(m, _)| margin < m) {
                worst_observe = Some((margin, lambda));
            }
        }
    }
    if let Some((margin, mode)) = worst_control {
        if margin <= tol {
            return Some(RiccatiError::NotStabilizable { mode, margin });
        }
    }
    if let Some((margin, mode)) = worst_observe {
        if margin <= tol {
            return Some(RiccatiError::NotDetectable { mode, margin });
        }
    }
    None
}
