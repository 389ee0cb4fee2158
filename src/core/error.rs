//! The one error type of ebb: every message names the file, field or row and what is wrong.

use std::path::PathBuf;

/// Text from a file or the system, safe to print: no control character reaches a terminal
/// through an error message (see `core::text::printable`).
fn safe(text: &impl std::fmt::Display) -> String {
    crate::core::text::printable(&text.to_string()).into_owned()
}

/// Everything that can go wrong between reading a case and writing its report.
#[derive(Debug, Clone, thiserror::Error)]
pub enum Error {
    /// The case file could not be read from disk.
    #[error("{}: cannot read the file: {}", safe(&.path.display()), safe(.reason))]
    Read {
        /// The file that was asked for.
        path: PathBuf,
        /// The operating system's reason, in its words.
        reason: String,
    },
    /// The TOML did not parse, or a field is unknown or of the wrong type.
    #[error("line {line}: {}", safe(.message))]
    Syntax {
        /// Line of the problem, counting from 1.
        line: usize,
        /// What the parser said, on one line.
        message: String,
    },
    /// A field or row holds a value the model cannot accept.
    #[error("{}: {}", safe(.place), safe(.message))]
    Invalid {
        /// The field or row, for example `level 3` or `plan.interval_h`.
        place: String,
        /// What is wrong, with the value found.
        message: String,
    },
    /// The levels cannot give an elimination rate.
    #[error("{}", safe(.0))]
    Fit(String),
    /// An error with the file it came from in front.
    #[error("{}: {source}", safe(.path))]
    InFile {
        /// The file.
        path: String,
        /// The error inside it.
        source: Box<Error>,
    },
}

impl Error {
    /// An invalid value at a named place.
    pub fn invalid(place: impl Into<String>, message: impl Into<String>) -> Self {
        Error::Invalid {
            place: place.into(),
            message: message.into(),
        }
    }

    /// Put the file name in front of this error (once).
    pub fn in_file(self, path: impl Into<String>) -> Self {
        match self {
            e @ (Error::InFile { .. } | Error::Read { .. }) => e,
            e => Error::InFile {
                path: path.into(),
                source: Box::new(e),
            },
        }
    }
}

/// The result type of the core.
pub type Result<T> = std::result::Result<T, Error>;
