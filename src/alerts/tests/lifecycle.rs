//! Lifecycle through the engine: acknowledgement, critical alerts held until acknowledged, restore.
use super::*;

fn critical_rig() -> Rig {
    Rig::new(
        sea_limits(),
        only(
            &[AlertKind::SalinityTolerance, AlertKind::SalinityOptimum],
            |_| {},
        ),
    )
}

#[test]
fn critical_alert_that_clears_unacknowledged_stays_visible_until_acknowledged() {
    let mut rig = critical_rig();
    rig.read(0, 19.0, 12.0);
    let raised = rig.read(60, 19.0, 12.0);
    assert_eq!(names(&raised), vec![("raised", AlertKind::SalinityTolerance)]);
    let id = raised[0].id();
    // Recovers to 30 before anyone acknowledged it.
    let events = rig.read(120, 30.0, 12.0);
    assert_eq!(names(&events), vec![("cleared", AlertKind::SalinityTolerance)]);
    assert!(events[0].message().contains("has cleared"));
    let open: Vec<_> = rig.engine.open_alerts().cloned().collect();
    assert_eq!(open.len(), 1);
    assert_eq!(
        (open[0].id, open[0].state),
        (id, AlertState::ClearedUnacknowledged)
    );
    assert_eq!(open[0].cleared_at, Some(t(120)));
    // Still visible hours later, and not repeated.
    assert!(rig.tick(20_000).is_empty());
    assert_eq!(rig.engine.open_alerts().count(), 1);
    // Acknowledging closes it.
    let event = rig
        .engine
        .acknowledge(
            &AlertRef::Id(id),
            "Marit",
            Some("salt dosing valve stuck, fixed"),
            t(20_100),
        )
        .unwrap();
    assert_eq!(event.name(), "acknowledged");
    assert_eq!(event.alert().state, AlertState::Cleared);
    let ack = event.alert().acknowledgement.clone().unwrap();
    assert_eq!((ack.by.as_str(), ack.at), ("Marit", t(20_100)));
    assert!(event
        .message()
        .contains("acknowledged by Marit: salt dosing valve stuck, fixed"));
    assert_eq!(rig.engine.open_alerts().count(), 0);
    assert!(matches!(
        rig.engine
            .acknowledge(&AlertRef::Id(id), "Marit", None, t(20_200)),
        Err(AckError::NotOpen(_))
    ));
    // A new excursion is a new alert with a new id.
    rig.read(20_300, 19.0, 12.0);
    let again = rig.read(20_360, 19.0, 12.0);
    assert_eq!(names(&again), vec![("raised", AlertKind::SalinityTolerance)]);
    assert!(again[0].id() > id);
}

#[test]
fn a_held_critical_alert_whose_condition_returns_recurs_with_the_same_id() {
    let mut rig = critical_rig();
    rig.read(0, 37.0, 12.0);
    let id = rig.read(60, 37.0, 12.0)[0].id();
    rig.read(120, 30.0, 12.0);
    rig.read(180, 37.0, 12.0);
    let events = rig.read(240, 37.0, 12.0);
    assert_eq!(names(&events), vec![("recurred", AlertKind::SalinityTolerance)]);
    assert_eq!(
        (events[0].id(), events[0].alert().state),
        (id, AlertState::Raised)
    );
    assert_eq!(events[0].alert().notify_count, 2);
}

#[test]
fn acknowledged_alerts_are_not_repeated_and_close_when_they_clear() {
    let mut rig = critical_rig();
    rig.read(0, 37.0, 12.0);
    let raised = rig.read(60, 37.0, 12.0);
    let key = raised[0].key();
    assert_eq!(key.to_string(), "quay-4/salinity_tolerance");
    let event = rig
        .engine
        .acknowledge(&AlertRef::Key(key.clone()), "Marit", None, t(100))
        .unwrap();
    assert_eq!(event.alert().state, AlertState::Acknowledged);
    assert!(matches!(
        rig.engine
            .acknowledge(&AlertRef::Key(key.clone()), "Jonas", None, t(110)),
        Err(AckError::AlreadyAcknowledged { .. })
    ));
    assert!(rig
        .tick(10_000)
        .iter()
        .all(|e| e.alert().kind != AlertKind::SalinityTolerance));
    let events = rig.read(10_060, 30.0, 12.0);
    assert!(names(&events).contains(&("cleared", AlertKind::SalinityTolerance)));
    assert!(rig.engine.open_alert_for(&key).is_none());
    assert_eq!(
        rig.engine
            .acknowledge(&AlertRef::Id(AlertId(999)), "Jonas", None, t(1)),
        Err(AckError::NotOpen("999".into()))
    );
}

#[test]
fn restore_after_restart_does_not_raise_twice_and_clears_through_the_rule() {
    let mut rig = critical_rig();
    rig.read(0, 37.0, 12.0);
    rig.read(60, 37.0, 12.0);
    rig.read(300, 37.0, 12.0);
    let open: Vec<AlertRecord> = rig.engine.open_alerts().cloned().collect();
    assert_eq!(open.len(), 2);
    let tolerance_id = open
        .iter()
        .find(|r| r.kind == AlertKind::SalinityTolerance)
        .unwrap()
        .id;
    rig.engine
        .acknowledge(&AlertRef::Id(tolerance_id), "Marit", None, t(310))
        .unwrap();
    // Persist as JSON (the stored form), as a restart would.
    let stored: Vec<String> = rig
        .engine
        .open_alerts()
        .map(|r| serde_json::to_string(r).unwrap())
        .collect();
    let highest = rig.engine.open_alerts().map(|r| r.id.0).max().unwrap();

    let mut restarted = critical_rig();
    let records = stored.iter().map(|s| serde_json::from_str(s).unwrap()).collect();
    let report = restarted.engine.restore(records, highest + 10);
    assert_eq!(report.linked, 2);
    assert_eq!(restarted.engine.open_alerts().count(), 2);
    // Still out of range: nothing raised again.
    for s in (400..1000).step_by(60) {
        assert!(restarted.read(s, 37.0, 12.0).is_empty(), "{s}");
    }
    // The unacknowledged optimum warning keeps its re-notify schedule (raised at 300, every 3600 s).
    assert_eq!(
        names(&restarted.tick(3900)),
        vec![("renotify", AlertKind::SalinityOptimum)]
    );
    // Recovery clears both restored alerts, by their old ids.
    let events = restarted.read(4000, 30.0, 12.0);
    let mut cleared: Vec<_> = events.iter().map(|e| (e.name(), e.id())).collect();
    cleared.sort();
    let mut expected: Vec<_> = stored
        .iter()
        .map(|s| ("cleared", serde_json::from_str::<AlertRecord>(s).unwrap().id))
        .collect();
    expected.sort();
    assert_eq!(cleared, expected);
    assert_eq!(restarted.engine.open_alerts().count(), 0);
    // New alerts continue above the stored ids.
    restarted.read(4100, 19.0, 12.0);
    let fresh = restarted.read(4160, 19.0, 12.0);
    assert_eq!(fresh[0].id(), AlertId(highest + 11));
}

#[test]
fn restore_keeps_held_orphaned_and_duplicate_alerts_open() {
    let mut rig = critical_rig();
    rig.read(0, 37.0, 12.0);
    rig.read(60, 37.0, 12.0);
    rig.read(120, 30.0, 12.0);
    let held: AlertRecord = rig.engine.open_alerts().next().unwrap().clone();
    assert_eq!(held.state, AlertState::ClearedUnacknowledged);
    let mut orphan = held.clone();
    orphan.id = AlertId(50);
    orphan.tank = "retired-tank".into();
    // A raised alert of a rule this tank no longer runs (probe-stale is off in `critical_rig`).
    let mut rule_off = held.clone();
    rule_off.id = AlertId(49);
    rule_off.kind = AlertKind::ProbeStale;
    rule_off.severity = Severity::Warning;
    rule_off.state = AlertState::Raised;
    rule_off.cleared_at = None;
    let mut duplicate = held.clone();
    duplicate.id = AlertId(51);
    let mut closed = held.clone();
    closed.id = AlertId(52);
    closed.state = AlertState::Cleared;

    let mut restarted = critical_rig();
    let records = vec![held.clone(), orphan, rule_off, duplicate, closed, held.clone()];
    let report = restarted.engine.restore(records, 52);
    assert_eq!(
        report,
        RestoreReport {
            linked: 1,
            orphaned: 2,
            duplicate_key: 1,
            skipped: 2
        }
    );
    assert_eq!(restarted.engine.open_alerts().count(), 4);
    // Unlinked alerts are never repeated.
    assert!(restarted.tick(100_000).iter().all(|e| e.name() != "renotify"));
    // The held alert is not a present condition: in-range readings do nothing, acknowledging closes it.
    assert!(restarted.read(200, 30.0, 12.0).is_empty());
    let event = restarted
        .engine
        .acknowledge(&AlertRef::Id(held.id), "Marit", None, t(300))
        .unwrap();
    assert_eq!(event.alert().state, AlertState::Cleared);
    // The orphan can still be acknowledged by key.
    let key = AlertKey::parse("retired-tank/salinity_tolerance").unwrap();
    assert!(restarted
        .engine
        .acknowledge(&AlertRef::Key(key), "Marit", None, t(301))
        .is_ok());
    // A raised unlinked alert closes when acknowledged: no rule is left to clear it.
    let event = restarted
        .engine
        .acknowledge(
            &AlertRef::Id(AlertId(49)),
            "Marit",
            Some("probe-stale switched off"),
            t(302),
        )
        .unwrap();
    assert_eq!(event.alert().state, AlertState::Cleared);
    assert_eq!(restarted.engine.open_alerts().count(), 1);
    // New ids continue above the highest stored one.
    restarted.read(400, 19.0, 12.0);
    assert_eq!(restarted.read(460, 19.0, 12.0)[0].id(), AlertId(53));
}
