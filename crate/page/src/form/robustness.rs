//! The robustness part of the report: margins at the plant input (each input, all inputs),
//! the frequency-response table, pole sensitivity and the uncertainty cloud, as text.

use super::*;
use crate::design::MultiloopAccuracy;

/// Gain factors within rounding (1e-12, relative to the nominal gain 1) of 0 or of
/// infinity: a disk of size 2 at skew 0 guarantees [0, ∞), computed as [1.1e-16, 9.0e15].
const GAIN_ROUNDING: f64 = 1e-12;

fn gain_text(v: f64) -> String {
    if v.is_finite() && v < 1.0 / GAIN_ROUNDING {
        fmt_num(v)
    } else {
        "∞".into()
    }
}

fn low_gain_text(v: f64) -> String {
    fmt_num(if v.abs() < GAIN_ROUNDING { 0.0 } else { v })
}

/// The margins at the plant input as text lines.
pub fn margin_lines(result: &DesignResult) -> Vec<String> {
    let Some(m) = &result.margins else {
        return result.margins_unavailable.iter().map(|why| format!("No margins: {why}.")).collect();
    };
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
                low_gain_text(d.gain_range[0]),
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
            low_gain_text(d.gain_range[0]),
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

/// The robustness figures the page shows as tables and text.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct RobustnessDetail {
    /// Frequency (rad/s), σ_max(S) and σ_max(T) (each with its dB value), at a fixed number
    /// of frequencies spread in log ω, with the peaks.
    pub frequency_rows: Vec<[String; 3]>,
    /// Pole, condition number, dλ/dp (blank without a chosen entry).
    pub sensitivity_rows: Vec<[String; 3]>,
    /// The derivative column's heading (`dλ/d A(2, 1)`), when an entry was chosen.
    pub sensitivity_entry: Option<String>,
    pub sensitivity_summary: String,
    /// The uncertainty cloud's figures, or what to do to draw it.
    pub uncertainty: Vec<String>,
    /// True when the form asks for a cloud that has not been drawn for this design.
    pub uncertainty_pending: bool,
}

fn magnitude(v: f64) -> String {
    if v > 0.0 {
        format!("{} ({} dB)", fmt_num(v), fmt_num(20.0 * v.log10()))
    } else {
        fmt_num(v)
    }
}

fn complex_text(p: &[f64; 2]) -> String {
    if p[1] == 0.0 {
        fmt_num(p[0])
    } else {
        format!("{} {} {}j", fmt_num(p[0]), if p[1] < 0.0 { "−" } else { "+" }, fmt_num(p[1].abs()))
    }
}

/// Rows of the frequency table besides the two peaks: a fixed count, so that the table keeps
/// its height while poles are dragged (the layout below it must not move under the pointer).
const FREQUENCY_ROWS: usize = 16;

/// The frequency table: [`FREQUENCY_ROWS`] frequencies evenly spread (in log ω) over the
/// response's range, and the two peaks in their place.
fn frequency_rows(m: &crate::design::MarginsResult) -> Vec<[String; 3]> {
    let f = &m.frequency_response;
    let positive: Vec<usize> = (0..f.frequency.len()).filter(|&k| f.frequency[k] > 0.0).collect();
    let mut picked: Vec<(f64, f64, f64)> = Vec::new();
    if let (Some(&first), Some(&last)) = (positive.first(), positive.last()) {
        let (lo, hi) = (f.frequency[first].log10(), f.frequency[last].log10());
        for r in 0..FREQUENCY_ROWS {
            let target = lo + (hi - lo) * r as f64 / (FREQUENCY_ROWS - 1) as f64;
            let k = positive.iter().copied().min_by(|&a, &b| (f.frequency[a].log10() - target).abs().total_cmp(&(f.frequency[b].log10() - target).abs())).unwrap_or(first);
            picked.push((f.frequency[k], f.sensitivity[k], f.complementary_sensitivity[k]));
        }
    }
    picked.push((m.peak_sensitivity_frequency, m.peak_sensitivity, f64::NAN));
    picked.push((m.peak_complementary_sensitivity_frequency, f64::NAN, m.peak_complementary_sensitivity));
    picked.sort_by(|a, b| a.0.total_cmp(&b.0));
    picked
        .iter()
        .map(|(w, s, t)| {
            let cell = |v: f64, peak: bool| {
                if v.is_nan() {
                    "—".to_string()
                } else if peak {
                    format!("{} (peak)", magnitude(v))
                } else {
                    magnitude(v)
                }
            };
            [fmt_num(*w), cell(*s, t.is_nan()), cell(*t, s.is_nan())]
        })
        .collect()
}

fn uncertainty_lines(result: &DesignResult, context: &ReportContext) -> (Vec<String>, bool) {
    let Some(u) = &result.uncertainty else {
        return match context.uncertainty_samples {
            Some(n) => (vec![format!("{n} samples of the uncertain plant are ready to draw: press “Sample the uncertain plant” (it runs on demand so that typing stays fast).")], true),
            None => (vec!["No uncertain parameters: list them under Robustness (for example A 2 1 20%) to sample the plant.".to_string()], false),
        };
    };
    let mut lines = vec![format!(
        "{} samples (seed {}) of {}: {} of {} stable ({} %){}; worst decay rate {} 1/s, worst damping {}.",
        u.samples,
        u.seed,
        u.parameters.join(", "),
        u.stable,
        u.samples,
        fmt_num(100.0 * u.stable_fraction),
        if u.failed > 0 { format!(", {} could not be computed", u.failed) } else { String::new() },
        fmt_num(u.worst_decay_rate),
        fmt_num(u.worst_damping)
    )];
    if let Some(r) = &u.response {
        let spread = |v: &[f64; 3]| format!("{} / {} / {}", fmt_num(v[0]), fmt_num(v[1]), fmt_num(v[2]));
        let settle = r.settling_time.as_ref().map_or("none settled".to_string(), |v| format!("{} s", spread(v)));
        let peaks: Vec<String> = r.peak_input.iter().zip(&result.plant.input_names).map(|(p, n)| format!("{n} {}", p.as_ref().map_or("—".to_string(), spread))).collect();
        lines.push(format!(
            "Over the samples ({}; smallest / median / largest): settling time {settle}{}; peak input {}.",
            r.scenario,
            if r.not_settled > 0 { format!(" ({} did not settle)", r.not_settled) } else { String::new() },
            peaks.join(", ")
        ));
    }
    lines.push("The cloud is drawn on the pole map as small dots.".to_string());
    (lines, false)
}

/// The robustness detail of a design.
pub fn detail(result: &DesignResult, context: &ReportContext) -> RobustnessDetail {
    let (uncertainty, uncertainty_pending) = uncertainty_lines(result, context);
    let mut out = RobustnessDetail { uncertainty, uncertainty_pending, ..RobustnessDetail::default() };
    if let Some(m) = &result.margins {
        out.frequency_rows = frequency_rows(m);
    }
    if let Some(ps) = &result.pole_sensitivity {
        out.sensitivity_rows = ps
            .poles
            .iter()
            .map(|r| [complex_text(&r.pole), r.condition.map_or("repeated pole: not defined".to_string(), fmt_num), r.derivative.as_ref().map_or(String::new(), complex_text)])
            .collect();
        out.sensitivity_entry = ps.entry.clone();
        out.sensitivity_summary = ps.summary.clone();
    }
    out
}
