//! Every default of the alert settings, in one place.
//!
//! These are design choices of halotank (documented beside each), not published values: tune them per site.
use super::kind::AlertKind;

/// Hysteresis of the salinity ranges, SP: an alert raised outside a range clears this far inside it.
pub const SALINITY_HYSTERESIS_SP: f64 = 0.3;
/// Hysteresis of the temperature ranges, °C.
pub const TEMPERATURE_HYSTERESIS_C: f64 = 0.3;
/// A range's hysteresis is capped at this fraction of its width, so the clear band never vanishes.
pub const HYSTERESIS_MAX_FRACTION_OF_RANGE: f64 = 0.25;

/// Sliding window of the salinity-rate rule, seconds.
pub const RATE_WINDOW_S: u64 = 1800;
/// Shortest span of readings the rate rule fits a slope to, seconds.
pub const RATE_MIN_SPAN_S: u64 = 600;
/// The rate alert clears once the rate is at most this fraction of the maximum.
pub const RATE_CLEAR_FRACTION: f64 = 0.7;
/// A maximum given in percent per hour applies to at least this practical salinity (fresh-water floor).
pub const RATE_PERCENT_FLOOR_SP: f64 = 1.0;

/// Probe stale after this many expected intervals without an accepted reading.
pub const STALE_MULTIPLE: f64 = 3.0;
/// Stale clears once the newest reading is at most this many intervals old (and stays so for `clear_after_s`).
pub const STALE_CLEAR_MULTIPLE: f64 = 1.5;

/// Previous readings whose median a reading is compared with.
pub const SPIKE_WINDOW_READINGS: usize = 9;
/// A reading this far from the median practical salinity is a spike, SP.
pub const SPIKE_THRESHOLD_SP: f64 = 1.0;
/// A reading this far from the median temperature is a spike, °C.
pub const SPIKE_THRESHOLD_C: f64 = 1.0;
/// A spike alert clears once readings lie within this fraction of the spike thresholds.
pub const SPIKE_CLEAR_FRACTION: f64 = 0.5;

/// Identical conductivity for this long is a flat line, seconds.
pub const FLAT_LINE_S: u64 = 1800;
/// ... and over at least this many readings.
pub const FLAT_LINE_MIN_READINGS: u32 = 5;
/// Readings within this of each other count as identical, mS/cm (0: bit-for-bit equal values only).
pub const FLAT_LINE_TOLERANCE_MS_CM: f64 = 0.0;

/// Readings the stuck-conductivity check looks at.
pub const INCONSISTENT_READINGS: usize = 10;
/// Temperature range over those readings that must move the conductivity, °C.
pub const INCONSISTENT_TEMPERATURE_CHANGE_C: f64 = 1.0;
/// Conductivity range, percent of its mean, at or below which conductivity counts as unchanged.
pub const INCONSISTENT_CONDUCTIVITY_TOLERANCE_PERCENT: f64 = 0.1;
/// The stuck-conductivity check applies at or above this mean conductivity, mS/cm (below it a probe's
/// resolution can hide the temperature effect).
pub const INCONSISTENT_MIN_CONDUCTIVITY_MS_CM: f64 = 5.0;
/// Fastest believable change of a tank's water temperature, °C per minute.
pub const MAX_TEMPERATURE_RATE_C_PER_MIN: f64 = 1.0;
/// The temperature change is measured over at least this span, seconds.
pub const TEMPERATURE_RATE_SPAN_S: u64 = 60;

/// Near-freezing when the water is less than this above its freezing point, °C.
pub const FREEZING_MARGIN_C: f64 = 0.5;
/// ... and it clears this much further above it, °C.
pub const FREEZING_HYSTERESIS_C: f64 = 0.2;

/// A tank is off its acclimation schedule when its salinity is further than this from the setpoint, SP
/// (while a step is overdue, from anywhere between that step's setpoint and the current one).
pub const SCHEDULE_BAND_SP: f64 = 0.5;
/// Whether a critical alert on a tank pauses its running schedule (staff resume it by hand).
pub const SCHEDULE_PAUSE_ON_CRITICAL: bool = false;

/// Per-rule defaults: (enabled, min_duration_s, renotify_s, clear_after_s).
pub const fn rule(kind: AlertKind) -> (bool, u64, u64, u64) {
    match kind {
        AlertKind::SalinityOptimum | AlertKind::TemperatureOptimum => (true, 300, 3600, 0),
        AlertKind::SalinityTolerance | AlertKind::TemperatureTolerance => (true, 60, 900, 0),
        // The window already smooths the rate.
        AlertKind::SalinityRate => (true, 0, 900, 0),
        // A returning feed must keep coming for 5 minutes before the stale alert clears.
        AlertKind::ProbeStale => (true, 0, 3600, 300),
        // A spike alert clears after 10 spike-free minutes, so an intermittent fault does not flap.
        AlertKind::ProbeSpike => (true, 0, 3600, 600),
        AlertKind::ProbeFlatLine => (true, 0, 3600, 0),
        // Both checks are windowed already; an impossible jump raises at once and clears after 5 quiet minutes.
        AlertKind::ProbeInconsistent => (true, 0, 3600, 300),
        AlertKind::NearFreezing => (true, 60, 900, 0),
        AlertKind::ScheduleOff => (true, 300, 1800, 0),
        AlertKind::ScheduleStepDue => (true, 0, 900, 0),
    }
}
