//! Text from a design document made safe for each export target. Design files travel by mail
//! and shared drives; a name such as `x */ int injected; /*`, a unit with a newline or a note
//! starting with `=` must never become code, markup or a spreadsheet formula.

/// One line of a comment (C `/* */`, Rust `//`): control characters become spaces, and the
/// sequences that could end a block comment or form a C trigraph (`*/`, `/*`, `??`) are broken
/// apart with a space. Everything else is kept.
pub fn comment_line(text: &str) -> String {
    let mut out: String = text.chars().map(|c| if c.is_control() { ' ' } else { c }).collect();
    for (from, to) in [("*/", "* /"), ("/*", "/ *"), ("??", "? ?")] {
        while out.contains(from) {
            out = out.replace(from, to);
        }
    }
    out
}

/// Control characters (line breaks, tabs, …) as spaces: every header line stays one line.
pub fn one_line(text: &str) -> String {
    text.chars().map(|c| if c.is_control() { ' ' } else { c }).collect()
}

/// A CSV cell per RFC 4180: always quoted, inner quotes doubled, line breaks kept inside the
/// quotes; a cell that a spreadsheet would read as a formula (leading `=`, `+`, `-`, `@`, tab or
/// carriage return) gets a leading apostrophe — unless it is a plain number.
pub fn csv_cell(text: &str) -> String {
    let formula = text.starts_with(['=', '+', '-', '@', '\t', '\r']) && text.parse::<f64>().is_err();
    let body = if formula { format!("'{text}") } else { text.to_string() };
    format!("\"{}\"", body.replace('"', "\"\""))
}

/// Text for HTML element content and attribute values.
pub fn html(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// An `f64` that reads back exactly (Rust's shortest round-trip form, always with a decimal
/// point or exponent so that it is a float literal in C and Rust).
pub fn rust_f64(v: f64) -> String {
    let s = format!("{v:?}");
    if s.contains(['.', 'e', 'E']) || !v.is_finite() {
        s
    } else {
        format!("{s}.0")
    }
}

/// A C `double` literal with 17 significant digits.
pub fn c_double(v: f64) -> String {
    format!("{v:.16e}")
}

/// A C `float` literal with 9 significant digits and the `f` suffix: the nearest float32 of
/// the value reads back from it exactly.
pub fn c_float(v: f64) -> String {
    format!("{:.8e}f", v as f32)
}
