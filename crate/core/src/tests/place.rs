//! Unit tests of [`crate::place`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

/// eig(A − B K) by nalgebra's Schur decomposition (not this crate's eigenvalue code), from the
/// gain, so that no test below reads the placement's own report of its poles.
fn recomputed_poles(a: &DMatrix<f64>, b: &DMatrix<f64>, k: &DMatrix<f64>) -> Vec<Complex64> {
    (a - b * k).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues().iter().copied().collect()
}

/// Largest `|λ − λ_req| / max(1, |λ_req|)` over a greedy one-to-one matching (closest pairs
/// first), the recomputed poles against the request.
fn recomputed_error(a: &DMatrix<f64>, b: &DMatrix<f64>, k: &DMatrix<f64>, requested: &[Complex64]) -> f64 {
    let got = recomputed_poles(a, b, k);
    assert_eq!(got.len(), requested.len());
    let mut pairs: Vec<(f64, usize, usize)> = requested.iter().enumerate().flat_map(|(i, r)| got.iter().enumerate().map(move |(j, g)| ((r - g).norm() / r.norm().max(1.0), i, j))).collect();
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let (mut taken_i, mut taken_j, mut worst) = (vec![false; got.len()], vec![false; got.len()], 0.0f64);
    for (e, i, j) in pairs {
        if !taken_i[i] && !taken_j[j] {
            (taken_i[i], taken_j[j], worst) = (true, true, worst.max(e));
        }
    }
    worst
}

#[test]
fn third_order_textbook_example() {
    // Ogata, Modern Control Engineering, pole-placement example (from memory; checkable
    // by hand): det(sI − A + BK) = s³ + (6+k3)s² + (5+k2)s + (1+k1) = (s+10)(s²+4s+20).
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -1.0, -5.0, -6.0]);
    let b = DMatrix::from_row_slice(3, 1, &[0.0, 0.0, 1.0]);
    let p = state_feedback_gain(&a, &b, &[c(-2.0, 4.0), c(-2.0, -4.0), c(-10.0, 0.0)], PlacementParams::default()).unwrap();
    let expected = [199.0, 55.0, 8.0];
    for (j, want) in expected.iter().enumerate() {
        assert!((p.gain[(0, j)] - want).abs() < 1e-10 * want, "{}", p.gain);
    }
    let error = recomputed_error(&a, &b, &p.gain, &[c(-2.0, 4.0), c(-2.0, -4.0), c(-10.0, 0.0)]);
    assert!(error < 1e-12, "{error}");
    // The report agrees with the recomputation (both at rounding level here).
    assert!((p.max_pole_error - error).abs() < 1e-12, "reported {} vs {error}", p.max_pole_error);
    assert_eq!(p.iterations, 0);
}

#[test]
fn full_rank_input_gives_orthonormal_eigenvectors() {
    let a = DMatrix::from_row_slice(2, 2, &[1.0, 2.0, 3.0, 4.0]);
    let b = DMatrix::identity(2, 2);
    let p = state_feedback_gain(&a, &b, &[c(-1.0, 2.0), c(-1.0, -2.0)], PlacementParams::default()).unwrap();
    assert!(recomputed_error(&a, &b, &p.gain, &[c(-1.0, 2.0), c(-1.0, -2.0)]) < 1e-13);
    // With B = I every closed loop is reachable; the best-conditioned one is normal (unit-column
    // eigenvectors orthonormal, κ₂ = 1): checked on A − B K itself, ‖CᵀC − CCᵀ‖ ≈ 0.
    let closed = &a - &b * &p.gain;
    let defect = (closed.transpose() * &closed - &closed * closed.transpose()).norm();
    assert!(defect < 1e-12 * closed.norm_squared(), "A − BK is not normal: {defect:.1e}");
    assert!((p.eigenvector_condition - 1.0).abs() < 1e-10, "{}", p.eigenvector_condition);
}

#[test]
fn repeated_pole_limits() {
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, 1.0, 2.0, 3.0]);
    let b = DMatrix::from_row_slice(3, 2, &[0.0, 0.0, 1.0, 0.0, 0.0, 1.0]);
    let ok = state_feedback_gain(&a, &b, &[c(-1.0, 0.0), c(-1.0, 0.0), c(-3.0, 0.0)], PlacementParams::default()).unwrap();
    let error = recomputed_error(&a, &b, &ok.gain, &[c(-1.0, 0.0), c(-1.0, 0.0), c(-3.0, 0.0)]);
    assert!(error < 1e-8, "{error}");
    // Three copies with rank B = 2: a Jordan block by the multi-input deflation;
    // (A − B K + I)³ = 0 by Cayley–Hamilton.
    let p = state_feedback_gain(&a, &b, &[c(-1.0, 0.0); 3], PlacementParams::default()).unwrap();
    assert_eq!(p.method, PlacementMethod::DeflationMultiInput);
    let shifted = &a - &b * &p.gain + DMatrix::identity(3, 3);
    let cube = &shifted * &shifted * &shifted;
    assert!(cube.norm() < 1e-12 * (1.0 + a.norm() + (&b * &p.gain).norm()).powi(3), "{cube}");
}

#[test]
fn deadbeat_double_integrator_closed_form() {
    // Zero-order-hold double integrator, Φ = [[1, T], [0, 1]], Γ = [T²/2, T]: every pole at
    // z = 0 gives K = [1/T², 3/(2T)] (Franklin, Powell & Workman, Digital Control of Dynamic
    // Systems, 3rd ed., 1998, deadbeat example; from memory; checkable by hand: det(zI − Φ + ΓK)
    // = z² + (T²k₁/2 + T k₂ − 2) z + (T²k₁/2 − T k₂ + 1)), and (Φ − Γ K)² = 0.
    for t in [1e-3, 0.1, 1.0, 30.0] {
        let a = DMatrix::from_row_slice(2, 2, &[1.0, t, 0.0, 1.0]);
        let b = DMatrix::from_row_slice(2, 1, &[t * t / 2.0, t]);
        let p = state_feedback_gain(&a, &b, &[c(0.0, 0.0); 2], PlacementParams { domain: Domain::Discrete, ..PlacementParams::default() }).unwrap();
        assert_eq!(p.method, PlacementMethod::Deflation);
        let want = [1.0 / (t * t), 1.5 / t];
        // The gain is determined through the controllability matrix [Γ ΦΓ]: rounding is
        // amplified by its condition number (about 2000 at T = 1e-3).
        let mut ctrb = DMatrix::<f64>::zeros(2, 2);
        ctrb.set_column(0, &b.column(0));
        ctrb.set_column(1, &(&a * b.column(0)));
        let kappa = crate::linalg::svd::try_condition_number(&ctrb, SvdParams::default()).unwrap();
        for (got, w) in p.gain.iter().zip(want) {
            assert!((got - w).abs() < 10.0 * f64::EPSILON * kappa * w, "T = {t}: {} vs {want:?} (κ = {kappa:.1e})", p.gain);
        }
        let closed = &a - &b * &p.gain;
        let square = &closed * &closed;
        assert!(square.norm() < 1e-14 * (a.norm() + (&b * &p.gain).norm()).powi(2), "T = {t}: {square}");
    }
}

#[test]
fn dependent_input_columns_use_the_rank() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, -2.0, -0.5]);
    let b = DMatrix::from_row_slice(2, 2, &[0.0, 0.0, 1.0, 2.0]);
    let p = state_feedback_gain(&a, &b, &[c(-3.0, 0.0), c(-4.0, 0.0)], PlacementParams::default()).unwrap();
    assert_eq!(p.input_rank, 1);
    assert!(recomputed_error(&a, &b, &p.gain, &[c(-3.0, 0.0), c(-4.0, 0.0)]) < 1e-12);
}

#[test]
fn uncontrollable_stable_mode_is_left_in_place() {
    // x1' = -2 x1 (no input), x2' = x2 + u.
    let a = DMatrix::from_row_slice(2, 2, &[-2.0, 0.0, 0.0, 1.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let p = state_feedback_gain(&a, &b, &[c(-3.0, 0.0), c(-5.0, 0.0)], PlacementParams::default()).unwrap();
    assert_eq!(p.fixed_modes.len(), 1);
    assert!((p.fixed_modes[0].re + 2.0).abs() < 1e-12);
    assert_eq!(p.not_assigned, vec![c(-3.0, 0.0)]);
    // The closed loop keeps the fixed mode at −2 and moves the other to −5 (from the gain).
    assert!(recomputed_error(&a, &b, &p.gain, &[c(-2.0, 0.0), c(-5.0, 0.0)]) < 1e-12);
    // With an unstable uncontrollable mode it must fail, naming the mode.
    let a = DMatrix::from_row_slice(2, 2, &[2.0, 0.0, 0.0, 1.0]);
    let e = state_feedback_gain(&a, &b, &[c(-3.0, 0.0), c(-5.0, 0.0)], PlacementParams::default()).unwrap_err();
    assert!(e.to_string().contains("mode at 2"), "{e}");
}

#[test]
fn wrong_count_and_unpaired() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    assert!(matches!(state_feedback_gain(&a, &b, &[c(-1.0, 0.0)], PlacementParams::default()), Err(PlacementError::PoleCount { .. })));
    assert!(matches!(state_feedback_gain(&a, &b, &[c(-1.0, 1.0), c(-2.0, 0.0)], PlacementParams::default()), Err(PlacementError::InvalidPoles { .. })));
}

#[test]
fn large_plants_take_the_fast_admissible_subspaces() {
    // From LARGE_PLANT_ORDER states the subspaces come from the shared Hessenberg reduction,
    // with the QR route as a silent fallback: held here to actually be taken, on invented
    // modal structures (n/2 modes, damping 0.02, frequencies 1, 1.5, …; mode shapes
    // sin(0.7 (i+1)(j+1))) with targets at damping 0.1.
    let modal = |n: usize, m: usize| {
        let mut a = DMatrix::<f64>::zeros(n, n);
        let mut b = DMatrix::<f64>::zeros(n, m);
        let mut poles = Vec::new();
        for i in 0..n / 2 {
            let w = 1.0 + 0.5 * i as f64;
            a[(2 * i, 2 * i + 1)] = 1.0;
            a[(2 * i + 1, 2 * i)] = -w * w;
            a[(2 * i + 1, 2 * i + 1)] = -0.04 * w;
            for j in 0..m {
                b[(2 * i + 1, j)] = (0.7 * (i + 1) as f64 * (j + 1) as f64).sin();
            }
            poles.push(c(-0.1 * w, w * 0.99f64.sqrt()));
        }
        (a, b, poles)
    };
    let mut checked = 0;
    for (n, m) in [(LARGE_PLANT_ORDER, 3), (100, 4)] {
        let (a, b, poles) = modal(n, m);
        let ur = b.clone().qr().q();
        let scale = a.norm() + poles.iter().map(|z| z.norm()).fold(0.0, f64::max);
        let fast = crate::linalg::shifted_sigma::ShiftedPair::new(&a, &(&ur * scale));
        for z in &poles {
            let s = robust::checked_fast_subspace(&a, &ur, *z, &fast);
            assert!(s.is_some(), "n {n}: the fast subspace of {z} was refused");
            assert_eq!(s.unwrap().shape(), (n, m));
            checked += 1;
        }
    }
    assert_eq!(checked, LARGE_PLANT_ORDER / 2 + 50);
}
