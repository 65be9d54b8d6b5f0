//! Alert records through the one writer: upsert by id, open/closed filters, highest id, and acknowledgement
//! requests; a restored engine continues above the stored ids and does not raise a restored alert again.
mod storage_support;

use chrono::TimeDelta;
use halotank::alerts::{
    AlertEngine, AlertId, AlertKind, AlertLimits, AlertRecord, AlertSettings, AlertState,
};
use halotank::storage::alerts::{insert_ack_request, pending_ack_requests};
use halotank::storage::{spawn_writer, Reader, WriteItem, WriterSettings};
use storage_support::{at, temp_db};

fn record(id: u64, tank: &str, state: AlertState) -> AlertRecord {
    let t = at(2024, 5, 14, 6, 0, 0);
    AlertRecord {
        id: AlertId(id),
        tank: tank.to_string(),
        kind: AlertKind::SalinityTolerance,
        severity: AlertKind::SalinityTolerance.severity(),
        state,
        raised_at: t,
        observed_at: t,
        last_notified_at: t,
        notify_count: 1,
        cleared_at: None,
        acknowledgement: None,
        message: format!("test alert {id}"),
        value: Some(3.2),
        limit: Some(5.0),
    }
}

#[test]
fn alert_records_round_trip_and_upsert_by_id() {
    let db = temp_db();
    let (writer, _reports, join) = spawn_writer::<()>(&db.path, WriterSettings::default()).unwrap();
    let first = record(7, "smolt-a1", AlertState::Raised);
    let mut acked = first.clone();
    acked
        .acknowledge(
            "Ines",
            Some("probe checked"),
            first.raised_at + TimeDelta::minutes(3),
        )
        .unwrap();
    let mut closed = record(8, "oyster-c1", AlertState::Raised);
    closed.condition_cleared(closed.raised_at + TimeDelta::minutes(1));
    assert_eq!(closed.state, AlertState::ClearedUnacknowledged);
    closed
        .acknowledge("Ines", None, closed.raised_at + TimeDelta::minutes(2))
        .unwrap();
    assert_eq!(closed.state, AlertState::Cleared);
    for r in [first.clone(), acked.clone(), closed.clone()] {
        writer.blocking_send(WriteItem::Alert(r)).unwrap();
    }
    writer.blocking_flush().unwrap();

    let reader = Reader::open(&db.path).unwrap();
    assert_eq!(reader.max_alert_id().unwrap(), 8);
    assert_eq!(
        reader.alerts(false, None).unwrap(),
        vec![closed.clone(), acked.clone()]
    );
    assert_eq!(reader.alerts(true, None).unwrap(), vec![acked.clone()]);
    assert_eq!(reader.alerts(false, Some("oyster-c1")).unwrap(), vec![closed]);

    // Acknowledgement requests: recorded, pending, then marked handled through the writer.
    let conn = rusqlite::Connection::open(&db.path).unwrap();
    let id = insert_ack_request(&conn, 7, "Ines", Some("note"), first.raised_at).unwrap();
    let pending = pending_ack_requests(&conn).unwrap();
    assert_eq!(pending.len(), 1);
    assert_eq!((pending[0].alert_id, pending[0].by.as_str()), (7, "Ines"));
    writer
        .blocking_send(WriteItem::AckRequestHandled {
            id,
            handled_at: first.raised_at,
            outcome: "acknowledged".into(),
        })
        .unwrap();
    writer.blocking_flush().unwrap();
    assert!(reader.pending_ack_requests().unwrap().is_empty());
    drop(writer);
    join.join().unwrap().unwrap();

    // Restart: the open alert comes back once, and new ids continue above the highest stored one.
    let mut engine = AlertEngine::new();
    let settings = AlertSettings::default().resolve().unwrap();
    engine
        .add_tank("smolt-a1", AlertLimits::default(), settings)
        .unwrap();
    let report = engine.restore(reader.alerts(true, None).unwrap(), reader.max_alert_id().unwrap());
    assert_eq!(engine.open_alerts().count(), 1, "{report:?}");
    let again = engine.restore(reader.alerts(true, None).unwrap(), reader.max_alert_id().unwrap());
    assert_eq!(engine.open_alerts().count(), 1, "{again:?}");
}

#[test]
fn ack_without_a_running_daemon_is_applied_to_the_stored_record() {
    let db = temp_db();
    let (writer, _reports, join) = spawn_writer::<()>(&db.path, WriterSettings::default()).unwrap();
    let mut open = record(3, "smolt-a1", AlertState::Raised);
    open.condition_cleared(open.raised_at + TimeDelta::minutes(1));
    writer.blocking_send(WriteItem::Alert(open)).unwrap();
    writer.blocking_flush().unwrap();
    drop(writer);
    join.join().unwrap().unwrap();

    let out = std::process::Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["ack", "--db"])
        .arg(&db.path)
        .args(["3", "--by", "Ines", "--note", "seen"])
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    assert!(String::from_utf8_lossy(&out.stdout).contains("no daemon running"));
    let reader = Reader::open(&db.path).unwrap();
    assert!(reader.alerts(true, None).unwrap().is_empty());
    assert!(reader.pending_ack_requests().unwrap().is_empty());
    let stored = &reader.alerts(false, None).unwrap()[0];
    assert_eq!(stored.state, AlertState::Cleared);
    assert_eq!(
        stored.acknowledgement.as_ref().unwrap().note.as_deref(),
        Some("seen")
    );

    // `halotank alerts --format json` lists it with the documented keys.
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["alerts", "--db"])
        .arg(&db.path)
        .args(["--format", "json"])
        .output()
        .unwrap();
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let first = &json[0];
    for key in ["id", "tank", "kind", "severity", "state", "raised_at", "message"] {
        assert!(!first[key].is_null(), "{key} missing in {first}");
    }
    assert_eq!(first["state"], "cleared");
    // A second ack of a closed alert is refused.
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["ack", "--db"])
        .arg(&db.path)
        .args(["3", "--by", "Ines"])
        .output()
        .unwrap();
    assert!(!out.status.success());
}
