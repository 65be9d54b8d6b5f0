//! `RetryPolicy`: how many times a failed delivery is retried and how long to wait between attempts
//! (capped exponential backoff with jitter; pure, the caller passes the random draw).
use std::time::Duration;

/// Retries after a failed attempt, and the capped exponential backoff between them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RetryPolicy {
    /// Retries after the first attempt (so at most `retries + 1` attempts).
    pub retries: u32,
    /// Backoff before the first retry, before jitter.
    pub initial: Duration,
    /// Cap on the backoff, before jitter.
    pub max: Duration,
}

impl RetryPolicy {
    /// Builds a policy from milliseconds (`initial_ms` above `max_ms` is capped at `max_ms`).
    pub fn from_ms(retries: u32, initial_ms: u64, max_ms: u64) -> Self {
        Self {
            retries,
            initial: Duration::from_millis(initial_ms.min(max_ms)),
            max: Duration::from_millis(max_ms),
        }
    }

    /// The wait before retry number `retry` (1-based): `min(max, initial * 2^(retry - 1))`, then "equal
    /// jitter" (half fixed, half scaled by `unit`, a uniform draw in [0, 1]; common practice), so that
    /// many senders retrying together spread out.
    pub fn delay(&self, retry: u32, unit: f64) -> Duration {
        let doublings = retry.saturating_sub(1).min(63);
        let factor = 1u64 << doublings;
        let initial_ms = u64::try_from(self.initial.as_millis()).unwrap_or(u64::MAX);
        let max_ms = u64::try_from(self.max.as_millis()).unwrap_or(u64::MAX);
        let capped_ms = initial_ms.saturating_mul(factor).min(max_ms);
        let unit = if unit.is_finite() {
            unit.clamp(0.0, 1.0)
        } else {
            0.0
        };
        let capped = Duration::from_millis(capped_ms);
        capped / 2 + capped.mul_f64(0.5 * unit)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn doubles_then_caps() {
        let policy = RetryPolicy::from_ms(10, 500, 60_000);
        // With the draw at 1 the wait is the full capped value.
        let full: Vec<u64> = (1..=9).map(|r| policy.delay(r, 1.0).as_millis() as u64).collect();
        assert_eq!(
            full,
            [500, 1000, 2000, 4000, 8000, 16_000, 32_000, 60_000, 60_000]
        );
        assert_eq!(policy.delay(1000, 1.0), Duration::from_secs(60));
    }

    #[test]
    fn jitter_stays_between_half_and_full() {
        let policy = RetryPolicy::from_ms(5, 400, 10_000);
        assert_eq!(policy.delay(2, 0.0), Duration::from_millis(400));
        assert_eq!(policy.delay(2, 0.5), Duration::from_millis(600));
        assert_eq!(policy.delay(2, 1.0), Duration::from_millis(800));
        assert_eq!(policy.delay(2, f64::NAN), Duration::from_millis(400));
        assert_eq!(policy.delay(2, 7.0), Duration::from_millis(800));
    }

    #[test]
    fn initial_above_max_is_capped() {
        let policy = RetryPolicy::from_ms(1, 5_000, 1_000);
        assert_eq!(policy.delay(1, 1.0), Duration::from_millis(1_000));
    }
}
