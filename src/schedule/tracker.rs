//! Live tracking of the open schedules, one per tank: the daemon feeds it the schedules it reads back from
//! the database, its clock and each tank's measured salinity; it answers with setpoints to publish, alert
//! signals and pauses to apply. Pure: no I/O, no clock.
//!
//! Everything it knows is derived from the stored schedule and the time, so a restarted daemon rebuilds the
//! same state from the database: the setpoint continues from the step last marked done, on the timeline
//! moved by pauses and lateness ([`super::progress`]).
//!
//! Off schedule: a reading further than the tank's band from the setpoint. While the next step is overdue
//! the staff may be carrying it out, so anything between the current setpoint and that step's is on
//! schedule. Step due: raised once per step when it falls due on an active schedule, cleared when the step
//! is marked done, the schedule is paused or it ends.
use std::collections::HashMap;

use chrono::{DateTime, Utc};

use super::progress::{progress, Progress};
use super::setpoint::SetpointMessage;
use super::state::ScheduleState;
use super::transitions::Schedule;
use crate::alerts::{ScheduleSignal, StepAction};

/// A flow step's setpoint is republished once it has moved this far, SP.
pub const SETPOINT_RESOLUTION_SP: f64 = 0.01;

/// One tank's tracking settings (from its layered alert settings).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TankTracking {
    /// Off schedule beyond this distance from the setpoint, SP.
    pub band_sp: f64,
    /// A critical alert on the tank pauses its running schedule.
    pub pause_on_critical: bool,
}

/// What the daemon should do.
#[derive(Debug, Clone, PartialEq)]
pub enum TrackerAction {
    /// Publish (retained) the tank's setpoint.
    Setpoint(SetpointMessage),
    /// Feed the alert engine.
    Signal { tank_id: String, signal: ScheduleSignal },
    /// Pause the schedule in the database (a critical alert on its tank).
    Pause { schedule_id: i64, tank_id: String },
}

/// The schedules that left the open set at a [`ScheduleTracker::sync`]: read them back and pass them to
/// [`ScheduleTracker::ended`] for their final setpoint message.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SyncOutcome {
    pub actions: Vec<TrackerAction>,
    /// Ids of schedules no longer open (completed, aborted or deleted).
    pub ended: Vec<i64>,
}

#[derive(Debug)]
struct Tracked {
    schedule: Schedule,
    progress: Progress,
    published: Option<SetpointMessage>,
    /// The step whose step-due signal is raised.
    due_raised: Option<usize>,
}

/// The open schedules being tracked, by tank.
#[derive(Debug)]
pub struct ScheduleTracker {
    tanks: HashMap<String, TankTracking>,
    default: TankTracking,
    tracked: HashMap<String, Tracked>,
}

impl ScheduleTracker {
    /// `tanks`: each configured tank's settings; a schedule on another tank uses `default`.
    pub fn new(tanks: HashMap<String, TankTracking>, default: TankTracking) -> Self {
        Self {
            tanks,
            default,
            tracked: HashMap::new(),
        }
    }

    fn settings(&self, tank_id: &str) -> TankTracking {
        self.tanks.get(tank_id).copied().unwrap_or(self.default)
    }

    /// The progress of the tank's open schedule, as of the last sync or tick.
    pub fn progress(&self, tank_id: &str) -> Option<&Progress> {
        self.tracked.get(tank_id).map(|t| &t.progress)
    }

    /// The open schedule on the tank.
    pub fn schedule(&self, tank_id: &str) -> Option<&Schedule> {
        self.tracked.get(tank_id).map(|t| &t.schedule)
    }

    /// Every open schedule, as last synced.
    pub fn schedules(&self) -> impl Iterator<Item = &Schedule> + '_ {
        self.tracked.values().map(|t| &t.schedule)
    }

    /// Every tracked schedule's progress.
    pub fn all_progress(&self) -> impl Iterator<Item = &Progress> + '_ {
        self.tracked.values().map(|t| &t.progress)
    }

    /// Takes the open schedules as stored now: new ones start being tracked, changed ones (a step marked
    /// done, paused, resumed) are re-evaluated, and missing ones end. Then acts as [`Self::on_tick`].
    pub fn sync(&mut self, open: Vec<Schedule>, now: DateTime<Utc>) -> SyncOutcome {
        let mut outcome = SyncOutcome::default();
        let mut seen: HashMap<String, ()> = HashMap::with_capacity(open.len());
        for schedule in open.into_iter().filter(|s| s.state.is_open()) {
            let tank_id = schedule.tank_id.clone();
            seen.insert(tank_id.clone(), ());
            match self.tracked.get_mut(&tank_id) {
                Some(t) if t.schedule.id == schedule.id => t.schedule = schedule,
                replaced => {
                    if let Some(old) = replaced {
                        outcome.ended.push(old.schedule.id);
                        clear_signals(&tank_id, old.due_raised.take(), &mut outcome.actions);
                    }
                    let progress = progress(&schedule, now);
                    self.tracked.insert(
                        tank_id,
                        Tracked {
                            schedule,
                            progress,
                            published: None,
                            due_raised: None,
                        },
                    );
                }
            }
        }
        let gone: Vec<String> = self
            .tracked
            .keys()
            .filter(|k| !seen.contains_key(*k))
            .cloned()
            .collect();
        for tank_id in gone {
            if let Some(mut old) = self.tracked.remove(&tank_id) {
                outcome.ended.push(old.schedule.id);
                clear_signals(&tank_id, old.due_raised.take(), &mut outcome.actions);
            }
        }
        outcome.actions.extend(self.on_tick(now));
        outcome
    }

    /// The final setpoint message of a schedule that ended (read back after [`Self::sync`] reported it).
    pub fn ended(&self, schedule: &Schedule, now: DateTime<Utc>) -> Option<TrackerAction> {
        if schedule.state.is_open() || self.tracked.contains_key(&schedule.tank_id) {
            return None;
        }
        Some(TrackerAction::Setpoint(SetpointMessage::from_progress(
            &progress(schedule, now),
        )))
    }

    /// Re-evaluates every schedule at `now`: changed setpoints to publish, steps falling due.
    pub fn on_tick(&mut self, now: DateTime<Utc>) -> Vec<TrackerAction> {
        let mut actions = Vec::new();
        let mut tanks: Vec<&String> = self.tracked.keys().collect();
        tanks.sort();
        let tanks: Vec<String> = tanks.into_iter().cloned().collect();
        for tank_id in tanks {
            let Some(t) = self.tracked.get_mut(&tank_id) else {
                continue;
            };
            t.progress = progress(&t.schedule, now);
            let message = SetpointMessage::from_progress(&t.progress);
            let changed = t
                .published
                .as_ref()
                .is_none_or(|old| message.differs_from(old, SETPOINT_RESOLUTION_SP));
            if changed {
                t.published = Some(message.clone());
                actions.push(TrackerAction::Setpoint(message));
            }
            step_due(&tank_id, t, &mut actions);
        }
        actions
    }

    /// A tank's measured salinity: on or off its schedule's setpoint.
    pub fn on_reading(&self, tank_id: &str, practical_salinity: f64) -> Option<TrackerAction> {
        let t = self.tracked.get(tank_id)?;
        if !practical_salinity.is_finite() {
            return None;
        }
        let band = self.settings(tank_id).band_sp;
        let p = &t.progress;
        let target = p.setpoint_practical_salinity;
        let (mut low, mut high) = (target, target);
        if let Some(next) = p.next_step.as_ref().filter(|n| n.overdue) {
            low = low.min(next.setpoint_practical_salinity);
            high = high.max(next.setpoint_practical_salinity);
        }
        let signal = if practical_salinity < low - band {
            ScheduleSignal::OffSchedule {
                deviation_sp: practical_salinity - low,
                target_sp: target,
            }
        } else if practical_salinity > high + band {
            ScheduleSignal::OffSchedule {
                deviation_sp: practical_salinity - high,
                target_sp: target,
            }
        } else {
            ScheduleSignal::OnSchedule
        };
        Some(TrackerAction::Signal {
            tank_id: tank_id.to_owned(),
            signal,
        })
    }

    /// A critical alert was raised on the tank: the schedule to pause, if the tank's settings ask for it and
    /// its schedule is running.
    pub fn on_critical_alert(&self, tank_id: &str) -> Option<TrackerAction> {
        let t = self.tracked.get(tank_id)?;
        (self.settings(tank_id).pause_on_critical && t.schedule.state == ScheduleState::Active).then(|| {
            TrackerAction::Pause {
                schedule_id: t.schedule.id,
                tank_id: tank_id.to_owned(),
            }
        })
    }
}

/// Raises the step-due signal for a newly due step; clears it once that step is done or the schedule
/// stops running.
fn step_due(tank_id: &str, t: &mut Tracked, actions: &mut Vec<TrackerAction>) {
    let running = t.schedule.state == ScheduleState::Active;
    let due_now = t.progress.next_step.as_ref().filter(|n| running && n.overdue);
    if t.due_raised.is_some() && t.due_raised != due_now.map(|n| n.step) {
        t.due_raised = None;
        actions.push(TrackerAction::Signal {
            tank_id: tank_id.to_owned(),
            signal: ScheduleSignal::StepDone,
        });
    }
    let Some(next) = due_now else {
        return;
    };
    if t.due_raised == Some(next.step) {
        return;
    }
    let Some(step) = next
        .step
        .checked_sub(1)
        .and_then(|i| t.schedule.plan.steps.get(i))
    else {
        return;
    };
    t.due_raised = Some(next.step);
    actions.push(TrackerAction::Signal {
        tank_id: tank_id.to_owned(),
        signal: ScheduleSignal::StepDue {
            step: u32::try_from(next.step).unwrap_or(u32::MAX),
            target_sp: next.setpoint_practical_salinity,
            due_at: next.due,
            action: StepAction {
                drain_l: step.drain_l,
                add_l: step.add_l,
                salt_kg: step.salt_kg,
                flow_l_min: step.flow_l_min,
            },
        },
    });
}

/// Clears both schedule alerts of a tank whose schedule ended.
fn clear_signals(tank_id: &str, due_raised: Option<usize>, actions: &mut Vec<TrackerAction>) {
    if due_raised.is_some() {
        actions.push(TrackerAction::Signal {
            tank_id: tank_id.to_owned(),
            signal: ScheduleSignal::StepDone,
        });
    }
    actions.push(TrackerAction::Signal {
        tank_id: tank_id.to_owned(),
        signal: ScheduleSignal::OnSchedule,
    });
}
