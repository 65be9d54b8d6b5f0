//! The `[ingest]` section: limits every incoming message is checked against, and extra subscriptions.
use serde::Deserialize;

use super::defaults;
use super::error::Invalid;
use super::key_path::KeyPath;
use super::topics::check_topic_filter;

/// `[ingest]` as written in the file.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawIngest {
    max_payload_bytes: Option<usize>,
    temperature_max_age_s: Option<u64>,
    max_future_skew_s: Option<u64>,
    conductivity_min_ms_cm: Option<f64>,
    conductivity_max_ms_cm: Option<f64>,
    temperature_min_c: Option<f64>,
    temperature_max_c: Option<f64>,
    subscribe: Option<Vec<String>>,
}

/// Limits of the ingest core.
#[derive(Debug, Clone, PartialEq)]
pub struct IngestSettings {
    /// Largest accepted payload, bytes.
    pub max_payload_bytes: usize,
    /// A conductivity reading pairs with a temperature at most this far apart in reading time, seconds.
    pub temperature_max_age_s: u64,
    /// A reading's time may lie at most this far after its receipt, seconds.
    pub max_future_skew_s: u64,
    /// Plausible in-situ conductivity, mS/cm: lowest.
    pub conductivity_min_ms_cm: f64,
    /// Plausible in-situ conductivity, mS/cm: highest.
    pub conductivity_max_ms_cm: f64,
    /// Plausible water temperature, °C: lowest.
    pub temperature_min_c: f64,
    /// Plausible water temperature, °C: highest.
    pub temperature_max_c: f64,
    /// Extra MQTT filters to subscribe to; their topics that belong to no tank are counted and ignored.
    pub subscribe: Vec<String>,
}

impl RawIngest {
    pub(crate) fn resolve(self, path: &KeyPath) -> Result<IngestSettings, Invalid> {
        let max_payload_bytes = self.max_payload_bytes.unwrap_or(defaults::MAX_PAYLOAD_BYTES);
        // 268 435 455 bytes: the largest MQTT packet (MQTT 3.1.1 §2.2.3).
        if max_payload_bytes == 0 || max_payload_bytes > 268_435_455 {
            return Err(Invalid::new(
                path.key("max_payload_bytes"),
                "must be 1 to 268435455 bytes",
            ));
        }
        let temperature_max_age_s = self
            .temperature_max_age_s
            .unwrap_or(defaults::TEMPERATURE_MAX_AGE_S);
        if temperature_max_age_s == 0 {
            return Err(Invalid::new(
                path.key("temperature_max_age_s"),
                "must be at least 1 s",
            ));
        }
        let conductivity_min_ms_cm = self
            .conductivity_min_ms_cm
            .unwrap_or(defaults::CONDUCTIVITY_MIN_MS_CM);
        let conductivity_max_ms_cm = self
            .conductivity_max_ms_cm
            .unwrap_or(defaults::CONDUCTIVITY_MAX_MS_CM);
        check_range(
            path,
            ("conductivity_min_ms_cm", conductivity_min_ms_cm),
            ("conductivity_max_ms_cm", conductivity_max_ms_cm),
            0.0,
            1000.0,
            "conductivity in mS/cm",
        )?;
        let temperature_min_c = self.temperature_min_c.unwrap_or(defaults::TEMPERATURE_MIN_C);
        let temperature_max_c = self.temperature_max_c.unwrap_or(defaults::TEMPERATURE_MAX_C);
        check_range(
            path,
            ("temperature_min_c", temperature_min_c),
            ("temperature_max_c", temperature_max_c),
            defaults::TEMPERATURE_MIN_C,
            defaults::TEMPERATURE_MAX_C,
            "°C; the salinity equations are used here for -3 to 45 °C only",
        )?;
        let subscribe = self.subscribe.unwrap_or_default();
        for (i, filter) in subscribe.iter().enumerate() {
            check_topic_filter(filter).map_err(|m| Invalid::new(path.key("subscribe").index(i), m))?;
        }
        Ok(IngestSettings {
            max_payload_bytes,
            temperature_max_age_s,
            max_future_skew_s: self.max_future_skew_s.unwrap_or(defaults::MAX_FUTURE_SKEW_S),
            conductivity_min_ms_cm,
            conductivity_max_ms_cm,
            temperature_min_c,
            temperature_max_c,
            subscribe,
        })
    }
}

fn check_range(
    path: &KeyPath,
    (min_key, min): (&str, f64),
    (max_key, max): (&str, f64),
    floor: f64,
    ceiling: f64,
    why: &str,
) -> Result<(), Invalid> {
    for (key, value) in [(min_key, min), (max_key, max)] {
        if !value.is_finite() || value < floor || value > ceiling {
            return Err(Invalid::new(
                path.key(key),
                format!("{value} is outside {floor} to {ceiling} ({why})"),
            ));
        }
    }
    if min >= max {
        return Err(Invalid::new(
            path.key(max_key),
            format!("must be greater than {min_key} ({min})"),
        ));
    }
    Ok(())
}
