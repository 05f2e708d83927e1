//! Eigenvalues checked against `numpy.linalg.eigvals` (numpy 2.4.6, LAPACK `dgeev`) and, where
//! the fixture gives them, against closed-form eigenvalues, on every case of
//! `tests/fixtures/eigenvalues.json` (written by `tests/oracle/make_fixtures.py`).
//!
//! Tolerance model (first-order perturbation theory): a backward-stable eigenvalue solver
//! returns the exact eigenvalues of `A + E` with `‖E‖ ≲ c·n·ε·‖A‖`, and a simple eigenvalue
//! moves by at most `κ(λ)·‖E‖` where `κ(λ) = 1/|yᴴx|` (unit left/right eigenvectors;
//! Wilkinson, *The Algebraic Eigenvalue Problem*, 1965, §2.8; Golub & Van Loan, *Matrix
//! Computations*, 4th ed., §7.2.2). `κ(λ)` is estimated here, independently of the code under
//! test, from left and right eigenvectors found by inverse iteration on `A − λI` (nalgebra's
//! LU) at the reference eigenvalue. For a normal matrix `κ = 1` for every eigenvalue, repeated
//! or not (Bauer–Fike with a unitary eigenvector matrix).
//!
//! Companion matrices are compared with their known roots through the conditioning of the
//! polynomial root problem instead (the matrix-based `κ(λ)·‖A‖` overestimates by orders of
//! magnitude after balancing; Toh & Trefethen, "Pseudozeros of polynomials and pseudospectra
//! of companion matrices", Numer. Math. 68, 1994; Edelman & Murakami, "Polynomial roots from
//! companion matrix eigenvalues", Math. Comp. 64, 1995).
//!
//! The companion matrices and the zero matrix are regression cases: nalgebra 0.35's own
//! unbounded QR iteration (`complex_eigenvalues`, `Schur::new`) hung on them, so every case is
//! run on a worker thread with a time limit and must return `Ok`.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]
// tests may fail loudly

// `!(error <= tolerance)` is deliberate throughout: a NaN must count as a failure.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

mod common;

use std::sync::mpsc;
use std::time::Duration;

use common::{complex_list, fixture, matrix};
use nalgebra::DMatrix;
use num_complex::Complex64;
use polewright::linalg::eigen::{try_eigenvalues, try_eigenvalues_with, EigenError, EigenParams};

const EPS: f64 = f64::EPSILON;
/// Multiple of `n·ε·‖A‖_F` allowed as backward error of either solver. Householder Hessenberg
/// reduction plus Francis QR have a backward error of a small multiple of `ε‖A‖` per sweep
/// (Golub & Van Loan §7.5.6); 10·n covers both solvers with room, while still being ~1e5
/// times tighter than an O(1e-10) "anything close" check for well-conditioned cases.
const BACKWARD: f64 = 10.0;

/// Greedy one-to-one matching, closest pairs first. Returns, for each `reference[i]`, the index
/// of its partner in `computed`. Panics if the lengths differ.
fn greedy_match(reference: &[Complex64], computed: &[Complex64]) -> Vec<usize> {
    assert_eq!(reference.len(), computed.len(), "eigenvalue counts differ");
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

/// Runs `try_eigenvalues` on a worker thread; a hang (the nalgebra regression) becomes a failure.
fn eigenvalues_with_time_limit(name: &str, a: &DMatrix<f64>) -> Result<Vec<Complex64>, EigenError> {
    let (tx, rx) = mpsc::channel();
    let a = a.clone();
    std::thread::spawn(move || {
        let _ = tx.send(try_eigenvalues(&a));
    });
    // Even n = 55 takes milliseconds; 20 s means the iteration is not terminating.
    rx.recv_timeout(Duration::from_secs(20)).unwrap_or_else(|_| panic!("{name}: try_eigenvalues did not return within 20 s (hang)"))
}

/// Singular values of a complex matrix by one-sided (Hestenes) Jacobi rotations, descending.
/// Written out here so that the tolerance model depends on nothing under test: nalgebra 0.35's
/// SVD can return wrong factors, and wrong values when vectors are requested, for (nearly)
/// rank-deficient input (dimforge/nalgebra issue #1172) — exactly the `A − λI` used here.
/// Jacobi is accurate for such matrices (Demmel & Veselić, "Jacobi's method is more accurate
/// than QR", SIAM J. Matrix Anal. Appl. 13(4), 1992).
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
                if g == 0.0 || alpha.min(beta) <= floor || g <= EPS * (alpha * beta).sqrt() {
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

/// Estimated condition number `1/|yᴴx|` of the eigenvalue nearest `lambda` (unit right and
/// left eigenvectors from three steps of inverse iteration with nalgebra's LU), and the ratio
/// `σ_{n−1}(A − λI)/‖A‖_F` (small when `lambda` is not a simple, isolated eigenvalue, in which
/// case the estimate means nothing).
fn eigenvalue_condition(a: &DMatrix<f64>, lambda: Complex64) -> (f64, f64) {
    let n = a.nrows();
    if n == 1 {
        return (1.0, f64::INFINITY);
    }
    let anorm = a.norm().max(f64::MIN_POSITIVE);
    let mut m = a.map(|v| Complex64::new(v, 0.0));
    for i in 0..n {
        m[(i, i)] -= lambda;
    }
    let sv = singular_values(&m);
    let gap = sv[n - 2] / anorm;
    // An exactly singular LU (λ exact to the last bit, e.g. a diagonal entry of a triangular
    // matrix) has no solve: nudge λ by a few ε‖A‖, far below the accuracy being tested.
    let mut shift = 0.0;
    let (lu, lu_h) = loop {
        let mut shifted = m.clone();
        for i in 0..n {
            shifted[(i, i)] -= Complex64::new(shift, shift);
        }
        let (lu, lu_h) = (shifted.clone().lu(), shifted.adjoint().lu());
        if lu.is_invertible() && lu_h.is_invertible() {
            break (lu, lu_h);
        }
        assert!(shift < 1e3 * EPS * anorm, "cannot shift A − λI off singularity");
        shift = if shift == 0.0 { EPS * anorm } else { 4.0 * shift };
    };
    let start = nalgebra::DVector::from_fn(n, |i, _| Complex64::new(1.0 + 0.1 * i as f64, 0.3 - 0.05 * i as f64));
    let iterate = |solve: &dyn Fn(&nalgebra::DVector<Complex64>) -> Option<nalgebra::DVector<Complex64>>| {
        let mut v = start.clone() / Complex64::new(start.norm(), 0.0);
        for _ in 0..3 {
            let w = solve(&v).expect("inverse iteration solve");
            v = w.clone() / Complex64::new(w.norm(), 0.0);
        }
        v
    };
    let x = iterate(&|v| lu.solve(v));
    let y = iterate(&|v| lu_h.solve(v));
    let s = y.dotc(&x).norm();
    (1.0 / s.max(f64::MIN_POSITIVE), gap)
}

fn is_normal(a: &DMatrix<f64>) -> bool {
    let n = a.nrows() as f64;
    let an = a.norm();
    (a.transpose() * a - a * a.transpose()).norm() <= 100.0 * n * EPS * an * an
}

/// Taylor coefficient `p⁽ᵏ⁾(r)/k!` of the monic polynomial `coeffs` (highest power first).
fn taylor_coefficient(coeffs: &[f64], r: Complex64, k: usize) -> Complex64 {
    // Repeated synthetic division: the k-th remainder is p⁽ᵏ⁾(r)/k!.
    let mut c: Vec<Complex64> = coeffs.iter().map(|&x| Complex64::new(x, 0.0)).collect();
    let mut rem = Complex64::new(0.0, 0.0);
    for _ in 0..=k {
        let mut q = Vec::with_capacity(c.len().saturating_sub(1));
        let mut acc = Complex64::new(0.0, 0.0);
        for (i, &ci) in c.iter().enumerate() {
            acc = acc * r + ci;
            if i + 1 < c.len() {
                q.push(acc);
            }
        }
        rem = acc;
        c = q;
    }
    rem
}

/// Accuracy to expect for a root `r` of multiplicity `k` of the monic polynomial `coeffs`,
/// when each coefficient carries a relative error `delta`: `p(r + h) ≈ t_k h^k` with
/// `t_k = p⁽ᵏ⁾(r)/k!`, and the perturbation changes `p(r)` by at most `delta Σ|c_j||r|^j`, so
/// `|h| ≤ (delta Σ|c_j||r|^j / |t_k|)^(1/k)` (Wilkinson, *Rounding Errors in Algebraic
/// Processes*, 1963, ch. 2: the condition of a polynomial root).
fn root_tolerance(coeffs: &[f64], r: Complex64, k: usize, delta: f64) -> f64 {
    let deg = coeffs.len() - 1;
    let s: f64 = coeffs.iter().enumerate().map(|(j, c)| c.abs() * r.norm().powi((deg - j) as i32)).sum();
    let t = taylor_coefficient(coeffs, r, k).norm();
    (delta * s / t).powf(1.0 / k as f64)
}

fn multiplicity(list: &[Complex64], z: Complex64) -> usize {
    list.iter().filter(|w| **w == z).count()
}

/// Tolerance for each entry of `reference`, an approximation of the spectrum of `a` to within
/// the backward-error model above.
fn tolerances(name: &str, a: &DMatrix<f64>, reference: &[Complex64], exact: Option<&[Complex64]>) -> Vec<f64> {
    let n = a.nrows();
    let anorm = a.norm();
    let backward = BACKWARD * n as f64 * EPS * anorm;
    if is_normal(a) {
        // Bauer–Fike with a unitary eigenvector matrix: |Δλ| ≤ ‖E‖, repeated or not.
        return vec![backward.max(f64::MIN_POSITIVE); reference.len()];
    }
    reference
        .iter()
        .map(|&z| {
            let k = exact.map_or(1, |e| multiplicity(e, z));
            if k > 1 {
                // Defective multiple eigenvalue (λI + N with N nilpotent): a perturbation of size
                // δ moves it by up to (δ ‖N‖^(k−1))^(1/k) — the ε^(1/k) loss documented in
                // `linalg::eigen` and in the fixture's source field.
                let mut shifted = a.clone();
                for i in 0..n {
                    shifted[(i, i)] -= z.re;
                }
                let nnorm = shifted.norm().max(f64::MIN_POSITIVE);
                return 2.0 * (backward * nnorm.powi(k as i32 - 1)).powf(1.0 / k as f64);
            }
            let (kappa, gap) = eigenvalue_condition(a, z);
            assert!(gap > 1e-6, "{name}: reference eigenvalue {z} is not isolated (σ_(n−1)/‖A‖ = {gap:.1e}); the tolerance model needs simple eigenvalues");
            backward * kappa
        })
        .collect()
}

fn check_conjugate_symmetry(name: &str, values: &[Complex64]) -> Result<(), String> {
    // Documented: complex pairs are exact conjugates; the multiset is closed under conjugation.
    for z in values {
        if z.im != 0.0 && multiplicity(values, *z) != multiplicity(values, z.conj()) {
            return Err(format!("{name}: {z} has no exact conjugate partner in {values:?}"));
        }
    }
    Ok(())
}

fn check_sorted(name: &str, values: &[Complex64]) -> Result<(), String> {
    // Documented order: ascending real part, then descending imaginary part.
    for w in values.windows(2) {
        let ok = w[0].re < w[1].re || (w[0].re == w[1].re && w[0].im >= w[1].im);
        if !ok {
            return Err(format!("{name}: not sorted by (re ↑, im ↓): {} before {}", w[0], w[1]));
        }
    }
    Ok(())
}

/// Compares `ours` with `reference` one-to-one; `tol[i]` is the allowance of `reference[i]`.
fn compare(name: &str, what: &str, reference: &[Complex64], ours: &[Complex64], tol: &[f64], failures: &mut Vec<String>) -> f64 {
    if reference.len() != ours.len() {
        failures.push(format!("{name}: {} eigenvalues, {what} has {}", ours.len(), reference.len()));
        return f64::INFINITY;
    }
    let partner = greedy_match(reference, ours);
    let mut worst: f64 = 0.0;
    for (i, &j) in partner.iter().enumerate() {
        let err = (reference[i] - ours[j]).norm();
        worst = worst.max(err / tol[i]);
        if !(err <= tol[i]) {
            failures.push(format!("{name}: ours {} vs {what} {} differ by {err:.3e} > tolerance {:.3e}", ours[j], reference[i], tol[i]));
        }
    }
    worst
}

#[test]
fn eigenvalues_match_numpy_on_every_fixture() {
    let f = fixture("eigenvalues.json");
    let cases = f["cases"].as_array().expect("cases");
    assert!(cases.len() >= 40, "too few eigenvalue fixtures: {}", cases.len());
    let mut failures = Vec::new();
    let mut report = Vec::new();
    for case in cases {
        let name = case["name"].as_str().expect("name");
        let a = matrix(&case["a"]);
        let n = a.nrows();
        assert_eq!(case["n"].as_u64(), Some(n as u64), "{name}: n");
        // Source: numpy.linalg.eigvals (fixture field `eigenvalues`).
        let numpy = complex_list(&case["eigenvalues"]);
        let exact = case.get("exact").map(complex_list);
        let ours = match eigenvalues_with_time_limit(name, &a) {
            Ok(v) => v,
            Err(e) => {
                failures.push(format!("{name}: try_eigenvalues failed: {e}"));
                continue;
            }
        };
        if ours.len() != n {
            failures.push(format!("{name}: {} eigenvalues for n = {n}", ours.len()));
            continue;
        }
        if ours.iter().any(|z| !(z.re.is_finite() && z.im.is_finite())) {
            failures.push(format!("{name}: non-finite eigenvalue {ours:?}"));
            continue;
        }
        if let Err(e) = check_conjugate_symmetry(name, &ours) {
            failures.push(e);
        }
        if let Err(e) = check_sorted(name, &ours) {
            failures.push(e);
        }

        let worst;
        if let Some(poly) = case.get("polynomial") {
            // Companion matrix of a polynomial with known roots (source: the fixture's `exact`,
            // the roots the polynomial was built from). Each coefficient is an exactly
            // representable integer, so the only error is the solver's, modelled as a relative
            // coefficient perturbation of BACKWARD·n·ε.
            let coeffs: Vec<f64> = poly.as_array().expect("polynomial").iter().map(|c| c.as_f64().expect("coefficient")).collect();
            let exact = exact.as_deref().expect("companion cases carry exact roots");
            let delta = BACKWARD * n as f64 * EPS;
            let tol: Vec<f64> = exact.iter().map(|&r| root_tolerance(&coeffs, r, multiplicity(exact, r), delta)).collect();
            let w1 = compare(name, "exact root", exact, &ours, &tol, &mut failures);
            // numpy is an approximation too: allow both errors (numpy ↔ exact matched first).
            let to_numpy = greedy_match(exact, &numpy);
            let mut numpy_tol = vec![0.0; n];
            for (i, &j) in to_numpy.iter().enumerate() {
                numpy_tol[j] = 2.0 * tol[i];
            }
            let w2 = compare(name, "numpy", &numpy, &ours, &numpy_tol, &mut failures);
            worst = w1.max(w2);
        } else if name.starts_with("graded-similarity") {
            // A = D R D⁻¹ with D = logspace(−4, 4, 8): same spectrum as R, whose eigenvalues the
            // fixture gives as `unscaled_eigenvalues` (numpy.linalg.eigvals on R). The relevant
            // conditioning is R's: balancing must undo the grading. R is rebuilt from A (an
            // entrywise relative error of a few ε, inside the backward-error allowance).
            let d: Vec<f64> = (0..n).map(|i| 10f64.powf(-4.0 + 8.0 * i as f64 / (n - 1) as f64)).collect();
            let r = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
            let unscaled = complex_list(&case["unscaled_eigenvalues"]);
            let tol: Vec<f64> = tolerances(name, &r, &unscaled, None).iter().map(|t| 2.0 * t).collect();
            let w1 = compare(name, "numpy on R (unscaled)", &unscaled, &ours, &tol, &mut failures);
            let tol_a: Vec<f64> = tolerances(name, &r, &numpy, None).iter().map(|t| 2.0 * t).collect();
            let w2 = compare(name, "numpy on A", &numpy, &ours, &tol_a, &mut failures);
            worst = w1.max(w2);
        } else {
            // numpy: both solvers are within the model's tolerance of the true spectrum.
            let tol_np: Vec<f64> = tolerances(name, &a, &numpy, exact.as_deref()).iter().map(|t| 2.0 * t).collect();
            let mut w = compare(name, "numpy", &numpy, &ours, &tol_np, &mut failures);
            if let Some(exact) = exact.as_deref() {
                // Source: closed form given in the fixture (`exact`).
                let tol = tolerances(name, &a, exact, Some(exact));
                w = w.max(compare(name, "exact", exact, &ours, &tol, &mut failures));
            }
            worst = w;
        }
        report.push(format!("{name:42} n={n:2} worst error/tolerance {worst:.2e}"));
    }
    println!("{}", report.join("\n"));
    assert!(failures.is_empty(), "{} eigenvalue failures:\n{}", failures.len(), failures.join("\n"));
}

#[test]
fn defective_cluster_mean_is_accurate() {
    // jordan-block-rotated-lambda2-size4: Q J Q^T with J the 4×4 Jordan block of 2 (source field
    // of the fixture). The individual eigenvalues are only good to ε^(1/4), but their mean is
    // trace(A)/4, which is well conditioned: it must equal the exact value 2 to about n·ε·‖A‖.
    let f = fixture("eigenvalues.json");
    let case = f["cases"].as_array().unwrap().iter().find(|c| c["name"] == "jordan-block-rotated-lambda2-size4").expect("fixture");
    let a = matrix(&case["a"]);
    let exact = complex_list(&case["exact"]);
    let ours = try_eigenvalues(&a).expect("eigenvalues");
    let mean: Complex64 = ours.iter().sum::<Complex64>() / ours.len() as f64;
    let exact_mean: Complex64 = exact.iter().sum::<Complex64>() / exact.len() as f64;
    let tol = BACKWARD * 4.0 * EPS * a.norm();
    assert!((mean - exact_mean).norm() <= tol, "cluster mean {mean} vs exact {exact_mean} (tolerance {tol:.1e})");
    // And the spread really is ε^(1/4)-sized, not ε-sized, for numpy too: this is the
    // documented conditioning, not a defect of ours (checks the fixture's premise).
    let numpy = complex_list(&case["eigenvalues"]);
    let numpy_spread = numpy.iter().map(|z| (z - exact_mean).norm()).fold(0.0, f64::max);
    assert!(numpy_spread > 1e-8, "numpy spread {numpy_spread:.1e}: the fixture is not the defective case it claims");
}

#[test]
fn orthogonal_matrix_eigenvalues_lie_on_the_unit_circle() {
    // random-orthogonal-7: Q of a QR factorisation, "all |eigenvalue| = 1" (fixture source).
    // Normal matrix, so each eigenvalue is within ‖E‖ ≲ BACKWARD·n·ε·‖Q‖_F of the circle.
    let f = fixture("eigenvalues.json");
    let case = f["cases"].as_array().unwrap().iter().find(|c| c["name"] == "random-orthogonal-7").expect("fixture");
    let a = matrix(&case["a"]);
    let tol = BACKWARD * 7.0 * EPS * a.norm();
    for z in try_eigenvalues(&a).expect("eigenvalues") {
        assert!((z.norm() - 1.0).abs() <= tol, "|{z}| = {} (tolerance {tol:.1e})", z.norm());
    }
}

#[test]
fn companion_and_zero_matrices_converge_within_the_default_limit() {
    // Regression for nalgebra 0.35's unbounded iteration, which did not terminate on companion
    // matrices and on the zero matrix: with the default limit (60 sweeps per eigenvalue) every
    // such fixture must converge, and the limit must also be a real limit (1 sweep is not
    // enough for a 10 × 10 companion matrix and must be reported, not looped on).
    let f = fixture("eigenvalues.json");
    let mut checked = 0;
    for case in f["cases"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        if !(name.starts_with("companion") || name.starts_with("zero")) {
            continue;
        }
        let a = matrix(&case["a"]);
        let r = eigenvalues_with_time_limit(name, &a);
        assert!(r.is_ok(), "{name}: {r:?}");
        checked += 1;
        if name == "companion-bottom-roots-1-to-10" {
            let limited = try_eigenvalues_with(&a, EigenParams { max_iterations_per_eigenvalue: 1, ..EigenParams::default() });
            assert!(matches!(limited, Err(EigenError::NoConvergence { .. })), "{name} with a 1-sweep limit: {limited:?}");
        }
    }
    assert!(checked >= 21, "only {checked} companion/zero fixtures found");
}
