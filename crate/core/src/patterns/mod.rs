//! Choosing closed-loop poles: from time-response specifications, and from prototype
//! patterns scaled to a settling time or a bandwidth.
//!
//! Everything here is a *starting point* for a design. The second-order formulas
//! below are exact only for a pure pair of complex poles with no zeros; for any
//! real closed loop (more poles, zeros, saturation) they are approximations that
//! must be confirmed by simulating the designed loop. The prototype patterns are
//! scaled by simulating their own normalised step response, so their settling
//! claim holds by construction for the all-pole transfer function `p(0)/p(s)` —
//! not for a plant whose zeros or other dynamics change the response.
//!
//! # Specification → region of the s-plane ([`specification_region`])
//!
//! For the standard second-order step response `ωₙ² / (s² + 2ζωₙ s + ωₙ²)` with
//! `0 < ζ < 1` (common practice; e.g. Franklin, Powell & Emami-Naeini, *Feedback
//! Control of Dynamic Systems*, Pearson, the section on time-domain specifications; from
//! memory):
//!
//! - **overshoot** `Mp = exp(−πζ/√(1−ζ²))`, inverted exactly as
//!   `ζ = −ln Mp / √(π² + ln² Mp)` ([`damping_from_overshoot`]). A pole `s` has
//!   damping `ζ(s) = −Re s / |s|`; `ζ(s) ≥ ζ_min` is the wedge `|arg s| ≥ π − acos ζ_min`.
//! - **settling** into a band `±b` of the final value. The response is
//!   `1 − e^{−σt} sin(ω_d t + φ)/√(1−ζ²)` with `σ = ζωₙ`, so its error never exceeds
//!   the envelope `e^{−σt}/√(1−ζ²)`. Requiring the envelope to be inside the band at
//!   `T_s` gives [`SettlingRule::EnvelopeBound`]:
//!   `σ = −ln(b·√(1−ζ²)) / T_s`. The textbook rule of thumb drops the `√(1−ζ²)`:
//!   [`SettlingRule::RuleOfThumb`], `σ = −ln(b) / T_s`, i.e. `4.61/T_s` (1 %),
//!   `3.91/T_s` (2 %, usually rounded to 4), `3.00/T_s` (5 %) (Franklin, Powell &
//!   Emami-Naeini quote `t_s ≈ 4.6/σ` for 1 %; other texts 4/σ for 2 % and 3/σ for
//!   5 %; from memory). **This module uses the envelope bound by default**: it is the
//!   only one of the two that *guarantees* the pure pair settles by `T_s` (the
//!   envelope bounds the error at every instant), whereas the rule of thumb is
//!   optimistic by the factor `1/√(1−ζ²)` inside the logarithm (e.g. `σ` 8 % too small
//!   at ζ = 0.7, 2 %).
//! - **rise time** (10 %–90 %): `ωₙ = t̂_r(ζ) / t_r`, where `t̂_r(ζ)` is the exact rise
//!   time of the pair with `ωₙ = 1`, found by bisection on its closed-form step
//!   response (monotone up to the first peak at `π/√(1−ζ²)`). The textbook
//!   `t_r ≈ 1.8/ωₙ` (Franklin et al., from memory) is a rough average of `t̂_r(ζ)`,
//!   which runs from 1.64 at ζ = 0.5 to 2.13 at ζ = 0.7.
//! - **bandwidth** (−3 dB, `|H(jω)|² = 1/2`): `ω_BW = ωₙ √(1 − 2ζ² + √(4ζ⁴ − 4ζ² + 2))`,
//!   exact for the pair (common practice; it solves the quadratic in `ω²`).
//!
//! The [`Region`] is `Re s ≤ −σ`, `ζ(s) ≥ ζ_min` and, when a speed is given,
//! `|s| ≥ ωₙ`; [`region_violations`] lists every pole outside, constraint by
//! constraint. Its dominant pair is `ωₙ (−ζ ± j√(1−ζ²))` with
//! `ωₙ = max(σ/ζ, ωₙ from rise time or bandwidth)`: the corner of the region.
//!
//! **z-plane.** With sample time `T`, a discrete pole `z` is inside the region iff
//! `s = ln z / T` (principal logarithm) is ([`discrete_region_violations`]); this is
//! the inverse of `z = e^{sT}` ([`discrete_poles`]) for `|Im s| < π/T`. The decay line
//! maps to the circle `|z| = e^{−σT}` ([`discrete_decay_radius`]), the damping line to
//! a logarithmic spiral from `z = 1` to `z = −e^{−πζ/√(1−ζ²)}` (radius `Mp` there),
//! sampled by [`discrete_damping_boundary`].
//!
//! # Prototype patterns ([`prototype_poles`], [`scaled_prototype_poles`])
//!
//! All are monic polynomials `p(s)`, used as the all-pole transfer function
//! `p(0)/p(s)` (unit DC gain). Orders 1 ..= [`MAX_ORDER`] unless stated.
//!
//! - **Bessel** (maximally flat group delay): the reverse Bessel polynomial
//!   `θₙ(s) = Σₖ (2n−k)! / (2^{n−k} k! (n−k)!) sᵏ` (Krall & Frink, "A new class of
//!   orthogonal polynomials: the Bessel polynomials", Trans. AMS 65, 1949; Grosswald,
//!   *Bessel Polynomials*, Springer LNM 698, 1978; from memory), computed exactly in
//!   integers ([`bessel_polynomial`]); roots from a companion matrix. Its
//!   normalisation must be named — mixing them up is a factor-of-two error — so
//!   [`BesselNormalisation`] offers: unit group delay at DC (`θₙ` as is, since
//!   `a₁ = a₀`), half power at 1 rad/s (scale found by bisection on
//!   `|H(jω)|² = 1/2`), a 1 s settling time (scale found by simulating the step
//!   response once), and a unit constant term (geometric mean of `|poles|` = 1,
//!   whose high-frequency asymptote equals a Butterworth pattern's).
//! - **Butterworth** (maximally flat magnitude): `pₖ = exp(j(π/2 + (2k−1)π/(2n)))`,
//!   `k = 1…n`, exactly on the unit circle (half power at 1 rad/s; common practice).
//! - **ITAE** standard forms of Graham & Lathrop, "The synthesis of optimum transient
//!   response: criteria and standard forms", Trans. AIEE 72(II):273–288, 1953, for
//!   `n = 1…6` with `ω₀ = 1` — **coefficients recalled from memory** (as commonly
//!   reprinted, e.g. in Dorf & Bishop, *Modern Control Systems*), see
//!   [`itae_polynomial`]. They are not exact minima of the ITAE cost (they were
//!   obtained with the computing tools of 1953); the tests measure how close they are.
//! - **binomial** `(s + 1)ⁿ`: all poles at −1. Repeated poles are sensitive: a
//!   perturbation `ε` of the polynomial moves an n-fold root by about `ε^{1/n}`, and
//!   state feedback with `m` inputs can give one eigenvalue at most `rank B`
//!   independent eigenvectors, so placement refuses a multiplicity above `rank B`
//!   (see [`crate::place`]). [`Prototype::multiplicity`] reports it so the caller can
//!   check, or spread the poles.
//! - **dominant pair + faster poles** ([`dominant_pair_poles`]): the region's dominant
//!   pair and `n − 2` real poles at `−f·σ_pair·(1 + k·δ)`, `k = 0…n−3`, with
//!   `f` = [`DominantPairParams::speed_factor`] (default 5) and `δ` =
//!   [`DominantPairParams::spread`] (default 1 %) so that no pole repeats. The extra
//!   poles slow the response a little: confirm by simulation.
//!
//! **Scaling.** Replacing `p(s)` by `p(s/k)` multiplies every pole by `k` and divides
//! every time by `k`. To a settling time `T_s` in band `b`: `k = t̂_s / T_s`, where
//! `t̂_s` is the settling time of the normalised pattern's simulated step response.
//! To a bandwidth `ω_b`: `k = ω_b / ω̂₃`, with `ω̂₃` the normalised pattern's
//! half-power frequency.
//!
//! # Method of the step-response simulation
//! The all-pole transfer function is realised as a cascade of unit-DC-gain sections,
//! `−p/(s − p)` per real pole and `ω²/(s² − 2 Re p s + ω²)` (`ω = |p|`, states
//! `y, y'/ω`) per complex pair — well scaled for any pole set, repeated poles
//! included. The unit step is propagated exactly on a uniform grid by the zero-order
//! hold `x ← Φ x + Γ` ([`crate::linalg::expm::try_zero_order_hold`]; exact, since the
//! step is constant). The settling time is the last instant at which `|y − 1| > b`:
//! the last grid interval where the response enters the band for good is found on
//! the grid, then the crossing inside it is found by bisection on the exactly
//! propagated state `x(tᵢ + τ) = Φ(τ) xᵢ + Γ(τ)`. The horizon starts at
//! `(ln(1/b) + n)/min(−Re p)` and is doubled until the response has stayed inside the
//! band for the whole second half — a practical criterion, not a proof that it never
//! leaves the band later. An excursion out of the band and back between two grid
//! points would also be missed; the default 4000 intervals are far finer than the
//! oscillation periods of the patterns here (the tests confirm the settling times
//! against an independent closed-form evaluation and scipy).
//!
//! # Cost
//! A settling time costs `steps` matrix–vector products of size `n` plus about
//! `bisection_iterations + 1` matrix exponentials of size `n + 1`, repeated for each
//! horizon doubling; a half-power frequency a few hundred evaluations of `Σ ln|jω − pₖ|`.
//!
//! # Failure modes
//! Invalid numbers give [`PatternError::InvalidValue`] (naming the quantity and the
//! allowed range); unsupported orders [`PatternError::UnsupportedOrder`]; a pole on or
//! right of the imaginary axis has no settling time ([`PatternError::NotStable`]); a
//! response that has not settled after the capped horizon doublings gives
//! [`PatternError::NotSettled`]. Eigenvalue and exponential failures are passed on.
//! Nothing here loops without a cap or panics.

use std::f64::consts::PI;
use std::fmt;

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use crate::linalg::eigen::{sort_eigenvalues, try_eigenvalues, EigenError};
use crate::linalg::expm::{try_zero_order_hold, ExpmError};
use crate::poles::{check_conjugate_pairs, PoleError};

mod polynomials;
mod response;
pub use polynomials::*;
pub use response::*;

/// Highest order of the Bessel, Butterworth and binomial patterns (the Bessel
/// coefficients are exact integers up to this order, and a companion matrix of
/// higher degree loses too many digits to be useful for pole placement anyway).
pub const MAX_ORDER: usize = 20;

/// Highest order of the ITAE standard forms (Graham & Lathrop 1953 tabulate 1…8;
/// only 1…6 are recalled here).
pub const ITAE_MAX_ORDER: usize = 6;

/// Relative tolerance with which a pole on a region boundary still counts as inside
/// (so the dominant pair, which sits on the corner, is never flagged by rounding).
pub const BOUNDARY_TOLERANCE: f64 = 1e-9;

/// Relative distance below which two poles count as the same pole in
/// [`largest_multiplicity`].
pub const MULTIPLICITY_TOLERANCE: f64 = 1e-9;

/// The settling band used when none is given: 2 % (common practice).
pub const DEFAULT_BAND: f64 = 0.02;

/// Lower and upper levels of the rise time: 10 % and 90 % (common practice).
pub const RISE_LEVELS: (f64, f64) = (0.1, 0.9);

/// ITAE standard forms, ascending coefficients `a₀ … aₙ` with `ω₀ = 1`.
/// Graham & Lathrop, "The synthesis of optimum transient response: criteria and
/// standard forms", Trans. AIEE 72(II):273–288, 1953 — **from memory**.
const ITAE_COEFFICIENTS: [&[f64]; ITAE_MAX_ORDER] =
    [&[1.0, 1.0], &[1.0, 1.4, 1.0], &[1.0, 2.15, 1.75, 1.0], &[1.0, 2.7, 3.4, 2.1, 1.0], &[1.0, 3.4, 5.5, 5.0, 2.8, 1.0], &[1.0, 3.95, 7.45, 8.6, 6.6, 3.25, 1.0]];

// ----------------------------------------------------------------------------
// errors
// ----------------------------------------------------------------------------

/// What went wrong choosing poles.
#[derive(Debug, Clone, PartialEq)]
pub enum PatternError {
    /// A number is outside its allowed range (or not finite).
    InvalidValue { quantity: &'static str, value: f64, allowed: &'static str },
    /// The pattern is not available at this order.
    UnsupportedOrder { pattern: &'static str, order: usize, min: usize, max: usize },
    /// A pole on or right of the imaginary axis: the step response never settles.
    NotStable { pole: Complex64 },
    /// A pole at the origin: the all-pole transfer function has no DC gain to normalise.
    PoleAtOrigin,
    /// The poles are not real or in conjugate pairs (or not finite).
    Poles(PoleError),
    /// The step response had not settled by the end of the longest horizon tried.
    NotSettled { horizon: f64 },
    /// No half-power frequency found within the capped frequency scan.
    NoHalfPowerFrequency { searched_up_to: f64 },
    /// An eigenvalue computation (polynomial roots) failed.
    Eigen(EigenError),
    /// A matrix exponential (step-response propagation) failed.
    Expm(ExpmError),
}

impl fmt::Display for PatternError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PatternError::InvalidValue { quantity, value, allowed } => {
                write!(f, "{quantity} is {value}, but it must be {allowed}")
            }
            PatternError::UnsupportedOrder { pattern, order, min, max } => write!(f, "the {pattern} pattern is available for orders {min} to {max}, not {order}"),
            PatternError::NotStable { pole } => write!(
                f,
                "the pole {} is not in the open left half-plane, so the step response never settles; \
                 move it left of the imaginary axis",
                crate::poles::format_complex(*pole)
            ),
            PatternError::PoleAtOrigin => write!(
                f,
                "a pole at the origin gives an infinite DC gain, so the pattern cannot be normalised; \
                 move it into the left half-plane"
            ),
            PatternError::Poles(e) => write!(f, "{e}"),
            PatternError::NotSettled { horizon } => write!(
                f,
                "the step response had not settled after {horizon} s of simulation \
                 (the limit on horizon doublings was reached)"
            ),
            PatternError::NoHalfPowerFrequency { searched_up_to } => write!(f, "no half-power (−3 dB) frequency was found below {searched_up_to} rad/s"),
            PatternError::Eigen(e) => write!(f, "finding polynomial roots failed: {e}"),
            PatternError::Expm(e) => write!(f, "simulating the step response failed: {e}"),
        }
    }
}

impl std::error::Error for PatternError {}

impl From<EigenError> for PatternError {
    fn from(e: EigenError) -> Self {
        PatternError::Eigen(e)
    }
}

impl From<ExpmError> for PatternError {
    fn from(e: ExpmError) -> Self {
        PatternError::Expm(e)
    }
}

impl From<PoleError> for PatternError {
    fn from(e: PoleError) -> Self {
        PatternError::Poles(e)
    }
}

fn require(quantity: &'static str, value: f64, ok: bool, allowed: &'static str) -> Result<(), PatternError> {
    if ok && value.is_finite() {
        Ok(())
    } else {
        Err(PatternError::InvalidValue { quantity, value, allowed })
    }
}

fn require_band(band: f64) -> Result<(), PatternError> {
    require("the settling band", band, band > 0.0 && band < 1.0, "a fraction strictly between 0 and 1 (0.02 for 2 %)")
}

// ----------------------------------------------------------------------------
// specification → region
// ----------------------------------------------------------------------------

/// How the decay rate `σ` is obtained from a settling time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SettlingRule {
    /// `σ = −ln(b·√(1−ζ²)) / T_s`: the envelope of the pair's error is inside the band
    /// at `T_s`, so the pure pair is guaranteed to have settled (the default).
    #[default]
    EnvelopeBound,
    /// `σ = −ln(b) / T_s` (4.61, 3.91, 3.00 over `T_s` for 1, 2, 5 %): the textbook rule
    /// of thumb, slightly optimistic.
    RuleOfThumb,
}

/// An optional speed requirement besides the settling time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SpeedRequirement {
    /// 10 %–90 % rise time of the step response, in seconds.
    RiseTime { seconds: f64 },
    /// Half-power (−3 dB) bandwidth of the closed loop, in rad/s.
    Bandwidth { rad_per_s: f64 },
}

/// Time-response specification of a step response.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Specification {
    /// Largest overshoot as a fraction of the final value (0.05 = 5 %); `0 < Mp < 1`.
    pub overshoot: f64,
    /// Settling time in seconds (`> 0`).
    pub settling_time: f64,
    /// Settling band as a fraction of the final value. Default [`DEFAULT_BAND`] (2 %).
    pub settling_band: f64,
    /// How `σ` follows from the settling time. Default [`SettlingRule::EnvelopeBound`].
    pub settling_rule: SettlingRule,
    /// Rise time or bandwidth, if required. Default `None`.
    pub speed: Option<SpeedRequirement>,
}

impl Specification {
    /// A specification with the documented defaults: 2 % band, envelope bound, no
    /// speed requirement.
    pub fn new(overshoot: f64, settling_time: f64) -> Self {
        Specification { overshoot, settling_time, settling_band: DEFAULT_BAND, settling_rule: SettlingRule::EnvelopeBound, speed: None }
    }
}

/// The region of the s-plane that meets a [`Specification`] (to second-order accuracy).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Region {
    /// Smallest damping ratio `ζ_min`: poles must satisfy `−Re s / |s| ≥ ζ_min`.
    pub min_damping: f64,
    /// Smallest decay rate `σ` (1/s): poles must satisfy `Re s ≤ −σ`.
    pub min_decay_rate: f64,
    /// Smallest natural frequency `ωₙ` (rad/s), when a rise time or bandwidth was given:
    /// poles must satisfy `|s| ≥ ωₙ`.
    pub natural_frequency: Option<f64>,
    /// The pair at the corner of the region, positive imaginary part first.
    pub dominant_pair: [Complex64; 2],
}

/// Damping ratio that gives the overshoot `overshoot` (a fraction, `0 < Mp < 1`):
/// `ζ = −ln Mp / √(π² + ln² Mp)`.
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `0 < overshoot < 1`.
pub fn damping_from_overshoot(overshoot: f64) -> Result<f64, PatternError> {
    require("the overshoot", overshoot, overshoot > 0.0 && overshoot < 1.0, "a fraction strictly between 0 and 1 (0.05 for 5 %)")?;
    let l = overshoot.ln();
    Ok(-l / (PI * PI + l * l).sqrt())
}

/// Step overshoot of the standard pair with damping `damping`:
/// `exp(−πζ/√(1−ζ²))` for `0 ≤ ζ < 1`, and `0` for `ζ ≥ 1` (no overshoot).
///
/// # Errors
/// [`PatternError::InvalidValue`] for a negative or non-finite damping.
pub fn overshoot_from_damping(damping: f64) -> Result<f64, PatternError> {
    require("the damping ratio", damping, damping >= 0.0, "zero or positive")?;
    if damping >= 1.0 {
        return Ok(0.0);
    }
    Ok((-PI * damping / (1.0 - damping * damping).sqrt()).exp())
}

/// Decay rate `σ = ζωₙ` that makes the pair settle into `±band` by `settling_time`,
/// by the chosen rule (see the module documentation).
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `settling_time > 0`, `0 < band < 1` and
/// `0 < damping < 1`.
pub fn decay_rate_from_settling(settling_time: f64, band: f64, damping: f64, rule: SettlingRule) -> Result<f64, PatternError> {
    require("the settling time", settling_time, settling_time > 0.0, "positive (seconds)")?;
    require_band(band)?;
    require("the damping ratio", damping, damping > 0.0 && damping < 1.0, "strictly between 0 and 1")?;
    let sigma = match rule {
        SettlingRule::EnvelopeBound => -(band * (1.0 - damping * damping).sqrt()).ln() / settling_time,
        SettlingRule::RuleOfThumb => -band.ln() / settling_time,
    };
    Ok(sigma)
}

/// Closed-form unit-step response of the pair `1/(s² + 2ζ s + 1)` (`ωₙ = 1`, `0 < ζ < 1`).
fn pair_step(damping: f64, t: f64) -> f64 {
    let wd = (1.0 - damping * damping).sqrt();
    1.0 - (-damping * t).exp() * ((wd * t).cos() + damping / wd * (wd * t).sin())
}

/// Exact 10 %–90 % rise time of the pair with `ωₙ = 1` and damping `damping`
/// (`0 < ζ < 1`), by bisection on its closed-form step response, which rises
/// monotonically up to its first peak at `π/√(1−ζ²)`. Divide by `ωₙ` for other
/// natural frequencies.
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `0 < damping < 1`.
pub fn normalised_rise_time(damping: f64) -> Result<f64, PatternError> {
    require("the damping ratio", damping, damping > 0.0 && damping < 1.0, "strictly between 0 and 1")?;
    let peak = PI / (1.0 - damping * damping).sqrt();
    let crossing = |level: f64| {
        let (mut lo, mut hi) = (0.0, peak);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if pair_step(damping, mid) < level {
                lo = mid;
            } else {
                hi = mid;
            }
            if hi - lo <= 1e-15 * peak {
                break;
            }
        }
        0.5 * (lo + hi)
    };
    Ok(crossing(RISE_LEVELS.1) - crossing(RISE_LEVELS.0))
}

/// Half-power bandwidth of the pair with `ωₙ = 1`:
/// `√(1 − 2ζ² + √(4ζ⁴ − 4ζ² + 2))` (exact; common practice).
///
/// # Errors
/// [`PatternError::InvalidValue`] for a negative or non-finite damping.
pub fn normalised_bandwidth(damping: f64) -> Result<f64, PatternError> {
    require("the damping ratio", damping, damping >= 0.0, "zero or positive")?;
    let z2 = damping * damping;
    Ok((1.0 - 2.0 * z2 + (4.0 * z2 * z2 - 4.0 * z2 + 2.0).sqrt()).sqrt())
}

/// The s-plane region of a specification and its dominant pair.
///
/// # Errors
/// [`PatternError::InvalidValue`] for an overshoot outside `(0, 1)`, a non-positive
/// settling time, rise time or bandwidth, or a band outside `(0, 1)`.
pub fn specification_region(spec: &Specification) -> Result<Region, PatternError> {
    let zeta = damping_from_overshoot(spec.overshoot)?;
    let sigma = decay_rate_from_settling(spec.settling_time, spec.settling_band, zeta, spec.settling_rule)?;
    let natural_frequency = match spec.speed {
        None => None,
        Some(SpeedRequirement::RiseTime { seconds }) => {
            require("the rise time", seconds, seconds > 0.0, "positive (seconds)")?;
            Some(normalised_rise_time(zeta)? / seconds)
        }
        Some(SpeedRequirement::Bandwidth { rad_per_s }) => {
            require("the bandwidth", rad_per_s, rad_per_s > 0.0, "positive (rad/s)")?;
            Some(rad_per_s / normalised_bandwidth(zeta)?)
        }
    };
    let wn = natural_frequency.map_or(sigma / zeta, |w| w.max(sigma / zeta));
    let re = -zeta * wn;
    let im = wn * (1.0 - zeta * zeta).sqrt();
    Ok(Region { min_damping: zeta, min_decay_rate: sigma, natural_frequency, dominant_pair: [Complex64::new(re, im), Complex64::new(re, -im)] })
}

/// Damping ratio of a pole, `−Re s / |s|` (1 on the negative real axis, negative in
/// the right half-plane, 0 at the origin by convention).
pub fn damping_ratio(s: Complex64) -> f64 {
    let r = s.norm();
    if r == 0.0 {
        0.0
    } else {
        -s.re / r
    }
}

/// Which constraint of a [`Region`] a pole breaks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ViolationKind {
    /// `Re s > −σ`: decays too slowly. Carries the pole's decay rate `−Re s`.
    TooSlow { decay_rate: f64 },
    /// Damping below `ζ_min`. Carries the pole's damping ratio.
    TooLittleDamping { damping: f64 },
    /// `|s| < ωₙ`: too low a natural frequency for the rise time or bandwidth. Carries `|s|`.
    TooLowNaturalFrequency { natural_frequency: f64 },
}

/// One broken constraint of one pole.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RegionViolation {
    /// Position of the pole in the list given (0-based).
    pub index: usize,
    /// The pole (for [`discrete_region_violations`], the discrete pole `z`).
    pub pole: Complex64,
    /// The constraint broken.
    pub kind: ViolationKind,
}

impl fmt::Display for RegionViolation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let p = crate::poles::format_complex(self.pole);
        match self.kind {
            ViolationKind::TooSlow { decay_rate } => {
                write!(f, "pole {} ({p}) decays too slowly (rate {decay_rate} 1/s)", self.index + 1)
            }
            ViolationKind::TooLittleDamping { damping } => {
                write!(f, "pole {} ({p}) is too lightly damped (ζ = {damping})", self.index + 1)
            }
            ViolationKind::TooLowNaturalFrequency { natural_frequency } => write!(f, "pole {} ({p}) is too slow for the rise time or bandwidth (|s| = {natural_frequency} rad/s)", self.index + 1),
        }
    }
}

fn check_one(index: usize, shown: Complex64, s: Complex64, region: &Region, out: &mut Vec<RegionViolation>) {
    if s.re == f64::NEG_INFINITY {
        // z = 0: infinitely fast and real — inside every constraint.
        return;
    }
    let decay = -s.re;
    if decay < region.min_decay_rate * (1.0 - BOUNDARY_TOLERANCE) {
        out.push(RegionViolation { index, pole: shown, kind: ViolationKind::TooSlow { decay_rate: decay } });
    }
    let zeta = damping_ratio(s);
    if zeta < region.min_damping - BOUNDARY_TOLERANCE {
        out.push(RegionViolation { index, pole: shown, kind: ViolationKind::TooLittleDamping { damping: zeta } });
    }
    if let Some(wn) = region.natural_frequency {
        let r = s.norm();
        if r < wn * (1.0 - BOUNDARY_TOLERANCE) {
            out.push(RegionViolation { index, pole: shown, kind: ViolationKind::TooLowNaturalFrequency { natural_frequency: r } });
        }
    }
}

/// Every constraint of `region` broken by each continuous-time pole (empty when all are
/// inside). A pole within [`BOUNDARY_TOLERANCE`] (relative) of a boundary is inside.
pub fn region_violations(poles: &[Complex64], region: &Region) -> Vec<RegionViolation> {
    let mut out = Vec::new();
    for (i, &s) in poles.iter().enumerate() {
        check_one(i, s, s, region, &mut out);
    }
    out
}

fn require_sample_time(sample_time: f64) -> Result<(), PatternError> {
    require("the sample time", sample_time, sample_time > 0.0, "positive (seconds)")
}

/// Discrete poles `z = e^{sT}` of continuous poles `s` for sample time `T`.
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `sample_time > 0`.
pub fn discrete_poles(poles: &[Complex64], sample_time: f64) -> Result<Vec<Complex64>, PatternError> {
    require_sample_time(sample_time)?;
    Ok(poles.iter().map(|s| (s * sample_time).exp()).collect())
}

/// The continuous pole `s = ln z / T` (principal logarithm, `|Im s| ≤ π/T`) of a
/// discrete pole; `z = 0` gives `Re s = −∞`.
pub fn continuous_equivalent(z: Complex64, sample_time: f64) -> Complex64 {
    crate::plane::s_from_z_or_infinite(z, sample_time)
}

/// Every constraint of `region` broken by each discrete pole `z` (sample time `T`):
/// `z` is inside iff `s = ln z / T` is. A pole at `z = 0` (deadbeat) is inside.
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `sample_time > 0` and every pole is finite.
pub fn discrete_region_violations(poles: &[Complex64], region: &Region, sample_time: f64) -> Result<Vec<RegionViolation>, PatternError> {
    require_sample_time(sample_time)?;
    let mut out = Vec::new();
    for (i, &z) in poles.iter().enumerate() {
        require("a discrete pole", z.re + z.im, z.re.is_finite() && z.im.is_finite(), "finite")?;
        check_one(i, z, continuous_equivalent(z, sample_time), region, &mut out);
    }
    Ok(out)
}

/// Radius `e^{−σT}` of the circle that the decay line `Re s = −σ` maps to.
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `sample_time > 0`.
pub fn discrete_decay_radius(region: &Region, sample_time: f64) -> Result<f64, PatternError> {
    require_sample_time(sample_time)?;
    Ok((-region.min_decay_rate * sample_time).exp())
}

/// Most points [`discrete_damping_boundary`] will return.
pub const MAX_BOUNDARY_POINTS: usize = 100_000;

/// `points` samples (2 ..= [`MAX_BOUNDARY_POINTS`]) of the upper half of the damping
/// boundary in the z-plane, for drawing: `z = exp(s T)` along
/// `s = ω (−ζ/√(1−ζ²) + j)`, `ω` evenly from 0 to `π/T`. It runs from `z = 1` to the
/// negative real axis at radius `e^{−πζ/√(1−ζ²)}`; the lower half is the mirror image
/// (complex conjugates).
///
/// # Errors
/// [`PatternError::InvalidValue`] unless `sample_time > 0`, `points` is in range and
/// `0 < ζ_min < 1`.
pub fn discrete_damping_boundary(region: &Region, sample_time: f64, points: usize) -> Result<Vec<Complex64>, PatternError> {
    require_sample_time(sample_time)?;
    require("the number of boundary points", points as f64, (2..=MAX_BOUNDARY_POINTS).contains(&points), "between 2 and 100000")?;
    let zeta = region.min_damping;
    require("the region's damping ratio", zeta, zeta > 0.0 && zeta < 1.0, "strictly between 0 and 1")?;
    let slope = -zeta / (1.0 - zeta * zeta).sqrt();
    let top = PI / sample_time;
    Ok((0..points)
        .map(|k| {
            let w = top * k as f64 / (points - 1) as f64;
            (Complex64::new(slope * w, w) * sample_time).exp()
        })
        .collect())
}

// ----------------------------------------------------------------------------
// prototype patterns
// ----------------------------------------------------------------------------

/// How a Bessel pattern is normalised before any scaling. They differ by large factors
/// (the unit-delay poles are 1.36 times the −3 dB ones at n = 2 and 2.70 times at
/// n = 6), so always say which one is meant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum BesselNormalisation {
    /// The reverse Bessel polynomial `θₙ(s)` as is: group delay 1 s at DC.
    UnitDcGroupDelay,
    /// Scaled so that `|H(j·1)|² = 1/2` (−3 dB at 1 rad/s).
    HalfPowerAtUnitFrequency,
    /// Scaled so that the step response settles into `±band` at 1 s.
    UnitSettlingTime { band: f64 },
    /// Scaled so that the constant coefficient is 1 (geometric mean of `|poles|` = 1);
    /// the magnitude's high-frequency asymptote is then the Butterworth one.
    UnitNaturalFrequency,
}

/// A prototype pole pattern.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Pattern {
    /// Reverse Bessel polynomial, normalised as stated.
    Bessel(BesselNormalisation),
    /// Butterworth: poles evenly on the left half of the unit circle.
    Butterworth,
    /// ITAE standard forms (Graham & Lathrop 1953; coefficients from memory), `ω₀ = 1`.
    Itae,
    /// `(s + 1)ⁿ`: all poles at −1.
    Binomial,
}

impl Pattern {
    /// Plain name of the pattern ("Bessel", "Butterworth", "ITAE", "binomial").
    pub fn name(&self) -> &'static str {
        match self {
            Pattern::Bessel(_) => "Bessel",
            Pattern::Butterworth => "Butterworth",
            Pattern::Itae => "ITAE",
            Pattern::Binomial => "binomial",
        }
    }
}

/// The normalisation that a [`Prototype`]'s poles carry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Normalisation {
    /// Group delay 1 s at DC (Bessel `θₙ` as is).
    UnitDcGroupDelay,
    /// `|H(j·1)|² = 1/2` (Butterworth; Bessel on request).
    HalfPowerAtUnitFrequency,
    /// Step response settles into `±band` at 1 s.
    UnitSettlingTime { band: f64 },
    /// Constant coefficient 1, `ω₀ = 1` (ITAE, binomial; Bessel on request).
    UnitNaturalFrequency,
}

/// A normalised prototype pattern.
#[derive(Debug, Clone, PartialEq)]
pub struct Prototype {
    /// The pattern asked for.
    pub pattern: Pattern,
    /// Number of poles.
    pub order: usize,
    /// The normalised poles, sorted by ascending real part then descending imaginary part.
    pub poles: Vec<Complex64>,
    /// Which normalisation the poles carry.
    pub normalisation: Normalisation,
    /// Largest number of coinciding poles ([`largest_multiplicity`]): `order` for the
    /// binomial pattern, 1 otherwise. Placement needs it `≤ rank B`.
    pub multiplicity: usize,
}

/// What to scale a normalised pattern to.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ScaleTarget {
    /// The step response settles into `±band` (a fraction) at `seconds`.
    SettlingTime { seconds: f64, band: f64 },
    /// The half-power (−3 dB) frequency is `rad_per_s`.
    Bandwidth { rad_per_s: f64 },
}

/// A prototype scaled to a target.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaledPrototype {
    /// The normalised pattern before scaling.
    pub prototype: Prototype,
    /// The target asked for.
    pub target: ScaleTarget,
    /// Settling time (s) or half-power frequency (rad/s) of the normalised pattern,
    /// whichever the target names.
    pub normalised_value: f64,
    /// Factor `k` multiplying every normalised pole.
    pub scale: f64,
    /// The scaled poles `k · pᵢ`.
    pub poles: Vec<Complex64>,
}

/// Tuning constants of the step-response simulation and the frequency search.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ResponseParams {
    /// Grid intervals over the simulated horizon (10 ..= 1 000 000). Default 4000.
    pub steps: usize,
    /// Largest number of horizon doublings while the response has not stayed inside the
    /// band for the second half of the horizon. Default 12.
    pub max_horizon_doublings: usize,
    /// Bisection steps refining a settling instant or a half-power frequency. Default 100.
    pub bisection_iterations: usize,
    /// Largest number of frequency steps (each ×2^{1/8}) scanned for the half-power
    /// point, starting 1000 times below the smallest `|pole|`. Default 1000.
    pub max_frequency_steps: usize,
}

impl Default for ResponseParams {
    fn default() -> Self {
        ResponseParams { steps: 4000, max_horizon_doublings: 12, bisection_iterations: 100, max_frequency_steps: 1000 }
    }
}

fn check_order(pattern: &'static str, order: usize, min: usize, max: usize) -> Result<(), PatternError> {
    if order < min || order > max {
        Err(PatternError::UnsupportedOrder { pattern, order, min, max })
    } else {
        Ok(())
    }
}

/// Exact integer coefficients `a₀ … aₙ` (ascending) of the reverse Bessel polynomial
/// `θₙ(s) = Σₖ (2n−k)! / (2^{n−k} k! (n−k)!) sᵏ`, `n` = 1 ..= [`MAX_ORDER`].
/// Computed downwards from `aₙ = 1` by `a_{k−1} = aₖ (2n−k+1) k / (2(n−k+1))`, the ratio
/// of consecutive terms of the definition (each quotient is exact because both sides
/// are the integers of the definition).
///
/// # Errors
/// [`PatternError::UnsupportedOrder`] outside 1 ..= [`MAX_ORDER`].
pub fn bessel_polynomial(order: usize) -> Result<Vec<u128>, PatternError> {
    check_order("Bessel", order, 1, MAX_ORDER)?;
    let overflow = PatternError::UnsupportedOrder { pattern: "Bessel", order, min: 1, max: MAX_ORDER };
    let n = order as u128;
    let mut c = vec![0u128; order + 1];
    c[order] = 1;
    for k in (1..=order).rev() {
        let kk = k as u128;
        let num = c[k].checked_mul(2 * n - kk + 1).and_then(|v| v.checked_mul(kk)).ok_or_else(|| overflow.clone())?;
        c[k - 1] = num / (2 * (n - kk + 1));
    }
    Ok(c)
}

/// Poles of the Bessel pattern of order `order` with the stated normalisation.
///
/// # Errors
/// [`PatternError::UnsupportedOrder`], an invalid band, or a failed root, frequency
/// or settling computation.
pub fn bessel_poles(order: usize, normalisation: BesselNormalisation, params: &ResponseParams) -> Result<Vec<Complex64>, PatternError> {
    let coefficients: Vec<f64> = bessel_polynomial(order)?.iter().map(|&c| c as f64).collect();
    let delay = polynomial_roots(&coefficients)?;
    let scale = match normalisation {
        BesselNormalisation::UnitDcGroupDelay => 1.0,
        BesselNormalisation::HalfPowerAtUnitFrequency => 1.0 / half_power_frequency(&delay, params)?,
        BesselNormalisation::UnitSettlingTime { band } => step_settling_time(&delay, band, params)?,
        BesselNormalisation::UnitNaturalFrequency => coefficients[0].powf(-1.0 / order as f64),
    };
    Ok(delay.iter().map(|p| p * scale).collect())
}

/// Butterworth poles `exp(j(π/2 + (2k−1)π/(2n)))`, `k = 1…n`, exactly on the unit circle
/// (pairs are exact conjugates; the real pole of an odd order is exactly −1).
///
/// # Errors
/// [`PatternError::UnsupportedOrder`] outside 1 ..= [`MAX_ORDER`].
pub fn butterworth_poles(order: usize) -> Result<Vec<Complex64>, PatternError> {
    check_order("Butterworth", order, 1, MAX_ORDER)?;
    let n = order as f64;
    let mut poles = Vec::with_capacity(order);
    for k in 1..=order / 2 {
        let angle = PI / 2.0 + (2 * k - 1) as f64 * PI / (2.0 * n);
        let p = Complex64::new(angle.cos(), angle.sin());
        poles.push(p);
        poles.push(p.conj());
    }
    if order % 2 == 1 {
        poles.push(Complex64::new(-1.0, 0.0));
    }
    sort_eigenvalues(&mut poles);
    Ok(poles)
}

/// ITAE standard-form polynomial of order 1 ..= [`ITAE_MAX_ORDER`], ascending
/// coefficients with `ω₀ = 1`: `s + 1`, `s² + 1.4s + 1`, `s³ + 1.75s² + 2.15s + 1`,
/// `s⁴ + 2.1s³ + 3.4s² + 2.7s + 1`, `s⁵ + 2.8s⁴ + 5.0s³ + 5.5s² + 3.4s + 1`,
/// `s⁶ + 3.25s⁵ + 6.60s⁴ + 8.60s³ + 7.45s² + 3.95s + 1` (Graham & Lathrop 1953,
/// **from memory**).
///
/// # Errors
/// [`PatternError::UnsupportedOrder`] outside 1 ..= [`ITAE_MAX_ORDER`].
pub fn itae_polynomial(order: usize) -> Result<Vec<f64>, PatternError> {
    check_order("ITAE", order, 1, ITAE_MAX_ORDER)?;
    Ok(ITAE_COEFFICIENTS[order - 1].to_vec())
}

/// Normalised prototype poles (no scaling to a target; see [`scaled_prototype_poles`]).
///
/// # Errors
/// [`PatternError::UnsupportedOrder`] for an order the pattern lacks, or a failure of
/// the computations the normalisation needs.
pub fn prototype_poles(pattern: Pattern, order: usize, params: &ResponseParams) -> Result<Prototype, PatternError> {
    let (poles, normalisation) = match pattern {
        Pattern::Bessel(norm) => {
            let label = match norm {
                BesselNormalisation::UnitDcGroupDelay => Normalisation::UnitDcGroupDelay,
                BesselNormalisation::HalfPowerAtUnitFrequency => Normalisation::HalfPowerAtUnitFrequency,
                BesselNormalisation::UnitSettlingTime { band } => Normalisation::UnitSettlingTime { band },
                BesselNormalisation::UnitNaturalFrequency => Normalisation::UnitNaturalFrequency,
            };
            (bessel_poles(order, norm, params)?, label)
        }
        Pattern::Butterworth => (butterworth_poles(order)?, Normalisation::HalfPowerAtUnitFrequency),
        Pattern::Itae => (polynomial_roots(&itae_polynomial(order)?)?, Normalisation::UnitNaturalFrequency),
        Pattern::Binomial => {
            check_order("binomial", order, 1, MAX_ORDER)?;
            (vec![Complex64::new(-1.0, 0.0); order], Normalisation::UnitNaturalFrequency)
        }
    };
    let multiplicity = largest_multiplicity(&poles);
    Ok(Prototype { pattern, order, poles, normalisation, multiplicity })
}

/// A prototype pattern scaled so that its step response settles at the given time
/// (band stated) or its half-power frequency is the given bandwidth. The normalised
/// pattern's settling time or bandwidth is measured (simulation, bisection) and every
/// pole multiplied by the ratio, so the claim holds by construction for `p(0)/p(s)`.
///
/// # Errors
/// As [`prototype_poles`]; [`PatternError::InvalidValue`] for a non-positive target or
/// a band outside `(0, 1)`; a failed settling or frequency computation.
pub fn scaled_prototype_poles(pattern: Pattern, order: usize, target: ScaleTarget, params: &ResponseParams) -> Result<ScaledPrototype, PatternError> {
    match target {
        ScaleTarget::SettlingTime { seconds, band } => {
            require("the settling time", seconds, seconds > 0.0, "positive (seconds)")?;
            require_band(band)?;
        }
        ScaleTarget::Bandwidth { rad_per_s } => {
            require("the bandwidth", rad_per_s, rad_per_s > 0.0, "positive (rad/s)")?;
        }
    }
    let prototype = prototype_poles(pattern, order, params)?;
    let (normalised_value, scale) = match target {
        ScaleTarget::SettlingTime { seconds, band } => {
            let t = step_settling_time(&prototype.poles, band, params)?;
            (t, t / seconds)
        }
        ScaleTarget::Bandwidth { rad_per_s } => {
            let w = half_power_frequency(&prototype.poles, params)?;
            (w, rad_per_s / w)
        }
    };
    let poles = prototype.poles.iter().map(|p| p * scale).collect();
    Ok(ScaledPrototype { prototype, target, normalised_value, scale, poles })
}

/// Tuning of the dominant-pair pattern.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DominantPairParams {
    /// The remaining poles sit at this multiple of the pair's decay rate (> 1). Default 5.
    pub speed_factor: f64,
    /// Relative spacing between consecutive remaining poles (≥ 0), so that none repeats.
    /// Default 0.01 (1 %).
    pub spread: f64,
}

impl Default for DominantPairParams {
    fn default() -> Self {
        DominantPairParams { speed_factor: 5.0, spread: 0.01 }
    }
}

/// The region's dominant pair and `order − 2` real poles at
/// `−f σ_pair (1 + k δ)`, `k = 0 … order−3` (`f` = speed factor, `δ` = spread).
/// Sorted by ascending real part then descending imaginary part.
///
/// # Errors
/// [`PatternError::UnsupportedOrder`] outside 2 ..= [`MAX_ORDER`];
/// [`PatternError::InvalidValue`] for a speed factor ≤ 1 or a negative spread.
pub fn dominant_pair_poles(region: &Region, order: usize, params: &DominantPairParams) -> Result<Vec<Complex64>, PatternError> {
    check_order("dominant-pair", order, 2, MAX_ORDER)?;
    require("the speed factor", params.speed_factor, params.speed_factor > 1.0, "greater than 1")?;
    require("the spread", params.spread, params.spread >= 0.0, "zero or positive")?;
    let [p, q] = region.dominant_pair;
    let sigma = -p.re;
    require("the dominant pair's decay rate", sigma, sigma > 0.0, "positive")?;
    let mut poles = vec![p, q];
    for k in 0..order - 2 {
        poles.push(Complex64::new(-params.speed_factor * sigma * (1.0 + params.spread * k as f64), 0.0));
    }
    sort_eigenvalues(&mut poles);
    Ok(poles)
}

/// Poles chosen from a specification: its region and the dominant-pair pattern.
#[derive(Debug, Clone, PartialEq)]
pub struct SpecifiedPoles {
    /// The region of the specification.
    pub region: Region,
    /// The chosen poles (dominant pair first in the region's corner, the rest faster).
    pub poles: Vec<Complex64>,
    /// Largest number of coinciding poles (1 unless the spread is 0).
    pub multiplicity: usize,
}

/// The region of `spec` and `order` poles from [`dominant_pair_poles`].
///
/// # Errors
/// As [`specification_region`] and [`dominant_pair_poles`].
pub fn poles_from_specification(spec: &Specification, order: usize, params: &DominantPairParams) -> Result<SpecifiedPoles, PatternError> {
    let region = specification_region(spec)?;
    let poles = dominant_pair_poles(&region, order, params)?;
    let multiplicity = largest_multiplicity(&poles);
    Ok(SpecifiedPoles { region, poles, multiplicity })
}

#[cfg(test)]
#[path = "../tests/patterns.rs"]
mod tests;
