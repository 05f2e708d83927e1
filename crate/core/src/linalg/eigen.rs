//! Eigenvalues of a real square matrix, with an explicit iteration limit.
//!
//! # Equation
//! Find every `λ` with `det(A − λ I) = 0` for a real `n × n` matrix `A`.
//!
//! # Method
//! 1. Balancing by diagonal similarity with powers of two, which changes no
//!    eigenvalue and no rounding error (Parlett & Reinsch, "Balancing a matrix
//!    for calculation of eigenvalues and eigenvectors", Numer. Math. 13, 1969).
//! 2. Reduction to upper Hessenberg form by Householder reflections
//!    (nalgebra's `Hessenberg`, a finite algorithm).
//! 3. The Francis implicit double-shift QR iteration on the Hessenberg matrix,
//!    with deflation of negligible subdiagonal entries and exceptional shifts
//!    after 10 and 20 iterations without deflation (the EISPACK `hqr` scheme:
//!    Martin, Peters & Wilkinson, "The QR algorithm for real Hessenberg
//!    matrices", Numer. Math. 14, 1970; Golub & Van Loan, *Matrix
//!    Computations*, 4th ed., §7.5).
//!
//! nalgebra 0.35's own `eigenvalues()`, `complex_eigenvalues()` and
//! `Schur::new` iterate without a limit and fail to converge on some
//! matrices — companion matrices among them, which is exactly what
//! single-input pole placement produces. Every eigenvalue computation in
//! Polewright goes through [`try_eigenvalues`] instead.
//!
//! # Cost
//! About `10 n³` flops for the Hessenberg reduction plus roughly two QR
//! sweeps of `O(n²)` per eigenvalue: `O(n³)` overall.
//!
//! # Failure modes
//! Returns [`EigenError::NoConvergence`] if one eigenvalue (or pair) needs more
//! than [`EigenParams::max_iterations_per_eigenvalue`] sweeps — it never loops
//! forever. Non-finite input is refused with [`EigenError::NotFinite`].
//! Eigenvalues of a defective matrix (a Jordan block of size `k`) are only
//! accurate to about `ε^(1/k)` relative to `‖A‖`: an unavoidable property of
//! the problem, not of the method.

use nalgebra::DMatrix;
use num_complex::Complex64;

/// Tuning constants of the eigenvalue iteration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EigenParams {
    /// Largest number of QR sweeps spent on one eigenvalue (or pair) before
    /// giving up. Default 60 (EISPACK used 30; exceptional shifts every 10).
    pub max_iterations_per_eigenvalue: usize,
    /// Largest number of balancing sweeps. Default 100.
    pub max_balancing_sweeps: usize,
}

impl Default for EigenParams {
    fn default() -> Self {
        EigenParams { max_iterations_per_eigenvalue: 60, max_balancing_sweeps: 100 }
    }
}

/// What went wrong computing eigenvalues.
#[derive(Debug, Clone, PartialEq)]
pub enum EigenError {
    /// The matrix is not square.
    NotSquare { rows: usize, columns: usize },
    /// An entry is NaN or infinite.
    NotFinite { row: usize, column: usize },
    /// The QR iteration did not converge within the limit.
    NoConvergence { found: usize, size: usize, iterations: usize },
}

impl std::fmt::Display for EigenError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EigenError::NotSquare { rows, columns } => {
                write!(f, "eigenvalues need a square matrix, got {rows}×{columns}")
            }
            EigenError::NotFinite { row, column } => write!(f, "eigenvalues cannot be computed: entry ({}, {}) is not a finite number", row + 1, column + 1),
            EigenError::NoConvergence { found, size, iterations } => write!(
                f,
                "the eigenvalue iteration did not converge after {iterations} sweeps \
                 ({found} of {size} eigenvalues found); the matrix may be badly scaled"
            ),
        }
    }
}

impl std::error::Error for EigenError {}

/// Eigenvalues of `a` with the default limits. See [`try_eigenvalues_with`].
///
/// # Errors
/// See [`EigenError`].
pub fn try_eigenvalues(a: &DMatrix<f64>) -> Result<Vec<Complex64>, EigenError> {
    try_eigenvalues_with(a, EigenParams::default())
}

/// Eigenvalues of `a`, sorted by ascending real part then descending imaginary
/// part; complex pairs are exact conjugates of each other.
///
/// # Errors
/// [`EigenError::NotSquare`], [`EigenError::NotFinite`], or
/// [`EigenError::NoConvergence`] when the iteration limit is reached.
pub fn try_eigenvalues_with(a: &DMatrix<f64>, params: EigenParams) -> Result<Vec<Complex64>, EigenError> {
    let (rows, columns) = a.shape();
    if rows != columns {
        return Err(EigenError::NotSquare { rows, columns });
    }
    for j in 0..columns {
        for i in 0..rows {
            if !a[(i, j)].is_finite() {
                return Err(EigenError::NotFinite { row: i, column: j });
            }
        }
    }
    let n = rows;
    if n == 0 {
        return Ok(Vec::new());
    }
    if n == 1 {
        return Ok(vec![Complex64::new(a[(0, 0)], 0.0)]);
    }
    let mut m = a.clone();
    balance(&mut m, params.max_balancing_sweeps);
    let h = nalgebra::linalg::Hessenberg::new(m).unpack_h();
    let mut values = hessenberg_qr(h, params.max_iterations_per_eigenvalue)?;
    sort_eigenvalues(&mut values);
    Ok(values)
}

/// Sorts by ascending real part, then descending imaginary part.
pub fn sort_eigenvalues(values: &mut [Complex64]) {
    values.sort_by(|x, y| x.re.total_cmp(&y.re).then(y.im.total_cmp(&x.im)));
}

/// Parlett–Reinsch balancing with radix 2, in place.
fn balance(a: &mut DMatrix<f64>, max_sweeps: usize) {
    balance_tracking(a, max_sweeps, None);
}

/// The diagonal of the Parlett–Reinsch balancing similarity (radix 2, powers of two only, so
/// exact): `d` such that `D⁻¹ A D`, `D = diag(d)`, has each off-diagonal row and column sum of
/// comparable size (B. N. Parlett & C. Reinsch, "Balancing a matrix for calculation of
/// eigenvalues and eigenvectors", Numer. Math. 13, 1969; from memory). At most `max_sweeps`
/// sweeps of `O(n²)`; a zero row or column is left unscaled. Used to judge eigenvector
/// conditioning independently of the units the states are measured in.
pub fn balancing_scale(a: &DMatrix<f64>, max_sweeps: usize) -> nalgebra::DVector<f64> {
    let mut m = a.clone();
    let mut d = nalgebra::DVector::from_element(a.nrows(), 1.0);
    balance_tracking(&mut m, max_sweeps, Some(&mut d));
    d
}

fn balance_tracking(a: &mut DMatrix<f64>, max_sweeps: usize, mut scale: Option<&mut nalgebra::DVector<f64>>) {
    const RADIX: f64 = 2.0;
    let n = a.nrows();
    for _ in 0..max_sweeps {
        let mut done = true;
        for i in 0..n {
            let mut c = 0.0;
            let mut r = 0.0;
            for j in 0..n {
                if j != i {
                    c += a[(j, i)].abs();
                    r += a[(i, j)].abs();
                }
            }
            if c == 0.0 || r == 0.0 {
                continue;
            }
            let s = c + r;
            let mut f = 1.0;
            let mut g = r / RADIX;
            // Bounded by the exponent range of f64 (at most ~1100 halvings/doublings).
            let mut guard = 0;
            while c < g && guard < 2200 {
                f *= RADIX;
                c *= RADIX * RADIX;
                guard += 1;
            }
            g = r * RADIX;
            while c > g && guard < 4400 {
                f /= RADIX;
                c /= RADIX * RADIX;
                guard += 1;
            }
            if (c + r) / f < 0.95 * s && f.is_finite() && f > 0.0 {
                done = false;
                let g = 1.0 / f;
                for j in 0..n {
                    a[(i, j)] *= g;
                }
                for j in 0..n {
                    a[(j, i)] *= f;
                }
                if let Some(d) = scale.as_deref_mut() {
                    d[i] *= f;
                }
            }
        }
        if done {
            break;
        }
    }
}

/// `a!(h, i, j)`: element (i, j) of `h` with the 1-based indices of the classical formulation.
macro_rules! a {
    ($h:ident, $i:expr, $j:expr) => {
        $h[($i - 1, $j - 1)]
    };
}

/// Francis double-shift QR on an upper Hessenberg matrix (EISPACK `hqr`).
fn hessenberg_qr(mut h: DMatrix<f64>, max_its: usize) -> Result<Vec<Complex64>, EigenError> {
    let n = h.nrows();
    let mut wr = vec![0.0; n];
    let mut wi = vec![0.0; n];
    let mut anorm = 0.0;
    for i in 0..n {
        for j in i.saturating_sub(1)..n {
            anorm += h[(i, j)].abs();
        }
    }
    let mut nn = n;
    let mut t = 0.0;
    let mut total_its = 0usize;
    while nn >= 1 {
        let mut its = 0usize;
        loop {
            let l = small_subdiagonal(&mut h, nn, anorm);
            let mut x = a!(h, nn, nn);
            if l == nn {
                // One root found.
                wr[nn - 1] = x + t;
                wi[nn - 1] = 0.0;
                nn -= 1;
                break;
            }
            let mut y = a!(h, nn - 1, nn - 1);
            let mut w = a!(h, nn, nn - 1) * a!(h, nn - 1, nn);
            if l == nn - 1 {
                // Two roots found.
                let (re, im) = pair_roots(x + t, y - x, w);
                wr[nn - 2] = re[0];
                wr[nn - 1] = re[1];
                wi[nn - 2] = im[0];
                wi[nn - 1] = im[1];
                nn -= 2;
                break;
            }
            // No roots found yet: iterate.
            if its >= max_its {
                return Err(EigenError::NoConvergence { found: n - nn, size: n, iterations: total_its });
            }
            if its > 0 && its % 10 == 0 {
                // Exceptional shift.
                t += x;
                for i in 1..=nn {
                    a!(h, i, i) -= x;
                }
                let s = a!(h, nn, nn - 1).abs() + a!(h, nn - 1, nn - 2).abs();
                x = 0.75 * s;
                y = x;
                w = -0.4375 * s * s;
            }
            its += 1;
            total_its += 1;
            let (m, start) = double_shift_start(&mut h, l, nn, [x, y, w]);
            double_qr_step(&mut h, l, m, nn, start);
            if !h.iter().all(|v| v.is_finite()) {
                return Err(EigenError::NoConvergence { found: n - nn, size: n, iterations: total_its });
            }
        }
    }
    let mut values: Vec<Complex64> = wr.iter().zip(&wi).map(|(&re, &im)| Complex64::new(re, im)).collect();
    for v in values.iter_mut() {
        if v.im == 0.0 {
            v.im = 0.0; // normalise -0.0
        }
    }
    Ok(values)
}

/// The last row `l ≤ nn` (1-based) below which the active block splits: the first small
/// subdiagonal element found going up from row `nn`, set to zero (`l = 1` when none is).
fn small_subdiagonal(h: &mut DMatrix<f64>, nn: usize, anorm: f64) -> usize {
    let mut l = nn;
    while l >= 2 {
        let mut s = a!(h, l - 1, l - 1).abs() + a!(h, l, l).abs();
        if s == 0.0 {
            s = anorm;
        }
        if a!(h, l, l - 1).abs() <= f64::EPSILON * s {
            a!(h, l, l - 1) = 0.0;
            break;
        }
        l -= 1;
    }
    l
}

/// The two roots of a deflated 2×2 block with shifted corner `x` (shift included), `y − x`
/// and the product `w` of its off-diagonal elements: `([re₁, re₂], [im₁, im₂])`.
fn pair_roots(x: f64, y_minus_x: f64, w: f64) -> ([f64; 2], [f64; 2]) {
    let p = 0.5 * y_minus_x;
    let q = p * p + w;
    let z = q.abs().sqrt();
    if q >= 0.0 {
        let z = p + z.copysign(p);
        let second = if z != 0.0 { x - w / z } else { x + z };
        ([x + z, second], [0.0, 0.0])
    } else {
        ([x + p, x + p], [z, -z])
    }
}

/// Where the double-shift step starts: the row `m` (from `nn − 2` up to `l`) below two
/// consecutive small subdiagonal elements, and the first column `[p, q, r]` of the shifted
/// product for shifts from `[x, y, w]`, scaled to unit sum of magnitudes.
fn double_shift_start(h: &mut DMatrix<f64>, l: usize, nn: usize, [x, y, w]: [f64; 3]) -> (usize, [f64; 3]) {
    let mut m = nn - 2;
    let (mut p, mut q, mut r);
    loop {
        let z = a!(h, m, m);
        let r0 = x - z;
        let s0 = y - z;
        p = (r0 * s0 - w) / a!(h, m + 1, m) + a!(h, m, m + 1);
        q = a!(h, m + 1, m + 1) - z - r0 - s0;
        r = a!(h, m + 2, m + 1);
        let s = p.abs() + q.abs() + r.abs();
        p /= s;
        q /= s;
        r /= s;
        if m == l {
            break;
        }
        let u = a!(h, m, m - 1).abs() * (q.abs() + r.abs());
        let v = p.abs() * (a!(h, m - 1, m - 1).abs() + z.abs() + a!(h, m + 1, m + 1).abs());
        if u <= f64::EPSILON * v {
            break;
        }
        m -= 1;
    }
    for i in (m + 2)..=nn {
        a!(h, i, i - 2) = 0.0;
        if i != m + 2 {
            a!(h, i, i - 3) = 0.0;
        }
    }
    (m, [p, q, r])
}

/// One Francis double-shift QR step on rows `l..nn` and columns `m..nn` (1-based), chasing the
/// bulge with 3×3 Householder reflections from the starting column `[p, q, r]`.
fn double_qr_step(h: &mut DMatrix<f64>, l: usize, m: usize, nn: usize, [mut p, mut q, mut r]: [f64; 3]) {
    let mut x = 0.0;
    let mut k = m;
    while k < nn {
        if k != m {
            p = a!(h, k, k - 1);
            q = a!(h, k + 1, k - 1);
            r = if k != nn - 1 { a!(h, k + 2, k - 1) } else { 0.0 };
            x = p.abs() + q.abs() + r.abs();
            if x != 0.0 {
                p /= x;
                q /= x;
                r /= x;
            }
        }
        let s = (p * p + q * q + r * r).sqrt().copysign(p);
        if s != 0.0 {
            if k == m {
                if l != m {
                    a!(h, k, k - 1) = -a!(h, k, k - 1);
                }
            } else {
                a!(h, k, k - 1) = -s * x;
            }
            p += s;
            let (xs, ys, zs) = (p / s, q / s, r / s);
            q /= p;
            r /= p;
            for j in k..=nn {
                let mut pp = a!(h, k, j) + q * a!(h, k + 1, j);
                if k != nn - 1 {
                    pp += r * a!(h, k + 2, j);
                    a!(h, k + 2, j) -= pp * zs;
                }
                a!(h, k + 1, j) -= pp * ys;
                a!(h, k, j) -= pp * xs;
            }
            let mmin = if nn < k + 3 { nn } else { k + 3 };
            for i in l..=mmin {
                let mut pp = xs * a!(h, i, k) + ys * a!(h, i, k + 1);
                if k != nn - 1 {
                    pp += zs * a!(h, i, k + 2);
                    a!(h, i, k + 2) -= pp * r;
                }
                a!(h, i, k + 1) -= pp * q;
                a!(h, i, k) -= pp;
            }
        }
        k += 1;
    }
}

#[cfg(test)]
#[path = "../tests/linalg_eigen.rs"]
mod tests;
