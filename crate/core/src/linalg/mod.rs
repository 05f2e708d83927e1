//! Dense linear-algebra kernels used by the design engine.
//!
//! Every iterative decomposition goes through this module so that each has an
//! explicit iteration limit and turns non-convergence into an error:
//! [`eigen`] (eigenvalues), [`svd`] (singular values and vectors). The finite
//! algorithms ([`qr`] Householder with the full orthogonal factor, [`expm`]
//! matrix exponential) live beside them.

pub mod eigen;
pub mod expm;
pub mod qr;
pub mod svd;

pub use eigen::{try_eigenvalues, EigenError, EigenParams};
pub use svd::{SvdError, SvdParams};
