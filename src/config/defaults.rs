//! Every default value of the configuration, in one place.
use crate::seawater::error::{MAX_TEMPERATURE_C, MIN_TEMPERATURE_C};
use crate::seawater::units::DEFAULT_ALPHA_PERCENT_PER_C;
use crate::seawater::ConductivityUnit;

use super::tank::PayloadFormat;

/// MQTT port without TLS (IANA registration for MQTT).
pub const BROKER_PORT: u16 = 1883;
/// MQTT port with TLS (IANA registration for secure MQTT).
pub const BROKER_PORT_TLS: u16 = 8883;
/// Prefix of the default client id; the site's slug follows.
pub const CLIENT_ID_PREFIX: &str = "halotank-";
/// MQTT keep-alive, seconds.
pub const KEEP_ALIVE_S: u64 = 30;
/// Unacknowledged QoS 1 messages allowed in flight (MQTT 5 "receive maximum" sense).
pub const MAX_INFLIGHT: u16 = 100;
/// First reconnect delay, milliseconds (doubles up to the maximum).
pub const RECONNECT_MIN_MS: u64 = 500;
/// Longest reconnect delay, milliseconds.
pub const RECONNECT_MAX_MS: u64 = 30_000;
/// Keep the broker session (and its queued QoS 1 messages) across reconnects.
pub const CLEAN_SESSION: bool = false;

/// Days readings are kept before pruning.
pub const RETENTION_DAYS: u32 = 90;
/// Rows per storage transaction at most.
pub const FLUSH_ROWS: usize = 100;
/// Longest wait before a partial batch is committed, milliseconds.
pub const FLUSH_MS: u64 = 200;

/// First level of the default publish prefix; the site's slug follows.
pub const PUBLISH_ROOT: &str = "halotank";

/// Largest accepted payload, bytes.
pub const MAX_PAYLOAD_BYTES: usize = 4096;
/// Oldest temperature (by reading time, relative to the conductivity reading) used for pairing, seconds.
pub const TEMPERATURE_MAX_AGE_S: u64 = 60;
/// How far a reading's own time may lie ahead of the time it was received, seconds.
pub const MAX_FUTURE_SKEW_S: u64 = 300;
/// Lowest plausible in-situ conductivity, mS/cm.
pub const CONDUCTIVITY_MIN_MS_CM: f64 = 0.0;
/// Highest plausible in-situ conductivity, mS/cm (full-strength seawater at 30 °C is about 58 mS/cm).
pub const CONDUCTIVITY_MAX_MS_CM: f64 = 100.0;
/// Lowest plausible water temperature, °C: the science core's lower limit.
pub const TEMPERATURE_MIN_C: f64 = MIN_TEMPERATURE_C;
/// Highest plausible water temperature, °C: the science core's upper limit.
pub const TEMPERATURE_MAX_C: f64 = MAX_TEMPERATURE_C;

/// Probe depth, dbar (sea pressure; 0 at the surface).
pub const PRESSURE_DBAR: f64 = 0.0;
/// Payload format of a tank's topics.
pub const PAYLOAD_FORMAT: PayloadFormat = PayloadFormat::Json;
/// JSON key of conductivity.
pub const JSON_KEY_CONDUCTIVITY: &str = "conductivity";
/// JSON key of temperature.
pub const JSON_KEY_TEMPERATURE: &str = "temperature";
/// JSON key of the reading's time.
pub const JSON_KEY_TIME: &str = "time";
/// Unit probes report conductivity in.
pub const CONDUCTIVITY_UNIT: ConductivityUnit = ConductivityUnit::MilliSiemensPerCm;
/// Linear temperature coefficient of specific-conductance probes, %/°C.
pub const ALPHA_PERCENT_PER_C: f64 = DEFAULT_ALPHA_PERCENT_PER_C;
/// Expected time between readings of a tank, seconds.
pub const EXPECTED_INTERVAL_S: u64 = 60;

/// Address the HTTP server listens on: loopback only.
pub const HTTP_BIND: ([u8; 4], u16) = ([127, 0, 0, 1], 8480);
/// Environment variable holding the HTTP bearer token.
pub const HTTP_TOKEN_ENV: &str = "HALOTANK_HTTP_TOKEN";
