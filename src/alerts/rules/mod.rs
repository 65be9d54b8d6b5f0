//! The alert rules, one file each: pure functions (and small fixed-size state) from readings to a
//! [`Level`](super::detector::Level) and an [`Observation`](super::observation::Observation).
pub mod flat_line;
pub mod freezing;
pub mod inconsistent;
pub mod range;
pub mod rate;
pub mod schedule;
pub mod spike;
pub mod stale;

use super::ring::Ring;

/// Recent readings kept per tank for the probe checks.
pub const SAMPLE_CAPACITY: usize = 64;

/// One reading as the probe checks keep it.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Sample {
    /// Reading time, ms since the Unix epoch.
    pub t_ms: i64,
    /// Practical salinity.
    pub practical_salinity: f64,
    /// Temperature, °C.
    pub temperature_c: f64,
    /// In-situ conductivity, mS/cm.
    pub conductivity_ms_cm: f64,
}

/// The recent readings of a tank, oldest first.
pub type Samples = Ring<Sample, SAMPLE_CAPACITY>;
