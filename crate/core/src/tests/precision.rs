//! Unit tests of [`crate::precision`].
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn a_rotation_keeps_its_form_and_its_rounded_poles_are_known() {
    // F = [[a, −b], [b, a]] has the poles a ± jb; rounded entry by entry it keeps the form, so
    // the rounded poles are fl(a) ± j fl(b) (checkable by hand). With a pole pair of 1 rad/s at
    // ζ = 0.05 sampled at T = 1e-5 s, a = r cos θ, b = r sin θ with r = e^{−ζωT}, θ = ωT√(1−ζ²):
    // float32's spacing near 1 (6e-8) is comparable with 1 − r = 5e-7, so the damping moves by
    // several per cent — the sensitivity of poles near z = 1 at high sample rates.
    let (zeta, w, t) = (0.05f64, 1.0f64, 1e-5f64);
    let r = (-zeta * w * t).exp();
    let th = w * t * (1.0 - zeta * zeta).sqrt();
    let (a, b) = (r * th.cos(), r * th.sin());
    let f = DMatrix::from_row_slice(2, 2, &[a, -b, b, a]);
    let check = recheck(&f, &round_to_f32(&f), t).unwrap();
    let (fa, fb) = (a as f32 as f64, b as f32 as f64);
    let upper = check.poles.iter().find(|p| p.designed.im > 0.0).unwrap();
    assert_eq!(upper.rounded, Complex64::new(fa, fb), "eigenvalues of the rounded rotation");
    let (d0, d1) = upper.damping.unwrap();
    assert!((d0 - zeta).abs() < 1e-9, "{d0}");
    let expected = -(Complex64::new(fa, fb).ln() / t).re / (Complex64::new(fa, fb).ln() / t).norm();
    assert!((d1 - expected).abs() < 1e-12, "{d1} vs {expected}");
    assert!((check.worst_damping_fraction - d1 / d0).abs() < 1e-12);
    assert!((d1 / d0 - 1.0).abs() > 0.01, "the damping moves by more than 1 %: {}", d1 / d0);
    // At T = 1e-2 the same pair is insensitive.
    let t = 1e-2;
    let r = (-zeta * w * t).exp();
    let th = w * t * (1.0 - zeta * zeta).sqrt();
    let f = DMatrix::from_row_slice(2, 2, &[r * th.cos(), -r * th.sin(), r * th.sin(), r * th.cos()]);
    let check = recheck(&f, &round_to_f32(&f), t).unwrap();
    assert!((check.worst_damping_fraction - 1.0).abs() < 1e-3, "{}", check.worst_damping_fraction);
    assert!(check.stable && check.designed_stable);
}

#[test]
fn quantisation_keeps_full_scale_and_states_the_shift() {
    // 3.7 needs a shift of 2 (3.7 / 4 < 1 − 2^−15); Q15 integers are round(v · 2^15 / 4).
    let m = DMatrix::from_row_slice(1, 3, &[3.7, -0.01, 1.0]);
    let q = quantise(&m, 16).unwrap();
    assert_eq!(q.shift, 2);
    assert_eq!(q.ints, vec![(3.7f64 * 8192.0).round() as i64, (-0.01f64 * 8192.0).round() as i64, 8192]);
    assert!((q.values[(0, 0)] - 3.7).abs() <= 0.5 / 8192.0);
    // A full-scale −1 uses the most negative integer; tiny matrices are scaled up.
    let q = quantise(&DMatrix::from_row_slice(1, 2, &[1e-6, -2e-6]), 32).unwrap();
    assert!(q.shift < -15, "{}", q.shift);
    // A dynamic range beyond Q15 with one shift is refused with the entry named.
    let e = quantise(&DMatrix::from_row_slice(1, 2, &[1000.0, 0.001]), 16).unwrap_err();
    assert!(matches!(e, QuantiseError::BelowResolution { col: 1, .. }), "{e:?}");
    // With 32 bits the same matrix fits: each stored value is its integer times one step
    // 2^(shift − 31), within half a step of the entry.
    let m = DMatrix::from_row_slice(1, 2, &[1000.0, 0.001]);
    let q = quantise(&m, 32).unwrap();
    let step = 2f64.powi(q.shift - 31);
    for (j, v) in m.iter().enumerate() {
        assert_eq!(q.values[(0, j)], q.ints[j] as f64 * step, "entry {j}: {q:?}");
        assert!((q.values[(0, j)] - v).abs() <= 0.5 * step, "entry {j}: {} vs {v} (step {step})", q.values[(0, j)]);
    }
    assert!(q.ints[1] != 0, "0.001 is not lost at 32 bits: {q:?}");
}
