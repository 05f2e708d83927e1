//! Polynomials from roots and roots from polynomials (companion eigenvalues, Newton polish).

#[allow(unused_imports)]
use super::*;

// ----------------------------------------------------------------------------
// polynomials
// ----------------------------------------------------------------------------

/// Monic polynomial with the given roots, ascending coefficients `a₀ … aₙ` (`aₙ = 1`).
///
/// # Errors
/// [`PatternError::Poles`] unless the roots are finite and real or in conjugate pairs.
pub fn polynomial_from_roots(roots: &[Complex64]) -> Result<Vec<f64>, PatternError> {
    check_conjugate_pairs(roots)?;
    let mut c = vec![Complex64::new(1.0, 0.0)];
    for &r in roots {
        let mut next = vec![Complex64::new(0.0, 0.0); c.len() + 1];
        for (k, &ck) in c.iter().enumerate() {
            next[k + 1] += ck;
            next[k] -= ck * r;
        }
        c = next;
    }
    Ok(c.iter().map(|z| z.re).collect())
}

pub(crate) fn horner(coefficients: &[f64], z: Complex64) -> (Complex64, Complex64) {
    let mut p = Complex64::new(0.0, 0.0);
    let mut dp = Complex64::new(0.0, 0.0);
    for &a in coefficients.iter().rev() {
        dp = dp * z + p;
        p = p * z + a;
    }
    (p, dp)
}

/// Newton steps on each root, each kept only if it lowers `|p(z)|` (at most 8).
pub(crate) fn polish_roots(coefficients: &[f64], roots: &mut [Complex64]) {
    for z in roots.iter_mut() {
        for _ in 0..8 {
            let (p, dp) = horner(coefficients, *z);
            if p.norm() == 0.0 || dp.norm() == 0.0 {
                break;
            }
            let candidate = *z - p / dp;
            let candidate = if z.im == 0.0 { Complex64::new(candidate.re, 0.0) } else { candidate };
            let (pc, _) = horner(coefficients, candidate);
            if pc.norm() < p.norm() && candidate.re.is_finite() && candidate.im.is_finite() {
                *z = candidate;
            } else {
                break;
            }
        }
    }
}

/// Roots of the real polynomial with ascending coefficients `a₀ … aₙ` (`aₙ ≠ 0`): the
/// eigenvalues of its companion matrix ([`crate::linalg::eigen::try_eigenvalues`]),
/// each polished by at most 8 Newton steps that must lower `|p(z)|` (which keeps
/// complex pairs exact conjugates). Sorted by ascending real part, then descending
/// imaginary part.
///
/// # Errors
/// [`PatternError::InvalidValue`] for a zero leading coefficient, non-finite
/// coefficients or a constant; [`PatternError::Eigen`] if the iteration fails.
pub fn polynomial_roots(coefficients: &[f64]) -> Result<Vec<Complex64>, PatternError> {
    let n = coefficients.len().saturating_sub(1);
    require("the polynomial degree", n as f64, n >= 1, "at least 1")?;
    let lead = coefficients[n];
    require("the leading coefficient", lead, lead != 0.0, "nonzero")?;
    for &a in coefficients {
        require("a polynomial coefficient", a, a.is_finite(), "finite")?;
    }
    let mut m = DMatrix::<f64>::zeros(n, n);
    for i in 1..n {
        m[(i, i - 1)] = 1.0;
    }
    for i in 0..n {
        m[(i, n - 1)] = -coefficients[i] / lead;
    }
    let mut roots = try_eigenvalues(&m)?;
    polish_roots(coefficients, &mut roots);
    sort_eigenvalues(&mut roots);
    Ok(roots)
}

/// Largest number of poles that coincide (within [`MULTIPLICITY_TOLERANCE`] relative
/// to `max(1, |p|)`); 0 for an empty list.
pub fn largest_multiplicity(poles: &[Complex64]) -> usize {
    poles
        .iter()
        .map(|p| {
            let tol = MULTIPLICITY_TOLERANCE * p.norm().max(1.0);
            poles.iter().filter(|q| (*q - p).norm() <= tol).count()
        })
        .max()
        .unwrap_or(0)
}
