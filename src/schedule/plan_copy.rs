//! The plan a schedule carries out: an owned copy of the planner's [`Plan`] (steps, totals, warnings,
//! assumptions, caution), stored as JSON and read back without the planner.
use chrono::{DateTime, Utc};
use serde::{Deserialize, Serialize};

use crate::planner::{Assumptions, Plan, PlanWarning, Step, Totals};

/// The planner's plan with owned strings, so it can be read back from the database.
///
/// Its JSON has the same keys as the planner's `Plan`, so a stored plan reads back either way.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SchedulePlan {
    /// `exchange`, `flow` or `salt`.
    pub method: String,
    pub start: DateTime<Utc>,
    pub end: DateTime<Utc>,
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
    pub steps: Vec<Step>,
    pub total_duration_h: f64,
    pub totals: Totals,
    pub warnings: Vec<PlanWarning>,
    pub assumptions: Assumptions,
    pub caution: String,
}

impl From<&Plan> for SchedulePlan {
    fn from(plan: &Plan) -> Self {
        Self {
            method: plan.method.to_owned(),
            start: plan.start,
            end: plan.end,
            from_practical_salinity: plan.from_practical_salinity,
            to_practical_salinity: plan.to_practical_salinity,
            steps: plan.steps.clone(),
            total_duration_h: plan.total_duration_h,
            totals: plan.totals.clone(),
            warnings: plan.warnings.clone(),
            assumptions: plan.assumptions.clone(),
            caution: plan.caution.to_owned(),
        }
    }
}

impl SchedulePlan {
    /// Whether each step sets a flow that ramps the tank over its interval (flow-through), rather than
    /// acting at its time and then holding (exchange, salt).
    pub fn is_flow(&self) -> bool {
        self.method == "flow"
    }
}
