//! The final, independent verdict on a design before it is reported as a success.
//!
//! 1. **Stability by a second route.** When every requested pole is strictly stable, the
//!    closed loop `A − B K` of the design pair (and the observer `A − L C`) must be stable.
//!    Placement reports its achieved poles from its own eigenvector construction; here the
//!    closed-loop matrix is formed from the returned gain and judged twice, independently of
//!    placement: by its eigenvalues (Francis QR on the balanced matrix) and by the Lyapunov
//!    equation `A_clᵀ P + P A_cl + I = 0` (continuous; the Stein equation
//!    `A_clᵀ P A_cl − P + I = 0` when digital), solved by the matrix sign function / squared
//!    Smith iteration, which exists with `P` positive definite exactly when `A_cl` is stable
//!    (Lyapunov's theorem; e.g. Khalil, *Nonlinear Systems*, 3rd ed., 2002, Thm 4.6; from
//!    memory). Either route finding an unstable loop refuses the design (CLI exit 1); a
//!    Lyapunov solver that fails for numerical reasons leaves the verdict to the eigenvalues.
//! 2. **Finite numbers.** NaN or infinity in a gain, a pole, a pole error or a simulated signal
//!    is an error, never a figure.
//!
//! Cost: one `O(n³)` eigenvalue computation and one Lyapunov solve (`O(n³)` per iteration,
//! capped) per loop checked.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::analysis::Domain;
use crate::result::{DesignResult, Pair};
use crate::DesignError;

/// Refuses a design whose loop the independent routes find unstable though only stable poles
/// were requested.
/// A requested pole counts as stable when it is so by more than `relative` of its own size
/// ([`Domain::mode_tolerance`]).
pub(super) fn stability(domain: Domain, closed: &DMatrix<f64>, requested: &[Complex64], relative: f64, what: &str) -> Result<(), DesignError> {
    if requested.is_empty() || !requested.iter().all(|z| domain.is_strictly_stable(*z, domain.mode_tolerance(relative, *z, 0.0))) {
        return Ok(());
    }
    let eigen = crate::linalg::eigen::try_eigenvalues(closed);
    let unstable: Vec<Complex64> = match &eigen {
        Ok(v) => v.iter().copied().filter(|z| !domain.is_strictly_stable(*z, 0.0)).collect(),
        Err(_) => Vec::new(),
    };
    let lyapunov_unstable = lyapunov_says_unstable(domain, closed);
    if unstable.is_empty() && !lyapunov_unstable {
        return Ok(());
    }
    let found = if unstable.is_empty() {
        "the Lyapunov equation of the closed loop has no positive definite solution".to_string()
    } else {
        format!("the closed-loop matrix has pole(s) at {}", crate::format::pole_list(&unstable))
    };
    Err(DesignError::Infeasible {
        message: format!(
            "the computed {what} does not give a stable loop although every requested pole is stable: {found}. The placement problem is numerically ill conditioned for these poles; spread clustered poles apart or move them closer to the open-loop poles"
        ),
    })
}

/// True when the Lyapunov (Stein) route finds the matrix unstable: the solver refuses it as
/// not stable, or its solution is not positive definite. Other solver failures say nothing.
fn lyapunov_says_unstable(domain: Domain, f: &DMatrix<f64>) -> bool {
    use crate::riccati::{solve_continuous_lyapunov, solve_discrete_lyapunov, RiccatiError, RiccatiParams};
    let n = f.nrows();
    let m = DMatrix::<f64>::identity(n, n);
    let solved = match domain {
        Domain::Continuous => solve_continuous_lyapunov(f, &m, RiccatiParams::default()),
        Domain::Discrete => solve_discrete_lyapunov(f, &m, RiccatiParams::default()),
    };
    match solved {
        Ok((p, _)) => {
            let sym = (&p + p.transpose()) * 0.5;
            !p.iter().all(|v| v.is_finite()) || sym.cholesky().is_none()
        }
        Err(RiccatiError::NotStable) => true,
        Err(_) => false,
    }
}

fn all_finite_rows(rows: &[Vec<f64>]) -> bool {
    rows.iter().flatten().all(|v| v.is_finite())
}

fn all_finite_pairs(pairs: &[Pair]) -> bool {
    pairs.iter().flatten().all(|v| v.is_finite())
}

/// Refuses a result holding a non-finite number where a figure is reported.
pub(super) fn finite(r: &DesignResult) -> Result<(), DesignError> {
    let f = &r.feedback;
    let mut bad: Vec<&str> = Vec::new();
    if !all_finite_rows(&f.gain) || f.delay_gain.as_ref().is_some_and(|g| !all_finite_rows(g)) {
        bad.push("the gain");
    }
    if !all_finite_pairs(&f.achieved_poles) || !all_finite_pairs(&f.requested_poles) || !f.max_pole_error.is_finite() {
        bad.push("the closed-loop poles");
    }
    if !all_finite_pairs(&r.open_loop_poles) {
        bad.push("the open-loop poles");
    }
    if let Some(o) = &r.observer {
        if !all_finite_rows(&o.gain) || o.current_gain.as_ref().is_some_and(|g| !all_finite_rows(g)) || !all_finite_pairs(&o.achieved_poles) {
            bad.push("the observer");
        }
    }
    match &r.tracking {
        Some(crate::result::TrackingResult::Feedforward { nx, nu, .. }) if !(all_finite_rows(nx) && all_finite_rows(nu)) => bad.push("the feedforward gains"),
        Some(crate::result::TrackingResult::Integral { integral_gain, .. }) if !all_finite_rows(integral_gain) => bad.push("the integral gain"),
        _ => {}
    }
    let sim = &r.simulation;
    let signals_finite = all_finite_rows(&sim.states) && all_finite_rows(&sim.inputs);
    if !sim.diverged && !signals_finite {
        bad.push("the simulated response");
    }
    if bad.is_empty() {
        Ok(())
    } else {
        Err(DesignError::Infeasible {
            message: format!("the computation gave a number that is not finite in {}: the problem is numerically beyond this tool as posed; check the plant's scaling", bad.join(", ")),
        })
    }
}
