//! Controllability and observability analysis checked against the numpy reference of
//! `tests/fixtures/controllability.json` (written by `tests/oracle/make_fixtures.py`): PBH
//! margins `σ_min([A − λI, B]) / ‖[A B]‖₂` at each `numpy.linalg.eigvals` eigenvalue, the
//! controllable dimension from an orthonormal block-Krylov recursion (cross-checked by the
//! generator against `numpy.linalg.matrix_rank` of the Krylov matrix), the eigenvalues of `A`
//! restricted to the complement of the controllable subspace, and stabilisability; the same by
//! duality for `(A, C)` (observability, detectability).
//!
//! The plants with hidden modes are exactly uncontrollable by construction
//! (block-triangular under an orthogonal similarity, or twin subsystems driven by one input),
//! and the generator asserts that the ranks it computed equal the constructed ones.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]
// tests may fail loudly

// `!(error <= tolerance)` is deliberate throughout: a NaN must count as a failure.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

mod common;

use common::{complex_list, f64_of, fixture, matrix};
use nalgebra::DMatrix;
use num_complex::Complex64;
use polewright::analysis::{controllability_report, observability_report, AnalysisParams, ModalReport, ModeVerdict};
use serde_json::Value;

/// Greedy one-to-one matching, closest pairs first: `partner[i]` indexes `computed`.
fn greedy_match(reference: &[Complex64], computed: &[Complex64]) -> Vec<usize> {
    let mut pairs = Vec::with_capacity(reference.len() * computed.len());
    for (i, r) in reference.iter().enumerate() {
        for (j, c) in computed.iter().enumerate() {
            pairs.push(((r - c).norm(), i, j));
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut partner = vec![usize::MAX; reference.len()];
    let mut used = vec![false; computed.len()];
    for (_, i, j) in pairs {
        if partner[i] == usize::MAX && !used[j] {
            partner[i] = j;
            used[j] = true;
        }
    }
    partner
}

/// Singular values of a complex matrix by one-sided (Hestenes) Jacobi rotations, descending.
/// Written out here so that the checks depend on nothing under test and not on nalgebra 0.35's
/// SVD, which can return wrong factors (and wrong values when vectors are requested) for
/// (nearly) rank-deficient input (dimforge/nalgebra issue #1172). Jacobi is accurate for such
/// matrices (Demmel & Veselić, "Jacobi's method is more accurate than QR", SIAM J. Matrix
/// Anal. Appl. 13(4), 1992).
fn singular_values(m: &DMatrix<Complex64>) -> Vec<f64> {
    let mut a = if m.nrows() >= m.ncols() { m.clone() } else { m.adjoint() };
    let (rows, k) = a.shape();
    // A column below 1e-30·‖M‖_F is a zero singular value for every purpose here; rotating it
    // further only churns subnormal numbers (and never meets the relative stopping test).
    let floor = (1e-30 * a.norm()).powi(2);
    let mut converged = false;
    for _sweep in 0..100 {
        let mut rotated = false;
        for p in 0..k {
            for q in (p + 1)..k {
                let alpha = a.column(p).norm_squared();
                let beta = a.column(q).norm_squared();
                let gamma = a.column(p).dotc(&a.column(q));
                let g = gamma.norm();
                if g == 0.0 || alpha.min(beta) <= floor || g <= f64::EPSILON * (alpha * beta).sqrt() {
                    continue;
                }
                rotated = true;
                let phase = gamma / g;
                let zeta = (beta - alpha) / (2.0 * g);
                let t = zeta.signum() / (zeta.abs() + (1.0 + zeta * zeta).sqrt());
                let c = 1.0 / (1.0 + t * t).sqrt();
                let s = c * t;
                for i in 0..rows {
                    let ap = a[(i, p)];
                    let aq = a[(i, q)] * phase.conj();
                    a[(i, p)] = ap * c - aq * s;
                    a[(i, q)] = ap * s + aq * c;
                }
            }
        }
        if !rotated {
            converged = true;
            break;
        }
    }
    assert!(converged, "Jacobi SVD did not converge in 100 sweeps");
    let mut s: Vec<f64> = (0..k).map(|j| a.column(j).norm()).collect();
    s.sort_by(|x, y| y.total_cmp(x));
    s
}

fn norm2(m: &DMatrix<f64>) -> f64 {
    singular_values(&m.map(|v| Complex64::new(v, 0.0))).first().copied().unwrap_or(0.0)
}

/// Checks one report against one side (controllability or observability) of a fixture case.
#[allow(clippy::too_many_arguments)]
fn check_report(name: &str, side: &str, a: &DMatrix<f64>, report: &ModalReport, modes: &Value, rank: &Value, hidden: &Value, stable: &Value, failures: &mut Vec<String>) {
    let n = a.nrows();
    let params = AnalysisParams::default();
    let fail = |failures: &mut Vec<String>, msg: String| failures.push(format!("{name} [{side}]: {msg}"));

    // Dimension of the controllable (observable) subspace: fixture's block-Krylov rank.
    let want_rank = rank.as_u64().expect("rank") as usize;
    if report.rank != want_rank {
        fail(failures, format!("rank {} ≠ numpy {want_rank}", report.rank));
    }
    if report.states != n {
        fail(failures, format!("states {} ≠ n = {n}", report.states));
    }
    // Stabilisable (detectable): fixture's rule, all hidden eigenvalues with Re < −1e-9 max(1, ‖A‖₂).
    let want_stable = stable.as_bool().expect("bool");
    if report.stable_hidden_modes != want_stable {
        fail(failures, format!("stable_hidden_modes {} ≠ numpy {want_stable}", report.stable_hidden_modes));
    }
    if !report.consistent {
        fail(failures, "the staircase and the PBH margins disagree (consistent = false)".into());
    }
    // The documented absolute rank tolerance is relative_tolerance · ‖[A B]‖₂; sanity of the field.
    if !(report.tolerance > 0.0 && report.tolerance.is_finite()) {
        fail(failures, format!("tolerance {}", report.tolerance));
    }

    // Modes: one per eigenvalue, matched to numpy's (sorted differently: they use (re, im) ↑).
    let fixture_modes = modes.as_array().expect("modes");
    let fixture_poles: Vec<Complex64> = fixture_modes
        .iter()
        .map(|m| {
            let p = m["pole"].as_array().expect("pole");
            Complex64::new(f64_of(&p[0]), f64_of(&p[1]))
        })
        .collect();
    let fixture_margins: Vec<f64> = fixture_modes.iter().map(|m| f64_of(&m["margin"])).collect();
    if report.modes.len() != n || fixture_poles.len() != n {
        fail(failures, format!("{} modes reported, {} in the fixture, n = {n}", report.modes.len(), fixture_poles.len()));
        return;
    }
    let anorm = norm2(a);
    let ours_poles: Vec<Complex64> = report.modes.iter().map(|m| m.pole).collect();
    let partner = greedy_match(&fixture_poles, &ours_poles);
    for (i, &j) in partner.iter().enumerate() {
        let ours = &report.modes[j];
        // Poles: eigenvalues of a random A are well conditioned; the repeated ones of the twin
        // plants are semisimple (blkdiag(A1, A1)), so normwise accuracy holds too. 1e-8·‖A‖ is
        // a loose bound for both solvers' ~1e-15 errors; it only guards the matching.
        let dp = (ours.pole - fixture_poles[i]).norm();
        if !(dp <= 1e-8 * anorm.max(1.0)) {
            fail(failures, format!("mode {} matched to numpy {} ({dp:.2e} apart)", ours.pole, fixture_poles[i]));
            continue;
        }
        let want = fixture_margins[i];
        if want >= 1e-8 {
            // Margin as a smooth function of λ: |Δσ_min| ≤ |Δλ| ~ 1e-15, so for margins ≥ 1e-8
            // a relative 1e-6 leaves a factor 10 over the worst pole error.
            // numpy's margin is of the data as given: our unscaled margin. (The verdict's margin
            // is taken in balanced units; a rank deficiency is the same in both, checked below.)
            let rel = (ours.unscaled_margin - want).abs() / want;
            if !(rel <= 1e-6) {
                fail(failures, format!("margin of {} is {:.10e}, numpy {want:.10e} (relative {rel:.1e})", ours.pole, ours.unscaled_margin));
            }
            if !(ours.margin > 0.0) {
                fail(failures, format!("mode {} is reachable (numpy margin {want:.2e}) but its balanced margin is {:.2e}", ours.pole, ours.margin));
            }
            // A mode the reference calls reachable must not be called hidden.
            if ours.verdict == ModeVerdict::No {
                fail(failures, format!("mode {} has margin {want:.2e} but verdict No", ours.pole));
            }
        } else {
            // Reference margin at rounding level (an exactly hidden mode): ours must also be
            // below the analysis' rank tolerance (1e-10 relative), as the fixture's is.
            if !(ours.unscaled_margin <= params.relative_tolerance && ours.margin <= params.relative_tolerance && want <= params.relative_tolerance) {
                fail(
                    failures,
                    format!("margin of {}: ours {:.2e} (balanced {:.2e}), numpy {want:.2e}, all should be ≤ {:.0e}", ours.pole, ours.unscaled_margin, ours.margin, params.relative_tolerance),
                );
            }
            // The verdict must not claim the mode is comfortably reachable.
            if ours.verdict == ModeVerdict::Yes {
                fail(failures, format!("mode {} has margin ≈ 0 but verdict Yes", ours.pole));
            }
        }
    }

    // Hidden modes: eigenvalues of the uncontrollable (unobservable) part.
    let want_hidden = complex_list(hidden);
    if report.hidden_modes.len() != want_hidden.len() {
        fail(failures, format!("{} hidden modes {:?}, numpy {:?}", report.hidden_modes.len(), report.hidden_modes, want_hidden));
    } else {
        let partner = greedy_match(&want_hidden, &report.hidden_modes);
        for (i, &j) in partner.iter().enumerate() {
            // Eigenvalues of an (n − r)×(n − r) block obtained by orthogonal transformations:
            // backward error ~ n·ε·‖A‖ on each side; the blocks are small with well separated
            // eigenvalues, so 1e-9·max(1, ‖A‖₂) (≈ 1e6 ε‖A‖) is a generous but still
            // discriminating bound (hidden modes are O(0.1) or more apart from one another).
            let d = (report.hidden_modes[j] - want_hidden[i]).norm();
            if !(d <= 1e-9 * anorm.max(1.0)) {
                fail(failures, format!("hidden mode {} vs numpy {} ({d:.2e} apart)", report.hidden_modes[j], want_hidden[i]));
            }
        }
    }
    let no_count = report.modes.iter().filter(|m| m.verdict == ModeVerdict::No).count();
    if no_count != n - want_rank {
        fail(failures, format!("{no_count} modes with verdict No, expected n − rank = {}", n - want_rank));
    }
}

#[test]
fn controllability_and_observability_match_numpy() {
    let f = fixture("controllability.json");
    assert_eq!(f64_of(&f["rank_tolerance"]), 1e-9, "the fixture's rank tolerance changed; revisit the margin thresholds");
    let cases = f["cases"].as_array().expect("cases");
    assert!(cases.len() >= 15, "too few controllability fixtures: {}", cases.len());
    let mut failures = Vec::new();
    let mut observability_checked = 0;
    for case in cases {
        let name = case["name"].as_str().expect("name");
        let a = matrix(&case["a"]);
        let b = matrix(&case["b"]);
        match controllability_report(&a, &b, AnalysisParams::default()) {
            Ok(r) => check_report(name, "controllability", &a, &r, &case["modes"], &case["rank_controllable"], &case["uncontrollable_eigenvalues"], &case["stabilizable"], &mut failures),
            Err(e) => failures.push(format!("{name}: controllability_report failed: {e}")),
        }
        if let Some(c) = case.get("c") {
            let c = matrix(c);
            observability_checked += 1;
            match observability_report(&a, &c, AnalysisParams::default()) {
                Ok(r) => check_report(name, "observability", &a, &r, &case["observability_modes"], &case["rank_observable"], &case["unobservable_eigenvalues"], &case["detectable"], &mut failures),
                Err(e) => failures.push(format!("{name}: observability_report failed: {e}")),
            }
        }
    }
    assert!(observability_checked >= 5, "only {observability_checked} cases with C");
    assert!(failures.is_empty(), "{} controllability/observability failures:\n{}", failures.len(), failures.join("\n"));
}
