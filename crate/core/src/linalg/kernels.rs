//! Matrix–vector kernels on contiguous column-major storage, for the inner loops that run
//! thousands of times per design (the placement sweeps, the free-response steps).
//!
//! # Equation
//! `y = M x`, `[y₁ y₂] = M [x₁ x₂]`, `M ← M + α x yᵀ` and `M ← M + x₁ y₁ᵀ + x₂ y₂ᵀ`, `M` a
//! dense `n × c` matrix stored by columns.
//!
//! # Method
//! Column-oriented loops (`y += x_k M[:, k]`, one pass down each column; BLAS levels 2,
//! J. J. Dongarra et al., "An extended set of FORTRAN basic linear algebra subprograms",
//! ACM TOMS 14(1), 1988, from memory). Two things make them faster than the general strided
//! routines of the matrix library:
//! - the slices are contiguous, so the inner loop vectorises;
//! - the two-vector forms read (or update) `M` once for two vectors, which halves the memory
//!   traffic where `M` does not fit in the first-level cache.
//!
//! On x86-64 a second copy of each loop is compiled for AVX2 and chosen at run time when the
//! processor has it (`is_x86_feature_detected!`); the other targets (including the browser's
//! WebAssembly) use the portable copy.
//!
//! # Rounding
//! Each output element sees the same operations in the same order as the column-oriented
//! `gemv` / `ger` of the matrix library (`y_i ← y_i + M_ik x_k`, `k` ascending; no fused
//! multiply–add is ever formed), and the two-vector forms do, per element, exactly what two
//! one-vector calls would: the results are bitwise those of the routines they replace, on
//! every target.
//!
//! # Cost
//! `2 n c` flops for a product, `4 n c` for the two-vector forms; memory: one pass over `M`.
//!
//! # Failure modes
//! None: lengths are asserted by the callers' construction (a mismatch is a programming
//! error and panics in debug builds; in release the loops stop at the shorter slice).

use nalgebra::{DMatrix, DVector};

/// Calls `$body(args)` through its AVX2 copy when the processor has AVX2, else the portable one.
macro_rules! dispatch {
    ($body:ident($($arg:expr),*)) => {{
        #[cfg(target_arch = "x86_64")]
        {
            if std::is_x86_feature_detected!("avx2") {
                // SAFETY: the `avx2` copy runs only on a processor that has just reported AVX2.
                return unsafe { avx2::$body($($arg),*) };
            }
        }
        $body($($arg),*)
    }};
}

/// `y ← M x`.
pub fn product_into(m: &DMatrix<f64>, x: &DVector<f64>, y: &mut DVector<f64>) {
    debug_assert_eq!((m.nrows(), m.ncols()), (y.len(), x.len()));
    dispatch!(product_body(m.as_slice(), m.nrows(), x.as_slice(), y.as_mut_slice()))
}

/// `y₁ ← M x₁`, `y₂ ← M x₂` in one pass over `M`.
pub fn two_products_into(m: &DMatrix<f64>, x1: &DVector<f64>, x2: &DVector<f64>, y1: &mut DVector<f64>, y2: &mut DVector<f64>) {
    debug_assert_eq!((m.nrows(), m.ncols()), (y1.len(), x1.len()));
    debug_assert_eq!((y1.len(), x1.len()), (y2.len(), x2.len()));
    dispatch!(two_products_body(m.as_slice(), m.nrows(), x1.as_slice(), x2.as_slice(), y1.as_mut_slice(), y2.as_mut_slice()))
}

/// `M ← M + α x yᵀ`.
pub fn add_outer(m: &mut DMatrix<f64>, alpha: f64, x: &DVector<f64>, y: &DVector<f64>) {
    debug_assert_eq!((m.nrows(), m.ncols()), (x.len(), y.len()));
    let rows = m.nrows();
    dispatch!(add_outer_body(m.as_mut_slice(), rows, alpha, x.as_slice(), y.as_slice()))
}

/// `M ← (M − x₁ y₁ᵀ) − x₂ y₂ᵀ` in one pass over `M`.
pub fn subtract_two_outer(m: &mut DMatrix<f64>, x1: &DVector<f64>, y1: &DVector<f64>, x2: &DVector<f64>, y2: &DVector<f64>) {
    debug_assert_eq!((m.nrows(), m.ncols()), (x1.len(), y1.len()));
    debug_assert_eq!((x1.len(), y1.len()), (x2.len(), y2.len()));
    let rows = m.nrows();
    dispatch!(subtract_two_outer_body(m.as_mut_slice(), rows, x1.as_slice(), y1.as_slice(), x2.as_slice(), y2.as_slice()))
}

/// The AVX2 copies: the same bodies compiled with the feature enabled.
#[cfg(target_arch = "x86_64")]
mod avx2 {
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn product_body(m: &[f64], rows: usize, x: &[f64], y: &mut [f64]) {
        super::product_body(m, rows, x, y)
    }
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn two_products_body(m: &[f64], rows: usize, x1: &[f64], x2: &[f64], y1: &mut [f64], y2: &mut [f64]) {
        super::two_products_body(m, rows, x1, x2, y1, y2)
    }
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn add_outer_body(m: &mut [f64], rows: usize, alpha: f64, x: &[f64], y: &[f64]) {
        super::add_outer_body(m, rows, alpha, x, y)
    }
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn subtract_two_outer_body(m: &mut [f64], rows: usize, x1: &[f64], y1: &[f64], x2: &[f64], y2: &[f64]) {
        super::subtract_two_outer_body(m, rows, x1, y1, x2, y2)
    }
}

/// `y ← M x`: the first column sets `y` (as the library does, so that a `−0` product stays
/// `−0`), the others add to it.
#[inline(always)]
fn product_body(m: &[f64], rows: usize, x: &[f64], y: &mut [f64]) {
    y.fill(0.0);
    if rows == 0 {
        return;
    }
    let mut columns = m.chunks_exact(rows).zip(x);
    if let Some((col, &x0)) = columns.next() {
        for (yi, &mi0) in y.iter_mut().zip(col) {
            *yi = mi0 * x0;
        }
    }
    for (col, &xk) in columns {
        for (yi, &mik) in y.iter_mut().zip(col) {
            *yi += mik * xk;
        }
    }
}

/// [`product_body`] for two vectors in one pass over `M`.
#[inline(always)]
fn two_products_body(m: &[f64], rows: usize, x1: &[f64], x2: &[f64], y1: &mut [f64], y2: &mut [f64]) {
    y1.fill(0.0);
    y2.fill(0.0);
    if rows == 0 {
        return;
    }
    let mut columns = m.chunks_exact(rows).zip(x1).zip(x2);
    if let Some(((col, &a), &b)) = columns.next() {
        for ((p, q), &mi0) in y1.iter_mut().zip(y2.iter_mut()).zip(col) {
            *p = mi0 * a;
            *q = mi0 * b;
        }
    }
    for ((col, &a), &b) in columns {
        for ((p, q), &mik) in y1.iter_mut().zip(y2.iter_mut()).zip(col) {
            *p += mik * a;
            *q += mik * b;
        }
    }
}

#[inline(always)]
fn add_outer_body(m: &mut [f64], rows: usize, alpha: f64, x: &[f64], y: &[f64]) {
    if rows == 0 {
        return;
    }
    for (col, &yk) in m.chunks_exact_mut(rows).zip(y) {
        let s = alpha * yk;
        for (mik, &xi) in col.iter_mut().zip(x) {
            *mik += s * xi;
        }
    }
}

#[inline(always)]
fn subtract_two_outer_body(m: &mut [f64], rows: usize, x1: &[f64], y1: &[f64], x2: &[f64], y2: &[f64]) {
    if rows == 0 {
        return;
    }
    for ((col, &a), &b) in m.chunks_exact_mut(rows).zip(y1).zip(y2) {
        let (s, t) = (-a, -b);
        for ((mik, &p), &q) in col.iter_mut().zip(x1).zip(x2) {
            *mik = (*mik + s * p) + t * q;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A seeded matrix with entries spread over several binades (so that rounding matters).
    fn seeded(rows: usize, cols: usize, seed: u64) -> DMatrix<f64> {
        let mut s = seed;
        DMatrix::from_fn(rows, cols, |_, _| {
            s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            let u = (s >> 11) as f64 / (1u64 << 53) as f64;
            match (s >> 5) % 11 {
                0 => 0.0,
                1 => -0.0,
                _ => (u - 0.5) * 10f64.powi(((s >> 3) % 7) as i32 - 3),
            }
        })
    }

    /// The bits of every entry (`==` would take `−0` for `+0`).
    fn bits(m: &DMatrix<f64>) -> Vec<u64> {
        m.iter().map(|v| v.to_bits()).collect()
    }

    /// Bitwise agreement with the matrix library's `gemv` / `ger`, which the kernels replace,
    /// on sizes around the vector widths and beyond the first-level cache; the seeded data
    /// include exact zeros of both signs, so that signed-zero products occur.
    #[test]
    fn kernels_match_the_library_bit_for_bit() {
        for (k, &n) in [1usize, 2, 3, 5, 8, 17, 40, 131].iter().enumerate() {
            let m = seeded(n, n, 11 + k as u64);
            let x1 = seeded(n, 1, 101 + k as u64).column(0).into_owned();
            let x2 = seeded(n, 1, 201 + k as u64).column(0).into_owned();
            let (mut y1, mut y2) = (DVector::zeros(n), DVector::zeros(n));
            let (mut r1, mut r2) = (DVector::zeros(n), DVector::zeros(n));
            r1.gemv(1.0, &m, &x1, 0.0);
            r2.gemv(1.0, &m, &x2, 0.0);
            let col = |v: &DVector<f64>| DMatrix::from_column_slice(v.len(), 1, v.as_slice());
            product_into(&m, &x1, &mut y1);
            assert_eq!(bits(&col(&y1)), bits(&col(&r1)), "n = {n}: product");
            two_products_into(&m, &x1, &x2, &mut y1, &mut y2);
            assert_eq!((bits(&col(&y1)), bits(&col(&y2))), (bits(&col(&r1)), bits(&col(&r2))), "n = {n}: two products");

            let (mut a, mut b) = (m.clone(), m.clone());
            a.ger(-0.37, &x1, &x2, 1.0);
            add_outer(&mut b, -0.37, &x1, &x2);
            assert_eq!(bits(&a), bits(&b), "n = {n}: outer product");

            let (mut a, mut b) = (m.clone(), m.clone());
            a.ger(-1.0, &x1, &r1, 1.0);
            a.ger(-1.0, &x2, &r2, 1.0);
            subtract_two_outer(&mut b, &x1, &r1, &x2, &r2);
            assert_eq!(bits(&a), bits(&b), "n = {n}: two outer products");
        }
    }

    /// A product of negative zeros is `−0` in the library's `gemv` (its first column sets `y`);
    /// starting from `+0` and adding would give `+0`.
    #[test]
    fn negative_zero_products_keep_their_sign() {
        let m = DMatrix::from_element(2, 2, -0.0);
        let x = DVector::from_element(2, 1.0);
        let (mut y, mut r, mut y2) = (DVector::zeros(2), DVector::zeros(2), DVector::zeros(2));
        r.gemv(1.0, &m, &x, 0.0);
        product_into(&m, &x, &mut y);
        assert!(r.iter().all(|v| v.to_bits() == (-0.0f64).to_bits()), "the library gives −0: {r:?}");
        assert_eq!(y.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), r.iter().map(|v| v.to_bits()).collect::<Vec<_>>());
        two_products_into(&m, &x, &x, &mut y, &mut y2);
        assert!(y.iter().chain(y2.iter()).all(|v| v.to_bits() == (-0.0f64).to_bits()), "{y:?} {y2:?}");
    }

    #[test]
    fn rectangular_and_empty_shapes() {
        let m = seeded(3, 5, 7);
        let x = seeded(5, 1, 8).column(0).into_owned();
        let mut y = DVector::zeros(3);
        product_into(&m, &x, &mut y);
        let mut r = DVector::zeros(3);
        r.gemv(1.0, &m, &x, 0.0);
        assert_eq!(y, r);
        let e = DMatrix::<f64>::zeros(0, 0);
        let mut ye = DVector::zeros(0);
        product_into(&e, &DVector::zeros(0), &mut ye);
        assert_eq!(ye.len(), 0);
    }
}
