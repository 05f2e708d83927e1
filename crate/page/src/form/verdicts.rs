//! The key verdicts shown beside the gain: a few lines that say whether the design is usable
//! at a glance (closed-loop decay, placement accuracy, controllability, the inputs against
//! their limits, the margin of the loop as built, the number of warnings). Each line quotes
//! its figure; the details sections below hold the full tables.

use super::*;
use crate::design::analysis::Domain;
use crate::design::warnings::WarningCode;

/// Whether a verdict line needs the engineer's attention.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
pub enum VerdictTone {
    /// The figure is within the usual bounds.
    Fine,
    /// The figure breaks a bound (unstable, not controllable, over a limit, small margin,
    /// warnings raised).
    Attention,
}

/// One verdict line.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct Verdict {
    pub text: String,
    pub tone: VerdictTone,
}

fn verdict(text: String, bad: bool) -> Verdict {
    Verdict { text, tone: if bad { VerdictTone::Attention } else { VerdictTone::Fine } }
}

/// The verdict lines of a design, in reading order.
pub fn verdicts(result: &DesignResult) -> Vec<Verdict> {
    let mut out = vec![decay_verdict(result), placement_verdict(result), controllability_verdict(result)];
    out.extend(zeros_verdict(result));
    out.extend(input_verdict(result));
    out.extend(state_verdict(result));
    out.push(margin_verdict(result));
    let warnings = result.warnings.len();
    out.push(match warnings {
        0 => verdict("No warnings.".into(), false),
        1 => verdict("1 warning (below).".into(), true),
        n => verdict(format!("{n} warnings (below)."), true),
    });
    out
}

/// Stability of the state-feedback poles: the slowest decay (continuous) or the largest |z|.
fn decay_verdict(result: &DesignResult) -> Verdict {
    let poles: Vec<Complex64> = result.feedback.achieved_poles.iter().map(c64).collect();
    if poles.is_empty() {
        return verdict("No closed-loop poles.".into(), true);
    }
    match result.domain {
        Domain::Discrete => {
            let largest = poles.iter().map(|z| z.norm()).fold(0.0, f64::max);
            let stable = largest < 1.0;
            let word = if stable { "stable" } else { "not stable" };
            verdict(format!("Closed loop {word}: largest |z| = {}.", fmt_num(largest)), !stable)
        }
        Domain::Continuous => {
            let slowest = poles.iter().map(|s| s.re).fold(f64::NEG_INFINITY, f64::max);
            if slowest < 0.0 {
                verdict(format!("Closed loop stable: slowest decay rate {} s⁻¹ (time constant {} s).", fmt_num(-slowest), fmt_num(-1.0 / slowest)), false)
            } else {
                verdict(format!("Closed loop not stable: a pole at Re s = {}.", fmt_num(slowest)), true)
            }
        }
    }
}

fn placement_verdict(result: &DesignResult) -> Verdict {
    let f = &result.feedback;
    let inaccurate = result.warnings.iter().any(|w| matches!(w.code, WarningCode::PlacementInaccurate | WarningCode::NotConverged));
    let fragile = result.warnings.iter().any(|w| w.code == WarningCode::FragileDesign);
    let missing = if f.not_assigned.is_empty() { String::new() } else { format!("; {} requested pole(s) not assigned", f.not_assigned.len()) };
    verdict(
        format!("Poles placed to {} (largest error, relative); eigenvector condition κ = {}{missing}.", fmt_num(f.max_pole_error), fmt_num(f.balanced_eigenvector_condition)),
        inaccurate || fragile || !f.not_assigned.is_empty(),
    )
}

/// Only when a plant zero lies in the unstable region (the zeros are listed under Details).
fn zeros_verdict(result: &DesignResult) -> Option<Verdict> {
    let (sampling, others) = unstable_zeros(result);
    let nearest = |v: &[Complex64]| v.iter().copied().min_by(|a, b| a.norm().total_cmp(&b.norm()));
    if let Some(w) = nearest(&others) {
        return Some(verdict(format!("Non-minimum-phase plant: a zero at {} (outputs first move the wrong way after a step).", crate::design::format::complex(w)), true));
    }
    nearest(&sampling).map(|w| verdict(format!("A sampling zero at {} outside the unit circle: do not cancel it with the controller.", crate::design::format::complex(w)), true))
}

fn controllability_verdict(result: &DesignResult) -> Verdict {
    let c = &result.controllability;
    if c.complete {
        verdict(format!("Controllable (rank {} of {}).", c.rank, c.states), false)
    } else if c.stabilizable {
        verdict(format!("Not controllable (rank {} of {}), but stabilisable.", c.rank, c.states), true)
    } else {
        verdict(format!("Not stabilisable (rank {} of {}).", c.rank, c.states), true)
    }
}

/// The input nearest its limit (in the loop simulation when there is one, else the free
/// response), as a percentage of the limit.
fn input_verdict(result: &DesignResult) -> Option<Verdict> {
    let plant = &result.plant;
    let peaks: Vec<(f64, Option<f64>)> = match &result.closed_loop {
        Some(l) => l.input_metrics.iter().map(|m| (m.peak_command, m.limit)).collect(),
        None => result.simulation.peak_input.iter().copied().zip(result.simulation.input_limit.iter().copied()).collect(),
    };
    let source = if result.closed_loop.is_some() { "loop simulation" } else { "free response" };
    let name = |i: usize| label(plant.input_names.get(i).map_or("input", String::as_str), plant.input_units.get(i));
    let worst = peaks.iter().enumerate().filter_map(|(i, (p, l))| l.filter(|l| *l > 0.0).map(|l| (i, p.abs() / l))).max_by(|a, b| a.1.total_cmp(&b.1));
    match worst {
        Some((i, ratio)) => {
            let over = ratio > 1.0;
            let how = if over { "of its limit (over it)" } else { "of its limit" };
            Some(verdict(format!("Peak input {} % {how}: {} ({source}).", fmt_num(100.0 * ratio), name(i)), over))
        }
        None if peaks.is_empty() => None,
        None => Some(verdict(format!("No input limits given; peak inputs in the {source} are in the table below."), false)),
    }
}

/// The state nearest its limit (`plant.state_limits`), over the loop simulation when there is
/// one, else the free response; nothing without limits.
fn state_verdict(result: &DesignResult) -> Option<Verdict> {
    let limits = &result.simulation.state_limit;
    let peaks = result.closed_loop.as_ref().map_or(&result.simulation.peak_state, |l| &l.peak_states);
    let source = if result.closed_loop.is_some() { "loop simulation" } else { "free response" };
    let (i, ratio) = limits.iter().zip(peaks).enumerate().filter_map(|(i, (l, p))| l.filter(|l| *l > 0.0).map(|l| (i, p / l))).max_by(|a, b| a.1.total_cmp(&b.1))?;
    let p = &result.plant;
    let name = label(p.state_names.get(i).map_or("state", String::as_str), p.state_units.get(i));
    let over = ratio > 1.0;
    Some(verdict(format!("Peak state {} % {}: {name} ({source}).", fmt_num(100.0 * ratio), if over { "of its limit (over it)" } else { "of its limit" }), over))
}

fn margin_verdict(result: &DesignResult) -> Verdict {
    let Some(m) = &result.margins else {
        return verdict(
            match &result.margins_unavailable {
                _ if result.robustness_deferred => "Margins: being computed (while a pole is dragged: once it is released).".into(),
                Some(why) => format!("No margins: {why}."),
                None => "No margins.".into(),
            },
            !result.robustness_deferred,
        );
    };
    let d = &m.all_inputs_symmetric;
    let small = result.warnings.iter().any(|w| w.code == WarningCode::SmallMargin);
    let db = |g: f64| 20.0 * g.log10();
    let gain = if d.gain_range[1].is_finite() && d.gain_range[1] < 1e12 && d.gain_range[0] > 1e-12 {
        format!("{} to +{} dB", fmt_num(db(d.gain_range[0])), fmt_num(db(d.gain_range[1])))
    } else {
        "unbounded gain".to_string()
    };
    let scope = if m.per_input.len() > 1 { "all inputs at once" } else { "at the input" };
    verdict(format!("Disk margin ({scope}, symmetric): {gain}, ±{}°.", fmt_num(d.phase_margin_deg)), small)
}
