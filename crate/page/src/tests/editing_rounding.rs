//! Unit tests of [`crate::editing::keys::round_pole`]: the rounding of a pole placed with the
//! pointer (split from `editing.rs`, which holds the editing tests).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

#[test]
fn rounding_keeps_five_significant_digits_and_pairs_stay_pairs() {
    let z = round_pole(c(-12.345678901, 9.87654321), MAP_EDIT_DIGITS);
    // |z| ≈ 15.8: step 1e-3.
    assert!((z.re - -12.346).abs() < 1e-12 && (z.im - 9.877).abs() < 1e-12, "{z}");
    assert_eq!(crate::poles::format_complex(z), "-12.346+9.877j");
    let tiny_im = round_pole(c(-100.0, 1e-9), MAP_EDIT_DIGITS);
    assert!(tiny_im.im > 0.0, "{tiny_im}");
    assert_eq!(round_pole(c(0.0, 0.0), 5), c(0.0, 0.0));
    let real = round_pole(c(0.98765432, 0.0), 5);
    assert!((real.re - 0.98765).abs() < 1e-15 && real.im == 0.0);
    // The rounding moves a pole by at most half a step in each part.
    for (re, im) in [(-3.3333333, 2.2222222), (-1234.5678, 0.5), (-0.000123456, 0.000654321)] {
        let r = round_pole(c(re, im), 5);
        let step = 10f64.powi(c(re, im).norm().log10().floor() as i32 - 4);
        assert!((r.re - re).abs() <= 0.5 * step * (1.0 + 1e-9) && (r.im - im).abs() <= 0.5 * step * (1.0 + 1e-9), "{re} {im} -> {r}");
    }
}

#[test]
fn rounded_poles_print_as_their_decimals() {
    // (x / step) · step leaves binary noise (24.15 → 24.150000000000002 when printed in full);
    // the rounded value is the double nearest the decimal, so the poles field reads as typed.
    for (re, im, text) in [(-24.1500000003, 269.97, "-24.15+269.97j"), (-7.0310000001, 10.862, "-7.031+10.862j"), (-36.3000000001, 272.22, "-36.3+272.22j"), (-0.30000000004, 0.1, "-0.3+0.1j")] {
        let z = round_pole(c(re, im), MAP_EDIT_DIGITS);
        assert_eq!(crate::poles::format_complex(z), text, "{re} {im}");
    }
}
