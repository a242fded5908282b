//! Typed errors of the library.
//!
//! Every variant says what is wrong and where (file, line, column or spec key); the
//! binary adds a `hint:` line where it can. [`Error::is_bad_input`] separates errors
//! caused by the user's input (exit code 2) from internal failures (exit code 1).
//!
//! The category follows from the variant, so it is decided where the error is made:
//! reading an input ([`Error::Io`], [`Error::Csv`]) can be the input's fault; writing an
//! output ([`Error::Write`]) or a broken promise between two parts of samekey
//! ([`Error::Internal`]) never is.

use std::path::PathBuf;

/// Library result alias.
pub type Result<T> = std::result::Result<T, Error>;

/// Everything that can go wrong in a samekey run.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// The linkage spec is invalid at `key`.
    #[error("spec `{file}`: key `{key}`: {message}")]
    Spec {
        /// Spec file.
        file: PathBuf,
        /// Dotted key path, e.g. `source[1].columns.email`.
        key: String,
        /// What is wrong and what is allowed.
        message: String,
    },
    /// A data file is unusable as a whole (missing column, empty file, duplicate ids).
    #[error("`{file}`: {message}")]
    Input {
        /// The data file.
        file: PathBuf,
        /// What is wrong and what would fix it.
        message: String,
    },
    /// A model file cannot be used.
    #[error("model `{file}`: {message}")]
    Model {
        /// The model file.
        file: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// A command-line value is invalid.
    #[error("{0}")]
    Usage(String),
    /// A blocking key would produce too many candidate pairs.
    #[error(
        "blocking key `{key}` would produce {pairs} candidate pairs (limit {limit}); {detail}"
    )]
    BlockTooLarge {
        /// Name of the blocking key.
        key: String,
        /// Estimated pairs.
        pairs: u64,
        /// Configured limit.
        limit: u64,
        /// The largest blocks and how to tighten the key.
        detail: String,
    },
    /// Opening or reading an input file failed. Bad input when the file is missing or
    /// not readable for the user; otherwise (a failing disk) internal.
    #[error("`{path}`")]
    Io {
        /// File involved.
        path: PathBuf,
        /// Underlying error.
        #[source]
        source: std::io::Error,
    },
    /// Writing an output failed (disk full, file-size limit, device error): not caused
    /// by the input, so an internal failure (exit code 1).
    #[error("cannot write `{path}`")]
    Write {
        /// File or folder being written.
        path: PathBuf,
        /// Underlying error.
        #[source]
        source: std::io::Error,
    },
    /// An input CSV file could not be read (malformed CSV, invalid header).
    #[error("`{path}`")]
    Csv {
        /// File involved.
        path: PathBuf,
        /// Underlying error.
        #[source]
        source: csv::Error,
    },
    /// A bug or an impossible state: one part of samekey broke a promise to another
    /// (for example pattern counts that do not fit the levels the fit was given).
    #[error("internal error: {0}")]
    Internal(String),
}

impl Error {
    /// True when the error is caused by the user's input (spec, data, model, flags).
    pub fn is_bad_input(&self) -> bool {
        match self {
            Error::Spec { .. }
            | Error::Input { .. }
            | Error::Model { .. }
            | Error::Usage(_)
            | Error::BlockTooLarge { .. } => true,
            // A file that cannot be found or read is the user's to fix.
            Error::Io { source, .. } => matches!(
                source.kind(),
                std::io::ErrorKind::NotFound | std::io::ErrorKind::PermissionDenied
            ),
            Error::Csv { .. } => true,
            Error::Write { .. } | Error::Internal(_) => false,
        }
    }

    /// Wrap an I/O error with the path it happened on.
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }

    /// Wrap a failure to write an output with the path it happened on.
    pub fn write(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Write {
            path: path.into(),
            source,
        }
    }

    /// Wrap a failure of a CSV writer: always a failure to write `path`.
    pub fn write_csv(path: impl Into<PathBuf>, source: csv::Error) -> Self {
        Error::Write {
            path: path.into(),
            source: source.into(),
        }
    }

    /// Shorthand for a spec error.
    pub fn spec(
        file: impl Into<PathBuf>,
        key: impl Into<String>,
        message: impl Into<String>,
    ) -> Self {
        Error::Spec {
            file: file.into(),
            key: key.into(),
            message: message.into(),
        }
    }

    /// Shorthand for an input error.
    pub fn input(file: impl Into<PathBuf>, message: impl Into<String>) -> Self {
        Error::Input {
            file: file.into(),
            message: message.into(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::ErrorKind;

    #[test]
    fn the_category_follows_the_cause() {
        let io = |k: ErrorKind| std::io::Error::from(k);
        assert!(Error::io("in.csv", io(ErrorKind::NotFound)).is_bad_input());
        assert!(Error::io("in.csv", io(ErrorKind::PermissionDenied)).is_bad_input());
        assert!(!Error::io("in.csv", io(ErrorKind::Other)).is_bad_input());
        // Writing never blames the input, whatever the OS says.
        for k in [
            ErrorKind::NotFound,
            ErrorKind::PermissionDenied,
            ErrorKind::StorageFull,
        ] {
            assert!(
                !Error::write("out/pairs.csv", io(k)).is_bad_input(),
                "{k:?}"
            );
        }
        let csv_write = csv::Error::from(io(ErrorKind::StorageFull));
        assert!(!Error::write_csv("out/a.csv", csv_write).is_bad_input());
        assert!(!Error::Internal("x".into()).is_bad_input());
        assert!(Error::spec("s.toml", "version", "x").is_bad_input());
        assert!(Error::Usage("x".into()).is_bad_input());
    }
}
