//! The report: the texts and tables the page shows for a design (gain, poles, structure,
//! responses, controller), read from the result and the request's context.

use super::*;
use crate::design::format as display;

// ---------------------------------------------------------------------------------------------
// Texts.

pub(crate) fn c64(p: &Pair) -> Complex64 {
    Complex64::new(p[0], p[1])
}

/// Full-precision real number (shortest text that reads back exactly).
pub fn full(x: f64) -> String {
    format_complex(Complex64::new(x, 0.0))
}

/// `name (unit)`, or `name` without a unit.
pub fn label(name: &str, unit: Option<&String>) -> String {
    match unit.map(|u| u.trim()).filter(|u| !u.is_empty()) {
        Some(u) => format!("{name} ({u})"),
        None => name.to_string(),
    }
}

/// A concise pole: 4 decimals (or scientific) per part, typographic minus signs,
/// e.g. `−12 + 9j`.
pub fn short_pole(z: Complex64) -> String {
    display::complex(z)
}

/// Damping ratio and natural frequency of a complex pole, or the time constant of a real one.
pub fn pole_character(z: Complex64) -> String {
    if !(z.re.is_finite() && z.im.is_finite()) {
        return String::new();
    }
    if z.im != 0.0 {
        let w = z.norm();
        let zeta = -z.re / w;
        format!("damping ratio {}, natural frequency {} rad/s", fmt_num(zeta), fmt_num(w))
    } else if z.re < 0.0 {
        format!("time constant {} s", fmt_num(-1.0 / z.re))
    } else if z.re == 0.0 {
        "integrator (does not decay)".into()
    } else {
        format!("unstable: grows by e every {} s", fmt_num(1.0 / z.re))
    }
}

/// A labelled matrix with full-precision entries and its copyable text (`heading` is the
/// text's first line).
pub fn matrix_table(symbol: &str, caption: &str, heading: &str, row_labels: Vec<String>, column_labels: Vec<String>, rows: &[Vec<f64>]) -> MatrixTable {
    let full_entries: Vec<Vec<String>> = rows.iter().map(|row| row.iter().map(|v| full(*v)).collect()).collect();
    let entries: Vec<Vec<String>> = rows.iter().map(|row| row.iter().map(|v| display::complex(Complex64::new(*v, 0.0))).collect()).collect();
    let clean = |s: &str| s.replace(['\t', '\n', '\r'], " ");
    let mut text = format!("{heading}\n{symbol}");
    for l in &column_labels {
        text.push('\t');
        text.push_str(&clean(l));
    }
    text.push('\n');
    for (i, row) in full_entries.iter().enumerate() {
        text.push_str(&clean(row_labels.get(i).map_or("", |s| s.as_str())));
        for v in row {
            text.push('\t');
            text.push_str(v);
        }
        text.push('\n');
    }
    MatrixTable { symbol: symbol.into(), caption: caption.into(), row_labels, column_labels, entries, text }
}

pub(crate) fn state_labels(result: &DesignResult) -> Vec<String> {
    let p = &result.plant;
    p.state_names.iter().enumerate().map(|(j, n)| label(n, p.state_units.get(j))).collect()
}

pub(crate) fn input_labels(result: &DesignResult) -> Vec<String> {
    let p = &result.plant;
    p.input_names.iter().enumerate().map(|(i, n)| label(n, p.input_units.get(i))).collect()
}

pub(crate) fn output_label(result: &DesignResult, units: &[String], name: &str) -> String {
    let unit = result.plant.output_names.iter().position(|n| n == name).and_then(|i| units.get(i));
    label(name, unit)
}

/// `s = ln z / T`, the continuous-time equivalent of a z-plane pole (`None` for `z = 0`,
/// a non-finite `z` or a sample time that is not positive).
pub fn z_to_s(z: Complex64, t: f64) -> Option<Complex64> {
    crate::plane::s_from_z(z, t)
}

/// Below this modulus a z-plane pole is read as `z = 0` (a deadbeat or delay pole): a repeated
/// pole at 0 is computed only to about `ε^{1/p}` (1e-8 for a pair), and `ln z / T` of such a
/// remainder would be a meaningless large number.
pub const Z_ZERO: f64 = 1e-6;

/// The character of a z-plane pole, read through its equivalent `s = ln z / T`.
pub fn z_pole_character(z: Complex64, t: f64) -> String {
    if z.norm() <= Z_ZERO {
        return "at z = 0 (deadbeat / delay): gone after one sample".into();
    }
    match z_to_s(z, t) {
        Some(s) => {
            let c = pole_character(s);
            if c.is_empty() {
                format!("|z| = {}, s = {}", fmt_num(z.norm()), short_pole(s))
            } else {
                format!("|z| = {}, s = {}: {c}", fmt_num(z.norm()), short_pole(s))
            }
        }
        None if z.norm() == 0.0 => "at z = 0: gone after one sample (s = −∞)".into(),
        None => String::new(),
    }
}

/// The character of a pole of `result`: s-plane, or z-plane read through `s = ln z / T`.
/// A pole's placement error for the pole tables, on the same rule as the design's
/// `max_pole_error` ([`crate::place::pole_error_floor`]): relative in the s-plane (absolute
/// for a pole requested at 0); in the z-plane relative to `max(|z|, 1)`, i.e. the distance
/// itself for every pole inside the unit circle (a delay or deadbeat pole at `z = 0` included).
pub(crate) fn pole_error_text(result: &DesignResult, requested: Complex64, achieved: Complex64) -> String {
    let d = (achieved - requested).norm();
    if result.domain == crate::analysis::Domain::Discrete {
        fmt_num(d / requested.norm().max(1.0))
    } else if requested.norm() > 0.0 {
        fmt_num(d / requested.norm())
    } else {
        format!("{} (absolute)", fmt_num(d))
    }
}

pub(crate) fn character_in(result: &DesignResult, z: Complex64) -> String {
    match (result.domain, result.sample_time) {
        (crate::analysis::Domain::Discrete, Some(t)) => z_pole_character(z, t),
        _ => pole_character(z),
    }
}

/// The gain as a labelled table and tab-separated text, full precision.
pub fn gain_table(result: &DesignResult) -> GainTable {
    matrix_table(
        "K",
        "Gain K: one row per input, one column per state",
        "u = -K x; K has one row per input and one column per state",
        input_labels(result),
        state_labels(result),
        &result.feedback.gain,
    )
}

/// Pairs each target with the nearest unused candidate, closest pairs first (as the
/// engine's pole-error measure does). Returns, per target, the index of its candidate.
pub(crate) fn match_nearest(targets: &[Complex64], candidates: &[Complex64]) -> Vec<Option<usize>> {
    let mut pairs: Vec<(f64, usize, usize)> = Vec::with_capacity(targets.len() * candidates.len());
    for (i, t) in targets.iter().enumerate() {
        for (j, z) in candidates.iter().enumerate() {
            pairs.push(((t - z).norm(), i, j));
        }
    }
    pairs.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut out = vec![None; targets.len()];
    let mut used = vec![false; candidates.len()];
    for (_, i, j) in pairs {
        let free_target = out.get(i).is_some_and(|o| o.is_none());
        let free_candidate = used.get(j).is_some_and(|u| !u);
        if free_target && free_candidate {
            if let Some(o) = out.get_mut(i) {
                *o = Some(j);
            }
            if let Some(u) = used.get_mut(j) {
                *u = true;
            }
        }
    }
    out
}

/// Removes one copy of each of `remove` from `from` (exact match).
pub(crate) fn without(from: &[Complex64], remove: &[Complex64]) -> Vec<Complex64> {
    let mut rest = from.to_vec();
    for z in remove {
        if let Some(i) = rest.iter().position(|r| r == z) {
            rest.remove(i);
        }
    }
    rest
}

/// Requested versus achieved poles, one row per closed-loop pole.
pub fn pole_rows(result: &DesignResult) -> Vec<PoleRow> {
    let f = &result.feedback;
    let mut requested: Vec<Complex64> = f.requested_poles.iter().map(c64).collect();
    sort_for_display(&mut requested);
    let not_assigned: Vec<Complex64> = f.not_assigned.iter().map(c64).collect();
    let fixed: Vec<Complex64> = f.fixed_modes.iter().map(c64).collect();
    let achieved: Vec<Complex64> = f.achieved_poles.iter().map(c64).collect();
    let assigned = without(&requested, &not_assigned);
    // Targets: the assigned poles, then the fixed modes (they stay where they are).
    let targets: Vec<Complex64> = assigned.iter().chain(fixed.iter()).copied().collect();
    let matched = match_nearest(&targets, &achieved);
    let level = rounding_level(&achieved);
    let mut rows = Vec::new();
    for (i, t) in targets.iter().enumerate() {
        let z = matched.get(i).copied().flatten().and_then(|j| achieved.get(j)).copied();
        let is_fixed = i >= assigned.len();
        let error = z.map(|z| pole_error_text(result, *t, z));
        rows.push(PoleRow {
            requested: if is_fixed { String::new() } else { display::complex(*t) },
            achieved: z.map(|z| display::complex_above(z, level)).unwrap_or_default(),
            error: error.unwrap_or_default(),
            character: z.map(|z| character_in(result, z)).unwrap_or_default(),
            note: if is_fixed { "uncontrollable mode: feedback cannot move it; it stays where it is".into() } else { String::new() },
        });
    }
    for z in &not_assigned {
        rows.push(PoleRow {
            requested: display::complex(*z),
            achieved: String::new(),
            error: String::new(),
            character: String::new(),
            note: "not assigned: an uncontrollable mode takes its place".into(),
        });
    }
    rows
}

#[derive(Clone, Copy)]
pub(crate) enum Kind {
    Controllability,
    Observability,
}

pub(crate) struct ModeLike {
    pole: Complex64,
    margin: f64,
    verdict: ModeVerdict,
}

/// What [`structure_text`] describes: the analysis results in one place.
pub(crate) struct Structure<'a> {
    /// z-plane modes: stable means |z| < 1.
    discrete: bool,
    rank: usize,
    states: usize,
    hidden: &'a [Complex64],
    modes: &'a [ModeLike],
    tolerance: f64,
    relative: f64,
    consistent: bool,
}

pub(crate) fn structure_text(kind: Kind, st: Structure<'_>) -> StructureReport {
    let Structure { discrete, rank, states, hidden, modes, tolerance, relative, consistent } = st;
    let stable = |z: &Complex64| if discrete { z.norm() < 1.0 } else { z.re < 0.0 };
    let (word, weak, matrix, can) = match kind {
        Kind::Controllability => ("controllable", "weakly controllable", "[A − λI, B]", "feedback"),
        Kind::Observability => ("observable", "weakly observable", "[A − λI; C]", "the outputs"),
    };
    let stable_hidden = hidden.iter().all(stable);
    let mut summary = if rank == states {
        match kind {
            Kind::Controllability => {
                format!("Controllable: every one of the {states} modes can be moved by feedback.")
            }
            Kind::Observability => {
                format!("Observable: every one of the {states} modes is seen in the outputs.")
            }
        }
    } else {
        let list = display::pole_list(hidden);
        let count = plural(states - rank, "mode", "modes");
        match (kind, stable_hidden) {
            (Kind::Controllability, true) => format!(
                "Not controllable, but stabilisable: {count} ({list}) cannot be moved by feedback; they are stable and stay where they are. Controllable part: {rank} of {states} states."
            ),
            (Kind::Controllability, false) => format!(
                "Not stabilisable: {count} ({list}) cannot be moved by feedback and not all of them are stable, so no state feedback can stabilise this plant. Controllable part: {rank} of {states} states."
            ),
            (Kind::Observability, true) => format!("Not observable, but detectable: {count} ({list}) are not seen in the outputs; they are stable. Observable part: {rank} of {states} states."),
            (Kind::Observability, false) => format!("Not detectable: {count} ({list}) are not seen in the outputs and not all of them are stable. Observable part: {rank} of {states} states."),
        }
    };
    if !consistent {
        summary.push_str(" The two tests used (staircase and per-mode margins) disagree: the plant is on the borderline; treat these verdicts with care.");
    }
    let norm = match kind {
        Kind::Controllability => "‖[A B]‖₂",
        Kind::Observability => "‖[A; C]‖₂",
    };
    let tolerance = format!(
        "Tolerance used: singular values at or below {} ({} × {norm}) count as zero. A mode's margin is the smallest singular value of {matrix} divided by {norm}: 0 means {can} cannot reach it; margins below {} are called weak.",
        fmt_num(tolerance),
        fmt_num(relative),
        fmt_num(AnalysisParams::default().weak_margin)
    );
    let modes = modes
        .iter()
        .map(|m| ModeRow {
            pole: display::complex(m.pole),
            margin: fmt_num(m.margin),
            verdict: match m.verdict {
                ModeVerdict::Yes => word.to_string(),
                ModeVerdict::Weak => format!("{weak}: moving it needs large inputs"),
                ModeVerdict::No if stable(&m.pole) => {
                    format!("not {word}; stable, so it stays where it is")
                }
                ModeVerdict::No => format!("not {word} and not stable"),
            },
        })
        .collect();
    StructureReport { summary, tolerance, modes }
}

pub(crate) fn modal_report_text(r: &ModalReport, kind: Kind) -> StructureReport {
    let modes: Vec<ModeLike> = r.modes.iter().map(|m| ModeLike { pole: m.pole, margin: m.margin, verdict: m.verdict }).collect();
    structure_text(
        kind,
        Structure { discrete: false, rank: r.rank, states: r.states, hidden: &r.hidden_modes, modes: &modes, tolerance: r.tolerance, relative: r.relative_tolerance, consistent: r.consistent },
    )
}

pub(crate) fn structure_result_text(r: &StructureResult, kind: Kind, discrete: bool) -> StructureReport {
    let modes: Vec<ModeLike> = r
        .modes
        .iter()
        .map(|m| ModeLike {
            pole: c64(&m.pole),
            margin: m.margin,
            verdict: match m.verdict {
                "yes" => ModeVerdict::Yes,
                "weak" => ModeVerdict::Weak,
                _ => ModeVerdict::No,
            },
        })
        .collect();
    let hidden: Vec<Complex64> = r.uncontrollable_modes.iter().map(c64).collect();
    structure_text(kind, Structure { discrete, rank: r.rank, states: r.states, hidden: &hidden, modes: &modes, tolerance: r.tolerance, relative: r.relative_tolerance, consistent: r.consistent })
}

pub(crate) fn robustness_text(result: &DesignResult) -> String {
    let f = &result.feedback;
    // The verdict is judged in balanced coordinates (independent of the state units), as the
    // fragile-design warning is; the condition as the states are scaled is shown beside it.
    let k = f.balanced_eigenvector_condition;
    let raw = f.eigenvector_condition;
    let fmt_cond = |k: f64| {
        if k.is_finite() {
            fmt_num(k)
        } else {
            "infinite".into()
        }
    };
    let cond = fmt_cond(k);
    let verdict = if !k.is_finite() {
        "the closed-loop eigenvectors are dependent: the placement is extremely sensitive to model errors"
    } else if k <= 100.0 {
        "well conditioned: the placed poles are insensitive to small errors in the model or the gain"
    } else if k <= 1e4 {
        "moderate: small model errors move the poles somewhat; check the design against the real plant's uncertainty"
    } else {
        "fragile: small model errors can move the poles far from where they were placed"
    };
    format!("Eigenvector condition number κ₂ = {cond} in balanced coordinates ({} as the states are scaled; 1 is ideal): {verdict}. Gain size ‖K‖₂ = {}.", fmt_cond(raw), fmt_num(f.gain_norm))
}

pub(crate) fn vector_text(v: &[f64]) -> String {
    format!("[{}]", v.iter().map(|x| full(*x)).collect::<Vec<_>>().join(", "))
}

pub(crate) fn response_rows(result: &DesignResult) -> (Vec<StateRow>, Vec<InputRow>, String) {
    let p = &result.plant;
    let s = &result.simulation;
    let unit = |units: &Vec<String>, i: usize| units.get(i).map(|u| u.trim().to_string()).filter(|u| !u.is_empty());
    let with_unit = |v: String, u: &Option<String>| match u {
        Some(u) => format!("{v} {u}"),
        None => v,
    };
    let states = p
        .state_names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let u = unit(&p.state_units, i);
            StateRow {
                name: label(name, u.as_ref()),
                initial: s.initial_state.get(i).map(|v| with_unit(fmt_num(*v), &u)).unwrap_or_default(),
                peak: s.peak_state.get(i).map(|v| with_unit(fmt_num(*v), &u)).unwrap_or_default(),
                settling: match s.settling_time.get(i).copied().flatten() {
                    Some(t) => format!("{} s", fmt_num(t)),
                    None if s.diverged => "diverged".into(),
                    None => format!("not settled within {} s", fmt_num(s.duration)),
                },
                overshoot: match s.overshoot.get(i).copied().flatten() {
                    Some(o) => format!("{} %", fmt_num(o * 100.0)),
                    None => "— (starts at 0)".into(),
                },
                limit: match s.state_limit.get(i).copied().flatten() {
                    Some(l) => state_limit_verdict(s.peak_state.get(i).copied().unwrap_or(0.0), l, &u),
                    None => String::new(),
                },
            }
        })
        .collect();
    let inputs = p
        .input_names
        .iter()
        .enumerate()
        .map(|(i, name)| {
            let u = unit(&p.input_units, i);
            let peak = s.peak_input.get(i).copied().unwrap_or(0.0);
            let limit = s.input_limit.get(i).copied().flatten();
            let verdict = match limit {
                None => "no limit given".to_string(),
                Some(l) if peak <= l => format!("within the limit (peak is {} % of it)", fmt_num(100.0 * peak / l)),
                Some(l) => {
                    let from = s.first_saturation.get(i).copied().flatten().map_or_else(|| "?".to_string(), fmt_num);
                    let total = s.time_saturated.get(i).copied().unwrap_or(0.0);
                    format!("over the limit by {} %: saturated from t = {from} s, {} s in all", fmt_num(100.0 * (peak / l - 1.0)), fmt_num(total))
                }
            };
            InputRow { name: label(name, u.as_ref()), peak: with_unit(fmt_num(peak), &u), limit: limit.map_or_else(|| "none".to_string(), |l| with_unit(fmt_num(l), &u)), verdict }
        })
        .collect();
    let start = if s.initial_state_chosen { format!("x₀ = {} (none given: 1 in the first state)", vector_text(&s.initial_state)) } else { format!("x₀ = {}", vector_text(&s.initial_state)) };
    let horizon = if s.duration_chosen { format!("{} s (chosen from the slowest closed-loop pole)", fmt_num(s.duration)) } else { format!("{} s", fmt_num(s.duration)) };
    let limits = if s.input_limit.iter().any(|l| l.is_some()) { "; inputs clipped at their limits" } else { "" };
    if free_response_is_zero(result) {
        let text = "The initial state is zero, so the free response is zero throughout: there is nothing to settle and no figure to read here. Give an initial state (Loop scenario, Initial state) to see how the regulator brings a disturbed state back to rest.".to_string();
        let blank = |rows: &mut Vec<StateRow>| {
            for r in rows.iter_mut() {
                r.settling = "— (x₀ = 0)".into();
                r.overshoot = "—".into();
            }
        };
        let mut states = states;
        blank(&mut states);
        return (states, inputs, text);
    }
    let summary = if result.domain == crate::analysis::Domain::Discrete {
        format!(
            "Free response of the sampled state feedback u[k] = −K x[k] (the state measured exactly, no reference) from {start} over {horizon}, sample time {} s{limits}. Settling: within ±{} % of each state's peak deviation from zero, for good.",
            fmt_num(s.step),
            fmt_num(s.band * 100.0)
        )
    } else {
        format!(
            "Free response of the closed loop u = −K x from {start} over {horizon}, time step {} s{limits}. Settling: within ±{} % of each state's peak deviation from zero, for good.",
            fmt_num(s.step),
            fmt_num(s.band * 100.0)
        )
    };
    (states, inputs, summary)
}

/// Parts of a pole list below the list's own rounding level — [`ROUNDING_LEVEL`] of its
/// largest pole — shown as 0: an integrator computed as 1.4e−13 among poles of size 43 is 0
/// (the result file keeps the computed values).
pub fn zero_below_rounding(poles: &[Complex64]) -> Vec<Complex64> {
    let floor = rounding_level(poles);
    let clean = |x: f64| if x.abs() <= floor { 0.0 } else { x };
    poles.iter().map(|z| Complex64::new(clean(z.re), clean(z.im))).collect()
}

/// [`ROUNDING_LEVEL`] times the largest finite pole of the list.
pub(crate) fn rounding_level(poles: &[Complex64]) -> f64 {
    ROUNDING_LEVEL * poles.iter().map(|z| z.norm()).filter(|v| v.is_finite()).fold(0.0, f64::max)
}

/// Relative size under which a computed eigenvalue part is rounding noise (about 4500 ε: the
/// backward error of the eigenvalue computation, common practice for a balanced matrix).
pub const ROUNDING_LEVEL: f64 = 1e-12;

/// True when the free response starts from x₀ = 0 (and so is zero throughout).
pub fn free_response_is_zero(result: &DesignResult) -> bool {
    result.simulation.initial_state.iter().all(|v| *v == 0.0)
}

/// Everything the page shows for a design (without the form's context).
pub fn report(result: &DesignResult) -> Report {
    report_with(result, &ReportContext::default())
}

/// Everything the page shows for a design.
pub fn report_with(result: &DesignResult, context: &ReportContext) -> Report {
    let mut open: Vec<Complex64> = result.open_loop_poles.iter().map(c64).collect();
    sort_for_display(&mut open);
    let open = zero_below_rounding(&open);
    let (states, inputs, simulation) = response_rows(result);
    let discrete = result.domain == crate::analysis::Domain::Discrete;
    let warnings: Vec<String> = result.warnings.iter().map(|w| w.message.clone()).collect();
    let controller = controller_report(result, context);
    let pole_choice = pole_choice_report(result, context);
    Report {
        law: "u = −K x".into(),
        gain: gain_table(result),
        poles: pole_rows(result),
        open_loop: display::pole_list(&open),
        zeros: zeros_text(result),
        controllability: structure_result_text(&result.controllability, Kind::Controllability, discrete),
        observability: result.observability.as_ref().map(|o| structure_result_text(o, Kind::Observability, discrete)),
        robustness: robustness_text(result),
        margins: super::robustness::margin_lines(result),
        robustness_detail: super::robustness::detail(result, context),
        robustness_deferred: result.robustness_deferred,
        warnings,
        verdicts: super::verdicts(result),
        states,
        inputs,
        simulation,
        controller,
        pole_choice,
    }
}

/// Each state's peak over the loop simulation against its limit (empty without a loop).
pub(crate) fn loop_state_rows(result: &DesignResult) -> Vec<LoopStateRow> {
    let Some(l) = &result.closed_loop else { return Vec::new() };
    let p = &result.plant;
    l.peak_states
        .iter()
        .enumerate()
        .map(|(i, peak)| {
            let u = p.state_units.get(i).map(|u| u.trim().to_string()).filter(|u| !u.is_empty());
            let name = p.state_names.get(i).cloned().unwrap_or_else(|| format!("x{}", i + 1));
            LoopStateRow {
                name: label(&name, u.as_ref()),
                peak: with_unit(fmt_num(*peak), u.as_ref()),
                limit: match result.simulation.state_limit.get(i).copied().flatten() {
                    Some(lim) => state_limit_verdict(*peak, lim, &u),
                    None => "no limit given".into(),
                },
            }
        })
        .collect()
}

/// A state's peak against its limit, in words.
pub(crate) fn state_limit_verdict(peak: f64, limit: f64, unit: &Option<String>) -> String {
    let l = match unit {
        Some(u) => format!("{} {u}", fmt_num(limit)),
        None => fmt_num(limit),
    };
    if peak <= limit {
        format!("±{l}: within it ({} %)", fmt_num(100.0 * peak / limit))
    } else {
        format!("±{l}: EXCEEDED ({} % of it)", fmt_num(100.0 * peak / limit))
    }
}

/// The plant's zeros in a sentence: the list, and what a zero in the unstable region means.
pub fn zeros_text(result: &DesignResult) -> String {
    if let Some(why) = &result.zeros_unavailable {
        return format!("Plant zeros: not computed ({why}).");
    }
    let Some(z) = &result.zeros else { return String::new() };
    let discrete = result.domain == crate::analysis::Domain::Discrete;
    let (plane, region) = if discrete { ("z-plane, the sampled plant's", "outside the unit circle") } else { ("s-plane", "in the right half-plane") };
    let to = if z.tracked_only { "the tracked outputs" } else { "the outputs C" };
    if z.zeros.is_empty() {
        return format!("Plant zeros (from the inputs to {to}, {plane}): none.");
    }
    let mut list: Vec<Complex64> = z.zeros.iter().map(c64).collect();
    sort_for_display(&mut list);
    let mut text = format!("Plant zeros (from the inputs to {to}, {plane}): {}.", display::pole_list(&list));
    let (sampling, others) = unstable_zeros(result);
    if !others.is_empty() {
        text.push_str(&format!(
            " {} {region}: the plant is non-minimum-phase — after a step an output first moves the wrong way (undershoot), and feedback cannot move such a zero; keep the closed-loop bandwidth well below it (common practice).",
            plural(others.len(), "zero", "zeros")
        ));
    }
    if !sampling.is_empty() {
        text.push_str(&format!(
            " {} on the negative real axis outside the unit circle: sampling zeros (from sampling a plant whose output lags its input by two or more integrations); they do not make a step dip, but a controller that cancels them rings between samples.",
            plural(sampling.len(), "zero", "zeros")
        ));
    }
    text
}

/// The unstable zeros, split into sampling zeros (a digital design's, on the negative real
/// axis) and the others (those that make a step response dip).
pub(crate) fn unstable_zeros(result: &DesignResult) -> (Vec<Complex64>, Vec<Complex64>) {
    let Some(z) = &result.zeros else { return (Vec::new(), Vec::new()) };
    let discrete = result.domain == crate::analysis::Domain::Discrete;
    z.zeros.iter().zip(&z.unstable).filter(|(_, u)| **u).map(|(p, _)| c64(p)).partition(|w| discrete && w.re < 0.0 && w.im.abs() <= 1e-9 * w.norm())
}

/// `value unit`, or the value alone.
pub(crate) fn with_unit(v: String, unit: Option<&String>) -> String {
    match unit.map(|u| u.trim()).filter(|u| !u.is_empty()) {
        Some(u) => format!("{v} {u}"),
        None => v,
    }
}

/// Requested versus achieved poles of any placement (no fixed modes), matched nearest first.
pub(crate) fn matched_pole_rows(result: &DesignResult, requested: &[Pair], achieved: &[Pair]) -> Vec<PoleRow> {
    let mut req: Vec<Complex64> = requested.iter().map(c64).collect();
    sort_for_display(&mut req);
    let ach: Vec<Complex64> = achieved.iter().map(c64).collect();
    let matched = match_nearest(&req, &ach);
    let level = rounding_level(&ach);
    req.iter()
        .enumerate()
        .map(|(i, t)| {
            let z = matched.get(i).copied().flatten().and_then(|j| ach.get(j)).copied();
            PoleRow {
                requested: display::complex(*t),
                achieved: z.map(|z| display::complex_above(z, level)).unwrap_or_default(),
                error: z.map(|z| pole_error_text(result, *t, z)).unwrap_or_default(),
                character: z.map(|z| character_in(result, z)).unwrap_or_default(),
                note: String::new(),
            }
        })
        .collect()
}

/// The control law, one equation per line.
/// The observer's update equations as the controller runs them (the one source for the law,
/// the gain tables' headings and every copied text): with a computation delay the input
/// applied during the sample is `u[k−1]`.
pub(crate) fn observer_equations(result: &DesignResult) -> Vec<String> {
    let Some(o) = result.observer.as_ref() else {
        return Vec::new();
    };
    let applied = if result.feedback.delay_gain.is_some() { "u[k−1]" } else { "u[k]" };
    match (result.sample_time.is_some(), o.form) {
        (false, _) => vec!["x̂′ = A x̂ + B u + L (y − C x̂ − D u)".into()],
        (true, design::ObserverRunForm::Current) => {
            vec!["x̄[k] = x̂[k] + L_c (y[k] − C x̂[k] − D u_held), the estimate corrected with the measurement of the same sample".into(), format!("x̂[k+1] = Φ x̄[k] + Γ {applied}")]
        }
        (true, _) => vec![format!("x̂[k+1] = Φ x̂[k] + Γ {applied} + L (y[k] − C x̂[k] − D u_held)")],
    }
}

pub(crate) fn law_lines(result: &DesignResult) -> Vec<String> {
    let digital = result.sample_time.is_some();
    let delay = result.feedback.delay_gain.is_some();
    let observer = result.observer.as_ref();
    let current = observer.is_some_and(|o| o.form == design::ObserverRunForm::Current);
    let x = match (observer.is_some(), current, digital) {
        (false, _, true) => "x[k]",
        (false, _, false) => "x",
        (true, true, _) => "x̄[k]",
        (true, false, true) => "x̂[k]",
        (true, false, false) => "x̂",
    };
    let k = if digital { "[k]" } else { "" };
    let mut lines = Vec::new();
    let delay_term = |ff: bool| {
        if delay {
            if ff {
                " − K_u (u[k−1] − N_u r)"
            } else {
                " − K_u u[k−1]"
            }
        } else {
            ""
        }
    };
    match &result.tracking {
        Some(TrackingResult::Feedforward { .. }) => lines.push(format!("u{k} = N_u r − K ({x} − N_x r){}", delay_term(true))),
        Some(TrackingResult::Integral { nx: Some(_), .. }) => lines.push(format!("u{k} = N_u r − K ({x} − N_x r) − K_i z{k}{}", delay_term(true))),
        Some(TrackingResult::Integral { .. }) => lines.push(format!("u{k} = −K {x} − K_i z{k}{}", delay_term(false))),
        None => lines.push(format!("u{k} = −K {x}{}", delay_term(false))),
    }
    lines.extend(observer_equations(result));
    if observer.is_some() && digital {
        lines.push("u_held: the input being applied when y[k] is measured".into());
    }
    if let Some(TrackingResult::Integral { anti_windup, time_constant, .. }) = &result.tracking {
        lines.push(if digital { "z[k+1] = z[k] + T (r − y[k]) for each tracked output".into() } else { "z′ = r − y for each tracked output".into() });
        match (*anti_windup, time_constant) {
            (design::spec::AntiWindupMode::Clamp, _) => lines.push("anti-windup: the integrators hold while any input is clipped (conditional integration)".into()),
            (design::spec::AntiWindupMode::BackCalculation, Some(tt)) => {
                lines.push(format!("anti-windup: back-calculation, the integrators also driven by −K_i⁺ (u_applied − u_commanded) / T_t with T_t = {} s", fmt_num(*tt)))
            }
            _ => lines.push("no anti-windup: the integrators keep integrating while an input is clipped".into()),
        }
    }
    if result.simulation.input_limit.iter().any(|l| l.is_some()) {
        lines.push("applied input: the command clipped to each input's limit".into());
    }
    lines
}

pub(crate) fn controller_report(result: &DesignResult, context: &ReportContext) -> Option<ControllerReport> {
    let v2 = result.sample_time.is_some() || result.observer.is_some() || result.tracking.is_some() || result.closed_loop.is_some();
    if !v2 {
        return None;
    }
    let p = &result.plant;
    let inputs = input_labels(result);
    let states = state_labels(result);
    let outputs: Vec<String> = p.output_names.iter().enumerate().map(|(i, n)| label(n, context.output_units.get(i))).collect();

    let domain = domain_text(result, context);
    let delay_gain = result.feedback.delay_gain.as_ref().map(|ku| {
        matrix_table(
            "K_u",
            "K_u: gain on the previous input (computation delay): one row per input, one column per previous input",
            "u[k] = -K x[k] - K_u u[k-1]; K_u has one row per input and one column per previous input",
            inputs.clone(),
            p.input_names.iter().map(|n| format!("previous {n}")).collect(),
            ku,
        )
    });

    let (tracking, tracking_note) = match &result.tracking {
        Some(TrackingResult::Feedforward { outputs: names, nx, nu }) => {
            let cols: Vec<String> = names.iter().map(|n| output_label(result, &context.output_units, n)).collect();
            (
                vec![
                    matrix_table("N_x", "N_x: the steady state per unit of reference (one row per state, one column per tracked output)", "N_x: steady state per unit reference; one row per state, one column per tracked output", states.clone(), cols.clone(), nx),
                    matrix_table("N_u", "N_u: the steady input per unit of reference (one row per input, one column per tracked output)", "N_u: steady input per unit reference; one row per input, one column per tracked output", inputs.clone(), cols, nu),
                ],
                Some(format!("Feedforward from the steady-state equations [A B; C D] [N_x; N_u] = [0; I] (digital: [Φ − I, Γ; C, D]): the reference sets the target state N_x r and the input N_u r; K acts on the difference. Tracked: {}.", names.join(", "))),
            )
        }
        Some(TrackingResult::Integral { outputs: names, integral_gain, nx, nu, .. }) => {
            let cols: Vec<String> = names.iter().map(|n| format!("∫ error of {}", output_label(result, &context.output_units, n))).collect();
            let refs: Vec<String> = names.iter().map(|n| format!("per unit r of {}", output_label(result, &context.output_units, n))).collect();
            let mut tables = vec![matrix_table(
                "K_i",
                "K_i: integral gain, one row per input, one column per integrator (tracked output)",
                "u = -K x - K_i z; K_i has one row per input and one column per integrator",
                inputs.clone(),
                cols,
                integral_gain,
            )];
            let mut note = format!("Integral action: one integrator z of r − y per tracked output ({}); the state gain K_x of u = −K_x x − K_i z is the gain K above. Placed with the plant: the desired poles and the integrator poles together.", names.join(", "));
            if let (Some(nx), Some(nu)) = (nx, nu) {
                tables.push(matrix_table(
                    "N_x",
                    "N_x: the steady state per unit of reference, fed forward (one row per state, one column per tracked output)",
                    "N_x: steady state per unit reference; one row per state, one column per tracked output",
                    states.clone(),
                    refs.clone(),
                    nx,
                ));
                tables.push(matrix_table(
                    "N_u",
                    "N_u: the steady input per unit of reference, fed forward (one row per input, one column per tracked output)",
                    "N_u: steady input per unit reference; one row per input, one column per tracked output",
                    inputs.clone(),
                    refs,
                    nu,
                ));
                note.push_str(" Two degrees of freedom: the reference is also fed forward (u = N_u r − K (x − N_x r) − K_i z), so a step acts at once instead of waiting for the integrator, which only removes what the model got wrong (a load, a gain error).");
            }
            (tables, Some(note))
        }
        None => (Vec::new(), None),
    };

    let discrete_plant = match &result.discrete_plant {
        Some(dp) => vec![
            matrix_table(
                "Φ",
                "Φ = e^(A T): the plant's state transition over one sample (one row and one column per state)",
                "Φ = e^(A T); one row and one column per state",
                states.clone(),
                states.clone(),
                &dp.a,
            ),
            matrix_table(
                "Γ",
                "Γ = ∫₀ᵀ e^(A s) ds B: the effect of an input held over one sample (one row per state, one column per input)",
                "Γ = (integral of e^(A s) ds over one sample) B; one row per state, one column per input",
                states.clone(),
                inputs.clone(),
                &dp.b,
            ),
        ],
        None => Vec::new(),
    };

    let observer = observer_report(result, context, &states, &outputs);
    let LoopParts { summary: loop_summary, outputs: loop_outputs, inputs: loop_inputs, estimation, events } = loop_parts(result, context);
    Some(ControllerReport {
        law: law_lines(result),
        domain,
        sample_rate: result.sample_rate.as_ref().map(|a| a.message.clone()),
        precision: result.finite_precision.as_ref().map(precision_sentence),
        delay_gain,
        tracking,
        tracking_note,
        discrete_plant,
        observer,
        loop_summary,
        loop_outputs,
        loop_inputs,
        loop_states: loop_state_rows(result),
        estimation,
        settling_band: format!("±{} %", fmt_num(result.simulation.band * 100.0)),
        output_units: context.output_units.clone(),
        events,
    })
}

/// How the controller runs: continuous, or digital with its sample time and delay.
pub(crate) fn domain_text(result: &DesignResult, context: &ReportContext) -> String {
    let (p, t) = (&result.plant, result.sample_time);
    match (t, &result.discrete_plant) {
        (Some(t), Some(dp)) => format!(
            "Digital controller: sample time T = {} s ({} Hz). The design uses the exact zero-order-hold model of the plant, Φ = e^(A T) and Γ = ∫₀ᵀ e^(A s) ds B, and {}{}.",
            fmt_num(t),
            fmt_num(1.0 / t),
            if context.z_plane { "the desired poles as given in the z-plane" } else { "the desired poles mapped to the z-plane by z = e^(s T)" },
            if dp.computation_delay {
                format!(
                    "; with a one-sample computation delay the model also carries the previous input, whose pole{} placed at z = {}",
                    if p.inputs == 1 { " is" } else { "s are" },
                    if context.delay_poles.is_empty() { "0".to_string() } else { format_pole_list(&context.delay_poles) }
                )
            } else {
                String::new()
            }
        ),
        (Some(t), None) => format!("Digital controller: sample time T = {} s ({} Hz); the plant matrices are already discrete.", fmt_num(t), fmt_num(1.0 / t)),
        (None, _) => "Continuous controller: the equations above run in continuous time.".into(),
    }
}

/// The observer's gain tables, poles and summary.
pub(crate) fn observer_report(result: &DesignResult, context: &ReportContext, states: &[String], outputs: &[String]) -> Option<ObserverReport> {
    let t = result.sample_time;
    let (states, outputs) = (states.to_vec(), outputs.to_vec());
    result.observer.as_ref().map(|o| {
        let equations = observer_equations(result);
        let first = equations.first().cloned().unwrap_or_default();
        let (heading, caption) = match (t.is_some(), o.form) {
            (true, design::ObserverRunForm::Current) => (
                "predictor gain L (the current estimator uses L_c = Φ⁻¹ L); L has one row per state and one column per output".to_string(),
                "Observer gain L (predictor form; the current form uses L_c below): one row per state, one column per output",
            ),
            _ => (format!("observer {first}; L has one row per state and one column per output"), "Observer gain L: one row per state, one column per output"),
        };
        let gain = matrix_table("L", caption, &heading, states.clone(), outputs.clone(), &o.gain);
        let current_gain = o.current_gain.as_ref().map(|lc| {
            let heading = format!("current estimator {first}; L_c has one row per state and one column per output");
            matrix_table("L_c", "Current-estimator gain L_c = Φ⁻¹ L: one row per state, one column per output", &heading, states.clone(), outputs.clone(), lc)
        });
        let cond = if o.eigenvector_condition.is_finite() { fmt_num(o.eigenvector_condition) } else { "infinite".into() };
        let form = match o.form {
            design::ObserverRunForm::Predictor => "Predictor form (the estimate for the next sample uses this sample's measurement, so the input never waits for the computation).",
            design::ObserverRunForm::Current => "Current-estimator form (the estimate is corrected with the measurement of the same sample before the input is computed).",
            design::ObserverRunForm::Continuous => "Continuous observer.",
        };
        let speed = context.speed_factor.map(|f| format!(" Observer poles: {} times the controller poles (s-plane).", fmt_num(f))).unwrap_or_default();
        let summary = format!(
            "{form}{speed} Achieved to within {} (relative); eigenvector condition number {cond}; gain size ‖L‖₂ = {}.{}",
            fmt_num(o.max_pole_error),
            fmt_num(o.gain_norm),
            if o.detectable { "" } else { " The plant is not detectable from these outputs: some modes cannot be estimated." }
        );
        let noise = format!(
            "Noise-to-input gain ‖K L‖₂ = {}: a measurement error e moves the inputs by up to {} × |e| (worst direction) through the observer. A faster observer (larger L) passes more measurement noise to the actuators.",
            fmt_num(o.noise_to_input_gain),
            fmt_num(o.noise_to_input_gain)
        );
        ObserverReport { gain, current_gain, poles: matched_pole_rows(result, &o.requested_poles, &o.achieved_poles), summary, noise }
    })
}

/// The loop simulation in words and rows.
#[derive(Default)]
pub(crate) struct LoopParts {
    summary: Option<String>,
    outputs: Vec<LoopOutputRow>,
    inputs: Vec<LoopInputRow>,
    estimation: Vec<EstimationRow>,
    events: Vec<EventLine>,
}

pub(crate) fn loop_parts(result: &DesignResult, context: &ReportContext) -> LoopParts {
    let p = &result.plant;
    let mut parts_out = LoopParts::default();
    let LoopParts { summary: loop_summary, outputs: loop_outputs, inputs: loop_inputs, estimation, events } = &mut parts_out;
    if let Some(l) = &result.closed_loop {
        let band = result.simulation.band;
        let unit_of = |name: &str| result.plant.output_names.iter().position(|n| n == name).and_then(|i| context.output_units.get(i)).cloned();
        for tm in &l.tracked {
            let u = unit_of(&tm.name);
            let step = tm.reference;
            loop_outputs.push(LoopOutputRow {
                name: label(&tm.name, u.as_ref()),
                reference: format!("{} at t = {} s", with_unit(fmt_num(step), u.as_ref()), fmt_num(context.reference_time)),
                rise_time: tm.rise_time.map_or_else(|| "not reached".to_string(), |v| format!("{} s", fmt_num(v))),
                settling_time: tm.settling_time.map_or_else(|| format!("not settled within ±{} %", fmt_num(band * 100.0)), |v| format!("{} s", fmt_num(v))),
                overshoot: format!("{} %", fmt_num(tm.overshoot * 100.0)),
                undershoot: format!("{} %", fmt_num(tm.undershoot * 100.0)),
                steady_state_error: if step != 0.0 {
                    format!("{} ({} % of the step)", with_unit(fmt_num(tm.steady_state_error), u.as_ref()), fmt_num(100.0 * tm.steady_state_error / step))
                } else {
                    with_unit(fmt_num(tm.steady_state_error), u.as_ref())
                },
            });
        }
        for (i, im) in l.input_metrics.iter().enumerate() {
            let u = p.input_units.get(i);
            loop_inputs.push(LoopInputRow {
                name: label(&im.name, u),
                peak: with_unit(fmt_num(im.peak_command), u),
                limit: im.limit.map_or_else(|| "none".to_string(), |v| with_unit(fmt_num(v), u)),
                saturated: match im.limit {
                    None => "no limit given".into(),
                    Some(lim) if im.peak_command <= lim => format!("never (peak is {} % of the limit)", fmt_num(100.0 * im.peak_command / lim)),
                    Some(_) => format!("{} s in all", fmt_num(im.time_saturated)),
                },
            });
        }
        if result.observer.is_some() {
            for (i, (x, xh)) in l.states.iter().zip(&l.estimates).enumerate() {
                let u = p.state_units.get(i);
                let err: Vec<f64> = x.iter().zip(xh).map(|(a, b)| a - b).collect();
                let peak = err.iter().fold(0.0f64, |m, v| m.max(v.abs()));
                let last = err.last().copied().unwrap_or(0.0).abs();
                estimation.push(EstimationRow { name: p.state_names.get(i).map(|n| label(n, u)).unwrap_or_default(), peak: with_unit(fmt_num(peak), u), last: with_unit(fmt_num(last), u) });
            }
        }
        let mut parts = Vec::new();
        for tm in &l.tracked {
            parts.push(format!("a reference step to {} on {} at t = {} s", with_unit(fmt_num(tm.reference), unit_of(&tm.name).as_ref()), tm.name, fmt_num(context.reference_time)));
        }
        if !l.tracked.is_empty() {
            events.push(EventLine { time: context.reference_time, label: "reference step".into() });
        }
        if context.disturbance.iter().any(|w| *w != 0.0) {
            let loads: Vec<String> = context
                .disturbance
                .iter()
                .enumerate()
                .filter(|(_, w)| **w != 0.0)
                .map(|(i, w)| {
                    if context.loads_through_e {
                        format!("{} through column {} of E", fmt_num(*w), i + 1)
                    } else {
                        format!("{} on {}", with_unit(fmt_num(*w), p.input_units.get(i)), p.input_names.get(i).map_or("", |s| s.as_str()))
                    }
                })
                .collect();
            parts.push(format!("a load step of {} at t = {} s", loads.join(" and "), fmt_num(context.disturbance_time)));
            events.push(EventLine { time: context.disturbance_time, label: "load step".into() });
        }
        if context.noise_std.iter().any(|v| *v > 0.0) {
            parts.push(format!("measurement noise of standard deviation {} (seed {})", context.noise_std.iter().map(|v| fmt_num(*v)).collect::<Vec<_>>().join(", "), context.seed));
        }
        if parts.is_empty() {
            parts.push(format!("the free response from x₀ = {}", vector_text(&result.simulation.initial_state)));
        }
        let timing = match l.sample_time {
            Some(t) => format!("sampled every {} s", fmt_num(t)),
            None => "continuous".into(),
        };
        let start = if result.observer.is_some() { " The observer starts from x̂ = 0." } else { "" };
        let separation = match l.separation_error {
            Some(e) if e.is_finite() => format!(" Separation check: the eigenvalues of the loop with observer are the controller and observer poles to within {} (relative).", fmt_num(e)),
            _ => String::new(),
        };
        *loop_summary = Some(format!(
            "The whole controller in the loop with the plant ({timing}) over {} s: {}{}.{start}{separation}",
            fmt_num(l.duration),
            parts.join("; "),
            if result.simulation.input_limit.iter().any(|x| x.is_some()) { "; inputs clipped at their limits" } else { "" }
        ));
    }
    parts_out
}

/// The float32 re-check in one sentence: per loop, how far the poles move and how much damping
/// they keep.
pub fn precision_sentence(fp: &crate::design::FinitePrecisionResult) -> String {
    let parts: Vec<String> = fp
        .loops
        .iter()
        .map(|l| {
            format!(
                "{} poles move by at most {}{}{}",
                l.name,
                fmt_num(l.max_pole_move),
                if l.worst_damping_fraction < 1.0 { format!(", damping kept to {} %", fmt_num(100.0 * l.worst_damping_fraction)) } else { String::new() },
                if l.stable { "" } else { ", and one leaves the unit circle" }
            )
        })
        .collect();
    format!("Float32 re-check (the numbers rounded as a float export stores them): {}.", parts.join("; "))
}
