//! The batching writer: exactly-once storage of redelivered readings, batching by rows and by time, acks
//! reported only after their commit, retry without loss when a commit fails.
mod storage_support;

use std::time::{Duration, Instant};

use halotank::storage::insert::INVALID_READING_REASON;
use halotank::storage::{
    spawn_writer, CommitReport, Reader, StorageError, WriteItem, WriterSettings, PAYLOAD_PREFIX_MAX_BYTES,
};
use rusqlite::Connection;
use storage_support::{at, daemon_state, reading, rejection, temp_db};
use tokio::sync::mpsc::error::TryRecvError;

/// Settings whose only trigger is the row count (the timer is an hour away).
fn rows_only(flush_rows: usize) -> WriterSettings {
    WriterSettings {
        flush_rows,
        flush_ms: 3_600_000,
        ..WriterSettings::default()
    }
}

fn acks<A: Clone>(report: &CommitReport<A>) -> Vec<A> {
    report.acks.clone()
}

#[test]
fn redelivered_reading_is_stored_once() {
    let db = temp_db();
    let (writer, mut reports, join) = spawn_writer::<u32>(&db.path, rows_only(100)).unwrap();
    let row = reading("smolt-b2", at(2024, 5, 14, 6, 0, 0));

    writer.blocking_send(WriteItem::Reading(row.clone(), 1)).unwrap();
    writer.blocking_flush().unwrap();
    let first = reports.blocking_recv().unwrap();
    assert_eq!((acks(&first), first.inserted, first.duplicates), (vec![1], 1, 0));

    // The broker redelivers the same message (same tank, time and topic), with different values even.
    let mut again = row.clone();
    again.temperature_c = 99.0;
    writer.blocking_send(WriteItem::Reading(again, 2)).unwrap();
    writer.blocking_flush().unwrap();
    let second = reports.blocking_recv().unwrap();
    assert_eq!(
        (acks(&second), second.inserted, second.duplicates),
        (vec![2], 0, 1)
    );

    let stored = Reader::open(&db.path)
        .unwrap()
        .history("smolt-b2", None, None)
        .unwrap();
    assert_eq!(stored, vec![row], "one row, with the first delivery's values");

    drop(writer);
    let summary = join.join().unwrap().unwrap();
    assert_eq!((summary.commits, summary.inserted, summary.duplicates), (2, 1, 1));
}

#[test]
fn same_key_twice_in_one_batch_counts_one_duplicate() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<u32>(&db.path, rows_only(2)).unwrap();
    let row = reading("smolt-b2", at(2024, 5, 14, 6, 0, 0));
    writer.blocking_send(WriteItem::Reading(row.clone(), 1)).unwrap();
    writer.blocking_send(WriteItem::Reading(row, 2)).unwrap();
    let report = reports.blocking_recv().unwrap();
    assert_eq!(
        (acks(&report), report.inserted, report.duplicates),
        (vec![1, 2], 1, 1)
    );
}

#[test]
fn batches_commit_when_flush_rows_is_reached_and_at_shutdown() {
    let db = temp_db();
    let (writer, mut reports, join) = spawn_writer::<u32>(&db.path, rows_only(3)).unwrap();
    let send = |i: u32| {
        let row = reading("parr-a1", at(2024, 5, 14, 6, i, 0));
        writer.blocking_send(WriteItem::Reading(row, i)).unwrap();
    };
    // Rows are sent a batch at a time: with a backlog the writer's group commit would (rightly) take
    // every queued row into one transaction.
    (0..3).for_each(send);
    let first = reports.blocking_recv().unwrap();
    (3..6).for_each(send);
    let second = reports.blocking_recv().unwrap();
    send(6);
    assert_eq!((acks(&first), first.inserted), (vec![0, 1, 2], 3));
    assert_eq!((acks(&second), second.inserted), (vec![3, 4, 5], 3));
    assert_eq!(
        reports.try_recv().err(),
        Some(TryRecvError::Empty),
        "the 7th row waits for more"
    );

    drop(writer); // channel closed: the writer commits what is left and stops
    let last = reports.blocking_recv().unwrap();
    assert_eq!((acks(&last), last.inserted), (vec![6], 1));
    assert!(reports.blocking_recv().is_none());
    assert_eq!(join.join().unwrap().unwrap().commits, 3);
}

#[test]
fn a_pending_batch_commits_after_flush_ms_without_more_items() {
    let db = temp_db();
    let settings = WriterSettings {
        flush_rows: 1000,
        flush_ms: 20,
        ..WriterSettings::default()
    };
    let (writer, mut reports, join) = spawn_writer::<u32>(&db.path, settings).unwrap();
    writer
        .blocking_send(WriteItem::Reading(
            reading("parr-a1", at(2024, 5, 14, 6, 0, 0)),
            7,
        ))
        .unwrap();
    // Far below flush_rows and the handle stays alive: only the timer can produce this report.
    let Some(report) = reports.blocking_recv() else {
        panic!("{:?}", join.join())
    };
    assert_eq!((acks(&report), report.inserted, report.attempts), (vec![7], 1, 1));
    assert!(report.commit_latency >= report.transaction_time);
    drop(writer);
}

#[test]
fn acks_are_reported_only_after_their_rows_are_committed() {
    let db = temp_db();
    let (writer, mut reports, join) = spawn_writer::<(String, i64)>(&db.path, rows_only(4)).unwrap();
    let tanks = ["smolt-b2", "oyster-d1"];
    let mut sent = Vec::new();
    for i in 0..10u32 {
        let tank = tanks[i as usize % 2];
        let row = reading(tank, at(2024, 5, 14, 7, i, 0));
        let ack = (tank.to_owned(), row.time.timestamp_millis());
        sent.push(ack.clone());
        writer.blocking_send(WriteItem::Reading(row, ack)).unwrap();
    }
    drop(writer);
    let reader = Reader::open(&db.path).unwrap();
    let mut released = Vec::new();
    while let Some(report) = reports.blocking_recv() {
        // A separate read-only connection already sees every row this report acks.
        for (tank, time_ms) in &report.acks {
            let rows = reader.history(tank, None, None).unwrap();
            assert!(
                rows.iter().any(|r| r.time.timestamp_millis() == *time_ms),
                "{tank} {time_ms} not visible"
            );
        }
        released.extend(report.acks);
    }
    assert_eq!(released, sent, "every ack exactly once, in arrival order");
    join.join().unwrap().unwrap();
}

#[test]
fn failed_commits_are_retried_without_dropping_rows_or_releasing_acks() {
    let db = temp_db();
    let settings = WriterSettings {
        busy_timeout: Duration::from_millis(1),
        retry_initial: Duration::from_millis(5),
        retry_max: Duration::from_millis(20),
        ..rows_only(3)
    };
    let (writer, mut reports, join) = spawn_writer::<u32>(&db.path, settings).unwrap();
    // Another connection holds the write lock, so the writer's transactions fail with SQLITE_BUSY.
    let blocker = Connection::open(&db.path).unwrap();
    blocker.execute_batch("BEGIN IMMEDIATE").unwrap();
    for i in 0..3u32 {
        writer
            .blocking_send(WriteItem::Reading(
                reading("holding-c1", at(2024, 5, 14, 8, i, 0)),
                i,
            ))
            .unwrap();
    }
    let waited = Instant::now();
    while writer.failed_commit_attempts() < 2 {
        assert!(
            waited.elapsed() < Duration::from_secs(30),
            "the writer never tried to commit"
        );
        std::thread::sleep(Duration::from_millis(2));
    }
    assert_eq!(
        reports.try_recv().err(),
        Some(TryRecvError::Empty),
        "no ack may leave before the commit"
    );

    blocker.execute_batch("ROLLBACK").unwrap();
    let report = reports.blocking_recv().unwrap();
    assert_eq!((acks(&report), report.inserted), (vec![0, 1, 2], 3));
    assert!(report.attempts >= 3, "attempts {}", report.attempts);
    let stored = Reader::open(&db.path)
        .unwrap()
        .history("holding-c1", None, None)
        .unwrap();
    assert_eq!(stored.len(), 3);
    drop(writer);
    assert!(join.join().unwrap().unwrap().failed_attempts >= 2);
}

#[test]
fn abandoning_a_stuck_batch_stores_and_acks_nothing() {
    let db = temp_db();
    let settings = WriterSettings {
        busy_timeout: Duration::from_millis(1),
        retry_initial: Duration::from_millis(5),
        ..rows_only(2)
    };
    let (writer, mut reports, join) = spawn_writer::<u32>(&db.path, settings).unwrap();
    let blocker = Connection::open(&db.path).unwrap();
    blocker.execute_batch("BEGIN IMMEDIATE").unwrap();
    writer
        .blocking_send(WriteItem::Reading(
            reading("holding-c1", at(2024, 5, 14, 8, 0, 0)),
            0,
        ))
        .unwrap();
    writer
        .blocking_send(WriteItem::Reading(
            reading("holding-c1", at(2024, 5, 14, 8, 1, 0)),
            1,
        ))
        .unwrap();
    let waited = Instant::now();
    while writer.failed_commit_attempts() < 1 {
        assert!(
            waited.elapsed() < Duration::from_secs(30),
            "the writer never tried to commit"
        );
        std::thread::sleep(Duration::from_millis(2));
    }
    writer.abandon();
    let result = join.join().unwrap();
    assert!(
        matches!(
            result,
            Err(StorageError::Abandoned {
                pending_rows: 2,
                pending_acks: 2
            })
        ),
        "{result:?}"
    );
    assert!(
        reports.blocking_recv().is_none(),
        "no report for an abandoned batch"
    );
    blocker.execute_batch("ROLLBACK").unwrap();
    assert!(Reader::open(&db.path)
        .unwrap()
        .history("holding-c1", None, None)
        .unwrap()
        .is_empty());
    assert!(matches!(
        writer.blocking_flush(),
        Err(StorageError::WriterStopped)
    ));
}

#[test]
fn rejections_keep_at_most_256_payload_bytes() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<u32>(&db.path, rows_only(100)).unwrap();
    let long: Vec<u8> = (0..300u32).map(|i| (i % 251) as u8).collect();
    writer
        .blocking_send(WriteItem::Rejection(
            rejection(at(2024, 5, 14, 9, 0, 0), "payload_not_senml", &long),
            1,
        ))
        .unwrap();
    writer
        .blocking_send(WriteItem::Rejection(
            rejection(at(2024, 5, 14, 9, 1, 0), "payload_not_senml", b"{"),
            2,
        ))
        .unwrap();
    writer.blocking_flush().unwrap();
    let report = reports.blocking_recv().unwrap();
    assert_eq!(
        (acks(&report), report.rejections, report.inserted),
        (vec![1, 2], 2, 0)
    );

    let conn = Connection::open(&db.path).unwrap();
    let stored: Vec<u8> = conn
        .query_row(
            "SELECT payload_prefix FROM rejections WHERE time_ms = ?1",
            [at(2024, 5, 14, 9, 0, 0).timestamp_millis()],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(stored.len(), PAYLOAD_PREFIX_MAX_BYTES);
    assert_eq!(stored[..], long[..256]);
    let counts = Reader::open(&db.path)
        .unwrap()
        .rejection_counts_by_reason()
        .unwrap();
    assert_eq!(counts.len(), 1);
    assert_eq!(
        (counts[0].reason.as_str(), counts[0].count),
        ("payload_not_senml", 2)
    );
    assert_eq!(counts[0].last_time, at(2024, 5, 14, 9, 1, 0));
}

#[test]
fn a_reading_with_a_non_finite_number_becomes_a_counted_rejection() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<u32>(&db.path, rows_only(100)).unwrap();
    let good = reading("smolt-b2", at(2024, 5, 14, 10, 0, 0));
    let mut bad = reading("smolt-b2", at(2024, 5, 14, 10, 1, 0));
    bad.derived.density_kg_m3 = f64::NAN;
    writer
        .blocking_send(WriteItem::Readings(vec![good.clone(), bad], 5))
        .unwrap();
    writer.blocking_flush().unwrap();
    let report = reports.blocking_recv().unwrap();
    assert_eq!(
        (
            acks(&report),
            report.inserted,
            report.invalid_readings,
            report.rejections
        ),
        (vec![5], 1, 1, 1),
        "the good reading of the same message is kept"
    );
    let reader = Reader::open(&db.path).unwrap();
    assert_eq!(reader.history("smolt-b2", None, None).unwrap(), vec![good]);
    let counts = reader.rejection_counts_by_reason().unwrap();
    assert_eq!(
        (counts[0].reason.as_str(), counts[0].count),
        (INVALID_READING_REASON, 1)
    );
}

#[test]
fn ack_only_items_and_several_readings_per_message_keep_ack_order() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<&'static str>(&db.path, rows_only(100)).unwrap();
    let two = vec![
        reading("parr-a1", at(2024, 5, 14, 11, 0, 0)),
        reading("parr-a1", at(2024, 5, 14, 11, 0, 1)),
    ];
    writer.blocking_send(WriteItem::Readings(two, "m1")).unwrap();
    writer.blocking_send(WriteItem::AckOnly("m2-ignored")).unwrap();
    writer
        .blocking_send(WriteItem::Rejection(
            rejection(at(2024, 5, 14, 11, 0, 2), "unknown_tank", b"x"),
            "m3",
        ))
        .unwrap();
    writer.blocking_flush().unwrap();
    let report = reports.blocking_recv().unwrap();
    assert_eq!(acks(&report), ["m1", "m2-ignored", "m3"]);
    assert_eq!((report.inserted, report.rejections), (2, 1));
}

#[test]
fn ack_only_items_count_towards_flush_rows() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<u32>(&db.path, rows_only(2)).unwrap();
    writer.blocking_send(WriteItem::AckOnly(1)).unwrap();
    writer.blocking_send(WriteItem::AckOnly(2)).unwrap();
    let report = reports.blocking_recv().unwrap();
    assert_eq!((acks(&report), report.inserted), (vec![1, 2], 0));
}

#[test]
fn daemon_state_keeps_the_last_written_state() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<u32>(&db.path, rows_only(100)).unwrap();
    let older = daemon_state(at(2024, 5, 14, 12, 0, 0), true, at(2024, 5, 14, 1, 0, 0));
    let newer = daemon_state(at(2024, 5, 14, 12, 0, 5), false, at(2024, 5, 14, 12, 0, 3));
    writer.blocking_send(WriteItem::DaemonState(older)).unwrap();
    writer
        .blocking_send(WriteItem::DaemonState(newer.clone()))
        .unwrap();
    writer.blocking_flush().unwrap();
    let report = reports.blocking_recv().unwrap();
    assert!(report.acks.is_empty());
    assert_eq!(
        Reader::open(&db.path).unwrap().daemon_state().unwrap(),
        Some(newer.clone())
    );

    let later = daemon_state(at(2024, 5, 14, 12, 0, 10), true, at(2024, 5, 14, 12, 0, 9));
    writer
        .blocking_send(WriteItem::DaemonState(later.clone()))
        .unwrap();
    writer.blocking_flush().unwrap();
    assert_eq!(
        Reader::open(&db.path).unwrap().daemon_state().unwrap(),
        Some(later)
    );
}

#[test]
fn flushing_with_nothing_pending_sends_no_report() {
    let db = temp_db();
    let (writer, mut reports, _join) = spawn_writer::<u32>(&db.path, rows_only(100)).unwrap();
    writer.blocking_flush().unwrap();
    assert_eq!(reports.try_recv().err(), Some(TryRecvError::Empty));
}

#[test]
fn flush_rows_is_capped_at_the_in_flight_window() {
    let capped = WriterSettings {
        flush_rows: 500,
        ..WriterSettings::default()
    }
    .cap_flush_rows(10);
    assert_eq!(capped.flush_rows, 10);
    let kept = WriterSettings {
        flush_rows: 5,
        ..WriterSettings::default()
    }
    .cap_flush_rows(10);
    assert_eq!(kept.flush_rows, 5);
    assert_eq!(WriterSettings::default().cap_flush_rows(0).flush_rows, 1);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn async_side_sends_and_awaits_reports() {
    let db = temp_db();
    let (writer, mut reports, join) = spawn_writer::<u32>(&db.path, rows_only(2)).unwrap();
    writer
        .send(WriteItem::Reading(
            reading("smolt-b2", at(2024, 5, 14, 13, 0, 0)),
            1,
        ))
        .await
        .unwrap();
    writer
        .send(WriteItem::Reading(
            reading("smolt-b2", at(2024, 5, 14, 13, 0, 1)),
            2,
        ))
        .await
        .unwrap();
    let report = reports.recv().await.unwrap();
    assert_eq!(acks(&report), vec![1, 2]);
    writer
        .send(WriteItem::Reading(
            reading("smolt-b2", at(2024, 5, 14, 13, 0, 2)),
            3,
        ))
        .await
        .unwrap();
    writer.flush().await.unwrap();
    assert_eq!(acks(&reports.recv().await.unwrap()), vec![3]);
    drop(writer);
    let summary = tokio::task::spawn_blocking(move || join.join().unwrap())
        .await
        .unwrap()
        .unwrap();
    assert_eq!(summary.inserted, 3);
}
