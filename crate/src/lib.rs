//! Polewright: state-feedback design for linear(ised) plants `x' = A x + B u`.
//!
//! Convention everywhere: the control law is `u = -K x`; closed-loop matrix `A - B K`.
//!
//! The numerical modules know nothing of the browser or the command line; the
//! `web` module (wasm32 only) and the `polewright` binary are thin front ends.

// `!(a <= b)` is the project's NaN-safe comparison: a NaN fails every test it stands in.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

pub mod analysis;
pub mod controller;
pub mod demos;
pub mod design;
pub mod draw;
pub mod editing;
pub mod form;
pub mod linalg;
pub mod loop_sim;
pub mod metrics;
pub mod parse;
pub mod patterns;
pub mod place;
pub mod plane;
pub mod plant;
pub mod plot;
pub mod poles;
pub mod riccati;
pub mod search;
pub mod simulate;
pub mod warnings;

#[cfg(target_arch = "wasm32")]
pub mod web;
