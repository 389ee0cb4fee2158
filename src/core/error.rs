//! The one error type of ebb: every message names the file, field or row and what is wrong.

use std::path::PathBuf;

/// Everything that can go wrong between reading a case and writing its report.
#[derive(Debug, Clone, thiserror::Error)]
pub enum Error {
    /// The case file could not be read from disk.
    #[error("{path}: cannot read the file: {reason}")]
    Read {
        /// The file that was asked for.
        path: PathBuf,
        /// The operating system's reason, in its words.
        reason: String,
    },
    /// The TOML did not parse, or a field is unknown or of the wrong type.
    #[error("line {line}: {message}")]
    Syntax {
        /// Line of the problem, counting from 1.
        line: usize,
        /// What the parser said, on one line.
        message: String,
    },
    /// A field or row holds a value the model cannot accept.
    #[error("{place}: {message}")]
    Invalid {
        /// The field or row, for example `level 3` or `plan.interval_h`.
        place: String,
        /// What is wrong, with the value found.
        message: String,
    },
    /// The levels cannot give an elimination rate.
    #[error("{0}")]
    Fit(String),
    /// An error with the file it came from in front.
    #[error("{path}: {source}")]
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
