//! Polewright's numerical core: state-space models `x' = A x + B u` (or `x[k+1] = …`),
//! controllability and observability, robust pole placement, Riccati equations and LQR,
//! discretisation, simulation, pole patterns and the fastest design within actuator limits.
//!
//! Convention everywhere: the control law is `u = -K x`; closed-loop matrix `A - B K`.
//! This layer knows nothing of design documents, pages or the command line (Cargo enforces
//! it: it depends on no other Polewright crate).

pub mod analysis;
pub mod controller;
pub mod linalg;
pub mod loop_sim;
pub mod margins;
pub mod metrics;
pub mod parse;
pub mod patterns;
pub mod place;
pub mod plane;
pub mod plant;
pub mod poles;
pub mod precision;
pub mod riccati;
pub mod search;
pub mod sensitivity;
pub mod simulate;
pub mod uncertainty;
pub mod zeros;
