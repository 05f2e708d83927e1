//! Unit tests of [`super`]: the largest eigenvalue of Hermitian matrices.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

/// SplitMix64 deviates on [−1, 1).
fn deviates(seed: u64) -> impl FnMut() -> f64 {
    let mut rng = crate::uncertainty::SplitMix::new(seed);
    move || 2.0 * rng.uniform() - 1.0
}

#[test]
fn the_tridiagonal_toeplitz_matrix_has_its_closed_form() {
    // diag a, off-diagonal b: eigenvalues a + 2 b cos(jπ/(n + 1)), j = 1 … n (a closed form of
    // the trade, e.g. Golub & Van Loan, Matrix Computations, 2013, from memory); the largest is
    // a + 2|b| cos(π/(n + 1)). With a complex b the moduli decide.
    for n in [2usize, 3, 7, 40, 120] {
        for (a, b) in [(2.0, Complex64::new(-1.0, 0.0)), (-3.5, Complex64::new(0.6, 0.8)), (1e-6, Complex64::new(0.0, 1e-6))] {
            let g = DMatrix::from_fn(n, n, |i, j| match i as i64 - j as i64 {
                0 => Complex64::new(a, 0.0),
                1 => b,
                -1 => b.conj(),
                _ => Complex64::new(0.0, 0.0),
            });
            let want = a + 2.0 * b.norm() * (std::f64::consts::PI / (n as f64 + 1.0)).cos();
            let got = try_largest_hermitian_eigenvalue(&g).unwrap();
            let scale = a.abs() + 2.0 * b.norm();
            assert!((got - want).abs() <= 8.0 * f64::EPSILON * scale * (n as f64).sqrt(), "n {n}, a {a}, b {b}: {got} vs {want}");
        }
    }
}

#[test]
fn a_gram_matrix_gives_the_square_of_the_largest_singular_value() {
    // Against nalgebra's SVD and its Hermitian eigen-decomposition (outside this project) on
    // seeded complex matrices of 2 … 24 rows, some nearly rank one, some widely scaled; and
    // against a spectrum set by construction, U diag(λ) Uᴴ with U unitary from a QR.
    let mut next = deviates(0x7E57_0001);
    let mut compared = 0;
    for k in 2..=24usize {
        for case in 0..6 {
            let scale = 10f64.powi(case * 3 - 6);
            let mut m = DMatrix::from_fn(k, k, |_, _| Complex64::new(next(), next()) * scale);
            if case == 2 {
                let (u, v): (Vec<Complex64>, Vec<Complex64>) = (0..k).map(|_| (Complex64::new(next(), next()), Complex64::new(next(), next()))).unzip();
                m = DMatrix::from_fn(k, k, |i, j| (u[i] * v[j].conj() + Complex64::new(1e-9 * next(), 0.0)) * scale);
            }
            let g = m.adjoint() * &m;
            let top = try_largest_hermitian_eigenvalue(&g).unwrap();
            let sigma = nalgebra::linalg::SVD::try_new(m.clone(), false, false, f64::EPSILON, 0).unwrap().singular_values.max();
            assert!((top.sqrt() - sigma).abs() <= 1e-13 * sigma, "k {k} case {case}: {} vs {sigma}", top.sqrt());
            let eig = nalgebra::linalg::SymmetricEigen::new(g.clone()).eigenvalues.max();
            assert!((top - eig).abs() <= 1e-13 * eig.abs().max(f64::MIN_POSITIVE), "k {k} case {case}: {top} vs {eig}");
            compared += 1;
        }
        // A spectrum set by construction, with a negative and a repeated top eigenvalue.
        let q = nalgebra::linalg::QR::new(DMatrix::from_fn(k, k, |_, _| Complex64::new(next(), next()))).q();
        let mut lambda: Vec<f64> = (0..k).map(|i| -2.0 + 3.0 * i as f64 / k as f64).collect();
        lambda[k - 2] = 1.75;
        lambda[k - 1] = 1.75;
        let g = &q * DMatrix::from_diagonal(&nalgebra::DVector::from_iterator(k, lambda.iter().map(|v| Complex64::new(*v, 0.0)))) * q.adjoint();
        let top = try_largest_hermitian_eigenvalue(&g).unwrap();
        assert!((top - 1.75).abs() <= 1e-13 * 2.0 * k as f64, "k {k}: {top}");
    }
    assert_eq!(compared, 138);
}

#[test]
fn huge_and_tiny_matrices_are_scaled_not_overflowed() {
    // The tridiagonal Toeplitz matrix of the closed form above, times 1e200 and 1e-200: the
    // squares of its off-diagonal would overflow (or underflow) unscaled.
    for size in [1e200, 1e-200, 1e300] {
        let n = 12;
        let g = DMatrix::from_fn(n, n, |i, j| match i as i64 - j as i64 {
            0 => Complex64::new(2.0 * size, 0.0),
            1 | -1 => Complex64::new(-size, 0.0),
            _ => Complex64::new(0.0, 0.0),
        });
        let want = size * (2.0 + 2.0 * (std::f64::consts::PI / (n as f64 + 1.0)).cos());
        let got = try_largest_hermitian_eigenvalue(&g).unwrap();
        assert!(got.is_finite() && (got - want).abs() <= 1e-14 * want, "size {size}: {got} vs {want}");
    }
}

#[test]
fn bad_input_is_an_error_not_a_panic() {
    assert_eq!(try_largest_hermitian_eigenvalue(&DMatrix::zeros(0, 0)), Err(TopEigenError::Shape { rows: 0, columns: 0 }));
    assert_eq!(try_largest_hermitian_eigenvalue(&DMatrix::zeros(2, 3)), Err(TopEigenError::Shape { rows: 2, columns: 3 }));
    let mut g = DMatrix::<Complex64>::identity(3, 3);
    g[(2, 1)] = Complex64::new(f64::NAN, 0.0);
    assert_eq!(try_largest_hermitian_eigenvalue(&g), Err(TopEigenError::NotFinite));
    assert_eq!(try_largest_hermitian_eigenvalue(&DMatrix::from_element(1, 1, Complex64::new(-4.0, 0.0))), Ok(-4.0));
    assert_eq!(try_largest_hermitian_eigenvalue(&DMatrix::zeros(5, 5)), Ok(0.0));
}

#[test]
fn laguerre_settles_and_agrees_with_bisection() {
    // The fast route must not quietly fall back: on seeded Gram matrices (2 … 30 rows, some
    // nearly rank one, one with a repeated top eigenvalue) Laguerre settles, and to within a few
    // units in the last place of what bisection alone gives.
    let mut next = deviates(0x7E57_0002);
    for k in 2..=30usize {
        for case in 0..4 {
            let mut m = DMatrix::from_fn(k, k, |_, _| Complex64::new(next(), next()));
            if case == 1 {
                let (u, v): (Vec<Complex64>, Vec<Complex64>) = (0..k).map(|_| (Complex64::new(next(), next()), Complex64::new(next(), next()))).unzip();
                m = DMatrix::from_fn(k, k, |i, j| u[i] * v[j].conj() + Complex64::new(1e-9 * next(), 0.0));
            }
            if case == 2 {
                m = DMatrix::identity(k, k) * Complex64::new(3.0, 0.0);
            }
            let g = m.adjoint() * &m;
            let (d, e) = nalgebra::linalg::SymmetricTridiagonal::new(g).unpack_tridiagonal();
            let e2: Vec<f64> = e.iter().map(|v| v * v).collect();
            let (lo, hi, pivmin) = gershgorin(d.as_slice(), e.as_slice(), &e2);
            let fast = largest_by_laguerre(d.as_slice(), &e2, hi, pivmin).unwrap_or_else(|| panic!("k {k} case {case}: Laguerre did not settle"));
            let slow = largest_by_bisection(d.as_slice(), &e2, lo, hi, pivmin);
            assert!((fast - slow).abs() <= 16.0 * f64::EPSILON * slow.abs() * k as f64 + pivmin, "k {k} case {case}: {fast} vs {slow}");
        }
    }
}
