//! The command-line shell: load a case, compute the report, write it; nothing else.

use std::io::Write;
use std::path::Path;

use crate::core::case::Case;
use crate::core::casefile::{self, CaseFile};
use crate::core::error::{Error, Result};
use crate::core::{json, report};
use crate::demo::{DEMO_CASE, DEMO_NAME};

/// Load and validate a case from a file.
///
/// # Errors
/// Any read, parse or validation error, with the file name in front.
pub fn load_case(path: &Path) -> Result<Case> {
    let name = path.display().to_string();
    let file = casefile::read(path)?;
    file.validate().map_err(|e| e.in_file(name))
}

/// Load and validate the built-in demo case.
///
/// # Errors
/// None in practice: the demo is tested.
pub fn load_demo() -> Result<Case> {
    CaseFile::parse(DEMO_CASE)
        .and_then(|f| f.validate())
        .map_err(|e| e.in_file(DEMO_NAME))
}

/// Write the report of one case, text or JSON, to `out`.
///
/// # Errors
/// The fit's or the projection's errors, with `name` in front.
pub fn write_report(out: &mut dyn Write, case: &Case, name: &str, as_json: bool) -> Result<()> {
    let r = report::build(case).map_err(|e| e.in_file(name))?;
    let written = if as_json {
        writeln!(out, "{}", json::to_json(&r))
    } else {
        report::write_text(out, case, &r)
    };
    written.map_err(|e| Error::invalid("output", e.to_string()))
}
