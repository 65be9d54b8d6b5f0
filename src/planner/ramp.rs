//! The ramp: the sequence of setpoints from the start salinity to the target, one per interval, shaped
//! (linear in SP, proportional, or linear in osmolality), capped by the rate limits, with holds.
//!
//! Each change segment lasts one interval: at its start the tank is at `from`, at its end at `to`. A
//! segment's change never exceeds what the rate limits allow over its interval ([`RateCaps::reach`]) nor
//! the shape's own rate. Segments are shortened in SP (never in time) to land exactly on a hold's salinity
//! and on the target. A hold keeps its salinity for its duration.
use serde::{Deserialize, Serialize};

use super::error::{positive, salinity, PlanError};
use super::limits::{Direction, RateCaps};
use super::water::{osmolality_mosm_kg, practical_salinity_from_osmolality};

/// Most segments a plan may hold.
pub const MAX_SEGMENTS: usize = 10_000;

/// Points sampled along the path to derive a shape rate from the rate limits.
const RATE_SAMPLES: usize = 200;

/// How the setpoint moves with time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RampShape {
    /// Equal change of Practical Salinity per hour (rate in SP/h).
    LinearSalinity,
    /// A fixed percentage of the current salinity per hour, compounded hourly (rate in %/h); slows toward
    /// fresh water when falling.
    Proportional,
    /// Equal change of osmolality per hour (rate in mOsm/kg per hour), TEOS-10 osmolality.
    LinearOsmolality,
}

/// A ramp shape with its rate in the shape's unit (SP/h, %/h or mOsm/kg/h).
///
/// Without a rate, the ramp uses the largest constant rate of its shape that the normal-band rate limits
/// allow everywhere on the path (the slow band then slows it further where it applies).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Ramp {
    pub shape: RampShape,
    pub rate: Option<f64>,
}

/// Keep the setpoint at `practical_salinity` for `duration_h` hours when the ramp gets there.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Hold {
    pub practical_salinity: f64,
    pub duration_h: f64,
}

/// What a segment does.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SegmentKind {
    /// The salinity moves from `from` to `to` over the segment.
    Change,
    /// The salinity stays where it is.
    Hold,
}

/// One piece of the ramp.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Segment {
    pub kind: SegmentKind,
    /// Hours from the plan's start to the segment's start.
    pub offset_h: f64,
    pub duration_h: f64,
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
}

/// What the ramp needs.
#[derive(Debug, Clone, Copy)]
pub struct RampSpec<'a> {
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
    pub temperature_c: f64,
    /// Length of one change segment, hours.
    pub interval_h: f64,
    pub ramp: Ramp,
    pub caps: &'a RateCaps,
    pub holds: &'a [Hold],
}

/// The shape's rate as a function of the current SP, ready to step.
#[derive(Debug, Clone, Copy)]
struct ShapeStep {
    shape: RampShape,
    /// SP/h, fraction/h or mOsm/kg/h.
    rate: f64,
    temperature_c: f64,
}

impl ShapeStep {
    /// SP after `hours` at the shape's rate from `s`.
    fn advance(&self, s: f64, direction: Direction, hours: f64) -> Result<f64, PlanError> {
        let sign = if direction == Direction::Up { 1.0 } else { -1.0 };
        Ok(match self.shape {
            RampShape::LinearSalinity => s + sign * self.rate * hours,
            RampShape::Proportional => s * (1.0 + sign * self.rate).powf(hours),
            RampShape::LinearOsmolality => {
                let o = osmolality_mosm_kg(s, self.temperature_c)? + sign * self.rate * hours;
                let top = osmolality_mosm_kg(super::water::MAX_PLAN_PRACTICAL_SALINITY, self.temperature_c)?;
                practical_salinity_from_osmolality(o.clamp(0.0, top), self.temperature_c)?
            }
        })
    }
}

/// Validates the ramp's rate in its own unit and converts %/h to a fraction.
fn given_rate(shape: RampShape, rate: f64, direction: Direction) -> Result<f64, PlanError> {
    positive("ramp rate", rate)?;
    if shape == RampShape::Proportional {
        if direction == Direction::Down && rate >= 100.0 {
            return Err(PlanError::InvalidInput {
                name: "ramp rate",
                value: rate,
                why: "a falling proportional rate must be below 100 %/h",
            });
        }
        return Ok(rate / 100.0);
    }
    Ok(rate)
}

/// The largest constant shape rate the normal-band caps allow at every sampled SP of the path.
fn derived_rate(spec: &RampSpec, direction: Direction) -> Result<f64, PlanError> {
    let (from, to) = (spec.from_practical_salinity, spec.to_practical_salinity);
    let mut best = f64::INFINITY;
    let mut any_normal = false;
    for i in 0..=RATE_SAMPLES {
        let s = from + (to - from) * i as f64 / RATE_SAMPLES as f64;
        if spec.caps.in_slow_band(s, direction) {
            continue;
        }
        any_normal = true;
        best = best.min(shape_rate_at(spec, s, direction)?);
    }
    if !any_normal {
        // The whole path lies in the slow band: derive the rate from the slow caps.
        for i in 0..=RATE_SAMPLES {
            let s = from + (to - from) * i as f64 / RATE_SAMPLES as f64;
            best = best.min(shape_rate_at(spec, s, direction)?);
        }
    }
    if best.is_finite() && best > 0.0 {
        Ok(best)
    } else if best == 0.0 {
        Err(PlanError::NoProgress {
            practical_salinity: from.min(to),
        })
    } else {
        Err(PlanError::NoRate)
    }
}

/// The shape rate (SP/h, fraction/h or mOsm/kg/h) that matches the instantaneous cap at `s`.
fn shape_rate_at(spec: &RampSpec, s: f64, direction: Direction) -> Result<f64, PlanError> {
    let cap = spec.caps.instant_sp_per_h(s, direction);
    if !cap.is_finite() {
        return Ok(f64::INFINITY);
    }
    Ok(match spec.ramp.shape {
        RampShape::LinearSalinity => cap,
        RampShape::Proportional => {
            if s <= 0.0 {
                return Ok(f64::INFINITY);
            }
            match direction {
                Direction::Up => (cap / s).exp() - 1.0,
                Direction::Down => 1.0 - (-cap / s).exp(),
            }
        }
        RampShape::LinearOsmolality => {
            let h = 1e-4;
            let low = (s - h).max(0.0);
            let slope = (osmolality_mosm_kg(s + h, spec.temperature_c)?
                - osmolality_mosm_kg(low, spec.temperature_c)?)
                / (s + h - low);
            cap * slope
        }
    })
}

/// True when `x` is beyond `limit` seen from the direction of travel.
fn beyond(x: f64, limit: f64, direction: Direction) -> bool {
    match direction {
        Direction::Up => x > limit,
        Direction::Down => x < limit,
    }
}

/// The segments of a ramp and the shape rate they were built with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Ramped {
    pub segments: Vec<Segment>,
    /// The shape's rate used, in its unit: SP/h, %/h or mOsm/kg per hour (given or derived).
    pub shape_rate: f64,
}

/// Builds the segments from the start salinity to the target.
pub fn build_segments(spec: &RampSpec) -> Result<Ramped, PlanError> {
    let from = salinity("from_practical_salinity", spec.from_practical_salinity)?;
    let to = salinity("to_practical_salinity", spec.to_practical_salinity)?;
    let interval_h = positive("interval_h", spec.interval_h)?;
    let direction = Direction::between(from, to);
    let (low, high) = (from.min(to), from.max(to));
    let mut holds = Vec::with_capacity(spec.holds.len());
    for hold in spec.holds {
        let s = salinity("hold practical_salinity", hold.practical_salinity)?;
        positive("hold duration_h", hold.duration_h)?;
        if s < low || s > high {
            return Err(PlanError::HoldOffPath {
                practical_salinity: s,
                from,
                to,
            });
        }
        holds.push(*hold);
    }
    // Order the holds along the direction of travel.
    holds.sort_by(|a, b| {
        let order = a.practical_salinity.total_cmp(&b.practical_salinity);
        if direction == Direction::Down {
            order.reverse()
        } else {
            order
        }
    });
    let shape = ShapeStep {
        shape: spec.ramp.shape,
        rate: match spec.ramp.rate {
            Some(rate) => given_rate(spec.ramp.shape, rate, direction)?,
            None if from == to => 0.0,
            None => derived_rate(spec, direction)?,
        },
        temperature_c: spec.temperature_c,
    };
    let mut segments = Vec::new();
    let mut s = from;
    let mut offset_h = 0.0;
    let mut next_hold = 0;
    loop {
        while next_hold < holds.len() && holds[next_hold].practical_salinity == s {
            let hold = holds[next_hold];
            segments.push(Segment {
                kind: SegmentKind::Hold,
                offset_h,
                duration_h: hold.duration_h,
                from_practical_salinity: s,
                to_practical_salinity: s,
            });
            offset_h += hold.duration_h;
            next_hold += 1;
        }
        if s == to {
            let percent = if shape.shape == RampShape::Proportional {
                100.0
            } else {
                1.0
            };
            return Ok(Ramped {
                segments,
                shape_rate: shape.rate * percent,
            });
        }
        if segments.len() >= MAX_SEGMENTS {
            return Err(PlanError::TooManySteps { limit: MAX_SEGMENTS });
        }
        let by_shape = shape.advance(s, direction, interval_h)?;
        let by_caps = spec.caps.reach(s, direction, interval_h);
        let mut end = if beyond(by_shape, by_caps, direction) {
            by_caps
        } else {
            by_shape
        };
        let barrier = holds.get(next_hold).map_or(to, |h| h.practical_salinity);
        let snap = 1e-9 * barrier.abs().max(1.0);
        if !beyond(barrier, end, direction) || (barrier - end).abs() <= snap {
            end = barrier;
        } else if !end.is_finite() || (end - s).abs() <= snap {
            return Err(PlanError::NoProgress {
                practical_salinity: s,
            });
        }
        segments.push(Segment {
            kind: SegmentKind::Change,
            offset_h,
            duration_h: interval_h,
            from_practical_salinity: s,
            to_practical_salinity: end,
        });
        offset_h += interval_h;
        s = end;
    }
}
