//! `DeliveryCounters`: what each delivery channel did with the events it was given.
use std::sync::atomic::{AtomicU64, Ordering};

use serde::Serialize;

/// A delivery channel.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ChannelKind {
    /// HTTP POST of the event JSON.
    Webhook,
    /// A configured program with the event JSON on stdin.
    Exec,
}

impl ChannelKind {
    /// The spelling used in logs.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Webhook => "webhook",
            Self::Exec => "exec",
        }
    }
}

/// Counts of events, per channel or summed. An event below a channel's minimum severity is not counted.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct DeliveryCounters {
    /// Events delivered (first attempt or a retry succeeded).
    pub delivered: u64,
    /// Retry attempts made (not events).
    pub retried: u64,
    /// Events given up after all attempts failed (or could not be encoded).
    pub failed: u64,
    /// Events not delivered because the queue was full, delivery was shut down, or the shutdown
    /// deadline passed before they were done.
    pub dropped: u64,
}

impl std::ops::Add for DeliveryCounters {
    type Output = Self;

    /// Field-by-field sum.
    fn add(self, other: Self) -> Self {
        Self {
            delivered: self.delivered + other.delivered,
            retried: self.retried + other.retried,
            failed: self.failed + other.failed,
            dropped: self.dropped + other.dropped,
        }
    }
}

/// The live counters one channel's task and the submitting side update.
#[derive(Debug, Default)]
pub(crate) struct SharedCounters {
    delivered: AtomicU64,
    retried: AtomicU64,
    failed: AtomicU64,
    dropped: AtomicU64,
}

impl SharedCounters {
    pub(crate) fn delivered(&self) {
        self.delivered.fetch_add(1, Ordering::Relaxed);
    }

    pub(crate) fn retried(&self) {
        self.retried.fetch_add(1, Ordering::Relaxed);
    }

    pub(crate) fn failed(&self) {
        self.failed.fetch_add(1, Ordering::Relaxed);
    }

    pub(crate) fn dropped(&self) {
        self.dropped.fetch_add(1, Ordering::Relaxed);
    }

    pub(crate) fn snapshot(&self) -> DeliveryCounters {
        DeliveryCounters {
            delivered: self.delivered.load(Ordering::Relaxed),
            retried: self.retried.load(Ordering::Relaxed),
            failed: self.failed.load(Ordering::Relaxed),
            dropped: self.dropped.load(Ordering::Relaxed),
        }
    }
}
