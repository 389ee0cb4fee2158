//! Saving a case to disk safely: a temporary file in the same folder, flushed to the disk,
//! then renamed over the old file, readable by its owner only (it holds patient data).

use std::fs::{self, File, OpenOptions};
use std::io::Write;
use std::path::Path;

use crate::core::casefile::CaseFile;

/// Write `file` as TOML to `path`, replacing it in one step.
///
/// # Errors
/// The case cannot be written as TOML, or the folder or file cannot be written; the old file
/// is left as it was then.
pub fn save(file: &CaseFile, path: &Path) -> Result<(), String> {
    let text = file.to_toml().map_err(|e| e.to_string())?;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .ok_or_else(|| "not a file name".to_string())?;
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let _ = fs::remove_file(&tmp);
    let written = write_private(&tmp, text.as_bytes()).and_then(|()| fs::rename(&tmp, path));
    if let Err(e) = written {
        let _ = fs::remove_file(&tmp);
        return Err(e.to_string());
    }
    // Make the rename itself durable; not every system lets a folder be opened, so a
    // failure here is not reported.
    if let Ok(d) = File::open(&dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

fn write_private(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut opts = OpenOptions::new();
    opts.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.mode(0o600);
    }
    let mut f = opts.open(path)?;
    f.write_all(bytes)?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        // The mode above is filtered by the umask; set it exactly.
        f.set_permissions(fs::Permissions::from_mode(0o600))?;
    }
    f.sync_all()
}
