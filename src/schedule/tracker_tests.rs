//! The schedule tracker against a fake clock, on a plan made by the planner (1,000 L from SP 30 to 20 by
//! exchange with fresh water, 2 SP per hourly step; the fictional demo tank `smolt-b2`).
use std::collections::HashMap;

use chrono::{DateTime, Duration, Utc};

use super::tests::{request, t0};
use super::*;
use crate::alerts::ScheduleSignal;
use crate::planner::{make_plan, Method};

fn minutes(m: i64) -> DateTime<Utc> {
    t0() + Duration::minutes(m)
}

fn exchange() -> Schedule {
    let plan = make_plan(&request(Method::Exchange {
        source_practical_salinity: 0.2,
    }))
    .unwrap();
    Schedule::new(7, "smolt-b2".into(), t0(), SchedulePlan::from(&plan))
}

const SETTINGS: TankTracking = TankTracking {
    band_sp: 0.5,
    pause_on_critical: true,
};

fn tracker() -> ScheduleTracker {
    ScheduleTracker::new(HashMap::from([("smolt-b2".to_string(), SETTINGS)]), SETTINGS)
}

fn setpoints(actions: &[TrackerAction]) -> Vec<&SetpointMessage> {
    actions
        .iter()
        .filter_map(|a| match a {
            TrackerAction::Setpoint(m) => Some(m),
            _ => None,
        })
        .collect()
}

fn signals(actions: &[TrackerAction]) -> Vec<ScheduleSignal> {
    actions
        .iter()
        .filter_map(|a| match a {
            TrackerAction::Signal { signal, .. } => Some(*signal),
            _ => None,
        })
        .collect()
}

#[test]
fn a_new_schedule_publishes_its_setpoint_and_raises_the_first_due_step_with_its_quantities() {
    let mut tracker = tracker();
    let s = exchange();
    let (drain, add) = (s.plan.steps[0].drain_l, s.plan.steps[0].add_l);
    let outcome = tracker.sync(vec![s], minutes(1));
    assert!(outcome.ended.is_empty());
    let published = setpoints(&outcome.actions);
    assert_eq!(published.len(), 1);
    let m = published[0];
    assert_eq!(
        (m.tank.as_str(), m.schedule_id, m.state),
        ("smolt-b2", 7, "active")
    );
    assert_eq!((m.step, m.steps_total), (0, 5));
    assert!((m.setpoint_practical_salinity - 30.0).abs() < 1e-9);
    let next = m.next_step.as_ref().unwrap();
    assert_eq!((next.step, next.overdue), (1, true));
    assert_eq!(m.next_step_time.as_deref(), Some("2026-03-02T08:00:00Z"));
    match signals(&outcome.actions).as_slice() {
        [ScheduleSignal::StepDue {
            step: 1,
            target_sp,
            action,
            ..
        }] => {
            assert!((target_sp - 28.0).abs() < 1e-9);
            assert_eq!((action.drain_l, action.add_l), (drain, add));
            assert!(action.drain_l.unwrap() > 0.0);
        }
        other => panic!("expected one step-due signal, got {other:?}"),
    }
    // A second tick with nothing new publishes nothing and raises nothing again.
    assert!(tracker.on_tick(minutes(2)).is_empty());
}

#[test]
fn marking_the_step_done_clears_the_reminder_and_moves_the_setpoint() {
    let mut tracker = tracker();
    let mut s = exchange();
    tracker.sync(vec![s.clone()], minutes(1));
    s.mark_step_done(None, minutes(10), "ines").unwrap();
    let outcome = tracker.sync(vec![s], minutes(11));
    assert_eq!(signals(&outcome.actions), vec![ScheduleSignal::StepDone]);
    let m = setpoints(&outcome.actions)[0];
    assert_eq!(m.step, 1);
    assert!((m.setpoint_practical_salinity - 28.0).abs() < 1e-9);
    assert_eq!(
        m.next_step.as_ref().map(|n| (n.step, n.overdue)),
        Some((2, false))
    );
    // Step 2 falls due an hour after step 1 was planned (09:00; step 1 was 10 minutes late: 09:10).
    assert!(signals(&tracker.on_tick(minutes(69))).is_empty());
    let due = signals(&tracker.on_tick(minutes(70)));
    assert!(
        matches!(due.as_slice(), [ScheduleSignal::StepDue { step: 2, .. }]),
        "{due:?}"
    );
}

#[test]
fn readings_outside_the_band_are_off_schedule_and_an_overdue_step_widens_it() {
    let mut tracker = tracker();
    let mut s = exchange();
    s.mark_step_done(None, minutes(0), "ines").unwrap();
    tracker.sync(vec![s], minutes(5));
    // Setpoint 28; band 0.5; step 2 (to 26) not due until 09:00.
    let on = |sp| tracker.on_reading("smolt-b2", sp);
    assert!(matches!(
        on(28.4),
        Some(TrackerAction::Signal {
            signal: ScheduleSignal::OnSchedule,
            ..
        })
    ));
    match on(27.2) {
        Some(TrackerAction::Signal {
            signal:
                ScheduleSignal::OffSchedule {
                    deviation_sp,
                    target_sp,
                },
            ..
        }) => {
            assert!((deviation_sp - -0.8).abs() < 1e-9);
            assert!((target_sp - 28.0).abs() < 1e-9);
        }
        other => panic!("expected off schedule, got {other:?}"),
    }
    assert!(tracker.on_reading("other-tank", 10.0).is_none());
    // At 09:20 step 2 is overdue: staff may be mid-exchange, so 27.2 (between 28 and 26) is on schedule.
    tracker.on_tick(minutes(80));
    assert!(matches!(
        tracker.on_reading("smolt-b2", 27.2),
        Some(TrackerAction::Signal {
            signal: ScheduleSignal::OnSchedule,
            ..
        })
    ));
    assert!(matches!(
        tracker.on_reading("smolt-b2", 25.3),
        Some(TrackerAction::Signal {
            signal: ScheduleSignal::OffSchedule { .. },
            ..
        })
    ));
}

#[test]
fn a_restarted_tracker_continues_from_the_step_marked_done() {
    let mut s = exchange();
    s.mark_step_done(None, minutes(0), "ines").unwrap();
    s.mark_step_done(None, minutes(60), "ines").unwrap();
    let mut before = tracker();
    let a = before.sync(vec![s.clone()], minutes(90));
    // The daemon stops; the stored schedule is read back by a new one half an hour later.
    let mut after = tracker();
    let b = after.sync(vec![s], minutes(120));
    let (a, b) = (setpoints(&a.actions)[0], setpoints(&b.actions)[0]);
    assert_eq!((a.step, b.step), (2, 2));
    assert!((b.setpoint_practical_salinity - 26.0).abs() < 1e-9);
    // Step 3 was due at 10:00, so the restarted tracker reminds of step 3, never of 1 or 2 again.
    assert_eq!(b.next_step.as_ref().map(|n| (n.step, n.overdue)), Some((3, true)));
    let due = signals(&after.on_tick(minutes(121)));
    assert!(due.is_empty(), "already raised at the sync: {due:?}");
    assert_eq!(after.progress("smolt-b2").map(|p| p.steps_done), Some(2));
}

#[test]
fn pausing_clears_the_reminder_and_a_paused_schedule_is_not_paused_again() {
    let mut tracker = tracker();
    let mut s = exchange();
    tracker.sync(vec![s.clone()], minutes(1));
    assert!(matches!(
        tracker.on_critical_alert("smolt-b2"),
        Some(TrackerAction::Pause { schedule_id: 7, .. })
    ));
    s.pause(minutes(2)).unwrap();
    let outcome = tracker.sync(vec![s], minutes(3));
    assert_eq!(signals(&outcome.actions), vec![ScheduleSignal::StepDone]);
    assert_eq!(setpoints(&outcome.actions)[0].state, "paused");
    assert!(tracker.on_critical_alert("smolt-b2").is_none());
}

#[test]
fn without_the_setting_a_critical_alert_does_not_pause() {
    let quiet = TankTracking {
        pause_on_critical: false,
        ..SETTINGS
    };
    let mut tracker = ScheduleTracker::new(HashMap::new(), quiet);
    tracker.sync(vec![exchange()], minutes(1));
    assert!(tracker.on_critical_alert("smolt-b2").is_none());
}

#[test]
fn an_ended_schedule_clears_its_alerts_and_publishes_its_final_state() {
    let mut tracker = tracker();
    let mut s = exchange();
    tracker.sync(vec![s.clone()], minutes(1));
    s.abort(minutes(30)).unwrap();
    let outcome = tracker.sync(vec![], minutes(31));
    assert_eq!(outcome.ended, vec![7]);
    assert_eq!(
        signals(&outcome.actions),
        vec![ScheduleSignal::StepDone, ScheduleSignal::OnSchedule]
    );
    assert!(tracker.progress("smolt-b2").is_none());
    match tracker.ended(&s, minutes(31)) {
        Some(TrackerAction::Setpoint(m)) => {
            assert_eq!(m.state, "aborted");
            assert!(m.next_step.is_none());
        }
        other => panic!("expected a final setpoint, got {other:?}"),
    }
    assert!(tracker.on_reading("smolt-b2", 10.0).is_none());
}

#[test]
fn a_flow_setpoint_is_republished_only_when_it_has_moved() {
    let mut tracker = tracker();
    // The same tank and ramp by flow-through with fresh water (pump limit ample).
    let mut s = exchange();
    s.plan = SchedulePlan::from(
        &make_plan(&request(Method::FlowThrough {
            source_practical_salinity: 0.2,
            max_flow_l_min: Some(100.0),
        }))
        .unwrap(),
    );
    s.mark_step_done(None, minutes(0), "ines").unwrap();
    let first = tracker.sync(vec![s], minutes(0));
    let first_sp = setpoints(&first.actions)[0].setpoint_practical_salinity;
    // One second later the ramp has moved far less than the resolution.
    assert!(setpoints(&tracker.on_tick(minutes(0) + Duration::seconds(1))).is_empty());
    let later = tracker.on_tick(minutes(30));
    let later_sp = setpoints(&later)[0].setpoint_practical_salinity;
    assert!(later_sp < first_sp - 0.5, "{first_sp} -> {later_sp}");
    assert!(later_sp > 28.0 - 1e-9);
}
