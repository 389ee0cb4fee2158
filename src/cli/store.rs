//! Saving files safely: write a temporary file beside the old one, flush it to the disk,
//! rename it over the old one, flush the folder; owner-only permissions; never overwrite a
//! file that changed on disk since it was opened without being told to.
//!
//! A save killed at any point leaves either the old file whole or the new one whole (the
//! rename is the only step that touches the real name). Used by `ebb tidy` and by the
//! bedside screen.

use std::collections::hash_map::DefaultHasher;
use std::fs::{self, File, OpenOptions};
use std::hash::Hasher;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::SystemTime;

use crate::core::casefile::CaseFile;

/// Test hook: when set to a number of milliseconds, a save pauses that long between writing
/// the temporary file and renaming it (after saying so on stderr), so that a test can kill
/// the process in the middle of a save. Unset in normal use.
pub const PAUSE_ENV: &str = "EBB_TEST_PAUSE_BEFORE_RENAME_MS";

/// What a file held when it was read or last saved: its length, its modification time and
/// a hash of its bytes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Fingerprint {
    /// Length in bytes.
    pub len: u64,
    /// Modification time, where the system keeps one.
    pub modified: Option<SystemTime>,
    /// Hash of the bytes (not cryptographic; it tells edits apart, not attackers).
    pub hash: u64,
}

impl Fingerprint {
    /// The fingerprint of `bytes` last modified at `modified`.
    pub fn of(bytes: &[u8], modified: Option<SystemTime>) -> Self {
        let mut h = DefaultHasher::new();
        h.write(bytes);
        Fingerprint {
            len: bytes.len() as u64,
            modified,
            hash: h.finish(),
        }
    }

    /// Whether the file now holds something other than what this fingerprint saw. Only the
    /// content counts: a file touched but not changed is the same (nothing would be lost).
    pub fn differs_from(&self, now: &Fingerprint) -> bool {
        self.len != now.len || self.hash != now.hash
    }
}

/// What the file on disk is expected to be just before a save replaces it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Expect {
    /// As it was when opened or last saved; `None`: there was no file then.
    Unchanged(Option<Fingerprint>),
    /// Anything: the user has confirmed overwriting it.
    Overwrite,
}

/// Why a save did not happen. In every case the old file, if any, is left as it was.
#[derive(Debug, thiserror::Error)]
pub enum SaveError {
    /// The file changed on disk since it was opened (or appeared where there was none).
    #[error("{path}: changed on disk since it was opened; not overwritten (save again to overwrite it, or save under another name)")]
    ChangedOnDisk {
        /// The file.
        path: PathBuf,
    },
    /// The case holds a value TOML cannot write.
    #[error("{path}: cannot be written as TOML: {reason}")]
    Toml {
        /// The file.
        path: PathBuf,
        /// The writer's reason.
        reason: String,
    },
    /// The system refused a step of the save.
    #[error("{path}: cannot save ({step}): {reason}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The step that failed, in words.
        step: &'static str,
        /// The operating system's reason.
        reason: String,
    },
}

/// Read a file and fingerprint exactly the bytes read.
///
/// # Errors
/// The operating system's error.
pub fn read_with_fingerprint(path: &Path) -> std::io::Result<(String, Fingerprint)> {
    let (bytes, modified) = read_limited(path)?;
    let print = Fingerprint::of(&bytes, modified);
    let text = String::from_utf8(bytes)
        .map_err(|e| std::io::Error::new(std::io::ErrorKind::InvalidData, e))?;
    Ok((text, print))
}

/// The fingerprint of the file at `path` now; `None` when there is no file.
///
/// # Errors
/// The file exists but cannot be read.
pub fn fingerprint(path: &Path) -> std::io::Result<Option<Fingerprint>> {
    match fs::metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        _ => {
            let (bytes, modified) = read_limited(path)?;
            Ok(Some(Fingerprint::of(&bytes, modified)))
        }
    }
}

/// The bytes of a regular file of at most `casefile::MAX_CASE_BYTES` and its modification
/// time: a FIFO, a device or a huge file is an error, never a wait or a memory blow-up.
fn read_limited(path: &Path) -> std::io::Result<(Vec<u8>, Option<std::time::SystemTime>)> {
    use crate::core::casefile::{read_regular, MAX_CASE_BYTES};
    let modified = fs::metadata(path)?.modified().ok();
    let bytes = read_regular(path, MAX_CASE_BYTES).map_err(std::io::Error::other)?;
    Ok((bytes, modified))
}

/// Save a case as TOML to `path` safely (see `save_bytes`).
///
/// # Errors
/// As `save_bytes`, or a value TOML cannot write.
pub fn save_case(file: &CaseFile, path: &Path, expect: &Expect) -> Result<Fingerprint, SaveError> {
    let text = file.to_toml().map_err(|e| SaveError::Toml {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    save_bytes(path, text.as_bytes(), expect)
}

/// Replace the file at `path` with `bytes` in one step: a temporary file in the same folder,
/// readable and writable by its owner only, flushed to the disk, renamed over `path`, then
/// the folder flushed so the rename itself lasts. A symbolic link is followed (the file it
/// points to is replaced, the link kept). Returns the new file's fingerprint, to expect at
/// the next save.
///
/// # Errors
/// The file is not as `expect` says (`ChangedOnDisk`), or a step fails; the old file is left
/// whole either way, and the temporary file is removed.
pub fn save_bytes(path: &Path, bytes: &[u8], expect: &Expect) -> Result<Fingerprint, SaveError> {
    let io = |step: &'static str| {
        move |e: std::io::Error| SaveError::Io {
            path: path.to_path_buf(),
            step,
            reason: e.to_string(),
        }
    };
    if let Expect::Unchanged(was) = expect {
        let now = fingerprint(path).map_err(io("reading the file on disk"))?;
        let changed = match (was, &now) {
            (None, None) => false,
            (Some(a), Some(b)) => a.differs_from(b),
            _ => true,
        };
        if changed {
            return Err(SaveError::ChangedOnDisk {
                path: path.to_path_buf(),
            });
        }
    }
    // Replace what a link points to, not the link.
    let target = match fs::symlink_metadata(path) {
        Ok(m) if m.file_type().is_symlink() => {
            fs::canonicalize(path).map_err(io("following the link"))?
        }
        _ => path.to_path_buf(),
    };
    let dir = match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .ok_or_else(|| SaveError::Io {
            path: path.to_path_buf(),
            step: "naming the file",
            reason: "the path does not end in a file name".into(),
        })?;
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let _ = fs::remove_file(&tmp);
    let written = write_private(&tmp, bytes)
        .map_err(io("writing the temporary file"))
        .and_then(|()| {
            pause_for_tests();
            fs::rename(&tmp, &target).map_err(io("renaming the temporary file over it"))
        });
    if let Err(e) = written {
        let _ = fs::remove_file(&tmp);
        return Err(e);
    }
    sync_dir(&dir);
    let modified = fs::metadata(&target).and_then(|m| m.modified()).ok();
    Ok(Fingerprint::of(bytes, modified))
}

/// Create `path` (it must not exist) with owner-only permissions, write `bytes`, flush.
fn write_private(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut opts = OpenOptions::new();
    opts.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.mode(0o600);
    }
    let mut f = opts.open(path)?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        // The mode above is filtered by the umask; set it exactly.
        f.set_permissions(fs::Permissions::from_mode(0o600))?;
    }
    f.write_all(bytes)?;
    f.sync_all()
}

/// Flush the folder so a rename in it survives a power cut. Not every system lets a folder
/// be opened; the file itself is already safe then, so a failure here is not reported.
fn sync_dir(dir: &Path) {
    if let Ok(d) = File::open(dir) {
        let _ = d.sync_all();
    }
}

/// See `PAUSE_ENV`.
fn pause_for_tests() {
    let Some(ms) = std::env::var(PAUSE_ENV)
        .ok()
        .and_then(|v| v.parse::<u64>().ok())
    else {
        return;
    };
    let mut err = std::io::stderr().lock();
    let _ = writeln!(err, "ebb: pausing {ms} ms before the rename ({PAUSE_ENV})");
    let _ = err.flush();
    std::thread::sleep(std::time::Duration::from_millis(ms));
}

/// The first line of `text` holding a TOML comment, if any (a `#` outside a string on one
/// line). Multi-line strings are not followed, so a `#` inside one counts as a comment: the
/// cautious side for a command that would drop comments.
pub fn first_comment_line(text: &str) -> Option<usize> {
    text.lines().enumerate().find_map(|(i, line)| {
        let mut quote: Option<char> = None;
        let mut escaped = false;
        for c in line.chars() {
            match quote {
                Some('"') if escaped => escaped = false,
                Some('"') if c == '\\' => escaped = true,
                Some(q) if c == q => quote = None,
                Some(_) => {}
                None if c == '"' || c == '\'' => quote = Some(c),
                None if c == '#' => return Some(i + 1),
                None => {}
            }
        }
        None
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("ebb-store-{}-{name}", std::process::id()));
        let _ = fs::remove_dir_all(&dir);
        fs::create_dir_all(&dir).unwrap();
        dir
    }

    #[test]
    fn a_save_replaces_the_file_owner_only_and_leaves_no_temporary_file() {
        let dir = scratch("replace");
        let path = dir.join("case.toml");
        fs::write(&path, "old\n").unwrap();
        let (_, was) = read_with_fingerprint(&path).unwrap();
        let now = save_bytes(&path, b"new\n", &Expect::Unchanged(Some(was))).unwrap();
        assert_eq!(fs::read(&path).unwrap(), b"new\n");
        assert_eq!(now, fingerprint(&path).unwrap().unwrap());
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = fs::metadata(&path).unwrap().permissions().mode() & 0o777;
            assert_eq!(mode, 0o600);
        }
        let names: Vec<_> = fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert_eq!(names, vec![std::ffi::OsString::from("case.toml")]);
        // The returned fingerprint is what the next save expects.
        save_bytes(&path, b"newer\n", &Expect::Unchanged(Some(now))).unwrap();
        assert_eq!(fs::read(&path).unwrap(), b"newer\n");
    }

    #[test]
    fn a_file_changed_on_disk_is_not_overwritten_unless_confirmed() {
        let dir = scratch("changed");
        let path = dir.join("case.toml");
        fs::write(&path, "as opened\n").unwrap();
        let (_, was) = read_with_fingerprint(&path).unwrap();
        fs::write(&path, "edited elsewhere\n").unwrap();
        let e = save_bytes(&path, b"mine\n", &Expect::Unchanged(Some(was))).unwrap_err();
        assert!(matches!(e, SaveError::ChangedOnDisk { .. }), "{e}");
        assert!(e
            .to_string()
            .contains("changed on disk since it was opened"));
        assert_eq!(fs::read(&path).unwrap(), b"edited elsewhere\n");
        save_bytes(&path, b"mine\n", &Expect::Overwrite).unwrap();
        assert_eq!(fs::read(&path).unwrap(), b"mine\n");
    }

    #[test]
    fn same_length_edits_and_new_files_are_noticed_but_a_touch_is_not() {
        let dir = scratch("same-length");
        let path = dir.join("case.toml");
        fs::write(&path, "value = 1\n").unwrap();
        let (_, was) = read_with_fingerprint(&path).unwrap();
        fs::write(&path, "value = 2\n").unwrap();
        assert!(save_bytes(&path, b"x", &Expect::Unchanged(Some(was))).is_err());
        // Rewritten with the same bytes (a later time): nothing would be lost.
        let (_, was) = read_with_fingerprint(&path).unwrap();
        fs::write(&path, "value = 2\n").unwrap();
        assert!(save_bytes(&path, b"x", &Expect::Unchanged(Some(was))).is_ok());
        // A file that appeared where there was none when the case was started.
        let fresh = dir.join("new.toml");
        fs::write(&fresh, "someone else's\n").unwrap();
        let e = save_bytes(&fresh, b"mine", &Expect::Unchanged(None)).unwrap_err();
        assert!(matches!(e, SaveError::ChangedOnDisk { .. }));
        let other = dir.join("other.toml");
        save_bytes(&other, b"mine", &Expect::Unchanged(None)).unwrap();
        assert_eq!(fs::read(&other).unwrap(), b"mine");
    }

    #[cfg(unix)]
    #[test]
    fn a_link_is_kept_and_its_target_replaced() {
        let dir = scratch("link");
        let real = dir.join("real.toml");
        let link = dir.join("link.toml");
        fs::write(&real, "old").unwrap();
        std::os::unix::fs::symlink(&real, &link).unwrap();
        save_bytes(&link, b"new", &Expect::Overwrite).unwrap();
        assert!(fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        assert_eq!(fs::read(&real).unwrap(), b"new");
    }

    #[test]
    fn a_failed_save_names_the_step_and_keeps_nothing() {
        let dir = scratch("fail");
        let path = dir.join("no-such-folder").join("case.toml");
        let e = save_bytes(&path, b"x", &Expect::Overwrite).unwrap_err();
        assert!(
            e.to_string()
                .contains("cannot save (writing the temporary file)"),
            "{e}"
        );
    }

    #[test]
    fn comments_are_found_outside_strings_only() {
        assert_eq!(first_comment_line("a = 1\n# note\n"), Some(2));
        assert_eq!(first_comment_line("a = 1 # note\n"), Some(1));
        assert_eq!(first_comment_line("label = \"bed #4\"\n"), None);
        assert_eq!(first_comment_line("label = 'bed #4'\n"), None);
        assert_eq!(first_comment_line("label = \"a \\\" #b\"\n"), None);
        assert_eq!(first_comment_line("label = \"x\" # y\n"), Some(1));
    }
}
