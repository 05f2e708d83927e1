//! The robustness part of the report: margins at the plant input (each input, all inputs),
//! the frequency-response table, pole sensitivity and the uncertainty cloud, as text.

use super::*;
use crate::design::MultiloopAccuracy;

fn gain_text(v: f64) -> String {
    if v.is_finite() {
        fmt_num(v)
    } else {
        "∞".into()
    }
}

/// The margins at the plant input as text lines.
pub fn margin_lines(result: &DesignResult) -> Vec<String> {
    let Some(m) = &result.margins else { return Vec::new() };
    let opt = |v: Option<f64>, unit: &str| v.map_or("none".to_string(), |x| format!("{}{unit}", fmt_num(x)));
    let mut out: Vec<String> = m
        .per_input
        .iter()
        .map(|p| {
            let (d, c) = (&p.disk, &p.classical);
            format!(
                "{} (others closed): disk margin {} (gain × {} to × {}, phase ±{}° at {} rad/s); gain margins {} / {}, phase margin {} at {} rad/s, delay margin {}.",
                p.input,
                fmt_num(d.disk_margin),
                fmt_num(d.gain_range[0]),
                gain_text(d.gain_range[1]),
                fmt_num(d.phase_margin_deg),
                fmt_num(d.frequency),
                opt(c.gain_margin_low, ""),
                opt(c.gain_margin_high, ""),
                opt(c.phase_margin_deg, "°"),
                opt(c.crossover, ""),
                opt(c.delay_margin, " s")
            )
        })
        .collect();
    if m.per_input.len() > 1 {
        let d = &m.all_inputs.disk;
        let how = match m.all_inputs.accuracy {
            MultiloopAccuracy::Exact => "exact".to_string(),
            MultiloopAccuracy::Bound => "a guaranteed bound that may be conservative".to_string(),
        };
        out.push(format!(
            "All inputs at once: disk margin {} (gain × {} to × {}, phase ±{}° at {} rad/s; {how}).",
            fmt_num(d.disk_margin),
            fmt_num(d.gain_range[0]),
            gain_text(d.gain_range[1]),
            fmt_num(d.phase_margin_deg),
            fmt_num(d.frequency)
        ));
    }
    out.push(format!(
        "Disk skew {}. Peaks at the plant input: σ_max(S) {} at {} rad/s, σ_max(T) {} at {} rad/s.",
        fmt_num(m.skew),
        fmt_num(m.peak_sensitivity),
        fmt_num(m.peak_sensitivity_frequency),
        fmt_num(m.peak_complementary_sensitivity),
        fmt_num(m.peak_complementary_sensitivity_frequency)
    ));
    out
}
