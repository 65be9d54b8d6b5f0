//! Schema migrations: from an empty file, re-opening, refusing newer databases, rolling back a failed step.
mod storage_support;

use halotank::storage::schema::{migrate, open_for_reading, open_for_writing, user_version, MIGRATIONS};
use halotank::storage::{Reader, StorageError, SCHEMA_VERSION};
use rusqlite::Connection;
use std::time::Duration;
use storage_support::temp_db;

const TIMEOUT: Duration = Duration::from_secs(5);

fn tables(conn: &Connection) -> Vec<String> {
    let mut stmt = conn
        .prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name")
        .unwrap();
    stmt.query_map([], |r| r.get(0))
        .unwrap()
        .map(|r| r.unwrap())
        .collect()
}

fn schema_sql(conn: &Connection) -> Vec<String> {
    let mut stmt = conn
        .prepare("SELECT sql FROM sqlite_master WHERE sql IS NOT NULL ORDER BY name")
        .unwrap();
    stmt.query_map([], |r| r.get(0))
        .unwrap()
        .map(|r| r.unwrap())
        .collect()
}

#[test]
fn empty_file_is_migrated_to_the_current_version_with_wal_and_full_sync() {
    let db = temp_db();
    let conn = open_for_writing(&db.path, TIMEOUT).unwrap();
    assert_eq!(user_version(&conn).unwrap(), SCHEMA_VERSION);
    assert_eq!(SCHEMA_VERSION, MIGRATIONS.last().unwrap().version);
    assert_eq!(
        tables(&conn),
        [
            "alert_ack_requests",
            "alerts",
            "daemon_state",
            "readings",
            "readings_hourly",
            "rejections",
            "schedule_steps_done",
            "schedules"
        ]
    );
    let mode: String = conn.query_row("PRAGMA journal_mode", [], |r| r.get(0)).unwrap();
    assert_eq!(mode, "wal");
    // 2 = FULL (SQLite documentation of PRAGMA synchronous).
    let sync: i64 = conn.query_row("PRAGMA synchronous", [], |r| r.get(0)).unwrap();
    assert_eq!(sync, 2);
}

#[test]
fn migration_versions_are_strictly_increasing_from_one() {
    for (index, step) in MIGRATIONS.iter().enumerate() {
        assert_eq!(step.version as usize, index + 1, "{}", step.description);
    }
}

#[test]
fn reopening_is_idempotent_and_keeps_data() {
    let db = temp_db();
    let first = open_for_writing(&db.path, TIMEOUT).unwrap();
    first
        .execute(
            "INSERT INTO rejections (time_ms, topic, tank_id, reason, detail, payload_prefix)
             VALUES (1, 't', NULL, 'r', 'd', x'00')",
            [],
        )
        .unwrap();
    let before = schema_sql(&first);
    drop(first);
    let mut second = open_for_writing(&db.path, TIMEOUT).unwrap();
    assert_eq!(schema_sql(&second), before);
    assert_eq!(migrate(&mut second, &db.path).unwrap(), SCHEMA_VERSION);
    let kept: i64 = second
        .query_row("SELECT COUNT(*) FROM rejections", [], |r| r.get(0))
        .unwrap();
    assert_eq!(kept, 1);
}

#[test]
fn newer_database_is_refused_and_left_untouched() {
    let db = temp_db();
    {
        let conn = Connection::open(&db.path).unwrap();
        conn.pragma_update(None, "user_version", SCHEMA_VERSION + 1)
            .unwrap();
    }
    let err = open_for_writing(&db.path, TIMEOUT).unwrap_err();
    assert!(
        matches!(err, StorageError::SchemaTooNew { found, known, .. } if found == SCHEMA_VERSION + 1 && known == SCHEMA_VERSION),
        "{err}"
    );
    assert!(err.to_string().contains("newer"), "{err}");
    let conn = Connection::open(&db.path).unwrap();
    assert_eq!(user_version(&conn).unwrap(), SCHEMA_VERSION + 1);
    assert!(tables(&conn).is_empty());
    let mode: String = conn.query_row("PRAGMA journal_mode", [], |r| r.get(0)).unwrap();
    assert_eq!(mode, "delete", "journal mode must not have been changed");
    drop(conn);
    assert!(matches!(
        Reader::open(&db.path),
        Err(StorageError::SchemaTooNew { .. })
    ));
}

#[test]
fn failed_step_rolls_back_to_the_previous_version() {
    let db = temp_db();
    let mut conn = Connection::open(&db.path).unwrap();
    // A foreign table with a clashing name makes step 1 fail part-way.
    conn.execute_batch("CREATE TABLE readings_hourly (x INTEGER)")
        .unwrap();
    let err = migrate(&mut conn, &db.path).unwrap_err();
    assert!(matches!(err, StorageError::Migration { version: 1, .. }), "{err}");
    assert_eq!(user_version(&conn).unwrap(), 0);
    assert_eq!(
        tables(&conn),
        ["readings_hourly"],
        "tables created before the failure were rolled back"
    );
}

#[test]
fn readers_need_an_existing_current_database() {
    let db = temp_db();
    let err = Reader::open(&db.path).err().unwrap();
    assert!(matches!(err, StorageError::DatabaseMissing { .. }), "{err}");
    assert!(!db.path.exists(), "a reader must not create the file");

    Connection::open(&db.path)
        .unwrap()
        .execute_batch("CREATE TABLE other (x)")
        .unwrap();
    assert!(matches!(
        Reader::open(&db.path),
        Err(StorageError::NotInitialised { .. })
    ));

    let other = db.dir.path().join("old.db");
    Connection::open(&other)
        .unwrap()
        .pragma_update(None, "user_version", 0)
        .unwrap();
    drop(open_for_writing(&other, TIMEOUT).unwrap());
    assert!(open_for_reading(&other, TIMEOUT).is_ok());
}

/// The chart queries read the covering index only (one contiguous stretch per tank), never the table,
/// whose rows lie interleaved in arrival order.
#[test]
fn chart_queries_use_the_covering_index() {
    use halotank::storage::history_series::{BUCKET_QUERY, COUNT_QUERY, RAW_QUERY};
    let db = temp_db();
    let conn = open_for_writing(&db.path, std::time::Duration::from_secs(1)).unwrap();
    for query in [COUNT_QUERY, BUCKET_QUERY, RAW_QUERY] {
        let mut stmt = conn.prepare(&format!("EXPLAIN QUERY PLAN {query}")).unwrap();
        let all: [&dyn rusqlite::ToSql; 4] = [&"smolt-b2", &0i64, &1i64, &60_000i64];
        let params = &all[..stmt.parameter_count()];
        let plan: Vec<String> = stmt
            .query_map(params, |r| r.get::<_, String>(3))
            .unwrap()
            .map(Result::unwrap)
            .collect();
        assert!(
            plan.iter()
                .any(|line| line.contains("USING COVERING INDEX readings_chart")),
            "{query}: {plan:?}"
        );
    }
}
