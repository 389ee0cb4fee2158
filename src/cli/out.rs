//! Standard output and standard error for the commands: every write error is reported
//! (exit status 2), and text for the terminal is made printable first.

use std::fmt::Display;
use std::io::Write;

use crate::core::error::{Error, Result};
use crate::core::text;

/// Write `bytes` to standard output and flush them, so that a full disk, a closed pipe or
/// `/dev/full` is an error here rather than lost at exit.
///
/// # Errors
/// The write or the flush failed: an error at `standard output` in the system's words.
pub fn stdout(bytes: &[u8]) -> Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(bytes)
        .and_then(|()| out.flush())
        .map_err(|e| Error::invalid("standard output", format!("cannot write: {e}")))
}

/// Write one line to standard error, every control character made visible (see
/// `core::text::printable`). A failure to write there is ignored: there is nowhere left to
/// say it, and the exit status still tells.
pub fn say(line: impl Display) {
    let line = line.to_string();
    let mut err = std::io::stderr().lock();
    let _ = writeln!(err, "{}", text::printable(&line)).and_then(|()| err.flush());
}
