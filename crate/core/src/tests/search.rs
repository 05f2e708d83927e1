//! Unit tests of [`crate::search`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn double_integrator_from_an_offset() {
    // x'' = u from x = (1, 0) with poles α(−1 ± j): K = [2α², 2α]; the peak |u| is at t = 0,
    // |u(0)| = 2α² (the velocity starts at zero and the command only falls afterwards for this
    // damping) — checkable by hand: the limit 8 gives α = 2.
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let pattern = [Complex64::new(-1.0, 1.0), Complex64::new(-1.0, -1.0)];
    let r = fastest_within_limits(&a, &b, None, &pattern, &[8.0], &[Situation::InitialState(vec![1.0, 0.0])], SearchParams::default()).unwrap();
    assert!((r.speed_factor - 2.0).abs() < 2e-3 * 2.0, "{}", r.speed_factor);
    assert!(r.monotonic);
    assert_eq!((r.limiting_situation, r.limiting_input), (0, 0));
    assert!(r.peak_ratio <= 1.0);
}

#[test]
fn too_tight_limits_and_bad_sizes() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let pattern = [Complex64::new(-1.0, 1.0), Complex64::new(-1.0, -1.0)];
    let e = fastest_within_limits(&a, &b, None, &pattern, &[1e-9], &[Situation::InitialState(vec![1.0, 0.0])], SearchParams::default()).unwrap_err();
    // At the slowest factor α = 0.01, K = [2α², 2α] and the peak from (1, 0) is |u(0)| = 2α² =
    // 2e-4 (by hand): 2e5 times the limit 1e-9.
    match &e {
        SearchError::LimitsExceededAtSlowest { ratio, .. } => assert!((ratio - 2e5).abs() <= 1e-6 * 2e5, "{ratio}"),
        other => panic!("{other:?}"),
    }
    assert!(e.to_string().contains("needs 200000.000 times the limit of input 1"), "{e}");
    // Any size reads: an exponent beyond 1e6, words for an unbounded peak.
    assert_eq!(times(2.5), "2.500 times");
    assert_eq!(times(4.434e98), "4.434e98 times");
    assert_eq!(times(f64::INFINITY), "an unbounded multiple of");
    let e = fastest_within_limits(&a, &b, None, &pattern, &[1.0], &[Situation::InitialState(vec![1.0])], SearchParams::default()).unwrap_err();
    assert!(matches!(e, SearchError::Size { .. }));
    let e = fastest_within_limits(&a, &b, None, &pattern, &[1.0], &[Situation::ReferenceStep(vec![1.0])], SearchParams::default()).unwrap_err();
    assert_eq!(e, SearchError::NeedsOutputs);
}

#[test]
fn a_run_in_steps_is_one_evaluation_per_step_and_ends_where_the_search_ends() {
    // The double integrator above (α = 2 by hand), stepped as the page steps it: each `None`
    // is exactly one more evaluation; the outcome arrives with the count the result reports,
    // and then stays; an error ends the run the same way.
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let pattern = [Complex64::new(-1.0, 1.0), Complex64::new(-1.0, -1.0)];
    let situations = [Situation::InitialState(vec![1.0, 0.0])];
    let problem = SearchProblem { a: &a, b: &b, c: None, pattern: &pattern, limits: &[8.0], situations: &situations, plant_states: 2, domain: SearchDomain::Continuous };
    let mut run = SearchRun::new(&problem, SearchParams::default()).unwrap();
    let mut steps = 0;
    let outcome = loop {
        let before = run.evaluations();
        match run.step() {
            None => assert_eq!(run.evaluations(), before + 1, "step {steps}"),
            Some(r) => break r,
        }
        steps += 1;
        assert!(steps <= run.max_steps(), "no end after {steps} steps");
    };
    let r = outcome.unwrap();
    assert!((r.speed_factor - 2.0).abs() < 2e-3 * 2.0, "{}", r.speed_factor);
    assert_eq!(r.evaluations, run.evaluations());
    assert!(steps + 1 >= r.evaluations && steps <= r.evaluations, "{steps} steps, {} evaluations", r.evaluations);
    assert!(matches!(run.step(), Some(Err(_))), "a finished run says so");
    let tight = SearchProblem { limits: &[1e-9], ..problem.clone() };
    let mut run = SearchRun::new(&tight, SearchParams::default()).unwrap();
    assert!(matches!(run.step(), Some(Err(SearchError::LimitsExceededAtSlowest { .. }))));
    assert_eq!(run.evaluations(), 1);
}
