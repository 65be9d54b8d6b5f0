//! What [`super::Ingestor::handle`] returns for one message: accepted readings, a rejection, or why not.
use std::fmt;

use chrono::{DateTime, Utc};
use serde::Serialize;

use crate::seawater::{ConductivityUnit, ProbeMode};

/// First bytes of a rejected payload kept for the log.
pub const PAYLOAD_PREFIX_BYTES: usize = 256;

/// The result of one message.
#[derive(Debug, Clone, PartialEq)]
pub enum IngestOutcome {
    /// One or more readings, ready to derive and store (a SenML pack may carry several).
    Accepted(Vec<AcceptedReading>),
    /// The message was refused; nothing of it is kept.
    Rejected(Rejection),
    /// The message is not for halotank.
    Ignored(IgnoreReason),
    /// Temperature only: kept for pairing with the tank's next conductivity readings.
    Buffered,
}

/// One conductivity reading, paired with a temperature and converted to in-situ mS/cm.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AcceptedReading {
    /// Tank id.
    pub tank_id: String,
    /// Index of the tank in `Config::tanks`.
    pub tank_index: usize,
    /// The reading's own time (from the payload, else the time it was received).
    pub time: DateTime<Utc>,
    /// When the message was received.
    pub received_at: DateTime<Utc>,
    /// The topic the conductivity came on.
    pub topic: String,
    /// Conductivity as reported, in `reported_unit`.
    pub reported_conductivity: f64,
    /// Unit of `reported_conductivity`.
    pub reported_unit: ConductivityUnit,
    /// How the probe reports (in-situ or specific conductance at 25 °C).
    pub probe_mode: ProbeMode,
    /// In-situ conductivity, mS/cm.
    pub conductivity_ms_cm: f64,
    /// Water temperature, °C (ITS-90 as the probe reports it).
    pub temperature_c: f64,
    /// Time of the temperature paired with this reading.
    pub temperature_time: DateTime<Utc>,
    /// Sea pressure at the probe, dbar (from the tank's configuration).
    pub pressure_dbar: f64,
}

/// A refused message.
#[derive(Debug, Clone, PartialEq)]
pub struct Rejection {
    /// Tank the topic belongs to.
    pub tank_id: Option<String>,
    /// The topic.
    pub topic: String,
    /// Why, as a stable code.
    pub reason: RejectReason,
    /// Why, in words (for the log).
    pub detail: String,
    /// The first [`PAYLOAD_PREFIX_BYTES`] bytes of the payload.
    pub payload_prefix: Vec<u8>,
}

/// Why a message was refused. Codes ([`RejectReason::as_str`]) are stable: use them in metrics and logs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RejectReason {
    /// Larger than `ingest.max_payload_bytes`.
    PayloadTooLarge,
    /// Not valid UTF-8.
    NotUtf8,
    /// Not JSON, or not the JSON shape the format needs (an object for `json`).
    MalformedJson,
    /// A configured JSON key is missing or null.
    MissingField,
    /// A value is not a number (a string, boolean, object, or text that is not a decimal number).
    NotNumeric,
    /// A value is NaN or infinite.
    NonFinite,
    /// Conductivity outside the plausible range.
    ImplausibleConductivity,
    /// Temperature outside the plausible range.
    ImplausibleTemperature,
    /// The reading's time lies further ahead of its receipt than `ingest.max_future_skew_s`.
    TimeInFuture,
    /// The reading's time is unusable (not RFC 3339, not a number, at or before 1970, out of range).
    BadTime,
    /// A conductivity reading found no temperature of its tank within `ingest.temperature_max_age_s`.
    NoTemperature,
    /// Not a usable SenML pack (RFC 8428).
    SenmlInvalid,
    /// A SenML record names a conductivity or temperature in a unit halotank does not know.
    UnknownUnit,
}

impl RejectReason {
    /// Every reason, for counters.
    pub const ALL: [RejectReason; 13] = [
        Self::PayloadTooLarge,
        Self::NotUtf8,
        Self::MalformedJson,
        Self::MissingField,
        Self::NotNumeric,
        Self::NonFinite,
        Self::ImplausibleConductivity,
        Self::ImplausibleTemperature,
        Self::TimeInFuture,
        Self::BadTime,
        Self::NoTemperature,
        Self::SenmlInvalid,
        Self::UnknownUnit,
    ];

    /// The stable snake_case code.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::PayloadTooLarge => "payload_too_large",
            Self::NotUtf8 => "not_utf8",
            Self::MalformedJson => "malformed_json",
            Self::MissingField => "missing_field",
            Self::NotNumeric => "not_numeric",
            Self::NonFinite => "non_finite",
            Self::ImplausibleConductivity => "implausible_conductivity",
            Self::ImplausibleTemperature => "implausible_temperature",
            Self::TimeInFuture => "time_in_future",
            Self::BadTime => "bad_time",
            Self::NoTemperature => "no_temperature",
            Self::SenmlInvalid => "senml_invalid",
            Self::UnknownUnit => "unknown_unit",
        }
    }
}

impl fmt::Display for RejectReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Why a message was ignored (not an error; counted).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum IgnoreReason {
    /// The topic belongs to no tank (it came through an extra `ingest.subscribe` filter).
    UnconfiguredTopic,
    /// A zero-length payload (how MQTT clears a retained message).
    EmptyPayload,
}

impl IgnoreReason {
    /// The stable snake_case code.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::UnconfiguredTopic => "unconfigured_topic",
            Self::EmptyPayload => "empty_payload",
        }
    }
}

impl fmt::Display for IgnoreReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_are_unique_snake_case_and_match_serde() {
        let mut seen = std::collections::HashSet::new();
        for reason in RejectReason::ALL {
            let code = reason.as_str();
            assert!(
                code.chars()
                    .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_'),
                "{code}"
            );
            assert!(seen.insert(code), "duplicate {code}");
            assert_eq!(serde_json::to_value(reason).unwrap(), serde_json::json!(code));
            assert_eq!(reason.to_string(), code);
        }
        assert_eq!(IgnoreReason::UnconfiguredTopic.as_str(), "unconfigured_topic");
    }
}
