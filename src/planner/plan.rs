//! The plan: a request (tank, salinities, temperature, start time, method, ramp, limits) in, a step table
//! with quantities, totals, warnings and assumptions out.
use chrono::{DateTime, Duration, Utc};
use serde::{Deserialize, Serialize};

use super::checks::{path_warnings, PlanWarning, WarningCode};
use super::error::{positive, salinity, PlanError};
use super::exchange::exchange_volumes;
use super::flow::{inflow_l_min, reach_with_flow, FlowShortfall};
use super::limits::{Direction, RateCaps, RateLimits, SalinityLimits};
use super::ramp::{build_segments, Hold, Ramp, RampSpec, Segment, SegmentKind};
use super::salt::{salt_addition, SATURATED_BRINE_FRACTION};
use super::water::{osmolality_mosm_kg, Water, MAX_PLAN_PRACTICAL_SALINITY};
use super::CAUTION;
use crate::seawater::error::check_temperature;

/// Bisection steps used to find a workable source salinity for a flow plan.
const SOURCE_SEARCH_STEPS: usize = 60;

/// How the tank's salinity is changed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", tag = "method")]
pub enum Method {
    /// Drain and refill with a source water once per interval.
    Exchange { source_practical_salinity: f64 },
    /// Feed source water continuously and let the tank overflow; the flow is set once per interval.
    FlowThrough {
        source_practical_salinity: f64,
        /// The pump's largest flow, L/min.
        max_flow_l_min: Option<f64>,
    },
    /// Drain a little, add dry sea salt dissolved in top-up water, once per interval (raises salinity only).
    Salt {
        /// Salinity of the water the salt is dissolved in (0 for fresh water).
        top_up_practical_salinity: f64,
        /// Litres of top-up water per kilogram of salt (0: the salt goes straight into the tank).
        dissolve_water_l_per_kg: f64,
    },
}

impl Method {
    /// A short name for tables and JSON.
    pub fn name(&self) -> &'static str {
        match self {
            Method::Exchange { .. } => "exchange",
            Method::FlowThrough { .. } => "flow",
            Method::Salt { .. } => "salt",
        }
    }
}

/// Everything a plan needs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanRequest {
    /// Tank volume at the mark, litres.
    pub tank_volume_l: f64,
    /// The tank's salinity now.
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
    /// Water temperature of the tank and every source water, °C ITS-90.
    pub temperature_c: f64,
    /// When the first step is due.
    pub start: DateTime<Utc>,
    /// Hours between steps (for flow-through: how often the flow is reset).
    pub interval_h: f64,
    pub method: Method,
    pub ramp: Ramp,
    pub holds: Vec<Hold>,
    pub rate_limits: RateLimits,
    pub salinity_limits: Option<SalinityLimits>,
}

/// What a step does.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum StepKind {
    /// Move the salinity to the setpoint.
    Change,
    /// Keep the salinity at the setpoint.
    Hold,
}

/// One row of the plan. Quantities are present where the method uses them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Step {
    /// 1-based.
    pub index: usize,
    /// When the step starts.
    pub time: DateTime<Utc>,
    /// Hours until the next step.
    pub duration_h: f64,
    pub kind: StepKind,
    /// Salinity at the step's start.
    pub from_practical_salinity: f64,
    /// Salinity at the end of the step's action (exchange, salt) or of its interval (flow-through).
    pub setpoint_practical_salinity: f64,
    #[serde(rename = "setpoint_osmolality_mOsm_kg")]
    pub setpoint_osmolality_mosm_kg: f64,
    /// Tank water to drain, litres.
    #[serde(rename = "drain_L", skip_serializing_if = "Option::is_none")]
    pub drain_l: Option<f64>,
    /// Water to add back to the mark (source water, or the salt's top-up water), litres.
    #[serde(rename = "add_L", skip_serializing_if = "Option::is_none")]
    pub add_l: Option<f64>,
    /// Dry sea salt, kg.
    #[serde(rename = "salt_kg", skip_serializing_if = "Option::is_none")]
    pub salt_kg: Option<f64>,
    /// Inflow of source water through the step, L/min.
    #[serde(rename = "flow_L_min", skip_serializing_if = "Option::is_none")]
    pub flow_l_min: Option<f64>,
    /// Water added so far, this step included, litres.
    #[serde(rename = "cumulative_water_L")]
    pub cumulative_water_l: f64,
    /// Salt added so far, kg (salt method).
    #[serde(rename = "cumulative_salt_kg", skip_serializing_if = "Option::is_none")]
    pub cumulative_salt_kg: Option<f64>,
}

/// Totals over the whole plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Totals {
    /// Water added, litres.
    #[serde(rename = "water_L")]
    pub water_l: f64,
    /// Tank water drained, litres (exchange and salt).
    #[serde(rename = "drain_L", skip_serializing_if = "Option::is_none")]
    pub drain_l: Option<f64>,
    /// Dry salt, kg (salt method).
    #[serde(rename = "salt_kg", skip_serializing_if = "Option::is_none")]
    pub salt_kg: Option<f64>,
}

/// What the plan takes for granted.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Assumptions {
    #[serde(rename = "tank_volume_L")]
    pub tank_volume_l: f64,
    #[serde(rename = "temperature_C")]
    pub temperature_c: f64,
    /// EOS-80 density of the tank water at the start and at the target (0 dbar), kg/m³.
    pub start_density_kg_m3: f64,
    pub target_density_kg_m3: f64,
    /// The added water (source water, or the salt's top-up water) and its density.
    pub added_water_practical_salinity: f64,
    pub added_water_density_kg_m3: f64,
    pub ramp: Ramp,
    /// The shape rate used (given or derived from the rate limits): SP/h, %/h or mOsm/kg per hour.
    pub shape_rate: f64,
    pub rate_limits: RateLimits,
    pub salinity_limits: Option<SalinityLimits>,
    pub notes: Vec<String>,
}

/// The finished plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Plan {
    pub method: &'static str,
    pub start: DateTime<Utc>,
    pub end: DateTime<Utc>,
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
    pub steps: Vec<Step>,
    pub total_duration_h: f64,
    pub totals: Totals,
    pub warnings: Vec<PlanWarning>,
    pub assumptions: Assumptions,
    pub caution: &'static str,
}

/// `start` plus `hours`, to the millisecond.
fn at(start: DateTime<Utc>, hours: f64) -> Result<DateTime<Utc>, PlanError> {
    let too_far = PlanError::InvalidInput {
        name: "plan duration_h",
        value: hours,
        why: "puts the plan beyond the representable calendar",
    };
    let ms = (hours * 3_600_000.0).round();
    if !ms.is_finite() || ms.abs() > 1e15 {
        return Err(too_far);
    }
    let span = Duration::try_milliseconds(ms as i64).ok_or(too_far.clone())?;
    start.checked_add_signed(span).ok_or(too_far)
}

/// The quantities of one step, before accumulation.
#[derive(Debug, Clone, Copy, Default)]
struct Quantities {
    drain_l: Option<f64>,
    add_l: Option<f64>,
    salt_kg: Option<f64>,
    flow_l_min: Option<f64>,
}

/// Makes the plan. Pure: the start time comes with the request.
pub fn make_plan(request: &PlanRequest) -> Result<Plan, PlanError> {
    let volume = positive("tank_volume_l", request.tank_volume_l)?;
    let from = salinity("from_practical_salinity", request.from_practical_salinity)?;
    let to = salinity("to_practical_salinity", request.to_practical_salinity)?;
    let t = request.temperature_c;
    check_temperature(t)?;
    let direction = Direction::between(from, to);
    let caps = RateCaps::new(&request.rate_limits)?;
    let mut notes = vec![
        "every water is at the tank temperature; volumes are measured at that temperature".to_owned(),
        "the tank is well mixed before each step is checked".to_owned(),
        "salt amounts are reference-composition sea salt (TEOS-10 Absolute Salinity is its mass fraction)"
            .to_owned(),
    ];
    let added = match request.method {
        Method::Exchange {
            source_practical_salinity,
        } => {
            let s = salinity("source_practical_salinity", source_practical_salinity)?;
            let beyond = match direction {
                Direction::Up => s >= to,
                Direction::Down => s <= to,
            };
            if from != to && !beyond {
                return Err(source_not_beyond(s, to, direction, "an exchange"));
            }
            notes.push(
                "after each drain the tank is refilled to the same mark; drain_L and add_L differ by the \
                        change of density (EOS-80)"
                    .to_owned(),
            );
            s
        }
        Method::FlowThrough {
            source_practical_salinity,
            max_flow_l_min,
        } => {
            let s = salinity("source_practical_salinity", source_practical_salinity)?;
            if let Some(q) = max_flow_l_min {
                positive("max_flow_l_min", q)?;
            }
            let beyond = match direction {
                Direction::Up => s > to,
                Direction::Down => s < to,
            };
            if from != to && !beyond {
                return Err(source_not_beyond(s, to, direction, "flow-through"));
            }
            notes.push(
                "the inflow overflows at the same rate (constant volume); the flow is held constant \
                        within each step"
                    .to_owned(),
            );
            s
        }
        Method::Salt {
            top_up_practical_salinity,
            dissolve_water_l_per_kg,
        } => {
            let s = salinity("top_up_practical_salinity", top_up_practical_salinity)?;
            if !(dissolve_water_l_per_kg.is_finite() && dissolve_water_l_per_kg >= 0.0) {
                return Err(PlanError::InvalidInput {
                    name: "dissolve_water_l_per_kg",
                    value: dissolve_water_l_per_kg,
                    why: "must be a finite number not below 0",
                });
            }
            if to < from {
                return Err(PlanError::MethodCannotReach {
                    method: "salt addition",
                    from,
                    to,
                    why: "adding salt only raises salinity",
                });
            }
            notes.push(
                "commercial sea salts hold moisture and differ from reference composition: weigh, \
                        dissolve, and check with a calibrated meter"
                    .to_owned(),
            );
            s
        }
    };
    let ramped = build_segments(&RampSpec {
        from_practical_salinity: from,
        to_practical_salinity: to,
        temperature_c: t,
        interval_h: request.interval_h,
        ramp: request.ramp,
        caps: &caps,
        holds: &request.holds,
    })?;
    let hold_salinities: Vec<f64> = request.holds.iter().map(|h| h.practical_salinity).collect();
    let mut warnings = path_warnings(from, to, &hold_salinities, t, request.salinity_limits.as_ref())?;
    if caps.normal_band_is_unlimited() && from != to {
        warnings.push(PlanWarning::new(
            WarningCode::NoRateLimit,
            "no maximum rate was given: the plan follows the ramp's own rate only; check it against the \
             species' limits"
                .to_owned(),
        ));
    }
    if let Method::Salt {
        dissolve_water_l_per_kg: k,
        ..
    } = request.method
    {
        if k > 0.0 && 1.0 / (1.0 + k) > SATURATED_BRINE_FRACTION {
            warnings.push(PlanWarning::new(
                WarningCode::BrineTooStrong,
                format!(
                    "{k} L of water per kg of salt makes a brine stronger than a saturated one (about {:.0} %): \
                     the salt will not all dissolve; use more water",
                    SATURATED_BRINE_FRACTION * 100.0
                ),
            ));
        }
    }
    let added_water = Water::new(added, t)?;
    let quantities = quantities(request, &ramped.segments, &added_water)?;
    let mut steps = Vec::with_capacity(ramped.segments.len());
    let (mut water_l, mut drain_l, mut salt_kg) = (0.0, 0.0, 0.0);
    for (i, (segment, q)) in ramped.segments.iter().zip(&quantities).enumerate() {
        water_l += q.add_l.unwrap_or(0.0) + q.flow_l_min.unwrap_or(0.0) * segment.duration_h * 60.0;
        drain_l += q.drain_l.unwrap_or(0.0);
        salt_kg += q.salt_kg.unwrap_or(0.0);
        steps.push(Step {
            index: i + 1,
            time: at(request.start, segment.offset_h)?,
            duration_h: segment.duration_h,
            kind: match segment.kind {
                SegmentKind::Change => StepKind::Change,
                SegmentKind::Hold => StepKind::Hold,
            },
            from_practical_salinity: segment.from_practical_salinity,
            setpoint_practical_salinity: segment.to_practical_salinity,
            setpoint_osmolality_mosm_kg: osmolality_mosm_kg(segment.to_practical_salinity, t)?,
            drain_l: q.drain_l,
            add_l: q.add_l,
            salt_kg: q.salt_kg,
            flow_l_min: q.flow_l_min,
            cumulative_water_l: water_l,
            cumulative_salt_kg: q.salt_kg.map(|_| salt_kg),
        });
    }
    let total_duration_h: f64 = ramped.segments.iter().map(|s| s.duration_h).sum();
    let is_flow = matches!(request.method, Method::FlowThrough { .. });
    let is_salt = matches!(request.method, Method::Salt { .. });
    Ok(Plan {
        method: request.method.name(),
        start: request.start,
        end: at(request.start, total_duration_h)?,
        from_practical_salinity: from,
        to_practical_salinity: to,
        steps,
        total_duration_h,
        totals: Totals {
            water_l,
            drain_l: (!is_flow).then_some(drain_l),
            salt_kg: is_salt.then_some(salt_kg),
        },
        warnings,
        assumptions: Assumptions {
            tank_volume_l: volume,
            temperature_c: t,
            start_density_kg_m3: Water::new(from, t)?.density_kg_l * 1000.0,
            target_density_kg_m3: Water::new(to, t)?.density_kg_l * 1000.0,
            added_water_practical_salinity: added,
            added_water_density_kg_m3: added_water.density_kg_l * 1000.0,
            ramp: request.ramp,
            shape_rate: ramped.shape_rate,
            rate_limits: request.rate_limits,
            salinity_limits: request.salinity_limits,
            notes,
        },
        caution: CAUTION,
    })
}

/// The method's quantities for every segment.
fn quantities(
    request: &PlanRequest,
    segments: &[Segment],
    added: &Water,
) -> Result<Vec<Quantities>, PlanError> {
    let (volume, t) = (request.tank_volume_l, request.temperature_c);
    match request.method {
        Method::Exchange { .. } => segments
            .iter()
            .map(|seg| {
                if seg.kind == SegmentKind::Hold {
                    return Ok(Quantities {
                        drain_l: Some(0.0),
                        add_l: Some(0.0),
                        ..Quantities::default()
                    });
                }
                let tank = Water::new(seg.from_practical_salinity, t)?;
                let setpoint = Water::new(seg.to_practical_salinity, t)?;
                let v = exchange_volumes(volume, &tank, added, &setpoint)?;
                Ok(Quantities {
                    drain_l: Some(v.drain_l),
                    add_l: Some(v.add_l),
                    ..Quantities::default()
                })
            })
            .collect(),
        Method::Salt {
            dissolve_water_l_per_kg,
            ..
        } => segments
            .iter()
            .map(|seg| {
                if seg.kind == SegmentKind::Hold {
                    return Ok(Quantities {
                        drain_l: Some(0.0),
                        add_l: Some(0.0),
                        salt_kg: Some(0.0),
                        ..Quantities::default()
                    });
                }
                let tank = Water::new(seg.from_practical_salinity, t)?;
                let setpoint = Water::new(seg.to_practical_salinity, t)?;
                let s = salt_addition(volume, &tank, added, dissolve_water_l_per_kg, &setpoint)?;
                Ok(Quantities {
                    drain_l: Some(s.drain_l),
                    add_l: Some(s.top_up_l),
                    salt_kg: Some(s.salt_kg),
                    ..Quantities::default()
                })
            })
            .collect(),
        Method::FlowThrough { max_flow_l_min, .. } => {
            let flows = flows(volume, segments, added, t)?;
            if let Some(max) = max_flow_l_min {
                if let Some((i, &peak)) = flows
                    .iter()
                    .enumerate()
                    .max_by(|a, b| a.1.total_cmp(b.1))
                    .filter(|(_, &q)| q > max)
                {
                    let seg = &segments[i];
                    let reachable =
                        reach_with_flow(volume, seg.from_practical_salinity, added, max, seg.duration_h, t)?;
                    return Err(PlanError::FlowAboveMaximum(Box::new(FlowShortfall {
                        step: i + 1,
                        from_practical_salinity: seg.from_practical_salinity,
                        to_practical_salinity: seg.to_practical_salinity,
                        required_flow_l_min: peak,
                        max_flow_l_min: max,
                        reachable_practical_salinity: reachable,
                        workable_source_practical_salinity: workable_source(request, segments, max)?,
                    })));
                }
            }
            Ok(flows
                .into_iter()
                .map(|q| Quantities {
                    flow_l_min: Some(q),
                    ..Quantities::default()
                })
                .collect())
        }
    }
}

/// Inflow for each segment (0 for holds).
fn flows(volume: f64, segments: &[Segment], source: &Water, t: f64) -> Result<Vec<f64>, PlanError> {
    segments
        .iter()
        .map(|seg| match seg.kind {
            SegmentKind::Hold => Ok(0.0),
            SegmentKind::Change => inflow_l_min(
                volume,
                seg.from_practical_salinity,
                seg.to_practical_salinity,
                source,
                seg.duration_h,
                t,
            ),
        })
        .collect()
}

/// The source salinity nearest the target with which every segment's flow stays within `max_flow_l_min`.
fn workable_source(
    request: &PlanRequest,
    segments: &[Segment],
    max_flow_l_min: f64,
) -> Result<Option<f64>, PlanError> {
    let (to, t) = (request.to_practical_salinity, request.temperature_c);
    let direction = Direction::between(request.from_practical_salinity, to);
    let peak = |s: f64| -> Result<f64, PlanError> {
        let source = Water::new(s, t)?;
        Ok(flows(request.tank_volume_l, segments, &source, t)?
            .into_iter()
            .fold(0.0, f64::max))
    };
    // The extreme source (fresh to lower, the strongest accepted brine to raise) needs the least flow.
    let extreme = match direction {
        Direction::Up => MAX_PLAN_PRACTICAL_SALINITY,
        Direction::Down => 0.0,
    };
    if extreme == to || peak(extreme)? > max_flow_l_min {
        return Ok(None);
    }
    let (mut works, mut fails) = (extreme, to);
    for _ in 0..SOURCE_SEARCH_STEPS {
        let mid = 0.5 * (works + fails);
        if peak(mid)? <= max_flow_l_min {
            works = mid;
        } else {
            fails = mid;
        }
    }
    Ok(Some(works))
}

/// The error for a source water on the wrong side of the target, with what would work.
fn source_not_beyond(source: f64, to: f64, direction: Direction, method: &str) -> PlanError {
    let suggestion = match direction {
        Direction::Up => format!(
            "to raise salinity {method} needs a source above SP {to} (the further above, the less water)"
        ),
        Direction::Down => format!(
            "to lower salinity {method} needs a source below SP {to} (the further below, the less water)"
        ),
    };
    PlanError::SourceNotBeyondTarget {
        source_practical_salinity: source,
        target_practical_salinity: to,
        suggestion,
    }
}
