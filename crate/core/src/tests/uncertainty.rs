//! Unit tests of [`crate::uncertainty`].
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

#[test]
fn same_seed_same_cloud_and_a_known_boundary() {
    // x' = a x + u with u = −k x: the closed-loop pole is a(1 + r u) − k with u uniform on
    // [−1, 1], stable iff u < (k/a − 1)/r. With a = 1, k = 1.5, r = 1: P(stable) = 0.75.
    let a = DMatrix::from_element(1, 1, 1.0);
    let b = DMatrix::from_element(1, 1, 1.0);
    let k = 1.5;
    let model = UncertaintyModel { entries: vec![EntryUncertainty { matrix: PlantMatrix::A, row: 0, column: 0, relative: 1.0 }], matrices: Vec::new() };
    let close = |pa: &DMatrix<f64>, pb: &DMatrix<f64>| Some(pa - pb * k);
    let n = 4000;
    let c1 = sample_cloud(&a, &b, &model, n, 7, LoopDomain::Continuous, &close);
    let c2 = sample_cloud(&a, &b, &model, n, 7, LoopDomain::Continuous, &close);
    assert_eq!(c1, c2);
    // Binomial band: |p̂ − p| ≤ 4 √(p (1 − p) / n) (a 4σ band; a fair test fails with
    // probability about 6e-5).
    let p = 0.75;
    let band = 4.0 * (p * (1.0 - p) / n as f64).sqrt();
    assert!((c1.stable_fraction() - p).abs() <= band, "{} vs {p} ± {band}", c1.stable_fraction());
    // The worst decay rate is k − a(1 + r) = −0.5 (approached from above).
    assert!(c1.worst_decay_rate > -0.5 && c1.worst_decay_rate < -0.49, "{}", c1.worst_decay_rate);
}

#[test]
fn norm_bounded_perturbation_stays_in_its_ball() {
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, -2.0, -3.0]);
    let model = UncertaintyModel { entries: Vec::new(), matrices: vec![(PlantMatrix::A, 0.1)] };
    let mut rng = SplitMix::new(3);
    let na = try_norm2(&a, SvdParams::default()).unwrap();
    for _ in 0..200 {
        let (pa, _) = perturbed(&a, &a, &model, &mut rng);
        let d = try_norm2(&(pa - &a), SvdParams::default()).unwrap();
        assert!(d <= 0.1 * na * (1.0 + 1e-12), "{d}");
    }
}

#[test]
fn the_sampler_hands_out_the_seeded_plants_and_counts_failures() {
    // The plants the sampler draws are the seeded sequence of `perturbed`, one per call and
    // `samples` in all; a plant whose loop cannot be closed is handed out and counted as failed.
    let a = DMatrix::from_row_slice(2, 2, &[0.0, 1.0, -2.0, -3.0]);
    let b = DMatrix::from_row_slice(2, 1, &[0.0, 1.0]);
    let model = UncertaintyModel { entries: vec![EntryUncertainty { matrix: PlantMatrix::A, row: 1, column: 0, relative: 0.5 }], matrices: vec![(PlantMatrix::B, 0.1)] };
    // Closing fails whenever the perturbed A(2, 1) is below its nominal −2.
    let close = |pa: &DMatrix<f64>, _: &DMatrix<f64>| (pa[(1, 0)] >= -2.0).then(|| pa.clone());
    let mut sampler = CloudSampler::new(50, 11);
    let mut rng = SplitMix::new(11);
    let mut below = 0;
    while let Some((pa, pb)) = sampler.draw(&a, &b, &model, LoopDomain::Continuous, &close) {
        let (ea, eb) = perturbed(&a, &b, &model, &mut rng);
        assert_eq!((pa.clone(), pb), (ea, eb), "plant {}", sampler.drawn());
        below += usize::from(pa[(1, 0)] < -2.0);
    }
    assert_eq!((sampler.drawn(), sampler.samples()), (50, 50));
    assert!(below > 5 && below < 45, "{below} of 50 below: the test needs both kinds");
    let cloud = sampler.finish();
    assert_eq!((cloud.failed, cloud.poles.len()), (below, 50 - below));
    assert_eq!(cloud, sample_cloud(&a, &b, &model, 50, 11, LoopDomain::Continuous, &close));
}
