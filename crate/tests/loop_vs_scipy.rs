//! Whole-loop simulation checked against scipy (tests/oracle/make_loop_fixtures.py):
//! `scipy.signal.lsim` (interp=False) for continuous loops, `scipy.signal.dlsim` for linear
//! digital loops, and an independent plain Python loop for saturated, delayed and noisy ones.
//! The gains are injected from the fixture (computed there with scipy.signal.place_poles), so
//! this compares the simulation alone, independent of placement.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

mod common;

use common::{fixture, matrix};
use nalgebra::{DMatrix, DVector};
use polewright::controller::{AntiWindup, ObserverForm};
use polewright::loop_sim::{simulate_loop, LoopController, LoopResponse, LoopScenario, Noise, TrackingLaw};
use serde_json::Value;

fn opt_matrix(v: &Value) -> Option<DMatrix<f64>> {
    if v.is_null() {
        None
    } else {
        Some(matrix(v))
    }
}

/// A list of numbers; `null` or a missing field is an empty list (the fixture's "none"), but an
/// entry that is not a number fails (it must not become a NaN a maximum would then drop).
fn vec_of(v: &Value) -> Vec<f64> {
    v.as_array().map(|a| a.iter().map(|x| x.as_f64().unwrap_or_else(|| panic!("not a number in a series: {x}"))).collect()).unwrap_or_default()
}

fn series(v: &Value) -> Option<Vec<Vec<f64>>> {
    v.as_array().map(|rows| rows.iter().map(vec_of).collect())
}

struct Case {
    name: String,
    a: DMatrix<f64>,
    b: DMatrix<f64>,
    c: DMatrix<f64>,
    ctrl: LoopController,
    sc: LoopScenario,
    decimation: usize,
}

fn build(case: &Value) -> Case {
    let name = case["name"].as_str().unwrap_or("?").to_string();
    let a = matrix(&case["a"]);
    let b = matrix(&case["b"]);
    let c = matrix(&case["c"]);
    let g = &case["gains"];
    let k = opt_matrix(&g["k_x"]).unwrap_or_else(|| matrix(&g["k"]));
    // Every kind the fixture can hold is named; anything else fails instead of defaulting.
    let form = match case["observer_form"].as_str() {
        Some("current") => ObserverForm::Current,
        Some("predictor" | "continuous") | None => ObserverForm::Predictor,
        Some(other) => panic!("{name}: unknown observer form {other:?}"),
    };
    let anti_windup = match case["anti_windup"]["mode"].as_str() {
        Some("clamp") => AntiWindup::Clamp,
        Some("back_calculation") => AntiWindup::BackCalculation { time_constant: case["anti_windup"]["time_constant"].as_f64().unwrap() },
        Some("none") => AntiWindup::None,
        other => panic!("{name}: unknown anti-windup mode {other:?}"),
    };
    let tracking = match case["tracking"].as_str() {
        Some("feedforward") => TrackingLaw::Feedforward { nx: matrix(&g["nx"]), nu: matrix(&g["nu"]) },
        Some("integral") => TrackingLaw::Integral { ki: matrix(&g["k_i"]), anti_windup, feedforward: None },
        Some("none") => TrackingLaw::None,
        other => panic!("{name}: unknown tracking law {other:?}"),
    };
    // A digital kind without its sample time would run as a continuous loop.
    let digital = case["kind"].as_str().unwrap_or_else(|| panic!("{name}: no kind")).starts_with("digital");
    assert_eq!(digital, case["t_sample"].is_number(), "{name}: kind {} with t_sample {}", case["kind"], case["t_sample"]);
    let p = c.nrows();
    let tracked_outputs = if matches!(tracking, TrackingLaw::None) { vec![] } else { (0..p).collect() };
    let ctrl = LoopController {
        k,
        k_delay: opt_matrix(&g["k_u"]),
        observer: opt_matrix(&g["l"]),
        observer_form: form,
        current_gain: opt_matrix(&g["l_current"]),
        tracking,
        tracked_outputs,
        sample_time: case["t_sample"].as_f64(),
    };
    let steps = case["steps"].as_u64().unwrap() as f64;
    let duration = case["duration"].as_f64().unwrap();
    let limits: Vec<Option<f64>> = case["limits"].as_array().map(|l| l.iter().map(|x| x.as_f64()).collect()).unwrap_or_default();
    let noise = match series(&case["noise"]) {
        Some(s) => Noise::Given(s),
        None => Noise::None,
    };
    let sc = LoopScenario {
        x0: DVector::from_vec(vec_of(&case["x0"])),
        xhat0: case["xhat0"].as_array().map(|_| DVector::from_vec(vec_of(&case["xhat0"]))),
        duration,
        reference: vec_of(&case["reference"]),
        reference_time: case["reference_time"].as_f64().unwrap_or(0.0),
        disturbance: vec_of(&case["disturbance"]),
        disturbance_time: case["disturbance_time"].as_f64().unwrap_or(0.0),
        disturbance_input: None,
        noise,
        limits,
        continuous_step: Some(duration / steps),
    };
    let decimation = case["decimation"].as_u64().unwrap_or(1) as usize;
    Case { name, a, b, c, ctrl, sc, decimation }
}

/// Largest |ours − reference| over a series, relative to the reference's largest magnitude.
fn compare(ours: &[Vec<f64>], reference: &[Vec<f64>], decimation: usize) -> f64 {
    let scale = reference.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs())).max(1e-300);
    let mut worst: f64 = 0.0;
    assert_eq!(ours.len(), reference.len(), "component count");
    for (o, r) in ours.iter().zip(reference) {
        let decimated: Vec<f64> = o.iter().step_by(decimation).cloned().collect();
        assert_eq!(decimated.len(), r.len(), "sample count");
        for (x, y) in decimated.iter().zip(r) {
            let d = (x - y).abs() / scale;
            // A NaN on our side must fail (f64::max would drop it).
            if d.is_nan() {
                return f64::INFINITY;
            }
            worst = worst.max(d);
        }
    }
    worst
}

fn run(case: &Case) -> LoopResponse {
    let d = DMatrix::zeros(case.c.nrows(), case.b.ncols());
    simulate_loop(&case.a, &case.b, &case.c, &d, &case.ctrl, &case.sc).unwrap_or_else(|e| panic!("{}: {e}", case.name))
}

#[test]
fn every_loop_matches_the_scipy_reference() {
    let f = fixture("loop.json");
    let cases = f["cases"].as_array().expect("cases");
    assert_eq!(cases.len(), 19, "loop fixtures in tests/fixtures/loop.json");
    let mut worst_overall = (0.0f64, String::new());
    let mut report = Vec::new();
    for case in cases {
        let built = build(case);
        let r = run(&built);
        let s = &case["series"];
        let digital = built.ctrl.sample_time.is_some();
        let y_ours = if matches!(built.sc.noise, Noise::Given(_)) { &r.measured } else { &r.outputs };
        let mut pairs: Vec<(&str, f64)> = vec![("y", compare(y_ours, &series(&s["y"]).unwrap(), built.decimation)), ("x", compare(&r.states, &series(&s["x"]).unwrap(), built.decimation))];
        // Required wherever the loop has what the series describes: an observer's estimate, an
        // integrator's state (a missing series fails instead of being skipped).
        let name = case["name"].as_str().unwrap_or("?");
        if built.ctrl.observer.is_some() {
            let xh = series(&s["xhat"]).unwrap_or_else(|| panic!("{name}: an observer but no xhat series"));
            pairs.push(("xhat", compare(&r.estimates, &xh, built.decimation)));
        }
        if digital {
            pairs.push(("u_applied", compare(&r.inputs, &series(&s["u_applied"]).unwrap(), built.decimation)));
            pairs.push(("u_cmd", compare(&r.commanded, &series(&s["u_cmd"]).unwrap(), built.decimation)));
        } else {
            pairs.push(("u", compare(&r.inputs, &series(&s["u"]).unwrap(), built.decimation)));
        }
        if matches!(built.ctrl.tracking, TrackingLaw::Integral { .. }) {
            let z = series(&s["z"]).unwrap_or_else(|| panic!("{name}: integral action but no z series"));
            pairs.push(("z", compare(&r.integrator, &z, built.decimation)));
        }
        // Continuous: both sides use exact exponentials of the same stacked system, differing only
        // in rounding (and scipy's expm vs ours); digital: pure recurrences from the same Φ, Γ up
        // to rounding (ours from our own ZOH). Rounding accumulates over the ~1,000 steps, about
        // steps · ε · (growth of the stacked system) — measured worst 4.2e-12 of the signal's
        // scale (the n = 6 integral loop's input); 1e-10 leaves a factor 20 for other platforms'
        // rounding and would catch any error in a gain, a matrix or a switching instant.
        let tol = 1e-10;
        for (what, err) in &pairs {
            if *err > worst_overall.0 {
                worst_overall = (*err, format!("{} {what}", built.name));
            }
            assert!(*err <= tol, "{}: {what} differs from scipy by {err:.3e} (relative to its scale) > {tol:e}", built.name);
        }
        report.push(format!("{}: {}", built.name, pairs.iter().map(|(w, e)| format!("{w} {e:.1e}")).collect::<Vec<_>>().join(", ")));
    }
    println!("{}\nworst mismatch: {:.3e} ({})", report.join("\n"), worst_overall.0, worst_overall.1);
}

#[test]
fn anti_windup_reduces_overshoot_after_saturation() {
    // Common practice: without anti-windup a saturating integrator overshoots more.
    let f = fixture("loop.json");
    let cases = f["cases"].as_array().unwrap();
    let overshoot_of = |mode: &str| -> f64 {
        let case = cases.iter().find(|c| c["kind"] == "digital-saturated" && c["anti_windup"]["mode"] == mode).expect("saturated case");
        let built = build(case);
        let r = run(&built);
        assert!(r.inputs[0].iter().zip(&r.commanded[0]).any(|(u, c)| u != c), "the case must saturate");
        // Overshoot computed here from the output series (not by the program's metrics): the
        // largest excess over the reference after the step, relative to the step.
        let (t0, target) = (built.sc.reference_time, built.sc.reference[0]);
        let peak = r.time.iter().zip(&r.outputs[0]).filter(|(t, _)| **t >= t0).map(|(_, y)| (y - target) / target.abs()).fold(f64::NEG_INFINITY, f64::max);
        assert!(peak.is_finite() && target != 0.0, "{}: no output after the step", built.name);
        peak.max(0.0)
    };
    let none = overshoot_of("none");
    let clamp = overshoot_of("clamp");
    let back = overshoot_of("back_calculation");
    assert!(none > 2.0 * clamp && none > 2.0 * back, "overshoot none {none}, clamp {clamp}, back-calculation {back}");
}

#[test]
fn integral_action_rejects_a_constant_load_where_feedforward_does_not() {
    // Common practice (internal-model principle): with a constant input disturbance, integral
    // action drives the tracking error to zero; feedforward alone leaves an offset.
    let f = fixture("loop.json");
    let cases = f["cases"].as_array().unwrap();
    for (ff, int) in
        [("plant-n3-m1-continuous-observer-feedforward", "plant-n3-m1-continuous-observer-integral"), ("plant-n4-m2-continuous-observer-feedforward", "plant-n4-m2-continuous-observer-integral")]
    {
        let get = |name: &str| build(cases.iter().find(|c| c["name"] == name).unwrap_or_else(|| panic!("{name}")));
        let (cf, ci) = (get(ff), get(int));
        let (rf, ri) = (run(&cf), run(&ci));
        for j in 0..cf.c.nrows() {
            let ef = (cf.sc.reference[j] - rf.outputs[j].last().unwrap()).abs();
            let ei = (ci.sc.reference[j] - ri.outputs[j].last().unwrap()).abs();
            assert!(ei < 1e-6 && ef > 1e-3, "{ff}/{int} output {j}: feedforward error {ef}, integral error {ei}");
        }
    }
}
