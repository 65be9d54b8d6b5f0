//! SQLite storage adapter: schema migrations, the single batching writer, retention, and read-only queries.
//!
//! - [`schema`]: versioned migrations and connection settings (WAL, `synchronous=FULL`, busy timeout).
//! - [`writer`]: one thread owns the write connection; commits batches and reports the acks they cover.
//! - [`retention`]: folds old readings into hourly summaries.
//! - [`queries`]: read-only connections for `history` and `status`.
//! - [`alerts`]: alert records and acknowledgement requests.
//! - [`history_series`]: a tank's history as a chart series of at most N points (bucket means).
//! - [`schedules`]: stored acclimation schedules (their own read-write connection, checked changes).
pub mod alerts;
pub mod codec;
pub mod error;
pub mod history_series;
pub mod insert;
pub mod queries;
pub mod retention;
pub mod rows;
pub mod schedule_error;
pub mod schedules;
pub mod schema;
pub mod writer;

pub use alerts::{AckRequest, AckRequestStatus, AlertFilter};
pub use error::StorageError;
pub use history_series::{Series, SeriesPoint};
pub use queries::{Reader, ReasonCount, TankReadingCount};
pub use retention::{RetentionReport, RetentionSettings};
pub use rows::{DaemonStateRow, HourlyRow, HourlyStats, ReadingRow, RejectionRow, PAYLOAD_PREFIX_MAX_BYTES};
pub use schedule_error::ScheduleStoreError;
pub use schedules::ScheduleStore;
pub use schema::SCHEMA_VERSION;
pub use writer::{
    spawn_writer, CommitReport, SpawnedWriter, WriteItem, WriterHandle, WriterJoinHandle, WriterSettings,
    WriterSummary,
};
