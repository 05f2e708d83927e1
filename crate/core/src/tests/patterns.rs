//! Unit tests of [`crate::patterns`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn first_order_settling_is_ln_of_inverse_band() {
    // y = 1 − e^{−t}: |y − 1| = band at t = ln(1/band) (closed form).
    let p = [Complex64::new(-1.0, 0.0)];
    for band in [0.01, 0.02, 0.05] {
        let t = step_settling_time(&p, band, &ResponseParams::default()).unwrap();
        assert!((t - (1.0 / band).ln()).abs() < 1e-10, "{band}: {t}");
    }
}

#[test]
fn cascade_has_unit_dc_gain_and_the_poles() {
    let poles = [Complex64::new(-1.0, 2.0), Complex64::new(-1.0, -2.0), Complex64::new(-3.0, 0.0)];
    let c = cascade(&poles);
    let mut eig = try_eigenvalues(&c.a).unwrap();
    sort_eigenvalues(&mut eig);
    let mut want = poles.to_vec();
    sort_eigenvalues(&mut want);
    for (a, b) in eig.iter().zip(&want) {
        assert!((a - b).norm() < 1e-12, "{a} vs {b}");
    }
    // DC gain: −A⁻¹ B at the output.
    let x = c.a.clone().lu().solve(&c.b).unwrap();
    assert!((-x[(c.output, 0)] - 1.0).abs() < 1e-14);
}

#[test]
fn multiplicity_counts_coinciding_poles() {
    let p = [Complex64::new(-1.0, 0.0); 3];
    assert_eq!(largest_multiplicity(&p), 3);
    assert_eq!(largest_multiplicity(&[Complex64::new(-1.0, 0.0), Complex64::new(-1.01, 0.0)]), 1);
    assert_eq!(largest_multiplicity(&[]), 0);
}
