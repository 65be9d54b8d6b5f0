//! The JSON shapes of a schedule shown to people, shared by `halotank schedule --format json` and the
//! HTTP API: the full report (schedule, progress, moved timeline, caution) and the one-line summary.
use chrono::{DateTime, Utc};
use serde::Serialize;

use super::progress::{progress, timeline, Progress};
use super::state::ScheduleState;
use super::transitions::Schedule;

/// `schedule show --format json`: the schedule with its plan and steps done, progress, due times, caution.
#[derive(Debug, Clone, Serialize)]
pub struct ScheduleReport<'a> {
    pub schedule: &'a Schedule,
    pub progress: Progress,
    /// The moved due time of every step.
    pub due: Vec<DateTime<Utc>>,
    pub caution: &'a str,
}

impl<'a> ScheduleReport<'a> {
    /// The report as at `now`.
    pub fn at(schedule: &'a Schedule, now: DateTime<Utc>) -> Self {
        Self {
            schedule,
            progress: progress(schedule, now),
            due: timeline(schedule, now),
            caution: &schedule.plan.caution,
        }
    }
}

/// One entry of `schedule list --format json`.
#[derive(Debug, Clone, Serialize)]
pub struct ScheduleSummary<'a> {
    pub id: i64,
    pub tank_id: &'a str,
    pub state: ScheduleState,
    pub created_at: DateTime<Utc>,
    pub method: &'a str,
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
    pub progress: Progress,
}

impl<'a> ScheduleSummary<'a> {
    /// The summary as at `now`.
    pub fn at(s: &'a Schedule, now: DateTime<Utc>) -> Self {
        Self {
            id: s.id,
            tank_id: &s.tank_id,
            state: s.state,
            created_at: s.created_at,
            method: &s.plan.method,
            from_practical_salinity: s.plan.from_practical_salinity,
            to_practical_salinity: s.plan.to_practical_salinity,
            progress: progress(s, now),
        }
    }
}
