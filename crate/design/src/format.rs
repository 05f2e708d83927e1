//! Numbers for people: one rule for every figure on the page and in the design record.
//!
//! - A chosen number of significant digits, [`DEFAULT_DIGITS`] unless the reader picks another
//!   in [`MIN_DIGITS`]`..=`[`MAX_DIGITS`] (the page's "Digits" setting, `polewright report
//!   --digits`). Trailing zeros after the decimal point are dropped (`2.5`, not `2.5000`).
//! - Plain decimals for magnitudes in `[1e-3, 1e6)`; outside, engineering exponents (a
//!   multiple of 3): `12.346e6`, `123.45e-6`.
//! - Negative zero reads `0`; non-finite values read `∞`, `−∞`, `NaN`.
//! - [`number_above`] shows a value below a rounding level (the data's own scale times its
//!   relative rounding, e.g. 1e-12 of the largest pole) as `0`.
//! - Complex values and pole lists: [`complex`] (`−20 + 30j`) and [`pole_list`] (a
//!   conjugate pair once, as `−20 ± 30j`), with the typographic minus sign.
//!
//! Copies, exports and saved files never go through this module: they keep full precision
//! (the shortest text that reads back to the same `f64`).
//!
//! The digit setting is per thread (the page and the CLI each run on one thread); set it
//! with [`with_digits`] around the code that builds text.

use num_complex::Complex64;
use std::cell::Cell;

/// Significant digits unless the reader asks for others.
pub const DEFAULT_DIGITS: usize = 5;
/// The fewest significant digits the setting allows.
pub const MIN_DIGITS: usize = 3;
/// The most: 17 significant digits identify every `f64`.
pub const MAX_DIGITS: usize = 17;

thread_local! {
    static DIGITS: Cell<usize> = const { Cell::new(DEFAULT_DIGITS) };
}

/// Sets the digits for the rest of this thread's work (clamped to the allowed range): for a
/// front end that holds one setting for its session (the page). Returns the digits set.
pub fn set_digits(digits: usize) -> usize {
    let d = digits.clamp(MIN_DIGITS, MAX_DIGITS);
    DIGITS.with(|c| c.set(d));
    d
}

/// The digits currently in force.
pub fn digits() -> usize {
    DIGITS.with(Cell::get)
}

/// Runs `f` with `digits` significant digits (clamped to the allowed range), then restores
/// the previous setting.
pub fn with_digits<T>(digits: usize, f: impl FnOnce() -> T) -> T {
    let before = DIGITS.with(|d| d.replace(digits.clamp(MIN_DIGITS, MAX_DIGITS)));
    let out = f();
    DIGITS.with(|d| d.set(before));
    out
}

/// A real number with the digits in force (ASCII minus sign; see the module notes).
pub fn number(x: f64) -> String {
    number_with(x, digits())
}

/// [`number`] with an explicit count of significant digits.
pub fn number_with(x: f64, digits: usize) -> String {
    if !x.is_finite() {
        return if x.is_nan() {
            "NaN".into()
        } else if x > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        };
    }
    if x == 0.0 {
        return "0".into();
    }
    let digits = digits.clamp(1, MAX_DIGITS);
    // Round to `digits` significant digits first (through the decimal text, so that the
    // rounding is the decimal one), then choose how to write the rounded value.
    let scientific = format!("{:.*e}", digits - 1, x);
    let rounded: f64 = scientific.parse().unwrap_or(x);
    let magnitude = rounded.abs();
    // The decimal exponent as the text has it (a logarithm could land one off at a power of 10).
    let power: i32 = scientific.split_once('e').and_then(|(_, p)| p.parse().ok()).unwrap_or_else(|| magnitude.log10().floor() as i32);
    if (1e-3..1e6).contains(&magnitude) {
        let decimals = (digits as i32 - 1 - power).max(0) as usize;
        trim(format!("{rounded:.decimals$}"))
    } else {
        engineering(&scientific, power)
    }
}

/// `d.ddd…e±p` (Rust's scientific text) moved to an exponent that is a multiple of 3 by
/// shifting the decimal point in the text (exact: no division), trailing zeros dropped.
fn engineering(scientific: &str, power: i32) -> String {
    let (mantissa, _) = scientific.split_once('e').unwrap_or((scientific, "0"));
    let negative = mantissa.starts_with('-');
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    let exponent = power.div_euclid(3) * 3;
    let shift = (power - exponent) as usize; // 0, 1 or 2 digits before the point move left of it
    let mut whole: String = digits.chars().take(shift + 1).collect();
    while whole.len() < shift + 1 {
        whole.push('0');
    }
    let fraction: String = digits.chars().skip(shift + 1).collect();
    let text = if fraction.is_empty() { whole } else { format!("{whole}.{fraction}") };
    format!("{}{}e{exponent}", if negative { "-" } else { "" }, trim(text))
}

fn trim(s: String) -> String {
    let s = if s.contains('.') { s.trim_end_matches('0').trim_end_matches('.').to_string() } else { s };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

/// [`number`], or `0` when `|x|` is below `level` (a rounding level from the data's scale).
pub fn number_above(x: f64, level: f64) -> String {
    if x.abs() < level {
        "0".into()
    } else {
        number(x)
    }
}

fn minus(s: String) -> String {
    s.replace('-', "\u{2212}")
}

/// `−20 + 30j` (parts below `level` shown as 0 and dropped; typographic minus).
pub fn complex_above(z: Complex64, level: f64) -> String {
    let re = if z.re.abs() < level { 0.0 } else { z.re };
    let im = if z.im.abs() < level { 0.0 } else { z.im };
    if im == 0.0 {
        return minus(number(re));
    }
    let sign = if im < 0.0 { "\u{2212}" } else { "+" };
    if re == 0.0 {
        return format!("{}{}j", if im < 0.0 { "\u{2212}" } else { "" }, number(im.abs()));
    }
    format!("{} {sign} {}j", minus(number(re)), number(im.abs()))
}

/// `−20 + 30j` with the digits in force.
pub fn complex(z: Complex64) -> String {
    complex_above(z, 0.0)
}

/// A conjugate pair written once: `−20 ± 30j` (`±30j` when the real part is 0).
pub fn pair_above(z: Complex64, level: f64) -> String {
    let re = if z.re.abs() < level { 0.0 } else { z.re };
    if re == 0.0 {
        return format!("±{}j", number(z.im.abs()));
    }
    format!("{} ± {}j", minus(number(re)), number(z.im.abs()))
}

/// A pole list for reading: each conjugate pair once (`−20 ± 30j`), parts below `level`
/// shown as 0, separated by `", "`, in the given order.
pub fn pole_list_above(poles: &[Complex64], level: f64) -> String {
    let mut used = vec![false; poles.len()];
    let mut parts = Vec::with_capacity(poles.len());
    for (i, z) in poles.iter().enumerate() {
        if used.get(i).copied().unwrap_or(true) {
            continue;
        }
        if let Some(u) = used.get_mut(i) {
            *u = true;
        }
        let shown_complex = z.im.abs() >= level && z.im != 0.0 && z.im.is_finite();
        let partner = poles
            .iter()
            .enumerate()
            .position(|(j, w)| !used.get(j).copied().unwrap_or(true) && (w.re - z.re).abs() <= level.max(1e-12 * z.norm()) && (w.im + z.im).abs() <= level.max(1e-12 * z.norm()));
        match partner {
            Some(j) if shown_complex => {
                if let Some(u) = used.get_mut(j) {
                    *u = true;
                }
                parts.push(pair_above(*z, level));
            }
            _ => parts.push(complex_above(*z, level)),
        }
    }
    parts.join(", ")
}

/// [`pole_list_above`] with no rounding level.
pub fn pole_list(poles: &[Complex64]) -> String {
    pole_list_above(poles, 0.0)
}

#[cfg(test)]
#[path = "tests/format.rs"]
mod tests;
