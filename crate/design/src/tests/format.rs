//! The display-number rule: significant digits, engineering exponents, rounding level,
//! negative zero, pairs. Expected texts worked by hand from the rule in the module header.

use super::*;

#[test]
fn significant_digits_in_the_plain_range() {
    assert_eq!(number_with(1305.1500000000526, 5), "1305.2");
    assert_eq!(number_with(-20.00000000000022, 5), "-20");
    assert_eq!(number_with(0.0012345678, 5), "0.0012346");
    assert_eq!(number_with(123456.0, 5), "123460");
    assert_eq!(number_with(999999.4, 5), "1e6");
    assert_eq!(number_with(2.5, 5), "2.5");
    assert_eq!(number_with(9.99995, 5), "10");
    assert_eq!(number_with(std::f64::consts::PI, 3), "3.14");
    assert_eq!(number_with(std::f64::consts::PI, 17), "3.1415926535897931");
}

#[test]
fn engineering_exponents_outside_the_plain_range() {
    assert_eq!(number_with(12_345_678.0, 5), "12.346e6");
    assert_eq!(number_with(0.000123456, 5), "123.46e-6");
    assert_eq!(number_with(-4.2e-7, 5), "-420e-9");
    assert_eq!(number_with(1.4079243886673304e-13, 5), "140.79e-15");
    assert_eq!(number_with(6.02e23, 3), "602e21");
    // At 17 digits the text is shifted, not divided: it reads back to the very same double.
    for x in [1.2345678901234567e-7, -9.876543210987654e12, 3.0e-300, 1.7976931348623157e308, 2.2250738585072014e-308] {
        let text = number_with(x, 17);
        assert_eq!(text.parse::<f64>().unwrap(), x, "{text}");
    }
    assert_eq!(number_with(-9.87654321e9, 5), "-9.8765e9");
    assert_eq!(number_with(1e-5, 5), "10e-6");
    assert_eq!(number_with(1e6, 5), "1e6");
    assert_eq!(number_with(0.001, 5), "0.001");
    // Every exponent is a multiple of 3 and every mantissa is in [1, 1000).
    let mut x = 1.234567e-20;
    while x < 1e20 {
        let text = number_with(x, 5);
        if let Some((m, e)) = text.split_once('e') {
            let e: i32 = e.parse().unwrap_or(1);
            let m: f64 = m.parse().unwrap_or(0.0);
            assert_eq!(e % 3, 0, "{text}");
            assert!((1.0..1000.0).contains(&m), "{text}");
            assert!(((m * 10f64.powi(e) - x) / x).abs() < 1e-4, "{text} for {x}");
        }
        x *= 7.3;
    }
}

#[test]
fn zero_negative_zero_and_non_finite() {
    assert_eq!(number_with(0.0, 5), "0");
    assert_eq!(number_with(-0.0, 5), "0");
    assert_eq!(number_with(-1e-300 * 1e-300, 5), "0");
    assert_eq!(number_with(-0.00001, 3), "-10e-6");
    assert_eq!(number_with(f64::INFINITY, 5), "∞");
    assert_eq!(number_with(f64::NEG_INFINITY, 5), "−∞");
    assert_eq!(number_with(f64::NAN, 5), "NaN");
}

#[test]
fn rounding_level_and_pairs() {
    // An open-loop pole at 1.4e-13 in a model with ‖A‖ = 1500 is below 1e-12 · 1500.
    assert_eq!(number_above(1.4079243886673304e-13, 1e-12 * 1500.0), "0");
    assert_eq!(number_above(-3.0, 1e-9), "-3");
    let z = Complex64::new(-20.00000000000022, 30.000000000000014);
    assert_eq!(complex(z), "\u{2212}20 + 30j");
    assert_eq!(complex(z.conj()), "\u{2212}20 \u{2212} 30j");
    assert_eq!(pole_list(&[z, z.conj(), Complex64::new(-5.0, 0.0)]), "\u{2212}20 ± 30j, \u{2212}5");
    assert_eq!(pole_list(&[Complex64::new(0.0, 2.0), Complex64::new(0.0, -2.0)]), "±2j");
    // A pair whose imaginary part is below the level reads as two real poles.
    let tiny = Complex64::new(-1.0, 1e-15);
    assert_eq!(pole_list_above(&[tiny, tiny.conj()], 1e-12), "\u{2212}1, \u{2212}1");
    assert_eq!(complex_above(Complex64::new(1e-14, -4.0), 1e-12), "\u{2212}4j");
}

#[test]
fn the_setting_is_scoped_and_clamped() {
    assert_eq!(digits(), DEFAULT_DIGITS);
    let inner = with_digits(3, || (digits(), number(1305.15)));
    assert_eq!(inner, (3, "1310".to_string()));
    assert_eq!(digits(), DEFAULT_DIGITS);
    assert_eq!(with_digits(1, digits), MIN_DIGITS);
    assert_eq!(with_digits(40, digits), MAX_DIGITS);
}
