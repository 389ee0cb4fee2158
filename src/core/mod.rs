//! The terminal-free core: case model, maths, case files and the report. Nothing below here
//! touches a terminal.

pub mod case;
pub mod casefile;
pub mod clock;
pub mod error;
pub mod fit;
pub mod json;
pub mod model;
pub mod project;
pub mod report;
pub mod units;

pub use error::{Error, Result};
