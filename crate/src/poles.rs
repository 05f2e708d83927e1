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
    MissingConjugate {
        pole: Complex64,
        expected: Complex64,
    },
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
}

impl fmt::Display for PoleParseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PoleParseError::Empty => write!(
                f,
                "no poles given; list the poles separated by commas or spaces, for \
                 example -1, -2, -3±1j"
            ),
            PoleParseError::BadToken { index, token } => write!(
                f,
                "item {index} of the pole list: {token:?} is not understood; {}",
                bad_token_hint(token)
            ),
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
        return "the character \u{2212} is a typographic minus; type the ordinary - key instead"
            .into();
    }
    if let Some(fixed) = number_after_j_fixed(token) {
        return format!("put the number before the j, as in {fixed}");
    }
    let chars: Vec<char> = token.chars().collect();
    let sign_count = chars.iter().filter(|c| is_sign_char(**c)).count();
    let first_is_sign = chars.first().is_some_and(|c| is_sign_char(*c));
    if sign_count > 0 && chars.iter().all(|c| is_sign_char(*c)) {
        return if sign_count == 1 || token == "+-" {
            "a sign must be followed by a number".into()
        } else {
            "use a single + or - sign, or ± (or +-) for a conjugate pair such as -1±2j".into()
        };
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
    let digits_end = chars
        .iter()
        .enumerate()
        .skip(start + 1)
        .find(|(_, c)| !(c.is_ascii_digit() || **c == '.'))
        .map_or(chars.len(), |(k, _)| k);
    let mut fixed: String = chars.iter().take(start).collect();
    fixed.extend(chars.iter().take(digits_end).skip(start + 1));
    fixed.push(letter);
    fixed.extend(chars.iter().skip(digits_end));
    Some(fixed)
}

/// True if a sign appears after the first character other than as an exponent sign.
fn has_interior_sign(chars: &[char]) -> bool {
    chars.iter().enumerate().skip(1).any(|(k, c)| {
        is_sign_char(*c) && !matches!(k.checked_sub(1).and_then(|p| chars.get(p)), Some('e' | 'E'))
    })
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
    let chars: Vec<char> = text.chars().collect();
    let lexemes = lex(&chars);
    let mut poles = Vec::new();
    let mut items = 0usize;
    let mut previous_item_start: Option<usize> = None;
    let mut pos = 0usize;

    while let Some(lexeme) = lexemes.get(pos) {
        let index = items + 1;
        if lexeme.kind == LexKind::Semicolon {
            return Err(PoleParseError::BadToken {
                index,
                token: ";".into(),
            });
        }
        if lexeme.gap == Gap::None {
            if let Some(start) = previous_item_start {
                // Something glued to the end of the previous item, as in `-1-2`.
                let end = glued_end(&lexemes, pos);
                return Err(PoleParseError::BadToken {
                    index: items,
                    token: span(&chars, start, end),
                });
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
                return Err(PoleParseError::BadToken {
                    index,
                    token: span(&chars, term.start, term.end),
                });
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
                            return Err(PoleParseError::BadToken {
                                index,
                                token: span(&chars, term.start, imaginary.end),
                            });
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
    if let Some(k) = poles
        .iter()
        .position(|z| !(z.re.is_finite() && z.im.is_finite()))
    {
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
            None => {
                return Err(PoleError::MissingConjugate {
                    pole: *z,
                    expected: z.conj(),
                })
            }
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
    poles
        .iter()
        .enumerate()
        .skip(i + 1)
        .find(|(j, w)| {
            !used.get(*j).copied().unwrap_or(true) && w.im != 0.0 && is_close(**w, target)
        })
        .map(|(j, _)| j)
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
        Some(('e' | 'E', mantissa)) => {
            mantissa.iter().any(|c| c.is_ascii_digit())
                && mantissa.iter().all(|c| c.is_ascii_digit() || *c == '.')
        }
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
        lexemes.push(Lexeme {
            kind,
            start,
            end: i,
            gap,
        });
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
        Some(next)
            if first.kind == LexKind::Sign
                && next.kind == LexKind::Word
                && next.gap == Gap::None =>
        {
            next.end
        }
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
    let trimmed: String = token
        .chars()
        .filter(|c| !c.is_whitespace() && !is_sign_char(*c))
        .collect::<String>()
        .to_ascii_lowercase();
    let core = trimmed
        .strip_suffix(|c: char| is_imaginary_letter(c))
        .filter(|rest| matches!(*rest, "nan" | "inf" | "infinity"))
        .unwrap_or(&trimmed);
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
    lexeme.kind == LexKind::Word
        && lexeme
            .end
            .checked_sub(1)
            .and_then(|k| chars.get(k))
            .is_some_and(|c| is_imaginary_letter(*c))
}

/// Parses an optional sign and the word after it, starting at lexeme `pos`.
fn parse_term(
    chars: &[char],
    lexemes: &[Lexeme],
    pos: usize,
    index: usize,
) -> Result<Term, PoleParseError> {
    let Some(first) = lexemes.get(pos) else {
        return Err(PoleParseError::Empty);
    };
    let (sign, word_pos) = if first.kind == LexKind::Sign {
        let sign_text = span(chars, first.start, first.end);
        let Some(sign) = classify_sign(&sign_text) else {
            return Err(PoleParseError::BadToken {
                index,
                token: sign_text,
            });
        };
        match lexemes.get(pos + 1) {
            Some(word) if word.kind == LexKind::Word && word.gap != Gap::Comma => {
                (Some(sign), pos + 1)
            }
            _ => {
                return Err(PoleParseError::BadToken {
                    index,
                    token: sign_text,
                })
            }
        }
    } else {
        (None, pos)
    };
    let Some(word) = lexemes.get(word_pos).filter(|w| w.kind == LexKind::Word) else {
        return Err(PoleParseError::BadToken {
            index,
            token: span(chars, first.start, first.end),
        });
    };
    let token = || span(chars, first.start, word.end);
    let word_text: String = chars
        .get(word.start..word.end)
        .unwrap_or(&[])
        .iter()
        .collect();
    let value = match parse_word(&word_text) {
        Ok(value) => value,
        Err(NumberProblem::NotANumber) => {
            return Err(PoleParseError::BadToken {
                index,
                token: token(),
            })
        }
        Err(NumberProblem::NotFinite) => {
            return Err(PoleParseError::NotFinite {
                index,
                token: token(),
            })
        }
    };
    Ok(Term {
        sign,
        value,
        start: first.start,
        end: word.end,
        next: word_pos + 1,
    })
}

/// After a real number, reads a following `+ 2j`, `-j`, `± 3i`... if there is one
/// (with no comma in between). Returns `None` when the next lexemes are not a sign
/// followed by an imaginary-looking word.
fn imaginary_part_follows(
    chars: &[char],
    lexemes: &[Lexeme],
    pos: usize,
    index: usize,
) -> Result<Option<Term>, PoleParseError> {
    let (Some(sign), Some(word)) = (lexemes.get(pos), lexemes.get(pos + 1)) else {
        return Ok(None);
    };
    let joins = sign.kind == LexKind::Sign
        && sign.gap != Gap::Comma
        && word.gap != Gap::Comma
        && looks_imaginary(chars, word);
    if !joins {
        return Ok(None);
    }
    let term = parse_term(chars, lexemes, pos, index)?;
    match term.value {
        Value::Imaginary(_) => Ok(Some(term)),
        Value::Real(_) => Err(PoleParseError::BadToken {
            index,
            token: span(chars, term.start, term.end),
        }),
    }
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
mod tests {
    use super::*;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    fn bad(index: usize, token: &str) -> Result<Vec<Complex64>, PoleParseError> {
        Err(PoleParseError::BadToken {
            index,
            token: token.into(),
        })
    }

    // ---- accepted forms ----------------------------------------------------

    #[test]
    fn real_poles_and_separators() {
        let expected = vec![c(-1.0, 0.0), c(-2.0, 0.0), c(-3.0, 0.0)];
        for text in [
            "-1, -2, -3",
            "-1 -2 -3",
            "-1,-2,-3",
            "-1\n-2\n-3",
            "-1\r\n-2\r\n-3\r\n",
            "\t-1\t-2\t-3\t",
            " , -1 ,, -2 ,\n, -3 ,",
        ] {
            assert_eq!(parse_poles(text), Ok(expected.clone()), "{text:?}");
        }
    }

    #[test]
    fn real_number_syntax() {
        assert_eq!(
            parse_poles("3.5e-1 +4 -.5 1E3 -2.5E+2 0 7."),
            Ok(vec![
                c(0.35, 0.0),
                c(4.0, 0.0),
                c(-0.5, 0.0),
                c(1000.0, 0.0),
                c(-250.0, 0.0),
                c(0.0, 0.0),
                c(7.0, 0.0)
            ])
        );
    }

    #[test]
    fn complex_poles() {
        assert_eq!(
            parse_poles("-1+2j, -1-2j"),
            Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)])
        );
        assert_eq!(
            parse_poles("-1+2i -1-2I"),
            Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)])
        );
        assert_eq!(
            parse_poles("-1+j, -1-j"),
            Ok(vec![c(-1.0, 1.0), c(-1.0, -1.0)])
        );
        assert_eq!(
            parse_poles("-3-1e-2j -3+1E-2J"),
            Ok(vec![c(-3.0, -0.01), c(-3.0, 0.01)])
        );
        assert_eq!(
            parse_poles("1e2+2.5e+1j, 1e2-2.5e+1j"),
            Ok(vec![c(100.0, 25.0), c(100.0, -25.0)])
        );
    }

    #[test]
    fn imaginary_poles() {
        assert_eq!(parse_poles("2j, -2j"), Ok(vec![c(0.0, 2.0), c(0.0, -2.0)]));
        assert_eq!(parse_poles("+j -j"), Ok(vec![c(0.0, 1.0), c(0.0, -1.0)]));
        assert_eq!(parse_poles("j, -j"), Ok(vec![c(0.0, 1.0), c(0.0, -1.0)]));
        assert_eq!(
            parse_poles("-0.5i, .5i"),
            Ok(vec![c(0.0, -0.5), c(0.0, 0.5)])
        );
        // Two imaginary items do not join each other.
        assert_eq!(parse_poles("2j -2j"), Ok(vec![c(0.0, 2.0), c(0.0, -2.0)]));
        // A comma keeps a real pole and an imaginary one apart.
        assert_eq!(
            parse_poles("-3, -2j, 2j"),
            Ok(vec![c(-3.0, 0.0), c(0.0, -2.0), c(0.0, 2.0)])
        );
    }

    #[test]
    fn conjugate_pairs() {
        let pair = Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)]);
        for text in ["-1±2j", "-1+-2j", "-1 ± 2j", "-1 +- 2j", "-1 ±2j", "-1± 2i"] {
            assert_eq!(parse_poles(text), pair, "{text:?}");
        }
        assert_eq!(parse_poles("±2j"), Ok(vec![c(0.0, 2.0), c(0.0, -2.0)]));
        assert_eq!(parse_poles("+-j"), Ok(vec![c(0.0, 1.0), c(0.0, -1.0)]));
        assert_eq!(
            parse_poles("-1±2j, -3, -4±j"),
            Ok(vec![
                c(-1.0, 2.0),
                c(-1.0, -2.0),
                c(-3.0, 0.0),
                c(-4.0, 1.0),
                c(-4.0, -1.0)
            ])
        );
        // A zero imaginary part gives a repeated real pole.
        assert_eq!(parse_poles("-1±0j"), Ok(vec![c(-1.0, 0.0), c(-1.0, 0.0)]));
    }

    #[test]
    fn spaces_around_the_joining_sign() {
        assert_eq!(
            parse_poles("-1 + 2j, -1 - 2j"),
            Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)])
        );
        assert_eq!(
            parse_poles("-1 -2j -1 +2j"),
            Ok(vec![c(-1.0, -2.0), c(-1.0, 2.0)])
        );
        assert_eq!(
            parse_poles("- 1 + 2j\n- 1 - 2j"),
            Ok(vec![c(-1.0, 2.0), c(-1.0, -2.0)])
        );
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
        assert_eq!(
            err,
            PoleParseError::BadToken {
                index: 2,
                token: ";".into()
            }
        );
        let message = err.to_string();
        assert!(message.contains("\";\""), "{message}");
        assert!(
            message.contains("semicolons do not separate poles"),
            "{message}"
        );
        assert_eq!(parse_poles(";"), bad(1, ";"));
        assert_eq!(parse_poles("-1, -2;"), bad(3, ";"));
    }

    #[test]
    fn number_after_j_rejected_with_suggestion() {
        let err = parse_poles("-1+j2, -1-j2").unwrap_err();
        assert_eq!(
            err,
            PoleParseError::BadToken {
                index: 1,
                token: "-1+j2".into()
            }
        );
        let message = err.to_string();
        assert!(message.contains("\"-1+j2\""), "{message}");
        assert!(message.contains("-1+2j"), "{message}");
        let err = parse_poles("j2").unwrap_err();
        assert_eq!(
            err,
            PoleParseError::BadToken {
                index: 1,
                token: "j2".into()
            }
        );
        assert!(err.to_string().contains("as in 2j"), "{err}");
        let err = parse_poles("-4, i0.5").unwrap_err();
        assert!(err.to_string().contains("as in 0.5i"), "{err}");
    }

    #[test]
    fn glued_items_rejected() {
        let err = parse_poles("-1-2").unwrap_err();
        assert_eq!(
            err,
            PoleParseError::BadToken {
                index: 1,
                token: "-1-2".into()
            }
        );
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
        let err = parse_poles("\u{2212}1").unwrap_err();
        assert_eq!(
            err,
            PoleParseError::BadToken {
                index: 1,
                token: "\u{2212}1".into()
            }
        );
        assert!(err.to_string().contains("typographic minus"), "{err}");
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
        assert!(parse_poles("--1")
            .unwrap_err()
            .to_string()
            .contains("single + or - sign"));
        assert!(parse_poles("+")
            .unwrap_err()
            .to_string()
            .contains("followed by a number"));
    }

    #[test]
    fn plus_minus_needs_an_imaginary_part() {
        let err = parse_poles("±3").unwrap_err();
        assert_eq!(
            err,
            PoleParseError::BadToken {
                index: 1,
                token: "±3".into()
            }
        );
        assert!(err
            .to_string()
            .contains("± must be followed by an imaginary part"));
        assert_eq!(parse_poles("-1 ± 3"), bad(2, "± 3"));
        assert_eq!(parse_poles("-1 +- 3"), bad(2, "+- 3"));
    }

    #[test]
    fn non_finite() {
        for (text, index, token) in [
            ("nan", 1, "nan"),
            ("-1, inf", 2, "inf"),
            ("-1, -Infinity", 2, "-Infinity"),
            ("-1, +NaN", 2, "+NaN"),
            ("1e999", 1, "1e999"),
            ("-1 + 1e999j", 1, "+ 1e999j"),
            ("-1 ± infj", 1, "± infj"),
        ] {
            assert_eq!(
                parse_poles(text),
                Err(PoleParseError::NotFinite {
                    index,
                    token: token.into()
                }),
                "{text:?}"
            );
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
        assert_eq!(
            err,
            PoleParseError::Unpaired(PoleError::MissingConjugate {
                pole: c(-1.0, 2.0),
                expected: c(-1.0, -2.0)
            })
        );
        assert_eq!(
            err.to_string(),
            "pole \"-1+2j\" has no partner \"-1-2j\"; complex poles must come in conjugate \
             pairs, so add -1-2j or write the pair as -1±2j"
        );
        assert!(std::error::Error::source(&err).is_some());
        // `-3 -2j 2j` reads as `-3-2j` and `2j`, which do not pair.
        assert!(matches!(
            parse_poles("-3 -2j 2j"),
            Err(PoleParseError::Unpaired(PoleError::MissingConjugate { .. }))
        ));
    }

    // ---- conjugate check -----------------------------------------------------

    #[test]
    fn conjugate_check() {
        assert_eq!(check_conjugate_pairs(&[]), Ok(()));
        assert_eq!(check_conjugate_pairs(&[c(-1.0, 0.0), c(-2.0, 0.0)]), Ok(()));
        assert_eq!(
            check_conjugate_pairs(&[c(-1.0, -2.0), c(-3.0, 0.0), c(-1.0, 2.0)]),
            Ok(())
        );
        assert_eq!(
            check_conjugate_pairs(&[c(-1.0, 2.0)]),
            Err(PoleError::MissingConjugate {
                pole: c(-1.0, 2.0),
                expected: c(-1.0, -2.0)
            })
        );
        // Multiplicities must match.
        assert_eq!(
            check_conjugate_pairs(&[c(-1.0, 2.0), c(-1.0, 2.0), c(-1.0, -2.0)]),
            Err(PoleError::MissingConjugate {
                pole: c(-1.0, 2.0),
                expected: c(-1.0, -2.0)
            })
        );
        assert_eq!(
            check_conjugate_pairs(&[c(-1.0, 2.0), c(-1.0, -2.0), c(-1.0, 2.0), c(-1.0, -2.0)]),
            Ok(())
        );
        // Tolerance is relative.
        assert_eq!(
            check_conjugate_pairs(&[c(-1e6, 1e6), c(-1e6, -1e6 * (1.0 + 1e-14))]),
            Ok(())
        );
        assert!(check_conjugate_pairs(&[c(-1.0, 1.0), c(-1.0, -1.0 - 1e-9)]).is_err());
        // Not finite.
        assert_eq!(
            check_conjugate_pairs(&[c(-1.0, 0.0), c(f64::NAN, 0.0)]),
            Err(PoleError::NotFinite { index: 2 })
        );
        assert_eq!(
            check_conjugate_pairs(&[c(0.0, f64::INFINITY)]),
            Err(PoleError::NotFinite { index: 1 })
        );
        assert!(PoleError::NotFinite { index: 2 }
            .to_string()
            .contains("pole 2"));
    }

    // ---- sorting and formatting ------------------------------------------------

    #[test]
    fn sorting() {
        let mut poles = vec![
            c(-1.0, -2.0),
            c(-0.5, 0.0),
            c(-3.0, 0.0),
            c(-1.0, 2.0),
            c(f64::NAN, 0.0),
        ];
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
        let poles = [
            c(-1.0, 2.0),
            c(-3.0, 0.0),
            c(-1.0, -2.0),
            c(0.0, -0.5),
            c(0.0, 0.5),
        ];
        assert_eq!(format_pole_list(&poles), "-1±2j, -3, ±0.5j");
        assert_eq!(format_pole_list(&[]), "");
        assert_eq!(format_pole_list(&[c(-1.0, 2.0)]), "-1+2j");
        assert_eq!(
            format_pole_list(&[c(-1.0, 2.0), c(-1.0, 2.0), c(-1.0, -2.0)]),
            "-1±2j, -1+2j"
        );
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
        let message = PoleParseError::BadToken {
            index: 3,
            token: "abc".into(),
        }
        .to_string();
        assert!(
            message.starts_with("item 3 of the pole list: \"abc\""),
            "{message}"
        );
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
        let alphabet: Vec<char> = "0123456789.-+eEj i±,;\t\n\r[]xJI\u{2212}☃"
            .chars()
            .collect();
        let mut rng = XorShift(0x2545_F491_4F6C_DD1D);
        let mut accepted = 0;
        for _ in 0..8000 {
            let length = (rng.next() % 20) as usize;
            let text: String = (0..length)
                .map(|_| alphabet[(rng.next() % alphabet.len() as u64) as usize])
                .collect();
            match parse_poles(&text) {
                Ok(mut poles) => {
                    accepted += 1;
                    assert!(!poles.is_empty());
                    assert_eq!(check_conjugate_pairs(&poles), Ok(()));
                    let listed = format_pole_list(&poles);
                    let reread = parse_poles(&listed);
                    assert!(reread.is_ok(), "{text:?} -> {listed:?} -> {reread:?}");
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
        let specials = [
            0.0,
            -0.0,
            1.0,
            -1.0,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::MAX,
            f64::MIN_POSITIVE,
            5e-324,
        ];
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
}
