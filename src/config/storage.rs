//! The `[storage]` section: where readings are kept, for how long, and how writes are batched.
use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::defaults;
use super::error::Invalid;
use super::key_path::KeyPath;

/// `[storage]` as written in the file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawStorage {
    path: String,
    retention_days: Option<u32>,
    flush_rows: Option<usize>,
    flush_ms: Option<u64>,
}

/// The SQLite store.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct StorageConfig {
    /// Database file, resolved against the configuration file's folder.
    pub path: PathBuf,
    /// Days readings are kept.
    pub retention_days: u32,
    /// Rows per transaction at most.
    pub flush_rows: usize,
    /// Longest wait before a partial batch is committed, milliseconds.
    pub flush_ms: u64,
}

impl RawStorage {
    pub(crate) fn resolve(self, path: &KeyPath, base: &Path) -> Result<StorageConfig, Invalid> {
        if self.path.trim().is_empty() {
            return Err(Invalid::new(path.key("path"), "must name the database file"));
        }
        let retention_days = self.retention_days.unwrap_or(defaults::RETENTION_DAYS);
        if retention_days == 0 {
            return Err(Invalid::new(path.key("retention_days"), "must be at least 1 day"));
        }
        let flush_rows = self.flush_rows.unwrap_or(defaults::FLUSH_ROWS);
        if flush_rows == 0 {
            return Err(Invalid::new(path.key("flush_rows"), "must be at least 1"));
        }
        let flush_ms = self.flush_ms.unwrap_or(defaults::FLUSH_MS);
        if flush_ms == 0 {
            return Err(Invalid::new(path.key("flush_ms"), "must be at least 1 ms"));
        }
        Ok(StorageConfig {
            path: super::resolve_path(base, &self.path),
            retention_days,
            flush_rows,
            flush_ms,
        })
    }
}
