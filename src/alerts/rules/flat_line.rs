//! Flat-line rule: the conductivity reading has not changed at all for too long.
//!
//! A working conductivity probe in water shows at least last-digit noise; the same value for half an hour
//! (default) over several readings points to a stuck sensor, transmitter or gateway repeating its last value.
use crate::alerts::detector::Level;
use crate::alerts::observation::Observation;

/// The current run of identical conductivity readings.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FlatLine {
    value_ms_cm: f64,
    since_ms: i64,
    readings: u32,
}

impl FlatLine {
    /// Feeds one reading: Raise when the run has lasted `flat_line_s` over at least `min_readings`,
    /// Clear on the reading that breaks a run, Hold while a shorter run goes on.
    pub fn update(
        &mut self,
        t_ms: i64,
        conductivity_ms_cm: f64,
        tolerance_ms_cm: f64,
        flat_line_s: u64,
        min_readings: u32,
    ) -> (Level, Observation) {
        let same = self.readings > 0 && (conductivity_ms_cm - self.value_ms_cm).abs() <= tolerance_ms_cm;
        let level = if same {
            self.readings = self.readings.saturating_add(1);
            let long = t_ms.saturating_sub(self.since_ms) >= (flat_line_s as i64).saturating_mul(1000);
            if long && self.readings >= min_readings {
                Level::Raise
            } else {
                Level::Hold
            }
        } else {
            let broke = self.readings > 0;
            *self = Self {
                value_ms_cm: conductivity_ms_cm,
                since_ms: t_ms,
                readings: 1,
            };
            if broke {
                Level::Clear
            } else {
                Level::Hold
            }
        };
        let observation = Observation::FlatLine {
            conductivity_ms_cm: self.value_ms_cm,
            duration_s: t_ms.saturating_sub(self.since_ms) as f64 / 1000.0,
            readings: self.readings,
        };
        (level, observation)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn run_raises_after_duration_and_count_and_clears_on_change() {
        let mut f = FlatLine::default();
        assert_eq!(f.update(0, 40.0, 0.0, 300, 5).0, Level::Hold);
        for i in 1..5 {
            assert_eq!(f.update(i * 60_000, 40.0, 0.0, 300, 5).0, Level::Hold, "{i}");
        }
        assert_eq!(f.update(300_000, 40.0, 0.0, 300, 5).0, Level::Raise);
        assert_eq!(f.update(360_000, 40.001, 0.0, 300, 5).0, Level::Clear);
        assert_eq!(f.update(420_000, 40.001, 0.0, 300, 5).0, Level::Hold);
    }
}
