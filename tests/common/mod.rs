//! Helpers shared by the robustness tests.
#![allow(dead_code)]
pub mod extremes;
pub mod finite;
pub mod rng;
