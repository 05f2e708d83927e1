//! Helpers shared by the integration tests: reading the committed scipy/numpy fixtures.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly
#![allow(dead_code)]

use nalgebra::DMatrix;
use num_complex::Complex64;
use serde_json::Value;

/// Reads `tests/fixtures/NAME` from the repository root.
pub fn fixture(name: &str) -> Value {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../tests/fixtures").join(name);
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read fixture {}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("fixture {} is not JSON: {e}", path.display()))
}

pub fn matrix(v: &Value) -> DMatrix<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().expect("matrix rows").iter().map(|r| r.as_array().expect("row").iter().map(|x| x.as_f64().expect("number")).collect()).collect();
    let n = rows.len();
    let m = rows.first().map_or(0, |r| r.len());
    DMatrix::from_fn(n, m, |i, j| rows[i][j])
}

pub fn complex_list(v: &Value) -> Vec<Complex64> {
    v.as_array()
        .expect("list")
        .iter()
        .map(|p| {
            let p = p.as_array().expect("[re, im]");
            Complex64::new(p[0].as_f64().expect("re"), p[1].as_f64().expect("im"))
        })
        .collect()
}

/// A required number of a fixture: a missing or non-numeric value fails the test (it used to
/// become NaN, which sent a case silently down a branch that skipped its checks).
pub fn f64_of(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("the fixture lacks a required number (found {v})"))
}

/// A one-to-one assignment minimising the summed cost (Hungarian method, Kuhn 1955 / Munkres
/// 1957, shortest augmenting paths with potentials): `assignment[row] = column`. `cost` is
/// square. O(n³); used to match achieved to requested poles as scipy's
/// `linear_sum_assignment` does in `tests/oracle/make_fixtures.py`.
pub fn assignment(cost: &DMatrix<f64>) -> Vec<usize> {
    let n = cost.nrows();
    assert_eq!(n, cost.ncols(), "square cost matrix");
    let inf = f64::INFINITY;
    let (mut u, mut v) = (vec![0.0; n + 1], vec![0.0; n + 1]);
    let (mut p, mut way) = (vec![0usize; n + 1], vec![0usize; n + 1]);
    for i in 1..=n {
        p[0] = i;
        let mut j0 = 0;
        let mut minv = vec![inf; n + 1];
        let mut used = vec![false; n + 1];
        loop {
            used[j0] = true;
            let i0 = p[j0];
            let (mut delta, mut j1) = (inf, 0);
            for j in 1..=n {
                if !used[j] {
                    let cur = cost[(i0 - 1, j - 1)] - u[i0] - v[j];
                    if cur < minv[j] {
                        minv[j] = cur;
                        way[j] = j0;
                    }
                    if minv[j] < delta {
                        delta = minv[j];
                        j1 = j;
                    }
                }
            }
            for j in 0..=n {
                if used[j] {
                    u[p[j]] += delta;
                    v[j] -= delta;
                } else {
                    minv[j] -= delta;
                }
            }
            j0 = j1;
            if p[j0] == 0 {
                break;
            }
        }
        loop {
            let j1 = way[j0];
            p[j0] = p[j1];
            j0 = j1;
            if j0 == 0 {
                break;
            }
        }
    }
    let mut out = vec![0; n];
    for j in 1..=n {
        if p[j] > 0 {
            out[p[j] - 1] = j - 1;
        }
    }
    out
}

thread_local! {
    /// How many judged gains needed Polewright's eigenvalue routine (nalgebra's Schur failed).
    pub static SCHUR_FALLBACKS: std::cell::Cell<usize> = const { std::cell::Cell::new(0) };
}

/// A gain judged without anything Polewright computed about it: the eigenvalues of `A − B K`
/// by nalgebra's Schur decomposition (not Polewright's eigenvalue code), matched one-to-one to
/// the request ([`assignment`], the fixtures' rule), the largest relative error
/// `|λ − λ_req| / max(1, |λ_req|)`; and `κ₂(X)` of unit-column eigenvectors, each the right
/// singular vector of `A − B K − λ I` for its smallest singular value (nalgebra's SVD; the
/// k-th copy of a repeated eigenvalue takes the k-th smallest). Where eigenvalues repeat,
/// `reported` (the placement's poles and eigenvectors) is used once verified against the gain.
pub struct Judged {
    pub max_rel_error: f64,
    pub eigenvector_condition: f64,
    /// `|det X|` of the unit-column eigenvectors (the product of their singular values).
    pub abs_det: f64,
}

/// Eigenvalues by nalgebra's Schur decomposition (not Polewright's eigenvalue code), with an
/// iteration cap (its plain `complex_eigenvalues` has none); where it does not converge, again
/// after a diagonal similarity by powers of two (Parlett–Reinsch balancing: the eigenvalues are
/// unchanged exactly), and only then Polewright's own routine (counted in [`SCHUR_FALLBACKS`],
/// so a report can say how often).
pub fn independent_eigenvalues(m: &DMatrix<f64>) -> Vec<Complex64> {
    let n = m.nrows();
    match m.clone().try_schur(f64::EPSILON, 100_000) {
        Some(schur) => schur.complex_eigenvalues().iter().copied().collect(),
        None => {
            let d = polewright::linalg::eigen::balancing_scale(m, 100);
            let balanced = DMatrix::from_fn(n, n, |i, j| m[(i, j)] * d[j] / d[i]);
            match balanced.try_schur(f64::EPSILON, 100_000) {
                Some(schur) => schur.complex_eigenvalues().iter().copied().collect(),
                None => {
                    SCHUR_FALLBACKS.with(|c| c.set(c.get() + 1));
                    polewright::linalg::eigen::try_eigenvalues(m).expect("eigenvalues")
                }
            }
        }
    }
}

pub fn judge_gain(a: &DMatrix<f64>, b: &DMatrix<f64>, k: &DMatrix<f64>, requested: &[Complex64], reported: Option<(&[Complex64], &DMatrix<Complex64>)>) -> Judged {
    let closed = a - b * k;
    let n = closed.nrows();
    let achieved = independent_eigenvalues(&closed);
    let cost = DMatrix::from_fn(n, n, |i, j| (achieved[j] - requested[i]).norm() / requested[i].norm().max(1.0));
    let pick = assignment(&cost);
    let max_rel_error = (0..n).map(|i| cost[(i, pick[i])]).fold(0.0, f64::max);
    let cl = closed.map(|v| Complex64::new(v, 0.0));
    let mut x = DMatrix::<Complex64>::zeros(n, n);
    let scale = closed.norm().max(1.0);
    let repeated = (0..n).any(|j| achieved[..j].iter().any(|z| (*z - achieved[j]).norm() <= 1e-7 * scale));
    if let (true, Some((poles, vectors))) = (repeated, reported) {
        // A repeated eigenvalue has a whole eigenspace: the placement's own choice of vectors in
        // it is what κ₂ describes. It is taken only after checking that each column is an
        // eigenvector of this A − B K for its pole (residual ≤ 1e-8 ‖A − B K‖), and κ₂ is then
        // computed here by nalgebra's SVD.
        let residual = (0..n).map(|j| (&cl * vectors.column(j) - vectors.column(j) * poles[j]).norm() / vectors.column(j).norm()).fold(0.0, f64::max);
        assert!(residual <= 1e-8 * scale, "the reported eigenvectors do not belong to the gain (residual {residual:.2e})");
        for j in 0..n {
            let col = vectors.column(j).into_owned();
            let norm = col.norm();
            x.set_column(j, &(col / Complex64::new(norm, 0.0)));
        }
        return judged(max_rel_error, &x);
    }
    for (j, lambda) in achieved.iter().enumerate() {
        // A repeated eigenvalue (a pole requested several times) has an eigenspace: its k-th
        // copy takes the singular vector of the k-th smallest singular value.
        let copy = achieved[..j].iter().filter(|z| (*z - lambda).norm() <= 1e-7 * scale).count();
        let shifted = &cl - DMatrix::<Complex64>::identity(n, n) * *lambda;
        let svd = shifted.svd(false, true);
        let vt = svd.v_t.expect("v_t");
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&p, &q| svd.singular_values[p].total_cmp(&svd.singular_values[q]));
        let v = vt.row(order[copy.min(n - 1)]).adjoint();
        let norm = v.norm();
        x.set_column(j, &(v / Complex64::new(norm, 0.0)));
    }
    judged(max_rel_error, &x)
}

/// κ₂ and `|det|` of unit-column eigenvectors `x` by nalgebra's SVD.
fn judged(max_rel_error: f64, x: &DMatrix<Complex64>) -> Judged {
    let s = x.singular_values();
    let (big, small) = (s.iter().copied().fold(0.0, f64::max), s.iter().copied().fold(f64::INFINITY, f64::min));
    Judged { max_rel_error, eigenvector_condition: if small > 0.0 { big / small } else { f64::INFINITY }, abs_det: s.iter().product() }
}

/// An invented flexible structure in modal form (illustrative test data): `modes` modes at
/// `1, 1 + spacing, 1 + 2 spacing, …` rad/s with damping `damping`, `m` actuators whose
/// mode-shape values are `sin(shape (i+1)(j+1))`, and targets keeping each frequency with the
/// damping raised to `target_damping`: `(A, B, poles)`.
pub fn modal_structure(modes: usize, m: usize, spacing: f64, damping: f64, shape: f64, target_damping: f64) -> (DMatrix<f64>, DMatrix<f64>, Vec<Complex64>) {
    let n = 2 * modes;
    let mut a = DMatrix::<f64>::zeros(n, n);
    let mut b = DMatrix::<f64>::zeros(n, m);
    let mut poles = Vec::with_capacity(n);
    for i in 0..modes {
        let w = 1.0 + spacing * i as f64;
        a[(2 * i, 2 * i + 1)] = 1.0;
        a[(2 * i + 1, 2 * i)] = -w * w;
        a[(2 * i + 1, 2 * i + 1)] = -2.0 * damping * w;
        for j in 0..m {
            b[(2 * i + 1, j)] = (shape * (i + 1) as f64 * (j + 1) as f64).sin();
        }
        let z = Complex64::new(-target_damping * w, w * (1.0 - target_damping * target_damping).sqrt());
        poles.push(z);
        poles.push(z.conj());
    }
    (a, b, poles)
}
