//! `ebb note` and `ebb plot` as library calls: load a case, build the note or the plot, and
//! write it to a file or to any writer.

use std::io::Write;
use std::path::Path;

use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::note::{self, NoteFormat, NoteMeta};

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
    profiles_dir: Option<&Path>,
) -> Result<()> {
    let r = crate::cli::report_with_profile(case, name, profiles_dir)?;
    note::write_note(out, case, &r, meta, format)
        .map_err(|e| Error::invalid("output", e.to_string()))
}

/// Write `text` to `path`, creating or replacing it the safe way (a temporary file beside
/// it, synced, then renamed over) and readable by its owner only: notes and plots hold
/// patient data.
///
/// # Errors
/// A step of the save failed; the message names the path.
pub fn write_file(path: &Path, text: &str) -> Result<()> {
    crate::cli::store::save_bytes(path, text.as_bytes(), &crate::cli::store::Expect::Overwrite)
        .map(|_| ())
        .map_err(|e| Error::invalid("output", e.to_string()))
}
