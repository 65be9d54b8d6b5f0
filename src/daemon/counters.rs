//! What the daemon has seen since it started: accepted, rejected by reason, ignored by reason.
use std::collections::BTreeMap;

use serde::Serialize;

use crate::ingest::{IgnoreReason, RejectReason};

/// Message counts since start. Owned by the ingest loop; copied into the daemon state row.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct Counters {
    /// Messages that yielded stored readings.
    pub accepted_messages: u64,
    /// Readings handed to storage.
    pub readings: u64,
    /// Temperature-only messages kept for pairing.
    pub buffered: u64,
    /// Readings stored without tonicity because the science core refused the assessment.
    pub tonicity_refused: u64,
    pub rejected: BTreeMap<&'static str, u64>,
    pub ignored: BTreeMap<&'static str, u64>,
}

impl Counters {
    /// Counts one rejection under its stable code.
    pub fn reject(&mut self, reason: RejectReason) {
        *self.rejected.entry(reason.as_str()).or_default() += 1;
    }

    /// Counts a rejection whose code is not an ingest reason (for example a science refusal).
    pub fn reject_code(&mut self, code: &'static str) {
        *self.rejected.entry(code).or_default() += 1;
    }

    /// Counts one ignored message under its code.
    pub fn ignore(&mut self, reason: IgnoreReason) {
        *self.ignored.entry(reason.as_str()).or_default() += 1;
    }

    pub fn rejected_total(&self) -> u64 {
        self.rejected.values().sum()
    }

    pub fn ignored_total(&self) -> u64 {
        self.ignored.values().sum()
    }
}
