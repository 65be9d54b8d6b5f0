//! Probe-stale rule: no accepted reading for a multiple of the tank's expected interval.
use crate::alerts::detector::Level;
use crate::alerts::observation::Observation;

/// Raise when the newest reading is at least `multiple` expected intervals old; clear when it is at most
/// `clear_multiple` intervals old. `age_ms` counts from the last reading, or from when watching began.
pub fn level(
    age_ms: i64,
    expected_interval_s: u64,
    multiple: f64,
    clear_multiple: f64,
    ever_heard: bool,
) -> (Level, Observation) {
    let interval_ms = expected_interval_s as f64 * 1000.0;
    let raise_ms = interval_ms * multiple;
    let clear_ms = interval_ms * clear_multiple;
    let age = age_ms as f64;
    let level = if age >= raise_ms {
        Level::Raise
    } else if age <= clear_ms {
        Level::Clear
    } else {
        Level::Hold
    };
    let observation = Observation::Stale {
        age_s: age / 1000.0,
        limit_s: raise_ms / 1000.0,
        expected_interval_s: expected_interval_s as f64,
        ever_heard,
    };
    (level, observation)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn raise_and_clear_levels() {
        assert_eq!(level(180_000, 60, 3.0, 1.5, true).0, Level::Raise);
        assert_eq!(level(179_999, 60, 3.0, 1.5, true).0, Level::Hold);
        assert_eq!(level(90_000, 60, 3.0, 1.5, true).0, Level::Clear);
        assert_eq!(level(90_001, 60, 3.0, 1.5, true).0, Level::Hold);
    }
}
