//! Parameter uncertainty: a seeded Monte-Carlo sample of the closed loop with the gains held
//! fixed, and the cloud of closed-loop poles it gives.
//!
//! # Equation
//! The plant `(A + ΔA, B + ΔB)` with
//! - marked entries `Δp = r |p| u`, `u` uniform on `[−1, 1]` (independent per entry), and
//! - whole matrices `ΔM = r ‖M‖₂ v G / ‖G‖₂`, `G` with independent standard normal entries and
//!   `v` uniform on `[0, 1]` (so `‖ΔM‖₂ ≤ r ‖M‖₂`, every direction equally likely),
//!
//! closed with the fixed controller by a caller-supplied map `(A, B) ↦ A_cl`. Each sample's
//! poles are the eigenvalues of `A_cl`; a sample is stable when every pole is inside the
//! stability boundary by more than [`STABILITY_MARGIN`] relative to its own size.
//!
//! # Method
//! Uniform and normal deviates from the SplitMix64 generator (Steele, Lea & Flood, "Fast
//! splittable pseudorandom number generators", OOPSLA 2014) with Box–Muller; the same seed
//! gives the same cloud on every platform.
//!
//! # Cost
//! One closed-loop build and one eigenvalue computation (`O(n³)`) per sample; [`CloudSampler`]
//! draws them one at a time.
//!
//! # Failure modes
//! A sample whose closed loop cannot be built or whose eigenvalues do not converge counts as
//! failed and is reported (`failed`), never as stable.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::eigen::try_eigenvalues;
use crate::linalg::svd::{try_norm2, SvdParams};

/// A pole counts as stable when `Re λ < −STABILITY_MARGIN |λ|` (continuous) or
/// `|z| < 1 − STABILITY_MARGIN` (sampled): a root on the boundary within rounding is unstable.
pub const STABILITY_MARGIN: f64 = 1e-9;

/// Largest number of samples.
pub const MAX_SAMPLES: usize = 100_000;

/// A plant matrix that can be uncertain.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum PlantMatrix {
    A,
    B,
}

/// One uncertain entry (0-based) by a relative amount.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EntryUncertainty {
    pub matrix: PlantMatrix,
    pub row: usize,
    pub column: usize,
    pub relative: f64,
}

/// What is uncertain, and by how much.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct UncertaintyModel {
    pub entries: Vec<EntryUncertainty>,
    /// Whole matrices, norm-bounded relative to their own 2-norm.
    pub matrices: Vec<(PlantMatrix, f64)>,
}

/// The SplitMix64 generator.
#[derive(Debug, Clone)]
pub struct SplitMix(u64);

impl SplitMix {
    pub fn new(seed: u64) -> Self {
        SplitMix(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    /// Uniform on `[0, 1)`.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Standard normal (Box–Muller).
    pub fn normal(&mut self) -> f64 {
        let u = 1.0 - self.uniform();
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// One perturbed plant.
pub fn perturbed(a: &DMatrix<f64>, b: &DMatrix<f64>, model: &UncertaintyModel, rng: &mut SplitMix) -> (DMatrix<f64>, DMatrix<f64>) {
    let (mut pa, mut pb) = (a.clone(), b.clone());
    for e in &model.entries {
        let u = 2.0 * rng.uniform() - 1.0;
        let target = match e.matrix {
            PlantMatrix::A => &mut pa,
            PlantMatrix::B => &mut pb,
        };
        if let Some(v) = target.get_mut((e.row, e.column)) {
            *v += e.relative * v.abs() * u;
        }
    }
    for (which, r) in &model.matrices {
        let nominal = match which {
            PlantMatrix::A => a,
            PlantMatrix::B => b,
        };
        let g = DMatrix::from_fn(nominal.nrows(), nominal.ncols(), |_, _| rng.normal());
        let v = rng.uniform();
        let (gn, mn) = (try_norm2(&g, SvdParams::default()).unwrap_or(0.0), try_norm2(nominal, SvdParams::default()).unwrap_or(0.0));
        if gn > 0.0 {
            let delta = g * (r * mn * v / gn);
            match which {
                PlantMatrix::A => pa += delta,
                PlantMatrix::B => pb += delta,
            }
        }
    }
    (pa, pb)
}

/// The closed loop's domain.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LoopDomain {
    Continuous,
    Sampled { sample_time: f64 },
}

impl LoopDomain {
    /// Decay rate (1/s, negative when growing) and damping ratio of one pole.
    pub fn decay_and_damping(self, p: Complex64) -> (f64, f64) {
        let s = match self {
            LoopDomain::Continuous => p,
            LoopDomain::Sampled { sample_time } => {
                if p.norm() == 0.0 {
                    return (f64::INFINITY, 1.0);
                }
                p.ln() / sample_time
            }
        };
        let damping = if s.norm() > 0.0 { -s.re / s.norm() } else { 0.0 };
        (-s.re, damping)
    }
    fn stable(self, p: Complex64) -> bool {
        match self {
            LoopDomain::Continuous => p.re < -STABILITY_MARGIN * p.norm(),
            LoopDomain::Sampled { .. } => p.norm() < 1.0 - STABILITY_MARGIN,
        }
    }
}

/// The sampled cloud.
#[derive(Debug, Clone, PartialEq)]
pub struct Cloud {
    /// Poles of each successful sample.
    pub poles: Vec<Vec<Complex64>>,
    /// Samples with every pole stable, and samples whose closed loop could not be computed.
    pub stable: usize,
    pub failed: usize,
    /// Smallest decay rate and damping ratio over every pole of every successful sample.
    pub worst_decay_rate: f64,
    pub worst_damping: f64,
}

impl Cloud {
    /// Stable samples over all samples.
    pub fn stable_fraction(&self) -> f64 {
        let total = self.poles.len() + self.failed;
        if total == 0 {
            0.0
        } else {
            self.stable as f64 / total as f64
        }
    }
}

/// The closed-loop matrix of a perturbed plant `(A, B)`, or `None` when it cannot be built.
pub type CloseLoop<'a> = &'a dyn Fn(&DMatrix<f64>, &DMatrix<f64>) -> Option<DMatrix<f64>>;

/// Samples `samples` perturbed plants and closes each with `close`.
pub fn sample_cloud(a: &DMatrix<f64>, b: &DMatrix<f64>, model: &UncertaintyModel, samples: usize, seed: u64, domain: LoopDomain, close: CloseLoop) -> Cloud {
    let mut sampler = CloudSampler::new(samples, seed);
    while sampler.draw(a, b, model, domain, close).is_some() {}
    sampler.finish()
}

/// The cloud drawn one perturbed plant at a time, so that a caller can spread it over time
/// (the page gives its main thread back between slices) or do more with each plant (the design
/// layer simulates it): the plants and the cloud are those of [`sample_cloud`] with the same
/// samples and seed.
#[derive(Debug, Clone)]
pub struct CloudSampler {
    rng: SplitMix,
    cloud: Cloud,
    drawn: usize,
    samples: usize,
}

impl CloudSampler {
    /// A sampler of `samples` plants (at most [`MAX_SAMPLES`]) from `seed`.
    pub fn new(samples: usize, seed: u64) -> Self {
        CloudSampler {
            rng: SplitMix::new(seed),
            cloud: Cloud { poles: Vec::new(), stable: 0, failed: 0, worst_decay_rate: f64::INFINITY, worst_damping: f64::INFINITY },
            drawn: 0,
            samples: samples.min(MAX_SAMPLES),
        }
    }

    /// Draws the next perturbed plant, closes it with `close` and adds its poles to the cloud
    /// (or counts it as failed); returns the plant, or `None` once every sample is drawn.
    pub fn draw(&mut self, a: &DMatrix<f64>, b: &DMatrix<f64>, model: &UncertaintyModel, domain: LoopDomain, close: CloseLoop) -> Option<(DMatrix<f64>, DMatrix<f64>)> {
        if self.drawn >= self.samples {
            return None;
        }
        self.drawn += 1;
        let (pa, pb) = perturbed(a, b, model, &mut self.rng);
        let Some(poles) = close(&pa, &pb).and_then(|acl| try_eigenvalues(&acl).ok()) else {
            self.cloud.failed += 1;
            return Some((pa, pb));
        };
        let cloud = &mut self.cloud;
        if poles.iter().all(|p| domain.stable(*p)) {
            cloud.stable += 1;
        }
        for p in &poles {
            let (decay, damping) = domain.decay_and_damping(*p);
            cloud.worst_decay_rate = cloud.worst_decay_rate.min(decay);
            cloud.worst_damping = cloud.worst_damping.min(damping);
        }
        cloud.poles.push(poles);
        Some((pa, pb))
    }

    /// Plants drawn so far.
    pub fn drawn(&self) -> usize {
        self.drawn
    }

    /// Plants to draw in all.
    pub fn samples(&self) -> usize {
        self.samples
    }

    /// The cloud of the plants drawn so far.
    pub fn finish(self) -> Cloud {
        self.cloud
    }
}

#[cfg(test)]
#[path = "tests/uncertainty.rs"]
mod tests;
