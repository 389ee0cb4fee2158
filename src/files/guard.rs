//! The rules an output file (a note, a plot) must pass before ebb writes it: never the case
//! being read (compared by identity, through links), never a FIFO, device or folder, never
//! a read-only file, and never a file ebb did not write — or wrote and someone edited since —
//! unless the user says so (`--force`, or a yes on screen).

use std::fs;
use std::path::{Path, PathBuf};

use crate::files::mark::{self, Claim, Style};
use crate::files::store::{self, Expect, SaveError};

/// Why an output file was not written. Nothing on disk was changed.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// The output is one of the inputs (the same file, whatever the name or link).
    #[error("{out}: is the case file being read ({input}); ebb never writes over its input")]
    SameAsInput {
        /// The output path.
        out: PathBuf,
        /// The input it is.
        input: PathBuf,
    },
    /// A file is there that ebb did not write.
    #[error("{out}: exists and was not written by ebb; not replaced (pass --force to replace it)")]
    NotOurs {
        /// The output path.
        out: PathBuf,
    },
    /// A file ebb wrote is there, edited since.
    #[error(
        "{out}: was written by ebb and edited since; not replaced (pass --force to replace it)"
    )]
    Edited {
        /// The output path.
        out: PathBuf,
    },
    /// The save itself refused (not a regular file, read-only, folder read-only…) or failed.
    #[error(transparent)]
    Save(#[from] SaveError),
}

/// Whether two paths name the same file (the same device and inode, through links); a
/// path that does not exist is the same as nothing.
pub fn same_file(a: &Path, b: &Path) -> bool {
    let (Ok(ma), Ok(mb)) = (fs::metadata(a), fs::metadata(b)) else {
        return false;
    };
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        ma.dev() == mb.dev() && ma.ino() == mb.ino()
    }
    #[cfg(not(unix))]
    {
        let _ = (ma, mb);
        matches!((fs::canonicalize(a), fs::canonicalize(b)), (Ok(x), Ok(y)) if x == y)
    }
}

/// What the regular file at `out` is to ebb; `None` when there is no file.
pub fn claim_of(out: &Path) -> Option<Claim> {
    fs::read(out).ok().map(|b| mark::claim(&b))
}

/// Check `out` against the rules, with `force` standing for the user's yes to replacing a
/// file ebb did not write (or that was edited). Returns what the save must find on disk.
///
/// # Errors
/// The first rule broken.
pub fn check_output(out: &Path, inputs: &[&Path], force: bool) -> Result<Expect, OutputError> {
    if let Some(input) = inputs.iter().find(|i| same_file(out, i)) {
        return Err(OutputError::SameAsInput {
            out: out.to_path_buf(),
            input: input.to_path_buf(),
        });
    }
    if store::check_replaceable(out)?.is_none() {
        return Ok(Expect::Unchanged(None));
    }
    let (_, print) = read_print(out)?;
    match claim_of(out) {
        Some(Claim::Foreign) if !force => Err(OutputError::NotOurs {
            out: out.to_path_buf(),
        }),
        Some(Claim::OursEdited) if !force => Err(OutputError::Edited {
            out: out.to_path_buf(),
        }),
        _ => Ok(Expect::Unchanged(Some(print))),
    }
}

fn read_print(out: &Path) -> Result<(Vec<u8>, store::Fingerprint), SaveError> {
    let bytes = fs::read(out).map_err(|e| SaveError::Io {
        path: out.to_path_buf(),
        step: "reading the file there now",
        reason: e.to_string(),
    })?;
    let modified = fs::metadata(out).and_then(|m| m.modified()).ok();
    let print = store::Fingerprint::of(&bytes, modified);
    Ok((bytes, print))
}

/// Check `out` (see `check_output`), then write `text` with ebb's check line, the safe way.
///
/// # Errors
/// A rule broken, or the save failed; nothing on disk changed then.
pub fn write_output(
    out: &Path,
    text: &str,
    style: Style,
    inputs: &[&Path],
    force: bool,
) -> Result<(), OutputError> {
    let expect = check_output(out, inputs, force)?;
    let stamped = mark::stamp(text, style);
    store::save_bytes(out, stamped.as_bytes(), &expect)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("ebb-guard-{}-{name}", std::process::id()));
        let _ = fs::remove_dir_all(&dir);
        fs::create_dir_all(&dir).unwrap();
        dir
    }

    #[cfg(unix)]
    #[test]
    fn the_input_is_refused_through_a_link() {
        let dir = scratch("input");
        let case = dir.join("case.toml");
        fs::write(&case, "[drug]\n").unwrap();
        let link = dir.join("case.note.txt");
        std::os::unix::fs::symlink(&case, &link).unwrap();
        let e = write_output(&link, "note", Style::Plain, &[&case], true).unwrap_err();
        assert!(matches!(e, OutputError::SameAsInput { .. }), "{e}");
        assert_eq!(fs::read_to_string(&case).unwrap(), "[drug]\n");
    }

    #[test]
    fn a_file_ebb_did_not_write_needs_force_and_its_own_is_replaced() {
        let dir = scratch("foreign");
        let out = dir.join("n.txt");
        fs::write(&out, "my own notes\n").unwrap();
        let e = write_output(&out, "note", Style::Plain, &[], false).unwrap_err();
        assert!(e.to_string().contains("pass --force"), "{e}");
        assert_eq!(fs::read_to_string(&out).unwrap(), "my own notes\n");
        write_output(&out, "note 1", Style::Plain, &[], true).unwrap();
        // Its own file, unedited: replaced without force.
        write_output(&out, "note 2", Style::Plain, &[], false).unwrap();
        assert!(fs::read_to_string(&out).unwrap().starts_with("note 2\n"));
        // Edited since: force again.
        let edited = fs::read_to_string(&out)
            .unwrap()
            .replace("note 2", "note 2, seen");
        fs::write(&out, edited).unwrap();
        let e = write_output(&out, "note 3", Style::Plain, &[], false).unwrap_err();
        assert!(matches!(e, OutputError::Edited { .. }), "{e}");
    }
}
