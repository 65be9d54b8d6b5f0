//! Inconsistent-probe rule: conductivity and temperature that cannot both be right.
//!
//! Two checks, either raises:
//!
//! 1. **Stuck conductivity while temperature moves.** At constant salinity the in-situ conductivity of
//!    natural waters changes by about 2 % per °C (common practice: the usual 1.9–2.1 %/°C compensation
//!    coefficients of conductivity meters). If temperature spans at least `temperature_change_c` over the
//!    last `readings` readings while conductivity stays within `tolerance_percent` of its mean, one of the
//!    two is wrong: a stuck conductivity sensor, or a temperature-compensated probe configured as in-situ.
//!    Only judged at or above `min_conductivity_ms_cm`, where the expected change is many probe counts.
//!    Clears once the conductivity range exceeds twice the tolerance (the conductivity follows again).
//! 2. **Temperature faster than water can change.** Warming a tank's water takes energy: 1 °C/min in
//!    1 000 L is about 70 kW (4.18 kJ/(kg·K) × 1 000 kg / 60 s), far beyond a tank's heater or chiller, so
//!    a faster change means the temperature probe is out of the water or failing (and the salinity computed
//!    with it is wrong). Measured between the newest reading and the newest one at least `span_s` older;
//!    clears at or below half the limit.
use super::Samples;
use crate::alerts::detector::Level;
use crate::alerts::observation::Observation;

/// The parameters of both checks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InconsistentParams {
    pub readings: usize,
    pub temperature_change_c: f64,
    pub tolerance_percent: f64,
    pub min_conductivity_ms_cm: f64,
    pub max_temperature_rate_c_per_min: f64,
    pub span_s: u64,
}

/// Judges the newest reading of `samples` (which must include it).
pub fn level(samples: &Samples, p: &InconsistentParams) -> (Level, Observation) {
    let (stuck, stuck_obs) = stuck_conductivity(samples, p);
    let (jump, jump_obs) = temperature_jump(samples, p);
    let observation = if jump == Level::Raise || stuck == Level::Unknown {
        jump_obs
    } else {
        stuck_obs
    };
    (stuck.either(jump), observation)
}

fn stuck_conductivity(samples: &Samples, p: &InconsistentParams) -> (Level, Observation) {
    if samples.len() < p.readings {
        return (Level::Unknown, Observation::None);
    }
    let (mut c_min, mut c_max, mut c_sum) = (f64::INFINITY, f64::NEG_INFINITY, 0.0);
    let (mut t_min, mut t_max) = (f64::INFINITY, f64::NEG_INFINITY);
    for s in samples.newest(p.readings) {
        c_min = c_min.min(s.conductivity_ms_cm);
        c_max = c_max.max(s.conductivity_ms_cm);
        c_sum += s.conductivity_ms_cm;
        t_min = t_min.min(s.temperature_c);
        t_max = t_max.max(s.temperature_c);
    }
    let c_mean = c_sum / p.readings as f64;
    if c_mean < p.min_conductivity_ms_cm || c_mean <= 0.0 {
        return (Level::Unknown, Observation::None);
    }
    let range_percent = (c_max - c_min) / c_mean * 100.0;
    let temperature_range_c = t_max - t_min;
    let level = if range_percent <= p.tolerance_percent && temperature_range_c >= p.temperature_change_c {
        Level::Raise
    } else if range_percent > 2.0 * p.tolerance_percent {
        Level::Clear
    } else {
        Level::Hold
    };
    let observation = Observation::StuckConductivity {
        conductivity_ms_cm: c_mean,
        range_percent,
        temperature_range_c,
        readings: p.readings,
    };
    (level, observation)
}

fn temperature_jump(samples: &Samples, p: &InconsistentParams) -> (Level, Observation) {
    let Some(newest) = samples.last() else {
        return (Level::Unknown, Observation::None);
    };
    let span_ms = (p.span_s as i64).saturating_mul(1000);
    let Some(reference) = samples.iter().rev().find(|s| newest.t_ms - s.t_ms >= span_ms) else {
        return (Level::Unknown, Observation::None);
    };
    let dt_min = (newest.t_ms - reference.t_ms) as f64 / 60_000.0;
    let rate = (newest.temperature_c - reference.temperature_c).abs() / dt_min;
    let limit = p.max_temperature_rate_c_per_min;
    let level = if rate > limit {
        Level::Raise
    } else if rate <= 0.5 * limit {
        Level::Clear
    } else {
        Level::Hold
    };
    let observation = Observation::TemperatureJump {
        rate_c_per_min: rate,
        limit_c_per_min: limit,
        span_s: dt_min * 60.0,
    };
    (level, observation)
}

#[cfg(test)]
mod tests {
    use super::super::Sample;
    use super::*;

    const P: InconsistentParams = InconsistentParams {
        readings: 6,
        temperature_change_c: 1.0,
        tolerance_percent: 0.1,
        min_conductivity_ms_cm: 5.0,
        max_temperature_rate_c_per_min: 1.0,
        span_s: 60,
    };

    fn ring(points: &[(i64, f64, f64)]) -> Samples {
        let mut r = Samples::new();
        for &(t_s, c, t) in points {
            r.push(Sample {
                t_ms: t_s * 1000,
                practical_salinity: 30.0,
                temperature_c: t,
                conductivity_ms_cm: c,
            });
        }
        r
    }

    #[test]
    fn stuck_conductivity_with_moving_temperature_raises() {
        let r = ring(&[
            (0, 42.0, 12.0),
            (60, 42.0, 12.3),
            (120, 42.0, 12.6),
            (180, 42.0, 12.8),
            (240, 42.0, 13.0),
            (300, 42.0, 13.1),
        ]);
        assert_eq!(stuck_conductivity(&r, &P).0, Level::Raise);
        assert_eq!(level(&r, &P).0, Level::Raise);
    }

    #[test]
    fn conductivity_following_temperature_clears() {
        // About 2 %/°C: 42 mS/cm rises by ~0.8 mS/cm per °C.
        let r = ring(&[
            (0, 42.0, 12.0),
            (60, 42.25, 12.3),
            (120, 42.5, 12.6),
            (180, 42.7, 12.8),
            (240, 42.85, 13.0),
            (300, 42.9, 13.1),
        ]);
        assert_eq!(level(&r, &P).0, Level::Clear);
    }

    #[test]
    fn steady_water_with_steady_conductivity_holds() {
        let r = ring(&[
            (0, 42.0, 12.0),
            (60, 42.0, 12.0),
            (120, 42.01, 12.1),
            (180, 42.0, 12.0),
            (240, 42.0, 12.0),
            (300, 42.0, 12.0),
        ]);
        assert_eq!(stuck_conductivity(&r, &P).0, Level::Hold);
    }

    #[test]
    fn fresh_water_is_not_judged_by_the_stuck_check() {
        let r = ring(&[
            (0, 0.3, 12.0),
            (60, 0.3, 12.3),
            (120, 0.3, 12.6),
            (180, 0.3, 12.8),
            (240, 0.3, 13.0),
            (300, 0.3, 13.1),
        ]);
        assert_eq!(stuck_conductivity(&r, &P).0, Level::Unknown);
    }

    #[test]
    fn impossible_temperature_jump_raises() {
        let r = ring(&[
            (0, 42.0, 12.0),
            (30, 42.1, 12.0),
            (60, 42.2, 12.1),
            (90, 42.1, 15.0),
        ]);
        // Reference: the newest reading at least 60 s before t = 90 s is the one at 30 s (12.0 °C).
        let (level, obs) = temperature_jump(&r, &P);
        assert_eq!(level, Level::Raise);
        assert!(
            matches!(obs, Observation::TemperatureJump { rate_c_per_min, .. } if (rate_c_per_min - 3.0).abs() < 1e-9)
        );
        let slow = ring(&[(0, 42.0, 12.0), (60, 42.1, 12.2), (120, 42.2, 12.4)]);
        assert_eq!(temperature_jump(&slow, &P).0, Level::Clear);
    }
}
