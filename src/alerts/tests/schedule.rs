//! The acclimation-schedule hook.
use super::*;

#[test]
fn off_schedule_raises_after_its_minimum_duration_on_a_tick_and_clears_on_schedule() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ScheduleOff], |_| {}));
    let off = ScheduleSignal::OffSchedule {
        deviation_sp: -1.2,
        target_sp: 24.0,
    };
    assert!(rig.engine.on_schedule(rig.slot, off, t(0)).is_empty());
    assert!(rig.tick(299).is_empty());
    let events = rig.tick(300);
    assert_eq!(names(&events), vec![("raised", AlertKind::ScheduleOff)]);
    assert!(events[0]
        .message()
        .contains("-1.20 SP off the acclimation schedule (target now SP 24.00)"));
    assert_eq!(
        names(&rig.tick(300 + 1800)),
        vec![("renotify", AlertKind::ScheduleOff)]
    );
    let events = rig
        .engine
        .on_schedule(rig.slot, ScheduleSignal::OnSchedule, t(2500));
    assert_eq!(names(&events), vec![("cleared", AlertKind::ScheduleOff)]);
}

#[test]
fn step_due_is_info_and_clears_when_done() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ScheduleStepDue], |_| {}));
    let due = ScheduleSignal::StepDue {
        step: 3,
        target_sp: 18.0,
        due_at: t(600),
        action: StepAction {
            drain_l: Some(120.0),
            add_l: Some(120.0),
            ..StepAction::default()
        },
    };
    let events = rig.engine.on_schedule(rig.slot, due, t(600));
    assert_eq!(names(&events), vec![("raised", AlertKind::ScheduleStepDue)]);
    assert_eq!(events[0].severity(), Severity::Info);
    let due_text = t(600).to_rfc3339_opts(chrono::SecondsFormat::Secs, true);
    assert!(events[0].message().contains(&format!(
        "step 3 to SP 18.00 is due at {due_text}: drain 120 L, add 120 L."
    )));
    let events = rig.engine.on_schedule(rig.slot, ScheduleSignal::StepDone, t(900));
    assert_eq!(names(&events), vec![("cleared", AlertKind::ScheduleStepDue)]);
    assert_eq!(rig.engine.open_alerts().count(), 0);
}
