//! Warnings a plan carries: salinities outside the species' limits, a path near or below freezing,
//! salinities beyond the fitted range of the equations, and missing rate limits.
use serde::{Deserialize, Serialize};

use super::limits::SalinityLimits;
use super::water::FITTED_PRACTICAL_SALINITY;
use super::PlanError;
use crate::seawater::freezing_point::freezing_point_unesco1983;

/// Margin above the freezing point within which a plan is flagged, °C (halotank's choice, not a published
/// value).
pub const FREEZING_MARGIN_C: f64 = 1.0;

/// What a warning is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum WarningCode {
    TargetOutsideTolerance,
    StartOutsideTolerance,
    HoldOutsideTolerance,
    TargetOutsideOptimum,
    NearFreezing,
    BelowFreezing,
    BeyondFittedRange,
    NoRateLimit,
    BrineTooStrong,
}

/// One warning: a code to act on and a sentence for people.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanWarning {
    pub code: WarningCode,
    pub message: String,
}

impl PlanWarning {
    pub fn new(code: WarningCode, message: String) -> Self {
        Self { code, message }
    }
}

fn outside(range: (f64, f64), s: f64) -> bool {
    s < range.0 || s > range.1
}

/// Warnings about the path from `from` to `to` (with holds at `hold_salinities`) at `temperature_c`.
pub fn path_warnings(
    from: f64,
    to: f64,
    hold_salinities: &[f64],
    temperature_c: f64,
    limits: Option<&SalinityLimits>,
) -> Result<Vec<PlanWarning>, PlanError> {
    let mut warnings = Vec::new();
    if let Some(limits) = limits {
        let (lo, hi) = limits.tolerance;
        if outside(limits.tolerance, to) {
            warnings.push(PlanWarning::new(
                WarningCode::TargetOutsideTolerance,
                format!("target SP {to} is outside the tolerance SP {lo} to {hi}"),
            ));
        } else if outside(limits.optimum, to) {
            let (olo, ohi) = limits.optimum;
            warnings.push(PlanWarning::new(
                WarningCode::TargetOutsideOptimum,
                format!("target SP {to} is outside the optimum SP {olo} to {ohi}"),
            ));
        }
        if outside(limits.tolerance, from) {
            warnings.push(PlanWarning::new(
                WarningCode::StartOutsideTolerance,
                format!("start SP {from} is outside the tolerance SP {lo} to {hi}"),
            ));
        }
        for &s in hold_salinities {
            if outside(limits.tolerance, s) {
                warnings.push(PlanWarning::new(
                    WarningCode::HoldOutsideTolerance,
                    format!("hold at SP {s} is outside the tolerance SP {lo} to {hi}"),
                ));
            }
        }
    }
    // Freezing point falls with salinity, so the path comes closest to freezing at its lowest salinity.
    let lowest = from.min(to);
    let freezing_c = freezing_point_unesco1983(lowest, 0.0)?;
    if temperature_c <= freezing_c {
        warnings.push(PlanWarning::new(
            WarningCode::BelowFreezing,
            format!(
                "{temperature_c} °C is at or below the freezing point of SP {lowest} water ({freezing_c:.2} °C, \
                 UNESCO 1983)"
            ),
        ));
    } else if temperature_c - freezing_c < FREEZING_MARGIN_C {
        warnings.push(PlanWarning::new(
            WarningCode::NearFreezing,
            format!(
                "{temperature_c} °C is within {FREEZING_MARGIN_C} °C of the freezing point of SP {lowest} water \
                 ({freezing_c:.2} °C, UNESCO 1983)"
            ),
        ));
    }
    let highest = from.max(to);
    if highest > FITTED_PRACTICAL_SALINITY {
        warnings.push(PlanWarning::new(
            WarningCode::BeyondFittedRange,
            format!(
                "SP {highest} is above SP {FITTED_PRACTICAL_SALINITY}, the range EOS-80 and PSS-78 were fitted \
                 to: densities there are extrapolated"
            ),
        ));
    }
    Ok(warnings)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn freezing_is_flagged_near_fresh_water_in_the_cold() {
        // UNESCO 1983: SP 5 freezes at about −0.27 °C, so 0.5 °C is within 1 °C of it and −0.5 °C is below.
        let near = path_warnings(30.0, 5.0, &[], 0.5, None).unwrap();
        assert!(
            near.iter().any(|w| w.code == WarningCode::NearFreezing),
            "{near:?}"
        );
        let below = path_warnings(30.0, 5.0, &[], -0.5, None).unwrap();
        assert!(
            below.iter().any(|w| w.code == WarningCode::BelowFreezing),
            "{below:?}"
        );
        let warm = path_warnings(30.0, 5.0, &[], 12.0, None).unwrap();
        assert!(warm.is_empty(), "{warm:?}");
    }

    #[test]
    fn limits_are_checked() {
        let limits = SalinityLimits {
            optimum: (8.0, 30.0),
            tolerance: (0.0, 35.0),
        };
        let w = path_warnings(5.0, 36.0, &[12.0], 12.0, Some(&limits)).unwrap();
        assert!(w.iter().any(|w| w.code == WarningCode::TargetOutsideTolerance));
        let w = path_warnings(5.0, 33.0, &[40.0], 12.0, Some(&limits)).unwrap();
        assert!(w.iter().any(|w| w.code == WarningCode::TargetOutsideOptimum));
        assert!(w.iter().any(|w| w.code == WarningCode::HoldOutsideTolerance));
    }
}
