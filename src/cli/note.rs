//! `ebb note` and `ebb plot` as library calls: load a case, build the note or the plot, and
//! write it to a file or to any writer.

use std::io::Write;
use std::path::Path;

use crate::analysis::Analysis;
use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::note::{self, NoteFormat, NoteMeta};
use crate::core::report::Report;

/// The note's metadata for a case file named `source`, made now.
pub fn meta_now(source: &str) -> NoteMeta {
    NoteMeta {
        made_at: chrono::Local::now().format("%Y-%m-%d %H:%M").to_string(),
        version: env!("CARGO_PKG_VERSION").to_string(),
        source: source.to_string(),
    }
}

/// Build the note of an analysis and write it to `out`.
///
/// # Errors
/// The step that stopped the analysis with `name` in front (a drug whose profile refuses
/// first-order projections gets no note), or a write error.
pub fn write_note(
    out: &mut dyn Write,
    a: &Analysis,
    name: &str,
    format: NoteFormat,
    meta: &NoteMeta,
) -> Result<()> {
    let (case, r) = finished(a, name)?;
    note::write_note(out, case, r, meta, format)
        .map_err(|e| Error::invalid("output", e.to_string()))
}

/// The case and report of a finished analysis, or the reason there are none.
///
/// # Errors
/// The step that stopped the analysis, with `name` in front.
pub fn finished<'a>(a: &'a Analysis, name: &str) -> Result<(&'a Case, &'a Report)> {
    if let Some(stop) = &a.stop {
        return Err(stop.to_error(a.profile.as_ref()).in_file(name));
    }
    match (&a.case, &a.report) {
        (Some(c), Some(r)) => Ok((c, r)),
        _ => Err(Error::Fit("the analysis did not finish".into()).in_file(name)),
    }
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
