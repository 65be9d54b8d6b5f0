//! Stored acclimation schedules: insert, list, get, pause, resume, abort and mark a step done.
//!
//! Every change runs in an IMMEDIATE transaction that reads the schedule, applies the pure transition
//! ([`crate::schedule::Schedule`]) and writes the result, so two processes (the CLI and the daemon) cannot
//! interleave a change; `UNIQUE (schedule_id, step_index)` and the one-open-schedule-per-tank index hold
//! even against a writer that skips the checks.
use std::path::{Path, PathBuf};
use std::time::Duration as StdDuration;

use chrono::{DateTime, Duration, Utc};
use rusqlite::{params, Connection, ErrorCode, OptionalExtension, TransactionBehavior};

use super::codec::{ms_to_time, time_to_ms};
use super::error::StorageError;
use super::schedule_error::ScheduleStoreError;
use super::schema::open_for_writing;
use crate::planner::PlanRequest;
use crate::schedule::{Schedule, ScheduleError, SchedulePlan, ScheduleState, StepDone};

/// How long a schedule change waits for the daemon's writer to release the database.
pub const SCHEDULE_BUSY_TIMEOUT: StdDuration = StdDuration::from_secs(10);

const SCHEDULE_COLUMNS: &str =
    "id, tank_id, created_at_ms, state, state_since_ms, paused_total_ms, plan_json";

/// A read-write connection for schedules.
pub struct ScheduleStore {
    conn: Connection,
    path: PathBuf,
}

/// One `schedules` row before its steps are attached.
struct ScheduleRow {
    id: i64,
    tank_id: String,
    created_at_ms: i64,
    state: String,
    state_since_ms: i64,
    paused_total_ms: i64,
    plan_json: String,
}

fn duration_from_ms(ms: i64, what: &str) -> Result<Duration, StorageError> {
    Duration::try_milliseconds(ms).ok_or_else(|| StorageError::CorruptRow {
        what: format!("{what} {ms} ms is out of range"),
    })
}

fn state_from_row(name: &str, since_ms: i64) -> Result<ScheduleState, StorageError> {
    let since = ms_to_time(since_ms)?;
    Ok(match name {
        "active" => ScheduleState::Active,
        "paused" => ScheduleState::Paused { since },
        "aborted" => ScheduleState::Aborted { at: since },
        "completed" => ScheduleState::Completed { at: since },
        other => {
            return Err(StorageError::CorruptRow {
                what: format!("schedule state `{other}`"),
            })
        }
    })
}

/// The stored `state_since_ms`: the pause, abort or completion time, or `now` for an active schedule.
fn state_since(state: ScheduleState, now: DateTime<Utc>) -> DateTime<Utc> {
    match state {
        ScheduleState::Active => now,
        ScheduleState::Paused { since } => since,
        ScheduleState::Aborted { at } | ScheduleState::Completed { at } => at,
    }
}

fn load_row(conn: &Connection, id: i64) -> Result<Option<ScheduleRow>, StorageError> {
    conn.query_row(
        &format!("SELECT {SCHEDULE_COLUMNS} FROM schedules WHERE id = ?1"),
        params![id],
        row_from_sql,
    )
    .optional()
    .map_err(StorageError::sqlite("read a schedule"))
}

fn row_from_sql(row: &rusqlite::Row<'_>) -> rusqlite::Result<ScheduleRow> {
    Ok(ScheduleRow {
        id: row.get(0)?,
        tank_id: row.get(1)?,
        created_at_ms: row.get(2)?,
        state: row.get(3)?,
        state_since_ms: row.get(4)?,
        paused_total_ms: row.get(5)?,
        plan_json: row.get(6)?,
    })
}

/// Attaches the steps done and parses the plan.
fn assemble(conn: &Connection, row: ScheduleRow) -> Result<Schedule, ScheduleStoreError> {
    let plan: SchedulePlan =
        serde_json::from_str(&row.plan_json).map_err(|source| ScheduleStoreError::Json {
            what: "stored plan is not readable",
            source,
        })?;
    let what = "read a schedule's steps";
    let mut stmt = conn
        .prepare_cached(
            "SELECT step_index, done_at_ms, by, paused_total_ms FROM schedule_steps_done \
             WHERE schedule_id = ?1 ORDER BY step_index",
        )
        .map_err(StorageError::sqlite(what))?;
    let raw = stmt
        .query_map(params![row.id], |r| {
            Ok((
                r.get::<_, i64>(0)?,
                r.get::<_, i64>(1)?,
                r.get::<_, String>(2)?,
                r.get::<_, i64>(3)?,
            ))
        })
        .map_err(StorageError::sqlite(what))?
        .collect::<Result<Vec<_>, _>>()
        .map_err(StorageError::sqlite(what))?;
    let mut steps_done = Vec::with_capacity(raw.len());
    for (position, (index, done_ms, by, paused_ms)) in raw.into_iter().enumerate() {
        if index != position as i64 + 1 || index as usize > plan.steps.len() {
            return Err(StorageError::CorruptRow {
                what: format!("schedule {} has step {index} done out of sequence", row.id),
            }
            .into());
        }
        steps_done.push(StepDone {
            step: index as usize,
            done_at: ms_to_time(done_ms)?,
            by,
            paused_total_before: duration_from_ms(paused_ms, "paused total")?,
        });
    }
    Ok(Schedule {
        id: row.id,
        tank_id: row.tank_id,
        created_at: ms_to_time(row.created_at_ms)?,
        plan,
        state: state_from_row(&row.state, row.state_since_ms)?,
        steps_done,
        paused_total: duration_from_ms(row.paused_total_ms, "paused total")?,
    })
}

/// Every schedule (of one tank, if given), oldest first, on any connection (the reader's too).
pub(super) fn list_on(conn: &Connection, tank_id: Option<&str>) -> Result<Vec<Schedule>, ScheduleStoreError> {
    let what = "list schedules";
    let mut stmt = conn
        .prepare_cached(&format!(
            "SELECT {SCHEDULE_COLUMNS} FROM schedules WHERE ?1 IS NULL OR tank_id = ?1 ORDER BY id"
        ))
        .map_err(StorageError::sqlite(what))?;
    let rows = stmt
        .query_map(params![tank_id], row_from_sql)
        .map_err(StorageError::sqlite(what))?
        .collect::<Result<Vec<_>, _>>()
        .map_err(StorageError::sqlite(what))?;
    rows.into_iter().map(|row| assemble(conn, row)).collect()
}

pub(super) fn get_in(conn: &Connection, id: i64) -> Result<Schedule, ScheduleStoreError> {
    let row = load_row(conn, id)?.ok_or(ScheduleStoreError::NotFound { id })?;
    assemble(conn, row)
}

/// The tank's open (active or paused) schedule id and state, if any.
fn open_on_tank(conn: &Connection, tank_id: &str) -> Result<Option<(i64, String)>, StorageError> {
    conn.query_row(
        "SELECT id, state FROM schedules WHERE tank_id = ?1 AND state IN ('active', 'paused') \
         ORDER BY id LIMIT 1",
        params![tank_id],
        |r| Ok((r.get(0)?, r.get(1)?)),
    )
    .optional()
    .map_err(StorageError::sqlite("look for a tank's open schedule"))
}

fn is_constraint(err: &rusqlite::Error) -> bool {
    matches!(err, rusqlite::Error::SqliteFailure(e, _) if e.code == ErrorCode::ConstraintViolation)
}

impl ScheduleStore {
    /// Opens (creating and migrating if needed) the database for schedule changes.
    pub fn open(path: &Path) -> Result<Self, ScheduleStoreError> {
        let conn = open_for_writing(path, SCHEDULE_BUSY_TIMEOUT)?;
        Ok(Self {
            conn,
            path: path.to_path_buf(),
        })
    }

    /// Opens an existing database for schedule changes (migrating it if needed); a missing file is an
    /// error rather than a new empty database.
    pub fn open_existing(path: &Path) -> Result<Self, ScheduleStoreError> {
        if !path.exists() {
            return Err(StorageError::DatabaseMissing {
                path: path.to_path_buf(),
            }
            .into());
        }
        Self::open(path)
    }

    /// The database file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Stores a new active schedule for `tank_id`; refused if the tank already has an open one.
    pub fn insert(
        &mut self,
        tank_id: &str,
        created_at: DateTime<Utc>,
        plan: &SchedulePlan,
        request: &PlanRequest,
    ) -> Result<Schedule, ScheduleStoreError> {
        let json = |what, source| ScheduleStoreError::Json { what, source };
        let plan_json = serde_json::to_string(plan).map_err(|e| json("plan cannot be written", e))?;
        let request_json =
            serde_json::to_string(request).map_err(|e| json("request cannot be written", e))?;
        let what = "store a schedule";
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(StorageError::sqlite(what))?;
        let busy = |(existing_id, state)| ScheduleStoreError::TankBusy {
            tank_id: tank_id.to_owned(),
            existing_id,
            state,
        };
        if let Some(existing) = open_on_tank(&tx, tank_id)? {
            return Err(busy(existing));
        }
        let inserted = tx.execute(
            "INSERT INTO schedules (tank_id, created_at_ms, state, state_since_ms, paused_total_ms, \
             plan_json, request_json) VALUES (?1, ?2, 'active', ?2, 0, ?3, ?4)",
            params![tank_id, time_to_ms(created_at), plan_json, request_json],
        );
        match inserted {
            Ok(_) => {}
            Err(e) if is_constraint(&e) => {
                let existing = open_on_tank(&tx, tank_id)?.unwrap_or((0, "open".to_owned()));
                return Err(busy(existing));
            }
            Err(e) => return Err(StorageError::sqlite(what)(e).into()),
        }
        let id = tx.last_insert_rowid();
        let schedule = get_in(&tx, id)?;
        tx.commit().map_err(StorageError::sqlite(what))?;
        Ok(schedule)
    }

    /// One schedule with its steps done.
    pub fn get(&self, id: i64) -> Result<Schedule, ScheduleStoreError> {
        get_in(&self.conn, id)
    }

    /// The stored planning request of a schedule, as JSON.
    pub fn request_json(&self, id: i64) -> Result<String, ScheduleStoreError> {
        self.conn
            .query_row(
                "SELECT request_json FROM schedules WHERE id = ?1",
                params![id],
                |r| r.get(0),
            )
            .optional()
            .map_err(StorageError::sqlite("read a schedule's request"))?
            .ok_or(ScheduleStoreError::NotFound { id })
    }

    /// Every schedule (of one tank, if given), oldest first.
    pub fn list(&self, tank_id: Option<&str>) -> Result<Vec<Schedule>, ScheduleStoreError> {
        list_on(&self.conn, tank_id)
    }

    /// Every open (active or paused) schedule, one per tank at most; what the daemon follows.
    pub fn open_schedules(&self) -> Result<Vec<Schedule>, ScheduleStoreError> {
        Ok(self
            .list(None)?
            .into_iter()
            .filter(|s| s.state.is_open())
            .collect())
    }

    /// Reads, changes and writes one schedule in one transaction; a refused change writes nothing.
    fn change<T>(
        &mut self,
        id: i64,
        now: DateTime<Utc>,
        apply: impl FnOnce(&mut Schedule) -> Result<T, ScheduleError>,
    ) -> Result<(Schedule, T), ScheduleStoreError> {
        let what = "change a schedule";
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(StorageError::sqlite(what))?;
        let mut schedule = get_in(&tx, id)?;
        let (state_before, paused_before) = (schedule.state, schedule.paused_total);
        let done_before = schedule.steps_done.len();
        let out = apply(&mut schedule)?;
        for done in &schedule.steps_done[done_before..] {
            tx.execute(
                "INSERT INTO schedule_steps_done (schedule_id, step_index, done_at_ms, by, paused_total_ms) \
                 VALUES (?1, ?2, ?3, ?4, ?5)",
                params![
                    id,
                    done.step as i64,
                    time_to_ms(done.done_at),
                    done.by,
                    done.paused_total_before.num_milliseconds()
                ],
            )
            .map_err(StorageError::sqlite("mark a step done"))?;
        }
        if schedule.state != state_before || schedule.paused_total != paused_before {
            tx.execute(
                "UPDATE schedules SET state = ?2, state_since_ms = ?3, paused_total_ms = ?4 WHERE id = ?1",
                params![
                    id,
                    schedule.state.name(),
                    time_to_ms(state_since(schedule.state, now)),
                    schedule.paused_total.num_milliseconds()
                ],
            )
            .map_err(StorageError::sqlite(what))?;
        }
        tx.commit().map_err(StorageError::sqlite(what))?;
        Ok((schedule, out))
    }

    /// Pauses an active schedule.
    pub fn pause(&mut self, id: i64, now: DateTime<Utc>) -> Result<Schedule, ScheduleStoreError> {
        Ok(self.change(id, now, |s| s.pause(now))?.0)
    }

    /// Resumes a paused schedule.
    pub fn resume(&mut self, id: i64, now: DateTime<Utc>) -> Result<Schedule, ScheduleStoreError> {
        Ok(self.change(id, now, |s| s.resume(now))?.0)
    }

    /// Aborts an active or paused schedule.
    pub fn abort(&mut self, id: i64, now: DateTime<Utc>) -> Result<Schedule, ScheduleStoreError> {
        Ok(self.change(id, now, |s| s.abort(now))?.0)
    }

    /// Marks a step done (the next one if `step` is `None`); refuses repeats and out-of-order steps.
    /// Returns the schedule after the change and the step marked.
    pub fn mark_step_done(
        &mut self,
        id: i64,
        step: Option<usize>,
        now: DateTime<Utc>,
        by: &str,
    ) -> Result<(Schedule, usize), ScheduleStoreError> {
        self.change(id, now, |s| s.mark_step_done(step, now, by))
    }
}
