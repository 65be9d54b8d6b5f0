//! Schedule transitions and progress against a fake clock, on plans made by the planner.
use chrono::{DateTime, Duration, TimeZone, Utc};

use super::*;
use crate::planner::{make_plan, Method, PlanRequest, Ramp, RampShape, RateLimits};

pub(super) fn t0() -> DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 3, 2, 8, 0, 0).unwrap()
}

fn h(hours: i64) -> Duration {
    Duration::hours(hours)
}

/// 1,000 L from SP 30 to 20 at 2 SP/h, hourly: five steps of 2 SP (30 -> 28 -> ... -> 20).
pub(super) fn request(method: Method) -> PlanRequest {
    PlanRequest {
        tank_volume_l: 1000.0,
        from_practical_salinity: 30.0,
        to_practical_salinity: 20.0,
        temperature_c: 15.0,
        start: t0(),
        interval_h: 1.0,
        method,
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

fn schedule(method: Method) -> Schedule {
    let plan = make_plan(&request(method)).unwrap();
    Schedule::new(7, "smolt-b2".into(), t0(), SchedulePlan::from(&plan))
}

fn exchange() -> Schedule {
    schedule(Method::Exchange {
        source_practical_salinity: 0.2,
    })
}

#[test]
fn the_test_plan_has_five_hourly_steps() {
    let s = exchange();
    assert_eq!(s.plan.steps.len(), 5);
    assert_eq!(s.plan.steps[1].time, t0() + h(1));
    assert!((s.plan.steps[0].setpoint_practical_salinity - 28.0).abs() < 1e-9);
    assert_eq!(s.plan.end, t0() + h(5));
}

#[test]
fn on_time_steps_are_neither_ahead_nor_behind() {
    let mut s = exchange();
    s.mark_step_done(None, t0() + Duration::minutes(5), "ines")
        .unwrap();
    s.mark_step_done(None, t0() + h(1), "ines").unwrap();
    let p = progress(&s, t0() + h(1) + Duration::minutes(30));
    assert_eq!((p.steps_done, p.steps_due, p.steps_ahead), (2, 2, 0));
    assert!((p.setpoint_practical_salinity - 26.0).abs() < 1e-9);
    let next = p.next_step.unwrap();
    assert_eq!(
        (next.step, next.due, next.overdue),
        (3, t0() + h(2) + Duration::minutes(5), false)
    );
    // Step 1 was 5 minutes late: the rest of the plan keeps its intervals from then on.
    assert_eq!(p.expected_finish, Some(t0() + h(5) + Duration::minutes(5)));
}

#[test]
fn behind_schedule_counts_overdue_steps_and_moves_the_finish() {
    let mut s = exchange();
    s.mark_step_done(None, t0(), "ines").unwrap();
    // Steps 2 (due 09:00) and 3 (due 10:00) are not done at 10:30.
    let now = t0() + h(2) + Duration::minutes(30);
    let p = progress(&s, now);
    assert_eq!((p.steps_done, p.steps_due, p.steps_ahead), (1, 3, -2));
    let next = p.next_step.unwrap();
    assert_eq!(next.step, 2);
    assert!(next.overdue);
    // The tank holds step 1's setpoint until step 2 is done.
    assert!((p.setpoint_practical_salinity - 28.0).abs() < 1e-9);
    // Done now, step 2 is 1.5 h late and the four remaining hours follow.
    assert_eq!(p.expected_finish, Some(t0() + h(5) + Duration::minutes(90)));
    assert!((p.late_h - 1.5).abs() < 1e-9);
}

#[test]
fn a_late_step_moves_the_later_steps() {
    let mut s = exchange();
    s.mark_step_done(None, t0(), "ines").unwrap();
    s.mark_step_done(None, t0() + h(2), "ines").unwrap(); // due 09:00, done 10:00
    let p = progress(&s, t0() + h(2) + Duration::minutes(10));
    // Step 3 is now due an hour after step 2 was done, so nothing is overdue.
    assert_eq!((p.steps_due, p.steps_ahead), (2, 0));
    assert_eq!(p.next_step.unwrap().due, t0() + h(3));
    assert_eq!(p.expected_finish, Some(t0() + h(6)));
}

#[test]
fn ahead_of_schedule_does_not_pull_the_finish_forward() {
    let mut s = exchange();
    s.mark_step_done(None, t0(), "ines").unwrap();
    s.mark_step_done(None, t0() + Duration::minutes(20), "ines")
        .unwrap(); // step 2 due 09:00
    let p = progress(&s, t0() + Duration::minutes(30));
    assert_eq!((p.steps_done, p.steps_due, p.steps_ahead), (2, 1, 1));
    assert_eq!(p.expected_finish, Some(t0() + h(5)));
    assert!((p.setpoint_practical_salinity - 26.0).abs() < 1e-9);
}

#[test]
fn pausing_shifts_the_remaining_timeline_and_the_finish() {
    let mut s = exchange();
    s.mark_step_done(None, t0(), "ines").unwrap();
    s.pause(t0() + Duration::minutes(30)).unwrap();
    // While paused the clock stands still: at 12:00 the schedule is still half-way through step 1.
    let p = progress(&s, t0() + h(4));
    assert_eq!(p.state, "paused");
    assert_eq!((p.steps_due, p.steps_ahead), (1, 0));
    assert!((p.paused_h - 3.5).abs() < 1e-9);
    assert_eq!(
        p.next_step.as_ref().unwrap().due,
        t0() + h(1) + Duration::minutes(210)
    );
    assert_eq!(p.expected_finish, Some(t0() + h(5) + Duration::minutes(210)));
    s.resume(t0() + h(4)).unwrap();
    assert_eq!(s.paused_total, Duration::minutes(210));
    let p = progress(&s, t0() + h(4) + Duration::minutes(31));
    assert_eq!(p.steps_due, 2);
    assert_eq!(p.expected_finish, Some(t0() + h(5) + Duration::minutes(211)));
    // Step 2 done at its moved time adds no lateness.
    s.mark_step_done(None, t0() + h(4) + Duration::minutes(30), "ines")
        .unwrap();
    let p = progress(&s, t0() + h(4) + Duration::minutes(31));
    assert_eq!(p.expected_finish, Some(t0() + h(5) + Duration::minutes(210)));
    assert_eq!(p.steps_ahead, 0);
}

#[test]
fn completed_after_the_last_step() {
    let mut s = exchange();
    for i in 0..5 {
        s.mark_step_done(None, t0() + h(i), "ines").unwrap();
    }
    assert_eq!(s.state, ScheduleState::Completed { at: t0() + h(4) });
    let p = progress(&s, t0() + h(6));
    assert_eq!(p.state, "completed");
    assert_eq!((p.steps_done, p.steps_total, p.steps_ahead), (5, 5, 0));
    assert!(p.next_step.is_none());
    assert!((p.setpoint_practical_salinity - 20.0).abs() < 1e-9);
    assert_eq!(p.expected_finish, Some(t0() + h(5)));
    assert!(matches!(
        s.mark_step_done(None, t0() + h(6), "ines"),
        Err(ScheduleError::WrongState { .. })
    ));
}

#[test]
fn step_done_refuses_repeats_out_of_order_and_unknown_steps() {
    let mut s = exchange();
    assert_eq!(s.mark_step_done(Some(1), t0(), "ines").unwrap(), 1);
    let before = s.clone();
    assert!(matches!(
        s.mark_step_done(Some(1), t0() + h(1), "ines"),
        Err(ScheduleError::StepAlreadyDone { step: 1, .. })
    ));
    assert!(matches!(
        s.mark_step_done(Some(3), t0() + h(1), "ines"),
        Err(ScheduleError::StepOutOfOrder { step: 3, next: 2, .. })
    ));
    assert!(matches!(
        s.mark_step_done(Some(9), t0() + h(1), "ines"),
        Err(ScheduleError::NoSuchStep {
            step: 9,
            steps: 5,
            ..
        })
    ));
    assert!(matches!(
        s.mark_step_done(Some(0), t0() + h(1), "ines"),
        Err(ScheduleError::NoSuchStep { .. })
    ));
    // A clock stepped back is refused rather than recorded.
    assert!(matches!(
        s.mark_step_done(None, t0() - h(1), "ines"),
        Err(ScheduleError::TimeBeforeLastChange { .. })
    ));
    assert_eq!(s, before);
}

#[test]
fn paused_and_aborted_schedules_refuse_steps_and_wrong_transitions() {
    let mut s = exchange();
    assert!(matches!(s.resume(t0()), Err(ScheduleError::WrongState { .. })));
    s.pause(t0()).unwrap();
    assert!(matches!(s.pause(t0()), Err(ScheduleError::WrongState { .. })));
    assert!(matches!(
        s.mark_step_done(None, t0(), "ines"),
        Err(ScheduleError::WrongState { .. })
    ));
    s.abort(t0() + h(1)).unwrap();
    assert_eq!(s.paused_total, h(1));
    assert!(matches!(
        s.abort(t0() + h(2)),
        Err(ScheduleError::WrongState { .. })
    ));
    let p = progress(&s, t0() + h(9));
    assert_eq!(p.state, "aborted");
    assert!(p.next_step.is_none() && p.expected_finish.is_none());
}

#[test]
fn a_flow_step_ramps_over_its_interval_from_when_it_was_set() {
    let mut s = schedule(Method::FlowThrough {
        source_practical_salinity: 0.2,
        max_flow_l_min: None,
    });
    let step = s.plan.steps[0].clone();
    let q = step.flow_l_min.unwrap();
    assert!(q > 0.0);
    s.mark_step_done(None, t0(), "ines").unwrap();
    let at = |s: &Schedule, minutes: i64| {
        progress(s, t0() + Duration::minutes(minutes)).setpoint_practical_salinity
    };
    assert!((at(&s, 0) - 30.0).abs() < 1e-9);
    assert!((at(&s, 60) - step.setpoint_practical_salinity).abs() < 1e-9);
    assert!((at(&s, 90) - step.setpoint_practical_salinity).abs() < 1e-9);
    // Half-way: constant inflow into a well-mixed tank dilutes fastest at first, so more than half of the
    // step's change is done after half of its interval; by the closed form (1 - e^-x/2) / (1 - e^-x).
    let x = q * 60.0 / 1000.0;
    let expected_fraction = (1.0 - (-x / 2.0).exp()) / (1.0 - (-x).exp());
    let mid = at(&s, 30);
    assert!(mid < 29.0 && mid > 28.0);
    assert!(((30.0 - mid) / 2.0 - expected_fraction).abs() < 1e-9);
    // A pause stops the ramp's clock.
    s.pause(t0() + Duration::minutes(30)).unwrap();
    assert!((at(&s, 50) - mid).abs() < 1e-9);
    let osm = progress(&s, t0() + Duration::minutes(50))
        .setpoint_osmolality_mosm_kg
        .unwrap();
    assert!(osm > s.plan.steps[0].setpoint_osmolality_mosm_kg);
}

#[test]
fn before_the_first_step_the_setpoint_is_the_start_salinity() {
    let s = exchange();
    let p = progress(&s, t0() - h(1));
    assert_eq!((p.steps_due, p.steps_ahead), (0, 0));
    assert!((p.setpoint_practical_salinity - 30.0).abs() < 1e-9);
    assert!(p.setpoint_osmolality_mosm_kg.unwrap() > 800.0);
    let p = progress(&s, t0());
    assert_eq!(p.steps_due, 1);
    assert!(p.next_step.unwrap().overdue);
}
