//! Observable state of the MQTT connection: a `watch` value and a counters snapshot.

use chrono::{DateTime, Utc};

/// Published on a `tokio::sync::watch` channel by the event-loop task on every change.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ConnectionState {
    /// A CONNACK was received and no error seen since.
    pub connected: bool,
    /// The broker granted every subscription on the live connection.
    pub subscribed: bool,
    /// When `connected` last changed (start time of the client before the first change).
    pub since: DateTime<Utc>,
    /// Successful connections after the first one.
    pub reconnects: u64,
    /// Most recent connection or subscription error, kept after reconnecting.
    pub last_error: Option<String>,
    /// Connection generation (1 for the first connection; 0 before any).
    pub generation: u64,
    /// The broker said it kept our session on the latest CONNACK.
    pub session_present: bool,
    /// The client has stopped for good (after `shutdown`).
    pub stopped: bool,
}

impl ConnectionState {
    pub(crate) fn initial(now: DateTime<Utc>) -> Self {
        Self {
            connected: false,
            subscribed: false,
            since: now,
            reconnects: 0,
            last_error: None,
            generation: 0,
            session_present: false,
            stopped: false,
        }
    }
}

/// Running totals since the client started.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct MqttCounters {
    /// PUBLISH packets received (duplicates included).
    pub messages_received: u64,
    /// PUBACK/PUBREC packets written to the network.
    pub acks_sent: u64,
    /// Acks dropped because their connection had ended (the broker will redeliver).
    pub stale_acks_dropped: u64,
    /// Acks held for receive order or waiting for room in the request channel right now.
    pub acks_waiting: u64,
    /// Connection attempts that failed before a CONNACK.
    pub connect_failures: u64,
    /// Established connections that later broke.
    pub disconnects: u64,
}
