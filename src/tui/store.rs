//! Saving from the bedside screen: the safe save of `cli::store` (a temporary file in the
//! same folder, flushed, renamed over the old file, owner-only permissions), guarded by what
//! the file held when it was opened so that another program's changes are not overwritten
//! silently.

use std::path::Path;

use crate::cli::store;
pub use crate::cli::store::{Expect, Fingerprint, SaveError};
use crate::core::casefile::CaseFile;

/// Write `file` as TOML to `path`, replacing it in one step whatever it holds now.
///
/// # Errors
/// The case cannot be written as TOML, or the folder or file cannot be written; the old file
/// is left as it was then.
pub fn save(file: &CaseFile, path: &Path) -> Result<(), String> {
    store::save_case(file, path, &Expect::Overwrite)
        .map(|_| ())
        .map_err(|e| e.to_string())
}

/// Write `file` as TOML to `path` only if the file on disk is as `expect` says (as it was
/// opened or last saved, or absent then; `Expect::Overwrite` once the user has said yes).
/// Returns what the file holds now, to expect at the next save.
///
/// # Errors
/// `SaveError::ChangedOnDisk` when the file changed since: ask the user, then call again
/// with `Expect::Overwrite` (or save under another name); otherwise the step that failed.
/// The old file is left whole either way.
pub fn save_checked(
    file: &CaseFile,
    path: &Path,
    expect: &Expect,
) -> Result<Fingerprint, SaveError> {
    store::save_case(file, path, expect)
}

/// What to expect at the first save of a case opened from `path`: the file as it is now,
/// or no file. A file that cannot be read gives `Expect::Unchanged(None)`, so that a save
/// over it later asks first.
pub fn expect_at_open(path: &Path) -> Expect {
    Expect::Unchanged(store::fingerprint(path).ok().flatten())
}

/// Write `text` to `path` the same safe way as a case (the record note holds patient data
/// too), replacing whatever is there.
///
/// # Errors
/// The folder or file cannot be written; the old file is left as it was then.
pub fn write_text(text: &str, path: &Path) -> Result<(), String> {
    store::save_bytes(path, text.as_bytes(), &Expect::Overwrite)
        .map(|_| ())
        .map_err(|e| e.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_case_changed_on_disk_needs_a_yes_before_it_is_overwritten() {
        let dir = std::env::temp_dir().join(format!("ebb-tui-store-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("case.toml");
        std::fs::write(&path, "[drug]\nlevel_unit = \"mg/L\"\n").unwrap();
        let expect = expect_at_open(&path);
        let file = CaseFile::parse("[drug]\nlevel_unit = \"ng/mL\"\n").unwrap();
        std::fs::write(&path, "[drug]\nlevel_unit = \"mmol/L\"\n").unwrap();
        let e = save_checked(&file, &path, &expect).unwrap_err();
        assert!(matches!(e, SaveError::ChangedOnDisk { .. }));
        assert!(std::fs::read_to_string(&path).unwrap().contains("mmol/L"));
        let now = save_checked(&file, &path, &Expect::Overwrite).unwrap();
        assert!(std::fs::read_to_string(&path).unwrap().contains("ng/mL"));
        save_checked(&file, &path, &Expect::Unchanged(Some(now))).unwrap();
    }
}
