//! Why a schedule refused a transition (pause, resume, abort, step done).
use thiserror::Error;

/// A refused transition. The schedule is left unchanged.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum ScheduleError {
    /// The step was already marked done (a repeat would double a drain, a flow change or a salt dose).
    #[error("step {step} of schedule {schedule_id} was already marked done at {done_at}")]
    StepAlreadyDone {
        schedule_id: i64,
        step: usize,
        done_at: String,
    },
    /// Steps are done in order: this one is not the next.
    #[error("step {step} of schedule {schedule_id} is out of order: the next step to do is step {next}")]
    StepOutOfOrder {
        schedule_id: i64,
        step: usize,
        next: usize,
    },
    /// The plan has no such step.
    #[error("schedule {schedule_id} has no step {step} (it has steps 1 to {steps})")]
    NoSuchStep {
        schedule_id: i64,
        step: usize,
        steps: usize,
    },
    /// Every step is done already.
    #[error("every step of schedule {schedule_id} is done")]
    AllStepsDone { schedule_id: i64 },
    /// The transition needs another state (for example resume on a schedule that is not paused).
    #[error("schedule {schedule_id} is {state}: cannot {action} it{hint}")]
    WrongState {
        schedule_id: i64,
        state: &'static str,
        action: &'static str,
        hint: &'static str,
    },
    /// The given time is before the schedule's last change (a clock stepped back).
    #[error("time {now} is before schedule {schedule_id}'s last change at {last}; check the clock")]
    TimeBeforeLastChange {
        schedule_id: i64,
        now: String,
        last: String,
    },
}
