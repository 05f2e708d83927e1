//! The independent closed-loop verdict: a design that reports success has a stable loop when
//! only stable poles were requested, and no non-finite number.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use polewright::design::{self, DesignError};

/// The reproduction of a silent failure: eig(A − B K) of the gain the run used to return was
/// {−0.43, +0.858} (computed with numpy.linalg.eigvals, numpy 2.x, as the issue reports it).
const NEAR_REPEATED: &str = r#"{"format":"polewright.design","version":1,"plant":{"a":[[0,-7],[1,0.5]],"b":[[-0.45],[0]]},"feedback":{"poles":"-0.43±1e-20j"}}"#;

#[test]
fn an_unstable_loop_where_a_stable_one_was_asked_is_refused() {
    match design::run_text(NEAR_REPEATED) {
        Err(DesignError::Infeasible { message }) => assert!(message.contains("does not give a stable loop") && message.contains("0.858"), "{message}"),
        other => panic!("expected a refusal, got {other:?}"),
    }
}

/// Routh–Hurwitz: all roots of `s^n + c[n-1] s^(n-1) + … + c[0]` in the open left half-plane
/// (Routh 1877; Hurwitz 1895; the array as in Ogata, *Modern Control Engineering*, §5-6, from
/// memory). Independent of any eigenvalue routine.
fn routh_stable(c: &[f64]) -> bool {
    let n = c.len();
    // Coefficients from the highest power down: 1, c[n-1], …, c[0].
    let mut poly = vec![1.0];
    poly.extend(c.iter().rev());
    if poly.iter().any(|v| !(*v > 0.0)) {
        return false;
    }
    let mut r0: Vec<f64> = poly.iter().step_by(2).copied().collect();
    let mut r1: Vec<f64> = poly.iter().skip(1).step_by(2).copied().collect();
    for _ in 0..n {
        if r1.is_empty() {
            break;
        }
        if !(r1[0] > 0.0) {
            return false;
        }
        let next: Vec<f64> = (0..r0.len().saturating_sub(1)).map(|j| (r1[0] * r0[j + 1] - r0[0] * r1.get(j + 1).copied().unwrap_or(0.0)) / r1[0]).collect();
        r0 = r1;
        r1 = next;
    }
    true
}

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[test]
fn every_accepted_companion_design_is_stable_by_routh_hurwitz() {
    // Single-input plants in controllable companion form: with u = −K x the closed-loop
    // characteristic coefficients are a_i + k_i exactly, so stability is judged from the gain
    // alone by Routh–Hurwitz. Requested poles are stable, often clustered (the hard case).
    let mut rng = Rng(0x5EED_1234_ABCD_0001);
    let (mut accepted, mut refused, mut by_verdict) = (0, 0, 0);
    for case in 0..400 {
        let n = 3 + case % 8;
        let a: Vec<f64> = (0..n).map(|_| 4.0 * rng.next() - 2.0).collect();
        let mut rows: Vec<Vec<f64>> = (0..n).map(|i| (0..n).map(|j| if j == i + 1 { 1.0 } else { 0.0 }).collect()).collect();
        rows[n - 1] = a.iter().map(|v| -v).collect();
        let b: Vec<f64> = (0..n).map(|i| if i == n - 1 { 1.0 } else { 0.0 }).collect();
        let centre = -(0.5 + 2.0 * rng.next());
        let spread = if case % 3 == 0 { 1e-9 } else { 0.3 * rng.next() };
        let mut poles = Vec::new();
        while poles.len() < n {
            let re = centre - spread * rng.next();
            if n - poles.len() >= 2 && rng.next() < 0.5 {
                let im = 0.2 + rng.next();
                poles.push(format!("{re}±{im}j"));
                poles.push(String::new());
            } else {
                poles.push(format!("{re}"));
            }
        }
        let poles: Vec<String> = poles.into_iter().filter(|p| !p.is_empty()).collect();
        let doc = serde_json::json!({"format": "polewright.design", "version": 3,
            "plant": {"a": rows, "b": b}, "feedback": {"poles": poles.join(", ")}});
        match design::run_text(&doc.to_string()) {
            Ok(r) => {
                accepted += 1;
                let k = &r.feedback.gain[0];
                let c: Vec<f64> = (0..n).map(|i| a[i] + k[i]).collect();
                assert!(routh_stable(&c), "case {case}: accepted but unstable by Routh–Hurwitz: {doc}");
                assert!(r.feedback.achieved_poles.iter().flatten().all(|v| v.is_finite()));
            }
            Err(DesignError::Infeasible { message }) => {
                refused += 1;
                if message.contains("does not give a stable loop") {
                    by_verdict += 1;
                }
            }
            Err(DesignError::Input(e)) => panic!("case {case}: {e}: {doc}"),
        }
    }
    eprintln!("{accepted} accepted (all stable), {refused} refused ({by_verdict} by the stability verdict)");
    assert!(accepted >= 200, "only {accepted} designs accepted");
}

#[test]
fn a_slow_pole_at_a_fast_sample_rate_is_designed_with_its_simulation_cut() {
    // Poles −0.05 and −0.06 at T = 1e−4: 7/σ = 140 s would be 2.8 million samples.
    let text = r#"{"format":"polewright.design","version":3,"plant":{"a":[[0,1],[0,0]],"b":[[0],[1]]},
        "feedback":{"poles":[-0.05,-0.06]},"implementation":{"sample_time":1e-4}}"#;
    let r = design::run_text(text).expect("designed");
    let note = r.warnings.iter().find(|w| w.code == "simulation-shortened").expect("a note");
    assert_eq!(note.severity, polewright::warnings::Severity::Note);
    assert!(r.simulation.duration <= 5.0 + 1e-9, "{}", r.simulation.duration);
    // A duration typed beyond the cap stays an input error of that field.
    let typed = text.replace(r#""implementation""#, r#""simulation":{"duration":100},"implementation""#);
    match design::run_text(&typed) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "simulation.duration"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn warnings_speak_of_the_scenario_the_user_asked_for() {
    // A loop scenario with no initial state typed: the free response's made-up unit deviation
    // raises no input warning; the loop's own saturation does.
    let base = std::fs::read_to_string(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/belt-axis-digital.json")).unwrap();
    for limit in ["60", "5"] {
        let text = base.replace(r#""limit": [60]"#, &format!(r#""limit": [{limit}]"#));
        assert!(text.contains(&format!(r#""limit": [{limit}]"#)), "the example's limit was not found");
        let r = design::run_text(&text).unwrap();
        assert!(!r.warnings.iter().any(|w| w.code == "input-over-limit"), "limit {limit}: {:?}", r.warnings);
        let l = r.closed_loop.as_ref().unwrap();
        for im in &l.input_metrics {
            let over = im.limit.is_some_and(|lim| im.peak_command > lim);
            let warned = r.warnings.iter().any(|w| w.code == "loop-input-over-limit" && w.message.contains(&im.name));
            assert_eq!(over, warned, "limit {limit}: peak {} against {:?}", im.peak_command, im.limit);
            // The 5 N case does saturate, so the loop warning is really exercised.
            assert_eq!(over, limit == "5", "limit {limit}: peak {}", im.peak_command);
        }
    }
}

#[test]
fn numbers_at_the_ends_of_the_floating_point_range_are_an_input_error_never_a_crash() {
    for v in ["1e154", "1e308", "-1e200", "1e-200"] {
        let text = format!(r#"{{"format":"polewright.design","version":3,"plant":{{"a":[[{v},{v}],[{v},{v}]],"b":[[{v}],[1]]}},"feedback":{{"poles":[-1,-2]}}}}"#);
        match design::run_text(&text) {
            Err(DesignError::Input(e)) => {
                assert_eq!(e.field.dotted(), "plant.a");
                assert!(e.message.contains("change the units"), "{e}");
                assert!(!e.message.contains("NaN"));
            }
            other => panic!("{v}: {other:?}"),
        }
    }
}

#[test]
fn the_units_of_the_input_do_not_decide_controllability() {
    // Double integrator x1' = x2, x2' = b u with poles −1, −2: the closed-loop polynomial
    // s² + b k2 s + b k1 = s² + 3 s + 2 gives K = [2/b, 3/b] (by hand). Before the rank
    // decisions were made block by block in balanced coordinates, b = 1e10 or 1e−11 was
    // "uncontrollable".
    for b in [1e10, 1.0, 1e-11] {
        let text = format!(r#"{{"format":"polewright.design","version":3,"plant":{{"a":[[0,1],[0,0]],"b":[[0],[{b:e}]]}},"feedback":{{"poles":[-1,-2]}}}}"#);
        let r = design::run_text(&text).unwrap_or_else(|e| panic!("b = {b:e}: {e}"));
        let k = &r.feedback.gain[0];
        assert!((k[0] * b - 2.0).abs() < 1e-9 && (k[1] * b - 3.0).abs() < 1e-9, "b = {b:e}: {k:?}");
    }
}

#[test]
fn rescaling_states_and_inputs_by_powers_of_ten_keeps_the_controllability_verdicts() {
    // numpy's ranks of the committed controllability cases (tests/fixtures/controllability.json,
    // `rank_controllable`) hold when the states are measured in other units (D⁻¹ A D, D⁻¹ B,
    // D = diag(10^k)) and the inputs too (B · 10^j).
    use polewright::analysis::{controllability_report, AnalysisParams};
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../tests/fixtures/controllability.json");
    let f: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let rows = |v: &serde_json::Value| -> nalgebra::DMatrix<f64> {
        let r: Vec<Vec<f64>> = v.as_array().unwrap().iter().map(|r| r.as_array().unwrap().iter().map(|x| x.as_f64().unwrap()).collect()).collect();
        nalgebra::DMatrix::from_fn(r.len(), r[0].len(), |i, j| r[i][j])
    };
    // The per-mode verdicts (controllable, weak, not) and the stabilisability verdict of the
    // report on the data as given also hold under those changes and a change of the time unit
    // (A and B times 10^t): each is judged on its own scale.
    let mut checked = 0;
    for case in f["cases"].as_array().unwrap() {
        let (a, b) = (rows(&case["a"]), rows(&case["b"]));
        let want = case["rank_controllable"].as_u64().unwrap() as usize;
        let n = a.nrows();
        let base = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
        // As counts: with repeated eigenvalues which copy is called hidden is arbitrary.
        let verdicts = |r: &polewright::analysis::ModalReport| {
            let mut v: Vec<String> = r.modes.iter().map(|m| format!("{:?}", m.verdict)).collect();
            v.sort();
            v
        };
        for (ks, j, t) in [(vec![3, -3], 0, 0), (vec![-4, 2], 5, 3), (vec![0, 6], -6, -4)] {
            let d: Vec<f64> = (0..n).map(|i| 10f64.powi(ks[i % 2])).collect();
            let time = 10f64.powi(t);
            let a2 = nalgebra::DMatrix::from_fn(n, n, |r, c| a[(r, c)] * d[c] / d[r] * time);
            let b2 = nalgebra::DMatrix::from_fn(n, b.ncols(), |r, c| b[(r, c)] / d[r] * 10f64.powi(j) * time);
            let got = controllability_report(&a2, &b2, AnalysisParams::default()).unwrap();
            assert_eq!(got.rank, want, "{}: units {ks:?}, 10^{j}, time 10^{t}", case["name"]);
            assert_eq!(verdicts(&got), verdicts(&base), "{}: units {ks:?}, 10^{j}, time 10^{t}", case["name"]);
            assert_eq!(got.stable_hidden_modes, base.stable_hidden_modes, "{}: units {ks:?}, 10^{j}, time 10^{t}", case["name"]);
            checked += 1;
        }
    }
    assert!(checked >= 45, "{checked}");
}

#[test]
fn a_fixed_mode_is_judged_on_its_own_scale() {
    // A stable fixed mode at −0.0163 ± 18 080.67j (the size of the one in example 20 of the
    // continuous benchmark collection of Benner, Laub & Mehrmann, SPC 95-22, 1995, from memory)
    // beside a controllable part of norm 4e11: against 1e-10 ‖A‖₂ = 40 it was called not
    // strictly stable; on its own scale it is stable, and the placement leaves it in place.
    use nalgebra::DMatrix;
    use polewright::analysis::{controllability_report, AnalysisParams};
    use polewright::place::{state_feedback_gain, PlacementParams};
    let (sigma, omega) = (-0.0163, 18_080.67);
    let mut a = DMatrix::<f64>::zeros(4, 4);
    a[(0, 1)] = 4e11;
    a[(1, 0)] = -1.0;
    a[(2, 2)] = sigma;
    a[(2, 3)] = omega;
    a[(3, 2)] = -omega;
    a[(3, 3)] = sigma;
    let b = DMatrix::from_row_slice(4, 1, &[0.0, 1.0, 0.0, 0.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 2);
    assert!(r.stable_hidden_modes, "{:?}", r.hidden_modes);
    let poles: Vec<num_complex::Complex64> = [-1e5, -2e5].iter().map(|&x| num_complex::Complex64::new(x, 0.0)).collect();
    let p = state_feedback_gain(&a, &b, &poles, PlacementParams::default()).unwrap();
    assert_eq!(p.fixed_modes.len(), 2, "{:?}", p.fixed_modes);
    assert!(p.fixed_modes.iter().all(|z| (z.re - sigma).abs() < 1e-6 && (z.im.abs() - omega).abs() < 1e-6), "{:?}", p.fixed_modes);
    // From the gain (nalgebra's Schur): the closed loop has the requested poles and keeps the
    // fixed pair, each to 1e3 ε ‖A − B K‖_F absolute (the rounding of a backward-stable
    // eigenvalue computation on blocks this well conditioned; ‖A − B K‖ ≈ 4e11 here).
    let closed = &a - &b * &p.gain;
    let tol = 1e3 * f64::EPSILON * closed.norm();
    let mut got: Vec<num_complex::Complex64> = closed.clone().try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues().iter().copied().collect();
    let want = [poles[0], poles[1], num_complex::Complex64::new(sigma, omega), num_complex::Complex64::new(sigma, -omega)];
    for w in want {
        let k = (0..got.len()).min_by(|&i, &j| (got[i] - w).norm().total_cmp(&(got[j] - w).norm())).unwrap();
        assert!((got[k] - w).norm() <= tol, "{w} not in eig(A − BK) to {tol:.1e}: {got:?}");
        got.remove(k);
    }
    // The same mode shifted onto the axis (σ = 0) is refused, naming it.
    a[(2, 2)] = 0.0;
    a[(3, 3)] = 0.0;
    assert!(!controllability_report(&a, &b, AnalysisParams::default()).unwrap().stable_hidden_modes);
    match state_feedback_gain(&a, &b, &poles, PlacementParams::default()) {
        Err(polewright::place::PlacementError::UncontrollableUnstableMode { pole }) => assert!(pole.re.abs() < 1e-6 && (pole.im.abs() - omega).abs() < 1e-6, "{pole}"),
        other => panic!("expected the undamped mode to be refused by name, got {:?}", other.map(|p| p.gain)),
    }
}
