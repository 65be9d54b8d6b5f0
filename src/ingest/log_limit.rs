//! A rate limiter for log lines: at most one line per key per interval, counting what it held back.
//!
//! Pure: the caller passes the time. A clock that steps backwards never panics; the step is treated as
//! "no time passed".
use std::collections::HashMap;
use std::hash::Hash;

use chrono::{DateTime, Duration, Utc};

/// Whether to write a log line now.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LogDecision {
    /// Write it, mentioning `suppressed` lines held back since the last one written for this key.
    Emit { suppressed: u64 },
    /// Hold it back (it is counted).
    Suppress,
}

#[derive(Debug, Clone, Copy)]
struct Slot {
    last_emitted: DateTime<Utc>,
    suppressed: u64,
}

/// Per-key log rate limiter.
#[derive(Debug, Clone)]
pub struct LogLimiter<K> {
    interval: Duration,
    slots: HashMap<K, Slot>,
}

impl<K: Eq + Hash + Clone> LogLimiter<K> {
    /// At most one line per key per `interval`.
    pub fn new(interval: Duration) -> Self {
        Self {
            interval,
            slots: HashMap::new(),
        }
    }

    /// Decides about one line for `key` at `now`.
    pub fn check(&mut self, key: &K, now: DateTime<Utc>) -> LogDecision {
        match self.slots.get_mut(key) {
            None => {
                self.slots.insert(
                    key.clone(),
                    Slot {
                        last_emitted: now,
                        suppressed: 0,
                    },
                );
                LogDecision::Emit { suppressed: 0 }
            }
            Some(slot) if now - slot.last_emitted >= self.interval => {
                let suppressed = slot.suppressed;
                *slot = Slot {
                    last_emitted: now,
                    suppressed: 0,
                };
                LogDecision::Emit { suppressed }
            }
            Some(slot) => {
                slot.suppressed = slot.suppressed.saturating_add(1);
                LogDecision::Suppress
            }
        }
    }

    /// Keys whose interval has passed with lines still held back, with their counts (reset to 0), so a
    /// periodic summary can report them even if no new line comes.
    pub fn drain_suppressed(&mut self, now: DateTime<Utc>) -> Vec<(K, u64)> {
        let mut out = Vec::new();
        for (key, slot) in &mut self.slots {
            if slot.suppressed > 0 && now - slot.last_emitted >= self.interval {
                out.push((key.clone(), slot.suppressed));
                slot.suppressed = 0;
                slot.last_emitted = now;
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(s: i64) -> DateTime<Utc> {
        DateTime::from_timestamp(1_743_573_600 + s, 0).unwrap()
    }

    #[test]
    fn one_line_per_interval_per_key_with_counts() {
        let mut limiter = LogLimiter::new(Duration::seconds(60));
        assert_eq!(limiter.check(&"a", at(0)), LogDecision::Emit { suppressed: 0 });
        assert_eq!(limiter.check(&"a", at(1)), LogDecision::Suppress);
        assert_eq!(limiter.check(&"a", at(59)), LogDecision::Suppress);
        assert_eq!(limiter.check(&"b", at(30)), LogDecision::Emit { suppressed: 0 });
        assert_eq!(limiter.check(&"a", at(60)), LogDecision::Emit { suppressed: 2 });
        assert_eq!(limiter.check(&"a", at(61)), LogDecision::Suppress);
        // Clock stepping back: still suppressed, no panic.
        assert_eq!(limiter.check(&"a", at(-1000)), LogDecision::Suppress);
    }

    #[test]
    fn drain_reports_held_back_lines_once() {
        let mut limiter = LogLimiter::new(Duration::seconds(10));
        limiter.check(&1, at(0));
        limiter.check(&1, at(1));
        limiter.check(&1, at(2));
        assert!(limiter.drain_suppressed(at(5)).is_empty());
        assert_eq!(limiter.drain_suppressed(at(10)), vec![(1, 2)]);
        assert!(limiter.drain_suppressed(at(30)).is_empty());
    }
}
