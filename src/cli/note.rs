//! `ebb note` as a library call: load a case, build the note, write it to any writer.

use std::io::Write;

use crate::analysis::Analysis;
use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::note::{self, NoteFormat, NoteMeta};
use crate::core::report::Report;

/// The note's metadata for a case file named `source`, made now.
pub fn meta_now(source: &str) -> NoteMeta {
    crate::files::note_meta_now(source)
}

/// Build the note of an analysis and write it to `out`.
///
/// # Errors
/// The step that stopped the analysis with `name` in front (a drug whose profile refuses
/// first-order projections without a saturable model gets no note), or a write error. A
/// drug with saturable elimination gets the saturable note.
pub fn write_note(
    out: &mut dyn Write,
    a: &Analysis,
    name: &str,
    format: NoteFormat,
    meta: &NoteMeta,
) -> Result<()> {
    if let (None, Some(case), Some(s)) = (&a.stop, &a.case, &a.saturable) {
        return note::write_saturable_note(out, case, &s.report, &s.params, meta, format)
            .map_err(|e| Error::invalid("output", e.to_string()));
    }
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
    if a.saturable.is_some() {
        return Err(Error::invalid(
            "drug.profile",
            "the drug's elimination is saturable (Michaelis-Menten): there is no first-order \
             course to draw; `ebb report` and `ebb note` give its figures",
        )
        .in_file(name));
    }
    match (&a.case, &a.report) {
        (Some(c), Some(r)) => Ok((c, r)),
        _ => Err(Error::Fit("the analysis did not finish".into()).in_file(name)),
    }
}
