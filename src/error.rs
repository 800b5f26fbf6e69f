//! The error type of the library: what went wrong, where (file, line, column or key), and what
//! to do about it. `main.rs` is the only place that turns these into text for the user.

use std::path::PathBuf;

/// Every way loading, checking or writing can fail.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// A file could not be opened or read.
    #[error("{path}: cannot read: {source}")]
    Io {
        /// The file concerned.
        path: PathBuf,
        /// The operating system's reason.
        source: std::io::Error,
    },

    /// A file could not be written.
    #[error("{path}: cannot write: {why}")]
    Write {
        /// The file concerned.
        path: PathBuf,
        /// Why, in words, with what to do.
        why: String,
    },

    /// A path given on the command line does not exist.
    #[error("{path}: no such file or folder")]
    NotFound {
        /// The missing path.
        path: PathBuf,
    },

    /// A file's content is not in a form hubwatch can read.
    #[error("{path}: {message}")]
    Format {
        /// The file concerned.
        path: PathBuf,
        /// What is wrong and what to do.
        message: String,
    },

    /// A required field has no column in a table.
    #[error("{path}: no column for required field `{field}`. Headers found: {found}.{hint}")]
    MissingField {
        /// The file concerned.
        path: PathBuf,
        /// The canonical field name.
        field: String,
        /// The headers that the file has, comma-separated.
        found: String,
        /// A suggestion (closest header and the setting that maps it), or empty.
        hint: String,
    },

    /// A date column is ambiguous or unreadable with the active settings.
    #[error("{path}: column `{column}`: {message}")]
    Dates {
        /// The file concerned.
        path: PathBuf,
        /// The column holding the dates.
        column: String,
        /// The examples and the setting to add.
        message: String,
    },

    /// A configuration file or option is wrong.
    #[error("configuration: {0}")]
    Config(String),

    /// Command-line usage that parses but makes no sense together.
    #[error("{0}")]
    Usage(String),

    /// An error raised inside polars while reading a file.
    #[error("{path}: {source}")]
    Polars {
        /// The file concerned.
        path: PathBuf,
        /// The polars error.
        source: polars::error::PolarsError,
    },
}

impl Error {
    /// Wrap an I/O error with the path it concerns.
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }

    /// A write to `path` failed: say why in terms of the path (a missing folder, no
    /// permission, a full disk) rather than the bare operating-system message.
    pub fn write(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        let path = path.into();
        let dir = path
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(std::path::Path::new("."));
        let why = if !dir.is_dir() {
            format!(
                "the folder {} does not exist; create it or choose another path",
                dir.display()
            )
        } else {
            match source.kind() {
                std::io::ErrorKind::PermissionDenied => {
                    format!("no permission to write in {} ({source})", dir.display())
                }
                std::io::ErrorKind::StorageFull => {
                    format!("the disk holding {} is full ({source})", dir.display())
                }
                _ => source.to_string(),
            }
        };
        Error::Write { path, why }
    }

    /// A format problem in a file.
    pub fn format(path: impl Into<PathBuf>, message: impl Into<String>) -> Self {
        Error::Format {
            path: path.into(),
            message: message.into(),
        }
    }

    /// The process exit code documented in the README for this kind of error.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Usage(_) | Error::Config(_) => 2,
            Error::Io { .. } | Error::Write { .. } | Error::NotFound { .. } => 3,
            Error::Format { .. }
            | Error::MissingField { .. }
            | Error::Dates { .. }
            | Error::Polars { .. } => 4,
        }
    }
}

/// Result alias used across the crate.
pub type Result<T, E = Error> = std::result::Result<T, E>;
