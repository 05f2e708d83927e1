//! Invariant zeros: worked by hand on transfer functions in controllable canonical form,
//! the square case with an invertible D, non-square systems, and independence of the units.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn m(rows: usize, cols: usize, v: &[f64]) -> DMatrix<f64> {
    DMatrix::from_row_slice(rows, cols, v)
}

fn zeros_of(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>) -> Vec<Complex64> {
    let z = try_invariant_zeros(a, b, c, d, ZeroParams::default()).unwrap();
    for r in &z.residuals {
        assert!(*r < 1e-10, "residual {r} of {:?}", z.zeros);
    }
    let mut v = z.zeros;
    v.sort_by(|x, y| x.re.total_cmp(&y.re).then(x.im.total_cmp(&y.im)));
    v
}

fn close(got: &[Complex64], want: &[f64]) {
    assert_eq!(got.len(), want.len(), "{got:?} vs {want:?}");
    for (g, w) in got.iter().zip(want) {
        assert!((g - Complex64::new(*w, 0.0)).norm() < 1e-9 * (1.0 + w.abs()), "{got:?} vs {want:?}");
    }
}

/// (s + 2)(s − 1) / ((s + 1)(s + 3)(s + 4)) in controllable canonical form: the denominator
/// s³ + 8 s² + 19 s + 12, the numerator s² + s − 2 (by hand).
fn third_order() -> (DMatrix<f64>, DMatrix<f64>, DMatrix<f64>, DMatrix<f64>) {
    (m(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -12.0, -19.0, -8.0]), m(3, 1, &[0.0, 0.0, 1.0]), m(1, 3, &[-2.0, 1.0, 1.0]), m(1, 1, &[0.0]))
}

#[test]
fn the_numerator_roots_of_a_single_input_single_output_plant() {
    let (a, b, c, d) = third_order();
    close(&zeros_of(&a, &b, &c, &d), &[-2.0, 1.0]);
    // Relative degree 3 (C = [1, 0, 0]): no finite zeros.
    assert!(zeros_of(&a, &b, &m(1, 3, &[1.0, 0.0, 0.0]), &d).is_empty());
    // A feedthrough: (s³ + 8 s² + 19 s + 12) + (s² + s − 2) = s³ + 9 s² + 20 s + 10 over the
    // same denominator; its zeros are the eigenvalues of A − B D⁻¹ C (with D = 1).
    let z = zeros_of(&a, &b, &c, &m(1, 1, &[1.0]));
    let want = crate::linalg::eigen::try_eigenvalues(&(&a - &b * &c)).unwrap();
    assert_eq!(z.len(), 3);
    for w in want {
        assert!(z.iter().any(|g| (g - w).norm() < 1e-9 * (1.0 + w.norm())), "{w} in {z:?}");
    }
}

#[test]
fn zeros_do_not_depend_on_the_units() {
    // The same plant with the states in units 1e-6 and 1e6 of the first, the input in kilo-units
    // and the output in milli-units: the rank decisions are made after scaling.
    let (a, b, c, d) = third_order();
    let t = DMatrix::from_diagonal(&nalgebra::DVector::from_vec(vec![1e-6, 1.0, 1e6]));
    let ti = t.clone().try_inverse().unwrap();
    let (a2, b2, c2) = (&ti * &a * &t, &ti * &b * 1e3, &c * &t * 1e-3);
    close(&zeros_of(&a2, &b2, &c2, &d), &[-2.0, 1.0]);
}

#[test]
fn non_square_plants_have_the_zeros_their_outputs_share() {
    // Two outputs of one input over (s + 1)(s + 3)(s + 4): numerators (s + 2)(s − 1) and
    // (s + 2)(s + 5) = s² + 7 s + 10 share only s = −2 (by hand).
    let (a, b, _, _) = third_order();
    let c2 = m(2, 3, &[-2.0, 1.0, 1.0, 10.0, 7.0, 1.0]);
    close(&zeros_of(&a, &b, &c2, &m(2, 1, &[0.0, 0.0])), &[-2.0]);
    // Numerators without a common root: no zeros.
    let c3 = m(2, 3, &[-2.0, 1.0, 1.0, 1.0, 0.0, 0.0]);
    assert!(zeros_of(&a, &b, &c3, &m(2, 1, &[0.0, 0.0])).is_empty());
    // The dual: one output, two inputs (the transposed plant) has the same zeros.
    close(&zeros_of(&a.transpose(), &c2.transpose(), &b.transpose(), &m(1, 2, &[0.0, 0.0])), &[-2.0]);
}

#[test]
fn a_block_diagonal_plant_has_the_zeros_of_its_blocks() {
    // diag(G₁, G₂) with G₁ the third-order plant and G₂ = (s − 3)/(s² + 3 s + 2): zeros
    // −2, 1 and 3 (by hand).
    let (a1, b1, c1, _) = third_order();
    let mut a = DMatrix::<f64>::zeros(5, 5);
    a.view_mut((0, 0), (3, 3)).copy_from(&a1);
    a.view_mut((3, 3), (2, 2)).copy_from(&m(2, 2, &[0.0, 1.0, -2.0, -3.0]));
    let mut b = DMatrix::<f64>::zeros(5, 2);
    b.view_mut((0, 0), (3, 1)).copy_from(&b1);
    b[(4, 1)] = 1.0;
    let mut c = DMatrix::<f64>::zeros(2, 5);
    c.view_mut((0, 0), (1, 3)).copy_from(&c1);
    c[(1, 3)] = -3.0;
    c[(1, 4)] = 1.0;
    close(&zeros_of(&a, &b, &c, &DMatrix::zeros(2, 2)), &[-2.0, 1.0, 3.0]);
}

#[test]
fn sizes_are_checked_and_empty_plants_have_no_zeros() {
    let (a, b, c, _) = third_order();
    assert_eq!(try_invariant_zeros(&a, &b, &c, &DMatrix::zeros(2, 1), ZeroParams::default()).err(), Some(ZerosError::Size { what: "rows of D", expected: 1, found: 2 }));
    let none = try_invariant_zeros(&a, &b, &DMatrix::zeros(0, 3), &DMatrix::zeros(0, 1), ZeroParams::default()).unwrap();
    assert!(none.zeros.is_empty());
}
