//! One error type for the whole library.
//!
//! Every variant says *where* (file, field, parameter) and *what* is wrong, so the command line can
//! print it as is. The binary maps [`Error::exit_code`] to its exit status: 2 for bad usage or an
//! unreadable input, 1 for an analysis that could not be completed.

use std::path::Path;

/// Errors raised by beatfold's library.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// An input file could not be read or decoded. `place` names the field, byte offset, line or
    /// sample where the problem was found.
    #[error("{path}: {place}: {msg}")]
    Input {
        /// The file that was being read.
        path: String,
        /// Where in the file (field name, byte offset, line, sample).
        place: String,
        /// What is wrong and, where possible, what to do.
        msg: String,
    },
    /// A parameter is out of its allowed range.
    #[error("parameter `{name}`: {msg}")]
    Param {
        /// Parameter name as the user writes it (config key or option).
        name: String,
        /// Value, unit and allowed range.
        msg: String,
    },
    /// The analysis cannot go on with this data (e.g. too few beats for an embedding).
    #[error("analysis: {0}")]
    Analysis(String),
    /// An output could not be written.
    #[error("{path}: cannot write: {msg}")]
    Output {
        /// The file being written.
        path: String,
        /// What went wrong.
        msg: String,
    },
    /// Operating-system I/O error on a named file.
    #[error("{path}: {source}")]
    Io {
        /// The file concerned.
        path: String,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
}

/// Library result type.
pub type Result<T> = std::result::Result<T, Error>;

impl Error {
    /// Build an [`Error::Input`].
    pub fn input(path: impl AsRef<Path>, place: impl Into<String>, msg: impl Into<String>) -> Self {
        Error::Input {
            path: path.as_ref().display().to_string(),
            place: place.into(),
            msg: msg.into(),
        }
    }

    /// Build an [`Error::Param`].
    pub fn param(name: impl Into<String>, msg: impl Into<String>) -> Self {
        Error::Param {
            name: name.into(),
            msg: msg.into(),
        }
    }

    /// Build an [`Error::Io`] for a path.
    pub fn io(path: impl AsRef<Path>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.as_ref().display().to_string(),
            source,
        }
    }

    /// Build an [`Error::Output`].
    pub fn output(path: impl AsRef<Path>, msg: impl Into<String>) -> Self {
        Error::Output {
            path: path.as_ref().display().to_string(),
            msg: msg.into(),
        }
    }

    /// A parameter error of a configuration block named by its config path: `block.key`. Names
    /// that already carry the block are left alone; other errors pass through.
    pub fn in_block(self, block: &str) -> Self {
        match self {
            Error::Param { name, msg } if !name.starts_with(&format!("{block}.")) => Error::Param {
                name: format!("{block}.{name}"),
                msg,
            },
            e => e,
        }
    }

    /// Exit status for the command line: 2 for bad usage or unreadable input, 1 otherwise.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Input { .. } | Error::Param { .. } | Error::Io { .. } => 2,
            Error::Analysis(_) | Error::Output { .. } => 1,
        }
    }
}
