//! `AlertEvent`: the engine's decisions, for storage and delivery.
use chrono::{DateTime, Utc};
use serde::Serialize;

use super::kind::{AlertId, AlertKey, Severity};
use super::lifecycle::AlertRecord;

/// One decision. `alert` is the record after the change; `message` is this event's text.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "event", rename_all = "snake_case")]
pub enum AlertEvent {
    /// A new alert.
    Raised {
        alert: AlertRecord,
        at: DateTime<Utc>,
        message: String,
    },
    /// Still raised and unacknowledged after the re-notify interval.
    Renotify {
        alert: AlertRecord,
        at: DateTime<Utc>,
        message: String,
    },
    /// A critical alert held for acknowledgement saw its condition return (same id, raised again).
    Recurred {
        alert: AlertRecord,
        at: DateTime<Utc>,
        message: String,
    },
    /// The condition ended (`alert.state` says whether it closed or waits for acknowledgement).
    Cleared {
        alert: AlertRecord,
        at: DateTime<Utc>,
        message: String,
    },
    /// Someone acknowledged it (`alert.state` is `cleared` if that closed it).
    Acknowledged {
        alert: AlertRecord,
        at: DateTime<Utc>,
        message: String,
    },
}

impl AlertEvent {
    /// The record after the change.
    pub fn alert(&self) -> &AlertRecord {
        match self {
            Self::Raised { alert, .. }
            | Self::Renotify { alert, .. }
            | Self::Recurred { alert, .. }
            | Self::Cleared { alert, .. }
            | Self::Acknowledged { alert, .. } => alert,
        }
    }

    /// When the engine decided it.
    pub fn at(&self) -> DateTime<Utc> {
        match self {
            Self::Raised { at, .. }
            | Self::Renotify { at, .. }
            | Self::Recurred { at, .. }
            | Self::Cleared { at, .. }
            | Self::Acknowledged { at, .. } => *at,
        }
    }

    /// This event's text.
    pub fn message(&self) -> &str {
        match self {
            Self::Raised { message, .. }
            | Self::Renotify { message, .. }
            | Self::Recurred { message, .. }
            | Self::Cleared { message, .. }
            | Self::Acknowledged { message, .. } => message,
        }
    }

    /// The event's name as in JSON (`raised`, `renotify`, `recurred`, `cleared`, `acknowledged`).
    pub fn name(&self) -> &'static str {
        match self {
            Self::Raised { .. } => "raised",
            Self::Renotify { .. } => "renotify",
            Self::Recurred { .. } => "recurred",
            Self::Cleared { .. } => "cleared",
            Self::Acknowledged { .. } => "acknowledged",
        }
    }

    /// The alert's id.
    pub fn id(&self) -> AlertId {
        self.alert().id
    }

    /// The alert's stable key.
    pub fn key(&self) -> AlertKey {
        self.alert().key()
    }

    /// The alert's severity.
    pub fn severity(&self) -> Severity {
        self.alert().severity
    }
}
