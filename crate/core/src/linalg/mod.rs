//! Dense linear-algebra kernels used by the design engine.
//!
//! Every iterative decomposition goes through this module so that each has an
//! explicit iteration limit and turns non-convergence into an error:
//! [`eigen`] (eigenvalues), [`svd`] (singular values and vectors). The finite
//! algorithms ([`qr`] Householder with the full orthogonal factor, [`expm`]
//! matrix exponential) live beside them, and [`shifted_sigma`] (the smallest singular value
//! of `[A − λI, B]` for many shifts, after one Hessenberg reduction) and [`hermitian_top`] (the
//! largest eigenvalue of a Hermitian matrix alone: Laguerre's iteration, bisection as fallback).

pub mod eigen;
pub mod expm;
pub mod hermitian_top;
pub mod kernels;
pub mod qr;
pub mod shifted_sigma;
pub mod svd;

pub use eigen::{try_eigenvalues, EigenError, EigenParams};
pub use svd::{SvdError, SvdParams};
