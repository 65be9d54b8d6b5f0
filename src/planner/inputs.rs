//! From what a person fills in (command-line options, a form on the page) to a [`PlanRequest`]: the
//! method's required inputs, explicit limits merged over a species profile's, and the salinity ranges.
//!
//! Shared by `halotank plan`, `halotank schedule start` and the HTTP API, so each front end only maps its
//! own field names onto [`PlanInputs`] and onto the names in [`InputsError`].
use chrono::{DateTime, Utc};
use thiserror::Error;

use super::from_species::{merge_rate_limits, rate_limits_of, salinity_limits_of};
use super::water::MAX_PLAN_PRACTICAL_SALINITY;
use super::{Hold, Method, PlanRequest, Ramp, RateLimits, SalinityLimits};
use crate::species::SpeciesProfile;

/// How the tank's salinity is to be changed, before the method's own inputs are checked.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MethodChoice {
    Exchange,
    Flow,
    Salt,
}

impl MethodChoice {
    /// The name used in messages (`exchange`, `flow`, `salt`).
    pub fn name(self) -> &'static str {
        match self {
            Self::Exchange => "exchange",
            Self::Flow => "flow",
            Self::Salt => "salt",
        }
    }
}

/// An input a request cannot do without; each front end names it its own way.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RequiredInput {
    /// The tank's volume at the mark.
    Volume,
    /// The tank's practical salinity now.
    FromSalinity,
    /// The source water's practical salinity (exchange, flow).
    SourceSalinity,
}

/// Why the inputs do not make a request.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Error)]
pub enum InputsError {
    /// An input is missing; `method` is the method that needs it (`None`: every plan needs it).
    #[error("missing input {input:?}")]
    Missing {
        input: RequiredInput,
        method: Option<&'static str>,
    },
}

/// Everything a plan is made from, as filled in.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanInputs {
    pub tank_volume_l: Option<f64>,
    pub from_practical_salinity: Option<f64>,
    pub to_practical_salinity: f64,
    pub temperature_c: f64,
    pub start: DateTime<Utc>,
    pub interval_h: f64,
    pub method: MethodChoice,
    /// Source water (exchange, flow).
    pub source_practical_salinity: Option<f64>,
    /// The pump's largest flow, L/min (flow).
    pub max_flow_l_min: Option<f64>,
    /// Water the salt is dissolved in (salt).
    pub top_up_practical_salinity: f64,
    /// Litres of top-up water per kilogram of salt (salt).
    pub dissolve_water_l_per_kg: f64,
    pub ramp: Ramp,
    /// Limits given explicitly; they win over the species' own (see [`merge_rate_limits`]).
    pub rate_limits: RateLimits,
    /// Optimum and tolerated salinity ranges given explicitly.
    pub optimum: Option<(f64, f64)>,
    pub tolerance: Option<(f64, f64)>,
    pub holds: Vec<Hold>,
}

/// The salinity ranges given explicitly, completed where only one is given.
fn explicit_salinity_limits(
    optimum: Option<(f64, f64)>,
    tolerance: Option<(f64, f64)>,
) -> Option<SalinityLimits> {
    match (optimum, tolerance) {
        (None, None) => None,
        (Some(optimum), Some(tolerance)) => Some(SalinityLimits { optimum, tolerance }),
        // Only a tolerance: treat it as the optimum too (nothing narrower is known).
        (None, Some(t)) => Some(SalinityLimits {
            optimum: t,
            tolerance: t,
        }),
        // Only an optimum: no tolerance is known, so nothing is flagged as intolerable.
        (Some(optimum), None) => Some(SalinityLimits {
            optimum,
            tolerance: (0.0, MAX_PLAN_PRACTICAL_SALINITY),
        }),
    }
}

fn required(
    value: Option<f64>,
    input: RequiredInput,
    method: Option<&'static str>,
) -> Result<f64, InputsError> {
    value.ok_or(InputsError::Missing { input, method })
}

/// Builds the planner's request; `species` fills the rate limits and salinity ranges not given.
pub fn build_request(
    inputs: &PlanInputs,
    species: Option<&SpeciesProfile>,
) -> Result<PlanRequest, InputsError> {
    let name = Some(inputs.method.name());
    let method = match inputs.method {
        MethodChoice::Exchange => Method::Exchange {
            source_practical_salinity: required(
                inputs.source_practical_salinity,
                RequiredInput::SourceSalinity,
                name,
            )?,
        },
        MethodChoice::Flow => Method::FlowThrough {
            source_practical_salinity: required(
                inputs.source_practical_salinity,
                RequiredInput::SourceSalinity,
                name,
            )?,
            max_flow_l_min: inputs.max_flow_l_min,
        },
        MethodChoice::Salt => Method::Salt {
            top_up_practical_salinity: inputs.top_up_practical_salinity,
            dissolve_water_l_per_kg: inputs.dissolve_water_l_per_kg,
        },
    };
    let explicit = explicit_salinity_limits(inputs.optimum, inputs.tolerance);
    let (rate_limits, salinity_limits) = match species {
        None => (inputs.rate_limits, explicit),
        Some(profile) => (
            merge_rate_limits(inputs.rate_limits, rate_limits_of(profile)),
            Some(explicit.unwrap_or_else(|| salinity_limits_of(profile))),
        ),
    };
    Ok(PlanRequest {
        tank_volume_l: required(inputs.tank_volume_l, RequiredInput::Volume, None)?,
        from_practical_salinity: required(inputs.from_practical_salinity, RequiredInput::FromSalinity, None)?,
        to_practical_salinity: inputs.to_practical_salinity,
        temperature_c: inputs.temperature_c,
        start: inputs.start,
        interval_h: inputs.interval_h,
        method,
        ramp: inputs.ramp,
        holds: inputs.holds.clone(),
        rate_limits,
        salinity_limits,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::planner::RampShape;
    use crate::species::SpeciesLibrary;

    fn inputs() -> PlanInputs {
        PlanInputs {
            tank_volume_l: Some(2000.0),
            from_practical_salinity: Some(5.0),
            to_practical_salinity: 30.0,
            temperature_c: 12.0,
            start: DateTime::from_timestamp(1_900_000_000, 0).unwrap(),
            interval_h: 2.0,
            method: MethodChoice::Exchange,
            source_practical_salinity: Some(34.0),
            max_flow_l_min: None,
            top_up_practical_salinity: 0.0,
            dissolve_water_l_per_kg: 4.0,
            ramp: Ramp {
                shape: RampShape::LinearSalinity,
                rate: None,
            },
            rate_limits: RateLimits {
                max_rate_sp_per_h: Some(2.0),
                ..RateLimits::default()
            },
            optimum: None,
            tolerance: Some((0.0, 35.0)),
            holds: Vec::new(),
        }
    }

    #[test]
    fn missing_inputs_are_named() {
        let mut i = inputs();
        i.source_practical_salinity = None;
        assert_eq!(
            build_request(&i, None),
            Err(InputsError::Missing {
                input: RequiredInput::SourceSalinity,
                method: Some("exchange")
            })
        );
        let mut i = inputs();
        i.tank_volume_l = None;
        assert_eq!(
            build_request(&i, None),
            Err(InputsError::Missing {
                input: RequiredInput::Volume,
                method: None
            })
        );
    }

    #[test]
    fn explicit_limits_win_and_the_species_fills_the_rest() {
        let library = SpeciesLibrary::embedded().unwrap();
        let profile = library.get("whiteleg_shrimp_pl").unwrap();
        let request = build_request(&inputs(), Some(profile)).unwrap();
        assert_eq!(request.rate_limits.max_rate_sp_per_h, Some(2.0));
        // Only a tolerance was given: it stands for the optimum too, the species' ranges are not used.
        let limits = request.salinity_limits.unwrap();
        assert_eq!((limits.optimum, limits.tolerance), ((0.0, 35.0), (0.0, 35.0)));
        let mut i = inputs();
        i.tolerance = None;
        i.rate_limits = RateLimits::default();
        let request = build_request(&i, Some(profile)).unwrap();
        assert_eq!(request.rate_limits, rate_limits_of(profile));
        assert_eq!(request.salinity_limits, Some(salinity_limits_of(profile)));
    }
}
