//! Reading matrices, vectors and name lists from text typed or pasted by a user.
//!
//! Nothing here panics, whatever the input; every problem is reported as a
//! [`MatrixParseError`] whose message gives the 1-based place, quotes the offending
//! text and says what to change.
//!
//! # Numbers
//!
//! An entry is a decimal number in Rust's floating-point syntax: an optional sign,
//! digits with an optional decimal point, and an optional exponent. Examples: `3`,
//! `-2.5`, `+3`, `.5`, `4.`, `1e-3`, `-2.5E+4`. The words `nan`, `inf` and
//! `infinity` (in any letter case, with or without a sign) are rejected, and so are
//! numbers too large to represent, such as `1e999` ([`MatrixParseError::NotFinite`]).
//! Commas always separate entries, so the decimal separator must be a point.
//!
//! # Plain text (the default)
//!
//! - One matrix row per line; `\n` and `\r\n` line endings both work.
//! - Blank and whitespace-only lines are skipped and are **not counted** when rows are
//!   numbered: "row 2" in a message means the second non-blank line, which is the
//!   second row of the matrix.
//! - Entries are separated by spaces, tabs, commas or any mix of them, so a
//!   spreadsheet paste works: `1,2,3`, `1<tab>2<tab>3`, `1 2 3`, `1, 2  3`.
//! - One trailing comma at the end of a line is tolerated (`1,2,3,`).
//! - Two commas with nothing but spaces between them (`1,,2`), or a comma at the start
//!   of a line, leave an empty entry: [`MatrixParseError::EmptyEntry`].
//! - Anything that is not a number (`x`, `3)`, ...) is a [`MatrixParseError::BadToken`].
//! - Every row must have as many entries as the first row
//!   ([`MatrixParseError::RaggedRow`]).
//! - "Column" in a message is the 1-based entry number within the row.
//!
//! # JSON arrays
//!
//! If the text, after leading whitespace, starts with `[`, it is read as a JSON array:
//!
//! - a list of rows, `[[1, 2], [3, 4]]`, where each row is a list of numbers; or
//! - a flat list, `[1, 2, 3]`, which is a single row.
//!
//! Entries and rows are separated by commas; whitespace (including new lines) may
//! appear anywhere between them. A trailing comma before a `]` is tolerated, and
//! numbers use the syntax above (slightly more permissive than strict JSON). `[]` and
//! lists of empty rows contain no numbers, which is [`MatrixParseError::Empty`].
//! Here "row" means which inner list (1-based) and "column" which entry within it.
//! Structural problems (a missing or extra bracket, a missing comma, nesting deeper
//! than two levels, mixing numbers and rows, text after the final `]`) are reported as
//! [`MatrixParseError::Json`] with the 1-based character position in the text.
//!
//! # Vectors
//!
//! [`parse_vector`] accepts the same text as [`parse_matrix`] as long as the result
//! is a single row or a single column (one number per line works, as does a JSON flat
//! list); anything with at least two rows and two columns is a
//! [`MatrixParseError::NotAVector`].
//!
//! # Names
//!
//! [`parse_names`] splits on commas, new lines and tabs, trims each name and drops
//! the empty ones. It never fails.
//!
//! A leading byte-order mark (U+FEFF), which some editors write, is ignored everywhere.

use nalgebra::DMatrix;
use std::fmt;

/// Offending text longer than this many characters is shortened in errors.
const MAX_TOKEN_CHARS: usize = 40;

/// Why a piece of matrix or vector text could not be read.
///
/// All rows, columns and positions are 1-based. A quoted token longer than 40
/// characters is shortened and ends with `…`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum MatrixParseError {
    /// The text contains no numbers at all.
    Empty,
    /// An entry that is not a number.
    BadToken {
        row: usize,
        column: usize,
        token: String,
    },
    /// `nan`, `inf`, `infinity`, or a number too large to represent (such as `1e999`).
    NotFinite {
        row: usize,
        column: usize,
        token: String,
    },
    /// Two commas with nothing between them, or a comma at the start of a row.
    EmptyEntry { row: usize, column: usize },
    /// A row whose number of entries differs from the first row's.
    RaggedRow {
        row: usize,
        expected: usize,
        found: usize,
    },
    /// A structural problem in JSON text, at a 1-based character position.
    Json { position: usize, message: String },
    /// [`parse_vector`] was given a matrix with at least two rows and two columns.
    NotAVector { rows: usize, columns: usize },
}

impl fmt::Display for MatrixParseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            MatrixParseError::Empty => write!(
                f,
                "no numbers found; type one matrix row per line with the entries \
                 separated by spaces, tabs or commas, for example 1 2 on the first line and 3 4 on the second"
            ),
            MatrixParseError::BadToken { row, column, token } => {
                write!(
                    f,
                    "row {row}, column {column}: {token:?} is not a number; use digits, \
                     a decimal point and an optional exponent such as 1.5e-3"
                )?;
                if token.contains('\u{2212}') {
                    write!(
                        f,
                        " (the character \u{2212} is a typographic minus; type the ordinary - key instead)"
                    )?;
                }
                Ok(())
            }
            MatrixParseError::NotFinite { row, column, token } => {
                if names_non_finite(token) {
                    write!(
                        f,
                        "row {row}, column {column}: {token:?} is not a finite number; \
                         replace it with an ordinary number"
                    )
                } else {
                    write!(
                        f,
                        "row {row}, column {column}: {token:?} is too large in magnitude \
                         (the limit is about 1.8e308); use a smaller number"
                    )
                }
            }
            MatrixParseError::EmptyEntry { row, column } => write!(
                f,
                "row {row}, column {column} is empty (a comma with nothing before it); \
                 put a number there or remove the extra comma"
            ),
            MatrixParseError::RaggedRow {
                row,
                expected,
                found,
            } => write!(
                f,
                "row {row} has {found} {} but row 1 has {expected}; every row needs the \
                 same number of entries",
                if *found == 1 { "entry" } else { "entries" }
            ),
            MatrixParseError::Json { position, message } => {
                write!(f, "JSON text, character {position}: {message}")
            }
            MatrixParseError::NotAVector { rows, columns } => write!(
                f,
                "expected a single row or a single column of numbers but found a matrix \
                 with {rows} rows and {columns} columns; put all the values on one line, \
                 or one value per line"
            ),
        }
    }
}

impl std::error::Error for MatrixParseError {}

/// Parses a matrix from plain text (one row per line) or from a JSON array.
///
/// See the [module documentation](self) for the accepted grammar.
pub fn parse_matrix(text: &str) -> Result<DMatrix<f64>, MatrixParseError> {
    let Grid {
        rows,
        columns,
        values,
    } = parse_grid(text)?;
    // from_row_slice asserts that the length matches; GridBuilder ensures it.
    Ok(DMatrix::from_row_slice(rows, columns, &values)) // invariant: values.len() == rows * columns
}

/// Parses a vector: a single row, a single column (one number per line), or a JSON
/// flat list such as `[1, 2, 3]`. Empty text is [`MatrixParseError::Empty`]; a true
/// matrix is [`MatrixParseError::NotAVector`].
pub fn parse_vector(text: &str) -> Result<Vec<f64>, MatrixParseError> {
    let grid = parse_grid(text)?;
    if grid.rows == 1 || grid.columns == 1 {
        // Row-major storage of a single row or a single column is the vector itself.
        Ok(grid.values)
    } else {
        Err(MatrixParseError::NotAVector {
            rows: grid.rows,
            columns: grid.columns,
        })
    }
}

/// Splits a list of names on commas, new lines and tabs; trims each name and drops
/// empty ones. For example `"x1, x2\nvelocity"` gives `["x1", "x2", "velocity"]`.
pub fn parse_names(text: &str) -> Vec<String> {
    let text = strip_byte_order_mark(text);
    text.split([',', '\n', '\r', '\t'])
        .map(str::trim)
        .filter(|name| !name.is_empty())
        .map(String::from)
        .collect()
}

// ---------------------------------------------------------------------------
// Shared pieces
// ---------------------------------------------------------------------------

/// A parsed rectangle of numbers, stored row by row.
#[derive(Debug)]
struct Grid {
    rows: usize,
    columns: usize,
    values: Vec<f64>,
}

/// Collects rows and checks that they all have the first row's length.
#[derive(Debug, Default)]
struct GridBuilder {
    columns: Option<usize>,
    rows: usize,
    values: Vec<f64>,
}

impl GridBuilder {
    fn push_row(&mut self, row: usize, entries: &[f64]) -> Result<(), MatrixParseError> {
        match self.columns {
            None => self.columns = Some(entries.len()),
            Some(expected) if expected != entries.len() => {
                return Err(MatrixParseError::RaggedRow {
                    row,
                    expected,
                    found: entries.len(),
                });
            }
            Some(_) => {}
        }
        self.values.extend_from_slice(entries);
        self.rows += 1;
        Ok(())
    }

    fn finish(self) -> Result<Grid, MatrixParseError> {
        match self.columns {
            Some(columns) if columns > 0 && !self.values.is_empty() => Ok(Grid {
                rows: self.rows,
                columns,
                values: self.values,
            }),
            _ => Err(MatrixParseError::Empty),
        }
    }
}

fn strip_byte_order_mark(text: &str) -> &str {
    text.strip_prefix('\u{feff}').unwrap_or(text)
}

fn parse_grid(text: &str) -> Result<Grid, MatrixParseError> {
    let text = strip_byte_order_mark(text);
    if text.trim_start().starts_with('[') {
        parse_json_grid(text)
    } else {
        parse_plain_grid(text)
    }
}

/// Why a single token is not an acceptable number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NumberProblem {
    NotANumber,
    NotFinite,
}

/// True for the words `nan`, `inf`, `infinity` in any case, with an optional sign.
fn names_non_finite(token: &str) -> bool {
    let unsigned = token
        .strip_prefix(|c: char| c == '+' || c == '-')
        .unwrap_or(token);
    let lower = unsigned.to_ascii_lowercase();
    matches!(lower.as_str(), "nan" | "inf" | "infinity")
}

fn parse_number(token: &str) -> Result<f64, NumberProblem> {
    if names_non_finite(token) {
        return Err(NumberProblem::NotFinite);
    }
    match token.parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(NumberProblem::NotFinite),
        Err(_) => Err(NumberProblem::NotANumber),
    }
}

/// Copies a token for an error message, shortening very long ones.
fn shorten(token: &str) -> String {
    if token.chars().count() <= MAX_TOKEN_CHARS {
        token.to_string()
    } else {
        let mut short: String = token.chars().take(MAX_TOKEN_CHARS).collect();
        short.push('…');
        short
    }
}

fn entry_value(token: &str, row: usize, column: usize) -> Result<f64, MatrixParseError> {
    parse_number(token).map_err(|problem| match problem {
        NumberProblem::NotANumber => MatrixParseError::BadToken {
            row,
            column,
            token: shorten(token),
        },
        NumberProblem::NotFinite => MatrixParseError::NotFinite {
            row,
            column,
            token: shorten(token),
        },
    })
}

// ---------------------------------------------------------------------------
// Plain text
// ---------------------------------------------------------------------------

fn parse_plain_grid(text: &str) -> Result<Grid, MatrixParseError> {
    let mut builder = GridBuilder::default();
    let mut row = 0;
    // `split('\n')` keeps a trailing '\r', which counts as whitespace below.
    for line in text.split('\n') {
        if line.trim().is_empty() {
            continue;
        }
        row += 1;
        let entries = parse_plain_row(line, row)?;
        builder.push_row(row, &entries)?;
    }
    builder.finish()
}

fn parse_plain_row(line: &str, row: usize) -> Result<Vec<f64>, MatrixParseError> {
    let piece_count = line.split(',').count();
    let mut entries = Vec::new();
    for (piece_index, piece) in line.split(',').enumerate() {
        let mut piece_has_entry = false;
        for token in piece.split_whitespace() {
            piece_has_entry = true;
            let column = entries.len() + 1;
            entries.push(entry_value(token, row, column)?);
        }
        // A blank piece is fine only as the very last one after a comma (a trailing
        // comma). Earlier blank pieces have already failed, so the piece before a
        // tolerated trailing comma always held an entry.
        let is_trailing = piece_index > 0 && piece_index + 1 == piece_count;
        if !piece_has_entry && !is_trailing {
            return Err(MatrixParseError::EmptyEntry {
                row,
                column: entries.len() + 1,
            });
        }
    }
    Ok(entries)
}

// ---------------------------------------------------------------------------
// JSON arrays
// ---------------------------------------------------------------------------

#[derive(Debug, Clone, PartialEq, Eq)]
enum JsonToken {
    Open,
    Close,
    Comma,
    /// A run of characters other than whitespace, commas and brackets.
    Atom(String),
    End,
}

/// Splits JSON text into tokens. Positions are 1-based character positions.
#[derive(Debug)]
struct JsonLexer {
    chars: Vec<char>,
    next: usize,
}

impl JsonLexer {
    fn new(text: &str) -> Self {
        JsonLexer {
            chars: text.chars().collect(),
            next: 0,
        }
    }

    /// Returns the next token and its 1-based character position. Every call either
    /// consumes at least one character or returns `End`.
    fn next_token(&mut self) -> (JsonToken, usize) {
        while self.chars.get(self.next).is_some_and(|c| c.is_whitespace()) {
            self.next += 1;
        }
        let start = self.next;
        let position = start + 1;
        let token = match self.chars.get(start) {
            None => JsonToken::End,
            Some('[') => {
                self.next += 1;
                JsonToken::Open
            }
            Some(']') => {
                self.next += 1;
                JsonToken::Close
            }
            Some(',') => {
                self.next += 1;
                JsonToken::Comma
            }
            Some(_) => {
                let mut atom = String::new();
                while let Some(&c) = self.chars.get(self.next) {
                    if c.is_whitespace() || matches!(c, '[' | ']' | ',') {
                        break;
                    }
                    atom.push(c);
                    self.next += 1;
                }
                JsonToken::Atom(atom)
            }
        };
        (token, position)
    }

    fn peek(&mut self) -> JsonToken {
        let saved = self.next;
        let (token, _) = self.next_token();
        self.next = saved;
        token
    }
}

fn json_error(position: usize, message: String) -> MatrixParseError {
    MatrixParseError::Json { position, message }
}

fn parse_json_grid(text: &str) -> Result<Grid, MatrixParseError> {
    let mut lexer = JsonLexer::new(text);
    let (first, position) = lexer.next_token();
    if first != JsonToken::Open {
        return Err(json_error(
            position,
            "a JSON matrix must start with [".to_string(),
        ));
    }
    let mut builder = GridBuilder::default();
    match lexer.peek() {
        JsonToken::Close => {
            lexer.next_token();
        }
        JsonToken::Open => parse_json_rows(&mut lexer, &mut builder)?,
        _ => {
            let entries = parse_json_row(&mut lexer, 1, false)?;
            builder.push_row(1, &entries)?;
        }
    }
    let (rest, position) = lexer.next_token();
    if rest != JsonToken::End {
        return Err(json_error(
            position,
            format!(
                "unexpected {} after the final ]; remove it",
                describe_json_token(&rest)
            ),
        ));
    }
    builder.finish()
}

fn describe_json_token(token: &JsonToken) -> String {
    match token {
        JsonToken::Open => "\"[\"".to_string(),
        JsonToken::Close => "\"]\"".to_string(),
        JsonToken::Comma => "\",\"".to_string(),
        JsonToken::Atom(text) => format!("{:?}", shorten(text)),
        JsonToken::End => "end of text".to_string(),
    }
}

/// Reads `[row], [row], ...]` after the outer `[` has been consumed.
fn parse_json_rows(
    lexer: &mut JsonLexer,
    builder: &mut GridBuilder,
) -> Result<(), MatrixParseError> {
    let mut row = 0;
    loop {
        let (token, position) = lexer.next_token();
        match token {
            JsonToken::Open => {
                row += 1;
                let entries = parse_json_row(lexer, row, true)?;
                builder.push_row(row, &entries)?;
            }
            JsonToken::Comma => {
                return Err(json_error(
                    position,
                    format!(
                        "two commas with no row between them after row {row}; remove one comma"
                    ),
                ));
            }
            JsonToken::End => {
                return Err(json_error(
                    position,
                    "the outer list is missing its closing ]; add ] at the end".to_string(),
                ));
            }
            other => {
                return Err(json_error(
                    position,
                    format!(
                        "expected [ to start row {}, found {}; in a list of rows every \
                         number must be inside a row, as in [[1, 2], [3, 4]]",
                        row + 1,
                        describe_json_token(&other)
                    ),
                ));
            }
        }
        let (token, position) = lexer.next_token();
        match token {
            JsonToken::Comma => {
                if lexer.peek() == JsonToken::Close {
                    // Tolerated trailing comma after the last row.
                    lexer.next_token();
                    return Ok(());
                }
            }
            JsonToken::Close => return Ok(()),
            JsonToken::Open => {
                return Err(json_error(
                    position,
                    format!(
                        "missing comma between row {row} and row {}; put a comma after the ] of row {row}",
                        row + 1
                    ),
                ));
            }
            JsonToken::End => {
                return Err(json_error(
                    position,
                    "the outer list is missing its closing ]; add ] at the end".to_string(),
                ));
            }
            atom @ JsonToken::Atom(_) => {
                return Err(json_error(
                    position,
                    format!(
                        "unexpected {} after row {row}; every number must be inside a row, \
                         as in [[1, 2], [3, 4]]",
                        describe_json_token(&atom)
                    ),
                ));
            }
        }
    }
}

/// Reads `1, 2, 3]` after a row's `[` has been consumed. `nested` says whether this
/// row is inside an outer list (so a further `[` would be a third level).
fn parse_json_row(
    lexer: &mut JsonLexer,
    row: usize,
    nested: bool,
) -> Result<Vec<f64>, MatrixParseError> {
    let mut entries = Vec::new();
    let mut expecting_entry = true;
    loop {
        let (token, position) = lexer.next_token();
        match token {
            JsonToken::Atom(text) => {
                if !expecting_entry {
                    return Err(json_error(
                        position,
                        format!(
                            "missing comma before {:?} in row {row}; separate the entries \
                             of a row with commas",
                            shorten(&text)
                        ),
                    ));
                }
                let column = entries.len() + 1;
                entries.push(entry_value(&text, row, column)?);
                expecting_entry = false;
            }
            JsonToken::Comma => {
                if expecting_entry {
                    return Err(MatrixParseError::EmptyEntry {
                        row,
                        column: entries.len() + 1,
                    });
                }
                expecting_entry = true;
            }
            JsonToken::Close => return Ok(entries),
            JsonToken::Open => {
                let message = if nested {
                    "a third level of brackets; a matrix is a list of rows such as \
                     [[1, 2], [3, 4]], with numbers directly inside each row"
                        .to_string()
                } else {
                    "a [ inside a flat list of numbers; write either a flat list such as \
                     [1, 2, 3] or a list of rows such as [[1, 2], [3, 4]]"
                        .to_string()
                };
                return Err(json_error(position, message));
            }
            JsonToken::End => {
                let message = if nested {
                    format!("row {row} is missing its closing ]; add ] after its last entry")
                } else {
                    "the list is missing its closing ]; add ] at the end".to_string()
                };
                return Err(json_error(position, message));
            }
        }
    }
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
mod tests {
    use super::*;

    fn matrix(rows: usize, columns: usize, values: &[f64]) -> DMatrix<f64> {
        DMatrix::from_row_slice(rows, columns, values)
    }

    // ---- plain text: accepted forms ------------------------------------------

    #[test]
    fn spaces_tabs_commas_and_mixes() {
        let expected = matrix(2, 3, &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0]);
        for text in [
            "1 2 3\n4 5 6",
            "1\t2\t3\n4\t5\t6",
            "1,2,3\n4,5,6",
            "1, 2  3\n4 ,5,\t6",
            "  1   2   3  \n\t4 5 6\t",
        ] {
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
        assert_eq!(
            parse_matrix("\n\n1 2\n   \n\t\n3 4\n\n"),
            Ok(expected.clone())
        );
        // Row numbering skips the blank lines: the "x" is on the third text line
        // but in matrix row 2.
        assert_eq!(
            parse_matrix("1 2\n\n3 x"),
            Err(MatrixParseError::BadToken {
                row: 2,
                column: 2,
                token: "x".into()
            })
        );
    }

    #[test]
    fn trailing_comma_tolerated() {
        assert_eq!(parse_matrix("1,2,3,"), Ok(matrix(1, 3, &[1.0, 2.0, 3.0])));
        assert_eq!(
            parse_matrix("1,2,3 ,  "),
            Ok(matrix(1, 3, &[1.0, 2.0, 3.0]))
        );
    }

    #[test]
    fn number_syntax() {
        let m = parse_matrix("1e-3 -2.5E+4 +3 .5 4. -0 1E3 -.25").unwrap();
        let values: Vec<f64> = m.iter().copied().collect();
        assert_eq!(
            values,
            vec![1e-3, -2.5e4, 3.0, 0.5, 4.0, 0.0, 1000.0, -0.25]
        );
        // Tiny numbers underflow quietly to zero or a subnormal; that is fine.
        assert!(parse_matrix("1e-999").is_ok());
    }

    #[test]
    fn single_entry_and_column() {
        assert_eq!(parse_matrix("  -7 "), Ok(matrix(1, 1, &[-7.0])));
        assert_eq!(parse_matrix("1\n2\n3"), Ok(matrix(3, 1, &[1.0, 2.0, 3.0])));
    }

    #[test]
    fn byte_order_mark_ignored() {
        assert_eq!(
            parse_matrix("\u{feff}1 2\n3 4"),
            Ok(matrix(2, 2, &[1.0, 2.0, 3.0, 4.0]))
        );
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
        assert_eq!(
            parse_matrix("1 2 x"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 3,
                token: "x".into()
            })
        );
        assert_eq!(
            parse_matrix("1 2 3\n4 5 6)"),
            Err(MatrixParseError::BadToken {
                row: 2,
                column: 3,
                token: "6)".into()
            })
        );
        assert_eq!(
            parse_matrix("1;2"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 1,
                token: "1;2".into()
            })
        );
        assert_eq!(
            parse_matrix("1 -"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "-".into()
            })
        );
        assert_eq!(
            parse_matrix("1 1e"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "1e".into()
            })
        );
    }

    #[test]
    fn unicode_junk() {
        assert_eq!(
            parse_matrix("1 ☃ 3"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "☃".into()
            })
        );
        let err = parse_matrix("1 \u{2212}2").unwrap_err();
        assert_eq!(
            err,
            MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "\u{2212}2".into()
            }
        );
        assert!(err.to_string().contains("typographic minus"));
        // Non-breaking spaces count as spaces.
        assert_eq!(parse_matrix("1\u{a0}2"), Ok(matrix(1, 2, &[1.0, 2.0])));
    }

    #[test]
    fn non_finite_words_any_case() {
        for word in ["nan", "NaN", "inf", "-inf", "+Infinity", "INFINITY", "-NAN"] {
            let text = format!("1 2\n3 {word}");
            assert_eq!(
                parse_matrix(&text),
                Err(MatrixParseError::NotFinite {
                    row: 2,
                    column: 2,
                    token: word.into()
                }),
                "{word}"
            );
        }
    }

    #[test]
    fn overflow_is_not_finite() {
        let err = parse_matrix("1e999").unwrap_err();
        assert_eq!(
            err,
            MatrixParseError::NotFinite {
                row: 1,
                column: 1,
                token: "1e999".into()
            }
        );
        let message = err.to_string();
        assert!(message.contains("\"1e999\""), "{message}");
        assert!(message.contains("too large"), "{message}");
        let message = parse_matrix("inf").unwrap_err().to_string();
        assert!(message.contains("\"inf\""), "{message}");
        assert!(message.contains("not a finite number"), "{message}");
    }

    #[test]
    fn empty_entries() {
        assert_eq!(
            parse_matrix("1,,2"),
            Err(MatrixParseError::EmptyEntry { row: 1, column: 2 })
        );
        assert_eq!(
            parse_matrix("1 2\n3, ,4"),
            Err(MatrixParseError::EmptyEntry { row: 2, column: 2 })
        );
        assert_eq!(
            parse_matrix(",1,2"),
            Err(MatrixParseError::EmptyEntry { row: 1, column: 1 })
        );
        assert_eq!(
            parse_matrix("1,2,,"),
            Err(MatrixParseError::EmptyEntry { row: 1, column: 3 })
        );
        assert_eq!(
            parse_matrix(","),
            Err(MatrixParseError::EmptyEntry { row: 1, column: 1 })
        );
    }

    #[test]
    fn ragged_rows() {
        let err = parse_matrix("1 2 3\n4 5 6\n7 8").unwrap_err();
        assert_eq!(
            err,
            MatrixParseError::RaggedRow {
                row: 3,
                expected: 3,
                found: 2
            }
        );
        assert_eq!(
            err.to_string(),
            "row 3 has 2 entries but row 1 has 3; every row needs the same number of entries"
        );
        assert_eq!(
            parse_matrix("1\n2 3"),
            Err(MatrixParseError::RaggedRow {
                row: 2,
                expected: 1,
                found: 2
            })
        );
        // Blank lines do not shift the row number.
        assert_eq!(
            parse_matrix("1 2\n\n\n3"),
            Err(MatrixParseError::RaggedRow {
                row: 2,
                expected: 2,
                found: 1
            })
        );
    }

    #[test]
    fn first_error_in_reading_order_wins() {
        // Row 2 is ragged before row 3's bad token is reached.
        assert_eq!(
            parse_matrix("1 2\n3\n4 x"),
            Err(MatrixParseError::RaggedRow {
                row: 2,
                expected: 2,
                found: 1
            })
        );
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
        assert_eq!(
            parse_matrix("[[1,2],[3,4]]"),
            Ok(matrix(2, 2, &[1.0, 2.0, 3.0, 4.0]))
        );
        assert_eq!(
            parse_matrix("  [\n  [1, 2.5e-1],\r\n  [-3, .5]\n]\n"),
            Ok(matrix(2, 2, &[1.0, 0.25, -3.0, 0.5]))
        );
        assert_eq!(
            parse_matrix("[1, 2, 3]"),
            Ok(matrix(1, 3, &[1.0, 2.0, 3.0]))
        );
        assert_eq!(parse_matrix("[[7]]"), Ok(matrix(1, 1, &[7.0])));
        assert_eq!(
            parse_matrix("[[1],[2],[3]]"),
            Ok(matrix(3, 1, &[1.0, 2.0, 3.0]))
        );
    }

    #[test]
    fn json_trailing_commas_tolerated() {
        assert_eq!(
            parse_matrix("[[1,2,],[3,4],]"),
            Ok(matrix(2, 2, &[1.0, 2.0, 3.0, 4.0]))
        );
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
        assert_eq!(
            parse_matrix("[[1,2],[3,x]]"),
            Err(MatrixParseError::BadToken {
                row: 2,
                column: 2,
                token: "x".into()
            })
        );
        assert_eq!(
            parse_matrix("[1, null]"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "null".into()
            })
        );
        assert_eq!(
            parse_matrix("[[1, \"2\"]]"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "\"2\"".into()
            })
        );
        assert_eq!(
            parse_matrix("[[1],[NaN]]"),
            Err(MatrixParseError::NotFinite {
                row: 2,
                column: 1,
                token: "NaN".into()
            })
        );
        assert_eq!(
            parse_matrix("[[1e999]]"),
            Err(MatrixParseError::NotFinite {
                row: 1,
                column: 1,
                token: "1e999".into()
            })
        );
        assert_eq!(
            parse_matrix("[[1, 2#]]"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "2#".into()
            })
        );
    }

    #[test]
    fn json_empty_entries() {
        assert_eq!(
            parse_matrix("[[1,,2]]"),
            Err(MatrixParseError::EmptyEntry { row: 1, column: 2 })
        );
        assert_eq!(
            parse_matrix("[[1,2],[,3,4]]"),
            Err(MatrixParseError::EmptyEntry { row: 2, column: 1 })
        );
        assert_eq!(
            parse_matrix("[,]"),
            Err(MatrixParseError::EmptyEntry { row: 1, column: 1 })
        );
    }

    #[test]
    fn json_ragged() {
        assert_eq!(
            parse_matrix("[[1,2,3],[4,5]]"),
            Err(MatrixParseError::RaggedRow {
                row: 2,
                expected: 3,
                found: 2
            })
        );
        assert_eq!(
            parse_matrix("[[1,2],[]]"),
            Err(MatrixParseError::RaggedRow {
                row: 2,
                expected: 2,
                found: 0
            })
        );
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
        assert_eq!(
            parse_vector("1 2\n3 4\n5 6"),
            Err(MatrixParseError::NotAVector {
                rows: 3,
                columns: 2
            })
        );
        assert_eq!(
            parse_vector("[[1,2],[3,4]]"),
            Err(MatrixParseError::NotAVector {
                rows: 2,
                columns: 2
            })
        );
        assert_eq!(
            parse_vector("1 x"),
            Err(MatrixParseError::BadToken {
                row: 1,
                column: 2,
                token: "x".into()
            })
        );
        assert_eq!(parse_vector("[]"), Err(MatrixParseError::Empty));
    }

    // ---- names ---------------------------------------------------------------

    #[test]
    fn names() {
        assert_eq!(
            parse_names(" x1, x2\nvelocity\r\n\t angle ,,\n"),
            vec!["x1", "x2", "velocity", "angle"]
        );
        assert_eq!(parse_names("cart position"), vec!["cart position"]);
        assert!(parse_names("").is_empty());
        assert!(parse_names(" , \n\t,").is_empty());
        assert_eq!(parse_names("\u{feff}a,b"), vec!["a", "b"]);
    }

    // ---- messages ------------------------------------------------------------

    #[test]
    fn display_messages() {
        let bad = MatrixParseError::BadToken {
            row: 2,
            column: 3,
            token: "x".into(),
        };
        assert_eq!(
            bad.to_string(),
            "row 2, column 3: \"x\" is not a number; use digits, a decimal point and an \
             optional exponent such as 1.5e-3"
        );
        let empty_entry = MatrixParseError::EmptyEntry { row: 4, column: 2 };
        let message = empty_entry.to_string();
        assert!(message.contains("row 4, column 2"), "{message}");
        assert!(message.contains("comma"), "{message}");
        let ragged = MatrixParseError::RaggedRow {
            row: 2,
            expected: 3,
            found: 1,
        };
        assert!(ragged
            .to_string()
            .starts_with("row 2 has 1 entry but row 1 has 3"));
        let not_vector = MatrixParseError::NotAVector {
            rows: 2,
            columns: 3,
        };
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
        let alphabet: Vec<char> = "0123456789.-+eEj i±,;\t\n\r[]x\"\u{feff}☃"
            .chars()
            .collect();
        let mut rng = XorShift(0x9E37_79B9_7F4A_7C15);
        let mut accepted = 0;
        for _ in 0..6000 {
            let length = (rng.next() % 24) as usize;
            let text: String = (0..length)
                .map(|_| alphabet[(rng.next() % alphabet.len() as u64) as usize])
                .collect();
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
}
