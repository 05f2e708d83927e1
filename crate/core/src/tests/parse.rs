//! Unit tests of [`crate::parse`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn matrix(rows: usize, columns: usize, values: &[f64]) -> DMatrix<f64> {
    DMatrix::from_row_slice(rows, columns, values)
}

// ---- plain text: accepted forms ------------------------------------------

#[test]
fn spaces_tabs_commas_and_mixes() {
    let expected = matrix(2, 3, &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0]);
    for text in ["1 2 3\n4 5 6", "1\t2\t3\n4\t5\t6", "1,2,3\n4,5,6", "1, 2  3\n4 ,5,\t6", "  1   2   3  \n\t4 5 6\t"] {
        assert_eq!(parse_matrix(text), Ok(expected.clone()), "text {text:?}");
    }
}

#[test]
fn crlf_line_endings_and_trailing_newline() {
    let expected = matrix(2, 2, &[1.0, 2.0, 3.0, 4.0]);
    assert_eq!(parse_matrix("1 2\r\n3 4\r\n"), Ok(expected.clone()));
    assert_eq!(parse_matrix("1,2,\r\n3,4,\r\n"), Ok(expected));
}

#[test]
fn blank_lines_are_ignored_and_not_counted() {
    let expected = matrix(2, 2, &[1.0, 2.0, 3.0, 4.0]);
    assert_eq!(parse_matrix("\n\n1 2\n   \n\t\n3 4\n\n"), Ok(expected.clone()));
    // Row numbering skips the blank lines: the "x" is on the third text line
    // but in matrix row 2.
    assert_eq!(parse_matrix("1 2\n\n3 x"), Err(MatrixParseError::BadToken { row: 2, column: 2, token: "x".into() }));
}

#[test]
fn trailing_comma_tolerated() {
    assert_eq!(parse_matrix("1,2,3,"), Ok(matrix(1, 3, &[1.0, 2.0, 3.0])));
    assert_eq!(parse_matrix("1,2,3 ,  "), Ok(matrix(1, 3, &[1.0, 2.0, 3.0])));
}

#[test]
fn number_syntax() {
    let m = parse_matrix("1e-3 -2.5E+4 +3 .5 4. -0 1E3 -.25").unwrap();
    let values: Vec<f64> = m.iter().copied().collect();
    assert_eq!(values, vec![1e-3, -2.5e4, 3.0, 0.5, 4.0, 0.0, 1000.0, -0.25]);
    // Tiny numbers underflow quietly to zero (IEEE 754 rounding of 1e-999); the smallest
    // subnormal is kept exactly.
    assert_eq!(parse_matrix("1e-999").unwrap()[(0, 0)].to_bits(), 0.0f64.to_bits());
    assert_eq!(parse_matrix("-1e-999").unwrap()[(0, 0)], 0.0);
    assert_eq!(parse_matrix("4.9406564584124654e-324").unwrap()[(0, 0)], f64::from_bits(1));
}

#[test]
fn single_entry_and_column() {
    assert_eq!(parse_matrix("  -7 "), Ok(matrix(1, 1, &[-7.0])));
    assert_eq!(parse_matrix("1\n2\n3"), Ok(matrix(3, 1, &[1.0, 2.0, 3.0])));
}

#[test]
fn byte_order_mark_ignored() {
    assert_eq!(parse_matrix("\u{feff}1 2\n3 4"), Ok(matrix(2, 2, &[1.0, 2.0, 3.0, 4.0])));
    assert_eq!(parse_matrix("\u{feff}[[1]]"), Ok(matrix(1, 1, &[1.0])));
}

// ---- plain text: errors ------------------------------------------------

#[test]
fn empty_inputs() {
    for text in ["", "   ", "\n\n", "\r\n\t \r\n", "\u{feff}"] {
        assert_eq!(parse_matrix(text), Err(MatrixParseError::Empty), "{text:?}");
        assert_eq!(parse_vector(text), Err(MatrixParseError::Empty), "{text:?}");
    }
}

#[test]
fn stray_tokens() {
    assert_eq!(parse_matrix("1 2 x"), Err(MatrixParseError::BadToken { row: 1, column: 3, token: "x".into() }));
    assert_eq!(parse_matrix("1 2 3\n4 5 6)"), Err(MatrixParseError::BadToken { row: 2, column: 3, token: "6)".into() }));
    // Semicolons are recognised as another notation's row separator, and explained.
    assert_eq!(parse_matrix("1;2"), Err(MatrixParseError::SemicolonRows { groups: 2 }));
    assert_eq!(parse_matrix("1 -"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "-".into() }));
    assert_eq!(parse_matrix("1 1e"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "1e".into() }));
}

#[test]
fn unicode_junk() {
    assert_eq!(parse_matrix("1 ☃ 3"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "☃".into() }));
    // The typographic minus is read as a minus.
    assert_eq!(parse_matrix("1 \u{2212}2"), Ok(matrix(1, 2, &[1.0, -2.0])));
    // Non-breaking spaces count as spaces.
    assert_eq!(parse_matrix("1\u{a0}2"), Ok(matrix(1, 2, &[1.0, 2.0])));
}

#[test]
fn non_finite_words_any_case() {
    for word in ["nan", "NaN", "inf", "-inf", "+Infinity", "INFINITY", "-NAN"] {
        let text = format!("1 2\n3 {word}");
        assert_eq!(parse_matrix(&text), Err(MatrixParseError::NotFinite { row: 2, column: 2, token: word.into() }), "{word}");
    }
}

#[test]
fn overflow_is_not_finite() {
    let err = parse_matrix("1e999").unwrap_err();
    assert_eq!(err, MatrixParseError::NotFinite { row: 1, column: 1, token: "1e999".into() });
    let message = err.to_string();
    assert!(message.contains("\"1e999\""), "{message}");
    assert!(message.contains("too large"), "{message}");
    let message = parse_matrix("inf").unwrap_err().to_string();
    assert!(message.contains("\"inf\""), "{message}");
    assert!(message.contains("not a finite number"), "{message}");
}

#[test]
fn empty_entries() {
    assert_eq!(parse_matrix("1,,2"), Err(MatrixParseError::EmptyEntry { row: 1, column: 2 }));
    assert_eq!(parse_matrix("1 2\n3, ,4"), Err(MatrixParseError::EmptyEntry { row: 2, column: 2 }));
    assert_eq!(parse_matrix(",1,2"), Err(MatrixParseError::EmptyEntry { row: 1, column: 1 }));
    assert_eq!(parse_matrix("1,2,,"), Err(MatrixParseError::EmptyEntry { row: 1, column: 3 }));
    assert_eq!(parse_matrix(","), Err(MatrixParseError::EmptyEntry { row: 1, column: 1 }));
}

#[test]
fn ragged_rows() {
    let err = parse_matrix("1 2 3\n4 5 6\n7 8").unwrap_err();
    assert_eq!(err, MatrixParseError::RaggedRow { row: 3, expected: 3, found: 2 });
    assert_eq!(err.to_string(), "row 3 has 2 entries but row 1 has 3; every row needs the same number of entries");
    assert_eq!(parse_matrix("1\n2 3"), Err(MatrixParseError::RaggedRow { row: 2, expected: 1, found: 2 }));
    // Blank lines do not shift the row number.
    assert_eq!(parse_matrix("1 2\n\n\n3"), Err(MatrixParseError::RaggedRow { row: 2, expected: 2, found: 1 }));
}

#[test]
fn first_error_in_reading_order_wins() {
    // Row 2 is ragged before row 3's bad token is reached.
    assert_eq!(parse_matrix("1 2\n3\n4 x"), Err(MatrixParseError::RaggedRow { row: 2, expected: 2, found: 1 }));
}

#[test]
fn long_tokens_are_shortened() {
    let junk = "y".repeat(500);
    match parse_matrix(&junk) {
        Err(MatrixParseError::BadToken { token, .. }) => {
            assert_eq!(token.chars().count(), MAX_TOKEN_CHARS + 1);
            assert!(token.ends_with('…'));
        }
        other => panic!("unexpected {other:?}"),
    }
}

// ---- JSON -------------------------------------------------------------

#[test]
fn json_nested_and_flat() {
    assert_eq!(parse_matrix("[[1,2],[3,4]]"), Ok(matrix(2, 2, &[1.0, 2.0, 3.0, 4.0])));
    assert_eq!(parse_matrix("  [\n  [1, 2.5e-1],\r\n  [-3, .5]\n]\n"), Ok(matrix(2, 2, &[1.0, 0.25, -3.0, 0.5])));
    assert_eq!(parse_matrix("[1, 2, 3]"), Ok(matrix(1, 3, &[1.0, 2.0, 3.0])));
    assert_eq!(parse_matrix("[[7]]"), Ok(matrix(1, 1, &[7.0])));
    assert_eq!(parse_matrix("[[1],[2],[3]]"), Ok(matrix(3, 1, &[1.0, 2.0, 3.0])));
}

#[test]
fn json_trailing_commas_tolerated() {
    assert_eq!(parse_matrix("[[1,2,],[3,4],]"), Ok(matrix(2, 2, &[1.0, 2.0, 3.0, 4.0])));
    assert_eq!(parse_matrix("[1,2,]"), Ok(matrix(1, 2, &[1.0, 2.0])));
}

#[test]
fn json_empty() {
    for text in ["[]", "[ ]", "[[]]", "[[], []]", " [\n] "] {
        assert_eq!(parse_matrix(text), Err(MatrixParseError::Empty), "{text:?}");
    }
}

#[test]
fn json_bad_and_non_finite_tokens() {
    assert_eq!(parse_matrix("[[1,2],[3,x]]"), Err(MatrixParseError::BadToken { row: 2, column: 2, token: "x".into() }));
    assert_eq!(parse_matrix("[1, null]"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "null".into() }));
    assert_eq!(parse_matrix("[[1, \"2\"]]"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "\"2\"".into() }));
    assert_eq!(parse_matrix("[[1],[NaN]]"), Err(MatrixParseError::NotFinite { row: 2, column: 1, token: "NaN".into() }));
    assert_eq!(parse_matrix("[[1e999]]"), Err(MatrixParseError::NotFinite { row: 1, column: 1, token: "1e999".into() }));
    assert_eq!(parse_matrix("[[1, 2#]]"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "2#".into() }));
}

#[test]
fn json_empty_entries() {
    assert_eq!(parse_matrix("[[1,,2]]"), Err(MatrixParseError::EmptyEntry { row: 1, column: 2 }));
    assert_eq!(parse_matrix("[[1,2],[,3,4]]"), Err(MatrixParseError::EmptyEntry { row: 2, column: 1 }));
    assert_eq!(parse_matrix("[,]"), Err(MatrixParseError::EmptyEntry { row: 1, column: 1 }));
}

#[test]
fn json_ragged() {
    assert_eq!(parse_matrix("[[1,2,3],[4,5]]"), Err(MatrixParseError::RaggedRow { row: 2, expected: 3, found: 2 }));
    assert_eq!(parse_matrix("[[1,2],[]]"), Err(MatrixParseError::RaggedRow { row: 2, expected: 2, found: 0 }));
}

fn json_position(text: &str) -> usize {
    match parse_matrix(text) {
        Err(MatrixParseError::Json { position, .. }) => position,
        other => panic!("expected a JSON error for {text:?}, got {other:?}"),
    }
}

#[test]
fn json_structure_errors() {
    // Unbalanced.
    assert_eq!(json_position("[[1,2],[3,4]"), 13);
    assert_eq!(json_position("[[1,2"), 6);
    assert_eq!(json_position("[1,2"), 5);
    assert_eq!(json_position("["), 2);
    assert_eq!(json_position("[[1]]]"), 6);
    // Too deep.
    assert_eq!(json_position("[[[1]]]"), 3);
    // Mixed numbers and rows.
    assert_eq!(json_position("[1,[2]]"), 4);
    assert_eq!(json_position("[[1],2]"), 6);
    // Missing commas.
    assert_eq!(json_position("[1 2]"), 4);
    assert_eq!(json_position("[[1][2]]"), 5);
    // Double comma between rows.
    assert_eq!(json_position("[[1],,[2]]"), 6);
    // Text after the end.
    assert_eq!(json_position("[[1]] x"), 7);
    assert_eq!(json_position("[1] [2]"), 5);
    // Positions count characters, not bytes.
    assert_eq!(json_position("[\u{a0}1 2]"), 5);
}

#[test]
fn json_error_messages_mention_tokens() {
    let message = parse_matrix("[[1]] junk").unwrap_err().to_string();
    assert!(message.contains("character 7"), "{message}");
    assert!(message.contains("\"junk\""), "{message}");
    let message = parse_matrix("[1 2]").unwrap_err().to_string();
    assert!(message.contains("\"2\""), "{message}");
    assert!(message.contains("comma"), "{message}");
}

// ---- vectors -------------------------------------------------------------

#[test]
fn vectors() {
    assert_eq!(parse_vector("1 2 3"), Ok(vec![1.0, 2.0, 3.0]));
    assert_eq!(parse_vector("1,2,3,"), Ok(vec![1.0, 2.0, 3.0]));
    assert_eq!(parse_vector("1\n2\r\n\n3\n"), Ok(vec![1.0, 2.0, 3.0]));
    assert_eq!(parse_vector("[1, 2, 3]"), Ok(vec![1.0, 2.0, 3.0]));
    assert_eq!(parse_vector("[[1, 2, 3]]"), Ok(vec![1.0, 2.0, 3.0]));
    assert_eq!(parse_vector("[[1], [2], [3]]"), Ok(vec![1.0, 2.0, 3.0]));
    assert_eq!(parse_vector("5"), Ok(vec![5.0]));
    assert_eq!(parse_vector("1 2\n3 4\n5 6"), Err(MatrixParseError::NotAVector { rows: 3, columns: 2 }));
    assert_eq!(parse_vector("[[1,2],[3,4]]"), Err(MatrixParseError::NotAVector { rows: 2, columns: 2 }));
    assert_eq!(parse_vector("1 x"), Err(MatrixParseError::BadToken { row: 1, column: 2, token: "x".into() }));
    assert_eq!(parse_vector("[]"), Err(MatrixParseError::Empty));
}

// ---- names ---------------------------------------------------------------

#[test]
fn names() {
    assert_eq!(parse_names(" x1, x2\nvelocity\r\n\t angle ,,\n"), vec!["x1", "x2", "velocity", "angle"]);
    assert_eq!(parse_names("cart position"), vec!["cart position"]);
    assert!(parse_names("").is_empty());
    assert!(parse_names(" , \n\t,").is_empty());
    assert_eq!(parse_names("\u{feff}a,b"), vec!["a", "b"]);
}

// ---- messages ------------------------------------------------------------

#[test]
fn display_messages() {
    let bad = MatrixParseError::BadToken { row: 2, column: 3, token: "x".into() };
    assert_eq!(
        bad.to_string(),
        "row 2, column 3: \"x\" is not a number; use digits, a decimal point and an \
             optional exponent such as 1.5e-3"
    );
    let empty_entry = MatrixParseError::EmptyEntry { row: 4, column: 2 };
    let message = empty_entry.to_string();
    assert!(message.contains("row 4, column 2"), "{message}");
    assert!(message.contains("comma"), "{message}");
    let ragged = MatrixParseError::RaggedRow { row: 2, expected: 3, found: 1 };
    assert!(ragged.to_string().starts_with("row 2 has 1 entry but row 1 has 3"));
    let not_vector = MatrixParseError::NotAVector { rows: 2, columns: 3 };
    assert!(not_vector.to_string().contains("2 rows and 3 columns"));
    assert!(MatrixParseError::Empty.to_string().contains("no numbers"));
    // Control characters in tokens are escaped, keeping the message on one line.
    let message = parse_matrix("1 a\u{7}b").unwrap_err().to_string();
    assert!(message.contains("\"a\\u{7}b\""), "{message}");
    let boxed: Box<dyn std::error::Error> = Box::new(bad);
    assert!(!boxed.to_string().is_empty());
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
    let alphabet: Vec<char> = "0123456789.-+eEj i±,;\t\n\r[]x\"\u{feff}☃".chars().collect();
    let mut rng = XorShift(0x9E37_79B9_7F4A_7C15);
    let mut accepted = 0;
    for _ in 0..6000 {
        let length = (rng.next() % 24) as usize;
        let text: String = (0..length).map(|_| alphabet[(rng.next() % alphabet.len() as u64) as usize]).collect();
        match parse_matrix(&text) {
            Ok(m) => {
                accepted += 1;
                assert!(m.nrows() > 0 && m.ncols() > 0);
                assert!(m.iter().all(|v| v.is_finite()));
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
        match parse_vector(&text) {
            Ok(v) => assert!(!v.is_empty()),
            Err(e) => assert!(!e.to_string().is_empty()),
        }
        for name in parse_names(&text) {
            assert!(!name.is_empty());
            assert_eq!(name.trim(), name);
        }
    }
    assert!(accepted > 0, "the generator should hit some valid matrices");
}

#[test]
fn structured_random_json_never_panics() {
    // Bias towards bracket-heavy text so the JSON path is exercised deeply.
    let alphabet: Vec<char> = "[[[]]],,, 12.-e".chars().collect();
    let mut rng = XorShift(12345);
    for _ in 0..4000 {
        let length = 1 + (rng.next() % 20) as usize;
        let mut text = String::from("[");
        for _ in 0..length {
            text.push(alphabet[(rng.next() % alphabet.len() as u64) as usize]);
        }
        if let Err(e) = parse_matrix(&text) {
            assert!(!e.to_string().is_empty());
        }
    }
}

#[test]
fn decimal_commas_are_recognised_not_misread() {
    // Entries separated by spaces with a comma between digits: a decimal comma, refused.
    let err = parse_vector("0,5 0,5").unwrap_err();
    assert_eq!(err, MatrixParseError::DecimalComma { row: 1, token: "0,5".into() });
    assert!(err.to_string().contains("\"0.5\""), "{err}");
    assert!(matches!(parse_matrix("1 2,5\n3 4").unwrap_err(), MatrixParseError::DecimalComma { row: 1, .. }));
    // Commas as separators still work, with or without spaces.
    assert_eq!(parse_vector("1,2,3").unwrap(), vec![1.0, 2.0, 3.0]);
    assert_eq!(parse_vector("1, 2, 3").unwrap(), vec![1.0, 2.0, 3.0]);
    // Ambiguous alone ("1,5" may be two numbers): read as two, with a hint for count messages.
    assert_eq!(parse_vector("1,5").unwrap(), vec![1.0, 5.0]);
    assert!(decimal_comma_hint("1,5").unwrap().contains("\"1.5\""));
    assert!(decimal_comma_hint("0,001").is_some());
    assert!(decimal_comma_hint("1, 5").is_none() && decimal_comma_hint("1,2,3").is_none());
}

#[test]
fn semicolon_rows_are_recognised_and_explained() {
    let err = parse_matrix("1 2; 3 4").unwrap_err();
    assert_eq!(err, MatrixParseError::SemicolonRows { groups: 2 });
    let text = err.to_string();
    assert!(text.contains("2 groups separated by semicolons") && text.contains("line of its own"), "{text}");
    // A trailing semicolon does not count as a group.
    assert_eq!(parse_matrix("1 2;\n3 4;").unwrap_err(), MatrixParseError::SemicolonRows { groups: 2 });
}

#[test]
fn bracketed_rows_are_recognised_and_explained() {
    for text in ["[1 2]\n[3 4]", "[1, 2],\n[3, 4]", "  [1 2]\n\n[3 4]\n[5 6]"] {
        let err = parse_matrix(text).unwrap_err();
        assert!(matches!(err, MatrixParseError::BracketedRows { .. }), "{text:?}: {err:?}");
        assert!(err.to_string().contains("row in brackets"), "{err}");
    }
    assert_eq!(parse_matrix("[1 2]\n[3 4]\n[5 6]").unwrap_err(), MatrixParseError::BracketedRows { lines: 3 });
    // One JSON list of rows is still read, across lines.
    assert_eq!(parse_matrix("[[1, 2],\n [3, 4]]").unwrap(), DMatrix::from_row_slice(2, 2, &[1.0, 2.0, 3.0, 4.0]));
    // A single bracketed line without commas keeps the JSON message.
    assert!(matches!(parse_matrix("[1 2]").unwrap_err(), MatrixParseError::Json { .. }));
}
