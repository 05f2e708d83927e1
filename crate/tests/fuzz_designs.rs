//! A bounded, seeded fuzz run of whole designs: 100,000 generated design documents, from
//! corruptions of valid ones and numerical abuse (huge and tiny numbers, near-repeated and
//! unstable poles, decimal commas, typographic minus signs, wrong counts, digital and loop
//! sections at random). Asserted: no panic; every success has finite gains and poles; and for
//! small continuous designs with moderate numbers, a success whose requested poles are all
//! stable has a closed loop that is stable by Routh–Hurwitz on the characteristic polynomial of
//! A − B K (computed by the Faddeev–LeVerrier recursion, independent of the eigenvalue routine;
//! Gantmacher, *The Theory of Matrices*, 1959, §4.4, from memory).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use nalgebra::DMatrix;
use polewright::design::{self, DesignError};

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A number as JSON text: usually moderate, sometimes an abuse.
fn number(rng: &mut Rng, moderate: &mut bool) -> String {
    match rng.below(40) {
        0 => {
            *moderate = false;
            "1e150".into()
        }
        1 => {
            *moderate = false;
            "-1e200".into()
        }
        2 => {
            *moderate = false;
            "1e-160".into()
        }
        3 => "0".into(),
        4 => {
            *moderate = false;
            "1e10".into()
        }
        _ => format!("{:.3}", 6.0 * rng.unit() - 3.0),
    }
}

fn matrix_text(rng: &mut Rng, r: usize, c: usize, moderate: &mut bool) -> String {
    let rows: Vec<String> = (0..r).map(|_| format!("[{}]", (0..c).map(|_| number(rng, moderate)).collect::<Vec<_>>().join(", "))).collect();
    format!("[{}]", rows.join(", "))
}

fn poles_text(rng: &mut Rng, n: usize) -> (String, bool) {
    let mut items = Vec::new();
    let mut stable = true;
    let centre = -(0.3 + 3.0 * rng.unit());
    while items.len() < n {
        let re = match rng.below(12) {
            0 => {
                stable = false;
                0.5
            }
            1 => centre - 1e-12 * rng.unit(),
            _ => centre - rng.unit(),
        };
        if n - items.len() >= 2 && rng.below(2) == 0 {
            items.push(format!("\"{re}±{}j\"", 0.1 + rng.unit()));
            items.push(String::new());
        } else {
            items.push(format!("{re}"));
        }
    }
    let items: Vec<String> = items.into_iter().filter(|s| !s.is_empty()).collect();
    let text = match rng.below(20) {
        0 => format!("\"{}\"", items.iter().map(|s| s.trim_matches('"').replace('-', "\u{2212}")).collect::<Vec<_>>().join(", ")),
        1 => "\"-1,5 -2,5\"".into(),
        _ => format!("[{}]", items.join(", ")),
    };
    (text, stable)
}

/// The characteristic polynomial coefficients c (s^n + c[n-1] s^(n-1) + … + c[0]) by
/// Faddeev–LeVerrier.
fn char_poly(m: &DMatrix<f64>) -> Vec<f64> {
    let n = m.nrows();
    let mut coeffs = vec![0.0; n];
    let mut mk = DMatrix::<f64>::identity(n, n);
    for k in 1..=n {
        let am = m * &mk;
        let c = -am.trace() / k as f64;
        coeffs[n - k] = c;
        mk = am + DMatrix::<f64>::identity(n, n) * c;
    }
    coeffs
}

fn routh_stable(c: &[f64]) -> bool {
    let mut poly = vec![1.0];
    poly.extend(c.iter().rev());
    if poly.iter().any(|v| !(*v > 0.0)) {
        return false;
    }
    let mut r0: Vec<f64> = poly.iter().step_by(2).copied().collect();
    let mut r1: Vec<f64> = poly.iter().skip(1).step_by(2).copied().collect();
    while !r1.is_empty() {
        if !(r1[0] > 0.0) {
            return false;
        }
        let next: Vec<f64> = (0..r0.len().saturating_sub(1)).map(|j| (r1[0] * r0[j + 1] - r0[0] * r1.get(j + 1).copied().unwrap_or(0.0)) / r1[0]).collect();
        r0 = r1;
        r1 = next;
    }
    true
}

#[test]
fn one_hundred_thousand_generated_designs_never_panic_nor_succeed_wrongly() {
    let mut rng = Rng(0xF022_D351_6A5E_0042);
    let (mut ok, mut refused, mut invalid, mut routh_checked) = (0usize, 0usize, 0usize, 0usize);
    for case in 0..100_000 {
        let n = 1 + rng.below(4);
        let m = 1 + rng.below(2);
        let mut moderate = true;
        let a = matrix_text(&mut rng, n, n, &mut moderate);
        let b = matrix_text(&mut rng, n, m, &mut moderate);
        let (poles, stable) = poles_text(&mut rng, n);
        let mut sections = String::new();
        let digital = rng.below(6) == 0;
        if digital {
            sections.push_str(&format!(r#", "implementation": {{"sample_time": {}}}"#, ["0.01", "1e-6", "0", "\"0,001\""][rng.below(4)]));
        }
        if rng.below(5) == 0 {
            sections.push_str(&format!(r#", "actuators": {{"limit": [{}]}}"#, vec!["2"; if rng.below(3) == 0 { m + 1 } else { m }].join(", ")));
        }
        if rng.below(8) == 0 {
            sections.push_str(&format!(r#", "simulation": {{"duration": {}}}"#, ["3", "1e9", "-1"][rng.below(3)]));
        }
        let mut doc = format!(r#"{{"format": "polewright.design", "version": 3, "plant": {{"a": {a}, "b": {b}}}, "feedback": {{"poles": {poles}}}{sections}}}"#);
        if rng.below(10) == 0 {
            let cut = rng.below(doc.len());
            doc.truncate(doc.char_indices().map(|(i, _)| i).take_while(|i| *i <= cut).last().unwrap_or(0));
        }
        let outcome = std::panic::catch_unwind(|| design::run_text(&doc)).unwrap_or_else(|_| panic!("case {case} panicked: {doc}"));
        match outcome {
            Ok(r) => {
                ok += 1;
                let k = &r.feedback.gain;
                assert!(k.iter().flatten().all(|v| v.is_finite()), "case {case}: non-finite gain: {doc}");
                assert!(r.feedback.achieved_poles.iter().flatten().all(|v| v.is_finite()), "case {case}: {doc}");
                if stable && moderate && !digital && r.feedback.fixed_modes.is_empty() {
                    let am = DMatrix::from_fn(n, n, |i, j| serde_json::from_str::<Vec<Vec<f64>>>(&a).unwrap()[i][j]);
                    let bm = DMatrix::from_fn(n, m, |i, j| serde_json::from_str::<Vec<Vec<f64>>>(&b).unwrap()[i][j]);
                    let km = DMatrix::from_fn(m, n, |i, j| k[i][j]);
                    let c = char_poly(&(am - bm * km));
                    assert!(routh_stable(&c), "case {case}: accepted, but unstable by Routh–Hurwitz ({c:?}): {doc}");
                    routh_checked += 1;
                }
            }
            Err(DesignError::Infeasible { message }) => {
                refused += 1;
                assert!(!message.contains("NaN"), "case {case}: {message}");
            }
            Err(DesignError::Input(e)) => {
                invalid += 1;
                assert!(!e.message.is_empty() && !e.message.contains("NaN"), "case {case}: {e}");
            }
        }
    }
    eprintln!("{ok} designed ({routh_checked} checked by Routh–Hurwitz), {refused} refused, {invalid} invalid input");
    assert_eq!(ok + refused + invalid, 100_000);
    assert!(ok >= 20_000 && routh_checked >= 5_000, "{ok} designed, {routh_checked} checked");
}
