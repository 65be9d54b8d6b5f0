//! Plausibility and time checks every parsed value goes through.
use chrono::{DateTime, Duration, Utc};

use super::outcome::RejectReason;
use super::payload::PayloadError;
use crate::config::IngestSettings;

/// The limits of `[ingest]`, in the form the checks use.
#[derive(Debug, Clone, PartialEq)]
pub struct Limits {
    pub max_payload_bytes: usize,
    pub temperature_max_age: Duration,
    pub max_future_skew: Duration,
    pub conductivity_min_ms_cm: f64,
    pub conductivity_max_ms_cm: f64,
    pub temperature_min_c: f64,
    pub temperature_max_c: f64,
}

impl Limits {
    /// From the configuration.
    pub fn from_settings(settings: &IngestSettings) -> Self {
        // Clamped to 100 years: chrono durations have a finite range, and longer limits mean "no limit".
        let seconds =
            |s: u64| Duration::seconds(i64::try_from(s.min(3_155_760_000)).unwrap_or(3_155_760_000));
        Self {
            max_payload_bytes: settings.max_payload_bytes,
            temperature_max_age: seconds(settings.temperature_max_age_s),
            max_future_skew: seconds(settings.max_future_skew_s),
            conductivity_min_ms_cm: settings.conductivity_min_ms_cm,
            conductivity_max_ms_cm: settings.conductivity_max_ms_cm,
            temperature_min_c: settings.temperature_min_c,
            temperature_max_c: settings.temperature_max_c,
        }
    }

    /// Temperature within the plausible range.
    pub fn check_temperature_c(&self, temperature_c: f64) -> Result<(), PayloadError> {
        if (self.temperature_min_c..=self.temperature_max_c).contains(&temperature_c) {
            Ok(())
        } else {
            Err(PayloadError::new(
                RejectReason::ImplausibleTemperature,
                format!(
                    "temperature {temperature_c} °C is outside {} to {} °C",
                    self.temperature_min_c, self.temperature_max_c
                ),
            ))
        }
    }

    /// Conductivity (mS/cm) within the plausible range; `what` says which value (reported or in-situ).
    pub fn check_conductivity_ms_cm(&self, conductivity_ms_cm: f64, what: &str) -> Result<(), PayloadError> {
        if (self.conductivity_min_ms_cm..=self.conductivity_max_ms_cm).contains(&conductivity_ms_cm) {
            Ok(())
        } else {
            Err(PayloadError::new(
                RejectReason::ImplausibleConductivity,
                format!(
                    "{what} {conductivity_ms_cm} mS/cm is outside {} to {} mS/cm",
                    self.conductivity_min_ms_cm, self.conductivity_max_ms_cm
                ),
            ))
        }
    }

    /// A reading's time no later than its receipt plus the allowed skew.
    pub fn check_time(&self, time: DateTime<Utc>, received_at: DateTime<Utc>) -> Result<(), PayloadError> {
        let limit = received_at
            .checked_add_signed(self.max_future_skew)
            .unwrap_or(DateTime::<Utc>::MAX_UTC);
        if time > limit {
            Err(PayloadError::new(
                RejectReason::TimeInFuture,
                format!(
                    "reading time {} is {} s after its receipt at {} (allowed {} s)",
                    time.to_rfc3339(),
                    (time - received_at).num_seconds(),
                    received_at.to_rfc3339(),
                    self.max_future_skew.num_seconds()
                ),
            ))
        } else {
            Ok(())
        }
    }
}
