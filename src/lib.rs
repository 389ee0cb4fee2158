//! ebb: level-guided dosing at the bedside.
//!
//! The library core (`core`) fits a patient's elimination from measured levels and projects
//! the plan at steady state, the threshold and the washout; `cli` and `tui` are thin shells
//! over it, built with the default `app` feature (the core builds without it).
#![deny(missing_docs)]
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::panic))]

pub mod analysis;
#[cfg(feature = "app")]
pub mod cli;
pub mod core;
pub mod demo;
#[cfg(feature = "app")]
pub mod files;
pub mod profiles;
#[cfg(feature = "app")]
pub mod tui;
