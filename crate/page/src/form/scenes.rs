//! Plot scenes of a design: the pole map (with the editable, pinned and region layers) and the
//! time plots (states, inputs, loop outputs and inputs, estimation error).

use super::*;

// ---------------------------------------------------------------------------------------------
// Plot scenes.

/// Points on a polyline of the region boundary in the z-plane.
pub(crate) const REGION_CIRCLE_POINTS: usize = 96;

/// The boundary of a specification's region in the map's plane, when the design has one.
///
/// Continuous: the decay line `Re s = −σ` and the damping rays from the origin at `acos ζ` from
/// the negative real axis (one polyline, upper end → origin → lower end), both `length` long,
/// and the half circle `|s| = ωn` left of the imaginary axis when a rise time set `ωn`.
/// Discrete (sample time `T`): the circle `|z| = e^{−σT}`, the damping spiral
/// ([`crate::patterns::discrete_damping_boundary`], both halves, one polyline) and the image
/// `z = e^{sT}` of that half circle (where `|Im s| ≤ π/T`).
pub fn region_shape(result: &DesignResult, length: f64) -> Option<RegionShape> {
    use std::f64::consts::PI;
    let r = result.pole_choice.as_ref()?.region.as_ref()?;
    let region = region_of(r);
    let zeta = region.min_damping;
    let sigma = region.min_decay_rate;
    if !(zeta > 0.0 && zeta < 1.0 && sigma.is_finite() && length.is_finite()) {
        return None;
    }
    let sin = (1.0 - zeta * zeta).sqrt();
    let half_circle = |w: f64| -> Vec<Complex64> { (0..=REGION_CIRCLE_POINTS).map(|k| Complex64::from_polar(w, PI / 2.0 + PI * k as f64 / REGION_CIRCLE_POINTS as f64)).collect() };
    let pairs = |points: &[Complex64]| -> Vec<[f64; 2]> { points.iter().map(|z| [z.re, z.im]).collect() };
    let words = specification_words(result, &region);
    let from = if words.is_empty() { String::new() } else { format!(" (from {words})") };
    let speed = region.natural_frequency.map(|w| format!(" and |s| ≥ {}", fmt_num(w))).unwrap_or_default();
    match (result.domain, result.sample_time) {
        (crate::analysis::Domain::Discrete, Some(t)) => {
            let radius = crate::patterns::discrete_decay_radius(&region, t).ok()?;
            let circle: Vec<Complex64> = (0..=REGION_CIRCLE_POINTS).map(|k| Complex64::from_polar(radius, 2.0 * PI * k as f64 / REGION_CIRCLE_POINTS as f64)).collect();
            let upper = crate::patterns::discrete_damping_boundary(&region, t, REGION_CIRCLE_POINTS / 2 + 1).ok()?;
            let spiral: Vec<Complex64> = upper.iter().rev().map(|z| z.conj()).chain(upper.iter().skip(1).copied()).collect();
            let mut boundaries = vec![pairs(&circle), pairs(&spiral)];
            if let Some(w) = region.natural_frequency {
                let arc: Vec<Complex64> = half_circle(w).into_iter().filter(|s| s.im.abs() * t <= PI).map(|s| (s * t).exp()).collect();
                if arc.len() >= 2 {
                    boundaries.push(pairs(&arc));
                }
            }
            Some(RegionShape { boundaries, label: format!("admissible (s = ln z / T): ζ ≥ {} and |z| ≤ {} (Re s ≤ −{}){speed}{from}", fmt_num(zeta), fmt_num(radius), fmt_num(sigma)) })
        }
        _ => {
            let decay = vec![[-sigma, -length], [-sigma, length]];
            let rays = vec![[-zeta * length, sin * length], [0.0, 0.0], [-zeta * length, -sin * length]];
            let mut boundaries = vec![decay, rays];
            if let Some(w) = region.natural_frequency {
                boundaries.push(pairs(&half_circle(w)));
            }
            Some(RegionShape { boundaries, label: format!("admissible: ζ ≥ {} and Re s ≤ −{}{speed}{from}", fmt_num(zeta), fmt_num(sigma)) })
        }
    }
}

/// Pole map: open-loop poles, achieved closed-loop poles, observer poles, and requested
/// poles that could not be assigned; a digital design's map is the z-plane with the unit circle.
/// With a specification, the boundary of its region ([`region_shape`]), its lines 10 times
/// the largest pole magnitude long (at least 10).
pub fn pole_map_scene(result: &DesignResult) -> PoleMapScene {
    let observer = result.observer.as_ref().map(|o| o.achieved_poles.clone()).unwrap_or_default();
    let largest = result
        .open_loop_poles
        .iter()
        .chain(&result.feedback.achieved_poles)
        .chain(&result.feedback.not_assigned)
        .chain(&observer)
        .map(|p| p[0].hypot(p[1]))
        .filter(|r| r.is_finite())
        .fold(0.0f64, f64::max);
    PoleMapScene {
        open_loop: result.open_loop_poles.clone(),
        closed_loop: result.feedback.achieved_poles.clone(),
        not_assigned: result.feedback.not_assigned.clone(),
        observer,
        discrete: result.domain == crate::analysis::Domain::Discrete,
        fit_poles: false,
        highlight: None,
        region: region_shape(result, (10.0 * largest).max(10.0)),
        uncertain: result.uncertainty.as_ref().map(|u| u.poles.clone()).unwrap_or_default(),
        zeros: result.zeros.as_ref().map(|z| z.zeros.clone()).unwrap_or_default(),
        ..PoleMapScene::default()
    }
}

/// σ_max(S) and σ_max(T) at the plant input over frequency, in dB against log₁₀ ω, with the
/// peaks and the all-inputs disk margin's frequency marked. `None` without margins.
pub fn frequency_scene(result: &DesignResult) -> Option<TimePlotScene> {
    let m = result.margins.as_ref()?;
    let f = &m.frequency_response;
    let keep: Vec<usize> = (0..f.frequency.len()).filter(|&k| f.frequency[k] > 0.0).collect();
    if keep.len() < 2 {
        return None;
    }
    let db = |v: f64| if v > 0.0 { 20.0 * v.log10() } else { f64::NAN };
    let mark = |w: f64, what: &str| (w > 0.0).then(|| EventLine { time: w.log10(), label: format!("{what} {} rad/s", fmt_num(w)) });
    Some(TimePlotScene {
        t: keep.iter().map(|&k| f.frequency[k].log10()).collect(),
        series: vec![
            Series { name: "σmax(S), input sensitivity".into(), values: keep.iter().map(|&k| db(f.sensitivity[k])).collect(), colour: Some(0), dash: Some(0), hold: false },
            Series { name: "σmax(T), complementary".into(), values: keep.iter().map(|&k| db(f.complementary_sensitivity[k])).collect(), colour: Some(1), dash: Some(1), hold: false },
        ],
        limits: vec![LimitLine { value: db(m.peak_sensitivity), label: format!("peak σmax(S) {} dB", fmt_num(db(m.peak_sensitivity))) }],
        events: [mark(m.peak_sensitivity_frequency, "peak σmax(S) at"), mark(m.all_inputs.disk.frequency, "disk margin at")].into_iter().flatten().collect(),
        x_label: "log₁₀ frequency (rad/s)".into(),
        y_label: "dB".into(),
        ..TimePlotScene::default()
    })
}

/// Pole map of an infeasible design: the open-loop poles only.
pub fn open_loop_scene(analysis: &OpenLoopAnalysis) -> PoleMapScene {
    PoleMapScene { open_loop: analysis.open_loop_poles.clone(), ..PoleMapScene::default() }
}

/// States versus time. `normalised`: each state divided by its peak magnitude, so that
/// all share one scale and the settling band (± band) applies to every curve.
pub fn states_scene(result: &DesignResult, normalised: bool) -> TimePlotScene {
    let p = &result.plant;
    let s = &result.simulation;
    let series = s
        .states
        .iter()
        .enumerate()
        .map(|(i, values)| {
            let name = p.state_names.get(i).cloned().unwrap_or_else(|| format!("x{}", i + 1));
            let peak = s.peak_state.get(i).copied().unwrap_or(0.0);
            if normalised {
                let scale = if peak > 0.0 && peak.is_finite() { 1.0 / peak } else { 1.0 };
                Series { name, values: values.iter().map(|v| v * scale).collect(), ..Series::default() }
            } else {
                Series { name: label(&name, p.state_units.get(i)), values: values.clone(), ..Series::default() }
            }
        })
        .collect();
    let band = if normalised { Some(Band { lower: -s.band, upper: s.band, label: format!("±{} % settling band", fmt_num(s.band * 100.0)) }) } else { None };
    TimePlotScene {
        t: s.time.clone(),
        series,
        limits: Vec::new(),
        band,
        events: Vec::new(),
        x_label: "time (s)".into(),
        y_label: if normalised { "state ÷ its peak |value|".into() } else { "state (own units)".into() },
        pinned: Vec::new(),
        window: None,
    }
}

/// Each input's limit as a pair of lines at ± limit; one pair per distinct (limit, unit),
/// named by input unless every input shares it.
pub(crate) fn limit_lines(result: &DesignResult) -> Vec<LimitLine> {
    let p = &result.plant;
    let s = &result.simulation;
    let mut groups: Vec<(f64, String, Vec<String>)> = Vec::new();
    for (i, l) in s.input_limit.iter().enumerate() {
        if let Some(l) = l {
            let name = p.input_names.get(i).cloned().unwrap_or_default();
            let unit = p.input_units.get(i).map(|u| u.trim()).filter(|u| !u.is_empty()).map(|u| format!(" {u}")).unwrap_or_default();
            match groups.iter_mut().find(|g| g.0 == *l && g.1 == unit) {
                Some(g) => g.2.push(name),
                None => groups.push((*l, unit, vec![name])),
            }
        }
    }
    let shared = groups.len() == 1 && groups.first().is_some_and(|g| g.2.len() == p.inputs);
    let mut limits = Vec::new();
    for (l, unit, names) in &groups {
        let whose = if shared { String::new() } else { format!(" ({})", names.join(", ")) };
        limits.push(LimitLine { value: *l, label: format!("limit +{}{unit}{whose}", fmt_num(*l)) });
        limits.push(LimitLine { value: -*l, label: format!("limit −{}{unit}{whose}", fmt_num(*l)) });
    }
    limits
}

/// The unit shared by every input, if there is one.
pub(crate) fn shared_input_unit(result: &DesignResult) -> Option<String> {
    let units: Vec<&str> = result.plant.input_units.iter().map(|u| u.trim()).collect();
    match units.first() {
        Some(u) if !u.is_empty() && units.iter().all(|v| v == u) => Some(u.to_string()),
        _ => None,
    }
}

/// True when the plotted times are the samples themselves (not thinned): consecutive times
/// at most 1.5 sample times apart.
fn every_sample(t: &[f64], sample_time: Option<f64>) -> bool {
    match (sample_time, t) {
        (Some(ts), [a, b, ..]) => b - a <= 1.5 * ts,
        _ => false,
    }
}

/// Applied inputs versus time, with each input's limit drawn at ± limit.
pub fn inputs_scene(result: &DesignResult) -> TimePlotScene {
    let p = &result.plant;
    let s = &result.simulation;
    let shared_unit = shared_input_unit(result);
    // A digital design's inputs are held between samples: a staircase, drawn only where every
    // sample is plotted (a thinned series would show steps several samples wide).
    let hold = result.domain == crate::analysis::Domain::Discrete && every_sample(&s.time, result.sample_time);
    let series = s
        .inputs
        .iter()
        .enumerate()
        .map(|(i, values)| Series {
            hold,
            name: if shared_unit.is_some() { p.input_names.get(i).cloned().unwrap_or_default() } else { label(&p.input_names.get(i).cloned().unwrap_or_default(), p.input_units.get(i)) },
            values: values.clone(),
            ..Series::default()
        })
        .collect();
    TimePlotScene {
        t: s.time.clone(),
        series,
        limits: limit_lines(result),
        band: None,
        events: Vec::new(),
        x_label: "time (s)".into(),
        y_label: match shared_unit {
            Some(u) => format!("input ({u})"),
            None => "input (own units)".into(),
        },
        pinned: Vec::new(),
        window: None,
    }
}

/// The loop's outputs (solid) against their references (dashed, in the output's colour),
/// with the reference and load steps marked. `None` without a loop simulation.
pub fn loop_outputs_scene(result: &DesignResult, report: &Report) -> Option<TimePlotScene> {
    let l = result.closed_loop.as_ref()?;
    let p = &result.plant;
    let units = report.controller.as_ref().map(|c| c.output_units.as_slice()).unwrap_or(&[]);
    let shared = match units.first() {
        Some(u) if !u.trim().is_empty() && units.len() == p.outputs && units.iter().all(|v| v == u) => Some(u.trim().to_string()),
        _ => None,
    };
    let name_of = |i: usize| {
        let n = p.output_names.get(i).cloned().unwrap_or_else(|| format!("y{}", i + 1));
        if shared.is_some() {
            n
        } else {
            label(&n, units.get(i))
        }
    };
    let mut series: Vec<Series> = l.outputs.iter().enumerate().map(|(i, v)| Series { name: name_of(i), values: v.clone(), colour: Some(i), dash: Some(0), hold: false }).collect();
    for (j, (r, tm)) in l.reference.iter().zip(&l.tracked).enumerate() {
        let i = p.output_names.iter().position(|n| *n == tm.name).unwrap_or(j);
        series.push(Series { name: format!("reference for {}", p.output_names.get(i).map_or("", |s| s.as_str())), values: r.clone(), colour: Some(i), dash: Some(1), hold: false });
    }
    Some(loop_scene(l, report, series, Vec::new(), "output", shared))
}

/// A plot of the loop simulation: its time axis, the reference and load steps marked, and one
/// y label (`quantity (unit)` with a shared unit, else "own units").
pub(crate) fn loop_scene(l: &design::LoopResult, report: &Report, series: Vec<Series>, limits: Vec<LimitLine>, quantity: &str, shared: Option<String>) -> TimePlotScene {
    TimePlotScene {
        t: l.time.clone(),
        series,
        limits,
        band: None,
        events: report.controller.as_ref().map(|c| c.events.clone()).unwrap_or_default(),
        x_label: "time (s)".into(),
        y_label: match shared {
            Some(u) => format!("{quantity} ({u})"),
            None => format!("{quantity} (own units)"),
        },
        pinned: Vec::new(),
        window: None,
    }
}

/// The loop's applied inputs (solid) and the commands before clipping (dashed, same colour),
/// with the limits. `None` without a loop simulation.
pub fn loop_inputs_scene(result: &DesignResult, report: &Report) -> Option<TimePlotScene> {
    let l = result.closed_loop.as_ref()?;
    let p = &result.plant;
    let shared = shared_input_unit(result);
    let name_of = |i: usize| {
        let n = p.input_names.get(i).cloned().unwrap_or_default();
        if shared.is_some() {
            n
        } else {
            label(&n, p.input_units.get(i))
        }
    };
    // A digital controller's commands are held between samples (zero-order hold), drawn as a
    // staircase where every sample is plotted.
    let hold = l.sample_time.is_some() && every_sample(&l.time, l.sample_time);
    let mut series: Vec<Series> = l.inputs.iter().enumerate().map(|(i, v)| Series { name: format!("{} applied", name_of(i)), values: v.clone(), colour: Some(i), dash: Some(0), hold }).collect();
    series.extend(l.commanded.iter().enumerate().map(|(i, v)| Series { name: format!("{} commanded", name_of(i)), values: v.clone(), colour: Some(i), dash: Some(1), hold }));
    Some(loop_scene(l, report, series, limit_lines(result), "input", shared))
}

/// The estimation error `x − x̂` of each state in the loop, divided by that state's peak
/// `|x|` (one scale for all). `None` without an observer.
pub fn estimation_scene(result: &DesignResult, report: &Report) -> Option<TimePlotScene> {
    let l = result.closed_loop.as_ref()?;
    result.observer.as_ref()?;
    let p = &result.plant;
    let series = l
        .states
        .iter()
        .zip(&l.estimates)
        .enumerate()
        .map(|(i, (x, xh))| {
            let peak = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let scale = if peak > 0.0 && peak.is_finite() { 1.0 / peak } else { 1.0 };
            Series { name: p.state_names.get(i).cloned().unwrap_or_else(|| format!("x{}", i + 1)), values: x.iter().zip(xh).map(|(a, b)| (a - b) * scale).collect(), ..Series::default() }
        })
        .collect();
    Some(TimePlotScene {
        t: l.time.clone(),
        series,
        limits: Vec::new(),
        band: None,
        events: report.controller.as_ref().map(|c| c.events.clone()).unwrap_or_default(),
        x_label: "time (s)".into(),
        y_label: "(x − x̂) ÷ the state's peak |x|".into(),
        pinned: Vec::new(),
        window: None,
    })
}
