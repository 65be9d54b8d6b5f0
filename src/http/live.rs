//! The shared in-memory view the daemon keeps up to date and the HTTP server reads: each tank's latest
//! published state, the open alerts, each tank's open schedule, the broker link, the ingest counters and
//! the writer's statistics. `/api/tanks` and `/metrics` are served from it without touching SQLite.
//!
//! Cheap to clone (one `Arc`); setters take the write lock for a few map operations only.
use std::collections::{BTreeMap, HashMap};
use std::sync::{Arc, Mutex, RwLock, RwLockReadGuard, RwLockWriteGuard};
use std::time::Duration;

use chrono::{DateTime, Utc};

use super::histogram::{Histogram, BATCH_SIZE_BOUNDS, COMMIT_LATENCY_BOUNDS};
use crate::alerts::AlertRecord;
use crate::daemon::counters::Counters;
use crate::daemon::tank_state::TankState;
use crate::mqtt::ConnectionState;
use crate::schedule::Schedule;

/// What the storage writer has done, for `/metrics` and `/readyz`.
#[derive(Debug, Clone, PartialEq)]
pub struct WriterStats {
    /// Rows per committed transaction.
    pub batch_size: Histogram,
    /// From the arrival of a batch's oldest item to the end of its commit, seconds.
    pub commit_latency: Histogram,
    /// Whether the latest transaction attempt succeeded (true until one fails).
    pub last_commit_ok: bool,
    /// Transaction attempts that failed and were retried.
    pub failed_attempts: u64,
}

impl Default for WriterStats {
    fn default() -> Self {
        Self {
            batch_size: Histogram::new(BATCH_SIZE_BOUNDS),
            commit_latency: Histogram::new(COMMIT_LATENCY_BOUNDS),
            last_commit_ok: true,
            failed_attempts: 0,
        }
    }
}

/// The data behind a [`LiveView`].
#[derive(Debug, Clone, Default)]
pub struct LiveData {
    /// Each tank's newest committed state, with its reading time.
    pub tanks: HashMap<String, (DateTime<Utc>, TankState)>,
    /// Open alerts by id.
    pub alerts: BTreeMap<u64, AlertRecord>,
    /// Each tank's open (active or paused) schedule.
    pub schedules: HashMap<String, Schedule>,
    /// The broker link; `None` before the daemon reported it.
    pub link: Option<ConnectionState>,
    /// Ingest counts since the daemon started.
    pub counters: Counters,
    pub writer: WriterStats,
}

/// The shared view. Clones share the same data.
#[derive(Debug, Clone, Default)]
pub struct LiveView {
    data: Arc<RwLock<LiveData>>,
    /// HTTP responses by status code (its own lock: counted on every request).
    requests: Arc<Mutex<BTreeMap<u16, u64>>>,
}

impl LiveView {
    pub fn new() -> Self {
        Self::default()
    }

    fn write(&self) -> RwLockWriteGuard<'_, LiveData> {
        self.data.write().unwrap_or_else(|e| e.into_inner())
    }

    /// Read access for the length of `f` (keep it short: setters wait meanwhile).
    pub fn read<T>(&self, f: impl FnOnce(&LiveData) -> T) -> T {
        let guard: RwLockReadGuard<'_, LiveData> = self.data.read().unwrap_or_else(|e| e.into_inner());
        f(&guard)
    }

    /// A tank's state after its reading at `time` was committed; an older state than the one held is
    /// ignored (commits of one tank can complete out of reading order).
    pub fn set_tank_state(&self, time: DateTime<Utc>, state: TankState) {
        let mut data = self.write();
        let newer = data.tanks.get(&state.tank).is_none_or(|(t, _)| time >= *t);
        if newer {
            data.tanks.insert(state.tank.clone(), (time, state));
        }
    }

    /// An alert after an event: kept while open, dropped once cleared.
    pub fn set_alert(&self, record: &AlertRecord) {
        let mut data = self.write();
        if record.state.is_open() {
            data.alerts.insert(record.id.0, record.clone());
        } else {
            data.alerts.remove(&record.id.0);
        }
    }

    /// Replaces every open alert (at start, after the engine restored them).
    pub fn set_open_alerts(&self, records: Vec<AlertRecord>) {
        let alerts = records
            .into_iter()
            .filter(|r| r.state.is_open())
            .map(|r| (r.id.0, r))
            .collect();
        self.write().alerts = alerts;
    }

    /// A schedule after a change: kept as its tank's schedule while open, dropped once closed.
    pub fn set_schedule(&self, schedule: &Schedule) {
        let mut data = self.write();
        if schedule.state.is_open() {
            data.schedules.insert(schedule.tank_id.clone(), schedule.clone());
        } else if data
            .schedules
            .get(&schedule.tank_id)
            .is_some_and(|s| s.id == schedule.id)
        {
            data.schedules.remove(&schedule.tank_id);
        }
    }

    /// Replaces every tank's open schedule (from the database).
    pub fn set_open_schedules(&self, schedules: Vec<Schedule>) {
        let open = schedules
            .into_iter()
            .filter(|s| s.state.is_open())
            .map(|s| (s.tank_id.clone(), s))
            .collect();
        self.write().schedules = open;
    }

    /// The broker link after a change.
    pub fn set_link(&self, state: &ConnectionState) {
        self.write().link = Some(state.clone());
    }

    /// The ingest counters (copied every state tick).
    pub fn set_counters(&self, counters: &Counters) {
        self.write().counters = counters.clone();
    }

    /// One committed transaction: its rows and latency.
    pub fn record_commit(&self, rows: usize, latency: Duration) {
        let mut data = self.write();
        data.writer.batch_size.observe(rows as f64);
        data.writer.commit_latency.observe_duration(latency);
        data.writer.last_commit_ok = true;
    }

    /// The writer's health: whether its latest attempt succeeded, and failed attempts so far.
    pub fn set_writer_health(&self, last_commit_ok: bool, failed_attempts: u64) {
        let mut data = self.write();
        data.writer.last_commit_ok = last_commit_ok;
        data.writer.failed_attempts = failed_attempts;
    }

    /// Counts one HTTP response.
    pub fn count_response(&self, status: u16) {
        let mut requests = self.requests.lock().unwrap_or_else(|e| e.into_inner());
        *requests.entry(status).or_default() += 1;
    }

    /// HTTP responses by status code so far.
    pub fn responses(&self) -> BTreeMap<u16, u64> {
        self.requests.lock().unwrap_or_else(|e| e.into_inner()).clone()
    }
}
