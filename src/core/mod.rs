//! The terminal-free core: case model, maths, case files and the report. Nothing below here
//! touches a terminal.

pub mod advice;
pub mod auc;
pub mod bayes;
pub mod case;
pub mod casefile;
pub mod clock;
pub mod error;
pub mod fit;
pub mod history;
pub mod json;
pub mod model;
pub mod note;
pub mod procedure;
pub mod project;
pub mod regimen;
pub mod renal;
pub mod report;
pub mod switch;
pub mod uncertainty;
pub mod units;

pub use error::{Error, Result};
