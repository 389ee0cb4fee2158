//! Saving files safely: write a temporary file beside the old one, flush it to the disk,
//! rename it over the old one, flush the folder. Only regular files are replaced, never a
//! read-only one; a replaced file keeps its mode and group (a new one is owner-only); a file
//! that changed on disk since it was opened is not overwritten without being told to, checked
//! once before writing and again just before the rename. Stale temporary files that a killed
//! save left beside the file are removed after the next save.
//!
//! A save killed at any point leaves either the old file whole or the new one whole (the
//! rename is the only step that touches the real name). Used by `ebb tidy`, `ebb note -o`,
//! `ebb plot -o` and the bedside screen.

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
    /// A file is there where none was when the case was started (saving under a new name).
    #[error("{path}: already exists and is not the file this case was opened from; not overwritten (save again to replace it, or save under another name)")]
    Exists {
        /// The file.
        path: PathBuf,
    },
    /// The path names a FIFO, a device, a folder or a socket.
    #[error("{path}: is {kind}, not a regular file; ebb writes only regular files")]
    NotRegular {
        /// The path.
        path: PathBuf,
        /// What it is, in words ("a FIFO (named pipe)").
        kind: &'static str,
    },
    /// The file is read-only (or this user may not write it).
    #[error(
        "{path}: is read-only; not replaced (save under another name, or make it writable first)"
    )]
    ReadOnlyFile {
        /// The file.
        path: PathBuf,
    },
    /// The folder does not let this user create a file in it.
    #[error("{path}: the folder {dir} is read-only; nothing was written (save under another name, in a folder you can write)")]
    ReadOnlyFolder {
        /// The file.
        path: PathBuf,
        /// The folder.
        dir: PathBuf,
    },
    /// The path is a case file that did not load when opened: saving over it would replace
    /// a case this session never saw.
    #[error("{path}: did not load when it was opened; ebb does not save over it (save under another name)")]
    DidNotLoad {
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

/// Open a regular file for reading; anything else (a FIFO, which would block with no
/// writer, a device, a folder) is an `InvalidInput` error naming what it is.
fn open_regular(path: &Path) -> std::io::Result<File> {
    let not_regular = |m: &fs::Metadata| {
        special_kind(m).map(|kind| {
            std::io::Error::new(
                std::io::ErrorKind::InvalidInput,
                format!("is {kind}, not a regular file"),
            )
        })
    };
    if let Some(e) = not_regular(&fs::metadata(path)?) {
        return Err(e);
    }
    let f = File::open(path)?;
    match not_regular(&f.metadata()?) {
        Some(e) => Err(e),
        None => Ok(f),
    }
}

/// The fingerprint of the file at `path` now; `None` when there is no file.
///
/// # Errors
/// The file exists but cannot be read.
pub fn fingerprint(path: &Path) -> std::io::Result<Option<Fingerprint>> {
    match read_limited(path) {
        Ok((bytes, modified)) => Ok(Some(Fingerprint::of(&bytes, modified))),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(e) => Err(e),
    }
}

/// The bytes of a regular file of at most `casefile::MAX_CASE_BYTES`, and its modification
/// time: a FIFO, a device or a huge file is an error, never a wait or a memory blow-up.
fn read_limited(path: &Path) -> std::io::Result<(Vec<u8>, Option<std::time::SystemTime>)> {
    use crate::core::casefile::MAX_CASE_BYTES;
    use std::io::Read;
    let f = open_regular(path)?;
    let modified = f.metadata()?.modified().ok();
    let mut bytes = Vec::new();
    f.take(MAX_CASE_BYTES + 1).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > MAX_CASE_BYTES {
        return Err(std::io::Error::new(
            std::io::ErrorKind::InvalidData,
            format!(
                "is larger than {} MiB, the most a case file may be",
                MAX_CASE_BYTES / (1024 * 1024)
            ),
        ));
    }
    Ok((bytes, modified))
}

pub use crate::core::casefile::special_kind;

/// Whether this user may write the regular file at `path`: its permissions say so and it
/// opens for writing (opening without truncating changes nothing).
pub fn writable(path: &Path, meta: &fs::Metadata) -> bool {
    !meta.permissions().readonly() && OpenOptions::new().write(true).open(path).is_ok()
}

/// Refuse a path that exists and is not a regular file, or is read-only. A missing file
/// passes (it will be created).
///
/// # Errors
/// `NotRegular` or `ReadOnlyFile`.
pub fn check_replaceable(path: &Path) -> Result<Option<fs::Metadata>, SaveError> {
    match fs::metadata(path) {
        Ok(m) => {
            if let Some(kind) = special_kind(&m) {
                return Err(SaveError::NotRegular {
                    path: path.to_path_buf(),
                    kind,
                });
            }
            if !writable(path, &m) {
                return Err(SaveError::ReadOnlyFile {
                    path: path.to_path_buf(),
                });
            }
            Ok(Some(m))
        }
        Err(_) => Ok(None),
    }
}

/// Check the file on disk against `expect`.
fn check_expect(path: &Path, expect: &Expect) -> Result<(), SaveError> {
    let Expect::Unchanged(was) = expect else {
        return Ok(());
    };
    let now = fingerprint(path).map_err(|e| SaveError::Io {
        path: path.to_path_buf(),
        step: "reading the file on disk",
        reason: e.to_string(),
    })?;
    match (was, &now) {
        (None, None) => Ok(()),
        (Some(a), Some(b)) if !a.differs_from(b) => Ok(()),
        (None, Some(_)) => Err(SaveError::Exists {
            path: path.to_path_buf(),
        }),
        _ => Err(SaveError::ChangedOnDisk {
            path: path.to_path_buf(),
        }),
    }
}

/// What to expect at the first save of a case opened from `path`: the file as it is now,
/// or no file. A file that cannot be read gives `Expect::Unchanged(None)`, so that a save
/// over it later asks first.
pub fn expect_at_open(path: &Path) -> Expect {
    Expect::Unchanged(fingerprint(path).ok().flatten())
}

/// Save a case as TOML to `path` safely (see `save_bytes`), keeping the comments and the
/// layout of `original` (the text it was read from) where the values are unchanged.
///
/// # Errors
/// As `save_bytes`, or a value TOML cannot write.
pub fn save_case(
    file: &CaseFile,
    original: Option<&str>,
    path: &Path,
    expect: &Expect,
) -> Result<Fingerprint, SaveError> {
    let text = crate::files::toml_keep::render(file, original).map_err(|e| SaveError::Toml {
        path: path.to_path_buf(),
        reason: e,
    })?;
    save_bytes(path, text.as_bytes(), expect)
}

/// Replace the file at `path` with `bytes` in one step: a temporary file in the same folder,
/// flushed to the disk, renamed over `path`, then the folder flushed so the rename itself
/// lasts. A new file is readable and writable by its owner only; a replaced one keeps its
/// mode and, where the user may set it, its group. A symbolic link is followed (the file it
/// points to is replaced, the link kept). Only a regular file that this user may write is
/// replaced. The file is compared with `expect` before writing and again just before the
/// rename. Returns the new file's fingerprint, to expect at the next save.
///
/// # Errors
/// The file is not as `expect` says (`ChangedOnDisk`, `Exists`), is not a regular file, is
/// read-only, the folder is read-only, or a step fails; the old file is left whole either
/// way, and the temporary file is removed.
pub fn save_bytes(path: &Path, bytes: &[u8], expect: &Expect) -> Result<Fingerprint, SaveError> {
    let io = |step: &'static str| {
        move |e: std::io::Error| SaveError::Io {
            path: path.to_path_buf(),
            step,
            reason: e.to_string(),
        }
    };
    let old = check_replaceable(path)?;
    check_expect(path, expect)?;
    // Replace what a link points to, not the link.
    let target = match fs::symlink_metadata(path) {
        Ok(m) if m.file_type().is_symlink() => {
            fs::canonicalize(path).map_err(io("following the link"))?
        }
        _ => path.to_path_buf(),
    };
    let dir = folder_of(&target);
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .ok_or_else(|| SaveError::Io {
            path: path.to_path_buf(),
            step: "naming the file",
            reason: "the path does not end in a file name".into(),
        })?;
    let tmp = dir.join(temp_name(&name, std::process::id()));
    let _ = fs::remove_file(&tmp);
    if let Err(e) = write_private(&tmp, bytes) {
        let _ = fs::remove_file(&tmp);
        let denied = matches!(
            e.kind(),
            std::io::ErrorKind::PermissionDenied | std::io::ErrorKind::ReadOnlyFilesystem
        );
        return Err(if denied {
            SaveError::ReadOnlyFolder {
                path: path.to_path_buf(),
                dir,
            }
        } else {
            io("writing the temporary file")(e)
        });
    }
    let written = keep_mode_and_group(&tmp, old.as_ref())
        .map_err(io("keeping the file's permissions"))
        .and_then(|()| {
            pause_for_tests();
            // The window between the first check and the rename is where another program's
            // change would be lost: look again, as late as possible.
            check_replaceable(path)?;
            check_expect(path, expect)?;
            fs::rename(&tmp, &target).map_err(io("renaming the temporary file over it"))
        });
    if let Err(e) = written {
        let _ = fs::remove_file(&tmp);
        return Err(e);
    }
    sync_dir(&dir);
    remove_stale_temporaries(&dir, &name);
    let modified = fs::metadata(&target).and_then(|m| m.modified()).ok();
    Ok(Fingerprint::of(bytes, modified))
}

fn folder_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// The temporary file's name for `name` saved by process `pid`.
pub fn temp_name(name: &str, pid: u32) -> String {
    format!(".{name}.{pid}.tmp")
}

/// Remove the temporary files that saves of `name` killed before their rename left in `dir`
/// (they hold a whole or partial copy of patient data). A file of a process still running
/// (another save in progress) is left alone; where the system does not say which processes
/// run, only files older than a day are removed. Returns how many were removed.
pub fn remove_stale_temporaries(dir: &Path, name: &str) -> usize {
    let Ok(entries) = fs::read_dir(dir) else {
        return 0;
    };
    let prefix = format!(".{name}.");
    let me = std::process::id();
    let proc_known = Path::new("/proc/self").exists();
    let mut removed = 0;
    for entry in entries.flatten() {
        let file = entry.file_name().to_string_lossy().into_owned();
        let Some(pid) = file
            .strip_prefix(&prefix)
            .and_then(|r| r.strip_suffix(".tmp"))
            .and_then(|p| p.parse::<u32>().ok())
        else {
            continue;
        };
        if pid == me {
            continue;
        }
        let stale = if proc_known {
            !Path::new("/proc").join(pid.to_string()).exists()
        } else {
            entry
                .metadata()
                .and_then(|m| m.modified())
                .ok()
                .and_then(|t| t.elapsed().ok())
                .is_some_and(|age| age.as_secs() > 24 * 3600)
        };
        let regular = entry.file_type().is_ok_and(|t| t.is_file());
        if stale && regular && fs::remove_file(entry.path()).is_ok() {
            removed += 1;
        }
    }
    removed
}

/// Give the new file the old one's permission bits and group (a new file stays owner-only;
/// set-id and sticky bits are not copied). Setting the group is allowed only to a group the
/// user belongs to; where it is not, the file keeps the user's group and the mode is still
/// kept.
fn keep_mode_and_group(tmp: &Path, old: Option<&fs::Metadata>) -> std::io::Result<()> {
    let Some(_old) = old else {
        return Ok(());
    };
    #[cfg(unix)]
    {
        use std::os::unix::fs::{MetadataExt, PermissionsExt};
        let _ = std::os::unix::fs::chown(tmp, None, Some(_old.gid()));
        fs::set_permissions(tmp, fs::Permissions::from_mode(_old.mode() & 0o777))?;
    }
    Ok(())
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
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            fs::set_permissions(&path, fs::Permissions::from_mode(0o600)).unwrap();
        }
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
        assert!(matches!(e, SaveError::Exists { .. }));
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

    #[cfg(unix)]
    #[test]
    fn a_replaced_file_keeps_its_mode_and_a_new_one_is_owner_only() {
        use std::os::unix::fs::PermissionsExt;
        let dir = scratch("mode");
        let path = dir.join("shared.toml");
        fs::write(&path, "old").unwrap();
        fs::set_permissions(&path, fs::Permissions::from_mode(0o664)).unwrap();
        save_bytes(&path, b"new", &Expect::Overwrite).unwrap();
        let mode = fs::metadata(&path).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o664);
        let fresh = dir.join("fresh.toml");
        save_bytes(&fresh, b"new", &Expect::Unchanged(None)).unwrap();
        let mode = fs::metadata(&fresh).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o600);
    }

    #[cfg(unix)]
    #[test]
    fn a_replaced_file_keeps_its_group_where_the_user_may_set_it() {
        use std::os::unix::fs::MetadataExt;
        let dir = scratch("group");
        let path = dir.join("shared.toml");
        fs::write(&path, "old").unwrap();
        let mine = fs::metadata(&path).unwrap().gid();
        // Another group this user belongs to, if any.
        let out = std::process::Command::new("id").arg("-G").output().unwrap();
        let groups = String::from_utf8_lossy(&out.stdout).into_owned();
        let root = groups.split_whitespace().next() == Some("0") && mine == 0;
        let other = groups
            .split_whitespace()
            .filter_map(|g| g.parse::<u32>().ok())
            .find(|g| *g != mine)
            // Root may give a file any group.
            .or(root.then_some(1));
        let Some(other) = other else {
            println!("note: this user is in one group only; the group test is skipped");
            return;
        };
        std::os::unix::fs::chown(&path, None, Some(other)).unwrap();
        save_bytes(&path, b"new", &Expect::Overwrite).unwrap();
        assert_eq!(fs::metadata(&path).unwrap().gid(), other);
    }

    #[cfg(unix)]
    #[test]
    fn a_fifo_a_folder_and_a_read_only_file_are_not_replaced() {
        use std::os::unix::fs::{FileTypeExt, PermissionsExt};
        let dir = scratch("special");
        let fifo = dir.join("pipe");
        let made = std::process::Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap();
        assert!(made.success());
        let e = save_bytes(&fifo, b"x", &Expect::Overwrite).unwrap_err();
        assert!(
            matches!(
                e,
                SaveError::NotRegular {
                    kind: "a FIFO (named pipe)",
                    ..
                }
            ),
            "{e}"
        );
        assert!(fs::symlink_metadata(&fifo).unwrap().file_type().is_fifo());
        let e = save_bytes(&dir, b"x", &Expect::Overwrite).unwrap_err();
        assert!(
            matches!(
                e,
                SaveError::NotRegular {
                    kind: "a folder",
                    ..
                }
            ),
            "{e}"
        );
        let ro = dir.join("ro.toml");
        fs::write(&ro, "keep").unwrap();
        fs::set_permissions(&ro, fs::Permissions::from_mode(0o444)).unwrap();
        let e = save_bytes(&ro, b"x", &Expect::Overwrite).unwrap_err();
        assert!(matches!(e, SaveError::ReadOnlyFile { .. }), "{e}");
        assert_eq!(fs::read(&ro).unwrap(), b"keep");
        let mode = fs::metadata(&ro).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o444);
    }

    #[test]
    fn stale_temporary_files_of_dead_saves_are_removed_after_the_next_save() {
        let dir = scratch("stale");
        let path = dir.join("case.toml");
        fs::write(&path, "old").unwrap();
        // A pid no system gives out (above the largest pid_max), and this process's own.
        let stale = dir.join(temp_name("case.toml", 999_999_999));
        fs::write(&stale, "half a case").unwrap();
        let other = dir.join(temp_name("other.toml", 999_999_999));
        fs::write(&other, "another file's").unwrap();
        save_bytes(&path, b"new", &Expect::Overwrite).unwrap();
        assert!(!stale.exists());
        assert!(other.exists(), "only the saved file's temporaries go");
    }
}
