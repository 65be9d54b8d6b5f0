//! The setpoint message a running schedule publishes for its tank (retained, for a dosing controller to
//! follow): where the tank should be now, which step that is, and when the next one is due.
use chrono::{DateTime, SecondsFormat, Utc};
use serde::Serialize;

use super::progress::Progress;

/// The next step as published.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SetpointNext {
    /// 1-based.
    pub step: usize,
    /// When it is due on the moved timeline, RFC 3339 UTC.
    pub due: String,
    pub overdue: bool,
    pub setpoint_practical_salinity: f64,
}

/// JSON of `<prefix>/tank/<id>/setpoint`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SetpointMessage {
    pub tank: String,
    pub schedule_id: i64,
    /// `active`, `paused`, `aborted` or `completed`.
    pub state: &'static str,
    /// Steps done: the setpoint below is the one step `step` left the tank at (0: not started).
    pub step: usize,
    pub steps_total: usize,
    /// Where the tank should be now, SP.
    pub setpoint_practical_salinity: f64,
    #[serde(rename = "setpoint_osmolality_mOsm_kg")]
    pub setpoint_osmolality_mosm_kg: Option<f64>,
    pub next_step: Option<SetpointNext>,
    /// When the next step is due (the same as `next_step.due`), RFC 3339 UTC.
    pub next_step_time: Option<String>,
    /// Steps done minus steps due: above 0 ahead, below 0 behind.
    pub steps_ahead: i64,
    pub expected_finish: Option<String>,
}

impl SetpointMessage {
    /// The message for a schedule's progress.
    pub fn from_progress(p: &Progress) -> Self {
        let next_step = p.next_step.as_ref().map(|n| SetpointNext {
            step: n.step,
            due: rfc3339(n.due),
            overdue: n.overdue,
            setpoint_practical_salinity: n.setpoint_practical_salinity,
        });
        Self {
            tank: p.tank_id.clone(),
            schedule_id: p.schedule_id,
            state: p.state,
            step: p.steps_done,
            steps_total: p.steps_total,
            setpoint_practical_salinity: p.setpoint_practical_salinity,
            setpoint_osmolality_mosm_kg: p.setpoint_osmolality_mosm_kg,
            next_step_time: next_step.as_ref().map(|n| n.due.clone()),
            next_step,
            steps_ahead: p.steps_ahead,
            expected_finish: p.expected_finish.map(rfc3339),
        }
    }

    /// Whether `other` says something a follower must hear: a setpoint move of at least `resolution_sp` (a
    /// flow step's setpoint creeps continuously), another schedule, state, step, next step or pace, or the
    /// expected finish appearing or going (its time moves every second while a step is late, so that alone
    /// is not republished).
    pub fn differs_from(&self, other: &SetpointMessage, resolution_sp: f64) -> bool {
        let moved =
            (self.setpoint_practical_salinity - other.setpoint_practical_salinity).abs() >= resolution_sp;
        moved
            || self.schedule_id != other.schedule_id
            || self.state != other.state
            || self.step != other.step
            || self.next_step != other.next_step
            || self.steps_ahead != other.steps_ahead
            || self.expected_finish.is_some() != other.expected_finish.is_some()
    }
}

/// Topic of a tank's setpoint.
pub fn setpoint_topic(prefix: &str, tank_id: &str) -> String {
    format!("{prefix}/tank/{tank_id}/setpoint")
}

fn rfc3339(time: DateTime<Utc>) -> String {
    time.to_rfc3339_opts(SecondsFormat::Secs, true)
}
