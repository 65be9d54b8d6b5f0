//! `SpeciesError`: why a species library or a tank's species could not be used.
use std::path::PathBuf;

use thiserror::Error;

use crate::config::ConfigError;

/// A refused species library, an unknown species or an override that does not fit its profile.
#[derive(Debug, Error)]
pub enum SpeciesError {
    /// The library file could not be read.
    #[error("{}: cannot read the species library: {source}", path.display())]
    Read {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// The library is not valid; names the file, line, column and key at fault.
    #[error("{0}")]
    Invalid(ConfigError),
    /// A tank names a species the library does not hold.
    #[error("tank `{tank}`: species `{species}` is not in the species library (known: {known})")]
    UnknownSpecies {
        tank: String,
        species: String,
        known: String,
    },
    /// A tank's `species_override` makes its profile inconsistent.
    #[error("tank `{tank}`: species_override.{key}: {message}")]
    Override {
        tank: String,
        key: String,
        message: String,
    },
}
