//! Range rules: a value (salinity or temperature) outside a range, with the clear level inside it.
use crate::alerts::defaults::HYSTERESIS_MAX_FRACTION_OF_RANGE;
use crate::alerts::detector::Level;
use crate::alerts::limits::Bounds;
use crate::alerts::observation::Observation;

/// A range with its raise and clear levels.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    /// Raise below this.
    pub low: f64,
    /// Raise above this.
    pub high: f64,
    /// Clear at or above this ...
    pub clear_low: f64,
    /// ... and at or below this.
    pub clear_high: f64,
}

impl Band {
    /// The band of a range with a hysteresis, capped at a quarter of the range's width.
    pub fn new(bounds: Bounds, hysteresis: f64) -> Self {
        let h = hysteresis
            .min((bounds.high - bounds.low) * HYSTERESIS_MAX_FRACTION_OF_RANGE)
            .max(0.0);
        Self {
            low: bounds.low,
            high: bounds.high,
            clear_low: bounds.low + h,
            clear_high: bounds.high - h,
        }
    }

    /// Raise outside `low ..= high`, clear inside `clear_low ..= clear_high`, hold between.
    pub fn level(&self, value: f64) -> (Level, Observation) {
        let level = if value < self.low || value > self.high {
            Level::Raise
        } else if value >= self.clear_low && value <= self.clear_high {
            Level::Clear
        } else {
            Level::Hold
        };
        let observation = Observation::Range {
            value,
            low: self.low,
            high: self.high,
            clear_low: self.clear_low,
            clear_high: self.clear_high,
        };
        (level, observation)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_with_hysteresis() {
        let band = Band::new(Bounds::new(28.0, 32.0), 0.3);
        assert_eq!(band.level(27.9).0, Level::Raise);
        assert_eq!(band.level(32.01).0, Level::Raise);
        assert_eq!(band.level(28.0).0, Level::Hold);
        assert_eq!(band.level(28.2).0, Level::Hold);
        assert_eq!(band.level(28.3).0, Level::Clear);
        assert_eq!(band.level(31.7).0, Level::Clear);
        assert_eq!(band.level(31.8).0, Level::Hold);
    }

    #[test]
    fn hysteresis_is_capped_for_narrow_ranges() {
        let band = Band::new(Bounds::new(10.0, 11.0), 2.0);
        assert!((band.clear_low - 10.25).abs() < 1e-12);
        assert!((band.clear_high - 10.75).abs() < 1e-12);
    }
}
