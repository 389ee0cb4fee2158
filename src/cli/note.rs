//! `ebb note` and `ebb plot` as library calls: load a case, build the note or the plot, and
//! write it to a file or to any writer.

use std::io::Write;
use std::path::Path;

use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::note::{self, NoteFormat, NoteMeta};
use crate::core::report;

/// The note's metadata for a case file named `source`, made now.
pub fn meta_now(source: &str) -> NoteMeta {
    NoteMeta {
        made_at: chrono::Local::now().format("%Y-%m-%d %H:%M").to_string(),
        version: env!("CARGO_PKG_VERSION").to_string(),
        source: source.to_string(),
    }
}

/// Build the note of `case` and write it to `out`.
///
/// # Errors
/// The fit's or the projection's errors with `name` in front, or a write error.
pub fn write_note(
    out: &mut dyn Write,
    case: &Case,
    name: &str,
    format: NoteFormat,
    meta: &NoteMeta,
) -> Result<()> {
    let r = report::build(case).map_err(|e| e.in_file(name))?;
    note::write_note(out, case, &r, meta, format)
        .map_err(|e| Error::invalid("output", e.to_string()))
}

/// Write `text` to `path` (creating or replacing the file).
///
/// # Errors
/// The operating system's error, naming the path.
pub fn write_file(path: &Path, text: &str) -> Result<()> {
    std::fs::write(path, text)
        .map_err(|e| Error::invalid(path.display().to_string(), format!("cannot write: {e}")))
}
