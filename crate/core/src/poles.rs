//! Reading, checking and showing lists of desired closed-loop poles.
//!
//! Nothing here panics, whatever the input.
//!
//! # Accepted pole lists ([`parse_poles`])
//!
//! A pole list is a sequence of *items* separated by commas, spaces, tabs or new
//! lines (any mix; repeated separators are fine). Semicolons are **not** separators
//! and are rejected with a message saying so. Each item is one of:
//!
//! - a **real pole**: a decimal number in Rust's floating-point syntax with an
//!   optional sign: `-2`, `3.5e-1`, `+4`, `-.5`, `1E3`;
//! - a **purely imaginary pole**: an optional sign, an optional number and the letter
//!   `j` or `i` (either case): `2j`, `-0.5i`, `j` (meaning `1j`), `-j`, `+j`;
//! - a **complex pole**: a real number, then `+` or `-`, then an imaginary number:
//!   `-1+2j`, `-1-2j`, `-1+2i`, `-1+j`, `-3-1e-2j`;
//! - a **conjugate pair**: a real number, then `±` (U+00B1) or `+-`, then an
//!   imaginary number: `-1±2j` and `-1+-2j` both give `-1+2j` and `-1-2j` (positive
//!   imaginary part first). `±2j` without a real part gives `2j` and `-2j`.
//!
//! Spaces may appear around the sign that joins the real and imaginary parts:
//! `-1 + 2j` and `-1 ± 2j` are single items. The rule is: a `+`, `-`, `±` or `+-`
//! followed by an imaginary number joins the real number just before it unless a
//! comma comes between them. So `-3 -2j` is the one pole `-3-2j`; write `-3, -2j`
//! for a real pole followed by an imaginary one. Separate poles written without any
//! space, as in `-1-2`, are rejected (write `-1 -2` or `-1, -2`, or `-1-2j` if an
//! imaginary part was meant). The number goes before the `j`: `j2` is rejected with a
//! suggestion to write `2j`. Other sign combinations such as `-+` or `--` are rejected,
//! as are `nan`, `inf`, `infinity` and numbers too large to represent (`1e999`).
//!
//! Item numbers in errors ([`PoleParseError`]) are 1-based positions in the list as
//! written, counting a `±` pair as one item.
//!
//! Finally, every complex pole must have its conjugate in the list
//! ([`check_conjugate_pairs`]), because the plant is real.
//!
//! # Showing poles
//!
//! [`format_complex`] writes one pole (`-2`, `-1+2j`, `-1-2j`, `2j`) and
//! [`format_pole_list`] a comma-separated list with conjugate pairs grouped as
//! `-1±2j`. Both give text that [`parse_poles`] reads back to the same values.

use std::fmt;

/// A complex number with `f64` parts.
pub type Complex64 = num_complex::Complex<f64>;

/// Offending text longer than this many characters is shortened in errors.
const MAX_TOKEN_CHARS: usize = 40;

/// Relative tolerance used when matching a pole with its conjugate.
const CONJUGATE_TOLERANCE: f64 = 1e-12;

/// A problem with a list of pole values (as opposed to its text).
#[derive(Debug, Clone, PartialEq)]
pub enum PoleError {
    /// A complex pole whose conjugate is not in the list (or not often enough).
    MissingConjugate { pole: Complex64, expected: Complex64 },
    /// Pole number `index` (1-based) has a NaN or infinite part.
    NotFinite { index: usize },
}

impl fmt::Display for PoleError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PoleError::MissingConjugate { pole, expected } => write!(
                f,
                "pole \"{}\" has no partner \"{}\"; complex poles must come in conjugate \
                 pairs, so add {} or write the pair as {}",
                format_complex(*pole),
                format_complex(*expected),
                format_complex(*expected),
                format_pair(*pole)
            ),
            PoleError::NotFinite { index } => write!(
                f,
                "pole {index} is not a finite number; every pole needs finite real and \
                 imaginary parts"
            ),
        }
    }
}

impl std::error::Error for PoleError {}

/// Why a pole list could not be read.
#[derive(Debug, Clone, PartialEq)]
pub enum PoleParseError {
    /// The text contains no poles at all.
    Empty,
    /// Text that is not a pole, at item `index` (1-based) of the list.
    BadToken { index: usize, token: String },
    /// `nan`, `inf`, `infinity` or a number too large to represent, at item `index`.
    NotFinite { index: usize, token: String },
    /// The poles were read but a complex pole lacks its conjugate.
    Unpaired(PoleError),
    /// Poles separated by spaces with a comma between two digits (`-1,5 -2,5`): a decimal
    /// comma, which would otherwise be read as two poles.
    DecimalComma { token: String },
}

impl fmt::Display for PoleParseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PoleParseError::Empty => write!(
                f,
                "no poles given; list the poles separated by commas or spaces, for \
                 example -1, -2, -3±1j"
            ),
            PoleParseError::BadToken { index, token } => write!(f, "item {index} of the pole list: {token:?} is not understood; {}", bad_token_hint(token)),
            PoleParseError::NotFinite { index, token } => {
                if names_non_finite(token) {
                    write!(
                        f,
                        "item {index} of the pole list: {token:?} is not a finite number; \
                         replace it with an ordinary number"
                    )
                } else {
                    write!(
                        f,
                        "item {index} of the pole list: {token:?} is too large in magnitude \
                         (the limit is about 1.8e308); use a smaller number"
                    )
                }
            }
            PoleParseError::Unpaired(inner) => inner.fmt(f),
            PoleParseError::DecimalComma { token } => {
                write!(f, "{token:?} looks like a decimal comma (the poles here are separated by spaces, so the comma cannot be a separator); write a decimal point, {:?}", token.replace(',', "."))
            }
        }
    }
}

impl std::error::Error for PoleParseError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            PoleParseError::Unpaired(inner) => Some(inner),
            _ => None,
        }
    }
}

/// Picks the advice for a [`PoleParseError::BadToken`] from the offending text.
fn bad_token_hint(token: &str) -> String {
    if token.contains(';') {
        return "semicolons do not separate poles; use commas, spaces or new lines".into();
    }
    if token.contains('\u{2212}') {
        return "the character \u{2212} is a typographic minus; type the ordinary - key instead".into();
    }
    if let Some(fixed) = number_after_j_fixed(token) {
        return format!("put the number before the j, as in {fixed}");
    }
    let chars: Vec<char> = token.chars().collect();
    let sign_count = chars.iter().filter(|c| is_sign_char(**c)).count();
    let first_is_sign = chars.first().is_some_and(|c| is_sign_char(*c));
    if sign_count > 0 && chars.iter().all(|c| is_sign_char(*c)) {
        return if sign_count == 1 || token == "+-" { "a sign must be followed by a number".into() } else { "use a single + or - sign, or ± (or +-) for a conjugate pair such as -1±2j".into() };
    }
    if first_is_sign && (token.starts_with('±') || token.starts_with("+-")) {
        return "± must be followed by an imaginary part, as in -1±2j".into();
    }
    if has_interior_sign(&chars) {
        return "put a comma or space between separate poles, or end the imaginary part \
                with j, as in -1+2j"
            .into();
    }
    "a pole is a real number such as -2 or 3.5e-1, or a complex number such as -1+2j, \
     -1-2i or the conjugate pair -1±2j"
        .into()
}

/// For text like `-1+j2` returns `-1+2j`: the first `j`/`i` followed by a number,
/// rewritten with the number first.
fn number_after_j_fixed(token: &str) -> Option<String> {
    let chars: Vec<char> = token.chars().collect();
    let start = chars.windows(2).position(|w| match w {
        [letter, next] => is_imaginary_letter(*letter) && (next.is_ascii_digit() || *next == '.'),
        _ => false,
    })?;
    let letter = *chars.get(start)?;
    let digits_end = chars.iter().enumerate().skip(start + 1).find(|(_, c)| !(c.is_ascii_digit() || **c == '.')).map_or(chars.len(), |(k, _)| k);
    let mut fixed: String = chars.iter().take(start).collect();
    fixed.extend(chars.iter().take(digits_end).skip(start + 1));
    fixed.push(letter);
    fixed.extend(chars.iter().skip(digits_end));
    Some(fixed)
}

/// True if a sign appears after the first character other than as an exponent sign.
fn has_interior_sign(chars: &[char]) -> bool {
    chars.iter().enumerate().skip(1).any(|(k, c)| is_sign_char(*c) && !matches!(k.checked_sub(1).and_then(|p| chars.get(p)), Some('e' | 'E')))
}

/// Parses a pole list and checks that complex poles come in conjugate pairs.
///
/// See the [module documentation](self) for the accepted grammar. Poles are returned
/// in the order written, a `±` pair giving the positive imaginary part first.
pub fn parse_poles(text: &str) -> Result<Vec<Complex64>, PoleParseError> {
    let poles = parse_pole_items(text)?;
    check_conjugate_pairs(&poles).map_err(PoleParseError::Unpaired)?;
    Ok(poles)
}

/// Parses a pole list without the conjugate-pair check (for callers that assemble a list
/// from several pieces and check the whole).
pub fn parse_pole_items(text: &str) -> Result<Vec<Complex64>, PoleParseError> {
    let tokens: Vec<&str> = text.split_whitespace().filter(|t| t.bytes().any(|c| c.is_ascii_digit())).collect();
    if tokens.len() > 1 {
        if let Some(t) = tokens.iter().find(|t| crate::parse::has_digit_comma_digit(t)) {
            return Err(PoleParseError::DecimalComma { token: t.chars().take(40).collect() });
        }
    }
    // The typographic minus that readouts print is an ordinary minus here.
    let chars: Vec<char> = text.chars().map(|c| if c == '\u{2212}' { '-' } else { c }).collect();
    let lexemes = lex(&chars);
    let mut poles = Vec::new();
    let mut items = 0usize;
    let mut previous_item_start: Option<usize> = None;
    let mut pos = 0usize;

    while let Some(lexeme) = lexemes.get(pos) {
        let index = items + 1;
        if lexeme.kind == LexKind::Semicolon {
            return Err(PoleParseError::BadToken { index, token: ";".into() });
        }
        if lexeme.gap == Gap::None {
            if let Some(start) = previous_item_start {
                // Something glued to the end of the previous item, as in `-1-2`.
                let end = glued_end(&lexemes, pos);
                return Err(PoleParseError::BadToken { index: items, token: span(&chars, start, end) });
            }
        }

        let term = parse_term(&chars, &lexemes, pos, index)?;
        pos = term.next;
        match (term.sign, term.value) {
            (Some(Sign::PlusMinus), Value::Imaginary(im)) => {
                poles.push(Complex64::new(0.0, im));
                poles.push(Complex64::new(0.0, negate_nonzero(im)));
            }
            (Some(Sign::PlusMinus), Value::Real(_)) => {
                return Err(PoleParseError::BadToken { index, token: span(&chars, term.start, term.end) });
            }
            (sign, Value::Imaginary(im)) => {
                poles.push(Complex64::new(0.0, apply_sign(sign, im)));
            }
            (sign, Value::Real(magnitude)) => {
                let re = apply_sign(sign, magnitude);
                match imaginary_part_follows(&chars, &lexemes, pos, index)? {
                    Some(imaginary) => {
                        pos = imaginary.next;
                        let Value::Imaginary(im) = imaginary.value else {
                            // invariant: imaginary_part_follows only returns imaginary terms.
                            return Err(PoleParseError::BadToken { index, token: span(&chars, term.start, imaginary.end) });
                        };
                        if imaginary.sign == Some(Sign::PlusMinus) {
                            poles.push(Complex64::new(re, im));
                            poles.push(Complex64::new(re, negate_nonzero(im)));
                        } else {
                            poles.push(Complex64::new(re, apply_sign(imaginary.sign, im)));
                        }
                    }
                    None => poles.push(Complex64::new(re, 0.0)),
                }
            }
        }
        items += 1;
        previous_item_start = Some(term.start);
    }

    if poles.is_empty() {
        return Err(PoleParseError::Empty);
    }
    Ok(poles)
}

/// Checks that every pole with a nonzero imaginary part has its own conjugate partner.
///
/// Each complex pole needs a distinct partner whose value is its conjugate to within
/// a relative tolerance of 1e-12 (measured in the largest-component norm, relative to
/// `max(1, |pole|)`), and multiplicities must match: two copies of `-1+2j` need two
/// copies of `-1-2j`. Poles with a NaN or infinite part give [`PoleError::NotFinite`].
pub fn check_conjugate_pairs(poles: &[Complex64]) -> Result<(), PoleError> {
    if let Some(k) = poles.iter().position(|z| !(z.re.is_finite() && z.im.is_finite())) {
        return Err(PoleError::NotFinite { index: k + 1 });
    }
    let mut used = vec![false; poles.len()];
    for (i, z) in poles.iter().enumerate() {
        if z.im == 0.0 || used.get(i).copied().unwrap_or(true) {
            continue;
        }
        if let Some(flag) = used.get_mut(i) {
            *flag = true;
        }
        match find_partner(poles, &used, i, *z) {
            Some(j) => {
                if let Some(flag) = used.get_mut(j) {
                    *flag = true;
                }
            }
            None => return Err(PoleError::MissingConjugate { pole: *z, expected: z.conj() }),
        }
    }
    Ok(())
}

/// Sorts poles for showing: ascending real part (the fastest, most negative poles
/// first), and for equal real parts descending imaginary part (so `-1+2j` comes just
/// before `-1-2j`). NaN parts sort after everything else; never panics.
pub fn sort_for_display(poles: &mut [Complex64]) {
    poles.sort_by(|a, b| a.re.total_cmp(&b.re).then_with(|| b.im.total_cmp(&a.im)));
}

/// Writes one pole: `-2`, `-1+2j`, `-1-2j`, `2j`, `-0.5j`.
///
/// Each part is written with the shortest text that reads back to exactly the same
/// `f64` (Rust's `{}` formatting); parts below 1e-5 or from 1e16 upward in magnitude
/// use exponent form (`1e-7`, `2.5e20`, Rust's `{:e}`), which is just as exact and
/// avoids long runs of zeros. A zero imaginary part (including `-0`) is left out; a
/// zero real part is left out when the imaginary part is not zero; `-0` is written
/// `0`.
pub fn format_complex(z: Complex64) -> String {
    if z.im.abs() <= 0.0 {
        return format_real(z.re);
    }
    if z.re == 0.0 {
        return format!("{}j", format_real(z.im));
    }
    let sign = if z.im.is_sign_negative() { '-' } else { '+' };
    format!("{}{}{}j", format_real(z.re), sign, format_real(z.im.abs()))
}

/// Writes a pole list separated by `", "`, keeping the given order, with each complex
/// pole and its conjugate partner (matched as in [`check_conjugate_pairs`]) written
/// once as a pair at the place of the first of the two: `-1±2j, -3, ±0.5j`. Unpaired
/// complex poles are written singly. Call [`sort_for_display`] first for a tidy order.
pub fn format_pole_list(poles: &[Complex64]) -> String {
    let mut used = vec![false; poles.len()];
    let mut parts = Vec::with_capacity(poles.len());
    for (i, z) in poles.iter().enumerate() {
        if used.get(i).copied().unwrap_or(true) {
            continue;
        }
        if let Some(flag) = used.get_mut(i) {
            *flag = true;
        }
        let finite_complex = z.im != 0.0 && z.re.is_finite() && z.im.is_finite();
        if finite_complex {
            if let Some(j) = find_partner(poles, &used, i, *z) {
                if let Some(flag) = used.get_mut(j) {
                    *flag = true;
                }
                parts.push(format_pair(*z));
                continue;
            }
        }
        parts.push(format_complex(*z));
    }
    parts.join(", ")
}

// ---------------------------------------------------------------------------
// Formatting helpers
// ---------------------------------------------------------------------------

fn format_real(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    let magnitude = x.abs();
    if magnitude.is_finite() && !(1e-5..1e16).contains(&magnitude) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// `re±|im|j`, or `±|im|j` when the real part is zero.
fn format_pair(z: Complex64) -> String {
    let im = format_real(z.im.abs());
    if z.re == 0.0 {
        format!("±{im}j")
    } else {
        format!("{}±{im}j", format_real(z.re))
    }
}

// ---------------------------------------------------------------------------
// Conjugate matching
// ---------------------------------------------------------------------------

fn is_close(a: Complex64, b: Complex64) -> bool {
    let scale = 1.0_f64.max(b.re.abs().max(b.im.abs()));
    let difference = (a.re - b.re).abs().max((a.im - b.im).abs());
    difference <= CONJUGATE_TOLERANCE * scale
}

/// The first unused complex pole after `i` that matches the conjugate of `z`.
fn find_partner(poles: &[Complex64], used: &[bool], i: usize, z: Complex64) -> Option<usize> {
    let target = z.conj();
    poles.iter().enumerate().skip(i + 1).find(|(j, w)| !used.get(*j).copied().unwrap_or(true) && w.im != 0.0 && is_close(**w, target)).map(|(j, _)| j)
}

// ---------------------------------------------------------------------------
// Lexing
// ---------------------------------------------------------------------------

/// What separated a lexeme from the one before it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Gap {
    /// Nothing: the two are glued together.
    None,
    /// Whitespace only.
    Space,
    /// At least one comma.
    Comma,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum LexKind {
    /// A run of `+`, `-` and `±` characters.
    Sign,
    /// A run of other characters (a number, maybe ending in `j`); exponent signs
    /// such as the `-` in `1e-3` belong to the word.
    Word,
    Semicolon,
}

/// A piece of the text: `start..end` are character indices.
#[derive(Debug, Clone, Copy)]
struct Lexeme {
    kind: LexKind,
    start: usize,
    end: usize,
    gap: Gap,
}

fn is_sign_char(c: char) -> bool {
    matches!(c, '+' | '-' | '±')
}

fn is_imaginary_letter(c: char) -> bool {
    matches!(c, 'j' | 'J' | 'i' | 'I')
}

fn is_separator(c: char) -> bool {
    c == ',' || c.is_whitespace() || c == '\u{feff}'
}

/// True if `word` so far is a mantissa followed by `e`, so a sign continues it.
fn exponent_sign_allowed(word: &[char]) -> bool {
    match word.split_last() {
        Some(('e' | 'E', mantissa)) => mantissa.iter().any(|c| c.is_ascii_digit()) && mantissa.iter().all(|c| c.is_ascii_digit() || *c == '.'),
        _ => false,
    }
}

fn lex(chars: &[char]) -> Vec<Lexeme> {
    let mut lexemes = Vec::new();
    let mut gap = Gap::None;
    let mut i = 0;
    while let Some(&c) = chars.get(i) {
        if c == ',' {
            gap = Gap::Comma;
            i += 1;
            continue;
        }
        if is_separator(c) {
            if gap == Gap::None {
                gap = Gap::Space;
            }
            i += 1;
            continue;
        }
        let start = i;
        let kind = if c == ';' {
            i += 1;
            LexKind::Semicolon
        } else if is_sign_char(c) {
            while chars.get(i).is_some_and(|c| is_sign_char(*c)) {
                i += 1;
            }
            LexKind::Sign
        } else {
            while let Some(&c) = chars.get(i) {
                if is_separator(c) || c == ';' {
                    break;
                }
                if is_sign_char(c) {
                    let so_far = chars.get(start..i).unwrap_or(&[]);
                    if c != '±' && exponent_sign_allowed(so_far) {
                        i += 1;
                        continue;
                    }
                    break;
                }
                i += 1;
            }
            LexKind::Word
        };
        lexemes.push(Lexeme { kind, start, end: i, gap });
        gap = Gap::None;
    }
    lexemes
}

fn span(chars: &[char], start: usize, end: usize) -> String {
    let piece = chars.get(start..end).unwrap_or(&[]);
    let mut text: String = piece.iter().take(MAX_TOKEN_CHARS).collect();
    if piece.len() > MAX_TOKEN_CHARS {
        text.push('…');
    }
    text
}

/// The end of the text glued to a previous item starting at lexeme `pos`: the lexeme
/// itself and, if it is a sign, the word right after it.
fn glued_end(lexemes: &[Lexeme], pos: usize) -> usize {
    let Some(first) = lexemes.get(pos) else {
        return 0;
    };
    match lexemes.get(pos + 1) {
        Some(next) if first.kind == LexKind::Sign && next.kind == LexKind::Word && next.gap == Gap::None => next.end,
        _ => first.end,
    }
}

// ---------------------------------------------------------------------------
// Parsing terms
// ---------------------------------------------------------------------------

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Sign {
    Plus,
    Minus,
    PlusMinus,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Value {
    /// A nonnegative real magnitude.
    Real(f64),
    /// A nonnegative imaginary magnitude.
    Imaginary(f64),
}

/// An optional sign and a word: `-2`, `+ 3j`, `j`.
#[derive(Debug, Clone, Copy)]
struct Term {
    sign: Option<Sign>,
    value: Value,
    /// Character range of the term in the text.
    start: usize,
    end: usize,
    /// Index of the lexeme after the term.
    next: usize,
}

fn classify_sign(text: &str) -> Option<Sign> {
    match text {
        "+" => Some(Sign::Plus),
        "-" => Some(Sign::Minus),
        "±" | "+-" => Some(Sign::PlusMinus),
        _ => None,
    }
}

fn apply_sign(sign: Option<Sign>, magnitude: f64) -> f64 {
    if sign == Some(Sign::Minus) {
        negate_nonzero(magnitude)
    } else {
        magnitude
    }
}

/// Negates, but keeps zero as `+0` so no `-0` parts appear.
fn negate_nonzero(x: f64) -> f64 {
    if x == 0.0 {
        0.0
    } else {
        -x
    }
}

/// True for `nan`, `inf`, `infinity` in any case, with an optional sign (and, in
/// pole text, an optional trailing imaginary letter).
fn names_non_finite(token: &str) -> bool {
    let trimmed: String = token.chars().filter(|c| !c.is_whitespace() && !is_sign_char(*c)).collect::<String>().to_ascii_lowercase();
    let core = trimmed.strip_suffix(|c: char| is_imaginary_letter(c)).filter(|rest| matches!(*rest, "nan" | "inf" | "infinity")).unwrap_or(&trimmed);
    matches!(core, "nan" | "inf" | "infinity")
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NumberProblem {
    NotANumber,
    NotFinite,
}

fn parse_unsigned_number(text: &str) -> Result<f64, NumberProblem> {
    let lower = text.to_ascii_lowercase();
    if matches!(lower.as_str(), "nan" | "inf" | "infinity") {
        return Err(NumberProblem::NotFinite);
    }
    // Words never start with a sign, but check so that "+" inside cannot sneak in.
    if text.starts_with(is_sign_char) {
        return Err(NumberProblem::NotANumber);
    }
    match text.parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(NumberProblem::NotFinite),
        Err(_) => Err(NumberProblem::NotANumber),
    }
}

/// Reads a word: a real magnitude, or an imaginary one ending in `j`/`i`.
fn parse_word(word: &str) -> Result<Value, NumberProblem> {
    match word.char_indices().last() {
        Some((at, letter)) if is_imaginary_letter(letter) => {
            let mantissa = word.get(..at).unwrap_or("");
            if mantissa.is_empty() {
                Ok(Value::Imaginary(1.0))
            } else {
                parse_unsigned_number(mantissa).map(Value::Imaginary)
            }
        }
        _ => parse_unsigned_number(word).map(Value::Real),
    }
}

fn looks_imaginary(chars: &[char], lexeme: &Lexeme) -> bool {
    lexeme.kind == LexKind::Word && lexeme.end.checked_sub(1).and_then(|k| chars.get(k)).is_some_and(|c| is_imaginary_letter(*c))
}

/// Parses an optional sign and the word after it, starting at lexeme `pos`.
fn parse_term(chars: &[char], lexemes: &[Lexeme], pos: usize, index: usize) -> Result<Term, PoleParseError> {
    let Some(first) = lexemes.get(pos) else {
        return Err(PoleParseError::Empty);
    };
    let (sign, word_pos) = if first.kind == LexKind::Sign {
        let sign_text = span(chars, first.start, first.end);
        let Some(sign) = classify_sign(&sign_text) else {
            return Err(PoleParseError::BadToken { index, token: sign_text });
        };
        match lexemes.get(pos + 1) {
            Some(word) if word.kind == LexKind::Word && word.gap != Gap::Comma => (Some(sign), pos + 1),
            _ => return Err(PoleParseError::BadToken { index, token: sign_text }),
        }
    } else {
        (None, pos)
    };
    let Some(word) = lexemes.get(word_pos).filter(|w| w.kind == LexKind::Word) else {
        return Err(PoleParseError::BadToken { index, token: span(chars, first.start, first.end) });
    };
    let token = || span(chars, first.start, word.end);
    let word_text: String = chars.get(word.start..word.end).unwrap_or(&[]).iter().collect();
    let value = match parse_word(&word_text) {
        Ok(value) => value,
        Err(NumberProblem::NotANumber) => return Err(PoleParseError::BadToken { index, token: token() }),
        Err(NumberProblem::NotFinite) => return Err(PoleParseError::NotFinite { index, token: token() }),
    };
    Ok(Term { sign, value, start: first.start, end: word.end, next: word_pos + 1 })
}

/// After a real number, reads a following `+ 2j`, `-j`, `± 3i`... if there is one
/// (with no comma in between). Returns `None` when the next lexemes are not a sign
/// followed by an imaginary-looking word.
fn imaginary_part_follows(chars: &[char], lexemes: &[Lexeme], pos: usize, index: usize) -> Result<Option<Term>, PoleParseError> {
    let (Some(sign), Some(word)) = (lexemes.get(pos), lexemes.get(pos + 1)) else {
        return Ok(None);
    };
    let joins = sign.kind == LexKind::Sign && sign.gap != Gap::Comma && word.gap != Gap::Comma && looks_imaginary(chars, word);
    if !joins {
        return Ok(None);
    }
    let term = parse_term(chars, lexemes, pos, index)?;
    match term.value {
        Value::Imaginary(_) => Ok(Some(term)),
        Value::Real(_) => Err(PoleParseError::BadToken { index, token: span(chars, term.start, term.end) }),
    }
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
#[path = "tests/poles.rs"]
mod tests;
