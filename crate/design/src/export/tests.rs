//! Unit tests of the text escaping (the whole exports are compiled and run by
//! `crate/tests/exports.rs`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::text::*;

#[test]
fn comments_cannot_be_closed_or_spliced() {
    let evil = "x */ int injected; /* ??/\nnext";
    let line = comment_line(evil);
    assert!(!line.contains("*/") && !line.contains("/*") && !line.contains("??") && !line.contains('\n'), "{line}");
    assert!(line.contains("int injected"), "the text is kept, made harmless: {line}");
}

#[test]
fn csv_cells_are_quoted_and_formulas_neutralised() {
    assert_eq!(csv_cell("plain"), "\"plain\"");
    assert_eq!(csv_cell("a \"b\", c"), "\"a \"\"b\"\", c\"");
    assert_eq!(csv_cell("=HYPERLINK(\"x\")"), "\"'=HYPERLINK(\"\"x\"\")\"");
    assert_eq!(csv_cell("-1.5"), "\"-1.5\"", "a number stays a number");
    assert_eq!(csv_cell("@sum"), "\"'@sum\"");
}

#[test]
fn html_is_escaped() {
    assert_eq!(html("<script>alert('x')</script> & \"q\""), "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;q&quot;");
}

#[test]
fn literals_read_back() {
    for v in [0.1, -2.5e-300, 1.0 / 3.0, 123456789.0, 1e22] {
        assert_eq!(rust_f64(v).parse::<f64>().unwrap(), v);
        assert_eq!(c_double(v).parse::<f64>().unwrap(), v);
        assert_eq!(c_float(v).trim_end_matches('f').parse::<f32>().unwrap(), v as f32);
    }
    assert_eq!(rust_f64(2.0), "2.0");
}
