//! Unit tests of [`crate::design`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::check::check_text;
use crate::{DesignError, FieldPath, InputError};

fn parse_design(text: &str) -> Result<(), InputError> {
    match check_text(text) {
        Ok(_) => Ok(()),
        Err(DesignError::Input(e)) => Err(e),
        Err(other) => panic!("{other:?}"),
    }
}

const TEXTBOOK: &str = r#"{"format": "polewright.design", "version": 1,
        "plant": {"a": [[0,1,0],[0,0,1],[-1,-5,-6]], "b": [0,0,1]},
        "feedback": {"poles": ["-2±4j", -10]}}"#;

#[test]
fn textbook_design_file_runs() {
    // Ogata, Modern Control Engineering, pole-placement example (from memory): K = [199, 55, 8].
    let r = run_text(TEXTBOOK).unwrap();
    let k = &r.feedback.gain[0];
    for (got, want) in k.iter().zip([199.0, 55.0, 8.0]) {
        assert!((got - want).abs() < 1e-9 * want);
    }
    assert_eq!(r.convention, "u = -K x");
    assert!(r.controllability.complete && r.controllability.stabilizable);
    // The free response recomputed here, x(t) = e^{(A − BK) t} x₀ at the result's own time
    // points (nalgebra's exponential): the states agree with the simulation, and each state's
    // settling time — the last sample outside its band (the result's, a share of its peak) —
    // is the one reported, to one sample.
    let sim = &r.simulation;
    let a = nalgebra::DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -1.0, -5.0, -6.0]);
    let closed = &a - nalgebra::DMatrix::from_row_slice(3, 1, &[0.0, 0.0, 1.0]) * nalgebra::DMatrix::from_row_slice(1, 3, k);
    let x0 = nalgebra::DVector::from_vec(sim.initial_state.clone());
    let xs: Vec<nalgebra::DVector<f64>> = sim.time.iter().map(|t| (&closed * *t).exp() * &x0).collect();
    for i in 0..3 {
        let peak = xs.iter().map(|x| x[i].abs()).fold(0.0, f64::max);
        let worst = xs.iter().zip(&sim.states[i]).map(|(x, y)| (x[i] - y).abs()).fold(0.0, f64::max);
        assert!(worst <= 1e-9 * peak, "state {i}: simulation differs by {worst:e} of {peak}");
        let last_outside = xs.iter().zip(&sim.time).filter(|(x, _)| x[i].abs() > sim.band * peak).map(|(_, t)| *t).fold(0.0, f64::max);
        let reported = sim.settling_time[i].expect("settles within the duration");
        assert!((reported - last_outside).abs() <= 1.01 * sim.step, "state {i}: settling {reported} vs {last_outside} (step {})", sim.step);
    }
    let json = serde_json::to_string(&r).unwrap();
    assert!(json.contains("\"format\":\"polewright.result\""));
}

#[test]
fn input_errors_name_the_field() {
    let bad = TEXTBOOK.replace("[[0,1,0],[0,0,1],[-1,-5,-6]]", "[[0,1,0],[0,0],[-1,-5,-6]]");
    let e = parse_design(&bad).unwrap_err();
    assert_eq!(e.field, FieldPath::PlantA);
    assert!(e.message.contains("row 2"), "{e}");
    let bad = TEXTBOOK.replace("\"feedback\"", "\"feedbak\"");
    let e = parse_design(&bad).unwrap_err();
    assert_eq!(e.field, FieldPath::Document);
    assert!(e.message.contains("feedbak"), "{e}");
    let bad = TEXTBOOK.replace("\"-2±4j\"", "\"-2+4j\"");
    let e = parse_design(&bad).unwrap_err();
    assert_eq!(e.field, FieldPath::FeedbackPoles);
    assert!(e.message.contains("-2-4j"), "{e}");
    let bad = TEXTBOOK.replace("\"b\": [0,0,1]", "\"b\": [0,0,1,2]");
    assert_eq!(parse_design(&bad).unwrap_err().field, FieldPath::PlantB);
    let e = parse_design("{").unwrap_err();
    assert_eq!(e.field, FieldPath::Document);
}

#[test]
fn unstable_uncontrollable_is_infeasible() {
    let text = r#"{"format": "polewright.design", "version": 1,
            "plant": {"a": [[1,0],[0,-1]], "b": [[0],[1]]}, "feedback": {"poles": [-1, -2]}}"#;
    match run_text(text) {
        Err(DesignError::Infeasible { message }) => {
            assert!(message.contains("mode at 1"), "{message}")
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn limits_produce_saturation_warning() {
    let text = r#"{"format": "polewright.design", "version": 1,
            "plant": {"a": "0 1\n0 0", "b": "0\n1", "input_names": ["force"]},
            "feedback": {"poles": "-5, -6"}, "actuators": {"limit": [1]},
            "simulation": {"initial_state": [1, 0]}}"#;
    let r = run_text(text).unwrap();
    assert!(r.warnings.iter().any(|w| w.code == "input-over-limit"), "{:?}", r.warnings);
    assert!(r.simulation.peak_input[0] > 1.0);
    assert!(r.simulation.inputs[0].iter().all(|u| u.abs() <= 1.0 + 1e-12));
    assert!(r.simulation.first_saturation[0] == Some(0.0));
}

#[test]
fn typed_text_and_plain_json_have_one_canonical_form() {
    use crate::check::canonical;
    use crate::spec::read_design;
    let json = r#"{"format": "polewright.design", "version": 3,
        "plant": {"a": [[0, 1], [-2, -3]], "b": [0, 1], "state_names": ["x", "v"]},
        "feedback": {"poles": [[-4, 2], [-4, -2]], "plane": "s"}, "actuators": {"limit": [1.5]},
        "simulation": {"duration": 3, "band": 0.02}}"#;
    let text = r#"{"format": "polewright.design", "version": 3,
        "plant": {"a": "0 1\n-2 -3", "b": "0 1", "state_names": "x, v"},
        "feedback": {"poles": "-4±2j"}, "actuators": {"limit": "1.5"},
        "simulation": {"duration": "3"}}"#;
    let (a, b) = (read_design(json).unwrap(), read_design(text).unwrap());
    assert_ne!(a, b, "written differently");
    assert_eq!(canonical(&a), canonical(&b), "but saying the same");
    // Text that does not read is kept, so a bad document stays as typed.
    let bad = read_design(&text.replace("0 1\\n-2 -3", "0 1\\n-2 x")).unwrap();
    assert!(matches!(canonical(&bad).plant.a, Some(crate::spec::MatrixValue::Text(_))));
}

#[test]
fn the_rulebook_counts_the_poles_before_anything_is_designed() {
    let text = TEXTBOOK.replace(r#"["-2±4j", -10]"#, r#"["-2±4j"]"#);
    let spec = crate::spec::read_design(&text).unwrap();
    let report = crate::check::check(&spec);
    assert!(report.design.is_none());
    let e = report.errors.iter().find(|e| e.field == FieldPath::FeedbackPoles).expect("a pole-count error");
    assert!(e.message.contains("2 poles given but the plant has 3 states"), "{e}");
}

/// The double integrator with a limit of 8 and poles α(−1 ± j): the peak from (1, 0) is
/// |u(0)| = k₁ = 2α² (by hand), so the search finds α = 2.
const SEARCHED: &str = r#"{"format": "polewright.design", "version": 3,
        "plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}, "feedback": {"poles": ["-1±1j"]}, "actuators": {"limit": [8]},
        "search": {"fastest_within_limits": true, "situations": [{"initial_state": [1, 0]}]}}"#;

#[test]
fn a_search_is_reused_only_for_exactly_its_inputs() {
    let checked = check_text(SEARCHED).unwrap();
    let first = run_checked(&checked).unwrap();
    let found = first.search.as_ref().expect("search").speed_factor;
    assert!((found - 2.0).abs() < 4e-3, "{found}");
    let memo = first.continuation.search.clone().expect("the run remembers its search");
    // Continuing with the same inputs gives the same design (the search is a function of its
    // inputs): bitwise the same gain.
    let again = run_checked_continued(&checked, Some(&first.continuation)).unwrap();
    assert_eq!(again.feedback.gain, first.feedback.gain);
    assert_eq!(again.continuation.search.as_ref(), Some(&memo));
    // Proof that the memo, not a new search, gave that result: a doctored memo with the same
    // inputs is believed …
    let mut doctored = memo.clone();
    if let Ok(r) = doctored.outcome.as_mut() {
        r.speed_factor = 1.5;
        r.poles = vec![Complex64::new(-1.5, 1.5), Complex64::new(-1.5, -1.5)];
        r.eigenvectors = None;
    }
    let previous = crate::Continuation { search: Some(doctored), ..first.continuation.clone() };
    let reused = run_checked_continued(&checked, Some(&previous)).unwrap();
    assert_eq!(reused.search.as_ref().map(|s| s.speed_factor), Some(1.5));
    // … and ignored as soon as one input differs: a limit of 8 · (1 + 1e-12) searches again.
    let changed = check_text(&SEARCHED.replace("\"limit\": [8]", "\"limit\": [8.000000000008]")).unwrap();
    let fresh = run_checked_continued(&changed, Some(&previous)).unwrap();
    let f = fresh.search.as_ref().expect("search").speed_factor;
    assert!((f - 2.0).abs() < 4e-3, "a changed limit must search again, not reuse 1.5: {f}");
    assert_ne!(fresh.continuation.search, previous.search);
}

#[test]
fn a_search_run_in_steps_gives_the_design_of_a_fresh_run() {
    // The page's way: the job stepped to its end, its memo handed to the run. The design is
    // bitwise that of a fresh run (the command line's), and no further job is offered.
    let checked = check_text(SEARCHED).unwrap();
    let fresh = run_checked(&checked).unwrap();
    let mut job = search_job(&checked, None).expect("a search to run");
    let mut memo = None;
    for _ in 0..=job.max_evaluations() {
        if let Some(m) = job.step() {
            memo = Some(m);
            break;
        }
    }
    let previous = crate::Continuation { search: Some(memo.expect("the job ends")), ..Default::default() };
    assert!(search_job(&checked, Some(&previous)).is_none(), "nothing left to search");
    let stepped = run_checked_continued(&checked, Some(&previous)).unwrap();
    assert_eq!(stepped.feedback.gain, fresh.feedback.gain);
    let (a, b) = (stepped.search.as_ref().unwrap(), fresh.search.as_ref().unwrap());
    assert_eq!((a.speed_factor, a.evaluations, a.peak_ratio), (b.speed_factor, b.evaluations, b.peak_ratio));
    // A search that fails fails the same way from its memo.
    let tight = check_text(&SEARCHED.replace("\"limit\": [8]", "\"limit\": [1e-9]")).unwrap();
    let fresh_error = run_checked(&tight).unwrap_err().to_string();
    let mut job = search_job(&tight, None).expect("a search to run");
    let memo = (0..=job.max_evaluations()).find_map(|_| job.step()).expect("the job ends");
    let previous = crate::Continuation { search: Some(memo), ..Default::default() };
    assert_eq!(run_checked_continued(&tight, Some(&previous)).unwrap_err().to_string(), fresh_error);
    assert!(fresh_error.contains("even at the slowest speed factor"), "{fresh_error}");
    // No search asked for: no job.
    assert!(search_job(&check_text(TEXTBOOK).unwrap(), None).is_none());
}
