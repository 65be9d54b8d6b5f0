//! The typed error of the SQLite storage adapter: what failed, on which database, and why.
use std::path::PathBuf;

use thiserror::Error;

/// Why a storage operation failed. Carries the database path or the operation as context.
#[derive(Debug, Error)]
pub enum StorageError {
    /// A reader was asked to open a database file that does not exist.
    #[error("database {path} does not exist (start the daemon with this database first, or check --db)")]
    DatabaseMissing { path: PathBuf },
    /// SQLite could not open (or configure) the database file.
    #[error("cannot open database {path}: {source}")]
    Open {
        path: PathBuf,
        #[source]
        source: rusqlite::Error,
    },
    /// The file holds a schema written by a newer halotank.
    #[error(
        "database {path} has schema version {found}, newer than version {known} known to this halotank; \
         upgrade halotank (the database was left untouched)"
    )]
    SchemaTooNew { path: PathBuf, found: u32, known: u32 },
    /// A read-only reader found a schema older than this halotank's (a writer migrates it on open).
    #[error(
        "database {path} has schema version {found}, older than version {known}; \
         start the daemon once on it to migrate"
    )]
    SchemaTooOld { path: PathBuf, found: u32, known: u32 },
    /// A read-only reader found a file with no halotank schema at all.
    #[error("{path} is not a halotank database (no schema)")]
    NotInitialised { path: PathBuf },
    /// SQLite refused WAL journal mode (for example an in-memory database).
    #[error("database {path} is in journal mode `{found}`, but halotank needs `wal`")]
    JournalMode { path: PathBuf, found: String },
    /// One migration step failed; it was rolled back and later steps were not tried.
    #[error("migration of {path} to schema version {version} ({description}) failed: {source}")]
    Migration {
        path: PathBuf,
        version: u32,
        description: &'static str,
        #[source]
        source: rusqlite::Error,
    },
    /// A statement failed; `what` names the operation.
    #[error("{what}: {source}")]
    Sqlite {
        what: &'static str,
        #[source]
        source: rusqlite::Error,
    },
    /// A stored row holds a value this halotank cannot interpret.
    #[error("stored row is not usable: {what}")]
    CorruptRow { what: String },
    /// The writer thread could not be started.
    #[error("cannot start the storage writer thread: {0}")]
    Spawn(#[source] std::io::Error),
    /// The writer thread has stopped (its channel is closed), so the request could not be delivered.
    #[error("the storage writer has stopped")]
    WriterStopped,
    /// The writer was told to abandon a batch it could not commit; those items were neither stored nor acked.
    #[error(
        "the storage writer abandoned {pending_rows} uncommitted rows and {pending_acks} acks \
         (not acked, so the broker redelivers them)"
    )]
    Abandoned {
        pending_rows: usize,
        pending_acks: usize,
    },
}

impl StorageError {
    /// Wraps a SQLite error with the operation it came from.
    pub(crate) fn sqlite(what: &'static str) -> impl FnOnce(rusqlite::Error) -> StorageError {
        move |source| StorageError::Sqlite { what, source }
    }
}
