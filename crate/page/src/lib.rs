//! Polewright's page model, pure Rust and tested natively: the form as a syntax adapter of the
//! design document, the report texts and tables, plot scenes and their layout, the display
//! lists the browser replays, pole editing on the map, and the illustrative demonstrations.
//! The web front end (`polewright-web`) only moves these between the DOM and this crate.

pub mod demos;
pub mod draw;
pub mod editing;
pub mod form;
pub mod plot;

/// The layers below, re-exported so that `crate::design`, `crate::analysis` and the like name
/// them here as in the crates they come from.
pub use polewright_core::*;
pub use polewright_design as design;
pub use polewright_design::warnings;
