//! Where a schedule stands at a given time: step n of m, the setpoint now, the next step and when it is
//! due, ahead or behind, and the expected finish.
//!
//! Timeline: step i is due at its planned time, moved later by the time spent paused and by lateness.
//! Lateness accrues when a step is marked after its (moved) due time: the rest of the plan keeps its
//! intervals from then on, so a late step never squeezes the later ones beyond the planned rate. A step done
//! early does not pull the rest forward (that would exceed the planned rate).
//!
//! Setpoint, per the planner's step semantics: an exchange or salt step acts when it is marked done and the
//! tank then holds its setpoint; a flow-through step ramps from its start salinity to its setpoint over its
//! interval, counted from when it was marked done (paused time excluded). Within a flow step the salinity
//! follows the well-mixed constant-inflow curve `1 - exp(-Q t / V)` scaled to reach the setpoint at the end
//! of the interval (dilution of a well-mixed tank at constant volume; the density change within one step is
//! neglected here).
use chrono::{DateTime, Duration, Utc};
use serde::Serialize;

use super::state::ScheduleState;
use super::transitions::Schedule;
use crate::planner::water::osmolality_mosm_kg;

/// The next step to do.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NextStep {
    /// 1-based.
    pub step: usize,
    /// When it is due on the moved timeline.
    pub due: DateTime<Utc>,
    /// Whether it is due already.
    pub overdue: bool,
    pub setpoint_practical_salinity: f64,
}

/// A schedule's progress at one time.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Progress {
    pub schedule_id: i64,
    pub tank_id: String,
    /// `active`, `paused`, `aborted` or `completed`.
    pub state: &'static str,
    /// m: steps in the plan.
    pub steps_total: usize,
    /// n: steps marked done.
    pub steps_done: usize,
    /// Steps due by now on the moved timeline.
    pub steps_due: usize,
    /// `steps_done - steps_due`: above 0 ahead, below 0 behind.
    pub steps_ahead: i64,
    /// The setpoint the tank should be at now.
    pub setpoint_practical_salinity: f64,
    /// Its osmolality (absent only if the planner's equations refuse the value).
    #[serde(rename = "setpoint_osmolality_mOsm_kg")]
    pub setpoint_osmolality_mosm_kg: Option<f64>,
    pub next_step: Option<NextStep>,
    /// Time spent paused, hours (a running pause included).
    pub paused_h: f64,
    /// Lateness the timeline has taken on, hours (late steps, and the next step if overdue now).
    pub late_h: f64,
    /// When the last step's interval ends if the next step is done now and the rest on time; `None` once
    /// aborted.
    pub expected_finish: Option<DateTime<Utc>>,
}

/// Hours in a duration.
fn hours(d: Duration) -> f64 {
    d.num_milliseconds() as f64 / 3_600_000.0
}

/// The moved due time of every step, and the lateness carried after the steps done.
fn due_times(schedule: &Schedule, now: DateTime<Utc>) -> (Vec<DateTime<Utc>>, Duration) {
    let plan = &schedule.plan;
    let paused_now = schedule.paused_until(now);
    let mut late = Duration::zero();
    let mut due = Vec::with_capacity(plan.steps.len());
    for (i, step) in plan.steps.iter().enumerate() {
        let offset = step.time - plan.start;
        match schedule.steps_done.get(i) {
            Some(done) => {
                let at = plan.start + offset + done.paused_total_before + late;
                if done.done_at > at {
                    late += done.done_at - at;
                }
                due.push(at);
            }
            None => due.push(plan.start + offset + paused_now + late),
        }
    }
    (due, late)
}

/// The moved due time of every step at `now` (paused time and lateness included).
pub fn timeline(schedule: &Schedule, now: DateTime<Utc>) -> Vec<DateTime<Utc>> {
    due_times(schedule, now).0
}

/// Fraction of a flow step's change reached after `t_h` of its `duration_h`, for an inflow of
/// `flow_l_min` into `volume_l`.
fn flow_fraction(t_h: f64, duration_h: f64, flow_l_min: f64, volume_l: f64) -> f64 {
    if duration_h <= 0.0 {
        return 1.0;
    }
    let t = t_h.clamp(0.0, duration_h);
    let rate_per_h = if volume_l > 0.0 {
        flow_l_min * 60.0 / volume_l
    } else {
        0.0
    };
    let whole = rate_per_h * duration_h;
    if !(whole.is_finite() && whole > 1e-9) {
        return t / duration_h;
    }
    (-(-rate_per_h * t).exp_m1()) / (-(-whole).exp_m1())
}

/// The setpoint (SP, osmolality) at `now`.
fn setpoint(schedule: &Schedule, now: DateTime<Utc>) -> (f64, Option<f64>) {
    let plan = &schedule.plan;
    let temperature_c = plan.assumptions.temperature_c;
    let Some(done) = schedule.steps_done.last() else {
        let sp = plan.from_practical_salinity;
        return (sp, osmolality_mosm_kg(sp, temperature_c).ok());
    };
    let Some(step) = plan.steps.get(done.step.saturating_sub(1)) else {
        let sp = plan.to_practical_salinity;
        return (sp, osmolality_mosm_kg(sp, temperature_c).ok());
    };
    let held = (
        step.setpoint_practical_salinity,
        Some(step.setpoint_osmolality_mosm_kg),
    );
    if !plan.is_flow() || step.from_practical_salinity == step.setpoint_practical_salinity {
        return held;
    }
    let paused_since_done = schedule.paused_until(now) - done.paused_total_before;
    let active_h = hours(now - done.done_at - paused_since_done);
    let f = flow_fraction(
        active_h,
        step.duration_h,
        step.flow_l_min.unwrap_or(0.0),
        plan.assumptions.tank_volume_l,
    );
    if f >= 1.0 {
        return held;
    }
    let sp =
        step.from_practical_salinity + (step.setpoint_practical_salinity - step.from_practical_salinity) * f;
    (sp, osmolality_mosm_kg(sp, temperature_c).ok())
}

/// The schedule's progress at `now`. An aborted schedule is evaluated at its abort time.
pub fn progress(schedule: &Schedule, now: DateTime<Utc>) -> Progress {
    let now = match schedule.state {
        ScheduleState::Aborted { at } => now.min(at),
        _ => now,
    };
    let plan = &schedule.plan;
    let (due, late_done) = due_times(schedule, now);
    let steps_due = due.iter().filter(|&&at| at <= now).count();
    let steps_done = schedule.steps_done.len();
    let aborted = matches!(schedule.state, ScheduleState::Aborted { .. });
    let next = schedule.next_step().and_then(|n| {
        let step = plan.steps.get(n - 1)?;
        let at = *due.get(n - 1)?;
        Some(NextStep {
            step: n,
            due: at,
            overdue: at <= now,
            setpoint_practical_salinity: step.setpoint_practical_salinity,
        })
    });
    let late_now = match &next {
        Some(n) if n.due < now => now - n.due,
        _ => Duration::zero(),
    };
    let paused = schedule.paused_until(now);
    let (sp, osm) = setpoint(schedule, now);
    Progress {
        schedule_id: schedule.id,
        tank_id: schedule.tank_id.clone(),
        state: schedule.state.name(),
        steps_total: plan.steps.len(),
        steps_done,
        steps_due,
        steps_ahead: steps_done as i64 - steps_due as i64,
        setpoint_practical_salinity: sp,
        setpoint_osmolality_mosm_kg: osm,
        next_step: if aborted { None } else { next },
        paused_h: hours(paused),
        late_h: hours(late_done + late_now),
        expected_finish: (!aborted).then(|| plan.end + paused + late_done + late_now),
    }
}
