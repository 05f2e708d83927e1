//! Unit tests of [`crate::demos`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::form::{evaluate_form, FormStatus};

#[test]
fn every_demo_designs_a_stable_closed_loop() {
    let all = demos();
    assert!(all.len() >= 3);
    let mut recomputed = 0;
    for d in &all {
        assert!(d.description.starts_with("Illustrative"), "{}", d.title);
        let out = evaluate_form(&d.form);
        assert!(out.errors.is_empty(), "{}: {:?}", d.title, out.errors);
        assert_eq!(out.status, FormStatus::Designed, "{}: {:?}", d.title, out.design_error);
        let r = out.design.as_ref().unwrap();
        let stable = |p: &[f64; 2]| {
            if r.domain == crate::analysis::Domain::Discrete {
                p[0].hypot(p[1]) < 1.0
            } else {
                p[0] < 0.0
            }
        };
        assert!(r.feedback.achieved_poles.iter().all(stable), "{}: {:?}", d.title, r.feedback.achieved_poles);
        assert!(r.feedback.max_pole_error < 1e-8, "{}: {}", d.title, r.feedback.max_pole_error);
        // Where the loop is plain state feedback (continuous, K over the plant's states), the
        // closed loop is recomputed here from the form's A, B and the gain (nalgebra's Schur):
        // stable, with the poles the design reports.
        let n = r.plant.states;
        if r.domain == crate::analysis::Domain::Continuous && r.feedback.gain[0].len() == n && r.feedback.delay_gain.is_none() {
            let (a, b) = (text_matrix(&d.form.a), text_matrix(&d.form.b));
            let k = nalgebra::DMatrix::from_fn(r.feedback.gain.len(), n, |i, j| r.feedback.gain[i][j]);
            let poles = (a - b * k).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues();
            assert!(poles.iter().all(|z| z.re < 0.0), "{}: {poles}", d.title);
            for p in &r.feedback.achieved_poles {
                let z = num_complex::Complex64::new(p[0], p[1]);
                assert!(poles.iter().any(|w| (w - z).norm() <= 1e-9 * z.norm().max(1.0)), "{}: reported {z} is not an eigenvalue of A − BK", d.title);
            }
            recomputed += 1;
        }
        assert!(r.controllability.complete, "{}", d.title);
        assert!(!r.simulation.diverged, "{}", d.title);
        assert!(r.simulation.settling_time.iter().all(|t| t.is_some()), "{}: {:?}", d.title, r.simulation.settling_time);
        // Names and units are given for every state and input.
        assert!(r.plant.state_names.iter().all(|n| !n.starts_with('x')), "{}", d.title);
        assert!(r.plant.state_units.iter().chain(&r.plant.input_units).all(|u| !u.is_empty()), "{}", d.title);
        assert!(r.simulation.input_limit.iter().all(|l| l.is_some()), "{}", d.title);
        // No warning other than a possible (brief) saturation, and a small disk margin where the
        // demo's description points it out.
        let allowed = |code: &crate::design::warnings::WarningCode| *code == "input-over-limit" || (*code == "small-margin" && d.description.contains("see the warning"));
        assert!(r.warnings.iter().all(|w| allowed(&w.code)), "{}: {:?}", d.title, r.warnings);
    }
    // The continuous state-feedback demos (the belt axis, the heated plate, the mirror).
    assert!(recomputed >= 3, "only {recomputed} demos recomputed");
}

/// A matrix typed in the form: one row per line, entries separated by spaces or commas.
fn text_matrix(text: &str) -> nalgebra::DMatrix<f64> {
    let rows: Vec<Vec<f64>> = text
        .lines()
        .filter(|l| !l.trim().is_empty())
        .map(|l| l.split(|c: char| c.is_whitespace() || c == ',').filter(|t| !t.is_empty()).map(|t| t.parse::<f64>().unwrap_or_else(|e| panic!("{t:?}: {e}"))).collect())
        .collect();
    nalgebra::DMatrix::from_fn(rows.len(), rows[0].len(), |i, j| rows[i][j])
}

#[test]
fn the_belt_axis_is_the_example_file() {
    let text = include_str!("../../../../examples/belt-axis.json");
    let from_file = crate::design::run_text(text).unwrap();
    let out = evaluate_form(&belt_axis().form);
    let from_form = out.design.unwrap();
    assert_eq!(from_file.feedback.gain, from_form.feedback.gain);
    assert_eq!(from_form.plant.inputs, 1);
    assert_eq!(from_form.plant.states, 4);
    assert_eq!(from_form.simulation.input_limit, vec![Some(60.0)]);
}

#[test]
fn the_second_demo_has_two_inputs() {
    let out = evaluate_form(&heated_plate().form);
    let d = out.design.unwrap();
    assert_eq!(d.plant.inputs, 2);
    assert!(d.observability.as_ref().is_some_and(|o| o.complete));
}

#[test]
fn the_digital_demo_is_the_digital_example_file() {
    let text = include_str!("../../../../examples/belt-axis-digital.json");
    let from_file = crate::design::run_text(text).unwrap();
    let out = evaluate_form(&belt_axis_digital().form);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let d = out.design.as_ref().unwrap();
    assert_eq!(from_file.feedback.gain, d.feedback.gain);
    assert_eq!(d.domain, crate::analysis::Domain::Discrete);
    assert_eq!(d.sample_time, Some(0.001));
    let (fo, o) = (from_file.observer.as_ref().unwrap(), d.observer.as_ref().unwrap());
    assert_eq!(fo.gain, o.gain);
    let l = d.closed_loop.as_ref().unwrap();
    let fl = from_file.closed_loop.as_ref().unwrap();
    assert_eq!(l.outputs, fl.outputs);
    assert_eq!(l.tracked.len(), 1);
    assert!(!l.diverged);
    let tm = &l.tracked[0];
    assert!(tm.rise_time.is_some() && tm.settling_time.is_some(), "{tm:?}");
    // The report has the controller sections and the loop tables.
    let r = out.report.unwrap();
    let c = r.controller.unwrap();
    assert_eq!(c.observer.as_ref().unwrap().gain.entries.len(), 4);
    assert_eq!(c.tracking.len(), 1);
    assert_eq!(c.discrete_plant.len(), 2);
    assert_eq!(c.loop_outputs.len(), 1);
    assert_eq!(c.loop_inputs.len(), 1);
    assert_eq!(c.estimation.len(), 4);
    assert_eq!(c.events.len(), 2);
}

#[test]
fn the_mirror_demo_chooses_its_poles_from_the_specification() {
    let out = evaluate_form(&tilting_mirror().form);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let d = out.design.as_ref().unwrap();
    // 5 % overshoot is a damping ratio of about 0.69 (common practice).
    let region = d.pole_choice.as_ref().and_then(|c| c.region.as_ref()).expect("a specification region");
    assert!((region.min_damping - 0.690).abs() < 1e-3, "{}", region.min_damping);
    let r = out.report.unwrap();
    let pc = r.pole_choice.expect("pole choice");
    assert!(pc.region.is_some_and(|rr| rr.outside_region.is_empty()));
    assert!(crate::form::pole_map_scene(d).region.is_some());
}

#[test]
fn list_and_lookup_agree() {
    let list = demo_list();
    assert_eq!(list.len(), demos().len());
    assert_eq!(demo(1).map(|d| d.title), Some(list[1].title));
    assert!(demo(list.len()).is_none());
}
