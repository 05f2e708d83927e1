//! Polewright: state-feedback design for linear(ised) plants `x' = A x + B u`.
//!
//! This package is the command-line tool; its library is a facade over the layers, for the
//! tool and its integration tests:
//!
//! | crate | layer |
//! |---|---|
//! | `polewright-core` | numerical core (no designs, no pages) |
//! | `polewright-design` | the design document, its rulebook, the run and its result |
//! | `polewright-page` | the page model: form adapter, report, scenes, display lists, editing |
//! | `polewright-web` | the browser front end (wasm32 only) |
//!
//! Imports point down only; Cargo enforces it.

pub use polewright_core::*;
pub use polewright_design as design;
pub use polewright_design::warnings;
pub use polewright_page::{demos, draw, editing, form, plot};
