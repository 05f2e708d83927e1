//! Pole choice from specifications and prototype patterns (`polewright::patterns`), checked
//! against published values, definitions, closed forms and the scipy/numpy oracle
//! (`tests/fixtures/patterns.json`, written by `tests/oracle/make_pattern_fixtures.py`).
//!
//! Every check names its source beside it. Step responses used as references here are
//! computed independently of the module: by partial fractions (distinct poles) or the
//! closed form `1 − e^{−t} Σ_{k<n} tᵏ/k!` (the binomial pattern's repeated pole), never by
//! the module's matrix-exponential cascade.
//!
//! Tolerance model. The patterns' polynomial roots (orders ≤ 12, all simple) are found by
//! a companion eigenvalue computation plus Newton polishing here and independently by
//! scipy; the measured agreement is about 4e-12 relative, so 1e-9 leaves a wide margin for
//! other BLAS/LAPACK builds while still catching any normalisation or table error (those
//! are 1e-4 or larger). Settling instants are band crossings found by bisection (ours,
//! on the exactly propagated state) and brentq (scipy, on partial fractions); they agree
//! to about 2e-12 relative, checked at 1e-9. Grid-based checks allow one grid step.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]
// tests may fail loudly

// `!(error <= tolerance)` is deliberate throughout: a NaN must count as a failure.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

mod common;

use std::f64::consts::PI;

use common::{complex_list, f64_of, fixture};
use num_complex::Complex64;
use polewright::patterns::*;

// ----------------------------------------------------------------------------
// independent helpers
// ----------------------------------------------------------------------------

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

/// Unit-step response of `Π(−p)/Π(s − p)` by partial fractions (distinct poles only):
/// `y(t) = 1 + Σᵢ rᵢ e^{pᵢ t}`, `rᵢ = Π(−pⱼ) / (pᵢ Π_{j≠i}(pᵢ − pⱼ))`.
fn partial_fraction_step(poles: &[Complex64]) -> impl Fn(f64) -> f64 {
    let gain: Complex64 = poles.iter().map(|p| -p).product();
    let residues: Vec<Complex64> = poles
        .iter()
        .enumerate()
        .map(|(i, &pi)| {
            let d: Complex64 = poles.iter().enumerate().filter(|(j, _)| *j != i).map(|(_, &pj)| pi - pj).product();
            gain / (pi * d)
        })
        .collect();
    let poles = poles.to_vec();
    move |t: f64| 1.0 + poles.iter().zip(&residues).map(|(p, r)| (r * (p * t).exp()).re).sum::<f64>()
}

/// `1 − e^{−ωt} Σ_{k<n} (ωt)ᵏ/k!`: unit-step response of `ωⁿ/(s + ω)ⁿ` (closed form).
fn binomial_step(n: usize, omega: f64) -> impl Fn(f64) -> f64 {
    move |t: f64| {
        let x = omega * t;
        let mut term = 1.0;
        let mut sum = 0.0;
        for k in 0..n {
            if k > 0 {
                term *= x / k as f64;
            }
            sum += term;
        }
        1.0 - (-x).exp() * sum
    }
}

/// Reference step response for any pattern (binomial closed form if all poles coincide).
fn reference_step(poles: &[Complex64]) -> Box<dyn Fn(f64) -> f64> {
    let first = poles[0];
    if poles.len() > 1 && poles.iter().all(|p| (p - first).norm() <= 1e-12 * first.norm()) {
        Box::new(binomial_step(poles.len(), -first.re))
    } else {
        Box::new(partial_fraction_step(poles))
    }
}

/// First grid time after the last grid sample with `|y − 1| > band` on `[0, t_end]`.
fn grid_settling(y: &dyn Fn(f64) -> f64, h: f64, t_end: f64, band: f64) -> Option<f64> {
    let n = (t_end / h).round() as usize;
    let mut last = None;
    for k in 0..=n {
        if (y(k as f64 * h) - 1.0).abs() > band {
            last = Some(k);
        }
    }
    match last {
        None => Some(0.0),
        Some(k) if k == n => None,
        Some(k) => Some((k + 1) as f64 * h),
    }
}

/// `|H(jω)|²` of `Π(−p)/Π(s − p)`, evaluated directly.
fn gain_squared(poles: &[Complex64], w: f64) -> f64 {
    let jw = c(0.0, w);
    poles.iter().map(|p| (p.norm() / (jw - p).norm()).powi(2)).product()
}

/// Largest `|ours − reference| / max(1, |reference|)` after nearest matching (each reference
/// pole takes the nearest unused pole of ours).
fn max_pole_error(ours: &[Complex64], reference: &[Complex64]) -> f64 {
    assert_eq!(ours.len(), reference.len(), "pole counts differ");
    let mut used = vec![false; ours.len()];
    let mut worst: f64 = 0.0;
    for r in reference {
        let (j, d) = ours.iter().enumerate().filter(|(j, _)| !used[*j]).map(|(j, p)| (j, (p - r).norm())).fold((usize::MAX, f64::INFINITY), |a, b| if b.1 < a.1 { b } else { a });
        used[j] = true;
        worst = worst.max(d / r.norm().max(1.0));
    }
    worst
}

fn relative(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// ITAE cost `∫₀ᴴ t |1 − y(t)| dt` by the trapezoidal rule on `steps` intervals.
fn itae_cost(y: &dyn Fn(f64) -> f64, horizon: f64, steps: usize) -> f64 {
    let h = horizon / steps as f64;
    let f = |t: f64| t * (1.0 - y(t)).abs();
    let mut s = 0.5 * (f(0.0) + f(horizon));
    for k in 1..steps {
        s += f(k as f64 * h);
    }
    s * h
}

fn bands(f: &serde_json::Value) -> Vec<f64> {
    f["bands"].as_array().expect("bands").iter().map(f64_of).collect()
}

/// The fixture cases of one kind; a kind with no case fails (a loop over none would pass).
fn cases<'a>(f: &'a serde_json::Value, kind: &str) -> Vec<&'a serde_json::Value> {
    let found: Vec<&serde_json::Value> = f["cases"].as_array().expect("cases").iter().filter(|c| c["kind"] == kind).collect();
    assert!(!found.is_empty(), "no fixture case of kind {kind:?}");
    println!("{kind}: {} fixture cases", found.len());
    found
}

fn params() -> ResponseParams {
    ResponseParams::default()
}

// ----------------------------------------------------------------------------
// Bessel
// ----------------------------------------------------------------------------

#[test]
fn bessel_polynomials_match_published_integers_definition_and_recurrence() {
    // Source: the reverse Bessel polynomials θ₁…θ₆ as tabulated by Grosswald, "Bessel
    // Polynomials", Springer LNM 698, 1978 (from memory); they follow from the definition.
    let published: [&[u128]; 6] = [&[1, 1], &[3, 3, 1], &[15, 15, 6, 1], &[105, 105, 45, 10, 1], &[945, 945, 420, 105, 15, 1], &[10395, 10395, 4725, 1260, 210, 21, 1]];
    for (i, want) in published.iter().enumerate() {
        let got = bessel_polynomial(i + 1).unwrap();
        assert_eq!(&got[..], *want, "θ_{}", i + 1);
    }
    // Source: the definition aₖ = (2n−k)!/(2^{n−k} k! (n−k)!) with exact factorials
    // (34! still fits in u128, so n ≤ 17).
    let fact = |m: u128| (1..=m).product::<u128>();
    for n in 1..=17u128 {
        let got = bessel_polynomial(n as usize).unwrap();
        for k in 0..=n {
            let want = fact(2 * n - k) / (2u128.pow((n - k) as u32) * fact(k) * fact(n - k));
            assert_eq!(got[k as usize], want, "θ_{n} coefficient {k}");
        }
        // Unit group delay at DC: τ(0) = a₁/a₀ = 1 (follows from the definition).
        assert_eq!(got[0], got[1], "θ_{n}: a₁ ≠ a₀");
    }
    // Source: the recurrence θₙ = (2n−1) θₙ₋₁ + s² θₙ₋₂ (Krall & Frink, "A new class of
    // orthogonal polynomials: the Bessel polynomials", Trans. AMS 65, 1949; from memory),
    // θ₀ = 1, up to the largest order offered.
    let mut older: Vec<u128> = vec![1];
    let mut old = bessel_polynomial(1).unwrap();
    for n in 2..=MAX_ORDER {
        let mut want = vec![0u128; n + 1];
        for (k, a) in old.iter().enumerate() {
            want[k] += (2 * n as u128 - 1) * a;
        }
        for (k, a) in older.iter().enumerate() {
            want[k + 2] += a;
        }
        let got = bessel_polynomial(n).unwrap();
        assert_eq!(got, want, "recurrence at n = {n}");
        older = old;
        old = got;
    }
    // Source: scipy fixture integers (Python's exact math.factorial on the definition).
    let f = fixture("patterns.json");
    for case in cases(&f, "bessel") {
        let n = case["n"].as_u64().unwrap() as usize;
        let want: Vec<u128> = case["coefficients"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as u128).collect();
        assert_eq!(bessel_polynomial(n).unwrap(), want, "bessel-n{n}");
    }
}

#[test]
fn bessel_half_power_poles_match_a_recalled_table() {
    // Source: tables of Bessel poles normalised for −3 dB at 1 rad/s, as printed in filter
    // design handbooks (from memory; upper-half-plane member of each pair). Checked to 1e-3
    // for n = 2…4.
    let table: [(usize, &[Complex64]); 3] = [(2, &[c(-1.1016, 0.6360)]), (3, &[c(-1.3227, 0.0), c(-1.0474, 0.9992)]), (4, &[c(-1.3700, 0.4102), c(-0.9952, 1.2571)])];
    // The n = 5 and 6 rows as recalled disagree with the computation by about 5e-3 while
    // the computation agrees with scipy to 1e-11 (see `bessel_normalisations_match_scipy`):
    // the recollection is imprecise, so these rows are only measured and printed, not
    // asserted.
    let unconfirmed: [(usize, &[Complex64]); 2] = [(5, &[c(-1.5069, 0.0), c(-1.3851, 0.7201), c(-0.9606, 1.4756)]), (6, &[c(-1.5735, 0.3213), c(-1.3836, 0.9727), c(-0.9318, 1.6640)])];
    let distance = |n: usize, recalled: &[Complex64]| {
        let poles = bessel_poles(n, BesselNormalisation::HalfPowerAtUnitFrequency, &params()).unwrap();
        let mut worst: f64 = 0.0;
        for r in recalled {
            let d = poles.iter().map(|p| (p - r).norm()).fold(f64::INFINITY, f64::min);
            worst = worst.max(d);
        }
        (poles, worst)
    };
    for (n, recalled) in table {
        let (poles, worst) = distance(n, recalled);
        println!("Bessel n={n} −3 dB poles vs recalled table: max |Δ| = {worst:.2e} (tol 1e-3)");
        assert!(worst <= 1e-3, "n = {n}: {worst:.3e} > 1e-3");
        // Source: the definition of the normalisation, |H(j·1)|² = 1/2, by direct evaluation.
        let g = gain_squared(&poles, 1.0);
        assert!((g - 0.5).abs() < 1e-12, "n = {n}: |H(j)|² = {g}");
    }
    for (n, recalled) in unconfirmed {
        let (poles, worst) = distance(n, recalled);
        println!("Bessel n={n} −3 dB poles vs recalled (unconfirmed) table: max |Δ| = {worst:.2e} (not asserted)");
        let g = gain_squared(&poles, 1.0);
        assert!((g - 0.5).abs() < 1e-12, "n = {n}: |H(j)|² = {g}");
    }
}

#[test]
fn bessel_normalisations_match_scipy() {
    // Source: scipy.signal.bessel(n, 1, analog=True, norm='delay'|'mag'|'phase',
    // output='zpk') (fixture), i.e. unit DC group delay, −3 dB at 1 rad/s, and unit
    // constant term (high-frequency asymptote of a Butterworth pattern).
    let f = fixture("patterns.json");
    let bands = bands(&f);
    let mut worst = [0.0f64; 4];
    for case in cases(&f, "bessel") {
        let n = case["n"].as_u64().unwrap() as usize;
        let checks = [(BesselNormalisation::UnitDcGroupDelay, "scipy_delay"), (BesselNormalisation::HalfPowerAtUnitFrequency, "scipy_mag"), (BesselNormalisation::UnitNaturalFrequency, "scipy_phase")];
        for (i, (norm, field)) in checks.iter().enumerate() {
            let ours = bessel_poles(n, *norm, &params()).unwrap();
            let e = max_pole_error(&ours, &complex_list(&case[*field]));
            worst[i] = worst[i].max(e);
            assert!(e <= 1e-9, "bessel-n{n} {field}: {e:.3e}");
        }
        // Settling-time normalisation: the delay-normalised poles times its settling time
        // (scipy: partial fractions + brentq).
        let delay = complex_list(&case["scipy_delay"]);
        for (b, band) in bands.iter().enumerate() {
            let ts = f64_of(&case["settling_time_delay"][b]);
            let ours_ts = step_settling_time(&bessel_poles(n, BesselNormalisation::UnitDcGroupDelay, &params()).unwrap(), *band, &params()).unwrap();
            let e = relative(ours_ts, ts);
            worst[3] = worst[3].max(e);
            assert!(e <= 1e-9, "bessel-n{n} band {band}: settling {ours_ts} vs scipy {ts}");
            let want: Vec<Complex64> = delay.iter().map(|p| p * ts).collect();
            let ours = bessel_poles(n, BesselNormalisation::UnitSettlingTime { band: *band }, &params()).unwrap();
            let e = max_pole_error(&ours, &want);
            assert!(e <= 1e-8, "bessel-n{n} unit settling {band}: {e:.3e}");
        }
        // The −3 dB frequency of the delay normalisation (scipy brentq) against ours.
        let w3 = f64_of(&case["half_power_frequency_delay"]);
        let ours_w3 = half_power_frequency(&delay, &params()).unwrap();
        assert!(relative(ours_w3, w3) <= 1e-12, "bessel-n{n}: ω₃ {ours_w3} vs {w3}");
    }
    println!("Bessel vs scipy (n = 1…12): delay {:.1e}, mag {:.1e}, phase {:.1e}, settling {:.1e}", worst[0], worst[1], worst[2], worst[3]);
}

#[test]
fn bessel_normalisations_are_distinct_and_labelled() {
    // The normalisations differ by large factors (here: the delay-normalised −3 dB frequency,
    // from scipy's fixture, is 1.36 at n = 2 and 2.70 at n = 6), so mixing them up is a gross
    // error; every prototype says which one it carries.
    let p = params();
    for n in 2..=6 {
        let delay = prototype_poles(Pattern::Bessel(BesselNormalisation::UnitDcGroupDelay), n, &p).unwrap();
        let mag = prototype_poles(Pattern::Bessel(BesselNormalisation::HalfPowerAtUnitFrequency), n, &p).unwrap();
        let settle = prototype_poles(Pattern::Bessel(BesselNormalisation::UnitSettlingTime { band: 0.02 }), n, &p).unwrap();
        assert_eq!(delay.normalisation, Normalisation::UnitDcGroupDelay);
        assert_eq!(mag.normalisation, Normalisation::HalfPowerAtUnitFrequency);
        assert_eq!(settle.normalisation, Normalisation::UnitSettlingTime { band: 0.02 });
        let ratio = delay.poles[0].norm() / mag.poles[0].norm();
        println!("Bessel n={n}: delay/−3 dB pole ratio {ratio:.4}");
        assert!(ratio > 1.3, "n = {n}: ratio {ratio}");
        assert_eq!(delay.multiplicity, 1);
        // Same shape: each is a positive multiple of the others.
        let k = mag.poles[0].re / delay.poles[0].re;
        assert!(max_pole_error(&mag.poles, &delay.poles.iter().map(|q| q * k).collect::<Vec<_>>()) < 1e-12);
    }
}

// ----------------------------------------------------------------------------
// Butterworth, ITAE, binomial
// ----------------------------------------------------------------------------

#[test]
fn butterworth_poles_are_evenly_spaced_on_the_unit_circle() {
    // Source: the Butterworth pattern pₖ = exp(j(π/2 + (2k−1)π/(2n))) (common practice).
    for n in 1..=MAX_ORDER {
        let poles = butterworth_poles(n).unwrap();
        let mut angles: Vec<f64> = poles.iter().map(|p| p.im.atan2(p.re).rem_euclid(2.0 * PI)).collect();
        angles.sort_by(f64::total_cmp);
        assert!((angles[0] - (PI / 2.0 + PI / (2.0 * n as f64))).abs() < 1e-14, "n = {n}: first angle");
        for w in angles.windows(2) {
            assert!(((w[1] - w[0]) - PI / n as f64).abs() < 1e-13, "n = {n}: spacing");
        }
        for p in &poles {
            assert!((p.norm() - 1.0).abs() < 1e-15, "n = {n}: |p| = {}", p.norm());
        }
        let w3 = half_power_frequency(&poles, &params()).unwrap();
        assert!((w3 - 1.0).abs() < 1e-12, "n = {n}: ω₃ = {w3}");
    }
    // Source: normalised Butterworth polynomials as tabulated in filter texts (common
    // practice): s² + √2 s + 1; (s + 1)(s² + s + 1); s⁴ + 2.6131 s³ + 3.4142 s² + 2.6131 s + 1.
    let tables: [(usize, &[f64], f64); 3] = [(2, &[1.0, std::f64::consts::SQRT_2, 1.0], 1e-14), (3, &[1.0, 2.0, 2.0, 1.0], 1e-14), (4, &[1.0, 2.6131, 3.4142, 2.6131, 1.0], 1e-4)];
    for (n, want, tol) in tables {
        let got = polynomial_from_roots(&butterworth_poles(n).unwrap()).unwrap();
        for (g, w) in got.iter().zip(want) {
            assert!((g - w).abs() < tol, "n = {n}: {got:?} vs {want:?}");
        }
    }
    // Source: scipy.signal.buttap (fixture), and scipy's settling times.
    let f = fixture("patterns.json");
    let bands = bands(&f);
    for case in cases(&f, "butterworth") {
        let n = case["n"].as_u64().unwrap() as usize;
        let ours = butterworth_poles(n).unwrap();
        let e = max_pole_error(&ours, &complex_list(&case["poles"]));
        assert!(e <= 1e-14, "butterworth-n{n}: {e:.3e}");
        for (b, band) in bands.iter().enumerate() {
            let ts = f64_of(&case["settling_time"][b]);
            let ours_ts = step_settling_time(&ours, *band, &params()).unwrap();
            assert!(relative(ours_ts, ts) <= 1e-9, "butterworth-n{n} band {band}: {ours_ts} vs {ts}");
        }
    }
}

/// ITAE standard forms as recalled (Graham & Lathrop, "The synthesis of optimum transient
/// response: criteria and standard forms", Trans. AIEE 72(II):273–288, 1953; from memory),
/// ascending coefficients with ω₀ = 1.
const RECALLED_ITAE: [&[f64]; 6] = [&[1.0, 1.0], &[1.0, 1.4, 1.0], &[1.0, 2.15, 1.75, 1.0], &[1.0, 2.7, 3.4, 2.1, 1.0], &[1.0, 3.4, 5.5, 5.0, 2.8, 1.0], &[1.0, 3.95, 7.45, 8.6, 6.6, 3.25, 1.0]];

#[test]
fn itae_standard_forms_as_recalled() {
    let f = fixture("patterns.json");
    let bands = bands(&f);
    for case in cases(&f, "itae") {
        let n = case["n"].as_u64().unwrap() as usize;
        // Source: Graham & Lathrop 1953 (from memory) — the module's table is the recollection,
        // and this test, the module and the fixture share that one remembered table: what is
        // checked against scipy here is only the root finding (numpy.roots), the figures of
        // the response and the integrator, never the coefficients themselves. Independent
        // evidence for the coefficients is the near-optimality check below
        // (`itae_forms_are_near_minimal_under_coefficient_perturbations`).
        assert_eq!(itae_polynomial(n).unwrap(), RECALLED_ITAE[n - 1].to_vec(), "ITAE n = {n}");
        let proto = prototype_poles(Pattern::Itae, n, &params()).unwrap();
        assert_eq!(proto.normalisation, Normalisation::UnitNaturalFrequency);
        assert_eq!(proto.multiplicity, 1);
        // Source: numpy.roots of the same coefficients (fixture).
        let e = max_pole_error(&proto.poles, &complex_list(&case["poles"]));
        assert!(e <= 1e-12, "itae-n{n}: {e:.3e}");
        // ω₀ = 1: product of |poles| is the constant coefficient.
        let prod: f64 = proto.poles.iter().map(|p| p.norm()).product();
        assert!((prod - 1.0).abs() < 1e-12, "itae-n{n}: Π|p| = {prod}");
        for (b, band) in bands.iter().enumerate() {
            let ts = f64_of(&case["settling_time"][b]);
            let ours = step_settling_time(&proto.poles, *band, &params()).unwrap();
            assert!(relative(ours, ts) <= 1e-9, "itae-n{n} band {band}: {ours} vs {ts}");
        }
        let w3 = f64_of(&case["half_power_frequency"]);
        assert!(relative(half_power_frequency(&proto.poles, &params()).unwrap(), w3) <= 1e-12, "itae-n{n}: ω₃");
        // Overshoot: the module's own simulation on a fine grid vs scipy's maximisation of the
        // closed form. Grid error at the peak is ~ (h/2)² |y''| ≤ 1e-7 for h = 40/40000.
        let r = step_response(&proto.poles, 40.0, 40_000).unwrap();
        let os = step_figures(&r, 0.02).overshoot;
        let want = f64_of(&case["overshoot"]);
        println!("ITAE n={n}: overshoot {:.3} %, settling(2 %) {:.3} s, ω₃ {w3:.4}", 100.0 * os, f64_of(&case["settling_time"][1]));
        assert!((os - want).abs() < 1e-6, "itae-n{n}: overshoot {os} vs {want}");
        // The test's ITAE integrator against scipy.integrate.quad (fixture).
        let y = partial_fraction_step(&proto.poles);
        let j = itae_cost(&y, f64_of(&case["itae_horizon"]), 40_000);
        let jq = f64_of(&case["itae_cost"]);
        assert!(relative(j, jq) < 1e-5, "itae-n{n}: cost {j} vs quad {jq}");
    }
}

#[test]
fn itae_forms_are_near_minimal_under_coefficient_perturbations() {
    // An honest check of the recalled coefficients: perturb each free coefficient a₁…aₙ₋₁
    // (a₀ = aₙ = 1 fix ω₀) by ±2 % and ±5 % and measure the ITAE cost. Graham & Lathrop's
    // forms are known not to be exact minima; we require that no such perturbation lowers
    // the cost by more than 4 %. The integrator is first checked on the binomial pattern,
    // whose cost is exactly n(n+1)/2 (its error 1 − y = Q(n, t) never changes sign, and
    // ∫ t Q(n,t) dt = E[T²]/2 for T ~ Gamma(n, 1); common practice / closed form).
    for n in 1..=6 {
        let y = binomial_step(n, 1.0);
        let j = itae_cost(&y, 60.0, 60_000);
        let want = (n * (n + 1)) as f64 / 2.0;
        assert!(relative(j, want) < 1e-6, "binomial n = {n}: cost {j} vs {want}");
    }
    let cost = |coeffs: &[f64]| {
        let roots = polynomial_roots(coeffs).unwrap();
        itae_cost(&partial_fraction_step(&roots), 40.0, 40_000)
    };
    let mut report = Vec::new();
    for n in 2..=6 {
        let base = RECALLED_ITAE[n - 1];
        let j0 = cost(base);
        let mut best_gain: f64 = f64::NEG_INFINITY;
        for i in 1..n {
            for d in [-0.05, -0.02, 0.02, 0.05] {
                let mut p = base.to_vec();
                p[i] *= 1.0 + d;
                let gain = (j0 - cost(&p)) / j0;
                best_gain = best_gain.max(gain);
            }
        }
        // ±30 % perturbations must raise the cost: the check is sensitive enough to fail.
        let mut raised = 0;
        for i in 1..n {
            for d in [-0.3, 0.3] {
                let mut p = base.to_vec();
                p[i] *= 1.0 + d;
                if cost(&p) > j0 {
                    raised += 1;
                }
            }
        }
        report.push(format!("n={n}: J = {j0:.4}, best ±2/5 % perturbation lowers J by {:.2} %, ±30 % raises J in {raised}/{}", 100.0 * best_gain, 2 * (n - 1)));
        assert!(best_gain < 0.04, "ITAE n = {n}: a perturbation lowers the cost by {:.2} %", 100.0 * best_gain);
        assert_eq!(raised, 2 * (n - 1), "ITAE n = {n}: a ±30 % perturbation lowered the cost");
        // Against other patterns with the same ω₀ = 1 (n ≥ 3: for n = 2 the Butterworth pair,
        // ζ = 0.707, is marginally better than the tabulated ζ = 0.7, the true optimum being
        // near ζ = 0.75 — measured, not asserted).
        let butter = polynomial_from_roots(&butterworth_poles(n).unwrap()).unwrap();
        let bessel = polynomial_from_roots(&bessel_poles(n, BesselNormalisation::UnitNaturalFrequency, &params()).unwrap()).unwrap();
        let (jb, jbe) = (cost(&butter), cost(&bessel));
        report.push(format!("      Butterworth J = {jb:.4}, Bessel (ω₀ = 1) J = {jbe:.4}, binomial J = {}", n * (n + 1) / 2));
        if n >= 3 {
            assert!(j0 < jb && j0 < jbe && j0 < (n * (n + 1)) as f64 / 2.0, "ITAE n = {n} is not better than the other patterns");
        }
    }
    println!("{}", report.join("\n"));
}

#[test]
fn binomial_pattern_is_one_repeated_pole() {
    let f = fixture("patterns.json");
    let bands = bands(&f);
    for n in 1..=MAX_ORDER {
        let proto = prototype_poles(Pattern::Binomial, n, &params()).unwrap();
        assert!(proto.poles.iter().all(|p| *p == c(-1.0, 0.0)), "n = {n}");
        assert_eq!(proto.multiplicity, n, "the multiplicity must be reported");
        // Source: Pascal's triangle, (s + 1)ⁿ = Σ C(n,k) sᵏ (common practice).
        let poly = polynomial_from_roots(&proto.poles).unwrap();
        let mut binom = 1.0f64;
        for (k, a) in poly.iter().enumerate() {
            assert_eq!(*a, binom, "n = {n}, k = {k}");
            binom = binom * (n - k) as f64 / (k + 1) as f64;
        }
    }
    // Source: scipy.special.gammainc closed form (fixture) for settling, and
    // ω₃ = √(2^{1/n} − 1) (closed form).
    for case in cases(&f, "binomial") {
        let n = case["n"].as_u64().unwrap() as usize;
        let poles = vec![c(-1.0, 0.0); n];
        for (b, band) in bands.iter().enumerate() {
            let ts = f64_of(&case["settling_time"][b]);
            let ours = step_settling_time(&poles, *band, &params()).unwrap();
            assert!(relative(ours, ts) <= 1e-9, "binomial-n{n} band {band}: {ours} vs {ts}");
        }
        let w3 = (2f64.powf(1.0 / n as f64) - 1.0).sqrt();
        assert!(relative(half_power_frequency(&poles, &params()).unwrap(), w3) <= 1e-12, "binomial-n{n}");
    }
}

// ----------------------------------------------------------------------------
// scaling
// ----------------------------------------------------------------------------

fn all_patterns() -> Vec<(Pattern, usize)> {
    let mut v = Vec::new();
    for n in 1..=6 {
        for norm in
            [BesselNormalisation::UnitDcGroupDelay, BesselNormalisation::HalfPowerAtUnitFrequency, BesselNormalisation::UnitSettlingTime { band: 0.05 }, BesselNormalisation::UnitNaturalFrequency]
        {
            v.push((Pattern::Bessel(norm), n));
        }
        v.push((Pattern::Butterworth, n));
        v.push((Pattern::Itae, n));
        v.push((Pattern::Binomial, n));
    }
    v
}

#[test]
fn scaled_patterns_settle_at_the_requested_time() {
    // Independent simulation (partial fractions or the binomial closed form) on a grid of
    // h = T_s/20000 over 6 T_s: the first grid time after the last sample outside the band
    // must lie in [T_s, T_s + h) (up to 1e-9 T_s for the bisection and rounding).
    let ts = 2.5;
    let h = ts / 20_000.0;
    let mut count = 0;
    for (pattern, n) in all_patterns() {
        for band in [0.01, 0.02, 0.05] {
            let s = scaled_prototype_poles(pattern, n, ScaleTarget::SettlingTime { seconds: ts, band }, &params()).unwrap();
            assert_eq!(s.poles.len(), n);
            let y = reference_step(&s.poles);
            let grid = grid_settling(&*y, h, 6.0 * ts, band).unwrap_or(f64::INFINITY);
            let ok = grid >= ts - 1e-9 * ts && grid < ts + h + 1e-9 * ts;
            assert!(ok, "{pattern:?} n = {n} band {band}: simulated settling {grid} vs {ts} (h = {h})");
            // The factor is the normalised settling time over the target.
            assert!(relative(s.scale, s.normalised_value / ts) < 1e-15);
            count += 1;
        }
    }
    println!("{count} scaled patterns settle at T_s within one grid step");
    // Scaling to a settling time does not depend on the Bessel normalisation.
    for n in 1..=6 {
        let target = ScaleTarget::SettlingTime { seconds: 1.7, band: 0.02 };
        let a = scaled_prototype_poles(Pattern::Bessel(BesselNormalisation::UnitDcGroupDelay), n, target, &params()).unwrap();
        let b = scaled_prototype_poles(Pattern::Bessel(BesselNormalisation::HalfPowerAtUnitFrequency), n, target, &params()).unwrap();
        let e = max_pole_error(&a.poles, &b.poles);
        assert!(e < 1e-9, "n = {n}: {e:.3e}");
    }
}

#[test]
fn scaled_patterns_have_the_requested_bandwidth() {
    // Source: the definition |H(jω_b)|² = 1/2, evaluated directly; below ω_b the gain must be
    // above 1/2 (first crossing), checked on 200 points.
    let wb = 3.0;
    for (pattern, n) in all_patterns() {
        let s = scaled_prototype_poles(pattern, n, ScaleTarget::Bandwidth { rad_per_s: wb }, &params()).unwrap();
        let g = gain_squared(&s.poles, wb);
        assert!((g - 0.5).abs() < 1e-12, "{pattern:?} n = {n}: |H(jω_b)|² = {g}");
        for k in 1..200 {
            let w = wb * k as f64 / 200.0;
            assert!(gain_squared(&s.poles, w) > 0.5, "{pattern:?} n = {n}: gain below half at {w}");
        }
    }
}

#[test]
fn module_step_response_matches_partial_fractions() {
    // The module's cascade/matrix-exponential simulation against partial fractions.
    let sets: [&[Complex64]; 3] = [&[c(-1.0, 2.0), c(-1.0, -2.0), c(-3.0, 0.0)], &[c(-0.5, 0.0), c(-7.0, 0.0)], &[c(-2.0, 5.0), c(-2.0, -5.0), c(-1.0, 1.0), c(-1.0, -1.0)]];
    for poles in sets {
        let r = step_response(poles, 10.0, 2000).unwrap();
        let y = partial_fraction_step(poles);
        let worst = r.time.iter().zip(&r.output).map(|(t, v)| (v - y(*t)).abs()).fold(0.0, f64::max);
        assert!(worst < 1e-12, "{poles:?}: {worst:.3e}");
    }
}

// ----------------------------------------------------------------------------
// second-order formulas
// ----------------------------------------------------------------------------

#[test]
fn damping_and_overshoot_round_trip_and_standard_values() {
    for k in 1..1000 {
        let mp = k as f64 / 1000.0;
        let z = damping_from_overshoot(mp).unwrap();
        let back = overshoot_from_damping(z).unwrap();
        assert!(relative(back, mp) < 1e-13, "Mp = {mp}: {back}");
    }
    for k in 1..100 {
        let z = k as f64 / 100.0;
        let back = damping_from_overshoot(overshoot_from_damping(z).unwrap()).unwrap();
        assert!((back - z).abs() < 1e-13, "ζ = {z}: {back}");
    }
    // Standard values (common practice): Mp = 4.3 % ↔ ζ ≈ 0.707; Mp = 16.3 % ↔ ζ = 0.5.
    let z = damping_from_overshoot(0.043).unwrap();
    assert!((z - 0.707).abs() < 1e-3, "ζ(4.3 %) = {z}");
    assert!((overshoot_from_damping(std::f64::consts::FRAC_1_SQRT_2).unwrap() - 0.0432).abs() < 1e-4);
    let z = damping_from_overshoot(0.163).unwrap();
    assert!((z - 0.5).abs() < 1e-3, "ζ(16.3 %) = {z}");
    assert!((overshoot_from_damping(0.5).unwrap() - 0.163).abs() < 1e-3);
    assert_eq!(overshoot_from_damping(1.0).unwrap(), 0.0);
    assert_eq!(overshoot_from_damping(0.0).unwrap(), 1.0);
    // Source: the overshoot measured by scipy on the closed-form response (fixture), not the
    // formula; also rise time (brentq) and bandwidth (brentq on |H|²).
    let f = fixture("patterns.json");
    let bands = bands(&f);
    for case in cases(&f, "second_order") {
        let z = f64_of(&case["damping"]);
        let os = overshoot_from_damping(z).unwrap();
        assert!((os - f64_of(&case["overshoot"])).abs() < 1e-9, "ζ = {z}: overshoot {os}");
        let tr = normalised_rise_time(z).unwrap();
        assert!(relative(tr, f64_of(&case["rise_time"])) < 1e-9, "ζ = {z}: rise {tr}");
        let bw = normalised_bandwidth(z).unwrap();
        assert!(relative(bw, f64_of(&case["half_power_frequency"])) < 1e-12, "ζ = {z}: bandwidth {bw}");
        let pair = complex_list(&case["poles"]);
        assert!(relative(half_power_frequency(&pair, &params()).unwrap(), bw) < 1e-12);
        for (b, band) in bands.iter().enumerate() {
            let ts = f64_of(&case["settling_time"][b]);
            assert!(relative(step_settling_time(&pair, *band, &params()).unwrap(), ts) <= 1e-9, "ζ = {z} band {band}");
        }
    }
}

#[test]
fn settling_rules_and_the_envelope_guarantee() {
    // Rule of thumb σ T_s = −ln b against the textbook constants 4.6 (1 %), 4 (2 %; often
    // quoted 3.9–4) and 3 (5 %) (Franklin, Powell & Emami-Naeini, Feedback Control of Dynamic
    // Systems, from memory; common practice).
    let rot = |b: f64| decay_rate_from_settling(1.0, b, 0.5, SettlingRule::RuleOfThumb).unwrap();
    assert!((rot(0.01) - 4.6).abs() < 0.01, "{}", rot(0.01));
    assert!((3.9..=4.0).contains(&rot(0.02)), "{}", rot(0.02));
    assert!((rot(0.05) - 3.0).abs() < 0.01, "{}", rot(0.05));
    // The envelope bound: the pure pair with σ from it settles by T_s (independent closed-form
    // simulation), for every ζ and band tried.
    let ts = 2.0;
    let h = ts / 20_000.0;
    let mut late_by_rule_of_thumb = Vec::new();
    for k in 1..=18 {
        let zeta = 0.05 * k as f64;
        for band in [0.01, 0.02, 0.05] {
            for rule in [SettlingRule::EnvelopeBound, SettlingRule::RuleOfThumb] {
                let sigma = decay_rate_from_settling(ts, band, zeta, rule).unwrap();
                let wn = sigma / zeta;
                let wd = wn * (1.0 - zeta * zeta).sqrt();
                let pair = [c(-sigma, wd), c(-sigma, -wd)];
                let y = partial_fraction_step(&pair);
                let grid = grid_settling(&y, h, 4.0 * ts, band).unwrap_or(f64::INFINITY);
                match rule {
                    SettlingRule::EnvelopeBound => assert!(grid <= ts + h, "ζ = {zeta}, band {band}: settles at {grid} > {ts}"),
                    SettlingRule::RuleOfThumb => {
                        if grid > ts + h {
                            late_by_rule_of_thumb.push(format!("ζ={zeta:.2} b={band}: {:.3} T_s", grid / ts));
                        }
                    }
                }
            }
        }
    }
    println!("rule of thumb settles late in {} of 54 cases: {}", late_by_rule_of_thumb.len(), late_by_rule_of_thumb.join(", "));
    // Measured (and documented): at ζ = 0.5, 2 % the rule of thumb is about 3 % late.
    assert!(late_by_rule_of_thumb.iter().any(|s| s.starts_with("ζ=0.50 b=0.02")), "the rule of thumb was expected to be late at ζ = 0.5, 2 %");
}

#[test]
fn rise_time_and_bandwidth_set_the_natural_frequency() {
    // Franklin, Powell & Emami-Naeini's t_r ≈ 1.8/ωₙ (from memory) is a rough average of the
    // exact normalised rise time over 0.5 ≤ ζ ≤ 0.7.
    for z in [0.5, 0.6, 0.7] {
        let tr = normalised_rise_time(z).unwrap();
        assert!((tr - 1.8).abs() < 0.35, "ζ = {z}: ωₙ t_r = {tr}");
    }
    // Rise time binds: simulate the dominant pair (closed form) and measure its 10–90 % rise
    // time by bisection in the test.
    let mut spec = Specification::new(0.1, 10.0);
    spec.speed = Some(SpeedRequirement::RiseTime { seconds: 0.5 });
    let region = specification_region(&spec).unwrap();
    let wn = region.natural_frequency.unwrap();
    assert!(wn > region.min_decay_rate / region.min_damping, "the rise time should bind");
    let pair = region.dominant_pair;
    assert!((pair[0].norm() - wn).abs() < 1e-12 * wn);
    let y = partial_fraction_step(&pair);
    let crossing = |level: f64| {
        let (mut lo, mut hi) = (0.0, PI / pair[0].im);
        for _ in 0..200 {
            let m = 0.5 * (lo + hi);
            if y(m) < level {
                lo = m
            } else {
                hi = m
            }
        }
        lo
    };
    let tr = crossing(0.9) - crossing(0.1);
    assert!((tr - 0.5).abs() < 1e-9, "rise time {tr}");
    assert!(region_violations(&pair, &region).is_empty());
    // Bandwidth binds: |H(jω_b)|² = 1/2 for the dominant pair, by direct evaluation.
    let mut spec = Specification::new(0.05, 10.0);
    spec.speed = Some(SpeedRequirement::Bandwidth { rad_per_s: 4.0 });
    let region = specification_region(&spec).unwrap();
    let g = gain_squared(&region.dominant_pair, 4.0);
    assert!((g - 0.5).abs() < 1e-12, "|H(jω_b)|² = {g}");
    // Settling binds when the speed requirement is lax: the pair sits on the decay line.
    let mut spec = Specification::new(0.05, 1.0);
    spec.speed = Some(SpeedRequirement::Bandwidth { rad_per_s: 0.1 });
    let region = specification_region(&spec).unwrap();
    assert!((-region.dominant_pair[0].re - region.min_decay_rate).abs() < 1e-12 * region.min_decay_rate);
}

// ----------------------------------------------------------------------------
// region, violations, z-plane
// ----------------------------------------------------------------------------

fn kinds(v: &[RegionViolation], index: usize) -> Vec<&'static str> {
    v.iter()
        .filter(|x| x.index == index)
        .map(|x| match x.kind {
            ViolationKind::TooSlow { .. } => "slow",
            ViolationKind::TooLittleDamping { .. } => "damping",
            ViolationKind::TooLowNaturalFrequency { .. } => "frequency",
        })
        .collect()
}

#[test]
fn region_violation_flags() {
    let spec = Specification::new(0.1, 2.0);
    let region = specification_region(&spec).unwrap();
    let zeta = region.min_damping;
    let sigma = region.min_decay_rate;
    // ζ(10 %) = 0.5912 (from the formula; common practice quotes ≈ 0.6 for 10 %).
    assert!((zeta - 0.5912).abs() < 1e-4, "{zeta}");
    // Envelope bound, 2 %: σ = −ln(0.02 √(1−ζ²)) / 2.
    assert!((sigma - (-(0.02 * (1.0 - zeta * zeta).sqrt()).ln() / 2.0)).abs() < 1e-15);
    let [p, q] = region.dominant_pair;
    let wd = (1.0 - zeta * zeta).sqrt() / zeta * sigma;
    let poles = vec![
        p,                                  // 0: corner: inside
        q,                                  // 1: inside
        c(-10.0, 0.0),                      // 2: inside
        c(-0.5 * sigma, 0.0),               // 3: slow only
        c(-10.0, 30.0),                     // 4: damping only (ζ = 0.316)
        c(-0.1, 5.0),                       // 5: slow and damping
        c(1.0, 0.0),                        // 6: unstable: slow and damping (ζ = −1)
        c(-sigma * (1.0 - 1e-6), 0.0),      // 7: just slow
        c(-sigma * (1.0 + 1e-6), 0.0),      // 8: just inside
        c(-sigma * 2.0, wd * 2.0 * 1.0001), // 9: just under-damped
        c(0.0, 0.0),                        // 10: origin: slow and damping (ζ = 0 by convention)
    ];
    let v = region_violations(&poles, &region);
    let expect: [&[&str]; 11] = [&[], &[], &[], &["slow"], &["damping"], &["slow", "damping"], &["slow", "damping"], &["slow"], &[], &["damping"], &["slow", "damping"]];
    for (i, e) in expect.iter().enumerate() {
        assert_eq!(kinds(&v, i), e.to_vec(), "pole {i} = {}", poles[i]);
    }
    for x in &v {
        assert!(!x.to_string().is_empty());
        assert_eq!(x.pole, poles[x.index]);
    }
    // The wedge is |arg s| ≥ π − acos ζ: check the equivalence on a sweep of angles.
    for k in 0..=720 {
        let angle = PI * k as f64 / 720.0;
        let s = c(angle.cos(), angle.sin()) * 3.0 * sigma.max(1.0) * 10.0;
        let flagged = kinds(&region_violations(&[s], &region), 0).contains(&"damping");
        let in_wedge = angle >= PI - zeta.acos();
        if (angle - (PI - zeta.acos())).abs() > 1e-6 {
            assert_eq!(flagged, !in_wedge, "angle {angle}");
        }
    }
    // Natural-frequency constraint from a rise time.
    let mut spec = Specification::new(0.1, 2.0);
    spec.speed = Some(SpeedRequirement::RiseTime { seconds: 0.1 });
    let region = specification_region(&spec).unwrap();
    let wn = region.natural_frequency.unwrap();
    let v = region_violations(&[c(-0.9 * wn, 0.0), c(-1.1 * wn, 0.0)], &region);
    assert_eq!(kinds(&v, 0), vec!["frequency"]);
    assert!(kinds(&v, 1).is_empty());
}

#[test]
fn z_plane_mapping_is_consistent() {
    let spec = Specification::new(0.1, 2.0);
    let region = specification_region(&spec).unwrap();
    let t = 0.05;
    let sigma = region.min_decay_rate;
    // A grid of s points within the primary strip |Im s| < π/T: the s-test and the z-test
    // must give the same flags.
    let mut compared = 0;
    for i in 0..=60 {
        for k in -40..=40 {
            let s = c(-4.0 * sigma + 5.0 * sigma * i as f64 / 60.0, 0.95 * PI / t * k as f64 / 40.0);
            let z = discrete_poles(&[s], t).unwrap()[0];
            let from_s: Vec<_> = region_violations(&[s], &region).iter().map(|v| std::mem::discriminant(&v.kind)).collect();
            let from_z: Vec<_> = discrete_region_violations(&[z], &region, t).unwrap().iter().map(|v| std::mem::discriminant(&v.kind)).collect();
            assert_eq!(from_s, from_z, "s = {s}, z = {z}");
            // Decay circle: |z| ≤ e^{−σT} ⇔ Re s ≤ −σ.
            let r = discrete_decay_radius(&region, t).unwrap();
            let slow = from_s.contains(&std::mem::discriminant(&ViolationKind::TooSlow { decay_rate: 0.0 }));
            if ((z.norm() - r) / r).abs() > 1e-8 {
                assert_eq!(z.norm() > r, slow, "s = {s}");
            }
            compared += 1;
        }
    }
    assert!(compared > 4000);
    // The damping boundary: every point maps back to damping ζ; it starts at z = 1 and ends on
    // the negative real axis at radius e^{−πζ/√(1−ζ²)}, which is the overshoot itself.
    let pts = discrete_damping_boundary(&region, t, 501).unwrap();
    assert_eq!(pts.len(), 501);
    assert!((pts[0] - c(1.0, 0.0)).norm() < 1e-15);
    for z in &pts[1..pts.len() - 1] {
        let s = continuous_equivalent(*z, t);
        assert!((damping_ratio(s) - region.min_damping).abs() < 1e-12, "z = {z}");
        assert!(z.im >= 0.0);
    }
    let end = pts[pts.len() - 1];
    assert!(end.im.abs() < 1e-12 && end.re < 0.0, "end {end}");
    assert!((end.norm() - spec.overshoot).abs() < 1e-12, "end radius {} vs Mp {}", end.norm(), spec.overshoot);
    // Deadbeat z = 0 is inside; the dominant pair mapped to z is inside.
    assert!(discrete_region_violations(&[c(0.0, 0.0)], &region, t).unwrap().is_empty());
    let zp = discrete_poles(&region.dominant_pair, t).unwrap();
    assert!(discrete_region_violations(&zp, &region, t).unwrap().is_empty());
    // Round trip s → z → s in the strip.
    for s in [c(-1.0, 2.0), c(-3.0, -50.0), c(0.5, 10.0)] {
        let back = continuous_equivalent(discrete_poles(&[s], t).unwrap()[0], t);
        assert!((back - s).norm() < 1e-12 * s.norm());
    }
}

// ----------------------------------------------------------------------------
// dominant pair pattern, errors
// ----------------------------------------------------------------------------

#[test]
fn dominant_pair_pattern_from_a_specification() {
    let spec = Specification::new(0.1, 2.0);
    let params_dp = DominantPairParams::default();
    assert_eq!(params_dp, DominantPairParams { speed_factor: 5.0, spread: 0.01 });
    for order in 2..=6 {
        let chosen = poles_from_specification(&spec, order, &params_dp).unwrap();
        let poles = &chosen.poles;
        assert_eq!(poles.len(), order);
        assert_eq!(chosen.multiplicity, 1, "no pole may repeat");
        assert!(region_violations(poles, &chosen.region).is_empty());
        let sigma = -chosen.region.dominant_pair[0].re;
        let mut reals: Vec<f64> = poles.iter().filter(|p| p.im == 0.0).map(|p| -p.re / sigma).collect();
        reals.sort_by(f64::total_cmp);
        for (k, r) in reals.iter().enumerate() {
            assert!((r - 5.0 * (1.0 + 0.01 * k as f64)).abs() < 1e-12, "order {order}: {r}");
        }
        // Second-order approximation checked by simulation (partial fractions): the extra
        // poles add a little lag and take off a little overshoot. Measured, with loose bounds.
        let y = partial_fraction_step(poles);
        let h = 2.0 / 20_000.0;
        let ts = grid_settling(&y, h, 10.0, 0.02).unwrap();
        let os = (0..100_000).map(|k| y(k as f64 * h)).fold(f64::NEG_INFINITY, f64::max) - 1.0;
        println!("dominant pair, order {order}: settling {ts:.4} s (spec 2), overshoot {:.2} % (spec 10)", 100.0 * os);
        assert!((2.0 * 0.6..=2.0 * 1.1).contains(&ts), "order {order}: settling {ts}");
        assert!((0.05..=0.1 + 1e-9).contains(&os), "order {order}: overshoot {os}");
    }
    // A zero spread repeats the fast pole, and the multiplicity says so.
    let rep = poles_from_specification(&spec, 5, &DominantPairParams { speed_factor: 5.0, spread: 0.0 }).unwrap();
    assert_eq!(rep.multiplicity, 3);
}

#[test]
fn errors_are_descriptive() {
    let p = params();
    let cases: Vec<(Result<(), PatternError>, &str)> = vec![
        (damping_from_overshoot(0.0).map(|_| ()), "overshoot"),
        (damping_from_overshoot(1.0).map(|_| ()), "overshoot"),
        (damping_from_overshoot(f64::NAN).map(|_| ()), "overshoot"),
        (decay_rate_from_settling(0.0, 0.02, 0.5, SettlingRule::EnvelopeBound).map(|_| ()), "settling time"),
        (decay_rate_from_settling(1.0, 1.5, 0.5, SettlingRule::EnvelopeBound).map(|_| ()), "band"),
        (bessel_polynomial(0).map(|_| ()), "Bessel"),
        (bessel_polynomial(MAX_ORDER + 1).map(|_| ()), "Bessel"),
        (itae_polynomial(7).map(|_| ()), "ITAE"),
        (prototype_poles(Pattern::Binomial, 0, &p).map(|_| ()), "binomial"),
        (step_settling_time(&[c(0.5, 0.0)], 0.02, &p).map(|_| ()), "left half-plane"),
        (step_settling_time(&[c(0.0, 0.0)], 0.02, &p).map(|_| ()), "origin"),
        (step_settling_time(&[c(-1.0, 1.0)], 0.02, &p).map(|_| ()), "conjugate"),
        (half_power_frequency(&[], &p).map(|_| ()), "number of poles"),
        (discrete_poles(&[c(-1.0, 0.0)], 0.0).map(|_| ()), "sample time"),
        (dominant_pair_poles(&specification_region(&Specification::new(0.1, 1.0)).unwrap(), 4, &DominantPairParams { speed_factor: 0.5, spread: 0.01 }).map(|_| ()), "speed factor"),
        (scaled_prototype_poles(Pattern::Butterworth, 3, ScaleTarget::Bandwidth { rad_per_s: -1.0 }, &p).map(|_| ()), "bandwidth"),
    ];
    for (i, (r, word)) in cases.into_iter().enumerate() {
        let e = r.expect_err(&format!("case {i} should fail"));
        let text = e.to_string();
        assert!(text.contains(word), "case {i}: {text:?} should mention {word:?}");
    }
    // A step response too slow for the capped horizon reports NotSettled.
    let tiny = ResponseParams { max_horizon_doublings: 0, ..ResponseParams::default() };
    let slow = [c(-1e-3, 1.0), c(-1e-3, -1.0)];
    assert!(matches!(step_settling_time(&slow, 0.02, &tiny), Err(PatternError::NotSettled { .. })));
}
