//! The simulated clock: each real second covers `speed` simulated seconds, and simulated time never
//! runs ahead of the real clock (readings are never stamped in the future).
//!
//! The simulated timeline ends at `real_start` (the real time the demo started): with a duration D it
//! starts at `real_start − D × speed`, so it reaches `real_start` when the demo ends; without one it
//! starts [`BACKLOG_WITHOUT_DURATION_S`] before `real_start` and, once caught up, follows the real clock.
use std::time::Duration;

use chrono::{DateTime, TimeDelta, Utc};
use thiserror::Error;

/// Simulated backlog when no duration is given: 7 days, seconds.
pub const BACKLOG_WITHOUT_DURATION_S: i64 = 7 * 86_400;
/// Longest simulated span a demo may cover: 366 days, seconds.
pub const MAX_SPAN_S: f64 = 366.0 * 86_400.0;
/// Highest accepted speed (simulated seconds per real second).
pub const MAX_SPEED: f64 = 1_000_000.0;

/// Refused clock settings.
#[derive(Debug, Error, PartialEq)]
pub enum ClockError {
    #[error("speed must be a number above 0 and at most {MAX_SPEED} (got {0})")]
    BadSpeed(f64),
    #[error("duration × speed covers {days:.0} simulated days; at most 366 are allowed")]
    SpanTooLong { days: f64 },
}

/// Maps real time to simulated time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SimClock {
    real_start: DateTime<Utc>,
    sim_start: DateTime<Utc>,
    speed: f64,
}

impl SimClock {
    /// A clock started at `real_start` (truncated to whole seconds) for an optional `duration`.
    pub fn new(
        real_start: DateTime<Utc>,
        duration: Option<Duration>,
        speed: f64,
    ) -> Result<Self, ClockError> {
        if !(speed.is_finite() && speed > 0.0 && speed <= MAX_SPEED) {
            return Err(ClockError::BadSpeed(speed));
        }
        let real_start = DateTime::from_timestamp(real_start.timestamp(), 0).unwrap_or(real_start);
        let span_s = match duration {
            Some(d) => d.as_secs_f64() * speed,
            None => BACKLOG_WITHOUT_DURATION_S as f64,
        };
        if span_s > MAX_SPAN_S {
            return Err(ClockError::SpanTooLong {
                days: span_s / 86_400.0,
            });
        }
        let span = TimeDelta::milliseconds((span_s * 1000.0).round() as i64);
        Ok(Self {
            real_start,
            sim_start: real_start - span,
            speed,
        })
    }

    /// Where the simulated timeline starts.
    pub fn sim_start(&self) -> DateTime<Utc> {
        self.sim_start
    }

    /// The real time the demo started (whole seconds): the end of the simulated backlog.
    pub fn real_start(&self) -> DateTime<Utc> {
        self.real_start
    }

    /// Simulated seconds per real second.
    pub fn speed(&self) -> f64 {
        self.speed
    }

    /// Simulated time at real time `real_now`: `sim_start + elapsed × speed`, never after `real_now`
    /// and never before `sim_start`.
    pub fn at(&self, real_now: DateTime<Utc>) -> DateTime<Utc> {
        let elapsed_ms = (real_now - self.real_start).num_milliseconds().max(0) as f64;
        let sim_ms = (elapsed_ms * self.speed).min(MAX_SPAN_S * 2000.0);
        let sim = self.sim_start + TimeDelta::milliseconds(sim_ms as i64);
        sim.min(real_now).max(self.sim_start)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn t(s: &str) -> DateTime<Utc> {
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc)
    }

    #[test]
    fn with_a_duration_the_timeline_ends_at_the_real_start() {
        let start = t("2025-04-02T06:00:00.750Z");
        let clock = SimClock::new(start, Some(Duration::from_secs(30)), 60.0).unwrap();
        assert_eq!(clock.real_start(), t("2025-04-02T06:00:00Z"));
        assert_eq!(clock.sim_start(), t("2025-04-02T05:30:00Z"));
        // 10 real seconds cover 10 simulated minutes.
        assert_eq!(clock.at(t("2025-04-02T06:00:10Z")), t("2025-04-02T05:40:00Z"));
        // At the end of the duration the simulated clock reaches the real start ...
        assert_eq!(clock.at(t("2025-04-02T06:00:30Z")), t("2025-04-02T06:00:00Z"));
        // ... and it never runs ahead of the real clock.
        let later = t("2025-04-02T06:01:00Z");
        assert!(clock.at(later) <= later);
    }

    #[test]
    fn without_a_duration_it_starts_a_week_back_and_is_capped_at_real_time() {
        let start = t("2025-04-02T06:00:00Z");
        let clock = SimClock::new(start, None, 3600.0).unwrap();
        assert_eq!(clock.sim_start(), t("2025-03-26T06:00:00Z"));
        assert_eq!(clock.at(t("2025-04-02T06:00:24Z")), t("2025-03-27T06:00:00Z"));
        // 7 days at 3600× take 168 real seconds to reach the real start; the real clock, by then
        // 168 s on, is caught 7 d / 3599 (≈ 168.05 s) after the start, and followed from then on.
        assert_eq!(clock.at(t("2025-04-02T06:02:48Z")), t("2025-04-02T06:00:00Z"));
        for real in [
            t("2025-04-02T06:02:49Z"),
            t("2025-04-02T06:10:00Z"),
            t("2025-04-09T00:00:00Z"),
        ] {
            assert_eq!(clock.at(real), real);
        }
        // Before the start (clock stepped back) it stays at the timeline start.
        assert_eq!(clock.at(t("2025-04-02T05:00:00Z")), clock.sim_start());
    }

    #[test]
    fn refuses_unusable_speeds_and_spans() {
        let start = t("2025-04-02T06:00:00Z");
        for speed in [0.0, -1.0, f64::NAN, f64::INFINITY, 2.0e6] {
            assert!(
                matches!(SimClock::new(start, None, speed), Err(ClockError::BadSpeed(_))),
                "{speed}"
            );
        }
        let year = Duration::from_secs(400 * 86_400);
        assert!(matches!(
            SimClock::new(start, Some(year), 1.0),
            Err(ClockError::SpanTooLong { .. })
        ));
    }
}
