//! The header every export opens with: what the numbers are, in which order, under which
//! convention, and where they came from (tool version, SHA-256 of the canonical document).

use super::{tool, Controller, Tracking};
use crate::controller::{AntiWindup, ObserverForm};

/// The header as plain lines (each target escapes them itself).
pub(super) fn lines(c: &Controller) -> Vec<String> {
    let mut out = vec![
        format!("Controller exported by {} from the design \"{}\".", tool(), if c.title.is_empty() { "(untitled)" } else { &c.title }),
        format!("Design document (canonical form) SHA-256: {}", c.document_sha256),
        "CAUTION: a design aid, not a safety function. Verify every number independently before use; limits, emergency stops and trips stay independent of this controller.".to_string(),
        format!("Convention: {}", convention(c)),
    ];
    out.push(format!("States, in order: {}", named(&c.state_names, &c.state_units)));
    out.push(format!("Inputs, in order: {}", named(&c.input_names, &c.input_units)));
    if !c.output_names.is_empty() {
        out.push(format!("Outputs, in order: {}", c.output_names.iter().enumerate().map(|(i, n)| format!("{}. {n}", i + 1)).collect::<Vec<_>>().join("; ")));
    }
    if !c.tracked.is_empty() {
        out.push(format!("Tracked outputs (reference order): {}", c.tracked.iter().map(|&i| c.output_names.get(i).cloned().unwrap_or_default()).collect::<Vec<_>>().join("; ")));
    }
    out.push(match c.sample_time {
        Some(t) => format!(
            "Sample time: {t} s; plant sampled by zero-order hold; computation delay: {}.",
            if c.computation_delay { "one sample (the command computed at sample k is applied at sample k+1)" } else { "none (the command is applied at the sample it is computed)" }
        ),
        None => "Continuous-time design: discretise it (give a sample time) before it runs on a processor.".to_string(),
    });
    out.push(format!(
        "Actuator limits: {}; anti-windup: {}.",
        c.limits.iter().enumerate().map(|(i, l)| format!("input {}: {}", i + 1, l.map_or("none".to_string(), |v| format!("+/-{v}")))).collect::<Vec<_>>().join(", "),
        match c.anti_windup {
            AntiWindup::None => "none".to_string(),
            AntiWindup::Clamp => "clamp (the integrators hold while any input is at its limit)".to_string(),
            AntiWindup::BackCalculation { time_constant } => format!("back-calculation, time constant {time_constant} s"),
        }
    ));
    out.push(format!(
        "Observer: {}.",
        match c.observer_form {
            None => "none (the full state is measured)",
            Some(ObserverForm::Predictor) => "predictor form, x^[k+1] = Phi x^[k] + Gamma u_a[k] + L (y[k] - C x^[k] - D u_held)",
            Some(ObserverForm::Current) => "current form, x_bar[k] = x^[k] + L_c (y[k] - C x^[k] - D u_held), x^[k+1] = Phi x_bar[k] + Gamma u_a[k]",
        }
    ));
    out.push("Matrices are row-major; the dimensions are stated beside each.".to_string());
    out.iter().map(|l| super::text::one_line(l)).collect()
}

fn convention(c: &Controller) -> String {
    let x = if c.observer_form.is_some() { "x^" } else { "x" };
    let base = match c.tracking {
        Tracking::None => format!("u = -K {x}"),
        Tracking::Feedforward => format!("u = N_u r - K ({x} - N_x r)"),
        Tracking::Integral if c.matrix("N_x").is_some() => format!("u = N_u r - K ({x} - N_x r) - K_i z, z[k+1] = z[k] + T (r[k] - y_t[k])"),
        Tracking::Integral => format!("u = -K {x} - K_i z, z[k+1] = z[k] + T (r[k] - y_t[k])"),
    };
    let delay = if c.computation_delay {
        if c.matrix("N_u").is_some() {
            " - K_u (u_prev - N_u r)"
        } else {
            " - K_u u_prev"
        }
    } else {
        ""
    };
    format!("{base}{delay}, then each input saturated at its limit")
}

fn named(names: &[String], units: &[String]) -> String {
    names
        .iter()
        .enumerate()
        .map(|(i, n)| match units.get(i).filter(|u| !u.is_empty()) {
            Some(u) => format!("{}. {n} [{u}]", i + 1),
            None => format!("{}. {n}", i + 1),
        })
        .collect::<Vec<_>>()
        .join("; ")
}
