//! The acclimation-schedule hook: signals the planner sends, and how they map onto alert conditions.
//!
//! The schedule tracker ([`crate::schedule::tracker`]) decides when a tank is off its schedule or a step is
//! due; the engine only gives those signals hysteresis-free conditions with the usual minimum duration,
//! re-notify and lifecycle.
use chrono::{DateTime, Utc};

use crate::alerts::detector::Level;
use crate::alerts::kind::AlertKind;
use crate::alerts::observation::{Observation, StepAction};

/// What the acclimation planner reports about a tank.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ScheduleSignal {
    /// The tank's salinity is off the schedule's target.
    OffSchedule {
        /// Measured minus target, SP.
        deviation_sp: f64,
        /// The schedule's target now, SP.
        target_sp: f64,
    },
    /// The tank is back within the schedule's band.
    OnSchedule,
    /// A step of the schedule is due.
    StepDue {
        /// Step number, from 1.
        step: u32,
        /// The step's target, SP.
        target_sp: f64,
        /// When it is due.
        due_at: DateTime<Utc>,
        /// What the step asks staff to do.
        action: StepAction,
    },
    /// The due step has been carried out (or the schedule ended).
    StepDone,
}

impl ScheduleSignal {
    /// The alert kind, level and observation this signal stands for.
    pub fn condition(&self) -> (AlertKind, Level, Observation) {
        match *self {
            Self::OffSchedule {
                deviation_sp,
                target_sp,
            } => (
                AlertKind::ScheduleOff,
                Level::Raise,
                Observation::ScheduleOff {
                    deviation_sp,
                    target_sp,
                },
            ),
            Self::OnSchedule => (AlertKind::ScheduleOff, Level::Clear, Observation::ScheduleOk),
            Self::StepDue {
                step,
                target_sp,
                due_at,
                action,
            } => (
                AlertKind::ScheduleStepDue,
                Level::Raise,
                Observation::StepDue {
                    step,
                    target_sp,
                    due_at_ms: due_at.timestamp_millis(),
                    action,
                },
            ),
            Self::StepDone => (AlertKind::ScheduleStepDue, Level::Clear, Observation::ScheduleOk),
        }
    }
}
