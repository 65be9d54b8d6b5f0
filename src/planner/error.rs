//! The typed error of the planner: every refusal names the input and why.
use thiserror::Error;

use crate::seawater::ScienceError;

/// Why a plan could not be made. Never a panic; each variant carries the values that caused it.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum PlanError {
    /// An input is not usable (not finite, not positive, out of range).
    #[error("`{name}` = {value} is not usable: {why}")]
    InvalidInput {
        name: &'static str,
        value: f64,
        why: &'static str,
    },
    /// Two inputs contradict each other or one is missing for another.
    #[error("{0}")]
    Inconsistent(String),
    /// A seawater equation refused a value the plan passes through.
    #[error("seawater equation refused a value: {0}")]
    Science(#[from] ScienceError),
    /// The ramp has no rate: neither a shape rate nor any rate limit was given.
    #[error("no rate given: set the shape's rate or a maximum rate (SP/h or %/h)")]
    NoRate,
    /// The ramp cannot move from this salinity (a proportional rate cannot leave SP 0).
    #[error("the ramp makes no progress from SP {practical_salinity} (a proportional rate cannot leave fresh water)")]
    NoProgress { practical_salinity: f64 },
    /// More steps than the planner will list.
    #[error("the plan needs more than {limit} steps: use a longer interval or a faster rate")]
    TooManySteps { limit: usize },
    /// A hold's salinity does not lie between the start and the target.
    #[error("hold at SP {practical_salinity} is not on the way from SP {from} to SP {to}")]
    HoldOffPath {
        practical_salinity: f64,
        from: f64,
        to: f64,
    },
    /// The method cannot move salinity this way (salt only raises it).
    #[error("{method} cannot take the tank from SP {from} to SP {to}: {why}")]
    MethodCannotReach {
        method: &'static str,
        from: f64,
        to: f64,
        why: &'static str,
    },
    /// The source water is not beyond the target, so mixing never reaches it.
    #[error(
        "source water SP {source_practical_salinity} is not beyond the target SP {target_practical_salinity}: \
         {suggestion}"
    )]
    SourceNotBeyondTarget {
        source_practical_salinity: f64,
        target_practical_salinity: f64,
        suggestion: String,
    },
    /// A flow-through plan needs more flow than the pump gives.
    #[error("{0}")]
    FlowAboveMaximum(Box<super::flow::FlowShortfall>),
    /// A blend target does not lie between the two sources.
    #[error("SP {target} cannot be blended from SP {source_a} and SP {source_b}: the target must lie between them")]
    BlendOutOfReach {
        target: f64,
        source_a: f64,
        source_b: f64,
    },
}

/// Checks that a value is finite and above zero.
pub(crate) fn positive(name: &'static str, value: f64) -> Result<f64, PlanError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(PlanError::InvalidInput {
            name,
            value,
            why: "must be a finite number above 0",
        })
    }
}

/// Checks that a Practical Salinity is finite and within 0..=MAX_PLAN_PRACTICAL_SALINITY.
pub(crate) fn salinity(name: &'static str, value: f64) -> Result<f64, PlanError> {
    if value.is_finite() && (0.0..=super::water::MAX_PLAN_PRACTICAL_SALINITY).contains(&value) {
        Ok(value)
    } else {
        Err(PlanError::InvalidInput {
            name,
            value,
            why: "must be a practical salinity from 0 to 100",
        })
    }
}
