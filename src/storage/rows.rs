//! Plain rows the daemon hands to storage and queries hand back: readings, rejections, hourly summaries,
//! and the daemon's own state.
//!
//! Times are stored at millisecond resolution (Unix milliseconds); sub-millisecond parts are dropped.
use chrono::{DateTime, Utc};
use serde::Serialize;

use crate::seawater::Derived;
use crate::species::TonicityState;

/// Longest payload prefix kept with a rejection, bytes.
pub const PAYLOAD_PREFIX_MAX_BYTES: usize = 256;

/// One accepted reading: what the probe reported, what it means in situ, and every derived quantity.
///
/// `(tank_id, time, source_topic)` identifies a reading: storing the same key again is a no-op.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadingRow {
    pub tank_id: String,
    pub time: DateTime<Utc>,
    pub source_topic: String,
    /// Conductivity as the probe reported it, in `conductivity_unit`.
    pub conductivity_reported: f64,
    /// Canonical unit symbol of `conductivity_reported` (`S/m`, `mS/cm`, `uS/cm`).
    pub conductivity_unit: String,
    /// In-situ conductivity, mS/cm (after unit conversion and undoing any 25 °C reference).
    pub conductivity_ms_cm: f64,
    pub temperature_c: f64,
    pub pressure_dbar: f64,
    pub derived: Derived,
    /// The water against the tank's species, when the tank names one (and the assessment succeeded).
    pub tonicity: Option<TonicityState>,
}

/// One message that was refused, kept so staff can see what a probe or a gateway is sending.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RejectionRow {
    pub time: DateTime<Utc>,
    pub topic: String,
    /// The tank, when the topic or payload named one.
    pub tank_id: Option<String>,
    /// Stable machine-readable code (for example `payload_not_senml`); counted by `status`.
    pub reason: String,
    /// Human-readable explanation.
    pub detail: String,
    /// First bytes of the payload; the writer keeps at most [`PAYLOAD_PREFIX_MAX_BYTES`].
    pub payload_prefix: Vec<u8>,
}

/// What the daemon knows about itself and its broker link; one row, overwritten every few seconds.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct DaemonStateRow {
    /// When the daemon wrote this state.
    pub updated_at: DateTime<Utc>,
    /// When the daemon process started.
    pub started_at: DateTime<Utc>,
    pub broker_connected: bool,
    /// When the broker link last changed to its current state (start of an outage when disconnected).
    pub broker_state_since: DateTime<Utc>,
    /// Reconnections since the daemon started.
    pub reconnect_count: u64,
    /// Messages accepted, rejected and ignored since the daemon started.
    pub accepted_count: u64,
    pub rejected_count: u64,
    pub ignored_count: u64,
}

/// One hour of one tank's readings after retention folded them: count and min/mean/max.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HourlyStats {
    pub min: f64,
    pub mean: f64,
    pub max: f64,
}

/// The summary of one tank-hour, kept forever.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HourlyRow {
    pub tank_id: String,
    /// Start of the hour (UTC).
    pub hour_start: DateTime<Utc>,
    /// Readings folded into this hour.
    pub count: u64,
    pub practical_salinity: HourlyStats,
    pub temperature_c: HourlyStats,
    pub osmolality_mosm_kg: HourlyStats,
    /// In-situ conductivity, mS/cm.
    pub conductivity_ms_cm: HourlyStats,
}
