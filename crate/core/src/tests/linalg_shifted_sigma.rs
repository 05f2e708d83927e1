//! Unit tests of [`crate::linalg::shifted_sigma`]: closed forms, and agreement with a full SVD
//! of `[A − λI, B]` on seeded random pairs across sizes (the SVD route is itself checked
//! against numpy in `crate/tests/controllability_vs_numpy.rs`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::linalg::svd::{try_singular_values, SvdParams};

/// SplitMix64 uniform numbers in [−1, 1).
struct Seeded(u64);
impl Seeded {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        2.0 * ((z >> 11) as f64 / (1u64 << 53) as f64) - 1.0
    }
}

fn dense_sigma_min(a: &DMatrix<f64>, b: &DMatrix<f64>, lambda: Complex64) -> f64 {
    let (n, m) = (a.nrows(), b.ncols());
    let w = DMatrix::<Complex64>::from_fn(
        n,
        n + m,
        |i, j| if j < n { Complex64::new(a[(i, j)], 0.0) - if i == j { lambda } else { Complex64::new(0.0, 0.0) } } else { Complex64::new(b[(i, j - n)], 0.0) },
    );
    try_singular_values(&w, SvdParams::default()).unwrap().iter().cloned().fold(f64::INFINITY, f64::min)
}

#[test]
fn one_state_is_the_length_of_the_row() {
    // [a − λ, b]: σ = sqrt(|a − λ|² + b²).
    let pair = ShiftedPair::new(&DMatrix::from_element(1, 1, 2.0), &DMatrix::from_row_slice(1, 2, &[3.0, 4.0]));
    let s = pair.smallest_singular_value(Complex64::new(-1.0, 4.0), ShiftedSigmaParams::default()).unwrap();
    assert!((s - (9.0f64 + 16.0 + 9.0 + 16.0).sqrt()).abs() < 1e-14, "{s}");
}

#[test]
fn integrator_chain_and_a_hidden_mode() {
    // A = 0 (3 × 3), B = e₁: M Mᴴ = |λ|² I + e₁e₁ᵀ, so σ_min = |λ| (the two unreached states).
    let a = DMatrix::<f64>::zeros(3, 3);
    let mut b = DMatrix::<f64>::zeros(3, 1);
    b[(0, 0)] = 1.0;
    let pair = ShiftedPair::new(&a, &b);
    // A double smallest singular value |λ| beside sqrt(|λ|² + 1): settled to the iteration's
    // tolerance (1e-9) when |λ| is small. At |λ| = 3.6 the two are within 4 % (the estimate
    // converges by (13/14)² ≈ 0.86 a step): within the default 300 steps it settles, to the
    // remaining error it estimates; capped at 20 steps it says it did not settle (the caller's
    // full SVD then takes over).
    let s = pair.smallest_singular_value(Complex64::new(0.5, 0.0), ShiftedSigmaParams::default()).unwrap();
    assert!((s - 0.5).abs() < 1e-9 * 0.5, "{s}");
    let slow = Complex64::new(-2.0, 3.0);
    let s = pair.smallest_singular_value(slow, ShiftedSigmaParams::default()).unwrap();
    assert!((s - 13f64.sqrt()).abs() < 1e-8 * 13f64.sqrt(), "{s}");
    match pair.smallest_singular_value(slow, ShiftedSigmaParams { max_steps: 20, ..ShiftedSigmaParams::default() }) {
        Err(ShiftedSigmaError::NoConvergence { steps, change }) => assert!(steps == 20 && change > 1e-9, "{change}"),
        other => panic!("20 steps cannot settle at a rate of 0.86: {other:?}"),
    }
    // At λ = 0 the unreached states make the pencil exactly rank deficient.
    assert_eq!(pair.smallest_singular_value(Complex64::new(0.0, 0.0), ShiftedSigmaParams::default()).unwrap(), 0.0);
}

#[test]
fn agrees_with_a_full_svd_on_seeded_pairs_across_sizes() {
    let mut rng = Seeded(20261204);
    let (mut compared, mut unsettled) = (0, 0);
    for &(n, m) in &[(2, 1), (3, 2), (5, 1), (8, 3), (13, 2), (21, 4), (34, 1), (60, 3)] {
        let a = DMatrix::from_fn(n, n, |_, _| rng.next());
        let b = DMatrix::from_fn(n, m, |_, _| rng.next());
        let pair = ShiftedPair::new(&a, &b);
        let scale = a.norm() + b.norm();
        // The eigenvalues of A (where the margin is defined) and random shifts near them.
        let mut shifts = crate::linalg::eigen::try_eigenvalues(&a).unwrap();
        shifts.extend((0..4).map(|_| Complex64::new(rng.next(), rng.next())));
        for lambda in shifts {
            let dense = dense_sigma_min(&a, &b, lambda);
            let fast = match pair.smallest_singular_value(lambda, ShiftedSigmaParams::default()) {
                Ok(s) => s,
                Err(ShiftedSigmaError::NoConvergence { .. }) => {
                    unsettled += 1; // the caller falls back to the SVD
                    continue;
                }
                Err(e) => panic!("{e}"),
            };
            // Both are backward stable: they agree to a few ε‖[A B]‖ absolutely, and to 3
            // significant figures (the analysis's promise) wherever that is above rounding.
            let diff = (fast - dense).abs();
            assert!(diff <= 1e-12 * scale || diff <= 1e-4 * dense, "n {n} m {m} λ {lambda}: {fast} vs {dense}");
            compared += 1;
        }
    }
    // 146 eigenvalues and 32 random shifts; a few may be left to the SVD.
    assert!(compared + unsettled == 178 && compared >= 170, "{compared} compared, {unsettled} left to the SVD");
}

#[test]
fn two_equal_smallest_singular_values_are_settled() {
    // A = diag(1, 1, 5) with B = e₃: at λ = 1 the pencil has a double zero singular value...
    // shifted slightly, a double smallest singular value. Inverse iteration converges at once:
    // the two equal values span an invariant subspace, so the estimate is exact after a step.
    let a = DMatrix::from_diagonal(&DVector::from_vec(vec![1.0, 1.0, 5.0]));
    let mut b = DMatrix::<f64>::zeros(3, 1);
    b[(2, 0)] = 1.0;
    let pair = ShiftedPair::new(&a, &b);
    let lambda = Complex64::new(1.001, 0.0);
    let s = pair.smallest_singular_value(lambda, ShiftedSigmaParams::default()).expect("a double singular value is an invariant subspace: one step lands in it");
    assert!((s - 0.001).abs() < 1e-12, "{s}");
}

/// The null space of `[A − λI, B]`'s `x` part from nalgebra's complex SVD of
/// `(I − U Uᴴ)(A − λI)`: the right singular vectors of its `m` smallest singular values
/// (`U` an orthonormal basis of range `B`, from nalgebra's QR), as the projector `S Sᴴ`.
fn reference_projector(a: &DMatrix<f64>, b: &DMatrix<f64>, lambda: Complex64) -> DMatrix<Complex64> {
    let (n, m) = (a.nrows(), b.ncols());
    let u = b.clone().qr().q().map(|v| Complex64::new(v, 0.0));
    let shifted = DMatrix::<Complex64>::from_fn(n, n, |i, j| Complex64::new(a[(i, j)], 0.0) - if i == j { lambda } else { Complex64::new(0.0, 0.0) });
    let outside = &shifted - &u * (u.adjoint() * &shifted);
    let svd = outside.svd(false, true);
    let vt = svd.v_t.unwrap();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&i, &j| svd.singular_values[i].total_cmp(&svd.singular_values[j]));
    let s = DMatrix::<Complex64>::from_fn(n, m, |i, k| vt[(order[k], i)].conj());
    &s * s.adjoint()
}

#[test]
fn admissible_basis_spans_the_null_space_of_the_pencil() {
    let mut rng = Seeded(0xAD41_5518);
    let (mut compared, mut worst) = (0, 0.0f64);
    for (n, m) in [(3, 1), (5, 2), (8, 3), (12, 2), (20, 4), (40, 3), (70, 4), (100, 5)] {
        let a = DMatrix::from_fn(n, n, |_, _| rng.next());
        let b = DMatrix::from_fn(n, m, |_, _| rng.next());
        // Orthonormal columns scaled to ‖A − λI‖, as the placement passes them.
        let u = b.clone().qr().q();
        for lambda in [Complex64::new(-0.7, 0.0), Complex64::new(-0.3, 1.1), Complex64::new(2.5, -0.4)] {
            let scale = a.norm() + lambda.norm();
            let pair = ShiftedPair::new(&a, &(&u * scale));
            let s = pair.admissible_basis(lambda).expect("a controllable pencil");
            assert_eq!(s.shape(), (n, m));
            // Orthonormal, and the same subspace as the SVD's (projectors compared).
            let gram_error = (s.adjoint() * &s - DMatrix::<Complex64>::identity(m, m)).norm();
            let projector_error = (&s * s.adjoint() - reference_projector(&a, &b, lambda)).norm();
            worst = worst.max(projector_error);
            // Both are backward stable: rounding of a few n ε; the SVD's gap (the (m+1)-th
            // smallest singular value of (I − U Uᴴ)(A − λI), ≳ 1/n for these random matrices)
            // may amplify it by n: 1e-10.
            assert!(gram_error <= 1e-13, "n {n}, λ {lambda}: SᴴS − I = {gram_error:.2e}");
            assert!(projector_error <= 1e-10, "n {n}, m {m}, λ {lambda}: projectors differ by {projector_error:.2e}");
            compared += 1;
        }
    }
    assert_eq!(compared, 24);
    eprintln!("admissible basis against the SVD's null space: {compared} pencils, worst projector difference {worst:.2e}");
}

#[test]
fn admissible_basis_with_one_input_and_an_uncontrollable_shift() {
    // A = diag(1, 2), B = e₁: at λ = 2 the mode is uncontrollable, the null space of
    // [A − 2I, B] has dimension 2, and any x with (A − 2I) x ∈ span e₁ is admissible: every x.
    // The basis returned is one unit vector, admissible: (A − 2I) x has no e₂ part.
    let a = DMatrix::from_row_slice(2, 2, &[1.0, 0.0, 0.0, 2.0]);
    let b = DMatrix::from_row_slice(2, 1, &[1.0, 0.0]);
    let pair = ShiftedPair::new(&a, &(&b * 3.0));
    let s = pair.admissible_basis(Complex64::new(2.0, 0.0)).unwrap();
    let v = DMatrix::from_fn(2, 1, |i, _| Complex64::new(a[(i, i)] - 2.0, 0.0) * s[(i, 0)]);
    assert!(v[(1, 0)].norm() <= 1e-15 && (s.column(0).norm() - 1.0).abs() <= 1e-15, "{s}");
    // At λ = −1 (controllable): (A + I) x ∈ span e₁ forces x₂ = 0: the basis is ±e₁ up to phase.
    let s = pair.admissible_basis(Complex64::new(-1.0, 0.0)).unwrap();
    assert!((s[(0, 0)].norm() - 1.0).abs() <= 1e-15 && s[(1, 0)].norm() <= 1e-15, "{s}");
}
