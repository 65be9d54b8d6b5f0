//! Acclimation schedules: a stored plan being carried out on one tank, and where it stands.
//!
//! Pure: no SQLite, no clock (every time is passed in). Storage lives in
//! [`crate::storage::schedules`]; the CLI in `halotank schedule`.
//!
//! - [`plan_copy`]: the owned copy of the planner's plan a schedule keeps.
//! - [`state`]: active, paused, aborted, completed; the record of a step marked done.
//! - [`transitions`]: the schedule and its checked transitions (pause, resume, abort, step done).
//! - [`progress`]: step n of m, setpoint now, next step, ahead or behind, expected finish.
//! - [`report`]: the JSON shapes shown to people (CLI and HTTP API).
//! - [`error`]: refused transitions.
pub mod error;
pub mod plan_copy;
pub mod progress;
pub mod report;
pub mod state;
pub mod transitions;

pub use error::ScheduleError;
pub use plan_copy::SchedulePlan;
pub use progress::{progress, timeline, NextStep, Progress};
pub use report::{ScheduleReport, ScheduleSummary};
pub use state::{ScheduleState, StepDone};
pub use transitions::Schedule;

#[cfg(test)]
mod tests;
