//! A schedule's state (active, paused, aborted, completed) and the record of one step marked done.
use chrono::{DateTime, Duration, Utc};
use serde::{Deserialize, Serialize};

/// Where a schedule stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", tag = "state")]
pub enum ScheduleState {
    /// Running: steps fall due on the (shifted) timeline.
    Active,
    /// Stopped since `since`; the remaining timeline moves later by the paused time.
    Paused { since: DateTime<Utc> },
    /// Given up at `at`; no further steps.
    Aborted { at: DateTime<Utc> },
    /// Every step done; the last at `at`.
    Completed { at: DateTime<Utc> },
}

impl ScheduleState {
    /// The stored and printed name.
    pub fn name(&self) -> &'static str {
        match self {
            Self::Active => "active",
            Self::Paused { .. } => "paused",
            Self::Aborted { .. } => "aborted",
            Self::Completed { .. } => "completed",
        }
    }

    /// Active or paused: the tank's one open schedule.
    pub fn is_open(&self) -> bool {
        matches!(self, Self::Active | Self::Paused { .. })
    }
}

/// One step marked done.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct StepDone {
    /// 1-based, as in the plan.
    pub step: usize,
    pub done_at: DateTime<Utc>,
    /// Who did it.
    pub by: String,
    /// The schedule's total paused time when the step was marked (steps are only marked while active, so
    /// this is exact); lets the timeline tell pauses before the step from pauses after it.
    #[serde(with = "duration_ms")]
    pub paused_total_before: Duration,
}

/// A `chrono::Duration` as whole milliseconds.
pub(crate) mod duration_ms {
    use chrono::Duration;
    use serde::{Deserialize, Deserializer, Serializer};

    pub fn serialize<S: Serializer>(d: &Duration, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_i64(d.num_milliseconds())
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Duration, D::Error> {
        let ms = i64::deserialize(d)?;
        Duration::try_milliseconds(ms).ok_or_else(|| serde::de::Error::custom("duration out of range"))
    }
}
