//! Unit tests of [`crate::riccati`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn m(rows: &[&[f64]]) -> DMatrix<f64> {
    DMatrix::from_fn(rows.len(), rows[0].len(), |i, j| rows[i][j])
}

/// Kronecker solution of `Fᵀ X + X F + M = 0` (column-major vec), for checking only.
fn kronecker_lyapunov(f: &DMatrix<f64>, mm: &DMatrix<f64>) -> DMatrix<f64> {
    let n = f.nrows();
    let ft = f.transpose();
    let big = DMatrix::<f64>::from_fn(n * n, n * n, |r, c| {
        let (i, j) = (r % n, r / n);
        let (k, l) = (c % n, c / n);
        // (Fᵀ X)_{ij} = Σ_k Fᵀ_{ik} X_{kj}; (X F)_{ij} = Σ_l X_{il} F_{lj}.
        let mut v = 0.0;
        if l == j {
            v += ft[(i, k)];
        }
        if k == i {
            v += f[(l, j)];
        }
        v
    });
    let rhs = DMatrix::<f64>::from_fn(n * n, 1, |r, _| -mm[(r % n, r / n)]);
    let sol = big.lu().solve(&rhs).expect("nonsingular Kronecker system");
    DMatrix::from_fn(n, n, |i, j| sol[(i + j * n, 0)])
}

#[test]
fn scalar_continuous_closed_form() {
    // a x·2 − (b²/r) x² + q = 0 → x = r (a + √(a² + b² q / r)) / b² (common practice).
    for &(a, b, q, r) in &[(1.0_f64, 1.0, 1.0, 1.0), (-2.0, 0.5, 3.0, 0.1), (0.0, 1.0, 1e-6, 1.0), (5.0, 2.0, 0.0, 1.0)] {
        let exact = r * (a + (a * a + b * b * q / r).sqrt()) / (b * b);
        let sol = solve_continuous_riccati(&m(&[&[a]]), &m(&[&[b]]), &m(&[&[q]]), &m(&[&[r]]), RiccatiParams::default()).expect("solvable");
        let x = sol.solution[(0, 0)];
        assert!((x - exact).abs() <= 1e-13 * exact.abs().max(1e-300), "a={a}: {x} vs {exact}");
        // The equation's residual from the returned x, relative to its terms.
        let residual = (2.0 * a * x - b * b / r * x * x + q).abs() / (2.0 * a.abs() * x + b * b / r * x * x + q).max(f64::MIN_POSITIVE);
        assert!(residual <= 1e-15, "residual {residual} (reported {})", sol.residual);
        assert!(sol.residual <= 1e-15, "the reported residual agrees: {}", sol.residual);
    }
}

#[test]
fn scalar_discrete_closed_form() {
    // b² x² − ((a²−1) r + q b²) x − q r = 0 (the scalar DARE times r + b² x), positive
    // root (common practice; derived in tests/oracle/make_riccati_fixtures.py, `scalar_dare`).
    for &(a, b, q, r) in &[(1.5_f64, 1.0, 1.0, 1.0), (0.5, 2.0, 3.0, 0.1), (1.0, 1.0, 1.0, 1.0), (2.0, 1.0, 0.0, 1.0)] {
        let p = (a * a - 1.0) * r + q * b * b;
        let exact = (p + (p * p + 4.0 * b * b * q * r).sqrt()) / (2.0 * b * b);
        let sol = solve_discrete_riccati(&m(&[&[a]]), &m(&[&[b]]), &m(&[&[q]]), &m(&[&[r]]), RiccatiParams::default()).expect("solvable");
        let x = sol.solution[(0, 0)];
        assert!((x - exact).abs() <= 1e-13 * exact.abs(), "a={a}: {x} vs {exact}");
    }
}

// Reference: the Kronecker form vec(Fᵀ X + X F) = (I ⊗ Fᵀ + Fᵀ ⊗ I) vec X, solved by LU
// (common practice).
#[test]
fn lyapunov_sign_matches_kronecker() {
    let f = m(&[&[-1.0, 2.0, 0.0], &[0.0, -3.0, 1.0], &[-0.5, 0.0, -0.2]]);
    let mm = m(&[&[2.0, 1.0, 0.0], &[1.0, 3.0, -1.0], &[0.0, -1.0, 1.0]]);
    let (x, steps) = solve_continuous_lyapunov(&f, &mm, RiccatiParams::default()).expect("stable");
    let reference = kronecker_lyapunov(&f, &mm);
    assert!((&x - &reference).norm() <= 1e-12 * reference.norm(), "{x} vs {reference}");
    assert!(steps < 30);
    // Unstable coefficient → error.
    let unstable = m(&[&[1.0, 0.0], &[0.0, -1.0]]);
    assert_eq!(solve_continuous_lyapunov(&unstable, &DMatrix::identity(2, 2), RiccatiParams::default()).err(), Some(RiccatiError::NotStable));
}

// Reference: the defining equation itself (residual at rounding level); an F with
// ρ(F) > 1 must be refused (the series diverges; common practice).
#[test]
fn stein_smith_matches_series() {
    let f = m(&[&[0.5, 0.3], &[-0.2, 0.8]]);
    let mm = m(&[&[1.0, 0.2], &[0.2, 2.0]]);
    let (x, _) = solve_discrete_lyapunov(&f, &mm, RiccatiParams::default()).expect("stable");
    let res = f.transpose() * &x * &f - &x + &mm;
    assert!(res.norm() <= 1e-14 * x.norm(), "residual {}", res.norm());
    let unstable = m(&[&[1.1, 0.0], &[0.0, 0.5]]);
    assert_eq!(solve_discrete_lyapunov(&unstable, &mm, RiccatiParams::default()).err(), Some(RiccatiError::NotStable));
}

// Bryson & Ho, *Applied Optimal Control*, 1975 (from memory): Q = diag(1/x²), R = diag(1/u²).
#[test]
fn bryson_rule_and_its_errors() {
    let (q, r) = bryson_weights(&[0.5, 2.0], &[10.0]).expect("valid");
    assert_eq!(q, m(&[&[4.0, 0.0], &[0.0, 0.25]]));
    assert_eq!(r, m(&[&[0.01]]));
    assert_eq!(bryson_weights(&[1.0, 0.0], &[1.0]).err(), Some(RiccatiError::NonPositiveBound { kind: BoundKind::State, index: 1, value: 0.0 }));
    assert!(matches!(bryson_weights(&[1.0], &[-2.0]), Err(RiccatiError::NonPositiveBound { kind: BoundKind::Input, index: 0, .. })));
    assert!(matches!(bryson_weights(&[f64::NAN], &[1.0]), Err(RiccatiError::NonPositiveBound { .. })));
    assert_eq!(bryson_weights(&[], &[1.0]).err(), Some(RiccatiError::Empty));
}

#[test]
fn discrete_unobservable_unstable_mode_uses_the_shifted_doubling() {
    // A = diag(2, 0.5), B = I, Q = diag(0, 1), R = I decouples into two scalar DAREs
    // (closed form above): x₁ = (a² − 1) r / b² = 3 (q = 0, the mode 2 is unobservable but
    // controllable) and x₂ = (p + √(p² + 4)) / 2 with p = 0.25. The plain SDA stays at
    // x₁ = 0 while A_k grows; the shifted rerun must find the stabilising solution.
    let a = m(&[&[2.0, 0.0], &[0.0, 0.5]]);
    let q = m(&[&[0.0, 0.0], &[0.0, 1.0]]);
    let i2 = DMatrix::<f64>::identity(2, 2);
    let d = discrete_lqr_gain(&a, &i2, &q, &i2).expect("stabilising solution exists");
    let x2 = (0.25 + (0.0625_f64 + 4.0).sqrt()) / 2.0;
    let exact = m(&[&[3.0, 0.0], &[0.0, x2]]);
    assert!((&d.riccati_solution - &exact).norm() <= 1e-13 * exact.norm(), "{}", d.riccati_solution);
    // From the gain: eig(A − B K) (nalgebra's Schur) inside the unit circle.
    let poles = (&a - &d.gain).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues();
    assert!(poles.iter().all(|z| z.norm() < 1.0), "{poles}");
    // The reported residual and poles agree with the recomputation.
    assert!(d.residual <= 1e-15, "residual {}", d.residual);
    assert!(d.closed_loop_poles.iter().all(|z| poles.iter().any(|w| (w - z).norm() < 1e-12)), "{:?} vs {poles}", d.closed_loop_poles);
}

#[test]
fn failures_are_diagnosed() {
    // x' = 0·x + u with q = 0: the mode 0 is on the imaginary axis and invisible in Q, the
    // Hamiltonian [[0, −1], [0, 0]] is nilpotent: no stabilising solution.
    let z = m(&[&[0.0]]);
    let one = m(&[&[1.0]]);
    assert!(matches!(lqr_gain(&z, &one, &z, &one), Err(RiccatiError::NotDetectable { .. })));
    // Same in discrete time at λ = 1.
    assert!(matches!(discrete_lqr_gain(&one, &one, &z, &one), Err(RiccatiError::NotDetectable { .. })));
    // An unstable mode the input cannot reach, continuous and discrete.
    let a = m(&[&[0.5, 0.0], &[1.0, -1.0]]);
    let b = m(&[&[0.0], &[1.0]]);
    let i2 = DMatrix::<f64>::identity(2, 2);
    match lqr_gain(&a, &b, &i2, &one) {
        Err(RiccatiError::NotStabilizable { mode, margin }) => {
            assert!((mode.re - 0.5).abs() < 1e-12 && margin < 1e-12)
        }
        other => panic!("expected NotStabilizable, got {other:?}"),
    }
    let a = m(&[&[1.5, 0.0], &[1.0, 0.2]]);
    assert!(matches!(discrete_lqr_gain(&a, &b, &i2, &one), Err(RiccatiError::NotStabilizable { .. })));
    // A stable uncontrollable mode is fine.
    let a = m(&[&[-0.5, 0.0], &[1.0, 1.0]]);
    let d = lqr_gain(&a, &b, &i2, &one).expect("stabilisable");
    let poles = (&a - &b * &d.gain).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues();
    assert!(poles.iter().all(|z| z.re < 0.0), "{poles}");
}

#[test]
fn public_residuals_vanish_on_closed_forms() {
    // Laub (1979), first example (from memory; checked entrywise in the fixture script):
    // A = [[0,1],[0,0]], B = [0;1], Q = diag(1,2), R = 1, X = [[2,1],[1,2]].
    let a = m(&[&[0.0, 1.0], &[0.0, 0.0]]);
    let b = m(&[&[0.0], &[1.0]]);
    let q = m(&[&[1.0, 0.0], &[0.0, 2.0]]);
    let r = m(&[&[1.0]]);
    let x = m(&[&[2.0, 1.0], &[1.0, 2.0]]);
    assert_eq!(continuous_riccati_residual(&a, &b, &q, &r, &x), Ok(0.0));
    let wrong = m(&[&[2.0, 1.0], &[1.0, 2.5]]);
    assert!(continuous_riccati_residual(&a, &b, &q, &r, &wrong).is_ok_and(|v| v > 1e-2));
    // Deadbeat shift (closed form derived in the fixture script): X = diag(q₁, q₁ + q₂).
    let q = m(&[&[2.0, 0.0], &[0.0, 3.0]]);
    let r = m(&[&[5.0]]);
    let x = m(&[&[2.0, 0.0], &[0.0, 5.0]]);
    assert_eq!(discrete_riccati_residual(&a, &b, &q, &r, &x), Ok(0.0));
    assert!(matches!(discrete_riccati_residual(&a, &b, &q, &r, &m(&[&[1.0]])), Err(RiccatiError::DimensionMismatch { .. })));
}

#[test]
fn indefinite_state_weight_is_used_when_a_stabilising_solution_exists() {
    // Double integrator, R = 1, Q = diag(q₁, q₂): the Riccati equation reads x₂² = q₁,
    // x₁ = x₂ x₃, x₃² = 2 x₂ + q₂ (checkable by hand), so X = [[x₂x₃, x₂], [x₂, x₃]] with
    // x₂ = √q₁, x₃ = √(2√q₁ + q₂), K = [x₂, x₃]. q₂ = −1: X = [[1, 1], [1, 1]], K = [1, 1], the
    // closed loop s² + s + 1 — used, and marked. q₂ = −4: 2 + q₂ < 0, no real solution —
    // refused, saying how negative Q is.
    let a = m(&[&[0.0, 1.0], &[0.0, 0.0]]);
    let b = m(&[&[0.0], &[1.0]]);
    let r = m(&[&[1.0]]);
    let d = lqr_gain(&a, &b, &m(&[&[1.0, 0.0], &[0.0, -1.0]]), &r).unwrap();
    assert!((&d.gain - m(&[&[1.0, 1.0]])).norm() < 1e-10, "{}", d.gain);
    assert!((&d.riccati_solution - m(&[&[1.0, 1.0], &[1.0, 1.0]])).norm() < 1e-10, "{}", d.riccati_solution);
    assert_eq!(d.state_weight_smallest_eigenvalue, Some(-1.0));
    match lqr_gain(&a, &b, &m(&[&[1.0, 0.0], &[0.0, -4.0]]), &r) {
        Err(RiccatiError::StateWeightNotSemidefinite { smallest, relative, .. }) => {
            assert!((smallest + 4.0).abs() < 1e-12 && (relative + 1.0).abs() < 1e-12, "{smallest} {relative}");
        }
        other => panic!("{other:?}"),
    }
    // A positive semidefinite Q is not marked.
    assert_eq!(lqr_gain(&a, &b, &m(&[&[1.0, 0.0], &[0.0, 0.0]]), &r).unwrap().state_weight_smallest_eigenvalue, None);
}

// Definitions of symmetric, positive (semi)definite and of the shapes (common practice).
#[test]
fn input_checks() {
    let a = DMatrix::<f64>::identity(2, 2);
    let b = m(&[&[1.0], &[1.0]]);
    let q = DMatrix::<f64>::identity(2, 2);
    let r = m(&[&[1.0]]);
    assert!(matches!(lqr_gain(&a, &b, &q, &m(&[&[1.0, 0.0]])), Err(RiccatiError::DimensionMismatch { matrix: RiccatiInput::InputWeight, .. })));
    assert!(matches!(lqr_gain(&a, &b, &m(&[&[1.0, 1.0], &[0.0, 1.0]]), &r), Err(RiccatiError::NotSymmetric { matrix: RiccatiInput::StateWeight, .. })));
    assert_eq!(lqr_gain(&a, &b, &q, &m(&[&[0.0]])).err(), Some(RiccatiError::InputWeightNotPositiveDefinite));
    assert_eq!(lqr_gain(&a, &b, &q, &m(&[&[-1.0]])).err(), Some(RiccatiError::InputWeightNotPositiveDefinite));
    let mut bad = a.clone();
    bad[(0, 1)] = f64::NAN;
    assert_eq!(lqr_gain(&bad, &b, &q, &r).err(), Some(RiccatiError::NotFinite { matrix: RiccatiInput::StateMatrix }));
}
