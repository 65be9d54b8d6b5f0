//! Why a stored-schedule operation failed: the database, a refused transition, a missing schedule, or a
//! tank that already has an open schedule.
use thiserror::Error;

use super::error::StorageError;
use crate::schedule::ScheduleError;

/// A failed operation on stored schedules. Nothing was changed.
#[derive(Debug, Error)]
pub enum ScheduleStoreError {
    #[error(transparent)]
    Storage(#[from] StorageError),
    /// The schedule refused the transition (already done, out of order, wrong state, ...).
    #[error(transparent)]
    Refused(#[from] ScheduleError),
    #[error("no schedule {id} in this database (see `halotank schedule list`)")]
    NotFound { id: i64 },
    /// Only one active or paused schedule per tank.
    #[error(
        "tank {tank_id} already has schedule {existing_id} ({state}); abort it first \
         (`halotank schedule abort {existing_id}`) or wait until it is completed"
    )]
    TankBusy {
        tank_id: String,
        existing_id: i64,
        state: String,
    },
    /// A plan or request could not be written as JSON, or a stored one could not be read back.
    #[error("schedule {what}: {source}")]
    Json {
        what: &'static str,
        #[source]
        source: serde_json::Error,
    },
}
