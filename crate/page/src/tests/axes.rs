//! Axes of the input and output plots: one panel per signal when units or limits differ,
//! each signal divided by its limit, or one shared axis; staircases for held signals.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::draw::{stacked_time_plots, time_plot, ApproximateText, DrawOp};
use crate::plot::Rect;

/// A carriage driven by a force (±2 N) and a small torque (±0.05 N·m): invented data.
fn two_inputs(units: &str, limits: &str) -> DesignResult {
    let f = FormInput {
        a: "0 1 0 0\n0 0 0 0\n0 0 0 1\n0 0 0 0".into(),
        b: "0 0\n1 0\n0 0\n0 40".into(),
        poles: "-3±2j, -4±1j".into(),
        input_names: "force, torque".into(),
        input_units: units.into(),
        limits: limits.into(),
        initial_state: "0.1 0 0.05 0".into(),
        ..Default::default()
    };
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    out.design.unwrap()
}

#[test]
fn different_units_or_limits_give_one_panel_per_input() {
    let d = two_inputs("N, N·m", "2, 0.05");
    let panels = arrange_inputs(inputs_scene(&d), &d, SignalAxes::Automatic);
    assert_eq!(panels.len(), 2);
    assert_eq!(panels[0].y_label, "force (N)");
    assert_eq!(panels[1].y_label, "torque (N·m)");
    // Each panel holds its own signal and only its own limit lines, so labels cannot overlap.
    assert_eq!(panels[0].series.len(), 1);
    assert_eq!(panels[0].series[0].values, d.simulation.inputs[0]);
    let values = |p: &TimePlotScene| p.limits.iter().map(|l| l.value).collect::<Vec<_>>();
    assert_eq!(values(&panels[0]), [2.0, -2.0]);
    assert_eq!(values(&panels[1]), [0.05, -0.05]);
    assert!(panels[1].limits[0].label.contains("0.05 N·m"), "{:?}", panels[1].limits);
    // Same unit and same limit: one shared axis.
    let same = two_inputs("N, N", "2, 2");
    assert_eq!(arrange_inputs(inputs_scene(&same), &same, SignalAxes::Automatic).len(), 1);
    // Same unit, different limits: panels again (a flat line otherwise).
    let uneven = two_inputs("N, N", "2, 0.05");
    assert_eq!(arrange_inputs(inputs_scene(&uneven), &uneven, SignalAxes::Automatic).len(), 2);
}

#[test]
fn divided_by_limit_puts_every_input_on_one_axis_with_limits_at_one() {
    let d = two_inputs("N, N·m", "2, 0.05");
    let plots = arrange_inputs(inputs_scene(&d), &d, SignalAxes::DividedByLimit);
    assert_eq!(plots.len(), 1);
    let p = &plots[0];
    assert_eq!(p.limits.iter().map(|l| l.value).collect::<Vec<_>>(), [1.0, -1.0]);
    for (k, (series, limit)) in p.series.iter().zip([2.0, 0.05]).enumerate() {
        for (shown, raw) in series.values.iter().zip(&d.simulation.inputs[k]) {
            assert_eq!(*shown, raw * (1.0 / limit));
        }
    }
    // Without a limit an input is divided by its peak, and its name says so.
    let partly = two_inputs("N, N·m", "2, none");
    let plots = arrange_inputs(inputs_scene(&partly), &partly, SignalAxes::DividedByLimit);
    assert!(plots[0].series[1].name.contains("÷ its peak"), "{}", plots[0].series[1].name);
    let peak = plots[0].series[1].values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    assert!((peak - 1.0).abs() < 1e-12, "{peak}");
    // Shared: as it was.
    assert_eq!(
        arrange_inputs(inputs_scene(&d), &d, SignalAxes::Shared),
        vec![inputs_scene(&d).clone()]
            .into_iter()
            .map(|mut s| {
                for (i, ser) in s.series.iter_mut().enumerate() {
                    ser.colour.get_or_insert(i);
                }
                s
            })
            .collect::<Vec<_>>()
    );
}

#[test]
fn stacked_panels_share_the_canvas_under_one_clear() {
    let d = two_inputs("N, N·m", "2, 0.05");
    let panels = arrange_inputs(inputs_scene(&d), &d, SignalAxes::Separate);
    let rect = Rect::sized(600.0, 400.0);
    let ops = stacked_time_plots(&panels, rect, &ApproximateText);
    assert_eq!(ops.iter().filter(|op| matches!(op, DrawOp::Clear { .. })).count(), 1);
    let moves: Vec<(f64, f64)> = ops.iter().filter_map(|op| if let DrawOp::Translate { dx, dy } = op { Some((*dx, *dy)) } else { None }).collect();
    assert_eq!(moves, [(0.0, 0.0), (0.0, 200.0)]);
    let mut depth = 0i32;
    for op in &ops {
        match op {
            DrawOp::Save => depth += 1,
            DrawOp::Restore => depth -= 1,
            _ => {}
        }
        assert!(depth >= 0);
    }
    assert_eq!(depth, 0);
    // One panel is the plain plot.
    assert_eq!(stacked_time_plots(&panels[..1], rect, &ApproximateText), time_plot(&panels[0], rect, &ApproximateText));
}

#[test]
fn a_held_signal_is_drawn_as_a_staircase() {
    let series = |hold| crate::plot::Series { name: "u".into(), values: vec![0.0, 1.0, 1.0, -1.0], colour: Some(0), dash: Some(0), hold };
    let scene = |hold| TimePlotScene { t: vec![0.0, 1.0, 2.0, 3.0], series: vec![series(hold)], ..Default::default() };
    let path_of = |hold| {
        let ops = time_plot(&scene(hold), Rect::sized(600.0, 300.0), &ApproximateText);
        // The signal's path: the first one after the signals' round line joins are set.
        let start = ops.iter().position(|op| matches!(op, DrawOp::RoundJoin)).unwrap();
        ops[start..].iter().find_map(|op| if let DrawOp::StrokePath(d) = op { Some(d.clone()) } else { None }).unwrap()
    };
    let points = |d: String| -> Vec<[f64; 2]> {
        let nums: Vec<f64> = d.split([' ', 'M', 'L']).filter(|t| !t.is_empty()).map(|t| t.parse().unwrap()).collect();
        nums.chunks(2).map(|c| [c[0], c[1]]).collect()
    };
    let held = points(path_of(true));
    let straight = points(path_of(false));
    // Held: every change of value is a vertical step at the new sample time (the run at 1 from
    // t = 1 to t = 2 is one horizontal segment after simplification).
    assert_eq!(straight.len(), 4, "{straight:?}");
    assert!(held.len() > straight.len(), "{held:?}");
    for w in held.windows(2) {
        let (a, b) = (w[0], w[1]);
        assert!((a[0] - b[0]).abs() < 1e-9 || (a[1] - b[1]).abs() < 1e-9, "a sloped segment {a:?} → {b:?} in {held:?}");
    }
}
