//! Capped exponential reconnect backoff with jitter (pure: the random source is passed in).
//!
//! Delay for attempt `n` (0-based): a base of `min * 2^n` capped at `max`, then "equal
//! jitter": a uniform pick in `[base / 2, base]`, never below `min`. A connection that stayed
//! up for at least `stable_after` resets the sequence; a connection that was accepted and
//! dropped at once (for example two processes fighting over one client id) does not, so a
//! flapping broker is not hammered at the minimum delay.

use std::time::Duration;

use rand::Rng;

/// Reconnect delay policy.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct BackoffPolicy {
    /// First delay after a failure (and the floor of every delay).
    pub min: Duration,
    /// Ceiling of the delay.
    pub max: Duration,
    /// A connection that lasted this long counts as good and resets the backoff.
    pub stable_after: Duration,
}

impl Default for BackoffPolicy {
    fn default() -> Self {
        Self {
            min: Duration::from_millis(500),
            max: Duration::from_secs(60),
            stable_after: Duration::from_secs(30),
        }
    }
}

/// State of one backoff sequence.
#[derive(Debug, Clone)]
pub struct Backoff {
    policy: BackoffPolicy,
    attempt: u32,
}

impl Backoff {
    /// A fresh sequence. A `max` below `min` is treated as equal to `min`.
    pub fn new(policy: BackoffPolicy) -> Self {
        let max = policy.max.max(policy.min);
        Self {
            policy: BackoffPolicy { max, ..policy },
            attempt: 0,
        }
    }

    /// The policy in force (with `max >= min`).
    pub fn policy(&self) -> BackoffPolicy {
        self.policy
    }

    /// Number of delays handed out since the last reset.
    pub fn attempt(&self) -> u32 {
        self.attempt
    }

    /// Un-jittered delay for the current attempt: `min * 2^attempt`, capped at `max`.
    pub fn base_delay(&self) -> Duration {
        let factor = 1u32.checked_shl(self.attempt.min(31)).unwrap_or(u32::MAX);
        self.policy
            .min
            .checked_mul(factor)
            .map_or(self.policy.max, |d| d.min(self.policy.max))
    }

    /// The next delay to wait before reconnecting; advances the sequence.
    pub fn next_delay<R: Rng + ?Sized>(&mut self, rng: &mut R) -> Duration {
        let base = self.base_delay();
        self.attempt = self.attempt.saturating_add(1);
        let half = base / 2;
        let jitter_nanos = (base - half).as_nanos().min(u128::from(u64::MAX)) as u64;
        let jitter = Duration::from_nanos(rng.gen_range(0..=jitter_nanos));
        (half + jitter).max(self.policy.min)
    }

    /// Start again from `min`.
    pub fn reset(&mut self) {
        self.attempt = 0;
    }

    /// Record how long an established connection lasted; resets if it was a good one.
    pub fn connection_ended(&mut self, lasted: Duration) {
        if lasted >= self.policy.stable_after {
            self.reset();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::rngs::StdRng;
    use rand::SeedableRng;

    fn policy() -> BackoffPolicy {
        BackoffPolicy {
            min: Duration::from_millis(100),
            max: Duration::from_secs(5),
            stable_after: Duration::from_secs(10),
        }
    }

    #[test]
    fn delays_stay_within_jitter_bounds_and_cap() {
        let mut rng = StdRng::seed_from_u64(7);
        let mut b = Backoff::new(policy());
        for _ in 0..200 {
            let base = b.base_delay();
            let d = b.next_delay(&mut rng);
            assert!(d >= base / 2, "{d:?} below half of {base:?}");
            assert!(d <= base, "{d:?} above {base:?}");
            assert!(d >= policy().min);
            assert!(d <= policy().max);
        }
    }

    #[test]
    fn base_grows_by_doubling_until_the_cap() {
        let mut rng = StdRng::seed_from_u64(1);
        let mut b = Backoff::new(policy());
        let expected_ms = [100u64, 200, 400, 800, 1600, 3200, 5000, 5000, 5000];
        for ms in expected_ms {
            assert_eq!(b.base_delay(), Duration::from_millis(ms));
            b.next_delay(&mut rng);
        }
        // Far past any overflow of the shift or the multiplication.
        for _ in 0..100 {
            b.next_delay(&mut rng);
        }
        assert_eq!(b.base_delay(), Duration::from_secs(5));
    }

    #[test]
    fn jitter_actually_varies() {
        let mut rng = StdRng::seed_from_u64(42);
        let delays: Vec<Duration> = (0..20)
            .map(|_| {
                let mut b = Backoff::new(policy());
                for _ in 0..4 {
                    b.next_delay(&mut rng);
                }
                b.next_delay(&mut rng)
            })
            .collect();
        let first = delays[0];
        assert!(
            delays.iter().any(|d| *d != first),
            "all 20 delays equal: {first:?}"
        );
    }

    #[test]
    fn good_connection_resets_short_one_does_not() {
        let mut rng = StdRng::seed_from_u64(3);
        let mut b = Backoff::new(policy());
        for _ in 0..5 {
            b.next_delay(&mut rng);
        }
        assert_eq!(b.base_delay(), Duration::from_millis(3200));
        b.connection_ended(Duration::from_secs(2));
        assert_eq!(
            b.base_delay(),
            Duration::from_millis(3200),
            "flapping connection must not reset"
        );
        b.connection_ended(Duration::from_secs(10));
        assert_eq!(b.attempt(), 0);
        assert_eq!(b.base_delay(), Duration::from_millis(100));
    }

    #[test]
    fn max_below_min_is_clamped() {
        let mut rng = StdRng::seed_from_u64(9);
        let mut b = Backoff::new(BackoffPolicy {
            min: Duration::from_secs(2),
            max: Duration::from_secs(1),
            stable_after: Duration::from_secs(1),
        });
        for _ in 0..10 {
            assert_eq!(b.next_delay(&mut rng), Duration::from_secs(2));
        }
    }

    #[test]
    fn same_seed_same_sequence() {
        let run = |seed| {
            let mut rng = StdRng::seed_from_u64(seed);
            let mut b = Backoff::new(policy());
            (0..10).map(|_| b.next_delay(&mut rng)).collect::<Vec<_>>()
        };
        assert_eq!(run(11), run(11));
    }
}
