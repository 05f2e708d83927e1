//! Unit tests of [`crate::poles`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

fn bad(index: usize, token: &str) -> Result<Vec<Complex64>, PoleParseError> {
    Err(PoleParseError::BadToken { index, token: token.into() })
}

// ---- accepted forms ----------------------------------------------------

#[test]
fn real_poles_and_separators() {
    let expected = vec![c(-1.0, 0.0), c(-2.0, 0.0), c(-3.0, 0.0)];
    for text in ["-1, -2, -3", "-1 -2 -3", "-1,-2,-3", "-1\n-2\n-3", "-1\r\n-2\r\n-3\r\n", "\t-1\t-2\t-3\t", " , -1 ,, -2 ,\n, -3 ,"] {
        assert_eq!(parse_poles(text), Ok(expected.clone()), "{text:?}");
    }
}

#[test]
fn real_number_syntax() {
    assert_eq!(parse_poles("3.5e-1 +4 -.5 1E3 -2.5E+2 0 7."), Ok(vec![c(0.35, 0.0), c(4.0, 0.0), c(-0.5, 0.0), c(1000.0, 0.0), c(-250.0, 0.0), c(0.0, 0.0), c(7.0, 0.0)]));
}

#[test]
fn complex_poles() {
    assert_eq!(parse_poles("-1+2j, -1-2j"), Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)]));
    assert_eq!(parse_poles("-1+2i -1-2I"), Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)]));
    assert_eq!(parse_poles("-1+j, -1-j"), Ok(vec![c(-1.0, 1.0), c(-1.0, -1.0)]));
    assert_eq!(parse_poles("-3-1e-2j -3+1E-2J"), Ok(vec![c(-3.0, -0.01), c(-3.0, 0.01)]));
    assert_eq!(parse_poles("1e2+2.5e+1j, 1e2-2.5e+1j"), Ok(vec![c(100.0, 25.0), c(100.0, -25.0)]));
}

#[test]
fn imaginary_poles() {
    assert_eq!(parse_poles("2j, -2j"), Ok(vec![c(0.0, 2.0), c(0.0, -2.0)]));
    assert_eq!(parse_poles("+j -j"), Ok(vec![c(0.0, 1.0), c(0.0, -1.0)]));
    assert_eq!(parse_poles("j, -j"), Ok(vec![c(0.0, 1.0), c(0.0, -1.0)]));
    assert_eq!(parse_poles("-0.5i, .5i"), Ok(vec![c(0.0, -0.5), c(0.0, 0.5)]));
    // Two imaginary items do not join each other.
    assert_eq!(parse_poles("2j -2j"), Ok(vec![c(0.0, 2.0), c(0.0, -2.0)]));
    // A comma keeps a real pole and an imaginary one apart.
    assert_eq!(parse_poles("-3, -2j, 2j"), Ok(vec![c(-3.0, 0.0), c(0.0, -2.0), c(0.0, 2.0)]));
}

#[test]
fn conjugate_pairs() {
    let pair = Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)]);
    for text in ["-1±2j", "-1+-2j", "-1 ± 2j", "-1 +- 2j", "-1 ±2j", "-1± 2i"] {
        assert_eq!(parse_poles(text), pair, "{text:?}");
    }
    assert_eq!(parse_poles("±2j"), Ok(vec![c(0.0, 2.0), c(0.0, -2.0)]));
    assert_eq!(parse_poles("+-j"), Ok(vec![c(0.0, 1.0), c(0.0, -1.0)]));
    assert_eq!(parse_poles("-1±2j, -3, -4±j"), Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0), c(-3.0, 0.0), c(-4.0, 1.0), c(-4.0, -1.0)]));
    // A zero imaginary part gives a repeated real pole.
    assert_eq!(parse_poles("-1±0j"), Ok(vec![c(-1.0, 0.0), c(-1.0, 0.0)]));
}

#[test]
fn spaces_around_the_joining_sign() {
    assert_eq!(parse_poles("-1 + 2j, -1 - 2j"), Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)]));
    assert_eq!(parse_poles("-1 -2j -1 +2j"), Ok(vec![c(-1.0, -2.0), c(-1.0, 2.0)]));
    assert_eq!(parse_poles("- 1 + 2j\n- 1 - 2j"), Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)]));
    // A real followed by a signed real stays two poles.
    assert_eq!(parse_poles("1 - 2"), Ok(vec![c(1.0, 0.0), c(-2.0, 0.0)]));
}

#[test]
fn no_negative_zero_parts() {
    let poles = parse_poles("-1-0j, -0j").unwrap();
    for z in poles {
        assert!(z.im == 0.0 && z.im.is_sign_positive(), "{z:?}");
    }
}

// ---- errors ------------------------------------------------------------

#[test]
fn empty() {
    for text in ["", "  ", "\n\r\n", ",,, ,", "\u{feff}"] {
        assert_eq!(parse_poles(text), Err(PoleParseError::Empty), "{text:?}");
    }
}

#[test]
fn semicolons_rejected() {
    let err = parse_poles("-1; -2").unwrap_err();
    assert_eq!(err, PoleParseError::BadToken { index: 2, token: ";".into() });
    let message = err.to_string();
    assert!(message.contains("\";\""), "{message}");
    assert!(message.contains("semicolons do not separate poles"), "{message}");
    assert_eq!(parse_poles(";"), bad(1, ";"));
    assert_eq!(parse_poles("-1, -2;"), bad(3, ";"));
}

#[test]
fn number_after_j_rejected_with_suggestion() {
    let err = parse_poles("-1+j2, -1-j2").unwrap_err();
    assert_eq!(err, PoleParseError::BadToken { index: 1, token: "-1+j2".into() });
    let message = err.to_string();
    assert!(message.contains("\"-1+j2\""), "{message}");
    assert!(message.contains("-1+2j"), "{message}");
    let err = parse_poles("j2").unwrap_err();
    assert_eq!(err, PoleParseError::BadToken { index: 1, token: "j2".into() });
    assert!(err.to_string().contains("as in 2j"), "{err}");
    let err = parse_poles("-4, i0.5").unwrap_err();
    assert!(err.to_string().contains("as in 0.5i"), "{err}");
}

#[test]
fn glued_items_rejected() {
    let err = parse_poles("-1-2").unwrap_err();
    assert_eq!(err, PoleParseError::BadToken { index: 1, token: "-1-2".into() });
    assert!(err.to_string().contains("comma or space"), "{err}");
    assert_eq!(parse_poles("-5, -1-2j-1+2j"), bad(2, "-1-2j-1"));
    assert_eq!(parse_poles("2j-2j"), bad(1, "2j-2j"));
}

#[test]
fn bad_words() {
    assert_eq!(parse_poles("-1, x"), bad(2, "x"));
    assert_eq!(parse_poles("-1, -2x"), bad(2, "-2x"));
    assert_eq!(parse_poles("(-1)"), bad(1, "("));
    assert_eq!(parse_poles("-1 + 2xj"), bad(1, "+ 2xj"));
    assert_eq!(parse_poles("1e-"), bad(1, "1e-"));
    assert_eq!(parse_poles("-1, 2jj"), bad(2, "2jj"));
    assert_eq!(parse_poles("-1, ☃"), bad(2, "☃"));
    // The typographic minus the page's readouts print is read as a minus (issue: a readout
    // copied back into the pole list must work).
    assert_eq!(parse_poles("\u{2212}1, \u{2212}2\u{b1}3j").unwrap(), vec![Complex64::new(-1.0, 0.0), Complex64::new(-2.0, 3.0), Complex64::new(-2.0, -3.0)]);
    let message = parse_poles("-1, x").unwrap_err().to_string();
    assert!(message.contains("item 2"), "{message}");
    assert!(message.contains("\"x\""), "{message}");
}

#[test]
fn bad_signs() {
    assert_eq!(parse_poles("-1-+2j"), bad(1, "-+"));
    assert_eq!(parse_poles("--1"), bad(1, "--"));
    assert_eq!(parse_poles("-1, -"), bad(2, "-"));
    assert_eq!(parse_poles("-1, -, -2"), bad(2, "-"));
    assert_eq!(parse_poles("-1 - - 2j"), bad(2, "-"));
    assert!(parse_poles("--1").unwrap_err().to_string().contains("single + or - sign"));
    assert!(parse_poles("+").unwrap_err().to_string().contains("followed by a number"));
}

#[test]
fn plus_minus_needs_an_imaginary_part() {
    let err = parse_poles("±3").unwrap_err();
    assert_eq!(err, PoleParseError::BadToken { index: 1, token: "±3".into() });
    assert!(err.to_string().contains("± must be followed by an imaginary part"));
    assert_eq!(parse_poles("-1 ± 3"), bad(2, "± 3"));
    assert_eq!(parse_poles("-1 +- 3"), bad(2, "+- 3"));
}

#[test]
fn non_finite() {
    for (text, index, token) in
        [("nan", 1, "nan"), ("-1, inf", 2, "inf"), ("-1, -Infinity", 2, "-Infinity"), ("-1, +NaN", 2, "+NaN"), ("1e999", 1, "1e999"), ("-1 + 1e999j", 1, "+ 1e999j"), ("-1 ± infj", 1, "± infj")]
    {
        assert_eq!(parse_poles(text), Err(PoleParseError::NotFinite { index, token: token.into() }), "{text:?}");
    }
    let message = parse_poles("1e999").unwrap_err().to_string();
    assert!(message.contains("\"1e999\""), "{message}");
    assert!(message.contains("too large"), "{message}");
    let message = parse_poles("-inf").unwrap_err().to_string();
    assert!(message.contains("\"-inf\""), "{message}");
    assert!(message.contains("not a finite number"), "{message}");
}

#[test]
fn unpaired_from_parse() {
    let err = parse_poles("-1+2j, -3").unwrap_err();
    assert_eq!(err, PoleParseError::Unpaired(PoleError::MissingConjugate { pole: c(-1.0, 2.0), expected: c(-1.0, -2.0) }));
    assert_eq!(
        err.to_string(),
        "pole \"-1+2j\" has no partner \"-1-2j\"; complex poles must come in conjugate \
             pairs, so add -1-2j or write the pair as -1±2j"
    );
    assert!(std::error::Error::source(&err).is_some());
    // `-3 -2j 2j` reads as `-3-2j` and `2j`, which do not pair.
    assert!(matches!(parse_poles("-3 -2j 2j"), Err(PoleParseError::Unpaired(PoleError::MissingConjugate { .. }))));
}

// ---- conjugate check -----------------------------------------------------

#[test]
fn conjugate_check() {
    assert_eq!(check_conjugate_pairs(&[]), Ok(()));
    assert_eq!(check_conjugate_pairs(&[c(-1.0, 0.0), c(-2.0, 0.0)]), Ok(()));
    assert_eq!(check_conjugate_pairs(&[c(-1.0, -2.0), c(-3.0, 0.0), c(-1.0, 2.0)]), Ok(()));
    assert_eq!(check_conjugate_pairs(&[c(-1.0, 2.0)]), Err(PoleError::MissingConjugate { pole: c(-1.0, 2.0), expected: c(-1.0, -2.0) }));
    // Multiplicities must match.
    assert_eq!(check_conjugate_pairs(&[c(-1.0, 2.0), c(-1.0, 2.0), c(-1.0, -2.0)]), Err(PoleError::MissingConjugate { pole: c(-1.0, 2.0), expected: c(-1.0, -2.0) }));
    assert_eq!(check_conjugate_pairs(&[c(-1.0, 2.0), c(-1.0, -2.0), c(-1.0, 2.0), c(-1.0, -2.0)]), Ok(()));
    // Tolerance is relative.
    assert_eq!(check_conjugate_pairs(&[c(-1e6, 1e6), c(-1e6, -1e6 * (1.0 + 1e-14))]), Ok(()));
    assert!(check_conjugate_pairs(&[c(-1.0, 1.0), c(-1.0, -1.0 - 1e-9)]).is_err());
    // Not finite.
    assert_eq!(check_conjugate_pairs(&[c(-1.0, 0.0), c(f64::NAN, 0.0)]), Err(PoleError::NotFinite { index: 2 }));
    assert_eq!(check_conjugate_pairs(&[c(0.0, f64::INFINITY)]), Err(PoleError::NotFinite { index: 1 }));
    assert!(PoleError::NotFinite { index: 2 }.to_string().contains("pole 2"));
}

// ---- sorting and formatting ------------------------------------------------

#[test]
fn sorting() {
    let mut poles = vec![c(-1.0, -2.0), c(-0.5, 0.0), c(-3.0, 0.0), c(-1.0, 2.0), c(f64::NAN, 0.0)];
    sort_for_display(&mut poles);
    assert_eq!(poles[0], c(-3.0, 0.0));
    assert_eq!(poles[1], c(-1.0, 2.0));
    assert_eq!(poles[2], c(-1.0, -2.0));
    assert_eq!(poles[3], c(-0.5, 0.0));
    assert!(poles[4].re.is_nan());
}

#[test]
fn formatting_single_poles() {
    assert_eq!(format_complex(c(-2.0, 0.0)), "-2");
    assert_eq!(format_complex(c(-1.0, 2.0)), "-1+2j");
    assert_eq!(format_complex(c(-1.0, -2.0)), "-1-2j");
    assert_eq!(format_complex(c(-1.5, -0.0)), "-1.5");
    assert_eq!(format_complex(c(0.0, 2.0)), "2j");
    assert_eq!(format_complex(c(-0.0, -2.0)), "-2j");
    assert_eq!(format_complex(c(-0.0, 0.0)), "0");
    assert_eq!(format_complex(c(0.1, 0.0)), "0.1");
    assert_eq!(format_complex(c(-1e-7, 3e20)), "-1e-7+3e20j");
    assert_eq!(format_complex(c(1.0 / 3.0, 0.0)), "0.3333333333333333");
    assert_eq!(format_complex(c(f64::NAN, f64::INFINITY)), "NaN+infj");
}

#[test]
fn formatting_lists() {
    let poles = [c(-1.0, 2.0), c(-3.0, 0.0), c(-1.0, -2.0), c(0.0, -0.5), c(0.0, 0.5)];
    assert_eq!(format_pole_list(&poles), "-1±2j, -3, ±0.5j");
    assert_eq!(format_pole_list(&[]), "");
    assert_eq!(format_pole_list(&[c(-1.0, 2.0)]), "-1+2j");
    assert_eq!(format_pole_list(&[c(-1.0, 2.0), c(-1.0, 2.0), c(-1.0, -2.0)]), "-1±2j, -1+2j");
}

#[test]
fn formatting_round_trips() {
    let poles = vec![
        c(-1.0 / 3.0, 2.0_f64.sqrt()),
        c(-1.0 / 3.0, -(2.0_f64.sqrt())),
        c(-123456.789, 0.0),
        c(-1e-9, 1e-300),
        c(-1e-9, -1e-300),
        c(0.0, 7.25),
        c(0.0, -7.25),
        c(-f64::MAX, 0.0),
        c(5e-324, 0.0),
        c(-2.0, 0.0),
    ];
    let single: Vec<String> = poles.iter().map(|z| format_complex(*z)).collect();
    assert_eq!(parse_poles(&single.join(", ")), Ok(poles.clone()));
    // The grouped form reads back to the same multiset.
    let grouped = format_pole_list(&poles);
    let mut back = parse_poles(&grouped).unwrap();
    let mut expected = poles.clone();
    sort_for_display(&mut back);
    sort_for_display(&mut expected);
    assert_eq!(back, expected, "{grouped}");
}

#[test]
fn display_messages() {
    assert!(PoleParseError::Empty.to_string().contains("no poles"));
    let message = PoleParseError::BadToken { index: 3, token: "abc".into() }.to_string();
    assert!(message.starts_with("item 3 of the pole list: \"abc\""), "{message}");
    let message = parse_poles("-1, 1;2").unwrap_err().to_string();
    assert!(message.contains("semicolons"), "{message}");
    // Long junk is shortened.
    let junk = "q".repeat(300);
    match parse_poles(&junk) {
        Err(PoleParseError::BadToken { token, .. }) => {
            assert_eq!(token.chars().count(), MAX_TOKEN_CHARS + 1)
        }
        other => panic!("unexpected {other:?}"),
    }
}

// ---- robustness ------------------------------------------------------------

struct XorShift(u64);

impl XorShift {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        self.0 = x;
        x
    }
}

#[test]
fn random_strings_never_panic() {
    let alphabet: Vec<char> = "0123456789.-+eEj i±,;\t\n\r[]xJI\u{2212}☃".chars().collect();
    let mut rng = XorShift(0x2545_F491_4F6C_DD1D);
    let mut accepted = 0;
    for _ in 0..8000 {
        let length = (rng.next() % 20) as usize;
        let text: String = (0..length).map(|_| alphabet[(rng.next() % alphabet.len() as u64) as usize]).collect();
        match parse_poles(&text) {
            Ok(mut poles) => {
                accepted += 1;
                assert!(!poles.is_empty());
                assert_eq!(check_conjugate_pairs(&poles), Ok(()));
                let listed = format_pole_list(&poles);
                // The written list reads back to the same poles, bit for bit, in some order.
                let mut reread = parse_poles(&listed).unwrap_or_else(|e| panic!("{text:?} -> {listed:?} -> {e}"));
                let key = |z: &Complex64| (z.re.to_bits(), z.im.to_bits());
                let mut original = poles.clone();
                original.sort_by_key(key);
                reread.sort_by_key(key);
                assert_eq!(reread, original, "{text:?} -> {listed:?}");
                sort_for_display(&mut poles);
                for z in &poles {
                    assert!(!format_complex(*z).is_empty());
                }
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    }
    assert!(accepted > 0, "the generator should hit some valid lists");
}

#[test]
fn random_values_never_panic() {
    let specials = [0.0, -0.0, 1.0, -1.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY, f64::MAX, f64::MIN_POSITIVE, 5e-324];
    let mut rng = XorShift(99);
    for _ in 0..3000 {
        let n = (rng.next() % 6) as usize;
        let mut poles: Vec<Complex64> = (0..n)
            .map(|_| {
                let re = specials[(rng.next() % specials.len() as u64) as usize];
                let im = specials[(rng.next() % specials.len() as u64) as usize];
                c(re, im)
            })
            .collect();
        let _ = check_conjugate_pairs(&poles);
        let _ = format_pole_list(&poles);
        sort_for_display(&mut poles);
        for z in &poles {
            let _ = format_complex(*z);
        }
    }
}

#[test]
fn decimal_commas_in_a_spaced_pole_list_are_refused() {
    let err = parse_poles("-1,5 -2,5").unwrap_err();
    assert_eq!(err, PoleParseError::DecimalComma { token: "-1,5".into() });
    assert!(err.to_string().contains("\"-1.5\""), "{err}");
    // Commas as separators still work.
    assert_eq!(parse_poles("-1,-2").unwrap().len(), 2);
    assert_eq!(parse_poles("-1, -2 -3").unwrap().len(), 3);
}
