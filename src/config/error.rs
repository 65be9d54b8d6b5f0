//! `ConfigError`: why a configuration file was refused, naming the file, line, column and key at fault.
use std::fmt;
use std::path::{Path, PathBuf};

use thiserror::Error;

use super::key_path::KeyPath;
use super::locate::{line_column, path_at_offset, span_of_path};

/// Where in the file a problem lies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Position {
    /// 1-based line.
    pub line: usize,
    /// 1-based column, in characters.
    pub column: usize,
}

/// A refused configuration.
#[derive(Debug, Error)]
pub enum ConfigError {
    /// The file could not be read.
    #[error("{}: cannot read the configuration file: {source}", path.display())]
    Read {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// The file was read but is not a valid configuration (TOML syntax, schema or value checks).
    #[error("{}", Located { file, position: *position, key, message })]
    Invalid {
        /// The configuration file.
        file: PathBuf,
        /// Line and column of the key at fault, when the key (or its nearest parent) is in the file.
        position: Option<Position>,
        /// The key at fault (`tanks[2].topics.conductivity`); the root when the problem is the whole file.
        key: KeyPath,
        /// What is wrong, in words.
        message: String,
    },
}

impl ConfigError {
    /// The key at fault, if any.
    pub fn key(&self) -> Option<&KeyPath> {
        match self {
            Self::Invalid { key, .. } if !key.is_root() => Some(key),
            _ => None,
        }
    }

    /// The line and column at fault, if known.
    pub fn position(&self) -> Option<Position> {
        match self {
            Self::Invalid { position, .. } => *position,
            Self::Read { .. } => None,
        }
    }

    /// A TOML syntax or schema error, located through its byte span.
    pub(crate) fn from_toml(error: &toml::de::Error, source: &str, file: &Path) -> Self {
        let span = error.span();
        let (position, key) = match span {
            // A span of 0..0 is what the parser gives for a problem of the whole document (a missing section).
            Some(span) if !(span.start == 0 && span.end == 0) => {
                let (line, column) = line_column(source, span.start);
                (
                    Some(Position { line, column }),
                    path_at_offset(source, span.start),
                )
            }
            _ => (None, KeyPath::root()),
        };
        Self::Invalid {
            file: file.to_path_buf(),
            position,
            key,
            message: error.message().trim().to_string(),
        }
    }

    /// A value check that failed after parsing, located by searching the source for the key path.
    pub(crate) fn from_invalid(invalid: Invalid, source: &str, file: &Path) -> Self {
        let position = span_of_path(source, &invalid.key).map(|(span, _)| {
            let (line, column) = line_column(source, span.start);
            Position { line, column }
        });
        Self::Invalid {
            file: file.to_path_buf(),
            position,
            key: invalid.key,
            message: invalid.message,
        }
    }
}

/// A failed value check, before it is located in the source.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Invalid {
    pub key: KeyPath,
    pub message: String,
}

impl Invalid {
    pub(crate) fn new(key: KeyPath, message: impl Into<String>) -> Self {
        Self {
            key,
            message: message.into(),
        }
    }
}

struct Located<'a> {
    file: &'a Path,
    position: Option<Position>,
    key: &'a KeyPath,
    message: &'a str,
}

impl fmt::Display for Located<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file.display())?;
        if let Some(Position { line, column }) = self.position {
            write!(f, ":{line}:{column}")?;
        }
        if self.key.is_root() {
            write!(f, ": {}", self.message)
        } else {
            write!(f, ": key `{}`: {}", self.key, self.message)
        }
    }
}
