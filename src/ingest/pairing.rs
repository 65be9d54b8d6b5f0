//! Pairing conductivity with temperature: each tank's newest temperature, and the nearest-in-time choice.
use chrono::{DateTime, Duration, Utc};

/// A temperature and its reading time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TemperatureSample {
    pub time: DateTime<Utc>,
    pub temperature_c: f64,
}

/// The newest temperature (by reading time) of every tank.
#[derive(Debug, Clone, Default)]
pub struct PairingState {
    latest: Vec<Option<TemperatureSample>>,
}

impl PairingState {
    /// State for `tanks` tanks, all empty.
    pub fn new(tanks: usize) -> Self {
        Self {
            latest: vec![None; tanks],
        }
    }

    /// Keeps `sample` if it is newer than the tank's current one.
    pub fn update(&mut self, tank_index: usize, sample: TemperatureSample) {
        if let Some(slot) = self.latest.get_mut(tank_index) {
            if slot.is_none_or(|current| sample.time >= current.time) {
                *slot = Some(sample);
            }
        }
    }

    /// The tank's newest temperature.
    pub fn latest(&self, tank_index: usize) -> Option<TemperatureSample> {
        self.latest.get(tank_index).copied().flatten()
    }

    /// The tank's newest temperature if it lies within `max_age` of `time` (either side).
    pub fn find(
        &self,
        tank_index: usize,
        time: DateTime<Utc>,
        max_age: Duration,
    ) -> Option<TemperatureSample> {
        self.latest(tank_index).filter(|t| within(t.time, time, max_age))
    }
}

fn within(a: DateTime<Utc>, b: DateTime<Utc>, max_age: Duration) -> bool {
    (a - b).abs() <= max_age
}

/// The candidate nearest in time to `time`, if within `max_age` (earlier candidates win ties).
pub fn nearest(
    candidates: &[TemperatureSample],
    time: DateTime<Utc>,
    max_age: Duration,
) -> Option<TemperatureSample> {
    candidates
        .iter()
        .filter(|c| within(c.time, time, max_age))
        .min_by_key(|c| (c.time - time).abs())
        .copied()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(s: i64) -> DateTime<Utc> {
        DateTime::from_timestamp(1_743_573_600 + s, 0).unwrap()
    }

    fn t(s: i64, c: f64) -> TemperatureSample {
        TemperatureSample {
            time: at(s),
            temperature_c: c,
        }
    }

    #[test]
    fn keeps_the_newest_by_reading_time() {
        let mut state = PairingState::new(2);
        state.update(0, t(10, 9.0));
        state.update(0, t(5, 8.0)); // older, arrives late: not kept
        assert_eq!(state.latest(0), Some(t(10, 9.0)));
        state.update(0, t(20, 9.5));
        assert_eq!(state.latest(0), Some(t(20, 9.5)));
        assert_eq!(state.latest(1), None);
        state.update(7, t(0, 1.0)); // unknown tank: ignored, no panic
    }

    #[test]
    fn finds_within_max_age_either_side() {
        let mut state = PairingState::new(1);
        state.update(0, t(0, 9.0));
        let max = Duration::seconds(60);
        assert!(state.find(0, at(60), max).is_some());
        assert!(state.find(0, at(61), max).is_none());
        assert!(state.find(0, at(-60), max).is_some());
        assert!(state.find(0, at(-61), max).is_none());
    }

    #[test]
    fn nearest_candidate_wins() {
        let c = [t(0, 1.0), t(50, 2.0), t(100, 3.0)];
        let max = Duration::seconds(60);
        assert_eq!(nearest(&c, at(40), max), Some(t(50, 2.0)));
        assert_eq!(nearest(&c, at(25), max), Some(t(0, 1.0)));
        assert_eq!(nearest(&c, at(300), max), None);
    }
}
