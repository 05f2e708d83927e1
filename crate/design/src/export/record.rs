//! The printable design record: what the tool was asked (the document, by its SHA-256), what it
//! did (the plant, how the poles were chosen, every gain once), the checks it ran with their
//! figures, the exported files' hashes, the tool version, a sign-off block and the safety
//! caution — the evidence a functional-safety review asks of a tool whose output enters the
//! product (IEC 61508-3:2010, 7.4.4; from memory). The same HTML fragment is printed by the page
//! and written whole by `polewright report`. All design text is HTML-escaped; the standalone
//! document carries a CSP that allows no script and no connection.

use sha2::{Digest, Sha256};

use super::text::html;
use super::{controller, export, Controller, ExportFormat, Precision};
use crate::check::CheckedDesign;
use crate::result::{DesignResult, Pair};
use crate::spec::DesignSpec;
use crate::{fmt_num, TOOL_VERSION};

/// The record's styles (also inlined into the page by the build).
pub const RECORD_CSS: &str = include_str!("../../../../site/record.css");

fn esc(s: &str) -> String {
    html(s)
}

fn pole_text(p: &Pair) -> String {
    let (re, im) = (p[0], p[1]);
    if im == 0.0 {
        fmt_num(re)
    } else {
        format!("{}{}{}j", fmt_num(re), if im < 0.0 { "−" } else { "+" }, fmt_num(im.abs()))
    }
}

fn poles_text(ps: &[Pair]) -> String {
    ps.iter().map(pole_text).collect::<Vec<_>>().join(", ")
}

fn matrix_table(caption: &str, rows: &[Vec<f64>], row_names: &[String], col_names: &[String]) -> String {
    let mut out = format!("<table class=\"pw-rec-matrix\"><caption>{}</caption><thead><tr><th></th>", esc(caption));
    for (j, _) in rows.first().map(|r| r.as_slice()).unwrap_or(&[]).iter().enumerate() {
        out.push_str(&format!("<th>{}</th>", esc(col_names.get(j).map_or("", |s| s.as_str()))));
    }
    out.push_str("</tr></thead><tbody>");
    for (i, r) in rows.iter().enumerate() {
        out.push_str(&format!("<tr><th>{}</th>", esc(row_names.get(i).map_or("", |s| s.as_str()))));
        for v in r {
            out.push_str(&format!("<td>{}</td>", esc(&format!("{v:.6e}"))));
        }
        out.push_str("</tr>");
    }
    out.push_str("</tbody></table>");
    out
}

fn rows_of(m: &nalgebra::DMatrix<f64>) -> Vec<Vec<f64>> {
    (0..m.nrows()).map(|i| m.row(i).iter().copied().collect()).collect()
}

/// The checks and their figures, one row each: `(check, figure, verdict)`.
fn checks(result: &DesignResult) -> Vec<(String, String, String)> {
    let mut rows = Vec::new();
    let c = &result.controllability;
    let weakest = c.modes.iter().map(|m| m.margin).fold(f64::INFINITY, f64::min);
    rows.push((
        "Controllability (staircase; PBH margins in balanced units)".into(),
        format!("rank {} of {}; smallest margin {}", c.rank, c.states, fmt_num(weakest)),
        if c.complete {
            "controllable"
        } else if c.stabilizable {
            "stabilisable"
        } else {
            "not stabilisable"
        }
        .into(),
    ));
    if let Some(o) = &result.observability {
        let weakest = o.modes.iter().map(|m| m.margin).fold(f64::INFINITY, f64::min);
        rows.push((
            "Observability".into(),
            format!("rank {} of {}; smallest margin {}", o.rank, o.states, fmt_num(weakest)),
            if o.complete {
                "observable"
            } else if o.stabilizable {
                "detectable"
            } else {
                "not detectable"
            }
            .into(),
        ));
    }
    let f = &result.feedback;
    rows.push((
        "Placement: achieved against requested poles (recomputed from A − B K)".into(),
        format!("largest relative error {}", fmt_num(f.max_pole_error)),
        if f.max_pole_error <= 1e-6 { "within 1e-6" } else { "see warnings" }.into(),
    ));
    rows.push((
        "Eigenvector conditioning κ₂ (balanced)".into(),
        format!("{} ({} as scaled)", fmt_num(f.balanced_eigenvector_condition), fmt_num(f.eigenvector_condition)),
        if f.balanced_eigenvector_condition <= 1e4 { "below 1e4" } else { "fragile: see warnings" }.into(),
    ));
    rows.push(("Independent stability verdict (eigenvalues and Lyapunov equation of the closed loop)".into(), "passed".into(), "stable".into()));
    if let Some(z) = &result.zeros {
        let zeros: Vec<String> = z.zeros.iter().map(|p| crate::format::complex(num_complex::Complex64::new(p[0], p[1]))).collect();
        let figure = if zeros.is_empty() { "none".to_string() } else { zeros.join(", ") };
        rows.push(("Plant zeros, inputs to outputs C (rank drop of the system matrix)".into(), figure, if z.non_minimum_phase { "non-minimum-phase: see report" } else { "minimum-phase" }.into()));
    }
    rows.extend(state_limit_row(result));
    if let Some(l) = &result.lqr {
        rows.push(("Riccati equation, normalised residual".into(), fmt_num(l.residual), if l.residual <= 1e-10 { "accurate" } else { "see warnings" }.into()));
    }
    if let Some(o) = &result.observer {
        rows.push((
            "Observer placement".into(),
            format!("largest relative error {}; ‖K L‖₂ = {}", fmt_num(o.max_pole_error), fmt_num(o.noise_to_input_gain)),
            if o.max_pole_error <= 1e-6 { "within 1e-6" } else { "see warnings" }.into(),
        ));
    }
    if let Some(sep) = result.closed_loop.as_ref().and_then(|l| l.separation_error) {
        rows.push(("Separation principle (loop with observer)".into(), format!("largest relative pole difference {}", fmt_num(sep)), if sep <= 1e-6 { "holds" } else { "see warnings" }.into()));
    }
    if let Some(fp) = &result.finite_precision {
        for l in &fp.loops {
            rows.push((
                format!("Float32 re-check, {} loop", l.name),
                format!("poles move by at most {}; damping kept {} %", fmt_num(l.max_pole_move), fmt_num(100.0 * l.worst_damping_fraction)),
                if l.stable && l.worst_damping_fraction >= 0.9 { "float32 adequate" } else { "use double: see warnings" }.into(),
            ));
        }
    }
    if let Some(m) = &result.margins {
        rows.extend(margin_rows(m));
    }
    if let Some(ps) = &result.pole_sensitivity {
        let worst = ps.poles.iter().filter_map(|r| r.condition).fold(0.0, f64::max);
        rows.push(("Pole sensitivity, largest κ(λ)".into(), fmt_num(worst), if worst <= 100.0 { "low" } else { "high: see report" }.into()));
    }
    if let Some(u) = &result.uncertainty {
        rows.push((
            format!("Uncertain plant, {} samples (seed {}): {}", u.samples, u.seed, u.parameters.join(", ")),
            format!("{} of {} stable; worst decay rate {} 1/s, worst damping {}", u.stable, u.samples, fmt_num(u.worst_decay_rate), fmt_num(u.worst_damping)),
            if u.stable == u.samples { "all samples stable" } else { "some samples unstable" }.into(),
        ));
    }
    if let Some(s) = &result.sample_rate {
        rows.push((
            "Sample rate against the closed-loop bandwidth".into(),
            s.samples_per_bandwidth.map_or("deadbeat".into(), |v| format!("{} samples per bandwidth period", fmt_num(v))),
            sample_rate_words(s.verdict).to_string(),
        ));
    }
    rows
}

/// A small line plot as inline SVG (no script, no external reference): each series normalised to
/// its own peak so that signals in different units share the axes; `title` says what is shown.
fn svg_plot(title: &str, time: &[f64], series: &[(String, &[f64])]) -> String {
    let (w, h, pad) = (340.0, 120.0, 4.0);
    let t_end = time.last().copied().unwrap_or(1.0).max(f64::MIN_POSITIVE);
    let colours = ["#1b6f8a", "#b5542c", "#4b7d2a", "#6b4fa0", "#8a6d1b", "#2a6b6b"];
    let mut o = format!("<figure class=\"pw-rec-plot\"><svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {w} {h}\" width=\"{w}\" height=\"{h}\" role=\"img\" aria-label=\"{}\">", esc(title));
    o.push_str(&format!("<rect x=\"0\" y=\"0\" width=\"{w}\" height=\"{h}\" fill=\"none\" stroke=\"#999999\"/><line x1=\"0\" y1=\"{}\" x2=\"{w}\" y2=\"{}\" stroke=\"#cccccc\"/>", h / 2.0, h / 2.0));
    for (k, (_, ys)) in series.iter().enumerate() {
        let peak = ys.iter().fold(0.0f64, |a, v| a.max(v.abs())).max(f64::MIN_POSITIVE);
        let stride = (ys.len() / 300).max(1);
        let points: Vec<String> = ys.iter().zip(time).step_by(stride).map(|(y, t)| format!("{:.1},{:.1}", pad + (w - 2.0 * pad) * t / t_end, h / 2.0 - (h / 2.0 - pad) * y / peak)).collect();
        o.push_str(&format!("<polyline fill=\"none\" stroke=\"{}\" stroke-width=\"1.2\" points=\"{}\"/>", colours[k % colours.len()], points.join(" ")));
    }
    o.push_str("</svg><figcaption>");
    o.push_str(&esc(&format!("{title} (each signal divided by its own peak; 0 to {} s): ", fmt_num(t_end))));
    let keys: Vec<String> = series
        .iter()
        .enumerate()
        .map(|(k, (n, ys))| {
            format!(
                "<svg class=\"pw-rec-key\" viewBox=\"0 0 10 10\" width=\"8\" height=\"8\"><rect width=\"10\" height=\"10\" fill=\"{}\"/></svg> {} (peak {})",
                colours[k % colours.len()],
                esc(n),
                esc(&fmt_num(ys.iter().fold(0.0f64, |a, v| a.max(v.abs()))))
            )
        })
        .collect();
    o.push_str(&keys.join("; "));
    o.push_str("</figcaption></figure>");
    o
}

/// The key plots: the whole loop (tracked outputs and inputs) when simulated, else the free
/// response (states and inputs).
fn plots(result: &DesignResult) -> String {
    let p = &result.plant;
    if let Some(l) = &result.closed_loop {
        let mut outs: Vec<(String, &[f64])> = p.output_names.iter().zip(&l.outputs).map(|(n, s)| (n.clone(), s.as_slice())).collect();
        outs.truncate(3);
        let ins: Vec<(String, &[f64])> = p.input_names.iter().zip(&l.inputs).map(|(n, s)| (format!("{n} (applied)"), s.as_slice())).collect();
        format!("<div class=\"pw-rec-row\">{}{}</div>", svg_plot("Loop simulation: outputs", &l.time, &outs), svg_plot("Loop simulation: inputs", &l.time, &ins))
    } else {
        let s = &result.simulation;
        let mut states: Vec<(String, &[f64])> = p.state_names.iter().zip(&s.states).map(|(n, x)| (n.clone(), x.as_slice())).collect();
        states.truncate(4);
        let ins: Vec<(String, &[f64])> = p.input_names.iter().zip(&s.inputs).map(|(n, x)| (n.clone(), x.as_slice())).collect();
        format!("<div class=\"pw-rec-row\">{}{}</div>", svg_plot("Free response: states", &s.time, &states), svg_plot("Free response: inputs", &s.time, &ins))
    }
}

/// SHA-256 (hex) of a text.
fn sha(text: &str) -> String {
    Sha256::digest(text.as_bytes()).iter().map(|b| format!("{b:02x}")).collect()
}

/// The record as an HTML fragment (an `<article>`), `date` as given (the caller's clock).
pub fn record_fragment(spec: &DesignSpec, design: &CheckedDesign, result: &DesignResult, date: &str) -> String {
    let c: Controller = controller(spec, design, result);
    let p = &result.plant;
    let mut o = String::from("<article class=\"pw-record\">");
    o.push_str(&format!(
        "<header><h1>Design record: {}</h1><p>{} · Polewright {} · design document SHA-256 <code>{}</code></p></header>",
        esc(if spec.title.is_empty() { "(untitled)" } else { &spec.title }),
        esc(date),
        esc(TOOL_VERSION),
        esc(&c.document_sha256)
    ));
    o.push_str("<p class=\"pw-rec-caution\"><strong>CAUTION:</strong> a design aid, not a safety function. Verify every number independently before use on real equipment; limits, emergency stops and trips stay independent of this controller; follow local codes, the applicable functional-safety standards (e.g. IEC 61508, ISO 13849) and licensed engineering practice.</p>");
    if !spec.notes.is_empty() {
        o.push_str(&format!("<section><h2>Purpose and notes</h2><p class=\"pw-rec-notes\">{}</p></section>", esc(&spec.notes)));
    }
    // Plant.
    let plant = &design.request.plant;
    let named = |names: &[String], units: &[String]| -> Vec<String> {
        names
            .iter()
            .enumerate()
            .map(|(i, n)| match units.get(i).filter(|u| !u.is_empty()) {
                Some(u) => format!("{n} [{u}]"),
                None => n.clone(),
            })
            .collect()
    };
    let states = named(&p.state_names, &p.state_units);
    let inputs = named(&p.input_names, &p.input_units);
    o.push_str("<section><h2>Plant</h2>");
    o.push_str(&format!(
        "<p>{} states, {} inputs, {} outputs; {}.</p>",
        p.states,
        p.inputs,
        p.outputs,
        esc(&match c.sample_time {
            Some(t) => format!("digital controller at T = {} s (zero-order hold){}", fmt_num(t), if c.computation_delay { ", one-sample computation delay" } else { "" }),
            None => "continuous-time design".into(),
        })
    ));
    o.push_str("<div class=\"pw-rec-row\">");
    o.push_str(&matrix_table("A", &rows_of(plant.a()), &states, &states));
    o.push_str(&matrix_table("B", &rows_of(plant.b()), &states, &inputs));
    if let Some(cm) = plant.c() {
        o.push_str(&matrix_table("C", &rows_of(cm), &p.output_names, &states));
    }
    if let Some(e) = &design.controller.scenario.disturbance_input {
        o.push_str(&matrix_table("E (the load step's input)", &rows_of(e), &states, &[]));
    }
    o.push_str("</div></section>");
    // Poles.
    o.push_str("<section><h2>Closed-loop poles: how they were chosen</h2><p>");
    match &result.pole_choice {
        Some(pc) => o.push_str(&esc(&pc.description)),
        None if result.lqr.is_some() => o.push_str("The poles of the LQR design with the weights of the document (Q, R below in the document)."),
        None => o.push_str("Listed in the design document."),
    }
    o.push_str(&format!("</p><p>Requested: {}. Achieved (recomputed): {}.</p>", esc(&poles_text(&result.feedback.requested_poles)), esc(&poles_text(&result.feedback.achieved_poles))));
    if let Some(obs) = &result.observer {
        o.push_str(&format!("<p>Observer poles: {}.</p>", esc(&poles_text(&obs.achieved_poles))));
    }
    o.push_str("</section>");
    // Gains: every matrix once.
    o.push_str("<section><h2>Controller</h2>");
    o.push_str(&format!("<p>{}</p><div class=\"pw-rec-row\">", esc(super::header::lines(&c).iter().find(|l| l.starts_with("Convention")).map_or("", |s| s.as_str()))));
    for m in c.matrices.iter().filter(|m| !matches!(m.name, "Phi" | "Gamma" | "C" | "D")) {
        let rows: Vec<Vec<f64>> = m.data.chunks(m.cols.max(1)).map(|r| r.to_vec()).collect();
        o.push_str(&matrix_table(m.name, &rows, &[], &[]));
    }
    o.push_str("</div></section>");
    // Checks.
    o.push_str("<section><h2>Checks run and their results</h2><table class=\"pw-rec-checks\"><thead><tr><th>Check</th><th>Figure</th><th>Verdict</th></tr></thead><tbody>");
    for (what, figure, verdict) in checks(result) {
        o.push_str(&format!("<tr><td>{}</td><td>{}</td><td>{}</td></tr>", esc(&what), esc(&figure), esc(&verdict)));
    }
    o.push_str("</tbody></table>");
    if result.warnings.is_empty() {
        o.push_str("<p>Warnings: none.</p>");
    } else {
        o.push_str("<p>Warnings:</p><ul class=\"pw-rec-warnings\">");
        for w in &result.warnings {
            o.push_str(&format!("<li>[{}] {}</li>", esc(w.code.as_str()), esc(&w.message)));
        }
        o.push_str("</ul>");
    }
    o.push_str("</section>");
    // Key plots.
    o.push_str(&format!("<section><h2>Response</h2>{}</section>", plots(result)));
    // Exported files.
    o.push_str("<section><h2>Exported files (double precision)</h2><ul class=\"pw-rec-files\">");
    for format in [ExportFormat::C, ExportFormat::Json] {
        if let Ok(files) = export(spec, design, result, format, Precision::Double) {
            for f in files {
                o.push_str(&format!("<li><code>{}</code> SHA-256 <code>{}</code></li>", esc(&f.name), sha(&f.contents)));
            }
        }
    }
    o.push_str("</ul></section>");
    // Sign-off.
    o.push_str("<section class=\"pw-rec-signoff\"><h2>Sign-off</h2><table><thead><tr><th>Role</th><th>Name</th><th>Signature</th><th>Date</th></tr></thead><tbody>");
    for role in ["Designed by", "Checked by", "Approved by"] {
        o.push_str(&format!("<tr><td>{role}</td><td></td><td></td><td></td></tr>"));
    }
    o.push_str("</tbody></table><p class=\"pw-rec-small\">This record states what the tool was asked (the design document, identified by its SHA-256), what it computed, the checks it ran with their results, and the tool version (cf. IEC 61508-3:2010, 7.4.4). The reviewer checks the numbers independently.</p></section>");
    o.push_str("</article>");
    o
}

/// The record as a standalone HTML document: no script, no connection (its own CSP).
pub fn record_document(spec: &DesignSpec, design: &CheckedDesign, result: &DesignResult, date: &str) -> String {
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'\">\n<meta charset=\"utf-8\">\n<title>Design record: {}</title>\n<style>\n{}\n</style>\n</head>\n<body class=\"pw-record-page\">\n{}\n</body>\n</html>\n",
        esc(if spec.title.is_empty() { "(untitled)" } else { &spec.title }),
        RECORD_CSS,
        record_fragment(spec, design, result, date)
    )
}

/// Reads, checks and runs a design file and writes its standalone record (what the CLI does).
///
/// # Errors
/// The design's [`crate::DesignError`].
pub fn record_from_text(text: &str, date: &str, whole: bool) -> Result<String, crate::DesignError> {
    let spec = crate::spec::read_design(text).map_err(crate::DesignError::Input)?;
    let design = crate::check::check_text(text)?;
    let result = crate::run::run_checked(&design)?;
    Ok(if whole { record_document(&spec, &design, &result, date) } else { record_fragment(&spec, &design, &result, date) })
}

/// The record's rows of the margins at the plant input: each input's disk margin on one row,
/// all inputs at once with the sensitivity peaks on another (the record stays on two pages).
fn margin_rows(m: &crate::result::MarginsResult) -> Vec<(String, String, String)> {
    let enough = |d: &crate::result::DiskMargin| d.gain_range[0] <= 0.5 && d.gain_range[1] >= 2.0 && d.phase_margin_deg >= 35.0;
    let range = |d: &crate::result::DiskMargin| format!("α = {} (× {}–{}, ±{}°)", fmt_num(d.disk_margin), fmt_num(d.gain_range[0]), fmt_num(d.gain_range[1]), fmt_num(d.phase_margin_deg));
    let per: Vec<String> = m.per_input.iter().map(|p| format!("{}: {}, delay {}", p.input, range(&p.disk), p.classical.delay_margin.map_or("none".into(), |d| format!("{} s", fmt_num(d))))).collect();
    let all = &m.all_inputs;
    let how = match all.accuracy {
        crate::result::MultiloopAccuracy::Exact => "exact",
        crate::result::MultiloopAccuracy::Bound => "guaranteed bound",
    };
    let verdict = |ok: bool| if ok { "at least ±6 dB, ±35°" } else { "small: see warnings" }.to_string();
    if m.per_input.len() == 1 {
        // One input: all inputs at once is that input's loop.
        return vec![(format!("Disk margin at the plant input (skew {})", fmt_num(m.skew)), per.join("; "), verdict(enough(&m.all_inputs_symmetric)))];
    }
    vec![
        (format!("Disk margins, each input alone (skew {})", fmt_num(m.skew)), per.join("; "), String::new()),
        ("Disk margin, all inputs at once".into(), format!("{} ({how})", range(&all.disk)), verdict(enough(&m.all_inputs_symmetric))),
    ]
}

fn sample_rate_words(v: crate::controller::SampleRateVerdict) -> &'static str {
    use crate::controller::SampleRateVerdict as V;
    match v {
        V::TooSlow => "too slow (fewer than 10)",
        V::Adequate => "adequate (10–30)",
        V::Fast => "fast (more than 30)",
        V::Deadbeat => "deadbeat (rule does not apply)",
    }
}

/// The state nearest its limit, over the loop simulation when there is one.
fn state_limit_row(result: &DesignResult) -> Option<(String, String, String)> {
    let limits = &result.simulation.state_limit;
    let peaks = result.closed_loop.as_ref().map_or(&result.simulation.peak_state, |l| &l.peak_states);
    let (i, ratio) = limits.iter().zip(peaks).enumerate().filter_map(|(i, (l, p))| l.map(|l| (i, p / l))).max_by(|a, b| a.1.total_cmp(&b.1))?;
    let name = result.plant.state_names.get(i).cloned().unwrap_or_default();
    let situation = if result.closed_loop.is_some() { "loop simulation" } else { "free response" };
    Some((
        format!("State limits ({situation})"),
        format!("largest: {name} at {} % of its limit", fmt_num(100.0 * ratio)),
        if ratio <= 1.0 { "within the limits" } else { "EXCEEDED: see warnings" }.into(),
    ))
}
