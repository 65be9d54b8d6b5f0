//! `AlertLimits`: the numbers a tank's water is checked against (mapped from its species profile by the caller).
use serde::{Deserialize, Serialize};
use thiserror::Error;

/// A closed range `low ..= high`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Bounds {
    pub low: f64,
    pub high: f64,
}

impl Bounds {
    /// The range `low ..= high`.
    pub const fn new(low: f64, high: f64) -> Self {
        Self { low, high }
    }

    /// Whether `other` lies inside this range.
    pub fn contains_range(&self, other: &Bounds) -> bool {
        self.low <= other.low && other.high <= self.high
    }

    fn check(&self, name: &'static str) -> Result<(), LimitsError> {
        if !self.low.is_finite() || !self.high.is_finite() || self.low >= self.high {
            return Err(LimitsError::BadRange {
                name,
                low: self.low,
                high: self.high,
            });
        }
        Ok(())
    }
}

/// A maximum rate of change of practical salinity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RateOfChange {
    /// Absolute: SP per hour.
    SpPerHour(f64),
    /// Relative: percent of the current practical salinity per hour (as shrimp acclimation studies report it).
    PercentPerHour(f64),
}

impl RateOfChange {
    /// The rate in SP/h at this practical salinity; a percentage applies to at least `floor_sp`.
    pub fn sp_per_hour(self, practical_salinity: f64, floor_sp: f64) -> f64 {
        match self {
            Self::SpPerHour(rate) => rate,
            Self::PercentPerHour(percent) => percent / 100.0 * practical_salinity.max(floor_sp),
        }
    }

    fn value(self) -> f64 {
        match self {
            Self::SpPerHour(v) | Self::PercentPerHour(v) => v,
        }
    }
}

/// The maximum safe rate of change of salinity, optionally slower below a given salinity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RateLimit {
    /// The maximum rate.
    pub max: RateOfChange,
    /// A slower maximum that applies below a practical salinity.
    pub slower_below: Option<SlowerBelow>,
}

/// A slower maximum rate below a practical salinity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SlowerBelow {
    /// Practical salinity below which `max` applies.
    pub practical_salinity: f64,
    /// The slower maximum rate.
    pub max: RateOfChange,
}

impl RateLimit {
    /// The allowed rate, SP/h, at this practical salinity (`floor_sp`: see [`RateOfChange::sp_per_hour`]).
    pub fn allowed_sp_per_hour(&self, practical_salinity: f64, floor_sp: f64) -> f64 {
        match self.slower_below {
            Some(slower) if practical_salinity < slower.practical_salinity => {
                slower.max.sp_per_hour(practical_salinity, floor_sp)
            }
            _ => self.max.sp_per_hour(practical_salinity, floor_sp),
        }
    }
}

/// The limits of one tank. `None` switches the rules that need the value off for this tank.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct AlertLimits {
    /// Practical salinity optimum (warning outside).
    pub salinity_optimum: Option<Bounds>,
    /// Practical salinity tolerance (critical outside).
    pub salinity_tolerance: Option<Bounds>,
    /// Temperature optimum, °C (warning outside).
    pub temperature_optimum_c: Option<Bounds>,
    /// Temperature tolerance, °C (critical outside).
    pub temperature_tolerance_c: Option<Bounds>,
    /// Maximum safe rate of change of salinity.
    pub max_salinity_rate: Option<RateLimit>,
    /// Expected time between readings, seconds (the probe-stale rule counts in multiples of it).
    pub expected_interval_s: u64,
}

impl Default for AlertLimits {
    /// No species limits; readings expected every 60 s (the configuration's default interval).
    fn default() -> Self {
        Self {
            salinity_optimum: None,
            salinity_tolerance: None,
            temperature_optimum_c: None,
            temperature_tolerance_c: None,
            max_salinity_rate: None,
            expected_interval_s: crate::config::defaults::EXPECTED_INTERVAL_S,
        }
    }
}

/// Limits that cannot be used.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum LimitsError {
    /// A range with non-finite ends or `low >= high`.
    #[error("{name}: {low} .. {high} is not a range (need finite low < high)")]
    BadRange { name: &'static str, low: f64, high: f64 },
    /// The optimum is not inside the tolerance.
    #[error("{name}: the optimum must lie inside the tolerance")]
    OptimumOutsideTolerance { name: &'static str },
    /// A rate that is not a positive finite number, or a bad salinity for the slower rate.
    #[error("{name}: {value} must be a positive finite number")]
    BadRate { name: &'static str, value: f64 },
    /// No expected interval.
    #[error("expected_interval_s must be at least 1 s")]
    ZeroInterval,
}

impl AlertLimits {
    /// Checks every value.
    pub fn validate(&self) -> Result<(), LimitsError> {
        let pairs = [
            ("salinity", self.salinity_optimum, self.salinity_tolerance),
            (
                "temperature_c",
                self.temperature_optimum_c,
                self.temperature_tolerance_c,
            ),
        ];
        for (name, optimum, tolerance) in pairs {
            if let Some(b) = optimum {
                b.check(if name == "salinity" {
                    "salinity_optimum"
                } else {
                    "temperature_optimum_c"
                })?;
            }
            if let Some(b) = tolerance {
                b.check(if name == "salinity" {
                    "salinity_tolerance"
                } else {
                    "temperature_tolerance_c"
                })?;
            }
            if let (Some(o), Some(t)) = (optimum, tolerance) {
                if !t.contains_range(&o) {
                    return Err(LimitsError::OptimumOutsideTolerance { name });
                }
            }
        }
        if let Some(rate) = self.max_salinity_rate {
            let check = |name, v: f64| {
                if v.is_finite() && v > 0.0 {
                    Ok(())
                } else {
                    Err(LimitsError::BadRate { name, value: v })
                }
            };
            check("max_salinity_rate", rate.max.value())?;
            if let Some(slower) = rate.slower_below {
                check("slower_below.max", slower.max.value())?;
                check("slower_below.practical_salinity", slower.practical_salinity)?;
            }
        }
        if self.expected_interval_s == 0 {
            return Err(LimitsError::ZeroInterval);
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percent_rates_scale_with_salinity_and_switch_below_a_salinity() {
        let rate = RateLimit {
            max: RateOfChange::PercentPerHour(10.0),
            slower_below: Some(SlowerBelow {
                practical_salinity: 10.0,
                max: RateOfChange::SpPerHour(0.5),
            }),
        };
        assert!((rate.allowed_sp_per_hour(30.0, 1.0) - 3.0).abs() < 1e-12);
        assert!((rate.allowed_sp_per_hour(9.0, 1.0) - 0.5).abs() < 1e-12);
        // The floor keeps a percentage from reaching zero in fresh water.
        assert!((RateOfChange::PercentPerHour(10.0).sp_per_hour(0.1, 1.0) - 0.1).abs() < 1e-12);
    }

    #[test]
    fn validation_refuses_bad_limits() {
        let good = AlertLimits {
            salinity_optimum: Some(Bounds::new(28.0, 32.0)),
            salinity_tolerance: Some(Bounds::new(20.0, 36.0)),
            ..AlertLimits::default()
        };
        assert_eq!(good.validate(), Ok(()));
        let inverted = AlertLimits {
            salinity_optimum: Some(Bounds::new(32.0, 28.0)),
            ..good
        };
        assert!(matches!(inverted.validate(), Err(LimitsError::BadRange { .. })));
        let outside = AlertLimits {
            salinity_tolerance: Some(Bounds::new(29.0, 36.0)),
            ..good
        };
        assert!(matches!(
            outside.validate(),
            Err(LimitsError::OptimumOutsideTolerance { .. })
        ));
        let nan_rate = AlertLimits {
            max_salinity_rate: Some(RateLimit {
                max: RateOfChange::SpPerHour(f64::NAN),
                slower_below: None,
            }),
            ..good
        };
        assert!(matches!(nan_rate.validate(), Err(LimitsError::BadRate { .. })));
        let no_interval = AlertLimits {
            expected_interval_s: 0,
            ..good
        };
        assert_eq!(no_interval.validate(), Err(LimitsError::ZeroInterval));
    }
}
