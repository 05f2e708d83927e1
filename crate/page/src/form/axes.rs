//! How signals in different units share a plot: one axis per signal (panels stacked under
//! each other, each with its own unit and its own limit lines), each signal divided by its
//! limit (one axis, limits at ±1), or one shared axis. Automatic picks one axis per signal
//! when the units or the limits differ (a ±0.05 N·m input on the axis of a ±2 N one would be a
//! flat line), else the shared axis.

use super::*;
use crate::plot::PinnedSeries;

/// The reader's choice of axes for input and output plots.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Hash, Serialize)]
pub enum SignalAxes {
    /// One axis per signal when units or limits differ, else one shared axis.
    #[default]
    Automatic,
    /// One panel per signal.
    Separate,
    /// Each signal divided by its limit (by its peak when it has none), one axis.
    DividedByLimit,
    /// One axis for all.
    Shared,
}

impl SignalAxes {
    /// Reads the page's choice (`automatic`, `separate`, `limit`, `shared`); anything else is
    /// [`SignalAxes::Automatic`].
    pub fn from_choice(text: &str) -> SignalAxes {
        match text {
            "separate" => SignalAxes::Separate,
            "limit" => SignalAxes::DividedByLimit,
            "shared" => SignalAxes::Shared,
            _ => SignalAxes::Automatic,
        }
    }
}

/// Most panels stacked in one plot; with more signals, automatic falls back to one axis
/// (divided by the limits when every signal has one).
pub const MAX_PANELS: usize = 4;

/// The series of one signal (its colour slot) with its axis title, unit and limit.
struct Group {
    colour: usize,
    title: String,
    unit: String,
    limit: Option<f64>,
    limit_label: String,
}

/// Splits or rescales `scene` (series coloured by signal: the colour slot is the signal's
/// index) into the plots to draw, one per panel.
fn arrange(scene: TimePlotScene, groups: &[Group], axes: SignalAxes, quantity: &str) -> Vec<TimePlotScene> {
    let distinct_units = groups.windows(2).any(|w| w.first().map(|g| &g.unit) != w.get(1).map(|g| &g.unit));
    let limits: Vec<Option<f64>> = groups.iter().map(|g| g.limit).collect();
    let distinct_limits = limits.windows(2).any(|w| w.first() != w.get(1));
    let all_limited = limits.iter().all(Option::is_some);
    let chosen = match axes {
        SignalAxes::Automatic if groups.len() < 2 => SignalAxes::Shared,
        SignalAxes::Automatic if groups.len() > MAX_PANELS => {
            if all_limited {
                SignalAxes::DividedByLimit
            } else {
                SignalAxes::Shared
            }
        }
        SignalAxes::Automatic if distinct_units || distinct_limits => SignalAxes::Separate,
        SignalAxes::Automatic => SignalAxes::Shared,
        SignalAxes::Separate if groups.len() < 2 => SignalAxes::Shared,
        other => other,
    };
    match chosen {
        SignalAxes::Separate => groups.iter().map(|g| panel(&scene, g)).collect(),
        SignalAxes::DividedByLimit if groups.iter().any(|g| g.limit.is_some()) => {
            vec![divided(scene, groups, quantity)]
        }
        _ => vec![scene],
    }
}

/// The panel of one signal: its series, its pinned series, its own limit lines.
fn panel(scene: &TimePlotScene, g: &Group) -> TimePlotScene {
    let mine = |c: Option<usize>| c == Some(g.colour);
    let mut limits = Vec::new();
    if let Some(l) = g.limit {
        limits.push(LimitLine { value: l, label: format!("limit +{}{}", fmt_num(l), g.limit_label) });
        limits.push(LimitLine { value: -l, label: format!("limit −{}{}", fmt_num(l), g.limit_label) });
    }
    TimePlotScene {
        t: scene.t.clone(),
        series: scene.series.iter().filter(|s| mine(s.colour)).cloned().collect(),
        limits,
        band: None,
        events: scene.events.clone(),
        x_label: scene.x_label.clone(),
        y_label: g.title.clone(),
        pinned: scene.pinned.iter().filter(|s| mine(s.colour)).cloned().collect(),
        window: None,
    }
}

/// Every signal divided by its limit (or its peak when it has none), limit lines at ±1.
fn divided(scene: TimePlotScene, groups: &[Group], quantity: &str) -> TimePlotScene {
    let scale_of = |colour: Option<usize>, values: &[f64]| -> (f64, bool) {
        match groups.iter().find(|g| Some(g.colour) == colour).and_then(|g| g.limit) {
            Some(l) if l > 0.0 => (1.0 / l, true),
            _ => {
                let peak = values.iter().filter(|v| v.is_finite()).fold(0.0f64, |m, v| m.max(v.abs()));
                (if peak > 0.0 { 1.0 / peak } else { 1.0 }, false)
            }
        }
    };
    let series = scene
        .series
        .iter()
        .map(|s| {
            let (k, limited) = scale_of(s.colour, &s.values);
            let name = if limited { s.name.clone() } else { format!("{} (÷ its peak: no limit)", s.name) };
            Series { name, values: s.values.iter().map(|v| v * k).collect(), ..s.clone() }
        })
        .collect();
    // A pinned signal takes its current counterpart's scale (same colour slot), so that the two
    // are compared on one scale even for a signal without a limit.
    let current_scale = |colour: Option<usize>| scene.series.iter().find(|s| s.colour == colour).map(|s| scale_of(s.colour, &s.values).0);
    let pinned = scene
        .pinned
        .iter()
        .map(|s| {
            let k = current_scale(s.colour).unwrap_or_else(|| scale_of(s.colour, &s.values).0);
            PinnedSeries { values: s.values.iter().map(|v| v * k).collect(), ..s.clone() }
        })
        .collect();
    TimePlotScene {
        series,
        pinned,
        limits: vec![LimitLine { value: 1.0, label: "limit".into() }, LimitLine { value: -1.0, label: "limit".into() }],
        y_label: format!("{quantity} ÷ its limit"),
        ..scene
    }
}

fn input_groups(result: &DesignResult) -> Vec<Group> {
    let p = &result.plant;
    (0..p.inputs)
        .map(|i| {
            let name = p.input_names.get(i).cloned().unwrap_or_else(|| format!("u{}", i + 1));
            let unit = p.input_units.get(i).map(|u| u.trim()).filter(|u| !u.is_empty());
            Group {
                colour: i,
                title: label(&name, p.input_units.get(i)),
                unit: unit.unwrap_or("").to_string(),
                limit: result.simulation.input_limit.get(i).copied().flatten(),
                limit_label: unit.map(|u| format!(" {u}")).unwrap_or_default(),
            }
        })
        .collect()
}

/// An inputs plot (free response or loop; pinned series already added) as the plots to draw:
/// one, or one per input. Series without a colour slot take their position as the input.
pub fn arrange_inputs(mut scene: TimePlotScene, result: &DesignResult, axes: SignalAxes) -> Vec<TimePlotScene> {
    for (i, s) in scene.series.iter_mut().enumerate() {
        s.colour.get_or_insert(i);
    }
    for (i, s) in scene.pinned.iter_mut().enumerate() {
        s.colour.get_or_insert(i);
    }
    arrange(scene, &input_groups(result), axes, "input")
}

/// The loop's outputs plot (with references) as the plots to draw: one per output when their
/// units differ (outputs have no limits, so "divided by the limit" is automatic here), unless
/// one shared axis is asked for.
pub fn arrange_outputs(scene: TimePlotScene, result: &DesignResult, report: &Report, axes: SignalAxes) -> Vec<TimePlotScene> {
    let p = &result.plant;
    let units = report.controller.as_ref().map(|c| c.output_units.as_slice()).unwrap_or(&[]);
    let groups: Vec<Group> = (0..p.outputs)
        .map(|i| Group {
            colour: i,
            title: label(&p.output_names.get(i).cloned().unwrap_or_else(|| format!("y{}", i + 1)), units.get(i)),
            unit: units.get(i).map(|u| u.trim().to_string()).unwrap_or_default(),
            limit: None,
            limit_label: String::new(),
        })
        .collect();
    let axes = if axes == SignalAxes::DividedByLimit { SignalAxes::Automatic } else { axes };
    arrange(scene, &groups, axes, "output")
}

#[cfg(test)]
#[path = "../tests/axes.rs"]
mod tests;
