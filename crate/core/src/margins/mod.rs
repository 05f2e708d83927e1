//! Robustness of a loop broken at the plant input: frequency responses, sensitivity peaks and
//! loop-at-a-time margins (classical gain, phase and delay margins, and disk margins).
//!
//! # Equation
//! The loop transfer at the plant input `L` maps the input `u_in` injected at the plant input
//! to the controller's output `u_fb`, with the loop closed by `u_in = −u_fb` (negative
//! feedback): for state feedback `u = −K x`, `L(s) = K (sI − A)⁻¹ B`. It is given as a state-space
//! model `(A_L, B_L, C_L, D_L)`, continuous (`s = jω`) or sampled (`z = e^{jωT}`). The input
//! sensitivity is `S = (I + L)⁻¹` and `T = I − S`. Breaking only input `i` with the other loops
//! closed gives the scalar `L_i`.
//!
//! # Method
//! - Each model is reduced once to Hessenberg form, so a frequency costs `O(n²)` (Laub 1981).
//! - `S` is evaluated from the closed loop, `S(s) = E − E C_L (sI − A_cl)⁻¹ B_L E` with
//!   `E = (I + D_L)⁻¹` and `A_cl = A_L − B_L E C_L`, so that integrators and undamped open-loop
//!   modes (poles of `L` on the boundary) never divide by zero.
//! - Frequencies: a logarithmic grid over six decades around the closed-loop poles' magnitudes,
//!   with 0, the imaginary parts of the closed-loop poles and, when sampled, the Nyquist
//!   frequency added; each maximum is refined by golden-section search on its bracket, each
//!   crossing by the Illinois variant of regula falsi (capped iterations).
//! - Disk margin of skew `σ` (Seiler, Packard & Gahinet, "An introduction to disk margins", IEEE
//!   Control Systems Magazine 40(5):78–95, 2020): `α = 1 / max_ω |S_i + (σ − 1)/2|`; for `σ = 0`
//!   it guarantees the gain range `[(2 − α)/(2 + α), (2 + α)/(2 − α)]` and the phase
//!   `±2 arctan(α/2)`.
//! - Classical margins of `L_i` (common practice): the gain margins where the phase of `L_i`
//!   crosses −180° (`1/|L_i|`, below and above 1; also at ω = 0 and the Nyquist frequency, where
//!   `L_i` is real), the phase margin of smallest size over every crossover `|L_i| = 1`, and the
//!   delay margin, the smallest `(PM_i mod 360°) / ω_i` (for a sampled loop the same figure in
//!   seconds: exact for delays that are whole samples, an interpolation in between). They
//!   assume a stable nominal loop (callers check).
//!
//! # Cost
//! One Hessenberg reduction of the closed loop (`O(n³)`; of the open loop only if `L` itself is
//! asked for), then per grid frequency one `O(n²)` Hessenberg solve with `m` right-hand sides
//! serving every input (see [`per_input`]), a few hundred frequencies.
//!
//! # Failure modes
//! A singular `I + D_L`: [`MarginError::IllPosed`]. A singular `sI − A_cl` at a frequency (a
//! closed-loop pole on the boundary): [`MarginError::BoundaryPole`] from a single evaluation;
//! in a scan, that frequency counts as an infinite peak, so a disk margin computed there is
//! zero, never larger than the truth.

use nalgebra::DMatrix;
use num_complex::Complex64;

use crate::linalg::eigen::try_eigenvalues;

pub mod built;
pub mod disk;
mod per_input;

pub use disk::{multiloop_disk, Disk, MultiloopDisk};
pub use per_input::{input_margins, per_input_margins, per_input_margins_on};

/// A loop transfer in state-space form.
#[derive(Debug, Clone, PartialEq)]
pub struct LoopModel {
    pub a: DMatrix<f64>,
    pub b: DMatrix<f64>,
    pub c: DMatrix<f64>,
    pub d: DMatrix<f64>,
    /// `None`: continuous; `Some(T)`: sampled at `T`.
    pub sample_time: Option<f64>,
}

/// Why margins could not be computed.
#[derive(Debug, Clone, PartialEq)]
pub enum MarginError {
    /// `I + D_L` is singular: the loop is not well posed.
    IllPosed,
    /// The closed loop has a pole on the stability boundary at this frequency.
    BoundaryPole { frequency: f64 },
    /// An eigenvalue computation failed.
    Eigen(String),
    /// The controller's matrices do not fit the plant (`what` names the block).
    Size { what: &'static str },
}

impl std::fmt::Display for MarginError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            MarginError::IllPosed => write!(f, "the loop is not well posed (I + D is singular)"),
            MarginError::BoundaryPole { frequency } => write!(f, "the closed loop has a pole on the stability boundary near {frequency} rad/s"),
            MarginError::Eigen(m) => write!(f, "{m}"),
            MarginError::Size { what } => {
                write!(f, "the {what} does not fit the plant's dimensions")
            }
        }
    }
}

impl std::error::Error for MarginError {}

/// The loop at the plant input of state feedback `u = −K x`: `L(s) = K (sI − A)⁻¹ B`.
pub fn state_feedback_loop(a: &DMatrix<f64>, b: &DMatrix<f64>, k: &DMatrix<f64>, sample_time: Option<f64>) -> LoopModel {
    LoopModel { a: a.clone(), b: b.clone(), c: k.clone(), d: DMatrix::zeros(k.nrows(), b.ncols()), sample_time }
}

fn complex(m: &DMatrix<f64>) -> DMatrix<Complex64> {
    m.map(|v| Complex64::new(v, 0.0))
}

/// A state-space model reduced once to upper Hessenberg form, `H = Qᵀ A Q`, `B̃ = Qᵀ B`,
/// `C̃ = C Q` (Laub, "Efficient multivariable frequency response computations", IEEE TAC 26(2),
/// 1981; from memory), so that each frequency costs one `O(n²)` Hessenberg solve instead of an
/// `O(n³)` LU.
#[derive(Debug, Clone)]
struct Reduced {
    /// `−Hᵀ` (stored transposed, so that each row of `H` is a contiguous column), `B̃`, `C̃`,
    /// `D` as complex matrices, converted once.
    minus_ht: DMatrix<Complex64>,
    b: DMatrix<Complex64>,
    c: DMatrix<Complex64>,
    d: DMatrix<Complex64>,
}

impl Reduced {
    fn new(a: &DMatrix<f64>, b: &DMatrix<f64>, c: &DMatrix<f64>, d: &DMatrix<f64>) -> Reduced {
        let (h, b, c) = if a.nrows() == 0 {
            (a.clone(), b.clone(), c.clone())
        } else {
            let (q, h) = a.clone().hessenberg().unpack();
            (h, q.transpose() * b, c * &q)
        };
        Reduced { minus_ht: -complex(&h.transpose()), b: complex(&b), c: complex(&c), d: complex(d) }
    }

    /// `C̃ (pI − H)⁻¹ B̃ + D`.
    fn at(&self, p: Complex64, w: f64) -> Result<DMatrix<Complex64>, MarginError> {
        let mut x = self.b.clone();
        self.solve(p, w, &mut x)?;
        Ok(&self.c * x + &self.d)
    }

    /// Entry `(j, j)` of [`Reduced::at`], from one right-hand side: `c̃_j (pI − H)⁻¹ b̃_j + d_jj`.
    fn diagonal_entry(&self, p: Complex64, w: f64, j: usize) -> Result<Complex64, MarginError> {
        let mut x = self.b.columns(j, 1).into_owned();
        self.solve(p, w, &mut x)?;
        let v: Complex64 = self.c.row(j).iter().zip(x.iter()).map(|(c, x)| c * x).sum();
        Ok(v + self.d[(j, j)])
    }

    /// Overwrites `x` with `(pI − H)⁻¹ x` by Gaussian elimination with adjacent-row pivoting
    /// (pivots compared by squared modulus: no square roots in the inner loop). Rows of
    /// `pI − H` are columns of the stored transpose: every inner loop runs over contiguous
    /// memory.
    fn solve(&self, p: Complex64, w: f64, x: &mut DMatrix<Complex64>) -> Result<(), MarginError> {
        let n = self.minus_ht.nrows();
        // mt = (pI − H)ᵀ: column k is row k of pI − H.
        let mut mt = self.minus_ht.clone();
        for i in 0..n {
            mt[(i, i)] += p;
        }
        for k in 0..n.saturating_sub(1) {
            if mt[(k, k + 1)].norm_sqr() > mt[(k, k)].norm_sqr() {
                mt.swap_columns(k, k + 1);
                x.swap_rows(k, k + 1);
            }
            let pivot = mt[(k, k)];
            if pivot.norm_sqr() == 0.0 {
                continue;
            }
            let f = mt[(k, k + 1)] / pivot;
            if f.norm_sqr() == 0.0 {
                continue;
            }
            // Row k+1 −= f · row k (entries k..n): columns k+1 and k of the transpose.
            let (upper, lower) = mt.as_mut_slice().split_at_mut((k + 1) * n);
            let row_k = &upper[k * n + k..k * n + n];
            let row_k1 = &mut lower[k..n];
            for (dst, src) in row_k1.iter_mut().zip(row_k) {
                *dst -= f * src;
            }
            for j in 0..x.ncols() {
                let v = x[(k, j)];
                x[(k + 1, j)] -= f * v;
            }
        }
        for k in (0..n).rev() {
            let pivot = mt[(k, k)];
            if !(pivot.norm_sqr() > 0.0) {
                return Err(MarginError::BoundaryPole { frequency: w });
            }
            let row = &mt.as_slice()[k * n..k * n + n];
            for j in 0..x.ncols() {
                let mut v = x[(k, j)];
                let col = x.column(j);
                for i in k + 1..n {
                    v -= row[i] * col[i];
                }
                x[(k, j)] = v / pivot;
            }
        }
        if x.iter().any(|v| !(v.re.is_finite() && v.im.is_finite())) {
            return Err(MarginError::BoundaryPole { frequency: w });
        }
        Ok(())
    }
}

/// A loop prepared for evaluation at many frequencies: `S` reduced once, `L` on first use.
#[derive(Debug, Clone)]
pub struct Evaluator {
    /// `L`, reduced on first use (the margins need only the closed loop).
    open: std::cell::OnceCell<Reduced>,
    model: LoopModel,
    closed: Reduced,
    /// `E = (I + D)⁻¹` and `I − E = D E` (exactly zero without a direct term), so that
    /// `T = I − S` is formed without cancellation.
    e: DMatrix<f64>,
    i_minus_e: DMatrix<f64>,
    sample_time: Option<f64>,
}

impl Evaluator {
    fn point(&self, w: f64) -> Complex64 {
        match self.sample_time {
            None => Complex64::new(0.0, w),
            Some(t) => Complex64::new(0.0, w * t).exp(),
        }
    }

    /// `L` at the frequency `w` (rad/s).
    ///
    /// # Errors
    /// [`MarginError::BoundaryPole`] when `L` has a pole there.
    pub fn loop_response(&self, w: f64) -> Result<DMatrix<Complex64>, MarginError> {
        let m = &self.model;
        self.open.get_or_init(|| Reduced::new(&m.a, &m.b, &m.c, &m.d)).at(self.point(w), w)
    }

    /// The input sensitivity `S = (I + L)⁻¹` at `w`, from the closed loop.
    ///
    /// # Errors
    /// [`MarginError::BoundaryPole`] when the closed loop has a pole at `w`.
    pub fn sensitivity(&self, w: f64) -> Result<DMatrix<Complex64>, MarginError> {
        let inner = self.closed.at(self.point(w), w)?;
        Ok(complex(&self.e) - inner)
    }

    /// `S` and `T = I − S` at `w`, each from the closed loop (`T = (I − E) + E C (sI − A_cl)⁻¹ B E`
    /// keeps its accuracy where `S ≈ I`).
    ///
    /// # Errors
    /// [`MarginError::BoundaryPole`] when the closed loop has a pole at `w`.
    pub fn sensitivity_pair(&self, w: f64) -> Result<(DMatrix<Complex64>, DMatrix<Complex64>), MarginError> {
        let inner = self.closed.at(self.point(w), w)?;
        Ok((complex(&self.e) - &inner, complex(&self.i_minus_e) + inner))
    }

    /// Diagonal entries `(S_ii, T_ii)` at `w`, from one right-hand side.
    ///
    /// # Errors
    /// [`MarginError::BoundaryPole`] when the closed loop has a pole at `w`.
    pub fn diagonal_pair(&self, w: f64, i: usize) -> Result<(Complex64, Complex64), MarginError> {
        let inner = self.closed.diagonal_entry(self.point(w), w, i)?;
        Ok((self.e[(i, i)] - inner, self.i_minus_e[(i, i)] + inner))
    }

    /// Number of loops (inputs).
    pub fn inputs(&self) -> usize {
        self.e.nrows()
    }

    /// The sample time (`None`: continuous).
    pub fn sample_time(&self) -> Option<f64> {
        self.sample_time
    }
}

impl LoopModel {
    /// Checks that the matrices fit: `A` n×n, `B` n×m, `C` m×n, `D` m×m.
    fn check(&self) -> Result<(), MarginError> {
        let (n, m) = (self.a.nrows(), self.b.ncols());
        if self.a.ncols() != n || self.b.nrows() != n || self.c.shape() != (m, n) || self.d.shape() != (m, m) {
            return Err(MarginError::Size { what: "loop model" });
        }
        Ok(())
    }

    /// `E = (I + D)⁻¹` and the closed-loop matrix `A − B E C`.
    ///
    /// # Errors
    /// [`MarginError::Size`] or [`MarginError::IllPosed`].
    pub fn closed_loop(&self) -> Result<(DMatrix<f64>, DMatrix<f64>), MarginError> {
        self.check()?;
        let m = self.d.nrows();
        let e = (DMatrix::<f64>::identity(m, m) + &self.d).try_inverse().ok_or(MarginError::IllPosed)?;
        let acl = &self.a - &self.b * &e * &self.c;
        Ok((e, acl))
    }

    /// The loop prepared for evaluation at many frequencies.
    ///
    /// # Errors
    /// [`MarginError::IllPosed`] when `I + D` is singular.
    pub fn evaluator(&self) -> Result<Evaluator, MarginError> {
        let (e, acl) = self.closed_loop()?;
        let zero = DMatrix::zeros(e.nrows(), e.ncols());
        // I − E = I − (I + D)⁻¹ = D (I + D)⁻¹: no cancellation, and exactly zero for D = 0.
        let i_minus_e = &self.d * &e;
        Ok(Evaluator { open: std::cell::OnceCell::new(), model: self.clone(), closed: Reduced::new(&acl, &(&self.b * &e), &(&e * &self.c), &zero), e, i_minus_e, sample_time: self.sample_time })
    }

    /// `L` at the frequency `w` (rad/s) (for many frequencies, use [`LoopModel::evaluator`]).
    ///
    /// # Errors
    /// [`MarginError`] when the loop is ill posed or `L` has a pole at `w`.
    pub fn loop_response(&self, w: f64) -> Result<DMatrix<Complex64>, MarginError> {
        self.evaluator()?.loop_response(w)
    }

    /// The input sensitivity `S = (I + L)⁻¹` at `w`, from the closed loop.
    ///
    /// # Errors
    /// [`MarginError`] when the loop is ill posed or the closed loop has a pole at `w`.
    pub fn sensitivity(&self, w: f64) -> Result<DMatrix<Complex64>, MarginError> {
        self.evaluator()?.sensitivity(w)
    }

    /// The same loop with only input `i` open and the others closed by `u_o = −y_o`: a scalar
    /// loop. With `E = (I + D_oo)⁻¹`: `A − B_o E C_o`, `b_i − B_o E D_oi`, `c_i − D_io E C_o`,
    /// `D_ii − D_io E D_oi`.
    ///
    /// # Errors
    /// [`MarginError::IllPosed`] when `I + D_oo` is singular, [`MarginError::Size`] for an input
    /// the loop does not have.
    pub fn loop_at(&self, i: usize) -> Result<LoopModel, MarginError> {
        self.check()?;
        let m = self.b.ncols();
        if i >= m {
            return Err(MarginError::Size { what: "input index" });
        }
        let others: Vec<usize> = (0..m).filter(|&j| j != i).collect();
        let n = self.a.nrows();
        let k = others.len();
        let bo = DMatrix::from_fn(n, k, |r, j| self.b[(r, others[j])]);
        let co = DMatrix::from_fn(k, n, |j, c| self.c[(others[j], c)]);
        let doo = DMatrix::from_fn(k, k, |r, c| self.d[(others[r], others[c])]);
        let doi = DMatrix::from_fn(k, 1, |r, _| self.d[(others[r], i)]);
        let dio = DMatrix::from_fn(1, k, |_, c| self.d[(i, others[c])]);
        let e = (DMatrix::<f64>::identity(k, k) + doo).try_inverse().ok_or(MarginError::IllPosed)?;
        let (bo_e, e_co) = (&bo * &e, &e * &co);
        Ok(LoopModel {
            a: &self.a - &bo_e * &co,
            b: self.b.columns(i, 1) - &bo_e * &doi,
            c: self.c.rows(i, 1) - &dio * &e_co,
            d: DMatrix::from_element(1, 1, self.d[(i, i)]) - &dio * &e * &doi,
            sample_time: self.sample_time,
        })
    }

    /// Frequencies to evaluate: see the module documentation.
    ///
    /// # Errors
    /// [`MarginError::Eigen`] when the closed-loop poles cannot be computed.
    pub fn grid(&self, points: usize) -> Result<Vec<f64>, MarginError> {
        let (_, acl) = self.closed_loop()?;
        let poles = try_eigenvalues(&acl).map_err(|e| MarginError::Eigen(e.to_string()))?;
        Ok(self.grid_for_poles(&poles, points))
    }

    /// [`LoopModel::grid`] for closed-loop poles the caller has computed already.
    pub fn grid_for_poles(&self, poles: &[Complex64], points: usize) -> Vec<f64> {
        let speeds: Vec<f64> = match self.sample_time {
            None => poles.iter().map(|z| z.norm()).filter(|v| *v > 0.0 && v.is_finite()).collect(),
            Some(t) => poles.iter().filter(|z| z.norm() > 0.0).map(|z| (z.ln() / t).norm()).filter(|v| *v > 0.0 && v.is_finite()).collect(),
        };
        let lo = speeds.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = speeds.iter().copied().fold(0.0, f64::max);
        let (lo, hi) = match (lo.is_finite() && hi > 0.0, self.sample_time) {
            (true, _) => (lo * 1e-3, hi * 1e3),
            // Every pole at z = 0 (deadbeat): the whole band up to the Nyquist frequency.
            (false, Some(t)) => (std::f64::consts::PI / t * 1e-6, std::f64::consts::PI / t),
            (false, None) => (1e-3, 1e3),
        };
        let top = match self.sample_time {
            Some(t) => std::f64::consts::PI / t,
            None => hi,
        };
        let count = points.max(2);
        let mut w: Vec<f64> = (0..count).map(|k| (lo.ln() + (top.min(hi).max(lo * 10.0).ln() - lo.ln()) * k as f64 / (count - 1) as f64).exp()).collect();
        w.push(0.0);
        w.push(top);
        for z in poles {
            let im = match self.sample_time {
                None => z.im.abs(),
                Some(t) if z.norm() > 0.0 => (z.ln() / t).im.abs(),
                Some(_) => 0.0,
            };
            if im > 0.0 && im <= top {
                w.push(im);
            }
        }
        w.sort_by(f64::total_cmp);
        w.dedup();
        w
    }
}

/// Loop-at-a-time margins of one input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InputMargins {
    /// Disk margin α (skew as asked) and the frequency where it is attained.
    pub disk_alpha: f64,
    pub disk_frequency: f64,
    /// Gain factors the disk guarantees, `[low, high]`, and its phase (degrees).
    pub disk_gain_range: [f64; 2],
    pub disk_phase_deg: f64,
    /// Classical margins: gain factors at the −180° crossings below and above 1 (`None` when
    /// there is no such crossing), phase margin (degrees) of smallest size over every crossover,
    /// its frequency,
    /// and the delay margin (s).
    pub gain_margin_low: Option<f64>,
    pub gain_margin_high: Option<f64>,
    pub phase_margin_deg: Option<f64>,
    pub crossover: Option<f64>,
    pub delay_margin: Option<f64>,
}

/// Largest singular value of a complex matrix (infinite when the computation fails: a margin
/// computed from it is then zero, never larger than the truth).
///
/// `σ_max² = λ_max(Mᴴ M)`: squaring costs no relative accuracy for the largest singular value
/// (common practice). 2 × 2: the closed form of a Hermitian 2 × 2 eigenvalue; larger: the
/// largest eigenvalue of the smaller Gram matrix alone, by tridiagonal reduction and Laguerre's
/// iteration ([`crate::linalg::hermitian_top`]); the SVD only if that fails (a non-finite
/// entry).
pub fn sigma_max(m: &DMatrix<Complex64>) -> f64 {
    match m.shape() {
        (0, _) | (_, 0) => 0.0,
        (1, 1) => m[(0, 0)].norm(),
        (2, 2) => {
            let col = |j: usize| (m[(0, j)], m[(1, j)]);
            let ((a0, a1), (b0, b1)) = (col(0), col(1));
            let (g00, g11) = (a0.norm_sqr() + a1.norm_sqr(), b0.norm_sqr() + b1.norm_sqr());
            let g01 = a0.conj() * b0 + a1.conj() * b1;
            let half = 0.5 * (g00 - g11);
            let top = 0.5 * (g00 + g11) + half.hypot(g01.norm());
            if top.is_finite() {
                top.max(0.0).sqrt()
            } else {
                f64::INFINITY
            }
        }
        (r, c) => {
            let g = if r >= c { m.adjoint() * m } else { m * m.adjoint() };
            match crate::linalg::hermitian_top::try_largest_hermitian_eigenvalue(&g) {
                Ok(v) if v.is_finite() => v.max(0.0).sqrt(),
                _ => sigma_max_svd(m),
            }
        }
    }
}

/// [`sigma_max`] by the SVD.
fn sigma_max_svd(m: &DMatrix<Complex64>) -> f64 {
    crate::linalg::svd::try_singular_values(m, crate::linalg::svd::SvdParams::default()).map_or(f64::INFINITY, |s| s.iter().copied().fold(0.0, f64::max))
}

/// Golden-section maximisation of `f` on `[a, b]`, one new evaluation per step, until the
/// bracket is 1e-8 of `b` wide, or of 1 % of the first bracket where `b` shrinks towards a peak
/// at 0 (80 steps at most). The value then falls short of a smooth peak by about
/// ½ (bracket / peak width)² of it: negligible except for a resonance narrower than about 1e-6
/// relative, which is why callers keep the larger of this and the grid value
/// ([`refine_grid_peak`]). A failed evaluation counts as infinite: a margin computed from it is
/// zero, never larger than the truth.
pub fn refine_max(f: &dyn Fn(f64) -> Option<f64>, mut a: f64, mut b: f64) -> (f64, f64) {
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let value = |x: f64| f(x).unwrap_or(f64::INFINITY);
    let mut best = (a, value(a));
    let mut keep = |x: f64, v: f64| {
        if v > best.1 {
            best = (x, v);
        }
    };
    let floor = 1e-2 * (b - a).abs();
    let (mut c, mut d) = (b - g * (b - a), a + g * (b - a));
    let (mut fc, mut fd) = (value(c), value(d));
    keep(c, fc);
    keep(d, fd);
    for _ in 0..80 {
        if (b - a) <= 1e-8 * b.abs().max(floor).max(1e-300) {
            break;
        }
        if fc > fd {
            (b, d, fd) = (d, c, fc);
            c = b - g * (b - a);
            fc = value(c);
            keep(c, fc);
        } else {
            (a, c, fc) = (c, d, fd);
            d = a + g * (b - a);
            fd = value(d);
            keep(d, fd);
        }
    }
    best
}

/// The peak of `values` (at `grid`, ascending) refined by [`refine_max`] between the grid
/// neighbours of the largest value, keeping the larger of the refined and the grid value (a
/// refinement never lowers a peak the grid has seen, including an infinite one from a failed
/// evaluation): `(frequency, value)`.
pub fn refine_grid_peak(grid: &[f64], values: &[f64], f: &dyn Fn(f64) -> Option<f64>) -> (f64, f64) {
    if grid.is_empty() {
        return (0.0, 0.0);
    }
    let k = (0..values.len()).max_by(|&i, &j| values[i].total_cmp(&values[j])).unwrap_or(0);
    let (lo, hi) = (grid[k.saturating_sub(1)], grid[(k + 1).min(grid.len() - 1)]);
    if hi > lo {
        let (w, v) = refine_max(f, lo, hi);
        if v > values[k] {
            return (w, v);
        }
    }
    (grid[k], values[k])
}

/// A sign change of `f` on `[a, b]` by the Illinois variant of regula falsi (Dowell & Jarratt,
/// "A modified regula falsi method for computing the root of an equation", BIT 11, 1971): the
/// bracket always holds the sign change, and its stale end's value is halved so both ends
/// move (superlinear convergence for smooth `f`). Stops when the bracket is 1e-13 of `b` wide or
/// `f` vanishes, 80 steps at most; a non-finite value falls back to plain bisection.
fn sign_change(f: &dyn Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let (mut fa, mut fb) = (f(a), f(b));
    if !(fa.is_finite() && fb.is_finite()) || (fa > 0.0) == (fb > 0.0) {
        return bisection(f, a, b);
    }
    let mut side = 0i8;
    for _ in 0..80 {
        if (b - a) <= 1e-13 * b.abs() {
            break;
        }
        let mut x = (a * fb - b * fa) / (fb - fa);
        if !(x > a && x < b) {
            x = 0.5 * (a + b);
        }
        let fx = f(x);
        if fx == 0.0 {
            return x;
        }
        if !fx.is_finite() {
            return bisection(f, a, b);
        }
        if (fx > 0.0) == (fb > 0.0) {
            (b, fb) = (x, fx);
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            (a, fa) = (x, fx);
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
    }
    0.5 * (a + b)
}

/// Plain bisection (80 steps at most), for brackets where a value is not finite.
fn bisection(f: &dyn Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let fa = f(a);
    for _ in 0..80 {
        if (b - a) <= 1e-13 * b.abs() {
            break;
        }
        let m = 0.5 * (a + b);
        if (f(m) > 0.0) == (fa > 0.0) {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

#[cfg(test)]
#[path = "../tests/margins.rs"]
mod tests;
