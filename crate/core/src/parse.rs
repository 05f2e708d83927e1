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
//! # Pasted text in other notations
//!
//! Text with semicolons (`1 2; 3 4`) is refused with [`MatrixParseError::SemicolonRows`], and
//! lines that are each a row in brackets (`[1 2]` then `[3 4]`) with
//! [`MatrixParseError::BracketedRows`]: both messages say what was recognised and how to write
//! it here (one row per line, or one JSON list of rows). A decimal comma in a row separated by
//! spaces or tabs is [`MatrixParseError::DecimalComma`].
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
    BadToken { row: usize, column: usize, token: String },
    /// `nan`, `inf`, `infinity`, or a number too large to represent (such as `1e999`).
    NotFinite { row: usize, column: usize, token: String },
    /// Two commas with nothing between them, or a comma at the start of a row.
    EmptyEntry { row: usize, column: usize },
    /// A row whose number of entries differs from the first row's.
    RaggedRow { row: usize, expected: usize, found: usize },
    /// A structural problem in JSON text, at a 1-based character position.
    Json { position: usize, message: String },
    /// [`parse_vector`] was given a matrix with at least two rows and two columns.
    NotAVector { rows: usize, columns: usize },
    /// A row separated by spaces or tabs holds a comma between two digits (`0,5 0,5`): a
    /// decimal comma, which would otherwise be read as two entries.
    DecimalComma { row: usize, token: String },
    /// Plain text with semicolons (`1 2; 3 4`): rows must be on lines of their own.
    SemicolonRows { groups: usize },
    /// Each line a row in brackets (`[1 2]` then `[3 4]`), which is neither plain text nor one
    /// JSON list.
    BracketedRows { lines: usize },
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
                    write!(f, " (the character \u{2212} is a typographic minus; type the ordinary - key instead)")?;
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
            MatrixParseError::RaggedRow { row, expected, found } => write!(
                f,
                "row {row} has {found} {} but row 1 has {expected}; every row needs the \
                 same number of entries",
                if *found == 1 { "entry" } else { "entries" }
            ),
            MatrixParseError::Json { position, message } => {
                write!(f, "JSON text, character {position}: {message}")
            }
            MatrixParseError::DecimalComma { row, token } => write!(
                f,
                "row {row}: {token:?} looks like a decimal comma (entries here are separated by spaces, so the comma cannot be a separator); write a decimal point, {:?}",
                token.replace(',', ".")
            ),
            MatrixParseError::SemicolonRows { groups } => write!(
                f,
                "the text has {groups} groups separated by semicolons, which this field does not read as rows; \
                 put each row on a line of its own (entries separated by spaces, tabs or commas), \
                 or write one JSON list of rows such as [[1, 2], [3, 4]]"
            ),
            MatrixParseError::BracketedRows { lines } => write!(
                f,
                "each of the {lines} lines is a row in brackets; remove the brackets (one row per line, \
                 entries separated by spaces, tabs or commas), or make it one JSON list of rows by \
                 enclosing the lines in [ ] with commas between them, such as [[1, 2], [3, 4]]"
            ),
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
    let Grid { rows, columns, values } = parse_grid(text)?;
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
        Err(MatrixParseError::NotAVector { rows: grid.rows, columns: grid.columns })
    }
}

/// The typographic minus (U+2212, which readouts print) is read as `-`.
pub fn normalise_minus(text: &str) -> std::borrow::Cow<'_, str> {
    if text.contains('\u{2212}') {
        std::borrow::Cow::Owned(text.replace('\u{2212}', "-"))
    } else {
        std::borrow::Cow::Borrowed(text)
    }
}

/// A number written with one decimal comma: `0,5`, `-1,25e3` (digits, one comma, digits).
pub(crate) fn has_digit_comma_digit(t: &str) -> bool {
    let b = t.as_bytes();
    let commas = b.iter().filter(|c| **c == b',').count();
    commas == 1 && (1..b.len().saturating_sub(1)).any(|i| b[i] == b',' && b[i - 1].is_ascii_digit() && b[i + 1].is_ascii_digit())
}

/// A hint for text that may hold a decimal comma (`1,5` or `0,001`: digits, a comma, digits,
/// no space after the comma), to add to a message about a count of numbers; `None` otherwise.
pub fn decimal_comma_hint(text: &str) -> Option<String> {
    let token = text.split_whitespace().find(|t| has_digit_comma_digit(t))?;
    let token: String = token.chars().take(MAX_TOKEN_CHARS).collect();
    Some(format!(" (if {token:?} holds a decimal comma, write {:?}: a comma separates entries)", token.replace(',', ".")))
}

/// Splits a list of names on commas, new lines and tabs; trims each name and drops
/// empty ones. For example `"x1, x2\nvelocity"` gives `["x1", "x2", "velocity"]`.
pub fn parse_names(text: &str) -> Vec<String> {
    let text = strip_byte_order_mark(text);
    text.split([',', '\n', '\r', '\t']).map(str::trim).filter(|name| !name.is_empty()).map(String::from).collect()
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
                return Err(MatrixParseError::RaggedRow { row, expected, found: entries.len() });
            }
            Some(_) => {}
        }
        self.values.extend_from_slice(entries);
        self.rows += 1;
        Ok(())
    }

    fn finish(self) -> Result<Grid, MatrixParseError> {
        match self.columns {
            Some(columns) if columns > 0 && !self.values.is_empty() => Ok(Grid { rows: self.rows, columns, values: self.values }),
            _ => Err(MatrixParseError::Empty),
        }
    }
}

fn strip_byte_order_mark(text: &str) -> &str {
    text.strip_prefix('\u{feff}').unwrap_or(text)
}

fn parse_grid(text: &str) -> Result<Grid, MatrixParseError> {
    let text = normalise_minus(strip_byte_order_mark(text));
    let text = text.as_ref();
    if text.trim_start().starts_with('[') {
        parse_json_grid(text).map_err(|e| bracketed_rows(text).unwrap_or(e))
    } else if text.contains(';') {
        Err(MatrixParseError::SemicolonRows { groups: text.split(';').filter(|g| !g.trim().is_empty()).count() })
    } else {
        parse_plain_grid(text)
    }
}

/// Two or more non-blank lines, each a row in brackets (`[1 2]` or `[1, 2],`): recognised to
/// say what to change when the text is not one JSON list.
fn bracketed_rows(text: &str) -> Option<MatrixParseError> {
    let lines: Vec<&str> = text.lines().map(str::trim).filter(|l| !l.is_empty()).collect();
    let each = lines.iter().all(|l| l.starts_with('[') && l.trim_end_matches(',').trim_end().ends_with(']') && !l[1..].contains('['));
    (lines.len() >= 2 && each).then_some(MatrixParseError::BracketedRows { lines: lines.len() })
}

/// Why a single token is not an acceptable number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NumberProblem {
    NotANumber,
    NotFinite,
}

/// True for the words `nan`, `inf`, `infinity` in any case, with an optional sign.
fn names_non_finite(token: &str) -> bool {
    let unsigned = token.strip_prefix(|c: char| c == '+' || c == '-').unwrap_or(token);
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
        NumberProblem::NotANumber => MatrixParseError::BadToken { row, column, token: shorten(token) },
        NumberProblem::NotFinite => MatrixParseError::NotFinite { row, column, token: shorten(token) },
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
    // Spaces or tabs separate the entries, and a comma sits between two digits: a decimal comma.
    let spaced = line.split_whitespace().filter(|t| t.bytes().any(|c| c.is_ascii_digit())).count() > 1;
    if let Some(token) = line.split_whitespace().find(|t| has_digit_comma_digit(t)).filter(|_| spaced) {
        return Err(MatrixParseError::DecimalComma { row, token: token.chars().take(MAX_TOKEN_CHARS).collect() });
    }
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
            return Err(MatrixParseError::EmptyEntry { row, column: entries.len() + 1 });
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
        JsonLexer { chars: text.chars().collect(), next: 0 }
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
        return Err(json_error(position, "a JSON matrix must start with [".to_string()));
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
        return Err(json_error(position, format!("unexpected {} after the final ]; remove it", describe_json_token(&rest))));
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
fn parse_json_rows(lexer: &mut JsonLexer, builder: &mut GridBuilder) -> Result<(), MatrixParseError> {
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
                return Err(json_error(position, format!("two commas with no row between them after row {row}; remove one comma")));
            }
            JsonToken::End => {
                return Err(json_error(position, "the outer list is missing its closing ]; add ] at the end".to_string()));
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
                return Err(json_error(position, format!("missing comma between row {row} and row {}; put a comma after the ] of row {row}", row + 1)));
            }
            JsonToken::End => {
                return Err(json_error(position, "the outer list is missing its closing ]; add ] at the end".to_string()));
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
fn parse_json_row(lexer: &mut JsonLexer, row: usize, nested: bool) -> Result<Vec<f64>, MatrixParseError> {
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
                    return Err(MatrixParseError::EmptyEntry { row, column: entries.len() + 1 });
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
                let message = if nested { format!("row {row} is missing its closing ]; add ] after its last entry") } else { "the list is missing its closing ]; add ] at the end".to_string() };
                return Err(json_error(position, message));
            }
        }
    }
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
#[path = "tests/parse.rs"]
mod tests;
