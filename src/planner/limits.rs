//! Rate limits and salinity limits of a species and stage, and how far the rate limits let a ramp move.
//!
//! A rate in SP/h caps the change of Practical Salinity per hour. A rate in %/h caps the change to a fixed
//! percentage of the current salinity per hour, compounded hourly: in `h` hours SP may fall to at most
//! SP·(1 − p)^h or rise to at most SP·(1 + p)^h. When both are given the stricter applies. Below
//! `slow_below_sp` the slow rate replaces the normal one; a step that crosses that salinity moves at the
//! normal rate down to it and at the slow rate beyond it (and the reverse when rising).
use serde::{Deserialize, Serialize};

use super::error::{positive, salinity, PlanError};

/// How fast a tank may change salinity (filled from a species profile, or given directly).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct RateLimits {
    /// Largest change of SP per hour.
    pub max_rate_sp_per_h: Option<f64>,
    /// Largest change per hour as a percentage of the current SP.
    pub max_rate_percent_per_h: Option<f64>,
    /// Below this SP the slow rate applies.
    pub slow_below_sp: Option<f64>,
    /// Largest change of SP per hour below `slow_below_sp`.
    pub slow_rate_sp_per_h: Option<f64>,
    /// Largest change per hour, % of the current SP, below `slow_below_sp`.
    pub slow_rate_percent_per_h: Option<f64>,
}

/// Salinity ranges of a species and stage (Practical Salinity, low..=high).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SalinityLimits {
    /// Range where the animals do best.
    pub optimum: (f64, f64),
    /// Range the animals survive.
    pub tolerance: (f64, f64),
}

/// Which way the ramp moves.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    Up,
    Down,
}

impl Direction {
    /// The direction from `from` to `to` (`Up` when they are equal).
    pub fn between(from: f64, to: f64) -> Self {
        if to < from {
            Direction::Down
        } else {
            Direction::Up
        }
    }
}

/// The caps of one salinity band: SP/h and/or %/h (as a fraction per hour).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct BandCap {
    sp_per_h: Option<f64>,
    fraction_per_h: Option<f64>,
}

impl BandCap {
    fn is_unlimited(&self) -> bool {
        self.sp_per_h.is_none() && self.fraction_per_h.is_none()
    }

    /// Farthest SP reachable from `s` in `hours` (±∞ when unlimited).
    fn reach(&self, s: f64, direction: Direction, hours: f64) -> f64 {
        match direction {
            Direction::Down => {
                let mut end = f64::NEG_INFINITY;
                if let Some(r) = self.sp_per_h {
                    end = end.max(s - r * hours);
                }
                if let Some(p) = self.fraction_per_h {
                    end = end.max(s * (1.0 - p).powf(hours));
                }
                end
            }
            Direction::Up => {
                let mut end = f64::INFINITY;
                if let Some(r) = self.sp_per_h {
                    end = end.min(s + r * hours);
                }
                if let Some(p) = self.fraction_per_h {
                    end = end.min(s * (1.0 + p).powf(hours));
                }
                end
            }
        }
    }

    /// Hours to go from `s` to `boundary` at the cap (0 when unlimited, ∞ when the cap cannot leave 0).
    fn hours_to(&self, s: f64, boundary: f64, direction: Direction) -> f64 {
        let mut hours = 0.0_f64;
        if let Some(r) = self.sp_per_h {
            hours = hours.max((boundary - s).abs() / r);
        }
        if let Some(p) = self.fraction_per_h {
            let per_hour = match direction {
                Direction::Down => (1.0 - p).ln(),
                Direction::Up => (1.0 + p).ln(),
            };
            let t = if s > 0.0 {
                (boundary / s).ln() / per_hour
            } else {
                f64::INFINITY
            };
            hours = hours.max(t);
        }
        hours
    }

    /// Instantaneous SP/h allowed at `s` (the derivative of [`BandCap::reach`] at 0 hours).
    fn instant_sp_per_h(&self, s: f64, direction: Direction) -> f64 {
        let mut rate = f64::INFINITY;
        if let Some(r) = self.sp_per_h {
            rate = rate.min(r);
        }
        if let Some(p) = self.fraction_per_h {
            let per_hour = match direction {
                Direction::Down => -(1.0 - p).ln(),
                Direction::Up => (1.0 + p).ln(),
            };
            rate = rate.min(s * per_hour);
        }
        rate
    }
}

/// Validated rate limits, ready to answer "how far may the ramp move".
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateCaps {
    normal: BandCap,
    slow: Option<(f64, BandCap)>,
}

fn fraction(name: &'static str, percent: Option<f64>) -> Result<Option<f64>, PlanError> {
    match percent {
        None => Ok(None),
        Some(p) if p.is_finite() && p > 0.0 && p < 100.0 => Ok(Some(p / 100.0)),
        Some(p) => Err(PlanError::InvalidInput {
            name,
            value: p,
            why: "must be a percentage above 0 and below 100",
        }),
    }
}

fn rate(name: &'static str, value: Option<f64>) -> Result<Option<f64>, PlanError> {
    value.map(|v| positive(name, v)).transpose()
}

impl RateCaps {
    /// Validates the limits: rates positive, percentages in (0, 100), a slow band with a slow rate.
    pub fn new(limits: &RateLimits) -> Result<Self, PlanError> {
        let normal = BandCap {
            sp_per_h: rate("max_rate_sp_per_h", limits.max_rate_sp_per_h)?,
            fraction_per_h: fraction("max_rate_percent_per_h", limits.max_rate_percent_per_h)?,
        };
        let slow_cap = BandCap {
            sp_per_h: rate("slow_rate_sp_per_h", limits.slow_rate_sp_per_h)?,
            fraction_per_h: fraction("slow_rate_percent_per_h", limits.slow_rate_percent_per_h)?,
        };
        let slow = match limits.slow_below_sp {
            Some(below) => {
                salinity("slow_below_sp", below)?;
                if slow_cap.is_unlimited() {
                    return Err(PlanError::Inconsistent(format!(
                        "a slow band below SP {below} needs a slow rate (SP/h or %/h)"
                    )));
                }
                Some((below, slow_cap))
            }
            None if !slow_cap.is_unlimited() => {
                return Err(PlanError::Inconsistent(
                    "a slow rate needs the salinity below which it applies".to_owned(),
                ))
            }
            None => None,
        };
        Ok(Self { normal, slow })
    }

    /// True when no band has any cap.
    pub fn is_unlimited(&self) -> bool {
        self.normal.is_unlimited() && self.slow.is_none()
    }

    /// True when the normal band (above the slow band) has no cap.
    pub fn normal_band_is_unlimited(&self) -> bool {
        self.normal.is_unlimited()
    }

    /// True when `s` lies in the slow band for a ramp moving `direction` (below it, or at it going down).
    pub fn in_slow_band(&self, s: f64, direction: Direction) -> bool {
        matches!(self.slow, Some((below, _)) if s < below || (s == below && direction == Direction::Down))
    }

    /// The band that applies when moving `direction` from `s`.
    fn band(&self, s: f64, direction: Direction) -> &BandCap {
        match self.slow {
            Some((_, ref cap)) if self.in_slow_band(s, direction) => cap,
            _ => &self.normal,
        }
    }

    /// Farthest SP the caps allow from `s` in `hours` moving `direction` (±∞ when uncapped).
    pub fn reach(&self, s: f64, direction: Direction, hours: f64) -> f64 {
        let Some((below, slow)) = self.slow else {
            return self.normal.reach(s, direction, hours);
        };
        match direction {
            Direction::Down if s > below => {
                let t = self.normal.hours_to(s, below, direction);
                if t >= hours {
                    self.normal.reach(s, direction, hours)
                } else {
                    slow.reach(below, direction, hours - t)
                }
            }
            Direction::Down => slow.reach(s, direction, hours),
            Direction::Up if s < below => {
                let t = slow.hours_to(s, below, direction);
                if t >= hours {
                    slow.reach(s, direction, hours)
                } else {
                    self.normal.reach(below, direction, hours - t)
                }
            }
            Direction::Up => self.normal.reach(s, direction, hours),
        }
    }

    /// Instantaneous SP/h allowed at `s` moving `direction` (∞ when uncapped).
    pub fn instant_sp_per_h(&self, s: f64, direction: Direction) -> f64 {
        self.band(s, direction).instant_sp_per_h(s, direction)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percent_per_hour_compounds_hourly() {
        // 10 %/h from SP 30 down: 27 after 1 h, 24.3 after 2 h (worked by hand: 30·0.9, 30·0.81).
        let caps = RateCaps::new(&RateLimits {
            max_rate_percent_per_h: Some(10.0),
            ..RateLimits::default()
        })
        .unwrap();
        assert!((caps.reach(30.0, Direction::Down, 1.0) - 27.0).abs() < 1e-12);
        assert!((caps.reach(30.0, Direction::Down, 2.0) - 24.3).abs() < 1e-12);
        assert!((caps.reach(10.0, Direction::Up, 1.0) - 11.0).abs() < 1e-12);
    }

    #[test]
    fn the_stricter_of_two_caps_applies() {
        let caps = RateCaps::new(&RateLimits {
            max_rate_sp_per_h: Some(2.0),
            max_rate_percent_per_h: Some(10.0),
            ..RateLimits::default()
        })
        .unwrap();
        // At SP 30, 10 % is 3 SP: the 2 SP/h cap binds. At SP 10, 10 % is 1 SP: the percentage binds.
        assert!((caps.reach(30.0, Direction::Down, 1.0) - 28.0).abs() < 1e-12);
        assert!((caps.reach(10.0, Direction::Down, 1.0) - 9.0).abs() < 1e-12);
    }

    #[test]
    fn a_step_across_the_slow_boundary_splits_its_time() {
        // 2 SP/h to SP 5, then 0.5 SP/h: from 6 over 2 h = 0.5 h to reach 5, then 1.5 h × 0.5 = 0.75 → 4.25.
        let caps = RateCaps::new(&RateLimits {
            max_rate_sp_per_h: Some(2.0),
            slow_below_sp: Some(5.0),
            slow_rate_sp_per_h: Some(0.5),
            ..RateLimits::default()
        })
        .unwrap();
        assert!((caps.reach(6.0, Direction::Down, 2.0) - 4.25).abs() < 1e-12);
        // Rising from 4 over 2 h: 2 h at 0.5 SP/h = 5 exactly at the boundary, nothing left.
        assert!((caps.reach(4.0, Direction::Up, 2.0) - 5.0).abs() < 1e-12);
        assert!((caps.reach(4.0, Direction::Up, 3.0) - 7.0).abs() < 1e-12);
    }

    #[test]
    fn inconsistent_limits_are_refused() {
        assert!(RateCaps::new(&RateLimits {
            slow_below_sp: Some(5.0),
            ..RateLimits::default()
        })
        .is_err());
        assert!(RateCaps::new(&RateLimits {
            slow_rate_sp_per_h: Some(1.0),
            ..RateLimits::default()
        })
        .is_err());
        assert!(RateCaps::new(&RateLimits {
            max_rate_percent_per_h: Some(100.0),
            ..RateLimits::default()
        })
        .is_err());
        assert!(RateCaps::new(&RateLimits {
            max_rate_sp_per_h: Some(-1.0),
            ..RateLimits::default()
        })
        .is_err());
    }
}
