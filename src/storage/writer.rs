//! The one storage writer: a dedicated thread owns the write connection, batches items into transactions
//! and reports each commit with the ack tokens it covers.
//!
//! Acks leave only after their commit. A failed commit (disk full, database locked) keeps every row and
//! ack of its batch and is retried with backoff; while it retries the writer takes no new items, so the
//! bounded queue fills and pushes back on the async side.
//!
//! `flush_rows` and the broker's in-flight window: with QoS 1 and acks after commit, the broker sends at
//! most its in-flight window of unacked messages, then waits. If `flush_rows` were larger than that
//! window the row trigger could never fire and every batch would wait the full `flush_ms`, capping
//! throughput at one window per `flush_ms`. [`WriterSettings::cap_flush_rows`] caps it at the window.
use std::path::Path;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use chrono::{DateTime, Utc};
use rusqlite::{Connection, TransactionBehavior};
use tokio::sync::{mpsc, oneshot};

use super::alerts::{mark_ack_request_handled, upsert_alert};
use super::error::StorageError;
use super::insert::{
    insert_reading, insert_rejection, reading_problem, rejection_for_invalid, upsert_daemon_state,
};
use super::retention::{self, RetentionReport, RetentionSettings};
use super::rows::{DaemonStateRow, ReadingRow, RejectionRow};
use super::schema::open_for_writing;
use crate::alerts::AlertRecord;

/// One thing to store. `A` is the caller's opaque ack token, handed back in a [`CommitReport`].
#[derive(Debug)]
pub enum WriteItem<A> {
    /// One accepted reading and the ack of the message it came from.
    Reading(ReadingRow, A),
    /// Every reading of one message: committed in the same transaction, acked once.
    Readings(Vec<ReadingRow>, A),
    /// One refused message and its ack.
    Rejection(RejectionRow, A),
    /// No row (an ignored message): the ack is released with the next commit, keeping acks in order.
    AckOnly(A),
    /// The daemon's latest state; within one batch only the last is written. Carries no ack.
    DaemonState(DaemonStateRow),
    /// An alert record after an event (upsert by id, in arrival order). Carries no ack.
    Alert(AlertRecord),
    /// An acknowledgement request from the command line has been handled, with its outcome.
    AckRequestHandled {
        id: i64,
        handled_at: DateTime<Utc>,
        outcome: String,
    },
}

/// How the writer batches and retries. Defaults in [`WriterSettings::default`].
#[derive(Debug, Clone, PartialEq)]
pub struct WriterSettings {
    /// Commit once this many rows (or ack tokens) are pending. At least 1.
    pub flush_rows: usize,
    /// Commit once the oldest pending item has waited this long, ms.
    pub flush_ms: u64,
    /// Capacity of the queue from the async side to the writer.
    pub queue_capacity: usize,
    /// Capacity of the commit-report channel back to the daemon.
    pub report_capacity: usize,
    /// How long SQLite waits on a lock before a statement fails.
    pub busy_timeout: Duration,
    /// First wait before retrying a failed commit; doubles up to `retry_max`.
    pub retry_initial: Duration,
    pub retry_max: Duration,
}

impl Default for WriterSettings {
    fn default() -> Self {
        Self {
            flush_rows: 200,
            flush_ms: 250,
            queue_capacity: 1024,
            report_capacity: 64,
            busy_timeout: Duration::from_secs(5),
            retry_initial: Duration::from_millis(100),
            retry_max: Duration::from_secs(10),
        }
    }
}

impl WriterSettings {
    /// Caps `flush_rows` at the broker's in-flight window (see the module docs for why).
    pub fn cap_flush_rows(mut self, in_flight_window: usize) -> Self {
        self.flush_rows = self.flush_rows.min(in_flight_window.max(1));
        self
    }
}

/// What one commit stored, with the acks it releases (in the order their items arrived).
#[derive(Debug)]
pub struct CommitReport<A> {
    pub acks: Vec<A>,
    /// Readings newly stored.
    pub inserted: u64,
    /// Readings whose (tank, time, topic) was already stored: redeliveries, left untouched.
    pub duplicates: u64,
    /// Rejection rows stored (including stand-ins for invalid readings).
    pub rejections: u64,
    /// Readings refused by the writer (non-finite number, empty tank id), stored as rejections instead.
    pub invalid_readings: u64,
    /// From the arrival of the batch's oldest item to the end of its commit (what an ack waits).
    pub commit_latency: Duration,
    /// The successful transaction alone.
    pub transaction_time: Duration,
    /// Transaction attempts (1 unless commits failed and were retried).
    pub attempts: u32,
    /// Rows the transaction wrote (readings, rejections, alerts, handled requests): the batch size.
    pub rows: usize,
}

/// Totals over the writer's life, returned when its thread ends.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct WriterSummary {
    pub commits: u64,
    pub inserted: u64,
    pub duplicates: u64,
    pub rejections: u64,
    pub invalid_readings: u64,
    pub failed_attempts: u64,
}

/// The writer thread's join handle.
pub type WriterJoinHandle = JoinHandle<Result<WriterSummary, StorageError>>;

/// What [`spawn_writer`] returns: the handle to queue items, the commit-report receiver, the thread.
pub type SpawnedWriter<A> = (WriterHandle<A>, mpsc::Receiver<CommitReport<A>>, WriterJoinHandle);

enum Message<A> {
    /// Boxed: a reading row with its tonicity is far larger than the other messages.
    Item(Box<WriteItem<A>>),
    Flush(oneshot::Sender<()>),
    Retention {
        now: DateTime<Utc>,
        settings: RetentionSettings,
        reply: oneshot::Sender<Result<RetentionReport, StorageError>>,
    },
}

#[derive(Debug, Default)]
struct Shared {
    abandon: AtomicBool,
    failed_attempts: AtomicU64,
    /// The latest transaction attempt failed (cleared by the next successful commit).
    last_attempt_failed: AtomicBool,
}

/// The async side's end of the writer. Cheap to clone; the writer stops when every clone is dropped.
pub struct WriterHandle<A> {
    queue: mpsc::Sender<Message<A>>,
    shared: Arc<Shared>,
}

impl<A> Clone for WriterHandle<A> {
    fn clone(&self) -> Self {
        Self {
            queue: self.queue.clone(),
            shared: Arc::clone(&self.shared),
        }
    }
}

impl<A: Send + 'static> WriterHandle<A> {
    /// Queues an item, waiting while the queue is full.
    pub async fn send(&self, item: WriteItem<A>) -> Result<(), StorageError> {
        self.queue
            .send(Message::Item(Box::new(item)))
            .await
            .map_err(|_| StorageError::WriterStopped)
    }

    /// Queues an item from synchronous code (not from inside an async runtime).
    pub fn blocking_send(&self, item: WriteItem<A>) -> Result<(), StorageError> {
        self.queue
            .blocking_send(Message::Item(Box::new(item)))
            .map_err(|_| StorageError::WriterStopped)
    }

    /// Commits everything queued before this call; returns once that commit is reported.
    pub async fn flush(&self) -> Result<(), StorageError> {
        let (done, wait) = oneshot::channel();
        self.queue
            .send(Message::Flush(done))
            .await
            .map_err(|_| StorageError::WriterStopped)?;
        wait.await.map_err(|_| StorageError::WriterStopped)
    }

    /// [`flush`](Self::flush) from synchronous code.
    pub fn blocking_flush(&self) -> Result<(), StorageError> {
        let (done, wait) = oneshot::channel();
        self.queue
            .blocking_send(Message::Flush(done))
            .map_err(|_| StorageError::WriterStopped)?;
        wait.blocking_recv().map_err(|_| StorageError::WriterStopped)
    }

    /// Commits what is pending, then folds and deletes old readings on the writer's connection.
    pub async fn run_retention(
        &self,
        now: DateTime<Utc>,
        settings: RetentionSettings,
    ) -> Result<RetentionReport, StorageError> {
        let (reply, wait) = oneshot::channel();
        let message = Message::Retention { now, settings, reply };
        self.queue
            .send(message)
            .await
            .map_err(|_| StorageError::WriterStopped)?;
        wait.await.map_err(|_| StorageError::WriterStopped)?
    }

    /// [`run_retention`](Self::run_retention) from synchronous code.
    pub fn blocking_run_retention(
        &self,
        now: DateTime<Utc>,
        settings: RetentionSettings,
    ) -> Result<RetentionReport, StorageError> {
        let (reply, wait) = oneshot::channel();
        let message = Message::Retention { now, settings, reply };
        self.queue
            .blocking_send(message)
            .map_err(|_| StorageError::WriterStopped)?;
        wait.blocking_recv().map_err(|_| StorageError::WriterStopped)?
    }

    /// Tells a writer stuck retrying a failed commit to give up: that batch is neither stored nor acked
    /// (the broker redelivers it) and the thread ends with [`StorageError::Abandoned`]. For shutdown only.
    pub fn abandon(&self) {
        self.shared.abandon.store(true, Ordering::SeqCst);
    }

    /// Failed transaction attempts so far (each was rolled back and retried).
    pub fn failed_commit_attempts(&self) -> u64 {
        self.shared.failed_attempts.load(Ordering::SeqCst)
    }

    /// Whether the latest transaction attempt failed (the writer is retrying it).
    pub fn last_commit_failed(&self) -> bool {
        self.shared.last_attempt_failed.load(Ordering::SeqCst)
    }
}

/// Opens (and migrates) the database, then starts the writer thread.
///
/// Returns the handle to queue items, the receiver of commit reports, and the thread's join handle.
pub fn spawn_writer<A: Send + 'static>(
    path: &Path,
    settings: WriterSettings,
) -> Result<SpawnedWriter<A>, StorageError> {
    let conn = open_for_writing(path, settings.busy_timeout)?;
    let runtime = tokio::runtime::Builder::new_current_thread()
        .enable_time()
        .build()
        .map_err(StorageError::Spawn)?;
    let (queue, inbox) = mpsc::channel(settings.queue_capacity.max(1));
    let (report_tx, report_rx) = mpsc::channel(settings.report_capacity.max(1));
    let shared = Arc::new(Shared::default());
    let writer = Writer {
        conn,
        runtime,
        inbox,
        reports: report_tx,
        settings,
        shared: Arc::clone(&shared),
        batch: Batch::default(),
        summary: WriterSummary::default(),
        reports_dropped_warned: false,
        deferred: None,
    };
    let join = std::thread::Builder::new()
        .name("halotank-storage-writer".to_owned())
        .spawn(move || writer.run())
        .map_err(StorageError::Spawn)?;
    Ok((WriterHandle { queue, shared }, report_rx, join))
}

/// Items waiting for the next commit.
struct Batch<A> {
    readings: Vec<ReadingRow>,
    rejections: Vec<RejectionRow>,
    state: Option<DaemonStateRow>,
    alerts: Vec<AlertRecord>,
    handled_requests: Vec<(i64, DateTime<Utc>, String)>,
    acks: Vec<A>,
    invalid_readings: u64,
    oldest: Option<Instant>,
}

impl<A> Default for Batch<A> {
    fn default() -> Self {
        Self {
            readings: Vec::new(),
            rejections: Vec::new(),
            state: None,
            alerts: Vec::new(),
            handled_requests: Vec::new(),
            acks: Vec::new(),
            invalid_readings: 0,
            oldest: None,
        }
    }
}

impl<A> Batch<A> {
    fn push(&mut self, item: WriteItem<A>, arrived: Instant) {
        self.oldest.get_or_insert(arrived);
        match item {
            WriteItem::Reading(row, ack) => {
                self.push_reading(row);
                self.acks.push(ack);
            }
            WriteItem::Readings(rows, ack) => {
                rows.into_iter().for_each(|row| self.push_reading(row));
                self.acks.push(ack);
            }
            WriteItem::Rejection(row, ack) => {
                self.rejections.push(row);
                self.acks.push(ack);
            }
            WriteItem::AckOnly(ack) => self.acks.push(ack),
            WriteItem::DaemonState(state) => self.state = Some(state),
            WriteItem::Alert(record) => self.alerts.push(record),
            WriteItem::AckRequestHandled {
                id,
                handled_at,
                outcome,
            } => self.handled_requests.push((id, handled_at, outcome)),
        }
    }

    fn push_reading(&mut self, row: ReadingRow) {
        match reading_problem(&row) {
            None => self.readings.push(row),
            Some(problem) => {
                tracing::warn!(tank = %row.tank_id, topic = %row.source_topic, %problem,
                    "reading cannot be stored; recording a rejection instead");
                self.invalid_readings += 1;
                self.rejections.push(rejection_for_invalid(&row, problem));
            }
        }
    }

    fn rows(&self) -> usize {
        self.readings.len() + self.rejections.len() + self.alerts.len() + self.handled_requests.len()
    }

    fn full(&self, flush_rows: usize) -> bool {
        let limit = flush_rows.max(1);
        self.rows() >= limit || self.acks.len() >= limit
    }
}

#[derive(Debug, Default)]
struct TransactionCounts {
    inserted: u64,
    duplicates: u64,
    rejections: u64,
}

struct Writer<A> {
    conn: Connection,
    runtime: tokio::runtime::Runtime,
    inbox: mpsc::Receiver<Message<A>>,
    reports: mpsc::Sender<CommitReport<A>>,
    settings: WriterSettings,
    shared: Arc<Shared>,
    batch: Batch<A>,
    summary: WriterSummary,
    reports_dropped_warned: bool,
    /// A request taken from the queue while draining it for a group commit, handled next.
    deferred: Option<Message<A>>,
}

impl<A: Send + 'static> Writer<A> {
    fn run(mut self) -> Result<WriterSummary, StorageError> {
        let flush_after = Duration::from_millis(self.settings.flush_ms);
        loop {
            let next = match self.batch.oldest {
                _ if self.deferred.is_some() => self.deferred.take(),
                None => self.runtime.block_on(self.inbox.recv()),
                Some(oldest) => {
                    let deadline = tokio::time::Instant::from_std(oldest + flush_after);
                    // The timer must be created inside the runtime (it registers with its time driver).
                    let inbox = &mut self.inbox;
                    let received = self
                        .runtime
                        .block_on(async move { tokio::time::timeout_at(deadline, inbox.recv()).await });
                    match received {
                        Ok(next) => next,
                        Err(_elapsed) => {
                            self.commit()?;
                            continue;
                        }
                    }
                }
            };
            match next {
                None => {
                    self.commit()?;
                    tracing::debug!(summary = ?self.summary, "storage writer stopped");
                    return Ok(self.summary);
                }
                Some(Message::Item(item)) => {
                    self.batch.push(*item, Instant::now());
                    if self.batch.full(self.settings.flush_rows) {
                        self.take_queued_items();
                        self.commit()?;
                    }
                }
                Some(Message::Flush(done)) => {
                    self.commit()?;
                    // The caller may have stopped waiting; nothing to do then.
                    let _ = done.send(());
                }
                Some(Message::Retention { now, settings, reply }) => {
                    self.commit()?;
                    let result = retention::apply(&mut self.conn, now, &settings);
                    let _ = reply.send(result);
                }
            }
        }
    }

    /// Group commit: moves the items already waiting in the queue into the batch (at most one queue's
    /// worth), so a backlog costs one transaction (one fsync) instead of one per `flush_rows`. A flush or
    /// retention request stops the draining and is handled next, after this commit, in queue order.
    /// Under QoS 1 the queue holds at most the broker's in-flight window, so batches stay that size.
    fn take_queued_items(&mut self) {
        for _ in 0..self.settings.queue_capacity.max(1) {
            match self.inbox.try_recv() {
                Ok(Message::Item(item)) => self.batch.push(*item, Instant::now()),
                Ok(other) => {
                    self.deferred = Some(other);
                    return;
                }
                Err(_) => return,
            }
        }
    }

    /// Commits the pending batch, retrying until it succeeds or the writer is told to abandon it.
    fn commit(&mut self) -> Result<(), StorageError> {
        let Some(oldest) = self.batch.oldest else {
            return Ok(());
        };
        let mut delay = self.settings.retry_initial;
        let mut attempts: u32 = 0;
        let (counts, transaction_time) = loop {
            attempts = attempts.saturating_add(1);
            let started = Instant::now();
            match write_batch(&mut self.conn, &self.batch) {
                Ok(counts) => {
                    self.shared.last_attempt_failed.store(false, Ordering::SeqCst);
                    break (counts, started.elapsed());
                }
                Err(err) => {
                    self.shared.failed_attempts.fetch_add(1, Ordering::SeqCst);
                    self.shared.last_attempt_failed.store(true, Ordering::SeqCst);
                    self.summary.failed_attempts += 1;
                    tracing::warn!(error = %err, attempts, retry_in = ?delay, pending_rows = self.batch.rows(),
                        "storage commit failed; rows kept, acks held, retrying");
                    if self.sleep_unless_abandoned(delay) {
                        let (pending_rows, pending_acks) = (self.batch.rows(), self.batch.acks.len());
                        tracing::error!(
                            pending_rows,
                            pending_acks,
                            "storage writer abandoned an uncommitted batch"
                        );
                        return Err(StorageError::Abandoned {
                            pending_rows,
                            pending_acks,
                        });
                    }
                    delay = (delay * 2).min(self.settings.retry_max);
                }
            }
        };
        let rows = self.batch.rows();
        let batch = std::mem::take(&mut self.batch);
        let report = CommitReport {
            acks: batch.acks,
            inserted: counts.inserted,
            duplicates: counts.duplicates,
            rejections: counts.rejections,
            invalid_readings: batch.invalid_readings,
            commit_latency: oldest.elapsed(),
            transaction_time,
            attempts,
            rows,
        };
        self.summary.commits += 1;
        self.summary.inserted += report.inserted;
        self.summary.duplicates += report.duplicates;
        self.summary.rejections += report.rejections;
        self.summary.invalid_readings += report.invalid_readings;
        if self.runtime.block_on(self.reports.send(report)).is_err() && !self.reports_dropped_warned {
            // The rows are committed; their acks are lost, so the broker redelivers and we ignore duplicates.
            tracing::warn!("commit-report receiver is gone; committed rows will not be acked");
            self.reports_dropped_warned = true;
        }
        Ok(())
    }

    /// Sleeps `delay` in short steps; true if the writer was told to abandon meanwhile.
    fn sleep_unless_abandoned(&self, delay: Duration) -> bool {
        let step = Duration::from_millis(50);
        let until = Instant::now() + delay;
        loop {
            if self.shared.abandon.load(Ordering::SeqCst) {
                return true;
            }
            let now = Instant::now();
            if now >= until {
                return false;
            }
            std::thread::sleep(step.min(until - now));
        }
    }
}

/// Writes one batch in one transaction; on any error the transaction rolls back and nothing is kept.
fn write_batch<A>(conn: &mut Connection, batch: &Batch<A>) -> rusqlite::Result<TransactionCounts> {
    let tx = conn.transaction_with_behavior(TransactionBehavior::Immediate)?;
    let mut counts = TransactionCounts::default();
    for row in &batch.readings {
        if insert_reading(&tx, row)? {
            counts.inserted += 1;
        } else {
            counts.duplicates += 1;
        }
    }
    for row in &batch.rejections {
        insert_rejection(&tx, row)?;
        counts.rejections += 1;
    }
    if let Some(state) = &batch.state {
        upsert_daemon_state(&tx, state)?;
    }
    for record in &batch.alerts {
        upsert_alert(&tx, record)?;
    }
    for (id, handled_at, outcome) in &batch.handled_requests {
        mark_ack_request_handled(&tx, *id, *handled_at, outcome)?;
    }
    tx.commit()?;
    Ok(counts)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A partial batch is committed by the `flush_ms` timer (regression: the timer was once created
    /// outside the writer's runtime, which panicked the writer thread on the first partial batch).
    #[test]
    fn partial_batch_is_committed_by_the_timer() {
        let dir = tempfile::tempdir().unwrap();
        let settings = WriterSettings {
            flush_rows: 100,
            flush_ms: 20,
            ..WriterSettings::default()
        };
        let (writer, mut reports, join) =
            spawn_writer::<u32>(&dir.path().join("t.sqlite3"), settings).unwrap();
        writer.blocking_send(WriteItem::AckOnly(7)).unwrap();
        writer.blocking_send(WriteItem::AckOnly(8)).unwrap();
        let report = reports
            .blocking_recv()
            .expect("writer thread ended without a commit report");
        assert_eq!(report.acks, vec![7, 8]);
        drop(writer);
        join.join().unwrap().unwrap();
    }

    /// With a backlog and group commits, every ack is still reported once, in queue order, and a flush
    /// queued behind items returns only after they are committed.
    #[test]
    fn group_commit_keeps_ack_order_and_flush_after_items() {
        let dir = tempfile::tempdir().unwrap();
        let settings = WriterSettings {
            flush_rows: 3,
            flush_ms: 10_000,
            ..WriterSettings::default()
        };
        let (writer, mut reports, join) =
            spawn_writer::<u32>(&dir.path().join("g.sqlite3"), settings).unwrap();
        for i in 0..50 {
            writer.blocking_send(WriteItem::AckOnly(i)).unwrap();
        }
        writer.blocking_flush().unwrap();
        let mut acks = Vec::new();
        while acks.len() < 50 {
            acks.extend(
                reports
                    .try_recv()
                    .expect("flush returned before its items were reported")
                    .acks,
            );
        }
        assert_eq!(acks, (0..50).collect::<Vec<_>>());
        drop(writer);
        join.join().unwrap().unwrap();
    }
}
