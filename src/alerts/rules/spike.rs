//! Spike rule: a reading far from the median of the previous readings (salinity or temperature).
//!
//! The median of the last `window` readings is robust to the spike itself and to a few earlier ones.
//! A reading whose deviation exceeds a threshold is a spike; the rule clears once readings lie within
//! `clear_fraction` of the thresholds (and, by default, stay so for `clear_after_s`). While the rule is on,
//! spike readings are also kept out of the salinity-rate fit and cannot clear other conditions.
use super::{Sample, Samples, SAMPLE_CAPACITY};
use crate::alerts::detector::Level;
use crate::alerts::observation::Observation;

/// Fewest previous readings a median is taken of.
pub const MIN_READINGS: usize = 3;

/// Median of a small slice, sorted in place.
fn median(values: &mut [f64]) -> f64 {
    values.sort_unstable_by(f64::total_cmp);
    let n = values.len();
    if n % 2 == 1 {
        values[n / 2]
    } else {
        0.5 * (values[n / 2 - 1] + values[n / 2])
    }
}

/// Judges `current` against the newest `window` of `previous` (which must not contain `current`).
pub fn level(
    previous: &Samples,
    current: &Sample,
    window: usize,
    threshold_sp: f64,
    threshold_c: f64,
    clear_fraction: f64,
) -> (Level, Observation) {
    let n = previous.len().min(window).min(SAMPLE_CAPACITY);
    if n < MIN_READINGS {
        return (Level::Unknown, Observation::None);
    }
    let mut sp = [0.0; SAMPLE_CAPACITY];
    let mut temp = [0.0; SAMPLE_CAPACITY];
    for (i, s) in previous.newest(n).enumerate() {
        sp[i] = s.practical_salinity;
        temp[i] = s.temperature_c;
    }
    let median_sp = median(&mut sp[..n]);
    let median_c = median(&mut temp[..n]);
    // Deviation in units of the thresholds: > 1 is a spike.
    let deviation = ((current.practical_salinity - median_sp).abs() / threshold_sp)
        .max((current.temperature_c - median_c).abs() / threshold_c);
    let level = if deviation > 1.0 {
        Level::Raise
    } else if deviation <= clear_fraction {
        Level::Clear
    } else {
        Level::Hold
    };
    let observation = Observation::Spike {
        practical_salinity: current.practical_salinity,
        median_sp,
        temperature_c: current.temperature_c,
        median_c,
    };
    (level, observation)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(sp: f64, t: f64) -> Sample {
        Sample {
            t_ms: 0,
            practical_salinity: sp,
            temperature_c: t,
            conductivity_ms_cm: 40.0,
        }
    }

    #[test]
    fn median_ignores_an_earlier_spike() {
        let mut ring = Samples::new();
        for sp in [30.0, 30.1, 35.0, 29.9, 30.0] {
            ring.push(sample(sp, 12.0));
        }
        assert_eq!(
            level(&ring, &sample(30.2, 12.0), 9, 1.0, 1.0, 0.5).0,
            Level::Clear
        );
        assert_eq!(level(&ring, &sample(30.7, 12.0), 9, 1.0, 1.0, 0.5).0, Level::Hold);
        assert_eq!(
            level(&ring, &sample(31.5, 12.0), 9, 1.0, 1.0, 0.5).0,
            Level::Raise
        );
        assert_eq!(
            level(&ring, &sample(30.0, 10.5), 9, 1.0, 1.0, 0.5).0,
            Level::Raise
        );
    }

    #[test]
    fn needs_three_previous_readings() {
        let mut ring = Samples::new();
        ring.push(sample(30.0, 12.0));
        ring.push(sample(30.0, 12.0));
        assert_eq!(
            level(&ring, &sample(40.0, 12.0), 9, 1.0, 1.0, 0.5).0,
            Level::Unknown
        );
    }

    #[test]
    fn even_median_is_the_mean_of_the_middle_pair() {
        assert_eq!(median(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
    }
}
