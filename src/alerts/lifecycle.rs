//! The alert record and its lifecycle as a pure state machine: raised -> acknowledged -> cleared.
//!
//! ```text
//!            ack                     condition clears
//! Raised ──────────▶ Acknowledged ─────────────────────▶ Cleared (closed)
//!   │  ▲
//!   │  │ condition returns (Recurred)
//!   │  │
//!   │  └── ClearedUnacknowledged ──ack──▶ Cleared (closed)
//!   │         ▲ (critical only)
//!   └─────────┘ condition clears
//!   │
//!   └── condition clears (warning, info) ──▶ Cleared (closed)
//! ```
//!
//! Re-notification happens only in `Raised`: an acknowledged alert is known, and a cleared critical alert
//! waiting for acknowledgement stays visible (open) but is not repeated.
use chrono::{DateTime, Utc};
use serde::{Deserialize, Serialize};
use thiserror::Error;

use super::kind::{AlertId, AlertKey, AlertKind, Severity};

/// Where an alert stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AlertState {
    /// The condition is present and nobody has acknowledged it.
    Raised,
    /// The condition is present and someone has acknowledged it.
    Acknowledged,
    /// A critical condition ended before anyone acknowledged it; open until acknowledged.
    ClearedUnacknowledged,
    /// Closed.
    Cleared,
}

impl AlertState {
    /// The spelling used in JSON and storage.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Raised => "raised",
            Self::Acknowledged => "acknowledged",
            Self::ClearedUnacknowledged => "cleared_unacknowledged",
            Self::Cleared => "cleared",
        }
    }

    /// Whether the alert is still open (shown as current, kept after a restart).
    pub fn is_open(self) -> bool {
        self != Self::Cleared
    }
}

/// Who acknowledged an alert, when, and why.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Acknowledgement {
    pub by: String,
    pub at: DateTime<Utc>,
    #[serde(default)]
    pub note: Option<String>,
}

/// One alert: one raise of one key, until it is closed. This is the persisted form.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AlertRecord {
    /// Engine-assigned number, increasing.
    pub id: AlertId,
    /// Tank id.
    pub tank: String,
    /// The rule.
    pub kind: AlertKind,
    /// Severity (from the kind).
    pub severity: Severity,
    /// Where it stands.
    pub state: AlertState,
    /// When it was raised (engine clock).
    pub raised_at: DateTime<Utc>,
    /// The time of the observation that raised it (the reading's own time, or the clock for ticks).
    pub observed_at: DateTime<Utc>,
    /// When people were last told (raise, re-notify or recurrence).
    pub last_notified_at: DateTime<Utc>,
    /// How many times people were told.
    pub notify_count: u32,
    /// When the condition ended, if it has.
    #[serde(default)]
    pub cleared_at: Option<DateTime<Utc>>,
    /// Who acknowledged it.
    #[serde(default)]
    pub acknowledgement: Option<Acknowledgement>,
    /// What was observed, in words, with values and units (and the caution where it concerns animals).
    pub message: String,
    /// The observed value that raised it, in the kind's unit.
    #[serde(default)]
    pub value: Option<f64>,
    /// The limit it was compared with, in the kind's unit.
    #[serde(default)]
    pub limit: Option<f64>,
}

/// Why an acknowledgement was refused.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum AckError {
    /// No open alert has this id or key.
    #[error("no open alert {0}")]
    NotOpen(String),
    /// Already acknowledged.
    #[error("alert {id} was already acknowledged by {by} at {at}")]
    AlreadyAcknowledged {
        id: AlertId,
        by: String,
        at: DateTime<Utc>,
    },
    /// The name of who acknowledges is empty.
    #[error("an acknowledgement needs the name of who acknowledges")]
    MissingName,
}

/// What a cleared condition does to the record.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ClearOutcome {
    /// The alert is closed.
    Closed,
    /// Critical and unacknowledged: stays open until acknowledged.
    HeldForAcknowledgement,
    /// Nothing to do (already cleared).
    Unchanged,
}

impl AlertRecord {
    /// The stable key.
    pub fn key(&self) -> AlertKey {
        AlertKey {
            tank: self.tank.clone(),
            kind: self.kind,
        }
    }

    /// The condition ended at `now`.
    pub fn condition_cleared(&mut self, now: DateTime<Utc>) -> ClearOutcome {
        match self.state {
            AlertState::Raised if self.severity.holds_until_acknowledged() => {
                self.state = AlertState::ClearedUnacknowledged;
                self.cleared_at = Some(now);
                ClearOutcome::HeldForAcknowledgement
            }
            AlertState::Raised | AlertState::Acknowledged => {
                self.state = AlertState::Cleared;
                self.cleared_at = Some(now);
                ClearOutcome::Closed
            }
            AlertState::ClearedUnacknowledged | AlertState::Cleared => ClearOutcome::Unchanged,
        }
    }

    /// The condition came back while the alert waited for acknowledgement; returns whether it reopened.
    pub fn condition_returned(&mut self, now: DateTime<Utc>) -> bool {
        if self.state != AlertState::ClearedUnacknowledged {
            return false;
        }
        self.state = AlertState::Raised;
        self.cleared_at = None;
        self.mark_notified(now);
        true
    }

    /// Acknowledges; returns whether that closed the alert (it had already cleared).
    pub fn acknowledge(
        &mut self,
        by: &str,
        note: Option<&str>,
        now: DateTime<Utc>,
    ) -> Result<bool, AckError> {
        let by = by.trim();
        if by.is_empty() {
            return Err(AckError::MissingName);
        }
        if let Some(ack) = &self.acknowledgement {
            return Err(AckError::AlreadyAcknowledged {
                id: self.id,
                by: ack.by.clone(),
                at: ack.at,
            });
        }
        let closed = match self.state {
            AlertState::Raised => {
                self.state = AlertState::Acknowledged;
                false
            }
            AlertState::ClearedUnacknowledged => {
                self.state = AlertState::Cleared;
                true
            }
            AlertState::Acknowledged | AlertState::Cleared => {
                return Err(AckError::NotOpen(self.id.to_string()))
            }
        };
        self.acknowledgement = Some(Acknowledgement {
            by: by.to_string(),
            at: now,
            note: note.map(str::trim).filter(|n| !n.is_empty()).map(str::to_string),
        });
        Ok(closed)
    }

    /// Whether a re-notification is due at `now` with this interval (seconds; 0 = never).
    pub fn renotify_due(&self, now: DateTime<Utc>, renotify_s: u64) -> bool {
        self.state == AlertState::Raised
            && renotify_s > 0
            && (now - self.last_notified_at).num_milliseconds() >= (renotify_s as i64).saturating_mul(1000)
    }

    /// Records that people were told at `now`.
    pub fn mark_notified(&mut self, now: DateTime<Utc>) {
        self.last_notified_at = now;
        self.notify_count = self.notify_count.saturating_add(1);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use chrono::TimeZone;

    fn at(s: i64) -> DateTime<Utc> {
        Utc.timestamp_opt(1_750_000_000 + s, 0).unwrap()
    }

    fn record(kind: AlertKind) -> AlertRecord {
        AlertRecord {
            id: AlertId(7),
            tank: "nursery-3".into(),
            kind,
            severity: kind.severity(),
            state: AlertState::Raised,
            raised_at: at(0),
            observed_at: at(0),
            last_notified_at: at(0),
            notify_count: 1,
            cleared_at: None,
            acknowledgement: None,
            message: "test".into(),
            value: None,
            limit: None,
        }
    }

    #[test]
    fn warning_closes_when_it_clears() {
        let mut r = record(AlertKind::SalinityOptimum);
        assert_eq!(r.condition_cleared(at(10)), ClearOutcome::Closed);
        assert_eq!(r.state, AlertState::Cleared);
        assert_eq!(r.cleared_at, Some(at(10)));
    }

    #[test]
    fn critical_cleared_before_ack_stays_open_until_acknowledged() {
        let mut r = record(AlertKind::SalinityTolerance);
        assert_eq!(r.condition_cleared(at(10)), ClearOutcome::HeldForAcknowledgement);
        assert!(r.state.is_open());
        assert!(
            !r.renotify_due(at(100_000), 60),
            "no repeats once the condition ended"
        );
        assert_eq!(r.acknowledge("Ines", Some(" pump restarted "), at(20)), Ok(true));
        assert_eq!(r.state, AlertState::Cleared);
        let ack = r.acknowledgement.clone().unwrap();
        assert_eq!(
            (ack.by.as_str(), ack.at, ack.note.as_deref()),
            ("Ines", at(20), Some("pump restarted"))
        );
    }

    #[test]
    fn acknowledged_then_cleared_closes() {
        let mut r = record(AlertKind::SalinityTolerance);
        assert_eq!(r.acknowledge("Ines", None, at(5)), Ok(false));
        assert_eq!(r.state, AlertState::Acknowledged);
        assert!(!r.renotify_due(at(10_000), 60));
        assert!(matches!(
            r.acknowledge("Oskar", None, at(6)),
            Err(AckError::AlreadyAcknowledged { .. })
        ));
        assert_eq!(r.condition_cleared(at(10)), ClearOutcome::Closed);
    }

    #[test]
    fn returning_condition_reopens_a_held_alert() {
        let mut r = record(AlertKind::NearFreezing);
        r.condition_cleared(at(10));
        assert!(r.condition_returned(at(30)));
        assert_eq!(r.state, AlertState::Raised);
        assert_eq!(
            (r.notify_count, r.last_notified_at, r.cleared_at),
            (2, at(30), None)
        );
        assert!(!r.condition_returned(at(40)));
    }

    #[test]
    fn renotify_follows_the_interval_and_ack_needs_a_name() {
        let mut r = record(AlertKind::ProbeStale);
        assert!(!r.renotify_due(at(59), 60));
        assert!(r.renotify_due(at(60), 60));
        assert!(!r.renotify_due(at(60), 0));
        r.mark_notified(at(60));
        assert!(!r.renotify_due(at(100), 60));
        assert_eq!(r.acknowledge("  ", None, at(1)), Err(AckError::MissingName));
    }

    #[test]
    fn json_uses_the_storage_keys() {
        let json = serde_json::to_value(record(AlertKind::SalinityRate)).unwrap();
        for key in ["id", "tank", "kind", "severity", "state", "raised_at", "message"] {
            assert!(json.get(key).is_some(), "{key}");
        }
        assert_eq!(json["kind"], "salinity_rate");
        assert_eq!(json["severity"], "critical");
        assert_eq!(json["state"], "raised");
        let back: AlertRecord = serde_json::from_value(json).unwrap();
        assert_eq!(back, record(AlertKind::SalinityRate));
    }
}
