//! A schedule: a plan being carried out on one tank, and its checked transitions. Every transition takes
//! the time as a parameter and leaves the schedule unchanged when it refuses.
use chrono::{DateTime, Duration, Utc};
use serde::{Deserialize, Serialize};

use super::error::ScheduleError;
use super::plan_copy::SchedulePlan;
use super::state::{duration_ms, ScheduleState, StepDone};

/// A plan being carried out on one tank.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Schedule {
    pub id: i64,
    pub tank_id: String,
    pub created_at: DateTime<Utc>,
    pub plan: SchedulePlan,
    pub state: ScheduleState,
    /// The steps marked done, in step order (1, 2, 3, ...).
    pub steps_done: Vec<StepDone>,
    /// Time spent paused in pauses that have ended (a running pause is counted from `Paused::since`).
    #[serde(with = "duration_ms")]
    pub paused_total: Duration,
}

impl Schedule {
    /// A new active schedule with nothing done.
    pub fn new(id: i64, tank_id: String, created_at: DateTime<Utc>, plan: SchedulePlan) -> Self {
        Self {
            id,
            tank_id,
            created_at,
            plan,
            state: ScheduleState::Active,
            steps_done: Vec::new(),
            paused_total: Duration::zero(),
        }
    }

    /// Paused time up to `now`, the running pause included.
    pub fn paused_until(&self, now: DateTime<Utc>) -> Duration {
        match self.state {
            ScheduleState::Paused { since } if now > since => self.paused_total + (now - since),
            _ => self.paused_total,
        }
    }

    /// The next step to do (1-based), or `None` when every step is done.
    pub fn next_step(&self) -> Option<usize> {
        let next = self.steps_done.len() + 1;
        (next <= self.plan.steps.len()).then_some(next)
    }

    /// The latest time the schedule changed (creation, a step, a pause): a later transition may not be
    /// before it.
    fn last_change(&self) -> DateTime<Utc> {
        let mut last = self.created_at;
        if let Some(done) = self.steps_done.last() {
            last = last.max(done.done_at);
        }
        match self.state {
            ScheduleState::Paused { since } => last.max(since),
            ScheduleState::Aborted { at } | ScheduleState::Completed { at } => last.max(at),
            ScheduleState::Active => last,
        }
    }

    fn check_time(&self, now: DateTime<Utc>) -> Result<(), ScheduleError> {
        let last = self.last_change();
        if now < last {
            return Err(ScheduleError::TimeBeforeLastChange {
                schedule_id: self.id,
                now: now.to_rfc3339(),
                last: last.to_rfc3339(),
            });
        }
        Ok(())
    }

    fn wrong_state(&self, action: &'static str, hint: &'static str) -> ScheduleError {
        ScheduleError::WrongState {
            schedule_id: self.id,
            state: self.state.name(),
            action,
            hint,
        }
    }

    /// Pauses an active schedule at `now`.
    pub fn pause(&mut self, now: DateTime<Utc>) -> Result<(), ScheduleError> {
        if self.state != ScheduleState::Active {
            return Err(self.wrong_state("pause", " (only an active schedule can be paused)"));
        }
        self.check_time(now)?;
        self.state = ScheduleState::Paused { since: now };
        Ok(())
    }

    /// Resumes a paused schedule at `now`; the paused time moves the remaining steps later.
    pub fn resume(&mut self, now: DateTime<Utc>) -> Result<(), ScheduleError> {
        let ScheduleState::Paused { since } = self.state else {
            return Err(self.wrong_state("resume", " (only a paused schedule can be resumed)"));
        };
        self.check_time(now)?;
        self.paused_total += now - since;
        self.state = ScheduleState::Active;
        Ok(())
    }

    /// Aborts an active or paused schedule at `now`. A running pause is closed first.
    pub fn abort(&mut self, now: DateTime<Utc>) -> Result<(), ScheduleError> {
        if !self.state.is_open() {
            return Err(self.wrong_state("abort", ""));
        }
        self.check_time(now)?;
        self.paused_total = self.paused_until(now);
        self.state = ScheduleState::Aborted { at: now };
        Ok(())
    }

    /// Marks a step done at `now` by `by`. `step` defaults to the next one; a step already done or out of
    /// order is refused, so a retry or a restart can neither repeat nor skip a step. Marking the last step
    /// completes the schedule. Returns the step marked.
    pub fn mark_step_done(
        &mut self,
        step: Option<usize>,
        now: DateTime<Utc>,
        by: &str,
    ) -> Result<usize, ScheduleError> {
        let steps = self.plan.steps.len();
        if let Some(s) = step {
            if s == 0 || s > steps {
                return Err(ScheduleError::NoSuchStep {
                    schedule_id: self.id,
                    step: s,
                    steps,
                });
            }
            if let Some(done) = self.steps_done.iter().find(|d| d.step == s) {
                return Err(ScheduleError::StepAlreadyDone {
                    schedule_id: self.id,
                    step: s,
                    done_at: done.done_at.to_rfc3339(),
                });
            }
        }
        match self.state {
            ScheduleState::Active => {}
            ScheduleState::Paused { .. } => {
                return Err(self.wrong_state("mark a step done on", " (resume it first)"))
            }
            _ => return Err(self.wrong_state("mark a step done on", "")),
        }
        let next = self
            .next_step()
            .ok_or(ScheduleError::AllStepsDone { schedule_id: self.id })?;
        let step = step.unwrap_or(next);
        if step != next {
            return Err(ScheduleError::StepOutOfOrder {
                schedule_id: self.id,
                step,
                next,
            });
        }
        self.check_time(now)?;
        self.steps_done.push(StepDone {
            step,
            done_at: now,
            by: by.to_owned(),
            paused_total_before: self.paused_total,
        });
        if step == steps {
            self.state = ScheduleState::Completed { at: now };
        }
        Ok(step)
    }
}
