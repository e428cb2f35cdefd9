//! Rectifield: analysis of three-phase rectifiers on a real supply.
//!
//! The engine (every module but `wasm`) is pure: no I/O, no JavaScript, no
//! panics on bad input.  One scenario goes in ([`scenario::Scenario`]), one
//! analysis comes out ([`analysis::Analysis`]).

// Index loops over small fixed arrays (phases, matrix rows) read better than
// iterator chains in numerical code.
#![allow(clippy::needless_range_loop, clippy::map_entry)]

pub mod analysis;
pub mod compliance;
pub mod examples;
pub mod field;
pub mod params;
pub mod report;
pub mod results;
pub mod scenario;
pub mod sim;
pub mod sweep;
pub mod textbook;
pub mod validate;

#[cfg(target_arch = "wasm32")]
pub mod wasm;

pub use analysis::{analyze, Analysis};
pub use scenario::Scenario;
