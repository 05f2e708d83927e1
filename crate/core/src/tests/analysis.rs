//! Unit tests of [`crate::analysis`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn double_integrator_is_controllable() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 2);
    assert!(r.is_complete() && r.stable_hidden_modes && r.consistent);
    assert!(r.modes.iter().all(|m| m.verdict == ModeVerdict::Yes && m.margin > 0.1));
}

#[test]
fn identical_subsystems_share_one_input() {
    // Two copies of x' = -x + u driven by the same input: one direction is unreachable.
    let a = DMatrix::from_row_slice(2, 2, &[-1.0, 0.0, 0.0, -1.0]);
    let b = DMatrix::from_row_slice(2, 1, &[1.0, 1.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 1);
    assert_eq!(r.hidden_modes.len(), 1);
    assert!((r.hidden_modes[0].re + 1.0).abs() < 1e-12);
    assert!(r.stable_hidden_modes);
    assert_eq!(r.modes.iter().filter(|m| m.verdict == ModeVerdict::No).count(), 1);
    assert!(r.consistent);
}

#[test]
fn unstable_hidden_mode_is_not_stabilizable() {
    let a = DMatrix::from_row_slice(2, 2, &[-1.0, 0.0, 0.0, 2.0]);
    let b = DMatrix::from_row_slice(2, 1, &[1.0, 0.0]);
    let r = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    assert_eq!(r.rank, 1);
    assert!(!r.stable_hidden_modes);
    assert!((r.hidden_modes[0].re - 2.0).abs() < 1e-12);
}

#[test]
fn staircase_is_orthogonal_and_block_triangular() {
    let a = DMatrix::from_row_slice(3, 3, &[1.0, 2.0, 0.5, -1.0, 0.3, 2.0, 0.0, 0.0, -4.0]);
    let b = DMatrix::from_row_slice(3, 1, &[1.0, 0.0, 0.0]);
    let st = staircase(&a, &b, 1e-12).unwrap();
    assert_eq!(st.dimension, 2);
    let t = &st.transform;
    assert!((t.transpose() * t - DMatrix::identity(3, 3)).norm() < 1e-14);
    assert!((t.transpose() * &a * t - &st.a).norm() < 1e-13 * a.norm());
    assert_eq!(st.a[(2, 0)], 0.0);
    assert_eq!(st.a[(2, 1)], 0.0);
    assert!((st.a[(2, 2)] + 4.0).abs() < 1e-13);
}

#[test]
fn extreme_scales_give_the_same_verdicts_and_margins() {
    // (σA, σB) has the controllability and relative margins of (A, B), and eigenvalues σλ.
    // At σ = 2^600 the squares inside the SVDs would overflow without the internal rescaling.
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -6.0, -11.0, -6.0]);
    let b = DMatrix::from_row_slice(3, 1, &[0.0, 0.0, 1.0]);
    let plain = controllability_report(&a, &b, AnalysisParams::default()).unwrap();
    for e in [600, -600] {
        let sigma = 2f64.powi(e);
        let r = controllability_report(&(&a * sigma), &(&b * sigma), AnalysisParams::default()).unwrap();
        assert_eq!(r.rank, plain.rank);
        for (p, q) in plain.modes.iter().zip(&r.modes) {
            assert_eq!(p.margin, q.margin, "margins are exactly those of the unscaled pair");
            assert!((q.pole / sigma - p.pole).norm() <= 1e-12 * p.pole.norm().max(1.0));
        }
    }
}

/// SplitMix64 uniform numbers in [−1, 1).
fn seeded(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    2.0 * ((z >> 11) as f64 / (1u64 << 53) as f64) - 1.0
}

#[test]
fn reduced_pbh_margins_agree_with_one_svd_per_mode_up_to_n_60() {
    // The margins of the report (Hessenberg once, O(n²) per mode) against a full SVD of
    // [A − λI, B] per mode, in the data's units and in the balanced, column-scaled units of the
    // verdict; plants with a weakly reached block (B's rows scaled by 1e-6) and with an
    // unreached one (zero rows and no coupling) included.
    let mut state = 0x5EED_2026u64;
    let mut compared = 0;
    for &(n, m, kind) in &[(3, 1, 0), (10, 2, 0), (10, 2, 1), (25, 3, 0), (25, 2, 2), (40, 4, 0), (40, 1, 1), (60, 3, 0), (60, 2, 2)] {
        let mut a = DMatrix::from_fn(n, n, |_, _| seeded(&mut state) / (n as f64).sqrt());
        let mut b = DMatrix::from_fn(n, m, |_, _| seeded(&mut state));
        let tail = n / 3;
        match kind {
            1 => b.rows_mut(n - tail, tail).scale_mut(1e-6),
            2 => {
                b.rows_mut(n - tail, tail).fill(0.0);
                a.view_mut((n - tail, 0), (tail, n - tail)).fill(0.0);
            }
            _ => {}
        }
        let params = AnalysisParams::default();
        let report = controllability_report(&a, &b, params).unwrap();
        // The data's own units.
        let mut ab = DMatrix::<f64>::zeros(n, n + m);
        ab.columns_mut(0, n).copy_from(&a);
        ab.columns_mut(n, m).copy_from(&b);
        let scale = try_norm2(&ab, SvdParams::default()).unwrap();
        // The verdict's units (as report_in_range builds them).
        let d = crate::linalg::eigen::balancing_scale(&a, 100);
        let a_bal = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
        let b_bal = DMatrix::from_fn(n, m, |i, j| b[(i, j)] / d[i]);
        let (b_pbh, scale_pbh) = pbh_input_scaling(&a_bal, &b_bal).unwrap();
        for md in &report.modes {
            let raw = dense_sigma_min(&a, &b, md.pole).unwrap() / scale;
            let bal = dense_sigma_min(&a_bal, &b_pbh, md.pole).unwrap() / scale_pbh;
            for (ours, svd, what) in [(md.unscaled_margin, raw, "data units"), (md.margin, bal, "balanced")] {
                // Three significant figures, or both at rounding level (1e-12 of the scale).
                let close = (ours - svd).abs() <= 5e-4 * svd || (ours.max(svd) <= 1e-12);
                assert!(close, "n {n} m {m} kind {kind}, mode {}: {what} margin {ours:.6e}, SVD {svd:.6e}", md.pole);
            }
            compared += 1;
        }
        // The verdicts follow from the margins as before: weak exactly where the SVD's is weak.
        for md in &report.modes {
            if md.verdict != ModeVerdict::No {
                let bal = dense_sigma_min(&a_bal, &b_pbh, md.pole).unwrap() / scale_pbh;
                assert_eq!(md.verdict == ModeVerdict::Weak, bal <= params.weak_margin, "n {n} kind {kind} mode {}", md.pole);
            }
        }
    }
    assert_eq!(compared, 3 + 10 + 10 + 25 + 25 + 40 + 40 + 60 + 60);
}
