//! Unit tests of [`super`]: the cloud drawn in steps, and its memo.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::check::check_text;
use crate::{run_checked, run_checked_continued, Continuation};

/// An invented digital loop (illustrative): the belt axis example with its A(2, 1) uncertain by
/// 20 % and B by 10 % (norm-bounded), 30 samples: the loop scenario with tracking.
fn digital_loop() -> CheckedDesign {
    let text = include_str!("../../../../examples/belt-axis-digital.json");
    let mut doc: serde_json::Value = serde_json::from_str(text).unwrap();
    doc["robustness"] = serde_json::json!({"uncertainty": {"entries": "A 2 1 20%\nB 10%", "samples": 30, "seed": 5}});
    check_text(&doc.to_string()).unwrap()
}

/// A continuous double integrator with plain state feedback and one uncertain entry, 25
/// samples: the free-response scenario.
const PLAIN: &str = r#"{"format": "polewright.design", "version": 3,
        "plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}, "feedback": {"poles": ["-2±1j"]}, "actuators": {"limit": [10]},
        "robustness": {"uncertainty": {"entries": "B 2 1 50%\nA 1 2 30%", "samples": 25, "seed": 9}}}"#;

/// Draws the job one sample per call, as the page's shortest slices would.
fn drawn_in_steps(checked: &CheckedDesign) -> CloudMemo {
    let mut job = cloud_job(checked, None).expect("a cloud to draw");
    let mut calls = 0;
    while !job.run_for(&mut || false) {
        calls += 1;
        assert_eq!(job.drawn(), calls, "one sample per call");
        assert!(job.memo().is_none(), "no memo before the last sample");
        assert!(calls <= job.samples(), "the job must end");
    }
    assert_eq!(job.drawn(), job.samples());
    job.memo().expect("a memo once every sample is drawn")
}

#[test]
fn a_cloud_drawn_in_steps_is_the_cloud_of_one_run() {
    for checked in [digital_loop(), check_text(PLAIN).unwrap()] {
        let fresh = run_checked(&checked).unwrap();
        let cloud = fresh.uncertainty.as_ref().expect("a cloud");
        assert!(cloud.stable + cloud.failed > 0 && cloud.response.is_some());
        let memo = drawn_in_steps(&checked);
        let previous = Continuation { cloud: Some(memo), ..Default::default() };
        assert!(cloud_job(&checked, Some(&previous)).is_none(), "nothing left to draw");
        let stepped = run_checked_continued(&checked, Some(&previous)).unwrap();
        // Exactly equal: the same plants in the same order.
        assert_eq!(stepped.uncertainty, fresh.uncertainty);
        assert_eq!(stepped.feedback.gain, fresh.feedback.gain);
        assert!(stepped.continuation.cloud.is_none(), "a run does not carry a cloud on");
    }
    let digital = run_checked(&digital_loop()).unwrap();
    assert_eq!(digital.uncertainty.unwrap().response.unwrap().scenario, "loop");
    let plain = run_checked(&check_text(PLAIN).unwrap()).unwrap();
    assert_eq!(plain.uncertainty.unwrap().response.unwrap().scenario, "free response");
}

#[test]
fn a_remembered_cloud_is_used_only_for_exactly_its_inputs() {
    let checked = check_text(PLAIN).unwrap();
    let mut doctored = drawn_in_steps(&checked);
    // Proof that the memo, not a new sample, gives the result: a doctored count is believed …
    doctored.result.stable = 12_345;
    let previous = Continuation { cloud: Some(doctored), ..Default::default() };
    let reused = run_checked_continued(&checked, Some(&previous)).unwrap();
    assert_eq!(reused.uncertainty.map(|u| u.stable), Some(12_345));
    // … and ignored as soon as one input differs: another seed, a limit moved by 1e-12 relative,
    // a pole moved by 1e-12.
    for (from, to) in [("\"seed\": 9", "\"seed\": 10"), ("\"limit\": [10]", "\"limit\": [10.00000000001]"), ("-2±1j", "-2.000000000002±1j")] {
        let changed = check_text(&PLAIN.replace(from, to)).unwrap();
        assert!(cloud_job(&changed, Some(&previous)).is_some(), "{to}: a cloud to draw");
        let u = run_checked_continued(&changed, Some(&previous)).unwrap().uncertainty.unwrap();
        assert!(u.stable <= 25, "{to}: the doctored cloud must not be used ({} stable)", u.stable);
    }
    // No uncertain parameters: no job.
    let none = check_text(&PLAIN.replace(r#""entries": "B 2 1 50%\nA 1 2 30%", "#, "")).unwrap();
    assert!(none.controller.robustness.uncertainty.is_none());
    assert!(cloud_job(&none, None).is_none());
}

#[test]
fn no_job_for_a_design_the_run_refuses() {
    // An unstable mode that the input cannot reach (x₁' = x₁): the run refuses the design, so no
    // cloud is drawn for it first.
    let refused = PLAIN.replace(r#""a": [[0, 1], [0, 0]], "b": [[0], [1]]"#, r#""a": [[1, 0], [0, 0]], "b": [[0], [1]]"#).replace("A 1 2 30%", "A 1 1 30%");
    let checked = check_text(&refused).unwrap();
    assert!(checked.controller.robustness.uncertainty.is_some());
    assert!(run_checked(&checked).is_err());
    assert!(cloud_job(&checked, None).is_none());
}
