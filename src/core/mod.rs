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
pub mod fitted;
pub mod format;
pub mod history;
pub mod json;
pub mod model;
pub mod note;
pub mod population;
pub mod prior;
pub mod procedure;
pub mod project;
pub mod regimen;
pub mod renal;
pub mod report;
pub mod spread;
pub mod switch;
pub mod uncertainty;
pub mod units;
pub mod warning;

pub use error::{Error, Result};
