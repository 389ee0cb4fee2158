//! Recovery files: when the bedside screen is stopped by a signal (SIGTERM, SIGHUP) with
//! unsaved changes, the case is written beside its file as `CASE.toml.recover` (owner-only;
//! `unsaved-case.toml.recover` in the current folder for a case never saved), and the next
//! open of that case offers it. A save of the case removes it.

use std::fs;
use std::path::{Path, PathBuf};

use crate::files::store::{self, Expect};

/// What a recovery file's name ends with.
pub const SUFFIX: &str = ".recover";

/// The recovery file's name for a case saved nowhere yet.
pub const UNSAVED: &str = "unsaved-case.toml";

/// Where the recovery file of the case at `case` (or of an unsaved case) goes.
pub fn path_for(case: Option<&Path>) -> PathBuf {
    let base = case.map_or_else(|| PathBuf::from(UNSAVED), Path::to_path_buf);
    let name = base
        .file_name()
        .map_or_else(|| UNSAVED.to_string(), |n| n.to_string_lossy().into_owned());
    base.with_file_name(format!("{name}{SUFFIX}"))
}

/// Write `text` as the recovery file of `case`, owner-only, the safe way.
///
/// # Errors
/// The save failed (the message names the path and the step).
pub fn write(case: Option<&Path>, text: &str) -> Result<PathBuf, store::SaveError> {
    let path = path_for(case);
    // A recovery file is always made afresh, owner-only.
    if fs::symlink_metadata(&path).is_ok_and(|m| m.file_type().is_file()) {
        let _ = fs::remove_file(&path);
    }
    store::save_bytes(&path, text.as_bytes(), &Expect::Unchanged(None))?;
    Ok(path)
}

/// The recovery file of `case` and its text, when there is one (a regular file).
pub fn find(case: Option<&Path>) -> Option<(PathBuf, String)> {
    let path = path_for(case);
    if !fs::metadata(&path).is_ok_and(|m| m.is_file()) {
        return None;
    }
    fs::read_to_string(&path).ok().map(|t| (path, t))
}

/// Remove the recovery file of `case`, if any (after a save: the saved file is newer).
pub fn remove(case: Option<&Path>) {
    remove_file(&path_for(case));
}

/// Remove the recovery file at `path`, if it is a regular file.
pub fn remove_file(path: &Path) {
    if fs::symlink_metadata(path).is_ok_and(|m| m.file_type().is_file()) {
        let _ = fs::remove_file(path);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_recovery_file_sits_beside_the_case_owner_only() {
        assert_eq!(
            path_for(Some(Path::new("/ward/bed4.toml"))),
            PathBuf::from("/ward/bed4.toml.recover")
        );
        assert_eq!(path_for(None), PathBuf::from("unsaved-case.toml.recover"));
        let dir = std::env::temp_dir().join(format!("ebb-recover-{}", std::process::id()));
        let _ = fs::remove_dir_all(&dir);
        fs::create_dir_all(&dir).unwrap();
        let case = dir.join("bed4.toml");
        let p = write(Some(&case), "[drug]\n").unwrap();
        assert_eq!(find(Some(&case)).unwrap(), (p.clone(), "[drug]\n".into()));
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = fs::metadata(&p).unwrap().permissions().mode() & 0o777;
            assert_eq!(mode, 0o600);
        }
        write(Some(&case), "[drug]\nname = \"x\"\n").unwrap();
        assert!(find(Some(&case)).unwrap().1.contains("name"));
        remove(Some(&case));
        assert!(find(Some(&case)).is_none());
    }
}
