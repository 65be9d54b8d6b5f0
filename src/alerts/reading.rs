//! `AlertReading`: the part of one accepted, derived reading that the alert rules look at.
use chrono::{DateTime, Utc};

use crate::seawater::Derived;

/// One accepted reading of a tank.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlertReading {
    /// The reading's own time.
    pub time: DateTime<Utc>,
    /// Practical Salinity SP (PSS-78).
    pub practical_salinity: f64,
    /// Water temperature, °C (ITS-90).
    pub temperature_c: f64,
    /// In-situ conductivity, mS/cm.
    pub conductivity_ms_cm: f64,
    /// Sea pressure at the probe, dbar (for the freezing point).
    pub pressure_dbar: f64,
}

impl AlertReading {
    /// The reading from its measured values and their derivation.
    pub fn from_derived(
        time: DateTime<Utc>,
        conductivity_ms_cm: f64,
        temperature_c: f64,
        pressure_dbar: f64,
        derived: &Derived,
    ) -> Self {
        Self {
            time,
            practical_salinity: derived.practical_salinity,
            temperature_c,
            conductivity_ms_cm,
            pressure_dbar,
        }
    }

    /// Whether every value is a finite number (others are counted and skipped, never evaluated).
    pub fn is_finite(&self) -> bool {
        self.practical_salinity.is_finite()
            && self.temperature_c.is_finite()
            && self.conductivity_ms_cm.is_finite()
            && self.pressure_dbar.is_finite()
    }
}
