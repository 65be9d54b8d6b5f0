//! Database access for the API off the async workers: every SQLite call runs in `spawn_blocking`, on a
//! read-only connection from a small pool (readers never block the daemon's writer, WAL), or on a
//! connection opened for one change (acknowledgement requests, schedules), as the CLI does.
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use super::error::{ApiError, ApiResult};
use crate::storage::Reader;

/// Read-only connections kept open between requests.
const POOL_IDLE: usize = 4;
/// Database calls of the API running at once; more wait their turn (a burst of requests cannot open
/// connections or take blocking threads without bound).
const MAX_CONCURRENT: usize = 8;

/// The database the daemon writes, seen from the API.
#[derive(Clone)]
pub struct Db {
    path: PathBuf,
    idle: Arc<Mutex<Vec<Reader>>>,
    permits: Arc<tokio::sync::Semaphore>,
}

impl std::fmt::Debug for Db {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Db").field("path", &self.path).finish()
    }
}

impl Db {
    pub fn new(path: &Path) -> Self {
        Self {
            path: path.to_path_buf(),
            idle: Arc::default(),
            permits: Arc::new(tokio::sync::Semaphore::new(MAX_CONCURRENT)),
        }
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Runs `read` on a pooled read-only connection in the blocking pool.
    pub async fn read<T, F>(&self, read: F) -> ApiResult<T>
    where
        T: Send + 'static,
        F: FnOnce(&Reader) -> ApiResult<T> + Send + 'static,
    {
        let _permit = self.permit().await?;
        let db = self.clone();
        run_blocking(move || {
            let taken = db.idle.lock().unwrap_or_else(|e| e.into_inner()).pop();
            let reader = match taken {
                Some(r) => r,
                None => Reader::open(&db.path)?,
            };
            let result = read(&reader);
            let mut idle = db.idle.lock().unwrap_or_else(|e| e.into_inner());
            if idle.len() < POOL_IDLE {
                idle.push(reader);
            }
            result
        })
        .await
    }

    /// Runs `change` (which opens its own connection) in the blocking pool.
    pub async fn change<T, F>(&self, change: F) -> ApiResult<T>
    where
        T: Send + 'static,
        F: FnOnce(&Path) -> ApiResult<T> + Send + 'static,
    {
        let _permit = self.permit().await?;
        let path = self.path.clone();
        run_blocking(move || change(&path)).await
    }

    async fn permit(&self) -> ApiResult<tokio::sync::SemaphorePermit<'_>> {
        self.permits
            .acquire()
            .await
            .map_err(|_| ApiError::unavailable("the database is closing"))
    }
}

async fn run_blocking<T: Send + 'static>(f: impl FnOnce() -> ApiResult<T> + Send + 'static) -> ApiResult<T> {
    tokio::task::spawn_blocking(f)
        .await
        .unwrap_or_else(|e| Err(ApiError::internal(format!("database task failed: {e}"))))
}
