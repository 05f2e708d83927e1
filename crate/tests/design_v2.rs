//! Design files version 2 through the public design run: observer, tracking, integral action,
//! digital implementation. Outside references are named beside each check.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

mod common;

use polewright::design::{run_text, DesignError, DesignResult};

/// Recomputation on the test's side, with nalgebra only (nothing from Polewright): eigenvalues
/// by nalgebra's Schur decomposition, the zero-order hold by nalgebra's matrix exponential of
/// `[[A, B], [0, 0]] T` (Van Loan, "Computing integrals involving the matrix exponential",
/// IEEE TAC 23(3), 1978, from memory), so that no check below reads a pole the program reports.
mod recompute {
    use nalgebra::DMatrix;
    use num_complex::Complex64;

    pub fn mat(rows: &[Vec<f64>]) -> DMatrix<f64> {
        DMatrix::from_fn(rows.len(), rows.first().map_or(0, |r| r.len()), |i, j| rows[i][j])
    }

    pub fn eig(m: &DMatrix<f64>) -> Vec<Complex64> {
        m.clone().try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues().iter().copied().collect()
    }

    /// `(Φ, Γ)` of the zero-order hold at `t`.
    pub fn zoh(a: &DMatrix<f64>, b: &DMatrix<f64>, t: f64) -> (DMatrix<f64>, DMatrix<f64>) {
        let (n, m) = (a.nrows(), b.ncols());
        let mut big = DMatrix::<f64>::zeros(n + m, n + m);
        big.view_mut((0, 0), (n, n)).copy_from(&(a * t));
        big.view_mut((0, n), (n, m)).copy_from(&(b * t));
        let e = big.exp();
        (e.view((0, 0), (n, n)).into_owned(), e.view((0, n), (n, m)).into_owned())
    }

    /// Largest `|λ − w| / max(1, |w|)` over the one-to-one matching of the fixtures' rule
    /// ([`crate::common::assignment`]).
    pub fn error(want: &[Complex64], got: &[Complex64]) -> f64 {
        assert_eq!(want.len(), got.len(), "pole counts: want {want:?}, got {got:?}");
        let cost = DMatrix::from_fn(want.len(), got.len(), |i, j| (want[i] - got[j]).norm() / want[i].norm().max(1.0));
        let pick = crate::common::assignment(&cost);
        (0..want.len()).map(|i| cost[(i, pick[i])]).fold(0.0, f64::max)
    }

    pub fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    /// The loop with a one-sample computation delay, `[x; u_prev]⁺ = [[Φ, Γ], [−K, −K_u]] [x; u_prev]`.
    pub fn delay_loop(phi: &DMatrix<f64>, gamma: &DMatrix<f64>, k: &DMatrix<f64>, ku: &DMatrix<f64>) -> DMatrix<f64> {
        let (n, m) = (phi.nrows(), gamma.ncols());
        let mut out = DMatrix::<f64>::zeros(n + m, n + m);
        out.view_mut((0, 0), (n, n)).copy_from(phi);
        out.view_mut((0, n), (n, m)).copy_from(gamma);
        out.view_mut((n, 0), (m, n)).copy_from(&(-k));
        out.view_mut((n, n), (m, m)).copy_from(&(-ku));
        out
    }
}

fn design(body: &str) -> Result<DesignResult, DesignError> {
    run_text(&format!(r#"{{"format": "polewright.design", "version": 2, {body}}}"#))
}

const TEXTBOOK_OBSERVER_PLANT: &str = r#""plant": {"a": [[0, 1], [20.6, 0]], "b": [[0], [1]], "c": [[1, 0]]}"#;

#[test]
fn textbook_observer_example() {
    // Ogata, Modern Control Engineering, state-observer example (from memory; checkable by hand):
    // controller poles −1.8 ± 2.4j ⇒ K = [29.6, 3.6] from s² + 3.6 s + 9 = s² + k₂ s + (k₁ − 20.6);
    // observer poles −8, −8 ⇒ L = [16, 84.6]ᵀ. First split to −8 ± 1e-4 (eigenstructure
    // assignment; L moves by 1e-8), then exactly repeated (a Jordan block).
    let r = design(&format!(r#"{TEXTBOOK_OBSERVER_PLANT}, "feedback": {{"poles": ["-1.8±2.4j"]}}, "observer": {{"poles": [-7.9999, -8.0001]}}"#)).unwrap();
    let k = &r.feedback.gain[0];
    assert!((k[0] - 29.6).abs() < 1e-10 && (k[1] - 3.6).abs() < 1e-10, "{k:?}");
    let o = r.observer.as_ref().expect("observer");
    assert!((o.gain[0][0] - 16.0).abs() < 1e-7 && (o.gain[1][0] - 84.6).abs() < 1e-6, "{:?}", o.gain);
    assert_eq!(o.form, polewright::design::ObserverRunForm::Continuous);
    // Separation principle: the loop with observer, [[A, −BK], [LC, A − BK − LC]], built here
    // from the reported gains, has the union of both pole sets (recomputed eigenvalues). The
    // observer pair 2e-4 apart is ill conditioned (eigenvalue condition about ‖·‖/2e-4), so its
    // computed eigenvalues move by about ε ‖·‖² / 2e-4 ≈ 1e-9; 1e-6 covers L's own rounding
    // (the split pair's L is determined to about 1e-8, see above).
    let (a, b, cm) = (recompute::mat(&[vec![0.0, 1.0], vec![20.6, 0.0]]), recompute::mat(&[vec![0.0], vec![1.0]]), recompute::mat(&[vec![1.0, 0.0]]));
    let loop_with_observer = |k: &[Vec<f64>], l: &[Vec<f64>]| {
        let (k, l) = (recompute::mat(k), recompute::mat(l));
        let mut m = nalgebra::DMatrix::<f64>::zeros(4, 4);
        m.view_mut((0, 0), (2, 2)).copy_from(&a);
        m.view_mut((0, 2), (2, 2)).copy_from(&(-&b * &k));
        m.view_mut((2, 0), (2, 2)).copy_from(&(&l * &cm));
        m.view_mut((2, 2), (2, 2)).copy_from(&(&a - &b * &k - &l * &cm));
        recompute::eig(&m)
    };
    let want = [recompute::c(-1.8, 2.4), recompute::c(-1.8, -2.4), recompute::c(-7.9999, 0.0), recompute::c(-8.0001, 0.0)];
    let err = recompute::error(&want, &loop_with_observer(&r.feedback.gain, &o.gain));
    assert!(err < 1e-6, "separation: eig of the loop with observer misses the union by {err:.1e}");
    let sep = r.closed_loop.as_ref().and_then(|l| l.separation_error).expect("separation check");
    assert!(sep < 1e-6, "reported separation error {sep}");
    // Exactly repeated observer poles (one output): a Jordan block placed by the orthogonal
    // deflation, giving the textbook L = [16, 84.6]ᵀ itself, with the repeated-poles caution.
    let r = design(&format!(r#"{TEXTBOOK_OBSERVER_PLANT}, "feedback": {{"poles": ["-1.8±2.4j"]}}, "observer": {{"poles": [-8, -8]}}"#)).unwrap();
    let o = r.observer.as_ref().expect("observer");
    assert!((o.gain[0][0] - 16.0).abs() < 1e-12 && (o.gain[1][0] - 84.6).abs() < 1e-12, "{:?}", o.gain);
    assert!(r.warnings.iter().any(|w| w.code == "repeated-poles" && w.message.contains("observer")), "{:?}", r.warnings);
    // The Jordan pair splits by about √(ε ‖·‖) ≈ 1e-7 when computed; the mean of the two (the
    // trace of the block) is perfectly conditioned.
    let got = loop_with_observer(&r.feedback.gain, &o.gain);
    let mut observer_pair: Vec<_> = got.iter().filter(|z| (z.re + 8.0).abs() < 1e-3).copied().collect();
    assert_eq!(observer_pair.len(), 2, "{got:?}");
    let mean = (observer_pair.pop().unwrap() + observer_pair.pop().unwrap()) / 2.0;
    assert!((mean - recompute::c(-8.0, 0.0)).norm() < 1e-9, "observer cluster mean {mean}");
    assert!(recompute::error(&want[..2], &got.iter().filter(|z| (z.re + 8.0).abs() >= 1e-3).copied().collect::<Vec<_>>()) < 1e-12, "{got:?}");
    let sep = r.closed_loop.as_ref().and_then(|l| l.separation_error).expect("separation check");
    assert!(sep < 1e-9, "reported separation error of the cluster means {sep}");
}

#[test]
fn tracking_errors_say_why() {
    // Tracking the velocity of a double integrator: [A B; C D] is singular (zero at s = 0).
    let plant = r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[0, 1]]}"#;
    match design(&format!(r#"{plant}, "feedback": {{"poles": [-1, -2]}}, "tracking": {{"mode": "feedforward"}}"#)) {
        Err(DesignError::Infeasible { message }) => {
            assert!(message.contains("zero at s = 0"), "{message}")
        }
        other => panic!("{other:?}"),
    }
    match design(&format!(r#"{plant}, "feedback": {{"poles": [-1, -2, -3]}}, "tracking": {{"mode": "integral"}}"#)) {
        Err(DesignError::Infeasible { message }) => assert!(message.contains("not controllable") && message.contains("zero at s = 0"), "{message}"),
        other => panic!("{other:?}"),
    }
    // Wrong pole count for integral action names the integrators.
    let plant = r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]]}"#;
    match design(&format!(r#"{plant}, "feedback": {{"poles": [-1, -2]}}, "tracking": {{"mode": "integral"}}"#)) {
        Err(DesignError::Input(e)) => assert!(e.field.dotted() == "feedback.poles" && e.message.contains("integrators"), "{e}"),
        other => panic!("{other:?}"),
    }
    // Noise needs a digital controller.
    match design(&format!(r#"{plant}, "feedback": {{"poles": [-1, -2]}}, "observer": {{"speed_factor": 3}}, "simulation": {{"noise_std": [0.01]}}"#)) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "simulation.noise_std"),
        other => panic!("{other:?}"),
    }
    // Version-2 keys in a version-1 file.
    let v1 = r#"{"format": "polewright.design", "version": 1, "plant": {"a": [[0]], "b": [[1]], "c": [[1]]}, "feedback": {"poles": [-1]}, "observer": {"speed_factor": 3}}"#;
    match run_text(v1) {
        Err(DesignError::Input(e)) => assert!(e.field.dotted() == "observer" && e.message.contains("version"), "{e}"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn integral_action_removes_the_offset_of_a_load() {
    // Common practice (internal-model principle): with a constant load at the input, integral
    // action ends with zero error, feedforward does not. Double integrator y = x1.
    let plant = r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]]}"#;
    let sim = r#""simulation": {"reference": [1], "disturbance": [0.5], "disturbance_time": 5, "duration": 20}"#;
    let ff = design(&format!(r#"{plant}, "feedback": {{"poles": [-2, -3]}}, "tracking": {{"mode": "feedforward"}}, {sim}"#)).unwrap();
    let int = design(&format!(r#"{plant}, "feedback": {{"poles": [-2, -3, -1.5]}}, "tracking": {{"mode": "integral"}}, {sim}"#)).unwrap();
    let e_ff = ff.closed_loop.as_ref().unwrap().tracked[0].steady_state_error;
    let e_int = int.closed_loop.as_ref().unwrap().tracked[0].steady_state_error;
    // Feedforward: the load 0.5 against the position gain k1 = 6 leaves an offset of 0.5/6 (by hand).
    assert!((e_ff.abs() - 0.5 / 6.0).abs() < 1e-6, "feedforward error {e_ff}");
    assert!(e_int.abs() < 1e-6, "integral error {e_int}");
}

#[test]
fn digital_design_maps_poles_and_tracks_the_continuous_response() {
    // z = e^{sT} for the controller poles; with T small against the closed-loop time constants the
    // sampled loop reproduces the continuous one (common practice; a few percent at 40 samples per
    // fastest time constant).
    let plant = r#""plant": {"a": [[0, 1], [0, -0.5]], "b": [[0], [2]], "c": [[1, 0]]}"#;
    let poles = r#""feedback": {"poles": ["-3±2j"]}"#;
    let sim = r#""simulation": {"initial_state": [1, 0], "duration": 4}"#;
    let cont = design(&format!("{plant}, {poles}, {sim}")).unwrap();
    let t = 0.01;
    let dig = design(&format!(r#"{plant}, {poles}, "implementation": {{"sample_time": {t}}}, {sim}"#)).unwrap();
    assert_eq!(dig.domain, polewright::analysis::Domain::Discrete);
    assert_eq!(serde_json::to_value(dig.domain).unwrap(), "discrete", "serialised by name");
    // eig(Φ − Γ K) from the reported gain and a zero-order hold computed here: z = e^{sT}.
    let (phi, gamma) = recompute::zoh(&recompute::mat(&[vec![0.0, 1.0], vec![0.0, -0.5]]), &recompute::mat(&[vec![0.0], vec![2.0]]), t);
    let got = recompute::eig(&(&phi - &gamma * recompute::mat(&dig.feedback.gain)));
    let want: Vec<_> = [recompute::c(-3.0, 2.0), recompute::c(-3.0, -2.0)].iter().map(|s| (s * t).exp()).collect();
    assert!(recompute::error(&want, &got) < 1e-12, "{got:?} vs {want:?}");
    assert!(got.iter().all(|z| z.norm() < 1.0));
    // Compare x1 at the digital sample times with the continuous response (interpolated on its grid).
    let (tc, xc) = (&cont.simulation.time, &cont.simulation.states[0]);
    let (td, xd) = (&dig.simulation.time, &dig.simulation.states[0]);
    let mut worst: f64 = 0.0;
    for (ti, xi) in td.iter().zip(xd) {
        let k = tc.partition_point(|v| v < ti).min(tc.len() - 1);
        let k0 = k.saturating_sub(1);
        let w = if tc[k] > tc[k0] { (ti - tc[k0]) / (tc[k] - tc[k0]) } else { 0.0 };
        let xcont = xc[k0] + w * (xc[k] - xc[k0]);
        worst = worst.max((xi - xcont).abs());
    }
    assert!(worst < 0.03, "digital vs continuous: {worst}");
    assert!(dig.sample_rate.as_ref().is_some_and(|s| matches!(s.verdict, polewright::controller::SampleRateVerdict::Fast | polewright::controller::SampleRateVerdict::Adequate)));
}

#[test]
fn computation_delay_and_current_observer() {
    let plant = r#""plant": {"a": [[0, 1], [-4, -0.4]], "b": [[0], [4]], "c": [[1, 0]]}"#;
    let r = design(&format!(
        r#"{plant}, "feedback": {{"poles": ["-4±3j"]}}, "implementation": {{"sample_time": 0.02, "computation_delay": true, "delay_poles": [0.1]}}, "observer": {{"speed_factor": 3, "form": "current"}}, "tracking": {{"mode": "feedforward"}}, "simulation": {{"reference": [1], "duration": 6}}"#
    ))
    .unwrap();
    // The loop with a one-sample computation delay, built here from the reported K and K_u:
    // [x; u_prev]⁺ = [[Φ, Γ], [−K, −K_u]] [x; u_prev]. Its poles: e^{sT} for the two requested
    // and the delay pole 0.1.
    let t = 0.02;
    let (phi, gamma) = recompute::zoh(&recompute::mat(&[vec![0.0, 1.0], vec![-4.0, -0.4]]), &recompute::mat(&[vec![0.0], vec![4.0]]), t);
    let (k, ku) = (recompute::mat(&r.feedback.gain), recompute::mat(r.feedback.delay_gain.as_ref().expect("delay gain")));
    let m = recompute::delay_loop(&phi, &gamma, &k, &ku);
    let want = [(recompute::c(-4.0, 3.0) * t).exp(), (recompute::c(-4.0, -3.0) * t).exp(), recompute::c(0.1, 0.0)];
    let err = recompute::error(&want, &recompute::eig(&m));
    assert!(err < 1e-12, "delay loop poles miss by {err:.1e}");
    assert_eq!(r.feedback.achieved_poles.len(), 3, "two plant poles and one delay pole reported");
    let o = r.observer.as_ref().unwrap();
    assert_eq!(o.form, polewright::design::ObserverRunForm::Current);
    // The current-form observer, x̂[k|k] = x̂[k|k−1] + L_c (y − C x̂[k|k−1]), has the estimation
    // error e⁺ = Φ (I − L_c C) e (by hand): its poles, from the reported L_c and Φ computed here,
    // are the observer's. Three times faster than the controller's −4 ± 3j (the speed factor)
    // means e^{3 s T} for those, and the reported predictor gain is Φ L_c.
    let lc = recompute::mat(o.current_gain.as_ref().expect("current gain"));
    let c = recompute::mat(&[vec![1.0, 0.0]]);
    let error_dynamics = &phi * (nalgebra::DMatrix::<f64>::identity(2, 2) - &lc * &c);
    let observed = recompute::eig(&error_dynamics);
    assert!(observed.iter().all(|z| z.norm() < 1.0), "{observed:?}");
    let want: Vec<_> = [recompute::c(-4.0, 3.0), recompute::c(-4.0, -3.0)].iter().map(|s| (s * 3.0 * t).exp()).collect();
    let err = recompute::error(&want, &observed);
    assert!(err < 1e-9, "current observer poles {observed:?} vs {want:?} ({err:.1e})");
    assert!((&phi * &lc - recompute::mat(&o.gain)).norm() <= 1e-12 * (&phi * &lc).norm(), "L = Φ L_c");
    let l = r.closed_loop.as_ref().unwrap();
    assert!(!l.diverged);
    assert!(l.tracked[0].steady_state_error.abs() < 1e-6, "{:?}", l.tracked[0]);
}

#[test]
fn saturated_digital_integral_loop_with_clamp() {
    let plant = r#""plant": {"a": [[0, 1], [0, -1]], "b": [[0], [1]], "c": [[1, 0]]}"#;
    let body = |aw: &str| {
        format!(
            r#"{plant}, "feedback": {{"poles": ["-4±3j", -3]}}, "implementation": {{"sample_time": 0.01}}, "tracking": {{"mode": "integral"}}, "anti_windup": {aw}, "actuators": {{"limit": [1.5]}}, "simulation": {{"reference": [2], "duration": 25}}"#
        )
    };
    let none = design(&body(r#"{"mode": "none"}"#)).unwrap();
    let clamp = design(&body(r#"{"mode": "clamp"}"#)).unwrap();
    let back = design(&body(r#"{"mode": "back_calculation", "time_constant": 0.3}"#)).unwrap();
    let os = |r: &DesignResult| r.closed_loop.as_ref().unwrap().tracked[0].overshoot;
    let sat = |r: &DesignResult| r.closed_loop.as_ref().unwrap().input_metrics[0].time_saturated;
    assert!(sat(&none) > 0.0, "the step must saturate the input");
    // Common practice: anti-windup reduces the overshoot after saturation.
    assert!(os(&none) > os(&clamp) && os(&none) > os(&back), "overshoot none {} clamp {} back {}", os(&none), os(&clamp), os(&back));
    // Without anti-windup this loop winds up into a saturated oscillation; with it, it settles.
    for r in [&clamp, &back] {
        let l = r.closed_loop.as_ref().unwrap();
        assert!(l.tracked[0].steady_state_error.abs() < 1e-3, "{:?} {:?}", l.tracked[0], l.input_metrics[0]);
    }
}

#[test]
fn fastest_design_within_the_actuator_limits() {
    // x'' = u from x = (1, 0) with poles α(−1 ± j): K = [2α², 2α] and the peak |u| = 2α² at t = 0
    // (by hand), so the limit 8 allows α = 2; the design then uses the poles −2 ± 2j.
    let r = design(
        r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}, "feedback": {"poles": ["-1±1j"]}, "actuators": {"limit": [8]},
           "search": {"fastest_within_limits": true, "situations": [{"initial_state": [1, 0]}, {"initial_state": [0, 0.5]}]}"#,
    )
    .unwrap();
    let s = r.search.as_ref().expect("search result");
    assert!((s.speed_factor - 2.0).abs() < 4e-3, "{}", s.speed_factor);
    assert_eq!(s.limiting_situation, 1);
    let k = &r.feedback.gain[0];
    assert!((k[0] - 2.0 * s.speed_factor.powi(2)).abs() < 1e-9 && (k[1] - 2.0 * s.speed_factor).abs() < 1e-9, "{k:?}");
    // The peak from (1, 0) is |u(0)| = k₁ = 2α² (by hand): within the limit, and the reported
    // ratio is that figure.
    assert!(k[0] <= 8.0 * (1.0 + 1e-9), "{k:?}");
    assert!(s.monotonic && (s.peak_ratio - k[0] / 8.0).abs() < 1e-9, "reported {} vs {}", s.peak_ratio, k[0] / 8.0);
    // Errors: no limits; a digital design.
    match design(r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}, "feedback": {"poles": ["-1±1j"]}, "search": {"fastest_within_limits": true, "situations": [{"initial_state": [1, 0]}]}"#) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "search"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn poles_from_a_pattern_or_a_specification() {
    // A Bessel pattern scaled to a 2 s settling time (±2 %) for a 3-state plant: the poles are the
    // reverse-Bessel roots (θ₃ = s³ + 6 s² + 15 s + 15, from its definition) times one common factor.
    let plant = r#""plant": {"a": [[0, 1, 0], [0, 0, 1], [-1, -5, -6]], "b": [[0], [0], [1]]}"#;
    let r = design(&format!(r#"{plant}, "feedback": {{"pattern": {{"family": "bessel", "settling_time": 2.0}}}}"#)).unwrap();
    let pc = r.pole_choice.as_ref().expect("pole choice");
    assert_eq!(pc.method, polewright::design::PoleChoiceMethod::Bessel);
    assert_eq!(pc.suggested_poles.len(), 3);
    // Product of the poles = −(constant term) × k³ and sum = −6 k for θ₃ scaled by k: their ratio
    // fixes k, and both must agree.
    let poles: Vec<num_complex::Complex64> = pc.suggested_poles.iter().map(|p| num_complex::Complex64::new(p[0], p[1])).collect();
    let sum: num_complex::Complex64 = poles.iter().sum();
    let prod: num_complex::Complex64 = poles.iter().product();
    let k = -sum.re / 6.0;
    assert!((prod.re + 15.0 * k.powi(3)).abs() < 1e-9 * 15.0 * k.powi(3), "sum {sum}, product {prod}");
    // Placed: eig(A − B K) from the reported gain, against the suggested poles.
    let a3 = recompute::mat(&[vec![0.0, 1.0, 0.0], vec![0.0, 0.0, 1.0], vec![-1.0, -5.0, -6.0]]);
    let b3 = recompute::mat(&[vec![0.0], vec![0.0], vec![1.0]]);
    let err = recompute::error(&poles, &recompute::eig(&(&a3 - &b3 * recompute::mat(&r.feedback.gain))));
    assert!(err < 1e-10, "{err}");
    // A specification: 5 % overshoot, 1.5 s settling. Common practice: 5 % ↔ ζ ≈ 0.690.
    let r = design(&format!(r#"{plant}, "feedback": {{"spec": {{"overshoot": 0.05, "settling_time": 1.5}}}}"#)).unwrap();
    let region = r.pole_choice.as_ref().and_then(|c| c.region.as_ref()).expect("region");
    // The second-order relation (common practice): overshoot e^{−πζ/√(1 − ζ²)}, so
    // ζ = −ln(0.05) / √(π² + ln²(0.05)) = 0.690107 — to rounding.
    let zeta = -(0.05f64.ln()) / (std::f64::consts::PI.powi(2) + 0.05f64.ln().powi(2)).sqrt();
    assert!((region.min_damping - zeta).abs() < 1e-12, "{} vs {zeta}", region.min_damping);
    assert!(!r.warnings.iter().any(|w| w.code == "pole-outside-region"), "{:?}", r.warnings);
    // Errors name the field.
    match design(&format!(r#"{plant}, "feedback": {{"pattern": {{"family": "bessel"}}}}"#)) {
        // The missing scale is named precisely (was the whole pattern before version 3).
        Err(DesignError::Input(e)) => {
            assert_eq!(e.field.dotted(), "feedback.pattern.settling_time")
        }
        other => panic!("{other:?}"),
    }
    match design(&format!(r#"{plant}, "feedback": {{"poles": [-1, -2, -3], "spec": {{"overshoot": 0.05, "settling_time": 1}}}}"#)) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "feedback"),
        other => panic!("{other:?}"),
    }
    // A pattern gives s-plane poles: asking for z-plane targets with one is refused, not
    // silently read as z-plane poles.
    let digital = r#""implementation": {"sample_time": 0.01}"#;
    match design(&format!(r#"{plant}, {digital}, "feedback": {{"plane": "z", "pattern": {{"family": "bessel", "settling_time": 2.0}}}}"#)) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "feedback.plane"),
        other => panic!("{other:?}"),
    }
    let ok = design(&format!(r#"{plant}, {digital}, "feedback": {{"pattern": {{"family": "bessel", "settling_time": 2.0}}}}"#)).unwrap();
    assert_eq!(ok.domain, polewright::analysis::Domain::Discrete);
}

#[test]
fn lqr_as_a_way_of_choosing_poles() {
    // Double integrator, Q = I, R = 1: X = [[√3, 1], [1, √3]], K = [1, √3] (a standard worked
    // example; from memory, checkable by substituting X into the Riccati equation).
    let plant = r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}"#;
    let r = design(&format!(r#"{plant}, "feedback": {{"lqr": {{"q": [[1, 0], [0, 1]], "r": [[1]]}}}}"#)).unwrap();
    let l = r.lqr.as_ref().expect("lqr section");
    let s3 = 3f64.sqrt();
    assert!((l.riccati_solution[0][0] - s3).abs() < 1e-12 && (l.riccati_solution[0][1] - 1.0).abs() < 1e-12 && (l.riccati_solution[1][1] - s3).abs() < 1e-12, "{:?}", l.riccati_solution);
    // The residual of the reported X, computed here: AᵀX + XA − X B R⁻¹ Bᵀ X + Q (R = 1).
    let (a2, b2, x) = (recompute::mat(&[vec![0.0, 1.0], vec![0.0, 0.0]]), recompute::mat(&[vec![0.0], vec![1.0]]), recompute::mat(&l.riccati_solution));
    let residual = (a2.transpose() * &x + &x * &a2 - &x * &b2 * b2.transpose() * &x + nalgebra::DMatrix::<f64>::identity(2, 2)).norm();
    assert!(residual < 1e-13 * x.norm(), "{residual}");
    // Single input: the placed gain is the LQR gain.
    let k = &r.feedback.gain[0];
    assert!((k[0] - 1.0).abs() < 1e-10 && (k[1] - s3).abs() < 1e-10, "{k:?}");
    // Bryson's rule: the weights are inverse squares of the acceptable excursions.
    let r = design(&format!(r#"{plant}, "feedback": {{"lqr": {{"bryson": {{"max_state": [0.5, 2], "max_input": [4]}}}}}}"#)).unwrap();
    let l = r.lqr.as_ref().unwrap();
    assert!((l.q[0][0] - 4.0).abs() < 1e-15 && (l.q[1][1] - 0.25).abs() < 1e-15 && (l.r[0][0] - 1.0 / 16.0).abs() < 1e-15);
    // Wrong sizes name the field.
    match design(&format!(r#"{plant}, "feedback": {{"lqr": {{"q": [[1]], "r": [[1]]}}}}"#)) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "feedback.lqr.q"),
        other => panic!("{other:?}"),
    }
    // Digital LQR with integral action runs on the augmented discrete pair.
    let r = design(
        r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]]}, "feedback": {"lqr": {"bryson": {"max_state": [0.1, 1, 0.05], "max_input": [5]}}},
           "implementation": {"sample_time": 0.01}, "tracking": {"mode": "integral"}"#,
    )
    .unwrap();
    assert!(r.lqr.as_ref().unwrap().closed_loop_poles.iter().all(|z| (z[0] * z[0] + z[1] * z[1]).sqrt() < 1.0));
    let l = r.closed_loop.as_ref().unwrap();
    // Integral action: the output settles into the 2 % band and keeps closing in on the reference.
    assert!(l.tracked[0].settling_time.is_some() && l.tracked[0].steady_state_error.abs() < 0.02, "{:?}, duration {}", l.tracked[0], l.duration);
}

#[test]
fn delay_poles_at_the_origin_are_not_reported_as_misplaced() {
    // A digital belt axis (illustrative) with a computation delay: the delay state's pole is
    // requested at z = 0 (the default), where a relative error is meaningless. Eigenvalues are
    // only determined to about κ · ε · ‖A‖ (Bauer–Fike; Golub & Van Loan, Matrix Computations,
    // 4th ed., 2013, §7.2; from memory), so the achieved pole is within rounding of 0 and the
    // design must say the placement is accurate.
    let plant = r#""plant": {"a": [[0, 1, 0, 0], [-375, -2.291666666666667, 375, 0.625], [0, 0, 0, 1], [1500, 2.5, -1500, -2.5]],
                  "b": [[0], [0.4166666666666667], [0], [0]]},
        "implementation": {"sample_time": 0.001, "computation_delay": true},
        "actuators": {"limit": [60]}"#;
    let r = design(&format!(r#"{plant}, "feedback": {{"poles": ["-12±9j", "-20±30j"]}}"#)).unwrap();
    // Recomputed: [x; u_prev]⁺ = [[Φ, Γ], [−K, −K_u]] [x; u_prev] from the reported gains and a
    // zero-order hold computed here has e^{sT} for the four requested poles and the delay pole
    // at 0 (absolute, to 1e-9: within rounding of the origin, as above).
    let t = 0.001;
    let a4 = recompute::mat(&[vec![0.0, 1.0, 0.0, 0.0], vec![-375.0, -2.291666666666667, 375.0, 0.625], vec![0.0, 0.0, 0.0, 1.0], vec![1500.0, 2.5, -1500.0, -2.5]]);
    let b4 = recompute::mat(&[vec![0.0], vec![0.4166666666666667], vec![0.0], vec![0.0]]);
    let (phi, gamma) = recompute::zoh(&a4, &b4, t);
    let (k, ku) = (recompute::mat(&r.feedback.gain), recompute::mat(r.feedback.delay_gain.as_ref().expect("delay gain")));
    let m = recompute::delay_loop(&phi, &gamma, &k, &ku);
    let got = recompute::eig(&m);
    let at_origin = got.iter().map(|z| z.norm()).fold(f64::INFINITY, f64::min);
    assert!(at_origin < 1e-9, "{at_origin}");
    let want: Vec<_> = [(-12.0, 9.0), (-12.0, -9.0), (-20.0, 30.0), (-20.0, -30.0)].iter().map(|&(re, im)| (recompute::c(re, im) * t).exp()).chain([recompute::c(0.0, 0.0)]).collect();
    let err = recompute::error(&want, &got);
    assert!(err < 1e-9, "{err}");
    assert!(r.feedback.max_pole_error < 1e-9, "reported {}", r.feedback.max_pole_error);
    assert!(!r.warnings.iter().any(|w| w.code == "placement-inaccurate"), "{:?}", r.warnings);
    // LQR by Bryson weights on the same pair also puts the delay pole at the origin; the
    // sample-rate advice must come from the plant's poles, not from s = ln(1e-15) / T.
    let lqr = design(&format!(r#"{plant}, "feedback": {{"lqr": {{"bryson": {{"max_state": [0.01, 0.5, 0.01, 0.5, 60], "max_input": [60]}}}}}}"#)).unwrap();
    assert!(!lqr.warnings.iter().any(|w| w.code == "placement-inaccurate" || w.code == "sample-rate-too-slow"), "{:?}", lqr.warnings);
    let advice = lqr.sample_rate.as_ref().expect("digital design has advice");
    // The slowest-to-fastest plant-pole bandwidth stays far below the 1 kHz sample rate.
    assert!(advice.bandwidth.is_some_and(|w| w < 1000.0), "{:?}", advice.bandwidth);
}

#[test]
fn fragile_design_is_judged_independently_of_the_state_units() {
    // The same digital belt axis (illustrative) with a computation delay, in metres and newtons,
    // then with the force in units 4096 times smaller (u' = 4096 u, B' = B / 4096: the delay
    // state, the previous input, changes units with it) and with the carriage position in units
    // 4096 times smaller (A' = S A S⁻¹, B' = S B, S = diag(4096, 1, 1, 1)). The closed loop is
    // the same system in other coordinates, so a judgement of its fragility must agree; κ₂(X)
    // itself changes with the units. Parlett–Reinsch balancing works in powers of two, so a
    // power-of-two change of units is one it can undo (Parlett & Reinsch, Numer. Math. 13, 1969;
    // from memory).
    let a = [[0.0, 1.0, 0.0, 0.0], [-375.0, -2.291666666666667, 375.0, 0.625], [0.0, 0.0, 0.0, 1.0], [1500.0, 2.5, -1500.0, -2.5]];
    let b = [0.0, 0.4166666666666667, 0.0, 0.0];
    let run = |s0: f64, input_unit: f64| {
        let s = [s0, 1.0, 1.0, 1.0];
        let rows: Vec<String> = (0..4).map(|i| format!("[{}]", (0..4).map(|j| format!("{:?}", a[i][j] * s[i] / s[j])).collect::<Vec<_>>().join(", "))).collect();
        let bcol: Vec<String> = (0..4).map(|i| format!("[{:?}]", b[i] * s[i] / input_unit)).collect();
        design(&format!(
            r#""plant": {{"a": [{}], "b": [{}]}}, "implementation": {{"sample_time": 0.001, "computation_delay": true}}, "feedback": {{"poles": ["-12±9j", "-20±30j"]}}"#,
            rows.join(", "),
            bcol.join(", ")
        ))
        .unwrap()
    };
    let base = run(1.0, 1.0);
    let raw = base.feedback.eigenvector_condition;
    let bal = base.feedback.balanced_eigenvector_condition;
    // κ₂(X) against numpy.linalg.eig of the same closed loop [[Φ, Γ], [−K, −K_u]] with unit
    // columns (numpy 2.4.6, computed once for this test): 24589.0955.
    assert!((raw - 24589.0955).abs() < 1e-3, "{raw}");
    for (label, r) in [("force in 1/4096 N", run(1.0, 4096.0)), ("position in 1/4096 m", run(4096.0, 1.0))] {
        let (raw2, bal2) = (r.feedback.eigenvector_condition, r.feedback.balanced_eigenvector_condition);
        println!("{label}: κ₂(X) {raw:.1} → {raw2:.1}; balanced {bal:.2} → {bal2:.2}");
        assert!((bal / bal2).max(bal2 / bal) < 1.01, "{label}: the balanced condition does not depend on the units: {bal} vs {bal2}");
        assert!(!r.warnings.iter().any(|w| w.code == "fragile-design"), "{label}: {:?}", r.warnings);
    }
    let force = run(1.0, 4096.0).feedback.eigenvector_condition;
    assert!(force / raw > 10.0, "κ₂(X) does depend on them: {raw} vs {force}");
    // The figure the README quotes (87.2), held here to its digits; and of the same order as
    // LAPACK's balancing (scipy.linalg.matrix_balance, then numpy.linalg.eig: 180 for this loop,
    // computed once): balancing is not unique and LAPACK's variant differs, by a factor of 2.1.
    assert!((bal - 87.2).abs() < 0.05, "the README's balanced κ₂ is 87.2; now {bal}");
    assert!((bal / 180.0).max(180.0 / bal) < 3.0, "{bal} against LAPACK-balanced 180");
    assert!(!base.warnings.iter().any(|w| w.code == "fragile-design"), "{:?}", base.warnings);
}

#[test]
fn a_truly_fragile_design_is_still_flagged() {
    // Eight integrators in a chain, one input at the end, poles clustered at −1.0 … −1.7: the
    // closed loop is a companion matrix whose eigenvectors are the Vandermonde columns
    // [1, λ, …, λ⁷]ᵀ (a textbook property of companion matrices, common practice), notoriously
    // ill conditioned for close nodes (W. Gautschi, "How (un)stable are Vandermonde systems?",
    // 1990; from memory). No change of units rescues it.
    let n = 8;
    let rows: Vec<String> = (0..n).map(|i| format!("[{}]", (0..n).map(|j| if j == i + 1 { "1" } else { "0" }).collect::<Vec<_>>().join(", "))).collect();
    let b: Vec<String> = (0..n).map(|i| if i == n - 1 { "[1]".to_string() } else { "[0]".to_string() }).collect();
    let poles: Vec<String> = (0..n).map(|k| format!("{}", -1.0 - 0.1 * k as f64)).collect();
    let r = design(&format!(r#""plant": {{"a": [{}], "b": [{}]}}, "feedback": {{"poles": [{}]}}"#, rows.join(", "), b.join(", "), poles.join(", "))).unwrap();
    // κ₂ of the unit-column Vandermonde matrix of the poles, from its closed form.
    let lambda: Vec<f64> = (0..n).map(|k| -1.0 - 0.1 * k as f64).collect();
    let mut v = nalgebra::DMatrix::from_fn(n, n, |i, j| lambda[j].powi(i as i32));
    for mut col in v.column_iter_mut() {
        let norm = col.norm();
        col /= norm;
    }
    let s = v.singular_values();
    let kappa = s.max() / s.min();
    let raw = r.feedback.eigenvector_condition;
    assert!((raw - kappa).abs() < 1e-4 * kappa, "{raw} vs the Vandermonde closed form {kappa}");
    assert!(r.feedback.balanced_eigenvector_condition > 1e4, "{}", r.feedback.balanced_eigenvector_condition);
    assert!(r.warnings.iter().any(|w| w.code == "fragile-design"), "{:?}", r.warnings);
}

#[test]
fn margins_of_the_loop_as_built_through_the_design_path() {
    // The chain plant (s + 1)⁻³ (x1' = −x1 + x2, x2' = −x2 + x3, x3' = −x3 + u) with the poles
    // of s³ + 3s² + 3s + 3 = (s + 1)³ + 2 gives K = [2, 0, 0], so L(s) = 2/(s + 1)³: the gain
    // margin is 8/2 = 4 (phase −180° at ω = √3, |L| = 1/4) and the phase margin
    // 180° − 3 atan(ω_c) at ω_c = √(2^{2/3} − 1) (by hand).
    let roots = polewright::linalg::eigen::try_eigenvalues(&nalgebra::DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -3.0, -3.0, -3.0])).unwrap();
    let poles: Vec<String> = roots.iter().map(|z| format!("[{:e}, {:e}]", z.re, z.im)).collect();
    let r = design(&format!(r#""plant": {{"a": [[-1, 1, 0], [0, -1, 1], [0, 0, -1]], "b": [[0], [0], [1]]}}, "feedback": {{"poles": [{}]}}"#, poles.join(", "))).unwrap();
    let k = &r.feedback.gain[0];
    assert!((k[0] - 2.0).abs() < 1e-9 && k[1].abs() < 1e-9 && k[2].abs() < 1e-9, "{k:?}");
    let m = r.margins.as_ref().expect("margins");
    let p = &m.per_input[0];
    let c = &p.classical;
    assert!((c.gain_margin_high.unwrap() - 4.0).abs() < 1e-6, "{p:?}");
    let wc = (2f64.powf(2.0 / 3.0) - 1.0).sqrt();
    assert!((c.crossover.unwrap() - wc).abs() < 1e-6 && (c.phase_margin_deg.unwrap() - (180.0 - 3.0 * wc.atan().to_degrees())).abs() < 1e-5, "{p:?}");
    assert!(p.disk.gain_range[1] <= 4.0 + 1e-6, "the disk promises no more than the classical margin: {p:?}");
}

#[test]
fn lqr_loops_keep_the_guaranteed_disk_margin() {
    // Full-state LQR with diagonal R satisfies |1 + L(jω)| ≥ 1 at the plant input (Kalman's
    // inequality; Safonov & Athans, IEEE TAC 22(2), 1977), so |S| ≤ 1 and the skew-0 disk margin
    // α = 1 / max|S − 1/2| is at least 2/3. Checked on 60 seeded single-input plants (Q = I,
    // R = 1) through the design path.
    let mut state: u64 = 0x5AFE_7A11_0000_0012;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    let mut worst = f64::INFINITY;
    for case in 0..60 {
        let n = 2 + case % 4;
        let rows = |r: usize, c: usize, f: &mut dyn FnMut() -> f64| {
            format!("[{}]", (0..r).map(|_| format!("[{}]", (0..c).map(|_| format!("{:.6}", f())).collect::<Vec<_>>().join(", "))).collect::<Vec<_>>().join(", "))
        };
        let a = rows(n, n, &mut next);
        let b = rows(n, 1, &mut next);
        let q = format!("[{}]", (0..n).map(|i| format!("[{}]", (0..n).map(|j| if i == j { "1" } else { "0" }).collect::<Vec<_>>().join(", "))).collect::<Vec<_>>().join(", "));
        let r = design(&format!(r#""plant": {{"a": {a}, "b": {b}}}, "feedback": {{"lqr": {{"q": {q}, "r": [[1]]}}}}"#)).unwrap_or_else(|e| panic!("case {case}: {e}"));
        let alpha = r.margins.as_ref().unwrap().per_input[0].disk.disk_margin;
        worst = worst.min(alpha);
        assert!(alpha >= 2.0 / 3.0 - 1e-9, "case {case}: disk margin {alpha}");
    }
    eprintln!("LQR disk margins (skew 0) over 60 plants: smallest {worst:.4} (guaranteed ≥ 2/3)");
}

#[test]
fn an_unstable_loop_gets_no_margins_and_says_why() {
    // A requested pole at s = +1 is designed (with a danger warning), but stability margins
    // assume a stable nominal loop: none are given, and the result says why.
    let r = design(r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]]}, "feedback": {"poles": [1, -2]}"#).unwrap();
    assert!(r.margins.is_none());
    assert!(r.margins_unavailable.as_deref().is_some_and(|m| m.contains("not stable")), "{:?}", r.margins_unavailable);
}

#[test]
fn a_load_enters_through_e_and_e_is_checked_against_the_plant() {
    // Double integrator y = x1 with feedforward: a load w on the position rate (E = [1, 0]ᵀ:
    // x1' = x2 + w) against poles −2, −3 (K = [6, 5]) leaves the offset w·5/6 in steady state:
    // 0 = x2 + w and 0 = −6 (x1 − r) − 5 x2 give x1 − r = 5 w / 6 (by hand); the same load at
    // the input (E = B) leaves w/6 (the test above).
    let plant = |e: &str| format!(r#""plant": {{"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]]{e}}}"#);
    let sim = r#""simulation": {"reference": [1], "disturbance": [0.5], "disturbance_time": 5, "duration": 20}"#;
    let run = |e: &str| design(&format!(r#"{}, "feedback": {{"poles": [-2, -3]}}, "tracking": {{"mode": "feedforward"}}, {sim}"#, plant(e)));
    let on_rate = run(r#", "e": [[1], [0]]"#).unwrap();
    let err = on_rate.closed_loop.as_ref().unwrap().tracked[0].steady_state_error;
    assert!((err.abs() - 0.5 * 5.0 / 6.0).abs() < 1e-6, "{err}");
    // One line of n numbers is a column, as for B.
    let line = run(r#", "e": "1 0""#).unwrap();
    assert_eq!(line.closed_loop.as_ref().unwrap().tracked[0].steady_state_error, err);
    // Wrong rows: an error of plant.e naming both counts.
    match run(r#", "e": [[1], [0], [0]]"#) {
        Err(DesignError::Input(e)) => assert!(e.field.dotted() == "plant.e" && e.message.contains("3 rows") && e.message.contains("2 states"), "{e}"),
        other => panic!("{other:?}"),
    }
    // Two loads (two columns of E) need two load values.
    match run(r#", "e": [[1, 0], [0, 1]]"#) {
        Err(DesignError::Input(e)) => assert!(e.field.dotted() == "simulation.disturbance" && e.message.contains("column"), "{e}"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn state_limits_are_reported_against_the_peaks() {
    // Double integrator from x₀ = [1, 0] with poles −1, −2 (K = [2, 3]): the velocity is
    // v(t) = −2 e^{−t} + 2 e^{−2t}, largest in magnitude at t = ln 2 where |v| = 0.5 (by hand).
    let body = |limits: &str| {
        format!(
            r#""plant": {{"a": [[0, 1], [0, 0]], "b": [[0], [1]], "state_names": ["position", "velocity"], "state_units": ["m", "m/s"], "state_limits": {limits}}}, "feedback": {{"poles": [-1, -2]}}, "simulation": {{"initial_state": [1, 0], "duration": 10}}"#
        )
    };
    let tight = design(&body("[null, 0.4]")).unwrap();
    let peak = tight.simulation.peak_state[1];
    assert!((peak - 0.5).abs() < 1e-4, "{peak}");
    assert_eq!(tight.simulation.state_limit, [None, Some(0.4)]);
    let w: Vec<&str> = tight.warnings.iter().filter(|w| w.code == polewright::warnings::WarningCode::StateOverLimit).map(|w| w.message.as_str()).collect();
    assert_eq!(w.len(), 1, "{:?}", tight.warnings);
    // The peak of the simulated samples: 0.5 to 1e-4, so 125 % of the limit to 0.02 %.
    assert!(w[0].contains("velocity") && w[0].contains("0.4 m/s") && (w[0].contains("124.99 %") || w[0].contains("125 %")), "{}", w[0]);
    let loose = design(&body(r#""none, 0.6""#)).unwrap();
    assert!(loose.warnings.iter().all(|w| w.code != polewright::warnings::WarningCode::StateOverLimit));
    // One limit per state, positive.
    match design(&body("[1]")) {
        Err(DesignError::Input(e)) => assert!(e.field.dotted() == "plant.state_limits" && e.message.contains("1 limit") && e.message.contains("2 states"), "{e}"),
        other => panic!("{other:?}"),
    }
    match design(&body(r#""1, -2""#)) {
        Err(DesignError::Input(e)) => assert!(e.field.dotted() == "plant.state_limits" && e.message.contains("state"), "{e}"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn the_loop_reports_peak_states_over_every_step() {
    // With a loop scenario the peaks are taken on every simulation step: never below the peak of
    // the plotted (decimated) samples, and a limit between the two is still caught.
    let doc = r#""plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]], "state_limits": [null, 0.1]}, "feedback": {"poles": [-3, -4]}, "tracking": {"mode": "feedforward"}, "simulation": {"reference": [1], "duration": 6}"#;
    let r = design(doc).unwrap();
    let l = r.closed_loop.as_ref().unwrap();
    assert_eq!(l.peak_states.len(), 2);
    for (i, peak) in l.peak_states.iter().enumerate() {
        let plotted = l.states[i].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!(*peak >= plotted && *peak <= plotted * 1.01 + 1e-12, "{peak} vs {plotted}");
    }
    assert!(r.warnings.iter().any(|w| w.code == polewright::warnings::WarningCode::LoopStateOverLimit && w.message.contains("In the loop simulation")), "{:?}", r.warnings);
}

#[test]
fn two_degrees_of_freedom_rise_at_once_and_still_reject_a_load() {
    // An invented position servo x'' = −20 x' + 500 u with poles −150 ± 150j and the integrator
    // at −150. With integral action alone the reference reaches the plant only through the
    // integrator; fed forward as well it acts at once. Both end without error after a load
    // (the internal-model principle, common practice); feedforward alone does not.
    let run = |tracking: &str| {
        let doc = format!(
            r#""plant": {{"a": [[0, 1], [0, -20]], "b": [[0], [500]], "c": [[1, 0]]}}, "feedback": {{"poles": ["-150+150j", "-150-150j"{}]}}, "tracking": {tracking}, "simulation": {{"reference": [1], "disturbance": [0.2], "disturbance_time": 0.15, "duration": 0.3}}"#,
            if tracking.contains("integral") { ", -150" } else { "" }
        );
        design(&doc).unwrap()
    };
    let integral = run(r#"{"mode": "integral"}"#);
    let two_dof = run(r#"{"mode": "integral", "feedforward": true}"#);
    let feedforward = run(r#"{"mode": "feedforward"}"#);
    let metric = |r: &DesignResult| r.closed_loop.as_ref().unwrap().tracked[0].clone();
    let (i, t, f) = (metric(&integral), metric(&two_dof), metric(&feedforward));
    let (ri, rt) = (i.rise_time.unwrap(), t.rise_time.unwrap());
    assert!(rt < 0.7 * ri, "two degrees of freedom rise in {rt} s, integral alone in {ri} s");
    assert!(i.steady_state_error.abs() < 1e-6 && t.steady_state_error.abs() < 1e-6, "{} {}", i.steady_state_error, t.steady_state_error);
    assert!(f.steady_state_error.abs() > 1e-4, "feedforward alone keeps an offset under a load: {}", f.steady_state_error);
    // The same integrator gain: feedforward changes the reference path, not the loop.
    let ki = |r: &DesignResult| match r.tracking.as_ref().unwrap() {
        polewright::design::TrackingResult::Integral { integral_gain, nx, .. } => (integral_gain.clone(), nx.is_some()),
        other => panic!("{other:?}"),
    };
    assert_eq!(ki(&integral).0, ki(&two_dof).0);
    assert_eq!((ki(&integral).1, ki(&two_dof).1), (false, true));
    // Feedforward with integral action needs the integral mode.
    match design(r#""plant": {"a": [[0, 1], [0, -20]], "b": [[0], [500]], "c": [[1, 0]]}, "feedback": {"poles": [-3, -4]}, "tracking": {"mode": "feedforward", "feedforward": true}"#) {
        Err(DesignError::Input(e)) => assert_eq!(e.field.dotted(), "tracking.feedforward", "{e}"),
        other => panic!("{other:?}"),
    }
}
