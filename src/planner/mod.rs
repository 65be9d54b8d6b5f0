//! Acclimation planner: how to take a tank from its salinity to a target at a pace the animals tolerate,
//! and what to do at each step (litres to drain and add, flow, kilograms of salt).
//!
//! Pure: no I/O, no clock (the start time is an input). Mass balances use TEOS-10 Absolute Salinity (the
//! mass fraction of reference-composition salt) and EOS-80 densities at the plan's temperature.
//!
//! - [`limits`]: rate and salinity limits, and how far the rate limits let a ramp move.
//! - [`ramp`]: the setpoint sequence (linear in SP, proportional, linear in osmolality; holds).
//! - [`exchange`], [`flow`], [`salt`], [`blend`]: the four methods' mass balances.
//! - [`checks`]: warnings (limits, freezing, fitted range).
//! - [`plan`]: request in, step table out.
//! - [`inputs`]: what a person fills in (CLI options, the HTTP form) to a request.
pub mod blend;
pub mod checks;
pub mod error;
pub mod exchange;
pub mod flow;
pub mod from_species;
pub mod inputs;
pub mod limits;
pub mod plan;
pub mod ramp;
pub mod salt;
pub mod water;

pub use blend::{blend_batch, BlendBatch, BlendRequest};
pub use checks::{PlanWarning, WarningCode};
pub use error::PlanError;
pub use flow::FlowShortfall;
pub use inputs::{build_request, InputsError, MethodChoice, PlanInputs, RequiredInput};
pub use limits::{Direction, RateCaps, RateLimits, SalinityLimits};
pub use plan::{make_plan, Assumptions, Method, Plan, PlanRequest, Step, StepKind, Totals};
pub use ramp::{Hold, Ramp, RampShape};

/// The caution every plan carries.
pub const CAUTION: &str = "Indicative plan only. Species limits are indicative: follow the advice of a fish-health \
professional (veterinarian) and local rules and licensed practice. Verify the tank's salinity with a calibrated \
meter before and after every step, and keep the tank's own life-support alarms in service: this plan does not \
replace them.";
