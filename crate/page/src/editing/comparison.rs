//! Comparing the current design with the pinned one: figures side by side, and which is better.

#[allow(unused_imports)]
use super::*;

// ---------------------------------------------------------------------------
// Comparison
// ---------------------------------------------------------------------------

/// One figure of merit, or why it is missing.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", content = "value", rename_all = "snake_case")]
pub enum Figure {
    /// A number (may be `+∞`, e.g. a singular eigenvector matrix; never NaN).
    Value(f64),
    /// The response had not settled by the end of the simulation.
    NotSettled,
    /// The figure does not exist for this design (no limit, state starting at zero, …).
    NotAvailable,
}

impl Figure {
    /// `Value(x)`, or `NotAvailable` for NaN.
    pub fn from_number(x: f64) -> Figure {
        if x.is_nan() {
            Figure::NotAvailable
        } else {
            Figure::Value(x)
        }
    }

    /// A settling time: `None` is not settled.
    pub fn from_settling(t: Option<f64>) -> Figure {
        t.map_or(Figure::NotSettled, Figure::from_number)
    }

    /// Short text: the number with four significant figures, `not settled` or `—`.
    pub fn text(&self) -> String {
        match self {
            Figure::Value(x) => fmt_num(*x),
            Figure::NotSettled => "not settled".into(),
            Figure::NotAvailable => "—".into(),
        }
    }
}

/// Peak command of one input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputSummary {
    pub name: String,
    /// Unit text (may be empty).
    pub unit: String,
    /// Peak of the commanded `|u|`.
    pub peak: Figure,
    pub limit: Option<f64>,
    /// `peak / limit` (`NotAvailable` without a positive finite limit).
    pub peak_over_limit: Figure,
}

/// Tracking figures of one output, from the whole-loop simulation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrackedSummary {
    pub name: String,
    /// Seconds (`NotSettled` when not settled).
    pub settling_time: Figure,
    /// Percent of the reference step.
    pub overshoot: Figure,
    /// `|steady-state error|`, in the output's unit.
    pub steady_state_error: Figure,
}

/// The figures of merit of one design run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignSummary {
    /// The requested poles as text.
    pub poles: String,
    pub state_names: Vec<String>,
    /// Per state, seconds.
    pub settling_time: Vec<Figure>,
    /// The largest of them; `NotSettled` if any state has not settled.
    pub slowest_settling_time: Figure,
    /// Per state, percent of the initial value (`NotAvailable` for a state starting at 0).
    pub overshoot: Vec<Figure>,
    /// The largest available one; `NotAvailable` when none is.
    pub largest_overshoot: Figure,
    pub inputs: Vec<InputSummary>,
    /// `‖K‖₂`.
    pub gain_norm: Figure,
    /// `κ₂(X)` of the closed-loop eigenvectors.
    pub eigenvector_condition: Figure,
    /// Largest relative distance between requested and achieved poles.
    pub max_pole_error: Figure,
    /// Per tracked output (empty without a whole-loop simulation).
    pub tracked: Vec<TrackedSummary>,
}

pub(crate) fn pair_to_complex(p: &Pair) -> Complex64 {
    Complex64::new(p[0], p[1])
}

/// Slowest settling time of a list: `NotSettled` wins, then the largest value.
pub(crate) fn slowest(times: &[Figure]) -> Figure {
    let mut worst: Option<f64> = None;
    for t in times {
        match t {
            Figure::NotSettled => return Figure::NotSettled,
            Figure::Value(x) => worst = Some(worst.map_or(*x, |w| w.max(*x))),
            Figure::NotAvailable => {}
        }
    }
    worst.map_or(Figure::NotAvailable, Figure::Value)
}

/// Largest available value of a list.
pub(crate) fn largest(values: &[Figure]) -> Figure {
    values
        .iter()
        .filter_map(|v| match v {
            Figure::Value(x) => Some(*x),
            _ => None,
        })
        .fold(None, |acc: Option<f64>, x| Some(acc.map_or(x, |a| a.max(x))))
        .map_or(Figure::NotAvailable, Figure::Value)
}

impl DesignSummary {
    /// The summary of a design run: state figures from its regulator simulation, peak inputs
    /// against their limits, the gain and its conditioning, and (with a whole-loop
    /// simulation) the tracking figures of each tracked output.
    pub fn from_result(result: &DesignResult) -> DesignSummary {
        let sim = &result.simulation;
        let requested: Vec<Complex64> = result.feedback.requested_poles.iter().map(pair_to_complex).collect();
        let settling_time: Vec<Figure> = sim.settling_time.iter().map(|t| Figure::from_settling(*t)).collect();
        let overshoot: Vec<Figure> = sim.overshoot.iter().map(|o| o.map_or(Figure::NotAvailable, |x| Figure::from_number(x * 100.0))).collect();
        let plant = &result.plant;
        let inputs = sim
            .peak_input
            .iter()
            .enumerate()
            .map(|(i, peak)| {
                let limit = sim.input_limit.get(i).copied().flatten();
                let peak_over_limit = match limit {
                    Some(l) if l.is_finite() && l > 0.0 => Figure::from_number(peak / l),
                    _ => Figure::NotAvailable,
                };
                InputSummary {
                    name: plant.input_names.get(i).cloned().unwrap_or_else(|| format!("u{}", i + 1)),
                    unit: plant.input_units.get(i).cloned().unwrap_or_default(),
                    peak: Figure::from_number(*peak),
                    limit,
                    peak_over_limit,
                }
            })
            .collect();
        let tracked = result
            .closed_loop
            .as_ref()
            .map(|l| {
                l.tracked
                    .iter()
                    .map(|t| TrackedSummary {
                        name: t.name.clone(),
                        settling_time: Figure::from_settling(t.settling_time),
                        overshoot: Figure::from_number(t.overshoot * 100.0),
                        steady_state_error: Figure::from_number(t.steady_state_error.abs()),
                    })
                    .collect()
            })
            .unwrap_or_default();
        DesignSummary {
            poles: format_pole_list(&requested),
            state_names: plant.state_names.clone(),
            slowest_settling_time: slowest(&settling_time),
            settling_time,
            largest_overshoot: largest(&overshoot),
            overshoot,
            inputs,
            gain_norm: Figure::from_number(result.feedback.gain_norm),
            eigenvector_condition: Figure::from_number(result.feedback.eigenvector_condition),
            max_pole_error: Figure::from_number(result.feedback.max_pole_error),
            tracked,
        }
    }
}

impl From<&DesignResult> for DesignSummary {
    fn from(result: &DesignResult) -> Self {
        DesignSummary::from_result(result)
    }
}

/// Which design is better on a figure (lower is better).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Which {
    Pinned,
    Current,
    /// Equal values (within [`ComparisonParams::equal_within`]).
    Same,
    /// No basis to choose: a figure is not available, or neither has settled.
    Undecided,
}

/// One line of a comparison table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComparisonRow {
    /// Plain label, e.g. `slowest settling time (s)`.
    pub figure: String,
    pub pinned: Figure,
    pub current: Figure,
    /// [`Figure::text`] of each.
    pub pinned_text: String,
    pub current_text: String,
    pub better: Which,
}

/// Which of two figures is better, lower being better.
pub fn better_of(pinned: Figure, current: Figure, params: &ComparisonParams) -> Which {
    match (pinned, current) {
        (Figure::Value(a), Figure::Value(b)) => {
            if a.is_nan() || b.is_nan() {
                return Which::Undecided;
            }
            let tolerance = if params.equal_within.is_finite() && params.equal_within > 0.0 { params.equal_within } else { 0.0 };
            let finite_close = a.is_finite() && b.is_finite() && (a - b).abs() <= tolerance * a.abs().max(b.abs());
            if a == b || finite_close {
                Which::Same
            } else if a < b {
                Which::Pinned
            } else {
                Which::Current
            }
        }
        (Figure::Value(a), Figure::NotSettled) if !a.is_nan() => Which::Pinned,
        (Figure::NotSettled, Figure::Value(b)) if !b.is_nan() => Which::Current,
        _ => Which::Undecided,
    }
}

pub(crate) fn row(figure: String, pinned: Figure, current: Figure, params: &ComparisonParams) -> ComparisonRow {
    ComparisonRow { figure, pinned, current, pinned_text: pinned.text(), current_text: current.text(), better: better_of(pinned, current, params) }
}

pub(crate) fn with_unit(label: String, unit: &str) -> String {
    if unit.trim().is_empty() {
        label
    } else {
        format!("{label} ({unit})")
    }
}

/// Compares a pinned design with the current one ([`compare_with`] at default parameters).
pub fn compare(pinned: &DesignSummary, current: &DesignSummary) -> Vec<ComparisonRow> {
    compare_with(pinned, current, &ComparisonParams::default())
}

/// Rows in this order: slowest settling time, largest overshoot, one row per input (its
/// peak over its limit when both designs have a limit for it, else its raw peak; inputs are
/// matched by position), gain norm, eigenvector condition, largest pole error, then for each
/// tracked output (matched by name; pinned order, then outputs only the current design
/// tracks) its settling time, overshoot and steady-state error. A figure one design lacks is
/// [`Figure::NotAvailable`] on that side.
pub fn compare_with(pinned: &DesignSummary, current: &DesignSummary, params: &ComparisonParams) -> Vec<ComparisonRow> {
    let mut rows = vec![
        row("slowest settling time (s)".into(), pinned.slowest_settling_time, current.slowest_settling_time, params),
        row("largest overshoot (%)".into(), pinned.largest_overshoot, current.largest_overshoot, params),
    ];
    let inputs = pinned.inputs.len().max(current.inputs.len());
    for i in 0..inputs {
        let (p, c) = (pinned.inputs.get(i), current.inputs.get(i));
        let Some(named) = c.or(p) else { continue };
        let has_limit = |s: Option<&InputSummary>| s.is_none_or(|s| matches!(s.peak_over_limit, Figure::Value(_)));
        let (label, pick): (String, fn(&InputSummary) -> Figure) = if has_limit(p) && has_limit(c) {
            (format!("peak input {} / limit", named.name), |s| s.peak_over_limit)
        } else {
            (with_unit(format!("peak input {}", named.name), &named.unit), |s| s.peak)
        };
        let side = |s: Option<&InputSummary>| s.map_or(Figure::NotAvailable, pick);
        rows.push(row(label, side(p), side(c), params));
    }
    rows.push(row("gain norm ‖K‖".into(), pinned.gain_norm, current.gain_norm, params));
    rows.push(row("eigenvector condition κ₂(X)".into(), pinned.eigenvector_condition, current.eigenvector_condition, params));
    rows.push(row("largest pole error (relative)".into(), pinned.max_pole_error, current.max_pole_error, params));
    let mut names: Vec<&str> = pinned.tracked.iter().map(|t| t.name.as_str()).collect();
    for t in &current.tracked {
        if !names.contains(&t.name.as_str()) {
            names.push(&t.name);
        }
    }
    for name in names {
        let find = |s: &DesignSummary| s.tracked.iter().find(|t| t.name == name).cloned();
        let (p, c) = (find(pinned), find(current));
        let side = |s: &Option<TrackedSummary>, pick: fn(&TrackedSummary) -> Figure| s.as_ref().map_or(Figure::NotAvailable, pick);
        rows.push(row(format!("settling time of {name} (s)"), side(&p, |t| t.settling_time), side(&c, |t| t.settling_time), params));
        rows.push(row(format!("overshoot of {name} (%)"), side(&p, |t| t.overshoot), side(&c, |t| t.overshoot), params));
        rows.push(row(format!("steady-state error of {name}"), side(&p, |t| t.steady_state_error), side(&c, |t| t.steady_state_error), params));
    }
    rows
}
