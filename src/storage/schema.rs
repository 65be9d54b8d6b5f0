//! The database schema as an ordered list of migrations, and opening connections with the right settings.
//!
//! `PRAGMA user_version` holds the number of the last migration applied. Migrations are append-only: a later
//! issue (tonicity, alerts, schedules) adds a new step at the end, never edits an applied one. Each step runs
//! in its own transaction together with its `user_version` bump, so a failed step leaves the previous version.
use std::path::Path;
use std::time::Duration;

use rusqlite::{Connection, OpenFlags, TransactionBehavior};

use super::error::StorageError;

/// One schema step: applied once, in order, inside a transaction.
#[derive(Debug, Clone, Copy)]
pub struct Migration {
    /// The `user_version` after this step.
    pub version: u32,
    pub description: &'static str,
    pub sql: &'static str,
}

/// Every migration, in order. Append only.
pub const MIGRATIONS: &[Migration] = &[
    Migration {
        version: 1,
        description: "readings, rejections, hourly summaries, daemon state",
        sql: r#"
CREATE TABLE readings (
    id                      INTEGER PRIMARY KEY,
    tank_id                 TEXT    NOT NULL,
    time_ms                 INTEGER NOT NULL,
    source_topic            TEXT    NOT NULL,
    conductivity_reported   REAL    NOT NULL,
    conductivity_unit       TEXT    NOT NULL,
    conductivity_ms_cm      REAL    NOT NULL,
    temperature_c           REAL    NOT NULL,
    pressure_dbar           REAL    NOT NULL,
    practical_salinity      REAL    NOT NULL,
    salinity_range          TEXT    NOT NULL,
    absolute_salinity_g_kg  REAL    NOT NULL,
    density_kg_m3           REAL    NOT NULL,
    osmotic_coefficient     REAL    NOT NULL,
    osmolality_mosm_kg      REAL    NOT NULL,
    osmotic_pressure_bar    REAL    NOT NULL,
    solute_potential_bar    REAL    NOT NULL,
    water_potential_bar     REAL    NOT NULL,
    freezing_point_c        REAL    NOT NULL,
    UNIQUE (tank_id, time_ms, source_topic)
);
CREATE INDEX readings_by_time ON readings (time_ms);

CREATE TABLE rejections (
    id              INTEGER PRIMARY KEY,
    time_ms         INTEGER NOT NULL,
    topic           TEXT    NOT NULL,
    tank_id         TEXT,
    reason          TEXT    NOT NULL,
    detail          TEXT    NOT NULL,
    payload_prefix  BLOB    NOT NULL
);
CREATE INDEX rejections_by_reason ON rejections (reason, time_ms);
CREATE INDEX rejections_by_time ON rejections (time_ms);

CREATE TABLE readings_hourly (
    tank_id                  TEXT    NOT NULL,
    hour_ms                  INTEGER NOT NULL,
    count                    INTEGER NOT NULL,
    practical_salinity_min   REAL    NOT NULL,
    practical_salinity_mean  REAL    NOT NULL,
    practical_salinity_max   REAL    NOT NULL,
    temperature_c_min        REAL    NOT NULL,
    temperature_c_mean       REAL    NOT NULL,
    temperature_c_max        REAL    NOT NULL,
    osmolality_mosm_kg_min   REAL    NOT NULL,
    osmolality_mosm_kg_mean  REAL    NOT NULL,
    osmolality_mosm_kg_max   REAL    NOT NULL,
    conductivity_ms_cm_min   REAL    NOT NULL,
    conductivity_ms_cm_mean  REAL    NOT NULL,
    conductivity_ms_cm_max   REAL    NOT NULL,
    PRIMARY KEY (tank_id, hour_ms)
);

CREATE TABLE daemon_state (
    id                  INTEGER PRIMARY KEY CHECK (id = 1),
    updated_ms          INTEGER NOT NULL,
    started_ms          INTEGER NOT NULL,
    broker_connected    INTEGER NOT NULL,
    broker_state_since_ms INTEGER NOT NULL,
    reconnect_count     INTEGER NOT NULL,
    accepted_count      INTEGER NOT NULL,
    rejected_count      INTEGER NOT NULL,
    ignored_count       INTEGER NOT NULL
);
"#,
    },
    Migration {
        version: 2,
        description: "acclimation schedules and the steps marked done",
        sql: r#"
CREATE TABLE schedules (
    id               INTEGER PRIMARY KEY,
    tank_id          TEXT    NOT NULL,
    created_at_ms    INTEGER NOT NULL,
    state            TEXT    NOT NULL CHECK (state IN ('active', 'paused', 'aborted', 'completed')),
    state_since_ms   INTEGER NOT NULL,
    paused_total_ms  INTEGER NOT NULL DEFAULT 0,
    plan_json        TEXT    NOT NULL,
    request_json     TEXT    NOT NULL
);
CREATE INDEX schedules_by_tank ON schedules (tank_id, id);
-- At most one open (active or paused) schedule per tank, whoever writes.
CREATE UNIQUE INDEX schedules_one_open_per_tank ON schedules (tank_id) WHERE state IN ('active', 'paused');

CREATE TABLE schedule_steps_done (
    schedule_id      INTEGER NOT NULL REFERENCES schedules (id),
    step_index       INTEGER NOT NULL CHECK (step_index >= 1),
    done_at_ms       INTEGER NOT NULL,
    by               TEXT    NOT NULL,
    paused_total_ms  INTEGER NOT NULL DEFAULT 0,
    UNIQUE (schedule_id, step_index)
);
"#,
    },
    Migration {
        version: 3,
        description: "tonicity with readings, alerts, acknowledgement requests",
        sql: r#"
ALTER TABLE readings ADD COLUMN species TEXT;
ALTER TABLE readings ADD COLUMN osmotic_strategy TEXT;
ALTER TABLE readings ADD COLUMN tonicity TEXT;
ALTER TABLE readings ADD COLUMN plasma_osmolality_mosm_kg REAL;
ALTER TABLE readings ADD COLUMN isosmotic_band_mosm_kg REAL;
ALTER TABLE readings ADD COLUMN gradient_mosm_kg REAL;
ALTER TABLE readings ADD COLUMN water_potential_difference_bar REAL;
ALTER TABLE readings ADD COLUMN isosmotic_practical_salinity REAL;
ALTER TABLE readings ADD COLUMN water_movement TEXT;
ALTER TABLE readings ADD COLUMN tonicity_message TEXT;

CREATE TABLE alerts (
    id                  INTEGER PRIMARY KEY,
    tank                TEXT    NOT NULL,
    kind                TEXT    NOT NULL,
    severity            TEXT    NOT NULL,
    state               TEXT    NOT NULL,
    raised_at_ms        INTEGER NOT NULL,
    observed_at_ms      INTEGER NOT NULL,
    last_notified_at_ms INTEGER,
    notify_count        INTEGER NOT NULL,
    cleared_at_ms       INTEGER,
    ack_by              TEXT,
    ack_at_ms           INTEGER,
    ack_note            TEXT,
    message             TEXT    NOT NULL,
    value               REAL,
    "limit"             REAL,
    record_json         TEXT    NOT NULL
);
CREATE INDEX alerts_by_state ON alerts (state, tank);

CREATE TABLE alert_ack_requests (
    id              INTEGER PRIMARY KEY,
    alert_id        INTEGER NOT NULL,
    by              TEXT    NOT NULL,
    note            TEXT,
    requested_at_ms INTEGER NOT NULL,
    handled_at_ms   INTEGER,
    outcome         TEXT
);
CREATE INDEX alert_ack_requests_pending ON alert_ack_requests (handled_at_ms);
"#,
    },
    Migration {
        version: 4,
        description: "covering index for tank charts",
        // A tank's chart reads its readings in time order. Rows are stored in arrival order (all tanks
        // interleaved), so without this index a week of one tank touches one table page per reading; with
        // it the query reads one contiguous stretch of the index.
        sql: r#"
CREATE INDEX readings_chart ON readings
    (tank_id, time_ms, source_topic, practical_salinity, osmolality_mosm_kg, temperature_c);
"#,
    },
];

/// The schema version this halotank writes and reads.
pub const SCHEMA_VERSION: u32 = MIGRATIONS[MIGRATIONS.len() - 1].version;

/// Opens (creating if needed) the database for writing: WAL, `synchronous=FULL`, busy timeout, migrations.
///
/// Refuses a database whose schema is newer than [`SCHEMA_VERSION`] without changing it.
pub fn open_for_writing(path: &Path, busy_timeout: Duration) -> Result<Connection, StorageError> {
    let open_err = |source| StorageError::Open {
        path: path.to_path_buf(),
        source,
    };
    let mut conn = Connection::open(path).map_err(open_err)?;
    conn.busy_timeout(busy_timeout).map_err(open_err)?;
    // Check before changing anything: a newer database must be left exactly as it is.
    check_not_newer(&conn, path)?;
    let mode: String = conn
        .query_row("PRAGMA journal_mode = WAL", [], |row| row.get(0))
        .map_err(open_err)?;
    if !mode.eq_ignore_ascii_case("wal") {
        return Err(StorageError::JournalMode {
            path: path.to_path_buf(),
            found: mode,
        });
    }
    // FULL, not NORMAL: in WAL mode NORMAL skips the fsync at each commit, so a power cut can roll back
    // the last transactions. The daemon acks the broker right after a commit, and an acked message is
    // never redelivered, so a rolled-back commit would lose readings for good. FULL costs one fsync per
    // commit; the writer batches many rows per commit, so that is a few fsyncs per second at most.
    conn.pragma_update(None, "synchronous", "FULL")
        .map_err(open_err)?;
    conn.pragma_update(None, "foreign_keys", "ON").map_err(open_err)?;
    migrate(&mut conn, path)?;
    Ok(conn)
}

/// Opens an existing database read-only. Readers never block the writer (WAL), nor change the file.
pub fn open_for_reading(path: &Path, busy_timeout: Duration) -> Result<Connection, StorageError> {
    if !path.exists() {
        return Err(StorageError::DatabaseMissing {
            path: path.to_path_buf(),
        });
    }
    let open_err = |source| StorageError::Open {
        path: path.to_path_buf(),
        source,
    };
    let flags = OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX;
    let conn = Connection::open_with_flags(path, flags).map_err(open_err)?;
    conn.busy_timeout(busy_timeout).map_err(open_err)?;
    let found = user_version(&conn).map_err(open_err)?;
    match found {
        0 => Err(StorageError::NotInitialised {
            path: path.to_path_buf(),
        }),
        v if v > SCHEMA_VERSION => Err(StorageError::SchemaTooNew {
            path: path.to_path_buf(),
            found: v,
            known: SCHEMA_VERSION,
        }),
        v if v < SCHEMA_VERSION => Err(StorageError::SchemaTooOld {
            path: path.to_path_buf(),
            found: v,
            known: SCHEMA_VERSION,
        }),
        _ => Ok(conn),
    }
}

/// Applies every migration not yet applied; returns the resulting schema version.
pub fn migrate(conn: &mut Connection, path: &Path) -> Result<u32, StorageError> {
    for step in MIGRATIONS {
        let fail = |source| StorageError::Migration {
            path: path.to_path_buf(),
            version: step.version,
            description: step.description,
            source,
        };
        // IMMEDIATE takes the write lock first, so the version read below cannot go stale.
        let tx = conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(fail)?;
        let current = user_version(&tx).map_err(fail)?;
        if current > SCHEMA_VERSION {
            return Err(StorageError::SchemaTooNew {
                path: path.to_path_buf(),
                found: current,
                known: SCHEMA_VERSION,
            });
        }
        if current >= step.version {
            continue;
        }
        tx.execute_batch(step.sql).map_err(fail)?;
        tx.pragma_update(None, "user_version", step.version)
            .map_err(fail)?;
        tx.commit().map_err(fail)?;
        tracing::info!(
            version = step.version,
            description = step.description,
            "applied schema migration"
        );
    }
    user_version(conn).map_err(|source| StorageError::Open {
        path: path.to_path_buf(),
        source,
    })
}

/// The schema version recorded in the database header.
pub fn user_version(conn: &Connection) -> rusqlite::Result<u32> {
    conn.query_row("PRAGMA user_version", [], |row| row.get(0))
}

fn check_not_newer(conn: &Connection, path: &Path) -> Result<(), StorageError> {
    let found = user_version(conn).map_err(|source| StorageError::Open {
        path: path.to_path_buf(),
        source,
    })?;
    if found > SCHEMA_VERSION {
        return Err(StorageError::SchemaTooNew {
            path: path.to_path_buf(),
            found,
            known: SCHEMA_VERSION,
        });
    }
    Ok(())
}
