//! Stored schedules: one open schedule per tank, checked step marks, and restart safety (a new connection,
//! as after a restart of the daemon or a second CLI process, continues from the right step).
mod storage_support;

use chrono::{DateTime, Duration, TimeZone, Utc};
use halotank::planner::{make_plan, Method, PlanRequest, Ramp, RampShape, RateLimits};
use halotank::schedule::{progress, ScheduleError, SchedulePlan, ScheduleState};
use halotank::storage::schema::{open_for_writing, user_version};
use halotank::storage::{ScheduleStore, ScheduleStoreError};
use storage_support::temp_db;

fn t0() -> DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 3, 2, 8, 0, 0).unwrap()
}

/// 2,000 L smolt tank from SP 5 to 13 by hourly exchanges with SP 34 water at 2 SP/h: four steps.
fn request() -> PlanRequest {
    PlanRequest {
        tank_volume_l: 2000.0,
        from_practical_salinity: 5.0,
        to_practical_salinity: 13.0,
        temperature_c: 12.0,
        start: t0(),
        interval_h: 1.0,
        method: Method::Exchange {
            source_practical_salinity: 34.0,
        },
        ramp: Ramp {
            shape: RampShape::LinearSalinity,
            rate: None,
        },
        holds: vec![],
        rate_limits: RateLimits {
            max_rate_sp_per_h: Some(2.0),
            ..RateLimits::default()
        },
        salinity_limits: None,
    }
}

fn plan() -> SchedulePlan {
    SchedulePlan::from(&make_plan(&request()).unwrap())
}

#[test]
fn the_schedules_migration_applies_and_schedules_round_trip() {
    let db = temp_db();
    let mut store = ScheduleStore::open(&db.path).unwrap();
    let plan = plan();
    assert_eq!(plan.steps.len(), 4);
    let inserted = store.insert("smolt-b2", t0(), &plan, &request()).unwrap();
    assert_eq!(inserted.state, ScheduleState::Active);
    assert_eq!(inserted.plan, plan);
    assert_eq!(store.get(inserted.id).unwrap(), inserted);
    let stored_request: PlanRequest =
        serde_json::from_str(&store.request_json(inserted.id).unwrap()).unwrap();
    assert_eq!(stored_request, request());
    let conn = open_for_writing(&db.path, std::time::Duration::from_secs(1)).unwrap();
    // The schedules migration is version 2; later migrations stack on it.
    assert!(user_version(&conn).unwrap() >= 2);
    assert_eq!(user_version(&conn).unwrap(), halotank::storage::SCHEMA_VERSION);
}

#[test]
fn one_open_schedule_per_tank() {
    let db = temp_db();
    let mut store = ScheduleStore::open(&db.path).unwrap();
    let first = store.insert("smolt-b2", t0(), &plan(), &request()).unwrap();
    let err = store.insert("smolt-b2", t0(), &plan(), &request()).unwrap_err();
    assert!(
        matches!(&err, ScheduleStoreError::TankBusy { tank_id, existing_id, .. } if tank_id == "smolt-b2" && *existing_id == first.id)
    );
    assert!(err.to_string().contains("already has schedule"));
    // A paused schedule still holds the tank; another tank is free.
    store.pause(first.id, t0() + Duration::minutes(5)).unwrap();
    assert!(store.insert("smolt-b2", t0(), &plan(), &request()).is_err());
    store.insert("smolt-b3", t0(), &plan(), &request()).unwrap();
    // Once aborted, the tank can take a new schedule.
    store.abort(first.id, t0() + Duration::minutes(10)).unwrap();
    let second = store
        .insert("smolt-b2", t0() + Duration::minutes(11), &plan(), &request())
        .unwrap();
    assert_ne!(second.id, first.id);
    assert_eq!(store.list(Some("smolt-b2")).unwrap().len(), 2);
    assert_eq!(store.list(None).unwrap().len(), 3);
    assert_eq!(store.open_schedules().unwrap().len(), 2);
    // The database itself refuses a second open schedule, even from a writer that skips the check.
    let conn = open_for_writing(&db.path, std::time::Duration::from_secs(1)).unwrap();
    let raw = conn.execute(
        "INSERT INTO schedules (tank_id, created_at_ms, state, state_since_ms, plan_json, request_json) \
         VALUES ('smolt-b2', 0, 'active', 0, '{}', '{}')",
        [],
    );
    assert!(raw.is_err());
}

#[test]
fn restart_continues_from_the_right_step_and_never_repeats_one() {
    let db = temp_db();
    let id = {
        let mut store = ScheduleStore::open(&db.path).unwrap();
        let s = store.insert("smolt-b2", t0(), &plan(), &request()).unwrap();
        store.mark_step_done(s.id, None, t0(), "ines").unwrap();
        store
            .mark_step_done(s.id, Some(2), t0() + Duration::hours(1), "ines")
            .unwrap();
        s.id
    }; // connection dropped: the "restart"
    let mut reopened = ScheduleStore::open(&db.path).unwrap();
    let s = reopened.get(id).unwrap();
    assert_eq!(
        s.steps_done.iter().map(|d| d.step).collect::<Vec<_>>(),
        vec![1, 2]
    );
    let p = progress(&s, t0() + Duration::minutes(90));
    assert_eq!((p.steps_done, p.steps_due, p.steps_ahead), (2, 2, 0));
    assert!((p.setpoint_practical_salinity - s.plan.steps[1].setpoint_practical_salinity).abs() < 1e-12);
    assert_eq!(p.next_step.as_ref().unwrap().step, 3);
    // Repeating a done step, from the new connection, is refused and changes nothing.
    let err = reopened
        .mark_step_done(id, Some(2), t0() + Duration::hours(2), "ines")
        .unwrap_err();
    assert!(matches!(
        err,
        ScheduleStoreError::Refused(ScheduleError::StepAlreadyDone { step: 2, .. })
    ));
    let err = reopened
        .mark_step_done(id, Some(4), t0() + Duration::hours(2), "ines")
        .unwrap_err();
    assert!(matches!(
        err,
        ScheduleStoreError::Refused(ScheduleError::StepOutOfOrder { step: 4, next: 3, .. })
    ));
    assert_eq!(reopened.get(id).unwrap(), s);
    // Two connections at once (CLI and daemon): a step marked through one is seen by the other, and the
    // other cannot mark it again.
    let mut other = ScheduleStore::open(&db.path).unwrap();
    let (_, step) = reopened
        .mark_step_done(id, None, t0() + Duration::hours(2), "ines")
        .unwrap();
    assert_eq!(step, 3);
    assert!(other
        .mark_step_done(id, Some(3), t0() + Duration::hours(2), "jon")
        .is_err());
    let (after, step) = other
        .mark_step_done(id, None, t0() + Duration::hours(3), "jon")
        .unwrap();
    assert_eq!(step, 4);
    assert_eq!(
        after.state,
        ScheduleState::Completed {
            at: t0() + Duration::hours(3)
        }
    );
    assert_eq!(reopened.get(id).unwrap(), after);
}

#[test]
fn pause_time_survives_a_restart() {
    let db = temp_db();
    let id = {
        let mut store = ScheduleStore::open(&db.path).unwrap();
        let s = store.insert("smolt-b2", t0(), &plan(), &request()).unwrap();
        store.mark_step_done(s.id, None, t0(), "ines").unwrap();
        store.pause(s.id, t0() + Duration::minutes(30)).unwrap();
        s.id
    };
    let mut store = ScheduleStore::open(&db.path).unwrap();
    let s = store.resume(id, t0() + Duration::minutes(150)).unwrap();
    assert_eq!(s.paused_total, Duration::hours(2));
    let s = ScheduleStore::open(&db.path).unwrap().get(id).unwrap();
    let p = progress(&s, t0() + Duration::minutes(150));
    assert_eq!(p.next_step.unwrap().due, t0() + Duration::hours(3));
    assert_eq!(p.expected_finish, Some(s.plan.end + Duration::hours(2)));
    assert!(matches!(
        store.get(999).unwrap_err(),
        ScheduleStoreError::NotFound { id: 999 }
    ));
}
