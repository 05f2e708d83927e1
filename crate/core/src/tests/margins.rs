//! Unit tests of [`crate::margins`] on loops whose margins are known in closed form (derived by
//! hand, stated beside each).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn m(rows: usize, cols: usize, v: &[f64]) -> DMatrix<f64> {
    DMatrix::from_row_slice(rows, cols, v)
}

#[test]
fn first_order_loop() {
    // L(s) = k/(s + a), a = 1, k = 3: |L| = 1 at ω_c = √(k² − a²) = √8; the phase there is
    // −atan(ω_c/a), so PM = 180° − atan(√8) = 109.47°; the phase never reaches −180° (no gain
    // margin); the delay margin is PM/ω_c. S − 1/2 = (s + a − k) / (2 (s + a + k)) has its
    // largest modulus 1/2 as ω → ∞, so the disk margin (skew 0) is α = 2.
    let l = state_feedback_loop(&m(1, 1, &[-1.0]), &m(1, 1, &[1.0]), &m(1, 1, &[3.0]), None);
    let r = input_margins(&l, 0.0, 400).unwrap();
    let wc = 8f64.sqrt();
    let pm = 180.0 - wc.atan().to_degrees();
    assert!((r.crossover.unwrap() - wc).abs() < 1e-9 * wc, "{:?}", r.crossover);
    assert!((r.phase_margin_deg.unwrap() - pm).abs() < 1e-7, "{:?}", r.phase_margin_deg);
    assert!((r.delay_margin.unwrap() - pm.to_radians() / wc).abs() < 1e-9, "{:?}", r.delay_margin);
    assert!(r.gain_margin_high.is_none() && r.gain_margin_low.is_none());
    // The grid ends at 10³ × the closed-loop pole's magnitude (a + k = 4), where
    // |S − 1/2| = ½ √((ω² + (a − k)²)/(ω² + (a + k)²)) is below ½ by about 2ak/ω² relative
    // (by hand): α is 2 from above, by at most 2 · 2ak/ω² ≈ 7.5e-7.
    assert!(r.disk_alpha >= 2.0 * (1.0 - 1e-12) && r.disk_alpha - 2.0 <= 1e-6, "{}", r.disk_alpha);
}

#[test]
fn third_order_lag_has_a_gain_margin() {
    // L(s) = k/(s + 1)³, k = 2: the phase is −180° where 3 atan ω = 180°, ω = √3, and there
    // |L| = k/8, so the gain margin is 8/k = 4; |L| = 1 at ω_c = √(2^{2/3} − 1), where the phase
    // is −3 atan ω_c, so PM = 180° − 3 atan(ω_c).
    let a = m(3, 3, &[-1.0, 1.0, 0.0, 0.0, -1.0, 1.0, 0.0, 0.0, -1.0]);
    let b = m(3, 1, &[0.0, 0.0, 1.0]);
    let l = state_feedback_loop(&a, &b, &m(1, 3, &[2.0, 0.0, 0.0]), None);
    let r = input_margins(&l, 0.0, 400).unwrap();
    assert!((r.gain_margin_high.unwrap() - 4.0).abs() < 1e-8, "{:?}", r.gain_margin_high);
    let wc = (2f64.powf(2.0 / 3.0) - 1.0).sqrt();
    assert!((r.crossover.unwrap() - wc).abs() < 1e-9, "{:?}", r.crossover);
    assert!((r.phase_margin_deg.unwrap() - (180.0 - 3.0 * wc.atan().to_degrees())).abs() < 1e-7);
    // The disk margin never promises more than the classical margins: its gain range lies
    // within [0, 4] and its phase within the phase margin.
    assert!(r.disk_gain_range[1] <= 4.0 + 1e-9 && r.disk_phase_deg <= r.phase_margin_deg.unwrap() + 1e-9, "{r:?}");
}

#[test]
fn double_integrator_under_state_feedback() {
    // K = [1, √2] on ẍ = u: L(s) = (√2 s + 1)/s², |L| = 1 where ω⁴ = 2ω² + 1, ω_c² = 1 + √2;
    // the phase there is atan(√2 ω_c) − 180°, so PM = atan(√2 ω_c) = 65.53°. The loop has two
    // integrators: S is evaluated from the closed loop, finite at ω = 0 (S(0) = 0).
    let a = m(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = m(2, 1, &[0.0, 1.0]);
    let l = state_feedback_loop(&a, &b, &m(1, 2, &[1.0, 2f64.sqrt()]), None);
    assert!(l.sensitivity(0.0).unwrap()[(0, 0)].norm() < 1e-15);
    let r = input_margins(&l, 0.0, 400).unwrap();
    let wc = (1.0 + 2f64.sqrt()).sqrt();
    assert!((r.crossover.unwrap() - wc).abs() < 1e-9);
    assert!((r.phase_margin_deg.unwrap() - (2f64.sqrt() * wc).atan().to_degrees()).abs() < 1e-7);
}

#[test]
fn loop_at_a_time_closes_the_other_inputs() {
    // Two decoupled first-order loops: opening input 0 with input 1 closed leaves input 0's
    // own loop, k₀/(s + 1).
    let a = m(2, 2, &[-1.0, 0.0, 0.0, -2.0]);
    let b = DMatrix::identity(2, 2);
    let k = m(2, 2, &[3.0, 0.0, 0.0, 5.0]);
    let l = state_feedback_loop(&a, &b, &k, None).loop_at(0).unwrap();
    let w = 0.7;
    let v = l.loop_response(w).unwrap()[(0, 0)];
    let want = Complex64::new(3.0, 0.0) / Complex64::new(1.0, w);
    assert!((v - want).norm() < 1e-14, "{v} vs {want}");
}

#[test]
fn sigma_max_fast_routes_agree_with_the_svd() {
    // The closed form (2 × 2) and the largest eigenvalue of the Gram matrix (3 × 3 … 16 × 16,
    // and 3 × 5, 5 × 3) against the SVD on seeded complex matrices, including nearly rank-one
    // and widely scaled ones.
    let mut state = 0xC0FFEEu64;
    let mut next = || {
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        2.0 * ((z >> 11) as f64 / (1u64 << 53) as f64) - 1.0
    };
    let mut compared = 0;
    for k in 2..=16 {
        for case in 0..20 {
            let scale = 10f64.powi(case % 7 - 3);
            let mut m = DMatrix::<Complex64>::from_fn(k, k, |_, _| Complex64::new(next(), next()) * scale);
            if case % 5 == 0 {
                // Nearly rank one: u vᴴ plus 1e-9.
                let u: Vec<Complex64> = (0..k).map(|_| Complex64::new(next(), next())).collect();
                let v: Vec<Complex64> = (0..k).map(|_| Complex64::new(next(), next())).collect();
                m = DMatrix::from_fn(k, k, |i, j| (u[i] * v[j].conj() + Complex64::new(1e-9 * next(), 0.0)) * scale);
            }
            let svd = sigma_max_svd(&m);
            let fast = sigma_max(&m);
            assert!((fast - svd).abs() <= 1e-13 * svd, "k {k} case {case}: {fast} vs {svd}");
            compared += 1;
        }
    }
    for (r, c) in [(3, 5), (5, 3), (1, 4), (4, 1)] {
        let m = DMatrix::<Complex64>::from_fn(r, c, |_, _| Complex64::new(next(), next()));
        let (svd, fast) = (sigma_max_svd(&m), sigma_max(&m));
        assert!((fast - svd).abs() <= 1e-13 * svd, "{r} × {c}: {fast} vs {svd}");
        compared += 1;
    }
    assert_eq!(compared, 304);
}

#[test]
fn the_lower_bound_started_from_the_upper_bounds_minimiser_meets_it() {
    // μ over diagonal complex Δ: the upper bound inf_D σ̄(D M D⁻¹) and the lower bound
    // max_Q ρ(Q M) (Doyle 1982). The quick route alone (the phase search from the phases the
    // upper bound's singular vectors point to) must never exceed the upper bound, and should
    // meet it to EXACT_GAP in most cases (up to three inputs the two are equal; the module
    // header quotes 87 of 90).
    let mut state = 0x10AE_5EEDu64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    let (mut met_quickly, mut cases) = (0, 0);
    for k in 2..=4usize {
        for _ in 0..30 {
            let m = DMatrix::from_fn(k, k, |_, _| Complex64::new(next(), next()));
            let (upper, scaling) = disk::minimise_bound(&m, None, disk::Effort { step: 0.5, restarts: 4, budget: 150, tolerance: 1e-12 });
            let quick = disk::mu_lower_bound_from_minimiser(&m, &scaling).expect("a start");
            assert!(quick <= upper * (1.0 + 1e-9), "k {k}: lower {quick} above upper {upper}");
            let meets = upper - quick <= disk::EXACT_GAP * upper;
            met_quickly += usize::from(meets);
            cases += 1;
        }
    }
    assert_eq!(cases, 90);
    eprintln!("μ lower bound from the upper bound's minimiser: met the upper bound in {met_quickly} of {cases}");
    // Up to three inputs the bounds are equal (Doyle 1982): they should meet in most k ≤ 3 cases.
    assert!(met_quickly >= 80, "only {met_quickly} of {cases} met");
}
